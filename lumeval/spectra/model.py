"""The in-memory form of spectra: one wavelength grid, many spectra."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: Metadata keys lumeval derives while reading a file (how it was read), never written back as
#: file metadata by the CSV, TM-27 XML and Parquet writers.
DERIVED_KEYS = ("lumeval.wavelength_unit", "lumeval.delimiter", "lumeval.column", "lumeval.format",
                "lumeval.tm27_version", "lumeval.tm27_namespace")

@dataclass(frozen=True)
class SpectrumSet:
    """N spectra on one wavelength grid.

    Attributes
    ----------
    wavelengths_nm : ndarray, shape (W,)
        Strictly increasing wavelengths in nanometres.
    values : ndarray, shape (N, W)
        Spectral values (W/nm, W/(m² nm) or relative; the unit does not change any ratio
        figure lumeval computes).
    names : tuple of str, length N
        A display name per spectrum (column header or file stem).
    sources : tuple of str, length N
        The file each spectrum came from (``file`` or ``file#column``).
    notes : tuple of tuple of str, length N
        What reading and preparing did to each spectrum (interpolated, clipped,
        extrapolated...). These travel into every report.
    metadata : tuple of dict, length N
        Key/value metadata found in the file (instrument, date, ...), kept verbatim.
    prepared : bool
        True when :func:`lumeval.spectra.prepare.prepare` made this set (values on a computation
        grid); preparing it again returns it unchanged. Interpolated values may then hold
        interpolation overshoot below zero, which is kept as computed and is not measured noise.
    """

    wavelengths_nm: np.ndarray
    values: np.ndarray
    names: tuple[str, ...]
    sources: tuple[str, ...]
    notes: tuple[tuple[str, ...], ...] = field(default=())
    metadata: tuple[dict, ...] = field(default=())
    prepared: bool = False

    def __post_init__(self) -> None:
        wl = np.asarray(self.wavelengths_nm, dtype=float)
        vals = np.atleast_2d(np.asarray(self.values, dtype=float))
        n = vals.shape[0]
        object.__setattr__(self, "wavelengths_nm", wl)
        object.__setattr__(self, "values", vals)
        if wl.ndim != 1 or vals.shape[1] != wl.size:
            raise ValueError(f"values shape {vals.shape} does not match {wl.size} wavelengths")
        if len(self.names) != n or len(self.sources) != n:
            raise ValueError("names and sources must have one entry per spectrum")
        if not self.notes:
            object.__setattr__(self, "notes", ((),) * n)
        if not self.metadata:
            object.__setattr__(self, "metadata", tuple({} for _ in range(n)))

    def __len__(self) -> int:
        return self.values.shape[0]

    @property
    def spacing_nm(self) -> float | None:
        """The uniform spacing in nm, or None when the grid is irregular."""
        d = np.diff(self.wavelengths_nm)
        if d.size and np.allclose(d, d[0], rtol=0, atol=1e-9):
            return float(d[0])
        return None

    def subset(self, index) -> SpectrumSet:
        """The spectra at ``index`` (slice or integer array) as a new set (for a slice, the
        values are a view of this set's values: sets are not changed in place)."""
        if isinstance(index, slice):
            return SpectrumSet(self.wavelengths_nm, self.values[index], tuple(self.names[index]),
                               tuple(self.sources[index]), tuple(self.notes[index]), tuple(self.metadata[index]),
                               self.prepared)
        idx = np.arange(len(self))[index]
        idx = np.atleast_1d(idx)
        return SpectrumSet(
            self.wavelengths_nm,
            self.values[idx],
            tuple(self.names[i] for i in idx),
            tuple(self.sources[i] for i in idx),
            tuple(self.notes[i] for i in idx),
            tuple(self.metadata[i] for i in idx),
            self.prepared,
        )

    @staticmethod
    def concatenate(sets: list[SpectrumSet]) -> SpectrumSet:
        """Join sets that share one wavelength grid."""
        if not sets:
            raise ValueError("no spectrum sets to join")
        wl = sets[0].wavelengths_nm
        for s in sets[1:]:
            if s.wavelengths_nm.shape != wl.shape or not np.array_equal(s.wavelengths_nm, wl):
                raise ValueError("spectrum sets do not share one wavelength grid")
        from itertools import chain

        def joined(attr: str) -> tuple:  # one pass (summing tuples copies them once per set)
            return tuple(chain.from_iterable(getattr(s, attr) for s in sets))

        return SpectrumSet(
            wl,
            np.vstack([s.values for s in sets]),
            joined("names"),
            joined("sources"),
            joined("notes"),
            joined("metadata"),
            all(s.prepared for s in sets),
        )
