"""The run's γ± beside published values at the measured molalities, with the tables' own spread
(science, computed here once; the report and the record only show it)."""

from __future__ import annotations

import functools

import numpy as np
import pandas as pd

from ..activity.published import published_consensus, published_gamma
from ..chemistry.electrolytes import Electrolyte
from .dilution import Reduction

__all__ = ["compare_with_published"]


def compare_with_published(reduction: Reduction) -> pd.DataFrame | None:
    r"""γ± of the run against every published table, or None when there is none.

    Returns
    -------
    pandas.DataFrame or None
        One row per reading with γ±:

        - ``molality_mol_kg``, ``gamma_pm``, ``u_gamma_pm`` (the run);
        - ``gamma_pm_published``: the mean of the published tables at that molality, each
          printed or interpolated within the table (NaN where none reaches);
        - ``interpolated``: no table prints the molality;
        - ``n_sources``: how many tables give a value there (0: only the mean of all tables
          could be interpolated);
        - ``published_values``: tuple of (source, γ±, printed) for each of those tables;
        - ``spread_published``: largest − smallest of their values;
        - ``u_published``: √((spread/2)² + (half a unit of the last printed digit)²);
        - ``difference`` (run − published mean), ``u_difference`` (combined standard
          uncertainty) and ``difference_over_u`` (their ratio);
        - ``source``: every table compared with, joined by "; ".

    Notes
    -----
    .. math:: u_c = \sqrt{u^2(γ_±) + u_{pub}^2}

    with u(γ±) from the reduction (k = 1) and u_pub from
    :func:`~activolt.activity.published.published_consensus`. A ratio |difference| / u_c up to
    about 2 says the run and the tables agree within what both can tell; a much larger one is a
    disagreement that the tables' own spread does not explain.
    """
    points = reduction.points[reduction.points["gamma_pm"].notna()]
    m = points["molality_mol_kg"].to_numpy(float)
    found = _published_at(reduction.electrolyte, float(reduction.temperature_K), tuple(m))
    if found is None:
        return None
    table, consensus = found
    gamma = points["gamma_pm"].to_numpy(float)
    u_gamma = points["u_gamma_pm"].to_numpy(float)
    published = consensus["gamma_pm"].to_numpy(float)
    u_published = consensus["u_published"].to_numpy(float)
    difference = gamma - published
    u_difference = np.hypot(u_gamma, u_published)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(u_difference > 0, difference / u_difference, np.nan)
    return pd.DataFrame({
        "molality_mol_kg": m,
        "gamma_pm": gamma,
        "u_gamma_pm": u_gamma,
        "gamma_pm_published": published,
        "interpolated": consensus["interpolated"].to_numpy(bool),
        "n_sources": consensus["n_sources"].to_numpy(int),
        "published_values": consensus["values"].tolist(),
        "spread_published": consensus["spread"].to_numpy(float),
        "u_published": u_published,
        "difference": difference,
        "u_difference": u_difference,
        "difference_over_u": ratio,
        "source": "; ".join(dict.fromkeys(table["source"])),
    })


@functools.lru_cache(maxsize=64)
def _published_at(electrolyte: Electrolyte, temperature_K: float, molality: tuple[float, ...]
                  ) -> tuple[pd.DataFrame, pd.DataFrame] | None:
    """(every published row, their consensus at ``molality``), or None without a table; kept
    once worked out (read only), since the runs of a batch share their molalities."""
    table = published_gamma(electrolyte.formula, temperature_K, all_sources=True)
    if table is None:
        return None
    return table, published_consensus(table, np.asarray(molality), electrolyte, temperature_K)
