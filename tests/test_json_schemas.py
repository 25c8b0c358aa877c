"""Every JSON document lumeval writes starts with the same header and validates against the JSON
Schema shipped with the package (lumeval/schemas/*.schema.json), checked with the jsonschema
library on real outputs of the command line."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest

from lumeval import schemas

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo"
A = DEMO / "downlights" / "candidate_A_aurora_3000K.csv"
B = DEMO / "downlights" / "candidate_B_basicline_3000K.csv"

COMMANDS = {
    "inspect": ["inspect", str(A), str(B), "--format", "json"],
    "check": ["check", str(A), str(B), "-c", str(DEMO / "tender_criteria.toml"), "--format", "json"],
    "claims": ["claims", str(A), "--claims", str(DEMO / "supplier_claims.toml"), "--format", "json"],
    "lot": ["lot", str(DEMO / "lot_2026w48"), "-c", str(DEMO / "lot_criteria.toml"), "--format", "json", "--quiet"],
    "validation": ["inspect", "--validate-only", str(A), "--format", "json"],
}


@pytest.fixture(scope="module")
def outputs():
    out = {}
    for kind, args in COMMANDS.items():
        r = subprocess.run([sys.executable, "-m", "lumeval", *args], capture_output=True, text=True, cwd=REPO)
        assert r.returncode in (0, 1), (kind, r.stderr)
        out[kind] = json.loads(r.stdout)
    return out


def _validator(kind):
    s = schemas.schema(kind)
    jsonschema.Draft202012Validator.check_schema(s)
    return jsonschema.Draft202012Validator(s)


@pytest.mark.parametrize("kind", sorted(COMMANDS))
def test_real_output_has_the_header_and_validates(outputs, kind):
    doc = outputs[kind]
    assert list(doc)[:3] == ["format", "schema_version", "lumeval_version"]
    assert doc["format"] == f"lumeval.{kind}" and doc["schema_version"] == schemas.SCHEMA_VERSIONS[kind]
    errors = sorted(_validator(kind).iter_errors(doc), key=str)
    assert not errors, [e.message for e in errors[:5]]


def test_the_schemas_reject_what_is_wrong(outputs):
    """The check can fail: a document of another kind, a missing figure or a figure of the wrong
    type are refused."""
    v = _validator("inspect")
    assert list(v.iter_errors(outputs["check"]))
    bad = json.loads(json.dumps(outputs["inspect"]))
    del bad["spectra"][0]["cct_K"]
    assert list(v.iter_errors(bad))
    bad = json.loads(json.dumps(outputs["inspect"]))
    bad["spectra"][0]["tm30"]["Rf_h"] = [1.0] * 15
    assert list(v.iter_errors(bad))
    bad = json.loads(json.dumps(outputs["check"]))
    bad["spectra"][0]["clauses"][0]["outcome"] = "maybe"
    assert list(_validator("check").iter_errors(bad))


def test_schemas_are_package_data():
    for kind in schemas.SCHEMA_VERSIONS:
        s = schemas.schema(kind)
        assert s["properties"]["format"]["const"] == f"lumeval.{kind}"
    assert (REPO / "lumeval" / "py.typed").exists()
