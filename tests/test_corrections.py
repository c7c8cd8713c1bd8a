"""Corrections: vapour pressure of water, hydrogen pressure, gas fugacity, pressure basis."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from activolt.constants import ATMOSPHERE_PA, STANDARD_PRESSURE_PA
from activolt.physics.corrections import (
    gas_pressure_correction,
    hydrogen_partial_pressure,
    hydrogen_pressure_correction,
    standard_pressure_basis_shift,
    water_vapour_pressure,
)

# --- literature checks ----------------------------------------------------------------------

@pytest.mark.literature
def test_vapour_pressure_at_25C():
    # IAPWS-95: 3.1699 kPa at 25 °C (reference-values.md, derived); checked to one unit in the
    # last printed digit, since the auxiliary equation lies 0.003 % below IAPWS-95 here.
    assert float(water_vapour_pressure(298.15)) / 1000 == pytest.approx(3.1699, abs=1e-4)


@pytest.mark.literature
def test_vapour_pressure_against_iapws_0_to_100C():
    # The iapws package: IAPWS-IF97 saturation line (eq. 30) at every degree, and the full
    # IAPWS-95 phase equilibrium at a few temperatures; agreement within 0.1 % (our brief).
    from iapws import IAPWS95
    from iapws.iapws97 import _PSat_T

    celsius = np.arange(0.0, 100.5, 1.0)
    ours = water_vapour_pressure(273.15 + celsius)
    if97 = np.array([_PSat_T(273.15 + t) * 1e6 for t in celsius])
    assert np.max(np.abs(ours / if97 - 1)) < 1e-3
    for temperature in (273.16, 298.15, 333.15, 373.15):  # triple point, 25, 60, 100 °C
        full = IAPWS95(T=temperature, x=0.0).P * 1e6
        assert float(water_vapour_pressure(temperature)) == pytest.approx(full, rel=1e-3)


@pytest.mark.literature
def test_vapour_pressure_at_boiling_point():
    # IAPWS-95: the normal boiling point is 373.124 K (ITS-90) at 101.325 kPa (from memory);
    # at 373.15 K p_w = 101.418 kPa (from memory, IAPWS 1992 tables).
    assert float(water_vapour_pressure(373.124)) == pytest.approx(101325.0, rel=1e-4)
    assert float(water_vapour_pressure(373.15)) / 1000 == pytest.approx(101.418, abs=0.001)


@pytest.mark.literature
def test_hydrogen_pressure_and_corrections_at_one_atmosphere():
    # reference-values.md (derived): at p_bar = 101.325 kPa and 25 °C the correction of the
    # Harned cell is +0.408 mV to the 1 atm basis and +0.239 mV to the 1 bar basis.
    p_h2 = hydrogen_partial_pressure(298.15, 101325.0)
    assert float(p_h2) / 1000 == pytest.approx(98.155, abs=0.0005)
    to_atm = hydrogen_pressure_correction(298.15, p_h2, ATMOSPHERE_PA)
    to_bar = hydrogen_pressure_correction(298.15, p_h2, STANDARD_PRESSURE_PA)
    assert float(to_atm) * 1e3 == pytest.approx(0.408, abs=0.0005)
    assert float(to_bar) * 1e3 == pytest.approx(0.239, abs=0.0005)


@pytest.mark.literature
def test_basis_shift_harned_cell():
    # reference-values.md (derived): E°(bar) = E°(atm) − (RT/2F) ln 1.01325, which is
    # 0.155 / 0.169 / 0.183 mV at 0 / 25 / 50 °C.
    shift = standard_pressure_basis_shift(
        np.array([273.15, 298.15, 323.15]), 1, {"H2(g)": -0.5}, ATMOSPHERE_PA,
        STANDARD_PRESSURE_PA)
    assert shift * 1e3 == pytest.approx([-0.155, -0.169, -0.183], abs=0.0005)


# --- laws and edge cases --------------------------------------------------------------------

def test_water_activity_and_bubbler_depth():
    # Common practice: a_w(HCl, 1 mol/kg) ≈ 0.965 (reference-values.md); a 5 cm head of water.
    p_w = float(water_vapour_pressure(298.15))
    lowered = hydrogen_partial_pressure(298.15, 101325.0, water_activity=0.965)
    assert float(lowered) == pytest.approx(101325.0 - 0.965 * p_w, rel=1e-12)
    deeper = hydrogen_partial_pressure(298.15, 101325.0, bubbler_depth_m=0.05,
                                       solution_density_kg_m3=1000.0)
    assert float(deeper) - (101325.0 - p_w) == pytest.approx(1000.0 * 9.80665 * 0.05)


def test_gas_correction_sign_and_general_form():
    # Cell forming H2 (n = 2, ν = +1): E(p°) = E_obs + (RT/2F) ln(p/p°), negative below p°.
    correction = gas_pressure_correction(298.15, 2, {"H2(g)": 1.0}, {"H2(g)": 50000.0})
    expected = 8.314462618 * 298.15 / (2 * 96485.33212) * math.log(0.5)
    assert float(correction) == pytest.approx(expected, rel=1e-12)
    # at the standard pressure there is nothing to correct
    assert float(hydrogen_pressure_correction(298.15, STANDARD_PRESSURE_PA)) == 0.0


def test_corrections_take_arrays_series_and_nan():
    pressures = pd.Series([98000.0, np.nan, 100000.0])
    correction = hydrogen_pressure_correction(298.15, pressures)
    assert correction.shape == (3,)
    assert np.isnan(correction[1])
    assert np.isnan(water_vapour_pressure(np.nan))
    assert water_vapour_pressure(np.array([[298.15]])).shape == (1, 1)


def test_errors():
    with pytest.raises(ValueError, match="kelvin"):
        water_vapour_pressure(25.0)
    with pytest.raises(ValueError, match="pascals"):
        hydrogen_partial_pressure(298.15, 101.325)
    with pytest.raises(ValueError, match="between 0 and 1"):
        hydrogen_partial_pressure(298.15, 101325.0, water_activity=1.2)
    with pytest.raises(ValueError, match="missing"):
        gas_pressure_correction(298.15, 1, {"H2(g)": -0.5}, {"Cl2(g)": 1e5})
    with pytest.raises(ValueError, match="positive"):
        gas_pressure_correction(298.15, 1, {"H2(g)": -0.5}, {"H2(g)": 0.0})
    with pytest.raises(ValueError, match="electrons"):
        gas_pressure_correction(298.15, 0, {"H2(g)": -0.5}, {"H2(g)": 1e5})
    with pytest.raises(ValueError, match="positive"):
        standard_pressure_basis_shift(298.15, 1, {"H2(g)": -0.5}, 0.0, 1e5)
