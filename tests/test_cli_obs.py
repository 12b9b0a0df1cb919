"""The ``vascplan obs`` commands through click's CliRunner, on both stores."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from tests.obs_fixtures import UNIT, db_url  # noqa: F401 - fixture
from vascplan.cli import cli
from vascplan.observations.csvio import COLUMNS, EXPORT_COLUMNS
from vascplan.observations.findings import ITEMS
from vascplan.observations.store import open_store
from vascplan.safety import CAUTION

U = str(UNIT)
HEADER = ",".join(COLUMNS)


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _csv(tmp_path, rows, name="checks.csv"):
    p = tmp_path / name
    p.write_text(HEADER + "\n" + "\n".join(rows) + "\n")
    return p


def test_template_imports_cleanly(tmp_path, db_url):  # noqa: F811
    r = run("obs", "template", "-o", tmp_path / "t.csv")
    assert r.exit_code == 0, r.output
    assert (tmp_path / "t.csv").read_text().splitlines()[0] == HEADER
    r = run("obs", "import", tmp_path / "t.csv", "--unit", U, "--db", db_url)
    assert r.exit_code == 0, r.output
    assert r.output.startswith("stored 24 findings from ")  # 16 + 8 rows of issue 13 items
    with open_store(db_url) as store:
        assert store.count() == 24


@pytest.mark.parametrize(
    ("row", "error"),
    [
        (
            "2026-12-01T16:00,1,DEMO-99,RN-A,nirs,L,60",
            "line 3: ref: bed 1 holds DEMO-11 in the unit file, not 'DEMO-99'",
        ),
        (
            "2026-12-01T16:00,4,DEMO-11,RN-A,nirs,L,60",
            "line 3: bed: no patient in bed 4; occupied beds: 1",
        ),
        (
            "2026-12-01T16:00,1,DEMO-11,RN-A,nirs,L,160",
            "line 3: value: nirs must be 0-100 %, got 160",
        ),
        (
            "2026-12-01 4pm,1,DEMO-11,RN-A,nirs,L,60",
            "line 3: time: '2026-12-01 4pm' is not an ISO 8601 time such as 2026-12-01T07:30",
        ),
        (
            "2026-10-25T01:30,1,DEMO-11,RN-A,nirs,L,60",
            # Europe/London leaves BST (+01:00) for GMT (+00:00) at 02:00 on 2026-10-25.
            "line 3: time: 2026-10-25 01:30 happens twice in Europe/London (clocks go back); "
            "give it with its UTC offset: 2026-10-25T01:30+01:00 (the first) or "
            "2026-10-25T01:30+00:00 (the second)",
        ),
        (
            "2026-12-01T16:00,1,DEMO-11,RN-A,pulse,R,absent",
            "line 3: site: site 'R' is not allowed for pulse; use a side and an artery such as "
            "R-DPA (arteries DPA, PTA, PER, ATA, PLA, TPT, POP, SFA, PFA, CFA, EIA, IIA, CIA, "
            "SCA, AXA, BRA, RAD, ULN)",
        ),
        ("2026-12-01T16:00,1,DEMO-11,RN-A,nirs,L", "line 3: expected 7 columns, got 6"),
        (
            "2026-12-01T15:00,1,DEMO-11,RN-A,nirs,L,61",
            "line 3: repeats nirs L for bed 1 at the same time as line 2",
        ),
    ],
)
def test_a_bad_row_stores_nothing(tmp_path, db_url, row, error):  # noqa: F811
    p = _csv(
        tmp_path,
        [
            "2026-12-01T15:00,1,DEMO-11,RN-A,nirs,L,64",
            row,
            "2026-12-01T17:00,1,DEMO-11,RN-A,nirs,L,63",
        ],
    )
    r = run("obs", "import", p, "--unit", U, "--db", db_url)
    assert r.exit_code == 2
    assert r.output == f"error: {p}: {error}\n"
    with open_store(db_url) as store:
        assert store.count() == 0


def test_bad_header(tmp_path, db_url):  # noqa: F811
    p = tmp_path / "x.csv"
    p.write_text("time,bed,ref,item,site,value\n")
    r = run("obs", "import", p, "--unit", U, "--db", db_url)
    assert r.exit_code == 2
    assert r.output == (
        f"error: {p}: line 1: the header must be exactly {HEADER} "
        "(got time,bed,ref,item,site,value)\n"
    )


def test_add_then_correct_then_export_csv(tmp_path, db_url):  # noqa: F811
    r = run(
        "obs",
        "add",
        "--unit",
        U,
        "--bed",
        1,
        "--time",
        "2026-12-01T16:00",
        "--by",
        "RN-A",
        "--pulse",
        "R-DPA=doppler",
        "--nirs",
        "L=64",
        "--nirs",
        "R=60",
        "--refill",
        "R=3",
        "--sensation",
        "R=normal",
        "--motor",
        "R=normal",
        "--calf",
        "R=soft",
        "--pain",
        "3",
        "--access",
        "R=dry",
        "--dpc",
        "ok",
        "--pressure",
        "R-PTA=110",
        "--venous",
        "R=present",
        "--colour",
        "R=pale",
        "--temperature",
        "R=cool",
        "--db",
        db_url,
    )
    assert r.exit_code == 0, r.output
    assert r.output.startswith(
        "stored 14 findings for bed 1 (DEMO-11) at 2026-12-01T16:00:00+00:00"
    )
    with open_store(db_url) as store:
        nirs_r = next(
            e.id
            for e in store.entries("cardiac-critical-care-demo")  # the id from its name
            if (e.item, e.site) == ("nirs", "R")
        )
    r = run(
        "obs",
        "correct",
        "--entry",
        nirs_r,
        "--value",
        "66",
        "--unit",
        U,
        "--by",
        "RN-A",
        "--reason",
        "misread",
        "--db",
        db_url,
    )
    assert r.exit_code == 0, r.output
    out = tmp_path / "export.csv"
    r = run("obs", "export", "--unit", U, "--format", "csv", "-o", out, "--db", db_url)
    assert r.exit_code == 0, r.output
    rows = list(csv.DictReader(io.StringIO(out.read_text())))
    assert tuple(rows[0]) == EXPORT_COLUMNS
    assert len(rows) == 15
    orig = next(x for x in rows if x["entry"] == str(nirs_r))
    fix = next(x for x in rows if x["corrects"] == str(nirs_r))
    assert (orig["value"], orig["by"], orig["superseded_by"]) == ("60", "RN-A", fix["entry"])
    assert (fix["value"], fix["by"], fix["reason"], fix["item"], fix["site"]) == (
        "66",
        "RN-A",  # the unit file's one nurse corrects her own entry
        "misread",
        "nirs",
        "R",
    )


@pytest.mark.parametrize(
    ("args", "error"),
    [
        (["--nirs", "64"], "error: --nirs: site: site empty is not allowed for nirs; use L or R\n"),
        (
            ["--pulse", "R-DPA=faint"],
            "error: --pulse: value: pulse value 'faint' is not allowed; use one of "
            "palpable, doppler, absent\n",
        ),
        ([], "error: add: give at least one finding, e.g. --nirs L=64 (see --help)\n"),
        (["--nirs", "L=60", "--nirs", "L=61"], "error: --nirs: site L is given twice\n"),
    ],
)
def test_add_errors(db_url, args, error):  # noqa: F811
    r = run(
        "obs",
        "add",
        "--unit",
        U,
        "--bed",
        1,
        "--time",
        "2026-12-01T16:00",
        "--by",
        "RN-A",
        *args,
        "--db",
        db_url,
    )
    assert (r.exit_code, r.output) == (2, error)


def test_add_wrong_bed(tmp_path):
    r = run(
        "obs",
        "add",
        "--unit",
        U,
        "--bed",
        3,
        "--time",
        "2026-12-01T16:00",
        "--by",
        "RN-A",
        "--nirs",
        "L=60",
        "--db",
        tmp_path / "o.db",
    )
    assert (r.exit_code, r.output) == (2, "error: --bed: no patient in bed 3; occupied beds: 1\n")


def test_correct_needs_value_or_withdraw(tmp_path):
    r = run(
        "obs", "correct", "--entry", 1, "--by", "RN-A", "--reason", "x", "--unit", U,
        "--db", tmp_path / "o.db",
    )  # fmt: skip
    assert (r.exit_code, r.output) == (2, "error: --value: give either --value or --withdraw\n")


def _quiet_check(tmp_path, db, time):
    # A reassuring check matching the unit file's baseline: no rule fires.
    rows = [
        f"{time},1,DEMO-11,RN-A,{item},{site},{value}"
        for item, site, value in [
            ("pulse", "R-DPA", "doppler"),
            ("pulse", "R-PTA", "doppler"),
            ("pulse", "L-DPA", "palpable"),
            ("venous", "R", "present"),
            ("nirs", "L", "68"),
            ("nirs", "R", "66"),
            ("refill", "R", "2"),
            ("refill", "L", "2"),
            ("colour", "L", "normal"),
            ("colour", "R", "normal"),
            ("temperature", "L", "warm"),
            ("temperature", "R", "warm"),
            ("sensation", "L", "normal"),
            ("sensation", "R", "normal"),
            ("motor", "L", "normal"),
            ("motor", "R", "normal"),
            ("calf", "L", "soft"),
            ("calf", "R", "soft"),
            ("access", "R", "dry"),
            ("dpc", "", "ok"),
            ("circuit-flow", "", "ok"),
            ("position", "", "unchanged"),
        ]
    ]
    p = _csv(tmp_path, rows, name=f"c{time[11:13]}{time[14:16]}.csv")
    r = run("obs", "import", p, "--unit", U, "--db", db)
    assert r.exit_code == 0, r.output


def test_review_exit_status_and_json_contract(tmp_path, db_url):  # noqa: F811
    _quiet_check(tmp_path, db_url, "2026-12-01T19:30")
    # 19:40: the standard protocol's next check (19:35, tolerance 10 min) is not yet overdue.
    r = run("obs", "review", U, "--at", "2026-12-01T19:40", "--format", "json", "--db", db_url)
    assert r.exit_code == 0, r.output
    doc = json.loads(r.output)
    assert doc["caution"] == CAUTION
    assert doc["at"] == "2026-12-01T19:40:00+00:00"
    (p,) = doc["patients"]
    assert (p["ref"], p["bed"], p["overdue"], p["alerts"]) == ("DEMO-11", 1, [], [])
    assert p["ali_category"] == "I"
    assert p["abi"] == {"L": None, "R": None}
    # The 19:30 check counts for the one due 19:35 (inside its 10-min window); by 21:00 the
    # 20:05 and 20:35 checks are missed (maintenance every 30 min for this raised-tier patient).
    r = run("obs", "review", U, "--at", "2026-12-01T21:00", "--format", "json", "--db", db_url)
    assert r.exit_code == 1
    (p,) = json.loads(r.output)["patients"]
    # Nothing recorded since: each lists every item of the standard protocol for a femoral
    # VA-ECMO with NIRS and a distal cannula (standard.yaml items, left before right).
    everything = [
        *[f"{i}:{s}" for i in ("pulse", "nirs", "colour", "temperature", "refill",
                               "sensation", "motor", "calf") for s in ("L", "R")],
        "access", "dpc", "circuit-flow", "position",
    ]  # fmt: skip
    assert p["overdue"] == [
        {"due": "2026-12-01T20:05:00+00:00", "minutes_late": 55, "phase": "maintenance",
         "missing": everything},
        {"due": "2026-12-01T20:35:00+00:00", "minutes_late": 25, "phase": "maintenance",
         "missing": everything},
    ]  # fmt: skip
    assert [a["rule"] for a in p["alerts"]] == ["check-overdue"]
    assert set(p["alerts"][0]) >= {"rule", "detail", "source", "call"}


def test_review_table_names_rule_source_and_call(tmp_path, db_url):  # noqa: F811
    _quiet_check(tmp_path, db_url, "2026-12-01T19:30")
    p = _csv(
        tmp_path,
        [
            "2026-12-01T19:40,1,DEMO-11,RN-A,pulse,R-DPA,absent",
            "2026-12-01T19:40,1,DEMO-11,RN-A,calf,R,tense",
        ],
        name="late.csv",
    )
    assert run("obs", "import", p, "--unit", U, "--db", db_url).exit_code == 0
    r = run("obs", "review", U, "--at", "2026-12-01T19:45", "--db", db_url)
    assert r.exit_code == 1
    assert (
        "ALERT pedal-signal-lost: R-DPA absent at 19:40+00:00; was doppler at 19:30+00:00"
        in r.output
    )
    assert "call: Doctor in charge of the patient; vascular surgeon (within 15 min)" in r.output
    assert "ALERT calf-tense: R calf tense at 19:40+00:00" in r.output
    assert "call: Vascular surgeon and doctor in charge, immediately (within 5 min)" in r.output
    assert "No guideline fixes NIRS thresholds" in r.output
    assert r.output.rstrip().endswith(CAUTION)


def test_obs_help_has_examples():
    for sub in ("add", "import", "template", "correct", "review", "trend", "export"):
        r = run("obs", sub, "--help")
        assert r.exit_code == 0 and "Example: vascplan obs" in r.output, sub


def test_help_does_not_load_sqlalchemy_or_reportlab():
    import subprocess
    import sys

    code = (
        "import sys\n"
        "from click.testing import CliRunner\n"
        "from vascplan.cli import cli\n"
        "for args in (['--help'], ['obs', '--help'], ['obs', 'review', '--help']):\n"
        "    assert CliRunner().invoke(cli, args).exit_code == 0\n"
        "print(sorted(m for m in ('sqlalchemy', 'reportlab', 'pandas') if m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_export_to_stdout_keeps_the_data_clean(tmp_path):
    # Captured output (a script, a pipe) is the data alone, so that it parses as it is.
    r = run("obs", "export", "--unit", U, "--format", "csv", "--db", tmp_path / "o.db")
    assert r.exit_code == 0
    assert r.output == ",".join(EXPORT_COLUMNS) + "\n"
    r = run("obs", "export", "--unit", U, "--format", "fhir", "--db", tmp_path / "o.db")
    assert r.exit_code == 0
    doc = json.loads(r.output)
    assert doc["resourceType"] == "Bundle"
    assert doc["meta"]["tag"][0]["display"] == CAUTION


def test_template_guide_names_the_sites_of_every_item():
    r = run("obs", "template", "--guide")
    assert r.exit_code == 0
    lines = r.output.splitlines()
    assert "colour: site L or R; value normal | pale | mottled | blue" in lines
    assert "pain: site empty, L or R; value a whole number 0-10" in lines
    assert "access: site empty, L, R or an artery such as R-CFA; value " in "\n".join(lines)
    assert len([x for x in lines if x.split(":")[0] in ITEMS]) == len(ITEMS)


def test_export_marks_every_superseded_row(tmp_path):
    db = tmp_path / "o.db"
    p = _csv(tmp_path, ["2026-12-01T16:00,1,DEMO-11,RN-A,nirs,L,60"])
    assert run("obs", "import", p, "--unit", U, "--db", db).exit_code == 0
    for args in (["--value", "62"], ["--withdraw"]):
        r = run("obs", "correct", "--entry", 1, *args, "--unit", U, "--by", "RN-A", "--reason",
                "r", "--db", db)  # fmt: skip
        assert r.exit_code == 0, r.output
    r = run("obs", "export", "--unit", U, "--format", "csv", "--db", db)
    rows = list(csv.DictReader(io.StringIO(r.output)))
    marks = [(x["entry"], x["value"], x["corrects"], x["superseded_by"]) for x in rows]
    assert marks == [
        ("1", "60", "", "3"),  # the original, kept
        ("2", "62", "1", "3"),  # the first correction, itself superseded
        ("3", "entered-in-error", "1", ""),  # the row that stands
    ]


def test_a_date_without_a_time_of_day_is_refused(tmp_path):
    p = _csv(tmp_path, ["2026-12-01,1,DEMO-11,RN-A,nirs,L,60"])
    r = run("obs", "import", p, "--unit", U, "--db", tmp_path / "o.db")
    assert r.exit_code == 2
    assert r.output == (
        f"error: {p}: line 2: time: '2026-12-01' has no time of day; give one, "
        "e.g. 2026-12-01T16:00\n"
    )
    r = run(
        "obs", "add", "--unit", U, "--bed", 1, "--time", "2026-12-01", "--by", "RN-A",
        "--nirs", "L=60", "--db", tmp_path / "o.db",
    )  # fmt: skip
    assert r.exit_code == 2
    assert r.output == (
        "error: --time: '2026-12-01' has no time of day; give one, e.g. 2026-12-01T16:00\n"
    )
    with open_store(str(tmp_path / "o.db")) as store:
        assert store.count() == 0


def test_an_ambiguous_time_names_the_two_real_offsets_of_the_unit_zone(tmp_path):
    # America/New_York leaves EDT (-04:00) for EST (-05:00) at 02:00 on 2026-11-01.
    unit = tmp_path / "unit.yaml"
    # The device goes in before the clock change (a check before it is refused, issue 18).
    text = Path(U).read_text().replace("Europe/London", "America/New_York")
    unit.write_text(text.replace("inserted: 2026-12-01T14:20", "inserted: 2026-10-30T14:20"))
    p = _csv(tmp_path, ["2026-11-01T01:30,1,DEMO-11,RN-A,nirs,L,60"])
    r = run("obs", "import", p, "--unit", unit, "--db", tmp_path / "o.db")
    assert r.exit_code == 2
    assert r.output == (
        f"error: {p}: line 2: time: 2026-11-01 01:30 happens twice in America/New_York "
        "(clocks go back); give it with its UTC offset: 2026-11-01T01:30-04:00 (the first) "
        "or 2026-11-01T01:30-05:00 (the second)\n"
    )
    ok = _csv(tmp_path, ["2026-11-01T01:30-05:00,1,DEMO-11,RN-A,nirs,L,60"], name="ok.csv")
    assert run("obs", "import", ok, "--unit", unit, "--db", tmp_path / "o.db").exit_code == 0


def test_every_obs_command_takes_db(tmp_path):
    # The issue: "Every `obs` command takes `--db PATH-OR-URL`".
    from vascplan.cli.obs import obs

    for name, command in obs.commands.items():
        assert "--db" in [o for p in command.params for o in p.opts], name
    r = run("obs", "template", "--db", tmp_path / "never.db")
    assert r.exit_code == 0 and r.output.startswith(HEADER + "\n")
    assert not (tmp_path / "never.db").exists()


def test_reading_a_store_that_was_not_there_says_so(tmp_path, monkeypatch):
    # A mistyped --db must not pass silently for a record with no checks in it; the note
    # is for a person at a terminal (captured output stays the data alone).
    from vascplan.cli import obs as obs_cli

    missing = tmp_path / "obs.db"
    quiet = CliRunner().invoke(cli, ["obs", "review", U, "--db", str(tmp_path / "other.db")])
    assert "note:" not in quiet.stderr
    monkeypatch.setattr(obs_cli, "_stderr_is_terminal", lambda: True)
    r = CliRunner().invoke(cli, ["obs", "review", U, "--db", str(missing)])
    assert r.exit_code in (0, 1)
    assert (
        f"note: there was no observation store at {missing}; a new empty one was made, "
        "so no check is on record (check --db)"
    ) in r.stderr
    again = CliRunner().invoke(cli, ["obs", "review", U, "--db", str(missing)])
    assert "note: there was no observation store" not in again.stderr


def test_a_lost_wrist_signal_below_an_axillary_device_alerts(tmp_path):
    # tests/unit_axillary.yaml: a microaxial pump in the right axillary artery, radial and
    # ulnar Doppler present at baseline. The arm below the device is the limb at risk
    # (common practice): a radial signal lost at the next check opens an alert that names
    # whom to call (the standard protocol's pulse-lost criterion).
    unit = str(Path(__file__).parent / "unit_axillary.yaml")
    db = tmp_path / "o.db"
    r = run("obs", "add", "--unit", unit, "--bed", "2", "--time", "2026-12-01T11:00",
            "--by", "RN-Q", "--pulse", "R-RAD=absent", "--pulse", "R-ULN=doppler", "--db", db)
    assert r.exit_code == 0, r.output
    r = run("obs", "review", unit, "--at", "2026-12-01T11:05", "--format", "json", "--db", db)
    alerts = json.loads(r.stdout)["patients"][0]["alerts"]
    lost = [a for a in alerts if a["rule"] == "wrist-signal-lost"]
    assert [a["detail"] for a in lost] == [
        "R-RAD absent at 11:00+00:00; was present at baseline (unit file)"
    ]
    assert lost[0]["call"].startswith("Doctor in charge of the patient; vascular surgeon")
    assert r.exit_code == 1
