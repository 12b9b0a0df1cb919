"""The one text-table helper: columns sized to content, long cells folded, and the tables
that use it (tree, risk, rota, sheath-flow) keeping their columns with a long patient ref."""

from __future__ import annotations

import pytest

from vascplan.paths import examples_dir
from vascplan.texttable import Column, display_width, fold_cell, format_table, table_lines


def test_a_small_table_exactly():
    # Written by hand: "bed" is 3 wide and right-aligned, "ref" 7 wide (DEMO-01), "tier"
    # 8 wide (standard); two spaces between columns; no trailing spaces.
    text = format_table(
        [Column("bed", "right"), Column("ref"), Column("tier")],
        [["1", "DEMO-01", "raised"], ["12", "DEMO-2", "standard"]],
    )
    assert text == ("bed  ref      tier\n  1  DEMO-01  raised\n 12  DEMO-2   standard")


def test_a_long_cell_folds_at_spaces_and_keeps_every_word():
    cols = [Column("ref"), Column("items", fold=20), Column("window")]
    items = "pulses, nirs, colour, temperature, capillary-refill"
    lines = table_lines(cols, [["DEMO-01", items, "LATE"]])
    # Hand layout at 20 columns: "pulses, nirs, colour," would be 21, so the first line
    # ends at "nirs,"; "colour, temperature," is exactly 20; "capillary-refill" (16) is
    # not cut at its hyphen.
    assert lines == [
        "ref      items                 window",
        "DEMO-01  pulses, nirs,         LATE",
        "         colour, temperature,",
        "         capillary-refill",
    ]


def test_a_word_longer_than_the_fold_is_cut():
    assert fold_cell("abcdefghij", 4) == ["abcd", "efgh", "ij"]
    assert fold_cell("two\nlines", None) == ["two", "lines"]


def test_a_long_ref_widens_its_column_for_every_row():
    cols = [Column("bed", "right"), Column("ref"), Column("tier")]
    lines = table_lines(cols, [["1", "DEMO-01", "raised"], ["2", "WARD7-PATIENT-0042", "high"]])
    words = ("tier", "raised", "high")
    starts = {line.index(word) for line, word in zip(lines, words, strict=True)}
    # "WARD7-PATIENT-0042" is 18 wide: tier starts at 3 + 2 + 18 + 2 = 25 on every line.
    assert starts == {25}


def test_widths_count_what_a_terminal_shows():
    # Polish and Cyrillic letters take one column each; a combining acute none; a CJK
    # ideograph two (Unicode Standard Annex #11, East Asian Width).
    assert display_width("Łódź") == 4
    assert display_width("Київ") == 4
    assert display_width("e\u0301") == 1
    assert display_width("病棟") == 4
    lines = table_lines([Column("unit"), Column("n", "right")], [["病棟", "1"], ["Київ", "22"]])
    assert lines == ["unit   n", "病棟   1", "Київ  22"]


def test_a_row_of_the_wrong_length_is_refused():
    with pytest.raises(ValueError, match="2 cells for 3 columns"):
        table_lines([Column("a"), Column("b"), Column("c")], [["1", "2"]])


def _unit_with_a_long_ref(tmp_path, long_ref: str):
    text = (examples_dir() / "unit-demo.yaml").read_text(encoding="utf-8")
    assert "ref: DEMO-16 " in text
    path = tmp_path / "unit-long.yaml"
    path.write_text(text.replace("ref: DEMO-16 ", f"ref: {long_ref} "), encoding="utf-8")
    for extra in (examples_dir()).glob("protocol*.yaml"):
        (tmp_path / extra.name).write_text(extra.read_text(encoding="utf-8"), encoding="utf-8")
    return path


def _column_starts(lines: list[str], word: str) -> set[int]:
    return {line.index(word) for line in lines if word in line}


def test_risk_table_keeps_its_columns_with_a_long_ref(tmp_path):
    from vascplan.surveillance.render import risk_table
    from vascplan.surveillance.service import risk_for_unit

    long_ref = "WARD7-PATIENT-0042"  # 18 characters, over the old 10-wide column
    unit, assessments, at = risk_for_unit(
        _unit_with_a_long_ref(tmp_path, long_ref), "2026-12-02T13:00"
    )
    table = risk_table(assessments, at, unit.unit.name).splitlines()
    head = next(i for i, line in enumerate(table) if line.lstrip().startswith("bed "))
    rows = table[head : head + 1 + len(assessments)]
    assert any(long_ref in r for r in rows)
    # The tier, RR and DPC columns start at the same place on the header and every row.
    tier_at = rows[0].index("tier")
    tiers = {a.tier for a in assessments}
    for row in rows[1:]:
        assert any(row[tier_at:].startswith(t) for t in tiers), row
    rr_end = rows[0].index("RR") + len("RR")
    for row, a in zip(rows[1:], assessments, strict=True):
        assert row[:rr_end].endswith(f"{a.total:.2f}"), row


def test_rota_table_keeps_its_columns_with_a_long_ref(tmp_path):
    from vascplan.surveillance.render import rota_table
    from vascplan.surveillance.service import rota_for_unit

    long_ref = "WARD7-PATIENT-0042"
    _, _, rota = rota_for_unit(_unit_with_a_long_ref(tmp_path, long_ref), "2026-12-02T07:30", 4.0)
    lines = rota_table(rota).splitlines()
    assert any(long_ref in line for line in lines)
    checked = 0
    phase_at = ref_at = None
    for line in lines:
        if line.strip().startswith("time "):
            phase_at, ref_at = line.index("phase"), line.index("ref")
        elif not line.strip():
            phase_at = ref_at = None
        elif phase_at is not None and line[2:3].isdigit():  # a check's first line
            # Under each worklist's header, the ref and the phase start where their
            # headers do, the long ref's row included.
            assert line[ref_at:].startswith(("DEMO-", long_ref)), line
            assert line[phase_at - 1] == " " and line[phase_at] != " ", line
            checked += 1
    assert checked == len(rota.checks)


def test_tree_table_folds_a_long_finding():
    from vascplan.anatomy.graph import build_tree
    from vascplan.anatomy.summary import FINDINGS_FOLD, render_tree_table, tree_summary
    from vascplan.case.load import load_case

    case_path = sorted(examples_dir().glob("case-DEMO-07*.yaml"))[0]
    summary = tree_summary(build_tree(load_case(case_path)))
    seg = next(s for s in summary["segments"] if s["id"] == "L-RAD")
    long_reason = "scar from two earlier cut-downs and a groin infection treated last year"
    seg["avoid"] = [long_reason]
    lines = render_tree_table(summary).splitlines()
    head = next(line for line in lines if line.startswith("segment"))
    at = head.index("findings")
    first = next(i for i, line in enumerate(lines) if line.startswith("L-RAD "))
    below = lines[first + 1]
    assert below[:at].strip() == ""  # the continuation line is blank left of findings
    folded = [lines[first][at:], below[at:]]
    assert all(display_width(part) <= FINDINGS_FOLD for part in folded)
    assert " ".join(folded) == f"AVOID: {long_reason}"
    # The next segment's row is unchanged in layout: its name starts under "name".
    assert lines[first + 2].index("left ulnar artery") == head.index("name")
