"""Benchmark of the route planner.

Not run by default. Run with::

    python -m pytest tests/bench/bench_plan.py -q -s

It prints (1) the planning time per case on the full tree, for each example and a
generated case, as a ratio against a floor measured in the same run: loading and
validating the same file without planning; and (2) the wall time of
``vascplan plan --format jsonl`` over 1,000 generated case files against
``vascplan validate`` over the same files (loading and validating without planning).
The assertions are loose: figures, not gates.
"""

from __future__ import annotations

import random
import subprocess
import sys
import time
from pathlib import Path

import yaml

from vascplan.case.load import load_case
from vascplan.paths import examples_dir
from vascplan.routes.plan import plan_case

ROOT = Path(__file__).resolve().parents[2]
TARGETS = [("L-SFA", 10), ("R-SFA", 15), ("L-POP", 6), ("R-ATA", 12), ("L-EIA", 4),
           ("R-CIA", 3), ("L-DPA", 2), ("AO-INFRA", 5)]


def generated_case(i: int, rng: random.Random) -> dict:
    """An invented case with a few lesions and a random target (refs GEN-nnnn)."""
    seg, at = rng.choice(TARGETS)
    lesions = []
    if rng.random() < 0.6:
        lesions.append({"segment": seg, "kind": "occlusion", "start_cm": max(0, at - 2),
                        "length_cm": 3, "proximal_cap": rng.choice(["tapered", "blunt", "flush"]),
                        "distal_cap": rng.choice(["tapered", "blunt", "flush"])})
    if rng.random() < 0.5:
        lesions.append({"segment": rng.choice(["L-CIA", "R-EIA", "L-CFA", "R-POP"]),
                        "kind": "stenosis", "stenosis_pct": rng.choice([30, 50, 70]),
                        "start_cm": 1, "length_cm": 1, "calcification": "moderate"})
    data = {
        "format": "vascplan-case/1",
        "patient": {"ref": f"GEN-{i:04d}", "sex": rng.choice(["female", "male"]),
                    "height_cm": rng.randint(150, 195), "anticoagulated": rng.random() < 0.3},
        "vessels": {"R-CFA": {"diameter_mm": round(rng.uniform(6, 10), 1)},
                    "L-CFA": {"diameter_mm": round(rng.uniform(6, 10), 1)}},
        "lesions": lesions,
        "procedure": {"purpose": "treat", "target": {"segment": seg, "at_cm": at},
                      "sheath": {"size_fr": rng.choice([4, 5, 6, 7, 8]), "length_cm": 11},
                      "device": {"profile_fr": 5, "working_length_cm": rng.choice([90, 135, 150])}},
    }
    if rng.random() < 0.2:
        data["grafts"] = [{"name": "fem-pop", "from": "L-CFA", "from_cm": 3, "to": "L-POP",
                           "to_cm": 10, "diameter_mm": 6}]
    return data


def _best_of(fn, repeat: int) -> float:
    fn()
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def test_planning_time_per_case(tmp_path):
    files = sorted(examples_dir().glob("case-*.yaml"))
    gen = tmp_path / "case-GEN-0000.yaml"
    gen.write_text(yaml.safe_dump(generated_case(0, random.Random(7))), encoding="utf-8")
    print("\nplanning time per case (floor: load and validate the same file)")
    for path in [*files, gen]:
        floor = _best_of(lambda p=path: load_case(p), 20)
        total = _best_of(lambda p=path: plan_case(load_case(p)), 10)
        routes = plan_case(load_case(path)).routes_total
        print(f"  {path.name:42s} floor {floor * 1e3:7.2f} ms  load+plan {total * 1e3:7.2f} ms"
              f"  ratio {total / floor:6.1f}  ({routes} routes)")
        assert total / floor < 2000  # loose


def test_jsonl_over_1000_files(tmp_path):
    rng = random.Random(2026)
    files = []
    for i in range(1000):
        p = tmp_path / f"case-GEN-{i:04d}.yaml"
        p.write_text(yaml.safe_dump(generated_case(i, rng)), encoding="utf-8")
        files.append(str(p))

    def run(*args: str) -> float:
        start = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "vascplan", *args], cwd=ROOT,
                              capture_output=True, check=False)
        elapsed = time.perf_counter() - start
        assert proc.returncode == 0, proc.stderr.decode()[:500]
        if args[0] == "plan":
            lines = proc.stdout.decode().splitlines()
            assert len(lines) == 1000
        return elapsed

    floor = run("validate", *files)
    plan = run("plan", "--format", "jsonl", *files)
    print(f"\n1,000 case files: validate {floor:6.2f} s (floor), plan --format jsonl "
          f"{plan:6.2f} s, ratio {plan / floor:5.1f}, {plan:.3f} s in all")
    assert plan / floor < 500  # loose
