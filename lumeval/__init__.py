"""lumeval: judge a light source's colour quality from its measured spectrum.

The public Python API mirrors the command line. Names are resolved lazily so that
``import lumeval`` (and ``lumeval --help``) stays light: colour-science is imported only when
a computation needs it.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

#: public name -> module that defines it. Add an entry when a new public function lands.
_API = {
    # errors
    "LumevalError": "lumeval.errors",
    "InputError": "lumeval.errors",
    "CriteriaError": "lumeval.errors",
    "ComputationError": "lumeval.errors",
    "GridError": "lumeval.errors",
    # spectra
    "SpectrumSet": "lumeval.spectra.model",
    "read_spectra": "lumeval.spectra.read", "read_many": "lumeval.spectra.read", "prepare": "lumeval.spectra.prepare",
    "prepare_groups": "lumeval.spectra.prepare", "PreparedSpectra": "lumeval.spectra.prepare",
    "write_spectra": "lumeval.spectra.write", "validate_report": "lumeval.spectra.validate",
    # the main job
    "evaluate": "lumeval.engine",
    "Evaluation": "lumeval.engine",
    "inspect": "lumeval.api", "check": "lumeval.api", "claims": "lumeval.api", "lot": "lumeval.api", "convert": "lumeval.api",
    "CheckRun": "lumeval.api",
    "load_criteria": "lumeval.criteria", "load_claims": "lumeval.criteria",
    "mix_files": "lumeval.tunable.api", "series_files": "lumeval.tunable.api",
    "run_lot": "lumeval.lots.run", "LotRun": "lumeval.lots.run",
    "lot_statistics": "lumeval.lots.statistics", "lot_from_evaluation": "lumeval.lots.statistics",
    # the production history (docs/history.md)
    "lot_record": "lumeval.store.record", "record_lot": "lumeval.store.record", "list_lots": "lumeval.store.query",
    "trend": "lumeval.store.trend",
    "write_html_report": "lumeval.render.html", "write_plots": "lumeval.render.html", "write_outputs": "lumeval.render.html",
    # metrics
    "planck_exitance": "lumeval.metrics.planck",
    "tristimulus": "lumeval.metrics.colorimetry",
    "cct_duv_ohno": "lumeval.metrics.colorimetry",
    "planckian_uv": "lumeval.metrics.colorimetry",
    "tm30": "lumeval.metrics.tm30", "TM30Result": "lumeval.metrics.tm30", "cie2017_rf": "lumeval.metrics.tm30",
    "photometry": "lumeval.metrics.photometry", "PhotometryResult": "lumeval.metrics.photometry",
    "InstrumentModel": "lumeval.uncertainty", "load_instrument": "lumeval.uncertainty", "propagate_uncertainty": "lumeval.uncertainty", "DecisionRule": "lumeval.uncertainty",
}

#: former public names -> the API function that replaces them (same arguments; they warn).
_RENAMED = {"inspect_files": "inspect", "check_files": "check", "convert_file": "convert"}

__all__ = sorted(_API) + ["__version__"]


def __getattr__(name: str):
    module = _API.get(name)
    if name in _RENAMED:
        from ._deprecation import renamed

        return renamed(getattr(importlib.import_module("lumeval.api"), _RENAMED[name]), f"lumeval.{name}",
                       f"lumeval.{_RENAMED[name]}")
    if module is None:
        raise AttributeError(f"module 'lumeval' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return __all__
