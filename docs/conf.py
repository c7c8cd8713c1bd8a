"""Sphinx configuration of the activolt documentation.

Build with ``make docs`` (``sphinx-build -W``: a warning fails the build). The API reference is
written from the package's own docstrings (autodoc + numpydoc); its pages, one per layer of the
architecture (DEVELOPERS.md), are generated here from the modules found in ``src/activolt`` so
that a new module appears without editing the docs. The notebooks of ``notebooks/`` are pages
too (myst-nb): they are kept in git without outputs and executed afresh by every build.
"""

from __future__ import annotations

import pkgutil
import re
import sys
import warnings
from importlib.metadata import PackageNotFoundError
from importlib.metadata import version as _package_version
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT / "src"))

project = "activolt"
author = "the activolt contributors"
copyright = "2026, the activolt contributors"
try:
    release = _package_version("activolt")
except PackageNotFoundError:  # a source tree without install
    release = "0.0.0+unknown"

extensions = [
    "myst_nb",  # Markdown pages (MyST) and notebooks
    "sphinx.ext.autodoc",
    "numpydoc",
    "sphinx.ext.mathjax",
    "sphinx.ext.viewcode",
]

exclude_patterns = ["_build", "**.ipynb_checkpoints", "Thumbs.db", ".DS_Store"]
source_suffix = {".rst": "restructuredtext", ".md": "myst-nb", ".ipynb": "myst-nb"}
root_doc = "index"

# The notebooks are executed on every build (they hold no outputs in git), each in a temporary
# folder, and a failing cell fails the build (-W turns the execution error into an error).
nb_execution_mode = "force"
nb_execution_in_temp = True
nb_execution_timeout = 300
nb_execution_raise_on_error = True
nb_execution_show_tb = True
nb_merge_streams = True
myst_enable_extensions = ["dollarmath"]
myst_heading_anchors = 3

autodoc_member_order = "bysource"
autodoc_typehints = "none"  # numpydoc shows the types from the docstrings
autodoc_default_options = {"members": True, "show-inheritance": False}
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_validation_checks: set[str] = set()
# A References section lists the sources of a function whether or not its text cites them.
suppress_warnings = ["ref.citation"]
# numpydoc reads the docstrings of third-party objects it meets (uncertainties' ufloat) and
# warns about their sections; those warnings are not about our docs (ours are still shown).
warnings.filterwarnings("ignore", message=r"(?s)(?!.*/src/activolt/)", category=UserWarning,
                        module="numpydoc")

html_theme = "alabaster"
html_title = f"activolt {release}"
html_static_path: list[str] = []

#: The layers of the architecture, bottom up: (page, title, what it holds, packages/modules).
LAYERS = (
    ("base", "Constants, errors, safe text, rounding",
     "CODATA 2018 constants; the two errors every caller sees (``InputError``: exit status 2, "
     "``FitError``: exit status 1); text made safe at the output edges.",
     ("activolt.constants", "activolt.errors", "activolt.safe_text", "activolt.rounding")),
    ("reference", "Reference data",
     "Published tables shipped as CSV with a ``source`` on every row, and their look-ups.",
     ("activolt.reference",)),
    ("physics", "Physics",
     "Water (IAPWS density and permittivity, Debye–Hückel constants), gas and pressure "
     "corrections, thermodynamic relations.", ("activolt.physics",)),
    ("chemistry", "Chemistry",
     "Electrolytes, half-reactions, IUPAC cell diagrams, the electrode catalogue and E°(T).",
     ("activolt.chemistry",)),
    ("activity", "Activity-coefficient models",
     "The limiting law, Hückel, Davies, SIT and Pitzer equations behind one interface; published "
     "γ± tables; a_w and G^E.", ("activolt.activity",)),
    ("data", "Reading runs",
     "The run table (CSV) and its metadata (TOML): every input check, series.",
     ("activolt.data",)),
    ("fit", "Fitting and uncertainty",
     "The measurement model and its batched solver, lack of fit, uncertainty propagation and "
     "diagnostics.", ("activolt.fit",)),
    ("procedures", "Procedures",
     "The science a user asks for: dilution reduction, model choice, Monte Carlo, many series, "
     "temperature studies, calibration of reference electrodes, primary pH.",
     ("activolt.procedures",)),
    ("report", "Reports and figures",
     "The text reports, HTML pages and certificate, matplotlib figures and cautions; they only "
     "read results.", ("activolt.report",)),
    ("io", "Records and files",
     "The JSON record and its schema, output sets written whole, summaries, the archive and the "
     "upload; they only read results.", ("activolt.io",)),
)


def _modules(name: str) -> list[str]:
    """``name`` and, for a package, every module below it (sorted; private ones left out)."""
    found = [name]
    spec = pkgutil.resolve_name(name)
    if hasattr(spec, "__path__"):
        for info in pkgutil.walk_packages(spec.__path__, prefix=name + "."):
            if not any(part.startswith("_") for part in info.name.split(".")):
                found.append(info.name)
    return sorted(found)


API_INDEX = """\
API reference
=============

The library in the layers of its architecture, bottom up: a module imports its own layer or
lower ones only (``tests/test_layering.py`` enforces it). What ``import activolt`` exports
itself — ``read_run``, ``reduce_run``, ``compare_models``, ``monte_carlo``, ``format_report``,
``build_record``, ``cell_summary``, ``parse_electrolyte``, ``get_model``, ``MODELS`` — is
documented where it is defined; the temperature study, the calibration, many series and primary
pH are in :doc:`procedures`.

.. toctree::
   :maxdepth: 2

"""


def _write(target: Path, content: str) -> None:
    """Write only when the text changed (Sphinx then rereads only what changed)."""
    if not target.exists() or target.read_text(encoding="utf-8") != content:
        target.write_text(content, encoding="utf-8")


def _write_api_pages() -> None:
    """One page per layer under ``api/`` and their index (generated, not kept in git)."""
    folder = HERE / "api"
    folder.mkdir(exist_ok=True)
    _write(folder / "index.rst",
           API_INDEX + "".join(f"   {page}\n" for page, *_ in LAYERS))
    for page, title, text, names in LAYERS:
        lines = [title, "=" * len(title), "", text, ""]
        for module in (m for name in names for m in _modules(name)):
            lines += [f".. automodule:: {module}", ""]
        _write(folder / f"{page}.rst", "\n".join(lines))


_write_api_pages()

# The docstrings are written to read well as plain text too (``help()``), and write an absolute
# value as |x|, which reStructuredText would take for a substitution reference. Bars outside
# literal text, roles, math, doctest and literal blocks and tables are escaped as the docstring
# reaches Sphinx; the source is left as it is.
_LITERAL = re.compile(r"(``.+?``|:[a-z:]+:`[^`]*`|`[^`]*`_?)")


def _escape_bars(line: str) -> str:
    parts = _LITERAL.split(line)
    return "".join(part if index % 2 else part.replace("|", r"\|")
                   for index, part in enumerate(parts))


def _indent(line: str) -> int:
    return len(line) - len(line.lstrip())


def escape_absolute_values(app: object, what: str, name: str, obj: object, options: object,
                           lines: list[str]) -> None:
    """``autodoc-process-docstring``: escape the bars of |x| in running text."""
    block_indent: int | None = None  # inside a literal, math or doctest block
    for index, line in enumerate(lines):
        stripped = line.strip()
        if block_indent is not None:
            if not stripped or _indent(line) > block_indent:
                if block_indent < 0 and not stripped:  # a doctest block ends at a blank line
                    block_indent = None
                continue
            block_indent = None
        if stripped.startswith(">>>"):
            block_indent = -1
            continue
        if stripped.startswith(("+-", "+=", "| ")) or stripped == "|":  # tables, line blocks
            continue
        if stripped.endswith("::") or stripped.startswith(".. math::"):
            block_indent = _indent(line)
            if stripped.startswith(".. math::"):
                continue  # the formula on the directive's own line is math
        lines[index] = _escape_bars(line)


def setup(app: object) -> None:
    app.connect("autodoc-process-docstring", escape_absolute_values)  # type: ignore[attr-defined]
