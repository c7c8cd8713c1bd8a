"""The text reports of many reductions written together are, byte for byte, the report of each
written alone.

:func:`activolt.report.text.format_reports` writes the tables of every report of a chunk a
column at a time (numbers rounded to their uncertainties with numpy, cells filled into one
%-template) and aligns every table at once; the column formatters must write what the scalar
formatters write for every float, and every report what :func:`format_report` writes for it.

Reference behaviour: the library's own per-series report and scalar formatters (common
practice: an optimisation is checked against the code it replaces). Readings: the bundled
sample run (Kestrel Bay, HCl at 25 °C, invented laboratory) as read, with readings excluded,
with one reading moved to stand out and odd text, reduced with every model and with held
parameters; and synthetic series of the benchmarks' kind with odd names.
"""

from __future__ import annotations

import math
from importlib.resources import files
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from synthetic import write_moved_sample

from activolt import rounding
from activolt.data.runs import Exclusion, exclude_points, read_run, runs_from_frame
from activolt.errors import FitError
from activolt.procedures.dilution import reduce_run
from activolt.procedures.many import series_reducer
from activolt.procedures.properties import derive_results_of_many
from activolt.report.comparison import aligned_blocks, aligned_lines
from activolt.report.numbers import (
    fill_rows,
    format_compact,
    format_compact_column,
    format_molality,
    format_molality_column,
    format_with_uncertainty,
    format_with_uncertainty_column,
)
from activolt.report.text import format_report, format_reports

SAMPLE = Path(str(files("activolt") / "sample_data" / "kestrel_hcl_25C.csv"))


def _series_frame(names: list[str], rows: int = 9) -> pd.DataFrame:
    """Synthetic readings (Hückel γ± with Bå = 1.5, b = 0.1 kg/mol, a little noise) of one
    series per name, E° a little apart."""
    from synthetic import emf_from_gamma

    from activolt.physics.water import debye_hueckel_constants

    rng = np.random.default_rng(7)
    molality = np.geomspace(0.001, 0.5, rows)
    root = np.sqrt(molality)
    gamma = np.exp(-debye_hueckel_constants(np.array([298.15])).agamma * root
                   / (1.0 + 1.5 * root) + 0.1 * molality)
    frames = []
    for k, name in enumerate(names):
        emf = emf_from_gamma(molality, gamma, 0.2224 + 1e-4 * k, "HCl")
        frames.append(pd.DataFrame({"molality_mol_kg": molality,
                                    "emf_V": emf + rng.normal(0.0, 2e-5, rows),
                                    "u_emf_V": 2e-5, "series": name}))
    return pd.concat(frames, ignore_index=True)


@pytest.fixture(scope="module")
def cases(tmp_path_factory):
    """(reduction, model comparison) of varied reductions, in one list."""
    folder = tmp_path_factory.mktemp("reports_of_many")
    sample = read_run(SAMPLE)
    write_moved_sample(SAMPLE, folder, "KB-AgCl-08 é\x07,")
    excluded = exclude_points(sample, [Exclusion("bubbles <b>", line=7),
                                       Exclusion("drift", molality_mol_kg=0.5),
                                       Exclusion("odd\x1b[2J", line=9)])
    found = [(reduce_run(sample), None), (reduce_run(excluded), None),
             (reduce_run(read_run(folder / "moved.csv")), None)]
    compared = series_reducer("all", {})(sample)
    found.append((compared.reduction, compared.comparison))
    for model, held in (("limiting", None), ("davies", None), ("sit", None),
                        ("pitzer", None), ("hueckel", {"a_angstrom": 4.3}),
                        ("hueckel", {"a_angstrom": (4.3, 0.2)}), ("sit", {"epsilon_kg_mol": 0.12})):
        try:
            found.append((reduce_run(sample, model, fixed=held), None))
        except FitError:  # (a model the sample's readings refuse)
            continue
    assert len({r.model.name for r, _ in found}) >= 3
    names = ["s1", "B\u202eC", "A\x1b[2J", "tab\tbed", "é ü 漢", "x,y"]
    runs = runs_from_frame(_series_frame(names), {"electrolyte": "HCl", "electrons": 1,
                                                   "temperature_C": 25.0})
    found += [(outcome.reduction, outcome.comparison)
              for outcome in series_reducer("hueckel", {}).batch(list(runs))]
    return found


def _alone(cases):
    return [format_report(reduction, comparison) for reduction, comparison in cases]


def test_the_reports_written_together_are_those_written_alone(cases):
    reductions = [r for r, _ in cases]
    comparisons = [c for _, c in cases]
    alone = _alone(cases)
    together = format_reports(reductions, comparisons, derive_results_of_many(reductions))
    assert len(together) == len(alone)
    for i, (one, many) in enumerate(zip(alone, together, strict=True)):
        assert many == one, i
    # in another order, and working out the derived results themselves
    order = list(reversed(range(len(cases))))
    assert format_reports([reductions[i] for i in order],
                          [comparisons[i] for i in order]) == [alone[i] for i in order]


def test_the_cases_cover_what_the_report_shows(cases):
    together = format_reports([r for r, _ in cases], [c for _, c in cases])
    text = "".join(together)
    for shown in ("out of the fit — excluded: bubbles <b>", "left out of the fit",
                  "← stands out", "electrode", "× 10⁻", "(held)", "γ± against published",
                  "\\x1b[2J", "\\x07", "\\u202e", "ΔBIC"):
        assert shown in text, shown
    assert "\x1b" not in text and "\x07" not in text


def test_a_report_of_many_can_differ(cases):
    """The comparison can fail: two different reductions do not give the same report."""
    reductions = [r for r, _ in cases[:2]]
    first, second = format_reports(reductions)
    assert first != second and first == format_report(reductions[0])
    assert format_reports([]) == []


# --- the column formatters against the scalar ones ----------------------------------------

def _near_ties(draw) -> float:
    """A value at, or one ulp either side of, a rounding tie or a power of ten."""
    base = draw(st.sampled_from([1.0, 0.5, 0.25, 0.125, 0.95, 0.995, 9.5, 0.0095, 99.5]))
    scale = 10.0 ** draw(st.integers(-12, 12))
    value = base * scale * draw(st.sampled_from([1.0, -1.0]))
    return float(np.nextafter(value, draw(st.sampled_from([-np.inf, 0.0, np.inf]))))


_ANY = st.floats(allow_nan=True, allow_infinity=True)
_SPREAD = st.one_of(_ANY, st.floats(-1e-300, 1e-300), st.floats(-1e6, 1e6),
                    st.integers(-10**6, 10**6).map(float), st.composite(_near_ties)())
_U = st.one_of(_SPREAD, st.floats(1e-20, 1e3), st.just(float("nan")), st.just(0.0))


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(_SPREAD, _U), min_size=1, max_size=12), st.integers(1, 3))
def test_columns_of_values_with_uncertainties_are_written_as_each_alone(pairs, significant):
    values = [v for v, _ in pairs]
    u = [x for _, x in pairs]
    assert format_with_uncertainty_column(values, u, significant) == [
        rounding.format_with_uncertainty(v, x, significant=significant) for v, x in pairs]
    assert format_with_uncertainty_column(np.array(values), np.array(u), significant) == [
        format_with_uncertainty(v, x, significant=significant) for v, x in pairs]
    assert format_compact_column(values, u, significant) == [
        format_compact(v, x, significant) for v, x in pairs]
    assert rounding.decimals_for_column(np.array(u), significant).tolist() == [
        rounding.decimals_for(x, significant) for x in u]


@settings(max_examples=200, deadline=None)
@given(st.lists(_SPREAD, max_size=12))
def test_columns_of_molalities_and_numbers_are_written_as_each_alone(values):
    assert format_molality_column(values) == [format_molality(v) for v in values]
    assert fill_rows("%+.4f|%-13.6g|%.2g", [values, values, values]) == [
        f"{v:+.4f}|{v:<13.6g}|{v:.2g}" for v in values]
    decades = rounding.decades(np.array(values, dtype=float)).tolist()
    assert decades == [math.floor(math.log10(v)) if 0.0 < v < math.inf else 0 for v in values]


_CELL = st.text(st.sampled_from(list("ab 1.-±γ\n\t é")), max_size=6)


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 4).flatmap(lambda width: st.lists(
    st.lists(st.lists(_CELL, min_size=width, max_size=width), min_size=1, max_size=4),
    min_size=1, max_size=4)))
def test_tables_aligned_together_are_aligned_alone(tables):
    width = len(tables[0][0])
    columns = [[row[j] for table in tables for row in table] for j in range(width)]
    together = aligned_blocks(columns, [len(table) for table in tables])
    assert together == [aligned_lines(table) for table in tables]
    assert together == [aligned_lines(table, pad_last=False) for table in tables]
