"""Load a unit file with its protocol and run risk or rota on it (what the commands call)."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

from vascplan.surveillance.protocol import Protocol, load_protocol
from vascplan.surveillance.risk import RiskAssessment, assess_patient
from vascplan.surveillance.rota import Rota, build_rota
from vascplan.surveillance.unit import Unit, load_unit, parse_local_time


def load_unit_and_protocol(path: Path) -> tuple[Unit, Protocol]:
    """The validated unit file and the protocol it names (bundled, or relative to the file)."""
    unit = load_unit(path)
    protocol = load_protocol(unit.protocol, str(path), base_dir=Path(path).parent)
    return unit, protocol


def risk_for_unit(
    path: Path, at_text: str | None, now: datetime | None = None
) -> tuple[Unit, list[RiskAssessment], datetime]:
    """Every patient's risk at ``at_text`` (ISO 8601, local to the unit; default now)."""
    unit, protocol = load_unit_and_protocol(path)
    tz = unit.unit.tz
    if at_text is None:
        at = (now or datetime.now(UTC)).astimezone(tz)
    else:
        at = parse_local_time(at_text, tz, "--at")
    return unit, [assess_patient(p, protocol, at) for p in unit.patients], at


def rota_for_unit(
    path: Path, from_text: str, hours: float, nurse: str | None = None
) -> tuple[Unit, Protocol, Rota]:
    """The rota from ``from_text`` (ISO 8601, local to the unit) for ``hours`` real hours."""
    unit, protocol = load_unit_and_protocol(path)
    start = parse_local_time(from_text, unit.unit.tz, "--from")
    end = (start.astimezone(UTC) + timedelta(hours=hours)).astimezone(unit.unit.tz)
    assumptions: list[str] = []
    for p in unit.patients:
        assumptions.extend(assess_patient(p, protocol, start).assumptions)
    return unit, protocol, build_rota(unit, protocol, start, end, nurse, assumptions=assumptions)
