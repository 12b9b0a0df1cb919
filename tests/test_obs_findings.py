"""The finding vocabulary: items, sites and values exactly as the issue and README give them."""

from __future__ import annotations

from datetime import UTC, datetime

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.errors import InputError
from vascplan.observations.findings import ITEMS, check_site, check_value, make_finding, side_of

# The vocabulary of issue 7 (item -> allowed words); numbers are checked separately.
ISSUE_WORDS = {
    "pulse": {"palpable", "doppler", "absent"},
    "venous": {"present", "absent"},
    "sensation": {"normal", "toes", "beyond-toes", "absent"},
    "motor": {"normal", "weak", "paralysed"},
    "calf": {"soft", "tense"},
    "access": {"dry", "ooze", "bleeding", "haematoma"},
    "dpc": {"ok", "kinked", "no-flow", "disconnected"},
    # issue 13: device and circuit items, and the hand below an arm device
    "circuit-flow": {"ok", "low", "none"},
    "position": {"unchanged", "moved"},
    "hand-colour": {"normal", "pale", "mottled", "blue"},
    "hand-temperature": {"warm", "cool", "cold"},
    "hand-sensation": {"normal", "fingers", "beyond-fingers", "absent"},
    "hand-motor": {"normal", "weak", "paralysed"},
    "forearm": {"soft", "tense"},
}


def test_vocabulary_matches_the_issue():
    assert set(ITEMS) == {
        "pulse",
        "venous",
        "nirs",
        "refill",
        "colour",
        "temperature",
        "sensation",
        "motor",
        "calf",
        "pain",
        "access",
        "dpc",
        "pressure",
        "circuit-flow",
        "position",
        "hand-colour",
        "hand-temperature",
        "finger-refill",
        "hand-sensation",
        "hand-motor",
        "forearm",
    }
    for item, words in ISSUE_WORDS.items():
        assert set(ITEMS[item].values) == words
    for item in ("nirs", "refill", "pain", "pressure", "finger-refill"):
        assert ITEMS[item].numeric


@pytest.mark.parametrize(
    ("item", "site", "ok"),
    [
        ("pulse", "R-DPA", True),
        ("pulse", "l-pta", True),
        ("pulse", "R", False),
        ("pulse", "R-XYZ", False),
        ("venous", "L", True),
        ("venous", "R-CFA", True),
        ("nirs", "L", True),
        ("nirs", "R-DPA", False),
        ("pressure", "L-ARM", True),
        ("pressure", "R-PTA", True),
        ("pressure", "L", False),
        ("pain", "", True),
        ("pain", "R", True),
        ("dpc", "", True),
        ("sensation", "", False),
    ],
)
def test_sites(item, site, ok):
    if ok:
        assert check_site(item, site) == site.upper()
    else:
        with pytest.raises(ValueError):
            check_site(item, site)


def test_error_lines_name_file_field_and_allowed():
    def msg(**kw):
        base = dict(
            time=datetime(2026, 12, 1, tzinfo=UTC),
            bed=1,
            ref="DEMO-11",
            by="RN-A",
            item="nirs",
            site="L",
            value="60",
            source="f.csv",
            where="line 4: ",
        )
        base.update(kw)
        with pytest.raises(InputError) as exc:
            make_finding(**base)
        return str(exc.value)

    assert msg(item="nirss") == (
        "f.csv: line 4: item: unknown item 'nirss' (did you mean 'nirs'?); items are "
        "pulse, venous, nirs, refill, colour, temperature, sensation, motor, calf, "
        "pain, access, dpc, circuit-flow, position, hand-colour, hand-temperature, "
        "finger-refill, hand-sensation, hand-motor, forearm, pressure"
    )
    assert msg(value="101") == "f.csv: line 4: value: nirs must be 0-100 %, got 101"
    assert msg(value="abc") == "f.csv: line 4: value: nirs must be a number 0-100, got 'abc'"
    assert (
        msg(item="pain", site="", value="3.5")
        == "f.csv: line 4: value: pain must be a whole number 0-10, got 3.5"
    )
    assert msg(item="pulse", site="R-DPA", value="weak") == (
        "f.csv: line 4: value: pulse value 'weak' is not allowed; "
        "use one of palpable, doppler, absent"
    )
    assert msg(site="X") == "f.csv: line 4: site: site 'X' is not allowed for nirs; use L or R"
    assert msg(by="") == (
        "f.csv: line 4: by: who made the check is required (a staff id, at most 60 characters)"
    )


@settings(max_examples=60, deadline=None)
@given(st.sampled_from(sorted(ITEMS)), st.text(max_size=12))
def test_any_value_is_accepted_canonically_or_refused_with_valueerror(item, text):
    try:
        out = check_value(item, text)
    except ValueError:
        return
    assert check_value(item, out) == out  # canonical form is stable


def test_side_of():
    assert [side_of(s) for s in ("L-PTA", "R", "R-ARM", "")] == ["L", "R", None, None]


# --- Sites where the issue is silent: liberal, documented in the README and the template ----


@pytest.mark.parametrize(
    "item, site, stored",
    [
        ("access", "R-CFA", "R-CFA"),  # the puncture is at an artery
        ("access", "l-axa", "L-AXA"),  # axillary access
        ("access", "", ""),
        ("dpc", "R-SFA", "R-SFA"),  # a distal perfusion cannula sits in the SFA
        ("dpc", "R", "R"),
        ("colour", "left", "L"),
        ("temperature", "Right", "R"),
        ("pain", "LEFT", "L"),
        ("pulse", "R-RAD", "R-RAD"),
        ("pressure", "L-BRA", "L-BRA"),
    ],
)
def test_liberal_sites(item, site, stored):
    assert check_site(item, site) == stored


@pytest.mark.parametrize("item", ["colour", "temperature", "sensation", "motor", "calf"])
def test_leg_findings_need_a_leg(item):
    # A leg finding without a side cannot be compared with the other leg or classified.
    with pytest.raises(ValueError, match=f"site empty is not allowed for {item}; use L or R"):
        check_site(item, "")


def test_artery_ids_are_the_anatomy_sided_segment_ids():
    import csv

    from vascplan.observations.findings import ARTERIES
    from vascplan.paths import data_dir

    with open(data_dir() / "anatomy" / "segments.csv", newline="", encoding="utf-8") as fh:
        sided = {r["id"][2:] for r in csv.DictReader(fh) if r["side"] in ("L", "R")}
    assert set(ARTERIES) == sided


def test_pain_and_pressure_range_errors_read_plainly():
    from vascplan.observations.findings import check_value

    with pytest.raises(ValueError) as exc:
        check_value("pain", "11")
    assert str(exc.value) == "pain must be 0-10, got 11"
    with pytest.raises(ValueError) as exc:
        check_value("pressure", "350")
    assert str(exc.value) == "pressure must be 0-300 mmHg, got 350"
