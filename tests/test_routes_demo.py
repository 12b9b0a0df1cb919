"""The planner's demo step: every example case planned, JSON written atomically."""

from __future__ import annotations

import json

from vascplan.paths import examples_dir
from vascplan.routes.demo import demo_plans
from vascplan.safety import CAUTION


def test_demo_plans_every_example(tmp_path):
    written = demo_plans(tmp_path)
    cases = sorted(examples_dir().glob("case-*.yaml"))
    jsons = [p for p in written if p.suffix == ".json"]
    assert len(jsons) == len(cases) >= 3
    for path in jsons:
        data = json.loads(path.read_text(encoding="utf-8"))
        assert data["caution"] == CAUTION and data["routes"]
        assert any(r["feasible"] for r in data["routes"]), path.name
    assert not list(tmp_path.glob(".*.tmp"))
