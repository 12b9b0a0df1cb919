"""Benchmarks of registry-scale planning and of the planner's speed (issue 16, goals 2, 3, 5).

Not run by default. Run with::

    .venv/bin/python -m pytest tests/bench/bench_plan_scale.py -q -s

Each test prints its figure, the floor measured in the same run, the ratio and the goal:

1. marginal plan time per case (read, parse, validate, plan, serialise: one worker's
   work) against the C-loader YAML parse of the same file; goal <= 5x;
2. planning a case with 32 grafts (and 0, 8, 16, to show the growth); goal < 50 ms;
3. ``plan --jobs 2`` against ``--jobs 1`` on a generated registry (400 cases by
   default); goal speed-up >= 0.8 x 2 = 1.6 on 2 cores. The CPU time of both runs is
   printed too: on a machine shared with other work the wall-clock ratio says more
   about the neighbours than about the code;
4. peak memory of ``plan --jobs 2 --files-from -`` over 1,000 and 10,000 generated
   cases (set ``VASCPLAN_BENCH_CASES=100000`` for the large run); goal: flat;
5. ``vascplan validate`` start-up against ``python -c "import yaml, pydantic"`` plus
   the C-loader parse of the same file; goal <= 1.5x.

The registry generator (tests/registry_cases.py) is seeded and invented. Loose
assertions only: figures, not gates.
"""

from __future__ import annotations

import os
import random
import statistics
import subprocess
import sys
import time
from pathlib import Path

import pytest
import yaml

from tests.registry_cases import graft_case, registry_case
from vascplan.case.load import validate_case
from vascplan.paths import examples_dir
from vascplan.routes.batch import _Job, plan_one
from vascplan.routes.plan import plan_case

ROOT = Path(__file__).resolve().parents[2]
LARGE = int(os.environ.get("VASCPLAN_BENCH_CASES", "10000"))
DUMPER = getattr(yaml, "CSafeDumper", yaml.SafeDumper)
LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def _best(fn, repeat: int) -> float:
    fn()
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return min(times)


def _write_registry(folder: Path, n: int, seed: int = 2026) -> list[str]:
    rng = random.Random(seed)
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for i in range(n):
        p = folder / f"case-REG-{i:06d}.yaml"
        if not p.exists():
            p.write_text(yaml.dump(registry_case(i, rng), Dumper=DUMPER), encoding="utf-8")
        else:
            registry_case(i, rng)  # keep the generator's sequence
        paths.append(str(p))
    return paths


@pytest.fixture(scope="module")
def registry_dir(tmp_path_factory):
    return tmp_path_factory.mktemp("registry")


def test_marginal_plan_time_against_the_c_parse(tmp_path):
    graft = tmp_path / "case-GRAFT-8.yaml"
    graft.write_text(yaml.dump(graft_case(8, 1), Dumper=DUMPER), encoding="utf-8")
    reg = _write_registry(tmp_path / "reg", 3)
    job = _Job({}, {}, None)
    print("\nmarginal plan time per case (floor: C-loader YAML parse of the same file; "
          "goal <= 5x)")
    for path in [*sorted(examples_dir().glob("case-*.yaml")), *map(Path, reg), graft]:
        text = path.read_text(encoding="utf-8")
        floor = _best(lambda t=text: yaml.load(t, Loader=LOADER), 30)  # noqa: S506
        total = _best(lambda p=str(path): plan_one(p, job), 15)
        print(f"  {path.name:40s} parse {floor * 1e3:6.2f} ms  plan {total * 1e3:7.2f} ms"
              f"  ratio {total / floor:5.1f}  (goal <= 5)")
        assert total / floor < 1000  # loose


def test_graft_count_growth():
    print("\nplanning time against the number of grafts (goal: 32 grafts < 50 ms)")
    for n in (0, 8, 16, 32):
        times = []
        for seed in (1, 2, 3):
            case = validate_case("bench", graft_case(n, seed))
            times.append(_best(lambda c=case: plan_case(c), 5))
        worst = max(times)
        goal = "  (goal < 50 ms)" if n == 32 else ""
        print(f"  {n:2d} grafts: {statistics.median(times) * 1e3:6.1f} ms median of 3 seeds, "
              f"{worst * 1e3:6.1f} ms worst{goal}")
        assert worst < 5  # loose


def _child_run(paths: list[str], jobs: int) -> tuple[float, float, int]:
    """Wall time, CPU time (parent and workers) and peak RSS [kB] of one plan run.

    Measured from a fresh process that runs the command, so the rusage of its children
    is this run's alone (ru_maxrss: the largest process of the run).
    """
    code = (
        "import json, os, subprocess, sys, time, resource\n"
        "paths = sys.stdin.read()\n"
        "t = time.perf_counter()\n"
        "p = subprocess.run([sys.executable, '-m', 'vascplan', 'plan', '--format', 'jsonl',"
        " '--files-from', '-', '--jobs', sys.argv[1]], input=paths.encode(),"
        " stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)\n"
        "wall = time.perf_counter() - t\n"
        "u = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
        "print(json.dumps([p.returncode, wall, u.ru_utime + u.ru_stime, u.ru_maxrss,"
        " p.stderr.decode()[:300]]))\n"
    )
    proc = subprocess.run([sys.executable, "-c", code, str(jobs)], cwd=ROOT,
                          input=("\n".join(paths) + "\n").encode(), capture_output=True,
                          check=True)
    import json

    rc, wall, cpu, rss, err = json.loads(proc.stdout)
    assert rc == 0, err
    return wall, cpu, rss


def test_jobs_2_speed_up(registry_dir):
    paths = _write_registry(registry_dir, 400)
    _child_run(paths[:20], 1)  # warm the caches
    w1, c1, _ = _child_run(paths, 1)
    w2, c2, _ = _child_run(paths, 2)
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    print(f"\nplan --format jsonl, {len(paths)} generated cases, {cores} cores: "
          f"--jobs 1 {w1:6.2f} s wall ({c1:6.2f} s CPU), --jobs 2 {w2:6.2f} s wall "
          f"({c2:6.2f} s CPU)\n  speed-up {w1 / w2:4.2f} (goal >= 1.6 on 2 cores); "
          f"CPU overhead of the workers {c2 / c1:4.2f}x; "
          f"load average {os.getloadavg()[0]:.1f}")
    assert w1 / w2 > 0.3  # loose


def test_peak_memory_flat_in_the_number_of_cases(registry_dir):
    sizes = [1000, LARGE]
    paths = _write_registry(registry_dir, max(sizes))
    print("\npeak memory of plan --jobs 2 (largest process of the run; goal: flat)")
    peaks = []
    for n in sizes:
        wall, _cpu, rss = _child_run(paths[:n], 2)
        peaks.append(rss)
        print(f"  {n:7,d} cases: peak {rss / 1024:6.1f} MB, {wall:6.1f} s "
              f"({wall / n * 1e3:5.2f} ms per case)")
    print(f"  ratio {peaks[-1] / peaks[0]:4.2f} (goal about 1.0)")
    assert peaks[-1] / peaks[0] < 3  # loose


def test_validate_start_up_against_bare_imports_and_the_parse():
    example = str(examples_dir() / "case-DEMO-07-sfa-occlusion.yaml")
    floor_cmd = [sys.executable, "-c", "import sys, yaml, pydantic; yaml.load(open(sys.argv[1])"
                 ".read(), Loader=getattr(yaml, 'CSafeLoader', yaml.SafeLoader))", example]
    validate_cmd = [sys.executable, "-m", "vascplan", "validate", example]

    def once(cmd):
        start = time.perf_counter()
        subprocess.run(cmd, cwd=ROOT, check=True, stdout=subprocess.DEVNULL)
        return time.perf_counter() - start

    once(floor_cmd), once(validate_cmd)
    floor, validate = [], []
    for _ in range(15):  # interleaved, so machine load hits both alike
        floor.append(once(floor_cmd))
        validate.append(once(validate_cmd))
    f, v = statistics.median(floor), statistics.median(validate)
    print(f"\nvalidate start-up: {v * 1e3:6.1f} ms median, floor (import yaml, pydantic + "
          f"parse) {f * 1e3:6.1f} ms, ratio {v / f:4.2f} (goal <= 1.5); "
          f"fastest {min(validate) / min(floor):4.2f}")
    assert v / f < 10  # loose
