"""Benchmarks of the printed outputs: a 40-bed checklist and the case report.

Not run by default. ``python -m pytest tests/bench/bench_reports.py -q -s`` prints the
time per page of each document and its ratio to a floor measured in the same run: an
empty reportlab document of the same page count (one empty page template, no text, no
fonts embedded). The assertions are loose; the figures are what matters.
"""

from __future__ import annotations

import copy
import io
import time
from datetime import UTC, date, datetime

import yaml

from tests.reports_helpers import pdf_pages
from vascplan.anatomy.graph import build_tree
from vascplan.case.load import load_case
from vascplan.paths import examples_dir
from vascplan.reports.case_report import render_case_report
from vascplan.reports.checklist import checklist_sheets, render_checklist
from vascplan.routes.plan import plan_case
from vascplan.surveillance.service import load_unit_and_protocol

AT = datetime(2026, 12, 2, 6, 0, tzinfo=UTC)
BEDS = 40


def _best_of(fn, repeats: int = 3) -> float:
    fn()  # warm caches, fonts and imports
    best = float("inf")
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def _empty_document(pages: int) -> bytes:
    from reportlab.lib.pagesizes import A4
    from reportlab.platypus import PageBreak, SimpleDocTemplate, Spacer

    buf = io.BytesIO()
    story = []
    for i in range(pages):
        if i:
            story.append(PageBreak())
        story.append(Spacer(1, 1))
    SimpleDocTemplate(buf, pagesize=A4).build(story)
    return buf.getvalue()


def _unit_with_beds(tmp_path, beds: int):
    demo = yaml.safe_load((examples_dir() / "unit-demo.yaml").read_text())
    patients = []
    for i in range(beds):
        p = copy.deepcopy(demo["patients"][i % len(demo["patients"])])
        p["bed"] = i + 1
        p["ref"] = f"DEMO-{100 + i}"
        patients.append(p)
    demo["patients"] = patients
    demo["staff"] = [
        {"nurse": f"RN-{k}", "beds": list(range(k * 4 + 1, k * 4 + 5)), "shifts": ["day", "night"]}
        for k in range(beds // 4)
    ]
    path = tmp_path / "unit-40.yaml"
    path.write_text(yaml.safe_dump(demo, sort_keys=False))
    return load_unit_and_protocol(path)


def _report(name: str, seconds: float, pages: int) -> float:
    floor = _best_of(lambda: _empty_document(pages))
    per_page, floor_page = seconds / pages, floor / pages
    print(
        f"{name:34s} {pages:3d} pages  {per_page * 1e3:8.2f} ms/page  "
        f"floor {floor_page * 1e3:6.3f} ms/page  ({per_page / floor_page:6.1f} x floor)"
    )
    return per_page / floor_page


def test_checklist_40_beds(tmp_path):
    unit, protocol = _unit_with_beds(tmp_path, BEDS)
    day = date(2026, 12, 2)
    sheets = checklist_sheets(unit, "day", day, protocol)
    data = render_checklist(sheets, generated_at=AT)
    pages = len(pdf_pages(data))
    assert pages >= BEDS
    gather = _best_of(lambda: checklist_sheets(unit, "day", day, protocol))
    render = _best_of(lambda: render_checklist(sheets, generated_at=AT))
    print(
        f"\nchecklist, {BEDS} beds: gathering the schedule {gather * 1e3:.0f} ms, "
        f"rendering {render * 1e3:.0f} ms, {len(data) / 1024:.0f} kB"
    )
    ratio = _report("checklist (render only)", render, pages)
    assert ratio < 5_000  # loose: a printed shift stays far below a second a page


def test_case_report():
    for path in sorted(examples_dir().glob("case-*.yaml")):
        case = load_case(path)
        tree = build_tree(case)
        plan = plan_case(case).to_dict()
        data = render_case_report(case, tree, plan, generated_at=AT)
        pages = len(pdf_pages(data))
        seconds = _best_of(
            lambda c=case, t=tree, p=plan: render_case_report(c, t, p, generated_at=AT)
        )
        ratio = _report(f"case report {case.patient.ref} (render)", seconds, pages)
        assert ratio < 5_000
