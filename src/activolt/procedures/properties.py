r"""φ, a_w and G^E/RT with their uncertainties from a reduction's fitted model.

The formulas are those of :mod:`activolt.activity.properties`; here they are evaluated at each
usable molality of a :class:`~activolt.procedures.dilution.Reduction`, and the covariance of the
free model parameters (and of parameters held at a convention with a stated uncertainty) is
propagated to each quantity by numerical gradients (GUM, JCGM 100:2008, 5.2).

:func:`derive_results_of_many` works out those of many reductions together (a batch's), a
model evaluation and a contraction for each group of alike reductions, giving each reduction,
bit for bit, what :func:`derive_results` gives it alone.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from ..activity.base import ActivityModel
from ..activity.properties import MOLAR_MASS_WATER_KG_MOL, excess_gibbs_energy_rt, water_activity
from ..chemistry.electrolytes import Electrolyte
from ..constants import GAS_CONSTANT_J_MOL_K
from ..physics.water import DebyeHueckelConstants, debye_hueckel_constants
from .dilution import Reduction
from .published import published_columns_of_many, table_of

__all__ = ["DerivedResults", "derive_results", "derive_results_of_many", "derived_properties",
           "model_sensitivities"]

#: The columns of :func:`derived_properties`, in order.
_PROPERTY_COLUMNS = pd.Index([
    "line", "molality_mol_kg", "temperature_K", "ln_gamma_pm_model", "u_ln_gamma_pm_model",
    "osmotic_coefficient", "u_osmotic_coefficient", "water_activity", "u_water_activity",
    "excess_gibbs_rt_mol_kg", "u_excess_gibbs_rt_mol_kg", "excess_gibbs_J_kg",
    "u_excess_gibbs_J_kg"])
#: Their names as plain text (iterating the Index reads its text storage one by one).
_PROPERTY_NAMES: tuple[str, ...] = tuple(_PROPERTY_COLUMNS.tolist())


#: Most readings of a series whose Debye–Hückel constants are kept for the next series.
_KEPT_READINGS = 1000


@functools.lru_cache(maxsize=64)
def _constants_at(temperature: bytes) -> DebyeHueckelConstants:
    """The Debye–Hückel constants at the temperatures packed in ``temperature`` (float64
    bytes), read only: worked out once for the runs of a batch, which share their temperatures."""
    constants = debye_hueckel_constants(np.frombuffer(temperature, dtype=float))
    for array in (constants.temperature, constants.aphi, constants.b):
        array.flags.writeable = False
    return constants


def model_sensitivities(model: ActivityModel, electrolyte: Electrolyte, molality: np.ndarray,
                        constants: DebyeHueckelConstants, values: Mapping[str, float],
                        free: tuple[str, ...]
                        ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    r"""φ and ln γ± of a model and their derivatives by the parameters ``free``.

    The derivatives are the central differences of
    :func:`activolt.fit.uncertainty.sensitivity_coefficients` (steps
    h_k = 10⁻⁶ max(1, |θ_k|)), the same numbers; the model is evaluated once for each of φ and
    ln γ±, on the readings repeated for the point and each shifted parameter (every model is
    elementwise in the readings and the parameters, as the fit engine also uses).

    Parameters
    ----------
    model : ActivityModel
        The activity-coefficient model.
    electrolyte : Electrolyte
        The electrolyte.
    molality : numpy.ndarray
        Molalities, shape (N,) [mol kg⁻¹].
    constants : DebyeHueckelConstants
        Debye–Hückel constants at each molality, arrays of shape (N,).
    values : mapping of str to float
        Every parameter of the model [parameter units].
    free : tuple of str
        The parameters to differentiate by, each in ``values``.

    Returns
    -------
    tuple of numpy.ndarray
        ``(phi, ln_gamma, d_phi, d_ln_gamma)``: φ and ln γ± [-], shape (N,), at ``values``;
        ∂φ/∂θ and ∂ln γ±/∂θ, shape (N, len(free)) [per parameter unit].

    Examples
    --------
    >>> from activolt.activity import get_model
    >>> from activolt.chemistry.electrolytes import parse_electrolyte
    >>> from activolt.fit.uncertainty import sensitivity_coefficients
    >>> hueckel, hcl = get_model("hueckel"), parse_electrolyte("HCl")
    >>> m = np.array([0.01, 0.1, 1.0])
    >>> c = debye_hueckel_constants(np.full(3, 298.15))
    >>> v = {"a_angstrom": 4.3, "b_kg_mol": 0.27}
    >>> phi, ln_g, d_phi, d_ln = model_sensitivities(hueckel, hcl, m, c, v, ("a_angstrom",))
    >>> one_by_one = sensitivity_coefficients(
    ...     lambda p: hueckel.ln_gamma(hcl, m, c, p), v, ["a_angstrom"])
    >>> d_ln.shape, bool((d_ln == one_by_one).all())
    ((3, 1), True)
    """
    rows = 1 + 2 * len(free)
    if molality.size <= _KEPT_READINGS:
        tiled_m, tiled_c = _tiled_at(*(_packed(array) for array in (
            molality, constants.temperature, constants.aphi, constants.b)), rows)
    else:
        tiled_m, tiled_c = _tiled(molality, constants, rows)
    return _sensitivities(model, electrolyte, tiled_m, tiled_c, values, free)


def _packed(array: np.ndarray) -> tuple[str, tuple[int, ...], bytes]:
    """``array`` as a key that gives it back exactly: its type, shape and bytes."""
    return array.dtype.str, array.shape, array.tobytes()


def _unpacked(packed: tuple[str, tuple[int, ...], bytes]) -> np.ndarray:
    """The array of :func:`_packed`, read only."""
    dtype, shape, data = packed
    return np.frombuffer(data, dtype=dtype).reshape(shape)


def _tiled(molality: np.ndarray, constants: DebyeHueckelConstants, rows: int
           ) -> tuple[np.ndarray, DebyeHueckelConstants]:
    """The readings and their constants repeated on ``rows`` rows, each row contiguous."""
    shape = (rows, molality.size)

    def tiled(array: np.ndarray) -> np.ndarray:
        return np.broadcast_to(array, shape).copy()

    return tiled(molality), DebyeHueckelConstants(tiled(constants.temperature),
                                                  tiled(constants.aphi), tiled(constants.b))


@functools.lru_cache(maxsize=64)
def _tiled_at(molality: tuple[str, tuple[int, ...], bytes],
              temperature: tuple[str, tuple[int, ...], bytes],
              aphi: tuple[str, tuple[int, ...], bytes], b: tuple[str, tuple[int, ...], bytes],
              rows: int) -> tuple[np.ndarray, DebyeHueckelConstants]:
    """:func:`_tiled` of the packed arrays (:func:`_packed`), read only: worked out once for
    the runs of a batch, which share their molalities and temperatures."""
    tiled_m, tiled_c = _tiled(_unpacked(molality), DebyeHueckelConstants(
        _unpacked(temperature), _unpacked(aphi), _unpacked(b)), rows)
    for array in (tiled_m, tiled_c.temperature, tiled_c.aphi, tiled_c.b):
        array.flags.writeable = False
    return tiled_m, tiled_c


def _sensitivities(model: ActivityModel, electrolyte: Electrolyte, tiled_m: np.ndarray,
                   tiled_c: DebyeHueckelConstants, values: Mapping[str, float],
                   free: tuple[str, ...]
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """:func:`model_sensitivities` of the readings tiled by :func:`_tiled`."""
    steps = [1e-6 * max(1.0, abs(values[name])) for name in free]
    shape = tiled_m.shape
    rows = shape[0]
    columns = {name: np.full((rows, 1), values[name], dtype=float) for name in values}
    for k, (name, step) in enumerate(zip(free, steps, strict=True)):
        columns[name][1 + 2 * k, 0] = values[name] + step
        columns[name][2 + 2 * k, 0] = values[name] - step
    out_phi = _full(model.osmotic_coefficient(electrolyte, tiled_m, tiled_c, columns), shape)
    out_ln = _full(model.ln_gamma(electrolyte, tiled_m, tiled_c, columns), shape)
    if not free:
        empty = np.zeros((shape[1], 0))
        return out_phi[0].copy(), out_ln[0].copy(), empty, empty.copy()
    twice = 2.0 * np.array(steps)[:, None]
    d_phi = np.ascontiguousarray(((out_phi[1::2] - out_phi[2::2]) / twice).T)
    d_ln = np.ascontiguousarray(((out_ln[1::2] - out_ln[2::2]) / twice).T)
    return out_phi[0].copy(), out_ln[0].copy(), d_phi, d_ln


def _full(values: Any, shape: tuple[int, int]) -> np.ndarray:
    """A model's values as floats of ``shape`` (broadcast when the model gave fewer)."""
    values = np.asarray(values, dtype=float)
    return values if values.shape == shape else np.broadcast_to(values, shape)


def derived_properties(reduction: Reduction) -> pd.DataFrame:
    r"""φ, a_w and G^E/RT with standard uncertainties at each usable molality of a reduction.

    Parameters
    ----------
    reduction : Reduction
        From :func:`activolt.procedures.dilution.reduce_run`.

    Returns
    -------
    pandas.DataFrame
        One row per usable reading, in the run's order: ``line``, ``molality_mol_kg``,
        ``temperature_K``, ``ln_gamma_pm_model`` and ``u_ln_gamma_pm_model`` [-],
        ``osmotic_coefficient`` and ``u_osmotic_coefficient`` [-], ``water_activity`` and
        ``u_water_activity`` [-], ``excess_gibbs_rt_mol_kg`` and ``u_excess_gibbs_rt_mol_kg``
        (G^E/RT per kilogram of water) [mol kg⁻¹], ``excess_gibbs_J_kg`` and
        ``u_excess_gibbs_J_kg`` (G^E per kilogram of water) [J kg⁻¹]. Uncertainties are
        standard uncertainties (k = 1). ``DataFrame.attrs["notes"]`` says what they include.

    Notes
    -----
    With the fitted parameter values θ (fitted and held) of the model at each row's temperature,

    .. math:: a_w = \exp(−ν m M_w φ), \qquad G^E/(RT) = ν m (1 − φ + \ln γ_±)

    (Robinson & Stokes 1959, ch. 2; Pitzer 1991, ch. 3). For each quantity y, u²(y) = gᵀ V g
    with g = ∂y/∂θ (central differences) over the free parameters and those held at a
    conventional value with a stated uncertainty, and V their joint covariance,
    ``reduction.uncertain_covariance`` (GUM 5.2): a held parameter's Type B uncertainty enters
    both directly and through the free parameters that compensate for it. E° does not enter.

    Examples
    --------
    Readings computed for HCl from the γ± of Robinson & Stokes (1959, Appendix 8.10; from
    memory: 0.929, 0.904, 0.830, 0.796) with E° = 0.22234 V (Bates & Bower 1954), reduced with
    the Hückel equation; the same source gives φ = 0.943 at 0.1 mol/kg (from memory):

    >>> import tempfile, pathlib
    >>> from activolt.data.runs import read_run
    >>> from activolt.procedures.dilution import reduce_run
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "r.csv").write_text(
    ...     "molality_mol_kg,emf_V\n0.005,0.49838\n0.01,0.46416\n0.05,0.38585\n0.1,0.35238\n")
    >>> _ = (folder / "r.toml").write_text('electrolyte = "HCl"\nelectrons = 1\n'
    ...                                    'temperature_C = 25.0\n')
    >>> props = derived_properties(reduce_run(read_run(folder / "r.csv"), "hueckel"))
    >>> round(float(props["osmotic_coefficient"].iloc[-1]), 2)
    0.94
    """
    return derive_results(reduction).properties


class _Inputs(NamedTuple):
    """What :func:`_property_columns_of_many` reads from one reduction."""

    lines: np.ndarray
    molality: np.ndarray
    temperature: np.ndarray
    values: tuple[float, ...]
    matrix: np.ndarray
    notes: tuple[str, ...]


@functools.lru_cache(maxsize=64)
def _notes(title: str, free: tuple[str, ...], held: tuple[str, ...]) -> tuple[str, ...]:
    """The notes on the derived properties of a model ``title`` with the parameters ``free``
    free and ``held`` (symbols) held."""
    notes = [f"from the {title} with the fitted parameters; uncertainties (k = 1) from the "
             "covariance of the free parameters"
             + (f" ({', '.join(free)})" if free else " (none free: uncertainties 0)")]
    if held:
        notes.append("held parameter(s) " + ", ".join(held) + " enter at their held values; "
                     "their own uncertainty is not propagated here")
    return tuple(notes)


def _inputs_of(reduction: Reduction) -> tuple[tuple[Any, ...], _Inputs]:
    """The group of a reduction (the reductions evaluated together: same model, electrolyte,
    parameters, uncertain parameters and number of usable readings; the model by identity,
    which the reductions being grouped keep alive) and its own inputs."""
    run = reduction.run
    usable = run.usable  # the rows of usable_points(run), read from the run's arrays
    lines = np.asarray(run.column("line"))[usable]
    molality = run.arrays["molality_mol_kg"][usable]
    temperature = run.arrays["temperature_K"][usable]
    model = reduction.model
    value_names = model.parameter_names
    parameter_values = reduction.parameter_values  # model_parameter_values, without the dict
    names = reduction.uncertain_names or reduction.free_names
    matrix = (reduction.covariance if reduction.uncertain_covariance is None
              else reduction.uncertain_covariance)
    free = tuple(name for name in names if name in value_names)
    held = tuple(p.symbol for p in reduction.parameters if p.fixed)
    key = (id(model), reduction.electrolyte, value_names, names, molality.size)
    return key, _Inputs(lines=lines, molality=molality, temperature=temperature,
                        values=tuple(parameter_values[name] for name in value_names),
                        matrix=matrix, notes=_notes(model.title, free, held))


def _property_columns_of_many(reductions: Sequence[Reduction]
                              ) -> list[tuple[dict[str, np.ndarray], tuple[str, ...]]]:
    """The columns of :func:`derived_properties` of each reduction by name, in order (read
    only), and the notes on them, without building the tables; in the order of
    ``reductions``."""
    groups: dict[tuple[Any, ...], tuple[Reduction, list[int], list[_Inputs]]] = {}
    for position, reduction in enumerate(reductions):
        key, inputs = _inputs_of(reduction)
        group = groups.get(key)
        if group is None:
            groups[key] = (reduction, [position], [inputs])
        else:
            group[1].append(position)
            group[2].append(inputs)
    found: list[Any] = [None] * len(reductions)
    for (_, electrolyte, value_names, names, _), (first, positions, inputs) in groups.items():
        for position, columns in zip(positions, _group_columns(
                first.model, electrolyte, value_names, names, inputs), strict=True):
            found[position] = columns
    return found


def _group_readings(inputs: Sequence[_Inputs], rows: int
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray, DebyeHueckelConstants]:
    """The molalities and temperatures of the runs of a group, (G, N) each, and the readings
    with their Debye–Hückel constants tiled as :func:`model_sensitivities` tiles one run's,
    the ``rows`` rows of each run after those of the run before: (G × rows, N). When the runs
    share their readings (the usual batch), the tiled arrays are those of :func:`_tiled_at`
    (kept, read only) while the group holds at most ``_KEPT_READINGS`` readings in all (the
    kept arrays stay small), else tiled anew."""
    molality = _stacked([item.molality for item in inputs])
    temperature = _stacked([item.temperature for item in inputs])
    count, size = molality.shape
    if size <= _KEPT_READINGS and (count == 1 or _all_alike(inputs)):
        constants = _constants_at(np.ascontiguousarray(temperature[0], dtype=float).tobytes())
        if count * size > _KEPT_READINGS:
            tiled_m, tiled_c = _tiled(molality[0], constants, count * rows)
        else:
            tiled_m, tiled_c = _tiled_at(*(_packed(array) for array in (
                molality[0], constants.temperature, constants.aphi, constants.b)), count * rows)
        return molality, temperature, tiled_m, tiled_c
    each = [_constants_at(np.ascontiguousarray(row, dtype=float).tobytes())
            if size <= _KEPT_READINGS else debye_hueckel_constants(row) for row in temperature]
    shape = (count, rows, size)

    def tiled(arrays: Sequence[np.ndarray]) -> np.ndarray:
        return np.broadcast_to(np.array(arrays)[:, None], shape).reshape(count * rows, size)

    return molality, temperature, tiled(molality), DebyeHueckelConstants(
        *(tiled([getattr(c, name) for c in each]) for name in ("temperature", "aphi", "b")))


def _stacked(arrays: Sequence[np.ndarray]) -> np.ndarray:
    """The equal-length ``arrays`` as the rows of one array; one array seen as a row."""
    return arrays[0][None] if len(arrays) == 1 else np.array(arrays)


def _all_alike(inputs: Sequence[_Inputs]) -> bool:
    """Whether the runs of a group share their molalities and temperatures, bit for bit."""
    first_m, first_t = inputs[0].molality.tobytes(), inputs[0].temperature.tobytes()
    return all(item.molality.tobytes() == first_m and item.temperature.tobytes() == first_t
               for item in inputs[1:])


def _group_columns(model: ActivityModel, electrolyte: Electrolyte, value_names: tuple[str, ...],
                   names: tuple[str, ...], inputs: Sequence[_Inputs]
                   ) -> list[tuple[dict[str, np.ndarray], tuple[str, ...]]]:
    """The columns and notes of :func:`derived_properties` for the reductions of one group
    (:func:`_inputs_of`), worked out together: one evaluation of each of φ and ln γ± on the
    readings of every run, each repeated for the point and each shifted parameter, with each
    run's parameter values on its rows (as :func:`_sensitivities` does for one run), and one
    contraction with the covariances of all of them."""
    count = len(inputs)
    keep = [i for i, name in enumerate(names) if name in value_names]
    free_at = [value_names.index(names[i]) for i in keep]
    rows = 1 + 2 * len(keep)
    molality, temperature, tiled_m, tiled_c = _group_readings(inputs, rows)
    shape = tiled_m.shape

    # each run's parameter values on its rows: at the values, then θ_k + h_k and θ_k − h_k
    # for each free θ_k, h_k = 1e-6 max(1, |θ_k|) (fit.uncertainty.sensitivity_coefficients'
    # steps, worked out as it works them out)
    table: list[list[float]] = []
    steps = []
    for item in inputs:
        point = list(item.values)
        table.append(point)
        run_steps = []
        for at in free_at:
            value = point[at]
            step = 1e-6 * max(1.0, abs(value))
            run_steps.append(step)
            table.append([*point[:at], value + step, *point[at + 1:]])
            table.append([*point[:at], value - step, *point[at + 1:]])
        steps.append(run_steps)
    by_parameter = np.ascontiguousarray(
        np.array(table, dtype=float).reshape(count * rows, len(value_names)).T)
    columns = {name: by_parameter[at][:, None] for at, name in enumerate(value_names)}
    out_phi = _full(model.osmotic_coefficient(electrolyte, tiled_m, tiled_c, columns),
                    shape).reshape(count, rows, shape[1])
    out_ln = _full(model.ln_gamma(electrolyte, tiled_m, tiled_c, columns),
                   shape).reshape(count, rows, shape[1])
    phi = np.ascontiguousarray(out_phi[:, 0])
    ln_g = np.ascontiguousarray(out_ln[:, 0])
    a_w = water_activity(electrolyte, molality, phi)
    g_rt = excess_gibbs_energy_rt(electrolyte, molality, phi, ln_g)
    factor = electrolyte.nu * molality
    if keep:
        twice = 2.0 * np.array(steps)[:, :, None]
        d_phi = np.ascontiguousarray(
            ((out_phi[:, 1::2] - out_phi[:, 2::2]) / twice).transpose(0, 2, 1))
        d_ln = np.ascontiguousarray(
            ((out_ln[:, 1::2] - out_ln[:, 2::2]) / twice).transpose(0, 2, 1))
        matrices = _stacked([np.asarray(item.matrix, dtype=float) for item in inputs])
        first = keep[0]
        if keep == list(range(first, first + len(keep))):  # a block: a slice, no fancy index
            cov = matrices[:, first:first + len(keep), first:first + len(keep)]
        else:
            cov = matrices[:, keep][:, :, keep]
        cov = np.ascontiguousarray(cov)
        u_phi, u_ln_g = _u(d_phi, cov), _u(d_ln, cov)
        u_g_rt = _u(factor[:, :, None] * (d_ln - d_phi), cov)
    else:
        u_phi, u_ln_g, u_g_rt = np.zeros((3, *molality.shape))
    # a_w = exp(−ν m M_w φ): ∂a_w/∂θ = −a_w ν m M_w ∂φ/∂θ.
    u_aw = a_w * factor * MOLAR_MASS_WATER_KG_MOL * u_phi
    rt = GAS_CONSTANT_J_MOL_K * temperature
    shared = [molality, temperature, ln_g, u_ln_g, phi, u_phi, a_w, u_aw, g_rt, u_g_rt,
              g_rt * rt, u_g_rt * rt]
    for array in shared:
        array.setflags(write=False)  # each run's columns are rows of these: read only too
    found = []
    # (a strict zip of arrays checks their ends slowly; they have a row for each run)
    for item, row in zip(inputs, zip(*shared, strict=False), strict=False):
        lines = item.lines
        lines.setflags(write=False)
        found.append((dict(zip(_PROPERTY_NAMES, (lines, *row), strict=True)), item.notes))
    return found


def _u(gradient: np.ndarray, cov: np.ndarray) -> np.ndarray:
    """u = √(g V gᵀ) at each reading of each run: ``gradient`` (G, N, k), ``cov`` (G, k, k)
    [the quantity's unit]; (G, N).

    Summed as one run's contraction ``ij,jk,ik->i`` sums, which the stacked contraction of
    the same layout does, except for one reading a run, where numpy orders the sum otherwise:
    there each run is contracted alone."""
    if gradient.shape[1] == 1:
        total = np.array([np.einsum("ij,jk,ik->i", g, c, g)
                          for g, c in zip(gradient, cov, strict=True)])
    else:
        total = np.einsum("gij,gjk,gik->gi", gradient, cov, gradient)
    return np.sqrt(np.maximum(total, 0.0))


@dataclass(frozen=True)
class DerivedResults:
    """What follows from a reduction beyond its fit, computed once for every output: φ, a_w and
    G^E/RT with u at each usable molality (:attr:`properties`, the table of
    :func:`derived_properties`), and γ± beside the published tables (:attr:`published`, the
    table of :func:`activolt.procedures.published.compare_with_published`, None without a
    table).

    The tables are built when first asked for; the outputs read their columns
    (``property_columns``, ``published_columns``: name → read-only array, in the tables'
    order; ``property_notes``: the properties table's ``attrs["notes"]``) without building
    them.
    """

    property_columns: Mapping[str, np.ndarray]
    property_notes: tuple[str, ...]
    published_columns: Mapping[str, Any] | None

    @functools.cached_property
    def properties(self) -> pd.DataFrame:
        """The derived properties (:func:`derived_properties`)."""
        frame = table_of(_PROPERTY_COLUMNS, [c.copy() for c in self.property_columns.values()])
        frame.attrs["notes"] = list(self.property_notes)
        return frame

    @functools.cached_property
    def published(self) -> pd.DataFrame | None:
        """γ± beside the published tables
        (:func:`activolt.procedures.published.compare_with_published`), or None."""
        if self.published_columns is None:
            return None
        return table_of(pd.Index(list(self.published_columns)),
                        [c.copy() for c in self.published_columns.values()])


def derive_results(reduction: Reduction) -> DerivedResults:
    """The derived properties and the published comparison of a reduction, once.

    Parameters
    ----------
    reduction : Reduction
        From :func:`activolt.procedures.dilution.reduce_run`.

    Returns
    -------
    DerivedResults
        Their columns, and their tables when asked for.

    Notes
    -----
    :func:`derive_results_of_many` of the one reduction (one code path for one run and many).
    """
    return derive_results_of_many([reduction])[0]


def derive_results_of_many(reductions: Sequence[Reduction]) -> list[DerivedResults]:
    r"""The derived properties and the published comparison of many reductions, worked out
    together: each what :func:`derive_results` gives for it alone.

    Parameters
    ----------
    reductions : sequence of Reduction
        From :func:`activolt.procedures.dilution.reduce_run` or
        :func:`~activolt.procedures.dilution.reduce_runs`, of any models, electrolytes and
        lengths.

    Returns
    -------
    list of DerivedResults
        One for each reduction, in the order of ``reductions``; their columns are read only
        (rows of arrays that the reductions of a group share).

    Notes
    -----
    The reductions are grouped by model, electrolyte, parameters, uncertain parameters and
    number of usable readings. For each group, φ and ln γ± are evaluated once, on the readings
    of every run repeated on a row for its parameter values θ and one for each θ_k ± h_k,
    h_k = 10⁻⁶ max(1, |θ_k|) (the central differences of
    :func:`activolt.fit.uncertainty.sensitivity_coefficients`), as
    :func:`model_sensitivities` lays out one run; every model is elementwise in the readings
    and the parameters. Then, as :func:`derived_properties` states,

    .. math:: a_w = \exp(−ν m M_w φ), \qquad G^E/(RT) = ν m (1 − φ + \ln γ_±)

    (Robinson & Stokes 1959, ch. 2; Pitzer 1991, ch. 3), and u²(y) = gᵀ V g with g = ∂y/∂θ
    and V each run's ``uncertain_covariance`` (GUM, JCGM 100:2008, 5.2), contracted for the
    whole group at once. The published comparison is that of
    :func:`activolt.procedures.published.published_columns_of_many`.

    Every column equals, bit for bit, what the one-series computation gives the run alone:
    the model evaluation and what follows are elementwise, and the stacked contraction
    (``einsum("gij,gjk,gik->gi")``) sums each reading's terms in the order of one run's
    ``einsum("ij,jk,ik->i")``; for runs of one usable reading, where numpy orders the stacked
    sum otherwise, each run is contracted alone.

    Examples
    --------
    >>> derive_results_of_many([])
    []
    """
    properties = _property_columns_of_many(reductions)
    published = published_columns_of_many(reductions)
    return [DerivedResults(property_columns=columns, property_notes=notes,
                           published_columns=comparison)
            for (columns, notes), comparison in zip(properties, published, strict=True)]
