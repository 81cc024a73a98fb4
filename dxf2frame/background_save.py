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
its errno (so a full disk is reported as such), anything else as it was
raised.  The fork itself is :func:`dxf2frame.forked.fork_call`.
"""
from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from .atomic import atomic_path
from .forked import Forked, ForkedCallError, can_fork, fork_call

if TYPE_CHECKING:
    from ezdxf.document import Drawing

__all__ = ["BackgroundSave", "BackgroundSaveError", "MIN_ENTITIES", "can_fork"]

#: entities (``len(doc.entitydb)``) from which a drawing is saved in a forked child
MIN_ENTITIES = 20_000

#: the child ended without a result (killed, or an exception that did not pickle)
BackgroundSaveError = ForkedCallError


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
        self._job: Forked | None = None

    def __call__(self, doc: "Drawing", target: Path | str) -> None:
        """Save ``doc`` to ``target`` (atomically): in a child process when
        it pays, else now.  :meth:`wait` before using the file."""
        target = Path(target)
        self.wait()                       # one child at a time
        if not (self.enabled and len(doc.entitydb) >= self.min_entities and can_fork()):
            _save(doc, target)
            return
        self._job = fork_call(_save, doc, target, what=f"saving {target.name}")

    @property
    def running(self) -> bool:
        """A child process is saving (not yet waited for)."""
        return self._job is not None and self._job.running

    def wait(self) -> None:
        """Wait for the child, if any; raise what it raised."""
        job, self._job = self._job, None
        if job is not None:
            job.wait()

    def stop(self) -> None:
        """Stop a child still saving (its temporary file is left to the
        caller's staging folder) and reap it."""
        job, self._job = self._job, None
        if job is not None:
            job.stop()

    def __enter__(self) -> "BackgroundSave":
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if exc_type is None:
            self.wait()
        else:
            self.stop()
