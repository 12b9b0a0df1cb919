"""The map's layout table and its geometry."""

from __future__ import annotations

import math

import pytest

from vascplan.refdata.anatomy import load_reference
from vascplan.reports.layout import Polyline, connection, map_layout, offset_points


def test_every_reference_segment_has_a_place():
    assert set(map_layout()) == set(load_reference())


def test_children_start_on_their_parent_where_the_anatomy_table_says():
    layout, ref = map_layout(), load_reference()
    for sid, seg in ref.items():
        if seg.parent is None:
            continue
        parent = layout[seg.parent].line
        fraction, distance = parent.project(layout[sid].line.points[0])
        assert distance < 0.05, f"{sid} does not start on {seg.parent}"
        # Schematic, not to scale: the origin lies near the table's joins_at fraction.
        assert fraction == pytest.approx(seg.joins_fraction, abs=0.2), sid


def test_anatomical_arrangement():
    layout = map_layout()

    def mid(sid):
        return layout[sid].line.point_at(0.5)

    # Aorta down the centre; the patient's right on the viewer's left (frontal view).
    assert all(abs(mid(s)[0] - 50) < 8 for s in ("AO-DESC", "AO-SUPRA", "AO-INFRA"))
    for kind in ("AXA", "BRA", "CIA", "SFA", "PTA"):
        assert mid(f"R-{kind}")[0] < 50 < mid(f"L-{kind}")[0]
    # Arms above the legs; feet lowest.
    assert min(mid(f"R-{k}")[1] for k in ("SCA", "AXA", "BRA")) > max(
        mid(f"R-{k}")[1] for k in ("CIA", "EIA", "SFA")
    )
    assert mid("R-DPA")[1] < mid("R-POP")[1] < mid("R-SFA")[1] < mid("R-CIA")[1]
    # The two sides mirror each other about the midline, except the subclavians: the
    # right arises from the brachiocephalic trunk, the left straight from the arch.
    for sid, place in layout.items():
        if sid.startswith("R-") and sid != "R-SCA":
            left = layout["L-" + sid[2:]].line.points
            for (xr, yr), (xl, yl) in zip(place.line.points, left, strict=True):
                assert xr + xl == pytest.approx(100) and yr == yl


def test_polyline_positions():
    line = Polyline(((0, 0), (3, 4), (3, 10)))  # lengths 5 and 6 (a 3-4-5 triangle)
    assert line.length == pytest.approx(11)
    assert line.point_at(5 / 11) == pytest.approx((3, 4))
    assert line.point_at(8 / 11) == pytest.approx((3, 7))
    assert line.point_at(-1) == (0.0, 0.0) and line.point_at(2) == (3.0, 10.0)
    assert line.between(0.9, 5 / 11)[-1] == pytest.approx((3, 4))
    assert line.project((10, 7)) == pytest.approx((8 / 11, 7))


def test_offset_is_perpendicular():
    pts = offset_points([(0, 0), (0, 10)], 2.0)  # travelling up: left is -x
    assert pts == [(-2.0, 0.0), (-2.0, 10.0)]
    bent = offset_points([(0, 0), (10, 0), (10, 10)], 1.0)
    assert math.hypot(bent[1][0] - 10, bent[1][1]) == pytest.approx(1.0)


def test_connection_of_parent_and_child():
    layout = map_layout()
    fa, fb = connection(layout["AO-ARCH"].line, layout["BCT"].line)
    assert fb == 0.0 and fa == pytest.approx(0.15, abs=0.01)
    fa, fb = connection(layout["R-DPA"].line, layout["R-PLA"].line)  # the pedal loop
    assert (fa, fb) == (1.0, 1.0)
