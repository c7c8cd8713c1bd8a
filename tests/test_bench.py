"""Speed targets, run only on demand (`make bench`); never part of the normal test run.

Targets from the project's design (common practice: benchmarks measured side by side, ratios
reported, no timing in unit tests).
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "bench"))

import bench_reduce


@pytest.mark.bench
def test_library_and_end_to_end_speed():
    with tempfile.TemporaryDirectory() as folder:
        path = bench_reduce.make_series(Path(folder))
        library_s = bench_reduce.library_median_s(path)
        reduce_s, import_s, ratio = bench_reduce.end_to_end_ratio(path)
    print(f"\nlibrary {library_s * 1e3:.1f} ms; reduce {reduce_s:.2f} s, imports {import_s:.2f} s, "
          f"ratio {ratio:.2f}")
    assert library_s <= bench_reduce.LIBRARY_TARGET_S
    assert ratio <= bench_reduce.END_TO_END_RATIO_TARGET
