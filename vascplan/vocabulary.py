"""The check-item vocabulary: the items of a limb check, their sites and their values.

One finding is ``(item, site, value)``; the item decides which sites and values are
allowed. The vocabulary is part of the interface (the CSV columns ``item``, ``site``,
``value``, the ``obs add`` options, the protocol's ``records``, the web form's fields and
the FHIR export use exactly these words) and lives in one registry, :data:`ITEMS`, below
every package that names a check item (the protocol, the record, the forms).

Plausible-range limits for numbers are there to catch typing slips, not to judge the
patient; they are common practice, not published cut-offs.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

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
        ``optional-artery-or-side`` (empty, L, R or an artery such as ``R-CFA``), or
        ``none`` (no site). For the hand items, ``L``/``R`` is the arm of that side.
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
        ItemSpec(
            "pulse",
            "artery",
            PULSE_GRADES,
            meaning="arterial pulse at one artery (foot, leg, wrist or arm), by palpation or "
            "Doppler",
        ),
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
            ("ok", "kinked", "no-flow", "disconnected"),
            meaning="distal perfusion cannula: connection and flow",
        ),
        ItemSpec(
            "circuit-flow",
            "none",
            ("ok", "low", "none"),
            meaning="ECMO circuit flow against the prescribed flow: as prescribed, low, none",
        ),
        ItemSpec(
            "position",
            "optional-artery-or-side",
            ("unchanged", "moved"),
            meaning="cannula, pump or balloon position mark at the skin",
        ),
        ItemSpec(
            "hand-colour",
            "side",
            ("normal", "pale", "mottled", "blue"),
            meaning="skin colour of the hand and fingers",
        ),
        ItemSpec(
            "hand-temperature",
            "side",
            ("warm", "cool", "cold"),
            meaning="skin temperature of the hand to touch",
        ),
        # 0-20 s: common practice, a range that catches slips (normal is under 2-3 s).
        ItemSpec(
            "finger-refill",
            "side",
            number_range=(0, 20),
            unit="s",
            meaning="capillary refill time of the fingers, seconds",
        ),
        ItemSpec(
            "hand-sensation",
            "side",
            ("normal", "fingers", "beyond-fingers", "absent"),
            meaning="sensation of the hand: normal, lost in the fingers, lost beyond, absent",
        ),
        ItemSpec(
            "hand-motor",
            "side",
            ("normal", "weak", "paralysed"),
            meaning="movement of the hand and fingers",
        ),
        ItemSpec("forearm", "side", ("soft", "tense"), meaning="forearm tension"),
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
    "none": "no site (leave it empty)",
}


def site_help(item: str) -> str:
    """What ``item`` takes as its site, in words."""
    return _SITE_HELP[ITEMS[item].sites]


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
        or (kind == "none" and site == "")
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


def check_item(item: str) -> str:
    """Return the item word or raise ``ValueError`` naming the items."""
    word = item.strip().lower()
    if word not in ITEMS:
        raise ValueError(
            f"unknown item {item!r}{did_you_mean(word, ITEMS)}; items are {', '.join(ITEMS)}"
        )
    return word
