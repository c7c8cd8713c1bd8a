"""The plain-text report of a reduction, as printed by ``activolt reduce``."""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from ..procedures.dilution import Reduction
from ..procedures.model_choice import ModelComparison
from ..procedures.montecarlo import MonteCarloResult
from ..procedures.properties import DerivedResults, derive_results, derive_results_of_many
from ..procedures.published import plain_values, point_lists, point_names, point_values
from ..safe_text import escape_controls
from .cautions import cautions_for
from .comparison import (
    aligned_blocks,
    aligned_lines,
    comparison_lines,
    comparison_lines_of_many,
    headed_blocks,
)
from .model_table import format_model_comparison
from .numbers import (
    decimals_for,
    fill_rows,
    format_compact,
    format_compact_column,
    format_molality,
    format_molality_column,
    format_with_uncertainty,
    format_with_uncertainty_column,
)


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

    See Also
    --------
    format_reports : the reports of many reductions, their tables written together.
    """
    names = point_names(reduction)
    # u(γ±) of each input at each reading, for the budget of γ±
    budget_columns = _budget_columns(names)
    # the columns of the points that the report shows, each read once, as plain values,
    # without building the points table
    points = point_lists(reduction, [name for name in (
        "flag", "electrode", "diagnostic", "molality_mol_kg", "emf_V", "residual_V", "gamma_pm",
        "u_gamma_pm", "line") if name in names] + budget_columns)
    derived = derived or derive_results(reduction)
    properties = derived.property_columns  # the table's columns, without building it
    # a_w is within 10⁻⁴ of 1 at the dilute end: 1 − a_w shows the digits that carry
    # information, as many as its uncertainty supports (u(1 − a_w) = u(a_w)).
    columns = [plain_values(properties, name) for name in _PROPERTIES]
    cells = [[format_molality(m), format_with_uncertainty(phi, u_phi),
              format_compact(1.0 - a_w, u_a_w), format_compact(g_rt, u_g_rt)]
             for m, phi, u_phi, a_w, u_a_w, g_rt, u_g_rt in zip(*columns, strict=True)]
    tables = [*_points_lines(points), *comparison_lines(derived.published_columns),
              *_derived_lines(aligned_lines([list(_DERIVED_HEADER), *cells]))]
    gamma_budget = _gamma_budget_lines(
        point_values(reduction, "gamma_pm"), points["molality_mol_kg"], points["u_gamma_pm"],
        [points[c] for c in budget_columns], budget_columns)
    return _report(reduction, tables, gamma_budget, comparison, monte_carlo)


#: The derived properties the report shows, in the order their cells are made.
_PROPERTIES = ("molality_mol_kg", "osmotic_coefficient", "u_osmotic_coefficient",
               "water_activity", "u_water_activity", "excess_gibbs_rt_mol_kg",
               "u_excess_gibbs_rt_mol_kg")
_DERIVED_HEADER = ("m / (mol/kg)", "φ", "1 − a_w", "G^E/(RT) / (mol/kg)")


#: Whether a text is printable, remembered for the few texts every report shows (cautions).
_printable = functools.lru_cache(maxsize=64)(str.isprintable)


def _budget_columns(names: list[str]) -> list[str]:
    """The points' columns of u(γ±) of each input (of the budget of γ±), remembered for the
    last few sets of columns (the reductions of a batch share theirs)."""
    return list(_budget_columns_of(tuple(names)))


@functools.lru_cache(maxsize=16)
def _budget_columns_of(names: tuple[str, ...]) -> tuple[str, ...]:
    return tuple(c for c in names if c.startswith("u_gamma_pm_") and c != "u_gamma_pm_model")


def _derived_lines(table: list[str]) -> list[str]:
    """The derived properties' lines around their table's aligned lines."""
    return ["", "  derived from the fitted model (k = 1)", *table]


def _report(reduction: Reduction, tables: list[str], gamma_budget: list[str],
            comparison: ModelComparison | None, monte_carlo: MonteCarloResult | None,
            checked: list[str] | None = None) -> str:
    """The report around its tables (``tables``: the lines of the points, the published
    comparison and the derived properties; ``gamma_budget``: the lines of the budget of γ±;
    ``checked``: when given, every text of the tables but their numbers, headers and marks,
    which are printable: the user text and the published comparison's lines)."""
    run, stats, meta = reduction.run, reduction.statistics, reduction.run.metadata
    t_C = reduction.temperature_K - 273.15
    lines = [
        f"activolt reduction of {run.path.name}"
        + (f", series '{series}'" if (series := _series(reduction)) is not None else ""),
        *([f"  cell: {meta.cell}"] if meta.cell else []),
        f"  electrolyte {meta.electrolyte.formula} ({meta.electrolyte.charge_type}), "
        f"n = {meta.electrons}, t = {t_C:.2f} °C, {stats.n_points} readings used"
        + (f" of {rows}" if (rows := run.usable.size) != stats.n_points else ""),
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
    first = len(lines)
    lines += tables
    last = len(lines)
    if reduction.budget:
        lines += ["", "  uncertainty budget of E° (k = 1; each line alone)"]
        width = max(len(b.component) for b in reduction.budget)
        for b in reduction.budget:
            lines.append(f"  {b.component:<{width}}  {b.u_V * 1e3:8.4f} mV   {b.method}")
        lines.append(f"  {'combined':<{width}}  {reduction.standard_potential.std_dev * 1e3:8.4f}"
                     " mV")
    lines += gamma_budget
    if reduction.corrections:
        lines += [""] + [f"  correction: {c}" for c in reduction.corrections]
    if reduction.notes:
        lines += [""] + [f"  note: {n}" for n in reduction.notes]
    if reduction.warnings:
        lines += [""] + [f"  warning: {w}" for w in dict.fromkeys(reduction.warnings)]
    after = []
    if comparison is not None:
        after.append("\n" + format_model_comparison(comparison).rstrip("\n") + "\n")
    if monte_carlo is not None:
        after.append("\n" + format_monte_carlo(monte_carlo, reduction))
    text = "\n".join(lines) + "\n" + "".join(after)
    cautions = cautions_for(meta.electrolyte, meta.cell)
    if cautions:
        text += "\n" + "\n".join(["  safety:", *[f"  - {c}" for c in cautions]]) + "\n"
    # user text (file, series, electrolyte and cell names, reasons, warnings) shown as printable
    # (a report whose lines are all printable already has nothing to escape); with the tables'
    # text that is not numbers given (``checked``), the lines around the tables, that text
    # and the cautions are all that may not be
    if (checked is not None and all(map(_printable, cautions)) and all(map(str.isprintable, [
            *lines[:first], *lines[last:], *checked,
            *(part.replace("\n", "") for part in after)]))):
        return text
    if text.replace("\n", "").isprintable():
        return text
    return escape_controls(text, keep="\n")


def format_reports(reductions: Sequence[Reduction],
                   comparisons: Sequence[ModelComparison | None] | None = None,
                   derived: Sequence[DerivedResults | None] | None = None) -> list[str]:
    """:func:`format_report` of each reduction (without a Monte Carlo), their tables written
    together: the cells of a table's column for every reduction at once (values with their
    uncertainties rounded with numpy, texts in one ``%``,
    :func:`~activolt.report.numbers.fill_rows`) and the tables of every reduction aligned at
    once (:func:`~activolt.report.comparison.aligned_blocks`).

    Parameters
    ----------
    reductions : sequence of Reduction
        The reductions reported.
    comparisons : sequence of ModelComparison or None, optional
        Each reduction's model comparison, as :func:`format_report` takes it (none by default).
    derived : sequence of DerivedResults or None, optional
        Each reduction's derived results
        (:func:`activolt.procedures.properties.derive_results_of_many`); those not given are
        worked out here, together.

    Returns
    -------
    list of str
        Each reduction's report, as :func:`format_report` writes it, in order.
    """
    count = len(reductions)
    if not count:
        return []
    comparisons = list(comparisons) if comparisons is not None else [None] * count
    given = list(derived) if derived is not None else [None] * count
    missing = [i for i, d in enumerate(given) if d is None]
    for i, found in zip(missing, derive_results_of_many([reductions[i] for i in missing]),
                        strict=True):
        given[i] = found
    results = [d for d in given if d is not None]
    points = _points_lines_of_many(reductions)
    published = comparison_lines_of_many([d.published_columns for d in results])
    properties = _derived_lines_of_many(results)
    return [format_report(reduction, comparison, derived=d) if shown is None else
            _report(reduction, [*shown.lines, *published_lines, *property_lines],
                    shown.gamma_budget, comparison, None, [*shown.user_text, *published_text])
            for reduction, comparison, d, shown, (published_lines, published_text),
            property_lines in zip(reductions, comparisons, results, points, published,
                                  properties, strict=True)]


#: The points' columns that the report shows as numbers, read as float arrays.
_POINT_NUMBERS = ("molality_mol_kg", "emf_V", "residual_V", "gamma_pm", "u_gamma_pm")
_POINTS_HEADER = ("m / (mol/kg)", "E / mV", "residual / mV", "γ± (u)")
_POINTS_HEADER_NAMED = ("m / (mol/kg)", "electrode", "E / mV", "residual / mV", "γ± (u)")


class _PointsLines(NamedTuple):
    """The lines of a reduction's points and of its budget of γ±, and the user text they show
    (electrodes, reasons a reading is out of the fit)."""

    lines: list[str]
    gamma_budget: list[str]
    user_text: list[str]


def _points_lines_of_many(reductions: Sequence[Reduction]) -> list[_PointsLines | None]:
    """:func:`_points_lines` and :func:`_gamma_budget_lines` of each reduction, the cells of
    every reduction's points written a column at a time; None for a reduction whose points
    hold numbers of another kind than floats (reported alone)."""
    found: list[_PointsLines | None] = [None] * len(reductions)
    taken = []  # (index, names, number columns, text columns, whether electrodes are named)
    for index, reduction in enumerate(reductions):
        names = point_names(reduction)
        run, own = reduction.run, reduction.point_columns
        # the run's numeric columns as it keeps them, taken out of its table once (the same
        # values: a float column, or integers that print as its floats do)
        numbers = [point_values(reduction, name) if name in own or name not in run.arrays
                   else run.arrays[name] for name in _POINT_NUMBERS]
        if "flag" not in names or not all([isinstance(c, np.ndarray) and c.dtype.kind == "f"
                                           for c in numbers]):
            continue
        # (a run whose readings are all usable has no flag: none is a reason to show)
        texts = point_lists(reduction, [name for name in ("flag", "diagnostic", "electrode")
                                        if name in names and (name != "flag" or name in own
                                                              or not run.usable.all())])
        texts.setdefault("flag", [None] * len(numbers[0]))
        # (whether a name is not blank: whether their names joined are not)
        named = "".join([e for e in texts.get("electrode", ()) if isinstance(e, str)]).strip()
        taken.append((index, names, numbers, texts, bool(named)))
    if not taken:
        return found
    sizes = [len(numbers[0]) for _, _, numbers, _, _ in taken]
    starts = np.cumsum([0, *sizes[:-1]]).tolist()
    molality, emf, residual, gamma, u_gamma = (
        np.concatenate([numbers[k] for _, _, numbers, _, _ in taken])
        for k in range(len(_POINT_NUMBERS)))
    emf_mV = emf * 1e3
    emf_cells = fill_rows("%.3f", [emf_mV.tolist()])
    for i in np.flatnonzero(~np.isfinite(emf_mV)).tolist():
        emf_cells[i] = "—"
    residual_cells = fill_rows("%+.4f", [(residual * 1e3).tolist()])
    gamma_cells = format_with_uncertainty_column(gamma, u_gamma)
    user_text: list[list[str]] = [[] for _ in taken]
    excluded = [False] * len(taken)
    for k, (start, (_, _, _, texts, _)) in enumerate(zip(starts, taken, strict=True)):
        flags, notes = texts["flag"], texts.get("diagnostic", ())
        for row in [row for row, flag in enumerate(flags) if flag is not None]:
            if isinstance(flags[row], str):
                residual_cells[start + row] = ""
                gamma_cells[start + row] = f"out of the fit — {flags[row]}"
                user_text[k].append(flags[row])
                excluded[k] = excluded[k] or flags[row].startswith("excluded")
        for row in [row for row, note in enumerate(notes) if note is not None]:
            if isinstance(notes[row], str) and not isinstance(flags[row], str):
                gamma_cells[start + row] += "  ← stands out"
    cells = [format_molality_column(molality), emf_cells, residual_cells, gamma_cells]
    # the tables with the electrodes' column and those without, each aligned together
    tables: list[list[list[str]]] = [[[] for _ in _POINTS_HEADER],
                                     [[] for _ in _POINTS_HEADER_NAMED]]
    rows: list[list[int]] = [[], []]
    for k, (start, size, (_, _, _, texts, named)) in enumerate(zip(starts, sizes, taken,
                                                                   strict=True)):
        shown = [c[start:start + size] for c in cells]
        if named:
            shown.insert(1, [e if isinstance(e, str) else "" for e in texts["electrode"]])
            user_text[k] += shown[1]
        for column, head, text in zip(tables[named], _POINTS_HEADER_NAMED if named
                                      else _POINTS_HEADER, shown, strict=True):
            column.append(head)
            column += text
        rows[named].append(size + 1)
    blocks = [iter(aligned_blocks(tables[named], rows[named])) for named in (0, 1)]
    budgets = _gamma_budgets_of_many([reductions[t[0]] for t in taken],
                                     [t[1] for t in taken], gamma, molality, u_gamma, starts,
                                     sizes)
    for (index, names, _, _, named), budget, user, exclusions in zip(
            taken, budgets, user_text, excluded, strict=True):
        lines = ["", *next(blocks[named])]
        if exclusions:
            left_out = _exclusion_lines(point_lists(reductions[index], [
                name for name in ("flag", "molality_mol_kg", "line") if name in names]))
            lines += left_out
            user += left_out
        found[index] = _PointsLines(lines, budget, user)
    return found


def _gamma_budgets_of_many(reductions: Sequence[Reduction], names: Sequence[list[str]],
                           gamma: np.ndarray, molality: np.ndarray, u_gamma: np.ndarray,
                           starts: list[int], sizes: list[int]) -> list[list[str]]:
    """:func:`_gamma_budget_lines` of each reduction (``names``: its points' columns;
    ``gamma``, ``molality``, ``u_gamma``: the points of every reduction, one after the other,
    each beginning at ``starts`` with ``sizes`` rows), the chosen rows of all written
    together, a group of reductions with the same inputs at a time."""
    with_gamma = np.flatnonzero(~np.isnan(gamma))
    ends = np.asarray(starts) + np.asarray(sizes, dtype=np.int64)
    low = np.searchsorted(with_gamma, starts).tolist()
    high = np.searchsorted(with_gamma, ends).tolist()
    rows_with_gamma = with_gamma.tolist()
    groups: dict[tuple[str, ...], list[tuple[int, list[int]]]] = {}
    for k, (lo, hi) in enumerate(zip(low, high, strict=True)):
        columns = _budget_columns_of(tuple(names[k]))
        if hi > lo and columns:
            count = hi - lo
            chosen = [rows_with_gamma[lo + i] for i in sorted({0, count // 2, count - 1})]
            groups.setdefault(columns, []).append((k, chosen))
    found: list[list[str]] = [[] for _ in reductions]
    for columns, members in groups.items():
        chosen = [row for _, rows in members for row in rows]
        # the chosen rows among the group's own rows, one reduction after the other
        at, offset = [], 0
        for k, rows in members:
            at += [row - starts[k] + offset for row in rows]
            offset += sizes[k]
        each = [np.concatenate([point_values(reductions[k], column) for k, _ in members])[at]
                .tolist() for column in columns]
        lines = fill_rows(_gamma_budget_row(len(columns)),
                          [molality[chosen].tolist(), *each, u_gamma[chosen].tolist()])
        head = _gamma_budget_head(list(columns))
        start = 0
        for k, rows in members:
            found[k] = [*head, *lines[start:start + len(rows)]]
            start += len(rows)
    return found


def _derived_lines_of_many(results: Sequence[DerivedResults]) -> list[list[str]]:
    """The derived properties' lines of each result, the cells of every table written a
    column at a time."""
    columns = [np.concatenate([r.property_columns[name] for r in results])
               for name in _PROPERTIES]
    molality, phi, u_phi, a_w, u_a_w, g_rt, u_g_rt = columns
    cells = [format_molality_column(molality), format_with_uncertainty_column(phi, u_phi),
             format_compact_column(1.0 - a_w, u_a_w), format_compact_column(g_rt, u_g_rt)]
    sizes = [len(r.property_columns["molality_mol_kg"]) for r in results]
    return [_derived_lines(block) for block in headed_blocks(_DERIVED_HEADER, cells, sizes)]


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


def _series(reduction: Reduction) -> str | None:
    """The one series named by the points of the reduction's run, or None."""
    names = {n for n in point_lists(reduction, ["series"])["series"]
             if isinstance(n, str) and n}
    return names.pop() if len(names) == 1 else None


def _gamma_budget_lines(gamma: Any, molality: Sequence[Any], u_gamma: Sequence[Any],
                        each: list[Sequence[Any]], columns: list[str]) -> list[str]:
    """u(γ±) by input at the most dilute, a middle and the most concentrated reading
    (``gamma``: the points' γ± as the points hold them; ``molality``, ``u_gamma`` and ``each``:
    the readings' molalities, u(γ±) and u(γ±) of each input, as plain values; ``columns``: the
    inputs' columns)."""
    plain_float = isinstance(gamma, np.ndarray) and gamma.dtype.kind == "f"
    with_gamma = np.flatnonzero(~np.isnan(gamma) if plain_float else pd.notna(gamma))
    if not with_gamma.size or not columns:
        return []
    chosen = [int(with_gamma[i]) for i in sorted({0, with_gamma.size // 2, with_gamma.size - 1})]
    template = _gamma_budget_row(len(columns))
    return [*_gamma_budget_head(columns),
            *[template % (molality[i], *[values[i] for values in each], u_gamma[i])
              for i in chosen]]


def _gamma_budget_head(columns: list[str]) -> list[str]:
    """The lines of the budget of γ± above its rows (``columns``: the inputs' columns)."""
    names = [c.removeprefix("u_gamma_pm_") for c in columns]
    return ["", "  uncertainty budget of γ± (k = 1; each input alone)",
            "  m / (mol/kg)   " + "".join(f"{name:<14}" for name in names) + "combined"]


def _gamma_budget_row(inputs: int) -> str:
    """The %-template of a row of the budget of γ±: the molality, u(γ±) of each of the
    ``inputs`` and the combined u(γ±)."""
    return "  %-13.6g  " + "%-14.2g" * inputs + "%.2g"


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
