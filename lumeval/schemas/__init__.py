"""The header every JSON document lumeval writes starts with, and the JSON Schemas of those
documents (package data: ``lumeval/schemas/<kind>.schema.json``, JSON Schema 2020-12).

Every document begins ``{"format": "lumeval.<kind>", "schema_version": N, "lumeval_version":
...}``. ``schema_version`` counts changes of meaning: new keys may be added within a version,
a key never changes meaning without a new version. docs/output-formats.md describes each kind.
"""

from __future__ import annotations

import json
from functools import cache
from typing import Any

#: kind -> schema version of the documents lumeval writes now.
SCHEMA_VERSIONS: dict[str, int] = {
    "inspect": 1,       # lumeval inspect --format json
    "check": 1,         # lumeval check --format json
    "claims": 1,        # lumeval claims --format json
    "lot": 1,           # lumeval lot --format json / --json
    "validation": 1,    # lumeval inspect --validate-only --format json
    "spectra": 1,       # lumeval convert ... out.json (also read back as an input format)
    "mix": 1,           # lumeval mix --format json
    "series": 1,        # lumeval series --format json
    "trend": 1,         # lumeval history trend --format json
    "history_list": 1,  # lumeval history list --format json
}


def header(kind: str) -> dict[str, Any]:
    """``{"format": "lumeval.<kind>", "schema_version": N, "lumeval_version": V}``: the first keys
    of every JSON document of that kind."""
    from .. import __version__

    return {"format": f"lumeval.{kind}", "schema_version": SCHEMA_VERSIONS[kind], "lumeval_version": __version__}


@cache
def _load(kind: str) -> str:
    from importlib.resources import files

    return (files(__name__) / f"{kind}.schema.json").read_text(encoding="utf-8")


def schema(kind: str) -> dict[str, Any]:
    """The JSON Schema of the documents of ``kind`` (a fresh dict)."""
    if kind not in SCHEMA_VERSIONS:
        raise KeyError(f"no JSON document of kind {kind!r} (known: {', '.join(SCHEMA_VERSIONS)})")
    return json.loads(_load(kind))
