"""Trend charts drawn on the server as SVG (no script, no outside assets).

A renderer: it places the already-computed findings on axes, it computes nothing clinical.
Left and right legs differ by marker shape and line dash as well as colour.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from html import escape
from typing import Any

from markupsafe import Markup

from vascplan.observations.trend import PatientTrend, floor_to_step, value_ticks

WINDOW_H = 24
"""Hours of history the charts show, ending at the page's moment."""

W, H = 640, 220
LEFT, RIGHT, TOP, BOTTOM = 48, 12, 30, 30
TICK_H = 6
"""Hours between time marks, on round hours of the unit's clock."""

SERIES = {
    "L": {"stroke": "#1f5fa8", "dash": "", "marker": "circle", "name": "left leg"},
    "R": {"stroke": "#a2461c", "dash": "6 4", "marker": "square", "name": "right leg"},
}

CHARTS = (("nirs", "Calf NIRS", "%"), ("refill", "Capillary refill", "s"))


@dataclass(frozen=True)
class Chart:
    title: str
    svg: Markup
    points: int


def _x(t: datetime, t0: datetime, t1: datetime) -> float:
    span = (t1 - t0).total_seconds() or 1.0
    return LEFT + (W - LEFT - RIGHT) * (t - t0).total_seconds() / span


def _marker(kind: str, x: float, y: float, colour: str) -> str:
    if kind == "circle":
        return f'<circle cx="{x:.1f}" cy="{y:.1f}" r="4" fill="{colour}"/>'
    return f'<rect x="{x - 4:.1f}" y="{y - 4:.1f}" width="8" height="8" fill="{colour}"/>'


def _chart(trend: PatientTrend, item: str, title: str, unit: str, at: datetime, tz: Any) -> Chart:
    t1 = at.astimezone(UTC)
    t0 = t1 - timedelta(hours=WINDOW_H)
    series: dict[str, list[tuple[datetime, float]]] = {"L": [], "R": []}
    for f in trend.findings:
        if f.item == item and f.site in series and f.time >= t0:
            series[f.site].append((f.time, float(f.value)))
    values = [v for pts in series.values() for _, v in pts]
    lo, hi, ticks = value_ticks(min(values, default=0.0), max(values, default=1.0))
    span = (hi - lo) or 1.0

    def y(v: float) -> float:
        return TOP + (H - TOP - BOTTOM) * (1 - (v - lo) / span)

    parts = [
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {W} {H}" role="img" '
        f'aria-label="{escape(title)}, last {WINDOW_H} hours" class="chart">',
        f"<title>{escape(title)} ({escape(unit)}), last {WINDOW_H} h</title>",
        f'<rect x="{LEFT}" y="{TOP}" width="{W - LEFT - RIGHT}" height="{H - TOP - BOTTOM}" '
        'fill="#ffffff" stroke="#555"/>',
    ]
    for v in ticks:
        parts.append(
            f'<line x1="{LEFT}" x2="{W - RIGHT}" y1="{y(v):.1f}" y2="{y(v):.1f}" stroke="#ddd"/>'
            f'<text x="{LEFT - 6}" y="{y(v) + 4:.1f}" text-anchor="end" font-size="11">'
            f"{v:g}</text>"
        )
    first = floor_to_step(t0, tz, TICK_H * 60)
    marks = [first + timedelta(hours=TICK_H * k) for k in range(1, WINDOW_H // TICK_H + 2)]
    for t in (m for m in marks if t0 <= m <= t1):
        x = _x(t, t0, t1)
        parts.append(
            f'<line x1="{x:.1f}" x2="{x:.1f}" y1="{TOP}" y2="{H - BOTTOM}" stroke="#eee"/>'
            f'<text x="{x:.1f}" y="{H - BOTTOM + 16}" text-anchor="middle" font-size="11">'
            f"{t.astimezone(tz):%H:%M}</text>"
        )
    for side, pts in series.items():
        style = SERIES[side]
        if len(pts) > 1:
            path = " ".join(f"{_x(t, t0, t1):.1f},{y(v):.1f}" for t, v in pts)
            dash = f' stroke-dasharray="{style["dash"]}"' if style["dash"] else ""
            parts.append(
                f'<polyline points="{path}" fill="none" stroke="{style["stroke"]}" '
                f'stroke-width="2"{dash}/>'
            )
        for t, v in pts:
            parts.append(_marker(style["marker"], _x(t, t0, t1), y(v), style["stroke"]))
    for i, (side, style) in enumerate(SERIES.items()):  # the legend, above the plot
        lx = LEFT + 8 + i * 130
        parts.append(_marker(style["marker"], lx, TOP - 14, style["stroke"]))
        parts.append(
            f'<text x="{lx + 8}" y="{TOP - 10}" font-size="12">{side}: {style["name"]}</text>'
        )
    if not values:
        parts.append(
            f'<text x="{W / 2}" y="{H / 2}" text-anchor="middle" font-size="13">'
            f"no {escape(title.lower())} recorded in the last {WINDOW_H} h</text>"
        )
    parts.append("</svg>")
    return Chart(f"{title} ({unit})", Markup("".join(parts)), len(values))


def trend_charts(trend: PatientTrend, at: datetime, tz: Any) -> list[Chart]:
    """The patient page's charts: calf NIRS and capillary refill, each leg its own line."""
    return [_chart(trend, item, title, unit, at, tz) for item, title, unit in CHARTS]
