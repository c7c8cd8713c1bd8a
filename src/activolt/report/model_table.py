"""The plain-text table of a model comparison
(:func:`activolt.procedures.model_choice.compare_models`).
"""

from __future__ import annotations

import math

from ..procedures.model_choice import MODEL_CHOICE_RULE, RECOMMENDATION_RULE, ModelComparison
from .numbers import decimals_for, format_with_uncertainty

__all__ = ["SHORT_REASONS", "format_model_comparison", "short_reasons"]


def _e0_mV(value_V: float, u_V: float) -> str:
    """E° ± u in mV, the value rounded to the uncertainty's second significant digit."""
    if not math.isfinite(value_V):
        return "—"
    return format_with_uncertainty(value_V * 1e3, u_V * 1e3)


def _fixed(value: float, places: int) -> str:
    return f"{value:.{places}f}" if math.isfinite(value) else "—"


def _general(value: float) -> str:
    return f"{value:.3g}" if math.isfinite(value) else "—"


def format_model_comparison(comparison: ModelComparison) -> str:
    """A plain-text table of the models fitted to one run, the spread of E° and the choice.

    Parameters
    ----------
    comparison : ModelComparison
        From :func:`activolt.procedures.model_choice.compare_models`.

    Returns
    -------
    str
        One row per fitted model: E° ± u [mV] (value rounded to the second significant digit
        of u, k = 1), free parameters, reduced χ², AIC, BIC, ΔBIC to the lowest, runs observed /
        expected and the runs-test probability of so few runs, the verdict and, for an
        inadequate or refused model, its reasons in short with a letter; then under that
        letter why each inadequate model is inadequate, the refused models, the spread of E°
        and the model-choice component with its rule, the recommendation with the combined
        u(E°), notes and the warnings that do not repeat a reason already given.

    Notes
    -----
    The criteria and rules are those of :mod:`activolt.procedures.model_choice` (GUM, JCGM 100:2008,
    4.3.7; Wald & Wolfowitz 1940, Ann. Math. Statist. 11, 147).
    """
    c = comparison
    weighting = ("stated reading uncertainties" if c.stated_uncertainty
                 else "unit weights (no stated reading uncertainty)")
    lines = [
        f"Model comparison: {c.electrolyte}, t = {c.temperature_K - 273.15:.2f} °C, "
        f"{c.n_points} readings, {weighting}",
        "",
    ]
    bics = [a.statistics.bic for a in c.assessments]
    best_bic = min(bics) if bics else math.nan
    # With unit weights χ² is a sum of squared residuals: χ²/ν is a variance in V².
    header = ("model", "E° / mV (k = 1)", "free",
              "χ²/ν" if c.stated_uncertainty else "χ²/ν / V²", "AIC", "BIC", "ΔBIC", "runs",
              "p(runs)", "verdict", "why")
    inadequate = [a for a in c.assessments if not a.adequate]
    letters = {name: chr(ord("a") + i) for i, name in
               enumerate([a.name for a in inadequate] + [s.name for s in c.skipped])}
    rows = []
    for a in c.assessments:
        st, rt = a.statistics, a.runs_test
        rows.append((
            a.name + (" *" if a.name == c.recommended else ""),
            _e0_mV(a.standard_potential_V, a.u_standard_potential_V),
            str(st.n_free - 1),
            _general(st.reduced_chi2),
            _fixed(st.aic, 1),
            _fixed(st.bic, 1),
            _fixed(st.bic - best_bic, 1),
            f"{rt.runs}/{rt.expected_runs:.1f}",
            _general(rt.p_value_fewer),
            "adequate" if a.adequate else "inadequate",
            "" if a.adequate else f"({letters[a.name]}) {short_reasons(a.reasons)}",
        ))
    rows += [(s.name, "—", "—", "—", "—", "—", "—", "—", "—", "refused",
              f"({letters[s.name]}) {short_reasons((s.reason,))}") for s in c.skipped]
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]
    right = {2, 3, 4, 5, 6, 7, 8}

    def line(cells: tuple[str, ...]) -> str:
        return "  ".join(cell.rjust(w) if i in right else cell.ljust(w)
                         for i, (cell, w) in enumerate(zip(cells, widths, strict=True))).rstrip()

    lines.append(line(header))
    lines.append("  ".join("-" * w for w in widths))
    lines.extend(line(r) for r in rows)
    lines += [
        "",
        "free: fitted model parameters besides E°; χ²/ν: reduced χ²; runs: residual-sign runs "
        "observed/expected, p(runs): exact probability of so few (Wald–Wolfowitz runs test); "
        "why: in short, with the letter of the full reason below; * recommended",
    ]
    if inadequate:
        lines += ["", "Why inadequate:"]
        lines += [f"  ({letters[a.name]}) {a.name}: {'; '.join(a.reasons)}" for a in inadequate]
    if c.skipped:
        lines += ["", "Refused (the model cannot give an honest E° for this run):"]
        lines += [f"  ({letters[s.name]}) {s.name}: {s.reason}" for s in c.skipped]
    shown = [*("; ".join(a.reasons) for a in inadequate), *(s.reason for s in c.skipped)]
    lines.append("")
    if c.recommended is None:
        lines.append("No model is adequate for this run; no E° is recommended.")
    else:
        adequate = ", ".join(c.adequate_models)
        if not c.adequate_models:
            places = decimals_for(c.u_model_choice_V * 1e3) if c.u_model_choice_V > 0 else 3
            u_model = f"{c.u_model_choice_V * 1e3:.{places}f} mV"
            lines.append("No model passes every criterion strictly; the models fitted over the "
                         f"whole run spread E° by {c.spread_V * 1e3:.{places}f} mV; "
                         f"model-choice component u_model = {u_model}")
        elif len(c.adequate_models) > 1:
            places = decimals_for(c.u_model_choice_V * 1e3)
            u_model = f"{c.u_model_choice_V * 1e3:.{places}f} mV"
            lines.append(f"Adequate models: {adequate}; spread of E° "
                         f"{c.spread_V * 1e3:.{places}f} mV; model-choice component "
                         f"u_model = {u_model}")
        else:
            u_model = "0 mV"
            lines.append(f"Adequate model: {adequate} only; the spread of E° between models "
                         "cannot be assessed from this run; u_model = 0 mV")
        lines += [
            f"  rule: {MODEL_CHOICE_RULE}",
            f"Recommended: {c.recommended} ({RECOMMENDATION_RULE})",
            f"  E° = {_e0_mV(c.standard_potential_V, c.u_combined_V)} mV (k = 1), combining "
            f"u_fit = {c.u_fit_V * 1e3:.{decimals_for(c.u_fit_V * 1e3)}f} mV and u_model = "
            f"{u_model} in quadrature",
        ]
    model_notes = [(a.name, n) for a in c.assessments for n in a.notes]
    if c.notes or model_notes:
        lines += ["", "Notes:"]
        lines += [f"  {n}" for n in c.notes]
        lines += [f"  {name}: {n}" for name, n in model_notes]
    # A warning that only repeats a reason printed above is not printed again.
    warnings = [w for w in dict.fromkeys(c.warnings)
                if not any(reason and w.endswith(reason) for reason in shown)]
    if warnings:
        lines += ["", "Warnings:"]
        lines += [f"  {w}" for w in warnings]
    return "\n".join(lines)


#: Words of a reason → its short form in the table's "why" column.
SHORT_REASONS = (
    ("improbable for the stated", "χ² too large"),
    ("blocks of one sign", "runs test"),
    ("runs of one sign", "runs test"),
    ("serial correlation", "serial correlation"),
    ("stretched to", "beyond its range"),
    ("residual variance", "F-test"),
    ("does not describe", "systematic misfit"),
)


def short_reasons(reasons: tuple[str, ...] | list[str]) -> str:
    """The reasons a model is inadequate or refused, in a few words each.

    Examples
    --------
    >>> short_reasons(["χ² = 53 with 3 degrees of freedom is improbable for the stated reading "
    ...                "uncertainties (p = 1.9e-11)", "the Davies equation stretched to I = 1"])
    'χ² too large, beyond its range'
    >>> short_reasons(["the fit could not converge"])
    'see below'
    """
    found = [short for reason in reasons for key, short in SHORT_REASONS if key in reason]
    return ", ".join(dict.fromkeys(found)) or "see below"
