"""Temperature studies: E°(T), the thermodynamics of the cell reaction, isotherms, the global
cross-check and γ±(T) (activolt.procedures.temperature)."""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.constants import ATMOSPHERE_PA, FARADAY_C_MOL, STANDARD_PRESSURE_PA
from activolt.data.runs import read_run
from activolt.errors import InputError
from activolt.physics.corrections import standard_pressure_basis_shift
from activolt.procedures.temperature import (
    TemperatureStudy,
    fit_standard_potential,
    study_temperatures,
)

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




def test_choice_of_form_enters_the_uncertainty() -> None:
    # Nine E° values 5–45 °C on Bates & Bower's smoothing cubic (the generating truth; its
    # coefficients from memory, see bates_bower_smoothed_V), no noise, u(E°) = 0.02 mV: the
    # cubic term is too small for the BIC, which prefers the quadratic. The quadratic's slope
    # is biased by the cubic term (≈ 1.7 µV/K at 25 °C over ±20 K, common practice: the
    # projection of (T − θ)³ on (T − θ)); on its own covariance ΔH° would miss by 3.3 u.
    t_c = np.arange(5.0, 50.0, 5.0)
    fit = fit_standard_potential(t_c + 273.15, bates_bower_smoothed_V(t_c),
                                 np.full(t_c.size, 2e-5))
    assert fit.chosen == "polynomial" and fit.polynomial_degree == 2
    truth = truth_at(298.15)
    quadratic = fit.polynomial.thermodynamics(298.15, 1)
    cubic = next(p for p in fit.polynomials if p.degree == 3).thermodynamics(298.15, 1)
    names = ("delta_H_J_mol", "delta_S_J_K_mol")
    for name in names:
        own = quadratic.estimate(name)
        assert abs(own.value - truth[name]) > 3 * own.uncertainty, name
        # the value stays the chosen form's; its u is the cubic's with the shift to it in full
        reported = fit.reference.estimate(name)
        shift = cubic.estimate(name).value - own.value
        assert reported.value == own.value
        assert reported.uncertainty == pytest.approx(
            math.hypot(cubic.estimate(name).uncertainty, shift), rel=1e-9)
        assert abs(reported.value - truth[name]) <= (fit.reference.coverage_factor
                                                     * reported.uncertainty), name
    # the ΔH°–ΔS° covariance carries the same shifts: V = V_cubic + δδᵀ
    i, j = (2, 3)
    delta = cubic.values - quadratic.values
    assert fit.reference.covariance[i, j] == pytest.approx(
        cubic.covariance[i, j] + delta[i] * delta[j], rel=1e-9)
    (component,) = fit.form_components
    assert component.kind == "next_degree" and component.degree == 3
    assert component.shift("delta_H_J_mol") == pytest.approx(delta[i], rel=1e-12)
    assert component.description in fit.notes and "degree 3" in component.description
    record = fit.to_dict()["form_uncertainty"]
    assert record[0]["kind"] == "next_degree"
    assert record[0]["shift_at_reference"]["delta_S_J_K_mol"] == pytest.approx(delta[j])
    # every isotherm's values carry it too
    at_25 = fit.at_temperatures[4]
    assert at_25.temperature_K == pytest.approx(298.15)
    assert at_25.delta_H_J_mol.uncertainty == pytest.approx(
        fit.reference.delta_H_J_mol.uncertainty, rel=1e-9)
    # and so do the quantities at any other T (the E°(T) figure's band reads them), and the
    # band between the data temperatures is the cubic's with the shift, not the quadratic's
    between = fit.thermodynamics(300.65)
    cubic_between = next(p for p in fit.polynomials if p.degree == 3).thermodynamics(300.65, 1)
    quadratic_between = fit.polynomial.thermodynamics(300.65, 1)
    assert between.standard_potential_V.value == quadratic_between.standard_potential_V.value
    assert between.standard_potential_V.uncertainty == pytest.approx(math.hypot(
        cubic_between.standard_potential_V.uncertainty,
        cubic_between.standard_potential_V.value - quadratic_between.standard_potential_V.value),
        rel=1e-9)
    assert np.array_equal(fit.thermodynamics(298.15).covariance, fit.reference.covariance,
                          equal_nan=True)


def test_highest_allowed_form_carries_no_choice_component() -> None:
    # Six temperatures allow degree 3 at most (two degrees of freedom left): a cubic chosen
    # there has no next form up among those allowed; its uncertainty is its own (the quartic,
    # with one degree of freedom, counts only when its F-test is significant).
    t_c = np.arange(5.0, 60.0, 10.0)
    fit = fit_standard_potential(t_c + 273.15, bates_bower_smoothed_V(t_c),
                                 np.full(t_c.size, 1e-6))
    assert fit.polynomial_degree == 3 and fit.chosen == "polynomial"
    assert fit.form_components == ()
    own = fit.polynomial.thermodynamics(298.15, 1)
    assert fit.reference.delta_H_J_mol.uncertainty == own.delta_H_J_mol.uncertainty


@settings(max_examples=60, deadline=None, derandomize=True)
@given(seed=st.integers(0, 2**31 - 1), n=st.integers(5, 12),
       u_V=st.sampled_from([2e-6, 1e-5, 5e-5]), excess=st.sampled_from([1.0, 3.0]))
def test_choice_of_form_never_narrows_the_interval(seed: int, n: int, u_V: float,
                                                   excess: float) -> None:
    # For any E° values (the smoothing cubic plus noise at the stated u, or at three times it,
    # so that a form's covariance is scaled for lack of fit): the reported u of
    # ΔH° and ΔS° is never below the chosen form's own, nor below the next form up's when one
    # is carried (V = V_{d+1} + δδᵀ ⪰ V_{d+1}); the values are the chosen form's.
    rng = np.random.default_rng(seed)
    t_c = np.sort(rng.uniform(2.0, 60.0, n))
    t_c[0], t_c[-1] = 5.0, 45.0 + n
    e0 = bates_bower_smoothed_V(t_c) + rng.normal(0.0, excess * u_V, n)
    fit = fit_standard_potential(t_c + 273.15, e0, np.full(n, u_V))
    own = fit.form.thermodynamics(298.15, 1)
    for name in ("delta_H_J_mol", "delta_S_J_K_mol"):
        reported = fit.reference.estimate(name)
        assert reported.value == own.estimate(name).value
        assert reported.uncertainty >= own.estimate(name).uncertainty * (1 - 1e-12)
        for component in fit.form_components:
            if component.kind == "next_degree":
                following = next(p for p in fit.polynomials if p.degree == component.degree)
                floor = following.thermodynamics(298.15, 1).estimate(name).uncertainty
                assert component.degree == (fit.polynomial_degree + 1
                                            if fit.chosen == "polynomial" else 3)
                assert reported.uncertainty >= floor * (1 - 1e-12)
    assert fit.reference.coverage_factor >= own.coverage_factor


# ---------------------------------------------------------------------------------------------
# Studies of synthetic runs
# ---------------------------------------------------------------------------------------------

def bates_bower_smoothed_V(t_C: np.ndarray | float) -> np.ndarray:
    """Bates & Bower (1954) smoothing equation, t in °C (0.23659 confirmed; the other
    coefficients from memory, reference-values.md) — the generating truth of synthetic studies,
    not a check value itself."""
    t = np.asarray(t_C, dtype=float)
    return 0.23659 - 4.8564e-4 * t - 3.4205e-6 * t**2 + 5.869e-9 * t**3


def truth_at(temperature_K: float) -> dict[str, float]:
    """ΔH°, ΔS°, ΔCp° implied by the generating E°(T) (n = 1)."""
    t = temperature_K - 273.15
    e = float(bates_bower_smoothed_V(t))
    d1 = -4.8564e-4 - 2 * 3.4205e-6 * t + 3 * 5.869e-9 * t**2
    d2 = -2 * 3.4205e-6 + 6 * 5.869e-9 * t
    return {"standard_potential_V": e, "delta_S_J_K_mol": FARADAY_C_MOL * d1,
            "delta_H_J_mol": FARADAY_C_MOL * (temperature_K * d1 - e),
            "delta_Cp_J_K_mol": FARADAY_C_MOL * temperature_K * d2}


SETPOINTS_C = (5.0, 15.0, 25.0, 35.0, 45.0, 55.0)
MOLALITIES = (0.002, 0.003, 0.005, 0.0075, 0.01, 0.015, 0.02, 0.03, 0.05, 0.07, 0.1)
A_ANGSTROM = 4.3
U_EMF_V = 1e-5


def b_kg_mol(t_C: float) -> float:
    """The Hückel b of the synthetic γ±, varying mildly with T (invented for the test)."""
    return 0.30 - 0.0015 * (t_C - 25.0)


def synthetic_table(rng: np.random.Generator, molalities: tuple[float, ...] = MOLALITIES,
                    offsets_K: dict[float, float] | None = None, noise_V: float = U_EMF_V,
                    setpoints_C: tuple[float, ...] = SETPOINTS_C, u_emf_V: float = U_EMF_V
                    ) -> str:
    """Rows of a study: every molality at every setpoint, readings from the generating E°(T)
    and a Hückel γ± (å = 4.3 Å, b(T)) at each row's own temperature, normal noise (0.01 mV);
    u(EMF) is stated as ``u_emf_V`` (0.01 mV) whatever the noise."""
    from synthetic import emf_from_gamma

    from activolt.activity import get_model
    from activolt.chemistry.electrolytes import parse_electrolyte
    from activolt.physics.water import debye_hueckel_constants

    model = get_model("hueckel")
    hcl = parse_electrolyte("HCl")
    rows = ["molality_mol_kg,emf_V,u_emf_V,temperature_C"]
    for t_c in setpoints_C:
        for i, m in enumerate(molalities):
            # a few readings off their setpoint, to exercise the correction
            t_row = t_c + ((offsets_K or {}).get(t_c, 0.0) if i % 3 == 1 else 0.0)
            t_k = t_row + 273.15
            constants = debye_hueckel_constants(np.array([t_k]))
            ln_g = model.ln_gamma(hcl, np.array([m]), constants,
                                  {"a_angstrom": A_ANGSTROM, "b_kg_mol": b_kg_mol(t_row)})
            emf = emf_from_gamma(np.array([m]), np.exp(ln_g), float(bates_bower_smoothed_V(t_row)),
                                 temperature_K=t_k)[0] + rng.normal(0.0, noise_V)
            rows.append(f"{float(m)!r},{float(emf)!r},{u_emf_V!r},{float(t_row)!r}")
    return "\n".join(rows) + "\n"


def write_study(folder: Path, text: str, stem: str = "study") -> Path:
    table = folder / f"{stem}.csv"
    table.write_text(text, encoding="utf-8")
    (folder / f"{stem}.toml").write_text('electrolyte = "HCl"\nelectrons = 1\n',
                                          encoding="utf-8")
    return table


def test_round_trip_recovers_the_generating_thermodynamics(tmp_path: Path) -> None:
    rng = np.random.default_rng(20240611)
    path = write_study(tmp_path, synthetic_table(rng, offsets_K={15.0: 0.3, 45.0: -0.25}))
    study = study_temperatures(read_run(path), "hueckel", fixed={"a_angstrom": A_ANGSTROM})
    assert [round(i.setpoint_K - 273.15, 6) for i in study.isotherms] == list(SETPOINTS_C)
    for iso in study.isotherms:
        true_e0 = float(bates_bower_smoothed_V(iso.setpoint_K - 273.15))
        e0 = iso.standard_potential_V
        assert abs(e0.value - true_e0) <= 3e-5
        assert abs(e0.value - true_e0) <= 3 * e0.uncertainty
    corrected = {round(i.setpoint_K - 273.15, 3): i for i in study.isotherms}
    # dE°/dT ≈ −0.6 mV/K: 0.3 K off is about 0.2 mV, referred to the setpoint and recorded.
    assert corrected[15.0].max_correction_V == pytest.approx(0.3 * 0.56e-3, rel=0.1)
    assert corrected[25.0].max_correction_V == 0.0
    assert study.passes >= 2
    ref = study.reference
    truth = truth_at(298.15)
    for name, tolerance in (("delta_H_J_mol", 100.0), ("delta_S_J_K_mol", 0.3),
                            ("delta_Cp_J_K_mol", 20.0)):
        estimate = ref.estimate(name)
        assert abs(estimate.value - truth[name]) <= tolerance, name
        assert abs(estimate.value - truth[name]) <= 3 * estimate.uncertainty, name
    # every isotherm's thermodynamics are there, on the run's pressure basis
    record = study.to_dict()
    assert record["standard_pressure_Pa"] == STANDARD_PRESSURE_PA
    assert len(record["isotherms"]) == len(record["at_isotherms"]) == 6
    assert set(record["isotherms"][0]) >= {"temperature_K", "n_points", "model",
                                           "standard_potential_V"}
    assert record["delta_H_J_mol"]["uncertainty"] > 0
    json.dumps(record, allow_nan=False)


@pytest.fixture(scope="module")
def round_trip_study(tmp_path_factory: pytest.TempPathFactory) -> TemperatureStudy:
    rng = np.random.default_rng(7)
    path = write_study(tmp_path_factory.mktemp("study"), synthetic_table(rng))
    return study_temperatures(read_run(path), "hueckel", fixed={"a_angstrom": A_ANGSTROM})


def test_global_fit_agrees_with_the_two_stage_result(round_trip_study: TemperatureStudy) -> None:
    global_fit = round_trip_study.global_fit
    assert global_fit is not None
    two_stage = round_trip_study.reference
    truth = truth_at(298.15)
    for name in ("standard_potential_V", "delta_H_J_mol", "delta_S_J_K_mol"):
        u = two_stage.estimate(name).uncertainty
        assert abs(global_fit.differences[name]) <= 2 * u, name
        assert abs(global_fit.reference.estimate(name).value - truth[name]) <= 3 * max(
            u, global_fit.reference.estimate(name).uncertainty), name
    # b varies with T in the generating γ± (−0.0015 kg/mol per K); the global fit finds it.
    slope = global_fit.parameters["b_kg_mol_1"]
    assert abs(slope.value - (-0.0015)) <= 3 * slope.uncertainty
    assert "a_angstrom" in global_fit.held


def test_gamma_table_follows_the_generating_model(round_trip_study: TemperatureStudy) -> None:
    from activolt.activity import get_model
    from activolt.chemistry.electrolytes import parse_electrolyte
    from activolt.physics.water import debye_hueckel_constants

    table = round_trip_study.gamma_table
    # round molalities within 0.002–0.1 mol/kg at each of the six temperatures
    assert sorted(set(table["molality_mol_kg"])) == [0.002, 0.005, 0.01, 0.02, 0.05, 0.1]
    assert table.groupby("temperature_K").size().tolist() == [6] * 6
    model = get_model("hueckel")
    for row in table.itertuples():
        t_c = row.temperature_K - 273.15
        truth = float(np.exp(model.ln_gamma(
            parse_electrolyte("HCl"), np.array([row.molality_mol_kg]),
            debye_hueckel_constants(np.array([row.temperature_K])),
            {"a_angstrom": A_ANGSTROM, "b_kg_mol": b_kg_mol(t_c)}))[0])
        assert row.u_gamma_pm > 0
        assert abs(row.gamma_pm - truth) <= max(3 * row.u_gamma_pm, 1e-6)


def test_one_isotherm_only_is_refused(tmp_path: Path) -> None:
    rng = np.random.default_rng(1)
    text = "".join(line + "\n" for line in synthetic_table(rng).splitlines()
                   if line.startswith("molality") or line.endswith(",25.0"))
    run = read_run(write_study(tmp_path, text))
    with pytest.raises(InputError, match="needs isotherms at two temperatures"):
        study_temperatures(run)


def test_isotherm_with_too_few_readings_is_refused(tmp_path: Path) -> None:
    rng = np.random.default_rng(2)
    lines = synthetic_table(rng).splitlines()
    keep = [lines[0]] + [line for line in lines[1:] if not line.endswith(",55.0")]
    keep += [line for line in lines[1:] if line.endswith(",55.0")][:2]
    run = read_run(write_study(tmp_path, "\n".join(keep) + "\n"))
    with pytest.raises(InputError, match=r"55\.00 °C has 2 usable reading\(s\)") as error:
        study_temperatures(run)
    assert error.value.file is not None and error.value.line is not None


def test_temperatures_outside_liquid_water_are_refused(tmp_path: Path) -> None:
    rng = np.random.default_rng(3)
    run = read_run(write_study(tmp_path, synthetic_table(rng)))
    points = run.points.copy()
    points.loc[points.index[-1], "temperature_K"] = 380.0
    with pytest.raises(InputError, match="outside liquid water") as error:
        study_temperatures(dataclasses.replace(run, points=points))
    assert error.value.line == int(points["line"].iloc[-1])
    with pytest.raises(InputError, match="reference temperature"):
        study_temperatures(run, reference_temperature_K=250.0)


@pytest.mark.slow
def test_intervals_of_enthalpy_and_entropy_cover_the_truth(tmp_path: Path) -> None:
    # 1000 simulated studies (six isotherms, six molalities each, 0.01 mV noise; more than the
    # 200 asked so that the binomial scatter of the rate, 0.7 %, is well inside 93–97 %): the
    # 95 % intervals (k from the E°(T) fit) of ΔH° and ΔS° at 298.15 K must cover the values
    # implied by the generating E°(T) 93–97 % of the time.
    molalities = (0.002, 0.005, 0.01, 0.02, 0.05, 0.1)
    rng = np.random.default_rng(95)
    run = read_run(write_study(tmp_path, synthetic_table(rng, molalities, noise_V=0.0)))
    exact = run.points["emf_V"].to_numpy(float)
    truth = truth_at(298.15)
    trials = 1000
    covered = {"delta_H_J_mol": 0, "delta_S_J_K_mol": 0}
    for _ in range(trials):
        points = run.points.copy()
        points["emf_V"] = exact + rng.normal(0.0, U_EMF_V, exact.size)
        study = study_temperatures(dataclasses.replace(run, points=points), "hueckel",
                                   fixed={"a_angstrom": A_ANGSTROM}, cross_check=False)
        ref = study.reference
        for name in covered:
            estimate = ref.estimate(name)
            covered[name] += abs(estimate.value - truth[name]) <= (ref.coverage_factor
                                                                   * estimate.uncertainty)
    for name, count in covered.items():
        assert 0.93 <= count / trials <= 0.97, (name, count / trials)


NINE_SETPOINTS_C = tuple(np.arange(5.0, 50.0, 5.0))
EIGHT_MOLALITIES = (0.002, 0.005, 0.01, 0.02, 0.03, 0.05, 0.07, 0.1)


def test_report_and_record_say_how_the_form_entered_the_uncertainty(tmp_path: Path) -> None:
    from activolt.report.temperature import format_temperature_report

    # Nine isotherms 5–45 °C without noise, å free: degree 4 is allowed, so a lower degree
    # chosen carries the next one up; report and record say so and by how much.
    run = read_run(write_study(tmp_path, synthetic_table(
        np.random.default_rng(1), EIGHT_MOLALITIES, noise_V=0.0, setpoints_C=NINE_SETPOINTS_C,
        u_emf_V=2e-5)))
    study = study_temperatures(run, "hueckel", cross_check=False)
    fit = study.standard_potential_fit
    assert fit.polynomial_degree < 4 and fit.chosen == "polynomial"
    (component,) = fit.form_components
    assert component.degree == fit.polynomial_degree + 1
    assert component.description in study.notes
    assert f"note: {component.description}" in format_temperature_report(study)
    record = study.to_dict()
    assert record["e0_fit"]["form_uncertainty"][0]["kind"] == "next_degree"
    assert component.description in record["notes"]
    json.dumps(record, allow_nan=False)


@pytest.mark.slow
def test_intervals_cover_the_truth_when_the_form_is_chosen_by_the_data(tmp_path: Path) -> None:
    # 1000 simulated studies: nine isotherms 5–45 °C, eight molalities 0.002–0.1 mol/kg, 0.02 mV
    # noise equal to the stated u(EMF), å free in every isotherm (held where the data cannot
    # determine it). The generating E°(T) is Bates & Bower's smoothing cubic (coefficients from
    # memory; bates_bower_smoothed_V), whose cubic term the BIC often cannot resolve: it picks
    # the quadratic in about a third of the studies. The 95 % intervals of ΔH° and ΔS° at
    # 298.15 K must cover the values implied by the generating E°(T) at least 93 % of the time
    # and no more than 97 % (binomial scatter of the rate at 95 %: √(0.95·0.05/1000) = 0.7 %).
    # Before the choice of form entered the uncertainty they covered 64 % (quadratic chosen:
    # misses up to 6.8 u); with it, when written, 96.5 % (ΔH°) and 96.6 % (ΔS°), the quadratic
    # chosen in 411 of the 1000 — on the wide side of 95 %, since the next form up is carried
    # whether or not its term is there.
    rng = np.random.default_rng(1954)
    run = read_run(write_study(tmp_path, synthetic_table(
        rng, EIGHT_MOLALITIES, noise_V=0.0, setpoints_C=NINE_SETPOINTS_C, u_emf_V=2e-5)))
    exact = run.points["emf_V"].to_numpy(float)
    truth = truth_at(298.15)
    trials = 1000
    covered = {"delta_H_J_mol": 0, "delta_S_J_K_mol": 0}
    degrees: dict[int, int] = {}
    for _ in range(trials):
        points = run.points.copy()
        points["emf_V"] = exact + rng.normal(0.0, 2e-5, exact.size)
        study = study_temperatures(dataclasses.replace(run, points=points), "hueckel",
                                   cross_check=False)
        fit = study.standard_potential_fit
        degrees[fit.polynomial_degree] = degrees.get(fit.polynomial_degree, 0) + 1
        ref = study.reference
        for name in covered:
            estimate = ref.estimate(name)
            covered[name] += abs(estimate.value - truth[name]) <= (ref.coverage_factor
                                                                   * estimate.uncertainty)
    # the scenario does exercise the choice: the quadratic is chosen in a good share
    assert degrees.get(2, 0) >= trials // 10, degrees
    for name, count in covered.items():
        assert 0.93 <= count / trials <= 0.97, (name, count / trials, degrees)
