"""Reading the bundled sizing tables (CSV and YAML under ``data/sizing``), once each."""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import cache

from vascplan.errors import InputError
from vascplan.fileio import read_document
from vascplan.paths import data_dir


class SizingValueError(ValueError):
    """A sizing input out of range or inconsistent; ``field`` names the parameter."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field


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


def input_range(name: str) -> tuple[float, float, str]:
    """Plausible range of an input of ``data/sizing/input_ranges.csv``: low, high, unit.

    These are plausibility bounds (common practice), not clinical limits: a value outside
    them is almost surely a typing error (a diameter in micrometres, a size in mm).
    """
    for row in read_csv("input_ranges.csv"):
        if row["name"] == name:
            return float(row["low"]), float(row["high"]), row["unit"]
    raise KeyError(name)


def check_range(name: str, value: float) -> float:
    """``value`` as a float when it lies in the plausible range of ``name``.

    Raises
    ------
    SizingValueError
        Not a finite number, or outside ``data/sizing/input_ranges.csv``; the message
        names the parameter and the allowed range.
    """
    low, high, unit = input_range(name)
    number = float(value)
    if not (low <= number <= high):  # also refuses nan
        raise SizingValueError(
            name, f"{name} must be between {low:g} and {high:g} {unit}, got {value:g}"
        )
    return number


def positive(name: str, value: float) -> float:
    """``value`` as a float, or ValueError naming ``name`` unless it is finite and above 0.

    >>> positive("length_cm", 15)
    15.0
    """
    value = float(value)
    if not math.isfinite(value) or value <= 0.0:
        raise ValueError(f"{name} must be a positive number, got {value}")
    return value
