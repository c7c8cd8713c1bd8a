"""Reading and validating a run: the table of readings (CSV) and its metadata (TOML).

The contract is in ``shared/design.md`` and the README: one row per solution measured, units in
the column names, metadata next to the table with the same stem. Every problem is reported as an
:class:`~activolt.errors.InputError` naming the file, the line and the column and saying what to
do. Inputs are never modified.
"""

from __future__ import annotations

import csv
import dataclasses
import hashlib
import math
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..chemistry.electrolytes import Electrolyte, parse_electrolyte
from ..constants import (
    ATMOSPHERE_PA,
    INTERNATIONAL_VOLT_V,
    STANDARD_PRESSURE_PA,
    ZERO_CELSIUS_K,
)
from ..errors import InputError

#: Columns the reader understands, each with its unit as written in the name.
KNOWN_COLUMNS: tuple[str, ...] = (
    "molality_mol_kg", "emf_V", "emf_mV", "u_emf_V", "u_emf_mV", "u_molality_mol_kg",
    "temperature_C", "temperature_K", "pressure_kPa", "electrode", "series", "note",
)
#: Columns read now but whose values the reduction does not use yet (named in a warning).
NOT_YET_USED_COLUMNS: tuple[str, ...] = ()
#: Metadata keys the reader understands.
KNOWN_METADATA_KEYS: tuple[str, ...] = (
    "electrolyte", "electrons", "temperature_C", "temperature_K", "cell",
    "standard_pressure_kPa", "pressure_kPa", "bubbler_depth_cm", "slope_factor",
    "u_temperature_K", "u_pressure_kPa", "solute_vapour_lowering", "volt_unit",
    "lab", "operator", "instrument", "date", "description", "electrode", "notes",
)
_TEXT_METADATA_KEYS = ("lab", "operator", "instrument", "date", "description", "electrode",
                       "notes")
_LIQUID_WATER_C = (0.0, 100.0)
_LARGEST_MOLALITY_MOL_KG = 30.0
_LARGEST_EMF_V = 5.0
_PRESSURE_RANGE_KPA = (50.0, 150.0)
_MISSING = {"", "nan", "na", "n/a", "-"}
#: Volts the EMF column may be written in, with the factor to absolute volts [V per unit].
VOLT_UNITS: dict[str, float] = {"absolute": 1.0, "international": INTERNATIONAL_VOLT_V}


@dataclass(frozen=True)
class RunMetadata:
    """What the cell is and at which conditions it was measured.

    Attributes
    ----------
    electrolyte : Electrolyte
        The electrolyte formed by the cell reaction.
    electrons : int
        n, electrons per formula unit formed [-].
    standard_pressure_Pa : float
        The pressure basis of E° [Pa]: 100 000 (IUPAC) or 101 325 (older tables).
    temperature_K : float or None
        The run temperature from the metadata [K]; per-row values in the table win.
    cell : str or None
        The cell diagram as written, if given.
    info : dict
        Descriptive text (lab, operator, instrument, date, description, …), kept in the record.
    electrolyte_sign : int
        +1 when the cell reaction forms the electrolyte, −1 when it consumes it.
    gas_coefficients : mapping
        Gases in the cell reaction (as written for n electrons) and their signed coefficients.
    barometric_pressure_Pa : float or None
        Run-level barometric pressure [Pa]; per-row ``pressure_kPa`` values win.
    bubbler_depth_m : float
        Depth of solution above the hydrogen outlet [m], for the hydrostatic term.
    slope_factor : float
        Fixed slope factor s of the cell response, E = E° − s k ln(m± γ±) (1 = Nernstian).
    fit_slope_factor : bool
        Whether s is fitted alongside E° (ion-selective electrode pairs).
    u_temperature_K : float
        Standard uncertainty of the run temperature, common to all rows [K].
    u_pressure_Pa : float
        Standard uncertainty of the barometric pressure, common to all rows [Pa].
    solute_vapour_lowering : bool
        Whether the water vapour over the solution is taken as a_w p_w (a_w from the fitted
        model) rather than p_w when the gas partial pressure is computed.
    volt_unit : str
        The volt the EMF and u(EMF) columns are written in: ``"absolute"`` (SI, the default) or
        ``"international"`` (before 1948); the reader converts to absolute volts.
    """

    electrolyte: Electrolyte
    electrons: int
    standard_pressure_Pa: float = STANDARD_PRESSURE_PA
    temperature_K: float | None = None
    cell: str | None = None
    info: Mapping[str, str] = field(default_factory=dict)
    electrolyte_sign: int = 1
    gas_coefficients: Mapping[str, float] = field(default_factory=dict)
    barometric_pressure_Pa: float | None = None
    bubbler_depth_m: float = 0.0
    slope_factor: float = 1.0
    fit_slope_factor: bool = False
    u_temperature_K: float = 0.0
    u_pressure_Pa: float = 0.0
    solute_vapour_lowering: bool = False
    volt_unit: str = "absolute"


@dataclass(frozen=True)
class Run:
    """A validated run: the readings in SI units, the metadata and what the reader noticed.

    Attributes
    ----------
    path : pathlib.Path
        The run table.
    sha256 : str
        SHA-256 of the run table's bytes, for the record.
    metadata_path : pathlib.Path or None
        The metadata file, if one was read.
    points : pandas.DataFrame
        One row per solution: ``line`` (in the file), ``molality_mol_kg``, ``emf_V`` (NaN where
        the reading is missing), ``u_emf_V`` (NaN when not given), ``u_molality_mol_kg`` (0 when
        not given), ``temperature_K``, ``pressure_Pa`` (NaN when not given), ``electrode``,
        ``series``, ``note`` and ``flag`` (None, or why the point cannot be used).
    metadata : RunMetadata
    warnings : tuple of str
        What the user should know about the input (unused columns, flagged rows, …).
    """

    path: Path
    sha256: str
    metadata_path: Path | None
    points: pd.DataFrame
    metadata: RunMetadata
    warnings: tuple[str, ...] = ()

    @property
    def emf_uncertainty_given(self) -> bool:
        """Whether every usable reading has a stated standard uncertainty."""
        usable = self.points["flag"].isna()
        return bool(usable.any() and self.points.loc[usable, "u_emf_V"].notna().all())


def _decode(path: Path, raw: bytes) -> str:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = raw[: error.start].count(b"\n") + 1
        raise InputError(
            "the file is not UTF-8 text; save it as UTF-8 (CSV UTF-8) and try again",
            file=str(path), line=line,
        ) from None


def _number(text: str, decimal_comma: bool, path: Path, line: int, column: str) -> float:
    cleaned = text.strip()
    if decimal_comma:
        cleaned = cleaned.replace(",", ".")
    try:
        value = float(cleaned)
    except ValueError:
        raise InputError(
            f"'{text.strip()}' is not a number; write a plain decimal number"
            + (" (decimal comma or point)" if decimal_comma else " with a decimal point"),
            file=str(path), line=line, column=column,
        ) from None
    if math.isinf(value):
        raise InputError(f"'{text.strip()}' is not a finite number", file=str(path), line=line,
                         column=column)
    return value


def _rows(path: Path, text: str) -> tuple[int, list[str], list[tuple[int, list[str]]], bool]:
    """Header line number, column names, data rows with their line numbers, decimal comma."""
    numbered = [(i + 1, line) for i, line in enumerate(text.splitlines())]
    content = [(n, line) for n, line in numbered
               if line.strip() and not line.lstrip().startswith("#")]
    if not content:
        raise InputError("the run table is empty; it needs a header line and one row per "
                         "solution", file=str(path))
    header_line, header = content[0]
    separator = ";" if header.count(";") > header.count(",") else ","
    parsed: list[tuple[int, list[str]]] = []
    for n, line in content:  # one line at a time: a stray quote must not swallow the next rows
        try:
            parsed.append((n, next(csv.reader([line], delimiter=separator, strict=True))))
        except csv.Error:
            raise InputError('a quote (") is not closed or is followed by text; quote whole '
                             "fields only, or remove the quote", file=str(path), line=n) from None
    names = [name.strip() for name in parsed[0][1]]
    return header_line, names, parsed[1:], separator == ";"


def _check_columns(path: Path, header_line: int, names: list[str]) -> list[str]:
    warnings: list[str] = []
    seen: set[str] = set()
    for name in names:
        if name == "":
            raise InputError("a column has no name; name every column in the header",
                             file=str(path), line=header_line)
        if name in seen:
            raise InputError("the column appears twice; keep one of them", file=str(path),
                             line=header_line, column=name)
        seen.add(name)
    for name in names:
        if name not in KNOWN_COLUMNS:
            lowered = {k.lower(): k for k in KNOWN_COLUMNS}
            hint = f" (did you mean '{lowered[name.lower()]}'?)" if name.lower() in lowered else ""
            warnings.append(f"column '{name}' is not one activolt reads; it is ignored{hint}")
        elif name in NOT_YET_USED_COLUMNS:
            warnings.append(
                f"column '{name}' is read and kept in the points table but not used in the "
                "reduction yet (no gas-pressure correction is applied)"
            )
    if "molality_mol_kg" not in seen:
        raise InputError("the column 'molality_mol_kg' is missing; add it (molality in mol/kg)",
                         file=str(path), line=header_line)
    for group, what in ((("emf_V", "emf_mV"), "the EMF"), (("u_emf_V", "u_emf_mV"), "u(EMF)"),
                        (("temperature_C", "temperature_K"), "the temperature")):
        present = [g for g in group if g in seen]
        if len(present) > 1:
            raise InputError(f"both '{present[0]}' and '{present[1]}' give {what}; keep one",
                             file=str(path), line=header_line, column=present[1])
    if "emf_V" not in seen and "emf_mV" not in seen:
        raise InputError("no EMF column; add 'emf_V' (volts) or 'emf_mV' (millivolts)",
                         file=str(path), line=header_line)
    return warnings


def _read_table(path: Path, text: str) -> tuple[pd.DataFrame, list[str]]:
    header_line, names, rows, decimal_comma = _rows(path, text)
    warnings = _check_columns(path, header_line, names)
    if not rows:
        raise InputError("the run table has a header but no readings", file=str(path),
                         line=header_line)
    emf_column = "emf_V" if "emf_V" in names else "emf_mV"
    emf_scale = 1.0 if emf_column == "emf_V" else 1e-3
    u_emf_column = next((c for c in ("u_emf_V", "u_emf_mV") if c in names), None)
    u_emf_scale = 1.0 if u_emf_column == "u_emf_V" else 1e-3
    temperature_column = next((c for c in ("temperature_C", "temperature_K") if c in names), None)

    records: list[dict[str, Any]] = []
    for line, fields in rows:
        if len(fields) != len(names):
            raise InputError(
                f"the row has {len(fields)} fields but the header names {len(names)} columns; "
                "check for a missing or extra separator"
                + (" (with ';' as separator, write decimal commas without quotes)"
                   if decimal_comma else " (a decimal comma needs ';' as separator)"),
                file=str(path), line=line,
            )
        cells = dict(zip(names, fields, strict=True))

        def number(column: str, cells: dict[str, str] = cells, line: int = line) -> float:
            return _number(cells[column], decimal_comma, path, line, column)

        def is_missing(column: str, cells: dict[str, str] = cells) -> bool:
            return cells[column].strip().lower() in _MISSING

        record: dict[str, Any] = {"line": line, "flag": None}
        if is_missing("molality_mol_kg"):
            raise InputError("the molality is empty; give the molality of every solution",
                             file=str(path), line=line, column="molality_mol_kg")
        molality = number("molality_mol_kg")
        if molality <= 0.0:
            raise InputError(f"molality {molality:g} mol/kg is not positive; a dilution series "
                             "needs molalities > 0", file=str(path), line=line,
                             column="molality_mol_kg")
        if molality > _LARGEST_MOLALITY_MOL_KG:
            raise InputError(f"molality {molality:g} mol/kg is implausibly large (> "
                             f"{_LARGEST_MOLALITY_MOL_KG:g}); check the unit (mol/kg)",
                             file=str(path), line=line, column="molality_mol_kg")
        record["molality_mol_kg"] = molality

        if is_missing(emf_column):
            record["emf_V"] = math.nan
            record["flag"] = "no reading"
        else:
            emf = number(emf_column) * emf_scale
            if abs(emf) > _LARGEST_EMF_V:
                hint = ("it looks like millivolts in a volt column; name the column 'emf_mV'"
                        if emf_column == "emf_V" else "check the unit of the column")
                raise InputError(f"EMF {emf:g} V is implausible for a cell (> {_LARGEST_EMF_V:g}"
                                 f" V); {hint}", file=str(path), line=line, column=emf_column)
            record["emf_V"] = emf

        u_emf = math.nan
        if u_emf_column is not None and not is_missing(u_emf_column):
            u_emf = number(u_emf_column) * u_emf_scale
            if u_emf <= 0.0:
                raise InputError("a standard uncertainty must be positive; leave the cell empty "
                                 "if it is not known", file=str(path), line=line,
                                 column=u_emf_column)
        record["u_emf_V"] = u_emf

        u_molality = 0.0
        if "u_molality_mol_kg" in cells and not is_missing("u_molality_mol_kg"):
            u_molality = number("u_molality_mol_kg")
            if u_molality < 0.0 or u_molality >= molality:
                raise InputError("u(molality) must be ≥ 0 and smaller than the molality",
                                 file=str(path), line=line, column="u_molality_mol_kg")
        record["u_molality_mol_kg"] = u_molality

        temperature_K = math.nan
        if temperature_column is not None and not is_missing(temperature_column):
            value = number(temperature_column)
            temperature_K = value + ZERO_CELSIUS_K if temperature_column.endswith("C") else value
            _check_temperature(temperature_K, path, line, temperature_column)
        record["temperature_K"] = temperature_K

        pressure_Pa = math.nan
        if "pressure_kPa" in cells and not is_missing("pressure_kPa"):
            pressure_kPa = number("pressure_kPa")
            low, high = _PRESSURE_RANGE_KPA
            if not low <= pressure_kPa <= high:
                raise InputError(f"barometric pressure {pressure_kPa:g} kPa is implausible "
                                 f"(expected {low:g}–{high:g} kPa); check the unit (kPa)",
                                 file=str(path), line=line, column="pressure_kPa")
            pressure_Pa = pressure_kPa * 1e3
        record["pressure_Pa"] = pressure_Pa
        for text_column in ("electrode", "series", "note"):
            record[text_column] = cells[text_column].strip() if text_column in cells else ""
        records.append(record)

    points = pd.DataFrame.from_records(records)
    if emf_column == "emf_mV":
        usable = points["emf_V"].dropna()
        if len(usable) and (usable.abs() < 5e-3).all():
            raise InputError("every reading is below 5 mV in magnitude; if the values are "
                             "volts, name the column 'emf_V'", file=str(path),
                             line=header_line, column="emf_mV")
    return points, warnings


def _check_temperature(temperature_K: float, path: Path, line: int | None, column: str) -> None:
    low, high = _LIQUID_WATER_C
    # both ends included, as in activolt.physics.water (0 °C, the ice point, is a classic run
    # temperature)
    if not low - 1e-9 <= temperature_K - ZERO_CELSIUS_K <= high + 1e-9:
        raise InputError(
            f"temperature {temperature_K - ZERO_CELSIUS_K:.2f} °C is outside liquid water "
            f"({low:g}–{high:g} °C); check the value and its unit (°C or K)",
            file=str(path), line=line, column=column,
        )


def _key_line(text: str, key: str) -> int | None:
    match = re.search(rf"^\s*{re.escape(key)}\s*=", text, flags=re.MULTILINE)
    return text[: match.start()].count("\n") + 1 if match else None


def _read_metadata_text(path: Path) -> tuple[dict[str, Any], str]:
    try:
        text = _decode(path, path.read_bytes())
    except OSError as error:
        raise InputError(f"cannot read the metadata file ({error.strerror}); check the path",
                         file=str(path)) from None
    try:
        return tomllib.loads(text), text
    except tomllib.TOMLDecodeError as error:
        found = re.search(r"line (\d+), column (\d+)", str(error))
        problem = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(error))
        raise InputError(
            f"the metadata is not valid TOML ({problem}"
            + (f", at character {found.group(2)}" if found else "")
            + "); write it as key = value lines, text in double quotes",
            file=str(path), line=int(found.group(1)) if found else None,
        ) from None


def _metadata(
    meta: Mapping[str, Any], text: str, path: Path | None, overrides: Mapping[str, Any]
) -> tuple[RunMetadata, list[str]]:
    where = str(path) if path is not None else "command line"
    warnings: list[str] = []
    for key in meta:
        if key not in KNOWN_METADATA_KEYS:
            warnings.append(f"{where}: key '{key}' is not one activolt reads; it is ignored")
    given = {k: v for k, v in overrides.items() if v is not None}
    # a temperature given on the command line replaces the file's, whichever its unit
    temperature_keys = {"temperature_C", "temperature_K"}
    replaced = temperature_keys if given.keys() & temperature_keys else set()
    merged = {**{k: v for k, v in meta.items() if k not in replaced}, **given}

    def fail(key: str, problem: str) -> InputError:
        if key in meta and overrides.get(key) is None:
            return InputError(problem, file=where, line=_key_line(text, key), column=key)
        return InputError(problem, file="command line", column=f"--{key.replace('_', '-')}")

    cell = merged.get("cell")
    stoichiometry = None
    if cell is not None:
        if not isinstance(cell, str):
            raise fail("cell", "cell must be a cell diagram in double quotes")
        stoichiometry = _cell_stoichiometry(cell, fail)
    electrolyte = _electrolyte(merged, stoichiometry, where, fail)
    electrons = _electrons(merged, stoichiometry, where, fail)

    temperature_K = None
    if "temperature_C" in merged and "temperature_K" in merged:
        raise fail("temperature_K", "give temperature_C or temperature_K, not both")
    for key, offset in (("temperature_C", ZERO_CELSIUS_K), ("temperature_K", 0.0)):
        if key in merged:
            value = merged[key]
            if isinstance(value, bool) or not isinstance(value, int | float):
                raise fail(key, f"{key} must be a number, got {value!r}")
            temperature_K = float(value) + offset
            try:
                _check_temperature(temperature_K, Path(where), None, key)
            except InputError as error:
                raise fail(key, error.problem) from None

    pressure_kPa = merged.get("standard_pressure_kPa", STANDARD_PRESSURE_PA / 1e3)
    if isinstance(pressure_kPa, bool) or not isinstance(pressure_kPa, int | float) or not any(
        math.isclose(pressure_kPa, p / 1e3) for p in (STANDARD_PRESSURE_PA, ATMOSPHERE_PA)
    ):
        raise fail("standard_pressure_kPa",
                   f"standard_pressure_kPa must be 100 (IUPAC) or 101.325 (1 atm), got "
                   f"{pressure_kPa!r}")

    barometric_Pa = None
    if "pressure_kPa" in merged:
        value = merged["pressure_kPa"]
        low, high = _PRESSURE_RANGE_KPA
        if isinstance(value, bool) or not isinstance(value, int | float) or not (
                low <= value <= high):
            raise fail("pressure_kPa", f"pressure_kPa (barometric) must be a number from {low:g} "
                                       f"to {high:g} kPa, got {value!r}")
        barometric_Pa = float(value) * 1e3
    bubbler_m = 0.0
    if "bubbler_depth_cm" in merged:
        value = merged["bubbler_depth_cm"]
        if isinstance(value, bool) or not isinstance(value, int | float) or not 0 <= value <= 50:
            raise fail("bubbler_depth_cm", "bubbler_depth_cm must be a depth from 0 to 50 cm "
                                           f"of solution above the gas outlet, got {value!r}")
        bubbler_m = float(value) / 100.0

    slope = merged.get("slope_factor", 1.0)
    fit_slope = slope == "fit"
    if not fit_slope and (isinstance(slope, bool) or not isinstance(slope, int | float)
                          or not 0.5 <= slope <= 1.2):
        raise fail("slope_factor", "slope_factor must be \"fit\" or a number from 0.5 to 1.2 "
                                   f"(1 = Nernstian), got {slope!r}")

    common_u = {}
    for key, limit in (("u_temperature_K", 5.0), ("u_pressure_kPa", 5.0)):
        value = merged.get(key, 0.0)
        if isinstance(value, bool) or not isinstance(value, int | float) or not (
                0.0 <= value <= limit):
            raise fail(key, f"{key} must be a standard uncertainty from 0 to {limit:g}, "
                            f"got {value!r}")
        common_u[key] = float(value)

    lowering = merged.get("solute_vapour_lowering", False)
    if not isinstance(lowering, bool):
        raise fail("solute_vapour_lowering", "solute_vapour_lowering must be true or false, "
                                             f"got {lowering!r}")

    volt_unit = merged.get("volt_unit", "absolute")
    if not isinstance(volt_unit, str) or volt_unit not in VOLT_UNITS:
        raise fail("volt_unit", "volt_unit must be \"absolute\" or \"international\" (before "
                                f"1948), got {volt_unit!r}")

    info = {k: str(merged[k]) for k in _TEXT_METADATA_KEYS if k in merged}
    metadata = RunMetadata(
        electrolyte=electrolyte, electrons=electrons,
        standard_pressure_Pa=float(pressure_kPa) * 1e3, temperature_K=temperature_K,
        cell=cell, info=info,
        electrolyte_sign=1 if stoichiometry is None else int(stoichiometry.electrolyte_units),
        gas_coefficients={} if stoichiometry is None else dict(stoichiometry.gas_coefficients),
        barometric_pressure_Pa=barometric_Pa, bubbler_depth_m=bubbler_m,
        slope_factor=1.0 if fit_slope else float(slope), fit_slope_factor=fit_slope,
        u_temperature_K=common_u["u_temperature_K"],
        u_pressure_Pa=common_u["u_pressure_kPa"] * 1e3,
        solute_vapour_lowering=lowering, volt_unit=volt_unit,
    )
    return metadata, warnings


def _cell_stoichiometry(cell: str, fail: Any) -> Any:
    """What the reduction needs from a cell diagram; an InputError pointing into it otherwise."""
    from ..chemistry.cells import DiagramError, cell_from_diagram

    try:
        stoichiometry = cell_from_diagram(cell)
    except DiagramError as error:
        raise fail("cell", f"{error.message} (at character {error.position + 1} of the "
                           "diagram)") from None
    if stoichiometry.liquid_junction:
        raise fail("cell", "the cell has a liquid junction (||); activolt reduces cells "
                           "without liquid junction — write one solution between the electrodes")
    if stoichiometry.electrolyte is None:
        raise fail("cell", "no single electrolyte is formed or consumed by this cell; check the "
                           "electrodes and the solution")
    return stoichiometry


def _electrolyte(merged: Mapping[str, Any], stoichiometry: Any, where: str,
                 fail: Any) -> Electrolyte:
    if "electrolyte" not in merged:
        if stoichiometry is not None:
            return stoichiometry.electrolyte
        raise InputError("the electrolyte is not given; add electrolyte = \"HCl\" (for example) "
                         "or a cell diagram to the metadata, or give --electrolyte", file=where)
    if not isinstance(merged["electrolyte"], str):
        raise fail("electrolyte", "electrolyte must be a formula in double quotes, e.g. \"HCl\"")
    try:
        electrolyte = parse_electrolyte(merged["electrolyte"])
    except ValueError as error:
        raise fail("electrolyte", str(error)) from None
    if stoichiometry is not None and electrolyte != stoichiometry.electrolyte:
        raise fail("electrolyte", f"the cell diagram's electrolyte is "
                                  f"{stoichiometry.electrolyte.formula}, not "
                                  f"{electrolyte.formula}; remove one of the two")
    return electrolyte


def _electrons(merged: Mapping[str, Any], stoichiometry: Any, where: str, fail: Any) -> int:
    from_cell = None
    if stoichiometry is not None:
        n = stoichiometry.electrons
        if n != int(n):
            raise fail("cell", f"the cell reaction transfers {n} electrons per formula unit; "
                               "activolt needs a whole number")
        from_cell = int(n)
    if "electrons" not in merged:
        if from_cell is not None:
            return from_cell
        raise InputError("the number of electrons is not given; add electrons = 1 (for example) "
                         "to the metadata or give --electrons", file=where)
    electrons = merged["electrons"]
    if isinstance(electrons, bool) or not isinstance(electrons, int) or electrons < 1:
        raise fail("electrons", f"electrons must be a whole number ≥ 1 (n per formula unit), "
                                f"got {electrons!r}")
    if from_cell is not None and electrons != from_cell:
        raise fail("electrons", f"the cell diagram gives n = {from_cell}, not {electrons}; "
                                "remove one of the two")
    return electrons


def _read_table_and_metadata(
    path: Path, metadata_path: str | Path | None, overrides: Mapping[str, Any],
) -> tuple[str, Path | None, pd.DataFrame, RunMetadata, list[str]]:
    """The whole table parsed once, and its metadata: (sha256, metadata path, points, metadata,
    warnings); the points of every series, before any series is taken."""
    try:
        raw = path.read_bytes()
    except OSError as error:
        raise InputError(f"cannot read the run table ({error.strerror}); check the path",
                         file=str(path)) from None
    points, warnings = _read_table(path, _decode(path, raw))

    if metadata_path is None and path.with_suffix(".toml").is_file():
        metadata_path = path.with_suffix(".toml")
    if metadata_path is not None:
        metadata_path = Path(metadata_path)
        meta, text = _read_metadata_text(metadata_path)
    elif {"electrolyte", "electrons"} <= {k for k, v in overrides.items() if v is not None}:
        meta, text = {}, ""
    else:
        raise InputError(
            f"no metadata: write {path.with_suffix('.toml').name} next to the table (electrolyte,"
            " electrons, temperature_C), or give --meta FILE, or --electrolyte and --electrons",
            file=str(path),
        )
    metadata, meta_warnings = _metadata(meta, text, metadata_path, overrides)
    warnings.extend(meta_warnings)
    points, warnings = _with_metadata(points, warnings, metadata)
    return hashlib.sha256(raw).hexdigest(), metadata_path, points, metadata, warnings


def _with_metadata(points: pd.DataFrame, warnings: list[str], metadata: RunMetadata
                   ) -> tuple[pd.DataFrame, list[str]]:
    """The readings in absolute volts, and what the metadata makes worth a warning."""
    if metadata.volt_unit != "absolute":
        factor = VOLT_UNITS[metadata.volt_unit]
        points["emf_V"] = points["emf_V"] * factor
        points["u_emf_V"] = points["u_emf_V"] * factor
        warnings.append(
            f"EMF and u(EMF) are given in {metadata.volt_unit} volts and were converted to "
            f"absolute volts on reading: × {factor:.6f} (1 V_int = {factor:.6f} V, the US "
            "international volt of the NBS until 1948, NBS Circular 459, 1947)"
        )
    has_pressure = points["pressure_Pa"].notna().any() or metadata.barometric_pressure_Pa
    if has_pressure and not metadata.gas_coefficients:
        warnings.append(
            "barometric pressures are given but not used: "
            + ("the cell has no gas electrode" if metadata.cell else
               "without a cell diagram activolt does not know the cell holds a gas; add cell = "
               "\"Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)\" (for example) to the metadata")
        )
    return points, warnings


def _series_run(path: Path, sha256: str, metadata_path: Path | None, points: pd.DataFrame,
                metadata: RunMetadata, warnings: list[str]) -> Run:
    """One series' rows (already taken from the table) as a Run: temperatures filled in from
    the metadata, rows without a reading named in a warning."""
    points = points.reset_index(drop=True)
    warnings = list(warnings)
    missing_temperature = points["temperature_K"].isna()
    if missing_temperature.any():
        if metadata.temperature_K is None:
            line = int(points.loc[missing_temperature, "line"].iloc[0])
            raise InputError("no temperature for this row; add temperature_C to the metadata or "
                             "a temperature_C column", file=str(path), line=line)
        points.loc[missing_temperature, "temperature_K"] = metadata.temperature_K

    missing = points.loc[points["flag"].notna(), "line"].tolist()
    if missing:
        warnings.append(
            f"{len(missing)} row(s) have no reading (line(s) {', '.join(map(str, missing))}); "
            "they are kept in the record, flagged, and left out of the fit"
        )
    points["flag"] = points["flag"].astype(object)
    return Run(path=path, sha256=sha256, metadata_path=metadata_path, points=points,
               metadata=metadata, warnings=tuple(warnings))


def _every_series(path: Path, sha256: str, metadata_path: Path | None, points: pd.DataFrame,
                  metadata: RunMetadata, warnings: list[str]) -> tuple[Run, ...]:
    """Every series of a parsed table as its own Run, in order of first appearance; one pass
    over the rows (a grouping, not a filter per series)."""
    return tuple(
        _series_run(path, sha256, metadata_path, rows, metadata, warnings)
        for _, rows in points.groupby("series", sort=False)
    )


def read_runs(
    path: str | Path,
    metadata_path: str | Path | None = None,
    overrides: Mapping[str, Any] | None = None,
) -> tuple[Run, ...]:
    """Read and validate a run table and its metadata once; every series as its own Run.

    The rows are grouped by the table's ``series`` column (rows with an empty ``series`` cell
    form the unnamed series ``""``); a table without that column is one series. The table is
    parsed once whatever the number of series, so the time is linear in the rows.

    Parameters
    ----------
    path : str or pathlib.Path
        The run table (CSV; comma or semicolon separated, ``#`` comment lines).
    metadata_path : str or pathlib.Path, optional
        The metadata (TOML), common to every series. Default: the table's path with the suffix
        ``.toml``.
    overrides : mapping, optional
        Metadata given on the command line, as for :func:`read_run`; they win over the file.

    Returns
    -------
    tuple of Run
        One per series, in order of first appearance in the table; each holds that series'
        rows only (``points["series"]`` names it), the table's SHA-256 and the warnings about
        the table, the metadata and its own rows.

    Raises
    ------
    InputError
        For every problem with the input, naming file, line and column — the same checks and
        messages as :func:`read_run`, over the rows of every series.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "r.csv").write_text("molality_mol_kg,emf_V,series\\n0.01,0.46,A\\n"
    ...                                   "0.02,0.43,A\\n0.01,0.47,B\\n")
    >>> runs = read_runs(folder / "r.csv", overrides={"electrolyte": "HCl", "electrons": 1,
    ...                                                "temperature_C": 25.0})
    >>> [(r.points["series"].iloc[0], len(r.points)) for r in runs]
    [('A', 2), ('B', 1)]
    """
    path = Path(path)
    return _every_series(path, *_read_table_and_metadata(path, metadata_path,
                                                         dict(overrides or {})))


def runs_from_frame(
    frame: pd.DataFrame,
    metadata: Mapping[str, Any],
    name: str = "DataFrame",
) -> tuple[Run, ...]:
    """Every series of a table held in a pandas DataFrame, read as :func:`read_runs` reads a
    file.

    Parameters
    ----------
    frame : pandas.DataFrame
        The run-table columns (``molality_mol_kg``, ``emf_V`` or ``emf_mV``, …, ``series``),
        one row per solution; the index is not read.
    metadata : mapping
        What the TOML metadata would hold (``electrolyte``, ``electrons``, ``temperature_C``,
        ``cell``, …), common to every series.
    name : str
        How messages and the runs name the table. Line numbers count the header as line 1:
        line N is the frame's row at position N − 2.

    Returns
    -------
    tuple of Run
        One per series, in order of first appearance.

    Raises
    ------
    InputError
        As :func:`read_runs`; a metadata problem names ``metadata`` and the key.

    Notes
    -----
    The frame is written as CSV text (floats in their shortest exact form) and read by the
    file reader, so a frame and a file with the same values give the same runs.
    """
    if not isinstance(frame, pd.DataFrame):
        raise InputError(f"expected a pandas DataFrame of readings, got {type(frame).__name__}",
                         file=name)
    path = Path(name)
    raw = frame.to_csv(index=False, lineterminator="\n").encode("utf-8")
    points, warnings = _read_table(path, _decode(path, raw))
    meta_where = Path("metadata")
    run_metadata, meta_warnings = _metadata(dict(metadata), "", meta_where, {})
    warnings.extend(meta_warnings)
    points, warnings = _with_metadata(points, warnings, run_metadata)
    return _every_series(path, hashlib.sha256(raw).hexdigest(), None, points, run_metadata,
                         warnings)


def read_run(
    path: str | Path,
    metadata_path: str | Path | None = None,
    overrides: Mapping[str, Any] | None = None,
    series: str | None = None,
) -> Run:
    """Read and validate a run table and its metadata.

    Parameters
    ----------
    path : str or pathlib.Path
        The run table (CSV; comma or semicolon separated, ``#`` comment lines).
    metadata_path : str or pathlib.Path, optional
        The metadata (TOML). Default: the table's path with the suffix ``.toml``.
    overrides : mapping, optional
        Metadata given on the command line (``electrolyte``, ``electrons``, ``temperature_C``,
        ``temperature_K``, ``standard_pressure_kPa``, ``cell``, ``slope_factor``,
        ``volt_unit``); they win over the file.
    series : str, optional
        Which series to take when the table's ``series`` column names several (the rows of
        the others are not checked beyond the parsing). :func:`read_runs` gives every series.

    Returns
    -------
    Run

    Raises
    ------
    InputError
        For every problem with the input, naming file, line and column.
    """
    path = Path(path)
    sha256, metadata_path, points, metadata, warnings = _read_table_and_metadata(
        path, metadata_path, dict(overrides or {}))
    # the series first: temperatures and flagged rows of other series do not concern this one
    names = sorted(set(points["series"]))
    if series is not None:
        if series not in names:
            raise InputError(f"there is no series '{series}'; the table has: "
                             f"{', '.join(n or '(unnamed)' for n in names)}", file=str(path),
                             column="series")
        points = points[points["series"] == series]
    elif len(names) > 1:
        raise InputError(f"the table holds {len(names)} series "
                         f"({', '.join(n or '(unnamed)' for n in names)}); choose one "
                         "with --series NAME", file=str(path), column="series")
    return _series_run(path, sha256, metadata_path, points, metadata, warnings)


@dataclass(frozen=True)
class Exclusion:
    """A reading the user leaves out of the fit, by file line or by molality, with a reason."""

    reason: str
    line: int | None = None
    molality_mol_kg: float | None = None

    @classmethod
    def parse(cls, text: str) -> Exclusion:
        """From ``line=N:reason`` or ``m=VALUE:reason`` (molality in mol/kg).

        Examples
        --------
        >>> Exclusion.parse("m=0.005:bubbles on the electrode")
        Exclusion(reason='bubbles on the electrode', line=None, molality_mol_kg=0.005)
        """
        selector, _, reason = text.partition(":")
        key, _, value = selector.partition("=")
        reason = reason.strip()
        try:
            if not reason:
                raise ValueError
            if key.strip() == "line":
                return cls(reason=reason, line=int(value))
            if key.strip() == "m":
                return cls(reason=reason, molality_mol_kg=float(value))
            raise ValueError
        except ValueError:
            raise InputError(f"'{text}' is not line=N:reason or m=VALUE:reason (a reason is "
                             "required; it is kept in the record)", file="command line",
                             column="--exclude") from None


def exclude_points(run: Run, exclusions: list[Exclusion]) -> Run:
    """The run with the chosen readings flagged ``excluded: <reason>`` (kept, not deleted)."""
    points = run.points.copy()
    for exclusion in exclusions:
        if exclusion.line is not None:
            chosen = points["line"] == exclusion.line
            what = f"line {exclusion.line}"
        else:
            chosen = np.isclose(points["molality_mol_kg"], exclusion.molality_mol_kg,
                                rtol=1e-9, atol=0.0)
            what = f"molality {exclusion.molality_mol_kg:g} mol/kg"
        if not chosen.any():
            raise InputError(f"no reading at {what} to exclude; check --exclude",
                             file=str(run.path), column="--exclude")
        points.loc[chosen & points["flag"].isna(), "flag"] = f"excluded: {exclusion.reason}"
    return dataclasses.replace(run, points=points)


def usable_points(run: Run) -> pd.DataFrame:
    """The rows of ``run`` that enter the fit (no flag)."""
    return run.points[run.points["flag"].isna()].reset_index(drop=True)


__all__ = ["KNOWN_COLUMNS", "KNOWN_METADATA_KEYS", "Exclusion", "Run", "RunMetadata",
           "exclude_points", "read_run", "read_runs", "runs_from_frame", "usable_points"]

