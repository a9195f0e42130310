"""Interrupts: Ctrl-C (SIGINT) and SIGTERM end a command promptly and cleanly.

While :func:`handled` is active (the command line wraps every command in it),

- SIGINT raises :class:`KeyboardInterrupt` and SIGTERM raises
  :class:`Terminated` in the main thread, so ``finally`` blocks and context
  managers run: temporary files and staging folders are removed, worker
  processes are stopped (:func:`stop_processes`), a CSV being written keeps
  only whole rows;
- a second signal while that clean-up runs ends the process at once
  (``os._exit``) with the same status, so nothing can hang an interrupted run.

The command line turns them into exit status 130 (SIGINT) or 143 (SIGTERM),
128 plus the signal number as shells report it, with one line on stderr.
Worker processes call :func:`ignore_in_worker`: a Ctrl-C on the terminal
reaches every process of the group, and only the parent decides.
"""

from __future__ import annotations

import contextlib
import os
import signal
import sys
import threading
from collections.abc import Iterable, Iterator
from typing import Any

__all__ = ["Terminated", "handled", "exit_status", "ignore_in_worker", "stop_processes",
           "signals_held", "stderr_line", "exit_now", "pending", "raise_pending", "deferred"]


class Terminated(BaseException):
    """SIGTERM received (a BaseException, like KeyboardInterrupt: not an error to catch)."""

    def __init__(self, signum: int = signal.SIGTERM):
        self.signum = signum
        super().__init__(f"terminated by signal {signum}")


def exit_status(exc: BaseException) -> int:
    """128 + the signal number of an interrupt (130 for Ctrl-C, 143 for SIGTERM)."""
    if isinstance(exc, Terminated):
        return 128 + int(exc.signum)
    return 128 + int(signal.SIGINT)


_state = {"pending": 0, "deferred": 0}


def pending() -> int:
    """The signal number received while :func:`handled` is active (0 if none). An
    exception met after it is the interrupt in disguise: a C extension interrupted in
    its import (numpy's) turns the KeyboardInterrupt into an ImportError."""
    return int(_state["pending"])


def raise_pending() -> None:
    """Raise the interrupt received, if any: for loops around library calls that catch
    the exception the signal raised inside them (VTK's Python callbacks do)."""
    signum = pending()
    if signum:
        raise KeyboardInterrupt() if signum == signal.SIGINT else Terminated(signum)


def _handler(signum: int, frame: Any) -> None:
    if _state["pending"]:
        # second signal: the clean-up of the first is taking too long
        with contextlib.suppress(OSError):
            os.write(2, b"lumpgraph: interrupted again; stopped at once\n")
        os._exit(128 + signum)
    _state["pending"] = signum
    if _state["deferred"]:
        return                      # raised at the next raise_pending() (see deferred)
    if signum == signal.SIGINT:
        raise KeyboardInterrupt
    raise Terminated(signum)


@contextlib.contextmanager
def deferred() -> Iterator[None]:
    """Within the block a first signal is only recorded, and raised by the next
    :func:`raise_pending` (and on leaving the block): for loops around library code
    that would catch the exception inside its own callbacks and print it (VTK's
    pipeline does). A second signal still ends the process at once."""
    _state["deferred"] += 1
    try:
        yield
    finally:
        _state["deferred"] -= 1
    raise_pending()


@contextlib.contextmanager
def handled() -> Iterator[None]:
    """SIGINT and SIGTERM handled as the module says while the block runs (main
    thread only; elsewhere a no-op). The previous handlers come back afterwards."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {s: signal.getsignal(s) for s in (signal.SIGINT, signal.SIGTERM)}
    _state["pending"] = 0
    for s in previous:
        signal.signal(s, _handler)
    try:
        yield
    finally:
        for s, h in previous.items():
            signal.signal(s, h if h is not None else signal.SIG_DFL)
        _state["pending"] = 0


def exit_now(status: int) -> None:
    """End an interrupted program with ``status``: further signals ignored, stdout and
    stderr flushed, the exit functions run, then ``os._exit`` (the interpreter's own
    exit could still report the interrupt as death by SIGINT)."""
    import atexit

    for s in (signal.SIGINT, signal.SIGTERM):
        signal.signal(s, signal.SIG_IGN)
    with contextlib.suppress(BaseException):
        atexit._run_exitfuncs()   # multiprocessing's finalizers: semaphores, its tracker
    for stream in (sys.stdout, sys.stderr):
        with contextlib.suppress(Exception):
            stream.flush()
    os._exit(status)


def ignore_in_worker() -> None:
    """In a worker process: ignore Ctrl-C (the parent stops the worker), and die
    quietly on SIGTERM (the default action)."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    if hasattr(signal, "pthread_sigmask"):      # started under signals_held()
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGINT})


def stop_processes(processes: Iterable[Any], grace_s: float = 2.0) -> None:
    """Terminate ``multiprocessing`` processes, wait up to ``grace_s`` seconds, then kill
    those still alive; every one is joined (no zombie or orphan is left)."""
    procs = [p for p in processes if p is not None]
    for p in procs:
        with contextlib.suppress(Exception):
            if p.is_alive():
                p.terminate()
    for p in procs:
        with contextlib.suppress(Exception):
            p.join(grace_s)
    for p in procs:
        with contextlib.suppress(Exception):
            if p.is_alive():
                p.kill()
                p.join(grace_s)


@contextlib.contextmanager
def signals_held() -> Iterator[None]:
    """SIGINT held back (blocked, so not lost) and ignored while the block runs:
    processes started in it begin with Ctrl-C ignored (an ignored signal stays
    ignored across exec, and Python then keeps it so), so a Ctrl-C that reaches the
    whole process group cannot interrupt their start-up with a traceback; this
    process gets a Ctrl-C that came meanwhile as soon as the block ends (Linux keeps
    a blocked signal pending even while it is ignored). SIGTERM stays open, so that
    a starting worker can still be terminated at once."""
    if threading.current_thread() is not threading.main_thread() or \
            not hasattr(signal, "pthread_sigmask"):
        yield
        return
    held = {signal.SIGINT}
    old = signal.pthread_sigmask(signal.SIG_BLOCK, held)
    handler = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        yield
    finally:
        signal.signal(signal.SIGINT, handler if handler is not None else signal.SIG_DFL)
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


def stderr_line(text: str) -> None:
    """One line on stderr, even while the interpreter is being interrupted."""
    try:
        print(text, file=sys.stderr, flush=True)
    except (OSError, ValueError):
        pass
