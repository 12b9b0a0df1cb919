"""Acute limb ischaemia categories against the reporting-standard table.

Source: Rutherford RB et al. Recommended standards for reports dealing with lower
extremity ischemia: revised version. J Vasc Surg 1997;26:517-538, table "Clinical
categories of acute limb ischemia" (as transcribed in the team's shared REFERENCES.md, seen).
"""

from __future__ import annotations

import itertools

import pytest

from vascplan.observations.ali import CATEGORIES, category_names, classify_leg, finding_table

# The standard's table, row by row: category, name, sensory loss, muscle weakness,
# arterial Doppler, venous Doppler (the standard's wording).
RUTHERFORD_1997 = [
    ("I", "Viable", "None", "None", "Audible", "Audible"),
    (
        "IIa",
        "Marginally threatened",
        "Minimal (toes) or none",
        "None",
        "(Often) inaudible",
        "Audible",
    ),
    (
        "IIb",
        "Immediately threatened",
        "More than toes, associated with rest pain",
        "Mild, moderate",
        "(Usually) inaudible",
        "Audible",
    ),
    (
        "III",
        "Irreversible",
        "Profound, anesthetic",
        "Profound, paralysis (rigor)",
        "Inaudible",
        "Inaudible",
    ),
]

# How our bedside words stand for the standard's (the mapping under test).
SENSORY = {
    "None": ["normal"],
    "Minimal (toes) or none": ["toes", "normal"],
    "More than toes, associated with rest pain": ["beyond-toes"],
    "Profound, anesthetic": ["absent"],
}
MOTOR = {
    "None": ["normal"],
    "Mild, moderate": ["weak"],
    "Profound, paralysis (rigor)": ["paralysed"],
}
DOPPLER = {
    "Audible": ["audible"],
    "(Often) inaudible": ["inaudible"],
    "(Usually) inaudible": ["inaudible"],
    "Inaudible": ["inaudible"],
}


@pytest.mark.parametrize("row", RUTHERFORD_1997, ids=[r[0] for r in RUTHERFORD_1997])
def test_each_row_of_the_table_gives_its_category(row):
    category, name, sensory, motor, arterial, venous = row
    for s, m, a, v in itertools.product(
        SENSORY[sensory], MOTOR[motor], DOPPLER[arterial], DOPPLER[venous]
    ):
        result = classify_leg(s, m, a, v)
        assert result.category == category, (s, m, a, v)
        assert result.name == name


def test_category_i_needs_an_audible_arterial_signal():
    # Row I: arterial Doppler audible; an inaudible one is at least IIa (row IIa).
    assert classify_leg("normal", "normal", "inaudible", "audible").category == "IIa"


def test_venous_signal_lost_is_category_iii():
    # Only row III has an inaudible venous signal.
    assert classify_leg("normal", "normal", "audible", "inaudible").category == "III"


def test_wording_in_data_is_the_standards():
    table = finding_table()
    words = {g.wording for g in table.values()}
    for _, _, sensory, motor, _arterial, venous in RUTHERFORD_1997:
        assert {sensory, motor, venous} <= words
    assert "(Often) inaudible" in words
    assert all("J Vasc Surg 1997;26:517" in g.source for g in table.values())
    assert category_names() == {r[0]: r[1] for r in RUTHERFORD_1997}


def test_missing_required_finding_gives_no_category():
    r = classify_leg(None, "normal", "audible", "audible")
    assert r.category is None and r.missing == ["sensation"]
    assert classify_leg("normal", "normal", "audible", None).category == "I"


def test_a_worse_finding_never_lowers_the_category():
    order = {
        "sensation": ["normal", "toes", "beyond-toes", "absent"],
        "motor": ["normal", "weak", "paralysed"],
        "arterial": ["audible", "inaudible"],
        "venous": ["audible", "inaudible"],
    }
    keys = list(order)
    for combo in itertools.product(*order.values()):
        base = CATEGORIES.index(classify_leg(*combo).category)
        for i, key in enumerate(keys):
            idx = order[key].index(combo[i])
            if idx + 1 < len(order[key]):
                worse = list(combo)
                worse[i] = order[key][idx + 1]
                assert CATEGORIES.index(classify_leg(*worse).category) >= base


def test_category_iii_on_the_venous_signal_alone_says_so():
    # Rutherford 1997 table: an inaudible venous signal belongs to category III only; the
    # other findings of III (profound sensory loss, paralysis) are absent here, which is said.
    from vascplan.observations.ali import classify_leg

    r = classify_leg("normal", "normal", "audible", "inaudible")
    assert r.category == "III"
    assert any("rests on the inaudible venous signal alone" in b for b in r.basis)
    full = classify_leg("absent", "paralysed", "inaudible", "inaudible")
    assert full.category == "III"
    assert not any("rests on" in b for b in full.basis)


def test_a_category_iii_finding_decides_even_with_others_unrecorded():
    # Rutherford 1997: III is the most severe category; a profound sensory loss or paralysis
    # places the leg there whatever the unrecorded findings are. Below III a missing finding
    # could still raise the category, so none is given.
    r = classify_leg("absent", None, None, None)
    assert r.category == "III" and r.missing == ["motor", "arterial", "venous"]
    assert classify_leg(None, "paralysed", None, None).category == "III"
    assert classify_leg("beyond-toes", "weak", None, None).category is None
