"""Inputs shared by every reading of a run, and by every isotherm of a study that states them:
the stock solution's molality and an offset of the electrodes (GUM, JCGM 100:2008, 5.2.2).

Check values follow from the measurement model itself (common practice): an offset δ of every
reading moves E° by δ exactly; a relative error δ of every molality moves ln m± by δ, so E° by
k·δ where the Debye–Hückel term barely changes; a common offset cancels from a slope, so ΔS°
keeps its uncertainty while E°(θ) takes the offset's.
"""

from __future__ import annotations

import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run
from test_temperature_study import A_ANGSTROM, synthetic_table, write_study

from activolt.activity.hueckel import ln_gamma
from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.data.runs import read_run
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run
from activolt.procedures.temperature import isotherm_covariance, study_temperatures

HCL = parse_electrolyte("HCl")


def _run(tmp_path, extra: str):
    m = np.geomspace(0.001, 0.05, 10)
    constants = debye_hueckel_constants(np.full(m.size, 298.15))
    emf = emf_from_gamma(m, np.exp(ln_gamma(HCL, m, constants, {"a_angstrom": 4.3,
                                                                "b_kg_mol": 0.2})), 0.2223)
    path = write_run(tmp_path, m, emf + np.random.default_rng(2).normal(0, 1e-5, m.size),
                     u_emf_V=1e-5)
    path.with_suffix(".toml").write_text(path.with_suffix(".toml").read_text() + extra)
    return read_run(path)


def test_an_electrode_offset_moves_e0_one_to_one(tmp_path):
    reduction = reduce_run(_run(tmp_path, "u_electrode_offset_mV = 0.05\n"))
    budget = {line.component: line.u_V for line in reduction.budget}
    assert budget["electrode offset"] == pytest.approx(5e-5, rel=1e-6)
    assert reduction.shared_inputs[0][0] == "electrode offset"
    assert reduction.shared_inputs[0][2] == pytest.approx(1.0, rel=1e-6)


def test_a_stock_molality_error_moves_e0_by_k_delta(tmp_path):
    reduction = reduce_run(_run(tmp_path, "u_stock_molality_relative = 0.001\n"))
    budget = {line.component: line.u_V for line in reduction.budget}
    k = float(nernst_factor(HCL, 1, 298.15))
    assert budget["stock molality"] == pytest.approx(k * 0.001, rel=0.05)
    assert "u_gamma_pm_stock_molality" in reduction.points


def test_shared_inputs_correlate_the_isotherms(tmp_path):
    """With a 0.05 mV electrode offset stated alike at every isotherm, the E° values are
    correlated by u² = (0.05 mV)²: E°(θ) takes the offset's uncertainty, ΔS° (a slope) keeps
    its own — treating the isotherms as independent would have inflated it instead."""
    rng = np.random.default_rng(11)
    table = synthetic_table(rng)
    plain = study_temperatures(read_run(write_study(tmp_path, table, "plain")), "hueckel",
                               fixed={"a_angstrom": A_ANGSTROM})
    offset_path = write_study(tmp_path, table, "offset")
    offset_path.with_suffix(".toml").write_text(offset_path.with_suffix(".toml").read_text()
                                                + "u_electrode_offset_mV = 0.05\n")
    shared = study_temperatures(read_run(offset_path), "hueckel",
                                fixed={"a_angstrom": A_ANGSTROM})
    covariance = isotherm_covariance([iso.reduction for iso in shared.isotherms])
    assert covariance[0, 1] == pytest.approx((5e-5) ** 2, rel=1e-6)
    u_e0 = shared.reference.estimate("standard_potential_V").uncertainty
    assert u_e0 >= 5e-5
    u_s_shared = shared.reference.estimate("delta_S_J_K_mol").uncertainty
    u_s_plain = plain.reference.estimate("delta_S_J_K_mol").uncertainty
    assert u_s_shared == pytest.approx(u_s_plain, rel=0.05)
    assert any("correlated through electrode offset" in n for n in shared.notes)


def test_a_study_names_the_cell_reaction_it_reports(tmp_path):
    """ΔH°, ΔS° … are those of the reaction as the diagram writes it (IUPAC convention:
    oxidation at the left): ½H2 + AgCl → H⁺ + Ag + Cl⁻ for the Harned cell."""
    path = write_study(tmp_path, synthetic_table(np.random.default_rng(3)))
    path.with_suffix(".toml").write_text(
        'cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"\n', encoding="utf-8")
    study = study_temperatures(read_run(path), "hueckel", fixed={"a_angstrom": A_ANGSTROM})
    assert study.to_dict()["reaction"] == "1/2 H2(g) + AgCl(s) → H+(aq) + Ag(s) + Cl-(aq)"
    assert study.electrons == 1
