"""Electrolyte stoichiometry, ionic strength, m± and the Nernst factor.

Stoichiometry and charges are common practice (any general chemistry text); the Nernst factor
2RT/F = 51.3852 mV at 25 °C follows from RT/F = 25.6926 mV (reference-values.md, derived).
"""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from activolt.chemistry.electrolytes import (
    ANIONS,
    CATIONS,
    MAX_STOICHIOMETRIC_NUMBER,
    nernst_factor,
    parse_electrolyte,
)


@pytest.mark.parametrize(("formula", "nu", "z", "i_factor", "charge_type"), [
    # common practice
    ("HCl", (1, 1), (1, -1), 1.0, "1:1"),
    ("NaCl", (1, 1), (1, -1), 1.0, "1:1"),
    ("CaCl2", (1, 2), (2, -1), 3.0, "2:1"),
    ("Na2SO4", (2, 1), (1, -2), 3.0, "1:2"),
    ("LaCl3", (1, 3), (3, -1), 6.0, "3:1"),
    ("MgSO4", (1, 1), (2, -2), 4.0, "2:2"),
    ("Al2(SO4)3", (2, 3), (3, -2), 15.0, "3:2"),
])
def test_stoichiometry(formula, nu, z, i_factor, charge_type):
    e = parse_electrolyte(formula)
    assert (e.nu_cation, e.nu_anion) == nu
    assert (e.z_cation, e.z_anion) == z
    assert e.ionic_strength_factor == i_factor
    assert e.charge_type == charge_type


def test_mean_molality():
    # m± = m (ν+^ν+ ν−^ν−)^(1/ν): 4^(1/3) m for CaCl2, 27^(1/4) m for LaCl3 (Robinson & Stokes
    # 1959, ch. 2).
    assert float(parse_electrolyte("CaCl2").mean_molality(0.1)) == pytest.approx(
        0.1 * 4 ** (1 / 3))
    assert float(parse_electrolyte("LaCl3").mean_molality(1.0)) == pytest.approx(27 ** 0.25)
    np.testing.assert_allclose(parse_electrolyte("HCl").mean_molality([0.1, 0.2]), [0.1, 0.2])


def test_nernst_factor():
    hcl = parse_electrolyte("HCl")
    assert float(nernst_factor(hcl, 1, 298.15)) * 1e3 == pytest.approx(51.3852, abs=1e-4)
    # A cell forming CaCl2 with n = 2: 3RT/2F.
    assert float(nernst_factor(parse_electrolyte("CaCl2"), 2, 298.15)) * 1e3 == pytest.approx(
        1.5 * 25.6926, abs=1e-4)
    with pytest.raises(ValueError, match="positive whole number"):
        nernst_factor(hcl, 0, 298.15)
    assert math.isnan(float(nernst_factor(hcl, 1, float("nan"))))


@pytest.mark.parametrize(("formula", "cation", "nu", "z"), [
    # Oxidation states of the usual aqueous salts: common practice (any inorganic chemistry
    # text, e.g. Greenwood & Earnshaw, Chemistry of the Elements, 2nd ed., 1997).
    ("FeCl3", "Fe", (1, 3), (3, -1)),
    ("Fe2(SO4)3", "Fe", (2, 3), (3, -2)),
    ("Fe(NO3)3", "Fe", (1, 3), (3, -1)),
    ("FeCl2", "Fe", (1, 2), (2, -1)),
    ("FeSO4", "Fe", (1, 1), (2, -2)),
    ("CrCl3", "Cr", (1, 3), (3, -1)),
    ("Cr2(SO4)3", "Cr", (2, 3), (3, -2)),
    ("CrCl2", "Cr", (1, 2), (2, -1)),
    ("CoCl2", "Co", (1, 2), (2, -1)),
    ("Co(NO3)2", "Co", (1, 2), (2, -1)),
    ("NiSO4", "Ni", (1, 1), (2, -2)),
    ("NiCl2", "Ni", (1, 2), (2, -1)),
    ("MnCl2", "Mn", (1, 2), (2, -1)),
    ("MnSO4", "Mn", (1, 1), (2, -2)),
    ("CuCl", "Cu", (1, 1), (1, -1)),
    ("CuCl2", "Cu", (1, 2), (2, -1)),
    ("CuSO4", "Cu", (1, 1), (2, -2)),
    ("Cu2SO4", "Cu", (2, 1), (1, -2)),
    ("Hg2Cl2", "Hg2", (1, 2), (2, -1)),  # mercurous: the dimer Hg₂²⁺, not 2 Hg⁺
    ("Hg2(NO3)2", "Hg2", (1, 2), (2, -1)),
    ("Hg2SO4", "Hg2", (1, 1), (2, -2)),
    ("HgCl2", "Hg", (1, 2), (2, -1)),
    ("TlCl", "Tl", (1, 1), (1, -1)),
    ("TlNO3", "Tl", (1, 1), (1, -1)),
    ("TlCl3", "Tl", (1, 3), (3, -1)),
    ("SnCl2", "Sn", (1, 2), (2, -1)),
    ("SnCl4", "Sn", (1, 4), (4, -1)),
    ("CeCl3", "Ce", (1, 3), (3, -1)),
    ("Ce(SO4)2", "Ce", (1, 2), (4, -2)),
    ("Ce(NO3)4", "Ce", (1, 4), (4, -1)),
    ("EuCl2", "Eu", (1, 2), (2, -1)),
    ("EuCl3", "Eu", (1, 3), (3, -1)),
    ("Th(NO3)4", "Th", (1, 4), (4, -1)),
    ("UO2(NO3)2", "UO2", (1, 2), (2, -1)),
    ("K4Fe(CN)6", "K", (4, 1), (1, -4)),
    ("Fe4(Fe(CN)6)3", "Fe", (4, 3), (3, -4)),  # Prussian blue's formula: Fe³⁺ with Fe(CN)6⁴⁻
])
def test_several_oxidation_states_take_the_charge_the_anion_balances(formula, cation, nu, z):
    e = parse_electrolyte(formula)
    assert e.cation == cation
    assert (e.nu_cation, e.nu_anion) == nu
    assert (e.z_cation, e.z_anion) == z
    assert e.nu == sum(nu)


def test_iron_iii_chloride_quantities():
    # FeCl3: ν = 4, I = 6 m (½(3² + 3·1²)), m± = 27^(1/4) m — the 3:1 type of LaCl3 (Robinson &
    # Stokes 1959, ch. 2; common practice).
    e = parse_electrolyte("FeCl3")
    assert e.charge_type == "3:1"
    assert e.ionic_strength_factor == 6.0
    assert float(e.mean_molality(1.0)) == pytest.approx(27 ** 0.25)
    assert float(nernst_factor(e, 3, 298.15)) * 1e3 == pytest.approx(4 / 3 * 25.6926, abs=1e-4)


@pytest.mark.parametrize(("formula", "match"), [
    ("Xy", "must start with a known cation"),
    ("NaQ", "expected one known anion"),
    ("NaCl2", "not charge-balanced"),
    ("", "must start with a known cation"),
    ("FeCl4", r"not charge-balanced.*Fe takes \+2 or \+3"),
    ("CuCl3", r"not charge-balanced.*Cu takes \+1 or \+2"),
    ("Ce(SO4)3", "not charge-balanced"),
    ("Fe2Cl3", "not charge-balanced"),
    ("H0Cl0", "outside 1–20"),
    ("H21Cl21", "outside 1–20"),
])
def test_bad_formulas(formula, match):
    with pytest.raises(ValueError, match=match):
        parse_electrolyte(formula)


def test_absurd_counts_are_refused_at_once():
    # m± needs ν+^ν+ ν−^ν−: a count of 10⁸ must be refused, not computed.
    start = time.perf_counter()
    for formula in ("H99999999Cl99999999", "H" + "9" * 5000 + "Cl" + "9" * 5000,
                    "(NH4)99SO4"):
        with pytest.raises(ValueError, match="outside 1–20") as error:
            parse_electrolyte(formula)
        assert len(str(error.value)) < 200
    assert time.perf_counter() - start < 1.0
    assert MAX_STOICHIOMETRIC_NUMBER == 20


_IONS = [(symbol, z) for symbol, charges in sorted(CATIONS.items()) for z in charges]


@given(st.sampled_from(_IONS), st.sampled_from(sorted(ANIONS)))
def test_any_neutral_combination_round_trips(cation_and_charge, anion):
    # Stoichiometry and charge balance (common practice): the smallest neutral formula of any
    # cation in any of its oxidation states with any anion parses back to its ions, counts and
    # charges.
    cation, z_plus = cation_and_charge
    z_minus = -ANIONS[anion]
    lcm = z_plus * z_minus // math.gcd(z_plus, z_minus)
    nu_plus, nu_minus = lcm // z_plus, lcm // z_minus

    def part(symbol: str, count: int) -> str:
        written = f"({symbol})" if count > 1 and len(symbol) > 2 else symbol
        return written + (str(count) if count > 1 else "")

    e = parse_electrolyte(part(cation, nu_plus) + part(anion, nu_minus))
    assert (e.cation, e.anion, e.nu_cation, e.nu_anion) == (cation, anion, nu_plus, nu_minus)
    assert (e.z_cation, e.z_anion) == (z_plus, -z_minus)
    assert e.nu_cation * e.z_cation + e.nu_anion * e.z_anion == 0


@given(st.sampled_from(_IONS), st.sampled_from(sorted(ANIONS)),
       st.integers(1, 40), st.integers(1, 40))
def test_any_written_counts_parse_balanced_or_are_refused(cation_and_charge, anion, nu_plus,
                                                          nu_minus):
    # Charge balance as a law: whatever counts are written, the parser either returns a
    # charge-balanced electrolyte within the count bound or raises ValueError.
    cation = cation_and_charge[0]
    written = (f"({cation})" if len(cation) > 2 else cation) + str(nu_plus) + f"({anion})" + str(
        nu_minus)
    try:
        e = parse_electrolyte(written)
    except ValueError as error:
        assert "charge-balanced" in str(error) or "outside 1–20" in str(error)
        return
    assert e.nu_cation * e.z_cation + e.nu_anion * e.z_anion == 0
    assert e.z_cation in CATIONS[e.cation]
    assert max(e.nu_cation, e.nu_anion) <= MAX_STOICHIOMETRIC_NUMBER
