"""Where the bundled reference data lives."""

from __future__ import annotations

import os
from pathlib import Path


def data_dir() -> Path:
    """Return the folder of bundled reference tables.

    ``VASCPLAN_DATA`` overrides it; otherwise the ``data/`` folder of the source tree
    (the package is installed in editable mode, see README).
    """
    override = os.environ.get("VASCPLAN_DATA")
    if override:
        return Path(override)
    return Path(__file__).resolve().parent.parent / "data"


def examples_dir() -> Path:
    """Return the folder of bundled invented demo cases."""
    return Path(__file__).resolve().parent.parent / "examples"
