"""Reading good runs: the accepted variants of the run-table and metadata contracts.

Sources: the run-table (CSV) and metadata (TOML) contracts in ``shared/design.md`` and the
accepted behaviour of the input-handling issue. Unit conversions: 0 °C = 273.15 K (SI
definition of the Celsius scale) and 1 mV = 1e-3 V. The readings are the demo run's
(``sample_data/kestrel_hcl_25C.csv``, invented lab); they are inputs, not check values.
Separators, BOM, CRLF and comment lines are how spreadsheet programs and people write CSV:
common practice.
"""

from __future__ import annotations

import hashlib
import math
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from activolt.data.runs import read_run, usable_points

ZERO_CELSIUS_K = 273.15  # SI: T/K = t/°C + 273.15
TOML = 'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.0\n'
#: Demo readings (invented lab): molality [mol/kg], EMF [mV]
ROWS_MV = ((0.001, 579.126), (0.002, 544.211), (0.005, 498.344), (0.01, 464.176),
           (0.02, 430.288))


def write(path: Path, content: str | bytes) -> Path:
    """Write ``content`` exactly as given (no newline translation); returns ``path``."""
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    return path


def run_files(folder: Path, csv: str | bytes, toml: str | None = TOML,
              stem: str = "run") -> Path:
    if toml is not None:
        write(folder / f"{stem}.toml", toml)
    return write(folder / f"{stem}.csv", csv)


def plain_csv(newline: str = "\n") -> str:
    lines = ["molality_mol_kg,emf_mV", *(f"{m},{e}" for m, e in ROWS_MV)]
    return newline.join(lines) + newline


def expected_emf_V() -> list[float]:
    return [e * 1e-3 for _, e in ROWS_MV]


def test_plain_table(tmp_path):
    run = read_run(run_files(tmp_path, plain_csv()))
    assert run.points["molality_mol_kg"].tolist() == [m for m, _ in ROWS_MV]
    assert run.points["emf_V"].tolist() == pytest.approx(expected_emf_V(), rel=1e-12)
    assert run.points["line"].tolist() == [2, 3, 4, 5, 6]
    assert run.points["temperature_K"].tolist() == pytest.approx([25.0 + ZERO_CELSIUS_K] * 5)
    assert run.points["flag"].isna().all()
    assert run.warnings == ()
    assert run.metadata.electrolyte.formula == "HCl"
    assert run.metadata.electrons == 1


def test_semicolon_separator_with_decimal_commas(tmp_path):
    text = "molality_mol_kg;emf_mV;note\n" + "".join(
        f"{str(m).replace('.', ',')};{str(e).replace('.', ',')};a, b\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert run.points["molality_mol_kg"].tolist() == [m for m, _ in ROWS_MV]
    assert run.points["emf_V"].tolist() == pytest.approx(expected_emf_V(), rel=1e-12)
    assert set(run.points["note"]) == {"a, b"}  # a comma inside a field is text, not a split


def test_semicolon_separator_with_decimal_points(tmp_path):
    text = plain_csv().replace(",", ";")
    run = read_run(run_files(tmp_path, text))
    assert run.points["emf_V"].tolist() == pytest.approx(expected_emf_V(), rel=1e-12)


def test_utf8_byte_order_mark(tmp_path):
    run = read_run(run_files(tmp_path, b"\xef\xbb\xbf" + plain_csv().encode("utf-8")))
    assert run.warnings == ()  # the first column name is not spoiled by the mark
    assert run.points["molality_mol_kg"].tolist() == [m for m, _ in ROWS_MV]


def test_byte_order_mark_in_metadata(tmp_path):
    write(tmp_path / "run.toml", b"\xef\xbb\xbf" + TOML.encode("utf-8"))
    run = read_run(run_files(tmp_path, plain_csv(), toml=None))
    assert run.metadata.temperature_K == pytest.approx(25.0 + ZERO_CELSIUS_K)


def test_crlf_line_endings(tmp_path):
    text = "# comment\r\nmolality_mol_kg,emf_mV,note\r\n" + "".join(
        f"{m},{e},n{i}\r\n" for i, (m, e) in enumerate(ROWS_MV))
    run = read_run(run_files(tmp_path, text))
    assert run.points["emf_V"].tolist() == pytest.approx(expected_emf_V(), rel=1e-12)
    assert run.points["note"].tolist() == [f"n{i}" for i in range(len(ROWS_MV))]  # no "\r"
    assert run.points["line"].tolist() == [3, 4, 5, 6, 7]


def test_comment_and_blank_lines_anywhere(tmp_path):
    text = ("# lab: Kestrel Bay (invented)\n\n"
            "molality_mol_kg,emf_mV\n"
            "# first block\n"
            f"{ROWS_MV[0][0]},{ROWS_MV[0][1]}\n"
            "\n   \n"
            f"{ROWS_MV[1][0]},{ROWS_MV[1][1]}\n"
            "   # indented comment, 1,2\n"
            + "".join(f"{m},{e}\n" for m, e in ROWS_MV[2:])
            + "# end\n\n")
    run = read_run(run_files(tmp_path, text))
    assert len(run.points) == len(ROWS_MV)
    assert run.points["emf_V"].tolist() == pytest.approx(expected_emf_V(), rel=1e-12)
    # line numbers are those of the file, so messages point at the right line
    assert run.points["line"].tolist() == [5, 8, 10, 11, 12]


def test_emf_in_volts_and_millivolts_agree(tmp_path):
    volts = "molality_mol_kg,emf_V\n" + "".join(f"{m},{e / 1000:.6f}\n" for m, e in ROWS_MV)
    in_V = read_run(run_files(tmp_path / "V", volts))
    in_mV = read_run(run_files(tmp_path / "mV", plain_csv()))
    assert in_V.points["emf_V"].tolist() == pytest.approx(in_mV.points["emf_V"].tolist(),
                                                          rel=1e-12)


def test_negative_emf_is_accepted(tmp_path):
    # a cell of negative E° has E < 0 and still falls with molality when it forms the
    # electrolyte (the readings shifted by −1 V: inputs, not check values)
    text = "molality_mol_kg,emf_mV\n" + "".join(f"{m},{e - 1000}\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert run.points["emf_V"].tolist() == pytest.approx([e - 1 for e in expected_emf_V()])


def test_negative_emf_of_a_cell_written_the_other_way_round_is_accepted(tmp_path):
    # the Harned cell written right to left consumes HCl: E = −(E° − k ln m±γ±) < 0
    text = "molality_mol_kg,emf_mV\n" + "".join(f"{m},{-e}\n" for m, e in ROWS_MV)
    toml = 'cell = "Ag(s) | AgCl(s) | HCl(aq) | H2(g) | Pt(s)"\ntemperature_C = 25.0\n'
    run = read_run(run_files(tmp_path, text, toml))
    assert run.metadata.electrolyte_sign == -1
    assert run.points["emf_V"].tolist() == pytest.approx([-e for e in expected_emf_V()])


@pytest.mark.parametrize(("column", "value", "kelvin"),
                         [("temperature_C", "30.0", 303.15), ("temperature_K", "303.15", 303.15)])
def test_per_row_temperature_wins_over_the_metadata(tmp_path, column, value, kelvin):
    rows = [f"{m},{e},{value}" for m, e in ROWS_MV[:-1]] + [f"{ROWS_MV[-1][0]},{ROWS_MV[-1][1]},"]
    run = read_run(run_files(tmp_path, f"molality_mol_kg,emf_mV,{column}\n" + "\n".join(rows)))
    assert run.metadata.temperature_K == pytest.approx(25.0 + ZERO_CELSIUS_K)
    # rows with a value keep it; the row with an empty cell takes the metadata's
    assert run.points["temperature_K"].tolist() == pytest.approx(
        [kelvin] * (len(ROWS_MV) - 1) + [25.0 + ZERO_CELSIUS_K])


@pytest.mark.parametrize(("where", "text"), [
    ("metadata", 'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 0.0\n'),
    ("metadata", 'electrolyte = "HCl"\nelectrons = 1\ntemperature_K = 273.15\n'),
    ("row", None),
])
def test_ice_point_is_liquid_water(tmp_path, where, text):
    # 0 °C is inside liquid water and a classic run temperature: Bates & Bower (1954),
    # J. Res. Natl. Bur. Stand. 53, 283, measured the Ag|AgCl cell from 0 to 95 °C.
    if where == "row":
        csv = "molality_mol_kg,emf_mV,temperature_C\n" + "".join(
            f"{m},{e},0.0\n" for m, e in ROWS_MV)
        run = read_run(run_files(tmp_path, csv))
    else:
        run = read_run(run_files(tmp_path, plain_csv(), toml=text))
    assert run.points["temperature_K"].tolist() == pytest.approx([ZERO_CELSIUS_K] * 5)


def test_u_emf_in_millivolts_becomes_volts(tmp_path):
    text = "molality_mol_kg,emf_mV,u_emf_mV\n" + "".join(f"{m},{e},0.020\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert run.points["u_emf_V"].tolist() == pytest.approx([2.0e-5] * len(ROWS_MV), rel=1e-12)
    assert run.emf_uncertainty_given


def test_u_emf_in_volts_and_missing_u_emf(tmp_path):
    text = "molality_mol_kg,emf_mV,u_emf_V\n" + "".join(f"{m},{e},2e-5\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path / "V", text))
    assert run.points["u_emf_V"].tolist() == pytest.approx([2.0e-5] * len(ROWS_MV), rel=1e-12)
    plain = read_run(run_files(tmp_path / "none", plain_csv()))
    assert plain.points["u_emf_V"].isna().all()
    assert not plain.emf_uncertainty_given


@pytest.mark.parametrize("missing", ["", "nan", "NaN", " "])
def test_empty_reading_is_kept_and_flagged(tmp_path, missing):
    rows = [f"{m},{e}" for m, e in ROWS_MV]
    rows[2] = f"{ROWS_MV[2][0]},{missing}"
    run = read_run(run_files(tmp_path, "# c\nmolality_mol_kg,emf_mV\n" + "\n".join(rows) + "\n"))
    assert len(run.points) == len(ROWS_MV)  # never silently dropped
    row = run.points[run.points["line"] == 5].iloc[0]
    assert row["flag"] == "no reading"
    assert math.isnan(row["emf_V"])
    assert row["molality_mol_kg"] == ROWS_MV[2][0]
    assert run.points["flag"].isna().sum() == len(ROWS_MV) - 1
    assert len(usable_points(run)) == len(ROWS_MV) - 1
    assert any("no reading" in w and "line(s) 5" in w for w in run.warnings), run.warnings


def test_unknown_column_is_named_in_a_warning(tmp_path):
    text = "molality_mol_kg,emf_mV,operator_initials\n" + "".join(
        f"{m},{e},RO\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert len(run.warnings) == 1
    assert "'operator_initials'" in run.warnings[0]
    assert "ignored" in run.warnings[0]


def test_documented_columns_are_read_in_any_case(tmp_path):
    text = "Molality_mol_kg,EMF_mV,Note\n" + "".join(f"{m},{e},x\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert run.warnings == ()
    assert run.points["note"].tolist() == ["x"] * len(ROWS_MV)
    assert run.points["emf_V"].tolist() == pytest.approx(expected_emf_V())


def test_misspelt_column_gets_the_nearest_name(tmp_path):
    text = "molality_mol_kg,emf_mV,notes\n" + "".join(f"{m},{e},x\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert any("'notes'" in w and "did you mean 'note'" in w for w in run.warnings), run.warnings


def test_pressure_column_without_a_gas_cell_is_named_in_a_warning(tmp_path):
    text = "molality_mol_kg,emf_mV,pressure_kPa\n" + "".join(
        f"{m},{e},101.2\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert run.points["pressure_Pa"].tolist() == pytest.approx([101.2e3] * len(ROWS_MV))
    assert any("pressure" in w and "not used" in w and "cell diagram" in w
               for w in run.warnings)


def test_unknown_metadata_key_is_named_in_a_warning(tmp_path):
    run = read_run(run_files(tmp_path, plain_csv(), toml=TOML + 'room = "B12"\n'))
    assert any("'room'" in w for w in run.warnings), run.warnings


def test_command_line_overrides_win_over_the_file(tmp_path):
    path = run_files(tmp_path, plain_csv(),
                     toml=TOML + "standard_pressure_kPa = 101.325\n")
    run = read_run(path, overrides={"electrolyte": "NaCl", "electrons": 2,
                                    "temperature_C": 30.0, "standard_pressure_kPa": 100.0})
    assert run.metadata.electrolyte.formula == "NaCl"
    assert run.metadata.electrons == 2
    assert run.metadata.temperature_K == pytest.approx(30.0 + ZERO_CELSIUS_K)
    assert run.metadata.standard_pressure_Pa == pytest.approx(100e3)
    assert run.points["temperature_K"].tolist() == pytest.approx([303.15] * len(ROWS_MV))


def test_command_line_temperature_replaces_a_file_temperature_in_kelvin(tmp_path):
    toml = 'electrolyte = "HCl"\nelectrons = 1\ntemperature_K = 298.15\n'
    run = read_run(run_files(tmp_path, plain_csv(), toml=toml),
                   overrides={"temperature_C": 30.0})
    assert run.metadata.temperature_K == pytest.approx(30.0 + ZERO_CELSIUS_K)


def test_none_overrides_leave_the_file_alone(tmp_path):
    # the command line passes every option, None when not given
    run = read_run(run_files(tmp_path, plain_csv()),
                   overrides={"electrolyte": None, "electrons": None, "temperature_C": None,
                              "standard_pressure_kPa": None})
    assert run.metadata.electrolyte.formula == "HCl"
    assert run.metadata.temperature_K == pytest.approx(25.0 + ZERO_CELSIUS_K)


def test_overrides_alone_stand_in_for_the_metadata(tmp_path):
    run = read_run(run_files(tmp_path, plain_csv(), toml=None),
                   overrides={"electrolyte": "HCl", "electrons": 1, "temperature_C": 25.0})
    assert run.metadata_path is None
    assert run.metadata.electrolyte.formula == "HCl"


def test_metadata_found_next_to_the_table_by_its_stem(tmp_path):
    write(tmp_path / "other.toml", 'electrolyte = "KCl"\nelectrons = 1\ntemperature_C = 25.0\n')
    path = run_files(tmp_path, plain_csv(), stem="hcl_0412")
    run = read_run(path)
    assert run.metadata_path == tmp_path / "hcl_0412.toml"
    assert run.metadata.electrolyte.formula == "HCl"


def test_meta_elsewhere_wins_over_the_stem_file(tmp_path):
    path = run_files(tmp_path / "tables", plain_csv())
    meta = write(tmp_path / "shared" / "nacl.toml",
                 'electrolyte = "NaCl"\nelectrons = 1\ntemperature_C = 20.0\n')
    run = read_run(path, metadata_path=meta)
    assert run.metadata_path == meta
    assert run.metadata.electrolyte.formula == "NaCl"
    assert run.metadata.temperature_K == pytest.approx(20.0 + ZERO_CELSIUS_K)


def test_series_selection(tmp_path):
    text = "molality_mol_kg,emf_mV,series\n" + "".join(
        f"{m},{e},{'A' if i % 2 else 'B'}\n" for i, (m, e) in enumerate(ROWS_MV))
    path = run_files(tmp_path, text)
    a = read_run(path, series="A")
    b = read_run(path, series="B")
    assert a.points["series"].unique().tolist() == ["A"]
    assert a.points["molality_mol_kg"].tolist() == [ROWS_MV[1][0], ROWS_MV[3][0]]
    assert b.points["molality_mol_kg"].tolist() == [ROWS_MV[0][0], ROWS_MV[2][0], ROWS_MV[4][0]]
    assert b.points["line"].tolist() == [2, 4, 6]
    assert a.points.index.tolist() == [0, 1]


def test_series_selection_ignores_the_other_series(tmp_path):
    # series B has a lost reading (line 6) and a row without temperature (line 7); neither
    # concerns series A, whose own rows all carry a temperature
    text = ("molality_mol_kg,emf_mV,temperature_C,series\n"
            + "".join(f"{m},{e},25.0,A\n" for m, e in ROWS_MV[:4])
            + f"{ROWS_MV[4][0]},,25.0,B\n{ROWS_MV[3][0]},{ROWS_MV[3][1]},,B\n")
    run = read_run(run_files(tmp_path, text, toml='electrolyte = "HCl"\nelectrons = 1\n'),
                   series="A")
    assert run.points["line"].tolist() == [2, 3, 4, 5]
    assert run.points["flag"].isna().all()
    assert not any("no reading" in w for w in run.warnings), run.warnings


def test_single_series_needs_no_selection(tmp_path):
    text = "molality_mol_kg,emf_mV,series\n" + "".join(f"{m},{e},only\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert len(run.points) == len(ROWS_MV)


def test_sha256_is_of_the_file_bytes(tmp_path):
    raw = b"\xef\xbb\xbf# c\r\n" + plain_csv("\r\n").encode("utf-8")
    path = run_files(tmp_path, raw)
    run = read_run(path)
    assert run.sha256 == hashlib.sha256(raw).hexdigest()
    assert path.read_bytes() == raw  # and the file is untouched


def test_text_columns_are_kept(tmp_path):
    text = "molality_mol_kg,emf_mV,electrode,note\n" + "".join(
        f"{m},{e}, KB-AgCl-07 ,\"drift, small\"\n" for m, e in ROWS_MV)
    run = read_run(run_files(tmp_path, text))
    assert set(run.points["electrode"]) == {"KB-AgCl-07"}
    assert set(run.points["note"]) == {"drift, small"}


# --- round trip -------------------------------------------------------------------------

STYLES = ("comma", "semicolon", "semicolon-decimal-comma")


@st.composite
def tables(draw):
    n = draw(st.integers(min_value=1, max_value=12))
    molality = draw(st.lists(st.floats(min_value=1e-4, max_value=20.0), min_size=n, max_size=n))
    # readings that fall with ln m by 2RT/F as a cell forming HCl must (the reader refuses
    # tables that rise or stay flat), around a standard potential of either sign
    e0 = draw(st.floats(min_value=-1.5, max_value=1.5))
    emf_V = [e0 - 0.0514 * math.log(m) for m in molality]
    temperature_C = draw(st.lists(st.floats(min_value=0.0, max_value=100.0), min_size=n,
                                  max_size=n))
    millivolts = draw(st.booleans())
    # the reader refuses millivolts all below 5 mV in magnitude (volts under the mV name)
    assume(not millivolts or any(abs(e) >= 0.006 for e in emf_V))
    return {
        "molality": molality,
        "emf_V": emf_V,
        "temperature_C": temperature_C,
        "style": draw(st.sampled_from(STYLES)),
        "millivolts": millivolts,
        "kelvin": draw(st.booleans()),
        "bom": draw(st.booleans()),
        "newline": draw(st.sampled_from(("\n", "\r\n"))),
    }


def format_table(t: dict) -> str:
    separator = "," if t["style"] == "comma" else ";"
    emf_column = "emf_mV" if t["millivolts"] else "emf_V"
    temperature_column = "temperature_K" if t["kelvin"] else "temperature_C"
    lines = ["# round trip", separator.join(("molality_mol_kg", emf_column, temperature_column))]
    for m, e, c in zip(t["molality"], t["emf_V"], t["temperature_C"], strict=True):
        fields = [f"{m:.6g}",
                  f"{e * 1e3:.3f}" if t["millivolts"] else f"{e:.6f}",
                  f"{c + ZERO_CELSIUS_K:.2f}" if t["kelvin"] else f"{c:.2f}"]
        if t["style"] == "semicolon-decimal-comma":
            fields = [f.replace(".", ",") for f in fields]
        lines.append(separator.join(fields))
    return ("\ufeff" if t["bom"] else "") + t["newline"].join(lines) + t["newline"]


@settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(tables())
def test_round_trip_of_a_random_valid_table(t):
    with tempfile.TemporaryDirectory() as folder:
        path = run_files(Path(folder), format_table(t))
        run = read_run(path)
    points = run.points
    assert len(points) == len(t["molality"])
    assert points["flag"].isna().all()
    # to the printed precision: 6 significant digits, 1 µV, 0.005 K (plus rounding of the sum)
    for read, written in zip(points["molality_mol_kg"], t["molality"], strict=True):
        assert read == pytest.approx(written, rel=5e-6)
    assert points["emf_V"].tolist() == pytest.approx(t["emf_V"], abs=0.5e-6 + 1e-12)
    expected_K = [c + ZERO_CELSIUS_K for c in t["temperature_C"]]
    assert points["temperature_K"].tolist() == pytest.approx(expected_K, abs=0.005 + 1e-9)
    assert run.warnings == ()
