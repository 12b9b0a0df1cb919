"""The reference adult arterial tree: ``data/anatomy/segments.csv`` read into objects.

The table holds one row per arterial segment (both sides), its parent, where on the
parent it starts, a length rule and reference diameters by sex, each with its source and
its kind (:data:`DIAMETER_KINDS`). For the access and occupied vessels the reference is
the minimal lumen diameter (MLD) that CT gives in patients who are candidates for
large-bore devices, not healthy volunteers' outer diameters; it is the one table every
package reads (the tree, the routes, and the ward's risk assessment).
It is read with the standard :mod:`csv` module (no pandas: ``validate`` and ``tree``
must start fast) and cached.

Length rules
------------
``body``
    ``length_cm = height_cm * fraction_of_height(body_segment) * body_share``. The
    fraction is the body segment's length as a fraction of standing height (Drillis and
    Contini 1966, as tabulated in Winter, *Biomechanics and Motor Control of Human
    Movement*, 4th ed., 2009, Fig. 4.1; ``data/anatomy/body_segments.csv``); the share is
    the part of that body segment the artery runs along (our estimate, marked in the
    ``length_source`` column).
``published``
    A fixed published (or recalled) length in cm, used where no body segment maps well
    (aortic root and arch, iliacs, common femoral, short trunks).
"""

from __future__ import annotations

import csv
import functools
from dataclasses import dataclass
from pathlib import Path

from vascplan.errors import InputError
from vascplan.paths import data_dir

SEXES = ("female", "male", "unspecified")
SIDES = ("L", "R", "midline")
LENGTH_RULES = ("body", "published")
DIAMETER_KINDS = {
    "mld-patients": "minimal lumen diameter by CT in patients of the age and kind who get "
    "large-bore devices",
    "lumen-patients": "mean lumen diameter in patients (not the minimal lumen)",
    "population": "mean diameter of a population or of healthy adults",
    "recalled": "recalled value (from memory), no measured series in hand",
}
"""What a reference diameter measures (column ``diameter_kind``). Only ``mld-patients``
is the quantity the sheath-to-artery ratio needs; the others stand in for it and say so."""
ROOT_ID = "AO-ASC"
"""The aortic root: every segment's path to the root ends here."""


@dataclass(frozen=True)
class SegmentReference:
    """One row of the reference anatomy table.

    Attributes
    ----------
    id, name : str
        Segment id (``L-SFA``) and plain name.
    parent : str or None
        The segment it branches from (None for the aortic root).
    side : str
        ``L``, ``R`` or ``midline``.
    joins_at : str
        Where on the parent it starts: ``end`` or a fraction of the parent's length
        (``0.8``) as text, exactly as in the table; see :attr:`joins_fraction`.
    loop_to : str or None
        A segment whose end this segment's end joins, closing a loop (the plantar arch
        joins the dorsalis pedis).
    length_rule : str
        ``body`` or ``published`` (module docstring).
    body_segment : str or None
        Body segment of the ``body`` rule (``thigh``).
    body_fraction : float or None
        That body segment's length as a fraction of height (Winter 2009, Fig. 4.1).
    body_share : float or None
        Share of the body segment that the artery spans.
    published_length_cm : float or None
        Fixed length of the ``published`` rule [cm].
    diameter_female_mean_mm, diameter_female_sd_mm : float
        Normal adult female diameter, mean and SD [mm].
    diameter_male_mean_mm, diameter_male_sd_mm : float
        Normal adult male diameter, mean and SD [mm].
    diameter_min_mm, diameter_max_mm : float
        Plausible human range [mm]: a measured diameter outside it is refused.
    diameter_kind : str
        What the reference diameter measures, one of :data:`DIAMETER_KINDS`
        (``mld-patients`` for the access and occupied vessels where a CT series of
        patients gives the minimal lumen by sex).
    length_source, diameter_source, range_source : str
        Where the values come from (a citation, ``from memory`` or ``common practice``).
    """

    id: str
    name: str
    parent: str | None
    side: str
    joins_at: str
    loop_to: str | None
    length_rule: str
    body_segment: str | None
    body_fraction: float | None
    body_share: float | None
    published_length_cm: float | None
    diameter_female_mean_mm: float
    diameter_female_sd_mm: float
    diameter_male_mean_mm: float
    diameter_male_sd_mm: float
    diameter_min_mm: float
    diameter_max_mm: float
    diameter_kind: str
    length_source: str
    diameter_source: str
    range_source: str

    @property
    def joins_fraction(self) -> float:
        """Where the segment leaves its parent, as a fraction of the parent's length."""
        return 1.0 if self.joins_at in ("end", "") else float(self.joins_at)

    def length_for_height_cm(self, height_cm: float) -> float:
        """Reference length [cm] for a patient of ``height_cm`` (module docstring).

        >>> ref = load_reference()
        >>> round(ref["L-SFA"].length_for_height_cm(170), 1)   # 170 * 0.245 * 0.65
        27.1
        >>> ref["L-CFA"].length_for_height_cm(150)              # published, fixed
        4.3
        """
        if self.length_rule == "published":
            assert self.published_length_cm is not None
            return self.published_length_cm
        assert self.body_fraction is not None and self.body_share is not None
        return height_cm * self.body_fraction * self.body_share

    def diameter_mean_mm(self, sex: str) -> float:
        """Reference mean diameter [mm]; ``unspecified`` takes the mean of both sexes."""
        if sex == "female":
            return self.diameter_female_mean_mm
        if sex == "male":
            return self.diameter_male_mean_mm
        return (self.diameter_female_mean_mm + self.diameter_male_mean_mm) / 2

    def diameter_sd_mm(self, sex: str) -> float:
        """Reference SD [mm]; ``unspecified`` takes the larger of the two SDs."""
        if sex == "female":
            return self.diameter_female_sd_mm
        if sex == "male":
            return self.diameter_male_sd_mm
        return max(self.diameter_female_sd_mm, self.diameter_male_sd_mm)


def _read_rows(path: Path) -> list[dict[str, str]]:
    try:
        with path.open(newline="", encoding="utf-8") as fh:
            return list(csv.DictReader(fh))
    except FileNotFoundError:
        raise InputError(str(path), "", "reference table not found") from None


def _number(
    path: Path, line: int, column: str, text: str | None, *, optional: bool = False
) -> float | None:
    if text is None or text.strip() == "":
        if optional:
            return None
        raise InputError(str(path), f"line {line}.{column}", "a number is required")
    try:
        return float(text)
    except ValueError:
        raise InputError(
            str(path), f"line {line}.{column}", f"not a number (got {text!r})"
        ) from None


@functools.cache
def load_body_segments(folder: str | None = None) -> dict[str, float]:
    """Body segment name -> length as a fraction of height (``body_segments.csv``)."""
    path = Path(folder or data_dir()) / "anatomy" / "body_segments.csv"
    out: dict[str, float] = {}
    for line, row in enumerate(_read_rows(path), start=2):
        value = _number(path, line, "fraction_of_height", row.get("fraction_of_height"))
        assert value is not None
        out[row["body_segment"].strip()] = value
    return out


@functools.cache
def load_reference(folder: str | None = None) -> dict[str, SegmentReference]:
    """Read the reference anatomy table (cached).

    Parameters
    ----------
    folder : str, optional
        Data folder; default :func:`vascplan.paths.data_dir`.

    Returns
    -------
    dict of str to SegmentReference
        In table order (parents before children).

    Raises
    ------
    InputError
        A malformed row (unknown parent, side, rule or body segment, a missing number).

    Examples
    --------
    >>> ref = load_reference()
    >>> ref["R-SCA"].parent, ref["L-PLA"].parent
    ('BCT', 'L-PTA')
    """
    base = Path(folder or data_dir())
    path = base / "anatomy" / "segments.csv"
    body = load_body_segments(str(base))
    out: dict[str, SegmentReference] = {}
    for line, row in enumerate(_read_rows(path), start=2):
        seg_id = row["id"].strip()
        where = f"line {line}"
        if seg_id in out:
            raise InputError(str(path), f"{where}.id", f"duplicate segment id {seg_id!r}")
        parent = row["parent"].strip() or None
        if parent is not None and parent not in out:
            raise InputError(
                str(path), f"{where}.parent", f"parent {parent!r} must be an earlier row's id"
            )
        if (parent is None) != (seg_id == ROOT_ID):
            raise InputError(str(path), f"{where}.parent", f"only {ROOT_ID} has no parent")
        side = row["side"].strip()
        if side not in SIDES:
            raise InputError(str(path), f"{where}.side", f"must be one of {', '.join(SIDES)}")
        joins_at = row["joins_at"].strip()
        if parent is not None and joins_at != "end":
            frac = _number(path, line, "joins_at", joins_at)
            if frac is None or not 0.0 <= frac <= 1.0:
                raise InputError(str(path), f"{where}.joins_at", "must be 'end' or a fraction 0-1")
        loop_to = row["loop_to"].strip() or None
        if loop_to is not None and loop_to not in out:
            raise InputError(
                str(path), f"{where}.loop_to", f"loop_to {loop_to!r} must be an earlier row's id"
            )
        rule = row["length_rule"].strip()
        if rule not in LENGTH_RULES:
            raise InputError(
                str(path), f"{where}.length_rule", f"must be one of {', '.join(LENGTH_RULES)}"
            )
        body_segment = row["body_segment"].strip() or None
        body_fraction = body_share = published = None
        if rule == "body":
            if body_segment not in body:
                raise InputError(
                    str(path), f"{where}.body_segment", f"must be one of {', '.join(body)}"
                )
            body_fraction = body[body_segment]
            body_share = _number(path, line, "body_share", row["body_share"])
        else:
            published = _number(path, line, "length_cm", row["length_cm"])

        kind = row.get("diameter_kind", "").strip()
        if kind not in DIAMETER_KINDS:
            raise InputError(
                str(path), f"{where}.diameter_kind", f"must be one of {', '.join(DIAMETER_KINDS)}"
            )

        def num(column: str, _line: int = line, _row: dict[str, str] = row) -> float:
            value = _number(path, _line, column, _row[column])
            assert value is not None
            return value

        out[seg_id] = SegmentReference(
            id=seg_id,
            name=row["name"].strip(),
            parent=parent,
            side=side,
            joins_at=joins_at,
            loop_to=loop_to,
            length_rule=rule,
            body_segment=body_segment,
            body_fraction=body_fraction,
            body_share=body_share,
            published_length_cm=published,
            diameter_female_mean_mm=num("diameter_female_mean_mm"),
            diameter_female_sd_mm=num("diameter_female_sd_mm"),
            diameter_male_mean_mm=num("diameter_male_mean_mm"),
            diameter_male_sd_mm=num("diameter_male_sd_mm"),
            diameter_min_mm=num("diameter_min_mm"),
            diameter_max_mm=num("diameter_max_mm"),
            diameter_kind=kind,
            length_source=row["length_source"].strip(),
            diameter_source=row["diameter_source"].strip(),
            range_source=row["range_source"].strip(),
        )
    return out


def segment_ids() -> list[str]:
    """Every segment id of the reference table, in table order."""
    return list(load_reference())


def suggest_segment(word: str) -> str:
    """A did-you-mean hint for an unknown segment id (``" (did you mean 'L-SFA'?)"``).

    Tries the upper-cased word, then a side prefix for a bare id, then a word of the
    plain names (``radial``), then close spellings (all equally close ones, up to two).

    >>> suggest_segment("l-sfa")
    " (did you mean 'L-SFA'?)"
    >>> suggest_segment("SFA")
    " (did you mean 'L-SFA' or 'R-SFA'?)"
    >>> suggest_segment("radial")
    " (did you mean 'L-RAD' or 'R-RAD'?)"
    >>> suggest_segment("R-CFX")
    " (did you mean 'R-CFA'?)"
    >>> suggest_segment("L-ATX")        # equally close: both are offered
    " (did you mean 'L-ATA' or 'L-AXA'?)"
    """
    import difflib

    ids = load_reference()
    upper = word.strip().upper()
    if upper in ids:
        return _offer([upper])
    if f"L-{upper}" in ids:
        return _offer([f"L-{upper}", f"R-{upper}"])
    lower = word.strip().lower()
    if len(lower) >= 4:
        named = [seg_id for seg_id, r in ids.items() if lower in r.name.lower().split()]
        if 0 < len(named) <= 4:
            return _offer(named)
    scored = sorted(
        ((difflib.SequenceMatcher(None, upper, seg_id).ratio(), seg_id) for seg_id in ids),
        key=lambda item: (-item[0], item[1]),
    )
    return _offer(
        [seg_id for score, seg_id in scored if score >= 0.5 and score == scored[0][0]][:2]
    )


def _offer(choices: list[str]) -> str:
    if not choices:
        return ""
    quoted = [repr(x) for x in choices]
    listed = quoted[0] if len(quoted) == 1 else f"{', '.join(quoted[:-1])} or {quoted[-1]}"
    return f" (did you mean {listed}?)"
