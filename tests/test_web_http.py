"""The ward pages at the HTTP level (starlette's TestClient): sign-in, CSRF, roles, every
route's bad input (one clear message, 4xx, nothing stored), authors and the audit trail.

Expected times are hand arithmetic from the bundled protocol (``data/protocols/standard.yaml``,
unit policy / common practice): after insertion, checks every 15 min for the first 60 min;
a 15-min check may be 5 min late before it counts as overdue.
"""

from __future__ import annotations

import html as htmllib
import json
import re
import shutil
import warnings

import pytest

from tests.ward_fixtures import (
    FORM_TOKEN,
    UNIT_KEY,
    UNIT_NAME,
    Clock,
    csrf,
    local,
    seed,
    sign_in,
)
from vascplan.safety import CAUTION

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    from starlette.testclient import TestClient


START = "2026-12-01T10:10"


@pytest.fixture(scope="module")
def seeded(tmp_path_factory):
    """One seeded store per module, copied for each test (seeding costs a few hashes)."""
    db = tmp_path_factory.mktemp("ward") / "seed.db"
    seed(str(db), local(START))
    return db


@pytest.fixture
def ward(tmp_path, seeded):
    db = str(tmp_path / "ward.db")
    shutil.copyfile(seeded, db)
    clock = Clock(local(START))
    from vascplan.web.app import create_app

    app = create_app(db, clock=clock, login_delay_s=0.0)
    with TestClient(app) as client:
        yield client, clock, db


def _store(db):
    from vascplan.ward.store import open_ward

    return open_ward(db)


def _count(db) -> int:
    with _store(db) as s:
        return s.obs.count(UNIT_KEY)


def _events(db) -> int:
    with _store(db) as s:
        return len(s.events(UNIT_NAME))


def _audit(db):
    with _store(db) as s:
        return s.audit_rows()


def _errors(html: str) -> list[str]:
    return [m.strip() for m in re.findall(r'class="field-error"[^>]*>⚠ ([^<]*)<', html)]


def _check_page(client, ref="DEMO-31"):
    r = client.get(f"/patients/{ref}/check")
    assert r.status_code == 200
    return csrf(r.text), FORM_TOKEN.search(r.text).group(1)  # type: ignore[union-attr]


# --- fixed points ---------------------------------------------------------------------------


def test_health_answers_without_sign_in(ward):
    client, _, _ = ward
    r = client.get("/health")
    assert r.status_code == 200 and r.json() == {"status": "ok"}


@pytest.mark.parametrize(
    "path",
    [
        "/",
        "/board",
        "/board/live",
        "/patients/DEMO-31",
        "/patients/DEMO-31/check",
        "/patients/DEMO-31/events/device-removed",
        "/admit",
        "/entries/1/correct",
        "/patients/DEMO-31/export.csv",
        "/users",
        "/audit",
    ],
)
def test_every_page_sends_a_stranger_to_login(ward, path):
    client, _, _ = ward
    r = client.get(path, follow_redirects=False)
    assert r.status_code == 303
    assert r.headers["location"].startswith("/login")


def test_login_form_has_the_fixed_fields(ward):
    client, _, _ = ward
    html = client.get("/login").text
    assert 'name="username"' in html and 'name="password"' in html
    assert re.search(r'type="hidden" name="csrf" value="[^"]{20,}"', html)


def test_sign_in_and_out_are_audited(ward):
    client, _, db = ward
    token = sign_in(client, "rn-ada")
    assert "rn-ada" in client.get("/board").text
    r = client.post("/logout", data={"csrf": token}, follow_redirects=False)
    assert r.status_code == 303
    assert client.get("/board", follow_redirects=False).status_code == 303
    actions = [(a.author, a.action) for a in _audit(db)]
    assert ("rn-ada", "sign-in") in actions and ("rn-ada", "sign-out") in actions
    assert all(a.address for a in _audit(db))


def test_wrong_password_is_refused_and_audited(ward):
    client, _, db = ward
    page = client.get("/login")
    r = client.post(
        "/login", data={"username": "rn-ada", "password": "not it at all", "csrf": csrf(page.text)}
    )
    assert r.status_code == 401
    assert "The user name or password is wrong" in r.text
    assert client.get("/board", follow_redirects=False).status_code == 303
    assert [a.action for a in _audit(db)][-1] == "sign-in-failed"


def test_login_without_csrf_is_refused(ward):
    client, _, db = ward
    client.get("/login")
    r = client.post("/login", data={"username": "rn-ada", "password": "nurse password 1"})
    assert r.status_code == 403
    assert not any(a.action == "sign-in" for a in _audit(db))


def test_security_headers_and_cookie(ward):
    client, _, _ = ward
    r = client.get("/login")
    csp = r.headers["content-security-policy"]
    assert "script-src 'self'" in csp and "unsafe-inline" not in csp
    assert "frame-ancestors 'none'" in csp
    assert r.headers["x-frame-options"] == "DENY"
    assert r.headers["referrer-policy"] == "no-referrer"
    cookie = r.headers["set-cookie"].lower()
    assert "httponly" in cookie and "samesite=strict" in cookie
    assert "max-age=1800" in cookie  # the idle time-out: 30 min without a request (unit policy)
    assert "<script>" not in r.text  # no inline script anywhere on the page


def test_every_page_carries_the_caution(ward):
    client, _, _ = ward
    assert CAUTION in client.get("/login").text
    sign_in(client, "admin-cy")
    for path in ("/board", "/patients/DEMO-31", "/patients/DEMO-31/check", "/users", "/audit"):
        assert CAUTION in client.get(path).text, path


# --- the bedside check --------------------------------------------------------------------


def test_check_form_follows_the_protocol_per_limb(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    html = client.get("/patients/DEMO-31/check").text
    # Leg items for each limb; NIRS because the patient has a NIRS baseline; the access
    # site on the device's side (R CFA); no arm items for a femoral device.
    for name in ("pulse:L-DPA", "pulse:R-PTA", "nirs:L", "nirs:R", "refill:L", "motor:R"):
        assert f'name="{name}"' in html, name
    assert 'name="access:R-CFA"' in html
    assert "pulse:L-RAD" not in html
    other = client.get("/patients/DEMO-32/check").text
    assert 'name="nirs:L"' not in other  # no NIRS monitoring on bed 2


def test_a_check_takes_its_author_from_the_login(ward):
    client, _, db = ward
    sign_in(client, "rn-ada")
    token, form_token = _check_page(client)
    r = client.post(
        "/patients/DEMO-31/check",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:05",
            "nirs:L": "64",
            "nirs:R": "61",
            "pulse:R-DPA": "doppler",
        },
        follow_redirects=False,
    )
    assert r.status_code == 303
    with _store(db) as s:
        rows = s.obs.entries(UNIT_KEY, ref="DEMO-31")
    assert {(e.item, e.site, e.value, e.by) for e in rows} == {
        ("nirs", "L", "64", "rn-ada"),
        ("nirs", "R", "61", "rn-ada"),
        ("pulse", "R-DPA", "doppler", "rn-ada"),
    }
    assert [a for a in _audit(db) if a.action == "check"][0].author == "rn-ada"


def test_a_form_sent_twice_is_recorded_once(ward):
    client, _, db = ward
    sign_in(client, "rn-ada")
    token, form_token = _check_page(client)
    data = {"csrf": token, "form_token": form_token, "time": "2026-12-01T10:05", "nirs:L": "64"}
    first = client.post("/patients/DEMO-31/check", data=data, follow_redirects=False)
    again = client.post("/patients/DEMO-31/check", data=data, follow_redirects=False)
    assert first.status_code == again.status_code == 303
    assert _count(db) == 1
    assert len([a for a in _audit(db) if a.action == "check"]) == 1


def test_a_check_without_csrf_is_refused(ward):
    client, _, db = ward
    sign_in(client, "rn-ada")
    _, form_token = _check_page(client)
    r = client.post(
        "/patients/DEMO-31/check",
        data={"form_token": form_token, "time": "2026-12-01T10:05", "nirs:L": "64"},
    )
    assert r.status_code == 403
    assert "nothing was recorded" in r.text
    assert _count(db) == 0


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        # findings.py ranges: a saturation is 0-100 %; capillary refill 0-20 s (slips).
        ({"nirs:L": "120"}, "nirs must be 0-100 %, got 120"),
        ({"refill:R": "abc"}, "refill must be a number 0-20, got 'abc'"),
        (
            {"pulse:R-DPA": "faint"},
            "pulse value 'faint' is not allowed; use one of palpable, doppler, absent",
        ),
        ({"pain:": "4.5"}, "pain must be a whole number 0-10, got 4.5"),
        ({"time": "2026-12-01T10:30", "nirs:L": "60"}, "is in the future"),
        ({"time": "2026-12-01", "nirs:L": "60"}, "has no time of day"),
        ({"time": "yesterday", "nirs:L": "60"}, "is not an ISO 8601 time"),
        ({"by": "someone-else", "nirs:L": "60"}, "'by' is not a check item for DEMO-31"),
        ({}, "fill in at least one finding"),
    ],
)
def test_bad_check_is_one_clear_message_and_nothing_stored(ward, fields, message):
    client, _, db = ward
    sign_in(client, "rn-ada")
    token, form_token = _check_page(client)
    data = {"csrf": token, "form_token": form_token, "time": "2026-12-01T10:05", **fields}
    r = client.post("/patients/DEMO-31/check", data=data)
    assert r.status_code == 400
    assert "Nothing was recorded" in r.text
    assert message in htmllib.unescape(r.text)
    assert _count(db) == 0


def test_the_board_shows_an_overdue_check_at_the_right_minute(ward):
    client, clock, _ = ward
    sign_in(client, "rn-ada")
    # DEMO-32's device went in at 10:00: first check due 10:15 (every 15 min), 5 min grace.
    clock.at = local("2026-12-01T10:20")
    bed2 = client.get("/board").text.split('id="bed-2"')[1].split("</li>")[0]
    assert "overdue" not in bed2.lower().replace("⚑ overdue · ⚠ alert", "")
    assert "10:30 (+00:00)" in bed2 and "in 10 min" in bed2
    clock.at = local("2026-12-01T10:21")
    bed2 = client.get("/board").text.split('id="bed-2"')[1].split("</li>")[0]
    assert "1 overdue" in bed2 and "first due 10:15 (+00:00), 6 min late" in bed2


def test_a_partial_check_shows_its_alert_and_leaves_the_rest_due(ward):
    client, clock, _ = ward
    sign_in(client, "rn-ada")
    clock.at = local("2026-12-01T10:21")
    token, form_token = _check_page(client, "DEMO-32")
    client.post(
        "/patients/DEMO-32/check",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:21",
            "calf:L": "tense",
        },
    )
    bed2 = client.get("/board").text.split('id="bed-2"')[1].split("</li>")[0]
    # A check counts only for the items it records (issue 13): one calf finding leaves the
    # rest of the 10:15 check due.
    assert "1 overdue" in bed2
    # calf-tense raises the protocol's compartment criterion: surgeon within 5 min.
    assert "Left leg" in bed2 and "L calf tense at 10:21" in bed2
    assert "Vascular surgeon and doctor in charge, immediately (within 5 min)" in bed2


# --- corrections --------------------------------------------------------------------------


def _one_check(client, value="64"):
    token, form_token = _check_page(client)
    client.post(
        "/patients/DEMO-31/check",
        data={"csrf": token, "form_token": form_token, "time": "2026-12-01T10:05", "nirs:L": value},
    )
    return token


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        ({"value": "61"}, "a correction needs a reason"),
        ({"value": "", "reason": "typo"}, "give the right value"),
        ({"value": "161", "reason": "typo"}, "nirs must be 0-100 %, got 161"),
    ],
)
def test_bad_correction_is_refused(ward, fields, message):
    client, _, db = ward
    sign_in(client, "rn-ada")
    token = _one_check(client)
    r = client.post("/entries/1/correct", data={"csrf": token, **fields})
    assert r.status_code == 400 and message in htmllib.unescape(r.text)
    assert _count(db) == 1


def test_a_correction_is_a_new_entry_with_author_and_reason(ward):
    client, _, db = ward
    sign_in(client, "rn-ada")
    _one_check(client)
    client.post("/logout", data={"csrf": csrf(client.get("/board").text)})
    token = sign_in(client, "dr-bo")
    r = client.post(
        "/entries/1/correct",
        data={"csrf": token, "value": "46", "reason": "misread the monitor"},
        follow_redirects=False,
    )
    assert r.status_code == 303
    with _store(db) as s:
        rows = s.obs.entries(UNIT_KEY, ref="DEMO-31")
    original, fix = rows
    assert (original.value, original.by, original.corrects) == ("64", "rn-ada", None)
    assert (fix.value, fix.by, fix.corrects, fix.reason) == (
        "46",
        "dr-bo",
        1,
        "misread the monitor",
    )
    assert "corrects 1: misread the monitor" in client.get("/patients/DEMO-31").text


def test_correcting_an_unknown_entry_is_404(ward):
    client, _, _ = ward
    token = sign_in(client, "rn-ada")
    assert client.get("/entries/99/correct").status_code == 404
    r = client.post("/entries/99/correct", data={"csrf": token, "value": "1", "reason": "x"})
    assert r.status_code == 404


# --- events and roles ---------------------------------------------------------------------


def _event_tokens(client, path):
    r = client.get(path)
    assert r.status_code == 200, r.text
    return csrf(r.text), FORM_TOKEN.search(r.text).group(1)  # type: ignore[union-attr]


def test_a_nurse_is_refused_a_tier_override(ward):
    client, _, db = ward
    token = sign_in(client, "rn-ada")
    assert client.get("/patients/DEMO-32/events/tier-set").status_code == 403
    before = _events(db)
    r = client.post(
        "/patients/DEMO-32/events/tier-set",
        data={"csrf": token, "time": "2026-12-01T10:08", "tier": "high", "reason": "cool foot"},
    )
    assert r.status_code == 403 and "only a physician" in r.text
    assert _events(db) == before


def test_a_physician_sets_the_tier_with_a_reason(ward):
    client, _, db = ward
    sign_in(client, "dr-bo")
    token, form_token = _event_tokens(client, "/patients/DEMO-32/events/tier-set")
    bad = client.post(
        "/patients/DEMO-32/events/tier-set",
        data={"csrf": token, "form_token": form_token, "time": "2026-12-01T10:08", "tier": "high"},
    )
    assert bad.status_code == 400 and "Reason is required" in bad.text
    r = client.post(
        "/patients/DEMO-32/events/tier-set",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:08",
            "tier": "high",
            "reason": "cool left foot",
        },
        follow_redirects=False,
    )
    assert r.status_code == 303
    bed2 = client.get("/board").text.split('id="bed-2"')[1].split("</li>")[0]
    assert "▲▲ high" in bed2
    with _store(db) as s:
        ev = [e for e in s.events(UNIT_NAME) if e.kind == "tier-set"][0]
    assert (ev.by, ev.data) == ("dr-bo", {"tier": "high", "reason": "cool left foot"})


@pytest.mark.parametrize(
    ("path", "fields", "message"),
    [
        # DEMO-32 came (with the device) at 10:00: nothing to remove at 09:00.
        (
            "/patients/DEMO-32/events/device-removed",
            {"time": "2026-12-01T09:00"},
            "DEMO-32 is not on the unit at that time",
        ),
        ("/patients/DEMO-32/events/dpc-out", {}, "DEMO-32 has no distal perfusion cannula in"),
        (
            "/patients/DEMO-32/events/dpc-in",
            {"size_fr": "big"},
            "Cannula size [Fr] must be a number",
        ),
        ("/patients/DEMO-32/events/dpc-in", {"size_fr": "40"}, "less than or equal to 12"),
        ("/patients/DEMO-32/events/device-repositioned", {}, "What changed is required"),
        (
            "/patients/DEMO-32/events/monitoring-started",
            {},
            "give the baseline NIRS of at least one leg",
        ),
        ("/patients/DEMO-32/events/discharge", {"time": "2026-12-01T11:00"}, "is in the future"),
        ("/admit", {"ref": "DEMO-33", "bed": "2", "sex": "male"}, "bed 2 is taken"),
        ("/admit", {"ref": "DEMO-31", "bed": "3", "sex": "male"}, "DEMO-31 is already on the unit"),
        ("/admit", {"bed": "3", "sex": "male"}, "Patient ref (pseudonymous) is required"),
        ("/admit", {"ref": "DEMO-33", "bed": "3", "sex": "robot"}, "'robot' is not allowed"),
    ],
)
def test_bad_event_is_one_clear_message_and_nothing_stored(ward, path, fields, message):
    client, _, db = ward
    sign_in(client, "rn-ada")
    token, form_token = _event_tokens(client, path)
    before = _events(db)
    data = {"csrf": token, "form_token": form_token, "time": "2026-12-01T10:08", **fields}
    r = client.post(path, data=data)
    assert r.status_code == 400, r.text
    assert message in htmllib.unescape(r.text)
    assert _events(db) == before


def test_unknown_patient_or_event_is_404(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    assert client.get("/patients/NOBODY").status_code == 404
    assert client.get("/patients/DEMO-31/events/teleport").status_code == 404


def test_admission_then_device_puts_the_bed_on_the_board(ward):
    client, _, db = ward
    sign_in(client, "rn-ada")
    token, form_token = _event_tokens(client, "/admit")
    client.post(
        "/admit",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:01",
            "ref": "DEMO-33",
            "bed": "3",
            "sex": "female",
        },
    )
    assert "DEMO-33" in client.get("/board").text  # listed as waiting for a device
    token, form_token = _event_tokens(client, "/patients/DEMO-33/events/device-inserted")
    r = client.post(
        "/patients/DEMO-33/events/device-inserted",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:02",
            "kind": "microaxial-pump",
            "side": "R",
            "vessel": "CFA",
            "size_fr": "14",
            "label": "inner",
        },
        follow_redirects=False,
    )
    assert r.status_code == 303
    board = client.get("/board").text
    assert 'id="bed-3"' in board and "microaxial-pump 14 Fr (inner), R CFA" in board
    # First check 15 min after insertion (10:02 + 15 = 10:17): in 7 min at 10:10.
    bed3 = board.split('id="bed-3"')[1].split("</li>")[0]
    assert "10:17 (+00:00)" in bed3 and "in 7 min" in bed3
    assert [e.by for e in _store(db).events(UNIT_NAME)][-2:] == ["rn-ada", "rn-ada"]


# --- exports, accounts, audit -------------------------------------------------------------


def test_exports_of_one_patient_are_audited(ward):
    client, _, db = ward
    sign_in(client, "rn-ada")
    _one_check(client)
    csv_text = client.get("/patients/DEMO-31/export.csv").text
    assert "DEMO-31" in csv_text and "nirs" in csv_text
    doc = json.loads(client.get("/patients/DEMO-31/export.fhir.json").text)
    assert doc["resourceType"] == "Bundle" and len(doc["entry"]) == 1
    pdf = client.get("/patients/DEMO-31/checklist.pdf")
    assert pdf.content.startswith(b"%PDF")
    assert len([a for a in _audit(db) if a.action == "export"]) == 3


def test_only_an_admin_manages_accounts(ward):
    client, _, _ = ward
    token = sign_in(client, "dr-bo")
    assert client.get("/users").status_code == 403
    assert client.get("/audit").status_code == 403
    r = client.post(
        "/users", data={"csrf": token, "username": "x1", "role": "admin", "password": "p" * 12}
    )
    assert r.status_code == 403


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        ({"username": "rn ada", "role": "nurse", "password": "p" * 12}, "is not allowed"),
        (
            {"username": "rn-eve", "role": "matron", "password": "p" * 12},
            "role 'matron' is not allowed",
        ),
        (
            {"username": "rn-eve", "role": "nurse", "password": "short"},
            "the password must be 10-200",
        ),
        (
            {"username": "rn-ada", "role": "nurse", "password": "p" * 12},
            "user 'rn-ada' exists already",
        ),
    ],
)
def test_bad_account_is_refused(ward, fields, message):
    client, _, db = ward
    token = sign_in(client, "admin-cy")
    r = client.post("/users", data={"csrf": token, **fields})
    assert r.status_code == 400 and message in htmllib.unescape(r.text)
    with _store(db) as s:
        assert len(s.users()) == 3


def test_a_disabled_account_is_signed_out_at_once(ward):
    client, _, db = ward
    from starlette.testclient import TestClient as _TC

    other = _TC(client.app)
    sign_in(other, "rn-ada")
    token = sign_in(client, "admin-cy")
    r = client.post("/users/rn-ada/disable", data={"csrf": token}, follow_redirects=False)
    assert r.status_code == 303
    assert other.get("/board", follow_redirects=False).status_code == 303
    page = other.get("/login")
    r = other.post(
        "/login",
        data={"username": "rn-ada", "password": "nurse password 1", "csrf": csrf(page.text)},
    )
    assert r.status_code == 401
    assert ("admin-cy", "user-disable") in [(a.author, a.action) for a in _audit(db)]


def test_the_audit_page_lists_what_happened(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    _one_check(client)
    client.post("/logout", data={"csrf": csrf(client.get("/board").text)})
    sign_in(client, "admin-cy")
    html = client.get("/audit").text
    assert "sign-in" in html and "check of DEMO-31 (bed 1)" in html and "rn-ada" in html


# --- every POST checks its token; slowed failures; arm devices; redirects -----------------


@pytest.mark.parametrize(
    ("path", "fields"),
    [
        ("/logout", {}),
        ("/patients/DEMO-31/check", {"time": "2026-12-01T10:05", "nirs:L": "64"}),
        ("/patients/DEMO-31/events/device-repositioned", {"time": "2026-12-01T10:05", "note": "x"}),
        ("/admit", {"time": "2026-12-01T10:05", "ref": "DEMO-40", "bed": "9", "sex": "male"}),
        ("/entries/1/correct", {"value": "1", "reason": "x"}),
        ("/users", {"username": "rn-new", "role": "nurse", "password": "p" * 12}),
        ("/users/rn-ada/disable", {}),
    ],
)
def test_every_post_without_its_token_is_refused(ward, path, fields):
    client, _, db = ward
    sign_in(client, "admin-cy")
    before = (_count(db), _events(db), len(_store(db).users()))
    r = client.post(path, data={**fields, "csrf": "forged"})
    assert r.status_code == 403 and "security token" in r.text
    assert (_count(db), _events(db), len(_store(db).users())) == before
    assert client.get("/board", follow_redirects=False).status_code == 200  # still signed in


def test_a_failed_sign_in_is_slowed(tmp_path, seeded):
    import time

    from vascplan.web.app import create_app

    db = str(tmp_path / "ward.db")
    shutil.copyfile(seeded, db)
    with TestClient(create_app(db, login_delay_s=0.4)) as client:
        page = client.get("/login")
        t = time.perf_counter()
        r = client.post(
            "/login", data={"username": "rn-ada", "password": "guess 1", "csrf": csrf(page.text)}
        )
        assert r.status_code == 401 and time.perf_counter() - t >= 0.4


def test_an_event_is_audited_with_its_author(ward):
    client, _, db = ward
    sign_in(client, "rn-ada")
    token, form_token = _event_tokens(client, "/patients/DEMO-32/events/device-repositioned")
    client.post(
        "/patients/DEMO-32/events/device-repositioned",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:05",
            "note": "pulled back 2 cm",
        },
    )
    row = [a for a in _audit(db) if a.action == "event"][0]
    assert row.author == "rn-ada" and "device-repositioned DEMO-32" in row.what


def test_an_arm_device_gets_the_arm_items(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    token, form_token = _event_tokens(client, "/admit")
    client.post(
        "/admit",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:01",
            "ref": "DEMO-34",
            "bed": "4",
            "sex": "male",
        },
    )
    token, form_token = _event_tokens(client, "/patients/DEMO-34/events/device-inserted")
    client.post(
        "/patients/DEMO-34/events/device-inserted",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:02",
            "kind": "microaxial-pump",
            "side": "R",
            "vessel": "AXA",
            "size_fr": "14",
            "label": "inner",
        },
    )
    html = client.get("/patients/DEMO-34/check").text
    # The protocol's arm items (limb: arm) for an axillary device: wrist pulses per side;
    # no leg items (calf, pedal pulses); the access site on the device's side.
    for name in ("pulse:L-RAD", "pulse:L-ULN", "pulse:R-RAD", "pulse:R-ULN", "access:R-AXA"):
        assert f'name="{name}"' in html, name
    assert 'name="calf:L"' not in html and 'name="pulse:R-DPA"' not in html
    # The hand items are recorded per arm (the protocol's records/per_side, issue 13).
    for name in ("hand-colour:L", "hand-colour:R", "finger-refill:R", "forearm:R"):
        assert f'name="{name}"' in html, name


@pytest.mark.parametrize("nxt", ["//evil.example/", "/\\evil.example/", "https://evil.example/"])
def test_sign_in_never_sends_the_browser_elsewhere(ward, nxt):
    client, _, _ = ward
    page = client.get(f"/login?next={nxt}")
    r = client.post(
        "/login",
        data={
            "username": "rn-ada",
            "password": "nurse password 1",
            "csrf": csrf(page.text),
            "next": nxt,
        },
        follow_redirects=False,
    )
    assert r.status_code == 303 and r.headers["location"] == "/board"


def test_exports_of_a_patient_not_on_the_unit_are_404(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    for suffix in ("export.csv", "export.fhir.json", "checklist.pdf"):
        assert client.get(f"/patients/NOBODY/{suffix}").status_code == 404


def test_alerts_per_limb_are_sorted_by_urgency(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    token, form_token = _check_page(client, "DEMO-32")
    client.post(
        "/patients/DEMO-32/check",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:05",
            "refill:L": "5",
            "calf:L": "tense",
            "colour:R": "normal",
        },
    )
    bed2 = client.get("/board").text.split('id="bed-2"')[1].split("</li>\n{%")[0]
    # The protocol: a tense calf -> surgeon within 5 min (compartment); refill above 3 s ->
    # doctor within 30 min (perfusion-reduced). The 5-min call comes first, both under the
    # left leg; nothing under the right leg.
    left = bed2.split("Left leg")[1]
    assert left.index("L calf tense") < left.index("L capillary refill 5 s")
    assert "Right leg" not in bed2


def test_unknown_pages_and_methods_answer_in_the_house_style(ward):
    client, _, _ = ward
    r = client.get("/nowhere")
    assert r.status_code == 404 and "no page /nowhere" in r.text and CAUTION in r.text
    assert client.get("/entries/abc/correct").status_code == 404
    r = client.delete("/board")
    assert r.status_code == 405 and "DELETE is not used on this page" in r.text
    assert r.headers["x-frame-options"] == "DENY"


def test_withdrawing_a_finding_keeps_the_original(ward):
    client, _, db = ward
    token = sign_in(client, "rn-ada")
    _one_check(client)
    r = client.post(
        "/entries/1/correct",
        data={"csrf": token, "withdraw": "on", "reason": "wrong patient"},
        follow_redirects=False,
    )
    assert r.status_code == 303
    with _store(db) as s:
        rows = s.obs.entries(UNIT_KEY, ref="DEMO-31")
        assert [(e.value, e.corrects) for e in rows] == [("64", None), ("entered-in-error", 1)]
        assert s.obs.current(UNIT_KEY, ref="DEMO-31") == []


def test_the_trend_chart_is_drawn_on_the_server(ward):
    client, _, _ = ward
    token = sign_in(client, "rn-ada")
    for when, left in (("10:00", "66"), ("10:05", "62")):
        _, form_token = _check_page(client)
        client.post(
            "/patients/DEMO-31/check",
            data={
                "csrf": token,
                "form_token": form_token,
                "time": f"2026-12-01T{when}",
                "nirs:L": left,
            },
        )
    page = client.get("/patients/DEMO-31").text
    nirs = page.split("<figcaption>Calf NIRS (%)</figcaption>")[1].split("</svg>")[0]
    assert nirs.startswith('<svg xmlns="http://www.w3.org/2000/svg"')
    # Left leg: a circle per finding (2) and one in the legend; one line joining them.
    assert nirs.count("<circle") == 3 and nirs.count("<polyline") == 1
    assert "<script" not in page.split("</head>")[1]


def test_monitoring_started_brings_the_nirs_items(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    assert 'name="nirs:L"' not in client.get("/patients/DEMO-32/check").text
    token, form_token = _event_tokens(client, "/patients/DEMO-32/events/monitoring-started")
    r = client.post(
        "/patients/DEMO-32/events/monitoring-started",
        data={
            "csrf": token,
            "form_token": form_token,
            "time": "2026-12-01T10:06",
            "nirs_L": "70",
            "nirs_R": "69",
        },
        follow_redirects=False,
    )
    assert r.status_code == 303
    # The protocol's NIRS item is asked for when NIRS is monitored (when: nirs-monitored).
    html = client.get("/patients/DEMO-32/check").text
    assert 'name="nirs:L"' in html and 'name="nirs:R"' in html


def test_the_check_form_shows_the_last_value_of_each_field(ward):
    client, _, _ = ward
    sign_in(client, "rn-ada")
    _one_check(client, "64")
    html = client.get("/patients/DEMO-31/check").text
    field = html.split('name="nirs:L"')[1].split("</div>")[0]
    assert "last: 64 at 10:05 (+00:00)" in field
    assert "last:" not in html.split('name="nirs:R"')[1].split("</div>")[0]
