"""Where each arterial segment sits on the printed map, and the geometry to draw along it.

The layout table ``data/reports/map_layout.csv`` places every segment of the reference
tree as a polyline in a frontal schematic (units are arbitrary; the aorta runs down the
centre at x = 50, the arms go up to the left and right, the legs down). The patient's
right is on the viewer's left, as in a frontal radiograph; the map says so. Points run
from the segment's origin (where it leaves its parent) to its distal end, so a position
``at_cm`` along a segment maps to the same fraction of the polyline's length.

Labels: ``label_dx``, ``label_dy`` [layout units] move the segment's name from the
midpoint of its polyline; a negative dx right-aligns it (text to the left of the point).
"""

from __future__ import annotations

import csv
import functools
import math
from dataclasses import dataclass
from pathlib import Path

from vascplan.errors import InputError
from vascplan.paths import data_dir

Point = tuple[float, float]


@dataclass(frozen=True)
class Polyline:
    """An open polyline with arc-length positions (fractions 0-1 of its length)."""

    points: tuple[Point, ...]

    @functools.cached_property
    def _cumulative(self) -> list[float]:
        out = [0.0]
        for (x0, y0), (x1, y1) in zip(self.points, self.points[1:], strict=False):
            out.append(out[-1] + math.hypot(x1 - x0, y1 - y0))
        return out

    @property
    def length(self) -> float:
        return self._cumulative[-1]

    def point_at(self, fraction: float) -> Point:
        """The point ``fraction`` (clamped to 0-1) of the way along.

        >>> Polyline(((0, 0), (10, 0), (10, 10))).point_at(0.75)
        (10.0, 5.0)
        """
        return self._locate(fraction)[0]

    def direction_at(self, fraction: float) -> Point:
        """Unit vector of the edge under ``fraction`` (proximal to distal)."""
        return self._locate(fraction)[1]

    def _locate(self, fraction: float) -> tuple[Point, Point]:
        f = min(max(fraction, 0.0), 1.0)
        target = f * self.length
        cum = self._cumulative
        for i in range(1, len(self.points)):
            if target <= cum[i] or i == len(self.points) - 1:
                (x0, y0), (x1, y1) = self.points[i - 1], self.points[i]
                seg = cum[i] - cum[i - 1]
                t = 0.0 if seg == 0 else (target - cum[i - 1]) / seg
                t = min(max(t, 0.0), 1.0)
                ux, uy = ((x1 - x0) / seg, (y1 - y0) / seg) if seg else (0.0, -1.0)
                return (float(x0 + t * (x1 - x0)), float(y0 + t * (y1 - y0))), (ux, uy)
        raise AssertionError("unreachable")  # pragma: no cover

    def between(self, start: float, end: float) -> list[Point]:
        """The points from fraction ``start`` to ``end`` (reversed when end < start)."""
        lo, hi = sorted((min(max(start, 0.0), 1.0), min(max(end, 0.0), 1.0)))
        cum = self._cumulative
        total = self.length or 1.0
        pts = [self.point_at(lo)]
        pts += [p for p, c in zip(self.points, cum, strict=False) if lo * total < c < hi * total]
        pts.append(self.point_at(hi))
        return pts if start <= end else pts[::-1]

    def project(self, p: Point) -> tuple[float, float]:
        """Fraction along the polyline of the point nearest ``p``, and the distance to it."""
        best = (0.0, math.inf)
        cum = self._cumulative
        total = self.length or 1.0
        for i in range(1, len(self.points)):
            (x0, y0), (x1, y1) = self.points[i - 1], self.points[i]
            dx, dy = x1 - x0, y1 - y0
            seg2 = dx * dx + dy * dy
            t = (
                0.0
                if seg2 == 0
                else max(0.0, min(1.0, ((p[0] - x0) * dx + (p[1] - y0) * dy) / seg2))
            )
            qx, qy = x0 + t * dx, y0 + t * dy
            d = math.hypot(p[0] - qx, p[1] - qy)
            if d < best[1]:
                best = ((cum[i - 1] + t * math.sqrt(seg2)) / total, d)
        return best

    def transformed(self, scale: float, dx: float, dy: float) -> Polyline:
        return Polyline(tuple((x * scale + dx, y * scale + dy) for x, y in self.points))


def offset_points(points: list[Point], distance: float) -> list[Point]:
    """Shift a polyline sideways by ``distance`` (positive: to the left of travel).

    Vertices use the mean normal of their two edges (gentle bends only, as on the map).

    >>> offset_points([(0, 0), (10, 0)], 2)
    [(0.0, 2.0), (10.0, 2.0)]
    """
    pts = [p for i, p in enumerate(points) if i == 0 or p != points[i - 1]]
    if len(pts) < 2:
        return [(float(x), float(y)) for x, y in pts]
    normals = []
    for (x0, y0), (x1, y1) in zip(pts, pts[1:], strict=False):
        length = math.hypot(x1 - x0, y1 - y0)
        normals.append((-(y1 - y0) / length, (x1 - x0) / length))
    out = []
    for i, (x, y) in enumerate(pts):
        ns = [normals[j] for j in (i - 1, i) if 0 <= j < len(normals)]
        nx, ny = sum(n[0] for n in ns), sum(n[1] for n in ns)
        norm = math.hypot(nx, ny) or 1.0
        out.append((float(x + distance * nx / norm), float(y + distance * ny / norm)))
    return out


@dataclass(frozen=True)
class SegmentPlace:
    """One row of the layout table."""

    id: str
    line: Polyline
    label_dx: float
    label_dy: float


def _parse_points(text: str, source: str, field: str) -> tuple[Point, ...]:
    pts = []
    for pair in text.split(";"):
        parts = pair.split()
        if len(parts) != 2:
            raise InputError(
                source, field, f"points must be 'x y; x y; ...' (got {pair.strip()!r})"
            )
        try:
            pts.append((float(parts[0]), float(parts[1])))
        except ValueError:
            raise InputError(source, field, f"not a number in {pair.strip()!r}") from None
    if len(pts) < 2:
        raise InputError(source, field, "a segment needs at least two points")
    return tuple(pts)


@functools.cache
def _load(path: Path) -> dict[str, SegmentPlace]:
    src = str(path)
    out: dict[str, SegmentPlace] = {}
    with path.open(encoding="utf-8", newline="") as fh:
        for i, row in enumerate(csv.DictReader(fh), start=2):
            sid = (row.get("id") or "").strip()
            if not sid or sid in out:
                raise InputError(src, f"line {i}", f"segment id missing or repeated ({sid!r})")
            if not (row.get("source") or "").strip():
                raise InputError(src, f"line {i}.source", "every row needs a source")
            out[sid] = SegmentPlace(
                sid,
                Polyline(_parse_points(row["points"], src, f"line {i}.points")),
                float(row.get("label_dx") or 0),
                float(row.get("label_dy") or 0),
            )
    return out


def map_layout(path: Path | None = None) -> dict[str, SegmentPlace]:
    """The layout table: segment id -> its place on the map (cached)."""
    return _load(path or data_dir() / "reports" / "map_layout.csv")


def connection(a: Polyline, b: Polyline) -> tuple[float, float]:
    """Fractions along ``a`` and ``b`` where two adjacent segments meet.

    Adjacent segments touch at an end of one of them (a child starts on its parent; a
    loop or a graft joins end to end or end to side), so the nearest pair among the
    four ends projected onto the other polyline is the junction.
    """
    best: tuple[float, float, float] = (math.inf, 1.0, 0.0)
    for fb in (0.0, 1.0):
        fa, d = a.project(b.point_at(fb))
        if d < best[0]:
            best = (d, fa, fb)
    for fa in (0.0, 1.0):
        fb, d = b.project(a.point_at(fa))
        if d < best[0]:
            best = (d, fa, fb)
    return best[1], best[2]
