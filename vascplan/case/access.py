"""Access fields of the case file (issue 12): equipment per access, access in place,
access tried.

Kept apart from :mod:`vascplan.case.model` so that other validators there stay
separate. ``site`` is a site id of the access catalogue (``R-PTA``, ``L-RAD-DIST``) or
the segment id of one (``R-CFA``); checked against the catalogue by
:func:`check_access_sites`.
"""

from __future__ import annotations

from datetime import datetime
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator

Direction = Literal["retrograde", "antegrade"]


class _AccessModel(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, allow_inf_nan=False)


class AccessEquipment(_AccessModel):
    """The sheath (or sheathless catheter) to assume at one access.

    ``procedure.access_equipment: [{site: R-PTA, direction: retrograde, size_fr: 4,
    label: inner, length_cm: 10}]``; ``sheathless: true`` with the catheter's outer
    ``size_fr`` for an access without a sheath.
    """

    site: str = Field(min_length=1, max_length=20, description="site id or segment id")
    direction: Direction | None = Field(default=None, description="both when not given")
    size_fr: float = Field(gt=0, le=40, description="labelled size [Fr]")
    label: Literal["inner", "outer"] = Field(
        default="inner", description="inner (sheaths) | outer (sheathless catheters, cannulas)")
    length_cm: float | None = Field(default=None, gt=0, le=200,
                                    description="sheath length [cm]; none when sheathless")
    sheathless: bool = False
    outer_mm: float | None = Field(default=None, gt=0, le=15,
                                   description="measured outer diameter [mm]")


class AccessInPlace(_AccessModel):
    """An arterial line or sheath already in place."""

    site: str = Field(min_length=1, max_length=20, description="site id or segment id")
    what: str = Field(min_length=1, max_length=120, description="e.g. arterial line 20 G")
    direction: Direction | None = None
    since: str | None = Field(default=None, max_length=40,
                              description="ISO 8601 date-time it was placed")

    @field_validator("since")
    @classmethod
    def _iso_time(cls, value: str | None) -> str | None:
        if value is not None:
            try:
                datetime.fromisoformat(value)
            except ValueError as exc:
                raise ValueError(f"{value!r} is not an ISO 8601 date-time "
                                 "(e.g. 2026-12-01T06:00)") from exc
        return value


class AccessTried(_AccessModel):
    """An access attempted before, and how it went."""

    site: str = Field(min_length=1, max_length=20, description="site id or segment id")
    direction: Direction | None = Field(default=None, description="both when not given")
    outcome: Literal["failed"] = Field(default="failed", description="failed")
    reason: str = Field(min_length=1, max_length=200,
                        description="e.g. could not cross the proximal cap")
    retry: bool = Field(default=False, description="true: plan it again despite the failure")


def check_access_sites(case: Any, source: str) -> None:
    """Every ``site`` of the access fields names a catalogue site or a segment of one.

    Raises
    ------
    InputError
        The field path, the unknown site and the allowed ids.
    """
    from vascplan.errors import InputError
    from vascplan.fileio import did_you_mean
    from vascplan.refdata.sites import load_sites, site_ids_for

    fields: list[tuple[str, Any]] = []
    if case.procedure is not None:
        fields += [(f"procedure.access_equipment.{i}", e)
                   for i, e in enumerate(case.procedure.access_equipment)]
    fields += [(f"access_in_place.{i}", e) for i, e in enumerate(case.access_in_place)]
    fields += [(f"access_tried.{i}", e) for i, e in enumerate(case.access_tried)]
    for path, entry in fields:
        if not site_ids_for(entry.site):
            sites = load_sites()
            raise InputError(source, f"{path}.site",
                             f"unknown access site {entry.site!r}"
                             f"{did_you_mean(entry.site.upper(), sites)}; allowed: "
                             f"{', '.join(sites)} or the segment id of one")
        if isinstance(entry, AccessEquipment) and not entry.sheathless \
                and entry.length_cm is None:
            raise InputError(source, f"{path}.length_cm",
                             "a sheath needs its length; for none set sheathless: true")


def matches(entry_site: str, entry_direction: str | None, site_id: str, segment: str,
            direction: str) -> bool:
    """True when an access entry names this site (or its segment) and direction."""
    return entry_site in (site_id, segment) and entry_direction in (None, direction)
