"""SIT model: the NEA convention against published γ± of HCl, structure, and edge cases."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from activolt.activity import sit
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.physics.water import debye_hueckel_constants

CONSTANTS_25C = debye_hueckel_constants(298.15)
HCL = parse_electrolyte("HCl")

# ε(H⁺, Cl⁻) = 0.12 ± 0.01 kg/mol: NEA thermochemical database reviews, Appendix B (from memory).
EPSILON_HCL = 0.12

# HCl γ±, 25 °C: Robinson & Stokes (1959), Appendix 8.10, and Hamer & Wu (1972) — from memory.
HCL_GAMMA_25C = {0.01: 0.9045, 0.1: 0.796, 0.5: 0.757, 1.0: 0.809, 2.0: 1.009, 3.0: 1.316}

# SIT's accuracy: with one ε per ion pair it reproduces log10 γ± of simple electrolytes to about
# ±0.01 up to I ≈ 3–4 mol/kg (Grenthe, Plyasunov & Spahiu 1997, Modelling in Aquatic Chemistry,
# OECD/NEA, ch. IX — from memory). The largest deviation found here is 0.008 (at 1 mol/kg).
SIT_LOG10_TOLERANCE = 0.01


@pytest.mark.parametrize(("molality", "expected"), list(HCL_GAMMA_25C.items()))
@pytest.mark.literature
def test_hcl_log10_gamma_nea_convention(molality, expected):
    lg = sit.ln_gamma(HCL, molality, CONSTANTS_25C, {"epsilon_kg_mol": EPSILON_HCL})
    assert float(lg[0]) / math.log(10) == pytest.approx(math.log10(expected),
                                                        abs=SIT_LOG10_TOLERANCE)


@pytest.mark.literature
def test_nea_decimal_slope_at_25c():
    # NEA reviews use A = 0.509 at 25 °C (from memory); ours follows from IAPWS water (0.5098).
    assert float(CONSTANTS_25C.agamma_log10[0]) == pytest.approx(0.509, abs=0.0015)


def test_stoichiometric_factor_from_single_ion_sum():
    # log10 γ± = (ν+ log10 γ+ + ν− log10 γ−)/ν with log10 γ+ = … + ε ν− m, log10 γ− = … + ε ν+ m
    for formula in ("HCl", "CaCl2", "Na2SO4", "MgSO4", "LaCl3", "Al2(SO4)3"):
        e = parse_electrolyte(formula)
        expected = (e.nu_cation * e.nu_anion + e.nu_anion * e.nu_cation) / e.nu
        assert sit.stoichiometric_factor(e) == pytest.approx(expected)


def test_debye_hueckel_part_is_charge_weighted_single_ion_mean():
    # (ν+ z+² + ν− z−²)/ν = |z+ z−| by electroneutrality
    e = parse_electrolyte("LaCl3")
    m = np.array([0.05, 0.5])
    lg0 = sit.ln_gamma(e, m, CONSTANTS_25C, {"epsilon_kg_mol": 0.0})
    d = sit.debye_hueckel_term(e, m, CONSTANTS_25C)
    weighted = (e.nu_cation * e.z_cation**2 + e.nu_anion * e.z_anion**2) / e.nu
    np.testing.assert_allclose(lg0, -weighted * d * math.log(10), rtol=1e-14)


def test_conventional_epsilon_from_table_else_zero():
    (p,) = sit.MODEL.parameters
    assert p.linear
    assert p.conventional(parse_electrolyte("CaCl2"), CONSTANTS_25C) == 0.14  # NEA (from memory)
    assert p.conventional(parse_electrolyte("CsI"), CONSTANTS_25C) == 0.0


def test_linear_terms_reproduce_ln_gamma():
    m = np.array([0.0, 0.2, 3.0])
    offset, columns = sit.ln_gamma_terms(HCL, m, CONSTANTS_25C)
    np.testing.assert_allclose(
        offset + 0.12 * columns["epsilon_kg_mol"],
        sit.ln_gamma(HCL, m, CONSTANTS_25C, {"epsilon_kg_mol": 0.12}), rtol=1e-14,
    )


def test_scalar_ndarray_series_and_nan():
    p = {"epsilon_kg_mol": 0.12}
    assert sit.ln_gamma(HCL, 0.1, CONSTANTS_25C, p).shape == (1,)
    assert sit.osmotic_coefficient(HCL, np.array([0.1, 1.0]), CONSTANTS_25C, p).shape == (2,)
    assert sit.ln_gamma(HCL, pd.Series([0.1, 1.0]), CONSTANTS_25C, p).shape == (2,)
    out = sit.osmotic_coefficient(HCL, np.array([np.nan, 0.0]), CONSTANTS_25C, p)
    assert np.isnan(out[0]) and out[1] == 1.0


def test_unknown_or_missing_parameter_names_raise():
    with pytest.raises(ValueError, match=r"unknown: eps.*valid names: epsilon_kg_mol"):
        sit.ln_gamma(HCL, 0.1, CONSTANTS_25C, {"epsilon_kg_mol": 0.1, "eps": 0.1})
    with pytest.raises(ValueError, match="missing: epsilon_kg_mol"):
        sit.osmotic_coefficient(HCL, 0.1, CONSTANTS_25C, {})


def test_regression_pin_cacl2():
    # regression pin: values the code produced (CaCl2, ε = 0.14, 25 °C)
    out = sit.ln_gamma(parse_electrolyte("CaCl2"), np.array([0.1, 1.0]), CONSTANTS_25C,
                       {"epsilon_kg_mol": 0.14})
    np.testing.assert_allclose(out, [-0.6629073439, -0.7002797019], atol=1e-8)


def test_conventional_uncertainty():
    (p,) = sit.MODEL.parameters
    # NEA reviews (from memory): ε(Ca²⁺, Cl⁻) = 0.14 ± 0.01, read as a 95 % interval
    assert p.conventional_uncertainty(parse_electrolyte("CaCl2"), CONSTANTS_25C) == 0.005
    # pair not tabulated: rectangular over the table's span, (0.33 − (−0.28))/(2√3)
    value = p.conventional_uncertainty(parse_electrolyte("CsI"), CONSTANTS_25C)
    assert value == pytest.approx(0.61 / (2 * math.sqrt(3)), rel=1e-12)


def test_epsilon_is_looked_up_with_the_ions_charges():
    # ε(Cu²⁺, Cl⁻) = 0.08 kg/mol (NEA TDB reviews, Appendix B; from memory) belongs to CuCl2
    # only: CuCl (Cu⁺) has no published ε here and falls back to the convention 0.
    c = debye_hueckel_constants(np.array([298.15]))
    assert sit.conventional_epsilon(parse_electrolyte("CuCl2"), c) == 0.08
    assert sit.conventional_epsilon(parse_electrolyte("CuCl"), c) == 0.0
