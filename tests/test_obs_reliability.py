"""A killed import leaves all or nothing; two writers at once lose nothing (both stores)."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time
from datetime import datetime, timedelta
from pathlib import Path

from tests.obs_fixtures import UNIT, db_url  # noqa: F401 - fixture
from vascplan.observations.store import SCHEMA_VERSION, open_store

ROOT = Path(__file__).resolve().parent.parent
UNIT_NAME = "cardiac-critical-care-demo"  # the unit id its file gets from its name
BIG_ROWS = 6000


def _csv(path: Path, start: datetime, rows: int, item: str = "nirs", site: str = "L") -> Path:
    lines = ["time,bed,ref,by,item,site,value"]
    for i in range(rows):
        t = (start + timedelta(minutes=i)).strftime("%Y-%m-%dT%H:%M")
        lines.append(f"{t},1,DEMO-11,RN-A,{item},{site},{50 + i % 40}")
    path.write_text("\n".join(lines) + "\n")
    return path


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


# Imports the file through the library and stops, mid-transaction, after the first chunk:
# the marker file tells the test that rows have been sent but not committed.
PAUSING_IMPORT = textwrap.dedent("""
    import sys, time
    from pathlib import Path
    from vascplan.observations.csvio import parse_csv
    from vascplan.observations.store import open_store
    from vascplan.surveillance.unit import load_unit
    db, csv_path, marker = sys.argv[1:4]
    unit = load_unit(sys.argv[4])
    findings, lines = parse_csv(csv_path, unit)
    def progress(sent):
        if sent >= 1000 and not Path(marker).exists():
            Path(marker).write_text(str(sent))
            time.sleep(60)
    with open_store(db) as store:
        store.record(findings, unit=unit.unit.key, kind="import", source=csv_path,
                     progress=progress)
""")


def _wait_for(path: Path, proc: subprocess.Popen, timeout_s: float = 20) -> None:
    end = time.monotonic() + timeout_s
    while not path.exists():
        if proc.poll() is not None:
            raise AssertionError(f"import ended before the kill point: {proc.stderr.read()}")
        if time.monotonic() > end:
            proc.kill()
            raise AssertionError("import did not reach the kill point")
        time.sleep(0.01)


def test_sigkill_mid_import_leaves_all_or_none(tmp_path, db_url):  # noqa: F811
    before = _csv(tmp_path / "before.csv", datetime(2026, 12, 1, 15, 0), 50)
    big = _csv(tmp_path / "big.csv", datetime(2026, 12, 1, 16, 0), BIG_ROWS)
    r = subprocess.run(
        [
            sys.executable,
            "-m",
            "vascplan",
            "obs",
            "import",
            str(before),
            "--unit",
            str(UNIT),
            "--db",
            db_url,
        ],
        env=_env(),
        capture_output=True,
        text=True,
        cwd=tmp_path,
    )
    assert r.returncode == 0, r.stderr
    # Killed at a known point inside the transaction, three times: nothing of it stays.
    for attempt in range(3):
        marker = tmp_path / f"marker{attempt}"
        proc = subprocess.Popen(
            [sys.executable, "-c", PAUSING_IMPORT, db_url, str(big), str(marker), str(UNIT)],
            env=_env(),
            stderr=subprocess.PIPE,
            text=True,
            cwd=tmp_path,
        )
        _wait_for(marker, proc)
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
        with open_store(db_url) as store:
            assert store.count(UNIT_NAME) == 50, f"attempt {attempt}"
            assert [e.value for e in store.entries(UNIT_NAME)][:3] == ["50", "51", "52"]
    # Killed through the real command at a moment of chance: all of it or none, never part.
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "vascplan",
            "obs",
            "import",
            str(big),
            "--unit",
            str(UNIT),
            "--db",
            db_url,
        ],
        env=_env(),
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
        cwd=tmp_path,
    )
    time.sleep(0.9)
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    with open_store(db_url) as store:
        assert store.count(UNIT_NAME) in (50, 50 + BIG_ROWS)
        # The import is still possible afterwards (unless it had landed whole).
        if store.count(UNIT_NAME) == 50:
            from vascplan.observations.csvio import parse_csv
            from vascplan.surveillance.unit import load_unit

            findings, _ = parse_csv(big, load_unit(UNIT))
            store.record(findings, unit=UNIT_NAME, kind="import", source="big.csv")
        assert store.count(UNIT_NAME) == 50 + BIG_ROWS


WRITER = textwrap.dedent("""
    import sys
    from datetime import datetime, timedelta, timezone
    from vascplan.observations.findings import make_finding
    from vascplan.observations.store import open_store
    db, site, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
    t0 = datetime(2026, 11, 25, tzinfo=timezone.utc)
    with open_store(db) as store:
        for i in range(n):
            f = make_finding(time=t0 + timedelta(minutes=i), bed=1, ref="DEMO-11", by="RN-" + site,
                             item="nirs", site=site, value=str(40 + i % 50), source="w")
            store.record([f], unit="U", kind="add", source="writer " + site)
""")


def test_two_writers_at_once_lose_nothing(tmp_path, db_url):  # noqa: F811
    n = 30
    # Both start on a store that does not exist yet: creating and migrating it races too.
    procs = [
        subprocess.Popen(
            [sys.executable, "-c", WRITER, db_url, site, str(n)],
            env=_env(),
            stderr=subprocess.PIPE,
            text=True,
            cwd=tmp_path,
        )
        for site in ("L", "R")
    ]
    a = _csv(tmp_path / "a.csv", datetime(2026, 12, 2, 0, 0), 400, site="L")
    b = _csv(tmp_path / "b.csv", datetime(2026, 12, 2, 0, 0), 400, site="R")
    imports = [
        subprocess.Popen(
            [
                sys.executable,
                "-m",
                "vascplan",
                "obs",
                "import",
                str(p),
                "--unit",
                str(UNIT),
                "--db",
                db_url,
            ],
            env=_env(),
            stderr=subprocess.PIPE,
            text=True,
            cwd=tmp_path,
        )
        for p in (a, b)
    ]
    for p in procs + imports:
        _, err = p.communicate(timeout=120)
        assert p.returncode == 0, err
    with open_store(db_url) as store:
        rows = store.entries("U")
        assert len(rows) == 2 * n
        assert {(e.site, e.time) for e in rows} == {
            (s, datetime(2026, 11, 25, tzinfo=rows[0].time.tzinfo) + timedelta(minutes=i))
            for s in ("L", "R")
            for i in range(n)
        }
        assert store.count(UNIT_NAME) == 800
        assert store.version() == SCHEMA_VERSION
