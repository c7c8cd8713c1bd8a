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

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

__all__ = ["CalibrationBatch", "ControlChart", "ElectrodeCalibration", "ElectrodeHistory",
           "UncertaintyComponent", "calibrate", "electrode_history", "welch_satterthwaite"]


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
        raise NotImplementedError


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
        raise NotImplementedError


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
        raise NotImplementedError

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready data: ``method``, ``date``, ``temperature_K``, ``convention``,
        ``electrodes`` (each :meth:`ElectrodeCalibration.to_dict`), ``acceptance``,
        ``batch_statistics``, ``all_pass``, ``warnings``."""
        raise NotImplementedError


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
        raise NotImplementedError


def welch_satterthwaite(u_V: Sequence[float], dof: Sequence[float]) -> float:
    r"""Effective degrees of freedom of a combined standard uncertainty (GUM G.4.1).

    .. math:: ν_{eff} = \frac{u_c^4}{\sum_i u_i^4/ν_i}, \qquad u_c^2 = \sum_i u_i^2
    """
    raise NotImplementedError


def calibrate(run_or_path: Any, metadata_path: str | Path | None = None, *,
              method: str | None = None, overrides: Mapping[str, Any] | None = None,
              model: str = "hueckel") -> CalibrationBatch:
    """Calibrate a batch of reference electrodes (see the module's notes)."""
    raise NotImplementedError


def electrode_history(records: Any, current: CalibrationBatch | None = None
                      ) -> dict[str, ElectrodeHistory]:
    """Each electrode's history from earlier calibration records."""
    raise NotImplementedError
