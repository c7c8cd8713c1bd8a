"""Integrity of the shipped reference tables: shape, sources, and a checksum of the values.

An accidental edit of a published value changes the checksum; a deliberate one updates it here
together with the source column. Values: see each row's ``source`` column.
"""

from __future__ import annotations

import hashlib
import math

import numpy as np
import pytest

from activolt.activity.published import (
    interpolate_gamma,
    published_consensus,
    published_gamma,
    source_label,
)
from activolt.reference import load_table


def _checksum(values: np.ndarray) -> str:
    text = ",".join(f"{v:.6g}" for v in values.ravel())
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def test_mean_activity_coefficient_table_is_intact():
    table = load_table("mean_activity_coefficients")
    assert list(table.columns) == ["electrolyte", "temperature_C", "molality_mol_kg",
                                   "gamma_pm", "decimals", "principal", "source"]
    assert table.groupby("electrolyte").size().to_dict() == {
        "CaCl2": 9, "HCl": 15, "KCl": 9, "NaCl": 15}
    assert table["source"].str.len().min() > 10
    values = table[["temperature_C", "molality_mol_kg", "gamma_pm", "decimals"]].to_numpy(float)
    assert _checksum(values) == "20a42a7546cddd3d"  # regression pin of the shipped values
    principal = ",".join(table["principal"].map(str))
    assert hashlib.sha256(principal.encode()).hexdigest()[:16] == "dc05176ec1902f7c"  # pin


def test_each_row_names_one_table():
    # One source per row: no row joins two tables with "; " (each table gets its own rows).
    table = load_table("mean_activity_coefficients")
    assert not table["source"].str.contains(";").any()
    assert table["source"].nunique() == 4


def test_one_principal_row_per_electrolyte_and_molality():
    table = load_table("mean_activity_coefficients")
    principal = table[table["principal"]]
    assert not principal.duplicated(["electrolyte", "temperature_C", "molality_mol_kg"]).any()
    # HCl's principal curve is one table (Robinson & Stokes 1959); Hamer & Wu's 0.02 mol/kg
    # entry stays beside it, not stitched into it.
    hcl = principal[principal["electrolyte"] == "HCl"]
    assert {source_label(s) for s in hcl["source"]} == {"Robinson & Stokes (1959)"}


def test_decimals_say_what_the_tables_print():
    # All four tables print γ± to three decimals (the sources named in each row).
    assert set(load_table("mean_activity_coefficients")["decimals"]) == {3}


def _printed(formula: str, m: float) -> dict[str, float]:
    t = published_gamma(formula, 298.15, all_sources=True)
    rows = t[t.molality_mol_kg == m]
    return {source_label(s): float(g) for s, g in zip(rows["source"], rows["gamma_pm"],
                                                          strict=True)}


@pytest.mark.literature
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


# Hamer & Wu (1972), J. Phys. Chem. Ref. Data 1, 1047, HCl at 25 °C, as printed in the CRC
# Handbook table of mean activity coefficients (confirmed in a secondary copy).
HAMER_WU_1972_HCL = {0.01: 0.905, 0.02: 0.876, 0.05: 0.832, 0.1: 0.797, 0.5: 0.759, 1.0: 0.811}
# Robinson & Stokes (1959), Electrolyte Solutions, Appendix 8.10, HCl at 25 °C (from memory).
ROBINSON_STOKES_1959_HCL = {0.001: 0.965, 0.005: 0.929, 0.01: 0.904, 0.05: 0.830, 0.1: 0.796,
                            0.5: 0.757, 1.0: 0.809, 2.0: 1.009, 3.0: 1.316}


@pytest.mark.parametrize("m", sorted(HAMER_WU_1972_HCL))
@pytest.mark.literature
def test_hcl_hamer_and_wu_rows_carry_their_own_values(m):
    assert _printed("HCl", m)["Hamer & Wu (1972)"] == HAMER_WU_1972_HCL[m]


@pytest.mark.parametrize("m", sorted(ROBINSON_STOKES_1959_HCL))
@pytest.mark.literature
def test_hcl_robinson_and_stokes_rows_carry_their_own_values(m):
    assert _printed("HCl", m)["Robinson & Stokes (1959)"] == ROBINSON_STOKES_1959_HCL[m]


@pytest.mark.literature
def test_nacl_at_2_mol_kg_from_each_table():
    # Pitzer, Peiper & Busey (1984), J. Phys. Chem. Ref. Data 13, 1: 0.669 (confirmed);
    # Robinson & Stokes (1959), Appendix 8.10: 0.668 (from memory). The principal is PPB.
    assert _printed("NaCl", 2.0) == {"Pitzer, Peiper & Busey (1984)": 0.669,
                                     "Robinson & Stokes (1959)": 0.668}
    t = published_gamma("NaCl", 298.15)
    assert float(t.loc[t.molality_mol_kg == 2.0, "gamma_pm"].iloc[0]) == 0.669


@pytest.mark.literature
def test_cacl2_at_2_mol_kg_from_each_table():
    # CRC Handbook (after Hamer & Wu 1972 and Staples): 0.784 (confirmed); Robinson & Stokes
    # (1959): 0.792 (from memory).
    assert _printed("CaCl2", 2.0) == {"CRC Handbook of Chemistry and Physics": 0.784,
                                      "Robinson & Stokes (1959)": 0.792}


def test_consensus_mean_spread_and_uncertainty_at_printed_molalities():
    # HCl 0.05 mol/kg: 0.830 (Robinson & Stokes 1959, from memory), 0.832 (Hamer & Wu 1972,
    # CRC); mean 0.831, spread 0.002, u = √(0.001² + 0.0005²) = 0.00112 (derived).
    c = published_consensus(published_gamma("HCl", 298.15, all_sources=True))
    row = c[c.molality_mol_kg == 0.05].iloc[0]
    assert row.gamma_pm == pytest.approx(0.831, abs=1e-12)
    assert row.spread == pytest.approx(0.002, abs=1e-12)
    assert row.u_published == pytest.approx(math.hypot(0.001, 0.0005), rel=1e-9)
    assert row.n_sources == 2 and not row.interpolated
    # KCl 0.1: one table (Robinson & Stokes 1959, 0.770): no spread, rounding only.
    c = published_consensus(published_gamma("KCl", 298.15, all_sources=True))
    row = c[c.molality_mol_kg == 0.1].iloc[0]
    assert (row.gamma_pm, row.spread, row.u_published, row.n_sources) == (0.770, 0.0, 0.0005, 1)


def test_consensus_reads_each_table_where_it_reaches():
    from activolt.chemistry.electrolytes import parse_electrolyte

    hcl = parse_electrolyte("HCl")
    table = published_gamma("HCl", 298.15, all_sources=True)
    c = published_consensus(table, [0.02, 0.2, 2.0, 4.0], hcl, 298.15)
    # 0.02: Hamer & Wu print 0.876; Robinson & Stokes are interpolated (0.875 in their table,
    # from memory): both speak, and the spread says by how much they differ.
    values = {source_label(s): (g, printed) for s, g, printed in c["values"].iloc[0]}
    assert values["Hamer & Wu (1972)"] == (0.876, True)
    assert values["Robinson & Stokes (1959)"][0] == pytest.approx(0.875, abs=0.0015)
    assert not values["Robinson & Stokes (1959)"][1]
    assert c["spread"].iloc[0] > 0.0005
    # 0.2: printed by neither; Robinson & Stokes print 0.767 there (from memory).
    assert bool(c["interpolated"].iloc[1]) and c["n_sources"].iloc[1] == 2
    assert c["gamma_pm"].iloc[1] == pytest.approx(0.767, abs=0.0015)
    # 2.0: beyond Hamer & Wu's shipped rows (1 mol/kg): Robinson & Stokes alone.
    assert c["n_sources"].iloc[2] == 1 and c["gamma_pm"].iloc[2] == 1.009
    # 4.0: beyond every table: nothing.
    assert np.isnan(c["gamma_pm"].iloc[3]) and c["n_sources"].iloc[3] == 0


def test_a_lone_entry_far_from_its_neighbours_is_not_interpolated():
    from activolt.chemistry.electrolytes import parse_electrolyte

    # Robinson & Stokes NaCl rows: 0.001–0.05 and a lone 2.0 mol/kg (0.668): at 1 mol/kg only
    # Pitzer, Peiper & Busey (0.657, confirmed) speak.
    table = published_gamma("NaCl", 298.15, all_sources=True)
    c = published_consensus(table, [1.0, 0.07], parse_electrolyte("NaCl"), 298.15)
    assert [source_label(s) for s, _, _ in c["values"].iloc[0]] == [
        "Pitzer, Peiper & Busey (1984)"]
    # 0.07: neither table reaches alone (0.05 → 0.1 changes table): the mean curve of both is
    # interpolated, said by n_sources = 0.
    assert c["n_sources"].iloc[1] == 0 and 0.778 < c["gamma_pm"].iloc[1] < 0.821


def test_no_table_at_other_temperatures_or_electrolytes():
    assert published_gamma("HCl", 323.15) is None
    assert published_gamma("LiBr", 298.15) is None


def test_interpolation_hits_table_values_and_refuses_extrapolation():
    from activolt.chemistry.electrolytes import parse_electrolyte

    table = published_gamma("NaCl", 298.15)
    m = table["molality_mol_kg"].to_numpy()
    np.testing.assert_allclose(interpolate_gamma(table, m, parse_electrolyte("NaCl"), 298.15),
                               table["gamma_pm"], atol=1e-12)
    assert np.isnan(interpolate_gamma(table, [7.0], parse_electrolyte("NaCl"), 298.15)[0])


def test_unknown_table_lists_the_available_ones():
    with pytest.raises(ValueError, match="mean_activity_coefficients"):
        load_table("no_such_table")
