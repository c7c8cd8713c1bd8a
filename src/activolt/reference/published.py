"""Published mean ionic activity coefficients, and their value at any molality in range.

The tables (``mean_activity_coefficients.csv``) hold γ± at a few molalities. Between them, the
deviation of ln γ± from the extended Debye–Hückel term with Bå = 1.5 kg^½ mol^-½ (which carries
the √m behaviour near m = 0) is interpolated against m with a shape-preserving cubic (PCHIP),
anchored at 0 for m = 0.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt
import pandas as pd

from ..constants import ZERO_CELSIUS_K
from ..electrolytes import Electrolyte
from ..models.hueckel import BATES_GUGGENHEIM_BA
from ..solvent import debye_hueckel_constants
from . import load_table

#: Largest difference between the run's temperature and a table's for a comparison [K].
TEMPERATURE_TOLERANCE_K = 0.5


def published_gamma(formula: str, temperature_K: float) -> pd.DataFrame | None:
    """The published γ± table of ``formula`` at ``temperature_K`` [K], or None if there is none.

    Returns
    -------
    pandas.DataFrame or None
        Columns ``molality_mol_kg``, ``gamma_pm``, ``source``, sorted by molality.

    Examples
    --------
    >>> table = published_gamma("HCl", 298.15)
    >>> float(table.loc[table.molality_mol_kg == 0.1, "gamma_pm"].iloc[0])  # Robinson & Stokes
    0.796
    """
    table = load_table("mean_activity_coefficients")
    t_K = table["temperature_C"] + ZERO_CELSIUS_K
    rows = table[(table["electrolyte"] == formula)
                 & ((t_K - temperature_K).abs() <= TEMPERATURE_TOLERANCE_K)]
    if rows.empty:
        return None
    return rows[["molality_mol_kg", "gamma_pm", "source"]].sort_values(
        "molality_mol_kg").reset_index(drop=True)


def interpolate_gamma(table: pd.DataFrame, molality: npt.ArrayLike, electrolyte: Electrolyte,
                      temperature_K: float) -> np.ndarray:
    """γ± from a published table at ``molality`` [mol kg⁻¹]; NaN beyond the table's range.

    Examples
    --------
    Robinson & Stokes (1959, Appendix 8.10) print 0.767 at 0.2 mol/kg (from memory), a molality
    the shipped table does not hold:

    >>> from activolt.electrolytes import parse_electrolyte
    >>> table = published_gamma("HCl", 298.15)
    >>> g = interpolate_gamma(table, [0.1, 0.2, 5.0], parse_electrolyte("HCl"), 298.15)
    >>> [round(float(v), 3) for v in g[:2]], bool(np.isnan(g[2]))
    ([0.796, 0.767], True)
    """
    from scipy.interpolate import PchipInterpolator

    def extended_dh(m: np.ndarray) -> np.ndarray:
        sqrt_i = np.sqrt(electrolyte.ionic_strength(m))
        a_gamma = float(debye_hueckel_constants(temperature_K).agamma[0])
        return -electrolyte.charge_product * a_gamma * sqrt_i / (1.0 + BATES_GUGGENHEIM_BA
                                                                  * sqrt_i)

    m_table = table["molality_mol_kg"].to_numpy(float)
    deviation = np.log(table["gamma_pm"].to_numpy(float)) - extended_dh(m_table)
    curve = PchipInterpolator(np.concatenate([[0.0], m_table]),
                              np.concatenate([[0.0], deviation]), extrapolate=False)
    m = np.asarray(molality, dtype=float)
    return np.exp(curve(m) + extended_dh(m))
