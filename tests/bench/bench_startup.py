"""Start-up benchmark: light commands against a bare import of their libraries.

Run: ``python tests/bench/bench_startup.py`` (or ``pytest tests/bench/bench_startup.py
-s``). Prints the median and fastest wall time of each command (runs interleaved
round-robin) and their ratios to the floor
``python -c "import networkx, pydantic, yaml, click"`` measured in the same run.
Target (issue 2): ratio <= 1.3. It reports, it does not assert tight timings.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = "vascplan/examples/case-DEMO-07-sfa-occlusion.yaml"
BAD = "tests/data/bad_cases/occlusion-not-100.yaml"
RUNS = 11
TARGET_RATIO = 1.3

COMMANDS = {
    "floor: import networkx, pydantic, yaml, click": [
        "-c",
        "import networkx, pydantic, yaml, click",
    ],
    "vascplan --help": ["-m", "vascplan", "--help"],
    "vascplan validate": ["-m", "vascplan", "validate", EXAMPLE],
    "vascplan validate (a bad file)": ["-m", "vascplan", "validate", BAD],
    "vascplan schema": ["-m", "vascplan", "schema"],
    "vascplan tree": ["-m", "vascplan", "tree", EXAMPLE],
    "vascplan tree --format json": ["-m", "vascplan", "tree", "--format", "json", EXAMPLE],
}


def _once(args: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(
        [sys.executable, *args],
        cwd=ROOT,
        check=False,  # the bad file exits 2 by design
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    return time.perf_counter() - t0


def measure(runs: int = RUNS) -> dict[str, list[float]]:
    """Wall times per command, round-robin so that machine load hits all alike."""
    for args in COMMANDS.values():  # warm the file caches
        _once(args)
    times: dict[str, list[float]] = {name: [] for name in COMMANDS}
    for _ in range(runs):
        for name, args in COMMANDS.items():
            times[name].append(_once(args))
    return times


def report(times: dict[str, list[float]]) -> list[str]:
    floor_name = next(iter(times))
    floor_med = statistics.median(times[floor_name])
    floor_min = min(times[floor_name])
    lines = [f"{'command':46s} {'median s':>9s} {'ratio':>6s} {'min s':>7s} {'ratio':>6s}"]
    for name, ts in times.items():
        med, low = statistics.median(ts), min(ts)
        ratio = med / floor_med
        flag = "" if ratio <= TARGET_RATIO else f"  (median over target {TARGET_RATIO})"
        lines.append(f"{name:46s} {med:9.3f} {ratio:6.2f} {low:7.3f} {low / floor_min:6.2f}{flag}")
    return lines


def test_startup_ratio():
    times = measure()
    print("\n" + "\n".join(report(times)))
    floor = min(next(iter(times.values())))
    # Loose sanity bound only (timings vary by machine); the target is printed above.
    assert all(min(ts) / floor < 5 for ts in times.values())


if __name__ == "__main__":
    print("\n".join(report(measure())))
