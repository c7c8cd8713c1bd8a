"""Osmotic coefficient, water activity and excess Gibbs energy from a fitted model.

Sources of check values:
- NaCl, 1 mol/kg, 25 °C: φ = 0.9355 (Robinson & Stokes 1959, Electrolyte Solutions, Appendix
  8.10; Pitzer, Peiper & Busey 1984 give 0.936 — both from memory) and a_w = 0.9669 (Robinson &
  Stokes 1959, Appendix 8.3; from memory). Tolerances 0.003 and 0.001 cover the spread between
  the tables and the models.
- NaCl γ± at 25 °C from 0.1 to 4 mol/kg: Pitzer, Peiper & Busey (1984), J. Phys. Chem. Ref.
  Data 13, 1 (confirmed), used to generate the readings.
- The laws (Gibbs–Duhem): ∂(G^E/RT)/∂m = ν ln γ± and ln a_w = −ν M_w [m + m ln γ± − ∫₀^m ln γ±
  dm'] (Robinson & Stokes 1959, ch. 2; Pitzer 1991, ch. 3).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad
from synthetic import emf_from_gamma, write_run

from activolt.activity import MODELS, pitzer
from activolt.activity.properties import (
    MOLAR_MASS_WATER_KG_MOL,
    excess_gibbs_energy_rt,
    water_activity,
)
from activolt.activity.published import published_gamma
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import read_run
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run
from activolt.procedures.properties import derived_properties

E0_TRUTH_V = 0.22234  # Bates & Bower (1954), Table 1, 25 °C; an arbitrary truth here
NACL_1M_PHI = 0.9355  # Robinson & Stokes (1959), Appendix 8.10 (from memory)
NACL_1M_WATER_ACTIVITY = 0.9669  # Robinson & Stokes (1959), Appendix 8.3 (from memory)
NACL = parse_electrolyte("NaCl")


@pytest.fixture(scope="module")
def nacl_reduction(tmp_path_factory):
    table = published_gamma("NaCl", 298.15)
    table = table[(table["molality_mol_kg"] >= 0.1) & (table["molality_mol_kg"] <= 4.0)]
    m, gamma = table["molality_mol_kg"].to_numpy(), table["gamma_pm"].to_numpy()
    emf = emf_from_gamma(m, gamma, E0_TRUTH_V, "NaCl")
    emf = emf + np.random.default_rng(0).normal(0.0, 1e-5, m.size)
    run = read_run(write_run(tmp_path_factory.mktemp("nacl"), m, emf, u_emf_V=2.5e-5,
                             electrolyte="NaCl"))
    return reduce_run(run, "pitzer", {"beta2_kg_mol": 0.0})


def test_nacl_one_molal_against_tables(nacl_reduction):
    props = derived_properties(nacl_reduction)
    row = props[props["molality_mol_kg"] == 1.0].iloc[0]
    assert row["osmotic_coefficient"] == pytest.approx(NACL_1M_PHI, abs=0.003)
    assert row["water_activity"] == pytest.approx(NACL_1M_WATER_ACTIVITY, abs=0.001)
    # With at least one parameter fitted, the uncertainties are positive and small.
    assert len(nacl_reduction.free_names) > 1
    assert 0.0 < row["u_osmotic_coefficient"] < 0.003
    assert 0.0 < row["u_water_activity"] < 1e-4


def test_columns_and_rows(nacl_reduction):
    props = derived_properties(nacl_reduction)
    assert list(props["molality_mol_kg"]) == [0.1, 0.25, 0.5, 0.75, 1.0, 2.0, 3.0, 4.0]
    for column in ("osmotic_coefficient", "water_activity", "excess_gibbs_rt_mol_kg",
                   "excess_gibbs_J_kg", "ln_gamma_pm_model"):
        assert column in props and f"u_{column}" in props
        assert props[column].notna().all() and (props[f"u_{column}"] >= 0).all()
    # The model γ± agrees with the reduction's own model column.
    np.testing.assert_allclose(np.exp(props["ln_gamma_pm_model"]),
                               nacl_reduction.points["gamma_pm_model"], rtol=1e-12)
    # G^E in J/kg is RT times G^E/RT (R from CODATA 2018: 8.314462618 J/(mol K)).
    np.testing.assert_allclose(props["excess_gibbs_J_kg"],
                               props["excess_gibbs_rt_mol_kg"] * 8.314462618 * 298.15,
                               rtol=1e-9)
    assert props.attrs["notes"]


def test_linear_model_uncertainty_is_exact(nacl_reduction):
    # φ is linear in the Pitzer parameters: u²(φ) = cᵀ V c with the columns of osmotic_terms.
    props = derived_properties(nacl_reduction)
    m = props["molality_mol_kg"].to_numpy()
    _, columns = pitzer.osmotic_terms(NACL, m, debye_hueckel_constants(np.full(m.size, 298.15)))
    free = nacl_reduction.free_names[1:]
    c = np.column_stack([columns[n] for n in free])
    v = nacl_reduction.covariance[1:, 1:]
    expected = np.sqrt(np.einsum("ij,jk,ik->i", c, v, c))
    np.testing.assert_allclose(props["u_osmotic_coefficient"], expected, rtol=1e-6)


def test_nonlinear_model_uncertainty_against_monte_carlo(tmp_path):
    # Hückel: φ depends non-linearly on å. Linear propagation and 4000 draws from the parameter
    # covariance agree within 10 % (Monte Carlo standard error of a s.d. ≈ 1/√(2·4000) ≈ 1 %).
    table = published_gamma("HCl", 298.15)
    table = table[table["molality_mol_kg"] <= 1.0]
    m, gamma = table["molality_mol_kg"].to_numpy(), table["gamma_pm"].to_numpy()
    emf = emf_from_gamma(m, gamma, E0_TRUTH_V) + np.random.default_rng(2).normal(0, 1e-5, m.size)
    reduction = reduce_run(read_run(write_run(tmp_path, m, emf, u_emf_V=3e-5)), "hueckel")
    free = reduction.free_names[1:]
    assert set(free) == {"a_angstrom", "b_kg_mol"}
    props = derived_properties(reduction)
    draws = np.random.default_rng(11).multivariate_normal(
        [reduction.parameter_values[n] for n in free], reduction.covariance[1:, 1:], 4000)
    constants = debye_hueckel_constants(np.full(m.size, 298.15))
    model = MODELS["hueckel"]
    phis = np.array([model.osmotic_coefficient(reduction.electrolyte, m, constants,
                                               dict(zip(free, d, strict=True))) for d in draws])
    np.testing.assert_allclose(props["u_osmotic_coefficient"], phis.std(axis=0), rtol=0.10)


def test_no_free_parameter_gives_zero_uncertainty(nacl_reduction):
    # Every Pitzer parameter held by the user: only E° is fitted, nothing propagates to φ.
    held = nacl_reduction.parameter_values
    reduction = reduce_run(nacl_reduction.run, "pitzer", held)
    assert reduction.free_names == ("standard_potential_V",)
    props = derived_properties(reduction)
    assert (props["u_osmotic_coefficient"] == 0).all()
    assert (props["u_excess_gibbs_rt_mol_kg"] == 0).all()
    assert any("none free" in n for n in props.attrs["notes"])
    np.testing.assert_allclose(props["osmotic_coefficient"],
                               derived_properties(nacl_reduction)["osmotic_coefficient"],
                               rtol=1e-12)


def test_flagged_rows_are_left_out(tmp_path):
    (tmp_path / "r.csv").write_text(
        "molality_mol_kg,emf_V\n0.01,0.46411\n0.02,0.43022\n0.03,\n0.05,0.38622\n0.1,0.35240\n",
        encoding="utf-8")
    (tmp_path / "r.toml").write_text('electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n',
                                     encoding="utf-8")
    reduction = reduce_run(read_run(tmp_path / "r.csv"), "hueckel")
    props = derived_properties(reduction)
    assert list(props["molality_mol_kg"]) == [0.01, 0.02, 0.05, 0.1]
    assert list(props["line"]) == [2, 3, 5, 6]


# --- the pure functions -------------------------------------------------------------------------

def test_water_activity_inputs():
    # Scalar, ndarray, pandas; NaN passes through; m = 0 gives 1.
    assert float(water_activity(NACL, 1.0, NACL_1M_PHI)) == pytest.approx(
        NACL_1M_WATER_ACTIVITY, abs=1e-4)
    a = water_activity(NACL, np.array([0.0, 1.0, np.nan]), np.array([1.0, 0.9355, 0.9]))
    assert a[0] == 1.0 and math.isnan(a[2])
    series = water_activity(NACL, pd.Series([0.5, 1.0]), pd.Series([0.92, 0.9355]))
    assert series.shape == (2,)
    # ν = 3 for CaCl2: ln a_w = −3 m M_w φ.
    cacl2 = parse_electrolyte("CaCl2")
    assert float(water_activity(cacl2, 1.0, 1.0)) == pytest.approx(
        math.exp(-3 * MOLAR_MASS_WATER_KG_MOL), rel=1e-15)


def test_excess_gibbs_inputs():
    assert float(excess_gibbs_energy_rt(NACL, 0.0, 1.0, 0.0)) == 0.0
    g = excess_gibbs_energy_rt(NACL, np.array([1.0, np.nan]), np.array([0.9355, 0.9]),
                               np.log([0.657, 0.7]))
    assert g[0] == pytest.approx(2 * (1 - 0.9355 + math.log(0.657)), rel=1e-15)
    assert math.isnan(g[1])
    assert excess_gibbs_energy_rt(NACL, pd.Series([1.0]), pd.Series([0.9]),
                                  pd.Series([-0.4])).shape == (1,)


# --- laws, for any model: hypothesis, few examples ----------------------------------------------

#: Sensible parameter ranges (common practice: the spread of published values, widened).
RANGES = {
    "a_angstrom": (2.0, 9.0), "b_kg_mol": (-0.3, 0.5), "epsilon_kg_mol": (-0.2, 0.3),
    "beta0_kg_mol": (-0.1, 0.4), "beta1_kg_mol": (0.0, 2.0), "beta2_kg_mol": (-20.0, 0.0),
    "cphi_kg2_mol2": (-0.02, 0.02),
}


@st.composite
def cases(draw):
    model = MODELS[draw(st.sampled_from(sorted(MODELS)))]
    electrolyte = parse_electrolyte(draw(st.sampled_from(["NaCl", "CaCl2"])))
    parameters = {name: draw(st.floats(*RANGES[name])) for name in model.parameter_names}
    molality = draw(st.floats(0.01, 3.0))
    return model, electrolyte, parameters, molality


@settings(max_examples=12, deadline=None)
@given(cases())
def test_excess_gibbs_derivative_is_nu_ln_gamma(case):
    # ∂(G^E/RT)/∂m = ν ln γ± (Gibbs–Duhem), by a central difference with h = 1e-4 m.
    model, electrolyte, parameters, m = case
    constants = debye_hueckel_constants(298.15)

    def g_rt(x: float) -> float:
        x_ = np.array([x])
        phi = model.osmotic_coefficient(electrolyte, x_, constants, parameters)
        ln_g = model.ln_gamma(electrolyte, x_, constants, parameters)
        return float(excess_gibbs_energy_rt(electrolyte, x_, phi, ln_g)[0])

    h = 1e-4 * m
    derivative = (g_rt(m + h) - g_rt(m - h)) / (2 * h)
    ln_g = float(model.ln_gamma(electrolyte, np.array([m]), constants, parameters)[0])
    assert derivative == pytest.approx(electrolyte.nu * ln_g, rel=1e-6, abs=1e-9)


@settings(max_examples=12, deadline=None)
@given(cases())
def test_water_activity_matches_gibbs_duhem_integral(case):
    # ln a_w = −ν M_w [m + m ln γ±(m) − ∫₀^m ln γ± dm'] (Gibbs–Duhem, integrated by parts);
    # with m' = s² the integrand 2s ln γ±(s²) is smooth at 0.
    model, electrolyte, parameters, m = case
    constants = debye_hueckel_constants(298.15)

    def ln_gamma(x: float) -> float:
        return float(model.ln_gamma(electrolyte, np.array([x]), constants, parameters)[0])

    integral, _ = quad(lambda s: 2.0 * s * ln_gamma(s * s), 0.0, math.sqrt(m),
                       epsabs=1e-13, epsrel=1e-12)
    ln_aw_integral = -electrolyte.nu * MOLAR_MASS_WATER_KG_MOL * (m + m * ln_gamma(m)
                                                                 - integral)
    phi = model.osmotic_coefficient(electrolyte, np.array([m]), constants, parameters)
    ln_aw = float(np.log(water_activity(electrolyte, m, phi))[0])
    assert ln_aw == pytest.approx(ln_aw_integral, rel=1e-8, abs=1e-12)
