"""The archive, measured against its targets (issue 13):

- adding 10 000 records (each with its input table) to an SQLite archive ≤ 10 s, in one
  ``Archive.add_many`` — what ``activolt archive add`` does with 10 000 record files (one
  transaction: all land or none);
- for information (no target), the rate of one ``Archive.add`` per record, each its own
  transaction, as ``--archive`` does it after a run: 1 000 records, scaled to 10 000;
- listing the records of one electrode from those 10 000 ≤ 0.1 s (median after warm-up).

The records are calibration records of invented batches (benchmark input only): eight
electrodes each out of 1 000 IDs, so one electrode is named by 80 records.

Run: `make bench`, or `python bench/bench_archive.py`.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import benchlib
import pytest
from benchlib import table_at_the_end  # noqa: F401 (a fixture)

RECORDS = 10_000
ELECTRODES = 1_000
PER_BATCH = 8
ADD_TARGET_S = 10.0
SINGLE = 1_000
LIST_TARGET_S = 0.1


def batch_record(i: int) -> tuple[dict, bytes]:
    """The ``i``-th invented calibration record and its batch table."""
    names = [f"KB-B-{(i * PER_BATCH + j) % ELECTRODES:04d}" for j in range(PER_BATCH)]
    table = "".join(f"{name},0.01,{0.4640 + 1e-5 * (i % 7):.6f}\n" for name in names).encode()
    day = 1 + i % 28
    record = {
        "record_schema": "activolt-record/1", "record_kind": "calibration",
        "software": {"name": "activolt", "version": "bench"},
        "created_utc": f"2026-{1 + i % 12:02d}-{day:02d}T10:00:{i % 60:02d}Z",
        "input": {"file": f"batch{i}.csv", "sha256": f"{i:064x}"},
        "run_info": {"lab": "Kestrel Bay Electrochemistry Laboratory",
                     "operator": "R. Okonkwo-Lind", "description": f"bench batch {i}"},
        "method": "hydrogen", "date": f"2026-{1 + i % 12:02d}-{day:02d}",
        "electrodes": [{"electrode": name, "standard_potential_V": {
            "value": 0.2222 + 1e-6 * j, "uncertainty": 1.5e-5}, "verdict": "pass"}
            for j, name in enumerate(names)],
        "acceptance": {"tolerance_V": 1e-4}, "batch_statistics": {}, "all_pass": True,
        "warnings": [],
    }
    return record, table


def measure(folder: Path) -> tuple[float, float, int, float]:
    """(seconds to add every record, median seconds to list one electrode, records found,
    seconds for 10 000 single adds scaled from 1 000)."""
    from activolt.io.archive import open_archive

    items = [batch_record(i) for i in range(RECORDS)]
    with open_archive(folder / "single.sqlite") as archive:
        start = time.perf_counter()
        for i, (record, table) in enumerate(items[:SINGLE]):
            archive.add(record, inputs={f"batch{i}.csv": table})
        single_s = (time.perf_counter() - start) * RECORDS / SINGLE
    with open_archive(folder / "bench.sqlite") as archive:
        start = time.perf_counter()
        archive.add_many([(record, {f"batch{i}.csv": table}, None, None)
                          for i, (record, table) in enumerate(items)])
        added_s = time.perf_counter() - start
        assert len(archive) == RECORDS
        found = archive.find(electrode="KB-B-0123")
        listing_s = benchlib.median_time_s(lambda: archive.find(electrode="KB-B-0123"),
                                           repeats=15)
    return added_s, listing_s, len(found), single_s


@pytest.mark.bench
@pytest.mark.usefixtures("table_at_the_end")
def test_archive_add_and_list():
    with tempfile.TemporaryDirectory() as folder:
        added_s, listing_s, found, single_s = measure(Path(folder))
    benchlib.record(f"archive: {RECORDS} single adds, one transaction each (SQLite)",
                    f"{single_s:.1f} s", "none", True,
                    f"information only: {SINGLE} timed and scaled")
    rows = [
        benchlib.record(f"archive: add {RECORDS} records in one archive add (SQLite)",
                        f"{added_s:.2f} s", f"≤ {ADD_TARGET_S:g} s", added_s <= ADD_TARGET_S,
                        "each with its input table"),
        benchlib.record(f"archive: list one electrode's records ({found} of {RECORDS})",
                        f"{listing_s * 1e3:.1f} ms", f"≤ {LIST_TARGET_S * 1e3:g} ms",
                        listing_s <= LIST_TARGET_S, "median of 15 after warm-up"),
    ]
    assert found == RECORDS * PER_BATCH // ELECTRODES
    assert all(row.met for row in rows), "\n".join(row.line() for row in rows)


def main() -> int:
    try:
        test_archive_add_and_list()
    except AssertionError:
        print("\n" + benchlib.table())
        return 1
    print("\n" + benchlib.table())
    return 0


if __name__ == "__main__":
    sys.exit(main())
