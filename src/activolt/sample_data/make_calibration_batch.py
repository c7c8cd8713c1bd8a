"""Make the demo calibration batch of the (invented) Kestrel Bay Electrochemistry Laboratory.

Eight new Ag|AgCl reference electrodes, KB-AgCl-21 … KB-AgCl-28, each read three times against
a hydrogen electrode in 0.01 mol/kg HCl at 25 °C (the hydrogen route of ``activolt
calibrate``): Pt | H2(g) | HCl(0.01 mol/kg) | AgCl(s) | Ag(s), at the day's barometric
pressure. The "true" E° of each electrode is 0.22234 V (Bates & Bower 1954, 1 atm basis) plus
a small offset of its own (normal, 0.02 mV); KB-AgCl-26 is made 0.35 mV high, so that the demo
shows a failed electrode (exit status 3). The readings use the conventional γ± = 0.904 of
0.01 mol/kg HCl at 25 °C (Buck et al. 2002) and carry normal noise of 0.01 mV. Acceptance:
±0.1 mV about the batch median, simple acceptance. Demo data only: never a check value.

Run from the project root:  .venv/bin/python sample_data/make_calibration_batch.py
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.physics.corrections import hydrogen_partial_pressure, hydrogen_pressure_correction

HERE = Path(__file__).resolve().parent
STEM = "kestrel_agcl_batch"
E0_V = 0.22234  # Bates & Bower (1954), 1 atm basis
TEMPERATURE_K = 298.15
MOLALITY_MOL_KG = 0.01
GAMMA_CONVENTIONAL = 0.904  # Buck et al. (2002), 0.01 mol/kg HCl, 25 °C
ELECTRODES = tuple(f"KB-AgCl-{n}" for n in range(21, 29))
HIGH = {"KB-AgCl-26": 0.35e-3}  # the electrode that fails [V]
READINGS = 3
OFFSET_SD_V = 0.02e-3
NOISE_V = 0.01e-3

METADATA = """\
# Batch metadata for kestrel_agcl_batch.csv (invented lab, demo only)
cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
temperature_C = 25.0
standard_pressure_kPa = 100
u_temperature_K = 0.02        # thermostat bath, calibrated thermometer
u_pressure_kPa = 0.03         # barometer
calibration_method = "hydrogen"
acceptance_tolerance_mV = 0.1  # every electrode within ±0.1 mV of the batch median
acceptance_reference = "median"
decision_rule = "simple"
voltmeter_u_mV = 0.005        # electrometer, from its own calibration certificate
lab = "Kestrel Bay Electrochemistry Laboratory"
operator = "R. Okonkwo-Lind"
instrument = "KB-DVM-2 electrometer, input impedance > 10^13 ohm"
date = "2026-11-25"
description = "Ag|AgCl reference electrodes, batch KB-AgCl-21..28, acceptance calibration"
customer = "Kestrel Bay Electrochemistry Laboratory, pH standards group (internal)"
approved_by = "M. Vasquez-Hale, quality manager"
"""


def main() -> None:
    hcl = parse_electrolyte("HCl")
    k = float(nernst_factor(hcl, 1, TEMPERATURE_K))
    rng = np.random.default_rng(20261125)
    lines = [
        "# Kestrel Bay Electrochemistry Laboratory — calibration of Ag|AgCl electrodes "
        "KB-AgCl-21..28",
        "# Each against a hydrogen electrode in 0.01 mol/kg HCl at 25 °C, three readings; "
        "barometer beside.",
        "# Demo data made by make_calibration_batch.py (invented lab and electrodes).",
        "electrode,molality_mol_kg,emf_mV,u_emf_mV,pressure_kPa,note",
    ]
    for electrode in ELECTRODES:
        e0 = E0_V + rng.normal(0.0, OFFSET_SD_V) + HIGH.get(electrode, 0.0)
        for _ in range(READINGS):
            barometric_kPa = round(101.6 + rng.normal(0.0, 0.05), 2)
            p_h2 = hydrogen_partial_pressure(TEMPERATURE_K, barometric_kPa * 1e3)
            to_1atm = float(hydrogen_pressure_correction(TEMPERATURE_K, p_h2, 101325.0))
            emf = (e0 - k * np.log(MOLALITY_MOL_KG * GAMMA_CONVENTIONAL) - to_1atm
                   + rng.normal(0.0, NOISE_V))
            lines.append(f"{electrode},{MOLALITY_MOL_KG:.4f},{emf * 1e3:.4f},0.010,"
                         f"{barometric_kPa:.2f},")
    (HERE / f"{STEM}.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    (HERE / f"{STEM}.toml").write_text(METADATA, encoding="utf-8")


if __name__ == "__main__":
    main()
