"""The run reader's two ways through a table give the same runs and the same errors.

A table of plain cells is parsed column by column and its series are checked all at once; a
table with quotes is parsed row by row, and a series that may fail a check is checked on its
own (as ``read_run(series=…)`` does). These tests hold the fast ways to the slow ones:

- the same table written plain and with every field quoted (the csv module takes the quotes
  off, so the cells are the same text) gives the same runs or the same InputError — file,
  line, column and words;
- every series of ``read_runs`` equals ``read_run`` of that series alone, and when
  ``read_runs`` refuses the table, the first series that ``read_run`` refuses (in order of
  appearance) is refused with the same error.

Tables are random (hypothesis): separators and decimal commas, comments, blank lines and line
ends, cells from plain numbers to the spellings of missing values, infinities and text; series
whose EMF falls, rises or stays flat with molality, repeated and nearly equal molalities, rows
without a temperature or a reading, gas cells with pressures. Nothing here is a check value:
each side is the other's reference.
"""

from __future__ import annotations

import copy
import dataclasses
import gc
import math
import tempfile
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from activolt.data.runs import Run, column_values, read_run, read_runs
from activolt.errors import InputError

SETTINGS = settings(max_examples=150, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
HCL = {"electrolyte": "HCl", "electrons": 1}
HARNED = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
#: Optional columns, at most one of each group.
OPTIONAL = [["u_emf_V", "u_emf_mV"], ["u_molality_mol_kg"], ["temperature_C", "temperature_K"],
            ["pressure_kPa", "pressure_hPa", "pressure_mmHg"], ["electrode"], ["note"],
            ["Pressure_bar"]]
#: Cells at and beyond the ends of each column's range.
EDGES = {"molality_mol_kg": ["0", "-0.001", "30", "30.0001", "31", "1e-7", "9.9e-8", "1e-8"],
         "emf_V": ["5", "-5", "4.999", "-4.9999", "5.0"], "emf_mV": ["5000", "-5000", "4999"],
         "u_emf_V": ["0", "-1e-5", "1e-9", "9e-10", "0.1", "0.11"],
         "u_emf_mV": ["0", "1e-6", "1e-7", "100", "101"],
         "u_molality_mol_kg": ["0", "-1e-9", "1", "0.05"],
         "temperature_C": ["-0.0000000001", "-0.1", "0", "100", "100.0000000001", "100.1"],
         "temperature_K": ["273.15", "273.14", "373.15", "373.16", "373.1500000001"],
         "pressure_kPa": ["49.9", "50", "150", "150.1"], "pressure_hPa": ["499", "1500", "1501"],
         "pressure_mmHg": ["375", "374", "1125", "1126"]}
#: Cells that are numbers, missing, out of range, or no numbers at all.
ODD = ["", " ", "nan", "NaN", "-nan", "NA", "n/a", "#N/A", "-", "inf", "-Infinity", "1e999",
       "0", "-0", "-1", "1e-8", "31", "29.99", "5", "-5", "4.99", "5000", " 0.01 ", "\t0.02",
       "0.01\u00a0", "\u0661", "1_000", "0x10", ".5", "5.", ".", "e5", "1E-3", "+0.01", "--1",
       "1 2", "abc", "1,5", "0,02", "1.5.3", "373.15", "273.14", "100.0000000001", "120", "49",
       "1013", "1125", "0.0000001", "9.9e-8", "1e-9", "0.11", "\x0b1", "1\x0c", "x;y", "30.0001",
       "0.1000000001", "-0.0000000001", "1e308", "1e-320", "0.00009", "0.2", "150.1", "373.16"]


def number(value: float) -> st.SearchStrategy[str]:
    """``value`` written as a plain decimal number in one of a few ways."""
    return st.sampled_from([repr(value), f"{value:.6g}", f"{value:.4e}", f"{value:.10f}"])


@st.composite
def cell(draw: st.DrawFn, column: str, m: float, e: float, t: float) -> str:
    """One cell of ``column`` for a row at molality m [mol/kg], EMF e [V], temperature t [°C]:
    mostly plausible, sometimes odd."""
    value = {"molality_mol_kg": m, "emf_V": e, "emf_mV": e * 1e3, "u_emf_V": 2e-5,
             "u_emf_mV": 0.02, "u_molality_mol_kg": m * 1e-3, "temperature_C": t,
             "temperature_K": t + 273.15, "pressure_kPa": 101.3, "pressure_hPa": 1013.0,
             "pressure_mmHg": 760.0}.get(column)
    if value is None:
        return draw(st.sampled_from(["", "KB-1", " a note ", "x y"]))
    text = draw(number(value))
    return draw(st.sampled_from(["", " ", "\t"])) + text if draw(st.booleans()) else text


@st.composite
def tables(draw: st.DrawFn) -> tuple[list[str], list[list[str]], str, str]:
    """(lines as written: comments and blanks as they are, other rows as lists of fields),
    the separator, the line end — and the rows ready to quote."""
    separator = draw(st.sampled_from([",", ";", "\t"]))
    emf = draw(st.sampled_from(["emf_V", "emf_mV"]))
    extra = [draw(st.sampled_from(group)) for group in OPTIONAL if draw(st.booleans())]
    names = ["molality_mol_kg", emf, *extra]
    if draw(st.booleans()):
        names.append("series")
    names = draw(st.permutations(names))
    header = [draw(st.sampled_from([n, n.upper(), f" {n}"])) for n in names]
    rows: list[str | list[str]] = [header]
    for s in range(draw(st.integers(1, 4))):
        direction = draw(st.sampled_from([1.0] * 8 + [-1.0, 0.0]))
        t = draw(st.sampled_from([25.0, 0.0, 99.99]) | st.floats(0.0, 99.9))
        base = draw(st.floats(1e-3, 0.05))
        for i in range(draw(st.integers(1, 7))):
            m = base * 1.7 ** draw(st.sampled_from([i, i, i, 0]))
            if draw(st.integers(0, 40)) == 0:
                m *= 1 + 1e-11  # nearly the molality of another row
            e = 0.2224 - direction * 0.0514 * math.log(m) + draw(st.floats(-1e-4, 1e-4))
            row = []
            for name in names:
                row.append(f"S{s}" if name == "series"
                           else draw(cell(name, m, e, t + 0.013 * i)))
            rows.append(row)
            if draw(st.integers(0, 10)) == 0:
                rows.append(draw(st.sampled_from(["# a comment", "", "   ", "  # indented"])))
    # mostly one odd cell, so that it is the table's only problem
    data = [row for row in rows[1:] if not isinstance(row, str)]
    for _ in range(draw(st.sampled_from([0, 1, 1, 1, 2]))):
        row = draw(st.sampled_from(data))
        at = draw(st.integers(0, len(row) - 1))
        edges = EDGES.get(names[at], ODD)
        row[at] = draw(st.sampled_from(edges) | st.sampled_from(ODD))
    ending = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    # a cell may not hold the separator (it would be another field)
    rows = [r if isinstance(r, str) else [f.replace(separator, "") for f in r] for r in rows]
    if separator == ",":
        rows = [r if isinstance(r, str) else [f.replace(",", ".") for f in r] for r in rows]
    elif draw(st.booleans()):  # decimal commas
        rows = [r if isinstance(r, str) else [f.replace(".", ",") for f in r] for r in rows]
    return rows, separator, ending


def written(rows: list[str | list[str]], separator: str, ending: str, quoted: bool) -> str:
    """The table's text, every field quoted or none (a row that reads as blank or as a
    comment stays as it is: quotes would make it a row)."""
    lines = []
    for row in rows:
        line = row if isinstance(row, str) else separator.join(row)
        if quoted and not isinstance(row, str) and line.strip() and not line.lstrip(
                ).startswith("#"):
            line = separator.join(f'"{field}"' for field in row)
        lines.append(line)
    return ending.join(lines) + ending


metadata = st.sampled_from([
    {**HCL, "temperature_C": 25.0}, {**HCL, "temperature_C": 25.0}, HCL,
    {"cell": HARNED, "temperature_C": 25.0},
    {"cell": HARNED}, {"cell": "Ag(s) | AgCl(s) | HCl(aq) | H2(g) | Pt", "temperature_C": 25.0},
    {"cell": HARNED, "temperature_C": 25.0, "pressure_kPa": 101.325},
    {**HCL, "temperature_C": 25.0, "slope_factor": "fit"}])


def outcome(call):
    """The runs, or the InputError as (text, file, line, column)."""
    try:
        return call()
    except InputError as error:
        return (str(error), error.file, error.line, error.column)


def same_runs(first: Run, second: Run, sha: bool = True, same_table: bool = True) -> None:
    """Every part of two runs is the same: points (values, types, index, columns, attrs),
    arrays, usable rows, metadata and warnings (of runs from different tables, a flag that
    is no flag may be None or NaN: the flag column's type is the table's). Each column of the
    first, read before its points are asked for, is the points' column."""
    names = [str(name) for name in second.points.columns]
    assert list(first.column_names) == list(second.points.columns)
    columns = {name: first.column(name) for name in names}
    pd.testing.assert_frame_equal(first.points, second.points, check_exact=True)
    for name, column in columns.items():
        held = column_values(first.points, name)
        assert type(column) is type(held) and column.dtype == held.dtype, name
        assert list(column) == list(held) or pd.Series(column).equals(pd.Series(held)), name
    assert [repr(d) for d in first.points.dtypes] == [repr(d) for d in second.points.dtypes]
    assert list(first.points.index) == list(second.points.index)
    assert first.points.attrs == second.points.attrs
    for a, b in zip(first.points["flag"].tolist(), second.points["flag"].tolist(), strict=True):
        assert (type(a) is type(b) or not same_table) and (
            a == b or (pd.isna(a) and pd.isna(b)))
    assert list(first.arrays) == list(second.arrays)
    for name, column in first.arrays.items():
        assert column.dtype == second.arrays[name].dtype
        assert column.tobytes() == second.arrays[name].tobytes()
    assert first.usable.tobytes() == second.usable.tobytes()
    assert (first.path, first.metadata_path, first.metadata, first.warnings) == (
        second.path, second.metadata_path, second.metadata, second.warnings)
    if sha:
        assert first.sha256 == second.sha256


@SETTINGS
@given(table=tables(), meta=metadata)
def test_plain_and_quoted_tables_read_alike(table, meta):
    rows, separator, ending = table
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "run.csv"
        found = []
        for quoted in (False, True):
            path.write_text(written(rows, separator, ending, quoted), encoding="utf-8")
            found.append(outcome(lambda: read_runs(path, overrides=meta)))
    plain, quoted = found
    if isinstance(plain, tuple) and isinstance(plain[0], str):
        assert plain == quoted
        return
    assert not (isinstance(quoted, tuple) and isinstance(quoted[0], str)), quoted
    assert len(plain) == len(quoted)
    for a, b in zip(plain, quoted, strict=True):
        same_runs(a, b, sha=False)


@SETTINGS
@given(table=tables(), meta=metadata, quoted=st.booleans())
def test_every_series_reads_as_alone(table, meta, quoted):
    rows, separator, ending = table
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "run.csv"
        path.write_text(written(rows, separator, ending, quoted), encoding="utf-8")
        together = outcome(lambda: read_runs(path, overrides=meta))
        if isinstance(together, tuple) and isinstance(together[0], str):
            table_level = outcome(lambda: read_run(path, overrides=meta, series="\0"))
            if "there is no series" not in table_level[0]:
                assert table_level == together  # refused before any series is taken
                return
            # the first series read alone that is refused, in order of appearance
            refusals = []
            for name in series_names(rows):
                alone = outcome(lambda name=name: read_run(path, overrides=meta, series=name))
                if isinstance(alone, tuple) and isinstance(alone[0], str):
                    refusals.append(alone)
            assert refusals and refusals[0] == together
            return
        for run in together:
            name = run.points["series"].iloc[0]
            same_runs(run, read_run(path, overrides=meta, series=name))


def test_a_run_of_many_series_makes_its_points_once_and_copies_them(tmp_path):
    """The points of a run of a table of many series are made when first asked for: the same
    table every time after, the same in a copy made before or after, and as read alone."""
    path = tmp_path / "run.csv"
    path.write_text("series,molality_mol_kg,emf_V\n" + "".join(
        f"{name},{m},{0.35 - 0.05 * i - 0.1 * k}\n" for k, name in enumerate("AB")
        for i, m in enumerate((0.01, 0.02, 0.05))), encoding="utf-8")
    meta = {**HCL, "temperature_C": 25.0}
    first, second = read_runs(path, overrides=meta)
    early = copy.copy(second)  # before the points of either are made
    assert first.points is first.points
    late = dataclasses.replace(first, warnings=("copied after",))
    assert late.points is first.points
    for run, name in ((first, "A"), (early, "B"), (second, "B")):
        alone = read_run(path, overrides=meta, series=name)
        pd.testing.assert_frame_equal(run.points, alone.points, check_exact=True)


def series_names(rows: list[str | list[str]]) -> list[str]:
    """The series of a table made by :func:`tables`, in order of first appearance."""
    header = [name.strip().lower() for name in rows[0]]
    if "series" not in header:
        return [""]
    at = header.index("series")
    return list(dict.fromkeys(row[at].strip() for row in rows[1:] if not isinstance(row, str)))


#: A series that one check refuses: (what its rows are made of, the metadata, the words).
BAD_SERIES = {
    "rising": ({"slope": +0.0514}, {}, "rises with molality"),
    "flat": ({"slope": 0.0}, {}, "hardly changes with molality"),
    "close": ({"close": True}, {}, "no weighing tells them apart"),
    "no temperature": ({"temperature": ""}, {"temperature_C": None}, "no temperature"),
    "no temperature, no reading": ({"temperature": "", "no reading": True},
                                   {"temperature_C": None}, "no temperature"),
    "opposite sign": ({"offset": -1.0}, {"cell": HARNED}, "opposite sign"),
    "no room for the gas": ({"temperature": "99.99"}, {"cell": HARNED, "pressure_kPa": 101.3},
                            "leaves no room for H2"),
}


@pytest.mark.parametrize("case", list(BAD_SERIES))
def test_a_bad_series_among_good_ones_is_refused_as_alone(tmp_path, case):
    """A series that a check refuses is refused with the same error among series that pass
    as when it is read alone (the whole-table checks leave it to the series' own); the others
    read alike together and alone."""
    bad, meta_change, words = BAD_SERIES[case]
    m = [0.001 * 2.0**i for i in range(6)]
    lines = ["series,molality_mol_kg,emf_V,temperature_C"]
    for name in ("A", "B", "D", "C"):
        slope = bad.get("slope", -0.0514) if name == "C" else -0.0514
        for i, mi in enumerate(m):
            if name == "C" and bad.get("close") and i == 3:
                mi = m[2] * (1 + 1e-11)
            e = 0.2224 + slope * math.log(mi) + 1e-5 * (-1) ** i
            e += bad.get("offset", 0.0) if name == "C" else 0.0
            t = bad.get("temperature", "25.0") if name == "C" and i == 4 else "25.0"
            reading = "" if name == "C" and i == 4 and bad.get("no reading") else repr(e)
            lines.append(f"{name},{mi!r},{reading},{t}")
    path = tmp_path / "four.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    meta = {key: value for key, value in {**HCL, "temperature_C": 25.0, **meta_change}.items()
            if value is not None}
    if "cell" in meta:
        del meta["electrolyte"], meta["electrons"]
    together = outcome(lambda: read_runs(path, overrides=meta))
    alone = outcome(lambda: read_run(path, overrides=meta, series="C"))
    assert isinstance(alone, tuple) and words in alone[0]
    assert together == alone
    # the good series: alone from this table as among themselves (C, last, left out)
    alone_good = [read_run(path, overrides=meta, series=name) for name in "ABD"]
    path.write_text("\n".join(line for line in lines if not line.startswith("C,")) + "\n",
                    encoding="utf-8")
    for first, second in zip(alone_good, read_runs(path, overrides=meta), strict=True):
        same_runs(first, second, sha=False, same_table=False)


def _one_cell_tables() -> list[tuple[str, str]]:
    """(column, cell) for every edge of every column's range and every odd cell."""
    return [(column, text) for column, edges in EDGES.items() for text in edges + ODD[:12]]


@pytest.mark.parametrize(("column", "text"), _one_cell_tables())
def test_one_odd_cell_reads_alike_plain_and_quoted(tmp_path, column, text):
    """A good table of three series with one cell set to an edge of its column's range (or an
    odd cell) gives the same runs or the same error plain and quoted."""
    groups = {"emf_mV": ("emf_mV", "u_emf_mV", "temperature_K", "pressure_hPa"),
              "u_emf_mV": ("emf_mV", "u_emf_mV", "temperature_K", "pressure_hPa"),
              "temperature_K": ("emf_V", "u_emf_V", "temperature_K", "pressure_mmHg"),
              "pressure_hPa": ("emf_V", "u_emf_V", "temperature_C", "pressure_hPa"),
              "pressure_mmHg": ("emf_V", "u_emf_V", "temperature_C", "pressure_mmHg")}
    chosen = groups.get(column, ("emf_V", "u_emf_V", "temperature_C", "pressure_kPa"))
    names = ["series", "molality_mol_kg", *chosen, "u_molality_mol_kg", "electrode", "note"]
    rows: list[str | list[str]] = [names]
    for s in range(3):
        for i in range(5):
            m = 0.002 * 1.8**i
            e = 0.2224 - 0.0514 * math.log(m)
            values = {"series": f"S{s}", "molality_mol_kg": repr(m), "emf_V": repr(e),
                      "emf_mV": repr(e * 1e3), "u_emf_V": "2e-05", "u_emf_mV": "0.02",
                      "temperature_C": f"{25 + 0.01 * i:.2f}",
                      "temperature_K": f"{298.15 + 0.01 * i:.2f}", "pressure_kPa": "101.3",
                      "pressure_hPa": "1013", "pressure_mmHg": "760",
                      "u_molality_mol_kg": repr(m * 1e-4), "electrode": "KB-1", "note": ""}
            rows.append([values[name] for name in names])
    rows[8][names.index(column)] = text.replace(",", ".")
    found = []
    for quoted in (False, True):
        path = tmp_path / f"{quoted}" / "run.csv"
        path.parent.mkdir()
        path.write_text(written(rows, ",", "\n", quoted), encoding="utf-8")
        found.append(outcome(lambda path=path: read_runs(path, overrides={
            **HCL, "temperature_C": 25.0})))
    plain, quoted = found
    if isinstance(plain, tuple) and isinstance(plain[0], str):
        assert plain[0].replace("/False/", "/True/") == quoted[0]
        assert plain[2:] == quoted[2:]
        return
    assert not (isinstance(quoted, tuple) and isinstance(quoted[0], str)), quoted
    for a, b in zip(plain, quoted, strict=True):
        pd.testing.assert_frame_equal(a.points, b.points, check_exact=True)
        assert a.warnings == b.warnings


@pytest.mark.parametrize("enabled", [True, False])
def test_reading_leaves_the_garbage_collector_as_it_was(tmp_path, enabled):
    """Series are made with the cyclic collector paused; it is as before afterwards, after a
    refused series too."""
    path = tmp_path / "two.csv"
    path.write_text("series,molality_mol_kg,emf_V\nA,0.01,0.46\nA,0.02,0.43\nB,0.01,0.46\n"
                    "B,0.010000000001,0.45\n", encoding="utf-8")
    meta = {**HCL, "temperature_C": 25.0}
    was = gc.isenabled()
    try:
        (gc.enable if enabled else gc.disable)()
        refused = outcome(lambda: read_runs(path, overrides=meta))
        assert isinstance(refused, tuple) and "no weighing tells them apart" in refused[0]
        assert gc.isenabled() is enabled
        path.write_text("series,molality_mol_kg,emf_V\nA,0.01,0.46\nA,0.02,0.43\n",
                        encoding="utf-8")
        assert len(read_runs(path, overrides=meta)) == 1
        assert gc.isenabled() is enabled
    finally:
        (gc.enable if was else gc.disable)()
