"""Fuzzing every bundled file kind (issue 18): a valid result or one InputError line, nothing else.

Hypothesis mutates the bundled case, unit and protocol files and the demo observation CSV
(bytes replaced, inserted, deleted, lines repeated or dropped, values swapped for hostile
ones: control characters, other scripts' digits, underscores, huge numbers, dates alone)
and feeds each result to the library's own loader in this process. The only allowed
outcomes are a loaded object or :class:`~vascplan.errors.InputError` whose text is one
line. About 2,200 examples a run in total (550 per kind).

Every input that once crashed is kept in ``tests/data/fuzz_corpus`` (the file name says
its kind: ``case-``, ``unit-``, ``protocol-``, ``obs-``) and replayed by
:func:`test_corpus_replays`.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from vascplan.case.load import load_case
from vascplan.errors import InputError
from vascplan.observations.csvio import parse_csv
from vascplan.paths import data_dir, examples_dir
from vascplan.surveillance.protocol import load_protocol
from vascplan.surveillance.unit import load_unit

CORPUS = Path(__file__).parent / "data" / "fuzz_corpus"
UNIT_PATH = Path(__file__).parent / "unit_minimal.yaml"
SEEDS = {
    "case": (examples_dir() / "case-DEMO-07-sfa-occlusion.yaml").read_bytes(),
    "unit": (examples_dir() / "unit-demo.yaml").read_bytes(),
    "protocol": (data_dir() / "protocols" / "standard.yaml").read_bytes(),
    "obs": (
        b"time,bed,ref,by,item,site,value\n"
        b"2026-12-02T08:00,1,DEMO-11,RN-A,nirs,L,64\n"
        b"2026-12-02T08:00,1,DEMO-11,RN-A,pulse,R-DPA,doppler\n"
        b"2026-12-02T09:00,1,DEMO-11,RN-B,refill,R,3\n"
    ),
}
EXAMPLES_PER_KIND = 550
WORK = Path(tempfile.mkdtemp(prefix="vascplan-fuzz-"))

HOSTILE = [
    b"\x00", b"\x1b[2J", b"\xc2\x85", "\u202e".encode(), "\u2066".encode(), b"\r", b"\t",
    "\u0666\u0664".encode(), b"6_4", b"1e300", b"-1e300", b".nan", b".inf", b"-0", b"999999999999",
    b"2026-12-01", b"9999-12-31T23:59", b"1900-01-01T00:00", b"351", b"~", b"null", b"[]", b"{}",
    b"yes", b"'", b'"', b"&a", b"*a", b"<<: {}", b"!!python/object:os.system", b"%YAML 1.2",
    b"---", b"...", b"=1+1", b"../../../../etc/passwd", b"\xff\xfe", b"\xe2\x80", b"#", b": ",
    b"- ", b"  ", b"\n", b",", b"\"\"", b"2026-10-25T01:30", b"DEMO-11", b"R-DPA", b"0", b"-5",
]  # fmt: skip


@st.composite
def mutated(draw: st.DrawFn, kind: str) -> bytes:
    data = bytearray(SEEDS[kind])
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["replace", "insert", "delete", "line", "token"]))
        n = len(data)
        at = draw(st.integers(0, max(n - 1, 0)))
        if op == "replace":
            size = draw(st.integers(1, 8))
            data[at : at + size] = draw(st.sampled_from(HOSTILE))
        elif op == "insert":
            extra = st.one_of(st.sampled_from(HOSTILE), st.binary(min_size=1, max_size=6))
            data[at:at] = draw(extra)
        elif op == "delete":
            del data[at : at + draw(st.integers(1, 40))]
        elif op == "line":
            lines = bytes(data).split(b"\n")
            i = draw(st.integers(0, len(lines) - 1))
            if draw(st.booleans()):
                lines.insert(i, lines[i])
            else:
                del lines[i]
            data = bytearray(b"\n".join(lines))
        else:  # swap the value after a ": " or a "," for a hostile one
            sep = b", " if kind == "obs" else b": "
            sep = b"," if kind == "obs" else sep
            starts = [i for i in range(len(data)) if data[i : i + len(sep)] == sep]
            if starts:
                i = draw(st.sampled_from(starts)) + len(sep)
                j = i
                while j < len(data) and data[j : j + 1] not in (b"\n", b",", b"}"):
                    j += 1
                data[i:j] = draw(st.sampled_from(HOSTILE))
    return bytes(data)


def load(kind: str, path: Path) -> object:
    """The library's loader for ``kind``, as the commands call it."""
    if kind == "case":
        return load_case(path)
    if kind == "unit":
        return load_unit(path)
    if kind == "protocol":
        return load_protocol(str(path), "unit.yaml", base_dir=path.parent)
    return parse_csv(path, load_unit(UNIT_PATH))


def check_one(kind: str, data: bytes) -> None:
    """Load ``data`` as ``kind``: a result, or an InputError of one line."""
    suffix = ".csv" if kind == "obs" else ".yaml"
    path = WORK / f"{kind}{suffix}"
    path.write_bytes(data)
    try:
        load(kind, path)
    except InputError as exc:
        text = str(exc)
        assert "\n" not in text and "\r" not in text, text
        assert text.startswith(str(path)), text


_SETTINGS = settings(
    max_examples=EXAMPLES_PER_KIND,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
    database=None,
)


@_SETTINGS
@given(data=mutated("case"))
def test_fuzz_case(data: bytes) -> None:
    check_one("case", data)


@_SETTINGS
@given(data=mutated("unit"))
def test_fuzz_unit(data: bytes) -> None:
    check_one("unit", data)


@_SETTINGS
@given(data=mutated("protocol"))
def test_fuzz_protocol(data: bytes) -> None:
    check_one("protocol", data)


@_SETTINGS
@given(data=mutated("obs"))
def test_fuzz_observation_csv(data: bytes) -> None:
    check_one("obs", data)


def test_seeds_load() -> None:
    # The mutations start from valid files: each seed loads as it is.
    for kind, data in SEEDS.items():
        path = WORK / f"seed-{kind}{'.csv' if kind == 'obs' else '.yaml'}"
        path.write_bytes(data)
        assert load(kind, path) is not None


@pytest.mark.parametrize(
    "name", sorted(p.name for p in CORPUS.iterdir()) if CORPUS.is_dir() else []
)
def test_corpus_replays(name: str) -> None:
    kind = name.split("-", 1)[0]
    assert kind in SEEDS, name
    check_one(kind, (CORPUS / name).read_bytes())
