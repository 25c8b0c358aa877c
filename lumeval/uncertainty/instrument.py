"""The instrument model: what the spectroradiometer that measured the data may have got wrong.

An :class:`InstrumentModel` lists the effects that move a measured spectral distribution away
from the true one, each as the parameter of a probability distribution (JCGM 100:2008 §4, the
"Type B" evaluation: a standard uncertainty taken from a specification, a calibration
certificate or experience). The Monte Carlo propagation (:mod:`lumeval.uncertainty.montecarlo`)
draws perturbed spectra from these distributions.

Every parameter is dimensionless or in nanometres, never in the file's spectral unit, so one
model serves relative and absolute data alike. Where a typical value is given it is "common
practice, no source": a value the trade quotes for compact array spectroradiometers used in
integrating spheres and goniophotometers, not read in a standard. Replace the defaults with
your instrument's calibration certificate or data sheet whenever you have them.

The TOML form (an instrument file, or the same tables inside a criteria file)::

    [instrument]
    name = "sphere spectroradiometer, lab 2"   # free text, shown in reports
    wavelength_offset_nm = 0.2    # standard uncertainty of the wavelength scale (nm)
    noise_relative = 0.005        # random noise, fraction of the signal at each wavelength
    noise_absolute = 0.0005       # random noise, fraction of the spectrum's peak
    bandwidth_nm = 2.0            # FWHM of the triangular slit function (nm)
    photometric_scale = 0.02      # relative standard uncertainty of the absolute scale
    stray_light = 0.0005          # half-width of residual stray light, fraction of the peak

    [monte_carlo]
    draws = 2000                  # or "adaptive" (JCGM 101:2008 §7.9)
    seed = 1

Unknown keys are errors (a misspelt key would otherwise silently leave a default in force).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from pathlib import Path

from ..errors import FINITE_FIX, CriteriaError, InputError, finite_float, shown


@dataclass(frozen=True)
class InstrumentModel:
    """Uncertainty parameters of a spectroradiometer (all standard uncertainties or half-widths).

    Attributes
    ----------
    wavelength_offset_nm : float
        Standard uncertainty (nm) of a *systematic* offset of the wavelength scale: every
        wavelength the instrument reports is off by the same unknown amount e, drawn once per
        Monte Carlo trial from N(0, u²). Physically: the residual error of the wavelength
        calibration (line-lamp fit, temperature drift of the grating/array). Typical: 0.1-0.3 nm
        for a calibrated array spectroradiometer (common practice, no source). Default 0.2 nm.
    noise_relative : float
        Standard deviation of random noise as a fraction of the signal at each wavelength
        (independent from wavelength to wavelength): shot noise and pixel-response
        non-uniformity that scale with the signal. Typical 0.002-0.01 (common practice, no
        source). Default 0.005.
    noise_absolute : float
        Standard deviation of signal-independent random noise (dark and read-out noise) as a
        fraction of the spectrum's peak value, independent between wavelengths. Expressed
        relative to the peak so that it does not depend on the file's unit. Typical
        1e-4-1e-3 (common practice, no source). Default 5e-4.
    bandwidth_nm : float
        Full width at half maximum (nm) of the instrument's bandpass, taken as a triangular slit
        function. The measured spectrum is the true one convolved with it; to second order in
        the bandwidth b that convolution adds (b²/12)·S''(λ) (a triangle of FWHM b has
        variance b²/6). For b equal to the sampling interval this is the term removed by the
        Stearns & Stearns (1988) three-point bandpass correction, which CIE 214:2014 discusses
        for the effect of bandwidth (both quoted from memory). lumeval does not change the data
        it judges: it treats the (uncorrected, or imperfectly corrected) bandpass effect as a
        symmetric rectangular uncertainty of that size, see
        :func:`lumeval.uncertainty.montecarlo.draw_spectra`. Typical 1-5 nm for array
        spectroradiometers (common practice, no source). Default 2 nm. Set 0 when the data were
        bandpass-corrected and you consider the residual negligible.
    photometric_scale : float
        Relative standard uncertainty of the absolute radiometric scale (the calibration
        lamp's certificate, sphere responsivity). It multiplies the whole spectrum by one
        factor, so it changes only the absolute figures (illuminance or luminance, melanopic
        EDI or EDL, for data in absolute units); every other figure (chromaticity, CCT, Duv,
        CRI, TM-30, LER, S/P, DER, peak) is a ratio and is unaffected. Typical 0.02-0.05 (common practice, no source). Default 0.02.
    stray_light : float
        Half-width of a rectangular distribution of residual stray light, as a fraction of the
        spectrum's peak, taken as flat across wavelength (in single-grating array instruments
        stray light is a broad background proportional to the total signal). It matters where
        the signal is low (the blue and deep red ends). Typical 1e-4-1e-3 without stray-light
        correction (common practice, no source). Default 5e-4.
    name : str
        Free text naming the instrument, shown in reports.
    source : str
        Where the model came from (file and table, or "lumeval defaults").
    """

    wavelength_offset_nm: float = 0.2
    noise_relative: float = 0.005
    noise_absolute: float = 0.0005
    bandwidth_nm: float = 2.0
    photometric_scale: float = 0.02
    stray_light: float = 0.0005
    name: str = ""
    source: str = "lumeval defaults"

    def __post_init__(self) -> None:
        for k in PARAMETERS:
            v = getattr(self, k)

            def bad(text: str, k=k) -> ValueError:
                return ValueError(f"InstrumentModel.{k} must be a finite number ≥ 0, got {text}")

            if isinstance(v, bool) or not isinstance(v, (int, float)):
                raise bad(shown(v))
            f = finite_float(v, bad)
            if f < 0:
                raise bad(shown(v))
            object.__setattr__(self, k, f)

    @property
    def is_zero(self) -> bool:
        """True when every uncertainty parameter is zero (the draws equal the data)."""
        return all(getattr(self, k) == 0 for k in PARAMETERS)

    def as_dict(self) -> dict:
        return {f.name: getattr(self, f.name) for f in fields(self)}


#: Numeric parameters: key -> (upper bound accepted, unit, hint shown when the bound is exceeded).
#: The fractions' bounds lie well above any plausible instrument and below the percentage
#: spellings of the typical values, so "0.5" meant as 0.5 % is refused rather than read as 50 %
#: (the former bounds 0.5, 0.5, 0.5, 0.1 let exactly those spellings through; found by a review):
#:
#: - noise_relative ≤ 0.1 (fraction of the signal at each sample): typical 0.002-0.01; 10 % random
#:   noise at every sample is a reading nobody would judge colour from;
#: - noise_absolute ≤ 0.01 (fraction of the peak): typical 1e-4-1e-3; 1 % of the peak is a
#:   signal-to-noise ratio of 100 at the peak, ten times worse than the worst typical value;
#: - photometric_scale ≤ 0.2 (relative): typical 0.02-0.05; 20 % is beyond any calibrated scale;
#: - stray_light ≤ 0.01 (fraction of the peak): typical 1e-4-1e-3 uncorrected; 1 % of the peak
#:   flat across the spectrum is ten times the worst typical value.
#:
#: (Typical values: common practice, no source, as in :class:`InstrumentModel`.)
PARAMETERS: dict[str, tuple[float, str, str]] = {
    "wavelength_offset_nm": (10.0, "nm", "give a standard uncertainty in nm (typical 0.1-0.3)"),
    "noise_relative": (0.1, "", "give a fraction of the signal, not a percentage (0.005 for 0.5 %)"),
    "noise_absolute": (0.01, "", "give a fraction of the peak, not a percentage (0.0005 for 0.05 %)"),
    "bandwidth_nm": (20.0, "nm", "give the slit FWHM in nm (typical 1-5)"),
    "photometric_scale": (0.2, "", "give a fraction, not a percentage (0.02 for 2 %)"),
    "stray_light": (0.01, "", "give a fraction of the peak, not a percentage (0.0005 for 0.05 %)"),
}


@dataclass(frozen=True)
class MonteCarloSettings:
    """How many draws, from which seed (JCGM 101:2008 §7.2, §7.9).

    Attributes
    ----------
    draws : int or None
        Number of Monte Carlo trials M; None means the adaptive procedure of JCGM 101:2008
        §7.9 (see :func:`lumeval.uncertainty.montecarlo.propagate`). Default 2000: the smallest M
        with M ≥ 100/(1 − p) for p = 0.95, the length JCGM 101 §7.9.4 takes as the minimum for a
        95 % coverage interval to be meaningful (quoted from memory). With M = 2000 the standard
        uncertainty itself carries a relative Monte Carlo error of about 1/√(2(M − 1)) ≈ 1.6 %
        (for a normal output).
    seed : int
        Seed of numpy's PCG64 generator: the same data, model and seed give the same numbers.
    coverage : float
        Coverage probability p of the reported coverage interval (0.95).
    significant_digits : int
        n_dig of JCGM 101 §7.9.2 for the adaptive procedure (1 or 2).
    max_draws : int
        Upper bound on M for the adaptive procedure (it then stops and says it did not
        stabilise).
    draws_block : int
        Trials per run of the adaptive procedure (2000; JCGM 101 §7.9.4 uses
        max(100/(1 − p), 10⁴), a documented departure that keeps runs short).
    """

    draws: int | None = 2000
    seed: int = 1
    coverage: float = 0.95
    significant_digits: int = 1
    max_draws: int = 40_000
    draws_block: int = 2000

    @property
    def adaptive(self) -> bool:
        return self.draws is None


_MC_KEYS = {"draws", "seed", "significant_digits", "max_draws", "draws_block"}
#: Largest seed: TOML's integer range (v1.0.0: 64-bit signed integers, up to 2**63 - 1); a larger
#: one is no TOML integer other readers keep, and it is written into every JSON report.
SEED_MAX = 2**63 - 1
#: Largest ``draws_block``: one run's drawn spectra are held at once (20,000 x ~450 points
#: is about 70 MB), the same bound as the fixed-M runs in lumeval.uncertainty.montecarlo.
MAX_DRAWS_BLOCK = 20_000


# ----------------------------------------------------------------------------------- parsing


def key_line(text: str | None, table: str, key: str | None = None) -> int | None:
    """1-based line of ``key = ...`` inside ``[table]`` of TOML ``text`` (of the header when
    ``key`` is None; a top-level key with ``table=""``); None when it cannot be found (e.g.
    inline tables). Located by the criteria loader's one TOML line locator
    (:func:`lumeval.criteria.loader.locate_lines`)."""
    from ..criteria.loader import locate_lines

    path = tuple(p for p in (table, key) if p)
    if not text or not path:
        return None
    return locate_lines(text).get(path)


def _number(value, *, file, text, table, key, lower=0.0, upper=math.inf, unit="", hint="") -> float:
    line = key_line(text, table, key)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise CriteriaError(
            f"{key} must be a number, not {type(value).__name__} {shown(value)}",
            file=file, line=line, field=f"{table}.{key}", fix=hint or "write a plain number",
        )
    v = finite_float(value, lambda s: CriteriaError(f"{key} = {s} must be a finite number ≥ {lower:g}", file=file,
                                                     line=line, field=f"{table}.{key}", fix=FINITE_FIX))
    if v < lower:
        raise CriteriaError(
            f"{key} = {shown(value)} must be a finite number ≥ {lower:g}", file=file, line=line,
            field=f"{table}.{key}", fix="uncertainties are never negative",
        )
    if v > upper:
        # a dimensionless fraction: most likely a percentage, so name the fraction it would be
        guess = f"did you mean {v / 100:g}? " if not unit else ""
        raise CriteriaError(
            f"{key} = {shown(value)} is implausibly large (above {upper:g}{(' ' + unit) if unit else ''})",
            file=file, line=line, field=f"{table}.{key}", fix=guess + hint,
        )
    return v


def _unknown(table_dict: dict, allowed, *, file, text, table) -> None:
    for key in table_dict:
        if key not in allowed:
            raise CriteriaError(
                f"unknown key {key!r} in [{table}]",
                file=file, line=key_line(text, table, key), field=f"{table}.{key}",
                fix="allowed keys: " + ", ".join(sorted(allowed)),
            )


def instrument_from_table(table: dict, *, file: str | None = None, text: str | None = None,
                          table_name: str = "instrument") -> InstrumentModel:
    """Build an :class:`InstrumentModel` from a parsed ``[instrument]`` TOML table.

    Missing keys take the documented defaults; unknown keys, non-numbers, negative or
    implausible values raise :class:`CriteriaError` naming the file, line and key.
    ``text`` is the file's raw text (used only to find line numbers).
    """
    if not isinstance(table, dict):
        raise CriteriaError(f"[{table_name}] must be a table", file=file, line=key_line(text, table_name),
                            fix=f"write it as a [{table_name}] section with key = value lines")
    _unknown(table, set(PARAMETERS) | {"name"}, file=file, text=text, table=table_name)
    kw: dict = {}
    for key, (upper, unit, hint) in PARAMETERS.items():
        if key in table:
            kw[key] = _number(table[key], file=file, text=text, table=table_name, key=key,
                              upper=upper, unit=unit, hint=hint)
    if "name" in table:
        if not isinstance(table["name"], str):
            raise CriteriaError("name must be a string", file=file, line=key_line(text, table_name, "name"),
                                field=f"{table_name}.name", fix='write name = "..."')
        kw["name"] = table["name"]
    where = f"{file} [{table_name}]" if file else f"[{table_name}]"
    defaults = [k for k in PARAMETERS if k not in table]
    kw["source"] = where + (f" (defaults for {', '.join(defaults)})" if defaults else "")
    return InstrumentModel(**kw)


def settings_from_table(table: dict, *, file: str | None = None, text: str | None = None,
                        table_name: str = "monte_carlo") -> MonteCarloSettings:
    """Build :class:`MonteCarloSettings` from a parsed ``[monte_carlo]`` table.

    ``draws`` is an integer 100 ≤ M ≤ 1,000,000 or the string ``"adaptive"``; ``seed`` a
    non-negative integer; ``significant_digits`` 1 or 2; ``max_draws`` ≥ 1000; ``draws_block``
    (adaptive only) from 100 to min(:data:`MAX_DRAWS_BLOCK`, max_draws / 2).
    """
    if not isinstance(table, dict):
        raise CriteriaError(f"[{table_name}] must be a table", file=file, line=key_line(text, table_name))
    _unknown(table, _MC_KEYS, file=file, text=text, table=table_name)
    kw: dict = {}

    def line(k):
        return key_line(text, table_name, k)

    if "draws" in table:
        d = table["draws"]
        if d == "adaptive":
            kw["draws"] = None
        elif isinstance(d, int) and not isinstance(d, bool) and 100 <= d <= 1_000_000:
            kw["draws"] = d
        else:
            raise CriteriaError(f"draws = {shown(d)} is not an integer from 100 to 1000000 nor \"adaptive\"",
                                file=file, line=line("draws"), field=f"{table_name}.draws",
                                fix='write e.g. draws = 2000 or draws = "adaptive"')
    if "seed" in table:
        s = table["seed"]
        if not isinstance(s, int) or isinstance(s, bool) or not 0 <= s <= SEED_MAX:
            raise CriteriaError(f"seed = {shown(s)} must be an integer from 0 to {SEED_MAX}", file=file,
                                line=line("seed"), field=f"{table_name}.seed", fix="write e.g. seed = 1")
        kw["seed"] = s
    if "significant_digits" in table:
        s = table["significant_digits"]
        if s not in (1, 2) or isinstance(s, bool):
            raise CriteriaError(f"significant_digits = {shown(s)} must be 1 or 2", file=file,
                                line=line("significant_digits"), field=f"{table_name}.significant_digits",
                                fix="JCGM 101 §7.9.2 uses one or two significant digits")
        kw["significant_digits"] = s
    if "max_draws" in table:
        s = table["max_draws"]
        if not isinstance(s, int) or isinstance(s, bool) or not 1000 <= s <= 10_000_000:
            raise CriteriaError(f"max_draws = {shown(s)} must be an integer from 1000 to 10000000", file=file,
                                line=line("max_draws"), field=f"{table_name}.max_draws")
        kw["max_draws"] = s
    if "draws_block" in table:
        s = table["draws_block"]
        if kw.get("draws", 2000) is not None:
            raise CriteriaError("draws_block applies only to the adaptive procedure", file=file,
                                line=line("draws_block"), field=f"{table_name}.draws_block",
                                fix='add draws = "adaptive" or remove draws_block')
        top = min(MAX_DRAWS_BLOCK, kw.get("max_draws", MonteCarloSettings.max_draws) // 2)
        if not isinstance(s, int) or isinstance(s, bool) or not 100 <= s <= top:
            raise CriteriaError(f"draws_block = {shown(s)} must be an integer from 100 to {top} (at least two runs "
                                f"within max_draws, at most {MAX_DRAWS_BLOCK} trials held at once)", file=file,
                                line=line("draws_block"), field=f"{table_name}.draws_block",
                                fix="write e.g. draws_block = 2000")
        kw["draws_block"] = s
    return MonteCarloSettings(**kw)


def parse_toml(path: str | Path) -> tuple[dict, str]:
    """Read and parse an instrument file through the one TOML reader (:mod:`lumeval._toml`);
    returns (data, text). Unreadable files raise InputError, TOML syntax errors CriteriaError
    with the line and column the parser reports."""
    from .._toml import read_toml

    return read_toml(path, what="instrument", option="--instrument", error=CriteriaError, read_error=InputError)


def load_instrument(path: str | Path) -> tuple[InstrumentModel, MonteCarloSettings]:
    """Read an instrument file: an ``[instrument]`` table and an optional ``[monte_carlo]``
    (the defaults when it has none; :func:`read_instrument_file` also says whether it had one).
    """
    model, settings, _ = read_instrument_file(path)
    return model, settings


def read_instrument_file(path: str | Path) -> tuple[InstrumentModel, MonteCarloSettings, bool]:
    """:func:`load_instrument`, and whether the file has a ``[monte_carlo]`` table (a table that
    states the default values is still the file's choice: it replaces the criteria file's).

    Raises
    ------
    InputError
        The file cannot be read.
    CriteriaError
        Bad TOML, a missing ``[instrument]`` table, an unknown table or key, or a bad value
        (the message names the line and key).
    """
    from .._paths import display_path

    data, text = parse_toml(path)
    file = display_path(path)
    for key in data:
        if key not in ("instrument", "monte_carlo"):
            raise CriteriaError(f"unknown table or key {key!r} in an instrument file", file=file,
                                line=key_line(text, key) or key_line(text, "", key),
                                fix="an instrument file holds only [instrument] and [monte_carlo]")
    if "instrument" not in data:
        raise CriteriaError("no [instrument] table", file=file,
                            fix="start the file with [instrument] and key = value lines (see docs/uncertainty.md)")
    model = instrument_from_table(data["instrument"], file=file, text=text)
    settings = settings_from_table(data.get("monte_carlo", {}), file=file, text=text)
    return model, settings, "monte_carlo" in data
