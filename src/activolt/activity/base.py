"""What every activity-coefficient model provides, and the parameter description it uses.

A model is a pair of consistent functions of molality, ln γ±(m; θ) and the osmotic coefficient
φ(m; θ), that obey the Gibbs–Duhem relation d[m(1 − φ)]/dm = −m d ln γ±/dm, together with a
description of its parameters θ: their units, whether they enter ln γ± linearly, and the
conventional value at which a parameter is held when the data cannot determine it.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from ..chemistry.electrolytes import Electrolyte
from ..physics.water import DebyeHueckelConstants

#: ln γ± or φ as a function of (electrolyte, molality [mol kg⁻¹], constants, parameters).
ModelFunction = Callable[[Electrolyte, np.ndarray, DebyeHueckelConstants, Mapping[str, float]],
                         np.ndarray]


@dataclass(frozen=True)
class Parameter:
    """One parameter of an activity-coefficient model.

    Attributes
    ----------
    name : str
        Name with its unit, e.g. ``"a_angstrom"``.
    symbol : str
        How a chemist writes it, e.g. ``"å"``.
    unit : str
        Unit as printed in reports.
    description : str
        What it is, in a few words.
    linear : bool
        Whether ln γ± is linear in this parameter.
    conventional : Callable[[Electrolyte, DebyeHueckelConstants], float]
        The value held when the data cannot determine the parameter (it may depend on the
        electrolyte, e.g. a published value, and on the temperature through the constants).
    convention : str
        Where the conventional value comes from, for the record.
    minimum, maximum : float
        Bounds for fitting.
    conventional_uncertainty : Callable[[Electrolyte, DebyeHueckelConstants], float] or None
        Standard uncertainty of the conventional value (GUM Type B), propagated to E° whenever the
        parameter is held at the convention because the data cannot determine it; None means 0.
    applies_to : Callable[[Electrolyte], bool] or None
        Whether the parameter has a meaning for an electrolyte's charge type; where it has not,
        the reduction holds it at its conventional value and says why. None means always.
    """

    name: str
    symbol: str
    unit: str
    description: str
    linear: bool
    conventional: Callable[[Electrolyte, DebyeHueckelConstants], float]
    convention: str
    minimum: float = -math.inf
    maximum: float = math.inf
    conventional_uncertainty: Callable[[Electrolyte, DebyeHueckelConstants], float] | None = None
    applies_to: Callable[[Electrolyte], bool] | None = None


@dataclass(frozen=True)
class ActivityModel:
    """A model family of ln γ± and φ for a single electrolyte in water.

    Attributes
    ----------
    name : str
        Published method name in lower case, used on the command line.
    title : str
        Name as printed, e.g. ``"Hückel equation"``.
    parameters : tuple of Parameter
        Adjustable parameters, in a fixed order.
    ln_gamma : ModelFunction
        ln γ± [-].
    osmotic_coefficient : ModelFunction
        φ [-].
    max_ionic_strength : float
        Ionic strength up to which the family is commonly considered adequate [mol kg⁻¹].
    truncation : ModelFunction or None
        For a model without adjustable parameters that leaves out a known next term: ln γ± of
        that term at a typical size. The reduction counts the E° shift it would cause as a
        standard uncertainty (GUM Type B); None when the model's parameters absorb it.
    """

    name: str
    title: str
    parameters: tuple[Parameter, ...]
    ln_gamma: ModelFunction
    osmotic_coefficient: ModelFunction
    max_ionic_strength: float
    truncation: ModelFunction | None = None

    @functools.cached_property
    def parameter_names(self) -> tuple[str, ...]:
        """Names of the parameters in order."""
        return tuple(p.name for p in self.parameters)

    def parameter(self, name: str) -> Parameter:
        """The parameter called ``name``; ``KeyError`` listing the valid ones otherwise."""
        for p in self.parameters:
            if p.name == name:
                return p
        raise KeyError(f"model '{self.name}' has no parameter '{name}'; "
                       f"it has: {', '.join(self.parameter_names) or 'none'}")


def checked_values(model: str, names: tuple[str, ...],
                   parameters: Mapping[str, float]) -> dict[str, np.ndarray]:
    """The parameters ``names`` of ``model`` as arrays; ValueError naming any unknown or missing
    one and listing the valid names.

    Examples
    --------
    >>> checked_values("sit", ("epsilon_kg_mol",), {"eps": 0.1})
    Traceback (most recent call last):
    ...
    ValueError: model 'sit' parameters unknown: eps; valid names: epsilon_kg_mol
    """
    unknown = sorted(set(parameters) - set(names))
    missing = [name for name in names if name not in parameters]
    if not names and unknown:
        raise ValueError(f"model '{model}' has no parameters, got: {', '.join(unknown)}; "
                         "valid names: none")
    if unknown or missing:
        problem = f"unknown: {', '.join(unknown)}" if unknown else f"missing: {', '.join(missing)}"
        raise ValueError(f"model '{model}' parameters {problem}; valid names: {', '.join(names)}")
    return {name: np.asarray(parameters[name], dtype=float) for name in names}


def mean_of(values: np.ndarray) -> float:
    """``float(numpy.mean(values))``, kept once worked out for arrays of equal shape and values
    (the constants of the series of a batch measured at one temperature are equal).

    Examples
    --------
    >>> mean_of(np.array([298.15, 298.15, 298.16])) == float(np.mean([298.15, 298.15, 298.16]))
    True
    """
    values = np.ascontiguousarray(values, dtype=float)
    if values.size > _KEPT_SIZE:  # a long series: worked out each time, not kept
        return float(np.mean(values))
    return _mean_of_bytes(values.shape, values.tobytes())


#: The largest array whose mean :func:`mean_of` keeps (the cache holds at most 1024 of them).
_KEPT_SIZE = 1024


@functools.lru_cache(maxsize=1024)
def _mean_of_bytes(shape: tuple[int, ...], raw: bytes) -> float:
    """:func:`mean_of` of the array of ``shape`` whose float64 values are ``raw``."""
    return float(np.mean(np.frombuffer(raw).reshape(shape)))
