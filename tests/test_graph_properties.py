"""Properties of the arterial tree that must hold for any valid case (hypothesis)."""

from __future__ import annotations

import networkx as nx
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from vascplan.anatomy.graph import build_tree
from vascplan.case.model import Case
from vascplan.refdata.anatomy import ROOT_ID, load_reference

REF = load_reference()
IDS = list(REF)
GRADES = ["none", "mild", "moderate", "severe"]
SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _stretch(draw, length_cm: float) -> tuple[float, float]:
    start = draw(st.floats(0, length_cm, allow_nan=False))
    end = draw(st.floats(start, length_cm, allow_nan=False))
    return start, end


def _lesion(draw, seg: str, length_cm: float) -> dict:
    start = draw(st.floats(0, length_cm * 0.9, allow_nan=False))
    length = draw(st.floats(0.1, max(0.1, length_cm - start), allow_nan=False))
    if start + length > length_cm:
        length = length_cm - start
    if draw(st.booleans()):
        return {
            "segment": seg,
            "kind": "occlusion",
            "start_cm": start,
            "length_cm": length,
            "calcification": draw(st.sampled_from(GRADES)),
            "proximal_cap": draw(st.sampled_from(["tapered", "blunt", "flush"])),
        }
    return {
        "segment": seg,
        "kind": "stenosis",
        "start_cm": start,
        "length_cm": length,
        "stenosis_pct": draw(st.floats(0, 99.9, allow_nan=False)),
    }


@st.composite
def cases(draw) -> tuple[Case, dict]:
    sex = draw(st.sampled_from(["female", "male", "unspecified"]))
    height = draw(st.floats(100, 230, allow_nan=False))
    vessels: dict[str, dict] = {}
    for seg in draw(st.lists(st.sampled_from(IDS), max_size=8, unique=True)):
        r = REF[seg]
        entry: dict = {}
        if draw(st.booleans()):
            entry["diameter_mm"] = draw(st.floats(r.diameter_min_mm, r.diameter_max_mm))
        if draw(st.booleans()):
            entry["length_cm"] = draw(st.floats(1.0, 60.0))
        if draw(st.booleans()):
            entry["calcification"] = draw(st.sampled_from(GRADES))
        vessels[seg] = entry
    data = {
        "format": "vascplan-case/1",
        "patient": {"ref": "DEMO-P", "sex": sex, "height_cm": height},
        "vessels": vessels,
    }
    lengths = Case.model_validate(data).segment_lengths_cm()
    lesions = [
        _lesion(draw, s, lengths[s]) for s in draw(st.lists(st.sampled_from(IDS), max_size=5))
    ]
    stents = []
    for seg in draw(st.lists(st.sampled_from(IDS), max_size=3)):
        start, end = _stretch(draw, lengths[seg])
        if end - start > 0.01:
            stents.append(
                {
                    "segment": seg,
                    "start_cm": start,
                    "length_cm": end - start,
                    "diameter_mm": draw(
                        st.floats(REF[seg].diameter_min_mm, REF[seg].diameter_max_mm)
                    ),
                }
            )
    grafts = []
    for i, (a, b) in enumerate(
        draw(st.lists(st.tuples(st.sampled_from(IDS), st.sampled_from(IDS)), max_size=2))
    ):
        if a != b:
            grafts.append(
                {
                    "name": f"g{i}",
                    "from": a,
                    "from_cm": draw(st.floats(0, lengths[a])),
                    "to": b,
                    "to_cm": draw(st.floats(0, lengths[b])),
                    "diameter_mm": draw(st.floats(3, 30)),
                    "patent": draw(st.booleans()),
                }
            )
    data.update(lesions=lesions, stents=stents, grafts=grafts)
    return Case.model_validate(data), data


@SETTINGS
@given(cases())
def test_any_valid_case_builds_a_connected_graph_reaching_the_root(case_and_data):
    case, _ = case_and_data
    tree = build_tree(case)
    assert nx.is_connected(tree.graph)
    reachable = nx.descendants(tree.directed, ROOT_ID) | {ROOT_ID}
    assert reachable == set(tree.graph)
    for node in tree.graph:
        assert tree.path_to_root(node)[-1] == ROOT_ID


@SETTINGS
@given(cases(), st.data())
def test_mld_never_exceeds_vessel_diameter(case_and_data, data):
    tree = build_tree(case_and_data[0])
    for seg in data.draw(st.lists(st.sampled_from(list(tree.graph)), min_size=1, max_size=6)):
        node = tree.segment(seg)
        start, end = _stretch(data.draw, node["length_cm"])
        mld = tree.mld(seg, start, end)
        assert 0.0 <= mld <= node["diameter_mm"]
        # A longer stretch can only narrow the minimum.
        assert tree.mld(seg) <= mld


@SETTINGS
@given(cases(), st.data())
def test_adding_a_lesion_never_widens_an_mld(case_and_data, data):
    case, raw = case_and_data
    before = build_tree(case)
    seg = data.draw(st.sampled_from(IDS))
    extra = _lesion(data.draw, seg, before.segment(seg)["length_cm"])
    after = build_tree(Case.model_validate({**raw, "lesions": [*raw["lesions"], extra]}))
    for probe in data.draw(st.lists(st.sampled_from(IDS), min_size=1, max_size=6)) + [seg]:
        start, end = _stretch(data.draw, before.segment(probe)["length_cm"])
        assert after.mld(probe, start, end) <= before.mld(probe, start, end)
