"""The drawn arterial map: what it draws, and that it reads in greyscale."""

from __future__ import annotations

import pytest
from reportlab.graphics.shapes import Line, PolyLine, String
from reportlab.lib.colors import white

from vascplan.anatomy.graph import build_tree
from vascplan.case.load import load_case
from vascplan.paths import examples_dir
from vascplan.reports.arterial_map import (
    CHOSEN,
    LEGEND_ROWS,
    LUMEN,
    RUNNER_UP,
    WALL,
    MapData,
    MapLesion,
    MapRoute,
    MapSegment,
    draw_map,
    legend_symbol,
    vessel_width_pt,
)
from vascplan.reports.map_input import map_data, short_label

CASE_07 = examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"


def luminance(c) -> float:
    """Greyscale value of a colour: ITU-R BT.601 luma weights (0.299, 0.587, 0.114)."""
    return 0.299 * c.red + 0.587 * c.green + 0.114 * c.blue


def _shapes(drawing):
    return list(drawing.contents)


def _segments(**extra) -> dict[str, MapSegment]:
    segs = {
        "AO-INFRA": MapSegment("AO-INFRA", "AO-INFRA", 18.0, False, 14.0),
        "L-CIA": MapSegment("L-CIA", "CIA", 9.0, False, 6.0),
        "L-EIA": MapSegment("L-EIA", "EIA", 7.5, True, 9.0),
        "L-CFA": MapSegment("L-CFA", "CFA", 8.0, False, 4.0),
        "L-SFA": MapSegment("L-SFA", "SFA", 6.0, False, 27.0),
    }
    segs.update(extra)
    return segs


def test_width_in_proportion_to_diameter():
    assert vessel_width_pt(18.0) / vessel_width_pt(9.0) == pytest.approx(2.0)
    d = draw_map(MapData(_segments()), 300, 500)
    lumen_widths = sorted(
        {s.strokeWidth for s in _shapes(d) if isinstance(s, PolyLine) and s.strokeColor == LUMEN}
    )
    assert lumen_widths == pytest.approx(sorted({vessel_width_pt(x) for x in (18, 9, 7.5, 8, 6)}))


def test_stenosis_and_occlusion_drawn_differently():
    sten = _segments(
        **{
            "L-SFA": MapSegment(
                "L-SFA", "SFA", 6.0, False, 27.0, lesions=(MapLesion("stenosis", 5, 4, 50.0),)
            )
        }
    )
    occl = _segments(
        **{
            "L-SFA": MapSegment(
                "L-SFA", "SFA", 6.0, False, 27.0, lesions=(MapLesion("occlusion", 5, 4, 100.0),)
            )
        }
    )
    s_shapes, o_shapes = (
        _shapes(draw_map(MapData(sten), 300, 500)),
        _shapes(draw_map(MapData(occl), 300, 500)),
    )
    # A stenosis keeps a white core as wide as the lumen left (half of 6 mm drawn).
    cores = [s for s in s_shapes if isinstance(s, PolyLine) and s.strokeColor == white]
    assert [c.strokeWidth for c in cores] == pytest.approx([vessel_width_pt(6.0) * 0.5])
    assert not [s for s in o_shapes if isinstance(s, PolyLine) and s.strokeColor == white]
    # An occlusion is closed by two bars across the vessel.
    bars = [s for s in o_shapes if isinstance(s, Line) and s.strokeWidth == pytest.approx(1.1)]
    assert len(bars) == 2
    texts = {s.text for s in s_shapes + o_shapes if isinstance(s, String)}
    assert "50% 4 cm" in texts and "occl. 4 cm" in texts


def test_routes_distinguishable_without_colour():
    chosen = MapRoute(1, (("L-CFA", 0.5, 1.0), ("L-SFA", 0.0, 0.4)))
    runner = MapRoute(2, (("L-CFA", 0.5, 0.0), ("L-EIA", 1.0, 0.0), ("L-CIA", 1.0, 0.0)))
    d = draw_map(
        MapData(_segments(), chosen=chosen, runner_up=runner, target=("L-SFA", 0.4)), 300, 500
    )
    lines = [s for s in _shapes(d) if isinstance(s, PolyLine)]
    solid = [s for s in lines if s.strokeColor == CHOSEN]
    dashed = [s for s in lines if s.strokeColor == RUNNER_UP]
    assert len(solid) == 1 and not solid[0].strokeDashArray
    assert len(dashed) == 1 and dashed[0].strokeDashArray
    assert solid[0].strokeWidth > dashed[0].strokeWidth
    # Greyscale: the two routes, the vessel wall and lumen sit far apart in grey value.
    greys = sorted(luminance(c) for c in (CHOSEN, RUNNER_UP, LUMEN))
    assert min(b - a for a, b in zip(greys, greys[1:], strict=False)) > 0.25
    assert abs(luminance(WALL) - luminance(LUMEN)) > 0.5
    texts = [s.text for s in _shapes(d) if isinstance(s, String)]
    assert "target" in texts and "1" in texts and "2" in texts


def test_map_of_a_real_case():
    case = load_case(CASE_07)
    tree = build_tree(case)
    plan = {
        "target": {"segment": "L-SFA", "at_cm": 12},
        "routes": [
            {
                "rank": 1,
                "feasible": True,
                "legs": [
                    {"node": "L-CFA", "from_cm": 2, "to_cm": 4.3},
                    {"node": "L-SFA", "from_cm": 0, "to_cm": 12},
                ],
            }
        ],
    }
    d = draw_map(map_data(tree, plan), 330, 560)
    texts = {s.text for s in _shapes(d) if isinstance(s, String)}
    # From the case file: L-SFA measured 5.2 mm; occlusion 18 cm, severely calcified;
    # R-CIA 40 % stenosis over 2 cm; R-SFA not measured (reference value, starred).
    assert "SFA 5.2" in texts
    assert "occl. 18 cm Ca" in texts
    assert "40% 2 cm Ca" in texts
    assert any(t.startswith("SFA ") and t.endswith("*") for t in texts)
    assert {"patient's RIGHT", "patient's LEFT"} <= texts


def test_every_legend_symbol_draws():
    for kind, _ in LEGEND_ROWS:
        assert legend_symbol(kind).contents


def test_short_labels():
    assert short_label("L-PLA") == "PLA"
    assert short_label("BCT") == "BCT"


def test_labels_moved_clear_of_each_other():
    from vascplan.pdf.page import fonts
    from vascplan.reports.arterial_map import _label_box, place_labels

    f = fonts().regular
    labels = [
        (2, 100, 100, "SFA 6.1*", "start", f),
        (0, 100, 101, "occl. 18 cm", "start", f),
        (2, 300, 100, "POP 4.6", "start", f),
    ]
    placed = place_labels(labels)
    boxes = [_label_box(*p) for p in placed]
    a, b = boxes[0], boxes[1]
    assert not (a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3])
    assert placed[0] == (100, 101, "occl. 18 cm", "start", f)  # the lesion label stays
    assert placed[2] == (300, 100, "POP 4.6", "start", f)  # nothing in its way: unmoved


def test_puncture_next_to_the_target_moves_clear():
    # A 1 cm route ending at its target (as a pedal puncture for a pedal target): the
    # numbered puncture circle (radius 4.6 pt) would sit on the bullseye (radius 6 pt).
    import math

    from reportlab.graphics.shapes import Circle

    from vascplan.reports.arterial_map import PUNCTURE_CLEAR_PT

    chosen = MapRoute(1, (("L-SFA", 0.40, 0.43),))
    d = draw_map(MapData(_segments(), chosen=chosen, target=("L-SFA", 0.43)), 300, 500)
    circles = [s for s in _shapes(d) if isinstance(s, Circle)]
    bullseye = max(circles, key=lambda c: c.r if c.strokeColor != CHOSEN else 0)
    puncture = [c for c in circles if c.strokeColor == CHOSEN and c.r > 4]
    assert len(puncture) == 1
    gap = math.hypot(puncture[0].cx - bullseye.cx, puncture[0].cy - bullseye.cy)
    assert gap >= PUNCTURE_CLEAR_PT > bullseye.r + puncture[0].r
    # A leader line joins the moved circle to the puncture point on the vessel.
    assert any(isinstance(s, Line) and s.strokeColor == CHOSEN for s in _shapes(d))
    # A long route keeps its circle on the vessel, with no leader.
    far = MapRoute(1, (("L-CFA", 0.5, 1.0), ("L-SFA", 0.0, 0.43)))
    d2 = draw_map(MapData(_segments(), chosen=far, target=("L-SFA", 0.43)), 300, 500)
    assert not any(isinstance(s, Line) and s.strokeColor == CHOSEN for s in _shapes(d2))


def test_two_routes_from_one_site_keep_their_circles_apart():
    # Antegrade and retrograde from the same CFA point: the runner-up's numbered circle
    # moves out (leader line), the chosen route's stays on the vessel.
    import math

    from reportlab.graphics.shapes import Circle

    from vascplan.reports.arterial_map import PUNCTURE_CLEAR_PT

    chosen = MapRoute(1, (("L-CFA", 0.5, 1.0), ("L-SFA", 0.0, 0.4)))
    runner = MapRoute(2, (("L-CFA", 0.5, 0.0), ("L-EIA", 1.0, 0.0)))
    d = draw_map(
        MapData(_segments(), chosen=chosen, runner_up=runner, target=("L-SFA", 0.4)), 300, 500
    )
    shapes = _shapes(d)
    one = [c for c in shapes if isinstance(c, Circle) and c.strokeColor == CHOSEN and c.r > 4]
    two = [c for c in shapes if isinstance(c, Circle) and c.strokeColor == RUNNER_UP and c.r > 4]
    assert len(one) == len(two) == 1
    assert math.hypot(one[0].cx - two[0].cx, one[0].cy - two[0].cy) >= PUNCTURE_CLEAR_PT
    assert any(isinstance(s, Line) and s.strokeColor == RUNNER_UP for s in shapes)
    assert not any(isinstance(s, Line) and s.strokeColor == CHOSEN for s in shapes)


def test_no_label_covers_a_puncture_circle():
    # DEMO-12: both routes start at an axillary artery, right under the SCA labels.
    from reportlab.graphics.shapes import Circle, Rect

    from vascplan.routes.plan import plan_case

    case = load_case(examples_dir() / "case-DEMO-12-support-small-iliac.yaml")
    tree = build_tree(case)
    d = draw_map(map_data(tree, plan_case(case).to_dict()), 330, 560)
    shapes = _shapes(d)
    circles = [
        c
        for c in shapes
        if isinstance(c, Circle) and c.strokeColor in (CHOSEN, RUNNER_UP) and c.r > 4
    ]
    assert len(circles) == 2
    halos = [r for r in shapes if isinstance(r, Rect) and r.fillColor == white]
    assert halos
    for c in circles:
        for r in halos:
            apart = (
                r.x + r.width <= c.cx - c.r
                or c.cx + c.r <= r.x
                or r.y + r.height <= c.cy - c.r
                or c.cy + c.r <= r.y
            )
            assert apart, (c.cx, c.cy, r.x, r.y)
