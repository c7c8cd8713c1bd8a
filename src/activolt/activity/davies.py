r"""Davies equation: an extended Debye–Hückel form with a fixed linear term and no fitted parameter.

.. math:: \log_{10} γ_± = −|z_+ z_−| A \left(\frac{\sqrt{I}}{1 + \sqrt{I}} − 0.3\,I\right)

with A the decimal-log Debye–Hückel slope at the temperature of each point. In natural-log form
(A_γ = 3 A_φ = A ln 10) and with the osmotic coefficient that the Gibbs–Duhem relation implies:

.. math:: \ln γ_± = −|z_+ z_−| A_γ \left(\frac{\sqrt{I}}{1 + \sqrt{I}} − 0.3\,I\right)

.. math:: φ = 1 − |z_+ z_−| A_γ \left(\frac{\sqrt{I}}{3} σ(\sqrt{I}) − 0.15\,I\right)

σ is the Debye–Hückel osmotic function of :func:`activolt.activity.hueckel.sigma`.

Davies, C. W. (1938). The extent of dissociation of salts in water. Part VIII. J. Chem. Soc.,
2093–2098. https://doi.org/10.1039/JR9380002093 ; Davies, C. W. (1962). *Ion Association*,
Butterworths, London, eq. 3.10. Commonly considered adequate up to I ≈ 0.1–0.5 mol kg⁻¹.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import numpy.typing as npt

from ..chemistry.electrolytes import Electrolyte
from ..physics.water import DebyeHueckelConstants
from .base import ActivityModel, checked_values
from .hueckel import sigma

#: Coefficient of the linear term of the Davies equation [kg mol⁻¹] (Davies 1962).
DAVIES_LINEAR_COEFFICIENT = 0.3


def _check_no_parameters(parameters: Mapping[str, float]) -> None:
    checked_values("davies", (), parameters)


def ln_gamma(
    electrolyte: Electrolyte,
    molality: npt.ArrayLike,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    r"""ln γ± of the Davies equation.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte (its charges fix |z+ z−| and I/m).
    molality : array_like
        Molality m of the electrolyte [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point (A_γ = 3 A_φ) [kg^½ mol^-½].
    parameters : Mapping[str, float]
        Must be empty: the Davies equation has no adjustable parameter.

    Returns
    -------
    numpy.ndarray
        ln γ± [-].

    Raises
    ------
    ValueError
        If ``parameters`` names anything.

    Notes
    -----
    .. math:: \ln γ_± = −|z_+ z_−| A_γ \left(\frac{\sqrt{I}}{1 + \sqrt{I}} − 0.3\,I\right)

    Davies (1938), https://doi.org/10.1039/JR9380002093; Davies (1962), *Ion Association*,
    eq. 3.10.

    Examples
    --------
    HCl at 0.1 mol kg⁻¹ and 25 °C; the measured γ± is 0.796 (Robinson & Stokes 1959,
    Appendix 8.10), which the Davies equation misses by 0.015:

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> round(float(np.exp(ln_gamma(parse_electrolyte("HCl"), 0.1, c, {}))[0]), 3)
    0.781
    """
    _check_no_parameters(parameters)
    ionic_strength = electrolyte.ionic_strength(molality)
    sqrt_i = np.sqrt(ionic_strength)
    return -electrolyte.charge_product * constants.agamma * (
        sqrt_i / (1.0 + sqrt_i) - DAVIES_LINEAR_COEFFICIENT * ionic_strength
    )


def osmotic_coefficient(
    electrolyte: Electrolyte,
    molality: npt.ArrayLike,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    r"""Osmotic coefficient φ consistent (Gibbs–Duhem) with the Davies equation.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point [kg^½ mol^-½].
    parameters : Mapping[str, float]
        Must be empty.

    Returns
    -------
    numpy.ndarray
        φ [-].

    Notes
    -----
    From φ − 1 = (1/m) ∫₀^m m′ (d ln γ±/dm′) dm′ (Robinson & Stokes 1959, ch. 2, eq. 2.38):

    .. math:: φ = 1 − |z_+ z_−| A_γ \left(\frac{\sqrt{I}}{3} σ(\sqrt{I}) − 0.15\,I\right)

    Examples
    --------
    NaCl at 0.1 mol kg⁻¹ and 25 °C; Robinson & Stokes (1959, Appendix 8.10) give φ = 0.9324
    (from memory):

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> round(float(osmotic_coefficient(parse_electrolyte("NaCl"), 0.1, c, {})[0]), 4)
    0.9361
    """
    _check_no_parameters(parameters)
    ionic_strength = electrolyte.ionic_strength(molality)
    sqrt_i = np.sqrt(ionic_strength)
    return 1.0 - electrolyte.charge_product * constants.agamma * (
        sqrt_i / 3.0 * sigma(sqrt_i) - 0.5 * DAVIES_LINEAR_COEFFICIENT * ionic_strength
    )


MODEL = ActivityModel(
    name="davies",
    title="Davies equation",
    parameters=(),
    ln_gamma=ln_gamma,
    osmotic_coefficient=osmotic_coefficient,
    max_ionic_strength=0.5,
)
