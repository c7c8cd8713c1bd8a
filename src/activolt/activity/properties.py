r"""Properties that follow from a fitted activity model: φ, the water activity and G^E.

For a single electrolyte M(ν+)X(ν−) at molality m in one kilogram of water,

.. math:: \ln a_w = −ν\,m\,M_w\,φ

.. math:: \frac{G^E}{RT} = ν\,m\,(1 − φ + \ln γ_±) \qquad \text{per kilogram of water}

(Robinson & Stokes 1959, ch. 2, eqs. 2.23 and 2.32 in substance; Pitzer 1991, ch. 3, eq. 1),
where φ is the osmotic coefficient and M_w the molar mass of water. The Gibbs–Duhem relation
ties them together: ∂(G^E/RT)/∂m = ν ln γ± and d[m(1 − φ)]/dm = −m d ln γ±/dm.

:func:`activolt.procedures.properties.derived_properties` evaluates them with the fitted model
of a reduction and propagates the covariance of its parameters.

References
----------
.. [1] Robinson, R. A. & Stokes, R. H. (1959). Electrolyte Solutions, 2nd ed. rev.,
   Butterworths, ch. 2.
.. [2] Pitzer, K. S. (1991). Ion interaction approach: theory and data correlation, in
   *Activity Coefficients in Electrolyte Solutions*, 2nd ed., CRC Press, ch. 3.
.. [3] JCGM 100:2008 (GUM), 5.2 (correlated input quantities).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from ..chemistry.electrolytes import Electrolyte

__all__ = [
    "MOLAR_MASS_WATER_KG_MOL",
    "excess_gibbs_energy_rt",
    "water_activity",
]

#: Molar mass of water, 2 × 1.00794 + 15.9994 g/mol (IUPAC 2005 standard atomic weights;
#: Robinson & Stokes use 18.016 g/mol on the older scale) [kg mol⁻¹].
MOLAR_MASS_WATER_KG_MOL = 0.01801528


def water_activity(electrolyte: Electrolyte, molality: npt.ArrayLike,
                   osmotic_coefficient: npt.ArrayLike) -> np.ndarray:
    r"""Activity of water from the osmotic coefficient.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte (its ν = ν+ + ν−).
    molality : array_like
        Molality m [mol kg⁻¹].
    osmotic_coefficient : array_like
        Osmotic coefficient φ [-].

    Returns
    -------
    numpy.ndarray
        a_w [-]; NaN where an input is NaN.

    Notes
    -----
    .. math:: \ln a_w = −ν\,m\,M_w\,φ

    the definition of the (practical) osmotic coefficient; Robinson & Stokes (1959), ch. 2.

    Examples
    --------
    NaCl at 1 mol/kg with φ = 0.9355 (Robinson & Stokes 1959, Appendix 8.10; from memory);
    their water-activity table gives 0.9669 (from memory):

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> round(float(water_activity(parse_electrolyte("NaCl"), 1.0, 0.9355)), 4)
    0.9669
    """
    m = np.asarray(molality, dtype=float)
    phi = np.asarray(osmotic_coefficient, dtype=float)
    return np.exp(-electrolyte.nu * m * MOLAR_MASS_WATER_KG_MOL * phi)


def excess_gibbs_energy_rt(electrolyte: Electrolyte, molality: npt.ArrayLike,
                           osmotic_coefficient: npt.ArrayLike,
                           ln_gamma: npt.ArrayLike) -> np.ndarray:
    r"""Excess Gibbs energy per kilogram of water, divided by RT.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte (its ν = ν+ + ν−).
    molality : array_like
        Molality m [mol kg⁻¹].
    osmotic_coefficient : array_like
        Osmotic coefficient φ [-].
    ln_gamma : array_like
        ln γ±, molality scale [-].

    Returns
    -------
    numpy.ndarray
        G^E/(RT) per kilogram of water [mol kg⁻¹].

    Notes
    -----
    .. math:: \frac{G^E}{w_w RT} = ν\,m\,(1 − φ + \ln γ_±)

    Pitzer (1991), ch. 3, eq. 1 with its derivatives; Robinson & Stokes (1959), ch. 2. Its
    derivative with respect to m is ν ln γ± (Gibbs–Duhem).

    Examples
    --------
    NaCl at 1 mol/kg: φ = 0.9355 and γ± = 0.657 (Pitzer, Peiper & Busey 1984; φ from memory)
    give 2 (1 − 0.9355 + ln 0.657) = −0.7111 mol/kg (derived):

    >>> import math
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> g = excess_gibbs_energy_rt(parse_electrolyte("NaCl"), 1.0, 0.9355, math.log(0.657))
    >>> round(float(g), 4)
    -0.7111
    """
    m = np.asarray(molality, dtype=float)
    phi = np.asarray(osmotic_coefficient, dtype=float)
    ln_g = np.asarray(ln_gamma, dtype=float)
    return electrolyte.nu * m * (1.0 - phi + ln_g)
