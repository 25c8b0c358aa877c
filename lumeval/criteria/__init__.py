"""Acceptance criteria: the model, its TOML loader, chromaticity regions, verdicts and claims.

Python API (the ``lumeval check``, ``lumeval criteria`` and ``lumeval claims`` commands are
thin layers over it)::

    import lumeval
    from lumeval.criteria import load_criteria
    criteria = load_criteria("tender_criteria.toml")
    result = lumeval.check(evaluation, criteria)   # CheckResult, vectorised over N spectra
    result.verdicts, result.exit_code

    claims_check = lumeval.claims(evaluation, "supplier_claims.toml")

``Criteria.evaluate(evaluation)`` is the model-level step :func:`lumeval.check` runs (without
measurement uncertainty).
"""

from __future__ import annotations

# The clause kinds beyond `figure` are registered with the package, so that every reader of a
# criteria file — `check`, `lot`, `criteria explain` — knows the same kinds, in this order.
# isort: off
from . import standard_clauses  # noqa: F401  (ansi_quadrangle, sdcm, tm30_design_intent)
from . import lot_clauses  # noqa: F401  (SCOPE = "lot")
from . import range_clauses  # noqa: F401  (series_shift, track_locus: judged over settings)
# isort: on
from .claims import Claims, ClaimsCheck, load_claims, parse_claims
from .loader import load_criteria, parse_criteria
from .model import CLAUSE_KINDS, ClauseKind, Criteria, register_clause_kind
from .verdicts import FAIL, INDETERMINATE, NOT_JUDGED, PASS, CheckResult, ClauseResult


def check(evaluation, criteria: Criteria) -> CheckResult:
    """Deprecated: use :func:`lumeval.check` (same arguments; it also takes files)."""
    import warnings

    warnings.warn("lumeval.criteria.check is deprecated; use lumeval.check (same arguments)", DeprecationWarning,
                  stacklevel=2)
    return criteria.evaluate(evaluation)


__all__ = [
    "CLAUSE_KINDS",
    "FAIL",
    "INDETERMINATE",
    "NOT_JUDGED",
    "PASS",
    "CheckResult",
    "Claims",
    "ClaimsCheck",
    "ClauseKind",
    "ClauseResult",
    "Criteria",
    "check",
    "load_claims",
    "load_criteria",
    "parse_claims",
    "parse_criteria",
    "register_clause_kind",
]
