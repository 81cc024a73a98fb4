"""Saving a large result drawing on a second core while the report is written.

Serialising a finished ezdxf document to DXF is pure Python and, on a
5,000-member frame, takes about as long as everything the pipeline does
after it (the report, the CSVs, the preview) put together; none of those
needs the saved file.  :class:`BackgroundSave` therefore forks the process
once the drawing is complete: the child writes the file (atomically, as
:func:`dxf2frame.atomic.atomic_path` does) and exits; the parent carries
on and waits for it before the outputs are committed.  The child works on
its own copy-on-write view of the document, so nothing is shared while
both run.

It forks only where that is safe and worth it: a POSIX system, at least
two usable CPUs, a process with a single thread (not ``watch``, whose file
watcher runs threads) that is not itself a worker of a process pool (a
batch already uses the cores), and a drawing of at least
:data:`MIN_ENTITIES` entities (below that the save is quicker than the
fork).  Otherwise the drawing is saved at once, in the calling process;
the files are the same either way.

Errors of the child come back to the parent when it waits: an OSError with
its errno (so a full disk is reported as such), anything else as
:class:`BackgroundSaveError`.
"""
from __future__ import annotations

import contextlib
import multiprocessing
import os
import pickle
import signal
import threading
from pathlib import Path
from typing import TYPE_CHECKING

from .atomic import atomic_path

if TYPE_CHECKING:
    from ezdxf.document import Drawing

__all__ = ["BackgroundSave", "BackgroundSaveError", "MIN_ENTITIES", "can_fork"]

#: entities (``len(doc.entitydb)``) from which a drawing is saved in a forked child
MIN_ENTITIES = 20_000


class BackgroundSaveError(RuntimeError):
    """Saving the drawing failed in the child process (the message is the
    child's exception, type and text)."""


def _cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def can_fork() -> bool:
    """A child process may save the drawing: POSIX fork, two or more CPUs,
    this process single-threaded and not a pool worker."""
    return (hasattr(os, "fork") and _cpus() >= 2 and threading.active_count() == 1
            and multiprocessing.parent_process() is None)


def _save(doc: "Drawing", target: Path) -> None:
    with atomic_path(target) as tmp:
        doc.saveas(tmp)


class BackgroundSave:
    """Save result drawings in a forked child where it pays (see the module
    docstring); use as a context manager so that a child still running when
    the block fails is stopped and reaped.

    Parameters
    ----------
    min_entities : fork only for drawings with at least this many entities
        (default :data:`MIN_ENTITIES`)
    enabled : False saves every drawing at once, in this process
    """

    def __init__(self, *, min_entities: int | None = None, enabled: bool = True) -> None:
        self.min_entities = MIN_ENTITIES if min_entities is None else int(min_entities)
        self.enabled = bool(enabled)
        self._pid: int | None = None
        self._pipe: int | None = None
        self._target: Path | None = None

    # -- the saver ---------------------------------------------------------

    def __call__(self, doc: "Drawing", target: Path | str) -> None:
        """Save ``doc`` to ``target`` (atomically): in a child process when
        it pays, else now.  :meth:`wait` before using the file."""
        target = Path(target)
        self.wait()                       # one child at a time
        if not (self.enabled and len(doc.entitydb) >= self.min_entities and can_fork()):
            _save(doc, target)
            return
        r, w = os.pipe()
        pid = os.fork()
        if pid == 0:                      # the child: save, report, leave without cleanup
            code = 0
            try:
                os.close(r)
                signal.signal(signal.SIGINT, signal.SIG_DFL)
                _save(doc, target)
            except BaseException as exc:  # noqa: BLE001 - everything goes back to the parent
                code = 1
                err = (type(exc).__name__, getattr(exc, "errno", None), getattr(exc, "strerror", None),
                       str(exc))
                with contextlib.suppress(OSError):
                    os.write(w, pickle.dumps(err))
            finally:
                os._exit(code)
        os.close(w)
        self._pid, self._pipe, self._target = pid, r, target

    @property
    def running(self) -> bool:
        """A child process is saving (not yet waited for)."""
        return self._pid is not None

    # -- waiting -----------------------------------------------------------

    def wait(self) -> None:
        """Wait for the child, if any; raise what it raised."""
        pid, pipe, target = self._pid, self._pipe, self._target
        if pid is None:
            return
        self._pid = self._pipe = self._target = None
        try:
            data = b""
            while chunk := os.read(pipe, 65536):
                data += chunk
        finally:
            os.close(pipe)
        _, status = os.waitpid(pid, 0)
        code = os.waitstatus_to_exitcode(status)
        if code == 0:
            return
        if data:
            name, errno, strerror, text = pickle.loads(data)
            if errno is not None:
                raise OSError(errno, strerror or text, str(target))
            raise BackgroundSaveError(f"saving {target.name} failed: {name}: {text}")
        raise BackgroundSaveError(f"saving {target.name} failed: the process saving it ended with status {code}")

    def stop(self) -> None:
        """Stop a child still saving (its temporary file is left to the
        caller's staging folder) and reap it."""
        pid, pipe = self._pid, self._pipe
        if pid is None:
            return
        self._pid = self._pipe = self._target = None
        with contextlib.suppress(OSError):
            os.kill(pid, signal.SIGKILL)
        with contextlib.suppress(OSError):
            os.waitpid(pid, 0)
        with contextlib.suppress(OSError):
            os.close(pipe)

    def __enter__(self) -> "BackgroundSave":
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if exc_type is None:
            self.wait()
        else:
            self.stop()

