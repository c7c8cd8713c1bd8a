"""What ``activolt reduce`` writes: whole sets named after their series, never mixed, never onto
an input, nothing left behind on failure, text safe for spreadsheets and terminals.

The readings are the demo run's (``sample_data/kestrel_hcl_25C.csv``, invented lab) in volts;
they are inputs, not check values. The behaviours checked are those of the user-testing and
fuzzing issue; the rules behind them are common practice (atomic replacement by rename; exit
status 130 after Ctrl-C, 128 + SIGINT; the OWASP CSV-injection rule of prefixing ``'``).
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import signal
import stat
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from activolt.cli import main, series_file_name
from activolt.io import files as output_files
from activolt.io.record import record_schema

ROWS_V = (
    ("0.0010", "0.579126"), ("0.0020", "0.544211"), ("0.0050", "0.498344"),
    ("0.0100", "0.464176"), ("0.0200", "0.430288"), ("0.0500", "0.385840"),
    ("0.1000", "0.352362"),
)
TOML = 'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n'
SET = ("record.json", "points.csv", "report.txt", "report.html")
FIGURES = ("extrapolation.png", "residuals.png", "gamma.png")
ENV = {**os.environ, "MPLBACKEND": "Agg"}


def _table(folder: Path, stem: str = "run", notes: tuple[str, ...] = (),
           series: tuple[str, ...] = ()) -> Path:
    header = "molality_mol_kg,emf_V,electrode,note" + (",series" if series else "")
    rows = []
    for name in series or ("",):
        for i, (m, e) in enumerate(ROWS_V):
            shift = 1e-4 if name.endswith("B") else 0.0
            note = notes[i] if i < len(notes) else ""
            rows.append(",".join([m, f"{float(e) + shift:.6f}", f"E{i}", note,
                                  *([name] if series else [])]))
    path = folder / f"{stem}.csv"
    path.write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    (folder / f"{stem}.toml").write_text(TOML, encoding="utf-8")
    return path


def _snapshot(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` (hidden ones too) and its bytes."""
    return {str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _leftovers(folder: Path) -> list[str]:
    """Temporaries and locks of the writer anywhere under ``folder``."""
    return [str(p.relative_to(folder)) for p in folder.rglob(".*activolt*")]


def _one_error_line(capsys) -> str:
    captured = capsys.readouterr()
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1, captured.err
    return lines[0]


# --- 1. sets named after their series, never mixed ------------------------------------------

def test_series_are_named_in_files_record_report_and_points(tmp_path, capsys):
    path = _table(tmp_path, "two_series", series=("run A", "run B"))
    assert main(["reduce", str(path), "--series", "run A", "--no-figures"]) == 0
    assert main(["reduce", str(path), "--series", "run B", "--no-figures"]) == 0
    out = tmp_path / "two_series_activolt"
    assert sorted(p.name for p in out.iterdir()) == sorted(
        f"two_series.run%20{s}.{kind}" for s in "AB" for kind in SET)
    for name in ("run A", "run B"):
        base = out / f"two_series.{series_file_name(name)}"
        record = json.loads(Path(f"{base}.record.json").read_text())
        assert record["series"] == name
        assert Path(f"{base}.report.txt").read_text().splitlines()[0].endswith(
            f"series '{name}'")
        points = Path(f"{base}.points.csv").read_text().splitlines()
        column = points[0].split(",").index("series")
        assert {row.split(",")[column] for row in points[1:]} == {name}
    # the two series differ by 0.1 mV in every reading: the records are not copies
    a, b = (json.loads((out / f"two_series.run%20{s}.record.json").read_text()) for s in "AB")
    assert a["standard_potential_V"]["value"] != b["standard_potential_V"]["value"]
    assert "series" in record_schema()["properties"]


def test_a_table_without_series_records_null(tmp_path, capsys):
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    record = json.loads((tmp_path / "run_activolt" / "run.record.json").read_text())
    assert record["series"] is None


def test_series_file_names_never_coincide():
    names = ["run A", "run_A", "run%20A", "Run A", "", "a/b", "a\\b", "..", "ä", "a.b"]
    assert len({series_file_name(n) for n in names}) == len(names)
    for name in names:
        part = series_file_name(name)
        assert "/" not in part and "\\" not in part and "." not in part


def test_a_run_without_figures_replaces_the_whole_set(tmp_path, capsys):
    path = _table(tmp_path)
    out = tmp_path / "run_activolt"
    assert main(["reduce", str(path)]) == 0
    assert sorted(p.name for p in out.iterdir()) == sorted(f"run.{k}" for k in SET + FIGURES)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    assert sorted(p.name for p in out.iterdir()) == sorted(f"run.{k}" for k in SET)


def test_json_elsewhere_removes_the_old_record_from_the_folder(tmp_path, capsys):
    path = _table(tmp_path)
    out = tmp_path / "run_activolt"
    assert main(["reduce", str(path), "--no-figures"]) == 0
    assert main(["reduce", str(path), "--no-figures", "--json", str(tmp_path / "r.json")]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["run.points.csv", "run.report.html",
                                                     "run.report.txt"]
    assert json.loads((tmp_path / "r.json").read_text())["input"]["file"] == "run.csv"


def test_other_files_in_the_folder_are_kept(tmp_path, capsys):
    path = _table(tmp_path)
    out = tmp_path / "results"
    out.mkdir()
    (out / "notes.txt").write_text("mine")
    assert main(["reduce", str(path), "--no-figures", "--out", str(out)]) == 0
    assert main(["reduce", str(path), "--no-figures", "--out", str(out)]) == 0
    assert (out / "notes.txt").read_text() == "mine"
    assert not _leftovers(tmp_path)


def test_a_folder_another_run_is_writing_is_refused(tmp_path, capsys):
    path = _table(tmp_path)
    other = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        (tmp_path / ".run_activolt.activolt.lock").write_text(f"{other.pid}\n")
        assert main(["reduce", str(path), "--no-figures"]) == 2
        line = _one_error_line(capsys)
        assert f"process {other.pid}" in line and "run_activolt" in line
        assert not (tmp_path / "run_activolt").exists()
    finally:
        other.kill()
        other.wait()
    # the holder is gone: its lock is stale and taken over
    assert main(["reduce", str(path), "--no-figures"]) == 0
    assert (tmp_path / "run_activolt" / "run.record.json").exists()
    assert not _leftovers(tmp_path)


def test_temporaries_of_a_dead_run_are_removed(tmp_path, capsys):
    path = _table(tmp_path)
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    stale = tmp_path / f".run_activolt.activolt-{dead.pid}-0badcafe.new"
    stale.mkdir()
    (stale / "run.record.json").write_text("half")
    (tmp_path / ".run_activolt.activolt.lock").write_text(f"{dead.pid}\n")
    assert main(["reduce", str(path), "--no-figures"]) == 0
    assert not _leftovers(tmp_path)


# --- 2. Ctrl-C ----------------------------------------------------------------------------

def test_ctrl_c_during_the_work_is_one_line_and_exit_130(tmp_path, capsys, monkeypatch):
    import activolt.procedures.montecarlo

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(activolt.procedures.montecarlo, "monte_carlo", interrupted)
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--monte-carlo", "100", "--no-figures"]) == 130
    assert "interrupted" in _one_error_line(capsys)
    assert not (tmp_path / "run_activolt").exists() and not _leftovers(tmp_path)


def test_ctrl_c_while_writing_keeps_the_old_set(tmp_path, capsys, monkeypatch):
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    before = _snapshot(tmp_path)
    real, calls = output_files.write_file, []

    def write_then_stop(*args):
        calls.append(args)
        if len(calls) == 2:
            raise KeyboardInterrupt
        real(*args)

    monkeypatch.setattr(output_files, "write_file", write_then_stop)
    assert main(["reduce", str(path), "--fix", "a_angstrom=4.3"]) == 130
    assert "nothing was written" in _one_error_line(capsys)
    assert _snapshot(tmp_path) == before


def test_ctrl_c_during_the_swap_is_held_and_undoes_it(tmp_path, capsys, monkeypatch):
    # SIGINT arrives while the new folder is being swapped in: the swap completes, is undone,
    # and the run stops as if interrupted just before it.
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    before = _snapshot(tmp_path)
    real = output_files.OutputTransaction.commit_folder

    def commit_with_ctrl_c(self, folder, new):
        os.kill(os.getpid(), signal.SIGINT)
        real(self, folder, new)

    monkeypatch.setattr(output_files.OutputTransaction, "commit_folder", commit_with_ctrl_c)
    assert main(["reduce", str(path), "--fix", "a_angstrom=4.3", "--no-figures"]) == 130
    assert "nothing was written" in _one_error_line(capsys)
    assert _snapshot(tmp_path) == before


@pytest.mark.parametrize(("stop", "status", "word"), [(signal.SIGINT, 130, "interrupted"),
                                                     (signal.SIGTERM, 143, "terminated")])
def test_sigint_of_a_long_monte_carlo(tmp_path, stop, status, word):
    # A real Ctrl-C (SIGINT), or SIGTERM, during 10⁶ Monte Carlo trials; 128 + the signal's
    # number is the exit status shells report (common practice).
    path = _table(tmp_path)
    # The heavy packages are imported before "ready", so that the signal lands in the
    # reduction or the trials on a slow machine too, not in a third-party import.
    script = textwrap.dedent(f"""
        import sys
        import lmfit, matplotlib, numpy, pandas, scipy.linalg  # noqa: F401
        from activolt.cli import main
        print("ready", file=sys.stderr, flush=True)
        sys.exit(main(["reduce", {str(path)!r}, "--monte-carlo", "1000000", "--no-figures"]))
    """)
    child = subprocess.Popen([sys.executable, "-c", script], stderr=subprocess.PIPE,
                             stdout=subprocess.PIPE, text=True, env=ENV)
    assert child.stderr.readline().strip() == "ready"
    time.sleep(1.0)
    child.send_signal(stop)
    _, err = child.communicate(timeout=30)
    assert child.returncode == status, err
    assert err.strip().splitlines() == [
        f"activolt: {word}; nothing was written (earlier outputs are unchanged)"]
    assert not (tmp_path / "run_activolt").exists() and not _leftovers(tmp_path)


# --- 3. inputs are never outputs -----------------------------------------------------------

@pytest.mark.parametrize("target", ["run.csv", "run.toml", "./sub/../run.csv", "link.csv",
                                    "hard.toml"])
def test_an_output_that_is_an_input_is_refused(tmp_path, capsys, monkeypatch, target):
    path = _table(tmp_path)
    (tmp_path / "sub").mkdir()
    (tmp_path / "link.csv").symlink_to(path)
    os.link(tmp_path / "run.toml", tmp_path / "hard.toml")
    monkeypatch.chdir(tmp_path)
    before = _snapshot(tmp_path)
    assert main(["reduce", "run.csv", "--json", target, "--no-figures"]) == 2
    assert "input" in _one_error_line(capsys)
    assert _snapshot(tmp_path) == before
    assert not (tmp_path / "run_activolt").exists()


def test_an_output_name_in_the_folder_that_is_an_input_is_refused(tmp_path, capsys):
    # The set's own file name is a symlink to the run table.
    path = _table(tmp_path)
    out = tmp_path / "o"
    out.mkdir()
    (out / "run.points.csv").symlink_to(path)
    before = _snapshot(tmp_path)
    assert main(["reduce", str(path), "--out", str(out), "--no-figures"]) == 2
    assert "input" in _one_error_line(capsys)
    assert _snapshot(tmp_path) == before


def test_case_variants_of_an_input_on_a_case_insensitive_file_system(tmp_path, capsys):
    path = _table(tmp_path)
    if not (tmp_path / "RUN.CSV").exists():
        pytest.skip("this file system tells RUN.CSV from run.csv")
    assert main(["reduce", str(path), "--json", str(tmp_path / "RUN.CSV"), "--no-figures"]) == 2


@pytest.mark.parametrize("case", ["the current folder", "the folder of the input"])
def test_an_output_folder_holding_the_input_or_the_current_folder_is_refused(
        tmp_path, capsys, monkeypatch, case):
    path = _table(tmp_path)
    (tmp_path / "here").mkdir()
    (tmp_path / "here" / "mine.txt").write_text("x")
    if case == "the current folder":
        monkeypatch.chdir(tmp_path / "here")
        out = "."
    else:
        out = str(tmp_path)
    before = _snapshot(tmp_path)
    assert main(["reduce", str(path), "--out", out, "--no-figures"]) == 2
    line = _one_error_line(capsys)
    assert "as a whole" in line and case.split()[-1] in line.replace("run", "input")
    assert _snapshot(tmp_path) == before


# --- 4. nothing written means nothing --------------------------------------------------------

def test_a_file_size_limit_leaves_the_old_set_and_nothing_new(tmp_path, capsys):
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    (tmp_path / "elsewhere").mkdir()
    before = _snapshot(tmp_path)
    script = textwrap.dedent(f"""
        import resource, sys
        resource.setrlimit(resource.RLIMIT_FSIZE, (8000, 8000))
        from activolt.cli import main
        sys.exit(main(["reduce", {str(path)!r}, "--fix", "a_angstrom=4.3", "--json",
                       {str(tmp_path / "elsewhere" / "r.json")!r}]))
    """)
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          env=ENV, timeout=60)
    assert done.returncode == 2, done.stderr
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1 and "File too large" in lines[0] and "nothing was written" in lines[0]
    assert _snapshot(tmp_path) == before
    assert sorted(p.name for p in tmp_path.rglob("*")) == sorted(before_names(before))


def before_names(snapshot: dict[str, bytes]) -> list[str]:
    names = {Path(k).name for k in snapshot} | {"run_activolt", "elsewhere"}
    return sorted(names)


def test_a_full_disk_leaves_the_old_set_and_nothing_new(tmp_path, capsys, monkeypatch):
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    before = _snapshot(tmp_path)
    real = output_files.write_file

    def full(target, data, mode):
        if str(target).endswith(".report.txt"):
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(target))
        real(target, data, mode)

    monkeypatch.setattr(output_files, "write_file", full)
    assert main(["reduce", str(path), "--fix", "a_angstrom=4.3", "--no-figures",
                 "--json", str(tmp_path / "new" / "deep" / "r.json")]) == 2
    assert "No space left on device" in _one_error_line(capsys)
    assert _snapshot(tmp_path) == before
    assert not (tmp_path / "new").exists()


@pytest.mark.parametrize("where", ["json", "out", "in the folder"])
def test_a_path_occupied_by_the_other_kind_is_refused(tmp_path, capsys, where):
    path = _table(tmp_path)
    (tmp_path / "folder").mkdir()
    (tmp_path / "file").write_text("x")
    out = tmp_path / "o"
    out.mkdir()
    (out / "run.report.txt").mkdir()
    args = {"json": ["--json", str(tmp_path / "folder")], "out": ["--out", str(tmp_path / "file")],
            "in the folder": ["--out", str(out)]}[where]
    before = _snapshot(tmp_path)
    assert main(["reduce", str(path), "--no-figures", *args]) == 2
    assert "folder" in _one_error_line(capsys) or "file" in capsys.readouterr().err
    assert _snapshot(tmp_path) == before
    assert not (tmp_path / "run_activolt").exists()


_SETS = textwrap.dedent("""
    SET = ("record.json", "points.csv", "report.txt")
    FIGURES = ("extrapolation.png", "residuals.png", "gamma.png")
    OLD = {f"run.{kind}": f"old {kind}".encode() for kind in SET}
    NEW = {**{f"run.{kind}": f"new {kind}".encode() * 2000 for kind in SET},
           **{f"run.{kind}": bytes([i]) * 150_000 for i, kind in enumerate(FIGURES)}}
""")

_KILLER = _SETS + textwrap.dedent("""
    import hashlib, json, os, random, signal, sys, time
    from pathlib import Path
    from activolt.io.files import write_outputs

    folder = Path(sys.argv[1])
    owned = sorted(NEW)

    def state():
        return {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
                for p in sorted(folder.iterdir())}

    def fork_and_write():
        child = os.fork()
        if child == 0:
            try:
                write_outputs(folder=folder, contents=NEW, owned=owned)
            finally:
                os._exit(0)
        return child

    write_outputs(folder=folder, contents=OLD, owned=owned)
    started = time.perf_counter()
    os.waitpid(fork_and_write(), 0)  # how long a forked write takes, start to end
    duration = time.perf_counter() - started
    random.seed(1)
    seen = []
    for k in range(24):
        write_outputs(folder=folder, contents=OLD, owned=owned)  # the next run
        leftovers = [p.name for p in folder.parent.iterdir() if p.name.startswith(".")]
        child = fork_and_write()
        time.sleep(random.uniform(0.0, 1.3 * duration))
        os.kill(child, signal.SIGKILL)
        os.waitpid(child, 0)
        seen.append({"state": state(), "leftovers_before": leftovers})
    write_outputs(folder=folder, contents=OLD, owned=owned)
    print(json.dumps({"seen": seen, "duration": duration,
                      "after": [p.name for p in folder.parent.iterdir()]}))
""")


@pytest.mark.skipif(not hasattr(os, "fork"), reason="needs fork")
def test_sigkill_while_writing_leaves_the_old_set_or_the_new_one(tmp_path):
    # 24 kills at random moments of writing a set with three figures; before each, the next
    # write (of the old set) must have removed whatever the killed one left.
    done = subprocess.run([sys.executable, "-c", _KILLER, str(tmp_path / "run_activolt")],
                          capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr
    report = json.loads(done.stdout)
    sets: dict[str, dict] = {}
    exec(_SETS, sets)
    old, new = ({name: hashlib.sha256(data).hexdigest() for name, data in sets[s].items()}
                for s in ("OLD", "NEW"))
    kinds = {"old": 0, "new": 0}
    for seen in report["seen"]:
        assert seen["state"] in (old, new)
        kinds["old" if seen["state"] == old else "new"] += 1
        assert seen["leftovers_before"] == []
    assert report["after"] == ["run_activolt"]
    assert kinds["old"] and kinds["new"], kinds  # the kills fell before and after the swap


def test_sigkill_of_a_run_with_figures(tmp_path, capsys):
    # The whole command, killed at a few moments; the new run holds an 'a' held by the user,
    # so none of its text files equals the old one's.
    path = _table(tmp_path)
    out = tmp_path / "run_activolt"
    assert main(["reduce", str(path), "--no-figures"]) == 0
    old = _snapshot(out)
    for delay in (0.8, 1.6, 2.4):
        child = subprocess.Popen([sys.executable, "-m", "activolt.cli", "reduce", str(path),
                                  "--fix", "a_angstrom=4.3"], env=ENV,
                                 stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        time.sleep(delay)
        child.kill()
        child.wait()
        now = _snapshot(out)
        if now != old:
            assert sorted(now) == sorted(f"run.{k}" for k in SET + FIGURES)
            assert all(now[name] != old[name] for name in old)
            assert all(now[f"run.{k}"].endswith(b"IEND\xaeB`\x82") for k in FIGURES)
            break
    assert main(["reduce", str(path), "--no-figures"]) == 0
    assert not _leftovers(tmp_path)


# --- 5. spreadsheet formulas ---------------------------------------------------------------

def test_text_cells_that_look_like_formulas_are_neutralised(tmp_path, capsys):
    notes = ("=1+2", "+SUM(A1)", "-2+3", "@cmd", " =HYPERLINK(1)", "＝1", "plain")
    path = _table(tmp_path, notes=notes)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    import pandas as pd

    table = pd.read_csv(tmp_path / "run_activolt" / "run.points.csv", keep_default_na=False)
    # runs.py strips blanks around text cells, so the fifth note arrives as '=HYPERLINK(1)'
    assert list(table["note"]) == ["'=1+2", "'+SUM(A1)", "'-2+3", "'@cmd", "'=HYPERLINK(1)",
                                   "'＝1", "plain"]
    assert table["residual_mV"].dtype.kind == "f" and (table["residual_mV"] < 0).any()


def test_formula_rule_cases():
    from activolt.safe_text import neutralise_formula

    for text in ("=x", "+x", "-x", "@x", "\tx", "\rx", "  =x", "\u3000＠x", "＋x", "－x"):
        assert neutralise_formula(text) == "'" + text
    for kept in ("x=1", "-0.5", "+1e-3", "12", "", "KB-AgCl-07"):
        assert neutralise_formula(kept) == kept
    assert neutralise_formula(-1.5) == -1.5


def test_a_series_name_like_a_formula_is_neutralised(tmp_path, capsys):
    path = _table(tmp_path, "s", series=("=cmd A", "=cmd B"))
    assert main(["reduce", str(path), "--series", "=cmd A", "--no-figures"]) == 0
    points = (tmp_path / "s_activolt" / "s.%3Dcmd%20A.points.csv").read_text().splitlines()
    assert all(",'=cmd A," in row or row.endswith(",'=cmd A") for row in points[1:])


# --- 6. terminal escapes -------------------------------------------------------------------

ESC = "\x1b[2J\x1b[31m"


def test_escapes_in_an_error_are_shown_not_obeyed(tmp_path, capsys):
    path = _table(tmp_path, "s", series=("A", "B"))
    assert main(["reduce", str(path), "--series", f"X{ESC}", "--no-figures"]) == 2
    line = _one_error_line(capsys)
    assert "\x1b" not in line and "X\\x1b[2J\\x1b[31m" in line


def test_escapes_in_column_names_and_toml_keys(tmp_path, capsys):
    path = _table(tmp_path)
    text = path.read_text().replace("note", f"note{ESC}", 1)
    path.write_text(text)
    # TOML takes a control character in a quoted key only as an escape (TOML 1.0, "Keys")
    (tmp_path / "run.toml").write_text(TOML + '"key\\u001b[2J" = 1\n')
    assert main(["reduce", str(path), "--no-figures"]) == 0
    printed = capsys.readouterr()
    report = (tmp_path / "run_activolt" / "run.report.txt").read_text()
    for shown in (printed.out, printed.err, report):
        assert "\x1b" not in shown
    assert "\\x1b[2J" in report


def test_escapes_in_reasons_cells_and_file_names(tmp_path, capsys):
    path = _table(tmp_path, f"run{ESC}")
    assert main(["reduce", str(path), "--no-figures", "--exclude",
                 f"line=3:bubbles{ESC}\u202e"]) == 0
    printed = capsys.readouterr().out
    assert "\x1b" not in printed and "\u202e" not in printed
    assert "bubbles\\x1b[2J\\x1b[31m\\u202e" in printed
    assert "run\\x1b[2J" in printed  # the report header and the list of files written
    assert main(["reduce", str(path), "--electrolyte", f"HCl{ESC}", "--electrons", "1",
                 "--no-figures"]) == 2
    assert "\x1b" not in capsys.readouterr().err
    bad = tmp_path / "bad.csv"
    bad.write_text(f"molality_mol_kg,emf_V\n0.01,0.4{ESC}\n0.02,0.3\n0.05,0.25\n")
    (tmp_path / "bad.toml").write_text(TOML)
    assert main(["reduce", str(bad), "--no-figures"]) == 2
    assert "\x1b" not in _one_error_line(capsys)


def test_escape_helper():
    from activolt.safe_text import escape_controls

    assert escape_controls("a\x1bb\x07c\x9bd\u2028e\te") == "a\\x1bb\\x07c\\x9bd\\u2028e\\x09e"
    assert escape_controls("a\nb", keep="\n") == "a\nb"
    assert escape_controls(escape_controls("\x1b")) == escape_controls("\x1b")
    assert escape_controls("γ± ≤ 0.1 mol/kg — E°") == "γ± ≤ 0.1 mol/kg — E°"


# --- 7. small ones -------------------------------------------------------------------------

def test_an_overwritten_output_keeps_its_mode(tmp_path, capsys):
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    record = tmp_path / "run_activolt" / "run.record.json"
    record.chmod(0o600)
    (tmp_path / "run_activolt").chmod(0o750)
    assert main(["reduce", str(path), "--no-figures"]) == 0
    assert stat.S_IMODE(record.stat().st_mode) == 0o600
    assert stat.S_IMODE((tmp_path / "run_activolt").stat().st_mode) == 0o750
    umask = os.umask(0)
    os.umask(umask)
    assert stat.S_IMODE((tmp_path / "run_activolt" / "run.points.csv").stat().st_mode) == (
        0o666 & ~umask)


def test_the_report_with_every_model_ends_with_a_newline(tmp_path, capsys):
    path = _table(tmp_path)
    assert main(["reduce", str(path), "--model", "all", "--no-figures"]) == 0
    assert capsys.readouterr().out.split("\nwritten:")[0].endswith("\n")
    assert (tmp_path / "run_activolt" / "run.report.txt").read_text().endswith("\n")


def test_an_unwritable_matplotlib_folder_says_nothing_on_stderr(tmp_path):
    # HOME below a regular file: no folder can be made there, whoever runs the test.
    path = _table(tmp_path)
    (tmp_path / "file").write_text("")
    env = {k: v for k, v in ENV.items()
           if k not in ("MPLCONFIGDIR", "XDG_CONFIG_HOME", "XDG_CACHE_HOME")}
    env["HOME"] = str(tmp_path / "file" / "home")
    env["TMPDIR"] = str(tmp_path / "temporary")
    (tmp_path / "temporary").mkdir()
    done = subprocess.run([sys.executable, "-m", "activolt.cli", "reduce", str(path)],
                          capture_output=True, text=True, env=env, timeout=60)
    assert done.returncode == 0 and done.stderr == ""
    assert (tmp_path / "run_activolt" / "run.gamma.png").exists()
    # the private folder used instead is removed, though the command ends without Python's
    # clean-up of its objects (cli.run_command)
    assert list((tmp_path / "temporary").iterdir()) == []


def test_the_command_ends_with_its_status_and_every_line_written(tmp_path):
    # cli.run_command ends the process without Python's clean-up: what it printed into a
    # pipe (buffered) is all there, and the exit status is main's
    path = _table(tmp_path)
    env = {k: v for k, v in ENV.items() if k != "PYTHONUNBUFFERED"}
    command = [sys.executable, "-m", "activolt.cli", "reduce", str(path), "--no-figures"]
    done = subprocess.run(command, capture_output=True, text=True, env=env, timeout=60)
    assert done.returncode == 0 and done.stderr == ""
    assert done.stdout.startswith("activolt reduction of run.csv")
    assert done.stdout.endswith(f"  {tmp_path / 'run_activolt' / 'run.report.html'}\n")
    done = subprocess.run([*command[:4], str(tmp_path / "missing.csv")], capture_output=True,
                          text=True, env=env, timeout=60)
    assert done.returncode == 2 and done.stdout == ""
    assert done.stderr.startswith("activolt: error: ") and done.stderr.count("\n") == 1


def test_input_file_in_the_record_is_relative_to_the_record(tmp_path, capsys, monkeypatch):
    path = _table(tmp_path)
    monkeypatch.chdir(tmp_path)
    for args in (["--out", "a/b"], ["--json", "c/r.json"], ["--out", str(tmp_path / "d")]):
        assert main(["reduce", "run.csv", "--no-figures", *args]) == 0
    records = [tmp_path / "a/b/run.record.json", tmp_path / "c/r.json",
               tmp_path / "d/run.record.json"]
    for record_path in records:
        entry = json.loads(record_path.read_text())["input"]
        assert not Path(entry["file"]).is_absolute()
        table = (record_path.parent / entry["file"]).resolve()
        assert table == path.resolve()
        assert hashlib.sha256(table.read_bytes()).hexdigest() == entry["sha256"]
        assert (record_path.parent / entry["metadata_file"]).resolve() == (
            tmp_path / "run.toml").resolve()


def test_demo_record_names_its_input_relative_to_itself(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out)]) == 0
    entry = json.loads((out / "kestrel_hcl_25C.record.json").read_text())["input"]
    assert not Path(entry["file"]).is_absolute()
    assert (out / entry["file"]).resolve().name == "kestrel_hcl_25C.csv"
    assert (out / entry["file"]).exists()


def test_pyproject_states_the_license_as_an_spdx_expression():
    import tomllib

    project = tomllib.loads((Path(__file__).parents[1] / "pyproject.toml").read_text())
    assert project["project"]["license"] == "MIT"
    requires = project["build-system"]["requires"]
    # SPDX license expressions need setuptools ≥ 77 (setuptools changelog, v77.0.0)
    assert any(r.replace(" ", "").startswith("setuptools>=") and
               int(r.split(">=")[1].split(".")[0]) >= 77 for r in requires)
    assert any(d.startswith("tqdm") for d in project["project"]["dependencies"])


def test_a_staged_file_is_written_whole_when_the_system_writes_part_at_a_time(
        tmp_path, monkeypatch):
    real, sizes = os.write, []

    def a_few_bytes(handle, data):
        sizes.append(len(data))
        return real(handle, bytes(data[:7]))

    staged = output_files.StagedFolder(tmp_path, {"old.txt": 0o640})
    monkeypatch.setattr(os, "write", a_few_bytes)
    staged.write("new.txt", "γ± written in pieces\n" * 3)
    staged.write("old.txt", b"0123456789" * 5)
    monkeypatch.undo()
    assert (tmp_path / "new.txt").read_text("utf-8") == "γ± written in pieces\n" * 3
    assert (tmp_path / "old.txt").read_bytes() == b"0123456789" * 5
    assert stat.S_IMODE((tmp_path / "old.txt").stat().st_mode) == 0o640
    assert len(sizes) > 10
