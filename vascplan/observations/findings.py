"""One finding of a limb check, validated: time, bed, ref, author, item, site, value.

The items, their sites and values are the house's vocabulary
(:mod:`vascplan.vocabulary`); this module reads a finding's time in the unit's zone and
builds the validated record.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import datetime
from zoneinfo import ZoneInfo

from vascplan.errors import InputError
from vascplan.vocabulary import (  # noqa: F401 - the vocabulary, named here for the record
    ARMS,
    ARTERIES,
    ENTERED_IN_ERROR,
    ITEMS,
    PEDAL_ARTERIES,
    PULSE_GRADES,
    SIDE_WORDS,
    SIDES,
    WRIST_ARTERIES,
    ItemSpec,
    check_item,
    check_site,
    check_value,
    side_of,
    site_help,
)


@dataclass(frozen=True)
class Finding:
    """One validated finding of one check.

    Attributes
    ----------
    time : datetime
        When the check was made (time-zone aware).
    bed : int
    ref : str
        The patient's pseudonymous ref (must match the unit file's patient in ``bed``).
    by : str
        Who made the check (a staff id).
    item, site, value : str
        Canonical words; a number is written in its shortest form (``64``, ``2.5``).
    """

    time: datetime
    bed: int
    ref: str
    by: str
    item: str
    site: str
    value: str

    @property
    def number(self) -> float | None:
        """The value as a number for numeric items, else None."""
        return float(self.value) if ITEMS[self.item].numeric else None


_DATE_ONLY = re.compile(r"^\d{4}-?\d{2}-?\d{2}$")


def check_time(text: str, tz: ZoneInfo, source: str) -> datetime:
    """Parse the time of a check: ISO 8601 with a time of day; naive means local to ``tz``.

    A date alone is refused (it would be read as midnight, which a check rarely is).

    >>> from zoneinfo import ZoneInfo
    >>> check_time("2026-12-01T16:00", ZoneInfo("Europe/London"), "t").isoformat()
    '2026-12-01T16:00:00+00:00'
    """
    from vascplan.surveillance.unit import parse_local_time

    if _DATE_ONLY.match(text.strip()):
        raise InputError(
            source, "", f"{text.strip()!r} has no time of day; give one, e.g. {text.strip()}T16:00"
        )
    text = text.strip()
    try:
        naive = datetime.fromisoformat(text)
    except ValueError:
        naive = None
    if naive is not None and naive.tzinfo is None:
        first, second = (naive.replace(tzinfo=tz, fold=f) for f in (0, 1))
        off1, off2 = first.utcoffset(), second.utcoffset()
        if off1 is not None and off2 is not None and off1 > off2:
            # The clocks went back: the wall time happens twice; name both real offsets.
            # (In a gap fold 0 has the smaller offset; parse_local_time refuses it below.)
            raise InputError(
                source,
                "",
                f"{naive:%Y-%m-%d %H:%M} happens twice in {tz.key} (clocks go back); "
                f"give it with its UTC offset: {first.isoformat(timespec='minutes')} "
                f"(the first) or {second.isoformat(timespec='minutes')} (the second)",
            )
    return parse_local_time(text, tz, source)


def make_finding(
    *,
    time: datetime,
    bed: int,
    ref: str,
    by: str,
    item: str,
    site: str,
    value: str,
    source: str,
    where: str = "",
) -> Finding:
    """Validate one finding; every mistake is an :class:`InputError`.

    Parameters
    ----------
    source : str
        The file or option the finding came from (named in the error).
    where : str
        A prefix for the field in the error, such as ``line 4: `` for a CSV row.
    """
    try:
        word = check_item(item)
    except ValueError as exc:
        raise InputError(source, f"{where}item", str(exc)) from None
    try:
        canonical_site = check_site(word, site)
    except ValueError as exc:
        raise InputError(source, f"{where}site", str(exc)) from None
    try:
        canonical_value = check_value(word, value)
    except ValueError as exc:
        raise InputError(source, f"{where}value", str(exc)) from None
    by = by.strip()
    if not by or len(by) > 60:
        raise InputError(
            source,
            f"{where}by",
            "who made the check is required (a staff id, at most 60 characters)",
        )
    return Finding(time, bed, ref, by, word, canonical_site, canonical_value)


def split_option(text: str) -> tuple[str, str]:
    """Split an ``obs add`` option value ``SITE=VALUE`` (or a bare ``VALUE``).

    >>> split_option("R-DPA=doppler"), split_option("3")
    (('R-DPA', 'doppler'), ('', '3'))
    """
    if "=" in text:
        site, value = text.split("=", 1)
        return site.strip(), value.strip()
    return "", text.strip()
