"""The unit board at scale: 40 beds, 200,000 findings in the store.

Run: ``python tests/bench/bench_board.py`` (or ``pytest tests/bench/bench_board.py -s``).
``VASCPLAN_BENCH_FINDINGS`` sets the store's size (default 200,000).

The store is the invented, seeded record of :func:`tests.bench.bench_store.generate_store`
(40 beds always occupied, a ten-item check every 2 hours), its unit file imported as events
with ``vascplan unit import``'s function. Measured, each against the same floor measured in
the same run: rendering the board's template with the board's data already in memory (what
no server can avoid):

- ``GET /board`` through the application (session check, events replayed into the unit,
  risk, schedule and review of 40 beds from the store, the template), median of repeats;
- ``POST /patients/REF/check`` of one check (CSRF, validation, the store's add path, the
  audit row), median of repeats.
"""

from __future__ import annotations

import os
import re
import statistics
import sys
import tempfile
import time
import warnings
from datetime import timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
FINDINGS = int(os.environ.get("VASCPLAN_BENCH_FINDINGS", "200000"))
REPEATS = 7


def run() -> dict[str, float]:
    sys.path.insert(0, str(ROOT))
    from tests.bench.bench_store import UNIT_NAME, generate_store
    from tests.ward_fixtures import CHEAP_ARGON2, Clock
    from vascplan.app import accounts
    from vascplan.app.events import import_unit_file
    from vascplan.app.ward import board
    from vascplan.ward.store import open_ward
    from vascplan.web.app import create_app
    from vascplan.web.common import CAUTION, STATUS_TEXT, TEMPLATES, TIER_MARK

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        from starlette.testclient import TestClient

    out: dict[str, float] = {"findings": FINDINGS}
    with tempfile.TemporaryDirectory() as tmp:
        t = time.perf_counter()
        unit_path, db, last = generate_store(Path(tmp), FINDINGS)
        out["generate_s"] = time.perf_counter() - t
        accounts.HASHER_OPTIONS.update(CHEAP_ARGON2)
        with open_ward(str(db)) as store:
            import_unit_file(store, unit_path, author="bench", now=last)
            accounts.add_user(store, "rn-bench", "nurse", "bench password", by="b", now=last)
            data = board(store, UNIT_NAME, last)
        clock = Clock(last + timedelta(minutes=5))
        app = create_app(str(db), clock=clock, login_delay_s=0.0)
        ctx = {
            "caution": CAUTION,
            "user": None,
            "csrf": "x" * 43,
            "tier_mark": TIER_MARK,
            "status_text": STATUS_TEXT,
            "title": "Board",
            "board": data,
            "refresh_s": 30,
            "due_soon_min": 15,
            "request": None,
        }
        template = TEMPLATES.get_template("board.html")
        floors = []
        for _ in range(REPEATS * 3):
            t = time.perf_counter()
            template.render(ctx)
            floors.append(time.perf_counter() - t)
        out["floor_s"] = statistics.median(floors)
        out["beds"] = len(data.rows)
        with TestClient(app) as client:
            page = client.get("/login")
            token = re.search(r'name="csrf" value="([^"]+)"', page.text).group(1)  # type: ignore[union-attr]
            client.post(
                "/login", data={"username": "rn-bench", "password": "bench password", "csrf": token}
            )
            times = []
            for _ in range(REPEATS):
                t = time.perf_counter()
                r = client.get("/board")
                times.append(time.perf_counter() - t)
                assert r.status_code == 200 and 'id="bed-40"' in r.text
            out["board_s"] = statistics.median(times)
            ref = data.rows[0].ref
            adds = []
            for i in range(REPEATS):
                form = client.get(f"/patients/{ref}/check").text
                csrf = re.search(r'name="csrf" value="([^"]+)"', form).group(1)  # type: ignore[union-attr]
                ft = re.search(r'name="form_token" value="([^"]+)"', form).group(1)  # type: ignore[union-attr]
                when = (last + timedelta(minutes=1 + i)).astimezone(data.at.tzinfo)
                t = time.perf_counter()
                r = client.post(
                    f"/patients/{ref}/check",
                    data={
                        "csrf": csrf,
                        "form_token": ft,
                        "time": when.strftime("%Y-%m-%dT%H:%M"),
                        "nirs:L": "64",
                    },
                    follow_redirects=False,
                )
                adds.append(time.perf_counter() - t)
                assert r.status_code == 303, r.text
            out["check_s"] = statistics.median(adds)
    return out


def report(r: dict[str, float]) -> str:
    return "\n".join(
        [
            f"board of {int(r['beds'])} beds, {int(r['findings'])} findings in the store "
            f"(generated in {r['generate_s']:.0f} s):",
            f"  floor: the board template from data in memory {r['floor_s'] * 1e3:8.1f} ms",
            f"  GET /board (median of {REPEATS})               {r['board_s'] * 1e3:8.1f} ms"
            f"  {r['board_s'] / r['floor_s']:6.1f}x the floor",
            f"  POST one check (median of {REPEATS})           {r['check_s'] * 1e3:8.1f} ms"
            f"  {r['check_s'] / r['floor_s']:6.1f}x the floor",
        ]
    )


def test_bench_board() -> None:
    r = run()
    print("\n" + report(r))
    assert r["board_s"] > r["floor_s"] > 0


if __name__ == "__main__":
    print(report(run()))
