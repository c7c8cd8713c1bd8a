"""Davies equation: approach to the limiting law, comparison with published γ±, edge cases."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from activolt.activity import davies, limiting
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.physics.water import debye_hueckel_constants

CONSTANTS_25C = debye_hueckel_constants(298.15)


@pytest.mark.parametrize("formula", ["HCl", "CaCl2", "MgSO4", "LaCl3"])
def test_approaches_limiting_law_at_low_ionic_strength(formula):
    # ln γ(Davies)/ln γ(limiting) = 1/(1 + √I) − 0.3 √I, so the relative gap is at most 1.3 √I
    e = parse_electrolyte(formula)
    m = np.logspace(-8, -3, 6) / e.ionic_strength_factor
    ratio = davies.ln_gamma(e, m, CONSTANTS_25C, {}) / limiting.ln_gamma(e, m, CONSTANTS_25C, {})
    assert np.all(np.abs(ratio - 1.0) <= 1.3 * np.sqrt(e.ionic_strength(m)) + 1e-12)


# γ± at 25 °C, I ≤ 0.1 mol/kg. HCl, KCl: Robinson & Stokes (1959), Appendix 8.10 (from memory);
# NaCl at 0.1: Pitzer, Peiper & Busey (1984) (confirmed), below: from memory.
GAMMA_25C = {
    "HCl": {0.001: 0.9655, 0.01: 0.9045, 0.1: 0.796},
    "NaCl": {0.001: 0.965, 0.01: 0.902, 0.1: 0.778},
    "KCl": {0.001: 0.965, 0.01: 0.901, 0.1: 0.770},
}


@pytest.mark.parametrize(
    ("salt", "molality", "expected"),
    [(s, m, g) for s, table in GAMMA_25C.items() for m, g in table.items()],
)
@pytest.mark.literature
def test_one_one_electrolytes_within_davies_accuracy(salt, molality, expected):
    # Davies (1962, Ion Association): about 1–2 % at I = 0.1 for 1:1 electrolytes (from memory);
    # tolerance 0.02 in γ±. Largest deviation found: 0.015 (HCl, 0.1 mol/kg).
    value = float(np.exp(davies.ln_gamma(parse_electrolyte(salt), molality, CONSTANTS_25C, {}))[0])
    assert value == pytest.approx(expected, abs=0.02)


def test_davies_decimal_form():
    # log10 γ± = −|z+z−| A (√I/(1+√I) − 0.3 I): CaCl2 at I = 0.3 (common practice form)
    e = parse_electrolyte("CaCl2")
    a = float(CONSTANTS_25C.agamma_log10[0])
    i = 0.3
    expected = -2 * a * (np.sqrt(i) / (1 + np.sqrt(i)) - 0.3 * i)
    value = davies.ln_gamma(e, 0.1, CONSTANTS_25C, {})[0] / np.log(10)
    assert value == pytest.approx(expected, rel=1e-13)


def test_scalar_ndarray_series_and_nan():
    e = parse_electrolyte("NaCl")
    assert davies.ln_gamma(e, 0.1, CONSTANTS_25C, {}).shape == (1,)
    assert davies.osmotic_coefficient(e, np.array([0.1, 0.2]), CONSTANTS_25C, {}).shape == (2,)
    assert davies.ln_gamma(e, pd.Series([0.1, 0.2]), CONSTANTS_25C, {}).shape == (2,)
    out = davies.osmotic_coefficient(e, np.array([np.nan, 0.0]), CONSTANTS_25C, {})
    assert np.isnan(out[0]) and out[1] == 1.0


def test_any_parameter_name_is_rejected():
    with pytest.raises(ValueError, match="no parameters, got: a_angstrom"):
        davies.ln_gamma(parse_electrolyte("NaCl"), 0.1, CONSTANTS_25C, {"a_angstrom": 4.0})


def test_regression_pin():
    # regression pin: values the code produced (NaCl, 25 °C)
    m = np.array([0.1, 0.5])
    e = parse_electrolyte("NaCl")
    np.testing.assert_allclose(davies.ln_gamma(e, m, CONSTANTS_25C, {}),
                               [-0.2467955169, -0.3101344568], atol=1e-8)
    np.testing.assert_allclose(davies.osmotic_coefficient(e, m, CONSTANTS_25C, {}),
                               [0.9361327828, 0.966616244], atol=1e-8)
