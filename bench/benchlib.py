"""What the benchmarks share: timing helpers and the table of measured values against targets.

Every benchmark records one row per target (:func:`record`), prints it at once and asserts the
target afterwards, so that a missed target is shown with its numbers before the assertion fails.
Each benchmark module prints the table of its rows when it finishes (``table_at_the_end``, a
module fixture; there is no conftest here, since a second top-level conftest would clash with
that of tests/).
"""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pytest


@dataclass(frozen=True)
class Row:
    """One target: what was measured, its value and the target, in words and as a verdict."""

    name: str
    measured: str
    target: str
    met: bool
    note: str = ""

    def line(self) -> str:
        verdict = "met" if self.met else "MISSED"
        note = f"  [{self.note}]" if self.note else ""
        return f"{verdict:6}  {self.name}: {self.measured} (target {self.target}){note}"


#: Rows recorded in this process, in order.
ROWS: list[Row] = []


def record(name: str, measured: str, target: str, met: bool, note: str = "") -> Row:
    """Record and print one measured target; returns the row (assert ``row.met`` after)."""
    row = Row(name, measured, target, bool(met), note)
    ROWS.append(row)
    print(f"\n{row.line()}", flush=True)
    return row


def median_time_s(function: Callable[[], object], repeats: int, warm_up: int = 2) -> float:
    """Median wall time of ``function()`` over ``repeats`` calls, after ``warm_up`` calls [s]."""
    for _ in range(warm_up):
        function()
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


#: The anchor the targets of one series were set against: a plain lmfit fit of one Hückel series
#: (E°, å and b free) took 0.66 ms on the machine where the absolute targets (2 ms, 5 ms, 0.1 s,
#: 10 s) were set. Each absolute target is therefore also a multiple of that fit, and it is that
#: multiple, measured side by side in one run, that is asserted: the machine's speed cancels.
ANCHOR_WHEN_SET_S = 0.66e-3


def anchor_multiple(target_s: float) -> float:
    """An absolute target [s] as a multiple of the anchor fit (see :data:`ANCHOR_WHEN_SET_S`)."""
    return target_s / ANCHOR_WHEN_SET_S


def interleaved_medians_s(functions: list[Callable[[], object]], repeats: int,
                          warm_up: int = 2, block: int = 10) -> list[float]:
    """Median wall time of each of ``functions`` [s] over ``repeats`` calls, measured in turns:
    each round calls every function ``block + 1`` times in a row and keeps the times of the last
    ``block`` (the first warms the caches again after the others), so that a change in the
    machine's load (other processes, frequency) falls on all of them alike rather than on
    whichever was being measured while it lasted; each is still timed in a warm loop."""
    for function in functions:
        for _ in range(warm_up):
            function()
    times: list[list[float]] = [[] for _ in functions]
    for _ in range(max(1, -(-repeats // block))):
        for function, kept in zip(functions, times, strict=True):
            function()
            for _ in range(block):
                start = time.perf_counter()
                function()
                kept.append(time.perf_counter() - start)
    return [statistics.median(kept) for kept in times]


def lmfit_anchor_s(molality: np.ndarray, emf_V: np.ndarray, repeats: int = 200) -> float:
    """Median time of the anchor (:func:`lmfit_anchor_fit`) [s]."""
    return median_time_s(lmfit_anchor_fit(molality, emf_V), repeats, warm_up=5)


def lmfit_anchor_fit(molality: np.ndarray, emf_V: np.ndarray) -> Callable[[], object]:
    r"""The anchor: one plain lmfit fit of a Hückel series, as a function to time.

    E = E° − k [ln m + ln γ±], ln γ± = −A_γ √m/(1 + B å √m) + b m (1:1 electrolyte, k = 2RT/F
    at 25 °C), E°, å and b free, unit weights — the fit the per-series lmfit loop does, with
    A_γ and B of water at 25 °C from the package (the same for both sides of the ratio).
    """
    import lmfit

    from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
    from activolt.physics.water import debye_hueckel_constants

    hcl = parse_electrolyte("HCl")
    constants = debye_hueckel_constants(np.full(molality.size, 298.15))
    a_gamma, b_hueckel = constants.agamma, constants.b
    k = float(nernst_factor(hcl, 1, 298.15))
    sqrt_m, ln_m = np.sqrt(molality), np.log(molality)

    def residual(parameters: lmfit.Parameters) -> np.ndarray:
        v = parameters.valuesdict()
        ln_gamma = -a_gamma * sqrt_m / (1.0 + b_hueckel * v["a"] * sqrt_m) + v["b"] * molality
        return emf_V - (v["e0"] - k * (ln_m + ln_gamma))

    def fit() -> lmfit.minimizer.MinimizerResult:
        parameters = lmfit.Parameters()
        parameters.add("e0", 0.2)
        parameters.add("a", 4.0, min=0.0, max=20.0)
        parameters.add("b", 0.1)
        return lmfit.minimize(residual, parameters)

    result = fit()
    if not (result.success and abs(result.params["a"].value - 4.3) < 1.0):
        raise AssertionError("the anchor fit did not find the series' å; the anchor is wrong")
    return fit


def memory_folder(free_bytes: int) -> str | None:
    """A memory-backed folder for a timed command's files (``/dev/shm``, where it is a tmpfs
    with ``free_bytes`` free), else None (the system's temporary folder).

    A command that writes hundreds of megabytes is timed against a CPU-bound anchor; on a disk
    its time also holds the disk's state, which the anchor does not cancel: write-back, and
    where the file system discards freed blocks, the discards of files deleted minutes before
    (seen here: 40 000 files of 20 kB written in 2.4 s, and in 21.6 s right after as many
    were deleted). In memory the files are still created, written and closed by the command;
    only the device is left out.
    """
    import os

    folder = "/dev/shm"
    try:
        with open("/proc/mounts", encoding="utf-8") as mounts:
            memory = any(line.split()[1:3] == [folder, "tmpfs"] for line in mounts)
        space = os.statvfs(folder)
    except OSError:
        return None
    if not memory or not os.access(folder, os.W_OK) or space.f_bavail * space.f_frsize < free_bytes:
        return None
    return folder


def seconds_text(seconds: float) -> str:
    """A time in ms below one second, else in s, to three significant digits."""
    return f"{seconds * 1e3:.3g} ms" if seconds < 1.0 else f"{seconds:.3g} s"


def table() -> str:
    """The recorded rows as a text table."""
    if not ROWS:
        return "no benchmark recorded"
    return "\n".join(row.line() for row in ROWS)


@pytest.fixture(scope="module", autouse=False)
def table_at_the_end():
    """Print the table of every row recorded so far when the module's benchmarks are done."""
    yield
    print("\n\nbenchmarks: measured against targets\n" + table(), flush=True)
