"""Output defects found when the tool was used as users use it: the figures' band and axes, the
report's order, digits and units, the ``cell`` command's Nernst EMF and pressure basis, argument
order, and the package's public names.

Sources of check values:
- NaCl γ± at 25 °C: Pitzer, Peiper & Busey (1984), the shipped table (inputs, not check values).
- HCl γ± at 25 °C: Robinson & Stokes (1959), Appendix 8.10 (shipped table; inputs).
- E°(AgCl/Ag) = 0.22234 V at 25 °C, 1 atm: Bates & Bower (1954), J. Res. NBS 53, 283, Table 1.
- R, F: CODATA 2018 through scipy.constants.
- 1 bar vs 1 atm shift of the Harned cell (RT/2F) ln 1.01325 = 0.169 mV at 25 °C
  (reference-values.md, derived).
Everything else is a behaviour (common practice) or a regression pin, said where it occurs.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants as sc

from activolt.activity.published import published_gamma
from activolt.data.runs import read_run
from activolt.procedures.dilution import reduce_run

FARADAY = sc.physical_constants["Faraday constant"][0]
E0_ATM_V = 0.22234  # Bates & Bower (1954), Table 1


def _write(folder, header, rows, meta):
    (folder / "run.csv").write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    (folder / "run.toml").write_text(meta, encoding="utf-8")
    return folder / "run.csv"


@pytest.fixture(scope="module")
def ion_selective(tmp_path_factory):
    """A Na+-ISE | NaCl | Cl−-ISE pair at 98.5 % of the Nernstian slope, slope factor fitted."""
    folder = tmp_path_factory.mktemp("ise")
    table = published_gamma("NaCl", 298.15)
    table = table[table.molality_mol_kg <= 2.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    k = 2 * sc.R * 298.15 / FARADAY
    emf = 0.15 - 0.985 * k * np.log(m * gamma)
    emf = emf + np.random.default_rng(4).normal(0, 0.05e-3, m.size)
    rows = [f"{a},{float(b)!r},5e-5" for a, b in zip(m, emf, strict=True)]
    path = _write(folder, "molality_mol_kg,emf_V,u_emf_V", rows,
                  'electrolyte = "NaCl"\nelectrons = 1\ntemperature_C = 25\n'
                  'slope_factor = "fit"\n')
    return reduce_run(read_run(path), "hueckel")


@pytest.fixture(scope="module")
def harned(tmp_path_factory):
    """A Harned cell from 0.001 to 1 mol/kg around 222 mV (the dilute end sits near 222 mV)."""
    folder = tmp_path_factory.mktemp("harned")
    table = published_gamma("HCl", 298.15)
    table = table[table.molality_mol_kg <= 1.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    emf = E0_ATM_V - 2 * sc.R * 298.15 / FARADAY * np.log(m * gamma)
    emf = emf + np.random.default_rng(7).normal(0, 0.02e-3, m.size)
    rows = [f"{a},{float(b)!r},2e-5,E{i % 2 + 1}" for i, (a, b) in
            enumerate(zip(m, emf, strict=True))]
    path = _write(folder, "molality_mol_kg,emf_V,u_emf_V,electrode", rows,
                  'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n')
    return reduce_run(read_run(path), "hueckel")


# --- 1. figures -----------------------------------------------------------------------------

def test_band_at_infinite_dilution_is_the_interval_of_e0(ion_selective):
    """The plotted band is the band of the plotted quantity: at m → 0 it is E°'s own interval,
    even with a fitted slope factor (which enters the plot's coordinate too)."""
    from activolt.report.figures import extrapolation_band_V

    reduction = ion_selective
    assert "slope_factor" in reduction.free_names
    u_e0 = reduction.standard_potential.std_dev
    y, u = extrapolation_band_V(reduction, [1e-12, 1e-8, 1e-6])
    np.testing.assert_allclose(y, reduction.standard_potential.nominal_value, atol=1e-6)
    np.testing.assert_allclose(u, u_e0, rtol=0.01)
    # and it never flares far beyond E°'s interval at the dilute end
    _, u_dilute = extrapolation_band_V(reduction, np.linspace(1e-6, 0.01, 50))
    assert u_dilute.max() < 1.2 * u_e0


def test_drawn_band_meets_the_e0_bar(ion_selective):
    """The drawn band at √m = 0 spans E° ± k u(E°), the same as the E° error bar."""
    from matplotlib.collections import PolyCollection

    from activolt.report.figures import plot_extrapolation

    reduction = ion_selective
    ax = plot_extrapolation(reduction)
    band = next(c for c in ax.collections if isinstance(c, PolyCollection))
    vertices = band.get_paths()[0].vertices
    at_zero = vertices[np.isclose(vertices[:, 0], 0.0, atol=1e-5), 1]
    half = reduction.statistics.coverage_factor * reduction.standard_potential.std_dev * 1e3
    e0_mV = reduction.standard_potential.nominal_value * 1e3
    assert at_zero.max() == pytest.approx(e0_mV + half, abs=0.02 * half)
    assert at_zero.min() == pytest.approx(e0_mV - half, abs=0.02 * half)


def test_no_axis_offset_on_the_dilute_end(harned):
    """Ticks read as the plotted values: no '+2.22e2' offset above the axis."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from activolt.report.figures import FIGURES

    for draw in FIGURES.values():
        ax = draw(harned)
        FigureCanvasAgg(ax.figure).draw()
        for each in ax.figure.axes:
            for axis, scale in ((each.xaxis, each.get_xscale()), (each.yaxis, each.get_yscale())):
                if scale != "linear":
                    continue
                assert axis.get_major_formatter().get_useOffset() is False
                assert axis.get_offset_text().get_text() == ""


def test_residual_legend_covers_no_point(harned):
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from activolt.report.figures import plot_residuals

    ax = plot_residuals(harned)
    canvas = FigureCanvasAgg(ax.figure)
    canvas.draw()
    box = ax.get_legend().get_window_extent(canvas.get_renderer())
    points = harned.points[harned.points["residual_V"].notna()]
    xy = ax.transData.transform(np.column_stack([points["molality_mol_kg"],
                                                 points["residual_V"] * 1e3]))
    inside = [(x, y) for x, y in xy if box.x0 <= x <= box.x1 and box.y0 <= y <= box.y1]
    assert not inside
    # and the legend lies outside the axes altogether
    assert not box.overlaps(ax.get_window_extent(canvas.get_renderer()))


# --- 2. report ------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def harned_comparison(tmp_path_factory):
    """The Harned run with two replicates a solution, --exclude m=0.01, no stated u(EMF), and
    the limiting law (inadequate to 1 mol/kg) compared with Hückel."""
    from activolt.data.runs import Exclusion, exclude_points
    from activolt.procedures.model_choice import compare_models

    folder = tmp_path_factory.mktemp("replicates")
    table = published_gamma("HCl", 298.15)
    table = table[table.molality_mol_kg <= 1.0]
    m, gamma = table.molality_mol_kg.to_numpy(), table.gamma_pm.to_numpy()
    emf = E0_ATM_V - 2 * sc.R * 298.15 / FARADAY * np.log(m * gamma)
    noise = np.random.default_rng(11).normal(0, 0.02e-3, (2, m.size))
    rows = [f"{a},{float(b + noise[j, i])!r},E{j + 1}" for i, (a, b) in
            enumerate(zip(m, emf, strict=True)) for j in range(2)]
    path = _write(folder, "molality_mol_kg,emf_V,electrode", rows,
                  'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n')
    run = exclude_points(read_run(path), [Exclusion.parse("m=0.01:cracked frit")])
    return compare_models(run, ["limiting", "hueckel"])


def _report(comparison, monte_carlo=None):
    from activolt.report.text import format_report

    return format_report(comparison.recommended_reduction, comparison=comparison,
                         monte_carlo=monte_carlo)


def test_safety_block_comes_last(harned_comparison):
    from activolt.procedures.montecarlo import monte_carlo

    reduction = harned_comparison.recommended_reduction
    monte = monte_carlo(reduction.run, trials=20, seed=1, reduction=reduction)
    text = _report(harned_comparison, monte)
    assert text.index("Model comparison") < text.index("Monte Carlo") < text.index("safety:")
    tail = text[text.index("safety:"):].splitlines()[1:]
    assert tail and all(line.startswith("  - ") for line in tail)


def test_warnings_do_not_repeat_the_reasons(harned_comparison):
    from activolt.report.model_table import format_model_comparison

    text = format_model_comparison(harned_comparison)
    limiting = harned_comparison.assessment("limiting")
    assert not limiting.adequate
    reason = "; ".join(limiting.reasons)
    assert any(w.endswith(reason) for w in harned_comparison.warnings)  # the repetition
    assert text.count(reason) == 1


def test_comparison_table_says_why_in_short(harned_comparison):
    from activolt.report.model_table import format_model_comparison

    lines = format_model_comparison(harned_comparison).splitlines()
    header = next(line for line in lines if line.startswith("model"))
    assert header.split()[-1] == "why"
    row = next(line for line in lines if line.startswith("limiting"))
    assert "(a) beyond its range" in row
    assert any(line.startswith("  (a) limiting: ") for line in lines)


def test_chi2_with_unit_weights_has_its_unit(harned_comparison):
    from activolt.report.model_table import format_model_comparison

    text = _report(harned_comparison)
    fit_line = next(line for line in text.splitlines() if line.startswith("  fit: χ²"))
    chi2 = harned_comparison.recommended_reduction.statistics.chi2
    assert f"χ² = {chi2:.4g} V²" in fit_line
    assert "χ²/ν / V²" in format_model_comparison(harned_comparison)


def test_excluded_readings_keep_their_value_and_are_counted(harned_comparison):
    reduction = harned_comparison.recommended_reduction
    text = _report(harned_comparison)
    excluded = reduction.points[reduction.points["molality_mol_kg"] == 0.01]
    assert len(excluded) == 2
    for _, row in excluded.iterrows():
        line = next(line for line in text.splitlines()
                    if line.startswith("  0.01 ") and f" {row['electrode']} " in line)
        assert f"{row['emf_V'] * 1e3:.3f}" in line and "excluded: cracked frit" in line
    lines = ", ".join(str(n) for n in excluded["line"])
    assert (f"left out of the fit: 2 readings at m = 0.01 mol/kg (lines {lines}) — cracked frit"
            in text)


def test_points_table_has_an_electrode_column_when_the_run_names_them(harned, ion_selective):
    from activolt.report.text import format_report

    def header(text):
        return next(line for line in text.splitlines() if line.startswith("  m / (mol/kg)"))

    with_electrodes = format_report(harned)
    assert header(with_electrodes).split()[3] == "electrode"
    row = next(line for line in with_electrodes.splitlines() if line.startswith("  0.001 "))
    assert row.split()[1] == "E1"
    assert "electrode" not in header(format_report(ion_selective))


def test_water_activity_printed_as_one_minus_a_w_with_its_digits(harned):
    from activolt.procedures.properties import derived_properties
    from activolt.report.text import format_report

    text = format_report(harned)
    block = text[text.index("derived from the fitted model"):].splitlines()
    assert "1 − a_w" in block[1]
    properties = derived_properties(harned)
    first = block[2]
    a_w, u = properties["water_activity"].iloc[0], properties["u_water_activity"].iloc[0]
    # (mantissa ± u) × 10⁻ⁿ: the mantissa times 10⁻ⁿ is 1 − a_w, to the digits of u
    cell = first[first.index("(", first.index("±") + 1):].split("   ")[0]
    mantissa, rest = cell.strip("(").split(" ± ")
    u_mantissa, power = rest.split(") × 10")
    exponent = -int(power.translate(str.maketrans("⁻⁰¹²³⁴⁵⁶⁷⁸⁹", "-0123456789")))
    assert float(mantissa) * 10.0 ** -exponent == pytest.approx(1 - a_w, abs=u)
    assert float(u_mantissa) * 10.0 ** -exponent == pytest.approx(u, rel=0.05)
    assert len(u_mantissa.replace(".", "").lstrip("0")) == 2  # two significant digits of u
    # no number of the table carries more than eight decimals (a_w had eleven)
    import re

    table = "\n".join(block[:len(properties) + 2])
    assert not re.search(r"\d\.\d{9,}", table)


def test_a_bound_is_printed_as_the_bound(tmp_path):
    """å of the Hückel equation runs to its lower bound 0 on data with no ion-size term."""
    from activolt.report.text import format_report

    m = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5])
    ln_gamma = -1.1744 * np.sqrt(m) - 0.3 * m  # limiting law with a negative b: an input
    emf = 0.2223 - 2 * sc.R * 298.15 / FARADAY * np.log(m * np.exp(ln_gamma))
    rows = [f"{a},{float(b)!r},2e-5" for a, b in zip(m, emf, strict=True)]
    path = _write(tmp_path, "molality_mol_kg,emf_V,u_emf_V", rows,
                  'electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n')
    reduction = reduce_run(read_run(path), "hueckel")
    held = next(p for p in reduction.parameters if p.name == "a_angstrom")
    assert held.reason == "the fit ran to its lower bound (0 Å)"
    assert "the fit ran to its lower bound (0 Å)" in format_report(reduction)


# --- 3. activolt cell -----------------------------------------------------------------------

HARNED = "Pt | H2(g) | HCl(aq) | AgCl(s) | Ag(s)"
RT_F_V = sc.R * 298.15 / FARADAY  # CODATA 2018 through scipy.constants
E0_BAR_V = E0_ATM_V - RT_F_V / 2 * math.log(1.01325)  # reference-values.md (derived)


def test_cell_reports_on_100_kPa_by_default_like_reduce():
    from activolt.chemistry.cells import cell_summary
    from activolt.data.runs import RunMetadata

    summary = cell_summary(HARNED, 298.15)
    assert summary["standard_pressure_kPa"] == 100.0
    assert summary["catalogue_pressure_basis_kPa"] == 101.325
    assert summary["standard_potential_V"]["value"] == pytest.approx(E0_BAR_V, abs=5e-7)
    atm = cell_summary(HARNED, 298.15, 101325.0)
    assert atm["standard_potential_V"]["value"] == pytest.approx(E0_ATM_V, abs=5e-7)
    # ΔG° follows the basis: −F ΔE°
    assert (summary["delta_g_kJ_mol"]["value"] - atm["delta_g_kJ_mol"]["value"]) == \
        pytest.approx(-FARADAY * (E0_BAR_V - E0_ATM_V) / 1000, rel=1e-6)
    # without gas, E° does not depend on the basis
    daniell = "Zn(s) | ZnSO4(aq) || CuSO4(aq) | Cu(s)"
    assert cell_summary(daniell)["standard_potential_V"] == \
        cell_summary(daniell, 298.15, 101325.0)["standard_potential_V"]
    # reduce's default basis is the same
    import dataclasses

    default = {f.name: f.default for f in dataclasses.fields(RunMetadata)}
    assert default["standard_pressure_Pa"] == 100000.0


def test_cell_command_basis_option(capsys):
    from activolt.cli import main

    assert main(["cell", HARNED]) == 0
    out = capsys.readouterr().out
    assert f"E°cell = {E0_BAR_V:.6f} ± 0.000010 V (standard pressure 100 kPa)" in out
    assert main(["cell", HARNED, "--standard-pressure-kPa", "101.325"]) == 0
    out = capsys.readouterr().out
    assert f"E°cell = {E0_ATM_V:.6f} ± 0.000010 V (standard pressure 101.325 kPa)" in out
    assert main(["cell", HARNED, "--standard-pressure-kPa", "90"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--standard-pressure-kPa" in err[0] and "101.325" in err[0]


def test_cell_with_amounts_gives_the_ideal_nernst_emf(capsys):
    from activolt.chemistry.cells import cell_summary
    from activolt.cli import main

    diagram = "Pt | H2(g, 99.2 kPa) | HCl(aq, 0.01 mol/kg) | AgCl(s) | Ag(s)"
    # E = E° − (RT/F) ln(m_H+ m_Cl− / (p_H2/p°)^½) with γ = 1 (Harned & Owen 1958, ch. 10)
    expected = E0_BAR_V - RT_F_V * (math.log(0.01 * 0.01) - 0.5 * math.log(99.2 / 100.0))
    summary = cell_summary(diagram)
    assert summary["emf_ideal_V"]["value"] == pytest.approx(expected, abs=1e-7)
    assert summary["emf_ideal_V"]["uncertainty"] == summary["standard_potential_V"]["uncertainty"]
    assert "γ = 1" in summary["emf_ideal"]
    # E itself does not depend on the standard pressure chosen (the basis cancels)
    atm = cell_summary(diagram, 298.15, 101325.0)
    assert atm["emf_ideal_V"]["value"] == pytest.approx(expected, abs=1e-9)
    assert main(["cell", diagram]) == 0
    out = capsys.readouterr().out
    assert f"ideal activities (γ = 1) = {expected:.6f} ± 0.000010 V" in out


def test_cell_with_amounts_daniell_and_what_is_missing():
    from activolt.chemistry.cells import cell_summary

    # E − E° = −(RT/2F) ln(a_Zn²⁺/a_Cu²⁺), γ = 1
    both = cell_summary("Zn(s) | ZnSO4(aq, 0.1 mol/kg) || CuSO4(aq, 0.01 mol/kg) | Cu(s)")
    shift = both["emf_ideal_V"]["value"] - both["standard_potential_V"]["value"]
    assert shift == pytest.approx(-RT_F_V / 2 * math.log(10.0), abs=1e-9)
    assert "no junction potential" in both["emf_ideal"]
    one = cell_summary("Zn(s) | ZnSO4(aq, 0.1 mol/kg) || CuSO4(aq) | Cu(s)")
    assert one["emf_ideal_V"] is None and "Cu2+(aq)" in one["emf_ideal"]
    gas_unwritten = cell_summary("Pt | H2(g) | HCl(aq, 0.01 mol/kg) | AgCl(s) | Ag(s)")
    assert gas_unwritten["emf_ideal_V"]["value"] == pytest.approx(
        E0_BAR_V - RT_F_V * math.log(1e-4), abs=1e-7)
    assert "H2(g) at p°" in gas_unwritten["emf_ideal"]


# --- 4. small: argument order, basis with its unit, the package's public names -------------

def test_physics_functions_take_the_temperature_first():
    import inspect

    from activolt.physics import corrections

    for name, function in inspect.getmembers(corrections, inspect.isfunction):
        if name.startswith("_") or function.__module__ != corrections.__name__:
            continue
        parameters = list(inspect.signature(function).parameters)
        if "temperature_K" in parameters:
            assert parameters[0] == "temperature_K", name
    # IAPWS-95 p_w(25 °C) = 3.1699 kPa (reference-values.md): p_H2 = 101.325 − 3.170 kPa
    assert float(corrections.hydrogen_partial_pressure(298.15, 101325.0)) == pytest.approx(
        98155.0, abs=2.0)
    with pytest.raises(ValueError, match="temperature_K, barometric_pressure_Pa"):
        corrections.hydrogen_partial_pressure(101325.0, 298.15)  # the old order


def test_other_basis_names_its_units(tmp_path):
    """The E° on the other basis in kPa and V by name; the old (Pa, V) access still works."""
    m = np.array([0.001, 0.005, 0.01, 0.05, 0.1])
    table = published_gamma("HCl", 298.15)
    gamma = np.interp(m, table.molality_mol_kg, table.gamma_pm)
    emf = E0_BAR_V - 2 * RT_F_V * np.log(m * gamma)
    rows = [f"{a},{float(b)!r},2e-5" for a, b in zip(m, emf, strict=True)]
    path = _write(tmp_path, "molality_mol_kg,emf_V,u_emf_V", rows,
                  f'cell = "{HARNED}"\ntemperature_C = 25\npressure_kPa = 100.0\n')
    reduction = reduce_run(read_run(path))
    other = reduction.standard_potential_other_basis
    assert other.pressure_kPa == 101.325
    # (RT/2F) ln 1.01325 = 0.169 mV higher on 1 atm (reference-values.md, derived)
    assert (other.standard_potential_V - reduction.standard_potential.nominal_value) * 1e3 == \
        pytest.approx(0.169, abs=0.001)
    pressure_kPa, e0_V = other
    assert (pressure_kPa * 1e3, e0_V) == reduction.standard_potential_other_basis_V


PUBLIC_API = {
    "read_run": "activolt.data.runs", "reduce_run": "activolt.procedures.dilution",
    "compare_models": "activolt.procedures.model_choice",
    "monte_carlo": "activolt.procedures.montecarlo", "format_report": "activolt.report.text",
    "build_record": "activolt.io.record", "cell_summary": "activolt.chemistry.cells",
    "parse_electrolyte": "activolt.chemistry.electrolytes", "get_model": "activolt.activity",
    "MODELS": "activolt.activity",
    "read_runs": "activolt.data.runs", "runs_from_frame": "activolt.data.runs",
    "reduce_many": "activolt.procedures.many",
    "study_temperatures": "activolt.procedures.temperature",
    "fit_standard_potential": "activolt.procedures.temperature",
    "calibrate": "activolt.procedures.calibration",
    "electrode_history": "activolt.procedures.calibration",
    "primary_ph": "activolt.procedures.ph", "open_archive": "activolt.io.archive",
}


def test_import_activolt_is_light_and_exports_the_api_lazily():
    import importlib
    import subprocess
    import sys

    probe = ("import sys, activolt; "
             "print(sorted(m for m in sys.modules if m.startswith('activolt')), "
             "'numpy' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "['activolt'] False"
    import activolt

    for name, module in PUBLIC_API.items():
        assert getattr(activolt, name) is getattr(importlib.import_module(module), name)
        assert name in dir(activolt) and name in activolt.__all__
    with pytest.raises(AttributeError, match="no attribute 'reduce'"):
        activolt.reduce  # noqa: B018
