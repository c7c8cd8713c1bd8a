"""The JSON record: schema, contents, and that it says how each uncertainty was obtained.

Contract: shared/design.md ("The JSON record"); schema: src/activolt/io/record_schema.json.
Check values are behaviours of the contract (common practice for archival records: inputs
identified by SHA-256, NaN written as null).
"""

from __future__ import annotations

import hashlib
import json

import jsonschema
import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity.published import published_gamma
from activolt.data.runs import read_run
from activolt.io.record import build_record, points_csv, record_json, record_schema
from activolt.procedures.dilution import reduce_run


@pytest.fixture(scope="module")
def reduction(tmp_path_factory):
    folder = tmp_path_factory.mktemp("record")
    table = published_gamma("HCl", 298.15)
    table = table[table.molality_mol_kg <= 1.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    emf = emf_from_gamma(m, gamma, 0.22234)  # E°: Bates & Bower (1954), Table 1
    path = write_run(folder, m, emf, u_emf_V=2e-5)
    text = path.read_text().splitlines()
    text.insert(3, "0.007,nan,2e-05")  # a lost reading: kept and flagged
    path.write_text("\n".join(text) + "\n")
    return reduce_run(read_run(path))


def test_record_validates_against_its_schema(reduction):
    record = json.loads(record_json(reduction))
    jsonschema.validate(record, record_schema())
    assert record["record_schema"] == "activolt-record/1"


def test_record_contents(reduction):
    record = build_record(reduction)
    assert record["input"]["sha256"] == hashlib.sha256(
        reduction.run.path.read_bytes()).hexdigest()
    assert record["electrolyte"] == "HCl" and record["electrons"] == 1
    assert record["temperature_K"] == pytest.approx(298.15)
    assert record["standard_pressure_kPa"] == 100.0
    e0 = record["standard_potential_V"]
    assert e0["value"] == pytest.approx(reduction.standard_potential.nominal_value)
    assert e0["uncertainty"] > 0 and reduction.statistics.covariance_note in e0["method"]
    assert len(record["points"]) == 8  # seven readings and the flagged row
    left_out = [p for p in record["points"] if not p["used_in_fit"]]
    assert len(left_out) == 1 and left_out[0]["emf_V"] is None
    assert left_out[0]["gamma_pm"] is None and left_out[0]["flag"] == "no reading"
    assert all(p["flag"] for p in record["points"] if p["leverage"] is None)
    budget = record["uncertainty_budget"]
    assert budget["combined_u_V"] == pytest.approx(
        sum(line["u_V"] ** 2 for line in budget["lines"]) ** 0.5, rel=1e-6)
    assert any("no reading" in w for w in record["warnings"])
    assert record["fit"]["dof"] == record["fit"]["n_points"] - record["fit"]["n_free"]
    assert set(record["model"]["parameters"]) == {"a_angstrom", "b_kg_mol"}
    # ΔG° = −nFE° (IUPAC Green Book 2007, §2.13).
    assert record["delta_g_kJ_mol"]["value"] == pytest.approx(
        -96485.33212 * e0["value"] / 1e3, rel=1e-9)
    assert record["cautions"], "an HCl / hydrogen cell must carry the safety cautions"


def test_points_csv_keeps_every_row_with_units_in_names(reduction):
    import io

    import pandas as pd

    table = pd.read_csv(io.StringIO(points_csv(reduction)), keep_default_na=False,
                        na_values=[""])
    assert len(table) == 8
    assert {"molality_mol_kg", "emf_mV", "gamma_pm", "u_gamma_pm", "flag"} <= set(table.columns)
    usable = table[table["gamma_pm"].notna()]
    np.testing.assert_allclose(usable["emf_mV"],
                               reduction.points["emf_V"].dropna().to_numpy() * 1e3)


def test_a_record_reads_back_and_round_trips(reduction, tmp_path):
    """What a lab archives comes back as it was built (regression of the round trip), and a
    file that is not a record is refused with its reason."""
    from activolt.errors import InputError
    from activolt.io.record import load_record, record_json

    text = record_json(reduction)
    path = tmp_path / "run.record.json"
    path.write_text(text, encoding="utf-8")
    assert load_record(path) == json.loads(text)
    assert load_record(text)["standard_potential_V"]["value"] == pytest.approx(
        reduction.standard_potential.nominal_value)
    path.write_text('{"record_schema": "something-else"}', encoding="utf-8")
    with pytest.raises(InputError, match="not an activolt-record/1 record"):
        load_record(path)
