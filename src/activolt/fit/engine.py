r"""The measurement model of a cell without liquid junction, and one batched solver for it.

For each reading i of series s,

.. math:: E_{si} = E°_s − σ\,s_s\,k_{si}\,[\ln m_{±,si} + \ln γ_±(m_{si}; θ_s)], \qquad
          k_{si} = ν R T_{si}/(n F)

(σ = +1 when the cell forms the electrolyte, −1 when it consumes it; s the slope factor, 1 unless
fitted). :class:`MeasurementModel` holds the arrays of one or many series with a leading series
axis (S × N, a mask for ragged series); :func:`solve` fits E° and the free parameters of every
series at once by weighted least squares — one Gauss–Newton step for parameters that enter
linearly, a batched Levenberg–Marquardt iteration otherwise (Moré 1978, Springer LNM 630, 105),
each series converging (or failing, with its reason) on its own — and returns a frozen
:class:`BatchFit`: values, covariance (JᵀWJ)⁻¹ [× χ²/ν], the Jacobian at the optimum, residuals
and statistics per series. Held parameters keep their given values per series (a mask of free
parameters), so one batch can mix series whose data determine different parameters.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from ..activity.base import ActivityModel
from ..chemistry.electrolytes import Electrolyte
from ..physics.water import DebyeHueckelConstants

__all__ = ["E0", "SLOPE", "BatchFit", "MeasurementModel", "solve"]

#: Name of E° among the fitted quantities [V].
E0 = "standard_potential_V"
#: Name of the slope factor s of the cell response [-].
SLOPE = "slope_factor"

_MAX_ITERATIONS = 200
#: Largest number of series × model evaluations made in one call on stacked values.
_STACK_LIMIT = 64


@dataclass(frozen=True)
class MeasurementModel:
    """The cell equation for a batch of series of one electrolyte and one activity model.

    Attributes
    ----------
    activity : ActivityModel
        The activity-coefficient model.
    electrolyte : Electrolyte
        The electrolyte.
    sign : int
        σ = +1 (the cell forms the electrolyte) or −1 (it consumes it).
    molality : numpy.ndarray
        m, shape (S, N) [mol kg⁻¹]; any positive value where masked.
    nernst_V : numpy.ndarray
        k = νRT/(nF) of each reading, shape (S, N) [V].
    constants : DebyeHueckelConstants
        Debye–Hückel constants of each reading, arrays of shape (S, N).
    """

    activity: ActivityModel
    electrolyte: Electrolyte
    sign: int
    molality: np.ndarray
    nernst_V: np.ndarray
    constants: DebyeHueckelConstants

    @property
    def names(self) -> tuple[str, ...]:
        """E°, the model's parameters and the slope factor, in the order of every array."""
        return (E0, *self.activity.parameter_names, SLOPE)

    @cached_property
    def ln_mean_molality(self) -> np.ndarray:
        """ln m± [-], shape (S, N)."""
        return np.log(self.electrolyte.mean_molality(self.molality))

    @cached_property
    def _parameter_columns(self) -> tuple[tuple[str, int], ...]:
        """(name, column in the values) of each model parameter."""
        return tuple((name, index) for index, name in
                     enumerate(self.activity.parameter_names, start=1))

    def ln_gamma(self, values: np.ndarray) -> np.ndarray:
        """ln γ± of the model [-], shape (S, N), at parameter values of shape (S, P)."""
        parameters = {name: values[:, index:index + 1]
                      for name, index in self._parameter_columns}
        out = self.activity.ln_gamma(self.electrolyte, self.molality, self.constants, parameters)
        return out if np.shape(out) == self.molality.shape else np.broadcast_to(
            out, self.molality.shape)

    def predict(self, values: np.ndarray, ln_gamma: np.ndarray | None = None) -> np.ndarray:
        """E [V], shape (S, N), at values of shape (S, P) in the order of :attr:`names`
        (``ln_gamma``: ln γ± at those values when already known, :meth:`ln_gamma`).

        .. math:: E = E° − σ s k [\\ln m_± + \\ln γ_±(m; θ)]
        """
        lng = self.ln_gamma(values) if ln_gamma is None else ln_gamma
        return values[:, :1] - self.sign * values[:, -1:] * self.nernst_V * (
            self.ln_mean_molality + lng)

    def ln_gamma_from_emf(self, emf_V: np.ndarray, values: np.ndarray) -> np.ndarray:
        """ln γ± from each reading and the fitted E° and s [-]: σ(E° − E)/(s k) − ln m±."""
        return (self.sign * (values[:, :1] - emf_V) / (values[:, -1:] * self.nernst_V)
                - self.ln_mean_molality)

    def jacobian(self, values: np.ndarray, free: np.ndarray,
                 base: np.ndarray | None = None) -> np.ndarray:
        """∂E/∂(parameters) [V per unit], shape (S, N, P); zero columns for held parameters.

        E° and s enter analytically; a model parameter that enters ln γ± linearly by the
        difference over a unit step (exact), any other by central differences with steps of
        10⁻⁶ max(1, |θ|); the model is evaluated once per step for the whole batch.
        ``base``, when given, is ln γ± at ``values`` (:meth:`ln_gamma`), not worked out again.
        """
        columns = np.flatnonzero(free.any(axis=0))
        jac = np.zeros((*self.molality.shape, values.shape[1]))
        jac[:, :, columns] = np.swapaxes(self.gradient_rows(values, free, columns, base=base),
                                         1, 2)
        return jac

    def gradient_rows(self, values: np.ndarray, free: np.ndarray, columns: np.ndarray,
                      central: bool = True, base: np.ndarray | None = None) -> np.ndarray:
        """∂E/∂θ_c for the parameters ``columns``, one row per parameter, shape (S, C, N)
        (zero where a series holds the parameter); ``central=False`` takes forward
        differences for the non-linear parameters (one model evaluation each, for iterating);
        ``base``, when given, is ln γ± at ``values`` (:meth:`ln_gamma`)."""
        return self._gradient(values, free, columns, central, base)[0]

    def _gradient(self, values: np.ndarray, free: np.ndarray, columns: np.ndarray,
                  central: bool, base: np.ndarray | None = None,
                  curved: np.ndarray | None = None
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
        """(:meth:`gradient_rows`, ln γ± at ``values``, :meth:`curvature_rows` of the
        parameters ``curved``, None without): every evaluation of the model that they need
        (ln γ± itself unless ``base`` gives it, and each shifted parameter) is made in one call
        for a small batch."""
        last = values.shape[1] - 1
        blocks = [values if base is None else base]  # the model at ``values`` first
        shifts: list[tuple[int, np.ndarray | None, int]] = []  # (position, step, block)
        for position, index in enumerate(columns):
            if index == 0 or index == last:
                continue
            up = values.copy()
            if self.activity.parameters[index - 1].linear:
                up[:, index] += 1.0
                shifts.append((position, None, len(blocks)))
                blocks.append(up)
                continue
            step = 1e-6 * np.maximum(1.0, np.abs(values[:, index]))
            up[:, index] += step
            shifts.append((position, step, len(blocks)))
            blocks.append(up)
            if central:
                down = values.copy()
                down[:, index] -= step
                blocks.append(down)
        first_curved = len(blocks)
        curvature_steps = [] if curved is None else self._curvature_blocks(values, curved,
                                                                           blocks)
        if base is None:
            out = self._ln_gamma_of(blocks)
            base = out[0]
        else:
            out = [base, *self._ln_gamma_of(blocks[1:])] if len(blocks) > 1 else [base]
        rows = np.zeros((self.molality.shape[0], columns.size, self.molality.shape[1]))
        for position, index in enumerate(columns):
            if index == 0:
                rows[:, position] = 1.0
            elif index == last:
                rows[:, position] = -self.sign * self.nernst_V * (self.ln_mean_molality + base)
        factor = -self.sign * values[:, -1:] * self.nernst_V
        for position, step, block in shifts:
            if step is None:
                rows[:, position] = factor * (out[block] - base)
                continue
            difference = ((out[block] - out[block + 1]) / 2.0 if central
                          else out[block] - base)
            rows[:, position] = factor * difference / step[:, None]
        fitted = free[:, columns]
        if not fitted.all():
            rows[~fitted] = 0.0
        curvature = (None if curved is None else
                     self._curvature(out[first_curved:], base, curvature_steps, factor))
        return rows, base, curvature

    def curvature_rows(self, values: np.ndarray, columns: np.ndarray, base: np.ndarray
                       ) -> np.ndarray:
        """∂²E/∂θ_c² for the model parameters ``columns``, one row per parameter, shape
        (S, C, N), by central second differences over 10⁻³ max(1, |θ|) (wide enough that
        rounding stays below 10⁻⁹ of the result); ``base`` is ln γ± at ``values``
        (:meth:`ln_gamma`). The model is evaluated once, at every shifted value together."""
        blocks: list[np.ndarray] = []
        steps = self._curvature_blocks(values, columns, blocks)
        return self._curvature(self._ln_gamma_of(blocks), base, steps,
                               -self.sign * values[:, -1:] * self.nernst_V)

    @staticmethod
    def _curvature_blocks(values: np.ndarray, columns: np.ndarray, blocks: list[np.ndarray]
                          ) -> list[np.ndarray]:
        """Appends to ``blocks`` the values shifted up and down for :meth:`curvature_rows`;
        returns the steps, shape (S, 1) each."""
        steps = []
        for index in columns:
            step = 1e-3 * np.maximum(1.0, np.abs(values[:, index]))
            up, down = values.copy(), values.copy()
            up[:, index] += step
            down[:, index] -= step
            blocks += [up, down]
            steps.append(step[:, None])
        return steps

    @staticmethod
    def _curvature(shifted: list[np.ndarray], base: np.ndarray, steps: list[np.ndarray],
                   factor: np.ndarray) -> np.ndarray:
        """:meth:`curvature_rows` from ln γ± at the values of :meth:`_curvature_blocks`."""
        return np.stack([factor * (shifted[2 * k] - 2.0 * base + shifted[2 * k + 1]) / step**2
                         for k, step in enumerate(steps)], axis=1)

    def _ln_gamma_of(self, blocks: list[np.ndarray]) -> list[np.ndarray]:
        """ln γ± at each array of values in ``blocks``: for a small batch in one evaluation of
        the model on the stacked values (every model is elementwise, so the numbers are those
        of one evaluation each)."""
        n_series = self.molality.shape[0]
        if len(blocks) == 1 or n_series * len(blocks) > _STACK_LIMIT:
            return [self.ln_gamma(block) for block in blocks]
        out = self._tiled(len(blocks)).ln_gamma(np.concatenate(blocks))
        return [out[k * n_series:(k + 1) * n_series] for k in range(len(blocks))]

    @cached_property
    def _tiles(self) -> dict[int, MeasurementModel]:
        return {}

    def _tiled(self, copies: int) -> MeasurementModel:
        """The model with its series repeated ``copies`` times (block after block): the
        first rows of one model repeated as often as the stacks of a fit need (the widest
        asked for, and at least 8 while that stays within the stacking limit), so that the
        model's arrays are copied once for every size of stack."""
        tiled = self._tiles.get(copies)
        if tiled is not None:
            return tiled
        shape = self.molality.shape
        widest = max(self._tiles, default=0)
        if widest < copies:
            widest = max(copies, min(8, _STACK_LIMIT // max(shape[0], 1)))

            def repeat(x: np.ndarray) -> np.ndarray:
                return np.concatenate([x if np.shape(x) == shape
                                       else np.broadcast_to(x, shape)] * widest)

            c = self.constants
            self._tiles[widest] = MeasurementModel(
                self.activity, self.electrolyte, self.sign, repeat(self.molality),
                repeat(self.nernst_V), DebyeHueckelConstants(
                    repeat(c.temperature), repeat(c.aphi), repeat(c.b)))
        if copies != widest:
            wide, n = self._tiles[widest], copies * shape[0]
            c = wide.constants
            self._tiles[copies] = MeasurementModel(
                self.activity, self.electrolyte, self.sign, wide.molality[:n],
                wide.nernst_V[:n], DebyeHueckelConstants(c.temperature[:n], c.aphi[:n],
                                                         c.b[:n]))
        return self._tiles[copies]


@dataclass(frozen=True)
class BatchFit:
    """The weighted least-squares fit of a batch of series; nothing in it changes after.

    Attributes
    ----------
    names : tuple of str
        Parameter names, E° first (see :attr:`MeasurementModel.names`).
    values : numpy.ndarray
        Fitted or held values, shape (S, P) [parameter units].
    free : numpy.ndarray
        Which parameters were fitted, shape (S, P), bool.
    covariance : numpy.ndarray
        (JᵀWJ)⁻¹ over the free parameters, scaled by χ²/ν where ``scaled``; rows and columns
        of held parameters are 0; shape (S, P, P).
    jacobian : numpy.ndarray
        ∂E/∂θ at the optimum, zero columns for held parameters and zero rows for masked
        readings, shape (S, N, P) [V per unit].
    residual_V : numpy.ndarray
        E − Ê, 0 where masked, shape (S, N) [V].
    weights : numpy.ndarray
        w = 1/u² (or 1), 0 where masked, shape (S, N) [V⁻²].
    chi2 : numpy.ndarray
        Σ w r², shape (S,).
    dof : numpy.ndarray
        N_s − P_s, shape (S,).
    scaled : numpy.ndarray
        Whether the covariance was multiplied by χ²/ν (unit weights), shape (S,).
    converged : numpy.ndarray
        Per series, shape (S,), bool.
    failures : tuple of (str or None)
        Why a series did not converge, None where it did.
    """

    names: tuple[str, ...]
    values: np.ndarray
    free: np.ndarray
    covariance: np.ndarray
    jacobian: np.ndarray
    residual_V: np.ndarray
    weights: np.ndarray
    chi2: np.ndarray
    dof: np.ndarray
    scaled: np.ndarray
    converged: np.ndarray
    failures: tuple[str | None, ...]

    @property
    def standard_potential_V(self) -> np.ndarray:
        """E° of each series [V], shape (S,)."""
        return self.values[:, 0]

    @property
    def u_standard_potential_V(self) -> np.ndarray:
        """Standard uncertainty of E° (k = 1) [V], shape (S,)."""
        return np.sqrt(self.covariance[:, 0, 0])

    @property
    def sensitivity(self) -> np.ndarray:
        """S = (JᵀWJ)⁻¹JᵀW, how each free parameter moves with each reading [unit V⁻¹],
        shape (S, P, N) (unscaled)."""
        a = self.jacobian * self.weights[:, :, None]
        normal = np.matmul(np.swapaxes(self.jacobian, 1, 2), a)
        return np.linalg.solve(_regularised(normal, self.free), np.swapaxes(a, 1, 2))

    def curve(self, model: MeasurementModel) -> tuple[np.ndarray, np.ndarray]:
        """(Ê [V], u(Ê) [V]) of the fitted model at the model's molalities, shape (S, N):
        u² = g C gᵀ with g the Jacobian at the optimum (first order)."""
        jac = model.jacobian(self.values, self.free)
        variance = np.einsum("snp,spq,snq->sn", jac, self.covariance, jac)
        return model.predict(self.values), np.sqrt(np.maximum(variance, 0.0))


def _regularised(normal: np.ndarray, free: np.ndarray) -> np.ndarray:
    """The normal matrix with 1 on the diagonal of held parameters (their step is then 0)."""
    out = normal.copy()
    held = ~free
    index = np.arange(free.shape[1])
    out[:, index, index] += held
    return out


def solve(model: MeasurementModel, emf_V: np.ndarray, weights: np.ndarray,
          start: np.ndarray, free: np.ndarray, linear: np.ndarray,
          bounds: np.ndarray | None = None, scale_covariance: np.ndarray | bool = False,
          covariance: bool = True) -> BatchFit:
    r"""Fit E° and the free parameters of every series by weighted least squares.

    Parameters
    ----------
    model : MeasurementModel
        The batch (S series of up to N readings).
    emf_V : numpy.ndarray
        Readings (corrected to p° where the cell holds a gas), shape (S, N) [V].
    weights : numpy.ndarray
        1/u² of each reading (1 with unit weights), 0 for a masked reading, shape (S, N) [V⁻²].
    start : numpy.ndarray
        Starting values (held parameters: their values), shape (S, P) in the order of
        :attr:`MeasurementModel.names`.
    free : numpy.ndarray
        Which parameters to fit, shape (S, P), bool (E° always).
    linear : numpy.ndarray
        Whether E is linear in each parameter, shape (P,), bool.
    bounds : numpy.ndarray, optional
        (minimum, maximum) of each parameter, shape (P, 2); default unbounded.
    scale_covariance : bool or numpy.ndarray
        Multiply the covariance by χ²/ν (unit weights), per series or for all.
    covariance : bool
        Work out the Jacobian and covariance at the optimum (default); without, both are NaN
        (a Monte Carlo needs the values only).

    Returns
    -------
    BatchFit

    Notes
    -----
    With A = W^½ J and r the weighted residuals, each iteration solves
    (AᵀA + λ diag AᵀA) δ = Aᵀr per series (λ = 0, one Gauss–Newton step, when every free
    parameter enters linearly: the solution is then exact), starting at λ = 10⁻⁵. λ is divided
    by 10 after a step that lowers χ² and multiplied by 10 otherwise; a series stops when χ² no
    longer falls by more than 10⁻¹² relatively or its step is below 10⁻¹⁰ of its values, or
    when λ passes 10¹². A parameter at a bound that the step would push beyond it is held for
    that step (projected Levenberg–Marquardt). Once a series settles (its last step lowered χ²
    by less than 1 %), the normal matrix of a parameter entering non-linearly (the Hückel å)
    gains the second-order term −Σ w r ∂²E/∂θ², kept to at least −½ of its diagonal: Newton's
    step in place of Gauss–Newton's, which would converge only linearly where the residuals
    stay large, as when a held parameter leaves the model misfitting (Nocedal & Wright 2006,
    *Numerical Optimization*, §10.3). The optimum is the same. The covariance is
    (AᵀA)⁻¹ at the optimum (Bevington & Robinson 2003, *Data Reduction and Error Analysis*,
    ch. 8; Press et al. 2007, *Numerical Recipes*, §15.5).

    Examples
    --------
    Two Hückel series fitted at once (E° = 0.2 V and 0.3 V, b = 0.1 kg/mol, å held at 4 Å):

    >>> import numpy as np
    >>> from activolt.chemistry.electrolytes import parse_electrolyte, nernst_factor
    >>> from activolt.activity import get_model
    >>> from activolt.physics.water import debye_hueckel_constants
    >>> hcl = parse_electrolyte("HCl")
    >>> m = np.tile(np.geomspace(0.001, 0.1, 6), (2, 1))
    >>> mm = MeasurementModel(get_model("hueckel"), hcl, 1, m,
    ...                       nernst_factor(hcl, 1, np.full(m.shape, 298.15)),
    ...                       debye_hueckel_constants(np.full(m.shape, 298.15)))
    >>> truth = np.array([[0.2, 4.0, 0.1, 1.0], [0.3, 4.0, 0.1, 1.0]])
    >>> free = np.array([[True, False, True, False]] * 2)
    >>> fit = solve(mm, mm.predict(truth), np.ones(m.shape), truth * [1, 1, 0, 1], free,
    ...             np.array([True, False, True, False]))
    >>> np.round(fit.values[:, [0, 2]], 9).tolist()
    [[0.2, 0.1], [0.3, 0.1]]
    """
    emf = np.asarray(emf_V, dtype=float)
    w = np.asarray(weights, dtype=float)
    values = np.array(start, dtype=float)
    free = np.asarray(free, dtype=bool)
    n_series, n_parameters = values.shape
    limits = (np.tile([-np.inf, np.inf], (n_parameters, 1)) if bounds is None
              else np.asarray(bounds, dtype=float))
    low, high = limits[:, 0], limits[:, 1]
    sqrt_w = np.sqrt(w)
    read = w > 0.0  # the readings that count (0 weight: masked)
    every_read = bool(read.all())

    def masked(x: np.ndarray, where: np.ndarray) -> np.ndarray:
        """x where a reading counts, 0 elsewhere."""
        return x if every_read else np.where(where, x, 0.0)

    # E° enters linearly: start it at its exact optimum for the other starting values. ln γ±
    # does not depend on E°, so the start's ln γ± serves here and for the first iteration.
    lng = model.ln_gamma(values)
    without_e0 = model.predict(np.concatenate([np.zeros((n_series, 1)), values[:, 1:]], axis=1),
                               lng)
    offset = masked(emf - without_e0, read)
    values[:, 0] = np.sum(w * offset, axis=1) / np.sum(w, axis=1)
    residual = masked(offset - values[:, :1], read) * sqrt_w
    chi2 = np.sum(residual**2, axis=1)
    only_linear = bool(np.all(linear[np.any(free, axis=0)]))
    damping = np.full(n_series, 0.0 if only_linear else 1e-5)
    active = np.isfinite(chi2)
    converged = np.zeros(n_series, dtype=bool)
    failures: list[str | None] = [None if ok else "the model gives non-finite values at the start"
                                  for ok in active]
    iterations = 1 if only_linear else _MAX_ITERATIONS
    columns = np.flatnonzero(free.any(axis=0))
    free_columns = free[:, columns]
    diagonal_index = np.arange(columns.size)
    # Every series fits every parameter of ``columns``: the masks below change nothing.
    all_free = bool(free_columns.all())
    bounded = bool(np.any(np.isfinite(limits[columns])))
    low_columns, high_columns = low[columns], high[columns]
    # ln γ± at the current values of the series iterated (``base``, for the rows ``base_rows``)
    # and of every series (``lng``): each step's trial evaluates it, the next step reuses it.
    base, base_rows, lng_copy = lng, n_series, None  # (lng_copy: lng once it is our own)
    sub = model  # the model of the series iterated (``rows``)
    # The Jacobian rows at the current values of those series (None: not yet known). A step
    # that is not taken leaves them as they were; for a small batch, each trial's model
    # evaluation gives them at the trial too (in the same call), ready if the step is taken.
    jac_rows: np.ndarray | None = None
    # Likewise ∂²E/∂θ² of the parameters ``curved`` at the current values (None: not known).
    curvature: np.ndarray | None = None
    shifted = sum(1 for index in columns if 0 < index < n_parameters - 1)
    # The model parameters that enter non-linearly (their positions in ``columns``), and which
    # series are settling (their last step taken, lowering χ² by less than 1 %).
    curved = [] if only_linear else [
        position for position, index in enumerate(columns)
        if 0 < index < n_parameters - 1 and not model.activity.parameters[index - 1].linear]
    curved_columns = columns[curved]
    settling = np.zeros(n_series, dtype=bool)
    tiny = np.finfo(float).tiny
    rows = np.flatnonzero(active)
    for _ in range(iterations):
        if not rows.size:
            break
        # All series still iterating: views instead of copies of the rows.
        pick: slice | np.ndarray = slice(None) if rows.size == n_series else rows
        if rows.size != base_rows:  # (the rows only ever become fewer)
            sub = model if rows.size == n_series else _rows(model, rows)
            base, base_rows, jac_rows, curvature = sub.ln_gamma(values[pick]), rows.size, None, None
        current = values[pick]
        if jac_rows is None:
            jac_rows = sub.gradient_rows(current, free[pick], columns, central=False, base=base)
        at = jac_rows * sqrt_w[pick, None, :]
        normal = np.matmul(at, np.swapaxes(at, 1, 2))
        gradient = np.matmul(at, residual[pick, :, None])[..., 0]
        if curved and settling[pick].any():
            # Near the optimum, the Hessian's second-order part −Σ w r ∂²E/∂θ² for the
            # parameters that enter non-linearly (Newton's step rather than Gauss–Newton's):
            # where a model misfits (a parameter held) the residuals stay large, and without it
            # the steps overshoot and converge only linearly. Kept to at least −½ of the
            # diagonal, so that the matrix stays positive definite.
            if curvature is None:
                curvature = sub.curvature_rows(current, curved_columns, base)
            second = np.sum(curvature * (residual[pick] * sqrt_w[pick])[:, None, :], axis=2)
            diagonal = normal[:, curved, curved]
            normal[:, curved, curved] = diagonal + np.where(
                settling[pick, None] & np.isfinite(second) & free_columns[pick][:, curved],
                np.maximum(-second, -0.5 * diagonal), 0.0)
        # A parameter at a bound that the descent would push beyond it is held for this step
        # (projected Levenberg–Marquardt), so that the others can settle. (A held parameter's
        # Jacobian row is 0, and so are its row and column of the normal matrix.)
        used = free_columns[pick]
        if bounded:
            at_values = current[:, columns]
            at_low, at_high = at_values <= low_columns, at_values >= high_columns
            if at_low.any() or at_high.any():
                pinned = (at_low & (gradient < 0.0)) | (at_high & (gradient > 0.0))
                if pinned.any():
                    used = used & ~pinned
                    normal = normal * used[:, :, None] * used[:, None, :]
                    gradient = gradient * used
        all_used = bool(used.all())
        # (the diagonal as a strided view of the fresh, contiguous normal matrices)
        normal.reshape(rows.size, -1)[:, ::columns.size + 1] *= 1.0 + damping[pick, None]
        if not all_used:  # 1 on the diagonal of the parameters left out: their step is 0
            normal[:, diagonal_index, diagonal_index] += ~used
        try:
            compact = np.linalg.solve(normal, gradient[..., None])[..., 0]
        except np.linalg.LinAlgError:
            compact = np.stack([_safe_step(d, g, f) for d, g, f in
                                zip(normal, gradient, used, strict=True)])
        step = np.zeros((rows.size, n_parameters))
        step[:, columns] = compact
        trial = np.minimum(np.maximum(current + (step if all_free else step * free[pick]), low),
                           high)  # (np.clip, without its dispatch)
        step = trial - current
        # A series settling now most likely settles at the trial too: its curvature there is
        # worked out in the same evaluation of the model.
        bend = curved_columns if curved and settling[pick].any() else None
        if (not only_linear
                and rows.size * (1 + shifted + (0 if bend is None else 2 * bend.size))
                <= _STACK_LIMIT and np.isfinite(trial).all()):
            trial_rows, trial_lng, trial_curvature = sub._gradient(
                trial, free[pick], columns, central=False, curved=bend)
        else:
            trial_rows, trial_lng, trial_curvature = None, sub.ln_gamma(trial), None
        trial_residual = masked(emf[pick] - sub.predict(trial, trial_lng),
                                read[pick]) * sqrt_w[pick]
        trial_chi2 = np.sum(trial_residual**2, axis=1)
        before = chi2[pick]
        better = np.isfinite(trial_chi2) & (trial_chi2 <= before * (1.0 + 1e-12) + tiny)
        drop = (before - trial_chi2) / np.maximum(before, tiny)
        small = np.all(np.abs(step) <= 1e-10 * np.maximum(np.abs(current), 1e-12)
                       + 1e-300, axis=1)
        taken = int(np.count_nonzero(better))
        if taken == rows.size:  # every step taken (the np.where below, without its work)
            values[pick], residual[pick], chi2[pick] = trial, trial_residual, trial_chi2
            base, jac_rows, curvature = trial_lng, trial_rows, trial_curvature
        elif taken:
            values[pick] = np.where(better[:, None], trial, current)
            residual[pick] = np.where(better[:, None], trial_residual, residual[pick])
            chi2[pick] = np.where(better, trial_chi2, before)
            base = np.where(better[:, None], trial_lng, base)
            jac_rows = (None if trial_rows is None
                        else np.where(better[:, None, None], trial_rows, jac_rows))
            curvature = (None if trial_curvature is None or curvature is None
                         else np.where(better[:, None, None], trial_curvature, curvature))
        if rows.size == n_series:
            lng = base
        else:
            if lng is not lng_copy:
                lng_copy = lng = np.array(lng)
            lng[rows] = base
        if only_linear:
            converged[rows] = True
            break
        damping[pick] = np.where(better, damping[pick] / 10.0, damping[pick] * 10.0)
        settling[pick] = better & (drop < 1e-2)
        done = small | (better & (drop <= 1e-12))
        finished = done | (damping[pick] > 1e12)
        if finished.any():
            converged[rows[finished]] = True
            active[rows[finished]] = False
            rows = np.flatnonzero(active)
            # The series left keep their ln γ± and Jacobian rows (every model is elementwise:
            # the same numbers as evaluating the smaller batch again).
            if rows.size:
                kept = ~finished
                sub, base, base_rows = _rows(model, rows), base[kept], rows.size
                jac_rows = None if jac_rows is None else jac_rows[kept]
                curvature = None if curvature is None else curvature[kept]
    for index in np.flatnonzero(~converged):
        if failures[index] is None:
            failures[index] = f"the fit did not converge in {iterations} iterations"

    dof = np.sum(read, axis=1) - np.sum(free, axis=1)
    scaled = np.broadcast_to(np.asarray(scale_covariance, dtype=bool), (n_series,)).copy()
    if covariance:  # at the optimum
        jac = model.jacobian(values, free, base=lng)
        if not every_read:
            jac = jac * read[:, :, None]
        a = jac * sqrt_w[:, :, None]
        normal = np.matmul(np.swapaxes(a, 1, 2), a)
        try:
            cov = np.linalg.inv(_regularised(normal, free))
        except np.linalg.LinAlgError:
            cov = np.stack([_safe_inverse(n, f) for n, f in
                            zip(_regularised(normal, free), free, strict=True)])
        cov = cov * free[:, :, None] * free[:, None, :]
        factor = np.where(scaled, chi2 / np.maximum(dof, 1), 1.0)
        cov = cov * factor[:, None, None]
    else:
        jac = np.full((*emf.shape, n_parameters), np.nan)
        cov = np.full((n_series, n_parameters, n_parameters), np.nan)
    residual = masked(emf - model.predict(values, lng), read)
    return BatchFit(names=model.names, values=values, free=free, covariance=cov,
                    jacobian=jac, residual_V=residual, weights=w, chi2=chi2, dof=dof,
                    scaled=scaled, converged=converged, failures=tuple(failures))


def _rows(model: MeasurementModel, rows: np.ndarray) -> MeasurementModel:
    """The model restricted to some series."""
    if rows.size == model.molality.shape[0]:
        return model
    c = model.constants
    return MeasurementModel(model.activity, model.electrolyte, model.sign, model.molality[rows],
                            model.nernst_V[rows],
                            DebyeHueckelConstants(c.temperature[rows], c.aphi[rows], c.b[rows]))


def _safe_step(normal: np.ndarray, gradient: np.ndarray, free: np.ndarray) -> np.ndarray:
    """A least-squares step for one series whose normal matrix is singular."""
    return np.linalg.lstsq(normal, gradient, rcond=None)[0] * free


def _safe_inverse(normal: np.ndarray, free: np.ndarray) -> np.ndarray:
    """The inverse of one series' normal matrix; infinite variances where it is singular."""
    try:
        return np.linalg.inv(normal)
    except np.linalg.LinAlgError:
        return np.where(np.eye(free.size, dtype=bool) & free[:, None], np.inf, 0.0)
