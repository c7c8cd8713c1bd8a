r"""Corrections of a measured EMF: gas pressures, water vapour, and the standard-pressure basis.

A cell with a gas electrode (hydrogen in the Harned cell) is measured at the gas's partial
pressure, not at the standard pressure p°. Its EMF depends on the gas pressures through

.. math:: E = E° − \frac{RT}{nF}\left[\sum_\mathrm{gas} ν_g \ln\frac{p_g}{p°} + \ldots\right]

with ν_g the signed coefficient of the gas in the cell reaction for n electrons (products
positive). The functions here give the size of each correction in volts so that a record can
report it; all inputs are SI (Pa, K, m, kg m⁻³).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import numpy.typing as npt

from ..constants import (
    FARADAY_C_MOL,
    GAS_CONSTANT_J_MOL_K,
    STANDARD_PRESSURE_PA,
    ZERO_CELSIUS_K,
)

#: Standard acceleration of gravity g_n [m s⁻²] (CGPM 1901, exact).
STANDARD_GRAVITY_M_S2 = 9.80665

#: Critical temperature [K] and pressure [Pa] of water (IAPWS 1992).
_CRITICAL_TEMPERATURE_K = 647.096
_CRITICAL_PRESSURE_PA = 22.064e6

#: Wagner & Pruß (1993) coefficients a1…a6 and exponents of τ = 1 − T/Tc.
_SATURATION_COEFFICIENTS = (-7.85951783, 1.84408259, -11.7866497, 22.6807411, -15.9618719,
                            1.80122502)
_SATURATION_EXPONENTS = (1.0, 1.5, 3.0, 3.5, 4.0, 7.5)


def water_vapour_pressure(temperature_K: npt.ArrayLike) -> np.ndarray:
    r"""Saturation vapour pressure of pure liquid water.

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K], 273.15–647.096 (NaN passes through).

    Returns
    -------
    numpy.ndarray
        p_w [Pa].

    Raises
    ------
    ValueError
        For a temperature outside the liquid–vapour line.

    Notes
    -----
    .. math:: \ln\frac{p_w}{p_c} = \frac{T_c}{T}\left(a_1 τ + a_2 τ^{1.5} + a_3 τ^3 + a_4 τ^{3.5}
              + a_5 τ^4 + a_6 τ^{7.5}\right), \quad τ = 1 − T/T_c

    with T_c = 647.096 K and p_c = 22.064 MPa: Wagner & Pruß (1993), J. Phys. Chem. Ref. Data
    22, 783, eq. 2.5; adopted in the IAPWS Revised Supplementary Release on Saturation
    Properties of Ordinary Water Substance (1992). It agrees with IAPWS-95 within 0.01 %
    between the triple and critical points. The triple point is 273.16 K; 273.15 K is accepted
    as a 0.01 K extrapolation.

    Examples
    --------
    25 °C: IAPWS-95 gives 3.1699 kPa (reference-values.md, derived); this auxiliary equation
    lies 0.003 % lower:

    >>> round(float(water_vapour_pressure(298.15)) / 1000, 4)
    3.1698
    """
    temperature = np.asarray(temperature_K, dtype=float)
    finite = temperature[np.isfinite(temperature)]
    if np.any((finite < ZERO_CELSIUS_K - 1e-9) | (finite > _CRITICAL_TEMPERATURE_K)):
        raise ValueError(
            "temperature outside the liquid–vapour line of water (273.15–647.096 K); "
            "give the temperature in kelvin"
        )
    tau = 1.0 - temperature / _CRITICAL_TEMPERATURE_K
    series = sum(a * tau**e for a, e in zip(_SATURATION_COEFFICIENTS, _SATURATION_EXPONENTS,
                                              strict=True))
    return _CRITICAL_PRESSURE_PA * np.exp(_CRITICAL_TEMPERATURE_K / temperature * series)


def hydrogen_partial_pressure(
    temperature_K: npt.ArrayLike,
    barometric_pressure_Pa: npt.ArrayLike,
    water_activity: npt.ArrayLike = 1.0,
    bubbler_depth_m: npt.ArrayLike = 0.0,
    solution_density_kg_m3: npt.ArrayLike = 997.0,
) -> np.ndarray:
    r"""Partial pressure of hydrogen at a hydrogen electrode saturated with water vapour.

    Parameters
    ----------
    temperature_K : array_like
        Temperature of the cell [K] (first, as everywhere in :mod:`activolt.physics`).
    barometric_pressure_Pa : array_like
        Barometric pressure [Pa].
    water_activity : array_like
        Activity of water in the cell solution [-]; 1 for pure water (no vapour-pressure
        lowering), e.g. 0.965 for 1 mol/kg HCl.
    bubbler_depth_m : array_like
        Depth below the solution surface at which the hydrogen leaves its inlet [m]; 0 for none.
    solution_density_kg_m3 : array_like
        Density of the solution above the inlet [kg m⁻³].

    Returns
    -------
    numpy.ndarray
        p_H2 [Pa].

    Notes
    -----
    .. math:: p_{H_2} = p_\mathrm{bar} + ρ g_n h − a_w\, p_w(T)

    Dalton's law with Raoult's law generalised by the water activity (the vapour over the
    solution is a_w p_w); the hydrostatic term is common practice for gas bubbled in below
    the surface (Bates, *Determination of pH*, 2nd ed., 1973, ch. 10, from memory).

    Examples
    --------
    At 101.325 kPa and 25 °C over dilute solution (p_w = 3.1699 kPa, IAPWS-95):

    >>> round(float(hydrogen_partial_pressure(298.15, 101325.0)) / 1000, 3)
    98.155
    """
    if np.any(np.asarray(temperature_K, dtype=float) > 1000.0):
        raise ValueError("temperature above 1000 K: the arguments are (temperature_K, "
                         "barometric_pressure_Pa)")
    water = np.asarray(water_activity, dtype=float)
    if np.any(water[np.isfinite(water)] < 0) or np.any(water[np.isfinite(water)] > 1):
        raise ValueError("water activity must lie between 0 and 1")
    total = (
        np.asarray(barometric_pressure_Pa, dtype=float)
        + np.asarray(solution_density_kg_m3, dtype=float) * STANDARD_GRAVITY_M_S2
        * np.asarray(bubbler_depth_m, dtype=float)
    )
    vapour = water * water_vapour_pressure(temperature_K)
    pressure = total - vapour
    bad = np.isfinite(pressure) & (pressure <= 0)
    if np.any(bad):
        total_b, vapour_b = np.broadcast_arrays(total, vapour)
        i = np.flatnonzero(bad)[0]
        raise ValueError(
            f"hydrogen partial pressure comes out ≤ 0: water vapour ({vapour_b.flat[i] / 1e3:.4g}"
            f" kPa) leaves no room for hydrogen at {total_b.flat[i] / 1e3:.4g} kPa — the "
            "temperature is too high for this pressure, or the pressure is not in pascals")
    return pressure


def _thermal_voltage(temperature_K: npt.ArrayLike, electrons: float) -> np.ndarray:
    if electrons <= 0:
        raise ValueError(f"electrons must be positive, got {electrons}")
    return GAS_CONSTANT_J_MOL_K * np.asarray(temperature_K, dtype=float) / (
        float(electrons) * FARADAY_C_MOL)


def gas_pressure_correction(
    temperature_K: npt.ArrayLike,
    electrons: float,
    gas_coefficients: Mapping[str, float],
    gas_pressures_Pa: Mapping[str, npt.ArrayLike],
    standard_pressure_Pa: float = STANDARD_PRESSURE_PA,
) -> np.ndarray:
    r"""Correction of an EMF measured at gas pressures p_g to the standard pressure p°.

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K].
    electrons : float
        n of the cell reaction as written [-].
    gas_coefficients : mapping of str to float
        Gas label (e.g. ``"H2(g)"``) → signed coefficient ν_g in the reaction with n electrons,
        products positive (for the Harned cell, {"H2(g)": −½} with n = 1).
    gas_pressures_Pa : mapping of str to array_like
        Gas label → partial pressure [Pa]; the same labels as ``gas_coefficients``.
    standard_pressure_Pa : float
        p° [Pa]: 100000 (1 bar, IUPAC) or 101325 (1 atm, older tables).

    Returns
    -------
    numpy.ndarray
        ΔE [V], to be added: E(p°) = E_obs + ΔE.

    Notes
    -----
    .. math:: E(p°) = E_\mathrm{obs} + \frac{RT}{nF} \sum_g ν_g \ln\frac{p_g}{p°}

    from E = E° − (RT/nF) Σ ν_i ln a_i with a_g = p_g/p° (ideal gas, fugacity ≈ pressure).
    For the Harned cell, ΔE = (RT/2F) ln(p°/p_H2) (Harned & Owen 1958, ch. 10; Bates 1973).

    Examples
    --------
    Hydrogen at 98.155 kPa (101.325 kPa less water vapour at 25 °C), to 1 atm: +0.408 mV
    (reference-values.md, derived):

    >>> dE = gas_pressure_correction(298.15, 1, {"H2(g)": -0.5}, {"H2(g)": 98155.0}, 101325.0)
    >>> round(float(dE) * 1e3, 3)
    0.408
    """
    missing = sorted(set(gas_coefficients) - set(gas_pressures_Pa))
    extra = sorted(set(gas_pressures_Pa) - set(gas_coefficients))
    if missing or extra:
        raise ValueError(
            f"gas pressures must be given for exactly the gases {sorted(gas_coefficients)}; "
            f"missing {missing}, unknown {extra}"
        )
    total = np.zeros(np.shape(temperature_K))
    for label, coefficient in gas_coefficients.items():
        pressure = np.asarray(gas_pressures_Pa[label], dtype=float)
        if np.any(pressure[np.isfinite(pressure)] <= 0):
            raise ValueError(f"partial pressure of {label} must be positive [Pa]")
        total = total + float(coefficient) * np.log(pressure / standard_pressure_Pa)
    return _thermal_voltage(temperature_K, electrons) * total


def hydrogen_pressure_correction(
    temperature_K: npt.ArrayLike,
    hydrogen_pressure_Pa: npt.ArrayLike,
    standard_pressure_Pa: float = STANDARD_PRESSURE_PA,
) -> np.ndarray:
    r"""Correction of a Harned-type cell (½ H2 consumed per electron) to p° [V].

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K].
    hydrogen_pressure_Pa : array_like
        Partial pressure of hydrogen [Pa], e.g. from :func:`hydrogen_partial_pressure`.
    standard_pressure_Pa : float
        p° [Pa].

    Returns
    -------
    numpy.ndarray
        ΔE [V]; E(p°) = E_obs + ΔE.

    Notes
    -----
    .. math:: ΔE = \frac{RT}{2F} \ln\frac{p°}{p_{H_2}}

    Examples
    --------
    To 1 bar from 98.155 kPa at 25 °C: +0.239 mV (reference-values.md, derived):

    >>> round(float(hydrogen_pressure_correction(298.15, 98155.0)) * 1e3, 3)
    0.239
    """
    return gas_pressure_correction(temperature_K, 1, {"H2(g)": -0.5},
                                   {"H2(g)": hydrogen_pressure_Pa}, standard_pressure_Pa)


def standard_pressure_basis_shift(
    temperature_K: npt.ArrayLike,
    electrons: float,
    gas_coefficients: Mapping[str, float],
    from_pressure_Pa: float,
    to_pressure_Pa: float,
) -> np.ndarray:
    r"""Change of a standard potential when the standard pressure changes [V].

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K].
    electrons : float
        n of the cell reaction as written [-].
    gas_coefficients : mapping of str to float
        Gas label → signed coefficient in the reaction with n electrons (products positive).
    from_pressure_Pa, to_pressure_Pa : float
        The old and the new standard pressure [Pa] (101325 for 1 atm, 100000 for 1 bar).

    Returns
    -------
    numpy.ndarray
        ΔE° [V]: E°(to) = E°(from) + ΔE°.

    Notes
    -----
    .. math:: E°(p_2) = E°(p_1) + \frac{RT}{nF} \sum_g ν_g \ln\frac{p_1}{p_2}

    Only the gases' standard states depend on p° here; the shift of the solutes' standard
    states is negligible (IUPAC Green Book, 3rd ed., 2007, §2.11, note on p°). For the Harned
    cell from 1 atm to 1 bar: −(RT/2F) ln 1.01325 = −0.169 mV at 25 °C
    (reference-values.md, derived).

    Examples
    --------
    >>> shift = standard_pressure_basis_shift(298.15, 1, {"H2(g)": -0.5}, 101325.0, 100000.0)
    >>> round(float(shift) * 1e3, 3)
    -0.169
    """
    if from_pressure_Pa <= 0 or to_pressure_Pa <= 0:
        raise ValueError("standard pressures must be positive [Pa]")
    total = sum(float(c) for c in gas_coefficients.values()) * np.log(
        from_pressure_Pa / to_pressure_Pa)
    return _thermal_voltage(temperature_K, electrons) * total
