"""The fitting core against the NIST Statistical Reference Datasets (StRD), linear regression.

Data and certified values: NIST StRD, Norris (1990s), certified values, and NIST StRD, Longley
(1967 data), certified values (https://www.itl.nist.gov/div898/strd/lls/), read from stored
copies of the NIST files as reprinted in public test suites (Norris: a GAMS model library test
and a SciPy test; Longley: a GSL binding test and an Apache Commons Math test — each pair agrees
value for value). NIST certifies 15 significant digits; the tolerances below state what each path
reaches.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.errors import FitError
from activolt.fit.least_squares import (
    central_difference_jacobian,
    information_criteria,
    linear_least_squares,
    straight_lines,
    weighted_least_squares,
)

# NIST StRD, Norris (1990s), data: 36 (x, y) pairs, ozone monitor calibration.
NORRIS_X = np.array([
    0.2, 337.4, 118.2, 884.6, 10.1, 226.5, 666.3, 996.3, 448.6, 777.0, 558.2, 0.4, 0.6, 775.5,
    666.9, 338.0, 447.5, 11.6, 556.0, 228.1, 995.8, 887.6, 120.2, 0.3, 0.3, 556.8, 339.1, 887.2,
    999.0, 779.0, 11.1, 118.3, 229.2, 669.1, 448.9, 0.5,
])
NORRIS_Y = np.array([
    0.1, 338.8, 118.1, 888.0, 9.2, 228.1, 668.5, 998.5, 449.1, 778.9, 559.2, 0.3, 0.1, 778.1,
    668.8, 339.3, 448.9, 10.8, 557.7, 228.3, 998.0, 888.8, 119.6, 0.3, 0.6, 557.6, 339.3, 888.0,
    998.5, 778.9, 10.2, 117.6, 228.9, 668.4, 449.2, 0.2,
])
# NIST StRD, Norris (1990s), certified values: estimates, standard deviations of the estimates,
# residual standard deviation, residual sum of squares (34 degrees of freedom).
NORRIS_ESTIMATES = (-0.262323073774029, 1.00211681802045)
NORRIS_ERRORS = (0.232818234301152, 0.429796848199937e-03)
NORRIS_RESIDUAL_SD = 0.884796396144373
NORRIS_RSS = 26.6173985294224

# NIST StRD, Longley (1967), data: y, x1 … x6 (16 observations).
LONGLEY = np.array([
    [60323, 83.0, 234289, 2356, 1590, 107608, 1947],
    [61122, 88.5, 259426, 2325, 1456, 108632, 1948],
    [60171, 88.2, 258054, 3682, 1616, 109773, 1949],
    [61187, 89.5, 284599, 3351, 1650, 110929, 1950],
    [63221, 96.2, 328975, 2099, 3099, 112075, 1951],
    [63639, 98.1, 346999, 1932, 3594, 113270, 1952],
    [64989, 99.0, 365385, 1870, 3547, 115094, 1953],
    [63761, 100.0, 363112, 3578, 3350, 116219, 1954],
    [66019, 101.2, 397469, 2904, 3048, 117388, 1955],
    [67857, 104.6, 419180, 2822, 2857, 118734, 1956],
    [68169, 108.4, 442769, 2936, 2798, 120445, 1957],
    [66513, 110.8, 444546, 4681, 2637, 121950, 1958],
    [68655, 112.6, 482704, 3813, 2552, 123366, 1959],
    [69564, 114.2, 502601, 3931, 2514, 125368, 1960],
    [69331, 115.7, 518173, 4806, 2572, 127852, 1961],
    [70551, 116.9, 554894, 4007, 2827, 130081, 1962],
], dtype=float)
# NIST StRD, Longley (1967), certified values: B0 … B6 and their standard deviations; residual
# standard deviation 304.854073561965 with 9 degrees of freedom.
LONGLEY_ESTIMATES = (
    -3482258.63459582, 15.0618722713733, -0.358191792925910e-01, -2.02022980381683,
    -1.03322686717359, -0.511041056535807e-01, 1829.15146461355,
)
LONGLEY_ERRORS = (
    890420.383607373, 84.9149257747669, 0.334910077722432e-01, 0.488399681651699,
    0.214274163161675, 0.226073200069370, 455.478499142212,
)
LONGLEY_RESIDUAL_SD = 304.854073561965


def _norris_design() -> np.ndarray:
    return np.column_stack([np.ones_like(NORRIS_X), NORRIS_X])


def _longley_design() -> np.ndarray:
    return np.column_stack([np.ones(len(LONGLEY)), LONGLEY[:, 1:]])


@pytest.mark.literature
def test_norris_linear_path_reproduces_certified_values():
    fit = linear_least_squares(_norris_design(), NORRIS_Y, names=("b0", "b1"))
    np.testing.assert_allclose(fit.value_array, NORRIS_ESTIMATES, rtol=1e-12)
    np.testing.assert_allclose(list(fit.standard_errors.values()), NORRIS_ERRORS, rtol=1e-12)
    assert fit.residual_sd == pytest.approx(NORRIS_RESIDUAL_SD, rel=1e-12)
    assert fit.chi2 == pytest.approx(NORRIS_RSS, rel=1e-12)
    assert fit.dof == 34 and fit.covariance_scaled


@pytest.mark.literature
def test_norris_nonlinear_path_reproduces_certified_values():
    def line(p):
        return p["b0"] + p["b1"] * NORRIS_X

    fit = weighted_least_squares(line, {"b0": 1.0, "b1": 0.5}, NORRIS_Y)
    np.testing.assert_allclose(fit.value_array, NORRIS_ESTIMATES, rtol=1e-10)
    np.testing.assert_allclose(list(fit.standard_errors.values()), NORRIS_ERRORS, rtol=1e-10)
    assert fit.residual_sd == pytest.approx(NORRIS_RESIDUAL_SD, rel=1e-12)
    assert fit.covariance_scaled


@pytest.mark.literature
def test_batched_straight_lines_reproduce_norris_certified_values():
    # The Norris line three times in one call: alone, padded with points of weight 0 (their
    # x and y not read) and given in reverse order; each row must give the certified values.
    n = NORRIS_X.size
    x = np.stack([np.append(NORRIS_X, [0.0, 0.0]), np.append(NORRIS_X, [np.nan, 1e9]),
                  np.append(NORRIS_X[::-1], [0.0, 0.0])])
    y = np.stack([np.append(NORRIS_Y, [0.0, 0.0]), np.append(NORRIS_Y, [5.0, np.nan]),
                  np.append(NORRIS_Y[::-1], [0.0, 0.0])])
    w = np.zeros_like(x)
    w[:, :n] = 1.0
    lines = straight_lines(x, y, w, [True, True, True])
    assert lines.determined.all() and lines.points.tolist() == [n, n, n]
    for row in range(3):
        np.testing.assert_allclose(lines.values[row], NORRIS_ESTIMATES, rtol=1e-12)
        np.testing.assert_allclose(np.sqrt(np.diag(lines.covariance[row])), NORRIS_ERRORS,
                                   rtol=1e-12)


_LINE_POINTS = st.integers(3, 12)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(_LINE_POINTS, st.integers(0, 2**32 - 1), st.booleans()),
                min_size=1, max_size=6))
def test_batched_straight_lines_agree_with_the_fit_of_each_line_alone(specs):
    # Each row of the batch against linear_least_squares on that row's points alone (the QR
    # core checked on NIST StRD above); rows of different lengths, weights and scales.
    width = max(n for n, _, _ in specs)
    x, y, w = (np.zeros((len(specs), width)) for _ in range(3))
    for row, (n, seed, _) in enumerate(specs):
        rng = np.random.default_rng(seed)
        x[row, :n] = np.sort(rng.uniform(0.0, 1.0, n)) + np.arange(n) * 1e-3
        y[row, :n] = 0.2 + rng.normal(0.0, 0.05) * x[row, :n] + rng.normal(0.0, 1e-4, n)
        w[row, :n] = rng.uniform(0.5, 2.0, n) * 1e8
    scale = [s for _, _, s in specs]
    lines = straight_lines(x, y, w, scale)
    for row, (n, _, scaled) in enumerate(specs):
        alone = linear_least_squares(np.column_stack([np.ones(n), x[row, :n]]), y[row, :n],
                                     w[row, :n], scale_covariance=scaled)
        assert lines.determined[row]
        np.testing.assert_allclose(lines.values[row], alone.value_array, rtol=1e-9,
                                   atol=1e-13)
        np.testing.assert_allclose(lines.covariance[row], alone.covariance, rtol=1e-9,
                                   atol=1e-30)


def test_batched_straight_lines_refuse_what_does_not_determine_a_line():
    # One distinct x (rank deficient), a single point, and two points whose scale would need
    # a degree of freedom: not determined, NaN; a good line beside them is unaffected.
    x = np.array([[1.0, 1.0, 1.0], [0.5, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 1.0, 2.0]])
    y = np.array([[1.0, 2.0, 3.0], [1.0, 0.0, 0.0], [1.0, 2.0, 0.0], [1.0, 3.0, 5.0]])
    w = np.array([[1.0, 1.0, 1.0], [1.0, 0.0, 0.0], [1.0, 1.0, 0.0], [1.0, 1.0, 1.0]])
    lines = straight_lines(x, y, w, [False, False, True, True])
    assert lines.determined.tolist() == [False, False, False, True]
    assert np.isnan(lines.values[:3]).all() and np.isnan(lines.covariance[:3]).all()
    np.testing.assert_allclose(lines.values[3], [1.0, 2.0], atol=1e-12)


@pytest.mark.literature
def test_longley_linear_path_reproduces_certified_values():
    # QR with equilibration reaches ~1e-12 here (measured); the normal equations lose ~8 digits.
    fit = linear_least_squares(_longley_design(), LONGLEY[:, 0])
    np.testing.assert_allclose(fit.value_array, LONGLEY_ESTIMATES, rtol=1e-10)
    np.testing.assert_allclose(list(fit.standard_errors.values()), LONGLEY_ERRORS, rtol=1e-10)
    assert fit.residual_sd == pytest.approx(LONGLEY_RESIDUAL_SD, rel=1e-12)
    assert fit.dof == 9


@pytest.mark.literature
def test_longley_nonlinear_path_reproduces_certified_values():
    x = LONGLEY[:, 1:]
    names = [f"b{k}" for k in range(7)]

    def plane(p):
        return p["b0"] + x @ np.array([p[n] for n in names[1:]])

    # Started 10 % away from the certified values in every parameter.
    start = {n: 1.1 * v for n, v in zip(names, LONGLEY_ESTIMATES, strict=True)}
    fit = weighted_least_squares(plane, start, LONGLEY[:, 0])
    # ~1e-11 measured; the Gauss–Newton polish with a linearity-aware difference step is what
    # gets there (lmfit alone stops near 4e-6 on this ill-conditioned problem).
    np.testing.assert_allclose(fit.value_array, LONGLEY_ESTIMATES, rtol=1e-8)
    np.testing.assert_allclose(list(fit.standard_errors.values()), LONGLEY_ERRORS, rtol=1e-8)
    assert fit.residual_sd == pytest.approx(LONGLEY_RESIDUAL_SD, rel=1e-10)


def test_stated_weights_leave_covariance_unscaled():
    # With w = 1/u², cov = (XᵀWX)⁻¹ does not depend on the scatter: for a straight line with
    # equal u, var(slope) = u²/Σ(x − x̄)² (any regression text; common practice).
    u = 0.5
    fit = linear_least_squares(_norris_design(), NORRIS_Y, np.full(NORRIS_X.size, u**-2))
    assert not fit.covariance_scaled
    expected = u / np.sqrt(np.sum((NORRIS_X - NORRIS_X.mean()) ** 2))
    assert fit.standard_errors["p1"] == pytest.approx(expected, rel=1e-12)
    assert fit.chi2 == pytest.approx(NORRIS_RSS / u**2, rel=1e-12)
    # Forcing the scale gives back the certified (unweighted) errors.
    scaled = linear_least_squares(_norris_design(), NORRIS_Y, np.full(NORRIS_X.size, u**-2),
                                  scale_covariance=True)
    np.testing.assert_allclose(list(scaled.standard_errors.values()), NORRIS_ERRORS, rtol=1e-12)


def test_weighted_nonlinear_fit_matches_linear_fit():
    # An exponential decay (non-linear) fitted with weights; at the optimum the covariance must
    # equal the linear fit of the linearised problem with the same Jacobian (regression check of
    # the covariance formula, not a literature value).
    rng = np.random.default_rng(3)
    t = np.linspace(0.0, 4.0, 25)
    u = 0.01 + 0.02 * t
    y = 2.0 * np.exp(-0.7 * t) + rng.normal(0.0, u)

    def decay(p):
        return p["amplitude"] * np.exp(-p["rate"] * t)

    fit = weighted_least_squares(decay, {"amplitude": 1.0, "rate": 1.0}, y, u**-2,
                                 bounds={"rate": (0.0, 10.0)})
    assert not fit.covariance_scaled
    jac = fit.jacobian
    expected = np.linalg.inv(jac.T @ (jac * (u**-2)[:, None]))
    np.testing.assert_allclose(fit.covariance, expected, rtol=1e-9)
    analytic = np.column_stack([np.exp(-fit.values["rate"] * t),
                                -fit.values["amplitude"] * t * np.exp(-fit.values["rate"] * t)])
    np.testing.assert_allclose(jac, analytic, rtol=1e-8, atol=1e-12)
    # The gradient of χ² vanishes at the optimum.
    gradient = jac.T @ (u**-2 * fit.residuals)
    assert np.all(np.abs(gradient) * np.sqrt(np.diag(fit.covariance)) < 1e-6)
    assert fit.aic == pytest.approx(fit.chi2 + 4.0)


def test_information_criteria_forms():
    # Burnham & Anderson (2002), §2.2: known variance → χ² + 2P; estimated → N ln(χ²/N) + 2P.
    aic, bic = information_criteria(8.0, 10, 3, True)
    assert aic == pytest.approx(10 * np.log(0.8) + 6)
    assert bic == pytest.approx(10 * np.log(0.8) + 3 * np.log(10))


def test_central_difference_jacobian_of_a_quadratic_is_exact():
    x = np.linspace(-1.0, 1.0, 5)
    jac = central_difference_jacobian(lambda p: p["c"] * x**2, {"c": 2.0})
    np.testing.assert_allclose(jac[:, 0], x**2, rtol=1e-10)


def test_errors():
    x = np.array([[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]])
    with pytest.raises(ValueError, match="weights must be positive"):
        linear_least_squares(x, [1.0, 2.0, 3.0], [1.0, 0.0, 1.0])
    with pytest.raises(ValueError, match="NaN"):
        linear_least_squares(x, [1.0, np.nan, 3.0])
    with pytest.raises(ValueError, match="design has shape"):
        linear_least_squares(x[:2], [1.0, 2.0, 3.0])
    with pytest.raises(FitError, match="rank deficient"):
        linear_least_squares(np.column_stack([x[:, 1], 2 * x[:, 1]]), [1.0, 2.0, 3.0])
    with pytest.raises(ValueError, match="no degree of freedom"):
        linear_least_squares(x[:2], [1.0, 2.0])
    with pytest.raises(ValueError, match="not a Python identifier"):
        weighted_least_squares(lambda p: np.zeros(3), {"a b": 1.0}, [1.0, 2.0, 3.0])
    with pytest.raises(ValueError, match="outside its bounds"):
        weighted_least_squares(lambda p: np.zeros(3) + p["a"], {"a": 5.0}, [1.0, 2.0, 3.0],
                               bounds={"a": (0.0, 1.0)})
    with pytest.raises(ValueError, match="returned shape"):
        weighted_least_squares(lambda p: np.zeros(2) + p["a"], {"a": 0.0}, [1.0, 2.0, 3.0])


def test_pandas_input():
    import pandas as pd

    frame = pd.DataFrame({"one": 1.0, "x": NORRIS_X, "y": NORRIS_Y})
    fit = linear_least_squares(frame[["one", "x"]], frame["y"])
    np.testing.assert_allclose(fit.value_array, NORRIS_ESTIMATES, rtol=1e-12)
