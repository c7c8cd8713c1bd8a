"""Fit diagnostics, exclusions and the uncertainty budget on whole runs.

Truth: the Hückel equation with å = 4.3 Å, b = 0.27 kg/mol (close to a fit of the HCl γ± of
Robinson & Stokes 1959, Appendix 8.10; regression pin of this project's fit, not a literature
value) and E° = 0.22234 V (Bates & Bower 1954, Table 1). The 40 u gross error and "no more than
one other point flagged" are the acceptance bars of the project's uncertainty issue (common
practice for outlier screening: Cook 1977; Belsley, Kuh & Welsch 1980).
"""

from __future__ import annotations

import numpy as np
import pytest
from synthetic import emf_from_gamma, write_run

from activolt.activity.hueckel import ln_gamma
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import Exclusion, read_run
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.dilution import reduce_run

HCL = parse_electrolyte("HCl")
MOLALITY = np.array([0.001, 0.002, 0.003, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 0.7, 1.0])
U_V = 2e-5


def _emf(seed: int) -> np.ndarray:
    constants = debye_hueckel_constants(np.full(MOLALITY.size, 298.15))
    gamma = np.exp(ln_gamma(HCL, MOLALITY, constants, {"a_angstrom": 4.3, "b_kg_mol": 0.27}))
    noise = np.random.default_rng(seed).normal(0.0, U_V, MOLALITY.size)
    return emf_from_gamma(MOLALITY, gamma, 0.22234) + noise


@pytest.mark.parametrize(("seed", "bad"), [(21, 1), (22, 6), (23, 10)])
def test_gross_error_is_flagged_alone_and_exclusion_reported(tmp_path, seed, bad):
    emf = _emf(seed)
    emf[bad] += 40 * U_V
    run = read_run(write_run(tmp_path, MOLALITY, emf, u_emf_V=U_V))
    reduction = reduce_run(run)
    standing_out = reduction.points["diagnostic"].notna().to_numpy()
    assert standing_out[bad]
    assert standing_out.sum() <= 2
    assert reduction.points["flag"].isna().all()  # flagged, never deleted
    line = int(reduction.points["line"].iloc[bad])
    cleaned = reduce_run(run, exclude=[Exclusion("drifting reading", line=line)])
    assert cleaned.points["flag"].iloc[bad] == "excluded: drifting reading"
    assert any(f"excluding line {line} moved E°" in w for w in cleaned.warnings)
    assert abs(cleaned.standard_potential.nominal_value - 0.22234) < 4 * (
        cleaned.standard_potential.std_dev)


def test_clean_run_has_no_flags(tmp_path):
    reduction = reduce_run(read_run(write_run(tmp_path, MOLALITY, _emf(31), u_emf_V=U_V)))
    assert reduction.points["diagnostic"].isna().all()
    # leverage sums to the number of fitted parameters (Belsley, Kuh & Welsch 1980)
    assert reduction.points["leverage"].sum() == pytest.approx(
        reduction.statistics.n_free, rel=1e-9)


def test_temperature_uncertainty_enters_the_budget(tmp_path):
    path = write_run(tmp_path, MOLALITY, _emf(41), u_emf_V=U_V)
    meta = path.with_suffix(".toml")
    base = reduce_run(read_run(path))
    meta.write_text(meta.read_text() + "u_temperature_K = 0.05\n")
    with_t = reduce_run(read_run(path))
    line = next(b for b in with_t.budget if b.component == "temperature")
    # Independent route to the sensitivity: reduce the same readings at 25.05 °C.
    warmer = path.parent / "warmer.csv"
    warmer.write_text(path.read_text())
    warmer.with_suffix(".toml").write_text(
        'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25.05\n')
    shifted = reduce_run(read_run(warmer))
    expected = abs(shifted.standard_potential.nominal_value
                   - base.standard_potential.nominal_value)
    assert line.u_V == pytest.approx(expected, rel=0.05)
    total = sum(b.u_V**2 for b in with_t.budget) ** 0.5
    assert with_t.standard_potential.std_dev == pytest.approx(total, rel=1e-6)
    assert with_t.standard_potential.std_dev > base.standard_potential.std_dev
