r"""Monte Carlo propagation of the reading, molality and temperature uncertainties of a run.

The propagation of distributions of GUM Supplement 1 (JCGM 101:2008): every input quantity is
drawn from its probability distribution, the measurement model — here the whole reduction of the
run — is evaluated for every draw, and the distribution of the results gives their expectation,
standard uncertainty and coverage interval. It checks the linear propagation of
:mod:`activolt.fit.uncertainty`, which keeps only first-order terms.

For each trial:

- every usable reading E_i is drawn from N(E_i, u²(E_i)) — the stated u(E_i), or, when the run
  does not state it, the fit's residual standard deviation (the Type A estimate of the reading
  scatter, used for every reading alike);
- every molality from N(m_i, u²(m_i)) (draws ≤ 0 are drawn again);
- the run temperature from N(0, u²(T)) added to every row alike (one draw per trial);
- E° and the model parameters that were free in the original reduction are fitted again, from
  the original optimum, with the other parameters held at the same values (the decisions to hold
  are not taken again per trial);
- γ± at every point follows from the trial's E°, reading and molality, as in the reduction.

Speed. The trials are the very problem the reduction solved — its prepared readings
(:attr:`Reduction.data`, with every refinement: gas correction, vapour lowering, effective
variance, lack-of-fit scaling) — drawn anew and fitted all at once by the batched engine
(:func:`activolt.fit.engine.solve`), one series per trial. A model whose free parameters all
enter linearly is solved in one step.

References
----------
.. [1] JCGM 101:2008, Evaluation of measurement data — Supplement 1 to the "Guide to the
   expression of uncertainty in measurement" — Propagation of distributions using a Monte Carlo
   method, §7 (in particular 7.7, the probabilistically symmetric coverage interval).
"""

from __future__ import annotations

import math
import sys
import time
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from ..chemistry.electrolytes import nernst_factor
from ..data.runs import Run, usable_points
from ..errors import FitError
from ..fit.engine import MeasurementModel, solve
from ..fit.problem import E0, parameter_spec, prepare_series
from ..physics.water import DebyeHueckelConstants, debye_hueckel_constants
from .dilution import Reduction, reduce_run
from .published import point_values

__all__ = ["MonteCarloResult", "SampleSummary", "coverage_interval", "monte_carlo"]

#: Trials drawn and fitted at once: memory stays ~ 10⁴ × N × (free parameters) numbers.
_CHUNK_TRIALS = 10_000


@dataclass(frozen=True)
class SampleSummary:
    """Summary of the Monte Carlo distribution of one output quantity.

    ``mean`` [unit], ``standard_deviation`` (the standard uncertainty) [unit], ``low`` and
    ``high`` the probabilistically symmetric coverage interval [unit] for probability
    ``coverage`` [-].
    """

    mean: float
    standard_deviation: float
    low: float
    high: float
    coverage: float


@dataclass(frozen=True)
class MonteCarloResult:
    """The outcome of :func:`monte_carlo`.

    Attributes
    ----------
    standard_potential : SampleSummary
        E° [V].
    points : pandas.DataFrame
        One row per usable reading: ``molality_mol_kg``, ``gamma_pm`` (of the reduction),
        ``gamma_pm_mean``, ``u_gamma_pm`` (standard deviation), ``gamma_pm_low``,
        ``gamma_pm_high`` (coverage interval) [-].
    standard_potential_samples : numpy.ndarray
        E° of every successful trial, shape (M,) [V].
    gamma_samples : numpy.ndarray
        γ± of every successful trial at every usable point, shape (M, N) [-].
    trials : int
        Trials requested.
    failed : int
        Trials whose fit failed (left out of the summaries).
    seed : int
        Seed of :func:`numpy.random.default_rng`; the same seed gives the same numbers.
    free_names : tuple of str
        Parameters fitted in every trial (E° first).
    held : dict of str to float
        Parameters held, at their values in the original reduction.
    reading_uncertainty : str
        ``"stated"`` or ``"residual standard deviation"``.
    temperature_u_K : float
        Standard uncertainty of the run temperature drawn [K].
    elapsed_s : float
        Wall time of the trials [s].
    notes : tuple of str
        What the user should know about what was and was not propagated.
    """

    standard_potential: SampleSummary
    points: pd.DataFrame
    standard_potential_samples: np.ndarray
    gamma_samples: np.ndarray
    trials: int
    failed: int
    seed: int
    free_names: tuple[str, ...]
    held: dict[str, float]
    reading_uncertainty: str
    temperature_u_K: float
    elapsed_s: float
    notes: tuple[str, ...] = ()


def coverage_interval(samples: np.ndarray, coverage: float = 0.95) -> tuple[float, float]:
    """Probabilistically symmetric coverage interval from Monte Carlo samples.

    Parameters
    ----------
    samples : numpy.ndarray
        M values of the output quantity [unit].
    coverage : float
        Coverage probability p [-].

    Returns
    -------
    tuple of float
        (y_low, y_high) [unit].

    Notes
    -----
    With the samples sorted, y_(1) ≤ … ≤ y_(M): q = pM if pM is a whole number, else
    ⌊pM + ½⌋; r = (M − q)/2 if that is whole, else ⌊(M − q + 1)/2⌋; the interval is
    [y_(r), y_(r+q)] (JCGM 101:2008, 7.7.1–7.7.2; rule as recalled, from memory, and equivalent
    to the 2.5 % and 97.5 % order statistics for p = 0.95).

    Examples
    --------
    >>> coverage_interval(np.arange(1.0, 1001.0))
    (25.0, 975.0)
    """
    values = np.sort(np.asarray(samples, dtype=float).ravel())
    m = values.size
    if m < 2:
        raise ValueError("a coverage interval needs at least two samples")
    if not 0.0 < coverage < 1.0:
        raise ValueError("coverage must be between 0 and 1")
    pm = coverage * m
    q = round(pm) if math.isclose(pm, round(pm)) else math.floor(pm + 0.5)
    half = (m - q) / 2.0
    r = int(half) if half.is_integer() else math.floor((m - q + 1) / 2.0)
    r = max(r, 1)
    return float(values[r - 1]), float(values[min(r + q, m) - 1])


def _summary(samples: np.ndarray, coverage: float) -> SampleSummary:
    low, high = coverage_interval(samples, coverage)
    return SampleSummary(mean=float(np.mean(samples)),
                         standard_deviation=float(np.std(samples, ddof=1)),
                         low=low, high=high, coverage=coverage)


def _constants_at(constants: DebyeHueckelConstants, shift_K: np.ndarray
                  ) -> DebyeHueckelConstants:
    """Debye–Hückel constants at every row's temperature + shift, by quadratic interpolation
    through T_c − 1 K, T_c and T_c + 1 K, with T_c the row's temperature moved at least 1 K
    inside liquid water (A_φ and B vary smoothly with T; the interpolation error for a shift
    within about 1 K of T_c is below 10⁻⁷ relative)."""
    base = np.asarray(constants.temperature, dtype=float)
    centre = np.clip(base, 273.15 + 1.0, 373.15 - 1.0)
    below = debye_hueckel_constants(centre - 1.0)
    middle = constants if np.array_equal(centre, base) else debye_hueckel_constants(centre)
    above = debye_hueckel_constants(centre + 1.0)
    offset = base + shift_K - centre

    def interpolate(low: np.ndarray, mid: np.ndarray, high: np.ndarray) -> np.ndarray:
        slope = (high - low) / 2.0
        curvature = (high - 2.0 * mid + low) / 2.0
        return mid + slope * offset + curvature * offset**2

    return DebyeHueckelConstants(
        temperature=base + shift_K,
        aphi=interpolate(below.aphi, middle.aphi, above.aphi),
        b=interpolate(below.b, middle.b, above.b),
    )


def _draw_molality(rng: np.random.Generator, molality: np.ndarray, u: np.ndarray,
                   trials: int) -> np.ndarray:
    drawn = molality + u * rng.standard_normal((trials, molality.size))
    bad = drawn <= 0.0
    while bad.any():  # a normal distribution truncated at zero
        drawn[bad] = (molality + u * rng.standard_normal((trials, molality.size)))[bad]
        bad = drawn <= 0.0
    return drawn


def monte_carlo(run: Run, model: str = "hueckel", fixed: Mapping[str, float] | None = None,
                trials: int = 2000, seed: int = 0, temperature_u_K: float | None = None, *,
                reduction: Reduction | None = None, coverage: float = 0.95,
                progress: bool | None = None) -> MonteCarloResult:
    r"""Propagate the run's input uncertainties to E° and γ± by Monte Carlo (JCGM 101:2008).

    Parameters
    ----------
    run : Run
        The run, as reduced.
    model : str
        Model name, as for :func:`activolt.procedures.dilution.reduce_run`.
    fixed : mapping, optional
        Parameters held by the user, as for :func:`activolt.procedures.dilution.reduce_run`.
    trials : int
        Number of Monte Carlo trials M (≥ 10; JCGM 101 recommends 10⁶ for a coverage interval
        correct to one or two digits — a few thousand give u to a few per cent).
    seed : int
        Seed of the random generator; the same seed gives the same result.
    temperature_u_K : float, optional
        Standard uncertainty of the run temperature [K]; one draw per trial moves every row.
        By default the run's own (metadata ``u_temperature_K``), as the reduction used it.
    reduction : Reduction, optional
        The reduction of ``run`` if already done (otherwise it is done here).
    coverage : float
        Coverage probability of the intervals [-].
    progress : bool, optional
        Show a progress bar on stderr (tqdm); by default only when stderr is a terminal, the
        run has more than one block of trials and lasts more than two seconds.

    Returns
    -------
    MonteCarloResult

    Raises
    ------
    ValueError
        ``trials`` < 10, a negative ``temperature_u_K`` or a coverage outside (0, 1).
    FitError
        More than half of the trials could not be fitted.

    Notes
    -----
    Each trial solves

    .. math:: \min_{E°, θ_{free}} \sum_i w_i [E_i^* − E°
              + σ s k_i^* (\ln m_{±,i}^* + \ln γ_±(m_i^*; θ))]^2

    with starred quantities drawn, the weights and held parameters of the original reduction,
    then ln γ±,i* = (E°* − E_i*)/(σ s k_i*) − ln m±,i*. The held parameters' own (Type B)
    uncertainty, which the linear propagation adds when a parameter is held at a convention,
    is not drawn here.

    The trials are drawn and fitted in blocks of 10 000, so that memory grows with the number
    of trials only through the kept samples (E° and γ± of every trial: 10⁶ trials of 15 points
    take about 130 MB). The first block draws from ``numpy.random.default_rng(seed)`` exactly as
    a single whole-array draw did, so results for up to 10 000 trials are those of earlier
    versions; block k ≥ 1 draws from the independent stream
    ``SeedSequence(seed, spawn_key=(k,))``. The same seed and number of trials give the same
    numbers.
    """
    if temperature_u_K is None:
        temperature_u_K = run.metadata.u_temperature_K
    if trials < 10:
        raise ValueError("at least 10 trials are needed")
    if not temperature_u_K >= 0.0:
        raise ValueError("temperature_u_K must be ≥ 0")
    if not 0.0 < coverage < 1.0:
        raise ValueError("coverage must be between 0 and 1")
    if reduction is None:
        reduction = reduce_run(run, model, fixed)
    family = reduction.model
    electrolyte = run.metadata.electrolyte
    data = reduction.data if reduction.data is not None else prepare_series(run)
    n = data.emf_V.size
    free = list(reduction.free_names[1:])
    values = dict(reduction.parameter_values)
    held = {k: v for k, v in values.items() if k not in free}
    e0 = float(reduction.standard_potential.nominal_value)
    notes: list[str] = []

    if data.stated_uncertainty:
        u_emf = data.u_emf_V
        reading = "stated"
    else:
        u_emf = np.full(n, reduction.statistics.residual_sd_V)
        reading = "residual standard deviation"
        notes.append("the run states no u(EMF); every reading was drawn with the fit's residual "
                     f"standard deviation, {reduction.statistics.residual_sd_V * 1e3:.3g} mV")
    u_molality = usable_points(run)["u_molality_mol_kg"].to_numpy(float)
    held_by_data = [p for p in reduction.parameters
                    if p.fixed and p.name in held and p.reason
                    and p.reason != "held at the value given by the user"]
    if held_by_data:
        notes.append("held in every trial at the reduction's values: "
                     + ", ".join(f"{p.symbol} = {p.value:.4g} {p.unit}".strip()
                                 for p in held_by_data)
                     + "; the uncertainty of a held conventional value (GUM Type B), which the "
                       "linear propagation includes, is not drawn")
    if temperature_u_K > 0.0:
        notes.append(f"run temperature drawn with u(T) = {temperature_u_K:g} K (one draw per "
                     "trial for all rows); it acts through k and the Debye–Hückel constants; "
                     "the change of E° itself with T and of the gas-pressure correction are not "
                     "included")

    started = time.perf_counter()
    names = [E0, *free]
    measurement = data.measurement_model(family, electrolyte)
    all_names = measurement.names
    specs = [None if name == E0 else parameter_spec(family, name) for name in all_names]
    linear = np.array([spec is None or spec.linear for spec in specs])
    bounds = np.array([[-math.inf, math.inf] if spec is None else [spec.minimum, spec.maximum]
                       for spec in specs])
    free_mask = np.array([name == E0 or name in free for name in all_names])
    start = data.values_array(family, e0, values)[0]
    stated_u_molality = bool(np.any(u_molality > 0))
    e0_samples = np.empty(trials)
    gamma = np.empty((trials, n))
    failed = np.zeros(trials, dtype=bool)
    if progress is None:
        progress = sys.stderr is not None and getattr(sys.stderr, "isatty", lambda: False)()
    show = progress and trials > _CHUNK_TRIALS
    bar = _progress_bar(trials) if show else None
    try:
        for first in range(0, trials, _CHUNK_TRIALS):
            count = min(_CHUNK_TRIALS, trials - first)
            rng = np.random.default_rng(
                seed if first == 0 else np.random.SeedSequence(
                    seed, spawn_key=(first // _CHUNK_TRIALS,)))
            emf = data.emf_V + u_emf * rng.standard_normal((count, n))
            molality = (_draw_molality(rng, data.molality, u_molality, count)
                        if stated_u_molality
                        else np.broadcast_to(data.molality, (count, n)).copy())
            temperature = np.broadcast_to(data.constants.temperature, (count, n))
            constants = DebyeHueckelConstants(temperature, np.broadcast_to(
                data.constants.aphi, (count, n)), np.broadcast_to(data.constants.b, (count, n)))
            nernst = np.broadcast_to(data.nernst_V, (count, n))
            if temperature_u_K > 0:
                shift = temperature_u_K * rng.standard_normal((count, 1))
                nernst = nernst_factor(electrolyte, run.metadata.electrons, temperature + shift)
                constants = _constants_at(data.constants, shift)
            batch = MeasurementModel(family, electrolyte, data.sign, molality, nernst,
                                     constants)
            fit = solve(batch, emf, np.broadcast_to(data.weights, (count, n)),
                        np.tile(start, (count, 1)), np.tile(free_mask, (count, 1)), linear,
                        bounds, covariance=False)
            lost = ~fit.converged
            chunk = slice(first, first + count)
            failed[chunk] = lost
            e0_samples[chunk] = fit.values[:, 0]
            gamma[chunk] = np.exp(batch.ln_gamma_from_emf(emf, fit.values))
            if bar is not None:
                bar.update(count)
    finally:
        if bar is not None:
            bar.close()
    if failed.sum() > trials / 2:
        raise FitError(f"{int(failed.sum())} of {trials} Monte Carlo trials could not be fitted")
    if failed.any():
        notes.append(f"{int(failed.sum())} of {trials} trials could not be fitted and are left "
                     "out")
    good = ~failed
    if not good.all():
        e0_samples, gamma = e0_samples[good], gamma[good]
    elapsed = time.perf_counter() - started

    summaries = [_summary(gamma[:, i], coverage) for i in range(n)]
    points = pd.DataFrame({
        "molality_mol_kg": data.molality,
        "gamma_pm": np.asarray(point_values(reduction, "gamma_pm"), dtype=float)[
            np.asarray(pd.isna(point_values(reduction, "flag")), dtype=bool)],
        "gamma_pm_mean": [s.mean for s in summaries],
        "u_gamma_pm": [s.standard_deviation for s in summaries],
        "gamma_pm_low": [s.low for s in summaries],
        "gamma_pm_high": [s.high for s in summaries],
    })
    return MonteCarloResult(
        standard_potential=_summary(e0_samples, coverage), points=points,
        standard_potential_samples=e0_samples, gamma_samples=gamma, trials=trials,
        failed=int(failed.sum()), seed=seed, free_names=tuple(names), held=held,
        reading_uncertainty=reading, temperature_u_K=float(temperature_u_K),
        elapsed_s=elapsed, notes=tuple(notes),
    )


def _progress_bar(trials: int) -> Any:
    """A tqdm bar on stderr that appears after two seconds, or None without tqdm."""
    try:
        from tqdm import tqdm
    except ImportError:  # pragma: no cover - a declared dependency
        return None
    return tqdm(total=trials, desc="Monte Carlo", unit=" trials", unit_scale=True, delay=2.0,
                leave=False, file=sys.stderr)
