"""Hostile and odd output targets, write failures and signals, through the real CLI.

Each case builds its input in a temporary folder from a few lines, runs ``lumeval`` (in-process
through ``lumeval.cli.main`` where that is enough, as a subprocess where the case needs a real
process: umask, stdout to /dev/full, a closed pipe, a file-size limit, SIGTERM, SIGKILL), and
checks behaviour only: exit code, the one stderr line, which files exist and what they hold.
The expected behaviour is lumeval's documented output policy (docs/output-formats.md, "Output
files"); no numeric check here.
"""

from __future__ import annotations

import hashlib
import math
import os
import signal
import socket
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest

from lumeval.render.tables import read_csv_report

from .conftest import run_cli_in_process as run

ROOT = Path(__file__).resolve().parents[1]
ENV = {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}
CRITERIA = 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 80\n'


def lamp_csv(path: Path, names=("lamp",), cct=(3000.0,)) -> Path:
    """A small spectrum file: Planck's law at the given temperatures, 380-780 nm in 5 nm steps."""
    def planck(wl_nm, t):
        x = wl_nm * 1e-9
        return 1e-13 / (x ** 5 * (math.exp(1.4388e-2 / (x * t)) - 1.0))

    def q(n):
        return '"' + n.replace('"', '""') + '"'

    lines = ["wavelength_nm," + ",".join(q(n) for n in names)]
    for wl in range(380, 781, 5):
        lines.append(f"{wl}," + ",".join(f"{planck(wl, t):.6g}" for t in cct))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def cli(argv, **kw):
    """The console entry point in a subprocess (signals, umask, real stdout)."""
    return subprocess.run([sys.executable, "-m", "lumeval", *map(str, argv)], env=ENV, capture_output=True,
                          timeout=kw.pop("timeout", 300), **kw)


def one_error_line(code, err, *needles):
    assert code == 2, err
    assert "Traceback" not in err and "internal error" not in err, err
    lines = [ln for ln in err.splitlines() if ln.strip() and not ln.startswith("lumeval: note:")]
    assert len(lines) == 1 and lines[0].startswith("lumeval: error: "), err
    for n in needles:
        assert n in lines[0], err


def temporaries(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if ".lumeval-" in p.name)


def digest(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.fixture
def work(tmp_path):
    spd = lamp_csv(tmp_path / "lamp.csv")
    crit = tmp_path / "criteria.toml"
    crit.write_text(CRITERIA, encoding="utf-8")
    return tmp_path, spd, crit


# --------------------------------------------------------------------------- targets


def _commands(tmp, spd, crit, target):
    """Every option that names an output file, each given ``target``."""
    return [
        ["check", spd, "-c", crit, "-o", target],
        ["check", spd, "-c", crit, "--html", target],
        ["inspect", spd, "--html", target],
        ["lot", spd, "-q", "--json", target],
        ["lot", spd, "-q", "--samples-csv", target],
        ["claims", spd, "--claims", _claims(tmp), "-o", target],
        ["criteria", "explain", crit, "-o", target],
        ["criteria", "new", target, "--force"],
        ["convert", spd, target, "--force"],
    ]


def _claims(tmp):
    p = tmp / "claims.toml"
    if not p.exists():
        p.write_text('lumeval_claims = 1\n[claims]\nRa = ">= 80"\n', encoding="utf-8")
    return p


def test_dev_null_is_refused_by_every_output_option(work, capsys):
    """As root, `-o /dev/null` once replaced the system's /dev/null with a regular file."""
    tmp, spd, crit = work
    before = os.stat("/dev/null")
    for argv in _commands(tmp, spd, crit, "/dev/null") + [["check", spd, "-c", crit, "--plots", "/dev"]]:
        if argv[0] == "convert":
            argv = ["convert", spd, "/dev/null.csv", "--force"]
        code, _, err = run(argv, capsys)
        one_error_line(code, err)
        assert "device" in err, (argv, err)
    after = os.stat("/dev/null")
    assert stat.S_ISCHR(after.st_mode) and after.st_rdev == before.st_rdev and after.st_ino == before.st_ino


@pytest.mark.skipif(os.geteuid() != 0, reason="creating a device node needs root (os.mknod); /dev/null is tested above")
def test_device_nodes_are_refused_as_root(work, capsys):
    tmp, spd, crit = work
    for kind, dev in (("character", stat.S_IFCHR), ("block", stat.S_IFBLK)):
        node = tmp / f"{kind}.json"
        try:
            os.mknod(node, 0o600 | dev, os.makedev(1, 3))
        except PermissionError:
            pytest.skip("this container may not create device nodes even as root")
        for argv in _commands(tmp, spd, crit, node):
            if argv[0] == "convert":
                argv = ["convert", spd, node, "--force"]
            code, _, err = run(argv, capsys)
            one_error_line(code, err, f"{kind} device")
            st = os.lstat(node)
            assert stat.S_IFMT(st.st_mode) == dev, argv
        node.unlink()


def test_fifo_is_refused_without_waiting(work, capsys):
    tmp, spd, crit = work
    fifo = tmp / "out.json"
    os.mkfifo(fifo)
    t0 = time.monotonic()
    for argv in _commands(tmp, spd, crit, fifo):
        code, _, err = run(argv, capsys)
        one_error_line(code, err, "FIFO")
    assert time.monotonic() - t0 < 120  # never blocked opening the FIFO
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)
    assert temporaries(tmp) == []


def test_socket_and_links_to_devices_are_refused(work, capsys):
    tmp, spd, crit = work
    sock_path = tmp / "s.json"
    s = socket.socket(socket.AF_UNIX)
    try:
        s.bind(str(sock_path))
        code, _, err = run(["check", spd, "-c", crit, "-o", sock_path], capsys)
        one_error_line(code, err, "socket")
    finally:
        s.close()
    link = tmp / "link.json"
    link.symlink_to("/dev/null")
    code, _, err = run(["check", spd, "-c", crit, "-o", link], capsys)
    one_error_line(code, err, "character device", "symbolic link")
    assert link.is_symlink()
    code, _, err = run(["check", spd, "-c", crit, "-o", "/dev/stdout"], capsys)
    one_error_line(code, err)


def test_symlinks_are_replaced_not_followed(work, capsys):
    tmp, spd, crit = work
    precious = tmp / "precious.txt"
    precious.write_text("keep me\n")
    link = tmp / "report.json"
    link.symlink_to(precious)
    code, _, err = run(["check", spd, "-c", crit, "-f", "json", "-o", link], capsys)
    assert code == 0, err
    assert precious.read_text() == "keep me\n"
    assert not link.is_symlink() and link.read_text().startswith("{")
    dangling = tmp / "dangling.html"
    dangling.symlink_to(tmp / "nowhere" / "x.html")
    code, _, err = run(["inspect", spd, "--html", dangling], capsys)
    assert code == 0, err
    assert not dangling.is_symlink() and "<html" in dangling.read_text()


def test_an_output_that_plots_would_write_is_refused_before_any_work(work, capsys):
    """`--json R/chromaticity.svg --plots R` used to lose the JSON under the plot."""
    tmp, spd, crit = work
    r = tmp / "R"
    r.mkdir()
    for argv, opt in (
        (["lot", spd, "-q", "--json", r / "chromaticity.svg", "--plots", r], "--json"),
        (["lot", spd, "-q", "--samples-csv", r / "spd-01-lamp.png", "--plots", r], "--samples-csv"),
        (["check", spd, "-c", crit, "-o", r / "cri-01-lamp.svg", "--plots", r], "--output"),
        (["inspect", spd, "--html", r / "distributions.svg", "--plots", r], "--html"),
        # found by a docs walkthrough: three figures' names were missing from the guard
        (["check", spd, "-c", crit, "-o", r / "fidelity-gamut.svg", "--plots", r], "--output"),
        (["inspect", spd, "--html", r / "chromaticity-xy.png", "--plots", r], "--html"),
        (["lot", spd, "-q", "--json", r / "colour-vectors-01-lamp.svg", "--plots", r], "--json"),
    ):
        code, _, err = run(argv, capsys)
        one_error_line(code, err, opt, "--plots")
    assert list(r.iterdir()) == []
    # a file in the folder that --plots does not write is fine
    code, _, err = run(["lot", spd, "-q", "--json", r / "lot.json", "--plots", r], capsys)
    assert code == 0, err
    assert (r / "lot.json").read_text().startswith("{") and (r / "chromaticity.svg").exists()


def test_plots_never_replace_an_input_named_like_a_figure(work, capsys):
    """An input (a spectrum, a criteria file) saved in the --plots folder under a figure's name
    was replaced by the figure (found by exploratory testing); now refused like any output
    naming an input, before any work, inputs unchanged."""
    tmp, spd, crit = work
    r = tmp / "R"
    r.mkdir()
    as_plot = r / "chromaticity.svg"
    as_plot.write_bytes(spd.read_bytes())
    crit_as_plot = r / "fidelity-gamut.png"
    crit_as_plot.write_bytes(crit.read_bytes())
    before = {p: p.read_bytes() for p in (as_plot, crit_as_plot)}
    for argv in (["inspect", as_plot, "--plots", r], ["lot", as_plot, "-q", "--plots", r],
                 ["check", spd, "-c", crit_as_plot, "--plots", r]):
        code, _, err = run(argv, capsys)
        one_error_line(code, err, "one of the input files")
    assert {p: p.read_bytes() for p in (as_plot, crit_as_plot)} == before
    assert sorted(q.name for q in r.iterdir()) == ["chromaticity.svg", "fidelity-gamut.png"]
    # a previous run's figures in the folder are no inputs: a second run replaces them
    code, _, err = run(["lot", spd, "-q", "--plots", tmp / "P"], capsys)
    assert code == 0, err
    code, _, err = run(["lot", spd, "-q", "--plots", tmp / "P"], capsys)
    assert code == 0, err


def test_an_output_never_replaces_the_history_store(work, capsys):
    """`lot --store h.db --json h.db` replaced the store (every recorded lot) with the JSON, then
    failed to record (found by exploratory testing); the store is an input of the run."""
    tmp, spd, crit = work
    store = tmp / "h.db"
    code, _, err = run(["lot", spd, "-q", "--store", store], capsys)
    assert code == 0, err
    before = store.read_bytes()
    for opt in ("--json", "--samples-csv", "--html", "--samples-parquet"):
        for target in (store, f"sqlite:///{store}"):
            code, _, err = run(["lot", spd, "-q", "--store", target, opt, store], capsys)
            one_error_line(code, err, opt, "one of the input files")
    assert store.read_bytes() == before


@pytest.mark.parametrize("n, lot", [(1, None), (3, None), (3, True)])
def test_every_figure_the_plots_option_writes_is_guarded(tmp_path, n, lot):
    """Each key report_figures() draws (one spectrum, several, a lot) matches one of the patterns
    the output guard refuses for another output of the run (PLOT_FILE_PATTERNS)."""
    import fnmatch

    from lumeval.engine import evaluate
    from lumeval.render.report_figures import PLOT_FILE_PATTERNS, report_figures
    from lumeval.spectra.read import read_spectra

    path = lamp_csv(tmp_path / "lamps.csv", names=tuple(f"s{i}" for i in range(n)),
                    cct=tuple(2700.0 + 300 * i for i in range(n)))
    figs = report_figures(evaluate(read_spectra(path)), lot=lot)
    keys = [f.key for f in figs]
    assert any(k == "fidelity-gamut" for k in keys) and any(k.startswith("colour-vectors") for k in keys)
    for k in keys:
        for ext in ("svg", "png"):
            assert any(fnmatch.fnmatch(f"{k}.{ext}", p) for p in PLOT_FILE_PATTERNS), k


def test_a_fifo_among_the_plot_files_is_refused_before_any_work(work, capsys):
    tmp, spd, crit = work
    r = tmp / "R"
    r.mkdir()
    os.mkfifo(r / "chromaticity.png")
    code, _, err = run(["inspect", spd, "--plots", r], capsys)
    one_error_line(code, err, "FIFO", "--plots")
    assert sorted(p.name for p in r.iterdir()) == ["chromaticity.png"]


def test_dash_is_standard_output_where_supported_and_refused_elsewhere(work, capsys):
    tmp, spd, crit = work
    os.chdir(tmp)
    code, out, err = run(["check", spd, "-c", crit, "-f", "json", "-o", "-"], capsys)
    assert code == 0 and out.startswith("{"), err
    code, out, err = run(["criteria", "new", "-"], capsys)
    assert code == 0 and "[[clause]]" in out, err
    for argv in (["inspect", spd, "--html", "-"], ["lot", spd, "-q", "--json", "-"], ["inspect", spd, "--plots", "-"]):
        code, _, err = run(argv, capsys)
        one_error_line(code, err, "standard output")
    assert not (tmp / "-").exists()


# --------------------------------------------------------------------------- overwrite policy


def test_reports_replace_existing_files_and_keep_their_permissions(work, capsys):
    tmp, spd, crit = work
    targets = {"-o": tmp / "r.json", "--html": tmp / "r.html"}
    for p in targets.values():
        p.write_text("old\n")
        os.chmod(p, 0o640)
    code, _, err = run(["check", spd, "-c", crit, "-f", "json", "-o", targets["-o"], "--html", targets["--html"]], capsys)
    assert code == 0, err
    for p in targets.values():
        assert p.read_text() != "old\n"
        assert stat.S_IMODE(os.stat(p).st_mode) == 0o640
    assert temporaries(tmp) == []


@pytest.mark.parametrize("umask, mode", [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)])
def test_new_files_honour_the_umask(work, umask, mode):
    tmp, spd, crit = work
    out = tmp / f"new{umask:o}"
    out.mkdir()
    r = cli(["lot", spd, "-q", "--json", out / "lot.json", "--samples-csv", out / "s.csv", "--html", out / "r.html"],
            preexec_fn=lambda: os.umask(umask))
    assert r.returncode == 0, r.stderr
    r = cli(["convert", spd, out / "c.json"], preexec_fn=lambda: os.umask(umask))
    assert r.returncode == 0, r.stderr
    for p in out.iterdir():
        assert stat.S_IMODE(os.stat(p).st_mode) == mode, p


def test_source_files_need_force(work, capsys):
    """convert and `criteria new` write files that are inputs of other runs: an existing one
    (even a dangling link) is replaced only with --force; the other outputs are reports."""
    tmp, spd, crit = work
    for existing in (tmp / "c.json", tmp / "n.toml"):
        existing.write_text("mine\n")
    link = tmp / "dangling.csv"
    link.symlink_to(tmp / "nowhere.csv")
    for argv, p in ((["convert", spd, tmp / "c.json"], tmp / "c.json"), (["criteria", "new", tmp / "n.toml"], tmp / "n.toml"),
                    (["convert", spd, link], link)):
        code, _, err = run(argv, capsys)
        one_error_line(code, err, "--force")
        assert p.is_symlink() or p.read_text() == "mine\n"
        code, _, err = run([*argv, "--force"], capsys)
        assert code == 0, err
        assert not p.is_symlink() and p.read_text() != "mine\n"


def test_inputs_are_never_outputs(work, capsys):
    tmp, spd, crit = work
    before = digest(spd)
    for argv in (["check", spd, "-c", crit, "-o", spd], ["lot", tmp, "-q", "--json", spd],
                 ["criteria", "explain", crit, "-o", crit], ["convert", spd, spd, "--force"]):
        code, _, err = run(argv, capsys)
        one_error_line(code, err)
    assert digest(spd) == before


# --------------------------------------------------------------------------- write failures


def test_stdout_to_dev_full_is_exit_2_naming_standard_output(work):
    tmp, spd, crit = work
    for argv in (["inspect", spd, "-f", "json"], ["inspect", spd], ["check", spd, "-c", crit],
                 ["lot", spd, "-q", "-f", "csv"], ["criteria", "new"]):
        with open("/dev/full", "w") as full:
            r = subprocess.run([sys.executable, "-m", "lumeval", *map(str, argv)], env=ENV, stdout=full,
                               stderr=subprocess.PIPE, timeout=300)
        err = r.stderr.decode()
        one_error_line(r.returncode, err, "standard output", "No space left")


def test_closed_pipe_is_exit_2_naming_standard_output(work):
    tmp, spd, _ = work
    big = lamp_csv(tmp / "wide.csv", names=[f"s{k}" for k in range(400)], cct=[2700.0 + 5 * k for k in range(400)])
    for fmt in ("csv", "terminal"):
        p = subprocess.Popen([sys.executable, "-m", "lumeval", "lot", str(big), "-q", "-f", fmt],
                             env=ENV, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        p.stdout.readline()
        p.stdout.close()
        err = p.stderr.read().decode()
        one_error_line(p.wait(timeout=300), err, "standard output", "pipe")


def _limit_file_size(nbytes):
    def pre():
        import resource

        resource.setrlimit(resource.RLIMIT_FSIZE, (nbytes, nbytes))
    return pre


def test_disk_full_on_html_and_plots_keeps_old_files_and_leaves_no_temporary(work):
    """A full disk simulated by a file-size limit (RLIMIT_FSIZE: writes beyond it fail with
    EFBIG, which Python receives as an error because it ignores SIGXFSZ)."""
    tmp, spd, crit = work
    html = tmp / "r.html"
    html.write_text("old report\n")
    plots = tmp / "plots"
    plots.mkdir()
    (plots / "chromaticity.svg").write_text("old figure\n")
    r = cli(["check", spd, "-c", crit, "--html", html], preexec_fn=_limit_file_size(20_000))
    one_error_line(r.returncode, r.stderr.decode(), str(html), "--html")
    assert html.read_text() == "old report\n"
    r = cli(["check", spd, "-c", crit, "--plots", plots], preexec_fn=_limit_file_size(20_000))
    one_error_line(r.returncode, r.stderr.decode(), "--plots")
    assert (plots / "chromaticity.svg").read_text() == "old figure\n" or (plots / "chromaticity.svg").stat().st_size < 20_000
    assert temporaries(tmp) == [] and temporaries(plots) == []


# --------------------------------------------------------------------------- signals

_SLOW_WRITER = r"""
import sys, time
import lumeval._io as io_

def slow(path, data, option=None):
    with io_.atomic_output(path, option=option) as fh:
        fh.write(data[:10])
        fh.flush()
        print("WRITING", flush=True)
        time.sleep(60)
        fh.write(data[10:])

io_.write_bytes = slow
from lumeval.cli import main
sys.argv = ["lumeval", *sys.argv[1:]]
main()
"""


def _start_slow(argv):
    p = subprocess.Popen([sys.executable, "-c", _SLOW_WRITER, *map(str, argv)], env=ENV,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    assert p.stdout.readline().strip() == b"WRITING"
    return p


def test_sigterm_during_a_write_removes_the_temporary_and_keeps_the_old_file(work):
    tmp, spd, _ = work
    out = tmp / "out.json"
    out.write_text("old\n")
    p = _start_slow(["convert", spd, out, "--force"])
    assert len(temporaries(tmp)) == 1
    p.send_signal(signal.SIGTERM)
    code = p.wait(timeout=60)
    err = p.stderr.read().decode()
    assert code == 128 + signal.SIGTERM, err
    assert "SIGTERM" in err and "Traceback" not in err
    assert temporaries(tmp) == [] and out.read_text() == "old\n"


def test_temporary_of_a_killed_run_is_recognisable_and_cleaned_by_the_next_run(work):
    tmp, spd, _ = work
    out = tmp / "out.json"
    p = _start_slow(["convert", spd, out])
    left = temporaries(tmp)
    p.kill()
    p.wait(timeout=60)
    assert temporaries(tmp) == left and len(left) == 1
    assert left[0].startswith(".out.json.lumeval-") and f"-{p.pid}-" in left[0] and left[0].endswith(".tmp")
    assert not out.exists()
    r = cli(["convert", spd, out])
    assert r.returncode == 0, r.stderr
    assert temporaries(tmp) == [] and out.read_text().startswith("{")


# --------------------------------------------------------------------------- untrusted text

#: Names, labels and metadata as other people's tools might write them: terminal escape
#: sequences (CSI clear screen, OSC 8 hyperlink, BEL, CR overwriting the line, a bidi override),
#: rich markup, spreadsheet formulas, matplotlib mathtext and HTML breakouts.
HOSTILE_NAMES = (
    "\x1b]8;;http://evil.example/\x1b\\[bold green]PASS[/]\x1b[2J",
    '=HYPERLINK("http://evil.example","ok")',
    "[link=http://evil.example]click[/link]\x07",
    "-2+3 \u202eSSAP\u202c FAIL",  # (a CR would end the CSV line: it is tested in the criteria label)
    '$\\foo{$ </td></tr><script>alert(1)</script><img src=x onerror="alert(2)">',
    "@SUM(A1:A9)",
)
ESC_STRINGS = ("\x1b[2J", "\x1b]8", "\x07", "\r", "\u202e")


def hostile_inputs(tmp: Path):
    """A wide CSV with hostile names and metadata (its own file name hostile too), a criteria
    file and a claims file with hostile ids, labels, notes and identification."""
    folder = tmp / "in"
    folder.mkdir()
    spd = lamp_csv(folder / "=cmd|'calc'!A0 [red]x <b>.csv", names=HOSTILE_NAMES,
                   cct=[2700.0 + 300 * k for k in range(len(HOSTILE_NAMES))])
    text = spd.read_text(encoding="utf-8")
    spd.write_text("# operator: \x1b[31m[blink]root[/blink] </style><script>x()</script>\n" + text, encoding="utf-8")
    crit = tmp / "crit.toml"
    crit.write_text(
        'lumeval_criteria = 1\n[identification]\nproject = "\\u001b[2J[bold]P[/bold] <i>x</i> =1+1"\n'
        '[[clause]]\nid = "=1+1"\nfigure = "Ra"\nmin = 80\n'
        'label = "[green]fine[/green] \\u001b]8;;http://evil.example/\\u001b\\\\ </td><script>y()</script>\\r"\n'
        'note = "@note \\r\\u0007 [link=http://evil.example]n[/link]"\n',
        encoding="utf-8")
    claims = tmp / "claims.toml"
    claims.write_text('lumeval_claims = 1\n[supplier]\nname = "\\u001b[2J[bold]S[/]"\n[claims]\nRa = ">= 80"\n',
                      encoding="utf-8")
    return spd, crit, claims


def _assert_inert(text: str, where):
    for bad in ESC_STRINGS:
        assert bad not in text, (where, bad)


@pytest.mark.parametrize("force_colour", [False, True])
def test_terminal_reports_print_untrusted_text_literally(tmp_path, force_colour):
    spd, crit, claims = hostile_inputs(tmp_path)
    strict = tmp_path / "strict.toml"  # every spectrum fails: the summary of many lists them by name
    strict.write_text(crit.read_text(encoding="utf-8").replace("min = 80", "max = -100"), encoding="utf-8")
    env = {**ENV, "COLUMNS": "250"}
    env.pop("NO_COLOR", None)
    if force_colour:
        env["FORCE_COLOR"] = "1"  # rich writes colour codes: the data's own codes must still be absent
    runs = {
        "inspect": ["inspect", spd],
        "check": ["check", spd, "-c", crit],
        "lot": ["lot", spd, "-q", "-c", crit],
        "claims": ["claims", spd, "--claims", claims],
        "validate": ["inspect", "--validate-only", spd],
        "explain": ["criteria", "explain", crit],
        "check-many": ["check", *[lamp_csv(tmp_path / f"m{k}.csv", names=HOSTILE_NAMES[:3], cct=(3000.0, 4000.0, 5000.0))
                                  for k in range(5)], "-c", strict],
    }
    for key, argv in runs.items():
        r = subprocess.run([sys.executable, "-m", "lumeval", *map(str, argv)], env=env, capture_output=True, timeout=300)
        out, err = r.stdout.decode(), r.stderr.decode()
        assert r.returncode in (0, 1), (key, err)
        assert "Traceback" not in err and "internal error" not in err, (key, err)
        _assert_inert(out, key)
        _assert_inert(err, key)
        if key in ("inspect", "check", "lot", "check-many"):
            # the markup is printed as the text it is, never interpreted
            assert "[bold green]PASS[/]" in out or "PASS[/]" in out, (key, out[:3000])
        if key == "check":
            assert "[green]fine[/green]" in out, (key, out[:3000])  # a criteria label
        if key == "check":
            assert "[bold]P[/bold]" in out, (key, out[:3000])  # the project named in the criteria file
        if key == "explain":  # Markdown: its markup characters escaped, so that it reads as written
            assert r"\[bold\]P\[/bold\]" in out and r"\<i\>x\</i\>" in out, (key, out[:3000])


def test_error_lines_escape_control_characters(tmp_path, capsys):
    bad = tmp_path / "x\x1b[2J\x07.csv"
    bad.write_text("wavelength,value\n380,\x1b]8;;http://evil.example/\x1b\\abc\n", encoding="utf-8")
    code, out, err = run(["inspect", bad], capsys)
    one_error_line(code, err)
    _assert_inert(err, "error line")


def test_csv_outputs_neutralise_formulas_in_text_columns_only(tmp_path, capsys):
    import csv
    import io

    spd, crit, claims = hostile_inputs(tmp_path)
    outputs = {}
    for key, argv in {
        "inspect": ["inspect", spd, "-f", "csv"],
        "check": ["check", spd, "-c", crit, "-f", "csv"],
        "lot": ["lot", spd, "-q", "-c", crit, "-f", "csv"],
        "claims": ["claims", spd, "--claims", claims, "-f", "csv"],
        "validate": ["inspect", "--validate-only", spd, "-f", "csv"],
    }.items():
        code, out, err = run(argv, capsys)
        assert code in (0, 1), (key, err)
        outputs[key] = out
    text_columns = {"name", "source", "warnings", "spectrum", "clause_id", "label", "limit", "reason", "as_stated",
                    "claim", "outlier_reasons", "file", "notes", "error", "group", "kind", "figure", "unit"}
    negative_seen = False
    for key, out in outputs.items():
        _assert_inert(out, key)
        rows = read_csv_report(out) if key != "validate" else list(csv.DictReader(io.StringIO(out)))
        assert rows, key
        for row in rows:
            for col, cell in row.items():
                if col in text_columns:
                    assert not cell.startswith(("=", "+", "-", "@", "\t", "\r")), (key, col, cell)
                elif cell.startswith("-"):
                    float(cell)  # a negative number is left as it is
                    negative_seen = True
    assert negative_seen  # Duv and hue shifts below zero exist in these spectra
    names = [r["name"] for r in csv.DictReader(io.StringIO(outputs["inspect"]))]
    assert "'" + HOSTILE_NAMES[1] in names and "'@SUM(A1:A9)" in names
    # the CSV written by convert (a spectrum file) too
    code, _, err = run(["convert", spd, tmp_path / "out.csv"], capsys)
    assert code == 0, err
    header = next(ln for ln in (tmp_path / "out.csv").read_text(encoding="utf-8").splitlines() if not ln.startswith("#"))
    cells = next(csv.reader([header]))
    assert all(not c.startswith(("=", "+", "-", "@")) for c in cells), cells


def test_html_report_escapes_every_breakout(tmp_path, capsys):
    from html.parser import HTMLParser

    spd, crit, _ = hostile_inputs(tmp_path)
    out = tmp_path / "r.html"
    code, _, err = run(["check", spd, "-c", crit, "--html", out, "-f", "json"], capsys)
    assert code in (0, 1), err
    page = out.read_text(encoding="utf-8")

    class Tags(HTMLParser):
        def __init__(self):
            super().__init__()
            self.tags, self.handlers = set(), []

        def handle_starttag(self, tag, attrs):
            self.tags.add(tag)
            self.handlers += [k for k, _ in attrs if k.startswith("on")]

    p = Tags()
    p.feed(page)
    assert not {"script", "img", "iframe", "i"} & p.tags, p.tags
    assert p.handlers == []
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page  # the name, shown as text
    assert "&lt;/td&gt;&lt;script&gt;y()&lt;/script&gt;" in page  # the criteria label
    assert page.count("</style>") == page.count("<style")  # no style sheet closed by data


def test_plots_draw_names_with_dollar_signs_and_markup_literally(tmp_path, capsys):
    """`$\\foo{$` in a name used to make matplotlib's mathtext parser abort the report (exit 3)."""
    spd, crit, _ = hostile_inputs(tmp_path)
    code, _, err = run(["inspect", spd, "--plots", tmp_path / "P", "--html", tmp_path / "r.html", "-f", "json"], capsys)
    assert code == 0, err
    assert (tmp_path / "P" / "chromaticity.svg").exists()


# --------------------------------------------------------------------------- messages


@pytest.mark.parametrize("argv, needles", [
    (["inspect"], ("inspect", "Missing argument", "lumeval inspect --help")),
    (["inspect", "--format", "xml", "a.csv"], ("--format", "'xml'", "lumeval inspect --help")),
    (["inspect", "--formt", "json", "a.csv"], ("--formt", "--format")),
    (["check", "a.csv"], ("--criteria", "lumeval check --help")),
    (["lot", "x", "--draws", "many"], ("--draws",)),
    (["frobnicate"], ("frobnicate", "lumeval --help")),
    (["criteria", "new", "--level", "x" * 5000], ("--level",)),
    (["lot", "x", "--draws", "1" * 5000], ("--draws",)),
])
def test_usage_errors_are_one_short_line_with_the_fix(argv, needles, capsys):
    code, out, err = run(argv, capsys)
    one_error_line(code, err, *needles, "— see '")
    assert "╭" not in err and "Usage:" not in err and "set_int_max_str_digits" not in err
    assert len(err) < 400, err


def test_huge_values_are_quoted_briefly_without_interpreter_advice(tmp_path, capsys):
    spd = lamp_csv(tmp_path / "lamp.csv")
    crit = tmp_path / "big.toml"
    crit.write_text('lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = ' + "9" * 5000 + "\n",
                    encoding="utf-8")
    inst = tmp_path / "inst.toml"
    inst.write_text("lumeval_instrument = 1\nwavelength_offset_nm = " + "1" * 5000 + "\n", encoding="utf-8")
    cell = tmp_path / "cell.csv"
    cell.write_text("wavelength,v\n" + "\n".join(f"{w},{'abc' * 5000 if w == 400 else 1}" for w in range(380, 781, 5)) + "\n",
                    encoding="utf-8")
    figure = tmp_path / "figure.toml"
    figure.write_text('lumeval_criteria = 1\n[[clause]]\nid = "x"\nfigure = "' + "R" * 10000 + '"\nmin = 1\n', encoding="utf-8")
    ok = tmp_path / "ok.toml"
    ok.write_text(CRITERIA, encoding="utf-8")
    for argv, needles in (
        (["check", spd, "-c", crit], ("big.toml:5",)),
        (["check", spd, "-c", ok, "--instrument", inst], ("inst.toml:2",)),
        (["check", spd, "-c", figure], ("figure.toml",)),
        (["inspect", cell], ("cell.csv:6",)),
    ):
        code, _, err = run(argv, capsys)
        one_error_line(code, err, *needles)
        # brief: the 10,000-character value is cut to 80; the rest is the list of figure names
        assert "set_int_max_str_digits" not in err and len(err) < 650, err


def _wait_until_catching(p, signum, timeout=120.0):
    """Wait until process ``p`` has installed a handler for ``signum`` (Linux: the SigCgt mask
    in /proc/PID/status), so that the signal reaches lumeval's handler, not the default action."""
    deadline = time.monotonic() + timeout
    bit = 1 << (signum - 1)
    while time.monotonic() < deadline and p.poll() is None:
        try:
            status = Path(f"/proc/{p.pid}/status").read_text()
        except OSError:
            return
        caught = next((ln.split()[1] for ln in status.splitlines() if ln.startswith("SigCgt:")), "0")
        if int(caught, 16) & bit:
            return
        time.sleep(0.05)


def test_sigterm_during_a_real_lot_run_leaves_complete_outputs_or_none(tmp_path):
    """The unpatched CLI on the 200-module demo lot, stopped by SIGTERM part-way: exit 143 (or
    the run had already ended), no temporary file, and every output present is complete."""
    import json

    out = tmp_path / "out"
    out.mkdir()
    p = subprocess.Popen([sys.executable, "-m", "lumeval", "lot", str(ROOT / "spectra_demo" / "lot_2026w48"), "-q",
                          "--json", str(out / "lot.json"), "--samples-csv", str(out / "s.csv"), "--html", str(out / "r.html"),
                          "--plots", str(out / "P")], env=ENV, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    _wait_until_catching(p, signal.SIGTERM)  # a loaded machine may still be importing after 2.5 s
    time.sleep(1.0)
    p.send_signal(signal.SIGTERM)
    code = p.wait(timeout=300)
    err = p.stderr.read().decode()
    assert code in (128 + signal.SIGTERM, 0, 1), err
    assert "Traceback" not in err and "Exception ignored" not in err, err
    if code == 128 + signal.SIGTERM:
        assert "SIGTERM" in err
    assert temporaries(out) == [] and (not (out / "P").exists() or temporaries(out / "P") == [])
    if (out / "lot.json").exists():
        json.loads((out / "lot.json").read_text(encoding="utf-8"))
    if (out / "r.html").exists():
        assert (out / "r.html").read_text(encoding="utf-8").rstrip().endswith("</html>")


#: A run of the real CLI in which the garbage collector meets, early in the run, an object whose
#: weak-reference callback receives the signal: its handler then runs inside the callback, where
#: Python drops exceptions ("Exception ignored in ..."). The stop must still end the run.
_STOP_IN_A_FINALISER = """
import gc, signal, sys, weakref
from lumeval import cli

SIGNAL = getattr(signal, sys.argv[1])
# Ctrl-C as in a terminal: a process started in the background by a shell without job control
# (as `make test &` is) inherits SIGINT ignored, and Python then keeps it ignored
signal.signal(signal.SIGINT, signal.default_int_handler)
refs = []

class Node:
    pass

def arm():
    node = Node()
    node.cycle = node  # freed only by the collector, at a point of the run nobody chooses
    refs.append(weakref.ref(node, receive))

def receive(_ref):
    if signal.getsignal(signal.SIGTERM) is signal.SIG_DFL:  # lumeval's handlers not yet set
        arm()
        return
    signal.raise_signal(SIGNAL)
    sum(range(100))  # the handler runs at a bytecode boundary of this callback

arm()
gc.set_threshold(10)
sys.argv = ["lumeval", *sys.argv[2:]]
cli.main()
"""


@pytest.mark.parametrize("signame,code", [("SIGTERM", 128 + signal.SIGTERM), ("SIGINT", 130)])
def test_a_stop_received_inside_a_finaliser_still_stops_the_run(tmp_path, signame, code):
    """CI once lost a SIGTERM that arrived while matplotlib's weak-reference callback ran: Python
    printed the dropped exception with a traceback and the run went on to exit 0. The stop (and a
    Ctrl-C alike) is now delivered again once the callback has returned: the documented exit code,
    the one stop line, no traceback, no temporary file, no report."""
    _assert_stopped_lot(tmp_path, _STOP_IN_A_FINALISER, signame, code)


def _assert_stopped_lot(tmp_path, script: str, signame: str, code: int) -> None:
    """Run ``script`` (the CLI with a stop arranged) on the demo lot with JSON and HTML reports:
    the documented exit code, the one stop line, no traceback, no report, no temporary file."""
    out = tmp_path / "out"
    out.mkdir()
    p = subprocess.run([sys.executable, "-c", script, signame, "lot",
                        str(ROOT / "spectra_demo" / "lot_2026w48"), "-q", "--json", str(out / "lot.json"),
                        "--html", str(out / "r.html")], env=ENV, capture_output=True, timeout=300)
    err = p.stderr.decode()
    assert p.returncode == code, err
    assert "Traceback" not in err and "Exception ignored" not in err, err
    assert err.strip().splitlines()[-1].startswith(("lumeval: stopped by SIGTERM", "lumeval: interrupted")), err
    assert sorted(x.name for x in out.iterdir()) == []


#: A run of the real CLI in which the stop signal arrives inside code that catches every
#: exception (a bare ``except:``, as some libraries have): the KeyboardInterrupt or the stop is
#: swallowed there and the run goes on.
_STOP_SWALLOWED = """
import signal, sys
from lumeval import cli
from lumeval.lots import streaming

SIGNAL = getattr(signal, sys.argv[1])
if len(sys.argv) > 2 and sys.argv[2] == "--ignored":  # started with Ctrl-C ignored
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    del sys.argv[2]
else:  # Ctrl-C as in a terminal (see _STOP_IN_A_FINALISER)
    signal.signal(signal.SIGINT, signal.default_int_handler)
real_add = streaming.LotAccumulator.add
calls = []

def add(self, result):
    if not calls:
        calls.append(1)
        try:
            signal.raise_signal(SIGNAL)
            sum(range(100))  # the handler runs at a bytecode boundary inside the try
        except BaseException:
            pass
    return real_add(self, result)

streaming.LotAccumulator.add = add
sys.argv = ["lumeval", *sys.argv[2:]]
cli.main()
"""


@pytest.mark.parametrize("signame,code", [("SIGTERM", 128 + signal.SIGTERM), ("SIGINT", 130)])
def test_a_stop_swallowed_on_its_way_still_stops_the_run(tmp_path, signame, code):
    """A stop caught and dropped by code the run passes through used to let the run finish and
    write every report with exit 0: it is recorded when received, no output is committed after
    it, and the run ends as stopped (the documented code, one stop line, no report)."""
    _assert_stopped_lot(tmp_path, _STOP_SWALLOWED, signame, code)


def test_ctrl_c_ignored_at_start_stays_ignored(tmp_path):
    """A run started with SIGINT ignored (a background job of a shell without job control, as
    nohup leaves it) keeps ignoring it, as Python does: lumeval's Ctrl-C handler is not set
    over that, and the run ends normally with its reports written."""
    out = tmp_path / "out"
    out.mkdir()
    p = subprocess.run([sys.executable, "-c", _STOP_SWALLOWED, "SIGINT", "--ignored", "lot",
                        str(ROOT / "spectra_demo" / "lot_2026w48"), "-q", "--json", str(out / "lot.json")],
                       env=ENV, capture_output=True, timeout=300)
    assert p.returncode == 0, p.stderr.decode()
    assert sorted(x.name for x in out.iterdir()) == ["lot.json"]


def test_an_output_path_ending_in_a_separator_is_refused(tmp_path):
    """Through the Python API a path given as text keeps its trailing separator: "out.txt/"
    names a folder, and pathlib would drop the separator and write a file "out.txt" (found by
    exploratory testing; the CLI's own path options drop it before lumeval sees it)."""
    import os

    from lumeval._io import check_output_file
    from lumeval.errors import UsageError

    with pytest.raises(UsageError, match="names a folder"):
        check_output_file(f"{tmp_path}{os.sep}out.txt{os.sep}", "--html")
    check_output_file(f"{tmp_path}{os.sep}out.txt", "--html")  # the same without the separator is fine
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("argv", [["inspect", "{spd}", "-o", "{tmp}/out.txt/"], ["inspect", "{spd}", "--html={tmp}/r.html/"],
                                  ["lot", "{spd}", "-q", "--json", "{tmp}/lot.json/"],
                                  ["lot", "{spd}", "-q", "--samples-csv", "{tmp}/s.csv/"],
                                  ["convert", "{spd}", "{tmp}/out.csv/"], ["criteria", "new", "{tmp}/c.toml/"],
                                  ["criteria", "new", "{tmp}/c.toml/", "--force"],
                                  ["convert", "{spd}", "{tmp}/out.csv/.", "--force"], ["inspect", "{spd}", "-o", "{tmp}/n.json/."],
                                  ["inspect", "{spd}", "--html={tmp}/r.html/.."]])
def test_a_file_output_ending_in_a_separator_is_refused_by_the_cli(work, capsys, argv):
    """The argument parser drops a trailing separator (pathlib), so `-o out.txt/` wrote a file
    out.txt (found by exploratory testing); the raw arguments are checked before parsing, and
    the positional outputs (convert's OUT, criteria new's FILE) are taken as typed (they wrote
    out.csv and c.toml; found by a review)."""
    tmp, spd, _ = work
    before = sorted(p.name for p in tmp.iterdir())
    code, out, err = run([a.format(spd=spd, tmp=tmp) for a in argv], capsys)
    one_error_line(code, err, "names a folder")
    assert sorted(p.name for p in tmp.iterdir()) == before


def test_criteria_explain_escapes_markdown_in_text_from_the_file(tmp_path, capsys):
    """`criteria explain` writes Markdown: a project name, an identification field, a clause id,
    label or note holding raw HTML, a link or emphasis passed through and a Markdown viewer
    rendered them (found by a review). They are backslash-escaped (CommonMark shows an escaped
    punctuation character literally); lumeval's own markup (bold requirement names, the
    [SPECIFY: ...] placeholders) is kept."""
    crit = tmp_path / "c.toml"
    crit.write_text(
        'lumeval_criteria = 1\n[identification]\nproject = "<script>alert(1)</script>"\n'
        'reference = "[spec](http://evil.example/)"\n[[clause]]\nid = "Ra_*main*"\nfigure = "Ra"\nmin = 80\n'
        'note = "see ![img](http://evil.example/x.png) | a&b"\n', encoding="utf-8")
    code, out, err = run(["criteria", "explain", crit], capsys)
    assert code == 0, err
    assert r"\<script\>alert(1)\</script\>" in out and "<script>" not in out
    assert r"\[spec\](http://evil.example/)" in out and "[spec](" not in out
    assert r"**Ra\_\*main\*** —" in out
    assert r"\!\[img\](http://evil.example/x.png) \| a\&b" in out
    assert "**[SPECIFY:" in out  # lumeval's own placeholders stay markup
