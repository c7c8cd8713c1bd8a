"""Speed benchmarks of activolt (run on demand: `make bench`, or `python bench/bench_reduce.py`).

Targets (from the project's design):
- the library reduces one series of 20 points (no figures) in ≤ 20 ms (median);
- `activolt reduce` end to end, figures and report included, takes ≤ 2.5 × the time of merely
  importing numpy, scipy, pandas, matplotlib and lmfit — both measured side by side, alternating,
  in one run, so that the machine's speed cancels out of the ratio.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

LIBRARY_TARGET_S = 0.020
END_TO_END_RATIO_TARGET = 2.5
IMPORTS = "import numpy, scipy, scipy.optimize, pandas, matplotlib, matplotlib.pyplot, lmfit"


def make_series(folder: Path, n_points: int = 20) -> Path:
    """A 20-point HCl series from the Hückel equation with noise (benchmark input only)."""
    from activolt.activity.hueckel import ln_gamma
    from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte
    from activolt.physics.water import debye_hueckel_constants

    hcl = parse_electrolyte("HCl")
    m = np.geomspace(0.001, 1.0, n_points)
    constants = debye_hueckel_constants(np.full(m.size, 298.15))
    gamma = np.exp(ln_gamma(hcl, m, constants, {"a_angstrom": 4.3, "b_kg_mol": 0.27}))
    emf = 0.2223 - nernst_factor(hcl, 1, 298.15) * np.log(m * gamma)
    emf += np.random.default_rng(5).normal(0.0, 2e-5, m.size)
    path = folder / "bench.csv"
    rows = "\n".join(f"{a:.6g},{b * 1e3:.4f},0.02" for a, b in zip(m, emf, strict=True))
    path.write_text("molality_mol_kg,emf_mV,u_emf_mV\n" + rows + "\n")
    (folder / "bench.toml").write_text('electrolyte = "HCl"\nelectrons = 1\ntemperature_C = 25\n')
    return path


def library_median_s(path: Path, repeats: int = 40) -> float:
    """Median wall time of read + reduce of one series, after one warm-up."""
    from activolt.data.runs import read_run
    from activolt.procedures.dilution import reduce_run

    run = read_run(path)
    reduce_run(run)
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        reduce_run(read_run(path))
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def _timed(command: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run(command, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - start


def end_to_end_ratio(path: Path, repeats: int = 5) -> tuple[float, float, float]:
    """(median reduce time, median import time, ratio), alternating the two commands."""
    activolt = str(Path(sys.executable).with_name("activolt"))
    reduce_cmd = [activolt, "reduce", str(path), "--out", str(path.parent / "out")]
    import_cmd = [sys.executable, "-c", IMPORTS]
    _timed(import_cmd)
    _timed(reduce_cmd)  # warm the file cache and matplotlib's font cache
    reduce_times, import_times = [], []
    for _ in range(repeats):
        import_times.append(_timed(import_cmd))
        reduce_times.append(_timed(reduce_cmd))
    r, i = statistics.median(reduce_times), statistics.median(import_times)
    return r, i, r / i


def main() -> int:
    with tempfile.TemporaryDirectory() as folder:
        path = make_series(Path(folder))
        lib = library_median_s(path)
        r, i, ratio = end_to_end_ratio(path)
    print(f"library, one 20-point series: median {lib * 1e3:.1f} ms "
          f"(target ≤ {LIBRARY_TARGET_S * 1e3:.0f} ms)")
    print(f"activolt reduce end to end: {r:.2f} s; imports alone: {i:.2f} s; ratio {ratio:.2f} "
          f"(target ≤ {END_TO_END_RATIO_TARGET})")
    return 0 if lib <= LIBRARY_TARGET_S and ratio <= END_TO_END_RATIO_TARGET else 1


if __name__ == "__main__":
    sys.exit(main())
