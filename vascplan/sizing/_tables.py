"""Reading the bundled sizing tables (CSV and YAML under ``data/sizing``), once each."""

from __future__ import annotations

import csv
from dataclasses import dataclass
from functools import cache

from vascplan.errors import InputError
from vascplan.fileio import read_document
from vascplan.paths import data_dir


@dataclass(frozen=True)
class ReferenceValue:
    """A default with its unit and where it comes from."""

    value: float
    unit: str
    source: str
    certainty: str

    def cite(self) -> str:
        """``source (certainty)`` for an assumption line."""
        return f"{self.source} ({self.certainty})"


@cache
def read_csv(name: str) -> tuple[dict[str, str], ...]:
    """Rows of ``data/sizing/<name>`` as dictionaries of strings."""
    path = data_dir() / "sizing" / name
    try:
        with open(path, newline="", encoding="utf-8") as fh:
            return tuple(dict(row) for row in csv.DictReader(fh))
    except FileNotFoundError:
        raise InputError(str(path), "", "reference table not found") from None


@cache
def read_values(name: str) -> dict[str, ReferenceValue]:
    """The reference values of ``data/sizing/<name>`` (YAML: value, unit, source, certainty)."""
    path = data_dir() / "sizing" / name
    data = read_document(path)
    if not isinstance(data, dict):
        raise InputError(str(path), "", "expected a mapping of named values")
    out: dict[str, ReferenceValue] = {}
    for key, entry in data.items():
        if not isinstance(entry, dict):
            raise InputError(str(path), str(key), "expected value, unit, source, certainty")
        missing = [k for k in ("value", "unit", "source", "certainty") if k not in entry]
        if missing:
            raise InputError(str(path), f"{key}.{missing[0]}", "required field is missing")
        try:
            value = float(entry["value"])
        except (TypeError, ValueError):
            raise InputError(str(path), f"{key}.value", "must be a number") from None
        out[str(key)] = ReferenceValue(
            value, str(entry["unit"]), str(entry["source"]), str(entry["certainty"])
        )
    return out


def threshold(name: str) -> tuple[float, dict[str, str]]:
    """A threshold of ``data/sizing/thresholds.csv``: its value and its row."""
    for row in read_csv("thresholds.csv"):
        if row["name"] == name:
            return float(row["value"]), row
    raise KeyError(name)
