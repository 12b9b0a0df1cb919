"""Two `vascplan serve` processes on one store: a session from one is good on the other (the
cookie key is shared through the store) and a check recorded through one shows on the
other's board. On SQLite always; on PostgreSQL when VASCPLAN_TEST_PG_URL names a server."""

from __future__ import annotations

import os
import re
import socket
import subprocess
import sys
import time
import warnings
from datetime import UTC, datetime, timedelta

import pytest

from tests.obs_fixtures import db_url  # noqa: F401 - fixture
from tests.ward_fixtures import LONDON, PASSWORDS, csrf, seed

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    import httpx


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _serve(db: str, port: int) -> subprocess.Popen[str]:
    env = {**os.environ, "PYTHONWARNINGS": "ignore"}
    return subprocess.Popen(
        [sys.executable, "-m", "vascplan", "serve", "--db", db, "--port", str(port)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )


def _wait(base: str, proc: subprocess.Popen[str]) -> None:
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        if proc.poll() is not None:
            pytest.fail(f"the server stopped: {proc.stderr.read() if proc.stderr else ''}")
        try:
            if httpx.get(f"{base}/health", timeout=1).json() == {"status": "ok"}:
                return
        except httpx.HTTPError:
            time.sleep(0.1)
    pytest.fail("the server did not answer /health within 30 s")


def test_a_check_through_one_server_shows_on_the_other(db_url):  # noqa: F811
    now = datetime.now(UTC)
    seed(db_url, now)
    ports = [_free_port(), _free_port()]
    procs = [_serve(db_url, p) for p in ports]
    try:
        a, b = (f"http://127.0.0.1:{p}" for p in ports)
        for base, proc in zip((a, b), procs, strict=True):
            _wait(base, proc)
        with httpx.Client(base_url=a) as one:
            page = one.get("/login")
            r = one.post(
                "/login",
                data={
                    "username": "rn-ada",
                    "password": PASSWORDS["rn-ada"][1],
                    "csrf": csrf(page.text),
                },
            )
            assert r.status_code == 303
            form = one.get("/patients/DEMO-32/check").text
            token = re.search(r'name="form_token" value="([^"]+)"', form).group(1)  # type: ignore[union-attr]
            when = (now - timedelta(minutes=1)).astimezone(LONDON)
            r = one.post(
                "/patients/DEMO-32/check",
                data={
                    "csrf": csrf(form),
                    "form_token": token,
                    "time": when.strftime("%Y-%m-%dT%H:%M"),
                    "calf:L": "soft",
                },
            )
            assert r.status_code == 303, r.text
            cookies = dict(one.cookies)
        with httpx.Client(base_url=b, cookies=cookies) as two:
            board = two.get("/board")
            assert board.status_code == 200, "the session from server A is refused by B"
            bed2 = board.text.split('id="bed-2"')[1].split("</li>")[0]
            assert f"last check {when:%H:%M}" in bed2
    finally:
        for proc in procs:
            proc.terminate()
            proc.wait(timeout=10)
