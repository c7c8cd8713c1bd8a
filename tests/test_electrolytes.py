"""Electrolyte stoichiometry, ionic strength, m± and the Nernst factor.

Stoichiometry and charges are common practice (any general chemistry text); the Nernst factor
2RT/F = 51.3852 mV at 25 °C follows from RT/F = 25.6926 mV (reference-values.md, derived).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from activolt.electrolytes import ANIONS, CATIONS, nernst_factor, parse_electrolyte


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


@pytest.mark.parametrize(("formula", "match"), [
    ("Xy", "must start with a known cation"),
    ("NaQ", "expected one known anion"),
    ("NaCl2", "not charge-balanced"),
    ("", "must start with a known cation"),
])
def test_bad_formulas(formula, match):
    with pytest.raises(ValueError, match=match):
        parse_electrolyte(formula)


@given(st.sampled_from(sorted(CATIONS)), st.sampled_from(sorted(ANIONS)))
def test_any_neutral_combination_round_trips(cation, anion):
    # Stoichiometry balance: the smallest neutral formula parses back to its ions and counts.
    z_plus, z_minus = CATIONS[cation], -ANIONS[anion]
    lcm = z_plus * z_minus // math.gcd(z_plus, z_minus)
    nu_plus, nu_minus = lcm // z_plus, lcm // z_minus

    def part(symbol: str, count: int) -> str:
        written = f"({symbol})" if count > 1 and len(symbol) > 2 else symbol
        return written + (str(count) if count > 1 else "")

    e = parse_electrolyte(part(cation, nu_plus) + part(anion, nu_minus))
    assert (e.cation, e.anion, e.nu_cation, e.nu_anion) == (cation, anion, nu_plus, nu_minus)
    assert e.nu_cation * e.z_cation + e.nu_anion * e.z_anion == 0
