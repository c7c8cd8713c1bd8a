r"""The measurement problem of one series: its readings prepared for the fit, the cell equation
and its Jacobian.

:func:`prepare_series` turns a validated run into :class:`SeriesData` — molality, the readings
corrected to p° where the cell holds a gas, weights, the Nernst factor and the Debye–Hückel
constants of every usable reading. :func:`predict_emf` is the cell equation

.. math:: E = E° − σ s k [\ln m_± + \ln γ_±(m; θ)]

evaluated through the engine's :class:`~activolt.fit.engine.MeasurementModel` (the one place it
is written), and :func:`emf_jacobian` its derivatives; the dilution reduction and the Monte Carlo
both work on this problem.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt
import pandas as pd

from ..activity import ActivityModel, Parameter
from ..chemistry.electrolytes import Electrolyte, nernst_factor
from ..data.runs import Run, RunMetadata
from ..errors import InputError
from ..physics.corrections import gas_pressure_correction, hydrogen_partial_pressure
from ..physics.water import DebyeHueckelConstants, debye_hueckel_constants
from .engine import E0, SLOPE, MeasurementModel

__all__ = ["E0", "SLOPE", "SLOPE_PARAMETER", "SeriesData", "SeriesInputs", "emf_jacobian",
           "gas_correction", "gas_correction_arrays", "parameter_spec", "predict_emf",
           "prepare_inputs", "prepare_series", "series_inputs"]

#: The slope factor s of the cell response, E = E° − s k ln(m± γ±), fitted on request (pairs of
#: ion-selective electrodes are often slightly sub-Nernstian); s = 1 is the Nernstian response.
SLOPE_PARAMETER = Parameter(
    name=SLOPE, symbol="s", unit="", description="slope factor of the cell response",
    linear=False, conventional=lambda electrolyte, constants: 1.0,
    convention="Nernstian response s = 1", minimum=0.5, maximum=1.2,
)
@dataclass(frozen=True)
class SeriesData:
    """The usable readings of one series, prepared for the fit (SI units, one entry per reading).

    ``emf_V`` holds the readings corrected to p° (``correction_V``, None without a gas
    correction); ``weights`` are 1/u² (stated, or the effective variance with u(m)) or 1 (unit
    weights); ``sign`` is σ and ``slope`` the slope factor s when it is not fitted.
    """

    molality: np.ndarray
    emf_V: np.ndarray
    weights: np.ndarray
    nernst_V: np.ndarray
    ln_mean_molality: np.ndarray
    constants: DebyeHueckelConstants
    stated_uncertainty: bool
    sign: int = 1
    slope: float = 1.0
    correction_V: np.ndarray | None = None
    gas_pressure_Pa: np.ndarray | None = None
    u_emf_V: np.ndarray | None = None
    u_molality_mol_kg: np.ndarray | None = None



    def measurement_model(self, activity: ActivityModel, electrolyte: Electrolyte
                          ) -> MeasurementModel:
        """The engine's measurement model of this series (a batch of one)."""
        return MeasurementModel(activity, electrolyte, self.sign, np.atleast_2d(self.molality),
                                np.atleast_2d(self.nernst_V), DebyeHueckelConstants(
                                    np.atleast_2d(self.constants.temperature),
                                    np.atleast_2d(self.constants.aphi),
                                    np.atleast_2d(self.constants.b)))

    def values_array(self, activity: ActivityModel, e0: float,
                     values: Mapping[str, float]) -> np.ndarray:
        """E°, the model's parameters and s as the engine's (1, P) array."""
        return np.array([self.values_row(activity, e0, values)])

    def values_row(self, activity: ActivityModel, e0: float,
                   values: Mapping[str, float]) -> tuple[float, ...]:
        """E°, the model's parameters and s in the engine's order (a row of its array)."""
        return (e0, *[values[n] for n in activity.parameter_names],
                values.get(SLOPE, self.slope))


def gas_correction(run: Run, points: pd.DataFrame, water_activity: npt.ArrayLike = 1.0
                   ) -> tuple[np.ndarray | None, np.ndarray | None]:
    """(ΔE to p° [V], partial pressure of the cell's gas [Pa]) per usable row, or (None, None)
    when the cell holds no gas or no barometric pressure is given."""
    return gas_correction_arrays(
        run, points["temperature_K"].to_numpy(float), points["pressure_Pa"].to_numpy(float),
        points["line"].to_numpy(), water_activity)


def gas_correction_arrays(run: Run, temperature_K: np.ndarray, pressure_Pa: np.ndarray,
                          line: np.ndarray, water_activity: npt.ArrayLike = 1.0,
                          metadata: RunMetadata | None = None
                          ) -> tuple[np.ndarray | None, np.ndarray | None]:
    """:func:`gas_correction` on arrays of the rows (``metadata`` in place of the run's)."""
    meta = run.metadata if metadata is None else metadata
    if not meta.gas_coefficients:
        return None, None
    pressure = np.asarray(pressure_Pa, dtype=float)
    if meta.barometric_pressure_Pa is not None:
        pressure = np.where(np.isnan(pressure), meta.barometric_pressure_Pa, pressure)
    if np.isnan(pressure).all():
        return None, None
    if np.isnan(pressure).any():
        raise InputError("no barometric pressure for this row while others have one; fill the "
                         "column or give pressure_kPa in the metadata", file=str(run.path),
                         line=int(line[np.isnan(pressure)][0]), column="pressure_kPa")

    partial = hydrogen_partial_pressure(temperature_K, pressure, water_activity=water_activity,
                                        bubbler_depth_m=meta.bubbler_depth_m)
    correction = gas_pressure_correction(
        temperature_K, meta.electrons, meta.gas_coefficients,
        {gas: partial for gas in meta.gas_coefficients}, meta.standard_pressure_Pa)
    return correction, partial


@dataclass(frozen=True)
class SeriesInputs:
    """The usable rows of a run as arrays (SI units), before they are prepared for the fit;
    a shifted copy (``dataclasses.replace``) gives the sensitivity to an input common to every
    reading without re-reading the table."""

    line: np.ndarray
    molality: np.ndarray
    temperature_K: np.ndarray
    emf_V: np.ndarray
    u_emf_V: np.ndarray | None
    u_molality_mol_kg: np.ndarray
    pressure_Pa: np.ndarray


def series_inputs(run: Run) -> SeriesInputs:
    """The usable rows of ``run`` as :class:`SeriesInputs`."""
    arrays, usable = run.arrays, run.usable

    def column(name: str) -> np.ndarray:
        return arrays[name][usable]

    return SeriesInputs(
        line=column("line").astype(int), molality=column("molality_mol_kg"),
        temperature_K=column("temperature_K"), emf_V=column("emf_V"),
        u_emf_V=column("u_emf_V") if run.emf_uncertainty_given else None,
        u_molality_mol_kg=column("u_molality_mol_kg"), pressure_Pa=column("pressure_Pa"))


def prepare_inputs(run: Run, inputs: SeriesInputs, metadata: RunMetadata | None = None
                   ) -> SeriesData:
    """The readings ``inputs`` of ``run`` prepared for the fit (gas correction to p° applied);
    ``metadata`` in place of the run's (a shifted barometric pressure, say)."""
    meta = run.metadata if metadata is None else metadata
    temperature = inputs.temperature_K
    stated = inputs.u_emf_V is not None
    u = inputs.u_emf_V if stated else np.ones(inputs.molality.size)
    correction, partial = gas_correction_arrays(run, temperature, inputs.pressure_Pa,
                                                inputs.line, metadata=meta)
    emf = inputs.emf_V
    return SeriesData(
        molality=inputs.molality,
        emf_V=emf if correction is None else emf + correction,
        weights=1.0 / u**2,
        nernst_V=nernst_factor(meta.electrolyte, meta.electrons, temperature),
        ln_mean_molality=np.log(meta.electrolyte.mean_molality(inputs.molality)),
        constants=debye_hueckel_constants(temperature),
        stated_uncertainty=stated,
        sign=meta.electrolyte_sign,
        slope=meta.slope_factor,
        correction_V=correction,
        gas_pressure_Pa=partial,
        u_emf_V=u if stated else None,
        u_molality_mol_kg=inputs.u_molality_mol_kg,
    )


def prepare_series(run: Run) -> SeriesData:
    """The usable readings of a run, prepared for the fit (gas correction to p° applied)."""
    return prepare_inputs(run, series_inputs(run))


def parameter_spec(model: ActivityModel, name: str) -> Parameter:
    """The description of a model parameter or of the slope factor."""
    return SLOPE_PARAMETER if name == SLOPE else model.parameter(name)


def predict_emf(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData, e0: float,
                values: Mapping[str, float]) -> np.ndarray:
    """E = E° − σ s k [ln m± + ln γ±(m; θ)] at the readings of ``data`` [V] (σ = +1 when the cell
    forms the electrolyte, −1 when it consumes it), through the engine's measurement model."""
    measurement = data.measurement_model(model, electrolyte)
    return measurement.predict(data.values_array(model, e0, values))[0]


def emf_jacobian(model: ActivityModel, electrolyte: Electrolyte, data: SeriesData, e0: float,
                 values: Mapping[str, float], free: list[str]) -> np.ndarray:
    """∂E/∂(E°, free parameters) at the given values [V per unit], shape (N, 1 + len(free)),
    from the engine's measurement model (central differences for non-linear parameters)."""
    measurement = data.measurement_model(model, electrolyte)
    names = measurement.names
    mask = np.array([[name == E0 or name in free for name in names]])
    full = measurement.jacobian(data.values_array(model, e0, values), mask)[0]
    return full[:, [names.index(name) for name in (E0, *free)]]
