"""The plain-text report of a reduction, as printed by ``activolt reduce``."""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd

from ..procedures.dilution import Reduction
from ..procedures.model_choice import ModelComparison
from ..procedures.montecarlo import MonteCarloResult
from ..procedures.properties import DerivedResults, derive_results
from ..procedures.published import plain_values, point_lists, point_names, point_values
from ..safe_text import escape_controls
from .cautions import cautions_for
from .comparison import aligned_lines, comparison_lines
from .model_table import format_model_comparison
from .numbers import decimals_for, format_compact, format_molality, format_with_uncertainty


def _e0_line(reduction: Reduction) -> str:
    e0 = reduction.standard_potential
    stats = reduction.statistics
    u_mV = e0.std_dev * 1e3
    expanded = stats.coverage_factor * u_mV
    basis = reduction.run.metadata.standard_pressure_Pa / 1e3
    return (f"E° = {format_with_uncertainty(e0.nominal_value * 1e3, u_mV, 'mV')} (k = 1); "
            f"95 % interval ± {expanded:.{decimals_for(expanded)}f} mV "
            f"(k = {stats.coverage_factor:.2f}); basis p° = {basis:g} kPa")


def format_report(reduction: Reduction, comparison: ModelComparison | None = None,
                  monte_carlo: MonteCarloResult | None = None,
                  derived: DerivedResults | None = None) -> str:
    """The report: E° ± u, the model, the fit, γ± at each point, derived properties, budgets,
    corrections, notes and warnings; then the model comparison and the Monte Carlo when given;
    the safety cautions last.

    Parameters
    ----------
    reduction : Reduction
        The reduction reported (with ``comparison``, the recommended one).
    comparison : ModelComparison, optional
        From :func:`activolt.procedures.model_choice.compare_models`.
    derived : DerivedResults, optional
        The derived properties and published comparison
        (:func:`activolt.procedures.properties.derive_results`), when the caller already has
        them; worked out here otherwise.
    monte_carlo : MonteCarloResult, optional
        From :func:`activolt.procedures.montecarlo.monte_carlo`.

    Returns
    -------
    str
        The report, user text escaped for the terminal, ending with a newline.
    """
    run, stats, meta = reduction.run, reduction.statistics, reduction.run.metadata
    t_C = reduction.temperature_K - 273.15
    names = point_names(reduction)
    # u(γ±) of each input at each reading, for the budget of γ±
    budget_columns = [c for c in names if c.startswith("u_gamma_pm_") and c != "u_gamma_pm_model"]
    # the columns of the points that the report shows, each read once, as plain values,
    # without building the points table
    points = point_lists(reduction, [name for name in (
        "flag", "electrode", "diagnostic", "molality_mol_kg", "emf_V", "residual_V", "gamma_pm",
        "u_gamma_pm", "line") if name in names] + budget_columns)
    lines = [
        f"activolt reduction of {run.path.name}"
        + (f", series '{series}'" if (series := _series(run.points)) is not None else ""),
        *([f"  cell: {meta.cell}"] if meta.cell else []),
        f"  electrolyte {meta.electrolyte.formula} ({meta.electrolyte.charge_type}), "
        f"n = {meta.electrons}, t = {t_C:.2f} °C, {stats.n_points} readings used"
        + (f" of {len(run.points)}" if len(run.points) != stats.n_points else ""),
        f"  model: {reduction.model.title}",
        "",
        "  " + _e0_line(reduction),
    ]
    other = reduction.standard_potential_other_basis
    if other is not None:
        lines.append(f"  on the {other.pressure_kPa:g} kPa basis: E° = "
                     + format_with_uncertainty(other.standard_potential_V * 1e3,
                                               reduction.standard_potential.std_dev * 1e3, "mV"))
    catalogue = reduction.catalogue
    if catalogue is not None:
        difference = reduction.standard_potential - catalogue.standard_potential_V
        u_diff = (reduction.standard_potential.std_dev**2
                  + catalogue.u_standard_potential_V**2) ** 0.5
        lines.append(
            f"  catalogue E° ({catalogue.couples}, same T and basis): "
            + format_with_uncertainty(catalogue.standard_potential_V * 1e3,
                                      catalogue.u_standard_potential_V * 1e3, "mV")
            + "; this run − catalogue = "
            + format_with_uncertainty(difference.nominal_value * 1e3, u_diff * 1e3, "mV"))
    for p in reduction.parameters:
        shown = format_with_uncertainty(p.value, p.uncertainty, p.unit)
        lines.append(f"  {p.symbol} = {shown}" + (f" — {p.reason}" if p.fixed and p.reason
                                                   else ""))
    weighting = stats.covariance_note
    # With unit weights χ² is the sum of squared residuals, a quantity in V².
    chi2_unit = "" if stats.stated_uncertainty else " V²"
    lines += [
        f"  fit: χ² = {stats.chi2:.4g}{chi2_unit}, reduced χ² = {stats.reduced_chi2:.3g}"
        f"{chi2_unit}, {stats.dof} degrees of freedom, AIC = {stats.aic:.1f}, "
        f"BIC = {stats.bic:.1f}",
        f"  {weighting}",
    ]
    cross = reduction.linear_extrapolation
    if cross is not None:
        difference = (cross.standard_potential_V - reduction.standard_potential.nominal_value)
        lines.append(
            "  cross-check, straight-line extrapolation (extended Debye–Hückel, Bå = 1.5, "
            f"{cross.n_points} points with I ≤ {cross.max_ionic_strength:g} mol/kg): E° = "
            + format_with_uncertainty(cross.standard_potential_V * 1e3,
                                      cross.u_standard_potential_V * 1e3, "mV")
            + f" ({difference * 1e3:+.3f} mV from the fit)"
        )
    lines += _points_lines(points)
    derived = derived or derive_results(reduction)
    lines += comparison_lines(derived.published_columns)

    properties = derived.property_columns  # the table's columns, without building it
    # a_w is within 10⁻⁴ of 1 at the dilute end: 1 − a_w shows the digits that carry
    # information, as many as its uncertainty supports (u(1 − a_w) = u(a_w)).
    columns = [plain_values(properties, name) for name in (
        "molality_mol_kg", "osmotic_coefficient", "u_osmotic_coefficient", "water_activity",
        "u_water_activity", "excess_gibbs_rt_mol_kg", "u_excess_gibbs_rt_mol_kg")]
    cells = [[format_molality(m), format_with_uncertainty(phi, u_phi),
              format_compact(1.0 - a_w, u_a_w), format_compact(g_rt, u_g_rt)]
             for m, phi, u_phi, a_w, u_a_w, g_rt, u_g_rt in zip(*columns, strict=True)]
    header = ["m / (mol/kg)", "φ", "1 − a_w", "G^E/(RT) / (mol/kg)"]
    lines += ["", "  derived from the fitted model (k = 1)", *aligned_lines([header, *cells])]
    if reduction.budget:
        lines += ["", "  uncertainty budget of E° (k = 1; each line alone)"]
        width = max(len(b.component) for b in reduction.budget)
        for b in reduction.budget:
            lines.append(f"  {b.component:<{width}}  {b.u_V * 1e3:8.4f} mV   {b.method}")
        lines.append(f"  {'combined':<{width}}  {reduction.standard_potential.std_dev * 1e3:8.4f}"
                     " mV")
    lines += _gamma_budget_lines(reduction, points, budget_columns)
    if reduction.corrections:
        lines += [""] + [f"  correction: {c}" for c in reduction.corrections]
    if reduction.notes:
        lines += [""] + [f"  note: {n}" for n in reduction.notes]
    if reduction.warnings:
        lines += [""] + [f"  warning: {w}" for w in dict.fromkeys(reduction.warnings)]
    text = "\n".join(lines) + "\n"
    if comparison is not None:
        text += "\n" + format_model_comparison(comparison).rstrip("\n") + "\n"
    if monte_carlo is not None:
        text += "\n" + format_monte_carlo(monte_carlo, reduction)
    cautions = cautions_for(meta.electrolyte, meta.cell)
    if cautions:
        text += "\n" + "\n".join(["  safety:", *[f"  - {c}" for c in cautions]]) + "\n"
    # user text (file, series, electrolyte and cell names, reasons, warnings) shown as printable
    # (a report whose lines are all printable already has nothing to escape)
    if text.replace("\n", "").isprintable():
        return text
    return escape_controls(text, keep="\n")


def _points_lines(table: dict[str, list[Any]]) -> list[str]:
    """The readings: molality, electrode (when the run names them), E, residual, γ± (u);
    a flagged reading keeps its value and says why it is out of the fit; readings left out
    with --exclude are counted per reason (``table``: the points' columns as plain values,
    ``electrode``, ``diagnostic`` and ``line`` where the points have them)."""
    flags = table["flag"]
    electrode = table.get("electrode", [])
    electrodes = any(isinstance(e, str) and e.strip() for e in electrode)
    diagnostic = table.get("diagnostic", [None] * len(flags))
    header = ["m / (mol/kg)", *(["electrode"] if electrodes else []), "E / mV",
              "residual / mV", "γ± (u)"]
    rows = []
    for m, emf, flag, note, residual, gamma, u_gamma, *named in zip(
            table["molality_mol_kg"], table["emf_V"], flags, diagnostic, table["residual_V"],
            table["gamma_pm"], table["u_gamma_pm"], *([electrode] if electrodes else []),
            strict=True):
        cells = [format_molality(m)]
        if electrodes:
            cells.append(named[0] if isinstance(named[0], str) else "")
        cells.append(f"{emf * 1e3:.3f}" if _finite(emf) else "—")
        if isinstance(flag, str):
            cells += ["", f"out of the fit — {flag}"]
        else:
            mark = "  ← stands out" if isinstance(note, str) else ""
            cells += [f"{residual * 1e3:+.4f}", format_with_uncertainty(gamma, u_gamma) + mark]
        rows.append(cells)
    lines = ["", *aligned_lines([header, *rows], pad_last=False)]
    if any(isinstance(flag, str) and flag.startswith("excluded") for flag in flags):
        lines += _exclusion_lines(table)
    return lines


def _exclusion_lines(table: dict[str, list[Any]]) -> list[str]:
    """One line per reason given with --exclude: how many readings, at which molalities
    (``table``: the points' columns as plain values, ``flag`` and ``molality_mol_kg`` at
    least)."""
    groups: dict[str, list[int]] = {}  # the rows of each reason, reasons in order of appearance
    for row, flag in enumerate(table["flag"]):
        if isinstance(flag, str) and flag.startswith("excluded"):
            groups.setdefault(flag, []).append(row)
    lines = []
    for flag, rows in groups.items():
        molalities = ", ".join(f"{m:.6g}" for m in dict.fromkeys(
            table["molality_mol_kg"][row] for row in rows))
        count = len(rows)
        where = ("" if "line" not in table else
                 f" (line{'s' if count > 1 else ''} "
                 + ", ".join(str(int(n)) for n in (table["line"][row] for row in rows)
                             if _finite(n)) + ")")
        reason = str(flag).removeprefix("excluded").lstrip(": ")
        lines.append(f"  left out of the fit: {count} reading{'s' if count > 1 else ''} at "
                     f"m = {molalities} mol/kg{where}" + (f" — {reason}" if reason else ""))
    return lines


def _finite(value: object) -> bool:
    try:
        return math.isfinite(float(value))  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return False


def _series(points: object) -> str | None:
    """The one series named by the points, or None."""
    names = {n for n in plain_values(points, "series")  # type: ignore[arg-type]
             if isinstance(n, str) and n}
    return names.pop() if len(names) == 1 else None


def _gamma_budget_lines(reduction: Reduction, table: dict[str, list[Any]],
                        columns: list[str]) -> list[str]:
    """u(γ±) by input at the most dilute, a middle and the most concentrated reading
    (``table``: the points' columns as plain values, ``molality_mol_kg``, ``u_gamma_pm`` and
    the inputs' ``columns`` at least)."""
    gamma = point_values(reduction, "gamma_pm")
    plain_float = isinstance(gamma, np.ndarray) and gamma.dtype.kind == "f"
    with_gamma = np.flatnonzero(~np.isnan(gamma) if plain_float else pd.notna(gamma))
    if not with_gamma.size or not columns:
        return []
    chosen = [int(with_gamma[i]) for i in sorted({0, with_gamma.size // 2, with_gamma.size - 1})]
    molality = table["molality_mol_kg"]
    u_gamma = table["u_gamma_pm"]
    each = [table[c] for c in columns]
    names = [c.removeprefix("u_gamma_pm_") for c in columns]
    lines = ["", "  uncertainty budget of γ± (k = 1; each input alone)",
             "  m / (mol/kg)   " + "".join(f"{name:<14}" for name in names) + "combined"]
    for i in chosen:
        lines.append(f"  {molality[i]:<13.6g}  "
                     + "".join(f"{values[i]:<14.2g}" for values in each)
                     + f"{u_gamma[i]:.2g}")
    return lines


def format_monte_carlo(result: MonteCarloResult, reduction: Reduction) -> str:
    """The Monte Carlo propagation beside the linear one."""
    e0 = result.standard_potential
    linear_u = reduction.standard_potential.std_dev * 1e3
    places = decimals_for(e0.standard_deviation * 1e3)
    lines = [
        f"  Monte Carlo (GUM Supplement 1): {result.trials - result.failed} trials, seed "
        f"{result.seed}",
        f"  E°: u = {e0.standard_deviation * 1e3:.{places}f} mV (linear propagation "
        f"{linear_u:.{places}f} mV); 95 % interval [{e0.low * 1e3:.{places}f}, "
        f"{e0.high * 1e3:.{places}f}] mV",
    ]
    lines += [f"  note: {n}" for n in result.notes]
    return "\n".join(lines) + "\n"
