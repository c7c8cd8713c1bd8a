"""The reduction: fit E° and the activity-coefficient model to E(m), then γ± at every point.

For each usable reading i,

.. math:: E_i = E° − σ s k_i [\\ln m_{±,i} + \\ln γ_±(m_i; θ)], \\qquad k_i = ν R T_i / (n F)

(σ = +1 when the cell forms the electrolyte, −1 when it consumes it; s the slope factor, 1 unless
fitted) is fitted by weighted least squares (:mod:`activolt.fit.least_squares`) in E° and the free
model
parameters θ, u(m) entering by the effective-variance method. A parameter the data cannot
determine is held at its conventional value and the result says which and why: too few points,
a fit that runs to a bound, a non-linear parameter with a relative standard uncertainty beyond
50 %, a convention with a stated uncertainty more precise than the data, or a parameter whose
fitting does not lower the Bayesian information criterion. γ± at each point then follows from
the measured E_i and the fitted E°, with the covariance propagated as in
:mod:`activolt.fit.uncertainty`. A Hitchcock-type linearised extrapolation is computed beside it as
a
cross-check.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Generator, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, NamedTuple, TypeVar

import numpy as np
import numpy.typing as npt
import pandas as pd
from uncertainties import correlated_values, ufloat
from uncertainties.core import AffineScalarFunc

from ..activity import ActivityModel, Parameter, get_model
from ..activity.hueckel import extended_debye_hueckel
from ..activity.properties import water_activity
from ..chemistry.cells import cell_summary
from ..chemistry.electrolytes import Electrolyte, nernst_factor
from ..constants import ATMOSPHERE_PA, STANDARD_PRESSURE_PA, ZERO_CELSIUS_K
from ..data.runs import Exclusion, Run, exclude_points, usable_points
from ..errors import FitError, InputError
from ..fit.diagnostics import PointDiagnostics, point_diagnostics, point_diagnostics_of_many
from ..fit.engine import BatchFit, MeasurementModel, solve
from ..fit.lack_of_fit import LackOfFit, judge_lack_of_fit, judge_lack_of_fit_of_many
from ..fit.least_squares import information_criteria, straight_lines
from ..fit.problem import (
    E0,
    SLOPE,
    SLOPE_PARAMETER,
    SeriesData,
    emf_jacobian,
    gas_correction,
    parameter_spec,
    predict_emf,
    prepare_inputs,
    prepare_series,
    series_inputs,
)
from ..fit.uncertainty import (
    BudgetLine,
    ln_gamma_covariance,
    ln_gamma_variance,
    sensitivity_coefficients,
    sensitivity_matrices,
    sensitivity_matrix,
    student_t_factor,
)
from ..physics.corrections import standard_pressure_basis_shift
from ..physics.water import DebyeHueckelConstants, debye_hueckel_constants
from .display import html_table, rounded_uncertainty, value_with_uncertainty

__all__ = [
    "SHARED_INPUTS",
    "UNCORRECTED_SPREAD",
    "FitStatistics",
    "FittedParameter",
    "LinearExtrapolation",
    "Reduction",
    "mean_temperature",
    "reduce_run",
    "reduce_runs",
    "reduction_jacobian",
    "sensitivity_matrix",
    "with_model_choice",
]

_T = TypeVar("_T")

#: Largest spread of temperatures in one run that is reduced to one E° [K].
MAX_TEMPERATURE_SPREAD_K = 2.0
#: Relative standard uncertainty beyond which a non-linear parameter counts as undetermined.
MAX_RELATIVE_UNCERTAINTY = 0.5
#: Ionic strength up to which the Hitchcock-type cross-check uses points [mol kg⁻¹].
LINEAR_EXTRAPOLATION_MAX_IONIC_STRENGTH = 0.1
_MIN_POINTS = 3
#: A held convention must agree with what the data say within this many combined standard
#: uncertainties (about 95 %); one the data contradict is not held (common practice).
CONVENTION_AGREEMENT = 2.0
#: Above this ionic strength a single model's u(E°) is reminded to leave out the choice of
#: model: in simulated runs to 1 mol/kg, Hückel intervals held a Pitzer truth only 70 % of the
#: time (measured in the project's coverage study) [mol kg⁻¹].
MODEL_CHOICE_REMINDER_IONIC_STRENGTH = 0.1
#: How the warning starts that E° is not corrected for the spread of the rows' temperatures
#: (a temperature study, which refers the readings to their setpoint, leaves it out).
UNCORRECTED_SPREAD = "the readings span"
#: The reminder itself.
MODEL_CHOICE_REMINDER = ("u(E°) covers this model only; above I = 0.1 mol/kg the choice of model "
                         "can move E° by more — compare the models to include the model-choice "
                         "component")
#: Flag of readings beyond the ionic strength up to which a model is commonly adequate.
OUT_OF_RANGE = "beyond the model's range"


@dataclass(frozen=True)
class FittedParameter:
    """A model parameter as fitted or held.

    ``uncertainty`` is the standard uncertainty (k = 1) in the parameter's unit, NaN if held.
    ``reason`` says why a held parameter was held (a convention, the user, the data).
    """

    name: str
    symbol: str
    unit: str
    value: float
    uncertainty: float
    fixed: bool
    reason: str | None = None


@dataclass(frozen=True)
class FitStatistics:
    """How well the model describes the readings.

    ``chi2`` is Σ((E_i − Ê_i)/u_i)² when readings carry stated uncertainties (dimensionless),
    otherwise Σ(E_i − Ê_i)² [V²]; ``covariance_scaled`` says whether the covariance was multiplied
    by the reduced χ²: always with unit weights, and with stated uncertainties when the fit shows
    lack of fit (``birge_ratio`` = √χ²ᵣ > 1, see :data:`LACK_OF_FIT_P`). ``chi2_p_value`` is the
    upper-tail probability of χ² (NaN without stated uncertainties); ``runs_p_value`` the
    lower-tail probability of the runs test of the residual signs in order of molality.
    """

    n_points: int
    n_free: int
    dof: int
    chi2: float
    reduced_chi2: float
    aic: float
    bic: float
    residual_sd_V: float
    covariance_scaled: bool
    coverage_factor: float
    stated_uncertainty: bool = False
    birge_ratio: float = 1.0
    chi2_p_value: float = math.nan
    runs_p_value: float = math.nan

    @property
    def covariance_note(self) -> str:
        """How the covariance was obtained, in words, for reports and records."""
        if not self.stated_uncertainty:
            return (f"unit weights; covariance scaled by the reduced χ² "
                    f"(residual s.d. {self.residual_sd_V * 1e3:.3g} mV)")
        if self.birge_ratio > 1.0:
            return (f"weights from the stated reading uncertainties; lack of fit (χ² p = "
                    f"{self.chi2_p_value:.2g}): covariance scaled by the reduced χ², "
                    f"Birge ratio {self.birge_ratio:.3g}, coverage factor from Student's t")
        return "weights from the stated reading uncertainties; covariance not scaled"


@dataclass(frozen=True)
class LinearExtrapolation:
    """Hitchcock-type cross-check: E + k ln m± − k ln γ_DH against m, a straight line to m = 0.

    ln γ_DH is the extended Debye–Hückel term with the Bates–Guggenheim Bå = 1.5 kg^½ mol^-½;
    only points with I ≤ ``max_ionic_strength`` are used.
    """

    standard_potential_V: float
    u_standard_potential_V: float
    slope_V_kg_mol: float
    n_points: int
    max_ionic_strength: float


@dataclass(frozen=True)
class CatalogueValue:
    """E° of the run's cell from the electrode catalogue, at the run temperature and on the
    run's pressure basis, for comparison with the fitted value."""

    standard_potential_V: float
    u_standard_potential_V: float
    couples: str


@dataclass(frozen=True)
class GammaPropagation:
    """What the covariance of ln γ± at the usable readings is made of, kept in O(N·P) memory:
    ``parameter_gradient`` G_p (N × P), ``reading_gradient`` g_E (N), ``sensitivity`` S (P × N),
    ``reading_variance_V2`` (N), ``type_b_covariance`` (P × P or None) and ``common`` — one
    vector per input shared by every reading (u × ∂ ln γ±/∂input, N each)."""

    parameter_gradient: np.ndarray
    reading_gradient: np.ndarray
    sensitivity: np.ndarray
    reading_variance_V2: np.ndarray
    type_b_covariance: np.ndarray | None
    common: tuple[np.ndarray, ...]

    def ln_gamma_covariance(self) -> np.ndarray:
        """The full N × N covariance of ln γ± (GUM 5.2), on request only."""
        cov = ln_gamma_covariance(self.parameter_gradient, self.reading_gradient,
                                  self.sensitivity, self.reading_variance_V2,
                                  np.zeros(self.reading_gradient.size),
                                  type_b_covariance=self.type_b_covariance)
        for vector in self.common:
            cov = cov + np.outer(vector, vector)
        return cov


class OtherBasis(NamedTuple):
    """E° on the other common standard pressure (1 atm when the run is on 100 kPa, and back)."""

    pressure_kPa: float
    standard_potential_V: float


@dataclass(frozen=True)
class Reduction:
    """The result of reducing one run: E°, the model, γ± at every point, diagnostics.

    ``covariance`` is over (E°, free parameters) — ``free_names`` — and includes the Type B
    part that parameters held at a conventional value with a stated uncertainty add to them.
    ``uncertain_covariance`` extends it to those held parameters themselves
    (``uncertain_names``), for quantities that depend on them directly (model γ±, φ, a_w).
    ``point_columns`` holds the columns the reduction adds to the run's rows (fitted EMF,
    residual, γ± and its budget, diagnostics), each over every row, NaN where a row was not
    fitted; :attr:`points` is the run's table with them.
    ``data`` is the measurement problem as finally fitted (readings corrected to p°, weights
    with every refinement), which the Monte Carlo draws anew. ``shared_inputs`` holds, for
    each input that other runs may share (:data:`SHARED_INPUTS`), (name, u, ∂E°/∂input): a
    temperature study correlates its isotherms' E° through them.
    """

    run: Run
    model: ActivityModel
    temperature_K: float
    standard_potential: AffineScalarFunc
    parameters: tuple[FittedParameter, ...]
    free_names: tuple[str, ...]
    covariance: np.ndarray
    statistics: FitStatistics
    point_columns: Mapping[str, np.ndarray] = field(repr=False, compare=False)
    gamma_propagation: GammaPropagation = field(repr=False, compare=False)
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default=())
    corrections: tuple[str, ...] = field(default=())
    other_basis: tuple[float, float] | None = None
    catalogue: CatalogueValue | None = None
    uncertain_names: tuple[str, ...] = ()
    uncertain_covariance: np.ndarray | None = None
    budget: tuple[BudgetLine, ...] = ()
    data: SeriesData | None = field(default=None, repr=False, compare=False)
    shared_inputs: tuple[tuple[str, float, float], ...] = ()

    @functools.cached_property
    def points(self) -> pd.DataFrame:
        """The points table: every row of the run (flagged ones included) with the columns the
        reduction adds (:attr:`point_columns`), built when first asked for."""
        return pd.concat([self.run.points, pd.DataFrame(dict(self.point_columns),
                                                        index=self.run.points.index)], axis=1)

    @functools.cached_property
    def linear_extrapolation(self) -> LinearExtrapolation | None:
        """The straight-line cross-check of E° (see :class:`LinearExtrapolation`), worked out
        when first asked for; None when fewer than three molalities lie within its range."""
        if self.data is None:
            return None
        return _linear_extrapolations([(self.run, self.data, self.slope_factor)])[0]

    def point_column(self, name: str) -> np.ndarray:
        """One column of :attr:`points` as an array over every row, without building the
        table (read-only for the reduction's own columns)."""
        found = self.point_columns.get(name)
        return found if found is not None else self.run.points[name].to_numpy()

    @property
    def standard_potential_other_basis_V(self) -> tuple[float, float] | None:
        """(pressure basis [Pa], E° on that basis [V]) for the other common standard pressure,
        when the cell holds a gas; the uncertainty is that of E°."""
        if self.other_basis is None:
            return None
        pressure_Pa, shift_V = self.other_basis
        return pressure_Pa, self.standard_potential.nominal_value + shift_V

    @property
    def standard_potential_other_basis(self) -> OtherBasis | None:
        """E° on the other common standard pressure, units named: ``(pressure_kPa,
        standard_potential_V)`` (kPa as on the command line and in the metadata); None when
        the cell holds no gas. The uncertainty is that of E°."""
        other = self.standard_potential_other_basis_V
        return None if other is None else OtherBasis(other[0] / 1e3, other[1])

    @property
    def electrolyte(self) -> Electrolyte:
        """The electrolyte of the run."""
        return self.run.metadata.electrolyte

    @property
    def parameter_values(self) -> dict[str, float]:
        """Every parameter's value, fitted or held (the slope factor included when fitted)."""
        return {p.name: p.value for p in self.parameters}

    @property
    def model_parameter_values(self) -> dict[str, float]:
        """The activity-coefficient model's parameter values only."""
        return {name: self.parameter_values[name] for name in self.model.parameter_names}

    @property
    def slope_factor(self) -> float:
        """The slope factor s of the cell response: fitted, or as given (1 = Nernstian)."""
        return self.parameter_values.get(SLOPE, self.run.metadata.slope_factor)

    def response_factor_V(self, temperature_K: npt.ArrayLike) -> np.ndarray:
        """σ s k = σ s νRT/(nF) at T [V]: E = E° − σ s k ln(m± γ±)."""
        meta = self.run.metadata
        return (meta.electrolyte_sign * self.slope_factor
                * nernst_factor(meta.electrolyte, meta.electrons, temperature_K))

    def correlated_parameters(self) -> dict[str, AffineScalarFunc]:
        """E° and the free parameters as correlated uncertain numbers (k = 1)."""
        values = [self.standard_potential.nominal_value] + [
            p.value for p in self.parameters if p.name in self.free_names
        ]
        names = (E0, *[n for n in self.free_names if n != E0])
        return dict(zip(names, correlated_values(values, self.covariance), strict=True))

    def ln_gamma_model(self, molality: np.ndarray, temperature_K: float | None = None
                       ) -> np.ndarray:
        """ln γ± of the fitted model at any molality [mol kg⁻¹] (at the run temperature)."""
        t = self.temperature_K if temperature_K is None else temperature_K
        m = np.atleast_1d(np.asarray(molality, dtype=float))
        constants = debye_hueckel_constants(np.full(m.shape, t))
        return self.model.ln_gamma(self.electrolyte, m, constants, self.model_parameter_values)

    def to_frame(self) -> pd.DataFrame:
        """The points table (all rows, flagged ones included)."""
        return self.points.copy()

    def _repr_html_(self) -> str:
        """The headline table for a notebook: E° ± u, the 95 % interval, the model and its
        parameters, χ²/ν, the readings used, how the covariance was obtained, the warnings."""
        e0 = self.standard_potential
        stats = self.statistics
        meta = self.run.metadata
        u = e0.std_dev
        rows: list[tuple[str, str]] = [
            ("cell" if meta.cell else "electrolyte", meta.cell or self.electrolyte.formula),
            ("temperature / °C", f"{self.temperature_K - ZERO_CELSIUS_K:.2f}"),
            ("model", self.model.title),
            (f"E° / mV (k = 1), p° = {meta.standard_pressure_Pa / 1e3:g} kPa",
             value_with_uncertainty(e0.nominal_value, u, scale=1e3)),
            (f"95 % interval / mV (k = {stats.coverage_factor:.3g})",
             "± " + rounded_uncertainty(stats.coverage_factor * u, scale=1e3)),
        ]
        for p in self.parameters:
            rows.append((f"{p.symbol} / {p.unit}" if p.unit and p.unit != "-" else p.symbol,
                         value_with_uncertainty(p.value, p.uncertainty)
                         + (f" — {p.reason}" if p.fixed and p.reason else "")))
        rows += [
            (f"χ²/ν (ν = {stats.dof})", f"{stats.reduced_chi2:.3g}"),
            ("readings used", f"{stats.n_points} of {len(self.run.points)}"),
            ("covariance", stats.covariance_note),
        ]
        return html_table(f"Reduction of {self.run.path.name}", ("quantity", "value"), rows,
                          warnings=self.warnings)

    def __repr__(self) -> str:
        e0 = self.standard_potential
        return (f"<Reduction {self.electrolyte.formula}, {self.model.name}, "
                f"{self.statistics.n_points} readings: E° = {e0.nominal_value:.6f} ± "
                f"{e0.std_dev:.1g} V (k = 1), reduced χ² = {self.statistics.reduced_chi2:.3g}>")

    def gamma_covariance(self) -> np.ndarray:
        """Covariance of γ± at the usable readings, N × N, built on request (the points table
        holds its diagonal as ``u_gamma_pm``)."""
        gamma = self.point_columns["gamma_pm"][self.run.usable]
        return gamma[:, None] * self.gamma_propagation.ln_gamma_covariance() * gamma[None, :]



def _with_vapour_lowering(run: Run, model: ActivityModel, data: SeriesData,
                          fit: _Fit) -> SeriesData:
    """Readings corrected again with the water vapour over the solution lowered to a_w p_w,
    a_w = exp(−ν m M_w φ) from the fitted model (Robinson & Stokes 1959, ch. 2); unchanged when
    the metadata does not ask for it or no gas correction applies."""
    if not _lowers_vapour(run, data):
        return data

    model_values = {name: fit.values[name] for name in model.parameter_names}
    phi = model.osmotic_coefficient(run.metadata.electrolyte, data.molality, data.constants,
                                    model_values)
    a_w = water_activity(run.metadata.electrolyte, data.molality, phi)
    correction, partial = gas_correction(run, usable_points(run), a_w)
    return dataclasses.replace(data, emf_V=data.emf_V - data.correction_V + correction,
                               correction_V=correction, gas_pressure_Pa=partial)


def _lowers_vapour(run: Run, data: SeriesData) -> bool:
    """Whether the readings are corrected again for the vapour lowered by the solute."""
    return run.metadata.solute_vapour_lowering and data.correction_V is not None


def _weighs_molality(data: SeriesData) -> bool:
    """Whether u(m) enters the weights (effective variance): stated u(E) and some u(m) > 0."""
    return bool(data.stated_uncertainty and data.u_molality_mol_kg is not None
                and any(map((0.0).__lt__, data.u_molality_mol_kg.tolist())))


def _with_effective_variance(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData,
                             fit: _Fit) -> SeriesData:
    """Weights 1/[u²(E) + (∂E/∂m)² u²(m)] (effective variance; Orear 1982, Am. J. Phys. 50,
    912), the slope taken from ``fit``; unchanged when no u(m) or no u(E) is stated."""
    if not _weighs_molality(data):
        return data
    step = 1e-6 * data.molality
    shifted = [dataclasses.replace(
        data, molality=m, ln_mean_molality=np.log(electrolyte.mean_molality(m)))
        for m in (data.molality + step, data.molality - step)]
    up, down = (predict_emf(model, electrolyte, d, fit.e0, fit.values) for d in shifted)
    slope_V_kg_mol = (up - down) / (2.0 * step)
    variance = data.u_emf_V**2 + (slope_V_kg_mol * data.u_molality_mol_kg) ** 2
    return dataclasses.replace(data, weights=1.0 / variance)


class _Fit(NamedTuple):
    e0: float
    values: dict[str, float]
    free: list[str]
    covariance: np.ndarray
    chi2: float
    dof: int
    aic: float
    bic: float
    residual_V: np.ndarray
    jacobian: np.ndarray

    def with_covariance(self, covariance: np.ndarray) -> _Fit:
        """The fit with another covariance."""
        return self._replace(covariance=covariance)


class _FitRequest(NamedTuple):
    """One weighted fit of E° and the ``free`` parameters, the others held at ``values``, as
    the engine takes it (a batch of one); :func:`_solve_requests` solves many at once."""

    model: ActivityModel
    electrolyte: Electrolyte
    data: SeriesData
    values: dict[str, float]
    free: list[str]
    start: tuple[float, ...]
    mask: np.ndarray

    @property
    def batch_key(self) -> tuple[Any, ...]:
        """Requests with equal keys are solved in one batch: one model, one electrolyte, one
        sign, one number of readings."""
        return (id(self.model), self.electrolyte, self.data.sign, self.data.molality.size)


def _fit_request(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData,
                 values: dict[str, float], free: list[str]) -> _FitRequest:
    """The request for one fit (FitError when a starting value lies outside its bounds)."""
    names = _names(model)
    start = data.values_row(model, 0.0, values)
    low, high = _bounds_lists(model, names)
    if not all(lo <= value <= hi for value, lo, hi in zip(start, low, high, strict=True)):
        raise FitError("a starting value lies outside its bounds; hold the parameter at a "
                       "value within them")
    return _FitRequest(model, electrolyte, data, values, list(free), start,
                       _mask(names, tuple(free)))


@functools.lru_cache(maxsize=64)
def _names(model: ActivityModel) -> tuple[str, ...]:
    """The quantities of the engine's order for a model (:attr:`MeasurementModel.names`)."""
    return (E0, *model.parameter_names, SLOPE)


@functools.lru_cache(maxsize=256)
def _mask(names: tuple[str, ...], free: tuple[str, ...]) -> np.ndarray:
    """Which quantities of the engine's order are fitted (E° and ``free``), shape (1, P),
    read-only."""
    mask = np.array([[name == E0 or name in free for name in names]])
    mask.flags.writeable = False
    return mask


@functools.lru_cache(maxsize=64)
def _bounds(model: ActivityModel, names: tuple[str, ...]) -> tuple[np.ndarray, np.ndarray]:
    """(minimum, maximum) of each quantity of the engine's order (E° unbounded)."""
    specs = [parameter_spec(model, name) if name != E0 else None for name in names]
    return (np.array([-math.inf if s is None else s.minimum for s in specs]),
            np.array([math.inf if s is None else s.maximum for s in specs]))


@functools.lru_cache(maxsize=64)
def _bounds_lists(model: ActivityModel, names: tuple[str, ...]
                  ) -> tuple[list[float], list[float]]:
    """:func:`_bounds` as lists of floats (to check one start without array calls)."""
    low, high = _bounds(model, names)
    return low.tolist(), high.tolist()


@functools.lru_cache(maxsize=64)
def _linear(model: ActivityModel, names: tuple[str, ...]) -> np.ndarray:
    """Whether E is linear in each quantity of the engine's order."""
    return np.array([name == E0 or parameter_spec(model, name).linear for name in names])


def _solve_requests(requests: Sequence[_FitRequest]) -> list[_Fit | FitError]:
    """Every request solved, those of one batch key in one call of the batched engine
    (:func:`activolt.fit.engine.solve`); each gives its fit or the FitError that refuses it.
    A request's result does not depend on the others solved with it."""
    results: list[_Fit | FitError | None] = [None] * len(requests)
    groups: dict[tuple[Any, ...], list[int]] = {}
    for index, request in enumerate(requests):
        groups.setdefault(request.batch_key, []).append(index)
    for indices in groups.values():
        chosen = [requests[i] for i in indices]
        first = chosen[0]
        names = _names(first.model)
        if len(chosen) == 1:
            measurement = first.data.measurement_model(first.model, first.electrolyte)
            emf, weights = first.data.emf_V[None, :], first.data.weights[None, :]
            start, mask = np.array([first.start]), first.mask
        else:
            measurement = _stacked(first.model, first.electrolyte, [r.data for r in chosen])
            emf = np.array([r.data.emf_V for r in chosen])
            weights = np.array([r.data.weights for r in chosen])
            start = np.array([r.start for r in chosen])
            mask = np.concatenate([r.mask for r in chosen])
        scaled = np.array([not r.data.stated_uncertainty for r in chosen])
        batch = solve(measurement, emf, weights, start, mask, _linear(first.model, names),
                      np.column_stack(_bounds(first.model, names)), scale_covariance=scaled)
        for index, fit in zip(indices, _fits_from(chosen, batch), strict=True):
            results[index] = fit
    return [r for r in results if r is not None]


def _stacked(model: ActivityModel, electrolyte: Electrolyte, series: Sequence[SeriesData]
             ) -> MeasurementModel:
    """One measurement model of several series of equal length (one model and electrolyte)."""
    return MeasurementModel(
        model, electrolyte, series[0].sign, np.array([d.molality for d in series]),
        np.array([d.nernst_V for d in series]),
        DebyeHueckelConstants(*(np.array([getattr(d.constants, field) for d in series])
                                for field in ("temperature", "aphi", "b"))))


def _fits_from(requests: Sequence[_FitRequest], result: BatchFit) -> list[_Fit | FitError]:
    """The fit of each request from its row of the engine's batch (the requests in the
    batch's order), or the FitError that refuses it; the rows of requests with one set of
    free parameters read together."""
    names = result.names
    out: list[_Fit | FitError | None] = [None] * len(requests)
    alike: dict[tuple[str, ...], list[int]] = {}
    for row, request in enumerate(requests):
        alike.setdefault(tuple(request.free), []).append(row)
    for free, rows in alike.items():
        order = [names.index(name) for name in (E0, *free)]
        picked = np.array(rows)
        # (laid out as one row's alone: each covariance row-major, each Jacobian
        # column-major, the transpose of a row-major P × N)
        covariances = np.ascontiguousarray(result.covariance[picked][:, order][:, :, order])
        jacobians = np.ascontiguousarray(
            np.swapaxes(result.jacobian[picked][:, :, order], 1, 2)).transpose(0, 2, 1)
        estimable = (np.isfinite(covariances).all(axis=(1, 2))
                     & (np.diagonal(covariances, axis1=1, axis2=2) > 0.0).all(axis=1)).tolist()
        values, chi2s, dofs, converged = (
            result.values[picked].tolist(), result.chi2[picked].tolist(),
            result.dof[picked].tolist(), result.converged[picked].tolist())
        columns = [names.index(name) for name in free]
        for k, row in enumerate(rows):
            out[row] = (_fit_of(requests[row], result, row, values[k], columns, covariances[k],
                                estimable[k], chi2s[k], dofs[k], jacobians[k])
                        if converged[k] else
                        FitError(f"{result.failures[row]}; hold a parameter at a given value"))
    return [fit for fit in out if fit is not None]


def _fit_of(request: _FitRequest, result: BatchFit, row: int, values: list[float],
            columns: list[int], covariance: np.ndarray, estimable: bool, chi2: float, dof: int,
            jacobian: np.ndarray) -> _Fit | FitError:
    """The fit of one converged request from row ``row`` of the engine's batch (its values, the
    positions of its free parameters among them, its covariance and Jacobian over E° and
    those, whether that covariance is finite with a positive diagonal, χ² and ν), or the
    FitError that refuses it."""
    model, data, free = request.model, request.data, request.free
    fitted = {**request.values,
              **{name: values[column] for name, column in zip(free, columns, strict=True)}}
    if not estimable and not any(_at_bound(parameter_spec(model, name), fitted[name])
                                 for name in free):
        # (a parameter at a bound is held next, by _hard_failure, whatever its variance)
        return FitError("the covariance of the fit cannot be estimated (the parameters are not "
                        "independent for these data); hold a parameter at a given value")
    if dof < 1 and not data.stated_uncertainty:
        return FitError("no degree of freedom is left to estimate the scatter; hold a "
                        "parameter at a given value or state u(EMF)")
    aic, bic = information_criteria(chi2, data.emf_V.size, 1 + len(free),
                                    not data.stated_uncertainty)
    return _Fit(e0=values[0], values=fitted, free=list(free), covariance=covariance, chi2=chi2,
                dof=dof, aic=aic, bic=bic, residual_V=result.residual_V[row],
                jacobian=jacobian)


def _at_bound(spec: Parameter, value: float) -> bool:
    """Whether a fitted value lies at one of its parameter's bounds (within 10⁻⁴ of its span,
    or of 1 for an unbounded side)."""
    span = spec.maximum - spec.minimum
    span = span if math.isfinite(span) else 1.0
    return min(abs(value - spec.minimum), abs(spec.maximum - value)) < 1e-4 * span


def _hard_failure(model: ActivityModel, fit: _Fit) -> tuple[str, str] | None:
    """A free parameter that ran to a bound or whose uncertainty is not finite, and why."""
    for index, name in enumerate(fit.free, start=1):
        spec = parameter_spec(model, name)
        value, variance = fit.values[name], fit.covariance[index, index]
        if _at_bound(spec, value):
            side, bound = (("lower", spec.minimum) if value - spec.minimum
                           <= spec.maximum - value else ("upper", spec.maximum))
            return name, f"the fit ran to its {side} bound ({bound:g} {spec.unit})".replace(
                " )", ")")
        if not math.isfinite(variance) or variance <= 0.0:
            return name, "its uncertainty cannot be estimated from these data"
        u = math.sqrt(variance)
        if not spec.linear and u > MAX_RELATIVE_UNCERTAINTY * abs(value):
            return name, f"not determined by these data ({value:.3g} ± {u:.2g} {spec.unit})"
    return None


def _bic_candidates(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData,
                    values: dict[str, float], free: list[str]
                    ) -> list[tuple[str, _FitRequest | None]]:
    """The fits that test holding each free parameter without a stated conventional
    uncertainty at its conventional value, the others starting at ``values`` (None for one
    that cannot start there)."""
    candidates: list[tuple[str, _FitRequest | None]] = []
    for name in free:
        spec = parameter_spec(model, name)
        if spec.conventional_uncertainty is not None:
            continue
        try:
            candidates.append((name, _fit_request(
                model, electrolyte, data, {**values, name: spec.conventional(
                    electrolyte, data.constants)}, [f for f in free if f != name])))
        except FitError:
            candidates.append((name, None))
    return candidates


def _not_supported(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData,
                   fit: _Fit, tested: Mapping[str, _Fit | FitError] | None = None
                   ) -> Generator[list[_FitRequest], list[_Fit | FitError],
                                  tuple[str, str] | None]:
    """The free parameter to hold next, and why, or None (a step: it yields the fits it needs,
    all at once, and is sent their results; ``tested``: those fits already solved, by name).

    A parameter whose conventional value carries a stated uncertainty is held when the data
    determine it less precisely than the convention does (u_fit > u_conv) and agree with it
    (within :data:`CONVENTION_AGREEMENT` combined u): the more precise source wins, and the
    convention's uncertainty then enters as a Type B component. Any other
    parameter is held when holding it at its conventional value gives a BIC no higher than
    fitting it; among several, the one with the lowest BIC, non-linear parameters first on a tie
    (backward elimination; Burnham & Anderson 2002, §3.4).
    """
    best_convention: tuple[float, str, str] | None = None
    for index, name in enumerate(fit.free, start=1):
        spec = parameter_spec(model, name)
        conventional = spec.conventional(electrolyte, data.constants)
        u_fit = math.sqrt(fit.covariance[index, index])
        if spec.conventional_uncertainty is not None:
            u_conv = spec.conventional_uncertainty(electrolyte, data.constants)
            # A convention the data contradict (beyond 3 combined u, the fit's u widened by any
            # excess scatter) is not held: the readings, not the convention, then decide.
            excess = math.sqrt(max(1.0, fit.chi2 / fit.dof)) if data.stated_uncertainty else 1.0
            agrees = abs(fit.values[name] - conventional) <= CONVENTION_AGREEMENT * math.hypot(
                u_fit * excess, u_conv)
            if agrees and u_fit > u_conv and (best_convention is None
                                              or u_fit / u_conv > best_convention[0]):
                best_convention = (u_fit / u_conv, name, (
                    f"the convention {conventional:.4g} ± {u_conv:.2g} {spec.unit} is more "
                    f"precise than these data ({fit.values[name]:.3g} ± {u_fit:.2g})"))
    if tested is None:
        candidates = [(name, request) for name, request in
                      _bic_candidates(model, electrolyte, data, fit.values, fit.free)
                      if request is not None]
        held_fits = (yield [request for _, request in candidates]) if candidates else []
        tested = {name: held for (name, _), held in zip(candidates, held_fits, strict=True)}
    best_bic: tuple[float, bool, str] | None = None
    for name, held in tested.items():
        if isinstance(held, FitError):
            continue
        linear = parameter_spec(model, name).linear
        if held.bic <= fit.bic and (best_bic is None or (held.bic, linear) < best_bic[:2]):
            best_bic = (held.bic, linear, name)
    if best_convention is not None:
        return best_convention[1], best_convention[2]
    if best_bic is None:
        return None
    bic, _, name = best_bic
    spec = parameter_spec(model, name)
    return name, (f"the data do not support fitting it (BIC {bic:.1f} held vs {fit.bic:.1f} "
                  f"fitted; fitted value {fit.values[name]:.3g} {spec.unit})")


def _fitted(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData,
            values: dict[str, float], free: list[str]
            ) -> Generator[list[_FitRequest], list[_Fit | FitError], _Fit]:
    """One fit as a step: it yields its request and returns the fit (FitError when refused)."""
    (result,) = yield [_fit_request(model, electrolyte, data, values, free)]
    if isinstance(result, FitError):
        raise result
    return result


def _first_fit(run: Run, model: ActivityModel, data: SeriesData, values: dict[str, float],
               free: list[str]
               ) -> Generator[list[_FitRequest], list[_Fit | FitError],
                              tuple[_Fit, dict[str, _Fit | FitError] | None]]:
    """The first fit as a step, and, when the readings will not be refined after it (no vapour
    lowering, no u(m)), the fits that test holding each parameter (:func:`_not_supported`)
    solved with it: the tests the fit would ask for next, started at the starting values
    rather than at the fit's optimum (None when they are not solved ahead)."""
    electrolyte = run.metadata.electrolyte
    ahead = ([] if _lowers_vapour(run, data) or _weighs_molality(data)
             else _bic_candidates(model, electrolyte, data, values, free))
    if not ahead or any(request is None for _, request in ahead):
        fit = yield from _fitted(model, electrolyte, data, values, free)
        return fit, None
    first, *others = yield [_fit_request(model, electrolyte, data, values, free),
                            *(request for _, request in ahead if request is not None)]
    if isinstance(first, FitError):
        raise first
    return first, {name: held for (name, _), held in zip(ahead, others, strict=True)}


def _alone(steps: Generator[list[_FitRequest], list[_Fit | FitError], _T]) -> _T:
    """What a chain of steps returns, each fit it asks for solved as a batch of one."""
    try:
        requests = next(steps)
        while True:
            requests = steps.send(_solve_requests(requests))
    except StopIteration as stop:
        return stop.value


def _together(chains: Sequence[Generator[list[_FitRequest], list[_Fit | FitError], _T] | None]
              ) -> list[_T | FitError | InputError | None]:
    """What each chain of steps returns (or the error that refused it; None for a missing
    chain), the fits they ask for in turn solved together, one engine batch per round."""
    outcomes: list[_T | FitError | InputError | None] = [None] * len(chains)
    pending: dict[int, list[_FitRequest]] = {}

    def advance(index: int, answer: list[_Fit | FitError] | None) -> None:
        chain = chains[index]
        assert chain is not None
        try:
            requests = next(chain) if answer is None else chain.send(answer)
        except StopIteration as stop:
            outcomes[index] = stop.value
        except (FitError, InputError) as error:
            outcomes[index] = error
        else:
            pending[index] = requests

    for index, chain in enumerate(chains):
        if chain is not None:
            advance(index, None)
    while pending:
        asked = list(pending.items())
        pending.clear()
        solved = _solve_requests([request for _, requests in asked for request in requests])
        offset = 0
        for index, requests in asked:
            advance(index, solved[offset:offset + len(requests)])
            offset += len(requests)
    return outcomes


def _linear_extrapolations(problems: Sequence[tuple[Run, SeriesData, float]]
                           ) -> list[LinearExtrapolation | None]:
    r"""The straight-line cross-check (:class:`LinearExtrapolation`) of each (run, readings as
    fitted, slope factor), the lines of all of them fitted together
    (:func:`~activolt.fit.least_squares.straight_lines`); None for a run with fewer than three
    molalities within range or whose molalities do not determine a line.

    Notes
    -----
    .. math:: E + s k (\ln m_± + \ln γ_{DH}) = E° + b\,m

    at I ≤ :data:`LINEAR_EXTRAPOLATION_MAX_IONIC_STRENGTH`, ln γ_DH the extended Debye–Hückel
    term with Bå = 1.5 (Bates–Guggenheim); the intercept is E° (the Hitchcock extrapolation).
    The lines of runs of one electrolyte and number of readings are fitted together (padded
    to that width, so that each line's sums are those of its run alone).
    """
    groups: dict[tuple[Any, ...], list[int]] = {}
    for index, (run, data, _) in enumerate(problems):
        groups.setdefault((data.molality.size, run.metadata.electrolyte), []).append(index)
    found: dict[int, LinearExtrapolation | None] = {}
    for members in groups.values():
        found.update(zip(members, _lines_of_one_width([problems[i] for i in members]),
                         strict=True))
    return [found[index] for index in range(len(problems))]


def _lines_of_one_width(problems: Sequence[tuple[Run, SeriesData, float]]
                        ) -> list[LinearExtrapolation | None]:
    """:func:`_linear_extrapolations` of runs of one electrolyte and number of readings: the
    points within range of each moved to the front of its row, in order, zeros after."""
    electrolyte = problems[0][0].metadata.electrolyte
    size = problems[0][1].molality.size
    width = max(2, size)

    def stacked(name: str) -> np.ndarray:
        return np.array([getattr(data, name) for _, data, _ in problems])

    molality = stacked("molality")
    use = electrolyte.ionic_strength(molality) <= LINEAR_EXTRAPOLATION_MAX_IONIC_STRENGTH
    ln_gamma_dh = extended_debye_hueckel(
        electrolyte, molality, np.array([data.constants.agamma for _, data, _ in problems]))
    factor = np.array([data.sign * slope for _, data, slope in problems])[:, None]
    y_all = stacked("emf_V") + factor * stacked("nernst_V") * (stacked("ln_mean_molality")
                                                                + ln_gamma_dh)
    order = np.argsort(~use, axis=1, kind="stable")  # the points within range first
    within = np.arange(size) < np.count_nonzero(use, axis=1)[:, None]
    m, y, w = (np.zeros((len(problems), width)) for _ in range(3))
    for padded, values in ((m, molality), (y, y_all), (w, stacked("weights"))):
        padded[:, :size] = np.where(within, np.take_along_axis(values, order, axis=1), 0.0)
    scale = np.array([not data.stated_uncertainty for _, data, _ in problems])
    ordered = np.sort(np.where(w > 0.0, m, np.inf), axis=1)  # the padding last
    with np.errstate(invalid="ignore"):  # (∞ − ∞ between two paddings)
        steps = np.diff(ordered, axis=1) > 0.0
    distinct = (np.count_nonzero(steps & np.isfinite(ordered[:, 1:]), axis=1)
                + np.isfinite(ordered[:, 0]))
    lines = straight_lines(m, y, w, scale)
    found = (distinct >= 3) & lines.determined
    return [LinearExtrapolation(
        standard_potential_V=e0, u_standard_potential_V=math.sqrt(variance),
        slope_V_kg_mol=slope, n_points=int(points),
        max_ionic_strength=LINEAR_EXTRAPOLATION_MAX_IONIC_STRENGTH) if ok else None
        for (e0, slope), variance, points, ok in zip(
            lines.values[:, :2].tolist(), lines.covariance[:, 0, 0].tolist(),
            lines.points.tolist(), found.tolist(), strict=True)]


def mean_temperature(temperature_K: np.ndarray) -> float:
    """The mean of the rows' temperatures [K], never outside their range by rounding (18 rows
    at 273.15 K must not average to 273.1499999999999 K, outside liquid water)."""
    temperature_K = np.ascontiguousarray(temperature_K, dtype=float)
    if temperature_K.size > 1024:  # a long series: worked out each time, not kept
        return _clipped_mean(temperature_K)
    return _mean_temperature(temperature_K.shape, temperature_K.tobytes())


def _clipped_mean(temperature_K: np.ndarray) -> float:
    return float(np.clip(np.mean(temperature_K), temperature_K.min(), temperature_K.max()))


@functools.lru_cache(maxsize=1024)
def _mean_temperature(shape: tuple[int, ...], raw: bytes) -> float:
    """:func:`mean_temperature` of the array of ``shape`` whose float64 values are ``raw``,
    kept once worked out (the series of a batch are mostly at one temperature)."""
    return _clipped_mean(np.frombuffer(raw).reshape(shape))


def _split_fixed(fixed: Mapping[str, Any] | None
                 ) -> tuple[dict[str, float], dict[str, float]]:
    """Held values, and the standard uncertainties given with some of them: a value or a
    (value, u) pair per parameter, or an ``lmfit.Parameters`` whose parameters with
    ``vary=False`` are held (their ``stderr``, when set, is the u); u must be finite and ≥ 0."""
    if fixed is not None and all(hasattr(p, "vary") for p in fixed.values()):
        fixed = {name: (p.value, p.stderr or 0.0) for name, p in fixed.items() if not p.vary}
    values, uncertainties = {}, {}
    for name, given in (fixed or {}).items():
        value, u = (given if isinstance(given, tuple) else (given, 0.0))
        if not (math.isfinite(float(value)) and math.isfinite(float(u)) and float(u) >= 0.0):
            raise InputError(f"{name} = {value} ± {u}: a held value and its uncertainty must be "
                             "finite numbers, the uncertainty ≥ 0", column="fixed")
        values[name] = float(value)
        if float(u) > 0.0:
            uncertainties[name] = float(u)
    return values, uncertainties

def _within_range(run: Run, family: ActivityModel) -> tuple[Run, str | None]:
    """The run with readings beyond the model's ionic-strength range flagged and left out, and a
    warning saying so; FitError when fewer than three readings remain within it."""
    usable = run.usable
    ionic = run.metadata.electrolyte.ionic_strength(run.arrays["molality_mol_kg"])
    limit = family.max_ionic_strength
    beyond = usable & (ionic > limit * (1.0 + 1e-9))
    if not beyond.any():
        return run, None
    kept = int(usable.sum() - beyond.sum())
    if kept < _MIN_POINTS:
        raise FitError(f"the {family.title} is commonly adequate up to I = {limit:g} mol/kg and "
                       f"only {kept} reading(s) lie within it; choose a model for higher ionic "
                       "strength (pitzer, sit) or compare all models")
    points = run.points.copy()
    points.loc[beyond, "flag"] = (f"{OUT_OF_RANGE}: I > {limit:g} mol/kg, where the "
                                  f"{family.title} is commonly adequate")
    return dataclasses.replace(run, points=points), (
        f"the {family.title} is commonly adequate up to I = {limit:g} mol/kg: only the {kept} "
        f"readings within it are fitted, {int(beyond.sum())} beyond it are flagged and left out "
        "(choose pitzer, or compare all models, to use the whole run)")


def _truncation_effect(family: ActivityModel, electrolyte: Electrolyte, data: SeriesData,
                       fit: _Fit, sensitivity: np.ndarray) -> np.ndarray | None:
    """How (E°, free parameters) would move if the readings followed the model plus the term it
    leaves out (:attr:`ActivityModel.truncation`): δp = S δE, δE = −σ s k Δln γ± (first order);
    None for models without such a term."""
    if family.truncation is None:
        return None
    model_values = {name: fit.values[name] for name in family.parameter_names}
    delta = family.truncation(electrolyte, data.molality, data.constants, model_values)
    slope = fit.values.get(SLOPE, data.slope)
    return sensitivity @ (-data.sign * slope * data.nernst_V * delta)

def _lack_of_fit_arguments(held: _Held) -> tuple[Any, ...]:
    """The arguments of :func:`activolt.fit.lack_of_fit.judge_lack_of_fit` for the held fit."""
    data, fit = held.data, held.fit
    return (data.molality, fit.residual_V, data.weights, fit.chi2, fit.dof, 1 + len(fit.free),
            data.stated_uncertainty)


def _judge_fit(family: ActivityModel, data: SeriesData, fit: _Fit,
               judged: LackOfFit | None = None) -> LackOfFit:
    """The lack-of-fit rule (:func:`activolt.fit.lack_of_fit.judge_lack_of_fit`) applied to the
    final fit (``judged``: its verdict, when already worked out with a batch's others); a
    systematic misfit is refused with a FitError that says what to try."""
    if judged is None:
        judged = judge_lack_of_fit(data.molality, fit.residual_V, data.weights, fit.chi2,
                                   fit.dof, 1 + len(fit.free), data.stated_uncertainty)
    if judged.systematic:
        size = (f"reduced χ² = {judged.reduced_chi2:.3g} against the stated u(EMF)"
                if data.stated_uncertainty else
                f"residual s.d. {math.sqrt(fit.chi2 / fit.dof) * 1e3:.3g} mV")
        runs = judged.runs
        raise FitError(
            f"the {family.title} does not describe these readings: the residuals of the "
            f"solutions follow each other in {runs.runs} runs of one sign where "
            f"{runs.expected_runs:.1f} are expected (runs test p = {runs.p_value_fewer:.2g}; "
            f"serial correlation {judged.serial_correlation:.2f}, p = "
            f"{judged.serial_p_value:.2g}), {size}; its E° would carry a bias that no "
            "uncertainty here covers — choose another model (pitzer), a narrower molality "
            "range, or compare all models")
    return judged


def reduce_run(run: Run, model: str = "hueckel",
               fixed: Mapping[str, Any] | None = None,
               exclude: Sequence[Exclusion] = (), *,
               remind_model_choice: bool = True) -> Reduction:
    """Fit E° and the activity-coefficient model to a run; γ± with uncertainties at each point.

    Parameters
    ----------
    run : Run
        A validated run (:func:`activolt.data.runs.read_run`).
    model : str
        Model name (``limiting``, ``hueckel``, …; see :data:`activolt.activity.MODELS`).
    fixed : mapping or lmfit.Parameters, optional
        Parameters to hold at given values, e.g. ``{"a_angstrom": 4.3}``, or at a value with a
        standard uncertainty, ``{"a_angstrom": (4.3, 0.2)}``, which then enters u(E°) as a
        Type B component; or an ``lmfit.Parameters`` in which the parameters with
        ``vary=False`` are held (with their ``stderr`` as u when it is set).
    exclude : sequence of Exclusion, optional
        Readings to leave out, each with the user's reason; they stay in the points table,
        flagged, and the change of E° their exclusion makes is reported.
    remind_model_choice : bool
        Warn, when the run reaches beyond I = :data:`MODEL_CHOICE_REMINDER_IONIC_STRENGTH`,
        that u(E°) leaves out the choice of model (a model comparison turns it off, since it
        adds that component itself).

    Returns
    -------
    Reduction

    Raises
    ------
    InputError
        Too few usable readings, an unknown model or parameter, or temperatures too spread out.
    FitError
        The fit did not converge or its covariance cannot be estimated.
    """
    if exclude:
        complete = reduce_run(run, model, fixed, remind_model_choice=remind_model_choice)
        reduction = reduce_run(exclude_points(run, list(exclude)), model, fixed,
                               remind_model_choice=remind_model_choice)
        shift = reduction.standard_potential - complete.standard_potential
        u = complete.standard_potential.std_dev
        what = "; ".join(f"line {e.line}" if e.line is not None else
                         f"m = {e.molality_mol_kg:g} mol/kg" for e in exclude)
        message = (f"excluding {what} moved E° by {shift.nominal_value * 1e3:+.4f} mV "
                   f"({shift.nominal_value / u:+.2g} u of the fit with every reading)")
        return dataclasses.replace(reduction, warnings=(*reduction.warnings, message))
    try:
        family = get_model(model)
    except ValueError as error:
        raise InputError(str(error), column="model") from None
    start = _start(run, family, fixed)
    return _finish(start, _alone(_fit_and_hold(start)), remind_model_choice)


def reduce_runs(runs: Sequence[Run], model: str = "hueckel",
                fixed: Mapping[str, Any] | None = None, *,
                remind_model_choice: bool = True) -> list[Reduction | FitError | InputError]:
    """Reduce many runs, each as :func:`reduce_run` reduces it alone, the fits of all of them
    solved together: each round of fits (the first fit, the refit on refined weights, the fits
    that test holding a parameter) is one call of the batched engine for every run that asks
    for one (:func:`activolt.fit.engine.solve`), so that a run's result does not depend on
    the others.

    Parameters
    ----------
    runs : sequence of Run
        The runs (e.g. the series of :func:`activolt.data.runs.read_runs`).
    model, fixed, remind_model_choice
        As for :func:`reduce_run`, the same for every run.

    Returns
    -------
    list of Reduction, FitError or InputError
        Per run, in order: its reduction, or the error that refuses it (the error
        :func:`reduce_run` would raise).

    Raises
    ------
    InputError
        An unknown model.
    """
    try:
        family = get_model(model)
    except ValueError as error:
        raise InputError(str(error), column="model") from None
    try:
        split = _split_fixed(fixed)
    except InputError:
        split = None  # (each run's start refuses the held values, as alone)
    starts: list[_Start | FitError | InputError] = []
    for run, prepared in zip(runs, _prepared_of_many(runs), strict=True):
        try:
            starts.append(_start(run, family, fixed, split, prepared))
        except (FitError, InputError) as error:
            starts.append(error)
    helds = _together([_fit_and_hold(start) if isinstance(start, _Start) else None
                       for start in starts])
    # Steps 3 and 4 of each run (_finish), then the point diagnostics of all the judged fits
    # together, then step 5 of each.
    held_fits = [held for held in helds if isinstance(held, _Held)]
    verdicts = dict(zip(map(id, held_fits), judge_lack_of_fit_of_many(
        *zip(*map(_lack_of_fit_arguments, held_fits), strict=True)) if held_fits else [],
        strict=True))
    staged: list[tuple[_Start, _Judged, _Components] | FitError | InputError] = []
    judged_runs: dict[int, tuple[_Start, _Judged]] = {}
    for k, (start, held) in enumerate(zip(starts, helds, strict=True)):
        if not isinstance(start, _Start):
            staged.append(start)
        elif not isinstance(held, _Held):
            assert held is not None
            staged.append(held)
        else:
            try:
                judged_runs[k] = (start, _judge(held, start.family, verdicts[id(held)]))
            except (FitError, InputError) as error:
                staged.append(error)
            else:
                staged.append(FitError(""))  # (its place, staged below)
    # The sensitivity matrices of all the judged fits together, kept as each one's own (the
    # slot of its cached property, which a fit judged alone fills when first read).
    judged_fits = [judged for _, judged in judged_runs.values()]
    for judged, sensitivity in zip(judged_fits, sensitivity_matrices(
            [judged.fit.jacobian for judged in judged_fits],
            [judged.data.weights for judged in judged_fits]), strict=True):
        judged.__dict__["sensitivity"] = sensitivity
    for k, (start, judged) in judged_runs.items():
        try:
            staged[k] = (start, judged, _covariance_components(judged, start))
        except (FitError, InputError) as error:
            staged[k] = error
    judged_fits = {k: stage[1] for k, stage in enumerate(staged)
                   if isinstance(stage, tuple) and _diagnosable(stage[1].data, stage[1].fit)}
    diagnosed = dict(zip(judged_fits, point_diagnostics_of_many(
        [judged.fit.jacobian for judged in judged_fits.values()],
        [judged.data.weights for judged in judged_fits.values()],
        [judged.fit.residual_V for judged in judged_fits.values()],
        [not judged.data.stated_uncertainty for judged in judged_fits.values()]), strict=True))
    assembled = {k: stage for k, stage in enumerate(staged) if isinstance(stage, tuple)}
    points = dict(zip(assembled, _points_columns_of_many(
        [_gamma_inputs(*stage) for stage in assembled.values()]), strict=True))
    sums = dict(zip(assembled, _sums_of_many([stage[:2] for stage in assembled.values()]),
                    strict=True))
    results: list[Reduction | FitError | InputError] = []
    for k, stage in enumerate(staged):
        if not isinstance(stage, tuple):
            results.append(stage)
            continue
        start, judged, parts = stage
        try:
            results.append(_assemble(start, judged, parts, remind_model_choice,
                                     diagnosed.get(k), points[k], sums[k]))
        except (FitError, InputError) as error:
            results.append(error)
    # The straight-line cross-checks of all of them together, kept as each reduction's own
    # (the slot of its cached property, which a reduction alone fills when first read).
    fitted = [result for result in results
              if isinstance(result, Reduction) and result.data is not None]
    lines = _linear_extrapolations([(result.run, result.data, result.slope_factor)
                                    for result in fitted])
    for result, line in zip(fitted, lines, strict=True):
        result.__dict__["linear_extrapolation"] = line
    return results


def _finish(start: _Start, held: _Held, remind_model_choice: bool) -> Reduction:
    """Steps 3 to 5 after the held fit: judge, the covariance's components, the result."""
    judged = _judge(held, start.family)
    return _assemble(start, judged, _covariance_components(judged, start), remind_model_choice)


class _Start(NamedTuple):
    """The run checked and prepared, and where each parameter starts."""

    run: Run
    family: ActivityModel
    specs: tuple[Parameter, ...]
    data: SeriesData
    values: dict[str, float]
    reasons: dict[str, str]
    free: list[str]
    fixed: dict[str, float]
    fixed_u: dict[str, float]
    temperature_K: float
    warnings: list[str]
    #: How many distinct molalities (solutions) the usable readings have.
    solutions: int


def _start(run: Run, family: ActivityModel, fixed: Mapping[str, Any] | None,
           split: tuple[dict[str, float], dict[str, float]] | None = None,
           prepared: SeriesData | None = None) -> _Start:
    """Step 1: check the run and the held values, leave out readings beyond the model's range,
    prepare the readings, and start every parameter at its held or conventional value
    (``split``: :func:`_split_fixed` of ``fixed``, and ``prepared``: the run's readings
    prepared (:func:`_prepared_of_many`), when already worked out for a batch)."""
    fixed_values, fixed_u = _split_fixed(fixed) if split is None else split
    specs = family.parameters + ((SLOPE_PARAMETER,) if run.metadata.fit_slope_factor else ())
    for name in fixed_values:
        if name not in {p.name for p in specs}:
            raise InputError(f"model '{family.name}' has no parameter '{name}'; it has: "
                             f"{', '.join(p.name for p in specs) or 'none'}", column="fixed")
    read, (run, range_warning) = run, _within_range(run, family)
    data = prepared if prepared is not None and run is read else prepare_series(run)
    n = len(data.emf_V)
    if n < _MIN_POINTS:
        raise InputError(f"only {n} usable reading(s); a dilution series needs at least "
                         f"{_MIN_POINTS} to give E° with an uncertainty", file=str(run.path))
    solutions = _distinct(data.molality)
    if solutions < 2:
        raise InputError(f"all {n} usable readings are at one molality (m = "
                         f"{data.molality[0]:g} mol/kg): E° by extrapolation needs a dilution "
                         "series (at least 3 molalities); a single solution gives E° only with "
                         "a stated γ±, as in the calibration of electrodes", file=str(run.path))
    electrolyte = run.metadata.electrolyte
    temperature = run.arrays["temperature_K"][run.usable]
    spread = float(temperature.max() - temperature.min())
    if spread > MAX_TEMPERATURE_SPREAD_K:
        raise InputError(f"the readings span {spread:.2f} K; one E° needs one temperature "
                         "(within 2 K): split the run by temperature", file=str(run.path))
    warnings = list(run.warnings) + ([range_warning] if range_warning else [])
    if spread > 0.2:
        warnings.append(f"{UNCORRECTED_SPREAD} {spread:.2f} K; ln γ± uses each row's temperature, "
                        "but E° refers to the mean temperature and its own change with T over "
                        "that span is not corrected")
    values: dict[str, float] = {}
    reasons: dict[str, str] = {}
    for spec in specs:
        if spec.name in fixed_values:
            values[spec.name] = fixed_values[spec.name]
            if not spec.minimum <= values[spec.name] <= spec.maximum:
                raise InputError(f"{spec.name} = {values[spec.name]:g} {spec.unit} lies outside "
                                 f"its physical range [{spec.minimum:g}, {spec.maximum:g}]",
                                 column="fixed")
            reasons[spec.name] = ("held at the value given by the user" if spec.name not in
                                  fixed_u else "held at the value given by the user, with "
                                  f"u = {fixed_u[spec.name]:g} {spec.unit} (Type B)")
        else:
            values[spec.name] = spec.conventional(electrolyte, data.constants)
            if spec.applies_to is not None and not spec.applies_to(electrolyte):
                reasons[spec.name] = (f"not used for {electrolyte.charge_type} electrolytes "
                                      f"({spec.description})")
    free = [p.name for p in specs if p.name not in reasons]
    return _Start(run=run, family=family, specs=specs, data=data, values=values,
                  reasons=reasons, free=free, fixed=fixed_values, fixed_u=fixed_u,
                  temperature_K=mean_temperature(temperature), warnings=warnings,
                  solutions=solutions)


def _prepared_of_many(runs: Sequence[Run]) -> list[SeriesData | None]:
    """:func:`~activolt.fit.problem.prepare_series` of the runs that use every row and need no
    gas correction, those of one length, electrolyte, number of electrons and kind of u(EMF)
    in the same array operations (each run's readings a row of them, its numbers as alone);
    None for the others, which :func:`_start` prepares alone."""
    found: list[SeriesData | None] = [None] * len(runs)
    groups: dict[tuple[Any, ...], list[int]] = {}
    for index, run in enumerate(runs):
        meta = run.metadata
        if not meta.gas_coefficients and meta.electrons >= 1 and run.usable.all():
            groups.setdefault((run.usable.size, meta.electrolyte, meta.electrons,
                               run.emf_uncertainty_given), []).append(index)
    for (size, electrolyte, electrons, stated), members in groups.items():
        if len(members) == 1:
            continue

        def rows(name: str, members: list[int] = members) -> np.ndarray:
            return np.array([runs[i].arrays[name] for i in members])

        molality, temperature = rows("molality_mol_kg"), rows("temperature_K")
        emf, u_molality = rows("emf_V"), rows("u_molality_mol_kg")
        u = rows("u_emf_V") if stated else np.ones((len(members), size))
        weights = 1.0 / u**2
        nernst = nernst_factor(electrolyte, electrons, temperature)
        ln_mean_molality = np.log(electrolyte.mean_molality(molality))
        constants: dict[bytes, DebyeHueckelConstants] = {}  # (by the temperatures' bytes)
        for k, i in enumerate(members):
            meta = runs[i].metadata
            at = temperature[k].tobytes()
            if at not in constants:
                constants[at] = debye_hueckel_constants(temperature[k])
            found[i] = SeriesData(
                molality=molality[k], emf_V=emf[k], weights=weights[k], nernst_V=nernst[k],
                ln_mean_molality=ln_mean_molality[k],
                constants=constants[at], stated_uncertainty=stated,
                sign=meta.electrolyte_sign, slope=meta.slope_factor,
                u_emf_V=u[k] if stated else None, u_molality_mol_kg=u_molality[k])
    return found


def _distinct(values: np.ndarray) -> int:
    """How many distinct values a 1-d array holds, NaNs counted as one (as
    ``numpy.unique(values).size``)."""
    return len({value if value == value else math.nan for value in values.tolist()})


class _Held(NamedTuple):
    """The fit after holding what the data cannot determine."""

    data: SeriesData
    fit: _Fit
    values: dict[str, float]
    reasons: dict[str, str]
    notes: tuple[str, ...]


def _fit_and_hold(start: _Start
                  ) -> Generator[list[_FitRequest], list[_Fit | FitError], _Held]:
    """Step 2: fit, refine the readings once (vapour lowering, effective variance), and hold
    parameters until every free one is determined and at least one degree of freedom is left;
    held parameters take their conventional values. The fits are asked for (yielded), so that
    a batch solves those of many series together (:func:`_together`)."""
    family, run = start.family, start.run
    electrolyte = run.metadata.electrolyte
    data, values, reasons, free = start.data, dict(start.values), dict(start.reasons), \
        list(start.free)
    n = len(data.emf_V)
    solutions = start.solutions
    first_fit: _Fit | None = None
    while True:
        while free and (n - 1 - len(free) < 1 or solutions - 1 - len(free) < 0):
            name = next((f for f in free if not parameter_spec(family, f).linear), free[-1])
            free.remove(name)
            reasons[name] = (f"too few readings to fit it ({n})" if n - 1 - len(free) < 0
                             else f"too few distinct molalities to fit it ({solutions})")
        tested: dict[str, _Fit | FitError] | None = None
        if first_fit is None:
            fit, tested = yield from _first_fit(run, family, data, values, free)
        else:
            fit = yield from _fitted(family, electrolyte, data, values, free)
        if first_fit is None:
            refined = _with_effective_variance(
                family, electrolyte, _with_vapour_lowering(run, family, data, fit), fit)
            if refined is not data:  # refit from the first optimum: a few steps away
                data = refined
                fit = yield from _fitted(family, electrolyte, data, fit.values, free)
        first_fit = first_fit or fit
        hold = _hard_failure(family, fit)
        if hold is None:
            hold = yield from _not_supported(family, electrolyte, data, fit, tested)
        if hold is None:
            break
        name, why = hold
        free.remove(name)
        values = {**fit.values, name: parameter_spec(family, name).conventional(electrolyte,
                                                                       data.constants)}
        reasons[name] = why
    notes = []
    for name, why in reasons.items():
        if name in start.fixed:
            continue
        spec = parameter_spec(family, name)
        notes.append(f"{spec.symbol} held at {values[name]:.4g} {spec.unit} "
                     f"({spec.convention}): {why}")
    if first_fit is not fit:
        shift_mV = (fit.e0 - first_fit.e0) * 1e3
        notes.append(f"holding {', '.join(n for n in reasons if n not in start.fixed)} moved "
                     f"E° by {shift_mV:+.3f} mV from the fit with every parameter free")
    return _Held(data=data, fit=fit, values=values, reasons=reasons, notes=tuple(notes))


@dataclass(frozen=True)
class _Judged:
    """The held fit with its lack of fit judged (and the covariance scaled for it)."""

    held: _Held
    data: SeriesData
    fit: _Fit
    birge: float
    birge_dof: int
    chi2_p: float
    runs_p: float
    warning: str | None

    @functools.cached_property
    def sensitivity(self) -> np.ndarray:
        """S = (JᵀWJ)⁻¹JᵀW of the final fit (with the final weights), P × N."""
        return sensitivity_matrix(self.fit.jacobian, self.data.weights)


def _judge(held: _Held, family: ActivityModel, verdict: LackOfFit | None = None) -> _Judged:
    """Step 3: the lack-of-fit rule (:func:`_judge_fit`; ``verdict``: its verdict when already
    worked out): refuse a systematic misfit, scale the readings' variances by the Birge ratio
    where they scatter more than stated."""
    data, fit = held.data, held.fit
    judged = _judge_fit(family, data, fit, verdict)
    birge, birge_dof = judged.birge_ratio, judged.birge_dof
    chi2_p, runs_p = judged.chi2_p_value, judged.runs.p_value_fewer
    warning = None
    if birge > 1.0:
        data = dataclasses.replace(
            data, weights=data.weights / birge**2,
            u_emf_V=None if data.u_emf_V is None else data.u_emf_V * birge)
        fit = fit.with_covariance(fit.covariance * birge**2)
        warning = (f"the readings or solutions scatter about the {family.title} more than "
                   + ("their stated u(EMF) allow" if data.stated_uncertainty else
                      "replicate readings of one solution do")
                   + f": u(E°) and u(γ±) are scaled by the Birge ratio {birge:.3g}")
    return _Judged(held=held, data=data, fit=fit, birge=birge, birge_dof=birge_dof,
                   chi2_p=chi2_p, runs_p=runs_p, warning=warning)


class _Components(NamedTuple):
    """What the covariance of (E°, free parameters) is made of, and the total."""

    covariance: np.ndarray
    type_b: np.ndarray | None
    truncation: np.ndarray | None
    common: list[tuple[str, float, np.ndarray, np.ndarray]]
    uncertain_names: tuple[str, ...]
    uncertain_covariance: np.ndarray
    notes: tuple[str, ...]


def _covariance_components(judged: _Judged, start: _Start) -> _Components:
    """Step 4: the fit's covariance plus the Type B parts of held values, the terms a model
    leaves out, and the inputs common to every reading (GUM 5.1.2, linear propagation)."""
    family, run = start.family, start.run
    electrolyte = run.metadata.electrolyte
    data, fit = judged.data, judged.fit
    covariance = fit.covariance
    notes = []
    effects = _held_parameter_effects(
        family, electrolyte, data, fit, judged.sensitivity,
        [n for n in judged.held.reasons if n not in start.fixed or n in start.fixed_u],
        start.fixed_u)
    type_b = None
    uncertain_names = (E0, *fit.free)
    if effects is not None:
        held_names, moves, variances = effects
        type_b = (moves * variances) @ moves.T
        covariance = covariance + type_b
        uncertain_names = (*uncertain_names, *held_names)
        notes.append("u(E°) includes a component of "
                     f"{math.sqrt(type_b[0, 0]) * 1e3:.3g} mV from the uncertainty of the held "
                     "conventional value(s) (GUM Type B)")
    truncation = _truncation_effect(family, electrolyte, data, fit, judged.sensitivity)
    if truncation is not None:
        covariance = covariance + np.outer(truncation, truncation)
        notes.append(f"u(E°) includes {abs(truncation[0]) * 1e3:.3g} mV for the terms the "
                     f"{family.title} leaves out (extended Debye–Hückel with Bå = 1.5; GUM "
                     "Type B)")
    common = _common_input_effects(run, family, electrolyte, data, fit, start.data,
                                   judged.sensitivity)
    for _, u, shift, _ in common:
        covariance = covariance + np.outer(shift, shift) * u**2
    if effects is None:
        uncertain_covariance = covariance
    else:
        cross = moves * variances
        uncertain_covariance = np.block([[covariance, cross], [cross.T, np.diag(variances)]])
    return _Components(covariance=covariance, type_b=type_b, truncation=truncation,
                       common=common, uncertain_names=uncertain_names,
                       uncertain_covariance=uncertain_covariance, notes=tuple(notes))


def _gamma_inputs(start: _Start, judged: _Judged, parts: _Components) -> _GammaInputs:
    """What the points columns of the reduction are worked out from."""
    return _GammaInputs(start.run, start.family, judged.data, judged.fit, judged.sensitivity,
                        parts.type_b, parts.uncertain_names, parts.uncertain_covariance,
                        parts.common, parts.truncation)


def _assemble(start: _Start, judged: _Judged, parts: _Components,
              remind_model_choice: bool, diagnosed: PointDiagnostics | None = None,
              points: tuple[dict[str, np.ndarray], GammaPropagation] | None = None,
              sums: _Sums | None = None) -> Reduction:
    """Step 5: the points table with γ± and its budget, diagnostics (``diagnosed``: the point
    diagnostics of the judged fit, ``points``: its points columns
    (:func:`_points_columns_of_many`), and ``sums``: its sums over the readings
    (:func:`_sums_of_many`), when already worked out), and the result."""
    run, family = start.run, start.family
    data = judged.data
    fit = judged.fit.with_covariance(parts.covariance)
    if sums is None:
        (sums,) = _sums_of_many([(start, judged)])
    warnings = [*start.warnings, *([judged.warning] if judged.warning else [])]
    budget = _budget(run, data, fit, sums, parts.type_b, parts.common, judged.birge,
                     parts.truncation)
    stats = _statistics(fit, data, judged.birge, judged.birge_dof, judged.chi2_p,
                        judged.runs_p, sums.residual_sd_V)
    if remind_model_choice and sums.max_ionic_strength > MODEL_CHOICE_REMINDER_IONIC_STRENGTH:
        warnings.append(MODEL_CHOICE_REMINDER)
    columns, gamma_propagation = (
        _points_columns_of_many([_gamma_inputs(start, judged, parts)])[0] if points is None
        else points)
    diagnostics, stand_out = _diagnose(run, data, fit, diagnosed)
    for column in diagnostics.values():  # (the points columns are read-only already)
        column.flags.writeable = False
    point_columns = {**columns, **diagnostics}
    warnings += stand_out
    reasons = judged.held.reasons
    variances = dict(zip(fit.free, fit.covariance.diagonal()[1:].tolist(), strict=True))
    parameters = tuple(
        FittedParameter(
            name=p.name, symbol=p.symbol, unit=p.unit, value=float(fit.values[p.name]),
            uncertainty=(math.sqrt(variances[p.name]) if p.name in variances else math.nan),
            fixed=p.name not in variances, reason=reasons.get(p.name),
        )
        for p in start.specs
    )
    e0_value = ufloat(fit.e0, math.sqrt(fit.covariance[0, 0]))
    corrections, other_basis = _corrections_summary(run, data, start.temperature_K)
    return Reduction(
        run=run, model=family, temperature_K=start.temperature_K,
        standard_potential=e0_value, parameters=parameters,
        free_names=(E0, *fit.free), covariance=fit.covariance, statistics=stats,
        point_columns=point_columns, gamma_propagation=gamma_propagation,
        warnings=tuple(warnings), notes=(*judged.held.notes, *parts.notes),
        corrections=corrections, other_basis=other_basis,
        catalogue=_catalogue_value(run, start.temperature_K),
        uncertain_names=parts.uncertain_names,
        uncertain_covariance=parts.uncertain_covariance, budget=budget, data=data,
        shared_inputs=tuple((name, u, float(moves[0])) for name, u, moves, _ in parts.common
                            if name in SHARED_INPUTS),
    )


#: Steps for the sensitivity of the reduction to inputs common to every reading.
_TEMPERATURE_STEP_K = 0.01
_PRESSURE_STEP_PA = 10.0
_RELATIVE_STEP = 1e-6
_EMF_STEP_V = 1e-6
#: Inputs common to every reading: (factor to the printed unit, unit) of their u.
_COMMON_UNITS = {"temperature": (1.0, "K"), "barometric pressure": (1e-3, "kPa"),
                 "stock molality": (100.0, "%"), "electrode offset": (1e3, "mV")}
#: Their ``u_gamma_pm_<name>`` columns.
_COMMON_COLUMNS = {"temperature": "temperature", "barometric pressure": "pressure",
                   "stock molality": "stock_molality", "electrode offset": "electrode_offset"}
#: Common inputs that a temperature study takes as shared by every isotherm stating them.
SHARED_INPUTS = ("stock molality", "electrode offset")


def _common_input_effects(run: Run, family: ActivityModel, electrolyte: Electrolyte,
                          data: SeriesData, fit: _Fit, plain: SeriesData,
                          sensitivity: np.ndarray
                          ) -> list[tuple[str, float, np.ndarray, np.ndarray]]:
    """For each input shared by all readings with a stated uncertainty (the run temperature, the
    barometric pressure): (name, u, ∂(E°, free parameters)/∂input, ∂ ln γ±/∂input).

    A shift δx of the input changes every residual by δr (through the gas correction, the Nernst
    factor and the Debye–Hückel constants); to first order the fit absorbs it as δp = S δr, with
    S the fit's sensitivity matrix (GUM 5.1.3: sensitivity coefficients by finite difference,
    then linear propagation — the same as a refit with the input shifted, without refitting).
    The temperature is stepped downward at the boiling end and upward at the ice point, so
    that the step stays within liquid water. ``plain``: the run's readings prepared as read
    (before any refinement), against which the shifted ones are compared."""
    meta = run.metadata
    if not (meta.u_temperature_K > 0 or meta.u_stock_molality_relative > 0
            or meta.u_electrode_offset_V > 0
            or (meta.u_pressure_Pa > 0 and data.correction_V is not None)):
        return []
    inputs = series_inputs(run)
    shifts = []
    if meta.u_temperature_K > 0:
        hot = float(np.nanmax(run.arrays["temperature_K"])) + _TEMPERATURE_STEP_K > 373.15
        step = -_TEMPERATURE_STEP_K if hot else _TEMPERATURE_STEP_K
        shifts.append(("temperature", meta.u_temperature_K, step, dataclasses.replace(
            inputs, temperature_K=inputs.temperature_K + step), meta))
    if meta.u_stock_molality_relative > 0:
        shifts.append(("stock molality", meta.u_stock_molality_relative, _RELATIVE_STEP,
                       dataclasses.replace(inputs,
                                           molality=inputs.molality * (1.0 + _RELATIVE_STEP)),
                       meta))
    if meta.u_electrode_offset_V > 0:
        shifts.append(("electrode offset", meta.u_electrode_offset_V, _EMF_STEP_V,
                       dataclasses.replace(inputs, emf_V=inputs.emf_V + _EMF_STEP_V), meta))
    if meta.u_pressure_Pa > 0 and data.correction_V is not None:
        barometric = (None if meta.barometric_pressure_Pa is None
                      else meta.barometric_pressure_Pa + _PRESSURE_STEP_PA)
        shifts.append(("barometric pressure", meta.u_pressure_Pa, _PRESSURE_STEP_PA,
                       dataclasses.replace(inputs, pressure_Pa=inputs.pressure_Pa
                                           + _PRESSURE_STEP_PA),
                       dataclasses.replace(meta, barometric_pressure_Pa=barometric)))
    if not shifts:
        return []
    plain_residual = plain.emf_V - predict_emf(family, electrolyte, plain, fit.e0, fit.values)
    slope = fit.values.get(SLOPE, data.slope)
    ln_gamma = (fit.e0 - data.emf_V) * data.sign / (slope * data.nernst_V) - data.ln_mean_molality
    effects = []
    for name, u, step, shifted_inputs, metadata in shifts:
        shifted = prepare_inputs(run, shifted_inputs, metadata)
        residual = shifted.emf_V - predict_emf(family, electrolyte, shifted, fit.e0, fit.values)
        moves = sensitivity @ (residual - plain_residual) / step
        e0 = fit.e0 + moves[0] * step
        slope2 = slope + (moves[1 + fit.free.index(SLOPE)] * step if SLOPE in fit.free else 0.0)
        emf = data.emf_V + (shifted.emf_V - plain.emf_V)
        ln_gamma2 = ((e0 - emf) * data.sign / (slope2 * shifted.nernst_V)
                     - shifted.ln_mean_molality)
        effects.append((name, u, moves, (ln_gamma2 - ln_gamma) / step))
    return effects


class _Sums(NamedTuple):
    """Sums over the readings of a judged fit that its budget and statistics report."""

    #: u(E°) from the readings: stated u(EMF) through the fit, or the scatter about it
    readings: float
    #: u(E°) from stated u(m) as effective reading variance; None when no u(m) enters
    molalities: float | None
    #: √(Σ r² / ν) [V]
    residual_sd_V: float
    #: the largest ionic strength of the readings [mol kg⁻¹]
    max_ionic_strength: float


def _sums_of_many(items: Sequence[tuple[_Start, _Judged]]) -> list[_Sums]:
    """The :class:`_Sums` of each (start, judged fit), those of one electrolyte, number of
    readings and kind of weights worked out together (each a sum within one row, so each
    series' numbers are its own alone)."""
    groups: dict[tuple[Any, ...], list[int]] = {}
    for index, (start, judged) in enumerate(items):
        groups.setdefault((start.run.metadata.electrolyte, judged.data.emf_V.size,
                           judged.data.stated_uncertainty), []).append(index)
    found: dict[int, _Sums] = {}
    for (electrolyte, _, stated), members in groups.items():
        datas = [items[i][1].data for i in members]
        fits = [items[i][1].fit for i in members]
        s_squared = np.array([items[i][1].sensitivity[0] for i in members]) ** 2
        molalities: list[float | None] = [None] * len(members)
        if stated:
            u_squared = np.array([d.u_emf_V for d in datas]) ** 2
            readings = np.sqrt(np.sum(s_squared * u_squared, axis=1))
            molality_var = np.maximum(1.0 / np.array([d.weights for d in datas]) - u_squared,
                                      0.0)
            some = np.any(molality_var > 0, axis=1)
            if some.any():
                values = np.sqrt(np.sum(s_squared * molality_var, axis=1)).tolist()
                molalities = [v if k else None for v, k in zip(values, some.tolist(),
                                                                 strict=True)]
        else:
            readings = np.sqrt(np.sum(s_squared, axis=1)
                               * np.array([f.chi2 / f.dof for f in fits]))
        residual_sd = np.sqrt(np.sum(np.array([f.residual_V for f in fits]) ** 2, axis=1)
                              / np.array([f.dof for f in fits]))
        ionic = np.max(electrolyte.ionic_strength(np.array([d.molality for d in datas])),
                       axis=1)
        found.update(zip(members, map(_Sums._make, zip(
            readings.tolist(), molalities, residual_sd.tolist(), ionic.tolist(), strict=True)),
            strict=True))
    return [found[index] for index in range(len(items))]


def _budget(run: Run, data: SeriesData, fit: _Fit, sums: _Sums,
            type_b: np.ndarray | None, common: list[tuple[str, float, np.ndarray, np.ndarray]],
            birge: float = 1.0, truncation: np.ndarray | None = None
            ) -> tuple[BudgetLine, ...]:
    """Contributions to u(E°), each as the standard uncertainty it alone gives E° (``sums``:
    those of the readings, :func:`_sums_of_many`)."""
    lines = []
    if data.stated_uncertainty:
        lines.append(BudgetLine("readings", sums.readings, "stated u(EMF) of each reading, "
                                "through the fit (linear propagation)" + (
                                    f", scaled by the Birge ratio {birge:.3g} for lack of fit"
                                    if birge > 1.0 else "")))
        if sums.molalities is not None:
            lines.append(BudgetLine("molalities", sums.molalities,
                                    "stated u(m) as effective reading variance (∂E/∂m)² u²(m)"))
    else:
        lines.append(BudgetLine("readings", sums.readings,
                                "scatter of the readings about the fit (Type A, covariance "
                                f"scaled by the reduced χ², {fit.dof} degrees of freedom)"))
        if any(map((0.0).__lt__, run.arrays["u_molality_mol_kg"].tolist())):
            lines.append(BudgetLine("molalities", 0.0, "with no stated u(EMF) the scatter of "
                                    "the readings already carries u(m)"))
    if type_b is not None:
        lines.append(BudgetLine("held conventional values", float(np.sqrt(type_b[0, 0])),
                                "uncertainty of the conventions at which undetermined "
                                "parameters were held (Type B)"))
    if truncation is not None:
        lines.append(BudgetLine("terms the model leaves out", float(abs(truncation[0])),
                                "E° shift the next (extended Debye–Hückel, Bå = 1.5) term "
                                "would cause, taken as a standard uncertainty (Type B)"))
    for name, u, moves, _ in common:
        lines.append(BudgetLine(name, float(abs(moves[0]) * u),
                                f"stated u = {u * _COMMON_UNITS[name][0]:g} "
                                f"{_COMMON_UNITS[name][1]}, common to all readings"
                                + ("" if name in ("temperature", "barometric pressure") else
                                   " (and to every run that states it, in a study)")
                                + "; sensitivity by one linear step"))
    meta = run.metadata
    if meta.u_temperature_K == 0:
        lines.append(BudgetLine("temperature", 0.0, "no u(T) stated (metadata "
                                "u_temperature_K)"))
    if data.correction_V is not None and meta.u_pressure_Pa == 0:
        lines.append(BudgetLine("barometric pressure", 0.0, "no u(p) stated (metadata "
                                "u_pressure_kPa)"))
    return tuple(lines)


def _diagnose(run: Run, data: SeriesData, fit: _Fit, found: PointDiagnostics | None = None
              ) -> tuple[dict[str, np.ndarray], list[str]]:
    """Columns over every row of the run: leverage, studentized residuals and Cook's distance of
    the used readings, and a ``diagnostic`` reason where one stands out; warnings naming them.
    ``found``: the fit's point diagnostics when already worked out (with a batch's others)."""
    used = run.usable
    scaled = not data.stated_uncertainty
    if found is None and not _diagnosable(data, fit):
        nan = np.full(used.size, np.nan)
        return {"leverage": nan, "studentized_residual": nan, "cooks_distance": nan,
                "diagnostic": np.full(used.size, None, dtype=object)}, [
            "too few readings for leave-one-out diagnostics (they need N − P − 1 ≥ 1 when "
            "the scatter is estimated from the fit)"]
    if found is None:
        found = point_diagnostics(fit.jacobian, data.weights, fit.residual_V, scaled)
    columns = {"leverage": found.leverage, "studentized_residual": found.studentized_residual,
               "cooks_distance": found.cooks_distance}
    full: dict[str, np.ndarray] = {}
    every_row = len(found.flags) == used.size  # (every row used: the columns as they are)
    for name, values in columns.items():
        if every_row:
            full[name] = np.asarray(values, dtype=float)  # (its own: made for this fit)
        else:
            full[name] = np.full(used.size, np.nan)
            full[name][used] = values
    diagnostic = np.full(used.size, None, dtype=object)
    full["diagnostic"] = diagnostic
    if all(flag is None for flag in found.flags):
        return full, []
    diagnostic[used] = np.array(found.flags, dtype=object)
    molality, lines = run.arrays["molality_mol_kg"], run.arrays["line"]
    warnings = [f"reading at m = {molality[i]:g} mol/kg (line {int(lines[i])}) stands out: "
                f"{diagnostic[i]}; it is kept in the fit — check it, and exclude it with a "
                "reason if it is faulty" for i in np.flatnonzero(diagnostic != None)]  # noqa: E711
    return full, warnings


def _diagnosable(data: SeriesData, fit: _Fit) -> bool:
    """Whether the fit leaves the leave-one-out diagnostics a degree of freedom (N − P − 1 ≥ 1
    when the scatter is estimated from the fit)."""
    n, p = fit.jacobian.shape
    return data.stated_uncertainty or n - p - 1 >= 1


def _catalogue_value(run: Run, temperature_K: float) -> CatalogueValue | None:
    """The catalogue's E° of the run's cell (when both couples are known), on the run's basis."""
    meta = run.metadata
    if meta.cell is None:
        return None

    found = _catalogue_entry(meta.cell, float(temperature_K))
    if found is None:
        return None
    value, uncertainty, basis_Pa, couples = found
    if meta.gas_coefficients:
        value += float(standard_pressure_basis_shift(
            temperature_K, meta.electrons, meta.gas_coefficients, basis_Pa,
            meta.standard_pressure_Pa))
    return CatalogueValue(value, uncertainty, couples)


@functools.lru_cache(maxsize=256)
def _catalogue_entry(cell: str, temperature_K: float
                     ) -> tuple[float, float, float, str] | None:
    """(E° [V], u [V], its pressure basis [Pa], the couples) of a cell from the catalogue, or
    None; kept once worked out, since a batch reduces many runs of one cell."""
    summary = cell_summary(cell, temperature_K)
    e0 = summary.get("standard_potential_V")
    if e0 is None or e0.get("value") is None:
        return None
    couples = f"{summary['left']['couple']} and {summary['right']['couple']}"
    return (float(e0["value"]), float(e0["uncertainty"]), summary["standard_pressure_kPa"] * 1e3,
            couples)


def _corrections_summary(run: Run, data: SeriesData, temperature_K: float
                         ) -> tuple[tuple[str, ...], tuple[float, float] | None]:
    """What was corrected, with sizes in mV, and the shift of E° to the other pressure basis."""
    meta = run.metadata
    lines: list[str] = []
    basis_kPa = meta.standard_pressure_Pa / 1e3
    if not meta.gas_coefficients:
        return (), None
    gases = ", ".join(meta.gas_coefficients)
    if data.correction_V is None:
        lines.append(f"no barometric pressure given: the readings are taken as already referred "
                     f"to {gases} at p° = {basis_kPa:g} kPa")
    else:
        low, high = data.correction_V.min() * 1e3, data.correction_V.max() * 1e3
        lines.append(
            f"{gases} partial pressure = barometric − water vapour (IAPWS)"
            + (f" + bubbler depth {meta.bubbler_depth_m * 100:g} cm" if meta.bubbler_depth_m
               else "")
            + f"; readings corrected to p° = {basis_kPa:g} kPa by {low:+.3f} to {high:+.3f} mV "
            + ("(water vapour lowered to a_w p_w with a_w from the fitted model)"
               if meta.solute_vapour_lowering else
               "(vapour-pressure lowering by the solute not applied; set "
               "solute_vapour_lowering = true to apply it)"))

    other = (ATMOSPHERE_PA if math.isclose(meta.standard_pressure_Pa, STANDARD_PRESSURE_PA)
             else STANDARD_PRESSURE_PA)
    shift = float(standard_pressure_basis_shift(temperature_K, meta.electrons,
                                                meta.gas_coefficients,
                                                meta.standard_pressure_Pa, other))
    lines.append(f"on the {other / 1e3:g} kPa basis E° is {shift * 1e3:+.3f} mV different")
    return tuple(lines), (other, shift)


def _statistics(fit: _Fit, data: SeriesData, birge: float, birge_dof: int, chi2_p: float,
                runs_p: float, residual_sd_V: float) -> FitStatistics:
    n = len(data.emf_V)
    scaled = not data.stated_uncertainty or birge > 1.0
    return FitStatistics(
        n_points=n, n_free=1 + len(fit.free), dof=fit.dof, chi2=fit.chi2,
        reduced_chi2=fit.chi2 / fit.dof, aic=fit.aic, bic=fit.bic,
        residual_sd_V=residual_sd_V,
        covariance_scaled=scaled,
        coverage_factor=student_t_factor(min(fit.dof, birge_dof) if scaled else 0),
        stated_uncertainty=data.stated_uncertainty, birge_ratio=birge, chi2_p_value=chi2_p,
        runs_p_value=runs_p,
    )


def _held_parameter_effects(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData,
                            fit: _Fit, sensitivity: np.ndarray, held: list[str],
                            given_u: Mapping[str, float]
                            ) -> tuple[list[str], np.ndarray, np.ndarray] | None:
    """Parameters held with an uncertainty — a convention's stated one, or one the user gave
    with the value (``given_u``): their names, how (E°, free parameters) move with each,
    M = −S ∂E/∂θ_h (P × H), and their variances u²(θ_h) (GUM 5.1.2, to first order); None
    when there are none."""
    names, columns, variances = [], [], []
    for name in held:
        spec = parameter_spec(model, name)
        if name in given_u:
            u = given_u[name]
        elif spec.conventional_uncertainty is not None:
            u = spec.conventional_uncertainty(electrolyte, data.constants)
        else:
            continue
        d_emf = sensitivity_coefficients(
            lambda v: predict_emf(model, electrolyte, data, fit.e0, v), fit.values, [name])
        names.append(name)
        columns.append(-sensitivity @ d_emf[:, 0])
        variances.append(u**2)
    if not names:
        return None
    return names, np.column_stack(columns), np.asarray(variances)


class _GammaInputs(NamedTuple):
    """What the points columns of one reduction are worked out from."""

    run: Run
    model: ActivityModel
    data: SeriesData
    fit: _Fit
    sensitivity: np.ndarray
    type_b: np.ndarray | None
    uncertain_names: tuple[str, ...]
    uncertain_covariance: np.ndarray
    common: list[tuple[str, float, np.ndarray, np.ndarray]]
    truncation: np.ndarray | None = None


def _points_columns_of_many(items: Sequence[_GammaInputs]
                            ) -> list[tuple[dict[str, np.ndarray], GammaPropagation]]:
    """Per reduction, the columns over all rows of its run — fitted EMF, residual and γ±
    (measured and model), and the budget of u(γ±): ``u_gamma_pm_<input>`` columns, each the
    part from one input alone — and what the covariance of ln γ± is made of. Reductions
    alike (one model, electrolyte, number of readings and set of free, held and common
    inputs) are worked out in the same array operations over a leading axis of series, each
    series' numbers as alone (every step is elementwise, or a product or sum within one
    series)."""
    groups: dict[tuple[Any, ...], list[int]] = {}
    for index, item in enumerate(items):
        data, fit = item.data, item.fit
        groups.setdefault((
            id(item.model), item.run.metadata.electrolyte, data.sign, data.emf_V.size,
            item.run.usable.size, tuple(fit.free), item.uncertain_names,
            data.stated_uncertainty, item.type_b is None, item.truncation is None,
            data.correction_V is None, data.gas_pressure_Pa is None,
            tuple(name for name, *_ in item.common)), []).append(index)
    found: dict[int, tuple[dict[str, np.ndarray], GammaPropagation]] = {}
    for members in groups.values():
        found.update(zip(members, _points_columns_alike([items[i] for i in members]),
                         strict=True))
    return [found[index] for index in range(len(items))]


def _points_columns_alike(items: Sequence[_GammaInputs]
                          ) -> list[tuple[dict[str, np.ndarray], GammaPropagation]]:
    """:func:`_points_columns_of_many` of alike reductions."""
    first = items[0]
    model, electrolyte = first.model, first.run.metadata.electrolyte
    free, uncertain_names = first.fit.free, first.uncertain_names
    stated = first.data.stated_uncertainty
    datas = [item.data for item in items]
    fits = [item.fit for item in items]
    n = datas[0].emf_V.size

    def column(values: Sequence[float]) -> np.ndarray:
        """One number per series as a column, shape (S, 1)."""
        return np.array(values, dtype=float)[:, None]

    emf = np.array([d.emf_V for d in datas])
    nernst = np.array([d.nernst_V for d in datas])
    sensitivity = np.array([item.sensitivity for item in items])
    reading_var = (1.0 / np.array([d.weights for d in datas]) if stated
                   else np.repeat(column([f.chi2 / f.dof for f in fits]), n, axis=1))

    # ln γ± = σ (E° − E)/(s k) − ln m±, from each reading.
    slope = column([f.values.get(SLOPE, d.slope) for f, d in zip(fits, datas, strict=True)])
    e0 = column([f.e0 for f in fits])
    scale = first.data.sign / (slope * nernst)
    ln_gamma = (e0 - emf) * scale - np.array([d.ln_mean_molality for d in datas])
    parameter_gradient = np.zeros((len(items), n, 1 + len(free)))
    parameter_gradient[:, :, 0] = scale
    if SLOPE in free:
        parameter_gradient[:, :, 1 + free.index(SLOPE)] = -(e0 - emf) * scale / slope
    type_b = None if first.type_b is None else np.array([item.type_b for item in items])
    # u(m) enters through the effective reading variance 1/w (see _with_effective_variance):
    # γ± at the stated molality errs by σ(δE° − ε)/(s k), ε = δE − (∂E/∂m) δm.
    def part(variance: np.ndarray, with_type_b: bool = False) -> np.ndarray:
        return ln_gamma_variance(parameter_gradient, -scale, sensitivity, variance,
                                 type_b_covariance=type_b if with_type_b else None)

    var_ln = part(reading_var, with_type_b=True)
    budget: dict[str, np.ndarray] = {}
    molality_rows = np.zeros(len(items), dtype=bool)  # the series with a "molalities" part
    if stated:
        u_emf_squared = np.array([d.u_emf_V for d in datas]) ** 2
        budget["readings"] = part(u_emf_squared)
        molality_var = np.maximum(reading_var - u_emf_squared, 0.0)
        molality_rows = np.any(molality_var > 0, axis=1)
        if molality_rows.any():
            budget["molalities"] = part(molality_var)
    else:
        budget["readings"] = part(reading_var)
    if type_b is not None:
        budget["conventions"] = np.einsum("...ij,...jk,...ik->...i", parameter_gradient, type_b,
                                          parameter_gradient)
    left_out = None
    if first.truncation is not None:
        truncation = np.array([item.truncation for item in items])
        left_out = np.matmul(parameter_gradient, truncation[:, :, None])[:, :, 0]
        budget["left-out terms"] = left_out**2
        var_ln = var_ln + budget["left-out terms"]
    common_parts = []
    for position, (name, *_) in enumerate(first.common):
        d_u = (np.array([item.common[position][3] for item in items])
               * column([item.common[position][1] for item in items]))
        var_ln = var_ln + d_u**2
        budget[_COMMON_COLUMNS[name]] = d_u**2
        common_parts.append(d_u)
    gamma = np.exp(ln_gamma)
    u_gamma = gamma * np.sqrt(var_ln)

    # Model γ± and its uncertainty from the parameter covariance.
    molality = np.array([d.molality for d in datas])
    constants = DebyeHueckelConstants(*(np.array([getattr(d.constants, name) for d in datas])
                                        for name in ("temperature", "aphi", "b")))
    model_values = {name: column([f.values[name] for f in fits])
                    for name in model.parameter_names}
    ln_gamma_model = np.broadcast_to(
        model.ln_gamma(electrolyte, molality, constants, model_values), molality.shape)
    grad = np.zeros((len(items), n, len(uncertain_names)))
    in_model = [index for index, name in enumerate(uncertain_names) if name in model_values]
    grad[:, :, in_model] = sensitivity_coefficients(
        lambda v: model.ln_gamma(electrolyte, molality, constants, v), model_values,
        [uncertain_names[index] for index in in_model])
    var_model = np.einsum("...ij,...jk,...ik->...i", grad,
                          np.array([item.uncertain_covariance for item in items]), grad)
    gamma_model = np.exp(ln_gamma_model)

    rows = first.run.usable.size
    masks = [item.run.usable for item in items]
    every_row = rows == n  # (then every row is usable)

    def full(values: np.ndarray | None) -> np.ndarray:
        """Columns over every row of each run: the values at the usable rows, NaN elsewhere
        (read-only, and so each series' row of them)."""
        if values is not None and every_row:
            out = values.copy()
        else:
            out = np.full((len(items), rows), np.nan)
            if values is not None:
                for k, mask in enumerate(masks):
                    out[k, mask] = values[k]
        out.flags.writeable = False
        return out

    def optional(arrays: Sequence[np.ndarray | None]) -> np.ndarray | None:
        return None if arrays[0] is None else np.array(arrays)

    columns = {
        "pressure_correction_V": full(optional([d.correction_V for d in datas])),
        "gas_pressure_Pa": full(optional([d.gas_pressure_Pa for d in datas])),
        "fitted_emf_V": full(emf - np.array([f.residual_V for f in fits])),
        "residual_V": full(np.array([f.residual_V for f in fits])),
        "ln_gamma_pm": full(ln_gamma),
        "gamma_pm": full(gamma),
        "u_gamma_pm": full(u_gamma),
        "gamma_pm_model": full(gamma_model),
        "u_gamma_pm_model": full(gamma_model * np.sqrt(var_model)),
        **{f"u_gamma_pm_{name}": full(gamma * np.sqrt(variance))
           for name, variance in budget.items()},
    }
    out = []
    rows_of = {name: list(values) for name, values in columns.items()}  # (each series' row)
    with_molalities, reading_gradient = molality_rows.tolist(), -scale
    for k, item in enumerate(items):
        extra = tuple(d_u[k] for d_u in common_parts) + (
            () if left_out is None else (left_out[k],))
        out.append(({name: values[k] for name, values in rows_of.items()
                     if name != "u_gamma_pm_molalities" or with_molalities[k]},
                    GammaPropagation(parameter_gradient[k], reading_gradient[k],
                                     item.sensitivity, reading_var[k], item.type_b, extra)))
    return out


def reduction_jacobian(reduction: Reduction) -> np.ndarray:
    """∂E/∂(E°, free parameters) of the reduction's final fit at its optimum [V per unit],
    shape (N, P) over the usable readings (for diagnostics and checks of the propagation)."""
    if reduction.data is None:
        raise ValueError("the reduction carries no prepared data")
    return emf_jacobian(reduction.model, reduction.electrolyte, reduction.data,
                        reduction.standard_potential.nominal_value, reduction.parameter_values,
                        list(reduction.free_names[1:]))


def with_model_choice(reduction: Reduction, u_model_V: float, rule: str) -> Reduction:
    """The reduction with a model-choice component u_model in u(E°), in every place that
    shows it: the covariance, E°, the budget (a line of its own), u(γ±) at every reading (E°
    moves every ln γ± by σ δE°/(s k)) and its budget column; the reminder that it is missing
    is dropped. ``rule`` says how u_model was obtained."""
    covariance = reduction.covariance.copy()
    covariance[0, 0] += u_model_V**2
    uncertain = reduction.uncertain_covariance
    if uncertain is not None:
        uncertain = uncertain.copy()
        uncertain[0, 0] += u_model_V**2
    e0 = ufloat(reduction.standard_potential.nominal_value, math.sqrt(covariance[0, 0]))
    propagation = reduction.gamma_propagation
    step = propagation.parameter_gradient[:, 0] * u_model_V
    used = reduction.run.usable
    columns = dict(reduction.point_columns)
    gamma = columns["gamma_pm"][used]
    u_gamma = columns["u_gamma_pm"].copy()
    u_gamma[used] = np.sqrt(u_gamma[used] ** 2 + (gamma * step) ** 2)
    choice = np.full(used.size, np.nan)
    choice[used] = np.abs(gamma * step)
    for column in (u_gamma, choice):
        column.flags.writeable = False
    columns["u_gamma_pm"], columns["u_gamma_pm_model_choice"] = u_gamma, choice
    budget = (*reduction.budget, BudgetLine("choice of model", u_model_V, rule))
    return dataclasses.replace(
        reduction, covariance=covariance, uncertain_covariance=uncertain, standard_potential=e0,
        point_columns=columns, budget=budget,
        gamma_propagation=dataclasses.replace(propagation,
                                              common=(*propagation.common, step)),
        warnings=tuple(w for w in reduction.warnings if w != MODEL_CHOICE_REMINDER))
