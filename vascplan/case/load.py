"""Reading a case file: :func:`load_case`."""

from __future__ import annotations

import os

from vascplan.case.model import Case
from vascplan.fileio import load_model


def load_case(path: str | os.PathLike[str]) -> Case:
    """Read and validate one case file (YAML or JSON).

    Parameters
    ----------
    path : path-like
        The case file.

    Returns
    -------
    Case
        The validated case.

    Raises
    ------
    InputError
        One line naming the file, the field path and what is allowed: syntax errors
        (with the line), duplicate keys, an empty, non-UTF-8 or far too large file,
        wrong types, unknown fields or segment ids (with a did-you-mean), implausible
        diameters, stenosis outside 0-100, a lesion or stent past its segment's end,
        height outside 100-230 cm.

    Examples
    --------
    >>> from vascplan.paths import examples_dir
    >>> case = load_case(examples_dir() / "case-DEMO-07-sfa-occlusion.yaml")
    >>> case.patient.ref
    'DEMO-07'
    """
    return load_model(path, Case)
