r"""Temperature studies: E° at several temperatures, E°(T), and the thermodynamics of the cell
reaction with their uncertainties.

Two stages, and a cross-check:

1. **Isotherms.** The readings are grouped by temperature (:func:`group_isotherms`) and each
   group is reduced with the single-temperature machinery (:func:`~activolt.procedures.dilution.
   reduce_run`, or :func:`~activolt.procedures.model_choice.compare_models` with
   ``model="all"``): model choice, holding, budgets, diagnostics. Every reading keeps its own
   temperature in its Nernst slope; a reading off its isotherm's setpoint T_s is referred to it
   with the study's own dE°/dT, E_i → E_i − (dE°/dT)(T_i − T_s) — first without (pass 1), then
   with the slope of the fitted E°(T), until it no longer changes.
2. **E°(T).** The isotherm values are fitted by generalised least squares
   (:func:`fit_standard_potential`, usable on plain arrays) in two forms: a polynomial in
   (T − θ) of the degree the data support (chosen by BIC; the sequential F-test is reported
   beside it) and the constant-ΔCp° form. The thermodynamic quantities follow by linear
   propagation of the coefficients' covariance; the choice of form enters their uncertainty
   (the next form up and the shift to it, see :func:`fit_standard_potential`).
3. **Global fit** (cross-check): every reading at once, E°(T) in the chosen form and the Hückel
   parameters varying linearly with T.

The thermodynamic relations (IUPAC Green Book, 3rd ed. 2007, §2.11 and §2.13; Bates & Bower
1954, J. Res. NBS 53, 283, eqs. 4–7), for the cell reaction as written with n electrons:

.. math:: ΔG° = −nFE°, \quad ΔS° = nF \frac{dE°}{dT}, \quad ΔH° = ΔG° + TΔS° =
          nF\left(T\frac{dE°}{dT} − E°\right), \quad ΔC_p° = nFT\frac{d^2E°}{dT^2},
          \quad \log_{10} K = \frac{nFE°}{RT\ln 10}

The constant-ΔCp° form is the familiar ln K = A + B/T + C ln T (van 't Hoff with a constant
ΔCp° = RC); since E° = (RT/nF) ln K it reads, for E° itself,

.. math:: E°(T) = a + b\,(T − θ) + c\,[T \ln(T/θ) − (T − θ)]

with a = E°(θ), b = dE°/dT at θ and c = ΔCp°/(nF) (the same three-parameter family, written so
that its coefficients are the quantities at θ). Written as E° = a + b/T + c ln T it would not have
a constant ΔCp°.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from ..activity import get_model
from ..chemistry.cells import cell_from_diagram
from ..constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K, STANDARD_PRESSURE_PA, ZERO_CELSIUS_K
from ..data.runs import Run, usable_points
from ..errors import FitError, InputError
from ..fit.lack_of_fit import LACK_OF_FIT_P
from ..fit.least_squares import (
    central_difference_jacobian,
    information_criteria,
    linear_least_squares,
    weighted_least_squares,
)
from ..fit.problem import predict_emf, prepare_series
from ..fit.uncertainty import student_t_factor
from ..physics.water import debye_hueckel_constants
from .dilution import (
    MAX_TEMPERATURE_SPREAD_K,
    UNCORRECTED_SPREAD,
    Reduction,
    reduce_run,
)
from .display import html_table, value_with_uncertainty
from .model_choice import ModelComparison, compare_models

__all__ = [
    "FORMS",
    "QUANTITIES",
    "ROUND_MOLALITIES_MOL_KG",
    "Estimate",
    "FTest",
    "FormComponent",
    "GlobalFit",
    "Isotherm",
    "StandardPotentialFit",
    "TemperatureForm",
    "TemperatureStudy",
    "ThermodynamicValues",
    "fit_standard_potential",
    "group_isotherms",
    "isotherm_covariance",
    "study_temperatures",
]

#: The forms of E°(T): a polynomial in (T − θ) and the constant-ΔCp° form.
FORMS: tuple[str, ...] = ("polynomial", "constant_heat_capacity")
#: The thermodynamic quantities, in the order of :attr:`ThermodynamicValues.covariance`.
QUANTITIES: tuple[str, ...] = ("standard_potential_V", "delta_G_J_mol", "delta_H_J_mol",
                               "delta_S_J_K_mol", "delta_Cp_J_K_mol", "log10_K")
#: Highest polynomial degree tried for E°(T) (Bates & Bower 1954 used a cubic in t over
#: 0–90 °C; a quartic is the most that 5–60 °C data at 0.01 mV can tell from it).
MAX_POLYNOMIAL_DEGREE = 4
#: Degrees of freedom a polynomial must leave: a fit with one left can hardly judge itself, and
#: choosing it by BIC after the noise favoured it gave ΔH° intervals that covered the truth 81 %
#: of the time instead of 95 % (six isotherms, measured in the project's coverage test).
MIN_POLYNOMIAL_DOF = 2
#: The constant-ΔCp° form replaces the polynomial only when its BIC is lower by more than this
#: ("positive evidence", Kass & Raftery 1995, J. Am. Stat. Assoc. 90, 773): a form chosen by a
#: small margin the noise made gave a biased ΔH° with a confident interval.
FORM_BIC_MARGIN = 2.0
#: Level of the sequential F-test reported beside the BIC choice (common practice).
F_TEST_P = 0.05
#: Round molalities of the γ±(T) table [mol kg⁻¹]: 1-2-5 steps (common practice).
ROUND_MOLALITIES_MOL_KG: tuple[float, ...] = tuple(
    round(f * 10.0**e, 6) for e in range(-3, 2) for f in (1.0, 2.0, 5.0))
#: Liquid water at the standard pressure [K] (both ends included, as in the reader).
LIQUID_WATER_K = (ZERO_CELSIUS_K, ZERO_CELSIUS_K + 100.0)
#: The dE°/dT correction of off-setpoint readings is iterated until it moves no reading by more
#: than this [V], or for at most :data:`MAX_PASSES` reductions of every isotherm.
CORRECTION_TOLERANCE_V = 1e-8
MAX_PASSES = 4
_MIN_POINTS = 3


# --------------------------------------------------------------------------------------------
# Results
# --------------------------------------------------------------------------------------------

def _plain(value: float) -> float | None:
    """A float for JSON: NaN and infinities become None."""
    value = float(value)
    return value if math.isfinite(value) else None


@dataclass(frozen=True)
class Estimate:
    """A value and its standard uncertainty (k = 1), in the unit its name gives."""

    value: float
    uncertainty: float

    def to_dict(self) -> dict[str, float | None]:
        """``{"value": …, "uncertainty": …}``, NaN as None."""
        return {"value": _plain(self.value), "uncertainty": _plain(self.uncertainty)}


@dataclass(frozen=True)
class ThermodynamicValues:
    """E°, ΔG°, ΔH°, ΔS°, ΔCp° and log10 K of the cell reaction at one temperature.

    Attributes
    ----------
    temperature_K : float
        The temperature [K].
    electrons : int
        n of the cell reaction as written [-].
    standard_pressure_Pa : float
        The pressure basis of every value [Pa].
    values : numpy.ndarray
        The quantities in the order of :data:`QUANTITIES` [V, J mol⁻¹, J mol⁻¹, J K⁻¹ mol⁻¹,
        J K⁻¹ mol⁻¹, -]; ΔCp° is NaN when the form cannot determine it (a straight line).
    covariance : numpy.ndarray
        Their 6 × 6 covariance (linear propagation of the E°(T) coefficients' covariance), in
        the same units squared; ΔH° and ΔS° are strongly correlated.
    coverage_factor : float
        k for a 95 % interval: 1.96, or Student's t when the covariance was scaled by the
        reduced χ² of the E°(T) fit.
    """

    temperature_K: float
    electrons: int
    standard_pressure_Pa: float
    values: np.ndarray
    covariance: np.ndarray
    coverage_factor: float

    def estimate(self, name: str) -> Estimate:
        """The quantity ``name`` (one of :data:`QUANTITIES`) with its standard uncertainty."""
        i = QUANTITIES.index(name)
        u = math.sqrt(max(float(self.covariance[i, i]), 0.0))
        value = float(self.values[i])
        return Estimate(value, u if math.isfinite(value) else math.nan)

    @property
    def standard_potential_V(self) -> Estimate:
        """E° [V]."""
        return self.estimate("standard_potential_V")

    @property
    def delta_G_J_mol(self) -> Estimate:
        """ΔG° = −nFE° [J mol⁻¹]."""
        return self.estimate("delta_G_J_mol")

    @property
    def delta_H_J_mol(self) -> Estimate:
        """ΔH° = nF(T dE°/dT − E°) [J mol⁻¹]."""
        return self.estimate("delta_H_J_mol")

    @property
    def delta_S_J_K_mol(self) -> Estimate:
        """ΔS° = nF dE°/dT [J K⁻¹ mol⁻¹]."""
        return self.estimate("delta_S_J_K_mol")

    @property
    def delta_Cp_J_K_mol(self) -> Estimate:
        """ΔCp° = nFT d²E°/dT² [J K⁻¹ mol⁻¹]; NaN when the form cannot determine it."""
        return self.estimate("delta_Cp_J_K_mol")

    @property
    def log10_K(self) -> Estimate:
        """log10 K = nFE°/(RT ln 10) [-]."""
        return self.estimate("log10_K")

    def correlation(self, first: str, second: str) -> float:
        """Correlation coefficient of two quantities (names of :data:`QUANTITIES`)."""
        i, j = QUANTITIES.index(first), QUANTITIES.index(second)
        denominator = math.sqrt(self.covariance[i, i] * self.covariance[j, j])
        return float(self.covariance[i, j] / denominator) if denominator > 0 else math.nan

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: temperature, each quantity as {value, uncertainty}, the pressure basis,
        the ΔH°–ΔS° correlation and the full covariance (NaN as None)."""
        out: dict[str, Any] = {"temperature_K": self.temperature_K,
                               "standard_pressure_Pa": self.standard_pressure_Pa,
                               "electrons": self.electrons}
        for name in QUANTITIES:
            out[name] = self.estimate(name).to_dict()
        out["correlation_delta_H_delta_S"] = _plain(self.correlation("delta_H_J_mol",
                                                                     "delta_S_J_K_mol"))
        out["covariance"] = {"quantities": list(QUANTITIES),
                             "matrix": [[_plain(v) for v in row] for row in self.covariance]}
        out["coverage_factor_95"] = self.coverage_factor
        return out


def _basis(form: str, degree: int, reference_K: float, temperature_K: npt.ArrayLike
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(f, df/dT, d²f/dT²) of the form's basis functions at T, each shape (N, P)."""
    t = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    x = t - reference_K
    if form == "polynomial":
        k = np.arange(degree + 1)
        f = x[:, None] ** k
        d1 = np.where(k >= 1, k * x[:, None] ** np.maximum(k - 1, 0), 0.0)
        d2 = np.where(k >= 2, k * (k - 1) * x[:, None] ** np.maximum(k - 2, 0), 0.0)
        return f, d1, d2
    log_ratio = np.log(t / reference_K)
    zero, one = np.zeros_like(t), np.ones_like(t)
    f = np.column_stack([one, x, t * log_ratio - x])
    d1 = np.column_stack([zero, one, log_ratio])
    d2 = np.column_stack([zero, zero, 1.0 / t])
    return f, d1, d2


def _quantity_gradients(form: str, degree: int, reference_K: float, temperature_K: float,
                        electrons: int) -> np.ndarray:
    """∂(quantities)/∂(coefficients) at T, shape (6, P): every quantity is linear in them."""
    f, d1, d2 = (row[0] for row in _basis(form, degree, reference_K, temperature_K))
    nf = electrons * FARADAY_C_MOL
    t = float(temperature_K)
    return np.vstack([f, -nf * f, nf * (t * d1 - f), nf * d1, nf * t * d2,
                      nf * f / (GAS_CONSTANT_J_MOL_K * t * math.log(10.0))])


@dataclass(frozen=True)
class TemperatureForm:
    """One fitted form of E°(T): its coefficients, their covariance and the fit's statistics.

    ``form`` is ``"polynomial"`` — E° = Σ_k c_k (T − θ)^k, coefficients ``c0_V``, ``c1_V_K``,
    ``c2_V_K2``, … — or ``"constant_heat_capacity"`` — E° = a + b (T − θ) + c [T ln(T/θ) −
    (T − θ)], coefficients ``a_V`` (E° at θ), ``b_V_K`` (dE°/dT at θ), ``c_V_K`` (ΔCp°/(nF)).
    ``covariance`` is that of the coefficients, scaled by χ²/ν when the residuals exceed the
    isotherms' stated uncertainties (χ² upper-tail p < :data:`~activolt.procedures.dilution.
    LACK_OF_FIT_P`; ``birge_ratio`` = √(χ²/ν)) or when no uncertainties were given; the 95 %
    coverage factor is then Student's t with ν degrees of freedom.
    """

    form: str
    degree: int
    reference_temperature_K: float
    coefficient_names: tuple[str, ...]
    coefficients: np.ndarray
    covariance: np.ndarray
    temperature_K: np.ndarray
    residuals_V: np.ndarray
    chi2: float
    dof: int
    aic: float
    bic: float
    chi2_p_value: float
    covariance_scaled: bool
    birge_ratio: float
    coverage_factor: float

    @property
    def equation(self) -> str:
        """The form in words."""
        if self.form == "polynomial":
            return (f"E° = Σ c_k (T − θ)^k, k = 0…{self.degree}, "
                    f"θ = {self.reference_temperature_K:g} K")
        return (f"E° = a + b (T − θ) + c [T ln(T/θ) − (T − θ)], θ = "
                f"{self.reference_temperature_K:g} K (constant ΔCp° = nFc; "
                "ln K = A + B/T + C ln T)")

    @property
    def determines_heat_capacity(self) -> bool:
        """Whether the form has a second derivative of its own (not a straight line)."""
        return self.form != "polynomial" or self.degree >= 2

    def standard_potential_V(self, temperature_K: npt.ArrayLike) -> np.ndarray:
        """E° of the form at T [V]."""
        f, _, _ = _basis(self.form, self.degree, self.reference_temperature_K, temperature_K)
        return f @ self.coefficients

    def slope_V_K(self, temperature_K: npt.ArrayLike) -> np.ndarray:
        """dE°/dT of the form at T [V K⁻¹]."""
        _, d1, _ = _basis(self.form, self.degree, self.reference_temperature_K, temperature_K)
        return d1 @ self.coefficients

    def thermodynamics(self, temperature_K: float, electrons: int,
                       standard_pressure_Pa: float = STANDARD_PRESSURE_PA) -> ThermodynamicValues:
        """The thermodynamic quantities at T with their covariance (see the module docstring).

        Parameters
        ----------
        temperature_K : float
            T [K].
        electrons : int
            n of the cell reaction as written [-].
        standard_pressure_Pa : float
            The pressure basis of the E° values fitted [Pa] (carried, not converted).
        """
        g = _quantity_gradients(self.form, self.degree, self.reference_temperature_K,
                                temperature_K, electrons)
        values = g @ self.coefficients
        covariance = g @ self.covariance @ g.T
        if not self.determines_heat_capacity:
            i = QUANTITIES.index("delta_Cp_J_K_mol")
            values[i] = math.nan
            covariance[i, :] = covariance[:, i] = math.nan
        return ThermodynamicValues(float(temperature_K), int(electrons),
                                   float(standard_pressure_Pa), values, covariance,
                                   self.coverage_factor)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: form, equation, coefficients with their covariance, residuals, χ², ν,
        AIC, BIC."""
        return {
            "form": self.form, "degree": self.degree, "equation": self.equation,
            "reference_temperature_K": self.reference_temperature_K,
            "coefficients": {n: _plain(v) for n, v in zip(self.coefficient_names,
                                                          self.coefficients, strict=True)},
            "covariance": {"coefficients": list(self.coefficient_names),
                           "matrix": [[_plain(v) for v in row] for row in self.covariance]},
            "residuals_V": [{"temperature_K": float(t), "residual_V": float(r)}
                            for t, r in zip(self.temperature_K, self.residuals_V, strict=True)],
            "chi2": _plain(self.chi2), "dof": self.dof, "aic": _plain(self.aic),
            "bic": _plain(self.bic), "chi2_p_value": _plain(self.chi2_p_value),
            "covariance_scaled": self.covariance_scaled, "birge_ratio": _plain(self.birge_ratio),
            "coverage_factor_95": self.coverage_factor,
        }


def _coefficient_names(form: str, degree: int) -> tuple[str, ...]:
    if form == "polynomial":
        return tuple(["c0_V", "c1_V_K"] + [f"c{k}_V_K{k}" for k in range(2, degree + 1)]
                     )[: degree + 1]
    return ("a_V", "b_V_K", "c_V_K")


@dataclass(frozen=True)
class FTest:
    """The sequential F-test of one more polynomial term: F = (χ²_d − χ²_{d+1}) / (χ²_{d+1}/ν),
    p its upper-tail probability with (1, ν) degrees of freedom."""

    from_degree: int
    to_degree: int
    f_value: float
    p_value: float

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready."""
        return {"from_degree": self.from_degree, "to_degree": self.to_degree,
                "F": _plain(self.f_value), "p_value": _plain(self.p_value)}


@dataclass(frozen=True)
class FormComponent:
    """One way the choice of the E°(T) form entered the uncertainties.

    ``kind`` is ``"next_degree"`` — the covariance carried is that of ``degree``, the next
    polynomial up from the chosen form, plus the shift to it (δ δᵀ) — or
    ``"curvature_beyond"`` — the polynomial one degree above the highest allowed, whose shift
    from the form carried so far is added (δ δᵀ). ``shift_at_reference`` holds δ of every
    quantity at θ (the polynomial's value minus the form's), in the units of
    :data:`QUANTITIES`; NaN where a form does not determine the quantity.
    """

    kind: str
    degree: int
    shift_at_reference: np.ndarray
    description: str

    def shift(self, name: str) -> float:
        """δ of the quantity ``name`` (one of :data:`QUANTITIES`) at θ."""
        return float(self.shift_at_reference[QUANTITIES.index(name)])

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: kind, degree, the shift of every quantity at θ, the description."""
        return {"kind": self.kind, "degree": self.degree,
                "shift_at_reference": {n: _plain(v) for n, v in zip(
                    QUANTITIES, self.shift_at_reference, strict=True)},
                "description": self.description}


@dataclass(frozen=True)
class StandardPotentialFit:
    """E°(T) fitted to E° values at several temperatures, and the thermodynamics that follow.

    Attributes
    ----------
    temperature_K, standard_potential_V : numpy.ndarray
        The data [K], [V].
    covariance_V2 : numpy.ndarray
        Their covariance [V²] (diagonal u² unless given in full); unit weights when no
        uncertainties were given (``stated_uncertainty`` False).
    electrons : int
        n of the cell reaction as written [-].
    reference_temperature_K : float
        θ [K].
    standard_pressure_Pa : float
        The pressure basis of the E° values and of every quantity derived [Pa].
    polynomials : tuple of TemperatureForm
        Every polynomial degree tried (1 … min(4, N − 3), leaving two degrees of freedom).
    f_tests : tuple of FTest
        Sequential F-tests between consecutive degrees.
    polynomial_degree : int
        The degree chosen by the lowest BIC.
    f_test_degree : int
        The degree the sequential F-test would choose (stop at the first p ≥ 0.05).
    constant_heat_capacity : TemperatureForm or None
        The constant-ΔCp° form (None with fewer than four temperatures).
    chosen : str
        The form of the thermodynamics: ``"polynomial"`` or ``"constant_heat_capacity"``.
    choice_reason : str
        Why, in words.
    reference : ThermodynamicValues
        The quantities at θ in the chosen form.
    at_temperatures : tuple of ThermodynamicValues
        The quantities at every data temperature in the chosen form.
    notes : tuple of str
        What the user should know (lack of fit, ΔCp° undetermined, …).
    form_components : tuple of FormComponent
        How the choice of form entered the uncertainties of ``reference`` and
        ``at_temperatures`` (empty when it did not): the next polynomial up and the curvature
        beyond the highest degree allowed, each with its shift of the quantities at θ.
    """

    temperature_K: np.ndarray
    standard_potential_V: np.ndarray
    covariance_V2: np.ndarray
    stated_uncertainty: bool
    electrons: int
    reference_temperature_K: float
    standard_pressure_Pa: float
    polynomials: tuple[TemperatureForm, ...]
    f_tests: tuple[FTest, ...]
    polynomial_degree: int
    f_test_degree: int
    constant_heat_capacity: TemperatureForm | None
    chosen: str
    choice_reason: str
    reference: ThermodynamicValues
    at_temperatures: tuple[ThermodynamicValues, ...]
    notes: tuple[str, ...] = ()
    form_components: tuple[FormComponent, ...] = ()
    next_form: TemperatureForm | None = None
    beyond_form: TemperatureForm | None = None

    @property
    def polynomial(self) -> TemperatureForm:
        """The polynomial of the chosen degree."""
        return next(p for p in self.polynomials if p.degree == self.polynomial_degree)

    @property
    def form(self) -> TemperatureForm:
        """The chosen form."""
        if self.chosen == "polynomial" or self.constant_heat_capacity is None:
            return self.polynomial
        return self.constant_heat_capacity

    def thermodynamics(self, temperature_K: float) -> ThermodynamicValues:
        """The quantities at any T [K]: the chosen form's values with the choice of form in
        their uncertainty, as in ``reference`` (extrapolation is the caller's risk: the range
        fitted is ``temperature_K.min()`` … ``max()``)."""
        return _with_choice_of_form(self.form, self.next_form, self.beyond_form,
                                    [float(temperature_K)], self.electrons,
                                    self.standard_pressure_Pa)[0]

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: the chosen form and why, both forms, the F-tests, the quantities at θ and
        at every temperature."""
        return {
            "reference_temperature_K": self.reference_temperature_K,
            "standard_pressure_Pa": self.standard_pressure_Pa,
            "electrons": self.electrons,
            "form": self.chosen,
            "form_reason": self.choice_reason,
            "polynomial_degree": self.polynomial_degree,
            "polynomial_degree_f_test": self.f_test_degree,
            "stated_uncertainty": self.stated_uncertainty,
            "data": [{"temperature_K": float(t), "standard_potential_V": float(e),
                      "u_standard_potential_V": _plain(math.sqrt(v))}
                     for t, e, v in zip(self.temperature_K, self.standard_potential_V,
                                        np.diag(self.covariance_V2), strict=True)],
            "fits": {"polynomials": [p.to_dict() for p in self.polynomials],
                     "constant_heat_capacity": (None if self.constant_heat_capacity is None
                                                else self.constant_heat_capacity.to_dict()),
                     "f_tests": [t.to_dict() for t in self.f_tests]},
            "coefficients": self.form.to_dict(),
            "reference": self.reference.to_dict(),
            "at_temperatures": [v.to_dict() for v in self.at_temperatures],
            "notes": list(self.notes),
            "form_uncertainty": [c.to_dict() for c in self.form_components],
        }


# --------------------------------------------------------------------------------------------
# E°(T)
# --------------------------------------------------------------------------------------------

def _check_liquid_water(temperature_K: np.ndarray, what: str, file: str | None = None,
                        column: str | None = "temperature_K") -> None:
    low, high = LIQUID_WATER_K
    outside = ~((temperature_K >= low - 1e-9) & (temperature_K <= high + 1e-9))
    if np.any(outside):
        value = float(temperature_K[np.flatnonzero(outside)[0]])
        raise InputError(f"{what} {value:.2f} K ({value - ZERO_CELSIUS_K:.2f} °C) is outside "
                         f"liquid water (0–100 °C); check the value and its unit",
                         file=file, column=column)


def _fit_form(form: str, degree: int, reference_K: float, temperature_K: np.ndarray,
              standard_potential_V: np.ndarray, whitening: np.ndarray, stated: bool
              ) -> TemperatureForm:
    """One generalised least-squares fit: the data and the design whitened by L⁻¹ (V = LLᵀ)."""
    from scipy.special import chdtrc

    design, _, _ = _basis(form, degree, reference_K, temperature_K)
    names = _coefficient_names(form, degree)
    fit = linear_least_squares(whitening @ design, whitening @ standard_potential_V,
                               np.ones(temperature_K.size), scale_covariance=False, names=names)
    coefficients = fit.value_array
    residuals = standard_potential_V - design @ coefficients
    chi2, dof = fit.chi2, fit.dof
    covariance = fit.covariance
    p_value = float(chdtrc(dof, chi2)) if stated and dof > 0 else math.nan
    scaled = dof > 0 and (not stated or p_value < LACK_OF_FIT_P)
    birge = math.sqrt(chi2 / dof) if dof > 0 else math.nan
    if scaled:
        covariance = covariance * chi2 / dof
    aic, bic = information_criteria(chi2, temperature_K.size, len(names), not stated)
    return TemperatureForm(
        form=form, degree=degree, reference_temperature_K=reference_K,
        coefficient_names=names, coefficients=coefficients, covariance=covariance,
        temperature_K=temperature_K.copy(), residuals_V=residuals, chi2=chi2, dof=dof,
        aic=aic, bic=bic, chi2_p_value=p_value, covariance_scaled=scaled, birge_ratio=birge,
        coverage_factor=student_t_factor(dof if scaled else 0))


def isotherm_covariance(reductions: Sequence[Reduction]) -> np.ndarray:
    r"""The covariance of the isotherms' E° values [V²].

    .. math:: V_{ij} = δ_{ij} u^2(E°_i) + (1 − δ_{ij}) \sum_c s_{ic} s_{jc} u_c^2

    with s_ic = ∂E°_i/∂x_c the sensitivity of isotherm i to an input x_c that every run states
    alike (the same stock solution, the same electrode batch: ``Reduction.shared_inputs``; the
    same name and u) — GUM (JCGM 100:2008) 5.2.2, correlated inputs through common effects.
    Isotherms that do not state it are uncorrelated through it.
    """
    u = np.array([r.standard_potential.std_dev for r in reductions])
    covariance = np.diag(u**2)
    effects: dict[tuple[str, float], np.ndarray] = {}
    for index, reduction in enumerate(reductions):
        for name, u_input, sensitivity in reduction.shared_inputs:
            effects.setdefault((name, u_input), np.zeros(len(reductions)))[index] = (
                sensitivity * u_input)
    for vector in effects.values():
        covariance = covariance + np.outer(vector, vector) - np.diag(vector**2)
    return covariance

def fit_standard_potential(
    temperature_K: npt.ArrayLike,
    standard_potential_V: npt.ArrayLike,
    u_standard_potential_V: npt.ArrayLike | None = None,
    *,
    covariance_V2: npt.ArrayLike | None = None,
    electrons: int = 1,
    reference_temperature_K: float = 298.15,
    standard_pressure_Pa: float = STANDARD_PRESSURE_PA,
) -> StandardPotentialFit:
    r"""Fit E°(T) in two forms and derive E°, ΔG°, ΔH°, ΔS°, ΔCp° and log10 K with uncertainties.

    Parameters
    ----------
    temperature_K : array_like
        Temperatures of the E° values, shape (N,), N ≥ 2, in liquid water [K].
    standard_potential_V : array_like
        E° at those temperatures, shape (N,) [V].
    u_standard_potential_V : array_like, optional
        Their standard uncertainties, shape (N,) [V]; omitted (and no ``covariance_V2``): unit
        weights, the scale taken from the residuals.
    covariance_V2 : array_like, optional
        Their full covariance, shape (N, N) [V²]; wins over ``u_standard_potential_V``.
    electrons : int
        n of the cell reaction as written [-].
    reference_temperature_K : float
        θ, where the quantities are reported and around which the polynomial is written [K].
    standard_pressure_Pa : float
        The pressure basis of the E° values [Pa]; carried into every result, not converted.

    Returns
    -------
    StandardPotentialFit

    Raises
    ------
    InputError
        Fewer than two distinct temperatures, mismatched shapes, non-finite values,
        non-positive uncertainties, temperatures (or θ) outside liquid water.

    Notes
    -----
    Generalised least squares: with V = LLᵀ the covariance of the E° values, L⁻¹E° is fitted
    by L⁻¹X c (:func:`activolt.fit.least_squares.linear_least_squares`); the covariance of c is
    (XᵀV⁻¹X)⁻¹, scaled by χ²/ν (Birge ratio squared) when χ² exceeds what V allows (upper-tail
    p < 0.05) — the isotherms then scatter more than their stated u(E°). Polynomials of degree
    1 … min(4, N − 3) are fitted; the degree of lowest BIC (Schwarz 1978, Ann. Stat. 6, 461) is
    chosen, the sequential F-test (Draper & Smith 1998, *Applied Regression Analysis*, 3rd ed.,
    §6.1) reported beside it. The constant-ΔCp° form (module docstring) is fitted with N ≥ 4;
    it is chosen when its BIC is lower than the polynomial's by more than 2 (else the
    polynomial). Every quantity Q is linear in the coefficients, Q = g_Qᵀ c, so its covariance
    is G V_c Gᵀ exactly (GUM, JCGM 100:2008, 5.2); ΔCp° from a straight line is not
    determined and is NaN.

    The choice of form is part of the uncertainty. The values reported are the chosen form's,
    Q_d; when a polynomial with one coefficient more is among the forms allowed (it leaves two
    degrees of freedom), the covariance reported is that polynomial's with the whole shift to
    it, V = V_{d+1} + δδᵀ, δ = Q_{d+1} − Q_d: a correction not applied, counted with its own
    uncertainty (for nested GLS u²(δ) = V_{d+1} − V_d; GUM 6.3.1, F.2.4.5), V_{d+1} at the
    larger of the two forms' lack-of-fit scales. Without it a
    quadratic that BIC preferred to the cubic the data could not resolve biased dE°/dT by
    about 1.7 µV/K, 4–5 times its own u, and ΔH° intervals covered the truth 64 % of the time
    (nine isotherms, 5–45 °C,
    Bates & Bower's cubic); with it 96–97 % (twelve isotherms, 5–60 °C: 92 % before, 97 %
    with it, the intervals then twice as wide). A form chosen by the data is the form whose next
    term happened to look small, so that term's estimate cannot be trusted to be small: the
    information-criterion average with the unconditional variance (Buckland, Burnham &
    Augustin 1997, Biometrics 53, 603; Burnham & Anderson 2002, §4.3.2, eq. 4.9) covered 90 %
    in the same simulation and δδᵀ alone 84 %. The price is a wider interval when the next
    term is truly absent. Curvature beyond the highest degree allowed (the polynomial one
    degree up, fitted when it leaves one degree of freedom; counted below a cubic always,
    above only when its F-test gives p < 0.05) adds its shift from the form carried, δδᵀ.
    ``form_components`` and the notes say what was counted and by how much.

    Examples
    --------
    Bates & Bower (1954, Table 1; absolute volts, 1 atm) from 5 to 60 °C, s.d. 0.01 mV:

    >>> t = np.arange(5.0, 65.0, 5.0)
    >>> e0 = [0.23413, 0.23142, 0.22857, 0.22557, 0.22234, 0.21904, 0.21566, 0.21208,
    ...       0.20835, 0.20449, 0.20056, 0.19649]
    >>> fit = fit_standard_potential(t + 273.15, e0, np.full(12, 1e-5),
    ...                              standard_pressure_Pa=101325.0)
    >>> fit.chosen, fit.polynomial_degree
    ('polynomial', 3)
    >>> round(fit.reference.delta_H_J_mol.value / 1e3, 2)
    -40.06
    """
    t = np.asarray(temperature_K, dtype=float).ravel()
    e = np.asarray(standard_potential_V, dtype=float).ravel()
    if t.shape != e.shape:
        raise InputError(f"{t.size} temperatures but {e.size} E° values; give one E° per "
                         "temperature", column="standard_potential_V")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(e))):
        raise InputError("temperatures and E° values must be finite numbers",
                         column="standard_potential_V")
    _check_liquid_water(t, "temperature")
    _check_liquid_water(np.array([float(reference_temperature_K)]), "reference temperature",
                        column="reference_temperature_K")
    if np.unique(t).size < 2:
        raise InputError("E°(T) needs E° at two temperatures at least; "
                         f"all {t.size} value(s) are at {t[0]:.2f} K", column="temperature_K")
    if electrons < 1:
        raise InputError(f"electrons = {electrons}; n must be a positive integer",
                         column="electrons")
    if covariance_V2 is not None:
        covariance = np.asarray(covariance_V2, dtype=float)
        stated = True
    elif u_standard_potential_V is not None:
        u = np.broadcast_to(np.asarray(u_standard_potential_V, dtype=float), t.shape)
        if not np.all(np.isfinite(u) & (u > 0)):
            raise InputError("every u(E°) must be a positive finite number [V]",
                             column="u_standard_potential_V")
        covariance = np.diag(u**2)
        stated = True
    else:
        covariance = np.eye(t.size)
        stated = False
    if covariance.shape != (t.size, t.size) or not np.allclose(covariance, covariance.T):
        raise InputError(f"the covariance must be symmetric, {t.size} × {t.size}",
                         column="covariance_V2")
    try:
        lower = np.linalg.cholesky(covariance)
    except np.linalg.LinAlgError:
        raise InputError("the covariance of the E° values is not positive definite",
                         column="covariance_V2") from None
    whitening = np.linalg.inv(lower)
    theta = float(reference_temperature_K)

    n = t.size
    top = max(1, min(MAX_POLYNOMIAL_DEGREE, n - 1 - MIN_POLYNOMIAL_DOF))
    polynomials = tuple(_fit_form("polynomial", d, theta, t, e, whitening, stated)
                        for d in range(1, top + 1))
    f_tests = []
    for low, high in itertools.pairwise(polynomials):
        from scipy.special import fdtrc

        f_value = ((low.chi2 - high.chi2) / (high.chi2 / high.dof) if high.chi2 > 0
                   else math.inf)
        f_tests.append(FTest(low.degree, high.degree, f_value,
                             float(fdtrc(1, high.dof, f_value))))
    f_degree = 1
    for test in f_tests:
        if test.p_value >= F_TEST_P:
            break
        f_degree = test.to_degree
    best = min(polynomials, key=lambda p: (p.bic, p.degree))
    constant_cp = (_fit_form("constant_heat_capacity", 2, theta, t, e, whitening, stated)
                   if n >= 4 else None)

    notes: list[str] = []
    criteria = ", ".join(f"degree {p.degree}: BIC {p.bic:.4g}" for p in polynomials)
    if constant_cp is not None and constant_cp.bic < best.bic - FORM_BIC_MARGIN:
        chosen = "constant_heat_capacity"
        reason = (f"the constant-ΔCp° form has a BIC lower by more than {FORM_BIC_MARGIN:g} "
                  f"({constant_cp.bic:.4g} against {best.bic:.4g} for the polynomial of degree "
                  f"{best.degree}; {criteria})")
    else:
        chosen = "polynomial"
        reason = (f"the polynomial of degree {best.degree} has the lowest BIC ({criteria}"
                  + (f"; constant-ΔCp° form: BIC {constant_cp.bic:.4g}, not lower by more than "
                     f"{FORM_BIC_MARGIN:g}" if constant_cp else
                     "; the constant-ΔCp° form needs four temperatures") + ")")
    if f_degree != best.degree:
        notes.append(f"the sequential F-test (p < {F_TEST_P:g}) would choose degree {f_degree}; "
                     f"BIC chose {best.degree}")
    form = constant_cp if chosen == "constant_heat_capacity" else best
    assert form is not None
    if form.covariance_scaled and stated:
        notes.append(f"E°(T) residuals exceed the stated u(E°) (χ² = {form.chi2:.3g}, ν = "
                     f"{form.dof}, p = {form.chi2_p_value:.2g}): covariance scaled by χ²/ν, "
                     f"Birge ratio {form.birge_ratio:.3g}, 95 % intervals from Student's t")
    if form.dof == 0:
        notes.append("E°(T) has no degree of freedom left: its residuals cannot be judged")
    if not form.determines_heat_capacity:
        notes.append("a straight line E°(T) does not determine ΔCp° (reported as missing)")
    if not stated:
        notes.append("no u(E°) given: unit weights, covariance scaled by the residual variance")
    temperatures = (theta, *(float(x) for x in t))
    components: list[FormComponent] = []
    carried = form
    following = _next_form_up(form, polynomials)
    beyond = _curvature_beyond(polynomials[-1], theta, t, e, whitening, stated)
    if following is not None:
        following = _at_scale_of(following, form)
    values = _with_choice_of_form(form, following, beyond, temperatures, electrons,
                                  standard_pressure_Pa)
    if following is not None:
        shift = _shift(following.thermodynamics(theta, electrons, standard_pressure_Pa),
                       form.thermodynamics(theta, electrons, standard_pressure_Pa))
        components.append(FormComponent(
            "next_degree", following.degree, shift,
            f"choice of the E°(T) form: the uncertainties are those of the polynomial of degree "
            f"{following.degree}, the next form up, with the shift of every quantity from the "
            f"chosen {_form_words(form)} to it counted in full (a correction not applied, with "
            f"its own uncertainty; GUM 6.3.1, F.2.4.5): ΔH° "
            f"{_signed(shift[QUANTITIES.index('delta_H_J_mol')], 'J/mol', 0)}, ΔS° "
            f"{_signed(shift[QUANTITIES.index('delta_S_J_K_mol')], 'J/(K mol)', 3)} at θ"))
        carried = following
    if beyond is not None:
        shift = _shift(beyond.thermodynamics(theta, electrons, standard_pressure_Pa),
                       carried.thermodynamics(theta, electrons, standard_pressure_Pa))
        components.append(FormComponent(
            "curvature_beyond", beyond.degree, shift,
            f"the data call for a polynomial of degree {beyond.degree} (F-test against "
            f"degree {beyond.degree - 1}, p < {F_TEST_P:g}), which the "
            f"{n} temperatures cannot support with {MIN_POLYNOMIAL_DOF} degrees of "
            "freedom left: the uncertainties include the full difference between "
            f"that polynomial and the {_form_words(carried)} (ΔH° "
            f"{_signed(shift[QUANTITIES.index('delta_H_J_mol')], 'J/mol', 0)}) — measure more "
            "temperatures"))
    notes.extend(c.description for c in components)
    reference, at = values[0], tuple(values[1:])
    return StandardPotentialFit(
        temperature_K=t, standard_potential_V=e, covariance_V2=covariance,
        stated_uncertainty=stated, electrons=int(electrons), reference_temperature_K=theta,
        standard_pressure_Pa=float(standard_pressure_Pa), polynomials=polynomials,
        f_tests=tuple(f_tests), polynomial_degree=best.degree, f_test_degree=f_degree,
        constant_heat_capacity=constant_cp, chosen=chosen, choice_reason=reason,
        reference=reference, at_temperatures=at, notes=tuple(notes),
        form_components=tuple(components), next_form=following, beyond_form=beyond)


def _with_choice_of_form(form: TemperatureForm, following: TemperatureForm | None,
                         beyond: TemperatureForm | None, temperatures: Sequence[float],
                         electrons: int, standard_pressure_Pa: float
                         ) -> list[ThermodynamicValues]:
    """The chosen form's quantities at ``temperatures`` with the choice of form in their
    covariance: the next form up carried with the shift to it, then the curvature beyond the
    highest degree allowed (see :func:`_with_form_choice`)."""
    def at(which: TemperatureForm) -> list[ThermodynamicValues]:
        return [which.thermodynamics(x, electrons, standard_pressure_Pa) for x in temperatures]

    values = at(form)
    carried = values
    if following is not None:
        carried = at(following)
        values = _with_form_choice(values, carried, carry=True)
    if beyond is not None:
        values = _with_form_choice(values, at(beyond), carry=False, anchor=carried)
    return values



def _curvature_beyond(highest: TemperatureForm, theta: float, t: np.ndarray, e: np.ndarray,
                      whitening: np.ndarray, stated: bool) -> TemperatureForm | None:
    """The polynomial one degree above the highest allowed, when it still leaves a degree of
    freedom and its extra term is significant (F-test, p < :data:`F_TEST_P`): the data then
    show more curvature than the allowed forms can describe; None otherwise."""
    from scipy.special import fdtrc

    degree = highest.degree + 1
    if degree > MAX_POLYNOMIAL_DEGREE or t.size - (degree + 1) < 1:
        return None
    beyond = _fit_form("polynomial", degree, theta, t, e, whitening, stated)
    if not beyond.chi2 > 0.0:
        return None
    if beyond.degree <= 3:
        # Below a cubic the allowed forms (a line, a quadratic, constant ΔCp°) cannot be tested
        # against the next curvature term with two degrees of freedom: it is always counted.
        return beyond
    f_value = (highest.chi2 - beyond.chi2) / (beyond.chi2 / beyond.dof)
    return beyond if float(fdtrc(1, beyond.dof, f_value)) < F_TEST_P else None


def _next_form_up(form: TemperatureForm, polynomials: Sequence[TemperatureForm]
                  ) -> TemperatureForm | None:
    """The polynomial with one coefficient more than the chosen form, when it is among the
    degrees allowed (it leaves :data:`MIN_POLYNOMIAL_DOF`); None when the form is the highest."""
    size = len(form.coefficient_names) + 1
    return next((p for p in polynomials if len(p.coefficient_names) == size), None)


def _scale(form: TemperatureForm) -> float:
    """The factor the form's covariance was scaled by (χ²/ν; 1 when not scaled)."""
    return form.chi2 / form.dof if form.covariance_scaled else 1.0


def _at_scale_of(following: TemperatureForm, chosen: TemperatureForm) -> TemperatureForm:
    """The next form up with its covariance at the larger of the two lack-of-fit scales: the
    chosen form's excess scatter is not dropped by carrying the next form's covariance (and
    V_{d+1} ⪰ V_d then holds for the scaled covariances as for the unscaled ones)."""
    own, theirs = _scale(following), _scale(chosen)
    if theirs <= own:
        return following
    return dataclasses.replace(following, covariance=following.covariance * (theirs / own),
                               coverage_factor=max(following.coverage_factor,
                                                   chosen.coverage_factor))


def _shift(target: ThermodynamicValues, source: ThermodynamicValues) -> np.ndarray:
    """δ = target − source of every quantity; NaN where either does not determine it."""
    return target.values - source.values


def _with_form_choice(chosen: Sequence[ThermodynamicValues],
                      other: Sequence[ThermodynamicValues], *, carry: bool,
                      anchor: Sequence[ThermodynamicValues] | None = None
                      ) -> list[ThermodynamicValues]:
    r"""The chosen form's values with the choice of form in their covariance.

    With ``carry`` (the next form up, fitted with the degrees of freedom required):

    .. math:: V = V_{d+1} + δ δ^T, \quad δ = Q_{d+1} − Q_d

    — the value reported is the chosen form's Q_d; the shift δ to the next form up is a
    correction not applied, counted in full with its own uncertainty (for nested generalised
    least squares u²(δ) = V_{d+1} − V_d, so V_d + δδᵀ + u²(δ) = V_{d+1} + δδᵀ; GUM, JCGM
    100:2008, 6.3.1 and F.2.4.5). V_{d+1} is taken at the larger of the two forms' lack-of-fit
    scales (χ²/ν) and the 95 % factor is the larger of the two forms'.
    Without ``carry`` (curvature beyond the highest degree allowed) the covariance so far
    gains δδᵀ, δ measured from ``anchor`` (the form whose covariance is carried): a bias of
    unknown size up to δ taken as a standard uncertainty.
    """
    out = []
    for index, (mine, theirs) in enumerate(zip(chosen, other, strict=True)):
        base = mine.values if anchor is None else anchor[index].values
        delta = np.nan_to_num(theirs.values - base, nan=0.0)
        if carry:
            covariance = np.array(theirs.covariance) + np.outer(delta, delta)
            factor = max(mine.coverage_factor, theirs.coverage_factor)
        else:
            covariance = mine.covariance + np.outer(delta, delta)
            factor = mine.coverage_factor
        undetermined = ~np.isfinite(mine.values)
        covariance[undetermined, :] = math.nan
        covariance[:, undetermined] = math.nan
        out.append(dataclasses.replace(mine, covariance=covariance, coverage_factor=factor))
    return out


def _form_words(form: TemperatureForm) -> str:
    """The form in a few words: "polynomial of degree 2", "constant-ΔCp° form"."""
    if form.form == "polynomial":
        return f"polynomial of degree {form.degree}"
    return "constant-ΔCp° form"


def _signed(value: float, unit: str, decimals: int) -> str:
    """A shift with its sign to ``decimals`` places, or "not determined"."""
    if not math.isfinite(value):
        return "not determined"
    return f"{round(value, decimals) + 0.0:+.{decimals}f} {unit}"  # + 0.0: no "−0"

# --------------------------------------------------------------------------------------------
# Isotherms
# --------------------------------------------------------------------------------------------

def group_isotherms(run: Run, tolerance_K: float = 0.5) -> tuple[tuple[float, Run], ...]:
    """Split a run into isotherms: ``(setpoint [K], Run of those rows)``, coolest first.

    The rows' temperatures are sorted and cut wherever two neighbours differ by more than
    ``tolerance_K`` (single-linkage grouping: rows within ``tolerance_K`` of a neighbour belong
    together). The setpoint is the median of a group's temperatures, so a few readings off the
    setpoint do not move it. Each isotherm is ``dataclasses.replace(run, points=rows)``.

    Parameters
    ----------
    run : Run
        A validated run (:func:`activolt.data.runs.read_run`), rows at one or more setpoints.
    tolerance_K : float
        Largest gap between neighbouring temperatures of one isotherm [K].

    Returns
    -------
    tuple of (float, Run)

    Raises
    ------
    InputError
        A non-positive tolerance, or a group spanning more than 2 K (one E° needs one
        temperature; a smaller tolerance splits it).

    Examples
    --------
    >>> import pandas as pd
    >>> from activolt.data.runs import runs_from_frame
    >>> frame = pd.DataFrame({"molality_mol_kg": [0.01, 0.02, 0.01, 0.02],
    ...                       "emf_V": [0.464, 0.430, 0.461, 0.427],
    ...                       "temperature_C": [25.0, 25.1, 35.0, 35.0]})
    >>> run, = runs_from_frame(frame, {"electrolyte": "HCl", "electrons": 1})
    >>> [(round(t - 273.15, 2), len(r.points)) for t, r in group_isotherms(run)]
    [(25.05, 2), (35.0, 2)]
    """
    if not tolerance_K > 0:
        raise InputError(f"tolerance_K = {tolerance_K}: the grouping tolerance must be > 0 K",
                         column="tolerance_K")
    points = run.points
    temperature = points["temperature_K"].to_numpy(float)
    order = np.argsort(temperature, kind="stable")
    cuts = np.flatnonzero(np.diff(temperature[order]) > tolerance_K) + 1
    groups = []
    for index in np.split(order, cuts):
        rows = points.iloc[np.sort(index)].reset_index(drop=True)
        t = rows["temperature_K"].to_numpy(float)
        if t.max() - t.min() > MAX_TEMPERATURE_SPREAD_K:
            raise InputError(
                f"rows from {t.min() - ZERO_CELSIUS_K:.2f} to {t.max() - ZERO_CELSIUS_K:.2f} °C "
                f"chain into one isotherm wider than {MAX_TEMPERATURE_SPREAD_K:g} K with "
                f"tolerance_K = {tolerance_K:g}; lower the tolerance or check the temperatures",
                file=str(run.path), line=int(rows["line"].iloc[int(np.argmax(t))]),
                column="temperature_C")
        groups.append((float(np.median(t)), dataclasses.replace(run, points=rows)))
    return tuple(groups)


@dataclass(frozen=True)
class Isotherm:
    """One isotherm of a study: its rows, their reduction and the setpoint correction.

    Attributes
    ----------
    setpoint_K : float
        The isotherm's temperature (median of its rows) [K]; E° refers to it.
    run : Run
        The isotherm's rows as read (before the correction to the setpoint).
    reduction : Reduction
        The reduction of the corrected rows (with the model-choice component when the models
        were compared).
    comparison : ModelComparison or None
        The model comparison, when ``model="all"``.
    max_offset_K : float
        Largest |T_i − T_s| of a usable reading [K].
    max_correction_V, mean_correction_V : float
        Largest |ΔE| and the mean ΔE applied to refer readings to the setpoint,
        ΔE_i = −(dE°/dT)(T_i − T_s) [V].
    slope_V_K : float
        The dE°/dT used for that correction [V K⁻¹].
    """

    setpoint_K: float
    run: Run
    reduction: Reduction
    comparison: ModelComparison | None
    max_offset_K: float
    max_correction_V: float
    mean_correction_V: float
    slope_V_K: float

    @property
    def n_points(self) -> int:
        """Usable readings of the reduction."""
        return self.reduction.statistics.n_points

    @property
    def model(self) -> str:
        """Name of the activity-coefficient model of the reduction."""
        return self.reduction.model.name

    @property
    def standard_potential_V(self) -> Estimate:
        """E° at the setpoint with its standard uncertainty (k = 1) [V]."""
        e0 = self.reduction.standard_potential
        return Estimate(float(e0.nominal_value), float(e0.std_dev))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready summary of the isotherm."""
        return {"temperature_K": self.setpoint_K, "n_points": self.n_points,
                "model": self.model,
                "standard_potential_V": self.standard_potential_V.to_dict(),
                "standard_pressure_Pa": self.run.metadata.standard_pressure_Pa,
                "source": str(self.run.path),
                "max_temperature_offset_K": self.max_offset_K,
                "setpoint_correction": {"slope_V_K": self.slope_V_K,
                                        "max_abs_V": self.max_correction_V,
                                        "mean_V": self.mean_correction_V},
                "warnings": _isotherm_warnings(self)}


def _isotherm_warnings(iso: Isotherm) -> list[str]:
    """The reduction's warnings, the uncorrected-spread one replaced when the study corrected."""
    if iso.slope_V_K == 0.0:
        return list(iso.reduction.warnings)
    return [w for w in iso.reduction.warnings if not w.startswith(UNCORRECTED_SPREAD)]


def _corrected(run: Run, setpoint_K: float, slope_V_K: float) -> tuple[Run, np.ndarray]:
    """The run with each reading referred to the setpoint, and the corrections [V]."""
    points = run.points.copy()
    delta = -slope_V_K * (points["temperature_K"].to_numpy(float) - setpoint_K)
    delta = np.where(points["emf_V"].notna() & points["flag"].isna(), delta, 0.0)
    if np.any(delta != 0.0):
        points["emf_V"] = points["emf_V"] + delta
        run = dataclasses.replace(run, points=points)
    return run, delta[run.points["flag"].isna().to_numpy()]


def _reduce(run: Run, model: str, fixed: Mapping[str, Any] | None
            ) -> tuple[Reduction, ModelComparison | None]:
    if model == "all":
        comparison = compare_models(run, fixed=fixed)
        reduction = comparison.recommended_reduction
        if reduction is None:
            raise FitError(f"{run.path}: no model is adequate for the isotherm at "
                           f"{comparison.temperature_K - ZERO_CELSIUS_K:.2f} °C: "
                           + "; ".join(comparison.warnings))
        return reduction, comparison
    return reduce_run(run, model, fixed), None


# --------------------------------------------------------------------------------------------
# The global fit (cross-check)
# --------------------------------------------------------------------------------------------

#: The two-stage and the global E°(θ), ΔH°, ΔS° are compared.
_COMPARED = ("standard_potential_V", "delta_H_J_mol", "delta_S_J_K_mol")


@dataclass(frozen=True)
class GlobalFit:
    """Every reading of the study fitted at once: E°(T) in the chosen form, the Hückel
    parameters linear in T (å held where the isotherms held it).

    Attributes
    ----------
    form : TemperatureForm
        E°(T) from the global fit (residuals, χ² and ν are those of the readings).
    parameters : dict of str to Estimate
        The Hückel coefficients: ``<name>_0`` at θ and ``<name>_1`` per kelvin, or
        ``<name>_held`` notes.
    held : dict of str to str
        Parameters held, and how.
    reference : ThermodynamicValues
        E°, ΔG°, ΔH°, ΔS°, ΔCp°, log10 K at θ from the global fit.
    differences : dict of str to float
        global − two-stage for E°(θ) [V], ΔH° [J mol⁻¹], ΔS° [J K⁻¹ mol⁻¹].
    n_points : int
        Readings fitted.
    notes : tuple of str
    """

    form: TemperatureForm
    parameters: dict[str, Estimate]
    held: dict[str, str]
    reference: ThermodynamicValues
    differences: dict[str, float]
    n_points: int
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready."""
        out: dict[str, Any] = {"form": self.form.form, "degree": self.form.degree,
                               "n_points": self.n_points, "chi2": _plain(self.form.chi2),
                               "dof": self.form.dof,
                               "covariance_scaled": self.form.covariance_scaled,
                               "activity_parameters": {k: v.to_dict()
                                                       for k, v in self.parameters.items()},
                               "held": dict(self.held)}
        for name in _COMPARED:
            out[name] = self.reference.estimate(name).to_dict()
        out["difference_from_two_stage"] = {name: _plain(v)
                                            for name, v in self.differences.items()}
        out["notes"] = list(self.notes)
        return out


def _global_fit(isotherms: Sequence[Isotherm], two_stage: StandardPotentialFit,
                fixed: Mapping[str, Any] | None) -> GlobalFit:
    """Every reading at once (see :class:`GlobalFit`), by
    :func:`activolt.fit.least_squares.weighted_least_squares`."""
    hueckel = get_model("hueckel")
    chosen = two_stage.form
    theta = two_stage.reference_temperature_K
    user = {} if fixed is None or not all(isinstance(v, (int, float, tuple))
                                          for v in fixed.values()) else dict(fixed)
    pieces = []
    for iso in isotherms:
        data = prepare_series(iso.run)
        rows = usable_points(iso.run)
        pieces.append((iso, data, rows["temperature_K"].to_numpy(float)))
    stated = all(iso.run.emf_uncertainty_given for iso in isotherms)
    y = np.concatenate([d.emf_V for _, d, _ in pieces])
    weights = np.concatenate([d.weights for _, d, _ in pieces]) if stated else None
    t_all = np.concatenate([t for _, _, t in pieces])
    basis, _, _ = _basis(chosen.form, chosen.degree, theta, t_all)
    scale = np.where(np.abs(basis).max(axis=0) > 0, np.abs(basis).max(axis=0), 1.0)

    held: dict[str, str] = {}
    linear_in_t: list[str] = []
    held_values: dict[str, np.ndarray] = {}
    for spec in hueckel.parameters:
        name = spec.name
        per_isotherm = []
        free_everywhere = True
        for iso in isotherms:
            red = iso.reduction
            if red.model.name == "hueckel":
                per_isotherm.append(red.parameter_values[name])
                free_everywhere &= name in red.free_names
            else:
                constants = debye_hueckel_constants(np.array([iso.setpoint_K]))
                per_isotherm.append(spec.conventional(red.electrolyte, constants))
                free_everywhere = False
        if name in user:
            given = user[name]
            value = float(given[0] if isinstance(given, tuple) else given)
            held_values[name] = np.full(len(isotherms), value)
            held[name] = f"held at {value:g} {spec.unit} (given)"
        elif spec.linear or free_everywhere:
            linear_in_t.append(name)
        else:
            held_values[name] = np.array(per_isotherm)
            held[name] = ("held at each isotherm's value (held there: "
                          + ", ".join(f"{v:.4g}" for v in per_isotherm) + f" {spec.unit})")
    setpoints = np.array([iso.setpoint_K for iso in isotherms])
    electrolyte = isotherms[0].run.metadata.electrolyte
    start: dict[str, float] = {f"e{k}": float(c * s) for k, (c, s) in
                               enumerate(zip(chosen.coefficients, scale, strict=True))}
    for name in linear_in_t:
        values = np.array([iso.reduction.parameter_values.get(name, 0.0) for iso in isotherms])
        slope, intercept = np.polyfit(setpoints - theta, values, 1)
        start[f"{name}_0"], start[f"{name}_1"] = float(intercept), float(slope)

    def model(p: Mapping[str, float]) -> np.ndarray:
        coefficients = np.array([p[f"e{k}"] for k in range(scale.size)]) / scale
        out = []
        for i, (_, data, t) in enumerate(pieces):
            x = setpoints[i] - theta
            values = {name: p[f"{name}_0"] + p[f"{name}_1"] * x for name in linear_in_t}
            values.update({name: float(v[i]) for name, v in held_values.items()})
            f, _, _ = _basis(chosen.form, chosen.degree, theta, t)
            out.append(f @ coefficients + predict_emf(hueckel, electrolyte, data, 0.0, values))
        return np.concatenate(out)

    fit = weighted_least_squares(model, start, y, weights, scale_covariance=not stated)
    from scipy.special import chdtrc

    k = scale.size
    covariance = fit.covariance[:k, :k] / np.outer(scale, scale)
    coefficients = fit.value_array[:k] / scale
    p_value = float(chdtrc(fit.dof, fit.chi2)) if stated and fit.dof > 0 else math.nan
    lack = stated and fit.dof > 0 and p_value < LACK_OF_FIT_P
    factor = fit.chi2 / fit.dof if lack else 1.0
    form = TemperatureForm(
        form=chosen.form, degree=chosen.degree, reference_temperature_K=theta,
        coefficient_names=chosen.coefficient_names, coefficients=coefficients,
        covariance=covariance * factor, temperature_K=t_all, residuals_V=fit.residuals,
        chi2=fit.chi2, dof=fit.dof, aic=fit.aic, bic=fit.bic, chi2_p_value=p_value,
        covariance_scaled=lack or not stated,
        birge_ratio=math.sqrt(fit.chi2 / fit.dof) if fit.dof > 0 else math.nan,
        coverage_factor=student_t_factor(fit.dof if (lack or not stated) else 0))
    reference = form.thermodynamics(theta, two_stage.electrons, two_stage.standard_pressure_Pa)
    parameters = {name: Estimate(fit.values[name], fit.standard_errors[name] * math.sqrt(factor))
                  for name in fit.names[k:]}
    differences = {name: reference.estimate(name).value
                   - two_stage.reference.estimate(name).value for name in _COMPARED}
    notes = ["cross-check only: the Hückel model for every isotherm, each reading's own "
             "temperature in E°(T) and in its Nernst slope, parameters varying linearly with "
             "the setpoint; held parameters' Type B uncertainty and the model choice are not "
             "in its u"]
    for name in _COMPARED:
        u = two_stage.reference.estimate(name).uncertainty
        if math.isfinite(u) and u > 0 and abs(differences[name]) > 2 * u:
            notes.append(f"the global fit's {name} differs from the two-stage value by "
                         f"{differences[name] / u:+.2g} u of the two-stage result")
    if lack:
        notes.append(f"global fit: χ² = {fit.chi2:.4g} for ν = {fit.dof} (p = {p_value:.2g}); "
                     "covariance scaled by χ²/ν")
    return GlobalFit(form=form, parameters=parameters, held=held, reference=reference,
                     differences=differences, n_points=int(y.size), notes=tuple(notes))


# --------------------------------------------------------------------------------------------
# γ±(T)
# --------------------------------------------------------------------------------------------

def _gamma_table(isotherms: Sequence[Isotherm]) -> pd.DataFrame:
    """γ± at round molalities within each isotherm's range, from its fitted model."""
    rows = []
    for index, iso in enumerate(isotherms):
        red = iso.reduction
        used = usable_points(red.run)["molality_mol_kg"].to_numpy(float)
        low, high = used.min(), used.max()
        molality = np.array([m for m in ROUND_MOLALITIES_MOL_KG
                             if low * (1 - 1e-9) <= m <= high * (1 + 1e-9)])
        if molality.size == 0:
            continue
        ln_g = red.ln_gamma_model(molality, iso.setpoint_K)
        values = red.model_parameter_values
        names = red.uncertain_names or red.free_names
        matrix = red.covariance if red.uncertain_covariance is None else red.uncertain_covariance
        keep = [i for i, name in enumerate(names) if name in values]
        if keep:
            constants = debye_hueckel_constants(np.full(molality.size, iso.setpoint_K))
            gradient = central_difference_jacobian(
                lambda v, m=molality, c=constants, r=red: r.model.ln_gamma(
                    r.electrolyte, m, c, v), values, [names[i] for i in keep])
            cov = np.asarray(matrix, float)[np.ix_(keep, keep)]
            u_ln = np.sqrt(np.maximum(np.einsum("ij,jk,ik->i", gradient, cov, gradient), 0.0))
        else:
            u_ln = np.zeros(molality.size)
        gamma = np.exp(ln_g)
        for m, g, u in zip(molality, gamma, gamma * u_ln, strict=True):
            rows.append({"isotherm": index, "temperature_K": iso.setpoint_K,
                         "temperature_C": iso.setpoint_K - ZERO_CELSIUS_K,
                         "molality_mol_kg": float(m), "gamma_pm": float(g),
                         "u_gamma_pm": float(u), "model": red.model.name})
    return pd.DataFrame(rows, columns=["isotherm", "temperature_K", "temperature_C",
                                       "molality_mol_kg", "gamma_pm", "u_gamma_pm", "model"])


# --------------------------------------------------------------------------------------------
# The study
# --------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class TemperatureStudy:
    """A temperature study: the isotherms, E°(T), the thermodynamics, the global cross-check and
    γ± at round molalities against T.

    Attributes
    ----------
    isotherms : tuple of Isotherm
        Coolest first.
    standard_potential_fit : StandardPotentialFit
        E°(T) of the isotherm values and the quantities at θ and at every isotherm.
    global_fit : GlobalFit or None
        The cross-check (None when not asked for or when it failed; ``notes`` says why).
    gamma_table : pandas.DataFrame
        Tidy: ``isotherm``, ``temperature_K``, ``temperature_C``, ``molality_mol_kg``,
        ``gamma_pm``, ``u_gamma_pm`` (k = 1, from each isotherm's fitted model and its
        parameters' covariance), ``model``.
    passes : int
        Reductions of every isotherm until the setpoint correction settled.
    cell : str or None
        The cell diagram (the reaction as written, with ``electrons``).
    electrolyte : str
        Formula of the electrolyte.
    notes, warnings : tuple of str
    """

    isotherms: tuple[Isotherm, ...]
    standard_potential_fit: StandardPotentialFit
    global_fit: GlobalFit | None
    gamma_table: pd.DataFrame = field(repr=False)
    passes: int
    cell: str | None
    electrolyte: str
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def reference_temperature_K(self) -> float:
        """θ [K]."""
        return self.standard_potential_fit.reference_temperature_K

    @property
    def electrons(self) -> int:
        """n of the cell reaction as written [-]."""
        return self.standard_potential_fit.electrons

    @property
    def reaction(self) -> str | None:
        """The cell reaction as the diagram writes it, per n electrons (None without one)."""
        return None if self.cell is None else cell_from_diagram(self.cell).reaction_text

    @property
    def standard_pressure_Pa(self) -> float:
        """The pressure basis of every E° and quantity [Pa]."""
        return self.standard_potential_fit.standard_pressure_Pa

    @property
    def reference(self) -> ThermodynamicValues:
        """The quantities at θ from the two-stage result."""
        return self.standard_potential_fit.reference

    def to_frame(self) -> pd.DataFrame:
        """Every reading of every isotherm (flagged rows included), coolest isotherm first:
        each isotherm's points table (:meth:`Reduction.to_frame`, readings referred to the
        setpoint) with ``isotherm`` (0, 1, …) and ``isotherm_temperature_K`` in front."""
        frames = []
        for index, iso in enumerate(self.isotherms):
            points = iso.reduction.to_frame()
            points.insert(0, "isotherm_temperature_K", iso.setpoint_K)
            points.insert(0, "isotherm", index)
            frames.append(points)
        return pd.concat(frames, ignore_index=True)

    def _repr_html_(self) -> str:
        """The headline table for a notebook: the quantities at θ with u (k = 1), the form of
        E°(T), χ²/ν, the isotherms (T, n, model, E° ± u), the warnings."""
        fit = self.standard_potential_fit
        ref = fit.reference
        rows: list[tuple[str, str]] = [
            ("cell" if self.cell else "electrolyte", self.cell or self.electrolyte),
            ("θ / °C", f"{self.reference_temperature_K - ZERO_CELSIUS_K:.2f}"),
            ("E°(T)", fit.form.equation),
        ]
        shown = (("standard_potential_V", "E° / mV", 1e3),
                 ("delta_G_J_mol", "ΔG° / kJ mol⁻¹", 1e-3),
                 ("delta_H_J_mol", "ΔH° / kJ mol⁻¹", 1e-3),
                 ("delta_S_J_K_mol", "ΔS° / J K⁻¹ mol⁻¹", 1.0),
                 ("delta_Cp_J_K_mol", "ΔCp° / J K⁻¹ mol⁻¹", 1.0), ("log10_K", "log₁₀ K", 1.0))
        for name, label, scale in shown:
            estimate = ref.estimate(name)
            rows.append((f"{label} (k = 1)",
                         value_with_uncertainty(estimate.value, estimate.uncertainty, scale)))
        rows += [
            (f"χ²/ν of E°(T) (ν = {fit.form.dof})",
             f"{fit.form.chi2 / fit.form.dof:.3g}" if fit.form.dof > 0 else "—"),
            ("p° / kPa, coverage factor k (95 %)",
             f"{self.standard_pressure_Pa / 1e3:g}, {ref.coverage_factor:.3g}"),
        ]
        for iso in self.isotherms:
            e0 = iso.standard_potential_V
            stats = iso.reduction.statistics
            rows.append((f"isotherm {iso.setpoint_K - ZERO_CELSIUS_K:.2f} °C",
                         f"E° = {value_with_uncertainty(e0.value, e0.uncertainty, 1e3)} mV, "
                         f"{iso.n_points} readings, {iso.model}, χ²/ν = "
                         f"{stats.reduced_chi2:.3g}"))
        return html_table(f"Temperature study, {self.electrolyte}", ("quantity", "value"), rows,
                          warnings=self.warnings, notes=self.notes)

    def to_dict(self) -> dict[str, Any]:
        """The record section ``temperature_study``: plain data, units in the key names.

        Keys: ``reference_temperature_K``, ``form`` (and ``form_reason``), ``isotherms``
        ([{temperature_K, n_points, model, standard_potential_V: {value, uncertainty}, …}]),
        ``standard_potential_V``, ``delta_G_J_mol``, ``delta_H_J_mol``, ``delta_S_J_K_mol``,
        ``delta_Cp_J_K_mol``, ``log10_K`` (each {value, uncertainty}, k = 1),
        ``correlation_delta_H_delta_S``, ``coefficients`` (names, values and covariance of the
        chosen E°(T)), ``e0_fit`` (both forms, criteria, F-tests), ``at_isotherms``,
        ``global_fit``, ``gamma_table``, ``electrons``, ``cell``, ``standard_pressure_Pa``,
        ``notes``, ``warnings``. NaN is None.
        """
        fit = self.standard_potential_fit
        ref = fit.reference
        out: dict[str, Any] = {
            "reference_temperature_K": self.reference_temperature_K,
            "form": fit.chosen,
            "form_reason": fit.choice_reason,
            "electrolyte": self.electrolyte,
            "cell": self.cell,
            "reaction": self.reaction,
            "electrons": self.electrons,
            "standard_pressure_Pa": self.standard_pressure_Pa,
            "passes": self.passes,
            "isotherms": [iso.to_dict() for iso in self.isotherms],
        }
        for name in QUANTITIES:
            out[name] = ref.estimate(name).to_dict()
        out["correlation_delta_H_delta_S"] = _plain(ref.correlation("delta_H_J_mol",
                                                                    "delta_S_J_K_mol"))
        out["covariance_at_reference"] = ref.to_dict()["covariance"]
        out["coverage_factor_95"] = ref.coverage_factor
        out["coefficients"] = {
            "form": fit.form.form, "equation": fit.form.equation,
            "names": list(fit.form.coefficient_names),
            "values": [_plain(v) for v in fit.form.coefficients],
            "covariance": [[_plain(v) for v in row] for row in fit.form.covariance]}
        out["e0_fit"] = fit.to_dict()
        out["at_isotherms"] = [v.to_dict() for v in fit.at_temperatures]
        out["global_fit"] = None if self.global_fit is None else self.global_fit.to_dict()
        out["gamma_table"] = [
            {k: (_plain(v) if isinstance(v, float) else v) for k, v in row.items()}
            for row in self.gamma_table.to_dict(orient="records")]
        out["notes"] = list(self.notes)
        out["warnings"] = list(self.warnings)
        return out


def _check_common_metadata(runs: Sequence[Run]) -> None:
    first = runs[0].metadata
    for run in runs[1:]:
        meta = run.metadata
        for what, mine, theirs in (
                ("electrolyte", meta.electrolyte.formula, first.electrolyte.formula),
                ("electrons", meta.electrons, first.electrons),
                ("standard_pressure_kPa", meta.standard_pressure_Pa / 1e3,
                 first.standard_pressure_Pa / 1e3),
                ("cell reaction direction", meta.electrolyte_sign, first.electrolyte_sign)):
            if mine != theirs:
                raise InputError(f"{what} is {mine} here but {theirs} in {runs[0].path}; one "
                                 "temperature study needs one cell reaction on one pressure "
                                 "basis", file=str(run.path), column=what)


def study_temperatures(
    runs: Run | Sequence[Run],
    model: str = "hueckel",
    fixed: Mapping[str, Any] | None = None,
    reference_temperature_K: float = 298.15,
    tolerance_K: float = 0.5,
    *,
    cross_check: bool = True,
) -> TemperatureStudy:
    r"""Reduce isotherms, fit E°(T) and derive the thermodynamics of the cell reaction.

    Parameters
    ----------
    runs : Run or sequence of Run
        One run whose rows sit at several setpoints, or several runs (each grouped on its own;
        isotherms of different runs at one temperature stay separate determinations). Every run
        must describe the same cell reaction (electrolyte, n, direction) on the same pressure
        basis; barometric pressure and the rest of the metadata may differ.
    model : str
        Activity-coefficient model of every isotherm (see :data:`activolt.activity.MODELS`), or
        ``"all"`` to compare the models on each isotherm and take the recommended one with its
        model-choice component.
    fixed : mapping, optional
        Held parameters, as for :func:`~activolt.procedures.dilution.reduce_run` (or, with
        ``"all"``, per model as for :func:`~activolt.procedures.model_choice.compare_models`).
    reference_temperature_K : float
        θ, where the quantities are reported [K].
    tolerance_K : float
        Rows within this of a neighbour's temperature form one isotherm [K]
        (:func:`group_isotherms`).
    cross_check : bool
        Run the global fit (:class:`GlobalFit`).

    Returns
    -------
    TemperatureStudy

    Raises
    ------
    InputError
        One isotherm only, an isotherm with fewer than 3 usable readings, temperatures or θ
        outside liquid water, runs that differ in the cell reaction or pressure basis, and every
        bad input of the single-temperature reduction.
    FitError
        An isotherm that cannot be reduced (the message names it).

    Notes
    -----
    Readings off their setpoint T_s are referred to it, E_i − (dE°/dT)(T_s)·(T_i − T_s), with
    each reading's own T_i kept in its Nernst slope and its Debye–Hückel constants; the slope
    comes from the study's own E°(T) (0 in the first pass) and the isotherms are reduced again
    until no correction moves by more than 10 nV (at most four passes). The E° values enter
    E°(T) with a diagonal covariance — each isotherm's u(E°); inputs common to several isotherms
    (one electrode batch, one thermometer) would correlate them and are not identified here.
    See :func:`fit_standard_potential` for E°(T) and the thermodynamics.
    """
    runs = (runs,) if isinstance(runs, Run) else tuple(runs)
    if not runs:
        raise InputError("no runs given for the temperature study")
    _check_common_metadata(runs)
    _check_liquid_water(np.array([float(reference_temperature_K)]), "reference temperature",
                        column="reference_temperature_K")
    for run in runs:
        t = run.points["temperature_K"].to_numpy(float)
        low, high = LIQUID_WATER_K
        bad = np.flatnonzero(~((t >= low - 1e-9) & (t <= high + 1e-9)))
        if bad.size:
            value = float(t[bad[0]])
            raise InputError(f"temperature {value - ZERO_CELSIUS_K:.2f} °C is outside liquid "
                             "water (0–100 °C); check the value and its unit", file=str(run.path),
                             line=int(run.points["line"].iloc[bad[0]]), column="temperature_C")
    groups = [group for run in runs for group in group_isotherms(run, tolerance_K)]
    groups.sort(key=lambda g: g[0])
    setpoints = np.array([g[0] for g in groups])
    distinct = 1 + int(np.sum(np.diff(setpoints) > tolerance_K))
    if distinct < 2:
        raise InputError(f"every reading lies at {setpoints[0] - ZERO_CELSIUS_K:.2f} °C: a "
                         "temperature study needs isotherms at two temperatures at least "
                         "(reduce a single isotherm with reduce_run)", file=str(runs[0].path),
                         column="temperature_C")
    for setpoint, run in groups:
        n = int(run.points["flag"].isna().sum())
        if n < _MIN_POINTS:
            raise InputError(f"the isotherm at {setpoint - ZERO_CELSIUS_K:.2f} °C has {n} usable "
                             f"reading(s); each isotherm needs at least {_MIN_POINTS}",
                             file=str(run.path), line=int(run.points["line"].iloc[0]),
                             column="temperature_C")
    electrons = runs[0].metadata.electrons
    pressure = runs[0].metadata.standard_pressure_Pa

    slopes = np.zeros(len(groups))
    offsets = [np.abs(usable_points(r)["temperature_K"].to_numpy(float) - s).max()
               for s, r in groups]
    passes = 0
    while True:
        passes += 1
        isotherms = []
        corrections = []
        for (setpoint, run), slope, offset in zip(groups, slopes, offsets, strict=True):
            corrected, delta = _corrected(run, setpoint, float(slope))
            try:
                reduction, comparison = _reduce(corrected, model, fixed)
            except FitError as error:
                raise FitError(f"isotherm at {setpoint - ZERO_CELSIUS_K:.2f} °C: {error}"
                               ) from None
            corrections.append(delta)
            isotherms.append(Isotherm(
                setpoint_K=setpoint, run=run, reduction=reduction, comparison=comparison,
                max_offset_K=float(offset), max_correction_V=float(np.abs(delta).max()),
                mean_correction_V=float(delta.mean()), slope_V_K=float(slope)))
        fit = fit_standard_potential(
            setpoints, [iso.standard_potential_V.value for iso in isotherms],
            covariance_V2=isotherm_covariance([iso.reduction for iso in isotherms]),
            electrons=electrons, reference_temperature_K=reference_temperature_K,
            standard_pressure_Pa=pressure)
        if max(offsets) == 0.0:
            break
        new = fit.form.slope_V_K(setpoints)
        change = float(np.max(np.abs(new - slopes) * np.array(offsets)))
        if change <= CORRECTION_TOLERANCE_V or passes >= MAX_PASSES:
            break
        slopes = new

    shared = sorted({name for iso in isotherms for name, _, _ in iso.reduction.shared_inputs})
    notes = ["E°(T) weights: each isotherm's u(E°) (model, holding, budget)"
             + (f"; the isotherms are correlated through {', '.join(shared)} stated alike "
                "in their runs" if shared else
                "; no input stated as shared (u_stock_molality_relative, "
                "u_electrode_offset_mV): the isotherms are taken as independent")]
    notes.extend(fit.notes)
    if max(offsets) > 0:
        notes.append(f"readings off their setpoint (up to {max(offsets):.3g} K) referred to it "
                     f"with the study's dE°/dT; largest correction "
                     f"{max(i.max_correction_V for i in isotherms) * 1e3:.3g} mV, "
                     f"{passes} pass(es)")
    warnings = [f"{iso.setpoint_K - ZERO_CELSIUS_K:.2f} °C: {w}" for iso in isotherms
                for w in _isotherm_warnings(iso)]
    global_fit = None
    if cross_check:
        try:
            global_fit = _global_fit(isotherms, fit, fixed if model != "all" else None)
        except (FitError, ValueError) as error:
            notes.append(f"global cross-check not available: {error}")
    return TemperatureStudy(
        isotherms=tuple(isotherms), standard_potential_fit=fit, global_fit=global_fit,
        gamma_table=_gamma_table(isotherms), passes=passes, cell=runs[0].metadata.cell,
        electrolyte=runs[0].metadata.electrolyte.formula, notes=tuple(notes),
        warnings=tuple(warnings))
