"""The plain-text report of a temperature study, as printed by ``activolt reduce`` when the
readings sit at several temperatures.

Sections, in order: the study (cell, isotherms, θ), the isotherms (T, n, model, E° ± u), the
E°(T) fits (both forms with their criteria, the choice and why), the thermodynamics at θ, the
quantities at each isotherm, the global-fit cross-check, γ± at round molalities against T, notes
and warnings; the safety cautions last. Every value is printed with the digits its uncertainty
supports (:func:`activolt.report.numbers.format_with_uncertainty`).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from ..procedures.temperature import (
    StandardPotentialFit,
    TemperatureForm,
    TemperatureStudy,
    ThermodynamicValues,
)
from ..safe_text import escape_controls
from .cautions import cautions_for
from .numbers import format_compact, format_with_uncertainty

__all__ = ["SECTION_TITLES", "format_temperature_report"]

#: The section headings of the report, in order (the tests look for them).
SECTION_TITLES = ("isotherms", "E°(T) fits", "thermodynamics at θ", "at each isotherm",
                  "global fit (cross-check)", "γ± at round molalities")

#: Quantities of the report: name in the library, symbol, unit shown, factor from SI.
_QUANTITIES = (("standard_potential_V", "E°", "mV", 1e3),
               ("delta_G_J_mol", "ΔG°", "kJ/mol", 1e-3),
               ("delta_H_J_mol", "ΔH°", "kJ/mol", 1e-3),
               ("delta_S_J_K_mol", "ΔS°", "J/(K mol)", 1.0),
               ("delta_Cp_J_K_mol", "ΔCp°", "J/(K mol)", 1.0),
               ("log10_K", "log10 K", "", 1.0))
_ZERO_C = 273.15


def _value(value: float, uncertainty: float, unit: str = "") -> str:
    """``value ± u unit``; ``—`` for a quantity the form cannot determine (NaN)."""
    if not math.isfinite(value):
        return "— (not determined)"
    return format_with_uncertainty(value, uncertainty, unit)


def _table(header: Sequence[str], rows: Sequence[Sequence[str]], indent: str = "  ") -> list[str]:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    return [(indent + "   ".join(c.ljust(w) for c, w in zip(row, widths, strict=True))).rstrip()
            for row in [header, *rows]]


def _form_name(form: TemperatureForm) -> str:
    return ("constant ΔCp°" if form.form == "constant_heat_capacity"
            else f"polynomial, degree {form.degree}")


def _fit_lines(fit: StandardPotentialFit) -> list[str]:
    """Both forms with their criteria, the F-tests, the choice and why, and the chosen
    coefficients with their standard uncertainties."""
    forms = [*fit.polynomials, *([fit.constant_heat_capacity]
                                 if fit.constant_heat_capacity is not None else [])]
    chi2_unit = "" if fit.stated_uncertainty else " V²"
    rows = []
    for form in forms:
        chosen = form is fit.form
        rows.append([_form_name(form) + ("  ← chosen" if chosen else ""),
                     str(len(form.coefficient_names)), f"{form.chi2:.4g}{chi2_unit}",
                     str(form.dof),
                     f"{form.chi2_p_value:.2g}" if math.isfinite(form.chi2_p_value) else "—",
                     f"{form.aic:.2f}", f"{form.bic:.2f}",
                     "yes" if form.covariance_scaled else "no"])
    lines = ["", f"  E°(T) fits (generalised least squares over the isotherms, θ = "
                 f"{fit.reference_temperature_K - _ZERO_C:g} °C)"]
    lines += _table(["form", "P", "χ²", "ν", "p(χ²)", "AIC", "BIC", "scaled"], rows)
    for test in fit.f_tests:
        lines.append(f"  F-test, degree {test.from_degree} → {test.to_degree}: "
                     f"F = {test.f_value:.3g}, p = {test.p_value:.2g}")
    lines.append(f"  chosen: {_form_name(fit.form)} — {fit.choice_reason}")
    if fit.f_test_degree != fit.polynomial_degree:
        lines.append(f"  (the sequential F-test would choose degree {fit.f_test_degree})")
    lines.append(f"  {fit.form.equation}")
    form = fit.form
    u = [math.sqrt(max(float(form.covariance[i, i]), 0.0))
         for i in range(len(form.coefficient_names))]
    for name, value, u_value in zip(form.coefficient_names, form.coefficients, u, strict=True):
        lines.append(f"    {name} = {format_compact(float(value), u_value)}")
    if form.covariance_scaled:
        lines.append(f"  covariance scaled by χ²/ν (Birge ratio {form.birge_ratio:.3g}); 95 % "
                     f"intervals with k = {form.coverage_factor:.2f}")
    return lines


def _thermodynamic_lines(values: ThermodynamicValues) -> list[str]:
    """E°, ΔG°, ΔH°, ΔS°, ΔCp° and log10 K at one temperature with u and U95."""
    k = values.coverage_factor
    rows = []
    for name, symbol, unit, factor in _QUANTITIES:
        estimate = values.estimate(name)
        shown = _value(estimate.value * factor, estimate.uncertainty * factor)
        expanded = (f"± {k * estimate.uncertainty * factor:.2g}"
                    if math.isfinite(estimate.value) else "")
        rows.append([symbol, shown, unit, expanded])
    lines = _table(["", "value ± u (k = 1)", "unit", f"95 % (k = {k:.2f})"], rows)
    correlation = values.correlation("delta_H_J_mol", "delta_S_J_K_mol")
    if math.isfinite(correlation):
        lines.append(f"  correlation of ΔH° and ΔS°: {correlation:+.3f} (use the record's "
                     "covariance to combine them)")
    return lines


def _isotherm_lines(study: TemperatureStudy) -> list[str]:
    rows = []
    for iso in study.isotherms:
        e0 = iso.standard_potential_V
        rows.append([f"{iso.setpoint_K - _ZERO_C:.2f}", str(iso.n_points), iso.model,
                     _value(e0.value * 1e3, e0.uncertainty * 1e3),
                     f"{iso.max_offset_K:.2g}", f"{iso.max_correction_V * 1e3:.2g}",
                     iso.run.path.name])
    lines = ["", "  isotherms (E° at each setpoint, k = 1)"]
    lines += _table(["t / °C", "n", "model", "E° / mV", "max |T − Ts| / K",
                     "max correction / mV", "file"], rows)
    for iso in study.isotherms:
        parameters = "; ".join(
            f"{p.symbol} = {format_with_uncertainty(p.value, p.uncertainty, p.unit)}"
            + (" (held)" if p.fixed and math.isfinite(p.uncertainty) else "")
            for p in iso.reduction.parameters)
        stats = iso.reduction.statistics
        lines.append(f"  {iso.setpoint_K - _ZERO_C:.2f} °C: {parameters}; reduced χ² = "
                     f"{stats.reduced_chi2:.3g}, ν = {stats.dof}")
        points = iso.reduction.points
        for row in points[points["flag"].map(lambda f: isinstance(f, str))].to_dict("records"):
            lines.append(f"    out of the fit: line {int(row['line'])} (m = "
                         f"{row['molality_mol_kg']:.6g} mol/kg) — {row['flag']}")
    return lines


def _at_isotherm_lines(fit: StandardPotentialFit) -> list[str]:
    rows = []
    for values in fit.at_temperatures:
        cells = [f"{values.temperature_K - _ZERO_C:.2f}"]
        for name, _, _, factor in _QUANTITIES:
            estimate = values.estimate(name)
            cells.append(_value(estimate.value * factor, estimate.uncertainty * factor))
        rows.append(cells)
    header = ["t / °C", *[f"{s} / {u}" if u else s for _, s, u, _ in _QUANTITIES]]
    return ["", "  at each isotherm, from the chosen E°(T) (k = 1)", *_table(header, rows)]


def _global_lines(study: TemperatureStudy) -> list[str]:
    lines = ["", "  global fit (cross-check): every reading at once"]
    cross = study.global_fit
    if cross is None:
        lines.append("  not available (see the notes)")
        return lines
    lines.append(f"  {cross.n_points} readings, E°(T) {_form_name(cross.form)}, χ² = "
                 f"{cross.form.chi2:.4g}, ν = {cross.form.dof}"
                 + (", covariance scaled" if cross.form.covariance_scaled else ""))
    two_stage = study.reference
    rows = []
    for name, symbol, unit, factor in _QUANTITIES[:1] + _QUANTITIES[2:4]:
        mine, theirs = cross.reference.estimate(name), two_stage.estimate(name)
        difference = cross.differences.get(name, mine.value - theirs.value)
        u = theirs.uncertainty
        rows.append([symbol, _value(mine.value * factor, mine.uncertainty * factor, unit),
                     _value(theirs.value * factor, theirs.uncertainty * factor, unit),
                     f"{difference * factor:+.3g} {unit}"
                     + (f" ({difference / u:+.2g} u)" if math.isfinite(u) and u > 0 else "")])
    lines += _table(["", "global", "two-stage", "global − two-stage"], rows)
    for name, estimate in cross.parameters.items():
        lines.append(f"  {name} = {format_with_uncertainty(estimate.value, estimate.uncertainty)}")
    for name, how in cross.held.items():
        lines.append(f"  {name}: {how}")
    lines += [f"  note: {n}" for n in cross.notes]
    return lines


def _gamma_lines(study: TemperatureStudy) -> list[str]:
    table = study.gamma_table
    lines = ["", "  γ± at round molalities against T (each isotherm's fitted model, k = 1)"]
    if table.empty:
        lines.append("  no round molality within the isotherms' ranges")
        return lines
    temperatures = sorted(dict.fromkeys(table["temperature_C"]))
    molalities = sorted(dict.fromkeys(table["molality_mol_kg"]))
    rows = []
    for m in molalities:
        cells = [f"{m:g}"]
        for t in temperatures:
            hit = table[(table["molality_mol_kg"] == m) & (table["temperature_C"] == t)]
            cells.append("" if hit.empty else format_with_uncertainty(
                float(hit["gamma_pm"].iloc[0]), float(hit["u_gamma_pm"].iloc[0])))
        rows.append(cells)
    lines += _table(["m / (mol/kg)", *[f"{t:.2f} °C" for t in temperatures]], rows)
    return lines


def _headline(values: ThermodynamicValues) -> str:
    """E°, ΔH° and ΔS° on one line."""
    shown = []
    for name, symbol, unit, factor in (_QUANTITIES[0], _QUANTITIES[2], _QUANTITIES[3]):
        estimate = values.estimate(name)
        shown.append(f"{symbol} = "
                     + _value(estimate.value * factor, estimate.uncertainty * factor, unit))
    return ", ".join(shown) + " (k = 1)"


def format_temperature_report(study: TemperatureStudy) -> str:
    """The report of a temperature study; the safety cautions last.

    Parameters
    ----------
    study : TemperatureStudy
        From :func:`activolt.procedures.temperature.study_temperatures`.

    Returns
    -------
    str
        The report, user text escaped for the terminal, ending with a newline.
    """
    fit = study.standard_potential_fit
    first = study.isotherms[0]
    meta = first.run.metadata
    files = list(dict.fromkeys(iso.run.path.name for iso in study.isotherms))
    theta_C = study.reference_temperature_K - _ZERO_C
    low = min(iso.setpoint_K for iso in study.isotherms) - _ZERO_C
    high = max(iso.setpoint_K for iso in study.isotherms) - _ZERO_C
    lines = [
        "activolt temperature study of " + ", ".join(files),
        *([f"  cell: {study.cell}"] if study.cell else []),
        f"  electrolyte {study.electrolyte}, n = {study.electrons}, {len(study.isotherms)} "
        f"isotherms from {low:.2f} to {high:.2f} °C, θ = {theta_C:g} °C, basis p° = "
        f"{study.standard_pressure_Pa / 1e3:g} kPa",
        "",
        "  at θ: " + _headline(study.reference),
    ]
    lines += _isotherm_lines(study)
    lines += _fit_lines(fit)
    lines += ["", f"  thermodynamics at θ = {theta_C:g} °C of the cell reaction as written "
                  + (f"({study.reaction}) " if study.reaction else "")
                  + f"(n = {study.electrons}; ΔG° = −nFE°, ΔS° = nF dE°/dT, ΔH° = ΔG° + TΔS°, "
                  "ΔCp° = nFT d²E°/dT²)"]
    if not low - 0.5 <= theta_C <= high + 0.5:
        lines.append(f"  θ lies outside the isotherms ({low:.2f}–{high:.2f} °C): these values "
                     "are extrapolated")
    lines += _thermodynamic_lines(study.reference)
    lines += _at_isotherm_lines(fit)
    lines += _global_lines(study)
    lines += _gamma_lines(study)
    if study.notes:
        lines += [""] + [f"  note: {n}" for n in study.notes]
    if study.warnings:
        lines += [""] + [f"  warning: {w}" for w in dict.fromkeys(study.warnings)]
    text = "\n".join(lines) + "\n"
    cautions = cautions_for(meta.electrolyte, study.cell)
    if cautions:
        text += "\n" + "\n".join(["  safety:", *[f"  - {c}" for c in cautions]]) + "\n"
    return escape_controls(text, keep="\n")
