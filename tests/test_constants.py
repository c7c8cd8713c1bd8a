"""Constants against scipy.constants (CODATA 2018) and the derived RT/F."""

from __future__ import annotations

import pytest
from scipy import constants as sc

from activolt import constants as c

pytestmark = pytest.mark.literature  # every check here is against CODATA 2018


@pytest.mark.parametrize(("ours", "name"), [
    (c.GAS_CONSTANT_J_MOL_K, "molar gas constant"),
    (c.FARADAY_C_MOL, "Faraday constant"),
    (c.AVOGADRO_PER_MOL, "Avogadro constant"),
    (c.ELEMENTARY_CHARGE_C, "elementary charge"),
    (c.BOLTZMANN_J_K, "Boltzmann constant"),
    (c.VACUUM_PERMITTIVITY_F_M, "vacuum electric permittivity"),
])
def test_constants_equal_scipy_codata(ours, name):
    # scipy.constants carries CODATA 2018 (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010).
    assert ours == pytest.approx(sc.physical_constants[name][0], rel=1e-12)


def test_rt_over_f_at_25c():
    # RT/F = 25.6926 mV at 298.15 K (reference-values.md, derived from CODATA 2018).
    rt_f_mV = c.GAS_CONSTANT_J_MOL_K * 298.15 / c.FARADAY_C_MOL * 1e3
    assert rt_f_mV == pytest.approx(25.6926, abs=5e-5)


def test_pressures():
    # IUPAC standard pressure 1 bar; 1 atm = 101 325 Pa (scipy.constants: bar, atm).
    assert c.STANDARD_PRESSURE_PA == sc.bar
    assert c.ATMOSPHERE_PA == sc.atm
    assert c.ZERO_CELSIUS_K == sc.zero_Celsius
