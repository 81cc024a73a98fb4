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

The save can also start before the drawing is finished
(:meth:`BackgroundSave.begin`): the child then writes the modelspace
entities drawn so far while the parent draws the last ones (the legend,
the notes, the second-order layers, which wait for the alpha_cr check);
when the parent finishes (calling the saver as usual) it writes the
small rest of the file, before and after those entities, and the child
joins the three parts into the saved drawing
(:mod:`dxf2frame.split_export`: the same bytes as a whole save).  Should
the parent have removed or inserted any of the entities already written
meanwhile, the early start is dropped and the drawing saved whole.

Errors of the child come back to the parent when it waits: an OSError with
its errno (so a full disk is reported as such), anything else as it was
raised.  The fork itself is :func:`dxf2frame.forked.fork_call`.
"""
from __future__ import annotations

import contextlib
import os
import shutil
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from . import split_export
from .atomic import atomic_path, temp_name
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


def _text_file(doc: "Drawing", path: Path):
    """``path`` opened for DXF text as :meth:`~ezdxf.document.Drawing.saveas` opens it."""
    return open(path, "wt", encoding=doc.output_encoding, errors="dxfreplace")


def _save_ahead(doc: "Drawing", stop: int, target: Path, parts: "_Parts", go: int, go_w: int) -> None:
    """In the child: write the first ``stop`` modelspace entities, wait for
    the parent's word on the pipe ``go`` (one byte: head and tail are
    written; end of file: the save was dropped), then join head, entities
    and tail into ``target`` (atomically)."""
    os.close(go_w)                         # the parent's end: its exit alone must end the wait below
    try:
        with _text_file(doc, parts.body) as fp:
            split_export.write_entities(doc, fp, stop)
        if os.read(go, 1) != b"1":
            return                         # dropped by the parent: nothing to write
        with atomic_path(target) as tmp, open(tmp, "wb") as out:
            for part in (parts.head, parts.body, parts.tail):
                with open(part, "rb") as fh:
                    shutil.copyfileobj(fh, out, 1 << 20)
    finally:
        parts.remove()


@dataclass
class _Parts:
    """The three temporary files of a save started early, beside its target."""

    head: Path
    body: Path
    tail: Path

    @classmethod
    def beside(cls, target: Path) -> "_Parts":
        return cls(*(temp_name(target.with_name(f"{target.stem}-{part}{target.suffix}"))
                     for part in ("head", "body", "tail")))

    def remove(self) -> None:
        for p in (self.head, self.body, self.tail):
            with contextlib.suppress(OSError):
                p.unlink()


@dataclass
class _Ahead:
    """A save started by :meth:`BackgroundSave.begin`, waiting for the rest of the drawing."""

    job: Forked
    target: Path
    written: list                          # the modelspace entities the child writes
    parts: _Parts
    go: int                                # the pipe's write end: one byte says "head and tail written"

    def finish(self, doc: "Drawing") -> Forked:
        """Write head and tail, tell the child to join the parts; the
        child's job (its result is the saved drawing)."""
        stop = len(self.written)
        with _text_file(doc, self.parts.head) as fp:
            split_export.write_head(doc, fp)
        with _text_file(doc, self.parts.tail) as fp:
            split_export.write_tail(doc, fp, stop)
        try:
            os.write(self.go, b"1")
        except BrokenPipeError:
            pass                           # the child has ended already: waiting for it says why
        finally:
            self._close()
        return self.job

    def _close(self) -> None:
        go, self.go = self.go, -1
        if go >= 0:
            with contextlib.suppress(OSError):
                os.close(go)

    def drop(self) -> None:
        """Stop the child, remove its parts."""
        self._close()
        self.job.stop()
        self.parts.remove()


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
        self._ahead: _Ahead | None = None

    def _pays(self, doc: "Drawing") -> bool:
        return self.enabled and len(doc.entitydb) >= self.min_entities and can_fork()

    def begin(self, doc: "Drawing", target: Path | str) -> None:
        """Start saving ``doc`` to ``target`` before it is finished, where it
        pays (see the module docstring): until the saver is called with the
        finished drawing, only new modelspace entities may be added to what
        is there now (anything else may change: layers, blocks, paperspace).
        Nothing happens where it does not pay; the call then saves whole."""
        target = Path(target)
        self.drop()
        self.wait()                       # one child at a time
        if not (self._pays(doc) and split_export.splittable(doc)):
            return
        written = split_export.modelspace_entities(doc)
        parts = _Parts.beside(target)
        go, go_w = os.pipe()
        try:
            job = fork_call(_save_ahead, doc, len(written), target, parts, go, go_w,
                            what=f"saving {target.name}")
        finally:
            os.close(go)
        self._ahead = _Ahead(job, target, written, parts, go_w)

    def __call__(self, doc: "Drawing", target: Path | str) -> None:
        """Save ``doc`` to ``target`` (atomically): in a child process when
        it pays, else now; a save begun early (:meth:`begin`) is finished.
        :meth:`wait` before using the file."""
        target = Path(target)
        ahead, self._ahead = self._ahead, None
        if ahead is not None:
            if ahead.target == target and split_export.same_start(doc, ahead.written):
                try:
                    self._job = ahead.finish(doc)
                except BaseException:
                    ahead.drop()
                    raise
                return
            ahead.drop()                  # an entity written early is gone: save whole
        self.wait()                       # one child at a time
        if not self._pays(doc):
            _save(doc, target)
            return
        self._job = fork_call(_save, doc, target, what=f"saving {target.name}")

    @property
    def running(self) -> bool:
        """A child process is saving (not yet waited for)."""
        return (self._job is not None and self._job.running) or self._ahead is not None

    def drop(self) -> None:
        """Drop a save begun early and not finished (the drawing it was
        writing will not be saved): its child is stopped, its parts removed."""
        ahead, self._ahead = self._ahead, None
        if ahead is not None:
            ahead.drop()

    def wait(self) -> None:
        """Wait for the child, if any; raise what it raised."""
        job, self._job = self._job, None
        if job is not None:
            job.wait()

    def stop(self) -> None:
        """Stop a child still saving (its temporary file is left to the
        caller's staging folder) and reap it."""
        self.drop()
        job, self._job = self._job, None
        if job is not None:
            job.stop()

    def __enter__(self) -> "BackgroundSave":
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if exc_type is None:
            self.drop()                   # begun for a drawing that was never finished
            self.wait()
        else:
            self.stop()
