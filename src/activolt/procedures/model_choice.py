r"""Which activity-coefficient model a run supports, and what the choice adds to u(E°).

A run is reduced with every applicable model (:func:`compare_models`). Each fit is judged
*adequate* or *inadequate* by the criteria below, all stated in advance and all recorded:

1. **χ² against the stated reading uncertainties** (only when every reading carries one): the
   fit is inadequate when the upper-tail probability of its χ² with ν = N − P degrees of freedom
   is below :data:`CHI2_P_MIN` (0.01), i.e. the residuals are too large for the stated u(E).
2. **Residual variance relative to the best fit** (only without stated uncertainties, where χ²
   cannot be judged absolutely): with s² = χ²/ν, the fit is inadequate when the F-test
   probability of s²/s²_min (ν, ν_min) is below :data:`VARIANCE_RATIO_P_MIN` (0.01), s²_min being
   the smallest residual variance among the fitted models.
3. **Wald–Wolfowitz runs test of the residual signs**, in order of increasing molality: the fit
   is inadequate when the residual signs form *fewer* runs than chance allows, exact lower-tail
   probability below :data:`RUNS_P_MIN` (0.05). A model that misses a curvature leaves long runs
   of one sign; too many runs (alternating signs) point to the measurement sequence rather than
   to the model, and only give a note. The two-sided probability is reported as well.
4. **Ionic-strength range**: the fit is inadequate when the run reaches beyond the ionic
   strength up to which the model family is commonly adequate
   (:attr:`~activolt.activity.base.ActivityModel.max_ionic_strength`).

Parameters held at a conventional value (by the reduction or by this module) do not make a fit
inadequate; they are listed as notes. A model whose reduction fails (:class:`FitError`) is
skipped, with the reason.

**Model-choice component of u(E°).** The E° of the adequate models differ because the models
extrapolate differently to m = 0. With E°_max and E°_min the largest and smallest E° among the
adequate models, the model-choice standard uncertainty is taken as a rectangular distribution
over that range (GUM, JCGM 100:2008, 4.3.7):

.. math:: u_\mathrm{model} = \frac{E°_\max − E°_\min}{2\sqrt{3}}

It is 0 when fewer than two models are adequate (then the run cannot tell; a note says so). The
recommended model is the adequate one with the lowest BIC, and its combined standard uncertainty
is

.. math:: u(E°) = \sqrt{u_\mathrm{fit}^2 + u_\mathrm{model}^2}

**Pitzer β(2).** The β(2) term is published only for 2:2 and higher charge types (Pitzer &
Mayorga 1974); for other charge types it trades off against E° in a fit. The comparison holds it
at 0 for those charge types unless the caller gives a value in ``fixed``.

References
----------
.. [1] Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are from the same
   population. Ann. Math. Statist. 11, 147–162. https://doi.org/10.1214/aoms/1177731909
.. [2] Swed, F. S. & Eisenhart, C. (1943). Tables for testing randomness of grouping in a
   sequence of alternatives. Ann. Math. Statist. 14, 66–87 (exact distribution of the number of
   runs; from memory).
.. [3] JCGM 100:2008 (GUM), Evaluation of measurement data — Guide to the expression of
   uncertainty in measurement, 4.3.7 and 5.1.2.
.. [4] Schwarz, G. (1978). Estimating the dimension of a model. Ann. Statist. 6, 461–464;
   Burnham, K. P. & Anderson, D. R. (2002). Model Selection and Multimodel Inference, §2.2.
.. [5] Pitzer, K. S. & Mayorga, G. (1974). J. Solution Chem. 3, 539–546.
   https://doi.org/10.1007/BF00648138
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..activity import MODELS, get_model
from ..data.runs import Run
from ..errors import FitError, InputError
from ..fit.diagnostics import RunsTest, runs_test
from .dilution import (
    OUT_OF_RANGE,
    FitStatistics,
    FittedParameter,
    Reduction,
    mean_temperature,
    reduce_run,
    with_model_choice,
)
from .published import column_values, point_values

__all__ = [
    "CHI2_P_MIN",
    "RUNS_P_MIN",
    "VARIANCE_RATIO_P_MIN",
    "ModelAssessment",
    "ModelComparison",
    "RunsTest",
    "SkippedModel",
    "compare_models",
    "residuals_by_solution",
    "run_range_mol_kg",
    "runs_test",
]

#: A fit with stated reading uncertainties is inadequate below this χ² upper-tail probability.
CHI2_P_MIN = 0.01
#: Without stated uncertainties, a fit is inadequate below this F-test probability of its
#: residual variance relative to the smallest among the fitted models.
VARIANCE_RATIO_P_MIN = 0.01
#: A fit is inadequate when its residual signs form fewer runs than this lower-tail probability.
RUNS_P_MIN = 0.05
#: The rule for the model-choice component, as printed and recorded.
MODEL_CHOICE_RULE = ("u_model = (max E° − min E°)/(2√3) over the adequate models (or, when none "
                     "is, those fitted over the whole run) and those adequate within their own "
                     "ionic-strength range: a rectangular distribution over their range "
                     "(GUM 4.3.7); 0 with fewer than two")
#: The rule for the recommendation, as printed and recorded.
RECOMMENDATION_RULE = ("the adequate model with the lowest BIC; when none passes every "
                       "criterion, the lowest-BIC model fitted over the whole run, with its lack "
                       "of fit in u(E°)")


@dataclass(frozen=True)
class ModelAssessment:
    """One model's fit to the run and the verdict on its adequacy.

    The fit itself (name, title, E° and its u, parameters, statistics, warnings) is read from
    ``reduction``; the attributes hold what the comparison adds.

    Attributes
    ----------
    reduction : Reduction
        The full reduction (not compared, not printed), reused without refitting.
    chi2_p_value : float
        Upper-tail probability of χ² with the fit's degrees of freedom; NaN without stated
        reading uncertainties [-].
    variance_ratio_p_value : float
        F-test probability of the residual variance relative to the smallest among the fitted
        models; NaN with stated reading uncertainties [-].
    runs_test : RunsTest
        Runs test of the residual signs in order of increasing molality.
    max_ionic_strength_mol_kg : float
        Largest ionic strength in the run [mol kg⁻¹].
    adequate : bool
        Whether every criterion is met.
    reasons : tuple of str
        Why the fit is inadequate (empty when adequate).
    notes : tuple of str
        Held parameters and other remarks that do not affect the verdict.
    """

    reduction: Reduction = field(repr=False, compare=False)
    chi2_p_value: float
    variance_ratio_p_value: float
    runs_test: RunsTest
    max_ionic_strength_mol_kg: float
    adequate: bool
    reasons: tuple[str, ...]
    notes: tuple[str, ...]

    @property
    def name(self) -> str:
        """The model's command-line name."""
        return self.reduction.model.name

    @property
    def title(self) -> str:
        """The model's printed title."""
        return self.reduction.model.title

    @property
    def standard_potential_V(self) -> float:
        """E° from the fit [V]."""
        return float(self.reduction.standard_potential.nominal_value)

    @property
    def u_standard_potential_V(self) -> float:
        """Standard uncertainty of E° from the fit (k = 1) [V]."""
        return float(self.reduction.standard_potential.std_dev)

    @property
    def parameters(self) -> tuple[FittedParameter, ...]:
        """Every model parameter, fitted or held."""
        return self.reduction.parameters

    @property
    def statistics(self) -> FitStatistics:
        """χ², reduced χ², AIC, BIC, degrees of freedom."""
        return self.reduction.statistics

    @property
    def model_max_ionic_strength_mol_kg(self) -> float:
        """Ionic strength up to which the family is commonly adequate [mol kg⁻¹]."""
        return float(self.reduction.model.max_ionic_strength)

    @property
    def warnings(self) -> tuple[str, ...]:
        """The reduction's own warnings (those of the run itself left out)."""
        run_warnings = self.reduction.run.warnings
        return tuple(w for w in self.reduction.warnings if w not in run_warnings)

    @property
    def covers_run(self) -> bool:
        """Whether the model was fitted to every reading (none left out as beyond its range)."""
        return self.max_ionic_strength_mol_kg <= self.model_max_ionic_strength_mol_kg * (
            1.0 + 1e-9)

    @property
    def verdict(self) -> str:
        """``"adequate"`` or ``"inadequate: <reasons>"``."""
        return "adequate" if self.adequate else "inadequate: " + "; ".join(self.reasons)


@dataclass(frozen=True)
class SkippedModel:
    """A model that could not be fitted to the run, and why."""

    name: str
    title: str
    reason: str


@dataclass(frozen=True)
class ModelComparison:
    """The run reduced with several models; the spread of E° and the recommendation.

    Attributes
    ----------
    electrolyte : str
        Formula of the electrolyte.
    temperature_K : float
        Mean temperature of the run [K].
    n_points : int
        Usable readings [-].
    stated_uncertainty : bool
        Whether every reading carries a stated uncertainty (χ² judged absolutely).
    assessments : tuple of ModelAssessment
        One per fitted model, in the order asked.
    skipped : tuple of SkippedModel
        Models that could not be fitted.
    spread_V : float
        max E° − min E° over the adequate models (0 with fewer than two) [V].
    u_model_choice_V : float
        Model-choice standard uncertainty, ``spread_V``/(2√3); NaN when no model is adequate [V].
    recommended : str or None
        Name of the recommended model; None when no model is adequate.
    standard_potential_V, u_fit_V, u_combined_V : float
        E° of the recommended model, its fit uncertainty and the combined
        √(u_fit² + u_model²) (k = 1); NaN when no model is adequate [V].
    notes, warnings : tuple of str
        Remarks, and what the user must know (inadequate fits, no adequate model).
    """

    electrolyte: str
    temperature_K: float
    n_points: int
    stated_uncertainty: bool
    assessments: tuple[ModelAssessment, ...]
    skipped: tuple[SkippedModel, ...]
    spread_V: float
    u_model_choice_V: float
    recommended: str | None
    standard_potential_V: float
    u_fit_V: float
    u_combined_V: float
    notes: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def adequate_models(self) -> tuple[str, ...]:
        """Names of the adequate models, in the order asked."""
        return tuple(a.name for a in self.assessments if a.adequate)

    def assessment(self, name: str) -> ModelAssessment:
        """The assessment of model ``name``; ``KeyError`` listing the fitted ones otherwise."""
        for a in self.assessments:
            if a.name == name:
                return a
        raise KeyError(f"model '{name}' was not fitted; fitted: "
                       f"{', '.join(a.name for a in self.assessments) or 'none'}")

    @property
    def recommended_reduction(self) -> Reduction | None:
        """The reduction of the recommended model with the model-choice component in u(E°),
        u(γ±) and the budget (one u(E°) everywhere), or None when nothing is recommended."""
        if self.recommended is None:
            return None
        return with_model_choice(self.assessment(self.recommended).reduction,
                                 self.u_model_choice_V, MODEL_CHOICE_RULE)


def _p(p: float) -> str:
    """A probability for a message: two significant digits, never a bare 0."""
    return f"= {p:.2g}" if p >= 1e-300 else "< 1e-300"


def residuals_by_solution(reduction: Reduction) -> np.ndarray:
    """Mean residual of each solution (readings at one molality), in order of molality.

    Parameters
    ----------
    reduction : Reduction
        A reduction; its readings without a flag are taken.

    Returns
    -------
    numpy.ndarray
        The mean of ``residual_V`` [V] per molality, as a pandas grouping by molality gives it
        (read from the points' columns, without building the points table).
    """
    used = np.asarray(pd.isna(point_values(reduction, "flag")), dtype=bool)
    molality = np.asarray(point_values(reduction, "molality_mol_kg"), dtype=float)[used]
    residual = np.asarray(point_values(reduction, "residual_V"), dtype=float)[used]
    order = np.argsort(molality, kind="stable")
    if np.all(np.isfinite(residual) & (residual != 0.0)) and (
            molality.size < 2 or np.all(np.diff(molality[order]) > 0)):
        # one reading per solution, finite and not zero: the grouping's mean of one value is
        # that value (of a zero, pandas gives 0 or −0 depending on its path: left to it)
        return residual[order]
    table = pd.DataFrame({"molality_mol_kg": molality, "residual_V": residual})
    return table.groupby("molality_mol_kg", sort=True)["residual_V"].mean().to_numpy(float)


def run_range_mol_kg(reduction: Reduction) -> float:
    """Largest ionic strength among the run's readings the user left in.

    Parameters
    ----------
    reduction : Reduction
        A reduction; its readings without a flag and those the model left out as beyond its
        range are taken.

    Returns
    -------
    float
        The largest ionic strength [mol kg⁻¹].
    """
    flags = point_values(reduction, "flag")
    missing = np.asarray(pd.isna(flags), dtype=bool)
    # a flag is read as its text (what astype(str) makes of it)
    kept = missing | np.array([not gone and str(flag).startswith(OUT_OF_RANGE)
                               for flag, gone in zip(flags, missing, strict=True)], dtype=bool)
    molality = np.asarray(point_values(reduction, "molality_mol_kg"), dtype=float)[kept]
    return float(reduction.electrolyte.ionic_strength(molality).max())


def _assess(reduction: Reduction, stated: bool
            ) -> ModelAssessment:
    from scipy.special import chdtrc

    model = reduction.model
    st = reduction.statistics
    reasons: list[str] = []
    notes = list(reduction.notes)
    chi2_p = math.nan
    if stated:
        chi2_p = float(chdtrc(st.dof, st.chi2)) if st.dof > 0 else math.nan
        if chi2_p < CHI2_P_MIN:
            reasons.append(f"χ² = {st.chi2:.3g} with {st.dof} degrees of freedom is improbable "
                           f"for the stated reading uncertainties (p {_p(chi2_p)})")
    runs = runs_test(residuals_by_solution(reduction))
    if math.isfinite(runs.p_value_fewer) and runs.p_value_fewer < RUNS_P_MIN:
        reasons.append(f"the residuals run in {runs.runs} blocks of one sign where "
                       f"{runs.expected_runs:.1f} are expected (runs test p = "
                       f"{runs.p_value_fewer:.2g}): a systematic misfit")
    elif (math.isfinite(runs.p_value_two_sided) and runs.p_value_two_sided < RUNS_P_MIN
          and runs.runs > runs.expected_runs):
        notes.append(f"the residual signs alternate more often than chance allows ({runs.runs} "
                     f"runs, {runs.expected_runs:.1f} expected, p = "
                     f"{runs.p_value_two_sided:.2g}); look at the order of the measurements")
    max_ionic = run_range_mol_kg(reduction)
    if max_ionic > model.max_ionic_strength * (1.0 + 1e-9):
        reasons.append(f"the {model.title} stretched to I = {max_ionic:.3g} mol/kg (commonly "
                       f"adequate to {model.max_ionic_strength:g} mol/kg)")
    return ModelAssessment(
        reduction=reduction, chi2_p_value=chi2_p, variance_ratio_p_value=math.nan,
        runs_test=runs, max_ionic_strength_mol_kg=max_ionic, adequate=not reasons,
        reasons=tuple(reasons), notes=tuple(notes),
    )


def _with_variance_ratio(assessments: list[ModelAssessment]) -> list[ModelAssessment]:
    """Criterion 2 (no stated uncertainties): F-test against the smallest residual variance."""
    from dataclasses import replace

    from scipy.special import fdtrc

    best = min(assessments, key=lambda a: a.statistics.reduced_chi2)
    if not best.statistics.reduced_chi2 > 0.0:
        return assessments
    out = []
    for a in assessments:
        st = a.statistics
        ratio = st.reduced_chi2 / best.statistics.reduced_chi2
        p = float(fdtrc(st.dof, best.statistics.dof, ratio)) if a is not best else 1.0
        reasons = list(a.reasons)
        if p < VARIANCE_RATIO_P_MIN:
            reasons.append(f"residual variance {ratio:.3g} times that of the {best.title} "
                           f"(F-test p {_p(p)})")
        out.append(replace(a, variance_ratio_p_value=p, adequate=not reasons,
                           reasons=tuple(reasons)))
    return out


def compare_models(run: Run, models: Sequence[str] | None = None,
                   fixed: Mapping[str, Mapping[str, float]] | None = None) -> ModelComparison:
    r"""Reduce a run with several activity-coefficient models and judge each fit.

    Parameters
    ----------
    run : Run
        A validated run (:func:`activolt.data.runs.read_run`).
    models : sequence of str, optional
        Model names (see :data:`activolt.activity.MODELS`); default: all of them.
    fixed : mapping of str to mapping of str to float, optional
        Parameters to hold, per model, e.g. ``{"hueckel": {"a_angstrom": 4.3}}``.

    Returns
    -------
    ModelComparison
        Every fit with its verdict, the spread of E° among the adequate models, the model-choice
        component of u(E°) and the recommended model with its combined u(E°).

    Raises
    ------
    InputError
        An unknown model name, a model in ``fixed`` that is not compared, an unknown parameter,
        or a run that no model can reduce (too few readings, temperatures too spread out).
    FitError
        When no model could be fitted (the message gives each reason).

    Notes
    -----
    The adequacy criteria, the model-choice rule and the recommendation rule are given in the
    module docstring (:mod:`activolt.procedures.model_choice`):

    .. math:: u_\mathrm{model} = \frac{E°_\max − E°_\min}{2\sqrt{3}}, \qquad
              u(E°) = \sqrt{u_\mathrm{fit}^2 + u_\mathrm{model}^2}

    GUM (JCGM 100:2008) 4.3.7; Wald & Wolfowitz (1940); BIC after Schwarz (1978).

    Examples
    --------
    The shipped demo run (HCl to 1 mol/kg, 25 °C): the Davies equation, commonly adequate to
    0.5 mol/kg, cannot cover the run (fitted within its range, or refused), and u_model follows
    the stated rule:

    >>> from importlib.resources import files
    >>> from activolt.data.runs import read_run
    >>> c = compare_models(read_run(files("activolt") / "sample_data" / "kestrel_hcl_25C.csv"),
    ...                    ["davies", "hueckel", "pitzer"])
    >>> "davies" in {s.name for s in c.skipped} or not c.assessment("davies").covers_run
    True
    >>> bool(abs(c.u_model_choice_V - c.spread_V / (2 * 3**0.5)) < 1e-15)
    True
    """
    names = list(MODELS) if models is None else list(models)
    if not names:
        raise InputError("no model to compare; give at least one model name", column="model")
    for name in names:
        try:
            get_model(name)
        except ValueError as error:
            raise InputError(str(error), column="model") from None
    fixed = {k: dict(v) for k, v in (fixed or {}).items()}
    for name in fixed:
        if name not in names:
            raise InputError(f"parameters are held for model '{name}', which is not compared; "
                             f"compared: {', '.join(names)}", column="fixed")
    stated = run.emf_uncertainty_given
    assessments: list[ModelAssessment] = []
    skipped: list[SkippedModel] = []
    for name in names:
        family = get_model(name)
        try:
            reduction = reduce_run(run, name, fixed.get(name) or None,
                                   remind_model_choice=False)
        except FitError as error:
            skipped.append(SkippedModel(name=name, title=family.title, reason=str(error)))
            continue
        assessments.append(_assess(reduction, stated))
    if not assessments:
        raise FitError("no model could be fitted: " + "; ".join(
            f"{s.name}: {s.reason}" for s in skipped))
    if not stated:
        assessments = _with_variance_ratio(assessments)

    warnings: list[str] = []
    notes: list[str] = []
    for a in assessments:
        if not a.adequate:
            warnings.append(f"model {a.name} ({a.title}) is inadequate for this run: "
                            + "; ".join(a.reasons))
    for s in skipped:
        warnings.append(f"model {s.name} ({s.title}) was refused: {s.reason}")
    if not stated:
        notes.append("the readings carry no stated uncertainty: χ² cannot be judged absolutely; "
                     "each fit's residual variance is compared with the smallest (F-test)")

    adequate = [a for a in assessments if a.adequate]
    basis = adequate or [a for a in assessments if a.covers_run]
    if basis and not adequate:
        notes.append("no model passes every criterion strictly: the recommendation is the model "
                     "of lowest BIC among those fitted over the whole run, its u(E°) carrying its "
                     "lack of fit (Birge ratio) and the model-choice spread of those models")
    if basis:
        # Models adequate over the part of the run within their range estimate the same E°:
        # their spread is part of the model choice too.
        within = [a for a in assessments if not a.covers_run and len(a.reasons) == 1]
        e0s = [a.standard_potential_V for a in (*basis, *within)]
        spread = max(e0s) - min(e0s) if len(e0s) > 1 else 0.0
        u_model = spread / (2.0 * math.sqrt(3.0))
        if len(basis) == 1:
            notes.append(f"only one model ({basis[0].name}) is usable: the run cannot show how "
                         "much the choice of model moves E°; the model-choice component is 0")
        best = min(basis, key=lambda a: a.statistics.bic)
        recommended: str | None = best.name
        e0, u_fit = best.standard_potential_V, best.u_standard_potential_V
        u_combined = math.hypot(u_fit, u_model)
    else:
        spread, u_model, recommended = math.nan, math.nan, None
        e0 = u_fit = u_combined = math.nan
        warnings.append("no model can describe this run over its whole range (each was refused "
                        "or reaches beyond its range; see above): no E° is recommended; restrict "
                        "the molality range or check the readings")
    return ModelComparison(
        electrolyte=run.metadata.electrolyte.formula,
        temperature_K=mean_temperature(
            np.asarray(column_values(run.points, "temperature_K"), dtype=float)[run.usable]),
        n_points=int(np.count_nonzero(run.usable)), stated_uncertainty=stated,
        assessments=tuple(assessments), skipped=tuple(skipped), spread_V=spread,
        u_model_choice_V=u_model, recommended=recommended, standard_potential_V=e0,
        u_fit_V=u_fit, u_combined_V=u_combined, notes=tuple(notes), warnings=tuple(warnings),
    )
