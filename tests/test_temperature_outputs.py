"""The outputs of a temperature study: ``activolt reduce`` on a table whose rows sit at several
setpoints (or on several tables with ``--study``), the record's ``temperature_study`` section and
its schema, the report's sections, the points tables and the figures; bad input refused.

Synthetic data (tests/synthetic.py): HCl, cell Pt | H2 | HCl | AgCl | Ag, readings from E°(t) of
the Bates & Bower (1954, J. Res. NBS 53, 283) smoothing equation
E° = 0.23659 − 4.8564e-4 t − 3.4205e-6 t² + 5.869e-9 t³ (t in °C; 0.23659 confirmed, the other
coefficients from memory) and the Hückel equation with å = 4.3 Å, b = 0.2 kg/mol (invented
values, not a published fit) at nine isotherms from 5 to 45 °C, with Gaussian noise of 0.005 mV
(seeded). The check values —
ΔS° = F dE°/dT and ΔH° = −FE° + TΔS° at 298.15 K — follow from that E°(t) by calculus
(ΔS° = −62.30 J/(K mol), ΔH° = −40.03 kJ/mol; the same numbers are derived from the equation in
../shared/reference-values.md): the test asks whether the study gives back the truth it was
built from within 3 u.
"""

from __future__ import annotations

import json
import math
import re

import jsonschema
import numpy as np
import pytest
from synthetic import emf_from_gamma

from activolt.activity import get_model
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.cli import main
from activolt.constants import FARADAY_C_MOL
from activolt.io.record import load_record, record_schema
from activolt.physics.water import debye_hueckel_constants
from activolt.report.temperature import SECTION_TITLES

#: Nine isotherms, 5 °C apart as in Bates & Bower's table.
SETPOINTS_C = (5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 35.0, 40.0, 45.0)
MOLALITIES = np.array([0.002, 0.005, 0.01, 0.02, 0.03, 0.05, 0.07, 0.1])
#: Reading noise and stated u(E) [V]: small enough that the cubic term of the smoothing
#: equation (about 0.012 mV over 5–45 °C) is resolved by the isotherms' E°.
U_EMF_V = 5e-6
TOML = ('electrolyte = "HCl"\nelectrons = 1\n'
        'cell = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"\n')
PNG = b"\x89PNG\r\n\x1a\n"


def bates_bower_e0_V(t_C: float) -> float:
    """E° of the Bates & Bower (1954) smoothing equation [V] (see the module docstring)."""
    return 0.23659 - 4.8564e-4 * t_C - 3.4205e-6 * t_C**2 + 5.869e-9 * t_C**3


def bates_bower_slope_V_K(t_C: float) -> float:
    """dE°/dT of the same equation [V/K] (its derivative in t)."""
    return -4.8564e-4 - 2 * 3.4205e-6 * t_C + 3 * 5.869e-9 * t_C**2


#: Implied by the equation at 25 °C (derived; n = 1).
TRUE_DELTA_S_J_K_MOL = FARADAY_C_MOL * bates_bower_slope_V_K(25.0)
TRUE_DELTA_H_J_MOL = -FARADAY_C_MOL * bates_bower_e0_V(25.0) + 298.15 * TRUE_DELTA_S_J_K_MOL


def study_rows(setpoints_C=SETPOINTS_C, seed: int = 0) -> list[str]:
    """CSV rows ``molality_mol_kg,emf_V,u_emf_V,temperature_C`` of a synthetic study."""
    hcl = parse_electrolyte("HCl")
    hueckel = get_model("hueckel")
    rng = np.random.default_rng(seed)
    rows = []
    for t_C in setpoints_C:
        t_K = t_C + 273.15
        ln_gamma = hueckel.ln_gamma(hcl, MOLALITIES,
                                    debye_hueckel_constants(np.full(MOLALITIES.size, t_K)),
                                    {"a_angstrom": 4.3, "b_kg_mol": 0.2})
        emf = emf_from_gamma(MOLALITIES, np.exp(ln_gamma), bates_bower_e0_V(t_C),
                             temperature_K=t_K) + rng.normal(0.0, U_EMF_V, MOLALITIES.size)
        rows += [f"{float(m)!r},{float(e)!r},{U_EMF_V!r},{t_C!r}"
                 for m, e in zip(MOLALITIES, emf, strict=True)]
    return rows


def write_study(folder, stem: str = "study", rows: list[str] | None = None):
    table = folder / f"{stem}.csv"
    table.write_text("molality_mol_kg,emf_V,u_emf_V,temperature_C\n"
                     + "\n".join(study_rows() if rows is None else rows) + "\n",
                     encoding="utf-8")
    (folder / f"{stem}.toml").write_text(TOML, encoding="utf-8")
    return table


@pytest.fixture(scope="module")
def study_run(tmp_path_factory):
    """The study reduced once by the command line: (status, stdout, output folder)."""
    folder = tmp_path_factory.mktemp("study")
    table = write_study(folder)
    out = folder / "out"
    import contextlib
    import io

    buffer = io.StringIO()
    with contextlib.redirect_stdout(buffer):
        status = main(["reduce", str(table), "--out", str(out)])
    return status, buffer.getvalue(), out


def test_a_table_at_several_setpoints_is_a_study(study_run):
    status, _, out = study_run
    assert status == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(f"study.{kind}" for kind in (
        "record.json", "points.csv", "report.txt", "gamma_temperature.csv",
        "standard_potential.png", "gamma.png", "report.html"))


def test_the_record_validates_and_holds_the_study(study_run):
    _, _, out = study_run
    record = json.loads((out / "study.record.json").read_text(encoding="utf-8"))
    jsonschema.validate(record, record_schema())
    assert load_record(out / "study.record.json") == record
    section = record["temperature_study"]
    assert section["reference_temperature_K"] == pytest.approx(298.15)
    assert record["temperature_K"] == pytest.approx(298.15)
    assert [round(i["temperature_K"] - 273.15, 6) for i in section["isotherms"]] == list(
        SETPOINTS_C)
    assert all(i["n_points"] == MOLALITIES.size and i["model"] == "hueckel"
               for i in section["isotherms"])
    names = section["coefficients"]["names"]
    covariance = np.array(section["coefficients"]["covariance"], dtype=float)
    assert covariance.shape == (len(names), len(names))
    assert np.allclose(covariance, covariance.T) and np.all(np.linalg.eigvalsh(covariance) > 0)
    # the headline keys agree with the section
    assert record["standard_potential_V"]["value"] == section["standard_potential_V"]["value"]
    assert record["delta_g_kJ_mol"]["value"] == pytest.approx(
        section["delta_G_J_mol"]["value"] / 1e3, rel=1e-12)
    # every reading of every isotherm, each with its temperature and its isotherm
    points = record["points"]
    assert len(points) == len(SETPOINTS_C) * MOLALITIES.size
    assert {round(p["isotherm_temperature_K"] - 273.15, 6) for p in points} == set(SETPOINTS_C)
    assert all(p["u_gamma_pm"] > 0 for p in points)


def test_the_thermodynamics_give_back_the_smoothing_equation(study_run):
    """ΔH°, ΔS° and E° at 25 °C within 3 u of what the generating E°(t) implies."""
    _, _, out = study_run
    section = json.loads((out / "study.record.json").read_text(encoding="utf-8"))[
        "temperature_study"]
    for key, truth in (("delta_H_J_mol", TRUE_DELTA_H_J_MOL),
                       ("delta_S_J_K_mol", TRUE_DELTA_S_J_K_MOL),
                       ("standard_potential_V", bates_bower_e0_V(25.0))):
        value, u = section[key]["value"], section[key]["uncertainty"]
        assert u > 0
        assert abs(value - truth) <= 3 * u, (key, value, truth, u)
    # and the uncertainties are informative: within the design's bars (0.1 kJ/mol, 0.3 J/(K mol))
    assert section["delta_H_J_mol"]["uncertainty"] < 100.0
    assert section["delta_S_J_K_mol"]["uncertainty"] < 0.3


def test_the_report_has_its_sections_and_the_cautions_last(study_run):
    _, printed, out = study_run
    report = (out / "study.report.txt").read_text(encoding="utf-8")
    assert printed.startswith(report)
    positions = [report.index(title) for title in SECTION_TITLES]
    assert positions == sorted(positions)
    assert report.index("safety:") > positions[-1]
    assert "Hydrogen gas is flammable" in report.split("safety:")[1]
    # the thermodynamics at θ show ΔH° with u, the value to the digit of u's second figure
    found = re.search(r"^  ΔH°\s+(-?\d+\.(\d+)) ± (0\.0*([1-9]\d))\s+kJ/mol", report,
                      re.MULTILINE)
    assert found is not None
    assert len(found.group(2)) == len(found.group(3).split(".")[1])
    assert abs(float(found.group(1)) * 1e3 - TRUE_DELTA_H_J_MOL) <= 3 * float(found.group(3)) * 1e3


def test_the_points_tables_and_figures(study_run):
    _, _, out = study_run
    import pandas as pd

    points = pd.read_csv(out / "study.points.csv")
    assert len(points) == len(SETPOINTS_C) * MOLALITIES.size
    assert sorted(points["isotherm_C"].unique()) == list(SETPOINTS_C)
    assert (points["temperature_C"] == points["isotherm_C"]).all()
    assert (points["u_gamma_pm"] > 0).all() and points["gamma_pm"].between(0.7, 1.0).all()
    gamma = pd.read_csv(out / "study.gamma_temperature.csv")
    assert set(gamma["temperature_C"].round(6)) == set(SETPOINTS_C)
    # γ± falls with T at 0.1 mol/kg in the Hückel truth (its A rises with T): a law of the
    # data, not a pin
    at = gamma[gamma["molality_mol_kg"] == 0.1].sort_values("temperature_C")
    assert np.all(np.diff(at["gamma_pm"].to_numpy()) < 0)
    for name in ("study.standard_potential.png", "study.gamma.png"):
        assert (out / name).read_bytes().startswith(PNG)


def test_several_tables_are_one_study_with_the_option(tmp_path, capsys):
    rows = study_rows()
    per = MOLALITIES.size
    cold = write_study(tmp_path, "cold", rows[: 2 * per])
    warm = write_study(tmp_path, "warm", rows[2 * per:])
    out = tmp_path / "out"
    assert main(["reduce", str(cold), str(warm), "--study", "--out", str(out),
                 "--figures", "none"]) == 0
    record = json.loads((out / "study.record.json").read_text(encoding="utf-8"))
    jsonschema.validate(record, record_schema())
    assert [i["file"] for i in record["inputs"]] == ["../cold.csv", "../warm.csv"]
    assert len(record["temperature_study"]["isotherms"]) == len(SETPOINTS_C)
    assert not list(out.glob("*.png"))
    # the same readings in one table give the same study
    whole = write_study(tmp_path, "whole", rows)
    assert main(["reduce", str(whole), "--out", str(tmp_path / "whole_out"),
                 "--figures", "none", "--reference-temperature-C", "25"]) == 0
    other = json.loads((tmp_path / "whole_out" / "whole.record.json").read_text("utf-8"))
    for key in ("standard_potential_V", "delta_H_J_mol", "delta_S_J_K_mol"):
        assert record["temperature_study"][key]["value"] == pytest.approx(
            other["temperature_study"][key]["value"], rel=1e-9)
    capsys.readouterr()


def test_the_reference_temperature_moves_theta(tmp_path, capsys):
    table = write_study(tmp_path)
    out = tmp_path / "out"
    assert main(["reduce", str(table), "--out", str(out), "--figures", "none",
                 "--reference-temperature-C", "35"]) == 0
    section = json.loads((out / "study.record.json").read_text("utf-8"))["temperature_study"]
    assert section["reference_temperature_K"] == pytest.approx(308.15)
    value, u = (section["standard_potential_V"][k] for k in ("value", "uncertainty"))
    assert abs(value - bates_bower_e0_V(35.0)) <= 3 * u
    assert "θ = 35 °C" in capsys.readouterr().out


def _error_line(capsys) -> str:
    captured = capsys.readouterr()
    lines = captured.err.splitlines()
    assert len(lines) == 1 and lines[0].startswith("activolt: error: "), captured.err
    return lines[0]


def test_a_study_of_one_isotherm_is_refused(tmp_path, capsys):
    table = write_study(tmp_path, rows=study_rows(setpoints_C=(25.0,)))
    before = table.read_bytes()
    assert main(["reduce", str(table), "--study", "--out", str(tmp_path / "out")]) == 2
    line = _error_line(capsys)
    assert "two temperatures" in line and "study.csv" in line
    assert not (tmp_path / "out").exists()
    assert table.read_bytes() == before


def test_an_isotherm_with_too_few_points_is_refused(tmp_path, capsys):
    rows = study_rows(setpoints_C=(15.0, 25.0, 35.0))
    rows = rows[: 2 * MOLALITIES.size] + rows[2 * MOLALITIES.size:][:2]
    table = write_study(tmp_path, rows=rows)
    assert main(["reduce", str(table), "--out", str(tmp_path / "out")]) == 2
    line = _error_line(capsys)
    assert "35.00 °C" in line and "at least 3" in line
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("option", [["--reference-temperature-C", "120"],
                                    ["--reference-temperature-C", "-5"]])
def test_a_reference_outside_liquid_water_is_refused(tmp_path, capsys, option):
    table = write_study(tmp_path)
    assert main(["reduce", str(table), "--out", str(tmp_path / "out"), *option]) == 2
    line = _error_line(capsys)
    assert "--reference-temperature-C" in line and "liquid water" in line
    assert not (tmp_path / "out").exists()


def test_options_a_study_cannot_take_are_refused(tmp_path, capsys):
    table = write_study(tmp_path)
    for option in (["--monte-carlo", "100"], ["--model", "hueckel,davies"]):
        assert main(["reduce", str(table), "--out", str(tmp_path / "out"), *option]) == 2
        line = _error_line(capsys)
        assert option[0] in line
    assert not (tmp_path / "out").exists()


def test_a_single_temperature_run_is_not_a_study(tmp_path, capsys):
    # rows within 2 K stay one reduction, with its usual outputs (common practice)
    rows = study_rows(setpoints_C=(25.0,))
    rows = [r.rsplit(",", 1)[0] + (",25.9" if i % 2 else ",25.0") for i, r in enumerate(rows)]
    table = write_study(tmp_path, rows=rows)
    out = tmp_path / "out"
    assert main(["reduce", str(table), "--out", str(out), "--figures", "none"]) == 0
    record = json.loads((out / "study.record.json").read_text("utf-8"))
    assert "temperature_study" not in record
    assert math.isfinite(record["standard_potential_V"]["value"])
    capsys.readouterr()


@pytest.mark.parametrize("seed", [0, 2, 4, 5])
def test_five_isotherms_cover_the_smoothing_equation(tmp_path, capsys, seed):
    """Five isotherms cannot test the allowed forms against a cubic term, which the smoothing
    equation has: the uncertainties carry the difference to the cubic, and cover the truth (the
    seeds where the chosen form alone missed by 3–8 u)."""
    table = write_study(tmp_path, rows=study_rows(setpoints_C=(5.0, 15.0, 25.0, 35.0, 45.0),
                                                  seed=seed))
    out = tmp_path / "out"
    assert main(["reduce", str(table), "--out", str(out), "--figures", "none"]) == 0
    capsys.readouterr()
    section = json.loads((out / "study.record.json").read_text("utf-8"))["temperature_study"]
    for key, truth in (("delta_H_J_mol", TRUE_DELTA_H_J_MOL),
                       ("delta_S_J_K_mol", TRUE_DELTA_S_J_K_MOL)):
        value, u = section[key]["value"], section[key]["uncertainty"]
        assert abs(value - truth) <= 3 * u, (key, value, truth, u)


def test_an_excluded_reading_is_flagged_in_the_study(tmp_path, capsys):
    table = write_study(tmp_path)
    out = tmp_path / "out"
    record_path = tmp_path / "elsewhere" / "study.json"
    record_path.parent.mkdir()
    assert main(["reduce", str(table), "--out", str(out), "--figures", "none",
                 "--exclude", "line=3:bubble in the electrode", "--json", str(record_path)]) == 0
    assert "out of the fit: line 3 (m = 0.005 mol/kg) — excluded: bubble in the electrode" in (
        capsys.readouterr().out)
    record = json.loads(record_path.read_text("utf-8"))
    jsonschema.validate(record, record_schema())
    assert not (out / "study.record.json").exists()
    left_out = [(p["line"], p["flag"]) for p in record["points"] if not p["used_in_fit"]]
    assert left_out == [(3, "excluded: bubble in the electrode")]
    assert record["temperature_study"]["isotherms"][0]["n_points"] == MOLALITIES.size - 1
