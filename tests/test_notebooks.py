"""The notebooks run top to bottom on a fresh kernel, and are kept in git without outputs.

Each notebook in ``notebooks/`` is executed with nbclient on a new kernel of the interpreter
running the tests (the venv's ``python3``), in an empty temporary folder, with the Agg backend
of matplotlib; any error fails the test — including an ``assert`` by which a notebook checks a
number its text quotes. A copy of a notebook with a deliberately broken cell must make the same
runner fail (the test of the test). Nothing here is a check value: the notebooks carry their own
checks, each beside its source.
"""

from __future__ import annotations

import copy
import os
from pathlib import Path

import nbformat
import pytest
from nbclient import NotebookClient
from nbclient.exceptions import CellExecutionError

NOTEBOOKS = Path(__file__).resolve().parents[1] / "notebooks"
PATHS = sorted(NOTEBOOKS.glob("*.ipynb"))
#: Seconds a cell may take before the run counts as failed.
CELL_TIMEOUT_S = 300


def run_notebook(notebook: nbformat.NotebookNode, folder: Path) -> nbformat.NotebookNode:
    """Execute ``notebook`` on a fresh ``python3`` kernel with ``folder`` as its working
    directory; raises :class:`CellExecutionError` at the first cell that fails."""
    client = NotebookClient(notebook, kernel_name="python3", timeout=CELL_TIMEOUT_S,
                            resources={"metadata": {"path": str(folder)}})
    return client.execute()


def read(path: Path) -> nbformat.NotebookNode:
    return nbformat.read(path, as_version=4)


@pytest.fixture(autouse=True)
def _agg_backend(monkeypatch: pytest.MonkeyPatch) -> None:
    """The kernel inherits the environment: no window, no display needed."""
    monkeypatch.setenv("MPLBACKEND", "Agg")


def test_the_worked_examples_are_there() -> None:
    # Issue 15: a dilution series, a temperature study, a calibration, many series at once.
    stems = {p.stem.split("_", 1)[1] for p in PATHS}
    assert {"dilution_series", "temperature_study", "electrode_calibration",
            "many_series"} <= stems


@pytest.mark.parametrize("path", PATHS, ids=[p.stem for p in PATHS])
def test_outputs_are_stripped(path: Path) -> None:
    notebook = read(path)
    nbformat.validate(notebook)
    for index, cell in enumerate(notebook.cells):
        if cell.cell_type == "code":
            assert cell.outputs == [], f"{path.name} cell {index} holds outputs"
            assert cell.execution_count is None, f"{path.name} cell {index} has a count"


@pytest.mark.parametrize("path", PATHS, ids=[p.stem for p in PATHS])
def test_notebook_runs_top_to_bottom(path: Path, tmp_path: Path) -> None:
    before = set(os.listdir(NOTEBOOKS))
    executed = run_notebook(read(path), tmp_path)
    code = [c for c in executed.cells if c.cell_type == "code"]
    assert code and all(c.execution_count is not None for c in code)
    assert not any(o.get("output_type") == "error" for c in code for o in c.outputs)
    assert set(os.listdir(NOTEBOOKS)) == before  # outputs go to temporary folders


def test_each_notebook_states_its_cautions() -> None:
    # Every worked example handles hydrogen gas or hydrochloric acid (report/cautions.py).
    for path in PATHS:
        text = "\n".join(c.source for c in read(path).cells if c.cell_type == "markdown")
        assert "hydrogen" in text.lower() and "local codes" in text, path.name


def _truncated_after(notebook: nbformat.NotebookNode, marker: str, replacement: tuple[str, str]
                     ) -> nbformat.NotebookNode:
    """A copy up to the first code cell holding ``marker``, with one text replaced in it."""
    broken = copy.deepcopy(notebook)
    index = next(i for i, c in enumerate(broken.cells)
                 if c.cell_type == "code" and marker in c.source)
    old, new = replacement
    assert old in broken.cells[index].source
    broken.cells[index].source = broken.cells[index].source.replace(old, new)
    broken.cells = broken.cells[:index + 1]
    return broken


def test_a_broken_cell_fails_the_run(tmp_path: Path) -> None:
    notebook = read(NOTEBOOKS / "01_dilution_series.ipynb")
    broken = _truncated_after(notebook, "reduce_run(", ('model="hueckel"',
                                                        'model="no-such-model"'))
    with pytest.raises(CellExecutionError, match="no-such-model"):
        run_notebook(broken, tmp_path)


def test_a_wrong_quoted_number_fails_the_run(tmp_path: Path) -> None:
    # The text quotes E° ≈ 222.19 mV and a cell checks it; a wrong check must stop the run.
    notebook = read(NOTEBOOKS / "01_dilution_series.ipynb")
    broken = _truncated_after(notebook, "== 222.19", ("== 222.19", "== 222.29"))
    with pytest.raises(CellExecutionError, match="AssertionError"):
        run_notebook(broken, tmp_path)
