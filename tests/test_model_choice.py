"""Comparing activity-coefficient models on one run: runs test, verdicts, spread, recommendation.

Sources of check values:
- NaCl γ± at 25 °C, 0.1–4 mol/kg: Pitzer, Peiper & Busey (1984), J. Phys. Chem. Ref. Data 13, 1
  (confirmed; shipped in reference/mean_activity_coefficients.csv, printed to three decimals).
- HCl Pitzer parameters at 25 °C: Pitzer & Mayorga (1973), J. Phys. Chem. 77, 2300, Table II
  (from memory; shipped in reference/pitzer_parameters.csv) — used only to generate smooth data.
- E° = 0.22234 V: Bates & Bower (1954), J. Res. NBS 53, 283, Table 1, 25 °C; used here as an
  arbitrary truth for a Na(Hg) | NaCl | AgCl | Ag-like cell with n = 1.
- Runs-test probabilities: hand counts over the C(n, n₊) arrangements of the signs, and the mean
  and variance of Wald & Wolfowitz (1940), Ann. Math. Statist. 11, 147 (common practice).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity import MODELS, pitzer
from activolt.activity.published import published_gamma
from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.data.runs import read_run
from activolt.errors import FitError, InputError
from activolt.fit import diagnostics
from activolt.io.record import comparison_record
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures import model_choice
from activolt.procedures.dilution import reduce_run
from activolt.procedures.model_choice import (
    compare_models,
    runs_test,
)
from activolt.report.model_table import format_model_comparison

E0_TRUTH_V = 0.22234  # Bates & Bower (1954), Table 1, 25 °C; an arbitrary truth here
#: Pitzer & Mayorga (1973), HCl at 25 °C (from memory); only to generate smooth synthetic data.
HCL_PITZER_MAYORGA = {"beta0_kg_mol": 0.1775, "beta1_kg_mol": 0.2945, "beta2_kg_mol": 0.0,
                      "cphi_kg2_mol2": 0.0008}
#: Standard uncertainty stated for readings generated from the three-decimal NaCl table: the
#: rounding of γ± to ±0.0005 (rectangular, u = 0.0005/√3) is u(ln γ±) ≈ 4e-4 at γ± ≈ 0.7, i.e.
#: 2RT/F × 4e-4 ≈ 21 µV, plus 10 µV of added noise: about 25 µV (derived).
U_NACL_TABLE_V = 2.5e-5


# --- the runs test --------------------------------------------------------------------------

def test_runs_test_two_blocks_of_two():
    # + + − − + + − −: n₊ = n₋ = 4, R = 4. Hand count over C(8, 4) = 70 arrangements:
    # P(R = 2, 3, 4) = 2, 6, 18 of 70, so P(R ≤ 4) = 26/70 and P(R ≥ 4) = 62/70.
    # μ = 2·4·4/8 + 1 = 5; σ² = 2·16·(32 − 8)/(64·7) = 12/7 (Wald & Wolfowitz 1940).
    t = runs_test([1.0, 2.0, -1.0, -3.0, 0.5, 0.1, -0.2, -0.4])
    assert (t.n_positive, t.n_negative, t.runs) == (4, 4, 4)
    assert t.expected_runs == pytest.approx(5.0, abs=1e-12)
    assert t.sd_runs == pytest.approx(math.sqrt(12 / 7), abs=1e-12)
    assert t.z == pytest.approx(-1 / math.sqrt(12 / 7), abs=1e-12)
    assert t.p_value_fewer == pytest.approx(26 / 70, abs=1e-12)
    assert t.p_value_two_sided == pytest.approx(52 / 70, abs=1e-12)


def test_runs_test_extremes():
    # + + + + + − − −: n₊ = 5, n₋ = 3, R = 2, the fewest possible: P = 2/C(8, 3) = 2/56.
    t = runs_test(np.array([1, 1, 1, 1, 1, -1, -1, -1]))
    assert t.runs == 2
    assert t.p_value_fewer == pytest.approx(2 / 56, abs=1e-12)
    assert t.p_value_two_sided == pytest.approx(4 / 56, abs=1e-12)
    # + − + − + − + −: R = 8, the most possible for 4 and 4: P(R ≥ 8) = 2/70.
    t = runs_test(pd.Series([1, -1] * 4))
    assert t.runs == 8
    assert t.p_value_fewer == pytest.approx(1.0, abs=1e-12)
    assert t.p_value_two_sided == pytest.approx(4 / 70, abs=1e-12)


def test_runs_test_leaves_out_zeros_and_nan():
    assert runs_test([1.0, 0.0, 1.0, np.nan, -1.0]) == runs_test([1.0, 1.0, -1.0])


def test_runs_test_one_sign_cannot_be_made():
    t = runs_test([0.1, 0.2, 0.3])
    assert (t.runs, t.n_negative) == (1, 0)
    assert math.isnan(t.p_value_two_sided) and math.isnan(t.z)
    assert runs_test([]).runs == 0


def test_runs_test_exact_probabilities_sum_to_one():
    # The exact distribution (Swed & Eisenhart 1943) over all R for n₊ = 7, n₋ = 5.
    total = sum(math.exp(diagnostics.log_run_probability(r, 7, 5)) for r in range(2, 13))
    assert total == pytest.approx(1.0, abs=1e-12)


def test_runs_test_normal_approximation_for_large_samples():
    # 40 + 40 in 20 blocks of 4: R = 20, μ = 41, σ² = 3200·(3200 − 80)/(6400·79) = 19.75
    # (derived), z = −21/4.444 = −4.73; the exact lower tail is, like the normal one (≈ 1e-6),
    # far below 1e-4.
    t = runs_test(np.repeat([1.0, -1.0] * 10, 4))
    assert t.runs == 20 and t.expected_runs == pytest.approx(41.0)
    assert t.z == pytest.approx((20 - 41) / math.sqrt(3200 * 3120 / (6400 * 79)), rel=1e-12)
    assert t.p_value_fewer < 1e-4


# --- NaCl to 4 mol/kg -------------------------------------------------------------------------

def nacl_table_run(folder, stated: bool = True, seed: int = 0):
    table = published_gamma("NaCl", 298.15)
    table = table[(table["molality_mol_kg"] >= 0.1) & (table["molality_mol_kg"] <= 4.0)]
    m, gamma = table["molality_mol_kg"].to_numpy(), table["gamma_pm"].to_numpy()
    emf = emf_from_gamma(m, gamma, E0_TRUTH_V, "NaCl")
    emf = emf + np.random.default_rng(seed).normal(0.0, 1e-5, m.size)
    run = read_run(write_run(folder, m, emf, u_emf_V=U_NACL_TABLE_V if stated else None,
                             electrolyte="NaCl"))
    return run, gamma


@pytest.fixture(scope="module")
def nacl(tmp_path_factory):
    run, gamma = nacl_table_run(tmp_path_factory.mktemp("nacl"))
    return run, gamma, compare_models(run)


def test_nacl_pitzer_recommended_and_recovers_table(nacl):
    _, gamma, comparison = nacl
    assert comparison.recommended == "pitzer"
    best = comparison.assessment("pitzer")
    assert best.adequate, best.verdict
    # E° inside 2.5 u of the truth, with the fit's u and with the combined u.
    error = comparison.standard_potential_V - E0_TRUTH_V
    assert abs(error) < 2.5 * best.u_standard_potential_V
    assert abs(error) < 2.5 * comparison.u_combined_V
    # γ± at every point within 0.004 of Pitzer, Peiper & Busey (1984).
    np.testing.assert_allclose(best.reduction.points["gamma_pm"], gamma, atol=0.004)


def test_nacl_hueckel_is_inadequate_and_warned(nacl):
    _, _, comparison = nacl
    hueckel = comparison.assessment("hueckel")
    assert not hueckel.adequate
    assert hueckel.verdict.startswith("inadequate: ")
    assert any("Hückel equation stretched to I = 4 mol/kg" in r for r in hueckel.reasons)
    # Beyond its range the model fits only the readings within it and flags the others.
    points = hueckel.reduction.points
    assert points.loc[points["molality_mol_kg"] > 1.0, "flag"].str.startswith(
        "beyond the model's range").all()
    assert not hueckel.covers_run
    assert any(w.startswith("model hueckel") for w in comparison.warnings)
    assert "hueckel" not in comparison.adequate_models


def test_nacl_hueckel_alone_gives_no_recommendation(nacl):
    run, _, _ = nacl
    comparison = compare_models(run, ["hueckel"])
    assert comparison.recommended is None
    assert math.isnan(comparison.standard_potential_V) and math.isnan(comparison.u_combined_V)
    assert any("no model can describe this run" in w for w in comparison.warnings)
    assert "No model is adequate" in format_model_comparison(comparison)


def test_nacl_spread_includes_models_adequate_within_their_range(nacl):
    """Pitzer alone covers NaCl to 4 mol/kg; the Hückel equation, adequate on the readings
    within its range, estimates the same E° and so enters the model-choice spread."""
    _, _, comparison = nacl
    assert comparison.adequate_models == ("pitzer",)
    within = [a for a in comparison.assessments if not a.covers_run and len(a.reasons) == 1]
    e0s = [comparison.assessment("pitzer").standard_potential_V,
           *[a.standard_potential_V for a in within]]
    assert comparison.spread_V == pytest.approx(max(e0s) - min(e0s), abs=1e-15)
    assert comparison.u_combined_V == pytest.approx(
        math.hypot(comparison.u_fit_V, comparison.u_model_choice_V), rel=1e-12)


def test_nacl_pitzer_beta2_held_by_convention(nacl):
    _, _, comparison = nacl
    beta2 = {p.name: p for p in comparison.assessment("pitzer").parameters}["beta2_kg_mol"]
    assert beta2.fixed and beta2.value == 0.0
    assert any("2:2 and higher" in n for n in comparison.assessment("pitzer").notes)


def test_without_stated_uncertainty_variance_ratio_judges(tmp_path):
    """NaCl to 3 mol/kg (I within the SIT range of 3.5 mol/kg) without stated u: SIT's single
    ε leaves a residual variance many times Pitzer's (F-test)."""
    table = published_gamma("NaCl", 298.15)
    table = table[(table["molality_mol_kg"] >= 0.1) & (table["molality_mol_kg"] <= 3.0)]
    m, gamma = table["molality_mol_kg"].to_numpy(), table["gamma_pm"].to_numpy()
    emf = emf_from_gamma(m, gamma, E0_TRUTH_V, "NaCl")
    emf = emf + np.random.default_rng(0).normal(0.0, 1e-5, m.size)
    run = read_run(write_run(tmp_path, m, emf, electrolyte="NaCl"))
    comparison = compare_models(run, ["sit", "pitzer"])
    pitzer_fit = comparison.assessment("pitzer")
    assert math.isnan(pitzer_fit.chi2_p_value)
    assert pitzer_fit.variance_ratio_p_value == 1.0 and pitzer_fit.adequate
    sit = comparison.assessment("sit")
    assert sit.variance_ratio_p_value < model_choice.VARIANCE_RATIO_P_MIN
    assert any("F-test" in r for r in sit.reasons)
    assert any("no stated uncertainty" in n for n in comparison.notes)


# --- several adequate models: the spread rule --------------------------------------------------

@pytest.fixture(scope="module")
def hcl_dilute(tmp_path_factory):
    hcl = parse_electrolyte("HCl")
    m = np.array([0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.3, 0.5])
    constants = debye_hueckel_constants(np.full(m.size, 298.15))
    gamma = np.exp(pitzer.ln_gamma(hcl, m, constants, HCL_PITZER_MAYORGA))
    emf = emf_from_gamma(m, gamma, E0_TRUTH_V) + np.random.default_rng(0).normal(0, 2e-5, m.size)
    run = read_run(write_run(tmp_path_factory.mktemp("hcl"), m, emf, u_emf_V=2e-5))
    return compare_models(run)


def test_spread_rule_and_combined_uncertainty(hcl_dilute):
    c = hcl_dilute
    adequate = [c.assessment(n) for n in c.adequate_models]
    assert len(adequate) >= 2  # Hückel and Pitzer both describe HCl to 0.5 mol/kg
    e0s = [a.standard_potential_V for a in adequate]
    assert c.spread_V == pytest.approx(max(e0s) - min(e0s), abs=1e-15)
    # Rectangular over the range (GUM 4.3.7): half-width/√3.
    assert c.u_model_choice_V == pytest.approx(c.spread_V / (2 * math.sqrt(3)), abs=1e-15)
    assert c.u_model_choice_V > 0.0
    best = min(adequate, key=lambda a: a.statistics.bic)
    assert c.recommended == best.name
    assert c.u_combined_V == pytest.approx(math.hypot(best.u_standard_potential_V,
                                                      c.u_model_choice_V), rel=1e-12)
    assert abs(c.standard_potential_V - E0_TRUTH_V) < 2.5 * c.u_combined_V
    # The Davies equation has no free parameter and misses HCl at 0.5 mol/kg: refused.
    assert "davies" in {s.name for s in c.skipped}


def test_record_is_json_ready(hcl_dilute):
    record = comparison_record(hcl_dilute)
    text = json.dumps(record, allow_nan=False)
    assert json.loads(text) == record
    assert record["recommended_model"] == hcl_dilute.recommended
    fitted = [m["name"] for m in record["models"]]
    refused = [m["name"] for m in record["skipped"]]
    assert sorted(fitted + refused) == sorted(MODELS) and not set(fitted) & set(refused)
    assert record["standard_potential_V"]["uncertainty"] == pytest.approx(
        hcl_dilute.u_combined_V)
    assert set(record["models"][0]) >= {"standard_potential_V", "parameters", "fit",
                                        "runs_test", "verdict", "adequate"}
    assert record["criteria"]["runs_fewer_p_min"] == 0.05


def test_table_layout(hcl_dilute):
    text = format_model_comparison(hcl_dilute)
    rows = {line.split()[0]: line for line in text.splitlines()
            if line.split() and line.split()[0] in MODELS}
    assert set(rows) == set(MODELS)
    recommended = hcl_dilute.assessment(hcl_dilute.recommended)
    # E° in mV, the value rounded to the uncertainty's second significant digit.
    u_mV = recommended.u_standard_potential_V * 1e3
    places = 1 - math.floor(math.log10(u_mV))
    shown = f"{recommended.standard_potential_V * 1e3:.{places}f} ± {u_mV:.{places}f}"
    assert shown in rows[hcl_dilute.recommended]
    assert " *" in rows[hcl_dilute.recommended]
    assert "refused" in rows["davies"].split()  # verdict, then the reason in short
    assert "davies: the Davies equation does not describe these readings" in text
    assert "GUM 4.3.7" in text and "Recommended:" in text


# --- the linear-parameter fit equals the general non-linear fit ------------------------------

def test_pitzer_linear_least_squares_matches_reduction(tmp_path):
    # Arbitrary NaCl-like truth away from the published values, so that β(0), β(1) and Cφ are
    # all fitted (a regression set-up, not a check value).
    truth = {"beta0_kg_mol": 0.10, "beta1_kg_mol": 0.20, "beta2_kg_mol": 0.0,
             "cphi_kg2_mol2": -0.002}
    nacl = parse_electrolyte("NaCl")
    m = np.array([0.1, 0.2, 0.3, 0.5, 0.75, 1.0, 1.5, 2.0, 2.5, 3.0, 3.5, 4.0])
    constants = debye_hueckel_constants(np.full(m.size, 298.15))
    gamma = np.exp(pitzer.ln_gamma(nacl, m, constants, truth))
    u = 2e-5
    emf = emf_from_gamma(m, gamma, E0_TRUTH_V, "NaCl") + np.random.default_rng(5).normal(
        0, u, m.size)
    run = read_run(write_run(tmp_path, m, emf, u_emf_V=u, electrolyte="NaCl"))
    reduction = reduce_run(run, "pitzer", {"beta2_kg_mol": 0.0})
    free = list(reduction.free_names[1:])
    assert set(free) == {"beta0_kg_mol", "beta1_kg_mol", "cphi_kg2_mol2"}

    # E_i = E° − k_i [ln m± + offset_i + Σ_held θ c_i + Σ_free θ c_i]: linear in (E°, θ_free).
    k = nernst_factor(nacl, 1, 298.15)
    offset, columns = pitzer.ln_gamma_terms(nacl, m, constants)
    held = {p.name: p.value for p in reduction.parameters if p.fixed}
    known = np.log(nacl.mean_molality(m)) + offset + sum(v * columns[n] for n, v in held.items())
    y = emf + k * known
    design = np.column_stack([np.ones_like(m)] + [-k * columns[n] for n in free])
    solution, *_ = np.linalg.lstsq(design / u, y / u, rcond=None)
    assert solution[0] == pytest.approx(reduction.standard_potential.nominal_value, abs=1e-9)
    fitted = reduction.parameter_values
    for name, value in zip(free, solution[1:], strict=True):
        assert value == pytest.approx(fitted[name], rel=1e-6)
    # The same normal matrix gives the same covariance (stated uncertainties: not scaled).
    covariance = np.linalg.inv(design.T @ design / u**2)
    np.testing.assert_allclose(covariance, reduction.covariance, rtol=1e-5)


# --- error paths and skipped models -------------------------------------------------------------

def test_unknown_model_is_an_input_error(nacl):
    run, _, _ = nacl
    with pytest.raises(InputError, match="unknown model 'debye'"):
        compare_models(run, ["pitzer", "debye"])
    with pytest.raises(InputError, match="no model to compare"):
        compare_models(run, [])


def test_fixed_for_a_model_not_compared(nacl):
    run, _, _ = nacl
    with pytest.raises(InputError, match="'sit', which is not compared"):
        compare_models(run, ["pitzer"], {"sit": {"epsilon_kg_mol": 0.03}})


def test_unknown_parameter_is_an_input_error(nacl):
    run, _, _ = nacl
    with pytest.raises(InputError, match="no parameter 'alpha'"):
        compare_models(run, ["hueckel"], {"hueckel": {"alpha": 1.0}})


def test_too_few_readings(tmp_path):
    run = read_run(write_run(tmp_path, [0.01, 0.1], [0.46, 0.35], electrolyte="HCl"))
    with pytest.raises(InputError, match="only 2 usable reading"):
        compare_models(run)


def test_a_model_that_cannot_be_fitted_is_skipped(nacl, monkeypatch):
    run, _, _ = nacl
    real = model_choice.reduce_run

    def failing_sit(run, model, fixed=None, **options):
        if model == "sit":
            raise FitError("the fit did not converge (simulated)")
        return real(run, model, fixed, **options)

    monkeypatch.setattr(model_choice, "reduce_run", failing_sit)
    comparison = compare_models(run, ["sit", "pitzer"])
    assert [s.name for s in comparison.skipped] == ["sit"]
    assert "simulated" in comparison.skipped[0].reason
    assert any("was refused" in w for w in comparison.warnings)
    assert "Refused (the model cannot give an honest E° for this run):" in format_model_comparison(
        comparison)
    assert comparison.recommended == "pitzer"
    assert comparison_record(comparison)["skipped"][0]["name"] == "sit"
    with pytest.raises(FitError, match="no model could be fitted: sit"):
        compare_models(run, ["sit"])


def test_one_u_everywhere_with_the_model_choice_component(hcl_dilute):
    """The recommended reduction carries u_combined in E°, in the budget (its own line) and in
    u(γ±); the headline of the report shows that number (regression of the plumbing)."""
    from activolt.report.text import format_report

    c = hcl_dilute
    reduction = c.recommended_reduction
    assert c.u_model_choice_V > 0
    assert reduction.standard_potential.std_dev == pytest.approx(c.u_combined_V, rel=1e-12)
    budget = {line.component: line.u_V for line in reduction.budget}
    assert budget["choice of model"] == pytest.approx(c.u_model_choice_V, rel=1e-12)
    fit_only = c.assessment(c.recommended).reduction
    used = reduction.points["flag"].isna()
    assert (reduction.points.loc[used, "u_gamma_pm"]
            > fit_only.points.loc[used, "u_gamma_pm"]).all()
    u_mV = reduction.standard_potential.std_dev * 1e3
    headline = next(line for line in format_report(reduction).splitlines() if "E° =" in line)
    assert f"± {u_mV:.{1 - math.floor(math.log10(u_mV))}f} mV" in headline


def test_reminder_of_the_model_choice_is_the_library_s(nacl):
    """A single model over I > 0.1 mol/kg warns that u(E°) leaves out the choice of model;
    the comparison, which adds that component, does not."""
    from activolt.procedures.dilution import MODEL_CHOICE_REMINDER

    run, _, comparison = nacl
    assert MODEL_CHOICE_REMINDER in reduce_run(run, "pitzer").warnings
    assert MODEL_CHOICE_REMINDER not in comparison.recommended_reduction.warnings
    assert "--" not in MODEL_CHOICE_REMINDER  # a library message names no option
