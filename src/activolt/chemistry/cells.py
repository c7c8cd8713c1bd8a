r"""Cells as chemists write them: IUPAC cell diagrams → electrode couples → the cell reaction.

A cell diagram lists the phases from the left terminal to the right one (IUPAC Green Book, 3rd
ed., 2007, §2.13; Cohen et al., *Quantities, Units and Symbols in Physical Chemistry*):
oxidation happens at the left electrode, reduction at the right, ``|`` is a phase boundary and
``||`` a salt bridge. Our plain notation, one phase between bars:

* a species is ``FORMULA[CHARGE](STATE)`` as in :mod:`activolt.chemistry.reactions`; the state is
  ``s``, ``l``, ``g``, ``aq`` or ``Hg`` (an amalgam, e.g. ``K(Hg)``);
* several species of one phase are separated by commas: ``Pt | Fe2+(aq), Fe3+(aq), Cl-(aq) | …``;
* an amount may follow the state after a comma: a molality for a solute,
  ``HCl(aq, 0.01 mol/kg)`` (units ``mol/kg``, ``mmol/kg``), or a partial pressure for a gas,
  ``H2(g, 101.325 kPa)`` (units ``Pa``, ``kPa``, ``MPa``, ``bar``, ``atm``);
* an aqueous neutral formula that :func:`activolt.chemistry.electrolytes.parse_electrolyte` knows
  is an electrolyte (``HCl(aq)`` gives H+ and Cl−); any other neutral aqueous formula is a molecular
  solute (``C6H4O2(aq)``);
* inert electronic conductors need no state: ``Pt``, ``Au``, ``C(graphite)`` (or with ``(s)``).

Each electrode's couple is looked up in the electrode catalogue
(:mod:`activolt.chemistry.electrodes`):
the couple whose solid, liquid, gaseous and amalgam species are exactly the electrode's phases,
and whose aqueous species the adjacent solution holds. The two couples combine into the cell
reaction (:func:`activolt.chemistry.reactions.combine`), written per formula unit of the
electrolyte the
cell forms or consumes when the cell has no liquid junction.
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
import numpy.typing as npt
from uncertainties import UFloat

from ..constants import (
    ATMOSPHERE_PA,
    FARADAY_C_MOL,
    GAS_CONSTANT_J_MOL_K,
    STANDARD_PRESSURE_PA,
    ZERO_CELSIUS_K,
)
from ..physics.corrections import standard_pressure_basis_shift
from .electrodes import amalgam_couple, catalogue, couple_at_temperature, couple_names
from .electrolytes import Electrolyte, parse_electrolyte
from .reactions import (
    STATES,
    CellReaction,
    HalfReaction,
    NernstExpression,
    Species,
    combine,
    element_counts,
    nernst_expression,
    split_charge,
    to_ascii,
)

#: Inert electronic conductors: symbol → the states they may be written with.
INERT_CONDUCTORS: dict[str, tuple[str, ...]] = {
    "Pt": ("s",), "Au": ("s",), "C": ("s", "graphite"),
}

#: Units of a molality written in a diagram → factor to mol kg⁻¹.
MOLALITY_UNITS: dict[str, float] = {"mol/kg": 1.0, "mmol/kg": 1e-3}

#: Units of a pressure written in a diagram → factor to Pa.
PRESSURE_UNITS: dict[str, float] = {
    "Pa": 1.0, "kPa": 1e3, "MPa": 1e6, "bar": 1e5, "atm": 101325.0,
}

_EXAMPLE = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
_WATER = Species("H2O", 0, "l")


class DiagramError(ValueError):
    """A cell diagram that cannot be read or does not describe a cell.

    Attributes
    ----------
    message : str
        What is wrong and what to do, one line.
    position : int
        0-based index of the offending character in the diagram.
    diagram : str
        The diagram as given.
    """

    def __init__(self, message: str, position: int, diagram: str = "") -> None:
        super().__init__(message)
        self.message = message
        self.position = position
        self.diagram = diagram

    def __str__(self) -> str:
        return f"cell diagram, position {self.position}: {self.message}"

    def pointer(self) -> str:
        """The diagram and a caret under the offending character (two lines)."""
        return f"{self.diagram}\n{' ' * self.position}^"


@dataclass(frozen=True)
class Component:
    """One species written in a phase of a diagram.

    Attributes
    ----------
    text : str
        As written, e.g. ``"HCl(aq, 0.01 mol/kg)"``.
    position : int
        0-based index of its first character in the diagram.
    formula : str
        Formula without charge.
    charge : int
        Charge number [-].
    state : str
        One of :data:`activolt.chemistry.reactions.STATES` (``"s"`` for inert conductors).
    inert : bool
        Whether it is an inert electronic conductor (Pt, Au, C).
    molality_mol_kg : float or None
        Molality written in the diagram [mol kg⁻¹].
    pressure_Pa : float or None
        Partial pressure written in the diagram [Pa].
    electrolyte : Electrolyte or None
        The electrolyte, for a neutral aqueous formula that is one.
    species : tuple of Species
        What it contributes: the ions of an electrolyte, the species itself, or nothing for an
        inert conductor.
    """

    text: str
    position: int
    formula: str
    charge: int
    state: str
    inert: bool
    molality_mol_kg: float | None
    pressure_Pa: float | None
    electrolyte: Electrolyte | None
    species: tuple[Species, ...]


@dataclass(frozen=True)
class Phase:
    """One phase of a diagram (the text between two bars).

    Attributes
    ----------
    text : str
        As written.
    position : int
        0-based index of its first character in the diagram.
    components : tuple of Component
        The species written in it.
    """

    text: str
    position: int
    components: tuple[Component, ...]

    @property
    def is_solution(self) -> bool:
        """True for an aqueous phase (an electrolyte solution)."""
        return all(c.state == "aq" for c in self.components)

    @property
    def species(self) -> tuple[Species, ...]:
        """All species the phase contributes, without repeats."""
        return tuple(dict.fromkeys(s for c in self.components for s in c.species))


@dataclass(frozen=True)
class CellDiagram:
    """A parsed cell diagram.

    Attributes
    ----------
    text : str
        The diagram as given.
    left : tuple of Phase
        Phases of the left electrode (oxidation), as written from the terminal inwards.
    solutions : tuple of Phase
        The electrolyte solutions, left to right.
    right : tuple of Phase
        Phases of the right electrode (reduction), as written from the solution outwards.
    salt_bridges : int
        Number of ``||`` in the diagram.
    """

    text: str
    left: tuple[Phase, ...]
    solutions: tuple[Phase, ...]
    right: tuple[Phase, ...]
    salt_bridges: int

    @property
    def liquid_junction(self) -> bool:
        """True when the cell has more than one solution (a salt bridge or a junction)."""
        return len(self.solutions) > 1

    @property
    def electrolytes(self) -> tuple[Electrolyte, ...]:
        """The electrolytes written in the solutions, left to right."""
        return tuple(c.electrolyte for p in self.solutions for c in p.components
                     if c.electrolyte is not None)


def _fail(message: str, position: int, text: str) -> DiagramError:
    return DiagramError(message, max(0, min(position, max(len(text) - 1, 0))), text)


def _split_top_level(text: str, offset: int, separator: str) -> list[tuple[str, int]]:
    """Split at ``separator`` outside parentheses; (piece, absolute start) pairs."""
    pieces, depth, start = [], 0, 0
    for index, char in enumerate(text):
        depth += (char == "(") - (char == ")")
        if char == separator and depth == 0:
            pieces.append((text[start:index], offset + start))
            start = index + 1
    pieces.append((text[start:], offset + start))
    return pieces


def _strip(piece: str, start: int) -> tuple[str, int]:
    stripped = piece.lstrip()
    return stripped.rstrip(), start + len(piece) - len(stripped)


def _amount(text: str, state: str, position: int, diagram: str) -> tuple[float | None,
                                                                          float | None]:
    match = re.fullmatch(r"\s*([0-9]*\.?[0-9]+(?:[eE][+-]?\d+)?)\s*(\S+)\s*", text)
    if match is None:
        raise _fail(f"cannot read the amount '{text.strip()}'; write a number and a unit, "
                    "e.g. (aq, 0.01 mol/kg) or (g, 101.325 kPa)", position, diagram)
    value, unit = float(match.group(1)), match.group(2)
    if state == "aq" and unit in MOLALITY_UNITS:
        return value * MOLALITY_UNITS[unit], None
    if state == "g" and unit in PRESSURE_UNITS:
        return None, value * PRESSURE_UNITS[unit]
    valid = MOLALITY_UNITS if state == "aq" else PRESSURE_UNITS if state == "g" else {}
    if not valid:
        raise _fail(f"an amount can follow only (aq) or (g), not ({state})", position, diagram)
    raise _fail(f"unknown unit '{unit}' for ({state}); valid: {', '.join(valid)}",
                position + match.start(2), diagram)


#: Substances of electrodes that are gases at room temperature (the state suggested when a
#: diagram leaves it out).
_USUAL_GASES = frozenset({"H2", "O2", "Cl2", "N2", "F2", "CO2", "CO", "NH3", "SO2", "NO", "N2O"})


def _component(text: str, position: int, diagram: str) -> Component:
    if text.endswith(")"):
        depth, opening = 0, -1
        for index in range(len(text) - 1, -1, -1):
            depth += (text[index] == ")") - (text[index] == "(")
            if depth == 0:
                opening = index
                break
        head, inside = text[:opening].strip(), text[opening + 1:-1]
    else:
        head, inside, opening = text, None, len(text)
    if head in INERT_CONDUCTORS and (inside is None or inside.strip() in INERT_CONDUCTORS[head]):
        return Component(text, position, head, 0, "s", True, None, None, None, ())
    if not head:
        raise _fail(f"'{text}' has no formula before its state", position, diagram)
    if inside is None:
        likely = ("g" if head in _USUAL_GASES else "l" if head in ("Hg", "Br2")
                  else "aq" if head[-1:] in "+-" else "s")
        raise _fail(
            f"missing phase after '{text}': write its state in parentheses, e.g. "
            f"{text}({likely}); valid states: {', '.join(STATES)}", position + len(text), diagram)
    state_text, _, amount_text = inside.partition(",")
    state = state_text.strip()
    state_position = position + opening + 1 + (len(state_text) - len(state_text.lstrip()))
    if state not in STATES:
        raise _fail(f"unknown phase '({state})' of {head}; valid: {', '.join(STATES)}",
                    state_position, diagram)
    formula, charge = split_charge(head)
    try:
        element_counts(formula)
    except ValueError as error:
        raise _fail(f"{error}", position, diagram) from None
    molality, pressure = (None, None)
    if amount_text.strip():
        amount_position = position + opening + 2 + len(state_text)
        molality, pressure = _amount(amount_text, state, amount_position, diagram)
    electrolyte = None
    species: tuple[Species, ...] = (Species(formula, charge, state),)
    if state == "aq" and charge == 0:
        try:
            electrolyte = parse_electrolyte(formula)
        except ValueError as error:
            if "charge-balanced" in str(error):
                raise _fail(f"{error}", position, diagram) from None
        if electrolyte is not None:
            species = (Species(electrolyte.cation, electrolyte.z_cation, "aq"),
                       Species(electrolyte.anion, electrolyte.z_anion, "aq"))
    return Component(text, position, formula, charge, state, False, molality, pressure,
                     electrolyte, species)


def _phase(text: str, position: int, diagram: str) -> Phase:
    components = []
    for piece, start in _split_top_level(text, position, ","):
        stripped, where = _strip(piece, start)
        if not stripped:
            raise _fail("empty species between commas; remove the extra comma", start, diagram)
        components.append(_component(stripped, where, diagram))
    states = {c.state for c in components if not c.inert}
    if "aq" in states and len(states) > 1:
        raise _fail(f"phase '{text}' mixes an aqueous solution with other states; separate "
                    "phases with '|'", position, diagram)
    return Phase(text, position, tuple(components))


def parse_diagram(text: str) -> CellDiagram:
    """Parse an IUPAC cell diagram.

    Parameters
    ----------
    text : str
        E.g. ``"Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"``; see the module notes for the notation.

    Returns
    -------
    CellDiagram

    Raises
    ------
    DiagramError
        With the 0-based ``position`` of the offending character, for an empty diagram, a
        missing or unknown phase, an empty phase or two salt bridges in a row, unmatched
        parentheses, a diagram without solution or without one of its electrodes.

    Examples
    --------
    >>> cell = parse_diagram("Zn(s) | ZnSO4(aq) || CuSO4(aq) | Cu(s)")
    >>> [p.text for p in cell.solutions], cell.liquid_junction
    (['ZnSO4(aq)', 'CuSO4(aq)'], True)
    """
    diagram = to_ascii(text)
    if not diagram.strip():
        raise DiagramError(f"empty cell diagram; write one such as '{_EXAMPLE}'", 0, text)
    pieces: list[tuple[str, int]] = []
    separators: list[tuple[str, int]] = []
    depth, start, index, opened = 0, 0, 0, []
    while index < len(diagram):
        char = diagram[index]
        if char == "(":
            depth += 1
            opened.append(index)
        elif char == ")":
            depth -= 1
            if depth < 0:
                raise _fail("')' without its '('", index, text)
            opened.pop()
        elif char == "|" and depth == 0:
            run = len(diagram[index:]) - len(diagram[index:].lstrip("|"))
            if run > 2:
                raise _fail("three bars in a row; write '|' for a phase boundary or '||' for a "
                            "salt bridge", index + 2, text)
            pieces.append((diagram[start:index], start))
            separators.append(("||" if run == 2 else "|", index))
            index += run
            start = index
            continue
        index += 1
    if depth > 0:
        raise _fail("'(' is never closed; add its ')'", opened[-1], text)
    pieces.append((diagram[start:], start))
    phases: list[Phase] = []
    for number, (piece, where) in enumerate(pieces):
        stripped, position = _strip(piece, where)
        if stripped:
            phases.append(_phase(stripped, position, text))
            continue
        if 0 < number < len(separators) and separators[number - 1][0] == "||" == \
                separators[number][0]:
            raise _fail("two salt bridges in a row; one '||' joins two solutions, so remove "
                        "one or write a solution between them", separators[number][1], text)
        if number == 0:
            raise _fail("the diagram starts with a bar; it starts with the left electrode",
                        separators[0][1], text)
        if number == len(separators):
            raise _fail("the diagram ends with a bar; it ends with the right electrode",
                        separators[-1][1], text)
        raise _fail("missing phase between two bars; write a phase or remove one bar",
                    separators[number][1], text)
    solution_indices = [i for i, p in enumerate(phases) if p.is_solution]
    if not solution_indices:
        raise _fail("no electrolyte solution; a cell needs an (aq) phase between its electrodes, "
                    f"e.g. '{_EXAMPLE}'", 0, text)
    first, last = solution_indices[0], solution_indices[-1]
    for i in range(first, last + 1):
        if not phases[i].is_solution:
            raise _fail(f"'{phases[i].text}' sits between two solutions; write one cell only",
                        phases[i].position, text)
    for kind, position in separators:
        between_solutions = any(
            phases[i].position < position < phases[i + 1].position
            for i in range(first, last))
        if kind == "||" and not between_solutions:
            raise _fail("a salt bridge '||' must join two solutions", position, text)
    if first == 0:
        raise _fail("no left electrode before the solution; the diagram starts with the "
                    "electrode where oxidation happens", phases[0].position, text)
    if last == len(phases) - 1:
        raise _fail("no right electrode after the solution; the diagram ends with the "
                    "electrode where reduction happens", len(text.rstrip()) - 1, text)
    return CellDiagram(
        text=text,
        left=tuple(phases[:first]),
        solutions=tuple(phases[first:last + 1]),
        right=tuple(phases[last + 1:]),
        salt_bridges=sum(kind == "||" for kind, _ in separators),
    )


def _non_aqueous(half: HalfReaction) -> frozenset[Species]:
    return frozenset(s for s, _ in half.stoichiometry if s.state != "aq" and s != _WATER)


def _candidates() -> tuple[HalfReaction, ...]:
    amalgams = (amalgam_couple(h) for h in catalogue())
    return catalogue() + tuple(h for h in amalgams if h is not None)


def electrode_couple(electrode: tuple[Phase, ...], solution: Phase, diagram: str = ""
                     ) -> HalfReaction:
    """The catalogue couple of one electrode, given its phases and the solution it touches.

    Parameters
    ----------
    electrode : tuple of Phase
        The electrode's phases (inert conductors are ignored).
    solution : Phase
        The solution next to it, which must hold the couple's aqueous species.
    diagram : str
        The diagram, for error messages.

    Returns
    -------
    HalfReaction
        The couple as a reduction; an amalgam couple has no E°.

    Raises
    ------
    DiagramError
        For an unknown couple (no catalogue couple has these phases) or an unbalanced cell
        (the solution lacks an aqueous species the couple needs), or an ambiguous one.

    Examples
    --------
    >>> cell = parse_diagram("Ag(s) | AgCl(s) | KCl(aq) | K(Hg)")
    >>> electrode_couple(cell.left, cell.solutions[0]).name
    'AgCl/Ag'
    """
    components = [c for p in electrode for c in p.components if not c.inert]
    phases = frozenset(s for c in components for s in c.species)
    available = set(solution.species) | {_WATER} | {
        s for p in electrode for c in p.components for s in c.species}
    matching = [h for h in _candidates() if _non_aqueous(h) == phases]
    position = components[0].position if components else solution.position
    if not matching and not phases:
        matching = [h for h in _candidates()
                    if not _non_aqueous(h) and set(h.species_in("aq")) <= available]
    if not matching:
        written = ", ".join(s.label for s in sorted(phases)) or "an inert conductor only"
        raise _fail(f"unknown couple for the electrode {written}; known couples: "
                    f"{', '.join(couple_names())} (metals also as amalgams, M(Hg))",
                    position, diagram)
    complete = [h for h in matching if {s for s, _ in h.stoichiometry} - phases <= available]
    if not complete:
        half = matching[0]
        lacking = sorted({s.label for s, _ in half.stoichiometry} - {s.label for s in available})
        raise _fail(f"unbalanced cell: the couple {half.name} needs {', '.join(lacking)}, which "
                    f"the solution '{solution.text}' does not hold; add it to the solution or "
                    "choose another electrode", solution.position, diagram)
    if len(complete) > 1:
        raise _fail(f"ambiguous electrode: couples {', '.join(h.name for h in complete)} all "
                    "fit; leave out of the solution the species of the couples you do not mean",
                    position, diagram)
    return complete[0]


@dataclass(frozen=True)
class CellStoichiometry:
    """What the reduction of a cell's EMF needs, from its diagram.

    Attributes
    ----------
    diagram : CellDiagram
        The parsed diagram.
    left_couple, right_couple : HalfReaction
        The electrode couples, written as reductions.
    nernst : NernstExpression
        The cell reaction and how each species enters E; per formula unit of the electrolyte
        when the cell has no liquid junction and forms or consumes one.
    """

    diagram: CellDiagram
    left_couple: HalfReaction
    right_couple: HalfReaction
    nernst: NernstExpression

    @property
    def reaction(self) -> CellReaction:
        """The balanced cell reaction for :attr:`electrons` electrons."""
        return self.nernst.reaction

    @property
    def reaction_text(self) -> str:
        """The cell reaction as a string, e.g. ``"1/2 H2(g) + AgCl(s) → …"``."""
        return str(self.nernst.reaction)

    @property
    def electrons(self) -> int | Fraction:
        """n [-], per formula unit of the electrolyte when there is one."""
        n = self.nernst.electrons
        return int(n) if n.denominator == 1 else n

    @property
    def electrolyte(self) -> Electrolyte | None:
        """The electrolyte formed (or consumed) by the cell reaction, or None."""
        return self.nernst.electrolyte

    @property
    def electrolyte_units(self) -> int:
        """+1 when the reaction as written forms the electrolyte, −1 when it consumes it, else 0."""
        return int(self.nernst.electrolyte_units)

    @property
    def gas_coefficients(self) -> dict[str, float]:
        """Gas label → signed coefficient for n electrons (products +), e.g. {"H2(g)": −0.5}."""
        return self.nernst.gas_coefficients

    @property
    def liquid_junction(self) -> bool:
        """Whether the cell has a liquid junction (its EMF then holds a junction potential)."""
        return self.diagram.liquid_junction

    @property
    def standard_potential(self) -> UFloat | None:
        """E°cell = E°(right) − E°(left) at 25 °C from the catalogue [V]; None if unknown."""
        return self.reaction.standard_potential

    @property
    def standard_pressure_Pa(self) -> float | None:
        """The standard pressure of the catalogue E° values [Pa] (None if they differ)."""
        bases = {self.left_couple.pressure_basis_Pa, self.right_couple.pressure_basis_Pa}
        return bases.pop() if len(bases) == 1 else None

    def nernst_factor(self, temperature_K: npt.ArrayLike) -> np.ndarray:
        """k = ν R T / (n F) [V], E = E° − k ln(m± γ±) for the electrolyte formed."""
        return self.nernst.nernst_factor(temperature_K)


def cell_from_diagram(text: str) -> CellStoichiometry:
    """Everything the reduction needs from a cell diagram.

    Parameters
    ----------
    text : str
        The cell diagram.

    Returns
    -------
    CellStoichiometry
        Electrolyte, electrons n, gas coefficients, the reaction, E° with uncertainty.

    Raises
    ------
    DiagramError
        If the diagram cannot be read or its electrodes are not in the catalogue.

    Notes
    -----
    For a cell without liquid junction whose reaction forms one electrolyte M(ν+)X(ν−), the
    reaction is scaled to one formula unit, so that E = E° − (νRT/nF) ln(m± γ±) (Harned & Owen
    1958, ch. 10).

    Examples
    --------
    The Harned cell (E° of AgCl/Ag: Bates & Bower 1954, Table 1, 25 °C, 1 atm):

    >>> cell = cell_from_diagram("Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)")
    >>> cell.electrolyte.formula, cell.electrons, cell.gas_coefficients
    ('HCl', 1, {'H2(g)': -0.5})
    >>> cell.reaction_text
    '1/2 H2(g) + AgCl(s) → H+(aq) + Ag(s) + Cl-(aq)'
    >>> round(cell.standard_potential.nominal_value, 5)
    0.22234
    """
    diagram = parse_diagram(text)
    left = electrode_couple(diagram.left, diagram.solutions[0], text)
    right = electrode_couple(diagram.right, diagram.solutions[-1], text)
    reaction = combine(left, right)
    nernst = nernst_expression(reaction, find_electrolyte=not diagram.liquid_junction)
    return CellStoichiometry(diagram=diagram, left_couple=left, right_couple=right,
                             nernst=nernst)


# --- EMF at the amounts written in the diagram ----------------------------------------------

#: What "ideal activities" means in :func:`ideal_cell_emf`, in words for reports.
IDEAL_ACTIVITIES = ("ideal activities: γ = 1 for every solute (a = m/m°, m° = 1 mol/kg), "
                    "f = p for every gas (a = p/p°), a_w = 1, pure solids and liquids a = 1")


@dataclass(frozen=True)
class IdealEmf:
    """E of a cell at the amounts written in its diagram, with ideal activities.

    Attributes
    ----------
    emf_V : float or None
        E = E° − (RT/nF) ln Q [V], None when it cannot be computed (``reason`` says why).
    standard_potential_V : float or None
        The E° used [V], on ``standard_pressure_Pa``.
    standard_pressure_Pa : float
        p° of E° and of the gases' activities p/p° [Pa].
    ln_q : float or None
        ln Q with ideal activities [-].
    reason : str or None
        Why E was not computed (amounts missing, E° unknown, a species at two amounts).
    gases_at_standard_pressure : tuple of str
        Gases written without a pressure, taken at p°.
    """

    emf_V: float | None
    standard_potential_V: float | None
    standard_pressure_Pa: float
    ln_q: float | None
    reason: str | None = None
    gases_at_standard_pressure: tuple[str, ...] = ()


def _amounts(diagram: CellDiagram) -> tuple[dict[Species, list[float]], dict[Species,
                                                                                list[float]]]:
    """Molality [mol/kg] of each aqueous species and pressure [Pa] of each gas as written
    (an electrolyte's ions at ν± m); one list entry per place the species is written."""
    molalities: dict[Species, list[float]] = {}
    pressures: dict[Species, list[float]] = {}
    for phase in (*diagram.left, *diagram.solutions, *diagram.right):
        for c in phase.components:
            if c.molality_mol_kg is not None:
                if c.electrolyte is not None:
                    e = c.electrolyte
                    for species, nu in ((Species(e.cation, e.z_cation, "aq"), e.nu_cation),
                                        (Species(e.anion, e.z_anion, "aq"), e.nu_anion)):
                        molalities.setdefault(species, []).append(nu * c.molality_mol_kg)
                else:
                    molalities.setdefault(c.species[0], []).append(c.molality_mol_kg)
            if c.pressure_Pa is not None:
                pressures.setdefault(c.species[0], []).append(c.pressure_Pa)
    return molalities, pressures


def ideal_cell_emf(cell: CellStoichiometry, temperature_K: float,
                   standard_potential_V: float | None,
                   standard_pressure_Pa: float = STANDARD_PRESSURE_PA) -> IdealEmf:
    r"""E of a cell at the molalities and pressures written in its diagram, ideal activities.

    Parameters
    ----------
    cell : CellStoichiometry
        From :func:`cell_from_diagram`; its diagram holds the amounts, e.g.
        ``HCl(aq, 0.01 mol/kg)``, ``H2(g, 100 kPa)``.
    temperature_K : float
        Temperature [K].
    standard_potential_V : float or None
        E° of the cell at ``temperature_K`` on ``standard_pressure_Pa`` [V].
    standard_pressure_Pa : float
        p° [Pa] of E° and of the gases' activities p/p°.

    Returns
    -------
    IdealEmf

    Notes
    -----
    .. math:: E = E° − \frac{RT}{nF} \ln Q, \qquad Q = \prod_i a_i^{ν_i}

    with ν_i signed (products +) for n electrons, and ideal activities: a = m/m° for solutes
    (γ = 1), a = p/p° for gases, a_w = 1, pure phases 1 (IUPAC Green Book, 3rd ed., 2007,
    §2.13). A gas written without a pressure is taken at p° (and listed as such); a solute
    without a molality leaves E uncomputed. The real E differs by −(RT/nF) Σ ν_i ln γ_i —
    for a 1:1 electrolyte at 0.01 mol/kg, γ± ≈ 0.90, several millivolts — and, with a liquid
    junction, by the junction potential.

    Examples
    --------
    The Harned cell at 0.01 mol/kg HCl and p(H2) = p° (E° of Bates & Bower 1954, Table 1,
    on 1 atm): E = E° − (2RT/F) ln 0.01 = E° + 236.6 mV at 25 °C.

    >>> cell = cell_from_diagram("Pt | H2(g, 1 atm) | HCl(aq, 0.01 mol/kg) | AgCl(s) | Ag(s)")
    >>> result = ideal_cell_emf(cell, 298.15, 0.22234, 101325.0)
    >>> round(result.emf_V, 4)
    0.459
    """
    nernst = cell.nernst
    molalities, pressures = _amounts(cell.diagram)
    needed: list[tuple[Species, Fraction, str]] = []
    if nernst.electrolyte is not None and nernst.electrolyte_units:
        e = nernst.electrolyte
        needed += [(Species(e.cation, e.z_cation, "aq"), nernst.electrolyte_units * e.nu_cation,
                    "aq"),
                   (Species(e.anion, e.z_anion, "aq"), nernst.electrolyte_units * e.nu_anion,
                    "aq")]
    needed += [(s, c, "aq") for s, c in nernst.solutes]
    needed += [(s, c, "g") for s, c in nernst.gases]

    def refused(reason: str) -> IdealEmf:
        return IdealEmf(None, standard_potential_V, standard_pressure_Pa, None, reason)

    if not molalities and not pressures:
        return refused("no amounts in the diagram; write them as HCl(aq, 0.01 mol/kg) or "
                       "H2(g, 100 kPa)")
    if nernst.amalgams:
        return refused("the amalgam's activity is not known")
    ln_q = 0.0
    missing, at_standard = [], []
    for species, coefficient, kind in needed:
        amounts = (molalities if kind == "aq" else pressures).get(species)
        if not amounts and kind == "g":
            at_standard.append(species.label)
            continue
        if not amounts:
            missing.append(species.label)
            continue
        if len(set(amounts)) > 1:
            return refused(f"{species.label} is written at two amounts (a concentration cell); "
                           "its activity on each side would be needed")
        scale = 1.0 if kind == "aq" else standard_pressure_Pa
        ln_q += float(coefficient) * math.log(amounts[0] / scale)
    if missing:
        return refused(f"no amount written for {', '.join(missing)}")
    if standard_potential_V is None:
        return IdealEmf(None, None, standard_pressure_Pa, ln_q, "E° is not in the catalogue",
                        tuple(at_standard))
    factor = GAS_CONSTANT_J_MOL_K * temperature_K / (float(nernst.electrons) * FARADAY_C_MOL)
    return IdealEmf(standard_potential_V - factor * ln_q, standard_potential_V,
                    standard_pressure_Pa, ln_q, None, tuple(at_standard))


# --- summary for the command line -----------------------------------------------------------

def _rounded(value: float, uncertainty: float) -> tuple[str, str]:
    """Value and uncertainty as text, the uncertainty to two significant digits (GUM 7.2.6)."""
    if not math.isfinite(uncertainty) or uncertainty <= 0:
        return f"{value:g}", "0"
    decimals = max(0, 1 - math.floor(math.log10(uncertainty)))
    return f"{value:.{decimals}f}", f"{uncertainty:.{decimals}f}"


def _number(quantity: UFloat | None) -> dict[str, float] | None:
    if quantity is None:
        return None
    return {"value": float(quantity.nominal_value), "uncertainty": float(quantity.std_dev)}


def cell_summary(diagram: str, temperature_K: float = ZERO_CELSIUS_K + 25.0,
                 standard_pressure_Pa: float = STANDARD_PRESSURE_PA) -> dict[str, Any]:
    """A JSON-ready summary of a cell: half-reactions, reaction, n, E°, ΔG°, log10 K, and E at
    the amounts written in the diagram (ideal activities).

    Parameters
    ----------
    diagram : str
        The cell diagram; amounts may be written in it (``HCl(aq, 0.01 mol/kg)``,
        ``H2(g, 100 kPa)``).
    standard_pressure_Pa : float
        p° of E°, ΔG° and K [Pa]: 100 000 (IUPAC, the default, as for ``activolt reduce``) or
        101 325 (1 atm). The catalogue's E° (on 1 atm) is moved to it by
        :func:`activolt.physics.corrections.standard_pressure_basis_shift` when the reaction
        holds a gas; without gas, E° does not depend on it.
    temperature_K : float
        Temperature [K] for E°, log10 K and the Nernst factor. Each couple's E° at T comes
        from its one E°(T) (:func:`activolt.chemistry.electrodes.couple_at_temperature`): H+/H2 is
        zero at
        every T, AgCl/Ag follows Bates & Bower (1954) smoothly through 25 °C, the others are
        known at 25 °C only and are then used unchanged (a warning says so).

    Returns
    -------
    dict
        Keys ``diagram, temperature_K, left, right, half_reactions, reaction, electrons,
        electrolyte, electrolyte_units, nernst_factor_V, nernst_equation, gases,
        liquid_junction, standard_pressure_kPa, catalogue_pressure_basis_kPa,
        standard_potential_V, delta_g_kJ_mol, log10_K, emf_ideal_V, emf_ideal, notes,
        warnings``; quantities as {"value", "uncertainty"} [units in the key], or None when a
        couple's E° is unknown. ``emf_ideal_V`` is E at the diagram's amounts with ideal
        activities (its uncertainty that of E° alone), None when it cannot be computed;
        ``emf_ideal`` says what was assumed or why it was not computed.

    Examples
    --------
    Daniell cell (CRC Handbook values, from memory; 1.10 V in teaching tables):

    >>> s = cell_summary("Zn(s) | ZnSO4(aq) || CuSO4(aq) | Cu(s)")
    >>> s["electrons"], round(s["standard_potential_V"]["value"], 2)
    (2, 1.1)

    With amounts, E from the Nernst equation with γ = 1: (RT/2F) ln 10 = 29.6 mV below E°
    at 25 °C for Zn²⁺ ten times Cu²⁺ (common practice):

    >>> s = cell_summary("Zn(s) | ZnSO4(aq, 0.1 mol/kg) || CuSO4(aq, 0.01 mol/kg) | Cu(s)")
    >>> round((s["standard_potential_V"]["value"] - s["emf_ideal_V"]["value"]) * 1e3, 1)
    29.6

    One reaction, Fe(s) + 2 Fe³⁺ → 3 Fe²⁺, gives one ΔG° whichever couples make it (Fe³⁺/Fe
    is derived from the other two):

    >>> a = cell_summary("Fe(s) | Fe2+(aq) || Fe3+(aq), Fe2+(aq) | Pt(s)")["delta_g_kJ_mol"]
    >>> b = cell_summary("Fe(s) | Fe2+(aq) || Fe3+(aq) | Fe(s)")["delta_g_kJ_mol"]
    >>> round(a["value"], 6) == round(b["value"], 6), round(a["uncertainty"], 6) == round(
    ...     b["uncertainty"], 6)
    (True, True)
    """
    cell = cell_from_diagram(diagram)
    reaction = cell.reaction
    warnings: list[str] = []
    potential = reaction.standard_potential
    pressure_Pa = cell.standard_pressure_Pa
    left_couple, right_couple = cell.left_couple, cell.right_couple
    if potential is not None:
        left_at = couple_at_temperature(left_couple, temperature_K)
        right_at = couple_at_temperature(right_couple, temperature_K)
        if left_at is None or right_at is None:
            warnings.append(f"E° values are for 298.15 K; used unchanged at {temperature_K:.2f} K "
                            "(their temperature dependence is not in the catalogue)")
        else:
            left_couple, right_couple = left_at, right_at
            potential = dataclasses.replace(reaction, left=left_at,
                                            right=right_at).standard_potential
    if standard_pressure_Pa not in (STANDARD_PRESSURE_PA, ATMOSPHERE_PA):
        raise ValueError(f"standard pressure {standard_pressure_Pa / 1e3:g} kPa: must be 100 "
                         "(IUPAC) or 101.325 (1 atm)")
    notes: list[str] = []
    basis_Pa: float | None = standard_pressure_Pa
    if potential is not None and cell.gas_coefficients:
        if pressure_Pa is None:
            basis_Pa = None
            warnings.append("the couples' E° are on different standard pressures; E° is not "
                            "moved to one")
        elif pressure_Pa != standard_pressure_Pa:
            shift = float(standard_pressure_basis_shift(
                temperature_K, float(cell.nernst.electrons), cell.gas_coefficients,
                pressure_Pa, standard_pressure_Pa))
            potential = potential + shift
            notes.append(f"catalogue E° on p° = {pressure_Pa / 1e3:g} kPa moved to "
                         f"{standard_pressure_Pa / 1e3:g} kPa: {shift * 1e3:+.3f} mV (the gases' "
                         "standard state)".replace("-", "−"))
    if cell.liquid_junction:
        warnings.append("the cell has a liquid junction: its EMF also holds a junction "
                        "potential that E° does not include")
    if cell.nernst.amalgams:
        warnings.append("amalgam electrode: E° depends on the amalgam's composition and is not "
                        "in the catalogue")
    n = float(cell.nernst.electrons)
    delta_g = log10_k = None
    if potential is not None:
        delta_g = -n * FARADAY_C_MOL * potential / 1000.0
        log10_k = n * FARADAY_C_MOL * potential / (
            GAS_CONSTANT_J_MOL_K * temperature_K * math.log(10.0))
    factor = cell.electrons / cell.left_couple.n
    oxidation = cell.left_couple.reversed().scaled(Fraction(factor))
    reduction = cell.right_couple.scaled(Fraction(cell.electrons) / cell.right_couple.n)

    def electrode(half: HalfReaction) -> dict[str, Any]:
        return {
            "couple": half.name,
            "half_reaction": str(half),
            "standard_potential_V": _number(half.standard_potential),
            "pressure_basis_kPa": None if half.pressure_basis_Pa is None
            else half.pressure_basis_Pa / 1000.0,
        }

    ideal = ideal_cell_emf(cell, temperature_K,
                           None if potential is None else potential.nominal_value,
                           standard_pressure_Pa)
    emf_ideal = None
    if ideal.emf_V is not None and potential is not None:
        emf_ideal = {"value": float(ideal.emf_V), "uncertainty": float(potential.std_dev)}
        assumed = IDEAL_ACTIVITIES + "; u from E° alone"
        if ideal.gases_at_standard_pressure:
            assumed += (f"; {', '.join(ideal.gases_at_standard_pressure)} at p° (no pressure "
                        "written)")
        if cell.liquid_junction:
            assumed += "; no junction potential"
        ideal_text = assumed
    else:
        ideal_text = ideal.reason
    return {
        "diagram": diagram,
        "temperature_K": float(temperature_K),
        "left": electrode(left_couple),
        "right": electrode(right_couple),
        "half_reactions": {"left_oxidation": str(oxidation), "right_reduction": str(reduction)},
        "reaction": cell.reaction_text,
        "electrons": cell.electrons if isinstance(cell.electrons, int) else float(n),
        "electrolyte": None if cell.electrolyte is None else cell.electrolyte.formula,
        "electrolyte_units": cell.electrolyte_units,
        "nernst_factor_V": None if cell.electrolyte is None
        else float(cell.nernst_factor(temperature_K)),
        "nernst_equation": cell.nernst.describe(),
        "gases": cell.gas_coefficients,
        "liquid_junction": cell.liquid_junction,
        "standard_pressure_kPa": None if basis_Pa is None else basis_Pa / 1000.0,
        "catalogue_pressure_basis_kPa": None if pressure_Pa is None else pressure_Pa / 1000.0,
        "standard_potential_V": _number(potential),
        "delta_g_kJ_mol": _number(delta_g),
        "log10_K": _number(log10_k),
        "emf_ideal_V": emf_ideal,
        "emf_ideal": ideal_text,
        "notes": notes,
        "warnings": warnings,
    }


def format_cell_summary(summary: Mapping[str, Any]) -> str:
    """Plain-text lines of a :func:`cell_summary`, digits limited by the uncertainties.

    Examples
    --------
    Catalogue E° −2.71 ± 0.005 V (Na+/Na) and 1.066 ± 0.001 V (Br2(l)/Br−), uncertainties
    common practice; two significant digits of u fix the digits of E°:

    >>> text = format_cell_summary(cell_summary("Na(s) | Na+(aq) || Br-(aq) | Br2(l) | Pt(s)"))
    >>> print(text.splitlines()[4])
    E°cell = 3.7760 ± 0.0051 V (standard pressure 100 kPa)
    """
    def quantity(key: str, unit: str) -> str:
        number = summary[key]
        if number is None:
            return "unknown (a couple's E° is not in the catalogue)"
        value, uncertainty = _rounded(number["value"], number["uncertainty"])
        return f"{value} ± {uncertainty}{unit}".replace("-", "−")

    basis = summary["standard_pressure_kPa"]
    basis_text = "" if basis is None or summary["standard_potential_V"] is None \
        else f" (standard pressure {basis:g} kPa)"
    lines = [
        f"Cell: {summary['diagram']}  at {summary['temperature_K']:.2f} K",
        f"Left electrode, oxidation ({summary['left']['couple']}): "
        f"{summary['half_reactions']['left_oxidation']}",
        f"Right electrode, reduction ({summary['right']['couple']}): "
        f"{summary['half_reactions']['right_reduction']}",
        f"Cell reaction: {summary['reaction']}   n = {summary['electrons']}",
        f"E°cell = {quantity('standard_potential_V', ' V')}{basis_text}",
        *(f"  {n}" for n in summary.get("notes", ())),
        f"ΔG° = {quantity('delta_g_kJ_mol', ' kJ/mol')}",
        f"log10 K = {quantity('log10_K', '')}",
    ]
    if summary["electrolyte"] is not None:
        lines.append(f"Electrolyte {summary['electrolyte']} "
                     f"{'formed' if summary['electrolyte_units'] > 0 else 'consumed'}: "
                     f"{summary['nernst_equation']}")
    else:
        lines.append(summary["nernst_equation"])
    if summary.get("emf_ideal_V") is not None:
        lines.append("E at the amounts written, ideal activities (γ = 1) = "
                     f"{quantity('emf_ideal_V', ' V')}")
        lines.append(f"  assumed: {summary['emf_ideal']}")
    elif summary.get("emf_ideal") and "no amounts in the diagram" not in summary["emf_ideal"]:
        lines.append(f"E at the amounts written: not computed — {summary['emf_ideal']}")
    lines.extend(f"Warning: {w}" for w in summary["warnings"])
    return "\n".join(lines)


__all__ = [
    "IDEAL_ACTIVITIES",
    "CellDiagram",
    "CellStoichiometry",
    "Component",
    "DiagramError",
    "IdealEmf",
    "Phase",
    "cell_from_diagram",
    "cell_summary",
    "electrode_couple",
    "format_cell_summary",
    "ideal_cell_emf",
    "parse_diagram",
]
