"""Published mean ionic activity coefficients, and their value at any molality in range.

The tables (``mean_activity_coefficients.csv``) hold γ± at a few molalities, each row from one
named table; where several tables print the same electrolyte and molality, all are kept and
:func:`published_consensus` gives their mean and spread. Between molalities, the
deviation of ln γ± from the extended Debye–Hückel term with Bå = 1.5 kg^½ mol^-½ (which carries
the √m behaviour near m = 0) is interpolated against m with a shape-preserving cubic (PCHIP),
anchored at 0 for m = 0.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import re
from dataclasses import dataclass
from typing import Any

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
    return _ordered(rows, all_sources)


def _ordered(rows: pd.DataFrame, all_sources: bool) -> pd.DataFrame | None:
    """The rows of the reference table as :func:`published_gamma` gives them."""
    if not all_sources:
        rows = rows[rows["principal"]]
    if rows.empty:
        return None
    rows = rows.sort_values(["molality_mol_kg", "principal"], ascending=[True, False],
                            kind="stable")
    return rows[["molality_mol_kg", "gamma_pm", "decimals", "source"]].reset_index(drop=True)


@functools.lru_cache(maxsize=64)
def _rows_of(formula: str) -> tuple[np.ndarray, np.ndarray]:
    """(positions in the reference table, temperatures [K]) of the rows of ``formula``."""
    table = load_table("mean_activity_coefficients")
    t_K = (table["temperature_C"] + ZERO_CELSIUS_K).to_numpy(float)
    rows = (table["electrolyte"] == formula).to_numpy(bool)
    return np.flatnonzero(rows), t_K[rows]


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
    return PublishedTables.of(table, electrolyte, temperature_K).consensus(m).frame()


@dataclass(frozen=True, eq=False)
class Consensus:
    """What the published tables say at each molality (:func:`published_consensus`), as arrays.

    Attributes
    ----------
    molality, gamma_pm, spread, u_rounding, u_published : numpy.ndarray
        As the columns of :func:`published_consensus` (float).
    n_sources : numpy.ndarray
        How many tables speak at each molality (int).
    interpolated : numpy.ndarray
        No table prints the molality (bool).
    values : list of tuple
        Per molality, a tuple of (source, γ±, printed) for each table that speaks there.
    """

    molality: np.ndarray
    gamma_pm: np.ndarray
    n_sources: np.ndarray
    interpolated: np.ndarray
    spread: np.ndarray
    u_rounding: np.ndarray
    u_published: np.ndarray
    values: list[tuple[tuple[str, float, bool], ...]]

    def frame(self) -> pd.DataFrame:
        """The table :func:`published_consensus` returns."""
        return pd.DataFrame({
            "molality_mol_kg": self.molality,
            "gamma_pm": self.gamma_pm,
            "n_sources": self.n_sources,
            "interpolated": self.interpolated,
            "spread": self.spread,
            "u_rounding": self.u_rounding,
            "u_published": self.u_published,
            "values": self.values,
        })


class GammaCurve:
    """γ± of a published table between its molalities (see :func:`interpolate_gamma`), the
    interpolant built once.

    Parameters
    ----------
    means : tuple of numpy.ndarray
        The table's molalities and ln of the mean γ± there (:meth:`means_of`).
    electrolyte : Electrolyte
        The electrolyte (its extended Debye–Hückel term).
    temperature_K : float
        Temperature of the Debye–Hückel term [K].
    """

    def __init__(self, means: tuple[np.ndarray, np.ndarray], electrolyte: Electrolyte,
                 temperature_K: float) -> None:
        from scipy.interpolate import PchipInterpolator

        self.electrolyte = electrolyte
        self.a_gamma = float(debye_hueckel_constants(temperature_K).agamma[0])
        m_table, ln_mean = means
        deviation = ln_mean - self._extended_dh(m_table)
        self.curve = PchipInterpolator(np.concatenate([[0.0], m_table]),
                                       np.concatenate([[0.0], deviation]), extrapolate=False)

    @staticmethod
    def means_of(table: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
        """(the molalities of ``table``, ln of the mean γ± of its rows at each), sorted."""
        mean = table.groupby("molality_mol_kg", sort=True)["gamma_pm"].mean()  # several sources
        return mean.index.to_numpy(float), np.log(mean.to_numpy(float))

    def _extended_dh(self, m: np.ndarray) -> np.ndarray:
        return extended_debye_hueckel(self.electrolyte, m, self.a_gamma)

    def __call__(self, molality: npt.ArrayLike) -> np.ndarray:
        """γ± at ``molality`` [mol kg⁻¹]; NaN beyond the table's range."""
        m = np.asarray(molality, dtype=float)
        return np.exp(self.curve(m) + self._extended_dh(m))


@dataclass(frozen=True, eq=False)
class _Source:
    """One published table, ready to be read at any molality."""

    name: str
    molality: np.ndarray
    gamma_pm: np.ndarray
    half_digit: float
    means: tuple[np.ndarray, np.ndarray]
    curve: GammaCurve | None
    first_ionic_strength: float

    def at(self, m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(γ±, printed) at ``m``: printed, or interpolated where the table prints close
        neighbours (with a curve); NaN where it says nothing close enough."""
        printed_m = self.molality
        match = np.isclose(m[:, None], printed_m[None, :], rtol=1e-9, atol=0.0)
        printed = match.any(axis=1)
        if self.curve is None:
            value = np.full(m.size, np.nan)
        else:
            value = self.curve(m)
            above = np.searchsorted(printed_m, m)
            for i in np.flatnonzero(~printed):
                k = int(above[i])
                if k == 0:
                    near = self.first_ionic_strength <= DILUTE_ANCHOR_IONIC_STRENGTH_MOL_KG
                else:
                    near = k < printed_m.size and printed_m[k] / printed_m[k - 1] <= (
                        MAX_INTERPOLATION_RATIO)
                if not near:
                    value[i] = np.nan
        value[printed] = self.gamma_pm[np.argmax(match[printed], axis=1)]
        return value, printed


def _largest(values: np.ndarray) -> float:
    """The largest value that is not NaN (NaN when there is none), as pandas' ``max``."""
    kept = values[~np.isnan(values)]
    return float(kept.max()) if kept.size else float("nan")


@dataclass(frozen=True, eq=False)
class PublishedTables:
    """The published tables of one electrolyte at one temperature, prepared once to be read at
    any molalities (:meth:`consensus`): each table's rows and interpolant, and the interpolant of
    their mean.

    Attributes
    ----------
    table : pandas.DataFrame
        The rows of :func:`published_gamma` with ``all_sources=True``.
    sources : tuple of str
        Every table, in the order of its first row.
    electrolyte : Electrolyte or None
        Needed to interpolate; without it only printed molalities are answered.
    temperature_K : float
        Temperature of the Debye–Hückel term used in interpolation [K].
    """

    table: pd.DataFrame
    sources: tuple[str, ...]
    electrolyte: Electrolyte | None
    temperature_K: float
    prepared: tuple[_Source, ...]
    #: what does not depend on the temperature, worked out once for every :meth:`at`
    kept: dict[str, Any] = dataclasses.field(default_factory=dict, repr=False)

    @classmethod
    def of(cls, table: pd.DataFrame, electrolyte: Electrolyte | None = None,
           temperature_K: float = 298.15) -> PublishedTables:
        """The tables ``table`` (rows of :func:`published_gamma`, ``all_sources=True``)."""
        sources = tuple(dict.fromkeys(table["source"]))
        prepared = []
        for source in sources:
            rows = table[table["source"] == source].sort_values("molality_mol_kg")
            printed_m = rows["molality_mol_kg"].to_numpy(float)
            prepared.append(_Source(
                name=source, molality=printed_m, gamma_pm=rows["gamma_pm"].to_numpy(float),
                half_digit=0.5 * 10.0 ** -float(rows["decimals"].max()),
                means=GammaCurve.means_of(rows), curve=None,
                first_ionic_strength=(math.nan if electrolyte is None else
                                      float(electrolyte.ionic_strength(printed_m[0])))))
        return cls(table=table, sources=sources, electrolyte=electrolyte,
                   temperature_K=temperature_K, prepared=tuple(prepared)).at(temperature_K)

    def at(self, temperature_K: float) -> PublishedTables:
        """The same tables, interpolated with the Debye–Hückel term at ``temperature_K`` [K]
        (what depends on the temperature only is worked out again)."""
        electrolyte = self.electrolyte
        return dataclasses.replace(self, temperature_K=temperature_K, prepared=tuple(
            dataclasses.replace(s, curve=None if electrolyte is None else GammaCurve(
                s.means, electrolyte, temperature_K)) for s in self.prepared))

    @functools.cached_property
    def mean_curve(self) -> GammaCurve | None:
        """The interpolant of the mean of all tables (None without an electrolyte)."""
        if self.electrolyte is None:
            return None
        if "means" not in self.kept:
            self.kept["means"] = GammaCurve.means_of(self.table)
        return GammaCurve(self.kept["means"], self.electrolyte, self.temperature_K)

    @property
    def printed(self) -> Consensus:
        """The consensus at every molality a table prints, read without interpolation."""
        if "printed" not in self.kept:
            printed_m = np.unique(self.table["molality_mol_kg"].to_numpy(float))
            self.kept["printed"] = dataclasses.replace(
                self, electrolyte=None, kept={},
                prepared=tuple(dataclasses.replace(s, curve=None) for s in self.prepared),
            ).consensus(printed_m)
        return self.kept["printed"]

    def consensus(self, molality: npt.ArrayLike) -> Consensus:
        """What the tables say at ``molality`` [mol kg⁻¹], as :func:`published_consensus`."""
        m = np.atleast_1d(np.asarray(molality, dtype=float))
        sources = self.sources
        values = np.full((len(sources), m.size), np.nan)
        printed = np.zeros((len(sources), m.size), dtype=bool)
        half_digit = np.zeros(len(sources))
        for k, source in enumerate(self.prepared):
            half_digit[k] = source.half_digit
            values[k], printed[k] = source.at(m)
        speaking = ~np.isnan(values)
        n_sources = speaking.sum(axis=0)
        mean, spread, u_rounding = (np.full(m.size, np.nan) for _ in range(3))
        if len(sources) < 8:
            # at once for every molality: a sum over fewer than 8 values adds them in order,
            # as the mean of those that speak does (a 0 added for a silent table changes
            # nothing); the largest and smallest are exact in any order
            some = n_sources > 0
            total = np.where(speaking, values, 0.0).sum(axis=0)
            mean[some] = total[some] / n_sources[some]
            spread[some] = (np.where(speaking, values, -np.inf).max(axis=0)[some]
                            - np.where(speaking, values, np.inf).min(axis=0)[some])
            u_rounding[some] = np.where(speaking, half_digit[:, None], -np.inf).max(axis=0)[some]
        else:
            for i in np.flatnonzero(n_sources):
                here = values[speaking[:, i], i]
                mean[i], spread[i] = here.mean(), here.max() - here.min()
                u_rounding[i] = half_digit[speaking[:, i]].max()
        silent = np.flatnonzero(n_sources == 0)
        curve = self.mean_curve
        if silent.size and curve is not None:
            mean[silent] = curve(m[silent])
            around = self.printed
            for i in silent:
                if np.isnan(mean[i]):
                    continue
                k = int(np.searchsorted(around.molality, m[i]))
                either_side = [j for j in (k - 1, k) if 0 <= j < around.molality.size]
                spread[i] = _largest(around.spread[either_side])
                u_rounding[i] = _largest(around.u_rounding[either_side])
        return Consensus(
            molality=m, gamma_pm=mean, n_sources=n_sources, interpolated=~printed.any(axis=0),
            spread=spread, u_rounding=u_rounding, u_published=np.hypot(spread / 2.0, u_rounding),
            values=[tuple((source, float(values[k, i]), bool(printed[k, i]))
                          for k, source in enumerate(sources) if speaking[k, i])
                    for i in range(m.size)])


@functools.lru_cache(maxsize=32)
def published_tables(electrolyte: Electrolyte, temperature_K: float) -> PublishedTables | None:
    """Every published table of ``electrolyte`` at ``temperature_K`` [K], prepared once (read
    only) for :meth:`PublishedTables.consensus`; None when there is none. The rows are prepared
    once for every temperature that selects them; only the interpolants are made again for
    another temperature.

    Examples
    --------
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> tables = published_tables(parse_electrolyte("HCl"), 298.15)
    >>> float(tables.consensus([0.1]).gamma_pm[0])  # Robinson & Stokes; Hamer & Wu
    0.7965
    """
    positions, t_K = _rows_of(electrolyte.formula)
    selected = tuple(int(k) for k in positions[np.abs(t_K - temperature_K)
                                               <= TEMPERATURE_TOLERANCE_K])
    if not selected:
        return None
    tables = _tables_of(electrolyte, selected)
    return tables if tables.temperature_K == temperature_K else tables.at(temperature_K)


@functools.lru_cache(maxsize=32)
def _tables_of(electrolyte: Electrolyte, selected: tuple[int, ...]) -> PublishedTables:
    """The tables of the reference rows ``selected``, prepared (at the temperature of their
    first row)."""
    rows = load_table("mean_activity_coefficients").iloc[list(selected)]
    table = _ordered(rows, all_sources=True)
    assert table is not None  # selected is not empty
    return PublishedTables.of(table, electrolyte,
                              float(rows["temperature_C"].iloc[0]) + ZERO_CELSIUS_K)


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
    return GammaCurve(GammaCurve.means_of(table), electrolyte, temperature_K)(molality)
