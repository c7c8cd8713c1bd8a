"""activolt: standard potentials and mean ionic activity coefficients from EMF dilution series.

The library is a chain of plain functions (see DEVELOPERS.md): ``runs.read_run`` loads and
validates a run, ``reduce.reduce_run`` fits E° and the activity-coefficient model and returns a
``Reduction``, and ``records`` / ``report`` turn that into files.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("activolt")
except PackageNotFoundError:  # pragma: no cover - running from a source tree without install
    __version__ = "0.0.0+unknown"

__all__ = ["__version__"]
