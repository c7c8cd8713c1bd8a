"""Typed look-ups in the published model-parameter tables shipped with activolt.

- ``pitzer_parameters.csv``: Pitzer β(0), β(1), β(2), Cφ of single electrolytes at 25 °C with the
  upper end of the molality range they were fitted to (Pitzer & Mayorga 1973, 1974; Pitzer, Peiper
  & Busey 1984), and the mean and spread of those values per charge type;
- ``sit_epsilon.csv``: SIT interaction coefficients ε(cation, anion) at 25 °C with their
  uncertainty (NEA thermochemical database reviews, Appendix B);
- ``ion_size.csv``: Kielland's (1937) ion-size parameters å.

An entry the library does not hold gives ``None``; a name that cannot be read as an ion raises
``ValueError``. Every function returns fresh objects, so a caller cannot alter the cached tables.
"""

from __future__ import annotations

import math
import re
import statistics
from functools import lru_cache
from typing import TypedDict

from . import load_table

__all__ = ["PitzerChargeTypeStatistics", "PitzerEntry", "ion_size_angstrom",
           "pitzer_charge_type_statistics", "pitzer_parameters", "sit_epsilon"]

#: The Pitzer parameter columns of the table, in order.
PITZER_PARAMETER_COLUMNS: tuple[str, ...] = (
    "beta0_kg_mol", "beta1_kg_mol", "beta2_kg_mol", "cphi_kg2_mol2",
)


class PitzerEntry(TypedDict):
    """One row of the Pitzer parameter table.

    Keys: ``beta0_kg_mol``, ``beta1_kg_mol``, ``beta2_kg_mol`` [kg mol⁻¹], ``cphi_kg2_mol2``
    [kg² mol⁻²] (unscaled, as in Pitzer & Mayorga 1973), ``max_molality_mol_kg`` (upper end of
    the fitted range) [mol kg⁻¹], ``temperature_K`` [K], ``charge_type``, ``source``, ``note``.
    """

    beta0_kg_mol: float
    beta1_kg_mol: float
    beta2_kg_mol: float
    cphi_kg2_mol2: float
    max_molality_mol_kg: float
    temperature_K: float
    charge_type: str
    source: str
    note: str


_ZERO_CELSIUS_K = 273.15

_ION = re.compile(r"^(?P<body>.+?)(?P<sign>[+\-−]*)$")


@lru_cache(maxsize=1)
def pitzer_rows() -> dict[str, tuple]:
    """Every row of ``pitzer_parameters.csv`` by formula (read once): β(0), β(1), β(2), Cφ,
    the upper molality [mol kg⁻¹], T [K], charge type, source and note."""
    table = load_table("pitzer_parameters")
    if table["formula"].duplicated().any():
        raise ValueError("reference table 'pitzer_parameters' lists a formula twice")
    return {
        row.formula: (
            float(row.beta0_kg_mol), float(row.beta1_kg_mol), float(row.beta2_kg_mol),
            float(row.cphi_kg2_mol2), float(row.max_molality_mol_kg),
            float(row.temperature_C) + _ZERO_CELSIUS_K, str(row.charge_type), str(row.source),
            "" if not isinstance(row.note, str) else row.note,
        )
        for row in table.itertuples(index=False)
    }


def pitzer_parameters(formula: str) -> PitzerEntry | None:
    """Published 25 °C Pitzer parameters of an electrolyte, or None if the library has none.

    Parameters
    ----------
    formula : str
        Formula as the table writes it, e.g. ``"CaCl2"``, ``"(NH4)2SO4"`` (spaces ignored).

    Returns
    -------
    PitzerEntry or None
        A new dict: the four parameters in the unscaled Pitzer & Mayorga (1973) form, the upper
        end of the fitted molality range [mol kg⁻¹], the temperature [K], the source and a note.

    Notes
    -----
    The 2:1 and 1:2 rows are stored unscaled: Pitzer & Mayorga (1973, Table III) print
    (4/3)β(0), (4/3)β(1) and (2^{5/2}/3)Cφ. For NaCl the table holds the Pitzer, Peiper & Busey
    (1984) values with Cφ, not their C = Cφ/2.

    References
    ----------
    .. [1] Pitzer, K. S. & Mayorga, G. (1973). J. Phys. Chem. 77, 2300–2308.
       https://doi.org/10.1021/j100638a009
    .. [2] Pitzer, K. S. & Mayorga, G. (1974). J. Solution Chem. 3, 539–546.
       https://doi.org/10.1007/BF00648138
    .. [3] Pitzer, K. S., Peiper, J. C. & Busey, R. H. (1984). J. Phys. Chem. Ref. Data 13, 1–102.
       https://doi.org/10.1063/1.555709

    Examples
    --------
    CaCl2 unscaled (Pitzer & Mayorga 1973 print (4/3)β(0) = 0.4212; from memory):

    >>> entry = pitzer_parameters("CaCl2")
    >>> entry["beta0_kg_mol"], entry["beta1_kg_mol"], entry["max_molality_mol_kg"]
    (0.3159, 1.614, 2.5)
    >>> pitzer_parameters("XyZ") is None
    True
    """
    row = pitzer_rows().get(formula.replace(" ", ""))
    if row is None:
        return None
    b0, b1, b2, cphi, max_m, temperature, charge_type, source, note = row
    return PitzerEntry(
        beta0_kg_mol=b0, beta1_kg_mol=b1, beta2_kg_mol=b2, cphi_kg2_mol2=cphi,
        max_molality_mol_kg=max_m, temperature_K=temperature, charge_type=charge_type,
        source=source, note=note,
    )


class PitzerChargeTypeStatistics(TypedDict):
    """Mean and spread of the table's Pitzer parameters over the salts of one charge type.

    Keys: ``charge_types`` (the table's spellings pooled, e.g. ``("1:2", "2:1")``), ``formulas``
    (the salts, in file order), ``n`` (their number), ``mean`` and ``sd`` (parameter name →
    arithmetic mean and sample standard deviation with n − 1 in the denominator, NaN when n < 2)
    [kg mol⁻¹ or kg² mol⁻²].
    """

    charge_types: tuple[str, ...]
    formulas: tuple[str, ...]
    n: int
    mean: dict[str, float]
    sd: dict[str, float]


def _charge_key(charge_type: str) -> tuple[int, int]:
    """The unordered pair of charge magnitudes of a table spelling such as ``"1:2"``."""
    first, second = (abs(int(part)) for part in charge_type.split(":"))
    return (max(first, second), min(first, second))


def pitzer_charge_type_statistics(z_cation: int, z_anion: int
                                  ) -> PitzerChargeTypeStatistics | None:
    r"""Mean and standard deviation of each tabulated Pitzer parameter over one charge type.

    Parameters
    ----------
    z_cation, z_anion : int
        Charge numbers of the ions (the sign of ``z_anion`` is ignored) [-].

    Returns
    -------
    PitzerChargeTypeStatistics or None
        Statistics over every row of ``pitzer_parameters.csv`` whose ions carry the same pair of
        charge magnitudes, or None when the table has no such salt.

    Notes
    -----
    2:1 and 1:2 salts (and likewise 3:1 and 1:3, …) are pooled: the single-electrolyte Pitzer
    equations depend on the ions only through |z+ z−|, ν+ν− and ν, which are symmetric in the
    two ions (Pitzer 1991, ch. 3, eqs. 59–66), so the parameters of both spellings have the same
    meaning. The sample standard deviation is

    .. math:: s = \sqrt{\frac{1}{n-1}\sum_i (θ_i − \bar θ)^2}

    References
    ----------
    .. [1] Pitzer, K. S. (1991). Ion interaction approach: theory and data correlation, in
       *Activity Coefficients in Electrolyte Solutions*, 2nd ed., CRC Press, ch. 3.

    Examples
    --------
    The 2:2 sulfates of Pitzer & Mayorga (1974) as shipped (values of the table):

    >>> stats = pitzer_charge_type_statistics(2, -2)
    >>> stats["n"], round(stats["mean"]["beta2_kg_mol"], 2), round(stats["sd"]["beta2_kg_mol"], 2)
    (6, -41.08, 6.11)
    >>> pitzer_charge_type_statistics(3, -2) is None
    True
    """
    key = (max(abs(z_cation), abs(z_anion)), min(abs(z_cation), abs(z_anion)))
    chosen = [(formula, row) for formula, row in pitzer_rows().items()
              if _charge_key(row[6]) == key]
    if not chosen:
        return None
    mean, sd = {}, {}
    for index, name in enumerate(PITZER_PARAMETER_COLUMNS):
        values = [row[index] for _, row in chosen]
        mean[name] = statistics.fmean(values)
        sd[name] = statistics.stdev(values) if len(values) > 1 else math.nan
    return PitzerChargeTypeStatistics(
        charge_types=tuple(sorted({row[6] for _, row in chosen})),
        formulas=tuple(formula for formula, _ in chosen), n=len(chosen), mean=mean, sd=sd,
    )


def _ion_candidates(
    ion: str, known: frozenset[tuple[str, int]], sign: int
) -> list[tuple[str, int]]:
    """(symbol, charge) pairs in ``known`` that the written ion can stand for."""
    text = ion.strip()
    match = _ION.match(text)
    if not text or match is None:
        raise ValueError(f"cannot read '{ion}' as an ion, e.g. 'Na', 'Na+', 'Ca2+', 'SO4 2-'")
    body, signs = match.group("body"), match.group("sign").replace("−", "-")
    if signs and ((signs[0] == "+") != (sign > 0) or len(set(signs)) > 1):
        return []
    if not signs:
        return sorted(pair for pair in known if pair[0] == body)
    if len(signs) > 1:  # "SO4--"
        return [(body, sign * len(signs))] if (body, sign * len(signs)) in known else []
    body = body.rstrip("^ ")
    digits = len(body) - len(body.rstrip("0123456789"))
    found = []
    for k in range(digits + 1):
        symbol = body[: len(body) - k].rstrip("^ ")
        magnitude = int(body[len(body) - k:]) if k else 1
        if (symbol, sign * magnitude) in known:
            found.append((symbol, sign * magnitude))
    return found


@lru_cache(maxsize=1)
def _sit_rows() -> dict[tuple[str, int, str, int], tuple[float, float, str]]:
    table = load_table("sit_epsilon")
    rows = {
        (row.cation, int(row.z_cation), row.anion, int(row.z_anion)): (
            float(row.epsilon_kg_mol), float(row.u_epsilon_kg_mol), str(row.source),
        )
        for row in table.itertuples(index=False)
    }
    if len(rows) != len(table):
        raise ValueError("reference table 'sit_epsilon' lists an ion pair twice")
    return rows


def sit_epsilon(cation: str, anion: str) -> tuple[float, float, str] | None:
    """Published SIT interaction coefficient ε(cation, anion) at 25 °C, or None.

    Parameters
    ----------
    cation, anion : str
        Ion symbols as in :mod:`activolt.chemistry.electrolytes` (``"Na"``, ``"SO4"``), optionally
        with
        their charge (``"Na+"``, ``"Ca2+"``, ``"SO4 2-"``, ``"SO4^2−"``).

    Returns
    -------
    tuple of (float, float, str) or None
        (ε [kg mol⁻¹], its uncertainty as printed [kg mol⁻¹], source), or None when the table
        has no such pair.

    Raises
    ------
    ValueError
        If a name cannot be read as an ion.

    Notes
    -----
    log10 γᵢ = −zᵢ² D + Σⱼ ε(i, j) mⱼ, D = A√I/(1 + 1.5√I) [1]_.

    References
    ----------
    .. [1] Grenthe, I., Plyasunov, A. V. & Spahiu, K. (1997). Estimations of medium effects on
       thermodynamic data, in *Modelling in Aquatic Chemistry*, OECD/NEA, Paris, ch. IX.

    Examples
    --------
    NEA reviews, Appendix B (from memory): ε(H⁺, Cl⁻) = 0.12 ± 0.01 kg mol⁻¹.

    >>> sit_epsilon("H+", "Cl-")[:2]
    (0.12, 0.01)
    >>> sit_epsilon("Na", "SO4 2-")[:2]
    (-0.12, 0.06)
    >>> sit_epsilon("Cs", "Cl") is None
    True
    """
    rows = _sit_rows()
    cations = frozenset((c, zc) for c, zc, _, _ in rows)
    anions = frozenset((a, za) for _, _, a, za in rows)
    for cat in _ion_candidates(cation, cations, +1):
        for an in _ion_candidates(anion, anions, -1):
            found = rows.get((*cat, *an))
            if found is not None:
                return found
    return None


@lru_cache(maxsize=1)
def _ion_size_rows() -> dict[tuple[str, int], float]:
    table = load_table("ion_size")
    rows = {(row.ion, int(row.charge)): float(row.a_angstrom)
            for row in table.itertuples(index=False)}
    if len(rows) != len(table):
        raise ValueError("reference table 'ion_size' lists an ion twice")
    return rows


def ion_size_angstrom(ion: str) -> float | None:
    """Kielland's (1937) ion-size parameter å of an ion, or None if the table has no value.

    Parameters
    ----------
    ion : str
        Ion symbol, optionally with its charge: ``"Na"``, ``"Na+"``, ``"Fe3+"``, ``"SO4 2-"``.
        A symbol standing for ions of different charge (``"Fe"``) needs the charge.

    Returns
    -------
    float or None
        å [Å].

    Raises
    ------
    ValueError
        If the name cannot be read as an ion, or it is ambiguous without its charge.

    References
    ----------
    .. [1] Kielland, J. (1937). Individual activity coefficients of ions in aqueous solutions.
       J. Am. Chem. Soc. 59, 1675–1678. https://doi.org/10.1021/ja01288a032

    Examples
    --------
    Kielland (1937), Table I (from memory): H⁺ 9 Å, Cl⁻ 3 Å, Fe³⁺ 9 Å.

    >>> ion_size_angstrom("H+"), ion_size_angstrom("Cl"), ion_size_angstrom("Fe3+")
    (9.0, 3.0, 9.0)
    """
    rows = _ion_size_rows()
    known = frozenset(rows)
    text = ion.strip().replace("−", "-")
    sign = -1 if text.endswith("-") else +1
    found = _ion_candidates(text, known, sign)
    if len(found) > 1:
        options = ", ".join(f"{s}{abs(z) if abs(z) > 1 else ''}{'+' if z > 0 else '-'}"
                            for s, z in found)
        raise ValueError(f"ion '{ion}' is ambiguous without its charge; write one of: {options}")
    return rows[found[0]] if found else None
