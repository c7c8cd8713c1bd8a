"""The run's γ± beside every published table: values, their spread, and the difference in units
of the combined standard uncertainty.

Published values: the rows of ``reference/mean_activity_coefficients.csv`` named here by their
tables (Robinson & Stokes 1959, Appendix 8.10, from memory; Hamer & Wu 1972 as printed in the CRC
Handbook, confirmed in a secondary copy). u_c = √(u²(γ±) + (spread/2)² + (½ unit of the last
printed digit)²) is the definition in :func:`activolt.procedures.published.compare_with_published`;
the expected numbers below are derived from it and the printed values by hand.
"""

from __future__ import annotations

import json
import math
import re
from types import SimpleNamespace

import jsonschema
import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity.published import published_gamma
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import read_run
from activolt.io.record import build_record, record_json, record_schema
from activolt.procedures.dilution import reduce_run
from activolt.procedures.published import compare_with_published
from activolt.report.comparison import comparison_lines
from activolt.report.text import format_report

# HCl, 25 °C. Robinson & Stokes (1959), Appendix 8.10 (from memory) / Hamer & Wu (1972), CRC
# Handbook (confirmed in a secondary copy).
HCL_005 = (0.830, 0.832)
HCL_01 = (0.796, 0.797)


def _stub(molality, gamma, u_gamma, formula="HCl"):
    """What compare_with_published reads of a reduction: electrolyte, temperature, the run's
    column of molalities and the reduction's own columns (γ± and its u)."""
    run = SimpleNamespace(column={"molality_mol_kg": np.asarray(molality, dtype=float)}.get)
    columns = {"gamma_pm": np.asarray(gamma, dtype=float),
               "u_gamma_pm": np.asarray(u_gamma, dtype=float)}
    return SimpleNamespace(electrolyte=parse_electrolyte(formula), temperature_K=298.15,
                           run=run, point_columns=columns)


def test_two_tables_at_one_molality_give_mean_spread_and_combined_u():
    c = compare_with_published(_stub([0.05, 0.1], [0.8315, 0.7990], [0.0010, 0.0004]))
    row = c.iloc[0]
    assert row.n_sources == 2 and not row.interpolated
    assert sorted(v for _, v, _ in row.published_values) == list(HCL_005)
    assert row.gamma_pm_published == pytest.approx(0.831, abs=1e-12)   # mean
    assert row.spread_published == pytest.approx(0.002, abs=1e-12)     # 0.832 − 0.830
    u_published = math.hypot(0.002 / 2, 0.0005)                        # 0.00112
    assert row.u_published == pytest.approx(u_published, rel=1e-9)
    assert row.difference == pytest.approx(0.0005, abs=1e-12)
    assert row.u_difference == pytest.approx(math.hypot(0.0010, u_published), rel=1e-9)
    assert row.difference_over_u == pytest.approx(0.0005 / math.hypot(0.0010, u_published))
    # 0.1 mol/kg: the run 0.7990 ± 0.0004 against 0.7965 (spread 0.001): 2.5/0.81 = 3.1 u_c,
    # beyond what the tables' own disagreement explains.
    row = c.iloc[1]
    assert sorted(v for _, v, _ in row.published_values) == list(HCL_01)
    expected = (0.7990 - 0.7965) / math.hypot(0.0004, math.hypot(0.0005, 0.0005))
    assert row.difference_over_u == pytest.approx(expected, rel=1e-9)
    assert row.difference_over_u > 2


def test_one_table_only_carries_no_spread_and_says_so():
    # KCl: Robinson & Stokes (1959) only (from memory): 0.770 at 0.1 mol/kg.
    c = compare_with_published(_stub([0.1], [0.771], [0.001], "KCl"))
    row = c.iloc[0]
    assert row.n_sources == 1 and row.spread_published == 0.0
    assert row.u_published == 0.0005 and row.gamma_pm_published == 0.770


def test_no_table_no_comparison():
    assert compare_with_published(_stub([0.1], [0.7], [0.001], "LiBr")) is None
    assert comparison_lines(None) == []


def test_report_lines_show_every_table_the_spread_and_the_ratio():
    c = compare_with_published(_stub([0.05, 0.1, 0.2], [0.8315, 0.7990, 0.7676],
                                     [0.0010, 0.0004, 0.0010]))
    text = "\n".join(comparison_lines(c))
    assert "against published values" in text
    assert "spread" in text and "difference / u_c" in text
    assert "0.830a 0.832b" in text  # both tables' printed values at 0.05 mol/kg
    assert "0.0020" in text         # their spread
    assert "a: Robinson & Stokes (1959)" in text and "b: Hamer & Wu (1972)" in text
    line_01 = next(line for line in text.splitlines() if line.lstrip().startswith("0.1 "))
    assert "beyond 2 u_c" in line_01
    line_005 = next(line for line in text.splitlines() if line.lstrip().startswith("0.05 "))
    assert "beyond" not in line_005
    line_02 = next(line for line in text.splitlines() if line.lstrip().startswith("0.2 "))
    assert "(" in line_02 and re.search(r"\d\.\d{4}i", line_02)  # interpolated: marked


@pytest.fixture(scope="module")
def reduction(tmp_path_factory):
    folder = tmp_path_factory.mktemp("compare")
    table = published_gamma("HCl", 298.15)  # principal curve: Robinson & Stokes (1959)
    table = table[table.molality_mol_kg <= 1.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    emf = emf_from_gamma(m, gamma, 0.22234)  # E°: Bates & Bower (1954), Table 1
    return reduce_run(read_run(write_run(folder, m, emf, u_emf_V=2e-5)))


def test_report_of_a_reduction_names_both_hcl_tables(reduction):
    text = format_report(reduction)
    assert "Robinson & Stokes (1959)" in text and "Hamer & Wu (1972)" in text
    assert "difference / u_c" in text


def test_record_keeps_the_old_keys_and_adds_the_new(reduction):
    record = build_record(reduction)
    rows = record["published_comparison"]
    assert rows and {"molality_mol_kg", "gamma_pm_published", "interpolated",
                     "difference"} <= set(rows[0])
    at_01 = next(r for r in rows if r["molality_mol_kg"] == 0.1)
    assert at_01["n_sources"] == 2
    assert sorted(v["gamma_pm"] for v in at_01["published_values"]) == list(HCL_01)
    assert at_01["spread_published"] == pytest.approx(0.001, abs=1e-12)
    assert at_01["difference_over_u"] == pytest.approx(
        at_01["difference"] / at_01["u_difference"])
    assert "Hamer & Wu" in record["published_source"]
    assert "spread" in record["published_comparison_method"]
    assert record["volt_unit"] == {"input": "absolute", "factor_to_absolute": 1.0,
                                   "method": record["volt_unit"]["method"]}
    jsonschema.validate(json.loads(record_json(reduction)), record_schema())


def test_reading_printed_values_back_agrees_within_u_c(reduction):
    # Readings made from the Robinson & Stokes curve agree with the mean of both tables within
    # their combined uncertainty at every molality (the tables differ by at most 0.002 there).
    c = compare_with_published(reduction)
    assert np.all(np.abs(c["difference_over_u"]) < 2)
