r"""Primary pH of a buffer by the Harned-cell procedure (IUPAC Recommendations 2002).

The cell without liquid junction

    Pt | H2(g) | buffer, Cl⁻(m_Cl) | AgCl(s) | Ag(s)

is read with chloride added at several molalities m_Cl. With E° of the Ag|AgCl electrodes from
their calibration (0.01 mol/kg HCl, γ± = 0.904 at 25 °C by convention), each reading gives the
acidity function after the hydrogen-pressure correction to p°

.. math:: p(a_H γ_{Cl}) = \frac{E − E°}{(RT \ln 10)/F} + \log_{10} m_{Cl}

which is extrapolated to m_Cl = 0 by a weighted straight line. The pH follows with the
Bates–Guggenheim convention for the chloride ion at the buffer's ionic strength I

.. math:: pH = p(a_H γ_{Cl})° + \log_{10} γ_{Cl}°, \qquad
          \log_{10} γ_{Cl}° = −\frac{A \sqrt{I}}{1 + 1.5 \sqrt{I}}

with A(T) the Debye–Hückel slope of :mod:`activolt.physics.water`. The uncertainty budget
follows the GUM; the convention is a definition and is stated, not counted. Readings at several
temperatures give pH(T) per isotherm and a smooth fit pH(T) = a/T + b + cT (the form of Hamer,
Pinching & Acree 1946).

References
----------
.. [1] Buck, R. P. et al. (2002). Measurement of pH. Definition, standards, and procedures
   (IUPAC Recommendations 2002). Pure Appl. Chem. 74, 2169–2200, Sect. 5.
.. [2] Bates, R. G. & Guggenheim, E. A. (1960). Report on the standardization of pH and
   related terminology. Pure Appl. Chem. 1, 163–168.
.. [3] Hamer, W. J., Pinching, G. D. & Acree, S. F. (1946). J. Res. NBS 36, 47–62.
.. [4] JCGM 100:2008 (GUM), 5.1 (linear propagation), G.4.1 (Welch–Satterthwaite).
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import re
import tempfile
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from ..chemistry.electrodes import silver_chloride_standard_potential
from ..chemistry.electrolytes import parse_electrolyte
from ..constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K, ZERO_CELSIUS_K
from ..data.runs import MAX_TABLE_BYTES, Run, read_runs
from ..errors import FitError, InputError
from ..fit.least_squares import linear_least_squares
from ..fit.uncertainty import student_t_factor
from ..physics.corrections import hydrogen_partial_pressure
from ..physics.water import debye_hueckel_constants
from ..reference import load_table
from .calibration import CalibrationBatch, calibrate, welch_satterthwaite
from .display import html_table, rounded_uncertainty, value_with_uncertainty

__all__ = ["BATES_GUGGENHEIM_BA", "HARNED_CELL", "PH_METADATA_KEYS", "BufferSpec",
           "PhBudgetLine", "PhIsotherm", "PhResult", "PhTemperatureFit", "StandardPotential",
           "bates_guggenheim_log10_gamma_chloride", "buffer_catalogue", "catalogue_ph",
           "composition_ionic_strength", "primary_ph", "read_buffer_table",
           "standard_potentials_from_batch", "standard_potentials_from_record"]

#: Bå of the Bates–Guggenheim convention [(kg/mol)^½] (Bates & Guggenheim 1960; IUPAC Gold Book).
BATES_GUGGENHEIM_BA: float = 1.5
#: The cell of the primary method; the buffer table's metadata may omit it.
HARNED_CELL: str = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
#: Metadata keys of a buffer table, beside those of runs (``activolt.data.runs``).
PH_METADATA_KEYS: tuple[str, ...] = (
    "buffer", "buffer_ionic_strength_mol_kg", "u_buffer_ionic_strength_mol_kg",
    "buffer_composition", "calibration_batch", "calibration_batch_meta", "calibration_record",
    "standard_potential_mV", "u_standard_potential_mV", "standard_potential_temperature_C",
)
#: Readings whose temperatures lie within this of each other form one isotherm [K].
ISOTHERM_TOLERANCE_K: float = 0.5
#: The largest distance between a reading's temperature and that of its electrode's E° [K];
#: the difference is bridged with dE°/dT of Bates & Bower (1954).
E0_TEMPERATURE_TOLERANCE_K: float = 0.5
#: The ionic strength up to which the convention is defined [mol/kg] (Buck et al. 2002).
CONVENTION_MAX_IONIC_STRENGTH_MOL_KG: float = 0.1
_STEP_K = 0.01
_STEP_PA = 10.0
_LN10 = math.log(10.0)


# ---------------------------------------------------------------------------------------------
# Conventions and catalogue


def bates_guggenheim_log10_gamma_chloride(ionic_strength_mol_kg: npt.ArrayLike,
                                          temperature_K: npt.ArrayLike) -> np.ndarray:
    r"""log10 γ_Cl of the Bates–Guggenheim convention.

    Parameters
    ----------
    ionic_strength_mol_kg : array_like
        Ionic strength I of the buffer [mol/kg], ≥ 0.
    temperature_K : array_like
        Temperature [K].

    Returns
    -------
    numpy.ndarray
        log10 γ_Cl° [-].

    Notes
    -----
    .. math:: \log_{10} γ_{Cl} = −\frac{A \sqrt{I}}{1 + 1.5 \sqrt{I}}

    Bates & Guggenheim (1960); Buck et al. (2002), Sect. 5. A = 3 A_φ/ln 10 from
    :func:`activolt.physics.water.debye_hueckel_constants`.

    Examples
    --------
    The phosphate primary standard, I = 0.1 mol/kg at 25 °C; with A = 0.5098 (IAPWS water)
    by hand −0.5098 × 0.31623/(1 + 1.5 × 0.31623) = −0.1093 (A = 0.5100 of the IUPAC tables
    gives −0.1094):

    >>> round(float(bates_guggenheim_log10_gamma_chloride(0.1, 298.15)), 4)
    -0.1093
    """
    ionic = np.asarray(ionic_strength_mol_kg, dtype=float)
    if np.any(ionic < 0):
        raise ValueError("the ionic strength must be ≥ 0 [mol/kg]")
    t = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    a = debye_hueckel_constants(np.unique(t)).agamma_log10
    a = np.interp(t, np.unique(t), a)
    root = np.sqrt(ionic)
    value = -a * root / (1.0 + BATES_GUGGENHEIM_BA * root)
    return value if np.ndim(temperature_K) or np.ndim(ionic_strength_mol_kg) else value[0]


def buffer_catalogue() -> pd.DataFrame:
    """The primary buffers shipped with activolt (``reference/primary_buffers.csv``): one row per
    buffer and temperature with ``buffer``, ``name``, ``composition``,
    ``ionic_strength_mol_kg``, ``temperature_C``, ``pH``, ``source``."""
    return load_table("primary_buffers")


def catalogue_ph(buffer: str, temperature_K: float) -> tuple[float, str] | None:
    """The catalogue's pH of ``buffer`` at ``temperature_K``: the row within 0.05 K, else
    linear between the two neighbouring rows; None outside its temperatures.

    Examples
    --------
    >>> catalogue_ph("phosphate", 298.15)[0]
    6.865
    """
    rows = buffer_catalogue()
    rows = rows[rows["buffer"] == buffer].sort_values("temperature_C")
    if rows.empty:
        return None
    t = rows["temperature_C"].to_numpy(float) + ZERO_CELSIUS_K
    ph = rows["pH"].to_numpy(float)
    near = np.flatnonzero(np.abs(t - temperature_K) <= 0.05)
    if near.size:
        return float(ph[near[0]]), str(rows["source"].iloc[near[0]])
    if len(t) < 2 or not t[0] < temperature_K < t[-1]:
        return None
    i = int(np.searchsorted(t, temperature_K))
    value = float(np.interp(temperature_K, t[i - 1:i + 1], ph[i - 1:i + 1]))
    return value, "interpolated linearly: " + str(rows["source"].iloc[i])


def composition_ionic_strength(composition: Mapping[str, float]) -> float:
    r"""I = ½ Σ m_i z_i² of salts taken fully dissociated as written [mol/kg].

    Acid–base speciation is not counted: for a buffer whose ions react (borax, phthalate) give
    the ionic strength itself.

    Examples
    --------
    The equimolal phosphate buffer (0.025 mol/kg KH2PO4 + 0.025 mol/kg Na2HPO4):

    >>> round(composition_ionic_strength({"KH2PO4": 0.025, "Na2HPO4": 0.025}), 6)
    0.1
    """
    total = 0.0
    for formula, molality in composition.items():
        total += float(parse_electrolyte(formula).ionic_strength(float(molality)))
    return total


# ---------------------------------------------------------------------------------------------
# Results


@dataclass(frozen=True)
class StandardPotential:
    """E° of one electrode (or of every electrode: ``electrode`` None) at one temperature.

    ``temperature_K`` None: valid at any temperature of the buffer readings (stated values
    without a temperature); ``dof`` the degrees of freedom of ``u_V`` (``math.inf`` for a
    Type B value); ``standard_pressure_Pa`` its pressure basis.
    """

    electrode: str | None
    temperature_K: float | None
    value_V: float
    u_V: float
    dof: float
    standard_pressure_Pa: float
    source: str
    accepted: bool | None = None

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form."""
        return {"electrode": self.electrode, "temperature_K": self.temperature_K,
                "accepted": self.accepted,
                "standard_potential_V": {"value": self.value_V, "uncertainty": self.u_V},
                "dof": _finite(self.dof), "standard_pressure_kPa": self.standard_pressure_Pa / 1e3,
                "source": self.source}


@dataclass(frozen=True)
class PhBudgetLine:
    """One line of the pH budget: the standard uncertainty ``u_pH`` this input alone gives the
    pH, its degrees of freedom, how it was obtained; ``counted`` False for a line stated but
    not in u (the Bates–Guggenheim convention)."""

    component: str
    u_pH: float
    dof: float
    method: str
    counted: bool = True

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: ``{component, u_pH, dof (None for infinite), method, counted}``."""
        return {"component": self.component, "u_pH": self.u_pH, "dof": _finite(self.dof),
                "method": self.method, "counted": self.counted}


@dataclass(frozen=True)
class BufferSpec:
    """The buffer: its catalogue name (or None), ionic strength [mol/kg] with u, and how I was
    obtained."""

    name: str | None
    ionic_strength_mol_kg: float
    u_ionic_strength_mol_kg: float
    ionic_strength_source: str
    title: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form."""
        return {"buffer": self.name, "title": self.title,
                "ionic_strength_mol_kg": self.ionic_strength_mol_kg,
                "u_ionic_strength_mol_kg": self.u_ionic_strength_mol_kg,
                "ionic_strength_source": self.ionic_strength_source}


@dataclass(frozen=True)
class PhIsotherm:
    """The pH of the buffer at one temperature.

    Attributes
    ----------
    temperature_K : float
        Mean temperature of the isotherm's readings [K].
    lines : tuple of int
        Table lines of its readings.
    chloride_molality_mol_kg, acidity_function, u_acidity_function : numpy.ndarray
        Per reading: m_Cl [mol/kg], p(a_H γ_Cl) [-] after the pressure correction, and its
        standard uncertainty from u(EMF) (NaN when no u(EMF) is stated).
    electrodes : tuple of str
        The electrode of each reading.
    intercept, slope : float
        p(a_H γ_Cl)° [-] and d p(a_H γ_Cl)/d m_Cl [kg/mol] of the straight line.
    covariance : numpy.ndarray
        Covariance of (intercept, slope), scaled as the fit says.
    covariance_scaled : bool
        Whether the covariance was scaled by χ²/ν (unit weights, or a significant χ²).
    chi2, dof : float, int
        The straight line's χ² and N − 2.
    log10_gamma_chloride : float
        The Bates–Guggenheim term at I and T [-].
    debye_hueckel_a : float
        A(T) [kg^½ mol^-½].
    ph, standard_uncertainty, effective_dof, coverage_factor, expanded_uncertainty : float
        pH, u_c, ν_eff (Welch–Satterthwaite), k (Student's t, 95 %), U = k u_c.
    budget : tuple of PhBudgetLine
    catalogue_ph : float or None
        The catalogue's pH of the named buffer at this temperature.
    catalogue_source : str or None
    notes : tuple of str
    """

    temperature_K: float
    lines: tuple[int, ...]
    chloride_molality_mol_kg: np.ndarray
    acidity_function: np.ndarray
    u_acidity_function: np.ndarray
    electrodes: tuple[str, ...]
    intercept: float
    slope: float
    covariance: np.ndarray
    covariance_scaled: bool
    chi2: float
    dof: int
    log10_gamma_chloride: float
    debye_hueckel_a: float
    ph: float
    standard_uncertainty: float
    effective_dof: float
    coverage_factor: float
    expanded_uncertainty: float
    budget: tuple[PhBudgetLine, ...]
    catalogue_ph: float | None = None
    catalogue_source: str | None = None
    notes: tuple[str, ...] = ()

    @property
    def difference_to_catalogue(self) -> float | None:
        """pH − the catalogue's value, or None."""
        return None if self.catalogue_ph is None else self.ph - self.catalogue_ph

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: temperature, ``ph`` = {value, uncertainty, expanded_uncertainty,
        coverage_factor, effective_dof}, intercept and slope with u, the fit, the convention
        term, the budget, the readings and the comparison with the catalogue."""
        return {
            "temperature_K": self.temperature_K,
            "ph": {"value": self.ph, "uncertainty": self.standard_uncertainty,
                   "expanded_uncertainty": self.expanded_uncertainty,
                   "coverage_factor": self.coverage_factor,
                   "effective_dof": _finite(self.effective_dof)},
            "intercept": {"value": self.intercept,
                          "uncertainty": math.sqrt(self.covariance[0, 0])},
            "slope_kg_mol": {"value": self.slope,
                             "uncertainty": math.sqrt(self.covariance[1, 1])},
            "intercept_slope_correlation": float(
                self.covariance[0, 1] / math.sqrt(self.covariance[0, 0] * self.covariance[1, 1]))
            if self.covariance[0, 0] > 0 and self.covariance[1, 1] > 0 else None,
            "fit": {"n_points": len(self.lines), "dof": self.dof, "chi2": self.chi2,
                    "covariance_scaled": self.covariance_scaled},
            "log10_gamma_chloride": self.log10_gamma_chloride,
            "debye_hueckel_a": self.debye_hueckel_a,
            "budget": [line.to_dict() for line in self.budget],
            "readings": [{"line": line, "electrode": electrode, "chloride_molality_mol_kg": m,
                          "acidity_function": p, "u_acidity_function": _finite(u)}
                         for line, electrode, m, p, u in zip(
                             self.lines, self.electrodes,
                             self.chloride_molality_mol_kg.tolist(),
                             self.acidity_function.tolist(),
                             self.u_acidity_function.tolist(), strict=True)],
            "catalogue_ph": self.catalogue_ph,
            "catalogue_source": self.catalogue_source,
            "difference_to_catalogue": self.difference_to_catalogue,
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class PhTemperatureFit:
    """pH(T) smoothed over the isotherms by weighted least squares.

    ``form`` is ``"a/T + b + cT"`` (four or more temperatures; three give it exactly) or
    ``"a + b(T − θ)"`` (two); ``coefficients`` and ``covariance`` in that order (θ =
    ``reference_temperature_K``); the covariance is scaled by χ²/ν when that exceeds 1
    (Birge ratio); the isotherms' pH values are taken as independent (inputs they share,
    such as E°, are not separated out).
    """

    form: str
    coefficients: np.ndarray
    covariance: np.ndarray
    reference_temperature_K: float
    chi2: float
    dof: int
    covariance_scaled: bool

    def _design(self, temperature_K: npt.ArrayLike) -> np.ndarray:
        t = np.atleast_1d(np.asarray(temperature_K, dtype=float))
        if self.form == "a/T + b + cT":
            return np.column_stack([1.0 / t, np.ones_like(t), t])
        return np.column_stack([np.ones_like(t), t - self.reference_temperature_K])

    def evaluate(self, temperature_K: npt.ArrayLike) -> tuple[np.ndarray, np.ndarray]:
        """(pH, u(pH)) of the fit at ``temperature_K`` [K] (u from G V Gᵀ)."""
        g = self._design(temperature_K)
        value = g @ self.coefficients
        u = np.sqrt(np.einsum("ij,jk,ik->i", g, self.covariance, g))
        return value, u

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form (coefficients with T in kelvin)."""
        return {"form": self.form, "coefficients": self.coefficients.tolist(),
                "covariance": self.covariance.tolist(),
                "reference_temperature_K": self.reference_temperature_K, "chi2": self.chi2,
                "dof": self.dof, "covariance_scaled": self.covariance_scaled}


@dataclass(frozen=True)
class PhResult:
    """The primary pH of a buffer: every isotherm, pH(T), the E° used and the convention."""

    buffer: BufferSpec
    isotherms: tuple[PhIsotherm, ...]
    temperature_fit: PhTemperatureFit | None
    standard_potentials: tuple[StandardPotential, ...]
    standard_potential_source: str
    convention: str
    run: Any = field(default=None, repr=False, compare=False)
    warnings: tuple[str, ...] = ()
    source_files: tuple[Path, ...] = ()

    def isotherm_at(self, temperature_K: float) -> PhIsotherm:
        """The isotherm nearest ``temperature_K`` (KeyError beyond 0.5 K)."""
        best = min(self.isotherms, key=lambda i: abs(i.temperature_K - temperature_K))
        if abs(best.temperature_K - temperature_K) > ISOTHERM_TOLERANCE_K:
            raise KeyError(temperature_K)
        return best

    def _repr_html_(self) -> str:
        """The headline table for a notebook: per isotherm pH ± u (k = 1), U with k, the
        intercept of the acidity function, the catalogue value; the convention and warnings."""
        rows = [(f"{i.temperature_K - ZERO_CELSIUS_K:.2f}",
                 value_with_uncertainty(i.ph, i.standard_uncertainty),
                 f"{rounded_uncertainty(i.expanded_uncertainty)} (k = {i.coverage_factor:.3g})",
                 f"{i.intercept:.5f}", len(i.lines),
                 "—" if i.catalogue_ph is None else f"{i.catalogue_ph:.3f}")
                for i in self.isotherms]
        name = self.buffer.title or self.buffer.name or "buffer"
        return html_table(f"Primary pH of {name} (Harned cell, Bates–Guggenheim convention)",
                          ("t / °C", "pH (k = 1)", "U", "p(a_H γ_Cl)°", "readings",
                           "catalogue"), rows, warnings=self.warnings,
                          notes=(self.convention, self.standard_potential_source))

    def to_frame(self) -> pd.DataFrame:
        """The readings: ``temperature_K`` (of their isotherm), ``line``, ``electrode``,
        ``chloride_molality_mol_kg``, ``acidity_function`` and ``u_acidity_function``."""
        return pd.DataFrame([
            {"temperature_K": i.temperature_K, "line": line, "electrode": electrode,
             "chloride_molality_mol_kg": float(m), "acidity_function": float(p),
             "u_acidity_function": float(u)}
            for i in self.isotherms
            for line, electrode, m, p, u in zip(i.lines, i.electrodes,
                                                i.chloride_molality_mol_kg,
                                                i.acidity_function, i.u_acidity_function,
                                                strict=True)])

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: ``buffer``, ``convention``, ``standard_potential_source``,
        ``standard_potentials``, ``isotherms`` (each :meth:`PhIsotherm.to_dict`),
        ``temperature_fit``, ``warnings``."""
        return {"buffer": self.buffer.to_dict(), "convention": self.convention,
                "standard_potential_source": self.standard_potential_source,
                "standard_potentials": [s.to_dict() for s in self.standard_potentials],
                "isotherms": [i.to_dict() for i in self.isotherms],
                "temperature_fit": (None if self.temperature_fit is None
                                    else self.temperature_fit.to_dict()),
                "warnings": list(self.warnings)}


def _finite(value: Any) -> float | None:
    return float(value) if value is not None and math.isfinite(value) else None


# ---------------------------------------------------------------------------------------------
# Reading the buffer table and its metadata


_CHLORIDE = "chloride_molality_mol_kg"
_LINE_END = re.compile(r"\r\n|\r|\n")


def _key_line(text: str, key: str) -> int | None:
    match = re.search(rf"^\s*{re.escape(key)}\s*=", text, flags=re.MULTILINE)
    return text[: match.start()].count("\n") + 1 if match else None


def _renamed_table(path: Path) -> str:
    """The buffer table's text with its chloride column named as the run reader expects."""
    try:
        if path.stat().st_size > MAX_TABLE_BYTES:
            raise InputError(f"the buffer table is larger than {MAX_TABLE_BYTES // 2**20} MB, "
                             "more than activolt reads; check that this is the right file",
                             file=str(path))
        text = path.read_bytes().decode("utf-8-sig")
    except OSError as error:
        raise InputError(f"cannot read the buffer table ({error.strerror}); check the path",
                         file=str(path)) from None
    except UnicodeDecodeError:
        raise InputError("the file is not UTF-8 text; save it as UTF-8 and try again",
                         file=str(path)) from None
    lines = _LINE_END.split(text)
    for n, line in enumerate(lines):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        names = [name.strip().lower() for name in re.split(r"[,;\t]", line)]
        if _CHLORIDE not in names:
            hint = (" (the buffer table names the added chloride 'chloride_molality_mol_kg', "
                    "not 'molality_mol_kg')" if "molality_mol_kg" in names else "")
            raise InputError("the column 'chloride_molality_mol_kg' is missing; add the molality "
                             "of the chloride added to each buffer solution" + hint,
                             file=str(path), line=n + 1)
        if "molality_mol_kg" in names:
            raise InputError("both 'molality_mol_kg' and 'chloride_molality_mol_kg'; a buffer "
                             "table gives the added chloride as 'chloride_molality_mol_kg' only",
                             file=str(path), line=n + 1, column="molality_mol_kg")
        lines[n] = re.sub(re.escape(_CHLORIDE), "molality_mol_kg", line, flags=re.IGNORECASE)
        break
    return "\n".join(lines)


def _translated(error: InputError, temporary: Path, path: Path) -> InputError:
    """A reader's error about the renamed copy, told about the buffer table."""
    problem = error.problem
    column = error.column
    if column == "molality_mol_kg":
        column = _CHLORIDE
        problem = (problem.replace("a dilution series needs molalities > 0",
                                   "every buffer solution needs chloride for the Ag|AgCl "
                                   "electrode (m_Cl > 0)")
                   .replace("the molality", "the chloride molality")
                   .replace("molality ", "chloride molality ", 1)
                   if "chloride" not in problem else problem)
    file = error.file
    if file is not None and file.startswith(str(temporary)):
        file = str(path) + file[len(str(temporary)):]
    return InputError(problem, file=file, line=error.line, column=column)


def read_buffer_table(path: str | Path, metadata_path: str | Path | None = None
                      ) -> tuple[Run, dict[str, Any], str, Path | None]:
    """Read a buffer table and its metadata with the run reader's checks.

    The table is a run table whose molality column is ``chloride_molality_mol_kg`` (the
    chloride added to each buffer solution); ``electrode`` names the Ag|AgCl electrode of each
    reading. Every check of :func:`activolt.data.runs.read_runs` applies, with messages naming
    the buffer table, its lines and the chloride column.

    Returns
    -------
    (Run, dict, str, pathlib.Path or None)
        The readings (every series of the table together), the buffer keys of the metadata
        (:data:`PH_METADATA_KEYS`), the metadata text and its path.
    """
    path = Path(path)
    if metadata_path is None and path.with_suffix(".toml").is_file():
        metadata_path = path.with_suffix(".toml")
    meta: dict[str, Any] = {}
    text = ""
    if metadata_path is not None:
        metadata_path = Path(metadata_path)
        try:
            text = metadata_path.read_bytes().decode("utf-8-sig")
            meta = tomllib.loads(text)
        except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
            meta = {}  # the run reader names the problem below
    renamed = _renamed_table(path)
    overrides = {} if "cell" in meta or "electrolyte" in meta else {"cell": HARNED_CELL}
    with tempfile.TemporaryDirectory(prefix="activolt-ph-") as folder:
        temporary = Path(folder) / path.name
        temporary.write_text(renamed, encoding="utf-8")
        try:
            runs = read_runs(temporary, metadata_path if metadata_path is not None
                             else _no_metadata(folder, path), overrides)
        except InputError as error:
            raise _translated(error, temporary, path) from None
    points = pd.concat([r.points for r in runs], ignore_index=True) if len(runs) > 1 \
        else runs[0].points
    points = points.sort_values("line", kind="stable").reset_index(drop=True)
    where = str(metadata_path) if metadata_path is not None else "metadata"
    warnings = [w.replace(str(temporary), str(path)) for r in runs for w in r.warnings
                if not any(f"key '{k}'" in w for k in PH_METADATA_KEYS)]
    run = dataclasses.replace(runs[0], path=path, points=points,
                              sha256=hashlib.sha256(path.read_bytes()).hexdigest(),
                              metadata_path=metadata_path,
                              warnings=tuple(dict.fromkeys(warnings)))
    if run.metadata.electrolyte.formula != "HCl" or run.metadata.electrons != 1:
        raise InputError("the primary pH cell is Pt | H2(g) | buffer, Cl⁻ | AgCl(s) | Ag(s); "
                         f"write cell = \"{HARNED_CELL}\" or leave the cell out", file=where,
                         line=_key_line(text, "cell"), column="cell")
    ph_keys = {k: meta[k] for k in PH_METADATA_KEYS if k in meta}
    return run, ph_keys, text, metadata_path


def _no_metadata(folder: str, path: Path) -> Path:
    """An empty metadata file (the cell is given as an override; a temperature must then come
    from the table)."""
    empty = Path(folder) / f"{path.stem}.empty.toml"
    empty.write_text("", encoding="utf-8")
    return empty


# ---------------------------------------------------------------------------------------------
# Sources of E°


def standard_potentials_from_batch(batch: CalibrationBatch) -> tuple[StandardPotential, ...]:
    """Each electrode's E° of a calibrated batch (hydrogen route), at its temperature."""
    if batch.method != "hydrogen":
        raise InputError("the calibration batch used the master route; E° of Ag|AgCl electrodes "
                         "for primary pH comes from the hydrogen route (0.01 mol/kg HCl)")
    basis = (batch.run.metadata.standard_pressure_Pa if batch.run is not None else 100_000.0)
    return tuple(StandardPotential(
        electrode=e.electrode, temperature_K=e.temperature_K, value_V=e.standard_potential_V,
        u_V=e.standard_uncertainty_V, dof=e.effective_dof, standard_pressure_Pa=basis,
        source=f"calibration ({e.route}), {e.n_readings} readings",
        accepted=e.verdict == "pass") for e in batch.electrodes)


def standard_potentials_from_record(record: Mapping[str, Any], where: str = "record"
                                    ) -> tuple[StandardPotential, ...]:
    """Each electrode's E° of a calibration record (``record_kind = "calibration"``)."""
    if record.get("record_kind") != "calibration" or not isinstance(
            record.get("electrodes"), list):
        raise InputError("not a calibration record (record_kind \"calibration\" with an "
                         "'electrodes' list)", file=where)
    if record.get("method") not in (None, "hydrogen"):
        raise InputError("the calibration used the master route; E° for primary pH comes from "
                         "the hydrogen route", file=where)
    basis = ((record.get("conditions") or {}).get("standard_pressure_kPa") or 100.0) * 1e3
    out = []
    for entry in record["electrodes"]:
        try:
            potential = entry["standard_potential_V"]
            value, u = float(potential["value"]), float(potential["uncertainty"])
            temperature = float(entry.get("temperature_K") or record["temperature_K"])
            name = str(entry["electrode"])
        except (KeyError, TypeError, ValueError):
            raise InputError("an electrode entry lacks 'electrode', 'standard_potential_V' "
                             "{value, uncertainty} or 'temperature_K'", file=where) from None
        dof = entry.get("effective_dof")
        verdict = entry.get("verdict")
        out.append(StandardPotential(name, temperature, value, u,
                                     math.inf if dof is None else float(dof), float(basis),
                                     f"calibration record {Path(where).name}",
                                     None if verdict is None else verdict == "pass"))
    return tuple(out)


def _path_key(value: Any, base: Path, key: str, text: str, where: str) -> Path:
    if not isinstance(value, str) or not value:
        raise InputError(f"{key} must be a file name in double quotes", file=where,
                         line=_key_line(text, key), column=key)
    path = Path(value)
    return path if path.is_absolute() else base / path


def _stated(ph_keys: Mapping[str, Any], text: str, where: str, basis_Pa: float,
            default_temperature_K: float | None) -> tuple[StandardPotential, ...]:
    """Stated E° values, at ``standard_potential_temperature_C``, else at the metadata's
    temperature or the readings' one temperature (None when they span several)."""
    value = ph_keys["standard_potential_mV"]
    u = ph_keys.get("u_standard_potential_mV")
    if u is None:
        raise InputError("stated E° values need their standard uncertainty; add "
                         "u_standard_potential_mV", file=where,
                         line=_key_line(text, "standard_potential_mV"),
                         column="u_standard_potential_mV")
    temperature = ph_keys.get("standard_potential_temperature_C")
    if temperature is not None and (isinstance(temperature, bool)
                                    or not isinstance(temperature, int | float)
                                    or not 0 <= temperature <= 100):
        raise InputError("standard_potential_temperature_C must be a temperature in °C",
                         file=where, line=_key_line(text, "standard_potential_temperature_C"),
                         column="standard_potential_temperature_C")
    t_K = None if temperature is None else float(temperature) + ZERO_CELSIUS_K
    if t_K is None:
        t_K = default_temperature_K
    if t_K is None:
        raise InputError("the readings span several temperatures; say where the stated E° "
                         "holds with standard_potential_temperature_C (or take E° from "
                         "calibrations at each temperature: calibration_batch or "
                         "calibration_record)", file=where,
                         line=_key_line(text, "standard_potential_mV"),
                         column="standard_potential_temperature_C")

    def number(x: Any, key: str, low: float, high: float) -> float:
        if isinstance(x, bool) or not isinstance(x, int | float) or not low <= x <= high:
            raise InputError(f"{key} must be a number from {low:g} to {high:g} mV (or a table "
                             "of such numbers by electrode)", file=where,
                             line=_key_line(text, key), column=key)
        return float(x)

    values = value if isinstance(value, Mapping) else {None: value}
    us = u if isinstance(u, Mapping) else None
    out = []
    for name, v in values.items():
        if us is not None and name not in us:
            raise InputError(f"electrode '{name}' has no u_standard_potential_mV", file=where,
                             line=_key_line(text, "u_standard_potential_mV"),
                             column="u_standard_potential_mV")
        u_mV = number(us[name] if us is not None else u, "u_standard_potential_mV", 0.0, 10.0)
        out.append(StandardPotential(
            None if name is None else str(name), t_K,
            number(v, "standard_potential_mV", 100.0, 300.0) * 1e-3, u_mV * 1e-3, math.inf,
            basis_Pa, "stated in the metadata (standard_potential_mV ± u_standard_potential_mV)"))
    return tuple(out)


def _standard_potentials(run: Run, ph_keys: Mapping[str, Any], text: str,
                         metadata_path: Path | None
                         ) -> tuple[tuple[StandardPotential, ...], str, tuple[Path, ...]]:
    where = str(metadata_path) if metadata_path is not None else "metadata"
    base = metadata_path.parent if metadata_path is not None else run.path.parent
    given = [k for k in ("calibration_batch", "calibration_record", "standard_potential_mV")
             if k in ph_keys]
    if not given:
        raise InputError("no source of E° for the Ag|AgCl electrodes; give calibration_batch "
                         "(a calibration table), calibration_record (its JSON record) or "
                         "standard_potential_mV with u_standard_potential_mV", file=where)
    if len(given) > 1:
        raise InputError(f"give one source of E°, not {' and '.join(given)}", file=where,
                         line=_key_line(text, given[1]), column=given[1])
    if given[0] == "calibration_batch":
        batch_path = _path_key(ph_keys["calibration_batch"], base, "calibration_batch", text,
                               where)
        meta = ph_keys.get("calibration_batch_meta")
        meta_path = None if meta is None else _path_key(meta, base, "calibration_batch_meta",
                                                        text, where)
        if not batch_path.is_file():
            raise InputError(f"calibration batch '{batch_path}' not found; check the path "
                             "(relative to the metadata file)", file=where,
                             line=_key_line(text, "calibration_batch"), column="calibration_batch")
        batch_run = read_runs(batch_path, meta_path)
        points = pd.concat([r.points for r in batch_run], ignore_index=True)
        whole = dataclasses.replace(batch_run[0], points=points)
        values: list[StandardPotential] = []
        for group in _temperature_groups(points["temperature_K"].to_numpy(float)):
            rows = points.iloc[group].reset_index(drop=True)
            values += standard_potentials_from_batch(
                calibrate(dataclasses.replace(whole, points=rows)))
        files = (batch_path, *([whole.metadata_path] if whole.metadata_path else []))
        return tuple(values), f"calibration batch {batch_path.name}, reduced here", files
    if given[0] == "calibration_record":
        items = ph_keys["calibration_record"]
        items = items if isinstance(items, list) else [items]
        values = []
        files = []
        for item in items:
            record_path = _path_key(item, base, "calibration_record", text, where)
            try:
                record = json.loads(record_path.read_text(encoding="utf-8"))
            except OSError as error:
                raise InputError(f"cannot read the calibration record ({error.strerror})",
                                 file=str(record_path)) from None
            except ValueError as error:
                raise InputError(f"the calibration record is not JSON ({error})",
                                 file=str(record_path)) from None
            values += standard_potentials_from_record(record, str(record_path))
            files.append(record_path)
        return tuple(values), "calibration record " + ", ".join(
            Path(str(i)).name for i in items), tuple(files)
    readings_K = run.points["temperature_K"].dropna().to_numpy(float)
    default_K = run.metadata.temperature_K
    if default_K is None and readings_K.size and np.ptp(readings_K) <= ISOTHERM_TOLERANCE_K:
        default_K = float(np.mean(readings_K))
    return (_stated(ph_keys, text, where, run.metadata.standard_pressure_Pa, default_K),
            "stated in the metadata", ())


# ---------------------------------------------------------------------------------------------
# The buffer


def _buffer(ph_keys: Mapping[str, Any], text: str, where: str,
            ionic_strength_mol_kg: float | None, buffer: str | None) -> BufferSpec:
    name = buffer if buffer is not None else ph_keys.get("buffer")
    catalogue = buffer_catalogue()
    title = None
    if name is not None:
        rows = catalogue[catalogue["buffer"] == name]
        if rows.empty:
            raise InputError(f"no buffer '{name}' in the catalogue; known: "
                             + ", ".join(dict.fromkeys(catalogue["buffer"])), file=where,
                             line=_key_line(text, "buffer"), column="buffer")
        title = str(rows["name"].iloc[0])
    u_ionic = ph_keys.get("u_buffer_ionic_strength_mol_kg", 0.0)
    if isinstance(u_ionic, bool) or not isinstance(u_ionic, int | float) or u_ionic < 0:
        raise InputError("u_buffer_ionic_strength_mol_kg must be a standard uncertainty ≥ 0",
                         file=where, line=_key_line(text, "u_buffer_ionic_strength_mol_kg"),
                         column="u_buffer_ionic_strength_mol_kg")
    value = ionic_strength_mol_kg
    source = "given to primary_ph"
    if value is None and "buffer_ionic_strength_mol_kg" in ph_keys:
        value = ph_keys["buffer_ionic_strength_mol_kg"]
        source = "metadata buffer_ionic_strength_mol_kg"
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise InputError("buffer_ionic_strength_mol_kg must be a number in mol/kg",
                             file=where, line=_key_line(text, "buffer_ionic_strength_mol_kg"),
                             column="buffer_ionic_strength_mol_kg")
    elif value is None and "buffer_composition" in ph_keys:
        composition = ph_keys["buffer_composition"]
        if not isinstance(composition, Mapping) or not composition:
            raise InputError("buffer_composition must be a table of formula = molality in "
                             "mol/kg, e.g. {KH2PO4 = 0.025, Na2HPO4 = 0.025}", file=where,
                             line=_key_line(text, "buffer_composition"),
                             column="buffer_composition")
        try:
            for m in composition.values():
                if isinstance(m, bool) or not isinstance(m, int | float) or m <= 0:
                    raise ValueError(f"molality {m!r} is not a positive number")
            value = composition_ionic_strength(composition)
        except ValueError as error:
            raise InputError(f"buffer_composition: {error}", file=where,
                             line=_key_line(text, "buffer_composition"),
                             column="buffer_composition") from None
        source = ("composition, salts fully dissociated as written (no acid–base speciation): "
                  + ", ".join(f"{k} {v:g} mol/kg" for k, v in composition.items()))
    elif value is None and name is not None:
        entry = catalogue[catalogue["buffer"] == name].iloc[0]
        value = float(entry["ionic_strength_mol_kg"])
        source = f"catalogue entry '{name}' ({entry['source']})"
    if value is None:
        raise InputError("the buffer's ionic strength is not given; add "
                         "buffer_ionic_strength_mol_kg, buffer_composition or buffer (a "
                         "catalogue name)", file=where)
    if not math.isfinite(float(value)) or value < 0:
        raise InputError(f"the buffer's ionic strength {value!r} mol/kg is negative; give I ≥ 0 "
                         "in mol/kg", file=where,
                         line=_key_line(text, "buffer_ionic_strength_mol_kg"),
                         column="buffer_ionic_strength_mol_kg")
    if value > 1.0:
        raise InputError(f"the buffer's ionic strength {value:g} mol/kg is implausible for a "
                         "pH standard (the convention is defined up to 0.1 mol/kg); check the "
                         "unit", file=where, column="buffer_ionic_strength_mol_kg")
    return BufferSpec(name, float(value), float(u_ionic), source, title)


# ---------------------------------------------------------------------------------------------
# The computation


def _temperature_groups(temperature_K: np.ndarray) -> list[np.ndarray]:
    """Row indices grouped into isotherms (neighbours within 0.5 K), coldest first."""
    order = np.argsort(temperature_K, kind="stable")
    groups: list[list[int]] = []
    last = None
    for i in order:
        t = temperature_K[i]
        if last is None or t - last > ISOTHERM_TOLERANCE_K:
            groups.append([])
        groups[-1].append(int(i))
        last = t
    return [np.array(sorted(g)) for g in groups]


def _nernst_log10(temperature_K: np.ndarray) -> np.ndarray:
    """RT ln10 / F [V]."""
    return GAS_CONSTANT_J_MOL_K * temperature_K * _LN10 / FARADAY_C_MOL


def _match_e0(potentials: Sequence[StandardPotential], electrode: str, temperature_K: float,
              where: str, line: int) -> tuple[int, float]:
    """(index of the E° used, its shift to the reading's temperature [V])."""
    best = None
    for i, s in enumerate(potentials):
        if s.electrode not in (None, electrode):
            continue
        gap = 0.0 if s.temperature_K is None else abs(s.temperature_K - temperature_K)
        if gap <= E0_TEMPERATURE_TOLERANCE_K and (best is None or gap < best[1]):
            best = (i, gap)
    if best is None:
        known = sorted({s.electrode for s in potentials if s.electrode})
        at = sorted({round(s.temperature_K - ZERO_CELSIUS_K, 2) for s in potentials
                     if s.temperature_K is not None})
        raise InputError(
            f"electrode '{electrode or '(none named)'}' has no E° at "
            f"{temperature_K - ZERO_CELSIUS_K:.2f} °C; the E° source holds "
            + (", ".join(known) if known else "no named electrode")
            + (f" at {', '.join(f'{t:g}' for t in at)} °C" if at else "")
            + " — calibrate the electrode at this temperature or correct its name",
            file=where, line=line, column="electrode")
    s = potentials[best[0]]
    shift = 0.0
    if s.temperature_K is not None and abs(s.temperature_K - temperature_K) > 1e-9:
        try:
            e = silver_chloride_standard_potential(np.array([temperature_K, s.temperature_K]))
        except ValueError:
            raise InputError(
                f"the E° of electrode '{electrode}' is at {s.temperature_K - ZERO_CELSIUS_K:.2f} "
                f"°C, the reading at {temperature_K - ZERO_CELSIUS_K:.2f} °C, outside 5–95 °C "
                "where dE°/dT is tabulated; calibrate at the reading's temperature",
                file=where, line=line, column="electrode") from None
        shift = float(e[0] - e[1])
    return best[0], shift


@dataclass(frozen=True)
class _Rows:
    """One isotherm's readings as arrays."""

    line: np.ndarray
    electrode: tuple[str, ...]
    chloride: np.ndarray
    emf: np.ndarray
    u_emf: np.ndarray | None
    u_chloride: np.ndarray
    temperature: np.ndarray
    pressure: np.ndarray
    e0: np.ndarray
    e0_index: np.ndarray
    basis: np.ndarray


def _acidity(rows: _Rows, meta: Any, pressure_shift_Pa: float = 0.0,
             temperature_shift_K: float = 0.0) -> tuple[np.ndarray, bool]:
    """p(a_H γ_Cl) per reading and whether the hydrogen-pressure correction was made."""
    t = rows.temperature + temperature_shift_K
    k10 = _nernst_log10(t)
    emf = rows.emf.copy()
    corrected = bool(np.isfinite(rows.pressure).all())
    if corrected:
        p_h2 = hydrogen_partial_pressure(t, rows.pressure + pressure_shift_Pa,
                                         bubbler_depth_m=meta.bubbler_depth_m)
        # E(p°) = E_obs + (RT/2F) ln(p°/p_H2), to the basis of each electrode's E°
        emf = emf + 0.5 * k10 / _LN10 * np.log(rows.basis / p_h2)
    return (emf - rows.e0) / k10 + np.log10(rows.chloride), corrected


def _line_fit(x: np.ndarray, y: np.ndarray, weights: np.ndarray | None, degree: int = 1
              ) -> tuple[Any, np.ndarray]:
    """The weighted polynomial fit and the row h of the intercept (a = h·y)."""
    design = np.column_stack([x**k for k in range(degree + 1)])
    fit = linear_least_squares(design, y, weights=weights, scale_covariance=False,
                               names=tuple(f"c{k}" for k in range(degree + 1)))
    w = np.ones_like(y) if weights is None else np.asarray(weights, dtype=float)
    normal = np.linalg.inv(design.T @ (design * w[:, None]))
    h = (normal @ (design * w[:, None]).T)[0]
    return fit, h


def _isotherm(rows: _Rows, run: Run, buffer: BufferSpec,
              potentials: Sequence[StandardPotential]) -> PhIsotherm:
    from scipy.special import chdtrc

    meta = run.metadata
    notes: list[str] = []
    temperature = float(np.mean(rows.temperature))
    levels = np.unique(rows.chloride)
    where = str(run.path)
    if len(levels) < 2:
        raise InputError(f"at {temperature - ZERO_CELSIUS_K:.2f} °C every reading has the same "
                         f"chloride molality ({levels[0]:g} mol/kg); the extrapolation to "
                         "m_Cl = 0 needs at least two", file=where, line=int(rows.line[0]),
                         column=_CHLORIDE)
    if rows.u_emf is None and len(rows.line) < 3:
        raise InputError(f"at {temperature - ZERO_CELSIUS_K:.2f} °C two readings and no u(EMF): "
                         "the straight line has no degree of freedom for its uncertainty; read "
                         "a third solution or give u_emf_mV", file=where,
                         line=int(rows.line[0]))
    acidity, corrected = _acidity(rows, meta)
    k10 = _nernst_log10(rows.temperature)
    u_acidity = (rows.u_emf / k10) if rows.u_emf is not None else np.full(len(k10), np.nan)
    weights = None if rows.u_emf is None else 1.0 / u_acidity**2
    fit, h = _line_fit(rows.chloride, acidity, weights)
    dof = fit.dof
    chi2 = float(fit.chi2)
    covariance = np.array(fit.covariance, dtype=float)
    scaled = False
    readings_dof = math.inf
    if weights is None:
        covariance = covariance * chi2 / dof
        scaled = True
        readings_dof = float(dof)
    elif dof > 0 and float(chdtrc(dof, chi2)) < 0.05:
        covariance = covariance * chi2 / dof
        scaled = True
        readings_dof = float(dof)
        notes.append(f"the readings scatter more than their u(EMF) says (χ² = {chi2:.3g}, ν = "
                     f"{dof}, p < 0.05): the straight line's covariance is scaled by χ²/ν")
    intercept, slope = float(fit.values["c0"]), float(fit.values["c1"])

    a_dh = float(debye_hueckel_constants([temperature]).agamma_log10[0])
    log_gamma = float(bates_guggenheim_log10_gamma_chloride(buffer.ionic_strength_mol_kg,
                                                            temperature))
    ph = intercept + log_gamma

    budget: list[PhBudgetLine] = []
    # E° of the electrodes: fully correlated between electrodes (shared convention, HCl stock,
    # thermometer and barometer of their calibration) — the conservative sum
    u_e0 = 0.0
    dof_e0 = math.inf
    used = np.unique(rows.e0_index)
    for j in used:
        mask = rows.e0_index == j
        sensitivity = -float(np.sum(h[mask] / k10[mask]))
        u_e0 += abs(sensitivity) * potentials[j].u_V
        dof_e0 = min(dof_e0, potentials[j].dof)
    names = sorted({rows.electrode[i] for i in range(len(rows.electrode))})
    budget.append(PhBudgetLine(
        "E° (calibration)", u_e0, dof_e0,
        f"u(E°) of electrode(s) {', '.join(names)} from their calibration, through "
        "∂pH/∂E° = −F/(RT ln 10); several electrodes taken as fully correlated (their "
        "calibration shares convention, HCl stock, thermometer and barometer)"))
    u_intercept = math.sqrt(covariance[0, 0])
    budget.append(PhBudgetLine(
        "readings", u_intercept, readings_dof,
        ("Type A: the intercept's standard error from the scatter of the readings about the "
         f"straight line ({len(rows.line)} readings, ν = {dof})") if scaled and weights is None
        else ("Type A: the intercept's standard error, covariance scaled by χ²/ν "
              f"(ν = {dof})") if scaled else
        "the intercept's standard error from the stated u(EMF) of the readings"))
    # the chloride molality: stock (relative, common) and per reading
    stock = meta.u_stock_molality_relative
    per_row = rows.u_chloride
    u_m = math.sqrt((stock / _LN10) ** 2
                    + float(np.sum((h * (1.0 / _LN10 - slope * rows.chloride)
                                    * per_row / rows.chloride) ** 2)))
    budget.append(PhBudgetLine(
        "chloride molality", u_m, math.inf,
        f"stated relative u(m_Cl) = {stock:g} (metadata u_stock_molality_relative), common to "
        "every solution: ∂pH/∂ln m_Cl = 1/ln 10" + (
            "; and the column u_molality_mol_kg per solution" if np.any(per_row > 0) else "")))
    # temperature and pressure, by one finite step each (E° held at its calibration value)

    def ph_shifted(temperature_shift_K: float = 0.0, pressure_shift_Pa: float = 0.0) -> float:
        value, _ = _acidity(rows, meta, pressure_shift_Pa, temperature_shift_K)
        a = float(h @ value)
        return a + float(bates_guggenheim_log10_gamma_chloride(
            buffer.ionic_strength_mol_kg, temperature + temperature_shift_K))

    base = ph_shifted()
    step = -_STEP_K if temperature + _STEP_K > 373.15 else _STEP_K
    d_t = (ph_shifted(temperature_shift_K=step) - base) / step
    budget.append(PhBudgetLine(
        "temperature", abs(d_t) * meta.u_temperature_K, math.inf,
        f"stated u(T) = {meta.u_temperature_K:g} K (metadata u_temperature_K); ∂pH/∂T = "
        f"{d_t:+.4f} K⁻¹ by one finite step (Nernst slope, p_w(T), A(T); E° held)"))
    if corrected:
        d_p = (ph_shifted(pressure_shift_Pa=_STEP_PA) - base) / _STEP_PA
        budget.append(PhBudgetLine(
            "hydrogen pressure", abs(d_p) * meta.u_pressure_Pa, math.inf,
            f"stated u(p) = {meta.u_pressure_Pa / 1e3:g} kPa (metadata u_pressure_kPa), "
            "through p(H2) = p_bar − p_w(T); sensitivity by one finite step"))
    else:
        # the correction that would be made at the standard atmosphere, in pH units:
        # ½ log10(p°/p_H2) with p_H2 = 101.325 kPa − p_w(T)
        p_h2 = hydrogen_partial_pressure(rows.temperature, np.full(len(rows.line), 101325.0),
                                         bubbler_depth_m=meta.bubbler_depth_m)
        size = abs(float(np.mean(0.5 * np.log10(rows.basis / p_h2))))
        budget.append(PhBudgetLine(
            "hydrogen pressure", size / math.sqrt(3.0), math.inf,
            "no barometric pressure given: the readings are taken as at p(H2) = p°; Type B, "
            f"rectangular of half-width {size:.4f} (the correction at 101.325 kPa)"))
        notes.append("no barometric pressure: the readings are taken as at p(H2) = p° (the "
                     f"correction at 101.325 kPa would be {size:.4f} in pH, counted as a Type B "
                     "line); give pressure_kPa for the correction")
    voltmeter = float(meta.calibration.get("voltmeter_u_V", 0.0))
    budget.append(PhBudgetLine(
        "voltmeter", voltmeter * abs(float(np.sum(h / k10))), math.inf,
        f"stated specification u = {voltmeter * 1e3:g} mV (metadata voltmeter_u_mV), Type B"
        if voltmeter > 0 else "no specification stated (metadata voltmeter_u_mV)"))
    # the extrapolation's form: the quadratic's intercept against the straight line's
    if len(levels) >= 4:
        quadratic, _ = _line_fit(rows.chloride, acidity, weights, degree=2)
        gap = float(quadratic.values["c0"]) - intercept
        budget.append(PhBudgetLine(
            "extrapolation", abs(gap) / math.sqrt(3.0), math.inf,
            f"the form of the extrapolation: a quadratic in m_Cl moves the intercept by "
            f"{gap:+.5f}; Type B, rectangular of that half-width"))
    else:
        budget.append(PhBudgetLine(
            "extrapolation", 0.0, math.inf,
            f"{len(levels)} chloride molalities: the straight line's form cannot be tested "
            "(four or more needed); not estimated"))
        notes.append("fewer than four chloride molalities: the form of the extrapolation is "
                     "not tested")
    if buffer.u_ionic_strength_mol_kg > 0:
        step_i = max(1e-6, 1e-3 * buffer.ionic_strength_mol_kg)
        d_i = float(bates_guggenheim_log10_gamma_chloride(buffer.ionic_strength_mol_kg + step_i,
                                                          temperature) - log_gamma) / step_i
        budget.append(PhBudgetLine(
            "buffer ionic strength", abs(d_i) * buffer.u_ionic_strength_mol_kg, math.inf,
            f"stated u(I) = {buffer.u_ionic_strength_mol_kg:g} mol/kg through the "
            "Bates–Guggenheim term"))
    budget.append(PhBudgetLine(
        "convention", 0.0, math.inf,
        f"Bates–Guggenheim: log10 γ_Cl° = −A√I/(1 + 1.5√I) = {log_gamma:+.5f} at I = "
        f"{buffer.ionic_strength_mol_kg:g} mol/kg, A = {a_dh:.4f} kg^½ mol^-½ (Buck et al. "
        "2002) — a definition, stated, not counted", counted=False))
    if buffer.ionic_strength_mol_kg > CONVENTION_MAX_IONIC_STRENGTH_MOL_KG + 1e-12:
        notes.append(f"I = {buffer.ionic_strength_mol_kg:g} mol/kg is above 0.1 mol/kg, where "
                     "the Bates–Guggenheim convention is defined (Buck et al. 2002)")

    counted = [line for line in budget if line.counted]
    u_c = math.sqrt(sum(line.u_pH**2 for line in counted))
    nu = welch_satterthwaite([line.u_pH for line in counted], [line.dof for line in counted])
    k = (student_t_factor(0) if not math.isfinite(nu) or nu > 1e6
         else student_t_factor(max(math.floor(nu * (1.0 + 1e-9)), 1)))
    catalogue = catalogue_ph(buffer.name, temperature) if buffer.name else None
    return PhIsotherm(
        temperature_K=temperature, lines=tuple(int(x) for x in rows.line),
        chloride_molality_mol_kg=rows.chloride.copy(), acidity_function=acidity,
        u_acidity_function=u_acidity, electrodes=rows.electrode, intercept=intercept,
        slope=slope, covariance=covariance, covariance_scaled=scaled, chi2=chi2, dof=int(dof),
        log10_gamma_chloride=log_gamma, debye_hueckel_a=a_dh, ph=ph, standard_uncertainty=u_c,
        effective_dof=nu, coverage_factor=k, expanded_uncertainty=k * u_c, budget=tuple(budget),
        catalogue_ph=None if catalogue is None else catalogue[0],
        catalogue_source=None if catalogue is None else catalogue[1], notes=tuple(notes))


def _temperature_fit(isotherms: Sequence[PhIsotherm]) -> PhTemperatureFit | None:
    if len(isotherms) < 2:
        return None
    t = np.array([i.temperature_K for i in isotherms])
    y = np.array([i.ph for i in isotherms])
    u = np.array([i.standard_uncertainty for i in isotherms])
    theta = 298.15
    form = "a/T + b + cT" if len(t) >= 3 else "a + b(T − θ)"
    design = (np.column_stack([1.0 / t, np.ones_like(t), t]) if len(t) >= 3
              else np.column_stack([np.ones_like(t), t - theta]))
    weights = 1.0 / np.maximum(u, 1e-9) ** 2
    fit = linear_least_squares(design, y, weights=weights, scale_covariance=False)
    covariance = np.array(fit.covariance, dtype=float)
    scaled = False
    if fit.dof > 0 and fit.chi2 / fit.dof > 1.0:
        covariance = covariance * fit.chi2 / fit.dof
        scaled = True
    return PhTemperatureFit(form, fit.value_array, covariance, theta, float(fit.chi2),
                            int(fit.dof), scaled)


def primary_ph(run_or_path: Run | str | Path, metadata_path: str | Path | None = None, *,
               standard_potentials: Sequence[StandardPotential] | CalibrationBatch | None = None,
               ionic_strength_mol_kg: float | None = None, buffer: str | None = None
               ) -> PhResult:
    r"""The primary pH of a buffer from Harned-cell readings with added chloride.

    Parameters
    ----------
    run_or_path : Run, str or pathlib.Path
        The buffer table (CSV: ``chloride_molality_mol_kg``, ``emf_V`` or ``emf_mV``,
        ``electrode``, optionally ``u_emf_mV``, ``temperature_C``, ``pressure_kPa``) or a run
        already read by :func:`read_buffer_table`.
    metadata_path : str or pathlib.Path, optional
        Its metadata (TOML); default the table's name with ``.toml``. Beside the run keys it
        takes :data:`PH_METADATA_KEYS`: the E° source (``calibration_batch`` [+
        ``calibration_batch_meta``], ``calibration_record``, or ``standard_potential_mV`` with
        ``u_standard_potential_mV``, a number or a table by electrode, and optionally
        ``standard_potential_temperature_C``) and the buffer (``buffer`` — a catalogue name —,
        ``buffer_ionic_strength_mol_kg``, ``buffer_composition``,
        ``u_buffer_ionic_strength_mol_kg``).
    standard_potentials : sequence of StandardPotential or CalibrationBatch, optional
        E° given directly (wins over the metadata).
    ionic_strength_mol_kg : float, optional
        The buffer's ionic strength (wins over the metadata).
    buffer : str, optional
        A catalogue name (:func:`buffer_catalogue`), for the comparison and, failing anything
        else, the ionic strength.

    Returns
    -------
    PhResult

    Raises
    ------
    InputError
        A solution without chloride, an electrode without E° at its temperature, a negative
        ionic strength, one chloride molality only, no source of E°; each naming file, line
        and column.

    Notes
    -----
    Per reading, with E moved to p(H2) = p° (p_H2 = p_bar + ρgh − p_w(T)) on the pressure basis
    of its electrode's E°: p(a_H γ_Cl) = (E − E°) F/(RT ln 10) + log10 m_Cl. Per isotherm, a
    straight line in m_Cl by weighted least squares (w = 1/u² from u(EMF); unit weights and the
    covariance scaled by s² without it; a significant χ² scales it too). pH = intercept −
    A√I/(1 + 1.5√I) (Bates–Guggenheim, Buck et al. 2002).

    Budget (GUM): E° (through the intercept's weights, electrodes fully correlated), readings
    (the intercept's standard error, Type A with ν = N − 2 when scaled), chloride molality
    (∂pH/∂ln m = 1/ln 10 for the stock), temperature and hydrogen pressure (one finite step
    each), voltmeter, the extrapolation's form (a quadratic's intercept against the line's,
    rectangular, with four or more chloride molalities), u(I) when stated; the convention is
    stated, not counted. ν_eff by Welch–Satterthwaite, k from Student's t (95 %), U = k u_c.
    Several isotherms: pH(T) = a/T + b + cT by weighted least squares (the form of Hamer,
    Pinching & Acree 1946), a + b(T − θ) with two.
    """
    if isinstance(run_or_path, Run):
        run, ph_keys, text, meta_path = run_or_path, {}, "", run_or_path.metadata_path
        if meta_path is not None:
            try:
                text = Path(meta_path).read_text(encoding="utf-8")
                loaded = tomllib.loads(text)
                ph_keys = {k: loaded[k] for k in PH_METADATA_KEYS if k in loaded}
            except (OSError, tomllib.TOMLDecodeError):
                ph_keys = {}
    else:
        run, ph_keys, text, meta_path = read_buffer_table(run_or_path, metadata_path)
    where = str(meta_path) if meta_path is not None else "metadata"
    spec = _buffer(ph_keys, text, where, ionic_strength_mol_kg, buffer)
    source_files: tuple[Path, ...] = ()
    if isinstance(standard_potentials, CalibrationBatch):
        potentials, source = (standard_potentials_from_batch(standard_potentials),
                              "calibration batch given to primary_ph")
    elif standard_potentials is not None:
        potentials, source = tuple(standard_potentials), "given to primary_ph"
    else:
        potentials, source, source_files = _standard_potentials(run, ph_keys, text,
                                                                meta_path)
    if not potentials:
        raise InputError("the E° source holds no electrode", file=where)

    points = run.points[run.points["flag"].isna()].reset_index(drop=True)
    if points.empty:
        raise InputError("the buffer table has no reading", file=str(run.path))
    names = points["electrode"].astype(str)
    named = any(p.electrode is not None for p in potentials)
    if named and (names == "").any():
        line = int(points.loc[names == "", "line"].iloc[0])
        raise InputError("this reading names no electrode; give the Ag|AgCl electrode of every "
                         "reading (its E° comes from the calibration)", file=str(run.path),
                         line=line, column="electrode")
    index = np.zeros(len(points), dtype=int)
    e0 = np.zeros(len(points))
    for i in range(len(points)):
        j, shift = _match_e0(potentials, str(names.iloc[i]),
                             float(points["temperature_K"].iloc[i]), str(run.path),
                             int(points["line"].iloc[i]))
        index[i] = j
        e0[i] = potentials[j].value_V + shift
    basis = np.array([potentials[j].standard_pressure_Pa for j in index])
    pressure = points["pressure_Pa"].to_numpy(float)
    if run.metadata.barometric_pressure_Pa is not None:
        pressure = np.where(np.isnan(pressure), run.metadata.barometric_pressure_Pa, pressure)
    if np.isnan(pressure).any() and not np.isnan(pressure).all():
        line = int(points.loc[np.isnan(pressure), "line"].iloc[0])
        raise InputError("no barometric pressure for this reading while others have one; fill "
                         "the column or give pressure_kPa in the metadata", file=str(run.path),
                         line=line, column="pressure_kPa")
    stated = bool(points["u_emf_V"].notna().all())
    isotherms = []
    for group in _temperature_groups(points["temperature_K"].to_numpy(float)):
        rows = _Rows(
            line=points["line"].to_numpy(int)[group],
            electrode=tuple(str(names.iloc[i]) for i in group),
            chloride=points["molality_mol_kg"].to_numpy(float)[group],
            emf=points["emf_V"].to_numpy(float)[group],
            u_emf=points["u_emf_V"].to_numpy(float)[group] if stated else None,
            u_chloride=points["u_molality_mol_kg"].to_numpy(float)[group],
            temperature=points["temperature_K"].to_numpy(float)[group],
            pressure=pressure[group], e0=e0[group], e0_index=index[group], basis=basis[group])
        try:
            isotherms.append(_isotherm(rows, run, spec, potentials))
        except FitError as error:
            raise FitError(f"at {rows.temperature.mean() - ZERO_CELSIUS_K:.2f} °C: {error}"
                           ) from None
    convention = ("pH = p(a_H γ_Cl)° + log10 γ_Cl°, log10 γ_Cl° = −A√I/(1 + 1.5√I) "
                  "(Bates–Guggenheim convention, Buck et al. 2002, Pure Appl. Chem. 74, 2169); "
                  "E° of the Ag|AgCl electrodes on the convention γ±(HCl, 0.01 mol/kg, 25 °C) "
                  "= 0.904")
    warnings = list(run.warnings)
    failed = sorted({potentials[j].electrode or "" for j in np.unique(index)
                     if potentials[j].accepted is False})
    if failed:
        warnings.append(f"electrode(s) {', '.join(failed)} failed the acceptance of their "
                        "calibration; their E° is used as calibrated — check that this is meant")
    if any(i.catalogue_ph is None for i in isotherms) and spec.name is not None:
        warnings.append(f"the catalogue holds no pH of '{spec.name}' at some temperatures of "
                        "the readings; no comparison there")
    return PhResult(buffer=spec, isotherms=tuple(isotherms), source_files=source_files,
                    temperature_fit=_temperature_fit(isotherms),
                    standard_potentials=tuple(potentials), standard_potential_source=source,
                    convention=convention, run=run, warnings=tuple(warnings))

