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

with b = 1.2 kg^½ mol^-½ and α1, α2 by charge type (:func:`alphas`): α1 = 2 kg^½ mol^-½ when an
ion is univalent (1:1, 2:1, 1:2, 3:1, 4:1, …), with no β(2) term; α1 = 1.4 and α2 = 12 for 2:2;
α1 = 2.0 and α2 = 50 for 3:2 and 4:2 (Pitzer & Silvester 1978). For charge types without β(2) the
term is kept in the functions (with α2 = 12) so that they stay consistent for any parameter
values; its value there is 0 by definition.

Parameters the data cannot determine are held at a convention (:func:`parameter_convention`): the
published value of the table ``pitzer_parameters`` with a Type B uncertainty, or, for a salt
without a row, the mean ± standard deviation of the table's salts of the same charge type — the
model is refused (:class:`~activolt.errors.FitError`) when the table has no salt of that type.

Pitzer, K. S. & Mayorga, G. (1973). J. Phys. Chem. 77, 2300–2308.
https://doi.org/10.1021/j100638a009 ; Pitzer, K. S. & Mayorga, G. (1974). J. Solution Chem. 3,
539–546. https://doi.org/10.1007/BF00648138 ; Pitzer, K. S. (1991). Ion interaction approach:
theory and data correlation, in *Activity Coefficients in Electrolyte Solutions*, 2nd ed.,
CRC Press, ch. 3, eqs. 59–66 ; Pitzer, K. S. & Silvester, L. F. (1978). Thermodynamics of
electrolytes. 11. Properties of 3:2, 4:2, and other high-valence types. J. Phys. Chem. 82,
1239–1242. https://doi.org/10.1021/j100500a009
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from ..chemistry.electrolytes import Electrolyte
from ..errors import FitError
from ..physics.water import DebyeHueckelConstants
from ..reference.parameters import (
    PitzerEntry,
    pitzer_charge_type_statistics,
    pitzer_parameters,
)
from .base import ActivityModel, Parameter, checked_values

#: Pitzer's universal b [kg^½ mol^-½] (Pitzer 1973).
PITZER_B = 1.2

#: Parameter names of the Pitzer model, in order.
PARAMETER_NAMES: tuple[str, ...] = (
    "beta0_kg_mol", "beta1_kg_mol", "beta2_kg_mol", "cphi_kg2_mol2",
)

#: Below this argument x the functions g and h use their power series (cancellation otherwise).
_SERIES_BELOW = 0.05


#: (α1, α2) [kg^½ mol^-½] by the unordered pair of charge magnitudes (larger, smaller) of the
#: types where both ions are at least divalent. Pitzer & Mayorga (1974) for 2:2; Pitzer &
#: Silvester (1978) for 3:2 and 4:2, as summarised by Pitzer (1991, ch. 3) — from memory.
_MULTIVALENT_ALPHAS: dict[tuple[int, int], tuple[float, float]] = {
    (2, 2): (1.4, 12.0),
    (3, 2): (2.0, 50.0),
    (4, 2): (2.0, 50.0),
}

#: (α1, α2) [kg^½ mol^-½] when an ion is univalent: α1 = 2 (Pitzer & Mayorga 1973); α2 is unused
#: there (β(2) = 0) and kept at 12 only so the functions are defined.
_UNIVALENT_ALPHAS = (2.0, 12.0)


def _charge_pair(electrolyte: Electrolyte) -> tuple[int, int]:
    """(larger, smaller) charge magnitude of the two ions."""
    za, zb = abs(electrolyte.z_cation), abs(electrolyte.z_anion)
    return (max(za, zb), min(za, zb))


def has_beta2(electrolyte: Electrolyte) -> bool:
    """Whether β(2) is part of the Pitzer equations for this charge type (both ions divalent or
    higher; Pitzer & Mayorga 1974; Pitzer 1991, ch. 3).

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> has_beta2(parse_electrolyte("MgSO4")), has_beta2(parse_electrolyte("LaCl3"))
    (True, False)
    """
    return _charge_pair(electrolyte)[1] >= 2


def alphas(electrolyte: Electrolyte) -> tuple[float, float]:
    """(α1, α2) [kg^½ mol^-½] for the electrolyte's charge type.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.

    Returns
    -------
    tuple of float
        α1 = 2 when an ion is univalent (1:1, 2:1, 1:2, 3:1, 4:1, …; α2 = 12 is then unused,
        β(2) being 0); α1 = 1.4, α2 = 12 for 2:2; α1 = 2.0, α2 = 50 for 3:2 and 4:2.

    Raises
    ------
    ValueError
        For a charge type with both ions at least divalent for which no values were published
        (3:3, 4:3, 4:4, …): no choice of α is made up.

    References
    ----------
    .. [1] Pitzer, K. S. & Mayorga, G. (1973). J. Phys. Chem. 77, 2300–2308 (α1 = 2).
    .. [2] Pitzer, K. S. & Mayorga, G. (1974). J. Solution Chem. 3, 539–546 (2:2: 1.4, 12).
    .. [3] Pitzer, K. S. & Silvester, L. F. (1978). J. Phys. Chem. 82, 1239–1242 (3:2, 4:2:
       2.0, 50).
    .. [4] Pitzer, K. S. (1991). *Activity Coefficients in Electrolyte Solutions*, 2nd ed., CRC
       Press, ch. 3 (the summary of all three; from memory).

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> [alphas(parse_electrolyte(f)) for f in ("NaCl", "MgSO4", "Al2(SO4)3")]
    [(2.0, 12.0), (1.4, 12.0), (2.0, 50.0)]
    """
    pair = _charge_pair(electrolyte)
    if pair[1] == 1:
        return _UNIVALENT_ALPHAS
    if pair not in _MULTIVALENT_ALPHAS:
        raise ValueError(
            f"no published Pitzer α1, α2 for {electrolyte.charge_type} electrolytes "
            f"({electrolyte.formula}); published: 1:1, n:1, 2:2, 3:2, 4:2 (Pitzer 1991, ch. 3)")
    return _MULTIVALENT_ALPHAS[pair]


def h_function(x: np.ndarray) -> np.ndarray:
    """h(x) = 2[1 − (1 + x − x²/2) e^(−x)]/x², with h(0) = 2 [-]."""
    x = np.asarray(x, dtype=float)
    small = np.abs(x) < _SERIES_BELOW
    safe = np.where(small, 1.0, x)
    closed = 2.0 * (1.0 - (1.0 + safe - 0.5 * safe**2) * np.exp(-safe)) / safe**2
    if not small.any():  # the usual case (α√I ≥ 0.06 from 1 mmol/kg): no series needed
        return np.asarray(closed)
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

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
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
        pair * molality * h_function(alpha1 * sqrt_i),
        pair * molality * h_function(alpha2 * sqrt_i),
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
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
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

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
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

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.physics.water import debye_hueckel_constants
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
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
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
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> entry = published_parameters(parse_electrolyte("KCl"))
    >>> entry["beta0_kg_mol"], entry["max_molality_mol_kg"]  # Pitzer & Mayorga (1973)
    (0.04835, 4.8)
    """
    entry = pitzer_parameters(electrolyte.formula.replace(" ", ""))
    if entry is None:
        entry = pitzer_parameters(canonical_formula(electrolyte))
    return entry


#: Standard uncertainties given to published Pitzer parameters when a reduction holds them
#: (GUM Type B): twice the difference between two published NaCl sets at 25 °C — Pitzer &
#: Mayorga (1973) 0.0765, 0.2664, 0.00127 against Pitzer, Peiper & Busey (1984) 0.0754, 0.2770,
#: 0.00140 (reference-values.md) — rounded up; common practice for a parameter set of unknown
#: standard error. Only for salts with a row in the table; β(2) has no second published set and
#: takes the spread of its charge type instead (:func:`parameter_convention`).
PUBLISHED_PARAMETER_UNCERTAINTY = {"beta0_kg_mol": 0.003, "beta1_kg_mol": 0.03,
                                   "cphi_kg2_mol2": 0.0003}

#: A charge type with fewer salts than this in the table gives no usable standard deviation; its
#: convention's uncertainty is widened to the larger of the spread and the mean's magnitude (100 %).
MIN_SALTS_FOR_SPREAD = 3


@dataclass(frozen=True)
class PitzerConvention:
    """The value at which a Pitzer parameter is held for an electrolyte, and where it comes from.

    Attributes
    ----------
    value : float
        Conventional value [kg mol⁻¹ or kg² mol⁻²].
    uncertainty : float
        Its standard uncertainty (GUM Type B), same unit.
    basis : str
        ``"published"`` (a row of the table), ``"charge type"`` (mean of the table's salts of the
        same charge type) or ``"not used"`` (β(2) where it is not part of the equations).
    description : str
        One line for the record: the value, its uncertainty and their source.
    """

    value: float
    uncertainty: float
    basis: str
    description: str


def _refuse(electrolyte: Electrolyte) -> FitError:
    needed = [n for n in PARAMETER_NAMES if n != "beta2_kg_mol" or has_beta2(electrolyte)]
    return FitError(
        f"the Pitzer model has no published parameters for {electrolyte.formula} and the table "
        f"pitzer_parameters holds no {electrolyte.charge_type} electrolyte to take a convention "
        f"from: hold {', '.join(needed)} at given values (published values for this salt), or "
        "reduce with a model that needs no published parameters (hueckel, davies)")


def parameter_convention(electrolyte: Electrolyte, name: str) -> PitzerConvention:
    r"""Where a Pitzer parameter is held for an electrolyte when the data cannot determine it.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte.
    name : str
        One of :data:`PARAMETER_NAMES`.

    Returns
    -------
    PitzerConvention

    Raises
    ------
    FitError
        When the table has neither a row for the salt nor any salt of its charge type (nothing
        to take a convention from; the message says what to do).
    KeyError
        For an unknown parameter name.

    Notes
    -----
    In order:

    1. β(2) where an ion is univalent: 0 ± 0 (not part of the equations).
    2. A row in ``pitzer_parameters``: the published value, with
       u = :data:`PUBLISHED_PARAMETER_UNCERTAINTY` for β(0), β(1), Cφ; for β(2) the
       standard deviation of β(2) over the table's salts of the
       same charge type (no second published set to compare).
    3. No row: the mean θ̄ of the table's salts of the same charge type (2:1 and 1:2 pooled,
       :func:`~activolt.reference.parameters.pitzer_charge_type_statistics`) with
       u = s, their sample standard deviation, when there are at least
       :data:`MIN_SALTS_FOR_SPREAD` of them, else u = max(s, |θ̄|).
    4. No salt of that charge type: refused.

    A reduction holds a parameter at this convention only when the data determine it less
    precisely than u, so a wide u lets the data decide.

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> c = parameter_convention(parse_electrolyte("KCl"), "beta0_kg_mol")
    >>> c.basis, c.value, c.uncertainty  # Pitzer & Mayorga (1973), Table II (from memory)
    ('published', 0.04835, 0.003)
    >>> c = parameter_convention(parse_electrolyte("CsBr"), "beta0_kg_mol")
    >>> c.basis, round(c.value, 4), round(c.uncertainty, 4)  # the table's 26 1:1 salts
    ('charge type', 0.0912, 0.0797)
    """
    if name not in PARAMETER_NAMES:
        raise KeyError(f"model 'pitzer' has no parameter '{name}'; it has: "
                       f"{', '.join(PARAMETER_NAMES)}")
    if name == "beta2_kg_mol" and not has_beta2(electrolyte):
        return PitzerConvention(0.0, 0.0, "not used",
                                f"β(2) = 0: not part of the equations for "
                                f"{electrolyte.charge_type} electrolytes (Pitzer 1991, ch. 3)")
    entry = published_parameters(electrolyte)
    stats = pitzer_charge_type_statistics(electrolyte.z_cation, electrolyte.z_anion)
    if entry is not None and name in PUBLISHED_PARAMETER_UNCERTAINTY:
        value, u = float(entry[name]), PUBLISHED_PARAMETER_UNCERTAINTY[name]  # type: ignore[literal-required]
        return PitzerConvention(value, u, "published",
                                f"published value {value:.6g} ± {u:.2g} ({entry['source']}; u "
                                "from two published NaCl sets, Type B)")
    if stats is None:
        raise _refuse(electrolyte)
    mean, sd, n = stats["mean"][name], stats["sd"][name], stats["n"]
    spread = f"sd of the table's {n} {'/'.join(stats['charge_types'])} salt(s)"
    if n >= MIN_SALTS_FOR_SPREAD:
        u, how = sd, spread
    else:
        u = max(0.0 if math.isnan(sd) else sd, abs(mean) if entry is None else abs(float(
            entry[name])))  # type: ignore[literal-required]
        how = (f"widened to the larger of the {spread} and 100 % of the value: fewer than "
               f"{MIN_SALTS_FOR_SPREAD} salts give no usable spread")
    if entry is not None:  # β(2) of a salt with a row
        value = float(entry[name])  # type: ignore[literal-required]
        return PitzerConvention(value, u, "published",
                                f"published value {value:.6g} ({entry['source']}) ± {u:.2g}, "
                                f"the {how}")
    if not u > 0.0:
        raise _refuse(electrolyte)
    return PitzerConvention(mean, u, "charge type",
                            f"no published value for {electrolyte.formula}: mean {mean:.4g} ± "
                            f"{u:.2g} of the table's {n} {'/'.join(stats['charge_types'])} "
                            f"salt(s) ({', '.join(stats['formulas'])}), u the {how}")


def _conventional(name: str) -> Callable[[Electrolyte, DebyeHueckelConstants], float]:
    def conventional(electrolyte: Electrolyte, constants: DebyeHueckelConstants) -> float:
        return parameter_convention(electrolyte, name).value

    conventional.__name__ = f"conventional_{name}"
    conventional.__doc__ = f"Conventional value of {name} (:func:`parameter_convention`)."
    return conventional


def _conventional_uncertainty(name: str
                              ) -> Callable[[Electrolyte, DebyeHueckelConstants], float]:
    def uncertainty(electrolyte: Electrolyte, constants: DebyeHueckelConstants) -> float:
        return parameter_convention(electrolyte, name).uncertainty

    uncertainty.__name__ = f"conventional_uncertainty_{name}"
    uncertainty.__doc__ = f"Standard uncertainty of the convention for {name} (Type B)."
    return uncertainty


_CONVENTION = (
    "published value of the table pitzer_parameters ± 0.003 (β0), 0.03 (β1), 0.0003 (Cφ); "
    "no row: mean ± sd of the table's salts of the same charge type, widened below 3 salts"
)
_CONVENTION_BETA2 = (
    "0 where an ion is univalent; else published value, or mean of the charge type, ± the sd "
    "of the charge type in the table pitzer_parameters"
)


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
            conventional_uncertainty=_conventional_uncertainty("beta0_kg_mol"),
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
            conventional_uncertainty=_conventional_uncertainty("beta1_kg_mol"),
            minimum=-10.0,
            maximum=20.0,
        ),
        Parameter(
            name="beta2_kg_mol",
            symbol="β⁽²⁾",
            unit="kg mol⁻¹",
            description="ion-pairing term of 2:2 and higher electrolytes (α2 = 12 for 2:2, "
                        "50 for 3:2 and 4:2)",
            linear=True,
            conventional=_conventional("beta2_kg_mol"),
            convention=_CONVENTION_BETA2,
            conventional_uncertainty=_conventional_uncertainty("beta2_kg_mol"),
            applies_to=has_beta2,
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
            conventional_uncertainty=_conventional_uncertainty("cphi_kg2_mol2"),
            minimum=-0.5,
            maximum=0.5,
        ),
    ),
    ln_gamma=ln_gamma,
    osmotic_coefficient=osmotic_coefficient,
    max_ionic_strength=6.0,
)
