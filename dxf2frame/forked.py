"""A function call in a forked child process, for work that can run on the
second core while the parent goes on.

:func:`fork_call` forks; the child calls the function, sends its result
(or its exception) back through a pipe, pickled, and leaves with
``os._exit`` (no cleanup of the parent's state, no flushing of its
buffers).  :meth:`Forked.wait` collects it; :meth:`Forked.stop` kills and
reaps a child that is no longer wanted.  The child works on its own
copy-on-write view of the parent's memory, so nothing is shared while
both run.

Fork only where :func:`can_fork` says it is safe and can pay: a POSIX
system, two or more usable CPUs, a process with a single thread (a fork
copies only the calling thread, so locks held by others would stay held in
the child; ``watch`` runs a file watcher's threads) that is not itself a
worker of a process pool (a batch already uses the cores).
"""
from __future__ import annotations

import contextlib
import multiprocessing
import os
import pickle
import signal
import threading
from typing import Any, Callable

__all__ = ["Forked", "ForkedCallError", "can_fork", "fork_call"]


class ForkedCallError(RuntimeError):
    """The child process failed with an exception that could not be sent
    back as it was (the message names its type and text), or ended without
    a word (killed)."""


def _cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def can_fork() -> bool:
    """A call may run in a forked child: POSIX fork, two or more CPUs, this
    process single-threaded and not a pool worker."""
    return (hasattr(os, "fork") and _cpus() >= 2 and threading.active_count() == 1
            and multiprocessing.parent_process() is None)


def _message(exc: BaseException) -> bytes:
    """The exception pickled, or its type, errno and text when it does not pickle."""
    try:
        data = pickle.dumps(("raise", exc))
        pickle.loads(data)
        return data
    except Exception:  # noqa: BLE001 - any exception that does not survive pickling
        return pickle.dumps(("text", type(exc).__name__, getattr(exc, "errno", None),
                             getattr(exc, "strerror", None), str(exc)))


class Forked:
    """A call running in a forked child (made by :func:`fork_call`)."""

    def __init__(self, pid: int, pipe: int, what: str) -> None:
        self._pid: int | None = pid
        self._pipe = pipe
        self.what = what

    @property
    def running(self) -> bool:
        """Not yet waited for (nor stopped)."""
        return self._pid is not None

    def wait(self) -> Any:
        """The call's result; raises what the call raised (an exception that
        did not pickle comes back as OSError with its errno when it had one,
        else :class:`ForkedCallError`)."""
        pid, pipe = self._pid, self._pipe
        if pid is None:
            raise ForkedCallError(f"{self.what}: already collected")
        self._pid = None
        chunks = []
        try:
            while chunk := os.read(pipe, 1 << 20):
                chunks.append(chunk)
        finally:
            os.close(pipe)
        _, status = os.waitpid(pid, 0)
        data = b"".join(chunks)
        if not data:
            raise ForkedCallError(f"{self.what}: the process ended with status "
                                  f"{os.waitstatus_to_exitcode(status)} and no result")
        msg = pickle.loads(data)
        if msg[0] == "ok":
            return msg[1]
        if msg[0] == "raise":
            raise msg[1]
        _, name, errno, strerror, text = msg
        if errno is not None:
            raise OSError(errno, strerror or text)
        raise ForkedCallError(f"{self.what} failed: {name}: {text}")

    def stop(self) -> None:
        """Kill the child if it still runs, and reap it."""
        pid, self._pid = self._pid, None
        if pid is None:
            return
        with contextlib.suppress(OSError):
            os.kill(pid, signal.SIGKILL)
        with contextlib.suppress(OSError):
            os.waitpid(pid, 0)
        with contextlib.suppress(OSError):
            os.close(self._pipe)


def fork_call(fn: Callable[..., Any], *args: Any, what: str = "", **kwargs: Any) -> Forked:
    """Run ``fn(*args, **kwargs)`` in a forked child (check :func:`can_fork`
    first); ``what`` names the work in error messages."""
    r, w = os.pipe()
    pid = os.fork()
    if pid == 0:                              # the child: call, report, leave without cleanup
        code = 0
        try:
            os.close(r)
            signal.signal(signal.SIGINT, signal.SIG_DFL)
            try:
                data = pickle.dumps(("ok", fn(*args, **kwargs)))
            except BaseException as exc:  # noqa: BLE001 - everything goes back to the parent
                code, data = 1, _message(exc)
            view = memoryview(data)
            while view:
                view = view[os.write(w, view):]
        finally:
            os._exit(code)
    os.close(w)
    return Forked(pid, r, what or getattr(fn, "__name__", "call"))
