"""The HTML report of a reduction or a temperature study: one self-contained page.

``RUN.report.html`` sits beside ``RUN.report.txt``. It is written from the record
(``activolt-record/1``, :mod:`activolt.io.record`) alone, so that every number it shows is the
record's number: each number cell carries the record's unrounded value in ``data-value`` and
shows it rounded by :mod:`activolt.report.numbers` (the uncertainty to two significant digits,
the value to the same place; GUM, JCGM 100:2008, 7.2.6). The figures are the PNG images of the
output set, embedded as ``data:`` URIs.

The page fetches nothing (a Content-Security-Policy allows images from ``data:`` and the inline
style sheet only), holds no script, prints on A4 (``@media print``), and writes every text that
comes from the user or the record (metadata, file names, series, reasons, warnings) through
:func:`activolt.report.certificate.text`: control and layout characters escaped, then
``html.escape``.
"""

from __future__ import annotations

import base64
import functools
import math
import re
from collections.abc import Callable, Mapping, Sequence
from itertools import accumulate, compress, pairwise
from typing import Any

import numpy as np
import numpy.typing as npt

from .certificate import text
from .numbers import (
    decimals_for,
    fill_rows,
    format_compact,
    format_compact_column,
    format_with_uncertainty,
    format_with_uncertainty_column,
)

__all__ = ["FIGURE_CAPTIONS", "report_html", "report_htmls"]

#: Captions of the figures of an output set, by the name the set gives them.
FIGURE_CAPTIONS = {
    "extrapolation": "Extrapolation to infinite dilution: the extrapolation function against "
                     "molality, the fitted curve and its band; E° is the intercept.",
    "residuals": "Residuals of the fit against molality, with each reading's uncertainty.",
    "gamma": "γ± from each reading with its uncertainty, beside the fitted model and the "
             "published tables.",
    "standard_potential": "E°(T): the isotherms' E° with their uncertainties, the fitted form "
                          "and its band.",
}

#: No network, no script: images from data: URIs, the inline style sheet, nothing else.
CONTENT_SECURITY_POLICY = ("default-src 'none'; img-src data:; style-src 'unsafe-inline'; "
                           "base-uri 'none'; form-action 'none'")

_STYLE = """
:root { color-scheme: light; }
body { font-family: "DejaVu Sans", Arial, Helvetica, sans-serif; font-size: 10.5pt;
  color: #111; background: #fff; margin: 0 auto; max-width: 190mm; padding: 0 4mm 8mm 4mm;
  line-height: 1.4; }
header { border-bottom: 2px solid #111; margin-bottom: 4mm; }
h1 { font-size: 16pt; margin: 3mm 0 1mm 0; }
h2 { font-size: 12pt; margin: 6mm 0 2mm 0; border-bottom: 1px solid #888;
  break-after: avoid; page-break-after: avoid; }
h3 { font-size: 10.5pt; margin: 4mm 0 1mm 0; }
table { border-collapse: collapse; margin: 1mm 0 3mm 0; }
th, td { border: 1px solid #aaa; padding: 0.6mm 1.6mm; text-align: left; vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.out td { color: #555; font-style: italic; }
dl.fields { display: grid; grid-template-columns: max-content 1fr; gap: 0.6mm 4mm; margin: 0; }
dl.fields dt { font-weight: bold; }
dl.fields dd { margin: 0; overflow-wrap: anywhere; }
p.result { font-size: 12.5pt; margin: 2mm 0; }
figure { margin: 3mm 0; break-inside: avoid; page-break-inside: avoid; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { font-size: 9pt; color: #333; }
section.safety { border: 2px solid #111; padding: 1mm 4mm; margin-top: 6mm; }
.hash { font-family: "DejaVu Sans Mono", monospace; font-size: 8.5pt; overflow-wrap: anywhere; }
footer { margin-top: 6mm; font-size: 8.5pt; color: #333; border-top: 1px solid #888; }
@media print {
  @page { size: A4; margin: 15mm 14mm 16mm 14mm; }
  body { max-width: none; padding: 0; font-size: 9.5pt; }
  th { background: none; }
  table, figure, section.safety { break-inside: avoid; page-break-inside: avoid; }
  table.long { break-inside: auto; page-break-inside: auto; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
}
"""

_NOT_GIVEN = "—"


#: Text that :func:`~activolt.report.certificate.text` leaves as it is: what the rounding of a
#: number writes (digits, signs, ``±``, ``×``, superscripts, ``—``, units) and plain words.
_PLAIN = re.compile("[0-9A-Za-z .,:;/()%+\\-±×⁰¹²³⁴⁵⁶⁷⁸⁹⁻—°Å]*")


@functools.lru_cache(maxsize=4096)
def _cached_text(value: str) -> str:
    return value if _PLAIN.fullmatch(value) else text(value)


def _text(value: object) -> str:
    """:func:`~activolt.report.certificate.text`, remembered for strings (a batch's pages
    repeat their labels, units and many rounded numbers); a whole number or a float is written
    as ``str`` writes it, which holds nothing to escape."""
    kind = type(value)
    if kind is str:
        return _cached_text(value)
    if kind is int or kind is float:
        return str(value)
    return text(value)


def _shown(value: str) -> str:
    """A rounded number as shown (:func:`_text`, without remembering the many numbers that
    need no escaping)."""
    return value if _PLAIN.fullmatch(value) else _cached_text(value)


def _number_value(value: Any) -> float | None:
    """A finite float, or None."""
    if type(value) is float:
        return value if math.isfinite(value) else None
    if value is None or isinstance(value, bool):
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return number if math.isfinite(number) else None


def _data(value: Any) -> str:
    """The record's value for a ``data-value`` attribute, as JSON writes it ("" for none)."""
    number = _number_value(value)
    return "" if number is None else repr(number)


@functools.lru_cache(maxsize=256)
def _quantity(quantity: str) -> str:
    """The ``data-quantity`` attribute of a cell."""
    return f' data-quantity="{_text(quantity)}"'


def _cell(shown: str, value: Any = None, quantity: str | None = None) -> str:
    """A number cell: ``shown`` (escaped) and the record's value in ``data-value``."""
    attributes = _value_attribute(value)
    if quantity is not None:
        attributes += _quantity(quantity)
    return f'<td class="num"{attributes}>{_shown(shown)}</td>'


def _value_attribute(value: Any) -> str:
    """`` data-value="…"`` of a cell showing ``value`` ("" for None)."""
    if value is None:
        return ""
    if type(value) is float and value - value == 0.0:  # finite
        return f' data-value="{value!r}"'
    return f' data-value="{_data(value)}"'


def _rounded_cell(shown: str, value: Any, quantity_attribute: str) -> str:
    """:func:`_cell` of a number rounded by this module (digits, signs, ``±``, ``×``,
    superscripts, ``—``: nothing to escape), its ``data-quantity`` attribute made already."""
    return f'<td class="num"{_value_attribute(value)}{quantity_attribute}>{shown}</td>'


def _with_u(value: Any, uncertainty: Any, scale: float = 1.0, unit: str = "") -> str:
    """``value ± u unit`` rounded by :func:`format_with_uncertainty`, or what is known."""
    v, u = _number_value(value), _number_value(uncertainty)
    if v is None:
        return _NOT_GIVEN
    if u is None:
        return f"{v * scale:.6g}" + (f" {unit}" if unit else "") + " (u not stated)"
    return format_with_uncertainty(v * scale, u * scale, unit)


def _compact(value: Any, uncertainty: Any) -> str:
    v, u = _number_value(value), _number_value(uncertainty)
    if v is None:
        return _NOT_GIVEN
    if u is None:
        return f"{v:.6g}"
    return format_compact(v, u)


def _kPa(value: Any) -> str:
    """A pressure in kPa as the text report writes it (``100 kPa``, ``101.325 kPa``)."""
    number = _number_value(value)
    return _NOT_GIVEN if number is None else f"{number:g} kPa"


def _fields(rows: Sequence[tuple[str, str]]) -> str:
    """A definition list; labels are escaped here, values are HTML already."""
    return '<dl class="fields">' + "".join(
        f"<dt>{_text(label)}</dt><dd>{value}</dd>" for label, value in rows) + "</dl>"


def _table(header: Sequence[str], rows: Sequence[str], ident: str, long: bool = False) -> str:
    """A table with an escaped header; ``rows`` are ``<tr>`` HTML already."""
    head = _header(tuple(header))
    kind = ' class="long"' if long else ""
    return (f'<table id="{ident}"{kind}><thead><tr>{head}</tr></thead><tbody>\n'
            + "\n".join(rows) + "\n</tbody></table>")


@functools.lru_cache(maxsize=64)
def _header(header: tuple[str, ...]) -> str:
    """The escaped header cells of a table (the same few headers on every page)."""
    return "".join(f"<th>{_text(h)}</th>" for h in header)


def _list(items: Sequence[Any], ident: str) -> str:
    return f'<ul id="{ident}">' + "".join(f"<li>{_text(i)}</li>" for i in items) + "</ul>"


def _file_name(path: Any) -> str:
    """The last part of a path written with ``/`` or ``\\``."""
    return str(path).replace("\\", "/").rsplit("/", 1)[-1]


def _identification(record: Mapping[str, Any], record_name: str | None,
                    record_sha256: str | None) -> str:
    info = record.get("run_info") or {}
    rows: list[tuple[str, str]] = [(str(key).replace("_", " "), _text(value))
                                   for key, value in info.items() if value not in (None, "")]
    inputs = record.get("inputs") or [record.get("input") or {}]
    for source in inputs:
        rows.append(("run table", f"{_text(_file_name(source.get('file', '')))} "
                                  f"<span class=\"hash\">SHA-256 {_text(source.get('sha256', ''))}"
                                  "</span>"))
        if source.get("metadata_file"):
            rows.append(("metadata", f"{_text(_file_name(source['metadata_file']))} "
                                     f"<span class=\"hash\">SHA-256 "
                                     f"{_text(source.get('metadata_sha256', ''))}</span>"))
    if record_name or record_sha256:
        rows.append(("record", (_text(record_name) if record_name else "")
                     + (f' <span class="hash">SHA-256 {_text(record_sha256)}</span>'
                        if record_sha256 else "")))
    software = record.get("software") or {}
    rows.append(("software", _text(f"{software.get('name', 'activolt')} "
                                  f"{software.get('version', '')}".strip())))
    rows.append(("created (UTC)", _text(record.get("created_utc", _NOT_GIVEN))))
    return '<section id="identification"><h2>Run</h2>' + _fields(rows) + "</section>"


def _conditions(record: Mapping[str, Any]) -> str:
    t_K = _number_value(record.get("temperature_K"))
    rows = []
    if record.get("cell"):
        rows.append(("cell", _text(record["cell"])))
    rows += [
        ("electrolyte", _text(record.get("electrolyte", _NOT_GIVEN))),
        ("electrons n", _text(record.get("electrons", _NOT_GIVEN))),
        ("temperature", _NOT_GIVEN if t_K is None
         else f'<span data-value="{_data(t_K)}" data-quantity="temperature_K">'
              f"{t_K - 273.15:.2f} °C ({t_K:.2f} K)</span>"),
        ("pressure basis p°", _kPa(record.get("standard_pressure_kPa"))),
    ]
    model = record.get("model") or {}
    rows.append(("model", _text(model.get("title") or model.get("name") or _NOT_GIVEN)))
    return '<section id="conditions"><h2>Cell and conditions</h2>' + _fields(rows) + "</section>"


def _results(record: Mapping[str, Any]) -> str:
    e0 = record.get("standard_potential_V") or {}
    value, u = e0.get("value"), e0.get("uncertainty")
    expanded, k = e0.get("expanded_uncertainty_95"), e0.get("coverage_factor_95")
    shown = _with_u(value, u, 1e3, "mV")
    u_mV = _number_value(u)
    expanded_V = _number_value(expanded)
    places = None
    if u_mV is not None and expanded_V is not None:
        places = decimals_for(expanded_V * 1e3)
    parts = [
        f'<p class="result" id="standard-potential">E° = <span data-quantity="standard_potential_V"'
        f' data-value="{_data(value)}" data-uncertainty="{_data(u)}">{_text(shown)}</span> (k = 1)'
        + (f"; 95 % interval ± <span data-quantity=\"expanded_uncertainty_95\" "
           f"data-value=\"{_data(expanded)}\">{expanded_V * 1e3:.{places}f} mV</span> "
           f"(k = {float(k):.2f})" if places is not None and k is not None else "")
        + f"; basis p° = {_kPa(record.get('standard_pressure_kPa'))}</p>",
    ]
    rows = []
    other = record.get("standard_potential_other_basis")
    if other:
        rows.append(("E° on the other basis", _text(
            f"{_with_u(other.get('value_V'), other.get('uncertainty_V'), 1e3, 'mV')} "
            f"(p° = {other.get('standard_pressure_kPa')} kPa)")))
    catalogue = record.get("catalogue_standard_potential_V")
    if catalogue:
        rows.append(("catalogue E°", _text(
            f"{_with_u(catalogue.get('value'), catalogue.get('uncertainty'), 1e3, 'mV')} "
            f"({catalogue.get('couples', '')}; same T and basis)")))
    if e0.get("u_model_choice") is not None:
        rows.append(("u(E°) components", _text(
            f"fit {_with_u(0.0, e0.get('u_fit'), 1e3, 'mV').split('± ')[-1]}, model choice "
            f"{_with_u(0.0, e0.get('u_model_choice'), 1e3, 'mV').split('± ')[-1]}")))
    for key, label, unit in (("delta_g_kJ_mol", "ΔG°", "kJ/mol"), ("log10_K", "log₁₀ K", "")):
        entry = record.get(key) or {}
        if entry.get("value") is not None:
            shown = _with_u(entry.get("value"), entry.get("uncertainty"), 1.0, unit)
            rows.append((label, f'<span data-quantity="{key}" data-value='
                                f'"{_data(entry.get("value"))}">{_text(shown)}</span>'))
    if e0.get("method"):
        rows.append(("how u(E°) was obtained", _text(e0["method"])))
    parts.append(_fields(rows))
    parameters = (record.get("model") or {}).get("parameters") or {}
    if parameters:
        prows = []
        for name, p in parameters.items():
            held = p.get("fixed")
            prows.append(
                f"<tr><td>{_text(name)}</td>"
                + _cell(_compact(p.get("value"), p.get("uncertainty")), p.get("value"),
                        f"parameter:{name}")
                + f"<td>{_text(p.get('unit') or '')}</td>"
                + f"<td>{'held' if held else 'fitted'}"
                + (f" — {_text(p['reason'])}" if held and p.get("reason") else "") + "</td></tr>")
        parts.append("<h3>Model parameters</h3>"
                     + _table(["parameter", "value ± u (k = 1)", "unit", ""], prows,
                              "parameters"))
    fit = record.get("fit") or {}
    if fit:
        chi2_unit = "" if fit.get("weighting") == "stated reading uncertainties" else " V²"
        fit_rows = [("readings used", _text(fit.get("n_points", _NOT_GIVEN))),
                    ("degrees of freedom", _text(fit.get("dof", _NOT_GIVEN)))]
        for key, label, fmt, unit in (("chi2", "χ²", ".4g", chi2_unit),
                                      ("reduced_chi2", "reduced χ²", ".3g", chi2_unit),
                                      ("aic", "AIC", ".1f", ""), ("bic", "BIC", ".1f", "")):
            number = _number_value(fit.get(key))
            if number is not None:
                fit_rows.append((label, f'<span data-quantity="fit:{key}" data-value='
                                        f'"{_data(number)}">{number:{fmt}}{unit}</span>'))
        fit_rows.append(("weighting", _text(fit.get("weighting", _NOT_GIVEN))
                         + (" (covariance scaled by the reduced χ²)"
                            if fit.get("covariance_scaled") else "")))
        parts.append("<h3>Fit</h3>" + _fields(fit_rows))
    cross = record.get("cross_check")
    if cross:
        e0_cross = cross.get("standard_potential_V") or {}
        parts.append(
            "<h3>Cross-check</h3><p>" + _text(
                f"{cross.get('method', '')}: {cross.get('n_points')} points with I ≤ "
                f"{cross.get('max_ionic_strength_mol_kg')} mol/kg, E° = "
                + _with_u(e0_cross.get("value"), e0_cross.get("uncertainty"), 1e3, "mV"))
            + "</p>")
    return '<section id="results"><h2>Result</h2>' + "".join(parts) + "</section>"


def _figures(figures: Mapping[str, bytes] | None) -> str:
    if not figures:
        return ('<section id="figures"><h2>Figures</h2><p>No figures were drawn for this '
                "output set.</p></section>")
    blocks = []
    for name, png in figures.items():
        caption = FIGURE_CAPTIONS.get(name, name.replace("_", " "))
        data = base64.b64encode(png).decode("ascii")
        blocks.append(f'<figure id="figure-{_text(name)}"><img src="data:image/png;base64,{data}"'
                      f' alt="{_text(caption)}"><figcaption>{_text(caption)}</figcaption></figure>')
    return '<section id="figures"><h2>Figures</h2>' + "\n".join(blocks) + "</section>"


# --- the tables of many pages, worked column by column -----------------------------------------
#
# The rows of a table whose numbers are all finite Python floats (nearly every row of a
# reduction) are written for all the pages of a batch at once: each column's numbers rounded by
# the column formatters of :mod:`activolt.report.numbers`, then every row filled by one ``%``
# of the row's template. Any other row is written value by value (``_point_row``,
# ``_published_row``, ``_derived_row``), which handles missing and non-finite values.

def _rows_of(records: Sequence[Mapping[str, Any]], table: Callable[[Mapping[str, Any]], Any]
             ) -> tuple[list[Mapping[str, Any]], list[int]]:
    """The rows of one table of every page in one list, and where each page's rows begin
    (with the end of the last page's rows after them)."""
    tables = [list(table(record) or []) for record in records]
    return [row for rows in tables for row in rows], [0, *accumulate(map(len, tables))]


def _columns(rows: list[Mapping[str, Any]], *keys: str, **defaults: Any) -> list[list[Any]]:
    """The values of each key in the rows (``defaults[key]``, else None, where a row lacks
    it)."""
    return [[row.get(key, fallback) for row in rows]
            for key, fallback in zip(keys, map(defaults.get, keys), strict=True)]


def _finite(values: Sequence[Any]) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.bool_]]:
    """A column as floats (NaN for what is not a float), and where it holds finite Python
    floats (``float`` exactly: what the tables write directly)."""
    if set(map(type, values)) <= {float}:
        numbers = np.array(values, dtype=np.float64)
        return numbers, np.isfinite(numbers)
    floats = [type(value) is float for value in values]
    numbers = np.array([value if is_float else math.nan
                        for value, is_float in zip(values, floats, strict=True)],
                       dtype=np.float64)
    return numbers, np.array(floats, dtype=bool) & np.isfinite(numbers)


def _shared_cells(values: npt.NDArray[np.float64], template: str) -> list[str]:
    """``template % (repr(v), v)`` for each finite float of a column, each distinct non-zero
    value written once: the pages of a batch share their molalities, and the published means
    at them. Zeros are written each time (0.0 and -0.0 are equal as keys, not as text)."""
    numbers = values.tolist()
    cells = {value: template % (value, value) for value in set(numbers) if value}
    return [cells[value] if value else template % (value, value) for value in numbers]


def _merged(direct: npt.NDArray[np.bool_], written: list[str],
            general: Callable[[int], str]) -> list[str]:
    """The rows of a table: ``written`` where ``direct``, in order, ``general(i)`` for each
    other row ``i``."""
    if direct.all():
        return written
    texts = iter(written)
    return [next(texts) if is_direct else general(index)
            for index, is_direct in enumerate(direct.tolist())]


def _sections(starts: list[int], rows: list[str], section: Callable[[int, list[str]], str]
              ) -> list[str]:
    """Each page's section from its rows ("" for a page without rows)."""
    return [section(page, rows[start:end]) if end > start else ""
            for page, (start, end) in enumerate(pairwise(starts))]


_Q_MOLALITY, _Q_SETPOINT, _Q_EMF, _Q_RESIDUAL, _Q_GAMMA = (_quantity(q) for q in (
    "molality_mol_kg", "isotherm_temperature_K", "emf_V", "residual_V", "gamma_pm"))
_Q_MEAN, _Q_DIFFERENCE, _Q_RATIO = (_quantity(q) for q in (
    "gamma_pm_published", "difference", "difference_over_u"))
_Q_PHI, _Q_A_W, _Q_EXCESS = (_quantity(q) for q in (
    "osmotic_coefficient", "water_activity", "excess_gibbs_rt_mol_kg"))

#: A molality's cell (with and without its ``data-quantity``), to be filled with (m, m).
_MOLALITY_CELL = '<td class="num" data-value="%r"' + _Q_MOLALITY + ">%.6g</td>"
_PLAIN_MOLALITY_CELL = '<td class="num" data-value="%r">%.6g</td>'
#: A reading in the fit, not flagged: line, molality cell, electrode cell, then E, the
#: residual and γ±, each with the record's value (its ``repr``).
_POINT_ROW = ('<tr><td>%d</td>%s%s<td class="num" data-value="%r"' + _Q_EMF + ">%.3f</td>"
              '<td class="num" data-value="%r"' + _Q_RESIDUAL + ">%+.4f</td>"
              '<td class="num" data-value="%r"' + _Q_GAMMA + ">%s</td><td></td></tr>")
#: The published mean's cell but for its suffix and end, to be filled with (mean, mean).
_MEAN_CELL = '<td class="num" data-value="%r"' + _Q_MEAN + ">%.4f"
#: A published row: molality cell, marks, mean cell, its suffix, difference, difference / u.
_PUBLISHED_ROW = ("<tr>%s<td>%s</td>%s%s</td>"
                  '<td class="num" data-value="%r"' + _Q_DIFFERENCE + ">%+.5f</td>"
                  '<td class="num" data-value="%r"' + _Q_RATIO + ">%+.1f</td></tr>")
#: A derived row: molality cell, φ, 1 − a_w, G^E/(RT), each with the record's value.
_DERIVED_ROW = ('<tr>%s<td class="num" data-value="%r"' + _Q_PHI + ">%s</td>"
                '<td class="num" data-value="%r"' + _Q_A_W + ">%s</td>"
                '<td class="num" data-value="%r"' + _Q_EXCESS + ">%s</td></tr>")


def _points_of_many(records: Sequence[Mapping[str, Any]]) -> list[str]:
    """The readings section of each page ("" for a record without points)."""
    rows, starts = _rows_of(records, lambda record: record.get("points"))
    (lines, used, flags, electrode, setpoints, m_values, emf_values, residual_values,
     gamma_values, u_gamma_values) = _columns(
        rows, "line", "used_in_fit", "flag", "electrode", "isotherm_temperature_K",
        "molality_mol_kg", "emf_V", "residual_V", "gamma_pm", "u_gamma_pm", used_in_fit=True)
    pages = list(pairwise(starts))
    electrodes = [any(electrode[start:end]) for start, end in pages]
    isotherms = [any(t is not None for t in setpoints[start:end]) for start, end in pages]
    owners = np.repeat(np.arange(len(records)), np.diff(starts))
    m, m_ok = _finite(m_values)
    emf, emf_ok = _finite(emf_values)
    residual, residual_ok = _finite(residual_values)
    gamma, gamma_ok = _finite(gamma_values)
    u_gamma, u_gamma_ok = _finite(u_gamma_values)
    direct = (np.array([u is True and not f and type(line) is int
                        for u, f, line in zip(used, flags, lines, strict=True)], dtype=bool)
              & ~np.array(isotherms, dtype=bool)[owners]
              & m_ok & emf_ok & residual_ok & gamma_ok & u_gamma_ok)
    chosen = direct.tolist()
    electrode_cells = [""] * len(rows)
    if any(electrodes):
        electrode_cells = [f"<td>{_text(e or '')}</td>" if electrodes[owner] else ""
                           for e, owner in zip(electrode, owners.tolist(), strict=True)]
    emf, residual = emf[direct], residual[direct]
    with np.errstate(over="ignore"):  # (mV beyond the floats: inf, as alone)
        emf_mV, residual_mV = (emf * 1e3).tolist(), (residual * 1e3).tolist()
    written = fill_rows(_POINT_ROW, (
        list(compress(lines, chosen)), _shared_cells(m[direct], _MOLALITY_CELL),
        list(compress(electrode_cells, chosen)), emf.tolist(), emf_mV,
        residual.tolist(), residual_mV, gamma[direct].tolist(),
        format_with_uncertainty_column(gamma[direct], u_gamma[direct])))
    owner = owners.tolist()
    texts = _merged(direct, written, lambda index: _point_row(
        rows[index], isotherms[owner[index]], electrodes[owner[index]]))

    def section(page: int, page_rows: list[str]) -> str:
        record = records[page]
        header = ("line", "m / (mol/kg)", *(("isotherm / °C",) if isotherms[page] else ()),
                  *(("electrode",) if electrodes[page] else ()), "E / mV", "residual / mV",
                  "γ± ± u (k = 1)", "remark")
        return ('<section id="points"><h2>Readings and γ±</h2>'
                + _table(header, page_rows, "points-table", long=True)
                + (f"<p>{_text(record['gamma_uncertainty_method'])}</p>"
                   if record.get("gamma_uncertainty_method") else "")
                + "</section>")

    return _sections(starts, texts, section)


def _point_row(p: Mapping[str, Any], isotherms: bool, electrodes: bool) -> str:
    """A row of the readings table written value by value."""
    get = p.get
    used = get("used_in_fit", True)
    emf = _number_value(get("emf_V"))
    cells = [f'<tr{"" if used else " class=out"}><td>{_text(get("line", ""))}</td>',
             _rounded_cell(f"{p['molality_mol_kg']:.6g}", get("molality_mol_kg"), _Q_MOLALITY)]
    if isotherms:
        setpoint = _number_value(get("isotherm_temperature_K"))
        cells.append(_rounded_cell(
            _NOT_GIVEN if setpoint is None else f"{setpoint - 273.15:.2f}", setpoint,
            _Q_SETPOINT))
    if electrodes:
        cells.append(f"<td>{_text(get('electrode') or '')}</td>")
    cells.append(_rounded_cell(_NOT_GIVEN if emf is None else f"{emf * 1e3:.3f}", emf, _Q_EMF))
    if used:
        residual = _number_value(get("residual_V"))
        gamma = get("gamma_pm")
        cells.append(_rounded_cell(
            _NOT_GIVEN if residual is None else f"{residual * 1e3:+.4f}", residual,
            _Q_RESIDUAL))
        cells.append(_rounded_cell(_with_u(gamma, get("u_gamma_pm")), gamma, _Q_GAMMA))
    else:
        cells.append("<td></td><td></td>")
    flag = get("flag")
    remark = (f"out of the fit — {flag}" if not used and flag
              else f"stands out — {flag}" if flag else "")
    cells.append(f"<td>{_text(remark)}</td></tr>")
    return "".join(cells)


def _published_value(value: Any) -> str:
    """A published γ± as the published table shows it (four decimals, ``—`` for none)."""
    number = _number_value(value)
    return _NOT_GIVEN if number is None else f"{number:.4f}"


def _marks_of_many(rows: list[Mapping[str, Any]], starts: list[int]
                   ) -> tuple[list[str], list[dict[str, str]]]:
    """The published values of each row as shown (each with its table's letter, interpolated
    ones in brackets), and each page's letter of each table (in the order the page names
    them). The pages of a batch show the same published values: each distinct non-zero
    finite float is written once."""
    entries, entry_starts = _rows_of(rows, lambda row: row.get("published_values"))
    sources, values, interpolated = _columns(entries, "source", "gamma_pm", "interpolated")
    sources = list(map(str, sources))
    written = {value: f"{value:.4f}" for value in {v for v in values if type(v) is float}
               if value and value - value == 0.0}
    texts = [written[value] if type(value) is float and value in written
             else _published_value(value) for value in values]
    letters: list[str] = []
    pages = []
    for start, end in pairwise(starts):
        named = sources[entry_starts[start]:entry_starts[end]]
        letter = {source: chr(ord("a") + n) for n, source in enumerate(dict.fromkeys(named))}
        letters += map(letter.__getitem__, named)
        pages.append(letter)
    marks = [f"({text}){letter}" if bracketed else text + letter
             for text, letter, bracketed in zip(texts, letters, interpolated, strict=True)]
    joined = [" ".join(marks[start:end]) for start, end in pairwise(entry_starts)]
    escaped = {text: _shown(text) for text in set(joined)}
    return [escaped[text] for text in joined], pages


def _published_of_many(records: Sequence[Mapping[str, Any]]) -> list[str]:
    """The section comparing γ± with the published values, of each page ("" for none)."""
    rows, starts = _rows_of(records, lambda record: record.get("published_comparison"))
    marks, letters = _marks_of_many(rows, starts)
    m_values, mean_values, difference_values, ratio_values, interpolated = _columns(
        rows, "molality_mol_kg", "gamma_pm_published", "difference", "difference_over_u",
        "interpolated")
    m, m_ok = _finite(m_values)
    mean, mean_ok = _finite(mean_values)
    difference, difference_ok = _finite(difference_values)
    ratio, ratio_ok = _finite(ratio_values)
    direct = m_ok & mean_ok & difference_ok & ratio_ok
    chosen = direct.tolist()
    differences, ratios = difference[direct].tolist(), ratio[direct].tolist()
    written = fill_rows(_PUBLISHED_ROW, (
        _shared_cells(m[direct], _PLAIN_MOLALITY_CELL), list(compress(marks, chosen)),
        _shared_cells(mean[direct], _MEAN_CELL),
        ["i" if i else "" for i in compress(interpolated, chosen)],
        differences, differences, ratios, ratios))
    texts = _merged(direct, written, lambda index: _published_row(rows[index], marks[index]))

    def section(page: int, page_rows: list[str]) -> str:
        record = records[page]
        legend = "".join(f"<li>{letter}: {_text(source)}</li>"
                         for source, letter in letters[page].items())
        return ('<section id="published"><h2>γ± against published values</h2>'
                + _table(["m / (mol/kg)", "published (interpolated in brackets)", "mean",
                          "difference", "difference / u"], page_rows, "published-table")
                + f"<ul>{legend}</ul>"
                + (f"<p>{_text(record['published_comparison_method'])}</p>"
                   if record.get("published_comparison_method") else "") + "</section>")

    return _sections(starts, texts, section)


def _published_row(r: Mapping[str, Any], marks: str) -> str:
    """A row of the published table written value by value (``marks``: its published values
    as shown)."""
    mean = _number_value(r.get("gamma_pm_published"))
    difference = _number_value(r.get("difference"))
    ratio = _number_value(r.get("difference_over_u"))
    return (f'<tr><td class="num"{_value_attribute(r.get("molality_mol_kg"))}>'
            f"{r['molality_mol_kg']:.6g}</td><td>{marks}</td>"
            + _rounded_cell(_NOT_GIVEN if mean is None else f"{mean:.4f}"
                            + ("i" if r.get("interpolated") else ""), mean, _Q_MEAN)
            + _rounded_cell(_NOT_GIVEN if difference is None else f"{difference:+.5f}",
                            difference, _Q_DIFFERENCE)
            + _rounded_cell(_NOT_GIVEN if ratio is None else f"{ratio:+.1f}", ratio, _Q_RATIO)
            + "</tr>")


def _derived_of_many(records: Sequence[Mapping[str, Any]]) -> list[str]:
    """The section of the properties derived from the fitted model, of each page ("" for
    none)."""
    rows, starts = _rows_of(records, lambda record: (record.get("derived_properties")
                                                     or {}).get("points"))
    m, phi, u_phi, a_w, u_a_w, excess, u_excess = (_finite(column) for column in _columns(
        rows, "molality_mol_kg", "osmotic_coefficient", "u_osmotic_coefficient",
        "water_activity", "u_water_activity", "excess_gibbs_rt_mol_kg",
        "u_excess_gibbs_rt_mol_kg"))
    direct = np.logical_and.reduce([ok for _numbers, ok in (
        m, phi, u_phi, a_w, u_a_w, excess, u_excess)])
    (m, phi, u_phi, a_w, u_a_w, excess, u_excess) = (numbers[direct] for numbers, _ok in (
        m, phi, u_phi, a_w, u_a_w, excess, u_excess))
    written = fill_rows(_DERIVED_ROW, (
        _shared_cells(m, _PLAIN_MOLALITY_CELL),
        phi.tolist(), format_with_uncertainty_column(phi, u_phi),
        a_w.tolist(), format_compact_column(1.0 - a_w, u_a_w),
        excess.tolist(), format_compact_column(excess, u_excess)))
    texts = _merged(direct, written, lambda index: _derived_row(rows[index]))

    def section(page: int, page_rows: list[str]) -> str:
        derived = records[page].get("derived_properties") or {}
        return ('<section id="derived"><h2>Derived from the fitted model (k = 1)</h2>'
                + _table(["m / (mol/kg)", "φ", "1 − a_w", "G^E/(RT) / (mol/kg)"], page_rows,
                         "derived-table")
                + (f"<p>{_text(derived['method'])}</p>" if derived.get("method") else "")
                + "</section>")

    return _sections(starts, texts, section)


def _derived_row(p: Mapping[str, Any]) -> str:
    """A row of the derived table written value by value."""
    get = p.get
    a_w = _number_value(get("water_activity"))
    phi, excess = get("osmotic_coefficient"), get("excess_gibbs_rt_mol_kg")
    return (f'<tr><td class="num"{_value_attribute(get("molality_mol_kg"))}>'
            f"{p['molality_mol_kg']:.6g}</td>"
            + _rounded_cell(_with_u(phi, get("u_osmotic_coefficient")), phi, _Q_PHI)
            + _rounded_cell(_NOT_GIVEN if a_w is None
                            else _compact(1.0 - a_w, get("u_water_activity")), a_w, _Q_A_W)
            + _rounded_cell(_compact(excess, get("u_excess_gibbs_rt_mol_kg")), excess,
                            _Q_EXCESS) + "</tr>")


def _budget(record: Mapping[str, Any]) -> str:
    budget = record.get("uncertainty_budget") or {}
    lines = list(budget.get("lines") or [])
    if not lines:
        return ""
    rows = [f"<tr><td>{_text(b.get('component', ''))}</td>"
            + _cell(f"{float(b['u_V']) * 1e3:.4f}", b.get("u_V"), "u_V")
            + f"<td>{_text(b.get('method', ''))}</td></tr>" for b in lines
            if _number_value(b.get("u_V")) is not None]
    combined = _number_value(budget.get("combined_u_V"))
    if combined is not None:
        rows.append("<tr><th>combined</th>" + _cell(f"{combined * 1e3:.4f}", combined,
                                                    "combined_u_V") + "<td></td></tr>")
    return ('<section id="budget"><h2>Uncertainty budget of E° (k = 1; each line alone)</h2>'
            + _table(["component", "u / mV", "how it was obtained"], rows, "budget-table")
            + "</section>")


def _comparison(record: Mapping[str, Any]) -> str:
    comparison = record.get("model_comparison")
    if not comparison:
        return ""
    rows = []
    for m in comparison.get("models") or []:
        e0 = m.get("standard_potential_V") or {}
        fit = m.get("fit") or {}
        bic = _number_value(fit.get("bic"))
        rows.append(f"<tr><td>{_text(m.get('name', ''))}</td>"
                    + _cell(_with_u(e0.get("value"), e0.get("uncertainty"), 1e3, "mV"),
                            e0.get("value"), "standard_potential_V")
                    + _cell(_NOT_GIVEN if bic is None else f"{bic:.1f}", bic, "bic")
                    + f"<td>{_text(m.get('verdict', ''))}</td></tr>")
    rows += [f"<tr><td>{_text(s.get('name', ''))}</td><td></td><td></td>"
             f"<td>{_text('not fitted — ' + str(s.get('reason', '')))}</td></tr>"
             for s in comparison.get("skipped") or []]
    return ('<section id="model-comparison"><h2>Model comparison</h2>'
            + _table(["model", "E° ± u (k = 1)", "BIC", "verdict"], rows, "comparison-table")
            + "<p>" + _text(f"recommended: {comparison.get('recommended_model')} — "
                           f"{comparison.get('recommendation_rule', '')}") + "</p></section>")


def _monte_carlo(record: Mapping[str, Any]) -> str:
    monte = record.get("monte_carlo")
    if not monte:
        return ""
    e0 = monte.get("standard_potential_V") or {}
    low, high = (e0.get("interval_95") or [None, None])[:2]
    u = _number_value(e0.get("uncertainty"))
    shown = _with_u(e0.get("mean"), u, 1e3, "mV")
    interval = ""
    if u is not None and low is not None and high is not None:
        places = decimals_for(u * 1e3)
        interval = f"; 95 % interval [{low * 1e3:.{places}f}, {high * 1e3:.{places}f}] mV"
    return ('<section id="monte-carlo"><h2>Monte Carlo</h2><p>'
            + _text(f"{monte.get('method', '')}: {monte.get('trials')} trials "
                   f"({monte.get('failed')} failed), seed {monte.get('seed')}; E° = {shown}"
                   + interval) + "</p>" + _list(monte.get("notes") or [], "monte-carlo-notes")
            + "</section>")


_STUDY_QUANTITIES = (("standard_potential_V", "E°", 1e3, "mV"),
                     ("delta_G_J_mol", "ΔG°", 1e-3, "kJ/mol"),
                     ("delta_H_J_mol", "ΔH°", 1e-3, "kJ/mol"),
                     ("delta_S_J_K_mol", "ΔS°", 1.0, "J/(K mol)"),
                     ("delta_Cp_J_K_mol", "ΔCp°", 1.0, "J/(K mol)"),
                     ("log10_K", "log₁₀ K", 1.0, ""))


def _study(record: Mapping[str, Any]) -> str:
    study = record.get("temperature_study")
    if not study:
        return ""
    theta = _number_value(study.get("reference_temperature_K"))
    rows = []
    for key, label, scale, unit in _STUDY_QUANTITIES:
        entry = study.get(key) or {}
        if _number_value(entry.get("value")) is None:
            continue
        rows.append(f"<tr><td>{_text(label)}</td>"
                    + _cell(_with_u(entry.get("value"), entry.get("uncertainty"), scale, unit),
                            entry.get("value"), key) + "</tr>")
    isotherm_rows = []
    for iso in study.get("isotherms") or []:
        t = _number_value(iso.get("temperature_K"))
        e0 = iso.get("standard_potential_V") or {}
        isotherm_rows.append(
            "<tr>" + _cell(_NOT_GIVEN if t is None else f"{t - 273.15:.2f}", t, "temperature_K")
            + f"<td>{_text(iso.get('n_points', ''))}</td><td>{_text(iso.get('model', ''))}</td>"
            + _cell(_with_u(e0.get("value"), e0.get("uncertainty"), 1e3, "mV"), e0.get("value"),
                    "standard_potential_V") + "</tr>")
    coefficients = study.get("coefficients") or {}
    return ('<section id="temperature-study"><h2>Temperature study</h2>'
            + "<p>" + _text(
                f"At θ = {'—' if theta is None else f'{theta - 273.15:.2f} °C'}; E°(T) form: "
                f"{coefficients.get('equation') or study.get('form', '')}"
                + (f" — {study['form_reason']}" if study.get("form_reason") else "")) + "</p>"
            + _table(["quantity", "value ± u (k = 1)"], rows, "study-table")
            + "<h3>Isotherms</h3>"
            + _table(["t / °C", "readings", "model", "E° ± u (k = 1)"], isotherm_rows,
                     "isotherm-table") + "</section>")


def _remarks(record: Mapping[str, Any]) -> str:
    parts = []
    for key, title in (("corrections", "Corrections"), ("notes", "Notes"),
                       ("warnings", "Warnings")):
        items = list(dict.fromkeys(str(i) for i in record.get(key) or []))
        if items:
            parts.append(f"<h3>{title}</h3>" + _list(items, key))
    if not parts:
        return ""
    return '<section id="remarks"><h2>Corrections, notes and warnings</h2>' + "".join(parts) \
        + "</section>"


def _safety(record: Mapping[str, Any]) -> str:
    cautions = list(record.get("cautions") or [])
    if not cautions:
        return ""
    return ('<section id="safety" class="safety"><h2>Safety</h2>'
            + _list(cautions, "cautions") + "</section>")


def report_html(record: Mapping[str, Any], figures: Mapping[str, bytes] | None = None,
                record_name: str | None = None, record_sha256: str | None = None) -> str:
    """The HTML report of a reduction or a temperature study, from its record.

    Parameters
    ----------
    record : mapping
        The record (``activolt-record/1``) as :func:`activolt.io.record.build_record` or
        :func:`activolt.io.record.build_study_record` makes it, or as read back from its JSON.
    figures : mapping of str to bytes, optional
        PNG images by name (``extrapolation``, ``residuals``, ``gamma``, …), as
        :func:`activolt.report.figures.render_figures` draws them; embedded as ``data:`` URIs.
    record_name : str, optional
        The record's file name, shown with the run.
    record_sha256 : str, optional
        The SHA-256 of the record's JSON text as written, shown beside its name.

    Returns
    -------
    str
        One HTML document (UTF-8): no script, nothing fetched, every text escaped.

    Examples
    --------
    >>> page = report_html({"electrolyte": "HCl", "run_info": {"operator": "<b>A</b>"},
    ...                     "standard_potential_V": {"value": 0.2222, "uncertainty": 2.3e-05}})
    >>> "&lt;b&gt;A&lt;/b&gt;" in page, "<script" in page
    (True, False)
    """
    return report_htmls([record], [figures], [record_name], [record_sha256])[0]


def report_htmls(records: Sequence[Mapping[str, Any]],
                 figures: Sequence[Mapping[str, bytes] | None] | None = None,
                 record_names: Sequence[str | None] | None = None,
                 record_sha256s: Sequence[str | None] | None = None) -> list[str]:
    """The HTML reports of many records (the series of a batch): :func:`report_html` of each,
    their tables written together, column by column.

    Parameters
    ----------
    records : sequence of mappings
        The records, as :func:`report_html` takes one.
    figures : sequence of mappings of str to bytes, optional
        Each record's figures (None or an empty mapping: none drawn); none by default.
    record_names, record_sha256s : sequences of str, optional
        Each record's file name and the SHA-256 of its JSON text; none by default.

    Returns
    -------
    list of str
        One HTML document per record, the text :func:`report_html` writes for it.

    Examples
    --------
    >>> records = [{"electrolyte": "HCl", "series": name} for name in ("A", "B")]
    >>> [page.count("series &#x27;") for page in report_htmls(records)]
    [2, 2]
    """
    count = len(records)
    results = [_results(record) for record in records]
    points = _points_of_many(records)
    published = _published_of_many(records)
    derived = _derived_of_many(records)
    return [_page(records[i], None if figures is None else figures[i],
                  None if record_names is None else record_names[i],
                  None if record_sha256s is None else record_sha256s[i],
                  (results[i], points[i], published[i], derived[i])) for i in range(count)]


def _page(record: Mapping[str, Any], figures: Mapping[str, bytes] | None,
          record_name: str | None, record_sha256: str | None, tables: tuple[str, str, str, str]
          ) -> str:
    """One page, its result and its tables of readings, published values and derived
    properties written already (``tables``, in that order)."""
    results, points, published, derived = tables
    inputs = record.get("inputs") or [record.get("input") or {}]
    names = ", ".join(_file_name(i.get("file", "")) for i in inputs if i.get("file"))
    kind = "temperature study" if record.get("temperature_study") else "reduction"
    series = record.get("series")
    title = f"activolt {kind} of {names or 'a run'}" + (f", series '{series}'" if series else "")
    body = "\n".join(part for part in (
        f"<header><h1>{_text(title)}</h1></header>",
        _identification(record, record_name, record_sha256),
        _conditions(record),
        results,
        _study(record),
        _figures(figures),
        points,
        published,
        derived,
        _budget(record),
        _comparison(record),
        _monte_carlo(record),
        _remarks(record),
        _safety(record),
        "<footer><p>" + _text(
            f"Written by activolt {(record.get('software') or {}).get('version', '')} from the "
            "record named above; every number is the record's, rounded so that the uncertainty "
            "keeps two significant digits.") + "</p></footer>",
    ) if part)
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<meta http-equiv=\"Content-Security-Policy\" content=\"{CONTENT_SECURITY_POLICY}\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>{_text(title)}</title>\n<style>{_STYLE}</style>\n</head>\n<body>\n{body}\n"
            "</body>\n</html>\n")
