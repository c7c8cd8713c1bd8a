"""Propagation of the fit's covariance to E°, γ± and what follows, keeping every correlation.

The reduction gives the fitted parameters (E° first) as a linear function of the readings near
the optimum, δp = S δE with the sensitivity matrix S = (JᵀWJ)⁻¹JᵀW. γ± at point i comes from
the fitted E° and the same readings:

.. math:: \\ln γ_{±,i} = σ \\frac{E° − E_i}{s k_i} − \\ln m_{±,i}

(σ = ±1 as the cell forms or consumes the electrolyte, s the slope factor, 1 unless fitted), so
its covariance must follow E through both E° and E_i (GUM, JCGM 100:2008, §5.2: correlated input
quantities). Treating E° and E_i as independent — a common shortcut — ignores that E_i is part of
E°; :func:`ln_gamma_covariance` can do that for comparison.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
import numpy.typing as npt


def sensitivity_matrix(jacobian: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """S = (JᵀWJ)⁻¹JᵀW: how each fitted parameter moves with each reading.

    Parameters
    ----------
    jacobian : numpy.ndarray
        ∂E_model,i/∂p_k at the optimum, shape (N, P) [V per parameter unit].
    weights : numpy.ndarray
        w_i = 1/u_i² (or 1 for unit weights), shape (N,) [V⁻²].

    Returns
    -------
    numpy.ndarray
        S, shape (P, N) [parameter unit per V].

    Examples
    --------
    A straight line through three points: the intercept's sensitivities sum to 1.

    >>> j = np.array([[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]])
    >>> [round(float(v), 4) for v in sensitivity_matrix(j, np.ones(3))[0]]
    [0.8333, 0.3333, -0.1667]
    """
    weighted = jacobian * weights[:, None]
    normal = jacobian.T @ weighted
    return np.linalg.solve(normal, weighted.T)


def sensitivity_matrices(jacobians: Sequence[np.ndarray], weights: Sequence[np.ndarray]
                         ) -> list[np.ndarray]:
    """:func:`sensitivity_matrix` of many fits: the same matrices, bit for bit, those of one
    shape and memory layout worked out in stacked array operations (each fit's products and
    solve laid out, and so made by BLAS and LAPACK, as for it alone).

    Parameters
    ----------
    jacobians : sequence of numpy.ndarray
        Per fit, ∂E/∂p at the optimum, shape (N, P).
    weights : sequence of numpy.ndarray
        Per fit, w_i, shape (N,).

    Returns
    -------
    list of numpy.ndarray
        Per fit, in order, S of shape (P, N).

    Examples
    --------
    >>> j = np.array([[1.0, 0.0], [1.0, 1.0], [1.0, 2.0]])
    >>> [np.array_equal(a, sensitivity_matrix(j, np.ones(3)))
    ...  for a in sensitivity_matrices([j, j], [np.ones(3), np.ones(3)])]
    [True, True]
    """
    found: dict[int, np.ndarray] = {}
    groups: dict[tuple[Any, ...], list[int]] = {}
    for index, (jacobian, w) in enumerate(zip(jacobians, weights, strict=True)):
        layout = ("C" if jacobian.flags.c_contiguous else "F" if jacobian.flags.f_contiguous
                  else index)  # (any other layout alone)
        groups.setdefault((jacobian.shape, jacobian.dtype, w.shape, w.dtype, layout),
                          []).append(index)
    for (shape, dtype, _, w_dtype, layout), members in groups.items():
        if (len(members) == 1 or len(shape) != 2 or layout not in ("C", "F")
                or dtype != np.float64 or w_dtype != np.float64):
            for i in members:
                found[i] = sensitivity_matrix(jacobians[i], weights[i])
            continue
        # (S, N, P) with each fit's matrix laid out as its own
        j = (np.array([jacobians[i] for i in members]) if layout == "C"
             else np.array([jacobians[i].T for i in members]).transpose(0, 2, 1))
        weighted = np.empty_like(j)  # (laid out as j, as jacobian * weights[:, None] is)
        np.multiply(j, np.array([weights[i] for i in members])[:, :, None], out=weighted)
        normal = np.matmul(np.swapaxes(j, 1, 2), weighted)
        found.update(zip(members, np.linalg.solve(normal, np.swapaxes(weighted, 1, 2)),
                         strict=True))
    return [found[index] for index in range(len(jacobians))]


def ln_gamma_covariance(
    parameter_gradient: npt.ArrayLike,
    reading_gradient: npt.ArrayLike,
    sensitivity: npt.ArrayLike,
    reading_variance_V2: npt.ArrayLike,
    relative_molality_variance: npt.ArrayLike,
    keep_correlation: bool = True,
    type_b_covariance: npt.ArrayLike | None = None,
) -> np.ndarray:
    """Covariance matrix of ln γ± at the measured points.

    ln γ±,i is a function of the fitted parameters p (E° first) and of its own reading E_i; the
    parameters are themselves linear in the readings near the optimum, δp = S δE. Hence
    δ ln γ± = (G_p S + diag g_E) δE, and

    .. math:: \\mathrm{cov}(\\ln γ_±) = M V M^T + G_p T G_p^T + \\mathrm{diag}(u^2(m)/m^2),
              \\quad M = G_p S + \\mathrm{diag}(g_E)

    with V the covariance of the readings and T the Type B covariance of p from parameters held
    at conventional values (GUM, JCGM 100:2008, 5.2).

    Parameters
    ----------
    parameter_gradient : array_like
        G_p = ∂ ln γ±,i / ∂p_k, shape (N, P) [per parameter unit].
    reading_gradient : array_like
        g_E,i = ∂ ln γ±,i / ∂E_i, shape (N,) [V⁻¹].
    sensitivity : array_like
        S = ∂p/∂E, shape (P, N) (:func:`sensitivity_matrix`).
    reading_variance_V2 : array_like
        Variance of each reading (stated, or the fit's residual variance) [V²].
    relative_molality_variance : array_like
        (u(m_i)/m_i)² [-].
    keep_correlation : bool
        True (the correct propagation) keeps that p is made of the same readings; False treats
        p and E_i as independent, G_p cov(p) G_pᵀ + g_E² V, for comparison only.
    type_b_covariance : array_like, optional
        T, shape (P, P) [parameter units²].

    Returns
    -------
    numpy.ndarray
        Covariance of ln γ±, shape (N, N) [-].
    """
    g_p = np.asarray(parameter_gradient, dtype=float)
    g_e = np.asarray(reading_gradient, dtype=float)
    s = np.asarray(sensitivity, dtype=float)
    v = np.asarray(reading_variance_V2, dtype=float)
    if keep_correlation:
        m = g_p @ s + np.diag(g_e)
        cov = (m * v) @ m.T
    else:
        cov_p = (s * v) @ s.T
        cov = g_p @ cov_p @ g_p.T + np.diag(g_e**2 * v)
    if type_b_covariance is not None:
        cov = cov + g_p @ np.asarray(type_b_covariance, dtype=float) @ g_p.T
    return cov + np.diag(np.asarray(relative_molality_variance, dtype=float))


@dataclass(frozen=True)
class BudgetLine:
    """One contribution to the standard uncertainty of E°.

    ``u_V`` is the standard uncertainty this input alone gives E° [V]; ``method`` says how it was
    obtained (GUM, JCGM 100:2008: Type A from the fit, Type B from a stated or conventional
    uncertainty).
    """

    component: str
    u_V: float
    method: str


def student_t_factor(dof: int, coverage: float = 0.95) -> float:
    """Coverage factor k for a two-sided interval from a Student t distribution.

    Used when the covariance was scaled by the reduced χ² (GUM, JCGM 100:2008, Annex G); with
    stated reading uncertainties the normal factor applies (``dof`` = 0 means infinite).

    Examples
    --------
    >>> round(student_t_factor(0), 2), round(student_t_factor(10), 3)
    (1.96, 2.228)
    """
    return _kept_t_factor(float(dof), float(coverage))


@lru_cache(maxsize=1024)
def _kept_t_factor(dof: float, coverage: float) -> float:
    """:func:`student_t_factor`, kept between calls (the runs of a batch share a few degrees of
    freedom)."""
    from scipy.special import ndtri, stdtrit

    if dof <= 0:
        return float(ndtri(0.5 + coverage / 2.0))
    return float(stdtrit(dof, 0.5 + coverage / 2.0))


def ln_gamma_variance(
    parameter_gradient: npt.ArrayLike,
    reading_gradient: npt.ArrayLike,
    sensitivity: npt.ArrayLike,
    reading_variance_V2: npt.ArrayLike,
    type_b_covariance: npt.ArrayLike | None = None,
) -> np.ndarray:
    r"""The diagonal of :func:`ln_gamma_covariance` (correlation kept), in O(N·P²).

    With M = G_p S + diag(g_E) and C = S V Sᵀ (P × P),

    .. math:: \mathrm{var}(\ln γ_{±,i}) = g_{p,i} C g_{p,i}^T + 2 g_{E,i} v_i (G_p S)_{ii}
              + g_{E,i}^2 v_i \; [+ g_{p,i} T g_{p,i}^T]

    (GUM, JCGM 100:2008, 5.2) — the same numbers without forming the N × N matrix, so that a
    series of 10⁵ readings needs memory linear in N.

    Parameters
    ----------
    parameter_gradient, reading_gradient, sensitivity, reading_variance_V2, type_b_covariance
        As for :func:`ln_gamma_covariance`.

    Returns
    -------
    numpy.ndarray
        var(ln γ±) at each reading, shape (N,) [-]; with a leading axis of series on every
        argument (G_p (S, N, P), …), shape (S, N), each series' numbers as alone.

    Examples
    --------
    >>> g_p = np.array([[1.0, 0.5], [1.0, 0.2], [1.0, -0.3]])
    >>> s = np.array([[0.3, 0.3, 0.4], [1.0, 0.5, -1.5]])
    >>> v = np.array([1.0, 2.0, 0.5])
    >>> full = np.diag(ln_gamma_covariance(g_p, -np.ones(3), s, v, np.zeros(3)))
    >>> bool(np.allclose(ln_gamma_variance(g_p, -np.ones(3), s, v), full))
    True
    """
    g_p = np.asarray(parameter_gradient, dtype=float)
    g_e = np.asarray(reading_gradient, dtype=float)
    s = np.asarray(sensitivity, dtype=float)
    v = np.asarray(reading_variance_V2, dtype=float)
    c = (s * v[..., None, :]) @ np.swapaxes(s, -1, -2)
    variance = (np.einsum("...ip,...pq,...iq->...i", g_p, c, g_p)
                + 2.0 * g_e * v * np.einsum("...ip,...pi->...i", g_p, s) + g_e**2 * v)
    if type_b_covariance is not None:
        variance = variance + np.einsum("...ip,...pq,...iq->...i", g_p,
                                        np.asarray(type_b_covariance, dtype=float), g_p)
    return variance


def sensitivity_coefficients(function: Callable[[Mapping[str, float]], np.ndarray],
                       values: Mapping[str, float], names: Sequence[str]) -> np.ndarray:
    r"""∂f/∂θ_k by central differences, one column per name, shape (N, K).

    .. math:: \frac{∂f}{∂θ_k} ≈ \frac{f(θ + h_k e_k) − f(θ − h_k e_k)}{2 h_k}, \qquad
              h_k = 10^{-6} \max(1, |θ_k|)

    (truncation error O(h²), exact for f linear in θ_k; Press et al. 2007, §5.7) — the
    sensitivity coefficients of GUM (JCGM 100:2008) 5.1.3 for quantities that depend on model
    parameters directly.

    Parameters
    ----------
    function : callable
        ``function(values) -> ndarray`` of shape (N,).
    values : mapping of str to float
        The point [parameter units]; or, for many points at once, arrays of shape (S, 1)
        (f then of shape (S, N), the result (S, N, K)).
    names : sequence of str
        The parameters to differentiate by.

    Returns
    -------
    numpy.ndarray
        Shape (N, len(names)) [unit of f per parameter unit]; (N, 0) without names.

    Examples
    --------
    >>> x = np.array([0.0, 1.0, 2.0])
    >>> sensitivity_coefficients(lambda p: p["a"] + p["b"] * x**2, {"a": 1.0, "b": 3.0}, ["b"])
    array([[0.],
           [1.],
           [4.]])
    """
    columns = []
    for name in names:
        step = 1e-6 * np.maximum(1.0, np.abs(values[name]))
        up = np.asarray(function({**values, name: values[name] + step}), dtype=float)
        down = np.asarray(function({**values, name: values[name] - step}), dtype=float)
        columns.append((up - down) / (2.0 * step))
    if not columns:
        return np.zeros((*np.shape(function(values)), 0))
    return np.stack(columns, axis=-1)
