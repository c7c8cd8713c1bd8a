"""Leverage, leave-one-out residuals, Cook's distance and point flags.

The laws checked: Σ h_ii = P (trace of a projector); t_i and D_i equal their definitions by an
explicit refit without point i (Belsley, Kuh & Welsch 1980, ch. 2; Cook 1977, eq. 5). The EMF
runs are synthetic: E° = 0.22234 V (Bates & Bower 1954, Table 1) and HCl γ± from the Hückel
equation with å = 4.3 Å, b = 0.27 kg/mol (the truth of tests/test_uncertainty.py; a regression
pin of this project's fit to Robinson & Stokes 1959, not a literature value).
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from synthetic import emf_from_gamma, write_run

from activolt.activity.hueckel import ln_gamma
from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.fit.diagnostics import (
    cooks_distance,
    flag_points,
    leverage,
    log_run_probabilities,
    outlier_threshold,
    point_diagnostics,
    point_diagnostics_of_many,
    runs_test,
    serial_correlation_test,
    serial_moments,
    studentized_residuals,
)
from activolt.fit.least_squares import linear_least_squares, weighted_least_squares
from activolt.physics.water import debye_hueckel_constants

HCL = parse_electrolyte("HCl")
MOLALITY = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0])
E0_V = 0.22234  # Bates & Bower (1954), Table 1, 25 °C
TRUTH = {"a_angstrom": 4.3, "b_kg_mol": 0.27}
U_EMF_V = 2e-5  # 0.02 mV, a careful reading (common practice for these cells)
_CONSTANTS = debye_hueckel_constants(np.full(MOLALITY.size, 298.15))
_K = nernst_factor(HCL, 1, 298.15)


def _emf(p) -> np.ndarray:
    ln_g = ln_gamma(HCL, MOLALITY, _CONSTANTS, {"a_angstrom": p["a"], "b_kg_mol": p["b"]})
    return p["e0"] - _K * (np.log(HCL.mean_molality(MOLALITY)) + ln_g)


def _exact_emf() -> np.ndarray:
    return _emf({"e0": E0_V, "a": TRUTH["a_angstrom"], "b": TRUTH["b_kg_mol"]})


def _fit_emf(emf: np.ndarray):
    return weighted_least_squares(_emf, {"e0": 0.222, "a": 4.0, "b": 0.2}, emf,
                                  np.full(emf.size, U_EMF_V**-2), bounds={"a": (0.5, 20.0)})


def _line(seed: int, n: int = 12, weighted: bool = True):
    rng = np.random.default_rng(seed)
    x = np.linspace(0.0, 3.0, n) ** 1.5
    u = 0.1 + 0.05 * x
    y = 2.0 - 0.7 * x + rng.normal(0.0, u)
    design = np.column_stack([np.ones_like(x), x, x**2])
    weights = u**-2 if weighted else None
    return design, y, weights


def test_leverage_sums_to_the_number_of_parameters():
    design, _, weights = _line(1)
    h = leverage(design, weights)
    assert h.sum() == pytest.approx(3.0, rel=1e-12)
    assert np.all((h > 0) & (h < 1))
    # The Hückel EMF Jacobian as well (three parameters).
    fit = _fit_emf(_exact_emf())
    assert leverage(fit.jacobian, fit.weights).sum() == pytest.approx(3.0, rel=1e-10)


@pytest.mark.parametrize("weighted", [True, False])
def test_studentized_residuals_equal_an_explicit_leave_one_out_refit(weighted):
    design, y, weights = _line(2, weighted=weighted)
    fit = linear_least_squares(design, y, weights)
    t = studentized_residuals(design, fit.weights, fit.residuals, fit.covariance_scaled)
    d = cooks_distance(design, fit.weights, fit.residuals, fit.covariance_scaled)
    n, p = design.shape
    for i in range(n):
        keep = np.arange(n) != i
        without = linear_least_squares(design[keep], y[keep],
                                       None if weights is None else weights[keep],
                                       scale_covariance=fit.covariance_scaled)
        prediction = design[i] @ without.value_array
        # u²(y_i − ŷ_(i)) = s_(i)² (1/w_i + x_i (X_(i)ᵀ W X_(i))⁻¹ x_iᵀ), s = 1 when stated.
        s2 = without.reduced_chi2 if fit.covariance_scaled else 1.0
        unscaled = without.covariance / (s2 if fit.covariance_scaled else 1.0)
        variance = s2 * (1.0 / fit.weights[i] + design[i] @ unscaled @ design[i])
        assert t[i] == pytest.approx((y[i] - prediction) / np.sqrt(variance), rel=1e-9)
        shift = fit.value_array - without.value_array
        normal = design.T @ (design * fit.weights[:, None])
        s2_full = fit.reduced_chi2 if fit.covariance_scaled else 1.0
        assert d[i] == pytest.approx(shift @ normal @ shift / (p * s2_full), rel=1e-9)


def test_outlier_threshold_values():
    # Normal and Student t quantiles (any table, e.g. NIST/SEMATECH e-Handbook, 1.3.6.7):
    # z(0.9975) = 2.807; t(0.9975, 6) = 4.317.
    assert outlier_threshold(10, 3, False) == pytest.approx(2.807, abs=1e-3)
    assert outlier_threshold(10, 3, True) == pytest.approx(4.317, abs=1e-3)
    with pytest.raises(ValueError, match="N − P − 1"):
        outlier_threshold(4, 3, True)


@pytest.mark.parametrize("position", [0, 5, 9], ids=["dilute", "middle", "concentrated"])
@pytest.mark.parametrize("seed", [11, 12, 13, 14, 15])
def test_gross_reading_error_is_flagged_alone(position, seed):
    emf = _exact_emf() + np.random.default_rng(seed).normal(0.0, U_EMF_V, MOLALITY.size)
    emf[position] += 40 * U_EMF_V
    fit = _fit_emf(emf)
    flags = flag_points(fit.jacobian, fit.weights, fit.residuals, fit.covariance_scaled)
    assert flags[position] is not None and "studentized residual" in flags[position]
    others = [i for i, f in enumerate(flags) if f is not None and i != position]
    assert len(others) <= 1, flags


def test_one_pass_test_would_drag_neighbours_under_suspicion():
    # Why the flags are sequential: with the outlier still in, its pull makes some neighbour's
    # one-pass |t| exceed the threshold in at least one of these runs (measured, regression pin).
    dragged = 0
    for seed in range(11, 16):
        emf = _exact_emf() + np.random.default_rng(seed).normal(0.0, U_EMF_V, MOLALITY.size)
        emf[9] += 40 * U_EMF_V
        fit = _fit_emf(emf)
        t = studentized_residuals(fit.jacobian, fit.weights, fit.residuals, False)
        dragged += int(np.sum(np.abs(np.delete(t, 9)) > outlier_threshold(10, 3, False)))
    assert dragged >= 1


def test_clean_runs_are_rarely_flagged():
    # 5 % family-wise level for outliers, plus the influence rule: over 40 clean runs expect
    # about 2–4 runs with any flag; allow up to 8 (binomial tail; regression pin of the rule).
    flagged_runs = 0
    for seed in range(100, 140):
        emf = _exact_emf() + np.random.default_rng(seed).normal(0.0, U_EMF_V, MOLALITY.size)
        fit = _fit_emf(emf)
        flags = flag_points(fit.jacobian, fit.weights, fit.residuals, fit.covariance_scaled)
        flagged_runs += any(f is not None for f in flags)
    assert flagged_runs <= 8


def test_flags_from_a_reduction(tmp_path):
    # Through the reduction's own fit (stated u(E)), an outlier in the middle of the run.
    from activolt.data.runs import read_run
    from activolt.procedures.dilution import reduce_run, reduction_jacobian

    gamma = np.exp(ln_gamma(HCL, MOLALITY, _CONSTANTS, TRUTH))
    emf = emf_from_gamma(MOLALITY, gamma, E0_V)
    emf = emf + np.random.default_rng(5).normal(0.0, U_EMF_V, MOLALITY.size)
    emf[4] += 40 * U_EMF_V
    reduction = reduce_run(read_run(write_run(tmp_path, MOLALITY, emf, u_emf_V=U_EMF_V)))
    data = reduction.data
    jac = reduction_jacobian(reduction)
    residuals = reduction.points["residual_V"].to_numpy()
    flags = flag_points(jac, data.weights, residuals, reduction.statistics.covariance_scaled)
    assert flags[4] is not None
    assert sum(f is not None for f in flags) <= 2


def test_straight_line_with_unit_weights_flags_the_outlier():
    design, y, _ = _line(4, n=15)
    y = y.copy()
    y[7] += 5.0  # 5 against a scatter of 0.1–0.35
    fit = linear_least_squares(design, y)
    flags = flag_points(design, fit.weights, fit.residuals, covariance_scaled=True)
    assert flags[7] is not None
    assert sum(f is not None for f in flags) <= 2


def test_inputs():
    design, y, weights = _line(3)
    fit = linear_least_squares(design, y, weights)
    as_frame = pd.DataFrame(design)
    np.testing.assert_allclose(leverage(as_frame, pd.Series(weights)), leverage(design, weights))
    with pytest.raises(ValueError, match="expected"):
        leverage(design, weights[:-1])
    with pytest.raises(ValueError, match="positive"):
        leverage(design, -weights)
    with pytest.raises(ValueError, match="NaN"):
        studentized_residuals(design, weights, np.full(y.size, np.nan), False)
    with pytest.raises(ValueError, match="no degree of freedom"):
        leverage(design[:3], weights[:3])
    assert len(flag_points(design, weights, fit.residuals, False)) == y.size


# --- sequences too long for drawing orderings or for exact integer run counts -------------------

def test_serial_moments_equal_the_average_over_every_ordering():
    """Mean and variance of Σ x_i x_{i−1} over all 720 orderings, counted here directly."""
    x = np.array([0.3, -1.2, 2.0, 0.1, -0.7, 1.5])
    totals = np.array([np.sum(np.array(p)[1:] * np.array(p)[:-1])
                       for p in itertools.permutations(x)])
    mean, variance = serial_moments(x)
    assert mean == pytest.approx(totals.mean(), rel=1e-12)
    assert variance == pytest.approx(totals.var(), rel=1e-12)


@pytest.mark.parametrize("phi", [0.0, 0.05, 0.1])
def test_serial_correlation_normal_form_agrees_with_orderings(phi):
    """Above ``exact_up_to`` values the probability is the normal form with the exact
    permutation moments; on 1 500 values it agrees with 4 000 random orderings within their
    own scatter (√(p(1−p)/4000) ≤ 0.008)."""
    rng = np.random.default_rng(11)
    noise = rng.normal(size=1500)
    x = np.empty_like(noise)
    x[0] = noise[0]
    for i in range(1, x.size):  # AR(1): serially correlated by φ
        x[i] = phi * x[i - 1] + noise[i]
    rho_normal, p_normal = serial_correlation_test(x, exact_up_to=1000)
    rho_orderings, p_orderings = serial_correlation_test(x, exact_up_to=10_000)
    assert rho_normal == rho_orderings
    assert p_normal == pytest.approx(p_orderings, abs=0.025)


def test_runs_test_of_a_long_sequence_matches_its_normal_approximation():
    """n = 20 000 signs: the exact probability (log-gamma form) and 2Φ(−|z|) agree to
    O(1/√n) (Wald & Wolfowitz 1940: R is asymptotically normal)."""
    from scipy.special import ndtr

    signs = np.random.default_rng(4).choice([-1.0, 1.0], size=20_000)
    t = runs_test(signs)
    assert t.p_value_two_sided == pytest.approx(2.0 * ndtr(-abs(t.z)), abs=0.01)
    counts = np.arange(2, t.n_positive + t.n_negative + 1)
    total = np.sum(np.exp(log_run_probabilities(counts, t.n_positive, t.n_negative)))
    assert total == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize("size", [4, 9, 20, 57, 150])
def test_serial_correlation_probability_is_that_of_shuffling_the_values(size):
    """The permutation probability is the share of the 4 000 orderings that shuffling the
    values themselves with the generator of seed 0 gives (the documented procedure, written
    out here), for any sequence of the length and however often the test is repeated."""
    walk = np.cumsum(np.random.default_rng(size).normal(size=size))
    for x in (walk, walk[::-1].copy(), np.sin(np.arange(size)), walk):
        shuffled = np.random.default_rng(0).permuted(np.broadcast_to(x, (4000, size)), axis=1)
        rho = np.sum(x[1:] * x[:-1]) / np.sum(x**2)
        rho_random = np.sum(shuffled[:, 1:] * shuffled[:, :-1], axis=1) / np.sum(x**2)
        expected = (np.sum(rho_random >= rho - 1e-15) + 1) / 4001
        got_rho, got_p = serial_correlation_test(x)
        assert got_rho == pytest.approx(rho, rel=1e-12)
        assert got_p == expected


def test_leverage_of_a_fit_is_the_same_on_every_call_and_not_shared():
    """The leverage of one design, asked for again, is the same numbers; changing the array
    returned does not change the next answer."""
    j = np.column_stack([np.ones(6), np.arange(6.0), np.arange(6.0) ** 2])
    w = np.linspace(1.0, 2.0, 6)
    first = leverage(j, w)
    expected = first.copy()
    first[:] = -1.0
    again = leverage(j, w)
    np.testing.assert_array_equal(again, expected)
    assert np.sum(again) == pytest.approx(3.0, rel=1e-12)  # trace of the projector: P
    e = np.array([0.1, -0.2, 0.05, 0.3, -0.1, 0.0])
    t = studentized_residuals(j, w, e, covariance_scaled=False)
    h = np.diag(j @ np.linalg.inv(j.T @ (w[:, None] * j)) @ (j * w[:, None]).T)
    np.testing.assert_allclose(h, expected, rtol=1e-12)
    assert np.all(np.isfinite(t))


@settings(max_examples=60, deadline=None)
@given(n=st.integers(4, 25), p=st.integers(1, 3), scaled=st.booleans(),
       seed=st.integers(0, 2**32 - 1), outlier=st.floats(0.0, 50.0))
def test_point_diagnostics_equal_the_four_functions(n, p, scaled, seed, outlier):
    """All four diagnostics at once are the numbers the four functions give one by one, for
    any design, weights and residuals (with or without a gross error)."""
    if scaled and n - p - 1 < 1:
        return
    rng = np.random.default_rng(seed)
    j = rng.normal(size=(n, p))
    w = rng.uniform(0.5, 2.0, n)
    r = rng.normal(size=n)
    r[rng.integers(n)] += outlier
    found = point_diagnostics(j, w, r, scaled)
    np.testing.assert_array_equal(found.leverage, leverage(j, w))
    np.testing.assert_array_equal(found.studentized_residual,
                                  studentized_residuals(j, w, r, scaled))
    np.testing.assert_array_equal(found.cooks_distance, cooks_distance(j, w, r, scaled))
    assert found.flags == flag_points(j, w, r, scaled)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.integers(5, 9), st.integers(1, 3), st.booleans(), st.booleans(),
                          st.sampled_from([0.0, 8.0, 40.0]), st.integers(0, 2**32 - 1)),
                min_size=1, max_size=12))
def test_diagnostics_of_many_fits_equal_each_fit_alone(specs):
    # Fits of several shapes, weights stated or scaled, designs in row- or column-major order,
    # some with a reading far off: each fit's leverages, studentized residuals, Cook's
    # distances and flags worked out with the others must be those of point_diagnostics alone,
    # bit for bit (regression pin: the batched path against the one-fit path).
    jacobians, weights, residuals, scaled = [], [], [], []
    for n, p, column_major, scale, offset, seed in specs:
        rng = np.random.default_rng(seed)
        x = np.sort(rng.uniform(0.0, 1.0, n))
        jacobian = np.column_stack([x**k for k in range(p)])
        jacobians.append(np.asfortranarray(jacobian) if column_major else jacobian)
        weights.append(rng.uniform(0.5, 2.0, n))
        r = rng.normal(0.0, 1.0, n)
        r[n // 2] += offset
        residuals.append(r - jacobian @ np.linalg.lstsq(jacobian, r, rcond=None)[0])
        scaled.append(scale)
    many = point_diagnostics_of_many(jacobians, weights, residuals, scaled)
    for k, found in enumerate(many):
        alone = point_diagnostics(jacobians[k], weights[k], residuals[k], scaled[k])
        assert np.array_equal(found.leverage, alone.leverage)
        assert np.array_equal(found.studentized_residual, alone.studentized_residual)
        assert np.array_equal(found.cooks_distance, alone.cooks_distance)
        assert found.flags == alone.flags
