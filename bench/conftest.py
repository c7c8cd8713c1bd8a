"""Prints the benchmarks' table of measured values against targets at the end of `make bench`."""

from __future__ import annotations

import benchlib


def pytest_terminal_summary(terminalreporter, exitstatus, config):
    if benchlib.ROWS:
        terminalreporter.section("benchmarks: measured against targets")
        terminalreporter.write_line(benchlib.table())
