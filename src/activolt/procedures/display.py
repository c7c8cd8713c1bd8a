"""Small HTML tables with which results show themselves in a notebook (``_repr_html_``).

Plain markup built from plain values: every text is escaped (:func:`html.escape`), nothing is
fetched and no script is written, so a note or a file name cannot inject markup into a page.
A value is printed with its standard uncertainty to two significant digits of the uncertainty
and the value to the same decimal place (GUM, JCGM 100:2008, 7.2.6), never with more digits.
The procedures' result objects build their headline tables with these helpers; the text report
and the certificate (``report/``) have their own layouts.
"""

from __future__ import annotations

import html
import math
from collections.abc import Sequence

from ..rounding import decimals_for

__all__ = ["html_table", "rounded_uncertainty", "value_with_uncertainty"]


def value_with_uncertainty(value: float, uncertainty: float, scale: float = 1.0,
                           significant: int = 2) -> str:
    """``value ± u`` with u to ``significant`` digits and the value to the same place.

    Parameters
    ----------
    value, uncertainty : float
        The value and its standard uncertainty, in the unit the caller shows times ``1/scale``.
    scale : float
        Factor applied to both before printing (1e3 to show volts as millivolts).
    significant : int
        Significant digits of the uncertainty.

    Returns
    -------
    str
        ``"222.189 ± 0.023"``; ``"4.33 (held)"`` when u is NaN (a held parameter); ``"—"``
        when the value is not finite.

    Notes
    -----
    Rounding as the GUM recommends (JCGM 100:2008, 7.2.6): the uncertainty to at most two
    significant digits, the value to the same decimal place.

    Examples
    --------
    >>> value_with_uncertainty(0.2221893, 2.34e-5, scale=1e3)
    '222.189 ± 0.023'
    >>> value_with_uncertainty(4.335, float("nan"))
    '4.335 (held)'
    """
    if not math.isfinite(value):
        return "—"
    value, uncertainty = value * scale, uncertainty * scale
    if not math.isfinite(uncertainty):
        return f"{value:.4g} (held)"
    if uncertainty <= 0.0:
        return f"{value:.6g}"
    places = decimals_for(uncertainty, significant)
    return f"{value:.{places}f} ± {uncertainty:.{places}f}"


def rounded_uncertainty(uncertainty: float, scale: float = 1.0, significant: int = 2) -> str:
    """An uncertainty alone (an expanded U, say) to ``significant`` digits, as
    :func:`value_with_uncertainty` prints it.

    Examples
    --------
    >>> rounded_uncertainty(4.58e-5, scale=1e3)
    '0.046'
    """
    uncertainty = uncertainty * scale
    if not math.isfinite(uncertainty) or uncertainty <= 0.0:
        return "—"
    return f"{uncertainty:.{decimals_for(uncertainty, significant)}f}"


def html_table(caption: str, header: Sequence[str], rows: Sequence[Sequence[object]],
               warnings: Sequence[str] = (), notes: Sequence[str] = ()) -> str:
    """An HTML table with a caption, a header row and the warnings and notes below it.

    Parameters
    ----------
    caption : str
        What the table shows.
    header : sequence of str
        Column headings (empty: no header row).
    rows : sequence of sequences
        The cells, each shown as ``str(cell)``.
    warnings, notes : sequence of str
        Shown as lists under the table, warnings first.

    Returns
    -------
    str
        One ``<div>`` holding the table; every text escaped.

    Examples
    --------
    >>> html_table("E°", ["quantity", "value"], [["E° / mV", "1 < 2"]])[:40]
    '<div class="activolt-result"><table><cap'
    >>> "&lt;b&gt;" in html_table("x", [], [], warnings=["<b>"])
    True
    """
    parts = ['<div class="activolt-result"><table>',
             f"<caption>{html.escape(caption)}</caption>"]
    if header:
        parts.append("<thead><tr>" + "".join(f"<th>{html.escape(str(h))}</th>" for h in header)
                     + "</tr></thead>")
    parts.append("<tbody>")
    for row in rows:
        parts.append("<tr>" + "".join(f"<td>{html.escape(str(cell))}</td>" for cell in row)
                     + "</tr>")
    parts.append("</tbody></table>")
    for title, items in (("warnings", warnings), ("notes", notes)):
        if items:
            parts.append(f"<p>{title}:</p><ul>"
                         + "".join(f"<li>{html.escape(str(item))}</li>" for item in items)
                         + "</ul>")
    parts.append("</div>")
    return "".join(parts)
