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

from lumeval.cli import main

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


def run(argv, capsys):
    """(exit code, stdout, stderr) of ``lumeval argv`` run in-process."""
    with pytest.raises(SystemExit) as exc:
        main([str(a) for a in argv])
    out, err = capsys.readouterr()
    code = exc.value.code if isinstance(exc.value.code, int) else (0 if exc.value.code is None else 1)
    return code, out, err


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
    ):
        code, _, err = run(argv, capsys)
        one_error_line(code, err, opt, "--plots")
    assert list(r.iterdir()) == []
    # a file in the folder that --plots does not write is fine
    code, _, err = run(["lot", spd, "-q", "--json", r / "lot.json", "--plots", r], capsys)
    assert code == 0, err
    assert (r / "lot.json").read_text().startswith("{") and (r / "chromaticity.svg").exists()


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
