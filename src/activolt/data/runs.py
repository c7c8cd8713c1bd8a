"""Reading and validating a run: the table of readings (CSV) and its metadata (TOML).

The contract is in ``shared/design.md`` and the README: one row per solution measured, units in
the column names, metadata next to the table with the same stem. Every problem is reported as an
:class:`~activolt.errors.InputError` naming the file, the line and the column and saying what to
do. Inputs are never modified.
"""

from __future__ import annotations

import csv
import dataclasses
import difflib
import functools
import gc
import hashlib
import itertools
import math
import re
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from ..chemistry.cells import DiagramError, cell_from_diagram, cell_summary
from ..chemistry.electrolytes import Electrolyte, nernst_factor, parse_electrolyte
from ..constants import (
    ATMOSPHERE_PA,
    FARADAY_C_MOL,
    GAS_CONSTANT_J_MOL_K,
    INTERNATIONAL_VOLT_V,
    STANDARD_PRESSURE_PA,
    ZERO_CELSIUS_K,
)
from ..errors import InputError
from ..physics.corrections import water_vapour_pressure

#: Columns the reader understands, each with its unit as written in the name.
KNOWN_COLUMNS: tuple[str, ...] = (
    "molality_mol_kg", "emf_V", "emf_mV", "u_emf_V", "u_emf_mV", "u_molality_mol_kg",
    "temperature_C", "temperature_K", "pressure_kPa", "pressure_hPa", "pressure_mmHg",
    "electrode", "series", "note",
)
#: Barometric-pressure columns and the factor of their unit to pascals [Pa per unit]; the
#: conventional millimetre of mercury is 133.322387415 Pa (NIST SP 811, 2008, B.8).
PRESSURE_COLUMNS: dict[str, float] = {"pressure_kPa": 1e3, "pressure_hPa": 1e2,
                                      "pressure_mmHg": 133.322387415}
#: The largest run table read [bytes] and the most data rows taken; a dilution series is a
#: few kilobytes and tens of rows, and nothing larger is read into memory.
MAX_TABLE_BYTES: int = 32 * 1024 * 1024
MAX_ROWS: int = 200_000
#: The largest metadata file read [bytes].
MAX_METADATA_BYTES: int = 1024 * 1024
#: Plausible ranges of the inputs: molality [mol/kg] (below 1e-7 mol/kg the ions of water
#: itself compete), |EMF| [V], electrons per formula unit, u(EMF) [V].
MOLALITY_RANGE_MOL_KG: tuple[float, float] = (1e-7, 30.0)
ELECTRONS_RANGE: tuple[int, int] = (1, 8)
U_EMF_RANGE_V: tuple[float, float] = (1e-9, 0.1)
#: Columns read now but whose values the reduction does not use yet (named in a warning).
NOT_YET_USED_COLUMNS: tuple[str, ...] = ()
#: Metadata keys the reader understands.
KNOWN_METADATA_KEYS: tuple[str, ...] = (
    "electrolyte", "electrons", "temperature_C", "temperature_K", "cell",
    "standard_pressure_kPa", "pressure_kPa", "bubbler_depth_cm", "slope_factor",
    "u_temperature_K", "u_pressure_kPa", "u_stock_molality_relative", "u_electrode_offset_mV",
    "solute_vapour_lowering", "volt_unit",
    "calibration_method", "master_potential_mV", "u_master_potential_mV",
    "acceptance_tolerance_mV", "acceptance_reference", "nominal_potential_mV", "decision_rule",
    "voltmeter_u_mV",
    "lab", "operator", "instrument", "date", "description", "electrode", "notes",
    "customer", "approved_by", "calibration_location", "item_description",
)
_TEXT_METADATA_KEYS = ("lab", "operator", "instrument", "date", "description", "electrode",
                       "notes", "customer", "approved_by", "calibration_location",
                       "item_description")
_LIQUID_WATER_C = (0.0, 100.0)
_LARGEST_MOLALITY_MOL_KG = MOLALITY_RANGE_MOL_KG[1]
_LARGEST_EMF_V = 5.0
_PRESSURE_RANGE_KPA = (50.0, 150.0)
#: Cells read as missing (lower case); every spelling of NaN (nan, -nan, +nan, NaN) is too.
_MISSING = {"", "nan", "-nan", "+nan", "na", "n/a", "#n/a", "-"}
#: A plain decimal number (ASCII digits only: no digit-group underscores, no other scripts).
_PLAIN_NUMBER = re.compile(r"[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?")
#: Line ends: LF, CRLF and CR only (the csv module's own), never the other Unicode breaks.
_LINE_END = re.compile(r"\r\n|\r|\n")
#: What str.splitlines breaks lines at besides LF, CRLF and CR.
_OTHER_LINE_BREAKS = "\x0b\x0c\x1c\x1d\x1e\x85\u2028\u2029"
#: Separators recognised in the header, with the names used in messages.
_SEPARATORS = {",": "comma", ";": "semicolon", "\t": "tab"}
#: Column names that look like a pressure but are none activolt reads.
_PRESSURE_LIKE = re.compile(r"press|baro|^p_?(bar|atm)", re.IGNORECASE)
#: Volts the EMF column may be written in, with the factor to absolute volts [V per unit].
VOLT_UNITS: dict[str, float] = {"absolute": 1.0, "international": INTERNATIONAL_VOLT_V}
#: Choices of the calibration keys of the metadata (a batch of reference electrodes).
CALIBRATION_METHODS: tuple[str, ...] = ("hydrogen", "master")
ACCEPTANCE_REFERENCES: tuple[str, ...] = ("median", "nominal", "catalogue")
DECISION_RULES: tuple[str, ...] = ("simple", "guard-banded")


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
    u_stock_molality_relative : float
        Relative standard uncertainty of the stock solution every molality was made from,
        common to all rows — and to every run that names the same value in a temperature
        study [-].
    u_electrode_offset_V : float
        Standard uncertainty of an offset of the electrodes (a batch used throughout), common
        to all rows and runs in the same way [V].
    solute_vapour_lowering : bool
        Whether the water vapour over the solution is taken as a_w p_w (a_w from the fitted
        model) rather than p_w when the gas partial pressure is computed.
    volt_unit : str
        The volt the EMF and u(EMF) columns are written in: ``"absolute"`` (SI, the default) or
        ``"international"`` (before 1948); the reader converts to absolute volts.
    calibration : mapping
        The calibration keys of a batch of reference electrodes, in SI units: ``method``
        (``"hydrogen"`` or ``"master"``), ``master_potential_V``, ``u_master_potential_V``,
        ``tolerance_V``, ``reference`` (``"median"``, ``"nominal"``, ``"catalogue"``),
        ``nominal_potential_V``, ``decision_rule`` (``"simple"``, ``"guard-banded"``),
        ``voltmeter_u_V``; only the keys given (method, reference and rule always). Empty
        when the metadata declares no calibration.
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
    u_stock_molality_relative: float = 0.0
    u_electrode_offset_V: float = 0.0
    solute_vapour_lowering: bool = False
    volt_unit: str = "absolute"
    calibration: Mapping[str, Any] = field(default_factory=dict)


class _PointsTable:
    """The descriptor behind :attr:`Run.points`: the table a run was built with, or, for a
    run of a table of many series (:func:`read_runs`), a :class:`_RowsToMake` of the table's
    ordered columns, made into the run's own frame on first use. Ten thousand frames take
    about 0.6 s to make; a batch makes each in the worker process that reduces its series,
    and a series never asked for its table makes none (:meth:`Run.column` reads a column
    without it)."""

    def __get__(self, run: Run | None, owner: type | None = None) -> pd.DataFrame:
        if run is None:  # the class's attribute: no default for the field
            raise AttributeError("points")
        points = run.__dict__["points"]
        if type(points) is _RowsToMake:
            points = run.__dict__["points"] = points.table.frame(points.first, points.last)
        return points

    def __set__(self, run: Run, points: pd.DataFrame) -> None:
        run.__dict__["points"] = points


class _RowsToMake(NamedTuple):
    """Rows ``first:last`` of a table's ordered columns (:class:`_OrderedTable`), to be made
    into a frame when first asked for."""

    table: _OrderedTable
    first: int
    last: int


#: The numeric columns of a run's points (:attr:`Run.arrays`).
NUMERIC_COLUMNS = ("line", "molality_mol_kg", "emf_V", "u_emf_V", "u_molality_mol_kg",
                   "temperature_K", "pressure_Pa")


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
    points: pd.DataFrame = _PointsTable()  # type: ignore[assignment]
    metadata: RunMetadata
    warnings: tuple[str, ...] = ()

    @functools.cached_property
    def usable(self) -> np.ndarray:
        """Which rows of :attr:`points` enter the fit (no flag), bool, read-only (worked out
        once per run: the points are not changed after the run is built)."""
        mask = self.points["flag"].isna().to_numpy(bool)
        mask.flags.writeable = False
        return mask

    @functools.cached_property
    def arrays(self) -> Mapping[str, np.ndarray]:
        """The numeric columns of :attr:`points` (every row) as read-only float arrays:
        ``line``, ``molality_mol_kg``, ``emf_V``, ``u_emf_V``, ``u_molality_mol_kg``,
        ``temperature_K``, ``pressure_Pa`` (taken out of the table once per run)."""
        found = {}
        for name in NUMERIC_COLUMNS:
            column = self.points[name].to_numpy(float, copy=True)
            column.flags.writeable = False
            found[name] = column
        return MappingProxyType(found)

    @property
    def column_names(self) -> pd.Index:
        """The labels of the columns of :attr:`points`, in order (without making the points
        of a run of a table of many series)."""
        points = self.__dict__["points"]
        return points.table.names if type(points) is _RowsToMake else points.columns

    def column(self, name: str) -> Any:
        """The values of the column ``name`` of :attr:`points` as the table holds them
        (:func:`column_values`: a numpy array for a numpy dtype, else pandas' extension
        array), read only — for a run of a table of many series whose points are not made
        yet, taken from the table's columns without making them."""
        points = self.__dict__["points"]
        if type(points) is _RowsToMake:
            return points.table.column(name, points.first, points.last)
        return column_values(points, name)

    @functools.cached_property
    def series(self) -> str:
        """The name of the series the run holds (``""`` for an unnamed series or a table
        without a ``series`` column)."""
        names = self.points["series"]
        return str(names.iloc[0]) if len(names) else ""

    @functools.cached_property
    def emf_uncertainty_given(self) -> bool:
        """Whether every usable reading has a stated standard uncertainty."""
        usable = self.usable
        return bool(usable.any() and not np.isnan(self.arrays["u_emf_V"][usable]).any())


def column_values(frame: pd.DataFrame | Mapping[str, Any], name: str) -> Any:
    """The values of the column ``name`` as the table holds them, without building a Series:
    a numpy array for a numpy dtype, else pandas' extension array. Not a copy: read only.
    ``frame`` may also be the columns a table is made of (name → array), read as the table
    made of them would be.

    Examples
    --------
    >>> column_values(pd.DataFrame({"m": [0.1, 0.2], "n": [1, 2]}), "n")
    array([1, 2])
    """
    if isinstance(frame, Mapping):
        return frame[name]
    take = getattr(frame, "_get_column_array", None)
    if take is not None:
        where = frame.columns.get_loc(name)
        if isinstance(where, int):
            return take(where)
    column = frame[name]  # a pandas without it, or a name that several columns share
    return column.to_numpy() if isinstance(column.dtype, np.dtype) else column.array


def _decode(path: Path, raw: bytes) -> str:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = raw[: error.start].count(b"\n") + 1
        raise InputError(
            "the file is not UTF-8 text; save it as UTF-8 (CSV UTF-8) and try again",
            file=str(path), line=line,
        ) from None


def _read_bounded(path: Path, limit: int, what: str) -> bytes:
    """At most ``limit`` bytes of ``path``; a larger file (or endless input) is refused."""
    try:
        with open(path, "rb") as handle:
            raw = handle.read(limit + 1)
    except OSError as error:
        raise InputError(f"cannot read the {what} ({error.strerror}); check the path",
                         file=str(path)) from None
    if len(raw) > limit:
        raise InputError(f"the {what} is larger than {limit // (1024 * 1024)} MB, more than "
                         "activolt reads (a dilution series is a few kilobytes); check that "
                         "this is the right file, or split it", file=str(path))
    return raw


def _is_missing(text: str) -> bool:
    """Whether a cell is empty or says 'not available' (every spelling of NaN included)."""
    return text.strip().lower() in _MISSING


def _number(text: str, decimal_comma: bool, path: Path, line: int, column: str) -> float:
    cleaned = text.strip()
    if decimal_comma:
        cleaned = cleaned.replace(",", ".")
    if cleaned.lstrip("+-").lower() in ("inf", "infinity"):
        raise InputError(f"'{cleaned}' is not a finite number", file=str(path), line=line,
                         column=column)
    if not _PLAIN_NUMBER.fullmatch(cleaned):
        raise InputError(
            f"'{text.strip()}' is not a number; write a plain decimal number"
            + (" (decimal comma or point)" if decimal_comma else " with a decimal point"),
            file=str(path), line=line, column=column,
        )
    value = float(cleaned)
    if math.isinf(value):
        raise InputError(f"'{text.strip()}' is not a finite number (too large)",
                         file=str(path), line=line, column=column)
    return value


def _rows(path: Path, text: str
          ) -> tuple[int, list[str], list[tuple[int, list[str]]], str]:
    """Header line number, column names, data rows with their line numbers, the separator."""
    # LF, CRLF and CR end a line; form feeds, U+2028 and the like inside a field do not
    numbered = enumerate(_LINE_END.split(text), start=1)
    content = [(n, line) for n, line in numbered
               if line.strip() and not line.lstrip().startswith("#")]
    if not content:
        raise InputError("the run table is empty; it needs a header line and one row per "
                         "solution", file=str(path))
    if len(content) > MAX_ROWS + 1:
        raise InputError(f"the run table has {len(content) - 1} rows, more than the {MAX_ROWS}"
                         " activolt reads; split it into series files", file=str(path),
                         line=content[MAX_ROWS + 1][0])
    header_line, header = content[0]
    counts = {sep: header.count(sep) for sep in _SEPARATORS}
    separator = max(_SEPARATORS, key=lambda sep: (counts[sep], sep == ","))
    parsed: list[tuple[int, list[str]]] = []
    for n, line in content:  # one line at a time: a stray quote must not swallow the next rows
        try:
            parsed.append((n, next(csv.reader([line], delimiter=separator, strict=True))))
        except csv.Error as error:
            if "field larger than field limit" in str(error):
                longest = max(len(part) for part in line.split(separator))
                raise InputError(f"a field is too long ({longest} characters; at most "
                                 f"{csv.field_size_limit()}); check the row", file=str(path),
                                 line=n) from None
            raise InputError('a quote (") is not closed or is followed by text; quote whole '
                             "fields only, or remove the quote", file=str(path), line=n) from None
    names = [name.strip() for name in parsed[0][1]]
    while len(names) > 1 and names[-1] == "":  # empty trailing columns (a spreadsheet's ;;)
        names.pop()
    rows = []
    for n, fields in parsed[1:]:
        if len(fields) > len(names) and not any(f.strip() for f in fields[len(names):]):
            fields = fields[: len(names)]
        rows.append((n, fields))
    return header_line, names, rows, separator


def _plain_rows(text: str
                ) -> tuple[int, list[str], list[int], list[list[str]], str] | None:
    """What :func:`_rows` gives, by splitting at the separator, for a table without quotes
    whose rows all have as many fields as the header names — the header line number, the
    column names, the data lines' numbers, the cells column by column, the separator; None
    for any other table (quotes, fields longer than the csv module takes, rows with other
    numbers of fields, too many rows), which :func:`_rows` then reads or refuses."""
    if '"' in text or "\0" in text:
        return None
    # str.splitlines breaks at LF, CRLF and CR, and at other characters the reader keeps
    # within a line; without those it gives the same lines (but no empty last one)
    lines = (_LINE_END.split(text) if any(c in text for c in _OTHER_LINE_BREAKS)
             else text.splitlines())
    if not lines or max(map(len, lines)) > csv.field_size_limit():
        return None
    stripped = list(map(str.strip, lines))  # a line is blank when this is empty
    if "#" in text:
        kept = [bool(line) and line[0] != "#" for line in stripped]
    else:
        kept = list(map(bool, stripped))
    numbers = list(itertools.compress(range(1, len(lines) + 1), kept))
    if not numbers or len(numbers) > MAX_ROWS + 1:
        return None
    header_line = numbers[0]
    header = lines[header_line - 1]
    counts = {sep: header.count(sep) for sep in _SEPARATORS}
    separator = max(_SEPARATORS, key=lambda sep: (counts[sep], sep == ","))
    names = [name.strip() for name in header.split(separator)]
    width = len(names)
    while len(names) > 1 and names[-1] == "":
        names.pop()
    if len(names) != width:
        return None
    data = list(itertools.compress(lines, kept))[1:]
    if data and set(map(str.count, data, itertools.repeat(separator))) != {width - 1}:
        return None
    # every row has width fields: the cells of all rows, one after the other
    cells = separator.join(data).split(separator) if data else []
    return header_line, names, numbers[1:], [cells[j::width] for j in range(width)], separator


#: Characters of a column of plain numbers, one a line (a '-' cell or an empty one is
#: told apart by float()).
_NOT_IN_NUMBERS = re.compile(r"[^0-9.eE+\- \t\n]")


def _number_column(cells: list[str], decimal_comma: bool
                   ) -> tuple[np.ndarray, np.ndarray] | None:
    """The cells of one column as numbers, NaN where missing, and where they are missing;
    None when a cell is neither a plain decimal number nor missing, or too large (what
    :func:`_number` and :func:`_is_missing` would say of each cell, without their messages).

    Within the characters of plain numbers (digits, ``.``, ``e``, ``E``, signs, spaces and
    tabs) float() reads exactly the plain decimal numbers, with the spaces and tabs around
    them: so a column float() reads whole, after those characters were checked, is a column
    of plain numbers; any other column is looked at cell by cell."""
    joined = "\n".join(cells)
    if decimal_comma:
        joined = joined.replace(",", ".")
    missing = np.zeros(len(cells), dtype=bool)
    values = None
    if not _NOT_IN_NUMBERS.search(joined):
        try:
            values = np.fromiter(map(float, joined.split("\n") if decimal_comma else cells),
                                 dtype=float, count=len(cells))
        except ValueError:
            values = None
    if values is None:
        values = np.empty(len(cells))
        for i, text in enumerate(cells):
            cleaned = text.strip()
            if cleaned.lower() in _MISSING:
                values[i] = math.nan
                missing[i] = True
                continue
            if decimal_comma:
                cleaned = cleaned.replace(",", ".")
            if not _PLAIN_NUMBER.fullmatch(cleaned):
                return None
            values[i] = float(cleaned)
    if np.isinf(values).any():
        return None
    return values, missing


def _points_by_columns(layout: _Layout, line_numbers: list[int],
                       cells: list[list[str]]) -> pd.DataFrame | None:
    """The points of a table split by :func:`_plain_rows`, every column parsed and checked
    at once; None when any cell is one :func:`_points_by_rows` refuses (it then says which).
    The same points as :func:`_points_by_rows`, value for value and type for type."""
    names = layout.names
    columns = dict(zip(names, cells, strict=True))

    def read(column: str) -> tuple[np.ndarray, np.ndarray] | None:
        return _number_column(columns[column], layout.decimal_comma)

    found = read("molality_mol_kg")
    if found is None or found[1].any():
        return None
    molality = found[0]
    low_m, high_m = MOLALITY_RANGE_MOL_KG
    if ((molality <= 0.0) | (molality > high_m) | (molality < low_m)).any():
        return None

    found = read(layout.emf_column)
    if found is None:
        return None
    emf, no_reading = found[0] * layout.emf_scale, found[1]
    with np.errstate(invalid="ignore"):
        if (np.abs(emf) >= _LARGEST_EMF_V).any():
            return None
    n = len(line_numbers)
    u_emf = np.full(n, math.nan)
    if layout.u_emf_column is not None:
        found = read(layout.u_emf_column)
        if found is None:
            return None
        u_emf = found[0] * layout.u_emf_scale
        low_u, high_u = U_EMF_RANGE_V
        given = ~found[1]
        if not ((u_emf[given] > 0.0) & (low_u <= u_emf[given])
                & (u_emf[given] <= high_u)).all():
            return None
    u_molality = np.zeros(n)
    if "u_molality_mol_kg" in columns:
        found = read("u_molality_mol_kg")
        if found is None:
            return None
        given = ~found[1]
        if ((found[0][given] < 0.0) | (found[0][given] >= molality[given])).any():
            return None
        u_molality[given] = found[0][given]
    temperature_K = np.full(n, math.nan)
    if layout.temperature_column is not None:
        found = read(layout.temperature_column)
        if found is None:
            return None
        given = ~found[1]
        value = found[0][given]
        if layout.temperature_column.endswith("C"):
            # _kelvin rounds with Python's round(); once per distinct value
            distinct, where = np.unique(value, return_inverse=True)
            value = np.array([_kelvin(t) for t in distinct.tolist()], dtype=float)[where]
        low, high = _LIQUID_WATER_C
        celsius = value - ZERO_CELSIUS_K
        if not ((low - 1e-9 <= celsius) & (celsius <= high + 1e-9)).all():
            return None
        temperature_K[given] = np.minimum(np.maximum(value, low + ZERO_CELSIUS_K),
                                          high + ZERO_CELSIUS_K)
    pressure_Pa = np.full(n, math.nan)
    if layout.pressure_column is not None:
        found = read(layout.pressure_column)
        if found is None:
            return None
        given = ~found[1]
        pressure_kPa = found[0][given] * PRESSURE_COLUMNS[layout.pressure_column] / 1e3
        low, high = _PRESSURE_RANGE_KPA
        if not ((low <= pressure_kPa) & (pressure_kPa <= high)).all():
            return None
        pressure_Pa[given] = pressure_kPa * 1e3
    flag: list[str | None] = [None] * n
    for i in np.flatnonzero(no_reading).tolist():
        flag[i] = "no reading"
    points: dict[str, Any] = {
        "line": np.array(line_numbers, dtype=np.int64), "flag": flag,
        "molality_mol_kg": molality, "emf_V": emf, "u_emf_V": u_emf,
        "u_molality_mol_kg": u_molality, "temperature_K": temperature_K,
        "pressure_Pa": pressure_Pa}
    for text_column in ("electrode", "series", "note"):
        points[text_column] = (list(map(str.strip, columns[text_column]))
                               if text_column in columns else [""] * n)
    return pd.DataFrame(points)


def _columns_found(names: list[str], separator: str) -> str:
    shown = ", ".join(f"'{name}'" for name in names[:12]) + (", …" if len(names) > 12 else "")
    return f"with {_SEPARATORS[separator]} as separator the header has {shown}"


def _nearest(name: str, candidates: tuple[str, ...] | list[str]) -> str | None:
    lowered = {c.lower(): c for c in candidates}
    match = difflib.get_close_matches(name.lower(), list(lowered), n=1, cutoff=0.6)
    return lowered[match[0]] if match else None


def _check_columns(path: Path, header_line: int, names: list[str],
                   separator: str = ",") -> list[str]:
    warnings: list[str] = []
    seen: set[str] = set()
    for name in names:
        if name == "":
            raise InputError("a column has no name; name every column in the header ("
                             + _columns_found(names, separator) + ")",
                             file=str(path), line=header_line)
        if name in seen:
            raise InputError("the column appears twice; keep one of them", file=str(path),
                             line=header_line, column=name)
        seen.add(name)
    unknown = [name for name in names if name not in KNOWN_COLUMNS]
    for name in unknown:
        nearest = _nearest(name, KNOWN_COLUMNS)
        hint = f" (did you mean '{nearest}'?)" if nearest else ""
        warnings.append(f"column '{name}' is not one activolt reads; it is ignored{hint}")
    for name in names:
        if name in NOT_YET_USED_COLUMNS:
            warnings.append(
                f"column '{name}' is read and kept in the points table but not used in the "
                "reduction yet (no gas-pressure correction is applied)"
            )

    def missing(what: str, wanted: tuple[str, ...]) -> InputError:
        nearest = next((n for n in unknown if _nearest(n, wanted)), None)
        hint = (f"; is '{nearest}' meant to be '{_nearest(nearest, wanted)}'?"
                if nearest else "")
        return InputError(f"{what}{hint} ({_columns_found(names, separator)})",
                          file=str(path), line=header_line)

    if "molality_mol_kg" not in seen:
        raise missing("the column 'molality_mol_kg' is missing; add it (molality in mol/kg)",
                      ("molality_mol_kg",))
    for group, what in ((("emf_V", "emf_mV"), "the EMF"), (("u_emf_V", "u_emf_mV"), "u(EMF)"),
                        (("temperature_C", "temperature_K"), "the temperature"),
                        (tuple(PRESSURE_COLUMNS), "the barometric pressure")):
        present = [g for g in group if g in seen]
        if len(present) > 1:
            raise InputError(f"both '{present[0]}' and '{present[1]}' give {what}; keep one",
                             file=str(path), line=header_line, column=present[1])
    if "emf_V" not in seen and "emf_mV" not in seen:
        raise missing("no EMF column; add 'emf_V' (volts) or 'emf_mV' (millivolts)",
                      ("emf_V", "emf_mV"))
    return warnings


class _Layout(NamedTuple):
    """What the header of a run table says: where it is, its columns and how to read them."""

    path: Path
    header_line: int
    names: list[str]
    separator: str
    emf_column: str
    u_emf_column: str | None
    temperature_column: str | None
    pressure_column: str | None

    @property
    def decimal_comma(self) -> bool:
        return self.separator != ","

    @property
    def emf_scale(self) -> float:
        return 1.0 if self.emf_column == "emf_V" else 1e-3

    @property
    def u_emf_scale(self) -> float:
        return 1.0 if self.u_emf_column == "u_emf_V" else 1e-3


def _layout(path: Path, header_line: int, names: list[str], separator: str,
            has_rows: bool) -> tuple[_Layout, list[str]]:
    """The header's columns checked (InputError naming the problem), and the warnings."""
    canonical = {k.lower(): k for k in KNOWN_COLUMNS}  # documented names in any case
    names = [canonical.get(name.lower(), name) for name in names]
    warnings = _check_columns(path, header_line, names, separator)
    if not has_rows:
        raise InputError("the run table has a header but no readings", file=str(path),
                         line=header_line)
    layout = _Layout(
        path=path, header_line=header_line, names=names, separator=separator,
        emf_column="emf_V" if "emf_V" in names else "emf_mV",
        u_emf_column=next((c for c in ("u_emf_V", "u_emf_mV") if c in names), None),
        temperature_column=next((c for c in ("temperature_C", "temperature_K") if c in names),
                                None),
        pressure_column=next((c for c in PRESSURE_COLUMNS if c in names), None))
    return layout, warnings


def _read_table(path: Path, text: str) -> tuple[pd.DataFrame, list[str]]:
    """The rows as points, and warnings; ``points.attrs`` keeps ``emf_column`` (as written in
    the header) and ``pressure_like`` (columns that look like a barometric pressure in a unit
    activolt does not read) for the checks that need the metadata.

    A table of plain cells (no quotes; every row as many fields as the header names) is read
    column by column (:func:`_points_by_columns`); when a cell is anything but a plain number
    or a missing value within its column's range, the table is read again row by row
    (:func:`_points_by_rows`), which raises the InputError naming the first bad row and cell.
    Both give the same points."""
    plain = _plain_rows(text)
    points = None
    if plain is not None:
        header_line, names, line_numbers, cells, separator = plain
        layout, warnings = _layout(path, header_line, names, separator, bool(line_numbers))
        points = _points_by_columns(layout, line_numbers, cells)
    if points is None:
        header_line, names, rows, separator = _rows(path, text)
        layout, warnings = _layout(path, header_line, names, separator, bool(rows))
        points = _points_by_rows(layout, rows)
    return _finish_points(layout, points, warnings), warnings


def _points_by_rows(layout: _Layout, rows: list[tuple[int, list[str]]]) -> pd.DataFrame:
    """The points, one row at a time; an InputError at the first bad row."""
    path, names, separator = layout.path, layout.names, layout.separator
    decimal_comma = layout.decimal_comma
    emf_column, emf_scale = layout.emf_column, layout.emf_scale
    u_emf_column, u_emf_scale = layout.u_emf_column, layout.u_emf_scale
    temperature_column, pressure_column = layout.temperature_column, layout.pressure_column
    low_m, high_m = MOLALITY_RANGE_MOL_KG
    low_u, high_u = U_EMF_RANGE_V

    records: list[dict[str, Any]] = []
    for line, fields in rows:
        if len(fields) != len(names):
            raise InputError(
                f"the row has {len(fields)} fields but the header names {len(names)} columns; "
                "check for a missing or extra separator"
                + (" (with ';' as separator, write decimal commas without quotes)"
                   if separator == ";" else " (a decimal comma needs ';' as separator)"
                   if separator == "," else ""),
                file=str(path), line=line,
            )
        cells = dict(zip(names, fields, strict=True))

        def number(column: str, cells: dict[str, str] = cells, line: int = line) -> float:
            return _number(cells[column], decimal_comma, path, line, column)

        def is_missing(column: str, cells: dict[str, str] = cells) -> bool:
            return _is_missing(cells[column])

        record: dict[str, Any] = {"line": line, "flag": None}
        if is_missing("molality_mol_kg"):
            raise InputError("the molality is empty; give the molality of every solution",
                             file=str(path), line=line, column="molality_mol_kg")
        molality = number("molality_mol_kg")
        if molality <= 0.0:
            raise InputError(f"molality {molality:g} mol/kg is not positive; a dilution series "
                             "needs molalities > 0", file=str(path), line=line,
                             column="molality_mol_kg")
        if molality > high_m:
            raise InputError(f"molality {molality:g} mol/kg is implausibly large (> "
                             f"{high_m:g}); check the unit (mol/kg)",
                             file=str(path), line=line, column="molality_mol_kg")
        if molality < low_m:
            raise InputError(f"molality {molality:g} mol/kg is implausibly small (< {low_m:g}, "
                             "where the ions of water itself compete); check the unit (mol/kg)",
                             file=str(path), line=line, column="molality_mol_kg")
        record["molality_mol_kg"] = molality

        if is_missing(emf_column):
            record["emf_V"] = math.nan
            record["flag"] = "no reading"
        else:
            emf = number(emf_column) * emf_scale
            if abs(emf) >= _LARGEST_EMF_V:
                hint = ("it looks like millivolts in a volt column; name the column 'emf_mV'"
                        if emf_column == "emf_V" else "check the unit of the column")
                raise InputError(f"EMF {emf:g} V is implausible for a cell (|EMF| ≥ "
                                 f"{_LARGEST_EMF_V:g} V); {hint}", file=str(path), line=line,
                                 column=emf_column)
            record["emf_V"] = emf

        u_emf = math.nan
        if u_emf_column is not None and not is_missing(u_emf_column):
            u_emf = number(u_emf_column) * u_emf_scale
            if u_emf <= 0.0:
                raise InputError("a standard uncertainty must be positive; leave the column out "
                                 "if it is not known", file=str(path), line=line,
                                 column=u_emf_column)
            if not low_u <= u_emf <= high_u:
                raise InputError(f"u(EMF) {u_emf:g} V is implausible (expected {low_u:g} to "
                                 f"{high_u:g} V); check the unit of the column",
                                 file=str(path), line=line, column=u_emf_column)
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
            temperature_K = _check_temperature(
                _kelvin(value) if temperature_column.endswith("C") else value,
                path, line, temperature_column)
        record["temperature_K"] = temperature_K

        pressure_Pa = math.nan
        if pressure_column is not None and not is_missing(pressure_column):
            value = number(pressure_column)
            pressure_kPa = value * PRESSURE_COLUMNS[pressure_column] / 1e3
            unit = pressure_column.removeprefix("pressure_")
            low, high = _PRESSURE_RANGE_KPA
            if not low <= pressure_kPa <= high:
                given = f"{value:g} {unit}" + (f" ({pressure_kPa:.4g} kPa)" if unit != "kPa"
                                               else "")
                raise InputError(f"barometric pressure {given} is implausible "
                                 f"(expected {low:g}–{high:g} kPa); check the unit ({unit})",
                                 file=str(path), line=line, column=pressure_column)
            pressure_Pa = pressure_kPa * 1e3
        record["pressure_Pa"] = pressure_Pa
        for text_column in ("electrode", "series", "note"):
            record[text_column] = cells[text_column].strip() if text_column in cells else ""
        records.append(record)
    return pd.DataFrame.from_records(records)


def _finish_points(layout: _Layout, points: pd.DataFrame, warnings: list[str]) -> pd.DataFrame:
    """The checks over every row (mV readings all small, u(EMF) given on some rows only) and
    the reader's notes in ``points.attrs``; warnings are added to ``warnings``."""
    path, names, header_line = layout.path, layout.names, layout.header_line
    emf_column, u_emf_column = layout.emf_column, layout.u_emf_column
    pressure_column = layout.pressure_column
    if emf_column == "emf_mV":
        usable = points["emf_V"].dropna()
        if len(usable) and (usable.abs() < 5e-3).all():
            # refused in _with_metadata unless the readings are differences to a master
            points.attrs["small_emf_mV"] = str(path)
    if u_emf_column is not None:
        read = points["emf_V"].notna()
        stated = points["u_emf_V"].notna()
        if (read & stated).any() and not stated[read].all():
            first = int(points.loc[read & ~stated, "line"].iloc[0])
            raise InputError("u(EMF) is empty here but given on other rows; give it for every "
                             "reading, or leave the column out (the fit then takes the scatter "
                             "from the residuals)", file=str(path), line=first,
                             column=u_emf_column)
        if not stated.any():
            warnings.append(f"column '{u_emf_column}' is empty; the fit takes the scatter of "
                            "the readings from the residuals")
    points.attrs["emf_column"] = emf_column
    points.attrs["pressure_column"] = pressure_column
    points.attrs["header_line"] = header_line
    points.attrs["pressure_like"] = tuple(n for n in names if n not in KNOWN_COLUMNS
                                          and _PRESSURE_LIKE.search(n))
    return points


def _kelvin(temperature_C: float) -> float:
    """°C → K, rounded to 1e-9 K so that 0 °C and 100 °C are exactly 273.15 K and 373.15 K."""
    return round(temperature_C + ZERO_CELSIUS_K, 9)


def _check_temperature(temperature_K: float, path: Path, line: int | None,
                       column: str) -> float:
    """The temperature if it lies in liquid water (values within 1e-9 K of an end are moved
    onto it); an InputError otherwise."""
    low, high = _LIQUID_WATER_C
    # both ends included, as in activolt.physics.water (0 °C, the ice point, is a classic run
    # temperature)
    celsius = temperature_K - ZERO_CELSIUS_K
    if not low - 1e-9 <= celsius <= high + 1e-9:
        raise InputError(
            f"temperature {celsius:.2f} °C is outside liquid water "
            f"({low:g}–{high:g} °C); check the value and its unit (°C or K)",
            file=str(path), line=line, column=column,
        )
    return min(max(temperature_K, low + ZERO_CELSIUS_K), high + ZERO_CELSIUS_K)


def _key_line(text: str, key: str) -> int | None:
    match = re.search(rf"^\s*{re.escape(key)}\s*=", text, flags=re.MULTILINE)
    return text[: match.start()].count("\n") + 1 if match else None


def _read_metadata_text(path: Path) -> tuple[dict[str, Any], str]:
    text = _decode(path, _read_bounded(path, MAX_METADATA_BYTES, "metadata file"))
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
            nearest = _nearest(key, KNOWN_METADATA_KEYS)
            warnings.append(f"{where}: key '{key}' is not one activolt reads; it is ignored"
                            + (f" (did you mean '{nearest}'?)" if nearest else ""))
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
    if stoichiometry is not None and stoichiometry.gas_coefficients:
        for key in meta:
            if key not in KNOWN_METADATA_KEYS and _PRESSURE_LIKE.search(key):
                raise InputError(f"'{key}' is not a key activolt reads, and the cell holds a gas "
                                 "whose pressure corrects every reading; give the barometric "
                                 "pressure as pressure_kPa (in kilopascals)", file=where,
                                 line=_key_line(text, key), column=key)

    temperature_K = None
    if "temperature_C" in merged and "temperature_K" in merged:
        raise fail("temperature_K", "give temperature_C or temperature_K, not both")
    for key in ("temperature_C", "temperature_K"):
        if key in merged:
            value = merged[key]
            if isinstance(value, bool) or not isinstance(value, int | float):
                raise fail(key, f"{key} must be a number, got {value!r}")
            try:
                temperature_K = _check_temperature(
                    _kelvin(float(value)) if key == "temperature_C" else float(value),
                    Path(where), None, key)
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
    for key, limit in (("u_temperature_K", 5.0), ("u_pressure_kPa", 5.0),
                       ("u_stock_molality_relative", 0.05), ("u_electrode_offset_mV", 10.0)):
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

    calibration = _calibration(merged, fail)
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
        u_stock_molality_relative=common_u["u_stock_molality_relative"],
        u_electrode_offset_V=common_u["u_electrode_offset_mV"] * 1e-3,
        solute_vapour_lowering=lowering, volt_unit=volt_unit, calibration=calibration,
    )
    return metadata, warnings


_CALIBRATION_KEYS = ("calibration_method", "master_potential_mV", "u_master_potential_mV",
                     "acceptance_tolerance_mV", "acceptance_reference", "nominal_potential_mV",
                     "decision_rule", "voltmeter_u_mV")


def _calibration(merged: Mapping[str, Any], fail: Any) -> dict[str, Any]:
    """The calibration keys, checked and in SI units; {} when none is given."""
    if not any(key in merged for key in _CALIBRATION_KEYS):
        return {}
    out: dict[str, Any] = {}
    for key, name, choices, default in (
            ("calibration_method", "method", CALIBRATION_METHODS, "hydrogen"),
            ("acceptance_reference", "reference", ACCEPTANCE_REFERENCES, "median"),
            ("decision_rule", "decision_rule", DECISION_RULES, "simple")):
        value = merged.get(key, default)
        if not isinstance(value, str) or value not in choices:
            raise fail(key, f"{key} must be " + " or ".join(f'"{c}"' for c in choices)
                       + f", got {value!r}")
        out[name] = value
    for key, name, low, high in (
            ("master_potential_mV", "master_potential_V", -3000.0, 3000.0),
            ("nominal_potential_mV", "nominal_potential_V", -3000.0, 3000.0),
            ("u_master_potential_mV", "u_master_potential_V", 0.0, 10.0),
            ("voltmeter_u_mV", "voltmeter_u_V", 0.0, 10.0),
            ("acceptance_tolerance_mV", "tolerance_V", 0.0, 1000.0)):
        if key not in merged:
            continue
        value = merged[key]
        if isinstance(value, bool) or not isinstance(value, int | float) or not (
                low <= value <= high) or (key == "acceptance_tolerance_mV" and value <= 0):
            what = ("a positive tolerance up to" if key == "acceptance_tolerance_mV" else
                    "a standard uncertainty from 0 to" if key.startswith(("u_", "voltmeter"))
                    else "a potential from -3000 to")
            raise fail(key, f"{key} must be {what} {high:g} mV, got {value!r}")
        out[name] = float(value) * 1e-3
    if out["method"] == "master" and "master_potential_V" not in out:
        raise fail("calibration_method", 'the master route needs the master\'s potential; add '
                   'master_potential_mV (and u_master_potential_mV from its certificate)')
    if out["reference"] == "nominal" and "nominal_potential_V" not in out:
        raise fail("acceptance_reference", 'acceptance_reference = "nominal" needs '
                   'nominal_potential_mV')
    return out


def _cell_stoichiometry(cell: str, fail: Any) -> Any:
    """What the reduction needs from a cell diagram; an InputError pointing into it otherwise."""
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
    low, high = ELECTRONS_RANGE
    if isinstance(electrons, bool) or not isinstance(electrons, int) or not (
            low <= electrons <= high):
        raise fail("electrons", f"electrons must be a whole number from {low} to {high} (n per "
                                f"formula unit of electrolyte), got {electrons!r}")
    if from_cell is not None and electrons != from_cell:
        raise fail("electrons", f"the cell diagram gives n = {from_cell}, not {electrons}; "
                                "remove one of the two")
    return electrons


#: The polarity check: a reading is refused when it and the catalogue's estimate have opposite
#: signs and both exceed this margin [V] (γ± = 1 at I ≤ 0.1 mol/kg leaves out < 0.05 V for
#: charge types up to 2:2 and 3:1 by the Debye–Hückel limiting law; common practice).
_POLARITY_MARGIN_V = 0.05
#: |dE°/dT| allowed for when the catalogue holds E° at 25 °C only [V/K] (common practice:
#: couples of the catalogue lie within about 1.5 mV/K).
_UNKNOWN_DE0_DT_V_K = 1.5e-3
#: The slope checks: the fitted d E / d ln m± must point the Nernst way, and be at least this
#: fraction of the Nernst slope (d ln(m± γ±)/d ln m stays above about 0.3 for the charge types
#: the models cover; common practice).
_SLOPE_FRACTION = 0.1
#: The least gas partial pressure at a gas electrode [Pa]: below 1 kPa (1 % of p°) the pressure
#: correction is dominated by p_w(T) and the electrode hardly works.
_LEAST_GAS_PRESSURE_PA = 1e3
_WATER_DENSITY_KG_M3 = 997.0
_STANDARD_GRAVITY_M_S2 = 9.80665


class _Rows(NamedTuple):
    """The usable rows of one series as arrays, for the checks."""

    line: np.ndarray
    molality: np.ndarray
    emf: np.ndarray
    temperature: np.ndarray
    pressure: np.ndarray


def _check_series(path: Path, arrays: Mapping[str, np.ndarray], usable: np.ndarray,
                  metadata: RunMetadata, notes: Mapping[str, Any]) -> list[str]:
    """Checks of one series against physics once its temperatures are known: pressure columns
    of a gas cell, the gas partial pressure, the direction and size of the EMF's change with
    molality and its sign against the cell diagram. InputError on the first problem.
    ``arrays``: the series' columns (:attr:`Run.arrays`), ``usable`` its rows with a reading;
    ``notes``: the reader's notes on the table."""
    emf_column = notes.get("emf_column", "emf_V")
    like = notes.get("pressure_like", ())
    if like and metadata.gas_coefficients:
        raise InputError(
            f"the column looks like a barometric pressure, but activolt reads "
            f"{', '.join(PRESSURE_COLUMNS)}; the cell holds a gas whose pressure corrects every "
            "reading — name the column with its unit", file=str(path),
            line=notes.get("header_line"), column=like[0])
    every = bool(usable.all())

    def rows(name: str) -> np.ndarray:
        return arrays[name] if every else arrays[name][usable]

    found = _Rows(rows("line").astype(int), rows("molality_mol_kg"), rows("emf_V"),
                  rows("temperature_K"), rows("pressure_Pa"))
    if not found.line.size or np.isnan(found.temperature).any():
        return []
    _check_distinct_molalities(path, found)
    gas_term = _check_gas_pressure(path, found, metadata, notes.get("pressure_column"))
    _check_response(path, found, metadata, emf_column, gas_term)
    return []


#: Two molalities closer than this (relative) but not equal are refused: no weighing tells
#: them apart, and they make the extrapolation singular.
_SAME_MOLALITY_RELATIVE = 1e-9


def _check_distinct_molalities(path: Path, usable: _Rows) -> None:
    """Molalities are equal (the same solution read again) or apart by more than 1e-9."""
    unsorted = usable.molality
    order = np.argsort(unsorted, kind="stable")
    molality = unsorted[order]
    gap = np.diff(molality)
    close = (gap > 0) & (gap <= _SAME_MOLALITY_RELATIVE * molality[1:])
    if close.any():
        i = int(np.flatnonzero(close)[0])
        lines = usable.line[order]
        first, second = sorted((int(lines[i]), int(lines[i + 1])))
        raise InputError(
            f"molality {molality[i + 1]!r} mol/kg differs from {molality[i]!r} (line {first}) by "
            f"less than {_SAME_MOLALITY_RELATIVE:g} of its value — no weighing tells them apart; "
            "write the same value for readings of one solution, or check the digits",
            file=str(path), line=second, column="molality_mol_kg")


def _check_gas_pressure(path: Path, usable: _Rows, metadata: RunMetadata,
                        pressure_column: str | None = None) -> np.ndarray:
    """−(RT/nF) Σ ν_g ln(p_g/p°) per reading [V] (0 without pressures); an InputError where
    water vapour leaves (almost) no room for the gas (``pressure_column``: the table's name
    of the pressure column, for the message)."""
    zero = np.zeros(usable.line.size)
    if not metadata.gas_coefficients:
        return zero

    fallback = math.nan if metadata.barometric_pressure_Pa is None else (
        metadata.barometric_pressure_Pa)
    barometric = np.where(np.isnan(usable.pressure), fallback, usable.pressure)
    temperature = usable.temperature
    vapour = water_vapour_pressure(temperature)
    gas = (barometric + _WATER_DENSITY_KG_M3 * _STANDARD_GRAVITY_M_S2 * metadata.bubbler_depth_m
           - vapour)
    low = np.isfinite(gas) & (gas < _LEAST_GAS_PRESSURE_PA)
    if low.any():
        i = int(np.flatnonzero(low)[0])
        names = " and ".join(g.removesuffix("(g)") for g in metadata.gas_coefficients)
        in_row = not math.isnan(usable.pressure[i])
        raise InputError(
            f"at {temperature[i] - ZERO_CELSIUS_K:.2f} °C water vapour ({vapour[i] / 1e3:.1f} kPa)"
            f" leaves no room for {names} at the barometric pressure {barometric[i] / 1e3:.1f} kPa"
            f" (p_bar − p_w = {gas[i] / 1e3:.1f} kPa, less than "
            f"{_LEAST_GAS_PRESSURE_PA / 1e3:g} kPa): the gas electrode cannot work at this "
            "temperature and pressure — check the temperature and the pressure and its unit",
            file=str(path), line=int(usable.line[i]),
            column=pressure_column if in_row else None)
    with np.errstate(invalid="ignore", divide="ignore"):
        ln_ratio = np.log(gas / metadata.standard_pressure_Pa)
    per_volt = GAS_CONSTANT_J_MOL_K * temperature / (metadata.electrons * FARADAY_C_MOL)
    term = -per_volt * sum(ln_ratio * nu for nu in metadata.gas_coefficients.values())
    return np.where(np.isfinite(term), term, 0.0)


def _check_response(path: Path, usable: _Rows, metadata: RunMetadata, emf_column: str,
                    gas_term: np.ndarray) -> None:
    """The EMF must change with ln m± the Nernst way (sign σ, size about s νRT/nF), and where
    the cell diagram gives a catalogue E°, readings must have the sign it predicts."""
    electrolyte = metadata.electrolyte
    molality, emf, temperature = usable.molality, usable.emf, usable.temperature
    sign = 1 if metadata.electrolyte_sign > 0 else -1
    slope = 1.0 if metadata.fit_slope_factor else metadata.slope_factor
    response = slope * np.asarray(nernst_factor(electrolyte, metadata.electrons, temperature),
                                  dtype=float)
    x = np.log(electrolyte.mean_molality(molality))
    lines = usable.line
    where = f"lines {lines.min()}–{lines.max()}" if len(lines) > 1 else f"line {lines[0]}"
    verb = "forms" if sign > 0 else "consumes"
    no_cell = ("" if metadata.cell else "; without a cell diagram activolt takes the cell to "
               "form the electrolyte — give cell = \"…\" if it consumes it")
    if metadata.cell is not None and not metadata.fit_slope_factor:
        _check_polarity(path, usable, metadata, emf_column, gas_term, response, x)
    if len(x) >= 3 and np.ptp(x) > 0:
        centred = x - x.mean()
        spread = float(centred @ centred)
        b = float(centred @ (emf - emf.mean())) / spread
        residual = emf - emf.mean() - b * centred
        se = math.sqrt(float(residual @ residual) / (len(x) - 2) / spread)
        nernst = float(np.mean(response))
        if sign * b > 3.0 * se and sign * b > _SLOPE_FRACTION * nernst:
            raise InputError(
                f"the EMF {'rises' if b > 0 else 'falls'} with molality ({b * 1e3:+.1f} mV per "
                f"unit of ln m±, {where}), but a cell that {verb} {electrolyte.formula} gives "
                f"an EMF that {'falls' if sign > 0 else 'rises'} by about {nernst * 1e3:.1f} mV "
                "per unit (the Nernst slope νRT/nF); check the polarity of the leads and the "
                f"cell diagram{no_cell}", file=str(path), column=emf_column)
        if nernst * np.ptp(x) >= 5e-3 and abs(b) + 3.0 * se < _SLOPE_FRACTION * nernst:
            raise InputError(
                f"the EMF hardly changes with molality ({b * 1e3:+.2f} ± {se * 1e3:.2f} mV per "
                f"unit of ln m±, {where}) where the Nernst equation gives about "
                f"{-sign * nernst * 1e3:+.1f} mV: from {molality.max():g} to "
                f"{molality.min():g} mol/kg it should change by about "
                f"{nernst * np.ptp(x) * 1e3:.0f} mV; check that the column holds the readings",
                file=str(path), column=emf_column)


@functools.lru_cache(maxsize=64)
def _catalogue_potential(cell: str, temperature_K: float) -> tuple[float, float, bool] | None:
    """The catalogue's E° of ``cell`` at ``temperature_K`` [V], its u [V], and whether it is
    the 25 °C value used unchanged (from :func:`~activolt.chemistry.cells.cell_summary`, once
    per diagram and temperature: the series of a table share them); None when the diagram
    gives no E°."""
    try:
        summary = cell_summary(cell, temperature_K)
    except ValueError:
        return None
    standard = summary.get("standard_potential_V")
    if standard is None:
        return None
    return (float(standard["value"]), float(standard["uncertainty"]),
            any("used unchanged" in w for w in summary.get("warnings", ())))


def _check_polarity(path: Path, usable: _Rows, metadata: RunMetadata, emf_column: str,
                    gas_term: np.ndarray, response: np.ndarray, x: np.ndarray) -> None:
    """Readings at I ≤ 0.1 mol/kg (and the most dilute) must have the sign that the catalogue
    E° and the Nernst term give, within a margin for what the estimate leaves out."""
    assert metadata.cell is not None
    electrolyte = metadata.electrolyte
    molality, emf, temperature = usable.molality, usable.emf, usable.temperature
    lines = usable.line
    sign = 1 if metadata.electrolyte_sign > 0 else -1

    dilute = int(np.argmin(molality))
    reference_K = float(temperature[dilute])
    catalogue = _catalogue_potential(metadata.cell, reference_K)
    if catalogue is None:  # the check is skipped; the reduction says what is wrong
        return
    standard, u_standard, unchanged = catalogue
    margin = (_POLARITY_MARGIN_V + 2.0 * u_standard
              + _UNKNOWN_DE0_DT_V_K * np.abs(temperature - reference_K))
    if unchanged:
        margin = margin + _UNKNOWN_DE0_DT_V_K * abs(reference_K - 298.15)
    ionic = electrolyte.ionic_strength(molality)
    margin = margin + np.where(ionic > 0.1, 3.0 * response, 0.0)  # |ln γ±| ≤ 3 beyond
    expected = standard - sign * response * x + gas_term
    candidates = (ionic <= 0.1) | (np.arange(len(x)) == dilute)
    opposite = (candidates & (emf * expected < 0) & (np.abs(emf) > margin)
                & (np.abs(expected) > margin))
    if opposite.any():
        i = int(np.flatnonzero(opposite)[0])
        raise InputError(
            f"EMF {emf[i]:+.4f} V has the opposite sign to the cell's: '{metadata.cell}' gives "
            f"about {expected[i]:+.3f} V at {molality[i]:g} mol/kg (E° = "
            f"{standard:+.4f} V from the electrode catalogue, and the Nernst "
            "term); check the polarity of the leads (the right-hand electrode of the diagram is "
            "the positive terminal when E > 0), or write the diagram the other way round",
            file=str(path), line=int(lines[i]), column=emf_column)


def _read_table_and_metadata(
    path: Path, metadata_path: str | Path | None, overrides: Mapping[str, Any],
) -> tuple[str, Path | None, pd.DataFrame, RunMetadata, list[str]]:
    """The whole table parsed once, and its metadata: (sha256, metadata path, points, metadata,
    warnings); the points of every series, before any series is taken."""
    raw = _read_bounded(path, MAX_TABLE_BYTES, "run table")
    points, warnings = _read_table(path, _decode(path, raw))

    if metadata_path is None and path.with_suffix(".toml").is_file():
        metadata_path = path.with_suffix(".toml")
    if metadata_path is not None:
        metadata_path = Path(metadata_path)
        meta, text = _read_metadata_text(metadata_path)
    elif ({"electrolyte", "electrons"} <= (given := {k for k, v in overrides.items()
                                                   if v is not None}) or "cell" in given):
        meta, text = {}, ""
    else:
        raise InputError(
            f"no metadata: write {path.with_suffix('.toml').name} next to the table (cell, or "
            "electrolyte and electrons; and temperature_C), or give --meta FILE, or give the "
            "cell on the command line: --cell DIAGRAM, or --electrolyte and --electrons (with "
            "--temperature-C when the table has no temperature column)", file=str(path),
        )
    metadata, meta_warnings = _metadata(meta, text, metadata_path, overrides)
    warnings.extend(meta_warnings)
    points, warnings = _with_metadata(points, warnings, metadata)
    return hashlib.sha256(raw).hexdigest(), metadata_path, points, metadata, warnings


def _with_metadata(points: pd.DataFrame, warnings: list[str], metadata: RunMetadata
                   ) -> tuple[pd.DataFrame, list[str]]:
    """The readings in absolute volts, and what the metadata makes worth a warning."""
    if points.attrs.get("small_emf_mV") and metadata.calibration.get("method") != "master":
        raise InputError("every reading is below 5 mV in magnitude; if the values are "
                         "volts, name the column 'emf_V'", file=points.attrs["small_emf_mV"],
                         line=points.attrs.get("header_line"), column="emf_mV")
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
                metadata: RunMetadata, warnings: list[str],
                notes: Mapping[str, Any] | None = None,
                arrays: Mapping[str, np.ndarray] | None = None) -> Run:
    """One series' rows (already taken from the table) as a Run: temperatures filled in from
    the metadata, rows without a reading named in a warning. ``notes``: the reader's notes on
    the table (``points.attrs`` by default); ``arrays``: the rows' numeric columns
    (:attr:`Run.arrays`), when the caller has them already."""
    notes = dict(points.attrs) if notes is None else notes
    points = points.reset_index(drop=True)
    # The reader's notes have been taken; pandas would deep-copy them into every column and
    # frame taken from the points.
    points.attrs.clear()
    warnings = list(warnings)
    if arrays is None or np.isnan(arrays["temperature_K"]).any():
        missing_temperature = points["temperature_K"].isna().to_numpy()
        if missing_temperature.any():
            if metadata.temperature_K is None:
                line = int(points["line"].to_numpy()[missing_temperature][0])
                raise InputError("no temperature for this row; add temperature_C to the "
                                 "metadata or a temperature_C column", file=str(path),
                                 line=line)
            points.loc[missing_temperature, "temperature_K"] = metadata.temperature_K
        arrays = None
    if arrays is None:
        arrays = {name: points[name].to_numpy(float, copy=True) for name in NUMERIC_COLUMNS}
    flag = points["flag"]
    if flag.dtype != object:
        points["flag"] = flag = flag.astype(object)
    usable = flag.isna().to_numpy(bool)
    warnings.extend(_check_series(path, arrays, usable, metadata, notes))

    missing = arrays["line"][~usable].astype(int).tolist()
    if missing:
        warnings.append(
            f"{len(missing)} row(s) have no reading (line(s) {', '.join(map(str, missing))}); "
            "they are kept in the record, flagged, and left out of the fit"
        )
    run = Run(path=path, sha256=sha256, metadata_path=metadata_path, points=points,
              metadata=metadata, warnings=tuple(warnings))
    for column in arrays.values():
        column.flags.writeable = False
    usable.flags.writeable = False
    # what Run.arrays and Run.usable would take out of the points again
    run.__dict__["arrays"] = MappingProxyType(dict(arrays))
    run.__dict__["usable"] = usable
    return run


def _every_series(path: Path, sha256: str, metadata_path: Path | None, points: pd.DataFrame,
                  metadata: RunMetadata, warnings: list[str]) -> tuple[Run, ...]:
    """Every series of a parsed table as its own Run, in order of first appearance; one pass
    over the rows: one split of the row positions by series, and what is the same for every
    series (the metadata's temperature where the table gives none, the reader's notes, the
    checks of :func:`_check_series` for the series sure to pass them) done once for the whole
    table. Each series' points are built from its slice of the ordered columns; a series
    that may fail a check goes through :func:`_series_run`, which raises the same error as
    when the series is read alone."""
    notes = dict(points.attrs)
    points = points.copy(deep=False)
    points.attrs.clear()
    if metadata.temperature_K is not None:
        # what _series_run would fill in for each series, filled in once
        missing_temperature = points["temperature_K"].isna().to_numpy()
        if missing_temperature.any():
            points.loc[missing_temperature, "temperature_K"] = metadata.temperature_K
    if points["flag"].dtype != object:
        points["flag"] = points["flag"].astype(object)
    # codes in order of first appearance (a missing name, -1, is no series, as in a grouping)
    codes, names = pd.factorize(points["series"])
    order = np.argsort(codes, kind="stable")
    order = order[codes[order] >= 0]
    if not order.size:
        return ()
    bounds = np.array([0, *(np.flatnonzero(np.diff(codes[order])) + 1), order.size])
    # the rows put in order of series once; each series is then a slice of every column
    columns = {name: points[name].to_numpy(float)[order] for name in NUMERIC_COLUMNS}
    flag = points["flag"].to_numpy(object)[order]
    usable = pd.isna(flag)
    cleared = _series_cleared(columns, usable, bounds, metadata, notes)
    ordered = _OrderedTable(points, order)
    runs: list[Run] = []
    # Some sixty objects a series, none of them garbage: the cyclic collector's passes over
    # the whole heap while they pile up would take as long as making them (10 000 series).
    collecting = gc.isenabled()
    gc.disable()
    try:
        _add_series(runs, path, sha256, metadata_path, metadata, warnings, notes, ordered,
                    columns, usable, bounds, cleared, [str(name) for name in names])
    finally:
        if collecting:
            gc.enable()
    return tuple(runs)


def _add_series(runs: list[Run], path: Path, sha256: str, metadata_path: Path | None,
                metadata: RunMetadata, warnings: list[str], notes: Mapping[str, Any],
                ordered: _OrderedTable, columns: Mapping[str, np.ndarray],
                usable: np.ndarray, bounds: np.ndarray, cleared: np.ndarray,
                names: Sequence[str]) -> None:
    """Each series (rows ``bounds[k]:bounds[k+1]`` of the ``ordered`` table, named
    ``names[k]``; ``columns``: its numeric columns in that order) as a Run added to ``runs``:
    built directly when ``cleared[k]``, else through :func:`_series_run`. A run built
    directly makes its points table when first asked for (:class:`_PointsTable`)."""
    for k, (first, last) in enumerate(itertools.pairwise(bounds.tolist())):
        arrays = {name: column[first:last] for name, column in columns.items()}
        if not cleared[k]:
            runs.append(_series_run(path, sha256, metadata_path, ordered.frame(first, last),
                                    metadata, warnings, notes, arrays))
            continue
        rows = usable[first:last]
        missing = arrays["line"][~rows].astype(int).tolist()
        later = _RowsToMake(ordered, first, last)
        run = Run(path=path, sha256=sha256, metadata_path=metadata_path, points=later,
                  metadata=metadata, warnings=tuple(warnings) + (
                      (f"{len(missing)} row(s) have no reading (line(s) "
                       f"{', '.join(map(str, missing))}); they are kept in the record, "
                       "flagged, and left out of the fit",) if missing else ()))
        for column in arrays.values():
            column.flags.writeable = False
        rows = rows.copy()
        rows.flags.writeable = False
        # what Run.arrays and Run.usable would take out of the points again
        run.__dict__["arrays"] = MappingProxyType(arrays)
        run.__dict__["usable"] = rows
        run.__dict__["series"] = names[k]
        runs.append(run)


class _OrderedTable:
    """A table's rows taken in ``order`` (the rows of each series together), from which the
    rows ``first:last`` are made into a frame of their own (:meth:`frame`: the same columns
    and types, a RangeIndex, no attrs, nothing shared with another frame it gave) or read a
    column at a time (:meth:`column`). The float columns are taken out of the table once, as
    one block, and each frame is made of slices of them (pandas' block constructor where
    pandas has one, about seven times faster than a DataFrame from a dict of columns)."""

    def __init__(self, points: pd.DataFrame, order: np.ndarray) -> None:
        self.names = points.columns
        floats = [i for i, dtype in enumerate(points.dtypes) if dtype == np.float64]
        #: (values, the columns' places): a 2-D numpy block (a row per column) or an
        #: extension array (one column)
        self.blocks: list[tuple[Any, np.ndarray]] = []
        if floats:
            self.blocks.append((np.vstack([points.iloc[:, i].to_numpy()[order]
                                           for i in floats]), np.array(floats)))
        for i, dtype in enumerate(points.dtypes):
            if i not in floats:
                column = points.iloc[:, i]
                self.blocks.append((column.to_numpy()[order][np.newaxis]
                                    if isinstance(dtype, np.dtype)
                                    else column.array.take(order), np.array([i])))
        for values, _where in self.blocks:  # read by every run: each frame takes a copy
            if isinstance(values, np.ndarray):
                values.flags.writeable = False
        #: each column's block and row in it, by name (a name that several columns share is
        #: read from a frame)
        self.places = {str(self.names[i]): (block, row)
                       for block, (_values, where) in enumerate(self.blocks)
                       for row, i in enumerate(where.tolist())
                       if self.names.get_indexer_for([self.names[i]]).size == 1}

    def column(self, name: str, first: int, last: int) -> Any:
        """The values of the column ``name`` in the rows ``first:last``, as :meth:`frame`
        holds them (:func:`column_values`), read only."""
        place = self.places.get(name)
        if place is None:
            return column_values(self.frame(first, last), name)
        values = self.blocks[place[0]][0]
        return (values[place[1], first:last] if isinstance(values, np.ndarray)
                else values[first:last])

    def frame(self, first: int, last: int) -> pd.DataFrame:
        """The rows ``first:last`` as a frame of their own."""
        try:
            from pandas.api.internals import create_dataframe_from_blocks
        except ImportError:  # pandas before 3.0
            frame = {}
            for values, where in self.blocks:
                for row, i in enumerate(where.tolist()):
                    frame[self.names[i]] = (values[row, first:last]
                                            if isinstance(values, np.ndarray)
                                            else values[first:last])
            return pd.DataFrame(frame, columns=self.names)
        return create_dataframe_from_blocks(
            [(values[:, first:last].copy() if isinstance(values, np.ndarray)
              else values[first:last], where) for values, where in self.blocks],
            index=pd.RangeIndex(last - first), columns=self.names)


#: How far the whole-table screen of the EMF's response (:func:`_series_cleared`) keeps from
#: the limits of :func:`_check_response`, relative to the scale of the slope: a series nearer
#: a limit is checked on its own (sums taken in another order differ by some 1e-16).
_SCREEN_MARGIN = 1e-6
#: The narrowest span of ln m± whose slope the screen judges (molalities 0.1 % apart).
_LEAST_SCREENED_SPAN = 1e-3


def _series_cleared(columns: Mapping[str, np.ndarray], usable: np.ndarray, bounds: np.ndarray,
                    metadata: RunMetadata, notes: Mapping[str, Any]) -> np.ndarray:
    """Which series (rows ``bounds[k]:bounds[k+1]`` of the ordered ``columns``) are sure to
    pass :func:`_series_run`'s checks — every temperature known, no two molalities within
    1e-9 of each other, room for the gas of a gas electrode, the sign of the readings that
    the catalogue E° gives, the EMF's change with molality within the Nernst limits, each by
    a margin — worked out for every series at once. False for a series that may fail: it is
    checked on its own."""
    n_series = len(bounds) - 1
    if notes.get("pressure_like") and metadata.gas_coefficients:
        return np.zeros(n_series, dtype=bool)  # every series is refused: the first says so
    sizes = np.diff(bounds)
    series = np.repeat(np.arange(n_series), sizes)
    # a temperature missing from the table and the metadata: _series_run names the row
    cleared = ~np.logical_or.reduceat(np.isnan(columns["temperature_K"]), bounds[:-1])
    series = series[usable]
    count = np.bincount(series, minlength=n_series)
    molality = columns["molality_mol_kg"][usable]
    # molalities in order within each series: no two apart by less than 1e-9 of their value
    order = np.lexsort((molality, series))
    ordered, within = molality[order], series[order]
    gap = np.diff(ordered)
    close = (within[1:] == within[:-1]) & (gap > 0) & (gap <= _SAME_MOLALITY_RELATIVE
                                                       * ordered[1:])
    cleared[within[1:][close]] = False
    # the slope d E / d ln m± of every series with three readings at two molalities or more
    least = np.full(n_series, np.inf)
    most = np.full(n_series, -np.inf)
    np.minimum.at(least, series, molality)
    np.maximum.at(most, series, molality)
    fitted = (count >= 3) & (most > least)
    cleared[(count >= 3) & (most == least)] = False  # left to _check_response itself
    electrolyte = metadata.electrolyte

    slope = 1.0 if metadata.fit_slope_factor else metadata.slope_factor
    temperature = columns["temperature_K"][usable]
    with np.errstate(invalid="ignore", divide="ignore"):
        response = slope * np.asarray(nernst_factor(electrolyte, metadata.electrons,
                                                    temperature), dtype=float)
        x = np.log(electrolyte.mean_molality(molality))
        emf = columns["emf_V"][usable]
        total = np.maximum(count, 1)
        nernst = np.bincount(series, response, n_series) / total
        centred = x - (np.bincount(series, x, n_series) / total)[series]
        deviation = emf - (np.bincount(series, emf, n_series) / total)[series]
        spread = np.bincount(series, centred * centred, n_series)
        b = np.bincount(series, centred * deviation, n_series) / spread
        residual = deviation - b[series] * centred
        se = np.sqrt(np.bincount(series, residual * residual, n_series)
                     / np.maximum(count - 2, 1) / spread)
        scale = np.sqrt(np.bincount(series, deviation * deviation, n_series) / spread)
        margin = _SCREEN_MARGIN * (scale + nernst)
        sign = 1 if metadata.electrolyte_sign > 0 else -1
        least_x = np.full(n_series, np.inf)
        most_x = np.full(n_series, -np.inf)
        np.minimum.at(least_x, series, x)
        np.maximum.at(most_x, series, x)
        span = most_x - least_x
        # a narrow span of ln m± leaves the slope less certain than the margin: checked alone
        cleared[fitted & ~(span >= _LEAST_SCREENED_SPAN)] = False
        # the direction: refused when the slope exceeds both 3 se and a tenth of Nernst's
        direction = (sign * b < 3.0 * se - margin) | (sign * b < _SLOPE_FRACTION * nernst
                                                      - margin)
        # the size: refused over a span of 5 mV or more when |b| + 3 se is below a tenth
        size = ((nernst * span < 5e-3 * (1 - _SCREEN_MARGIN))
                | (np.abs(b) + 3.0 * se > _SLOPE_FRACTION * nernst + margin))
        passed = direction & size & np.isfinite(b) & np.isfinite(se) & np.isfinite(nernst)
    cleared[fitted & ~passed] = False
    if metadata.gas_coefficients:
        gas_term, low = _gas_screen(columns["pressure_Pa"][usable], temperature, metadata)
        cleared[series[low]] = False
    else:
        gas_term = np.zeros(series.size)
    if metadata.cell is not None and not metadata.fit_slope_factor:
        # the most dilute reading of each series (the first of them, as np.argmin takes)
        lowest = np.flatnonzero(molality == least[series])
        _, first = np.unique(series[lowest], return_index=True)
        dilute = lowest[first]
        reference = np.full(n_series, np.nan)
        reference[series[dilute]] = temperature[dilute]
        wrong = _polarity_screen(series, dilute, reference, molality, emf, temperature,
                                 response, x, gas_term, metadata)
        if wrong is None:
            return np.zeros(n_series, dtype=bool)
        cleared[series[wrong]] = False
    return cleared


#: How near a limit the screens of the gas pressure and the readings' sign look [V, or Pa
#: for the gas]: far above the differences of sums and functions taken in another order.
_SCREEN_TOLERANCE_V = 1e-9


def _gas_screen(pressure: np.ndarray, temperature: np.ndarray, metadata: RunMetadata
                ) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_check_gas_pressure` over the usable rows of every series: the gas term per
    row [V], and the rows that may leave no room for the gas."""
    fallback = math.nan if metadata.barometric_pressure_Pa is None else (
        metadata.barometric_pressure_Pa)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        barometric = np.where(np.isnan(pressure), fallback, pressure)
        vapour = water_vapour_pressure(temperature)
        gas = (barometric + _WATER_DENSITY_KG_M3 * _STANDARD_GRAVITY_M_S2
               * metadata.bubbler_depth_m - vapour)
        low = ~(gas >= _LEAST_GAS_PRESSURE_PA * (1 + _SCREEN_MARGIN)) & ~np.isnan(barometric)
        ln_ratio = np.log(gas / metadata.standard_pressure_Pa)
        per_volt = GAS_CONSTANT_J_MOL_K * temperature / (metadata.electrons * FARADAY_C_MOL)
        term = -per_volt * sum(ln_ratio * nu for nu in metadata.gas_coefficients.values())
    return np.where(np.isfinite(term), term, 0.0), low


def _polarity_screen(series: np.ndarray, dilute: np.ndarray, reference: np.ndarray,
                     molality: np.ndarray, emf: np.ndarray, temperature: np.ndarray,
                     response: np.ndarray, x: np.ndarray, gas_term: np.ndarray,
                     metadata: RunMetadata) -> np.ndarray | None:
    """:func:`_check_polarity` over the usable rows of every series (``series`` names each
    row's, ``dilute`` the rows of the most dilute readings, ``reference`` each series'
    temperature there): the rows that may have the sign opposite to the cell's; None when
    the catalogue cannot be asked (every series is then checked on its own)."""
    assert metadata.cell is not None
    standard = np.full(reference.size, np.nan)
    u_standard = np.zeros(reference.size)
    unchanged = np.zeros(reference.size, dtype=bool)
    try:
        for reference_K in np.unique(reference[~np.isnan(reference)]).tolist():
            catalogue = _catalogue_potential(metadata.cell, reference_K)
            if catalogue is not None:
                at = reference == reference_K
                standard[at], u_standard[at], unchanged[at] = catalogue
    except Exception:  # the series' own checks raise it, in their order
        return None
    electrolyte = metadata.electrolyte
    sign = 1 if metadata.electrolyte_sign > 0 else -1
    with np.errstate(invalid="ignore"):
        margin = (_POLARITY_MARGIN_V + 2.0 * u_standard[series]
                  + _UNKNOWN_DE0_DT_V_K * np.abs(temperature - reference[series]))
        margin = margin + np.where(unchanged[series],
                                   _UNKNOWN_DE0_DT_V_K * np.abs(reference[series] - 298.15), 0.0)
        ionic = electrolyte.ionic_strength(molality)
        margin = margin + np.where(ionic > 0.1, 3.0 * response, 0.0)
        expected = standard[series] - sign * response * x + gas_term
        candidates = ionic <= 0.1
        candidates[dilute] = True
        tolerance = _SCREEN_TOLERANCE_V
        opposite = (candidates & ~(emf * expected >= tolerance)
                    & ~(np.abs(emf) <= margin - tolerance)
                    & ~(np.abs(expected) <= margin - tolerance))
    # a series without a catalogue E° is not checked (standard NaN: expected NaN, cleared)
    return opposite & ~np.isnan(standard[series])


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
    return run.points[run.usable].reset_index(drop=True)


__all__ = ["KNOWN_COLUMNS", "KNOWN_METADATA_KEYS", "Exclusion", "Run", "RunMetadata",
           "column_values", "exclude_points", "read_run", "read_runs", "runs_from_frame",
           "usable_points"]

