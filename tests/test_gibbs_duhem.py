"""Laws every registered activity model must obey, for any charge type and temperature.

1. Gibbs–Duhem consistency of ln γ± and φ: d[m(1 − φ)]/dm = −m d ln γ±/dm.
2. The Debye–Hückel limiting law as m → 0.
"""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from activolt.activity import MODELS, limiting
from activolt.activity.base import ActivityModel
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.physics.water import debye_hueckel_constants

#: One electrolyte per charge type (cation charge first).
CHARGE_TYPES = {"1:1": "HCl", "2:1": "CaCl2", "1:2": "Na2SO4", "2:2": "MgSO4", "3:1": "LaCl3"}

#: Temperatures [K] spanning liquid water at about 1 atm (0.01 °C above freezing, then 25–90 °C).
TEMPERATURES_K = (273.16, 298.15, 323.15, 363.15)

#: Sensible ranges of parameter values for random draws (common practice: the spread of published
#: values, widened); a parameter of a model added later falls back to its bounds clipped to ±1.
SENSIBLE_RANGES: dict[str, tuple[float, float]] = {
    "a_angstrom": (0.0, 15.0),
    "b_kg_mol": (-1.0, 1.0),
    "epsilon_kg_mol": (-0.5, 0.5),
    "beta0_kg_mol": (-0.5, 0.7),
    "beta1_kg_mol": (-1.0, 10.0),
    "beta2_kg_mol": (-60.0, 0.0),
    "cphi_kg2_mol2": (-0.05, 0.05),
}

#: Relative tolerance of the central-difference check. The step is h = 1e-4 m. Both sides are
#: analytic in √m, so their k-th derivatives scale as m^-k and the truncation error of a central
#: difference is about (h/m)²/6 ≈ 2e-9 of the derivative; round-off adds ε|F|/h ≈ 1e-12 of it.
#: 1e-6 leaves a margin of several hundred while a wrong coefficient anywhere in φ (say 1 % of a
#: term) shows up as a relative error of order 1e-2 and fails.
RELATIVE_TOLERANCE = 1e-6
RELATIVE_STEP = 1e-4


def _range(model: ActivityModel, name: str) -> tuple[float, float]:
    if name in SENSIBLE_RANGES:
        return SENSIBLE_RANGES[name]
    p = model.parameter(name)
    return max(p.minimum, -1.0), min(p.maximum, 1.0)


@st.composite
def cases(draw):
    model = MODELS[draw(st.sampled_from(sorted(MODELS)))]
    electrolyte = parse_electrolyte(CHARGE_TYPES[draw(st.sampled_from(sorted(CHARGE_TYPES)))])
    parameters = {
        name: draw(st.floats(*_range(model, name), allow_nan=False))
        for name in model.parameter_names
    }
    log_m = draw(st.floats(math.log(1e-4), math.log(3.0)))
    temperature = draw(st.sampled_from(TEMPERATURES_K))
    return model, electrolyte, parameters, math.exp(log_m), temperature


def gibbs_duhem_gap(model, electrolyte, parameters, m, constants) -> tuple[float, float]:
    """(|lhs − rhs|, scale) of d[m(1 − φ)]/dm = −m d ln γ±/dm by central differences."""
    h = RELATIVE_STEP * m
    grid = np.array([m - h, m, m + h])
    ln_gamma = model.ln_gamma(electrolyte, grid, constants, parameters)
    phi = model.osmotic_coefficient(electrolyte, grid, constants, parameters)
    excess = grid * (1.0 - phi)
    lhs = (excess[2] - excess[0]) / (2 * h)
    rhs = -m * (ln_gamma[2] - ln_gamma[0]) / (2 * h)
    scale = abs(lhs) + abs(rhs) + abs(ln_gamma[1]) + abs(1.0 - phi[1])
    return float(abs(lhs - rhs)), float(scale)


@settings(max_examples=150, deadline=None)
@given(cases())
def test_gibbs_duhem(case):
    model, electrolyte, parameters, m, temperature = case
    gap, scale = gibbs_duhem_gap(model, electrolyte, parameters, m,
                                 debye_hueckel_constants(temperature))
    assert gap <= RELATIVE_TOLERANCE * scale, (model.name, gap, scale)


def test_the_check_catches_an_inconsistent_pair():
    # ln γ± of the Hückel equation with φ whose linear term is off by 1 % (b m/2 → 1.01 b m/2)
    hueckel = MODELS["hueckel"]

    def wrong_phi(electrolyte, molality, constants, parameters):
        return (hueckel.osmotic_coefficient(electrolyte, molality, constants, parameters)
                + 0.005 * parameters["b_kg_mol"] * np.asarray(molality))

    broken = ActivityModel("broken", "broken", hueckel.parameters, hueckel.ln_gamma, wrong_phi,
                           1.0)
    gap, scale = gibbs_duhem_gap(broken, parse_electrolyte("HCl"),
                                 {"a_angstrom": 4.0, "b_kg_mol": 0.2}, 0.5,
                                 debye_hueckel_constants(298.15))
    assert gap > 100 * RELATIVE_TOLERANCE * scale


@settings(max_examples=60, deadline=None)
@given(cases())
def test_limiting_law_as_molality_vanishes(case):
    # ln γ± → −|z+z−| A_γ √I and φ − 1 → −|z+z−| A_φ √I. Every other term is O(I) (b√I, å√I and
    # the linear terms β m, ε m are all √I times the leading one), so the relative gap falls like
    # √I: tenfold per hundredfold in m. Checked at m = 1e-8, 1e-10, 1e-12 mol/kg: the gap must
    # shrink at least fivefold per step and be below 1e-3 at the end (the largest sensible
    # parameters, β(2) = −60 for a 1:1 salt, give 2e-4 there). Parameters can cancel the √I part
    # of the gap, leaving an O(I) rest of another sign; a gap under 1e-6 counts as closed.
    model, electrolyte, parameters, _, temperature = case
    constants = debye_hueckel_constants(temperature)
    m = np.array([1e-8, 1e-10, 1e-12])
    ratio = (model.ln_gamma(electrolyte, m, constants, parameters)
             / limiting.ln_gamma(electrolyte, m, constants, {}))
    ratio_phi = ((model.osmotic_coefficient(electrolyte, m, constants, parameters) - 1.0)
                 / (limiting.osmotic_coefficient(electrolyte, m, constants, {}) - 1.0))
    for gap in (np.abs(ratio - 1.0), np.abs(ratio_phi - 1.0)):
        assert gap[-1] < 1e-3, (model.name, gap)
        assert np.all(gap[1:] <= gap[:-1] / 5.0 + 1e-6), (model.name, gap)


def test_every_registered_model_is_covered():
    assert {"limiting", "hueckel", "davies", "sit", "pitzer"} <= set(MODELS)
    for model in MODELS.values():
        for name in model.parameter_names:
            low, high = _range(model, name)
            assert low < high
