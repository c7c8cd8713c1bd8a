"""The electrode catalogue: integrity of the table, published values, Ag/AgCl(T)."""

from __future__ import annotations

import hashlib
import math

import numpy as np
import pandas as pd
import pytest

from activolt.chemistry.electrodes import (
    U_KINDS,
    amalgam_couple,
    catalogue,
    couple,
    couple_names,
    electrode_table,
    silver_chloride_standard_potential,
    silver_chloride_standard_uncertainty,
)
from activolt.chemistry.reactions import parse_half_reaction

# --- integrity (guards against accidental edits) --------------------------------------------

def test_table_shape_and_columns():
    table = electrode_table()
    assert table.shape == (62, 13)
    assert list(table.columns) == [
        "couple", "half_reaction", "electrons", "standard_potential_V",
        "u_standard_potential_V", "u_kind", "temperature_K", "pressure_basis_kPa", "dataset",
        "derived_from", "source", "u_source", "note",
    ]
    assert table["source"].notna().all()
    assert table["u_source"].notna().all()
    assert table[["standard_potential_V", "u_standard_potential_V"]].notna().all().all()
    assert set(table["dataset"]) == {"catalogue", "bates_bower_1954"}


def test_checksum_of_values():
    # Regression pin (values the table itself holds, derived rows as computed): an accidental
    # edit of a number, a half-reaction or a derivation changes a checksum; a deliberate edit
    # updates it here with the source. Last updated when the uncertainties became standard
    # uncertainties (spread between determinations, common practice), Hg2SO4/Hg became 0.6154 V
    # (Harned & Hamer 1935; later 0.61544 V), AgCl/Ag became 0.22234 V (Bates & Bower 1954,
    # Table 1) and Fe3+/Fe was derived from Fe3+/Fe2+ and Fe2+/Fe.
    table = electrode_table()
    numbers = table[["electrons", "standard_potential_V", "u_standard_potential_V",
                     "temperature_K", "pressure_basis_kPa"]].to_numpy(float)
    text = ",".join(f"{v:.6g}" for v in numbers.ravel())
    assert hashlib.sha256(text.encode()).hexdigest()[:16] == "424c6fc74596638d"
    reactions = "|".join(table["half_reaction"])
    assert hashlib.sha256(reactions.encode()).hexdigest()[:16] == "28fa7d2b741208eb"
    kinds = "|".join(table["u_kind"] + ":" + table["derived_from"].fillna(""))
    assert hashlib.sha256(kinds.encode()).hexdigest()[:16] == "6f5b579f431a858b"


def test_catalogue_has_at_least_thirty_unique_couples():
    names = couple_names()
    assert len(names) >= 30
    assert len(set(names)) == len(names)


def test_every_row_parses_balances_and_states_its_basis():
    for row in electrode_table().itertuples():
        half = parse_half_reaction(row.half_reaction)  # raises if unbalanced
        assert half.is_reduction and half.n == row.electrons, row.couple
        assert row.pressure_basis_kPa in (100.0, 101.325)
        assert row.u_kind in U_KINDS


def test_uncertainties_are_standard_uncertainties_not_roundings():
    # Only H+/H2 is exact (zero by definition, IUPAC). Every other u is at least the 0.01 mV
    # that the best reference electrode holds (Bates & Bower 1954: AgCl/Ag at 25 °C), and none
    # is half a unit in the last printed digit over √3 (2.9·10^k V), which is what rounding
    # alone would give.
    table = electrode_table()
    exact = table["u_kind"] == "exact"
    assert list(table.loc[exact, "couple"]) == ["H+/H2"]
    u = table.loc[~exact, "u_standard_potential_V"]
    assert (u >= 1e-5 - 1e-12).all()
    exponent = np.log10(u * 2 * math.sqrt(3))
    assert not np.isclose(exponent, np.round(exponent), atol=0.002).any()


def test_derived_and_widened_rows_say_so():
    table = electrode_table("catalogue").set_index("couple")
    derived = table[table["u_kind"] == "derived"]
    assert list(derived.index) == ["Fe3+/Fe"]
    assert derived.loc["Fe3+/Fe", "derived_from"] == "Fe3+/Fe2+; Fe2+/Fe"
    assert "-0.037" in derived.loc["Fe3+/Fe", "note"]  # the handbook value it replaces
    widened = table[table["u_kind"] == "widened"]
    assert sorted(widened.index) == ["Cu+/Cu", "Cu2+/Cu+"]
    assert widened["u_source"].str.contains("different determinations").all()


def test_fe3_fe_is_its_parents_combination():
    # n-weighted ΔG° addition (reference-values.md): (0.771 + 2(−0.447))/3 = −0.041 V, with
    # u = √(u1² + (2 u2)²)/3 from the parents' 2 mV and 20 mV (common practice).
    fe3 = couple("Fe3+/Fe")
    assert fe3.standard_potential_V == pytest.approx(-0.041, abs=1e-12)
    assert fe3.u_standard_potential_V == pytest.approx(math.hypot(0.002, 0.040) / 3, rel=1e-12)
    # correlated with its parents: 3 E°(Fe3+/Fe) − E°(Fe3+/Fe2+) − 2 E°(Fe2+/Fe) is exactly 0
    combination = (3 * fe3.standard_potential - couple("Fe3+/Fe2+").standard_potential
                   - 2 * couple("Fe2+/Fe").standard_potential)
    assert combination.nominal_value == pytest.approx(0.0, abs=1e-12)
    assert combination.std_dev == pytest.approx(0.0, abs=1e-12)


def test_table_is_a_copy():
    first = electrode_table()
    first.loc[0, "standard_potential_V"] = 99.0
    assert electrode_table().loc[0, "standard_potential_V"] != 99.0
    assert isinstance(first, pd.DataFrame)


# --- literature checks ----------------------------------------------------------------------

# CRC Handbook of Chemistry and Physics, Electrochemical Series (from memory), 25 °C, as listed in
# reference-values.md; the table prints these digits, so they must match exactly.
CRC_POTENTIALS_V = {
    "Zn2+/Zn": -0.7618, "Cu2+/Cu": 0.3419, "Na+/Na": -2.71, "Br2(l)/Br-": 1.066,
    "Hg2Cl2/Hg": 0.26808, "AgBr/Ag": 0.07133, "AgI/Ag": -0.15224, "H+/H2": 0.0,
}


@pytest.mark.parametrize(("name", "value"), CRC_POTENTIALS_V.items())
@pytest.mark.literature
def test_catalogue_values(name, value):
    assert couple(name).standard_potential_V == value


@pytest.mark.literature
def test_agcl_catalogue_value_is_bates_bower_and_covers_bates_macaskill():
    # Bates & Bower (1954), Table 1: 0.22234 V at 25 °C, 1 atm, standard deviation 0.01 mV.
    # Bates & MacAskill (1978), Pure Appl. Chem. 50, 1701, and the CRC Handbook: 0.22233 V —
    # within two stated standard uncertainties.
    half = couple("AgCl/Ag")
    assert half.standard_potential_V == pytest.approx(0.22234, abs=5e-7)
    assert half.u_standard_potential_V == pytest.approx(1e-5, abs=1e-12)
    assert abs(half.standard_potential_V - 0.22233) <= 2 * half.u_standard_potential_V + 1e-12
    assert half.pressure_basis_Pa == 101325.0


@pytest.mark.literature
def test_mercurous_sulfate_electrode():
    # Harned & Hamer (1935): 0.61536 V; later determinations 0.61544 V (reference-values.md,
    # confirmed); each within the stated 0.05 mV. Not the 0.6125 V the table held before.
    half = couple("Hg2SO4/Hg")
    assert half.standard_potential_V == 0.6154
    for value in (0.61536, 0.61544):
        assert abs(half.standard_potential_V - value) <= half.u_standard_potential_V + 1e-12


# Bates & Bower (1954), J. Res. NBS 53, 283, Table 1 (confirmed in the 2001 reprint): E°/V
BATES_BOWER_V = {5: 0.23413, 25: 0.22234, 50: 0.20449, 60: 0.19649, 90: 0.16952, 95: 0.16511}


@pytest.mark.parametrize(("celsius", "value"), BATES_BOWER_V.items())
@pytest.mark.literature
def test_silver_chloride_table(celsius, value):
    assert float(silver_chloride_standard_potential(273.15 + celsius)) == pytest.approx(
        value, abs=5e-6)


@pytest.mark.literature
def test_silver_chloride_equation_matches_table_within_012_mV():
    # reference-values.md: the smoothing equation matches the table within 0.12 mV, 0–90 °C
    # (two digits printed, so < 0.125 mV); compared at the table's own temperatures.
    table = electrode_table("bates_bower_1954")
    table = table[table["temperature_K"] <= 363.15 + 1e-9]
    equation = silver_chloride_standard_potential(table["temperature_K"], method="equation")
    assert np.max(np.abs(table["standard_potential_V"] - equation)) < 0.125e-3


@pytest.mark.literature
def test_silver_chloride_equation_intercept():
    # Bates & Bower (1954): 0.23659 V at 0 °C from the smoothing equation (confirmed).
    assert float(silver_chloride_standard_potential(273.15, method="equation")) == 0.23659


@pytest.mark.literature
def test_silver_chloride_on_the_bar_basis():
    # reference-values.md (derived): 0.22216–0.22217 V on 1 bar; shift −0.169 mV at 25 °C.
    atm = float(silver_chloride_standard_potential(298.15))
    bar = float(silver_chloride_standard_potential(298.15, standard_pressure_Pa=1e5))
    assert bar == pytest.approx(0.222165, abs=1e-5)
    assert (bar - atm) * 1e3 == pytest.approx(-0.169, abs=0.0005)


@pytest.mark.literature
def test_silver_chloride_uncertainty_as_stated():
    # Bates & Bower (1954): standard deviation 0.01 mV at 25 °C and 0.09 mV at 95 °C.
    assert float(silver_chloride_standard_uncertainty(298.15)) == pytest.approx(1e-5, abs=1e-12)
    assert float(silver_chloride_standard_uncertainty(368.15)) == pytest.approx(9e-5, abs=1e-12)
    with pytest.raises(ValueError, match="outside"):
        silver_chloride_standard_uncertainty(273.15)


def test_silver_chloride_array_and_nan_input():
    values = silver_chloride_standard_potential(np.array([[298.15, 308.15]]))
    assert values.shape == (1, 2)
    assert np.isnan(silver_chloride_standard_potential(np.nan))


def test_silver_chloride_errors():
    with pytest.raises(ValueError, match="valid: table, equation"):
        silver_chloride_standard_potential(298.15, method="spline")
    with pytest.raises(ValueError, match="outside"):
        silver_chloride_standard_potential(273.15)
    with pytest.raises(ValueError, match="outside"):
        silver_chloride_standard_potential(368.15, method="equation")


# --- look-ups -------------------------------------------------------------------------------

def test_unknown_couple_lists_valid_names():
    with pytest.raises(ValueError, match=r"unknown couple 'Xx/X'; valid: H\+/H2, H2O/H2"):
        couple("Xx/X")


def test_unknown_dataset():
    with pytest.raises(ValueError, match="valid: catalogue, bates_bower_1954"):
        electrode_table("nist")


def test_amalgam_couples():
    assert str(amalgam_couple(couple("K+/K"))) == "K+(aq) + e- → K(Hg)"
    assert amalgam_couple(couple("Ca2+/Ca")).name == "Ca2+/Ca(Hg)"
    assert amalgam_couple(couple("Ca2+/Ca")).standard_potential is None
    assert amalgam_couple(couple("AgCl/Ag")) is None
    assert amalgam_couple(couple("H+/H2")) is None


def test_every_call_gives_the_same_uncertain_potentials():
    """A couple taken from two calls is one uncertain variable: its difference with itself
    has zero uncertainty (independent copies would give √2 u); every couple is listed once
    (common practice)."""
    first = {h.name: h for h in catalogue()}
    second = {h.name: h for h in catalogue()}
    difference = first["AgCl/Ag"].uncertain_potential - second["AgCl/Ag"].uncertain_potential
    assert first["AgCl/Ag"].uncertain_potential.std_dev > 0.0
    assert difference.std_dev == 0.0
    names = [h.name for h in catalogue()]
    assert len(names) == len(set(names))
