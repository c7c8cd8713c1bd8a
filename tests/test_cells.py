"""Cell diagrams: parsing, electrode couples, the cell's stoichiometry, summary and errors."""

from __future__ import annotations

import json

import pytest

from activolt.chemistry.cells import (
    DiagramError,
    cell_from_diagram,
    cell_summary,
    format_cell_summary,
    parse_diagram,
)
from activolt.physics.corrections import standard_pressure_basis_shift

HARNED = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
# RT/F = 25.6926 mV at 298.15 K (CODATA 2018; reference-values.md, derived)
RT_OVER_F_V = 0.0256926


# --- the acceptance cells -------------------------------------------------------------------

def test_harned_cell_from_its_diagram():
    # Harned & Owen (1958), ch. 10: HCl formed, n = 1, ν = 2, factor 2RT/F; ½ H2 consumed.
    cell = cell_from_diagram(HARNED)
    assert cell.electrolyte.formula == "HCl"
    assert cell.electrons == 1
    assert cell.electrolyte.nu == 2
    assert float(cell.nernst_factor(298.15)) == pytest.approx(2 * RT_OVER_F_V, abs=1e-7)
    assert cell.gas_coefficients == {"H2(g)": -0.5}
    assert not cell.liquid_junction
    assert cell.left_couple.name == "H+/H2" and cell.right_couple.name == "AgCl/Ag"


@pytest.mark.literature
def test_harned_cell_pressure_basis_differs_by_0169_mV():
    # reference-values.md (derived): (RT/2F) ln 1.01325 = 0.169 mV at 25 °C.
    cell = cell_from_diagram(HARNED)
    shift = standard_pressure_basis_shift(298.15, cell.electrons, cell.gas_coefficients,
                                          101325.0, 100000.0)
    assert float(shift) * 1e3 == pytest.approx(-0.169, abs=0.0005)


@pytest.mark.parametrize(
    "diagram",
    ["Ca(s) | CaCl2(aq) | AgCl(s) | Ag(s)", "Ca(Hg) | CaCl2(aq) | AgCl(s) | Ag(s)"],
)
def test_calcium_chloride_cells(diagram):
    # CaCl2: ν = 3, n = 2 → 3RT/2F; m± = 4^(1/3) m (Harned & Owen 1958, ch. 10).
    cell = cell_from_diagram(diagram)
    assert cell.electrolyte.formula == "CaCl2"
    assert cell.electrons == 2
    assert float(cell.nernst_factor(298.15)) == pytest.approx(1.5 * RT_OVER_F_V, abs=1e-7)
    assert cell.electrolyte.mean_molality_factor == pytest.approx(4 ** (1 / 3), rel=1e-12)
    assert float(cell.electrolyte.mean_molality(0.1)) == pytest.approx(0.1 * 4 ** (1 / 3))


def test_amalgam_cell_has_no_catalogue_potential():
    cell = cell_from_diagram("Ca(Hg) | CaCl2(aq) | AgCl(s) | Ag(s)")
    assert cell.standard_potential is None
    assert "folded into E°" in cell.nernst.describe()


def test_potassium_amalgam_cell_consumes_kcl():
    cell = cell_from_diagram("Ag(s) | AgCl(s) | KCl(aq) | K(Hg)")
    assert cell.electrolyte.formula == "KCl"
    assert cell.electrolyte_units == -1
    assert cell.electrons == 1
    assert cell.reaction_text == "Ag(s) + Cl-(aq) + K+(aq) → AgCl(s) + K(Hg)"


@pytest.mark.literature
def test_daniell_cell_diagram():
    # CRC Handbook (from memory): 1.10 V in teaching tables (two decimals printed).
    cell = cell_from_diagram("Zn(s) | ZnSO4(aq) || CuSO4(aq) | Cu(s)")
    assert cell.liquid_junction
    assert cell.diagram.salt_bridges == 1
    assert cell.electrolyte is None
    assert cell.electrons == 2
    assert cell.standard_potential.nominal_value == pytest.approx(1.10, abs=0.005)


@pytest.mark.literature
def test_sodium_bromine_diagram():
    # CRC Handbook (from memory): E° ≈ 3.78 V, n = 2, ΔG° ≈ −729 kJ/mol.
    summary = cell_summary("Na(s) | Na+(aq) || Br-(aq) | Br2(l) | Pt(s)")
    assert summary["electrons"] == 2
    assert summary["standard_potential_V"]["value"] == pytest.approx(3.78, abs=0.005)
    assert summary["delta_g_kJ_mol"]["value"] == pytest.approx(-729, abs=0.5)
    assert summary["reaction"] == "2 Na(s) + Br2(l) → 2 Na+(aq) + 2 Br-(aq)"


def test_amounts_inside_the_diagram():
    diagram = parse_diagram("Pt | H2(g, 101.325 kPa) | HCl(aq, 10 mmol/kg) | AgCl(s) | Ag(s)")
    gas = diagram.left[1].components[0]
    solute = diagram.solutions[0].components[0]
    assert gas.pressure_Pa == pytest.approx(101325.0)
    assert solute.molality_mol_kg == pytest.approx(0.01)
    assert diagram.electrolytes[0].formula == "HCl"
    assert parse_diagram("Pt | H2(g, 1 atm) | HCl(aq) | AgCl(s) | Ag(s)").left[1] \
        .components[0].pressure_Pa == 101325.0


def test_more_electrodes():
    assert cell_from_diagram("Pt | H2(g) | HCl(aq) | Hg2Cl2(s) | Hg(l) | Pt").right_couple.name \
        == "Hg2Cl2/Hg"
    assert cell_from_diagram("Pt | H2(g) | NaOH(aq) | HgO(s) | Hg(l)").left_couple.name \
        == "H2O/H2"
    cell = cell_from_diagram("Pt | H2(g) | HCl(aq) | Cl2(g) | C(graphite)")
    assert cell.gas_coefficients == {"H2(g)": -0.5, "Cl2(g)": -0.5}
    quinhydrone = cell_from_diagram("Pt | C6H4O2(aq), C6H4(OH)2(aq), HCl(aq) | AgCl(s) | Ag(s)")
    assert quinhydrone.left_couple.name == "quinhydrone"
    assert quinhydrone.electrolyte.formula == "HCl"
    redox = cell_from_diagram("Pt | Fe2+(aq), Fe3+(aq) || Ag+(aq) | Ag(s)")
    assert redox.left_couple.name == "Fe3+/Fe2+"
    assert cell_from_diagram("Pt | H2(g) | H2SO4(aq) | Hg2SO4(s) | Hg(l)").electrolyte.nu == 3


def test_typographic_characters_are_accepted():
    cell = cell_from_diagram("Pt | H₂(g) | HCl(aq) | AgCl(s) | Ag(s)")
    assert cell.electrolyte.formula == "HCl"


# --- malformed diagrams ---------------------------------------------------------------------

@pytest.mark.parametrize(
    ("diagram", "position", "message"),
    [
        ("", 0, "empty cell diagram"),
        ("   ", 0, "empty cell diagram"),
        ("Zn | ZnSO4(aq) || CuSO4(aq) | Cu(s)", 2, "missing phase after 'Zn'"),
        ("Zn(s) | ZnSO4(aq) || || CuSO4(aq) | Cu(s)", 21, "two salt bridges in a row"),
        ("Ti(s) | HCl(aq) | AgCl(s) | Ag(s)", 0, "unknown couple"),
        ("Pt | N2(g) | HCl(aq) | AgCl(s) | Ag(s)", 5, "unknown couple"),
        ("Pt | H2(g) | NaCl(aq) | AgCl(s) | Ag(s)", 13, "unbalanced cell.*needs H\\+\\(aq\\)"),
        ("Zn(s) | CuSO4(aq) | Cu(s)", 8, "unbalanced cell.*needs Zn2\\+\\(aq\\)"),
        ("Pt | H2(x) | HCl(aq) | AgCl(s) | Ag(s)", 8, "unknown phase '\\(x\\)'"),
        ("Pt | H2(g | HCl(aq) | AgCl(s) | Ag(s)", 7, "never closed"),
        ("Pt | H2(g) ||| HCl(aq) | AgCl(s) | Ag(s)", 13, "three bars"),
        ("Pt | H2(g) | | HCl(aq) | AgCl(s) | Ag(s)", 13, "missing phase between two bars"),
        ("| Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)", 0, "starts with a bar"),
        ("Pt | H2(g) | HCl(aq)", 19, "no right electrode"),
        ("Pt | H2(g) || HCl(aq) | AgCl(s) | Ag(s)", 11, "must join two solutions"),
        ("Pt | H2(g) | HCl(aq, 5 kPa) | AgCl(s) | Ag(s)", 23, "unknown unit 'kPa'"),
        ("Pt | H2(g) | Ag(s)", 0, "no electrolyte solution"),
        ("Xq(s) | HCl(aq) | AgCl(s) | Ag(s)", 0, "not an element"),
    ],
)
def test_malformed_diagrams(diagram, position, message):
    with pytest.raises(DiagramError, match=message) as caught:
        cell_from_diagram(diagram)
    error = caught.value
    assert error.position == position
    assert isinstance(error, ValueError)
    assert "\n" not in str(error)
    assert error.pointer().splitlines()[1] == " " * position + "^"


# --- summary --------------------------------------------------------------------------------

def test_summary_is_json_ready_and_has_the_keys():
    summary = cell_summary(HARNED, 298.15, 101325.0)
    for key in ("electrons", "standard_potential_V", "delta_g_kJ_mol", "log10_K", "reaction",
                "half_reactions"):
        assert key in summary
    json.dumps(summary)
    assert summary["half_reactions"]["left_oxidation"] == "1/2 H2(g) → H+(aq) + e-"
    # Bates & Bower (1954), Table 1: 0.22234 V (1 atm), standard deviation 0.01 mV
    assert summary["standard_potential_V"]["value"] == pytest.approx(0.22234, abs=5e-7)
    assert summary["standard_potential_V"]["uncertainty"] == pytest.approx(1e-5, abs=1e-12)
    assert summary["standard_pressure_kPa"] == 101.325


@pytest.mark.literature
def test_summary_of_harned_cell_at_another_temperature_uses_bates_bower():
    # Bates & Bower (1954), Table 1: 0.20449 V at 50 °C (1 atm).
    summary = cell_summary(HARNED, 323.15, 101325.0)
    assert summary["standard_potential_V"]["value"] == pytest.approx(0.20449, abs=5e-6)
    assert summary["warnings"] == []


def test_summary_warns_when_temperature_dependence_is_unknown():
    summary = cell_summary("Zn(s) | ZnSO4(aq) || CuSO4(aq) | Cu(s)", 310.15)
    assert any("298.15 K" in w for w in summary["warnings"])


def test_format_limits_digits_to_the_uncertainty():
    text = format_cell_summary(cell_summary("Na(s) | Na+(aq) || Br-(aq) | Br2(l) | Pt(s)"))
    # u(E°) = √(5² + 1²) mV from the catalogue's 5 mV (Na+/Na) and 1 mV (Br2(l)/Br−), common
    # practice → four decimals, two-digit uncertainty; ΔG° = −2F E°, u = 2F u(E°) (regression pin)
    assert "E°cell = 3.7760 ± 0.0051 V" in text
    assert "ΔG° = −728.66 ± 0.98 kJ/mol" in text
    assert "n = 2" in text
    amalgam = format_cell_summary(cell_summary("Ag(s) | AgCl(s) | KCl(aq) | K(Hg)"))
    assert "E°cell = unknown" in amalgam
