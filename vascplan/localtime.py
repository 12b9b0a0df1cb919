"""Instants and local clock times: compute in UTC, print local time with its offset.

Two aware datetimes that share a ``tzinfo`` compare and subtract by *wall* time in
Python: PEP 495's ``fold`` is ignored, so the first 01:30 and the second 01:30 of the
night the clocks go back are equal, and a subtraction across a clock change is an hour
off. Every comparison, subtraction, sort, min/max and dict key on times therefore goes
through :func:`utc`; the unit's zone is used only to print.

A local time is printed with its UTC offset (``01:30+01:00``, then ``01:30+00:00``),
so the two 01:30s of that night read apart.

References
----------
Python Enhancement Proposal 495, "Local Time Disambiguation" (A. Belopolsky, T. Peters,
2015): inter-zone comparison uses UTC; intra-zone comparison and arithmetic ignore fold.
"""

from __future__ import annotations

from datetime import UTC, datetime, tzinfo


def utc(moment: datetime) -> datetime:
    """``moment`` (aware) as the same instant in UTC, for comparing, subtracting, sorting.

    >>> from zoneinfo import ZoneInfo
    >>> london = ZoneInfo("Europe/London")
    >>> first = datetime(2026, 10, 25, 1, 30, tzinfo=london)           # BST, +01:00
    >>> second = datetime(2026, 10, 25, 1, 30, fold=1, tzinfo=london)  # GMT, +00:00
    >>> first == second, utc(first) < utc(second)
    (True, True)
    """
    if moment.tzinfo is None or moment.utcoffset() is None:
        raise ValueError(f"{moment.isoformat()} has no time zone; an instant is needed")
    return moment.astimezone(UTC)


def offset_text(moment: datetime) -> str:
    """The UTC offset of aware ``moment`` as ISO 8601 writes it: ``+01:00``, ``-04:00``."""
    off = moment.utcoffset()
    if off is None:
        raise ValueError(f"{moment.isoformat()} has no time zone")
    minutes = int(off.total_seconds() // 60)
    sign = "-" if minutes < 0 else "+"
    return f"{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def hm(moment: datetime, tz: tzinfo) -> str:
    """Local clock time with its offset: ``01:30+01:00``.

    >>> from zoneinfo import ZoneInfo
    >>> tz = ZoneInfo("Europe/London")
    >>> hm(datetime(2026, 10, 25, 0, 30, tzinfo=UTC), tz), hm(
    ...     datetime(2026, 10, 25, 1, 30, tzinfo=UTC), tz)
    ('01:30+01:00', '01:30+00:00')
    """
    local = moment.astimezone(tz)
    return f"{local:%H:%M}{offset_text(local)}"


def day_hm(moment: datetime, tz: tzinfo) -> str:
    """Local date and clock time with its offset: ``2026-10-25 01:30+00:00``."""
    local = moment.astimezone(tz)
    return f"{local:%Y-%m-%d} {hm(local, tz)}"
