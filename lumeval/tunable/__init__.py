"""Tunable-white and dimmable products: channel mixes and measured series (pure computation).

* :mod:`lumeval.tunable.mix` — the spectrum of a multi-channel luminaire at drive weights w is
  modelled as Σ wᵢ·Sᵢ (linear in radiant power); weights are solved for target CCT (and, with
  three or more channels, target Duv), maximising a chosen figure.
* :mod:`lumeval.tunable.series` — spectra of one product measured at several settings (CCT
  setpoints, dimming levels, drive currents): settings from names, metadata or a manifest,
  the chromaticity trajectory and each setting's Δu′v′ from a reference.
* :mod:`lumeval.tunable.judge` — criteria over a range of settings (``over = [low, high]``,
  ``series_shift``, ``track_locus``; the clause kinds live in
  :mod:`lumeval.criteria.range_clauses`).

Nothing here prints or renders, and only :mod:`lumeval.tunable.api` (the Python twins of
``lumeval mix`` and ``lumeval series``, importing no CLI library) reads files.
"""
