"""The vocabulary of a limb check: items, their sites and their values.

One finding is ``(item, site, value)``; the item decides which sites and values are
allowed. The vocabulary is part of the interface (the CSV columns ``item``, ``site``,
``value`` use exactly these words) and lives in one registry, :data:`ITEMS`.

Plausible-range limits for numbers are there to catch typing slips, not to judge the
patient; they are common practice, not published cut-offs.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import datetime
from zoneinfo import ZoneInfo

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean

SIDES = ("L", "R")
PEDAL_ARTERIES = ("DPA", "PTA", "PER", "ATA")
"""Arteries whose signal at the ankle or foot counts as a pedal signal."""
WRIST_ARTERIES = ("RAD", "ULN")
"""Arteries whose signal at the wrist is watched below an axillary or subclavian device."""
ARTERIES = (
    *PEDAL_ARTERIES,
    *("PLA", "TPT", "POP", "SFA", "PFA", "CFA", "EIA", "IIA", "CIA"),
    *("SCA", "AXA", "BRA", "RAD", "ULN"),
)
"""Arteries a site may name, written with a side (``R-DPA``): the ids of the sided segments
of ``data/anatomy/segments.csv`` (a test keeps the two the same)."""
ARMS = ("L-ARM", "R-ARM")
SIDE_WORDS = {"LEFT": "L", "RIGHT": "R"}
"""Whole words accepted for a side and stored as ``L`` / ``R``."""

_ARTERY_SITE = re.compile(r"^([LR])-(" + "|".join(ARTERIES) + r")$")

PULSE_GRADES = ("palpable", "doppler", "absent")
"""``palpable``; ``doppler`` = not palpable but a Doppler signal is heard; ``absent`` = neither."""
ENTERED_IN_ERROR = "entered-in-error"
"""The value a correction gives to a finding that should never have been recorded."""


@dataclass(frozen=True)
class ItemSpec:
    """What one item allows.

    Attributes
    ----------
    name : str
        The item word used in the CSV and as the ``obs add`` option.
    sites : str
        ``side`` (L or R), ``artery`` (``R-DPA``), ``artery-or-side``,
        ``artery-or-arm`` (``L-ARM``), ``optional-side`` (empty, L or R), or
        ``optional-artery-or-side`` (empty, L, R or an artery such as ``R-CFA``).
    values : tuple of str
        Allowed words, or empty for a number.
    number_range : tuple of float, optional
        Inclusive plausible range for a number.
    integer : bool
        The number must be whole.
    unit : str
        The number's unit as UCUM (``%``, ``s``, ``mm[Hg]``, ``{score}``), or empty.
    meaning : str
        One line for the README and ``obs template``.
    """

    name: str
    sites: str
    values: tuple[str, ...] = ()
    number_range: tuple[float, float] | None = None
    integer: bool = False
    unit: str = ""
    meaning: str = ""

    @property
    def numeric(self) -> bool:
        return self.number_range is not None


ITEMS: dict[str, ItemSpec] = {
    spec.name: spec
    for spec in (
        ItemSpec("pulse", "artery", PULSE_GRADES, meaning="pedal or leg pulse at one artery"),
        ItemSpec(
            "venous", "artery-or-side", ("present", "absent"), meaning="venous Doppler signal"
        ),
        # 0-100: a saturation is a percentage.
        ItemSpec(
            "nirs",
            "side",
            number_range=(0, 100),
            unit="%",
            meaning="calf tissue oxygen saturation by NIRS, percent",
        ),
        # 0-20 s: common practice, a range that catches slips (normal is under 2-3 s).
        ItemSpec(
            "refill",
            "side",
            number_range=(0, 20),
            unit="s",
            meaning="capillary refill time, seconds",
        ),
        ItemSpec("colour", "side", ("normal", "pale", "mottled", "blue"), meaning="skin colour"),
        ItemSpec(
            "temperature", "side", ("warm", "cool", "cold"), meaning="skin temperature to touch"
        ),
        ItemSpec(
            "sensation",
            "side",
            ("normal", "toes", "beyond-toes", "absent"),
            meaning="sensation: normal, lost in the toes, lost beyond the toes, absent",
        ),
        ItemSpec(
            "motor", "side", ("normal", "weak", "paralysed"), meaning="movement of foot and toes"
        ),
        ItemSpec("calf", "side", ("soft", "tense"), meaning="calf tension"),
        # 0-10: the numeric pain rating scale.
        ItemSpec(
            "pain",
            "optional-side",
            number_range=(0, 10),
            integer=True,
            unit="{score}",
            meaning="pain score 0-10",
        ),
        ItemSpec(
            "access",
            "optional-artery-or-side",
            ("dry", "ooze", "bleeding", "haematoma"),
            meaning="access-site finding",
        ),
        ItemSpec(
            "dpc",
            "optional-artery-or-side",
            ("ok", "kinked", "no-flow"),
            meaning="distal perfusion cannula: connection and flow",
        ),
        # 0-300 mmHg: common practice, a range that catches slips.
        ItemSpec(
            "pressure",
            "artery-or-arm",
            number_range=(0, 300),
            integer=False,
            unit="mm[Hg]",
            meaning="systolic pressure at an ankle artery or an arm, mmHg",
        ),
    )
}

_SITE_HELP = {
    "side": "L or R",
    "artery": "a side and an artery such as R-DPA (arteries " + ", ".join(ARTERIES) + ")",
    "artery-or-side": "L, R or an artery such as R-CFA",
    "artery-or-arm": "an artery such as R-PTA, or L-ARM / R-ARM",
    "optional-side": "empty, L or R",
    "optional-artery-or-side": "empty, L, R or an artery such as R-CFA",
}


def site_help(item: str) -> str:
    """What ``item`` takes as its site, in words."""
    return _SITE_HELP[ITEMS[item].sites]


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


def side_of(site: str) -> str | None:
    """The leg (``L``/``R``) a site belongs to, or None for an arm or no site.

    >>> side_of("R-DPA"), side_of("L"), side_of("L-ARM"), side_of("")
    ('R', 'L', None, None)
    """
    if site in SIDES:
        return site
    m = _ARTERY_SITE.match(site)
    return m.group(1) if m else None


def check_site(item: str, site: str) -> str:
    """Return the canonical site for ``item`` or raise ``ValueError`` saying what is allowed."""
    spec = ITEMS[item]
    site = site.strip().upper()
    site = SIDE_WORDS.get(site, site)
    kind = spec.sites
    artery = bool(_ARTERY_SITE.match(site))
    ok = (
        (kind == "side" and site in SIDES)
        or (kind == "artery" and artery)
        or (kind == "artery-or-side" and (site in SIDES or artery))
        or (kind == "artery-or-arm" and (site in ARMS or artery))
        or (kind == "optional-side" and site in ("", *SIDES))
        or (kind == "optional-artery-or-side" and (site in ("", *SIDES) or artery))
    )
    if not ok:
        shown = repr(site) if site else "empty"
        raise ValueError(f"site {shown} is not allowed for {item}; use {_SITE_HELP[kind]}")
    return site


def check_value(item: str, value: str) -> str:
    """Return the canonical value for ``item`` or raise ``ValueError`` saying what is allowed.

    >>> check_value("nirs", "64.0"), check_value("pulse", "Doppler")
    ('64', 'doppler')
    """
    spec = ITEMS[item]
    text = value.strip()
    if spec.numeric:
        lo, hi = spec.number_range  # type: ignore[misc]
        from vascplan.plausibility import ascii_float

        try:
            number = ascii_float(text)
        except ValueError:
            raise ValueError(f"{item} must be a number {lo:g}-{hi:g}, got {text!r}") from None
        if number != number or not lo <= number <= hi:
            unit = {"{score}": "", "mm[Hg]": " mmHg"}.get(spec.unit, f" {spec.unit}")
            raise ValueError(f"{item} must be {lo:g}-{hi:g}{unit}, got {text}")
        if spec.integer and number != int(number):
            raise ValueError(f"{item} must be a whole number {lo:g}-{hi:g}, got {text}")
        return f"{number:g}"
    word = text.lower()
    if word not in spec.values:
        raise ValueError(
            # No "did you mean" here: a near spelling of a clinical grade may be the wrong grade.
            f"{item} value {text!r} is not allowed; use one of {', '.join(spec.values)}"
        )
    return word


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


def check_item(item: str) -> str:
    """Return the item word or raise ``ValueError`` naming the items."""
    word = item.strip().lower()
    if word not in ITEMS:
        raise ValueError(
            f"unknown item {item!r}{did_you_mean(word, ITEMS)}; items are {', '.join(ITEMS)}"
        )
    return word


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
