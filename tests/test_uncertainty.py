"""Uncertainty of γ±: propagation with the E°–reading correlation, checked by Monte Carlo.

The Monte Carlo here is the reference (GUM Supplement 1, JCGM 101:2008, §7): the same synthetic
run is re-measured many times with the stated reading noise and reduced again; the scatter of
each γ± is its true standard uncertainty. The truth is the Hückel equation with å = 4.3 Å and
b = 0.27 kg/mol, close to the HCl values a fit of Robinson & Stokes (1959, Appendix 8.10) gives
(regression pin of this project's fit, not a literature value); E° = 0.22234 V (Bates & Bower
1954, Table 1).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity.hueckel import ln_gamma
from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.data.runs import read_run
from activolt.fit.uncertainty import (
    ln_gamma_covariance,
    sensitivity_matrices,
    student_t_factor,
)
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run, sensitivity_matrix

HCL = parse_electrolyte("HCl")
MOLALITY = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0])
U_EMF_V = 2e-5
E0_V = 0.22234  # Bates & Bower (1954), Table 1, 25 °C
TRUTH = {"a_angstrom": 4.3, "b_kg_mol": 0.27}


def _truth_gamma() -> np.ndarray:
    constants = debye_hueckel_constants(np.full(MOLALITY.size, 298.15))
    return np.exp(ln_gamma(HCL, MOLALITY, constants, TRUTH))


@pytest.fixture(scope="module")
def monte_carlo(tmp_path_factory):
    gamma = _truth_gamma()
    exact = emf_from_gamma(MOLALITY, gamma, E0_V)
    folder = tmp_path_factory.mktemp("mc")
    rng = np.random.default_rng(2024)
    run = read_run(write_run(folder, MOLALITY, exact + rng.normal(0, U_EMF_V, MOLALITY.size),
                             u_emf_V=U_EMF_V))
    first = reduce_run(run)
    trials = []
    for _ in range(300):
        points = run.points.copy()
        points["emf_V"] = exact + rng.normal(0.0, U_EMF_V, MOLALITY.size)
        trial = reduce_run(dataclasses.replace(run, points=points))
        trials.append(np.append(trial.points["gamma_pm"].to_numpy(),
                                trial.standard_potential.nominal_value))
    return first, np.array(trials)


def test_correlated_propagation_matches_monte_carlo(monte_carlo):
    first, trials = monte_carlo
    observed = trials[:, :-1].std(axis=0, ddof=1)
    predicted = first.points["u_gamma_pm"].to_numpy()
    # 300 trials: the standard deviation itself is known to about 1/√(2·299) ≈ 4 %; allow 15 %.
    np.testing.assert_allclose(predicted, observed, rtol=0.15)
    # E° as well.
    assert first.standard_potential.std_dev == pytest.approx(trials[:, -1].std(ddof=1), rel=0.15)


def test_ignoring_the_correlation_gives_a_different_and_wrong_answer(monte_carlo):
    first, trials = monte_carlo
    observed = trials[:, :-1].std(axis=0, ddof=1)
    data_k = nernst_factor(HCL, 1, np.full(MOLALITY.size, 298.15))
    # Rebuild the naive propagation from the reduction's own Jacobian.
    from activolt.procedures.dilution import reduction_jacobian

    data = first.data
    jac = reduction_jacobian(first)
    sensitivity = sensitivity_matrix(jac, data.weights)
    variance = np.full(MOLALITY.size, U_EMF_V**2)
    zeros = np.zeros(MOLALITY.size)
    # ln γ± = (E° − E)/k − ln m±: ∂/∂E° = 1/k, ∂/∂E_i = −1/k.
    g_p = np.zeros((MOLALITY.size, sensitivity.shape[0]))
    g_p[:, 0] = 1.0 / data_k
    naive = np.sqrt(np.diag(ln_gamma_covariance(g_p, -1.0 / data_k, sensitivity, variance,
                                                zeros, keep_correlation=False)))
    correct = np.sqrt(np.diag(ln_gamma_covariance(g_p, -1.0 / data_k, sensitivity, variance,
                                                  zeros)))
    gamma = first.points["gamma_pm"].to_numpy()
    # the same propagation, up to the finite-difference step of the Jacobian
    np.testing.assert_allclose(correct * gamma, first.points["u_gamma_pm"], rtol=1e-6)
    # At the dilute end, where E° leans on the same readings, the naive answer is far off.
    ratio = naive * gamma / observed
    assert ratio.max() > 1.3 or ratio.min() < 0.7
    assert np.max(np.abs(correct * gamma / observed - 1)) < 0.15


def test_student_t_factor():
    # t(0.975, ν): 12.706 (ν = 1), 2.228 (ν = 10), 1.960 (ν = ∞); any Student t table, e.g.
    # NIST/SEMATECH e-Handbook of Statistical Methods, Table 1.3.6.7.2.
    assert student_t_factor(1) == pytest.approx(12.706, abs=1e-3)
    assert student_t_factor(10) == pytest.approx(2.228, abs=1e-3)
    assert student_t_factor(0) == pytest.approx(1.960, abs=1e-3)


def test_sensitivity_of_a_straight_line_intercept():
    # Ordinary least squares through x = 0, 1, 2: intercept = (5y0 + 2y1 − y2)/6 (hand
    # derivation from the normal equations; common practice).
    j = np.array([[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]])
    np.testing.assert_allclose(sensitivity_matrix(j, np.ones(3))[0], [5 / 6, 2 / 6, -1 / 6])


def test_molality_uncertainty_by_effective_variance_matches_monte_carlo(tmp_path):
    # u(m) = 0.1 % of m (a typical gravimetric dilution; common practice) enters the fit as an
    # effective reading variance (Orear 1982, Am. J. Phys. 50, 912); the GUM-S1 Monte Carlo of
    # the whole reduction (JCGM 101:2008) is the reference, within 10 %.
    from activolt.procedures.montecarlo import monte_carlo

    gamma = _truth_gamma()
    emf = emf_from_gamma(MOLALITY, gamma, E0_V)
    emf = emf + np.random.default_rng(8).normal(0, U_EMF_V, MOLALITY.size)
    path = write_run(tmp_path, MOLALITY, emf, u_emf_V=U_EMF_V)
    lines = path.read_text().splitlines()
    lines = [lines[0] + ",u_molality_mol_kg"] + [
        f"{line},{float(line.split(',')[0]) * 1e-3!r}" for line in lines[1:]]
    path.write_text("\n".join(lines) + "\n")
    reduction = reduce_run(read_run(path))
    mc = monte_carlo(reduction.run, trials=4000, seed=3, reduction=reduction)
    assert reduction.standard_potential.std_dev == pytest.approx(
        mc.standard_potential.standard_deviation, rel=0.10)
    # γ± here is the value on the curve at the stated molality; the Monte Carlo follows the
    # solution actually made. They differ by (∂ ln γ±/∂m) u(m), which shows only at the
    # concentrated end: compare up to 0.5 mol/kg.
    dilute = MOLALITY <= 0.5
    np.testing.assert_allclose(reduction.points["u_gamma_pm"][dilute],
                               mc.points["u_gamma_pm"][dilute], rtol=0.10)
    # and the molality uncertainty matters here: u(E°) grows by more than a third
    without = reduce_run(read_run(write_run(tmp_path, MOLALITY, emf, u_emf_V=U_EMF_V,
                                            stem="plain")))
    assert reduction.standard_potential.std_dev > 1.33 * without.standard_potential.std_dev


def test_temperature_and_pressure_budget_equals_a_refit(tmp_path):
    """The budget's sensitivity to the run temperature and the barometric pressure (one linear
    step S δr) equals refitting the run with the input shifted (GUM 5.1.3: both are first-order
    sensitivity coefficients; the refit is the independent check)."""
    harned = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
    constants = debye_hueckel_constants(np.full(MOLALITY.size, 298.15))
    emf = emf_from_gamma(MOLALITY, np.exp(ln_gamma(HCL, MOLALITY, constants, TRUTH)), 0.2222)
    emf = emf + np.random.default_rng(8).normal(0.0, U_EMF_V, MOLALITY.size)
    rows = [f"{float(m)!r},{float(e)!r},{U_EMF_V!r}" for m, e in zip(MOLALITY, emf, strict=True)]
    (tmp_path / "run.csv").write_text("molality_mol_kg,emf_V,u_emf_V\n" + "\n".join(rows) + "\n")
    meta = (f'cell = "{harned}"\ntemperature_C = 25.0\npressure_kPa = 101.0\n'
            "u_temperature_K = 0.05\nu_pressure_kPa = 0.1\n")
    (tmp_path / "run.toml").write_text(meta)
    reduction = reduce_run(read_run(tmp_path / "run.csv"))
    budget = {line.component: line.u_V for line in reduction.budget}
    for component, key, step, u in (("temperature", "temperature_C", 0.01, 0.05),
                                    ("barometric pressure", "pressure_kPa", 0.01, 0.1)):
        value = 25.0 if key == "temperature_C" else 101.0
        shifted_meta = meta.replace(f"{key} = {value}", f"{key} = {value + step}")
        (tmp_path / "shifted.csv").write_text((tmp_path / "run.csv").read_text())
        (tmp_path / "shifted.toml").write_text(shifted_meta)
        refit = reduce_run(read_run(tmp_path / "shifted.csv"))
        slope = (refit.standard_potential.nominal_value
                 - reduction.standard_potential.nominal_value) / step
        assert budget[component] == pytest.approx(abs(slope) * u, rel=0.02), component


def test_u_gamma_is_the_diagonal_of_the_full_covariance(tmp_path):
    """u(γ±) in the points table (computed in O(N·P²)) is the square root of the diagonal of
    the full covariance built on request — with u(T) and a held convention both contributing
    (regression of the two routes against each other)."""
    constants = debye_hueckel_constants(np.full(MOLALITY.size, 298.15))
    emf = emf_from_gamma(MOLALITY, np.exp(ln_gamma(HCL, MOLALITY, constants, TRUTH)), 0.2222)
    emf = emf + np.random.default_rng(9).normal(0.0, U_EMF_V, MOLALITY.size)
    path = write_run(tmp_path, MOLALITY, emf, u_emf_V=U_EMF_V)
    path.with_suffix(".toml").write_text(path.with_suffix(".toml").read_text()
                                         + "u_temperature_K = 0.05\n")
    reduction = reduce_run(read_run(path), fixed={"b_kg_mol": 0.27})
    full = reduction.gamma_covariance()
    used = reduction.points["flag"].isna()
    np.testing.assert_allclose(np.sqrt(np.diag(full)),
                               reduction.points.loc[used, "u_gamma_pm"], rtol=1e-10)
    assert full.shape == (MOLALITY.size, MOLALITY.size)


def _layout(array: np.ndarray) -> tuple[bool, bool, bytes]:
    return array.flags.c_contiguous, array.flags.f_contiguous, array.tobytes()


def test_sensitivity_matrices_equal_each_alone_bit_for_bit():
    """Jacobians laid out row-major, column-major (as the engine gives them) and strided, of
    several shapes and scales, weights from 1 to 10¹⁰: each S as sensitivity_matrix gives it
    alone, memory order too."""
    rng = np.random.default_rng(21)
    jacobians, weights = [], []
    for k in range(300):
        n, p = [(15, 3), (15, 2), (6, 4), (40, 3)][k % 4]
        j = rng.standard_normal((n, p)) * 10.0 ** rng.integers(-6, 6, size=p)
        if k % 3 == 1:
            j = np.asfortranarray(j)
        elif k % 7 == 2:
            j = np.repeat(j, 2, axis=0)[::2]  # (neither row- nor column-major)
        jacobians.append(j)
        weights.append(10.0 ** rng.uniform(0.0, 10.0, n) if k % 2 else np.ones(n))
    together = sensitivity_matrices(jacobians, weights)
    alone = [sensitivity_matrix(j, w) for j, w in zip(jacobians, weights, strict=True)]
    assert [_layout(s) for s in together] == [_layout(s) for s in alone]
    # (the comparison can fail: one unit in the last place apart)
    changed = alone[0].copy()
    changed[0, 0] = np.nextafter(changed[0, 0], np.inf)
    assert _layout(changed) != _layout(together[0])
