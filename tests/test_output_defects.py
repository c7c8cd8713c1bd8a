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
