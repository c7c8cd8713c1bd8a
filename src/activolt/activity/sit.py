r"""Specific ion interaction theory (SIT), the Brønsted–Guggenheim–Scatchard form.

For an ion i, log10 γᵢ = −zᵢ² D + Σⱼ ε(i, j) mⱼ, the sum running over ions j of opposite charge,
with the Debye–Hückel term D = A √I / (1 + 1.5 √I) (A the decimal-log slope at the temperature,
1.5 kg^½ mol^-½ held fixed at every temperature as in the NEA reviews). For a single electrolyte
M(ν+)X(ν−) of molality m, m_X = ν− m and m_M = ν+ m, so the mean

.. math:: \log_{10} γ_± = \frac{ν_+ \log_{10} γ_+ + ν_− \log_{10} γ_−}{ν}
          = −|z_+ z_−| D + \frac{2 ν_+ ν_−}{ν}\, ε\, m

using ν+ z+² + ν− z−² = ν |z+ z−| (electroneutrality). The stoichiometric factor 2ν+ν−/ν is 1
for 1:1, 4/3 for 2:1 and 1:2, 1 for 2:2 and 3/2 for 3:1 electrolytes. In natural-log form, and
with the osmotic coefficient that follows from the Gibbs–Duhem relation,

.. math:: \ln γ_± = −\frac{|z_+ z_−| A_γ \sqrt{I}}{1 + 1.5\sqrt{I}}
          + \ln 10\, \frac{2 ν_+ ν_−}{ν}\, ε\, m

.. math:: φ = 1 − \frac{|z_+ z_−| A_γ \sqrt{I}}{3} σ(1.5\sqrt{I})
          + \ln 10\, \frac{ν_+ ν_−}{ν}\, ε\, m

Guggenheim, E. A. & Turgeon, J. C. (1955). Trans. Faraday Soc. 51, 747–761.
https://doi.org/10.1039/TF9555100747 ; Grenthe, I., Plyasunov, A. V. & Spahiu, K. (1997),
in *Modelling in Aquatic Chemistry*, OECD/NEA, ch. IX; the NEA thermochemical database reviews,
Appendix B. Commonly considered adequate up to I ≈ 3.5 mol kg⁻¹.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np
import numpy.typing as npt

from ..chemistry.electrolytes import Electrolyte
from ..physics.water import DebyeHueckelConstants
from ..reference import load_table
from ..reference.parameters import sit_epsilon
from .base import ActivityModel, Parameter, checked_values
from .hueckel import sigma

#: The product Bå of the SIT Debye–Hückel term [kg^½ mol^-½], fixed at all temperatures (NEA).
SIT_BA = 1.5

#: Parameter names of the SIT model, in order.
PARAMETER_NAMES: tuple[str, ...] = ("epsilon_kg_mol",)

_LN10 = math.log(10.0)


def _values(parameters: Mapping[str, float]) -> dict[str, np.ndarray]:
    return checked_values("sit", PARAMETER_NAMES, parameters)


def stoichiometric_factor(electrolyte: Electrolyte) -> float:
    """The factor 2ν+ν−/ν of ε m in log10 γ± of a single electrolyte [-].

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> [round(stoichiometric_factor(parse_electrolyte(f)), 4) for f in ("HCl", "CaCl2", "LaCl3")]
    [1.0, 1.3333, 1.5]
    """
    return 2.0 * electrolyte.nu_cation * electrolyte.nu_anion / electrolyte.nu


def debye_hueckel_term(
    electrolyte: Electrolyte, molality: npt.ArrayLike, constants: DebyeHueckelConstants
) -> np.ndarray:
    r"""The SIT Debye–Hückel term D = A √I / (1 + 1.5 √I) in decimal-log form.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte (fixes I/m).
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point; A = ``constants.agamma_log10`` [kg^½ mol^-½].

    Returns
    -------
    numpy.ndarray
        D [-].

    Notes
    -----
    .. math:: D = \frac{A \sqrt{I}}{1 + 1.5 \sqrt{I}}

    Grenthe, Plyasunov & Spahiu (1997), *Modelling in Aquatic Chemistry*, OECD/NEA, ch. IX.

    Examples
    --------
    At I = 1 mol kg⁻¹ and 25 °C the NEA reviews (A = 0.509) give D = 0.509/2.5 = 0.2036; here
    A = 0.5098 from IAPWS water:

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> round(float(debye_hueckel_term(parse_electrolyte("NaCl"), 1.0, c)[0]), 4)
    0.2039
    """
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    return constants.agamma_log10 * sqrt_i / (1.0 + SIT_BA * sqrt_i)


def ln_gamma_terms(
    electrolyte: Electrolyte, molality: npt.ArrayLike, constants: DebyeHueckelConstants
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    r"""ln γ± split into its parameter-free part and the coefficient of each linear parameter.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point.

    Returns
    -------
    tuple of (numpy.ndarray, dict of str to numpy.ndarray)
        ``(offset, columns)`` with ln γ± = offset + Σ θₖ columns[k]; offset [-], each column in
        the inverse unit of its parameter (here [mol kg⁻¹]).

    Notes
    -----
    .. math:: \ln γ_± = −|z_+ z_−| D \ln 10 + \left(\ln 10 \frac{2ν_+ν_−}{ν} m\right) ε

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> offset, columns = ln_gamma_terms(parse_electrolyte("HCl"), 1.0,
    ...                                  debye_hueckel_constants(298.15))
    >>> round(float(columns["epsilon_kg_mol"][0]), 4)  # ln 10 × 1 × 1 mol/kg
    2.3026
    """
    molality = np.asarray(molality, dtype=float)
    offset = -electrolyte.charge_product * _LN10 * debye_hueckel_term(
        electrolyte, molality, constants
    )
    column = _LN10 * stoichiometric_factor(electrolyte) * molality
    offset, column = np.broadcast_arrays(offset, column)
    return np.array(offset), {"epsilon_kg_mol": np.array(column)}


def ln_gamma(
    electrolyte: Electrolyte,
    molality: npt.ArrayLike,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    r"""ln γ± of the specific ion interaction theory for a single electrolyte.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point [kg^½ mol^-½].
    parameters : Mapping[str, float]
        ``epsilon_kg_mol``: the interaction coefficient ε(cation, anion) [kg mol⁻¹].

    Returns
    -------
    numpy.ndarray
        ln γ± [-].

    Raises
    ------
    ValueError
        If a parameter is unknown or missing (the message lists the valid names).

    Notes
    -----
    .. math:: \ln γ_± = −\frac{|z_+ z_−| A_γ \sqrt{I}}{1 + 1.5\sqrt{I}}
              + \ln 10\, \frac{2 ν_+ ν_−}{ν}\, ε\, m

    Guggenheim & Turgeon (1955), https://doi.org/10.1039/TF9555100747 ; Grenthe, Plyasunov &
    Spahiu (1997), *Modelling in Aquatic Chemistry*, OECD/NEA, ch. IX.

    Examples
    --------
    HCl at 1 mol kg⁻¹ and 25 °C with ε(H⁺, Cl⁻) = 0.12 kg mol⁻¹ (NEA reviews, from memory);
    Robinson & Stokes (1959, Appendix 8.10) give γ± = 0.809:

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> lg = ln_gamma(parse_electrolyte("HCl"), 1.0, c, {"epsilon_kg_mol": 0.12})
    >>> round(float(np.exp(lg)[0]), 3)
    0.824
    """
    epsilon = _values(parameters)["epsilon_kg_mol"]
    offset, columns = ln_gamma_terms(electrolyte, molality, constants)
    return offset + epsilon * columns["epsilon_kg_mol"]


def osmotic_coefficient(
    electrolyte: Electrolyte,
    molality: npt.ArrayLike,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    r"""Osmotic coefficient φ consistent (Gibbs–Duhem) with the SIT ln γ±.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point [kg^½ mol^-½].
    parameters : Mapping[str, float]
        ``epsilon_kg_mol`` [kg mol⁻¹].

    Returns
    -------
    numpy.ndarray
        φ [-].

    Notes
    -----
    From φ − 1 = (1/m) ∫₀^m m′ (d ln γ±/dm′) dm′ (Robinson & Stokes 1959, ch. 2):

    .. math:: φ = 1 − \frac{|z_+ z_−| A_γ \sqrt{I}}{3} σ(1.5\sqrt{I})
              + \ln 10\, \frac{ν_+ ν_−}{ν}\, ε\, m

    σ as in :func:`activolt.activity.hueckel.sigma`.

    Examples
    --------
    NaCl at 1 mol kg⁻¹, 25 °C, ε(Na⁺, Cl⁻) = 0.03 kg mol⁻¹ (NEA reviews, from memory); Robinson &
    Stokes (1959, Appendix 8.10) give φ = 0.9355 (from memory):

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> phi = osmotic_coefficient(parse_electrolyte("NaCl"), 1.0, c, {"epsilon_kg_mol": 0.03})
    >>> round(float(phi[0]), 3)
    0.942
    """
    epsilon = _values(parameters)["epsilon_kg_mol"]
    molality = np.asarray(molality, dtype=float)
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    return (
        1.0
        - electrolyte.charge_product * constants.agamma * sqrt_i / 3.0 * sigma(SIT_BA * sqrt_i)
        + _LN10 * 0.5 * stoichiometric_factor(electrolyte) * epsilon * molality
    )


def _published_epsilon(electrolyte: Electrolyte) -> tuple[float, float, str] | None:
    """ε of the electrolyte's ion pair with the ions' charges, so that an ion with several
    oxidation states (Cu⁺, Cu²⁺) never takes another state's value."""
    cation = f"{electrolyte.cation} {electrolyte.z_cation}+"
    anion = f"{electrolyte.anion} {-electrolyte.z_anion}-"
    return sit_epsilon(cation, anion)


def conventional_epsilon(electrolyte: Electrolyte, constants: DebyeHueckelConstants) -> float:
    """The published ε(cation, anion) at 25 °C for the electrolyte's ion pair, else 0 [kg mol⁻¹].

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte; its ``cation`` and ``anion`` symbols are looked up in the table
        ``sit_epsilon`` (:func:`activolt.reference.parameters.sit_epsilon`).
    constants : DebyeHueckelConstants
        Unused: the table holds 25 °C values only, used at every temperature.

    Returns
    -------
    float
        ε [kg mol⁻¹].

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> conventional_epsilon(parse_electrolyte("HCl"), c)  # NEA reviews, Appendix B (from memory)
    0.12
    """
    entry = _published_epsilon(electrolyte)
    return 0.0 if entry is None else float(entry[0])


def conventional_epsilon_uncertainty(
    electrolyte: Electrolyte, constants: DebyeHueckelConstants
) -> float:
    """Standard uncertainty of the conventional ε [kg mol⁻¹] (GUM Type B).

    For a tabulated pair, half the printed uncertainty: the NEA reviews quote about 95 %
    intervals (from memory), so u ≈ U/2. For a pair the table lacks (ε held at 0), a rectangular
    distribution over the span of all tabulated ε: u = (max − min)/(2√3) (GUM, JCGM 100:2008,
    4.3.7).

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> conventional_epsilon_uncertainty(parse_electrolyte("HCl"), c)  # NEA: ± 0.01 (from memory)
    0.005
    >>> round(conventional_epsilon_uncertainty(parse_electrolyte("CsI"), c), 3)
    0.176
    """
    entry = _published_epsilon(electrolyte)
    if entry is not None:
        return float(entry[1]) / 2.0
    values = load_table("sit_epsilon")["epsilon_kg_mol"]
    return float(values.max() - values.min()) / (2.0 * math.sqrt(3.0))


MODEL = ActivityModel(
    name="sit",
    title="Specific ion interaction theory",
    parameters=(
        Parameter(
            name="epsilon_kg_mol",
            symbol="ε",
            unit="kg mol⁻¹",
            description="specific ion interaction coefficient ε(cation, anion)",
            linear=True,
            conventional=conventional_epsilon,
            convention="published ε(cation, anion) at 25 °C (NEA reviews, Appendix B), else 0",
            minimum=-1.0,
            maximum=1.0,
            conventional_uncertainty=conventional_epsilon_uncertainty,
        ),
    ),
    ln_gamma=ln_gamma,
    osmotic_coefficient=osmotic_coefficient,
    max_ionic_strength=3.5,
)
