"""A chunk of series reduced together (``reduce_runs``, ``SeriesReducer.batch``) gives every
series exactly what it gives alone (``reduce_run``): every field of the Reduction, every array
bit for bit, every refusal word for word.

The readings are synthetic (``tests/synthetic.py``: γ± of the Hückel equation with E° =
0.2224 V, scattered by a seeded generator) and the bundled sample run; they are inputs for
checking the mechanics, and every comparison is the code against itself: the expected values
are each series reduced alone, a regression pin of the batch against the one-series path (no
published value is checked here; the literature checks are marked ``literature``).
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st
from synthetic import emf_from_gamma
from uncertainties.core import AffineScalarFunc

from activolt.activity import ActivityModel
from activolt.activity.base import mean_of
from activolt.data.runs import Exclusion, Run, exclude_points, read_run, runs_from_frame
from activolt.errors import FitError, InputError
from activolt.fit.diagnostics import (
    runs_test,
    runs_tests,
    serial_correlation_test,
    serial_correlation_tests,
)
from activolt.fit.lack_of_fit import judge_lack_of_fit, judge_lack_of_fit_of_many
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import Reduction, reduce_run, reduce_runs
from activolt.procedures.many import series_reducer

SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "kestrel_hcl_25C.csv"
METADATA = {"electrolyte": "HCl", "electrons": 1, "temperature_C": 25.0}
MODELS = ("limiting", "hueckel", "davies", "sit", "pitzer")


def fingerprint(value: Any) -> Any:
    """Everything a value holds, in plain comparable form: arrays as dtype, shape, memory
    order (which decides the order of some sums made from them later) and bytes (object
    arrays as lists), floats by repr (NaN and −0 told apart), dataclasses and
    mappings field by field."""
    if isinstance(value, np.ndarray):
        if value.dtype == object:
            return ("object", value.shape, [fingerprint(v) for v in value.tolist()])
        return (str(value.dtype), value.shape, value.flags.c_contiguous,
                value.flags.f_contiguous, value.tobytes())
    if isinstance(value, AffineScalarFunc):
        return ("ufloat", repr(value.nominal_value), repr(value.std_dev))
    if isinstance(value, ActivityModel):
        return ("model", value.name)
    if isinstance(value, Run):
        return ("run", value.path, value.series, value.points.to_csv(), value.warnings,
                value.metadata)
    if isinstance(value, pd.DataFrame):
        return value.to_csv()
    if isinstance(value, float | np.floating):
        return repr(float(value))
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return (type(value).__name__, [(f.name, fingerprint(getattr(value, f.name)))
                                       for f in dataclasses.fields(value)])
    if isinstance(value, dict | pd.Series) or hasattr(value, "items"):
        return sorted((k, fingerprint(v)) for k, v in value.items())
    if isinstance(value, list | tuple):
        return [fingerprint(v) for v in value]
    return value


def reduction_fingerprint(reduction: Reduction) -> Any:
    """The Reduction field by field, with its point columns, γ± propagation, prepared data
    and straight-line cross-check."""
    return (fingerprint(reduction), fingerprint(dict(reduction.point_columns)),
            fingerprint(reduction.gamma_propagation), fingerprint(reduction.data),
            fingerprint(reduction.linear_extrapolation))


def _emf(e0_V: float, molality: np.ndarray) -> np.ndarray:
    a_gamma = debye_hueckel_constants(np.full(molality.shape, 298.15)).agamma
    root = np.sqrt(molality)
    return emf_from_gamma(molality, np.exp(-a_gamma * root / (1.0 + 1.5 * root) + 0.1 * molality),
                          e0_V)


def _varied_runs(seed: int) -> list[Run]:
    """Series of different lengths, ranges, scatter and weighting; with replicate readings,
    a missing reading, readings excluded by the user; some cannot be reduced (one molality,
    too few readings, a gross misfit)."""
    rng = np.random.default_rng(seed)
    frames = []
    for index in range(40):
        kind = index % 10
        n = int(rng.integers(3, 19))
        top = float(rng.choice([0.02, 0.1, 0.5, 1.0, 3.0]))
        molality = np.geomspace(0.001, top, n)
        if kind == 1:  # replicates of some solutions
            molality = np.sort(np.r_[molality, molality[: n // 2]])
        if kind == 2:  # one molality only
            molality = np.full(4, 0.01)
        if kind == 3:  # too few readings
            molality = molality[:2]
        scatter = float(rng.choice([1e-6, 2e-5, 3e-4]))
        emf = _emf(0.2224 + rng.uniform(-1e-3, 1e-3), molality) + rng.normal(0.0, scatter,
                                                                             molality.size)
        if kind == 4:  # a systematic misfit
            emf = emf + 0.004 * np.sin(np.linspace(0.0, 3.0 * np.pi, molality.size))
        if kind == 5:  # one reading far off
            emf[molality.size // 2] += 0.003
        frame = pd.DataFrame({"molality_mol_kg": molality, "emf_V": emf,
                              "series": f"s{index}:{kind} \"odd\", name"})
        if kind == 6:
            frame.loc[1, "emf_V"] = np.nan
        if rng.integers(0, 2):
            frame["u_emf_V"] = float(rng.choice([2e-5, 1e-4]))
        frames.append(frame)
    runs = [run for frame in frames for run in runs_from_frame(frame, METADATA)]
    for k in (7, 17, 27):  # a reading excluded by the user
        run = runs[k]
        runs[k] = exclude_points(run, [Exclusion("a bubble on the electrode",
                                                 line=int(run.arrays["line"][2]))])
    return runs


def _optimum(reduction: Reduction) -> Any:
    """What the engine's fit gives: the optimum and its χ²."""
    return fingerprint((reduction.standard_potential.nominal_value,
                        [p.value for p in reduction.parameters], reduction.statistics.chi2))


def _assert_same(together: list[Any], runs: list[Run], model: str,
                 fixed: dict[str, Any] | None = None, inexact_share: int = 10) -> None:
    """Each series of the chunk as alone: bit for bit wherever the engine's batched iteration
    reaches the same optimum (a non-linear iteration among others may end a few ulp away:
    there E° within 1e-9 V, as ``test_many_series`` pins it; at most one in
    ``inexact_share`` of the exact ones)."""
    exact = inexact = 0
    for run, batch in zip(runs, together, strict=True):
        try:
            alone = reduce_run(run, model, fixed)
        except (FitError, InputError) as error:
            assert type(batch) is type(error) and str(batch) == str(error)
            continue
        assert isinstance(batch, Reduction)
        if _optimum(batch) == _optimum(alone):
            assert reduction_fingerprint(batch) == reduction_fingerprint(alone)
            exact += 1
        else:
            assert abs(batch.standard_potential.nominal_value
                       - alone.standard_potential.nominal_value) <= 1e-9
            inexact += 1
    assert exact >= 10 and inexact <= exact // inexact_share


@pytest.mark.parametrize("model", MODELS)
def test_a_chunk_reduces_every_series_bit_for_bit_as_alone(model):
    runs = _varied_runs(MODELS.index(model))
    runs.append(read_run(SAMPLE))
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        _assert_same(reduce_runs(runs, model), runs, model)


@pytest.mark.parametrize("fixed", [{"a_angstrom": 4.3}, {"a_angstrom": (4.3, 0.2)},
                                   {"b_kg_mol": 0.1}])
def test_held_parameters_reduce_bit_for_bit_as_alone(fixed):
    runs = [*_varied_runs(11), read_run(SAMPLE)]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        _assert_same(reduce_runs(runs, "hueckel", fixed), runs, "hueckel", fixed)


def test_the_reducer_batch_gives_what_each_series_gives_alone():
    runs = [*_varied_runs(5), read_run(SAMPLE)]
    reducer = series_reducer("hueckel")
    together = reducer.batch(runs)
    for outcome, run in zip(together, runs, strict=True):
        alone = reducer(run)
        assert outcome.failure == alone.failure
        if alone.reduction is None:
            assert outcome.reduction is None
        else:
            assert outcome.reduction is not None
            assert (reduction_fingerprint(outcome.reduction)
                    == reduction_fingerprint(alone.reduction))


def test_the_fingerprint_tells_one_bit_apart():
    """The comparison above can fail: a reduction with γ± one unit in the last place off
    differs."""
    reduction = reduce_run(read_run(SAMPLE))
    columns = dict(reduction.point_columns)
    gamma = columns["gamma_pm"].copy()
    used = np.flatnonzero(np.isfinite(gamma))[0]
    gamma[used] = np.nextafter(gamma[used], math.inf)
    columns["gamma_pm"] = gamma
    changed = dataclasses.replace(reduction, point_columns=columns)
    assert reduction_fingerprint(changed) != reduction_fingerprint(reduction)


def _sequences(seed: int) -> list[np.ndarray]:
    rng = np.random.default_rng(seed)
    out = [rng.standard_normal(int(rng.integers(0, 20))) * 10.0 ** int(rng.integers(-8, 3))
           for _ in range(200)]
    out += [rng.standard_normal(12) for _ in range(50)]
    out += [rng.standard_normal(15) * 10.0 ** int(rng.integers(-150, 150)) for _ in range(100)]
    out += [np.array([1.0, 0.0, -1.0, 2.0, 3.0]), np.array([np.nan, 1.0, 2.0, -3.0, 4.0]),
            np.zeros(6), np.array([1.0, 2.0, 3.0, 4.0, 5.0]), np.array([-0.0, 1.0, -2.0, 3.0]),
            np.ones(8), -np.ones(15), np.r_[np.ones(7), -np.ones(8)], np.arange(15.0) ** 2,
            np.sin(np.arange(15.0)), np.array([3.0, 1e-300, 2.0, 5e-310, 1.0]),
            np.array([1e100, -1e99, 3e99, 1.0])]
    return out


def test_the_order_tests_of_many_sequences_equal_each_alone():
    """Including sequences whose orderings tie with the observed statistic (equal values:
    every ordering summed exactly) and values near overflow or underflow."""
    sequences = _sequences(3)
    assert runs_tests(sequences) == [runs_test(x) for x in sequences]
    together = serial_correlation_tests(sequences)
    alone = [serial_correlation_test(x) for x in sequences]
    assert fingerprint(together) == fingerprint(alone)


def test_lack_of_fit_of_many_fits_equals_each_alone():
    rng = np.random.default_rng(8)
    arguments = []
    for _ in range(300):
        n = int(rng.integers(3, 18))
        molality = np.round(rng.random(n), int(rng.integers(1, 3))) + 0.001  # some replicates
        residual = rng.standard_normal(n) * 1e-4 * (rng.random() + 0.1)
        if rng.random() < 0.2:  # a curved misfit
            residual = residual + 1e-3 * np.sin(np.argsort(np.argsort(molality)) / n * 6.0)
        stated = bool(rng.integers(0, 2))
        weights = np.full(n, 1e8 * rng.random() + 1e6) if stated else np.ones(n)
        arguments.append((molality, residual, weights, float(np.sum(weights * residual**2)),
                          n - 2, 2, stated))
    together = judge_lack_of_fit_of_many(*zip(*arguments, strict=True))
    alone = [judge_lack_of_fit(*a) for a in arguments]
    assert fingerprint(together) == fingerprint(alone)
    assert any(j.systematic for j in alone) and any(j.birge_ratio > 1.0 for j in alone)


def _weighed_runs(seed: int) -> list[Run]:
    """Series with stated u(EMF) and u(m) (the effective variance and the budget's molalities
    line), temperatures that differ from reading to reading (within 0.2 K, or beyond it) or
    not, of two electrolytes and one or two electrons, all or some readings used."""
    rng = np.random.default_rng(seed)
    runs = []
    for index in range(24):
        n = int(rng.integers(6, 13))
        molality = np.geomspace(0.002, float(rng.choice([0.05, 0.5])), n)
        frame = pd.DataFrame({
            "molality_mol_kg": molality,
            "emf_V": _emf(0.2224, molality) + rng.normal(0.0, 5e-5, n),
            "u_emf_V": 5e-5, "series": f"w{index}"})
        if index % 2:
            frame["u_molality_mol_kg"] = molality * float(rng.choice([0.0, 1e-3, 5e-3]))
        if index % 3 == 1:
            frame["temperature_K"] = 298.15 + rng.uniform(-0.05, 0.05, n)
        elif index % 3 == 2:
            frame["temperature_K"] = 298.15 + np.linspace(0.0, 0.5, n)
        if index % 5 == 4:
            frame.loc[2, "emf_V"] = np.nan
        metadata = {**METADATA, **({"electrolyte": "NaCl"} if index % 4 >= 2 else {}),
                    **({"electrons": 2} if index % 8 >= 6 else {})}
        runs += runs_from_frame(frame, metadata)
    return runs


@pytest.mark.parametrize("seed", [0, 1])
def test_weighed_series_at_spread_temperatures_reduce_bit_for_bit_as_alone(seed):
    """(The refit on weights refined for u(m) ends among others a few ulp away from its
    optimum alone more often than a first fit does.)"""
    runs = _weighed_runs(seed)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        together = reduce_runs(runs, "hueckel")
        _assert_same(together, runs, "hueckel", inexact_share=4)
    lines = [line.component for r in together if isinstance(r, Reduction) for line in r.budget]
    assert "molalities" in lines


def test_the_budget_and_statistics_of_a_chunk_follow_their_formulas_per_series():
    """u(E°) from the readings and from u(m), and the residual s.d., as the per-series
    formulas give them (Σ over one series' readings), to the last bit."""
    runs = [*_weighed_runs(2), *_varied_runs(4)]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        together = [r for r in reduce_runs(runs, "hueckel") if isinstance(r, Reduction)]
    checked = set()
    for reduction in together:
        data, lines = reduction.data, {line.component: line for line in reduction.budget}
        s = reduction.gamma_propagation.sensitivity[0]
        stats = reduction.statistics
        if data.stated_uncertainty:
            expected = float(np.sqrt(np.sum(s**2 * data.u_emf_V**2)))
            molality_var = np.maximum(1.0 / data.weights - data.u_emf_V**2, 0.0)
            if np.any(molality_var > 0):
                assert repr(lines["molalities"].u_V) == repr(
                    float(np.sqrt(np.sum(s**2 * molality_var))))
                checked.add("molalities")
        else:
            expected = float(np.sqrt(np.sum(s**2) * (stats.chi2 / stats.dof)))
        assert repr(lines["readings"].u_V) == repr(expected)
        residual = reduction.point_columns["residual_V"][reduction.run.usable]
        assert repr(stats.residual_sd_V) == repr(
            float(math.sqrt(np.sum(residual**2) / stats.dof)))
        checked.add(data.stated_uncertainty)
    assert checked == {"molalities", True, False}


@given(st.lists(st.floats(allow_nan=True, allow_infinity=False, width=64), min_size=1,
                max_size=40))
def test_the_kept_mean_is_numpy_s(values):
    array = np.array(values)
    with np.errstate(over="ignore", invalid="ignore"):
        expected = float(np.mean(array))
        assert repr(mean_of(array)) == repr(expected)
        assert repr(mean_of(array[::-1].copy()[::-1])) == repr(expected)
