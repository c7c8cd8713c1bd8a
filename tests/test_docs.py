"""The documentation builds with no warning, as ``make docs`` builds it (``sphinx-build -W``).

The build runs in a subprocess into a temporary folder: autodoc of every module (numpydoc), the
user guide, and the notebooks rendered as pages — executed afresh by myst-nb, as on a fresh
clone, since they are kept in git without outputs. A warning (a docstring that is not valid
reStructuredText, a broken cross-reference, a notebook cell that fails) fails the test with
Sphinx's own message. Nothing here is a check value.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs"


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("docs") / "html"
    env = {**os.environ, "MPLBACKEND": "Agg"}
    done = subprocess.run(
        [sys.executable, "-m", "sphinx", "-b", "html", "-W", "--keep-going", "-q", "-j", "auto",
         str(DOCS), str(out)],
        cwd=ROOT, env=env, capture_output=True, text=True, timeout=1800)
    warnings = [line for line in done.stderr.splitlines()
                if "WARNING" in line or "ERROR" in line or "rror" in line]
    assert done.returncode == 0, "\n".join(warnings[:40]) or done.stderr[-4000:]
    return out


def test_the_documentation_builds_without_warnings(built: Path) -> None:
    assert (built / "index.html").is_file()


def test_the_api_reference_documents_the_procedures(built: Path) -> None:
    page = (built / "api" / "procedures.html").read_text(encoding="utf-8")
    for name in ("activolt.procedures.dilution.reduce_run",
                 "activolt.procedures.temperature.study_temperatures",
                 "activolt.procedures.calibration.calibrate",
                 "activolt.procedures.many.reduce_many"):
        assert f'id="{name}"' in page, name


def test_every_notebook_is_a_page_with_its_outputs(built: Path) -> None:
    notebooks = sorted((ROOT / "notebooks").glob("*.ipynb"))
    assert notebooks
    for notebook in notebooks:
        page = (built / "notebooks" / f"{notebook.stem}.html").read_text(encoding="utf-8")
        assert "cell_output" in page, notebook.name  # executed: outputs rendered


def test_the_equations_are_rendered_as_math(built: Path) -> None:
    page = (built / "guide" / "uncertainty.html").read_text(encoding="utf-8")
    assert page.count('class="math') >= 5
    assert "Welch" in page and "GUM" in page


def test_bars_of_absolute_values_are_escaped_outside_math_and_literals() -> None:
    # Docstrings write |x| for an absolute value; reStructuredText would read a substitution.
    import runpy

    hook = runpy.run_path(str(DOCS / "conf.py"))["escape_absolute_values"]
    lines = ["pass when |d| ≤ T and ``|literal|`` stays,",
             ".. math:: |z_+ z_-|",
             "    \\left|x\\right|",
             "",
             ">>> abs(-1)  # |x|",
             "1",
             "",
             "| a line block stays",
             "|z+ z−| [-]."]
    hook(None, "function", "f", None, None, lines)
    assert lines == ["pass when \\|d\\| ≤ T and ``|literal|`` stays,",
                     ".. math:: |z_+ z_-|",
                     "    \\left|x\\right|",
                     "",
                     ">>> abs(-1)  # |x|",
                     "1",
                     "",
                     "| a line block stays",
                     "\\|z+ z−\\| [-]."]
