"""Electrolytes: formula → ions, stoichiometric numbers ν±, charges z±, ionic strength and m±.

A cell without liquid junction whose reaction forms (or consumes) one formula unit of the
electrolyte M(ν+)X(ν−) per n electrons obeys

.. math:: E = E° − \\frac{ν R T}{n F} \\ln(m_± γ_±), \\quad
          m_± = m (ν_+^{ν_+} ν_−^{ν_−})^{1/ν}, \\quad ν = ν_+ + ν_−

(Harned & Owen, *The Physical Chemistry of Electrolytic Solutions*, 3rd ed., 1958, ch. 10).
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from ..constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K

#: Cations known to the formula parser: symbol → the charge numbers it takes in aqueous salts
#: (common practice: the oxidation states of the usual soluble salts, e.g. Greenwood & Earnshaw,
#: *Chemistry of the Elements*, 2nd ed., 1997). Where a symbol has several, the anion's charge
#: and the counts decide (FeCl2 → Fe²⁺, FeCl3 → Fe³⁺). ``Hg2`` is the mercurous ion Hg₂²⁺
#: (Hg2Cl2), ``Hg`` the mercuric ion Hg²⁺ (HgCl2); ``UO2`` the uranyl ion UO₂²⁺.
CATIONS: dict[str, tuple[int, ...]] = {
    "H": (1,), "Li": (1,), "Na": (1,), "K": (1,), "Rb": (1,), "Cs": (1,), "NH4": (1,),
    "Ag": (1,), "Tl": (1, 3), "Cu": (1, 2),
    "Be": (2,), "Mg": (2,), "Ca": (2,), "Sr": (2,), "Ba": (2,), "Ra": (2,),
    "Mn": (2,), "Fe": (2, 3), "Co": (2,), "Ni": (2,), "Zn": (2,), "Cd": (2,), "Pb": (2,),
    "Hg": (2,), "Hg2": (2,), "Sn": (2, 4), "Cr": (2, 3), "UO2": (2,),
    "Al": (3,), "Ga": (3,), "In": (3,), "Sc": (3,), "Y": (3,), "La": (3,), "Ce": (3, 4),
    "Pr": (3,), "Nd": (3,), "Sm": (3,), "Eu": (2, 3), "Gd": (3,), "Tb": (3,), "Dy": (3,),
    "Ho": (3,), "Er": (3,), "Tm": (3,), "Yb": (3,), "Lu": (3,), "Th": (4,),
}

#: Anions known to the formula parser: symbol → charge number (negative).
ANIONS: dict[str, int] = {
    "F": -1, "Cl": -1, "Br": -1, "I": -1, "OH": -1, "NO3": -1, "ClO4": -1, "ClO3": -1,
    "BrO3": -1, "IO3": -1, "HCO3": -1, "H2PO4": -1, "CH3COO": -1, "HCOO": -1, "SCN": -1,
    "SO4": -2, "CO3": -2, "HPO4": -2, "C2O4": -2, "CrO4": -2, "S2O3": -2,
    "PO4": -3, "Fe(CN)6": -4,
}

#: Largest stoichiometric number ν+ or ν− the parser accepts [-]. The salts of the tables have
#: ν± ≤ 4 (Al2(SO4)3, Th(NO3)4); the bound only stops absurd counts (m± needs ν+^ν+ ν−^ν−).
MAX_STOICHIOMETRIC_NUMBER = 20

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
        if max(self.nu_cation, self.nu_anion) > MAX_STOICHIOMETRIC_NUMBER:
            raise ValueError(f"{self.formula}: ν± must be at most {MAX_STOICHIOMETRIC_NUMBER}")

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


def _shown(text: str, limit: int = 40) -> str:
    """``text`` for a message, cut to ``limit`` characters."""
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _count(digits: str, formula: str) -> int:
    """The stoichiometric count written as ``digits`` (1 when empty), at most the bound."""
    if not digits:
        return 1
    if len(digits) > 2 or not 1 <= int(digits) <= MAX_STOICHIOMETRIC_NUMBER:
        raise ValueError(
            f"electrolyte '{_shown(formula)}': the count {_shown(digits, 12)} is outside 1–"
            f"{MAX_STOICHIOMETRIC_NUMBER}; write the formula of one formula unit, e.g. Al2(SO4)3"
        )
    return int(digits)


def _read_parts(text: str, symbols: Iterable[str], formula: str) -> list[tuple[str, int, str]]:
    """Every ion of ``symbols`` (optionally in parentheses) with its count at the start of
    ``text``, longest symbol first: (symbol, count, rest of the text)."""
    found = []
    for symbol in sorted(symbols, key=len, reverse=True):
        for written in (f"({symbol})", symbol):
            if text.startswith(written):
                rest = text[len(written):]
                digits = _COUNT.match(rest).group(0)  # type: ignore[union-attr]
                found.append((symbol, _count(digits, formula), rest[len(digits):]))
                break
    return found


def parse_electrolyte(formula: str) -> Electrolyte:
    """Parse an electrolyte formula such as ``"HCl"``, ``"CaCl2"``, ``"FeCl3"`` or ``"Al2(SO4)3"``.

    Parameters
    ----------
    formula : str
        Neutral formula: a cation from :data:`CATIONS` then an anion from :data:`ANIONS`, each
        with an optional count (1 to :data:`MAX_STOICHIOMETRIC_NUMBER`); polyatomic ions may be
        parenthesised.

    Returns
    -------
    Electrolyte

    Raises
    ------
    ValueError
        If the formula is not one cation and one anion from the tables, if a count is out of
        range, or if no charge the cation takes balances the anion.

    Notes
    -----
    A cation with several oxidation states takes the charge that balances the anion,
    z+ = −ν− z− / ν+, if that is one of its charges in :data:`CATIONS` (common practice).
    Where two cation symbols fit the start of the formula (``Hg2`` and ``Hg``), the longer one is
    tried first.

    Examples
    --------
    >>> e = parse_electrolyte("CaCl2")
    >>> (e.nu_cation, e.nu_anion, e.z_cation, e.z_anion, e.charge_type)
    (1, 2, 2, -1, '2:1')
    >>> round(parse_electrolyte("LaCl3").ionic_strength_factor, 1)
    6.0
    >>> parse_electrolyte("FeCl3").z_cation, parse_electrolyte("FeCl2").z_cation
    (3, 2)
    >>> e = parse_electrolyte("Hg2Cl2")  # mercurous chloride: Hg₂²⁺ + 2 Cl⁻
    >>> (e.cation, e.nu_cation, e.z_cation, e.nu_anion)
    ('Hg2', 1, 2, 2)
    """
    text = formula.strip()
    cations = _read_parts(text, CATIONS, formula)
    if not cations:
        raise ValueError(
            f"unknown electrolyte '{_shown(formula)}': it must start with a known cation "
            f"({', '.join(sorted(CATIONS))})"
        )
    problem = None
    for cation_symbol, nu_cation, rest in cations:
        anions = [a for a in _read_parts(rest, ANIONS, formula) if a[2] == ""]
        if not anions:
            problem = problem or ValueError(
                f"unknown electrolyte '{_shown(formula)}': after {cation_symbol} expected one "
                f"known anion ({', '.join(sorted(ANIONS))}) and its count"
            )
            continue
        anion_symbol, nu_anion, _ = anions[0]
        z_anion = ANIONS[anion_symbol]
        charges = CATIONS[cation_symbol]
        balancing = [z for z in charges if nu_cation * z + nu_anion * z_anion == 0]
        if not balancing:
            if problem is None or "unknown" in str(problem):  # the charges say more
                states = " or ".join(f"{z:+d}" for z in charges)
                problem = ValueError(
                    f"electrolyte '{_shown(formula)}' is not charge-balanced: {nu_anion} × "
                    f"({z_anion:+d}) needs {nu_cation} × ({-nu_anion * z_anion / nu_cation:+g})"
                    f" but {cation_symbol} takes {states}"
                )
            continue
        return Electrolyte(
            formula=text,
            cation=cation_symbol,
            anion=anion_symbol,
            nu_cation=nu_cation,
            nu_anion=nu_anion,
            z_cation=balancing[0],
            z_anion=z_anion,
        )
    assert problem is not None
    raise problem


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
