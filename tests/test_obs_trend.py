"""The trend PDF: a page per patient, thresholds, checks and alerts, caution and page numbers."""

from __future__ import annotations

import re
from pathlib import Path

from click.testing import CliRunner

from tests.obs_fixtures import UNIT
from vascplan.cli import cli
from vascplan.safety import CAUTION

SECOND = """
  - ref: "DEMO-<b>&12"
    bed: 2
    device: {kind: balloon-pump, side: L, size_fr: 7.5, label: outer, inserted: 2026-12-01T12:00}
"""


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _unit_two_beds(tmp_path: Path) -> Path:
    p = tmp_path / "unit.yaml"
    p.write_text(UNIT.read_text() + SECOND)
    return p


def _text(pdf: Path) -> list[str]:
    from pypdf import PdfReader

    return [page.extract_text() for page in PdfReader(str(pdf)).pages]


def test_trend_pages_and_marks(tmp_path):
    unit = _unit_two_beds(tmp_path)
    db = tmp_path / "o.db"
    rows = ["time,bed,ref,by,item,site,value"]
    for hh, r_nirs, dpa in (
        ("16:00", 66, "doppler"),
        ("17:00", 64, "doppler"),
        ("18:00", 48, "absent"),
    ):
        rows += [
            f"2026-12-01T{hh},1,DEMO-11,RN-A,nirs,L,68",
            f"2026-12-01T{hh},1,DEMO-11,RN-A,nirs,R,{r_nirs}",
            f"2026-12-01T{hh},1,DEMO-11,RN-A,refill,R,2",
            f"2026-12-01T{hh},1,DEMO-11,RN-A,pulse,R-DPA,{dpa}",
        ]
    rows.append("2026-12-01T16:00,2,DEMO-<b>&12,RN-A,nirs,L,70")
    (tmp_path / "c.csv").write_text("\n".join(rows) + "\n")
    assert run("obs", "import", tmp_path / "c.csv", "--unit", unit, "--db", db).exit_code == 0
    out = tmp_path / "trend.pdf"
    r = run("obs", "trend", unit, "-o", out, "--at", "2026-12-01T18:10", "--db", db)
    assert r.exit_code == 0, r.output
    pages = _text(out)
    assert len(pages) == 2
    for i, page in enumerate(pages, start=1):
        flat = " ".join(page.split())  # the caution wraps over two lines at the foot
        assert f"page {i} of 2" in flat  # the shared page template's numbering
        assert CAUTION in flat
    assert "Limb trend - bed 1 - DEMO-11" in pages[0]
    assert "DEMO-<b>&12" in pages[1]  # printed literally, never read as markup
    assert "floor 50%" in pages[0] and "slow above 3 s" in pages[0]  # standard protocol thresholds
    assert "pedal-signal-lost: R-DPA absent at 18:00+00:00; was doppler at 17:00+00:00" in pages[0]
    assert "3 checks recorded" in pages[0]
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".tmp")]


def test_trend_one_bed(tmp_path):
    out = tmp_path / "t.pdf"
    r = run(
        "obs",
        "trend",
        UNIT,
        "--bed",
        1,
        "-o",
        out,
        "--at",
        "2026-12-01T18:00",
        "--db",
        tmp_path / "o.db",
    )
    assert r.exit_code == 0, r.output
    (page,) = _text(out)
    assert "0 checks recorded" in page and "Open now: check-overdue" in page


def test_trend_unknown_bed(tmp_path):
    r = run("obs", "trend", UNIT, "--bed", 9, "-o", tmp_path / "t.pdf", "--db", tmp_path / "o.db")
    assert (r.exit_code, r.output) == (2, "error: --bed: no patient in bed 9; occupied beds: 1\n")
    assert not (tmp_path / "t.pdf").exists()


# --- Time axis on round times of the unit's clock -------------------------------------------
# The expected ticks are read off a wall clock by hand (a tick at every full or half hour),
# not taken from the code.


def test_time_ticks_fall_on_round_local_times_for_odd_check_times():
    from datetime import datetime
    from zoneinfo import ZoneInfo

    from vascplan.observations.trend import time_ticks

    tz = ZoneInfo("Europe/London")
    step, ticks = time_ticks(
        datetime(2026, 12, 1, 14, 37, tzinfo=tz), datetime(2026, 12, 1, 17, 13, tzinfo=tz), tz
    )
    assert step == 30
    assert [f"{t:%H:%M}" for t in ticks] == ["15:00", "15:30", "16:00", "16:30", "17:00"]


def test_time_ticks_are_local_not_utc_in_a_half_hour_zone():
    from datetime import UTC, datetime
    from zoneinfo import ZoneInfo

    from vascplan.observations.trend import time_ticks

    tz = ZoneInfo("Asia/Kolkata")  # UTC+05:30: a local full hour is a UTC half hour
    _, ticks = time_ticks(
        datetime(2026, 12, 1, 3, 10, tzinfo=UTC), datetime(2026, 12, 1, 9, 50, tzinfo=UTC), tz
    )
    local = [t.astimezone(tz) for t in ticks]
    assert local and all(t.minute == 0 for t in local)
    assert [t.hour for t in local] == [9, 10, 11, 12, 13, 14, 15]


def test_time_ticks_keep_round_local_hours_across_a_clock_change():
    from datetime import datetime
    from zoneinfo import ZoneInfo

    from vascplan.observations.trend import time_ticks

    tz = ZoneInfo("America/New_York")  # clocks go back at 02:00 EDT on 2026-11-01
    step, ticks = time_ticks(
        datetime(2026, 10, 31, 20, 5, tzinfo=tz), datetime(2026, 11, 1, 12, 0, tzinfo=tz), tz
    )
    # Real elapsed span (hand arithmetic): 20:05 EDT = 00:05 UTC, 12:00 EST = 17:00 UTC,
    # 16 h 55 min = 1015 min; 1015 / 120 = 8.5 ticks > 8, so 3-hourly (1015 / 180 = 5.6).
    # (The wall-clock span, 15 h 55 min, would wrongly allow 2-hourly ticks.)
    assert step == 180
    assert [f"{t.astimezone(tz):%H:%M}" for t in ticks] == [
        "21:00", "00:00", "03:00", "06:00", "09:00", "12:00",
    ]  # fmt: skip


def test_value_ticks_are_round():
    from vascplan.observations.trend import value_ticks

    lo, hi, ticks = value_ticks(43, 77)
    assert (lo, hi) == (40, 80)
    assert ticks == [40, 50, 60, 70, 80]


def test_trend_axis_labels_are_round_half_hours(tmp_path):
    db = tmp_path / "o.db"
    csv = tmp_path / "c.csv"
    csv.write_text(
        "time,bed,ref,by,item,site,value\n"
        "2026-12-01T14:37,1,DEMO-11,RN-A,nirs,L,66\n"
        "2026-12-01T15:24,1,DEMO-11,RN-A,nirs,L,64\n"
        "2026-12-01T16:51,1,DEMO-11,RN-A,nirs,L,62\n"
    )
    assert run("obs", "import", csv, "--unit", UNIT, "--db", db).exit_code == 0
    out = tmp_path / "t.pdf"
    r = run("obs", "trend", UNIT, "--bed", 1, "-o", out, "--at", "2026-12-01T17:13", "--db", db)
    assert r.exit_code == 0, r.output
    # The page's generation stamp is the clock at run time: leave it out of the search.
    text = re.sub(r"Generated \S+ \S+", "", _text(out)[0])
    # 14:37 to 17:13 is under 3 h: a tick every half hour, the axis starting at 14:30.
    for label in ("14:30", "15:00", "15:30", "16:00", "16:30", "17:00"):
        assert label in text
    assert "14:37" not in text  # no alert opened at 14:37, so it is on no axis either


def test_trend_marks_checks_overdue_now(tmp_path):
    # Bed 1 (unit_minimal.yaml): raised tier, maintenance every 30 min; one check at 19:30,
    # then none: at 21:00 the 20:05 and 20:35 checks are past their 10-min tolerance.
    db = tmp_path / "o.db"
    csv = tmp_path / "c.csv"
    # A whole check (issue 13: a check counts only for what it records; the items of
    # standard.yaml for this femoral VA-ECMO with NIRS and a distal cannula).
    from tests.test_obs_review import FULL_CHECK

    rows = "".join(f"2026-12-01T19:30,1,DEMO-11,RN-A,{i},{s},{v}\n" for i, s, v in FULL_CHECK)
    csv.write_text("time,bed,ref,by,item,site,value\n" + rows)
    assert run("obs", "import", csv, "--unit", UNIT, "--db", db).exit_code == 0
    out = tmp_path / "t.pdf"
    r = run("obs", "trend", UNIT, "--bed", 1, "-o", out, "--at", "2026-12-01T21:00", "--db", db)
    assert r.exit_code == 0, r.output
    text = " ".join(_text(out)[0].split())
    assert "2 scheduled check(s) not recorded, due 20:05+00:00, 20:35+00:00" in text
