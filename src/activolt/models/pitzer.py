r"""Pitzer equations for a single (binary) electrolyte M(ν+)X(ν−) in water.

.. math:: φ − 1 = |z_+ z_−| f^φ + m \frac{2ν_+ν_−}{ν} B^φ
          + m^2 \frac{2(ν_+ν_−)^{3/2}}{ν} C^φ

.. math:: \ln γ_± = |z_+ z_−| f^γ + m \frac{2ν_+ν_−}{ν} B^γ
          + m^2 \frac{2(ν_+ν_−)^{3/2}}{ν} C^γ

.. math:: f^φ = −A_φ \frac{\sqrt{I}}{1 + b\sqrt{I}}, \qquad
          f^γ = −A_φ \left[\frac{\sqrt{I}}{1 + b\sqrt{I}} + \frac{2}{b}\ln(1 + b\sqrt{I})\right]

.. math:: B^φ = β^{(0)} + β^{(1)} e^{−α_1\sqrt{I}} + β^{(2)} e^{−α_2\sqrt{I}}

.. math:: B^γ = 2β^{(0)} + β^{(1)} h(α_1\sqrt{I}) + β^{(2)} h(α_2\sqrt{I}), \quad
          h(x) = \frac{2}{x^2}\left[1 − \left(1 + x − \frac{x^2}{2}\right)e^{−x}\right]

.. math:: C^γ = \tfrac{3}{2} C^φ

with b = 1.2 kg^½ mol^-½; α1 = 2 kg^½ mol^-½ when either ion is univalent (1:1, 1:2, 2:1, 3:1,
…); α1 = 1.4 and α2 = 12 kg^½ mol^-½ when both ions are at least divalent (2:2 and higher). The
β(2) term is published only for the latter; for other charge types it is kept (with α2 = 12) so
that the functions stay consistent for any parameter values, and its conventional value is 0.

Pitzer, K. S. & Mayorga, G. (1973). J. Phys. Chem. 77, 2300–2308.
https://doi.org/10.1021/j100638a009 ; Pitzer, K. S. & Mayorga, G. (1974). J. Solution Chem. 3,
539–546. https://doi.org/10.1007/BF00648138 ; Pitzer, K. S. (1991). Ion interaction approach:
theory and data correlation, in *Activity Coefficients in Electrolyte Solutions*, 2nd ed.,
CRC Press, ch. 3, eqs. 59–66.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping

import numpy as np
import numpy.typing as npt

from ..electrolytes import Electrolyte
from ..reference.parameters import PitzerEntry, pitzer_parameters
from ..solvent import DebyeHueckelConstants
from .base import ActivityModel, Parameter, checked_values

#: Pitzer's universal b [kg^½ mol^-½] (Pitzer 1973).
PITZER_B = 1.2

#: Parameter names of the Pitzer model, in order.
PARAMETER_NAMES: tuple[str, ...] = (
    "beta0_kg_mol", "beta1_kg_mol", "beta2_kg_mol", "cphi_kg2_mol2",
)

#: Below this argument x the functions g and h use their power series (cancellation otherwise).
_SERIES_BELOW = 0.05


def alphas(electrolyte: Electrolyte) -> tuple[float, float]:
    """(α1, α2) [kg^½ mol^-½] for the electrolyte's charge type.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.

    Returns
    -------
    tuple of float
        α1 = 2, α2 = 12 when either ion is univalent; α1 = 1.4, α2 = 12 when both are at least
        divalent (Pitzer & Mayorga 1974; Pitzer 1991, ch. 3).

    Examples
    --------
    >>> from activolt.electrolytes import parse_electrolyte
    >>> alphas(parse_electrolyte("NaCl")), alphas(parse_electrolyte("MgSO4"))
    ((2.0, 12.0), (1.4, 12.0))
    """
    if min(electrolyte.z_cation, -electrolyte.z_anion) >= 2:
        return 1.4, 12.0
    return 2.0, 12.0


def _h(x: np.ndarray) -> np.ndarray:
    """h(x) = 2[1 − (1 + x − x²/2) e^(−x)]/x², with h(0) = 2 [-]."""
    x = np.asarray(x, dtype=float)
    small = np.abs(x) < _SERIES_BELOW
    safe = np.where(small, 1.0, x)
    closed = 2.0 * (1.0 - (1.0 + safe - 0.5 * safe**2) * np.exp(-safe)) / safe**2
    # h = g + e^(−x), g(x) = 2 Σ_{n≥2} (−1)^n (n − 1)/n! x^(n−2); terms to x^9 (error < 1e-15).
    series = np.zeros_like(x)
    factorial = 1.0
    for n in range(1, 12):
        factorial *= n
        if n >= 2:
            series = series + 2.0 * (-1.0) ** n * (n - 1) / factorial * x ** (n - 2)
    series = series + np.exp(-x)
    return np.where(small, series, closed)


def _values(parameters: Mapping[str, float]) -> dict[str, np.ndarray]:
    return checked_values("pitzer", PARAMETER_NAMES, parameters)


def _factors(electrolyte: Electrolyte) -> tuple[float, float]:
    """(2ν+ν−/ν, 2(ν+ν−)^{3/2}/ν) [-]."""
    product = electrolyte.nu_cation * electrolyte.nu_anion
    return 2.0 * product / electrolyte.nu, 2.0 * product**1.5 / electrolyte.nu


def ln_gamma_terms(
    electrolyte: Electrolyte, molality: npt.ArrayLike, constants: DebyeHueckelConstants
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    r"""ln γ± split into its Debye–Hückel part and the coefficient of each (linear) parameter.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point [kg^½ mol^-½].

    Returns
    -------
    tuple of (numpy.ndarray, dict of str to numpy.ndarray)
        ``(offset, columns)`` with ln γ± = offset + Σ θₖ columns[k]: offset = |z+z−| f^γ [-];
        the columns of β(0), β(1), β(2) [mol kg⁻¹] and of Cφ [mol² kg⁻²].

    Notes
    -----
    .. math:: \ln γ_± = |z_+ z_−| f^γ + \frac{2ν_+ν_−}{ν} m \left[2β^{(0)} + β^{(1)} h(α_1\sqrt{I})
              + β^{(2)} h(α_2\sqrt{I})\right] + \frac{3(ν_+ν_−)^{3/2}}{ν} m^2 C^φ

    Pitzer & Mayorga (1973), https://doi.org/10.1021/j100638a009, eqs. 11–14 (from memory).

    Examples
    --------
    The β(0) column is 2 × (2ν+ν−/ν) m: 2 for HCl and 8/3 for CaCl2 at 1 mol kg⁻¹:

    >>> from activolt.electrolytes import parse_electrolyte
    >>> from activolt.solvent import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> [round(float(ln_gamma_terms(parse_electrolyte(f), 1.0, c)[1]["beta0_kg_mol"][0]), 4)
    ...  for f in ("HCl", "CaCl2")]
    [2.0, 2.6667]
    """
    molality = np.asarray(molality, dtype=float)
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    bsi = PITZER_B * sqrt_i
    f_gamma = -constants.aphi * (sqrt_i / (1.0 + bsi) + 2.0 / PITZER_B * np.log1p(bsi))
    alpha1, alpha2 = alphas(electrolyte)
    pair, triple = _factors(electrolyte)
    arrays = np.broadcast_arrays(
        electrolyte.charge_product * f_gamma,
        pair * molality * 2.0,
        pair * molality * _h(alpha1 * sqrt_i),
        pair * molality * _h(alpha2 * sqrt_i),
        triple * 1.5 * molality**2 + 0.0 * f_gamma,
    )
    offset, *columns = (np.array(a) for a in arrays)
    return offset, dict(zip(PARAMETER_NAMES, columns, strict=True))


def osmotic_terms(
    electrolyte: Electrolyte, molality: npt.ArrayLike, constants: DebyeHueckelConstants
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    r"""φ split into its parameter-free part and the coefficient of each parameter.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point [kg^½ mol^-½].

    Returns
    -------
    tuple of (numpy.ndarray, dict of str to numpy.ndarray)
        ``(offset, columns)`` with φ = offset + Σ θₖ columns[k]; offset = 1 + |z+z−| f^φ [-].

    Notes
    -----
    .. math:: φ − 1 = |z_+ z_−| f^φ + \frac{2ν_+ν_−}{ν} m \left[β^{(0)} + β^{(1)} e^{−α_1\sqrt{I}}
              + β^{(2)} e^{−α_2\sqrt{I}}\right] + \frac{2(ν_+ν_−)^{3/2}}{ν} m^2 C^φ

    Pitzer (1991), *Activity Coefficients in Electrolyte Solutions*, ch. 3, eqs. 59–61.

    Examples
    --------
    >>> from activolt.electrolytes import parse_electrolyte
    >>> from activolt.solvent import debye_hueckel_constants
    >>> c = debye_hueckel_constants(298.15)
    >>> offset, cols = osmotic_terms(parse_electrolyte("CaCl2"), 1.0, c)
    >>> round(float(cols["cphi_kg2_mol2"][0]), 4)  # 2 × 2^{3/2} / 3
    1.8856
    """
    molality = np.asarray(molality, dtype=float)
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    f_phi = -constants.aphi * sqrt_i / (1.0 + PITZER_B * sqrt_i)
    alpha1, alpha2 = alphas(electrolyte)
    pair, triple = _factors(electrolyte)
    arrays = np.broadcast_arrays(
        1.0 + electrolyte.charge_product * f_phi,
        pair * molality,
        pair * molality * np.exp(-alpha1 * sqrt_i),
        pair * molality * np.exp(-alpha2 * sqrt_i),
        triple * molality**2 + 0.0 * f_phi,
    )
    offset, *columns = (np.array(a) for a in arrays)
    return offset, dict(zip(PARAMETER_NAMES, columns, strict=True))


def _combine(
    terms: tuple[np.ndarray, dict[str, np.ndarray]], parameters: Mapping[str, float]
) -> np.ndarray:
    values = _values(parameters)
    offset, columns = terms
    total = offset
    for name in PARAMETER_NAMES:
        total = total + values[name] * columns[name]
    return total


def ln_gamma(
    electrolyte: Electrolyte,
    molality: npt.ArrayLike,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    r"""ln γ± of the Pitzer equations for a single electrolyte.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point; A_φ [kg^½ mol^-½].
    parameters : Mapping[str, float]
        ``beta0_kg_mol``, ``beta1_kg_mol``, ``beta2_kg_mol`` [kg mol⁻¹] and
        ``cphi_kg2_mol2`` [kg² mol⁻²], in the unscaled form of Pitzer & Mayorga (1973).

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
    See the module docstring for f^γ, B^γ and C^γ = (3/2) Cφ:

    .. math:: \ln γ_± = |z_+ z_−| f^γ + m \frac{2ν_+ν_−}{ν} B^γ
              + m^2 \frac{2(ν_+ν_−)^{3/2}}{ν} C^γ

    Pitzer & Mayorga (1973), https://doi.org/10.1021/j100638a009 ; Pitzer (1991), ch. 3.

    Examples
    --------
    HCl at 1 mol kg⁻¹ and 25 °C with the Pitzer & Mayorga (1973) parameters (from memory);
    Robinson & Stokes (1959, Appendix 8.10) give γ± = 0.809:

    >>> from activolt.electrolytes import parse_electrolyte
    >>> from activolt.solvent import debye_hueckel_constants
    >>> hcl = {"beta0_kg_mol": 0.1775, "beta1_kg_mol": 0.2945, "beta2_kg_mol": 0.0,
    ...        "cphi_kg2_mol2": 0.0008}
    >>> c = debye_hueckel_constants(298.15)
    >>> round(float(np.exp(ln_gamma(parse_electrolyte("HCl"), 1.0, c, hcl))[0]), 3)
    0.812
    """
    return _combine(ln_gamma_terms(electrolyte, molality, constants), parameters)


def osmotic_coefficient(
    electrolyte: Electrolyte,
    molality: npt.ArrayLike,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    r"""Osmotic coefficient φ of the Pitzer equations for a single electrolyte.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    molality : array_like
        Molality m [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each point; A_φ [kg^½ mol^-½].
    parameters : Mapping[str, float]
        As for :func:`ln_gamma`.

    Returns
    -------
    numpy.ndarray
        φ [-].

    Notes
    -----
    .. math:: φ − 1 = |z_+ z_−| f^φ + m \frac{2ν_+ν_−}{ν} B^φ
              + m^2 \frac{2(ν_+ν_−)^{3/2}}{ν} C^φ

    Pitzer (1991), *Activity Coefficients in Electrolyte Solutions*, ch. 3.

    Examples
    --------
    NaCl at 1 mol kg⁻¹ and 25 °C with the Pitzer, Peiper & Busey (1984) parameters; Robinson &
    Stokes (1959, Appendix 8.10) give φ = 0.9355 (from memory):

    >>> from activolt.electrolytes import parse_electrolyte
    >>> from activolt.solvent import debye_hueckel_constants
    >>> nacl = {"beta0_kg_mol": 0.0754, "beta1_kg_mol": 0.2770, "beta2_kg_mol": 0.0,
    ...         "cphi_kg2_mol2": 0.0014}
    >>> c = debye_hueckel_constants(298.15)
    >>> round(float(osmotic_coefficient(parse_electrolyte("NaCl"), 1.0, c, nacl)[0]), 4)
    0.9364
    """
    return _combine(osmotic_terms(electrolyte, molality, constants), parameters)


def _is_polyatomic(symbol: str) -> bool:
    return sum(ch.isupper() for ch in symbol) > 1 or bool(re.search(r"[\d(]", symbol))


def canonical_formula(electrolyte: Electrolyte) -> str:
    """The electrolyte's formula written from its ions, as the reference tables spell it.

    Examples
    --------
    >>> from activolt.electrolytes import parse_electrolyte
    >>> canonical_formula(parse_electrolyte("(NH4)2SO4")), canonical_formula(
    ...     parse_electrolyte("CaCl2"))
    ('(NH4)2SO4', 'CaCl2')
    """

    def part(symbol: str, count: int) -> str:
        if count == 1:
            return symbol
        return f"({symbol}){count}" if _is_polyatomic(symbol) else f"{symbol}{count}"

    return part(electrolyte.cation, electrolyte.nu_cation) + part(
        electrolyte.anion, electrolyte.nu_anion
    )


def published_parameters(electrolyte: Electrolyte) -> PitzerEntry | None:
    """The published 25 °C Pitzer parameters of the electrolyte, or None if the library has none.

    The entry's ``max_molality_mol_kg`` is the upper end of the molality range the parameters were
    fitted to; beyond it the equations are an extrapolation.

    Examples
    --------
    >>> from activolt.electrolytes import parse_electrolyte
    >>> entry = published_parameters(parse_electrolyte("KCl"))
    >>> entry["beta0_kg_mol"], entry["max_molality_mol_kg"]  # Pitzer & Mayorga (1973)
    (0.04835, 4.8)
    """
    entry = pitzer_parameters(electrolyte.formula.replace(" ", ""))
    if entry is None:
        entry = pitzer_parameters(canonical_formula(electrolyte))
    return entry


def _conventional(name: str):
    def conventional(electrolyte: Electrolyte, constants: DebyeHueckelConstants) -> float:
        entry = published_parameters(electrolyte)
        return 0.0 if entry is None else float(entry[name])  # type: ignore[literal-required]

    conventional.__name__ = f"conventional_{name}"
    conventional.__doc__ = (
        f"Published 25 °C value of {name} for the electrolyte (Pitzer & Mayorga 1973, 1974, "
        "or as the table's source column says), else 0."
    )
    return conventional


_CONVENTION = "published value at 25 °C (reference table pitzer_parameters), else 0"

#: Standard uncertainties given to published Pitzer parameters when a reduction holds them
#: (GUM Type B): twice the difference between two published NaCl sets at 25 °C — Pitzer &
#: Mayorga (1973) 0.0765, 0.2664, 0.00127 against Pitzer, Peiper & Busey (1984) 0.0754, 0.2770,
#: 0.00140 (reference-values.md) — rounded up; common practice for a parameter set of unknown
#: standard error. Parameters with no published value (held at 0) get the same.
PUBLISHED_PARAMETER_UNCERTAINTY = {"beta0_kg_mol": 0.003, "beta1_kg_mol": 0.03,
                                   "cphi_kg2_mol2": 0.0003}


def _published_uncertainty(name: str) -> Callable[[Electrolyte, DebyeHueckelConstants], float]:
    def uncertainty(electrolyte: Electrolyte, constants: DebyeHueckelConstants) -> float:
        return PUBLISHED_PARAMETER_UNCERTAINTY[name]

    return uncertainty


MODEL = ActivityModel(
    name="pitzer",
    title="Pitzer equations",
    parameters=(
        Parameter(
            name="beta0_kg_mol",
            symbol="β⁽⁰⁾",
            unit="kg mol⁻¹",
            description="short-range binary interaction, constant part",
            linear=True,
            conventional=_conventional("beta0_kg_mol"),
            convention=_CONVENTION,
            conventional_uncertainty=_published_uncertainty("beta0_kg_mol"),
            minimum=-2.0,
            maximum=2.0,
        ),
        Parameter(
            name="beta1_kg_mol",
            symbol="β⁽¹⁾",
            unit="kg mol⁻¹",
            description="binary interaction, ionic-strength dependent part (α1)",
            linear=True,
            conventional=_conventional("beta1_kg_mol"),
            convention=_CONVENTION,
            conventional_uncertainty=_published_uncertainty("beta1_kg_mol"),
            minimum=-10.0,
            maximum=20.0,
        ),
        Parameter(
            name="beta2_kg_mol",
            symbol="β⁽²⁾",
            unit="kg mol⁻¹",
            description="ion-pairing term of 2:2 and higher electrolytes (α2 = 12)",
            linear=True,
            conventional=_conventional("beta2_kg_mol"),
            convention=_CONVENTION,
            applies_to=lambda electrolyte: alphas(electrolyte)[0] != 2.0,
            minimum=-200.0,
            maximum=10.0,
        ),
        Parameter(
            name="cphi_kg2_mol2",
            symbol="C^φ",
            unit="kg² mol⁻²",
            description="triple interaction (osmotic form)",
            linear=True,
            conventional=_conventional("cphi_kg2_mol2"),
            convention=_CONVENTION,
            conventional_uncertainty=_published_uncertainty("cphi_kg2_mol2"),
            minimum=-0.5,
            maximum=0.5,
        ),
    ),
    ln_gamma=ln_gamma,
    osmotic_coefficient=osmotic_coefficient,
    max_ionic_strength=6.0,
)
