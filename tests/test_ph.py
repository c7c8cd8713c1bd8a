"""Primary pH by the Harned-cell procedure (activolt.procedures.ph).

Literature checks (marked) build Harned-cell readings from published values — E° of Ag|AgCl
(Bates & Bower 1954), γ±(HCl, 0.01 mol/kg) = 0.904 (Buck et al. 2002), the buffers' pH and
A(T) from published tables — and require the procedure to give the published pH back. The
EMFs are written by the test's own Nernst equation, not by the code under test.
"""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.errors import InputError
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.calibration import calibrate
from activolt.procedures.ph import (
    StandardPotential,
    bates_guggenheim_log10_gamma_chloride,
    buffer_catalogue,
    catalogue_ph,
    composition_ionic_strength,
    primary_ph,
    read_buffer_table,
)

R = 8.314462618  # J/(mol K), CODATA 2018
F = 96485.33212  # C/mol, CODATA 2018
LN10 = math.log(10.0)
# Pitzer, Peiper & Busey (1984), J. Phys. Chem. Ref. Data 13, 1: A_φ by t/°C (confirmed in
# ../shared/reference-values.md); A = 3 A_φ / ln 10.
PPB_APHI = {10: 0.3821, 20: 0.3882, 25: 0.3915, 30: 0.3949, 40: 0.4023, 50: 0.4103}
# Bates & Bower (1954), J. Res. NBS 53, 283, Table 1: E°(Ag|AgCl) / V, H2 at 1 atm (confirmed).
BATES_BOWER_E0 = {15: 0.22857, 20: 0.22557, 25: 0.22234, 30: 0.21904, 35: 0.21566,
                  40: 0.21208, 45: 0.20835}
# Buck et al. (2002), Pure Appl. Chem. 74, 2169: γ±(HCl, 0.01 mol/kg, 25 °C) by convention.
GAMMA_HCL = 0.904
# Buck et al. (2002): the equimolal phosphate primary standard, pH 6.865 at 25 °C, I = 0.1
# mol/kg (from memory, ../shared/reference-values.md).
PHOSPHATE_PH, PHOSPHATE_I = 6.865, 0.1
# Vapour pressure of water at 25 °C, IAPWS-95: 3.1699 kPa (../shared/reference-values.md).
WATER_VAPOUR_25C_PA = 3169.9
# Vapour pressure of water / kPa by t/°C, steam tables after IAPWS-95 (Wagner & Pruß 2002;
# from memory, the 25 °C value confirmed as above).
WATER_VAPOUR_KPA = {15: 1.7057, 20: 2.3392, 25: 3.1699, 30: 4.2470, 35: 5.6291, 40: 7.3849,
                    45: 9.5953}
ATM_PA = 101325.0


def a_published(t_C: float) -> float:
    """A(T) from the PPB table: quadratic through its 10–50 °C entries."""
    t = np.array(list(PPB_APHI))
    coefficients = np.polyfit(t, np.array(list(PPB_APHI.values())), 2)
    return 3.0 * float(np.polyval(coefficients, t_C)) / LN10


def bates_guggenheim(a: float, ionic: float) -> float:
    """The convention's defining equation (Bates & Guggenheim 1960)."""
    return -a * math.sqrt(ionic) / (1.0 + 1.5 * math.sqrt(ionic))


def hamer_pinching_acree(t_C: float) -> float:
    """0.05 mol/kg potassium hydrogen phthalate, Hamer, Pinching & Acree (1946), J. Res. NBS
    36, 47: pH = 1336.08/T − 5.2678 + 0.016069 T with T = t + 273.16 (their abstract; equation
    confirmed in a stored copy)."""
    t = t_C + 273.16
    return 1336.08 / t - 5.2678 + 0.016069 * t


# ---------------------------------------------------------------------------------------------
# The Bates–Guggenheim term


@pytest.mark.literature
def test_debye_hueckel_a_at_25C_against_published():
    # 0.5100 kg^½ mol^-½ in the IUPAC tables (from memory); the tool's IAPWS water runs below
    # Pitzer, Peiper & Busey by 0.04–0.09 % (reference-values.md), hence 0.0005.
    a = float(debye_hueckel_constants([298.15]).agamma_log10[0])
    assert a == pytest.approx(0.5100, abs=5e-4)


@pytest.mark.literature
@pytest.mark.parametrize("t_C", [5.0, 25.0, 37.0, 50.0])
@pytest.mark.parametrize("ionic", [0.0, 0.02, 0.053, 0.1, 0.13])
def test_bates_guggenheim_term_is_its_definition(t_C, ionic):
    # the defining equation with A from the tool's water properties
    a = float(debye_hueckel_constants([t_C + 273.15]).agamma_log10[0])
    got = float(bates_guggenheim_log10_gamma_chloride(ionic, t_C + 273.15))
    assert got == pytest.approx(bates_guggenheim(a, ionic), abs=1e-12)


@pytest.mark.literature
def test_bates_guggenheim_term_at_25C_with_published_a():
    # A = 0.5100 (IUPAC tables, from memory): log10 γ_Cl at I = 0.1 is −0.10939; the tool's A
    # differs by < 0.0005, i.e. < 0.0002 in the term.
    got = float(bates_guggenheim_log10_gamma_chloride(0.1, 298.15))
    assert got == pytest.approx(bates_guggenheim(0.5100, 0.1), abs=2e-4)


def test_bates_guggenheim_term_refuses_a_negative_ionic_strength():
    with pytest.raises(ValueError, match="ionic strength"):
        bates_guggenheim_log10_gamma_chloride(-0.01, 298.15)


# ---------------------------------------------------------------------------------------------
# Catalogue


@pytest.mark.literature
def test_catalogue_phthalate_agrees_with_hamer_pinching_acree():
    # Hetzer et al. (1977) redetermined the phthalate values; they differ from the 1940s values
    # by 0.003 on average (their abstract): the catalogue rows 15–45 °C within 0.003 of HPA 1946.
    for t_C in (15, 20, 25, 30, 35, 40, 45):
        value, _ = catalogue_ph("phthalate", t_C + 273.15)
        assert value == pytest.approx(hamer_pinching_acree(t_C), abs=3e-3)


@pytest.mark.literature
def test_catalogue_phosphate_at_25C():
    # Buck et al. 2002: 6.865 at 25 °C, I = 0.1 mol/kg (from memory)
    value, source = catalogue_ph("phosphate", 298.15)
    assert value == PHOSPHATE_PH and "Buck" in source
    row = buffer_catalogue().query("buffer == 'phosphate'").iloc[0]
    assert row["ionic_strength_mol_kg"] == PHOSPHATE_I


def test_catalogue_rows_name_their_source_and_lie_in_the_ph_range():
    table = buffer_catalogue()
    assert table["source"].str.len().min() > 10
    assert table["pH"].between(1.0, 13.0).all()
    assert catalogue_ph("phthalate", 400.0) is None
    assert catalogue_ph("no such buffer", 298.15) is None


def test_composition_ionic_strength_of_the_phosphate_standard():
    # ½ Σ m z²: KH2PO4 0.025 → 0.025, Na2HPO4 0.025 → 0.075 (common practice)
    assert composition_ionic_strength({"KH2PO4": 0.025, "Na2HPO4": 0.025}) == \
        pytest.approx(0.1, rel=1e-12)


# ---------------------------------------------------------------------------------------------
# Round trip: the phosphate primary standard at 25 °C


def nernst_log10(t_K: float) -> float:
    return R * t_K * LN10 / F


def to_standard_pressure(t_K: float, barometric_Pa: float, basis_Pa: float) -> float:
    """E(p°) − E_obs = (RT/2F) ln(p°/p_H2), p_H2 = p_bar − p_w (reference-values.md)."""
    return 0.5 * R * t_K / F * math.log(basis_Pa / (barometric_Pa - WATER_VAPOUR_25C_PA))


def write_phosphate(tmp_path, slope=0.08, seed=1, electrodes=("E-31", "E-32", "E-33"),
                    extra_meta=""):
    """A calibration batch (0.01 mol/kg HCl, γ± = 0.904) and a phosphate buffer table with
    chloride at four levels, both at 25 °C, 1 atm basis, from the published values above."""
    rng = np.random.default_rng(seed)
    t = 298.15
    k10 = nernst_log10(t)
    offsets = {name: rng.normal(0.0, 0.05e-3) for name in electrodes}
    batch = ["electrode,molality_mol_kg,emf_mV,pressure_kPa"]
    for name in electrodes:
        for _ in range(3):
            p = 101.3e3 + rng.normal(0.0, 50.0)
            e = (BATES_BOWER_E0[25] + offsets[name] - 2.0 * k10 * math.log10(0.01 * GAMMA_HCL)
                 - to_standard_pressure(t, p, ATM_PA) + rng.normal(0.0, 0.01e-3))
            batch.append(f"{name},0.01,{e * 1e3:.4f},{p / 1e3:.3f}")
    (tmp_path / "batch.csv").write_text("\n".join(batch) + "\n", encoding="utf-8")
    (tmp_path / "batch.toml").write_text(
        'cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"\ntemperature_C = 25.0\n'
        "standard_pressure_kPa = 101.325\nu_temperature_K = 0.02\nu_pressure_kPa = 0.03\n"
        "u_stock_molality_relative = 0.001\nvoltmeter_u_mV = 0.005\n"
        "acceptance_tolerance_mV = 0.3\n", encoding="utf-8")
    log_gamma = bates_guggenheim(a_published(25.0), PHOSPHATE_I)
    rows = ["chloride_molality_mol_kg,electrode,emf_mV,u_emf_mV,pressure_kPa"]
    for m in (0.005, 0.010, 0.015, 0.020):
        acidity = PHOSPHATE_PH - log_gamma + slope * m
        for name in electrodes[:2]:
            p = 101.3e3 + rng.normal(0.0, 50.0)
            e = (BATES_BOWER_E0[25] + offsets[name] + k10 * (acidity - math.log10(m))
                 - to_standard_pressure(t, p, ATM_PA) + rng.normal(0.0, 0.01e-3))
            rows.append(f"{m},{name},{e * 1e3:.4f},0.010,{p / 1e3:.3f}")
    (tmp_path / "buffer.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (tmp_path / "buffer.toml").write_text(
        "temperature_C = 25.0\nu_temperature_K = 0.02\nu_pressure_kPa = 0.03\n"
        "u_stock_molality_relative = 0.001\nvoltmeter_u_mV = 0.005\nbuffer = \"phosphate\"\n"
        'calibration_batch = "batch.csv"\n' + extra_meta, encoding="utf-8")
    return tmp_path / "buffer.csv"


@pytest.mark.literature
@pytest.mark.parametrize(("slope", "seed"), [(0.08, 1), (0.0, 2), (0.25, 3)])
def test_phosphate_round_trip(tmp_path, slope, seed):
    # Acceptance (issue 14): pH 6.865 back within 0.002, U(pH) (k = 2) 0.002–0.006 — the size
    # metrology labs state for the method (Buck et al. 2002: about 0.004, from memory).
    result = primary_ph(write_phosphate(tmp_path, slope=slope, seed=seed))
    (iso,) = result.isotherms
    assert iso.ph == pytest.approx(PHOSPHATE_PH, abs=0.002)
    assert 0.002 <= 2.0 * iso.standard_uncertainty <= 0.006
    assert 0.002 <= iso.expanded_uncertainty <= 0.006
    assert abs(iso.ph - PHOSPHATE_PH) <= iso.expanded_uncertainty
    assert iso.slope == pytest.approx(slope, abs=0.05)
    assert iso.catalogue_ph == PHOSPHATE_PH


def test_budget_adds_up_and_the_convention_is_stated_not_counted(tmp_path):
    (iso,) = primary_ph(write_phosphate(tmp_path)).isotherms
    counted = [b for b in iso.budget if b.counted]
    assert {b.component for b in counted} >= {"E° (calibration)", "readings",
                                               "chloride molality", "temperature",
                                               "hydrogen pressure", "extrapolation"}
    assert iso.standard_uncertainty == pytest.approx(
        math.sqrt(sum(b.u_pH**2 for b in counted)), rel=1e-12)
    assert iso.expanded_uncertainty == pytest.approx(
        iso.coverage_factor * iso.standard_uncertainty, rel=1e-12)
    (convention,) = [b for b in iso.budget if not b.counted]
    assert convention.component == "convention" and "Bates–Guggenheim" in convention.method
    # the chloride stock: ∂pH/∂ln m = 1/ln 10, u_rel = 0.001 → 0.000434 (by hand)
    (chloride,) = [b for b in iso.budget if b.component == "chloride molality"]
    assert chloride.u_pH == pytest.approx(0.001 / LN10, rel=1e-9)
    # pH = intercept + the convention's term, by definition
    assert iso.ph == pytest.approx(iso.intercept + iso.log10_gamma_chloride, abs=1e-12)


def test_calibration_record_and_stated_values_give_the_batch_result(tmp_path):
    from activolt.io.record import build_calibration_record

    path = write_phosphate(tmp_path)
    from_batch = primary_ph(path).isotherms[0]
    batch = calibrate(tmp_path / "batch.csv")
    record = build_calibration_record(batch)
    (tmp_path / "cal.json").write_text(json.dumps(record), encoding="utf-8")
    text = (tmp_path / "buffer.toml").read_text(encoding="utf-8")
    (tmp_path / "buffer.toml").write_text(
        text.replace('calibration_batch = "batch.csv"', 'calibration_record = "cal.json"'),
        encoding="utf-8")
    from_record = primary_ph(path).isotherms[0]
    assert from_record.ph == pytest.approx(from_batch.ph, abs=1e-12)
    assert from_record.standard_uncertainty == pytest.approx(from_batch.standard_uncertainty,
                                                             rel=1e-9)
    stated = [StandardPotential(e.electrode, e.temperature_K, e.standard_potential_V,
                                e.standard_uncertainty_V, math.inf, 101325.0, "test")
              for e in batch.electrodes]
    assert primary_ph(path, standard_potentials=stated).isotherms[0].ph == \
        pytest.approx(from_batch.ph, abs=1e-12)


def test_a_shifted_electrode_moves_the_ph_by_the_nernst_slope(tmp_path):
    # E° 1 mV higher for every electrode lowers p(a_H γ_Cl) by 1 mV / (RT ln 10/F) = 0.01690
    path = write_phosphate(tmp_path)
    base = primary_ph(path)
    shifted = [StandardPotential(s.electrode, s.temperature_K, s.value_V + 1e-3, s.u_V, s.dof,
                                 s.standard_pressure_Pa, "test")
               for s in base.standard_potentials]
    moved = primary_ph(path, standard_potentials=shifted).isotherms[0].ph
    assert base.isotherms[0].ph - moved == pytest.approx(1e-3 / nernst_log10(298.15), rel=1e-9)


# ---------------------------------------------------------------------------------------------
# pH(T): potassium hydrogen phthalate, 15–45 °C


@pytest.mark.literature
def test_phthalate_ph_of_temperature_reproduces_hamer_pinching_acree(tmp_path):
    # pH(T) of 0.05 mol/kg KHP from Hamer, Pinching & Acree (1946) at 15–45 °C, within 0.003;
    # E°(T) from Bates & Bower (1954), I = 0.053 mol/kg (Buck et al. 2002, from memory), A(T)
    # from Pitzer, Peiper & Busey (1984); H2 at 101.325 kPa less the vapour pressure of water.
    rng = np.random.default_rng(7)
    rows = ["chloride_molality_mol_kg,electrode,emf_mV,temperature_C,pressure_kPa"]
    potentials = []
    for t_C, e0 in BATES_BOWER_E0.items():
        t = t_C + 273.15
        k10 = nernst_log10(t)
        log_gamma = bates_guggenheim(a_published(t_C), 0.053)
        potentials.append(StandardPotential("KHP-1", t, e0, 0.01e-3, math.inf, ATM_PA,
                                            "Bates & Bower 1954"))
        for m in (0.005, 0.010, 0.015):
            acidity = hamer_pinching_acree(t_C) - log_gamma + 0.05 * m
            p_h2 = ATM_PA - WATER_VAPOUR_KPA[t_C] * 1e3
            e = (e0 + k10 * (acidity - math.log10(m)) - 0.5 * k10 * math.log10(ATM_PA / p_h2)
                 + rng.normal(0.0, 0.01e-3))
            rows.append(f"{m},KHP-1,{e * 1e3:.4f},{t_C},101.325")
    (tmp_path / "khp.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (tmp_path / "khp.toml").write_text("buffer_ionic_strength_mol_kg = 0.053\n"
                                       'buffer = "phthalate"\n', encoding="utf-8")
    result = primary_ph(tmp_path / "khp.csv", standard_potentials=potentials)
    assert len(result.isotherms) == 7
    fit = result.temperature_fit
    assert fit is not None and fit.form == "a/T + b + cT"
    for iso in result.isotherms:
        t_C = iso.temperature_K - 273.15
        assert iso.ph == pytest.approx(hamer_pinching_acree(t_C), abs=0.003)
        smoothed, u = fit.evaluate(iso.temperature_K)
        assert smoothed[0] == pytest.approx(hamer_pinching_acree(t_C), abs=0.003)
        assert 0 < u[0] < 0.003


# ---------------------------------------------------------------------------------------------
# Bad input (library)


def test_one_chloride_molality_is_refused(tmp_path):
    path = write_phosphate(tmp_path)
    lines = path.read_text(encoding="utf-8").splitlines()
    keep = [lines[0]] + [line for line in lines[1:] if line.startswith("0.01,")]
    path.write_text("\n".join(keep) + "\n", encoding="utf-8")
    with pytest.raises(InputError, match="at least two") as error:
        primary_ph(path)
    assert error.value.column == "chloride_molality_mol_kg"


def test_an_unknown_catalogue_buffer_is_refused(tmp_path):
    path = write_phosphate(tmp_path)
    with pytest.raises(InputError, match="no buffer 'vinegar'"):
        primary_ph(path, buffer="vinegar")


# ---------------------------------------------------------------------------------------------
# A law: the pH depends on E − E° only


@settings(max_examples=20, deadline=None, derandomize=True)
@given(offset_V=st.floats(min_value=-0.02, max_value=0.02))
def test_a_common_offset_of_emf_and_e0_leaves_the_ph(tmp_path_factory, offset_V):
    # a voltage offset common to every reading and to every E° cancels in E − E° (the
    # acidity function's definition, Buck et al. 2002)
    folder = tmp_path_factory.mktemp("offset")
    path = write_phosphate(folder)
    run, _, _, _ = read_buffer_table(path)
    base = primary_ph(path)
    shifted_run = dataclasses.replace(
        run, points=run.points.assign(emf_V=run.points["emf_V"] + offset_V))
    shifted_e0 = [dataclasses.replace(s, value_V=s.value_V + offset_V)
                  for s in base.standard_potentials]
    moved = primary_ph(shifted_run, standard_potentials=shifted_e0, buffer="phosphate")
    assert moved.isotherms[0].ph == pytest.approx(base.isotherms[0].ph, abs=1e-9)
    assert moved.isotherms[0].standard_uncertainty == pytest.approx(
        base.isotherms[0].standard_uncertainty, rel=1e-6)


def test_missing_barometric_pressure_is_a_type_b_line(tmp_path):
    # without a pressure the readings are taken as at p(H2) = p°, and the correction that
    # would be made at 101.325 kPa, ½ log10(p°/(p − p_w)) = 0.0040 at 25 °C with p_w = 3.1699
    # kPa (reference-values.md), becomes a rectangular Type B line
    path = write_phosphate(tmp_path)
    lines = path.read_text(encoding="utf-8").splitlines()
    path.write_text("\n".join(line.rsplit(",", 1)[0] for line in lines) + "\n",
                    encoding="utf-8")
    (iso,) = primary_ph(path).isotherms
    (line,) = [b for b in iso.budget if b.component == "hydrogen pressure"]
    assert line.u_pH == pytest.approx(
        0.5 * math.log10(ATM_PA / (ATM_PA - WATER_VAPOUR_25C_PA)) / math.sqrt(3.0), rel=2e-3)
    assert any("no barometric pressure" in note for note in iso.notes)


def test_a_calibration_batch_at_two_temperatures_gives_e0_per_temperature(tmp_path):
    # the batch's rows are calibrated per temperature, and each buffer isotherm takes the E°
    # of its own temperature (the readings are copies: a test of the grouping only)
    path = write_phosphate(tmp_path)
    batch = (tmp_path / "batch.csv").read_text(encoding="utf-8").splitlines()
    warm = [f"{line},35.0" for line in batch[1:]]
    cold = [f"{line},25.0" for line in batch[1:]]
    (tmp_path / "batch.csv").write_text("\n".join([batch[0] + ",temperature_C", *cold, *warm])
                                        + "\n", encoding="utf-8")
    rows = path.read_text(encoding="utf-8").splitlines()
    path.write_text("\n".join([rows[0] + ",temperature_C", *[f"{r},25.0" for r in rows[1:]],
                               *[f"{r},35.0" for r in rows[1:]]]) + "\n", encoding="utf-8")
    result = primary_ph(path)
    assert [round(i.temperature_K - 273.15, 2) for i in result.isotherms] == [25.0, 35.0]
    by_temperature = {round(s.temperature_K - 273.15, 1) for s in result.standard_potentials}
    assert by_temperature == {25.0, 35.0}
    assert len(result.standard_potentials) == 6
    assert result.temperature_fit is not None and result.temperature_fit.form == "a + b(T − θ)"
