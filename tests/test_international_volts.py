"""Runs written in international volts (before 1948) are reduced in absolute volts.

The factor: 1 V_int = 1.000330 V, the US international volt of the National Bureau of Standards
(NBS Circular 459, 1947; from memory; reference-values.md, "International volts"). So an E° of
0.22234 V_int is 0.22234 × 1.000330 = 0.222413 V (derived), 0.33 mV per volt higher.
"""

from __future__ import annotations

import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity.published import published_gamma
from activolt.constants import INTERNATIONAL_VOLT_V
from activolt.data.runs import read_run
from activolt.procedures.dilution import reduce_run
from activolt.report.text import format_report

# NBS Circular 459 (1947): 1 US international volt = 1.000330 absolute volt (from memory).
NBS_INTERNATIONAL_VOLT_V = 1.000330
E0_INTERNATIONAL_V = 0.22234   # an E° as a pre-1948 table would print it, in V_int
E0_ABSOLUTE_V = 0.222413       # 0.22234 × 1.000330 (derived from the factor above)


def test_factor_and_its_worked_example():
    assert INTERNATIONAL_VOLT_V == NBS_INTERNATIONAL_VOLT_V
    assert E0_INTERNATIONAL_V * INTERNATIONAL_VOLT_V == pytest.approx(E0_ABSOLUTE_V, abs=5e-7)
    # 0.33 mV per volt (derived)
    assert (INTERNATIONAL_VOLT_V - 1.0) * 1e3 == pytest.approx(0.33, abs=1e-9)


def _international_run(tmp_path, volt_unit: str | None):
    # HCl readings from the published γ± (Robinson & Stokes 1959, shipped table) at m ≤ 0.1,
    # with the absolute E° of 0.222413 V, written down in international volts as a 1933 paper
    # would print them. Inputs, not check values.
    table = published_gamma("HCl", 298.15)
    table = table[table.molality_mol_kg <= 0.1]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    emf_absolute = emf_from_gamma(m, gamma, E0_ABSOLUTE_V)
    path = write_run(tmp_path, m, emf_absolute / NBS_INTERNATIONAL_VOLT_V, u_emf_V=1e-5)
    if volt_unit is not None:
        meta = path.with_suffix(".toml")
        meta.write_text(meta.read_text() + f'volt_unit = "{volt_unit}"\n')
    return path, emf_absolute


def test_readings_are_converted_on_reading_and_the_run_says_so(tmp_path):
    path, emf_absolute = _international_run(tmp_path, "international")
    run = read_run(path)
    assert run.metadata.volt_unit == "international"
    np.testing.assert_allclose(run.points["emf_V"], emf_absolute, rtol=1e-12)
    # u(EMF) scales too: 1e-5 V_int is 1.000330e-5 V
    np.testing.assert_allclose(run.points["u_emf_V"], 1.000330e-5, rtol=1e-12)
    notes = [w for w in run.warnings if "international volts" in w]
    assert len(notes) == 1 and "1.000330" in notes[0] and "NBS" in notes[0]


def test_reduction_in_international_volts_gives_the_absolute_e0(tmp_path):
    path, _ = _international_run(tmp_path, "international")
    reduction = reduce_run(read_run(path), "hueckel")
    e0 = reduction.standard_potential
    # Within 0.02 mV of 0.222413 V; the unconverted value 0.22234 is 0.073 mV away.
    assert e0.nominal_value == pytest.approx(E0_ABSOLUTE_V, abs=2e-5)
    assert abs(e0.nominal_value - E0_INTERNATIONAL_V) > 5e-5
    assert any("international volts" in w for w in reduction.warnings)
    text = format_report(reduction)
    assert "international volts" in text


def test_same_numbers_read_as_absolute_volts_miss_the_absolute_e0(tmp_path):
    folder_a, folder_b = tmp_path / "a", tmp_path / "b"
    folder_a.mkdir()
    folder_b.mkdir()
    as_int, _ = _international_run(folder_a, "international")
    as_abs, _ = _international_run(folder_b, None)  # absolute is the default
    assert read_run(as_abs).metadata.volt_unit == "absolute"
    assert not any("international volts" in w for w in read_run(as_abs).warnings)
    e0_int = reduce_run(read_run(as_int), "hueckel").standard_potential
    e0_abs = reduce_run(read_run(as_abs), "hueckel").standard_potential
    # Converted: the absolute E° within 0.02 mV. Not converted: off by more than the 0.33 mV per
    # volt of E° itself (0.073 mV), since each unconverted reading also keeps (f − 1) k ln m, a
    # term that does not vanish in the extrapolation to m → 0 (derived).
    assert abs(e0_int.nominal_value - E0_ABSOLUTE_V) < 2e-5
    assert E0_ABSOLUTE_V - e0_abs.nominal_value > 0.33e-3 * E0_ABSOLUTE_V
    assert E0_ABSOLUTE_V - e0_abs.nominal_value > 3 * e0_abs.std_dev


@pytest.mark.parametrize("value", ['"International"', '"volts"', "1.00033", "true"])
def test_invalid_volt_unit_is_an_input_error_naming_the_key(tmp_path, value):
    from activolt.errors import InputError

    path, _ = _international_run(tmp_path, None)
    meta = path.with_suffix(".toml")
    meta.write_text(meta.read_text() + f"volt_unit = {value}\n")
    with pytest.raises(InputError, match="volt_unit") as error:
        read_run(path)
    assert error.value.column == "volt_unit"
    assert error.value.line == 4


def test_command_line_volt_unit(tmp_path, capsys):
    from activolt.cli import main

    path, _ = _international_run(tmp_path, None)
    out = tmp_path / "out"
    assert main(["reduce", str(path), "--volt-unit", "kilo", "--out", str(out),
                 "--no-figures"]) == 2
    error = capsys.readouterr().err.strip()
    assert "\n" not in error and "--volt-unit" in error and "volt_unit must be" in error
    assert not out.exists()
    assert main(["reduce", str(path), "--volt-unit", "international", "--out", str(out),
                 "--no-figures"]) == 0
    record = (out / "run.record.json").read_text(encoding="utf-8")
    assert "international volts" in record
