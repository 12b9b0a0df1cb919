"""The trend PDF: one page per patient, each leg's NIRS, capillary refill and pedal signals.

Each panel plots the findings over time against the protocol's review thresholds; every
check is ticked on the time axis and every alert is marked (a numbered triangle at the
check where it first opened, listed below the panels). Legible in greyscale: the legs
differ by line style and marker shape, pulse grades by marker shape, never by colour
alone. The caution and the page number are on every page. Written atomically.

reportlab is imported inside :func:`render_trend_pdf`.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from pathlib import Path

from vascplan.fileio import atomic_write_bytes
from vascplan.localtime import day_hm, hm, offset_text, utc
from vascplan.observations.findings import PEDAL_ARTERIES, SIDES
from vascplan.observations.review import Alert, review_patient, unit_protocol
from vascplan.observations.store import CurrentFinding, ObservationStore
from vascplan.surveillance.protocol import Protocol
from vascplan.surveillance.schedule import patient_schedule
from vascplan.surveillance.unit import Patient, Unit

LEG_DASH: dict[str, list[float]] = {"L": [], "R": [4, 2]}
"""Line style per leg: left solid, right dashed."""
LEG_MARKER = {"L": "circle", "R": "square"}
"""Marker per leg: left filled circle, right open square."""
GRADE_MARK = {"palpable": "filled", "doppler": "open", "absent": "cross"}
TICK_STEPS_MIN = (15, 30, 60, 120, 180, 240, 360, 720, 1440)
"""Time-axis tick spacings [min]: ticks fall on these round times of the unit's clock."""
MAX_TIME_TICKS = 8


def time_ticks(
    t0: datetime, t1: datetime, tz, max_ticks: int = MAX_TIME_TICKS
) -> tuple[int, list[datetime]]:
    """Round ticks of the unit's local clock between ``t0`` and ``t1`` (both aware).

    The spacing is the smallest of :data:`TICK_STEPS_MIN` (or whole days) that keeps at
    most ``max_ticks`` ticks over the real elapsed span; ticks fall where the local wall
    clock reads a multiple of it (``14:00``, ``14:30``; ``00:00``, ``06:00``), also across
    a clock change: a wall time the clocks skip has no tick, and one they repeat has two
    (one per instant). Ticks are handed back in UTC, in time order.

    Returns
    -------
    (step_min, ticks)

    >>> from zoneinfo import ZoneInfo
    >>> tz = ZoneInfo("Europe/London")
    >>> a = datetime(2026, 12, 1, 14, 37, tzinfo=tz)
    >>> step, ticks = time_ticks(a, a + timedelta(minutes=170), tz)
    >>> step, [f"{t.astimezone(tz):%H:%M}" for t in ticks]
    (30, ['15:00', '15:30', '16:00', '16:30', '17:00'])
    """
    u0, u1 = utc(t0), utc(t1)
    span_min = max((u1 - u0).total_seconds() / 60, 1.0)
    step = next((s for s in TICK_STEPS_MIN if span_min / s <= max_ticks), None)
    if step is None:
        step = 1440 * math.ceil(span_min / 1440 / max_ticks)
    # Walk the instants every 15 min from a whole UTC quarter hour: every zone's offset is a
    # whole number of quarter hours, so every round local time is met, each instant once.
    moment = u0.replace(second=0, microsecond=0) - timedelta(minutes=u0.minute % 15)
    ticks = []
    while moment <= u1:
        wall = moment.astimezone(tz)
        minute_of_day = wall.hour * 60 + wall.minute
        on = (
            minute_of_day == 0 and wall.toordinal() % (step // 1440) == 0
            if step >= 1440
            else minute_of_day % step == 0
        )
        if on and u0 <= moment:
            ticks.append(moment)
        moment += timedelta(minutes=15)
    return step, ticks


def floor_to_step(moment: datetime, tz, step_min: int) -> datetime:
    """The latest instant at or before ``moment`` when the local clock shows a round
    ``step_min`` (UTC); ``moment`` itself (in UTC) when none is found within a day."""
    u = utc(moment)
    probe = u.replace(second=0, microsecond=0) - timedelta(minutes=u.minute % 15)
    for _ in range(24 * 4 + 1):
        wall = probe.astimezone(tz)
        minute_of_day = wall.hour * 60 + wall.minute
        if minute_of_day % min(step_min, 1440) == 0:
            return probe
        probe -= timedelta(minutes=15)
    return u


def axis_window(check_times: list[datetime], at: datetime, tz) -> tuple[datetime, datetime, int]:
    """The time axis of a trend page: ``(t0, t1, step_min)``, instants in UTC.

    From the first recorded check (or 12 h before ``at`` when none; at least 1 h before
    ``at``), floored to a round tick of the local clock, to ``at``. Elapsed time, not
    wall time: the axis of a night the clocks go back is 25 hours long.
    """
    t1 = utc(at)
    first = min((utc(t) for t in check_times), default=t1 - timedelta(hours=12))
    t0 = min(first, t1 - timedelta(hours=1))
    step_min, _ = time_ticks(t0, t1, tz)
    return floor_to_step(t0, tz, step_min), t1, step_min


def x_fraction(t: datetime, t0: datetime, t1: datetime) -> float:
    """Where instant ``t`` falls on the axis ``t0``-``t1``: 0 at ``t0``, 1 at ``t1``.

    By real elapsed time (UTC), so a reading at the second 01:30 of the night the clocks
    go back lies one hour right of the first 01:30, and half an hour left of 02:00.
    """
    u0 = utc(t0)
    total = (utc(t1) - u0).total_seconds() or 1.0
    return (utc(t) - u0).total_seconds() / total


def value_ticks(lo: float, hi: float, max_ticks: int = 6) -> tuple[float, float, list[float]]:
    """A round axis covering ``lo``-``hi``: spacing 1, 2 or 5 times a power of ten.

    >>> value_ticks(40, 81)
    (40.0, 90.0, [40.0, 50.0, 60.0, 70.0, 80.0, 90.0])
    >>> value_ticks(0, 7)
    (0.0, 8.0, [0.0, 2.0, 4.0, 6.0, 8.0])
    """
    if hi <= lo:
        hi = lo + 1
    raw = (hi - lo) / (max_ticks - 1)
    power = 10 ** math.floor(math.log10(raw))
    step = next(m * power for m in (1, 2, 5, 10) if m * power >= raw)
    first = math.floor(lo / step + 1e-9) * step
    last = math.ceil(hi / step - 1e-9) * step
    n = round((last - first) / step)
    return float(first), float(last), [float(first + i * step) for i in range(n + 1)]


@dataclass
class PatientTrend:
    """What one page shows (computed before any drawing)."""

    patient: Patient
    findings: list[CurrentFinding]
    check_times: list[datetime]
    onsets: list[tuple[datetime, Alert]]
    open_alerts: list[Alert]
    nirs_baseline: dict[str, float]
    overdue: list[datetime] = field(default_factory=list)
    """Due times of the scheduled checks overdue at ``at`` (not recorded)."""


def patient_trend(
    unit: Unit, patient: Patient, protocol: Protocol, findings: list[CurrentFinding], at: datetime
) -> PatientTrend:
    """Alerts at each check (their onsets) and at ``at``, for one patient's page.

    The schedule is computed once (insertion to ``at``) and the findings are walked once:
    at each check the review sees :func:`check_summaries`' few findings, which give every
    rule what the whole history up to that check gives it, so the cost grows with the
    number of findings, not with their square.
    """
    at_utc = utc(at)
    mine = sorted(
        (f for f in findings if utc(f.time) <= at_utc), key=lambda f: (utc(f.time), f.entry.id)
    )
    times = sorted({utc(f.time) for f in mine})
    schedule = patient_schedule(unit, patient, protocol, patient.device.inserted, at)
    onsets: list[tuple[datetime, Alert]] = []
    before: set[tuple[str, str | None]] = set()
    for t, summary in check_summaries(mine):
        alerts = review_patient(unit, patient, protocol, summary, t, schedule=schedule).alerts
        now = {(a.rule, a.side) for a in alerts}
        onsets += [(t, a) for a in alerts if (a.rule, a.side) not in before]
        before = now
    final_review = review_patient(unit, patient, protocol, mine, at, schedule=schedule)
    final = final_review.alerts
    base: dict[str, float] = {s: float(v) for s, v in patient.baseline.nirs.items()}
    for side in SIDES:
        if side not in base:
            first = next((f for f in mine if f.item == "nirs" and f.site == side), None)
            if first is not None:
                base[side] = float(first.value)
    overdue = [utc(o.due) for o in final_review.overdue]
    return PatientTrend(patient, mine, times, onsets, final, base, overdue)


def _is_number(value: str) -> bool:
    try:
        float(value)
    except ValueError:
        return False
    return True


def check_summaries(
    findings: list[CurrentFinding],
) -> Iterator[tuple[datetime, list[CurrentFinding]]]:
    """Walk findings once; at each check instant (UTC) yield a summary of the history.

    ``findings`` are in time (UTC) then entry order, as :func:`patient_trend` sorts them.

    The summary of the history up to a check holds, for every item and site: the first
    finding; the findings at the latest instant it was recorded; and, for each word value
    it has taken (``palpable``, ``normal``...), the last finding with that value before
    that instant. Every review rule reads only these: the latest value of an item (later
    wins), the first recorded value (the NIRS baseline fallback), the last earlier finding
    with a given word value (a pedal signal that was present, skin that was normal), the
    latest check time; no rule looks for an earlier number (a NIRS or a pressure is
    compared with the first or the latest). The summary's size is bounded by the items,
    sites and word values, not by the length of the record.
    """
    numeric: dict[str, bool] = {}
    # Positions in ``findings`` (which is in time then entry order), per item and site.
    first: dict[tuple[str, str], int] = {}
    last_instant: dict[tuple[str, str], datetime] = {}
    at_last: dict[tuple[str, str], list[int]] = {}
    earlier: dict[tuple[str, str], dict[str, int]] = {}
    i, n = 0, len(findings)
    while i < n:
        t = utc(findings[i].time)
        while i < n and utc(findings[i].time) == t:
            f = findings[i]
            key = (f.item, f.site)
            first.setdefault(key, i)
            if last_instant.get(key) != t:
                by_value = earlier.setdefault(key, {})
                for g in at_last.get(key, ()):  # now strictly before the latest instant
                    value = findings[g].value
                    if value not in numeric:
                        numeric[value] = _is_number(value)
                    if not numeric[value]:
                        by_value[value] = g
                at_last[key] = [i]
                last_instant[key] = t
            else:
                at_last[key].append(i)
            i += 1
        kept = set(first.values())
        for by_value in earlier.values():
            kept.update(by_value.values())
        for group in at_last.values():
            kept.update(group)
        yield t, [findings[k] for k in sorted(kept)]


def write_trend_pdf(
    unit: Unit,
    store: ObservationStore,
    patients: list[Patient],
    at: datetime,
    path: str | os.PathLike[str],
    *,
    protocol: Protocol | None = None,
    base_dir: Path | None = None,
) -> Path:
    """Write the trend PDF for ``patients`` (one page each) to ``path`` atomically.

    Each patient is read from the look-back before their device's insertion up to ``at``
    (:mod:`vascplan.observations.reads`).
    """
    from vascplan.observations.reads import episode_findings

    protocol = protocol or unit_protocol(unit, base_dir)
    by_ref = episode_findings(store, unit, patients, at)
    trends = [patient_trend(unit, p, protocol, by_ref[p.ref], at) for p in patients]
    return atomic_write_bytes(path, render_trend_pdf(unit, protocol, trends, at))


# ---------------------------------------------------------------------------
# Drawing


TREND_FRAME_SHIFT_X = 6.52
"""The trend's drawing is laid out from x = 36 pt; the shared frame starts at the 15 mm
margin (42.52 pt): the drawing moves right by the difference [pt] (layout only)."""

TREND_TOP_PT = 817.0
"""Height [pt] the trend's drawing takes as its page top, so that its title sits under the
shared template's head line on A4 (layout only)."""

TREND_FLOOR_PT = 80.0
"""Lowest baseline [pt] of the alert list, above the shared template's foot (layout only)."""


def render_trend_pdf(
    unit: Unit, protocol: Protocol, trends: list[PatientTrend], at: datetime
) -> bytes:
    """The PDF bytes: one page per :class:`PatientTrend`, on the shared page template
    (:func:`vascplan.pdf.page.build_pdf`: caution, page N of M, generation time, embedded
    fonts covering Latin, Greek and Cyrillic)."""
    from datetime import datetime as _dt

    from reportlab.lib.pagesizes import A4
    from reportlab.platypus import Flowable, PageBreak

    from vascplan.pdf.page import PageLabel, PageSetup, build_pdf, frame_box

    x0, y0, _, _ = frame_box("a4")
    width, _ = A4

    class TrendPage(Flowable):
        """One patient's drawing, filling the frame; drawn in page coordinates."""

        def __init__(self, trend: PatientTrend) -> None:
            super().__init__()
            self.trend = trend

        def wrap(self, avail_width: float, avail_height: float) -> tuple[float, float]:
            return avail_width, avail_height

        def draw(self) -> None:
            c = self.canv
            c.saveState()
            c.translate(TREND_FRAME_SHIFT_X - x0, -y0)
            _page(c, unit, protocol, self.trend, at, width - 2 * TREND_FRAME_SHIFT_X, TREND_TOP_PT)
            c.restoreState()

    story: list[object] = []
    for number, trend in enumerate(trends):
        if number:
            story.append(PageBreak())
        story += [PageLabel(f"bed {trend.patient.bed} - {trend.patient.ref}"), TrendPage(trend)]
    setup = PageSetup(
        paper="a4", title=f"Limb trend - {unit.unit.name}", generated_at=_dt.now(unit.unit.tz)
    )
    return build_pdf(story, setup)


def _regular() -> str:
    from vascplan.pdf.page import fonts

    return fonts().regular


def _bold() -> str:
    from vascplan.pdf.page import fonts

    return fonts().bold


def _fmt(moment: datetime, tz, span: timedelta, offsets: bool = False) -> str:
    """A tick label; with the UTC offset when the axis spans a clock change (``offsets``)."""
    local = moment.astimezone(tz)
    text = local.strftime("%d %b %H:%M") if span > timedelta(hours=20) else local.strftime("%H:%M")
    return text + offset_text(local) if offsets else text


def _page(
    c,
    unit: Unit,
    protocol: Protocol,
    trend: PatientTrend,
    at: datetime,
    width: float,
    height: float,
) -> None:
    tz = unit.unit.tz
    p = trend.patient
    dev = p.device
    c.setFillGray(0)
    c.setFont(_bold(), 13)
    c.drawString(36, height - 44, f"Limb trend - bed {p.bed} - {p.ref}")
    c.setFont(_regular(), 8)
    dpc = (
        f"distal perfusion cannula {p.dpc.size_fr:g} Fr" if p.dpc else "no distal perfusion cannula"
    )
    c.drawString(
        36,
        height - 58,
        f"{unit.unit.name}; {dev.kind} {dev.size_fr:g} Fr ({dev.label}) in {dev.side} "
        f"{dev.vessel} since {day_hm(dev.inserted, tz)}; {dpc}",
    )
    c.drawString(
        36,
        height - 69,
        f"As at {day_hm(at, tz)}; protocol {protocol.name}; "
        f"{len(trend.check_times)} checks recorded.",
    )
    c.drawString(36, height - 80, f"Thresholds: {protocol.review.note}")

    t0, t1, _ = axis_window(trend.check_times, at, tz)
    span = t1 - t0  # both UTC: real elapsed time
    left, right = 80, width - 40
    th = protocol.review

    # NIRS panel
    nirs = {
        s: [(f.time, float(f.value)) for f in trend.findings if f.item == "nirs" and f.site == s]
        for s in SIDES
    }
    lines = [
        (f"floor {th.nirs_absolute_floor_pct.value:g}%", th.nirs_absolute_floor_pct.value, [1, 2])
    ]
    for s, b in trend.nirs_baseline.items():
        limit = b * (1 - th.nirs_relative_fall_pct.value / 100)
        lines.append(
            (f"{s} {th.nirs_relative_fall_pct.value:g}% fall from {b:g}", limit, [6, 2, 1, 2])
        )
    values = [v for pts in nirs.values() for _, v in pts] + [v for _, v, _ in lines]
    lo, hi, _ = value_ticks(
        max(0.0, min(values, default=40) - 5), min(100.0, max(values, default=80) + 5)
    )
    top = height - 100
    _panel(
        c,
        trend,
        "Calf tissue oxygen saturation (NIRS, %)",
        left,
        top - 170,
        right,
        top,
        t0,
        t1,
        lo,
        hi,
        nirs,
        lines,
        tz,
        span,
    )
    # Capillary refill panel
    refill = {
        s: [(f.time, float(f.value)) for f in trend.findings if f.item == "refill" and f.site == s]
        for s in SIDES
    }
    slow = th.capillary_refill_slow_s.value
    rv = [v for pts in refill.values() for _, v in pts]
    top2 = top - 200
    _panel(
        c,
        trend,
        "Capillary refill (s)",
        left,
        top2 - 130,
        right,
        top2,
        t0,
        t1,
        0,
        value_ticks(0, max([slow * 2, *rv]) + 0.5)[1],
        refill,
        [(f"slow above {slow:g} s", slow, [1, 2])],
        tz,
        span,
    )
    # Pedal signals strip
    top3 = top2 - 160
    _pedal_strip(c, trend, left, top3 - 120, right, top3, t0, t1, tz, span)
    _alert_list(c, trend, tz, top3 - 150, width)


def _x(t: datetime, t0: datetime, t1: datetime, left: float, right: float) -> float:
    return left + (right - left) * x_fraction(t, t0, t1)


def _inside(t: datetime, t0: datetime, t1: datetime) -> bool:
    return utc(t0) <= utc(t) <= utc(t1)


def _axes(c, trend: PatientTrend, title: str, left, bottom, right, top, t0, t1, tz, span) -> None:
    c.setStrokeGray(0)
    c.setLineWidth(0.6)
    c.setDash([])
    c.rect(left, bottom, right - left, top - bottom)
    c.setFont(_bold(), 9)
    c.drawString(left, top + 4, title)
    c.setFont(_regular(), 6.5)
    _, ticks = time_ticks(t0, t1, tz)
    offsets = len({t.astimezone(tz).utcoffset() for t in (t0, t1, *ticks)}) > 1
    for t in ticks:
        x = _x(t, t0, t1, left, right)
        c.line(x, bottom, x, bottom - 3)
        c.drawCentredString(x, bottom - 10, _fmt(t, tz, span, offsets))
    # Checks: a tick inside the bottom edge at every recorded check.
    c.setLineWidth(1.2)
    for t in trend.check_times:
        if _inside(t, t0, t1):
            x = _x(t, t0, t1, left, right)
            c.line(x, bottom, x, bottom + 5)
    # Overdue checks: an open triangle inside the bottom edge at each due time.
    c.setLineWidth(0.8)
    for t in trend.overdue:
        if _inside(t, t0, t1):
            x = _x(t, t0, t1, left, right)
            path = c.beginPath()
            path.moveTo(x, bottom + 2)
            path.lineTo(x - 3.5, bottom + 8)
            path.lineTo(x + 3.5, bottom + 8)
            path.close()
            c.setFillGray(1)
            c.drawPath(path, stroke=1, fill=1)
            c.setFillGray(0)
    # Alert onsets: a triangle inside the top edge, numbered as in the list below the panels.
    numbers: dict[datetime, list[int]] = {}  # keyed by instant (UTC), never wall time
    for i, (t, _) in enumerate(trend.onsets, start=1):
        numbers.setdefault(utc(t), []).append(i)
    for t, nums in numbers.items():
        if _inside(t, t0, t1):
            x = _x(t, t0, t1, left, right)
            path = c.beginPath()
            path.moveTo(x, top - 9)
            path.lineTo(x - 4, top - 2)
            path.lineTo(x + 4, top - 2)
            path.close()
            c.setFillGray(0)
            c.drawPath(path, stroke=1, fill=1)
            c.setFont(_regular(), 6)
            label = f"{nums[0]}-{nums[-1]}" if len(nums) > 1 else str(nums[0])
            c.drawCentredString(x, top - 16, label)
    c.setLineWidth(0.6)


def _marker(c, kind: str, x: float, y: float, size: float = 2.6) -> None:
    c.setDash([])
    if kind == "circle":
        c.circle(x, y, size, stroke=1, fill=1)
    elif kind == "square":
        c.rect(x - size, y - size, 2 * size, 2 * size, stroke=1, fill=0)
    elif kind == "filled":
        c.circle(x, y, size + 0.6, stroke=1, fill=1)
    elif kind == "open":
        c.circle(x, y, size + 0.6, stroke=1, fill=0)
    else:  # cross
        c.line(x - size, y - size, x + size, y + size)
        c.line(x - size, y + size, x + size, y - size)


def _panel(
    c, trend, title, left, bottom, right, top, t0, t1, lo, hi, series, lines, tz, span
) -> None:
    _axes(c, trend, title, left, bottom, right, top, t0, t1, tz, span)

    def y(v: float) -> float:
        return bottom + (top - bottom) * (v - lo) / ((hi - lo) or 1.0)

    c.setFont(_regular(), 6.5)
    c.setFillGray(0)
    for v in value_ticks(lo, hi)[2]:
        if lo <= v <= hi:
            c.drawRightString(left - 3, y(v) - 2, f"{v:g}")
            c.line(left - 2, y(v), left, y(v))
    for label, value, dash in lines:
        if lo <= value <= hi:
            c.setStrokeGray(0.35)
            c.setDash(dash)
            c.line(left, y(value), right, y(value))
            c.setDash([])
            c.setFillGray(0.2)
            if label.startswith("R "):  # the two legs' limits are often close: label them apart
                c.drawRightString(right - 3, y(value) + 2, label)
            else:
                c.drawString(left + 3, y(value) + 2, label)
    c.setStrokeGray(0)
    c.setFillGray(0)
    for side, pts in series.items():
        pts = sorted(((t, v) for t, v in pts if _inside(t, t0, t1)), key=lambda p: utc(p[0]))
        c.setLineWidth(1.1)
        c.setDash(LEG_DASH[side])
        for (ta, va), (tb, vb) in zip(pts, pts[1:], strict=False):
            c.line(_x(ta, t0, t1, left, right), y(va), _x(tb, t0, t1, left, right), y(vb))
        for t, v in pts:
            _marker(c, LEG_MARKER[side], _x(t, t0, t1, left, right), y(v))
    # Legend: line style and marker per leg.
    c.setLineWidth(1.1)
    lx = right - 120
    for i, side in enumerate(SIDES):
        yy = top + 6
        x0 = lx + i * 60
        c.setDash(LEG_DASH[side])
        c.line(x0, yy, x0 + 22, yy)
        _marker(c, LEG_MARKER[side], x0 + 11, yy)
        c.setFont(_regular(), 7)
        c.drawString(x0 + 26, yy - 2.5, f"{side} leg")
    c.setDash([])
    c.setLineWidth(0.6)


def _pedal_strip(c, trend, left, bottom, right, top, t0, t1, tz, span) -> None:
    sites = sorted(
        {
            f.site
            for f in trend.findings
            if f.item == "pulse" and f.site.split("-")[1] in PEDAL_ARTERIES
        }
    )
    for side in SIDES:
        for artery in ("DPA", "PTA"):
            if f"{side}-{artery}" not in sites:
                sites.append(f"{side}-{artery}")
    sites = sorted(set(sites))
    _axes(
        c,
        trend,
        "Pedal signals (filled circle palpable, open circle Doppler only, cross absent)",
        left,
        bottom,
        right,
        top,
        t0,
        t1,
        tz,
        span,
    )
    row_h = (top - bottom - 12) / max(len(sites), 1)
    c.setFont(_regular(), 7)
    for i, site in enumerate(sites):
        yy = top - 12 - row_h * (i + 0.5)
        c.setFillGray(0)
        c.drawRightString(left - 3, yy - 2.5, site)
        c.setStrokeGray(0.8)
        c.setDash([1, 3])
        c.line(left, yy, right, yy)
        c.setStrokeGray(0)
        for f in trend.findings:
            if f.item == "pulse" and f.site == site and _inside(f.time, t0, t1):
                _marker(c, GRADE_MARK[f.value], _x(f.time, t0, t1, left, right), yy)
    c.setDash([])


def _alert_list(c, trend: PatientTrend, tz, top: float, width: float) -> None:
    from reportlab.lib.utils import simpleSplit

    c.setFillGray(0)
    c.setFont(_bold(), 9)
    c.drawString(36, top, "Alerts (filled triangle at the top = the check where each first opened)")
    c.setFont(_regular(), 7)
    y = top - 12
    rows = [
        f"{i}. {t.astimezone(tz):%d %b} {hm(t, tz)} {a.rule}: {a.detail}"
        for i, (t, a) in enumerate(trend.onsets, 1)
    ]
    if trend.overdue:
        rows.append(
            f"Overdue now (open triangle at the foot of each panel): {len(trend.overdue)} "
            f"scheduled check(s) not recorded, due "
            + ", ".join(hm(t, tz) for t in trend.overdue[:12])
            + (" ..." if len(trend.overdue) > 12 else "")
        )
    rows.append(f"Open now: {', '.join(sorted({a.rule for a in trend.open_alerts})) or 'none'}")
    for row in rows:
        for line in simpleSplit(row, _regular(), 7, width - 72):
            if y < TREND_FLOOR_PT:
                c.drawString(36, y, "... (more in `vascplan obs review`)")
                return
            c.drawString(36, y, line)
            y -= 9
