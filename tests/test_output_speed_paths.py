"""The per-series outputs written fast give what the plain way of writing them gives.

``json_text`` lays a record out itself around the standard library's one-line C encoder: the
text must parse to what ``json.dumps`` writes, refuse what it refuses (a non-finite number, a
value JSON cannot hold) and keep its layout (flat objects and arrays, and every object in an
array, on one line; the rest indented). The record's tables are built column by column: they
must hold, value for value and type for type, what reading the tables row by row gives (the
reference below is that row-by-row reading, as the record was first written). The HTML page
escapes text through a shortcut for plain text: it must write what
:func:`activolt.report.certificate.text` writes, for every text.

Reference behaviour: the Python standard library (``json``) and the row-by-row code the fast
paths replace (common practice: an optimisation is checked against the code it replaces).
Readings: the bundled sample run (Kestrel Bay, HCl at 25 °C, invented laboratory), one reading
moved by 0.8 mV to stand out, and one series of the benchmarks' synthetic table.
"""

from __future__ import annotations

import json
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
from synthetic import write_moved_sample

from activolt.data.runs import Exclusion, exclude_points, read_run
from activolt.io.json_layout import json_texts
from activolt.io.record import build_record, json_text, record_json
from activolt.procedures.dilution import OUT_OF_RANGE, reduce_run
from activolt.procedures.many import series_reducer
from activolt.report.certificate import text
from activolt.report.html import report_html
from activolt.report.numbers import (
    frame_columns,
    frame_records,
    json_number,
    json_numbers,
)

SAMPLE = Path(str(files("activolt") / "sample_data" / "kestrel_hcl_25C.csv"))

# --- json_text ------------------------------------------------------------------------------

_SCALARS = (st.none() | st.booleans() | st.integers(-10**20, 10**20)
            | st.floats(allow_nan=False, allow_infinity=False) | st.text(max_size=8))
_KEYS = st.text(max_size=5) | st.integers(-99, 99) | st.booleans() | st.none() | st.floats(
    allow_nan=False, allow_infinity=False)
_DOCUMENTS = st.recursive(
    _SCALARS,
    lambda inner: (st.lists(inner, max_size=4) | st.tuples(inner, inner)
                   | st.dictionaries(_KEYS, inner, max_size=4)),
    max_leaves=30)


@settings(max_examples=300, deadline=None)
@given(_DOCUMENTS)
def test_json_text_parses_to_what_json_dumps_writes(document):
    written = json_text(document)
    assert written.endswith("\n") and not written.endswith("\n\n")
    assert json.loads(written) == json.loads(json.dumps(document, ensure_ascii=False))
    # every line of the layout is indented by two spaces a level, and a line holding a whole
    # member parses on its own
    for line in written.splitlines():
        assert (len(line) - len(line.lstrip(" "))) % 2 == 0


@pytest.mark.parametrize("bad, error", [
    (float("nan"), ValueError), ({"a": [1.0, float("inf")]}, ValueError),
    ({"a": {"b": [{"c": -float("inf")}]}}, ValueError), ({"a": {1, 2}}, TypeError),
    ({"a": {(1, 2): 3}}, TypeError), ({"rows": [{"x": object()}]}, TypeError),
])
def test_json_text_refuses_what_json_dumps_refuses(bad, error):
    with pytest.raises(error):
        json.dumps(bad, allow_nan=False)
    with pytest.raises(error):
        json_text(bad)


def test_json_text_layout():
    document = {"flat": {"a": 1, "b": "γ±"}, "empty": [], "numbers": [1, 2.5, None],
                "rows": [{"m": 0.1, "budget": {"readings": 0.2}}, {"m": 0.3, "budget": {}}],
                "matrix": [[1.0, 0.5], [0.5, 1.0]], "nested": {"inner": {"deep": [1]}}}
    assert json_text(document).splitlines() == [
        "{",
        '  "flat": {"a": 1, "b": "γ±"},',
        '  "empty": [],',
        '  "numbers": [1, 2.5, null],',
        '  "rows": [',
        '    {"m": 0.1, "budget": {"readings": 0.2}},',
        '    {"m": 0.3, "budget": {}}',
        "  ],",
        '  "matrix": [',
        "    [1.0, 0.5],",
        "    [0.5, 1.0]",
        "  ],",
        '  "nested": {',
        '    "inner": {',
        '      "deep": [1]',
        "    }",
        "  }",
        "}",
    ]


# --- json_texts: several documents, their tables written column by column --------------------

#: Floats of every kind the two spellings could differ on: both sides of 10⁻⁴ and 10⁹ (where
#: Arrow's shortest formatting places the exponent unlike ``repr``), integral values (``1.0``),
#: signed zeros, the extremes, and random bit patterns.
_FLOATS = (st.floats(allow_nan=False, allow_infinity=False)
           | st.floats(min_value=1e-6, max_value=1e-2) | st.floats(min_value=1e7, max_value=1e11)
           | st.integers(-10**6, 10**6).map(float) | st.sampled_from(
               [0.0, -0.0, 1e-4, -1e-4, 9.999999999999999e-05, 1e9, 999999999.9999999,
                5e-324, 1.7976931348623157e308, 0.1, 2 / 3]))
_CELLS = (_FLOATS | st.none() | st.booleans() | st.integers(-10**20, 10**20)
          | st.text(max_size=6) | st.dictionaries(st.text(max_size=3), _FLOATS, max_size=2))


@st.composite
def _tables(draw):
    """A list of rows sharing their keys; each column of one kind (floats with gaps, or any
    cell), as a record's tables are; long enough, often, to be written by Arrow."""
    keys = draw(st.lists(st.text(max_size=4) | st.sampled_from(["%s", "a%%", 'q"']),
                         max_size=5, unique=True))
    size = draw(st.sampled_from([0, 1, 3, 60, 130]))
    columns = [draw(st.lists(draw(st.sampled_from([_FLOATS | st.none(), _FLOATS, _CELLS])),
                             min_size=size, max_size=size)) for _ in keys]
    return [dict(zip(keys, row, strict=True)) for row in zip(*columns, strict=True)] if keys \
        else [{} for _ in range(size)]


_TABLE_DOCUMENTS = st.lists(st.fixed_dictionaries(
    {"n": _CELLS, "rows": _tables(), "more": st.fixed_dictionaries({"rows": _tables()})}),
    min_size=1, max_size=4)


@settings(max_examples=120, deadline=None)
@given(_TABLE_DOCUMENTS)
def test_json_texts_writes_each_document_as_json_text(documents):
    documents = documents * 16  # enough to be written together
    assert json_texts(documents) == [json_text(document) for document in documents]


def test_json_texts_floats_as_repr_writes_them():
    # 20 000 random doubles in one column, across the magnitudes a record holds and beyond
    # (reference: the standard library's encoder, which writes ``float.__repr__``)
    rng = np.random.default_rng(9)
    values = np.concatenate([rng.normal(size=10_000) * 10.0 ** rng.uniform(-12, 14, 10_000),
                             rng.integers(0, 2**63, 10_000, dtype=np.uint64).view(np.float64)])
    values = values[np.isfinite(values)].tolist()
    document = {"rows": [{"x": x, "y": None if k % 7 == 0 else x} for k, x in enumerate(values)]}
    written, *_ = json_texts([document] * 16)  # enough to be written together
    assert written == json_text(document)
    assert [row["x"] for row in json.loads(written)["rows"]] == values


@pytest.mark.parametrize("bad, error", [
    ([{"x": 0.5}] * 99 + [{"x": float("nan")}], ValueError),
    ([{"x": 0.5}] * 99 + [{"x": -float("inf")}], ValueError),
    ([{"x": 0.5}] * 3 + [{"x": float("inf")}], ValueError),
    ([{"x": {1, 2}}] * 60, TypeError),
    ([{(1, 2): 1.0}] * 60, TypeError),
])
def test_json_texts_refuses_what_json_dumps_refuses(bad, error):
    with pytest.raises(error):
        json.dumps({"rows": bad}, allow_nan=False)
    with pytest.raises(error):
        json_texts([{"rows": bad}] * 16)


# --- the record's tables, built column by column -------------------------------------------

def _reference_points(reduction) -> list[dict]:
    """The record's ``points`` read row by row (the code the column-wise build replaced)."""
    k = reduction.statistics.coverage_factor
    points = []
    for row in frame_records(reduction.points):
        points.append({
            "line": int(row["line"]),
            "molality_mol_kg": float(row["molality_mol_kg"]),
            "u_molality_mol_kg": json_number(row["u_molality_mol_kg"]),
            "emf_V": json_number(row["emf_V"]),
            "u_emf_V": json_number(row["u_emf_V"]),
            "temperature_K": float(row["temperature_K"]),
            "pressure_correction_V": json_number(row["pressure_correction_V"]),
            "gas_partial_pressure_Pa": json_number(row["gas_pressure_Pa"]),
            "electrode": row["electrode"] or None,
            "fitted_emf_V": json_number(row["fitted_emf_V"]),
            "residual_V": json_number(row["residual_V"]),
            "gamma_pm": json_number(row["gamma_pm"]),
            "u_gamma_pm": json_number(row["u_gamma_pm"]),
            "gamma_pm_model": json_number(row["gamma_pm_model"]),
            "u_gamma_pm_model": json_number(row["u_gamma_pm_model"]),
            "flag": (row["flag"] if isinstance(row["flag"], str)
                     else row["diagnostic"] if isinstance(row["diagnostic"], str) else None),
            "used_in_fit": not isinstance(row["flag"], str),
            "U95_gamma_pm": json_number(row["u_gamma_pm"] * k),
            "u_gamma_pm_budget": {
                column.removeprefix("u_gamma_pm_"): json_number(row[column])
                for column in row if column.startswith("u_gamma_pm_")
                and column != "u_gamma_pm_model"},
            "leverage": json_number(row["leverage"]),
            "studentized_residual": json_number(row["studentized_residual"]),
            "cooks_distance": json_number(row["cooks_distance"]),
            "note": row["note"] or None,
        })
    return points


def _reference_published(published) -> list[dict]:
    return [{"molality_mol_kg": float(r["molality_mol_kg"]),
             "gamma_pm_published": json_number(r["gamma_pm_published"]),
             "interpolated": bool(r["interpolated"]),
             "difference": json_number(r["difference"]),
             "n_sources": int(r["n_sources"]),
             "published_values": [{"source": source, "gamma_pm": json_number(value),
                                   "interpolated": not printed}
                                  for source, value, printed in r["published_values"]],
             "spread_published": json_number(r["spread_published"]),
             "u_published": json_number(r["u_published"]),
             "u_difference": json_number(r["u_difference"]),
             "difference_over_u": json_number(r["difference_over_u"])}
            for r in frame_records(published)]


@pytest.fixture(scope="module")
def reductions(tmp_path_factory):
    """The sample as read, with two readings excluded, with one reading standing out (and
    text a spreadsheet or a page must not take as it is), and a compared series."""
    folder = tmp_path_factory.mktemp("fast_outputs")
    sample = read_run(SAMPLE)
    write_moved_sample(SAMPLE, folder, "KB-AgCl-08 é,=1+2")
    excluded = exclude_points(sample, [Exclusion("bubbles <b>", line=7),
                                       Exclusion("drift", molality_mol_kg=0.5)])
    compared = series_reducer("all", {})(sample)
    return {"sample": (reduce_run(sample), None),
            "excluded": (reduce_run(excluded), None),
            "moved": (reduce_run(read_run(folder / "moved.csv")), None),
            "compared": (compared.reduction, compared.comparison)}


@pytest.mark.parametrize("case", ["sample", "excluded", "moved", "compared"])
def test_record_tables_are_the_row_by_row_tables(reductions, case):
    reduction, comparison = reductions[case]
    record = build_record(reduction, comparison=comparison)
    identical(record["points"], _reference_points(reduction), "points")
    from activolt.procedures.properties import derive_results

    derived = derive_results(reduction)
    identical(record["derived_properties"]["points"],
               [{k: json_number(v) if isinstance(v, float) else v for k, v in row.items()}
                for row in frame_records(derived.properties)], "derived")
    if derived.published is not None:
        identical(record["published_comparison"], _reference_published(derived.published),
                   "published")
        assert record["published_source"] == derived.published["source"].iloc[0]
    # and the text holds the record exactly
    identical(json.loads(record_json(reduction, created=None, comparison=comparison))["points"],
               record["points"], "points as written")


def test_the_cases_cover_flags_and_diagnostics(reductions):
    flags = {p["flag"] for case in reductions.values()
             for p in build_record(case[0])["points"] if p["flag"]}
    assert "no reading" in flags and "excluded: bubbles <b>" in flags
    assert any(flag.startswith("studentized residual") for flag in flags)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.floats(), st.integers(-10**6, 10**6),
                          st.none() | st.text(max_size=6), st.booleans()), max_size=8))
def test_frame_columns_are_frame_records_by_column(rows):
    frame = pd.DataFrame(rows, columns=["m", "line", "electrode", "used"])
    if rows:
        frame["line"] = frame["line"].astype("int64")
        frame["electrode"] = frame["electrode"].astype("str")
    columns = frame_columns(frame)
    records = frame_records(frame)
    assert list(columns) == list(frame.columns)
    for name, values in columns.items():
        assert len(values) == len(records)
        for value, row in zip(values, records, strict=True):
            assert type(value) is type(row[name])
            assert value == row[name] or (value != value and row[name] != row[name])


@given(st.lists(st.none() | st.floats() | st.integers(-10**6, 10**6)
                | st.sampled_from([np.float64(1.5), np.float64("nan"), np.int64(3)])))
def test_json_numbers_are_json_number_of_each(values):
    got = json_numbers(values)
    expected = [json_number(v) for v in values]
    assert [type(v) for v in got] == [type(v) for v in expected]
    assert got == expected
    assert all(v is None or math.isfinite(v) for v in got)


# --- the page's text ------------------------------------------------------------------------

_TEXTS = st.text() | st.sampled_from(["0.9654 ± 0.0003", "(-4.760310 ± 0.000092) × 10⁻⁵", "—",
                                      "<b>", "a&b", "\u202eevil", "x\x1by", "'q'", '"q"', "Å"])


@settings(max_examples=300, deadline=None)
@given(_TEXTS.filter(bool), _TEXTS,
       st.floats(-1e300, 1e300).filter(lambda x: x == 0.0 or abs(x) > 1e-300))
def test_page_text_is_certificate_text(value, name, number):
    page = report_html({"run_info": {"operator": value},
                        "model": {"parameters": {name: {"value": number, "uncertainty": 0.1}}}})
    assert f"<dt>operator</dt><dd>{text(value)}</dd>" in page
    assert f'<tr><td>{text(name)}</td><td class="num" data-value="{number!r}" data-quantity="' \
           f'{text("parameter:" + name)}">' in page


@given(st.integers() | st.floats() | st.booleans())
def test_page_text_of_numbers_is_certificate_text(value):
    page = report_html({"run_info": {"count": value}})
    assert f"<dt>count</dt><dd>{text(value)}</dd>" in page


def _reference_points_csv(reduction) -> str:
    """The points table as pandas writes it, each column read from the table on its own (the
    code the one-conversion read replaced)."""
    from activolt.safe_text import neutralise_formula

    table = reduction.points
    columns = {
        "line": table["line"].to_numpy(),
        "molality_mol_kg": table["molality_mol_kg"].to_numpy(),
        "u_molality_mol_kg": table["u_molality_mol_kg"].to_numpy(),
        "temperature_C": table["temperature_K"].to_numpy() - 273.15,
        "emf_mV": table["emf_V"].to_numpy() * 1e3,
        "u_emf_mV": table["u_emf_V"].to_numpy() * 1e3,
        "fitted_emf_mV": table["fitted_emf_V"].to_numpy() * 1e3,
        "residual_mV": table["residual_V"].to_numpy() * 1e3,
        **{name: table[name].to_numpy() for name in (
            "gamma_pm", "u_gamma_pm", "gamma_pm_model", "u_gamma_pm_model")},
        "electrode": [neutralise_formula(v) for v in table["electrode"].tolist()],
        "series": [neutralise_formula(v) for v in table["series"].tolist()],
        **{name: table[name].to_numpy() for name in (
            "leverage", "studentized_residual", "cooks_distance")},
        "flag": table["flag"].where(table["flag"].notna(), "").tolist(),
        "diagnostic": table["diagnostic"].where(table["diagnostic"].notna(), "").tolist(),
        "note": [neutralise_formula(v) for v in table["note"].tolist()],
    }
    return pd.DataFrame(columns).to_csv(index=False, float_format="%.10g", lineterminator="\n")


@pytest.mark.parametrize("case", ["sample", "excluded", "moved", "compared"])
def test_points_csv_is_the_column_by_column_table(reductions, case):
    from activolt.io.record import points_csv

    reduction = reductions[case][0]
    written = points_csv(reduction)
    assert written == _reference_points_csv(reduction)
    assert "'=1+2" in written or case != "moved"


@pytest.mark.parametrize("case", ["sample", "excluded", "moved", "compared"])
def test_the_written_record_holds_what_its_text_reads_back_as(reductions, case):
    from activolt.io.record import written_record

    reduction, comparison = reductions[case]
    created = datetime(2025, 1, 2, 3, 4, 5, tzinfo=UTC)
    written = written_record(reduction, created, comparison=comparison)
    parsed = json.loads(written.text)
    identical(written.document, parsed)
    assert written.text == record_json(reduction, created, comparison=comparison)
    assert report_html(written.document, {}, "r.record.json", "0" * 64) == report_html(
        parsed, {}, "r.record.json", "0" * 64)


# --- the points read column by column, with any flags ---------------------------------------

_FLAG_VALUES = st.none() | st.just(math.nan) | st.sampled_from(
    ["no reading", "excluded: bubbles", "excluded: drift", "excluded", OUT_OF_RANGE + " (I > 1)",
     "other"]) | st.text(max_size=4)
_DIAGNOSTIC_VALUES = st.none() | st.just(math.nan) | st.sampled_from(
    ["studentized residual 3.2"]) | st.text(max_size=4)


def _reference_flags(reduction) -> list[str]:
    """The summary's flags read from the points table (the code the column reads replaced)."""
    stats = reduction.statistics
    flags = ["lack of fit"] if stats.stated_uncertainty and stats.birge_ratio > 1.0 else []
    points = reduction.points
    flag = [str(f) for f in points["flag"].to_numpy(object) if isinstance(f, str)]
    stands_out = (int(points["diagnostic"].notna().to_numpy().sum())
                  if "diagnostic" in points else 0)
    for what, count in (
        ("beyond the model's range", sum(f.startswith(OUT_OF_RANGE) for f in flag)),
        ("excluded", sum(f.startswith("excluded") for f in flag)),
        ("no reading", sum(f == "no reading" for f in flag)),
        ("stands out", stands_out),
    ):
        if count:
            flags.append(f"{what}: {count} reading(s)")
    return flags


def _reference_exclusion_lines(points) -> list[str]:
    """The report's lines on excluded readings, grouped by pandas (the code replaced)."""
    flags = points["flag"].astype(object)
    excluded = points[flags.map(lambda f: isinstance(f, str) and f.startswith("excluded"))]
    lines = []
    for flag, group in excluded.groupby("flag", sort=False):
        molalities = ", ".join(f"{m:.6g}" for m in dict.fromkeys(group["molality_mol_kg"]))
        count = len(group)
        where = (f" (line{'s' if count > 1 else ''} "
                 + ", ".join(str(int(n)) for n in group["line"]) + ")")
        reason = str(flag).removeprefix("excluded").lstrip(": ")
        lines.append(f"  left out of the fit: {count} reading{'s' if count > 1 else ''} at "
                     f"m = {molalities} mol/kg{where}" + (f" — {reason}" if reason else ""))
    return lines


@settings(max_examples=60, deadline=None)
@given(st.data())
def test_outputs_read_from_columns_are_those_of_the_points_table(reductions, data):
    """Summary flags, the report's readings and exclusions, the record's points and the points
    CSV, read column by column, give what the points table gives, for any flags and
    diagnostics (missing as None or NaN, text of any kind)."""
    import dataclasses

    from activolt.io.record import points_csv
    from activolt.procedures.many import SeriesReduction, summary_row
    from activolt.report.text import format_report

    reduction = reductions[data.draw(st.sampled_from(["sample", "moved"]))][0]
    n = len(reduction.run.points)
    flags = data.draw(st.lists(_FLAG_VALUES, min_size=n, max_size=n))
    diagnostic = np.empty(n, dtype=object)
    diagnostic[:] = data.draw(st.lists(_DIAGNOSTIC_VALUES, min_size=n, max_size=n))
    points = reduction.run.points.copy()
    points["flag"] = pd.Series(flags, dtype=object, index=points.index)
    changed = dataclasses.replace(
        reduction, run=dataclasses.replace(reduction.run, points=points),
        point_columns={**reduction.point_columns, "diagnostic": diagnostic})
    row = summary_row(SeriesReduction("", changed.run, reduction=changed), "hueckel")
    assert row["flags"] == "; ".join(_reference_flags(changed))
    report = format_report(changed)
    excluded = _reference_exclusion_lines(changed.points)
    assert [line for line in report.splitlines()
            if line.startswith("  left out of the fit: ")] == excluded
    identical(build_record(changed)["points"], _reference_points(changed), "points")
    assert points_csv(changed) == _reference_points_csv(changed)


_TEXT_VALUES = st.none() | st.just(math.nan) | st.sampled_from(
    ["", "KB-AgCl-08", "=1+2", " @SUM(A1)", "-0.5", "a,b", 'say "x"', "two\nlines"]) | st.text(
    st.characters(codec="utf-8", exclude_categories=("Cs",)), max_size=5)


@settings(max_examples=80, deadline=None)
@given(st.data())
def test_points_csv_of_any_text_is_the_table_written_by_pandas(reductions, data):
    """The points CSV, its text columns read through pyarrow and checked once per distinct
    text, and its rows joined when nothing needs quoting, is what pandas writes of the points
    table, for text of any kind (missing, a formula, a comma, a quote, a line break)."""
    import dataclasses

    from activolt.io.record import points_csv

    reduction = reductions[data.draw(st.sampled_from(["sample", "compared"]))][0]
    points = reduction.run.points.copy()
    n = len(points)
    for name in ("electrode", "series", "note"):
        if data.draw(st.booleans(), label=f"change {name}"):
            cells = data.draw(st.lists(_TEXT_VALUES, min_size=n, max_size=n), label=name)
            points[name] = pd.Series(cells, index=points.index, dtype="str")
    changed = dataclasses.replace(reduction, run=dataclasses.replace(reduction.run,
                                                                     points=points))
    assert points_csv(changed) == _reference_points_csv(changed)


def _reference_residuals_by_solution(reduction) -> np.ndarray:
    points = reduction.points[reduction.points["flag"].isna()]
    return points.groupby("molality_mol_kg", sort=True)["residual_V"].mean().to_numpy(float)


def _reference_run_range(reduction) -> float:
    points = reduction.points
    flags = points["flag"]
    kept = flags.isna() | flags.astype(str).str.startswith(OUT_OF_RANGE)
    molality = points.loc[kept, "molality_mol_kg"].to_numpy(float)
    return float(reduction.electrolyte.ionic_strength(molality).max())


@settings(max_examples=150, deadline=None)
@given(st.data())
def test_model_choice_reads_of_the_points_are_those_of_the_table(reductions, data):
    """The solutions' mean residuals and the run's range, read column by column, are those
    the points table gives (bit for bit), with solutions read once or several times, residuals
    of either sign of zero or missing, and any flags."""
    import dataclasses

    from activolt.procedures.model_choice import residuals_by_solution, run_range_mol_kg

    reduction = reductions["sample"][0]
    n = len(reduction.run.points)
    flags = data.draw(st.lists(_FLAG_VALUES, min_size=n, max_size=n).filter(
        lambda f: any(v is None or v != v for v in f)))
    points = reduction.run.points.copy()
    points["flag"] = pd.Series(flags, dtype=object, index=points.index)
    if data.draw(st.booleans()):  # solutions read more than once
        points["molality_mol_kg"] = data.draw(st.lists(
            st.sampled_from([0.001, 0.01, 0.1, 0.5]), min_size=n, max_size=n))
    residual = np.array(data.draw(st.lists(
        st.floats(-1e-3, 1e-3) | st.sampled_from([0.0, -0.0, math.nan, 1e-3 / 3]),
        min_size=n, max_size=n)))
    residual.flags.writeable = False
    changed = dataclasses.replace(
        reduction, run=dataclasses.replace(reduction.run, points=points),
        point_columns={**reduction.point_columns, "residual_V": residual})
    got, expected = residuals_by_solution(changed), _reference_residuals_by_solution(changed)
    assert got.dtype == expected.dtype and got.tobytes() == expected.tobytes()
    assert run_range_mol_kg(changed) == _reference_run_range(changed)


# --- a batch's input entry, worked out once ------------------------------------------------

@pytest.mark.parametrize("depth", [0, 2])
def test_a_shared_input_entry_gives_the_record_of_each_series(reductions, tmp_path, depth):
    """A batch names and hashes its table and metadata once (``input_record``) and gives the
    entry to every series' record: the record is the one built without it."""
    from activolt.io.record import input_record, written_record

    reduction, comparison = reductions["moved"]
    folder = tmp_path.joinpath(*(["deeper"] * depth), "out")
    created = datetime(2025, 1, 2, 3, 4, 5, tzinfo=UTC)
    entry = input_record(reduction.run, folder)
    assert entry["metadata_file"].endswith("moved.toml") and len(entry["metadata_sha256"]) == 64
    alone = written_record(reduction, created, comparison=comparison, record_folder=folder)
    shared = written_record(reduction, created, comparison=comparison, record_folder=folder,
                            input_entry=entry)
    assert shared.text == alone.text
    identical(shared.document, alone.document)
    assert shared.document["input"] is not entry  # each record holds its own entry
    # an entry for a folder at another depth names the files otherwise
    other = input_record(reduction.run, tmp_path.joinpath(*(["elsewhere"] * (depth + 3))))
    assert written_record(reduction, created, record_folder=folder,
                          input_entry=other).text != alone.text


# --- rounded numbers remembered between the text report and the page -------------------------

_ANY_FLOAT = st.floats(allow_subnormal=True) | st.sampled_from(
    [0.0, -0.0, 5e-324, -5e-324, math.inf, -math.inf, math.nan, 1e-300, 0.00097, 2.5e-10])


@settings(max_examples=400, deadline=None)
@given(_ANY_FLOAT, _ANY_FLOAT, st.sampled_from(["", "mV", "Å"]), st.integers(1, 3))
def test_remembered_rounding_writes_what_the_rule_writes(value, u, unit, significant):
    """``report.numbers`` remembers what it has rounded: each call, first or repeated, and
    the same numbers with the other sign of zero, write what the rule itself writes."""
    from activolt import rounding
    from activolt.report.numbers import format_compact, format_with_uncertainty

    def plain_compact(v, w):
        if v != 0.0 and math.isfinite(v) and abs(v) < 0.01:
            from activolt.report.numbers import format_scaled

            return format_scaled(v, w, significant)
        return rounding.format_with_uncertainty(v, w, significant=significant)

    for v, w in [(value, u), (value, u), (-value, u), (value, -u), (0.0, u), (-0.0, u),
                 (value, 0.0), (value, -0.0)]:
        try:
            expected = rounding.format_with_uncertainty(v, w, unit, significant)
        except (ArithmeticError, ValueError) as error:
            with pytest.raises(type(error)):
                format_with_uncertainty(v, w, unit, significant)
        else:
            assert format_with_uncertainty(v, w, unit, significant) == expected
        try:
            expected = plain_compact(v, w)
        except (ArithmeticError, ValueError) as error:
            with pytest.raises(type(error)):
                format_compact(v, w, significant)
        else:
            assert format_compact(v, w, significant) == expected


# --- control characters escaped, some kept ----------------------------------------------------

_CONTROLS = "".join(chr(c) for c in (*range(0x20), *range(0x7f, 0xa0))) + (
    "\u2028\u2029\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f")


@settings(max_examples=300, deadline=None)
@given(st.text(alphabet=st.sampled_from(_CONTROLS) | st.characters(), max_size=40),
       st.text(alphabet=st.sampled_from(_CONTROLS + "ab"), max_size=4))
def test_escaping_with_kept_characters_is_escaping_and_putting_them_back(value, keep):
    """``escape_controls(text, keep)`` leaves the kept characters out of what it matches: the
    same text as matching every control and putting the kept ones back."""
    import re

    from activolt.safe_text import escape_controls

    def escaped(match):
        code = ord(match.group())
        return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"

    every = re.compile("[" + re.escape(_CONTROLS) + "]")
    expected = every.sub(lambda m: m.group() if m.group() in keep else escaped(m), value)
    assert escape_controls(value, keep=keep) == expected
    assert escape_controls(value + "\n", keep="\n") == every.sub(
        lambda m: m.group() if m.group() == "\n" else escaped(m), value) + "\n"
    assert escape_controls(value, keep=_CONTROLS) == value


# --- the page's rows written directly --------------------------------------------------------

class _Float(float):
    """A float the page's direct rows do not take (not exactly ``float``): its rows go the
    general way, value by value, and must come out the same."""


def _general(value):
    if isinstance(value, dict):
        return {k: _general(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_general(v) for v in value]
    return _Float(value) if type(value) is float else value


_CELL = (st.floats(allow_subnormal=True, width=64) | st.none()
         | st.sampled_from([0.0, -0.0, 5e-324, 1e300, math.inf, math.nan]))


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(*[_CELL] * 11, st.sampled_from([True, False]),
                          st.sampled_from([None, "", "studentized residual 3.1", "no reading"]),
                          st.sampled_from([None, "", "KB-1", "<b>"]), st.integers(1, 99)),
                min_size=1, max_size=4))
def test_the_pages_direct_rows_are_its_rows_value_by_value(rows):
    """The points, published and derived tables of the page are written directly for rows of
    finite floats; a record whose floats take the general way gives the same page."""
    points, published, derived = [], [], []
    for (m, emf, residual, gamma, u_gamma, mean, difference, ratio, phi, a_w, u, used, flag,
         electrode, line) in rows:
        points.append({"line": line, "molality_mol_kg": 0.01 if m is None else m, "emf_V": emf,
                       "residual_V": residual, "gamma_pm": gamma, "u_gamma_pm": u_gamma,
                       "used_in_fit": used, "flag": flag, "electrode": electrode})
        published.append({"molality_mol_kg": 0.01 if m is None else m,
                          "gamma_pm_published": mean, "interpolated": used,
                          "difference": difference, "difference_over_u": ratio,
                          "published_values": [{"source": "a", "gamma_pm": mean,
                                                "interpolated": used},
                                               {"source": electrode, "gamma_pm": gamma,
                                                "interpolated": not used}]})
        derived.append({"molality_mol_kg": 0.01 if m is None else m,
                        "osmotic_coefficient": phi, "u_osmotic_coefficient": u,
                        "water_activity": a_w, "u_water_activity": u_gamma,
                        "excess_gibbs_rt_mol_kg": residual, "u_excess_gibbs_rt_mol_kg": u})
    record = {"points": points, "published_comparison": published,
              "derived_properties": {"points": derived}}
    try:
        direct = report_html(record)
    except (ArithmeticError, ValueError) as error:  # a number the rounding itself refuses
        with pytest.raises(type(error)):
            report_html(_general(record))
        return
    assert direct == report_html(_general(record))
    assert direct.count("<tr>") + direct.count("<tr class=out>") >= 3 * len(rows)
