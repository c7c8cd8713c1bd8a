"""Half-cell algebra: parsing, reversing, scaling, combining, balance, ΔG°, K, Nernst terms."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.chemistry.electrodes import catalogue, couple
from activolt.chemistry.reactions import (
    BalanceError,
    HalfReaction,
    Species,
    check_balance,
    combine,
    element_counts,
    nernst_expression,
    parse_half_reaction,
    parse_species,
    split_charge,
    stoichiometry_from_mapping,
)
from activolt.constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K

# --- literature checks ----------------------------------------------------------------------

# RT/F = 25.6926 mV at 298.15 K (CODATA 2018; reference-values.md, derived)
RT_OVER_F_V = 0.0256926


def test_sodium_bromine_cell_from_catalogue():
    # CRC Handbook, Electrochemical Series (from memory): Na+/Na −2.71 V, Br2(l)/Br− +1.066 V;
    # E°cell = 3.776 V printed as ≈ 3.78 V, ΔG° ≈ −729 kJ/mol (two and three digits printed).
    cell = combine(couple("Na+/Na"), couple("Br2(l)/Br-"))
    assert cell.electrons == 2
    assert cell.standard_potential.nominal_value == pytest.approx(3.78, abs=0.005)
    assert cell.delta_g_kJ_mol().nominal_value == pytest.approx(-729, abs=0.5)
    assert str(cell) == "2 Na(s) + Br2(l) → 2 Na+(aq) + 2 Br-(aq)"


def test_daniell_cell_from_catalogue():
    # CRC Handbook (from memory): Zn2+/Zn −0.7618 V, Cu2+/Cu +0.3419 V; the Daniell cell's
    # E° is 1.10 V in teaching tables (common practice, two decimals).
    cell = combine(couple("Zn2+/Zn"), couple("Cu2+/Cu"))
    assert cell.electrons == 2
    assert cell.standard_potential.nominal_value == pytest.approx(1.10, abs=0.005)


def test_harned_cell_reaction_and_nernst_factor():
    # Harned & Owen (1958), ch. 10: Pt | H2 | HCl | AgCl | Ag forms HCl, n = 1, factor 2RT/F.
    expr = nernst_expression(combine(couple("H+/H2"), couple("AgCl/Ag")))
    assert expr.electrolyte.formula == "HCl"
    assert expr.electrons == 1
    assert expr.electrolyte_units == 1
    assert expr.gas_coefficients == {"H2(g)": -0.5}
    assert float(expr.nernst_factor(298.15)) == pytest.approx(2 * RT_OVER_F_V, abs=1e-7)
    assert [s.label for s, _ in expr.unit_activity] == ["AgCl(s)", "Ag(s)"]


def test_reversed_cell_consumes_the_electrolyte():
    # Same cell written the other way round: E° changes sign and HCl is consumed.
    expr = nernst_expression(combine(couple("AgCl/Ag"), couple("H+/H2")))
    assert expr.electrolyte_units == -1
    # Bates & Bower (1954), Table 1: E°(AgCl/Ag) = 0.22234 V at 25 °C
    assert expr.reaction.standard_potential.nominal_value == pytest.approx(-0.22234, abs=5e-7)
    assert expr.describe().startswith("E = E° + (2RT/F) ln(m± γ±)")


def test_calcium_chloride_cell_factor():
    # Ca | CaCl2 | AgCl | Ag: ν = 3, n = 2, factor 3RT/2F (Harned & Owen 1958, ch. 10).
    expr = nernst_expression(combine(couple("Ca2+/Ca"), couple("AgCl/Ag")))
    assert expr.electrolyte.formula == "CaCl2"
    assert expr.electrons == 2
    assert float(expr.nernst_factor(298.15)) == pytest.approx(1.5 * RT_OVER_F_V, abs=1e-7)


def test_log10_k_and_equilibrium_constant():
    # ln K = nFE°/RT (IUPAC Green Book 2007, §2.11); Daniell: n = 2, E° = 1.1037 V.
    cell = combine(couple("Zn2+/Zn"), couple("Cu2+/Cu"))
    expected = 2 * FARADAY_C_MOL * 1.1037 / (GAS_CONSTANT_J_MOL_K * 298.15 * math.log(10))
    assert cell.log10_equilibrium_constant(298.15).nominal_value == pytest.approx(expected)
    k = cell.equilibrium_constant(298.15)
    assert math.log10(k.nominal_value) == pytest.approx(expected)
    with pytest.raises(OverflowError, match="log10"):
        combine(couple("Li+/Li"), couple("F2/F-")).scaled(2).equilibrium_constant(298.15)


# --- algebra --------------------------------------------------------------------------------

def test_parse_species_and_charges():
    assert parse_species("Zn2+(aq)") == Species("Zn", 2, "aq")
    assert parse_species("SO4^2-(aq)") == Species("SO4", -2, "aq")
    assert parse_species("Hg2^2+(aq)").label == "Hg2^2+(aq)"
    assert parse_species("Cl⁻(aq)") == Species("Cl", -1, "aq")
    assert parse_species("K(Hg)").state == "Hg"
    assert split_charge("H2PO4^-") == ("H2PO4", -1)
    assert element_counts("Hg2Cl2") == {"Hg": 2, "Cl": 2}


@pytest.mark.parametrize(
    ("text", "message"),
    [("AgCl", "no state"), ("AgCl(x)", "unknown state"), ("Qq(s)", "not an element"),
     ("C6H4(OH(s)", "unmatched")],
)
def test_parse_species_errors(text, message):
    with pytest.raises(ValueError, match=message):
        parse_species(text)


def test_reverse_changes_sign_scale_keeps_potential():
    h = parse_half_reaction("Cu2+(aq) + 2 e- = Cu(s)", 0.3419, 0.0001, name="Cu2+/Cu")
    assert h.reversed().standard_potential_V == -0.3419
    assert not h.reversed().is_reduction
    assert h.reversed().reversed() == h
    assert h.scaled(3).standard_potential_V == 0.3419
    assert h.scaled("1/2").n == 1
    with pytest.raises(ValueError, match="positive"):
        h.scaled(-1)


def test_unbalanced_half_reaction_names_the_element():
    with pytest.raises(BalanceError, match="Cl 2 on the left, 1 on the right"):
        parse_half_reaction("Hg2Cl2(s) + 2 e- = 2 Hg(l) + Cl-(aq)")


def test_unbalanced_charge_is_named():
    with pytest.raises(BalanceError, match="charge"):
        parse_half_reaction("Zn2+(aq) + e- = Zn(s)")


def test_check_balance_on_overall_reaction():
    check_balance(stoichiometry_from_mapping({"H2(g)": -1, "H+(aq)": 2}), electrons=2)
    with pytest.raises(BalanceError, match="H 2 on the left, 1 on the right"):
        check_balance(stoichiometry_from_mapping({"H2(g)": -1, "H+(aq)": 1}), electrons=1)


def test_half_reaction_without_electrons_rejected():
    with pytest.raises(ValueError, match="no electrons"):
        HalfReaction(stoichiometry_from_mapping({"H2O(l)": -1, "H2O(aq)": 1}), Fraction(0))


def test_same_couple_twice_gives_exact_zero():
    # A concentration cell: E° = 0 with no uncertainty (one shared uncertain variable).
    cell = combine(couple("AgCl/Ag"), couple("AgCl/Ag"))
    assert cell.standard_potential.nominal_value == 0
    assert cell.standard_potential.std_dev == 0
    assert cell.stoichiometry == ()


def test_unknown_potential_gives_none():
    h = parse_half_reaction("K+(aq) + e- = K(Hg)")
    cell = combine(couple("AgCl/Ag"), h)
    assert cell.standard_potential is None
    assert cell.delta_g_kJ_mol() is None
    assert nernst_expression(cell).amalgams[0][0].label == "K(Hg)"


def test_nernst_factor_needs_an_electrolyte():
    expr = nernst_expression(combine(couple("Zn2+/Zn"), couple("Cu2+/Cu")))
    assert expr.electrolyte is None
    with pytest.raises(ValueError, match="no single electrolyte"):
        expr.nernst_factor(298.15)


def test_nernst_factor_vectorised():
    expr = nernst_expression(combine(couple("H+/H2"), couple("AgCl/Ag")))
    factor = expr.nernst_factor(np.array([298.15, np.nan]))
    assert factor.shape == (2,)
    assert np.isnan(factor[1])


# --- property tests -------------------------------------------------------------------------

COUPLES = st.sampled_from(catalogue())
SCALES = st.sampled_from([Fraction(1, 2), Fraction(1), Fraction(2), Fraction(3)])


@settings(max_examples=60, deadline=None)
@given(COUPLES, COUPLES, SCALES, SCALES)
def test_any_pair_balances_and_obeys_gibbs(left, right, scale_left, scale_right):
    cell = combine(left, right)
    check_balance(cell.stoichiometry)  # elements and charge (electrons cancel)
    rescaled = combine(left.scaled(scale_left), right.scaled(scale_right))
    assert rescaled.standard_potential.nominal_value == pytest.approx(
        cell.standard_potential.nominal_value, abs=1e-12)
    # ΔG° per electron is intensive too; n follows the scaling as written
    assert (rescaled.delta_g_kJ_mol().nominal_value / float(rescaled.electrons)
            == pytest.approx(cell.delta_g_kJ_mol().nominal_value / float(cell.electrons)))
    potential = cell.standard_potential.nominal_value
    delta_g = cell.delta_g_kJ_mol().nominal_value
    assert delta_g == pytest.approx(
        -float(cell.electrons) * FARADAY_C_MOL * potential / 1000.0, abs=1e-9)
    assert cell.standard_potential.nominal_value == pytest.approx(
        right.standard_potential_V - left.standard_potential_V, abs=1e-12)


@settings(max_examples=40, deadline=None)
@given(COUPLES, COUPLES)
def test_written_as_oxidation_gives_same_cell(left, right):
    assert combine(left.reversed(), right) == combine(left, right)
