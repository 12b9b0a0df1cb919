"""The drawn arterial map: the patient's tree as a frontal schematic (reportlab graphics).

Visual language (our own, chosen to read in print and in greyscale; nothing relies on
colour alone):

* a vessel is a tube (dark wall, light lumen) whose width is in proportion to its
  diameter (:data:`PT_PER_MM`, never thinner than :data:`MIN_WIDTH_PT`); a label gives
  its name and diameter, ``*`` when the diameter is a reference value;
* a stenosis is a black band with a white core as wide as the lumen left; an occlusion
  is a solid black band closed by bars at both ends; each is labelled (``70% 4 cm``);
* calcification is a comb of short ticks across the wall (closer ticks: heavier calcium);
* a stent is a zigzag over its span; a graft a hollow double line between its ends;
* the chosen route is a heavy solid line, the runner-up a lighter dashed line, each
  beside the vessels it runs along (on opposite sides), starting at a numbered circle
  (the puncture) and ending in an arrowhead at the target (a bullseye);
* a segment the case says to avoid carries a crossed circle.

The map is a renderer: it draws the :class:`MapData` it is given and computes nothing
clinical. :func:`vascplan.reports.map_input.map_data` builds that from the tree and the plan.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Polygon, PolyLine, Rect, String
from reportlab.lib.colors import Color, black, white

from vascplan.pdf.page import fonts
from vascplan.pdf.text import clean
from vascplan.reports.layout import Point, Polyline, map_layout, offset_points

PT_PER_MM = 0.3
"""Drawn vessel width [pt] per mm of diameter (a display choice: a 20 mm aorta is 6 pt)."""

MIN_WIDTH_PT = 0.6
"""The thinnest a vessel is drawn [pt], so that a 2 mm pedal artery stays visible in print."""

WALL = Color(0.42, 0.13, 0.13)
LUMEN = Color(0.97, 0.83, 0.80)
CHOSEN = Color(0.02, 0.10, 0.40)
RUNNER_UP = Color(0.72, 0.36, 0.0)
INK = black
LABEL_PT = 5.8


@dataclass(frozen=True)
class MapLesion:
    kind: str  # stenosis | occlusion
    start_cm: float
    length_cm: float
    stenosis_pct: float | None = None
    calcified: bool = False


@dataclass(frozen=True)
class MapStent:
    start_cm: float
    length_cm: float


@dataclass(frozen=True)
class MapSegment:
    """A segment as the map draws it: lengths [cm] and diameter [mm] as the tree has them."""

    id: str
    label: str
    diameter_mm: float
    diameter_reference: bool
    length_cm: float
    calcification: int = 0  # 0 none, 1 mild, 2 moderate, 3 heavy
    lesions: tuple[MapLesion, ...] = ()
    stents: tuple[MapStent, ...] = ()
    avoid: bool = False


@dataclass(frozen=True)
class MapGraft:
    id: str
    label: str
    from_segment: str
    from_fraction: float
    to_segment: str
    to_fraction: float
    diameter_mm: float


@dataclass(frozen=True)
class MapRoute:
    """A route as legs: (node id, from fraction, to fraction), puncture first.

    A fraction is a position along the node from its origin (0) to its end (1); a leg
    run against the flow has ``from > to``.
    """

    rank: int
    legs: tuple[tuple[str, float, float], ...]


@dataclass(frozen=True)
class MapData:
    segments: dict[str, MapSegment]
    grafts: tuple[MapGraft, ...] = ()
    chosen: MapRoute | None = None
    runner_up: MapRoute | None = None
    target: tuple[str, float] | None = None  # segment, fraction along it
    notes: tuple[str, ...] = field(default_factory=tuple)


def vessel_width_pt(diameter_mm: float) -> float:
    """Drawn width [pt] of a vessel of ``diameter_mm``.

    >>> vessel_width_pt(20.0), vessel_width_pt(1.0)
    (6.0, 0.6)
    """
    return max(MIN_WIDTH_PT, diameter_mm * PT_PER_MM)


def _flat(points: list[Point]) -> list[float]:
    return [c for p in points for c in p]


def _fraction(cm: float, length_cm: float) -> float:
    return min(max(cm / length_cm, 0.0), 1.0) if length_cm > 0 else 0.5


class _Canvas:
    """Holds the transformed geometry while one map is drawn."""

    def __init__(self, data: MapData, width: float, height: float) -> None:
        layout = map_layout()
        self.data = data
        self.places = {sid: layout[sid] for sid in data.segments if sid in layout}
        xs = [x for p in layout.values() for x, _ in p.line.points]
        ys = [y for p in layout.values() for _, y in p.line.points]
        margin_x, margin_top, margin_bottom = 46.0, 22.0, 12.0
        self.scale = min(
            (width - 2 * margin_x) / (max(xs) - min(xs)),
            (height - margin_top - margin_bottom) / (max(ys) - min(ys)),
        )
        dx = (width - (max(xs) - min(xs)) * self.scale) / 2 - min(xs) * self.scale
        dy = margin_bottom - min(ys) * self.scale
        self.lines: dict[str, Polyline] = {
            sid: place.line.transformed(self.scale, dx, dy) for sid, place in self.places.items()
        }
        self.size = (width, height)
        self.used_height = (max(ys) - min(ys)) * self.scale + margin_top + margin_bottom
        # (priority, x, y, text, anchor, font); lower priority is placed first.
        self.labels: list[tuple[int, float, float, str, str, str]] = []
        self.obstacles: list[tuple[float, ...]] = []  # drawn marks no label may cover
        self.width_pt = {sid: vessel_width_pt(data.segments[sid].diameter_mm) for sid in self.lines}
        for graft in data.grafts:
            if graft.from_segment in self.lines and graft.to_segment in self.lines:
                self.lines[graft.id] = self._graft_line(graft)
                self.width_pt[graft.id] = vessel_width_pt(graft.diameter_mm)

    def _graft_line(self, graft: MapGraft) -> Polyline:
        p = self.lines[graft.from_segment].point_at(graft.from_fraction)
        q = self.lines[graft.to_segment].point_at(graft.to_fraction)
        mx, my = (p[0] + q[0]) / 2, (p[1] + q[1]) / 2
        length = math.hypot(q[0] - p[0], q[1] - p[1]) or 1.0
        nx, ny = -(q[1] - p[1]) / length, (q[0] - p[0]) / length
        centre = self.size[0] / 2
        # Bulge downwards for a crossover, towards the midline (where the map has room)
        # for a same-side bypass.
        crossover = abs(q[0] - p[0]) > abs(q[1] - p[1])
        away = ny if crossover else -nx * (centre - mx)
        sign = -1.0 if away > 0 else 1.0
        bulge = max((0.3 if crossover else 0.6) * length, 10.0)
        cx, cy = mx + sign * nx * bulge, my + sign * ny * bulge
        pts = []
        for i in range(17):
            t = i / 16
            pts.append(
                (
                    (1 - t) ** 2 * p[0] + 2 * (1 - t) * t * cx + t * t * q[0],
                    (1 - t) ** 2 * p[1] + 2 * (1 - t) * t * cy + t * t * q[1],
                )
            )
        return Polyline(tuple(pts))


def draw_map(data: MapData, width_pt: float, height_pt: float) -> Drawing:
    """Draw the arterial map of ``data`` into a Drawing ``width_pt`` x ``height_pt``."""
    cv = _Canvas(data, width_pt, height_pt)
    if cv.used_height < height_pt:  # shrink to the content; the top margin stays fixed
        cv = _Canvas(data, width_pt, cv.used_height)
    f = fonts()
    height_pt = min(height_pt, cv.used_height)
    d = Drawing(width_pt, height_pt)
    segs = [sid for sid in data.segments if sid in cv.lines]
    # Tubes: every wall first, then every lumen, so that junctions merge.
    for layer in ("wall", "lumen"):
        for sid in segs:
            w = cv.width_pt[sid]
            d.add(
                PolyLine(
                    _flat(list(cv.lines[sid].points)),
                    strokeColor=WALL if layer == "wall" else LUMEN,
                    strokeWidth=w + 1.0 if layer == "wall" else w,
                    strokeLineCap=1,
                    strokeLineJoin=1,
                )
            )
    for graft in data.grafts:
        if graft.id in cv.lines:
            _graft(d, cv, graft, f.regular)
    for sid in segs:
        seg = data.segments[sid]
        line, w = cv.lines[sid], cv.width_pt[sid]
        if seg.calcification:
            spacing = {1: 7.0, 2: 4.5}.get(seg.calcification, 3.0)
            _ticks(d, line, 0.0, 1.0, w + 3.0, spacing)
        for stent in seg.stents:
            _zigzag(
                d,
                line,
                _fraction(stent.start_cm, seg.length_cm),
                _fraction(stent.start_cm + stent.length_cm, seg.length_cm),
                w / 2 + 1.3,
            )
        for lesion in seg.lesions:
            _lesion(d, cv, sid, seg, lesion, f.regular)
        if seg.avoid:
            _avoid_mark(d, line.point_at(0.5))
        _segment_label(d, cv, sid, seg, f.regular)
    target_pt = target_label = None
    if data.target is not None and data.target[0] in cv.lines:
        target_pt = cv.lines[data.target[0]].point_at(data.target[1])
        label_side = 1.0 if cv.places[data.target[0]].label_dx < 0 else -1.0
        target_label = (target_pt[0] + label_side * 20.0, target_pt[1])
    marks = [target_pt] if target_pt is not None else []
    if data.runner_up is not None:
        # The runner-up gives way: its circle keeps clear of the chosen route's too (two
        # routes from one puncture site, antegrade and retrograde).
        chosen_pts = route_points(cv, data.chosen, 1.0) if data.chosen is not None else []
        _route(
            d,
            cv,
            data.runner_up,
            side=-1.0,
            colour=RUNNER_UP,
            width=1.3,
            dash=(4, 2.2),
            font=f.bold,
            avoid=marks + chosen_pts[:1],
            avoid_label=target_label,
        )
    if data.chosen is not None:
        _route(
            d,
            cv,
            data.chosen,
            side=1.0,
            colour=CHOSEN,
            width=2.0,
            dash=None,
            font=f.bold,
            avoid=marks,
            avoid_label=target_label,
        )
    if data.target is not None and data.target[0] in cv.lines:
        # The target's label goes across the vessel from the segment's and lesions' labels.
        side = 1.0 if cv.places[data.target[0]].label_dx < 0 else -1.0
        _target(d, cv.lines[data.target[0]].point_at(data.target[1]), f.bold, side, cv.labels)
    for x, y, text, anchor, font in place_labels(cv.labels, cv.obstacles):
        _halo_label(d, x, y, text, anchor, font)
    # Orientation: frontal view, the patient's right on the viewer's left.
    d.add(String(4, height_pt - 10, "patient's RIGHT", fontName=f.bold, fontSize=7))
    d.add(
        String(
            width_pt - 4,
            height_pt - 10,
            "patient's LEFT",
            fontName=f.bold,
            fontSize=7,
            textAnchor="end",
        )
    )
    d.add(
        String(
            width_pt / 2,
            height_pt - 10,
            "frontal schematic, lengths not to scale",
            fontName=f.regular,
            fontSize=6,
            textAnchor="middle",
            fillColor=Color(0.3, 0.3, 0.3),
        )
    )
    return d


def _ticks(
    d: Drawing, line: Polyline, start: float, end: float, length: float, spacing: float
) -> None:
    span = abs(end - start) * line.length
    n = max(1, int(span / spacing))
    for i in range(n + 1):
        fr = start + (end - start) * (i / n if n else 0.5)
        (x, y), (ux, uy) = line.point_at(fr), line.direction_at(fr)
        nx, ny = -uy * length / 2, ux * length / 2
        d.add(Line(x - nx, y - ny, x + nx, y + ny, strokeColor=INK, strokeWidth=0.5))


def _zigzag(d: Drawing, line: Polyline, start: float, end: float, amplitude: float) -> None:
    pts = line.between(start, end)
    sub = Polyline(tuple(pts))
    n = max(2, int(sub.length / 2.6))
    zz = []
    for i in range(n + 1):
        fr = i / n
        (x, y), (ux, uy) = sub.point_at(fr), sub.direction_at(fr)
        s = amplitude if i % 2 else -amplitude
        zz.append((x - uy * s, y + ux * s))
    d.add(PolyLine(_flat(zz), strokeColor=Color(0.1, 0.1, 0.1), strokeWidth=0.55, strokeLineJoin=1))


def _lesion(
    d: Drawing, cv: _Canvas, sid: str, seg: MapSegment, lesion: MapLesion, font: str
) -> None:
    line, w = cv.lines[sid], cv.width_pt[sid]
    a = _fraction(lesion.start_cm, seg.length_cm)
    b = _fraction(lesion.start_cm + lesion.length_cm, seg.length_cm)
    if (b - a) * line.length < 2.0:  # keep a short lesion visible: at least 2 pt long
        mid = (a + b) / 2
        half = 1.0 / max(line.length, 1.0)
        a, b = max(0.0, mid - half), min(1.0, mid + half)
    pts = _flat(line.between(a, b))
    band = max(w + 2.4, 4.2)
    d.add(PolyLine(pts, strokeColor=INK, strokeWidth=band, strokeLineCap=0, strokeLineJoin=1))
    if lesion.kind == "occlusion":
        for fr in (a, b):
            (x, y), (ux, uy) = line.point_at(fr), line.direction_at(fr)
            h = band / 2 + 1.6
            d.add(
                Line(
                    x + uy * h, y - ux * h, x - uy * h, y + ux * h, strokeColor=INK, strokeWidth=1.1
                )
            )
        text = f"occl. {lesion.length_cm:g} cm"
    else:
        pct = lesion.stenosis_pct or 0.0
        core = max(0.5, w * (1 - pct / 100.0))
        d.add(PolyLine(pts, strokeColor=white, strokeWidth=core, strokeLineCap=0, strokeLineJoin=1))
        text = f"{pct:g}% {lesion.length_cm:g} cm"
    if lesion.calcified:
        _ticks(d, line, a, b, band + 3.0, 2.2)
        text += " Ca"
    # The lesion's label sits on the same side as the segment's own label (outwards, where
    # the map has room), moved clear of it when the two would overlap.
    place = cv.places[sid]
    want = -1.0 if place.label_dx < 0 else 1.0
    mid = (a + b) / 2
    (x, y), (ux, uy) = line.point_at(mid), line.direction_at(mid)
    nx, ny = -uy, ux
    if nx * want < 0 or (abs(nx) < 0.2 and want < 0):
        nx, ny = -nx, -ny
    gap = w / 2 + 4.5
    lx, ly = x + nx * gap, y + ny * gap - 2
    seg_y = line.point_at(0.5)[1] + place.label_dy * cv.scale - 2
    if abs(ly - seg_y) < LABEL_PT + 1.5:
        ly = seg_y - (LABEL_PT + 2.0) if ly <= seg_y else seg_y + (LABEL_PT + 2.0)
    cv.labels.append((0, lx, ly, text, "start" if nx >= 0 else "end", font))


def _label_box(x: float, y: float, text: str, anchor: str, font: str) -> tuple[float, ...]:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    w = stringWidth(text, font, LABEL_PT)
    left = {"start": x, "end": x - w, "middle": x - w / 2}[anchor]
    return left - 0.8, y - 1.4, left + w + 0.8, y + LABEL_PT - 0.2


def place_labels(
    labels: list[tuple[int, float, float, str, str, str]],
    obstacles: list[tuple[float, ...]] | None = None,
) -> list[tuple[float, float, str, str, str]]:
    """Move labels up or down (by a line, then two) until no two overlap, if they can.

    Lesion and target labels are placed first and stay put; segment labels give way.
    ``obstacles``: boxes (x0, y0, x1, y1) [pt] already drawn that no label may cover.
    """
    placed: list[tuple[float, ...]] = list(obstacles or ())
    out = []
    step = LABEL_PT + 1.6
    for _, x, y, text, anchor, font in sorted(labels, key=lambda item: item[0]):
        for dy in (0.0, -step, step, -2 * step, 2 * step):
            box = _label_box(x, y + dy, text, anchor, font)
            if not any(
                box[0] < b[2] and b[0] < box[2] and box[1] < b[3] and b[1] < box[3] for b in placed
            ):
                break
        else:
            dy, box = 0.0, _label_box(x, y, text, anchor, font)
        placed.append(box)
        out.append((x, y + dy, text, anchor, font))
    return out


def _halo_label(d: Drawing, x: float, y: float, text: str, anchor: str, font: str) -> None:
    """A label on a white box, so that lines behind it never cut the text."""
    from reportlab.pdfbase.pdfmetrics import stringWidth

    w = stringWidth(text, font, LABEL_PT)
    left = {"start": x, "end": x - w, "middle": x - w / 2}[anchor]
    d.add(
        Rect(
            left - 0.8,
            y - 1.4,
            w + 1.6,
            LABEL_PT + 1.2,
            fillColor=white,
            strokeColor=None,
            fillOpacity=0.85,
        )
    )
    d.add(String(x, y, text, fontName=font, fontSize=LABEL_PT, textAnchor=anchor, fillColor=INK))


def _avoid_mark(d: Drawing, p: Point) -> None:
    r = 3.2
    d.add(Circle(p[0], p[1], r, fillColor=white, strokeColor=INK, strokeWidth=0.9))
    k = r * 0.7071
    d.add(Line(p[0] - k, p[1] - k, p[0] + k, p[1] + k, strokeColor=INK, strokeWidth=0.9))


def _segment_label(d: Drawing, cv: _Canvas, sid: str, seg: MapSegment, font: str) -> None:
    place = cv.places[sid]
    x, y = cv.lines[sid].point_at(0.5)
    x += place.label_dx * cv.scale
    y += place.label_dy * cv.scale - 2
    mark = "*" if seg.diameter_reference else ""
    anchor = "end" if place.label_dx < 0 else ("start" if place.label_dx > 0 else "middle")
    cv.labels.append((2, x, y, f"{clean(seg.label)} {seg.diameter_mm:.1f}{mark}", anchor, font))


def _graft(d: Drawing, cv: _Canvas, graft: MapGraft, font: str) -> None:
    line, w = cv.lines[graft.id], cv.width_pt[graft.id]
    pts = _flat(list(line.points))
    d.add(PolyLine(pts, strokeColor=INK, strokeWidth=w + 1.8, strokeLineCap=1, strokeLineJoin=1))
    d.add(
        PolyLine(pts, strokeColor=white, strokeWidth=max(w, 1.0), strokeLineCap=1, strokeLineJoin=1)
    )
    x, y = line.point_at(0.5)
    cv.labels.append((1, x, y - w - 8, f"graft {clean(graft.label)}", "middle", font))


def route_points(cv: _Canvas, route: MapRoute, side: float) -> list[Point]:
    """The route's line on the map, offset to ``side`` of each vessel it runs along.

    The offset is to a fixed side of each vessel's own origin-to-end direction, so two
    routes drawn with opposite sides never lie on top of each other.
    """
    out: list[Point] = []
    for node, start, end in route.legs:
        if node not in cv.lines:
            continue
        piece = cv.lines[node].between(start, end)
        offset = side * (cv.width_pt[node] / 2 + 2.4)
        if end < start:
            out += offset_points(piece[::-1], offset)[::-1]
        else:
            out += offset_points(piece, offset)
    return out


PUNCTURE_CLEAR_PT = 13.0
"""Least distance [pt] between a puncture circle and the target's bullseye (their radii,
4.6 and 6.0 pt, plus a gap)."""


def _clear_spot(p: Point, marks: list[Point], label: Point | None) -> Point:
    """Where to put a puncture circle that starts at ``p`` but would cover one of
    ``marks`` (the target's bullseye, another route's puncture circle): one of eight
    directions round ``p`` or a mark, clear of every mark, farthest from the target's
    label (downwards first when there is a tie)."""
    best: tuple[float, Point] | None = None
    reach = PUNCTURE_CLEAR_PT * 1.1
    for k in range(8):
        a = -math.pi / 2 + k * math.pi / 4  # start straight down, then round
        for base in (p, *marks):
            q = (base[0] + math.cos(a) * reach, base[1] + math.sin(a) * reach)
            clear = min(math.hypot(q[0] - m[0], q[1] - m[1]) for m in marks)
            if clear < PUNCTURE_CLEAR_PT - 1e-9:
                continue
            room = math.hypot(q[0] - label[0], q[1] - label[1]) if label else 0.0
            score = min(room, 30.0) - 0.2 * math.hypot(q[0] - p[0], q[1] - p[1])
            if best is None or score > best[0] + 1e-9:
                best = (score, q)
    if best is None:  # pragma: no cover - eight directions always leave one clear
        return p
    return best[1]


def _route(
    d: Drawing,
    cv: _Canvas,
    route: MapRoute,
    *,
    side: float,
    colour: Color,
    width: float,
    dash: tuple[float, float] | None,
    font: str,
    avoid: list[Point] | None = None,
    avoid_label: Point | None = None,
) -> Point | None:
    """Draw one route: haloed line, arrowhead at the target end, numbered puncture circle.

    ``avoid``: marks already placed (the target's point, the other route's puncture
    circle); a puncture circle closer than ``PUNCTURE_CLEAR_PT`` to one of them is moved
    out on a leader line so that no two marks cover each other, and away from
    ``avoid_label`` (the centre of the target's label). Every puncture circle is kept
    clear of the labels placed after it. Returns where the circle was drawn (None when
    the route has no drawable stretch).
    """
    pts = route_points(cv, route, side)
    if len(pts) < 2:
        return None
    d.add(
        PolyLine(
            _flat(pts),
            strokeColor=white,
            strokeWidth=width + 1.4,
            strokeLineJoin=1,
            strokeLineCap=1,
        )
    )
    d.add(
        PolyLine(
            _flat(pts),
            strokeColor=colour,
            strokeWidth=width,
            strokeLineJoin=1,
            strokeLineCap=0 if dash else 1,
            strokeDashArray=list(dash) if dash else None,
        )
    )
    # Arrowhead at the target end.
    (x1, y1) = pts[-1]
    j = len(pts) - 2
    while j > 0 and math.hypot(x1 - pts[j][0], y1 - pts[j][1]) < 1e-6:
        j -= 1
    x0, y0 = pts[j]
    length = math.hypot(x1 - x0, y1 - y0) or 1.0
    ux, uy = (x1 - x0) / length, (y1 - y0) / length
    size = 5.0
    d.add(
        Polygon(
            [
                x1,
                y1,
                x1 - ux * size - uy * size * 0.5,
                y1 - uy * size + ux * size * 0.5,
                x1 - ux * size + uy * size * 0.5,
                y1 - uy * size - ux * size * 0.5,
            ],
            fillColor=colour,
            strokeColor=white,
            strokeWidth=0.4,
        )
    )
    # Puncture: a numbered circle at the start; moved out on a leader line when it would
    # sit on the target's bullseye (a short route, such as a pedal puncture near its target).
    x, y = pts[0]
    marks = list(avoid or ())
    if any(math.hypot(x - m[0], y - m[1]) < PUNCTURE_CLEAR_PT for m in marks):
        cx, cy = _clear_spot((x, y), marks, avoid_label)
        d.add(Line(x, y, cx, cy, strokeColor=colour, strokeWidth=0.8))
        d.add(Circle(x, y, 1.4, fillColor=colour, strokeColor=colour, strokeWidth=0.4))
        x, y = cx, cy
    d.add(Circle(x, y, 4.6, fillColor=white, strokeColor=colour, strokeWidth=1.3))
    cv.obstacles.append((x - 5.5, y - 5.5, x + 5.5, y + 5.5))  # labels keep clear of it
    d.add(
        String(
            x,
            y - 2.1,
            str(route.rank),
            fontName=font,
            fontSize=6.2,
            textAnchor="middle",
            fillColor=INK,
        )
    )
    return (x, y)


def _target(d: Drawing, p: Point, font: str, side: float = 1.0, labels: list | None = None) -> None:
    """The bullseye; its label goes to ``labels`` (placed with the others) when given."""
    d.add(Circle(p[0], p[1], 6.0, fillColor=None, strokeColor=INK, strokeWidth=1.1))
    d.add(Circle(p[0], p[1], 3.6, fillColor=None, strokeColor=white, strokeWidth=1.2))
    d.add(Circle(p[0], p[1], 2.0, fillColor=INK, strokeColor=INK, strokeWidth=0.5))
    if labels is not None:
        labels.append(
            (0, p[0] + side * 8.0, p[1] - 2, "target", "end" if side < 0 else "start", font)
        )


# ---------------------------------------------------------------------------
# Legend


LEGEND_ROWS: tuple[tuple[str, str], ...] = (
    (
        "vessel",
        "Artery; width in proportion to diameter ({pt:g} pt per mm). "
        "Label: name and diameter in mm; * = reference value, not measured.",
    ),
    ("stenosis", "Stenosis: black band, white core as wide as the lumen left; label % and length."),
    ("occlusion", "Occlusion: solid black band closed by bars; label length."),
    (
        "calcium",
        "Calcification: ticks across the wall; closer ticks, heavier calcium. "
        "'Ca' on a lesion label: calcified lesion.",
    ),
    ("stent", "Stent: zigzag over its span."),
    ("graft", "Graft: hollow double line between its ends."),
    ("chosen", "Chosen route (rank 1): heavy solid line, arrow at the target."),
    ("runner-up", "Runner-up (rank 2): dashed line on the other side of the vessel."),
    (
        "puncture",
        "Puncture site: circle with the route's rank; on a thin leader to a dot when "
        "it would cover another mark.",
    ),
    ("target", "Target of the procedure."),
    ("avoid", "Segment the case says to avoid."),
)


def legend_symbol(kind: str, width: float = 34.0, height: float = 14.0) -> Drawing:
    """A small drawing of one legend symbol, in the same style as the map."""
    d = Drawing(width, height)
    y = height / 2
    g = Group()
    x0, x1 = 2.0, width - 2.0
    w = 2.4

    def tube() -> None:
        g.add(Line(x0, y, x1, y, strokeColor=WALL, strokeWidth=w + 1.0, strokeLineCap=1))
        g.add(Line(x0, y, x1, y, strokeColor=LUMEN, strokeWidth=w, strokeLineCap=1))

    line = Polyline(((x0, y), (x1, y)))
    if kind == "vessel":
        tube()
    elif kind in ("stenosis", "occlusion"):
        tube()
        g.add(Line(12, y, 24, y, strokeColor=INK, strokeWidth=w + 2.0))
        if kind == "stenosis":
            g.add(Line(12, y, 24, y, strokeColor=white, strokeWidth=0.7))
        else:
            for x in (12, 24):
                g.add(Line(x, y - 4, x, y + 4, strokeColor=INK, strokeWidth=1.1))
    elif kind == "calcium":
        tube()
        tmp = Drawing(width, height)
        _ticks(tmp, line, 0.1, 0.9, w + 3.0, 3.0)
        for item in tmp.contents:
            g.add(item)
    elif kind == "stent":
        tube()
        tmp = Drawing(width, height)
        _zigzag(tmp, line, 0.15, 0.85, w / 2 + 1.3)
        for item in tmp.contents:
            g.add(item)
    elif kind == "graft":
        g.add(Line(x0, y, x1, y, strokeColor=INK, strokeWidth=w + 1.8, strokeLineCap=1))
        g.add(Line(x0, y, x1, y, strokeColor=white, strokeWidth=w, strokeLineCap=1))
    elif kind in ("chosen", "runner-up"):
        colour = CHOSEN if kind == "chosen" else RUNNER_UP
        g.add(
            Line(
                x0,
                y,
                x1 - 5,
                y,
                strokeColor=colour,
                strokeWidth=2.0 if kind == "chosen" else 1.3,
                strokeDashArray=None if kind == "chosen" else [4, 2.2],
            )
        )
        g.add(
            Polygon([x1, y, x1 - 5, y + 2.5, x1 - 5, y - 2.5], fillColor=colour, strokeColor=None)
        )
    elif kind == "puncture":
        tube()
        g.add(Circle(width / 2, y, 4.6, fillColor=white, strokeColor=CHOSEN, strokeWidth=1.3))
        g.add(
            String(
                width / 2, y - 2.1, "1", fontName=fonts().bold, fontSize=6.2, textAnchor="middle"
            )
        )
    elif kind == "target":
        tmp = Drawing(width, height)
        tube()
        _target(tmp, (width / 2 - 8, y), fonts().bold)
        for item in tmp.contents[:3]:
            g.add(item)
    elif kind == "avoid":
        tube()
        tmp = Drawing(width, height)
        _avoid_mark(tmp, (width / 2, y))
        for item in tmp.contents:
            g.add(item)
    else:
        raise KeyError(kind)
    d.add(g)
    return d
