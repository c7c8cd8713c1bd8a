"""Runs that cannot determine what they are asked for, and values held with an uncertainty.

Readings are generated from the Hückel equation with å = 4.3 Å and b = 0.27 kg/mol and
E° = 0.22234 V (Bates & Bower 1954, Table 1); they are synthetic (regression of the rules, not
check values), except where a published source is named.
"""

from __future__ import annotations

import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity.hueckel import ln_gamma
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import read_run
from activolt.errors import InputError
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run

HCL = parse_electrolyte("HCl")
TRUTH = {"a_angstrom": 4.3, "b_kg_mol": 0.27}
E0_V = 0.22234  # Bates & Bower (1954), Table 1


def _emf(m):
    constants = debye_hueckel_constants(np.full(m.size, 298.15))
    return emf_from_gamma(m, np.exp(ln_gamma(HCL, m, constants, TRUTH)), E0_V)


@pytest.mark.parametrize("model", ["hueckel", "davies", "pitzer", "limiting"])
def test_a_single_molality_is_refused_with_what_to_do(tmp_path, model):
    """Three readings of one 0.01 mol/kg solution (what a QA lab measures): no extrapolation
    is possible; one clear line, never a singular-matrix traceback."""
    m = np.full(3, 0.01)
    run = read_run(write_run(tmp_path, m, _emf(m) + np.array([0.0, 1e-5, -1e-5]),
                             u_emf_V=1e-5))
    with pytest.raises(InputError, match=r"one molality \(m = 0.01 mol/kg\).*dilution series"):
        reduce_run(run, model)


def test_two_molalities_hold_what_they_cannot_determine(tmp_path):
    """Replicates at two molalities determine E° and one more parameter at most: the others
    are held, each with the reason that names the number of distinct molalities."""
    m = np.repeat([0.005, 0.05], 4)
    emf = _emf(m) + np.random.default_rng(1).normal(0.0, 1e-5, m.size)
    reduction = reduce_run(read_run(write_run(tmp_path, m, emf, u_emf_V=1e-5)), "hueckel")
    held = {p.name: p.reason for p in reduction.parameters if p.fixed}
    assert len(held) >= 1
    assert reduction.linear_extrapolation is None  # a straight line needs three molalities
    assert abs(reduction.standard_potential.nominal_value - E0_V) <= (
        3 * reduction.standard_potential.std_dev)


def test_a_value_held_with_an_uncertainty_enters_u_e0_as_type_b(tmp_path):
    m = np.geomspace(0.001, 0.1, 8)
    emf = _emf(m) + np.random.default_rng(2).normal(0.0, 1e-5, m.size)
    run = read_run(write_run(tmp_path, m, emf, u_emf_V=1e-5))
    exact = reduce_run(run, "hueckel", fixed={"a_angstrom": 4.3})
    uncertain = reduce_run(run, "hueckel", fixed={"a_angstrom": (4.3, 0.2)})
    assert uncertain.standard_potential.nominal_value == exact.standard_potential.nominal_value
    assert uncertain.standard_potential.std_dev > exact.standard_potential.std_dev
    budget = {line.component: line.u_V for line in uncertain.budget}
    assert budget["held conventional values"] > 0
    held = {p.name: p.reason for p in uncertain.parameters}
    assert "u = 0.2 Å (Type B)" in held["a_angstrom"]


@pytest.mark.parametrize("value", [float("inf"), 1e308, -5.0])
def test_a_held_value_outside_its_range_is_refused(tmp_path, value):
    m = np.geomspace(0.001, 0.1, 8)
    run = read_run(write_run(tmp_path, m, _emf(m), u_emf_V=1e-5))
    with pytest.raises(InputError, match="a_angstrom"):
        reduce_run(run, "hueckel", fixed={"a_angstrom": value})


def test_command_line_takes_a_held_value_with_its_uncertainty(tmp_path, capsys):
    from activolt.cli import main

    m = np.geomspace(0.001, 0.1, 8)
    path = write_run(tmp_path, m, _emf(m) + np.random.default_rng(3).normal(0, 1e-5, m.size),
                     u_emf_V=1e-5)
    assert main(["reduce", str(path), "--fix", "a_angstrom=4.3±0.2", "--figures", "none",
                 "--out", str(tmp_path / "out")]) == 0
    report = next((tmp_path / "out").glob("*.report.txt")).read_text(encoding="utf-8")
    assert "u = 0.2 Å (Type B)" in report


def test_monte_carlo_takes_the_run_s_temperature_uncertainty(tmp_path):
    """Same inputs, same answer: the library's Monte Carlo uses the metadata's u(T) by default,
    as the command line does (regression of the default)."""
    from activolt.procedures.montecarlo import monte_carlo

    m = np.geomspace(0.001, 0.1, 8)
    path = write_run(tmp_path, m, _emf(m), u_emf_V=1e-5)
    path.with_suffix(".toml").write_text(path.with_suffix(".toml").read_text()
                                         + "u_temperature_K = 0.5\n")
    run = read_run(path)
    reduction = reduce_run(run)
    default = monte_carlo(run, trials=500, seed=4, reduction=reduction)
    explicit = monte_carlo(run, trials=500, seed=4, reduction=reduction, temperature_u_K=0.5)
    assert default.temperature_u_K == 0.5
    np.testing.assert_array_equal(default.standard_potential_samples,
                                  explicit.standard_potential_samples)


def test_a_reduction_shows_itself_in_one_line(tmp_path):
    m = np.geomspace(0.001, 0.1, 8)
    reduction = reduce_run(read_run(write_run(tmp_path, m, _emf(m), u_emf_V=1e-5)))
    text = repr(reduction)
    assert "\n" not in text and len(text) < 200
    assert text.startswith("<Reduction HCl, hueckel, 8 readings: E° = 0.2223")


@pytest.mark.parametrize("celsius", [0.0, 100.0])
def test_monte_carlo_of_u_t_at_the_ends_of_liquid_water(tmp_path, celsius):
    """At 0 and 100 °C the drawn temperatures need Debye–Hückel constants just outside liquid
    water: they are interpolated from inside it, and the Monte Carlo agrees with the linear
    propagation of u(T) (regression of the mechanism; the ratio bound is common practice for
    2000 trials)."""
    from activolt.procedures.montecarlo import monte_carlo

    m = np.geomspace(0.001, 0.1, 8)
    t = 273.15 + celsius
    constants = debye_hueckel_constants(np.full(m.size, t))
    emf = emf_from_gamma(m, np.exp(ln_gamma(HCL, m, constants, TRUTH)), 0.2, temperature_K=t)
    path = write_run(tmp_path, m, emf, u_emf_V=1e-6, temperature_C=celsius)
    path.with_suffix(".toml").write_text(path.with_suffix(".toml").read_text()
                                         + "u_temperature_K = 0.2\n")
    run = read_run(path)
    reduction = reduce_run(run, fixed={"a_angstrom": 4.3})
    result = monte_carlo(run, trials=2000, seed=6, reduction=reduction)
    budget = {line.component: line.u_V for line in reduction.budget}
    linear = float(np.hypot(budget["temperature"], budget["readings"]))
    assert result.standard_potential.standard_deviation == pytest.approx(linear, rel=0.1)


def test_no_model_for_the_run_still_shows_the_comparison(tmp_path, capsys):
    """--model all on a CaCl2 run to 3 mol/kg (I = 9 mol/kg, beyond every model's range, the
    Pitzer equations' 6 included) exits 1, writes nothing, and prints the comparison table
    with each model's reason."""
    from activolt.chemistry.electrolytes import nernst_factor
    from activolt.cli import main

    cacl2 = parse_electrolyte("CaCl2")
    m = np.geomspace(0.001, 3.0, 14)
    constants = debye_hueckel_constants(np.full(m.size, 298.15))
    ln_g = ln_gamma(cacl2, m, constants, {"a_angstrom": 5.0, "b_kg_mol": 0.1})
    emf = 0.22 - nernst_factor(cacl2, 2, 298.15) * (np.log(cacl2.mean_molality(m)) + ln_g)
    path = write_run(tmp_path, m, emf, u_emf_V=1e-5, electrolyte="CaCl2", electrons=2)
    assert main(["reduce", str(path), "--model", "all", "--out", str(tmp_path / "out")]) == 1
    printed = capsys.readouterr()
    assert "Model comparison:" in printed.out
    assert "no model can describe this run" in printed.err
    assert not (tmp_path / "out").exists()


def test_lmfit_parameters_declare_the_held_values(tmp_path):
    """A library user may hold parameters the lmfit way (vary=False, stderr as u): the same
    reduction as the plain mapping (regression of the two spellings against each other)."""
    import lmfit

    m = np.geomspace(0.001, 0.1, 8)
    emf = _emf(m) + np.random.default_rng(7).normal(0.0, 1e-5, m.size)
    run = read_run(write_run(tmp_path, m, emf, u_emf_V=1e-5))
    params = lmfit.Parameters()
    params.add("a_angstrom", value=4.3, vary=False)
    params["a_angstrom"].stderr = 0.2
    params.add("b_kg_mol", value=0.2)  # varies: left to the fit
    by_lmfit = reduce_run(run, "hueckel", fixed=params)
    by_mapping = reduce_run(run, "hueckel", fixed={"a_angstrom": (4.3, 0.2)})
    assert by_lmfit.standard_potential.nominal_value == by_mapping.standard_potential.nominal_value
    assert by_lmfit.standard_potential.std_dev == by_mapping.standard_potential.std_dev
