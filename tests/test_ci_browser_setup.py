"""The CI browser script .ci/browser-setup: fails soft, so that the browser tests skip."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _run(path: str) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "PATH": path, "CI": "false"}
    return subprocess.run(
        [shutil.which("bash") or "/bin/bash", str(ROOT / ".ci" / "browser-setup")],
        capture_output=True,
        text=True,
        env=env,
        timeout=60,
        check=False,
    )


def test_without_a_browser_it_says_so_and_succeeds(tmp_path):
    r = _run(str(tmp_path))  # a PATH with no chromium, no apt-get: nothing to install with
    assert r.returncode == 0
    assert r.stderr.strip() == (
        "browser-setup: chromium, chromedriver or pdftoppm missing; the tests that need them "
        "will be skipped"
    )


def test_with_a_browser_it_finds_it(tmp_path):
    for name in ("chromium", "chromedriver", "pdftoppm"):
        fake = tmp_path / name
        fake.write_text("#!/bin/sh\n")
        fake.chmod(0o755)
    r = _run(str(tmp_path))
    assert r.returncode == 0
    assert r.stderr.strip() == "browser-setup: chromium, chromedriver and pdftoppm found"


def test_ci_run_calls_it():
    assert ".ci/browser-setup" in (ROOT / ".ci" / "run").read_text(encoding="utf-8")
