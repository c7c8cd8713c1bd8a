r"""Lack of fit of a dilution series: excess scatter, and a misfit that no scaling covers.

A fit is judged twice: over the readings (χ² = Σ w r², ν = N − P) and, when solutions were
read more than once, over the solutions (χ²_s = Σ_j W_j r̄_j², ν_s = J − P, r̄_j the weighted
mean residual of solution j and W_j its summed weight), because replicate readings share their
solution's error and would hide it from the first test. Each reduced χ² is taken relative to
the scale the covariance already has (1 with stated uncertainties, χ²ᵣ with unit weights); a
significant excess gives the Birge ratio R_B = √(largest excess) (Birge 1932, Phys. Rev. 40,
207). The solutions' mean residuals in order of molality are tested for a systematic misfit:
too few runs of one sign (Wald & Wolfowitz 1940) or a lag-1 serial correlation (permutation
test), together with a significant χ².
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from .diagnostics import (
    RunsTest,
    runs_test,
    runs_tests,
    serial_correlation_test,
    serial_correlation_tests,
)

__all__ = ["LACK_OF_FIT_P", "SYSTEMATIC_CHI2_P", "SYSTEMATIC_RUNS_P",
           "SYSTEMATIC_RUNS_P_UNIT_WEIGHTS", "LackOfFit", "judge_lack_of_fit",
           "judge_lack_of_fit_of_many", "solution_means"]

#: With stated reading uncertainties, a fit whose χ² has an upper-tail probability below this
#: shows lack of fit: its covariance is scaled by the reduced χ² (the square of the Birge ratio
#: R_B = √χ²ᵣ; Birge 1932, Phys. Rev. 40, 207) and the coverage factor taken from Student's t
#: with the fit's degrees of freedom — the readings scatter more than stated, and the answer
#: says so instead of quoting the stated precision.
LACK_OF_FIT_P = 0.05
#: A fit is refused as a systematic misfit when the mean residuals of its solutions, in order of
#: molality, form fewer runs of one sign than chance allows (Wald–Wolfowitz) or follow each other
#: (lag-1 serial correlation, permutation test) — the smaller p below this — and — with stated
#: reading uncertainties — its χ² is improbable (p below :data:`SYSTEMATIC_CHI2_P`): scaling
#: the covariance cannot cover a bias that the model builds into E°.
SYSTEMATIC_RUNS_P = 0.05
#: See :data:`SYSTEMATIC_RUNS_P`.
SYSTEMATIC_CHI2_P = 0.01
#: Without stated reading uncertainties the size of the misfit cannot be judged; the runs test
#: alone refuses the fit below this lower-tail probability.
SYSTEMATIC_RUNS_P_UNIT_WEIGHTS = 0.01


@dataclass(frozen=True)
class LackOfFit:
    """How a fit stands against its stated (or estimated) scatter.

    Attributes
    ----------
    birge_ratio : float
        √(largest significant excess of the reduced χ²), 1 when there is none [-].
    birge_dof : int
        Degrees of freedom of that χ² (readings or solutions) [-].
    chi2_p_value : float
        Upper-tail probability of the readings' χ² relative to the covariance's scale [-].
    reduced_chi2 : float
        χ²/ν relative to that scale [-].
    runs : RunsTest
        Runs test of the solutions' mean residual signs in order of molality.
    serial_correlation, serial_p_value : float
        Lag-1 serial correlation of the solutions' weighted mean residuals and its permutation
        probability [-].
    systematic : bool
        Whether the misfit is systematic (see the module docstring): no scaling covers it.
    """

    birge_ratio: float
    birge_dof: int
    chi2_p_value: float
    reduced_chi2: float
    runs: RunsTest
    serial_correlation: float
    serial_p_value: float
    systematic: bool


def solution_means(molality: npt.ArrayLike, residual_V: npt.ArrayLike, weights: npt.ArrayLike
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(molality, weighted mean residual [V], summed weight) of each solution: readings at one
    molality are replicates of one solution and share its preparation error.

    Examples
    --------
    >>> m, r, w = solution_means([0.1, 0.1, 0.2], [1.0, 3.0, -1.0], [1.0, 1.0, 2.0])
    >>> m.tolist(), r.tolist(), w.tolist()
    ([0.1, 0.2], [2.0, -1.0], [2.0, 2.0])
    """
    w = np.asarray(weights, dtype=float)
    molality_values, group = np.unique(np.asarray(molality, dtype=float), return_inverse=True)
    weight = np.bincount(group, weights=w)
    mean = np.bincount(group, weights=w * np.asarray(residual_V, dtype=float)) / weight
    return molality_values, mean, weight


def judge_lack_of_fit(molality: npt.ArrayLike, residual_V: npt.ArrayLike,
                      weights: npt.ArrayLike, chi2: float, dof: int, n_free: int,
                      stated_uncertainty: bool) -> LackOfFit:
    """Judge a weighted fit's residuals (see the module docstring).

    Parameters
    ----------
    molality : array_like
        Molality of each reading [mol kg⁻¹] (equal values: one solution).
    residual_V : array_like
        E − Ê of each reading [V].
    weights : array_like
        1/u² (stated) or 1 (unit weights) [V⁻²].
    chi2 : float
        Σ w r² of the fit.
    dof : int
        N − P.
    n_free : int
        P, the fitted parameters (E° included).
    stated_uncertainty : bool
        Whether the weights come from stated uncertainties (χ² then judged absolutely).

    Returns
    -------
    LackOfFit
    """
    m = np.asarray(molality, dtype=float)
    _, mean, weight = solution_means(m, residual_V, weights)
    return _verdict(m.size, mean, weight, runs_test(mean),
                    serial_correlation_test(mean * np.sqrt(weight)), chi2, dof, n_free,
                    stated_uncertainty)


def judge_lack_of_fit_of_many(molality: Sequence[npt.ArrayLike],
                              residual_V: Sequence[npt.ArrayLike],
                              weights: Sequence[npt.ArrayLike], chi2: Sequence[float],
                              dof: Sequence[int], n_free: Sequence[int],
                              stated_uncertainty: Sequence[bool]) -> list[LackOfFit]:
    """:func:`judge_lack_of_fit` of many fits (each argument one entry per fit): the same
    results, the solutions' means of fits with one number of readings, and their runs and
    serial-correlation tests, worked out together.

    Examples
    --------
    >>> m, r, w = [0.1, 0.2, 0.3, 0.4, 0.5], [1.0, -2.0, 1.5, -1.0, 0.5], [1.0] * 5
    >>> judge_lack_of_fit_of_many([m], [r], [w], [9.0], [3], [2], [True]) == [
    ...     judge_lack_of_fit(m, r, w, 9.0, 3, 2, True)]
    True
    """
    means = _solution_means_of_many(molality, residual_V, weights)
    sizes = [np.size(m) for m in molality]
    runs = runs_tests([mean for mean, _, _ in means])
    serial = serial_correlation_tests([scaled for _, _, scaled in means])
    return [_verdict(*arguments) for arguments in zip(
        sizes, [mean for mean, _, _ in means], [weight for _, weight, _ in means], runs, serial,
        chi2, dof, n_free, stated_uncertainty, strict=True)]


def _solution_means_of_many(molality: Sequence[npt.ArrayLike],
                            residual_V: Sequence[npt.ArrayLike],
                            weights: Sequence[npt.ArrayLike]
                            ) -> list[tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """(weighted mean residual, summed weight, the mean times √weight) of each fit's
    solutions, as :func:`solution_means` gives them: the readings of fits of one size numbered
    by solution together, and summed in the same order (one count of many bins)."""
    found: dict[int, tuple[np.ndarray, np.ndarray, np.ndarray]] = {}
    groups: dict[int, list[int]] = {}
    for index, m in enumerate(molality):
        groups.setdefault(np.size(m), []).append(index)
    for size, members in groups.items():
        m = np.array([np.asarray(molality[i], dtype=float).ravel() for i in members])
        if size == 0 or len(members) == 1 or not np.isfinite(m).all():
            for i in members:
                _, mean, weight = solution_means(molality[i], residual_V[i], weights[i])
                found[i] = (mean, weight, mean * np.sqrt(weight))
            continue
        w = np.array([np.asarray(weights[i], dtype=float).ravel() for i in members])
        r = np.array([np.asarray(residual_V[i], dtype=float).ravel() for i in members])
        # each reading's solution: how many distinct molalities of its fit lie below it
        order = np.argsort(m, axis=1, kind="stable")
        ordered = np.take_along_axis(m, order, axis=1)
        rank = np.zeros(m.shape, dtype=np.intp)
        np.cumsum(ordered[:, 1:] != ordered[:, :-1], axis=1, out=rank[:, 1:])
        group = np.empty_like(rank)
        np.put_along_axis(group, order, rank, axis=1)
        bins = (group + size * np.arange(len(members))[:, None]).ravel()
        weight = np.bincount(bins, weights=w.ravel(), minlength=m.size)
        total = np.bincount(bins, weights=(w * r).ravel(), minlength=m.size)
        counts = (rank[:, -1] + 1).tolist()
        with np.errstate(invalid="ignore", divide="ignore"):  # (0/0 in the unused bins)
            mean = total / weight
        scaled = mean * np.sqrt(weight)
        for k, i in enumerate(members):
            used = slice(k * size, k * size + counts[k])
            found[i] = (mean[used], weight[used], scaled[used])
    return [found[i] for i in range(len(molality))]


def _verdict(n_readings: int, mean: np.ndarray, weight: np.ndarray, runs: RunsTest,
             serial: tuple[float, float], chi2: float, dof: int, n_free: int,
             stated_uncertainty: bool) -> LackOfFit:
    """:func:`judge_lack_of_fit` from the solutions' means and weights and the tests of their
    order."""
    from scipy.special import chdtrc

    runs_p = runs.p_value_fewer
    rho, serial_p = serial
    order_p = min(runs_p if math.isfinite(runs_p) else 1.0,
                  serial_p if math.isfinite(serial_p) else 1.0)
    scale = 1.0 if stated_uncertainty else chi2 / dof
    reduced = chi2 / dof / scale
    chi2_p = float(chdtrc(dof, chi2 / scale)) if dof > 0 else math.nan
    candidates = []
    if stated_uncertainty and chi2_p < LACK_OF_FIT_P and reduced > 1.0:
        candidates.append((reduced, dof))
    dof_solutions = mean.size - n_free
    solutions_p = math.nan
    if mean.size < n_readings and dof_solutions >= 1:
        chi2_solutions = float(np.sum(weight * mean**2)) / scale
        solutions_p = float(chdtrc(dof_solutions, chi2_solutions))
        if solutions_p < LACK_OF_FIT_P and chi2_solutions / dof_solutions > 1.0:
            candidates.append((chi2_solutions / dof_solutions, dof_solutions))
    significant = min(chi2_p if stated_uncertainty else 1.0,
                      solutions_p if math.isfinite(solutions_p) else 1.0)
    if stated_uncertainty or math.isfinite(solutions_p):
        systematic = order_p < SYSTEMATIC_RUNS_P and significant < SYSTEMATIC_CHI2_P
    else:
        systematic = order_p < SYSTEMATIC_RUNS_P_UNIT_WEIGHTS
    excess, birge_dof = max(candidates) if candidates else (1.0, dof)
    return LackOfFit(birge_ratio=math.sqrt(excess), birge_dof=int(birge_dof),
                     chi2_p_value=chi2_p, reduced_chi2=reduced, runs=runs,
                     serial_correlation=rho, serial_p_value=serial_p,
                     systematic=bool(systematic))
