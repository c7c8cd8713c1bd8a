"""The run's γ± beside published values at the measured molalities, with the tables' own spread
(science, computed here once; the report and the record only show it). Also the readers of a
reduction's tables that the outputs share: a column as the table holds it, as plain values,
and the columns of a reduction's points read without building its ``points`` table."""

from __future__ import annotations

import functools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np
import pandas as pd

from ..activity.published import published_tables
from ..chemistry.electrolytes import Electrolyte
from ..data.runs import column_values
from .dilution import Reduction

__all__ = ["column_values", "compare_with_published", "plain_values", "point_lists",
           "point_names", "point_values", "point_values_of_many", "published_columns",
           "published_columns_of_many", "table_of"]


def compare_with_published(reduction: Reduction) -> pd.DataFrame | None:
    r"""γ± of the run against every published table, or None when there is none.

    Returns
    -------
    pandas.DataFrame or None
        One row per reading with γ±:

        - ``molality_mol_kg``, ``gamma_pm``, ``u_gamma_pm`` (the run);
        - ``gamma_pm_published``: the mean of the published tables at that molality, each
          printed or interpolated within the table (NaN where none reaches);
        - ``interpolated``: no table prints the molality;
        - ``n_sources``: how many tables give a value there (0: only the mean of all tables
          could be interpolated);
        - ``published_values``: tuple of (source, γ±, printed) for each of those tables;
        - ``spread_published``: largest − smallest of their values;
        - ``u_published``: √((spread/2)² + (half a unit of the last printed digit)²);
        - ``difference`` (run − published mean), ``u_difference`` (combined standard
          uncertainty) and ``difference_over_u`` (their ratio);
        - ``source``: every table compared with, joined by "; ".

    Notes
    -----
    .. math:: u_c = \sqrt{u^2(γ_±) + u_{pub}^2}

    with u(γ±) from the reduction (k = 1) and u_pub from
    :func:`~activolt.activity.published.published_consensus`. A ratio |difference| / u_c up to
    about 2 says the run and the tables agree within what both can tell; a much larger one is a
    disagreement that the tables' own spread does not explain.
    """
    columns = published_columns(reduction)
    return None if columns is None else table_of(_COLUMNS, list(columns.values()))


def published_columns(reduction: Reduction) -> dict[str, Any] | None:
    """The columns of :func:`compare_with_published`'s table, by name in the table's order
    (each a new array, or pandas' extension array for ``source``), without building the table;
    None when there is no published table."""
    columns = published_columns_of_many([reduction])[0]
    if columns is None:
        return None
    return {name: column.copy() for name, column in columns.items()}


def published_columns_of_many(reductions: Sequence[Reduction]) -> list[dict[str, Any] | None]:
    r"""The columns of :func:`compare_with_published`'s table for each of many reductions,
    worked out together, without building the tables.

    Parameters
    ----------
    reductions : sequence of Reduction
        Reductions of any electrolytes, temperatures and molalities.

    Returns
    -------
    list of (dict of str to array, or None)
        For each reduction, in the order of ``reductions``: its columns by name in the table's
        order, None when there is no published table. The numpy columns are read only (rows
        of arrays that the reductions of a group share); ``source`` is pandas' extension array,
        the reduction's own.

    Notes
    -----
    The reductions are grouped by electrolyte, temperature and the molalities with γ±: the
    published values there (:func:`~activolt.activity.published.published_consensus`) are
    looked up once a group, and

    .. math:: u_c = \sqrt{u^2(γ_±) + u_{pub}^2}

    and the difference and its ratio to u_c are worked out for the whole group at once,
    elementwise: each column equals, bit for bit, what :func:`published_columns` gives the
    reduction alone.

    Examples
    --------
    >>> published_columns_of_many([])
    []
    """
    groups: dict[tuple[Any, ...], list[tuple[int, np.ndarray, np.ndarray, np.ndarray]]] = {}
    for position, reduction in enumerate(reductions):
        gamma = np.asarray(point_values(reduction, "gamma_pm"), dtype=float)
        with_gamma = ~np.isnan(gamma)
        m = np.asarray(point_values(reduction, "molality_mol_kg"), dtype=float)[with_gamma]
        u_gamma = np.asarray(point_values(reduction, "u_gamma_pm"), dtype=float)[with_gamma]
        key = (reduction.electrolyte, float(reduction.temperature_K), m.tobytes())
        groups.setdefault(key, []).append((position, m, gamma[with_gamma], u_gamma))
    found: list[dict[str, Any] | None] = [None] * len(reductions)
    for (electrolyte, temperature_K, _), members in groups.items():
        published = _published_at(electrolyte, temperature_K, tuple(members[0][1]))
        if published is None:
            continue
        for (position, *_), columns in zip(members, _group_columns(published, members),
                                           strict=True):
            found[position] = columns
    return found


def _group_columns(found: _Published,
                   members: Sequence[tuple[int, np.ndarray, np.ndarray, np.ndarray]]
                   ) -> list[dict[str, Any]]:
    """The columns of the runs of a group (same electrolyte, temperature and molalities) of
    :func:`published_columns_of_many`: the differences for all of them at once, the columns
    that depend on the molalities only repeated for each (every array read only)."""
    m, gamma, u_gamma = (_stacked([member[i] for member in members]) for i in (1, 2, 3))
    difference = gamma - found.published
    u_difference = np.hypot(u_gamma, found.u_published)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(u_difference > 0, difference / u_difference, np.nan)
    shared = [m, gamma, u_gamma, difference, u_difference, ratio]
    for array in shared:
        array.setflags(write=False)  # each run's columns are rows of these: read only too
    # the columns of the molalities alone are the kept ones (read only), seen through a view
    # each run, which cannot be made writable
    fixed = found.fixed
    return [dict(zip(_COLUMN_NAMES, (
        m_row, gamma_row, u_row, *(fixed[name].view() for name in _FIXED), difference_row,
        u_difference_row, ratio_row, found.source.copy()), strict=True))
        for m_row, gamma_row, u_row, difference_row, u_difference_row, ratio_row
        in zip(*shared, strict=False)]  # a row for each run (a strict zip of arrays checks
    # their ends slowly)


def _stacked(arrays: Sequence[np.ndarray]) -> np.ndarray:
    """The equal-length ``arrays`` as the rows of one array; one array seen as a row."""
    return arrays[0][None] if len(arrays) == 1 else np.array(arrays)


def table_of(names: pd.Index, columns: Sequence[Any]) -> pd.DataFrame:
    """A table of the equal-length one-dimensional ``columns``, named ``names``, with a
    RangeIndex, each column kept as given (no inference of its type).

    For the short tables of a reduction, a few times faster than ``pandas.DataFrame`` of a
    dict, which infers and checks each column: ``pandas.DataFrame(dict(zip(names, columns)))``
    gives the same table when each column is a numpy array of float, int or bool, or of objects
    that are not strings, or a pandas extension array (as a pandas column holds it).

    Parameters
    ----------
    names : pandas.Index
        The column names (kept, not copied: an Index cannot be changed).
    columns : sequence of numpy.ndarray or pandas.api.extensions.ExtensionArray
        One per name, each of the same length, not shared with another table.

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> t = table_of(pd.Index(["line", "m"]), [np.array([4, 5]), np.array([0.1, 0.2])])
    >>> t.equals(pd.DataFrame({"line": [4, 5], "m": [0.1, 0.2]}))
    True
    """
    build = getattr(pd.DataFrame, "_from_arrays", None)
    if build is None:  # a pandas without it: its public constructor, which infers each column
        return pd.DataFrame(dict(zip(names, columns, strict=True)))
    return build(list(columns), columns=names, index=pd.RangeIndex(len(columns[0])),
                 verify_integrity=False)


def plain_values(frame: pd.DataFrame | Mapping[str, Any], name: str) -> list[Any]:
    """The column ``name`` as a list of plain Python values, as ``frame.to_dict("records")``
    gives them (floats, ints, bools and strings as Python objects, a missing string as NaN).

    Examples
    --------
    >>> plain_values(pd.DataFrame({"e": ["a", None]}), "e")
    ['a', nan]
    """
    values = column_values(frame, name)
    if isinstance(values, np.ndarray):
        return values.tolist()
    return values.to_numpy(dtype=object).tolist()


def point_names(reduction: Reduction) -> list[str]:
    """The column names of ``reduction.points`` in order — the run's, then the reduction's
    (:attr:`~activolt.procedures.dilution.Reduction.point_columns`) — without building the
    table."""
    return [*_names_of(reduction.run.column_names), *reduction.point_columns]


#: The last Index whose labels :func:`_names_of` read, with those labels (one pair, read and
#: replaced whole).
_last_names: list[tuple[Any, tuple[str, ...]]] = [(None, ())]


def _names_of(columns: pd.Index) -> tuple[str, ...]:
    """The labels of ``columns`` as plain text, remembered for the last Index read: the runs
    of a table share their columns' Index (which cannot be changed), and reading the labels of
    a text Index is slow. The Index is kept with its labels, so that no other Index can be
    found at its address."""
    index, names = _last_names[0]
    if index is not columns:
        names = tuple(columns.to_numpy(dtype=object).tolist())
        _last_names[0] = (columns, names)
    return names


def point_values(reduction: Reduction, name: str) -> Any:
    """The column ``name`` of ``reduction.points`` as that table holds it (as
    :func:`column_values` gives it), without building the table: a numpy array for a numpy
    dtype, else pandas' extension array (the run's text columns). Not a copy: read only.
    """
    found = reduction.point_columns.get(name)
    return found if found is not None else reduction.run.column(name)


def point_values_of_many(reductions: Sequence[Reduction], name: str) -> list[Any]:
    """:func:`point_values` of each of ``reductions``: the column ``name`` of each one's points
    as that table holds it (read only).

    Examples
    --------
    >>> point_values_of_many([], "gamma_pm")
    []
    """
    return [point_values(reduction, name) for reduction in reductions]


def point_lists(reduction: Reduction, names: Sequence[str]) -> dict[str, list[Any]]:
    """The columns ``names`` of ``reduction.points`` as lists of plain Python values, as
    :func:`plain_values` of the table gives them (floats, ints and strings as Python objects,
    a missing string as NaN), without building the table.

    Parameters
    ----------
    reduction : Reduction
        The reduction whose points are read.
    names : sequence of str
        Columns of the points table (:func:`point_names`).

    Returns
    -------
    dict of str to list
        Column name → its values over every row, in the order of ``names``.
    """
    lists = {}
    for name in names:
        values = point_values(reduction, name)
        lists[name] = (values.tolist() if isinstance(values, np.ndarray)
                       else values.to_numpy(dtype=object).tolist())
    return lists


#: The columns of :func:`compare_with_published`, in order.
_COLUMNS = pd.Index([
    "molality_mol_kg", "gamma_pm", "u_gamma_pm", "gamma_pm_published", "interpolated",
    "n_sources", "published_values", "spread_published", "u_published", "difference",
    "u_difference", "difference_over_u", "source"])
#: Their names as plain text (iterating the Index reads its text storage one by one).
_COLUMN_NAMES: tuple[str, ...] = tuple(_COLUMNS.tolist())
#: The columns that depend on the molalities only, as they follow ``u_gamma_pm``.
_FIXED = ("gamma_pm_published", "interpolated", "n_sources", "published_values",
          "spread_published", "u_published")


@dataclass(frozen=True)
class _Published:
    """What the published tables say at a run's molalities, ready for each run's table: the
    columns that depend on the molalities only (read only; each table gets copies)."""

    published: np.ndarray
    u_published: np.ndarray
    fixed: Mapping[str, Any]
    source: Any


@functools.lru_cache(maxsize=64)
def _source_column(source: str, rows: int) -> Any:
    """The column of a table that gives ``source`` on each of its ``rows``, as pandas holds
    a text broadcast to every row (read only)."""
    return pd.DataFrame({"row": np.zeros(rows), "source": source})["source"].array


@functools.lru_cache(maxsize=64)
def _published_at(electrolyte: Electrolyte, temperature_K: float, molality: tuple[float, ...]
                  ) -> _Published | None:
    """The published mean, its u and the columns at ``molality`` that depend on nothing else,
    or None without a table; kept once worked out (read only), since the runs of a batch often
    share their molalities (the tables themselves are prepared once per electrolyte and
    temperature, :func:`~activolt.activity.published.published_tables`)."""
    tables = published_tables(electrolyte, temperature_K)
    if tables is None:
        return None
    consensus = tables.consensus(np.asarray(molality, dtype=float))
    values = np.empty(len(consensus.values), dtype=object)
    for i, value in enumerate(consensus.values):
        values[i] = value
    fixed = {"gamma_pm_published": consensus.gamma_pm.copy(),
             "interpolated": consensus.interpolated.copy(),
             "n_sources": consensus.n_sources.astype(int),
             "published_values": values,
             "spread_published": consensus.spread.copy(),
             "u_published": consensus.u_published.copy()}
    for array in fixed.values():
        array.flags.writeable = False
    published, u_published = consensus.gamma_pm.copy(), consensus.u_published.copy()
    for array in (published, u_published):
        array.flags.writeable = False
    return _Published(published=published, u_published=u_published,
                      fixed=MappingProxyType(fixed),
                      source=_source_column("; ".join(tables.sources), values.size))
