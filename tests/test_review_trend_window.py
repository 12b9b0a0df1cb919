"""Review and trend on windowed reads, trend in one walk: the same results as before.

The old algorithms are kept in ``tests/old_review_trend.py`` only, as the reference: the
review read the unit's whole history and kept each patient's rows; the trend re-ran the
review (and its schedule) on every check's history. The expected results are theirs,
computed in the test from the same store, never copied from the new code's output.
"""

from __future__ import annotations

import sys
from datetime import datetime, timedelta
from pathlib import Path

import pytest

from tests.old_review_trend import old_patient_trend, old_review_unit
from vascplan.localtime import utc
from vascplan.observations.findings import Finding
from vascplan.observations.reads import episode_findings, pre_insertion_lookback, window_start
from vascplan.observations.review import review_unit, to_json, unit_protocol
from vascplan.observations.store import open_store
from vascplan.observations.trend import check_summaries, patient_trend
from vascplan.surveillance.unit import load_unit

ROOT = Path(__file__).resolve().parents[1]


def _compare(unit, store, at) -> int:  # type: ignore[no-untyped-def]
    """Assert old == new for the review and every patient's trend; return the onsets seen."""
    protocol = unit_protocol(unit, ROOT / "tests")
    assert to_json(review_unit(unit, store, at, protocol=protocol)) == to_json(
        old_review_unit(unit, store, at, protocol)
    )
    every = store.current(unit.unit.key, until=at)
    windowed = episode_findings(store, unit, unit.patients, at)
    seen = 0
    for p in unit.patients:
        whole = [f for f in every if f.entry.ref == p.ref]
        new = patient_trend(unit, p, protocol, windowed[p.ref], at)
        old = old_patient_trend(unit, p, protocol, whole, at)
        assert new.onsets == old.onsets, p.ref
        assert new.open_alerts == old.open_alerts, p.ref
        assert new.overdue == old.overdue, p.ref
        assert new.check_times == old.check_times, p.ref
        assert new.findings == old.findings, p.ref
        assert new.nirs_baseline == old.nirs_baseline, p.ref
        seen += len(old.onsets)
    return seen


@pytest.fixture(scope="module")
def generated(tmp_path_factory):  # type: ignore[no-untyped-def]
    sys.path.insert(0, str(ROOT))
    from tests.bench.bench_store import generate_store

    folder = tmp_path_factory.mktemp("gen")
    # 40 beds, ~60 h: patients admitted and discharged during the record.
    return generate_store(folder, 12_000)


def test_generated_store_same_review_and_trend(generated):  # type: ignore[no-untyped-def]
    unit_path, db, last = generated
    unit = load_unit(unit_path)
    with open_store(str(db)) as store:
        # Discharged patients are in the store: the window must leave them out.
        assert len({e.ref for e in store.entries(unit.unit.key)}) > len(unit.patients)
        for at in (last, last - timedelta(hours=7), last + timedelta(hours=5)):
            assert _compare(unit, store, at) > 0


def test_generated_store_nirs_fallback_same(generated, tmp_path):  # type: ignore[no-untyped-def]
    """Without a NIRS baseline in the unit file the fallback (first recorded value) is used."""
    unit_path, db, last = generated
    text = unit_path.read_text().replace("baseline: {nirs: {L: 68, R: 66}}", "baseline: {}")
    assert "nirs: {L" not in text
    (tmp_path / "unit.yaml").write_text(text)
    unit = load_unit(tmp_path / "unit.yaml")
    with open_store(str(db)) as store:
        protocol = unit_protocol(unit, ROOT / "tests")
        result = review_unit(unit, store, last, protocol=protocol)
        details = [a.detail for p in result.patients for a in p.alerts if a.rule == "nirs-fall"]
        # The generator's NIRS runs 52-78 %: some 20 % falls from a first value happen.
        assert any("first recorded value" in d for d in details)
        assert _compare(unit, store, last) > 0


UNIT_TEXT = (
    (ROOT / "tests" / "unit_minimal.yaml")
    .read_text()
    .replace(
        "baseline: {nirs: {L: 68, R: 66}, doppler: {R-DPA: present, R-PTA: present}}",
        "baseline: {}",
    )
)


def _at(text: str, unit) -> datetime:  # type: ignore[no-untyped-def]
    return datetime.fromisoformat(text).replace(tzinfo=unit.unit.tz)


def test_hand_record_corrections_and_look_back(tmp_path):  # type: ignore[no-untyped-def]
    """A hand-made record: a pre-procedure check inside the look-back, a withdrawn first
    NIRS, a corrected pulse, two findings of one item at one instant, a lost pedal
    signal, skin turning pale, another patient's rows. Old and new agree."""
    (tmp_path / "unit.yaml").write_text(UNIT_TEXT)
    unit = load_unit(tmp_path / "unit.yaml")
    rows = []

    def add(hhmm: str, item: str, site: str, value: str, ref: str = "DEMO-11", day: int = 1):
        t = _at(f"2026-12-{day:02d}T{hhmm}", unit)
        rows.append(Finding(t, 1 if ref == "DEMO-11" else 2, ref, "RN-A", item, site, value))

    # 13:00, before the 14:20 insertion (inside the 24 h look-back): the pre-procedure check.
    add("13:00", "nirs", "R", "70")
    add("13:00", "colour", "R", "normal")
    add("13:00", "pulse", "R-DPA", "palpable")
    for hhmm, nirs, dpa, colour in (
        ("14:35", "69", "doppler", "normal"),
        ("15:35", "60", "doppler", "normal"),
        ("16:35", "54", "absent", "pale"),
        ("17:35", "52", "absent", "pale"),
    ):
        add(hhmm, "nirs", "R", nirs)
        add(hhmm, "nirs", "L", "68")
        add(hhmm, "pulse", "R-DPA", dpa)
        add(hhmm, "colour", "R", colour)
        add(hhmm, "colour", "L", "normal")
        add(hhmm, "temperature", "R", "warm")
        add(hhmm, "nirs", "L", "67", ref="DEMO-99")
    with open_store(str(tmp_path / "o.db")) as store:
        ids = store.record(rows, unit=unit.unit.key, unit_name=unit.unit.name, kind="import",
                           source="test")
        key = unit.unit.key
        store.correct(ids[0], "", by="RN-B", reason="wrong leg", withdraw=True, unit=key)  # 13:00
        store.correct(ids[12], "palpable", by="RN-B", reason="re-checked", unit=key)  # 15:35 DPA
        at = _at("2026-12-01T17:50", unit)
        assert _compare(unit, store, at) >= 3
        # The withdrawn 13:00 value is not the baseline: the first recorded is 14:35's 69 %.
        (p,) = review_unit(unit, store, at, protocol=unit_protocol(unit, ROOT / "tests")).patients
        fall = next(a for a in p.alerts if a.rule == "nirs-fall")
        assert "below 69% (first recorded value at 14:35" in fall.detail  # (69-52)/69 = 25 %
        lost = next(a for a in p.alerts if a.rule == "pedal-signal-lost")
        assert "was palpable at 15:35" in lost.detail  # the corrected value, not "doppler"


def test_window_starts_a_look_back_before_insertion():
    """The window: 24 h (unit policy, data/observations/review_window.csv) before the
    insertion at 14:20 on 1 Dec, or before ``at`` when the review is earlier."""
    unit = load_unit(ROOT / "tests" / "unit_minimal.yaml")
    p = unit.patients[0]
    assert pre_insertion_lookback() == timedelta(hours=24)
    assert window_start(p, _at("2026-12-03T09:00", unit)) == utc(_at("2026-11-30T14:20", unit))
    assert window_start(p, _at("2026-12-01T10:00", unit)) == utc(_at("2026-11-30T10:00", unit))


def test_earlier_stay_under_the_same_ref_is_not_read(tmp_path):  # type: ignore[no-untyped-def]
    """Rows older than the look-back before this insertion (an earlier stay) are left out."""
    (tmp_path / "unit.yaml").write_text(UNIT_TEXT)
    unit = load_unit(tmp_path / "unit.yaml")
    old = _at("2026-11-20T10:00", unit)  # 11 days before the insertion
    new = _at("2026-12-01T15:00", unit)
    with open_store(str(tmp_path / "o.db")) as store:
        store.record(
            [
                Finding(old, 1, "DEMO-11", "RN-A", "nirs", "R", "80"),
                Finding(new, 1, "DEMO-11", "RN-A", "nirs", "R", "60"),
            ],
            unit=unit.unit.key,
            kind="import",
            source="test",
        )
        got = episode_findings(store, unit, unit.patients, _at("2026-12-01T16:00", unit))
    assert [f.value for f in got["DEMO-11"]] == ["60"]


def test_summaries_are_small_and_keep_latest_first_and_earlier_values():
    """check_summaries on rows made by hand: at each instant the latest of each item, the
    first, and the last earlier finding of each value; older repeats are dropped."""
    from vascplan.observations.store import CurrentFinding, Entry

    t0 = datetime(
        2026, 12, 1, 12, 0, tzinfo=load_unit(ROOT / "tests" / "unit_minimal.yaml").unit.tz
    )

    def cf(i: int, minutes: int, value: str) -> CurrentFinding:
        t = utc(t0 + timedelta(minutes=minutes))
        e = Entry(i, 1, "U", 1, "R", t, "", "RN", "pulse", "R-DPA", value, None, None, t)
        return CurrentFinding(e, value, None)

    rows = [cf(1, 0, "palpable"), cf(2, 60, "doppler"), cf(3, 120, "doppler"),
            cf(4, 180, "doppler"), cf(5, 240, "absent")]  # fmt: skip
    last = list(check_summaries(rows))[-1][1]
    # first (1), last palpable before (1), last doppler before (4), latest (5): 2 and 3 dropped.
    assert [f.entry.id for f in last] == [1, 4, 5]
