"""The outputs of ``activolt calibrate``: the command end to end on a synthetic batch, the
record and its schema, the HTML certificate (every field ISO/IEC 17025:2017 7.8 asks of a
calibration certificate, its numbers those of the record), the electrodes and points tables,
the control chart with ``--history``, text from the user made inert, bad input refused.

Synthetic data, built here: eight Ag|AgCl electrodes, each read three times against a
hydrogen electrode in 0.01 mol/kg HCl at 25 °C; the readings are made from each electrode's
"true" E° (0.22216 V on the 100 kPa basis, from memory, plus an offset of its own) with the
conventional γ± = 0.904 (Buck et al. 2002, Pure Appl. Chem. 74, 2169, the IUPAC pH
recommendations), the reading moved to the hydrogen partial pressure left at the day's
barometric pressure, and seeded Gaussian noise of 0.01 mV. One electrode is 0.35 mV high and
the tolerance is 0.1 mV about the batch median, so it must fail and the others pass. The
checks are round trips (the truth the readings were built from) and the contract of the
outputs; no literature value is checked here.
"""

from __future__ import annotations

import csv
import hashlib
import html.parser
import io
import json
import math
import re
from importlib.resources import files
from pathlib import Path

import jsonschema
import numpy as np
import pytest

from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
from activolt.cli import main
from activolt.io.record import load_record, record_schema
from activolt.physics.corrections import hydrogen_partial_pressure, hydrogen_pressure_correction
from activolt.report.certificate import certificate_id

E0_V = 0.22216  # Ag|AgCl on the 100 kPa basis (from memory); only the truth of the round trip
GAMMA_CONVENTIONAL = 0.904  # Buck et al. (2002): 0.01 mol/kg HCl, 25 °C
MOLALITY = 0.01
TEMPERATURE_K = 298.15
NOISE_V = 0.01e-3
ELECTRODES = tuple(f"KB-AgCl-{n}" for n in range(21, 29))
HIGH = "KB-AgCl-26"
PNG = b"\x89PNG\r\n\x1a\n"


def metadata(**extra: object) -> str:
    keys = {
        "cell": "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)",
        "temperature_C": 25.0, "standard_pressure_kPa": 100, "u_temperature_K": 0.02,
        "u_pressure_kPa": 0.03, "calibration_method": "hydrogen",
        "acceptance_tolerance_mV": 0.1, "acceptance_reference": "median",
        "decision_rule": "simple", "voltmeter_u_mV": 0.005,
        "lab": "Kestrel Bay Electrochemistry Laboratory", "operator": "R. Okonkwo-Lind",
        "instrument": "KB-DVM-2 electrometer", "date": "2026-11-25",
        "description": "batch KB-AgCl-21..28",
    }
    keys.update(extra)
    return "".join(f"{k} = {json.dumps(v, ensure_ascii=False)}\n" for k, v in keys.items())


def write_batch(folder: Path, stem: str = "batch", seed: int = 7,
                shifts_V: dict[str, float] | None = None, notes: dict[str, str] | None = None,
                electrodes: tuple[str, ...] = ELECTRODES, **meta: object
                ) -> tuple[Path, dict[str, float]]:
    """A batch table and its metadata; returns the table's path and each electrode's true E°."""
    shifts_V = {HIGH: 0.35e-3} if shifts_V is None else shifts_V
    notes = notes or {}
    rng = np.random.default_rng(seed)
    k = float(nernst_factor(parse_electrolyte("HCl"), 1, TEMPERATURE_K))
    offsets = np.random.default_rng(2026).normal(0.0, 0.02e-3, len(electrodes))
    truth, rows = {}, ["electrode,molality_mol_kg,emf_mV,u_emf_mV,pressure_kPa,note"]
    for name, offset in zip(electrodes, offsets, strict=True):
        truth[name] = E0_V + offset + shifts_V.get(name, 0.0)
        for _ in range(3):
            bar_kPa = round(101.6 + rng.normal(0.0, 0.05), 2)
            p_h2 = hydrogen_partial_pressure(TEMPERATURE_K, bar_kPa * 1e3)
            to_standard = float(hydrogen_pressure_correction(TEMPERATURE_K, p_h2, 1e5))
            emf = (truth[name] - k * math.log(MOLALITY * GAMMA_CONVENTIONAL) - to_standard
                   + rng.normal(0.0, NOISE_V))
            note = notes.get(name, "")
            rows.append(f"{name},{MOLALITY},{emf * 1e3:.5f},0.010,{bar_kPa:.2f},"
                        + (f'"{note}"' if note else ""))
    path = folder / f"{stem}.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / f"{stem}.toml").write_text(metadata(**meta), encoding="utf-8")
    return path, truth


class _Certificate(html.parser.HTMLParser):
    """The certificate's text, its results table (cells with their attributes) and its tags."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.text: list[str] = []
        self.tags: list[str] = []
        self.attributes: list[tuple[str, str | None]] = []
        self.rows: list[list[tuple[dict[str, str | None], str]]] = []
        self._in_results = self._in_style = False
        self._cell: dict[str, str | None] | None = None
        self._cell_text = ""

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attributes += attrs
        attributes = dict(attrs)
        if tag == "style":
            self._in_style = True
        if tag == "table" and attributes.get("id") == "results-table":
            self._in_results = True
        if self._in_results and tag == "tr":
            self.rows.append([])
        if self._in_results and tag == "td":
            self._cell, self._cell_text = attributes, ""

    def handle_endtag(self, tag):
        if tag == "style":
            self._in_style = False
        if tag == "table":
            self._in_results = False
        if tag == "td" and self._cell is not None:
            self.rows[-1].append((self._cell, self._cell_text.strip()))
            self._cell = None

    def handle_data(self, data):
        if not self._in_style:
            self.text.append(data)
        if self._cell is not None:
            self._cell_text += data


def parse_certificate(text: str) -> _Certificate:
    parser = _Certificate()
    parser.feed(text)
    parser.close()
    return parser


def run_calibrate(argv: list[str], capsys) -> tuple[int, str, str]:
    status = main(["calibrate", *argv])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


@pytest.fixture
def calibrated(tmp_path, capsys):
    path, truth = write_batch(tmp_path)
    out = tmp_path / "out"
    status, stdout, stderr = run_calibrate([str(path), "--out", str(out)], capsys)
    return status, stdout, stderr, out, truth


def test_a_failed_electrode_gives_exit_3_and_the_whole_output_set(calibrated):
    status, stdout, stderr, out, _ = calibrated
    assert status == 3, stderr
    assert sorted(p.name for p in out.iterdir()) == [
        "batch.certificate.html", "batch.electrodes.csv", "batch.points.csv",
        "batch.record.json"]
    assert "7 pass, 1 fail: KB-AgCl-26" in stdout
    for name in ELECTRODES:  # every electrode printed with its verdict
        line = next(line for line in stdout.splitlines() if line.strip().startswith(name))
        assert line.rstrip().endswith("fail" if name == HIGH else "pass")


def test_record_validates_and_gives_back_the_truth(calibrated):
    _, _, _, out, truth = calibrated
    record = load_record(out / "batch.record.json")
    jsonschema.validate(record, record_schema())
    assert record["record_kind"] == "calibration"
    assert record["input"]["file"] == "../batch.csv"
    assert record["input"]["sha256"] == hashlib.sha256(
        (out.parent / "batch.csv").read_bytes()).hexdigest()
    assert record["acceptance"]["tolerance_V"] == pytest.approx(1e-4)
    assert record["acceptance"]["reference"] == "median"
    assert record["acceptance"]["decision_rule"] == "simple"
    assert record["all_pass"] is False
    assert [e["electrode"] for e in record["electrodes"]] == list(ELECTRODES)
    for entry in record["electrodes"]:
        assert entry["verdict"] == ("fail" if entry["electrode"] == HIGH else "pass")
        value = entry["standard_potential_V"]["value"]
        # round trip: within U of the E° the readings were built from
        assert abs(value - truth[entry["electrode"]]) <= entry["expanded_uncertainty_V"]
        assert entry["expanded_uncertainty_V"] == pytest.approx(
            entry["coverage_factor"] * entry["standard_potential_V"]["uncertainty"])
    median = float(np.median([e["standard_potential_V"]["value"]
                              for e in record["electrodes"]]))
    high = next(e for e in record["electrodes"] if e["electrode"] == HIGH)
    assert high["deviation_V"] == pytest.approx(high["standard_potential_V"]["value"] - median)


def test_schema_keeps_each_kind_apart(calibrated):
    """The calibration keys are required of a calibration record; a record without a kind is
    a reduction and needs the reduction's keys."""
    record = json.loads((calibrated[3] / "batch.record.json").read_text(encoding="utf-8"))
    schema = record_schema()
    without = {k: v for k, v in record.items() if k != "electrodes"}
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(without, schema)
    no_kind = {k: v for k, v in record.items() if k != "record_kind"}
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(no_kind, schema)
    bad_verdict = json.loads(json.dumps(record))
    bad_verdict["electrodes"][0]["verdict"] = "maybe"
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(bad_verdict, schema)


def test_certificate_holds_every_field_and_the_records_numbers(calibrated):
    _, _, _, out, _ = calibrated
    record_bytes = (out / "batch.record.json").read_bytes()
    record = json.loads(record_bytes)
    text = (out / "batch.certificate.html").read_text(encoding="utf-8")
    page = parse_certificate(text)
    shown = " ".join(" ".join(page.text).split())
    ident = certificate_id(hashlib.sha256(record_bytes).hexdigest())
    # ISO/IEC 17025:2017 7.8.2.1 and 7.8.4.1, field by field
    for field in ("Calibration certificate", "Kestrel Bay Electrochemistry Laboratory",
                  ident, "Customer", "Items calibrated", "batch KB-AgCl-21..28",
                  "Date of calibration 2026-11-25",
                  f"Date of issue {record['created_utc'][:10]}", "Method hydrogen",
                  "Temperature 25.00 °C", "Barometric pressure", "Results", "U / mV", "k",
                  "Statement of conformity", "7 of 8 electrodes conform",
                  "Decision rule simple", record["acceptance"]["rule"],
                  "Metrological traceability", "Authorisation",
                  "Calibrated by R. Okonkwo-Lind", "Approved by"):
        assert field in shown, field
    for name in ELECTRODES:
        assert name in shown
    assert "@page" in text and "size: A4" in text and "counter(page)" in text
    # self-contained: no script, no reference to anything outside the file
    assert "script" not in page.tags
    assert not [a for a in page.attributes if a[0] in ("src", "href")]
    assert "url(" not in text and "@import" not in text
    # the numbers are the record's
    rows = [row for row in page.rows if row]  # the header row has no td
    assert len(rows) == len(record["electrodes"])
    for row, entry in zip(rows, record["electrodes"], strict=True):
        cells = {attrs.get("data-quantity"): (attrs, value) for attrs, value in row}
        assert row[0][1] == entry["electrode"]
        for quantity, scale in (("standard_potential_V", 1e3), ("expanded_uncertainty_V", 1e3),
                                ("deviation_V", 1e3), ("coverage_factor", 1.0)):
            attrs, value = cells[quantity]
            number = (entry["standard_potential_V"]["value"]
                      if quantity == "standard_potential_V" else entry[quantity])
            assert float(attrs["data-value"]) == number
            places = len(value.split(".")[1]) if "." in value else 0
            assert abs(float(value) - number * scale) <= 0.5 * 10.0**-places + 1e-12
        assert cells["verdict"][1] == entry["verdict"]


def test_points_and_electrodes_tables(calibrated):
    _, _, _, out, _ = calibrated
    record = json.loads((out / "batch.record.json").read_text(encoding="utf-8"))
    rows = list(csv.DictReader(io.StringIO((out / "batch.electrodes.csv").read_text(
        encoding="utf-8"))))
    assert [r["electrode"] for r in rows] == list(ELECTRODES)
    for row, entry in zip(rows, record["electrodes"], strict=True):
        assert float(row["potential_mV"]) == pytest.approx(
            entry["standard_potential_V"]["value"] * 1e3, rel=1e-9)
        assert float(row["expanded_uncertainty_mV"]) == pytest.approx(
            entry["expanded_uncertainty_V"] * 1e3, rel=1e-9)
        assert row["verdict"] == entry["verdict"]
    points = list(csv.DictReader(io.StringIO((out / "batch.points.csv").read_text(
        encoding="utf-8"))))
    assert len(points) == 3 * len(ELECTRODES)
    assert {p["electrode"] for p in points} == set(ELECTRODES)


def test_user_text_is_inert_in_certificate_and_tables(tmp_path, capsys):
    script = '<script>alert("x")</script>'
    formula = '=HYPERLINK("http://example.invalid","click")'
    names = ("@SUM(1)", *ELECTRODES[1:])
    path, _ = write_batch(tmp_path, electrodes=names, shifts_V={},
                          notes={"@SUM(1)": "=1+2"}, description=script, operator=formula,
                          lab=f"Kestrel {script}")
    out = tmp_path / "out"
    status, _, stderr = run_calibrate([str(path), "--out", str(out)], capsys)
    assert status == 0, stderr
    text = (out / "batch.certificate.html").read_text(encoding="utf-8")
    page = parse_certificate(text)
    assert "script" not in page.tags
    assert "<script" not in text.lower()
    assert "&lt;script&gt;" in text
    shown = " ".join(page.text)
    assert script in shown and formula in shown  # shown as text, as given
    assert not [a for a in page.attributes if a[0] in ("src", "href")]
    electrodes = (out / "batch.electrodes.csv").read_text(encoding="utf-8")
    assert "\n'@SUM(1)," in electrodes
    points = list(csv.DictReader(io.StringIO((out / "batch.points.csv").read_text(
        encoding="utf-8"))))
    assert {p["electrode"] for p in points if "SUM" in p["electrode"]} == {"'@SUM(1)"}
    assert {p["note"] for p in points if p["note"]} == {"'=1+2"}


@pytest.mark.parametrize(("extra", "word"), [
    ({"acceptance_tolerance_mV": -0.1}, "acceptance_tolerance_mV"),
    ({"acceptance_tolerance_mV": 0}, "acceptance_tolerance_mV"),
    ({"decision_rule": "lenient"}, "decision_rule"),
    ({"calibration_method": "master"}, "master_potential_mV"),
])
def test_bad_input_exit_2_and_nothing_written(tmp_path, capsys, extra, word):
    path, _ = write_batch(tmp_path, **extra)
    out = tmp_path / "out"
    before = sorted(p.name for p in tmp_path.iterdir())
    status, _, stderr = run_calibrate([str(path), "--out", str(out)], capsys)
    assert status == 2
    assert len(stderr.strip().splitlines()) == 1 and "Traceback" not in stderr
    assert word in stderr
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == before


def test_history_not_a_folder_is_bad_input(tmp_path, capsys):
    path, _ = write_batch(tmp_path)
    status, _, stderr = run_calibrate([str(path), "--out", str(tmp_path / "out"),
                                       "--history", str(tmp_path / "missing")], capsys)
    assert status == 2 and "--history" in stderr
    assert not (tmp_path / "out").exists()


def test_history_gives_control_charts_and_flags_a_jump(tmp_path, capsys):
    """Four earlier batches of the same electrodes, then one whose KB-AgCl-21 is 0.08 mV
    higher: within the tolerance (exit 0), but beyond the chart's 3σ limits (the batches
    differ by the noise only, about 0.006 mV), so its history is flagged."""
    archive = tmp_path / "archive"
    for i, month in enumerate(("07", "08", "09", "10")):
        path, _ = write_batch(tmp_path, stem=f"batch_2026_{month}", seed=100 + i, shifts_V={},
                              date=f"2026-{month}-01")
        status, _, stderr = run_calibrate([str(path), "--out", str(archive)], capsys)
        assert status == 0, stderr
    path, _ = write_batch(tmp_path, stem="batch_2026_11", seed=200,
                          shifts_V={"KB-AgCl-21": 0.08e-3}, date="2026-11-01")
    status, stdout, stderr = run_calibrate([str(path), "--out", str(archive), "--history",
                                            str(archive)], capsys)
    assert status == 0, stderr
    chart = archive / "batch_2026_11.control_chart.png"
    assert chart.read_bytes().startswith(PNG)
    record = load_record(archive / "batch_2026_11.record.json")
    jsonschema.validate(record, record_schema())
    history = record["history"]
    assert set(history) == set(ELECTRODES)
    assert re.search(r"history: KB-AgCl-21: .*control chart", stdout)
    flagged = {name for name, entry in history.items() if entry.get("flagged")}
    assert "KB-AgCl-21" in flagged
    # a rerun leaves the batch's own earlier record out of its history (same table)
    status, _, _ = run_calibrate([str(path), "--out", str(archive), "--history",
                                  str(archive)], capsys)
    assert status == 0
    rerun = load_record(archive / "batch_2026_11.record.json")
    assert len(rerun["history"]["KB-AgCl-22"]["values_V"]) == 5


def test_help_names_the_exit_statuses(capsys):
    status = main(["calibrate", "--help"])
    out = capsys.readouterr().out
    assert status == 0
    assert re.search(r"^\s*3\s+at least one electrode fails", out, re.MULTILINE)
    assert re.search(r"^\s*2\s+bad input", out, re.MULTILINE)


def test_history_too_short_for_a_chart_says_so(tmp_path, capsys):
    archive = tmp_path / "archive"
    path, _ = write_batch(tmp_path, stem="first", shifts_V={}, date="2026-10-01")
    assert run_calibrate([str(path), "--out", str(archive)], capsys)[0] == 0
    path, _ = write_batch(tmp_path, stem="second", seed=8, shifts_V={}, date="2026-11-01")
    status, stdout, _ = run_calibrate([str(path), "--out", str(archive), "--history",
                                       str(archive)], capsys)
    assert status == 0
    assert "no control chart" in stdout
    assert not (archive / "second.control_chart.png").exists()
    record = load_record(archive / "second.record.json")
    assert len(record["history"]["KB-AgCl-21"]["values_V"]) == 2


def test_the_bundled_demo_batch_shows_a_failure(tmp_path, capsys):
    """The demo batch is made with KB-AgCl-26 0.35 mV high (make_calibration_batch.py): it
    must be the one electrode that fails (regression pin of the demo's design)."""
    batch = Path(str(files("activolt") / "sample_data" / "kestrel_agcl_batch.csv"))
    status, stdout, stderr = run_calibrate([str(batch), "--out", str(tmp_path / "demo")],
                                           capsys)
    assert status == 3, stderr
    assert "7 pass, 1 fail: KB-AgCl-26" in stdout
    page = (tmp_path / "demo" / "kestrel_agcl_batch.certificate.html").read_text(
        encoding="utf-8")
    assert "Kestrel Bay Electrochemistry Laboratory" in page
    # customer and approver come from the metadata keys (ISO/IEC 17025:2017 7.8.2.1)
    assert "pH standards group (internal)" in page and "M. Vasquez-Hale" in page
    assert "not stated in the metadata" not in page


def test_control_chart_draws_centre_limits_and_flags():
    """The figure shows the chart the library computed: centre line, ±3σ limits, and the
    points at which a rule fires circled."""
    from activolt.procedures.calibration import electrode_history
    from activolt.report.figures import plot_control_chart

    values_mV = (222.150, 222.156, 222.148, 222.153, 222.151, 222.230)
    records = [{"date": f"2026-0{i + 1}-01",
                "electrodes": [{"electrode": "KB-AgCl-21",
                                "standard_potential_V": {"value": v * 1e-3,
                                                         "uncertainty": 5e-6}}]}
               for i, v in enumerate(values_mV)]
    history = electrode_history(records)["KB-AgCl-21"]
    chart = history.chart
    assert chart is not None and chart.out_of_control
    ax = plot_control_chart(history)
    horizontal = sorted({round(float(line.get_ydata()[0]), 9) for line in ax.get_lines()
                         if len(set(np.atleast_1d(line.get_ydata()))) == 1
                         and len(line.get_xdata()) == 2})
    assert horizontal == sorted(round(x * 1e3, 9) for x in (
        chart.lower_limit_V, chart.centre_V, chart.upper_limit_V))
    flagged = next(line for line in ax.get_lines() if str(line.get_label()).startswith(
        "flagged"))
    indices = sorted({i for at in chart.violations.values() for i in at})
    assert list(flagged.get_xdata()) == indices
    assert 5 in indices
    assert list(flagged.get_ydata()) == pytest.approx([values_mV[i] for i in indices])
