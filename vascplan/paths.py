"""Where the bundled reference data and invented examples live."""

from __future__ import annotations

import os
import sys
from pathlib import Path

_SOURCE_TREE = Path(__file__).resolve().parent.parent
_INSTALLED = Path(sys.prefix) / "share" / "vascplan"


def _bundled(name: str) -> Path:
    # The source tree (a clone, or an editable install) first; else the copy that a
    # non-editable install puts under <prefix>/share/vascplan (pyproject data-files).
    here = _SOURCE_TREE / name
    if here.is_dir() or not (_INSTALLED / name).is_dir():
        return here
    return _INSTALLED / name


def data_dir() -> Path:
    """Return the folder of bundled reference tables.

    ``VASCPLAN_DATA`` overrides it; otherwise the ``data/`` folder of the source tree,
    or the installed copy under ``<prefix>/share/vascplan/data``.
    """
    override = os.environ.get("VASCPLAN_DATA")
    if override:
        return Path(override)
    return _bundled("data")


def examples_dir() -> Path:
    """Return the folder of bundled invented demo cases (source tree or installed copy)."""
    return _bundled("examples")
