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
from collections.abc import Mapping, Sequence
from typing import Any

from .certificate import text
from .numbers import decimals_for, format_compact, format_with_uncertainty

__all__ = ["FIGURE_CAPTIONS", "report_html"]

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


def _points(record: Mapping[str, Any]) -> str:
    points = list(record.get("points") or [])
    if not points:
        return ""
    electrodes = any(p.get("electrode") for p in points)
    isotherms = any(p.get("isotherm_temperature_K") is not None for p in points)
    header = ["line", "m / (mol/kg)", *(["isotherm / °C"] if isotherms else []),
              *(["electrode"] if electrodes else []), "E / mV", "residual / mV", "γ± ± u (k = 1)",
              "remark"]
    q_molality, q_setpoint, q_emf, q_residual, q_gamma = (_quantity(q) for q in (
        "molality_mol_kg", "isotherm_temperature_K", "emf_V", "residual_V", "gamma_pm"))
    rows = []
    for p in points:
        get = p.get
        used = get("used_in_fit", True)
        if used is True and not isotherms and not get("flag"):
            row = _plain_point(p, q_molality, q_emf, q_residual, q_gamma, electrodes)
            if row is not None:
                rows.append(row)
                continue
        emf = _number_value(get("emf_V"))
        cells = [f'<tr{"" if used else " class=out"}><td>{_text(get("line", ""))}</td>',
                 _rounded_cell(f"{p['molality_mol_kg']:.6g}", get("molality_mol_kg"),
                               q_molality)]
        if isotherms:
            setpoint = _number_value(get("isotherm_temperature_K"))
            cells.append(_rounded_cell(
                _NOT_GIVEN if setpoint is None else f"{setpoint - 273.15:.2f}", setpoint,
                q_setpoint))
        if electrodes:
            cells.append(f"<td>{_text(get('electrode') or '')}</td>")
        cells.append(_rounded_cell(_NOT_GIVEN if emf is None else f"{emf * 1e3:.3f}", emf,
                                   q_emf))
        if used:
            residual = _number_value(get("residual_V"))
            gamma = get("gamma_pm")
            cells.append(_rounded_cell(
                _NOT_GIVEN if residual is None else f"{residual * 1e3:+.4f}", residual,
                q_residual))
            cells.append(_rounded_cell(_with_u(gamma, get("u_gamma_pm")), gamma, q_gamma))
        else:
            cells.append("<td></td><td></td>")
        flag = get("flag")
        remark = (f"out of the fit — {flag}" if not used and flag
                  else f"stands out — {flag}" if flag else "")
        cells.append(f"<td>{_text(remark)}</td></tr>")
        rows.append("".join(cells))
    return ('<section id="points"><h2>Readings and γ±</h2>'
            + _table(header, rows, "points-table", long=True)
            + (f"<p>{_text(record['gamma_uncertainty_method'])}</p>"
               if record.get("gamma_uncertainty_method") else "")
            + "</section>")


def _finite_floats(*values: Any) -> bool:
    """Whether every value is a finite Python float (x − x is 0 only for finite x)."""
    for value in values:
        if type(value) is not float or value - value != 0.0:
            return False
    return True


def _plain_point(p: Mapping[str, Any], q_molality: str, q_emf: str, q_residual: str,
                 q_gamma: str, electrodes: bool) -> str | None:
    """The row of a reading in the fit and not flagged whose line is a whole number and whose
    numbers are finite floats (a row of :func:`_points`, written directly); None otherwise."""
    get = p.get
    line, m, emf = get("line", ""), get("molality_mol_kg"), get("emf_V")
    residual, gamma, u_gamma = get("residual_V"), get("gamma_pm"), get("u_gamma_pm")
    if not (type(line) is int and _finite_floats(m, emf, residual, gamma, u_gamma)):
        return None
    electrode = f"<td>{_text(get('electrode') or '')}</td>" if electrodes else ""
    return (f"<tr><td>{line}</td>{_shared_cell(m, '.6g', q_molality)}{electrode}"
            f'<td class="num" data-value="{emf!r}"{q_emf}>{emf * 1e3:.3f}</td>'
            f'<td class="num" data-value="{residual!r}"{q_residual}>{residual * 1e3:+.4f}</td>'
            f'<td class="num" data-value="{gamma!r}"{q_gamma}>'
            f"{format_with_uncertainty(gamma, u_gamma)}</td><td></td></tr>")


def _shared_cell(value: float, spec: str, quantity_attribute: str = "", suffix: str = ""
                 ) -> str:
    """The cell of a finite float that the pages of a batch often share (a molality, shown
    in three tables of a page, and the published mean at it): its value in ``data-value``
    (with the ``data-quantity`` attribute given), shown with the format ``spec``, then
    ``suffix``; remembered for non-zero values. Zeros are written each time (0.0 and -0.0 are
    equal as keys, not as text)."""
    if value:
        return _remembered_cell(value, spec, quantity_attribute, suffix)
    return (f'<td class="num" data-value="{value!r}"{quantity_attribute}>'
            f"{value:{spec}}{suffix}</td>")


@functools.lru_cache(maxsize=2048)
def _remembered_cell(value: float, spec: str, quantity_attribute: str, suffix: str) -> str:
    return (f'<td class="num" data-value="{value!r}"{quantity_attribute}>'
            f"{value:{spec}}{suffix}</td>")


def _published(record: Mapping[str, Any]) -> str:
    rows_in = list(record.get("published_comparison") or [])
    if not rows_in:
        return ""
    q_mean, q_difference, q_ratio = (_quantity(q) for q in (
        "gamma_pm_published", "difference", "difference_over_u"))
    sources: dict[str, str] = {}
    rows = []
    for r in rows_in:
        marks = []
        for entry in r.get("published_values") or []:
            source = str(entry.get("source"))
            letter = sources.get(source) or sources.setdefault(source,
                                                               chr(ord("a") + len(sources)))
            value = entry.get("gamma_pm")
            shown = (f"{value:.4f}" if type(value) is float and value - value == 0.0
                     else _NOT_GIVEN if (value := _number_value(value)) is None
                     else f"{value:.4f}")
            marks.append(f"({shown}){letter}" if entry.get("interpolated") else
                         f"{shown}{letter}")
        m, mean = r.get("molality_mol_kg"), r.get("gamma_pm_published")
        difference, ratio = r.get("difference"), r.get("difference_over_u")
        if _finite_floats(m, mean, difference, ratio):
            rows.append(
                f"<tr>{_shared_cell(m, '.6g')}<td>{_shown(' '.join(marks))}</td>"
                + _shared_cell(mean, ".4f", q_mean, "i" if r.get("interpolated") else "")
                + f'<td class="num" data-value="{difference!r}"{q_difference}>'
                f"{difference:+.5f}</td>"
                f'<td class="num" data-value="{ratio!r}"{q_ratio}>{ratio:+.1f}</td></tr>')
            continue
        mean = _number_value(mean)
        difference = _number_value(difference)
        ratio = _number_value(ratio)
        rows.append(
            f'<tr><td class="num"{_value_attribute(r.get("molality_mol_kg"))}>'
            f"{r['molality_mol_kg']:.6g}</td><td>{_shown(' '.join(marks))}</td>"
            + _rounded_cell(_NOT_GIVEN if mean is None else f"{mean:.4f}"
                            + ("i" if r.get("interpolated") else ""), mean, q_mean)
            + _rounded_cell(_NOT_GIVEN if difference is None else f"{difference:+.5f}",
                            difference, q_difference)
            + _rounded_cell(_NOT_GIVEN if ratio is None else f"{ratio:+.1f}", ratio, q_ratio)
            + "</tr>")
    legend = "".join(f"<li>{letter}: {_text(source)}</li>" for source, letter in sources.items())
    return ('<section id="published"><h2>γ± against published values</h2>'
            + _table(["m / (mol/kg)", "published (interpolated in brackets)", "mean",
                      "difference", "difference / u"], rows, "published-table")
            + f"<ul>{legend}</ul>"
            + (f"<p>{_text(record['published_comparison_method'])}</p>"
               if record.get("published_comparison_method") else "") + "</section>")


def _derived(record: Mapping[str, Any]) -> str:
    derived = record.get("derived_properties") or {}
    points = list(derived.get("points") or [])
    if not points:
        return ""
    q_phi, q_a_w, q_excess = (_quantity(q) for q in (
        "osmotic_coefficient", "water_activity", "excess_gibbs_rt_mol_kg"))
    rows = []
    for p in points:
        get = p.get
        m, phi, u_phi = (get("molality_mol_kg"), get("osmotic_coefficient"),
                         get("u_osmotic_coefficient"))
        a_w, u_a_w = get("water_activity"), get("u_water_activity")
        excess, u_excess = get("excess_gibbs_rt_mol_kg"), get("u_excess_gibbs_rt_mol_kg")
        if (_finite_floats(m, phi, u_phi, a_w, u_a_w, excess, u_excess)
                and (1.0 - a_w) - (1.0 - a_w) == 0.0):
            rows.append(
                f'<tr>{_shared_cell(m, ".6g")}<td class="num" data-value="{phi!r}"{q_phi}>'
                f"{format_with_uncertainty(phi, u_phi)}</td>"
                f'<td class="num" data-value="{a_w!r}"{q_a_w}>'
                f"{format_compact(1.0 - a_w, u_a_w)}</td>"
                f'<td class="num" data-value="{excess!r}"{q_excess}>'
                f"{format_compact(excess, u_excess)}</td></tr>")
            continue
        a_w = _number_value(get("water_activity"))
        phi, excess = get("osmotic_coefficient"), get("excess_gibbs_rt_mol_kg")
        rows.append(
            f'<tr><td class="num"{_value_attribute(get("molality_mol_kg"))}>'
            f"{p['molality_mol_kg']:.6g}</td>"
            + _rounded_cell(_with_u(phi, get("u_osmotic_coefficient")), phi, q_phi)
            + _rounded_cell(_NOT_GIVEN if a_w is None
                            else _compact(1.0 - a_w, get("u_water_activity")), a_w, q_a_w)
            + _rounded_cell(_compact(excess, get("u_excess_gibbs_rt_mol_kg")), excess,
                            q_excess) + "</tr>")
    return ('<section id="derived"><h2>Derived from the fitted model (k = 1)</h2>'
            + _table(["m / (mol/kg)", "φ", "1 − a_w", "G^E/(RT) / (mol/kg)"], rows,
                     "derived-table")
            + (f"<p>{_text(derived['method'])}</p>" if derived.get("method") else "")
            + "</section>")


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
    inputs = record.get("inputs") or [record.get("input") or {}]
    names = ", ".join(_file_name(i.get("file", "")) for i in inputs if i.get("file"))
    kind = "temperature study" if record.get("temperature_study") else "reduction"
    series = record.get("series")
    title = f"activolt {kind} of {names or 'a run'}" + (f", series '{series}'" if series else "")
    body = "\n".join(part for part in (
        f"<header><h1>{_text(title)}</h1></header>",
        _identification(record, record_name, record_sha256),
        _conditions(record),
        _results(record),
        _study(record),
        _figures(figures),
        _points(record),
        _published(record),
        _derived(record),
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
