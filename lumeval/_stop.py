"""Stop signals (SIGTERM, SIGHUP, SIGINT) that always stop the run.

A stop signal raises an exception where the program is, so that every ``finally`` runs (the
atomic writer removes its temporary file). Python runs a signal's handler at the next bytecode
boundary of the main thread, which may be inside a finaliser or a weak-reference callback run by
the garbage collector (matplotlib registers many). An exception raised there is not propagated:
Python reports it through :data:`sys.unraisablehook` ("Exception ignored in ...", with a
traceback) and carries on, so the stop would be lost and the run would go on to the end (Python
docs, ``sys.unraisablehook`` and "Execution of Python signal handlers").

:func:`install` sets a hook that recognises such a dropped stop, keeps it quiet and delivers the
same signal again to the main thread a moment later (from a timer thread: a real signal, which
also interrupts a blocking wait), when the main thread is back in ordinary code; a stop dropped
again is delivered again.

A stop can also be lost to code that catches every exception (a bare ``except:`` in a library
the run passes through). So each stop received is also recorded (:func:`received`): no output
is committed once one was (:func:`check`, called by the atomic writer and the history store
before they commit), and a run that went on to the end after a stop still ends as stopped
(``lumeval.cli.main``).
"""

from __future__ import annotations

import _thread
import os
import signal
import sys
import threading

#: Delay before a dropped stop is delivered again: long enough for the finaliser to return.
REDELIVERY_DELAY = 0.01

_in_hook = False
_default_hook = sys.unraisablehook
#: The stop signal received in this run, if any (set by the handlers that :func:`install` sets).
_received: int | None = None


class Stopped(BaseException):
    """SIGTERM or SIGHUP, raised where the program is, exactly as Ctrl-C raises
    KeyboardInterrupt. Not a KeyboardInterrupt, which the argument parser would turn into a
    silent exit 130."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


def on_stop_signal(signum, _frame) -> None:
    global _received
    if _in_hook:  # the hook is handling a dropped stop: deliver this one after it too
        _redeliver(signum)
        return
    _received = signum
    signal.signal(signum, signal.SIG_IGN)  # a second signal must not interrupt the clean-up
    raise Stopped(signum)


def on_interrupt(signum, frame) -> None:
    """Ctrl-C: Python's own KeyboardInterrupt, the stop recorded first."""
    global _received
    _received = signal.SIGINT
    signal.default_int_handler(signum, frame)


def received() -> int | None:
    """The stop signal received in this run (SIGINT, SIGTERM or SIGHUP), or None."""
    return _received


def check() -> None:
    """Raise the stop received in this run, if any: called before an output is committed, so
    that a stop swallowed on its way (see the module docstring) still leaves every output
    unchanged. Further signals of the same kind are ignored from here (the clean-up runs)."""
    signum = _received
    if signum is None:
        return
    signal.signal(signum, signal.SIG_IGN)
    if signum == signal.SIGINT:
        raise KeyboardInterrupt
    raise Stopped(signum)


def _redeliver(signum: int) -> None:
    def send() -> None:
        main = threading.main_thread().ident
        if hasattr(signal, "pthread_kill") and main is not None:
            signal.pthread_kill(main, signum)
        else:
            _thread.interrupt_main(signal.Signals(signum))

    timer = threading.Timer(REDELIVERY_DELAY, send)
    timer.daemon = True
    timer.start()


def _unraisable(unraisable) -> None:
    global _in_hook
    exc = unraisable.exc_value
    if isinstance(exc, Stopped):
        signum = exc.signum
    elif isinstance(exc, KeyboardInterrupt):
        signum = signal.SIGINT
    else:
        _default_hook(unraisable)
        return
    _in_hook = True
    try:
        if isinstance(exc, Stopped):  # its handler ignored further signals: take them again
            signal.signal(signum, on_stop_signal)
        _redeliver(signum)
    finally:
        _in_hook = False


def install() -> None:
    """Raise :class:`Stopped` on SIGTERM and SIGHUP, and never lose a stop (or a Ctrl-C) to a
    finaliser."""
    for name in ("SIGTERM", "SIGHUP"):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), on_stop_signal)
    if signal.getsignal(signal.SIGINT) is signal.default_int_handler:  # not when started with Ctrl-C ignored
        signal.signal(signal.SIGINT, on_interrupt)
    sys.unraisablehook = _unraisable


def settle() -> None:
    """The run is over (its outputs written or not): a stop arriving now, or one being delivered
    again, changes nothing and must not end in a traceback.

    After a stop, the command's exit must not wait for work left behind: the interpreter waits
    at exit for every thread still running (an executor's thread reading from a worker process
    that was stopped part-way through sending its result never ended: the command stayed alive,
    deaf to further signals). So a watchdog ends the process with the stop's exit code
    (128 + N, as the command returns) if it is still alive :data:`EXIT_GRACE` seconds from now;
    the outputs are settled by then and every message is on stderr."""
    for name in ("SIGTERM", "SIGHUP", "SIGINT"):
        if hasattr(signal, name):
            signal.signal(getattr(signal, name), signal.SIG_IGN)
    signum = _received
    if signum is not None:
        watchdog = threading.Timer(EXIT_GRACE, _exit_now, args=(128 + signum,))
        watchdog.daemon = True
        watchdog.start()


#: Seconds a stopped command may take to exit after :func:`settle` before it is ended at once.
EXIT_GRACE = 5.0


def _exit_now(code: int) -> None:
    for stream in (sys.stderr, sys.stdout):
        try:
            stream.flush()
        except Exception:  # a closed or broken stream: nothing more can be said on it
            pass
    os._exit(code)
