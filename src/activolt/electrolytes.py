"""Electrolytes: formula → ions, stoichiometric numbers ν±, charges z±, ionic strength and m±.

A cell without liquid junction whose reaction forms (or consumes) one formula unit of the
electrolyte M(ν+)X(ν−) per n electrons obeys

.. math:: E = E° − \\frac{ν R T}{n F} \\ln(m_± γ_±), \\quad
          m_± = m (ν_+^{ν_+} ν_−^{ν_−})^{1/ν}, \\quad ν = ν_+ + ν_−

(Harned & Owen, *The Physical Chemistry of Electrolytic Solutions*, 3rd ed., 1958, ch. 10).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from .constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K

#: Cations known to the formula parser: symbol → charge number.
CATIONS: dict[str, int] = {
    "H": 1, "Li": 1, "Na": 1, "K": 1, "Rb": 1, "Cs": 1, "NH4": 1, "Ag": 1, "Tl": 1,
    "Mg": 2, "Ca": 2, "Sr": 2, "Ba": 2, "Mn": 2, "Fe": 2, "Co": 2, "Ni": 2, "Cu": 2,
    "Zn": 2, "Cd": 2, "Pb": 2, "Hg": 2,
    "Al": 3, "La": 3, "Ce": 3, "Y": 3, "Cr": 3,
}

#: Anions known to the formula parser: symbol → charge number (negative).
ANIONS: dict[str, int] = {
    "F": -1, "Cl": -1, "Br": -1, "I": -1, "OH": -1, "NO3": -1, "ClO4": -1, "ClO3": -1,
    "BrO3": -1, "IO3": -1, "HCO3": -1, "H2PO4": -1, "CH3COO": -1, "HCOO": -1, "SCN": -1,
    "SO4": -2, "CO3": -2, "HPO4": -2, "C2O4": -2, "CrO4": -2, "S2O3": -2,
    "PO4": -3, "Fe(CN)6": -4,
}

_COUNT = re.compile(r"\d*")


@dataclass(frozen=True)
class Electrolyte:
    """A strong electrolyte M(ν+)X(ν−), fully dissociated into one cation and one anion.

    Attributes
    ----------
    formula : str
        The formula as written, e.g. ``"CaCl2"``.
    cation, anion : str
        Ion symbols without charge, e.g. ``"Ca"``, ``"Cl"``.
    nu_cation, nu_anion : int
        Stoichiometric numbers ν+ and ν− [-].
    z_cation, z_anion : int
        Charge numbers z+ (> 0) and z− (< 0) [-].
    """

    formula: str
    cation: str
    anion: str
    nu_cation: int
    nu_anion: int
    z_cation: int
    z_anion: int

    def __post_init__(self) -> None:
        if self.nu_cation * self.z_cation + self.nu_anion * self.z_anion != 0:
            raise ValueError(f"{self.formula}: ions are not charge-balanced")
        if self.z_cation <= 0 or self.z_anion >= 0 or self.nu_cation < 1 or self.nu_anion < 1:
            raise ValueError(f"{self.formula}: need ν± ≥ 1, z+ > 0 and z− < 0")

    @property
    def nu(self) -> int:
        """Total number of ions per formula unit ν = ν+ + ν− [-]."""
        return self.nu_cation + self.nu_anion

    @property
    def charge_product(self) -> int:
        """|z+ z−| [-]."""
        return abs(self.z_cation * self.z_anion)

    @property
    def charge_type(self) -> str:
        """Valence type such as ``"1:1"`` or ``"2:1"`` (cation charge first)."""
        return f"{self.z_cation}:{-self.z_anion}"

    @property
    def ionic_strength_factor(self) -> float:
        """I/m = ½ (ν+ z+² + ν− z−²) [-]; 1 for HCl, 3 for CaCl2, 4 for MgSO4."""
        return 0.5 * (self.nu_cation * self.z_cation**2 + self.nu_anion * self.z_anion**2)

    @property
    def mean_molality_factor(self) -> float:
        """m±/m = (ν+^ν+ ν−^ν−)^(1/ν) [-]; 1 for HCl, 4^(1/3) for CaCl2."""
        return float(
            (self.nu_cation**self.nu_cation * self.nu_anion**self.nu_anion) ** (1.0 / self.nu)
        )

    def ionic_strength(self, molality: npt.ArrayLike) -> np.ndarray:
        """Ionic strength I [mol kg⁻¹] of the solution of molality m [mol kg⁻¹]."""
        return self.ionic_strength_factor * np.asarray(molality, dtype=float)

    def mean_molality(self, molality: npt.ArrayLike) -> np.ndarray:
        """Mean ionic molality m± [mol kg⁻¹] of the solution of molality m [mol kg⁻¹]."""
        return self.mean_molality_factor * np.asarray(molality, dtype=float)


def _read_part(text: str, table: dict[str, int]) -> tuple[str, int, str] | None:
    """Match one ion (optionally in parentheses) and its count at the start of ``text``."""
    for symbol in sorted(table, key=len, reverse=True):
        for written in (f"({symbol})", symbol):
            if text.startswith(written):
                rest = text[len(written):]
                digits = _COUNT.match(rest).group(0)  # type: ignore[union-attr]
                count = int(digits) if digits else 1
                return symbol, count, rest[len(digits):]
    return None


def parse_electrolyte(formula: str) -> Electrolyte:
    """Parse an electrolyte formula such as ``"HCl"``, ``"CaCl2"`` or ``"Al2(SO4)3"``.

    Parameters
    ----------
    formula : str
        Neutral formula: a cation from :data:`CATIONS` then an anion from :data:`ANIONS`, each
        with an optional count; polyatomic ions may be parenthesised.

    Returns
    -------
    Electrolyte

    Raises
    ------
    ValueError
        If the formula is not one cation and one anion from the tables, or not charge-balanced.

    Examples
    --------
    >>> e = parse_electrolyte("CaCl2")
    >>> (e.nu_cation, e.nu_anion, e.z_cation, e.z_anion, e.charge_type)
    (1, 2, 2, -1, '2:1')
    >>> round(parse_electrolyte("LaCl3").ionic_strength_factor, 1)
    6.0
    """
    text = formula.strip()
    cation = _read_part(text, CATIONS)
    if cation is None:
        raise ValueError(
            f"unknown electrolyte '{formula}': it must start with a known cation "
            f"({', '.join(sorted(CATIONS))})"
        )
    cation_symbol, nu_cation, rest = cation
    anion = _read_part(rest, ANIONS)
    if anion is None or anion[2] != "":
        raise ValueError(
            f"unknown electrolyte '{formula}': after {cation_symbol} expected one known anion "
            f"({', '.join(sorted(ANIONS))}) and its count"
        )
    anion_symbol, nu_anion, _ = anion
    z_cation, z_anion = CATIONS[cation_symbol], ANIONS[anion_symbol]
    if nu_cation * z_cation + nu_anion * z_anion != 0:
        raise ValueError(
            f"electrolyte '{formula}' is not charge-balanced: {nu_cation} × ({z_cation:+d}) "
            f"+ {nu_anion} × ({z_anion:+d}) ≠ 0"
        )
    return Electrolyte(
        formula=text,
        cation=cation_symbol,
        anion=anion_symbol,
        nu_cation=nu_cation,
        nu_anion=nu_anion,
        z_cation=z_cation,
        z_anion=z_anion,
    )


def nernst_factor(
    electrolyte: Electrolyte, electrons: int, temperature: npt.ArrayLike
) -> np.ndarray:
    r"""Nernst factor k = ν R T / (n F) of a cell forming one formula unit per n electrons.

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte formed by the cell reaction.
    electrons : int
        n, electrons transferred per formula unit formed [-].
    temperature : array_like
        Temperature [K].

    Returns
    -------
    numpy.ndarray
        k [V]; E = E° − k ln(m± γ±).

    Notes
    -----
    Harned & Owen (1958), ch. 10: for Pt | H2 | HCl(m) | AgCl | Ag, ν = 2, n = 1, so k = 2RT/F.

    Examples
    --------
    2RT/F at 25 °C (RT/F = 25.6926 mV, CODATA 2018):

    >>> round(float(nernst_factor(parse_electrolyte("HCl"), 1, 298.15)) * 1e3, 4)
    51.3852
    """
    if electrons < 1:
        raise ValueError(f"electrons must be a positive whole number, got {electrons}")
    return (
        electrolyte.nu * GAS_CONSTANT_J_MOL_K * np.asarray(temperature, dtype=float)
        / (electrons * FARADAY_C_MOL)
    )
