"""Where the bundled reference data and invented examples live.

Both folders are package data (``vascplan/data`` and ``vascplan/examples``), found with
:func:`importlib.resources.files`, so every way of installing works alike: a wheel, an
editable install, ``pip install --prefix``, ``--user`` or ``--target``, or a plain clone on
``PYTHONPATH``. No path is worked out from ``sys.prefix``.

Assumption: the package is installed on a file system (every pip install is), where
``files("vascplan")`` is a real :class:`~pathlib.Path`. For a package imported from a zip
archive the folder is extracted once per process with :func:`importlib.resources.as_file`.
"""

from __future__ import annotations

import atexit
import contextlib
import os
from functools import cache
from importlib import resources
from pathlib import Path

PACKAGE = "vascplan"


@cache
def _package_root() -> Path:
    root = resources.files(PACKAGE)
    if isinstance(root, Path):
        return root
    # Not on a file system (a zip import): extract once and keep it for the whole process.
    stack = contextlib.ExitStack()
    atexit.register(stack.close)
    return Path(stack.enter_context(resources.as_file(root)))


def data_dir() -> Path:
    """Return the folder of bundled reference tables (``vascplan/data``).

    ``VASCPLAN_DATA`` overrides it (a folder with the same layout, for a unit that keeps
    its own tables).

    >>> (data_dir() / "anatomy" / "segments.csv").is_file()
    True
    """
    override = os.environ.get("VASCPLAN_DATA")
    if override:
        return Path(override)
    return _package_root() / "data"


def examples_dir() -> Path:
    """Return the folder of bundled invented demo cases and units (``vascplan/examples``).

    >>> (examples_dir() / "unit-demo.yaml").is_file()
    True
    """
    return _package_root() / "examples"


def fonts_dir() -> Path:
    """Return the folder of the bundled PDF fonts (``vascplan/data/fonts``).

    Not moved by ``VASCPLAN_DATA``: a unit's own tables do not carry fonts.

    >>> (fonts_dir() / "DejaVuSans.ttf").is_file()
    True
    """
    return _package_root() / "data" / "fonts"
