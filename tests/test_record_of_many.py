"""The records and points tables of a chunk of series, built together, are each series' own.

A batch builds the records (:func:`build_records`) and the points CSV (:func:`points_csvs`) of
a chunk of series at once, the tables of all of them read and converted column by column; the
record of each series must be, key for key, type for type and bit for bit, what
:func:`build_record` gives for it alone (its JSON text is hashed), and each CSV the text
:func:`points_csv` writes, whatever the chunk holds.

Reference behaviour: the single-series functions, checked against the row-by-row reading of
the tables in test_output_speed_paths.py (common practice: a batched path is checked against
the path of one). Readings: the bundled sample run (Kestrel Bay, HCl at 25 °C, invented
laboratory, with its cell, pressures and u(m)) under several models, with readings excluded,
a parameter held, a reading moved and text a spreadsheet must not take as it is; a table of
several series with odd names and missing cells; any floats and texts put in their columns.
"""

from __future__ import annotations

import dataclasses
import math
from datetime import UTC, datetime
from importlib.resources import files
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from exact import identical
from hypothesis import given, settings
from hypothesis import strategies as st
from synthetic import emf_from_gamma, write_moved_sample

from activolt.data.runs import Exclusion, exclude_points, read_run, read_runs
from activolt.errors import FitError
from activolt.io.json_layout import json_texts
from activolt.io.record import (
    build_record,
    build_records,
    points_csv,
    points_csvs,
    run_series,
)
from activolt.procedures.dilution import reduce_run
from activolt.procedures.many import series_reducer
from activolt.procedures.montecarlo import monte_carlo
from activolt.procedures.properties import derive_results_of_many

SAMPLE = Path(str(files("activolt") / "sample_data" / "kestrel_hcl_25C.csv"))
CREATED = datetime(2025, 1, 2, 3, 4, 5, tzinfo=UTC)


def _many_table(folder: Path) -> Path:
    """A table of four series (odd names, an electrode and notes partly missing) with its
    metadata."""
    rows = ["series,molality_mol_kg,emf_mV,u_emf_mV,electrode,note"]
    names = ["plain", "a,b", '=1+2 "q"', "é ü"]
    molality = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2])
    root = np.sqrt(molality)
    gamma = np.exp(-1.1744 * root / (1 + 1.5 * root) + 0.12 * molality)
    for s, name in enumerate(names):
        quoted = '"' + name.replace('"', '""') + '"'
        emf_V = emf_from_gamma(molality, gamma, 0.2224 + 1e-5 * s)
        for i, m in enumerate(molality.tolist()):
            emf = emf_V[i] * 1e3 + 0.01 * (-1) ** (i // 2)
            electrode = "" if (i + s) % 3 == 0 else f"E{s}"
            note = "" if i % 2 else ("@SUM(A1)" if s == 2 else "ok")
            rows.append(f"{quoted},{m!r},{emf:.4f},0.02,{electrode},{note}")
    table = folder / "many.csv"
    table.write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "many.toml").write_text('electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n',
                                      encoding="utf-8")
    return table


@pytest.fixture(scope="module")
def cases(tmp_path_factory):
    """(reduction, comparison, Monte Carlo result) of varied series, the order of a chunk."""
    folder = tmp_path_factory.mktemp("record_of_many")
    sample = read_run(SAMPLE)
    write_moved_sample(SAMPLE, folder, "KB-AgCl-08 é,=1+2")
    found = []
    for model in ("limiting", "hueckel", "davies", "sit", "pitzer"):
        try:
            found.append((reduce_run(sample, model), None, None))
        except FitError:
            pass
    excluded = exclude_points(sample, [Exclusion("bubbles <b>", line=7),
                                       Exclusion("drift", molality_mol_kg=0.5)])
    found.append((reduce_run(excluded), None, None))
    found.append((reduce_run(sample, "hueckel", fixed={"a_angstrom": (4.3, 0.2)}), None, None))
    found.append((reduce_run(read_run(folder / "moved.csv")), None, None))
    compared = series_reducer("all", {})(sample)
    found.append((compared.reduction, compared.comparison, None))
    held = reduce_run(sample, "hueckel", fixed={"a_angstrom": 4.3})
    found.append((held, None, monte_carlo(sample, trials=20, seed=3, reduction=held,
                                          progress=False)))
    outcomes = series_reducer("hueckel", {}).batch(read_runs(_many_table(folder)))
    found += [(o.reduction, o.comparison, None) for o in outcomes if o.reduction is not None]
    assert len(found) >= 12
    return found


def _check_chunk(chunk, folder=None) -> None:
    reductions = [reduction for reduction, _, _ in chunk]
    derived = derive_results_of_many(reductions)
    records = build_records(reductions, CREATED, [c for _, c, _ in chunk],
                            [m for _, _, m in chunk], folder, derived)
    assert len(records) == len(chunk)
    for record, (reduction, comparison, monte), d in zip(records, chunk, derived, strict=True):
        alone = build_record(reduction, CREATED, comparison, monte, folder, d)
        identical(record, alone)
        # the record is its own: nothing in it is shared with another record of the chunk
        assert record["points"] is not alone["points"]
    texts = json_texts(records)
    assert texts == json_texts([build_record(r, CREATED, c, m, folder, d)
                                for (r, c, m), d in zip(chunk, derived, strict=True)])
    assert points_csvs(reductions) == [points_csv(r) for r in reductions]


def test_a_chunk_gives_each_series_its_own_record_and_table(cases, tmp_path):
    _check_chunk(cases, tmp_path)
    _check_chunk(cases[::-1])
    _check_chunk(cases[:1])
    # a chunk whose texts need no quoting: its CSV rows are joined for the whole chunk
    _check_chunk([case for case in cases if case[0].run.path.name == "many.csv"
                  and run_series(case[0].run.points) in ("plain", "é ü")])
    assert build_records([]) == [] and points_csvs([]) == []


def test_the_cases_cover_what_the_chunk_must_keep_apart(cases):
    records = build_records([r for r, _, _ in cases], CREATED, [c for _, c, _ in cases],
                            [m for _, _, m in cases])
    assert {r["model"]["name"] for r in records} >= {"hueckel", "pitzer"}
    assert any(r["model_comparison"] for r in records) and any(r["monte_carlo"] for r in records)
    assert {r["series"] for r in records} >= {"a,b", '=1+2 "q"', "é ü", None}
    assert any(p["flag"] for r in records for p in r["points"])
    assert any(p["electrode"] is None or p["electrode"] != p["electrode"]
               for r in records for p in r["points"])
    assert any(any(p["fixed"] for p in r["model"]["parameters"].values()) for r in records)
    # both ways of writing the CSV of a chunk: rows joined, and each table on its own (a text
    # to quote)
    plain = [r for r, _, _ in cases if r.run.path.name == "many.csv"
             and run_series(r.run.points) in ("plain", "é ü")]
    assert len(plain) == 2 and all('"' not in text for text in points_csvs(plain))
    assert any('"' in text for text in points_csvs([r for r, _, _ in cases]))


_FLOATS = st.floats(allow_subnormal=True, width=64) | st.sampled_from(
    [0.0, -0.0, 5e-324, 1e-300, 1e300, -1.5, 2.0, 0.5e-10, 1.00000000005, 123456789.5,
     math.nan])
_TEXTS = st.none() | st.just(math.nan) | st.sampled_from(
    ["", "KB-AgCl-08", "=1+2", " @SUM(A1)", "-0.5", "a,b", 'say "x"', "two\nlines"]) | st.text(
    st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=4)
_FLAGS = st.none() | st.just(math.nan) | st.sampled_from(
    ["no reading", "excluded: drift", "studentized residual 3.2"]) | st.text(max_size=3)


def _changed(reduction, data, label):
    """``reduction`` with any floats in some of its columns (an infinity too, now and then),
    any texts in its text columns and any flags."""
    n = len(reduction.run.points)
    columns = dict(reduction.point_columns)
    finite = data.draw(st.booleans(), label=f"{label} finite")
    floats = _FLOATS.filter(lambda v: math.isfinite(v) or v != v) if finite else _FLOATS
    for name in ("gamma_pm", "u_gamma_pm", "residual_V", "leverage", "u_gamma_pm_readings"):
        if name in columns and data.draw(st.booleans(), label=f"{label} {name}"):
            columns[name] = np.array(data.draw(st.lists(floats, min_size=n, max_size=n)))
    diagnostic = np.empty(n, dtype=object)
    diagnostic[:] = data.draw(st.lists(_FLAGS, min_size=n, max_size=n), label=f"{label} diag")
    columns["diagnostic"] = diagnostic
    points = reduction.run.points.copy()
    for name in ("electrode", "note"):
        if data.draw(st.booleans(), label=f"{label} change {name}"):
            points[name] = pd.Series(data.draw(st.lists(_TEXTS, min_size=n, max_size=n)),
                                     index=points.index, dtype="str")
    points["flag"] = pd.Series(data.draw(st.lists(_FLAGS, min_size=n, max_size=n)),
                               dtype=object, index=points.index)
    return dataclasses.replace(reduction, run=dataclasses.replace(reduction.run, points=points),
                               point_columns=columns)


@pytest.mark.filterwarnings("ignore:overflow encountered:RuntimeWarning")  # huge γ± drawn
@settings(max_examples=40, deadline=None)
@given(st.data())
def test_any_floats_and_texts_of_a_chunk_are_each_series_own(cases, data):
    """Floats of every kind (tiny, huge, negative, integral, near a tie of the tenth digit,
    non-finite) and texts of every kind, in several series of a chunk: each record and table
    is the series' own."""
    picked = data.draw(st.lists(st.sampled_from(range(len(cases))), min_size=2, max_size=5))
    chunk = [(_changed(cases[i][0], data, str(k)), cases[i][1], None)
             for k, i in enumerate(picked)]
    reductions = [r for r, _, _ in chunk]
    derived = derive_results_of_many(reductions)
    records = build_records(reductions, CREATED, [c for _, c, _ in chunk], derived=derived)
    for record, (reduction, comparison, _), d in zip(records, chunk, derived, strict=True):
        identical(record, build_record(reduction, CREATED, comparison, derived=d))
    assert points_csvs(reductions) == [points_csv(r) for r in reductions]
