r"""Hückel equation: extended Debye–Hückel with an ion-size parameter and a linear term.

.. math:: \ln γ_± = −\frac{|z_+ z_−| A_γ \sqrt{I}}{1 + B å \sqrt{I}} + b\,m

.. math:: φ = 1 − \frac{|z_+ z_−| A_γ \sqrt{I}}{3} σ(B å \sqrt{I}) + \frac{b\,m}{2},
          \quad σ(y) = \frac{3}{y^3}\left[1 + y − \frac{1}{1 + y} − 2\ln(1 + y)\right]

Hückel, E. (1925). Phys. Z. 26, 93–147; the osmotic form follows from the Gibbs–Duhem relation
(Robinson & Stokes 1959, ch. 9, eq. 9.9). The conventional ion size is the Bates–Guggenheim
convention Bå = 1.5 kg^½ mol^-½ (Bates & Guggenheim 1960, Pure Appl. Chem. 1, 163; IUPAC Gold
Book). Adequate for 1:1 electrolytes up to about 1 mol kg⁻¹ with b fitted.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import numpy.typing as npt

from ..chemistry.electrolytes import Electrolyte
from ..physics.water import DebyeHueckelConstants
from .base import ActivityModel, Parameter, mean_of

#: Bates–Guggenheim convention, Bå = 1.5 kg^½ mol^-½ (IUPAC Gold Book).
BATES_GUGGENHEIM_BA = 1.5
#: Standard uncertainty given to Bå when it is held at the convention: a rectangular
#: distribution over 1.0–2.0 kg^½ mol^-½ (å ≈ 3–6 Å, the range of Kielland's (1937) ion sizes
#: for common 1:1 electrolytes), 0.5/√3 ≈ 0.29 (GUM, JCGM 100:2008, 4.3.7).
BATES_GUGGENHEIM_BA_UNCERTAINTY = 0.5 / 3**0.5


def extended_debye_hueckel(electrolyte: Electrolyte, molality: npt.ArrayLike,
                           agamma: npt.ArrayLike, ba: float = BATES_GUGGENHEIM_BA) -> np.ndarray:
    r"""The extended Debye–Hückel term ln γ± = −|z₊z₋| A_γ √I / (1 + Bå √I) [-].

    Parameters
    ----------
    electrolyte : Electrolyte
        The electrolyte (charges and stoichiometry give I and |z₊z₋|).
    molality : array_like
        m [mol kg⁻¹].
    agamma : array_like
        A_γ = 3 A_φ, natural-log form [kg^½ mol^-½].
    ba : float
        Bå [kg^½ mol^-½]; the Bates–Guggenheim convention 1.5 by default (IUPAC Gold Book;
        Bates & Guggenheim 1960, Pure Appl. Chem. 1, 163).

    Returns
    -------
    numpy.ndarray
        ln γ± [-].

    Examples
    --------
    HCl at 0.01 mol/kg and 25 °C (A_γ = 3 × 0.3913, IAPWS-derived, reference-values.md): the
    term alone gives γ± = 0.9030; the measured 0.904 (Buck et al. 2002, the IUPAC value) lies
    above it by the linear term the convention leaves out (hand calculation:
    ln γ± = −1.1739 × 0.1 / 1.15 = −0.10208):

    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> round(float(np.exp(extended_debye_hueckel(parse_electrolyte("HCl"), 0.01,
    ...                                           3 * 0.3913))), 4)
    0.903
    """
    sqrt_i = np.sqrt(electrolyte.ionic_strength(np.asarray(molality, dtype=float)))
    return -electrolyte.charge_product * np.asarray(agamma) * sqrt_i / (1.0 + ba * sqrt_i)


def sigma(y: np.ndarray) -> np.ndarray:
    """The Debye–Hückel osmotic function σ(y) [-], accurate also for y → 0.

    Examples
    --------
    >>> [round(float(v), 6) for v in sigma(np.array([0.0, 1e-4, 1.0]))]
    [1.0, 0.99985, 0.341117]
    """
    y = np.asarray(y, dtype=float)
    small = np.abs(y) < 1e-2
    safe = np.where(small, 1.0, y)
    closed = 3.0 / safe**3 * (1.0 + safe - 1.0 / (1.0 + safe) - 2.0 * np.log1p(safe))
    if not small.any():  # the usual case (Bå√I ≥ 0.01 above about 1 mmol/kg): no series needed
        return np.asarray(closed)
    # Series 3 Σ (−1)^k (k+1)/(k+3) y^k, to y^5 (error < 1e-12 for |y| < 0.01).
    series = sum(3.0 * (-1.0) ** k * (k + 1) / (k + 3) * y**k for k in range(6))
    return np.where(small, series, closed)


def ln_gamma(
    electrolyte: Electrolyte,
    molality: np.ndarray,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    """ln γ± of the Hückel equation [-]; needs ``a_angstrom`` [Å] and ``b_kg_mol`` [kg mol⁻¹]."""
    molality = np.asarray(molality, dtype=float)
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    a = parameters["a_angstrom"]
    return (
        -electrolyte.charge_product * constants.agamma * sqrt_i / (1.0 + constants.b * a * sqrt_i)
        + parameters["b_kg_mol"] * molality
    )


def osmotic_coefficient(
    electrolyte: Electrolyte,
    molality: np.ndarray,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    """φ of the Hückel equation [-]; needs ``a_angstrom`` [Å] and ``b_kg_mol`` [kg mol⁻¹]."""
    molality = np.asarray(molality, dtype=float)
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    y = constants.b * parameters["a_angstrom"] * sqrt_i
    return (
        1.0
        - electrolyte.charge_product * constants.agamma * sqrt_i / 3.0 * sigma(y)
        + parameters["b_kg_mol"] * molality / 2.0
    )


def _bates_guggenheim_a(electrolyte: Electrolyte, constants: DebyeHueckelConstants) -> float:
    return BATES_GUGGENHEIM_BA / mean_of(constants.b)


def _bates_guggenheim_u_a(electrolyte: Electrolyte, constants: DebyeHueckelConstants) -> float:
    return BATES_GUGGENHEIM_BA_UNCERTAINTY / mean_of(constants.b)


MODEL = ActivityModel(
    name="hueckel",
    title="Hückel equation",
    parameters=(
        Parameter(
            name="a_angstrom",
            symbol="å",
            unit="Å",
            description="ion-size parameter",
            linear=False,
            conventional=_bates_guggenheim_a,
            convention="Bates–Guggenheim convention Bå = 1.5 kg^½ mol^-½, "
                       "u(Bå) = 0.29 (rectangular 1.0–2.0)",
            minimum=0.0,
            maximum=20.0,
            conventional_uncertainty=_bates_guggenheim_u_a,
        ),
        Parameter(
            name="b_kg_mol",
            symbol="b",
            unit="kg mol⁻¹",
            description="linear (Hückel) term in ln γ±",
            linear=True,
            conventional=lambda electrolyte, constants: 0.0,
            convention="no linear term (b = 0)",
        ),
    ),
    ln_gamma=ln_gamma,
    osmotic_coefficient=osmotic_coefficient,
    max_ionic_strength=1.0,
)
