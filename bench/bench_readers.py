"""Reader benchmark (not a test): the text readers against numpy.loadtxt and against their own
line-by-line path, and ``lumeval lot`` end to end, measured side by side in one run.

Generated into a temporary folder (deleted afterwards; nothing is written into the repository):

* a wide CSV: ``--spectra`` (default 20,000) white-LED spectra at 1 nm, 380-780 nm (the
  generator of ``bench/benchmark.py``), one column per spectrum, values with 6 significant
  digits (about 113 MB for 20,000 spectra: over the 64 MB single-file limit, so ``lot`` reads
  it in column blocks);
* a folder of ``--files`` (default 10,000) single-spectrum CSV files of the same kind.

Printed, each with its ratio to the reference beside it:

1. wide CSV, reading only: ``numpy.loadtxt`` on the same file (the reference); lumeval's
   whole-file parse (fast path); the column-block reader ``lot`` uses; the line-by-line path
   (``parse_text(fast=False)``, the reader before the fast path; ``--skip-old`` leaves it out).
   MB/s and spectra/s.
2. folder, reading only: open + parse per file (``read_spectra``), the lot's per-file read
   (``read_one``: parse + prepare), the line-by-line path on the first 1,000 files, and the
   lot's reading in worker processes (``ordered_reads``). ms per file and spectra/s.
3. ``python -m lumeval lot PATH --quiet --samples-csv OUT`` on the folder and on the wide CSV
   in a child process: wall time, spectra/s, CPU seconds (with its reading workers) and peak
   RSS of the lot process (``/usr/bin/time -f %M`` when present).

Targets (issue 14): folder of single files ≥ 2,000 spectra/s end to end in ``lot``, wide CSV ≥
8,000 spectra/s. Wall times depend on machine load (other processes on the same cores): the
CPU seconds, and spectra per CPU-second, are printed too (the worker processes' CPU counts).

Run: ``.venv/bin/python bench/bench_readers.py [--spectra 20000] [--files 10000] [--skip-old]``
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import numpy as np  # noqa: E402

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))
sys.path.insert(0, str(REPO / "bench"))


def write_data(folder: Path, n_wide: int, n_files: int) -> tuple[Path, Path]:
    from benchmark import WL, generate_spectra

    wide = folder / "wide.csv"
    s = generate_spectra(max(n_wide, 1))
    with open(wide, "w", encoding="ascii") as fh:
        fh.write("wavelength (nm)," + ",".join(f"LED-{i:06d}" for i in range(n_wide)) + "\n")
        for j, w in enumerate(WL):
            fh.write(f"{w:.0f}," + ",".join(f"{v:.6g}" for v in s[:n_wide, j]) + "\n")
    files = folder / "single"
    files.mkdir()
    s = generate_spectra(max(n_files, 1), seed=7)
    for i in range(n_files):
        body = "\n".join(f"{w:.0f},{v:.6g}" for w, v in zip(WL, s[i]))
        (files / f"LED-{i:06d}.csv").write_text("wavelength (nm),value\n" + body + "\n", encoding="ascii")
    return wide, files


def timed(f, *args, **kw):
    c0, t0 = time.process_time(), time.perf_counter()
    out = f(*args, **kw)
    return out, time.perf_counter() - t0, time.process_time() - c0


def row(label: str, wall: float, cpu: float, n: int, mb: float | None, ref: float | None) -> str:
    rate = n / wall
    mbs = f"{mb / wall:8.1f} MB/s" if mb is not None else " " * 13
    ratio = f"{rate / ref:6.2f}x" if ref else "   ref"
    per_cpu = f"{n / cpu:10.0f} per cpu-s" if cpu > 0 else ""
    return f"  {label:50s} {wall:8.3f} s  cpu {cpu:7.3f} s  {mbs}  {rate:10.0f} spectra/s  {ratio} {per_cpu}"


def part_wide(wide: Path, n: int, skip_old: bool) -> None:
    from lumeval.spectra.text import _decode, parse_text
    from lumeval.spectra.text_columns import read_column_blocks

    mb = wide.stat().st_size / 1e6
    print(f"\n1. Wide CSV, reading only: {n} spectra at 1 nm, {mb:.1f} MB")
    a, wall, cpu = timed(np.loadtxt, wide, delimiter=",", skiprows=1)
    ref = n / wall
    print(row("numpy.loadtxt (reference)", wall, cpu, n, mb, None))
    s, wall, cpu = timed(lambda: parse_text(_decode(wide.read_bytes(), str(wide)), str(wide)))
    assert np.array_equal(s.values, a[:, 1:].T)
    print(row("lumeval whole file, fast path", wall, cpu, n, mb, ref))
    del s
    _, wall, cpu = timed(lambda: sum(len(b) for b in read_column_blocks(wide, block_cols=2048)))
    print(row("lumeval column blocks (what lot uses)", wall, cpu, n, mb, ref))
    if not skip_old:
        s, wall, cpu = timed(lambda: parse_text(_decode(wide.read_bytes(), str(wide)), str(wide), fast=False))
        assert np.array_equal(s.values, a[:, 1:].T)
        print(row("lumeval whole file, line-by-line path (old)", wall, cpu, n, mb, ref))


def part_folder(folder: Path, skip_old: bool) -> None:
    from lumeval.lots.reading import default_read_processes, ordered_reads
    from lumeval.lots.run import read_one
    from lumeval.spectra.read import read_spectra
    from lumeval.spectra.text import _decode, parse_text

    files = sorted(str(p) for p in folder.iterdir())
    n = len(files)
    print(f"\n2. Folder of {n} single-spectrum files, reading only")
    _, wall, cpu = timed(lambda: [read_spectra(f) for f in files])
    ref = n / wall
    print(row("open + parse (read_spectra)", wall, cpu, n, None, None) + f"  {wall / n * 1e3:.3f} ms/file")
    _, wall, cpu = timed(lambda: [read_one(f) for f in files])
    print(row("open + parse + prepare (lot's read_one)", wall, cpu, n, None, ref) + f"  {wall / n * 1e3:.3f} ms/file")
    if not skip_old:
        sub = files[:1000]
        _, wall, cpu = timed(lambda: [parse_text(_decode(Path(f).read_bytes(), f), f, fast=False) for f in sub])
        print(row(f"open + parse, line-by-line path (old; {len(sub)} files)", wall, cpu, len(sub), None, ref)
              + f"  {wall / len(sub) * 1e3:.3f} ms/file")
    k = default_read_processes()
    _, wall, cpu = timed(lambda: list(ordered_reads(files, processes=k)))
    print(row(f"lot's reading in {k} worker processes", wall, cpu, n, None, ref) + f"  {wall / n * 1e3:.3f} ms/file"
          + "  (cpu: this process only, not the workers)")


def part_lot(target: Path, n: int, out: Path, label: str) -> None:
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    # /usr/bin/time measures the peak RSS of the lot process itself (a child forked from this
    # large process would report this process's size as its own peak)
    rss_file = out.with_suffix(".rss")
    timer = ["/usr/bin/time", "-f", "%M", "-o", str(rss_file)] if Path("/usr/bin/time").exists() else []
    t0 = time.perf_counter()
    proc = subprocess.run([*timer, sys.executable, "-m", "lumeval", "lot", str(target), "--quiet", "--samples-csv",
                           str(out)], cwd=REPO, env={**os.environ, "PYTHONPATH": str(REPO)},
                          stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, check=False)
    wall = time.perf_counter() - t0
    err = proc.stderr.decode()
    code = proc.returncode
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    rows = len(out.read_text(encoding="utf-8").splitlines()) if out.exists() else 0
    rss = f"peak RSS {int(rss_file.read_text().split()[-1]) / 1024:6.0f} MB" if rss_file.exists() else ""
    print(f"  {label:50s} {wall:8.3f} s  cpu {cpu:7.3f} s  {n / wall:10.0f} spectra/s  {n / cpu:8.0f} per cpu-s  "
          f"{rss}  exit {code}  ({rows} CSV lines)")
    if code not in (0, 1):
        print("    " + err.strip().replace("\n", "\n    "))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--spectra", type=int, default=20_000, help="spectra in the wide CSV")
    ap.add_argument("--files", type=int, default=10_000, help="single-spectrum files in the folder")
    ap.add_argument("--skip-old", action="store_true", help="leave out the line-by-line path")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory(prefix="lumeval-bench-readers-") as tmp:
        t = time.perf_counter()
        wide, folder = write_data(Path(tmp), args.spectra, args.files)
        print(f"data written in {time.perf_counter() - t:.1f} s (temporary folder, deleted afterwards)")
        part_wide(wide, args.spectra, args.skip_old)
        part_folder(folder, args.skip_old)
        print("\n3. lumeval lot end to end (child process: start-up, reading, engine, statistics, CSV)")
        part_lot(folder, args.files, Path(tmp) / "a.csv", f"folder of {args.files} files")
        part_lot(wide, args.spectra, Path(tmp) / "b.csv", f"wide CSV of {args.spectra} spectra")


if __name__ == "__main__":
    main()
