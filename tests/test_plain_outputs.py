"""The fast paths of the outputs give what the general library calls give, for every input.

``activolt.report.numbers.frame_records`` must give the rows of
``DataFrame.to_dict("records")``, and ``activolt.io.record.table_csv`` the text of
``DataFrame.to_csv(float_format="%.10g")``; each is checked against those library calls
(hypothesis), errors included. Reference behaviour: the Python standard library and pandas
themselves (common practice: an optimisation is checked against the code it replaces).
``read_runs``,
which splits a table into its series once, must give each series as ``read_run`` reads it
alone.

Readings: HCl at 25 °C with E = 0.2224 V − 2k ln(γ± m) roughly (invented numbers, shaped like
the sample run; only the reading is tested here).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.data.runs import read_run, read_runs
from activolt.io.record import table_csv
from activolt.report.numbers import frame_records


def _same(a, b) -> bool:
    if type(a) is not type(b):
        return False
    if isinstance(a, float) and math.isnan(a):
        return math.isnan(b)
    return a == b


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.floats(allow_infinity=False), st.integers(-10**6, 10**6),
                          st.none() | st.text(max_size=6), st.booleans(),
                          st.none() | st.just("flag")),
                max_size=8))
def test_frame_records_are_to_dict_records(rows):
    frame = pd.DataFrame(rows, columns=["m", "line", "electrode", "used", "flag"])
    if rows:
        frame["line"] = frame["line"].astype("int64")
        frame["electrode"] = frame["electrode"].astype("str")
    expected = frame.to_dict("records")
    got = frame_records(frame)
    assert len(got) == len(expected)
    for mine, theirs in zip(got, expected, strict=True):
        assert list(mine) == list(theirs)
        assert all(_same(mine[k], theirs[k]) for k in theirs), (mine, theirs)


_text_cells = st.none() | st.just(float("nan")) | st.text(
    st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=6)


@settings(max_examples=150, deadline=None)
@given(st.integers(0, 6).flatmap(lambda n: st.tuples(
    st.lists(st.floats(width=64), min_size=n, max_size=n),
    st.lists(st.integers(-10**9, 10**9), min_size=n, max_size=n),
    st.lists(st.booleans(), min_size=n, max_size=n),
    st.lists(_text_cells, min_size=n, max_size=n))))
def test_table_csv_is_pandas_to_csv(columns):
    floats, ints, bools, texts = columns
    for name in ("note, quoted", "note"):  # rows written by the csv writer, or joined
        table = {"x": np.array(floats, dtype=float), "line": np.array(ints, dtype=np.int64),
                 "used": np.array(bools, dtype=bool), name: texts}
        expected = pd.DataFrame(table).to_csv(index=False, float_format="%.10g",
                                              lineterminator="\n")
        assert table_csv(table) == expected


@settings(max_examples=100, deadline=None)
@given(st.lists(st.floats(width=64) | st.floats(width=32), min_size=0, max_size=8),
       st.lists(_text_cells, min_size=0, max_size=3))
def test_table_csv_of_one_or_two_columns_is_pandas_to_csv(floats, texts):
    """A column of floats alone (its cells formatted in one printf format: NaN empty, an
    infinity left to pandas) and a column of text alone (a row of one empty field is quoted)."""
    with np.errstate(over="ignore"):  # a float beyond float32 becomes an infinity
        single = np.array(floats, dtype=np.float32)
    for table in ({"x": np.array(floats)}, {"x": single}, {"t": texts},
                  {"x": np.array(floats[:len(texts)]), "t": texts[:len(floats)]}):
        expected = pd.DataFrame(table).to_csv(index=False, float_format="%.10g",
                                              lineterminator="\n")
        assert table_csv(table) == expected


#: Series interleaved, an unnamed series, rows without temperature (the metadata's), a row
#: without a reading.
_MIXED = """series,molality_mol_kg,emf_mV,temperature_C,electrode
B,0.001,578.76,25,e1
A,0.002,543.84,,e2
B,0.003,523.53,25,
,0.005,498.06,,e3
A,0.01,,25,e1
B,0.02,429.81,,e2
A,0.05,385.44,25,e1
,0.1,352.00,25,e1
A,0.003,523.53,25,
,0.01,463.76,25,e1
B,0.05,385.44,,e2
"""


def test_read_runs_splits_as_read_run_reads_each_series(tmp_path):
    table = tmp_path / "mixed.csv"
    table.write_text(_MIXED, encoding="utf-8")
    (tmp_path / "mixed.toml").write_text(
        'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n'
        'cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"\npressure_kPa = 101.3\n',
        encoding="utf-8")
    runs = read_runs(table)
    assert [r.points["series"].iloc[0] for r in runs] == ["B", "A", ""]
    for run in runs:
        alone = read_run(table, series=run.points["series"].iloc[0])
        pd.testing.assert_frame_equal(run.points, alone.points, check_exact=True)
        assert run.warnings == alone.warnings and run.metadata == alone.metadata
        assert not run.points["temperature_K"].isna().any()
    assert runs[1].points["flag"].notna().sum() == 1  # the row without a reading, kept
