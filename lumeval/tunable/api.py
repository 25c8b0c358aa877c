"""Python twins of ``lumeval mix`` and ``lumeval series`` (files in, results out; no CLI library).

::

    from lumeval.tunable.api import mix_files, series_files
    report = mix_files(["channels.csv"], "2700:6500:100", criteria="tunable.toml")
    report.result.weights, report.result.figure("Ra"), report.check.exit_code

    report = series_files(["dim_100pct.csv", "dim_10pct.csv"], reference="max")
    report.result.delta_upvp

This is the edge where files are read (spectra, manifests, criteria); the computation is in
:mod:`lumeval.tunable.mix`, :mod:`lumeval.tunable.series` and :mod:`lumeval.tunable.judge`.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .._paths import source_file
from ..errors import FINITE_FIX, InputError, UsageError, finite_float, quote, shown

#: Where a series takes its settings from.
SETTING_SOURCES = ("name", "metadata", "manifest")

#: Largest manifest file read (a manifest lists file names and numbers).
MAX_MANIFEST_BYTES = 4_000_000


@dataclass(frozen=True)
class TunableReport:
    """What ``mix`` and ``series`` report: the result, the range check (None without
    criteria), the criteria, and the inputs (for provenance)."""

    kind: str  # "mix" or "series"
    result: object  # MixResult or SeriesResult
    check: Any  # RangeCheck or None
    criteria: object
    inputs: tuple[str, ...]

    @property
    def exit_code(self) -> int:
        return 0 if self.check is None else self.check.exit_code


def read_channels(paths) -> tuple[Any, tuple[str, ...]]:
    """Read channel spectra (one wide file with a column per channel, or several files) and
    bring them onto one computation grid. Returns (SpectrumSet, run notes).

    Each file is prepared by the rules of docs/input-files.md. A mix needs every channel on the
    same wavelengths, so channels whose prepared grids differ are brought onto one 1 nm grid
    over the union of their ranges — the rule docs/input-files.md §4 gives for spectra on
    different grids: Sprague (CIE 167:2005) from 5 nm to 1 nm, shorter data extended by their
    end values (CIE 15:2004 §7.2.2.1) — and each channel and the run notes say so.
    """
    from ..spectra.model import SpectrumSet
    from ..spectra.prepare import prepare
    from ..spectra.read import read_spectra
    from .mix import check_channels

    each = [prepare(read_spectra(p)) for p in paths]
    notes: list[str] = []
    keys = {(float(s.wavelengths_nm[0]), float(s.wavelengths_nm[-1]), s.wavelengths_nm.size) for s in each}
    if len(keys) > 1:
        each = join_grids(each)
        wl = each[0].wavelengths_nm
        notes.append(
            f"channels on different wavelength grids: all brought onto one 1 nm grid over {wl[0]:g}-{wl[-1]:g} nm "
            "(Sprague interpolation, shorter data extended by their end values; docs/input-files.md §4) so that "
            "they can be mixed"
        )
    joined = SpectrumSet.concatenate(each) if len(each) > 1 else each[0]
    check_channels(joined)
    return joined, tuple(notes)


def join_grids(sets: list) -> list:
    """Prepared spectrum sets on different uniform grids, brought onto one 1 nm grid over the
    union of their ranges (Sprague from coarser spacings, CIE 167:2005; end values repeated
    where a set is shorter, CIE 15:2004 §7.2.2.1), each change noted on its spectra."""
    from ..spectra.model import SpectrumSet
    from ..spectra.prepare import sprague

    lo = min(float(s.wavelengths_nm[0]) for s in sets)
    hi = max(float(s.wavelengths_nm[-1]) for s in sets)
    grid = np.arange(lo, hi + 0.5, 1.0)
    out = []
    for s in sets:
        wl = s.wavelengths_nm
        inner = grid[(grid >= wl[0] - 1e-9) & (grid <= wl[-1] + 1e-9)]
        notes = [list(x) for x in s.notes]
        if s.spacing_nm is not None and abs(s.spacing_nm - 1.0) < 1e-9:
            vals = s.values[:, np.searchsorted(wl, inner - 1e-9)]
        else:
            vals = sprague(wl, s.values, inner)
            for k in range(len(s)):
                notes[k].append(f"{s.spacing_nm:g} nm data interpolated to 1 nm (Sprague, CIE 167:2005) to share one grid "
                                "with the other channels of the mix")
        n_lo = int(round(inner[0] - lo))
        n_hi = int(round(hi - inner[-1]))
        if n_lo or n_hi:
            vals = np.concatenate([np.repeat(vals[:, :1], n_lo, axis=1), vals, np.repeat(vals[:, -1:], n_hi, axis=1)], axis=1)
            for k in range(len(s)):
                notes[k].append(f"EXTRAPOLATED: extended to {lo:g}-{hi:g} nm by repeating the end values (CIE 15:2004 "
                                "§7.2.2.1) to share one grid with the other channels of the mix")
        out.append(SpectrumSet(grid, vals, s.names, s.sources, tuple(tuple(x) for x in notes), s.metadata,
                               prepared=True))
    return out


def mix_files(channels, cct, *, duv=0.0, maximise: str = "Rf", criteria=None, progress=None) -> TunableReport:
    """Python twin of ``lumeval mix``.

    Parameters
    ----------
    channels : path or sequence of paths
        Channel spectra at full drive (a wide file, one column per channel; any format lumeval
        reads).
    cct : str or array_like
        Target CCTs: ``"2700:6500:100"``, ``"2700,3000"`` or numbers (K).
    duv : float or "ansi"
        Target Duv for three or more channels.
    maximise : "Rf", "Ra" or "ler"
    criteria : path, optional
        A criteria file; its clauses are judged at every setpoint (settings = target CCT in K).
    progress : callable, optional
        A progress listener (:mod:`lumeval.progress`): setpoints solved, spectra evaluated.
    """
    from .judge import judge, view_of_mix
    from .mix import mix, parse_setpoints

    paths = [channels] if isinstance(channels, (str, Path)) else list(channels)
    crit = _load_criteria(criteria, "mix")
    targets = parse_setpoints(cct) if isinstance(cct, str) else np.atleast_1d(np.asarray(cct, dtype=float))
    if crit is not None:  # a series_shift reference that is no target: refused before any work, as for series
        _refuse_unknown_references(crit, np.sort(targets), "K")
    chans, notes = read_channels(paths)
    res = mix(chans, targets, duv=duv, maximise=maximise, notes=notes, progress=progress)
    check = None
    if crit is not None:
        check = judge(crit, view_of_mix(res), res.target_cct_K, labels=res.names, unit="K",
                      available=res.reachable, unavailable_reason=res.reason)
    return TunableReport("mix", res, check, crit, tuple(str(p) for p in paths) + ((str(criteria),) if criteria else ()))


def series_files(paths, *, setting_from: str = "name", key: str = "setting", manifest=None, unit: str | None = None,
                 reference="max", criteria=None, progress=None) -> TunableReport:
    """Python twin of ``lumeval series``.

    Parameters
    ----------
    paths : sequence of paths
        Spectra of one product at several settings (files with one or more spectra).
    setting_from : "name", "metadata" or "manifest"
        ``name``: the one number in the file name (the column name for files with several
        spectra) — the number followed by a unit (K, %, pct, mA, A) when there are several;
        ``metadata``: the metadata field ``key``; ``manifest``: the TOML or CSV file
        ``manifest`` (see docs/tunable.md).
    unit : str, optional
        The settings' unit; default: the unit written with the numbers, or the manifest's (a
        manifest stating another unit is an :class:`InputError`).
    reference : "max", "min", "locus" or a setting
        What Δu′v′ is measured from (default the highest setting, i.e. full output).
    criteria : path, optional
    progress : callable, optional
        A progress listener (:mod:`lumeval.progress`), told of each file read and each chunk
        of spectra evaluated.
    """
    from ..engine import evaluate
    from ..progress import READING, report
    from ..spectra.read import read_spectra
    from .judge import judge
    from .series import series, setting_label, setting_order

    paths = [Path(p) for p in paths]
    if setting_from not in SETTING_SOURCES:
        raise UsageError(f"--setting-from {setting_from!r} is not one of {', '.join(SETTING_SOURCES)}",
                         fix="write --setting-from name, metadata or manifest")
    if manifest is not None and setting_from != "manifest":
        setting_from = "manifest"
    if setting_from == "manifest" and manifest is None:
        raise UsageError("--setting-from manifest needs --manifest FILE", fix="name the TOML or CSV manifest with --manifest")
    crit = _load_criteria(criteria, "series")
    table, m_unit, m_line, m_lines = _read_manifest(manifest) if manifest is not None else ({}, "", None, {})
    if unit is not None and m_unit and _unit_word(unit) != _unit_word(m_unit):
        raise InputError(f"the manifest states the unit {quote(m_unit)} but --unit gives {quote(unit)}",
                         file=str(manifest), line=m_line, fix="drop --unit, or give the manifest's unit with it")
    sets = []
    for k, p in enumerate(paths):
        sets.append(read_spectra(p))
        report(progress, READING, k + 1, len(paths))
    if sum(len(s) for s in sets) < 2:
        raise InputError("a series needs at least two spectra", file=str(paths[0]) if paths else None,
                         fix="give the spectra of the product at two or more settings")
    values: list[float] = []
    units: list[str] = []
    sources: list[str] = []
    entries: list[str] = []  # the manifest entry each spectrum was found under
    for p, s in zip(paths, sets):
        for i in range(len(s)):
            v, u, entry = _setting(p, s, i, setting_from, key, table, manifest)
            values.append(v)
            units.append(u)
            sources.append(s.sources[i])
            entries.append(entry)
    _refuse_unused_entries(table, set(entries), m_lines, manifest)
    found = {u for u in units if u}
    if unit is None:
        if len(found) > 1:
            raise InputError(f"the settings are written in several units ({', '.join(sorted(found))})",
                             fix="give every spectrum's setting in one unit, or state it with --unit")
        unit = m_unit or (found.pop() if found else "")
    else:
        _refuse_other_written_unit(unit, units, sources, setting_from, key)
    unit = _unit_word(unit)  # as the reports write it: --unit pct (or a manifest's "percent") is %
    _refuse_negative_settings(values, unit, sources, [(manifest, m_lines.get(e)) if e else None for e in entries])
    order = setting_order(values, sources)
    if crit is not None:
        _refuse_unknown_references(crit, np.sort(np.asarray(values, dtype=float)), unit)
    singles = [(s, i) for s in sets for i in range(len(s))]
    # one spectrum per entry, in setting order; the engine prepares them by the rules of
    # docs/input-files.md (spectra on different grids as it treats any spectra evaluated together)
    ev = evaluate([singles[k][0].subset([singles[k][1]]) for k in order], progress=progress)
    settings = np.asarray(values, dtype=float)[order]
    how = {"name": "a number in each file (or column) name", "metadata": f"the metadata field {key!r}",
           "manifest": f"the manifest {manifest}"}[setting_from]
    res = series(ev, settings, unit=unit, setting_source=how, reference=reference)
    check = None
    if crit is not None:
        check = judge(crit, ev, settings, labels=tuple(setting_label(v, unit) for v in settings), unit=unit)
    return TunableReport("series", res, check, crit,
                         tuple(str(p) for p in paths) + ((str(manifest),) if manifest else ()) + ((str(criteria),) if criteria else ()))


# --------------------------------------------------------------------------- helpers


def _load_criteria(path, command: str):
    """The criteria file ``path`` (None: none), refused when ``lumeval COMMAND`` judges none of
    its clauses (only lot clauses: a run that judged nothing would read as a pass)."""
    if path is None:
        return None
    from ..criteria import load_criteria

    crit = load_criteria(path)
    crit.require_clauses_for(command, ("sample", "range"))
    _refuse_uncertainty_tables(crit, path, command)
    return crit


def _refuse_uncertainty_tables(crit, path, command: str) -> None:
    """A criteria file asking for a judgement under measurement uncertainty (an ``[instrument]``
    table or a guarded ``[decision]`` rule: what makes ``lumeval check`` decide under it,
    docs/uncertainty.md), refused naming the table's line: mix and series judge the computed
    values (simple acceptance), and ignored the tables silently (found by a review). A
    ``[monte_carlo]`` table alone asks for nothing (``check`` is then the plain check too)."""
    asks = crit.uncertainty_tables
    if not asks:
        return
    from .._paths import display_path
    from .._toml import read_text
    from ..criteria.loader import locate_lines

    lines = locate_lines(read_text(path, what="criteria", option="--criteria"))
    found = [lines[(t,)] for t in asks if (t,) in lines]
    tables = " and ".join(f"[{t}]" for t in asks)
    raise InputError(f"its {tables} table{'s' if len(asks) > 1 else ''} ask{'' if len(asks) > 1 else 's'} for a judgement "
                     f"under measurement uncertainty, which `lumeval {command}` does not make (it judges the computed "
                     "values: simple acceptance)", file=display_path(path), line=min(found) if found else None,
                     field=asks[0], fix=f"judge under uncertainty with `lumeval check` or `lumeval lot`, or give "
                     f"`lumeval {command}` a criteria file without those tables")


def _setting(path: Path, s, i: int, how: str, key: str, table: dict, manifest) -> tuple[float, str, str]:
    """Spectrum ``i`` of ``s``: its setting, the unit written with it ("" when none) and the
    manifest entry it was found under ("" when not from a manifest)."""
    from .series import setting_from_text

    src = s.sources[i]
    if how == "name":
        text = path.stem if len(s) == 1 else s.names[i]
        return (*setting_from_text(
            text, what="file name" if len(s) == 1 else "column name", file=str(path),
            fix="put the setting in the name (e.g. downlight_3000K.csv, dim_10pct.csv), or use --setting-from metadata / --manifest",
        ), "")
    if how == "metadata":
        md = s.metadata[i] if i < len(s.metadata) else {}
        hit = next((k for k in md if str(k).strip().lower() == key.lower()), None)
        if hit is None:
            raise InputError(f"no metadata field {key!r} to take the setting from", file=str(path), field=key,
                             fix=f"add a line '{key}: VALUE' to the file, choose the field with --setting-key, or use a manifest")
        return (*setting_from_text(str(md[hit]), what=f"metadata field {key!r} value", file=str(path),
                                   fix=f"write one number (with its unit) in the field {key!r}", signed=True), "")
    for cand in (src, src.replace(str(path), path.name), str(path), path.name):
        if cand in table:
            return table[cand], "", cand
    raise InputError(f"{src!r} is not listed in the manifest", file=str(manifest),
                     fix=f"add a line for {path.name!r} (or {path.name + '#' + s.names[i]!r} for a column of a wide file)")


def _refuse_unused_entries(table: dict, used: set, lines: dict, manifest) -> None:
    """A manifest lists exactly the spectra given: an entry no spectrum was found under is a
    measurement missing from the command line, refused naming it (found by a review: such an
    entry was ignored, so a missing measurement went unnoticed)."""
    unused = [k for k in table if k not in used]
    if unused:
        more = f" (and {len(unused) - 1} other entry(ies))" if len(unused) > 1 else ""
        raise InputError(f"the manifest lists {quote(unused[0])}{more}, but no spectrum given is that file",
                         file=str(manifest), line=lines.get(unused[0]),
                         fix="give that file too, or remove its entry if it is not part of this series")


def _refuse_other_written_unit(unit: str, units: list, sources: list, how: str, key: str) -> None:
    """``--unit`` naming a unit other than the one written with a setting: the option relabelled
    the settings silently (found by a review: dim_10pct.csv ... read as 10 mA with --unit mA)."""
    for u, src in zip(units, sources):
        if u and _unit_word(u) != _unit_word(unit):
            where = {"name": "file (or column) name", "metadata": f"metadata field {key!r}"}.get(how, "entry")
            raise InputError(f"the {where} writes the setting in {quote(u)} but --unit gives {quote(unit)}",
                             file=source_file(src) or None,
                             fix="drop --unit, or give the unit written with the settings")


#: Units of settings that cannot be negative: a CCT, a dim level, a drive current.
NON_NEGATIVE_UNITS = ("K", "%", "mA", "A")


def _refuse_negative_settings(values: list, unit: str, sources: list, written_at: list) -> None:
    """A negative CCT, dimming level or drive current (found by a review: "-1 %" in a manifest
    was accepted), refused naming the manifest line (``written_at``: (manifest, line) per
    spectrum, None when the setting was read from the spectrum's own file). Settings without a
    unit or in another unit (an ambient temperature in °C ...) may be negative."""
    u = _unit_word(unit)
    if u not in NON_NEGATIVE_UNITS:
        return
    for v, src, at in zip(values, sources, written_at):
        if v < 0:
            what = {"K": "a CCT", "%": "a dimming level", "mA": "a drive current", "A": "a drive current"}[u]
            file, line = at if at is not None else (source_file(src) or None, None)
            raise InputError(f"the setting of {quote(src)} is {v:g} {u}, but {what} cannot be negative",
                             file=str(file) if file is not None else None, line=line,
                             fix="write the setting as measured (0 or more)")


def _refuse_unknown_references(crit, settings: np.ndarray, unit: str) -> None:
    """A series_shift clause whose reference is no setting of the series, or no target CCT of a
    mix (or ``"locus"`` when the settings are not CCTs): refused as ``--reference`` is, naming
    the clause and the settings, rather than reported *not judged* (found by a review: exit 1
    from the file, 2 from the command line)."""
    from ..criteria.range_clauses import SeriesShiftClause, reference_points
    from .series import setting_label

    for c in crit.clauses:
        if not isinstance(c, SeriesShiftClause) or c.reference in ("max", "min"):
            continue
        zero = np.zeros(settings.size)  # any finite chromaticity: only whether the reference exists is asked
        why = reference_points(SimpleView(zero, zero), settings, c.reference)[2]
        if why:
            shown_ = [setting_label(v, unit) for v in settings[:12]] + (["…"] if settings.size > 12 else [])
            ref = f"{c.reference:g}" if isinstance(c.reference, float) else shown(c.reference)
            raise InputError(f"clause {quote(c.clause_id)}: reference {ref}: {why}; the settings are "
                             f"{', '.join(shown_)}", file=str(getattr(crit, 'file', '') or '') or None, line=c.line,
                             fix='name one of the settings, or write reference = "max" (full output) or "min"')


@dataclass(frozen=True)
class SimpleView:
    """u′v′ only: what :func:`lumeval.criteria.range_clauses.reference_points` needs to tell
    whether a reference names a setting."""

    u_prime: np.ndarray
    v_prime: np.ndarray


def _unit_word(unit: str) -> str:
    """A unit as lumeval spells it (``k`` and ``K``, ``pct`` and ``%`` are one unit)."""
    from .series import UNIT_WORDS

    return UNIT_WORDS.get(unit.strip().lower(), unit.strip())


def _read_manifest(path) -> tuple[dict[str, float], str, int | None, dict[str, int | None]]:
    """Settings from a manifest: TOML (``unit = "%"`` and a ``[settings]`` table of
    ``"file name" = number``) or CSV (rows ``file,setting``, an optional header row); the
    settings by file name, their unit, the line stating it (None when none does) and each
    entry's line."""
    from .._toml import read_text

    p = Path(path)
    # the one TOML reader's file rules (regular files only, size limit, UTF-8 with the BOM removed)
    text = read_text(p, what="manifest", option="--manifest", error=InputError, max_bytes=MAX_MANIFEST_BYTES)
    if p.suffix.lower() == ".toml":
        return _manifest_toml(text, str(p))
    return _manifest_csv(text, str(p))


def _number(v, file: str, line, field: str) -> float:
    comma = _DIGIT_COMMA.search(v[:200]) if isinstance(v, str) else None
    if comma is not None:  # "1,050" in quotes (unquoted, TOML itself refuses it)
        from .series import comma_fix, comma_problem

        raise InputError(comma_problem("the manifest writes the setting", str(v)), file=file, line=line, field=field,
                         fix=comma_fix(comma.group(0)))
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise InputError(f"setting {shown(v)} is not a finite number", file=file, line=line, field=field, fix="write a plain number")
    return finite_float(v, lambda s: InputError(f"setting {s} is not a finite number", file=file, line=line, field=field,
                                                fix=FINITE_FIX))


def _manifest_toml(text: str, file: str) -> tuple[dict[str, float], str, int | None, dict[str, int | None]]:
    from .._toml import loads

    data = loads(text, file, error=InputError)
    unknown = [k for k in data if k not in ("unit", "settings")]
    if unknown:
        raise InputError(f"unknown key {unknown[0]!r}", file=file, field=unknown[0], fix="a manifest has `unit` and a [settings] table")
    unit = data.get("unit", "")
    if not isinstance(unit, str) or len(unit) > 16:
        raise InputError("`unit` must be a short string", file=file, field="unit", fix='write e.g. unit = "%"')
    st = data.get("settings")
    if not isinstance(st, dict) or not st:
        raise InputError("no [settings] table", file=file, fix='add [settings] with lines "file name" = setting')
    from ..criteria.loader import locate_lines

    lines = locate_lines(text)
    return ({str(k): _number(v, file, lines.get(("settings", k)), str(k)) for k, v in st.items()}, unit,
            lines.get(("unit",)), {str(k): lines.get(("settings", k)) for k in st})


def _manifest_csv(text: str, file: str) -> tuple[dict[str, float], str, int | None, dict[str, int | None]]:
    """``file,setting[,unit]`` rows (a header row and ``#`` comments allowed): the settings by
    file name and their unit. Numbers follow the spectrum readers' rule (ASCII digits); a file
    listed twice and settings in two units are refused, naming the lines (found by a review: the
    last row won silently, and the last row's unit was given to every setting)."""
    from ..spectra.text_dialect import _is_number

    reader = csv.reader(io.StringIO(text))
    out: dict[str, float] = {}
    seen: dict[str, int] = {}
    units: dict[str, int] = {}
    first = True
    for r in reader:
        ln = reader.line_num
        if not r or not any(c.strip() for c in r) or r[0].lstrip().startswith("#"):
            continue
        if len(r) < 2:
            raise InputError("a manifest row needs a file name and a setting", file=file, line=ln, fix="write rows file,setting")
        name, val = r[0].strip(), r[1].strip()
        _refuse_csv_comma(val, r[2].strip() if len(r) > 2 else "", file, ln)
        if not _is_number(val, decimal_comma=False):
            if first:  # header row
                first = False
                continue
            raise InputError(f"setting {quote(val)} is not a number", file=file, line=ln,
                             fix="write a plain number with the digits 0-9")
        first = False
        v = float(val)
        if not np.isfinite(v):
            raise InputError(f"setting {quote(val)} is not a finite number", file=file, line=ln, fix="write a plain number")
        if name in seen:
            raise InputError(f"{quote(name)} is listed twice (lines {seen[name]} and {ln})", file=file, line=ln,
                             fix="list each file once")
        seen[name] = ln
        out[name] = v
        if len(r) > 2 and r[2].strip():
            units.setdefault(r[2].strip()[:16], ln)
    if len(units) > 1:
        (u1, l1), (u2, l2) = list(units.items())[:2]
        raise InputError(f"settings in two units: {quote(u1)} (line {l1}) and {quote(u2)} (line {l2})", file=file,
                         line=l2, fix="give every setting in one unit (one manifest per unit)")
    if not out:
        raise InputError("no settings listed", file=file, fix="write rows file,setting (e.g. dim_100.csv,100)")
    return out, next(iter(units), ""), next(iter(units.values()), None), dict(seen)


#: A comma between digits ("1,050", "1,5"), as the claims reader spots it.
_DIGIT_COMMA = re.compile(r"[0-9]+,[0-9]+")


def _refuse_csv_comma(val: str, after: str, file: str, line: int) -> None:
    """A CSV manifest's setting written with a comma: quoted ("1,050") it is one cell, unquoted
    (1,050) the comma splits it and the digits after it landed in the unit column (no unit
    starts with a digit)."""
    from .series import comma_fix, comma_problem

    m = _DIGIT_COMMA.search(val[:200])
    split = re.match(r"[0-9]+", after) if re.fullmatch(r"[0-9]+", val) else None
    if m is not None:
        written = m.group(0)
    elif split is not None:
        written = val + "," + split.group(0)
    else:
        return
    raise InputError(comma_problem("the manifest writes the setting", written), file=file, line=line,
                     fix=comma_fix(written))
