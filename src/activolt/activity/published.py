"""Published mean ionic activity coefficients, and their value at any molality in range.

The tables (``mean_activity_coefficients.csv``) hold γ± at a few molalities, each row from one
named table; where several tables print the same electrolyte and molality, all are kept and
:func:`published_consensus` gives their mean and spread. Between molalities, the
deviation of ln γ± from the extended Debye–Hückel term with Bå = 1.5 kg^½ mol^-½ (which carries
the √m behaviour near m = 0) is interpolated against m with a shape-preserving cubic (PCHIP),
anchored at 0 for m = 0.
"""

from __future__ import annotations

import re

import numpy as np
import numpy.typing as npt
import pandas as pd

from ..chemistry.electrolytes import Electrolyte
from ..constants import ZERO_CELSIUS_K
from ..physics.water import debye_hueckel_constants
from ..reference import load_table
from .hueckel import extended_debye_hueckel

#: Largest difference between the run's temperature and a table's for a comparison [K].
TEMPERATURE_TOLERANCE_K = 0.5
#: Widest ratio of two neighbouring molalities one table prints across which that table alone is
#: interpolated [-]. Five spans the sparse entries of the shipped tables (0.1 → 0.5 mol/kg) but
#: not a lone entry far from the others (NaCl, Robinson & Stokes, 0.05 → 2 mol/kg).
MAX_INTERPOLATION_RATIO = 5.0
#: Ionic strength up to which a table is extended from its first printed molality toward m = 0,
#: where the extended Debye–Hückel term carries the curve [mol kg⁻¹].
DILUTE_ANCHOR_IONIC_STRENGTH_MOL_KG = 0.01


def published_gamma(formula: str, temperature_K: float,
                    all_sources: bool = False) -> pd.DataFrame | None:
    """The published γ± table of ``formula`` at ``temperature_K`` [K], or None if there is none.

    Parameters
    ----------
    formula : str
        The electrolyte as written in the table, e.g. ``"HCl"``.
    temperature_K : float
        Temperature [K]; tables within :data:`TEMPERATURE_TOLERANCE_K` are taken.
    all_sources : bool
        False (default): one row per molality, the table's principal row (one published curve,
        for figures and test data). True: every row of every source, so that several rows may
        share a molality (see :func:`published_consensus`).

    Returns
    -------
    pandas.DataFrame or None
        Columns ``molality_mol_kg``, ``gamma_pm``, ``decimals`` (printed after the point),
        ``source`` (one table per row), sorted by molality (principal row first).

    Examples
    --------
    >>> table = published_gamma("HCl", 298.15)
    >>> float(table.loc[table.molality_mol_kg == 0.1, "gamma_pm"].iloc[0])  # Robinson & Stokes
    0.796
    >>> every = published_gamma("HCl", 298.15, all_sources=True)
    >>> every.loc[every.molality_mol_kg == 0.1, "gamma_pm"].tolist()  # R&S; Hamer & Wu 1972
    [0.796, 0.797]
    """
    table = load_table("mean_activity_coefficients")
    t_K = table["temperature_C"] + ZERO_CELSIUS_K
    rows = table[(table["electrolyte"] == formula)
                 & ((t_K - temperature_K).abs() <= TEMPERATURE_TOLERANCE_K)]
    if not all_sources:
        rows = rows[rows["principal"]]
    if rows.empty:
        return None
    rows = rows.sort_values(["molality_mol_kg", "principal"], ascending=[True, False],
                            kind="stable")
    return rows[["molality_mol_kg", "gamma_pm", "decimals", "source"]].reset_index(drop=True)


def source_label(source: str) -> str:
    """A short name of a table for reports: authors and year, e.g. ``"Hamer & Wu (1972)"``.

    Examples
    --------
    >>> source_label("Pitzer, Peiper & Busey (1984) J. Phys. Chem. Ref. Data 13, 1")
    'Pitzer, Peiper & Busey (1984)'
    >>> source_label("CRC Handbook of Chemistry and Physics, Mean activity coefficients")
    'CRC Handbook of Chemistry and Physics'
    """
    found = re.match(r"^(.*?\(\d{4}\))", source)
    return found.group(1) if found else source.split(",")[0].strip()


def _one_source_at(rows: pd.DataFrame, m: np.ndarray, electrolyte: Electrolyte,
                   temperature_K: float) -> tuple[np.ndarray, np.ndarray]:
    """One table's γ± at ``m`` (printed, or interpolated where it prints close neighbours) and
    whether it printed that molality; NaN where the table says nothing close enough."""
    printed_m = rows["molality_mol_kg"].to_numpy(float)
    match = np.isclose(m[:, None], printed_m[None, :], rtol=1e-9, atol=0.0)
    printed = match.any(axis=1)
    value = interpolate_gamma(rows, m, electrolyte, temperature_K)
    above = np.searchsorted(printed_m, m)
    first_ionic_strength = float(electrolyte.ionic_strength(printed_m[0]))
    for i in np.flatnonzero(~printed):
        k = int(above[i])
        if k == 0:
            near = first_ionic_strength <= DILUTE_ANCHOR_IONIC_STRENGTH_MOL_KG
        else:
            near = k < printed_m.size and printed_m[k] / printed_m[k - 1] <= (
                MAX_INTERPOLATION_RATIO)
        if not near:
            value[i] = np.nan
    value[printed] = rows["gamma_pm"].to_numpy(float)[np.argmax(match[printed], axis=1)]
    return value, printed


def published_consensus(table: pd.DataFrame, molality: npt.ArrayLike | None = None,
                        electrolyte: Electrolyte | None = None,
                        temperature_K: float = 298.15) -> pd.DataFrame:
    r"""What the published tables say at each molality: their values, mean, spread, uncertainty.

    Parameters
    ----------
    table : pandas.DataFrame
        Rows of :func:`published_gamma` with ``all_sources=True`` (one or several tables).
    molality : array_like, optional
        Molalities [mol kg⁻¹]; default: every molality a table prints.
    electrolyte : Electrolyte, optional
        Needed to interpolate (the extended Debye–Hückel term); without it, only printed
        molalities are answered.
    temperature_K : float
        Temperature [K] of the Debye–Hückel term used in interpolation.

    Returns
    -------
    pandas.DataFrame
        One row per molality: ``molality_mol_kg``, ``gamma_pm`` (mean over the tables that
        speak there), ``n_sources`` (how many), ``interpolated`` (no table prints the molality),
        ``spread`` (largest − smallest of their values), ``u_rounding`` (half a unit of the last
        printed digit), ``u_published`` and ``values``, a tuple of (source, γ±, printed) per
        table.

    Notes
    -----
    Each table is read at a molality it prints, or interpolated alone (as in
    :func:`interpolate_gamma`) between two molalities it prints no more than
    :data:`MAX_INTERPOLATION_RATIO` apart, or below its first molality when that is dilute
    (I ≤ :data:`DILUTE_ANCHOR_IONIC_STRENGTH_MOL_KG`). Where no table speaks alone, the mean of
    all tables is interpolated (``n_sources`` = 0) and the spread is the larger of those at the
    printed molalities either side.

    The standard uncertainty given to the published mean combines the tables' disagreement and
    the rounding of the printed values, each half-width taken as a standard uncertainty without
    the 1/√3 of a rectangular distribution (GUM, JCGM 100:2008, 4.3.7), i.e. on the wide side:

    .. math:: u_{pub} = \sqrt{(s/2)^2 + (\tfrac12 \cdot 10^{-d})^2}

    with s the spread between the tables and d the decimals printed. One table alone has s = 0:
    its own uncertainty is not printed, so u_pub then says only how it was rounded.

    Examples
    --------
    HCl at 0.1 mol/kg: 0.796 (Robinson & Stokes 1959, from memory) and 0.797 (Hamer & Wu 1972,
    CRC Handbook):

    >>> c = published_consensus(published_gamma("HCl", 298.15, all_sources=True))
    >>> row = c[c.molality_mol_kg == 0.1].iloc[0]
    >>> [round(float(row[k]), 5) for k in ("gamma_pm", "spread", "u_published", "n_sources")]
    [0.7965, 0.001, 0.00071, 2.0]
    """
    if molality is None:
        m = np.unique(table["molality_mol_kg"].to_numpy(float))
    else:
        m = np.atleast_1d(np.asarray(molality, dtype=float))
    sources = list(dict.fromkeys(table["source"]))
    values = np.full((len(sources), m.size), np.nan)
    printed = np.zeros((len(sources), m.size), dtype=bool)
    half_digit = np.zeros(len(sources))
    for k, source in enumerate(sources):
        rows = table[table["source"] == source].sort_values("molality_mol_kg")
        half_digit[k] = 0.5 * 10.0 ** -float(rows["decimals"].max())
        if electrolyte is None:
            match = np.isclose(m[:, None], rows["molality_mol_kg"].to_numpy(float)[None, :],
                               rtol=1e-9, atol=0.0)
            printed[k] = match.any(axis=1)
            values[k, printed[k]] = rows["gamma_pm"].to_numpy(float)[
                np.argmax(match[printed[k]], axis=1)]
        else:
            values[k], printed[k] = _one_source_at(rows, m, electrolyte, temperature_K)
    speaking = ~np.isnan(values)
    n_sources = speaking.sum(axis=0)
    mean, spread, u_rounding = (np.full(m.size, np.nan) for _ in range(3))
    for i in np.flatnonzero(n_sources):
        here = values[speaking[:, i], i]
        mean[i], spread[i] = here.mean(), here.max() - here.min()
        u_rounding[i] = half_digit[speaking[:, i]].max()
    silent = np.flatnonzero(n_sources == 0)
    if silent.size and electrolyte is not None:
        mean[silent] = interpolate_gamma(table, m[silent], electrolyte, temperature_K)
        printed_m = np.unique(table["molality_mol_kg"].to_numpy(float))
        around = published_consensus(table, printed_m)
        for i in silent:
            if np.isnan(mean[i]):
                continue
            k = int(np.searchsorted(printed_m, m[i]))
            either_side = around.iloc[[j for j in (k - 1, k) if 0 <= j < printed_m.size]]
            spread[i] = float(either_side["spread"].max())
            u_rounding[i] = float(either_side["u_rounding"].max())
    return pd.DataFrame({
        "molality_mol_kg": m,
        "gamma_pm": mean,
        "n_sources": n_sources,
        "interpolated": ~printed.any(axis=0),
        "spread": spread,
        "u_rounding": u_rounding,
        "u_published": np.hypot(spread / 2.0, u_rounding),
        "values": [tuple((source, float(values[k, i]), bool(printed[k, i]))
                         for k, source in enumerate(sources) if speaking[k, i])
                   for i in range(m.size)],
    })


def interpolate_gamma(table: pd.DataFrame, molality: npt.ArrayLike, electrolyte: Electrolyte,
                      temperature_K: float) -> np.ndarray:
    """γ± from a published table at ``molality`` [mol kg⁻¹]; NaN beyond the table's range.

    Where the table holds several sources at one molality, their mean is interpolated.

    Examples
    --------
    Robinson & Stokes (1959, Appendix 8.10) print 0.767 at 0.2 mol/kg (from memory), a molality
    the shipped table does not hold:

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> table = published_gamma("HCl", 298.15)
    >>> g = interpolate_gamma(table, [0.1, 0.2, 5.0], parse_electrolyte("HCl"), 298.15)
    >>> [round(float(v), 3) for v in g[:2]], bool(np.isnan(g[2]))
    ([0.796, 0.767], True)
    """
    from scipy.interpolate import PchipInterpolator

    a_gamma = float(debye_hueckel_constants(temperature_K).agamma[0])

    def extended_dh(m: np.ndarray) -> np.ndarray:
        return extended_debye_hueckel(electrolyte, m, a_gamma)

    mean = table.groupby("molality_mol_kg", sort=True)["gamma_pm"].mean()  # several sources
    m_table = mean.index.to_numpy(float)
    deviation = np.log(mean.to_numpy(float)) - extended_dh(m_table)
    curve = PchipInterpolator(np.concatenate([[0.0], m_table]),
                              np.concatenate([[0.0], deviation]), extrapolate=False)
    m = np.asarray(molality, dtype=float)
    return np.exp(curve(m) + extended_dh(m))
