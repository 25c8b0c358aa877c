"""Ctrl-C while a worker process is part-way through sending its result.

A reviewer saw ``lumeval lot`` print "interrupted" and then stay alive for good, deaf to
SIGINT and SIGTERM: the executor's thread was reading the rest of a result from a worker that
had been stopped part-way through sending it, on a pipe whose write end this process holds too
(so no end of file ever came), and the interpreter waited for that thread at exit. Reproduced
here as the reviewer did: the worker is held (SIGSTOP) while it writes a result of several MB
to the pipe, the process group gets SIGINT, the worker is released (SIGCONT).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"), reason="forked workers and /proc: Linux")

# The command's own shape (lumeval.cli.main): stops installed, the pool stopped in a finally
# block, "interrupted" and 130 on Ctrl-C, the stops settled, then the interpreter's exit.
SCRIPT = textwrap.dedent(
    """
    import os, signal, sys, threading, time
    from lumeval import _stop, _workers

    FLAG = sys.argv[1]
    SIZE = 24 << 20  # several MB: the pipe holds 64 KiB, the worker blocks while it writes


    def _hold_mid_send(tid):
        # once this worker's main thread is blocked writing its result to the pipe, hold it
        wchan = f"/proc/self/task/{tid}/wchan"
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline:
            with open(wchan) as f:
                if f.read().strip() == "anon_pipe_write":
                    break
        else:
            return
        with open(FLAG + ".tmp", "w") as f:
            f.write(str(os.getpid()))
        os.replace(FLAG + ".tmp", FLAG)
        os.kill(os.getpid(), signal.SIGSTOP)


    def big():
        threading.Thread(target=_hold_mid_send, args=(threading.get_native_id(),), daemon=True).start()
        return b"x" * SIZE


    def main():
        _stop.install()
        pool = _workers.worker_pool(1)
        code = 0
        try:
            try:
                pool.result(pool.submit(big))
                print("result taken: the worker was not held", file=sys.stderr)
                code = 3
            finally:
                pool.terminate()
        except KeyboardInterrupt:
            print("interrupted", file=sys.stderr)
            code = 130
        _stop.settle()
        sys.exit(code)


    main()
    """
)


def _state(pid: int) -> str | None:
    try:
        return Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (OSError, IndexError):
        return None


def _session(sid: int) -> list[int]:
    """Live (not zombie) processes of session ``sid``."""
    pids = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                fields = (d / "stat").read_text().rsplit(")", 1)[1].split()
            except (OSError, IndexError):
                continue
            if int(fields[3]) == sid and fields[0] != "Z":
                pids.append(int(d.name))
    return pids


def test_ctrl_c_while_a_worker_sends_its_result_exits_130_promptly(tmp_path):
    script = tmp_path / "run.py"
    script.write_text(SCRIPT, encoding="utf-8")
    flag = tmp_path / "held"
    proc = subprocess.Popen([sys.executable, str(script), str(flag)], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, start_new_session=True)
    worker = None
    try:
        deadline = time.monotonic() + 30
        while not flag.exists() and proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.01)
        assert flag.exists(), f"the worker was never caught mid-send: {proc.poll()}"
        worker = int(flag.read_text())
        while _state(worker) not in ("T", "t", None) and time.monotonic() < deadline:
            time.sleep(0.01)
        assert _state(worker) in ("T", "t")
        os.killpg(proc.pid, signal.SIGINT)  # Ctrl-C, as a terminal sends it
        time.sleep(1)
        try:
            os.kill(worker, signal.SIGCONT)
        except ProcessLookupError:
            pass
        try:
            _, err = proc.communicate(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
            _, err = proc.communicate()
            pytest.fail(f"still running 30 s after Ctrl-C (hung at exit); stderr: {err!r}")
        assert proc.returncode == 130, err
        assert "Traceback" not in err, err
        assert _session(proc.pid) == [], "a worker process outlived the command"
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait()
        elif worker is not None and _state(worker) not in (None, "Z"):
            os.kill(worker, signal.SIGKILL)
