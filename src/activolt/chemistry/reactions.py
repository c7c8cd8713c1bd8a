r"""Half-cell algebra: species, half-reactions, cell reactions and their Nernst expressions.

A half-reaction is kept as a signed stoichiometry (products positive, reactants negative) plus the
signed coefficient of the electron; a reduction consumes electrons. Reversing a half-reaction
changes the sign of its potential (the oxidation written as such); scaling it leaves the potential
unchanged, because E° is intensive while ΔG° = −nFE° is not. Two reductions combine into a cell
reaction, right minus left, balanced with the least common multiple of their electrons:

.. math:: E°_\mathrm{cell} = E°_\mathrm{right} − E°_\mathrm{left}, \quad
          ΔG° = −n F E°_\mathrm{cell}, \quad \ln K = \frac{n F E°_\mathrm{cell}}{R T}

(IUPAC Green Book, 3rd ed., 2007, §2.13; Bard & Faulkner, *Electrochemical Methods*, 2nd ed.,
2001, §2.1). Species are written in a plain notation, ``FORMULA[CHARGE](STATE)``:

* ``STATE`` is one of ``s``, ``l``, ``g``, ``aq`` or ``Hg`` (dissolved in mercury: an amalgam);
* ``CHARGE`` follows the formula as ``+``, ``-``, ``2+``, ``3-`` …; when the formula itself ends
  in a digit the charge must be introduced by ``^`` (``SO4^2-``, ``Hg2^2+``, ``H2PO4^-``), since
  ``Zn2+`` is read as Zn with charge 2+;
* a coefficient precedes the species, separated by a space: ``2 H+(aq)``, ``1/2 H2(g)``;
* the electron is ``e-``; the two sides are separated by ``=``, ``->``, ``→`` or ``⇌``.
"""

from __future__ import annotations

import math
import re
import warnings
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
import numpy.typing as npt
from uncertainties import UFloat, ufloat

from ..constants import FARADAY_C_MOL, GAS_CONSTANT_J_MOL_K
from .electrolytes import Electrolyte, nernst_factor, parse_electrolyte

#: The states of aggregation a species may carry: solid, liquid, gas, aqueous, amalgam.
STATES: tuple[str, ...] = ("s", "l", "g", "aq", "Hg")

_ELEMENTS = frozenset(
    """H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As
    Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb
    Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm
    Bk Cf Es Fm Md No Lr""".split()
)

#: One-character spellings accepted in place of ASCII (kept one-for-one so positions hold).
_ASCII = str.maketrans({
    "−": "-", "–": "-", "⁻": "-", "⁺": "+", "⁰": "0", "¹": "1", "²": "2", "³": "3", "⁴": "4",
    "⁵": "5", "⁶": "6", "⁷": "7", "⁸": "8", "⁹": "9", "₀": "0", "₁": "1", "₂": "2", "₃": "3",
    "₄": "4", "₅": "5", "₆": "6", "₇": "7", "₈": "8", "₉": "9",
})

_CHARGE = re.compile(r"^(?P<formula>.+?)(?:\^(?P<caret>\d*[+-])|(?P<plain>\d?[+-]))?$")
_ARROW = re.compile(r"\s*(?:<=>|->|→|⇌|=)\s*")
_TERM = re.compile(r"^(?:(?P<coef>\d+(?:/\d+)?|\d*\.\d+)\s+)?(?P<species>\S.*)$")
_ELECTRON = re.compile(r"^(?:(?P<coef>\d+(?:/\d+)?|\d*\.\d+)\s*)?e-$")


def exact_or_uncertain(value: float, uncertainty: float, tag: str | None = None) -> UFloat:
    """An uncertain number; an exact value (u = 0, e.g. E° of H+/H2) is allowed without warning.

    Examples
    --------
    >>> exact_or_uncertain(0.0, 0.0).std_dev  # E°(H+/H2) = 0 by definition (IUPAC)
    0.0
    """
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Using UFloat objects with std_dev==0")
        return ufloat(value, uncertainty, tag=tag)


def to_ascii(text: str) -> str:
    """Replace typographic minus signs and super-/subscript digits by ASCII, one for one.

    Examples
    --------
    >>> to_ascii("SO₄²⁻")
    'SO42-'
    """
    return text.translate(_ASCII)


class BalanceError(ValueError):
    """A reaction that does not conserve an element or charge; the message names which."""


def element_counts(formula: str) -> dict[str, int]:
    """Atoms of each element in a neutral formula such as ``"C6H4(OH)2"`` or ``"Hg2Cl2"``.

    Parameters
    ----------
    formula : str
        Element symbols with counts; groups in parentheses may carry a count.

    Returns
    -------
    dict of str to int
        Element symbol → number of atoms [-].

    Raises
    ------
    ValueError
        If the formula holds a symbol that is not an element, or unmatched parentheses.

    Examples
    --------
    >>> element_counts("C6H4(OH)2")
    {'C': 6, 'H': 6, 'O': 2}
    """
    stack: list[dict[str, int]] = [{}]
    index = 0
    while index < len(formula):
        char = formula[index]
        if char == "(":
            stack.append({})
            index += 1
            continue
        if char == ")":
            if len(stack) == 1:
                raise ValueError(f"formula '{formula}' has an unmatched ')'")
            group = stack.pop()
            digits = re.match(r"\d*", formula[index + 1:]).group(0)  # type: ignore[union-attr]
            count = int(digits) if digits else 1
            for symbol, atoms in group.items():
                stack[-1][symbol] = stack[-1].get(symbol, 0) + atoms * count
            index += 1 + len(digits)
            continue
        match = re.match(r"([A-Z][a-z]?)(\d*)", formula[index:])
        if match is None or match.group(1) not in _ELEMENTS:
            raise ValueError(
                f"formula '{formula}': '{formula[index:index + 2]}' is not an element symbol; "
                "write elements as Ag, Cl, … with counts after them"
            )
        symbol, digits = match.groups()
        stack[-1][symbol] = stack[-1].get(symbol, 0) + (int(digits) if digits else 1)
        index += len(match.group(0))
    if len(stack) != 1:
        raise ValueError(f"formula '{formula}' has an unmatched '('")
    return {symbol: count for symbol, count in stack[0].items() if count}


@dataclass(frozen=True, order=True)
class Species:
    """A chemical species in a state of aggregation.

    Attributes
    ----------
    formula : str
        Formula without charge, e.g. ``"Cl"``, ``"AgCl"``, ``"SO4"``.
    charge : int
        Charge number z [-].
    state : str
        One of :data:`STATES`.
    """

    formula: str
    charge: int
    state: str

    def __post_init__(self) -> None:
        if self.state not in STATES:
            raise ValueError(
                f"unknown state '{self.state}' of {self.formula}; valid: {', '.join(STATES)}"
            )
        element_counts(self.formula)

    @property
    def elements(self) -> dict[str, int]:
        """Element symbol → number of atoms [-]."""
        return element_counts(self.formula)

    @property
    def charge_text(self) -> str:
        """The charge as written after the formula (``"2+"``, ``"^2-"``, ``""``)."""
        if self.charge == 0:
            return ""
        sign = "+" if self.charge > 0 else "-"
        size = "" if abs(self.charge) == 1 else str(abs(self.charge))
        caret = "^" if self.formula[-1].isdigit() else ""
        return f"{caret}{size}{sign}"

    @property
    def label(self) -> str:
        """The species in our notation, e.g. ``"Cl-(aq)"``, ``"Hg2^2+(aq)"``, ``"K(Hg)"``."""
        return f"{self.formula}{self.charge_text}({self.state})"

    def __str__(self) -> str:
        return self.label


def split_charge(text: str) -> tuple[str, int]:
    """Split a formula from its charge: ``"Zn2+"`` → (``"Zn"``, 2), ``"AgCl"`` → (``"AgCl"``, 0).

    Examples
    --------
    >>> split_charge("Hg2^2+"), split_charge("Cl-")
    (('Hg2', 2), ('Cl', -1))
    """
    match = _CHARGE.match(to_ascii(text).strip())
    if match is None:
        raise ValueError(f"empty species '{text}'")
    written = match.group("caret") or match.group("plain")
    if written is None:
        return match.group("formula"), 0
    size = int(written[:-1]) if written[:-1] else 1
    return match.group("formula"), size if written[-1] == "+" else -size


def parse_species(text: str) -> Species:
    """Parse one species written ``FORMULA[CHARGE](STATE)``, e.g. ``"Cl-(aq)"``, ``"K(Hg)"``.

    Raises
    ------
    ValueError
        If the state is missing or unknown, or the formula holds an unknown element.

    Examples
    --------
    >>> parse_species("SO4^2-(aq)")
    Species(formula='SO4', charge=-2, state='aq')
    """
    text = to_ascii(text).strip()
    if not text.endswith(")") or "(" not in text:
        raise ValueError(
            f"species '{text}' has no state; write it in parentheses: (s), (l), (g), (aq) or (Hg)"
        )
    opening = text.rindex("(")
    formula, charge = split_charge(text[:opening])
    return Species(formula=formula, charge=charge, state=text[opening + 1:-1].strip())


def _coefficient(text: str | None) -> Fraction:
    if not text:
        return Fraction(1)
    return Fraction(text).limit_denominator(1000)


def format_coefficient(value: Fraction) -> str:
    """``1`` → ``""``, ``2`` → ``"2 "``, ``1/2`` → ``"1/2 "`` (a positive coefficient).

    Examples
    --------
    >>> format_coefficient(Fraction(1, 2))
    '1/2 '
    """
    if value == 1:
        return ""
    return f"{value} "


Stoichiometry = tuple[tuple[Species, Fraction], ...]


def _merge(terms: Iterable[tuple[Species, Fraction]]) -> Stoichiometry:
    """Add up coefficients of equal species, keep first-seen order, drop zeros."""
    total: dict[Species, Fraction] = {}
    for species, coefficient in terms:
        total[species] = total.get(species, Fraction(0)) + Fraction(coefficient)
    return tuple((s, c) for s, c in total.items() if c != 0)


def check_balance(stoichiometry: Iterable[tuple[Species, Fraction]],
                  electrons: Fraction | int = 0) -> None:
    """Raise :class:`BalanceError` unless every element and the charge balance.

    Parameters
    ----------
    stoichiometry : iterable of (Species, Fraction)
        Signed coefficients, products positive.
    electrons : Fraction or int
        Signed coefficient of the electron (negative when consumed).

    Raises
    ------
    BalanceError
        Naming each element (with its amounts on the two sides) or the charge that does not
        balance.

    Examples
    --------
    >>> check_balance([(parse_species("AgCl(s)"), Fraction(-1)),
    ...                (parse_species("Ag(s)"), 1)])  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    activolt.chemistry.reactions.BalanceError: reaction not balanced: Cl 1 on the left, 0 on ...
    """
    stoichiometry = tuple(stoichiometry)
    left: dict[str, Fraction] = {}
    right: dict[str, Fraction] = {}
    charge = Fraction(0)
    for species, coefficient in stoichiometry:
        side = right if coefficient > 0 else left
        for symbol, atoms in species.elements.items():
            side[symbol] = side.get(symbol, Fraction(0)) + abs(coefficient) * atoms
        charge += coefficient * species.charge
    charge -= Fraction(electrons)
    problems = [
        f"{symbol} {left.get(symbol, 0)} on the left, {right.get(symbol, 0)} on the right"
        for symbol in sorted(set(left) | set(right))
        if left.get(symbol, 0) != right.get(symbol, 0)
    ]
    if charge != 0:
        charge_left = -sum((c * s.charge for s, c in stoichiometry if c < 0), Fraction(0))
        charge_right = sum((c * s.charge for s, c in stoichiometry if c > 0), Fraction(0))
        problems.append(
            f"charge {charge_left} on the left, {charge_right} on the right with "
            f"{abs(Fraction(electrons))} e-"
        )
    if problems:
        raise BalanceError("reaction not balanced: " + "; ".join(problems))


def format_reaction(stoichiometry: Stoichiometry, electrons: Fraction | int = 0,
                    arrow: str = "→") -> str:
    """Write a signed stoichiometry as ``"reactants → products"`` in our species notation.

    Examples
    --------
    >>> format_reaction(stoichiometry_from_mapping({"H2(g)": "-1/2", "H+(aq)": 1}), electrons=1)
    '1/2 H2(g) → H+(aq) + e-'
    """
    electrons = Fraction(electrons)
    reactants = [f"{format_coefficient(-c)}{s.label}" for s, c in stoichiometry if c < 0]
    products = [f"{format_coefficient(c)}{s.label}" for s, c in stoichiometry if c > 0]
    if electrons < 0:
        reactants.append(f"{format_coefficient(-electrons)}e-")
    elif electrons > 0:
        products.append(f"{format_coefficient(electrons)}e-")
    return f"{' + '.join(reactants)} {arrow} {' + '.join(products)}"


@dataclass(frozen=True)
class HalfReaction:
    """A half-reaction with its standard potential.

    Attributes
    ----------
    stoichiometry : tuple of (Species, Fraction)
        Signed coefficients, products positive; the electron is kept apart.
    electrons : Fraction
        Signed coefficient of the electron: negative for a reduction (electrons consumed),
        positive for an oxidation.
    standard_potential_V : float or None
        E° of the half-reaction as written [V]: the reduction potential for a reduction, its
        negative for the oxidation; None when unknown (e.g. an amalgam of unstated composition).
    u_standard_potential_V : float or None
        Standard uncertainty of E° [V].
    name : str
        The couple's name, e.g. ``"AgCl/Ag"``.
    pressure_basis_Pa : float or None
        Standard pressure on which E° is stated [Pa] (1 atm or 1 bar).
    note : str
        Anything a user must know (e.g. "amalgam activity folded into E°").
    uncertain_potential : UFloat or None
        E° as an uncertain number that keeps its correlation with other couples (a couple
        derived from others shares their variables); when given, it sets
        ``standard_potential_V`` and ``u_standard_potential_V``.
    """

    stoichiometry: Stoichiometry
    electrons: Fraction
    standard_potential_V: float | None = None
    u_standard_potential_V: float | None = None
    name: str = ""
    pressure_basis_Pa: float | None = None
    note: str = field(default="", compare=False)
    uncertain_potential: UFloat | None = field(default=None, compare=False, repr=False)

    def __post_init__(self) -> None:
        if self.uncertain_potential is not None:
            object.__setattr__(self, "standard_potential_V",
                               float(self.uncertain_potential.nominal_value))
            object.__setattr__(self, "u_standard_potential_V",
                               float(self.uncertain_potential.std_dev))
        object.__setattr__(self, "electrons", Fraction(self.electrons))
        object.__setattr__(self, "stoichiometry", _merge(self.stoichiometry))
        if self.electrons == 0:
            raise ValueError(f"half-reaction {self.name or self}: no electrons; a half-reaction "
                             "transfers electrons (write e- on one side)")
        check_balance(self.stoichiometry, self.electrons)

    @property
    def is_reduction(self) -> bool:
        """True when electrons are consumed."""
        return self.electrons < 0

    @property
    def n(self) -> Fraction:
        """Number of electrons transferred as written [-] (positive)."""
        return abs(self.electrons)

    def reversed(self) -> HalfReaction:
        """The reverse reaction; its E° changes sign (oxidation potential = −reduction potential).

        Examples
        --------
        >>> zinc = parse_half_reaction("Zn2+(aq) + 2 e- = Zn(s)", -0.7618)  # CRC, from memory
        >>> zinc.reversed().standard_potential_V, str(zinc.reversed())
        (0.7618, 'Zn(s) → Zn2+(aq) + 2 e-')
        """
        potential = None if self.standard_potential_V is None else -self.standard_potential_V
        uncertain = None if self.uncertain_potential is None else -self.uncertain_potential
        return HalfReaction(
            stoichiometry=tuple((s, -c) for s, c in self.stoichiometry),
            electrons=-self.electrons,
            standard_potential_V=potential,
            u_standard_potential_V=self.u_standard_potential_V,
            name=self.name,
            pressure_basis_Pa=self.pressure_basis_Pa,
            note=self.note,
            uncertain_potential=uncertain,
        )

    def scaled(self, factor: Fraction | int | str) -> HalfReaction:
        """All coefficients times a positive factor; E° is unchanged (intensive).

        Examples
        --------
        >>> h = parse_half_reaction("2 H+(aq) + 2 e- = H2(g)", 0.0)
        >>> str(h.scaled("1/2"))
        'H+(aq) + e- → 1/2 H2(g)'
        """
        factor = Fraction(factor)
        if factor <= 0:
            raise ValueError(f"scale factor must be positive, got {factor}; use reversed() "
                             "to turn a reduction into an oxidation")
        return HalfReaction(
            stoichiometry=tuple((s, c * factor) for s, c in self.stoichiometry),
            electrons=self.electrons * factor,
            standard_potential_V=self.standard_potential_V,
            u_standard_potential_V=self.u_standard_potential_V,
            name=self.name,
            pressure_basis_Pa=self.pressure_basis_Pa,
            note=self.note,
            uncertain_potential=self.uncertain_potential,
        )

    def as_reduction(self) -> HalfReaction:
        """This half-reaction written as a reduction."""
        return self if self.is_reduction else self.reversed()

    @property
    def standard_potential(self) -> UFloat | None:
        """E° [V] as an uncertain number (None when unknown; u = 0 when none is stated).

        The same variable on every call when the couple carries ``uncertain_potential`` (the
        catalogue's couples do), so that couples derived from one another stay correlated.
        """
        if self.uncertain_potential is not None:
            return self.uncertain_potential
        if self.standard_potential_V is None:
            return None
        return exact_or_uncertain(self.standard_potential_V, self.u_standard_potential_V or 0.0,
                                  tag=self.name or None)

    def species_in(self, state: str) -> tuple[Species, ...]:
        """The species of one state of aggregation (``"aq"``, ``"s"``, …)."""
        return tuple(s for s, _ in self.stoichiometry if s.state == state)

    def __str__(self) -> str:
        return format_reaction(self.stoichiometry, self.electrons)


def parse_half_reaction(text: str, standard_potential_V: float | None = None,
                        u_standard_potential_V: float | None = None, name: str = "",
                        pressure_basis_Pa: float | None = None, note: str = "") -> HalfReaction:
    """Parse a half-reaction such as ``"AgCl(s) + e- = Ag(s) + Cl-(aq)"``.

    Parameters
    ----------
    text : str
        Terms separated by `` + `` (spaces around the plus), sides by ``=``, ``->``, ``→`` or
        ``⇌``; the electron is ``e-``.
    standard_potential_V : float, optional
        E° of the reaction as written [V].
    u_standard_potential_V : float, optional
        Its standard uncertainty [V].
    name, note : str
        The couple's name and a note.
    pressure_basis_Pa : float, optional
        Standard pressure of E° [Pa].

    Returns
    -------
    HalfReaction

    Raises
    ------
    ValueError
        If a term cannot be read; :class:`BalanceError` if elements or charge do not balance.

    Examples
    --------
    >>> h = parse_half_reaction("AgCl(s) + e- = Ag(s) + Cl-(aq)", 0.22233)
    >>> h.n, h.is_reduction
    (Fraction(1, 1), True)
    """
    sides = _ARROW.split(to_ascii(text).strip())
    if len(sides) != 2:
        raise ValueError(f"half-reaction '{text}' needs exactly one '=' (or →) between its sides")
    terms: list[tuple[Species, Fraction]] = []
    electrons = Fraction(0)
    for sign, side in ((-1, sides[0]), (1, sides[1])):
        for term in re.split(r"\s+\+\s+", side.strip()):
            electron = _ELECTRON.match(term.strip())
            if electron:
                electrons += sign * _coefficient(electron.group("coef"))
                continue
            match = _TERM.match(term.strip())
            if match is None:
                raise ValueError(f"half-reaction '{text}': empty term")
            terms.append(
                (parse_species(match.group("species")), sign * _coefficient(match.group("coef")))
            )
    return HalfReaction(
        stoichiometry=tuple(terms), electrons=electrons,
        standard_potential_V=standard_potential_V, u_standard_potential_V=u_standard_potential_V,
        name=name, pressure_basis_Pa=pressure_basis_Pa, note=note,
    )


def _vector(half: HalfReaction) -> dict[Species | str, Fraction]:
    vector: dict[Species | str, Fraction] = dict(half.stoichiometry)
    vector["e-"] = half.electrons
    return vector


def linear_combination(target: HalfReaction, parts: Sequence[HalfReaction]
                       ) -> tuple[Fraction, ...]:
    r"""The coefficients a_i with Σ a_i · part_i = target, as reactions (electrons included).

    Parameters
    ----------
    target : HalfReaction
        The half-reaction to express.
    parts : sequence of HalfReaction
        The half-reactions to express it by, each as written.

    Returns
    -------
    tuple of Fraction
        One coefficient per part, in order; negative means the part enters reversed.

    Raises
    ------
    ValueError
        If the target is no combination of the parts, or not a unique one (the parts are
        themselves linearly dependent).

    Notes
    -----
    Since ΔG° = −nFE° of a reduction is additive over reactions, a couple that is such a
    combination of reductions has

    .. math:: n E° = \sum_i a_i n_i E°_i

    (Bard & Faulkner, *Electrochemical Methods*, 2nd ed., 2001, §2.1; IUPAC Green Book, 3rd ed.,
    2007, §2.13). Solved exactly in rational numbers by Gauss–Jordan elimination.

    Examples
    --------
    Fe³⁺/Fe from Fe³⁺/Fe²⁺ and Fe²⁺/Fe (one of each, as written):

    >>> fe3 = parse_half_reaction("Fe3+(aq) + 3 e- = Fe(s)")
    >>> fe32 = parse_half_reaction("Fe3+(aq) + e- = Fe2+(aq)")
    >>> fe2 = parse_half_reaction("Fe2+(aq) + 2 e- = Fe(s)")
    >>> linear_combination(fe3, [fe32, fe2])
    (Fraction(1, 1), Fraction(1, 1))
    """
    vectors = [_vector(part) for part in parts]
    goal = _vector(target)
    keys = list(dict.fromkeys([k for v in vectors for k in v] + list(goal)))
    rows = [[v.get(key, Fraction(0)) for v in vectors] + [goal.get(key, Fraction(0))]
            for key in keys]
    columns, pivot_row, pivots = len(vectors), 0, []
    for column in range(columns):
        found = next((r for r in range(pivot_row, len(rows)) if rows[r][column] != 0), None)
        if found is None:
            continue
        rows[pivot_row], rows[found] = rows[found], rows[pivot_row]
        lead = rows[pivot_row][column]
        rows[pivot_row] = [value / lead for value in rows[pivot_row]]
        for r in range(len(rows)):
            if r != pivot_row and rows[r][column] != 0:
                factor = rows[r][column]
                rows[r] = [a - factor * b for a, b in zip(rows[r], rows[pivot_row], strict=True)]
        pivots.append(column)
        pivot_row += 1
    names = target.name or str(target)
    if any(row[-1] != 0 for row in rows[pivot_row:]):
        raise ValueError(f"{names} is not a combination of "
                         f"{', '.join(p.name or str(p) for p in parts)}")
    if len(pivots) < columns:
        raise ValueError(f"{names}: the half-reactions "
                         f"{', '.join(p.name or str(p) for p in parts)} are not independent, so "
                         "the combination is not unique")
    coefficients = [Fraction(0)] * columns
    for row, column in enumerate(pivots):
        coefficients[column] = rows[row][-1]
    return tuple(coefficients)


def _shared_potentials(left: HalfReaction, right: HalfReaction
                       ) -> tuple[UFloat | None, UFloat | None]:
    """E° of both couples; one uncertain variable when both electrodes are the same couple."""
    left_e, right_e = left.standard_potential, right.standard_potential
    if (left_e is not None and right_e is not None and left.name and left.name == right.name
            and left.standard_potential_V == right.standard_potential_V):
        return left_e, left_e
    return left_e, right_e


@dataclass(frozen=True)
class CellReaction:
    """The reaction of a cell: reduction at the right electrode minus reduction at the left.

    Attributes
    ----------
    left, right : HalfReaction
        The two electrode couples, each written as a reduction.
    stoichiometry : tuple of (Species, Fraction)
        Net signed coefficients of the overall reaction, products positive.
    electrons : Fraction
        n, electrons transferred in the reaction as written [-].
    """

    left: HalfReaction
    right: HalfReaction
    stoichiometry: Stoichiometry
    electrons: Fraction

    @property
    def standard_potential(self) -> UFloat | None:
        """E°cell = E°(right) − E°(left) [V] with its uncertainty; None if a couple is unknown."""
        left_e, right_e = _shared_potentials(self.left, self.right)
        if left_e is None or right_e is None:
            return None
        return right_e - left_e

    def delta_g_kJ_mol(self) -> UFloat | None:
        """ΔG° = −nFE° of the reaction as written [kJ mol⁻¹]."""
        potential = self.standard_potential
        if potential is None:
            return None
        return -float(self.electrons) * FARADAY_C_MOL * potential / 1000.0

    def log10_equilibrium_constant(self, temperature_K: float) -> UFloat | None:
        """log10 K = nFE° / (RT ln 10) of the reaction as written [-] at T [K]."""
        potential = self.standard_potential
        if potential is None:
            return None
        return (float(self.electrons) * FARADAY_C_MOL * potential
                / (GAS_CONSTANT_J_MOL_K * temperature_K * math.log(10.0)))

    def equilibrium_constant(self, temperature_K: float) -> UFloat | None:
        """K = exp(nFE°/RT) [-] at T [K]; OverflowError past 1e300 (use the log10 form)."""
        log10_k = self.log10_equilibrium_constant(temperature_K)
        if log10_k is None:
            return None
        if abs(log10_k.nominal_value) > 300:
            raise OverflowError(
                f"K = 10^{log10_k.nominal_value:.0f} does not fit a float; use "
                "log10_equilibrium_constant()"
            )
        return 10.0**log10_k

    def scaled(self, factor: Fraction | int | str) -> CellReaction:
        """The same reaction with all coefficients and n times a positive factor."""
        factor = Fraction(factor)
        if factor <= 0:
            raise ValueError(f"scale factor must be positive, got {factor}")
        return CellReaction(
            left=self.left, right=self.right,
            stoichiometry=tuple((s, c * factor) for s, c in self.stoichiometry),
            electrons=self.electrons * factor,
        )

    def __str__(self) -> str:
        return format_reaction(self.stoichiometry)


def combine(left: HalfReaction, right: HalfReaction) -> CellReaction:
    """Combine the couples of the left and right electrodes into the balanced cell reaction.

    Parameters
    ----------
    left : HalfReaction
        The couple at the left electrode (oxidation happens there); written either way.
    right : HalfReaction
        The couple at the right electrode (reduction); written either way.

    Returns
    -------
    CellReaction
        Balanced with the least common multiple of the two electron numbers as written
        (for fractions, the smallest number that both divide a whole number of times).

    Raises
    ------
    BalanceError
        If the overall reaction does not conserve an element or charge.

    Notes
    -----
    Both couples are turned into reductions; the left one is reversed and each is scaled to
    n = lcm(n_left, n_right) electrons, so that the electrons cancel. E°cell = E°(right) −
    E°(left) (IUPAC Green Book, 3rd ed., 2007, §2.13.1).

    Examples
    --------
    Daniell cell Zn | ZnSO4(aq) || CuSO4(aq) | Cu (CRC Handbook values, from memory):

    >>> zinc = parse_half_reaction("Zn2+(aq) + 2 e- = Zn(s)", -0.7618)
    >>> copper = parse_half_reaction("Cu2+(aq) + 2 e- = Cu(s)", 0.3419)
    >>> cell = combine(zinc, copper)
    >>> str(cell), cell.electrons, round(cell.standard_potential.nominal_value, 4)
    ('Zn(s) + Cu2+(aq) → Zn2+(aq) + Cu(s)', Fraction(2, 1), 1.1037)
    """
    left, right = left.as_reduction(), right.as_reduction()
    n = Fraction(math.lcm(left.n.numerator, right.n.numerator),
                 math.gcd(left.n.denominator, right.n.denominator))
    oxidation = left.reversed().scaled(n / left.n)
    reduction = right.scaled(n / right.n)
    stoichiometry = _merge(oxidation.stoichiometry + reduction.stoichiometry)
    check_balance(stoichiometry, oxidation.electrons + reduction.electrons)
    return CellReaction(left=left, right=right, stoichiometry=stoichiometry, electrons=n)


@dataclass(frozen=True)
class NernstExpression:
    r"""How each species of a cell reaction enters E = E° − (RT/nF) ln Q.

    Attributes
    ----------
    reaction : CellReaction
        The reaction, written per formula unit of the electrolyte when one is formed or consumed.
    electrons : Fraction
        n for that reaction [-].
    unit_activity : tuple of (Species, Fraction)
        Pure solids and liquids (other than the solvent): a = 1, they drop out.
    gases : tuple of (Species, Fraction)
        Gases, entering by fugacity ≈ p/p°, with their signed coefficients (products +).
    amalgams : tuple of (Species, Fraction)
        Metals dissolved in mercury: their activity is held constant and folded into E°, which
        is then the E° of that amalgam, not of the pure metal.
    solvent : tuple of (Species, Fraction)
        Water, entering by its activity a_w (≈ 1 in dilute solution).
    electrolyte : Electrolyte or None
        The electrolyte whose ions the reaction forms (``electrolyte_units`` > 0) or consumes
        (< 0); None when the aqueous ions do not make up one electrolyte.
    electrolyte_units : Fraction
        Formula units of the electrolyte formed per reaction as written (+1, −1 or 0).
    solutes : tuple of (Species, Fraction)
        Aqueous species not combined into the electrolyte (neutral solutes such as quinone, or
        all ions when they make up no single electrolyte), each entering by its own activity.
    """

    reaction: CellReaction
    electrons: Fraction
    unit_activity: Stoichiometry
    gases: Stoichiometry
    amalgams: Stoichiometry
    solvent: Stoichiometry
    electrolyte: Electrolyte | None
    electrolyte_units: Fraction
    solutes: Stoichiometry

    def nernst_factor(self, temperature_K: npt.ArrayLike) -> np.ndarray:
        """k = ν R T / (n F) [V] of the electrolyte term, E = E° ∓ k ln(m± γ±).

        The sign is − when the electrolyte is formed, + when consumed.

        Raises
        ------
        ValueError
            When the reaction forms no single electrolyte.
        """
        if self.electrolyte is None:
            raise ValueError("this cell reaction forms no single electrolyte, so there is no "
                             "Nernst factor for m± γ±; see the solutes instead")
        electrons = self.electrons
        n: float | int = int(electrons) if electrons.denominator == 1 else float(electrons)
        return nernst_factor(self.electrolyte, n, temperature_K)  # type: ignore[arg-type]

    @property
    def gas_coefficients(self) -> dict[str, float]:
        """Gas label → signed coefficient (products +) for the reaction with n electrons."""
        return {s.label: float(c) for s, c in self.gases}

    def describe(self) -> str:
        """The Nernst equation of this cell in words and symbols, one line."""
        n = self.electrons
        parts = ["E = E°"]
        if self.electrolyte is not None:
            nu_units = self.electrolyte.nu * abs(self.electrolyte_units)
            sign = "−" if self.electrolyte_units > 0 else "+"
            parts.append(f"{sign} ({_rt_over_nf(nu_units, n)}) ln(m± γ±)")
        for species, coefficient in self.gases:
            sign = "−" if coefficient > 0 else "+"
            parts.append(f"{sign} ({_rt_over_nf(abs(coefficient), n)}) "
                         f"ln(p({species.formula})/p°)")
        for species, coefficient in self.solutes + self.solvent:
            sign = "−" if coefficient > 0 else "+"
            parts.append(f"{sign} ({_rt_over_nf(abs(coefficient), n)}) "
                         f"ln a({species.formula}{species.charge_text})")
        text = " ".join(parts)
        if self.amalgams:
            text += "; amalgam activity held constant and folded into E°"
        return text


def _rt_over_nf(coefficient: Fraction, electrons: Fraction) -> str:
    ratio = Fraction(coefficient) / Fraction(electrons)
    top = "" if ratio.numerator == 1 else str(ratio.numerator)
    bottom = "" if ratio.denominator == 1 else str(ratio.denominator)
    return f"{top}RT/{bottom}F"


def _electrolyte_formula(cation: Species, anion: Species, nu_cation: int, nu_anion: int) -> str:
    def part(species: Species, count: int) -> str:
        polyatomic = len(re.findall(r"[A-Z]", species.formula)) > 1 or any(
            ch.isdigit() for ch in species.formula)
        if count == 1:
            return species.formula
        return f"({species.formula}){count}" if polyatomic else f"{species.formula}{count}"
    return part(cation, nu_cation) + part(anion, nu_anion)


def _find_electrolyte(aqueous: Stoichiometry) -> tuple[Electrolyte, Fraction] | None:
    """The electrolyte made of the aqueous ions and its formula units formed, if there is one."""
    ions = [(s, c) for s, c in aqueous if s.charge != 0]
    if len(ions) != 2:
        return None
    (cation, c_cation), (anion, c_anion) = sorted(ions, key=lambda t: -t[0].charge)
    if cation.charge <= 0 or anion.charge >= 0 or (c_cation > 0) != (c_anion > 0):
        return None
    divisor = math.gcd(cation.charge, -anion.charge)
    nu_cation, nu_anion = -anion.charge // divisor, cation.charge // divisor
    units = c_cation / nu_cation
    if c_anion / nu_anion != units:
        return None
    try:
        electrolyte = parse_electrolyte(_electrolyte_formula(cation, anion, nu_cation, nu_anion))
    except ValueError:
        return None
    if electrolyte.z_cation != cation.charge or electrolyte.z_anion != anion.charge:
        return None
    return electrolyte, units


def nernst_expression(reaction: CellReaction, find_electrolyte: bool = True
                      ) -> NernstExpression:
    r"""Sort the species of a cell reaction by how they enter the Nernst equation.

    Parameters
    ----------
    reaction : CellReaction
        A balanced cell reaction.
    find_electrolyte : bool
        Whether to combine the aqueous ions into one electrolyte; False for a cell with a
        liquid junction, whose ions sit in different solutions.

    Returns
    -------
    NernstExpression
        With the reaction rescaled to one formula unit of the electrolyte formed (or consumed)
        when its aqueous ions make up one electrolyte.

    Notes
    -----
    .. math:: E = E° − \frac{RT}{nF} \sum_i ν_i \ln a_i

    with a = 1 for pure solids and liquids, a ≈ p/p° for gases, a constant (folded into E°)
    for amalgams, and :math:`a_+^{ν_+} a_-^{ν_-} = (m_± γ_±)^ν` for the ions of one electrolyte,
    which gives the factor νRT/nF (Harned & Owen 1958, ch. 10).

    Examples
    --------
    The Harned cell Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s) (CRC values, from memory):

    >>> h2 = parse_half_reaction("2 H+(aq) + 2 e- = H2(g)", 0.0)
    >>> agcl = parse_half_reaction("AgCl(s) + e- = Ag(s) + Cl-(aq)", 0.22233)
    >>> expr = nernst_expression(combine(h2, agcl))
    >>> expr.electrolyte.formula, expr.electrons, expr.gas_coefficients
    ('HCl', Fraction(1, 1), {'H2(g)': -0.5})
    >>> expr.describe()
    'E = E° − (2RT/F) ln(m± γ±) + (RT/2F) ln(p(H2)/p°)'
    """
    aqueous = tuple((s, c) for s, c in reaction.stoichiometry if s.state == "aq")
    found = _find_electrolyte(aqueous) if find_electrolyte else None
    electrolyte: Electrolyte | None = None
    units = Fraction(0)
    if found is not None:
        electrolyte, units = found
        reaction = reaction.scaled(1 / abs(units))
        units = units / abs(units)
    stoichiometry = reaction.stoichiometry

    def pick(condition) -> Stoichiometry:
        return tuple((s, c) for s, c in stoichiometry if condition(s))

    def is_water(s: Species) -> bool:
        return s.formula == "H2O" and s.state == "l"

    return NernstExpression(
        reaction=reaction,
        electrons=reaction.electrons,
        unit_activity=pick(lambda s: s.state in ("s", "l") and not is_water(s)),
        gases=pick(lambda s: s.state == "g"),
        amalgams=pick(lambda s: s.state == "Hg"),
        solvent=pick(is_water),
        electrolyte=electrolyte,
        electrolyte_units=units,
        solutes=pick(lambda s: s.state == "aq" and (electrolyte is None or s.charge == 0)),
    )


def stoichiometry_from_mapping(mapping: Mapping[str, float | Fraction | str]) -> Stoichiometry:
    """Build a stoichiometry from ``{"AgCl(s)": -1, "Ag(s)": 1}`` (label → signed coefficient).

    Examples
    --------
    >>> stoichiometry_from_mapping({"Cl2(g)": -1, "Cl-(aq)": 2})[1]
    (Species(formula='Cl', charge=-1, state='aq'), Fraction(2, 1))
    """
    return tuple((parse_species(label), Fraction(value)) for label, value in mapping.items())
