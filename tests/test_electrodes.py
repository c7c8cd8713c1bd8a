"""The electrode catalogue: integrity of the table, published values, Ag/AgCl(T)."""

from __future__ import annotations

import hashlib
import math

import numpy as np
import pandas as pd
import pytest

from activolt.electrodes import (
    amalgam_couple,
    catalogue,
    couple,
    couple_names,
    electrode_table,
    silver_chloride_standard_potential,
)
from activolt.reactions import parse_half_reaction

# --- integrity (guards against accidental edits) --------------------------------------------

def test_table_shape_and_columns():
    table = electrode_table()
    assert table.shape == (62, 11)
    assert list(table.columns) == [
        "couple", "half_reaction", "electrons", "standard_potential_V",
        "u_standard_potential_V", "u_kind", "temperature_K", "pressure_basis_kPa", "dataset",
        "source", "note",
    ]
    assert table["source"].notna().all()
    assert set(table["dataset"]) == {"catalogue", "bates_bower_1954"}


def test_checksum_of_values():
    # Regression pin (values the table itself holds): an accidental edit of a number or of a
    # half-reaction changes a checksum; a deliberate edit updates it here with the source.
    table = electrode_table()
    numbers = table[["electrons", "standard_potential_V", "u_standard_potential_V",
                     "temperature_K", "pressure_basis_kPa"]].to_numpy(float)
    text = ",".join(f"{v:.6g}" for v in numbers.ravel())
    assert hashlib.sha256(text.encode()).hexdigest()[:16] == "6cb50357fa143c5e"
    reactions = "|".join(table["half_reaction"])
    assert hashlib.sha256(reactions.encode()).hexdigest()[:16] == "28fa7d2b741208eb"


def test_catalogue_has_at_least_thirty_unique_couples():
    names = couple_names()
    assert len(names) >= 30
    assert len(set(names)) == len(names)


def test_every_row_parses_balances_and_states_its_basis():
    for row in electrode_table().itertuples():
        half = parse_half_reaction(row.half_reaction)  # raises if unbalanced
        assert half.is_reduction and half.n == row.electrons, row.couple
        assert row.pressure_basis_kPa in (100.0, 101.325)
        assert row.u_kind in ("exact", "stated", "rounding", "not_stated")


def test_rounding_uncertainty_is_half_a_last_digit_over_root_three():
    table = electrode_table("catalogue")
    rounding = table[table["u_kind"] == "rounding"]
    half_digit = rounding["u_standard_potential_V"] * 2 * math.sqrt(3)
    exponent = np.log10(half_digit)
    assert np.allclose(exponent, np.round(exponent), atol=0.002)


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
def test_catalogue_values(name, value):
    assert couple(name).standard_potential_V == value


def test_agcl_catalogue_value_matches_bates_macaskill():
    # Bates & MacAskill (1978), Pure Appl. Chem. 50, 1701: 0.22233 V at 25 °C, 1 atm.
    half = couple("AgCl/Ag")
    assert half.standard_potential_V == pytest.approx(0.22233, abs=5e-6)
    assert half.pressure_basis_Pa == 101325.0


# Bates & Bower (1954), J. Res. NBS 53, 283, Table 1 (confirmed in the 2001 reprint): E°/V
BATES_BOWER_V = {5: 0.23413, 25: 0.22234, 50: 0.20449, 60: 0.19649, 90: 0.16952, 95: 0.16511}


@pytest.mark.parametrize(("celsius", "value"), BATES_BOWER_V.items())
def test_silver_chloride_table(celsius, value):
    assert float(silver_chloride_standard_potential(273.15 + celsius)) == pytest.approx(
        value, abs=5e-6)


def test_silver_chloride_equation_matches_table_within_012_mV():
    # reference-values.md: the smoothing equation matches the table within 0.12 mV, 0–90 °C
    # (two digits printed, so < 0.125 mV); compared at the table's own temperatures.
    table = electrode_table("bates_bower_1954")
    table = table[table["temperature_K"] <= 363.15 + 1e-9]
    equation = silver_chloride_standard_potential(table["temperature_K"], method="equation")
    assert np.max(np.abs(table["standard_potential_V"] - equation)) < 0.125e-3


def test_silver_chloride_equation_intercept():
    # Bates & Bower (1954): 0.23659 V at 0 °C from the smoothing equation (confirmed).
    assert float(silver_chloride_standard_potential(273.15, method="equation")) == 0.23659


def test_silver_chloride_on_the_bar_basis():
    # reference-values.md (derived): 0.22216–0.22217 V on 1 bar; shift −0.169 mV at 25 °C.
    atm = float(silver_chloride_standard_potential(298.15))
    bar = float(silver_chloride_standard_potential(298.15, standard_pressure_Pa=1e5))
    assert bar == pytest.approx(0.222165, abs=1e-5)
    assert (bar - atm) * 1e3 == pytest.approx(-0.169, abs=0.0005)


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


def test_catalogue_is_immutable_tuple():
    assert isinstance(catalogue(), tuple)
    assert catalogue() is catalogue()
