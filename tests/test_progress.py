"""Progress on stderr for the long stages (reading, evaluating, Monte Carlo, writing the report).

Through the real CLI in a subprocess whose stderr is a pseudo-terminal (``pty``): every stage
shows its count ("5/5"); nothing is drawn when stderr is not a terminal, with ``--quiet``
(the command's or ``lumeval --quiet``) or with ``LUMEVAL_PROGRESS=never``. The API reports
through a plain listener (lumeval.progress) and imports no rich. Behaviour only: no numbers of
the colour science are checked here.
"""

from __future__ import annotations

import os
import re
import select
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "spectra_demo" / "downlights"
FILES = sorted(str(p) for p in DEMO.glob("*.csv"))
CRIT = 'lumeval_criteria = 1\n[[clause]]\nid = "Ra"\nfigure = "Ra"\nmin = 80\n'
INSTRUMENT = "[instrument]\nnoise_relative = 0.01\nwavelength_offset_nm = 0.2\n"
ANSI = re.compile(r"\x1b\[[0-9;?]*[A-Za-z]|\x1b\][^\x07]*\x07")

pytestmark = pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs a pseudo-terminal")


@pytest.fixture
def inputs(tmp_path):
    crit = tmp_path / "c.toml"
    crit.write_text(CRIT, encoding="utf-8")
    inst = tmp_path / "i.toml"
    inst.write_text(INSTRUMENT, encoding="utf-8")
    return crit, inst


def run_on_pty(argv, env_extra=None, timeout=600):
    """Run ``lumeval argv`` with stderr on a pseudo-terminal (stdout piped); (code, stdout,
    what the terminal received with the escape sequences removed)."""
    master, slave = os.openpty()
    env = {k: v for k, v in os.environ.items() if k != "LUMEVAL_PROGRESS"}
    env.update(COLUMNS="120", LINES="40", **(env_extra or {}))
    import tempfile

    with tempfile.TemporaryFile() as sink:  # a file, not a pipe: a long report cannot block the child
        proc = subprocess.Popen([sys.executable, "-m", "lumeval", *map(str, argv)], stdout=sink,
                                stderr=slave, stdin=subprocess.DEVNULL, env=env, cwd=REPO)
        os.close(slave)
        chunks = []
        while True:
            ready, _, _ = select.select([master], [], [], timeout)
            if not ready:
                proc.kill()
                raise AssertionError("no output from the pseudo-terminal")
            try:
                data = os.read(master, 65536)
            except OSError:  # the child closed its end
                break
            if not data:
                break
            chunks.append(data)
        code = proc.wait(timeout=timeout)
        os.close(master)
        sink.seek(0)
        out = sink.read().decode("utf-8", "replace")
    return code, out, ANSI.sub("", b"".join(chunks).decode("utf-8", "replace")).replace("\r", "\n")


def stage_counts(screen: str, stage: str) -> set[str]:
    """The "k/n" counts drawn on the rows of ``stage``."""
    return {m.group(1) for line in screen.splitlines() if line.strip().startswith(stage)
            for m in [re.search(r"\b(\d+/\d+)\b", line)] if m}


def test_lot_with_instrument_shows_every_stage_with_counts(inputs):
    crit, inst = inputs
    # forced: on an idle machine this small run ends before the 0.4 s after which rows open
    code, _, screen = run_on_pty(["lot", *FILES, "-c", crit, "--instrument", inst, "--draws", "200"],
                                 {"LUMEVAL_PROGRESS": "always"})
    assert code in (0, 1), screen
    n = len(FILES)
    assert f"{n}/{n}" in stage_counts(screen, "reading")
    assert f"{n}/{n}" in stage_counts(screen, "evaluating")
    mc = stage_counts(screen, "Monte Carlo")
    assert f"{n}/{n}" in mc  # the stage that showed nothing for minutes before
    assert "files" in screen and "spectra" in screen and "left" in screen


def test_check_many_files_with_report_shows_reading_evaluating_monte_carlo_and_writing(inputs, tmp_path):
    crit, inst = inputs
    html = tmp_path / "r.html"
    code, out, screen = run_on_pty(["check", *FILES, "-c", crit, "--instrument", inst, "--draws", "200",
                                    "--html", html, "-f", "json"], {"LUMEVAL_PROGRESS": "always"})
    assert code in (0, 1), screen
    n = len(FILES)
    for stage in ("reading", "evaluating", "Monte Carlo"):
        assert f"{n}/{n}" in stage_counts(screen, stage), (stage, screen)
    written = [c.split("/") for c in stage_counts(screen, "writing report")]
    assert any(a == b and int(b) > 0 for a, b in written), screen  # every figure of the report counted
    assert '"format": "lumeval.check"' in out  # the report itself still goes to stdout, untouched


def test_a_long_lot_draws_its_rows_without_being_forced(inputs):
    """The default (auto) mode on a terminal: a run still busy after 0.4 s opens its rows, and
    the stages already done by then are shown with their final counts."""
    crit, inst = inputs
    files = sorted(str(p) for p in (REPO / "spectra_demo" / "lot_2026w48").glob("*.csv"))
    n = len(files)
    assert n >= 100
    code, _, screen = run_on_pty(["lot", *files, "-c", crit, "--instrument", inst, "--draws", "400", "-f", "json"])
    assert code in (0, 1), screen
    assert f"{n}/{n}" in stage_counts(screen, "reading")
    done = [c.split("/") for c in stage_counts(screen, "Monte Carlo")]
    assert any(a == b and int(b) >= n for a, b in done), screen  # every spectrum's draws (files may hold several)


def test_inspect_many_files_forced_progress(tmp_path):
    code, _, screen = run_on_pty(["inspect", *FILES, "-f", "json"], {"LUMEVAL_PROGRESS": "always"})
    assert code == 0, screen
    n = len(FILES)
    assert f"{n}/{n}" in stage_counts(screen, "reading")
    assert f"{n}/{n}" in stage_counts(screen, "evaluating")


@pytest.mark.parametrize("how", [["--quiet"], ["root-quiet"], ["env-never"]])
def test_nothing_drawn_when_quiet(inputs, how):
    crit, inst = inputs
    argv = ["lot", *FILES, "-c", crit, "--instrument", inst, "--draws", "100", "-f", "json"]
    env = {"LUMEVAL_PROGRESS": "always"}  # quiet wins even over the forced display
    if how == ["--quiet"]:
        argv.append("--quiet")
    elif how == ["root-quiet"]:
        argv = ["--quiet", *argv]
    else:
        env = {"LUMEVAL_PROGRESS": "never"}
    code, out, screen = run_on_pty(argv, env)
    assert code in (0, 1), screen
    assert "Monte Carlo" not in screen and "reading" not in screen and "evaluating" not in screen
    assert '"format": "lumeval.lot"' in out


def test_nothing_drawn_when_stderr_is_not_a_terminal(inputs):
    crit, inst = inputs
    env = {k: v for k, v in os.environ.items() if k != "LUMEVAL_PROGRESS"}
    r = subprocess.run([sys.executable, "-m", "lumeval", "lot", *FILES, "-c", str(crit), "--instrument", str(inst),
                        "--draws", "100", "-f", "json"], capture_output=True, text=True, env=env, cwd=REPO,
                       timeout=600)
    assert r.returncode in (0, 1), r.stderr
    assert r.stderr == ""


def test_api_reports_through_a_plain_listener(inputs):
    """The Python API takes any callable; counts grow to the totals, stage by stage."""
    import lumeval
    from lumeval.progress import EVALUATING, MONTE_CARLO, READING

    crit, inst = inputs
    seen: list[tuple[str, int, int | None]] = []
    lumeval.check(FILES[:2], crit, inst, draws=100, progress=lambda s, k, n: seen.append((s, k, n)))
    assert [x for x in seen if x[0] == READING][-1] == (READING, 2, 2)
    assert [x for x in seen if x[0] == EVALUATING][-1] == (EVALUATING, 2, 2)
    assert [x for x in seen if x[0] == MONTE_CARLO] == [(MONTE_CARLO, 1, 2), (MONTE_CARLO, 2, 2)]
    seen.clear()
    lumeval.lot(FILES[:3], crit, instrument=inst, draws=100, progress=lambda s, k, n: seen.append((s, k, n)))
    assert [x for x in seen if x[0] == READING][-1] == (READING, 3, 3)
    assert [x for x in seen if x[0] == MONTE_CARLO][-1] == (MONTE_CARLO, 3, 3)


def test_api_and_progress_module_import_no_terminal_library():
    code = ("import sys, lumeval.api, lumeval.progress, lumeval.uncertainty.montecarlo; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('rich', 'typer', 'click')))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO, timeout=120)
    assert r.returncode == 0, r.stderr
    assert r.stdout.strip() == "[]"


def test_series_shows_reading_and_evaluating():
    files = sorted(str(p) for p in (REPO / "spectra_demo" / "tunable").glob("tw2_dim2warm_*.csv"))
    code, out, screen = run_on_pty(["series", *files, "-f", "json"], {"LUMEVAL_PROGRESS": "always"})
    assert code in (0, 1), screen
    n = len(files)
    assert n >= 5
    assert f"{n}/{n}" in stage_counts(screen, "reading")
    assert f"{n}/{n}" in stage_counts(screen, "evaluating")
    assert '"format": "lumeval.series"' in out


def test_a_quick_single_file_inspect_draws_nothing():
    code, out, screen = run_on_pty(["inspect", FILES[0], "-f", "json"])
    assert code == 0, screen
    assert "reading" not in screen and "evaluating" not in screen
    assert '"format": "lumeval.inspect"' in out
