"""Make the demo run of the (invented) Kestrel Bay Electrochemistry Laboratory.

A Harned cell Pt | H2(g) | HCl(aq, m) | AgCl(s) | Ag(s) at 25 °C over 16 molalities from
0.001 to 1 mol/kg, read at the day's barometric pressure (the hydrogen partial pressure is the
barometric pressure less the vapour pressure of water). The "true" γ± follow the Pitzer
equations with the published HCl parameters shipped with activolt (Pitzer & Mayorga 1973),
E° = 0.22234 V (Bates & Bower 1954, 1 atm basis), and the readings carry normal noise of
0.02 mV, the stated reading uncertainty. Demo data only:
never a check value. Run from the project root:  .venv/bin/python sample_data/make_sample_run.py
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from activolt.activity import pitzer
from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.physics.corrections import hydrogen_partial_pressure, hydrogen_pressure_correction
from activolt.physics.water import debye_hueckel_constants
from activolt.reference.parameters import pitzer_parameters

HERE = Path(__file__).resolve().parent
STEM = "kestrel_hcl_25C"
E0_V = 0.22234
TEMPERATURE_K = 298.15
NOISE_V = 0.02e-3
MOLALITIES = (0.001, 0.002, 0.003, 0.005, 0.007, 0.01, 0.02, 0.03, 0.05, 0.07, 0.1, 0.2, 0.3,
              0.5, 0.7, 1.0)
U_MOLALITY_RELATIVE = 5e-4  # gravimetric dilution, 0.05 % of m
NO_READING = 0.007  # a solution whose reading was lost, to show a flagged row


def main() -> None:
    hcl = parse_electrolyte("HCl")
    m = np.array(MOLALITIES)
    published = pitzer_parameters("HCl")
    values = {name: published[name] for name in pitzer.MODEL.parameter_names}
    constants = debye_hueckel_constants(np.full(m.size, TEMPERATURE_K))
    gamma = np.exp(pitzer.ln_gamma(hcl, m, constants, values))
    k = float(nernst_factor(hcl, 1, TEMPERATURE_K))
    rng = np.random.default_rng(20261202)
    emf_1atm_V = E0_V - k * np.log(m * gamma)
    barometric_kPa = np.round(101.9 - 0.07 * np.arange(m.size) + rng.normal(0, 0.05, m.size), 2)
    p_h2 = hydrogen_partial_pressure(TEMPERATURE_K, barometric_kPa * 1e3)
    to_1atm = hydrogen_pressure_correction(TEMPERATURE_K, p_h2, 101325.0)
    emf_V = emf_1atm_V - to_1atm + rng.normal(0.0, NOISE_V, m.size)
    lines = [
        "# Kestrel Bay Electrochemistry Laboratory — Harned cell dilution series, HCl, 25 °C",
        "# Cell: Pt | H2(g) | HCl(aq, m) | AgCl(s) | Ag(s); readings as taken, barometer beside.",
        "# Demo data made by make_sample_run.py (invented lab and electrodes).",
        "molality_mol_kg,u_molality_mol_kg,emf_mV,u_emf_mV,pressure_kPa,electrode,note",
    ]
    for i, (molality, emf, bar) in enumerate(zip(m, emf_V, barometric_kPa, strict=True)):
        electrode = f"KB-AgCl-{7 + i % 3:02d}"
        if molality == NO_READING:
            lines.append(f"{molality:.4f},{molality * U_MOLALITY_RELATIVE:.2g},,0.020,{bar:.2f},"
                         f"{electrode},cell drifted; no stable reading")
        else:
            lines.append(f"{molality:.4f},{molality * U_MOLALITY_RELATIVE:.2g},{emf * 1e3:.3f},"
                         f"0.020,{bar:.2f},{electrode},")
    (HERE / f"{STEM}.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    (HERE / f"{STEM}.toml").write_text(
        '# Run metadata for kestrel_hcl_25C.csv (invented lab, demo only)\n'
        'cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"\n'
        "temperature_C = 25.0\n"
        "standard_pressure_kPa = 100  # IUPAC basis; the report also gives E° on 1 atm\n"
        "u_temperature_K = 0.02       # thermostat bath, calibrated thermometer\n"
        "u_pressure_kPa = 0.03        # barometer\n"
        'lab = "Kestrel Bay Electrochemistry Laboratory"\n'
        'operator = "R. Okonkwo-Lind"\n'
        'instrument = "KB-DVM-2 electrometer, input impedance > 10^13 ohm"\n'
        'date = "2026-11-18"\n'
        'description = "Ag|AgCl batch KB-AgCl-07..09 acceptance run"\n',
        encoding="utf-8",
    )


if __name__ == "__main__":
    main()
