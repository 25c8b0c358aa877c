"""Judge criteria under measurement uncertainty: the bridge between Monte Carlo and verdicts.

:func:`judge_with_uncertainty` takes the plain (simple-acceptance) verdicts of a criteria file,
propagates the instrument model to *the quantity each clause judges* (a figure, the signed
Δu'v' distance to an ANSI quadrangle, the number of SDCM steps...) by evaluating the clause on
every Monte Carlo draw, and re-decides every clause with the decision rule. Each clause result
then carries the standard uncertainty u of its judged quantity, the probability of
conformance p_c, the guard band and the 95 % coverage interval (in ``details``), and the rule
applied.

Where the settings come from (:func:`resolve_setup`): an ``--instrument`` file overrides the
criteria file's ``[instrument]`` / ``[monte_carlo]`` tables; the decision rule comes from the
criteria file's ``[decision]`` table (default simple acceptance). Without an instrument model
and with simple acceptance nothing is propagated and the check is the plain one. A guarded rule
without an instrument model uses the documented default model and says so.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..criteria.verdicts import NOT_VALID
from .decision import (
    FAIL,
    GUARDED_ACCEPTANCE,
    INDETERMINATE,
    PASS,
    DecisionRule,
    decide,
    margin_to_limits,
)
from .instrument import SEED_MAX, InstrumentModel, MonteCarloSettings, read_instrument_file
from .montecarlo import UncertaintyResult, propagate

#: Figures whose uncertainties every report lists (besides the judged quantities).
HEADLINE_FIGURES = ("x", "y", "u_prime", "v_prime", "cct_K", "duv", "Ra", "R9", "Rf", "Rg")

EXIT_CODES = (
    "0: every clause of every spectrum passes; 1: any clause fails or is indeterminate "
    "(indeterminate is never a pass); 2: bad input"
)


@dataclass(frozen=True)
class UncertaintySetup:
    """Instrument model, Monte Carlo settings and decision rule for one check.

    ``instrument`` is None when no model was given (then nothing is propagated unless the rule
    is guarded, in which case :attr:`model` gives the defaults)."""

    instrument: InstrumentModel | None = None
    settings: MonteCarloSettings = MonteCarloSettings()
    rule: DecisionRule = DecisionRule()
    notes: tuple[str, ...] = ()

    @property
    def active(self) -> bool:
        """True when uncertainties are to be propagated."""
        return self.instrument is not None or self.rule.guarded

    @property
    def model(self) -> InstrumentModel:
        return self.instrument or InstrumentModel()


def resolve_setup(criteria=None, instrument_path=None, *, seed: int | None = None,
                  draws: int | None = None) -> UncertaintySetup:
    """Combine the criteria file's ``[instrument]``, ``[monte_carlo]`` and ``[decision]`` tables
    with an instrument file and command-line overrides (``seed``, ``draws``).

    ``criteria.uncertainty`` (when the criteria loader provides it) is a dict with optional
    ``instrument`` (InstrumentModel), ``monte_carlo`` (MonteCarloSettings) and ``decision``
    (DecisionRule).
    """
    table = getattr(criteria, "uncertainty", None) or {}
    instrument = table.get("instrument")
    settings = table.get("monte_carlo") or MonteCarloSettings()
    rule = table.get("decision") or DecisionRule()
    notes: list[str] = []
    if instrument_path is not None:
        file_model, file_settings, file_has_mc = read_instrument_file(instrument_path)
        if instrument is not None:
            notes.append(f"instrument file {instrument_path} replaces the criteria file's [instrument] table")
        instrument = file_model
        if file_has_mc:  # the command-line file wins, even where it states the default values
            if table.get("monte_carlo") is not None:
                notes.append(f"instrument file {instrument_path} replaces the criteria file's [monte_carlo] table")
            settings = file_settings
    if seed is not None:
        if not 0 <= int(seed) <= SEED_MAX:
            from ..errors import UsageError, shown

            raise UsageError(f"--seed {shown(int(seed))} is {'negative' if int(seed) < 0 else 'too large'}",
                             fix=f"give a seed from 0 to {SEED_MAX}")
        settings = dataclasses.replace(settings, seed=int(seed))
    if draws is not None:
        if not 100 <= int(draws) <= 1_000_000:
            from ..errors import UsageError

            raise UsageError(f"--draws {draws} is outside 100 … 1000000",
                             fix="use at least 100 draws (2000 gives u to about ±1.6 %)")
        settings = dataclasses.replace(settings, draws=int(draws))
    if rule.guarded and instrument is None:
        notes.append("no instrument model given: lumeval's documented default model was used (docs/uncertainty.md)")
    setup = UncertaintySetup(instrument, settings, rule, tuple(notes))
    if setup.active:  # guard bands are about unrounded values: a clause with round_to is refused
        from ..criteria.rounding import refuse_under_uncertainty

        refuse_under_uncertainty(criteria, "the check" if instrument_path is None else "the check with --instrument")
    if (seed is not None or draws is not None) and not setup.active:
        from ..errors import UsageError

        raise UsageError("--seed and --draws set the Monte Carlo of a run under measurement uncertainty, and none was asked for",
                         fix="add --instrument FILE (or an [instrument] table or a guarded [decision] rule to the criteria "
                         "file), or drop --seed/--draws")
    return setup


def _clause_key(r) -> str:
    return f"clause:{r.clause_id}"


def _conform_key(r) -> str:
    return f"conforms:{r.clause_id}"


def judge_with_uncertainty(evaluation, criteria, setup: UncertaintySetup, *, plain=None, index_offset: int = 0,
                           progress=None):
    """Re-decide every per-sample clause of ``criteria`` under ``setup``.

    Parameters
    ----------
    evaluation : lumeval.engine.Evaluation
        The evaluated spectra.
    criteria : lumeval.criteria.Criteria
    setup : UncertaintySetup
    plain : CheckResult, optional
        ``criteria.evaluate(evaluation)`` if already computed.
    index_offset : int
        Position of the first spectrum in a larger run (lots evaluated in batches; see
        :func:`lumeval.uncertainty.montecarlo.propagate`).
    progress : callable, optional
        A progress listener (:mod:`lumeval.progress`), told of each spectrum's Monte Carlo draws.

    Returns
    -------
    (CheckResult, UncertaintyResult or None)
        The check with uncertainties, probabilities and the rule's outcomes (unchanged plain
        check and None when ``setup`` is not active).
    """
    if setup.active:
        from ..criteria.rounding import refuse_under_uncertainty

        refuse_under_uncertainty(criteria, "the check")
    plain = plain if plain is not None else criteria.evaluate(evaluation)
    if not setup.active or not plain.results:
        return plain, None

    def extra(ev):
        out = {}
        for r in criteria.evaluate(ev).results:
            m = np.asarray(r.measured, dtype=float)
            out[_clause_key(r)] = m
            # conformity indicator: its Monte Carlo mean is the fraction of draws inside the
            # tolerance interval, p_c as the integral of the PDF over it (JCGM 106:2012 §7.1)
            # evaluated on the draws without assuming a normal distribution
            # A draw where the quantity is undefined (e.g. CCT beyond |Duv| 0.05) does not lie in
            # the tolerance interval: it counts as non-conforming (0), never left out
            ok = np.isfinite(m)
            if r.lower is not None:
                ok &= m >= r.lower
            if r.upper is not None:
                ok &= m <= r.upper
            out[_conform_key(r)] = ok.astype(float)
        return out

    keys = tuple(_clause_key(r) for r in plain.results)
    unc = propagate(evaluation.spectra, setup.model, setup.settings, extra=extra, evaluation=evaluation,
                    index_offset=index_offset, stabilise=keys, progress=progress)
    k = setup.rule.coverage_factor
    results = []
    for r in plain.results:
        j = unc.index(_clause_key(r))
        u = unc.u[:, j]
        d = decide(r.measured, u, r.lower, r.upper, setup.rule)
        frac = unc.undefined_fraction[:, j]
        p_mc = unc.mean[:, unc.index(_conform_key(r))]
        # where draws left the quantity's domain the normal p_c (which sees only the defined
        # draws' u) overstates conformance: p_c is then the fraction of all draws inside the limits
        p_c = np.where(frac > 0, p_mc, d.p_conformance)
        outcome, notes = _rule_outcomes(r, d, u, frac, unc.draws, setup)
        reason = list(r.reason) if r.reason else [""] * len(outcome)
        for i, note in enumerate(notes):
            if note:
                reason[i] = f"{reason[i]}; {note}" if reason[i] else note
        details = dict(r.details)
        details.update({
            "u": u,
            "U": k * u,
            "guard_band": d.guard_band,
            "ci95_low": unc.low[:, j],
            "ci95_high": unc.high[:, j],
            "mc_mean": unc.mean[:, j],
            "p_conformance_mc": p_mc,
            "undefined_fraction": frac,
        })
        results.append(dataclasses.replace(
            r, outcome=outcome, reason=tuple(reason), uncertainty=u, p_conformance=p_c,
            decision_rule=setup.rule.summary(), details=details,
        ))
    info = uncertainty_info(setup, unc)
    check = dataclasses.replace(plain, results=tuple(results))
    if any(f.name == "uncertainty" for f in dataclasses.fields(check)):
        check = dataclasses.replace(check, uncertainty=info)
    return check, unc


def undefined_limit(setup: UncertaintySetup) -> float:
    """The largest fraction of undefined draws with which a guarded rule still decides: 1 − p
    (0.05 for the 95 % coverage probability). The guard band w = U stands for the 95 % spread
    of the judged quantity; when more than 1 − p of the draws have no value at all, not even
    the 95 % coverage interval can be made of values of the quantity, and u, U and w taken from
    the remaining draws describe a distribution the measurement does not have."""
    return 1.0 - setup.settings.coverage


def _rule_outcomes(r, d, u, frac, draws, setup: UncertaintySetup) -> tuple[tuple[str, ...], list[str]]:
    """The outcome of clause result ``r`` per spectrum under the rule (``d``: its decision from
    the measured values) and a note for each (empty when nothing to say).

    - Undefined figures and figures judged 'not valid' (outside their validity range) keep
      their plain outcome: no decision rule makes them conform.
    - Draws where the judged quantity is undefined: said, with how u and p_c were computed;
      under a guarded rule, a decision that rests on the guard band (a pass under guarded
      acceptance, a fail under guarded rejection) is not made when more than
      :func:`undefined_limit` of the draws are undefined: indeterminate.
    - A guarded decision whose margin lies within the Monte Carlo resolution of the guard
      band: said, advising more draws (:func:`guard_band_resolution`).
    """
    rule = setup.rule
    limit = undefined_limit(setup)
    margin = margin_to_limits(r.measured, r.lower, r.upper)
    n_def = np.asarray(draws, dtype=float) * (1.0 - frac)
    res = guard_band_resolution(u, n_def, rule)
    unit = f" {r.unit}" if r.unit and r.unit != "%" else (r.unit or "")
    outcome, notes = [], []
    for i, o in enumerate(d.outcome):
        if not np.isfinite(r.measured[i]) or r.outcome[i] == NOT_VALID:
            outcome.append(r.outcome[i])
            notes.append("")
            continue
        said = []
        on_guard = rule.guarded and o == (PASS if rule.rule == GUARDED_ACCEPTANCE else FAIL)
        blocked = False  # not decided: too many draws undefined
        if frac[i] > 0:
            said.append(f"the judged quantity was undefined (outside its domain) in {frac[i] * 100:.1f} % of the "
                        f"{int(draws[i])} Monte Carlo draws: u, U and the 95 % interval are from the "
                        f"{int(round(n_def[i]))} defined draws only; p_c is the fraction of all draws inside the limits "
                        "(an undefined draw counts as not conforming)")
            if on_guard and frac[i] > limit:
                o, blocked = INDETERMINATE, True
                said.append(f"more than {limit * 100:g} % of the draws undefined: a guarded rule does not decide from "
                            "the remaining draws")
        w = d.guard_band[i]
        # the side of the limit where the guard band decides (inside for guarded acceptance,
        # outside for guarded rejection): pass/indeterminate or fail/indeterminate hangs on w
        guard_side = margin[i] >= 0 if rule.rule == GUARDED_ACCEPTANCE else margin[i] < 0
        if rule.guarded and guard_side and not blocked and np.isfinite(res[i]) and abs(abs(margin[i]) - w) < res[i]:
            said.append(f"the margin to the limit ({margin[i]:+.3g}{unit}) is within the Monte Carlo resolution "
                        f"(±{res[i]:.2g}{unit}) of the guard band w = {w:.3g}{unit}: another seed may decide otherwise; "
                        "use more draws (--draws, or draws = \"adaptive\")")
        outcome.append(o)
        notes.append("; ".join(said))
    return tuple(outcome), notes


def guard_band_resolution(u, defined_draws, rule: DecisionRule) -> np.ndarray:
    """How far a guard band w = r·k·u taken from M Monte Carlo draws may lie from the w of
    infinitely many: 2·r·k·u/√(2(M − 1)).

    u/√(2(M − 1)) is the standard deviation of a sample standard deviation from M draws of a
    normal quantity (to first order in 1/M; the same rule docs/uncertainty.md gives, ±1.6 % for
    M = 2000), so r·k·u/√(2(M − 1)) is that of w; the factor 2 follows the stabilisation test of
    JCGM 101:2008 §7.9.4 (twice the standard deviation of a result within the numerical
    tolerance; quoted from memory). NaN for a simple rule, u = 0 or fewer than 2 draws."""
    u = np.asarray(u, dtype=float)
    m = np.asarray(defined_draws, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = 2.0 * rule.guard_band_factor * rule.coverage_factor * u / np.sqrt(2.0 * (m - 1.0))
    ok = rule.guarded & (u > 0) & (m >= 2)
    return np.where(ok, out, np.nan)


def uncertainty_info(setup: UncertaintySetup, unc: UncertaintyResult | None) -> dict:
    """A JSON-ready description of the model, the settings, the rule and headline uncertainties."""
    s = setup.settings
    info: dict[str, Any] = {
        "decision_rule": setup.rule.rule,
        "rule_text": setup.rule.describe(),
        "guard_band_factor": setup.rule.guard_band_factor,
        "coverage_factor": setup.rule.coverage_factor,
        "instrument": setup.model.as_dict(),
        "monte_carlo": {
            "method": "JCGM 101:2008 Monte Carlo; u = standard deviation of the draws where the quantity is "
                      "defined; probabilistically symmetric coverage interval (JCGM 101 §7.7) of those draws; "
                      "p_conformance_mc = fraction of all draws inside the limits (undefined draws do not conform)",
            "draws": "adaptive" if s.adaptive else s.draws,
            "seed": s.seed,
            "coverage_probability": s.coverage,
        },
        "exit_codes": EXIT_CODES,
        "notes": list(setup.notes),
    }
    if unc is not None:
        info["monte_carlo"]["draws_used"] = [int(m) for m in unc.draws]
        info["monte_carlo"]["stabilised"] = [bool(b) for b in unc.stabilised]
        figs = {}
        for name in HEADLINE_FIGURES:
            if name in unc.quantities:
                o = unc.of(name)
                figs[name] = {k: [None if not np.isfinite(v) else float(v) for v in o[k]]
                              for k in ("measured", "u", "low", "high", "undefined_fraction")}
        info["figures"] = figs
        info["notes"] = list(setup.notes) + list(unc.notes)
    info["notes"] += draws_notes(s, unc)
    return info


#: Fewest draws per spectrum without a caution: M ≥ 100/(1 − p) for p = 0.95, the basis
#: docs/uncertainty.md gives for a 95 % coverage interval (JCGM 101:2008, quoted from memory).
MIN_DRAWS = 2000

#: Spectra named in one note before "and N more".
_NAMES_SHOWN = 5


def draws_notes(settings: MonteCarloSettings, unc: Any) -> list[str]:
    """Notes on the Monte Carlo itself, for every output format: fewer than :data:`MIN_DRAWS`
    draws for some spectrum; an adaptive run that did not stabilise (each such spectrum with the
    draws it used). ``unc``: an :class:`UncertaintyResult` (or anything with its ``draws``,
    ``stabilised`` and ``names``), or None. Spectrum names are text from files: the renderers
    escape them."""
    out = []
    used = [int(m) for m in unc.draws] if unc is not None else ([] if settings.adaptive else [int(settings.draws or 0)])
    few = sorted({m for m in used if m < MIN_DRAWS})
    if few:
        # the adaptive procedure stops at max_draws: --draws would switch it off (a review found the two
        # notes of an adaptive run giving contradicting advice)
        advice = (f"raise max_draws in [monte_carlo] to {MIN_DRAWS} or more" if settings.adaptive
                  else f"use --draws {MIN_DRAWS} or more")
        out.append(f"only {', '.join(map(str, few))} Monte Carlo draws per spectrum, fewer than the {MIN_DRAWS} that "
                   f"a 95 % coverage interval needs (M ≥ 100/(1 − p), JCGM 101:2008; docs/uncertainty.md): u, U, the "
                   f"guard band and p_c are rough; {advice}")
    if unc is not None and not all(bool(b) for b in unc.stabilised):
        bad = [i for i, b in enumerate(unc.stabilised) if not b]
        named = ", ".join(f"{unc.names[i]} ({int(unc.draws[i])} draws)" for i in bad[:_NAMES_SHOWN])
        more = f" and {len(bad) - _NAMES_SHOWN} more" if len(bad) > _NAMES_SHOWN else ""
        out.append(f"the adaptive Monte Carlo did not stabilise (JCGM 101:2008 §7.9) within max_draws = "
                   f"{settings.max_draws} for {len(bad)} {'spectra' if len(bad) != 1 else 'spectrum'}: {named}{more}; their "
                   "u, U and guard bands may be off in the last digit shown: raise max_draws in [monte_carlo]")
    return out


def _lot_draws(batches, names):
    """(draws used, stabilised) of every sample of a lot, joined from its batches' (draws,
    stabilised) in the order of ``names``; None without, or when they do not cover the lot
    (every batch of a lot under uncertainty has its draws)."""
    if not batches:
        return None
    draws = np.concatenate([np.asarray(d, dtype=np.int64) for d, _ in batches])
    stabilised = np.concatenate([np.asarray(s, dtype=bool) for _, s in batches])
    return (draws, stabilised) if draws.size == len(names) and draws.size else None


def lot_draws_notes(settings: MonteCarloSettings, batches, names) -> list[str]:
    """:func:`draws_notes` of a lot whose Monte Carlo ran batch by batch: ``batches`` holds each
    batch's (draws used, stabilised) per sample, in the order of ``names`` (the lot's sample
    names). A fixed number of draws is already said by :func:`uncertainty_info` (nothing
    here); for the adaptive procedure, the samples with fewer than :data:`MIN_DRAWS` draws and
    those that did not stabilise are said as for a check (found by a review: a lot said
    neither)."""
    got = _lot_draws(batches, names) if settings.adaptive else None
    if got is None:
        return []
    from types import SimpleNamespace

    return draws_notes(settings, SimpleNamespace(draws=got[0], stabilised=got[1], names=names))


def lot_draws_summary(batches, names) -> dict:
    """For a lot's JSON ``uncertainty.monte_carlo``: the fewest and most draws a sample used and
    every sample whose adaptive procedure did not stabilise, with its draws (``batches`` as
    :func:`lot_draws_notes` takes them; {} without). A check gives the per-spectrum arrays; a
    lot gave neither (found by a review)."""
    got = _lot_draws(batches, names)
    if got is None:
        return {}
    draws, stabilised = got
    return {"draws_used_min": int(draws.min()), "draws_used_max": int(draws.max()),
            "not_stabilised": [{"sample": names[i], "draws": int(draws[i])} for i in np.flatnonzero(~stabilised).tolist()]}
