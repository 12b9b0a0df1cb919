"""Issue 13: ``vascplan due``: what is overdue and due now, bed by bed, in the terminal and JSON.

Bed 1 of ``tests/unit_minimal.yaml``: a 17 Fr femoral VA-ECMO cannula (raised tier: the
standard protocol's maintenance checks every 30 min, tolerance 10 min), NIRS baseline, a
distal cannula since 15:05. Its schedule, by hand (standard.yaml): 14:35, 14:50, 15:05, then
the distal cannula restarts the phases: 15:20, 15:35, 15:50, 16:05, 16:35, 17:05, 17:35,
18:05, then every 30 min: 18:35, 19:05, 19:35, 20:05, 20:35...
"""

from __future__ import annotations

import json

from click.testing import CliRunner

from tests.obs_fixtures import UNIT
from tests.test_obs_review import FULL_CHECK
from vascplan.cli import cli
from vascplan.safety import CAUTION

EVERYTHING = [
    *[
        f"{i}:{s}"
        for i in ("pulse", "nirs", "colour", "temperature", "refill", "sensation", "motor", "calf")
        for s in ("L", "R")
    ],
    "access",
    "dpc",
    "circuit-flow",
    "position",
]
"""A whole check of bed 1 (standard.yaml items, left before right)."""


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _csv(tmp_path, time, rows):
    p = tmp_path / f"c{time[11:13]}{time[14:16]}.csv"
    body = "".join(f"{time},1,DEMO-11,RN-A,{i},{s},{v}\n" for i, s, v in rows)
    p.write_text("time,bed,ref,by,item,site,value\n" + body)
    return p


def test_due_json_contract_with_a_partial_check(tmp_path):
    db = tmp_path / "o.db"
    # A whole check at 19:30, then at 20:00 a check without the left NIRS and the right refill.
    partial = [f for f in FULL_CHECK if f[:2] not in (("nirs", "L"), ("refill", "R"))]
    for time, rows in (("2026-12-01T19:30", FULL_CHECK), ("2026-12-01T20:00", partial)):
        assert (
            run("obs", "import", _csv(tmp_path, time, rows), "--unit", UNIT, "--db", db).exit_code
            == 0
        )
    r = run("due", UNIT, "--at", "2026-12-01T20:20", "--within", 30, "--format", "json", "--db", db)
    assert r.exit_code == 0, r.output
    # 19:35 and 20:05: opened 19:25 and 19:55, both covered except nirs:L and refill:R since
    # 19:30 does not cover 20:05's window. 19:35: its window opened 19:25, 19:30 covers all.
    # 20:05 + 10 = 20:15 is before 20:20: overdue, wanting nirs:L and refill:R. 20:35 is
    # within 30 min of 20:20 (by 20:50): due, nothing of it recorded.
    assert json.loads(r.output) == {
        "unit": "Cardiac critical care (demo)",
        "at": "2026-12-01T20:20:00+00:00",
        "beds": [
            {
                "bed": 1,
                "ref": "DEMO-11",
                "overdue": [{"due": "2026-12-01T20:05:00+00:00", "items": ["nirs:L", "refill:R"]}],
                "due": [{"due": "2026-12-01T20:35:00+00:00", "items": EVERYTHING}],
            }
        ],
        "caution": CAUTION,
    }


def test_due_table_sorted_by_time_with_offsets(tmp_path):
    db = tmp_path / "o.db"
    assert run("obs", "import", _csv(tmp_path, "2026-12-01T19:30", FULL_CHECK), "--unit", UNIT,
               "--db", db).exit_code == 0  # fmt: skip
    r = run("due", UNIT, "--at", "2026-12-01T20:30", "--db", db)
    assert r.exit_code == 0, r.output
    lines = r.output.splitlines()
    assert lines[0] == (
        "Checks due: Cardiac critical care (demo), as at 2026-12-01 20:30+00:00; overdue, "
        "and due by 21:30+00:00 (next 60 min)"
    )
    i = lines.index("Bed 1  DEMO-11")
    assert lines[i + 1 : i + 5] == [
        "  OVERDUE  20:05+00:00 (25 min late): whole check (20 items)",
        "  due      20:35+00:00 (in 5 min): whole check (20 items)",
        "  due      21:05+00:00 (in 35 min): whole check (20 items)",
        "",
    ]
    assert f"Caution: {CAUTION}" in r.output


def test_due_bad_window_is_one_line():
    r = run("due", UNIT, "--within", -5)
    assert (r.exit_code, r.output) == (2, "error: --within: must be 0-1440 minutes (got -5)\n")


def test_obs_add_defaults_to_now_and_names_what_is_left(tmp_path):
    db = tmp_path / "o.db"
    r = run("obs", "add", "--unit", UNIT, "--bed", 1, "--by", "RN-A", "--nirs", "L=66",
            "--db", db)  # fmt: skip
    assert r.exit_code == 0, r.output
    first, second = r.output.splitlines()
    assert "(now: no --time given)" in first
    # Everything but the left NIRS is still due (issue 13: a partial check says which).
    assert second == (
        "partial check: not recorded, so still due: "
        + ", ".join(x for x in EVERYTHING if x != "nirs:L")
        + " (see vascplan due)"
    )
    r = run("obs", "add", "--unit", UNIT, "--bed", 1, "--time", "now", "--by", "RN-A",
            "--nirs", "R=66", "--db", db)  # fmt: skip
    assert r.exit_code == 0 and "(now: --time now)" in r.output
