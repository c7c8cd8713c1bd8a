"""The command line on good input: the demo, default output folder, record elsewhere.

Behaviour checks of the CLI contract (shared/design.md); the demo data are invented and used
here only to exercise the command, never as check values (common practice).
"""

from __future__ import annotations

import hashlib
import json

from synthetic import emf_from_gamma, write_run

from activolt.activity.published import published_gamma
from activolt.cli import main


def _run(tmp_path, u_emf_V=2e-5):
    table = published_gamma("HCl", 298.15)
    m, gamma = table.molality_mol_kg.to_numpy()[:7], table.gamma_pm.to_numpy()[:7]
    return write_run(tmp_path, m, emf_from_gamma(m, gamma, 0.22234), u_emf_V=u_emf_V)


def test_demo_writes_everything(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "E° =" in printed and "written:" in printed
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(f"kestrel_hcl_25C.{n}" for n in
                           ("record.json", "points.csv", "report.txt", "extrapolation.png",
                            "residuals.png", "gamma.png", "report.html"))
    assert (out / "kestrel_hcl_25C.extrapolation.png").read_bytes()[:4] == b"\x89PNG"


def test_reduce_defaults_next_to_the_run_and_leaves_input_alone(tmp_path, capsys):
    path = _run(tmp_path)
    before = hashlib.sha256(path.read_bytes()).hexdigest()
    assert main(["reduce", str(path), "--no-figures"]) == 0
    folder = tmp_path / "run_activolt"
    assert sorted(p.name for p in folder.iterdir()) == [
        "run.points.csv", "run.record.json", "run.report.html", "run.report.txt"]
    assert hashlib.sha256(path.read_bytes()).hexdigest() == before
    assert not list(tmp_path.rglob("*.tmp"))  # atomic writes leave no temporary files


def test_json_elsewhere_and_model_choice(tmp_path, capsys):
    path = _run(tmp_path)
    record = tmp_path / "records" / "r.json"
    assert main(["reduce", str(path), "--json", str(record), "--out", str(tmp_path / "o"),
                 "--model", "hueckel", "--fix", "a_angstrom=4.3", "--no-figures"]) == 0
    data = json.loads(record.read_text())
    assert data["model"]["parameters"]["a_angstrom"] == {
        "value": 4.3, "uncertainty": None, "unit": "Å", "fixed": True,
        "reason": "held at the value given by the user"}
    assert not (tmp_path / "o" / "run.record.json").exists()


def test_cell_command_prints_and_writes_json(tmp_path, capsys):
    # Daniell cell: E° = 1.10 V, n = 2 (CRC Handbook electrochemical series: Cu 0.3419,
    # Zn −0.7618 V).
    out = tmp_path / "cell.json"
    assert main(["cell", "Zn(s) | ZnSO4(aq) || CuSO4(aq) | Cu(s)", "--json", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "n = 2" in printed and "liquid junction" in printed
    data = json.loads(out.read_text())
    assert data["electrons"] == 2
    assert abs(data["standard_potential_V"]["value"] - 1.1037) < 1e-4
    assert {"delta_g_kJ_mol", "log10_K", "reaction"} <= set(data)


def test_cell_command_bad_diagram_is_one_line(tmp_path, capsys):
    assert main(["cell", "Zn(s) | ZnSO4(aq) || || CuSO4(aq) | Cu(s)"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "salt bridges" in err[0] and "character" in err[0]


def test_model_all_compares_and_records(tmp_path, capsys):
    # Seven HCl readings from the published γ± (Robinson & Stokes 1959; shipped table); the
    # table's three decimals are worth about 0.03 mV, so that is the stated u (common practice).
    path = _run(tmp_path, u_emf_V=5e-5)
    record = tmp_path / "r.json"
    assert main(["reduce", str(path), "--model", "all", "--json", str(record),
                 "--out", str(tmp_path / "o"), "--no-figures"]) == 0
    printed = capsys.readouterr().out
    assert "Model comparison" in printed and "Recommended:" in printed
    data = json.loads(record.read_text())
    comparison = data["model_comparison"]
    assert comparison is not None and data["model"]["name"] == comparison["recommended_model"]
    e0 = data["standard_potential_V"]
    assert e0["uncertainty"] >= e0["u_fit"] > 0
    assert any("limiting" in w for w in data["warnings"])  # stretched to 1 mol/kg
    assert data["derived_properties"]["points"]


def test_model_list_with_a_fix_no_model_has_is_bad_input(tmp_path, capsys):
    path = _run(tmp_path)
    assert main(["reduce", str(path), "--model", "hueckel,pitzer", "--fix", "epsilon_kg_mol=0.1",
                 "--no-figures", "--out", str(tmp_path / "o")]) == 2
    assert "no compared model has a parameter" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_negative_seed_is_bad_input(tmp_path, capsys):
    # numpy's generators take seeds ≥ 0 (numpy.random.default_rng documentation).
    path = _run(tmp_path)
    assert main(["reduce", str(path), "--monte-carlo", "100", "--seed", "-1", "--no-figures",
                 "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--seed" in err[0]
    assert not (tmp_path / "o").exists()


def test_the_command_line_uses_one_blas_thread_unless_told_otherwise():
    # Many small least-squares problems: BLAS threads only contend (common practice). The
    # setting must be made before numpy is first imported, and a user's own setting wins.
    import os
    import subprocess
    import sys

    probe = ("import os, sys, activolt.cli; "
             "print(os.environ['OPENBLAS_NUM_THREADS'], 'numpy' in sys.modules)")
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    out = subprocess.run([sys.executable, "-c", probe], env=env, capture_output=True,
                         text=True, check=True).stdout.split()
    assert out == ["1", "False"]
    out = subprocess.run([sys.executable, "-c", probe], env={**env, "OPENBLAS_NUM_THREADS": "2"},
                         capture_output=True, text=True, check=True).stdout.split()
    assert out == ["2", "False"]
