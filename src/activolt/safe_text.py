"""Text made safe for the places it is shown: terminals, text reports and spreadsheets.

Two rules, applied at the output edges only (the library keeps user text as given):

- :func:`escape_controls`: control characters (C0, DEL, C1) and the Unicode characters that
  reorder or break lines (bidirectional overrides and isolates, line and paragraph separators)
  are written as Python-style escapes, so that a column name, a TOML key, a file name or a note
  cannot move the cursor, recolour or clear a terminal, or hide text in a report.
- :func:`neutralise_formula`: a text cell that a spreadsheet would read as a formula gets a
  leading single quote (the OWASP rule against CSV injection).
"""

from __future__ import annotations

import functools
import re

__all__ = ["escape_controls", "neutralise_formula"]

#: Bidirectional embeddings, overrides and isolates, and the Unicode line/paragraph separators.
_INVISIBLE_LAYOUT = "\u2028\u2029\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f"
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f" + _INVISIBLE_LAYOUT + "]")


def _escape(match: re.Match[str]) -> str:
    code = ord(match.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def escape_controls(text: str, keep: str = "") -> str:
    r"""``text`` with control and layout characters written as escapes (``\x1b``, ``\u202e``).

    Parameters
    ----------
    text : str
        Text to show.
    keep : str
        Characters left as they are (``"\n"`` for a multi-line report).

    Returns
    -------
    str
        Printable text; applying the function twice changes nothing more.

    Examples
    --------
    >>> print(escape_controls("col\x1b[2Jumn"))
    col\x1b[2Jumn
    >>> escape_controls("two\nlines\r", keep="\n")
    'two\nlines\\x0d'
    """
    if keep:
        return _control_except(keep).sub(_escape, text)
    return _CONTROL.sub(_escape, text)


@functools.lru_cache(maxsize=16)
def _control_except(keep: str) -> re.Pattern[str]:
    """:data:`_CONTROL` without the characters ``keep``: they are never matched, rather than
    matched and put back one by one (a report's every line break)."""
    characters = [chr(code) for code in (*range(0x20), *range(0x7f, 0xa0))] + list(
        _INVISIBLE_LAYOUT)
    left = "".join(re.escape(c) for c in characters if c not in keep)
    return re.compile(f"[{left}]" if left else "(?!)")


#: What a spreadsheet reads as the start of a formula (OWASP, CSV injection), with the
#: full-width forms that some spreadsheets fold to them.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n", "＝", "＋", "－", "＠")
_PLAIN_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")


def neutralise_formula(cell: object) -> object:
    """A text cell that starts (after blanks) like a formula, prefixed with ``'``.

    Non-text values and text that is a plain number (``-0.5``, ``+1e-3``) are returned as they
    are; a spreadsheet reads those as numbers, not formulas.

    Examples
    --------
    >>> neutralise_formula("=HYPERLINK(\\"http://x\\")")
    '\\'=HYPERLINK("http://x")'
    >>> neutralise_formula("  @SUM(A1)"), neutralise_formula("-0.5"), neutralise_formula(1.5)
    ("'  @SUM(A1)", '-0.5', 1.5)
    """
    if not isinstance(cell, str) or not cell:
        return cell
    if _PLAIN_NUMBER.fullmatch(cell):
        return cell
    stripped = cell.lstrip()
    if cell[0] in _FORMULA_START or (stripped and stripped[0] in _FORMULA_START):
        return "'" + cell
    return cell
