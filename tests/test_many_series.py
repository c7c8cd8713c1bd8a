"""Many series everywhere: the reader parses a table once, ``reduce_many`` reduces every series
on its own (a failure keeps its reason, the others land), and ``activolt reduce`` takes several
tables, a folder or a table with a ``series`` column.

The readings are synthetic, made by ``tests/synthetic.py`` from γ± of the Hückel equation
(Debye–Hückel slope from activolt's own water model, Bå = 1.5) and E° = 0.2224 V; they are
inputs for checking the mechanics, not check values. Every number compared below is a
regression pin (the code against itself: a batch against the same series reduced alone), none
is a literature value.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from synthetic import emf_from_gamma

from activolt.cli import main
from activolt.data.runs import read_run, read_runs, runs_from_frame
from activolt.errors import FitError, InputError
from activolt.io.summary import summary_csv
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import Reduction, reduce_run, reduce_runs
from activolt.procedures.many import SUMMARY_COLUMNS, reduce_many, series_name

MOLALITY = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05])
#: Synthetic E° of the series [V] (inputs, not check values).
E0_V = {"A": 0.2224, "B": 0.2226}
U_EMF_V = 2e-5
TOML = 'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n'
METADATA = {"electrolyte": "HCl", "electrons": 1, "temperature_C": 25.0}
SET = ("record.json", "points.csv", "report.txt", "report.html")
FIGURES = ("extrapolation.png", "residuals.png", "gamma.png")


def _emf(e0_V: float, molality: np.ndarray = MOLALITY) -> np.ndarray:
    """E from γ± of the Hückel equation, ln γ± = −A √m / (1 + 1.5 √m) (synthetic)."""
    a_gamma = debye_hueckel_constants(np.full(molality.shape, 298.15)).agamma
    gamma = np.exp(-a_gamma * np.sqrt(molality) / (1.0 + 1.5 * np.sqrt(molality)))
    return emf_from_gamma(molality, gamma, e0_V)


def _rows(series: str, e0_V: float, molality: np.ndarray = MOLALITY) -> list[str]:
    return [f"{float(m)!r},{float(e)!r},{U_EMF_V!r},{series}"
            for m, e in zip(molality, _emf(e0_V, molality), strict=True)]


def _three_series(folder: Path, stem: str = "three") -> Path:
    """Series A and B, and series "=C" measured at one molality only (it cannot give E°)."""
    single = np.full(4, 0.01)
    rows = ["molality_mol_kg,emf_V,u_emf_V,series", *_rows("A", E0_V["A"]),
            *_rows("B", E0_V["B"]), *_rows("=C", E0_V["A"], single)]
    path = folder / f"{stem}.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / f"{stem}.toml").write_text(TOML, encoding="utf-8")
    return path


def _one_series(folder: Path, stem: str, e0_V: float) -> Path:
    path = folder / f"{stem}.csv"
    rows = ["molality_mol_kg,emf_V,u_emf_V", *(r.rsplit(",", 1)[0] for r in _rows("", e0_V))]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / f"{stem}.toml").write_text(TOML, encoding="utf-8")
    return path


def _summary(path: Path) -> pd.DataFrame:
    return pd.read_csv(path, keep_default_na=False, na_values=[""])


# --- the reader ------------------------------------------------------------------------------

def test_read_runs_gives_every_series_as_read_run_gives_each(tmp_path):
    path = _three_series(tmp_path)
    runs = read_runs(path)
    assert [series_name(r) for r in runs] == ["A", "B", "=C"]  # order of first appearance
    for run in runs:
        alone = read_run(path, series=series_name(run))
        pd.testing.assert_frame_equal(run.points, alone.points)
        assert run.warnings == alone.warnings and run.sha256 == alone.sha256
        assert run.metadata == alone.metadata


def test_a_table_without_series_column_is_one_series(tmp_path):
    runs = read_runs(_one_series(tmp_path, "plain", E0_V["A"]))
    assert len(runs) == 1 and series_name(runs[0]) == ""
    assert runs[0].points["line"].tolist() == list(range(2, 2 + len(MOLALITY)))


def test_read_runs_reports_bad_input_with_file_line_and_column(tmp_path):
    path = _three_series(tmp_path)
    lines = path.read_text(encoding="utf-8").splitlines()
    lines[9] = "0.0O5," + lines[9].split(",", 1)[1]  # a letter O in series B's molality
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    with pytest.raises(InputError, match="is not a number") as caught:
        read_runs(path)
    assert (caught.value.file, caught.value.line, caught.value.column) == (
        str(path), 10, "molality_mol_kg")


def _write_many(path: Path, n_series: int, quoted: bool = False) -> None:
    rows = ["molality_mol_kg,emf_V,series"]
    emf = _emf(E0_V["A"])
    for s in range(n_series):
        name = f'"S{s}"' if quoted else f"S{s}"
        rows += [f"{float(m)!r},{float(e) + 1e-6 * s!r},{name}"
                 for m, e in zip(MOLALITY, emf, strict=True)]
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    path.with_suffix(".toml").write_text(TOML, encoding="utf-8")


@pytest.mark.parametrize("quoted", [True, False])
def test_reading_many_series_parses_each_line_once(tmp_path, monkeypatch, quoted):
    """A file of many series is read in one pass (the cost is linear in rows; timing itself
    is measured in bench/, not here): with quotes the CSV parser sees the header and every row
    once; a table of plain cells is split column by column, without it."""
    large = tmp_path / "s300.csv"
    _write_many(large, 300, quoted)
    parsed = []
    reader = csv.reader

    def counting(*args, **kwargs):
        parsed.append(1)
        return reader(*args, **kwargs)

    monkeypatch.setattr(csv, "reader", counting)
    runs = read_runs(large)
    assert [run.points["series"].iloc[0] for run in runs] == [f"S{s}" for s in range(300)]
    # the header and every row, once; none for plain cells
    assert len(parsed) == (1 + 300 * len(MOLALITY) if quoted else 0)


# --- the library -----------------------------------------------------------------------------

def test_reduce_many_on_a_frame_equals_reduce_run_per_series(tmp_path):
    path = _three_series(tmp_path)
    frame = pd.read_csv(path, keep_default_na=False, dtype={"series": str})
    result = reduce_many(frame, metadata=METADATA)
    assert [o.series for o in result] == ["A", "B", "=C"]
    for name in ("A", "B"):
        alone = reduce_run(read_run(path, series=name))
        outcome = next(o for o in result if o.series == name)
        batch = outcome.reduction
        assert batch is not None and outcome.failure is None
        # regression pin: a batch gives exactly what the series gives alone
        assert abs(batch.standard_potential.nominal_value
                   - alone.standard_potential.nominal_value) <= 1e-12
        assert abs(batch.standard_potential.std_dev - alone.standard_potential.std_dev) <= 1e-12
        np.testing.assert_allclose(batch.points["gamma_pm"], alone.points["gamma_pm"],
                                   rtol=0, atol=1e-12)
    failed = result.failures
    assert [o.series for o in failed] == ["=C"] and failed[0].failure
    summary = result.summary
    assert tuple(summary.columns) == SUMMARY_COLUMNS
    assert summary["series"].tolist() == ["A", "B", "=C"]
    assert summary["n_points"].tolist() == [6, 6, 4]
    assert summary.loc[2, "flags"].startswith("refused: ")
    assert summary.loc[2, "failure"] == failed[0].failure
    assert np.isnan(summary.loc[2, "standard_potential_V"])
    assert (summary.loc[:1, "failure"] == "").all()
    assert np.isfinite(summary.loc[:1, ["standard_potential_V", "u_standard_potential_V",
                                        "reduced_chi2", "birge_ratio"]].to_numpy()).all()


@st.composite
def _random_series(draw: st.DrawFn) -> pd.DataFrame:
    """A table of 1 to 6 series of varied length, range, E°, scatter and weighting; some
    cannot be reduced (too few readings, one molality), some misfit (synthetic inputs)."""
    rows = []
    stated = draw(st.booleans())
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    for index in range(draw(st.integers(1, 6))):
        n = draw(st.integers(2, 16))
        top = draw(st.sampled_from([0.02, 0.1, 0.5, 2.0]))
        molality = (np.full(n, 0.01) if draw(st.integers(0, 9)) == 0
                    else np.geomspace(0.001, top, n))
        scatter = draw(st.sampled_from([1e-6, 2e-5, 3e-4]))
        emf = _emf(0.2224 + rng.uniform(-1e-3, 1e-3), molality) + rng.normal(0.0, scatter, n)
        for m, e in zip(molality, emf, strict=True):
            rows.append({"molality_mol_kg": m, "emf_V": e, "series": f"s{index}",
                         **({"u_emf_V": U_EMF_V} if stated else {})})
    return pd.DataFrame(rows)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(frame=_random_series(), model=st.sampled_from(["limiting", "hueckel", "davies", "sit",
                                                       "pitzer"]))
def test_reducing_runs_together_equals_reducing_each_alone(frame, model):
    """The fits of many series solved in one engine batch give each series what it gives
    alone: E° to 1e-9 V, γ± to 1e-9, u to 1e-6 relative, the same held parameters, the same
    refusal, the same straight-line cross-check (regression pin: the code against itself)."""
    runs = runs_from_frame(frame, METADATA)
    together = reduce_runs(runs, model)
    for run, batch in zip(runs, together, strict=True):
        try:
            alone = reduce_run(run, model)
        except (FitError, InputError) as error:
            assert type(batch) is type(error) and str(batch) == str(error)
            continue
        assert isinstance(batch, Reduction)
        assert abs(batch.standard_potential.nominal_value
                   - alone.standard_potential.nominal_value) <= 1e-9
        assert batch.standard_potential.std_dev == pytest.approx(
            alone.standard_potential.std_dev, rel=1e-6)
        assert batch.free_names == alone.free_names and batch.notes == alone.notes
        np.testing.assert_allclose(batch.points["gamma_pm"], alone.points["gamma_pm"],
                                   rtol=1e-9, atol=0)
        np.testing.assert_allclose(batch.points["u_gamma_pm"], alone.points["u_gamma_pm"],
                                   rtol=1e-6, atol=0)
        # the straight-line cross-check, fitted with the batch's other lines or alone
        line, line_alone = batch.linear_extrapolation, alone.linear_extrapolation
        assert (line is None) == (line_alone is None)
        if line is not None:
            assert line.n_points == line_alone.n_points
            assert abs(line.standard_potential_V - line_alone.standard_potential_V) <= 1e-9
            assert line.u_standard_potential_V == pytest.approx(
                line_alone.u_standard_potential_V, rel=1e-6)


def test_reduce_many_on_runs_and_the_truth_is_covered(tmp_path):
    result = reduce_many(read_runs(_three_series(tmp_path)))
    summary = result.summary.set_index("series")
    for name, e0 in E0_V.items():  # the synthetic truth within the 95 % interval
        row = summary.loc[name]
        assert abs(row["standard_potential_V"] - e0) <= (
            row["coverage_factor"] * row["u_standard_potential_V"])


def test_the_summary_flags_readings_beyond_the_model_range(tmp_path):
    # The Hückel equation is taken as adequate up to I = 1 mol/kg (the package's stated range);
    # a series reaching 1.5 mol/kg has its two readings beyond it left out, and the summary
    # says so.
    molality = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.2, 1.5])
    path = tmp_path / "wide.csv"
    path.write_text("\n".join(["molality_mol_kg,emf_V,u_emf_V,series",
                               *_rows("W", E0_V["A"], molality)]) + "\n", encoding="utf-8")
    path.with_suffix(".toml").write_text(TOML, encoding="utf-8")
    result = reduce_many(read_runs(path))
    assert "beyond the model's range: 2 reading(s)" in result.summary.loc[0, "flags"]


def test_reduce_many_refuses_bad_input_common_to_every_series(tmp_path):
    runs = read_runs(_three_series(tmp_path))
    with pytest.raises(InputError, match="unknown model"):
        reduce_many(runs, model="debye")
    with pytest.raises(InputError, match="no model asked for has a parameter 'b'"):
        reduce_many(runs, fixed={"b": 1.0})
    with pytest.raises(ValueError, match="metadata"):
        reduce_many(pd.DataFrame({"molality_mol_kg": [0.01], "emf_V": [0.4]}))
    with pytest.raises(InputError, match="is not a number") as caught:
        runs_from_frame(pd.DataFrame({"molality_mol_kg": ["x"], "emf_V": [0.4]}), METADATA)
    assert caught.value.line == 2  # the header is line 1


def test_progress_is_called_once_per_series(tmp_path):
    calls = []
    reduce_many(read_runs(_three_series(tmp_path)), progress=calls.append)
    assert calls == [1, 1, 1]


def test_summary_csv_neutralises_formulas(tmp_path):
    text = summary_csv(reduce_many(read_runs(_three_series(tmp_path))))
    rows = list(csv.DictReader(io.StringIO(text)))
    assert [r["series"] for r in rows] == ["A", "B", "'=C"]
    assert rows[2]["standard_potential_V"] == ""


# --- the command line ------------------------------------------------------------------------

def test_a_three_series_file_gives_two_sets_and_a_summary_with_the_failure(tmp_path, capsys):
    path = _three_series(tmp_path)
    assert main(["reduce", str(path)]) == 1
    captured = capsys.readouterr()
    out = tmp_path / "three_activolt"
    expected = {f"three.{s}.{kind}" for s in "AB" for kind in SET + FIGURES}
    assert set(p.name for p in out.iterdir()) == expected | {"three.summary.csv",
                                                             "three.summary.png"}
    summary = _summary(out / "three.summary.csv")
    assert summary["series"].tolist() == ["A", "B", "'=C"]
    assert summary["failure"].isna().tolist() == [True, True, False]
    assert summary.loc[2, "flags"].startswith("refused: ")
    record = json.loads((out / "three.B.record.json").read_text(encoding="utf-8"))
    assert record["series"] == "B"
    assert abs(record["standard_potential_V"]["value"] - summary.loc[1, "standard_potential_V"]
               ) < 1e-9
    err = captured.err.strip().splitlines()
    assert len(err) == 1 and "series '=C'" in err[0] and "not reduced" in err[0]
    assert "2 of 3 series reduced" in captured.out


def test_several_files(tmp_path, capsys):
    a = _one_series(tmp_path, "a", E0_V["A"])
    b = _one_series(tmp_path, "b", E0_V["B"])
    out = tmp_path / "o"
    assert main(["reduce", str(a), str(b), "--out", str(out), "--figures", "none"]) == 0
    assert set(p.name for p in out.iterdir()) == {
        *(f"{s}.{kind}" for s in "ab" for kind in SET), "batch.summary.csv"}
    summary = _summary(out / "batch.summary.csv")
    assert summary["file"].tolist() == ["a.csv", "b.csv"]
    alone = reduce_run(read_run(b))
    assert abs(summary.loc[1, "standard_potential_V"]
               - alone.standard_potential.nominal_value) < 1e-9  # 10 digits in the CSV


def test_a_folder(tmp_path, capsys):
    folder = tmp_path / "runs"
    folder.mkdir()
    _one_series(folder, "day1", E0_V["A"])
    _three_series(folder, "day2")
    (folder / "notes.txt").write_text("not a table", encoding="utf-8")
    assert main(["reduce", str(folder), "--figures", "summary"]) == 1
    out = tmp_path / "runs_activolt"
    names = set(p.name for p in out.iterdir())
    assert names == {"day1.record.json", "day1.points.csv", "day1.report.txt", "day1.report.html",
                     *(f"day2.{s}.{kind}" for s in "AB" for kind in SET),
                     "runs.summary.csv", "runs.summary.png"}
    summary = _summary(out / "runs.summary.csv")
    assert list(zip(summary["file"], summary["series"].fillna(""), strict=True)) == [
        ("day1.csv", ""), ("day2.csv", "A"), ("day2.csv", "B"), ("day2.csv", "'=C")]


def test_an_empty_folder_is_bad_input(tmp_path, capsys):
    (tmp_path / "empty").mkdir()
    assert main(["reduce", str(tmp_path / "empty")]) == 2
    assert "the folder holds no *.csv" in capsys.readouterr().err


def test_series_still_picks_one(tmp_path, capsys):
    path = _three_series(tmp_path)
    assert main(["reduce", str(path), "--series", "B", "--no-figures"]) == 0
    out = tmp_path / "three_activolt"
    assert set(p.name for p in out.iterdir()) == {f"three.B.{kind}" for kind in SET}
    assert "series 'B'" in capsys.readouterr().out


def test_a_series_that_fails_alone_keeps_the_single_run_behaviour(tmp_path, capsys):
    # picked alone, the series that cannot give E° is refused as before: one line, no output
    path = _three_series(tmp_path)
    assert main(["reduce", str(path), "--series", "=C", "--no-figures"]) in (1, 2)
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "molalit" in err[0]
    assert not (tmp_path / "three_activolt").exists()


def test_all_series_reduced_is_exit_status_0(tmp_path, capsys):
    path = tmp_path / "two.csv"
    path.write_text("\n".join(["molality_mol_kg,emf_V,u_emf_V,series", *_rows("A", E0_V["A"]),
                               *_rows("B", E0_V["B"])]) + "\n", encoding="utf-8")
    (tmp_path / "two.toml").write_text(TOML, encoding="utf-8")
    assert main(["reduce", str(path), "--no-figures"]) == 0
    assert capsys.readouterr().err == ""
    assert _summary(tmp_path / "two_activolt" / "two.summary.csv")["failure"].isna().all()


def test_a_batch_sets_aside_what_exists_from_the_collector_and_puts_it_back(tmp_path,
                                                                             monkeypatch):
    """The runs are frozen out of the cyclic collector while the series are written (they
    live as long as the batch), and the collector is left as it was."""
    import gc

    import activolt.procedures.many as many

    frozen: list[int] = []
    collecting: list[bool] = []
    batch = many.SeriesReducer.batch

    def watched(self, runs):
        frozen.append(gc.get_freeze_count())
        collecting.append(gc.isenabled())
        return batch(self, runs)

    monkeypatch.setattr(many.SeriesReducer, "batch", watched)
    gc.unfreeze()  # nothing frozen by anyone else
    assert main(["reduce", str(_three_series(tmp_path)), "--no-figures", "--workers", "1"]) == 1
    assert frozen and all(count > 0 for count in frozen)
    # paused while the runs are read, the collector runs again while the series are reduced
    assert collecting and all(collecting) and gc.isenabled()
    assert gc.get_freeze_count() == 0
    # a collector the caller turned off stays off
    gc.disable()
    try:
        off = tmp_path / "off"
        off.mkdir()
        collecting.clear()
        assert main(["reduce", str(_three_series(off)), "--no-figures", "--workers", "1"]) == 1
        assert collecting and not any(collecting) and not gc.isenabled()
    finally:
        gc.enable()
    # objects frozen by the process itself stay frozen, and nothing else is frozen with them
    gc.freeze()
    try:
        mine = gc.get_freeze_count()
        frozen.clear()
        again = tmp_path / "again"
        again.mkdir()
        assert main(["reduce", str(_three_series(again)), "--no-figures", "--workers", "1"]) == 1
        # (frozen objects may be freed meanwhile; none is added)
        assert frozen and all(count <= mine for count in frozen)
        assert 0 < gc.get_freeze_count() <= mine
    finally:
        gc.unfreeze()


@pytest.mark.parametrize("args, says", [
    (["--json", "r.json"], "--json"),
    (["--exclude", "line=2:bubble"], "--exclude"),
    (["--no-figures", "--figures", "all"], "contradict"),
])
def test_options_for_one_series_are_bad_input_with_several(tmp_path, capsys, args, says):
    path = _three_series(tmp_path)
    assert main(["reduce", str(path), *args]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and says in err[0]
    assert not (tmp_path / "three_activolt").exists()


def test_bad_input_in_one_series_writes_nothing(tmp_path, capsys):
    path = _three_series(tmp_path)
    text = path.read_text(encoding="utf-8").replace(",B\n", ",B,extra\n", 1)
    path.write_text(text, encoding="utf-8")
    assert main(["reduce", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "line 8" in err[0]
    assert not (tmp_path / "three_activolt").exists()


def test_the_same_output_name_twice_is_bad_input(tmp_path, capsys):
    for sub in ("x", "y"):
        (tmp_path / sub).mkdir()
        _one_series(tmp_path / sub, "run", E0_V["A"])
    assert main(["reduce", str(tmp_path / "x" / "run.csv"), str(tmp_path / "y" / "run.csv"),
                 "--out", str(tmp_path / "o")]) == 2
    assert "output name 'run'" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


# --- worker processes ------------------------------------------------------------------------

def _without_provenance(path: Path) -> dict:
    """A record without what names the invocation (command line, time)."""
    record = json.loads(path.read_text(encoding="utf-8"))
    record.pop("created_utc")
    record["provenance"].pop("command_line")
    return record


def test_workers_give_the_same_outputs_as_one_process(tmp_path, capsys):
    # 70 series (one unreducible) in two worker processes against one process: every output
    # the same apart from the command line and the time in the records and reports.
    path = tmp_path / "many.csv"
    _write_many(path, 69)
    with path.open("a", encoding="utf-8") as table:
        table.write("0.01,0.35,single\n" * 4)
    outs = {n: tmp_path / f"out{n}" for n in (1, 2)}
    for n, out in outs.items():
        assert main(["reduce", str(path), "--out", str(out), "--figures", "none",
                     "--workers", str(n)]) == 1
    captured = capsys.readouterr()
    assert captured.err.count("not reduced") == 2  # once per invocation, on stderr
    names = sorted(p.name for p in outs[1].iterdir())
    assert names == sorted(p.name for p in outs[2].iterdir())
    assert len(names) == 69 * len(SET) + 1
    for name in names:
        one, two = outs[1] / name, outs[2] / name
        if name.endswith(".record.json"):
            assert _without_provenance(one) == _without_provenance(two), name
        elif not name.endswith(".report.html"):  # the HTML shows the record's time and hash
            assert one.read_bytes() == two.read_bytes(), name
    summary = _summary(outs[2] / "many.summary.csv")
    assert summary["series"].tolist() == [f"S{s}" for s in range(69)] + ["single"]


def _batch_with_a_signal_in_a_worker(folder: Path, monkeypatch, at_series: int,
                                     to_parent: bool, signal_number: int) -> int:
    """The exit status of an 80-series batch in two workers, where each worker sends
    ``signal_number`` to the main process (``to_parent``) or to itself as it finishes its
    ``at_series``-th series."""
    import os

    import activolt.procedures.many as many

    path = folder / "many.csv"
    _write_many(path, 80)
    real, calls = many.summary_row, []

    def row_then_signal(outcome, model):
        calls.append(1)
        if len(calls) == at_series:
            os.kill(os.getppid() if to_parent else os.getpid(), signal_number)
        return real(outcome, model)

    monkeypatch.setattr(many, "summary_row", row_then_signal)
    return main(["reduce", str(path), "--figures", "none", "--workers", "2"])


def test_ctrl_c_in_a_batch_of_worker_processes_writes_nothing(tmp_path, capsys, monkeypatch):
    # The main process is interrupted while workers reduce the series (a worker sends the
    # signal from within its 20th series): exit status 130, one line, and no output folder or
    # temporary left behind (the workers are stopped before the staged folder is removed).
    import signal

    assert _batch_with_a_signal_in_a_worker(tmp_path, monkeypatch, 20, True,
                                            signal.SIGINT) == 130
    assert capsys.readouterr().err.strip().splitlines() == [
        "activolt: interrupted; nothing was written (earlier outputs are unchanged)"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["many.csv", "many.toml"]


def test_a_worker_that_dies_stops_the_batch_with_nothing_written(tmp_path, capsys, monkeypatch):
    # A worker killed mid-batch (as the system's out-of-memory killer would) must not leave
    # the batch waiting for it: one line naming --workers, exit status 2, no output folder.
    import signal

    assert _batch_with_a_signal_in_a_worker(tmp_path, monkeypatch, 5, False,
                                            signal.SIGKILL) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "worker process ended unexpectedly" in err[0], err
    assert "--workers" in err[0]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["many.csv", "many.toml"]


def test_a_batchs_reports_show_control_characters_escaped(tmp_path):
    """A series name and metadata holding control and layout characters: each report of the
    batch shows them escaped (written as format_report gives it) — never raw — as the report
    of the series reduced alone does."""
    from activolt.safe_text import escape_controls

    path = tmp_path / "odd.csv"
    names = ["A\x1b[2J", "B\u202eC"]
    path.write_text("\n".join(["molality_mol_kg,emf_V,u_emf_V,series",
                               *_rows(names[0], E0_V["A"]), *_rows(names[1], E0_V["B"])])
                    + "\n", encoding="utf-8")
    (tmp_path / "odd.toml").write_text(TOML + '\n[info]\noperator = "X\\u0007Y"\n',
                                       encoding="utf-8")
    assert main(["reduce", str(path), "--no-figures", "--workers", "1"]) == 0
    reports = sorted((tmp_path / "odd_activolt").glob("*.report.txt"))
    assert len(reports) == 2
    for report, shown in zip(reports, ["A\\x1b[2J", "B\\u202eC"], strict=True):
        text = report.read_text(encoding="utf-8")
        assert shown in text and "\x1b" not in text and "\u202e" not in text
        assert text == escape_controls(text, keep="\n")
