"""Bad input to ``activolt reduce``: one line on stderr, exit status 2, nothing written.

Every case builds its run table (CSV) and metadata (TOML) in ``tmp_path``, calls
:func:`activolt.cli.main` twice (default output folder ``<stem>_activolt`` next to the run, then
``--out`` and ``--json`` in ``tmp_path``) and checks:

- the return value is 2 (the exit status for bad input, ``shared/design.md``);
- stderr is exactly one line, ``activolt: error: …``, naming the file (or the command line), the
  line and the column where they apply, and saying what to do;
- no output folder or file appeared, and stdout is empty;
- the input files are byte-for-byte unchanged.

Sources: the run-table and metadata contracts and the exit statuses of ``shared/design.md`` and
the accepted behaviour of the input-handling issue. The EMF readings are the demo run's
(``sample_data/kestrel_hcl_25C.csv``, invented lab), converted to volts; they are inputs, not
check values. Everything else (one error line, what-to-do wording) is common practice for
command-line tools.
"""

from __future__ import annotations

import re
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.cli import main
from activolt.data.runs import read_run
from activolt.errors import InputError

HEADER_COMMENT = "# test run (comment line: data line numbers below are counted from the top)\n"
#: Demo readings (invented lab) in volts: molality [mol/kg], EMF [V]
ROWS_V = (
    ("0.0010", "0.579126"), ("0.0020", "0.544211"), ("0.0050", "0.498344"),
    ("0.0100", "0.464176"), ("0.0200", "0.430288"), ("0.0500", "0.385840"),
    ("0.1000", "0.352362"),
)
GOOD_CSV = HEADER_COMMENT + "molality_mol_kg,emf_V\n" + "".join(f"{m},{e}\n" for m, e in ROWS_V)
GOOD_TOML = 'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n'


def table(header: str, *rows: str) -> str:
    """A run table with the comment line on line 1, the header on line 2, rows from line 3."""
    return HEADER_COMMENT + header + "\n" + "".join(row + "\n" for row in rows)


def good_rows(*extra: str, separator: str = ",") -> list[str]:
    """The demo rows, each with ``extra`` fields appended."""
    return [separator.join((m, e, *extra)) for m, e in ROWS_V]


@dataclass
class Case:
    """One bad input and what the error line must say."""

    csv: str | bytes | None = GOOD_CSV
    toml: str | bytes | None = GOOD_TOML
    args: tuple[str, ...] = ()
    #: what the message names: "csv", "toml", "command line", another path, or None (an
    #: argument the option parser rejects: the option itself is named)
    names: str | None = "csv"
    line: int | None = None
    column: str | None = None
    #: regular expressions that must all match the message (what is wrong, what to do)
    says: tuple[str, ...] = ()
    extra_files: dict[str, str | bytes] = field(default_factory=dict)


CASES: dict[str, Case] = {
    # --- columns -------------------------------------------------------------------------
    "missing molality column": Case(
        csv=table("emf_V", "0.5", "0.4", "0.3"), line=2,
        says=(r"molality_mol_kg", r"missing", r"add")),
    "missing emf column": Case(
        csv=table("molality_mol_kg", "0.1", "0.2", "0.3"), line=2,
        says=(r"no EMF column", r"emf_V", r"emf_mV", r"add")),
    "duplicate column": Case(
        csv=table("molality_mol_kg,emf_V,emf_V", *good_rows("0.5")), line=2, column="emf_V",
        says=(r"twice", r"keep one")),
    "both emf_V and emf_mV": Case(
        csv=table("molality_mol_kg,emf_V,emf_mV", *good_rows("500.0")), line=2,
        column="emf_mV", says=(r"emf_V", r"emf_mV", r"keep one")),
    "both temperature columns": Case(
        csv=table("molality_mol_kg,emf_V,temperature_C,temperature_K",
                  *good_rows("25.0", "298.15")),
        line=2, column="temperature_K", says=(r"temperature_C", r"keep one")),
    "column without a name": Case(
        csv=table("molality_mol_kg,,emf_V", *(f"{m},x,{e}" for m, e in ROWS_V)), line=2,
        says=(r"no name", r"name every column")),
    # --- cells ---------------------------------------------------------------------------
    "non-numeric emf": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "0.002,0.544V", "0.005,0.498"),
        line=4, column="emf_V", says=(r"'0\.544V' is not a number", r"plain decimal number")),
    "non-numeric molality": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "0.002,0.544", "1/200,0.498"),
        line=5, column="molality_mol_kg", says=(r"not a number", r"plain decimal number")),
    "decimal comma with comma separator": Case(
        csv=table("molality_mol_kg,emf_V", '0.001,"0,579"', "0.002,0.544", "0.005,0.498"),
        line=3, column="emf_V", says=(r"not a number", r"decimal comma needs ';'|decimal point")),
    "infinite emf": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "0.002,inf", "0.005,0.498"),
        line=4, column="emf_V", says=(r"not a finite number",)),
    "empty molality": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", ",0.544", "0.005,0.498"),
        line=4, column="molality_mol_kg", says=(r"empty", r"give the molality")),
    "zero molality": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "0,0.544", "0.005,0.498"),
        line=4, column="molality_mol_kg", says=(r"not positive", r"molalities > 0")),
    "negative molality": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "0.002,0.544", "-0.005,0.498"),
        line=5, column="molality_mol_kg", says=(r"not positive", r"molalities > 0")),
    "implausibly large molality": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "100,0.544", "0.005,0.498"),
        line=4, column="molality_mol_kg", says=(r"implausibly large", r"check the unit")),
    "millivolts in a volt column": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,579.126", "0.002,544.211", "0.005,498.344"),
        line=3, column="emf_V", says=(r"implausible", r"millivolts", r"name the column 'emf_mV'")),
    "volts in a millivolt column": Case(
        csv=table("molality_mol_kg,emf_mV", *good_rows()), line=2, column="emf_mV",
        says=(r"below 5 mV", r"name the column 'emf_V'")),
    "zero u_emf": Case(
        csv=table("molality_mol_kg,emf_V,u_emf_V", *good_rows("0.00002")[:2],
                  "0.005,0.498344,0", *good_rows("0.00002")[3:]),
        line=5, column="u_emf_V", says=(r"must be positive", r"leave the column out")),
    "negative u_emf": Case(
        csv=table("molality_mol_kg,emf_mV,u_emf_mV", "0.001,579.126,0.02", "0.002,544.211,-0.02",
                  "0.005,498.344,0.02"),
        line=4, column="u_emf_mV", says=(r"must be positive", r"leave the column out")),
    "u_molality not below the molality": Case(
        csv=table("molality_mol_kg,emf_V,u_molality_mol_kg", *good_rows("0.5")), line=3,
        column="u_molality_mol_kg", says=(r"smaller than the molality",)),
    "per-row temperature below liquid water": Case(
        csv=table("molality_mol_kg,emf_V,temperature_C", *good_rows("-5.0")), line=3,
        column="temperature_C", says=(r"outside liquid water", r"check the value")),
    "celsius in a kelvin column": Case(
        csv=table("molality_mol_kg,emf_V,temperature_K", *good_rows("25.0")), line=3,
        column="temperature_K", says=(r"outside liquid water", r"unit \(°C or K\)")),
    "implausible barometric pressure": Case(
        csv=table("molality_mol_kg,emf_V,pressure_kPa", *good_rows("1013.25")), line=3,
        column="pressure_kPa", says=(r"implausible", r"check the unit \(kPa\)")),
    # --- rows and the file as a whole ----------------------------------------------------
    "row with too many fields": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "0.002,0.544,7", "0.005,0.498"),
        line=4, says=(r"3 fields", r"2 columns", r"missing or extra separator")),
    "row with too few fields": Case(
        csv=table("molality_mol_kg,emf_V,note", "0.001,0.579,a", "0.002,0.544,b", "0.005,0.498"),
        line=5, says=(r"2 fields", r"3 columns", r"missing or extra separator")),
    "decimal commas that split a comma-separated row": Case(
        csv=table("molality_mol_kg,emf_V", "0.001,0.579", "0,002,0,544", "0.005,0.498"),
        line=4, says=(r"4 fields", r"2 columns", r"decimal comma needs ';'")),
    "unclosed quote": Case(
        csv=table("molality_mol_kg,emf_V,note", "0.001,0.579,a", '0.002,0.544,"b', "0.005,0.498,c",
                  "0.010,0.464,d"),
        line=4, says=(r"quote", r"not closed", r"remove the quote")),
    "not UTF-8": Case(
        csv=(table("molality_mol_kg,emf_V,note", "0.001,0.579,", "0.002,0.544,")
             + "0.005,0.498,25 \xb0C\n").encode("latin-1"),
        line=5, says=(r"not UTF-8", r"save it as UTF-8")),
    "empty file": Case(csv="", says=(r"empty", r"header line")),
    "only comments and blank lines": Case(
        csv="# nothing measured yet\n\n   \n", says=(r"empty", r"header line")),
    "header without data rows": Case(
        csv=table("molality_mol_kg,emf_V"), line=2, says=(r"no readings",)),
    "run path is a folder": Case(
        csv=None, extra_files={"run.csv/readme.txt": "not a table"},
        says=(r"cannot read the run table", r"check the path")),
    "missing run file": Case(csv=None, says=(r"cannot read the run table", r"check the path")),
    "fewer points than the model needs": Case(
        csv=table("molality_mol_kg,emf_V", *good_rows()[:2]),
        says=(r"only 2 usable reading", r"at least 3")),
    "enough rows but too few readings": Case(
        csv=table("molality_mol_kg,emf_V", *good_rows()[:2], "0.005,"),
        says=(r"only 2 usable reading", r"at least 3")),
    # several series without --series are all reduced (tests/test_many_series.py)
    "unknown --series": Case(
        csv=table("molality_mol_kg,emf_V,series", *good_rows("A")), args=("--series", "C"),
        column="series", says=(r"no series 'C'", r"the table has: A")),
    "no temperature anywhere": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\n', line=3,
        says=(r"no temperature", r"add temperature_C")),
    # --- metadata ------------------------------------------------------------------------
    "no metadata at all": Case(
        toml=None, says=(r"no metadata", r"run\.toml", r"--meta", r"--electrolyte")),
    "broken TOML": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25,0\n', names="toml",
        line=3, says=(r"not valid TOML", r"key = value")),
    "TOML text without quotes": Case(
        toml="electrolyte = HCl\nelectrons = 1\n", names="toml", line=1,
        says=(r"not valid TOML", r"double quotes")),
    "TOML not UTF-8": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\n# 25 \xb0C\n'.encode("latin-1"), names="toml",
        line=3, says=(r"not UTF-8",)),
    "--meta is a folder": Case(
        toml=None, args=("--meta", "{tmp}/meta"), names="{tmp}/meta",
        extra_files={"meta/run.toml": GOOD_TOML},
        says=(r"cannot read the metadata", r"check the path")),
    "missing --meta file": Case(
        toml=None, args=("--meta", "{tmp}/elsewhere/run.toml"), names="{tmp}/elsewhere/run.toml",
        says=(r"cannot read the metadata", r"check the path")),
    "unknown electrolyte": Case(
        toml='electrolyte = "HCx"\nelectrons = 1\ntemperature_C = 25.0\n', names="toml",
        line=1, column="electrolyte", says=(r"unknown electrolyte 'HCx'", r"known anion")),
    "electrolyte not in quotes as text": Case(
        toml="electrolyte = 36.46\nelectrons = 1\ntemperature_C = 25.0\n", names="toml",
        line=1, column="electrolyte", says=(r"formula in double quotes",)),
    "no electrolyte": Case(
        toml="electrons = 1\ntemperature_C = 25.0\n", names="toml",
        says=(r"electrolyte is not given", r"add electrolyte = ", r"--electrolyte")),
    "no electrons": Case(
        toml='electrolyte = "HCl"\ntemperature_C = 25.0\n', names="toml",
        says=(r"number of electrons is not given", r"add electrons = ")),
    "zero electrons": Case(
        toml='electrolyte = "HCl"\ntemperature_C = 25.0\nelectrons = 0\n', names="toml",
        line=3, column="electrons", says=(r"whole number from 1 to 8",)),
    "negative electrons": Case(
        toml='electrolyte = "HCl"\nelectrons = -2\ntemperature_C = 25.0\n', names="toml",
        line=2, column="electrons", says=(r"whole number from 1 to 8", r"-2")),
    "fractional electrons": Case(
        toml='electrolyte = "HCl"\nelectrons = 1.5\ntemperature_C = 25.0\n', names="toml",
        line=2, column="electrons", says=(r"whole number from 1 to 8",)),
    "metadata temperature above liquid water": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 150.0\n', names="toml",
        line=3, column="temperature_C", says=(r"outside liquid water", r"check the value")),
    "metadata temperature in K below liquid water": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\ntemperature_K = 25.0\n', names="toml",
        line=3, column="temperature_K", says=(r"outside liquid water", r"unit")),
    "metadata temperature as text": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\ntemperature_C = "25"\n', names="toml",
        line=3, column="temperature_C", says=(r"must be a number",)),
    "metadata with both temperatures": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\ntemperature_K = 298.15\n',
        names="toml", line=4, column="temperature_K", says=(r"not both",)),
    "unsupported standard pressure": Case(
        toml='electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n'
             "standard_pressure_kPa = 1.0\n", names="toml", line=4,
        column="standard_pressure_kPa", says=(r"must be 100", r"101\.325")),
    # --- command line --------------------------------------------------------------------
    "unknown --model": Case(
        args=("--model", "debye"), names="command line", column="--model",
        says=(r"unknown model 'debye'", r"choose one of", r"hueckel")),
    "malformed --fix": Case(
        args=("--fix", "a_angstrom"), names=None, column="--fix",
        says=(r"not NAME=VALUE", r"a_angstrom=4\.3")),
    "--fix with a value that is not a number": Case(
        args=("--fix", "a_angstrom=four"), names=None, column="--fix",
        says=(r"not NAME=VALUE",)),
    "--fix of an unknown parameter": Case(
        args=("--fix", "radius=4.3"), names="command line", column="--fix",
        says=(r"no parameter 'radius'", r"it has: a_angstrom")),
    "--electrons that is not a number": Case(
        args=("--electrons", "one"), names=None, column="--electrons",
        says=(r"invalid int value",)),
    "unknown electrolyte on the command line": Case(
        args=("--electrolyte", "Hcl"), names="command line", column="--electrolyte",
        says=(r"unknown electrolyte 'Hcl'", r"known")),
    "zero electrons on the command line": Case(
        args=("--electrons", "0"), names="command line", column="--electrons",
        says=(r"whole number from 1 to 8",)),
    "command-line temperature outside liquid water": Case(
        args=("--temperature-C", "250"), names="command line", column="--temperature-C",
        says=(r"outside liquid water",)),
    "unknown option": Case(
        args=("--molality-unit", "mmol"), names=None,
        says=(r"unrecognized arguments|unknown option", r"--help")),
}


def _write(path: Path, content: str | bytes) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(content, bytes):
        path.write_bytes(content)
    else:
        # newline="" keeps the text as given (no platform newline translation)
        with path.open("w", encoding="utf-8", newline="") as stream:
            stream.write(content)


def _snapshot(folder: Path) -> dict[str, bytes | None]:
    """Every path under ``folder`` with its bytes (None for a folder)."""
    return {str(p.relative_to(folder)): (p.read_bytes() if p.is_file() else None)
            for p in sorted(folder.rglob("*"))}


def _expected_file(case: Case, tmp: Path) -> str:
    if case.names is None:
        return ""
    if case.names == "csv":
        return str(tmp / "run.csv")
    if case.names == "toml":
        return str(tmp / "run.toml")
    return case.names.format(tmp=tmp)


def _check_message(message: str, case: Case, tmp: Path) -> None:
    assert message.startswith("activolt: error: "), message
    assert "Traceback" not in message
    assert _expected_file(case, tmp) in message, message
    if case.line is not None:
        assert re.search(rf"\bline {case.line}\b", message), message
    if case.column is not None and case.column.startswith("--"):
        assert case.column in message, message  # an option, named as the user typed it
    elif case.column is not None:
        assert f"column '{case.column}'" in message, message
    for pattern in case.says:
        assert re.search(pattern, message), (pattern, message)


@pytest.mark.parametrize("name", list(CASES))
def test_bad_input_is_one_line_exit_2_and_nothing_written(name, tmp_path, capsys):
    case = CASES[name]
    run = tmp_path / "run.csv"
    if case.csv is not None:
        _write(run, case.csv)
    if case.toml is not None:
        _write(tmp_path / "run.toml", case.toml)
    for relative, content in case.extra_files.items():
        _write(tmp_path / relative, content)
    args = [a.format(tmp=tmp_path) for a in case.args]
    before = _snapshot(tmp_path)
    capsys.readouterr()

    for outputs in ([], ["--out", str(tmp_path / "out"), "--json", str(tmp_path / "r.json")]):
        status = main(["reduce", str(run), *args, *outputs])
        captured = capsys.readouterr()
        lines = captured.err.splitlines()
        assert status == 2, captured.err
        assert len(lines) == 1, captured.err
        _check_message(lines[0], case, tmp_path)
        assert captured.out == ""
        assert not (tmp_path / "run_activolt").exists()
        assert not (tmp_path / "out").exists()
        assert not (tmp_path / "r.json").exists()
        assert _snapshot(tmp_path) == before  # inputs unchanged, nothing new anywhere


def test_good_input_passes_the_same_path(tmp_path, capsys):
    # Control: the base table and metadata of the cases above reduce (exit 0) and write outputs,
    # so each case fails for its own defect only.
    _write(tmp_path / "run.csv", GOOD_CSV)
    _write(tmp_path / "run.toml", GOOD_TOML)
    status = main(["reduce", str(tmp_path / "run.csv"), "--no-figures",
                   "--out", str(tmp_path / "out")])
    captured = capsys.readouterr()
    assert status == 0, captured.err
    assert (tmp_path / "out" / "run.record.json").is_file()
    assert (tmp_path / "run.csv").read_text(encoding="utf-8") == GOOD_CSV


@pytest.mark.parametrize(("name", "start"), [
    ("millivolts in a volt column", "{run}, line 3, column 'emf_V': "),  # found while reading
    ("fewer points than the model needs", "{run}: only 2 usable"),  # found by the reduction
])
def test_console_script_bad_input(tmp_path, name, start):
    # The installed entry point, as a user runs it: real exit status, real stderr (Python
    # warnings included, which pytest would otherwise capture).
    script = Path(sys.executable).parent / "activolt"
    assert script.is_file(), f"console script not installed next to {sys.executable}"
    run = tmp_path / "run.csv"
    _write(run, CASES[name].csv)
    _write(tmp_path / "run.toml", GOOD_TOML)
    before = _snapshot(tmp_path)
    done = subprocess.run([str(script), "reduce", str(run)], capture_output=True, text=True,
                          timeout=120, check=False, cwd=tmp_path)
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr
    lines = done.stderr.splitlines()
    assert len(lines) == 1, done.stderr
    assert lines[0].startswith("activolt: error: " + start.format(run=run)), lines[0]
    assert done.stdout == ""
    assert _snapshot(tmp_path) == before


#: Characters that matter to the reader: separators, quotes, comment mark, line breaks, signs,
#: digits, the words for a missing value, a byte-order mark, a NUL and a degree sign.
_SPECIAL = [*',;."#\n\r \t-+e0123456789nanif_', "\ufeff", "\x00", "°"]


@settings(max_examples=50, deadline=None)
@given(st.lists(st.tuples(st.integers(min_value=0), st.sampled_from(("insert", "delete",
                                                                     "replace")),
                          st.sampled_from(_SPECIAL)), min_size=1, max_size=4))
def test_damaged_table_is_read_or_rejected_in_one_line(edits):
    # Any damage to a good table either still reads or gives one InputError line, never
    # another exception (which the command line would show as a traceback).
    import tempfile

    text = list(table("molality_mol_kg,emf_mV,u_emf_mV,temperature_C,series,note",
                      *good_rows("0.02", "25.0", "A", "x")))
    for position, action, char in edits:
        i = position % (len(text) + 1)
        if action == "insert":
            text.insert(i, char)
        elif text:
            i = min(i, len(text) - 1)
            if action == "delete":
                del text[i]
            else:
                text[i] = char
    with tempfile.TemporaryDirectory() as folder:
        run = Path(folder) / "run.csv"
        _write(run, "".join(text))
        _write(Path(folder) / "run.toml", GOOD_TOML)
        try:
            read_run(run)
        except InputError as error:
            assert len(str(error).splitlines()) == 1
            assert str(error).startswith(str(run))
