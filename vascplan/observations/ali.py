"""Acute limb ischaemia category (I, IIa, IIb, III) from a check's findings.

The categories and their findings are those of the reporting standards: Rutherford RB,
Baker JD, Ernst C, et al. Recommended standards for reports dealing with lower extremity
ischemia: revised version. J Vasc Surg 1997;26:517-538, table of clinical categories of
acute limb ischaemia. The table lives in ``data/observations/ali_categories.csv`` and
``data/observations/ali_findings.csv`` in the standard's own wording.

Rule: a leg's category is the most severe category that any one of its findings belongs
to (sensory loss, muscle weakness, arterial Doppler, venous Doppler). Where the standard
says a Doppler signal is "(often)" or "(usually)" inaudible, an inaudible arterial signal
excludes category I but alone places the leg no higher than IIa. The standard classifies
a bedside examination; it is not a score and a clinician confirms it.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass, field
from functools import lru_cache

from vascplan.paths import data_dir

CATEGORIES = ("I", "IIa", "IIb", "III")
"""Least to most severe."""
REQUIRED = ("sensation", "motor", "arterial")
"""Findings without which no category is given (venous Doppler is used when recorded)."""


@dataclass(frozen=True)
class FindingGrade:
    finding: str
    value: str
    category: str
    wording: str
    source: str


@lru_cache(maxsize=1)
def finding_table() -> dict[tuple[str, str], FindingGrade]:
    """``(finding, value) -> FindingGrade`` from ``data/observations/ali_findings.csv``."""
    with open(data_dir() / "observations" / "ali_findings.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    table = {}
    for r in rows:
        if r["category_at_least"] not in CATEGORIES:
            raise ValueError(
                f"data/observations/ali_findings.csv: unknown category {r['category_at_least']!r}"
            )
        table[(r["finding"], r["our_value"])] = FindingGrade(
            r["finding"],
            r["our_value"],
            r["category_at_least"],
            r["reporting_standard_wording"],
            r["source"],
        )
    return table


@lru_cache(maxsize=1)
def category_names() -> dict[str, str]:
    """``category -> "Viable"`` etc. from ``data/observations/ali_categories.csv``."""
    with open(
        data_dir() / "observations" / "ali_categories.csv", newline="", encoding="utf-8"
    ) as fh:
        return {r["category"]: r["name"] for r in csv.DictReader(fh)}


@dataclass(frozen=True)
class AliResult:
    """One leg's category and how it was reached.

    Attributes
    ----------
    category : str or None
        ``I``, ``IIa``, ``IIb``, ``III``, or None when a required finding is missing
        (unless a recorded finding already places the leg in III, which nothing can raise).
    basis : list of str
        Each finding with the standard's wording and the category it belongs to.
    missing : list of str
        Findings that were not recorded.
    """

    category: str | None
    basis: list[str] = field(default_factory=list)
    missing: list[str] = field(default_factory=list)

    @property
    def name(self) -> str | None:
        return category_names()[self.category] if self.category else None


def classify_leg(
    sensation: str | None, motor: str | None, arterial: str | None, venous: str | None
) -> AliResult:
    """Classify one leg.

    Parameters
    ----------
    sensation : str or None
        ``normal``, ``toes``, ``beyond-toes`` or ``absent`` (item ``sensation``).
    motor : str or None
        ``normal``, ``weak`` or ``paralysed`` (item ``motor``).
    arterial : str or None
        ``audible`` when any pedal artery gives a signal (palpable or Doppler),
        ``inaudible`` when every pedal artery recorded is absent.
    venous : str or None
        ``audible`` or ``inaudible``.

    Returns
    -------
    AliResult

    Examples
    --------
    >>> classify_leg("toes", "normal", "inaudible", "audible").category
    'IIa'
    >>> classify_leg("normal", None, "audible", None).missing
    ['motor', 'venous']
    """
    table = finding_table()
    given = {"sensation": sensation, "motor": motor, "arterial": arterial, "venous": venous}
    missing = [k for k, v in given.items() if v is None]
    basis = []
    worst = 0
    for key, value in given.items():
        if value is None:
            continue
        grade = table[(key, value)]
        worst = max(worst, CATEGORIES.index(grade.category))
        basis.append(f"{key} {value} ({grade.wording!r}: category {grade.category} or worse)")
    category = CATEGORIES[worst]
    if any(k in missing for k in REQUIRED) and category != CATEGORIES[-1]:
        # A missing finding could still raise the category; once a finding of the most
        # severe category is recorded, nothing missing can change it.
        return AliResult(None, basis, missing)
    if category == "III" and sensation != "absent" and motor != "paralysed":
        # The table's category III also has profound sensory loss and paralysis; a silent
        # vein alone (a venous cannula, a thrombosis) deserves a second look, not less urgency.
        basis.append(
            "category III rests on the inaudible venous signal alone (neither profound sensory "
            "loss nor paralysis is recorded): confirm the venous Doppler"
        )
    return AliResult(category, basis, missing)


def worst(categories: list[str | None]) -> str | None:
    """The most severe of several categories (None entries ignored).

    >>> worst(["I", None, "IIb"])
    'IIb'
    """
    known = [c for c in categories if c is not None]
    return max(known, key=CATEGORIES.index) if known else None
