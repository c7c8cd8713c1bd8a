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

Speed. All trials are fitted at once: a Gauss–Newton iteration on arrays of shape (trials,
points), the Jacobian by central differences of the vectorised model and a batched QR solve per
step, with step halving where χ² would rise. A model whose free parameters all enter linearly
converges in one step. Trials that do not converge in 100 steps are fitted one by one with
:func:`activolt.fit.least_squares.weighted_least_squares`.

References
----------
.. [1] JCGM 101:2008, Evaluation of measurement data — Supplement 1 to the "Guide to the
   expression of uncertainty in measurement" — Propagation of distributions using a Monte Carlo
   method, §7 (in particular 7.7, the probabilistically symmetric coverage interval).
"""

from __future__ import annotations

import dataclasses
import math
import sys
import time
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from ..activity import ActivityModel
from ..data.runs import Run, usable_points
from ..errors import FitError
from ..physics.water import DebyeHueckelConstants, debye_hueckel_constants
from .dilution import E0, Reduction, _Data, _model_emf, _prepare, reduce_run

__all__ = ["MonteCarloResult", "SampleSummary", "coverage_interval", "monte_carlo"]

_MAX_STEPS = 100
#: Trials drawn and fitted at once: memory stays ~ 10⁴ × N × (free parameters) numbers.
_CHUNK_TRIALS = 10_000
_HALVINGS = 8
#: A trial has converged when every parameter step is below this fraction of the parameter's
#: standard uncertainty from the original reduction.
_STEP_TOLERANCE = 1e-7
#: Relative change of χ² below its rounding error (the residuals are differences of EMFs ~0.1–1 V
#: known to ~1e-16 relative, of size ~1e-5 V), accepted as no change.
_CHI2_ROUNDING = 1e-9


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
    """Debye–Hückel constants at every row's temperature + shift, by quadratic interpolation in
    the shift between T − 1 K, T and T + 1 K (A_φ and B vary smoothly with T; the interpolation
    error for |shift| ≤ 1 K is below 10⁻⁷ relative)."""
    base = np.asarray(constants.temperature, dtype=float)
    below = debye_hueckel_constants(base - 1.0)
    above = debye_hueckel_constants(base + 1.0)

    def interpolate(low: np.ndarray, mid: np.ndarray, high: np.ndarray) -> np.ndarray:
        slope = (high - low) / 2.0
        curvature = (high - 2.0 * mid + low) / 2.0
        return mid + slope * shift_K + curvature * shift_K**2

    return DebyeHueckelConstants(
        temperature=base + shift_K,
        aphi=interpolate(below.aphi, constants.aphi, above.aphi),
        b=interpolate(below.b, constants.b, above.b),
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
                trials: int = 2000, seed: int = 0, temperature_u_K: float = 0.0, *,
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
    temperature_u_K : float
        Standard uncertainty of the run temperature [K]; one draw per trial moves every row.
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
    data = _prepare(run)
    n = data.emf_V.size
    free = list(reduction.free_names[1:])
    values = dict(reduction.parameter_values)
    held = {k: v for k, v in values.items() if k not in free}
    e0 = float(reduction.standard_potential.nominal_value)
    start = np.array([e0, *[values[name] for name in free]])
    uncertainty = np.sqrt(np.diag(reduction.covariance))
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
    bounds = np.array([[-math.inf, math.inf]] + [list(_limits(family, name)) for name in free])
    stated_u_molality = bool(np.any(u_molality > 0))
    e0_samples = np.empty(trials)
    gamma = np.empty((trials, n))
    failed = np.zeros(trials, dtype=bool)
    one_by_one = 0
    vectorised: bool | None = None
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
            shift = (temperature_u_K * rng.standard_normal((count, 1)) if temperature_u_K > 0
                     else np.zeros((count, 1)))
            batched = dataclasses.replace(
                data, molality=molality, emf_V=emf,
                ln_mean_molality=np.log(electrolyte.mean_molality(molality)),
            )
            if temperature_u_K > 0:
                temperature = np.asarray(data.constants.temperature, dtype=float) + shift
                from ..chemistry.electrolytes import nernst_factor

                batched = dataclasses.replace(
                    batched,
                    nernst_V=nernst_factor(electrolyte, run.metadata.electrons, temperature),
                    constants=_constants_at(data.constants, shift))

            def evaluate(parameters: np.ndarray, which: np.ndarray,
                         source: _Data = batched) -> np.ndarray:
                subset = _subset(source, which)
                trial_values = {**values, **{name: parameters[:, k + 1:k + 2]
                                             for k, name in enumerate(free)}}
                return np.asarray(_model_emf(family, electrolyte, subset, parameters[:, :1],
                                             trial_values), dtype=float)

            parameters = np.broadcast_to(start, (count, start.size)).copy()
            everyone = np.arange(count)
            if vectorised is None:
                try:
                    probe = evaluate(parameters[:2], everyone[:2])
                    vectorised = probe.shape == (min(2, count), n)
                except (ValueError, TypeError, IndexError):
                    vectorised = False
            done = np.zeros(count, dtype=bool)
            if vectorised:
                done = _gauss_newton(evaluate, parameters, emf, data.weights, bounds,
                                     uncertainty)
            one_by_one += int((~done).sum())
            lost = np.zeros(count, dtype=bool)
            for trial in np.flatnonzero(~done):
                single = _subset(batched, np.array([trial]))
                try:
                    parameters[trial] = _fit_one(family, electrolyte, single, values, free,
                                                 start, data.weights, bounds)
                except (FitError, ValueError):
                    lost[trial] = True
            good = ~lost
            # ln γ± from each drawn reading: E = E° − c (ln m± + ln γ±) with c = σ s k, read
            # off the model (it is linear in ln m±) so that any slope factor or sign is
            # honoured.
            fitted = evaluate(parameters[good], everyone[good])
            shifted = dataclasses.replace(_subset(batched, everyone[good]),
                                          ln_mean_molality=batched.ln_mean_molality[good] + 1.0)
            factor = fitted - evaluate(parameters[good], np.arange(int(good.sum())), shifted)
            ln_gamma = ((parameters[good, :1] - emf[good]) / factor
                        - batched.ln_mean_molality[good])
            chunk = slice(first, first + count)
            failed[chunk] = lost
            e0_samples[chunk][good] = parameters[good, 0]
            gamma[chunk][good] = np.exp(ln_gamma)
            if bar is not None:
                bar.update(count)
    finally:
        if bar is not None:
            bar.close()
    if one_by_one:
        notes.append(f"{one_by_one} of {trials} trials were fitted one by one (the "
                     "vectorised Gauss–Newton did not settle them)")
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
        "gamma_pm": reduction.points.loc[reduction.points["flag"].isna(), "gamma_pm"]
        .to_numpy(float),
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


def _limits(family: ActivityModel, name: str) -> tuple[float, float]:
    """(minimum, maximum) of a model parameter, or of a cell parameter the reduction adds."""
    try:
        spec = family.parameter(name)
    except KeyError:
        try:
            from .dilution import _spec
        except ImportError:
            return -math.inf, math.inf
        spec = _spec(family, name)
    return float(spec.minimum), float(spec.maximum)


def _subset(data: _Data, which: np.ndarray) -> _Data:
    """The trials ``which`` of a batched data set (arrays of shape (trials, N) are sliced)."""
    changes = {}
    for field in dataclasses.fields(data):
        value = getattr(data, field.name)
        if isinstance(value, np.ndarray) and value.ndim == 2:
            changes[field.name] = value[which]
        elif isinstance(value, DebyeHueckelConstants) and np.ndim(value.aphi) == 2:
            changes[field.name] = DebyeHueckelConstants(
                temperature=value.temperature[which], aphi=value.aphi[which],
                b=value.b[which])
    return dataclasses.replace(data, **changes)


def _gauss_newton(evaluate, parameters: np.ndarray, observed: np.ndarray, weights: np.ndarray,
                  bounds: np.ndarray, uncertainty: np.ndarray) -> np.ndarray:
    """Fit all trials at once, in place; returns which trials converged."""
    trials, p = parameters.shape
    sqrt_w = np.sqrt(weights)
    active = np.arange(trials)
    converged = np.zeros(trials, dtype=bool)
    tolerance = _STEP_TOLERANCE * np.where(uncertainty > 0, uncertainty, 1.0)
    steps_size = 1e-6 * np.maximum(1.0, np.abs(parameters[0]))

    def chi2(values: np.ndarray, which: np.ndarray) -> np.ndarray:
        return np.sum(weights * (observed[which] - evaluate(values, which)) ** 2, axis=1)

    current = chi2(parameters, active)
    for _ in range(_MAX_STEPS):
        if active.size == 0:
            break
        values = parameters[active]
        model = evaluate(values, active)
        jacobian = np.empty((active.size, observed.shape[1], p))
        jacobian[:, :, 0] = 1.0
        for k in range(1, p):
            up, down = values.copy(), values.copy()
            up[:, k] += steps_size[k]
            down[:, k] -= steps_size[k]
            jacobian[:, :, k] = (evaluate(up, active) - evaluate(down, active)) / (
                2.0 * steps_size[k])
        a = jacobian * sqrt_w[None, :, None]
        b = (observed[active] - model) * sqrt_w
        norms = np.linalg.norm(a, axis=1)
        norms = np.where(norms > 0, norms, 1.0)
        q, r = np.linalg.qr(a / norms[:, None, :])
        try:
            step = np.linalg.solve(r, np.einsum("tnk,tn->tk", q, b)[..., None])[..., 0]
        except np.linalg.LinAlgError:
            break
        step = step / norms
        factor = np.ones(active.size)
        trial_values = np.clip(values + step, bounds[:, 0], bounds[:, 1])
        trial_chi2 = chi2(trial_values, active)
        for _ in range(_HALVINGS):
            worse = ~(trial_chi2 <= current[active] * (1.0 + _CHI2_ROUNDING) + 1e-300)
            if not worse.any():
                break
            factor[worse] /= 2.0
            trial_values[worse] = np.clip(values[worse] + factor[worse, None] * step[worse],
                                          bounds[:, 0], bounds[:, 1])
            trial_chi2[worse] = chi2(trial_values[worse], active[worse])
        better = trial_chi2 <= current[active] * (1.0 + _CHI2_ROUNDING) + 1e-300
        parameters[active[better]] = trial_values[better]
        current[active[better]] = trial_chi2[better]
        # A full step this small means the optimum is reached, whether or not χ² could still
        # tell the difference through its rounding.
        small = np.all(np.abs(step) <= tolerance, axis=1)
        converged[active[small]] = True
        active = active[~small]
    # A trial pinned at a bound has not found an interior optimum: fit it one by one.
    inside = np.all((parameters > bounds[:, 0]) & (parameters < bounds[:, 1]), axis=1)
    return converged & inside


def _fit_one(family, electrolyte, single: _Data, values: dict[str, float], free: list[str],
             start: np.ndarray, weights: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    """One trial with the fitting core (the slow, robust path)."""
    from ..fit.least_squares import weighted_least_squares

    flat = dataclasses.replace(single, **{
        field.name: getattr(single, field.name)[0] for field in dataclasses.fields(single)
        if isinstance(getattr(single, field.name), np.ndarray)
        and getattr(single, field.name).ndim == 2})
    if isinstance(flat.constants, DebyeHueckelConstants) and np.ndim(flat.constants.aphi) == 2:
        flat = dataclasses.replace(flat, constants=DebyeHueckelConstants(
            temperature=flat.constants.temperature[0], aphi=flat.constants.aphi[0],
            b=flat.constants.b[0]))
    keys = ["e0", *[f"p{k}" for k in range(len(free))]]

    def model(p: Mapping[str, float]) -> np.ndarray:
        trial = {**values, **{name: p[key] for name, key in zip(free, keys[1:], strict=True)}}
        return _model_emf(family, electrolyte, flat, p["e0"], trial)

    limits = {key: (float(low), float(high)) for key, (low, high)
              in zip(keys, bounds, strict=True) if math.isfinite(low) or math.isfinite(high)}
    fit = weighted_least_squares(model, dict(zip(keys, start, strict=True)), flat.emf_V,
                                 weights, bounds=limits, scale_covariance=False)
    return fit.value_array
