"""Property: whatever valid findings a CSV holds, the store gives back exactly those, once each."""

from __future__ import annotations

import csv
import io
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.obs_fixtures import UNIT
from vascplan.observations.csvio import COLUMNS, export_rows, parse_csv
from vascplan.observations.findings import ITEMS
from vascplan.observations.store import open_store
from vascplan.surveillance.unit import load_unit

SITES = {
    "side": ["L", "R"],
    "artery": ["L-DPA", "R-PTA", "R-PER"],
    "artery-or-side": ["L", "R-CFA"],
    "artery-or-arm": ["R-PTA", "L-ARM"],
    "optional-side": ["", "R"],
    "optional-artery-or-side": ["", "L", "R-CFA"],
    "none": [""],
}


@st.composite
def finding_rows(draw):
    item = draw(st.sampled_from(sorted(ITEMS)))
    spec = ITEMS[item]
    site = draw(st.sampled_from(SITES[spec.sites]))
    if spec.numeric:
        lo, hi = spec.number_range
        value = str(draw(st.integers(int(lo), int(hi))))
    else:
        value = draw(st.sampled_from(spec.values))
    minute = draw(st.integers(0, 600))
    return (f"2026-12-02T{8 + minute // 60:02d}:{minute % 60:02d}", item, site, value)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(finding_rows(), min_size=1, max_size=40, unique_by=lambda r: (r[0], r[1], r[2])))
def test_import_then_export_gives_the_same_findings(rows):
    unit = load_unit(UNIT)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "c.csv"
        path.write_text(
            ",".join(COLUMNS)
            + "\n"
            + "".join(f"{t},1,DEMO-11,RN-A,{i},{s},{v}\n" for t, i, s, v in rows)
        )
        findings, lines = parse_csv(path, unit)
        with open_store(str(Path(tmp) / "o.db")) as store:
            store.record(findings, unit=unit.unit.key, kind="import", source="c.csv", lines=lines)
            out = list(csv.DictReader(io.StringIO(export_rows(store.entries(unit.unit.key)))))
    got = sorted((r["time"][:16], r["item"], r["site"], r["value"]) for r in out)
    assert got == sorted(rows)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(finding_rows(), min_size=0, max_size=40, unique_by=lambda r: (r[0], r[1], r[2])))
def test_review_and_trend_never_fail_on_valid_findings(rows):
    from datetime import datetime

    from vascplan.observations.findings import make_finding
    from vascplan.observations.review import review_patient, to_json
    from vascplan.observations.store import Entry, current_findings
    from vascplan.observations.trend import patient_trend, render_trend_pdf
    from vascplan.surveillance.protocol import load_protocol

    unit = load_unit(UNIT)
    tz = unit.unit.tz
    protocol = load_protocol("standard", "test")
    patient = unit.patients[0]
    entries = []
    for n, (t, item, site, value) in enumerate(rows, start=1):
        f = make_finding(
            time=datetime.fromisoformat(t).replace(tzinfo=tz),
            bed=1,
            ref="DEMO-11",
            by="RN-A",
            item=item,
            site=site,
            value=value,
            source="t",
        )
        entries.append(
            Entry(
                n,
                1,
                unit.unit.name,
                1,
                f.ref,
                f.time,
                f.time.isoformat(),
                f.by,
                f.item,
                f.site,
                f.value,
                None,
                None,
                f.time,
            )
        )
    current = current_findings(entries)
    at = datetime(2026, 12, 1, 19, 0, tzinfo=tz)
    review = review_patient(unit, patient, protocol, current, at)
    assert review.ali_category in (None, "I", "IIa", "IIb", "III")
    assert all(a.rule and a.detail and a.source for a in review.alerts)
    from vascplan.observations.review import UnitReview

    to_json(UnitReview(unit.unit.name, at, protocol.name, protocol.review.note, [review]))
    pdf = render_trend_pdf(
        unit, protocol, [patient_trend(unit, patient, protocol, current, at)], at
    )
    assert pdf.startswith(b"%PDF")
