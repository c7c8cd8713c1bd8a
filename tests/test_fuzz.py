"""Fuzzing of the run reader and the command line: whatever the bytes, the answer is a Run, one
clear line (exit status 2), or a fit refused with its reason (exit status 1) — never a
traceback, never a hang, no file left after a non-zero exit, no raw control character on stderr.

About 2 300 cases per run in all, most of them in-process (``read_run`` and
``activolt.cli.main`` with captured streams), a few through the console script. Inputs are the
demo run's readings (invented lab) and random mutations of them; nothing here is a check value.
The properties (one line, exit statuses, nothing written) are the contract of
``shared/design.md``; the rest is common practice for command-line tools.
"""

from __future__ import annotations

import contextlib
import io
import re
import signal
import subprocess
import sys
import tempfile
from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_cli_errors import GOOD_CSV, GOOD_TOML

from activolt.cli import main
from activolt.data.runs import KNOWN_COLUMNS, KNOWN_METADATA_KEYS, read_run
from activolt.errors import InputError

#: Raw control and layout characters that must never reach a terminal (newline excepted).
RAW_CONTROL = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u2028\u2029\u202a-\u202e\u2066-\u2069]")
#: Seconds one case may take before it counts as a hang.
HANG_S = 20

def fuzz(examples: int) -> settings:
    """Settings of a fuzz test: ``examples`` cases, reproducible, no deadline (hangs are caught
    by :func:`no_hang`)."""
    return settings(max_examples=examples, deadline=None, database=None, derandomize=True,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much,
                                           HealthCheck.data_too_large])

#: Text that breaks readers: separators, quotes, line ends and breaks, NaN and infinity
#: spellings, extreme and odd numbers, non-ASCII digits.
NASTY = ["", ",", ";", "\t", '"', "'", "\n", "\r", "\r\n", "\x00", "\x1b[2J", "\u2028", "\x85",
         "\x0c", "\u202e", "#", "nan", "-nan", "+nan", "NaN", "inf", "-inf", "1e308", "-1e308",
         "1e-320", "0", "-0", "1e-7", "9.99e-8", "30", "30.0001", "4.999", "-4.999", "5", "1_0",
         "\u0663", "\uff11", "0,5", "1e", ".", "-", "  ", "x" * 300, "emf_V", "molality_mol_kg",
         "pressure_kPa", "pressure_hPa", "u_emf_mV", "temperature_C", "series", "Ω", "\ufeff"]
NUMBERS = ["0.001", "0.01", "0.1", "1", "25", "100", "-1e-10", "100.0000001", "373.15", "0",
           "-5", "1e308", "1e-320", "nan", "-nan", "inf", "101.325", "50", "1013", "760"]
CELLS = ["Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)", "Ag(s) | AgCl(s) | HCl(aq) | H2(g) | Pt",
         "Pt | H2 | HCl(aq) | AgCl(s) | Ag(s)", "Zn(s) | ZnCl2(aq) | AgCl(s) | Ag(s)",
         "Pt | H2(g) | HCl(aq) || AgCl(s) | Ag(s)", "Pt | Pt", "", "|", "((", "Na(Hg) | NaCl(aq) "
         "| AgCl(s) | Ag(s)"]


@contextlib.contextmanager
def no_hang(seconds: int = HANG_S) -> Iterator[None]:
    """Fail a case that runs longer than ``seconds`` (SIGALRM; main thread only)."""
    def stop(_signum: int, _frame: object) -> None:
        raise TimeoutError(f"a case ran longer than {seconds} s")

    previous = signal.signal(signal.SIGALRM, stop)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def _read(csv: bytes, toml: bytes | None) -> None:
    """read_run on the bytes: a Run or an InputError, nothing else."""
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "run.csv"
        path.write_bytes(csv)
        if toml is not None:
            (Path(folder) / "run.toml").write_bytes(toml)
        with no_hang():
            try:
                read_run(path)
            except InputError as error:
                message = str(error)
                assert message and "\n" not in error.problem, message


def _cli(csv: bytes, toml: bytes | None, args: list[str]) -> None:
    """activolt reduce in-process: status 0/1/2, one-line errors, nothing left on failure."""
    with tempfile.TemporaryDirectory() as folder:
        root = Path(folder)
        (root / "run.csv").write_bytes(csv)
        if toml is not None:
            (root / "run.toml").write_bytes(toml)
        before = sorted(p.name for p in root.iterdir())
        out, err = io.StringIO(), io.StringIO()
        with no_hang(), contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            status = main(["reduce", str(root / "run.csv"), "--no-figures", *args])
        stderr = err.getvalue()
        assert status in (0, 1, 2), (status, stderr)
        assert "Traceback" not in stderr, stderr
        assert not RAW_CONTROL.search(stderr), repr(stderr)
        if status != 0:
            assert sorted(p.name for p in root.iterdir()) == before, stderr
            assert stderr.startswith("activolt: "), stderr
            assert len(stderr.strip().splitlines()) == 1, stderr


@st.composite
def mutated(draw: st.DrawFn, text: str) -> str:
    """``text`` with a few random insertions, deletions and replacements of nasty pieces."""
    for _ in range(draw(st.integers(min_value=1, max_value=6))):
        where = draw(st.integers(min_value=0, max_value=len(text)))
        action = draw(st.sampled_from(("insert", "delete", "replace")))
        piece = draw(st.sampled_from(NASTY) | st.text(max_size=4))
        if action == "insert":
            text = text[:where] + piece + text[where:]
        elif action == "delete":
            text = text[:where] + text[where + draw(st.integers(1, 12)):]
        else:
            end = min(len(text), where + draw(st.integers(1, 8)))
            text = text[:where] + piece + text[end:]
    return text


@st.composite
def tables(draw: st.DrawFn) -> str:
    """A table of known and unknown columns with nasty or extreme cells."""
    columns = draw(st.lists(st.sampled_from([*KNOWN_COLUMNS, "pressure_inHg", "Molality_mol_kg",
                                             "EMF_mV", "", "x"]), min_size=1, max_size=5))
    separator = draw(st.sampled_from((",", ";", "\t")))
    rows = draw(st.integers(min_value=0, max_value=8))
    cell = st.sampled_from(NUMBERS) | st.sampled_from(NASTY) | st.floats(
        allow_nan=True, allow_infinity=True).map(repr)
    lines = [separator.join(columns)]
    for _ in range(rows):
        lines.append(separator.join(draw(cell) for _ in columns))
    return draw(st.sampled_from(("\n", "\r\n", "\r"))).join(lines) + "\n"


@st.composite
def metadata(draw: st.DrawFn) -> str:
    """TOML with known keys (and a few unknown) holding odd values."""
    keys = draw(st.lists(st.sampled_from([*KNOWN_METADATA_KEYS, "pressure_hPa", "electrolytes"]),
                         max_size=6, unique=True))
    value = (st.sampled_from(NUMBERS) | st.sampled_from(["true", "nan", "-inf", "1e400", '"HCl"',
                                                         '"CaCl2"', '"fit"', '"international"',
                                                         "[1, 2]", "{a = 1}"])
             | st.sampled_from(CELLS).map(lambda c: '"' + c + '"'))
    lines = [f"{key} = {draw(value)}" for key in keys]
    base = draw(st.sampled_from((GOOD_TOML, 'cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"\n',
                                 "")))
    return base + "\n".join(lines) + "\n"


OPTIONS = st.lists(st.sampled_from([
    ["--electrons", "1000"], ["--electrons", "0"], ["--electrons", "2"],
    ["--temperature-C", "-1e-10"], ["--temperature-C", "nan"], ["--temperature-C", "100"],
    ["--temperature-C", "1e308"], ["--fix", "a_angstrom=inf"], ["--fix", "a_angstrom=-5"],
    ["--fix", "a_angstrom=1e308"], ["--fix", "nope=1"], ["--model", "hueckel,nope"],
    ["--model", "limiting"], ["--model", ","], ["--model", "davies"],
    ["--cell", CELLS[0]], ["--cell", CELLS[2]], ["--cell", CELLS[1]], ["--cell", "|"],
    ["--standard-pressure-kPa", "nan"], ["--standard-pressure-kPa", "101.325"],
    ["--exclude", "line=3:bubbles"], ["--exclude", "m=nan:x"], ["--exclude", "line=x"],
    ["--series", "A"], ["--series", "\x1b[2J"], ["--slope-factor", "fit"],
    ["--slope-factor", "inf"], ["--volt-unit", "international"], ["--volt-unit", "x"],
    ["--electrolyte", "HCl"], ["--electrolyte", "Q"], ["--seed", "-1"],
    ["--monte-carlo", "5"],
]), max_size=3).map(lambda options: [a for option in options for a in option])


# --- the reader, in-process (fast) -------------------------------------------------------

@fuzz(700)
@given(st.binary(max_size=3000))
def test_random_bytes(raw):
    _read(raw, GOOD_TOML.encode())


@fuzz(700)
@given(mutated(GOOD_CSV))
def test_mutated_good_table(text):
    _read(text.encode("utf-8", "surrogatepass"), GOOD_TOML.encode())


@fuzz(400)
@given(tables())
def test_random_tables(text):
    _read(text.encode("utf-8", "surrogatepass"), GOOD_TOML.encode())


@fuzz(300)
@given(metadata() | mutated(GOOD_TOML))
def test_random_metadata(toml):
    _read(GOOD_CSV.encode(), toml.encode("utf-8", "surrogatepass"))


# --- the command line, in-process --------------------------------------------------------

@fuzz(150)
@given(mutated(GOOD_CSV) | tables(), metadata() | st.just(GOOD_TOML), OPTIONS)
def test_command_line(text, toml, options):
    _cli(text.encode("utf-8", "surrogatepass"), toml.encode("utf-8", "surrogatepass"), options)


@st.composite
def extreme_series(draw: st.DrawFn) -> tuple[str, str, list[str]]:
    """Series that pass the reader: molalities anywhere in 1e-7–30 mol/kg (also a hair apart),
    EMF along the Nernst slope with no, tiny or huge scatter, any liquid-water temperature."""
    import math

    n = draw(st.integers(min_value=3, max_value=8))
    if draw(st.booleans()):
        base = draw(st.floats(min_value=1e-7, max_value=29.0))
        molality = [base * (1 + i * draw(st.sampled_from((1e-12, 1e-9, 1e-6)))) for i in range(n)]
    elif draw(st.booleans()):
        molality = draw(st.lists(st.floats(min_value=1e-7, max_value=30.0), min_size=n,
                                 max_size=n))
    else:  # a dilute series, as measured
        low = draw(st.floats(min_value=1e-5, max_value=1e-2))
        molality = [low * 10 ** (2 * i / (n - 1)) for i in range(n)]
    celsius = draw(st.sampled_from((0.0, 25.0, 99.99, 100.0)) | st.floats(0.0, 100.0))
    e0 = draw(st.floats(min_value=-1.0, max_value=1.0))
    scatter = draw(st.sampled_from((0.0, 1e-9, 1e-5, 1e-3, 0.05)))
    noise = draw(st.lists(st.floats(-1.0, 1.0), min_size=n, max_size=n))
    k = 2 * 8.314462618 * (273.15 + celsius) / 96485.33212
    emf = [max(-4.9, min(4.9, e0 - k * math.log(m) + scatter * z))
           for m, z in zip(molality, noise, strict=True)]
    with_u = draw(st.booleans())
    header = "molality_mol_kg,emf_V" + (",u_emf_V" if with_u else "")
    rows = [f"{m!r},{e!r}" + (",1e-5" if with_u else "") for m, e in zip(molality, emf,
                                                                         strict=True)]
    toml = f'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = {celsius!r}\n' + draw(
        st.sampled_from(("", "u_temperature_K = 0.02\n", 'slope_factor = "fit"\n')))
    args = ["--model", draw(st.sampled_from(("limiting", "hueckel", "davies", "all")))]
    return "\n".join([header, *rows]) + "\n", toml, args


@fuzz(100)
@given(extreme_series())
def test_extreme_series_through_the_fit(case):
    csv, toml, args = case
    _cli(csv.encode(), toml.encode(), args)


# --- the console script (a few cases) ----------------------------------------------------

@pytest.mark.parametrize(("csv", "toml", "args"), [
    (b"\x00\xff\xfe" * 50, GOOD_TOML.encode(), []),
    (GOOD_CSV.replace("0.0010", "-nan").encode(), GOOD_TOML.encode(), ["--electrons", "1000"]),
    (GOOD_CSV.encode(), b'cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"\ntemperature_C = 100\n'
                        b"pressure_kPa = 101.325\n", []),
])
def test_console_script(tmp_path, csv, toml, args):
    (tmp_path / "run.csv").write_bytes(csv)
    (tmp_path / "run.toml").write_bytes(toml)
    done = subprocess.run([sys.executable, "-m", "activolt.cli", "reduce",
                           str(tmp_path / "run.csv"), "--no-figures", *args],
                          capture_output=True, timeout=120, check=False)
    stderr = done.stderr.decode("utf-8")
    assert done.returncode == 2, stderr
    assert "Traceback" not in stderr and len(stderr.splitlines()) == 1, stderr
    assert not RAW_CONTROL.search(stderr), repr(stderr)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.csv", "run.toml"]
