"""The JSON record of a reduction: what a lab archives or uploads.

The layout is versioned by ``record_schema`` (``activolt-record/1``) and described by the JSON
Schema shipped beside this module (``record_schema.json``). Keys are only ever added.
"""

from __future__ import annotations

import functools
import hashlib
import json
import json.encoder
import math
import os
import platform
from collections.abc import Mapping, Sequence
from contextvars import ContextVar
from dataclasses import dataclass
from datetime import UTC, datetime
from importlib.metadata import PackageNotFoundError
from importlib.metadata import version as package_version
from importlib.resources import files
from pathlib import Path
from typing import Any

from .. import __version__
from ..constants import INTERNATIONAL_VOLT_V
from ..data.runs import VOLT_UNITS
from ..errors import InputError
from ..physics.thermodynamics import log10_equilibrium_constant, standard_gibbs_energy_kJ_mol
from ..procedures.calibration import CalibrationBatch, ElectrodeHistory
from ..procedures.dilution import Reduction
from ..procedures.model_choice import (
    CHI2_P_MIN,
    MODEL_CHOICE_RULE,
    RECOMMENDATION_RULE,
    RUNS_P_MIN,
    VARIANCE_RATIO_P_MIN,
    ModelComparison,
)
from ..procedures.montecarlo import MonteCarloResult
from ..procedures.ph import PhResult
from ..procedures.properties import DerivedResults, derive_results
from ..procedures.published import (
    plain_values,
    point_names,
    point_values_of_many,
)
from ..procedures.temperature import TemperatureStudy
from ..report.cautions import cautions_for
from ..report.numbers import json_number, json_numbers
from ..safe_text import neutralise_formula
from .json_layout import json_text

RECORD_SCHEMA = "activolt-record/1"
#: ``record_kind`` of the record of a calibrated batch of reference electrodes.
CALIBRATION_KIND = "calibration"
#: The command line being run (``activolt reduce …``), set by ``activolt.cli.main`` while it
#: runs, so that every record it writes says how it was made; None for library use.
COMMAND_LINE: ContextVar[tuple[str, ...] | None] = ContextVar("activolt_command_line",
                                                              default=None)
#: Packages whose versions can change a result, named in every record's ``provenance``.
PROVENANCE_PACKAGES = ("numpy", "scipy", "pandas", "lmfit", "uncertainties", "iapws")


def provenance() -> dict[str, Any]:
    """How a record was made: the command line (None from the library), the Python version and
    the versions of the numerical packages (``provenance`` in ``record_schema.json``)."""
    command = COMMAND_LINE.get()
    return {"command_line": None if command is None else list(command),
            "python_version": platform.python_version(), "packages": dict(_package_versions())}


@functools.lru_cache(maxsize=1)
def _package_versions() -> tuple[tuple[str, str | None], ...]:
    """The installed versions of :data:`PROVENANCE_PACKAGES` (looked up once per process: a
    batch writes thousands of records)."""
    packages = []
    for name in PROVENANCE_PACKAGES:
        try:
            packages.append((name, package_version(name)))
        except PackageNotFoundError:
            packages.append((name, None))
    return tuple(packages)


def _head(created: datetime | None, kind: str | None = None) -> dict[str, Any]:
    """The keys every record opens with: schema, kind (a reduction has none), software, when
    (UTC, ISO 8601) and how it was made."""
    return {"record_schema": RECORD_SCHEMA, **({"record_kind": kind} if kind else {}),
            "software": {"name": "activolt", "version": __version__},
            "created_utc": (created or datetime.now(UTC)).strftime("%Y-%m-%dT%H:%M:%SZ"),
            "provenance": provenance()}


def _run_part(run: Any, record_folder: Path | None) -> dict[str, Any]:
    """``input`` and ``run_info`` of a record made from one table (none: an empty input)."""
    if run is None:
        return {"input": {"file": "", "sha256": "0" * 64}, "run_info": {}}
    return {"input": input_record(run, record_folder), "run_info": dict(run.metadata.info)}


def _with_u(value: Any, method: str) -> dict[str, Any]:
    return {"value": json_number(value.nominal_value), "uncertainty": json_number(value.std_dev),
            "method": method}


def record_schema() -> dict[str, Any]:
    """The JSON Schema of the record."""
    text = (files("activolt.io") / "record_schema.json").read_text(encoding="utf-8")
    return json.loads(text)


#: The keys of each entry of a record's ``points``, in order.
_POINT_KEYS = ("line", "molality_mol_kg", "u_molality_mol_kg", "emf_V", "u_emf_V",
               "temperature_K", "pressure_correction_V", "gas_partial_pressure_Pa", "electrode",
               "fitted_emf_V", "residual_V", "gamma_pm", "u_gamma_pm", "gamma_pm_model",
               "u_gamma_pm_model", "flag", "used_in_fit", "U95_gamma_pm", "u_gamma_pm_budget",
               "leverage", "studentized_residual", "cooks_distance", "note")


#: The columns of a reduction's points that its record's ``points`` are made of (with the
#: budget columns ``u_gamma_pm_<input>``).
_POINT_COLUMNS = ("line", "molality_mol_kg", "u_molality_mol_kg", "emf_V", "u_emf_V",
                  "temperature_K", "pressure_correction_V", "gas_pressure_Pa", "electrode",
                  "fitted_emf_V", "residual_V", "gamma_pm", "u_gamma_pm", "gamma_pm_model",
                  "u_gamma_pm_model", "flag", "diagnostic", "leverage", "studentized_residual",
                  "cooks_distance", "note")


def _plain(values: Any) -> list[Any]:
    """A column as plain Python values, as :func:`plain_values` reads a table's column."""
    import numpy as np

    if isinstance(values, np.ndarray):
        return values.tolist()
    return values.to_numpy(dtype=object).tolist()


def _joined(columns: Sequence[Any]) -> Any:
    """The columns of many tables one after another: one numpy array when they are numpy arrays
    of one dtype, else the list of their plain values (:func:`_plain`)."""
    import numpy as np

    if columns and all(isinstance(c, np.ndarray) for c in columns):
        dtype = columns[0].dtype
        if all(c.dtype is dtype or c.dtype == dtype for c in columns):
            return columns[0] if len(columns) == 1 else np.concatenate(columns)
    return [v for column in columns for v in _plain(column)]


def _listed(values: Any) -> list[Any]:
    """:func:`_joined`'s values as a list of plain values."""
    return values if isinstance(values, list) else values.tolist()


def _json_column(values: Any) -> list[float | None]:
    """:func:`json_numbers` of :func:`_joined`'s values: a float array converted at once, its
    non-finite numbers then set to None."""
    import numpy as np

    if isinstance(values, list) or values.dtype.kind != "f":
        return json_numbers(_listed(values))
    cells = values.tolist()
    for i in np.flatnonzero(~np.isfinite(values)).tolist():
        cells[i] = None
    return cells


def _float_column(values: Any) -> list[Any]:
    """``float`` of each of :func:`_joined`'s values."""
    if isinstance(values, list) or values.dtype.kind != "f":
        return [float(v) for v in _listed(values)]
    return values.tolist()


def _int_column(values: Any) -> list[Any]:
    """``int`` of each of :func:`_joined`'s values."""
    if isinstance(values, list) or values.dtype.kind not in "iu":
        return [int(v) for v in _listed(values)]
    return values.tolist()


def _kept_column(values: Any) -> list[Any]:
    """:func:`_joined`'s values as a derived table's row keeps them: a float a
    :func:`json_number`, any other value as it is."""
    if not isinstance(values, list):
        if values.dtype.kind == "f":
            return _json_column(values)
        if values.dtype.kind in "iub":
            return values.tolist()
    isfinite = math.isfinite
    return [v if type(v) is float and isfinite(v) else json_number(v) if isinstance(v, float)
            else v for v in _listed(values)]


def _split(rows: list[Any], lengths: Sequence[int]) -> list[list[Any]]:
    """``rows`` cut into consecutive pieces of ``lengths``."""
    pieces, start = [], 0
    for n in lengths:
        pieces.append(rows[start:start + n])
        start += n
    return pieces


def _budget_tables(reductions: Sequence[Reduction], lengths: Sequence[int]
                   ) -> list[list[dict[str, Any]]]:
    """Each reading's ``u_gamma_pm_budget`` of each of ``reductions``: the components of u(γ±)
    (the points' ``u_gamma_pm_<input>`` columns), worked out together for the reductions that
    have the same components."""
    groups: dict[tuple[str, ...], list[int]] = {}
    for position, reduction in enumerate(reductions):
        groups.setdefault(_budget_names(tuple(point_names(reduction))), []).append(position)
    found: list[list[dict[str, Any]]] = [[] for _ in reductions]
    for names, members in groups.items():
        sizes = [lengths[i] for i in members]
        keys = [name.removeprefix("u_gamma_pm_") for name in names]
        columns = [_json_column(_joined(point_values_of_many(
            [reductions[i] for i in members], name))) for name in names]
        rows = _rows(keys, columns, sum(sizes))
        for i, piece in zip(members, _split(rows, sizes), strict=True):
            found[i] = piece
    return found


@functools.lru_cache(maxsize=16)
def _budget_names(names: tuple[str, ...]) -> tuple[str, ...]:
    """The budget columns (``u_gamma_pm_<input>``) among the points' column ``names``."""
    return tuple(name for name in names
                 if name.startswith("u_gamma_pm_") and name != "u_gamma_pm_model")


def _point_tables(reductions: Sequence[Reduction]) -> list[list[dict[str, Any]]]:
    """Every reading of each of ``reductions`` as its record's ``points`` entries, the columns
    of all of them read and converted together (each column once, without building the
    tables)."""
    import numpy as np

    lines = point_values_of_many(reductions, "line")
    lengths = [len(column) for column in lines]
    table = {name: _joined(lines if name == "line" else point_values_of_many(reductions, name))
             for name in _POINT_COLUMNS}
    flags, diagnostics = _listed(table["flag"]), _listed(table["diagnostic"])
    u_gamma = table["u_gamma_pm"]
    k = [reduction.statistics.coverage_factor for reduction in reductions]
    if isinstance(u_gamma, list) or u_gamma.dtype.kind != "f" or not all(
            type(v) is float for v in k):
        expanded = json_numbers([u * k_i for u, k_i in zip(
            _listed(u_gamma), [k_i for k_i, n in zip(k, lengths, strict=True)
                               for _ in range(n)], strict=True)])
    else:
        with np.errstate(over="ignore", invalid="ignore"):  # inf and NaN, as Python makes them
            expanded = _json_column(u_gamma * np.repeat(k, lengths))
    budgets = [row for rows in _budget_tables(reductions, lengths) for row in rows]
    columns = (
        _int_column(table["line"]),
        _float_column(table["molality_mol_kg"]),
        _json_column(table["u_molality_mol_kg"]),
        _json_column(table["emf_V"]),
        _json_column(table["u_emf_V"]),
        _float_column(table["temperature_K"]),
        _json_column(table["pressure_correction_V"]),
        _json_column(table["gas_pressure_Pa"]),
        [v or None for v in _listed(table["electrode"])],
        _json_column(table["fitted_emf_V"]),
        _json_column(table["residual_V"]),
        _json_column(table["gamma_pm"]),
        _json_column(u_gamma),
        _json_column(table["gamma_pm_model"]),
        _json_column(table["u_gamma_pm_model"]),
        [flag if isinstance(flag, str) else diagnostic if isinstance(diagnostic, str) else None
         for flag, diagnostic in zip(flags, diagnostics, strict=True)],
        [not isinstance(flag, str) for flag in flags],
        expanded,
        budgets,
        _json_column(table["leverage"]),
        _json_column(table["studentized_residual"]),
        _json_column(table["cooks_distance"]),
        [v or None for v in _listed(table["note"])],
    )
    return _split(_rows(_POINT_KEYS, columns, sum(lengths)), lengths)


def _rows(keys: Any, columns: Any, n_rows: int) -> list[dict[str, Any]]:
    """Rows as dicts from columns (lists of one length ``n_rows``), keys in order."""
    if not keys:
        return [{} for _ in range(n_rows)]
    if any(len(column) != n_rows for column in columns) or len(columns) != len(keys):
        raise ValueError("the columns of a table differ in length")
    # each row a dict of the keys zipped with the row's values, by map rather than a loop
    # (the rows of a chunk's tables are tens of thousands of dicts)
    return list(map(dict, map(functools.partial(zip, keys, strict=True),
                              zip(*columns, strict=True))))


#: The keys of each entry of a record's ``published_comparison``, in order.
_PUBLISHED_KEYS = ("molality_mol_kg", "gamma_pm_published", "interpolated", "difference",
                   "n_sources", "published_values", "spread_published", "u_published",
                   "u_difference", "difference_over_u")


def _published_tables(derived: Sequence[DerivedResults]
                      ) -> list[tuple[list[dict[str, Any]], Any]]:
    """Each record's ``published_comparison`` entries and ``published_source`` (the first
    row's source, the table's own when it has no row; no rows and None without a published
    table), the columns of all the tables read and converted together."""
    compared = [d for d in derived if d.published_columns is not None]
    tables = [d.published_columns for d in compared]
    table = {name: _joined([t[name] for t in tables]) for name in _PUBLISHED_KEYS}
    lengths = [len(t["molality_mol_kg"]) for t in tables]
    rows = _split(_rows(_PUBLISHED_KEYS, (
        _float_column(table["molality_mol_kg"]),
        _json_column(table["gamma_pm_published"]),
        [bool(v) for v in _listed(table["interpolated"])],
        _json_column(table["difference"]),
        _int_column(table["n_sources"]),
        _published_values(_listed(table["published_values"])),
        _json_column(table["spread_published"]),
        _json_column(table["u_published"]),
        _json_column(table["u_difference"]),
        _json_column(table["difference_over_u"])), sum(lengths)), lengths)
    found = iter(zip(compared, rows, strict=True))
    return [([], None) if d.published_columns is None else _first_source(*next(found))
            for d in derived]


def _published_values(cells: list[Any]) -> list[list[dict[str, Any]]]:
    """Each row's ``published_values`` entries (its cell: a tuple of (source, γ±, printed)),
    each distinct cell converted once: the runs of a chunk at the same molalities share their
    cells."""
    converted: dict[int, list[tuple[Any, float | None, bool]]] = {}  # by the id of a cell,
    # every cell held by ``cells`` meanwhile
    rows = []
    for values in cells:
        entries = converted.get(id(values))
        if entries is None:
            entries = converted[id(values)] = [(source, json_number(value), not printed)
                                               for source, value, printed in values]
        rows.append([{"source": source, "gamma_pm": value, "interpolated": interpolated}
                     for source, value, interpolated in entries])
    return rows


def _first_source(derived: DerivedResults, rows: list[dict[str, Any]]
                  ) -> tuple[list[dict[str, Any]], Any]:
    """``rows`` and the source of the first of them (the published table's own when there is
    no row)."""
    import numpy as np

    if not rows:
        return rows, derived.published["source"].iloc[0]
    source = derived.published_columns["source"]
    # pandas' text gives its first text, or its missing value, as plain_values reads it
    return rows, source[:1].tolist()[0] if isinstance(source, np.ndarray) else source[0]


def _derived_tables(derived: Sequence[DerivedResults]) -> list[list[dict[str, Any]]]:
    """The rows of each one's derived properties (the table's columns), every float a
    :func:`json_number`, the columns of tables with the same columns converted together."""
    groups: dict[tuple[str, ...], list[int]] = {}
    for position, d in enumerate(derived):
        groups.setdefault(tuple(d.property_columns), []).append(position)
    found: list[list[dict[str, Any]]] = [[] for _ in derived]
    for names, members in groups.items():
        tables = [derived[i].property_columns for i in members]
        lengths = [len(next(iter(t.values()))) for t in tables] if names else [0] * len(tables)
        columns = [_kept_column(_joined([t[name] for t in tables])) for name in names]
        for i, piece in zip(members, _split(_rows(names, columns, sum(lengths)), lengths),
                            strict=True):
            found[i] = piece
    return found


def build_record(reduction: Reduction, created: datetime | None = None,
                 comparison: ModelComparison | None = None,
                 monte_carlo: MonteCarloResult | None = None,
                 record_folder: Path | None = None,
                 derived: DerivedResults | None = None,
                 input_entry: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The JSON-ready record of ``reduction`` (see ``record_schema.json``).

    ``input_entry``: the record's ``input`` (:func:`input_record` of the run and
    ``record_folder``) when the caller has it already — the series of a batch share their
    table and metadata, which are then resolved and hashed once rather than once a series.

    With a model ``comparison`` (``--model all``), ``reduction`` is the recommended model's, the
    comparison is kept under ``model_comparison`` and the stated u(E°) includes the
    model-choice component.
    """
    return build_records([reduction], created, [comparison], [monte_carlo], record_folder,
                         [derived], [input_entry])[0]


def build_records(reductions: Sequence[Reduction], created: datetime | None = None,
                  comparisons: Sequence[ModelComparison | None] | None = None,
                  monte_carlos: Sequence[MonteCarloResult | None] | None = None,
                  record_folder: Path | None = None,
                  derived: Sequence[DerivedResults | None] | None = None,
                  input_entries: Sequence[Mapping[str, Any] | None] | None = None
                  ) -> list[dict[str, Any]]:
    """The JSON-ready records of many reductions (a chunk of a batch), each what
    :func:`build_record` gives for it alone, their tables (readings, published comparison,
    derived properties) built together, column by column.

    Parameters
    ----------
    reductions : sequence of Reduction
        The reductions, of any models, electrolytes and lengths.
    created : datetime, optional
        The records' time stamp; now (as each record is made) by default.
    comparisons, monte_carlos, derived, input_entries : sequence, optional
        For each reduction, as :func:`build_record` takes them (each None by default; a
        missing ``derived`` is worked out with :func:`derive_results`).
    record_folder : pathlib.Path, optional
        Where the records are written; the input files are named relative to it.

    Returns
    -------
    list of dict
        One record for each reduction, in the order of ``reductions``.

    Examples
    --------
    >>> build_records([])
    []
    """
    nothing = [None] * len(reductions)
    derived = [d or derive_results(r) for r, d in zip(reductions, derived or nothing,
                                                       strict=True)]
    return [_record(reduction, created, comparison, monte_carlo, record_folder, d, entry,
                    points, published, properties, series)
            for reduction, comparison, monte_carlo, d, entry, points, published, properties,
            series in zip(reductions, comparisons or nothing, monte_carlos or nothing, derived,
                          input_entries or nothing, _point_tables(reductions),
                          _published_tables(derived), _derived_tables(derived),
                          _series_of_many(reductions), strict=True)]


def _record(reduction: Reduction, created: datetime | None,
            comparison: ModelComparison | None, monte_carlo: MonteCarloResult | None,
            record_folder: Path | None, derived: DerivedResults,
            input_entry: Mapping[str, Any] | None, points: list[dict[str, Any]],
            published: tuple[list[dict[str, Any]], Any],
            properties: list[dict[str, Any]], series: str | None) -> dict[str, Any]:
    """The record of ``reduction`` (:func:`build_record`), its tables and series given:
    ``points``, ``published`` (the comparison's rows and source), the derived ``properties``'
    rows and the name of the ``series`` (:func:`run_series`)."""
    run, meta, stats = reduction.run, reduction.run.metadata, reduction.statistics
    e0 = reduction.standard_potential
    covariance_note = "linear propagation of the fit covariance: " + stats.covariance_note
    cross = reduction.linear_extrapolation
    published_rows, published_source = published
    compared = derived.published_columns is not None
    other = reduction.standard_potential_other_basis_V
    e0_record = {**_with_u(e0, covariance_note),
                 "coverage_factor_95": stats.coverage_factor,
                 "expanded_uncertainty_95": stats.coverage_factor * e0.std_dev}
    warnings = list(reduction.warnings)
    if comparison is not None:
        e0_record.update(
            uncertainty=comparison.u_combined_V, u_fit=comparison.u_fit_V,
            u_model_choice=comparison.u_model_choice_V,
            expanded_uncertainty_95=stats.coverage_factor * comparison.u_combined_V,
            method=covariance_note + ", combined with the model-choice component "
                   "(spread of E° among adequate models, rectangular)")
        warnings += [w for w in comparison.warnings if w not in warnings]
    return {
        **_head(created),
        "input": dict(input_entry) if input_entry is not None else input_record(
            run, record_folder),
        "series": series,
        "run_info": dict(meta.info),
        "electrolyte": meta.electrolyte.formula,
        "electrons": meta.electrons,
        "cell": meta.cell,
        "temperature_K": reduction.temperature_K,
        "standard_pressure_kPa": meta.standard_pressure_Pa / 1e3,
        "model": {
            "name": reduction.model.name,
            "title": reduction.model.title,
            "parameters": {
                p.name: {"value": p.value, "uncertainty": json_number(p.uncertainty),
                         "unit": p.unit, "fixed": p.fixed, "reason": p.reason}
                for p in reduction.parameters
            },
        },
        "standard_potential_V": e0_record,
        "standard_potential_other_basis": None if other is None else {
            "standard_pressure_kPa": other[0] / 1e3, "value_V": other[1],
            "uncertainty_V": e0.std_dev,
            "method": "shifted by (RT/nF) Σ ν_gas ln(p°_new/p°_old); same uncertainty"},
        "corrections": list(reduction.corrections),
        "catalogue_standard_potential_V": None if reduction.catalogue is None else {
            "value": reduction.catalogue.standard_potential_V,
            "uncertainty": reduction.catalogue.u_standard_potential_V,
            "couples": reduction.catalogue.couples,
            "method": "electrode catalogue at the run temperature, on the run's pressure basis"},
        "electrolyte_sign": meta.electrolyte_sign,
        "delta_g_kJ_mol": _with_u(standard_gibbs_energy_kJ_mol(e0, meta.electrons),
                                  "ΔG° = −nFE°, propagated from E°"),
        "log10_K": _with_u(log10_equilibrium_constant(e0, meta.electrons,
                                                      reduction.temperature_K),
                           "log10 K = nFE°/(RT ln 10), propagated from E°"),
        "covariance": {"parameters": list(reduction.free_names),
                       "matrix": reduction.covariance.tolist()},
        "gamma_uncertainty_method": (
            "γ± = exp[(E° − E)/k − ln m±] from each reading; covariance propagated with the "
            "correlation between E° and the readings it is made of (GUM, JCGM 100:2008, 5.2)"
            + ", plus u(m)/m"),
        "points": points,
        "fit": {
            "n_points": stats.n_points, "n_free": stats.n_free, "dof": stats.dof,
            "chi2": stats.chi2, "reduced_chi2": stats.reduced_chi2, "aic": stats.aic,
            "bic": stats.bic, "residual_sd_V": stats.residual_sd_V,
            "covariance_scaled": stats.covariance_scaled,
            "birge_ratio": stats.birge_ratio,
            "chi2_p_value": json_number(stats.chi2_p_value),
            "runs_test_p_value": json_number(stats.runs_p_value),
            "weighting": ("stated reading uncertainties" if stats.stated_uncertainty
                          else "unit weights"),
        },
        "cross_check": None if cross is None else {
            "method": "straight-line extrapolation of E + k ln m± − k ln γ(extended "
                      "Debye–Hückel, Bå = 1.5) against m",
            "standard_potential_V": {"value": cross.standard_potential_V,
                                     "uncertainty": cross.u_standard_potential_V},
            "n_points": cross.n_points,
            "max_ionic_strength_mol_kg": cross.max_ionic_strength,
        },
        "published_comparison": published_rows,
        "published_source": published_source if compared else None,
        "published_comparison_method": None if not compared else (
            "gamma_pm_published is the mean of every published table at the molality (each "
            "printed there or interpolated within the table); spread_published = largest − "
            "smallest of them; u_published = sqrt((spread/2)^2 + (half a unit of the last "
            "printed digit)^2); u_difference = sqrt(u_gamma_pm^2 + u_published^2) (k = 1)"),
        "volt_unit": {
            "input": meta.volt_unit, "factor_to_absolute": VOLT_UNITS[meta.volt_unit],
            "method": "EMF and u(EMF) multiplied by the factor on reading; 1 V_int = "
                      f"{INTERNATIONAL_VOLT_V:.6f} V (US international volt, NBS Circular 459, "
                      "1947)"},
        "derived_properties": {
            "method": "; ".join(derived.property_notes),
            "points": properties,
        },
        "model_comparison": None if comparison is None else comparison_record(comparison),
        "uncertainty_budget": {
            "quantity": "standard_potential_V",
            "lines": [{"component": b.component, "u_V": b.u_V, "method": b.method}
                      for b in reduction.budget],
            "combined_u_V": reduction.standard_potential.std_dev,
        },
        "monte_carlo": None if monte_carlo is None else {
            "method": "GUM Supplement 1 (JCGM 101:2008): inputs drawn from their stated "
                      "distributions, every trial refitted",
            "trials": monte_carlo.trials, "failed": monte_carlo.failed,
            "seed": monte_carlo.seed,
            "standard_potential_V": {
                "mean": monte_carlo.standard_potential.mean,
                "uncertainty": monte_carlo.standard_potential.standard_deviation,
                "interval_95": [monte_carlo.standard_potential.low,
                                monte_carlo.standard_potential.high]},
            "u_gamma_pm": [float(v) for v in monte_carlo.points["u_gamma_pm"]],
            "notes": list(monte_carlo.notes),
        },
        "notes": list(reduction.notes),
        "warnings": warnings,
        "cautions": cautions_for(meta.electrolyte, meta.cell),
    }


def record_json(reduction: Reduction, created: datetime | None = None,
                comparison: ModelComparison | None = None,
                monte_carlo: MonteCarloResult | None = None,
                record_folder: Path | None = None,
                derived: DerivedResults | None = None) -> str:
    """The record as JSON text (UTF-8, indented, NaN written as null).

    With ``record_folder`` (where the record is written), the input files are named relative
    to it.
    """
    return written_record(reduction, created, comparison, monte_carlo, record_folder,
                          derived).text


@dataclass(frozen=True)
class WrittenRecord:
    """A record's JSON text and the record it holds (``json.loads(text)``, the same content:
    :func:`json_text` writes the record exactly), for outputs made from both, such as the HTML
    report, without reading the text back."""

    text: str
    document: dict[str, Any]


def written_record(reduction: Reduction, created: datetime | None = None,
                   comparison: ModelComparison | None = None,
                   monte_carlo: MonteCarloResult | None = None,
                   record_folder: Path | None = None,
                   derived: DerivedResults | None = None,
                   input_entry: Mapping[str, Any] | None = None) -> WrittenRecord:
    """The record of a reduction as text and as the document it holds (arguments as for
    :func:`build_record`)."""
    document = build_record(reduction, created, comparison, monte_carlo, record_folder, derived,
                            input_entry)
    return WrittenRecord(json_text(document), document)


def load_record(source: str | Path) -> dict[str, Any]:
    """A record read back from its file (or its JSON text), checked to be an activolt record.

    Parameters
    ----------
    source : str or pathlib.Path
        The record's path, or the JSON text itself.

    Returns
    -------
    dict
        The record as written: ``json.loads`` of :func:`record_json` gives back exactly what
        :func:`build_record` built (non-finite numbers are null in both).

    Raises
    ------
    InputError
        Not JSON, or JSON that is not an ``activolt-record/1`` record (the first required key
        missing is named).
    """
    text, where = (source.read_text(encoding="utf-8"), str(source)) if isinstance(
        source, Path) else (source, "record")
    try:
        record = json.loads(text)
    except json.JSONDecodeError as error:
        raise InputError(f"not JSON: {error.msg}", file=where, line=error.lineno) from None
    if not isinstance(record, dict) or record.get("record_schema") != RECORD_SCHEMA:
        raise InputError(f"not an {RECORD_SCHEMA} record", file=where)
    schema = record_schema()
    kind = "then" if record.get("record_kind") == CALIBRATION_KIND else "else"
    branch = schema.get(kind, {})
    if kind == "else" and "if" in branch:  # a pH record, else a reduction or study
        branch = branch["then" if record.get("record_kind") == PH_KIND else "else"]
    missing = [key for key in [*schema["required"], *branch.get("required", [])]
               if key not in record]
    if missing:
        raise InputError(f"the record lacks '{missing[0]}'", file=where)
    return record

def _path_from(path: Path, folder: Path | None, real_folder: str | None = None) -> str:
    """``path`` relative to ``folder`` (forward slashes), or as given without a folder or when
    there is no relative path (another drive). ``real_folder``: ``os.path.realpath(folder)``,
    when the caller has it already (a record names two files relative to one folder)."""
    if folder is None:
        return str(path)
    if real_folder is None:
        real_folder = os.path.realpath(folder)
    try:
        return Path(os.path.relpath(os.path.realpath(path), real_folder)).as_posix()
    except ValueError:
        return str(Path(path).resolve())


def run_series(points: Any) -> str | None:
    """The name of the series the points hold, or None (no name, or several)."""
    return _only_name(plain_values(points, "series"))


def _points_columns(reduction: Reduction) -> dict[str, Any]:
    """The columns of the points table (numpy arrays; text columns as lists), units in the
    names, flagged rows included."""
    return _points_columns_of_many([reduction])


def _points_columns_of_many(reductions: Sequence[Reduction]) -> dict[str, Any]:
    """The columns of the points tables of ``reductions`` (at least one), one table after
    another, as :func:`_points_columns` gives each (numpy arrays, each a new one; text columns
    as lists).

    Raises
    ------
    _NotPlainTable
        A column that is not of one type in every table (each is then written on its own).
    """
    import numpy as np

    def numbers(name: str) -> Any:
        # a new array in the column's own type, as the points table keeps it
        columns = [values if isinstance(values, np.ndarray) else values.to_numpy()
                   for values in point_values_of_many(reductions, name)]
        if len(columns) == 1:
            return columns[0].copy()
        if len({column.dtype for column in columns}) > 1:
            raise _NotPlainTable
        return np.concatenate(columns)

    def text(name: str) -> list[Any]:
        return _neutralised(_texts(point_values_of_many(reductions, name)))

    def filled(name: str) -> list[Any]:
        # pandas' where(notna, ""): every missing value (None, NaN, NA) becomes ""
        return [v if type(v) is str
                else "" if v is None or (type(v) is float and v != v)
                else v if type(v) is float or not _missing(v) else ""
                for v in _listed(_joined(point_values_of_many(reductions, name)))]

    return {
        "line": numbers("line"),
        "molality_mol_kg": numbers("molality_mol_kg"),
        "u_molality_mol_kg": numbers("u_molality_mol_kg"),
        "temperature_C": numbers("temperature_K") - 273.15,
        "emf_mV": numbers("emf_V") * 1e3,
        "u_emf_mV": numbers("u_emf_V") * 1e3,
        "fitted_emf_mV": numbers("fitted_emf_V") * 1e3,
        "residual_mV": numbers("residual_V") * 1e3,
        "gamma_pm": numbers("gamma_pm"),
        "u_gamma_pm": numbers("u_gamma_pm"),
        "gamma_pm_model": numbers("gamma_pm_model"),
        "u_gamma_pm_model": numbers("u_gamma_pm_model"),
        "electrode": text("electrode"),
        "series": text("series"),
        "leverage": numbers("leverage"),
        "studentized_residual": numbers("studentized_residual"),
        "cooks_distance": numbers("cooks_distance"),
        "flag": filled("flag"),
        "diagnostic": filled("diagnostic"),
        "note": text("note"),
    }


def _text_values(values: Any) -> list[Any]:
    """A column of text (as :func:`point_values` gives it) as a list, a missing text None or
    NaN: pandas' text held by Arrow is read by pyarrow, a few times quicker than pandas'
    ``to_numpy``."""
    import numpy as np
    import pandas as pd
    import pyarrow as pa

    if isinstance(values, np.ndarray):
        return values.tolist()
    if isinstance(values, pd.arrays.ArrowStringArray):
        return pa.array(values).to_pylist()
    return values.to_numpy(dtype=object).tolist()


def _texts(columns: Sequence[Any]) -> list[Any]:
    """Text columns one after another, as :func:`_text_values` reads each (a missing text
    None or NaN)."""
    return [v for column in columns for v in _text_values(column)]


def _series_of_many(reductions: Sequence[Reduction]) -> list[str | None]:
    """:func:`run_series` of the points of each of ``reductions``, their series columns read
    together."""
    columns = point_values_of_many(reductions, "series")
    names = _split(_texts(columns), [len(column) for column in columns])
    return [_only_name(piece) for piece in names]


def _only_name(names: list[Any]) -> str | None:
    """The one name among ``names`` (texts; a missing one None or NaN, an empty one ignored),
    or None (no name, or several)."""
    found = {name for name in names if isinstance(name, str) and name}
    return found.pop() if len(found) == 1 else None


def _neutralised(cells: list[Any]) -> list[Any]:
    """:func:`neutralise_formula` of each cell, worked out once for each distinct text (a
    column of text usually repeats one or two)."""
    if not _all_text(cells):
        return [neutralise_formula(cell) for cell in cells]
    forms = {cell: neutralise_formula(cell) for cell in set(cells)}
    return [forms[cell] for cell in cells]


def _all_text(values: Any) -> bool:
    """Whether every one of ``values`` is a ``str`` (not a subclass): their types gathered in
    one call (a chunk's text columns are thousands of cells)."""
    return set(map(type, values)) <= _STR


_STR = frozenset({str})


def _missing(value: Any) -> bool:
    """None, NaN or NA (what pandas' ``isna`` calls missing) — for one scalar."""
    import pandas as pd

    return bool(pd.isna(value))


def _points_frame(reduction: Reduction) -> Any:
    """The points table as a DataFrame, units in the column names, flagged rows included."""
    import pandas as pd

    columns = _points_columns(reduction)
    # text columns keep pandas' own type for text (as when they were mapped from the table)
    for name in ("electrode", "series", "note"):
        columns[name] = reduction.points[name].map(neutralise_formula)
    return pd.DataFrame(columns)


class _NotPlainTable(Exception):
    """A column :func:`table_csv` leaves to pandas (an infinity, an unusual type)."""


def _csv_cells(column: Any) -> list[str]:
    """One column's cells as ``DataFrame.to_csv(float_format="%.10g", na_rep="")`` writes
    them: floats formatted, missing values empty, text as it is."""
    import numpy as np

    if isinstance(column, np.ndarray):
        kind = column.dtype.kind
        values = column.tolist()
        if kind == "f":
            if not values:
                return []
            # printf-style, as pandas applies float_format: the column in one format, its
            # cells then split at the commas (a formatted number has none)
            text = _float_format(len(values)) % tuple(values)
            if "n" not in text:  # no "nan" and no "inf"
                return text.split(",")
            if "inf" in text:
                raise _NotPlainTable
            return ["" if cell == "nan" else cell for cell in text.split(",")]
        if kind in "iub":
            return [str(v) for v in values]
        raise _NotPlainTable
    if _all_text(column):
        return list(column)
    cells = []
    for v in column:
        if isinstance(v, str):
            cells.append(v)
        elif v is None or (isinstance(v, float) and v != v):
            cells.append("")
        else:
            raise _NotPlainTable
    return cells


@functools.lru_cache(maxsize=16)
def _float_format(n: int) -> str:
    """The printf format of ``n`` floats written ``%.10g``, separated by commas."""
    return ",".join(["%.10g"] * n)


def _csv_row(fields: list[Any]) -> str:
    """One row as the csv writer writes it (comma separated, quoted only where needed)."""
    import csv
    import io

    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerow(fields)
    return buffer.getvalue()


def table_csv(columns: dict[str, Any]) -> str:
    r"""Columns as CSV text, byte for byte what pandas writes for
    ``pd.DataFrame(columns).to_csv(index=False, float_format="%.10g", lineterminator="\n")``
    (the same csv writer, quoting only where needed), without building the DataFrame.

    Parameters
    ----------
    columns : dict
        Column name → numpy array (float, integer or bool) or list of text (None or NaN for
        a missing cell), all of one length. Anything else (an infinity, a number in a text
        column) is written by pandas itself.

    Returns
    -------
    str

    Examples
    --------
    >>> import numpy as np
    >>> table_csv({"m": np.array([0.1, np.nan]), "n": np.array([1, 2]), "e": ["a,b", None]})
    'm,n,e\n0.1,1,"a,b"\n,2,\n'
    """
    import csv
    import io

    cells = _table_cells(columns)
    if cells is None:
        import pandas as pd

        return pd.DataFrame(columns).to_csv(index=False, float_format="%.10g",
                                            lineterminator="\n")
    names = list(columns)
    if _joinable(columns, cells):
        return "".join([",".join(names) + "\n",
                        *[",".join(row) + "\n" for row in zip(*cells, strict=True)]])
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(names)
    writer.writerows(zip(*cells, strict=True))
    return buffer.getvalue()


def _table_cells(columns: Mapping[str, Any]) -> list[list[str]] | None:
    """Each column's cells (:func:`_csv_cells`), or None when a column is left to pandas."""
    try:
        return [_csv_cells(column) for column in columns.values()]
    except _NotPlainTable:
        return None


def _joinable(columns: Mapping[str, Any], cells: list[list[str]]) -> bool:
    """Whether the table's rows are its cells joined with commas: when the csv writer quotes
    none of the names and texts (it quotes a field for what the field holds; numbers and empty
    cells never, but the single empty field of a one-column row) — asked of the writer
    itself, in one row."""
    import numpy as np

    names = list(columns)
    if len(names) < 2 or not all(type(name) is str for name in names):
        return False
    texts = {cell for column, column_cells in zip(columns.values(), cells, strict=True)
             if not isinstance(column, np.ndarray) for cell in column_cells}
    fields = [*names, *texts]
    return _csv_row(fields) == ",".join(fields) + "\n"


def points_csv(reduction: Reduction) -> str:
    """The points table as CSV text, units in the column names, flagged rows included."""
    return table_csv(_points_columns(reduction))


def points_csvs(reductions: Sequence[Reduction]) -> list[str]:
    """The points tables of many reductions (a chunk of a batch) as CSV text, each what
    :func:`points_csv` writes for it alone: the columns of all the tables read and their
    cells formatted together, one format a column.

    Parameters
    ----------
    reductions : sequence of Reduction
        The reductions, of any models and lengths.

    Returns
    -------
    list of str
        One table for each reduction, in the order of ``reductions``. When a cell must be
        quoted, or a column is left to pandas (an infinity, an unusual type), each table is
        written on its own.

    Examples
    --------
    >>> points_csvs([])
    []
    """
    if len(reductions) < 2:
        return [points_csv(reduction) for reduction in reductions]
    try:
        columns = _points_columns_of_many(reductions)
    except _NotPlainTable:
        columns = None
    cells = None if columns is None else _table_cells(columns)
    if columns is None or cells is None or not _joinable(columns, cells):
        return [points_csv(reduction) for reduction in reductions]
    # every cell followed by its separator (a comma, a line break after a row's last cell),
    # laid out column by column; each table is then one join
    width, n_rows = 2 * len(cells), len(cells[0])
    fields = [","] * (width * n_rows)
    fields[width - 1::width] = ["\n"] * n_rows
    for i, column_cells in enumerate(cells):
        fields[2 * i::width] = column_cells
    header = ",".join(columns) + "\n"
    texts, start = [], 0
    for line in point_values_of_many(reductions, "line"):
        end = start + width * len(line)
        texts.append(header + "".join(fields[start:end]))
        start = end
    return texts


def comparison_record(comparison: ModelComparison) -> dict:
    """The comparison as a JSON-ready dict for the record (units in the key names).

    Parameters
    ----------
    comparison : ModelComparison
        From :func:`compare_models`.

    Returns
    -------
    dict
        ``criteria``, ``models`` (one entry per fitted model: E°, parameters, fit statistics,
        runs test, ionic-strength range, verdict), ``skipped``, ``adequate_models``,
        ``spread_V``, ``u_model_choice_V``, ``model_choice_rule``, ``recommended_model``,
        ``recommendation_rule``, ``standard_potential_V`` (value, u_fit, u_model_choice and the
        combined uncertainty, k = 1), ``notes`` and ``warnings``. Non-finite numbers are None.
    """
    models = []
    for a in comparison.assessments:
        st, rt = a.statistics, a.runs_test
        models.append({
            "name": a.name,
            "title": a.title,
            "standard_potential_V": {"value": json_number(a.standard_potential_V),
                                     "uncertainty": json_number(a.u_standard_potential_V)},
            "parameters": {
                p.name: {"value": json_number(p.value), "uncertainty": json_number(p.uncertainty),
                         "fixed": p.fixed, "reason": p.reason}
                for p in a.parameters
            },
            "fit": {"n_points": st.n_points, "n_free": st.n_free, "dof": st.dof,
                    "chi2": json_number(st.chi2), "reduced_chi2": json_number(st.reduced_chi2),
                    "aic": json_number(st.aic), "bic": json_number(st.bic),
                    "chi2_p_value": json_number(a.chi2_p_value),
                    "variance_ratio_p_value": json_number(a.variance_ratio_p_value),
                    "covariance_scaled": st.covariance_scaled},
            "runs_test": {"n_positive": rt.n_positive, "n_negative": rt.n_negative,
                          "runs": rt.runs, "expected_runs": json_number(rt.expected_runs),
                          "z": json_number(rt.z),
                          "p_value_two_sided": json_number(rt.p_value_two_sided),
                          "p_value_fewer": json_number(rt.p_value_fewer)},
            "max_ionic_strength_mol_kg": json_number(a.max_ionic_strength_mol_kg),
            "model_max_ionic_strength_mol_kg": json_number(a.model_max_ionic_strength_mol_kg),
            "adequate": a.adequate,
            "verdict": a.verdict,
            "notes": list(a.notes),
            "warnings": list(a.warnings),
        })
    return {
        "criteria": {"chi2_p_min": CHI2_P_MIN, "variance_ratio_p_min": VARIANCE_RATIO_P_MIN,
                     "runs_fewer_p_min": RUNS_P_MIN,
                     "ionic_strength": "within the model's commonly adequate range"},
        "stated_reading_uncertainty": comparison.stated_uncertainty,
        "n_points": comparison.n_points,
        "temperature_K": json_number(comparison.temperature_K),
        "models": models,
        "skipped": [{"name": s.name, "reason": s.reason} for s in comparison.skipped],
        "adequate_models": list(comparison.adequate_models),
        "spread_V": json_number(comparison.spread_V),
        "u_model_choice_V": json_number(comparison.u_model_choice_V),
        "model_choice_rule": MODEL_CHOICE_RULE,
        "recommended_model": comparison.recommended,
        "recommendation_rule": RECOMMENDATION_RULE,
        "standard_potential_V": {"value": json_number(comparison.standard_potential_V),
                                 "u_fit": json_number(comparison.u_fit_V),
                                 "u_model_choice": json_number(comparison.u_model_choice_V),
                                 "uncertainty": json_number(comparison.u_combined_V)},
        "notes": list(comparison.notes),
        "warnings": list(comparison.warnings),
    }


# --------------------------------------------------------------------------------------------
# Temperature studies
# --------------------------------------------------------------------------------------------

def input_record(run: Any, record_folder: Path | None) -> dict[str, Any]:
    """A record's ``input``: the run table and its metadata file, each named relative to
    ``record_folder`` (where the record is written; as given without one) with its SHA-256.

    Parameters
    ----------
    run : Run
        The run read (its table's hash is the one taken when it was read).
    record_folder : pathlib.Path or None
        The folder the record is written to.

    Returns
    -------
    dict
        ``{file, sha256[, metadata_file, metadata_sha256]}``.
    """
    real_folder = None if record_folder is None else os.path.realpath(record_folder)
    out = {"file": _path_from(run.path, record_folder, real_folder), "sha256": run.sha256}
    if run.metadata_path is not None:
        out["metadata_file"] = _path_from(run.metadata_path, record_folder, real_folder)
        out["metadata_sha256"] = hashlib.sha256(run.metadata_path.read_bytes()).hexdigest()
    return out


def build_study_record(study: TemperatureStudy, created: datetime | None = None,
                       record_folder: Path | None = None) -> dict[str, Any]:
    """The JSON-ready record of a temperature study (see ``record_schema.json``).

    The keys every record has describe the study at θ: ``temperature_K`` is θ,
    ``standard_potential_V``, ``delta_g_kJ_mol`` and ``log10_K`` come from E°(T) at θ, ``points``
    holds every reading of every isotherm (each with its own temperature and its isotherm's
    setpoint), ``fit`` pools the isotherms' reductions (sums of χ², ν, AIC and BIC). The study
    itself is the section ``temperature_study``
    (:meth:`activolt.procedures.temperature.TemperatureStudy.to_dict`): θ, the chosen form, the
    isotherms, E°, ΔG°, ΔH°, ΔS°, ΔCp° and log10 K at θ with u, the E°(T) coefficients and their
    covariance, both fits, the global cross-check and γ± at round molalities.

    Parameters
    ----------
    study : TemperatureStudy
        From :func:`activolt.procedures.temperature.study_temperatures`.
    created : datetime, optional
        The time stamp; now by default.
    record_folder : pathlib.Path, optional
        Where the record is written; input files are named relative to it.

    Returns
    -------
    dict
    """
    isotherms = study.isotherms
    first = isotherms[0]
    meta = first.run.metadata
    ref = study.reference
    runs = list({iso.run.path: iso.run for iso in isotherms}.values())
    inputs = [input_record(run, record_folder) for run in runs]
    points = []
    for iso, entries in zip(isotherms, _point_tables([iso.reduction for iso in isotherms]),
                            strict=True):
        measured = dict(zip(iso.run.points["line"], iso.run.points["emf_V"], strict=True))
        for entry in entries:
            raw = measured.get(entry["line"])
            entry["isotherm_temperature_K"] = iso.setpoint_K
            entry["source"] = _path_from(iso.run.path, record_folder)
            entry["measured_emf_V"] = json_number(raw)
            entry["setpoint_correction_V"] = (None if raw is None or entry["emf_V"] is None
                                              else json_number(entry["emf_V"] - raw))
            points.append(entry)
    stats = [iso.reduction.statistics for iso in isotherms]
    chi2 = float(sum(s.chi2 for s in stats))
    dof = int(sum(s.dof for s in stats))
    e0 = ref.standard_potential_V
    k95 = ref.coverage_factor
    section = study.to_dict()
    for entry, iso in zip(section.get("isotherms", []), isotherms, strict=False):
        if isinstance(entry, dict) and "source" in entry:
            entry["source"] = _path_from(iso.run.path, record_folder)
    models = list(dict.fromkeys(iso.model for iso in isotherms))
    warnings = list(dict.fromkeys(study.warnings))
    g = ref.delta_G_J_mol
    log_k = ref.log10_K
    method = (f"E°(T) ({study.standard_potential_fit.form.equation}) at θ, from the isotherms' "
              "E° by generalised least squares; linear propagation of the coefficients' "
              "covariance")
    return {
        **_head(created),
        "input": inputs[0],
        "inputs": inputs,
        "series": run_series(_concat([iso.run.points for iso in isotherms])),
        "run_info": dict(meta.info),
        "electrolyte": meta.electrolyte.formula,
        "electrons": meta.electrons,
        "cell": meta.cell,
        "temperature_K": study.reference_temperature_K,
        "standard_pressure_kPa": meta.standard_pressure_Pa / 1e3,
        "model": {
            "name": models[0] if len(models) == 1 else ",".join(models),
            "title": (first.reduction.model.title if len(models) == 1
                      else "several (one per isotherm; see temperature_study.isotherms)"),
            "parameters": {},
            "note": "each isotherm's parameters are in its reduction; the global cross-check's "
                    "in temperature_study.global_fit",
        },
        "standard_potential_V": {"value": json_number(e0.value),
                                 "uncertainty": json_number(e0.uncertainty),
                                 "method": method, "coverage_factor_95": k95,
                                 "expanded_uncertainty_95": json_number(k95 * e0.uncertainty)},
        "electrolyte_sign": meta.electrolyte_sign,
        "delta_g_kJ_mol": {"value": json_number(g.value / 1e3),
                           "uncertainty": json_number(g.uncertainty / 1e3),
                           "method": "ΔG° = −nFE° at θ, propagated from E°(T)"},
        "log10_K": {"value": json_number(log_k.value),
                    "uncertainty": json_number(log_k.uncertainty),
                    "method": "log10 K = nFE°/(RT ln 10) at θ, propagated from E°(T)"},
        "points": points,
        "fit": {
            "n_points": int(sum(s.n_points for s in stats)),
            "n_free": int(sum(s.n_free for s in stats)), "dof": dof, "chi2": chi2,
            "reduced_chi2": chi2 / dof if dof > 0 else 0.0,
            "aic": float(sum(s.aic for s in stats)), "bic": float(sum(s.bic for s in stats)),
            "covariance_scaled": any(s.covariance_scaled for s in stats),
            "method": "the isotherms' reductions pooled: sums of readings, free parameters, χ², "
                      "ν, AIC and BIC; the E°(T) fit is in temperature_study.e0_fit",
            "weighting": ("stated reading uncertainties"
                          if all(s.stated_uncertainty for s in stats) else "unit weights"),
        },
        "notes": list(study.notes),
        "warnings": warnings,
        "cautions": cautions_for(meta.electrolyte, meta.cell),
        "temperature_study": section,
    }


def _concat(frames: list[Any]) -> Any:
    """``pandas.concat`` of the frames (pandas imported when needed)."""
    import pandas as pd

    return pd.concat(frames, ignore_index=True)


def study_record_json(study: TemperatureStudy, created: datetime | None = None,
                      record_folder: Path | None = None) -> str:
    """The record of a temperature study as JSON text (UTF-8, indented, NaN written as null)."""
    return json_text(_finite(build_study_record(study, created, record_folder)))


def _finite(value: Any) -> Any:
    """NaN and infinities as None, numpy scalars as Python numbers, throughout."""
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(v) for v in value]
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return value
    try:
        number = float(value)
    except (TypeError, ValueError):
        return value
    if hasattr(value, "dtype") and getattr(value.dtype, "kind", "") in "iu":
        return int(value)
    return json_number(number)


def study_points_csv(study: TemperatureStudy) -> str:
    """Every reading of every isotherm as CSV text: the isotherm's setpoint, the reading as
    measured and as referred to the setpoint, γ± ± u and the diagnostics (units in the column
    names, flagged rows included)."""
    import pandas as pd

    frames = []
    for iso in study.isotherms:
        frame = _points_frame(iso.reduction)
        measured = dict(zip(iso.run.points["line"], iso.run.points["emf_V"], strict=True))
        raw_mV = frame["line"].map(measured).astype(float) * 1e3
        frame.insert(0, "isotherm_C", iso.setpoint_K - 273.15)
        frame.insert(1, "source", neutralise_formula(iso.run.path.name))
        at_setpoint = frame.pop("emf_mV")
        position = list(frame.columns).index("temperature_C") + 1
        frame.insert(position, "emf_mV", raw_mV)
        frame.insert(position + 1, "emf_at_setpoint_mV", at_setpoint)
        frames.append(frame)
    return pd.concat(frames, ignore_index=True).to_csv(index=False, float_format="%.10g",
                                                       lineterminator="\n")


def study_gamma_csv(study: TemperatureStudy) -> str:
    """γ± ± u (k = 1) at round molalities against T, one row per isotherm and molality."""
    table = study.gamma_table.copy()
    if "model" in table:
        table["model"] = table["model"].map(neutralise_formula)
    return table.to_csv(index=False, float_format="%.10g", lineterminator="\n")


# --------------------------------------------------------------------------------------------
# Calibration of reference electrodes
# --------------------------------------------------------------------------------------------

#: What each calibration route does, for the record and the certificate.
CALIBRATION_METHODS_TEXT = {
    "hydrogen": "each electrode against a hydrogen electrode in HCl of stated molality, the "
                "reading corrected to p(H2) = p°; E° = E + (2RT/F) ln(m γ±) with the "
                "conventional γ± (a full dilution reduction when an electrode was read in "
                "several molalities)",
    "master": "each electrode against a master electrode of certified potential in a common "
              "solution; E(electrode) = E(master) + E, the master's uncertainty in the budget",
}


def _calibration_conditions(run: Any) -> dict[str, Any]:
    """Temperature (mean of the readings) and barometric pressure (mean, else the metadata's)
    of a batch, with u(T)."""
    if run is None:
        return {"temperature_C": None, "u_temperature_K": None, "pressure_kPa": None,
                "standard_pressure_kPa": None}
    points = run.points
    usable = points[points["flag"].isna()] if "flag" in points else points
    t = usable["temperature_K"].dropna() if "temperature_K" in usable else []
    pressure = usable["pressure_Pa"].dropna() if "pressure_Pa" in usable else []
    meta = run.metadata
    p_kPa = (float(pressure.mean()) / 1e3 if len(pressure)
             else None if meta.barometric_pressure_Pa is None
             else meta.barometric_pressure_Pa / 1e3)
    return {"temperature_C": float(t.mean()) - 273.15 if len(t) else None,
            "u_temperature_K": meta.u_temperature_K or None,
            "pressure_kPa": p_kPa,
            "standard_pressure_kPa": meta.standard_pressure_Pa / 1e3}


def _traceability(section: Mapping[str, Any], run: Any) -> list[str]:
    """What the results are traceable to, from the method and the metadata."""
    method = section.get("method")
    info = dict(run.metadata.info) if run is not None else {}
    lines = []
    if method == "hydrogen":
        lines.append("Potentials on the hydrogen scale: a hydrogen electrode at p(H2) referred "
                     "to the standard pressure, E°(H+/H2) = 0 by definition.")
    elif method == "master":
        lines.append("Potentials referred to the master electrode, whose potential and "
                     "uncertainty are taken from its own calibration certificate.")
    if section.get("convention"):
        lines.append(f"Convention: {section['convention']}")
    lines.append("Voltage: " + (info.get("instrument") or "the laboratory's voltmeter")
                 + ", within its calibration (its uncertainty is a line of each budget).")
    lines.append("Temperature: the laboratory's calibrated thermometer"
                 + (f" (u = {run.metadata.u_temperature_K:g} K)."
                    if run is not None and run.metadata.u_temperature_K else "."))
    return lines


def build_calibration_record(batch: CalibrationBatch, created: datetime | None = None,
                             record_folder: Path | None = None,
                             histories: Mapping[str, ElectrodeHistory] | None = None
                             ) -> dict[str, Any]:
    """The JSON-ready record of a calibrated batch (``record_kind = "calibration"``).

    Parameters
    ----------
    batch : CalibrationBatch
        From :func:`activolt.procedures.calibration.calibrate`.
    created : datetime, optional
        The time stamp (the certificate's date of issue); now by default.
    record_folder : pathlib.Path, optional
        Where the record is written; the batch table is named relative to it.
    histories : mapping of str to ElectrodeHistory, optional
        Each electrode's history (``--history``), kept under ``history``.

    Returns
    -------
    dict
        The keys every record has (``record_schema``, ``software``, ``created_utc``,
        ``input`` with the table's SHA-256, ``warnings``), ``record_kind``, ``run_info``, the
        batch's own data (:meth:`CalibrationBatch.to_dict`: ``method``, ``date``,
        ``temperature_K``, ``convention``, ``electrodes`` — each ``{electrode,
        standard_potential_V: {value, uncertainty}, expanded_uncertainty_V, coverage_factor,
        deviation_V, verdict, …}`` —, ``acceptance``, ``batch_statistics``, ``all_pass``),
        ``method_description``, ``conditions``, ``traceability``, ``cautions``, ``history``.
    """
    run = batch.run
    section = dict(batch.to_dict())
    warnings = list(dict.fromkeys([*section.pop("warnings", []), *batch.warnings]))
    record: dict[str, Any] = {
        **_head(created, CALIBRATION_KIND),
        **_run_part(run, record_folder),
        **section,
        "method_description": CALIBRATION_METHODS_TEXT.get(batch.method, batch.method),
        "conditions": _calibration_conditions(run),
        "traceability": _traceability(section, run),
        "warnings": warnings,
        "cautions": ([] if run is None
                     else cautions_for(run.metadata.electrolyte, run.metadata.cell)),
        "history": None if histories is None else {
            name: history.to_dict() for name, history in histories.items()},
    }
    return _finite(record)


def calibration_record_json(batch: CalibrationBatch, created: datetime | None = None,
                            record_folder: Path | None = None,
                            histories: Mapping[str, ElectrodeHistory] | None = None) -> str:
    """:func:`build_calibration_record` as JSON text (UTF-8, indented, NaN written as null)."""
    return json_text(build_calibration_record(batch, created, record_folder, histories))


#: Columns of the electrodes table of a calibration (one row per electrode).
CALIBRATION_COLUMNS = ("electrode", "potential_mV", "u_potential_mV", "effective_dof",
                       "coverage_factor", "expanded_uncertainty_mV", "deviation_mV", "verdict",
                       "n_readings", "lines", "route", "outlier", "notes")


def calibration_electrodes_csv(record: Mapping[str, Any]) -> str:
    """One row per electrode of a calibration record (:func:`build_calibration_record`):
    potential, u, ν_eff, k, U and deviation in mV, the verdict; text cells formula-safe."""
    import pandas as pd

    rows = []
    for e in record["electrodes"]:
        potential = e["standard_potential_V"]
        rows.append({
            "electrode": neutralise_formula(str(e["electrode"])),
            "potential_mV": _scaled(potential.get("value")),
            "u_potential_mV": _scaled(potential.get("uncertainty")),
            "effective_dof": e.get("effective_dof"),
            "coverage_factor": e.get("coverage_factor"),
            "expanded_uncertainty_mV": _scaled(e.get("expanded_uncertainty_V")),
            "deviation_mV": _scaled(e.get("deviation_V")),
            "verdict": e.get("verdict"),
            "n_readings": e.get("n_readings"),
            "lines": " ".join(str(line) for line in e.get("lines") or []),
            "route": neutralise_formula(str(e.get("route") or "")),
            "outlier": e.get("outlier"),
            "notes": neutralise_formula("; ".join(e.get("notes") or [])),
        })
    return pd.DataFrame(rows, columns=list(CALIBRATION_COLUMNS)).to_csv(
        index=False, float_format="%.10g", lineterminator="\n")


def calibration_points_csv(batch: CalibrationBatch) -> str:
    """Every reading of a calibrated batch as read (units in the column names, flagged rows
    included); text cells formula-safe."""
    import pandas as pd

    points = batch.run.points
    out = {"line": points["line"],
           "electrode": points["electrode"].map(neutralise_formula),
           "molality_mol_kg": points["molality_mol_kg"],
           "temperature_C": points["temperature_K"] - 273.15,
           "emf_mV": points["emf_V"] * 1e3,
           "u_emf_mV": points["u_emf_V"] * 1e3,
           "pressure_kPa": points["pressure_Pa"] / 1e3,
           "flag": points["flag"].where(points["flag"].notna(), "").map(neutralise_formula),
           "note": points["note"].map(neutralise_formula)}
    return pd.DataFrame(out).to_csv(index=False, float_format="%.10g", lineterminator="\n")


def _scaled(value_V: Any) -> float | None:
    return None if value_V is None else float(value_V) * 1e3


#: ``record_kind`` of the record of a primary pH determination (``activolt ph``).
PH_KIND = "ph"


def build_ph_record(result: PhResult, created: datetime | None = None,
                    record_folder: Path | None = None) -> dict[str, Any]:
    """The JSON-ready record of a primary pH determination (``record_kind = "ph"``).

    Parameters
    ----------
    result : PhResult
        From :func:`activolt.procedures.ph.primary_ph`.
    created : datetime, optional
        The time stamp; now by default.
    record_folder : pathlib.Path, optional
        Where the record is written; the buffer table is named relative to it.

    Returns
    -------
    dict
        The keys every record has, ``record_kind``, ``run_info``, and for the isotherm nearest
        25 °C: ``temperature_K``, ``ph`` = ``{value, uncertainty, expanded_uncertainty,
        coverage_factor, effective_dof}``, ``intercept`` and ``slope_kg_mol`` (each ``{value,
        uncertainty}``), ``budget``, ``comparison``; then ``buffer``, ``convention``,
        ``standard_potential_source``, ``standard_potentials``, ``isotherms`` (every
        temperature), ``temperature_fit``, ``conditions``, ``cautions``.
    """
    run = result.run
    section = result.to_dict()
    main = min(section["isotherms"], key=lambda i: abs(i["temperature_K"] - 298.15))
    meta = run.metadata if run is not None else None
    record: dict[str, Any] = {
        **_head(created, PH_KIND),
        **_run_part(run, record_folder),
        "temperature_K": main["temperature_K"],
        "ph": main["ph"],
        "intercept": main["intercept"],
        "slope_kg_mol": main["slope_kg_mol"],
        "budget": main["budget"],
        "comparison": {"catalogue_ph": main["catalogue_ph"],
                       "difference": main["difference_to_catalogue"],
                       "source": main["catalogue_source"]},
        "buffer": section["buffer"],
        "convention": section["convention"],
        "standard_potential_source": section["standard_potential_source"],
        "standard_potentials": section["standard_potentials"],
        "isotherms": section["isotherms"],
        "temperature_fit": section["temperature_fit"],
        "conditions": {
            "u_temperature_K": None if meta is None else meta.u_temperature_K,
            "u_pressure_kPa": None if meta is None else meta.u_pressure_Pa / 1e3,
            "u_stock_molality_relative": (None if meta is None
                                          else meta.u_stock_molality_relative)},
        "warnings": list(result.warnings),
        "cautions": ([] if meta is None
                     else cautions_for(meta.electrolyte, meta.cell)),
    }
    return _finite(record)


def ph_record_json(result: PhResult, created: datetime | None = None,
                   record_folder: Path | None = None) -> str:
    """:func:`build_ph_record` as JSON text (UTF-8, indented, NaN written as null)."""
    return json_text(build_ph_record(result, created, record_folder))


def ph_points_csv(result: PhResult) -> str:
    """Every reading of a pH determination with its acidity function, by isotherm; text cells
    formula-safe."""
    import pandas as pd

    rows = []
    for iso in result.isotherms:
        for line, electrode, m, p, u in zip(iso.lines, iso.electrodes,
                                            iso.chloride_molality_mol_kg,
                                            iso.acidity_function, iso.u_acidity_function,
                                            strict=True):
            rows.append({"line": line, "isotherm_temperature_C": iso.temperature_K - 273.15,
                         "electrode": neutralise_formula(electrode),
                         "chloride_molality_mol_kg": m, "acidity_function": p,
                         "u_acidity_function": u})
    return pd.DataFrame(rows).to_csv(index=False, float_format="%.10g", lineterminator="\n")
