"""Streamed exports: peak memory and time of ``obs export`` at growing record lengths.

Run: ``python tests/bench/bench_export.py`` (or ``pytest tests/bench/bench_export.py -s``).
``VASCPLAN_BENCH_SIZES`` chooses the store sizes (default ``20000,200000``), made by the
seeded, invented generator of ``bench_store.py`` (40 beds).

Each export runs as its own process (``python -m vascplan obs export ... -o FILE``); its
peak resident memory is the child's ``ru_maxrss`` from ``os.wait4``. The floor, measured in
the same run, is a process that imports what the export imports (the CLI, SQLAlchemy, the
store and the writers) and does nothing else. Goal (issue 16): under 150 MB at 200,000
findings, and not growing with the record.

Before this change (issue 16, measured on main): ``obs export --format fhir`` built the
whole Bundle in memory, about 16 KB per stored finding, 3.3 GB at 200,000 findings.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
SIZES = [int(x) for x in os.environ.get("VASCPLAN_BENCH_SIZES", "20000,200000").split(",")]
FORMATS = ("fhir", "ndjson", "csv")
GOAL_MB = 150.0
FLOOR_CODE = (
    "import sqlalchemy, vascplan.cli, vascplan.cli.obs, vascplan.observations.export, "
    "vascplan.observations.fhir, vascplan.observations.csvio, vascplan.surveillance.unit"
)


def _peak(cmd: list[str]) -> tuple[float, float]:
    """CPU time [s] (user + system; the machine is shared) and peak resident memory [MB]."""
    child = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(child.pid, 0)
    cpu = usage.ru_utime + usage.ru_stime
    err = child.stderr.read().decode() if child.stderr else ""
    if status != 0:
        raise RuntimeError(f"{cmd} failed: {err}")
    return cpu, usage.ru_maxrss / 1024  # Linux reports kB


def run() -> list[dict[str, float | str]]:
    sys.path.insert(0, str(HERE))
    from bench_store import generate_store

    out: list[dict[str, float | str]] = []
    floor_s, floor_mb = _peak([sys.executable, "-c", FLOOR_CODE])
    out.append({"what": "floor: imports only", "findings": 0, "s": floor_s, "mb": floor_mb})
    with tempfile.TemporaryDirectory() as tmp:
        for n in SIZES:
            folder = Path(tmp) / str(n)
            unit, db, _ = generate_store(folder, n)
            for fmt in FORMATS:
                target = folder / f"export.{fmt}"
                s, mb = _peak(
                    [sys.executable, "-m", "vascplan", "obs", "export", "--unit", str(unit),
                     "--format", fmt, "--db", str(db), "-o", str(target)]
                )  # fmt: skip
                size = target.stat().st_size / 1e6
                out.append({"what": fmt, "findings": n, "s": s, "mb": mb, "file_mb": size})
                target.unlink()
    return out


def report(rows: list[dict[str, float | str]]) -> str:
    floor = rows[0]
    lines = [
        f"{'export':<22} {'findings':>9} {'CPU':>8} {'peak RSS':>9} {'over floor':>11} {'file':>8}"
    ]
    for r in rows:
        over = float(r["mb"]) - float(floor["mb"])
        file_mb = f"{float(r['file_mb']):.0f} MB" if "file_mb" in r else ""
        lines.append(
            f"{r['what']!s:<22} {r['findings']:>9} {float(r['s']):>7.2f}s "
            f"{float(r['mb']):>6.0f} MB {over:>+8.0f} MB {file_mb:>8}"
        )
    top = max(int(r["findings"]) for r in rows)
    worst = max(float(r["mb"]) for r in rows if r["findings"] == top)
    lines.append(
        f"goal: peak memory under {GOAL_MB:.0f} MB at {top} findings: {worst:.0f} MB "
        f"({'met' if worst < GOAL_MB else 'NOT met'})"
    )
    return "\n".join(lines)


def test_bench_export() -> None:
    rows = run()
    print("\n" + report(rows))
    assert all(float(r["mb"]) > 0 for r in rows)


if __name__ == "__main__":
    sys.path.insert(0, str(ROOT))
    print(report(run()))
