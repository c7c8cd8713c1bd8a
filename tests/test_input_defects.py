"""Input defects found by user testing and fuzzing: each is refused in one line (exit status 2,
file/line/column named, nothing written) or read correctly.

Inputs: the demo run's readings (``sample_data/kestrel_hcl_25C.csv``, invented lab, HCl in the
Harned cell Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)), converted to volts. They are inputs, not
check values. Physical facts used in the checks, with their sources:

- E°(AgCl/Ag) = +0.22234 V at 25 °C (the electrode catalogue, Bates & Bower 1954), so the
  Harned cell's EMF is positive at 0.001–0.1 mol/kg and falls with molality (Harned & Owen
  1958, ch. 10: E = E° − (2RT/F) ln(m γ±)).
- The vapour pressure of water is 101.42 kPa at 100 °C and 51.3 kPa at 82 °C (IAPWS-95 /
  Wagner & Pruß 1993, from memory), so no hydrogen is left at 101.325 kPa and 50 kPa.
- 1 hPa = 100 Pa (SI); 1 mmHg (conventional) = 133.322387415 Pa (NIST SP 811, 2008, B.8).
- Everything about wording (one line, what to do) is common practice for command-line tools.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from test_cli_errors import ROWS_V, Case, _check_message, _snapshot, _write, good_rows, table

from activolt.cli import main
from activolt.data.runs import MAX_ROWS, read_run
from activolt.errors import InputError

HARNED = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
HARNED_TOML = f'cell = "{HARNED}"\ntemperature_C = 25.0\n'
HCL_TOML = 'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n'


def _refused(tmp_path: Path, case: Case, capsys: pytest.CaptureFixture[str]) -> str:
    """Run ``activolt reduce`` on the case; check exit 2, one line, nothing written."""
    run = tmp_path / "run.csv"
    if case.csv is not None:
        _write(run, case.csv)
    if case.toml is not None:
        _write(tmp_path / "run.toml", case.toml)
    before = _snapshot(tmp_path)
    capsys.readouterr()
    status = main(["reduce", str(run), "--no-figures", *[a.format(tmp=tmp_path)
                                                         for a in case.args]])
    captured = capsys.readouterr()
    lines = captured.err.splitlines()
    assert status == 2, captured.err
    assert len(lines) == 1, captured.err
    _check_message(lines[0], case, tmp_path)
    assert captured.out == ""
    assert _snapshot(tmp_path) == before
    return lines[0]


def _reduced(tmp_path: Path, csv: str, toml: str | None, *args: str,
             capsys: pytest.CaptureFixture[str]) -> str:
    """Run ``activolt reduce``; check exit 0 and return stderr."""
    _write(tmp_path / "run.csv", csv)
    if toml is not None:
        _write(tmp_path / "run.toml", toml)
    status = main(["reduce", str(tmp_path / "run.csv"), "--no-figures",
                   "--out", str(tmp_path / "out"), *args])
    captured = capsys.readouterr()
    assert status == 0, captured.err
    return captured.err


def _negated(rows: tuple[tuple[str, str], ...] = ROWS_V) -> list[str]:
    return [f"{m},-{e}" for m, e in rows]


REFUSED: dict[str, Case] = {
    # 1. polarity and slope against the cell diagram and the Nernst equation
    "every reading negated in a Harned cell": Case(
        csv=table("molality_mol_kg,emf_V", *_negated()), toml=HARNED_TOML, line=3,
        column="emf_V", says=(r"opposite sign", r"\+0\.5\d\d V", r"polarity")),
    "EMF rising with molality (no cell diagram)": Case(
        csv=table("molality_mol_kg,emf_V", *_negated()), toml=HCL_TOML, column="emf_V",
        says=(r"rises with molality", r"forms HCl", r"polarity", r"cell = ")),
    "the same EMF at every molality": Case(
        csv=table("molality_mol_kg,emf_V", *(f"{m},0.5" for m, _ in ROWS_V)), toml=HCL_TOML,
        column="emf_V", says=(r"hardly changes with molality", r"should change by about")),
    # 3. a partly filled u(EMF) column
    "u_emf_mV given on some rows only": Case(
        csv=table("molality_mol_kg,emf_V,u_emf_mV", "0.001,0.579126,0.02", "0.002,0.544211,",
                  "0.005,0.498344,0.02", "0.01,0.464176,0.02"),
        toml=HCL_TOML, line=4, column="u_emf_mV", says=(r"empty here", r"every reading")),
    # 6. every NaN spelling is missing, so a -nan uncertainty is an empty cell
    "u_emf_mV of -nan on one row": Case(
        csv=table("molality_mol_kg,emf_V,u_emf_mV", "0.001,0.579126,0.02",
                  "0.002,0.544211,0.02", "0.005,0.498344,-nan", "0.01,0.464176,0.02"),
        toml=HCL_TOML, line=5, column="u_emf_mV", says=(r"empty here",)),
    # 4. misleading messages
    "missing molality column names the columns found and the nearest": Case(
        csv=table("molality,emf_V", *good_rows()), toml=HCL_TOML, line=2,
        says=(r"'molality_mol_kg' is missing", r"comma as separator", r"'molality', 'emf_V'",
              r"is 'molality' meant to be 'molality_mol_kg'")),
    "hydrogen without its state": Case(
        csv=table("molality_mol_kg,emf_V", *good_rows()),
        toml='cell = "Pt | H2 | HCl(aq) | AgCl(s) | Ag(s)"\ntemperature_C = 25.0\n',
        names="toml", column="cell", says=(r"e\.g\. H2\(g\)",)),
    "pressure column in an unread unit with a gas cell": Case(
        csv=table("molality_mol_kg,emf_V,pressure_inHg", *good_rows("29.9")),
        toml=HARNED_TOML, line=2, column="pressure_inHg",
        says=(r"looks like a barometric pressure", r"pressure_kPa, pressure_hPa, pressure_mmHg")),
    "pressure in hPa out of range names the unit": Case(
        csv=table("molality_mol_kg,emf_V,pressure_hPa", *good_rows("101.3")),
        toml=HARNED_TOML, line=3, column="pressure_hPa",
        says=(r"101\.3 hPa \(10\.13 kPa\)", r"check the unit \(hPa\)")),
    "pressure key in an unread unit with a gas cell": Case(
        csv=table("molality_mol_kg,emf_V", *good_rows()),
        toml=HARNED_TOML + "pressure_hPa = 1013\n", names="toml", line=3,
        column="pressure_hPa", says=(r"pressure_kPa",)),
    # 5. tracebacks on valid or near-valid input
    "Harned cell at 100 °C with a barometer": Case(
        csv=table("molality_mol_kg,emf_V", *good_rows()),
        toml=f'cell = "{HARNED}"\ntemperature_C = 100\npressure_kPa = 101.325\n', line=3,
        says=(r"water vapour \(101\.4 kPa\) leaves no room for H2", r"101\.3 kPa")),
    "Harned cell at 82 °C and 50 kPa": Case(
        csv=table("molality_mol_kg,emf_V,pressure_kPa", *good_rows("50")),
        toml=f'cell = "{HARNED}"\ntemperature_C = 82\n', line=3, column="pressure_kPa",
        says=(r"water vapour \(51\.\d kPa\) leaves no room for H2",)),
    "--fix a_angstrom=inf": Case(
        toml=HCL_TOML, args=("--fix", "a_angstrom=inf"), names="command line",
        column="--fix", says=(r"a_angstrom", r"finite")),
    "--fix a_angstrom=1e308": Case(
        toml=HCL_TOML, args=("--fix", "a_angstrom=1e308"), names="command line",
        column="--fix", says=(r"outside its physical range",)),
    "--fix a_angstrom=-5": Case(
        toml=HCL_TOML, args=("--fix", "a_angstrom=-5"), names="command line",
        column="--fix", says=(r"outside its physical range",)),
    "--model with an unknown name in a list": Case(
        toml=HCL_TOML, args=("--model", "hueckel,nope"), names="command line",
        column="--model", says=(r"unknown model 'nope'", r"limiting, hueckel, davies")),
    "--electrons 1000": Case(
        toml=HCL_TOML, args=("--electrons", "1000"), names="command line",
        column="--electrons", says=(r"from 1 to 8", r"1000")),
    "a molality of 1e-320": Case(
        csv=table("molality_mol_kg,emf_V", "1e-320,0.9", *good_rows()), toml=HCL_TOML,
        line=3, column="molality_mol_kg", says=(r"implausibly small", r"mol/kg")),
    "molalities 1e-12 apart": Case(
        csv=table("molality_mol_kg,emf_V", "1e-07,0.7587833947112783",
                  "1.000000000001e-07,0.7587833947112311",
                  "1.0000000000019999e-07,0.7587833947111842"),
        toml=HCL_TOML, line=4, column="molality_mol_kg",
        says=(r"no weighing tells them apart", r"same value")),
    "an EMF of 5 V": Case(
        csv=table("molality_mol_kg,emf_V", "0.0005,5.0", *good_rows()), toml=HCL_TOML,
        line=3, column="emf_V", says=(r"implausible",)),
    # 7. fields longer than the csv module's limit
    "a field of 200 000 characters": Case(
        csv=table("molality_mol_kg,emf_V,note", *good_rows("x" * 200_000)), toml=HCL_TOML,
        line=3, says=(r"a field is too long \(200000 characters",)),
}


@pytest.mark.parametrize("name", list(REFUSED))
def test_refused_in_one_line(name, tmp_path, capsys):
    _refused(tmp_path, REFUSED[name], capsys)


# --- 1. legitimate cells of either sign are read -----------------------------------------

def test_a_cell_written_the_other_way_round_reduces(tmp_path, capsys):
    # consumes HCl: E = −(E° − k ln m±γ±), negative and rising with molality
    toml = 'cell = "Ag(s) | AgCl(s) | HCl(aq) | H2(g) | Pt"\ntemperature_C = 25.0\n'
    _reduced(tmp_path, table("molality_mol_kg,emf_V", *_negated()), toml, capsys=capsys)
    record = next((tmp_path / "out").glob("*.record.json")).read_text(encoding="utf-8")
    # E° of the reversed cell is −E°(AgCl/Ag) ≈ −0.222 V (Bates & Bower 1954): the sign kept
    assert re.search(r'"standard_potential_V": \{\s*"value": -0\.22', record), record[:2000]


def test_a_negative_emf_that_falls_with_molality_is_read(tmp_path):
    # readings shifted by −0.7 V: a cell of negative E° forming HCl (no diagram)
    _write(tmp_path / "run.csv", table("molality_mol_kg,emf_V",
                                       *(f"{m},{float(e) - 0.7:.6f}" for m, e in ROWS_V)))
    _write(tmp_path / "run.toml", HCL_TOML)
    run = read_run(tmp_path / "run.csv")
    assert (run.points["emf_V"] < 0).all()


# --- 2. a cell diagram on the command line is metadata enough ----------------------------

def test_cell_on_the_command_line_replaces_the_metadata_file(tmp_path, capsys):
    csv = table("molality_mol_kg,emf_V", *good_rows())
    _reduced(tmp_path, csv, None, "--cell", HARNED, "--temperature-C", "25", capsys=capsys)


def test_no_metadata_lists_every_way(tmp_path, capsys):
    case = Case(csv=table("molality_mol_kg,emf_V", *good_rows()), toml=None,
                says=(r"no metadata", r"--meta FILE", r"--cell DIAGRAM", r"--electrolyte",
                      r"--electrons", r"--temperature-C"))
    _refused(tmp_path, case, capsys)


# --- 4. separators, names and units that used to mislead -------------------------------

def test_tab_separated_table_is_read(tmp_path):
    _write(tmp_path / "run.csv", table("molality_mol_kg\temf_V",
                                       *(f"{m}\t{e}" for m, e in ROWS_V)))
    _write(tmp_path / "run.toml", HCL_TOML)
    run = read_run(tmp_path / "run.csv")
    assert run.points["emf_V"].tolist() == pytest.approx([float(e) for _, e in ROWS_V])


def test_spreadsheet_trailing_semicolons_are_ignored(tmp_path):
    rows = [f"{m.replace('.', ',')};{e.replace('.', ',')};;" for m, e in ROWS_V]
    _write(tmp_path / "run.csv", table("molality_mol_kg;emf_V;;", *rows))
    _write(tmp_path / "run.toml", HCL_TOML)
    run = read_run(tmp_path / "run.csv")
    assert run.points["molality_mol_kg"].tolist() == pytest.approx([float(m) for m, _ in ROWS_V])
    assert run.warnings == ()


def test_documented_column_names_in_any_case(tmp_path):
    _write(tmp_path / "run.csv", table("Molality_mol_kg,EMF_V", *good_rows()))
    _write(tmp_path / "run.toml", HCL_TOML)
    run = read_run(tmp_path / "run.csv")
    assert len(run.points) == len(ROWS_V) and run.warnings == ()


@pytest.mark.parametrize(("column", "value", "pascals"), [
    ("pressure_hPa", "1013.25", 101_325.0),                # 1 hPa = 100 Pa (SI)
    ("pressure_mmHg", "760", 760 * 133.322387415),         # NIST SP 811 (2008), B.8
    ("pressure_kPa", "101.325", 101_325.0),
])
def test_pressure_in_hpa_and_mmhg_is_converted(tmp_path, column, value, pascals):
    _write(tmp_path / "run.csv", table(f"molality_mol_kg,emf_V,{column}", *good_rows(value)))
    _write(tmp_path / "run.toml", HARNED_TOML)
    run = read_run(tmp_path / "run.csv")
    assert run.points["pressure_Pa"].tolist() == pytest.approx([pascals] * len(ROWS_V),
                                                               rel=1e-12)


# --- 5. near-valid input that used to raise ----------------------------------------------

def test_a_hair_below_zero_celsius_is_the_ice_point(tmp_path, capsys):
    toml = 'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = -1e-10\n'
    _reduced(tmp_path, table("molality_mol_kg,emf_V", *good_rows()), toml, capsys=capsys)


def test_molalities_a_hair_apart_never_raise(tmp_path, capsys):
    rows = [f"{0.01 + i * 1e-12!r},{0.464176 + i * 1e-6:.6f}" for i in range(5)]
    _write(tmp_path / "run.csv", table("molality_mol_kg,emf_V", *rows))
    _write(tmp_path / "run.toml", HCL_TOML)
    for model in ("hueckel", "limiting", "all"):
        status = main(["reduce", str(tmp_path / "run.csv"), "--no-figures", "--model", model,
                       "--out", str(tmp_path / f"out_{model}")])
        err = capsys.readouterr().err
        assert status in (0, 1, 2), err
        assert len(err.strip().splitlines()) >= 1 or status == 0
        if status != 0:
            assert not (tmp_path / f"out_{model}").exists()


def test_a_million_rows_are_refused(tmp_path, capsys):
    rows = "".join(f"{0.001 + i * 1e-9:.9f},0.5\n" for i in range(MAX_ROWS + 1))
    case = Case(csv=HEADER + "molality_mol_kg,emf_V\n" + rows, toml=HCL_TOML,
                says=(rf"more than the {MAX_ROWS}",))
    _refused(tmp_path, case, capsys)


HEADER = "# test run\n"


def test_endless_input_is_refused_without_reading_it_all(capsys):
    if not Path("/dev/zero").exists():
        pytest.skip("no /dev/zero")
    status = main(["reduce", "/dev/zero", "--electrolyte", "HCl", "--electrons", "1",
                   "--temperature-C", "25", "--no-figures", "--out", "/nonexistent/x"])
    err = capsys.readouterr().err
    assert status == 2 and "larger than" in err and len(err.splitlines()) == 1, err


# --- 6. NaN spellings --------------------------------------------------------------------

@pytest.mark.parametrize("spelling", ["nan", "-nan", "+nan", "NaN", "-NaN", "NAN", "#N/A"])
def test_every_nan_spelling_of_an_emf_is_a_missing_reading(tmp_path, spelling):
    rows = good_rows()
    rows[2] = f"{ROWS_V[2][0]},{spelling}"
    _write(tmp_path / "run.csv", table("molality_mol_kg,emf_V", *rows))
    _write(tmp_path / "run.toml", HCL_TOML)
    run = read_run(tmp_path / "run.csv")
    assert run.points["flag"].tolist()[2] == "no reading"
    assert run.points["flag"].isna().sum() == len(ROWS_V) - 1


def test_digit_group_underscores_are_not_numbers(tmp_path):
    rows = good_rows()
    rows[1] = "0.002,0.544_211"
    _write(tmp_path / "run.csv", table("molality_mol_kg,emf_V", *rows))
    _write(tmp_path / "run.toml", HCL_TOML)
    with pytest.raises(InputError, match="not a number") as caught:
        read_run(tmp_path / "run.csv")
    assert caught.value.line == 4


# --- 7. lines split on LF, CRLF and CR only ----------------------------------------------

@pytest.mark.parametrize("inside", ["\u2028", "\u2029", "\x0b", "\x0c", "\x1c", "\x1d", "\x1e",
                                    "\x85"])
def test_unicode_breaks_inside_a_field_do_not_split_the_line(tmp_path, inside):
    rows = good_rows(f"a{inside}b")
    rows[3] = f"{ROWS_V[3][0]},oops,a{inside}b"  # a bad EMF on file line 6
    _write(tmp_path / "run.csv", table("molality_mol_kg,emf_V,note", *rows))
    _write(tmp_path / "run.toml", HCL_TOML)
    with pytest.raises(InputError, match="not a number") as caught:
        read_run(tmp_path / "run.csv")
    assert caught.value.line == 6


@pytest.mark.parametrize("newline", ["\n", "\r\n", "\r"])
def test_line_numbers_with_each_line_end(tmp_path, newline):
    rows = good_rows()
    rows[3] = f"{ROWS_V[3][0]},oops"
    text = table("molality_mol_kg,emf_V", *rows).replace("\n", newline)
    _write(tmp_path / "run.csv", text)
    _write(tmp_path / "run.toml", HCL_TOML)
    with pytest.raises(InputError) as caught:
        read_run(tmp_path / "run.csv")
    assert caught.value.line == 6


# --- 8. the ice and steam points are exact ----------------------------------------------

@pytest.mark.parametrize(("celsius", "kelvin"), [("0", 273.15), ("100", 373.15),
                                                  ("-1e-10", 273.15), ("100.0000000001", 373.15),
                                                  ("24.999999999999996", 298.15)])
def test_celsius_to_kelvin_is_exact_at_the_ends(tmp_path, celsius, kelvin):
    # 0 °C = 273.15 K exactly (SI definition of the Celsius scale)
    _write(tmp_path / "run.csv", table("molality_mol_kg,emf_V,temperature_C",
                                       *good_rows(celsius)))
    _write(tmp_path / "run.toml", 'electrolyte = "HCl"\nelectrons = 1\n')
    run = read_run(tmp_path / "run.csv")
    assert run.points["temperature_K"].tolist() == [kelvin] * len(ROWS_V)


@pytest.mark.parametrize(("celsius", "rows"), [("0", 18), ("100", 6)])
def test_records_at_the_ice_and_steam_points_meet_their_schema(tmp_path, capsys, celsius,
                                                               rows):
    import json

    import jsonschema

    from activolt.io.record import record_schema
    from activolt.physics.water import debye_hueckel_aphi

    temperature_K = 273.15 + float(celsius)
    molality = np.geomspace(1e-4, 2e-3, rows)
    # E = E° − (2RT/F) ln(m γ±) with the limiting law ln γ± = −3 A_φ √m (inputs only)
    k = 2 * 8.314462618 * temperature_K / 96485.33212
    ln_gamma = -3 * float(debye_hueckel_aphi(temperature_K)) * np.sqrt(molality)
    noise = np.random.default_rng(1).normal(0.0, 2e-5, rows)  # 0.02 mV of scatter
    emf = 0.2 - k * (np.log(molality) + ln_gamma) + noise
    csv = table("molality_mol_kg,emf_V",
                *(f"{float(m)!r},{float(e)!r}" for m, e in zip(molality, emf, strict=True)))
    toml = f'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = {celsius}\n'
    _reduced(tmp_path, csv, toml, "--model", "limiting", capsys=capsys)
    record = json.loads(next((tmp_path / "out").glob("*.record.json")).read_text("utf-8"))
    jsonschema.validate(record, record_schema())
