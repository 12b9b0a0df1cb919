"""The observation record's ``vascplan demo`` step.

An invented shift of checks (``examples/obs-demo-checks.csv``, bed 1 of
``examples/unit-demo.yaml``: the right leg slowly worsening) is imported into a throw-away
SQLite store, then reviewed, plotted and exported. The store lives in a temporary folder,
so the demo can run again and again.
"""

from __future__ import annotations

import json
import tempfile
from datetime import UTC, datetime
from pathlib import Path

from vascplan.demo.context import DemoContext

DEMO_UNIT = "unit-demo.yaml"
DEMO_CHECKS = "obs-demo-checks.csv"
DEMO_AT = "2026-12-01T19:20"
"""The review is made as at this local time (just after the last invented check)."""


def step_observations(ctx: DemoContext) -> None:
    """Import the invented checks; write the review (table, JSON), trend PDF, FHIR and CSV."""
    from vascplan.observations.csvio import export_rows, parse_csv
    from vascplan.observations.fhir import bundle
    from vascplan.observations.review import render_table, review_unit, to_json, unit_protocol
    from vascplan.observations.store import open_store
    from vascplan.observations.trend import patient_trend, render_trend_pdf
    from vascplan.surveillance.unit import load_unit, parse_local_time

    unit_path = ctx.examples / DEMO_UNIT
    unit = load_unit(unit_path)
    at = parse_local_time(DEMO_AT, unit.unit.tz, "demo")
    findings, lines = parse_csv(ctx.examples / DEMO_CHECKS, unit)
    protocol = unit_protocol(unit, unit_path.parent)
    with tempfile.TemporaryDirectory() as tmp, open_store(str(Path(tmp) / "demo.db")) as store:
        store.record(
            findings,
            unit=unit.unit.key,
            unit_name=unit.unit.name,
            kind="import",
            source=DEMO_CHECKS,
            lines=lines,
        )
        ctx.say(f"  imported {len(findings)} invented findings from {DEMO_CHECKS}")
        result = review_unit(unit, store, at, protocol=protocol)
        ctx.write_text("observations-review.txt", render_table(result) + "\n")
        ctx.write_text(
            "observations-review.json",
            json.dumps(to_json(result), indent=2, ensure_ascii=False) + "\n",
        )
        current = store.current(unit.unit.key, until=at)
        beds = sorted({f.entry.bed for f in current})
        trends = [
            patient_trend(unit, p, protocol, [f for f in current if f.entry.ref == p.ref], at)
            for p in (unit.patient_at_bed(b) for b in beds)
        ]
        ctx.write_bytes("observations-trend.pdf", render_trend_pdf(unit, protocol, trends, at))
        rows = store.entries(unit.unit.key)
        doc = bundle(unit, rows, generated=datetime.now(UTC))
        ctx.write_text(
            "observations-fhir.json", json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
        )
        ctx.write_text("observations-export.csv", export_rows(rows))
    ctx.say(f"  {result.open_alerts} alert(s) open as at {at.isoformat()}")
