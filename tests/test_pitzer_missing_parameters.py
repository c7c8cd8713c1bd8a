"""A Pitzer reduction of a salt with or without published parameters: it covers the truth within
its stated uncertainty, or it is refused with a reason (never a confident wrong answer).

The runs are written from a known truth (tests/synthetic.py); the truths are published
parameter sets used only to generate smooth data, and the check is coverage of E°, not a value:

- LaCl3: Pitzer & Mayorga (1973), J. Phys. Chem. 77, 2300, Table VIII, unscaled — β(0) = 0.6105,
  β(1) = 5.487, Cφ = −0.0320 kg^n mol^-n (confirmed in a secondary copy;
  reference-values.md);
- CsBr: Pitzer & Mayorga (1973), Table II — β(0) = 0.0279, β(1) = 0.0139, Cφ = 0.00004 (from
  memory; a plausible 1:1 truth away from the 1:1 mean of the table);
- E° = 0.22234 V: Ag|AgCl, Bates & Bower (1954), J. Res. NBS 53, 283, Table 1, 25 °C (confirmed).
"""

from __future__ import annotations

import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity import pitzer
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import read_run
from activolt.errors import FitError, InputError
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run
from activolt.reference import load_table
from activolt.reference import parameters as reference_parameters

E0_TRUE_V = 0.22234  # Bates & Bower (1954), Table 1, 25 °C (confirmed)
U_EMF_V = 1e-5  # 0.01 mV noise, stated as u_emf
LACL3_PM1973 = {"beta0_kg_mol": 0.6105, "beta1_kg_mol": 5.487, "beta2_kg_mol": 0.0,
                "cphi_kg2_mol2": -0.0320}  # Pitzer & Mayorga (1973), Table VIII, unscaled
CSBR_PM1973 = {"beta0_kg_mol": 0.0279, "beta1_kg_mol": 0.0139, "beta2_kg_mol": 0.0,
               "cphi_kg2_mol2": 0.00004}  # Pitzer & Mayorga (1973), Table II (from memory)
LACL3_MOLALITY = np.geomspace(0.0005, 0.1, 15)
SEEDS = (1, 2, 3)


def _run(tmp_path, formula: str, truth: dict[str, float], electrons: int,
         molality: np.ndarray, seed: int):
    electrolyte = parse_electrolyte(formula)
    constants = debye_hueckel_constants(np.full(molality.size, 298.15))
    gamma = np.exp(pitzer.ln_gamma(electrolyte, molality, constants, truth))
    emf = emf_from_gamma(molality, gamma, E0_TRUE_V, formula, electrons)
    emf = emf + np.random.default_rng(seed).normal(0.0, U_EMF_V, molality.size)
    return read_run(write_run(tmp_path, molality, emf, u_emf_V=U_EMF_V, electrolyte=formula,
                              electrons=electrons))


def _covers_or_refuses(run) -> str:
    """'covered' when E° lies within 3 u (or 0.02 mV) of the truth, 'refused' on a reasoned
    FitError/InputError; fails on a confident wrong answer."""
    try:
        reduction = reduce_run(run, "pitzer")
    except (FitError, InputError) as error:
        assert "--fix" in str(error) or "hold" in str(error), str(error)
        return "refused"
    e0 = reduction.standard_potential
    error_V = abs(e0.nominal_value - E0_TRUE_V)
    assert error_V <= max(3.0 * e0.std_dev, 2e-5), (
        f"E° off by {error_V * 1e3:.4f} mV with u = {e0.std_dev * 1e3:.4f} mV")
    return "covered"


@pytest.fixture
def without_lacl3(monkeypatch):
    """The parameter table as if it had no LaCl3 row (no 3:1 salt at all)."""
    rows = {k: v for k, v in reference_parameters.pitzer_rows().items() if k != "LaCl3"}
    monkeypatch.setattr(reference_parameters, "pitzer_rows", lambda: rows)


# --- LaCl3 with its row in the table ----------------------------------------------------------

@pytest.mark.parametrize("seed", SEEDS)
def test_lacl3_in_table_covers_the_truth(tmp_path, seed):
    run = _run(tmp_path, "LaCl3", LACL3_PM1973, 3, LACL3_MOLALITY, seed)
    assert _covers_or_refuses(run) == "covered"


def test_lacl3_convention_is_the_published_row():
    lacl3 = parse_electrolyte("LaCl3")
    convention = pitzer.parameter_convention(lacl3, "beta1_kg_mol")
    assert convention.basis == "published" and convention.value == 5.487
    assert "Table VIII" in convention.description


# --- LaCl3 with its row hidden: no 3:1 salt to take a convention from --------------------------

@pytest.mark.parametrize("seed", SEEDS)
def test_lacl3_hidden_is_refused_with_what_to_do(tmp_path, seed, without_lacl3):
    run = _run(tmp_path, "LaCl3", LACL3_PM1973, 3, LACL3_MOLALITY, seed)
    assert _covers_or_refuses(run) == "refused"
    with pytest.raises(FitError,
                       match=r"no published parameters for LaCl3.*no 3:1.*at given values"):
        reduce_run(run, "pitzer")


def test_lacl3_hidden_with_published_values_given_covers(tmp_path, without_lacl3):
    # What the refusal asks for: hold the parameters at published values with --fix.
    run = _run(tmp_path, "LaCl3", LACL3_PM1973, 3, LACL3_MOLALITY, 1)
    fixed = {k: v for k, v in LACL3_PM1973.items() if k != "beta2_kg_mol"}
    e0 = reduce_run(run, "pitzer", fixed).standard_potential
    assert abs(e0.nominal_value - E0_TRUE_V) <= max(3.0 * e0.std_dev, 2e-5)


# --- a 3:1 salt with no row (AlCl3), one 3:1 salt (LaCl3) in the table ------------------------

@pytest.mark.parametrize("seed", SEEDS)
def test_salt_without_row_covers_or_refuses(tmp_path, seed):
    # A hypothetical AlCl3 run built from the LaCl3 parameters: the reduction does not know them.
    run = _run(tmp_path, "AlCl3", LACL3_PM1973, 3, LACL3_MOLALITY, seed)
    assert _covers_or_refuses(run) in {"covered", "refused"}


def test_salt_without_row_has_a_widened_charge_type_convention():
    alcl3 = parse_electrolyte("AlCl3")
    for name in ("beta0_kg_mol", "beta1_kg_mol", "cphi_kg2_mol2"):
        convention = pitzer.parameter_convention(alcl3, name)
        # One 3:1 salt in the table (LaCl3): the mean is its value, u widened to 100 % of it.
        assert convention.basis == "charge type"
        assert convention.value == LACL3_PM1973[name]
        assert convention.uncertainty == pytest.approx(abs(LACL3_PM1973[name]))
        assert "fewer than 3" in convention.description and "LaCl3" in convention.description
        # never the published-parameter Type B of a salt that has a row
        assert convention.uncertainty > 10 * pitzer.PUBLISHED_PARAMETER_UNCERTAINTY[name]


# --- a 1:1 salt with no row: mean ± sd of the table's 1:1 salts -------------------------------

@pytest.mark.parametrize("seed", SEEDS)
def test_one_one_salt_without_row_covers_or_refuses(tmp_path, seed):
    run = _run(tmp_path, "CsBr", CSBR_PM1973, 1, np.geomspace(0.001, 1.0, 15), seed)
    assert _covers_or_refuses(run) in {"covered", "refused"}


def test_one_one_convention_is_the_table_mean_and_spread():
    # Computed here from the shipped table (reference/pitzer_parameters.csv), by pandas.
    table = load_table("pitzer_parameters")
    one_one = table[table["charge_type"] == "1:1"]
    convention = pitzer.parameter_convention(parse_electrolyte("CsBr"), "cphi_kg2_mol2")
    assert convention.value == pytest.approx(one_one["cphi_kg2_mol2"].mean(), rel=1e-12)
    assert convention.uncertainty == pytest.approx(one_one["cphi_kg2_mol2"].std(ddof=1),
                                                   rel=1e-12)
    assert f"{len(one_one)} 1:1 salt" in convention.description


def test_published_type_b_stays_for_salts_with_a_row():
    kcl = parse_electrolyte("KCl")
    by_name = {p.name: p for p in pitzer.MODEL.parameters}
    constants = debye_hueckel_constants(298.15)
    for name, u in (("beta0_kg_mol", 0.003), ("beta1_kg_mol", 0.03), ("cphi_kg2_mol2", 0.0003)):
        assert by_name[name].conventional_uncertainty(kcl, constants) == u
