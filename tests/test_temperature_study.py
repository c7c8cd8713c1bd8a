"""Temperature studies: E°(T), the thermodynamics of the cell reaction, isotherms, the global
cross-check and γ±(T) (activolt.procedures.temperature)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from activolt.constants import ATMOSPHERE_PA, FARADAY_C_MOL, STANDARD_PRESSURE_PA
from activolt.errors import InputError
from activolt.physics.corrections import standard_pressure_basis_shift
from activolt.procedures.temperature import fit_standard_potential

# Bates & Bower (1954), J. Res. NBS 53, 283, Table 1 (confirmed in the 2001 reprint, J. Res.
# NIST 106(2)): E° of Pt | H2 | HCl | AgCl | Ag, absolute volts, H2 at 1 atm, by t/°C.
BATES_BOWER_T_C = np.arange(5.0, 65.0, 5.0)
BATES_BOWER_E0_V = np.array([0.23413, 0.23142, 0.22857, 0.22557, 0.22234, 0.21904, 0.21566,
                             0.21208, 0.20835, 0.20449, 0.20056, 0.19649])
# Same source (confirmed): standard deviation of E° 0.01 mV at 25 °C.
BATES_BOWER_SD_V = 1e-5
# CODATA key values (Cox, Wagman & Medvedev 1989; from memory), ½H2(g) + AgCl(s) → Ag(s) +
# HCl(aq) at 298.15 K, 1 bar: ΔH° = −40.07 kJ/mol, ΔS° = −62.44 J/(K mol) (derived in
# reference-values.md from the ΔfH° and S° of the key values).
CODATA_DELTA_H_J_MOL = -40.07e3
CODATA_DELTA_S_J_K_MOL = -62.44


def _bates_bower_on_bar() -> np.ndarray:
    """The table moved to the 1 bar basis: E°(bar) = E°(atm) − (RT/2F) ln(1.01325)
    (common practice; IUPAC Green Book 2007, §2.11)."""
    t = BATES_BOWER_T_C + 273.15
    return BATES_BOWER_E0_V + standard_pressure_basis_shift(t, 1, {"H2(g)": -0.5},
                                                           ATMOSPHERE_PA, STANDARD_PRESSURE_PA)


@pytest.mark.literature
def test_bates_bower_table_gives_the_codata_enthalpy_and_entropy() -> None:
    # The table is on the 1 atm basis; it is moved to 1 bar first. ΔH° does not depend on the
    # basis (ideal gas); ΔS° moves by −(R/2) ln 1.01325 = −0.055 J/(K mol), well inside the
    # tolerance but applied, since the CODATA values are on 1 bar.
    fit = fit_standard_potential(BATES_BOWER_T_C + 273.15, _bates_bower_on_bar(),
                                 np.full(BATES_BOWER_T_C.size, BATES_BOWER_SD_V),
                                 electrons=1, standard_pressure_Pa=STANDARD_PRESSURE_PA)
    at = fit.reference
    assert at.temperature_K == 298.15
    assert at.standard_pressure_Pa == STANDARD_PRESSURE_PA
    assert at.delta_H_J_mol.value == pytest.approx(CODATA_DELTA_H_J_MOL, abs=300.0)
    assert at.delta_S_J_K_mol.value == pytest.approx(CODATA_DELTA_S_J_K_MOL, abs=1.0)
    # The stated uncertainties cover the difference from the key values (k = 2 with the key
    # values' own ±0.1 kJ/mol and ±0.3 J/(K mol), from memory, combined).
    assert abs(at.delta_H_J_mol.value - CODATA_DELTA_H_J_MOL) <= 2 * math.hypot(
        at.delta_H_J_mol.uncertainty, 100.0)
    assert abs(at.delta_S_J_K_mol.value - CODATA_DELTA_S_J_K_MOL) <= 2 * math.hypot(
        at.delta_S_J_K_mol.uncertainty, 0.3)
    # E° at 25 °C agrees with the table's own 25 °C row (moved to 1 bar: 0.22234 − 0.000169 V,
    # reference-values.md, derived) within twice the scatter of the rows about the fitted
    # curve (the rows scatter by about 0.03 mV, more than the 0.01 mV stated at 25 °C, so the
    # fit's covariance is scaled by the Birge ratio and says so).
    assert fit.form.covariance_scaled and fit.notes
    scatter = fit.form.birge_ratio * BATES_BOWER_SD_V
    assert abs(at.standard_potential_V.value - (0.22234 - 0.000169)) <= 2 * scatter
    # ΔG° = −nFE° exactly, and ΔCp° near the CODATA-derived −176 J/(K mol) (reference-values.md,
    # derived from the key values' Cp°; from memory): within 20 J/(K mol).
    assert at.delta_G_J_mol.value == pytest.approx(-FARADAY_C_MOL
                                                   * at.standard_potential_V.value, rel=1e-12)
    assert at.delta_Cp_J_K_mol.value == pytest.approx(-176.0, abs=20.0)


@pytest.mark.literature
def test_bates_bower_smoothing_equation_and_table_agree() -> None:
    # Bates & Bower's smoothing equation E° = 0.23659 − 4.8564e-4 t − 3.4205e-6 t² + 5.869e-9 t³
    # (t in °C; 0.23659 confirmed, the other coefficients from memory) and the fit of their
    # table give the same slope at 25 °C within the fit's own 2 u: ΔS° = F dE°/dT.
    t = 25.0
    slope = -4.8564e-4 - 2 * 3.4205e-6 * t + 3 * 5.869e-9 * t**2
    fit = fit_standard_potential(BATES_BOWER_T_C + 273.15, BATES_BOWER_E0_V,
                                 np.full(BATES_BOWER_T_C.size, BATES_BOWER_SD_V),
                                 standard_pressure_Pa=ATMOSPHERE_PA)
    s = fit.reference.delta_S_J_K_mol
    assert abs(s.value - FARADAY_C_MOL * slope) <= 2 * s.uncertainty


def test_thermodynamics_follow_the_fitted_form_exactly() -> None:
    # A cubic E°(T) without noise (synthetic; the coefficients are Bates & Bower's smoothing
    # equation, from memory) must come back exactly, with ΔH° = ΔG° + TΔS° and ΔCp° = nFT E''.
    t_c = np.linspace(5.0, 55.0, 8)
    e0 = 0.23659 - 4.8564e-4 * t_c - 3.4205e-6 * t_c**2 + 5.869e-9 * t_c**3
    fit = fit_standard_potential(t_c + 273.15, e0, np.full(t_c.size, 1e-5), electrons=2)
    assert fit.chosen == "polynomial" and fit.polynomial_degree == 3
    at = fit.thermodynamics(310.0)
    tc = 310.0 - 273.15
    d1 = -4.8564e-4 - 2 * 3.4205e-6 * tc + 3 * 5.869e-9 * tc**2
    d2 = -2 * 3.4205e-6 + 6 * 5.869e-9 * tc
    nf = 2 * FARADAY_C_MOL
    assert at.delta_S_J_K_mol.value == pytest.approx(nf * d1, rel=1e-9)
    assert at.delta_H_J_mol.value == pytest.approx(at.delta_G_J_mol.value
                                                   + 310.0 * at.delta_S_J_K_mol.value, rel=1e-12)
    assert at.delta_Cp_J_K_mol.value == pytest.approx(nf * 310.0 * d2, rel=1e-7)
    # ΔH° and ΔS° at θ are strongly correlated (common practice: the slope dominates both).
    assert abs(fit.reference.correlation("delta_H_J_mol", "delta_S_J_K_mol")) > 0.9


def test_constant_heat_capacity_form_is_chosen_when_it_is_the_truth() -> None:
    # Synthetic E°(T) with ΔCp° constant (−170 J/(K mol)): E° = a + b(T − θ) + c[T ln(T/θ) −
    # (T − θ)], c = ΔCp°/F. The constant-ΔCp° form fits exactly; a cubic cannot, quite.
    theta = 298.15
    t = np.linspace(278.15, 368.15, 10)
    c = -170.0 / FARADAY_C_MOL
    e0 = 0.2223 - 6.45e-4 * (t - theta) + c * (t * np.log(t / theta) - (t - theta))
    fit = fit_standard_potential(t, e0, np.full(t.size, 1e-7))
    assert fit.chosen == "constant_heat_capacity"
    assert fit.reference.delta_Cp_J_K_mol.value == pytest.approx(-170.0, rel=1e-6)
    assert fit.thermodynamics(350.0).delta_Cp_J_K_mol.value == pytest.approx(-170.0, rel=1e-6)
    record = fit.to_dict()
    assert record["form"] == "constant_heat_capacity"
    assert record["reference"]["delta_Cp_J_K_mol"]["value"] == pytest.approx(-170.0, rel=1e-6)


def test_straight_line_leaves_heat_capacity_undetermined() -> None:
    fit = fit_standard_potential([288.15, 298.15, 308.15], [0.2286, 0.2223, 0.2157], 1e-5)
    assert fit.polynomial_degree == 1
    assert math.isnan(fit.reference.delta_Cp_J_K_mol.value)
    assert fit.reference.to_dict()["delta_Cp_J_K_mol"] == {"value": None, "uncertainty": None}


@pytest.mark.parametrize(("temperature_K", "match"), [
    ([298.15, 380.0], "outside liquid water"),
    ([260.0, 298.15], "outside liquid water"),
    ([298.15, 298.15], "two temperatures"),
])
def test_bad_arrays_are_refused(temperature_K: list[float], match: str) -> None:
    with pytest.raises(InputError, match=match):
        fit_standard_potential(temperature_K, [0.22, 0.21], [1e-5, 1e-5])


def test_reference_temperature_outside_liquid_water_is_refused() -> None:
    with pytest.raises(InputError, match=r"reference temperature .* outside liquid water"):
        fit_standard_potential([288.15, 298.15, 308.15], [0.2286, 0.2223, 0.2157], 1e-5,
                               reference_temperature_K=400.0)


