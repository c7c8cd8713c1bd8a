"""The HTML reports of a batch's chunk written together are, byte for byte, each report alone.

:func:`activolt.report.html.report_htmls` writes the tables of many pages column by column
(the readings, the published values, the derived properties): each column's numbers rounded
at once by the column formatters of :mod:`activolt.report.numbers`, the rows filled from
templates. Each page must be what :func:`~activolt.report.html.report_html` writes for its
record alone, whatever the other records of the chunk hold; and each row written with the
column must be the row written value by value (as a row of NumPy floats is).

Reference behaviour: the library's own one-page and one-value code (common practice: an
optimisation is checked against the code it replaces). Readings: the bundled sample run
(Kestrel Bay, HCl at 25 °C, invented laboratory) reduced with each model, with readings
excluded and parameters held, and records altered the way a hand-edited record could be.
"""

from __future__ import annotations

import copy
import math
from importlib.resources import files
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.data.runs import Exclusion, exclude_points, read_run
from activolt.io.record import build_record
from activolt.procedures.dilution import reduce_run
from activolt.procedures.many import series_reducer
from activolt.procedures.properties import derive_results
from activolt.report.html import report_html, report_htmls
from activolt.report.numbers import format_with_uncertainty

SAMPLE = Path(str(files("activolt") / "sample_data" / "kestrel_hcl_25C.csv"))


def _record(reduction, comparison=None):
    return build_record(reduction, comparison=comparison, derived=derive_results(reduction))


@pytest.fixture(scope="module")
def records():
    """Records of the sample reduced with several models (SIT on the dilute readings only; the
    Davies equation does not describe the sample and is met in the comparison), with readings
    excluded, with parameters held, compared across every model; and copies altered by
    hand."""
    sample = read_run(SAMPLE)
    excluded = exclude_points(sample, [Exclusion("bubbles <b>", line=7),
                                       Exclusion("drift", molality_mol_kg=0.5)])
    dilute = exclude_points(sample, [Exclusion("above the range", molality_mol_kg=m)
                                     for m in (0.2, 0.3, 0.5, 0.7, 1.0)])
    reduced = [_record(reduce_run(sample, model=model))
               for model in ("limiting", "hueckel", "pitzer")]
    reduced.append(_record(reduce_run(dilute, model="sit")))
    reduced.append(_record(reduce_run(excluded)))
    reduced.append(_record(reduce_run(sample, "hueckel", {"a_angstrom": 4.3})))
    reduced.append(_record(reduce_run(sample, "pitzer", {"cphi_kg2_mol2": 0.0})))
    compared = series_reducer("all", {})(sample)
    reduced.append(_record(compared.reduction, compared.comparison))
    altered = []
    for n, base in enumerate(reduced[:4]):
        record = copy.deepcopy(base)
        record["series"] = ["a<b>&'\"", "\u202eevil", "x\ny\t%s%%", "Å ±"][n]
        record["run_info"] = {"operator": "<script>1</script>", "count": n}
        points = record["points"]
        points[0]["gamma_pm"] = None
        points[1]["u_gamma_pm"] = math.nan
        points[2]["emf_V"] = math.inf
        points[3]["line"] = "4a"
        points[4]["electrode"] = "KB-1 <é>" if n % 2 else None
        points[5]["molality_mol_kg"] = 1
        if n == 3:
            for p in points:
                p["isotherm_temperature_K"] = 298.15
        published = record.get("published_comparison") or []
        if published:
            published[0]["difference"] = None
            published[1]["gamma_pm_published"] = math.nan
            published[2]["published_values"] = [{"source": "<other>", "gamma_pm": "0.9"},
                                                 {"source": None, "gamma_pm": None}]
            published[3]["difference_over_u"] = -0.0
        derived = (record.get("derived_properties") or {}).get("points") or []
        if derived:
            derived[0]["water_activity"] = None
            derived[1]["u_excess_gibbs_rt_mol_kg"] = math.inf
            derived[2]["osmotic_coefficient"] = np.float64(0.9)
            derived[3]["u_osmotic_coefficient"] = 0.0
            derived[4]["excess_gibbs_rt_mol_kg"] = -0.0
        altered.append(record)
    return reduced + altered + [{}, {"points": [], "series": "empty"}]


def test_many_pages_together_are_each_page_alone(records):
    figures = [{"gamma": bytes([137, 80, 78, 71, n])} if n % 3 == 0 else None
               for n in range(len(records))]
    names = [f"s{n}.record.json" for n in range(len(records))]
    hashes = [f"{n:064x}" for n in range(len(records))]
    pages = report_htmls(records, figures, names, hashes)
    assert pages == [report_html(record, figure, name, digest) for record, figure, name, digest
                     in zip(records, figures, names, hashes, strict=True)]
    # and in any order, and in chunks of any size
    order = list(reversed(range(len(records))))
    assert report_htmls([records[i] for i in order], [figures[i] for i in order],
                        [names[i] for i in order], [hashes[i] for i in order]) == [
        pages[i] for i in order]
    assert report_htmls(records[:3]) == [report_html(record) for record in records[:3]]
    assert report_htmls([]) == []


def test_a_chunk_of_one_record_repeated_is_that_record_each_time(records):
    pages = report_htmls(records[:1] * 5)
    assert len(set(pages)) == 1 and pages[0] == report_html(records[0])


def test_the_pages_show_the_rows_written_together(records):
    """The readings of a record in the fit and not flagged are written directly (the column
    path), with the record's numbers."""
    record = records[1]
    page = report_htmls([record])[0]
    for p in record["points"]:
        if p["used_in_fit"] and not p["flag"]:
            assert (f'<td class="num" data-value="{p["gamma_pm"]!r}" data-quantity="gamma_pm">'
                    f'{format_with_uncertainty(p["gamma_pm"], p["u_gamma_pm"])}</td>') in page


def _numpy_floats(rows):
    """The rows with every Python float a NumPy float (the same number, not a ``float``
    exactly: such a row is written value by value)."""
    return [{key: np.float64(value) if type(value) is float else value
             for key, value in row.items()} for row in rows]


def test_the_rows_written_together_are_the_rows_written_value_by_value(records):
    """Every table row written with the column (the readings, the published values, the
    derived properties) is the row written value by value, the reference rule."""
    one_by_one = []
    for record in records:
        record = copy.deepcopy(record)
        if record.get("points"):
            record["points"] = _numpy_floats(record["points"])
        if record.get("published_comparison"):
            record["published_comparison"] = _numpy_floats(record["published_comparison"])
        derived = record.get("derived_properties") or {}
        if derived.get("points"):
            derived["points"] = _numpy_floats(derived["points"])
        one_by_one.append(record)
    assert report_htmls(one_by_one) == report_htmls(records)


#: Floats of every kind the rounding could differ on: tiny, huge, negative, integral, signed
#: zeros, subnormals, non-finite, powers of ten and their neighbours, values near a tie.
_FLOATS = (st.floats(allow_subnormal=True)
           | st.floats(min_value=-1e-2, max_value=1e-2)
           | st.floats(min_value=1e-12, max_value=1e3)
           | st.integers(-10**6, 10**6).map(float)
           | st.integers(-300, 300).map(lambda n: 10.0 ** n).flatmap(lambda p: st.sampled_from(
               [p, -p, math.nextafter(p, 0.0), math.nextafter(p, math.inf)]))
           | st.integers(-10**6, 10**6).map(lambda n: (n + 0.5) / 10 ** 4)
           | st.sampled_from([0.0, -0.0, 5e-324, math.inf, math.nan, 0.00097, 9.5e-5]))


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(*[_FLOATS] * 7), min_size=1, max_size=12))
def test_random_rows_written_together_are_the_rows_written_value_by_value(numbers):
    """Rows of any floats (the readings, the published values, the derived properties) are
    written with the column as value by value."""
    points = [{"line": n, "molality_mol_kg": m, "emf_V": a, "residual_V": b, "gamma_pm": c,
               "u_gamma_pm": d, "used_in_fit": True, "flag": None}
              for n, (m, a, b, c, d, _e, _f) in enumerate(numbers)]
    published = [{"molality_mol_kg": m, "gamma_pm_published": a, "difference": b,
                  "difference_over_u": c, "interpolated": n % 2 == 0,
                  "published_values": [{"source": "s", "gamma_pm": d, "interpolated": True}]}
                 for n, (m, a, b, c, d, _e, _f) in enumerate(numbers)]
    derived = [{"molality_mol_kg": m, "osmotic_coefficient": a, "u_osmotic_coefficient": b,
                "water_activity": c, "u_water_activity": d, "excess_gibbs_rt_mol_kg": e,
                "u_excess_gibbs_rt_mol_kg": f} for m, a, b, c, d, e, f in numbers]
    record = {"points": points, "published_comparison": published,
              "derived_properties": {"points": derived}}
    alone = {"points": _numpy_floats(points), "published_comparison": _numpy_floats(published),
             "derived_properties": {"points": _numpy_floats(derived)}}
    assert report_htmls([record, record]) == report_htmls([alone, alone])
