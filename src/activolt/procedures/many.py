"""Many series at once: every series reduced on its own, each with its result or its reason.

A laboratory's table often holds many dilution series (one per cell, electrode pair, day or
temperature). :func:`reduce_many` reduces them through
:func:`activolt.procedures.dilution.reduce_runs` — the same fit, the same holding of parameters,
the same lack-of-fit rule and the same refusals as :func:`~activolt.procedures.dilution.reduce_run`
on a single run, the fits of :data:`BATCH_SIZE` series at a time solved in one engine batch — so
that a series reduced in a batch gives the E° it gives alone. A series that cannot be reduced (a
:class:`~activolt.errors.FitError` or a bad-input :class:`~activolt.errors.InputError` of its
own) keeps its reason and the others still land. :attr:`ManyReductions.summary` is one tidy row
per series.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from ..activity import MODELS, get_model
from ..data.runs import Run, runs_from_frame
from ..errors import FitError, InputError
from ..fit.problem import SLOPE
from .dilution import OUT_OF_RANGE, Reduction, reduce_run, reduce_runs
from .display import html_table, value_with_uncertainty
from .model_choice import ModelComparison, compare_models
from .published import point_lists, point_names, point_values

__all__ = ["BATCH_SIZE", "SUMMARY_COLUMNS", "ManyReductions", "SeriesReducer", "SeriesReduction",
           "reduce_many", "series_name", "series_reducer", "summary_frame", "summary_row"]

#: How many series :func:`reduce_many` reduces together (one engine batch per round of fits);
#: a series' result does not depend on it.
BATCH_SIZE = 64
#: Columns of :attr:`ManyReductions.summary`, in order (units in the names).
SUMMARY_COLUMNS: tuple[str, ...] = (
    "file", "series", "n_points", "model", "standard_potential_V", "u_standard_potential_V",
    "coverage_factor", "reduced_chi2", "birge_ratio", "flags", "failure",
)


def series_name(run: Run) -> str:
    """The name of the series a run holds (``""`` for an unnamed series or a table without a
    ``series`` column).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> from activolt.data.runs import read_runs
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "r.csv").write_text("molality_mol_kg,emf_V,series\\n0.01,0.46,cell 2\\n")
    >>> [series_name(r) for r in read_runs(folder / "r.csv", overrides={
    ...     "electrolyte": "HCl", "electrons": 1, "temperature_C": 25.0})]
    ['cell 2']
    """
    return run.series


@dataclass(frozen=True)
class SeriesReduction:
    """One series of a batch: its run, and its reduction or why there is none.

    Attributes
    ----------
    series : str
        The series' name (``""`` when unnamed).
    run : Run
        The series as read.
    reduction : Reduction or None
        The reduction (with several models compared: the recommended model's), or None.
    comparison : ModelComparison or None
        The model comparison, when several models were asked for.
    failure : str or None
        Why the series could not be reduced (the refusal's message), or None.
    """

    series: str
    run: Run
    reduction: Reduction | None = None
    comparison: ModelComparison | None = None
    failure: str | None = None

    @property
    def succeeded(self) -> bool:
        """Whether the series was reduced."""
        return self.reduction is not None


@dataclass(frozen=True)
class ManyReductions:
    """Every series of a batch, in the order given, with :attr:`summary` as one row each.

    Attributes
    ----------
    model : str
        The model asked for (a name, or ``"all"`` / a comma-separated list when compared).
    outcomes : tuple of SeriesReduction
        One per series.
    """

    model: str
    outcomes: tuple[SeriesReduction, ...]

    def __iter__(self) -> Iterator[SeriesReduction]:
        return iter(self.outcomes)

    def __len__(self) -> int:
        return len(self.outcomes)

    @property
    def reductions(self) -> tuple[Reduction, ...]:
        """The reductions of the series that were reduced, in order."""
        return tuple(o.reduction for o in self.outcomes if o.reduction is not None)

    @property
    def failures(self) -> tuple[SeriesReduction, ...]:
        """The series that could not be reduced, each with its ``failure``."""
        return tuple(o for o in self.outcomes if o.reduction is None)

    @property
    def summary(self) -> pd.DataFrame:
        """One row per series (columns :data:`SUMMARY_COLUMNS`).

        ``standard_potential_V`` and ``u_standard_potential_V`` are E° and its standard
        uncertainty (k = 1; with models compared, the recommended reduction's, which holds the
        model-choice component); E° ± ``coverage_factor`` × u is the 95 % interval.
        ``reduced_chi2`` and ``birge_ratio`` describe the final fit. ``flags`` says, separated
        by ``;``, what a reader should look at (``lack of fit``: the covariance was scaled by
        the reduced χ²; readings beyond the model's range, excluded, standing out or without a
        reading) or, for a series not reduced, ``refused: <reason>``; ``failure`` holds that
        reason (empty otherwise). A series not reduced has NaN numbers.
        """
        return summary_frame([summary_row(o, self.model) for o in self.outcomes])

    def to_frame(self) -> pd.DataFrame:
        """Every reading of every series reduced (flagged rows included), in order: each
        reduction's points table (:meth:`Reduction.to_frame`) with ``file`` in front (the
        points' own ``series`` column names the series). Series not reduced have no rows;
        :attr:`summary` names them with their reason."""
        frames = []
        for outcome in self.outcomes:
            if outcome.reduction is not None:
                points = outcome.reduction.to_frame()
                points.insert(0, "file", outcome.run.path.name)
                frames.append(points)
        if not frames:
            return pd.DataFrame(columns=["file"])
        return pd.concat(frames, ignore_index=True)

    def __repr__(self) -> str:
        return (f"<ManyReductions: {len(self.reductions)} of {len(self)} series reduced, "
                f"model {self.model}>")

    def _repr_html_(self) -> str:
        """The headline table for a notebook: one row per series with n, the model, E° ± u
        (k = 1), χ²/ν and its flags or the reason it was not reduced."""
        rows = []
        for outcome, row in zip(self.outcomes, self.summary.itertuples(index=False),
                                strict=True):
            reduction = outcome.reduction
            if reduction is None:
                rows.append((row.file, row.series, row.n_points, "—", "—", "—",
                             f"refused: {outcome.failure}"))
                continue
            rows.append((row.file, row.series, row.n_points, row.model,
                         value_with_uncertainty(row.standard_potential_V,
                                                row.u_standard_potential_V, 1e3),
                         f"{row.reduced_chi2:.3g}", row.flags))
        reduced = len(self.reductions)
        return html_table(f"{reduced} of {len(self)} series reduced (model: {self.model})",
                          ("file", "series", "n", "model", "E° / mV (k = 1)", "χ²/ν", "flags"),
                          rows)


def summary_frame(rows: Sequence[Mapping[str, Any]]) -> pd.DataFrame:
    """The summary table (:attr:`ManyReductions.summary`) from rows made by
    :func:`summary_row`, in order."""
    frame = pd.DataFrame(list(rows), columns=list(SUMMARY_COLUMNS))
    return frame.astype({"n_points": int})


def summary_row(outcome: SeriesReduction, model: str) -> dict[str, Any]:
    """One series' row of the summary (columns :data:`SUMMARY_COLUMNS`); ``model`` is the
    model asked for, shown for a series not reduced."""
    run = outcome.run
    row: dict[str, Any] = {"file": run.path.name, "series": outcome.series}
    reduction = outcome.reduction
    if reduction is None:
        return {**row, "n_points": int(run.points["flag"].isna().sum()), "model": model,
                "standard_potential_V": math.nan, "u_standard_potential_V": math.nan,
                "coverage_factor": math.nan, "reduced_chi2": math.nan,
                "birge_ratio": math.nan, "flags": f"refused: {outcome.failure}",
                "failure": outcome.failure}
    stats = reduction.statistics
    e0 = reduction.standard_potential
    return {**row, "n_points": stats.n_points, "model": reduction.model.name,
            "standard_potential_V": e0.nominal_value, "u_standard_potential_V": e0.std_dev,
            "coverage_factor": stats.coverage_factor, "reduced_chi2": stats.reduced_chi2,
            "birge_ratio": stats.birge_ratio, "flags": "; ".join(_flags(reduction)),
            "failure": ""}


def _flags(reduction: Reduction) -> list[str]:
    """What a reader of the summary should look at, in words."""
    stats = reduction.statistics
    flags = []
    if stats.stated_uncertainty and stats.birge_ratio > 1.0:
        flags.append("lack of fit")
    # read from the run's and the reduction's columns, without building the points table
    names = point_names(reduction)
    flag = [str(f) for f in point_lists(reduction, ["flag"])["flag"] if isinstance(f, str)]
    stands_out = (int(np.count_nonzero(pd.notna(point_values(reduction, "diagnostic"))))
                  if "diagnostic" in names else 0)
    for what, count in (
        ("beyond the model's range", sum(f.startswith(OUT_OF_RANGE) for f in flag)),
        ("excluded", sum(f.startswith("excluded") for f in flag)),
        ("no reading", sum(f == "no reading" for f in flag)),
        ("stands out", stands_out),
    ):
        if count:
            flags.append(f"{what}: {count} reading(s)")
    return flags


def _compared_models(model: str | Sequence[str]) -> list[str] | None:
    """The models to compare, or None for a single model."""
    if isinstance(model, str):
        if model == "all":
            return list(MODELS)
        if "," in model:
            return [m.strip() for m in model.split(",")]
        return None
    return list(model)


def _reason(error: FitError | InputError) -> str:
    """The refusal in one line, without the file (the summary names it)."""
    if isinstance(error, InputError):
        text = error.problem + (f" (line {error.line})" if error.line is not None else "")
    else:
        text = str(error)
    return " ".join(text.split())


def reduce_many(
    runs: Sequence[Run] | pd.DataFrame,
    model: str | Sequence[str] = "hueckel",
    fixed: Mapping[str, float] | None = None,
    *,
    metadata: Mapping[str, Any] | None = None,
    progress: Callable[[int], object] | None = None,
) -> ManyReductions:
    """Reduce every series on its own; each keeps its reduction or the reason it has none.

    Parameters
    ----------
    runs : sequence of Run, or pandas.DataFrame
        The series (e.g. from :func:`activolt.data.runs.read_runs`), or a DataFrame with the
        run-table columns (``molality_mol_kg``, ``emf_V`` or ``emf_mV``, …) and ``series``, read
        as a run table is (:func:`activolt.data.runs.runs_from_frame`).
    model : str or sequence of str
        A model name (``limiting``, ``hueckel``, …); ``"all"``, a comma-separated list or a
        sequence of names compares those models on every series
        (:func:`activolt.procedures.model_choice.compare_models`) and keeps the recommended one.
    fixed : mapping, optional
        Parameters to hold, e.g. ``{"a_angstrom": 4.3}`` (with models compared: in every model
        that has the parameter).
    metadata : mapping, optional
        With a DataFrame: what the TOML metadata would hold (``electrolyte``, ``electrons``,
        ``temperature_C``, …), common to every series. Not used with runs.
    progress : callable, optional
        Called with 1 after each series (e.g. a tqdm bar's ``update``).

    Returns
    -------
    ManyReductions
        Each series' :class:`~activolt.procedures.dilution.Reduction` or failure, and the
        tidy ``summary``.

    Raises
    ------
    InputError
        Bad input common to every series: an unknown model, a parameter no model asked for
        has, a DataFrame that cannot be read, or bad metadata.
    ValueError
        A DataFrame without ``metadata``, or ``metadata`` with runs.

    Notes
    -----
    Each series goes through the steps of :func:`~activolt.procedures.dilution.reduce_run`
    unchanged, E = E° − σ s k [ln m± + ln γ±(m; θ)] fitted per series, the fits of up to
    :data:`BATCH_SIZE` series solved together by the batched engine
    (:func:`~activolt.procedures.dilution.reduce_runs`), so a series' E° does not depend on the
    other series. A
    :class:`~activolt.errors.FitError` or :class:`~activolt.errors.InputError` raised for one
    series (too few readings, one molality only, a systematic misfit, temperatures too spread)
    becomes that series' ``failure``.

    Examples
    --------
    Two synthetic series (regression pin: readings made from the limiting law with
    E° = 0.2224 V, not literature values), the second with one molality only:

    >>> import numpy as np, pandas as pd
    >>> m = np.array([0.001, 0.002, 0.005, 0.01, 0.02])
    >>> k = 2 * 8.314462618 * 298.15 / 96485.33212
    >>> e = 0.2224 - k * (np.log(m) - 1.1762 * np.sqrt(m) / (1 + np.sqrt(m)))
    >>> frame = pd.DataFrame({"molality_mol_kg": np.r_[m, [0.01] * 4],
    ...                       "emf_V": np.r_[e, [e[3]] * 4], "series": ["A"] * 5 + ["B"] * 4})
    >>> result = reduce_many(frame, metadata={"electrolyte": "HCl", "electrons": 1,
    ...                                       "temperature_C": 25.0})
    >>> result.summary["n_points"].tolist()
    [5, 4]
    >>> bool(result.summary["failure"].iloc[1] != ""), len(result.reductions)
    (True, 1)
    """
    if isinstance(runs, pd.DataFrame):
        if metadata is None:
            raise ValueError("a DataFrame of readings needs metadata= (electrolyte, electrons, "
                             "temperature_C, …)")
        runs = runs_from_frame(runs, metadata)
    elif metadata is not None:
        raise ValueError("metadata= goes with a DataFrame; runs carry their own metadata")
    reducer = series_reducer(model, fixed)
    outcomes: list[SeriesReduction] = []
    runs = list(runs)
    for first in range(0, len(runs), BATCH_SIZE):
        chunk = reducer.batch(runs[first:first + BATCH_SIZE])
        outcomes += chunk
        if progress is not None:
            for _ in chunk:
                progress(1)
    return ManyReductions(model=reducer.model, outcomes=tuple(outcomes))


@dataclass(frozen=True)
class SeriesReducer:
    """The common choices of a batch, checked once: called with a run, it reduces that series
    as :func:`reduce_many` does (its reduction, or its reason). Plain data, so that worker
    processes can share it.

    Attributes
    ----------
    model : str
        The model asked for, as :attr:`ManyReductions.model` shows it.
    first : str
        The model fitted when no models are compared.
    compared : tuple of str or None
        The models compared on every series, or None.
    fixed : mapping of str to float
        The held parameters.
    per_model : mapping of str to mapping
        The held parameters each compared model has.
    """

    model: str
    first: str
    compared: tuple[str, ...] | None
    fixed: Mapping[str, float]
    per_model: Mapping[str, Mapping[str, float]]

    def __call__(self, run: Run) -> SeriesReduction:
        return _reduce_one(run, self.first, None if self.compared is None
                           else list(self.compared), dict(self.fixed),
                           {m: dict(f) for m, f in self.per_model.items()})

    def batch(self, runs: Sequence[Run]) -> list[SeriesReduction]:
        """Each run reduced as a call with it alone would reduce it; with one model, the fits
        of all of them solved together (:func:`activolt.procedures.dilution.reduce_runs`)."""
        if self.compared is not None:
            return [self(run) for run in runs]
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            results = reduce_runs(runs, self.first, dict(self.fixed))
        return [SeriesReduction(series_name(run), run, reduction=result)
                if isinstance(result, Reduction) else
                SeriesReduction(series_name(run), run, failure=_reason(result))
                for run, result in zip(runs, results, strict=True)]


def series_reducer(model: str | Sequence[str] = "hueckel",
                   fixed: Mapping[str, float] | None = None) -> SeriesReducer:
    """The reducer of one series at a time for a batch (see :func:`reduce_many`).

    Raises
    ------
    InputError
        An unknown model, or a held parameter that no model asked for has.
    """
    fixed = dict(fixed or {})
    compared = _compared_models(model)
    label = model if isinstance(model, str) else ",".join(model)
    try:
        families = [get_model(name) for name in (compared or [str(model)])]
    except ValueError as error:
        raise InputError(str(error), column="--model") from None
    known = {p.name for f in families for p in f.parameters} | {SLOPE}
    for name in fixed:
        if name not in known:
            raise InputError(f"no model asked for has a parameter '{name}'; "
                             f"{'they have' if compared else 'it has'}: "
                             f"{', '.join(sorted(known))}", column="--fix")
    per_model = {f.name: {k: v for k, v in fixed.items()
                          if k in f.parameter_names or k == SLOPE} for f in families}
    return SeriesReducer(model=label, first=families[0].name,
                         compared=None if compared is None else tuple(compared), fixed=fixed,
                         per_model=per_model)


def _reduce_one(run: Run, model: str, compared: list[str] | None, fixed: dict[str, float],
                per_model: dict[str, dict[str, float]]) -> SeriesReduction:
    name = series_name(run)
    # a refused fit may meet NaN on its way (a singular covariance); its reason is kept, so
    # numpy's floating-point warnings would only repeat it on stderr
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        return _attempt(run, name, model, compared, fixed, per_model)


def _attempt(run: Run, name: str, model: str, compared: list[str] | None,
             fixed: dict[str, float], per_model: dict[str, dict[str, float]]
             ) -> SeriesReduction:
    try:
        if compared is None:
            return SeriesReduction(name, run, reduction=reduce_run(run, model=model, fixed=fixed))
        comparison = compare_models(run, compared,
                                    {m: f for m, f in per_model.items() if f})
    except (FitError, InputError) as error:
        return SeriesReduction(name, run, failure=_reason(error))
    reduction = comparison.recommended_reduction
    if reduction is None:
        reason = comparison.warnings[-1] if comparison.warnings else "no model is adequate"
        return SeriesReduction(name, run, comparison=comparison, failure=" ".join(reason.split()))
    return SeriesReduction(name, run, reduction=reduction, comparison=comparison)
