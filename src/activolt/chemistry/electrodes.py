"""The electrode catalogue: standard reduction potentials of couples used in potentiometry.

The table ``reference/electrodes.csv`` holds, for each couple, its half-reaction written in the
species notation of :mod:`activolt.chemistry.reactions`, the electrons n, E° [V] at 25 °C, its
standard
uncertainty and where that uncertainty comes from (``u_kind``, ``u_source``), the standard
pressure of the value (101.325 kPa or 100 kPa) and the source. A couple that is a combination of
others (Fe³⁺/Fe from Fe³⁺/Fe²⁺ and Fe²⁺/Fe) is derived from them by n-weighted addition of ΔG°
(``derived_from``), so that every route through the catalogue gives one ΔG° for one reaction.
The table also holds the E° of the silver–silver chloride electrode from 5 to 95 °C (Bates &
Bower 1954), the one E°(T) of that couple (:func:`couple_at_temperature`).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections import Counter
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from typing import TYPE_CHECKING

import numpy as np
import numpy.typing as npt
import pandas as pd
from uncertainties import UFloat

if TYPE_CHECKING:
    from scipy.interpolate import CubicSpline

from ..constants import ATMOSPHERE_PA, ZERO_CELSIUS_K
from ..physics.corrections import standard_pressure_basis_shift
from ..reference import load_table
from .reactions import (
    HalfReaction,
    Species,
    exact_or_uncertain,
    linear_combination,
    parse_half_reaction,
)

#: The datasets of the electrode table.
DATASETS: tuple[str, ...] = ("catalogue", "bates_bower_1954")

#: The kinds of standard uncertainty in the table (see the header of ``electrodes.csv``).
U_KINDS: tuple[str, ...] = ("exact", "stated", "spread", "widened", "derived", "interpolated")

#: Methods for the Ag/AgCl standard potential as a function of temperature.
SILVER_CHLORIDE_METHODS: tuple[str, ...] = ("table", "equation")

#: Bates & Bower (1954) smoothing equation, E°/V = Σ a_k t^k, t in °C, 0–90 °C, 1 atm.
#: Coefficients from memory except 0.23659 (confirmed); it matches their table within 0.12 mV.
_BATES_BOWER_COEFFICIENTS = (0.23659, -4.8564e-4, -3.4205e-6, 5.869e-9)
_BATES_BOWER_EQUATION_RANGE_C = (0.0, 90.0)

#: Temperature [K] of the catalogue's E° values.
CATALOGUE_TEMPERATURE_K = 298.15

#: Couples whose E° holds at every temperature: the hydrogen electrode, zero by definition.
_ZERO_AT_EVERY_TEMPERATURE = frozenset({"H+/H2"})


def _raw_table() -> pd.DataFrame:
    return load_table("electrodes")


def _parents(row) -> tuple[str, ...]:
    text = row.derived_from if isinstance(row.derived_from, str) else ""
    return tuple(name.strip() for name in text.split(";") if name.strip())


def electrode_table(dataset: str | None = None) -> pd.DataFrame:
    """A copy of the electrode table, optionally one dataset only; derived rows filled in.

    Parameters
    ----------
    dataset : str, optional
        One of :data:`DATASETS`; all rows when omitted.

    Returns
    -------
    pandas.DataFrame
        Columns ``couple, half_reaction, electrons, standard_potential_V,
        u_standard_potential_V, u_kind, temperature_K, pressure_basis_kPa, dataset,
        derived_from, source, u_source, note``. The E° and u of a ``derived`` row are computed
        from its parents (:func:`catalogue`).

    Examples
    --------
    >>> table = electrode_table("catalogue").set_index("couple")
    >>> float(table.loc["Zn2+/Zn", "standard_potential_V"])  # CRC Handbook, from memory
    -0.7618
    >>> round(float(table.loc["Fe3+/Fe", "standard_potential_V"]), 4)  # (0.771 − 2·0.447)/3
    -0.041
    """
    if dataset is not None and dataset not in DATASETS:
        raise ValueError(f"unknown dataset '{dataset}'; valid: {', '.join(DATASETS)}")
    table = _raw_table()
    derived = table["u_kind"] == "derived"
    if derived.any():
        known = {half.name: half for half in _catalogue()}
        for index in table.index[derived]:
            half = known[table.at[index, "couple"]]
            table.at[index, "standard_potential_V"] = half.standard_potential_V
            table.at[index, "u_standard_potential_V"] = half.u_standard_potential_V
    if dataset is None:
        return table
    return table[table["dataset"] == dataset].reset_index(drop=True)


def _derive(target: HalfReaction, parents: tuple[HalfReaction, ...]) -> HalfReaction:
    """The target couple with E° from its parents: n E° = Σ a_i n_i E°_i (ΔG° additivity)."""
    coefficients = linear_combination(target, parents)
    if any(p.standard_potential is None for p in parents):
        raise ValueError(f"electrode table, couple {target.name}: a parent has no E°")
    bases = {p.pressure_basis_Pa for p in parents} | {target.pressure_basis_Pa}
    if len(bases) != 1:
        raise ValueError(f"electrode table, couple {target.name}: parents on different "
                         "standard pressures")
    total = sum(float(a * p.n) * p.standard_potential  # type: ignore[operator]
                for a, p in zip(coefficients, parents, strict=True))
    return dataclasses.replace(target, uncertain_potential=total / float(target.n))


@lru_cache(maxsize=1)
def _catalogue() -> tuple[HalfReaction, ...]:
    table = _raw_table()
    table = table[table["dataset"] == "catalogue"]
    parsed: dict[str, HalfReaction] = {}
    pending: dict[str, tuple[HalfReaction, tuple[str, ...]]] = {}
    for row in table.itertuples(index=False):
        if row.u_kind not in U_KINDS:
            raise ValueError(f"electrode table, couple {row.couple}: unknown u_kind "
                             f"'{row.u_kind}'; valid: {', '.join(U_KINDS)}")
        note = row.note if isinstance(row.note, str) else ""
        half = parse_half_reaction(row.half_reaction, name=row.couple,
                                   pressure_basis_Pa=float(row.pressure_basis_kPa) * 1000.0,
                                   note=note)
        if half.n != row.electrons or not half.is_reduction:
            raise ValueError(f"electrode table, couple {row.couple}: the half-reaction must be a "
                             f"reduction with {row.electrons} electrons")
        parents = _parents(row)
        if (row.u_kind == "derived") != bool(parents):
            raise ValueError(f"electrode table, couple {row.couple}: a derived row names its "
                             "parents in derived_from, and only a derived row does")
        if parents:
            pending[row.couple] = (half, parents)
            continue
        potential = exact_or_uncertain(float(row.standard_potential_V),
                                       float(row.u_standard_potential_V), tag=row.couple)
        parsed[row.couple] = dataclasses.replace(half, uncertain_potential=potential)
    while pending:
        ready = [name for name, (_, parents) in pending.items()
                 if all(p in parsed for p in parents)]
        if not ready:
            raise ValueError(f"electrode table: couples {', '.join(pending)} name parents that "
                             "are missing or derived from one another in a circle")
        for name in ready:
            half, parents = pending.pop(name)
            parsed[name] = _derive(half, tuple(parsed[p] for p in parents))
    return tuple(parsed[name] for name in table["couple"])


def catalogue() -> tuple[HalfReaction, ...]:
    """All couples of the catalogue at 25 °C, each written as a reduction (immutable).

    Each couple's E° is an uncertain number (``HalfReaction.standard_potential``), the same
    variable on every call; a derived couple is a function of its parents' variables, so that
    cells combining them carry the right correlation.

    Examples
    --------
    >>> len(catalogue()) >= 30
    True
    """
    return _catalogue()


def couple_names() -> tuple[str, ...]:
    """The names of the catalogue's couples, e.g. ``"AgCl/Ag"``, in table order.

    Examples
    --------
    >>> couple_names()[:3]
    ('H+/H2', 'H2O/H2', 'Li+/Li')
    """
    return tuple(half.name for half in _catalogue())


def couple(name: str) -> HalfReaction:
    """One couple of the catalogue by name.

    Parameters
    ----------
    name : str
        E.g. ``"AgCl/Ag"``, ``"Zn2+/Zn"``, ``"quinhydrone"``.

    Returns
    -------
    HalfReaction
        The reduction with E° [V] at 25 °C and its standard uncertainty [V].

    Raises
    ------
    ValueError
        For an unknown name; the message lists the valid ones.

    Examples
    --------
    >>> str(couple("Hg2Cl2/Hg")), couple("Hg2Cl2/Hg").standard_potential_V  # CRC, from memory
    ('Hg2Cl2(s) + 2 e- → 2 Hg(l) + 2 Cl-(aq)', 0.26808)
    """
    for half in _catalogue():
        if half.name == name:
            return half
    raise ValueError(f"unknown couple '{name}'; valid: {', '.join(couple_names())}")


def amalgam_couple(half: HalfReaction) -> HalfReaction | None:
    """The amalgam form of a metal couple (M^z+ + z e- = M(s) → M(Hg)); None if not a metal one.

    The activity of the metal in mercury depends on the amalgam's composition; it is held
    constant in a measurement and folded into E°, so the amalgam couple has no catalogue E°.

    Examples
    --------
    >>> str(amalgam_couple(couple("K+/K")))
    'K+(aq) + e- → K(Hg)'
    """
    solids = half.species_in("s")
    if len(half.stoichiometry) != 2 or len(solids) != 1 or len(half.species_in("aq")) != 1:
        return None
    metal = solids[0]
    if len(metal.elements) != 1 or sum(metal.elements.values()) != 1:
        return None
    amalgam = Species(metal.formula, 0, "Hg")
    return HalfReaction(
        stoichiometry=tuple((amalgam if s == metal else s, c) for s, c in half.stoichiometry),
        electrons=half.electrons,
        standard_potential_V=None,
        u_standard_potential_V=None,
        name=half.name.replace(f"/{metal.formula}", f"/{metal.formula}(Hg)"),
        pressure_basis_Pa=half.pressure_basis_Pa,
        note="amalgam: the metal's activity in mercury is held constant and folded into E°",
    )


@lru_cache(maxsize=1)
def _bates_bower() -> tuple[CubicSpline, np.ndarray, np.ndarray]:
    from scipy.interpolate import CubicSpline  # (heavy: half a second, for this table only)

    table = electrode_table("bates_bower_1954").sort_values("temperature_K")
    temperature = table["temperature_K"].to_numpy(dtype=float)
    potential = table["standard_potential_V"].to_numpy(dtype=float)
    uncertainty = table["u_standard_potential_V"].to_numpy(dtype=float)
    return CubicSpline(temperature, potential), temperature, uncertainty


def silver_chloride_standard_potential(
    temperature_K: npt.ArrayLike,
    method: str = "table",
    standard_pressure_Pa: float = ATMOSPHERE_PA,
) -> np.ndarray:
    r"""E° of the Ag | AgCl electrode against the hydrogen electrode, Bates & Bower (1954).

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K]; 278.15–368.15 for ``"table"``, 273.15–363.15 for ``"equation"``.
    method : str
        ``"table"``: a cubic spline through their Table 1 (5–95 °C), the couple's E°(T) in the
        catalogue; ``"equation"``: their smoothing cubic in t/°C. One of
        :data:`SILVER_CHLORIDE_METHODS`.
    standard_pressure_Pa : float
        The standard pressure of the result [Pa]: 101325 (their basis, 1 atm) or 100000 (1 bar).

    Returns
    -------
    numpy.ndarray
        E° [V] (absolute volts).

    Notes
    -----
    The spline passes through every row of their table (it interpolates: weighted polynomials
    of degree 3–6 miss the 25 °C row by 16–28 µV, more than its 0.01 mV standard deviation), so
    it is smooth through 25 °C and equals the catalogue's 0.22234 V there. Their equation,

    .. math:: E° = 0.23659 − 4.8564×10^{-4}\, t − 3.4205×10^{-6}\, t^2 + 5.869×10^{-9}\, t^3

    (t in °C; Bates & Bower 1954, J. Res. NBS 53, 283; coefficients other than the first from
    memory), matches the table within 0.12 mV. A change of pressure basis adds
    (RT/F)·(−½)·ln(p_from/p_to), −0.169 mV from 1 atm to 1 bar at 25 °C (see
    :func:`activolt.physics.corrections.standard_pressure_basis_shift`).

    Examples
    --------
    Bates & Bower (1954), Table 1: 0.22234 V at 25 °C (1 atm):

    >>> round(float(silver_chloride_standard_potential(298.15)), 5)
    0.22234
    >>> round(float(silver_chloride_standard_potential(298.15, standard_pressure_Pa=1e5)), 5)
    0.22217
    """
    if method not in SILVER_CHLORIDE_METHODS:
        raise ValueError(
            f"unknown method '{method}'; valid: {', '.join(SILVER_CHLORIDE_METHODS)}"
        )
    temperature = np.asarray(temperature_K, dtype=float)
    if method == "table":
        spline, rows, _ = _bates_bower()
        low, high = float(rows[0]), float(rows[-1])
    else:
        low, high = (ZERO_CELSIUS_K + t for t in _BATES_BOWER_EQUATION_RANGE_C)
    outside = (temperature < low - 1e-9) | (temperature > high + 1e-9)
    if np.any(outside):
        raise ValueError(
            f"temperature outside {low:.2f}–{high:.2f} K, where the {method} of Bates & Bower "
            "(1954) holds; choose the other method or a temperature inside"
        )
    if method == "table":
        potential = spline(temperature)
    else:
        celsius = temperature - ZERO_CELSIUS_K
        potential = np.polynomial.polynomial.polyval(celsius, _BATES_BOWER_COEFFICIENTS)
    shift = standard_pressure_basis_shift(
        temperature, electrons=1, gas_coefficients={"H2(g)": -0.5},
        from_pressure_Pa=ATMOSPHERE_PA, to_pressure_Pa=standard_pressure_Pa,
    )
    return np.asarray(potential + shift, dtype=float)


def silver_chloride_standard_uncertainty(temperature_K: npt.ArrayLike) -> np.ndarray:
    """Standard uncertainty of :func:`silver_chloride_standard_potential` (``"table"``) [V].

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K], 278.15–368.15.

    Returns
    -------
    numpy.ndarray
        u(E°) [V]: their standard deviation, 0.01 mV at 25 °C and 0.09 mV at 95 °C (Bates &
        Bower 1954), linear in |t − 25 °C| in between and below 25 °C (our reading, in the
        table's ``u_standard_potential_V`` column), interpolated linearly between rows.

    Examples
    --------
    >>> float(silver_chloride_standard_uncertainty(298.15))  # Bates & Bower (1954)
    1e-05
    """
    _, rows, uncertainty = _bates_bower()
    temperature = np.asarray(temperature_K, dtype=float)
    outside = (temperature < rows[0] - 1e-9) | (temperature > rows[-1] + 1e-9)
    if np.any(outside):
        raise ValueError(f"temperature outside {rows[0]:.2f}–{rows[-1]:.2f} K, the range of "
                         "Bates & Bower (1954)")
    return np.asarray(np.interp(temperature, rows, uncertainty), dtype=float)


def couple_at_temperature(half: HalfReaction, temperature_K: float) -> HalfReaction | None:
    """A catalogue couple with its E° at temperature T; None where the catalogue has no E°(T).

    One E°(T) per couple: H+/H2 is zero at every temperature (by definition); AgCl/Ag follows
    :func:`silver_chloride_standard_potential` (Bates & Bower 1954, 5–95 °C, 1 atm), whose
    value at 25 °C is the catalogue's, so that it runs smoothly through 25 °C; every other couple
    is known at 298.15 K (± 0.005 K) only.

    Parameters
    ----------
    half : HalfReaction
        A couple of the catalogue, written either way.
    temperature_K : float
        Temperature [K].

    Returns
    -------
    HalfReaction or None
        The couple with E° [V] and its standard uncertainty at T (the catalogue's own couple at
        298.15 K, keeping its correlations), or None outside the range of its E°(T).

    Examples
    --------
    Bates & Bower (1954), Table 1: 0.20449 V at 50 °C:

    >>> round(couple_at_temperature(couple("AgCl/Ag"), 323.15).standard_potential_V, 5)
    0.20449
    >>> couple_at_temperature(couple("Zn2+/Zn"), 323.15) is None
    True
    """
    if half.standard_potential_V is None or half.name in _ZERO_AT_EVERY_TEMPERATURE:
        return half
    if not half.is_reduction:
        reduction = couple_at_temperature(half.as_reduction(), temperature_K)
        return None if reduction is None else reduction.reversed()
    if half.name == "AgCl/Ag":
        _, rows, _ = _bates_bower()
        if not rows[0] <= temperature_K <= rows[-1]:
            return None
        if temperature_K == CATALOGUE_TEMPERATURE_K:
            return half
        potential = exact_or_uncertain(
            float(silver_chloride_standard_potential(temperature_K)),
            float(silver_chloride_standard_uncertainty(temperature_K)),
            tag=f"AgCl/Ag at {temperature_K:.2f} K (Bates & Bower 1954)")
        return dataclasses.replace(half, uncertain_potential=potential)
    if abs(temperature_K - CATALOGUE_TEMPERATURE_K) <= 0.005:
        return half
    return None


# --- relations between couples --------------------------------------------------------------

@dataclass(frozen=True)
class CoupleRelation:
    """Couples of the catalogue whose half-reactions add up to nothing: Σ c_i · couple_i = 0.

    Attributes
    ----------
    couples : tuple of str
        The couples' names, in catalogue order.
    coefficients : tuple of int
        c_i, whole numbers without common factor, first one positive; each scales the couple's
        reduction as written in the catalogue (n_i electrons).
    residual : UFloat
        Σ c_i n_i E°_i [V] with its standard uncertainty (correlations kept), which ΔG°
        additivity makes zero; a consistent catalogue has |residual| within two of its standard
        uncertainties.
    """

    couples: tuple[str, ...]
    coefficients: tuple[int, ...]
    residual: UFloat

    def consistent(self, coverage_factor: float = 2.0) -> bool:
        """True when |Σ c_i n_i E°_i| ≤ k·u (k = ``coverage_factor``), or both are zero."""
        value, u = abs(self.residual.nominal_value), self.residual.std_dev
        return value <= coverage_factor * u + 1e-12

    def __str__(self) -> str:
        terms = [f"{c:+d} {name}" for c, name in zip(self.coefficients, self.couples,
                                                       strict=True)]
        return " ".join(terms) + " = 0"


def _species_set(half: HalfReaction) -> frozenset[Species]:
    return frozenset(s for s, _ in half.stoichiometry)


def couple_relations(max_members: int = 4) -> tuple[CoupleRelation, ...]:
    r"""Every minimal set of up to ``max_members`` catalogue couples whose reactions add up.

    A set is a relation when some rational c_i, none zero, make Σ c_i · couple_i the empty
    reaction (electrons included); it is minimal when no smaller subset is one. ΔG° additivity
    then requires

    .. math:: \sum_i c_i n_i E°_i = 0

    (e.g. Fe³⁺/Fe²⁺ + Fe²⁺/Fe − Fe³⁺/Fe: E°₁ + 2E°₂ − 3E°₃ = 0). Couples without an E°
    (amalgams) are left out.

    Parameters
    ----------
    max_members : int
        Largest relation searched for (2 or more).

    Returns
    -------
    tuple of CoupleRelation

    Examples
    --------
    >>> any(set(r.couples) == {"Fe2+/Fe", "Fe3+/Fe", "Fe3+/Fe2+"} for r in couple_relations(3))
    True
    """
    couples = [h for h in _catalogue() if h.standard_potential is not None]
    species = [_species_set(h) for h in couples]
    relations = []
    for size in range(2, max_members + 1):
        for members in itertools.combinations(range(len(couples)), size):
            counts = Counter(s for i in members for s in species[i])
            if any(count < 2 for count in counts.values()):
                continue  # a species in one member only cannot cancel
            parts = tuple(couples[i] for i in members[:-1])
            try:
                coefficients = linear_combination(couples[members[-1]], parts)
            except ValueError:
                continue
            if any(c == 0 for c in coefficients):
                continue  # a smaller relation, found on its own
            signed = [*coefficients, Fraction(-1)]
            scale = math.lcm(*(c.denominator for c in signed))
            whole = [c * scale for c in signed]
            divisor = math.gcd(*(int(c) for c in whole))
            sign = 1 if whole[0] > 0 else -1
            whole = [int(sign * c / divisor) for c in whole]
            halves = [couples[i] for i in members]
            residual = sum(float(c * h.n) * h.standard_potential  # type: ignore[operator]
                           for c, h in zip(whole, halves, strict=True))
            relations.append(CoupleRelation(tuple(h.name for h in halves), tuple(whole),
                                            residual))
    return tuple(relations)
