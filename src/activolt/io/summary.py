"""The summary of many series as CSV: one row per series, safe to open in a spreadsheet."""

from __future__ import annotations

import pandas as pd

from ..procedures.many import SUMMARY_COLUMNS, ManyReductions
from ..safe_text import neutralise_formula

__all__ = ["summary_csv"]

#: Text columns of the summary; a cell that a spreadsheet would read as a formula gets a ``'``.
TEXT_COLUMNS = ("file", "series", "model", "flags", "failure")


def summary_csv(result: ManyReductions | pd.DataFrame) -> str:
    """The summary table (:attr:`ManyReductions.summary`) as CSV text.

    Parameters
    ----------
    result : ManyReductions or pandas.DataFrame
        The batch, or its summary.

    Returns
    -------
    str
        CSV (comma separated, ``\\n`` line ends), columns
        :data:`activolt.procedures.many.SUMMARY_COLUMNS`, numbers with ten significant digits,
        empty cells for NaN; text cells starting like a formula (``=``, ``+``, ``-``, ``@``, …)
        are prefixed with ``'`` (:func:`activolt.safe_text.neutralise_formula`).

    Examples
    --------
    >>> frame = pd.DataFrame([{"file": "r.csv", "series": "=A1", "n_points": 0, "model": "hueckel",
    ...                        "standard_potential_V": float("nan"),
    ...                        "u_standard_potential_V": float("nan"),
    ...                        "coverage_factor": float("nan"), "reduced_chi2": float("nan"),
    ...                        "birge_ratio": float("nan"), "flags": "refused: too few",
    ...                        "failure": "too few"}])
    >>> print(summary_csv(frame).splitlines()[1])
    r.csv,'=A1,0,hueckel,,,,,,refused: too few,too few
    """
    frame = result.summary if isinstance(result, ManyReductions) else result
    frame = frame.loc[:, list(SUMMARY_COLUMNS)].copy()
    for column in TEXT_COLUMNS:
        frame[column] = frame[column].map(neutralise_formula)
    return frame.to_csv(index=False, float_format="%.10g", lineterminator="\n")
