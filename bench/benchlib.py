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
