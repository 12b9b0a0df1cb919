"""The planner's demo step: every example case planned, JSON written atomically."""

from __future__ import annotations

import json

from vascplan.demo.routes import demo_plans
from vascplan.paths import examples_dir
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


def test_every_blocked_route_says_which_limit_and_where():
    from vascplan.anatomy.graph import build_tree
    from vascplan.case.load import load_case
    from vascplan.routes.limits import REASON_CODES
    from vascplan.routes.plan import plan_case

    for path in sorted(examples_dir().glob("case-*.yaml")):
        case = load_case(path)
        nodes = set(build_tree(case).graph.nodes)
        for route in plan_case(case).routes:
            assert route.feasible == (not route.blocked_by)
            for block in route.blocked_by:
                assert block.code in REASON_CODES
                assert block.segment in nodes, (path.name, block)
                assert block.detail
