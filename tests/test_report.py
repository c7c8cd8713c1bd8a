"""Human output: digits that the uncertainty supports, and the safety cautions.

Rounding rule: the uncertainty to two significant digits and the value to the same decimal
place (GUM, JCGM 100:2008, 7.2.6).
"""

from __future__ import annotations

import math
import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from synthetic import emf_from_gamma, write_run

from activolt.activity.published import published_gamma
from activolt.chemistry.electrolytes import parse_electrolyte
from activolt.data.runs import read_run
from activolt.procedures.dilution import reduce_run
from activolt.report.cautions import ACID, HYDROGEN, MERCURY, cautions_for
from activolt.report.comparison import aligned_lines
from activolt.report.numbers import format_molality, format_with_uncertainty
from activolt.report.text import format_report
from activolt.rounding import decimals_for


@pytest.mark.parametrize(("value", "u", "expected"), [
    (0.2223456, 0.0000123, "0.222346 ± 0.000012"),
    (222.3456, 0.0123, "222.346 ± 0.012"),
    (1234.5, 56.0, "1234 ± 56"),
    (0.80912, 0.00034, "0.80912 ± 0.00034"),
])
def test_digits_follow_the_uncertainty(value, u, expected):
    assert format_with_uncertainty(value, u) == expected


def test_cautions_by_cell():
    assert cautions_for(parse_electrolyte("HCl")) [:2] == [HYDROGEN, ACID]
    assert cautions_for(parse_electrolyte("KCl")) == []
    amalgam = cautions_for(parse_electrolyte("KCl"), "Ag(s) | AgCl(s) | KCl(aq) | K(Hg)")
    assert amalgam[0] == MERCURY and "local codes" in amalgam[-1]


def test_report_text(tmp_path):
    table = published_gamma("HCl", 298.15)
    table = table[table.molality_mol_kg <= 1.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    emf = emf_from_gamma(m, gamma, 0.22234)  # Bates & Bower (1954), Table 1
    reduction = reduce_run(read_run(write_run(tmp_path, m, emf, u_emf_V=2e-5)))
    text = format_report(reduction)
    e0_line = next(line for line in text.splitlines() if "E° =" in line)
    # The printed E° follows the rounding rule (u to two significant digits, the value to the
    # same decimal place) and rounds the reduction's own numbers.
    found = re.search(r"E° = (\d+\.(\d+)) ± (\d+\.(\d+)) mV", e0_line)
    assert found, e0_line
    value, decimals, u, u_decimals = found.groups()
    assert len(decimals) == len(u_decimals)
    assert len(u.replace(".", "").lstrip("0")) == 2
    half_step = 0.5 * 10.0 ** -len(decimals) * (1.0 + 1e-9)
    assert abs(float(value) - reduction.standard_potential.nominal_value * 1e3) <= half_step
    assert abs(float(u) - reduction.standard_potential.std_dev * 1e3) <= half_step
    assert "basis p° = 100 kPa" in e0_line
    assert reduction.statistics.covariance_note in text
    assert "against published values" in text and "Robinson & Stokes" in text
    assert "Hydrogen gas is flammable" in text


_SUPERSCRIPT_DIGITS = str.maketrans("⁻⁰¹²³⁴⁵⁶⁷⁸⁹", "-0123456789")


@settings(max_examples=500, deadline=None)
@given(st.floats(min_value=-1e300, max_value=1e300, allow_subnormal=True),
       st.floats(min_value=0.0, max_value=1e300, allow_subnormal=True, exclude_min=True))
def test_scaled_numbers_are_never_longer_than_their_uncertainty_supports(value, u):
    """A number written as (m ± u) × 10ⁿ keeps m and u below ten units of its decade — also
    where the value is far below its uncertainty or subnormal, which once printed a row of
    several hundred digits or raised ZeroDivisionError — and the written value stays within
    the written uncertainty of the value (GUM, JCGM 100:2008, 7.2.6; common practice)."""
    from activolt.report.numbers import format_scaled

    if value == 0.0:
        return
    text = format_scaled(value, u)
    assert len(text) <= 60, text
    scaled = re.fullmatch(r"\((\S+) ± (\S+)\) × 10(\S+)", text)
    if scaled is None:  # a decade beyond the normal floats: exponent notation
        written, written_u = (float(part) for part in text.split(" ± "))
        scale = 1.0
    else:
        written, written_u = float(scaled[1]), float(scaled[2])
        assert abs(written) <= 10.0 and written_u <= 10.0, text
        scale = 10.0 ** int(scaled[3].translate(_SUPERSCRIPT_DIGITS))
    assert abs(written * scale - value) <= 1.01 * written_u * scale + 1e-3 * abs(value), text


@given(st.floats(allow_nan=True, allow_infinity=True))
def test_remembered_molalities_are_written_as_six_significant_digits(m):
    # twice: the second is remembered (a zero never is: 0.0 and -0.0 are equal keys)
    assert format_molality(m) == format_molality(m) == f"{m:.6g}"


def test_a_remembered_zero_keeps_its_sign():
    assert [format_molality(m) for m in (0.0, -0.0, 0.0)] == ["0", "-0", "0"]


@given(st.floats(allow_nan=True, allow_infinity=True), st.integers(1, 4))
def test_decimals_follow_the_uncertainty_s_decade(u, significant):
    expected = (6 if not math.isfinite(u) or u <= 0.0
                else max(0, significant - 1 - math.floor(math.log10(u))))
    assert decimals_for(u, significant) == expected


def test_aligned_lines_pad_by_characters():
    rows = [["m", "1 − a_w", "γ±"], ["0.001", "(3.56 ± 0.01) × 10⁻⁵", "0.965 ± 0.001"]]
    assert aligned_lines(rows) == ["  m       1 − a_w                γ±",
                                   "  0.001   (3.56 ± 0.01) × 10⁻⁵   0.965 ± 0.001"]
    assert aligned_lines([["a", "b "], ["cc", "d"]], pad_last=False) == ["  a    b", "  cc   d"]
