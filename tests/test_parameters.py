"""Published model-parameter tables: loaders, conventions, and integrity of the CSV files."""

from __future__ import annotations

import hashlib

import numpy as np
import pytest

from activolt.reference import load_table
from activolt.reference.parameters import (
    ion_size_angstrom,
    pitzer_charge_type_statistics,
    pitzer_parameters,
    sit_epsilon,
)

# ----------------------------------------------------------------------------------------------
# Loaders
# ----------------------------------------------------------------------------------------------


@pytest.mark.literature
def test_pitzer_entry_hcl():
    # Pitzer & Mayorga (1973), Table II (from memory; reference-values.md)
    entry = pitzer_parameters("HCl")
    assert entry is not None
    assert (entry["beta0_kg_mol"], entry["beta1_kg_mol"], entry["cphi_kg2_mol2"]) == (
        0.1775, 0.2945, 0.00080)
    assert entry["max_molality_mol_kg"] == 6.0
    assert entry["temperature_K"] == pytest.approx(298.15)
    assert "Pitzer & Mayorga 1973" in entry["source"]


def test_pitzer_entry_is_a_fresh_copy():
    first = pitzer_parameters("KCl")
    first["beta0_kg_mol"] = 99.0
    assert pitzer_parameters("KCl")["beta0_kg_mol"] == 0.04835  # Pitzer & Mayorga (1973)


@pytest.mark.literature
def test_pitzer_entry_mgso4_has_beta2():
    # Pitzer & Mayorga (1974), Table I (from memory): β(2) = −37.23 kg/mol for MgSO4
    assert pitzer_parameters("MgSO4")["beta2_kg_mol"] == -37.23
    assert pitzer_parameters(" Mg SO4 ")["beta2_kg_mol"] == -37.23


def test_pitzer_unknown_formula_gives_none():
    assert pitzer_parameters("CsI") is None


@pytest.mark.literature
def test_pitzer_entry_lacl3():
    # Pitzer & Mayorga (1973), Table VIII, unscaled (confirmed in a secondary copy;
    # reference-values.md)
    entry = pitzer_parameters("LaCl3")
    assert (entry["beta0_kg_mol"], entry["beta1_kg_mol"], entry["cphi_kg2_mol2"]) == (
        0.6105, 5.487, -0.0320)
    assert entry["charge_type"] == "3:1" and "Table VIII" in entry["source"]


def test_charge_type_statistics_match_the_table():
    # Computed here with pandas from the shipped table, independently of the loader.
    table = load_table("pitzer_parameters")
    for (zc, za), spellings in (((1, -1), ["1:1"]), ((2, -1), ["2:1", "1:2"]),
                                ((1, -2), ["2:1", "1:2"]), ((2, -2), ["2:2"]),
                                ((3, -1), ["3:1"])):
        rows = table[table["charge_type"].isin(spellings)]
        stats = pitzer_charge_type_statistics(zc, za)
        assert stats["n"] == len(rows)
        assert stats["formulas"] == tuple(rows["formula"])
        for name in ("beta0_kg_mol", "beta1_kg_mol", "beta2_kg_mol", "cphi_kg2_mol2"):
            assert stats["mean"][name] == pytest.approx(rows[name].mean(), rel=1e-12, abs=1e-15)
            if len(rows) > 1:
                assert stats["sd"][name] == pytest.approx(rows[name].std(ddof=1), rel=1e-12,
                                                          abs=1e-15)
            else:
                assert np.isnan(stats["sd"][name])


def test_charge_type_statistics_pool_both_spellings_and_miss_absent_types():
    assert pitzer_charge_type_statistics(2, -1)["charge_types"] == ("1:2", "2:1")
    assert pitzer_charge_type_statistics(1, 2) == pitzer_charge_type_statistics(2, -1)
    assert pitzer_charge_type_statistics(3, -2) is None


def test_beta2_only_for_two_two():
    table = load_table("pitzer_parameters")
    not_22 = table[table["charge_type"] != "2:2"]
    assert (not_22["beta2_kg_mol"] == 0.0).all()


@pytest.mark.parametrize(
    ("cation", "anion", "expected"),
    [
        ("H", "Cl", (0.12, 0.01)),      # NEA TDB reviews, Appendix B (from memory)
        ("H+", "Cl-", (0.12, 0.01)),    # same, charges written out
        ("Na+", "Cl−", (0.03, 0.01)),   # NEA (from memory); typographic minus sign
        ("K", "Cl", (0.00, 0.01)),      # NEA (from memory)
        ("Li", "Cl", (0.10, 0.01)),     # NEA (from memory)
        ("Ca2+", "Cl-", (0.14, 0.01)),  # NEA (from memory)
        ("Na", "SO42-", (-0.12, 0.06)),  # NEA (from memory)
        ("Na", "SO4^2-", (-0.12, 0.06)),
        ("Na", "SO4--", (-0.12, 0.06)),
    ],
)
@pytest.mark.literature
def test_sit_epsilon(cation, anion, expected):
    value, uncertainty, source = sit_epsilon(cation, anion)
    assert (value, uncertainty) == expected
    assert "NEA" in source


def test_sit_epsilon_missing_or_wrong_charge_gives_none():
    assert sit_epsilon("Cs", "Cl") is None
    assert sit_epsilon("Ca+", "Cl-") is None  # Ca is 2+
    assert sit_epsilon("Cl", "Na") is None  # order: cation first


def test_unreadable_ion_raises():
    with pytest.raises(ValueError, match="cannot read"):
        sit_epsilon("", "Cl")


@pytest.mark.parametrize(
    ("ion", "expected"),
    # Kielland (1937), J. Am. Chem. Soc. 59, 1675, Table I (from memory)
    [("H", 9.0), ("H+", 9.0), ("Na+", 4.5), ("K+", 3.0), ("Cl-", 3.0), ("Ca2+", 6.0),
     ("Mg2+", 8.0), ("SO4 2-", 4.0), ("Fe2+", 6.0), ("Fe3+", 9.0), ("La3+", 9.0),
     ("Fe(CN)6 4-", 5.0)],
)
@pytest.mark.literature
def test_ion_size(ion, expected):
    assert ion_size_angstrom(ion) == expected


def test_ion_size_ambiguous_or_missing():
    with pytest.raises(ValueError, match=r"ambiguous.*Fe2\+, Fe3\+"):
        ion_size_angstrom("Fe")
    assert ion_size_angstrom("Xe") is None
    assert ion_size_angstrom("Na2+") is None


# ----------------------------------------------------------------------------------------------
# Integrity of the tables (an accidental edit changes a checksum)
# ----------------------------------------------------------------------------------------------

TABLES = {
    "pitzer_parameters": {
        "columns": ["formula", "charge_type", "beta0_kg_mol", "beta1_kg_mol", "beta2_kg_mol",
                    "cphi_kg2_mol2", "max_molality_mol_kg", "temperature_C", "source", "note"],
        "rows": 39,
        "key": ["formula"],
    },
    "sit_epsilon": {
        "columns": ["cation", "z_cation", "anion", "z_anion", "epsilon_kg_mol",
                    "u_epsilon_kg_mol", "source"],
        "rows": 34,
        "key": ["cation", "z_cation", "anion", "z_anion"],
    },
    "ion_size": {
        "columns": ["ion", "charge", "a_angstrom", "source", "note"],
        "rows": 51,
        "key": ["ion", "charge"],
    },
}

# Regression pins: SHA-256 (first 16 hex digits) of the numeric columns, in file order, each value
# written with %.10g. Update deliberately, together with the table, when a value is corrected.
CHECKSUMS = {
    "pitzer_parameters": "9b40bc9d344931df",
    "sit_epsilon": "6511b38730b560bc",
    "ion_size": "55b2384456c50387",
}


def numeric_checksum(name: str) -> str:
    table = load_table(name)
    numeric = table.select_dtypes(include=[np.number])
    text = "\n".join(
        ",".join(f"{float(v):.10g}" for v in row) for row in numeric.itertuples(index=False)
    )
    header = ",".join(numeric.columns)
    return hashlib.sha256(f"{header}\n{text}".encode()).hexdigest()[:16]


@pytest.mark.parametrize("name", sorted(TABLES))
def test_table_shape_and_sources(name):
    table = load_table(name)
    spec = TABLES[name]
    assert list(table.columns) == spec["columns"]
    assert len(table) == spec["rows"]
    assert table["source"].notna().all() and (table["source"].str.strip() != "").all()
    assert not table.duplicated(spec["key"]).any()
    numeric = table.select_dtypes(include=[np.number])
    assert np.isfinite(numeric.to_numpy(dtype=float)).all()


@pytest.mark.parametrize("name", sorted(TABLES))
def test_table_checksum(name):
    assert numeric_checksum(name) == CHECKSUMS[name]


def test_pitzer_table_has_twenty_electrolytes_at_25c_with_ranges():
    table = load_table("pitzer_parameters")
    assert len(table) >= 20
    assert (table["temperature_C"] == 25.0).all()
    assert (table["max_molality_mol_kg"] > 0).all()


def test_sit_table_uncertainties_positive():
    table = load_table("sit_epsilon")
    assert (table["u_epsilon_kg_mol"] > 0).all()
