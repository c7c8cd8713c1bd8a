r"""Calibration of a batch of reference electrodes: E° (or the potential) of every electrode with a
GUM budget, acceptance by a stated decision rule, batch statistics, and each electrode's history
(drift per month and an individuals / moving-range control chart).

Two routes, declared in the metadata (``calibration_method``):

* **hydrogen** — each electrode against a hydrogen electrode in HCl of stated molality m; with
  the reading E corrected to p(H2) = p° as in reductions,

  .. math:: E° = E + σ k \ln(m_± γ_±), \qquad k = νRT/(nF)

  (for Pt | H2 | HCl(m) | AgCl | Ag: E° = E + (2RT/F) ln(m γ±)) with γ± the conventional value
  — 0.904 for 0.01 mol/kg HCl at 25 °C (Buck et al. 2002, the IUPAC pH recommendations). When
  an electrode was read in several molalities, its E° comes from a full dilution reduction
  (:func:`activolt.procedures.dilution.reduce_run`) of its own rows instead.
* **master** — each electrode read against a master electrode of stated potential in a common
  solution; the reading is E = E(electrode) − E(master) (the electrode on the positive
  terminal), so E(electrode) = E(master) + E, with the master's certificate u in the budget.

References
----------
.. [1] Buck, R. P. et al. (2002). Measurement of pH. Definition, standards, and procedures
   (IUPAC Recommendations 2002). Pure Appl. Chem. 74, 2169–2200.
.. [2] JCGM 100:2008 (GUM), 4.2 (Type A), G.4.1 (Welch–Satterthwaite), G.3 (Student's t).
.. [3] ILAC-G8:09/2019, Guidelines on decision rules and statements of conformity, 4.2.
.. [4] Western Electric Co. (1956). Statistical Quality Control Handbook, rules 1–4;
   Nelson, L. S. (1984). J. Qual. Technol. 16, 237 (rule 3: a trend of six).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..chemistry.cells import cell_summary
from ..chemistry.electrolytes import nernst_factor
from ..data.runs import Run, read_run
from ..errors import FitError, InputError
from ..fit.least_squares import linear_least_squares
from ..fit.problem import gas_correction
from ..fit.uncertainty import student_t_factor
from ..physics.water import debye_hueckel_constants
from ..rounding import decimals_for
from .dilution import reduce_run
from .display import html_table, rounded_uncertainty, value_with_uncertainty

__all__ = ["CONVENTIONAL_GAMMA_HCL", "CONVENTIONAL_MOLALITY_MOL_KG", "CalibrationBatch",
           "ControlChart", "ElectrodeCalibration", "ElectrodeHistory", "UncertaintyComponent",
           "calibrate", "conventional_gamma_hcl", "electrode_history", "welch_satterthwaite"]

#: γ± of HCl at 0.01 mol/kg and 25 °C fixed by convention for the E° of Ag|AgCl electrodes
#: (Buck et al. 2002, Pure Appl. Chem. 74, 2169, the primary pH procedure).
CONVENTIONAL_GAMMA_HCL: float = 0.904
CONVENTIONAL_MOLALITY_MOL_KG: float = 0.01
_CONVENTION_TEMPERATURE_K = 298.15
#: Bates–Guggenheim Bå = 1.5 (kg/mol)^½ (IUPAC Gold Book).
_BATES_GUGGENHEIM = 1.5
#: Molalities [mol/kg] the conventional route accepts (the convention is stated at 0.01).
_CONVENTIONAL_RANGE_MOL_KG = (0.005, 0.02)
#: d₂ of ranges of two, σ = MR̄/d₂ (common practice; ASTM E2587 Table 1: 1.128).
_D2 = 1.128
#: The normal-consistency factor of the median absolute deviation, 1/Φ⁻¹(3/4) (common practice).
_MAD_FACTOR = 1.4826
#: Mean Gregorian month [days] = 365.2425/12.
_MONTH_DAYS = 365.2425 / 12.0
_STEP_K = 0.01
_STEP_PA = 10.0
_STEP_RELATIVE = 1e-6

@dataclass(frozen=True)
class UncertaintyComponent:
    """One line of an electrode's GUM budget.

    ``u_V`` is the standard uncertainty this input alone gives the electrode's potential [V];
    ``dof`` its degrees of freedom (``math.inf`` for a Type B input taken as exactly known);
    ``method`` how it was obtained; ``counted`` False for a line stated but not in u (the
    convention of the hydrogen route: a definition, not an uncertainty).
    """

    component: str
    u_V: float
    dof: float
    method: str
    counted: bool = True

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: ``{component, u_V, dof (None for infinite), method, counted}``."""
        return {"component": self.component, "u_V": self.u_V, "dof": _finite(self.dof),
                "method": self.method, "counted": self.counted}


@dataclass(frozen=True)
class ElectrodeCalibration:
    """The calibration of one electrode.

    Attributes
    ----------
    electrode : str
        The electrode's identifier (the table's ``electrode`` column).
    standard_potential_V : float
        E° (hydrogen route) or the electrode's potential (master route) [V].
    standard_uncertainty_V : float
        Combined standard uncertainty u_c [V] (the counted budget lines).
    budget : tuple of UncertaintyComponent
    effective_dof : float
        ν_eff by Welch–Satterthwaite (GUM G.4.1); ``math.inf`` when every line is Type B.
    coverage_factor : float
        k from Student's t at ν_eff for about 95 % coverage.
    expanded_uncertainty_V : float
        U = k u_c [V].
    deviation_V : float
        E° − the acceptance reference [V].
    verdict : str
        ``"pass"`` or ``"fail"`` by the batch's decision rule.
    n_readings : int
    lines : tuple of int
        The table lines of the electrode's readings.
    temperature_K : float
        Mean temperature of its readings [K].
    route : str
        ``"conventional γ±"``, ``"dilution reduction"`` or ``"master"``.
    outlier : bool
        Outside the batch's robust screen (median ± 3 × 1.4826 MAD).
    notes : tuple of str
    """

    electrode: str
    standard_potential_V: float
    standard_uncertainty_V: float
    budget: tuple[UncertaintyComponent, ...]
    effective_dof: float
    coverage_factor: float
    expanded_uncertainty_V: float
    deviation_V: float
    verdict: str
    n_readings: int
    lines: tuple[int, ...]
    temperature_K: float
    route: str
    outlier: bool = False
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: ``electrode``, ``standard_potential_V: {value, uncertainty}``,
        ``expanded_uncertainty_V``, ``coverage_factor``, ``deviation_V``, ``verdict``, and
        ``effective_dof``, ``budget``, ``n_readings``, ``lines``, ``temperature_K``, ``route``,
        ``outlier``, ``notes``."""
        return {
            "electrode": self.electrode,
            "standard_potential_V": {"value": self.standard_potential_V,
                                     "uncertainty": self.standard_uncertainty_V},
            "expanded_uncertainty_V": self.expanded_uncertainty_V,
            "coverage_factor": self.coverage_factor,
            "deviation_V": self.deviation_V,
            "verdict": self.verdict,
            "effective_dof": _finite(self.effective_dof),
            "budget": [line.to_dict() for line in self.budget],
            "n_readings": self.n_readings,
            "lines": list(self.lines),
            "temperature_K": self.temperature_K,
            "route": self.route,
            "outlier": self.outlier,
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class CalibrationBatch:
    """A calibrated batch: every electrode, the batch statistics and the acceptance block.

    Attributes
    ----------
    method : str
        ``"hydrogen"`` or ``"master"``.
    electrodes : tuple of ElectrodeCalibration
        In order of first appearance in the table.
    acceptance : mapping
        ``tolerance_V``, ``reference`` (``median``/``nominal``/``catalogue``),
        ``reference_value_V``, ``decision_rule`` (``simple``/``guard-banded``), ``rule`` (the
        rule in words, for record and certificate).
    statistics : mapping
        ``n``, ``mean_V``, ``median_V``, ``standard_deviation_V``, ``mad_V``,
        ``screen_low_V``, ``screen_high_V``, ``outliers`` (electrode ids).
    convention : str
        The convention the E° values rest on (hydrogen route), or the master's certificate.
    date : str or None
        The metadata's ``date`` (ISO 8601), which a history orders records by.
    run : Run or None
        The batch table as read.
    warnings : tuple of str
    """

    method: str
    electrodes: tuple[ElectrodeCalibration, ...]
    acceptance: Mapping[str, Any]
    statistics: Mapping[str, Any]
    convention: str
    date: str | None = None
    run: Any = field(default=None, repr=False, compare=False)
    warnings: tuple[str, ...] = ()

    @property
    def all_pass(self) -> bool:
        """Whether every electrode passes (the command's exit status 0, else 3)."""
        return all(e.verdict == "pass" for e in self.electrodes)

    def electrode(self, name: str) -> ElectrodeCalibration:
        """The calibration of the electrode ``name`` (KeyError when absent)."""
        for calibration in self.electrodes:
            if calibration.electrode == name:
                return calibration
        raise KeyError(name)

    def to_frame(self) -> pd.DataFrame:
        """One row per electrode, in order of the table (the readings as read are
        ``run.points``): ``electrode``, ``standard_potential_V``, ``u_standard_potential_V``
        (k = 1), ``effective_dof``, ``coverage_factor``, ``expanded_uncertainty_V``,
        ``deviation_V``, ``verdict``, ``n_readings``, ``temperature_K``, ``route``,
        ``outlier``, ``notes`` (joined by ``"; "``)."""
        return pd.DataFrame(
            [{"electrode": e.electrode, "standard_potential_V": e.standard_potential_V,
              "u_standard_potential_V": e.standard_uncertainty_V,
              "effective_dof": e.effective_dof, "coverage_factor": e.coverage_factor,
              "expanded_uncertainty_V": e.expanded_uncertainty_V,
              "deviation_V": e.deviation_V, "verdict": e.verdict,
              "n_readings": e.n_readings, "temperature_K": e.temperature_K,
              "route": e.route, "outlier": e.outlier, "notes": "; ".join(e.notes)}
             for e in self.electrodes])

    def _repr_html_(self) -> str:
        """The headline table for a notebook: per electrode E° ± u (k = 1), U with k, the
        deviation from the acceptance reference and the verdict; the rule and the warnings."""
        rows = [(e.electrode, value_with_uncertainty(e.standard_potential_V,
                                                     e.standard_uncertainty_V, 1e3),
                 f"{rounded_uncertainty(e.expanded_uncertainty_V, 1e3)} "
                 f"(k = {e.coverage_factor:.3g})",
                 f"{e.deviation_V * 1e3:+.{decimals_for(e.expanded_uncertainty_V * 1e3)}f}",
                 e.n_readings, e.verdict + (", outlier" if e.outlier else ""))
                for e in self.electrodes]
        passed = sum(e.verdict == "pass" for e in self.electrodes)
        caption = (f"Calibration ({self.method} route), {passed} of {len(self.electrodes)} "
                   "electrodes pass")
        return html_table(caption, ("electrode", "E° / mV (k = 1)", "U / mV", "deviation / mV",
                                    "readings", "verdict"), rows,
                          warnings=self.warnings,
                          notes=(str(self.acceptance.get("rule", "")), self.convention))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready data: ``method``, ``date``, ``temperature_K``, ``convention``,
        ``electrodes`` (each :meth:`ElectrodeCalibration.to_dict`), ``acceptance``,
        ``batch_statistics``, ``all_pass``, ``warnings``."""
        return {
            "method": self.method,
            "date": self.date,
            "temperature_K": float(np.mean([e.temperature_K for e in self.electrodes])),
            "convention": self.convention,
            "electrodes": [e.to_dict() for e in self.electrodes],
            "acceptance": dict(self.acceptance),
            "batch_statistics": {k: (list(v) if isinstance(v, tuple) else _finite(v)
                                     if isinstance(v, float) else v)
                                 for k, v in self.statistics.items()},
            "all_pass": self.all_pass,
            "warnings": list(self.warnings),
        }


@dataclass(frozen=True)
class ControlChart:
    """An individuals / moving-range chart of one electrode's E° values.

    The centre line is the mean of the history (every point but the newest), σ = MR̄/1.128
    (d₂ for ranges of two); limits at centre ± 3σ. ``violations`` maps a rule's name to the
    indices (into ``values_V``) of the points at which it fires: ``"rule 1"`` a point beyond
    3σ, ``"rule 2"`` two of three beyond 2σ on one side, ``"rule 3"`` four of five beyond 1σ on
    one side, ``"rule 4"`` eight in a row on one side (Western Electric 1956), ``"trend"`` six
    in a row steadily rising or falling (Nelson 1984, rule 3). ``out_of_control`` is True when a
    rule fires at the newest point.
    """

    values_V: tuple[float, ...]
    centre_V: float
    sigma_V: float
    lower_limit_V: float
    upper_limit_V: float
    moving_range_mean_V: float
    violations: Mapping[str, tuple[int, ...]]
    out_of_control: bool


@dataclass(frozen=True)
class ElectrodeHistory:
    """One electrode's calibrations in time: the drift and the control chart.

    ``dates`` (ISO 8601), ``months`` (since the first, a month = 365.2425/12 days),
    ``values_V`` and ``uncertainties_V`` (standard) per calibration; ``drift_V_per_month``
    and its standard uncertainty from a weighted straight line (None with fewer than three
    calibrations); ``chart`` (None with fewer than four); ``flagged`` when the chart is out of
    control or the drift differs from zero by more than twice its uncertainty — even when the
    newest calibration passes; ``reasons`` says why.
    """

    electrode: str
    dates: tuple[str, ...]
    months: tuple[float, ...]
    values_V: tuple[float, ...]
    uncertainties_V: tuple[float, ...]
    drift_V_per_month: float | None
    u_drift_V_per_month: float | None
    chart: ControlChart | None
    flagged: bool
    reasons: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready data of the history."""
        chart = None
        if self.chart is not None:
            chart = {**{k: v for k, v in dataclasses.asdict(self.chart).items()
                        if k != "violations"},
                     "values_V": list(self.chart.values_V),
                     "violations": {k: list(v) for k, v in self.chart.violations.items()}}
        return {"electrode": self.electrode, "dates": list(self.dates),
                "months": list(self.months), "values_V": list(self.values_V),
                "uncertainties_V": list(self.uncertainties_V),
                "drift_V_per_month": self.drift_V_per_month,
                "u_drift_V_per_month": self.u_drift_V_per_month, "control_chart": chart,
                "flagged": self.flagged, "reasons": list(self.reasons)}


def _finite(value: float) -> float | None:
    """A float for JSON: None for an infinite or undefined value."""
    return float(value) if value is not None and math.isfinite(value) else None


def welch_satterthwaite(u_V: Sequence[float], dof: Sequence[float]) -> float:
    r"""Effective degrees of freedom of a combined standard uncertainty (GUM G.4.1).

    Parameters
    ----------
    u_V : sequence of float
        The components u_i(y) = |c_i| u(x_i) [any one unit].
    dof : sequence of float
        Their degrees of freedom ν_i (``math.inf`` for an input taken as exactly known).

    Returns
    -------
    float
        ν_eff (``math.inf`` when every component with u_i > 0 has infinite ν_i).

    Notes
    -----
    .. math:: ν_{eff} = \frac{u_c^4}{\sum_i u_i^4/ν_i}, \qquad u_c^2 = \sum_i u_i^2

    GUM (JCGM 100:2008) G.4.1, Eq. (G.2b).

    Examples
    --------
    Two components u = (1, 1) with ν = (4, 9), by hand: ν_eff = 2² / (1/4 + 1/9) = 11.08.

    >>> round(welch_satterthwaite([1.0, 1.0], [4, 9]), 2)
    11.08
    """
    u = np.asarray(u_V, dtype=float)
    nu = np.asarray(dof, dtype=float)
    if u.shape != nu.shape or np.any(u < 0) or np.any(nu <= 0):
        raise ValueError("u_V and dof must have one entry each, u ≥ 0 and ν > 0")
    total = float(np.sum(u**2)) ** 2
    finite = np.isfinite(nu) & (u > 0)
    denominator = float(np.sum(u[finite] ** 4 / nu[finite]))
    if denominator == 0.0:
        return math.inf
    return total / denominator


def conventional_gamma_hcl(temperature_K: float,
                           molality_mol_kg: float = CONVENTIONAL_MOLALITY_MOL_KG) -> float:
    r"""The conventional γ± of HCl(aq) for the E° of an Ag|AgCl electrode batch.

    Parameters
    ----------
    temperature_K : float
        Temperature [K].
    molality_mol_kg : float
        HCl molality [mol kg⁻¹] (the convention is stated at 0.01).

    Returns
    -------
    float
        γ± [-]: 0.904 at 0.01 mol/kg and 25 °C (Buck et al. 2002).

    Notes
    -----
    .. math:: \log_{10} γ_± = -\frac{A(T)\sqrt{m}}{1 + 1.5\sqrt{m}} + b\,m

    with A(T) the Debye–Hückel slope of this package (IAPWS water) and Bå = 1.5 (the
    Bates–Guggenheim convention), and b fixed once so that γ± = 0.904 at 0.01 mol/kg and
    25 °C. Away from 25 °C and 0.01 mol/kg this is an estimate made here (not a published
    table): the temperature enters only through A(T), the linear term is held at its 25 °C
    value. :func:`calibrate` marks it so and counts a Type B component for it.

    References
    ----------
    .. [1] Buck, R. P. et al. (2002). Pure Appl. Chem. 74, 2169–2200, Sect. 5 (the E° of the
       Ag|AgCl electrodes from 0.01 mol/kg HCl with γ± = 0.904 at 25 °C).

    Examples
    --------
    >>> round(conventional_gamma_hcl(298.15), 6)
    0.904
    """
    return float(10.0 ** _log10_gamma(temperature_K, molality_mol_kg))


def _linear_term() -> float:
    """b of :func:`conventional_gamma_hcl` [kg/mol], from γ± = 0.904 at 0.01 mol/kg, 25 °C."""
    a = float(debye_hueckel_constants([_CONVENTION_TEMPERATURE_K]).agamma_log10[0])
    root = math.sqrt(CONVENTIONAL_MOLALITY_MOL_KG)
    return (math.log10(CONVENTIONAL_GAMMA_HCL) + a * root / (1.0 + _BATES_GUGGENHEIM * root)
            ) / CONVENTIONAL_MOLALITY_MOL_KG


def _log10_gamma(temperature_K: Any, molality_mol_kg: Any) -> np.ndarray:
    t = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    root = np.sqrt(np.asarray(molality_mol_kg, dtype=float))
    a = debye_hueckel_constants(t).agamma_log10
    value = -a * root / (1.0 + _BATES_GUGGENHEIM * root) + _linear_term() * root**2
    return value if np.ndim(temperature_K) or np.ndim(molality_mol_kg) else value[0]


def _t_factor(dof: float) -> float:
    """k for about 95 % at ν_eff, truncated to the next lower integer (GUM G.4.1 note 1)."""
    if not math.isfinite(dof) or dof > 1e6:
        return student_t_factor(0)
    # a whole ν_eff computed as 7.999… stays 8
    return student_t_factor(max(math.floor(dof * (1.0 + 1e-9)), 1))


# ---------------------------------------------------------------------------------------------
# One electrode


@dataclass(frozen=True)
class _Electrode:
    """An electrode's value before the batch is judged: E°, budget, readings."""

    name: str
    value_V: float
    budget: list[UncertaintyComponent]
    lines: tuple[int, ...]
    temperature_K: float
    route: str
    per_reading_V: np.ndarray | None
    notes: tuple[str, ...] = ()


def _rows_run(run: Run, rows: pd.DataFrame) -> Run:
    return dataclasses.replace(run, points=rows.reset_index(drop=True))


def _conventional_values(run: Run, rows: pd.DataFrame) -> np.ndarray:
    """E°_i = E_i(p°) + σ k_i ln(m±_i γ±_i) per reading [V]."""
    meta = run.metadata
    correction, _ = gas_correction(run, rows)
    emf = rows["emf_V"].to_numpy(float)
    if correction is not None:
        emf = emf + correction
    temperature = rows["temperature_K"].to_numpy(float)
    molality = rows["molality_mol_kg"].to_numpy(float)
    k = nernst_factor(meta.electrolyte, meta.electrons, temperature)
    ln_activity = (np.log(meta.electrolyte.mean_molality(molality))
                   + math.log(10.0) * _log10_gamma(temperature, molality))
    return emf + meta.electrolyte_sign * k * ln_activity


def _shifted_effects(run: Run, rows: pd.DataFrame, value: Any
                     ) -> list[tuple[str, float, float, str]]:
    """(component, u, ∂E°/∂input, how) for the temperature, the barometric pressure and the
    molality, by one finite step each (GUM 5.1.3)."""
    meta = run.metadata
    base = float(np.mean(value(run, rows)))
    out = []
    step = -_STEP_K if float(rows["temperature_K"].max()) + _STEP_K > 373.15 else _STEP_K
    moved = rows.assign(temperature_K=rows["temperature_K"] + step)
    out.append(("temperature", meta.u_temperature_K,
                (float(np.mean(value(run, moved))) - base) / step,
                f"stated u(T) = {meta.u_temperature_K:g} K (metadata u_temperature_K)"))
    gas = gas_correction(run, rows)[0] is not None
    if gas:
        moved = rows.assign(pressure_Pa=rows["pressure_Pa"] + _STEP_PA)
        barometric = (None if meta.barometric_pressure_Pa is None
                      else meta.barometric_pressure_Pa + _STEP_PA)
        shifted = dataclasses.replace(run, metadata=dataclasses.replace(
            meta, barometric_pressure_Pa=barometric))
        out.append(("pressure", meta.u_pressure_Pa,
                    (float(np.mean(value(shifted, moved))) - base) / _STEP_PA,
                    f"stated u(p) = {meta.u_pressure_Pa / 1e3:g} kPa (metadata "
                    "u_pressure_kPa), through the hydrogen-pressure correction"))
    else:
        out.append(("pressure", 0.0, 0.0, "no hydrogen-pressure correction (no cell diagram "
                                           "with H2(g), or no barometric pressure)"))
    moved = rows.assign(molality_mol_kg=rows["molality_mol_kg"] * (1.0 + _STEP_RELATIVE))
    out.append(("molality", meta.u_stock_molality_relative,
                (float(np.mean(value(run, moved))) - base) / _STEP_RELATIVE,
                f"stated relative u(m) = {meta.u_stock_molality_relative:g} (metadata "
                "u_stock_molality_relative)"))
    return out


def _repeatability(values: np.ndarray, stated_u: np.ndarray | None, what: str
                   ) -> UncertaintyComponent | None:
    """Type A: s/√n with n − 1 degrees of freedom (GUM 4.2.3); one reading: its stated u(EMF)
    (Type B), or None (the batch's pooled repeatability is used)."""
    n = len(values)
    if n >= 2:
        s = float(np.std(values, ddof=1))
        return UncertaintyComponent("repeatability", s / math.sqrt(n), float(n - 1),
                                    f"Type A: standard deviation of the mean of {n} {what}")
    if stated_u is not None and np.all(np.isfinite(stated_u)):
        return UncertaintyComponent("repeatability", float(stated_u[0]), math.inf,
                                    "one reading: its stated u(EMF) (Type B)")
    return None


def _hydrogen_electrode(run: Run, name: str, rows: pd.DataFrame, model: str) -> _Electrode:
    meta = run.metadata
    path = str(run.path)
    lines = tuple(int(x) for x in rows["line"])
    temperature = float(rows["temperature_K"].mean())
    voltmeter = _voltmeter(meta.calibration)
    molalities = np.unique(rows["molality_mol_kg"].to_numpy(float))
    if len(molalities) > 1:
        try:
            reduction = reduce_run(_rows_run(run, rows), model)
        except FitError as error:
            raise FitError(f"electrode {name}: its dilution series cannot be reduced ({error})"
                           ) from None
        stats = reduction.statistics
        budget = [UncertaintyComponent(
            "repeatability" if line.component == "readings" else line.component, line.u_V,
            float(stats.dof) if (line.component == "readings" and stats.covariance_scaled)
            else math.inf, line.method) for line in reduction.budget]
        counted = math.sqrt(sum(line.u_V**2 for line in budget))
        rest = reduction.standard_potential.std_dev**2 - counted**2
        if rest > (1e-3 * counted) ** 2:
            budget.append(UncertaintyComponent(
                "correlations and held terms of the fit", math.sqrt(rest), math.inf,
                "the rest of the reduction's u(E°) (Type B)"))
        budget += [voltmeter, UncertaintyComponent(
            "convention", 0.0, math.inf, "none: E° from a full dilution reduction "
            f"({reduction.model.name}) of {len(molalities)} molalities", counted=False)]
        return _Electrode(name, reduction.standard_potential.nominal_value, budget, lines,
                          temperature, "dilution reduction", None,
                          tuple(reduction.warnings))
    if meta.electrolyte.formula != "HCl":
        raise InputError(f"electrode '{name}': the conventional γ± is defined for HCl, not "
                         f"{meta.electrolyte.formula}; read each electrode in several "
                         "molalities for a dilution reduction", file=path, line=lines[0])
    low, high = _CONVENTIONAL_RANGE_MOL_KG
    if not low <= molalities[0] <= high:
        raise InputError(f"electrode '{name}': molality {molalities[0]:g} mol/kg is outside "
                         f"{low:g}–{high:g} mol/kg, where the conventional γ± (0.904 at 0.01 "
                         "mol/kg) applies; use 0.01 mol/kg HCl or several molalities",
                         file=path, line=lines[0], column="molality_mol_kg")
    per_reading = _conventional_values(run, rows)
    budget = []
    stated = rows["u_emf_V"].to_numpy(float) if run.emf_uncertainty_given else None
    line = _repeatability(per_reading, stated, "readings")
    if line is not None:
        budget.append(line)
    for component, u, sensitivity, how in _shifted_effects(run, rows, _conventional_values):
        budget.append(UncertaintyComponent(component, abs(sensitivity) * u, math.inf,
                                           how + "; sensitivity by one finite step"))
    budget.append(voltmeter)
    k = float(np.mean(nernst_factor(meta.electrolyte, meta.electrons,
                                    rows["temperature_K"].to_numpy(float))))
    molality = float(molalities[0])
    gamma = conventional_gamma_hcl(temperature, molality)
    notes = []
    derived = (abs(temperature - _CONVENTION_TEMPERATURE_K) > 0.05
               or abs(molality - CONVENTIONAL_MOLALITY_MOL_KG) > 1e-9)
    if derived:
        # the linear term's whole size, scaled by how far T is from 25 °C, rectangular
        b_m = abs(_linear_term() * molality)
        u_ln = math.log(10.0) * b_m * max(abs(temperature - _CONVENTION_TEMPERATURE_K) / 25.0,
                                           abs(math.log(molality / CONVENTIONAL_MOLALITY_MOL_KG)))
        budget.append(UncertaintyComponent(
            "γ± away from 0.01 mol/kg, 25 °C", k * u_ln / math.sqrt(3.0), math.inf,
            f"γ± = {gamma:.4f} estimated here (extended Debye–Hückel, Bå = 1.5, with the linear "
            "term fitted to 0.904 at 25 °C; not a published table): Type B, the linear term's "
            "size scaled by |ΔT|/25 K or |ln(m/0.01)|, rectangular"))
        notes.append(f"γ± = {gamma:.4f} at {temperature - 273.15:.2f} °C and {molality:g} "
                     "mol/kg is estimated from the extended Debye–Hückel equation fitted to "
                     "0.904 at 25 °C (not a published value)")
    budget.append(UncertaintyComponent(
        "convention", k * 0.001 / gamma, math.inf,
        f"γ± = 0.904 for 0.01 mol/kg HCl at 25 °C (Buck et al. 2002, Pure Appl. Chem. 74, "
        f"2169) — a definition, stated, not counted: the term σk ln γ± is "
        f"{meta.electrolyte_sign * k * math.log(gamma) * 1e3:+.3f} mV; u_V is the shift one "
        "unit in the third decimal of γ± would make", counted=False))
    return _Electrode(name, float(np.mean(per_reading)), budget, lines, temperature,
                      "conventional γ±", per_reading, tuple(notes))


def _voltmeter(calibration: Mapping[str, Any]) -> UncertaintyComponent:
    u = float(calibration.get("voltmeter_u_V", 0.0))
    return UncertaintyComponent(
        "voltmeter", u, math.inf,
        f"stated specification u = {u * 1e3:g} mV (metadata voltmeter_u_mV), Type B"
        if u > 0 else "no specification stated (metadata voltmeter_u_mV)")


def _master_electrode(run: Run, name: str, rows: pd.DataFrame) -> _Electrode:
    meta = run.metadata
    calibration = meta.calibration
    master = float(calibration["master_potential_V"])
    u_master = float(calibration.get("u_master_potential_V", 0.0))
    differences = rows["emf_V"].to_numpy(float)
    stated = rows["u_emf_V"].to_numpy(float) if run.emf_uncertainty_given else None
    budget = []
    line = _repeatability(differences, stated, "differences to the master")
    if line is not None:
        budget.append(line)
    budget += [
        UncertaintyComponent("master certificate", u_master, math.inf,
                             f"stated u = {u_master * 1e3:g} mV of the master's potential "
                             "(metadata u_master_potential_mV), Type B"),
        UncertaintyComponent("temperature", 0.0, math.inf,
                             "a difference of like electrodes in one solution: its temperature "
                             "coefficient is taken as zero (not estimated)"),
        UncertaintyComponent("pressure", 0.0, math.inf, "no gas electrode"),
        UncertaintyComponent("molality", 0.0, math.inf,
                             "the solution is common to electrode and master"),
        _voltmeter(calibration),
    ]
    return _Electrode(name, master + float(np.mean(differences)), budget,
                      tuple(int(x) for x in rows["line"]), float(rows["temperature_K"].mean()),
                      "master", differences)


# ---------------------------------------------------------------------------------------------
# The batch


def _electrode_rows(run: Run) -> list[tuple[str, pd.DataFrame]]:
    """Every electrode's rows, in order of first appearance; InputError for a row without an
    electrode or an electrode without a reading."""
    points = run.points
    path = str(run.path)
    names = points["electrode"].astype(str)
    if (names == "").all():
        raise InputError("a calibration table needs an 'electrode' column naming the electrode "
                         "of every reading", file=path, column="electrode")
    if (names == "").any():
        line = int(points.loc[names == "", "line"].iloc[0])
        raise InputError("this row names no electrode; give the electrode of every reading",
                         file=path, line=line, column="electrode")
    groups = []
    for name, rows in points.groupby(names, sort=False):
        usable = rows[rows["flag"].isna()]
        if usable.empty:
            raise InputError(f"electrode '{name}' has no reading; give at least one or remove "
                             "its rows", file=path, line=int(rows["line"].iloc[0]),
                             column=points.attrs.get("emf_column", "emf_V"))
        groups.append((str(name), usable))
    return groups


def _acceptance(run: Run, calibration: Mapping[str, Any], values: np.ndarray,
                temperature_K: float, method: str) -> dict[str, Any]:
    path = str(run.metadata_path or run.path)
    if "tolerance_V" not in calibration:
        raise InputError("no acceptance tolerance; add acceptance_tolerance_mV to the metadata",
                         file=path, column="acceptance_tolerance_mV")
    reference = calibration.get("reference", "median")
    if reference == "median":
        value = float(np.median(values))
    elif reference == "nominal":
        value = float(calibration["nominal_potential_V"])
    else:
        cell = run.metadata.cell
        if method != "hydrogen" or cell is None:
            raise InputError('acceptance_reference = "catalogue" needs the hydrogen route and a '
                             "cell diagram; give nominal_potential_mV with acceptance_reference "
                             '= "nominal" instead', file=path, column="acceptance_reference")

        standard = cell_summary(cell, temperature_K, run.metadata.standard_pressure_Pa).get(
            "standard_potential_V")
        if standard is None:
            raise InputError(f"the catalogue has no E° for '{cell}'", file=path,
                             column="acceptance_reference")
        value = float(standard["value"])
    tolerance = float(calibration["tolerance_V"])
    rule = calibration.get("decision_rule", "simple")
    words = {"median": "the batch median", "nominal": "the nominal potential",
             "catalogue": "the catalogue E° at the batch temperature"}[reference]
    text = (f"pass when |E° − {words}| ≤ {tolerance * 1e3:g} mV (simple acceptance, "
            "ILAC-G8:2019 4.2.1)" if rule == "simple" else
            f"pass when |E° − {words}| ≤ {tolerance * 1e3:g} mV − U (guard-banded "
            "acceptance, guard band w = U, ILAC-G8:2019 4.2.2)")
    return {"tolerance_V": tolerance, "reference": reference, "reference_value_V": value,
            "decision_rule": rule, "rule": text}


def _statistics(names: list[str], values: np.ndarray) -> dict[str, Any]:
    median = float(np.median(values))
    mad = float(np.median(np.abs(values - median)))
    half = 3.0 * _MAD_FACTOR * mad
    outliers = tuple(n for n, v in zip(names, values, strict=True)
                     if mad > 0 and abs(v - median) > half)
    return {"n": len(values), "mean_V": float(np.mean(values)), "median_V": median,
            "standard_deviation_V": float(np.std(values, ddof=1)) if len(values) > 1
            else math.nan,
            "mad_V": mad, "screen_low_V": median - half, "screen_high_V": median + half,
            "screen": "median ± 3 × 1.4826 × MAD (common practice)", "outliers": outliers}


def calibrate(run_or_path: Run | str | Path, metadata_path: str | Path | None = None, *,
              method: str | None = None, overrides: Mapping[str, Any] | None = None,
              model: str = "hueckel") -> CalibrationBatch:
    r"""Calibrate a batch of reference electrodes: E° (or the potential) of each with a GUM
    budget, acceptance by the stated rule, batch statistics.

    Parameters
    ----------
    run_or_path : Run, str or pathlib.Path
        The batch: a run read by :func:`activolt.data.runs.read_run`, or the path of its
        table (CSV with an ``electrode`` column; one or more readings per electrode).
    metadata_path : str or pathlib.Path, optional
        The metadata (TOML), when a path is given; default the table's name with ``.toml``.
    method : str, optional
        ``"hydrogen"`` or ``"master"``; default the metadata's ``calibration_method``.
    overrides : mapping, optional
        Metadata that wins over the file, as for :func:`~activolt.data.runs.read_run`.
    model : str
        The activity model of a dilution reduction (electrodes read in several molalities).

    Returns
    -------
    CalibrationBatch

    Raises
    ------
    InputError
        No electrode column, an electrode without a reading, a master route without the
        master's potential, no tolerance, a molality outside the convention's range.

    Notes
    -----
    Hydrogen route, one molality: per reading E°_i = E_i + σ k_i ln(m γ±) with E_i moved to
    p(H2) = p° (:func:`activolt.fit.problem.gas_correction`) and γ± from
    :func:`conventional_gamma_hcl`; E° is their mean. Several molalities: E° from
    :func:`activolt.procedures.dilution.reduce_run` of the electrode's rows. Master route:
    E = E(electrode) − E(master) as read (electrode on the positive terminal), so
    E(electrode) = E(master) + mean(E).

    Budget (GUM, JCGM 100:2008): repeatability Type A, s/√n with n − 1 degrees of freedom
    (one reading: its stated u(EMF), else the batch's pooled standard deviation, GUM 4.2.8,
    with Σ(n_j − 1) degrees of freedom); temperature, pressure and molality by one finite step
    each; the voltmeter and the master's certificate as stated (Type B, ν = ∞). u_c² = Σ u_i²
    over the counted lines, ν_eff by Welch–Satterthwaite (:func:`welch_satterthwaite`), k from
    Student's t for 95 % at ⌊ν_eff⌋, U = k u_c.

    Acceptance: the deviation d = E° − reference (batch median, nominal or catalogue E°);
    simple acceptance passes when |d| ≤ T, guard-banded (ILAC-G8:2019, w = U) when
    |d| ≤ T − U.

    """
    run = (run_or_path if isinstance(run_or_path, Run)
           else read_run(run_or_path, metadata_path, overrides))
    calibration = dict(run.metadata.calibration)
    where = str(run.metadata_path or run.path)
    if method is not None:
        if method not in ("hydrogen", "master"):
            raise InputError(f'method must be "hydrogen" or "master", got {method!r}',
                             column="method")
        calibration["method"] = method
    chosen = calibration.get("method", "hydrogen")
    if chosen == "master" and "master_potential_V" not in calibration:
        raise InputError("the master route needs the master's potential; add "
                         "master_potential_mV (and u_master_potential_mV) to the metadata",
                         file=where, column="master_potential_mV")
    if chosen == "hydrogen" and not run.metadata.gas_coefficients:
        warnings = ["no cell diagram with H2(g): readings are taken as at p(H2) = p° (no "
                    "hydrogen-pressure correction)"]
    else:
        warnings = []
    if "tolerance_V" not in calibration:
        raise InputError("no acceptance tolerance; add acceptance_tolerance_mV to the metadata",
                         file=where, column="acceptance_tolerance_mV")
    groups = _electrode_rows(run)
    electrodes = [_master_electrode(run, name, rows) if chosen == "master"
                  else _hydrogen_electrode(run, name, rows, model) for name, rows in groups]
    electrodes = _pool_single_readings(electrodes, where)
    names = [e.name for e in electrodes]
    values = np.array([e.value_V for e in electrodes])
    temperature = float(np.mean([e.temperature_K for e in electrodes]))
    acceptance = _acceptance(run, calibration, values, temperature, chosen)
    statistics = _statistics(names, values)
    results = []
    for e in electrodes:
        counted = [line for line in e.budget if line.counted]
        u_c = math.sqrt(sum(line.u_V**2 for line in counted))
        nu = welch_satterthwaite([line.u_V for line in counted], [line.dof for line in counted])
        k = _t_factor(nu)
        deviation = e.value_V - acceptance["reference_value_V"]
        limit = acceptance["tolerance_V"] - (k * u_c if acceptance["decision_rule"]
                                             == "guard-banded" else 0.0)
        results.append(ElectrodeCalibration(
            electrode=e.name, standard_potential_V=e.value_V, standard_uncertainty_V=u_c,
            budget=tuple(e.budget), effective_dof=nu, coverage_factor=k,
            expanded_uncertainty_V=k * u_c, deviation_V=deviation,
            verdict="pass" if abs(deviation) <= limit else "fail",
            n_readings=len(e.lines), lines=e.lines, temperature_K=e.temperature_K,
            route=e.route, outlier=e.name in statistics["outliers"], notes=e.notes))
    convention = (f"master electrode {calibration['master_potential_V'] * 1e3:.4f} mV, u = "
                  f"{calibration.get('u_master_potential_V', 0.0) * 1e3:g} mV (certificate)"
                  if chosen == "master" else
                  "γ±(HCl, 0.01 mol/kg, 25 °C) = 0.904 (Buck et al. 2002, Pure Appl. Chem. 74, "
                  "2169); E° = E + (2RT/F) ln(m γ±) at p(H2) = p°")
    date = run.metadata.info.get("date")
    return CalibrationBatch(method=chosen, electrodes=tuple(results), acceptance=acceptance,
                            statistics=statistics, convention=convention, date=date, run=run,
                            warnings=(*run.warnings, *warnings))


def _pool_single_readings(electrodes: list[_Electrode], where: str) -> list[_Electrode]:
    """Electrodes read once without a stated u(EMF) take the batch's pooled repeatability
    s_p = √(Σ (n_j − 1) s_j² / Σ (n_j − 1)) with Σ (n_j − 1) degrees of freedom (GUM 4.2.8)."""
    missing = [e for e in electrodes
               if not any(line.component == "repeatability" for line in e.budget)]
    if not missing:
        return electrodes
    repeated = [e.per_reading_V for e in electrodes
                if e.per_reading_V is not None and len(e.per_reading_V) >= 2]
    dof = sum(len(v) - 1 for v in repeated)
    if dof == 0:
        raise InputError(f"electrode '{missing[0].name}' has one reading and no electrode has "
                         "two, so repeatability cannot be estimated; read each electrode at "
                         "least twice or give u_emf_mV", file=where)
    pooled = math.sqrt(sum(float(np.sum((v - v.mean()) ** 2)) for v in repeated) / dof)
    line = UncertaintyComponent("repeatability", pooled, float(dof),
                                "Type A: one reading; the batch's pooled standard deviation "
                                f"({dof} degrees of freedom, GUM 4.2.8)")
    return [dataclasses.replace(e, budget=[line, *e.budget]) if e in missing else e
            for e in electrodes]


# ---------------------------------------------------------------------------------------------
# History and drift


def _load_records(records: Any) -> list[tuple[str, Mapping[str, Any]]]:
    """(where, record in the ``to_dict()`` form) from a folder, files, dicts or batches."""
    if isinstance(records, str | Path):
        folder = Path(records)
        if not folder.is_dir():
            raise InputError("not a folder of calibration records", file=str(folder))
        records = sorted(folder.glob("*.json"))
    out = []
    for i, item in enumerate(records):
        where = f"record {i + 1}"
        if isinstance(item, CalibrationBatch):
            item = item.to_dict()
        elif isinstance(item, str | Path):
            where = str(item)
            try:
                item = json.loads(Path(item).read_text(encoding="utf-8"))
            except (OSError, ValueError) as error:
                raise InputError(f"cannot read the calibration record ({error})",
                                 file=where) from None
        if isinstance(item, Mapping) and item.get("record_kind", "calibration") != (
                "calibration"):
            continue  # a record of another kind (a reduction) in the same folder
        if isinstance(item, Mapping) and "electrodes" not in item and isinstance(
                item.get("calibration"), Mapping):
            item = {"created_utc": item.get("created_utc"), **item["calibration"]}
        if not isinstance(item, Mapping) or not isinstance(item.get("electrodes"), list):
            raise InputError("not a calibration record (no 'electrodes' list)", file=where)
        out.append((where, item))
    return out


def _date(text: Any, where: str) -> dt.datetime:
    try:
        value = dt.datetime.fromisoformat(str(text))
    except ValueError:
        raise InputError(f"the record's date {text!r} is not an ISO 8601 date (YYYY-MM-DD)",
                         file=where, column="date") from None
    return value.replace(tzinfo=None)


def _run_rules(z: np.ndarray) -> dict[str, tuple[int, ...]]:
    """Indices at which each run rule fires (the last point of its window)."""
    n = len(z)
    fired: dict[str, list[int]] = {"rule 1": [], "rule 2": [], "rule 3": [], "rule 4": [],
                                   "trend": []}
    for i in range(n):
        if abs(z[i]) > 3.0:
            fired["rule 1"].append(i)
        for name, size, need, level in (("rule 2", 3, 2, 2.0), ("rule 3", 5, 4, 1.0)):
            if i + 1 >= size:
                window = z[i + 1 - size:i + 1]
                if (window > level).sum() >= need or (window < -level).sum() >= need:
                    fired[name].append(i)
        if i + 1 >= 8:
            window = z[i - 7:i + 1]
            if (window > 0).all() or (window < 0).all():
                fired["rule 4"].append(i)
        if i + 1 >= 6:
            steps = np.diff(z[i - 5:i + 1])
            if (steps > 0).all() or (steps < 0).all():
                fired["trend"].append(i)
    return {k: tuple(v) for k, v in fired.items()}


def _control_chart(values: np.ndarray) -> ControlChart | None:
    history = values[:-1]
    moving = float(np.mean(np.abs(np.diff(history))))
    if moving == 0.0:
        return None
    centre = float(np.mean(history))
    sigma = moving / _D2
    violations = _run_rules((values - centre) / sigma)
    last = len(values) - 1
    return ControlChart(values_V=tuple(float(v) for v in values), centre_V=centre,
                        sigma_V=sigma, lower_limit_V=centre - 3 * sigma,
                        upper_limit_V=centre + 3 * sigma, moving_range_mean_V=moving,
                        violations=violations,
                        out_of_control=any(last in v for v in violations.values()))


def electrode_history(records: Any, current: CalibrationBatch | None = None
                      ) -> dict[str, ElectrodeHistory]:
    r"""Each electrode's history from earlier calibration records: drift and control chart.

    Parameters
    ----------
    records : folder, or sequence of paths, dicts or CalibrationBatch
        Earlier calibrations: a folder of JSON records, or records in the
        :meth:`CalibrationBatch.to_dict` form (a record holding that form under the key
        ``calibration`` is read too; records of another ``record_kind`` are skipped). A
        record's date is its ``date`` (ISO 8601), else the day of its ``created_utc``.
    current : CalibrationBatch, optional
        Today's calibration, taken as the newest point (dated today when its metadata gives
        no date).

    Returns
    -------
    dict of str to ElectrodeHistory
        By electrode, in order of first appearance.

    Notes
    -----
    Drift: a straight line E°(t) = a + d t, t in months, fitted by weighted least squares
    (w = 1/u², :func:`activolt.fit.least_squares.linear_least_squares`); when χ²/ν > 1 the
    covariance is scaled by it (Birge ratio). Control chart of individuals with moving range:
    the limits come from the history (every point but the newest): centre x̄, σ = MR̄/1.128,
    x̄ ± 3σ; the run rules are Western Electric rules 1–4 and a trend of six (Nelson rule 3),
    see :class:`ControlChart`. An electrode is flagged when a rule fires at its newest point
    or the drift is more than twice its uncertainty from zero.
    """
    loaded = _load_records(records)
    if current is not None:
        today = current.to_dict()
        if not today.get("date"):
            today["date"] = dt.datetime.now(dt.UTC).date().isoformat()
        loaded.append(("current calibration", today))
    series: dict[str, list[tuple[dt.datetime, str, float, float]]] = {}
    for where, record in loaded:
        date = record.get("date") or str(record.get("created_utc") or "")[:10] or None
        when = _date(date, where)
        for entry in record["electrodes"]:
            potential = entry.get("standard_potential_V") or {}
            try:
                value = float(potential["value"])
                u = float(potential.get("uncertainty") or 0.0)
                name = str(entry["electrode"])
            except (KeyError, TypeError, ValueError):
                raise InputError("an electrode entry lacks 'electrode' or "
                                 "'standard_potential_V': {value, uncertainty}",
                                 file=where) from None
            series.setdefault(name, []).append((when, str(date), value, u))
    return {name: _history(name, sorted(points, key=lambda p: p[0]))
            for name, points in series.items()}


def _history(name: str, points: list[tuple[dt.datetime, str, float, float]]
             ) -> ElectrodeHistory:
    first = points[0][0]
    months = np.array([(p[0] - first).total_seconds() / 86400.0 / _MONTH_DAYS for p in points])
    values = np.array([p[2] for p in points])
    u = np.array([p[3] for p in points])
    drift = u_drift = None
    reasons = []
    if len(points) >= 3 and np.ptp(months) > 0:
        weights = 1.0 / u**2 if np.all(u > 0) else None
        fit = linear_least_squares(np.column_stack([np.ones_like(months), months]), values,
                                   weights=weights, names=("intercept", "drift"))
        variance = float(fit.covariance[1, 1])
        dof = len(points) - 2
        if weights is not None and dof > 0:
            reduced = float(np.sum(weights * (values - fit.jacobian @ np.array(
                [fit.values["intercept"], fit.values["drift"]])) ** 2)) / dof
            variance *= max(reduced, 1.0)
        drift, u_drift = float(fit.values["drift"]), math.sqrt(variance)
        if u_drift > 0 and abs(drift) > 2.0 * u_drift:
            reasons.append(f"drift {drift * 1e3:+.4f} ± {u_drift * 1e3:.4f} mV per month "
                           "(more than twice its uncertainty from zero)")
    chart = _control_chart(values) if len(points) >= 4 else None
    if chart is not None and chart.out_of_control:
        rules = [rule for rule, at in chart.violations.items() if len(values) - 1 in at]
        reasons.append("control chart: the newest value breaks " + ", ".join(rules))
    return ElectrodeHistory(electrode=name, dates=tuple(p[1] for p in points),
                            months=tuple(float(m) for m in months),
                            values_V=tuple(float(v) for v in values),
                            uncertainties_V=tuple(float(x) for x in u),
                            drift_V_per_month=drift, u_drift_V_per_month=u_drift, chart=chart,
                            flagged=bool(reasons), reasons=tuple(reasons))
