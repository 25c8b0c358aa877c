"""lumeval's Python API: each command of the command line as one function, and nothing of the
command line (no typer, click or rich is imported here or below).

::

    import lumeval
    ev = lumeval.inspect(["a.csv", "b.xml"])                # Evaluation: every figure
    result = lumeval.check(["a.csv"], "tender.toml")        # CheckResult: verdicts, exit_code
    result = lumeval.check(ev, criteria)                    # the same for an Evaluation in hand
    claims = lumeval.claims(["a.csv"], "supplier.toml")     # ClaimsCheck
    run = lumeval.lot(["lot/*.csv"], "lot_criteria.toml")   # LotRun: statistics, yield, outliers
    lumeval.convert("a.csv", "a.xml")                       # number of spectra written

The commands in :mod:`lumeval.commands` parse their options, call these functions, render the
result (:mod:`lumeval.render`) and turn it into an exit code. Bad input raises
:class:`lumeval.errors.InputError` / :class:`lumeval.errors.CriteriaError` /
:class:`lumeval.errors.UsageError` naming the file, line and field.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Union

if TYPE_CHECKING:  # pragma: no cover
    from ..criteria.claims import Claims, ClaimsCheck
    from ..criteria.model import Criteria
    from ..criteria.verdicts import CheckResult
    from ..engine import Evaluation
    from ..lots.run import LotRun
    from ..progress import Listener

PathLike = Union[str, "os.PathLike[str]"]

__all__ = ["CheckRun", "check", "check_run", "claims", "convert", "inspect", "lot"]


def inspect(paths: Sequence[PathLike], *, progress: Listener | None = None) -> Evaluation:
    """Read, prepare and evaluate the spectra in ``paths`` (``lumeval inspect``).

    Each spectrum is evaluated on its own computation grid (see
    :func:`lumeval.spectra.prepare.prepare_groups`); names are made unique within the run.
    Returns a :class:`lumeval.engine.Evaluation`; raises :class:`lumeval.errors.InputError`
    naming the file and the problem when a file cannot be used. ``progress``: a listener
    (:mod:`lumeval.progress`) told of each file read and each chunk evaluated.
    """
    from ..engine import evaluate
    from ..progress import READING, report
    from ..spectra.read import read_spectra, unique_names

    seen: dict[str, int] = {}
    paths = list(paths)
    sets = []
    for k, p in enumerate(paths):
        sets.append(unique_names(read_spectra(p), seen))  # type: ignore[arg-type]  # read_spectra takes any path (Path(path))
        report(progress, READING, k + 1, len(paths))
    return evaluate(sets, progress=progress)


def _criteria(criteria: Criteria | PathLike) -> Criteria:
    from ..criteria.model import Criteria

    if isinstance(criteria, Criteria):
        return criteria
    from ..criteria.loader import load_criteria

    return load_criteria(criteria)


def _evaluation(spectra: Evaluation | Sequence[PathLike], progress: Listener | None = None) -> Evaluation:
    from ..engine import Evaluation

    return spectra if isinstance(spectra, Evaluation) else inspect(spectra, progress=progress)


@dataclass(frozen=True)
class CheckRun:
    """What one ``lumeval check`` found: the criteria, the evaluation and the verdicts."""

    criteria: Criteria
    evaluation: Evaluation
    result: CheckResult


def check_run(spectra: Evaluation | Sequence[PathLike], criteria: Criteria | PathLike,
              instrument: PathLike | None = None, *, seed: int | None = None,
              draws: int | None = None, progress: Listener | None = None) -> CheckRun:
    """:func:`check`, keeping the criteria and the evaluation beside the verdicts (for reports)."""
    from ..uncertainty.judge import judge_with_uncertainty, resolve_setup

    crit = _criteria(criteria)  # first: a bad criteria file is reported before any computation
    crit.require_clauses_for("check")
    setup = resolve_setup(crit, instrument, seed=seed, draws=draws)
    ev = _evaluation(spectra, progress)
    if setup.active:
        return CheckRun(crit, ev, judge_with_uncertainty(ev, crit, setup, progress=progress)[0])
    return CheckRun(crit, ev, crit.evaluate(ev))


def check(spectra: Evaluation | Sequence[PathLike], criteria: Criteria | PathLike,
          instrument: PathLike | None = None, *, seed: int | None = None,
          draws: int | None = None, progress: Listener | None = None) -> CheckResult:
    """Judge spectra against acceptance criteria (``lumeval check``).

    ``spectra`` are files (read and evaluated) or an :class:`~lumeval.engine.Evaluation`;
    ``criteria`` a criteria file or a parsed :class:`~lumeval.criteria.model.Criteria` (read
    first, so a bad criteria file is reported before any spectrum is computed). Returns a
    :class:`lumeval.criteria.verdicts.CheckResult` (``verdicts``, ``exit_code``).

    With an instrument model (``instrument`` file, or an ``[instrument]`` table in the criteria
    file) or a guarded ``[decision]`` rule, every clause is decided under measurement
    uncertainty (:func:`lumeval.uncertainty.judge.judge_with_uncertainty`,
    docs/uncertainty.md); ``seed`` and ``draws`` override the Monte Carlo settings.
    ``progress``: a listener (:mod:`lumeval.progress`) told of each file read, each chunk
    evaluated and each spectrum's Monte Carlo draws.
    """
    return check_run(spectra, criteria, instrument, seed=seed, draws=draws, progress=progress).result


def claims(spectra: Evaluation | Sequence[PathLike], claims: Claims | PathLike) -> ClaimsCheck:
    """Check a supplier's datasheet claims against the spectra (``lumeval claims``)."""
    from ..criteria.claims import Claims, load_claims

    c = claims if isinstance(claims, Claims) else load_claims(claims)
    return c.check(_evaluation(spectra))


def lot(paths: Sequence[PathLike], criteria: Criteria | PathLike | None = None, *,
        instrument: PathLike | None = None, seed: int | None = None, draws: int | None = None,
        keep_evaluation: bool = False, progress: Listener | None = None,
        **options: Any) -> LotRun:
    """Judge a production lot (``lumeval lot``): every sample's figures and verdicts, the lot
    statistics, yield and outliers, and the lot clauses.

    ``paths`` are files, folders and glob patterns (:func:`lumeval.lots.inputs.expand_inputs`,
    whose result may also be given);
    ``criteria`` a criteria file or parsed criteria (optional). With ``instrument`` (or an
    ``[instrument]`` table) each sample's clauses are decided under measurement uncertainty.
    ``keep_evaluation`` keeps the judged samples' spectra for a report that draws them.
    Other keyword arguments go to :func:`lumeval.lots.run.run_lot`. Unreadable inputs do not
    raise: they are listed in ``LotRun.unreadable`` (and make ``exit_code`` 2). ``progress``: a
    listener (:mod:`lumeval.progress`) told of each file read, each batch evaluated and each
    sample's Monte Carlo draws.
    """
    from ..lots.run import run_lot

    crit = _criteria(criteria) if criteria is not None else None
    if crit is not None:
        crit.require_clauses_for("lot", ("sample", "lot"))
    setup = None
    if crit is not None or instrument is not None or seed is not None or draws is not None:
        from ..uncertainty.judge import resolve_setup

        setup = resolve_setup(crit, instrument, seed=seed, draws=draws)
    return run_lot(paths, crit, uncertainty=setup, keep_evaluation=keep_evaluation, progress=progress, **options)


def _refuse_non_finite(spectra) -> None:
    """Refuse spectra holding a missing or infinite value (a Parquet archive's null, NaN or inf:
    the text readers refuse such cells when they read): no output format would hold a number
    every lumeval reader takes (JSON has none for them; CSV and TM-27 would write "nan")."""
    import numpy as np

    from ..errors import InputError

    bad = ~np.isfinite(np.asarray(spectra.values, dtype=float))
    if not bad.any():
        return
    i, j = (int(x) for x in np.argwhere(bad)[0])
    v = float(spectra.values[i, j])
    what = "missing (null or NaN)" if v != v else f"infinite ({v})"
    raise InputError(f"the value at {spectra.wavelengths_nm[j]:g} nm is {what}; {int(bad.any(axis=1).sum())} "
                     "spectrum(s) hold such values", file=spectra.sources[i],
                     fix="fill or drop those values (or those spectra) before converting")


def convert(src: str | Path, dst: str | Path, *, column: str | None = None, force: bool = False,
            notes: list[str] | None = None) -> int:
    """The ``lumeval convert`` command as a function: read ``src`` and write it to ``dst``.

    The output format follows ``dst``'s extension (.csv, .xml/.spdx, .json, .parquet). Data are written
    unchanged (no interpolation or clipping: conversion is not preparation) with Python's
    shortest round-trip number formatting, so CSV → TM-27 XML → CSV reproduces the numbers
    exactly; header metadata travel along. The output is written atomically; the input is
    never overwritten; an existing output is replaced only with ``force``.

    What the output format cannot keep as it is (a name with control characters or a line
    break, a formula-like name quoted for spreadsheets, CSV's one metadata block) is written as
    the format can hold it and said, in words, in ``notes`` when a list is given
    (:func:`lumeval.spectra.write.conversion_notes`; ``lumeval convert`` prints them).

    Returns the number of spectra written. Raises :class:`lumeval.errors.InputError` /
    :class:`lumeval.errors.UsageError` (nothing written).
    """
    from .._io import write_bytes
    from ..errors import UsageError
    from ..spectra.read import read_spectra
    from ..spectra.write import kind_for, serialise

    src_p, dst_p = Path(src), Path(dst)
    kind = kind_for(dst_p)
    import os

    try:
        same = src_p.resolve() == dst_p.resolve() or (
            dst_p.exists() and src_p.exists() and os.path.samefile(src_p, dst_p)
        )
    except OSError:
        same = False
    if same:
        raise UsageError(
            "the output would overwrite the input", file=str(dst), fix="give a different output file name"
        )
    from .._io import check_targets, refuse_existing

    src_is_folder = src_p.is_dir()
    # a folder (a path ending in a separator too: given as written, which Path() would drop), a
    # device, a missing folder, an input file, a Parquet file in an input archive folder (a new
    # .parquet there would join it): before reading
    check_targets(files={"OUT": dst if isinstance(dst, str) else dst_p}, inputs=[src_p] if src_is_folder else [])
    refuse_existing(dst_p, "OUT", force=force)
    spectra = read_spectra(src_p)
    if column is not None:
        # the names as every other command shows them: a repeated name suffixed (" (2)"...), so
        # that each spectrum can be chosen (the first of two spectra named alike was taken, the
        # second could not be)
        from ..spectra.read import unique_names

        spectra = unique_names(spectra, {})
        matches = [i for i, n in enumerate(spectra.names) if n == column]
        if not matches:
            from .._paths import display_path

            raise UsageError(
                f"no spectrum named {display_path(column)!r} (there are: {', '.join(spectra.names)[:200]})",
                file=str(src),
                fix="give one of these names to --column",
            )
        spectra = spectra.subset(matches[:1])
    _refuse_non_finite(spectra)
    data = serialise(spectra, kind)
    write_bytes(dst_p, data, option="OUT")
    if notes is not None:
        from ..spectra.write import conversion_notes

        notes.extend(conversion_notes(spectra, kind))
    return len(spectra)
