"""The observation record at scale: a seeded, invented 40-bed store, `obs add` and the review read.

Run: ``python tests/bench/bench_store.py`` (or ``pytest tests/bench/bench_store.py -s``).
Set ``VASCPLAN_BENCH_SIZES=20000,100000,200000`` to choose the store sizes (the first is the
floor each ratio is taken against).

The generator (:func:`generate_store`) makes a busy unit's record, all invented and seeded:
40 beds always occupied, each patient staying 2-6 days, a check every 2 hours of ten items
(both calves' NIRS, refill, two pedal pulses, colour, warmth, sensation, movement, calf)
and pressures for an ankle-brachial index every third check; about one finding in a
thousand corrected. 400 findings a 2-hour step, so 200,000 findings are about 42 days.
It also writes the unit file of the 40 patients on the unit at the end (earlier
patients are discharged: their history is in the store, not in the unit file).

Measured, each against the same at the smallest size in the same run:

- ``obs add`` of one check (``ObservationStore.record`` of one finding: the duplicate check,
  the insert, the new ids), median of repeated adds; goal within 1.5x at 200,000. Shown
  beside it: the same with migration 4's indexes dropped (the schema before this change).
- the review read: today's whole-history read (``current(unit, until=at)``) against the
  windowed read (``current_by_ref`` of the patients on the unit, each from their device's
  insertion), the store-side part of issue 16's review goal.

Figures before migration 4 (issue 16, measured on main with 40 beds and 200,000 findings):
``obs add`` of one row grew with the store; ``obs review`` took 4.3 s loading the whole
history.
"""

from __future__ import annotations

import os
import random
import shutil
import sqlite3
import statistics
import sys
import tempfile
import time
from datetime import UTC, datetime, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
SEED = 16
BEDS = 40
STEP = timedelta(hours=2)
START = datetime(2026, 1, 5, 8, 0, tzinfo=UTC)
UNIT_NAME = "Bench critical care (invented)"
TZ = "Europe/London"
SIZES = [int(x) for x in os.environ.get("VASCPLAN_BENCH_SIZES", "20000,200000").split(",")]
ADD_REPEATS = 40

_CHECK = [
    ("nirs", "L"),
    ("nirs", "R"),
    ("refill", "R"),
    ("pulse", "R-DPA"),
    ("pulse", "R-PTA"),
    ("colour", "R"),
    ("temperature", "R"),
    ("sensation", "R"),
    ("motor", "R"),
    ("calf", "R"),
]


def _value(rng: random.Random, item: str) -> str:
    if item == "nirs":
        return str(rng.randint(52, 78))
    if item == "refill":
        return str(rng.choice([1, 2, 2, 3, 4]))
    if item == "pulse":
        return rng.choice(["palpable", "doppler", "doppler", "absent"])
    if item == "colour":
        return rng.choice(["normal"] * 8 + ["pale"])
    if item == "temperature":
        return rng.choice(["warm"] * 8 + ["cool"])
    if item in ("sensation", "motor"):
        return "normal"
    if item == "calf":
        return rng.choice(["soft"] * 20 + ["tense"])
    raise AssertionError(item)


def generate_store(folder: Path, findings: int, *, seed: int = SEED) -> tuple[Path, Path, datetime]:
    """Make ``folder/unit.yaml`` and ``folder/obs.db`` with ``findings`` invented findings.

    Returns the unit file, the store file and the time of the last check.
    """
    from vascplan.observations.findings import Finding
    from vascplan.observations.store import open_store

    rng = random.Random(seed)
    folder.mkdir(parents=True, exist_ok=True)
    db = folder / "obs.db"
    # Each bed: (ref, admitted at, leaves at); the next patient follows at once.
    serial = 0
    stays: dict[int, tuple[str, datetime, datetime]] = {}

    def admit(bed: int, at: datetime) -> None:
        nonlocal serial
        serial += 1
        stays[bed] = (f"DEMO-B{serial:04d}", at, at + timedelta(hours=rng.randint(48, 144)))

    for bed in range(1, BEDS + 1):
        admit(bed, START - timedelta(hours=rng.randint(0, 96)))
    rows: list[Finding] = []
    stored = 0
    t = START
    step = 0
    with open_store(str(db)) as store:
        while stored < findings:
            for bed in range(1, BEDS + 1):
                if stays[bed][2] <= t:
                    admit(bed, t - timedelta(minutes=30))
                ref = stays[bed][0]
                by = f"RN-{(bed - 1) // 2 + 1:02d}"
                for item, site in _CHECK:
                    rows.append(Finding(t, bed, ref, by, item, site, _value(rng, item)))
                if step % 3 == 0:
                    ankle = rng.randint(70, 140)
                    rows.append(Finding(t, bed, ref, by, "pressure", "R-PTA", str(ankle)))
                    rows.append(Finding(t, bed, ref, by, "pressure", "R-ARM", "130"))
            step += 1
            t += STEP
            if len(rows) >= 20_000 or stored + len(rows) >= findings:
                batch = rows[: findings - stored]
                ids = store.record(batch, unit=UNIT_NAME, kind="import", source="generator")
                stored += len(ids)
                for entry_id in rng.sample(ids, max(1, len(ids) // 1000)):
                    store.correct(entry_id, "", by="RN-99", reason="invented", withdraw=True)
                rows = []
        last = t - STEP
    unit = folder / "unit.yaml"
    unit.write_text(_unit_text(stays, last))
    return unit, db, last


def _unit_text(stays: dict[int, tuple[str, datetime, datetime]], last: datetime) -> str:
    from zoneinfo import ZoneInfo

    tz = ZoneInfo(TZ)
    lines = [
        "format: vascplan-unit/1",
        f"unit: {{name: {UNIT_NAME}, timezone: {TZ}}}",
        "shifts:",
        '  - {name: day, start: "07:30"}',
        '  - {name: night, start: "19:30"}',
        "protocol: standard",
        "staff:",
    ]
    for n in range(BEDS // 2):
        lines.append(f"  - {{nurse: RN-{n + 1:02d}, beds: [{2 * n + 1}, {2 * n + 2}], "
                     "shifts: [day, night]}")  # fmt: skip
    lines.append("patients:")
    for bed, (ref, admitted, _) in sorted(stays.items()):
        inserted = min(admitted, last).astimezone(tz).strftime("%Y-%m-%dT%H:%M")
        lines += [
            f"  - ref: {ref}",
            f"    bed: {bed}",
            "    sex: female" if bed % 2 else "    sex: male",
            "    height_cm: 172",
            "    pad: false",
            "    device: {kind: va-ecmo-arterial, side: R, vessel: CFA, size_fr: 17, "
            f"label: outer, inserted: {inserted}, removed: null}}",
            "    vessel_mm: 7.2",
            "    baseline: {nirs: {L: 68, R: 66}}",
        ]
    return "\n".join(lines) + "\n"


def _add_once(store, at: datetime) -> tuple[float, float]:  # type: ignore[no-untyped-def]
    """Wall time (what a nurse waits, mostly the durable sync to disk) and CPU time (the
    queries: what grows when an index is missing) of one ``obs add`` of one finding."""
    from vascplan.observations.findings import Finding

    f = Finding(at, 1, "DEMO-X", "RN-01", "nirs", "L", "64")
    t, c = time.perf_counter(), time.process_time()
    store.record([f], unit=UNIT_NAME, kind="add", source="bench")
    return time.perf_counter() - t, time.process_time() - c


def _without_migration_4(db: Path, folder: Path) -> Path:
    old = folder / "schema3.db"
    shutil.copyfile(db, old)
    conn = sqlite3.connect(old)
    conn.execute("DROP INDEX obs_entry_unit_time")
    conn.execute("DROP INDEX obs_entry_batch")
    conn.commit()
    conn.close()
    return old


def _review_reads(store, unit, at: datetime) -> tuple[float, float, int, int]:  # type: ignore[no-untyped-def]
    t = time.perf_counter()
    whole = store.current(unit.unit.name, until=at)
    t_whole = time.perf_counter() - t
    t = time.perf_counter()
    windows = {p.ref: p.device.inserted for p in unit.patients}
    mine = store.current_by_ref(unit.unit.name, windows, until=at)
    t_window = time.perf_counter() - t
    return t_whole, t_window, len(whole), sum(len(v) for v in mine.values())


def run() -> list[dict[str, float]]:
    """Make every size first, then measure them in turn, so that disk and CPU noise on a
    shared machine falls on all sizes alike (adds: median of interleaved rounds; reads:
    the best of three)."""
    from vascplan.observations.store import open_store
    from vascplan.surveillance.unit import load_unit

    out = []
    with tempfile.TemporaryDirectory() as tmp:
        made = []
        for n in SIZES:
            folder = Path(tmp) / str(n)
            t = time.perf_counter()
            unit, db, last = generate_store(folder, n)
            made.append((n, time.perf_counter() - t, load_unit(unit), db, last, folder))
        stores = [open_store(str(db)) for _, _, _, db, _, _ in made]
        old = [open_store(str(_without_migration_4(db, f))) for _, _, _, db, _, f in made]
        adds: list[list[tuple[float, float]]] = [[] for _ in made]
        adds_old: list[list[tuple[float, float]]] = [[] for _ in made]
        for i in range(ADD_REPEATS):
            for k, (_, _, _, _, last, _) in enumerate(made):
                adds[k].append(_add_once(stores[k], last + timedelta(minutes=7 + i)))
                adds_old[k].append(_add_once(old[k], last + timedelta(minutes=7 + i)))
        for k, (n, gen_s, unit, _, last, _) in enumerate(made):
            reads = [_review_reads(stores[k], unit, last) for _ in range(3)]
            out.append(
                {
                    "findings": n,
                    "generate_s": gen_s,
                    "add_s": statistics.median(a for a, _ in adds[k]),
                    "add_cpu_s": statistics.median(c for _, c in adds[k]),
                    "add_schema3_s": statistics.median(a for a, _ in adds_old[k]),
                    "add_schema3_cpu_s": statistics.median(c for _, c in adds_old[k]),
                    "read_whole_s": min(r[0] for r in reads),
                    "read_window_s": min(r[1] for r in reads),
                    "rows_whole": reads[0][2],
                    "rows_window": reads[0][3],
                }
            )
        for store in stores + old:
            store.close()
    return out


def report(rows: list[dict[str, float]]) -> str:
    f = rows[0]

    def ratio(r: dict[str, float], key: str) -> str:
        return f"{r[key] / f[key]:5.2f}x"

    lines = [
        "obs add of one finding (median of interleaved rounds), against the smallest store:",
        f"{'findings':>9} {'generate':>9} {'wall ms':>8} {'ratio':>6} {'CPU ms':>7} {'ratio':>6}"
        f" | schema 3: {'wall ms':>8} {'ratio':>6} {'CPU ms':>7} {'ratio':>6}",
    ]
    for r in rows:
        lines.append(
            f"{int(r['findings']):>9} {r['generate_s']:>8.1f}s {r['add_s'] * 1e3:>8.2f} "
            f"{ratio(r, 'add_s')} {r['add_cpu_s'] * 1e3:>7.2f} {ratio(r, 'add_cpu_s')}"
            f" |           {r['add_schema3_s'] * 1e3:>8.2f} {ratio(r, 'add_schema3_s')} "
            f"{r['add_schema3_cpu_s'] * 1e3:>7.2f} {ratio(r, 'add_schema3_cpu_s')}"
        )
    lines.append("review read as at the last check (best of 3):")
    lines.append(
        f"{'findings':>9} {'whole history':>14} {'rows':>7} {'windowed':>9} {'rows':>6} "
        f"{'ratio':>6}"
    )
    for r in rows:
        lines.append(
            f"{int(r['findings']):>9} {r['read_whole_s'] * 1e3:>12.0f}ms {int(r['rows_whole']):>7}"
            f" {r['read_window_s'] * 1e3:>7.0f}ms {int(r['rows_window']):>6} "
            f"{ratio(r, 'read_window_s')}"
        )
    top = rows[-1]
    add = top["add_s"] / f["add_s"]
    lines.append(
        f"goal: obs add of one row at {int(top['findings'])} within 1.5x of "
        f"{int(f['findings'])}: {add:.2f}x wall, {top['add_cpu_s'] / f['add_cpu_s']:.2f}x CPU "
        f"({'met' if add <= 1.5 else 'NOT met'}); the windowed review read "
        f"{top['read_window_s'] / f['read_window_s']:.2f}x (the review's goal: within 1.5x)"
    )
    return "\n".join(lines)


def test_bench_store() -> None:
    rows = run()
    print("\n" + report(rows))
    assert all(r["add_s"] > 0 for r in rows)


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    print(report(run()))
