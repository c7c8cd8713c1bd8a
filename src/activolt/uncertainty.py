"""Propagation of the fit's covariance to E°, γ± and what follows, keeping every correlation.

The reduction gives E° as a linear function of the readings near the optimum,
E° ≈ E°̂ + Σ_j s_j (E_j − Ê_j), with s the first row of the sensitivity matrix
S = (JᵀWJ)⁻¹JᵀW. γ± at point i comes from the same readings:

.. math:: \\ln γ_{±,i} = \\frac{E° − E_i}{k_i} − \\ln m_{±,i}

so ln γ± = D (s 1ᵀ − I)ᵀ E + const, and its covariance is D A V Aᵀ D with A = 1 sᵀ − I,
D = diag(1/k), V the covariance of the readings (GUM, JCGM 100:2008, §5.2: correlated input
quantities). Treating E° and E_i as independent — a common shortcut — double-counts the reading
E_i, which enters E° as well; :func:`ln_gamma_covariance` can do that for comparison.
"""

from __future__ import annotations

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


def ln_gamma_covariance(
    e0_sensitivity: npt.ArrayLike,
    reading_variance_V2: npt.ArrayLike,
    nernst_factor_V: npt.ArrayLike,
    relative_molality_variance: npt.ArrayLike,
    keep_correlation: bool = True,
    e0_type_b_variance_V2: float = 0.0,
) -> np.ndarray:
    """Covariance matrix of ln γ± at the measured points.

    Parameters
    ----------
    e0_sensitivity : array_like
        s_j = ∂E°/∂E_j, shape (N,) [-].
    reading_variance_V2 : array_like
        Variance of each reading u²(E_j) (stated, or the fit's residual variance) [V²].
    nernst_factor_V : array_like
        k_i = νRT/(nF) at each point [V].
    relative_molality_variance : array_like
        (u(m_i)/m_i)² [-].
    keep_correlation : bool
        True (the correct propagation) keeps that E° is made of the same readings; False treats
        E° and E_i as independent, u²(E°) + u²(E_i), for comparison only.
    e0_type_b_variance_V2 : float
        Variance of E° from parameters held at conventional values (Type B) [V²]; it moves every
        γ± together.

    Returns
    -------
    numpy.ndarray
        Covariance of ln γ±, shape (N, N) [-].
    """
    s = np.asarray(e0_sensitivity, dtype=float)
    v = np.asarray(reading_variance_V2, dtype=float)
    d = 1.0 / np.asarray(nernst_factor_V, dtype=float)
    n = s.size
    if keep_correlation:
        a = np.outer(np.ones(n), s) - np.eye(n)
        cov = (a * v) @ a.T
    else:
        var_e0 = float(np.sum(s**2 * v))
        cov = np.full((n, n), var_e0) + np.diag(v)
    cov = cov + e0_type_b_variance_V2
    return d[:, None] * cov * d[None, :] + np.diag(np.asarray(relative_molality_variance, float))


def student_t_factor(dof: int, coverage: float = 0.95) -> float:
    """Coverage factor k for a two-sided interval from a Student t distribution.

    Used when the covariance was scaled by the reduced χ² (GUM, JCGM 100:2008, Annex G); with
    stated reading uncertainties the normal factor applies (``dof`` = 0 means infinite).

    Examples
    --------
    >>> round(student_t_factor(0), 2), round(student_t_factor(10), 3)
    (1.96, 2.228)
    """
    from scipy import stats

    if dof <= 0:
        return float(stats.norm.ppf(0.5 + coverage / 2.0))
    return float(stats.t.ppf(0.5 + coverage / 2.0, dof))
