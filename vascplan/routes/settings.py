"""The planner's limits and weights: bundled tables, case overrides, command-line overrides.

Both tables live in ``data/access/`` (``limits.yaml``, ``weights.yaml``), one entry per
name with ``value``, ``unit`` and ``basis`` (the source, or common practice / from
memory). A case file may override any of them (``limits:``/``weights:``), and so may the
command line (``--limit NAME=VALUE``, ``--weight NAME=VALUE``); the command line wins.
An unknown name is refused with the nearest valid one.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace
from functools import cache

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean, read_document
from vascplan.paths import data_dir
from vascplan.plausibility import ascii_float, check_override

LIMITS_FILE = "limits.yaml"
WEIGHTS_FILE = "weights.yaml"


@dataclass(frozen=True)
class Setting:
    """One named number of a table, with where it comes from.

    Attributes
    ----------
    name : str
        Its name in the table (``sar_max``).
    value : float
        The number, in ``unit``.
    unit : str
        Its unit, in words.
    basis : str
        The source, or ``common practice`` / ``from memory``; ``override`` notes are
        appended when a case or the command line changed it.
    segments : tuple of str
        Segment kinds a SAR limit holds for (``RAD``, ``AXA``); empty for the others.
    label : str
        A short name outputs print beside the value (``radial``).
    cite : str
        The short source outputs print beside the value; the basis when not given.
    """

    name: str
    value: float
    unit: str
    basis: str
    segments: tuple[str, ...] = ()
    label: str = ""
    cite: str = ""


@cache
def load_table(file_name: str) -> dict[str, Setting]:
    """Read one of the bundled tables of ``data/access``.

    Parameters
    ----------
    file_name : str
        ``limits.yaml`` or ``weights.yaml``.

    Returns
    -------
    dict of str to Setting

    Raises
    ------
    InputError
        The table is missing or an entry lacks a numeric value or a basis.
    """
    path = data_dir() / "access" / file_name
    data = read_document(path)
    if not isinstance(data, dict):
        raise InputError(str(path), "", "expected a mapping of names to entries")
    out: dict[str, Setting] = {}
    for name, entry in data.items():
        if not isinstance(entry, dict) or "value" not in entry or not entry.get("basis"):
            raise InputError(str(path), str(name), "each entry needs a value and a basis")
        value = entry["value"]
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise InputError(str(path), f"{name}.value", "must be a number")
        unit = str(entry.get("unit", ""))
        segments = entry.get("segments") or ()
        if not isinstance(segments, list | tuple) or not all(isinstance(s, str)
                                                             for s in segments):
            raise InputError(str(path), f"{name}.segments", "must be a list of segment kinds")
        basis = str(entry["basis"])
        out[str(name)] = Setting(str(name), float(value), unit, basis, tuple(segments),
                                 str(entry.get("label", "")), str(entry.get("cite") or basis))
    return out


def parse_assignments(pairs: Iterable[str], option: str) -> dict[str, float]:
    """Parse ``NAME=VALUE`` strings from the command line.

    Parameters
    ----------
    pairs : iterable of str
        Each ``NAME=VALUE``.
    option : str
        The option's name for the error line (``--weight``).

    Raises
    ------
    InputError
        A pair without ``=`` or a value that is not a finite number.

    Examples
    --------
    >>> parse_assignments(["crossover=2.5"], "--weight")
    {'crossover': 2.5}
    """
    out: dict[str, float] = {}
    for pair in pairs:
        name, sep, raw = pair.partition("=")
        name = name.strip()
        if not sep or not name:
            example = "sar_max=1.0" if option == "--limit" else "crossover=2.5"
            raise InputError(option, pair, f"expected NAME=VALUE, for example {example}")
        try:
            value = ascii_float(raw)  # no 6_4, no Arabic-Indic digits (issue 18)
        except ValueError:
            raise InputError(option, name, f"value must be a number (got {raw!r})") from None
        if not math.isfinite(value):
            raise InputError(option, name, f"value must be a finite number (got {raw!r})")
        out[name] = value
    return out


def resolve(
    table: Mapping[str, Setting],
    layers: Iterable[tuple[str, str, Mapping[str, float] | None]],
) -> dict[str, Setting]:
    """Apply override layers, in order, to a table.

    Parameters
    ----------
    table : mapping of str to Setting
        The bundled defaults.
    layers : iterable of (source, field, overrides)
        ``source`` names the file or option for an error line, ``field`` the field
        inside it (``weights``); ``overrides`` maps names to values or is None.

    Returns
    -------
    dict of str to Setting
        A new table; overridden entries say so in their basis.

    Raises
    ------
    InputError
        An unknown name (with did-you-mean) or a negative value.

    Examples
    --------
    >>> t = {"a": Setting("a", 1.0, "points", "common practice")}
    >>> resolve(t, [("case.yaml", "weights", {"a": 2})])["a"].value
    2.0
    """
    out = dict(table)
    for source, field, overrides in layers:
        if not overrides:
            continue
        for name, value in overrides.items():
            where = f"{field}.{name}" if field else name
            if name not in table:
                raise InputError(
                    source,
                    where,
                    f"unknown name{did_you_mean(name, table)}; allowed: {', '.join(sorted(table))}",
                )
            value = float(value)
            if not math.isfinite(value) or value < 0:
                raise InputError(source, where, f"must be a number at least 0 (got {value!r})")
            kind = {"--weight": "weights", "--limit": "limits"}.get(source, field)
            if kind in ("weights", "limits"):  # plausibility range, data/access/bounds.yaml
                check_override(kind, name, value, source, where)
            old = out[name]
            default = table[name]
            basis = f"set to {value:g} by {source} (default {default.value:g}: {default.basis})"
            out[name] = replace(old, value=value, basis=basis,
                                cite=f"set to {value:g} by {source}, default {default.value:g}: "
                                     f"{default.cite}")
    return out


def values(table: Mapping[str, Setting]) -> dict[str, float]:
    """The bare numbers of a table, by name."""
    return {name: s.value for name, s in table.items()}
