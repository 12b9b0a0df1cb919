"""The case file (format ``vascplan-case/1``): one patient's arteries and procedure.

The field names are part of the user-facing interface (README, "Case file"). Every
model forbids unknown fields and is strict about types (``"6"`` is not a number, ``1``
is not ``true``). Checks that need the reference anatomy (segment ids, the plausible
diameter of a segment, a lesion running past its segment's end for this patient's
height) run in :meth:`Case._check_against_anatomy` and raise
:class:`~vascplan.errors.InputError` with the exact field path; pydantic passes such
an error through unchanged, because it is not a ``ValueError``.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationInfo, model_validator
from pydantic_core import PydanticCustomError

from vascplan.case.access import AccessEquipment, AccessInPlace, AccessTried, check_access_sites
from vascplan.errors import InputError
from vascplan.refdata.anatomy import load_reference, suggest_segment
from vascplan.textsafety import FREE_TEXT_MAX, FreeText, Identifier

CASE_FORMAT = "vascplan-case/1"
Calcification = Literal["none", "mild", "moderate", "severe"]
CALCIFICATION_GRADES: tuple[str, ...] = ("none", "mild", "moderate", "severe")
Cap = Literal["tapered", "blunt", "flush"]
Sex = Literal["female", "male", "unspecified"]

HEIGHT_MIN_CM = 100.0
HEIGHT_MAX_CM = 230.0
"""Adult heights the anthropometric fractions are used for (issue 2; common practice)."""

GRAFT_DIAMETER_MIN_MM = 3.0
GRAFT_DIAMETER_MAX_MM = 30.0
"""Plausible bypass graft diameters, peripheral vein to aortic prosthesis (common practice)."""

VESSEL_LENGTH_MAX_CM = 100.0
"""No single arterial segment is longer than this (common practice)."""

LENGTH_TOLERANCE_CM = 1e-6


FIELD_ERROR = "case_field"
"""Error type of a check on one field made by a model validator (``ctx["field"]`` names it)."""


def field_error(field: str, message: str) -> PydanticCustomError:
    """A model-validator error that points at ``field`` of the model, not the whole model."""
    return PydanticCustomError(FIELD_ERROR, "{message}", {"field": field, "message": message})


class _Strict(BaseModel):
    # NaN and infinity are refused everywhere: no measurement is either.
    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, allow_inf_nan=False)


class Patient(_Strict):
    """Who the case is about (pseudonymously)."""

    ref: Identifier = Field(
        min_length=1, max_length=64, description="pseudonymous reference, never a real identifier"
    )
    sex: Sex = Field(description="female | male | unspecified (chooses the reference diameters)")
    height_cm: float = Field(
        ge=HEIGHT_MIN_CM, le=HEIGHT_MAX_CM, description="standing height [cm], scales the lengths"
    )
    weight_kg: float | None = Field(default=None, gt=0, le=400, description="body weight [kg]")
    anticoagulated: bool | None = Field(default=None, description="on anticoagulation")
    map_mmhg: float | None = Field(
        default=None,
        ge=30,
        le=150,
        description="mean arterial pressure [mmHg] (plausibility bound 30-150, common practice);"
        " drives the limb flow estimate of a support device, default by device kind",
    )


class VesselMeasure(_Strict):
    """Measured values for one segment; anything absent comes from the reference table."""

    diameter_mm: float | None = Field(default=None, gt=0, description="measured diameter [mm]")
    length_cm: float | None = Field(
        default=None, gt=0, le=VESSEL_LENGTH_MAX_CM, description="measured length [cm]"
    )
    calcification: Calcification | None = Field(default=None, description="the vessel's own grade")


class LesionEnd(_Strict):
    """Where a lesion ends when it runs into another segment (issue 12)."""

    segment: str = Field(description="segment id where the lesion ends")
    at_cm: float = Field(ge=0, description="from that segment's origin [cm]")


class Lesion(_Strict):
    """A stenosis or occlusion along one segment (a lesion given with ``end`` across
    segments is split into one piece per segment, :mod:`vascplan.case.spanning`)."""

    segment: str = Field(description="segment id, e.g. L-SFA")
    kind: Literal["stenosis", "occlusion"]
    stenosis_pct: float | None = Field(
        default=None,
        ge=0,
        le=100,
        description="percent diameter stenosis (angiographic convention); 100 for an occlusion",
    )
    start_cm: float = Field(
        ge=0, description="from the segment's origin, in the direction of flow [cm]"
    )
    length_cm: float = Field(gt=0, description="lesion length [cm] (or end instead)")
    calcification: Calcification = "none"
    proximal_cap: Cap | None = Field(default=None, description="occlusions only")
    distal_cap: Cap | None = Field(default=None, description="occlusions only")
    # issue 12: lesions as they lie (vascplan.case.spanning)
    end: LesionEnd | None = Field(
        default=None, description="instead of length_cm: where the lesion ends, possibly in "
        "a segment further down the tree")
    in_stent: bool = Field(default=False, description="in-stent restenosis or occlusion")
    part_of: str | None = Field(
        default=None, max_length=120,
        description="set by vascplan on the pieces of a lesion given with end")

    @model_validator(mode="before")
    @classmethod
    def _occlusion_is_100(cls, data: Any) -> Any:
        if (
            isinstance(data, dict)
            and data.get("kind") == "occlusion"
            and data.get("stenosis_pct") is None
        ):
            data = {**data, "stenosis_pct": 100}
        return data

    @model_validator(mode="after")
    def _kind_matches(self) -> Lesion:
        pct = self.stenosis_pct
        if pct is None:
            raise field_error(
                "stenosis_pct", "required for a stenosis (percent diameter stenosis, 0-100)"
            )
        if self.kind == "occlusion" and pct != 100:
            raise field_error(
                "stenosis_pct",
                f"an occlusion has stenosis_pct 100 (got {pct:g}); use kind: stenosis for less",
            )
        if self.kind == "stenosis" and pct == 100:
            raise field_error(
                "stenosis_pct", "a 100% stenosis is an occlusion; use kind: occlusion"
            )
        if self.kind == "stenosis":
            for cap in ("proximal_cap", "distal_cap"):
                if getattr(self, cap) is not None:
                    raise field_error(
                        cap, "cap morphology is for occlusions only (this lesion is a stenosis)"
                    )
        return self

    @property
    def end_cm(self) -> float:
        """Where the lesion ends, from the segment's origin [cm]."""
        return self.start_cm + self.length_cm

    @property
    def percent(self) -> float:
        """Percent diameter stenosis, 100 for an occlusion."""
        return 100.0 if self.stenosis_pct is None else self.stenosis_pct


class Stent(_Strict):
    """A stent in place along one segment."""

    segment: str
    start_cm: float = Field(ge=0, description="from the segment's origin [cm]")
    length_cm: float = Field(gt=0, description="stent length [cm]")
    diameter_mm: float = Field(gt=0, description="nominal (expanded) diameter [mm]")

    @property
    def end_cm(self) -> float:
        """Where the stent ends, from the segment's origin [cm]."""
        return self.start_cm + self.length_cm


class Graft(_Strict):
    """A bypass graft joining two points of the tree."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, populate_by_name=True)

    name: str = Field(min_length=1, max_length=40, pattern=r"^[A-Za-z0-9][A-Za-z0-9 ._-]*$")
    from_segment: str = Field(alias="from", description="segment id of the inflow end")
    from_cm: float = Field(ge=0, description="position on the inflow segment [cm]")
    to_segment: str = Field(alias="to", description="segment id of the outflow end")
    to_cm: float = Field(ge=0, description="position on the outflow segment [cm]")
    diameter_mm: float = Field(ge=GRAFT_DIAMETER_MIN_MM, le=GRAFT_DIAMETER_MAX_MM)
    patent: bool = True


class Avoid(_Strict):
    """A site not to be punctured, with the reason."""

    site: str = Field(description="segment id")
    reason: FreeText = Field(min_length=1, max_length=FREE_TEXT_MAX)


class Target(_Strict):
    """Where the procedure must reach."""

    segment: str
    at_cm: float = Field(ge=0, description="from the segment's origin [cm]")


class Sheath(_Strict):
    """The introducer sheath, labelled by inner size (ISO 11070)."""

    size_fr: float = Field(gt=0, le=40, description="labelled size [Fr]")
    length_cm: float = Field(gt=0, le=200, description="sheath length [cm]")
    label: Literal["inner", "outer"] = Field(
        default="inner",
        description="inner (introducer sheaths, ISO 11070) | outer (cannulas, catheters)",
    )
    outer_mm: float | None = Field(
        default=None, gt=0, le=15, description="measured outer diameter [mm]"
    )


class Device(_Strict):
    """The device that must pass through the sheath."""

    profile_fr: float = Field(gt=0, le=40, description="crossing profile [Fr]")
    working_length_cm: float = Field(gt=0, le=400, description="usable shaft length [cm]")
    kind: (
        Literal["va-ecmo-arterial", "microaxial-pump", "balloon-pump", "large-bore-sheath"] | None
    ) = Field(default=None, description="support device kind (purpose support); optional")


class Procedure(_Strict):
    """What is to be done, and with what."""

    purpose: Literal["treat", "support"] = Field(
        description="treat | support (large-bore mechanical support)"
    )
    target: Target
    sheath: Sheath
    device: Device
    access_equipment: list[AccessEquipment] = Field(
        default_factory=list,
        description="equipment per access (issue 12); the sheath above stays the therapeutic one")


SECTIONS = ("vessels", "lesions", "stents", "grafts", "avoid", "weights", "limits",
            "access_in_place", "access_tried")
"""Optional sections that may be left empty in the file (read as none)."""


class Case(_Strict):
    """One case file (``format: vascplan-case/1``)."""

    format: Literal["vascplan-case/1"]
    patient: Patient
    vessels: dict[str, VesselMeasure] = Field(default_factory=dict)
    lesions: list[Lesion] = Field(default_factory=list)
    stents: list[Stent] = Field(default_factory=list)
    grafts: list[Graft] = Field(default_factory=list)
    avoid: list[Avoid] = Field(default_factory=list)
    procedure: Procedure | None = None
    access_in_place: list[AccessInPlace] = Field(
        default_factory=list, description="arterial lines or sheaths already in place")
    access_tried: list[AccessTried] = Field(
        default_factory=list, description="accesses attempted before and their outcome")
    weights: dict[str, float] = Field(
        default_factory=dict,
        description="route-planner soft-factor weight overrides (name -> weight)",
    )
    limits: dict[str, float] = Field(
        default_factory=dict, description="route-planner hard-limit overrides (name -> value)"
    )

    @model_validator(mode="before")
    @classmethod
    def _split_spanning_lesions(cls, data: Any, info: ValidationInfo) -> Any:
        # issue 12: a lesion given with end is split per segment (vascplan.case.spanning)
        from vascplan.case.spanning import split_spanning_lesions

        return split_spanning_lesions(data, str((info.context or {}).get("source", "<case>")))

    @model_validator(mode="before")
    @classmethod
    def _empty_sections_are_none(cls, data: Any) -> Any:
        # "lesions:" with nothing (or only comments) under it means no lesions.
        if isinstance(data, dict):
            return {k: v for k, v in data.items() if not (k in SECTIONS and v is None)}
        return data

    def segment_lengths_cm(self) -> dict[str, float]:
        """Each segment's length for this patient [cm]: measured, else the reference rule."""
        out = {}
        for seg_id, ref in load_reference().items():
            measured = self.vessels.get(seg_id)
            if measured is not None and measured.length_cm is not None:
                out[seg_id] = measured.length_cm
            else:
                out[seg_id] = ref.length_for_height_cm(self.patient.height_cm)
        return out

    @model_validator(mode="after")
    def _check_against_anatomy(self, info: ValidationInfo) -> Case:
        source = str((info.context or {}).get("source", "<case>"))
        ref = load_reference()

        def known(seg_id: str, field: str) -> None:
            if seg_id not in ref:
                hint = suggest_segment(seg_id) or (
                    "; allowed: the ids of data/anatomy/segments.csv such as L-CFA, R-RAD, "
                    "AO-INFRA (vascplan schema lists them)"
                )
                raise InputError(source, field, f"unknown segment {seg_id!r}{hint}")

        def plausible(seg_id: str, field: str, d: float, what: str) -> None:
            r = ref[seg_id]
            if not r.diameter_min_mm <= d <= r.diameter_max_mm:
                raise InputError(
                    source,
                    field,
                    f"{d:g} mm is outside the plausible range for {what}{seg_id} "
                    f"({r.diameter_min_mm:g}-{r.diameter_max_mm:g} mm)",
                )

        for seg_id, measure in self.vessels.items():
            known(seg_id, f"vessels.{seg_id}")
            if measure.diameter_mm is not None:
                plausible(seg_id, f"vessels.{seg_id}.diameter_mm", measure.diameter_mm, "")
        lengths = self.segment_lengths_cm()

        def within(
            seg_id: str, field: str, end_cm: float, what: str, verb: str = "reaches"
        ) -> None:
            seg_len = lengths[seg_id]
            if end_cm > seg_len + LENGTH_TOLERANCE_CM:
                basis = (
                    "measured"
                    if seg_id in self.vessels and self.vessels[seg_id].length_cm is not None
                    else f"reference length for height {self.patient.height_cm:g} cm; "
                    f"give vessels.{seg_id}.length_cm if measured"
                )
                raise InputError(
                    source,
                    field,
                    f"{what} {verb} {end_cm:g} cm, past the end of {seg_id} "
                    f"({seg_len:.1f} cm, {basis})",
                )

        def extent(seg_id: str, field: str, start_cm: float, end_cm: float, what: str) -> None:
            # Name the field that puts it past the end: its start, else its length.
            if start_cm > lengths[seg_id] + LENGTH_TOLERANCE_CM:
                within(seg_id, f"{field}.start_cm", start_cm, what, "starts at")
            within(seg_id, f"{field}.length_cm", end_cm, what)

        for i, lesion in enumerate(self.lesions):
            known(lesion.segment, f"lesions.{i}.segment")
            extent(lesion.segment, f"lesions.{i}", lesion.start_cm, lesion.end_cm, "lesion")
        for i, stent in enumerate(self.stents):
            known(stent.segment, f"stents.{i}.segment")
            extent(stent.segment, f"stents.{i}", stent.start_cm, stent.end_cm, "stent")
            plausible(stent.segment, f"stents.{i}.diameter_mm", stent.diameter_mm, "a stent in ")
        names: set[str] = set()
        for i, graft in enumerate(self.grafts):
            if graft.name in names:
                raise InputError(source, f"grafts.{i}.name", f"duplicate graft name {graft.name!r}")
            names.add(graft.name)
            known(graft.from_segment, f"grafts.{i}.from")
            known(graft.to_segment, f"grafts.{i}.to")
            if graft.from_segment == graft.to_segment:
                raise InputError(
                    source, f"grafts.{i}.to", "a graft must join two different segments"
                )
            within(graft.from_segment, f"grafts.{i}.from_cm", graft.from_cm, "graft inflow")
            within(graft.to_segment, f"grafts.{i}.to_cm", graft.to_cm, "graft outflow")
        for i, avoid in enumerate(self.avoid):
            known(avoid.site, f"avoid.{i}.site")
        if self.procedure is not None:
            target = self.procedure.target
            known(target.segment, "procedure.target.segment")
            within(target.segment, "procedure.target.at_cm", target.at_cm, "target")
        return self

    @model_validator(mode="after")
    def _check_access_fields(self, info: ValidationInfo) -> Case:
        # issue 12: access equipment, access in place, access tried (vascplan.case.access)
        check_access_sites(self, str((info.context or {}).get("source", "<case>")))
        return self
