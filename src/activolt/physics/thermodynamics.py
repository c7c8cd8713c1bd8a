"""Thermodynamic quantities that follow from a standard potential.

ΔG° = −nFE° and log10 K = nFE°/(RT ln 10) for the cell reaction as written with n electrons
(IUPAC Green Book, 3rd ed. 2007, §2.13).
"""

from __future__ import annotations

import math

from uncertainties.core import AffineScalarFunc

from ..constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K


def standard_gibbs_energy_kJ_mol(standard_potential_V: AffineScalarFunc | float,
                                 electrons: int) -> AffineScalarFunc | float:
    """ΔG° = −nFE° [kJ mol⁻¹] of the cell reaction with n electrons; E° in V.

    Examples
    --------
    Harned cell, E° = 0.22234 V (Bates & Bower 1954), n = 1:

    >>> round(standard_gibbs_energy_kJ_mol(0.22234, 1), 3)
    -21.453
    """
    return -electrons * FARADAY_C_MOL * standard_potential_V / 1e3


def log10_equilibrium_constant(standard_potential_V: AffineScalarFunc | float, electrons: int,
                               temperature_K: float) -> AffineScalarFunc | float:
    """log10 K = nFE°/(RT ln 10) [-] of the cell reaction with n electrons; E° in V, T in K.

    Examples
    --------
    Daniell cell, E° = 1.1037 V, n = 2, 25 °C (CRC Handbook electrochemical series):

    >>> round(log10_equilibrium_constant(1.1037, 2, 298.15), 2)
    37.31
    """
    return (electrons * FARADAY_C_MOL * standard_potential_V
            / (GAS_CONSTANT_J_MOL_K * temperature_K * math.log(10.0)))
