"""lumeval's own JSON spectra format: read and write.

Schema (version 1; documented for users in ``docs/input-files.md``; JSON Schema
``lumeval/schemas/spectra.schema.json``)::

    {
      "format": "lumeval.spectra",        # required, exactly this string
      "schema_version": 1,                 # required, integer 1
      "lumeval_version": "0.1.0",          # written by lumeval; optional when reading
      "wavelengths_nm": [380, 381, ...],   # required, W finite numbers, one direction
      "spectra": [                         # required, at least one
        {"name": "LED A",                  # required, string
         "values": [0.01, 0.02, ...],      # required, W finite numbers
         "metadata": {"key": "value"}}     # optional, string -> string
      ]
    }

The header is the one every JSON document lumeval writes starts with (:mod:`lumeval.schemas`).
Files written before that header (``"format": "lumeval-spectra"``, ``"version": 1``) are still
read. Unknown keys are ignored. ``NaN`` and ``Infinity`` are refused. Numbers are written with
Python's shortest round-trip float repr, so writing and reading back is exact.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

from ..errors import InputError
from .model import DERIVED_KEYS, SpectrumSet

FORMAT = "lumeval.spectra"
VERSION = 1
#: The format marker of files written before the common header (read, never written).
LEGACY_FORMAT = "lumeval-spectra"
MAX_JSON_BYTES = 64 * 1024 * 1024


def _line_of(text: str, pos: int) -> int:
    return text.count("\n", 0, pos) + 1


def _reject_constant(name: str):
    raise ValueError(f"non-finite number {name}")


class _DuplicateKey(ValueError):
    def __init__(self, key: str) -> None:
        super().__init__(key)
        self.key = key


def _no_duplicates(pairs: list) -> dict:
    """``object_pairs_hook`` refusing an object that names a key twice (RFC 8259 §4 leaves the
    meaning of duplicate names undefined; Python's json would silently keep the last one)."""
    out: dict = {}
    for k, v in pairs:
        if k in out:
            raise _DuplicateKey(k)
        out[k] = v
    return out


def _duplicate_line(text: str, key: str) -> int | None:
    """The line of the second ``"key":`` in ``text`` (good enough to point at the duplicate)."""
    import re

    hits = [m.start() for m in re.finditer(re.escape(json.dumps(key)) + r"\s*:", text)]
    return _line_of(text, hits[1]) if len(hits) > 1 else None


def parse_json(raw: bytes, file: str) -> SpectrumSet:
    """Parse lumeval JSON spectra (see the module docstring) into a raw SpectrumSet."""
    if len(raw) > MAX_JSON_BYTES:
        raise InputError(
            f"JSON document is larger than {MAX_JSON_BYTES / 1e6:.0f} MB", file=file, fix="split the file"
        )
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(
            f"JSON must be UTF-8; byte {exc.start} is not", file=file, fix="save the file as UTF-8"
        ) from None
    try:
        doc = json.loads(text, parse_constant=_reject_constant, object_pairs_hook=_no_duplicates)
    except json.JSONDecodeError as exc:
        raise InputError(
            f"not valid JSON ({exc.msg})", file=file, line=exc.lineno, fix="repair or re-export the JSON file"
        ) from None
    except _DuplicateKey as exc:
        raise InputError(
            f"the key {exc.key[:40]!r} appears twice in one object (which one counts is undefined)",
            file=file, line=_duplicate_line(text, exc.key), fix="keep one of them",
        ) from None
    except ValueError as exc:  # NaN / Infinity, or an over-long integer
        what = "an integer with thousands of digits" if "digits" in str(exc) else str(exc)[:60]
        raise InputError(
            f"not usable JSON ({what})", file=file, fix="every number must be a finite decimal number"
        ) from None
    except RecursionError:
        raise InputError("JSON is nested too deeply", file=file, fix="check that this is a lumeval spectra file") from None

    def bad(field: str, problem: str, fix: str) -> InputError:
        return InputError(problem, file=file, field=field, fix=fix)

    if not isinstance(doc, dict) or doc.get("format") not in (FORMAT, LEGACY_FORMAT):
        raise bad(
            "format",
            f'not a lumeval spectra document (expected "format": "{FORMAT}")',
            "see docs/input-files.md for the JSON schema, or use CSV / IES TM-27 XML",
        )
    vkey = "schema_version" if doc["format"] == FORMAT else "version"
    if doc.get(vkey) != VERSION or isinstance(doc.get(vkey), bool):
        raise bad(vkey, f"unsupported {vkey.replace('_', ' ')} {doc.get(vkey)!r}",
                  f"this lumeval reads {vkey.replace('_', ' ')} {VERSION}")
    wl = _numbers(doc.get("wavelengths_nm"), "wavelengths_nm", bad)
    if wl.size < 2:
        raise bad("wavelengths_nm", "needs at least two wavelengths", "export the full spectrum")
    spectra = doc.get("spectra")
    if not isinstance(spectra, list) or not spectra:
        raise bad("spectra", "must be a non-empty list", 'give a list of {"name": ..., "values": [...]} objects')
    names, values, metas = [], [], []
    for k, sp in enumerate(spectra):
        where = f"spectra[{k}]"
        if not isinstance(sp, dict):
            raise bad(where, "must be an object", 'give {"name": ..., "values": [...]}')
        name = sp.get("name")
        if not isinstance(name, str) or not name.strip():
            raise bad(f"{where}.name", "must be a non-empty string", "name the spectrum")
        v = _numbers(sp.get("values"), f"{where}.values", bad)
        if v.size != wl.size:
            raise bad(
                f"{where}.values",
                f"has {v.size} values for {wl.size} wavelengths",
                "give one value per wavelength",
            )
        meta = sp.get("metadata", {})
        if not isinstance(meta, dict) or not all(isinstance(a, str) and isinstance(b, str) for a, b in meta.items()):
            raise bad(f"{where}.metadata", "must map strings to strings", 'write e.g. {"Instrument": "XYZ"}')
        m = {_text(a): _text(b) for a, b in meta.items()}
        m.setdefault("lumeval.scale", "unknown")
        m["lumeval.format"] = "lumeval JSON"
        m.setdefault("lumeval.wavelength_unit", "nm")
        names.append(_text(name))
        values.append(v)
        metas.append(m)
    d = np.diff(wl)
    notes: tuple[str, ...] = ()
    vals = np.vstack(values)
    if np.all(d < 0):
        order = np.argsort(wl)
        wl, vals = wl[order], vals[:, order]
        notes = ("wavelengths were in descending order; sorted ascending",)
        d = np.diff(wl)
    if not np.all(d > 0):
        k = int(np.argmax(d <= 0))
        raise bad(
            f"wavelengths_nm[{k + 1}]",
            f"wavelength {wl[k + 1]:g} {'repeats' if d[k] == 0 else 'breaks the order after'} {wl[k]:g}",
            "give each wavelength once, in one direction",
        )
    n = len(names)
    sources = (file,) if n == 1 else tuple(f"{file}#{nm}" for nm in names)
    return SpectrumSet(wl, vals, tuple(names), sources, tuple(notes for _ in range(n)), tuple(metas))


def _text(s: str) -> str:
    """The string with lone surrogates (valid JSON escapes, invalid Unicode) replaced by '?'."""
    return s.encode("utf-8", errors="replace").decode("utf-8")


def _numbers(x, field: str, bad) -> np.ndarray:
    if not isinstance(x, list):
        raise bad(field, "must be a list of numbers", "give a JSON array of numbers")
    out = np.empty(len(x))
    for i, v in enumerate(x):
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise bad(f"{field}[{i}]", f"{json.dumps(v)[:30]} is not a number", "give a finite number")
        try:
            f = float(v)
        except OverflowError:
            f = math.inf
        if not math.isfinite(f):
            raise bad(f"{field}[{i}]", f"{str(v)[:30]} is not a finite number", "give a finite number")
        out[i] = f
    return out


def read_json(path: str | Path) -> SpectrumSet:
    """Read a lumeval JSON spectra file."""
    from .text import _read_bytes

    return parse_json(_read_bytes(path, MAX_JSON_BYTES), str(path))


def to_json_bytes(spectra: SpectrumSet) -> bytes:
    """Serialise ``spectra`` in lumeval's JSON format (exact round trip)."""
    def dump(x) -> str:
        return json.dumps(x, ensure_ascii=False, allow_nan=False)

    items = []
    for i in range(len(spectra)):
        # keys describing how a file was read left out, as every writer does (the wavelength
        # unit among them: the wavelengths written are in nm, and a stale "µm" stayed)
        meta = {str(k): str(v) for k, v in spectra.metadata[i].items() if k not in DERIVED_KEYS}
        items.append(
            "  {" + f'"name": {dump(spectra.names[i])},\n   "metadata": {dump(meta)},\n'
            f'   "values": {dump([float(v) for v in spectra.values[i]])}' + "}"
        )
    from ..schemas import header

    head = header("spectra")
    text = (
        "{\n"
        + "".join(f" {dump(k)}: {dump(v)},\n" for k, v in head.items()) +
        f' "wavelengths_nm": {dump([float(w) for w in spectra.wavelengths_nm])},\n'
        ' "spectra": [\n' + ",\n".join(items) + "\n ]\n}\n"
    )
    return text.encode("utf-8", errors="replace")  # lone surrogates cannot be UTF-8
