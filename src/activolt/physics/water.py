"""Water as the solvent: density, relative permittivity, and the Debye–Hückel constants at T.

Density comes from the IAPWS-95 formulation and the relative permittivity from the IAPWS 1997
release (Fernández et al. 1997), both through the ``iapws`` package, at 0.101325 MPa (or just
above the saturation pressure near 100 °C so that the water stays liquid). From them follow the
Debye–Hückel osmotic slope A_φ, the activity slope A_γ = 3 A_φ (natural-log form), its
decimal-log form A = A_γ / ln 10, and the Hückel constant B.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import numpy.typing as npt

from ..constants import (
    AVOGADRO_PER_MOL,
    BOLTZMANN_J_K,
    ELEMENTARY_CHARGE_C,
    VACUUM_PERMITTIVITY_F_M,
    ZERO_CELSIUS_K,
)

#: The temperature range of liquid water at about 1 atm in which the constants are computed [K].
LIQUID_WATER_RANGE_K: tuple[float, float] = (ZERO_CELSIUS_K, ZERO_CELSIUS_K + 100.0)

_ONE_ATMOSPHERE_MPA = 0.101325


@lru_cache(maxsize=512)
def _water_state(temperature_K: float) -> tuple[float, float]:
    """(density [kg m⁻³], relative permittivity [-]) of liquid water at T and about 1 atm."""
    from iapws import IAPWS95
    from iapws._iapws import _Dielectric
    from iapws.iapws97 import _PSat_T

    low, high = LIQUID_WATER_RANGE_K
    if not low - 1e-9 <= temperature_K <= high + 1e-9:
        raise ValueError(
            f"temperature {temperature_K:.2f} K is outside liquid water (0–100 °C); "
            "the Debye–Hückel constants are computed only there"
        )
    pressure_MPa = max(_ONE_ATMOSPHERE_MPA, 1.001 * _PSat_T(temperature_K))
    state = IAPWS95(T=temperature_K, P=pressure_MPa)
    density = float(state.rho)
    return density, float(_Dielectric(density, temperature_K))


def _per_temperature(function, temperature: npt.ArrayLike) -> np.ndarray:
    values = np.asarray(temperature, dtype=float)
    if values.size and bool((values == values.flat[0]).all()):  # one temperature (a run's)
        return np.full(values.shape, float(function(float(values.flat[0]))))
    distinct, where = np.unique(values.ravel(), return_inverse=True)
    once = np.asarray([function(float(t)) for t in distinct], dtype=float)
    return once[where].reshape(values.shape)


def water_density(temperature: npt.ArrayLike) -> np.ndarray:
    """Density of liquid water at about 1 atm, IAPWS-95.

    Parameters
    ----------
    temperature : array_like
        Temperature [K], 273.15–373.15.

    Returns
    -------
    numpy.ndarray
        Density ρ_w [kg m⁻³].

    Examples
    --------
    >>> round(float(water_density(298.15)), 3)  # IAPWS-95 (Wagner & Pruß 2002)
    997.048
    """
    return _per_temperature(lambda t: _water_state(t)[0], temperature)


def water_permittivity(temperature: npt.ArrayLike) -> np.ndarray:
    """Relative permittivity of liquid water at about 1 atm, IAPWS 1997 (Fernández et al. 1997).

    Parameters
    ----------
    temperature : array_like
        Temperature [K], 273.15–373.15.

    Returns
    -------
    numpy.ndarray
        ε_r [-].

    Examples
    --------
    >>> round(float(water_permittivity(298.15)), 2)  # Fernández et al. (1997)
    78.41
    """
    return _per_temperature(lambda t: _water_state(t)[1], temperature)


def _aphi_from_state(temperature_K: float, density: float, permittivity: float) -> float:
    bjerrum_length_m = ELEMENTARY_CHARGE_C**2 / (
        4.0 * math.pi * VACUUM_PERMITTIVITY_F_M * permittivity * BOLTZMANN_J_K * temperature_K
    )
    return math.sqrt(2.0 * math.pi * AVOGADRO_PER_MOL * density) * bjerrum_length_m**1.5 / 3.0


def _b_from_state(temperature_K: float, density: float, permittivity: float) -> float:
    inverse_length_m = math.sqrt(
        2.0 * ELEMENTARY_CHARGE_C**2 * AVOGADRO_PER_MOL * density
        / (VACUUM_PERMITTIVITY_F_M * permittivity * BOLTZMANN_J_K * temperature_K)
    )
    return inverse_length_m * 1e-10


def debye_hueckel_aphi(temperature: npt.ArrayLike) -> np.ndarray:
    r"""Debye–Hückel osmotic-coefficient slope A_φ of water.

    Parameters
    ----------
    temperature : array_like
        Temperature [K], 273.15–373.15.

    Returns
    -------
    numpy.ndarray
        A_φ [kg^½ mol^-½].

    Notes
    -----
    .. math:: A_φ = \frac{1}{3} \sqrt{2π N_A ρ_w}
              \left(\frac{e^2}{4π ε_0 ε_r k_B T}\right)^{3/2}

    Eq. 2 in [1]_, with ρ_w from IAPWS-95 and ε_r from the IAPWS 1997 release.

    References
    ----------
    .. [1] Pitzer, K. S. (1973). Thermodynamics of electrolytes. I. J. Phys. Chem. 77, 268–277.
       https://doi.org/10.1021/j100621a026

    Examples
    --------
    Water at 25 °C (Pitzer, Peiper & Busey 1984 tabulate 0.3915 with an older permittivity):

    >>> round(float(debye_hueckel_aphi(298.15)), 4)
    0.3913
    """

    def one(t: float) -> float:
        density, permittivity = _water_state(t)
        return _aphi_from_state(t, density, permittivity)

    return _per_temperature(one, temperature)


def debye_hueckel_b(temperature: npt.ArrayLike) -> np.ndarray:
    r"""Hückel constant B, the inverse Debye length per √(ionic strength).

    Parameters
    ----------
    temperature : array_like
        Temperature [K], 273.15–373.15.

    Returns
    -------
    numpy.ndarray
        B [Å⁻¹ kg^½ mol^-½].

    Notes
    -----
    .. math:: B = \sqrt{\frac{2 e^2 N_A ρ_w}{ε_0 ε_r k_B T}}

    so that κ = B √I with I in mol kg⁻¹ (Robinson & Stokes 1959, ch. 4).

    Examples
    --------
    >>> round(float(debye_hueckel_b(298.15)), 4)  # 0.3286 commonly quoted at 25 °C
    0.3284
    """

    def one(t: float) -> float:
        density, permittivity = _water_state(t)
        return _b_from_state(t, density, permittivity)

    return _per_temperature(one, temperature)


@dataclass(frozen=True)
class DebyeHueckelConstants:
    """The Debye–Hückel constants of water at each point of a run.

    Attributes
    ----------
    temperature : numpy.ndarray
        Temperature [K].
    aphi : numpy.ndarray
        Osmotic slope A_φ [kg^½ mol^-½].
    b : numpy.ndarray
        Hückel B [Å⁻¹ kg^½ mol^-½].
    """

    temperature: np.ndarray
    aphi: np.ndarray
    b: np.ndarray

    @property
    def agamma(self) -> np.ndarray:
        """Activity slope in natural-log form, A_γ = 3 A_φ [kg^½ mol^-½]."""
        return 3.0 * self.aphi

    @property
    def agamma_log10(self) -> np.ndarray:
        """Activity slope in decimal-log form, A = 3 A_φ / ln 10 [kg^½ mol^-½]."""
        return 3.0 * self.aphi / math.log(10.0)


def debye_hueckel_constants(temperature: npt.ArrayLike) -> DebyeHueckelConstants:
    """A_φ and B at each temperature [K], computed once per distinct temperature.

    Examples
    --------
    >>> c = debye_hueckel_constants([298.15, 298.15])
    >>> [round(float(x), 4) for x in c.agamma_log10]
    [0.5098, 0.5098]
    """
    t = np.atleast_1d(np.asarray(temperature, dtype=float))
    if t.ndim == 1 and t.size and bool((t == t[0]).all()):  # one temperature (a run's)
        return _constants_at(float(t[0]), t.size)
    return DebyeHueckelConstants(
        temperature=t, aphi=debye_hueckel_aphi(t), b=debye_hueckel_b(t)
    )


@lru_cache(maxsize=256)
def _constants_at(temperature_K: float, points: int) -> DebyeHueckelConstants:
    """The constants at ``points`` points of one temperature, kept once worked out (read
    only): the series of a batch are mostly measured at one temperature and length."""
    t = np.full(points, temperature_K)
    constants = DebyeHueckelConstants(temperature=t, aphi=debye_hueckel_aphi(t),
                                      b=debye_hueckel_b(t))
    for array in (constants.temperature, constants.aphi, constants.b):
        array.flags.writeable = False
    return constants
