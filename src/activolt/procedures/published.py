"""The run's γ± beside published values at the measured molalities, with the tables' own spread
(science, computed here once; the report and the record only show it)."""

from __future__ import annotations

import functools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np
import pandas as pd

from ..activity.published import published_consensus, published_gamma
from ..chemistry.electrolytes import Electrolyte
from .dilution import Reduction

__all__ = ["TableLayout", "column_values", "compare_with_published", "plain_values", "table_of"]


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
    points = reduction.points
    gamma = np.asarray(column_values(points, "gamma_pm"), dtype=float)
    with_gamma = ~np.isnan(gamma)
    m = np.asarray(column_values(points, "molality_mol_kg"), dtype=float)[with_gamma]
    found = _published_at(reduction.electrolyte, float(reduction.temperature_K), tuple(m))
    if found is None:
        return None
    gamma = gamma[with_gamma]
    u_gamma = np.asarray(column_values(points, "u_gamma_pm"), dtype=float)[with_gamma]
    published, u_published = found.published, found.u_published
    difference = gamma - published
    u_difference = np.hypot(u_gamma, u_published)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(u_difference > 0, difference / u_difference, np.nan)
    return table_of(found.layout.names, [
        m, gamma, u_gamma, *found.layout.copies(("gamma_pm_published", "interpolated",
                                                 "n_sources", "published_values",
                                                 "spread_published", "u_published")),
        difference, u_difference, ratio, *found.layout.copies(("source",))])


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


def column_values(frame: pd.DataFrame, name: str) -> Any:
    """The values of the column ``name`` as the table holds them, without building a Series:
    a numpy array for a numpy dtype, else pandas' extension array. Not a copy: read only.

    Examples
    --------
    >>> column_values(pd.DataFrame({"m": [0.1, 0.2], "n": [1, 2]}), "n")
    array([1, 2])
    """
    take = getattr(frame, "_get_column_array", None)
    if take is not None:
        where = frame.columns.get_loc(name)
        if isinstance(where, int):
            return take(where)
    column = frame[name]  # a pandas without it, or a name that several columns share
    return column.to_numpy() if isinstance(column.dtype, np.dtype) else column.array


def plain_values(frame: pd.DataFrame, name: str) -> list[Any]:
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


@dataclass(frozen=True)
class TableLayout:
    """The columns of a table that stay the same from table to table, as pandas holds them,
    taken once from a table built by ``pandas.DataFrame`` (the reference for their types).

    Attributes
    ----------
    names : pandas.Index
        Every column name of the table, in order.
    fixed : mapping of str to array
        The unchanging columns, read only; :meth:`copies` gives each table its own.
    """

    names: pd.Index
    fixed: Mapping[str, Any]

    @classmethod
    def of(cls, frame: pd.DataFrame, fixed: Sequence[str]) -> TableLayout:
        """The layout of ``frame`` with its columns ``fixed`` kept."""
        kept = {}
        for name in fixed:
            column = frame[name]
            kept[name] = (column.to_numpy(copy=True) if isinstance(column.dtype, np.dtype)
                          else column.array.copy())
            if isinstance(kept[name], np.ndarray):
                kept[name].flags.writeable = False
        return cls(names=frame.columns, fixed=MappingProxyType(kept))

    def copies(self, names: Sequence[str]) -> list[Any]:
        """Each fixed column ``names``, copied for one table."""
        return [self.fixed[name].copy() for name in names]


@dataclass(frozen=True)
class _Published:
    """What the published tables say at a run's molalities, ready for each run's table."""

    published: np.ndarray
    u_published: np.ndarray
    layout: TableLayout


@functools.lru_cache(maxsize=64)
def _published_at(electrolyte: Electrolyte, temperature_K: float, molality: tuple[float, ...]
                  ) -> _Published | None:
    """The published mean, its u and the table layout at ``molality``, or None without a
    table; kept once worked out (read only), since the runs of a batch share their
    molalities."""
    table = published_gamma(electrolyte.formula, temperature_K, all_sources=True)
    if table is None:
        return None
    m = np.asarray(molality, dtype=float)
    consensus = published_consensus(table, m, electrolyte, temperature_K)
    published = consensus["gamma_pm"].to_numpy(float)
    u_published = consensus["u_published"].to_numpy(float)
    nothing = np.full(m.size, np.nan)
    # the table of a run with no γ± (NaN): only its fixed columns are taken
    reference = pd.DataFrame({
        "molality_mol_kg": m,
        "gamma_pm": nothing,
        "u_gamma_pm": nothing,
        "gamma_pm_published": published,
        "interpolated": consensus["interpolated"].to_numpy(bool),
        "n_sources": consensus["n_sources"].to_numpy(int),
        "published_values": consensus["values"].tolist(),
        "spread_published": consensus["spread"].to_numpy(float),
        "u_published": u_published,
        "difference": nothing,
        "u_difference": nothing,
        "difference_over_u": nothing,
        "source": "; ".join(dict.fromkeys(table["source"])),
    })
    for array in (published, u_published):
        array.flags.writeable = False
    return _Published(published=published, u_published=u_published,
                      layout=TableLayout.of(reference, (
                          "gamma_pm_published", "interpolated", "n_sources",
                          "published_values", "spread_published", "u_published", "source")))
