"""Make the demo buffer table of the (invented) Kestrel Bay Electrochemistry Laboratory.

The equimolal phosphate buffer (0.025 mol/kg KH2PO4 + 0.025 mol/kg Na2HPO4, I = 0.1 mol/kg)
read in the Harned cell Pt | H2(g) | buffer, KCl(m_Cl) | AgCl(s) | Ag(s) at 25 °C, chloride
added at 0.005, 0.010, 0.015 and 0.020 mol/kg, each solution read with two of the electrodes
calibrated in the demo batch (``kestrel_agcl_batch.csv``: KB-AgCl-21 and KB-AgCl-22), at the
day's barometric pressure. The readings are made from pH 6.865 (the IUPAC value at 25 °C,
Buck et al. 2002), the Bates–Guggenheim term at I = 0.1 mol/kg, an invented slope of the
acidity function (0.08 kg/mol) and normal noise of 0.01 mV, with each electrode's E° as the
demo batch calibrates it. Demo data only: never a check value.

Hazards of the real measurement: hydrogen gas (flammable, explosive with air) — vent the
electrode outlet away from flames and sparks; follow local codes and the laboratory's rules.

Run from the project root:  .venv/bin/python sample_data/make_ph_buffer.py
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from activolt.constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K
from activolt.physics.corrections import hydrogen_partial_pressure
from activolt.procedures.calibration import calibrate
from activolt.procedures.ph import bates_guggenheim_log10_gamma_chloride

HERE = Path(__file__).resolve().parent
STEM = "kestrel_phosphate_ph"
BATCH = "kestrel_agcl_batch.csv"
PH_TRUE = 6.865  # Buck et al. (2002), the phosphate primary standard at 25 °C (demo truth)
IONIC_STRENGTH_MOL_KG = 0.1
SLOPE_KG_MOL = 0.08  # invented
TEMPERATURE_K = 298.15
CHLORIDE_MOL_KG = (0.005, 0.010, 0.015, 0.020)
ELECTRODES = ("KB-AgCl-21", "KB-AgCl-22")
NOISE_V = 0.01e-3

METADATA = """\
# Metadata for kestrel_phosphate_ph.csv (invented lab, demo only)
# Cell: Pt | H2(g) | buffer, KCl(m_Cl) | AgCl(s) | Ag(s) — hydrogen gas: vent the outlet away
# from flames and sparks; follow local codes and the laboratory's safety rules.
temperature_C = 25.0
standard_pressure_kPa = 100
u_temperature_K = 0.02            # thermostat bath, calibrated thermometer
u_pressure_kPa = 0.03             # barometer
u_stock_molality_relative = 0.001  # KCl stock solution, by weight
voltmeter_u_mV = 0.005            # electrometer, from its own calibration certificate
buffer = "phosphate"              # the catalogue's equimolal phosphate primary standard
buffer_ionic_strength_mol_kg = 0.1
calibration_batch = "kestrel_agcl_batch.csv"   # E° of the electrodes, calibrated the same week
lab = "Kestrel Bay Electrochemistry Laboratory"
operator = "R. Okonkwo-Lind"
instrument = "KB-DVM-2 electrometer, input impedance > 10^13 ohm"
date = "2026-11-26"
description = "equimolal phosphate buffer, lot KB-PB-0412, primary pH at 25 °C"
"""


def main() -> None:
    batch = calibrate(HERE / BATCH)
    e0 = {e.electrode: e.standard_potential_V for e in batch.electrodes}
    basis_Pa = batch.run.metadata.standard_pressure_Pa
    k10 = GAS_CONSTANT_J_MOL_K * TEMPERATURE_K * math.log(10.0) / FARADAY_C_MOL
    log_gamma = float(bates_guggenheim_log10_gamma_chloride(IONIC_STRENGTH_MOL_KG,
                                                            TEMPERATURE_K))
    rng = np.random.default_rng(20261126)
    lines = [
        "# Kestrel Bay Electrochemistry Laboratory — phosphate buffer lot KB-PB-0412 in the "
        "Harned cell, 25 °C",
        "# Pt | H2(g) | buffer, KCl(m_Cl) | AgCl(s) | Ag(s); two electrodes per solution; "
        "barometer beside.",
        "# Demo data made by make_ph_buffer.py (invented lab and electrodes).",
        "chloride_molality_mol_kg,electrode,emf_mV,u_emf_mV,pressure_kPa,note",
    ]
    for m in CHLORIDE_MOL_KG:
        acidity = PH_TRUE - log_gamma + SLOPE_KG_MOL * m
        for electrode in ELECTRODES:
            barometric_kPa = round(101.4 + rng.normal(0.0, 0.05), 2)
            p_h2 = float(hydrogen_partial_pressure(TEMPERATURE_K, barometric_kPa * 1e3))
            # E(p°) − E_obs = (RT/2F) ln(p°/p_H2)
            to_standard = 0.5 * k10 / math.log(10.0) * math.log(basis_Pa / p_h2)
            emf = (e0[electrode] + k10 * (acidity - math.log10(m)) - to_standard
                   + rng.normal(0.0, NOISE_V))
            lines.append(f"{m:.4f},{electrode},{emf * 1e3:.4f},0.010,{barometric_kPa:.2f},")
    (HERE / f"{STEM}.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    (HERE / f"{STEM}.toml").write_text(METADATA, encoding="utf-8")


if __name__ == "__main__":
    main()
