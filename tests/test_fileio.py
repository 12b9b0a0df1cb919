"""Reading input files safely and writing outputs atomically."""

from __future__ import annotations

import os

import pytest

from vascplan.errors import InputError
from vascplan.fileio import atomic_write_text, output_inside, read_document


def _err(tmp_path, name: str, content: bytes) -> str:
    p = tmp_path / name
    p.write_bytes(content)
    with pytest.raises(InputError) as exc:
        read_document(p)
    return str(exc.value).replace(str(p), name)


def test_yaml_syntax_error_names_line(tmp_path):
    assert _err(tmp_path, "c.yaml", b"a: 1\nb: [1, 2\n").startswith("c.yaml: line ")


def test_duplicate_key(tmp_path):
    msg = _err(tmp_path, "c.yaml", b"a: 1\na: 2\n")
    assert msg == "c.yaml: line 2: YAML error: duplicate key 'a' (first on line 1)"


def test_duplicate_key_json(tmp_path):
    msg = _err(tmp_path, "c.json", b'{\n "b": 0,\n "a": 1,\n "a": 2}')
    assert msg == "c.json: line 4: JSON error: duplicate key 'a' (first on line 3)"


def test_duplicate_key_json_that_yaml_cannot_read(tmp_path):
    # A tab before a key is valid JSON but not YAML: the message keeps no line then.
    msg = _err(tmp_path, "c.json", b'{"a": 1,\n\t"a": 2}')
    assert msg == "c.json: JSON error: duplicate key 'a'"


def test_empty_file(tmp_path):
    assert _err(tmp_path, "c.yaml", b"  \n") == "c.yaml: file is empty"


def test_not_utf8(tmp_path):
    msg = _err(tmp_path, "c.yaml", b"a: 1\nref: caf\xe9\n")
    # byte 13 (0-based) is the Latin-1 e-acute on the second line
    assert msg == (
        "c.yaml: line 2: not UTF-8 text (byte 13 cannot be decoded); save the file as UTF-8"
    )


def test_too_large(tmp_path):
    msg = _err(tmp_path, "c.yaml", b"#" * 2_000_001)
    assert msg == "c.yaml: file is 2,000,001 bytes, far too large (at most 2,000,000 bytes)"


def test_yaml_tags_refused(tmp_path):
    msg = _err(tmp_path, "c.yaml", b"a: !!python/object/apply:os.system ['true']\n")
    assert msg.startswith("c.yaml: line 1: YAML error:")


def test_timestamps_stay_strings(tmp_path):
    p = tmp_path / "u.yaml"
    p.write_text("t: 2026-12-01T14:20\n")
    assert read_document(p) == {"t": "2026-12-01T14:20"}


def test_atomic_write_leaves_old_file_on_failure(tmp_path, monkeypatch):
    target = tmp_path / "out.txt"
    atomic_write_text(target, "old")

    def boom(*_a):
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", boom)
    # One line naming the path, never a traceback (issue 18).
    with pytest.raises(InputError, match=r"out\.txt: cannot write here \(disk full\); choose"):
        atomic_write_text(target, "new")
    assert target.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["out.txt"]


def test_output_inside_cannot_escape(tmp_path):
    assert output_inside(tmp_path, "../../x.pdf").parent == tmp_path.resolve()


def test_exponent_without_a_dot_is_a_number(tmp_path):
    # YAML 1.2 core schema (and JSON) read 1e-3 as a float; plain integers stay integers.
    p = tmp_path / "c.yaml"
    p.write_text("a: 1e-3\nb: 5\nc: -2.5E+2\nd: 1e\n")
    assert read_document(p) == {"a": 0.001, "b": 5, "c": -250.0, "d": "1e"}
    assert isinstance(read_document(p)["b"], int)
