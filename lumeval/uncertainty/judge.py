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
from .decision import DecisionRule, decide
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
            ok = np.ones(m.shape, dtype=bool)
            if r.lower is not None:
                ok &= m >= r.lower
            if r.upper is not None:
                ok &= m <= r.upper
            out[_conform_key(r)] = np.where(np.isfinite(m), ok.astype(float), np.nan)
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
        # undefined figures and figures judged 'not valid' (outside their validity range) keep
        # their plain outcome: no decision rule makes them conform
        outcome = tuple(o if np.isfinite(m) and r.outcome[i] != NOT_VALID else r.outcome[i]
                        for i, (o, m) in enumerate(zip(d.outcome, r.measured)))
        reason = list(r.reason) if r.reason else [""] * len(outcome)
        for i, frac in enumerate(unc.undefined_fraction[:, j]):
            if np.isfinite(r.measured[i]) and frac > 0:
                extra_note = (f"the judged quantity was undefined in {frac * 100:.1f} % of the Monte Carlo draws; "
                              "its uncertainty is from the others")
                reason[i] = f"{reason[i]}; {extra_note}" if reason[i] else extra_note
        details = dict(r.details)
        details.update({
            "u": u,
            "U": k * u,
            "guard_band": d.guard_band,
            "ci95_low": unc.low[:, j],
            "ci95_high": unc.high[:, j],
            "mc_mean": unc.mean[:, j],
            "p_conformance_mc": unc.mean[:, unc.index(_conform_key(r))],
        })
        results.append(dataclasses.replace(
            r, outcome=outcome, reason=tuple(reason), uncertainty=u, p_conformance=d.p_conformance,
            decision_rule=setup.rule.summary(), details=details,
        ))
    info = uncertainty_info(setup, unc)
    check = dataclasses.replace(plain, results=tuple(results))
    if any(f.name == "uncertainty" for f in dataclasses.fields(check)):
        check = dataclasses.replace(check, uncertainty=info)
    return check, unc


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
            "method": "JCGM 101:2008 Monte Carlo; u = standard deviation of the draws; "
                      "probabilistically symmetric coverage interval (JCGM 101 §7.7)",
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
                              for k in ("measured", "u", "low", "high")}
        info["figures"] = figs
        info["notes"] = list(setup.notes) + list(unc.notes)
    return info
