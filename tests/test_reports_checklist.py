"""The nursing checklist: content, times across a clock change, hostile text, pages."""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta
from pathlib import Path

import pytest

from tests.reports_helpers import HOSTILE, page_sizes, pdf_pages, pdf_text, render_png
from vascplan.paths import examples_dir
from vascplan.reports.checklist import checklist_sheets, due_text, render_checklist
from vascplan.safety import CAUTION
from vascplan.surveillance.service import load_unit_and_protocol

UNIT = Path(__file__).parent / "reports_unit.yaml"
DEMO_UNIT = examples_dir() / "unit-demo.yaml"
AT = datetime(2026, 10, 21, 7, 0, tzinfo=UTC)


@pytest.fixture(scope="module")
def unit_and_protocol():
    return load_unit_and_protocol(UNIT)


def _pdf(unit_and_protocol, shift, day, **kw) -> tuple[list, bytes]:
    unit, protocol = unit_and_protocol
    sheets = checklist_sheets(unit, shift, day, protocol, **kw)
    return sheets, render_checklist(sheets, generated_at=AT, paper=kw.get("paper", "a4"))


def test_hourly_checks_of_a_day_shift(unit_and_protocol):
    # Hand-derived from vascplan/data/protocols/standard.yaml: a sheath put in at 06:10 has
    # checks every 15 min for 60 min, every 30 min for 120 min, then hourly from 10:10;
    # a standard-tier patient days later is checked hourly at ten past, so the day shift
    # (07:30-19:30) holds 08:10 ... 19:10, twelve checks.
    sheets, data = _pdf(unit_and_protocol, "day", date(2026, 10, 21), beds=[7])
    assert sheets[0].risk_tier == "standard"
    expected = [f"{h:02d}:10" for h in range(8, 20)]
    assert [due_text(r, sheets[0]) for r in sheets[0].rows] == expected
    text = pdf_text(data)
    for t in expected:
        assert t in text
    assert "07:10" not in text and "20:10" not in text


def test_clock_change_inside_a_night_shift(unit_and_protocol):
    # Europe/London goes back from 02:00 BST to 01:00 GMT on 25 October 2026 (IANA tz
    # database): 01:10 and 01:40 happen twice; both pairs name their zone (BST first,
    # then GMT) so no written time is ambiguous, and the rows stay 30 real minutes apart.
    sheets, data = _pdf(unit_and_protocol, "night", date(2026, 10, 24), beds=[7])
    rows = sheets[0].rows
    # Real elapsed time: subtract in UTC (datetimes sharing a tzinfo subtract wall clocks).
    utc = [r.due.astimezone(UTC) for r in rows]
    gaps = {(b - a).total_seconds() / 60 for a, b in zip(utc, utc[1:], strict=False)}
    assert gaps == {rows[0].interval_min}
    assert rows[0].interval_min == 30
    # 19:40 BST (18:40 UTC) to 07:10 GMT (07:10 UTC) is 12.5 real hours: 26 checks.
    assert len(rows) == 26
    printed = [due_text(r, sheets[0]) for r in rows]
    # Each repeated time names its zone and UTC offset (BST +01:00, GMT +00:00).
    assert printed.index("25 Oct 01:40 BST +01:00") + 1 == printed.index("25 Oct 01:10 GMT +00:00")
    assert printed.index("25 Oct 01:10 BST +01:00") + 1 == printed.index("25 Oct 01:40 BST +01:00")
    assert printed.index("25 Oct 00:40") + 1 == printed.index("25 Oct 01:10 BST +01:00")  # before
    assert "25 Oct 02:10 GMT +00:00" in printed  # after: offset differs from the shift start
    text = pdf_text(data)
    assert "25 Oct 01:10 GMT +00:00" in text and "25 Oct 01:40 GMT +00:00" in text
    assert "2026-10-24 19:30 BST to 2026-10-25 07:30 GMT" in text


def test_header_baseline_escalation_and_caution(unit_and_protocol):
    unit, protocol = unit_and_protocol
    sheets, data = _pdf(unit_and_protocol, "day", date(2026, 10, 21))
    pages = pdf_pages(data)
    for page in pages:
        assert CAUTION in page
    starts = [i for i, p in enumerate(pages) if "Limb-perfusion checklist: bed" in p]
    assert len(starts) == len(unit.patients) == 2
    first = pages[starts[1]]  # bed 8: VA-ECMO with a distal cannula and NIRS
    assert "15 Fr (outer size) VA-ECMO arterial return cannula, left CFA" in first
    assert "2026-10-20 09:00 BST" in first  # insertion, local time with its zone
    assert "7 Fr, in since 2026-10-20 10:00 BST" in first
    assert "Calf NIRS L 70 %, R 72 %" in first
    assert "Doppler L-DPA present" in first
    assert sheets[1].risk_tier.upper() in first
    assert "CALL AT ONCE IF YOU FIND" in first
    for e in protocol.escalation:  # every criterion, with whom to call and how fast
        assert e.finding in first
        assert f"{e.within_min} min" in first
    for heading in ("pulses", "nirs", "dpc", "circuit flow", "initials"):
        assert heading in first
    assert "Initials and full name of each nurse" in pdf_text(data)


def test_one_patient_per_sheet_and_no_page_shared(unit_and_protocol):
    sheets, data = _pdf(unit_and_protocol, "day", date(2026, 10, 21))
    pages = pdf_pages(data)
    labels = [f"bed {s.bed}, {s.ref}" for s in sheets]
    # The head of every page names the one patient it is about (a long grid runs on).
    for page in pages:
        assert sum(f"- {label} page" in page for label in labels) == 1
    # Twelve hourly checks and every item fit the patient's one page.
    assert sum(labels[0] in p for p in pages) == 1
    assert "08:10" in pages[0] and "19:10" in pages[0]


def test_hostile_strings_render_literally(unit_and_protocol):
    _, data = _pdf(unit_and_protocol, "day", date(2026, 10, 21))
    text = pdf_text(data)
    assert f"Limb-perfusion checklist: bed 8, {HOSTILE}" in text
    assert "RN-<i>X&amp;" in text  # the nurse id from the unit file
    assert "Test <unit> & co" in text


@pytest.mark.parametrize(("paper", "size"), [("a4", (595.28, 841.89)), ("letter", (612.0, 792.0))])
def test_paper(unit_and_protocol, paper, size):
    unit, protocol = unit_and_protocol
    sheets = checklist_sheets(unit, "day", date(2026, 10, 21), protocol)
    for w, h in page_sizes(render_checklist(sheets, paper=paper, generated_at=AT)):
        assert (w, h) == pytest.approx(size, abs=0.01)


def test_demo_unit_matches_its_schedule():
    from vascplan.surveillance.schedule import patient_schedule
    from vascplan.surveillance.unit import shift_window

    unit, protocol = load_unit_and_protocol(DEMO_UNIT)
    day = date(2026, 12, 2)
    sheets = checklist_sheets(unit, "day", day, protocol)
    start, end = shift_window(
        unit, unit.shift_named("day"), datetime.combine(day, unit.shifts[0].start)
    )
    for sheet, patient in zip(sheets, sorted(unit.patients, key=lambda p: p.bed), strict=True):
        due = [c.due for c in patient_schedule(unit, patient, protocol, start, end)]
        assert [r.due for r in sheet.rows] == due  # no check lost or doubled
        assert all(start <= d < end for d in due)


def test_patient_without_checks_in_the_shift(unit_and_protocol):
    unit, protocol = unit_and_protocol
    # A shift before the device went in: no row, and the sheet says so.
    sheets = checklist_sheets(unit, "day", date(2026, 10, 19), protocol, beds=[7])
    assert sheets[0].rows == ()
    text = pdf_text(render_checklist(sheets, generated_at=AT))
    assert "No check falls due for this patient in this shift." in text


def test_page_image(unit_and_protocol, tmp_path):
    _, data = _pdf(unit_and_protocol, "day", date(2026, 10, 21))
    pdf = tmp_path / "checklist.pdf"
    pdf.write_bytes(data)
    png = render_png(pdf, tmp_path / "checklist-page1")
    assert png.stat().st_size > 20_000
    print(f"checklist page image: {png}")


def test_generation_time_defaults_to_the_unit_zone(unit_and_protocol):
    unit, protocol = unit_and_protocol
    sheets = checklist_sheets(unit, "day", date(2026, 10, 21), protocol, beds=[7])
    text = pdf_text(render_checklist(sheets))
    now = datetime.now(unit.unit.tz)
    assert (
        f"Generated {now:%Y-%m-%d}" in text
        or f"Generated {now - timedelta(minutes=1):%Y-%m-%d}" in text
    )
    assert f"{now.tzname()} (UTC" in text


NY_UNIT = Path(__file__).parent / "reports_unit_ny.yaml"


def test_a_bed_asked_twice_prints_once():
    unit, protocol = load_unit_and_protocol(NY_UNIT)
    sheets = checklist_sheets(unit, "night", date(2026, 10, 31), protocol, beds=[11, 10, 11])
    assert [s.bed for s in sheets] == [11, 10]  # the order asked, each bed once


def test_repeated_hour_in_another_zone_prints_no_time_twice():
    # America/New_York goes back from 02:00 EDT to 01:00 EST on 1 November 2026 (IANA tz
    # database; US rule: first Sunday of November). The night shift 23:00-07:00 therefore
    # lasts 9 real hours, and every hour from 01:00 to 01:59 happens twice: no two rows of
    # a sheet may print the same time.
    unit, protocol = load_unit_and_protocol(NY_UNIT)
    sheets = checklist_sheets(unit, "night", date(2026, 10, 31), protocol)
    s = sheets[0]
    assert (s.shift_end - s.shift_start.astimezone(UTC)).total_seconds() == 9 * 3600
    for sheet in sheets:
        printed = [due_text(r, sheet) for r in sheet.rows]
        assert len(printed) == len(set(printed)), printed
        for r, text in zip(sheet.rows, printed, strict=True):
            if (r.due.month, r.due.day, r.due.hour) == (11, 1, 1):  # the repeated hour
                # Zone and offset: EDT is UTC-04:00, EST is UTC-05:00.
                assert text.endswith((" EDT -04:00", " EST -05:00")), text
    text = pdf_text(render_checklist(sheets, paper="letter", generated_at=AT))
    assert "2026-10-31 23:00 EDT to 2026-11-01 07:00 EST" in text
    assert "Generated 2026-10-21 07:00 UTC (UTC+00:00)" in text


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_twelve_checks_fit_one_sheet(paper):
    # Demo bed 6 (microaxial pump, in for a day) is checked hourly in the night shift:
    # twelve rows. Sheet, grid, key, escalation box and signatures must share one page
    # on A4 and on the shorter US Letter, so that a nurse never turns a single sheet.
    unit, protocol = load_unit_and_protocol(DEMO_UNIT)
    sheets = checklist_sheets(unit, "night", date(2026, 12, 2), protocol, beds=[6])
    assert len(sheets[0].rows) == 12
    pages = pdf_pages(render_checklist(sheets, paper=paper, generated_at=AT))
    assert len(pages) == 1
    for needle in ("CALL AT ONCE IF YOU FIND", "Key.", "Initials and full name", CAUTION):
        assert needle in pages[0]
    # Issue 13: each limb on its own and a column for the action taken or whom was called.
    assert "Action taken / escalated to" in pages[0]
    assert "L, R: left and right leg" in pages[0]


def test_tier_change_inside_the_shift_is_printed():
    # vascplan/examples/unit-demo.yaml: bed 5 (DEMO-15) has a team event at 2026-12-02T12:00
    # setting tier high ("cool left foot, NIRS gap widening"), inside the day shift.
    unit, protocol = load_unit_and_protocol(DEMO_UNIT)
    day = checklist_sheets(unit, "day", date(2026, 12, 2), protocol, beds=[5])[0]
    assert day.risk_tier != "high"  # the rules' tier at the shift start
    text = pdf_text(render_checklist([day], generated_at=AT))
    assert "From 12:00 GMT: HIGH (set by the team: cool left foot, NIRS gap widening)" in text
    # The night shift starts after the event: the tier is high from the start, no change.
    night = checklist_sheets(unit, "night", date(2026, 12, 2), protocol, beds=[5])[0]
    assert night.risk_tier == "high" and night.tier_changes == ()


def test_tier_change_note_with_braces_and_markup_prints_literally(tmp_path):
    import yaml

    doc = yaml.safe_load(DEMO_UNIT.read_text())
    note = "{tier} {0} <b>&x</i> }{"
    for p in doc["patients"]:
        if p["bed"] == 5:
            p["events"][0]["note"] = note
    path = tmp_path / "unit.yaml"
    path.write_text(yaml.safe_dump(doc))
    unit, protocol = load_unit_and_protocol(path)
    sheets = checklist_sheets(unit, "day", date(2026, 12, 2), protocol, beds=[5])
    text = pdf_text(render_checklist(sheets, generated_at=AT))
    assert f"From 12:00 GMT: HIGH (set by the team: {note})" in text


def test_arm_device_sheet_lists_the_arm_items():
    # tests/reports_unit_ny.yaml: bed 11 has a microaxial pump in the right axillary
    # artery, bed 10 a femoral cannula. The standard protocol's items carry the limb they
    # are for (vascplan/data/protocols/standard.yaml): the arm device's columns are the arm's
    # (radial and ulnar pulses, hand, forearm), the femoral device's the leg's.
    unit, protocol = load_unit_and_protocol(NY_UNIT)
    arm, leg = checklist_sheets(unit, "night", date(2026, 10, 31), protocol, beds=[11, 10])
    arm_ids = [i for i, _ in arm.items]
    leg_ids = [i for i, _ in leg.items]
    assert "arm-pulses" in arm_ids and "forearm" in arm_ids
    assert "calf" not in arm_ids and "pulses" not in arm_ids
    assert "calf" in leg_ids and "arm-pulses" not in leg_ids
    text = pdf_text(render_checklist([arm], generated_at=AT))
    assert "Radial and ulnar pulses both arms" in text


def test_shift_starting_in_the_skipped_hour_prints_a_real_time(tmp_path):
    # Europe/London jumps from 01:00 GMT to 02:00 BST on 29 March 2026 (IANA tz
    # database): no clock reads 01:30 that night. A shift set to start at 01:30 starts
    # at the instant 01:30 UTC, which the wall clock shows as 02:30 BST.
    import yaml

    doc = yaml.safe_load(UNIT.read_text())
    doc["shifts"].append({"name": "small", "start": "01:30"})
    path = tmp_path / "unit.yaml"
    path.write_text(yaml.safe_dump(doc))
    unit, protocol = load_unit_and_protocol(path)
    sheet = checklist_sheets(unit, "small", date(2026, 3, 29), protocol, beds=[7])[0]
    text = pdf_text(render_checklist([sheet], generated_at=AT))
    assert "01:30 GMT" not in text
    assert "small: 2026-03-29 02:30 BST to 2026-03-29 07:30 BST" in text
