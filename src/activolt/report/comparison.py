"""The run's γ± beside published values at the measured molalities, with the tables' own spread."""

from __future__ import annotations

import functools
import math
from collections.abc import Mapping
from typing import Any

import numpy as np
import pandas as pd

from ..procedures.published import column_values, plain_values
from .numbers import decimals_for, format_molality


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
    header = ["m / (mol/kg)", "this run", "published", "mean", "spread", "difference",
              "difference / u_c"]
    lines = ["", "  γ± against published values (k = 1; i = mean interpolated between the "
                 "molalities the tables print)", *aligned_lines([header, *rows])]
    lines += [f"  {_LETTERS[k]}: {s}" for k, s in enumerate(sources)]
    lines.append("  spread: largest − smallest of the tables' values (what the tables themselves "
                 "disagree by); u_c = √(u²(γ±) + (spread/2)² + (half the last printed digit)²)")
    return lines


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
