"""Calibration of reference-electrode batches (procedures.calibration): the conventional and the
dilution route, the master route, the GUM budget, acceptance, history and control chart."""

from __future__ import annotations

import datetime as dt
import json
import math
from pathlib import Path

import numpy as np
import pytest

from activolt.data.runs import read_run
from activolt.errors import InputError
from activolt.procedures.calibration import (
    CONVENTIONAL_GAMMA_HCL,
    calibrate,
    conventional_gamma_hcl,
    electrode_history,
    welch_satterthwaite,
)

# CODATA 2018 (exact in the 2019 SI)
R = 8.314462618
F = 96485.33212
T25 = 298.15
#: 2RT/F ln(0.01 × 0.904) at 25 °C: the conventional term of Buck et al. (2002), Pure Appl.
#: Chem. 74, 2169 (γ± = 0.904 for 0.01 mol/kg HCl at 25 °C).
CONVENTIONAL_TERM_V = 2 * R * T25 / F * math.log(0.01 * 0.904)
#: Ag|AgCl E° at 25 °C, 1 atm basis: Bates & Bower (1954), J. Res. NBS 53, 283, Table 1.
E0_AGCL_V = 0.22234
CELL = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"


def _write(folder: Path, rows: list[str], meta: str, header: str = "electrode,molality_mol_kg,"
           "emf_V", stem: str = "batch") -> Path:
    table = folder / f"{stem}.csv"
    table.write_text("\n".join([header, *rows]) + "\n", encoding="utf-8")
    (folder / f"{stem}.toml").write_text(meta, encoding="utf-8")
    return table


def _hydrogen_meta(extra: str = "") -> str:
    return ('electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n'
            'acceptance_tolerance_mV = 0.1\n' + extra)


# ------------------------------------------------------------------------------------------
# Literature and formula checks


@pytest.mark.literature
def test_conventional_gamma_is_buck_2002_at_25_C() -> None:
    # Buck et al. (2002), Pure Appl. Chem. 74, 2169: γ±(HCl, 0.01 mol/kg, 25 °C) = 0.904
    assert conventional_gamma_hcl(T25, 0.01) == pytest.approx(0.904, abs=1e-9)
    assert CONVENTIONAL_GAMMA_HCL == 0.904
    # Away from 25 °C the value is an estimate (no published table confirmed here): it must
    # fall as A(T) rises (A_φ 0.3767 at 0 °C, 0.4103 at 50 °C, Pitzer, Peiper & Busey 1984)
    # and stay within 0.005 of 0.904 over 0–50 °C (Harned & Ehlers' HCl values at 0.01 mol/kg
    # run from about 0.906 at 0 °C to 0.899 at 50 °C — from memory)
    cold, hot = conventional_gamma_hcl(273.15), conventional_gamma_hcl(323.15)
    assert cold > 0.904 > hot
    assert abs(cold - 0.904) < 0.005 and abs(hot - 0.904) < 0.005


@pytest.mark.literature
def test_conventional_route_is_the_formula_at_standard_hydrogen_pressure(tmp_path: Path) -> None:
    # E° = E + (2RT/F) ln(0.01 × 0.904) at p(H2) = p° (Buck et al. 2002); readings chosen so
    # that E° = 0.22234 V (Bates & Bower 1954), no hydrogen-pressure correction (no cell)
    emf = E0_AGCL_V - CONVENTIONAL_TERM_V
    rows = [f"E1,0.01,{emf + d!r}" for d in (-4e-6, 0.0, 4e-6)]
    batch = calibrate(_write(tmp_path, rows, _hydrogen_meta()))
    (e1,) = batch.electrodes
    assert e1.standard_potential_V == pytest.approx(E0_AGCL_V, abs=1e-9)
    assert e1.route == "conventional γ±"


@pytest.mark.literature
def test_conventional_route_corrects_to_standard_hydrogen_pressure(tmp_path: Path) -> None:
    # Barometer at p° + p_w(25 °C) = 100 + 3.1699 kPa (IAPWS-95 vapour pressure, derived) puts
    # H2 at p° = 100 kPa: the correction vanishes and E° is the formula above; at 101.325 kPa
    # barometric the reading moves by (RT/2F) ln(p°/p_H2) (Buck et al. 2002, Sect. 5)
    emf = E0_AGCL_V - CONVENTIONAL_TERM_V
    meta = _hydrogen_meta(f'cell = "{CELL}"\n').replace('electrolyte = "HCl"\nelectrons = 1\n',
                                                        "")
    rows = [f"E1,0.01,{emf!r},103.1699", f"E1,0.01,{emf!r},103.1699"]
    header = "electrode,molality_mol_kg,emf_V,pressure_kPa"
    at_standard = calibrate(_write(tmp_path, rows, meta, header)).electrodes[0]
    assert at_standard.standard_potential_V == pytest.approx(E0_AGCL_V, abs=2e-7)
    rows = [f"E1,0.01,{emf!r},101.325", f"E1,0.01,{emf!r},101.325"]
    shifted = calibrate(_write(tmp_path, rows, meta, header, stem="b2")).electrodes[0]
    p_h2 = 101.325 - 3.1699
    expected = E0_AGCL_V + R * T25 / (2 * F) * math.log(100.0 / p_h2)
    assert shifted.standard_potential_V == pytest.approx(expected, abs=2e-7)


@pytest.mark.literature
def test_conventional_route_agrees_with_a_dilution_reduction(tmp_path: Path) -> None:
    # γ±(HCl) at 25 °C, Robinson & Stokes (1959), Appendix 8.10 (from memory); 0.904 at
    # 0.01 mol/kg is also the Buck et al. (2002) convention. E° = 0.22234 V (Bates & Bower 1954).
    gamma = {0.001: 0.965, 0.005: 0.929, 0.01: 0.904, 0.05: 0.830, 0.1: 0.796}
    k = 2 * R * T25 / F
    rows = [f"X,{m!r},{E0_AGCL_V - k * math.log(m * g)!r},2e-5" for m, g in gamma.items()]
    header = "electrode,molality_mol_kg,emf_V,u_emf_V"
    meta = _hydrogen_meta("voltmeter_u_mV = 0.005\n")
    dilution = calibrate(_write(tmp_path, rows, meta, header)).electrodes[0]
    single = calibrate(_write(tmp_path, [rows[2]], meta, header, stem="one")).electrodes[0]
    assert dilution.route == "dilution reduction" and single.route == "conventional γ±"
    combined = math.hypot(dilution.expanded_uncertainty_V, single.expanded_uncertainty_V)
    assert abs(dilution.standard_potential_V - single.standard_potential_V) <= combined
    assert abs(dilution.standard_potential_V - E0_AGCL_V) <= dilution.expanded_uncertainty_V
    assert abs(single.standard_potential_V - E0_AGCL_V) <= single.expanded_uncertainty_V


# ------------------------------------------------------------------------------------------
# A batch, acceptance and the budget


def _eight(tmp_path: Path, meta: str) -> tuple[Path, dict[str, float]]:
    """Eight electrodes, three readings each, 5 µV noise; E7 0.35 mV above the others."""
    rng = np.random.default_rng(20261202)
    truth = {f"E{j}": E0_AGCL_V + 0.35e-3 * (j == 7) + 1e-6 * (j - 4) for j in range(1, 9)}
    rows = [f"{name},0.01,{e0 - CONVENTIONAL_TERM_V + rng.normal(0, 5e-6)!r}"
            for name, e0 in truth.items() for _ in range(3)]
    return _write(tmp_path, rows, meta), truth


def test_batch_of_eight_one_high_electrode_alone_fails(tmp_path: Path) -> None:
    path, truth = _eight(tmp_path, _hydrogen_meta('acceptance_reference = "median"\n'))
    batch = calibrate(path)
    assert [e.electrode for e in batch.electrodes] == list(truth)
    for e in batch.electrodes:
        assert abs(e.standard_potential_V - truth[e.electrode]) < 1e-5  # within 0.01 mV
        assert e.n_readings == 3
    assert [e.electrode for e in batch.electrodes if e.verdict == "fail"] == ["E7"]
    assert not batch.all_pass
    assert batch.statistics["outliers"] == ("E7",)
    median = float(np.median([e.standard_potential_V for e in batch.electrodes]))
    assert batch.acceptance["reference_value_V"] == pytest.approx(median, abs=1e-15)
    record = batch.to_dict()
    first = record["electrodes"][0]
    assert {"electrode", "standard_potential_V", "expanded_uncertainty_V", "coverage_factor",
            "deviation_V", "verdict"} <= first.keys()
    assert record["acceptance"]["decision_rule"] == "simple"
    assert record["batch_statistics"]["outliers"] == ["E7"]


def test_guard_banded_acceptance_fails_what_simple_acceptance_passes(tmp_path: Path) -> None:
    nominal = 222.34  # mV, Bates & Bower (1954) E° as the nominal value
    emf = {"A": 0.08e-3, "B": 0.01e-3}  # deviations from nominal [V]
    rows = [f"{n},0.01,{nominal * 1e-3 + d - CONVENTIONAL_TERM_V + s!r}"
            for n, d in emf.items() for s in (-2e-6, 0.0, 2e-6)]
    base = _hydrogen_meta(f'acceptance_reference = "nominal"\nnominal_potential_mV = {nominal}\n'
                          "voltmeter_u_mV = 0.02\n")
    simple = calibrate(_write(tmp_path, rows, base))
    guarded = calibrate(_write(tmp_path, rows, base + 'decision_rule = "guard-banded"\n',
                               stem="g"))
    a_simple, a_guarded = simple.electrode("A"), guarded.electrode("A")
    # U ≈ 2 × 0.02 mV: 0.08 mV is inside 0.1 mV but not inside 0.1 mV − U
    assert 0.02e-3 < a_guarded.expanded_uncertainty_V < 0.06e-3
    assert a_simple.verdict == "pass" and a_guarded.verdict == "fail"
    assert simple.electrode("B").verdict == guarded.electrode("B").verdict == "pass"
    assert "guard-banded" in guarded.acceptance["rule"]


def test_welch_satterthwaite_against_a_hand_calculation() -> None:
    # Hand calculation (GUM G.4.1, Eq. G.2b): u = 0.012, 0.020, 0.009 mV with ν = 2, ∞, 5:
    # u_c² = 0.000144 + 0.0004 + 0.000081 = 0.000625, u_c = 0.025 mV, u_c⁴ = 3.90625e-7;
    # Σ u⁴/ν = 2.0736e-8/2 + 6.561e-9/5 = 1.16802e-8 → ν_eff = 33.443
    assert welch_satterthwaite([0.012, 0.020, 0.009], [2, math.inf, 5]) == pytest.approx(
        33.443, abs=0.001)
    assert welch_satterthwaite([0.01, 0.02], [math.inf, math.inf]) == math.inf


def test_budget_degrees_of_freedom_and_coverage_factor(tmp_path: Path) -> None:
    # Three readings, no other stated input: ν_eff = 2 and k = t₉₅(2) = 4.30 (GUM Table G.2,
    # from memory); with a voltmeter u equal to the repeatability, ν_eff = 2 × (1+1)² = 8 by
    # hand and k = t₉₅(8) = 2.31 (GUM Table G.2, from memory)
    emf = E0_AGCL_V - CONVENTIONAL_TERM_V
    rows = [f"A,0.01,{emf + d!r}" for d in (-1e-5, 0.0, 1e-5)]
    alone = calibrate(_write(tmp_path, rows, _hydrogen_meta())).electrodes[0]
    assert alone.effective_dof == pytest.approx(2.0)
    assert alone.coverage_factor == pytest.approx(4.30, abs=0.005)
    repeat = 1e-5 / math.sqrt(3)  # s = 0.01 mV, mean of three
    assert alone.standard_uncertainty_V == pytest.approx(repeat, rel=1e-6)
    meta = _hydrogen_meta(f"voltmeter_u_mV = {repeat * 1e3!r}\n")
    both = calibrate(_write(tmp_path, rows, meta, stem="v")).electrodes[0]
    assert both.effective_dof == pytest.approx(8.0, rel=1e-6)
    assert both.coverage_factor == pytest.approx(2.31, abs=0.005)
    components = {line.component for line in both.budget}
    assert {"repeatability", "temperature", "pressure", "molality", "voltmeter",
            "convention"} <= components
    convention = next(line for line in both.budget if line.component == "convention")
    assert not convention.counted and "not counted" in convention.method


def test_master_route_adds_the_difference_and_the_certificate(tmp_path: Path) -> None:
    meta = ('electrolyte = "KCl"\nelectrons = 1\ntemperature_C = 25.0\n'
            'calibration_method = "master"\nmaster_potential_mV = 222.30\n'
            "u_master_potential_mV = 0.02\nacceptance_tolerance_mV = 0.2\n")
    rows = [f"M{j},3.0,{d!r}" for j, d in ((1, 1.0e-4), (1, 1.2e-4), (2, -3.0e-5),
                                           (2, -1.0e-5))]
    batch = calibrate(_write(tmp_path, rows, meta))
    assert batch.method == "master"
    assert batch.electrode("M1").standard_potential_V == pytest.approx(0.22230 + 1.1e-4,
                                                                       abs=1e-12)
    # differences of a few tenths of a millivolt may be written in mV for the master route
    rows_mV = ["M1,3.0,0.1", "M1,3.0,0.12", "M2,3.0,-0.03", "M2,3.0,-0.01"]
    in_mV = calibrate(_write(tmp_path, rows_mV, meta, header="electrode,molality_mol_kg,emf_mV",
                             stem="mv"))
    for name in ("M1", "M2"):
        assert in_mV.electrode(name).standard_potential_V == pytest.approx(
            batch.electrode(name).standard_potential_V, abs=1e-12)
    certificate = next(line for line in batch.electrode("M2").budget
                       if line.component == "master certificate")
    assert certificate.u_V == pytest.approx(2e-5)
    assert batch.electrode("M2").standard_uncertainty_V >= 2e-5


# ------------------------------------------------------------------------------------------
# History and drift


def _record(date: dt.date, values: dict[str, tuple[float, float]]) -> dict:
    return {"date": date.isoformat(), "electrodes": [
        {"electrode": n, "standard_potential_V": {"value": v, "uncertainty": u},
         "verdict": "pass"} for n, (v, u) in values.items()]}


def test_drift_of_six_calibrations_is_recovered() -> None:
    # six monthly calibrations, 0.02 mV per month (a month = 365.2425/12 days), 5 µV noise
    rng = np.random.default_rng(7)
    start = dt.date(2026, 1, 15)
    dates = [start + dt.timedelta(days=round(30.436875 * i)) for i in range(6)]
    records = []
    for d in dates:
        months = (d - start).days / 30.436875
        records.append(_record(d, {"A": (E0_AGCL_V + 2e-5 * months + rng.normal(0, 5e-6),
                                          5e-6)}))
    history = electrode_history(records[::-1])["A"]  # order of the records does not matter
    assert history.dates[0] == "2026-01-15"
    assert history.u_drift_V_per_month is not None and history.drift_V_per_month is not None
    assert abs(history.drift_V_per_month - 2e-5) <= 2 * history.u_drift_V_per_month
    assert history.u_drift_V_per_month < 5e-6
    assert history.flagged and any("drift" in r for r in history.reasons)


def test_control_chart_flags_a_jump_of_four_sigma() -> None:
    offsets = [0.0, 4e-6, -3e-6, 2e-6, -4e-6, 3e-6, -1e-6, 1e-6]  # history, V
    values = [E0_AGCL_V + o for o in offsets]
    centre = float(np.mean(values))
    sigma = float(np.mean(np.abs(np.diff(values)))) / 1.128  # MR̄/d₂, d₂ = 1.128 (ASTM E2587)
    start = dt.date(2025, 1, 10)
    history = [_record(start + dt.timedelta(days=30 * i), {"A": (v, 5e-6)})
               for i, v in enumerate(values)]
    for jump, flagged in ((4.0, True), (1.0, False)):
        today = _record(start + dt.timedelta(days=30 * len(values)),
                        {"A": (centre + jump * sigma, 5e-6)})
        result = electrode_history([*history, today])["A"]
        assert result.chart is not None
        assert result.chart.centre_V == pytest.approx(centre, abs=1e-15)
        assert result.chart.sigma_V == pytest.approx(sigma, rel=1e-12)
        assert result.chart.out_of_control is flagged
        assert (len(values) in result.chart.violations["rule 1"]) is flagged
        assert result.flagged is flagged


# ------------------------------------------------------------------------------------------
# Bad input: one clear line


def test_electrode_without_a_reading_is_refused(tmp_path: Path) -> None:
    emf = E0_AGCL_V - CONVENTIONAL_TERM_V
    rows = [f"A,0.01,{emf!r}", f"A,0.01,{emf!r}", "B,0.01,"]
    with pytest.raises(InputError, match="electrode 'B' has no reading") as error:
        calibrate(_write(tmp_path, rows, _hydrogen_meta()))
    assert error.value.line == 4 and "\n" not in str(error.value)


def test_master_route_without_the_master_potential_is_refused(tmp_path: Path) -> None:
    meta = ('electrolyte = "KCl"\nelectrons = 1\ntemperature_C = 25.0\n'
            'calibration_method = "master"\nacceptance_tolerance_mV = 0.2\n')
    with pytest.raises(InputError, match="master_potential_mV") as error:
        read_run(_write(tmp_path, ["M1,3.0,0.0001", "M1,3.0,0.0002"], meta))
    assert error.value.line == 4 and error.value.column == "calibration_method"
    assert "\n" not in str(error.value)


def test_negative_tolerance_is_refused(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="acceptance_tolerance_mV must be a positive") as error:
        read_run(_write(tmp_path, ["A,0.01,0.464"], _hydrogen_meta().replace(
            "acceptance_tolerance_mV = 0.1", "acceptance_tolerance_mV = -0.1")))
    assert error.value.line == 4 and "\n" not in str(error.value)


def test_missing_electrode_column_and_tolerance_are_refused(tmp_path: Path) -> None:
    path = _write(tmp_path, ["0.01,0.464", "0.01,0.464"], _hydrogen_meta(),
                  header="molality_mol_kg,emf_V")
    with pytest.raises(InputError, match="'electrode' column"):
        calibrate(path)
    path = _write(tmp_path, ["A,0.01,0.464", "A,0.01,0.4641"],
                  'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n', stem="nt")
    with pytest.raises(InputError, match="acceptance_tolerance_mV"):
        calibrate(path)


@pytest.mark.literature
def test_catalogue_reference_is_the_catalogue_e0(tmp_path: Path) -> None:
    # Ag|AgCl 0.22234 V on 1 atm (Bates & Bower 1954) is 0.22217 V on 1 bar: the shift
    # (RT/2F) ln 1.01325 = 0.169 mV at 25 °C (derived; ../shared reference values)
    emf = 0.22217 - CONVENTIONAL_TERM_V
    meta = (f'cell = "{CELL}"\ntemperature_C = 25.0\nacceptance_tolerance_mV = 0.05\n'
            'acceptance_reference = "catalogue"\n')
    rows = [f"A,0.01,{emf + d!r}" for d in (-2e-6, 2e-6)]
    batch = calibrate(_write(tmp_path, rows, meta))
    assert batch.acceptance["reference_value_V"] == pytest.approx(0.22217, abs=2e-5)
    assert abs(batch.electrodes[0].deviation_V) < 2e-5


def test_records_round_trip_through_a_folder_of_json(tmp_path: Path) -> None:
    path, _ = _eight(tmp_path, _hydrogen_meta('date = "2026-11-18"\n'))
    batch = calibrate(path)
    folder = tmp_path / "records"
    folder.mkdir()
    record = {"calibration": batch.to_dict()}  # a record holding the calibration under a key
    (folder / "2026-11-18.json").write_text(json.dumps(record), encoding="utf-8")
    earlier = batch.to_dict() | {"date": "2026-10-18"}
    (folder / "2026-10-18.json").write_text(json.dumps(earlier), encoding="utf-8")
    (folder / "reduction.json").write_text(json.dumps({"record_kind": "reduction"}),
                                           encoding="utf-8")
    history = electrode_history(folder)
    assert list(history) == [f"E{j}" for j in range(1, 9)]
    assert history["E7"].dates == ("2026-10-18", "2026-11-18")
    assert history["E7"].drift_V_per_month is None and history["E7"].chart is None
    json.dumps(history["E7"].to_dict())
    undated = {"created_utc": "2026-12-01T09:00:00Z", "calibration": batch.to_dict() | {
        "date": None}}
    assert electrode_history([undated])["E1"].dates == ("2026-12-01",)
    with pytest.raises(InputError, match="ISO 8601"):
        electrode_history([batch.to_dict() | {"date": "18/11/2026"}])
