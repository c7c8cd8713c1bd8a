"""The batched engine against an independent fit (lmfit, MINPACK Levenberg–Marquardt) of the
same problem, one series at a time. The series are generated here from the Hückel and Pitzer
equations (not check values: the check is that two independent solvers agree — common practice,
as lmfit itself is checked against other solvers)."""

from __future__ import annotations

import lmfit
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.activity import get_model
from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.fit.engine import MeasurementModel, solve
from activolt.physics.water import debye_hueckel_constants

HCL = parse_electrolyte("HCl")
HUECKEL = get_model("hueckel")
PITZER = get_model("pitzer")


def batch(model, molality, temperature_K=298.15):
    t = np.full(molality.shape, temperature_K)
    return MeasurementModel(model, HCL, 1, molality, nernst_factor(HCL, 1, t),
                            debye_hueckel_constants(t))


def specs(model):
    linear = np.array([True] + [p.linear for p in model.parameters] + [False])
    bounds = np.array([[-np.inf, np.inf]] + [[p.minimum, p.maximum] for p in model.parameters]
                      + [[0.5, 1.2]])
    return linear, bounds


def lmfit_one(model, molality, emf, u, start, free):
    """The same weighted fit by lmfit for one series: (values, covariance of the free ones)."""
    single = batch(model, molality[None, :])
    names = single.names
    _, bounds = specs(model)
    params = lmfit.Parameters()
    for index, name in enumerate(names):
        params.add(name, value=start[index], vary=bool(free[index]),
                   min=bounds[index, 0], max=bounds[index, 1])

    def residual(p):
        values = np.array([[p[n].value for n in names]])
        return (emf - single.predict(values)[0]) / u

    result = lmfit.minimize(residual, params, scale_covar=False, xtol=1e-14, ftol=1e-14)
    return np.array([result.params[n].value for n in names]), result.covar


@settings(max_examples=15, deadline=None, derandomize=True)
@given(seed=st.integers(0, 2**31 - 1), n_series=st.integers(1, 6))
def test_hueckel_batch_equals_lmfit_per_series(seed, n_series):
    rng = np.random.default_rng(seed)
    n = 12
    molality = np.sort(np.exp(rng.uniform(np.log(1e-3), np.log(0.5), (n_series, n))), axis=1)
    truth = np.column_stack([rng.uniform(0.2, 0.3, n_series), rng.uniform(3.5, 6.0, n_series),
                             rng.uniform(0.05, 0.3, n_series), np.ones(n_series)])
    model = batch(HUECKEL, molality)
    u = 2e-5
    emf = model.predict(truth) + rng.normal(0.0, u, molality.shape)
    free = np.tile([True, True, True, False], (n_series, 1))
    linear, bounds = specs(HUECKEL)
    start = np.tile([0.2, 4.5, 0.2, 1.0], (n_series, 1))
    fit = solve(model, emf, np.full(molality.shape, u**-2), start, free, linear, bounds)
    assert fit.converged.all()
    for s in range(n_series):
        values, covariance = lmfit_one(HUECKEL, molality[s], emf[s], u, start[s], free[s])
        # Where χ² is flat in å, MINPACK may stop a little short (its χ² then exceeds ours):
        # agreement to a thousandth of u(E°), and never a worse optimum than lmfit's.
        single = batch(HUECKEL, molality[s:s + 1])
        chi2_lmfit = float(np.sum(((emf[s] - single.predict(values[None, :])[0]) / u) ** 2))
        assert fit.chi2[s] <= chi2_lmfit * (1 + 1e-9)
        u_e0 = float(np.sqrt(fit.covariance[s, 0, 0]))
        assert fit.values[s, 0] == pytest.approx(values[0], abs=max(1e-9, 1e-3 * u_e0))
        u_theta = np.sqrt(np.diag(fit.covariance[s])[1:3])
        assert np.all(np.abs(fit.values[s, 1:3] - values[1:3]) <= 1e-2 * u_theta)
        np.testing.assert_allclose(fit.covariance[s][:3, :3], covariance, rtol=1e-3)


def test_linear_pitzer_is_solved_in_one_step_and_equals_lmfit():
    rng = np.random.default_rng(3)
    molality = np.tile(np.geomspace(0.01, 3.0, 14), (3, 1))
    truth = np.tile([0.22234, 0.1775, 0.2945, 0.0, 0.0008, 1.0], (3, 1))
    model = batch(PITZER, molality)
    emf = model.predict(truth) + rng.normal(0.0, 1e-5, molality.shape)
    free = np.tile([True, True, True, False, True, False], (3, 1))
    linear, bounds = specs(PITZER)
    fit = solve(model, emf, np.full(molality.shape, 1e10), np.tile(
        [0.0, 0.0, 0.0, 0.0, 0.0, 1.0], (3, 1)), free, linear, bounds)
    for s in range(3):
        values, covariance = lmfit_one(PITZER, molality[s], emf[s], 1e-5, truth[s], free[s])
        assert fit.values[s, 0] == pytest.approx(values[0], abs=1e-10)
        kept = free[s]
        # lmfit takes its Jacobian by forward differences: agreement to ~1e-6.
        np.testing.assert_allclose(fit.covariance[s][np.ix_(kept, kept)], covariance, rtol=1e-5)


def test_ragged_series_and_per_series_held_parameters():
    """A masked reading (weight 0) does not count; one series fits å, the other holds it."""
    molality = np.tile(np.geomspace(0.001, 0.5, 10), (2, 1))
    truth = np.array([[0.22, 4.5, 0.2, 1.0], [0.23, 4.0, 0.1, 1.0]])
    model = batch(HUECKEL, molality)
    emf = model.predict(truth)
    weights = np.ones(molality.shape)
    weights[1, 7:] = 0.0
    emf[1, 7:] = 99.0  # masked readings: any value
    free = np.array([[True, True, True, False], [True, False, True, False]])
    linear, bounds = specs(HUECKEL)
    fit = solve(model, emf, weights, np.array([[0.2, 5.0, 0.0, 1.0], [0.2, 4.0, 0.0, 1.0]]),
                free, linear, bounds, scale_covariance=True)
    np.testing.assert_allclose(fit.values[:, [0, 2]], truth[:, [0, 2]], atol=1e-9)
    assert fit.values[1, 1] == 4.0 and fit.covariance[1, 1, 1] == 0.0
    assert list(fit.dof) == [7, 5]
    assert fit.residual_V[1, 7:].tolist() == [0.0, 0.0, 0.0]


def test_curve_uncertainty_is_first_order_propagation():
    """u(Ê) at the readings equals √(g C gᵀ) computed from the Jacobian (regression of the
    formula against an explicit loop)."""
    rng = np.random.default_rng(1)
    molality = np.geomspace(0.001, 0.1, 8)[None, :]
    model = batch(HUECKEL, molality)
    emf = model.predict(np.array([[0.22, 4.5, 0.2, 1.0]])) + rng.normal(0, 2e-5, (1, 8))
    linear, bounds = specs(HUECKEL)
    fit = solve(model, emf, np.full((1, 8), 2.5e9), np.array([[0.2, 4.5, 0.2, 1.0]]),
                np.array([[True, False, True, False]]), linear, bounds)
    predicted, u = fit.curve(model)
    g = fit.jacobian[0]
    expected = np.sqrt([g[i] @ fit.covariance[0] @ g[i] for i in range(8)])
    np.testing.assert_allclose(u[0], expected, rtol=1e-12)
    np.testing.assert_allclose(predicted, emf - fit.residual_V, atol=1e-15)


MODEL_TRUTHS = {  # parameter values used to generate synthetic series (not check values)
    "limiting": {},
    "hueckel": {"a_angstrom": 4.5, "b_kg_mol": 0.2},
    "davies": {},
    "sit": {"epsilon_kg_mol": 0.12},
    "pitzer": {"beta0_kg_mol": 0.1775, "beta1_kg_mol": 0.2945, "beta2_kg_mol": 0.0,
               "cphi_kg2_mol2": 0.0008},
}


@pytest.mark.parametrize("name", list(MODEL_TRUTHS))
@settings(max_examples=8, deadline=None, derandomize=True)
@given(seed=st.integers(0, 2**31 - 1), n_series=st.integers(2, 5))
def test_a_batch_equals_its_series_solved_one_by_one(name, seed, n_series):
    """Every model: solving S series at once gives what solving each alone gives — E° to
    1e-9 V, the other parameters and u to 1e-6 relative (ragged: a random reading masked)."""
    model = get_model(name)
    rng = np.random.default_rng(seed)
    n = 10
    molality = np.sort(np.exp(rng.uniform(np.log(1e-3), np.log(1.0), (n_series, n))), axis=1)
    truth_values = MODEL_TRUTHS[name]
    names = batch(model, molality).names
    truth = np.array([[0.22, *[truth_values.get(p, 0.0) for p in names[1:-1]], 1.0]]
                     * n_series)
    full = batch(model, molality)
    emf = full.predict(truth) + rng.normal(0.0, 2e-5, molality.shape)
    weights = np.full(molality.shape, 2.5e9)
    weights[rng.integers(0, n_series), rng.integers(0, n)] = 0.0
    linear, bounds = specs(model)
    free = np.array([[True, *[p.linear or p.name == "a_angstrom" for p in model.parameters],
                      False]] * n_series)
    free[:, [names.index(p) for p in ("beta2_kg_mol",) if p in names]] = False
    start = np.where(free, 0.0, truth)
    start[:, [i for i, nm in enumerate(names) if nm == "a_angstrom"]] = 4.0
    together = solve(full, emf, weights, start, free, linear, bounds)
    for s in range(n_series):
        alone = solve(batch(model, molality[s:s + 1]), emf[s:s + 1], weights[s:s + 1],
                      start[s:s + 1], free[s:s + 1], linear, bounds)
        assert together.values[s, 0] == pytest.approx(alone.values[0, 0], abs=1e-9)
        np.testing.assert_allclose(together.values[s], alone.values[0], rtol=1e-6, atol=1e-12)
        np.testing.assert_allclose(together.covariance[s], alone.covariance[0], rtol=1e-6,
                                   atol=1e-30)


def test_values_without_the_covariance_are_the_same_fit():
    # A Monte Carlo asks for the values only: the same iterations, no Jacobian or covariance
    # at the optimum (NaN there). Synthetic Hückel series (input only, not check values).
    rng = np.random.default_rng(7)
    m = np.tile(np.geomspace(0.001, 0.1, 8), (5, 1))
    model = batch(HUECKEL, m)
    truth = np.array([[0.2223, 4.3, 0.25, 1.0]] * 5)
    emf = model.predict(truth) + rng.normal(0.0, 2e-5, m.shape)
    linear, bounds = specs(HUECKEL)
    free = np.array([[True, True, True, False]] * 5)
    start = np.array([[0.2, 4.0, 0.1, 1.0]] * 5)
    full = solve(model, emf, np.full(m.shape, 1 / 4e-10), start, free, linear, bounds)
    quick = solve(model, emf, np.full(m.shape, 1 / 4e-10), start, free, linear, bounds,
                  covariance=False)
    assert np.array_equal(full.values, quick.values)
    assert np.array_equal(full.chi2, quick.chi2) and quick.converged.all()
    assert np.isnan(quick.covariance).all() and np.isnan(quick.jacobian).all()
    assert np.isfinite(full.covariance[:, :3, :3]).all()


@pytest.mark.parametrize("name", ["hueckel", "pitzer"])
def test_a_series_alone_and_in_a_large_batch_gives_the_same_numbers(name):
    """One series gives the same Jacobian rows and fit alone as among 60 others, to rounding
    (alone, the model's evaluations for the shifted parameters are made in one call on stacked
    values; in a large batch, one call each). Synthetic series (input only)."""
    model = get_model(name)
    rng = np.random.default_rng(3)
    molality = np.sort(np.exp(rng.uniform(np.log(1e-3), np.log(1.0), (60, 12))), axis=1)
    full = batch(model, molality)
    names = full.names
    truth_values = MODEL_TRUTHS[name]
    truth = np.array([[0.22, *[truth_values.get(p, 0.0) for p in names[1:-1]], 1.0]] * 60)
    emf = full.predict(truth) + rng.normal(0.0, 2e-5, molality.shape)
    linear, bounds = specs(model)
    free = np.array([[True, *[p.name != "beta2_kg_mol" for p in model.parameters], True]] * 60)
    columns = np.flatnonzero(free.any(axis=0))
    for central in (True, False):
        many = full.gradient_rows(truth, free, columns, central=central)
        one = batch(model, molality[7:8]).gradient_rows(truth[7:8], free[7:8], columns,
                                                        central=central)
        np.testing.assert_allclose(one[0], many[7], rtol=1e-13, atol=0.0)
    start = np.where(free, 0.0, truth)
    start[:, [i for i, nm in enumerate(names) if nm == "a_angstrom"]] = 4.0
    start[:, -1] = 1.0
    weights = np.full(molality.shape, 2.5e9)
    together = solve(full, emf, weights, start, free, linear, bounds)
    for s in (0, 7, 59):
        alone = solve(batch(model, molality[s:s + 1]), emf[s:s + 1], weights[s:s + 1],
                      start[s:s + 1], free[s:s + 1], linear, bounds)
        np.testing.assert_allclose(alone.values[0], together.values[s], rtol=1e-13, atol=0.0)
        np.testing.assert_allclose(alone.covariance[0], together.covariance[s], rtol=1e-12,
                                   atol=0.0)
        assert alone.converged[0] and together.converged[s]
