"""Evaluate many spectra at once: every figure lumeval reports, as array operations.

The engine is the one place where the metric modules meet. It takes spectrum sets, prepares
each onto its own computation grid (:func:`lumeval.spectra.prepare.prepare_groups`), groups
the spectra that share a grid, and evaluates group by group and chunk by chunk so that memory
stays bounded however many spectra come; results come back in input order, and no spectrum is
ever resampled to another spectrum's grid:

1. tristimulus values (CIE 1931 2°), x y, u v (CIE 1960), u' v' (CIE 1976);
2. CCT and Duv by Ohno (2014) on a Planckian table computed with c2 = 1.4388e-2 m K;
3. CIE 13.3-1995 colour rendering (Ra, R1..R14, DC) against the reference at that CCT;
4. CIE 224:2017 / ANSI/IES TM-30-18/-20 Rf, Rg and the 16 hue-bin values;
5. photometric ratios (LER, S/P, melanopic DER per CIE S 026) and the peak wavelength.

The reference side of 3 and 4 (what the samples look like under the reference illuminant)
depends only on the reference temperature and the grid: it is looked up once per spectrum in
tables built lazily per grid and shared by CIE 13.3, TM-30 and CIE 224
(:mod:`lumeval.metrics.reference_table`: method, bound and sources there and in docs/metrics.md).

Nothing here prints, reads files or knows about terminals.
"""

from __future__ import annotations

import dataclasses
import functools
import itertools
import warnings as _warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, cast

import numpy as np

from .spectra.model import SpectrumSet

if TYPE_CHECKING:  # pragma: no cover
    from .metrics.absolute import AbsoluteResult
    from .metrics.classify import ChromaticityClass
    from .metrics.colorimetry import CCTResult
    from .metrics.cri import CRIResult
    from .metrics.photometry import PhotometryResult
    from .metrics.tm30 import TM30Result
    from .spectra.prepare import PreparedSpectra

#: Spectra evaluated per chunk. The largest intermediate arrays are (chunk, 297) and
#: (chunk, 99, 3) for the TM-30 samples (2.4 MB each at 1024) and the chunk's spectra
#: (chunk, W). A fixed cost of about 2 ms of Python and numpy calls per chunk weighs on small
#: chunks; large ones leave the cache. Measured 2026-12-05 (20,000 white-LED spectra, five
#: alternated runs, median spectra per CPU-second): 512: 20,704 (1 nm) / 25,383 (5 nm); 768:
#: 22,280 / 26,795; 1024: 21,739 / 27,755; 1536: 21,972 / 26,831 (an earlier machine measured
#: 512 best). What lots use (lumeval.lots.run.ENGINE_CHUNK).
DEFAULT_CHUNK = 1024


def __getattr__(name: str) -> Any:
    # FIGURE_NAMES and FIGURE_UNITS are views of the figure registry (lumeval.figures), computed
    # when asked so that a figure registered later is included.
    if name == "FIGURE_NAMES":
        from . import figures

        return figures.names()
    if name == "FIGURE_UNITS":
        from . import figures

        return {f.name: f.unit for f in figures.FIGURES.values() if f.unit}
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
#: Figures computed against a reference illuminant: where |Duv| > 0.05 they are computed against
#: the reference at the nearest Planckian temperature and flagged outside their validity range.
VALIDITY_FIGURES: frozenset[str] = frozenset(
    ("Ra", "Re", "dc", "Rf", "Rg", "cie2017_Rf")
    + tuple(f"R{i}" for i in range(1, 15))
    + tuple(f"{p}{j}" for p in ("Rf_h", "Rcs_h", "Rhs_h") for j in range(1, 17))
)

def is_validity_figure(name: str) -> bool:
    """True when figure ``name`` (a registry name or an alias) is one of :data:`VALIDITY_FIGURES`,
    computed against a reference illuminant and so possibly outside its validity range."""
    from . import figures

    return (figures.lookup(name) or name) in VALIDITY_FIGURES


#: The words every output uses for the flag (terminal, JSON, CSV, HTML, verdicts).
OUTSIDE_VALIDITY = "outside the validity range"


def validity_warning(cct_reason: str, reference_cct_K: float) -> str:
    """The warning for a spectrum whose CRI/TM-30 figures lie outside their validity range."""
    return (
        f"OUTSIDE THE VALIDITY RANGE: CCT undefined ({cct_reason}); CRI and TM-30 figures are computed "
        f"against the reference at the nearest Planckian temperature, {reference_cct_K:.0f} K, and are "
        f"{OUTSIDE_VALIDITY} (CIE 15:2004 §9.5; CIE 13.3-1995; CIE 224:2017). Criteria judge them "
        "'not valid' unless a clause accepts them."
    )




@dataclass(frozen=True)
class Evaluation:
    """All figures for N spectra (arrays of shape (N,) unless stated).

    ``cct_K`` is NaN where CCT is undefined (``cct_reason`` says why); every figure that needs
    a reference illuminant (CRI, TM-30) is then NaN too. ``warnings[i]`` lists everything a
    report must show about spectrum i: what the readers did to the data, why a figure is
    undefined, and validity limits that were exceeded. ``run_warnings`` holds warnings raised by
    the computation libraries during the vectorised run (they cannot be tied to one spectrum).

    ``spectra`` holds the prepared spectra in input order, each on its own computation grid
    (:class:`lumeval.spectra.prepare.PreparedSpectra`): ``spectra.spectrum(i)`` gives spectrum
    i's wavelengths and values; ``spectra.wavelengths_nm`` / ``values`` exist only when every
    spectrum shares one grid. Spectra are never resampled to another spectrum's grid.
    """

    spectra: PreparedSpectra
    XYZ: np.ndarray
    x: np.ndarray
    y: np.ndarray
    u: np.ndarray
    v: np.ndarray
    u_prime: np.ndarray
    v_prime: np.ndarray
    cct_K: np.ndarray
    duv: np.ndarray
    cct_reason: tuple[str, ...]
    cri: CRIResult
    tm30: TM30Result
    cie2017_Rf: np.ndarray
    photometry: PhotometryResult
    warnings: tuple[tuple[str, ...], ...]
    run_warnings: tuple[str, ...] = ()
    methods: dict[str, str] = field(default_factory=dict)
    #: Temperature of the CRI/TM-30 reference illuminant (N,): the CCT, or where |Duv| > 0.05
    #: the nearest Planckian temperature; NaN where no reference exists. None: same as cct_K.
    reference_cct_K: np.ndarray | None = None
    #: True (N,) where the reference-based figures (:data:`VALIDITY_FIGURES`) were computed
    #: outside their validity range (|Duv| > 0.05, CIE 15:2004 §9.5). None: nowhere.
    outside_validity: np.ndarray | None = None

    def __len__(self) -> int:
        return cast("int", self.x.shape[0])

    def __repr__(self) -> str:
        """A few hundred characters at most: how many spectra, some names, key figures' ranges."""
        from .render.view import evaluation_summary

        return evaluation_summary(self)

    def _repr_html_(self) -> str:
        """The key figures, notes and cautions as an HTML fragment (Jupyter)."""
        from .render.html import evaluation_html

        return evaluation_html(self)

    @property
    def names(self) -> tuple[str, ...]:
        return self.spectra.names

    def outside_validity_of(self, name: str) -> np.ndarray:
        """Boolean (N,): where figure ``name`` was computed outside its validity range.

        Only the figures computed against a reference illuminant (:data:`VALIDITY_FIGURES`:
        CIE 13.3 Ra, Ri, their mean Re, DC; CIE 224 / TM-30 Rf, Rg and hue-bin values) can be; CCT is then
        undefined (NaN) rather than flagged."""
        n = len(self)
        if self.outside_validity is None or not is_validity_figure(name):
            return np.zeros(n, dtype=bool)
        return np.asarray(self.outside_validity, dtype=bool)

    def _reference_cct(self) -> np.ndarray:
        return self.cct_K if self.reference_cct_K is None else self.reference_cct_K

    def validity_reason(self, i: int) -> str:
        """Why spectrum i's reference-based figures are outside their validity range ("" if not)."""
        if self.outside_validity is None or not self.outside_validity[i]:
            return ""
        return (
            f"{OUTSIDE_VALIDITY}: |Duv| = {abs(float(self.duv[i])):.4f} > 0.05, computed against the reference "
            f"at the nearest Planckian temperature {float(self._reference_cct()[i]):.0f} K (CIE 15:2004 §9.5)."
        )

    # Figures derived from the ones above on first use (cheap, vectorised): computed lazily so
    # that runs which never report them (Monte Carlo draws, large lots) do not pay for them.

    @functools.cached_property
    def chromaticity_class(self) -> ChromaticityClass:
        """ANSI C78.377-2017 category (containing or nearest, with the signed Δu'v') and SDCM
        steps from the nearest IEC 60081 centre (:func:`lumeval.metrics.classify.classify`)."""
        from .metrics.classify import classify

        return classify(np.stack([self.x, self.y], axis=-1), np.stack([self.u_prime, self.v_prime], axis=-1))

    @functools.cached_property
    def Re(self) -> np.ndarray:
        """Mean of R1..R14, shape (N,) (:func:`lumeval.metrics.classify.extended_rendering_index`)."""
        from .metrics.classify import extended_rendering_index

        return extended_rendering_index(self.cri.R)

    @functools.cached_property
    def absolute(self) -> AbsoluteResult:
        """Illuminance or luminance and melanopic EDI or EDL where the data are absolute spectral
        irradiance or radiance (:func:`lumeval.metrics.absolute.absolute_photometry`; the unit is
        read from each spectrum's reader metadata by :func:`lumeval.spectra.units.quantity_of`)."""
        from .metrics.absolute import absolute_photometry
        from .spectra.units import quantity_of

        # (an empty metadata dict, as every spectrum of an archive lot has, says no unit: skipped
        # without the call, 0.4 µs a spectrum of a lot's own time)
        return absolute_photometry(self.XYZ[:, 1], self.photometry.melanopic_der,
                                   [quantity_of(m) if m else None for m in self.spectra.metadata])

    def figure(self, name: str) -> np.ndarray:
        """The figure ``name`` (a name or alias of :mod:`lumeval.figures`) as an array of shape (N,);
        KeyError when no figure has that name."""
        from . import figures

        return figures.get(name).value(self)

    def to_arrow(self) -> Any:
        """One row per spectrum, one column per figure, metadata kept, as a ``pyarrow.Table``
        (:func:`lumeval.frames.evaluation_to_arrow`; needs ``lumeval[archive]``)."""
        from .frames import evaluation_to_arrow

        return evaluation_to_arrow(self)  # type: ignore[no-untyped-call]  # frames.py is not typed yet

    def to_pandas(self) -> Any:
        """One row per spectrum, one column per figure, metadata kept, as a
        ``pandas.DataFrame`` (:func:`lumeval.frames.evaluation_to_pandas`)."""
        from .frames import evaluation_to_pandas

        return evaluation_to_pandas(self)  # type: ignore[no-untyped-call]  # frames.py is not typed yet

    def reference_spd(self, i: int) -> np.ndarray:
        """The CIE 13.3 reference SPD (Planckian < 5000 K, CIE daylight ≥ 5000 K) of spectrum i
        at its reference temperature (the CCT, or the nearest Planckian temperature where
        |Duv| > 0.05), on the spectrum's own computation grid, scaled to the same luminance (Y) as the test SPD.
        NaN where the CCT is undefined."""
        from .metrics.colorimetry import tristimulus
        from .metrics.reference import cri_reference_spd

        wl = self.spectra.wavelengths(i)
        t_ref = self.cct_K if self.reference_cct_K is None else self.reference_cct_K
        ref = cri_reference_spd(wl, np.array([t_ref[i]]))[0]
        if not np.all(np.isfinite(ref)):
            return cast("np.ndarray", ref)
        y_ref = tristimulus(wl, ref)[1]
        return cast("np.ndarray", ref * (self.XYZ[i, 1] / y_ref))


def _concat(parts: list[Any]) -> Any:
    """Concatenate per-chunk results: arrays along axis 0, tuples end to end, dataclasses
    field by field."""
    first = parts[0]
    if dataclasses.is_dataclass(first) and not isinstance(first, type):
        return type(first)(**{f.name: _concat([getattr(p, f.name) for p in parts]) for f in dataclasses.fields(first)})
    if isinstance(first, np.ndarray):
        return np.concatenate(parts, axis=0) if first.ndim else first
    if isinstance(first, tuple):  # one pass (sum(parts, ()) copied the growing tuple per part: quadratic)
        return tuple(itertools.chain.from_iterable(parts))
    return first


#: Per-sample detail arrays (CAM02-UCS coordinates of the 99 CES, U*V*W* of the 14 TCS...)
#: that reports of single spectra use, but a large lot does not need: ``evaluate(...,
#: keep_details=False)`` replaces them by empty (N, 0) arrays to bound memory.
_DETAIL_FIELDS = ("Jab_test", "Jab_ref", "delta_E_ces", "Rf_ces", "hue_bin", "UVW_test", "UVW_reference", "delta_E")


def _strip_details(result: Any) -> Any:
    changes = {}
    for f in dataclasses.fields(result):
        if f.name in _DETAIL_FIELDS:
            a = getattr(result, f.name)
            if isinstance(a, np.ndarray) and a.ndim >= 2:
                changes[f.name] = np.empty((a.shape[0], 0))
    return dataclasses.replace(result, **changes) if changes else result


@dataclass(frozen=True)
class _Chunk:
    """What the metric modules return for one chunk of spectra, field by field (each metric's
    own result dataclass; no positional tuples between the engine and the metrics)."""

    XYZ: np.ndarray
    xy: np.ndarray
    uv: np.ndarray
    upvp: np.ndarray
    cct: CCTResult
    cri: CRIResult
    tm30: TM30Result
    photometry: PhotometryResult
    cie2017_Rf: np.ndarray


def _evaluate_chunk(wl: np.ndarray, values: np.ndarray, details: bool = True) -> _Chunk:
    from .metrics.colorimetry import (
        cct_duv_ohno,
        tristimulus,
        upvp_from_XYZ,
        uv_from_XYZ,
        xy_from_XYZ,
    )
    from .metrics.cri import cie133_cri
    from .metrics.photometry import photometry
    from .metrics.reference_table import reference_side
    from .metrics.tm30 import cie2017_rf, tm30

    XYZ = tristimulus(wl, values)
    xy = xy_from_XYZ(XYZ)
    uv = uv_from_XYZ(XYZ)
    upvp = upvp_from_XYZ(XYZ)
    cct = cct_duv_ohno(uv)
    # the reference temperature: the CCT, or where |Duv| > 0.05 the nearest Planckian
    # temperature (CCT itself stays undefined; the figures are flagged outside validity)
    ref_T = cct.reference_cct_K
    assert ref_T is not None  # cct_duv_ohno always gives it
    # One reference side per spectrum, from the tables built once per grid, shared by CIE 13.3,
    # TM-30 and CIE 224 (lumeval.metrics.reference_table; within 1e-7 of the direct computation)
    side = reference_side(wl, ref_T)
    cri = cie133_cri(wl, values, ref_T, reference=side.cri)
    fid = tm30(wl, values, ref_T, reference=side.tm30_jab, details=details)
    rf2017 = cie2017_rf(wl, values, ref_T, tm30_result=fid, reference=side.cie224_jab)
    phot = photometry(wl, values)
    return _Chunk(XYZ=XYZ, xy=xy, uv=uv, upvp=upvp, cct=cct, cri=cri, tm30=fid, photometry=phot, cie2017_Rf=rf2017)


#: The warning of a DC at or over the CIE 13.3 limit (``format`` with the limit, then ``%`` the DC).
_DC_WARNING = ("DC = %.4f is not below {} (CIE 13.3 validity limit): the source is too far from the Planckian locus "
               "for the CRI to be meaningful; treat Ra and Ri with caution.")


def _warnings_for(spectra: SpectrumSet | PreparedSpectra, cct: Any, cri: Any, fid: Any, phot: Any) -> tuple[tuple[str, ...], ...]:
    from .metrics.cri import DC_LIMIT
    from .metrics.tm30 import hue_edge_warnings

    n = len(spectra)
    dc = np.asarray(cri.dc, dtype=float)
    # per-spectrum values as Python lists once (indexing numpy arrays element by element in the
    # loop below cost more than the messages themselves)
    outside_a = np.asarray(cct.outside_validity, dtype=bool)
    dc_bad_a = np.isfinite(dc) & ~np.asarray(cri.within_dc_limit, dtype=bool)
    outside, dc_bad = outside_a.tolist(), dc_bad_a.tolist()
    dc_list = dc.tolist()
    ref_T = np.asarray(cct.reference_cct_K, dtype=float)
    ref_ok = np.isfinite(ref_T).tolist()
    ref_list = ref_T.tolist()
    cct_reason = cct.reason
    fid_reason = getattr(fid, "reason", ("",) * n)
    phot_reason = phot.reason
    edges = getattr(fid, "hue_edge_pairs", ())
    edges = edges if len(edges) == n else ((),) * n
    notes = spectra.notes
    # most spectra have nothing to say: their notes as they are; the others are found at C speed
    # (a true value in any of the per-spectrum lists) and get their messages below
    others = outside_a.copy()
    for flags in (cct_reason, fid_reason, phot_reason, edges):
        others |= np.fromiter(map(bool, flags), dtype=bool, count=n)
    out = list(map(tuple, notes))  # (tuple() of a tuple is that tuple: no copy)
    # the commonest case alone (a DC at or over the limit and nothing else to say: most spectra
    # of a lot far from the locus), its message from one format string
    dc_text = _DC_WARNING.format(DC_LIMIT)  # the limit put in once: "DC = %.4f is not below 0.0054 ..."
    dc_only = np.flatnonzero(dc_bad_a & ~others)
    for i, x in zip(dc_only.tolist(), dc[dc_only].tolist()):
        out[i] = (*notes[i], dc_text % x)
    for i in np.flatnonzero(others).tolist():
        w = list(notes[i])
        if outside[i]:
            w.append(validity_warning(cct_reason[i], ref_list[i]))
        elif cct_reason[i]:
            w.append(f"CCT undefined: {cct_reason[i]}; CRI and TM-30 figures are not computed.")
        elif dc_bad[i]:
            w.append(dc_text % dc_list[i])
        if ref_ok[i] and fid_reason[i]:
            w.append(f"TM-30: {fid_reason[i]}.")
        if edges[i]:
            w.extend(hue_edge_warnings(edges, i))
        if phot_reason[i]:
            w.append(f"photometry: {phot_reason[i]}.")
        out[i] = tuple(w)
    return tuple(out)


def _take(result: Any, order: np.ndarray, n: int) -> Any:
    """Reorder a concatenated result along its spectrum axis (the inverse of :func:`_concat`'s
    joining): arrays by their first axis, per-spectrum tuples element-wise, dataclasses field
    by field; run-level scalars are left alone."""
    if dataclasses.is_dataclass(result) and not isinstance(result, type):
        return type(result)(**{f.name: _take(getattr(result, f.name), order, n) for f in dataclasses.fields(result)})
    if isinstance(result, np.ndarray):
        return result[order] if result.ndim and result.shape[0] == n else result
    if isinstance(result, tuple):
        return tuple(result[k] for k in order) if len(result) == n else result
    return result


def evaluate(spectra: SpectrumSet | Sequence[SpectrumSet] | PreparedSpectra, *, chunk_size: int = DEFAULT_CHUNK, keep_details: bool = True,
             progress: Callable[[str, int, int | None], None] | None = None) -> Evaluation:
    """Evaluate every figure for every spectrum in ``spectra``.

    Parameters
    ----------
    spectra : SpectrumSet, sequence of SpectrumSet, or PreparedSpectra
        Spectra as read (or already prepared). Each set is prepared on its own (see
        :func:`lumeval.spectra.prepare.prepare_groups`); what preparation did is recorded in
        the result's warnings. Spectra on different computation grids are evaluated group by
        group, each on its own grid, never resampled to a common one: a spectrum's figures
        depend on its own data only.
    chunk_size : int
        Spectra evaluated together; bounds peak memory for large lots.
    keep_details : bool
        Keep per-sample detail arrays (CES/TCS coordinates, ΔE of each sample, Rf,CESi) for
        reports; pass False for large lots, where they would dominate memory (about 8 kB per
        spectrum): they are then empty (N, 0) arrays, and Rf,CESi is not computed.
    progress : callable, optional
        A progress listener (:mod:`lumeval.progress`): ``progress("evaluating", done, total)``
        after each chunk.

    Returns
    -------
    Evaluation
        Figures in input order. ``spectra`` is the :class:`PreparedSpectra` (each spectrum's
        own grid: ``ev.spectra.spectrum(i)``).
    """
    from ._workers import one_blas_thread

    with one_blas_thread():  # figures that do not depend on the BLAS thread count (see one_blas_thread)
        return _evaluate(spectra, chunk_size, keep_details, progress)


def _evaluate(spectra: Any, chunk_size: int, keep_details: bool,
              progress: Callable[[str, int, int | None], None] | None) -> Evaluation:
    from .spectra.prepare import prepare_groups

    prepared = prepare_groups(spectra)
    parts = []
    caught_all: list[str] = []
    done = 0
    for group in prepared.groups:
        wl = group.wavelengths_nm
        for start in range(0, len(group), max(1, chunk_size)):
            with _warnings.catch_warnings(record=True) as caught:
                _warnings.simplefilter("always")
                # C order: the BLAS products' summation order follows the memory layout (a
                # column slice of a wide file's transposed block gave figures differing from a
                # C-ordered copy's by up to 2.5e-9 K in CCT): the same bits whatever the layout
                part = _evaluate_chunk(wl, np.ascontiguousarray(group.values[start : start + chunk_size]), keep_details)
            if not keep_details:
                part = dataclasses.replace(part, cri=_strip_details(part.cri), tm30=_strip_details(part.tm30))
            parts.append(part)
            if progress is not None:
                done += min(chunk_size, len(group) - start)
                progress("evaluating", done, len(prepared))
            for c in caught:
                msg = f"computation warning: {c.message}"
                if msg not in caught_all:
                    caught_all.append(msg)
    r: _Chunk = _concat(parts)
    if not prepared.one_grid:
        back = np.argsort(prepared.order, kind="stable")  # group order -> input order
        r = _take(r, back, len(prepared))
    return Evaluation(
        spectra=prepared,
        XYZ=r.XYZ,
        x=r.xy[:, 0],
        y=r.xy[:, 1],
        u=r.uv[:, 0],
        v=r.uv[:, 1],
        u_prime=r.upvp[:, 0],
        v_prime=r.upvp[:, 1],
        cct_K=r.cct.cct_K,
        duv=r.cct.duv,
        cct_reason=r.cct.reason,
        cri=r.cri,
        tm30=r.tm30,
        cie2017_Rf=r.cie2017_Rf,
        photometry=r.photometry,
        warnings=_warnings_for(prepared, r.cct, r.cri, r.tm30, r.photometry),
        run_warnings=tuple(caught_all),
        methods=METHODS,
        reference_cct_K=r.cct.reference_cct_K,
        outside_validity=np.asarray(r.cct.outside_validity, dtype=bool),
    )


#: The methods and editions every report names.
METHODS: dict[str, str] = {
    "observer": "CIE 1931 2° (colorimetry, CCT, CRI); CIE 1964 10° (CIE 224 / TM-30)",
    "integration": "CIE 15 summation (CIE 15:2004 §7.1): S(λ)·weight(λ)·Δλ summed at the data's own 1 nm or "
    "5 nm spacing, every sample with full weight (not the trapezoidal rule; the two differ where a spectrum "
    "carries power at the ends of 360-830 nm, see docs/metrics.md)",
    "interpolation": "each spectrum on its own grid, never resampled to another file's grid; other uniform "
    "spacings Sprague-interpolated to 1 nm (CIE 167:2005), irregular grids by cubic spline (CIE 15:2004); "
    "interpolation overshoot below zero kept as computed (only measured negatives within 5 % of the peak are "
    "set to zero); short ranges extended by the end values (CIE 15:2004); see docs/input-files.md",
    "cct": "Ohno (2014) LEUKOS 10(1):47-55, Planckian locus with c2 = 1.4388e-2 m K (CIE 15:2004); given for "
    "1000-25,000 K, undefined where |Duv| > 0.05 (CIE 15:2004 §9.5)",
    "duv_sign": "positive above the Planckian locus (ANSI C78.377)",
    "cri": "CIE 13.3-1995, reference Planckian < 5000 K, CIE daylight ≥ 5000 K (defined to 25,000 K)",
    "validity": "where |Duv| > 0.05, CRI and CIE 224 / TM-30 are computed against the reference at the nearest "
    "Planckian temperature and flagged outside the validity range; criteria judge them 'not valid' unless a "
    "clause sets accept_outside_validity",
    "fidelity": "CIE 224:2017 / ANSI/IES TM-30-18 and -20 (Rf, Rg, 16 hue bins; one calculation)",
    "photometry": "Km = 683 lm/W, K'm = 1700 lm/W; sums over the measured range within 360-830 nm",
    "melanopic": "CIE S 026/E:2018 melanopic daylight (D65) efficacy ratio; action spectra CIE dataset "
    "10.25039/CIE.DS.vqqhzp5a (CC BY-SA 4.0)",
}

#: Human labels of the :data:`METHODS` keys, for reports.
METHOD_LABELS: dict[str, str] = {
    "observer": "Observer",
    "integration": "Integration",
    "interpolation": "Interpolation",
    "cct": "CCT and Duv",
    "duv_sign": "Duv sign",
    "cri": "Colour rendering",
    "validity": "Validity range",
    "fidelity": "Fidelity and gamut",
    "photometry": "Photometry",
    "melanopic": "Melanopic",
}
