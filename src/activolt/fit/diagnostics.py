r"""Fit diagnostics: leverage, leave-one-out residuals, Cook's distance and point flags.

Every function works on what a weighted least-squares fit leaves behind — the Jacobian J
(N × P) at the optimum, the weights w (1/u², or 1), the residuals r = y − f(p̂) (unweighted) and
whether the covariance was scaled by χ²/(N − P) — so it serves the reduction of a run as well as
any other fit (:mod:`activolt.fit.least_squares`). With A = W^½ J and e = W^½ r,

.. math:: H = A (A^T A)^{-1} A^T, \qquad h_{ii} = H_{ii}

is the weighted hat matrix (Σ h_ii = P). For a non-linear model these are the first-order
(linearised) diagnostics at the optimum.

The scale s. When the readings carry stated standard uncertainties (covariance not scaled), the
diagnostics use s = 1: the stated u_i is the scale, and a reading is judged against it. The
alternative, a scale estimated from the scatter, would let one bad reading inflate s for every
other point; with a small stated u the opposite danger matters more: one bad reading pulls the
fitted curve, its neighbours' residuals grow to several u, and a one-pass test would flag them
too. :func:`flag_points` therefore works sequentially: it flags the worst point only, removes it
(an exact linearised refit), and tests the rest again — so a neighbour is flagged only if it is
still out of line once the bad reading no longer pulls the fit. With unit weights (no stated u)
the scale is estimated, leaving the point out: s_(i)² = (χ² − e_i²/(1 − h_ii))/(N − P − 1).

References
----------
.. [1] Cook, R. D. (1977). Detection of influential observation in linear regression.
   Technometrics 19, 15–18. https://doi.org/10.1080/00401706.1977.10489493
.. [2] Belsley, D. A., Kuh, E. & Welsch, R. E. (1980). *Regression Diagnostics: Identifying
   Influential Data and Sources of Collinearity*. Wiley, ch. 2.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import numpy.typing as npt

__all__ = [
    "COOKS_DISTANCE_THRESHOLD", "FAMILY_LEVEL", "INFLUENCE_LEVEL", "PointDiagnostics",
    "RunsTest", "cooks_distance", "flag_points", "leverage", "log_run_probability",
    "outlier_threshold", "point_diagnostics", "point_diagnostics_of_many", "runs_test",
    "runs_tests", "serial_correlation_test", "serial_correlation_tests",
    "studentized_residuals",
]

#: Family-wise false-alarm probability of the outlier test over a whole run (Bonferroni).
FAMILY_LEVEL = 0.05
#: Cook's distance beyond which a point counts as influential: D = 1 moves the estimates to about
#: the edge of their 50 % joint confidence region (Cook 1977, comparison with the F(P, N − P)
#: median; common practice).
COOKS_DISTANCE_THRESHOLD = 1.0
#: Two-sided level at which an influential point must also disagree with the others to be flagged.
INFLUENCE_LEVEL = 0.05


def _arrays(jacobian: npt.ArrayLike, weights: npt.ArrayLike, residuals: npt.ArrayLike | None = None
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    j = np.asarray(jacobian, dtype=float)
    w = np.asarray(weights, dtype=float)
    if j.ndim != 2 or w.shape != (j.shape[0],):
        raise ValueError(f"jacobian has shape {j.shape} and weights {w.shape}; expected (N, P) "
                         "and (N,)")
    if j.shape[0] <= j.shape[1]:
        raise ValueError(f"{j.shape[0]} points and {j.shape[1]} parameters leave no degree of "
                         "freedom")
    if not np.all(np.isfinite(j)) or not np.all(np.isfinite(w)) or np.any(w <= 0.0):
        raise ValueError("the Jacobian must be finite and the weights positive and finite")
    a = j * np.sqrt(w)[:, None]
    e = None
    if residuals is not None:
        r = np.asarray(residuals, dtype=float)
        if r.shape != w.shape:
            raise ValueError(f"residuals have shape {r.shape}; expected {w.shape}")
        if not np.all(np.isfinite(r)):
            raise ValueError("the residuals hold NaN or infinite values")
        e = r * np.sqrt(w)
    return j, a, e


def _hat_diagonal(a: np.ndarray) -> np.ndarray:
    """h_ii of the weighted design ``a``; a small design's are kept between calls, since
    the leverage, the studentized residuals, Cook's distance and the flags of one fit each
    need them (by value: the same numbers give the same h)."""
    if a.size > _KEPT_DESIGN_SIZE or not (a.flags.c_contiguous or a.flags.f_contiguous):
        return _hat_diagonal_of(a)
    # (in its own memory order: the column norms are summed in that order)
    order = "C" if a.flags.c_contiguous else "F"
    return _kept_hat_diagonal(a.shape, order, a.tobytes(order=order)).copy()


#: Largest design (N × P values) whose hat diagonal is kept between calls.
_KEPT_DESIGN_SIZE = 2000


@lru_cache(maxsize=8)
def _kept_hat_diagonal(shape: tuple[int, ...], order: str, data: bytes) -> np.ndarray:
    return _hat_diagonal_of(np.frombuffer(data, dtype=float).reshape(shape, order=order))


def _hat_diagonal_of(a: np.ndarray) -> np.ndarray:
    norms = np.linalg.norm(a, axis=0)
    q, _ = np.linalg.qr(a / np.where(norms > 0.0, norms, 1.0))
    return np.sum(q**2, axis=1)


def leverage(jacobian: npt.ArrayLike, weights: npt.ArrayLike) -> np.ndarray:
    """Leverage h_ii, the diagonal of the weighted hat matrix.

    Parameters
    ----------
    jacobian : array_like
        ∂f_i/∂p_k at the optimum, shape (N, P) [unit of y per parameter unit].
    weights : array_like
        w_i = 1/u_i² or 1, shape (N,) [1/(unit of y)²].

    Returns
    -------
    numpy.ndarray
        h_ii in [0, 1], summing to P [-].

    Notes
    -----
    .. math:: h_{ii} = [W^{1/2} J (J^T W J)^{-1} J^T W^{1/2}]_{ii} = \\lVert Q_{i\\cdot} \\rVert^2

    with Q from the QR factorisation of W^½ J (Belsley, Kuh & Welsch 1980, §2.1).

    Examples
    --------
    A straight line through x = 0, 1, 2: h = 5/6, 1/3, 5/6 (hand computation).

    >>> j = np.array([[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]])
    >>> [round(float(h), 4) for h in leverage(j, np.ones(3) * 4.0)]
    [0.8333, 0.3333, 0.8333]
    """
    _, a, _ = _arrays(jacobian, weights)
    return _hat_diagonal(a)


def _studentized(a: np.ndarray, e: np.ndarray, scaled: bool) -> tuple[np.ndarray, np.ndarray]:
    """(t_i, h_ii) for the points of a fit with weighted design a and weighted residuals e."""
    n, p = a.shape
    h = np.minimum(_hat_diagonal(a), 1.0 - 1e-15)
    deleted = e**2 / (1.0 - h)  # the fall of χ² when point i is left out
    if scaled:
        if n - p - 1 < 1:
            raise ValueError("leave-one-out scale needs N − P − 1 ≥ 1")
        variance = (float(np.sum(e**2)) - deleted) / (n - p - 1)
        scale = np.sqrt(np.maximum(variance, np.finfo(float).tiny))
    else:
        scale = np.ones(n)
    return e / (scale * np.sqrt(1.0 - h)), h


def studentized_residuals(jacobian: npt.ArrayLike, weights: npt.ArrayLike,
                          residuals: npt.ArrayLike, covariance_scaled: bool) -> np.ndarray:
    r"""Externally studentized (leave-one-out) residuals.

    Parameters
    ----------
    jacobian : array_like
        ∂f_i/∂p_k at the optimum, shape (N, P).
    weights : array_like
        w_i = 1/u_i² or 1, shape (N,) [1/(unit of y)²].
    residuals : array_like
        r_i = y_i − f_i(p̂), shape (N,) [unit of y].
    covariance_scaled : bool
        False with stated uncertainties (s = 1, see the module notes), True with unit weights
        (the scale is estimated leaving point i out).

    Returns
    -------
    numpy.ndarray
        t_i [-]: the residual of point i from a fit without it, over its standard uncertainty.

    Notes
    -----
    .. math:: t_i = \frac{r_i \sqrt{w_i}}{s_{(i)} \sqrt{1 − h_{ii}}}, \qquad
              s_{(i)}^2 = \frac{χ^2 − r_i^2 w_i/(1 − h_{ii})}{N − P − 1}

    (s_(i) = 1 with stated uncertainties). For a linear model t_i equals
    (y_i − ŷ_(i)) / u(y_i − ŷ_(i)) with ŷ_(i) the prediction of the fit without point i, exactly
    (Belsley, Kuh & Welsch 1980, eq. 2.26); with unit weights it follows Student's t with
    N − P − 1 degrees of freedom, with stated uncertainties the standard normal distribution.
    """
    _, a, e = _arrays(jacobian, weights, residuals)
    return _studentized(a, e, covariance_scaled)[0]


def cooks_distance(jacobian: npt.ArrayLike, weights: npt.ArrayLike, residuals: npt.ArrayLike,
                   covariance_scaled: bool) -> np.ndarray:
    r"""Cook's distance of every point.

    Parameters
    ----------
    jacobian, weights, residuals, covariance_scaled
        As in :func:`studentized_residuals`.

    Returns
    -------
    numpy.ndarray
        D_i ≥ 0 [-].

    Notes
    -----
    .. math:: D_i = \frac{(\hat p − \hat p_{(i)})^T J^T W J (\hat p − \hat p_{(i)})}{P s^2}
              = \frac{e_i^2}{P s^2} \frac{h_{ii}}{(1 − h_{ii})^2}

    with e_i = r_i √w_i, s² = χ²/(N − P) for unit weights and s = 1 with stated uncertainties
    (Cook 1977, eq. 5). D_i = 1 moves the estimates to about the edge of their 50 % joint
    confidence region.
    """
    _, a, e = _arrays(jacobian, weights, residuals)
    n, p = a.shape
    h = np.minimum(_hat_diagonal(a), 1.0 - 1e-15)
    s2 = float(np.sum(e**2)) / (n - p) if covariance_scaled else 1.0
    return e**2 * h / (p * s2 * (1.0 - h) ** 2)


def outlier_threshold(n_points: int, n_parameters: int, covariance_scaled: bool,
                      level: float = FAMILY_LEVEL) -> float:
    r"""Bonferroni threshold on |t_i| for a run of N points.

    Parameters
    ----------
    n_points : int
        N, the points tested.
    n_parameters : int
        P, the adjusted parameters.
    covariance_scaled : bool
        Whether t_i follows Student's t (N − P − 1 degrees of freedom; unit weights) or the
        standard normal distribution (stated uncertainties).
    level : float
        Family-wise probability that a clean run has any point beyond the threshold [-].

    Returns
    -------
    float
        The (1 − level/(2N)) quantile [-].

    Notes
    -----
    Testing N residuals each at level α/N keeps the chance of any false flag in a clean run
    below α (Bonferroni inequality; Belsley, Kuh & Welsch 1980, §2.1 on studentized residuals).

    Examples
    --------
    Ten readings with stated uncertainties: z(1 − 0.05/20) (normal quantile table).

    >>> round(outlier_threshold(10, 3, False), 3)
    2.807
    """
    from scipy.special import ndtri, stdtrit

    if n_points < 1:
        raise ValueError("no points to test")
    q = 1.0 - level / (2.0 * n_points)
    if covariance_scaled:
        dof = n_points - n_parameters - 1
        if dof < 1:
            raise ValueError("a scaled outlier test needs N − P − 1 ≥ 1")
        return float(stdtrit(dof, q))
    return float(ndtri(q))


def _refit(a: np.ndarray, e: np.ndarray, keep: np.ndarray) -> np.ndarray:
    """Weighted residuals of every point after refitting the linearised model on ``keep``."""
    step, *_ = np.linalg.lstsq(a[keep], e[keep], rcond=None)
    return e - a @ step


def flag_points(jacobian: npt.ArrayLike, weights: npt.ArrayLike, residuals: npt.ArrayLike,
                covariance_scaled: bool, *, outlier_limit: float | None = None,
                cooks_limit: float = COOKS_DISTANCE_THRESHOLD,
                level: float = FAMILY_LEVEL, influence_level: float = INFLUENCE_LEVEL,
                max_flags: int | None = None) -> list[str | None]:
    r"""Which points look wrong, and why: None for a point that does not.

    Parameters
    ----------
    jacobian, weights, residuals, covariance_scaled
        As in :func:`studentized_residuals`.
    outlier_limit : float, optional
        Threshold on |t_i| (default :func:`outlier_threshold` for the run at ``level``).
    cooks_limit : float
        Threshold on Cook's distance (default 1; Cook 1977).
    level : float
        Family-wise level of the outlier test (default 5 %).
    influence_level : float
        Two-sided level at which an influential point must also disagree with the others
        (default 5 %: |t| beyond 1.96 with stated uncertainties).
    max_flags : int, optional
        At most this many outliers (default ⌊(N − P)/2⌋, at least 1); the rest of the run must
        stay the majority.

    Returns
    -------
    list of (str or None)
        Per point, e.g. ``"studentized residual 8.3 beyond 2.81"`` or
        ``"Cook's distance 1.7 beyond 1 with studentized residual 2.4"``.

    Notes
    -----
    1. Outliers, one at a time: compute t_i for the points still in; if the largest |t_i|
       exceeds the Bonferroni threshold, flag that point, refit the linearised model without it
       (exactly: e ← e − A δ with δ the least-squares step on the remaining rows), and repeat.
       For a single gross error δ at point k of an otherwise exact run, |t_k| ≥ |t_j| for every
       other j (|H_jk| ≤ √((1 − h_jj)(1 − h_kk)), the Cauchy–Schwarz inequality on the
       projector I − H), so the bad reading is the one removed first and its neighbours are
       tested again without its pull.
    2. Influence, on the points left: Cook's distance D_i beyond ``cooks_limit`` flags a point
       only if its t_i is also beyond the two-sided ``influence_level`` quantile. The ends of a
       dilution series carry large leverage by design (h_ii → 1 at the most concentrated point
       of a three-parameter fit), so D_i = t_i² h_ii / (P (1 − h_ii)) exceeds 1 there even for a
       reading within its uncertainty; influence alone is the design, not a fault of the
       reading (Belsley, Kuh & Welsch 1980, §2.1; Cook 1977).

    Examples
    --------
    A straight line with one reading 40 u off (u = 1):

    >>> x = np.arange(8.0)
    >>> y = 1.0 + 0.5 * x + np.array([0.3, -0.5, 0.2, 40.0, -0.1, 0.4, -0.6, 0.1])
    >>> j = np.column_stack([np.ones_like(x), x])
    >>> from activolt.fit.least_squares import linear_least_squares
    >>> fit = linear_least_squares(j, y, np.ones_like(x))
    >>> flags = flag_points(j, fit.weights, fit.residuals, covariance_scaled=False)
    >>> [i for i, f in enumerate(flags) if f]
    [3]
    """
    _, a, e = _arrays(jacobian, weights, residuals)
    return _flags(a, e, covariance_scaled, outlier_limit, cooks_limit, level, influence_level,
                  max_flags)


def _flags(a: np.ndarray, e: np.ndarray, covariance_scaled: bool, outlier_limit: float | None,
           cooks_limit: float, level: float, influence_level: float, max_flags: int | None,
           first: tuple[np.ndarray, np.ndarray] | None = None) -> list[str | None]:
    """:func:`flag_points` on the weighted design and residuals (``first``: the studentized
    residuals and the clipped leverages of every point, as :func:`_studentized` gives them,
    when known)."""
    from scipy.special import ndtri, stdtrit

    n, p = a.shape
    limit = (outlier_threshold(n, p, covariance_scaled, level) if outlier_limit is None
             else float(outlier_limit))
    extra = 1 if covariance_scaled else 0
    most = max(1, (n - p) // 2) if max_flags is None else int(max_flags)
    flags: list[str | None] = [None] * n
    keep = np.ones(n, dtype=bool)
    current = e.copy()
    while keep.sum() - p - extra >= 1 and (~keep).sum() < most:
        index = np.flatnonzero(keep)
        t = (first[0] if first is not None and keep.all()
             else _studentized(a[keep], current[keep], covariance_scaled)[0])
        worst = int(np.argmax(np.abs(t)))
        if not abs(t[worst]) > limit:
            break
        point = int(index[worst])
        flags[point] = f"studentized residual {t[worst]:.3g} beyond {limit:.3g}"
        keep[point] = False
        current = _refit(a, e, keep)

    if keep.sum() - p - extra >= 1:
        index = np.flatnonzero(keep)
        t, h = ((first if first is not None else _studentized(a, e, covariance_scaled))
                if keep.all() else _studentized(a[keep], current[keep], covariance_scaled))
        s2 = (float(np.sum(current[keep] ** 2)) / (keep.sum() - p) if covariance_scaled
              else 1.0)
        distance = current[keep] ** 2 * h / (p * s2 * (1.0 - h) ** 2)
        quantile = (float(stdtrit(keep.sum() - p - 1, 1.0 - influence_level / 2.0))
                    if covariance_scaled else float(ndtri(1.0 - influence_level / 2.0)))
        for k, point in enumerate(index):
            if distance[k] > cooks_limit and abs(t[k]) > quantile:
                flags[int(point)] = (f"Cook's distance {distance[k]:.3g} beyond {cooks_limit:g} "
                                     f"with studentized residual {t[k]:.3g}")
    return flags


@dataclass(frozen=True)
class PointDiagnostics:
    """Every point's leverage h_ii, studentized residual t_i, Cook's distance D_i and flag
    (:func:`leverage`, :func:`studentized_residuals`, :func:`cooks_distance`,
    :func:`flag_points`)."""

    leverage: np.ndarray
    studentized_residual: np.ndarray
    cooks_distance: np.ndarray
    flags: list[str | None]


def point_diagnostics(jacobian: npt.ArrayLike, weights: npt.ArrayLike,
                      residuals: npt.ArrayLike, covariance_scaled: bool) -> PointDiagnostics:
    """:func:`leverage`, :func:`studentized_residuals`, :func:`cooks_distance` and
    :func:`flag_points` (with its defaults) of one fit at once: the same numbers, the input
    checked and the hat diagonal worked out once.

    Parameters
    ----------
    jacobian, weights, residuals, covariance_scaled
        As in :func:`studentized_residuals`.

    Returns
    -------
    PointDiagnostics
    """
    _, a, e = _arrays(jacobian, weights, residuals)
    n, p = a.shape
    t, h = _studentized(a, e, covariance_scaled)
    s2 = float(np.sum(e**2)) / (n - p) if covariance_scaled else 1.0
    return PointDiagnostics(
        leverage=_hat_diagonal(a), studentized_residual=t,
        cooks_distance=e**2 * h / (p * s2 * (1.0 - h) ** 2),
        flags=_flags(a, e, covariance_scaled, None, COOKS_DISTANCE_THRESHOLD, FAMILY_LEVEL,
                     INFLUENCE_LEVEL, None, first=(t, h)))


def point_diagnostics_of_many(jacobians: Sequence[npt.ArrayLike],
                              weights: Sequence[npt.ArrayLike],
                              residuals: Sequence[npt.ArrayLike],
                              covariance_scaled: Sequence[bool]) -> list[PointDiagnostics]:
    """:func:`point_diagnostics` of many fits: the same numbers, the fits of one shape (N, P)
    and one kind of weights worked out together.

    Their weighted designs are factorised by one stacked QR (the same LAPACK factorisation of
    each as alone), their leverages, studentized residuals and Cook's distances computed in
    the same array operations, and only a fit with a point beyond the outlier threshold, or
    beyond Cook's threshold with its studentized residual beyond the influence quantile, goes
    through the flagging of :func:`flag_points`; the others have no flag, as it would find.

    Parameters
    ----------
    jacobians, weights, residuals : sequence of array_like
        Per fit, as in :func:`point_diagnostics`.
    covariance_scaled : sequence of bool
        Per fit, as in :func:`point_diagnostics`.

    Returns
    -------
    list of PointDiagnostics
        Per fit, in order.
    """
    from scipy.special import ndtri, stdtrit

    found: dict[int, PointDiagnostics] = {}
    groups: dict[tuple[tuple[int, ...], bool, str], list[int]] = {}
    for index, (jacobian, scaled) in enumerate(zip(jacobians, covariance_scaled, strict=True)):
        layout = (("F" if jacobian.flags.f_contiguous and not jacobian.flags.c_contiguous
                   else "C" if jacobian.flags.c_contiguous else str(index))
                  if isinstance(jacobian, np.ndarray) else "C")
        groups.setdefault((np.shape(jacobian), bool(scaled), layout), []).append(index)
    for (shape, scaled, layout), members in groups.items():
        column_major = layout == "F"
        n, p = shape if len(shape) == 2 else (0, 0)
        together = (len(members) > 1 and layout in ("C", "F") and n > p
                    and not (scaled and n - p - 1 < 1)
                    and all(np.shape(weights[i]) == (n,) == np.shape(residuals[i])
                            for i in members))
        if together:
            j = np.array([np.asarray(jacobians[i], dtype=float) for i in members])
            w = np.array([np.asarray(weights[i], dtype=float) for i in members])
            r = np.array([np.asarray(residuals[i], dtype=float) for i in members])
            together = bool(np.isfinite(j).all() and np.isfinite(w).all() and (w > 0.0).all()
                            and np.isfinite(r).all())
        if not together:
            for i in members:  # alone, with its own checks and messages
                found[i] = point_diagnostics(jacobians[i], weights[i], residuals[i], scaled)
            continue
        sqrt_w = np.sqrt(w)
        a = j * sqrt_w[:, :, None]
        e = r * sqrt_w
        # each column's norm summed in the order its design alone is laid out in (a design in
        # column-major order sums along its contiguous columns, pairwise)
        along = np.ascontiguousarray(a.transpose(0, 2, 1)) if column_major else a
        norms = np.sqrt(np.add.reduce(along * along, axis=2 if column_major else 1))
        q, _ = np.linalg.qr(a / np.where(norms > 0.0, norms, 1.0)[:, None, :])
        hat = np.sum(q**2, axis=2)
        h = np.minimum(hat, 1.0 - 1e-15)
        squares = e**2
        if scaled:
            variance = ((np.sum(squares, axis=1)[:, None] - squares / (1.0 - h))
                        / (n - p - 1))
            scale = np.sqrt(np.maximum(variance, np.finfo(float).tiny))
            s2 = np.sum(squares, axis=1)[:, None] / (n - p)
        else:
            scale, s2 = np.ones_like(e), np.ones((len(members), 1))
        t = e / (scale * np.sqrt(1.0 - h))
        distance = squares * h / (p * s2 * (1.0 - h) ** 2)
        limit = outlier_threshold(n, p, scaled, FAMILY_LEVEL)
        quantile = (float(stdtrit(n - p - 1, 1.0 - INFLUENCE_LEVEL / 2.0)) if scaled
                    else float(ndtri(1.0 - INFLUENCE_LEVEL / 2.0)))
        size = np.abs(t)
        screened = ((size > limit).any(axis=1)
                    | ((distance > COOKS_DISTANCE_THRESHOLD) & (size > quantile)).any(axis=1))
        for k, i in enumerate(members):
            flags: list[str | None] = (
                _flags(a[k], e[k], scaled, None, COOKS_DISTANCE_THRESHOLD, FAMILY_LEVEL,
                       INFLUENCE_LEVEL, None, first=(t[k], h[k])) if screened[k] else [None] * n)
            found[i] = PointDiagnostics(leverage=hat[k], studentized_residual=t[k],
                                        cooks_distance=distance[k], flags=flags)
    return [found[index] for index in range(len(jacobians))]


@dataclass(frozen=True)
class RunsTest:
    """Wald–Wolfowitz runs test of a sequence of signs.

    Attributes
    ----------
    n_positive, n_negative : int
        Numbers of positive and negative values (zeros are left out) [-].
    runs : int
        Number of runs (maximal blocks of one sign) [-].
    expected_runs : float
        Mean number of runs given the counts, 2 n₊ n₋ / n + 1 [-].
    sd_runs : float
        Its standard deviation [-].
    z : float
        (runs − expected)/sd, the normal approximation [-]; NaN when sd is 0.
    p_value_two_sided : float
        Exact two-sided probability, 2 min(P(R ≤ r), P(R ≥ r)), capped at 1 [-].
    p_value_fewer : float
        Exact lower-tail probability P(R ≤ r): too few runs, the sign of a systematic misfit [-].
    """

    n_positive: int
    n_negative: int
    runs: int
    expected_runs: float
    sd_runs: float
    z: float
    p_value_two_sided: float
    p_value_fewer: float


def log_run_probability(runs: int, n1: int, n2: int) -> float:
    """ln P(R = runs | n1, n2) for a random arrangement (Swed & Eisenhart 1943)."""
    total = math.comb(n1 + n2, n1)
    if runs % 2 == 0:
        k = runs // 2
        ways = 2 * math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k - 1)
    else:
        k = (runs - 1) // 2
        ways = (math.comb(n1 - 1, k) * math.comb(n2 - 1, k - 1)
                + math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k))
    return -math.inf if ways == 0 else math.log(ways) - math.log(total)


def _log_comb(n: np.ndarray | int, k: np.ndarray) -> np.ndarray:
    """ln C(n, k), −∞ where k < 0 or k > n."""
    from scipy.special import gammaln

    n = np.broadcast_to(np.asarray(n, dtype=float), np.shape(k))
    k = np.asarray(k, dtype=float)
    valid = (k >= 0.0) & (k <= n)
    safe_k = np.where(valid, k, 0.0)
    value = gammaln(n + 1.0) - gammaln(safe_k + 1.0) - gammaln(n - safe_k + 1.0)
    return np.where(valid, value, -np.inf)


def log_run_probabilities(runs: npt.ArrayLike, n1: int, n2: int) -> np.ndarray:
    """ln P(R = r | n1, n2) for each r of ``runs`` at once (Swed & Eisenhart 1943), in
    O(len(runs)) with log-gamma functions: :func:`log_run_probability` (exact integers) costs
    O(n²) digits and is unusable beyond a few thousand values.

    Examples
    --------
    >>> r = np.arange(2, 13)
    >>> bool(np.allclose(log_run_probabilities(r, 7, 5),
    ...                  [log_run_probability(int(k), 7, 5) for k in r], rtol=1e-12))
    True
    """
    r = np.asarray(runs, dtype=int)
    total = _log_comb(n1 + n2, np.asarray(n1))
    k_even = r // 2
    even = np.log(2.0) + _log_comb(n1 - 1, k_even - 1) + _log_comb(n2 - 1, k_even - 1)
    k_odd = (r - 1) // 2
    odd = np.logaddexp(_log_comb(n1 - 1, k_odd) + _log_comb(n2 - 1, k_odd - 1),
                       _log_comb(n1 - 1, k_odd - 1) + _log_comb(n2 - 1, k_odd))
    return np.where(r % 2 == 0, even, odd) - total


def runs_test(values: npt.ArrayLike) -> RunsTest:
    r"""Wald–Wolfowitz runs test of the signs of a sequence.

    Parameters
    ----------
    values : array_like
        The sequence in its natural order (residuals ordered by molality) [any unit]. Zeros and
        NaN are left out.

    Returns
    -------
    RunsTest
        Counts, runs, the normal-approximation z and the exact probabilities. With only one sign
        present the test cannot be made: z and the probabilities are NaN.

    Notes
    -----
    Given n₊ positive and n₋ negative values (n = n₊ + n₋), the number of runs R of a random
    arrangement has

    .. math:: μ_R = \frac{2 n_+ n_-}{n} + 1, \qquad
              σ_R^2 = \frac{2 n_+ n_- (2 n_+ n_- − n)}{n^2 (n − 1)}

    (Wald & Wolfowitz 1940). The probabilities are exact, from the distribution of R
    (Swed & Eisenhart 1943): with k = R/2 for even R,
    P(R) = 2 C(n₊−1, k−1) C(n₋−1, k−1) / C(n, n₊), and with k = (R−1)/2 for odd R,
    P(R) = [C(n₊−1, k) C(n₋−1, k−1) + C(n₊−1, k−1) C(n₋−1, k)] / C(n, n₊).

    References
    ----------
    .. [1] Wald, A. & Wolfowitz, J. (1940). Ann. Math. Statist. 11, 147–162.
       https://doi.org/10.1214/aoms/1177731909
    .. [2] Swed, F. S. & Eisenhart, C. (1943). Ann. Math. Statist. 14, 66–87.

    Examples
    --------
    Four positive and four negative values in two blocks of two: R = 4 runs, μ_R = 5, and
    P(R ≤ 4) = 26/70 (hand count over the C(8, 4) = 70 arrangements):

    >>> t = runs_test([1, 1, -1, -1, 1, 1, -1, -1])
    >>> t.runs, t.expected_runs, round(t.p_value_fewer, 4), round(26 / 70, 4)
    (4, 5.0, 0.3714, 0.3714)
    """
    x = np.asarray(values, dtype=float).ravel()
    signs = np.sign(x[np.isfinite(x) & (x != 0.0)])
    n1 = int(np.sum(signs > 0))
    n2 = int(np.sum(signs < 0))
    runs = int(1 + np.sum(signs[1:] != signs[:-1])) if n1 + n2 else 0
    return _runs_test_of_counts(n1, n2, runs)


def runs_tests(sequences: Sequence[npt.ArrayLike]) -> list[RunsTest]:
    """:func:`runs_test` of each sequence: the same results, the signs of sequences of one
    length without zeros or NaN counted together.

    Examples
    --------
    >>> runs_tests([[1, 1, -1, -1], [1, -1, 1, -1]]) == [runs_test([1, 1, -1, -1]),
    ...                                                  runs_test([1, -1, 1, -1])]
    True
    """
    found: dict[int, RunsTest] = {}
    for members, x in _stacked_rows(sequences):
        if x is None or not (x != 0.0).all():
            for i in members:
                found[i] = runs_test(sequences[i])
            continue
        signs = np.sign(x)
        n1 = np.count_nonzero(signs > 0, axis=1).tolist()
        changes = np.count_nonzero(signs[:, 1:] != signs[:, :-1], axis=1).tolist()
        for i, positive, changed in zip(members, n1, changes, strict=True):
            found[i] = _runs_test_of_counts(positive, x.shape[1] - positive, 1 + changed)
    return [found[i] for i in range(len(sequences))]


def _stacked_rows(sequences: Sequence[npt.ArrayLike]
                  ) -> list[tuple[list[int], np.ndarray | None]]:
    """The sequences grouped by length, each group as (their indices, their values stacked
    (G × J)); None in place of the values for a group with a NaN or infinite value or of
    length 0."""
    groups: dict[int, list[int]] = {}
    arrays = [np.asarray(v, dtype=float).ravel() for v in sequences]
    for index, x in enumerate(arrays):
        groups.setdefault(x.size, []).append(index)
    out: list[tuple[list[int], np.ndarray | None]] = []
    for size, members in groups.items():
        x = np.array([arrays[i] for i in members]) if size else None
        out.append((members, x if x is not None and np.isfinite(x).all() else None))
    return out


@lru_cache(maxsize=4096)
def _runs_test_of_counts(n1: int, n2: int, runs: int) -> RunsTest:
    """:func:`runs_test` of a sequence with ``n1`` positive and ``n2`` negative values in
    ``runs`` runs; kept between calls (the same counts recur over many series)."""
    n = n1 + n2
    if n1 == 0 or n2 == 0:
        return RunsTest(n_positive=n1, n_negative=n2, runs=runs, expected_runs=float(runs),
                        sd_runs=0.0, z=math.nan, p_value_two_sided=math.nan,
                        p_value_fewer=math.nan)
    expected = 2.0 * n1 * n2 / n + 1.0
    variance = 2.0 * n1 * n2 * (2.0 * n1 * n2 - n) / (n**2 * (n - 1)) if n > 1 else 0.0
    sd = math.sqrt(variance)
    z = (runs - expected) / sd if sd > 0.0 else math.nan
    counts, probabilities = _run_distribution(n1, n2)
    fewer = min(1.0, float(np.sum(probabilities[counts <= runs])))
    more = min(1.0, float(np.sum(probabilities[counts >= runs])))
    return RunsTest(n_positive=n1, n_negative=n2, runs=runs, expected_runs=expected,
                    sd_runs=sd, z=z, p_value_two_sided=min(1.0, 2.0 * min(fewer, more)),
                    p_value_fewer=fewer)


def _run_distribution(n1: int, n2: int) -> tuple[np.ndarray, np.ndarray]:
    """(every possible number of runs, its probability) for n1 and n2 values of each sign;
    kept between calls for the usual sizes."""
    if n1 + n2 <= 1000:
        return _kept_run_distribution(n1, n2)
    counts = np.arange(2, n1 + n2 + 1)
    return counts, np.exp(log_run_probabilities(counts, n1, n2))


@lru_cache(maxsize=256)
def _kept_run_distribution(n1: int, n2: int) -> tuple[np.ndarray, np.ndarray]:
    counts = np.arange(2, n1 + n2 + 1)
    probabilities = np.exp(log_run_probabilities(counts, n1, n2))
    counts.flags.writeable = probabilities.flags.writeable = False
    return counts, probabilities


#: Largest orderings (permutations × values) of the permutation test kept between calls.
_KEPT_ORDERINGS = 400_000


def _shuffled_indices(permutations: int, size: int) -> np.ndarray:
    """The random orderings of the permutation test as indices, shape (permutations, size):
    rows of 0 … size − 1 shuffled by the generator of seed 0. A shuffle's draws do not depend on
    what is shuffled, so ``values[indices]`` are exactly the orderings that shuffling
    ``values`` itself with that generator gives."""
    return np.random.default_rng(0).permuted(
        np.broadcast_to(np.arange(size), (permutations, size)), axis=1)


def _adjacent_pairs(permutations: int, size: int) -> np.ndarray:
    """For each ordering of :func:`_shuffled_indices`, its adjacent positions (i, i − 1) as
    flat indices ``size * o[i] + o[i − 1]`` into the size × size table of products, shape
    (permutations, size − 1); kept for the usual sizes."""
    if permutations * size <= _KEPT_ORDERINGS:
        return _kept_pairs(permutations, size)
    return _pairs_of(_shuffled_indices(permutations, size))


def _pairs_of(orderings: np.ndarray) -> np.ndarray:
    return orderings[:, 1:] * orderings.shape[1] + orderings[:, :-1]


@lru_cache(maxsize=16)
def _kept_pairs(permutations: int, size: int) -> np.ndarray:
    pairs = _pairs_of(_shuffled_indices(permutations, size))
    pairs.flags.writeable = False
    return pairs


def serial_correlation_test(values: npt.ArrayLike, permutations: int = 4000,
                            exact_up_to: int = 1000) -> tuple[float, float]:
    r"""Lag-1 serial correlation of a sequence and its one-sided permutation probability.

    Parameters
    ----------
    values : array_like
        The sequence in its natural order (mean residuals of solutions by molality) [any unit];
        NaN left out.
    permutations : int
        Number of random orderings for the probability (fixed seed, so the result repeats).
    exact_up_to : int
        Longest sequence whose probability comes from random orderings; a longer one takes the
        normal approximation with the exact permutation mean and variance (below).

    Returns
    -------
    tuple of float
        (ρ₁, P(ρ₁* ≥ ρ₁) over random orderings); (NaN, NaN) with fewer than four values.

    Notes
    -----
    .. math:: ρ_1 = \frac{\sum_{i=2}^{J} r_i r_{i-1}}{\sum_{i=1}^{J} r_i^2}

    the statistic of the Durbin–Watson family (Durbin & Watson 1950, Biometrika 37, 409):
    residuals of a model that misses a curvature follow each other smoothly (ρ₁ > 0) even when a
    few signs break the runs. The probability is that of a permutation test (Fisher 1935;
    Good 2005, *Permutation, Parametric and Bootstrap Tests of Hypotheses*, ch. 3). Beyond
    ``exact_up_to`` values (where drawing the orderings would cost time and memory of order
    ``permutations`` × J) it is 1 − Φ(z), z = (T − E T)/√var T with T = Σ r_i r_{i−1} and its
    mean and variance over all J! orderings, which the serial statistic approaches for large J
    (Wald & Wolfowitz 1943, Ann. Math. Statist. 14, 378): with p_k = Σ r_i^k and the sums over
    distinct indices d₂ = p₁² − p₂, d₂₂ = p₂² − p₄, d₂₁₁ = p₁²p₂ − p₂² − 2p₁p₃ + 2p₄,
    d₁₁₁₁ = p₁⁴ − 6p₁²p₂ + 3p₂² + 8p₁p₃ − 6p₄, and (J)_k the falling factorial,

    .. math:: E\,T = (J−1) μ, \quad μ = d_2/(J)_2, \qquad
              \mathrm{var}\,T = (J−1)(d_{22}/(J)_2 − μ^2) + 2(J−2)(d_{211}/(J)_3 − μ^2)
              + (J−2)(J−3)(d_{1111}/(J)_4 − μ^2)

    (adjacent pairs share one element, J − 2 of them; (J − 2)(J − 3)/2 pairs of pairs share
    none).

    Examples
    --------
    A smooth arc is serially correlated; alternating signs are not:

    >>> rho, p = serial_correlation_test([-3, -2, -1, 1, 2, 3, 2, 1, -1, -2])
    >>> bool(rho > 0.5 and p < 0.01)
    True
    >>> serial_correlation_test([1, -1, 1, -1, 1, -1])[1] > 0.5
    True
    """
    x = np.asarray(values, dtype=float).ravel()
    x = x[np.isfinite(x)]
    if x.size < 4 or not np.any(x != 0.0):
        return math.nan, math.nan
    x = x - 0.0
    denominator = float(np.sum(x**2))
    rho = float(np.sum(x[1:] * x[:-1])) / denominator
    if x.size > exact_up_to:
        from scipy.special import ndtr

        mean, variance = serial_moments(x)
        if not variance > 0.0:
            return rho, math.nan
        z = (rho * denominator - mean) / math.sqrt(variance)
        return rho, float(ndtr(-z))
    # x_a x_b of every adjacent pair (a, b) of every ordering, taken from the products of
    # all pairs: the same numbers as multiplying the shuffled values, in one gather
    products = np.multiply.outer(x, x).ravel()
    rho_random = np.sum(products[_adjacent_pairs(permutations, x.size)], axis=1) / denominator
    return rho, float((np.sum(rho_random >= rho - 1e-15) + 1) / (permutations + 1))


#: How far from the threshold an estimated statistic of the permutation test must lie to be
#: counted without summing it again exactly (:func:`serial_correlation_tests`).
_SERIAL_MARGIN = 1e-4


@lru_cache(maxsize=4)
def _pair_counts(permutations: int, size: int) -> np.ndarray:
    """For each ordering of :func:`_shuffled_indices`, how often each pair of values a < b is
    adjacent in it (in either order), over the pairs of ``numpy.triu_indices(size, 1)``,
    shape (size (size − 1)/2, permutations), single precision."""
    pairs = _adjacent_pairs(permutations, size)
    low, high = np.minimum(pairs // size, pairs % size), np.maximum(pairs // size, pairs % size)
    column = np.full((size, size), -1)
    column[np.triu_indices(size, 1)] = np.arange(size * (size - 1) // 2)
    counts = np.zeros((size * (size - 1) // 2, permutations), dtype=np.float32)
    np.add.at(counts, (column[low, high], np.arange(permutations)[:, None]), 1.0)
    counts.flags.writeable = False
    return counts


def serial_correlation_tests(sequences: Sequence[npt.ArrayLike], permutations: int = 4000,
                             exact_up_to: int = 1000) -> list[tuple[float, float]]:
    """:func:`serial_correlation_test` of each sequence: the same numbers, the random orderings
    of sequences of one length (finite, of 4 to ``exact_up_to`` values, none beyond 10¹⁰⁰ or
    all below 10⁻¹⁰⁰ in size) worked out together.

    Examples
    --------
    >>> a, b = [-3.0, -2.0, -1.0, 1.0, 2.0], [1.0, -1.0, 1.0, -1.0, 1.0]
    >>> serial_correlation_tests([a, b]) == [serial_correlation_test(a),
    ...                                      serial_correlation_test(b)]
    True
    """
    found: dict[int, tuple[float, float]] = {}
    for members, x in _stacked_rows(sequences):
        alone = members
        if x is not None and 4 <= x.shape[1] <= exact_up_to:
            size = np.max(np.abs(x), axis=1)
            kept = (size > 1e-100) & (size < 1e100)  # (no overflow, no underflow below)
            found.update(zip([members[k] for k in np.flatnonzero(kept)],
                             _serial_tests_together(x[kept], permutations), strict=True))
            alone = [members[k] for k in np.flatnonzero(~kept)]
        for i in alone:
            found[i] = serial_correlation_test(sequences[i], permutations, exact_up_to)
    return [found[i] for i in range(len(sequences))]


def _serial_tests_together(x: np.ndarray, permutations: int) -> list[tuple[float, float]]:
    """:func:`serial_correlation_test` of the rows of ``x`` (S × J, finite, each with a value
    of size between 10⁻¹⁰⁰ and 10¹⁰⁰ and none beyond)."""
    x = x - 0.0
    denominator = np.sum(x**2, axis=1)
    rho = np.sum(x[:, 1:] * x[:, :-1], axis=1) / denominator
    size = x.shape[1]
    pairs = _adjacent_pairs(permutations, size)
    products = (x[:, :, None] * x[:, None, :]).reshape(-1, size * size)
    threshold = rho - 1e-15
    # Each ordering's statistic estimated in single precision by one matrix product — its
    # count of each pair a < b (they are never adjacent to themselves) times the pair's product,
    # the values scaled to at most 1 — within about (J² + 4) 2⁻²⁴ of ρ's scale of the sum
    # serial_correlation_test makes, in whatever order BLAS adds (the adjacent products of an
    # ordering add up to at most Σ x² in size). Only orderings within _SERIAL_MARGIN of the
    # threshold are summed again, exactly as there; the others fall on the same side of it
    # either way.
    upper = np.triu_indices(size, 1)
    scaled = (x / np.max(np.abs(x), axis=1)[:, None]).astype(np.float32)
    squares = np.sum(scaled.astype(float) ** 2, axis=1)
    # (the bounds on the sums, Σ x² ρ ± margin, in single precision)
    low = ((threshold - _SERIAL_MARGIN) * squares).astype(np.float32)[:, None]
    high = ((threshold + _SERIAL_MARGIN) * squares).astype(np.float32)[:, None]
    counts = _pair_counts(permutations, size)
    count = np.zeros(x.shape[0], dtype=np.intp)
    for first in range(0, x.shape[0], 16):  # (a block's sums stay in the cache)
        block = slice(first, first + 16)
        sums = (scaled[block, upper[0]] * scaled[block, upper[1]]) @ counts
        above = sums > high[block]
        near = ~above & ~(sums < low[block])
        count[block] = np.count_nonzero(above, axis=1)
        for k in np.flatnonzero(near.any(axis=1)):
            row = first + k
            exact = (np.sum(products[row][pairs[np.flatnonzero(near[k])]], axis=1)
                     / denominator[row])
            count[row] += np.count_nonzero(exact >= threshold[row])
    p = (count + 1) / (permutations + 1)
    return [(float(r), float(q)) for r, q in zip(rho, p, strict=True)]


def serial_moments(values: npt.ArrayLike) -> tuple[float, float]:
    r"""Mean and variance of T = Σ_{i≥2} x_i x_{i−1} over all orderings of ``values``.

    The formulas are those in the notes of :func:`serial_correlation_test` (sums over distinct
    indices written with power sums; Wald & Wolfowitz 1943).

    Examples
    --------
    The 24 orderings of (1, 2, 3, 4) give T a mean of 17.5 and a variance of 155/12
    (hand count over the orderings):

    >>> mean, variance = serial_moments([1.0, 2.0, 3.0, 4.0])
    >>> round(mean, 10), round(variance - 155 / 12, 10)
    (17.5, 0.0)
    """
    x = np.asarray(values, dtype=float).ravel()
    j = float(x.size)
    if x.size < 4:
        raise ValueError("the moments need at least four values")
    p1, p2, p3, p4 = (float(np.sum(x**k)) for k in (1, 2, 3, 4))
    f2, f3, f4 = j * (j - 1.0), j * (j - 1.0) * (j - 2.0), j * (j - 1.0) * (j - 2.0) * (j - 3.0)
    mu = (p1**2 - p2) / f2
    d22 = (p2**2 - p4) / f2
    d211 = (p1**2 * p2 - p2**2 - 2.0 * p1 * p3 + 2.0 * p4) / f3
    d1111 = (p1**4 - 6.0 * p1**2 * p2 + 3.0 * p2**2 + 8.0 * p1 * p3 - 6.0 * p4) / f4
    variance = ((j - 1.0) * (d22 - mu**2) + 2.0 * (j - 2.0) * (d211 - mu**2)
                + (j - 2.0) * (j - 3.0) * (d1111 - mu**2))
    return (j - 1.0) * mu, variance

