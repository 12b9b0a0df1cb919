"""FHIR export validated with fhir.resources (a well-kept FHIR model library, test-only).

fhir.resources 8 ships R5 at the top level, and R4B and STU3 as subpackages; it offers
no pure R4 package. R4B differs from R4 only in resources other than Observation and
Bundle, so the R4B models validate our R4 Observations (said in the README).
"""

from __future__ import annotations

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
