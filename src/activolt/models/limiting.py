"""Debye–Hückel limiting law.

.. math:: \\ln γ_± = −|z_+ z_−| A_γ \\sqrt{I}, \\qquad φ = 1 − |z_+ z_−| A_φ \\sqrt{I}

Debye, P. & Hückel, E. (1923). Phys. Z. 24, 185–206. Exact as m → 0; adequate only for
I ≲ 0.001–0.01 mol kg⁻¹ (Robinson & Stokes 1959, ch. 9).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..electrolytes import Electrolyte
from ..solvent import DebyeHueckelConstants
from .base import ActivityModel


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


MODEL = ActivityModel(
    name="limiting",
    title="Debye–Hückel limiting law",
    parameters=(),
    ln_gamma=ln_gamma,
    osmotic_coefficient=osmotic_coefficient,
    max_ionic_strength=0.01,
)
