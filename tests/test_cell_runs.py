"""Runs declared by their cell diagram: gas-pressure correction, pressure basis, 2:1 cells,
consumed electrolytes, and the slope factor of ion-selective electrode pairs.

Sources of check values:
- E°(Ag|AgCl) = 0.22234 V at 25 °C on the 1 atm basis: Bates & Bower (1954), J. Res. NBS 53, 283,
  Table 1; on the 1 bar basis 0.169 mV lower at 25 °C (reference-values.md, derived:
  (RT/2F) ln 1.01325).
- HCl γ± at 25 °C: Robinson & Stokes (1959), Appendix 8.10 (from memory; shipped table).
- CaCl2 γ± at 25 °C: CRC Handbook, mean activity coefficients (after Hamer & Wu 1972; confirmed).
- Vapour pressure of water: IAPWS-IF97 through the iapws package; R and F from scipy.constants.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from iapws.iapws97 import _PSat_T
from scipy import constants as sc

from activolt.activity.published import interpolate_gamma, published_gamma
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import read_run
from activolt.procedures.dilution import reduce_run

HARNED = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
E0_ATM_V = 0.22234  # Bates & Bower (1954), Table 1
E0_BAR_V = E0_ATM_V - sc.R * 298.15 / (2 * sc.physical_constants["Faraday constant"][0]) \
    * math.log(1.01325)


def _write(folder, header, rows, meta):
    (folder / "run.csv").write_text(header + "\n" + "\n".join(rows) + "\n")
    (folder / "run.toml").write_text(meta)
    return folder / "run.csv"


def _hcl(m):
    table = published_gamma("HCl", 298.15)
    return interpolate_gamma(table, m, parse_electrolyte("HCl"), 298.15)


def test_harned_cell_from_its_diagram_with_barometric_pressures(tmp_path):
    m = np.array([0.001, 0.005, 0.01, 0.05, 0.1, 0.5, 1.0])  # the table's own molalities
    pressure_kPa = np.linspace(99.2, 102.4, m.size)
    faraday = sc.physical_constants["Faraday constant"][0]
    k2 = 2 * sc.R * 298.15 / faraday
    emf_bar = E0_BAR_V - k2 * np.log(m * _hcl(m))
    p_h2 = pressure_kPa * 1e3 - _PSat_T(298.15) * 1e6
    # Observed EMF at p_H2: E_obs = E(p°) − (RT/2F) ln(p°/p_H2) (Harned & Owen 1958, ch. 10).
    emf_obs = emf_bar - sc.R * 298.15 / (2 * faraday) * np.log(1e5 / p_h2)
    rows = [f"{a},{b * 1e3:.6f},0.01,{c}" for a, b, c in zip(m, emf_obs, pressure_kPa,
                                                               strict=True)]
    path = _write(tmp_path, "molality_mol_kg,emf_mV,u_emf_mV,pressure_kPa", rows,
                  f'cell = "{HARNED}"\ntemperature_C = 25.0\nstandard_pressure_kPa = 100\n')
    run = read_run(path)
    assert run.metadata.electrolyte.formula == "HCl" and run.metadata.electrons == 1
    reduction = reduce_run(run)
    assert reduction.standard_potential.nominal_value == pytest.approx(E0_BAR_V, abs=0.03e-3)
    other_Pa, other_V = reduction.standard_potential_other_basis_V
    assert other_Pa == 101325.0
    assert (other_V - reduction.standard_potential.nominal_value) * 1e3 == pytest.approx(
        0.169, abs=0.001)
    # Each row's correction is (RT/2F) ln(p°/p_H2) (IAPWS vapour pressure within 0.1 %).
    np.testing.assert_allclose(reduction.points["pressure_correction_V"],
                               emf_bar - emf_obs, atol=1e-7)
    assert any("corrected to p° = 100 kPa" in line for line in reduction.corrections)


def test_cell_and_shortcut_must_agree(tmp_path):
    from activolt.errors import InputError

    path = _write(tmp_path, "molality_mol_kg,emf_V", ["0.01,0.46", "0.02,0.43", "0.05,0.39"],
                  f'cell = "{HARNED}"\nelectrolyte = "NaCl"\ntemperature_C = 25\n')
    with pytest.raises(InputError, match="cell diagram's electrolyte is HCl"):
        read_run(path)
    path = _write(tmp_path, "molality_mol_kg,emf_V", ["0.01,0.46", "0.02,0.43", "0.05,0.39"],
                  'cell = "Pt | H2(g) | HCl(aq) | AgCl(s | Ag(s)"\ntemperature_C = 25\n')
    with pytest.raises(InputError, match="character"):
        read_run(path)


def test_cacl2_cell_round_trips(tmp_path):
    # Ca(Hg) | CaCl2(aq) | AgCl(s) | Ag(s): n = 2, factor 3RT/2F, m± = 4^(1/3) m.
    table = published_gamma("CaCl2", 298.15)
    table = table[table.molality_mol_kg <= 0.1]
    m = table.molality_mol_kg.to_numpy()
    gamma = table.gamma_pm.to_numpy()
    k = 3 * sc.R * 298.15 / (2 * sc.physical_constants["Faraday constant"][0])
    e0 = 2.0  # an arbitrary truth for the amalgam cell (its E° holds the amalgam's activity)
    emf = e0 - k * np.log(4 ** (1 / 3) * m * gamma)
    rows = [f"{a},{float(b)!r},2e-5" for a, b in zip(m, emf, strict=True)]
    path = _write(tmp_path, "molality_mol_kg,emf_V,u_emf_V", rows,
                  'cell = "Ca(Hg) | CaCl2(aq) | AgCl(s) | Ag(s)"\ntemperature_C = 25\n')
    run = read_run(path)
    assert run.metadata.electrons == 2 and run.metadata.electrolyte.formula == "CaCl2"
    reduction = reduce_run(run, "hueckel")
    # Five points, the table's three decimals: E° within 0.1 mV, γ± within 0.003.
    assert reduction.standard_potential.nominal_value == pytest.approx(e0, abs=0.1e-3)
    np.testing.assert_allclose(reduction.points["gamma_pm"], gamma, atol=0.003)


def test_consumed_electrolyte_changes_the_sign(tmp_path):
    # Ag(s) | AgCl(s) | KCl(aq) | K(Hg): the reaction consumes KCl, so E = E° + 2(RT/F) ln(m γ±).
    table = published_gamma("KCl", 298.15)
    table = table[table.molality_mol_kg <= 1.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    k = 2 * sc.R * 298.15 / sc.physical_constants["Faraday constant"][0]
    emf = 2.1 + k * np.log(m * gamma)
    rows = [f"{a},{float(b)!r},2e-5" for a, b in zip(m, emf, strict=True)]
    path = _write(tmp_path, "molality_mol_kg,emf_V,u_emf_V", rows,
                  'cell = "Ag(s) | AgCl(s) | KCl(aq) | K(Hg)"\ntemperature_C = 25\n')
    run = read_run(path)
    assert run.metadata.electrolyte_sign == -1
    reduction = reduce_run(run, "hueckel")
    assert reduction.standard_potential.nominal_value == pytest.approx(2.1, abs=0.05e-3)
    np.testing.assert_allclose(reduction.points["gamma_pm"], gamma, atol=0.002)


def test_ion_selective_pair_slope_factor(tmp_path):
    # A Na+-ISE | NaCl | Cl−-ISE pair responding with 98.5 % of the Nernstian slope (a typical
    # sub-Nernstian pair; common practice). NaCl γ±: Pitzer, Peiper & Busey (1984) table.
    table = published_gamma("NaCl", 298.15)
    table = table[table.molality_mol_kg <= 2.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    k = 2 * sc.R * 298.15 / sc.physical_constants["Faraday constant"][0]
    emf = 0.15 - 0.985 * k * np.log(m * gamma)
    emf = emf + np.random.default_rng(4).normal(0, 0.05e-3, m.size)
    rows = [f"{a},{float(b)!r},5e-5" for a, b in zip(m, emf, strict=True)]
    path = _write(tmp_path, "molality_mol_kg,emf_V,u_emf_V", rows,
                  'electrolyte = "NaCl"\nelectrons = 1\ntemperature_C = 25\n'
                  'slope_factor = "fit"\n')
    reduction = reduce_run(read_run(path), "hueckel")
    s = next(p for p in reduction.parameters if p.name == "slope_factor")
    assert not s.fixed
    assert abs(s.value - 0.985) < 3 * s.uncertainty + 0.002
    assert abs(reduction.standard_potential.nominal_value - 0.15) < (
        3 * reduction.standard_potential.std_dev + 0.2e-3)


def test_solute_vapour_lowering_moves_the_concentrated_readings(tmp_path):
    # With the water vapour over 1 mol/kg HCl lowered to a_w p_w, a_w ≈ 0.965 (reference-values.md,
    # from memory), p_H2 rises by 0.035 p_w and the correction to p° falls by
    # (RT/2F) ln[(p − 0.965 p_w)/(p − p_w)] ≈ 0.0145 mV at 101.325 kPa and 25 °C.
    m = np.array([0.001, 0.005, 0.01, 0.05, 0.1, 0.5, 1.0])
    faraday = sc.physical_constants["Faraday constant"][0]
    emf = E0_BAR_V - 2 * sc.R * 298.15 / faraday * np.log(m * _hcl(m))
    rows = [f"{a},{float(b)!r},2e-5" for a, b in zip(m, emf, strict=True)]
    meta = f'cell = "{HARNED}"\ntemperature_C = 25.0\npressure_kPa = 101.325\n'
    plain = reduce_run(read_run(_write(tmp_path, "molality_mol_kg,emf_V,u_emf_V", rows, meta)))
    lowered = reduce_run(read_run(_write(tmp_path, "molality_mol_kg,emf_V,u_emf_V", rows,
                                         meta + "solute_vapour_lowering = true\n")))
    p_w = _PSat_T(298.15) * 1e6
    expected = sc.R * 298.15 / (2 * faraday) * math.log(
        (101325 - 0.965 * p_w) / (101325 - p_w))
    shift = (plain.points["pressure_correction_V"] - lowered.points["pressure_correction_V"])
    assert shift.iloc[-1] == pytest.approx(expected, abs=0.001e-3)
    assert shift.iloc[0] == pytest.approx(0.0, abs=0.0002e-3)  # a_w ≈ 1 at 0.001 mol/kg
    assert any("a_w p_w" in line for line in lowered.corrections)
