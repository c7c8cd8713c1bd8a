"""The outputs of a primary pH determination: the plain-text report, the figure of the acidity
function against the chloride molality, and a self-contained HTML page written from the record.

Text report sections, in order: the buffer and the E° source, each isotherm (readings, the
straight line, the Bates–Guggenheim term, pH ± U with k, the budget, the comparison with the
catalogue), pH(T) when there are several temperatures, the convention, notes and warnings; the
safety cautions last. Values carry the digits their uncertainty supports
(:mod:`activolt.report.numbers`).
"""

from __future__ import annotations

import base64
import io
import math
from collections.abc import Mapping, Sequence
from typing import Any

from ..procedures.ph import PhIsotherm, PhResult
from .cautions import cautions_for
from .certificate import text as html_text
from .numbers import decimals_for, format_with_uncertainty

__all__ = ["PH_SECTION_TITLES", "format_ph_report", "ph_report_html", "render_ph_figure"]

#: The section headings of the text report, in order.
PH_SECTION_TITLES = ("buffer", "standard potentials", "isotherm", "pH(T)", "convention")
_ZERO_C = 273.15


def _ph(value: float, expanded: float) -> str:
    """pH ± U with U to two significant digits (at least three decimals)."""
    places = max(3, decimals_for(expanded))
    return f"{value:.{places}f} ± {expanded:.{places}f}"


def _table(header: Sequence[str], rows: Sequence[Sequence[str]], indent: str = "    "
           ) -> list[str]:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    return [(indent + "   ".join(c.ljust(w) for c, w in zip(row, widths, strict=True))).rstrip()
            for row in [header, *rows]]


def _dof(value: float) -> str:
    return "∞" if not math.isfinite(value) else f"{value:.0f}"


def _isotherm_lines(iso: PhIsotherm) -> list[str]:
    lines = [f"isotherm {iso.temperature_K - _ZERO_C:.2f} °C: {len(iso.lines)} readings at "
             f"{len(set(iso.chloride_molality_mol_kg.tolist()))} chloride molalities"]
    rows = []
    for line, electrode, m, p in zip(iso.lines, iso.electrodes, iso.chloride_molality_mol_kg,
                                     iso.acidity_function, strict=True):
        rows.append([str(line), electrode or "—", f"{m:.5g}", f"{p:.5f}"])
    lines += _table(["line", "electrode", "m_Cl / (mol/kg)", "p(a_H γ_Cl)"], rows)
    u_a, u_b = math.sqrt(iso.covariance[0, 0]), math.sqrt(iso.covariance[1, 1])
    lines += [
        f"  straight line: p(a_H γ_Cl) = {format_with_uncertainty(iso.intercept, u_a)} + "
        f"({format_with_uncertainty(iso.slope, u_b)}) kg/mol × m_Cl",
        f"    χ² = {iso.chi2:.3g}, ν = {iso.dof}, covariance "
        + ("scaled by χ²/ν" if iso.covariance_scaled else "from the stated u(EMF)"),
        f"  Bates–Guggenheim: log10 γ_Cl° = {iso.log10_gamma_chloride:+.5f} "
        f"(A = {iso.debye_hueckel_a:.4f} kg^½ mol^-½)",
        f"  pH = {_ph(iso.ph, iso.expanded_uncertainty)} (U, k = {iso.coverage_factor:.2f}, "
        f"ν_eff = {_dof(iso.effective_dof)}; u_c = {iso.standard_uncertainty:.5f})",
        "  budget (standard uncertainty of pH):",
    ]
    rows = [[b.component, f"{b.u_pH:.5f}" if b.counted else "(stated)", _dof(b.dof), b.method]
            for b in iso.budget]
    lines += _table(["component", "u(pH)", "ν", "how"], rows)
    if iso.catalogue_ph is not None:
        d = iso.difference_to_catalogue or 0.0
        lines.append(f"  catalogue: pH {iso.catalogue_ph:g} ({iso.catalogue_source}); "
                     f"difference {d:+.4f}, {abs(d) / iso.expanded_uncertainty:.2f} U")
    lines += [f"  note: {note}" for note in iso.notes]
    return lines


def format_ph_report(result: PhResult) -> str:
    """The plain-text report of a primary pH determination."""
    run = result.run
    info = dict(run.metadata.info) if run is not None else {}
    buffer = result.buffer
    lines = ["activolt — primary pH by the Harned cell (IUPAC Recommendations 2002)", ""]
    if run is not None:
        lines.append(f"table: {run.path.name}")
    for key in ("lab", "operator", "date", "description"):
        if key in info:
            lines.append(f"{key}: {info[key]}")
    lines += ["", "buffer",
              f"  {buffer.title or buffer.name or 'not named'}"
              + (f" (catalogue '{buffer.name}')" if buffer.name else ""),
              f"  I = {buffer.ionic_strength_mol_kg:g} mol/kg from {buffer.ionic_strength_source}",
              "", "standard potentials", f"  source: {result.standard_potential_source}"]
    used = sorted({e for iso in result.isotherms for e in iso.electrodes})
    for s in result.standard_potentials:
        if s.electrode is not None and s.electrode not in used:
            continue
        where = ("any temperature" if s.temperature_K is None
                 else f"{s.temperature_K - _ZERO_C:.2f} °C")
        lines.append(f"  {s.electrode or 'every electrode'}: E° = "
                     f"{format_with_uncertainty(s.value_V * 1e3, s.u_V * 1e3, 'mV')} at {where}, "
                     f"p° = {s.standard_pressure_Pa / 1e3:g} kPa"
                     + (" — failed its acceptance" if s.accepted is False else ""))
    for iso in result.isotherms:
        lines += ["", *_isotherm_lines(iso)]
    fit = result.temperature_fit
    if fit is not None:
        lines += ["", f"pH(T): {fit.form} by weighted least squares over "
                  f"{len(result.isotherms)} isotherms (χ² = {fit.chi2:.3g}, ν = {fit.dof}"
                  + (", covariance scaled by χ²/ν)" if fit.covariance_scaled else ")")]
        for iso in result.isotherms:
            value, u = fit.evaluate(iso.temperature_K)
            lines.append(f"  {iso.temperature_K - _ZERO_C:6.2f} °C   measured "
                         f"{iso.ph:.4f}   smoothed {format_with_uncertainty(value[0], u[0])}")
    lines += ["", "convention", f"  {result.convention}"]
    if result.warnings:
        lines += ["", "warnings", *[f"  {w}" for w in result.warnings]]
    cautions = (cautions_for(run.metadata.electrolyte, run.metadata.cell)
                if run is not None else [])
    if cautions:
        lines += ["", "safety", *[f"  {c}" for c in cautions]]
    return "\n".join(lines) + "\n"


def render_ph_figure(result: PhResult, dpi: int = 110) -> bytes:
    """PNG: p(a_H γ_Cl) against m_Cl for each isotherm, the straight line and its intercept
    (p(a_H γ_Cl)° ± U of the intercept) at m_Cl = 0."""
    import numpy as np
    from matplotlib.figure import Figure

    figure = Figure(figsize=(6.4, 4.2), layout="constrained")
    ax = figure.subplots()
    for iso in result.isotherms:
        label = f"{iso.temperature_K - _ZERO_C:.1f} °C"
        points = ax.plot(iso.chloride_molality_mol_kg, iso.acidity_function, "o", ms=4,
                         label=label)[0]
        x = np.linspace(0.0, float(iso.chloride_molality_mol_kg.max()) * 1.05, 50)
        ax.plot(x, iso.intercept + iso.slope * x, "-", color=points.get_color(), lw=1)
        u = math.sqrt(iso.covariance[0, 0])
        ax.errorbar([0.0], [iso.intercept], yerr=[2.0 * u], fmt="s", ms=5,
                    color=points.get_color(), capsize=3)
    ax.set_xlabel("m(Cl⁻) / (mol kg⁻¹)")
    ax.set_ylabel("p(a_H γ_Cl)")
    ax.set_title("Acidity function and its extrapolation to m(Cl⁻) = 0 (intercept ± 2u)",
                 fontsize=9)
    ax.set_xlim(left=-0.0005)
    if len(result.isotherms) > 1:
        ax.legend(fontsize=8)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi, metadata={"Software": "activolt"})
    return buffer.getvalue()


def _cell(value: Any, shown: str) -> str:
    data = "" if value is None else f' data-value="{float(value)!r}"'
    return f'<td class="num"{data}>{html_text(shown)}</td>'


def ph_report_html(record: Mapping[str, Any], figure_png: bytes | None = None,
                   record_name: str | None = None) -> str:
    """A self-contained HTML page of a pH record (``record_kind = "ph"``), built from the record
    alone: every number cell carries the record's value in ``data-value``; every text from the
    user or the record is escaped; no script, nothing fetched."""
    ph = record["ph"]
    places = max(3, decimals_for(ph["expanded_uncertainty"]))
    info = record.get("run_info") or {}
    parts = ['<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">',
             '<meta http-equiv="Content-Security-Policy" content="default-src \'none\'; '
             'img-src data:; style-src \'unsafe-inline\'">',
             "<title>Primary pH — activolt</title>",
             "<style>body{font-family:sans-serif;max-width:190mm;margin:auto;font-size:10.5pt}"
             "table{border-collapse:collapse}td,th{border:1px solid #aaa;padding:1px 5px}"
             "td.num{text-align:right}</style></head><body>",
             "<h1>Primary pH by the Harned cell</h1>", "<dl>"]
    for key in ("lab", "operator", "date", "description"):
        if key in info:
            parts.append(f"<dt>{html_text(key)}</dt><dd>{html_text(str(info[key]))}</dd>")
    if record_name:
        parts.append(f"<dt>record</dt><dd>{html_text(record_name)}</dd>")
    parts.append("</dl>")
    buffer = record.get("buffer") or {}
    parts.append(f"<p>Buffer: {html_text(str(buffer.get('title') or buffer.get('buffer')))}, "
                 f"I = {html_text(str(buffer.get('ionic_strength_mol_kg')))} mol/kg "
                 f"({html_text(str(buffer.get('ionic_strength_source')))}).</p>")
    parts += ["<h2>Result</h2>", "<table><tr><th>t / °C</th><th>pH</th><th>U</th><th>k</th>"
              "<th>u_c</th><th>p(a_H γ_Cl)°</th><th>log10 γ_Cl°</th><th>catalogue</th></tr>"]
    for iso in record["isotherms"]:
        p = iso["ph"]
        parts.append(
            "<tr>" + _cell(iso["temperature_K"], f"{iso['temperature_K'] - _ZERO_C:.2f}")
            + _cell(p["value"], f"{p['value']:.{places}f}")
            + _cell(p["expanded_uncertainty"], f"{p['expanded_uncertainty']:.{places}f}")
            + _cell(p["coverage_factor"], f"{p['coverage_factor']:.2f}")
            + _cell(p["uncertainty"], f"{p['uncertainty']:.5f}")
            + _cell(iso["intercept"]["value"], f"{iso['intercept']['value']:.5f}")
            + _cell(iso["log10_gamma_chloride"], f"{iso['log10_gamma_chloride']:+.5f}")
            + _cell(iso.get("catalogue_ph"), "—" if iso.get("catalogue_ph") is None
                    else f"{iso['catalogue_ph']:g}") + "</tr>")
    parts.append("</table>")
    parts += ["<h2>Budget</h2>", "<table><tr><th>component</th><th>u(pH)</th><th>ν</th>"
              "<th>how</th></tr>"]
    for line in record["budget"]:
        shown = f"{line['u_pH']:.5f}" if line["counted"] else "(stated)"
        parts.append(f"<tr><td>{html_text(line['component'])}</td>"
                     + _cell(line["u_pH"], shown)
                     + f"<td>{_dof(math.inf if line['dof'] is None else line['dof'])}</td>"
                     + f"<td>{html_text(line['method'])}</td></tr>")
    parts.append("</table>")
    if figure_png is not None:
        data = base64.b64encode(figure_png).decode("ascii")
        parts.append(f'<figure><img alt="acidity function against chloride molality" '
                     f'src="data:image/png;base64,{data}" style="max-width:100%">'
                     "<figcaption>p(a_H γ_Cl) against m(Cl⁻), the straight line and its "
                     "intercept ± 2u.</figcaption></figure>")
    parts.append(f"<h2>Convention</h2><p>{html_text(str(record.get('convention')))}</p>")
    for title, key in (("Warnings", "warnings"), ("Safety", "cautions")):
        items = record.get(key) or []
        if items:
            parts.append(f"<h2>{title}</h2><ul>"
                         + "".join(f"<li>{html_text(str(i))}</li>" for i in items) + "</ul>")
    parts.append("</body></html>\n")
    return "\n".join(parts)
