"""Published data shipped with activolt: small CSV tables, each row naming its ``source``.

Every table is read through :func:`load_table`, which checks that the ``source`` column is there
and filled. ``tests/test_reference.py`` guards each table's shape and a checksum of its values.
"""

from __future__ import annotations

from functools import lru_cache
from importlib.resources import files

import pandas as pd


@lru_cache(maxsize=32)
def _read(name: str) -> pd.DataFrame:
    resource = files(__name__) / f"{name}.csv"
    if not resource.is_file():
        available = sorted(
            p.name.removesuffix(".csv") for p in files(__name__).iterdir()
            if p.name.endswith(".csv")
        )
        raise ValueError(f"no reference table '{name}'; available: {', '.join(available)}")
    with resource.open("r", encoding="utf-8") as handle:
        table = pd.read_csv(handle, comment="#", skipinitialspace=True)
    if "source" not in table.columns or table["source"].isna().any():
        raise ValueError(f"reference table '{name}' must give a source for every row")
    return table


def load_table(name: str) -> pd.DataFrame:
    """A copy of the reference table ``name`` (the CSV file's stem) as a DataFrame.

    Raises
    ------
    ValueError
        If there is no such table (the message lists the available ones) or a row has no source.
    """
    return _read(name).copy()
