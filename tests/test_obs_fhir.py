"""FHIR export validated with fhir.resources (a well-kept FHIR model library, test-only).

fhir.resources 8 ships R5 at the top level, and R4B and STU3 as subpackages; it offers
no pure R4 package. R4B differs from R4 only in resources other than Observation and
Bundle, so the R4B models validate our R4 Observations (said in the README).
"""

from __future__ import annotations

import csv
import io
import json

import pytest
from click.testing import CliRunner

from tests.obs_fixtures import UNIT, db_url  # noqa: F401 - fixture
from vascplan.cli import cli
from vascplan.safety import CAUTION

Bundle = pytest.importorskip("fhir.resources.R4B.bundle").Bundle


def run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args])


def test_fhir_bundle_validates_and_carries_codes(tmp_path, db_url):  # noqa: F811
    p = tmp_path / "c.csv"
    p.write_text(
        "time,bed,ref,by,item,site,value\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,nirs,R,64\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,refill,R,3\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pain,,4\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pulse,R-DPA,doppler\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,R-PTA,110\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,R-DPA,96\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,L-ARM,124\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,R-ARM,130\n"
    )
    assert run("obs", "import", p, "--unit", UNIT, "--db", db_url).exit_code == 0
    assert (
        run(
            "obs",
            "correct",
            "--entry",
            1,
            "--value",
            "61",
            "--by",
            "RN-B",
            "--reason",
            "misread",
            "--db",
            db_url,
        ).exit_code
        == 0
    )
    assert (
        run(
            "obs",
            "correct",
            "--entry",
            3,
            "--withdraw",
            "--by",
            "RN-B",
            "--reason",
            "wrong bed",
            "--db",
            db_url,
        ).exit_code
        == 0
    )
    out = tmp_path / "b.json"
    r = run("obs", "export", "--unit", UNIT, "--format", "fhir", "-o", out, "--db", db_url)
    assert r.exit_code == 0, r.output
    doc = json.loads(out.read_text())
    model = Bundle.model_validate(doc)  # raises on any invalid element
    assert model.type == "collection"
    assert doc["meta"]["tag"][0]["display"] == CAUTION
    obs = [e["resource"] for e in doc["entry"]]
    assert len(obs) == 8 + 1  # one per finding, plus the right leg's derived ABI
    by_code = {}
    for o in obs:
        for c in o["code"]["coding"]:
            by_code.setdefault((c["system"], c["code"]), []).append(o)
    # Standard codes, as confirmed (REFERENCES.md): capillary refill LOINC 44963-7,
    # pain severity 0-10 LOINC 72514-3, ankle brachial index SNOMED CT 446841001.
    (refill,) = by_code[("http://loinc.org", "44963-7")]
    assert refill["valueQuantity"] == {
        "value": 3.0,
        "unit": "s",
        "system": "http://unitsofmeasure.org",
        "code": "s",
    }
    (pain,) = by_code[("http://loinc.org", "72514-3")]
    assert pain["status"] == "entered-in-error" and "valueInteger" not in pain
    (abi,) = by_code[("http://snomed.info/sct", "446841001")]
    assert abi["valueQuantity"]["value"] == 0.85  # 110 / 130 (higher ankle / higher arm)
    assert len(abi["derivedFrom"]) == 4
    # Local codes otherwise.
    (nirs,) = by_code[("urn:vascplan:obs", "nirs")]
    assert nirs["status"] == "corrected" and nirs["valueQuantity"]["value"] == 61.0
    assert "Original value '64' recorded by RN-A" in nirs["note"][0]["text"]
    assert nirs["effectiveDateTime"] == "2026-12-01T16:00:00+00:00"
    (pulse,) = by_code[("urn:vascplan:obs", "pulse")]
    assert pulse["valueCodeableConcept"]["coding"][0]["code"] == "doppler"
    assert pulse["bodySite"]["coding"][0]["code"] == "R-DPA"
    assert len({e["fullUrl"] for e in doc["entry"]}) == len(doc["entry"])
    # fhir.resources does not check value sets: the R4 ObservationStatus codes (FHIR R4,
    # valueset-observation-status) are checked here.
    r4_status = {
        "registered",
        "preliminary",
        "final",
        "amended",
        "corrected",
        "cancelled",
        "entered-in-error",
        "unknown",
    }
    assert {o["status"] for o in obs} <= r4_status


@pytest.mark.parametrize(
    ("field", "bad"), [("effectiveDateTime", "yesterday"), ("valueCodeable", {}), ("status", None)]
)
def test_fhir_validator_catches_a_broken_bundle(tmp_path, db_url, field, bad):  # noqa: F811
    # The validation above can fail: fhir.resources refuses a bad datatype, an unknown
    # element or a missing required one (it does not check value sets, hence the status test).
    p = tmp_path / "c.csv"
    p.write_text("time,bed,ref,by,item,site,value\n2026-12-01T16:00,1,DEMO-11,RN-A,nirs,R,64\n")
    assert run("obs", "import", p, "--unit", UNIT, "--db", db_url).exit_code == 0
    doc = json.loads(
        run("obs", "export", "--unit", UNIT, "--format", "fhir", "--db", db_url).stdout
    )
    if bad is None:
        del doc["entry"][0]["resource"][field]
    else:
        doc["entry"][0]["resource"][field] = bad
    with pytest.raises(ValueError):
        Bundle.model_validate(doc)


def test_fhir_abi_from_brachial_pressures_validates(tmp_path):
    # Aboyans 2012: higher ankle (DPA 99) over higher arm (R-BRA 132) = 0.75.
    p = tmp_path / "c.csv"
    p.write_text(
        "time,bed,ref,by,item,site,value\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,L-PTA,92\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,L-DPA,99\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,L-BRA,120\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,pressure,R-BRA,132\n"
    )
    db = tmp_path / "o.db"
    assert run("obs", "import", p, "--unit", UNIT, "--db", db).exit_code == 0
    r = run("obs", "export", "--unit", UNIT, "--format", "fhir", "--db", db)
    assert r.exit_code == 0, r.output
    doc = json.loads(r.output)
    Bundle.model_validate(doc)
    abi = [
        e["resource"]
        for e in doc["entry"]
        if e["resource"]["code"]["coding"][0]["code"] == "446841001"
    ]
    assert [(a["bodySite"]["text"], a["valueQuantity"]["value"]) for a in abi] == [("L", 0.75)]
    assert len(abi[0]["derivedFrom"]) == 4  # both ankle and both arm pressures were read


THREE_TIMES = (
    "time,bed,ref,by,item,site,value\n"
    "2026-12-01T08:00,1,DEMO-11,RN-A,nirs,R,66\n"
    "2026-12-01T12:00,1,DEMO-11,RN-A,nirs,R,64\n"
    "2026-12-01T12:00,1,DEMO-11,RN-A,pressure,R-PTA,110\n"
    "2026-12-01T12:00,1,DEMO-11,RN-A,pressure,R-ARM,130\n"
    "2026-12-01T16:00,1,DEMO-11,RN-A,nirs,R,63\n"
)


def _store_with_three_times(tmp_path, db_url):  # noqa: F811
    p = tmp_path / "c.csv"
    p.write_text(THREE_TIMES)
    assert run("obs", "import", p, "--unit", UNIT, "--db", db_url).exit_code == 0
    r = run("obs", "correct", "--entry", 2, "--value", "60", "--by", "RN-B", "--reason", "misread",
            "--db", db_url)  # fmt: skip
    assert r.exit_code == 0, r.output


def test_ndjson_one_valid_observation_a_line(tmp_path, db_url):  # noqa: F811
    Observation = pytest.importorskip("fhir.resources.R4B.observation").Observation
    _store_with_three_times(tmp_path, db_url)
    out = tmp_path / "o.ndjson"
    r = run("obs", "export", "--unit", UNIT, "--format", "ndjson", "-o", out, "--db", db_url)
    assert r.exit_code == 0, r.output
    lines = out.read_text().splitlines()
    # FHIR bulk data (NDJSON): one resource a line; 5 findings and the right leg's ABI
    # (110 / 130 = 0.85, Aboyans 2012: ankle over the higher arm pressure).
    assert len(lines) == 5 + 1
    docs = [json.loads(line) for line in lines]
    for doc in docs:
        Observation.model_validate(doc)  # raises on any invalid element
        assert doc["meta"]["tag"][0]["display"] == CAUTION
    ids = {d["id"] for d in docs}
    assert len(ids) == len(docs)
    (abi,) = [d for d in docs if d["code"]["coding"][0]["code"] == "446841001"]
    assert abi["valueQuantity"]["value"] == 0.85
    # Outside a Bundle a reference names the resource by type and id, and resolves here.
    refs = [x["reference"] for x in abi["derivedFrom"]]
    assert len(refs) == 2 and all(x.startswith("Observation/") for x in refs)
    assert {x.removeprefix("Observation/") for x in refs} <= ids
    (corrected,) = [d for d in docs if d["status"] == "corrected"]
    assert corrected["valueQuantity"]["value"] == 60.0


@pytest.mark.parametrize(
    ("since", "until", "nirs"),
    [
        ("2026-12-01T10:00", None, [60.0, 63.0]),  # 12:00 (corrected 64 -> 60) and 16:00
        (None, "2026-12-01T12:00", [66.0, 60.0]),  # bounds included
        ("2026-12-01T12:00", "2026-12-01T12:00", [60.0]),
        ("2026-12-01T13:00+01:00", "2026-12-01T12:00:00Z", [60.0]),  # offsets honoured
        ("2026-12-01T17:00", None, []),
    ],
)
def test_export_window(tmp_path, db_url, since, until, nirs):  # noqa: F811
    _store_with_three_times(tmp_path, db_url)
    args = ["obs", "export", "--unit", UNIT, "--format", "fhir", "--db", db_url]
    args += ["--since", since] if since else []
    args += ["--until", until] if until else []
    r = run(*args)
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    Bundle.model_validate(doc)
    obs = [e["resource"] for e in doc.get("entry", [])]
    got = [o["valueQuantity"]["value"] for o in obs if o["code"]["coding"][0]["code"] == "nirs"]
    assert got == nirs
    # The CSV takes the same window: the same originals, and the correction with its original.
    r = run(*[a if a != "fhir" else "csv" for a in args])
    assert r.exit_code == 0, r.output
    rows = list(csv.DictReader(io.StringIO(r.stdout)))
    originals = [float(x["value"]) for x in rows if x["item"] == "nirs" and not x["corrects"]]
    assert len(originals) == len(nirs)
    assert all(x["time"] for x in rows)


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--since", "yesterday"], "error: --since: 'yesterday' is not an ISO 8601 time"),
        (["--until", "2026-13-01T00:00"], "error: --until: '2026-13-01T00:00' is not an ISO"),
        (
            ["--since", "2026-12-02T00:00", "--until", "2026-12-01T00:00"],
            "error: --since: 2026-12-02T00:00 is after --until 2026-12-01T00:00",
        ),
    ],
)
def test_export_bad_window_is_one_line(tmp_path, args, message):
    r = run("obs", "export", "--unit", UNIT, "--format", "ndjson", "--db", tmp_path / "o.db",
            *args)  # fmt: skip
    assert r.exit_code == 2
    assert r.stderr.startswith(message) and r.stderr.count("\n") == 1
    assert "Traceback" not in r.output


def test_empty_record_is_a_valid_bundle(tmp_path):
    r = run("obs", "export", "--unit", UNIT, "--format", "fhir", "--db", tmp_path / "o.db")
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    Bundle.model_validate(doc)
    assert "entry" not in doc  # FHIR JSON allows no empty array
    r = run("obs", "export", "--unit", UNIT, "--format", "ndjson", "--db", tmp_path / "o.db")
    assert r.exit_code == 0 and r.stdout == ""


def test_bundle_writer_holds_no_more_than_one_entry(tmp_path):
    # 5,000 findings as a whole Bundle would be several MB of dicts (about 3 KB of JSON
    # each); written as a stream the traced peak stays under 1 MB and does not grow with N.
    import tracemalloc
    from datetime import UTC, datetime, timedelta

    from vascplan.observations.fhir import write_bundle
    from vascplan.observations.store import CurrentFinding, Entry
    from vascplan.surveillance.unit import load_unit

    unit = load_unit(UNIT)
    t0 = datetime(2026, 12, 1, tzinfo=UTC)

    def findings(n):  # type: ignore[no-untyped-def]
        for i in range(n):
            t = t0 + timedelta(minutes=i)
            e = Entry(i + 1, 1, "U", 1, "DEMO-11", t, t.isoformat(), "RN-A", "nirs", "R", "64",
                      None, None, t)  # fmt: skip
            yield CurrentFinding(e, "64", None)

    class Sink:
        size = 0

        def write(self, text: str) -> None:
            self.size += len(text)

    peaks = []
    for n in (500, 5000):
        sink = Sink()
        tracemalloc.start()
        assert write_bundle(sink, unit, findings(n), t0) == n  # type: ignore[arg-type]
        peaks.append(tracemalloc.get_traced_memory()[1])
        tracemalloc.stop()
        assert sink.size > n * 500
    assert peaks[1] < 1_000_000
    assert peaks[1] < 2 * peaks[0]
