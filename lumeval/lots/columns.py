"""Compact per-sample columns of a lot: what a lot of a million samples keeps, in bounded memory.

A lot keeps, per sample, what its statistics and per-sample outputs need: every figure, the
name, the source and the warnings. Kept as Python objects (a float64 array per figure is fine,
but one ``str`` object per name, one tuple per sample's warnings) they cost about 1.25 kB per
sample, 1.4 GB for 10^6 samples. Here:

* :class:`TextColumn` packs strings as UTF-8 bytes with an offset per string, compressed in
  blocks (a few bytes plus 8 per sample, instead of ~60 bytes of object header per string and
  the text itself);
* :class:`TextTuples` packs a tuple of strings per sample (the warnings) the same way;
* :class:`FigureColumns` holds the figures, float64, in blocks of rows; past
  :data:`SPILL_BYTES` in memory the blocks go to an anonymous temporary file (deleted when the
  lot is), and each figure is read back as one contiguous array when a statistic or an output
  asks for it (one column, or a range of rows of every column, at a time).

Nothing is rounded or converted: every value read back is the float64 (or the string) that was
stored, so a lot's statistics and outputs are the same however its samples were kept.
"""

from __future__ import annotations

import itertools
import os
import sys
import tempfile
import zlib
from array import array
from collections.abc import Iterable, Iterator, Mapping, Sequence, Sized
from typing import IO, Any, cast

import numpy as np

#: Figures kept in memory up to this many bytes per lot; beyond, blocks go to a temporary file.
SPILL_BYTES = 16 * 2**20
#: Rows gathered before a block of figures is sealed (kept or written to the temporary file).
BLOCK_ROWS = 2048
#: Strings per compressed block of a :class:`TextColumn`.
TEXT_BLOCK = 4096

_ENC = ("utf-8", "surrogatepass")  # names may carry lone surrogates (undecodable file names)


class _SequenceEq:
    """Equality with any sequence of the same items (a packed column equals the tuple it packs),
    and indexing, slicing and iteration over a subclass's ``_one(i)`` and ``__len__``."""

    __hash__ = None  # type: ignore[assignment]

    def _one(self, i: int) -> Any:
        raise NotImplementedError

    def _range(self, start: int, stop: int) -> list:
        """Items ``start:stop`` (``start <= stop``, both in range); a subclass may give them
        all at once."""
        return [self._one(k) for k in range(start, stop)]

    def __getitem__(self, i):
        n = len(self)  # type: ignore[arg-type]
        if isinstance(i, slice):
            start, stop, step = i.indices(n)
            if step == 1:
                return self._range(start, max(start, stop))
            return [self._one(k) for k in range(start, stop, step)]
        if i < 0:
            i += n
        if not 0 <= i < n:
            raise IndexError(f"{type(self).__name__} index out of range")
        return self._one(i)

    def __iter__(self) -> Iterator[Any]:
        for i in range(len(self)):  # type: ignore[arg-type]
            yield self._one(i)

    def __eq__(self, other: object) -> bool:
        if isinstance(other, (str, bytes)) or not isinstance(other, Sequence):
            return NotImplemented
        mine: Sequence = self  # type: ignore[assignment]
        return len(mine) == len(other) and all(a == b for a, b in zip(mine, other))


def _append_ends(ends: array, parts: Sequence[Sized], base: int) -> None:
    """Append to ``ends`` (int64 offsets) where each of ``parts`` ends when laid end to end
    after ``base``: one cumulative sum for a batch instead of one append per part."""
    lengths = np.fromiter(map(len, parts), dtype=np.int64, count=len(parts))
    ends.frombytes((np.cumsum(lengths) + base).astype("=i8").tobytes())


def _ends_array(ends: array) -> np.ndarray:
    """The int64 end offsets ``ends`` as a numpy array (a view; empty for none)."""
    return np.frombuffer(ends, dtype=np.int64) if len(ends) else np.zeros(0, dtype=np.int64)


def _pack(data: bytes | bytearray) -> tuple[int, bytes]:
    """A full text block compressed: (its size, the bytes) by zstd at level 1 through pyarrow
    when a run has already imported it (an archive lot), else (-1, the bytes) by zlib at level
    1. Measured on a lot's blocks of 4,096 strings (2026-12-05, one core): warnings 1.29 ms by
    zlib, 0.24 ms by zstd, 41 and 54 times smaller; sources 0.41 and 0.12 ms (19 and 71 times);
    decompression 0.73 and 0.10 ms. pyarrow is not imported for this alone (0.1-0.2 s)."""
    pa = sys.modules.get("pyarrow")
    if pa is not None and hasattr(pa, "Codec") and pa.Codec.is_available("zstd"):
        return len(data), pa.Codec("zstd", compression_level=1).compress(data, asbytes=True)
    return -1, zlib.compress(data, 1)


def _unpack(block: tuple[int, bytes]) -> bytes:
    size, data = block
    if size < 0:
        return zlib.decompress(data)
    import pyarrow as pa  # loaded: the block was packed with it

    return cast(bytes, pa.Codec("zstd").decompress(data, decompressed_size=size, asbytes=True))


class TextColumn(_SequenceEq, Sequence[str]):
    """A growing sequence of strings packed as UTF-8 bytes and end offsets, in blocks of
    :data:`TEXT_BLOCK` strings compressed once full (:func:`_pack`: names, sources and warnings
    of a lot repeat a lot of text). Reading decompresses one block at a time (the last one is
    kept), so reading in order costs one decompression per block."""

    def __init__(self, items: Iterable[str] = ()) -> None:
        self._blocks: list[tuple[int, bytes]] = []  # full blocks, compressed (_pack)
        self._open = bytearray()  # the block being filled
        self._ends = array("q")  # end of each string inside its block
        self._cache: tuple[int, bytes] = (-1, b"")
        self.extend(items)

    def extend(self, items: Iterable[str]) -> None:
        # a batch at a time (a lot adds thousands of names per batch): the strings up to the end
        # of the open block are encoded, joined and their end offsets appended together
        items = items if isinstance(items, (list, tuple)) else list(items)
        i, n = 0, len(items)
        while i < n:
            room = TEXT_BLOCK - len(self._ends) % TEXT_BLOCK
            part = items[i: i + room]
            joined = "".join(part)
            if joined.isascii():  # one encoding for the lot (ASCII: a string's bytes are its characters)
                _append_ends(self._ends, part, len(self._open))
                self._open += joined.encode("ascii")
            else:
                enc = [s.encode(*_ENC) for s in part]
                _append_ends(self._ends, enc, len(self._open))
                self._open += b"".join(enc)
            i += len(part)
            if len(self._ends) % TEXT_BLOCK == 0:
                self._blocks.append(_pack(self._open))
                self._open = bytearray()

    def __len__(self) -> int:
        return len(self._ends)

    def _block(self, b: int) -> bytes | bytearray:
        if b == len(self._blocks):
            return self._open
        if self._cache[0] != b:
            self._cache = (b, _unpack(self._blocks[b]))
        return self._cache[1]

    def _one(self, i: int) -> str:
        b, k = divmod(i, TEXT_BLOCK)
        start = self._ends[i - 1] if k else 0
        return self._block(b)[start : self._ends[i]].decode(*_ENC)

    def _range(self, start: int, stop: int) -> list[str]:
        # one decoding for the range (ASCII: a string's bytes are its characters), not one per string
        data, offsets = self.utf8_slice(start, stop)
        o = offsets.tolist()
        if data.isascii():
            text = data.decode("ascii")
            return [text[a:b] for a, b in itertools.pairwise(o)]
        return [data[a:b].decode(*_ENC) for a, b in itertools.pairwise(o)]


    def utf8_slice(self, start: int, stop: int) -> tuple[bytes, np.ndarray]:
        """Strings ``start:stop`` as their packed bytes joined and the (stop − start + 1) offsets
        into them (int64, from 0): what an Arrow string array is made of, without one Python
        string per row. The bytes are those stored (``surrogatepass``: a lone surrogate is not
        valid UTF-8; :func:`lumeval.frames.arrow_strings` checks)."""
        ends = _ends_array(self._ends)
        stop = min(stop, len(self))
        if stop <= start:
            return b"", np.zeros(1, dtype=np.int64)
        data: list[bytes] = []
        offsets = [np.zeros(1, dtype=np.int64)]
        total = 0
        b = start // TEXT_BLOCK
        while b * TEXT_BLOCK < stop:
            lo, hi = max(start, b * TEXT_BLOCK), min(stop, (b + 1) * TEXT_BLOCK)
            s0 = int(ends[lo - 1]) if lo % TEXT_BLOCK else 0
            e = ends[lo:hi]
            data.append(bytes(self._block(b)[s0: int(e[-1])]))
            offsets.append(e - s0 + total)
            total += int(e[-1]) - s0
            b += 1
        return b"".join(data), np.concatenate(offsets)

    def __repr__(self) -> str:
        return f"TextColumn({len(self)} strings)"

    @property
    def nbytes(self) -> int:
        """Bytes held (compressed blocks, the open block, the offsets)."""
        return sum(len(b) for _, b in self._blocks) + len(self._open) + 8 * len(self._ends)


class TextTuples(_SequenceEq, Sequence[tuple[str, ...]]):
    """A growing sequence of tuples of strings (a sample's warnings), packed."""

    def __init__(self, items: Iterable[Sequence[str]] = ()) -> None:
        self._texts = TextColumn()
        self._ends = array("q")
        self.extend(items)

    def extend(self, items: Iterable[Sequence[str]]) -> None:
        items = items if isinstance(items, (list, tuple)) else list(items)
        before = len(self._texts)
        self._texts.extend([w for t in items for w in t])
        _append_ends(self._ends, items, before)

    def count_nonempty(self) -> int:
        """Samples with at least one string (counted from the offsets, nothing decoded)."""
        ends = _ends_array(self._ends)
        return int(np.count_nonzero(np.diff(ends, prepend=0)))

    def __len__(self) -> int:
        return len(self._ends)

    def _one(self, i: int) -> tuple[str, ...]:
        start = self._ends[i - 1] if i else 0
        return tuple(self._texts[start : self._ends[i]])

    def _range(self, start: int, stop: int) -> list[tuple[str, ...]]:
        if stop <= start:
            return []
        ends = _ends_array(self._ends)
        t0 = int(ends[start - 1]) if start else 0
        texts = self._texts[t0: int(ends[stop - 1])]
        bounds = [0, *(ends[start:stop] - t0).tolist()]
        return [tuple(texts[a:b]) for a, b in itertools.pairwise(bounds)]


    def utf8_slice(self, start: int, stop: int) -> tuple[bytes, np.ndarray, np.ndarray]:
        """Tuples ``start:stop``: the packed bytes and string offsets of their strings
        (:meth:`TextColumn.utf8_slice`) and the (stop − start + 1) offsets of each tuple's first
        string among them (int64, from 0)."""
        ends = _ends_array(self._ends)
        stop = min(stop, len(self))
        if stop <= start:
            return b"", np.zeros(1, dtype=np.int64), np.zeros(1, dtype=np.int64)
        t0 = int(ends[start - 1]) if start else 0
        t1 = int(ends[stop - 1])
        data, str_offsets = self._texts.utf8_slice(t0, t1)
        return data, str_offsets, np.concatenate([np.zeros(1, dtype=np.int64), ends[start:stop] - t0])

    def __repr__(self) -> str:
        return f"TextTuples({len(self)} samples)"

    @property
    def nbytes(self) -> int:
        return self._texts.nbytes + 8 * len(self._ends)


class FigureColumns(Mapping[str, np.ndarray]):
    """Figures of N samples by name (float64), kept in blocks of rows, spilled to a temporary
    file past ``spill_bytes``.

    ``columns[name]`` is a new contiguous (N,) array of that figure (read back from the blocks);
    :meth:`rows` gives rows ``start:stop`` of every figure at once, for outputs written in
    slices. Build it with :meth:`add`.
    """

    def __init__(self, names: Sequence[str], *, spill_bytes: int | None = None, block_rows: int | None = None) -> None:
        self._names = tuple(names)
        self._index = {k: j for j, k in enumerate(self._names)}
        self.spill_bytes = SPILL_BYTES if spill_bytes is None else int(spill_bytes)
        self.block_rows = BLOCK_ROWS if block_rows is None else int(block_rows)
        self._pending: list[np.ndarray] = []
        self._pending_n = 0
        #: (first row, rows, data): data is an (F, rows) array in memory, or the file offset
        self._blocks: list[tuple[int, int, np.ndarray | int]] = []
        self._sealed = 0
        self._mem = 0
        self._file: IO[bytes] | None = None  # the temporary file object (deleted on close, i.e. with the lot)
        self._fd = -1
        self._file_end = 0

    # -- building
    def add(self, rows: np.ndarray) -> None:
        """Append samples: ``rows`` of shape (n, F), figures in the order of the names."""
        rows = np.asarray(rows, dtype=np.float64)
        if rows.ndim != 2 or rows.shape[1] != len(self._names):
            raise ValueError(f"rows of shape {rows.shape}, expected (n, {len(self._names)})")
        if rows.shape[0] == 0:
            return
        self._pending.append(rows)
        self._pending_n += rows.shape[0]
        if self._pending_n >= self.block_rows:
            self._seal()

    def _seal(self) -> None:
        if not self._pending_n:
            return
        # (F, rows): one figure contiguous; a batch's figures usually come in that order already
        # (evaluate_batch), and then no transposition is needed
        block = np.ascontiguousarray(np.concatenate([p.T for p in self._pending], axis=1))
        self._pending, n, self._pending_n = [], self._pending_n, 0
        data: np.ndarray | int = block
        if self._mem + block.nbytes > self.spill_bytes:
            data = self._spill(block)
        if isinstance(data, np.ndarray):
            self._mem += block.nbytes
        self._blocks.append((self._sealed, n, data))
        self._sealed += n

    def _spill(self, block: np.ndarray) -> np.ndarray | int:
        """Write a block to the temporary file; its offset (or the block itself when no
        temporary file can be written: the lot then stays in memory, as before)."""
        try:
            if self._file is None:  # open as long as the lot lives; the system deletes it on close
                f = tempfile.TemporaryFile(prefix="lumeval-lot-")  # noqa: SIM115
                self._file, self._fd = f, f.fileno()
            off = self._file_end
            os.pwrite(self._fd, block.data.cast("B"), off)
        except OSError:
            return block
        self._file_end = off + block.nbytes
        return off

    # -- reading
    @property
    def n_rows(self) -> int:
        return self._sealed + self._pending_n

    @property
    def spilled(self) -> bool:
        """Whether some blocks live in the temporary file."""
        return any(not isinstance(d, np.ndarray) for _, _, d in self._blocks)

    @property
    def memory_bytes(self) -> int:
        """Bytes of figures held in memory (blocks not spilled, rows not yet sealed)."""
        return self._mem + sum(p.nbytes for p in self._pending)

    def _read(self, off: int, count: int) -> np.ndarray:
        out = np.empty(count)
        buf = out.data.cast("B")
        got = 0
        while got < buf.nbytes:  # pread may return fewer bytes than asked
            k = os.preadv(self._fd, [buf[got:]], off + got)
            if k <= 0:
                raise OSError("lumeval: the lot's temporary figure file ended early")
            got += k
        return out

    def _pieces(self, j: int, start: int, stop: int) -> Iterator[np.ndarray]:
        """Figure j over rows start:stop, block by block."""
        for first, n, data in self._blocks:
            a, b = max(start, first), min(stop, first + n)
            if a >= b:
                continue
            if isinstance(data, np.ndarray):
                yield data[j, a - first : b - first]
            else:
                yield self._read(data + 8 * (j * n + a - first), b - a)
        if self._pending_n and stop > self._sealed:
            col = np.concatenate([p[:, j] for p in self._pending])
            yield col[max(start - self._sealed, 0) : stop - self._sealed]

    def column(self, name: str, start: int = 0, stop: int | None = None) -> np.ndarray:
        """Figure ``name`` over rows ``start:stop`` as a new contiguous float64 array."""
        j = self._index[name]
        stop = self.n_rows if stop is None else min(stop, self.n_rows)
        out = np.empty(max(stop - start, 0))
        k = 0
        for piece in self._pieces(j, start, stop):
            out[k : k + piece.size] = piece
            k += piece.size
        return out

    def rows(self, start: int, stop: int) -> np.ndarray:
        """Rows ``start:stop`` of every figure, shape (rows, F), figures in name order.

        The array is stored figure by figure (Fortran order: ``out[:, j]`` is contiguous, as
        the Parquet and CSV writers read it); each block in the range is read whole, one read
        per spilled block (not one per figure and block)."""
        stop = min(stop, self.n_rows)
        n = max(stop - start, 0)
        out = np.empty((len(self._names), n))
        for first, m, data in self._blocks:
            a, b = max(start, first), min(stop, first + m)
            if a >= b:
                continue
            block = data if isinstance(data, np.ndarray) else self._read(data, len(self._names) * m).reshape(-1, m)
            out[:, a - start: b - start] = block[:, a - first: b - first]
        if self._pending_n and stop > self._sealed:
            pending = np.concatenate(self._pending)
            lo = max(start - self._sealed, 0)
            out[:, max(self._sealed - start, 0):] = pending[lo: stop - self._sealed].T
        return out.T

    def __getitem__(self, name: str) -> np.ndarray:
        return self.column(name)

    def __contains__(self, name: object) -> bool:  # without reading the column
        return name in self._index

    def __iter__(self) -> Iterator[str]:
        return iter(self._names)

    def __len__(self) -> int:
        return len(self._names)

    def __repr__(self) -> str:
        where = "memory and a temporary file" if self.spilled else "memory"
        return f"FigureColumns({len(self._names)} figures × {self.n_rows} samples, in {where})"


def figure_rows(figures: Mapping[str, np.ndarray], start: int, stop: int) -> np.ndarray:
    """Rows ``start:stop`` of every figure of ``figures`` (a :class:`FigureColumns` or a plain
    dict of (N,) arrays), shape (rows, F), in the mapping's order."""
    if isinstance(figures, FigureColumns):
        return figures.rows(start, stop)
    if not figures:
        return np.empty((max(stop - start, 0), 0))
    return np.column_stack([np.asarray(v, dtype=float)[start:stop] for v in figures.values()])


def n_samples(figures: Mapping[str, np.ndarray]) -> int | None:
    """Samples of a figure mapping without reading a column (None for an empty plain dict)."""
    if isinstance(figures, FigureColumns):
        return figures.n_rows
    for v in figures.values():
        return int(np.asarray(v).shape[0])
    return None
