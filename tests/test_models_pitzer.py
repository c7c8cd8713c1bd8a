"""Pitzer model: literature checks of γ± and φ at 25 °C, edge cases, and regression pins."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from activolt.activity import pitzer
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.errors import FitError
from activolt.physics.water import DebyeHueckelConstants, debye_hueckel_constants
from activolt.reference import load_table
from activolt.reference.parameters import pitzer_parameters

CONSTANTS_25C = debye_hueckel_constants(298.15)  # A_φ = 0.3913 (IAPWS water)
# Pitzer & Mayorga (1973) used A_φ = 0.392 at 25 °C (reference-values.md).
CONSTANTS_PM1973 = DebyeHueckelConstants(
    temperature=CONSTANTS_25C.temperature, aphi=np.array([0.392]), b=CONSTANTS_25C.b
)


def params(formula: str) -> dict[str, float]:
    entry = pitzer_parameters(formula)
    assert entry is not None
    return {name: entry[name] for name in pitzer.PARAMETER_NAMES}


# ----------------------------------------------------------------------------------------------
# Literature checks
# ----------------------------------------------------------------------------------------------

# Mean activity coefficients γ± (molality scale), 25 °C.
# HCl, KCl: Robinson & Stokes, Electrolyte Solutions (2nd ed. rev. 1959), Appendix 8.10, and
# Hamer & Wu (1972), J. Phys. Chem. Ref. Data 1, 1047 — from memory. HCl at 0.001 and 0.01 is
# tabulated as 0.965–0.966 and 0.904–0.905; the midpoint is used.
# NaCl ≥ 0.1 mol/kg: Pitzer, Peiper & Busey (1984), J. Phys. Chem. Ref. Data 13, 1 (confirmed);
# NaCl < 0.1 mol/kg: from memory; at 2 mol/kg 0.668–0.669, midpoint used.
# CaCl2: CRC Handbook table of mean activity coefficients (after Hamer & Wu 1972; confirmed).
GAMMA_25C: dict[str, dict[float, float]] = {
    "HCl": {0.001: 0.9655, 0.005: 0.929, 0.01: 0.9045, 0.05: 0.830, 0.1: 0.796, 0.5: 0.757,
            1.0: 0.809, 2.0: 1.009, 3.0: 1.316},
    "NaCl": {0.001: 0.965, 0.005: 0.928, 0.01: 0.902, 0.05: 0.821, 0.1: 0.778, 0.25: 0.720,
             0.5: 0.681, 0.75: 0.665, 1.0: 0.657, 2.0: 0.6685, 3.0: 0.714, 4.0: 0.782,
             5.0: 0.873, 6.0: 0.987},
    "KCl": {0.001: 0.965, 0.005: 0.927, 0.01: 0.901, 0.05: 0.816, 0.1: 0.770, 0.5: 0.649,
            1.0: 0.604, 2.0: 0.573, 3.0: 0.569},
    "CaCl2": {0.001: 0.888, 0.005: 0.787, 0.01: 0.727, 0.05: 0.577, 0.1: 0.517, 0.5: 0.444,
              1.0: 0.495, 2.0: 0.784},
}

# Tolerance 0.003: the tables print three decimals, and the Pitzer & Mayorga fits are quoted to
# reproduce them to about this (reference-values.md). CaCl2 above 0.1 mol/kg does not meet it
# with the (from memory) Pitzer & Mayorga 1973 parameters: the deviation grows to 0.005 at 0.5,
# 0.007 at 1 and 0.020 at 2 mol/kg against the CRC table (0.012 against Robinson & Stokes' 0.792
# at 2 mol/kg, from memory). Rard & Clegg (1997, J. Chem. Eng. Data 42, 819) found that the
# three-parameter Pitzer equations leave cyclic deviations for CaCl2(aq). Those points are
# checked to 0.025 here and flagged in the report instead of hidden.
GAMMA_TOLERANCE = 0.003
CACL2_KNOWN_DEVIATION_TOLERANCE = 0.025

LITERATURE_POINTS = [
    (salt, m, gamma) for salt, table in GAMMA_25C.items() for m, gamma in table.items()
]


@pytest.mark.parametrize("constants", [CONSTANTS_25C, CONSTANTS_PM1973], ids=["aphi0.3913",
                                                                               "aphi0.392"])
@pytest.mark.parametrize(("salt", "molality", "expected"), LITERATURE_POINTS)
@pytest.mark.literature
def test_gamma_matches_published_tables(salt, molality, expected, constants):
    entry = pitzer_parameters(salt)
    assert molality <= entry["max_molality_mol_kg"]
    value = float(np.exp(pitzer.ln_gamma(parse_electrolyte(salt), molality, constants,
                                         params(salt)))[0])
    tolerance = GAMMA_TOLERANCE
    if salt == "CaCl2" and molality > 0.1:
        tolerance = CACL2_KNOWN_DEVIATION_TOLERANCE
    assert value == pytest.approx(expected, abs=tolerance)


# Osmotic coefficients φ, 25 °C: Robinson & Stokes (1959), Appendix 8.10 — from memory.
# Printed to four decimals for NaCl and KCl, three for HCl; the tolerance 0.003 is that of the
# fits, wider than the printed digits.
PHI_25C: dict[str, dict[float, float]] = {
    "HCl": {0.1: 0.943, 0.5: 0.974, 1.0: 1.039, 2.0: 1.188, 3.0: 1.348},
    "NaCl": {0.1: 0.9324, 0.5: 0.9209, 1.0: 0.9355, 2.0: 0.9833, 3.0: 1.0453, 4.0: 1.1158,
             5.0: 1.1916, 6.0: 1.2706},
    "KCl": {0.1: 0.9266, 0.5: 0.9000, 1.0: 0.8972, 2.0: 0.9124, 3.0: 0.9367, 4.0: 0.9647},
}


@pytest.mark.parametrize(
    ("salt", "molality", "expected"),
    [(salt, m, phi) for salt, table in PHI_25C.items() for m, phi in table.items()],
)
@pytest.mark.literature
def test_osmotic_coefficient_matches_published_tables(salt, molality, expected):
    value = float(pitzer.osmotic_coefficient(parse_electrolyte(salt), molality, CONSTANTS_25C,
                                             params(salt))[0])
    assert value == pytest.approx(expected, abs=0.003)


@pytest.mark.literature
def test_largest_deviation_per_salt_is_as_reported():
    # Regression pin of the deviations stated in the report (values the code produced, A_φ from
    # activolt.physics.water): a change of parameters or equations that moves them shows up here.
    largest = {}
    for salt, table in GAMMA_25C.items():
        m = np.array(list(table))
        calc = np.exp(pitzer.ln_gamma(parse_electrolyte(salt), m, CONSTANTS_25C, params(salt)))
        largest[salt] = float(np.max(np.abs(calc - np.array(list(table.values())))))
    assert largest == pytest.approx(
        {"HCl": 0.0028, "NaCl": 0.0009, "KCl": 0.0024, "CaCl2": 0.0195}, abs=2e-4
    )


def test_pitzer_peiper_busey_nacl_is_stored_with_cphi_not_c():
    # Pitzer, Peiper & Busey (1984), confirmed: Cφ = 0.00140 (their file's C = Cφ/2 = 0.00070).
    assert params("NaCl")["cphi_kg2_mol2"] == 0.00140


def test_cacl2_is_stored_unscaled():
    # Pitzer & Mayorga (1973) print (4/3)β0 = 0.4212, (4/3)β1 = 2.152 (from memory).
    p = params("CaCl2")
    assert 4 / 3 * p["beta0_kg_mol"] == pytest.approx(0.4212, abs=1e-4)
    assert 4 / 3 * p["beta1_kg_mol"] == pytest.approx(2.152, abs=1e-3)


# MgSO4 against Robinson & Stokes (1959), Appendix 8.10 (from memory): γ± = 0.150 / 0.0675 /
# 0.0485 / 0.0417 at 0.1 / 0.5 / 1 / 2 mol/kg. The shipped Pitzer & Mayorga (1974) row (from
# memory, not confirmed) gives 11–13 % more. The excess is nearly the same in ln γ± at every
# molality from 0.1 to 2 mol/kg: above I ≈ 0.4 the β(2) term m·h(α2√I) → 2m/(α2² I) =
# 1/(2α2²) ≈ 0.0035 kg/mol (I = 4m), a constant, so a shift of ln γ± there is set by β(2) —
# not by an α (α1 = 2 instead of 1.4 gives −30 % at 2 mol/kg, α2 = 50 gives +26 %) nor by a
# scaling (2:2 salts have 2ν+ν−/ν = 1, nothing to scale). Which normalisation is right is not
# settled here: checked as a known deviation, with the ratio pinned so a change shows up.
MGSO4_ROBINSON_STOKES = {0.1: 0.150, 0.5: 0.0675, 1.0: 0.0485, 2.0: 0.0417}


@pytest.mark.parametrize(("molality", "expected"), sorted(MGSO4_ROBINSON_STOKES.items()))
@pytest.mark.literature
def test_mgso4_known_deviation_from_robinson_stokes(molality, expected):
    value = float(np.exp(pitzer.ln_gamma(parse_electrolyte("MgSO4"), molality, CONSTANTS_25C,
                                         params("MgSO4")))[0])
    assert 1.09 <= value / expected <= 1.14


def test_mgso4_deviation_is_a_constant_shift_of_ln_gamma():
    m = np.array(sorted(MGSO4_ROBINSON_STOKES))
    ln_calc = pitzer.ln_gamma(parse_electrolyte("MgSO4"), m, CONSTANTS_25C, params("MgSO4"))
    shift = ln_calc - np.log([MGSO4_ROBINSON_STOKES[x] for x in m])
    assert np.ptp(shift) < 0.025 and 0.09 < shift.mean() < 0.13


def test_k2so4_is_stored_unscaled():
    # Pitzer & Mayorga (1973), Table III print (4/3)β0 = 0.0666, (4/3)β1 = 1.039 (from memory).
    p = params("K2SO4")
    assert 4 / 3 * p["beta0_kg_mol"] == pytest.approx(0.0666, abs=1e-4)
    assert 4 / 3 * p["beta1_kg_mol"] == pytest.approx(1.039, abs=1e-3)
    assert p["cphi_kg2_mol2"] == 0.0


def test_lacl3_is_stored_unscaled():
    # Pitzer & Mayorga (1973), Table VIII: unscaled 0.6105, 5.487, −0.0320 (confirmed in a
    # secondary copy); printed (3/2)β0 = 0.9158, (3/2)β1 = 8.231, (3^{3/2}/2)Cφ =
    # −0.0831 (from memory).
    p = params("LaCl3")
    assert (p["beta0_kg_mol"], p["beta1_kg_mol"], p["cphi_kg2_mol2"]) == (0.6105, 5.487, -0.0320)
    assert 1.5 * p["beta0_kg_mol"] == pytest.approx(0.9158, abs=1e-4)
    assert 1.5 * p["beta1_kg_mol"] == pytest.approx(8.231, abs=1e-3)
    assert 3**1.5 / 2 * p["cphi_kg2_mol2"] == pytest.approx(-0.0831, abs=1e-4)


# ----------------------------------------------------------------------------------------------
# Structure and edge cases
# ----------------------------------------------------------------------------------------------

# α1, α2 by charge type: Pitzer & Mayorga (1973) α1 = 2 when an ion is univalent; Pitzer &
# Mayorga (1974) α1 = 1.4, α2 = 12 for 2:2; Pitzer & Silvester (1978) α1 = 2.0, α2 = 50 for 3:2
# and 4:2; as summarised in Pitzer (1991), Activity Coefficients in Electrolyte Solutions, 2nd
# ed., ch. 3 — from memory (not read in a stored copy).
@pytest.mark.parametrize(
    ("formula", "charge_type", "expected"),
    [
        ("NaCl", "1:1", (2.0, 12.0)),
        ("CaCl2", "2:1", (2.0, 12.0)),
        ("Na2SO4", "1:2", (2.0, 12.0)),
        ("LaCl3", "3:1", (2.0, 12.0)),
        ("ThCl4", "4:1", (2.0, 12.0)),
        ("MgSO4", "2:2", (1.4, 12.0)),
        ("Al2(SO4)3", "3:2", (2.0, 50.0)),
        ("Th(SO4)2", "4:2", (2.0, 50.0)),
    ],
)
@pytest.mark.literature
def test_alphas_by_charge_type(formula, charge_type, expected):
    electrolyte = parse_electrolyte(formula)
    assert electrolyte.charge_type == charge_type
    assert pitzer.alphas(electrolyte) == expected
    assert pitzer.has_beta2(electrolyte) == (min(electrolyte.z_cation,
                                                 -electrolyte.z_anion) >= 2)


def test_alphas_refused_for_unpublished_high_valence_types():
    # 3:3 (AlPO4): no α1, α2 published by Pitzer (1991, ch. 3; from memory) — none made up.
    with pytest.raises(ValueError, match="no published Pitzer α1, α2 for 3:3"):
        pitzer.alphas(parse_electrolyte("AlPO4"))


def test_h_series_and_closed_form_agree():
    x = np.array([0.049999, 0.050001])
    # continuity across the switch between the series and the closed form
    assert abs(np.diff(pitzer.h_function(x))[0]) < 1e-5
    assert float(pitzer.h_function(np.array([0.0]))[0]) == 2.0


def test_linear_terms_reproduce_ln_gamma_and_phi():
    e = parse_electrolyte("MgSO4")
    p = params("MgSO4")
    m = np.array([0.01, 0.3, 2.0])
    for terms, full in ((pitzer.ln_gamma_terms, pitzer.ln_gamma),
                        (pitzer.osmotic_terms, pitzer.osmotic_coefficient)):
        offset, columns = terms(e, m, CONSTANTS_25C)
        rebuilt = offset + sum(p[k] * columns[k] for k in pitzer.PARAMETER_NAMES)
        np.testing.assert_allclose(rebuilt, full(e, m, CONSTANTS_25C, p), rtol=1e-14)


def test_scalar_ndarray_series_and_nan():
    e = parse_electrolyte("HCl")
    p = params("HCl")
    scalar = pitzer.ln_gamma(e, 0.1, CONSTANTS_25C, p)
    assert scalar.shape == (1,)
    array = pitzer.ln_gamma(e, np.array([0.1, 0.2]), CONSTANTS_25C, p)
    assert array.shape == (2,) and array[0] == scalar[0]
    series = pitzer.osmotic_coefficient(e, pd.Series([0.1, 0.2]), CONSTANTS_25C, p)
    assert isinstance(series, np.ndarray) and series.shape == (2,)
    with_nan = pitzer.ln_gamma(e, np.array([np.nan, 0.1]), CONSTANTS_25C, p)
    assert np.isnan(with_nan[0]) and np.isfinite(with_nan[1])
    assert np.isnan(pitzer.osmotic_coefficient(e, np.nan, CONSTANTS_25C, p)[0])


def test_zero_molality_is_ideal():
    e = parse_electrolyte("MgSO4")
    assert pitzer.ln_gamma(e, 0.0, CONSTANTS_25C, params("MgSO4"))[0] == 0.0
    assert pitzer.osmotic_coefficient(e, 0.0, CONSTANTS_25C, params("MgSO4"))[0] == 1.0


def test_unknown_or_missing_parameter_names_raise():
    e = parse_electrolyte("HCl")
    with pytest.raises(ValueError, match=r"unknown: beta0.*valid names: beta0_kg_mol"):
        pitzer.ln_gamma(e, 0.1, CONSTANTS_25C, {**params("HCl"), "beta0": 0.1})
    incomplete = params("HCl")
    del incomplete["beta2_kg_mol"]
    with pytest.raises(ValueError, match="missing: beta2_kg_mol"):
        pitzer.osmotic_coefficient(e, 0.1, CONSTANTS_25C, incomplete)
    with pytest.raises(KeyError, match="it has: beta0_kg_mol"):
        pitzer.MODEL.parameter("beta3_kg_mol")


def test_conventional_values_come_from_the_table_else_the_charge_type():
    kcl, cacl2, csi = (parse_electrolyte(f) for f in ("KCl", "CaCl2", "CsI"))
    by_name = {p.name: p for p in pitzer.MODEL.parameters}
    # Pitzer & Mayorga (1973), Tables II and III (from memory)
    assert by_name["beta0_kg_mol"].conventional(kcl, CONSTANTS_25C) == 0.04835
    assert by_name["beta1_kg_mol"].conventional(cacl2, CONSTANTS_25C) == 1.614
    # CsI has no row: never 0 held as if published, but the mean of the table's 1:1 salts
    table = load_table("pitzer_parameters")
    one_one = table[table["charge_type"] == "1:1"]
    for name in ("beta0_kg_mol", "beta1_kg_mol", "cphi_kg2_mol2"):
        assert by_name[name].conventional(csi, CONSTANTS_25C) == pytest.approx(
            one_one[name].mean(), rel=1e-12)
        assert by_name[name].conventional_uncertainty(csi, CONSTANTS_25C) == pytest.approx(
            one_one[name].std(ddof=1), rel=1e-12)
    assert by_name["beta2_kg_mol"].conventional(csi, CONSTANTS_25C) == 0.0
    assert by_name["beta2_kg_mol"].conventional_uncertainty(csi, CONSTANTS_25C) == 0.0
    assert all(p.linear for p in pitzer.MODEL.parameters)


def test_two_one_and_one_two_are_pooled_for_a_salt_without_row():
    # Li2SO4 (1:2) has no row: mean of the table's 4 2:1 and 2 1:2 salts (the equations are
    # symmetric in the ions; Pitzer 1991, ch. 3).
    table = load_table("pitzer_parameters")
    pooled = table[table["charge_type"].isin(["2:1", "1:2"])]
    convention = pitzer.parameter_convention(parse_electrolyte("Li2SO4"), "beta0_kg_mol")
    assert convention.basis == "charge type"
    assert convention.value == pytest.approx(pooled["beta0_kg_mol"].mean(), rel=1e-12)
    assert convention.uncertainty == pytest.approx(pooled["beta0_kg_mol"].std(ddof=1),
                                                   rel=1e-12)


def test_beta2_of_a_two_two_salt_carries_the_charge_type_spread():
    table = load_table("pitzer_parameters")
    two_two = table[table["charge_type"] == "2:2"]["beta2_kg_mol"]
    mgso4 = pitzer.parameter_convention(parse_electrolyte("MgSO4"), "beta2_kg_mol")
    assert mgso4.basis == "published" and mgso4.value == -37.23  # Pitzer & Mayorga (1974)
    assert mgso4.uncertainty == pytest.approx(two_two.std(ddof=1), rel=1e-12)
    beso4 = pitzer.parameter_convention(parse_electrolyte("BeSO4"), "beta2_kg_mol")
    assert beso4.basis == "charge type"
    assert beso4.value == pytest.approx(two_two.mean(), rel=1e-12)


def test_no_salt_of_the_charge_type_is_refused():
    # 3:2: the table holds none, so nothing to take a convention from.
    with pytest.raises(FitError, match=r"Al2\(SO4\)3.*no 3:2 electrolyte.*beta2_kg_mol"):
        pitzer.parameter_convention(parse_electrolyte("Al2(SO4)3"), "beta0_kg_mol")
    with pytest.raises(KeyError, match="it has: beta0_kg_mol"):
        pitzer.parameter_convention(parse_electrolyte("NaCl"), "beta3_kg_mol")


def test_published_range_is_available_for_warnings():
    entry = pitzer.published_parameters(parse_electrolyte("CaCl2"))
    assert entry is not None and entry["max_molality_mol_kg"] == 2.5


# ----------------------------------------------------------------------------------------------
# Regression pins (values the code produced; not literature)
# ----------------------------------------------------------------------------------------------

def test_regression_pin_mgso4_and_lacl3():
    # regression pin: MgSO4 with the 2:2 parameters of the table; LaCl3 (3:1) with made-up ones.
    mgso4 = pitzer.ln_gamma(parse_electrolyte("MgSO4"), np.array([0.1, 1.0]), CONSTANTS_25C,
                            params("MgSO4"))
    np.testing.assert_allclose(np.exp(mgso4), [0.16623, 0.05483], atol=2e-5)
    lacl3 = {"beta0_kg_mol": 0.6, "beta1_kg_mol": 5.6, "beta2_kg_mol": 0.0,
             "cphi_kg2_mol2": -0.025}
    phi = pitzer.osmotic_coefficient(parse_electrolyte("LaCl3"), 0.5, CONSTANTS_25C, lacl3)
    assert float(phi[0]) == pytest.approx(0.904804, abs=1e-6)
