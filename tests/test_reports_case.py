"""The case-conference report: content read back from the PDF."""

from __future__ import annotations

import re
from datetime import UTC, datetime

import pytest
import yaml

from tests.reports_helpers import HOSTILE, page_sizes, pdf_pages, pdf_text, render_png
from vascplan.anatomy.graph import build_tree
from vascplan.case.load import load_case
from vascplan.paths import examples_dir
from vascplan.reports.case_report import DEFAULT_TOP, render_case_report
from vascplan.routes.plan import plan_case
from vascplan.safety import CAUTION

AT = datetime(2026, 12, 1, 12, 0, tzinfo=UTC)
CASE_07 = examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"
CASE_12 = examples_dir() / "case-DEMO-12-support-small-iliac.yaml"


def _report(path, paper="a4", top=None):
    case = load_case(path)
    tree = build_tree(case)
    plan = plan_case(case).to_dict()
    data = render_case_report(case, tree, plan, paper=paper, generated_at=AT, top=top)
    return case, tree, plan, data


@pytest.fixture(scope="module")
def report_07():
    return _report(CASE_07)  # every route in full


CASE_21 = examples_dir() / "case-DEMO-21-graft-and-pedal.yaml"


@pytest.fixture(scope="module")
def report_21_top():
    return _report(CASE_21, top=DEFAULT_TOP)


def test_summary_from_the_case_file(report_07):
    case, _, _, data = report_07
    first = pdf_pages(data)[0]
    # Values written in vascplan/examples/case-DEMO-07-sfa-occlusion.yaml.
    for text in (
        "Case conference: DEMO-07",
        "female, 158 cm, 61 kg",
        "treatment",
        "left superficial femoral artery (L-SFA) at 12 cm",
        "6 Fr, 45 cm long (inner size)",  # label defaults to inner (ISO 11070 sheaths)
        "crossing profile 6 Fr, working length 150 cm",
        "L-RAD: dialysis fistula planned",
        "Legend",
    ):
        assert text in first, text


def test_every_route_with_its_verdict(report_07):
    _, _, plan, data = report_07
    text = pdf_text(data)
    routes = plan["routes"]
    usable = [r for r in routes if r["feasible"]]
    blocked = [r for r in routes if not r["feasible"]]
    assert usable and blocked
    # Each route is printed once, named by its site id, with its verdict word.
    assert len(re.findall(r"\busable\b", text)) == len(usable)
    assert len(re.findall(r"\bblocked\b", text)) == len(blocked)
    for r in routes:
        assert f"({r['site']}), {r['direction']}" in text
    for r in blocked:
        for b in r["blocked_by"]:
            assert f"BLOCKED {b['code']} at {b['segment']}" in text
    for f in usable[0]["factors"]:  # the chosen route's reasons in full
        assert f"{f['name']} +{f['points']:.1f}: {f['detail']}" in text


def test_chosen_and_runner_up_named(report_07):
    _, _, plan, data = report_07
    first = pdf_pages(data)[0]
    usable = [r for r in plan["routes"] if r["feasible"]]
    assert f"1. {usable[0]['site_name']}, {usable[0]['direction']}" in first
    assert f"{usable[1]['rank']}. {usable[1]['site_name']}, {usable[1]['direction']}" in first


def test_assumptions_listed(report_07):
    _, tree, plan, data = report_07
    text = pdf_text(data)
    assert "Assumptions: reference values used instead of measurements" in text
    for a in plan["assumptions"] + tree.assumptions():
        assert a in text


def test_caution_and_numbers_on_every_page(report_07):
    pages = pdf_pages(report_07[3])
    assert len(pages) >= 2
    for n, page in enumerate(pages, start=1):
        assert CAUTION in page
        assert f"page {n} of {len(pages)}" in page
        assert "Generated 2026-12-01 12:00 UTC (UTC+00:00)" in page


def test_support_figures():
    _, _, plan, data = _report(CASE_12)
    text = pdf_text(data)
    support = plan["support"]
    assert "Large-bore support: what the device leaves for the limb" in text
    assert f"Lowest SAR among usable axes: {support['best_site']}" in text
    for ax in support["axes"]:
        assert f"{ax['site']} ({ax['limb']})" in text
        if ax["max_sar"] is not None:
            assert f"{ax['max_sar']:.2f} ({ax['limiting_segment']})" in text
        if ax["lumen_left_pct"] is not None:
            assert f"{ax['lumen_left_pct']:.0f} %" in text
        if ax["distal_flow_pct"]:
            assert f"{ax['distal_flow_pct']['concentric']:.0f} % / " in text
        for seg in ax["segments"]:
            assert f"{seg['segment']} {seg['from_cm']:g}-{seg['to_cm']:g} cm: MLD" in text


@pytest.mark.parametrize(("paper", "size"), [("a4", (595.28, 841.89)), ("letter", (612.0, 792.0))])
def test_paper(paper, size):
    data = _report(CASE_07, paper=paper)[3]
    assert all((w, h) == pytest.approx(size, abs=0.01) for w, h in page_sizes(data))


def test_hostile_ref_and_reason(tmp_path):
    doc = yaml.safe_load(CASE_07.read_text())
    doc["patient"]["ref"] = HOSTILE
    doc["avoid"] = [{"site": "L-RAD", "reason": "</para><font size=90>" + HOSTILE}]
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(doc))
    data = _report(path)[3]
    text = pdf_text(data)
    assert f"Case conference: {HOSTILE}" in text
    assert f"L-RAD: </para><font size=90>{HOSTILE}" in text


def test_map_page_image(report_07, tmp_path):
    pdf = tmp_path / "report.pdf"
    pdf.write_bytes(report_07[3])
    png = render_png(pdf, tmp_path / "report-map", dpi=100)
    assert png.stat().st_size > 50_000
    print(f"case report map image: {png}")


def test_case_without_procedure(tmp_path):
    from vascplan.reports.service import case_report_pdf

    doc = yaml.safe_load(CASE_07.read_text())
    del doc["procedure"]
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(doc))
    case, data = case_report_pdf(path, generated_at=AT)
    text = pdf_text(data)
    assert "No procedure in the case file: no routes were planned." in text
    assert "none given in the case file" in text
    assert "Legend" in text


def test_top_routes_in_full_the_rest_in_brief(report_21_top):
    _, _, plan, data = report_21_top
    text = pdf_text(data)
    routes = plan["routes"]
    assert len(routes) > DEFAULT_TOP  # DEMO-21 has many routes, most of them ruled out
    # Every route is still listed once with its verdict word.
    assert len(re.findall(r"\busable\b", text)) == sum(r["feasible"] for r in routes)
    assert len(re.findall(r"\bblocked\b", text)) == sum(not r["feasible"] for r in routes)
    assert f"{len(routes)} routes in all: ranks 1-{DEFAULT_TOP} in full" in text
    assert f"The other {len(routes) - DEFAULT_TOP} routes, in brief" in text
    for r in routes[:DEFAULT_TOP]:  # in full: every limit with its detail
        for b in r["blocked_by"]:
            assert f"BLOCKED {b['code']} at {b['segment']}: " in text
    brief = text.split("routes, in brief")[1]
    assert "BLOCKED" not in brief  # in brief: each limit's code and where, no detail
    for r in routes[DEFAULT_TOP:]:
        codes = {b["code"] for b in r["blocked_by"]}
        for code in codes:
            segs = ", ".join(b["segment"] for b in r["blocked_by"] if b["code"] == code)
            assert f"{code} at {segs}" in text


def test_top_shortens_the_report(report_21_top):
    full = _report(CASE_21)[3]
    assert len(pdf_pages(report_21_top[3])) < len(pdf_pages(full))


def test_support_without_measured_outer_diameter_is_flagged(tmp_path):
    # DEMO-12 with its sheath's measured outer diameter removed: the planner falls back to
    # a reference outer diameter, which the report must mark wherever it is printed
    # (HELPER_RULES: a reference value used instead of a measurement is flagged).
    doc = yaml.safe_load(CASE_12.read_text())
    del doc["procedure"]["sheath"]["outer_mm"]
    doc["patient"]["ref"] = "DEMO-31"
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(doc))
    _, _, plan, data = _report(path)
    text = pdf_text(data)
    od = plan["support"]["device_od_mm"]
    assert f"Device outer diameter {od:.2f}* (reference value: the case file gives no outer" in text
    first = next(r for r in plan["routes"] if r["feasible"])
    assert "sheath_od_mm" in first["assumed"]
    assert f"{first['sheath_od_mm']:.2f}* / " in text
    # With the measured outer diameter (the example as written) there is no mark.
    measured = pdf_text(_report(CASE_12)[3])
    assert "Device outer diameter 5.70 mm" in measured  # outer_mm: 5.7 in the example file
    # The example names the device kind (kind: microaxial-pump): the summary says it.
    assert "microaxial pump: crossing profile 14 Fr" in pdf_pages(_report(CASE_12)[3])[0]


@pytest.mark.parametrize("ref", ["<b>&x</i>", "DEMO-9 & <i>co", "a</para>b"])
def test_markup_in_a_ref_prints_literally(tmp_path, ref):
    doc = yaml.safe_load(CASE_12.read_text())  # a support case: every section is drawn
    doc["patient"]["ref"] = ref
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(doc))
    pages = pdf_pages(_report(path)[3])
    assert f"Case conference: {ref}" in pages[0]
    for page in pages:  # the head line of every page names the case as written
        assert f"Case conference - {ref}" in page


def test_report_says_what_reference_values_are_and_what_to_measure(tmp_path):
    # Issue 11 "done when": the case report says what reference values are (patients' CT
    # minimal lumen diameters for access vessels: Chiam et al., Int J Cardiol 2013) and what
    # to measure.
    from click.testing import CliRunner
    from pypdf import PdfReader

    from vascplan.cli import cli as _cli

    out = tmp_path / "r.pdf"
    case = examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"
    res = CliRunner().invoke(_cli, ["report", str(case), "-o", str(out)])
    assert res.exit_code == 0, res.output
    text = " ".join(" ".join(p.extract_text().split()) for p in PdfReader(out).pages)
    assert "is a reference value, not this patient's measurement" in text
    assert "minimal lumen diameter that CT finds in patients" in text
    assert "Measure on CT angiography or duplex" in text
