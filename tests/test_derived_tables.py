"""The derived properties and the published comparison, worked out the quick way, are the same
numbers as worked out one step at a time.

- :func:`activolt.procedures.properties.model_sensitivities` evaluates each model once on the
  readings repeated for every shifted parameter; its values and central differences must equal,
  bit for bit, one evaluation per step (:func:`activolt.fit.uncertainty.sensitivity_coefficients`).
- :func:`activolt.procedures.published.table_of` must give the table ``pandas.DataFrame`` gives.
- The published comparison is kept per (electrolyte, temperature, molalities); each run's table
  must still be its own.
- The text report reads each column once as plain values, and skips escaping when every line is
  printable; what it shows must be what the rows hold, escaped as
  :func:`activolt.safe_text.escape_controls` escapes.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.activity import MODELS
from activolt.activity.properties import excess_gibbs_energy_rt, water_activity
from activolt.activity.published import published_consensus, published_gamma, published_tables
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.constants import GAS_CONSTANT_J_MOL_K
from activolt.data.runs import read_run
from activolt.fit.uncertainty import sensitivity_coefficients
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run
from activolt.procedures.properties import (
    derive_results,
    derived_properties,
    model_sensitivities,
)
from activolt.procedures.published import compare_with_published, plain_values, table_of
from activolt.report.text import format_report
from activolt.safe_text import escape_controls

SAMPLE = (Path(__file__).resolve().parents[1] / "src" / "activolt" / "sample_data"
          / "kestrel_hcl_25C.csv")
ELECTROLYTES = ("HCl", "NaCl", "CaCl2", "LaCl3", "MgSO4")


def _one_by_one(model, electrolyte, m, constants, values, free):
    phi = np.asarray(model.osmotic_coefficient(electrolyte, m, constants, values), float)
    ln_g = np.asarray(model.ln_gamma(electrolyte, m, constants, values), float)
    d_phi = sensitivity_coefficients(
        lambda v: model.osmotic_coefficient(electrolyte, m, constants, v), values, free)
    d_ln = sensitivity_coefficients(
        lambda v: model.ln_gamma(electrolyte, m, constants, v), values, free)
    return phi, ln_g, d_phi, d_ln


@settings(max_examples=60, deadline=None)
@given(model=st.sampled_from(sorted(MODELS)), formula=st.sampled_from(ELECTROLYTES),
       molality=st.lists(st.floats(1e-4, 3.0), min_size=1, max_size=12),
       temperature=st.floats(273.15, 343.15), data=st.data())
def test_model_sensitivities_are_the_one_by_one_numbers(model, formula, molality, temperature,
                                                       data):
    activity = MODELS[model]
    electrolyte = parse_electrolyte(formula)
    m = np.array(molality)
    # temperatures differing between readings, as in a run with a temperature column
    constants = debye_hueckel_constants(temperature + np.linspace(0.0, 2.0, m.size))
    values = {p.name: data.draw(st.floats(2.0, 9.0) if p.name == "a_angstrom"
                                else st.floats(-0.5, 0.5), label=p.name)
              for p in activity.parameters}
    free = tuple(data.draw(st.lists(st.sampled_from(sorted(values)), unique=True), label="free")
                 if values else ())
    try:
        expected = _one_by_one(activity, electrolyte, m, constants, values, free)
    except ValueError:  # a charge type the model has no constants for (Pitzer α of 3:1)
        with pytest.raises(ValueError):
            model_sensitivities(activity, electrolyte, m, constants, values, free)
        return
    got = model_sensitivities(activity, electrolyte, m, constants, values, free)
    for g, e in zip(got, expected, strict=True):
        assert g.shape == e.shape
        assert np.array_equal(g, e, equal_nan=True)


@pytest.mark.parametrize("size", [12, 1500])
def test_model_sensitivities_are_the_same_when_asked_again(size):
    """The readings repeated for the shifted parameters are kept per molalities and
    temperatures (runs up to a thousand readings): asked again, or for a longer run that is not
    kept, the numbers are the one-by-one numbers; the kept readings are read only, and stay as
    they were."""
    electrolyte = parse_electrolyte("NaCl")
    m = np.linspace(0.001, 2.0, size)
    constants = debye_hueckel_constants(np.linspace(288.15, 308.15, size))
    for model in ("hueckel", "pitzer", "sit"):
        activity = MODELS[model]
        values = {p.name: 4.0 if p.name == "a_angstrom" else 0.1 for p in activity.parameters}
        free = tuple(sorted(values))
        expected = _one_by_one(activity, electrolyte, m, constants, values, free)
        for _ in range(2):
            got = model_sensitivities(activity, electrolyte, m, constants, values, free)
            for g, e in zip(got, expected, strict=True):
                assert np.array_equal(g, e, equal_nan=True)


def test_derived_properties_are_those_worked_out_step_by_step():
    reduction = reduce_run(read_run(SAMPLE), "pitzer")
    props = derived_properties(reduction)
    run = reduction.run
    usable = run.usable
    m = run.arrays["molality_mol_kg"][usable]
    temperature = run.arrays["temperature_K"][usable]
    constants = debye_hueckel_constants(temperature)
    values = reduction.model_parameter_values
    names = reduction.uncertain_names or reduction.free_names
    matrix = (reduction.covariance if reduction.uncertain_covariance is None
              else reduction.uncertain_covariance)
    keep = [i for i, name in enumerate(names) if name in values]
    free = tuple(names[i] for i in keep)
    assert free  # the sample's Pitzer fit has free parameters: the uncertainties are not 0
    phi, ln_g, d_phi, d_ln = _one_by_one(reduction.model, reduction.electrolyte, m, constants,
                                         values, free)
    cov = np.asarray(matrix, dtype=float)[np.ix_(keep, keep)]

    def u(gradient):
        return np.sqrt(np.maximum(np.einsum("ij,jk,ik->i", gradient, cov, gradient), 0.0))

    factor = reduction.electrolyte.nu * m
    a_w = water_activity(reduction.electrolyte, m, phi)
    g_rt = excess_gibbs_energy_rt(reduction.electrolyte, m, phi, ln_g)
    u_g_rt = u(factor[:, None] * (d_ln - d_phi))
    rt = GAS_CONSTANT_J_MOL_K * temperature
    expected = pd.DataFrame({
        "line": run.points["line"].to_numpy()[usable],
        "molality_mol_kg": m, "temperature_K": temperature,
        "ln_gamma_pm_model": ln_g, "u_ln_gamma_pm_model": u(d_ln),
        "osmotic_coefficient": phi, "u_osmotic_coefficient": u(d_phi),
        "water_activity": a_w,
        "u_water_activity": a_w * factor * 0.01801528 * u(d_phi),
        "excess_gibbs_rt_mol_kg": g_rt, "u_excess_gibbs_rt_mol_kg": u_g_rt,
        "excess_gibbs_J_kg": g_rt * rt, "u_excess_gibbs_J_kg": u_g_rt * rt,
    })
    pd.testing.assert_frame_equal(props, expected, check_exact=True)


def test_table_of_gives_the_table_pandas_builds():
    n = 4
    tuples = [(("a", 0.1, True),), (), (("a", 0.2, False), ("b", 0.3, True)), ()]
    reference = pd.DataFrame({
        "line": np.arange(n) + 5,
        "m": np.linspace(0.1, 0.4, n),
        "printed": np.array([True, False, True, False]),
        "values": tuples,
        "source": "a; b",
    })
    values = np.empty(n, dtype=object)
    for i, value in enumerate(tuples):
        values[i] = value
    built = table_of(reference.columns, [np.arange(n) + 5, np.linspace(0.1, 0.4, n),
                                         np.array([True, False, True, False]), values,
                                         reference["source"].array.copy()])
    pd.testing.assert_frame_equal(built, reference, check_exact=True)
    assert list(built["values"]) == list(reference["values"])


@settings(max_examples=60, deadline=None)
@given(formula=st.sampled_from(["HCl", "NaCl", "KCl", "CaCl2", "LiBr"]),
       temperature=st.sampled_from([298.15, 298.0, 298.6, 297.7, 298.66, 310.0]),
       molality=st.lists(st.floats(1e-4, 8.0), min_size=1, max_size=15))
def test_prepared_tables_say_what_the_tables_say(formula, temperature, molality):
    electrolyte = parse_electrolyte(formula)
    tables = published_tables(electrolyte, temperature)
    table = published_gamma(formula, temperature, all_sources=True)
    if table is None:
        assert tables is None
        return
    m = np.sort(np.array(molality))
    fresh = published_consensus(table, m, electrolyte, temperature)
    kept = tables.consensus(m).frame()
    pd.testing.assert_frame_equal(kept, fresh, check_exact=True)
    assert list(kept["values"]) == list(fresh["values"])
    pd.testing.assert_frame_equal(tables.table, table, check_exact=True)
    assert published_tables(electrolyte, temperature) is tables


def _stub(gamma):
    from types import SimpleNamespace

    # what compare_with_published reads of a reduction: the run's column of molalities and
    # its own columns
    run = SimpleNamespace(column={"molality_mol_kg": np.array([0.01, 0.05, 0.1, 0.2])}.get)
    columns = {"gamma_pm": np.array(gamma), "u_gamma_pm": np.full(4, 0.001)}
    return SimpleNamespace(electrolyte=parse_electrolyte("HCl"), temperature_K=298.15,
                           run=run, point_columns=columns)


def test_runs_sharing_molalities_each_get_their_own_comparison():
    first = compare_with_published(_stub([0.905, 0.830, np.nan, 0.768]))
    assert first["molality_mol_kg"].tolist() == [0.01, 0.05, 0.2]  # the NaN row is left out
    first.loc[0, "gamma_pm_published"] = -1.0
    first.loc[0, "source"] = "changed"
    first.loc[0, "n_sources"] = 99
    second = compare_with_published(_stub([0.904, 0.831, np.nan, 0.767]))
    assert second.loc[0, "gamma_pm_published"] == pytest.approx(0.9045, abs=5e-4)
    assert second.loc[0, "source"] != "changed" and second.loc[0, "n_sources"] != 99
    assert second["difference"].tolist() == pytest.approx(
        (second["gamma_pm"] - second["gamma_pm_published"]).tolist(), abs=0)


@pytest.fixture(scope="module")
def sample_reduction():
    return reduce_run(read_run(SAMPLE), "hueckel")


def test_plain_values_are_the_values_of_the_rows(sample_reduction):
    from activolt.report.numbers import frame_records

    points = sample_reduction.points
    records = frame_records(points)
    for name in points.columns:
        got = plain_values(points, name)
        expected = [row[name] for row in records]
        assert [type(v) for v in got] == [type(v) for v in expected], name
        assert all(g == e or (g != g and e != e) for g, e in zip(got, expected, strict=True))


@settings(max_examples=80, deadline=None)
@given(name=st.text(alphabet=st.characters(blacklist_characters="/\x00"), min_size=1,
                    max_size=12))
def test_the_report_shows_any_name_escaped_as_escape_controls_does(sample_reduction, name):
    import dataclasses

    def renamed(stem):
        run = dataclasses.replace(sample_reduction.run,
                                  path=sample_reduction.run.path.with_name(stem + ".csv"))
        return dataclasses.replace(sample_reduction, run=run)

    derived = derive_results(sample_reduction)
    plain = format_report(renamed("PLACEHOLDER"), derived=derived)
    assert plain.count("PLACEHOLDER.csv") == 1
    shown = format_report(renamed(name), derived=derived)
    assert shown == plain.replace("PLACEHOLDER.csv", escape_controls(name + ".csv", keep="\n"))


def test_derived_columns_read_as_their_tables(sample_reduction):
    """The outputs read the derived tables' columns without building the tables: each column
    must give, value for value and type for type, what the table built from them gives, and
    the report's comparison lines must be those of the table."""
    from activolt.report.comparison import comparison_lines

    derived = derive_results(sample_reduction)
    assert derived.published_columns is not None
    for columns, table in ((derived.property_columns, derived.properties),
                           (derived.published_columns, derived.published)):
        assert list(columns) == table.columns.tolist()
        for name in columns:
            got, expected = plain_values(columns, name), plain_values(table, name)
            assert [type(v) for v in got] == [type(v) for v in expected], name
            assert all(g == e or (g != g and e != e)
                       for g, e in zip(got, expected, strict=True)), name
    assert derived.properties.attrs["notes"] == list(derived.property_notes)
    assert comparison_lines(derived.published_columns) == comparison_lines(derived.published)
    assert derived.published.equals(compare_with_published(sample_reduction))


def _h_both_branches(x):
    """h(x) with the series worked out for every x and chosen where x is small."""
    x = np.asarray(x, dtype=float)
    small = np.abs(x) < 0.05
    safe = np.where(small, 1.0, x)
    closed = 2.0 * (1.0 - (1.0 + safe - 0.5 * safe**2) * np.exp(-safe)) / safe**2
    series = np.zeros_like(x)
    factorial = 1.0
    for n in range(1, 12):
        factorial *= n
        if n >= 2:
            series = series + 2.0 * (-1.0) ** n * (n - 1) / factorial * x ** (n - 2)
    series = series + np.exp(-x)
    return np.where(small, series, closed)


@settings(max_examples=100, deadline=None)
@given(x=st.lists(st.floats(0.0, 60.0), min_size=0, max_size=20))
def test_pitzer_h_skips_the_series_without_changing_a_digit(x):
    from activolt.activity.pitzer import h_function

    got, expected = h_function(np.array(x)), _h_both_branches(np.array(x))
    assert got.shape == expected.shape and isinstance(got, np.ndarray)
    assert np.array_equal(got, expected)


@settings(max_examples=100, deadline=None)
@given(y=st.lists(st.floats(0.0, 30.0), min_size=0, max_size=20))
def test_hueckel_sigma_skips_the_series_without_changing_a_digit(y):
    from activolt.activity.hueckel import sigma

    y = np.array(y)
    small = np.abs(y) < 1e-2
    safe = np.where(small, 1.0, y)
    closed = 3.0 / safe**3 * (1.0 + safe - 1.0 / (1.0 + safe) - 2.0 * np.log1p(safe))
    series = sum(3.0 * (-1.0) ** k * (k + 1) / (k + 3) * y**k for k in range(6))
    expected = np.where(small, series, closed)
    got = sigma(y)
    assert got.shape == expected.shape and isinstance(got, np.ndarray)
    assert np.array_equal(got, expected)


@settings(max_examples=60, deadline=None)
@given(data=st.data(), n_sources=st.integers(1, 9))
def test_the_mean_of_several_tables_is_that_of_their_values_one_molality_at_a_time(
        data, n_sources):
    from activolt.activity.published import PublishedTables

    grid = [0.001, 0.005, 0.01, 0.05, 0.1, 0.5, 1.0]
    rows = []
    for k in range(n_sources):
        printed = data.draw(st.lists(st.sampled_from(grid), min_size=1, unique=True),
                            label=f"molalities of table {k}")
        for m in printed:
            rows.append({"molality_mol_kg": m, "gamma_pm": data.draw(st.floats(0.3, 1.2)),
                         "decimals": data.draw(st.integers(2, 4)), "source": f"table {k}"})
    table = pd.DataFrame(rows)
    c = PublishedTables.of(table).consensus(grid)
    for i, here in enumerate(c.values):
        if not here:
            assert np.isnan(c.gamma_pm[i]) and c.n_sources[i] == 0
            continue
        values = np.array([v for _, v, _ in here])
        assert c.gamma_pm[i] == values.mean()  # the same sum, in the same order
        assert c.spread[i] == values.max() - values.min()
        assert c.n_sources[i] == len(here)
        decimals = table[table["source"].isin([s for s, _, _ in here])].groupby("source")[
            "decimals"].max()
        assert c.u_rounding[i] == max(0.5 * 10.0 ** -float(d) for d in decimals)
