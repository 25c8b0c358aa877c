"""Measurement uncertainty of the figures and decisions under uncertainty.

- :mod:`.instrument`: the instrument model (what the spectroradiometer may get wrong) and its
  TOML loader;
- :mod:`.montecarlo`: Monte Carlo propagation per JCGM 101:2008 (GUM Supplement 1);
- :mod:`.decision`: decision rules per ISO 14253-1:2017 / JCGM 106:2012 (simple acceptance,
  guarded acceptance, guarded rejection) and probabilities of conformance.

See docs/uncertainty.md for the user guide and a worked example.
"""

from .decision import (
    RULES,
    Decision,
    DecisionRule,
    decide,
    decide_margin,
    probability_of_conformance,
    rule_from_table,
)
from .instrument import (
    InstrumentModel,
    MonteCarloSettings,
    instrument_from_table,
    load_instrument,
    settings_from_table,
)
from .montecarlo import UncertaintyResult, draw_spectra, propagate, summarise

#: The name under which :func:`propagate` is re-exported from ``lumeval``.
propagate_uncertainty = propagate

__all__ = [
    "RULES",
    "Decision",
    "DecisionRule",
    "InstrumentModel",
    "MonteCarloSettings",
    "UncertaintyResult",
    "decide",
    "decide_margin",
    "draw_spectra",
    "instrument_from_table",
    "load_instrument",
    "probability_of_conformance",
    "propagate",
    "propagate_uncertainty",
    "rule_from_table",
    "settings_from_table",
    "summarise",
]
