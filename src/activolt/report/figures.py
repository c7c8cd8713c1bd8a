"""Figures of a reduction: the extrapolation to m = 0, the residuals, and γ± against √m; of a
temperature study: E° against T with the fit and its residuals, and γ± against √m by isotherm;
of a calibration history: an individuals control chart per electrode.

Each ``plot_*`` function draws on a given matplotlib ``Axes`` (or a new one) and returns it;
:func:`render_figures` returns PNG bytes, so that nothing is written until every figure is made.
matplotlib is imported only here, when a figure is wanted.
"""

from __future__ import annotations

import io
import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING

import numpy as np
import numpy.typing as npt

from ..activity.hueckel import extended_debye_hueckel
from ..activity.published import published_gamma
from ..chemistry.electrolytes import nernst_factor
from ..fit.engine import SLOPE
from ..physics.water import debye_hueckel_constants
from ..procedures.calibration import ElectrodeHistory
from ..procedures.dilution import Reduction
from ..procedures.temperature import StandardPotentialFit

if TYPE_CHECKING:
    import pandas as pd
    from matplotlib.axes import Axes


def _axes(ax: Axes | None) -> Axes:
    if ax is not None:
        return ax
    from matplotlib.figure import Figure

    return Figure(figsize=(6.4, 4.4), layout="constrained").add_subplot()


def _ln_gamma_reference(reduction: Reduction, molality: np.ndarray,
                        temperature_K: np.ndarray) -> np.ndarray:
    """Extended Debye–Hückel ln γ± with Bå = 1.5, the term taken out in the extrapolation plot."""
    return extended_debye_hueckel(reduction.electrolyte, molality,
                                  debye_hueckel_constants(temperature_K).agamma)


def extrapolation_function_V(reduction: Reduction) -> tuple[np.ndarray, np.ndarray]:
    """(m, y) at the readings: y = E + k ln m± + k ln γ_DH, which tends to E° as m → 0 [V]."""
    points = reduction.points[reduction.points["gamma_pm"].notna()]
    meta = reduction.run.metadata
    m = points["molality_mol_kg"].to_numpy(float)
    t = points["temperature_K"].to_numpy(float)
    k = reduction.response_factor_V(t)
    emf = points["emf_V"].to_numpy(float) + points["pressure_correction_V"].fillna(0.0).to_numpy()
    y = emf + k * (np.log(meta.electrolyte.mean_molality(m)) + _ln_gamma_reference(reduction, m, t))
    return m, y


def extrapolation_band_V(reduction: Reduction, molality_mol_kg: npt.ArrayLike
                         ) -> tuple[np.ndarray, np.ndarray]:
    r"""The fitted model in the coordinates of the extrapolation plot and its standard
    uncertainty, propagated from the fit's covariance.

    Parameters
    ----------
    reduction : Reduction
        The reduction.
    molality_mol_kg : array_like
        Molalities [mol kg⁻¹] at which to evaluate the curve (> 0).

    Returns
    -------
    y : ndarray
        :math:`y(m; θ) = Ê(m; θ) + σ s k [\ln m_± + \ln γ_{DH}(m)]` [V], the plotted quantity
        of :func:`extrapolation_function_V` evaluated on the fit.
    u : ndarray
        Its standard uncertainty (k = 1) [V], :math:`u^2 = g^T V g` with :math:`g = ∂y/∂θ`
        over E°, the free parameters and the held parameters that carry a Type B uncertainty
        (GUM, JCGM 100:2008, 5.2).

    Notes
    -----
    The plotted quantity depends on the fitted slope factor s twice — in the model and in the
    plot's own coordinate — so s is varied in both: with Ê = E° − σ s k (ln m± + ln γ±),
    :math:`y = E° − σ s k (\ln γ_± − \ln γ_{DH})`, which tends to E° as m → 0 with the
    uncertainty of E° alone. (Varying s in the model only gives a band that flares as
    k ln m± at the dilute end, the band of a quantity that is not plotted.)

    Examples
    --------
    At m → 0 the band is E°'s own uncertainty (the demo run; common practice):

    >>> from importlib.resources import files
    >>> from activolt.data.runs import read_run
    >>> from activolt.procedures.dilution import reduce_run
    >>> r = reduce_run(read_run(files("activolt") / "sample_data" / "kestrel_hcl_25C.csv"))
    >>> y, u = extrapolation_band_V(r, [1e-12])
    >>> bool(abs(u[0] - r.standard_potential.std_dev) < 1e-3 * r.standard_potential.std_dev)
    True
    """
    meta = reduction.run.metadata
    molality = np.atleast_1d(np.asarray(molality_mol_kg, dtype=float))
    t = np.full(molality.shape, reduction.temperature_K)
    k = nernst_factor(meta.electrolyte, meta.electrons, t) * meta.electrolyte_sign
    constants = debye_hueckel_constants(t)
    values = reduction.parameter_values
    reference = _ln_gamma_reference(reduction, molality, t)
    ln_m = np.log(meta.electrolyte.mean_molality(molality))

    def curve(e0: float, trial: dict[str, float]) -> np.ndarray:
        model_values = {name: trial[name] for name in reduction.model.parameter_names}
        ln_gamma = reduction.model.ln_gamma(meta.electrolyte, molality, constants, model_values)
        # The same s in the model and in the plot's coordinate (see Notes).
        slope = trial.get(SLOPE, meta.slope_factor)
        return e0 - slope * k * (ln_m + ln_gamma) + slope * k * (ln_m + reference)

    e0 = reduction.standard_potential.nominal_value
    y = curve(e0, values)
    if reduction.uncertain_covariance is not None and reduction.uncertain_names:
        names, covariance = reduction.uncertain_names, reduction.uncertain_covariance
    else:
        names, covariance = reduction.free_names, reduction.covariance
    gradient = [np.ones_like(molality)]
    for name in names[1:]:
        step = 1e-6 * max(1.0, abs(values[name]))
        gradient.append((curve(e0, {**values, name: values[name] + step})
                         - curve(e0, {**values, name: values[name] - step})) / (2 * step))
    g = np.column_stack(gradient)
    u = np.sqrt(np.maximum(np.einsum("ij,jk,ik->i", g, covariance, g), 0.0))
    return y, u


def _plain_ticks(ax: Axes) -> None:
    """Tick labels as the values themselves: no offset ("+2.15e3") and no scientific factor
    on linear axes, so that a tick reads as the quantity on the axis label."""
    for axis in ("x", "y"):
        if (ax.get_xscale() if axis == "x" else ax.get_yscale()) == "linear":
            ax.ticklabel_format(axis=axis, useOffset=False, style="plain")


def plot_extrapolation(reduction: Reduction, ax: Axes | None = None,
                       max_molality: float | None = None) -> Axes:
    """The extrapolation to infinite dilution against √m, with the fit, its 95 % band and E°.

    ``max_molality`` [mol kg⁻¹] limits the plot to the dilute end, where E° is decided.
    """
    ax = _axes(ax)
    m, y = extrapolation_function_V(reduction)
    if max_molality is not None:
        y, m = y[m <= max_molality], m[m <= max_molality]
    stats = reduction.statistics
    grid = np.linspace(0.0, float(np.sqrt(m.max())) * 1.02, 300) ** 2
    grid[0] = 1e-12
    y_fit, u_fit = extrapolation_band_V(reduction, grid)
    k95 = stats.coverage_factor
    x_grid = np.sqrt(grid)
    ax.fill_between(x_grid, (y_fit - k95 * u_fit) * 1e3, (y_fit + k95 * u_fit) * 1e3,
                    color="tab:blue", alpha=0.2, lw=0, label="95 % band of the fit")
    ax.plot(x_grid, y_fit * 1e3, color="tab:blue", label=f"fit: {reduction.model.title}")
    ax.plot(np.sqrt(m), y * 1e3, "o", color="black", ms=4, label="readings")
    cross = reduction.linear_extrapolation
    if cross is not None:
        m_line = np.linspace(0.0, cross.max_ionic_strength
                             / reduction.electrolyte.ionic_strength_factor, 50)
        m_line = m_line[m_line <= m.max()]
        ax.plot(np.sqrt(m_line), (cross.standard_potential_V + cross.slope_V_kg_mol * m_line)
                * 1e3, "--", color="tab:orange", label="straight-line cross-check")
    e0 = reduction.standard_potential
    ax.errorbar([0.0], [e0.nominal_value * 1e3], yerr=[k95 * e0.std_dev * 1e3], fmt="D",
                color="tab:red", ms=6, capsize=4, zorder=5,
                label=f"E° = {e0.nominal_value * 1e3:.{_places(e0.std_dev * 1e3)}f} mV")
    ax.set_xlabel("√(m / (mol kg⁻¹))")
    ax.set_ylabel("E + k ln m± + k ln γ(DH, Bå = 1.5) / mV")
    ax.set_title(("Dilute end" if max_molality is not None else
                  "Extrapolation to infinite dilution") + f" — {reduction.electrolyte.formula}, "
                 f"{reduction.temperature_K - 273.15:.2f} °C", fontsize="medium")
    ax.legend(fontsize="small")
    _plain_ticks(ax)
    return ax


def _places(u: float) -> int:
    return max(0, 1 - math.floor(math.log10(u))) if u > 0 and math.isfinite(u) else 3


def plot_residuals(reduction: Reduction, ax: Axes | None = None) -> Axes:
    """Residuals E − Ê against molality (log scale) with the ±2u band."""
    ax = _axes(ax)
    points = reduction.points[reduction.points["residual_V"].notna()]
    m = points["molality_mol_kg"].to_numpy(float)
    r = points["residual_V"].to_numpy(float) * 1e3
    stats = reduction.statistics
    if stats.covariance_scaled:
        s = stats.residual_sd_V * 1e3
        ax.axhspan(-2 * s, 2 * s, color="tab:blue", alpha=0.15,
                   label=f"±2s (residual s.d. {s:.2g} mV)")
    else:
        u = points["u_emf_V"].to_numpy(float) * 1e3
        ax.fill_between(m, -2 * u, 2 * u, color="tab:blue", alpha=0.15, step="mid",
                        label="±2u (stated reading uncertainty)")
    ax.axhline(0.0, color="grey", lw=0.8)
    ax.plot(m, r, "o", color="black", ms=4, label="residual")
    standing_out = points["diagnostic"].notna().to_numpy() if "diagnostic" in points else None
    if standing_out is not None and standing_out.any():
        ax.plot(m[standing_out], r[standing_out], "o", ms=11, mfc="none", mec="tab:red",
                label="stands out (see report)")
    ax.set_xscale("log")
    ax.set_xlabel("m / (mol kg⁻¹)")
    ax.set_ylabel("E − E(fit) / mV")
    ax.set_title("Residuals")
    # Below the axes: the residuals fill the plot, and a legend inside would cover some.
    ax.legend(fontsize="small", loc="upper center", bbox_to_anchor=(0.5, -0.14), ncol=3,
              frameon=False)
    _plain_ticks(ax)
    return ax


def plot_gamma(reduction: Reduction, ax: Axes | None = None) -> Axes:
    """γ± from the readings against √m, the fitted model, and published values where known."""
    ax = _axes(ax)
    points = reduction.points[reduction.points["gamma_pm"].notna()]
    m = points["molality_mol_kg"].to_numpy(float)
    grid = np.linspace(1e-8, float(m.max()) * 1.02, 300)
    ax.plot(np.sqrt(grid), np.exp(reduction.ln_gamma_model(grid)), color="tab:blue",
            label=f"fit: {reduction.model.title}")
    ax.errorbar(np.sqrt(m), points["gamma_pm"], yerr=2 * points["u_gamma_pm"], fmt="o",
                color="black", ms=4, capsize=2, label="this run (±2u)")
    table = published_gamma(reduction.electrolyte.formula, reduction.temperature_K)
    if table is not None:
        shown = table[table["molality_mol_kg"] <= m.max() * 1.5]
        ax.plot(np.sqrt(shown["molality_mol_kg"]), shown["gamma_pm"], "s", mfc="none",
                color="tab:green", label="published (see report)")
    ax.set_xlabel("√(m / (mol kg⁻¹))")
    ax.set_ylabel("γ±")
    ax.set_title(f"Mean ionic activity coefficient — {reduction.electrolyte.formula}")
    ax.legend(fontsize="small")
    _plain_ticks(ax)
    return ax


def _extrapolation_figure(reduction: Reduction) -> Axes:
    """The whole range beside the dilute end (I ≤ 0.1 mol/kg) when the run goes beyond it."""
    from matplotlib.figure import Figure

    dilute = 0.1 / reduction.electrolyte.ionic_strength_factor
    m = reduction.points.loc[reduction.points["gamma_pm"].notna(), "molality_mol_kg"]
    if (m <= dilute).sum() < 3 or m.max() <= dilute:
        return plot_extrapolation(reduction)
    figure = Figure(figsize=(12.0, 4.6), layout="constrained")
    whole, end = figure.subplots(1, 2)
    plot_extrapolation(reduction, whole)
    plot_extrapolation(reduction, end, max_molality=dilute)
    return whole


FIGURES = {"extrapolation": _extrapolation_figure, "residuals": plot_residuals,
           "gamma": plot_gamma}


def render_figures(reduction: Reduction, dpi: int = 110) -> dict[str, bytes]:
    """Every figure as PNG bytes, by name (``extrapolation``, ``residuals``, ``gamma``)."""
    rendered = {}
    for name, draw in FIGURES.items():
        ax = draw(reduction)
        buffer = io.BytesIO()
        ax.figure.savefig(buffer, format="png", dpi=dpi, metadata={"Software": "activolt"})
        rendered[name] = buffer.getvalue()
    return rendered


def plot_summary(summary: pd.DataFrame, ax: Axes | None = None) -> Axes:
    """E° ± U95 of every series of a batch, one marker per series, in the summary's order.

    Parameters
    ----------
    summary : pandas.DataFrame
        :attr:`activolt.procedures.many.ManyReductions.summary` (``standard_potential_V``,
        ``u_standard_potential_V``, ``coverage_factor``, ``series``, ``file``, ``failure``).
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure by default.

    Returns
    -------
    matplotlib.axes.Axes

    Notes
    -----
    The bars are the 95 % intervals E° ± k u (k the series' coverage factor); series that were
    not reduced are counted in the title and marked at the foot of the plot.
    """
    ax = _axes(ax)
    position = np.arange(len(summary))
    e0_mV = summary["standard_potential_V"].to_numpy(float) * 1e3
    u95_mV = (summary["coverage_factor"].to_numpy(float)
              * summary["u_standard_potential_V"].to_numpy(float) * 1e3)
    reduced = np.isfinite(e0_mV)
    ax.errorbar(position[reduced], e0_mV[reduced], yerr=u95_mV[reduced], fmt="o", ms=4,
                capsize=3, label="E° ± U95 (95 % interval)")
    failed = int((~reduced).sum())
    if failed:
        floor = np.nanmin(e0_mV - u95_mV) if reduced.any() else 0.0
        ax.plot(position[~reduced], np.full(failed, floor), "x", color="tab:red",
                label="not reduced (see the summary)")
    several_files = summary["file"].nunique() > 1
    # names are text, never mathtext: a "$" is shown as it is
    labels = [((f"{f}: {s}" if several_files else s) or "(unnamed)").replace("$", r"\$")
              for f, s in zip(summary["file"], summary["series"], strict=True)]
    if len(labels) <= 40:
        ax.set_xticks(position, labels, rotation=60 if len(labels) > 8 else 0,
                      ha="right" if len(labels) > 8 else "center", fontsize="small")
    else:
        ax.set_xlabel("series (in the summary's order)")
    ax.set_ylabel("E° / mV")
    ax.set_title(f"E° of {int(reduced.sum())} series"
                 + (f" ({failed} not reduced)" if failed else ""))
    ax.legend(fontsize="small")
    return ax


def render_summary_figure(summary: pd.DataFrame, dpi: int = 110) -> bytes:
    """:func:`plot_summary` as PNG bytes."""
    ax = plot_summary(summary)
    buffer = io.BytesIO()
    ax.figure.savefig(buffer, format="png", dpi=dpi, metadata={"Software": "activolt"})
    return buffer.getvalue()


# --------------------------------------------------------------------------------------------
# Temperature studies
# --------------------------------------------------------------------------------------------

def standard_potential_band_V(fit: StandardPotentialFit, temperature_K: npt.ArrayLike
                              ) -> tuple[np.ndarray, np.ndarray]:
    r"""E°(T) of the chosen form and its standard uncertainty at any T.

    Parameters
    ----------
    fit : StandardPotentialFit
        From :func:`activolt.procedures.temperature.fit_standard_potential`.
    temperature_K : array_like
        Temperatures [K].

    Returns
    -------
    e0 : ndarray
        E°(T) of the chosen form [V].
    u : ndarray
        Its standard uncertainty (k = 1) [V], :math:`u^2 = f(T)^T V_c f(T)` with f the form's
        basis functions and V_c the coefficients' covariance (linear in the coefficients, so
        exact; GUM, JCGM 100:2008, 5.2), with the choice of form counted as in the record
        (:meth:`~activolt.procedures.temperature.StandardPotentialFit.thermodynamics`).

    Examples
    --------
    At θ the band is u(E°(θ)) of the fit (Bates & Bower 1954, Table 1, 5–45 °C; common
    practice):

    >>> from activolt.procedures.temperature import fit_standard_potential
    >>> t = np.arange(5.0, 50.0, 5.0) + 273.15
    >>> e0 = [0.23413, 0.23142, 0.22857, 0.22557, 0.22234, 0.21904, 0.21566, 0.21208, 0.20835]
    >>> fit = fit_standard_potential(t, e0, np.full(9, 1e-5))
    >>> y, u = standard_potential_band_V(fit, [298.15])
    >>> bool(abs(u[0] - fit.reference.standard_potential_V.uncertainty) < 1e-12)
    True
    """
    t = np.atleast_1d(np.asarray(temperature_K, dtype=float))
    values = [fit.thermodynamics(float(x)).standard_potential_V for x in t]
    return (np.array([v.value for v in values]), np.array([v.uncertainty for v in values]))


def plot_standard_potential_temperature(fit: StandardPotentialFit,
                                        axes: tuple[Axes, Axes] | None = None
                                        ) -> tuple[Axes, Axes]:
    """E° of every isotherm (±2u) against T with the chosen E°(T), its 95 % band, and the
    residuals E° − E°(fit) below.

    Parameters
    ----------
    fit : StandardPotentialFit
        The E°(T) fit of a study.
    axes : (Axes, Axes), optional
        Where to draw (upper, lower); a new figure by default.

    Returns
    -------
    (matplotlib.axes.Axes, matplotlib.axes.Axes)
    """
    if axes is None:
        from matplotlib.figure import Figure

        figure = Figure(figsize=(6.4, 6.4), layout="constrained")
        upper, lower = figure.subplots(2, 1, sharex=True, height_ratios=(2.2, 1.0))
    else:
        upper, lower = axes
    form = fit.form
    t = fit.temperature_K
    t_C = t - 273.15
    u_data = np.sqrt(np.maximum(np.diag(fit.covariance_V2), 0.0))
    stated = fit.stated_uncertainty
    span = max(float(t.max() - t.min()), 1.0)
    grid = np.linspace(float(t.min()) - 0.03 * span, float(t.max()) + 0.03 * span, 200)
    y, u = standard_potential_band_V(fit, grid)
    k95 = form.coverage_factor
    upper.fill_between(grid - 273.15, (y - k95 * u) * 1e3, (y + k95 * u) * 1e3,
                       color="tab:blue", alpha=0.2, lw=0, label="95 % band of the fit")
    name = ("constant ΔCp°" if form.form == "constant_heat_capacity"
            else f"polynomial of degree {form.degree}")
    upper.plot(grid - 273.15, y * 1e3, color="tab:blue", label=f"E°(T): {name}")
    if stated:
        upper.errorbar(t_C, fit.standard_potential_V * 1e3, yerr=2 * u_data * 1e3, fmt="o",
                       color="black", ms=4, capsize=3, label="isotherms (±2u)")
    else:
        upper.plot(t_C, fit.standard_potential_V * 1e3, "o", color="black", ms=4,
                   label="isotherms")
    theta = fit.reference_temperature_K
    ref = fit.reference.standard_potential_V
    if t.min() - 0.03 * span <= theta <= t.max() + 0.03 * span:
        upper.axvline(theta - 273.15, color="grey", lw=0.8, ls=":",
                      label=f"θ = {theta - 273.15:g} °C: E° = "
                            f"{ref.value * 1e3:.{_places(ref.uncertainty * 1e3)}f} mV")
    upper.set_ylabel("E° / mV")
    upper.set_title(f"E° against temperature (basis p° = {fit.standard_pressure_Pa / 1e3:g} kPa)",
                    fontsize="medium")
    upper.legend(fontsize="small")
    residual = form.residuals_V * 1e3
    if stated:
        lower.errorbar(t_C, residual, yerr=2 * u_data * 1e3, fmt="o", color="black", ms=4,
                       capsize=3, label="E° − E°(fit) (±2u)")
    else:
        lower.plot(t_C, residual, "o", color="black", ms=4, label="E° − E°(fit)")
    lower.fill_between(grid - 273.15, -k95 * u * 1e3, k95 * u * 1e3, color="tab:blue",
                       alpha=0.2, lw=0)
    lower.axhline(0.0, color="grey", lw=0.8)
    lower.set_xlabel("t / °C")
    lower.set_ylabel("residual / mV")
    lower.legend(fontsize="small")
    for ax in (upper, lower):
        _plain_ticks(ax)
    return upper, lower


def plot_gamma_isotherms(reductions: Sequence[Reduction], ax: Axes | None = None) -> Axes:
    """γ± from the readings (±2u) against √m and the fitted model, one colour per isotherm.

    Parameters
    ----------
    reductions : sequence of Reduction
        One reduction per isotherm, in the order to draw (coolest first).
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure by default.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    from matplotlib import colormaps

    colours = colormaps["plasma"](np.linspace(0.0, 0.85, max(len(reductions), 2)))
    for colour, reduction in zip(colours, reductions, strict=False):
        points = reduction.points[reduction.points["gamma_pm"].notna()]
        m = points["molality_mol_kg"].to_numpy(float)
        grid = np.linspace(1e-8, float(m.max()) * 1.02, 200)
        label = f"{reduction.temperature_K - 273.15:.2f} °C ({reduction.model.name})"
        ax.plot(np.sqrt(grid), np.exp(reduction.ln_gamma_model(grid)), color=colour,
                label=label)
        ax.errorbar(np.sqrt(m), points["gamma_pm"], yerr=2 * points["u_gamma_pm"], fmt="o",
                    color=colour, ms=3, capsize=2)
    formula = reductions[0].electrolyte.formula if reductions else ""
    ax.set_xlabel("√(m / (mol kg⁻¹))")
    ax.set_ylabel("γ±")
    ax.set_title(f"Mean ionic activity coefficient by isotherm — {formula} "
                 "(points ±2u, lines: fit)", fontsize="medium")
    ax.legend(fontsize="small", title="isotherm", title_fontsize="small")
    _plain_ticks(ax)
    return ax


def render_temperature_figures(fit: StandardPotentialFit, reductions: Sequence[Reduction],
                               dpi: int = 110) -> dict[str, bytes]:
    """The figures of a temperature study as PNG bytes, by name: ``standard_potential`` (E°
    against T, the fit and its residuals) and ``gamma`` (γ± against √m by isotherm)."""
    rendered = {}
    for name, ax in (("standard_potential", plot_standard_potential_temperature(fit)[0]),
                     ("gamma", plot_gamma_isotherms(reductions))):
        buffer = io.BytesIO()
        ax.figure.savefig(buffer, format="png", dpi=dpi, metadata={"Software": "activolt"})
        rendered[name] = buffer.getvalue()
    return rendered


# --------------------------------------------------------------------------------------------
# Calibration of reference electrodes
# --------------------------------------------------------------------------------------------

def plot_control_chart(history: ElectrodeHistory, ax: Axes | None = None) -> Axes:
    """The individuals control chart of one electrode's calibrations.

    Parameters
    ----------
    history : ElectrodeHistory
        From :func:`activolt.procedures.calibration.electrode_history`; its ``chart`` must be
        set (four calibrations or more).
    ax : matplotlib.axes.Axes, optional
        Where to draw; a new figure by default.

    Returns
    -------
    matplotlib.axes.Axes

    Notes
    -----
    The points are the calibrations in order (their dates below), the centre line and the
    limits centre ± 3σ are the chart's (σ = MR̄/1.128; Western Electric 1956); points at which
    a rule fires are circled in red and the rules named in the legend; the newest point is
    drawn as a square.
    """
    chart = history.chart
    if chart is None:
        raise ValueError(f"electrode {history.electrode}: fewer than four calibrations, no "
                         "control chart")
    ax = _axes(ax)
    values_mV = np.asarray(chart.values_V, float) * 1e3
    position = np.arange(values_mV.size)
    ax.plot(position, values_mV, "-o", ms=4, lw=0.8, color="tab:blue", label="calibration")
    ax.plot(position[-1:], values_mV[-1:], "s", ms=7, mfc="none", color="tab:blue",
            label="newest")
    centre, low, high = (chart.centre_V * 1e3, chart.lower_limit_V * 1e3,
                         chart.upper_limit_V * 1e3)
    ax.axhline(centre, color="black", lw=1.0, label=f"centre {centre:.4f} mV")
    for limit, text in ((high, "+3σ"), (low, "−3σ")):
        ax.axhline(limit, color="tab:red", lw=1.0, ls="--")
        ax.annotate(f"{text} {limit:.4f}", (1.0, limit), xycoords=("axes fraction", "data"),
                    xytext=(-2, 2), textcoords="offset points", ha="right", fontsize="x-small",
                    color="tab:red")
    flagged = sorted({i for indices in chart.violations.values() for i in indices
                      if 0 <= i < values_mV.size})
    if flagged:
        rules = ", ".join(name for name, indices in chart.violations.items() if indices)
        ax.plot(position[flagged], values_mV[flagged], "o", ms=11, mfc="none",
                mec="tab:red", mew=1.5, label=f"flagged ({rules})")
    dates = list(history.dates)[-values_mV.size:]
    if len(dates) == values_mV.size and values_mV.size <= 24:
        ax.set_xticks(position, dates, rotation=45, ha="right", fontsize="x-small")
    else:
        ax.set_xlabel("calibration (in date order)")
    ax.set_ylabel("E / mV")
    name = history.electrode.replace("$", r"\$")  # names are text, never mathtext
    ax.set_title(f"{name}" + (" — out of control" if chart.out_of_control else ""),
                 fontsize="medium")
    ax.legend(fontsize="x-small", loc="best")
    return ax


def render_control_charts(histories: Mapping[str, ElectrodeHistory], dpi: int = 110
                          ) -> bytes | None:
    """One PNG with an individuals chart (:func:`plot_control_chart`) for every electrode
    whose history has a chart, two per row; None when none has one."""
    charted = [h for h in histories.values() if h.chart is not None]
    if not charted:
        return None
    from matplotlib.figure import Figure

    columns = 1 if len(charted) == 1 else 2
    rows = math.ceil(len(charted) / columns)
    figure = Figure(figsize=(6.4 * columns, 3.6 * rows), layout="constrained")
    axes = figure.subplots(rows, columns, squeeze=False).ravel()
    for ax, history in zip(axes, charted, strict=False):
        plot_control_chart(history, ax)
    for ax in axes[len(charted):]:
        ax.set_visible(False)
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi, metadata={"Software": "activolt"})
    return buffer.getvalue()
