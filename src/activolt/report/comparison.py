"""The run's γ± beside published values at the measured molalities, with the tables' own spread."""

from __future__ import annotations

import functools
import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from ..procedures.published import column_values, plain_values
from ..rounding import decimals_for_column
from .numbers import decimals_for, fill_rows, format_molality, format_molality_column


def aligned_lines(rows: list[list[str]], pad_last: bool = True) -> list[str]:
    """Rows of cells as the lines of a text table: each line indented by two spaces, its cells
    left-aligned to the widest of their column and three spaces apart, trailing blanks removed.

    Parameters
    ----------
    rows : list of list of str
        The rows, header first, each with the same number of cells.
    pad_last : bool
        Whether the last column is padded too (it makes no difference once trailing blanks go,
        unless its cells end in blanks of their own).

    Returns
    -------
    list of str

    Examples
    --------
    >>> aligned_lines([["m", "γ±"], ["0.001", "0.965"]])
    ['  m       γ±', '  0.001   0.965']
    """
    widths = [max(map(len, column)) for column in zip(*rows, strict=True)]
    # one %-template for every row (%-Ns pads a text to N characters, as {:<N} does, and
    # is read faster than a str.format template)
    template = "  " + "   ".join([f"%-{w}s" for w in widths[:-1]]
                                  + [f"%-{widths[-1]}s" if pad_last else "%s"])
    return [(template % tuple(cells)).rstrip() for cells in rows]


def headed_blocks(header: Sequence[str], cells: Sequence[Sequence[str]],
                  counts: Sequence[int]) -> list[list[str]]:
    """:func:`aligned_blocks` of tables under one ``header``: the cells of each column given
    for every table, ``counts[k]`` rows of table k after the previous table's.

    Examples
    --------
    >>> headed_blocks(["m", "γ±"], [["0.001", "0.5"], ["0.965", "0.75"]], [1, 1])
    [['  m       γ±', '  0.001   0.965'], ['  m     γ±', '  0.5   0.75']]
    """
    columns: list[list[str]] = [[] for _ in header]
    start = 0
    for count in counts:
        for column, head, texts in zip(columns, header, cells, strict=True):
            column.append(head)
            column += texts[start:start + count]
        start += count
    return aligned_blocks(columns, [count + 1 for count in counts])


def aligned_blocks(columns: Sequence[Sequence[str]], rows: Sequence[int]) -> list[list[str]]:
    """:func:`aligned_lines` of many tables with the same number of columns, given by column:
    each column holds the cells of every table, a table's rows (header first) after the
    previous table's. The widths of every table are found at once, and all the lines are
    written in one ``%`` (a cell's width given with ``%-*s``).

    Parameters
    ----------
    columns : sequence of sequences of str
        The cells of each column, ``sum(rows)`` each.
    rows : sequence of int
        The rows of each table (at least 1, its header).

    Returns
    -------
    list of list of str
        The lines of each table, as :func:`aligned_lines` gives them (with ``pad_last`` true
        or false alike: the padding of the last column is removed with the trailing blanks).

    Examples
    --------
    >>> aligned_blocks([["m", "0.001", "m", "0.5"], ["γ±", "0.965", "γ±", "0.75"]], [2, 2])
    [['  m       γ±', '  0.001   0.965'], ['  m     γ±', '  0.5   0.75']]
    """
    if not rows:
        return []
    total = len(columns[0])
    starts = np.cumsum([0, *rows[:-1]])
    # each table's row template (its widths written in), repeated for its rows
    widths = [np.maximum.reduceat(np.fromiter(map(len, column), np.int64, total),
                                  starts).tolist() for column in columns[:-1]]
    tables = zip(*widths, strict=True) if widths else [()] * len(rows)
    template = "".join([("  " + "   ".join([*[f"%-{w}s" for w in table], "%s"]) + "\n") * count
                        for table, count in zip(tables, rows, strict=True)])
    width = len(columns)
    args: list[str] = [""] * (total * width)
    for j, column in enumerate(columns):
        args[j::width] = column
    lines = (template % tuple(args)).split("\n")[:-1]
    if len(lines) != total:  # (a cell with a line break of its own)
        return [aligned_lines([list(row) for row in zip(*(column[start:start + count]
                                                          for column in columns), strict=True)])
                for start, count in zip(starts.tolist(), rows, strict=True)]
    lines = [line.rstrip() for line in lines]
    return [lines[start:start + count] for start, count in zip(starts.tolist(), rows,
                                                                strict=True)]


def comparison_lines(comparison: pd.DataFrame | Mapping[str, Any] | None) -> list[str]:
    """The comparison with published γ± as lines of the text report (empty without a table).
    ``comparison``: the table, or the columns it is made of (name → array).

    Each row shows the run's γ±, every published table's value (letters name the tables below
    the rows; a value in parentheses is interpolated within its table), their mean and spread,
    the run's difference from the mean and that difference in units of the combined standard
    uncertainty u_c (see :func:`activolt.procedures.published.compare_with_published`).
    """
    if comparison is None or not _any_number(column_values(comparison, "gamma_pm_published")):
        return []
    published_values = plain_values(comparison, "published_values")
    sources = tuple(dict.fromkeys(
        source for values in published_values for source, _, _ in values))
    rows = []
    # each column read once, as plain values
    for m, gamma, u_gamma, mean_value, interpolated, values, spread, difference, ratio in zip(
            *(plain_values(comparison, name) for name in (
                "molality_mol_kg", "gamma_pm", "u_gamma_pm", "gamma_pm_published",
                "interpolated")), published_values,
            *(plain_values(comparison, name) for name in (
                "spread_published", "difference", "difference_over_u")), strict=True):
        if math.isnan(mean_value):
            continue
        places = max(3, decimals_for(u_gamma))
        shown, mean, spread_shown = _published_cells(values, mean_value, interpolated, spread,
                                                     sources)
        mark = "  ← beyond 2 u_c" if abs(ratio) > 2.0 else ""
        rows.append([format_molality(m), f"{gamma:.{places}f}", shown, mean, spread_shown,
                     f"{difference:+.{places}f}", f"{ratio:+.1f}{mark}"])
    return _framed(aligned_lines([list(_HEADER), *rows]), sources)


#: The header of the comparison's table.
_HEADER = ("m / (mol/kg)", "this run", "published", "mean", "spread", "difference",
           "difference / u_c")
#: The comparison's numeric columns, read as float arrays by comparison_lines_of_many.
_NUMBERS = ("molality_mol_kg", "gamma_pm", "u_gamma_pm", "gamma_pm_published",
            "spread_published", "difference", "difference_over_u")


def _framed(table: list[str], sources: tuple[str, ...]) -> list[str]:
    """The comparison's lines around its table (``table``: the aligned lines of the table;
    ``sources``: the published tables in order of their letters)."""
    return ["", "  γ± against published values (k = 1; i = mean interpolated between the "
                "molalities the tables print)", *table,
            *[f"  {_LETTERS[k]}: {s}" for k, s in enumerate(sources)],
            "  spread: largest − smallest of the tables' values (what the tables themselves "
            "disagree by); u_c = √(u²(γ±) + (spread/2)² + (half the last printed digit)²)"]


def comparison_lines_of_many(comparisons: Sequence[pd.DataFrame | Mapping[str, Any] | None]
                             ) -> list[tuple[list[str], list[str]]]:
    """:func:`comparison_lines` of each comparison, the cells of all the tables written a
    column at a time (:func:`~activolt.report.numbers.fill_rows`) and the tables aligned
    together (:func:`aligned_blocks`).

    Parameters
    ----------
    comparisons : sequence of pandas.DataFrame, mapping or None
        Each a comparison as :func:`comparison_lines` takes it.

    Returns
    -------
    list of (list of str, list of str)
        The lines of each, in order, and the text in them that is not made of numbers and the
        layout's own words (the published tables' names; all the lines where a comparison is
        written alone).
    """
    found: list[tuple[list[str], list[str]]] = [([], []) for _ in comparisons]
    shown: list[tuple[int, dict[str, Any], tuple[str, ...], np.ndarray]] = []
    named_by_rows: dict[tuple[int, ...], tuple[str, ...]] = {}
    for index, comparison in enumerate(comparisons):
        if comparison is None or not _any_number(column_values(comparison,
                                                               "gamma_pm_published")):
            continue
        columns = {name: column_values(comparison, name) for name in _NUMBERS}
        if not all([isinstance(c, np.ndarray) and c.dtype.kind == "f"
                    for c in columns.values()]):
            alone = comparison_lines(comparison)  # (numbers of another kind: one alone)
            found[index] = alone, alone
            continue
        columns["interpolated"] = column_values(comparison, "interpolated")
        values = columns["published_values"] = plain_values(comparison, "published_values")
        # (the comparisons of a chunk at the same molalities share their rows' objects: their
        # tables named once; the rows are kept in ``shown`` while their addresses are keys)
        rows_key = tuple(map(id, values))
        sources = named_by_rows.get(rows_key)
        if sources is None:
            sources = named_by_rows[rows_key] = tuple(dict.fromkeys(
                source for row in values for source, _, _ in row))
        shown.append((index, columns, sources, ~np.isnan(columns["gamma_pm_published"])))
    if not shown:
        return found

    keep = np.concatenate([rows for *_, rows in shown])

    def kept(name: str) -> np.ndarray:
        return np.concatenate([columns[name] for _, columns, _, _ in shown])[keep]

    gamma, u_gamma, mean, spread, difference, ratio = (kept(name) for name in (
        "gamma_pm", "u_gamma_pm", "gamma_pm_published", "spread_published", "difference",
        "difference_over_u"))
    places = np.maximum(3, decimals_for_column(u_gamma)).tolist()
    counts = [int(np.count_nonzero(rows)) for _, _, _, rows in shown]
    values = [row for _, columns, _, _ in shown for row in columns["published_values"]]
    named = [sources for _, columns, sources, _ in shown for _ in columns["published_values"]]
    published = [_published_cells(values[row], m, i, s, named[row]) for row, m, i, s in zip(
        np.flatnonzero(keep).tolist(), mean.tolist(), kept("interpolated").tolist(),
        spread.tolist(), strict=True)]
    cells = [format_molality_column(kept("molality_mol_kg")),
             fill_rows("%.*f", [places, gamma.tolist()]),
             [p[0] for p in published], [p[1] for p in published], [p[2] for p in published],
             fill_rows("%+.*f", [places, difference.tolist()]),
             fill_rows("%+.1f%s", [ratio.tolist(), np.where(
                 np.abs(ratio) > 2.0, "  ← beyond 2 u_c", "").tolist()])]
    for (index, _, sources, _), table in zip(shown, headed_blocks(_HEADER, cells, counts),
                                             strict=True):
        found[index] = _framed(table, sources), list(sources)
    return found


#: The letters naming the published tables, in order of first appearance.
_LETTERS = "abcdefghijklmnopqrstuvwxyz"


@functools.lru_cache(maxsize=1024)
def _published_cells(values: tuple[tuple[str, float, bool], ...], mean: float,
                     interpolated: bool, spread: float, sources: tuple[str, ...]
                     ) -> tuple[str, str, str]:
    """The cells of a row that come from the published tables alone: each table's value and
    letter (``sources``: the tables in order of their letters), the mean and the spread;
    remembered, since the series of a batch often share their molalities and so these rows.
    (The tables' γ± and their mean are positive and the spread is never −0.0, so that equal
    keys give the same text.)"""
    shown = " ".join([(f"{value:.3f}" if printed else f"({value:.4f})")
                      + _LETTERS[sources.index(source)]
                      for source, value, printed in values]) or "—"
    return shown, f"{mean:.4f}" + ("i" if interpolated else " "), f"{spread:.4f}"


def _any_number(values: Any) -> bool:
    """Whether a column holds a value that is not missing (NaN or None)."""
    if isinstance(values, np.ndarray) and values.dtype.kind == "f":
        return np.count_nonzero(~np.isnan(values)) > 0  # (a count sets up less than all())
    return not pd.isna(values).all()
