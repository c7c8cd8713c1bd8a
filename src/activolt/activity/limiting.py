"""Debye–Hückel limiting law.

.. math:: \\ln γ_± = −|z_+ z_−| A_γ \\sqrt{I}, \\qquad φ = 1 − |z_+ z_−| A_φ \\sqrt{I}

Debye, P. & Hückel, E. (1923). Phys. Z. 24, 185–206. Exact as m → 0; adequate only for
I ≲ 0.001–0.01 mol kg⁻¹ (Robinson & Stokes 1959, ch. 9).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..chemistry.electrolytes import Electrolyte
from ..physics.water import DebyeHueckelConstants
from .base import ActivityModel
from .hueckel import extended_debye_hueckel


def ln_gamma(
    electrolyte: Electrolyte,
    molality: np.ndarray,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    """ln γ± of the limiting law [-]; ``molality`` in mol kg⁻¹; no parameters."""
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    return -electrolyte.charge_product * constants.agamma * sqrt_i


def osmotic_coefficient(
    electrolyte: Electrolyte,
    molality: np.ndarray,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    """φ of the limiting law [-]; ``molality`` in mol kg⁻¹; no parameters."""
    sqrt_i = np.sqrt(electrolyte.ionic_strength(molality))
    return 1.0 - electrolyte.charge_product * constants.aphi * sqrt_i


def truncation(
    electrolyte: Electrolyte,
    molality: np.ndarray,
    constants: DebyeHueckelConstants,
    parameters: Mapping[str, float],
) -> np.ndarray:
    r"""ln γ± of the term the limiting law leaves out, at the size of common ion sizes [-].

    .. math:: Δ\ln γ_± = |z_+ z_−| A_γ \sqrt{I}\,\frac{Bå\sqrt{I}}{1 + Bå\sqrt{I}},
              \qquad Bå = 1.5\ \mathrm{kg^{1/2}\,mol^{-1/2}}

    the difference between the extended Debye–Hückel term with the Bates–Guggenheim Bå
    (å ≈ 4.6 Å, typical of the ions of common salts; Bates & Guggenheim 1960, Pure Appl. Chem.
    1, 163) and the limiting law.
    """
    return (extended_debye_hueckel(electrolyte, molality, constants.agamma)
            - ln_gamma(electrolyte, molality, constants, parameters))


MODEL = ActivityModel(
    name="limiting",
    title="Debye–Hückel limiting law",
    parameters=(),
    ln_gamma=ln_gamma,
    osmotic_coefficient=osmotic_coefficient,
    max_ionic_strength=0.01,
    truncation=truncation,
)
