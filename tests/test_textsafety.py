"""Hostile text made harmless in every output (issue 18), and the shared checks themselves."""

from __future__ import annotations

import csv
import io
import os
import stat
from pathlib import Path

import pytest
from click.testing import CliRunner

from tests.reports_helpers import pdf_text
from vascplan.cli import cli
from vascplan.errors import InputError
from vascplan.fileio import atomic_write_text
from vascplan.paths import examples_dir
from vascplan.textsafety import (
    FREE_TEXT_MAX,
    check_document,
    check_identifier,
    describe,
    ical_text,
    neutralise_cell,
    ref_file_part,
    safe_terminal,
)

UNIT = (Path(__file__).parent / "unit_minimal.yaml").read_text()
CASE = (examples_dir() / "case-DEMO-07-sfa-occlusion.yaml").read_text()


def run(*args: object):
    return CliRunner().invoke(cli, [str(a) for a in args])


# --- the control-character rule ------------------------------------------------------


@pytest.mark.parametrize(
    ("ch", "name"),
    [
        ("\x00", "U+0000 (NUL)"),
        ("\x1b", "U+001B (ESC)"),
        ("\x7f", "U+007F (DEL)"),
        ("\x9b", "U+009B (control character)"),  # C1 CSI: a terminal escape on its own
        ("\u202a", "U+202A (LEFT-TO-RIGHT EMBEDDING)"),
        ("\u202e", "U+202E (RIGHT-TO-LEFT OVERRIDE)"),
        ("\u2069", "U+2069 (POP DIRECTIONAL ISOLATE)"),
        ("\u2028", "U+2028 (LINE SEPARATOR)"),
    ],
)
def test_every_kind_of_control_refused_in_an_identifier(ch, name):
    # The classes of Unicode TR9 (bidi embeddings, overrides, isolates) and C0/C1 (ISO 6429).
    with pytest.raises(InputError) as exc:
        check_identifier(f"AB{ch}C", "--by")
    assert str(exc.value) == (
        f"--by: holds the control character {name} at character 3; use printable text only"
    )
    assert describe(ch) == name


def test_printable_unicode_is_an_identifier():
    for ok in ("DEMO-07", "Zoë Ø'Brien", "\u0639\u0644\u064a", "=1+1", "RN A"):
        assert check_identifier(ok, "--by") == ok


def test_check_document_walks_lists_and_keys():
    with pytest.raises(InputError) as exc:
        check_document("u.yaml", {"staff": [{"nurse": "ok"}, {"nurse": "b\x00d"}]})
    assert str(exc.value) == (
        "u.yaml: staff.1.nurse: holds the control character U+0000 (NUL) at character 2; "
        "use printable text only"
    )
    check_document("u.yaml", {"note": "line one\nline two\tend"})  # free text: allowed


# --- terminal, calendar, spreadsheet --------------------------------------------------


def test_safe_terminal_shows_controls_and_keeps_lines():
    assert safe_terminal("a\x00b\x1b[31mc\u202ed\n\te") == "a\\u0000b\\u001b[31mc\\u202ed\n\te"


def test_ical_text_drops_controls():
    assert ical_text("bed 1\x00 DEMO\x1b-07\u202e\x85") == "bed 1 DEMO-07"


@pytest.mark.parametrize(
    ("cell", "out"),
    [
        ("=1+1", "'=1+1"),
        ("+1+1", "'+1+1"),
        ("-1+1", "'-1+1"),
        ("@SUM(A1)", "'@SUM(A1)"),
        ("\t=1", "'\t=1"),
        ("\r=1", "\\u000d=1"),  # a carriage return is shown, not passed on
        ("a\x00b", "a\\u0000b"),
        (" =1+1", "' =1+1"),  # a reader that strips spaces would see a formula
        ("\u00a0=1", "'\u00a0=1"),
        ("-3", "-3"),  # a plain number stays a number
        ("+1.5", "+1.5"),
        ("DEMO-07", "DEMO-07"),
        (64, 64),
        (None, None),
    ],
)
def test_neutralise_cell(cell, out):
    # OWASP CSV injection: cells starting = + - @ tab CR are prefixed with a quote.
    assert neutralise_cell(cell) == out


def _hostile_unit(tmp_path: Path) -> Path:
    text = UNIT.replace("ref: DEMO-11", 'ref: "=HYPERLINK(1)"').replace(
        "nurse: RN-A", 'nurse: " @SUM(A1)"'  # the unit file strips the space
    )
    p = tmp_path / "unit.yaml"
    p.write_text(text)
    return p


def test_rota_csv_cells_neutralised(tmp_path):
    unit = _hostile_unit(tmp_path)
    res = run("rota", unit, "--from", "2026-12-02T07:30", "--hours", "2", "--format", "csv")
    assert res.exit_code == 0, res.output
    rows = list(csv.DictReader(io.StringIO(res.output)))
    assert rows
    assert {r["ref"] for r in rows} == {"'=HYPERLINK(1)"}
    assert {r["nurse"] for r in rows} == {"'@SUM(A1)"}


def test_rota_ics_has_no_control_character(tmp_path):
    unit = _hostile_unit(tmp_path)
    res = run("rota", unit, "--from", "2026-12-02T07:30", "--hours", "2", "--format", "ics")
    assert res.exit_code == 0, res.output
    body = res.output.replace("\r", "").replace("\n", "")
    assert not [c for c in body if ord(c) < 32 or 0x7F <= ord(c) <= 0x9F]


# --- file names and modes -------------------------------------------------------------


def test_refs_that_would_collide_get_distinct_stable_names():
    names = {ref: ref_file_part(ref) for ref in ("=1+1", "1_1", "1/1")}
    assert len({n for n, _ in names.values()}) == 3
    assert names["1_1"] == ("1_1", False)
    assert names["1/1"][1] and names["=1+1"][1]
    assert ref_file_part("1/1") == names["1/1"]  # stable across runs


def test_two_reports_for_colliding_refs_both_kept(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    written = []
    for i, ref in enumerate(("1_1", "1/1", "=1+1")):
        p = tmp_path / f"c{i}.yaml"
        p.write_text(CASE.replace("ref: DEMO-07", f'ref: "{ref}"'))
        res = run("report", p)
        assert res.exit_code == 0, res.output
        written.append(Path(res.output.splitlines()[0].removeprefix("wrote ")).name)
        if ref != "1_1":
            assert "is not a safe file name" in res.output
    assert len(set(written)) == 3
    assert sorted(x.name for x in tmp_path.glob("*.pdf")) == sorted(written)


@pytest.mark.parametrize(("umask", "mode"), [(0o077, 0o600), (0o022, 0o640), (0o002, 0o640)])
def test_outputs_honour_the_umask(tmp_path, umask, mode):
    old = os.umask(umask)
    try:
        p = atomic_write_text(tmp_path / "x.txt", "x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(p.stat().st_mode) == mode


# --- free text at its maximum in a PDF ------------------------------------------------


def test_case_report_with_the_longest_avoid_reason(tmp_path):
    words = ("fistula planned in the left arm " * 100)[: FREE_TEXT_MAX - 4] + " END"
    assert len(words) == FREE_TEXT_MAX
    p = tmp_path / "c.yaml"
    p.write_text(CASE.replace("reason: dialysis fistula planned", f'reason: "{words}"'))
    res = run("report", p, "-o", tmp_path / "r.pdf")
    assert res.exit_code == 0, res.output
    text = pdf_text((tmp_path / "r.pdf").read_bytes())
    assert "END" in text  # the whole reason is printed, wrapped, not cut


def test_case_report_with_an_unbroken_longest_reason(tmp_path):
    p = tmp_path / "c.yaml"
    p.write_text(
        CASE.replace("reason: dialysis fistula planned", f'reason: "{"x" * FREE_TEXT_MAX}"')
    )
    res = run("report", p, "-o", tmp_path / "r.pdf")
    assert res.exit_code == 0, res.output
    assert (tmp_path / "r.pdf").read_bytes().startswith(b"%PDF")


def test_checklist_with_the_longest_event_note(tmp_path):
    # A unit event's note is free text of at most 300 characters (unit file); with markup
    # characters in it, at the maximum, the checklist still prints it whole.
    note = ("calf tense <b>&amp; pale " * 20)[:296] + " END"
    assert len(note) == 300
    p = tmp_path / "unit.yaml"
    p.write_text(
        UNIT.rstrip("\n")
        + f'\n    events: [{{at: 2026-12-02T06:00, tier: raised, note: "{note}"}}]\n'
    )
    res = run("checklist", p, "--shift", "day", "--date", "2026-12-02", "-o", tmp_path / "c.pdf")
    assert res.exit_code == 0, res.output
    assert "END" in pdf_text((tmp_path / "c.pdf").read_bytes())


def test_an_event_note_over_its_maximum_is_one_line(tmp_path):
    p = tmp_path / "unit.yaml"
    p.write_text(
        UNIT.rstrip("\n")
        + f'\n    events: [{{at: 2026-12-02T06:00, tier: raised, note: "{"x" * 301}"}}]\n'
    )
    res = run("risk", p, "--at", "2026-12-02T08:00")
    assert res.exit_code == 2
    assert res.output == (
        f"error: {p}: patients.0.events.0.note: String should have at most 300 characters "
        "(got 301 characters)\n"
    )


# --- properties -----------------------------------------------------------------------

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_CONTROLS = {chr(c) for c in range(0x20)} | {chr(c) for c in range(0x7F, 0xA0)}
_CONTROLS |= {"\u2028", "\u2029"} | {chr(c) for c in range(0x202A, 0x202F)}
_CONTROLS |= {chr(c) for c in range(0x2066, 0x206A)}
_TEXT = st.text(
    alphabet=st.one_of(st.sampled_from(sorted(_CONTROLS)), st.characters()), max_size=30
)


@settings(max_examples=300, deadline=None)
@given(_TEXT)
def test_safe_terminal_leaves_no_control_but_newline_and_tab(text):
    out = safe_terminal(text)
    assert not (set(out) & (_CONTROLS - {"\n", "\t"}))


@settings(max_examples=300, deadline=None)
@given(_TEXT)
def test_ical_text_leaves_no_control_but_newline_and_tab(text):
    assert not (set(ical_text(text)) & (_CONTROLS - {"\n", "\t"}))


@settings(max_examples=300, deadline=None)
@given(_TEXT)
def test_a_neutralised_cell_never_starts_a_formula(text):
    out = neutralise_cell(text)
    probe = out.lstrip(" \u00a0\t\r\n")
    assert not (set(out) & (_CONTROLS - {"\n", "\t"}))
    starts_formula = probe[:1] in ("=", "+", "-", "@") or out[:1] == "\t"
    if starts_formula:  # only a plain number may start with a sign
        float(out)


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=20), st.text(max_size=20))
def test_different_refs_never_share_a_file_name(a, b):
    if a != b:
        assert ref_file_part(a)[0] != ref_file_part(b)[0]


def test_patient_outputs_never_more_open_than_0640(tmp_path):
    old = os.umask(0o000)
    try:
        assert run("tree", examples_dir() / "case-DEMO-07-sfa-occlusion.yaml", "--out",
                   tmp_path / "t.txt").exit_code == 0  # fmt: skip
        assert run("schema", "--out", tmp_path / "s.json").exit_code == 0
    finally:
        os.umask(old)
    assert stat.S_IMODE((tmp_path / "t.txt").stat().st_mode) == 0o640  # a patient's tree
    assert stat.S_IMODE((tmp_path / "s.json").stat().st_mode) == 0o666  # no patient in it
