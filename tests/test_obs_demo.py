"""The observation record's demo step on the bundled invented shift."""

from __future__ import annotations

import json

from vascplan.demo import run_demo
from vascplan.demo.observations import step_observations


def test_demo_step_writes_review_trend_and_exports(tmp_path):
    lines: list[str] = []
    written = run_demo(tmp_path, echo=lines.append, steps=[("observations", step_observations)])
    names = sorted(p.name for p in written)
    assert names == [
        "observations-export.csv",
        "observations-fhir.json",
        "observations-review.json",
        "observations-review.txt",
        "observations-trend.pdf",
    ]
    review = json.loads((tmp_path / "observations-review.json").read_text())
    bed1 = next(p for p in review["patients"] if p["bed"] == 1)
    rules = {a["rule"] for a in bed1["alerts"]}
    assert {"pedal-signal-lost", "nirs-fall", "ali-category"} <= rules
    assert bed1["ali_category"] == "IIa" and bed1["overdue"] == []
    # Running it again works: the demo's store is thrown away each time.
    assert run_demo(tmp_path, echo=lines.append, steps=[("observations", step_observations)])
