"""``vascplan plan`` through click's CliRunner: exit codes, exact error lines, the JSON."""

from __future__ import annotations

import json

import pytest
import yaml
from click.testing import CliRunner

from tests.routes_cases import case_data
from vascplan.cli import cli
from vascplan.paths import examples_dir
from vascplan.safety import CAUTION

DEMO07 = str(examples_dir() / "case-DEMO-07-sfa-occlusion.yaml")
ROUTE_KEYS = {"rank", "site", "direction", "feasible", "path", "length_cm", "approach",
              "sheath_od_mm", "min_lumen_mm", "sar", "score", "blocked_by", "factors"}


def _run(*args):
    return CliRunner().invoke(cli, ["plan", *args])


def test_json_contract():
    res = _run(DEMO07, "--format", "json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    assert {"case", "target", "routes", "pairs", "assumptions", "caution"} <= set(data)
    assert data["case"] == "DEMO-07"
    assert data["target"]["segment"] == "L-SFA" and data["target"]["at_cm"] == 12
    assert data["caution"] == CAUTION
    for route in data["routes"]:
        assert set(route) >= ROUTE_KEYS
        assert route["direction"] in ("retrograde", "antegrade")
        assert route["approach"] in ("proximal-cap", "distal-cap", "none")
        assert route["feasible"] == (route["blocked_by"] == [])
        for b in route["blocked_by"]:
            assert set(b) == {"code", "segment", "detail"} and b["segment"] and b["detail"]
        for f in route["factors"]:
            assert set(f) == {"name", "points", "detail"}
    feasible = [r["feasible"] for r in data["routes"]]
    assert feasible == sorted(feasible, reverse=True)
    # the occlusion of DEMO-07 gets pairs
    assert data["pairs"]
    # the best route is the antegrade left groin to the proximal cap
    best = data["routes"][0]
    assert (best["site"], best["direction"], best["approach"]) == ("L-CFA", "antegrade",
                                                                   "proximal-cap")
    assert best["path"] == ["L-CFA", "L-SFA"]


def test_table_has_rank_verdict_reason_marks_and_caution():
    res = _run(DEMO07, "--top", "5")
    assert res.exit_code == 0
    lines = res.output.splitlines()
    assert lines[0].startswith("DEMO-07  treat: target L-SFA at 12 cm, in an occlusion")
    assert any(line.split()[:3] == ["rank", "site", "direction"] for line in lines)
    assert "path: down L-CFA L-SFA" in res.output
    assert "*" in res.output and "Caution: " + CAUTION in res.output
    assert "more routes not shown" in res.output


def test_jsonl_one_object_per_case(tmp_path):
    files = []
    for i in range(3):
        p = tmp_path / f"case-{i}.yaml"
        data = case_data(patient={"ref": f"REG-{i}"})
        p.write_text(yaml.safe_dump(data), encoding="utf-8")
        files.append(str(p))
    res = _run(*files, "--format", "jsonl", "--top", "2")
    assert res.exit_code == 0, res.output
    lines = res.output.strip().splitlines()
    assert [json.loads(x)["case"] for x in lines] == ["REG-0", "REG-1", "REG-2"]
    assert all(len(json.loads(x)["routes"]) == 2 for x in lines)


def test_explain_lists_every_limit_and_factor():
    res = _run(DEMO07, "--explain", "R-CFA")
    assert res.exit_code == 0
    assert "ok     sheath-too-large" in res.output
    assert "unreachable" in res.output and "BROKEN unreachable" in res.output  # antegrade
    assert "crossover: up-and-over" in res.output


def test_weight_and_limit_options_apply():
    # Every SAR limit (the transfemoral one and those by site) set to 0.3.
    by_site = [a for name in ("radial", "ulnar", "brachial", "axillary")
               for a in ("--limit", f"sar_max_{name}=0.3")]
    res = _run(DEMO07, "--format", "json", "--weight", "crossover=9", "--limit", "sar_max=0.3",
               *by_site)
    data = json.loads(res.output)
    assert data["weights"]["crossover"] == 9 and data["limits"]["sar_max"] == 0.3
    assert data["limits"]["sar_max_radial"] == 0.3
    assert all(not r["feasible"] for r in data["routes"])  # every SAR is above 0.3


def test_unknown_weight_exact_error_line():
    res = _run(DEMO07, "--weight", "crosover=2")
    assert res.exit_code == 2
    assert res.output.splitlines()[0].startswith(
        "error: --weight: crosover: unknown name (did you mean 'crossover'?); allowed: ")


def test_bad_assignment_exact_error_line():
    res = _run(DEMO07, "--limit", "sar_max")
    assert res.exit_code == 2
    assert res.output.strip() == ("error: --limit: sar_max: expected NAME=VALUE, "
                                  "for example sar_max=1.0")


def test_unknown_explain_site_exact_error_line():
    res = _run(DEMO07, "--explain", "L-CFX")
    assert res.exit_code == 2
    assert res.output.strip() == (
        "error: --explain: L-CFX: unknown site (did you mean 'L-CFA'?); allowed: a site id "
        "(R-CFA, R-RAD, R-RAD-DIST, R-BRA, R-AXA, R-SFA, R-POP, R-ATA, R-PTA, R-PER, R-DPA, "
        "L-CFA, L-RAD, L-RAD-DIST, L-BRA, L-AXA, L-SFA, L-POP, L-ATA, L-PTA, L-PER, L-DPA) "
        "or the segment id of one")


def test_unknown_weight_in_the_case_file(tmp_path):
    p = tmp_path / "case-bad.yaml"
    p.write_text(yaml.safe_dump(case_data(weights={"prone_": 1})), encoding="utf-8")
    res = _run(str(p))
    assert res.exit_code == 2
    assert res.output.strip().startswith(
        f"error: {p}: weights.prone_: unknown name (did you mean 'prone'?)")


def test_missing_file_exact_error_line():
    res = _run("no-such-case.yaml")
    assert res.exit_code == 2
    assert res.output.strip() == "error: no-such-case.yaml: file not found"


def test_help_has_an_example():
    res = _run("--help")
    assert res.exit_code == 0 and "vascplan plan vascplan/examples/" in res.output


def test_explain_accepts_lower_case_and_marks_unchecked_limits():
    res = _run(DEMO07, "--explain", "l-cfa", "--weight", "crossover=2")
    assert res.exit_code == 0, res.output
    assert ", crossover=2, " in res.output.split("weights used: ")[1].splitlines()[0]
    # L-CFA retrograde cannot reach the left SFA: the path limits are not checked.
    assert "BROKEN unreachable at L-CFA" in res.output
    assert "-      sheath-too-large (not checked: no path)" in res.output
    assert "ok     site-diseased" in res.output


def test_jsonl_many_cases_one_line_each(tmp_path):
    paths = []
    for i in range(3):
        data = case_data(patient={"ref": f"TEST-{i:02d}"})
        p = tmp_path / f"case-{i}.yaml"
        p.write_text(yaml.safe_dump(data), encoding="utf-8")
        paths.append(str(p))
    res = _run(*paths, DEMO07, "--format", "jsonl", "--top", "2")
    assert res.exit_code == 0, res.output
    lines = res.output.splitlines()
    assert [json.loads(line)["case"] for line in lines] == ["TEST-00", "TEST-01", "TEST-02",
                                                            "DEMO-07"]
    for line in lines:
        data = json.loads(line)
        assert len(data["routes"]) == 2 and data["caution"] == CAUTION
        assert all(set(r) >= ROUTE_KEYS for r in data["routes"])


def test_json_score_is_the_sum_of_the_points_shown_and_ranks_in_order():
    # The contract: score = sum of factors[].points; feasible first, lower score first.
    for path in sorted(examples_dir().glob("case-*.yaml")):
        res = _run(str(path), "--format", "json")
        assert res.exit_code == 0, res.output
        routes = json.loads(res.output)["routes"]
        for r in routes:
            assert r["score"] == pytest.approx(sum(f["points"] for f in r["factors"]),
                                               abs=1e-9)
            assert r["feasible"] == (r["blocked_by"] == [])
        assert [r["rank"] for r in routes] == list(range(1, len(routes) + 1))
        # issue 12: role, then tier (data/access/order.yaml), then the score
        feasible = [(r["role"] != "therapeutic", r["tier"], r["score"])
                    for r in routes if r["feasible"]]
        assert feasible == sorted(feasible)
        assert [r["feasible"] for r in routes] == sorted((r["feasible"] for r in routes),
                                                         reverse=True)


def test_one_bad_file_in_a_registry_review_prints_nothing_but_its_error(tmp_path):
    # table and json validate every file before any output: a bad file among many gives
    # its one error line and exit 2, with no partial output before it. (jsonl streams and
    # goes on: tests/test_cli_plan_batch.py.)
    bad = tmp_path / "bad.yaml"
    bad.write_text("format: vascplan-case/1\npatient: {ref: DEMO-99, sex: male, height_cm: 300}\n")
    res = _run(DEMO07, DEMO07, str(bad), "--format", "json")
    assert res.exit_code == 2
    assert res.stdout == ""
    assert res.stderr.startswith(f"error: {bad}: patient.height_cm: ")
