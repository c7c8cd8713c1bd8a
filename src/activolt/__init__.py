"""activolt: standard potentials and mean ionic activity coefficients from EMF dilution series.

The library is a chain of plain functions (see DEVELOPERS.md): ``read_run`` loads and validates
a run, ``reduce_run`` fits E° and the activity-coefficient model and returns a ``Reduction``,
``compare_models`` fits several models and recommends one, ``monte_carlo`` propagates by GUM
Supplement 1, and ``format_report`` / ``build_record`` turn a reduction into text and a record;
``cell_summary`` describes a cell from its diagram. The other jobs follow the same pattern:
``reduce_many`` (many runs or series and a summary), ``study_temperatures`` (E°(T), ΔH°, ΔS°),
``calibrate`` and ``electrode_history`` (reference electrodes), ``primary_ph`` (the Harned-cell
procedure) and ``open_archive`` (the lab's record archive). These names are exported here lazily:
``import activolt`` loads nothing but the version, and the first use of a name imports its
module.

Examples
--------
>>> import activolt
>>> activolt.parse_electrolyte("CaCl2").nu
3
>>> sorted(activolt.MODELS)[:2]
['davies', 'hueckel']
"""

from importlib import import_module
from importlib.metadata import PackageNotFoundError, version
from typing import Any

try:
    __version__ = version("activolt")
except PackageNotFoundError:  # pragma: no cover - running from a source tree without install
    __version__ = "0.0.0+unknown"

#: Public name → the module that defines it (imported on first use).
_LAZY = {
    "read_run": "activolt.data.runs",
    "read_runs": "activolt.data.runs",
    "runs_from_frame": "activolt.data.runs",
    "reduce_run": "activolt.procedures.dilution",
    "reduce_many": "activolt.procedures.many",
    "compare_models": "activolt.procedures.model_choice",
    "monte_carlo": "activolt.procedures.montecarlo",
    "study_temperatures": "activolt.procedures.temperature",
    "fit_standard_potential": "activolt.procedures.temperature",
    "calibrate": "activolt.procedures.calibration",
    "electrode_history": "activolt.procedures.calibration",
    "primary_ph": "activolt.procedures.ph",
    "open_archive": "activolt.io.archive",
    "format_report": "activolt.report.text",
    "build_record": "activolt.io.record",
    "cell_summary": "activolt.chemistry.cells",
    "parse_electrolyte": "activolt.chemistry.electrolytes",
    "get_model": "activolt.activity",
    "MODELS": "activolt.activity",
}

__all__ = ["__version__", *_LAZY]


def __getattr__(name: str) -> Any:
    """The public API on first use (PEP 562), so that ``import activolt`` stays light."""
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'activolt' has no attribute '{name}'")
    value = getattr(import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *_LAZY})
