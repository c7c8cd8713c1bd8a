"""The electrode catalogue: standard reduction potentials of couples used in potentiometry.

The table ``reference/electrodes.csv`` holds, for each couple, its half-reaction written in the
species notation of :mod:`activolt.reactions`, the electrons n, E° [V] at 25 °C, its standard
uncertainty and where that uncertainty comes from (``u_kind``), the standard pressure of the value
(101.325 kPa or 100 kPa) and the source. It also holds the E° of the silver–silver chloride
electrode from 5 to 95 °C (Bates & Bower 1954), which :func:`silver_chloride_standard_potential`
interpolates.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
import numpy.typing as npt
import pandas as pd
from scipy.interpolate import CubicSpline

from .constants import ATMOSPHERE_PA, ZERO_CELSIUS_K
from .corrections import standard_pressure_basis_shift
from .reactions import HalfReaction, Species, parse_half_reaction
from .reference import load_table

#: The datasets of the electrode table.
DATASETS: tuple[str, ...] = ("catalogue", "bates_bower_1954")

#: Methods for the Ag/AgCl standard potential as a function of temperature.
SILVER_CHLORIDE_METHODS: tuple[str, ...] = ("table", "equation")

#: Bates & Bower (1954) smoothing equation, E°/V = Σ a_k t^k, t in °C, 0–90 °C, 1 atm.
#: Coefficients from memory except 0.23659 (confirmed); it matches their table within 0.12 mV.
_BATES_BOWER_COEFFICIENTS = (0.23659, -4.8564e-4, -3.4205e-6, 5.869e-9)
_BATES_BOWER_EQUATION_RANGE_C = (0.0, 90.0)


def electrode_table(dataset: str | None = None) -> pd.DataFrame:
    """A copy of the electrode table, optionally one dataset only.

    Parameters
    ----------
    dataset : str, optional
        One of :data:`DATASETS`; all rows when omitted.

    Returns
    -------
    pandas.DataFrame
        Columns ``couple, half_reaction, electrons, standard_potential_V,
        u_standard_potential_V, u_kind, temperature_K, pressure_basis_kPa, dataset, source,
        note``.

    Examples
    --------
    >>> table = electrode_table("catalogue")
    >>> float(table.set_index("couple").loc["Zn2+/Zn", "standard_potential_V"])  # CRC, memory
    -0.7618
    """
    table = load_table("electrodes")
    if dataset is None:
        return table
    if dataset not in DATASETS:
        raise ValueError(f"unknown dataset '{dataset}'; valid: {', '.join(DATASETS)}")
    return table[table["dataset"] == dataset].reset_index(drop=True)


@lru_cache(maxsize=1)
def _catalogue() -> tuple[HalfReaction, ...]:
    table = electrode_table("catalogue")
    couples = []
    for row in table.itertuples(index=False):
        note = row.note if isinstance(row.note, str) else ""
        half = parse_half_reaction(
            row.half_reaction,
            standard_potential_V=float(row.standard_potential_V),
            u_standard_potential_V=float(row.u_standard_potential_V),
            name=row.couple,
            pressure_basis_Pa=float(row.pressure_basis_kPa) * 1000.0,
            note=note,
        )
        if half.n != row.electrons or not half.is_reduction:
            raise ValueError(f"electrode table, couple {row.couple}: the half-reaction must be a "
                             f"reduction with {row.electrons} electrons")
        couples.append(half)
    return tuple(couples)


def catalogue() -> tuple[HalfReaction, ...]:
    """All couples of the catalogue at 25 °C, each written as a reduction (immutable).

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
def _bates_bower_spline() -> tuple[CubicSpline, float, float]:
    table = electrode_table("bates_bower_1954").sort_values("temperature_K")
    temperature = table["temperature_K"].to_numpy(dtype=float)
    potential = table["standard_potential_V"].to_numpy(dtype=float)
    return CubicSpline(temperature, potential), float(temperature[0]), float(temperature[-1])


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
        ``"table"``: a cubic spline through their Table 1 (5–95 °C); ``"equation"``: their
        smoothing cubic in t/°C. One of :data:`SILVER_CHLORIDE_METHODS`.
    standard_pressure_Pa : float
        The standard pressure of the result [Pa]: 101325 (their basis, 1 atm) or 100000 (1 bar).

    Returns
    -------
    numpy.ndarray
        E° [V] (absolute volts).

    Notes
    -----
    .. math:: E° = 0.23659 − 4.8564×10^{-4}\, t − 3.4205×10^{-6}\, t^2 + 5.869×10^{-9}\, t^3

    (t in °C; Bates & Bower 1954, J. Res. NBS 53, 283; coefficients other than the first from
    memory). A change of pressure basis adds (RT/F)·(−½)·ln(p_from/p_to), −0.169 mV from 1 atm
    to 1 bar at 25 °C (see :func:`activolt.corrections.standard_pressure_basis_shift`).
    Their standard deviation is 0.01 mV at 25 °C and 0.09 mV at 95 °C.

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
        spline, low, high = _bates_bower_spline()
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
