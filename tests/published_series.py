"""EMF series built from published γ± tables, for the honesty checks (not check values themselves).

Each table below is a published table of mean ionic activity coefficients γ± (molality scale,
25 °C, three decimals as printed). A series is the EMF of the cell Pt | H2 | MX(m) | AgCl | Ag
(or its analogue for the electrolyte) computed from γ± with E° = 0.22234 V (Bates & Bower 1954,
Table 1), two readings per solution with normal noise of the stated u(EMF): the tables' own
rounding (half a unit in the third decimal) then adds scatter that no model of ours generated.
"""

from __future__ import annotations

import numpy as np
from synthetic import emf_from_gamma, write_run

E0_V = 0.22234  # Bates & Bower (1954), J. Res. NBS 53, 283, Table 1, 25 °C

#: HCl: Hamer & Wu (1972), J. Phys. Chem. Ref. Data 1, 1047, as printed in the CRC Handbook table
#: "Mean activity coefficients of electrolytes as a function of concentration" — 0.01, 0.02,
#: 0.05, 0.1, 0.5 and 1 mol/kg confirmed in a secondary copy (reference-values.md); 0.001, 0.002,
#: 0.005, 0.2 and 2 mol/kg from memory.
HCL = {0.001: 0.965, 0.002: 0.952, 0.005: 0.929, 0.01: 0.905, 0.02: 0.876, 0.05: 0.832,
       0.1: 0.797, 0.2: 0.768, 0.5: 0.759, 1.0: 0.811, 2.0: 1.009}
#: NaCl: Pitzer, Peiper & Busey (1984), J. Phys. Chem. Ref. Data 13, 1, from 0.1 mol/kg up
#: (confirmed); 0.02, 0.2, 0.4 and 0.6 mol/kg Kaye & Laby, Tables of Physical and Chemical
#: Constants, 3.9.6 (confirmed in a stored copy); 0.001, 0.005, 0.01 and 0.05 mol/kg Robinson &
#: Stokes (1959) (from memory).
NACL = {0.001: 0.965, 0.005: 0.928, 0.01: 0.902, 0.02: 0.870, 0.05: 0.821, 0.1: 0.778,
        0.2: 0.735, 0.25: 0.720, 0.4: 0.693, 0.5: 0.681, 0.6: 0.673, 0.75: 0.665, 1.0: 0.657,
        2.0: 0.669, 3.0: 0.714, 4.0: 0.782, 5.0: 0.873, 6.0: 0.987}
#: KCl: Kaye & Laby 3.9.6 at 0.02, 0.2, 0.4 and 0.6 mol/kg (confirmed in a stored copy); the rest
#: Robinson & Stokes (1959), Appendix 8.10 and dilute values (from memory).
KCL = {0.001: 0.965, 0.005: 0.927, 0.01: 0.901, 0.02: 0.868, 0.05: 0.816, 0.1: 0.770,
       0.2: 0.718, 0.4: 0.666, 0.5: 0.649, 0.6: 0.637, 1.0: 0.604, 2.0: 0.573, 3.0: 0.569}
#: CaCl2: CRC Handbook, "Mean activity coefficients of electrolytes as a function of
#: concentration" (after Hamer & Wu 1972 and Staples), every value confirmed in a stored copy.
CACL2 = {0.001: 0.888, 0.002: 0.851, 0.005: 0.787, 0.01: 0.727, 0.02: 0.664, 0.05: 0.577,
         0.1: 0.517, 0.2: 0.469, 0.5: 0.444, 1.0: 0.495, 2.0: 0.784}

TABLES = {"HCl": HCL, "NaCl": NACL, "KCl": KCL, "CaCl2": CACL2}
#: Upper ends of the three ranges per electrolyte [mol kg⁻¹]: dilute, moderate, concentrated.
RANGES = {"HCl": (0.1, 1.0, 2.0), "NaCl": (0.1, 1.0, 6.0), "KCl": (0.1, 1.0, 3.0),
          "CaCl2": (0.1, 1.0, 2.0)}
REPLICATES = 2


def published_series(electrolyte: str, max_molality: float, u_emf_V: float, seed: int
                     ) -> tuple[np.ndarray, np.ndarray]:
    """(molality, EMF) of a series from the published table up to ``max_molality``."""
    table = TABLES[electrolyte]
    m = np.array([k for k in sorted(table) if k <= max_molality * (1 + 1e-9)])
    gamma = np.array([table[k] for k in m])
    m = np.repeat(m, REPLICATES)
    gamma = np.repeat(gamma, REPLICATES)
    rng = np.random.default_rng(seed)
    emf = emf_from_gamma(m, gamma, E0_V, electrolyte=electrolyte, electrons=1 if electrolyte
                         != "CaCl2" else 2) + rng.normal(0.0, u_emf_V, m.size)
    return m, emf


def write_published_series(folder, electrolyte: str, max_molality: float, u_emf_V: float,
                           seed: int):
    """Write the series as a run (table + metadata) and return the table's path."""
    m, emf = published_series(electrolyte, max_molality, u_emf_V, seed)
    return write_run(folder, m, emf, u_emf_V=u_emf_V, electrolyte=electrolyte,
                     electrons=1 if electrolyte != "CaCl2" else 2,
                     stem=f"{electrolyte}_{max_molality:g}")
