"""Monte Carlo propagation (JCGM 101:2008) against the linear propagation of the reduction.

The well-conditioned run: HCl at 25 °C, ten molalities 0.001–1 mol/kg (a classic dilution
series), readings with stated u(E) = 0.02 mV, the Hückel equation with E°, å and b all free.
Truth: E° = 0.22234 V (Bates & Bower 1954, Table 1) and the Hückel γ± with å = 4.3 Å,
b = 0.27 kg/mol (the truth of tests/test_uncertainty.py; a regression pin of this project's fit to
Robinson & Stokes 1959, not a literature value). For such a run the model is nearly linear in its
parameters over the reading noise, so Monte Carlo and linear propagation must agree; with 2000
trials a standard deviation is known to about 1/√(2·1999) ≈ 1.6 %, so 10 % is a firm bound.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity.hueckel import ln_gamma
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import read_run
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run
from activolt.procedures.montecarlo import coverage_interval, monte_carlo

HCL = parse_electrolyte("HCl")
MOLALITY = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0])
U_EMF_V = 2e-5
E0_V = 0.22234  # Bates & Bower (1954), Table 1, 25 °C
TRUTH = {"a_angstrom": 4.3, "b_kg_mol": 0.27}


def _exact_emf() -> np.ndarray:
    constants = debye_hueckel_constants(np.full(MOLALITY.size, 298.15))
    return emf_from_gamma(MOLALITY, np.exp(ln_gamma(HCL, MOLALITY, constants, TRUTH)), E0_V)


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("mc")
    emf = _exact_emf() + np.random.default_rng(2024).normal(0.0, U_EMF_V, MOLALITY.size)
    return read_run(write_run(folder, MOLALITY, emf, u_emf_V=U_EMF_V))


@pytest.fixture(scope="module")
def reduction(run):
    return reduce_run(run, "hueckel")


@pytest.fixture(scope="module")
def result(run, reduction):
    return monte_carlo(run, "hueckel", trials=2000, seed=7, reduction=reduction)


def test_the_run_is_well_conditioned(reduction):
    assert reduction.free_names == ("standard_potential_V", "a_angstrom", "b_kg_mol")


def test_monte_carlo_agrees_with_linear_propagation(result, reduction):
    assert result.failed == 0 and result.trials == 2000
    ratio = result.standard_potential.standard_deviation / reduction.standard_potential.std_dev
    assert ratio == pytest.approx(1.0, abs=0.10)
    # γ± at every point as well (15 %: ten quantities, each known to 1.6 %).
    linear = reduction.points["u_gamma_pm"].to_numpy()
    np.testing.assert_allclose(result.points["u_gamma_pm"], linear, rtol=0.15)
    # The Monte Carlo mean stays on the reduction's estimate (to a tenth of u; 2000 trials put
    # the mean within 1.96/√2000 ≈ 0.04 u of the expectation).
    assert abs(result.standard_potential.mean - reduction.standard_potential.nominal_value) < (
        0.1 * reduction.standard_potential.std_dev)


def test_coverage_interval_contains_the_mean_and_is_about_four_u_wide(result):
    summary = result.standard_potential
    assert summary.low < summary.mean < summary.high
    # Normal output: the 95 % interval is ±1.96 u (normal table); allow 10 %.
    assert (summary.high - summary.low) / (2 * 1.96 * summary.standard_deviation) == (
        pytest.approx(1.0, abs=0.10))
    points = result.points
    assert np.all((points["gamma_pm_low"] < points["gamma_pm_mean"])
                  & (points["gamma_pm_mean"] < points["gamma_pm_high"]))


def test_seed_makes_results_reproducible(run, reduction):
    first = monte_carlo(run, trials=200, seed=3, reduction=reduction)
    again = monte_carlo(run, trials=200, seed=3, reduction=reduction)
    other = monte_carlo(run, trials=200, seed=4, reduction=reduction)
    np.testing.assert_array_equal(first.standard_potential_samples,
                                  again.standard_potential_samples)
    np.testing.assert_array_equal(first.gamma_samples, again.gamma_samples)
    assert first.seed == 3
    assert not np.array_equal(first.standard_potential_samples,
                              other.standard_potential_samples)


def test_held_parameters_stay_held(tmp_path):
    # Five dilute readings: the reduction holds å (and says why); every trial must hold it too.
    m = MOLALITY[:5]
    emf = _exact_emf()[:5] + np.random.default_rng(1).normal(0.0, U_EMF_V, 5)
    short = read_run(write_run(tmp_path, m, emf, u_emf_V=U_EMF_V))
    reduction = reduce_run(short, "hueckel")
    result = monte_carlo(short, trials=300, seed=1, reduction=reduction)
    assert result.free_names == reduction.free_names
    assert set(result.held) == {p.name for p in reduction.parameters if p.fixed}
    if any(p.fixed and p.reason for p in reduction.parameters):
        assert any("Type B" in note for note in result.notes)


def test_unstated_reading_uncertainty_uses_the_residual_scatter(tmp_path):
    emf = _exact_emf() + np.random.default_rng(9).normal(0.0, U_EMF_V, MOLALITY.size)
    plain = read_run(write_run(tmp_path, MOLALITY, emf))
    reduction = reduce_run(plain, "hueckel")
    result = monte_carlo(plain, trials=1000, seed=2, reduction=reduction)
    assert result.reading_uncertainty == "residual standard deviation"
    assert any("residual standard deviation" in note for note in result.notes)
    # The linear u is scaled by the residual variance too: they agree (10 %).
    ratio = result.standard_potential.standard_deviation / reduction.standard_potential.std_dev
    assert ratio == pytest.approx(1.0, abs=0.10)


def test_molality_uncertainty_acts_like_a_reading_uncertainty(run, reduction):
    # The fit sees y_i = E_i + k_i ln m±,i = E° − k_i ln γ±,i, so a molality error moves y_i by
    # k_i u(m_i)/m_i exactly as a reading error would: it enters E° and γ± together. The linear
    # propagation that keeps this is D A V_y Aᵀ D with A = 1 sᵀ − I, D = diag(1/k),
    # V_y = diag(u²(E) + k² u²(m)/m²) (GUM, JCGM 100:2008, 5.2; derivation in this docstring).
    from activolt.chemistry.electrolytes import nernst_factor
    from activolt.fit.uncertainty import sensitivity_matrix
    from activolt.procedures.dilution import reduction_jacobian

    points = run.points.copy()
    points["u_molality_mol_kg"] = 1e-3 * points["molality_mol_kg"]  # 0.1 % relative
    uncertain = dataclasses.replace(run, points=points)
    result = monte_carlo(uncertain, trials=2000, seed=5, reduction=reduction)
    data = reduction.data
    jac = reduction_jacobian(reduction)
    s = sensitivity_matrix(jac, data.weights)[0]
    k = nernst_factor(HCL, 1, 298.15)
    v_y = U_EMF_V**2 + (k * 1e-3) ** 2
    a = np.outer(np.ones(s.size), s) - np.eye(s.size)
    u_ln_gamma = np.sqrt(np.diag(a @ a.T) * v_y) / k
    np.testing.assert_allclose(result.points["u_gamma_pm"] / result.points["gamma_pm_mean"],
                               u_ln_gamma, rtol=0.10)
    u_e0 = np.sqrt(np.sum(s**2) * v_y)
    assert result.standard_potential.standard_deviation == pytest.approx(u_e0, rel=0.10)


def test_temperature_uncertainty_widens_the_distribution(run, reduction):
    base = monte_carlo(run, trials=1000, seed=5, reduction=reduction)
    with_t = monte_carlo(run, trials=1000, seed=5, reduction=reduction, temperature_u_K=0.05)
    assert with_t.standard_potential.standard_deviation > (
        base.standard_potential.standard_deviation)
    assert with_t.temperature_u_K == 0.05 and any("u(T)" in note for note in with_t.notes)


def test_linear_model_is_solved_in_one_step(tmp_path):
    # The limiting law has E° as its only free parameter: the mean over trials of E° equals the
    # weighted mean of E + k ln(m± γ_DH) over the drawn readings (regression check, exact).
    m = np.array([1e-4, 2e-4, 5e-4, 1e-3])
    sqrt_m = np.sqrt(m)
    a_gamma = 3 * 0.3913  # A_φ at 25 °C, IAPWS-derived (reference-values.md)
    emf = emf_from_gamma(m, np.exp(-a_gamma * sqrt_m), E0_V)
    dilute = read_run(write_run(tmp_path, m, emf, u_emf_V=U_EMF_V))
    reduction = reduce_run(dilute, "limiting")
    result = monte_carlo(dilute, "limiting", trials=500, seed=0, reduction=reduction)
    # u(E°) of a weighted mean of four equal readings: u/2 (exact).
    assert result.standard_potential.standard_deviation == pytest.approx(U_EMF_V / 2, rel=0.1)
    readings = {line.component: line.u_V for line in reduction.budget}["readings"]
    assert readings == pytest.approx(U_EMF_V / 2, rel=1e-6)


def test_trials_follow_every_refinement_of_the_reduction(tmp_path):
    """The trials are drawn around the reduction's own prepared readings: with the vapour over
    the solution lowered to a_w p_w (a refinement of the gas correction), the Monte Carlo mean of
    E° moves with the reduction's E° (regression of the mechanism; the size of the shift is
    checked against its formula in test_cell_runs.py)."""
    harned = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
    emf = _exact_emf() + np.random.default_rng(2).normal(0.0, U_EMF_V, MOLALITY.size)
    rows = [f"{float(m)!r},{float(e)!r},{U_EMF_V!r}" for m, e in zip(MOLALITY, emf, strict=True)]
    (tmp_path / "harned.csv").write_text("molality_mol_kg,emf_V,u_emf_V\n" + "\n".join(rows)
                                         + "\n", encoding="utf-8")
    meta = f'cell = "{harned}"\ntemperature_C = 25.0\npressure_kPa = 101.325\n'
    results = {}
    for lowered in (False, True):
        (tmp_path / "harned.toml").write_text(
            meta + ("solute_vapour_lowering = true\n" if lowered else ""), encoding="utf-8")
        run = read_run(tmp_path / "harned.csv")
        reduction = reduce_run(run)
        result = monte_carlo(run, trials=4000, seed=1, reduction=reduction)
        results[lowered] = (reduction.standard_potential.nominal_value,
                            result.standard_potential.mean)
    fit_shift = results[True][0] - results[False][0]
    mc_shift = results[True][1] - results[False][1]
    assert abs(fit_shift) > 1e-8  # the refinement moves E° by about 0.04 µV here
    # The same seed draws the same noise in both: the means differ by the refinement alone.
    assert mc_shift == pytest.approx(fit_shift, rel=0.05)


def test_coverage_interval_rule():
    # JCGM 101:2008, 7.7: M = 1000, p = 0.95 → q = 950, r = 25: [y_(25), y_(975)].
    assert coverage_interval(np.arange(1.0, 1001.0)) == (25.0, 975.0)
    low, high = coverage_interval(np.random.default_rng(0).normal(size=200_000))
    # Normal quantiles ±1.960 (any table); 200 000 samples give them to about ±0.01.
    assert low == pytest.approx(-1.960, abs=0.02) and high == pytest.approx(1.960, abs=0.02)
    with pytest.raises(ValueError, match="two samples"):
        coverage_interval(np.array([1.0]))


def test_errors(run, reduction):
    with pytest.raises(ValueError, match="at least 10"):
        monte_carlo(run, trials=5, reduction=reduction)
    with pytest.raises(ValueError, match="temperature_u_K"):
        monte_carlo(run, trials=100, temperature_u_K=-1.0, reduction=reduction)


def test_first_block_draws_as_the_whole_array_version(run, reduction):
    # Regression pin: E° of the first three trials and γ± of the first trial (most dilute and
    # most concentrated point), produced by the version that drew all trials as one array,
    # before the trials were split into blocks. Up to 10 000 trials the numbers must not move.
    result = monte_carlo(run, trials=200, seed=3, reduction=reduction)
    np.testing.assert_allclose(result.standard_potential_samples[:3],
                               [0.22234550759206576, 0.22233522477235607, 0.22235556254741556],
                               rtol=1e-10)  # the same draws; the fit itself converges to ~1e-12 V
    np.testing.assert_allclose(result.gamma_samples[0, [0, -1]],
                               [0.9643030425400032, 0.8040623192077184], rtol=1e-10)


def test_blocks_extend_a_run_without_changing_its_start(run, reduction):
    # 10 010 trials: the first block is the 10 000-trial run, the second an independent stream.
    ten_thousand = monte_carlo(run, trials=10_000, seed=5, reduction=reduction)
    longer = monte_carlo(run, trials=10_010, seed=5, reduction=reduction)
    np.testing.assert_array_equal(longer.standard_potential_samples[:10_000],
                                  ten_thousand.standard_potential_samples)
    tail = longer.standard_potential_samples[10_000:]
    assert tail.size == 10 and np.unique(tail).size == 10
    assert not np.isin(tail, ten_thousand.standard_potential_samples[:10]).any()


def test_memory_does_not_grow_with_the_trials_beyond_the_samples_kept(run, reduction):
    # 40 000 trials: beyond the E° and γ± samples kept (3.5 MB), the peak stays that of one
    # block, 27 MB; the whole-array version needed 86 MB here, growing with the trials to
    # gigabytes at 10⁶ (regression pins of both versions, measured with tracemalloc).
    import tracemalloc

    tracemalloc.start()
    try:
        result = monte_carlo(run, trials=40_000, seed=1, reduction=reduction)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    kept = result.gamma_samples.nbytes + result.standard_potential_samples.nbytes
    assert peak - kept < 50e6


class _Bar:
    def __init__(self, stop_after: int | None = None):
        self.updates: list[int] = []
        self.closed = False
        self.stop_after = stop_after

    def update(self, count: int) -> None:
        self.updates.append(count)
        if self.stop_after is not None and len(self.updates) >= self.stop_after:
            raise KeyboardInterrupt

    def close(self) -> None:
        self.closed = True


def test_progress_is_shown_only_when_asked_or_on_a_terminal(run, reduction, monkeypatch):
    import activolt.procedures.montecarlo as mc

    bars: list[_Bar] = []
    monkeypatch.setattr(mc, "_progress_bar", lambda trials: bars.append(_Bar()) or bars[-1])
    monte_carlo(run, trials=10_010, seed=2, reduction=reduction)  # stderr is not a terminal
    assert bars == []
    monte_carlo(run, trials=10_010, seed=2, reduction=reduction, progress=True)
    assert bars[0].updates == [10_000, 10] and bars[0].closed
    monte_carlo(run, trials=500, seed=2, reduction=reduction, progress=True)  # one block: short
    assert len(bars) == 1


def test_an_interrupted_run_closes_its_progress_bar(run, reduction, monkeypatch):
    import activolt.procedures.montecarlo as mc

    bar = _Bar(stop_after=1)
    monkeypatch.setattr(mc, "_progress_bar", lambda trials: bar)
    with pytest.raises(KeyboardInterrupt):
        monte_carlo(run, trials=10_010, seed=2, reduction=reduction, progress=True)
    assert bar.closed
