"""The derived results of many reductions worked out together are, bit for bit, those of each
reduction alone.

:func:`activolt.procedures.properties.derive_results_of_many` groups the reductions (model,
electrolyte, parameters, uncertain parameters, number of usable readings), evaluates each
group's model once and contracts the uncertainties of the whole group at once; the published
comparison is worked out a group (electrolyte, temperature, molalities) at a time. Every
column, and the notes, must equal what one reduction alone gives, in the order the reductions
were given:

- against :func:`~activolt.procedures.properties.derive_results` of each reduction;
- against the plain computation of one reduction written out here from the public pieces
  (:func:`~activolt.procedures.properties.model_sensitivities`, the formulas of
  :mod:`activolt.activity.properties`, u² = g V gᵀ contracted with ``einsum("ij,jk,ik->i")``,
  and the published tables' consensus), as the one-series code computed them.

Reference behaviour: the library's own one-series computation (common practice: an
optimisation is checked against the code it replaces). The readings are synthetic (Hückel γ±
with a little noise, invented inputs, not check values).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from synthetic import emf_from_gamma

from activolt.activity.properties import (
    MOLAR_MASS_WATER_KG_MOL,
    excess_gibbs_energy_rt,
    water_activity,
)
from activolt.activity.published import published_tables
from activolt.constants import GAS_CONSTANT_J_MOL_K
from activolt.data.runs import runs_from_frame
from activolt.errors import FitError, InputError
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import Reduction, reduce_run
from activolt.procedures.properties import (
    DerivedResults,
    derive_results,
    derive_results_of_many,
    model_sensitivities,
)
from activolt.procedures.published import column_values, point_values

#: Parameters a series may hold, by model (values as a user would give them).
HELD: dict[str, list[dict[str, object] | None]] = {
    "hueckel": [None, {"a_angstrom": 4.3}, {"a_angstrom": (4.3, 0.2)}, {"b_kg_mol": 0.1}],
    "davies": [None],
    "limiting": [None],
    "sit": [None, {"epsilon_kg_mol": 0.12}],
    "pitzer": [None, {"cphi_kg2_mol2": 0.0}, {"beta2_kg_mol": 0.0}],
}


def _emf(molality: np.ndarray, temperature_K: np.ndarray, electrolyte: str,
         e0_V: float) -> np.ndarray:
    """E from γ± of the Hückel equation with Bå = 1.5 and b = 0.1 kg/mol (synthetic)."""
    a_gamma = debye_hueckel_constants(temperature_K).agamma
    root = np.sqrt(molality)
    gamma = np.exp(-a_gamma * root / (1.0 + 1.5 * root) + 0.1 * molality)
    return np.array([emf_from_gamma(np.array([m]), np.array([g]), e0_V, electrolyte,
                                    temperature_K=float(t))[0]
                     for m, g, t in zip(molality, gamma, temperature_K, strict=True)])


@st.composite
def _reductions(draw: st.DrawFn) -> list[Reduction]:
    """1 to 4 kinds of series (model, held parameters, number and range of readings,
    temperatures: one, or a spread within the 2 K a run may span), each measured 1 to 3 times
    (so that groups have several reductions, with the same readings or other molalities or
    temperatures of the same count), given in a drawn order; series that cannot be reduced
    are left out."""
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    electrolyte = draw(st.sampled_from(["HCl", "NaCl"]))
    frame_rows = []
    plans: dict[str, tuple[str, dict[str, object] | None]] = {}
    for kind in range(draw(st.integers(1, 4))):
        model = draw(st.sampled_from(sorted(HELD)))
        held = draw(st.sampled_from(HELD[model]))
        n = draw(st.integers(4, 12))
        top = draw(st.sampled_from([0.01, 0.05, 0.2, 1.0]))
        for copy in range(draw(st.integers(1, 3))):
            top_here = top * draw(st.sampled_from([1.0, 1.0, 0.8]))
            molality = np.geomspace(0.001, top_here, n)
            temperature_C = draw(st.sampled_from(["25", "15", "varied"]))
            celsius = (np.linspace(24.2, 25.8, n) if temperature_C == "varied"
                       else np.full(n, float(temperature_C)))
            emf = _emf(molality, celsius + 273.15, electrolyte, 0.2224) + rng.normal(0.0, 1e-5, n)
            name = f"k{kind}c{copy}"
            plans[name] = (model, held)
            frame_rows += [{"molality_mol_kg": m, "emf_V": e, "u_emf_V": 1e-4,
                            "temperature_C": t, "series": name}
                           for m, e, t in zip(molality, emf, celsius, strict=True)]
    runs = runs_from_frame(pd.DataFrame(frame_rows),
                           {"electrolyte": electrolyte, "electrons": 1, "temperature_C": 25.0})
    reductions = []
    for run, (model, held) in zip(runs, plans.values(), strict=True):
        try:
            with np.errstate(all="ignore"):
                reductions.append(reduce_run(run, model, fixed=held))
        except (FitError, InputError):
            continue
    return draw(st.permutations(reductions))


def _reference_properties(reduction: Reduction) -> tuple[dict[str, np.ndarray], list[str]]:
    """The columns and notes of the derived properties of one reduction, computed plainly."""
    run = reduction.run
    usable = run.usable
    lines = np.asarray(column_values(run.points, "line"))[usable]
    molality = run.arrays["molality_mol_kg"][usable]
    temperature = run.arrays["temperature_K"][usable]
    constants = debye_hueckel_constants(temperature)
    values = reduction.model_parameter_values
    names = reduction.uncertain_names or reduction.free_names
    matrix = (reduction.covariance if reduction.uncertain_covariance is None
              else reduction.uncertain_covariance)
    keep = [i for i, name in enumerate(names) if name in values]
    free = tuple(names[i] for i in keep)
    model, electrolyte = reduction.model, reduction.electrolyte
    phi, ln_g, d_phi, d_ln = model_sensitivities(model, electrolyte, molality, constants,
                                                 values, free)
    a_w = water_activity(electrolyte, molality, phi)
    g_rt = excess_gibbs_energy_rt(electrolyte, molality, phi, ln_g)
    cov = np.asarray(matrix, dtype=float)[np.ix_(keep, keep)]
    factor = electrolyte.nu * molality

    def u(gradient: np.ndarray) -> np.ndarray:
        if not free:
            return np.zeros(molality.size)
        return np.sqrt(np.maximum(np.einsum("ij,jk,ik->i", gradient, cov, gradient), 0.0))

    u_phi, u_ln_g = u(d_phi), u(d_ln)
    u_aw = a_w * factor * MOLAR_MASS_WATER_KG_MOL * u_phi
    u_g_rt = u(factor[:, None] * (d_ln - d_phi))
    rt = GAS_CONSTANT_J_MOL_K * temperature
    columns = dict(zip([
        "line", "molality_mol_kg", "temperature_K", "ln_gamma_pm_model", "u_ln_gamma_pm_model",
        "osmotic_coefficient", "u_osmotic_coefficient", "water_activity", "u_water_activity",
        "excess_gibbs_rt_mol_kg", "u_excess_gibbs_rt_mol_kg", "excess_gibbs_J_kg",
        "u_excess_gibbs_J_kg"], [
        lines, molality, temperature, ln_g, u_ln_g, phi, u_phi, a_w, u_aw, g_rt, u_g_rt,
        g_rt * rt, u_g_rt * rt], strict=True))
    held = [p.symbol for p in reduction.parameters if p.fixed]
    notes = [f"from the {model.title} with the fitted parameters; uncertainties (k = 1) from the "
             "covariance of the free parameters"
             + (f" ({', '.join(free)})" if free else " (none free: uncertainties 0)")]
    if held:
        notes.append("held parameter(s) " + ", ".join(held) + " enter at their held values; "
                     "their own uncertainty is not propagated here")
    return columns, notes


def _reference_published(reduction: Reduction) -> dict[str, object] | None:
    """The columns of the published comparison of one reduction, computed plainly."""
    tables = published_tables(reduction.electrolyte, float(reduction.temperature_K))
    if tables is None:
        return None
    gamma = np.asarray(point_values(reduction, "gamma_pm"), dtype=float)
    with_gamma = ~np.isnan(gamma)
    m = np.asarray(point_values(reduction, "molality_mol_kg"), dtype=float)[with_gamma]
    gamma = gamma[with_gamma]
    u_gamma = np.asarray(point_values(reduction, "u_gamma_pm"), dtype=float)[with_gamma]
    consensus = tables.consensus(m)
    difference = gamma - consensus.gamma_pm
    u_difference = np.hypot(u_gamma, consensus.u_published)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(u_difference > 0, difference / u_difference, np.nan)
    return {"molality_mol_kg": m, "gamma_pm": gamma, "u_gamma_pm": u_gamma,
            "gamma_pm_published": consensus.gamma_pm, "interpolated": consensus.interpolated,
            "n_sources": consensus.n_sources.astype(int),
            "published_values": list(consensus.values), "spread_published": consensus.spread,
            "u_published": consensus.u_published, "difference": difference,
            "u_difference": u_difference, "difference_over_u": ratio,
            "source": ["; ".join(tables.sources)] * m.size}


def _same_array(got: np.ndarray, expected: np.ndarray) -> bool:
    """The same type, shape and bytes (NaN and the sign of zero included)."""
    expected = np.asarray(expected)
    return (isinstance(got, np.ndarray) and got.dtype == expected.dtype
            and got.shape == expected.shape
            and np.ascontiguousarray(got).tobytes() == np.ascontiguousarray(expected).tobytes())


def _assert_same(got: DerivedResults, reduction: Reduction) -> None:
    columns, notes = _reference_properties(reduction)
    assert list(got.property_columns) == list(columns)
    for name, expected in columns.items():
        column = got.property_columns[name]
        assert _same_array(column, expected), name
        assert not column.flags.writeable, name
    assert list(got.property_notes) == notes
    published = _reference_published(reduction)
    assert (got.published_columns is None) == (published is None)
    if published is None:
        return
    assert got.published_columns is not None
    assert list(got.published_columns) == list(published)
    for name, expected in published.items():
        column = got.published_columns[name]
        if name == "published_values":
            assert list(column) == expected
        elif name == "source":
            assert list(column) == expected
            continue
        else:
            assert _same_array(column, expected), name
        assert not column.flags.writeable, name


@settings(max_examples=30, deadline=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(reductions=_reductions())
def test_many_reductions_together_give_what_each_gives_alone(reductions):
    together = derive_results_of_many(reductions)
    assert len(together) == len(reductions)
    for reduction, got in zip(reductions, together, strict=True):
        _assert_same(got, reduction)
        alone = derive_results(reduction)
        for mine, its in ((got.property_columns, alone.property_columns),
                          (got.published_columns or {}, alone.published_columns or {})):
            assert list(mine) == list(its)
            for name in mine:
                if isinstance(mine[name], np.ndarray) and mine[name].dtype != object:
                    assert _same_array(mine[name], its[name]), name
                else:
                    assert list(mine[name]) == list(its[name]), name
        assert got.property_notes == alone.property_notes
        assert got.properties.equals(alone.properties)
        assert (got.published is None) == (alone.published is None)
        if got.published is not None:
            assert got.published.equals(alone.published)


def _run_frame(series: str, n: int, top: float, celsius: float, u_emf_V: float = 2e-5
               ) -> list[dict[str, object]]:
    molality = np.geomspace(0.001, top, n)
    emf = _emf(molality, np.full(n, celsius + 273.15), "HCl", 0.2224)
    return [{"molality_mol_kg": m, "emf_V": e, "u_emf_V": u_emf_V, "temperature_C": celsius,
             "series": series} for m, e in zip(molality, emf, strict=True)]


def test_results_come_back_in_the_order_given_whatever_the_groups():
    """Reductions of several groups (models, numbers of readings, temperatures, held
    parameters) interleaved: each result is its own reduction's, in the order given."""
    frame = pd.DataFrame([*_run_frame("a", 8, 0.1, 25.0), *_run_frame("b", 6, 0.01, 25.0, 1e-3),
                          *_run_frame("c", 8, 0.2, 25.0), *_run_frame("d", 8, 0.1, 15.0),
                          *_run_frame("e", 10, 0.5, 25.0)])
    runs = runs_from_frame(frame, {"electrolyte": "HCl", "electrons": 1, "temperature_C": 25.0})
    a, b, c, d, e = runs
    reductions = [reduce_run(a, "hueckel"), reduce_run(b, "davies"), reduce_run(c, "hueckel"),
                  reduce_run(e, "sit"), reduce_run(d, "hueckel"),
                  reduce_run(a, "hueckel", fixed={"a_angstrom": 4.3}), reduce_run(b, "hueckel"),
                  reduce_run(b, "limiting"), reduce_run(e, "pitzer")]
    assert {r.model.name for r in reductions} >= {"hueckel", "davies", "sit", "limiting", "pitzer"}
    together = derive_results_of_many(reductions)
    for reduction, got in zip(reductions, together, strict=True):
        _assert_same(got, reduction)
        usable = reduction.run.usable
        assert _same_array(got.property_columns["molality_mol_kg"],
                           reduction.run.arrays["molality_mol_kg"][usable])
        assert got.property_notes[0].startswith(f"from the {reduction.model.title} ")
    assert derive_results_of_many([]) == []


def test_a_large_group_gives_each_reduction_what_it_gives_alone():
    """A group of more readings in all than the tiled readings kept for the next series
    (90 series of 12 readings, of two temperatures), worked out anew: the same numbers."""
    frame = pd.DataFrame([*_run_frame("a", 12, 0.5, 25.0), *_run_frame("b", 12, 0.5, 26.0)])
    runs = runs_from_frame(frame, {"electrolyte": "HCl", "electrons": 1, "temperature_C": 25.0})
    a, b = (reduce_run(run, "pitzer") for run in runs)
    reductions = [a] * 60 + [b] * 30
    for reduction, got in zip(reductions, derive_results_of_many(reductions), strict=True):
        _assert_same(got, reduction)
    alike = derive_results_of_many([a] * 90)
    for got in alike:
        _assert_same(got, a)
