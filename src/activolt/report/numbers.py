"""Printing a value with its uncertainty, never with more digits than the uncertainty supports
(the rule itself, :func:`decimals_for` and :func:`format_with_uncertainty`, lives in
:mod:`activolt.rounding`, where the command line and the results' display read it too)."""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable
from typing import Any

from .. import rounding
from ..rounding import decimals_for

__all__ = ["decimals_for", "format_compact", "format_molality", "format_scaled",
           "format_with_uncertainty", "frame_columns", "frame_records", "json_number",
           "json_numbers"]


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


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")
#: The exponents format_scaled writes (−300 to 300), as superscripts.
_EXPONENTS = {n: str(n).translate(_SUPERSCRIPT) for n in range(-300, 301)}


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
