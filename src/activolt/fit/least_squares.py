r"""Weighted least squares: the fitting core, independent of electrochemistry.

Two entry points return the same :class:`LeastSquaresResult`:

- :func:`weighted_least_squares` for any model ``model(parameters) -> values``, minimised with
  lmfit's Levenberg–Marquardt (``method="leastsq"``) and polished by Gauss–Newton steps; the
  covariance is computed here, not taken from the minimiser, from a central-difference Jacobian
  at the optimum;
- :func:`linear_least_squares` for models linear in every parameter, solved by a Householder QR
  of the weighted, column-equilibrated design matrix with one step of iterative refinement (the
  normal equations square the condition number and lose half the digits on ill-conditioned
  designs such as the NIST StRD Longley data).

Both minimise χ² = Σ w_i (y_i − f_i(p))² with w_i = 1/u_i² (stated standard uncertainties of the
observations) or w_i = 1 (none stated). The covariance of the estimates is

.. math:: V_p = (J^T W J)^{-1} \quad\text{or}\quad V_p = (J^T W J)^{-1}\,\frac{χ^2}{N − P}

the second when the scale of the observations' uncertainties is estimated from the scatter
(``scale_covariance``; by default, exactly when no weights are given).

References: Press, W. H. et al. (2007), *Numerical Recipes*, 3rd ed., §15.4–15.5; Björck, Å.
(1996), *Numerical Methods for Least Squares Problems*, SIAM, §2.4 (QR, iterative refinement).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from ..errors import FitError

__all__ = ["LeastSquaresResult", "StraightLines", "central_difference_jacobian",
           "information_criteria", "linear_least_squares", "straight_lines",
           "weighted_least_squares"]

#: Relative step of the central-difference Jacobian, ≈ ε^(1/3) for float64 (Press et al. 2007,
#: §5.7: it balances truncation and rounding errors of a central difference).
JACOBIAN_RELATIVE_STEP = 6e-6
_POLISH_STEPS = 4


@dataclass(frozen=True)
class LeastSquaresResult:
    """A weighted least-squares fit: estimates, their covariance and the fit's statistics.

    Attributes
    ----------
    names : tuple of str
        Parameter names, in the order of the vectors and matrices below.
    values : dict of str to float
        Estimates [parameter units].
    standard_errors : dict of str to float
        Standard uncertainties of the estimates, √diag(covariance) [parameter units].
    covariance : numpy.ndarray
        Covariance of the estimates, shape (P, P).
    jacobian : numpy.ndarray
        ∂f_i/∂p_k at the optimum, shape (N, P) [unit of y per parameter unit].
    residuals : numpy.ndarray
        y_i − f_i(p̂), unweighted, shape (N,) [unit of y].
    weights : numpy.ndarray
        w_i used in the fit, shape (N,) [1/(unit of y)²].
    chi2 : float
        χ² = Σ w_i r_i² [-] (or [unit of y²] with unit weights).
    dof : int
        Degrees of freedom N − P.
    covariance_scaled : bool
        Whether the covariance was multiplied by χ²/dof.
    aic, bic : float
        Akaike and Bayesian information criteria (see :func:`information_criteria`).
    """

    names: tuple[str, ...]
    values: dict[str, float]
    standard_errors: dict[str, float]
    covariance: np.ndarray
    jacobian: np.ndarray
    residuals: np.ndarray
    weights: np.ndarray
    chi2: float
    dof: int
    covariance_scaled: bool
    aic: float
    bic: float

    @property
    def n_points(self) -> int:
        """Number of observations N."""
        return int(self.residuals.size)

    @property
    def value_array(self) -> np.ndarray:
        """The estimates as a vector in the order of :attr:`names`."""
        return np.array([self.values[n] for n in self.names])

    @property
    def reduced_chi2(self) -> float:
        """χ²/(N − P); NaN without degrees of freedom."""
        return self.chi2 / self.dof if self.dof > 0 else math.nan

    @property
    def residual_sd(self) -> float:
        """√(χ²/(N − P)): the weighted residual standard deviation [-] or [unit of y]."""
        return math.sqrt(self.reduced_chi2) if self.dof > 0 else math.nan


def information_criteria(chi2: float, n_points: int, n_parameters: int,
                         variance_estimated: bool) -> tuple[float, float]:
    """(AIC, BIC) of a least-squares fit.

    Parameters
    ----------
    chi2 : float
        Weighted sum of squared residuals.
    n_points : int
        Number of observations N.
    n_parameters : int
        Number of adjusted parameters P.
    variance_estimated : bool
        False when the observations' uncertainties are known (−2 ln L = χ² + const), True when
        their common scale is estimated from the scatter (−2 ln L = N ln(χ²/N) + const).

    Returns
    -------
    tuple of float
        AIC = −2 ln L + 2P and BIC = −2 ln L + P ln N (constants dropped).

    Notes
    -----
    Burnham, K. P. & Anderson, D. R. (2002). *Model Selection and Multimodel Inference*, 2nd ed.,
    Springer, §2.2 (least-squares case).

    Examples
    --------
    >>> [round(v, 3) for v in information_criteria(10.0, 20, 2, False)]
    [14.0, 15.991]
    """
    if variance_estimated:
        if chi2 <= 0.0:
            base = -math.inf
        else:
            base = n_points * math.log(chi2 / n_points)
    else:
        base = chi2
    return base + 2.0 * n_parameters, base + n_parameters * math.log(n_points)


def _check_observations(y: npt.ArrayLike, weights: npt.ArrayLike | None
                        ) -> tuple[np.ndarray, np.ndarray]:
    values = np.asarray(y, dtype=float)
    if values.ndim != 1 or values.size == 0:
        raise ValueError("y must be a non-empty one-dimensional array")
    if not np.all(np.isfinite(values)):
        raise ValueError("y holds NaN or infinite values; remove those observations first")
    if weights is None:
        return values, np.ones_like(values)
    w = np.asarray(weights, dtype=float)
    if w.shape != values.shape:
        raise ValueError(f"weights have shape {w.shape} but y has {values.shape}")
    if not np.all(np.isfinite(w)) or np.any(w <= 0.0):
        raise ValueError("weights must be positive and finite (w = 1/u²)")
    return values, w


def _covariance_from_weighted_design(a: np.ndarray,
                                     factor: tuple[np.ndarray, np.ndarray] | None = None
                                     ) -> np.ndarray:
    """(AᵀA)⁻¹ by QR of the column-equilibrated A; FitError if A is rank deficient.
    ``factor``: (column norms, R) of A when already known and checked."""
    if factor is None:
        norms = np.linalg.norm(a, axis=0)
        if np.any(norms == 0.0) or not np.all(np.isfinite(a)):
            raise FitError("a parameter does not affect the model at the optimum; its "
                           "uncertainty cannot be estimated (hold it)")
        r = np.linalg.qr(a / norms, mode="r")
        diagonal = np.abs(np.diag(r))
        if diagonal.min() <= diagonal.max() * a.shape[0] * np.finfo(float).eps:
            raise FitError("the parameters are not independent for these data (the Jacobian "
                           "is rank deficient); hold one of them")
    else:
        norms, r = factor
    # (R is finite: A is, and its columns have unit length)
    r_inverse = _upper_solve(r, np.eye(r.shape[0]))
    return (r_inverse @ r_inverse.T) / np.outer(norms, norms)


def _upper_solve(r: np.ndarray, b: np.ndarray) -> np.ndarray:
    """R⁻¹ b for an upper-triangular, non-singular, finite R: LAPACK's ``trtrs`` called as
    ``scipy.linalg.solve_triangular`` calls it (the same numbers), without its checks and
    conversions, which cost several times the solve for the small systems of a fit."""
    from scipy.linalg.lapack import get_lapack_funcs

    (trtrs,) = get_lapack_funcs(("trtrs",), (r, b))
    if r.flags.f_contiguous:
        x, info = trtrs(r, b, lower=0, trans=0)
    else:  # (the transposed system, which is in Fortran order)
        x, info = trtrs(r.T, b, lower=1, trans=1)
    if info != 0:
        raise np.linalg.LinAlgError(f"singular triangular matrix (LAPACK trtrs info {info})")
    return x


def _result(names: tuple[str, ...], values: np.ndarray, jacobian: np.ndarray,
            residuals: np.ndarray, weights: np.ndarray, scale: bool,
            factor: tuple[np.ndarray, np.ndarray] | None = None) -> LeastSquaresResult:
    n, p = jacobian.shape
    covariance = _covariance_from_weighted_design(jacobian * np.sqrt(weights)[:, None], factor)
    chi2 = float(np.sum(weights * residuals**2))
    dof = n - p
    if scale:
        if dof < 1:
            raise ValueError(f"{n} observations and {p} parameters leave no degree of freedom "
                             "to estimate the scale of the covariance")
        covariance = covariance * chi2 / dof
    aic, bic = information_criteria(chi2, n, p, scale)
    errors = np.sqrt(np.diag(covariance))
    return LeastSquaresResult(
        names=names,
        values={k: float(v) for k, v in zip(names, values, strict=True)},
        standard_errors={k: float(v) for k, v in zip(names, errors, strict=True)},
        covariance=covariance, jacobian=jacobian, residuals=residuals, weights=weights,
        chi2=chi2, dof=dof, covariance_scaled=scale, aic=aic, bic=bic,
    )


def central_difference_jacobian(model: Callable[[Mapping[str, float]], np.ndarray],
                                values: Mapping[str, float],
                                names: Sequence[str] | None = None) -> np.ndarray:
    """∂f/∂p by central differences, one column per name.

    Parameters
    ----------
    model : callable
        ``model(parameters) -> ndarray`` of the model values [unit of y].
    values : mapping of str to float
        The point at which to differentiate [parameter units].
    names : sequence of str, optional
        Parameters to differentiate by (default: all of ``values``).

    Returns
    -------
    numpy.ndarray
        Shape (N, len(names)) [unit of y per parameter unit].

    Notes
    -----
    ρ_k = rms(f)/rms(∂f/∂p_k) (from a pilot difference) is the change of p_k that moves the model
    by its own size. If the second difference over h = 0.1 max(|p_k|, ρ_k) vanishes (to 10⁻¹² of
    the first), f is linear in p_k and that wide difference is exact up to rounding of a large
    change; otherwise the step is h_k = 6·10⁻⁶ max(|p_k|, min(ρ_k, 100 |p_k|)), so that a
    parameter small beside its effect (an intercept near zero under large values) still moves f
    well above its rounding. The difference is divided by the step actually
    taken, (p + h) − (p − h). The truncation error is O(h²) and vanishes for a model linear in
    p_k (Press et al. 2007, §5.7).

    Examples
    --------
    >>> x = np.array([0.0, 1.0, 2.0])
    >>> central_difference_jacobian(lambda p: p["a"] + p["b"] * x**2, {"a": 1.0, "b": 3.0})
    array([[1., 0.],
           [1., 1.],
           [1., 4.]])
    """
    names = list(values) if names is None else list(names)
    base = dict(values)
    floor = 1e-3 * max((abs(v) for v in base.values()), default=0.0)
    centre = np.asarray(model(base), dtype=float)
    size = float(np.sqrt(np.mean(centre**2)))

    def difference(name: str, step: float) -> tuple[np.ndarray, np.ndarray]:
        p = float(base[name])
        up, down = p + step, p - step
        f_up = np.asarray(model({**base, name: up}), dtype=float)
        f_down = np.asarray(model({**base, name: down}), dtype=float)
        return (f_up - f_down) / (up - down), f_up + f_down - 2.0 * centre

    columns = []
    for name in names:
        p = abs(float(base[name]))
        pilot, _ = difference(name, JACOBIAN_RELATIVE_STEP * max(p, floor, 1e-12))
        slope = float(np.sqrt(np.mean(pilot**2)))
        if slope == 0.0 or size == 0.0:
            columns.append(pilot)
            continue
        # The parameter change that moves the model by its own size.
        reach = size / slope
        # A parameter the model is linear in (no second difference over a tenth of that reach)
        # is differentiated over that large step, where rounding of f is negligible.
        wide, curvature = difference(name, 0.1 * max(p, reach))
        if np.sqrt(np.mean(curvature**2)) <= 1e-12 * 0.2 * max(p, reach) * slope:
            columns.append(wide)
            continue
        scale = min(reach, 100.0 * p) if p > 0.0 else reach
        columns.append(difference(name, JACOBIAN_RELATIVE_STEP * max(p, scale))[0])
    return np.column_stack(columns)


def weighted_least_squares(
    model: Callable[[Mapping[str, float]], np.ndarray],
    initial: Mapping[str, float],
    y: npt.ArrayLike,
    weights: npt.ArrayLike | None = None,
    bounds: Mapping[str, tuple[float, float]] | None = None,
    scale_covariance: bool | None = None,
) -> LeastSquaresResult:
    r"""Fit a (non-linear) model by weighted least squares.

    Parameters
    ----------
    model : callable
        ``model(parameters: Mapping[str, float]) -> ndarray`` of shape (N,): the model values
        [unit of y].
    initial : mapping of str to float
        Starting values; its keys name the adjustable parameters (Python identifiers)
        [parameter units].
    y : array_like
        Observations, shape (N,) [unit of y].
    weights : array_like, optional
        w_i = 1/u_i² [1/(unit of y)²]; None means unit weights.
    bounds : mapping of str to (float, float), optional
        (minimum, maximum) of some parameters [parameter units].
    scale_covariance : bool, optional
        Multiply the covariance by χ²/(N − P). Default: True exactly when ``weights`` is None
        (the scale of the scatter is then unknown); with stated uncertainties the covariance is
        not scaled and χ² tests them.

    Returns
    -------
    LeastSquaresResult

    Raises
    ------
    ValueError
        Bad shapes, non-finite observations, non-positive weights, names that are not
        identifiers, a start outside the bounds, or no degree of freedom for a scaled covariance.
    FitError
        The minimiser fails, or the Jacobian at the optimum is rank deficient.

    Notes
    -----
    lmfit's ``leastsq`` (MINPACK Levenberg–Marquardt; Moré 1978, Springer LNM
    630, 105) finds the optimum; up to four Gauss–Newton steps with the central-difference
    Jacobian and a QR solve then polish it (a step is kept only if it lowers χ² and stays within
    the bounds), which brings linear and mildly non-linear problems to the digits NIST certifies.
    The covariance is (JᵀWJ)⁻¹ [× χ²/(N − P)] with J the central-difference Jacobian at the
    optimum (see :func:`central_difference_jacobian`).

    Examples
    --------
    A straight line through three exact points (hand-computed):

    >>> x = np.array([0.0, 1.0, 2.0])
    >>> fit = weighted_least_squares(lambda p: p["a"] + p["b"] * x, {"a": 0.0, "b": 0.0},
    ...                              [1.0, 3.0, 5.0], np.ones(3))
    >>> round(fit.values["a"], 9), round(fit.values["b"], 9), fit.dof
    (1.0, 2.0, 1)
    """
    import lmfit

    observations, w = _check_observations(y, weights)
    scale = (weights is None) if scale_covariance is None else bool(scale_covariance)
    names = tuple(initial)
    if not names:
        raise ValueError("no parameters to fit; give at least one starting value")
    for name in names:
        if not name.isidentifier():
            raise ValueError(f"parameter name '{name}' is not a Python identifier")
    limits = {name: (-math.inf, math.inf) for name in names}
    for name, (low, high) in (bounds or {}).items():
        if name not in limits:
            raise ValueError(f"bounds given for '{name}', which is not a fitted parameter")
        if not low < high:
            raise ValueError(f"bounds of '{name}' are empty: {low} ≥ {high}")
        limits[name] = (float(low), float(high))
    for name in names:
        low, high = limits[name]
        if not low <= initial[name] <= high:
            raise ValueError(f"the start {initial[name]} of '{name}' is outside its bounds "
                             f"[{low}, {high}]")

    sqrt_w = np.sqrt(w)

    def values_of(parameters: Mapping[str, float]) -> np.ndarray:
        return np.array([parameters[n] for n in names])

    def evaluate(values: Mapping[str, float]) -> np.ndarray:
        f = np.asarray(model(values), dtype=float)
        if f.shape != observations.shape:
            raise ValueError(f"the model returned shape {f.shape}; expected "
                             f"{observations.shape}")
        return f

    params = lmfit.Parameters()
    for name in names:
        low, high = limits[name]
        params.add(name, value=float(initial[name]), min=low, max=high)

    def residual(p: lmfit.Parameters) -> np.ndarray:
        return (observations - evaluate({n: p[n].value for n in names})) * sqrt_w

    found = lmfit.minimize(residual, params, method="leastsq", xtol=1e-12, ftol=1e-12)
    if not found.success:
        raise FitError(f"the fit did not converge ({found.message})")
    current = {n: float(found.params[n].value) for n in names}
    fitted = evaluate(current)
    chi2 = float(np.sum(w * (observations - fitted) ** 2))
    if not math.isfinite(chi2):
        raise FitError("the model gives non-finite values at the optimum")

    for _ in range(_POLISH_STEPS):
        jac = central_difference_jacobian(evaluate, current, names)
        a = jac * sqrt_w[:, None]
        norms = np.linalg.norm(a, axis=0)
        if np.any(norms == 0.0) or not np.all(np.isfinite(a)):
            break
        step, *_ = np.linalg.lstsq(a / norms, (observations - fitted) * sqrt_w, rcond=None)
        step = step / norms
        trial = {n: current[n] + s for n, s in zip(names, step, strict=True)}
        if any(not limits[n][0] <= trial[n] <= limits[n][1] for n in names):
            break
        trial_fitted = evaluate(trial)
        trial_chi2 = float(np.sum(w * (observations - trial_fitted) ** 2))
        # Near the optimum χ² changes by less than its rounding error: accept a step that does
        # not make it worse beyond that.
        if not trial_chi2 <= chi2 * (1.0 + 1e-10) + np.finfo(float).tiny:
            break
        current, fitted, chi2 = trial, trial_fitted, min(chi2, trial_chi2)
        if np.all(np.abs(step) <= 1e-15 * np.maximum(np.abs(values_of(current)), 1e-300)):
            break

    jac = central_difference_jacobian(evaluate, current, names)
    values = np.array([current[n] for n in names])
    return _result(names, values, jac, observations - fitted, w, scale)


@dataclass(frozen=True)
class StraightLines:
    """Many weighted straight lines y ≈ p₀ + p₁ x fitted at once (:func:`straight_lines`).

    Attributes
    ----------
    values : numpy.ndarray
        (S, 2): intercept p₀ [unit of y] and slope p₁ [unit of y per unit of x] of each line;
        NaN where the line is not determined.
    covariance : numpy.ndarray
        (S, 2, 2): their covariance; NaN where the line is not determined.
    points : numpy.ndarray
        (S,): how many points (positive weights) each line was fitted to.
    determined : numpy.ndarray
        (S,) bool: False where the points do not determine a line (fewer than two distinct x,
        or, when its covariance is to be scaled, no degree of freedom left).
    """

    values: np.ndarray
    covariance: np.ndarray
    points: np.ndarray
    determined: np.ndarray


def straight_lines(x: npt.ArrayLike, y: npt.ArrayLike, weights: npt.ArrayLike,
                   scale_covariance: npt.ArrayLike) -> StraightLines:
    r"""Fit many weighted straight lines y ≈ p₀ + p₁ x at once, one per row, by the method of
    :func:`linear_least_squares` (equilibrated QR, one step of iterative refinement), every
    line in the same array operations.

    Parameters
    ----------
    x, y : array_like
        (S, N): the points of each line, a row each [units of x and y].
    weights : array_like
        (S, N): w = 1/u² [1/(unit of y)²]; 0 leaves a point out (rows of fewer points are
        padded with weight 0; their x and y are not read).
    scale_covariance : array_like of bool
        (S,): per line, whether its covariance is scaled by χ²/(N − 2) (unit or relative
        weights) or not (weights from stated uncertainties).

    Returns
    -------
    StraightLines

    Notes
    -----
    With A = W^½ X D⁻¹ (X = [1, x], D its weighted column norms) and A = QR, the line solves
    R q = Qᵀ W^½ y, p = D⁻¹ q, refined once on the residual; the covariance is
    D⁻¹ R⁻¹ R⁻ᵀ D⁻¹ [× χ²/(N − 2)] (Björck 1996, §1.3 and §2.4), R⁻¹ of the 2 × 2 triangle
    written out. A line is not determined when R is singular to working precision, as
    :func:`linear_least_squares` refuses it.

    Examples
    --------
    >>> lines = straight_lines([[0.0, 1.0, 2.0], [0.0, 1.0, 0.0]], [[1.0, 3.0, 5.0],
    ...                        [2.0, 1.0, 0.0]], [[1.0, 1.0, 1.0], [1.0, 1.0, 0.0]],
    ...                        [True, False])
    >>> lines.values[0].round(12).tolist(), lines.determined.tolist()
    ([1.0, 2.0], [True, True])
    >>> lines.values[1].round(12).tolist(), float(lines.covariance[1, 1, 1].round(12))
    ([2.0, -1.0], 2.0)
    """
    w = np.asarray(weights, dtype=float)
    used = w > 0.0
    x = np.where(used, np.asarray(x, dtype=float), 0.0)
    y = np.where(used, np.asarray(y, dtype=float), 0.0)
    scale = np.asarray(scale_covariance, dtype=bool)
    points = used.sum(axis=1)
    sqrt_w = np.sqrt(np.where(used, w, 0.0))
    a = np.stack([sqrt_w, x * sqrt_w], axis=-1)
    b = y * sqrt_w
    norms = np.sqrt(np.add.reduce(a * a, axis=1))
    with np.errstate(divide="ignore", invalid="ignore"):
        a_scaled = a / norms[:, None, :]
        a_scaled[~np.isfinite(a_scaled)] = 0.0
        q, r = np.linalg.qr(a_scaled)
        r00, r01, r11 = r[:, 0, 0], r[:, 0, 1], r[:, 1, 1]
        diagonal = np.abs(np.stack([r00, r11], axis=-1))
        determined = ((norms > 0.0).all(axis=1) & (diagonal.min(axis=1) > diagonal.max(axis=1)
                      * points * np.finfo(float).eps) & (~scale | (points > 2)))

        def upper_solve(c: np.ndarray) -> np.ndarray:
            second = c[:, 1] / r11
            return np.stack([(c[:, 0] - r01 * second) / r00, second], axis=-1)

        solution = upper_solve(np.einsum("snk,sn->sk", q, b))
        residual = b - np.einsum("snk,sk->sn", a_scaled, solution)
        solution = solution + upper_solve(np.einsum("snk,sn->sk", q, residual))
        values = solution / norms
        inverse = np.zeros_like(r)
        inverse[:, 0, 0], inverse[:, 1, 1] = 1.0 / r00, 1.0 / r11
        inverse[:, 0, 1] = -r01 / (r00 * r11)
        covariance = (inverse @ inverse.transpose(0, 2, 1)) / (norms[:, :, None]
                                                               * norms[:, None, :])
        chi2 = np.add.reduce(w * used * (y - values[:, :1] - values[:, 1:] * x) ** 2, axis=1)
        factor = np.where(scale, chi2 / (points - 2), 1.0)
    covariance = covariance * factor[:, None, None]
    values[~determined] = np.nan
    covariance[~determined] = np.nan
    return StraightLines(values=values, covariance=covariance, points=points,
                         determined=determined)


def linear_least_squares(
    design: npt.ArrayLike,
    y: npt.ArrayLike,
    weights: npt.ArrayLike | None = None,
    scale_covariance: bool | None = None,
    names: Sequence[str] | None = None,
) -> LeastSquaresResult:
    r"""Fit y ≈ X p, linear in every parameter, by weighted least squares.

    Parameters
    ----------
    design : array_like
        The design matrix X, shape (N, P) [unit of y per parameter unit].
    y : array_like
        Observations, shape (N,) [unit of y].
    weights : array_like, optional
        w_i = 1/u_i² [1/(unit of y)²]; None means unit weights.
    scale_covariance : bool, optional
        As in :func:`weighted_least_squares` (default: True exactly when ``weights`` is None).
    names : sequence of str, optional
        Parameter names (default ``p0``, ``p1``, …).

    Returns
    -------
    LeastSquaresResult
        ``jacobian`` is X itself.

    Raises
    ------
    ValueError
        Bad shapes, non-finite input, non-positive weights.
    FitError
        X is rank deficient (to working precision).

    Notes
    -----
    With A = W^½ X D⁻¹ (D the column norms, so every column of A has unit length) and its QR
    factorisation A = QR, the estimate solves R q = Qᵀ W^½ y, p = D⁻¹ q, followed by one step of
    iterative refinement on the residual; the covariance is D⁻¹ R⁻¹ R⁻ᵀ D⁻¹ [× χ²/(N − P)]
    (Björck 1996, §1.3 and §2.4). Equilibration and QR keep the error proportional to the
    condition number of A rather than to its square.

    Examples
    --------
    >>> fit = linear_least_squares([[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]], [1.0, 3.0, 5.0],
    ...                            names=("intercept", "slope"))
    >>> round(fit.values["intercept"], 12), round(fit.values["slope"], 12)
    (1.0, 2.0)
    """
    observations, w = _check_observations(y, weights)
    x = np.asarray(design, dtype=float)
    if x.ndim != 2 or x.shape[0] != observations.size:
        raise ValueError(f"design has shape {x.shape}; expected ({observations.size}, P)")
    if not np.all(np.isfinite(x)):
        raise ValueError("the design matrix holds NaN or infinite values")
    n, p = x.shape
    if n < p:
        raise ValueError(f"{n} observations cannot determine {p} parameters")
    names = tuple(f"p{k}" for k in range(p)) if names is None else tuple(names)
    if len(names) != p:
        raise ValueError(f"{len(names)} names for {p} parameters")
    scale = (weights is None) if scale_covariance is None else bool(scale_covariance)

    sqrt_w = np.sqrt(w)
    a = x * sqrt_w[:, None]
    b = observations * sqrt_w
    norms = np.linalg.norm(a, axis=0)
    if np.any(norms == 0.0):
        raise FitError("a column of the design matrix is zero; its parameter is not determined")
    a_scaled = a / norms
    q, r = np.linalg.qr(a_scaled)
    diagonal = np.abs(np.diag(r))
    if diagonal.min() <= diagonal.max() * n * np.finfo(float).eps:
        raise FitError("the design matrix is rank deficient; its parameters are not "
                       "independent")
    solution = _upper_solve(r, q.T @ b)  # (all finite, checked above)
    # One step of iterative refinement (Björck 1996, §2.4.5).
    solution = solution + _upper_solve(r, q.T @ (b - a_scaled @ solution))
    values = solution / norms
    residuals = observations - x @ values
    # The covariance from the same factorisation (mode "r" gives the same R).
    return _result(names, values, x, residuals, w, scale, factor=(norms, r))
