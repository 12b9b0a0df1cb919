"""Acceptance tests for issue 3 (access route planner, ``vascplan plan``).

Black-box: written from the issue text and the README before reading the planner. Inputs are
invented cases of our own (pseudonymous refs DEMO-3x); each expected verdict is worked out by
hand in the comments.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import yaml
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from vascplan.cli import cli
from vascplan.safety import CAUTION

# Drillis & Contini body-segment fraction of the thigh (hip to knee): 0.530 H - 0.285 H =
# 0.245 H (Winter, Biomechanics and Motor Control of Human Movement, Fig 4.1; from memory).
THIGH_FRACTION = 0.245


def _case(**over: Any) -> dict[str, Any]:
    """A man of 175 cm with a 60% right SFA stenosis at 8-12 cm (the target, at 10 cm)."""
    case: dict[str, Any] = {
        "format": "vascplan-case/1",
        "patient": {"ref": "DEMO-31", "sex": "male", "height_cm": 175},
        "vessels": {
            "R-CFA": {"diameter_mm": 8.0, "length_cm": 4.0},
            "L-CFA": {"diameter_mm": 8.5, "length_cm": 4.0},
            "R-SFA": {"diameter_mm": 6.0, "length_cm": 28.0},
            "L-RAD": {"diameter_mm": 2.2},
        },
        "lesions": [
            {"segment": "R-SFA", "kind": "stenosis", "stenosis_pct": 60,
             "start_cm": 8, "length_cm": 4},
        ],
        "procedure": {
            "purpose": "treat",
            "target": {"segment": "R-SFA", "at_cm": 10},
            "sheath": {"size_fr": 6, "length_cm": 45, "outer_mm": 2.62},
            "device": {"profile_fr": 6, "working_length_cm": 150},
            # issue 12: the 45 cm sheath is the up-and-over one; the antegrade groin takes
            # an 11 cm one (a 45 cm sheath would pass the target: sheath-too-long)
            "access_equipment": [{"site": "R-CFA", "direction": "antegrade", "size_fr": 6,
                                  "length_cm": 11, "outer_mm": 2.62}],
        },
    }
    for key, value in over.items():
        case[key] = value
    return case


def _write(tmp: Path, case: dict[str, Any], name: str = "case.yaml") -> Path:
    path = tmp / name
    path.write_text(yaml.safe_dump(case, sort_keys=False), encoding="utf-8")
    return path


def _plan(path: Path, *extra: str) -> dict[str, Any]:
    result = CliRunner().invoke(cli, ["plan", str(path), "--format", "json", *extra])
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def _routes(doc: dict[str, Any], site: str, direction: str | None = None) -> list[dict]:
    return [r for r in doc["routes"]
            if r["site"] == site and (direction is None or r["direction"] == direction)]


def _codes(route: dict[str, Any]) -> set[str]:
    return {b["code"] for b in route["blocked_by"]}


def test_json_contract_keys_types_and_order(tmp_path: Path) -> None:
    # Keys and types from the JSON block and item 7.
    doc = _plan(_write(tmp_path, _case()))
    assert doc["case"] == "DEMO-31"
    assert doc["target"]["segment"] == "R-SFA" and doc["target"]["at_cm"] == 10
    assert doc["caution"] == CAUTION
    assert isinstance(doc["pairs"], list) and isinstance(doc["assumptions"], list)
    assert doc["routes"]
    for r in doc["routes"]:
        assert isinstance(r["rank"], int)
        assert r["direction"] in ("retrograde", "antegrade")
        assert isinstance(r["feasible"], bool)
        assert isinstance(r["path"], list) and all(isinstance(n, str) for n in r["path"])
        unreachable = "unreachable" in _codes(r)
        # an unreachable route has no path, so no length (our reading of the contract)
        assert isinstance(r["length_cm"], (int, float)) or unreachable
        # target is a stenosis, not an occlusion: approach "none" (issue item 7)
        assert r["approach"] == "none"
        assert isinstance(r["score"], (int, float))
        for f in r["factors"]:
            assert set(f) >= {"name", "points", "detail"}
        if r["feasible"]:
            assert r["blocked_by"] == []
        else:
            assert r["blocked_by"], r
            for b in r["blocked_by"]:
                assert set(b) >= {"code", "segment", "detail"} and b["detail"]
    ranks = [r["rank"] for r in doc["routes"]]
    assert ranks == list(range(1, len(ranks) + 1))
    feas = [r["feasible"] for r in doc["routes"]]
    # feasible routes first, best score first (issue item 7; README: lower is better)
    assert feas == sorted(feas, reverse=True)
    # issue 12: within the feasible ones, therapeutic before crossing, then the tier of
    # the ordering rules (data/access/order.yaml; common practice), then the score
    scores = [(r["role"] != "therapeutic", r["tier"], r["score"])
              for r in doc["routes"] if r["feasible"]]
    assert scores == sorted(scores)
    # the path runs from the puncture segment to the target segment
    for r in doc["routes"]:
        if "unreachable" not in _codes(r):
            assert r["path"][-1] == "R-SFA"


def test_sar_hand_computed_ipsilateral_antegrade(tmp_path: Path) -> None:
    # R-CFA antegrade: the sheath (11 cm - 4 cm skin, stated for this access) runs down
    # R-CFA (8.0 mm) into R-SFA (6.0 mm) and stops short of the target stenosis at 8 cm:
    # MLD 6.0 mm.
    # SAR = 2.62 / 6.0 = 0.437 (SAR definition: sheath OD / MLD, issue item 3).
    doc = _plan(_write(tmp_path, _case()))
    (r,) = _routes(doc, "R-CFA", "antegrade")
    assert r["feasible"] is True
    assert abs(r["sheath_od_mm"] - 2.62) < 0.005
    assert abs(r["min_lumen_mm"] - 6.0) < 0.005
    assert abs(r["sar"] - 2.62 / 6.0) < 0.01


def test_path_length_follows_anthropometric_proportions(tmp_path: Path) -> None:
    # README: SFA = 0.65 of the thigh, thigh = 0.245 H (Drillis & Contini in Winter).
    # Target R-POP at 1 cm; R-CFA antegrade, CFA measured 4.0 cm, puncture at 0.5 -> 2.0 cm
    # of CFA, skin allowance 4 cm (sites.csv). Height 170: SFA 0.65*0.245*170 = 27.07 cm.
    # Length = 4 + 2.0 + 27.07 + 1 = 34.07 cm.
    case = _case()
    case["patient"]["height_cm"] = 170
    del case["vessels"]["R-SFA"]["length_cm"]
    case["lesions"] = []
    case["procedure"]["target"] = {"segment": "R-POP", "at_cm": 1}
    doc = _plan(_write(tmp_path, case))
    (r,) = _routes(doc, "R-CFA", "antegrade")
    expected = 4 + 2.0 + 0.65 * THIGH_FRACTION * 170 + 1
    assert abs(r["length_cm"] - expected) < 0.3
    assert "length_cm" in r["assumed"]  # the SFA length is a reference value


def test_sar_limit_at_published_threshold(tmp_path: Path) -> None:
    # Limits by site (issue 11): the radial is judged against the arm-artery limit, not
    # the transfemoral 1.05. Saito et al., Catheter Cardiovasc Interv 1999;46:173: radial
    # flow loss rose when the radial inner diameter was below the sheath outer diameter,
    # i.e. SAR above 1.0. L-RAD measured 2.0 mm; sheath outer 2.10 mm -> SAR 1.05 ->
    # blocked ("at or above" 1.00).
    case = _case()
    case["vessels"]["L-RAD"] = {"diameter_mm": 2.0}
    case["procedure"]["sheath"]["outer_mm"] = 2.10
    case["procedure"]["sheath"]["size_fr"] = 5
    doc = _plan(_write(tmp_path, case))
    for r in _routes(doc, "L-RAD"):
        assert r["feasible"] is False
        sheath = [b for b in r["blocked_by"] if b["code"] == "sheath-too-large"]
        assert sheath and sheath[0]["segment"] == "L-RAD"
        assert "Saito" in sheath[0]["detail"]
    assert all(r["sar_limit"] == 1.0 and "Saito" in r["sar_limit_source"]
               for r in _routes(doc, "L-RAD"))
    # 2.10 / 2.2 = 0.955 below 1.00: the same sheath fits an uncalcified 2.2 mm radial
    case["vessels"]["L-RAD"] = {"diameter_mm": 2.2}
    doc = _plan(_write(tmp_path, case))
    assert all("sheath-too-large" not in _codes(r) for r in _routes(doc, "L-RAD"))


def test_calcified_stretch_lowers_the_sar_limit(tmp_path: Path) -> None:
    # R-CFA antegrade: the sheath occupies R-CFA (8.0 mm) and R-SFA up to the target
    # stenosis at 8 cm (6.0 mm, both measured). Sheath outer 6.1 mm: SAR 6.1 / 6.0 = 1.017,
    # under the transfemoral 1.05 (Hayashida et al. 2011) but at or over the calcified
    # limit 1.00 (limits.yaml) once the SFA is severely calcified.
    case = _case()
    case["procedure"]["sheath"].update(size_fr=16, outer_mm=6.1)
    case["procedure"]["access_equipment"][0].update(size_fr=16, outer_mm=6.1)
    doc = _plan(_write(tmp_path, case))
    (r,) = _routes(doc, "R-CFA", "antegrade")
    assert "sheath-too-large" not in _codes(r) and r["sar_limit"] == 1.05
    case["vessels"]["R-SFA"]["calcification"] = "severe"
    doc = _plan(_write(tmp_path, case))
    (r,) = _routes(doc, "R-CFA", "antegrade")
    assert "sheath-too-large" in _codes(r) and r["sar_limit"] == 1.0


def test_sar_limit_override_on_command_line(tmp_path: Path) -> None:
    # R-CFA antegrade SAR 0.44 (above); a limit of 0.4 blocks it.
    doc = _plan(_write(tmp_path, _case()), "--limit", "sar_max=0.4")
    (r,) = _routes(doc, "R-CFA", "antegrade")
    assert "sheath-too-large" in _codes(r)


def test_radial_sheath_too_large(tmp_path: Path) -> None:
    # L-RAD 2.2 mm measured, 6 Fr sheath outer 2.62 mm: SAR 1.19 >= 1.05 -> blocked at L-RAD.
    doc = _plan(_write(tmp_path, _case()))
    rad = _routes(doc, "L-RAD")
    assert rad
    for r in rad:
        assert not r["feasible"]
        assert any(b["code"] == "sheath-too-large" and b["segment"] == "L-RAD"
                   for b in r["blocked_by"])


def test_too_short(tmp_path: Path) -> None:
    # Working length 40 cm. R-CFA antegrade: 4 + 2 + 10 = 16 cm + 10 outside = 26 <= 40: ok.
    # L-CFA retrograde up-and-over: 4 + 2 + L-EIA 9 + L-CIA 6 + R-CIA 6 + R-EIA 9 + R-CFA 4
    # + 10 = 50 cm, + 10 outside = 60 > 40: too-short.
    case = _case()
    case["procedure"]["device"]["working_length_cm"] = 40
    doc = _plan(_write(tmp_path, case))
    (ante,) = _routes(doc, "R-CFA", "antegrade")
    assert ante["feasible"]
    cross = _routes(doc, "L-CFA", "retrograde")
    assert cross and all("too-short" in _codes(r) for r in cross)


def test_occlusion_en_route(tmp_path: Path) -> None:
    # An occlusion of the left CIA blocks the up-and-over route from the left groin.
    case = _case()
    case["lesions"].append({"segment": "L-CIA", "kind": "occlusion", "start_cm": 1,
                            "length_cm": 3})
    doc = _plan(_write(tmp_path, case))
    cross = _routes(doc, "L-CFA", "retrograde")
    assert cross
    for r in cross:
        assert not r["feasible"]
        assert any(b["code"] == "occlusion-en-route" and b["segment"] == "L-CIA"
                   for b in r["blocked_by"])
    # the ipsilateral antegrade route does not pass the left CIA
    (ante,) = _routes(doc, "R-CFA", "antegrade")
    assert ante["feasible"]


def test_site_avoided(tmp_path: Path) -> None:
    case = _case(avoid=[{"site": "R-CFA", "reason": "groin infection"}])
    doc = _plan(_write(tmp_path, case))
    rcfa = _routes(doc, "R-CFA")
    assert rcfa and all("site-avoided" in _codes(r) for r in rcfa)
    assert all(not r["feasible"] for r in rcfa)


def test_site_diseased_by_stent_in_puncture_zone(tmp_path: Path) -> None:
    # R-CFA 4.0 cm measured, puncture at 0.5 -> 2.0 cm; stent 1.5-3.0 cm covers it.
    case = _case(stents=[{"segment": "R-CFA", "start_cm": 1.5, "length_cm": 1.5,
                          "diameter_mm": 8}])
    doc = _plan(_write(tmp_path, case))
    rcfa = _routes(doc, "R-CFA")
    assert rcfa
    for r in rcfa:
        assert any(b["code"] == "site-diseased" and b["segment"] == "R-CFA"
                   for b in r["blocked_by"])


def test_no_crossover_with_kissing_iliac_stents(tmp_path: Path) -> None:
    # Kissing stents at both CIA origins cover the bifurcation (README, no-crossover).
    case = _case(stents=[
        {"segment": "R-CIA", "start_cm": 0, "length_cm": 4, "diameter_mm": 9},
        {"segment": "L-CIA", "start_cm": 0, "length_cm": 4, "diameter_mm": 9},
    ])
    doc = _plan(_write(tmp_path, case))
    cross = _routes(doc, "L-CFA", "retrograde")
    assert cross and all("no-crossover" in _codes(r) for r in cross)


def test_unreachable_from_other_leg_below_groin(tmp_path: Path) -> None:
    # A puncture of the left mid-thigh SFA serves its own leg only: the right SFA is
    # unreachable from it (README, sites).
    doc = _plan(_write(tmp_path, _case()), "--all")  # unreachable rows: --all (issue 12)
    lsfa = _routes(doc, "L-SFA")
    assert lsfa and all("unreachable" in _codes(r) for r in lsfa)


def test_device_too_large_beyond_sheath_tip(tmp_path: Path) -> None:
    # Target L-ATA at 5 cm (no lesion). Short 11 cm sheath from the left groin antegrade sits
    # in the CFA/SFA; an 8 Fr (2.67 mm outer) device must pass the 2.0 mm L-ATA.
    case = _case()
    case["lesions"] = []
    case["vessels"]["L-ATA"] = {"diameter_mm": 2.0}
    case["procedure"]["target"] = {"segment": "L-ATA", "at_cm": 5}
    case["procedure"]["sheath"] = {"size_fr": 8, "length_cm": 11}
    case["procedure"]["device"] = {"profile_fr": 8, "working_length_cm": 150}
    doc = _plan(_write(tmp_path, case))
    # the direct path (several may be listed, e.g. round the pedal loop)
    (ante,) = [r for r in _routes(doc, "L-CFA", "antegrade")
               if r["path"] == ["L-CFA", "L-SFA", "L-POP", "L-ATA"]]
    assert any(b["code"] == "device-too-large" and b["segment"] == "L-ATA"
               for b in ante["blocked_by"])


def test_dual_access_pairs_for_occlusion(tmp_path: Path) -> None:
    # Occlusion of the R-SFA 6-20 cm, target at 12 cm: pairs of feasible routes, one to each
    # cap, no shared puncture (issue item 5).
    case = _case()
    case["lesions"] = [{"segment": "R-SFA", "kind": "occlusion", "start_cm": 6,
                        "length_cm": 14, "proximal_cap": "flush", "distal_cap": "tapered"}]
    case["procedure"]["target"] = {"segment": "R-SFA", "at_cm": 12}
    doc = _plan(_write(tmp_path, case))
    approaches = {r["approach"] for r in doc["routes"] if "unreachable" not in _codes(r)}
    assert approaches <= {"proximal-cap", "distal-cap"}
    assert doc["pairs"]
    feasible = {(r["site"], r["direction"]) for r in doc["routes"] if r["feasible"]}
    for p in doc["pairs"]:
        assert p["proximal"]["site"] != p["distal"]["site"]
        assert (p["proximal"]["site"], p["proximal"]["direction"]) in feasible
        assert (p["distal"]["site"], p["distal"]["direction"]) in feasible
    # antegrade from the same groin arrives at the proximal cap; a popliteal puncture
    # below the occlusion arrives at the distal cap
    (ante,) = _routes(doc, "R-CFA", "antegrade")
    assert ante["approach"] == "proximal-cap"
    assert all(r["approach"] == "distal-cap" for r in _routes(doc, "R-POP"))


def test_support_compares_four_axes(tmp_path: Path) -> None:
    # Support: 14 Fr (outer 5.6 mm) pump to the ascending aorta; both iliofemoral axes and
    # both axillary routes compared (issue item 6). R-EIA 5.0 mm: SAR 5.6/5.0 = 1.12 >= 1.05.
    case = _case()
    case["patient"]["ref"] = "DEMO-34"
    case["lesions"] = []
    case["vessels"] = {
        "R-CFA": {"diameter_mm": 7.5}, "R-EIA": {"diameter_mm": 5.0},
        "L-CFA": {"diameter_mm": 8.8}, "L-EIA": {"diameter_mm": 8.4},
        "R-AXA": {"diameter_mm": 6.9}, "L-AXA": {"diameter_mm": 6.6},
    }
    case["procedure"] = {
        "purpose": "support",
        "target": {"segment": "AO-ASC", "at_cm": 2},
        "sheath": {"size_fr": 14, "length_cm": 25, "outer_mm": 5.6},
        "device": {"profile_fr": 14, "working_length_cm": 120, "kind": "microaxial-pump"},
    }
    doc = _plan(_write(tmp_path, case))
    axes = {a["site"]: a for a in doc["support"]["axes"]}
    assert set(axes) == {"R-CFA", "L-CFA", "R-AXA", "L-AXA"}
    for a in axes.values():
        assert a["segments"] and all("sar" in s for s in a["segments"])
        assert "limiting_segment" in a
    assert axes["R-CFA"]["limiting_segment"] == "R-EIA"
    assert axes["R-CFA"]["feasible"] is False
    assert "advised" in axes["L-CFA"]["dpc"]


def test_jsonl_many_cases_and_top(tmp_path: Path) -> None:
    a = _write(tmp_path, _case(), "a.yaml")
    other = _case()
    other["patient"]["ref"] = "DEMO-32"
    b = _write(tmp_path, other, "b.yaml")
    result = CliRunner().invoke(cli, ["plan", str(a), str(b), "--format", "jsonl",
                                      "--top", "2"])
    assert result.exit_code == 0, result.output
    lines = [ln for ln in result.stdout.splitlines() if ln.strip()]
    assert len(lines) == 2
    docs = [json.loads(ln) for ln in lines]
    assert [d["case"] for d in docs] == ["DEMO-31", "DEMO-32"]
    assert all(len(d["routes"]) == 2 and d["caution"] == CAUTION for d in docs)


def test_table_flags_assumed_values_and_caution(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["plan", str(_write(tmp_path, _case()))])
    assert result.exit_code == 0, result.output
    out = result.stdout
    assert CAUTION in out
    assert "*" in out  # reference lengths flagged
    assert "BLOCKED" in out and "sheath-too-large" in out  # the radial route


def test_explain_site_lists_limits(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["plan", str(_write(tmp_path, _case())),
                                      "--explain", "L-RAD"])
    assert result.exit_code == 0, result.output
    assert "sheath-too-large" in result.stdout
    assert CAUTION in result.stdout


def test_unknown_weight_is_one_line_exit_2(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["plan", str(_write(tmp_path, _case())),
                                      "--weight", "crosover=2"])
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: --weight: crosover")
    assert "did you mean 'crossover'" in lines[0]
    assert "Traceback" not in result.output


def test_bad_case_field_is_one_line_exit_2(tmp_path: Path) -> None:
    case = _case()
    case["procedure"]["target"] = {"segment": "R-SFX", "at_cm": 10}
    path = _write(tmp_path, case)
    result = CliRunner().invoke(cli, ["plan", str(path)])
    assert result.exit_code == 2
    lines = result.output.strip().splitlines()
    assert len(lines) == 1, result.output
    assert lines[0].startswith(f"error: {path}: procedure.target.segment")
    assert "R-SFA" in lines[0]


def test_weight_override_changes_score(tmp_path: Path) -> None:
    # crossover weight 1.5 -> 10: the up-and-over route's crossover factor becomes 10.
    doc = _plan(_write(tmp_path, _case()), "--weight", "crossover=10")
    cross = [r for r in _routes(doc, "L-CFA", "retrograde")]
    assert cross
    pts = [f["points"] for r in cross for f in r["factors"] if f["name"] == "crossover"]
    assert pts and all(abs(p - 10) < 1e-6 for p in pts)


# --- properties (issue item 9) -------------------------------------------------------------

_SETTINGS = settings(max_examples=8, deadline=None,
                     suppress_health_check=[HealthCheck.function_scoped_fixture])


def _plan_obj(tmp: Path, case: dict[str, Any]) -> dict[str, Any]:
    return _plan(_write(tmp, case))


def _key(r: dict[str, Any]) -> tuple:
    return (r["site"], r["direction"], tuple(r["path"]))


@_SETTINGS
@given(d=st.floats(min_value=3.0, max_value=7.5), shrink=st.floats(min_value=0.3, max_value=1.5))
def test_narrowing_never_lowers_sar_or_unblocks(tmp_path: Path, d: float, shrink: float) -> None:
    wide = _case()
    wide["vessels"]["R-SFA"]["diameter_mm"] = round(d, 2)
    narrow = _case()
    narrow["vessels"]["R-SFA"]["diameter_mm"] = round(max(d - shrink, 2.5), 2)
    a = {_key(r): r for r in _plan_obj(tmp_path, wide)["routes"]}
    b = {_key(r): r for r in _plan_obj(tmp_path, narrow)["routes"]}
    for k, ra in a.items():
        rb = b.get(k)
        if rb is None:
            continue
        if ra["sar"] is not None and rb["sar"] is not None:
            assert rb["sar"] >= ra["sar"] - 1e-9
        if not ra["feasible"]:
            assert not rb["feasible"]


@_SETTINGS
@given(seg=st.sampled_from(["L-CIA", "R-EIA", "AO-INFRA", "L-SCA", "R-POP"]))
def test_adding_occlusion_never_unblocks(tmp_path: Path, seg: str) -> None:
    base = _plan_obj(tmp_path, _case())
    occl = _case()
    occl["lesions"].append({"segment": seg, "kind": "occlusion", "start_cm": 0.5,
                            "length_cm": 1})
    b = {_key(r): r for r in _plan_obj(tmp_path, occl)["routes"]}
    for r in base["routes"]:
        if not r["feasible"] and _key(r) in b:
            assert not b[_key(r)]["feasible"]


@_SETTINGS
@given(wl=st.integers(min_value=30, max_value=140), extra=st.integers(min_value=1, max_value=80))
def test_longer_shaft_never_blocks(tmp_path: Path, wl: int, extra: int) -> None:
    short = _case()
    short["procedure"]["device"]["working_length_cm"] = wl
    long_ = _case()
    long_["procedure"]["device"]["working_length_cm"] = wl + extra
    b = {_key(r): r for r in _plan_obj(tmp_path, long_)["routes"]}
    for r in _plan_obj(tmp_path, short)["routes"]:
        if r["feasible"] and _key(r) in b:
            assert b[_key(r)]["feasible"]


@_SETTINGS
@given(h=st.integers(min_value=150, max_value=200), dh=st.integers(min_value=1, max_value=25))
def test_taller_never_shortens_path(tmp_path: Path, h: int, dh: int) -> None:
    lo = _case()
    lo["patient"]["height_cm"] = h
    hi = _case()
    hi["patient"]["height_cm"] = h + dh
    b = {_key(r): r for r in _plan_obj(tmp_path, hi)["routes"]}
    for r in _plan_obj(tmp_path, lo)["routes"]:
        if _key(r) in b and r["length_cm"] is not None:
            assert b[_key(r)]["length_cm"] >= r["length_cm"] - 1e-9


def test_demo_plans_bundled_cases(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["demo", "--out", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    assert "DEMO-07" in result.output


# --- route finding through grafts, the pedal loop and the arch (issue item 2) ---------------


def _factor_names(route: dict[str, Any]) -> set[str]:
    return {f["name"] for f in route["factors"]}


def test_route_through_patent_graft_and_not_a_closed_one(tmp_path: Path) -> None:
    # R-SFA occluded 2-26 cm; a patent fem-pop graft from R-CFA (3 cm) to R-POP (6 cm).
    # Target R-POP at 10 cm: the antegrade groin route can go by the graft, so it is
    # feasible; with the graft closed every route down the SFA meets the occlusion.
    case = _case()
    case["lesions"] = [{"segment": "R-SFA", "kind": "occlusion", "start_cm": 2,
                        "length_cm": 24}]
    case["procedure"]["target"] = {"segment": "R-POP", "at_cm": 10}
    # inflow at 3.5 cm: outside the 1 cm puncture zone about the puncture at 2 cm
    # (issue 12: an anastomosis within it blocks the site as graft-anastomosis)
    graft = {"name": "fp-1", "from": "R-CFA", "from_cm": 3.5, "to": "R-POP", "to_cm": 6,
             "diameter_mm": 6, "patent": True}
    case["grafts"] = [graft]
    doc = _plan(_write(tmp_path, case))
    via = [r for r in _routes(doc, "R-CFA", "antegrade") if "GRAFT:fp-1" in r["path"]]
    assert via and via[0]["feasible"], via
    assert "graft_traversal" in _factor_names(via[0])
    graft["patent"] = False
    doc = _plan(_write(tmp_path, case))
    for r in _routes(doc, "R-CFA", "antegrade"):
        assert "GRAFT:fp-1" not in r["path"] or not r["feasible"]
        if "R-SFA" in r["path"]:
            assert "occlusion-en-route" in _codes(r)


def test_route_round_the_pedal_loop(tmp_path: Path) -> None:
    # Target R-DPA at 2 cm; the R-ATA is occluded at 10-20 cm, so the straight way down the
    # ATA meets an occlusion, and the antegrade groin route goes round the loop instead:
    # POP > TPT > PTA > plantar arch > DPA (README: paths round the pedal loop). A 3 Fr
    # (1.0 mm) device fits the 2.0 mm* arch.
    case = _case()
    case["lesions"] = [{"segment": "R-ATA", "kind": "occlusion", "start_cm": 10,
                        "length_cm": 10}]
    case["procedure"]["target"] = {"segment": "R-DPA", "at_cm": 2}
    case["procedure"]["sheath"] = {"size_fr": 6, "length_cm": 11, "outer_mm": 2.62}
    case["procedure"]["device"] = {"profile_fr": 3, "working_length_cm": 150}
    doc = _plan(_write(tmp_path, case), "--all")  # every path of a route: --all (issue 12)
    ante = _routes(doc, "R-CFA", "antegrade")
    loops = [r for r in ante if "R-PLA" in r["path"]]
    straight = [r for r in ante if "R-ATA" in r["path"]]
    assert loops and loops[0]["feasible"], loops
    assert loops[0]["path"][-4:] == ["R-TPT", "R-PTA", "R-PLA", "R-DPA"]
    assert "pedal_loop" in _factor_names(loops[0])
    assert straight and all("occlusion-en-route" in _codes(r) for r in straight)


def test_arm_routes_cross_the_arch_from_either_side(tmp_path: Path) -> None:
    # 5 Fr sheath outer 2.0 mm fits the 2.2 mm left radial (SAR 0.91); target R-SFA.
    case = _case()
    case["procedure"]["sheath"] = {"size_fr": 5, "length_cm": 10, "outer_mm": 2.0}
    case["procedure"]["device"] = {"profile_fr": 4, "working_length_cm": 200}
    doc = _plan(_write(tmp_path, case))
    left = _routes(doc, "L-RAD")
    right = _routes(doc, "R-RAD")
    assert left and right
    assert "L-SCA" in left[0]["path"] and "AO-ARCH" in left[0]["path"]
    assert "BCT" in right[0]["path"] and "R-SCA" in right[0]["path"]
    assert "arch_traversal" in _factor_names(left[0])
    assert "arch_traversal" in _factor_names(right[0])


def test_anticoagulation_and_prone_factors(tmp_path: Path) -> None:
    case = _case()
    case["lesions"] = [{"segment": "R-SFA", "kind": "occlusion", "start_cm": 6,
                        "length_cm": 10, "proximal_cap": "tapered", "distal_cap": "tapered"}]
    doc = _plan(_write(tmp_path, case))
    (ante,) = _routes(doc, "R-CFA", "antegrade")
    assert "anticoagulation" not in _factor_names(ante)
    pop = _routes(doc, "R-POP")
    assert pop and "prone" in _factor_names(pop[0])
    assert "approach_distal_cap" in _factor_names(pop[0])
    case["patient"]["anticoagulated"] = True
    doc = _plan(_write(tmp_path, case))
    (ante,) = _routes(doc, "R-CFA", "antegrade")
    assert "anticoagulation" in _factor_names(ante)


def test_plaque_in_puncture_zone_blocks_unless_limit_raised(tmp_path: Path) -> None:
    # Issue item 3: site-diseased = a stenosis in the puncture zone. R-CFA 4.0 cm, puncture
    # at 2.0 cm; a 20% plaque at 1.5-2.5 cm. With puncture_plaque_max_pct raised to 25 it
    # is punctured beside and scores puncture_plaque instead (README).
    case = _case()
    case["lesions"].append({"segment": "R-CFA", "kind": "stenosis", "stenosis_pct": 20,
                            "start_cm": 1.5, "length_cm": 1})
    path = _write(tmp_path, case)
    doc = _plan(path)
    assert all("site-diseased" in _codes(r) for r in _routes(doc, "R-CFA"))
    doc = _plan(path, "--limit", "puncture_plaque_max_pct=25")
    (ante,) = _routes(doc, "R-CFA", "antegrade")
    assert "site-diseased" not in _codes(ante)
    assert "puncture_plaque" in _factor_names(ante)
