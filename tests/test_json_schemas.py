"""Every JSON document lumeval writes starts with the same header and validates against the JSON
Schema shipped with the package (lumeval/schemas/*.schema.json), checked with the jsonschema
library on real outputs of the command line.

Documents: inspect, check, claims, lot, validation (inspect --validate-only), spectra (convert to
.json), mix, series, history list and history trend (both chart kinds). The schemas of the newer
documents are closed (additionalProperties false): a renamed, missing or unlisted key fails."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest
from referencing import Registry, Resource

from lumeval import schemas

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo"
A = DEMO / "downlights" / "candidate_A_aurora_3000K.csv"
B = DEMO / "downlights" / "candidate_B_basicline_3000K.csv"
WEEKLY = sorted((DEMO / "weekly").glob("AD30-2026w*.csv"))[:3]
DIM = sorted((DEMO / "tunable").glob("tw2_dim2warm_*pct.csv"))

#: (document id, kind, argv); "{tmp}" is the module's temporary folder, "{store}" its store.
COMMANDS = [
    ("inspect", "inspect", ["inspect", A, B, "--format", "json"]),
    ("check", "check", ["check", A, B, "-c", DEMO / "tender_criteria.toml", "--format", "json"]),
    ("claims", "claims", ["claims", A, "--claims", DEMO / "supplier_claims.toml", "--format", "json"]),
    ("lot", "lot", ["lot", DEMO / "lot_2026w48", "-c", DEMO / "lot_criteria.toml", "--format", "json", "--quiet"]),
    ("lot-plain", "lot", ["lot", *WEEKLY[:1], "--format", "json", "--quiet"]),
    # an input that cannot be read: exit code 2 in the document (the schema allowed only 0 and 1)
    ("lot-unread", "lot", ["lot", A, "{store}.missing.csv", "-c", DEMO / "lot_criteria.toml", "--format", "json",
                           "--quiet"]),
    ("validation", "validation", ["inspect", "--validate-only", A, "--format", "json"]),
    ("mix", "mix", ["mix", DEMO / "tunable" / "tw2_channels.csv", "--cct", "2700:4000:650", "-c",
                    DEMO / "tunable_criteria.toml", "--format", "json"]),
    ("mix-plain", "mix", ["mix", DEMO / "tunable" / "tw2_channels.csv", "--cct", "3000", "--duv", "0.002",
                          "--format", "json"]),
    ("series", "series", ["series", *DIM, "-c", DEMO / "dim_to_warm_criteria.toml", "--format", "json"]),
    ("series-plain", "series", ["series", *DIM, "--format", "json"]),
    ("history_list", "history_list", ["history", "list", "--store", "{store}", "--format", "json"]),
    ("trend", "trend", ["history", "trend", "--store", "{store}", "--figure", "duv", "--format", "json"]),
    ("trend-individuals", "trend", ["history", "trend", "--store", "{store}", "--figure", "centroid_duv_centre",
                                    "--format", "json"]),
]
KIND = {doc_id: kind for doc_id, kind, _ in COMMANDS} | {"spectra": "spectra"}


def _lumeval(*args, ok=(0, 1)):
    r = subprocess.run([sys.executable, "-m", "lumeval", *map(str, args)], capture_output=True, text=True, cwd=REPO)
    assert r.returncode in ok, (args, r.stderr)
    return r


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("documents")
    store = tmp / "history.db"
    for week in WEEKLY:  # three recorded lots for the history documents
        _lumeval("lot", week, "-c", DEMO / "lot_criteria.toml", "--store", store, "--quiet")
    out = {}
    for doc_id, _, args in COMMANDS:
        argv = [str(a).replace("{store}", str(store)) for a in args]
        out[doc_id] = json.loads(_lumeval(*argv, ok=(2,) if doc_id == "lot-unread" else (0, 1)).stdout)
    _lumeval("convert", A, tmp / "a.json", "--quiet", ok=(0,))
    out["spectra"] = json.loads((tmp / "a.json").read_text(encoding="utf-8"))
    return out


def _registry() -> Registry:
    resources = [(schemas.schema(k)["$id"], Resource.from_contents(schemas.schema(k))) for k in schemas.SCHEMA_VERSIONS]
    return Registry().with_resources(resources)


def _validator(kind):
    s = schemas.schema(kind)
    jsonschema.Draft202012Validator.check_schema(s)
    return jsonschema.Draft202012Validator(s, registry=_registry())


def _errors(kind, doc):
    return sorted(_validator(kind).iter_errors(doc), key=str)


def test_every_kind_is_produced_here():
    assert set(KIND.values()) == set(schemas.SCHEMA_VERSIONS)


@pytest.mark.parametrize("doc_id", sorted(KIND))
def test_real_output_has_the_header_and_validates(outputs, doc_id):
    doc, kind = outputs[doc_id], KIND[doc_id]
    assert list(doc)[:3] == ["format", "schema_version", "lumeval_version"]
    assert doc["format"] == f"lumeval.{kind}" and doc["schema_version"] == schemas.SCHEMA_VERSIONS[kind]
    errors = _errors(kind, doc)
    assert not errors, [e.message for e in errors[:5]]


def test_the_documents_cover_what_the_schemas_allow(outputs):
    """The variants above are the ones the schemas distinguish: with and without criteria, both
    chart kinds, reachable and unreachable mixes."""
    assert "criteria" in outputs["mix"] and "criteria" not in outputs["mix-plain"]
    assert outputs["lot"]["criteria"] is not None and outputs["lot-plain"]["criteria"] is None
    assert outputs["lot-unread"]["verdict"]["exit_code"] == 2 and len(outputs["lot-unread"]["unreadable"]) == 1
    assert "criteria" in outputs["series"] and "criteria" not in outputs["series-plain"]
    assert outputs["trend"]["chart"] == "xbar-s" and outputs["trend-individuals"]["chart"] == "individuals"
    assert len(outputs["history_list"]["lots"]) == len(WEEKLY)
    assert any(s["figures"] is not None for s in outputs["mix"]["settings"])


def _copy(doc):
    return json.loads(json.dumps(doc))


#: document id -> (path to an object inside it, one of that object's keys)
NESTED = {
    "spectra": (("spectra", 0), "values"),
    "mix": (("settings", 0), "target_cct_K"),
    "series": (("settings", 0), "delta_upvp"),
    "history_list": (("lots", 0), "yield_percent"),
    "trend": (("points", 0), "mean"),
    "trend-individuals": (("moving_range",), "ucl"),
}


@pytest.mark.parametrize("doc_id", sorted(NESTED))
def test_closed_schemas_catch_renamed_missing_and_extra_keys(outputs, doc_id):
    kind = KIND[doc_id]
    path, key = NESTED[doc_id]
    doc = outputs[doc_id]
    top = next(k for k in doc if k not in ("format", "schema_version", "lumeval_version"))
    for where, name in (((), top), (path, key)):
        for change in ("rename", "delete", "add"):
            bad = _copy(doc)
            obj = bad
            for p in where:
                obj = obj[p]
            if change == "rename":
                obj[name + "_renamed"] = obj.pop(name)
            elif change == "delete":
                del obj[name]
            else:
                obj["unlisted"] = 1
            assert _errors(kind, bad), (doc_id, where, name, change)


def test_the_schemas_reject_what_is_wrong(outputs):
    """The check can fail: a document of another kind, a missing figure or a figure of the wrong
    type are refused."""
    v = _validator("inspect")
    assert list(v.iter_errors(outputs["check"]))
    bad = _copy(outputs["inspect"])
    del bad["spectra"][0]["cct_K"]
    assert list(v.iter_errors(bad))
    bad = _copy(outputs["inspect"])
    bad["spectra"][0]["tm30"]["Rf_h"] = [1.0] * 15
    assert list(v.iter_errors(bad))
    bad = _copy(outputs["check"])
    bad["spectra"][0]["clauses"][0]["outcome"] = "maybe"
    assert list(_validator("check").iter_errors(bad))
    bad = _copy(outputs["mix"])  # a setting's figures are checked with the inspect schema's rules
    next(s for s in bad["settings"] if s["figures"] is not None)["figures"].pop("cct_K")
    assert _errors("mix", bad)
    bad = _copy(outputs["trend"])  # the x̄-s chart has no moving-range chart
    bad["moving_range"] = bad["s_chart"]
    assert _errors("trend", bad)


def test_written_spectra_read_back_and_older_files_still_read(outputs, tmp_path):
    from lumeval import read_spectra

    new = tmp_path / "new.json"
    new.write_text(json.dumps(outputs["spectra"]), encoding="utf-8")
    old = tmp_path / "old.json"
    doc = {"format": "lumeval-spectra", "version": 1, **{k: outputs["spectra"][k] for k in ("wavelengths_nm", "spectra")}}
    old.write_text(json.dumps(doc), encoding="utf-8")
    a, b = read_spectra(new), read_spectra(old)
    assert a.names == b.names and (a.values == b.values).all()  # the same numbers, exactly: both are JSON texts


def test_schemas_are_package_data():
    for kind in schemas.SCHEMA_VERSIONS:
        s = schemas.schema(kind)
        assert s["properties"]["format"]["const"] == f"lumeval.{kind}"
    assert (REPO / "lumeval" / "py.typed").exists()


def test_the_lot_schema_checks_its_inner_objects(outputs):
    """The lot document's counts, verdict, statistics and chromaticity have required keys: a
    renamed one fails."""
    for path, key in ((("counts",), "passed"), (("verdict",), "lot_clauses"), (("statistics", "figures", "Ra"), "p95"),
                      (("chromaticity",), "centroid_upvp"), (("verdict", "lot_clauses", 0), "margin")):
        bad = _copy(outputs["lot"])
        obj = bad
        for p in path:
            obj = obj[p]
        obj[key + "_renamed"] = obj.pop(key)
        assert _errors("lot", bad), (path, key)
