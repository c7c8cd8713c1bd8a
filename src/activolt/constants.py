"""Physical constants used throughout activolt (CODATA 2018, exact SI values where defined).

The values are written out here rather than taken from ``scipy.constants`` at run time, so that a
result never shifts with a library's version; a test checks them against ``scipy.constants``.
"""

from typing import Final

CODATA_YEAR: Final = 2018

#: Avogadro constant N_A [mol⁻¹] (exact).
AVOGADRO_PER_MOL: Final = 6.02214076e23

#: Elementary charge e [C] (exact).
ELEMENTARY_CHARGE_C: Final = 1.602176634e-19

#: Boltzmann constant k_B [J K⁻¹] (exact).
BOLTZMANN_J_K: Final = 1.380649e-23

#: Molar gas constant R = N_A k_B = 8.314 462 618… J mol⁻¹ K⁻¹ (exact since the 2019 SI).
GAS_CONSTANT_J_MOL_K: Final = AVOGADRO_PER_MOL * BOLTZMANN_J_K

#: Faraday constant F = N_A e = 96 485.332 12… C mol⁻¹ (exact since the 2019 SI).
FARADAY_C_MOL: Final = AVOGADRO_PER_MOL * ELEMENTARY_CHARGE_C

#: Vacuum electric permittivity ε₀ [F m⁻¹] (CODATA 2018).
VACUUM_PERMITTIVITY_F_M: Final = 8.8541878128e-12

#: 0 °C on the kelvin scale [K].
ZERO_CELSIUS_K: Final = 273.15

#: IUPAC standard pressure p° [Pa].
STANDARD_PRESSURE_PA: Final = 100_000.0

#: One standard atmosphere [Pa], the pressure basis of older tables.
ATMOSPHERE_PA: Final = 101_325.0

#: Absolute volts per international volt [V/V_int]: the US international volt as maintained by
#: the National Bureau of Standards until 1948, 1 V_int = 1.000330 V (NBS Circular 459, 1947,
#: "Announcement of changes in electrical and photometric units"; from memory). The mean
#: international volt of the other national laboratories was 1.00034 V (same source; from
#: memory). EMF data measured before 1948 (Harned & Ehlers 1933) are in international volts.
INTERNATIONAL_VOLT_V: Final = 1.000330
