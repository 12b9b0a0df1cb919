"""Start-up stays light: --help, validate and tree import neither pandas nor reportlab."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "vascplan" / "examples" / "case-DEMO-07-sfa-occlusion.yaml"
HEAVY = ("pandas", "reportlab", "sqlalchemy")

PROBE = """
import sys
from vascplan.cli import cli
try:
    cli.main(args=sys.argv[1:], prog_name="vascplan", standalone_mode=False)
except SystemExit:
    pass
sys.stdout.flush()
print("LOADED=" + ",".join(m for m in {heavy!r} if m in sys.modules))
"""


@pytest.mark.parametrize(
    "args",
    [
        ["--help"],
        ["validate", str(EXAMPLE)],
        ["tree", str(EXAMPLE)],
        ["tree", "--format", "json", str(EXAMPLE)],
        ["schema"],
    ],
)
def test_light_commands_do_not_import_heavy_modules(args):
    proc = subprocess.run(
        [sys.executable, "-c", PROBE.format(heavy=HEAVY), *args],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.splitlines()[-1] == "LOADED="
