"""Throughput benchmark (not a test): the vectorised engine against a per-spectrum loop over
colour-science, and a large lot end to end through ``lumeval lot`` with its peak memory.

Part 1 — same spectra, one run: ``--n`` (default 2,000) generated white-LED spectra (1 nm,
380-780 nm; blue pump + two phosphor bands with random pump wavelength, widths, band positions
and amounts, spanning roughly 2,500-8,000 K) are evaluated

* by :func:`lumeval.engine.evaluate` (all figures: XYZ, x y, u v, u'v', Ohno CCT/Duv, CIE 13.3
  Ra and R1..R14, CIE 224 Rf, TM-30 Rf/Rg and the 16 hue-bin Rf,h/Rcs,h/Rhs,h, LER, S/P,
  melanopic DER, peak), median of three runs after a warm-up on 10 spectra;
* by a Python loop calling colour-science 0.4.7's per-spectrum functions for the same figures:
  ``sd_to_XYZ``, ``uv_to_CCT_Ohno2013``, ``colour_rendering_index(additional_data=True)``
  (R1..R14), ``colour_fidelity_index(method='ANSI/IES TM-30-18', additional_data=True)``
  (Rf, Rg, hue bins; its Rf is the CIE 224 Rf), ``luminous_efficacy`` (LER), the scotopic and
  photopic ``luminous_flux`` (S/P) and the peak. colour-science has no melanopic DER, so the
  loop does less work than the engine (the ratio is conservative). One run, after a warm-up
  on 5 spectra; colour's caches are cleared first.

Both throughputs and their ratio are printed, with the largest differences between the two
(a sanity check only; tests/test_engine_equivalence.py holds the tolerances).

Part 2 — ``--large`` (default 100,000) spectra written as wide CSVs (``--per-file`` samples per
file) into a temporary folder, then ``python -m lumeval lot FOLDER --quiet --samples-csv ...``
run as a child process; wall time and the child's peak resident memory (``ru_maxrss`` from
``os.wait4``) are printed.

Run: ``.venv/bin/python bench/benchmark.py`` (``make bench``); ``--skip-large`` for part 1 only.
Targets (issue 4): engine ≥ 100× the loop (aim 200×); 100,000 spectra under 2 GB peak.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

# One BLAS thread: the colour-science loop runs on one core, so the engine is measured on one
# core too (set before numpy is imported; override by exporting the variables).
for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import numpy as np  # noqa: E402

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

WL = np.arange(380.0, 781.0, 1.0)
HC_EV_NM = 1239.841984


def _band(wl, peak_nm, fwhm_nm, red_skew):
    """Gaussian in photon energy (the LED/phosphor band shape of spectra_demo/generate.py),
    vectorised over rows: peak_nm, fwhm_nm, red_skew of shape (N, 1)."""
    e = HC_EV_NM / wl[None, :]
    e0 = HC_EV_NM / peak_nm
    fwhm_e = HC_EV_NM / (peak_nm - fwhm_nm / 2) - HC_EV_NM / (peak_nm + fwhm_nm / 2)
    sigma = fwhm_e / 2.3548
    sig = np.where(e < e0, sigma * (1.0 + red_skew), sigma)
    return np.exp(-0.5 * ((e - e0) / sig) ** 2) * (HC_EV_NM / wl[None, :] ** 2)


def generate_spectra(n: int, seed: int = 2026) -> np.ndarray:
    """(n, 401) relative SPDs of varied white LEDs at 1 nm, 380-780 nm (peak 1)."""
    rng = np.random.default_rng(seed)
    col = lambda lo, hi: rng.uniform(lo, hi, (n, 1))  # noqa: E731
    pump = _band(WL, col(440, 460), col(16, 24), 0.35)
    green = _band(WL, col(520, 560), col(90, 120), 0.2)
    red = _band(WL, col(600, 650), col(70, 95), 0.25)
    s = pump + col(0.5, 2.2) * green + col(0.1, 1.4) * red
    s = s + rng.normal(0.0, 0.001, s.shape) * s.max(axis=1, keepdims=True)
    s = np.clip(s, 0.0, None)
    return s / s.max(axis=1, keepdims=True)


# --------------------------------------------------------------------------- part 1


def engine_run(values: np.ndarray, chunk_size: int | None = None):
    from lumeval.engine import DEFAULT_CHUNK, evaluate
    from lumeval.spectra.model import SpectrumSet

    n = values.shape[0]
    s = SpectrumSet(WL, values, tuple(f"s{i}" for i in range(n)), tuple("bench" for _ in range(n)))
    return evaluate(s, chunk_size=chunk_size or DEFAULT_CHUNK)


def _time_engine(values, chunk_size, repeat):
    """[(wall s, CPU s)] of ``repeat`` runs, and the last evaluation."""
    out = []
    for _ in range(repeat):
        t, c = time.perf_counter(), time.process_time()
        ev = engine_run(values, chunk_size)
        out.append((time.perf_counter() - t, time.process_time() - c))
    return out, ev


def colour_loop(values: np.ndarray) -> dict[str, np.ndarray]:
    """Per-spectrum colour-science computation of the same figures; arrays of shape (N,)."""
    from lumeval._colour import load

    colour = load()
    shape = colour.SpectralShape(380, 780, 1)
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(shape)
    scot = colour.colorimetry.SDS_LEFS_SCOTOPIC["CIE 1951 Scotopic Standard Observer"]
    n = values.shape[0]
    out = {k: np.full(n, np.nan) for k in ("x", "y", "cct_K", "duv", "Ra", "R9", "Rf", "Rg", "ler", "sp", "peak")}
    out["R"] = np.full((n, 14), np.nan)
    out["Rf_h"] = np.full((n, 16), np.nan)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for i in range(n):
            sd = colour.SpectralDistribution(values[i], WL)
            XYZ = colour.sd_to_XYZ(sd, cmfs)
            xy = colour.XYZ_to_xy(XYZ)
            cct, duv = colour.temperature.uv_to_CCT_Ohno2013(colour.xy_to_UCS_uv(xy))
            cri = colour.colour_rendering_index(sd, additional_data=True)
            tm = colour.colour_fidelity_index(sd, True, method="ANSI/IES TM-30-18")
            ler = colour.luminous_efficacy(sd)
            sp = colour.luminous_flux(sd, scot, 1700) / colour.luminous_flux(sd)
            out["x"][i], out["y"][i] = xy
            out["cct_K"][i], out["duv"][i] = cct, duv
            out["Ra"][i] = cri.Q_a
            out["R"][i] = [cri.Q_as[k].Q_a for k in range(1, 15)]
            out["Rf"][i], out["Rg"][i] = tm.R_f, tm.R_g
            out["Rf_h"][i] = tm.R_fs if np.size(tm.R_fs) == 16 else np.nan
            out["ler"][i], out["sp"][i] = ler, sp
            out["peak"][i] = WL[int(np.argmax(values[i]))]
    return out


def part1(n: int) -> None:
    from lumeval._colour import load

    values = generate_spectra(n)
    print(f"Part 1: {n} generated white-LED spectra (1 nm, 380-780 nm), one process, one BLAS thread ({os.cpu_count()} cores, shared)")

    from lumeval.engine import DEFAULT_CHUNK

    engine_run(values[:10])  # warm-up: tables, imports
    chunks = (512, DEFAULT_CHUNK)
    # The machine is shared: engine runs are taken before AND after the (long) loop, and the
    # median of all of them is reported, so that a change of load during the loop shows.
    before = {c: _time_engine(values, c, 3)[0] for c in chunks}

    colour = load()
    colour.utilities.CACHE_REGISTRY.clear_all_caches()
    colour_loop(values[:5])
    t, c = time.perf_counter(), time.process_time()
    ref = colour_loop(values)
    t_loop, c_loop = time.perf_counter() - t, time.process_time() - c

    after = {}
    for c in chunks:
        after[c], ev = _time_engine(values, c, 2)
    print(f"  colour-science loop   wall {t_loop:8.3f} s  {n / t_loop:8.1f} /s    CPU {c_loop:8.3f} s  {n / c_loop:8.1f} /s   (one run)")
    for c in chunks:
        runs = before[c] + after[c]
        w = statistics.median(r[0] for r in runs)
        cpu = statistics.median(r[1] for r in runs)
        print(
            f"  engine, chunk {c:5d}   wall {w:8.3f} s  {n / w:8.0f} /s    CPU {cpu:8.3f} s  {n / cpu:8.0f} /s   "
            f"ratio wall {t_loop / w:4.0f} x, CPU {c_loop / cpu:4.0f} x"
        )
        print(f"      runs (wall/CPU s) before the loop: {', '.join(f'{a:.2f}/{b:.2f}' for a, b in before[c])}; "
              f"after: {', '.join(f'{a:.2f}/{b:.2f}' for a, b in after[c])}")
    print("  target: ratio >= 100 x, aim 200 x")
    diffs = {
        "x": np.abs(ev.x - ref["x"]),
        "CCT (K)": np.abs(ev.cct_K - ref["cct_K"]),
        "Duv": np.abs(ev.duv - ref["duv"]),
        "Ra": np.abs(ev.cri.Ra - ref["Ra"]),
        "R1..R14": np.abs(ev.cri.R - ref["R"]).max(axis=1),
        "Rf": np.abs(ev.tm30.Rf - ref["Rf"]),
        "Rg": np.abs(ev.tm30.Rg - ref["Rg"]),
        "LER (lm/W)": np.abs(ev.photometry.ler_lm_per_W - ref["ler"]),
        "S/P": np.abs(ev.photometry.sp_ratio - ref["sp"]),
    }
    print("  largest |engine - colour| over the set (sanity only; the engine passes its own CCT to")
    print("  CRI/TM-30 while colour uses Robertson (CRI) / Ohno 2013 (TM-30) CCTs, see the tests):")
    print("   " + "; ".join(f"{k} {np.nanmax(v):.2g}" for k, v in diffs.items()))


# --------------------------------------------------------------------------- part 2


def write_wide_csvs(folder: Path, n: int, per_file: int) -> int:
    """Write n spectra as wide CSVs of ``per_file`` columns; returns the number of files."""
    k = 0
    for start in range(0, n, per_file):
        m = min(per_file, n - start)
        vals = generate_spectra(m, seed=10_000 + k)
        header = "wavelength_nm," + ",".join(f"L{start + j:06d}" for j in range(m))
        block = np.column_stack([WL, vals.T])
        path = folder / f"lot_{k:04d}.csv"
        np.savetxt(path, block, fmt=["%.0f"] + ["%.5f"] * m, delimiter=",", header=header, comments="")
        k += 1
    return k


def part2(n: int, per_file: int, keep: bool) -> None:
    tmp = Path(tempfile.mkdtemp(prefix="lumeval_bench_"))
    try:
        print(f"Part 2: {n} spectra end to end through `lumeval lot` ({per_file} per wide CSV)")
        t = time.perf_counter()
        (tmp / "in").mkdir()
        files = write_wide_csvs(tmp / "in", n, per_file)
        size = sum(p.stat().st_size for p in (tmp / "in").iterdir())
        print(f"  wrote {files} files, {size / 1e6:.0f} MB, in {time.perf_counter() - t:.1f} s ({tmp})")
        cmd = [sys.executable, "-m", "lumeval", "lot", str(tmp / "in"), "--quiet", "--samples-csv", str(tmp / "samples.csv"),
               "--json", str(tmp / "lot.json")]
        t = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=REPO)
        out, err = proc.communicate()
        wall = time.perf_counter() - t
        # peak memory of this child only: wait4 would race communicate(), so read RUSAGE_CHILDREN
        # (the benchmark's only other children are none: part 1 runs in-process).
        import resource

        peak_kb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
        lines = out.decode("utf-8", "replace").splitlines()
        head = next((ln for ln in lines if ln.startswith("Lot:")), "")
        print(f"  exit code {proc.returncode}; {head}")
        if proc.returncode not in (0, 1):
            print(err.decode("utf-8", "replace")[-2000:])
        print(f"  wall time {wall:8.1f} s   {n / wall:8.0f} spectra/s end to end (read + evaluate + statistics + write)")
        print(f"  peak RSS  {peak_kb / 1024:8.0f} MB  (ru_maxrss of the child; target < 2048 MB)")
        rows = 0
        if (tmp / "samples.csv").exists():
            with open(tmp / "samples.csv", encoding="utf-8") as fh:
                rows = sum(1 for _ in fh) - 1
        print(f"  per-sample CSV rows: {rows}")
    finally:
        if not keep:
            shutil.rmtree(tmp, ignore_errors=True)


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=2000, help="spectra in part 1 (default 2000)")
    ap.add_argument("--large", type=int, default=100_000, help="spectra in part 2 (default 100000)")
    ap.add_argument("--per-file", type=int, default=1000, help="spectra per wide CSV in part 2")
    ap.add_argument("--skip-large", action="store_true", help="run part 1 only")
    ap.add_argument("--skip-loop", action="store_true", help="run part 2 only")
    ap.add_argument("--keep", action="store_true", help="keep part 2's temporary folder")
    a = ap.parse_args(argv)
    if not a.skip_loop:
        part1(a.n)
    if not a.skip_large:
        part2(a.large, a.per_file, a.keep)


if __name__ == "__main__":
    main()
