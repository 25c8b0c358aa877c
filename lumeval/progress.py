"""Progress of long runs, as the API reports it: stage, count done, count in all.

The computation and the API never print (docs: DEVELOPERS.md, "Architecture"); a caller that
wants to show progress passes a *listener*, any callable ``listener(stage, done, total)``:

- ``stage``: one of :data:`STAGES` — :data:`READING` (files), :data:`EVALUATING` (spectra),
  :data:`MONTE_CARLO` (spectra whose draws are done), :data:`WRITING` (report figures) and
  :data:`SOLVING` (setpoints of a channel mix whose weights are found);
- ``done``: how many of the stage's units are finished (it only grows within one stage);
- ``total``: how many there are in all, or None when not known yet.

A listener is called from the thread that runs the API function, after each unit (a file, a
chunk of spectra, one spectrum's Monte Carlo draws, one figure); it should return quickly and
must not raise. The command line's listener (``lumeval.commands._progress``) draws one bar per
stage on stderr; a notebook can pass ``print`` or its own widget::

    import lumeval
    run = lumeval.lot(["lot/*.csv"], "lot.toml", progress=lambda s, k, n: print(s, k, n))

This module imports nothing heavy (no rich, no numpy).
"""

from __future__ import annotations

from collections.abc import Callable

#: Reading the input files (unit: files).
READING = "reading"
#: Computing every figure (unit: spectra).
EVALUATING = "evaluating"
#: Monte Carlo propagation of the instrument model (unit: spectra whose draws are evaluated).
MONTE_CARLO = "Monte Carlo"
#: Writing the report: figures drawn and written (unit: figures).
WRITING = "writing report"
#: Solving channel weights of a mix (unit: setpoints whose weights are found).
SOLVING = "solving"

#: The stages in the order a run goes through them, with the unit each one counts.
STAGES: dict[str, str] = {READING: "files", SOLVING: "setpoints", EVALUATING: "spectra", MONTE_CARLO: "spectra",
                          WRITING: "figures"}

#: A progress listener: ``listener(stage, done, total)``.
Listener = Callable[[str, int, "int | None"], None]


def report(listener: Listener | None, stage: str, done: int, total: int | None) -> None:
    """Call ``listener`` (nothing when it is None)."""
    if listener is not None:
        listener(stage, int(done), None if total is None else int(total))


def offset(listener: Listener | None, start: int, total: int | None) -> Listener | None:
    """A listener for one part of a larger run: counts of the part (``done`` of its own) are
    passed on as ``start + done`` of ``total`` (a lot evaluated batch by batch reports its Monte
    Carlo progress over the whole lot)."""
    if listener is None:
        return None

    def shifted(stage: str, done: int, _total: int | None) -> None:
        listener(stage, start + int(done), total)

    return shifted


def counting(listener: Listener | None, stage: str, *functions: Callable) -> tuple[Callable, ...]:
    """``functions`` wrapped so that each call, once done, reports one more unit of ``stage``
    (one count shared by all of them; totals come from an :func:`offset` listener). Without a
    listener the functions are returned unchanged."""
    if listener is None:
        return functions
    done = [0]

    def wrap(fn: Callable) -> Callable:
        def counted(*args, **kwargs):
            out = fn(*args, **kwargs)
            done[0] += 1
            listener(stage, done[0], None)
            return out

        return counted

    return tuple(wrap(fn) for fn in functions)
