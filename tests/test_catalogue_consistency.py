"""The electrode catalogue agrees with itself: couples that add up, one ΔG° per reaction, and
one E°(T) per couple, smooth through 25 °C.

Sources of check values:
- ΔG° additivity, n₃E°₃ = n₁E°₁ + n₂E°₂ for couples whose half-reactions add up (Bard &
  Faulkner, Electrochemical Methods, 2nd ed., 2001, §2.1; reference-values.md).
- CRC Handbook electrochemical series, 25 °C, as the catalogue held it before (from memory):
  Fe³⁺/Fe²⁺ 0.771, Fe²⁺/Fe −0.447, Fe³⁺/Fe −0.037, Cu²⁺/Cu⁺ 0.153, Cu⁺/Cu 0.521,
  Cu²⁺/Cu 0.3419 V.
- Bates & Bower (1954), J. Res. NBS 53, 283, Table 1 (confirmed in the 2001 reprint): E° of
  Ag|AgCl from 5 to 95 °C, 1 atm, standard deviation 0.01 mV at 25 °C and 0.09 mV at 95 °C.
- F = 96485.33212 C/mol (CODATA 2018).
"""

from __future__ import annotations

import itertools
import json
import math
from fractions import Fraction

import numpy as np
import pytest

from activolt.chemistry.cells import cell_from_diagram, cell_summary
from activolt.chemistry.electrodes import (
    catalogue,
    couple,
    couple_at_temperature,
    couple_relations,
    silver_chloride_standard_potential,
)
from activolt.cli import main

FARADAY_C_MOL = 96485.33212  # CODATA 2018
RELATIONS = couple_relations(max_members=4)


# --- every relation in the table holds within its uncertainty -------------------------------

@pytest.mark.parametrize("relation", RELATIONS, ids=[str(r) for r in RELATIONS])
def test_every_relation_holds_within_two_combined_uncertainties(relation):
    # |Σ c_i n_i E°_i| ≤ 2 u, u from the catalogue's standard uncertainties with their
    # correlations (a derived couple and its parents give exactly 0 ± 0).
    residual = relation.residual
    assert abs(residual.nominal_value) <= 2 * residual.std_dev + 1e-12, (
        f"{relation}: Σ c n E° = {residual.nominal_value * 1e3:.2f} mV, "
        f"u = {residual.std_dev * 1e3:.2f} mV")
    assert relation.consistent()


def test_the_search_finds_the_known_relations():
    found = {frozenset(r.couples) for r in RELATIONS}
    assert frozenset({"Fe3+/Fe2+", "Fe2+/Fe", "Fe3+/Fe"}) in found
    assert frozenset({"Cu2+/Cu+", "Cu+/Cu", "Cu2+/Cu"}) in found
    # O2/OH− = O2/H2O + H2O/H2 − H+/H2 (both O2 couples differ by (RT/F) ln Kw, like the two
    # hydrogen couples)
    assert frozenset({"O2/H2O", "O2/OH-", "H2O/H2", "H+/H2"}) in found


def test_each_relation_adds_up_to_nothing():
    by_name = {h.name: h for h in catalogue()}
    for relation in RELATIONS:
        total: dict[object, Fraction] = {}
        for c, name in zip(relation.coefficients, relation.couples, strict=True):
            half = by_name[name]
            for species, coefficient in half.stoichiometry:
                total[species] = total.get(species, Fraction(0)) + c * coefficient
            total["e-"] = total.get("e-", Fraction(0)) + c * half.electrons
        assert all(v == 0 for v in total.values()), str(relation)
        assert all(c != 0 for c in relation.coefficients)
        assert math.gcd(*relation.coefficients) == 1


def _vector(half, keys):
    lookup = dict(half.stoichiometry)
    return [float(lookup.get(k, 0)) for k in keys] + [float(half.electrons)]


def test_triples_agree_with_a_brute_force_rank_search():
    # Independent of the library's exact elimination: every triple of couples whose reaction
    # vectors (species and electrons) have rank 2 while each pair has rank 2 (numpy SVD).
    couples = [h for h in catalogue() if h.standard_potential is not None]
    keys = sorted({s for h in couples for s, _ in h.stoichiometry})
    vectors = np.array([_vector(h, keys) for h in couples])
    species = [frozenset(s for s, _ in h.stoichiometry) for h in couples]
    brute = set()
    for i, j, k in itertools.combinations(range(len(couples)), 3):
        if not (species[k] <= species[i] | species[j] and species[i] <= species[j] | species[k]
                and species[j] <= species[i] | species[k]):
            continue
        if np.linalg.matrix_rank(vectors[[i, j, k]]) == 2 and all(
                np.linalg.matrix_rank(vectors[list(p)]) == 2
                for p in ((i, j), (i, k), (j, k))):
            brute.add(frozenset({couples[i].name, couples[j].name, couples[k].name}))
    library = {frozenset(r.couples) for r in RELATIONS if len(r.couples) == 3}
    assert brute == library
    assert len(brute) >= 2


def test_the_check_fails_on_the_old_handbook_rows():
    # The CRC rows with their former "rounding" uncertainties (half a last digit over √3)
    # break ΔG° additivity: 0.771 + 2(−0.447) − 3(−0.037) = −12 mV against u ≈ 1.1 mV, and
    # 0.153 + 0.521 − 2(0.3419) = −9.8 mV against u ≈ 0.4 mV.
    def rounding(decimals):
        return 0.5 * 10.0**-decimals / math.sqrt(3)

    fe = 0.771 + 2 * -0.447 - 3 * -0.037
    u_fe = math.sqrt(rounding(3) ** 2 + (2 * rounding(3)) ** 2 + (3 * rounding(3)) ** 2)
    cu = 0.153 + 0.521 - 2 * 0.3419
    u_cu = math.sqrt(rounding(3) ** 2 + rounding(3) ** 2 + (2 * rounding(4)) ** 2)
    assert abs(fe) > 2 * u_fe
    assert abs(cu) > 2 * u_cu
    # ... and the catalogue's own Cu rows (widened) pass, with the same handbook values
    copper = next(r for r in RELATIONS if "Cu2+/Cu+" in r.couples)
    assert abs(copper.residual.nominal_value) == pytest.approx(abs(cu), abs=1e-12)
    assert copper.consistent()


# --- one reaction, one ΔG°, whichever couples make it ---------------------------------------

IRON_DIAGRAMS = (
    "Fe(s) | Fe2+(aq) || Fe3+(aq), Fe2+(aq) | Pt(s)",  # Fe2+/Fe and Fe3+/Fe2+, n = 2
    "Fe(s) | Fe3+(aq) || Fe3+(aq), Fe2+(aq) | Pt(s)",  # Fe3+/Fe and Fe3+/Fe2+, n = 3
    "Fe(s) | Fe2+(aq) || Fe3+(aq) | Fe(s)",  # Fe2+/Fe and Fe3+/Fe, n = 6
)
# ΔG° of Fe + 2 Fe³⁺ → 3 Fe²⁺ from the CRC rows as printed (from memory), by the three routes:
# −2F(0.771 + 0.447), −3F(0.771 + 0.037), −6F(−0.037 + 0.447) [kJ/mol]
HANDBOOK_ROUTES_KJ_MOL = tuple(-n * FARADAY_C_MOL * e / 1000 for n, e in
                               ((2, 0.771 + 0.447), (3, 0.771 + 0.037), (6, -0.037 + 0.447)))


def _cell_command(diagram, path):
    assert main(["cell", diagram, "--json", str(path)]) == 0
    return json.loads(path.read_text())


def test_iron_reaction_has_one_delta_g_whichever_couples(tmp_path, capsys):
    summaries = [_cell_command(d, tmp_path / f"cell{i}.json")
                 for i, d in enumerate(IRON_DIAGRAMS)]
    capsys.readouterr()
    couples = {(s["left"]["couple"], s["right"]["couple"]) for s in summaries}
    assert couples == {("Fe2+/Fe", "Fe3+/Fe2+"), ("Fe3+/Fe", "Fe3+/Fe2+"), ("Fe2+/Fe", "Fe3+/Fe")}
    reactions = {frozenset(cell_from_diagram(d).reaction.stoichiometry) for d in IRON_DIAGRAMS}
    assert len(reactions) == 1  # the same reaction, coefficient for coefficient
    assert sorted(s["electrons"] for s in summaries) == [2, 3, 6]
    values = [s["delta_g_kJ_mol"] for s in summaries]
    for a, b in itertools.combinations(values, 2):
        assert abs(a["value"] - b["value"]) <= math.hypot(a["uncertainty"], b["uncertainty"])
    for a in values:
        # realistic: the handbook's own rows give −233.9 to −237.4 kJ/mol by the three
        # routes; each lies within two stated standard uncertainties, and u is not 0.1 kJ/mol
        assert a["uncertainty"] >= 1.0
        for route in HANDBOOK_ROUTES_KJ_MOL:
            assert abs(a["value"] - route) <= 2 * a["uncertainty"]
    # −2F(0.771 + 0.447 V) = −235.0 kJ/mol (the route that uses no derived couple)
    assert values[0]["value"] == pytest.approx(HANDBOOK_ROUTES_KJ_MOL[0], abs=1e-6)


def test_iron_routes_printed_alike(tmp_path, capsys):
    lines = []
    for diagram in IRON_DIAGRAMS:
        assert main(["cell", diagram]) == 0
        lines.append(next(line for line in capsys.readouterr().out.splitlines()
                          if line.startswith("ΔG°")))
    assert len(set(lines)) == 1, lines


def test_copper_routes_agree_within_their_uncertainties():
    # Cu + Cu²⁺ → 2 Cu⁺ by (Cu⁺/Cu, Cu²⁺/Cu⁺) and by (Cu⁺/Cu, Cu²⁺/Cu): the handbook rows
    # differ by 9.8 mV in 2E°(Cu²⁺/Cu), i.e. 0.95 kJ/mol, which the widened u must cover.
    first = cell_summary("Cu(s) | Cu+(aq) || Cu2+(aq), Cu+(aq) | Pt(s)")
    second = cell_summary("Cu(s) | Cu+(aq) || Cu2+(aq) | Cu(s)")
    assert first["right"]["couple"] == "Cu2+/Cu+" and second["right"]["couple"] == "Cu2+/Cu"
    assert first["reaction"] == second["reaction"] == "Cu(s) + Cu2+(aq) → 2 Cu+(aq)"
    a, b = first["delta_g_kJ_mol"], second["delta_g_kJ_mol"]
    assert abs(a["value"] - b["value"]) == pytest.approx(FARADAY_C_MOL * 0.0098 / 1000, abs=1e-6)
    assert abs(a["value"] - b["value"]) <= math.hypot(a["uncertainty"], b["uncertainty"])


# --- one E°(T) per couple: AgCl/Ag smooth through 25 °C, on the Bates & Bower table ---------

HARNED = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
# Bates & Bower (1954), Table 1, E°/V by t/°C (1 atm, absolute volts; reference-values.md)
BATES_BOWER_V = {5: 0.23413, 10: 0.23142, 15: 0.22857, 20: 0.22557, 25: 0.22234, 30: 0.21904,
                 35: 0.21566, 40: 0.21208, 45: 0.20835, 50: 0.20449, 55: 0.20056, 60: 0.19649,
                 70: 0.18782, 80: 0.17873, 90: 0.16952, 95: 0.16511}


def _bates_bower_sd_V(celsius):
    # their standard deviation: 0.01 mV at 25 °C and 0.09 mV at 95 °C (confirmed); linear in
    # |t − 25 °C| in between and below (our reading, common practice for a stated range)
    return 1e-5 + 8e-5 * abs(celsius - 25.0) / 70.0


def _harned(celsius):
    # Bates & Bower's E° are on the 1 atm basis
    return cell_summary(HARNED, 273.15 + celsius, 101325.0)["standard_potential_V"]


def test_harned_e0_is_continuous_through_25C():
    values = [_harned(t) for t in (24.99, 25.00, 25.01)]
    e = [v["value"] for v in values]
    slope = (BATES_BOWER_V[30] - BATES_BOWER_V[20]) / 10  # V/K from the table, ≈ −0.65 mV/K
    # the steps differ by the slope only: no jump at exactly 25.00 °C
    assert abs(e[1] - (e[0] + e[2]) / 2) < 0.002e-3
    assert (e[2] - e[0]) / 0.02 == pytest.approx(slope, rel=0.05)
    u = [v["uncertainty"] for v in values]
    assert max(u) - min(u) < 0.002e-3


def test_catalogue_agcl_is_its_temperature_function_at_25C():
    half = couple("AgCl/Ag")
    assert half.standard_potential_V == pytest.approx(
        float(silver_chloride_standard_potential(298.15)), abs=1e-12)
    assert couple_at_temperature(half, 298.15) is half
    near = couple_at_temperature(half, 298.150001)
    assert near.standard_potential_V == pytest.approx(half.standard_potential_V, abs=1e-9)
    assert near.u_standard_potential_V == pytest.approx(half.u_standard_potential_V, abs=1e-10)


@pytest.mark.parametrize(("celsius", "value"), BATES_BOWER_V.items())
@pytest.mark.literature
def test_harned_e0_matches_bates_bower_within_their_sd(celsius, value):
    result = _harned(celsius)
    sd = _bates_bower_sd_V(celsius)
    assert abs(result["value"] - value) <= sd
    assert result["uncertainty"] == pytest.approx(sd, rel=0.05)


@pytest.mark.literature
def test_between_table_rows_within_their_sd_of_the_neighbours_line():
    # halfway between rows the function stays within the table's own scatter of a straight
    # line between neighbours plus its curvature (< 0.05 mV over 5 °C; common practice)
    rows = sorted(BATES_BOWER_V)
    for low, high in itertools.pairwise(rows):
        middle = (low + high) / 2
        line = (BATES_BOWER_V[low] + BATES_BOWER_V[high]) / 2
        curvature = 7e-6 * ((high - low) / 2) ** 2 / 2  # |d²E°/dT²| < 7 µV/K², B&B equation
        assert abs(_harned(middle)["value"] - line) <= curvature + 2 * _bates_bower_sd_V(middle)


def test_other_couples_have_no_temperature_function():
    summary = cell_summary("Pt | H2(g) | HCl(aq) | Hg2Cl2(s) | Hg(l) | Pt", 308.15)
    assert any("298.15 K" in w for w in summary["warnings"])
    assert couple_at_temperature(couple("H+/H2"), 350.0) is couple("H+/H2")
    assert couple_at_temperature(couple("AgCl/Ag"), 273.15) is None  # below their table
