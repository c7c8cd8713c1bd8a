"""``activolt ph`` end to end: the output set, the record against its schema, and bad input
(exit status 2, one line naming file, line and column, nothing written, inputs unchanged)."""

from __future__ import annotations

import json
import shutil
from importlib.resources import files

import jsonschema
import pytest

from activolt.cli import main
from activolt.io.record import load_record, record_schema

SAMPLES = ("kestrel_phosphate_ph.csv", "kestrel_phosphate_ph.toml", "kestrel_agcl_batch.csv",
           "kestrel_agcl_batch.toml")
KINDS = ("record.json", "points.csv", "report.txt", "acidity.png", "report.html")


@pytest.fixture
def sample(tmp_path):
    folder = files("activolt") / "sample_data"
    for name in SAMPLES:
        shutil.copy(str(folder / name), tmp_path / name)
    return tmp_path / "kestrel_phosphate_ph.csv"


def run_ph(args, capsys):
    status = main(["ph", *args])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def snapshot(folder):
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.is_file()}


def test_ph_writes_one_output_set(sample, capsys):
    out = sample.parent / "out"
    status, stdout, stderr = run_ph([str(sample), "--out", str(out)], capsys)
    assert status == 0, stderr
    assert sorted(p.name for p in out.iterdir()) == sorted(
        f"kestrel_phosphate_ph.{k}" for k in KINDS)
    record = json.loads((out / "kestrel_phosphate_ph.record.json").read_text(encoding="utf-8"))
    jsonschema.validate(record, record_schema())
    assert load_record(out / "kestrel_phosphate_ph.record.json")["record_kind"] == "ph"
    assert set(record["ph"]) >= {"value", "uncertainty", "expanded_uncertainty",
                                 "coverage_factor"}
    # the demo is built on pH 6.865 (Buck et al. 2002); its U is about 0.002
    assert abs(record["ph"]["value"] - 6.865) <= record["ph"]["expanded_uncertainty"]
    assert record["comparison"]["catalogue_ph"] == 6.865
    assert "Hydrogen gas" in stdout and "pH = 6.86" in stdout
    html = (out / "kestrel_phosphate_ph.report.html").read_text(encoding="utf-8")
    assert "<script" not in html and f'data-value="{record["ph"]["value"]!r}"' in html
    assert (out / "kestrel_phosphate_ph.acidity.png").read_bytes()[:4] == b"\x89PNG"


def rewrite(path, old, new):
    text = path.read_text(encoding="utf-8")
    assert old in text
    path.write_text(text.replace(old, new, 1), encoding="utf-8")


@pytest.mark.parametrize(("case", "file", "old", "new", "words"), [
    ("no chloride", "csv", "0.0050,KB-AgCl-21", "0,KB-AgCl-21",
     ("kestrel_phosphate_ph.csv", "line 5", "chloride_molality_mol_kg", "chloride")),
    ("no chloride column", "csv", "chloride_molality_mol_kg,", "molality_mol_kg,",
     ("kestrel_phosphate_ph.csv", "line 4", "chloride_molality_mol_kg")),
    ("electrode without E°", "csv", "0.0100,KB-AgCl-22", "0.0100,KB-AgCl-99",
     ("kestrel_phosphate_ph.csv", "line 8", "electrode", "KB-AgCl-99", "no E°")),
    ("negative ionic strength", "toml", "buffer_ionic_strength_mol_kg = 0.1",
     "buffer_ionic_strength_mol_kg = -0.1",
     ("kestrel_phosphate_ph.toml", "buffer_ionic_strength_mol_kg", "negative")),
    ("no E° source", "toml", 'calibration_batch = "kestrel_agcl_batch.csv"', "",
     ("kestrel_phosphate_ph.toml", "calibration_batch")),
])
def test_bad_input_one_line_exit_2_nothing_written(sample, capsys, case, file, old, new, words):
    rewrite(sample.with_suffix(f".{file}"), old, new)
    out = sample.parent / "out"
    before = snapshot(sample.parent)
    status, _, stderr = run_ph([str(sample), "--out", str(out)], capsys)
    assert status == 2, case
    assert len(stderr.strip().splitlines()) == 1 and "Traceback" not in stderr
    for word in words:
        assert word in stderr, (case, stderr)
    assert not out.exists()
    assert snapshot(sample.parent) == before


def test_negative_ionic_strength_on_the_command_line(sample, capsys):
    out = sample.parent / "out"
    status, _, stderr = run_ph([str(sample), "--out", str(out), "--ionic-strength-mol-kg",
                                "-0.05"], capsys)
    assert status == 2 and "--ionic-strength-mol-kg" in stderr and "negative" in stderr
    assert len(stderr.strip().splitlines()) == 1
    assert not out.exists()


def test_help_names_the_outputs_and_exit_statuses(capsys):
    assert main(["ph", "--help"]) == 0
    text = capsys.readouterr().out
    assert "NAME.record.json" in text and "exit status" in text


def test_an_e0_source_is_never_overwritten(sample, capsys):
    # a calibration record that sits where the output record would go is an input: refused
    from activolt.io.record import calibration_record_json
    from activolt.procedures.calibration import calibrate

    out = sample.parent / "out"
    out.mkdir()
    source = out / "kestrel_phosphate_ph.record.json"
    source.write_text(calibration_record_json(calibrate(sample.parent / "kestrel_agcl_batch.csv")),
                      encoding="utf-8")
    rewrite(sample.with_suffix(".toml"), 'calibration_batch = "kestrel_agcl_batch.csv"',
            'calibration_record = "out/kestrel_phosphate_ph.record.json"')
    before = source.read_bytes()
    status, _, stderr = run_ph([str(sample), "--out", str(out)], capsys)
    assert status == 2 and len(stderr.strip().splitlines()) == 1
    assert source.read_bytes() == before
    assert sorted(p.name for p in out.iterdir()) == ["kestrel_phosphate_ph.record.json"]


def test_ph_files_its_record_inputs_and_outputs_in_the_archive(sample, capsys):
    from activolt.io.archive import open_archive

    out, store = sample.parent / "out", sample.parent / "lab.sqlite"
    status, _, stderr = run_ph([str(sample), "--out", str(out), f"--archive={store}"], capsys)
    assert status == 0, stderr
    archive = open_archive(store)
    (entry,) = archive.find(kind="ph")
    record = json.loads((out / "kestrel_phosphate_ph.record.json").read_text(encoding="utf-8"))
    assert archive.record(entry.hash)["ph"] == record["ph"]
    assert archive.output(entry.hash, "report.html") == (
        out / "kestrel_phosphate_ph.report.html").read_bytes()
