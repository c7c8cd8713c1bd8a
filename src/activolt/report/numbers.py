"""Printing a value with its uncertainty, never with more digits than the uncertainty supports
(the rule itself, :func:`decimals_for` and :func:`format_with_uncertainty`, lives in
:mod:`activolt.rounding`, where the command line and the results' display read it too)."""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np

from .. import rounding
from ..rounding import decades, decimals_for, decimals_for_column

__all__ = ["decimals_for", "fill_rows", "format_compact", "format_compact_column",
           "format_molality", "format_molality_column", "format_scaled",
           "format_with_uncertainty", "format_with_uncertainty_column", "frame_columns",
           "frame_records", "json_number", "json_numbers"]


def frame_records(frame: Any) -> list[dict[str, Any]]:
    """The rows of a table as dicts of plain Python values: what
    ``frame.to_dict("records")`` gives (floats, ints, bools and strings as Python objects,
    a missing string as NaN), an order of magnitude faster on the narrow tables of a reduction.

    One conversion of the whole table to an object array replaces pandas' per-row, per-column
    boxing; reports and records, which read every row, call it once.

    Parameters
    ----------
    frame : pandas.DataFrame
        Any table with unique column names.

    Returns
    -------
    list of dict
        One dict per row, keys in column order.

    Examples
    --------
    >>> import pandas as pd
    >>> frame_records(pd.DataFrame({"m": [0.1, 0.2], "n": [1, 2], "e": ["a", None]}))
    [{'m': 0.1, 'n': 1, 'e': 'a'}, {'m': 0.2, 'n': 2, 'e': nan}]
    """
    names = _column_names(frame)
    return [dict(zip(names, row, strict=True))
            for row in frame.to_numpy(dtype=object).tolist()]


def frame_columns(frame: Any) -> dict[str, list[Any]]:
    """The columns of a table as lists of plain Python values: the values
    :func:`frame_records` gives, by column (one conversion of the whole table, as there).

    Parameters
    ----------
    frame : pandas.DataFrame
        Any table with unique column names.

    Returns
    -------
    dict of str to list
        Column name → its values, in column order.

    Examples
    --------
    >>> import pandas as pd
    >>> frame_columns(pd.DataFrame({"m": [0.1, 0.2], "n": [1, 2], "e": ["a", None]}))
    {'m': [0.1, 0.2], 'n': [1, 2], 'e': ['a', nan]}
    """
    names = _column_names(frame)
    return dict(zip(names, frame.to_numpy(dtype=object).T.tolist(), strict=True))


def _column_names(frame: Any) -> list[Any]:
    """``list(frame.columns)``, without iterating over the index (slow for text labels)."""
    return frame.columns.to_numpy(dtype=object).tolist()


def json_numbers(values: Iterable[Any]) -> list[float | None]:
    """:func:`json_number` of each value (a column of a record's table), in one pass.

    Examples
    --------
    >>> json_numbers([0.5, float("inf"), None, 2])
    [0.5, None, None, 2.0]
    """
    isfinite = math.isfinite
    return [v if type(v) is float and isfinite(v) else json_number(v) for v in values]


def json_number(value: float | None) -> float | None:
    """A finite float for a JSON record, or None (null) for a missing or non-finite value.

    Examples
    --------
    >>> json_number(float("nan")) is None, json_number(2)
    (True, 2.0)
    """
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def fill_rows(template: str, columns: Sequence[Sequence[Any]]) -> list[str]:
    """``template % row`` for each row of ``columns``, in one ``%`` of the whole column set
    (a template repeated once per row, split at the line breaks it ends with): the cells of a
    table's column written at once rather than one call each.

    Parameters
    ----------
    template : str
        A %-template taking one value of each column in turn (``*`` takes a column of its own),
        whose rows write no line break.
    columns : sequence of sequences
        The values, each column as long as the first.

    Returns
    -------
    list of str
        One text per row.

    Examples
    --------
    >>> fill_rows("%.*f|%+.1f", [[2, 0], [0.125, 2.5], [1.0, -1.0]])
    ['0.12|+1.0', '2|-1.0']
    """
    rows = len(columns[0]) if columns else 0
    if not rows:
        return []
    width = len(columns)
    args: list[Any] = [None] * (rows * width)
    for j, column in enumerate(columns):
        args[j::width] = column
    return ((template + "\n") * rows % tuple(args)).split("\n")[:-1]


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")
#: The exponents format_scaled writes (−300 to 300), as superscripts.
_EXPONENTS = {n: str(n).translate(_SUPERSCRIPT) for n in range(-300, 301)}


#: 10ⁿ for the exponents of :data:`_EXPONENTS`, as format_scaled computes them (index n + 300).
_POWERS = np.array([10.0 ** n for n in range(-300, 301)])
#: What follows the mantissa and its uncertainty written scaled by 10ⁿ (index n + 300).
_SCALES = np.array([f") × 10{_EXPONENTS[n]}" for n in range(-300, 301)], dtype=object)


def format_scaled(value: float, uncertainty: float, significant: int = 2) -> str:
    """``(mantissa ± u) × 10ⁿ`` with n the decade of the value, or of u where u is the larger,
    and the digits set by u.

    For quantities far from 1 whose uncertainty is tiny (1 − a_w ≈ 4 × 10⁻⁵ known to
    2 × 10⁻¹⁰), where fixed-point notation would print a row of zeros. Rounding as in
    :func:`format_with_uncertainty` (GUM, JCGM 100:2008, 7.2.6). A value below its
    uncertainty takes u's decade, so that neither number is written with more digits than u
    supports; a decade beyond the range of normal floats falls back to ``value ± u`` in
    exponent notation.

    Examples
    --------
    >>> format_scaled(3.5617642e-05, 1.6e-10)
    '(3.561764 ± 0.000016) × 10⁻⁵'
    >>> format_scaled(-0.0497, 0.00097)
    '(-4.970 ± 0.097) × 10⁻²'
    >>> format_scaled(3e-08, 2.4e-05)
    '(0.0 ± 2.4) × 10⁻⁵'
    >>> format_scaled(0.0, 1e-9)
    '0 ± 1e-09'
    """
    if value == 0.0 or not math.isfinite(value):
        return f"{value:g} ± {uncertainty:.{significant}g}"
    if not math.isfinite(uncertainty):
        return f"{value:.4g} (held)"
    exponent = math.floor(math.log10(max(abs(value), uncertainty)))
    if (not -300 <= exponent <= 300  # (10ⁿ would leave the normal floats)
            or 0.0 < uncertainty < abs(value) * 1e-15):  # (finer than the value's resolution)
        return _exponent_notation(value, uncertainty, significant)
    scale = 10.0 ** exponent
    inner = rounding.format_with_uncertainty(value / scale, uncertainty / scale,
                                             significant=significant)
    return f"({inner}) × 10{_EXPONENTS[exponent]}"


def _exponent_notation(value: float, uncertainty: float, significant: int) -> str:
    """``value ± u`` in exponent notation, the value to u's decade (at most the 17 significant
    digits a float holds)."""
    places = 16
    if uncertainty > 0.0:
        places = (math.floor(math.log10(abs(value))) - math.floor(math.log10(uncertainty))
                  + significant - 1)
    places = min(max(places, significant - 1), 16)
    return f"{value:.{places}e} ± {uncertainty:.{significant}g}"


def format_compact(value: float, uncertainty: float, significant: int = 2) -> str:
    """:func:`format_with_uncertainty`, or :func:`format_scaled` when |value| < 0.01 (where
    fixed-point notation would begin with a row of zeros).

    Remembered as :func:`format_with_uncertainty` is.

    Examples
    --------
    >>> format_compact(0.4972, 0.00097), format_compact(-4.76031e-05, 9.2e-10)
    ('0.49720 ± 0.00097', '(-4.760310 ± 0.000092) × 10⁻⁵')
    """
    if type(value) is float and type(uncertainty) is float and value and uncertainty:
        return _remembered_compact(value, uncertainty, significant)
    return _compact(value, uncertainty, significant)


def _compact(value: float, uncertainty: float, significant: int) -> str:
    if value != 0.0 and math.isfinite(value) and abs(value) < 0.01:
        return format_scaled(value, uncertainty, significant)
    return rounding.format_with_uncertainty(value, uncertainty, significant=significant)


def format_with_uncertainty(value: float, uncertainty: float, unit: str = "",
                            significant: int = 2) -> str:
    """``value ± u unit`` as :func:`activolt.rounding.format_with_uncertainty` writes it,
    remembered for the last few thousand pairs of non-zero floats: the text report and the
    HTML page of a series show many of the same numbers (γ± and the derived properties at
    each reading), the page from the record, which holds the same floats.

    Zeros are written each time (0.0 and -0.0 are equal as keys, not as text).

    Examples
    --------
    >>> format_with_uncertainty(222.35216, 0.0061, "mV")
    '222.3522 ± 0.0061 mV'
    >>> format_with_uncertainty(-0.0, 0.0012)
    '-0.0000 ± 0.0012'
    """
    if type(value) is float and type(uncertainty) is float and value and uncertainty:
        return _remembered(value, uncertainty, unit, significant)
    return rounding.format_with_uncertainty(value, uncertainty, unit, significant)


_remembered = functools.lru_cache(maxsize=4096)(rounding.format_with_uncertainty)
_remembered_compact = functools.lru_cache(maxsize=4096)(_compact)


def format_with_uncertainty_column(values: Any, uncertainties: Any, significant: int = 2
                                   ) -> list[str]:
    """:func:`format_with_uncertainty` (without a unit) of each value with its uncertainty, a
    column at once: the decimal places of the column worked out with numpy
    (:func:`activolt.rounding.decimals_for_column`), the texts in one ``%``
    (:func:`fill_rows`); a held value (u not finite) is written by the scalar rule.

    Parameters
    ----------
    values, uncertainties : array_like
        Floats, one dimension, of the same length.
    significant : int
        Significant digits of each uncertainty.

    Returns
    -------
    list of str

    Examples
    --------
    >>> format_with_uncertainty_column([222.35216, 4.31], [0.0061, float("nan")])
    ['222.3522 ± 0.0061', '4.31 (held)']
    """
    return _uncertain_column(values, uncertainties, significant, compact=False)


def format_compact_column(values: Any, uncertainties: Any, significant: int = 2) -> list[str]:
    """:func:`format_compact` of each value with its uncertainty, a column at once, as
    :func:`format_with_uncertainty_column` writes its column; the powers of ten of the values
    written scaled (:func:`format_scaled`) found with numpy too. A held value, and a value
    beyond the scaled notation's range, is written by the scalar rule.

    Parameters
    ----------
    values, uncertainties : array_like
        Floats, one dimension, of the same length.
    significant : int
        Significant digits of each uncertainty.

    Returns
    -------
    list of str

    Examples
    --------
    >>> format_compact_column([0.4972, -4.76031e-05], [0.00097, 9.2e-10])
    ['0.49720 ± 0.00097', '(-4.760310 ± 0.000092) × 10⁻⁵']
    """
    return _uncertain_column(values, uncertainties, significant, compact=True)


def _uncertain_column(values: Any, uncertainties: Any, significant: int, compact: bool
                      ) -> list[str]:
    value = np.asarray(values, dtype=float)
    u = np.asarray(uncertainties, dtype=float)
    common = np.isfinite(u)  # the rows written here; the others by the scalar rule
    scaled = np.zeros(value.shape, dtype=bool)
    with np.errstate(invalid="ignore", over="ignore"):
        if compact:
            scaled = (value != 0.0) & (np.abs(value) < 0.01)  # (false for NaN and ±inf)
        if scaled.any():
            exponent = decades(np.maximum(np.abs(value), u))
            common &= ~scaled | ((-300 <= exponent) & (exponent <= 300)
                                 & ~((0.0 < u) & (u < np.abs(value) * 1e-15)))
            scaled &= common
            scale = np.where(scaled, _POWERS[np.clip(exponent, -300, 300) + 300], 1.0)
            value, u = value / scale, u / scale
            common &= np.isfinite(u)  # (a negative u scaled beyond the floats: held, as alone)
            scaled &= common
    places = decimals_for_column(u, significant).tolist()
    if scaled.any():
        cells = fill_rows("%s%.*f ± %.*f%s", [
            np.where(scaled, "(", "").tolist(), places, value.tolist(), places, u.tolist(),
            np.where(scaled, _SCALES[np.clip(exponent, -300, 300) + 300], "").tolist()])
    else:
        cells = fill_rows("%.*f ± %.*f", [places, value.tolist(), places, u.tolist()])
    scalar = _compact if compact else rounding.format_with_uncertainty
    for i in np.flatnonzero(~common).tolist():
        cells[i] = scalar(float(values[i]), float(uncertainties[i]), significant=significant)
    return cells


def format_molality_column(molalities: Any) -> list[str]:
    """:func:`format_molality` of each molality of a column, at once: each distinct value
    (bit for bit) written once, in one ``%``.

    Examples
    --------
    >>> format_molality_column([0.0015587755, 0.5, 0.0015587755, -0.0])
    ['0.00155878', '0.5', '0.00155878', '-0']
    """
    molality = np.ascontiguousarray(molalities, dtype=float)
    if not molality.size:
        return []
    bits, inverse = np.unique(molality.view(np.int64), return_inverse=True)
    texts = np.array(fill_rows("%.6g", [bits.view(np.float64).tolist()]), dtype=object)
    return texts[inverse.reshape(-1)].tolist()


def format_molality(molality: float) -> str:
    """A molality as the reports write it, to six significant digits (``f"{m:.6g}"``),
    remembered for the last thousand non-zero floats: the tables of a report show each
    molality several times, and the series of a batch often share theirs.

    Examples
    --------
    >>> format_molality(0.0015587755), format_molality(0.5)
    ('0.00155878', '0.5')
    """
    if type(molality) is float and molality:
        return _remembered_molality(molality)
    return f"{molality:.6g}"


@functools.lru_cache(maxsize=1024)
def _remembered_molality(molality: float) -> str:
    return f"{molality:.6g}"
