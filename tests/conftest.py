"""Shared test settings.

The invented records are fixed in December 2026; the plausibility windows (issue 18) are
measured from "now", so the suite fixes "now" (in this process and every subprocess it
starts) to keep passing in later years.
"""

from __future__ import annotations

import pytest

FIXED_NOW = "2026-12-10T00:00:00+00:00"


@pytest.fixture(autouse=True)
def _fixed_now(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("VASCPLAN_NOW", FIXED_NOW)
