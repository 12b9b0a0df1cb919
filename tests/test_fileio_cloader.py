"""The libyaml (C) loader gives the same data and the same refusals as the Python one.

Every bad case file of tests/data/bad_cases and a set of hostile snippets (duplicate
keys, merge keys, tags, deep nesting, control characters, syntax errors) are read with
the C parser and with the Python parser; the error lines must be identical, word for
word, and the good examples must give equal data.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml

from vascplan import fileio
from vascplan.errors import InputError
from vascplan.paths import examples_dir

BAD = Path(__file__).parent / "data" / "bad_cases"
needs_libyaml = pytest.mark.skipif(not getattr(yaml, "__with_libyaml__", False),
                                   reason="PyYAML built without libyaml: only one parser")

SNIPPETS = {
    "duplicate key": "a: 1\nb: 2\na: 3\n",
    "merge key": "base: &b {x: 1}\nc:\n  <<: *b\n  y: 2\n",
    "python tag": "a: !!python/object/apply:os.system ['true']\n",
    "local tag": "a: !custom 3\n",
    "flow syntax": "a: [1, 2\nb: 3\n",
    "mapping in a value": "a: b: c\n",
    "tab indent": "a:\n\t- 1\n",
    "two documents": "a: 1\n---\nb: 2\n",
    "control character": "a: \x07bell\n",
    "nested 80 deep": "a: " + "[" * 80 + "]" * 80 + "\n",
    "nested 5000 deep": "a: " + "[" * 5000 + "]" * 5000 + "\n",
    "block nested 2000 deep": "".join(" " * i + "k:\n" for i in range(2000)),
    "undefined alias": "a: *nope\n",
    "bad indent": "a:\n  b: 1\n c: 2\n",
    "unterminated quote": "a: 'unterminated\n",
}


def _outcome(path: Path, monkeypatch, fast: bool) -> str:
    with monkeypatch.context() as m:
        if not fast:
            m.setattr(fileio, "_UniqueKeyCLoader", None)
        try:
            return repr(fileio.read_document(path))
        except InputError as exc:
            return f"error: {exc}"


@needs_libyaml
def test_the_c_loader_is_used_when_pyyaml_has_it():
    assert fileio._UniqueKeyCLoader is not None
    assert issubclass(fileio._UniqueKeyCLoader, yaml.CSafeLoader)


@needs_libyaml
@pytest.mark.parametrize("name", sorted(SNIPPETS))
def test_hostile_snippets_same_error_under_both_parsers(name, tmp_path, monkeypatch):
    path = tmp_path / "case.yaml"
    path.write_text(SNIPPETS[name], encoding="utf-8")
    fast = _outcome(path, monkeypatch, fast=True)
    slow = _outcome(path, monkeypatch, fast=False)
    assert fast == slow
    assert fast.startswith(f"error: {path}: ")  # every snippet is refused


@needs_libyaml
def test_refusals_name_what_is_wrong(tmp_path, monkeypatch):
    # The messages a user sees (PyYAML's own wording, and ours for duplicates/nesting).
    expect = {
        "duplicate key": "line 3: YAML error: duplicate key 'a' (first on line 1)",
        "merge key": "line 3: YAML error: could not determine a constructor for the tag "
                     "'tag:yaml.org,2002:merge'",
        "local tag": "line 1: YAML error: could not determine a constructor for the tag "
                     "'!custom'",
        "nested 80 deep": "nested far too deeply to be a case or unit file",
        "nested 5000 deep": "nested far too deeply to be a case or unit file",
    }
    for name, message in expect.items():
        path = tmp_path / "case.yaml"
        path.write_text(SNIPPETS[name], encoding="utf-8")
        assert _outcome(path, monkeypatch, fast=True) == f"error: {path}: {message}"


@needs_libyaml
@pytest.mark.parametrize("path", sorted(BAD.glob("*.yaml")) + sorted(
    examples_dir().glob("*.yaml")), ids=lambda p: p.name)
def test_bad_cases_and_examples_same_under_both_parsers(path, monkeypatch):
    assert _outcome(path, monkeypatch, fast=True) == _outcome(path, monkeypatch, fast=False)


def test_data_types_kept_by_both(monkeypatch):
    # 1e-3 is a number (YAML 1.2, JSON); a timestamp stays text.
    text = "a: 1e-3\nt: 2026-01-02\nn: 5\n"
    assert fileio.parse_yaml("x", text) == {"a": 0.001, "t": "2026-01-02", "n": 5}
    assert fileio.parse_yaml("x", text, fast=False) == {"a": 0.001, "t": "2026-01-02", "n": 5}
