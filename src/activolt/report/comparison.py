"""The run's γ± beside published values at the measured molalities."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..reduce import Reduction
from ..reference.published import interpolate_gamma, published_gamma


def compare_with_published(reduction: Reduction) -> pd.DataFrame | None:
    """γ± of the run against the published table, or None when there is no table.

    Returns
    -------
    pandas.DataFrame or None
        ``molality_mol_kg``, ``gamma_pm``, ``u_gamma_pm`` (the run), ``gamma_pm_published``
        (tabulated, or interpolated between table entries: ``interpolated`` says which),
        ``difference`` (run − published), ``source``.
    """
    electrolyte = reduction.electrolyte
    table = published_gamma(electrolyte.formula, reduction.temperature_K)
    if table is None:
        return None
    points = reduction.points[reduction.points["gamma_pm"].notna()]
    m = points["molality_mol_kg"].to_numpy(float)
    published = interpolate_gamma(table, m, electrolyte, reduction.temperature_K)
    on_table = np.isclose(m[:, None], table["molality_mol_kg"].to_numpy(float)[None, :],
                          rtol=1e-9, atol=0.0).any(axis=1)
    sources = "; ".join(dict.fromkeys(table["source"]))
    return pd.DataFrame({
        "molality_mol_kg": m,
        "gamma_pm": points["gamma_pm"].to_numpy(float),
        "u_gamma_pm": points["u_gamma_pm"].to_numpy(float),
        "gamma_pm_published": published,
        "interpolated": ~on_table,
        "difference": points["gamma_pm"].to_numpy(float) - published,
        "source": sources,
    })
