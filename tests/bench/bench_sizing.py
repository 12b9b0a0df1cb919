"""Benchmarks of the sizing functions the route planner and the risk module call.

Not run by default. ``python -m pytest tests/bench/bench_sizing.py -q -s`` prints the
time per call and its ratio to a floor measured in the same run (the closed-form
concentric annulus, a handful of float operations); the assertions are loose.
"""

from __future__ import annotations

import time

from vascplan.sizing import eccentric, flow
from vascplan.sizing.cannula import cannula_flow
from vascplan.sizing.limb import limb_flow_with_device


def _per_call(fn, n: int) -> float:
    fn()  # warm caches and imports
    start = time.perf_counter()
    for _ in range(n):
        fn()
    return (time.perf_counter() - start) / n


def test_sizing_call_times():
    floor = _per_call(lambda: flow.concentric_annulus_factor(0.87), 20000)
    cases = {
        "touching annulus (table)": (lambda: eccentric.touching_annulus_factor(0.87), 20000),
        "limb_flow_with_device": (lambda: limb_flow_with_device(6.5, 17 / 3, 15), 2000),
        "cannula_flow": (lambda: cannula_flow(7, 15, 150), 500),
        "eccentric FD solve, 200 cells (uncached)": (
            lambda: eccentric.solve_annulus_factor(0.6, 0.5, 200),
            5,
        ),
    }
    print(f"\nfloor (concentric closed form): {floor * 1e6:.2f} us")
    results = {}
    for name, (fn, n) in cases.items():
        t = _per_call(fn, n)
        results[name] = t
        print(f"{name:45s} {t * 1e3:9.3f} ms  ({t / floor:10.0f} x floor)")
    # Loose: the calls the planner makes stay far below the 50 ms target.
    assert results["limb_flow_with_device"] < 50_000 * floor
    assert results["touching annulus (table)"] < 5_000 * floor
