"""Plausibility: times inside stated windows, numbers in plain ASCII digits, overrides in range.

The windows live in ``data/surveillance/time_window.yaml`` and the override ranges in
``data/access/bounds.yaml``, each with its basis. They catch typos (a year of 2962, a
device inserted in 1900, ``1e300``), never a clinical choice.
"""

from __future__ import annotations

import math
import re
from datetime import datetime, timedelta
from functools import cache
from typing import Annotated, Any

import click
from pydantic import BeforeValidator

from vascplan.errors import InputError

# ---------------------------------------------------------------------------
# Tables


@cache
def _table(rel: str) -> dict[str, Any]:
    from vascplan.fileio import read_document
    from vascplan.paths import data_dir

    data = read_document(data_dir() / rel)
    if not isinstance(data, dict):
        raise InputError(rel, "", "expected a mapping")
    return data


def window(name: str) -> float:
    """A value of ``time_window.yaml`` (minutes or days, as its ``unit`` says)."""
    return float(_table("surveillance/time_window.yaml")[name]["value"])


def bounds(table: str, name: str) -> tuple[float, float] | None:
    """The plausible ``(min, max)`` of an override of ``name`` in ``limits`` or ``weights``."""
    entries = _table("access/bounds.yaml").get(table) or {}
    entry = entries.get(name) or entries.get("default")
    if not entry:
        return None
    return float(entry["min"]), float(entry["max"])


def check_override(table: str, name: str, value: float, source: str, field: str) -> float:
    """Refuse an override of a limit or weight outside its plausible range.

    >>> check_override("limits", "sar_max", 1.0, "--limit", "sar_max")
    1.0
    """
    rng = bounds(table, name)
    if rng is not None:
        lo, hi = rng
        if not (math.isfinite(value) and lo <= value <= hi):
            raise InputError(
                source, field, f"{value:g} is outside the plausible range {lo:g}-{hi:g}"
            )
    return value


# ---------------------------------------------------------------------------
# Times


NOW_VARIABLE = "VASCPLAN_NOW"
"""An environment variable that sets "now" for the windows (ISO 8601 with its UTC offset):
for the test suite, whose invented records are fixed in time, and for replaying an old
shift's files."""


def now() -> datetime:
    """The current time (aware) the windows are measured from (see :data:`NOW_VARIABLE`)."""
    import os
    from datetime import UTC

    fixed = os.environ.get(NOW_VARIABLE)
    if fixed:
        try:
            value = datetime.fromisoformat(fixed)
        except ValueError:
            raise InputError(NOW_VARIABLE, "", f"{fixed!r} is not an ISO 8601 time") from None
        if value.tzinfo is None:
            raise InputError(NOW_VARIABLE, "", "give the time with its UTC offset, e.g. +00:00")
        return value
    return datetime.now(UTC)


def describe_gap(delta: timedelta) -> str:
    """A gap in words for a message: ``936 years``, ``3 days``, ``5 hours``.

    >>> describe_gap(timedelta(days=936 * 365.25)), describe_gap(timedelta(hours=5))
    ('936 years', '5 hours')
    """
    days = abs(delta.total_seconds()) / 86400
    if days >= 365.25:
        n, unit = round(days / 365.25), "year"
    elif days >= 1:
        n, unit = int(days), "day"
    elif days * 24 >= 1:
        n, unit = int(days * 24), "hour"
    else:
        n, unit = max(1, int(days * 1440)), "minute"
    return f"{n} {unit}{'' if n == 1 else 's'}"


def _shown(moment: datetime) -> str:
    return f"{moment.year:04d}-{moment:%m-%d %H:%M}"  # %Y drops the zeros of year 1


def _ahead(moment: datetime, current: datetime, limit: timedelta, what: str) -> str | None:
    gap = moment - current
    if gap <= limit:
        return None
    hint = ": a typo in the year?" if gap >= timedelta(days=365) else ""
    return (
        f"{_shown(moment)} is {describe_gap(gap)} ahead{hint} "
        f"({what} at most {describe_gap(limit)} ahead of now)"
    )


def _behind(moment: datetime, current: datetime, limit: timedelta, what: str) -> str | None:
    gap = current - moment
    if gap <= limit:
        return None
    hint = ": a typo in the year?" if gap >= timedelta(days=365) else ""
    return (
        f"{_shown(moment)} is {describe_gap(gap)} ago{hint} "
        f"({what} at most {describe_gap(limit)} before now)"
    )


def check_insertion(
    moment: datetime,
    source: str,
    field: str,
    current: datetime | None = None,
    what: str = "an insertion",
) -> None:
    """Refuse an insertion (or removal, event) time outside the window around now."""
    current = current or now()
    problem = _ahead(
        moment, current, timedelta(days=window("insertion_ahead_max_days")), f"{what} is"
    ) or _behind(
        moment, current, timedelta(days=window("insertion_before_now_max_days")), f"{what} is"
    )
    if problem:
        raise InputError(source, field, problem)


def check_review_time(moment: datetime, source: str, current: datetime | None = None) -> None:
    """Refuse a review or planning instant (``--at``, ``--from``) outside its window."""
    current = current or now()
    problem = _ahead(
        moment, current, timedelta(days=window("review_ahead_max_days")), "a time here is"
    ) or _behind(
        moment, current, timedelta(days=window("review_before_now_max_days")), "a time here is"
    )
    if problem:
        raise InputError(source, "", problem)


def check_check_time(
    moment: datetime,
    monitoring_start: datetime | None,
    source: str,
    field: str = "",
    current: datetime | None = None,
) -> None:
    """Refuse a check time ahead of now (beyond the margin) or before monitoring began.

    ``monitoring_start`` is the patient's device insertion.
    """
    if moment.microsecond:
        # The store keeps whole seconds: 16:00:00.5 would be 16:00:00 again.
        raise InputError(
            source, field, f"{moment.isoformat()} has a fraction of a second; give whole seconds"
        )
    current = current or now()
    limit = timedelta(minutes=window("check_ahead_max_min"))
    problem = _ahead(moment, current, limit, "a check is")
    if problem:
        raise InputError(source, field, problem)
    if monitoring_start is not None and moment < monitoring_start:
        raise InputError(
            source,
            field,
            f"{_shown(moment)} is before the patient's monitoring began "
            f"({_shown(monitoring_start.astimezone(moment.tzinfo))}, the device's insertion)",
        )


_DATE_ONLY = re.compile(r"^\s*\d{4}-?\d{2}-?\d{2}\s*$")


def _time_text(value: Any) -> Any:
    """A time field of a file: ISO 8601 text with a time of day (or a datetime)."""
    if isinstance(value, datetime):
        return value
    if isinstance(value, bool) or not isinstance(value, str):
        raise ValueError(
            f"expected an ISO 8601 time such as 2026-12-01T14:20 (got {value!r}, "
            f"a {type(value).__name__})"
        )
    if _DATE_ONLY.match(value):
        raise ValueError(
            f"{value.strip()!r} has no time of day; give one, e.g. {value.strip()}T14:20"
        )
    try:
        return datetime.fromisoformat(value.strip())
    except ValueError:
        raise ValueError(
            f"{value.strip()!r} is not an ISO 8601 time such as 2026-12-01T14:20"
        ) from None


TimeText = Annotated[datetime, BeforeValidator(_time_text)]
"""A datetime field that must be written with a time of day (no date alone, no number)."""


# ---------------------------------------------------------------------------
# Numbers

_PLAIN_NUMBER = re.compile(r"^\s*[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\s*$", re.ASCII)
_PLAIN_INT = re.compile(r"^\s*[-+]?\d+\s*$", re.ASCII)


def number_problem(text: str, *, integer: bool = False) -> str | None:
    """Why ``text`` is not a plain number in ASCII digits, or None.

    >>> number_problem("64"), number_problem("6_4")
    (None, "'6_4' is not a plain number: write ASCII digits 0-9 without underscores")
    """
    rx = _PLAIN_INT if integer else _PLAIN_NUMBER
    if rx.match(text):
        return None
    kind = "whole number" if integer else "number"
    if any(ch.isdigit() and not ch.isascii() for ch in text) or "_" in text:
        return f"{text!r} is not a plain {kind}: write ASCII digits 0-9 without underscores"
    return None if not integer else f"{text!r} is not a whole number"


def ascii_float(text: str) -> float:
    """``float(text)`` that refuses non-ASCII digits and underscores (ValueError).

    >>> ascii_float(" 64 ")
    64.0
    """
    problem = number_problem(text)
    if problem:
        raise ValueError(problem)
    return float(text)


class AsciiInt(click.ParamType):
    """A click integer in ASCII digits only, within ``min``-``max`` (a bed, an entry id)."""

    name = "integer"

    def __init__(self, lo: int, hi: int) -> None:
        self.lo, self.hi = lo, hi

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> int:
        if isinstance(value, int) and not isinstance(value, bool):
            number = value
        else:
            text = str(value)
            if not _PLAIN_INT.match(text):
                self.fail(f"{text!r} is not a whole number in ASCII digits 0-9", param, ctx)
            number = int(text)
        if not self.lo <= number <= self.hi:
            self.fail(f"{number} is outside {self.lo}-{self.hi}", param, ctx)
        return number


STORE_ID_MAX = 2**31 - 1
"""The largest entry id the store holds (its id column is a 32-bit INTEGER on PostgreSQL)."""
