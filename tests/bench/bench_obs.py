"""Observation-store benchmark: a large import and a unit review, against floors in the same run.

Run: ``python tests/bench/bench_obs.py`` (or ``pytest tests/bench/bench_obs.py -s``).
Import: ``ObservationStore.record`` of N validated findings (one transaction, triggers and
indexes in place) against the floor of a bare ``sqlite3`` ``executemany`` of the same rows
into a plain table with no index, in one transaction, on the same disk. Validation:
``parse_csv`` of the same rows against reading them with ``csv.reader``. Review: a review of
the unit after the import. It prints figures and ratios; it does not assert tight timings.
"""

from __future__ import annotations

import csv
import sqlite3
import tempfile
import time
from datetime import datetime, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
UNIT = ROOT / "tests" / "unit_minimal.yaml"
ROWS = 20_000
ITEMS = [("nirs", "L"), ("nirs", "R"), ("refill", "R"), ("pulse", "R-DPA"), ("pulse", "R-PTA")]
VALUES = {"nirs": "64", "refill": "2", "pulse": "doppler"}


def _write_csv(path: Path) -> None:
    t0 = datetime(2026, 11, 1, 0, 0)
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["time", "bed", "ref", "by", "item", "site", "value"])
        for i in range(ROWS):
            item, site = ITEMS[i % len(ITEMS)]
            t = t0 + timedelta(minutes=i // len(ITEMS))
            w.writerow(
                [t.strftime("%Y-%m-%dT%H:%M"), 1, "DEMO-11", "RN-A", item, site, VALUES[item]]
            )


def run() -> dict[str, float]:
    from vascplan.observations.csvio import parse_csv
    from vascplan.observations.review import review_unit
    from vascplan.observations.store import open_store
    from vascplan.surveillance.unit import load_unit

    unit = load_unit(UNIT)
    out: dict[str, float] = {}
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench.csv"
        _write_csv(path)
        t = time.perf_counter()
        with open(path, newline="") as fh:
            raw = list(csv.reader(fh))
        out["floor: csv.reader"] = time.perf_counter() - t
        t = time.perf_counter()
        findings, lines = parse_csv(path, unit)
        out["parse_csv (validate)"] = time.perf_counter() - t

        conn = sqlite3.connect(Path(tmp) / "floor.db", isolation_level=None)
        conn.execute("PRAGMA synchronous = FULL")
        conn.execute(
            "CREATE TABLE t (time TEXT, bed INT, ref TEXT, by TEXT, item TEXT, site TEXT, "
            "value TEXT)"
        )
        t = time.perf_counter()
        conn.execute("BEGIN IMMEDIATE")
        conn.executemany("INSERT INTO t VALUES (?, ?, ?, ?, ?, ?, ?)", raw[1:])
        conn.execute("COMMIT")
        out["floor: sqlite3 executemany"] = time.perf_counter() - t
        conn.close()

        with open_store(str(Path(tmp) / "obs.db")) as store:
            t = time.perf_counter()
            store.record(findings, unit=unit.unit.key, unit_name=unit.unit.name, kind="import",
                         source="bench", lines=lines)
            out["ObservationStore.record"] = time.perf_counter() - t
            t = time.perf_counter()
            review_unit(unit, store, datetime.fromisoformat("2026-11-15T00:00+00:00"))
            out["review_unit (1 bed, 20k findings)"] = time.perf_counter() - t
    return out


def report(out: dict[str, float]) -> str:
    rows = [f"{name:40s} {sec * 1000:9.1f} ms" for name, sec in out.items()]
    rows.append(
        "validate / csv.reader floor: "
        f"{out['parse_csv (validate)'] / out['floor: csv.reader']:.1f}x"
    )
    rows.append(
        f"record / sqlite3 floor:      "
        f"{out['ObservationStore.record'] / out['floor: sqlite3 executemany']:.1f}x  ({ROWS} rows)"
    )
    return "\n".join(rows)


def test_bench_obs() -> None:
    out = run()
    print("\n" + report(out))
    assert all(v > 0 for v in out.values())


if __name__ == "__main__":
    import sys

    sys.path.insert(0, str(ROOT))
    print(report(run()))
