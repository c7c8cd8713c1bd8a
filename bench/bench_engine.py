"""Many series at once: the batched engine against a per-series lmfit loop doing the same fits.

Target (from the project's design): 10 000 series × 15 readings, with covariance and γ± ± u at
every reading, in ≤ 2 s through :mod:`activolt.fit.engine`, and ≥ 100 × faster than fitting the
series one at a time with lmfit — for the Hückel equation with å and b free (non-linear: batched
Levenberg–Marquardt) and for Pitzer with β⁽⁰⁾, β⁽¹⁾, C^φ free (linear: one exact step).

The lmfit loop is timed on a sample of the series (``LMFIT_SAMPLE``) and scaled to all of them;
the printed line says so. Both do the same work per series: the model is built from the same
arrays, the fit gives values and covariance, and γ± with its standard uncertainty follows at
every reading. The sample's results are compared, so that the two are seen to solve the same
problem. The series are generated here from the equations with noise (benchmark input only).

Run: `make bench`, or `python bench/bench_engine.py`.
"""

from __future__ import annotations

import sys
import time
from dataclasses import dataclass

import benchlib
import numpy as np
import pytest
from benchlib import table_at_the_end  # noqa: F401 (a fixture)

N_SERIES = 10_000
N_POINTS = 15
LMFIT_SAMPLE = 300
TIME_TARGET_S = 2.0
SPEED_UP_TARGET = 100.0
U_EMF_V = 20e-6
TEMPERATURE_K = 298.15


@dataclass(frozen=True)
class Case:
    """One benchmark family: model name, true values (E°, model parameters, s), free mask."""

    model: str
    molality_range: tuple[float, float]
    truth: tuple[float, ...]
    spread: tuple[float, ...]
    free: tuple[bool, ...]
    start: tuple[float, ...]


HUECKEL = Case("hueckel", (0.001, 0.5), (0.2223, 4.5, 0.15, 1.0), (0.01, 0.8, 0.05, 0.0),
               (True, True, True, False), (0.2, 4.5, 0.1, 1.0))
PITZER = Case("pitzer", (0.01, 3.0), (0.2223, 0.1775, 0.2945, 0.0, 0.0008, 1.0),
              (0.01, 0.02, 0.03, 0.0, 0.0003, 0.0),
              (True, True, True, False, True, False), (0.0, 0.0, 0.0, 0.0, 0.0, 1.0))


def make_problem(case: Case, n_series: int, seed: int = 7) -> dict[str, np.ndarray]:
    """Molalities, temperatures and readings of ``n_series`` series from known truth."""
    from activolt.activity import get_model
    from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
    from activolt.fit.engine import MeasurementModel
    from activolt.physics.water import debye_hueckel_constants

    rng = np.random.default_rng(seed)
    low, high = case.molality_range
    molality = np.sort(np.exp(rng.uniform(np.log(low), np.log(high), (n_series, N_POINTS))), axis=1)
    truth = np.asarray(case.truth) + rng.uniform(-1.0, 1.0, (n_series, len(case.truth))) * \
        np.asarray(case.spread)
    temperature = np.full(molality.shape, TEMPERATURE_K)
    hcl = parse_electrolyte("HCl")
    model = MeasurementModel(get_model(case.model), hcl, 1, molality,
                             nernst_factor(hcl, 1, temperature),
                             debye_hueckel_constants(temperature))
    emf = model.predict(truth) + rng.normal(0.0, U_EMF_V, molality.shape)
    return {"molality": molality, "temperature": temperature, "emf": emf,
            "u": np.full(molality.shape, U_EMF_V)}


def _specs(case: Case):
    from activolt.activity import get_model

    family = get_model(case.model)
    linear = np.array([True] + [p.linear for p in family.parameters] + [False])
    bounds = np.array([[-np.inf, np.inf]] + [[p.minimum, p.maximum] for p in family.parameters]
                      + [[0.5, 1.2]])
    return family, linear, bounds


def _gamma_with_u(model, fit, emf: np.ndarray, variance_V2: np.ndarray
                  ) -> tuple[np.ndarray, np.ndarray]:
    r"""γ± and u(γ±) at every reading, diagonal only, through the fit's sensitivity.

    ln γ±,i = σ(E° − E_i)/(s k_i) − ln m±,i, so with S₀ the E° row of the sensitivity
    (∂E°/∂E_j) and s held, var(ln γ±,i) = [Σ_j v_j S₀j² − 2 v_i S₀i + v_i]/(s k_i)²
    (GUM, JCGM 100:2008, 5.2 — E° and the reading are correlated).
    """
    gamma = np.exp(model.ln_gamma_from_emf(emf, fit.values))
    s0 = fit.sensitivity[:, 0, :]
    e0_variance = np.sum(variance_V2 * s0**2, axis=1, keepdims=True)
    ln_variance = (e0_variance - 2.0 * variance_V2 * s0 + variance_V2) / (
        fit.values[:, [-1]] * model.nernst_V) ** 2
    return gamma, gamma * np.sqrt(ln_variance)


def engine_reduce(case: Case, problem: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Every series at once: model built from the arrays, fit, covariance, γ± ± u."""
    from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
    from activolt.fit.engine import MeasurementModel, solve
    from activolt.physics.water import debye_hueckel_constants

    family, linear, bounds = _specs(case)
    hcl = parse_electrolyte("HCl")
    t = problem["temperature"]
    model = MeasurementModel(family, hcl, 1, problem["molality"], nernst_factor(hcl, 1, t),
                             debye_hueckel_constants(t))
    n_series = t.shape[0]
    variance = problem["u"] ** 2
    fit = solve(model, problem["emf"], 1.0 / variance, np.tile(case.start, (n_series, 1)),
                np.tile(case.free, (n_series, 1)), linear, bounds)
    gamma, u_gamma = _gamma_with_u(model, fit, problem["emf"], variance)
    return {"values": fit.values, "covariance": fit.covariance, "gamma": gamma,
            "u_gamma": u_gamma, "converged": fit.converged}


def lmfit_reduce(case: Case, problem: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """The same, one series at a time with lmfit (MINPACK Levenberg–Marquardt, its default
    tolerances), the same model function and the same γ± ± u from lmfit's covariance."""
    import lmfit

    from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
    from activolt.fit.engine import MeasurementModel
    from activolt.physics.water import DebyeHueckelConstants, debye_hueckel_constants

    family, _, bounds = _specs(case)
    hcl = parse_electrolyte("HCl")
    out: dict[str, list[np.ndarray]] = {"values": [], "covariance": [], "gamma": [],
                                        "u_gamma": []}
    # The water properties are computed once for all series (as the engine does), so that
    # the loop is timed on the fits only.
    t_all = problem["temperature"]
    k_all, c_all = nernst_factor(hcl, 1, t_all), debye_hueckel_constants(t_all)
    for s in range(problem["molality"].shape[0]):
        single = MeasurementModel(family, hcl, 1, problem["molality"][[s]], k_all[[s]],
                                  DebyeHueckelConstants(c_all.temperature[[s]],
                                                        c_all.aphi[[s]], c_all.b[[s]]))
        emf, u = problem["emf"][s], problem["u"][s]
        names = single.names
        params = lmfit.Parameters()
        for index, name in enumerate(names):
            params.add(name, value=case.start[index], vary=case.free[index],
                       min=bounds[index, 0], max=bounds[index, 1])

        def residual(p, single=single, emf=emf, u=u, names=names):
            return (emf - single.predict(np.array([[p[n].value for n in names]]))[0]) / u

        result = lmfit.minimize(residual, params, scale_covar=False)
        values = np.array([[result.params[n].value for n in names]])
        free = np.array(case.free)
        covariance = np.zeros((len(names), len(names)))
        covariance[np.ix_(free, free)] = result.covar
        # γ± ± u from lmfit's covariance: S₀ = (C JᵀW)₀ with J at lmfit's optimum.
        jac = single.jacobian(values, free[None, :])[0]
        s0 = covariance[0] @ jac.T / u**2
        gamma = np.exp(single.ln_gamma_from_emf(emf[None, :], values))[0]
        ln_variance = (covariance[0, 0] - 2.0 * u**2 * s0 + u**2) / single.nernst_V[0] ** 2
        out["values"].append(values[0])
        out["covariance"].append(covariance)
        out["gamma"].append(gamma)
        out["u_gamma"].append(gamma * np.sqrt(ln_variance))
    return {key: np.array(value) for key, value in out.items()}


def measure(case: Case) -> tuple[float, float, float, dict, dict]:
    """(engine time for all series [s], lmfit time scaled to all [s], lmfit sample time [s],
    engine results, lmfit results on the sample)."""
    warm = make_problem(case, 20, seed=1)
    engine_reduce(case, warm)  # warm-up: first use of the water properties, BLAS threads
    lmfit_reduce(case, {key: value[:2] for key, value in warm.items()})
    problem = make_problem(case, N_SERIES)
    sample = {key: value[:LMFIT_SAMPLE] for key, value in problem.items()}
    # Both sides best of three, in turns, so that a busy moment of the machine does not fall
    # on one side of the ratio only.
    engine_times, lmfit_times = [], []
    for _ in range(3):
        start = time.perf_counter()
        engine = engine_reduce(case, problem)
        engine_times.append(time.perf_counter() - start)
        start = time.perf_counter()
        reference = lmfit_reduce(case, sample)
        lmfit_times.append(time.perf_counter() - start)
    engine_s, lmfit_sample_s = min(engine_times), min(lmfit_times)
    return engine_s, lmfit_sample_s * N_SERIES / LMFIT_SAMPLE, lmfit_sample_s, engine, reference


def check(case: Case, label: str) -> list[benchlib.Row]:
    engine_s, lmfit_s, sample_s, engine, reference = measure(case)
    # The two solve the same problem: E°, γ± and u(γ±) of the sample agree.
    assert engine["converged"].all()
    e0_u = np.sqrt(reference["covariance"][:, 0, 0])
    e0_shift = np.max(np.abs(engine["values"][:LMFIT_SAMPLE, 0] - reference["values"][:, 0])
                      / e0_u)
    assert e0_shift < 1e-3, f"engine and lmfit E° differ by {e0_shift:.2g} u"
    np.testing.assert_allclose(engine["gamma"][:LMFIT_SAMPLE], reference["gamma"], rtol=1e-6)
    np.testing.assert_allclose(engine["u_gamma"][:LMFIT_SAMPLE], reference["u_gamma"],
                               rtol=1e-2)
    ratio = lmfit_s / engine_s
    what = f"{N_SERIES} series × {N_POINTS} points, {label}"
    note = (f"lmfit timed on {LMFIT_SAMPLE} series ({sample_s:.2f} s, best of 3, in turns with "
            f"the engine) and scaled × "
            f"{N_SERIES / LMFIT_SAMPLE:.3g}; max |ΔE°| vs lmfit {e0_shift:.1g} u")
    return [
        benchlib.record(f"engine, {what}", f"{engine_s:.3f} s", f"≤ {TIME_TARGET_S:g} s",
                        engine_s <= TIME_TARGET_S, "best of 3; model, fit, covariance, γ± ± u"),
        benchlib.record(f"engine vs lmfit loop, {what}",
                        f"{ratio:.0f} × faster ({lmfit_s:.1f} s vs {engine_s:.3f} s)",
                        f"≥ {SPEED_UP_TARGET:g} ×", ratio >= SPEED_UP_TARGET, note),
    ]


@pytest.mark.bench
@pytest.mark.usefixtures("table_at_the_end")
def test_hueckel_batch():
    rows = check(HUECKEL, "Hückel, å and b free")
    assert all(row.met for row in rows), "\n".join(row.line() for row in rows)


@pytest.mark.bench
@pytest.mark.usefixtures("table_at_the_end")
def test_pitzer_batch():
    rows = check(PITZER, "Pitzer, β⁽⁰⁾, β⁽¹⁾, C^φ free (one exact step)")
    assert all(row.met for row in rows), "\n".join(row.line() for row in rows)


def main() -> int:
    rows = check(HUECKEL, "Hückel, å and b free") + check(
        PITZER, "Pitzer, β⁽⁰⁾, β⁽¹⁾, C^φ free (one exact step)")
    return 0 if all(row.met for row in rows) else 1


if __name__ == "__main__":
    sys.exit(main())
