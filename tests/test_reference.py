"""Integrity of the shipped reference tables: shape, sources, and a checksum of the values.

An accidental edit of a published value changes the checksum; a deliberate one updates it here
together with the source column. Values: see each row's ``source`` column.
"""

from __future__ import annotations

import hashlib

import numpy as np
import pytest

from activolt.reference import load_table
from activolt.reference.published import interpolate_gamma, published_gamma


def _checksum(values: np.ndarray) -> str:
    text = ",".join(f"{v:.6g}" for v in values.ravel())
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def test_mean_activity_coefficient_table_is_intact():
    table = load_table("mean_activity_coefficients")
    assert list(table.columns) == ["electrolyte", "temperature_C", "molality_mol_kg",
                                   "gamma_pm", "source"]
    assert table.groupby("electrolyte").size().to_dict() == {
        "CaCl2": 8, "HCl": 9, "KCl": 9, "NaCl": 14}
    assert table["source"].str.len().min() > 10
    values = table[["temperature_C", "molality_mol_kg", "gamma_pm"]].to_numpy(float)
    assert _checksum(values) == "eb44caa43b8c4f9b"  # regression pin of the shipped values


def test_selected_values_match_the_vetted_list():
    # reference-values.md: HCl 0.1 → 0.796 and 1.0 → 0.809 (Robinson & Stokes 1959, from
    # memory); NaCl 1.0 → 0.657 (Pitzer, Peiper & Busey 1984, confirmed); CaCl2 0.1 → 0.517 (CRC).
    def gamma(formula: str, m: float) -> float:
        t = published_gamma(formula, 298.15)
        return float(t.loc[t.molality_mol_kg == m, "gamma_pm"].iloc[0])

    assert gamma("HCl", 0.1) == 0.796
    assert gamma("HCl", 1.0) == 0.809
    assert gamma("NaCl", 1.0) == 0.657
    assert gamma("CaCl2", 0.1) == 0.517


def test_no_table_at_other_temperatures_or_electrolytes():
    assert published_gamma("HCl", 323.15) is None
    assert published_gamma("LiBr", 298.15) is None


def test_interpolation_hits_table_values_and_refuses_extrapolation():
    from activolt.electrolytes import parse_electrolyte

    table = published_gamma("NaCl", 298.15)
    m = table["molality_mol_kg"].to_numpy()
    np.testing.assert_allclose(interpolate_gamma(table, m, parse_electrolyte("NaCl"), 298.15),
                               table["gamma_pm"], atol=1e-12)
    assert np.isnan(interpolate_gamma(table, [7.0], parse_electrolyte("NaCl"), 298.15)[0])


def test_unknown_table_lists_the_available_ones():
    with pytest.raises(ValueError, match="mean_activity_coefficients"):
        load_table("no_such_table")
