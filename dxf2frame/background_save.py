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
(:meth:`BackgroundSave.begin`): once the source's earlier results are
removed, a child writes the drafter's modelspace entities while the
parent draws the diagrams, and a second child the diagrams while the
parent waits for the alpha_cr check and draws the legend, notes and
second-order layers; when the parent finishes (calling the saver as
usual) it writes the small rest of the file, before and after those
entities, and joins the parts into the saved drawing when it waits
(:mod:`dxf2frame.split_export`: the same bytes as a whole save).  Should
the parent have removed or inserted any of the entities already written
meanwhile, the early start is dropped and the drawing saved whole.

Errors of the child come back to the parent when it waits: an OSError with
its errno (so a full disk is reported as such), anything else as it was
raised.  The fork itself is :func:`dxf2frame.forked.fork_call`.
"""
from __future__ import annotations

import contextlib
import io
import os
import shutil
from dataclasses import dataclass, field
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


#: how much lower the children writing a save begun early run than the
#: solve (``os.nice``): they have time to spare until the report is
#: written, while the alpha_cr check and the drawing decide when the solve
#: ends; on a busy machine the scheduler gives them the rest of the cores
#: (a 20,000-member frame: 26 s instead of 28 s on two cores)
SAVE_NICENESS = 5


def _write_piece(doc: "Drawing", start: int, stop: int, path: Path) -> None:
    """In a child: modelspace entities ``start`` to ``stop`` into ``path``
    (at :data:`SAVE_NICENESS`)."""
    with contextlib.suppress(OSError, AttributeError):
        os.nice(SAVE_NICENESS)
    with open(path, "wt", encoding=doc.output_encoding, errors="dxfreplace") as fp:
        split_export.write_entities(doc, fp, start, stop)


@dataclass
class _Early:
    """A save begun before the drawing is finished (:meth:`BackgroundSave.begin`):
    children write the modelspace entities drawn so far, one piece each;
    head and tail are written by the parent once it is finished."""

    target: Path
    written: list = field(default_factory=list)    # the modelspace entities the pieces hold, in order
    pieces: list[tuple[Forked, Path]] = field(default_factory=list)
    ends: tuple[bytes, bytes] | None = None       # head and tail, once finished

    def add_piece(self, doc: "Drawing") -> None:
        """A child writes the entities added since the last piece."""
        now = split_export.modelspace_entities(doc)
        start, stop = len(self.written), len(now)
        if stop == start:
            return
        path = temp_name(self.target.with_name(f"{self.target.stem}-part{len(self.pieces) + 1}{self.target.suffix}"))
        job = fork_call(_write_piece, doc, start, stop, path, what=f"saving {self.target.name}")
        self.pieces.append((job, path))
        self.written = now

    def finish(self, doc: "Drawing") -> None:
        """Head and tail of the finished drawing (in this process)."""
        enc = doc.output_encoding
        head, tail = io.StringIO(), io.StringIO()
        split_export.write_head(doc, head)
        split_export.write_tail(doc, tail, len(self.written))
        self.ends = (head.getvalue().encode(enc, errors="dxfreplace"),
                     tail.getvalue().encode(enc, errors="dxfreplace"))

    def join(self) -> None:
        """Wait for the pieces; head, pieces and tail into the target (atomically)."""
        try:
            for job, _ in self.pieces:
                job.wait()
            head, tail = self.ends
            with atomic_path(self.target) as tmp, open(tmp, "wb") as out:
                out.write(head)
                for _, path in self.pieces:
                    with open(path, "rb") as fh:
                        shutil.copyfileobj(fh, out, 1 << 20)
                out.write(tail)
        finally:
            self.drop()

    def drop(self) -> None:
        """Stop the children still writing, remove their pieces."""
        for job, path in self.pieces:
            job.stop()
            with contextlib.suppress(OSError):
                path.unlink()


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
        self._early: _Early | None = None

    def _pays(self, doc: "Drawing") -> bool:
        return self.enabled and len(doc.entitydb) >= self.min_entities and can_fork()

    def begin(self, doc: "Drawing", target: Path | str) -> None:
        """Start saving ``doc`` to ``target`` before it is finished, where it
        pays (see the module docstring): until the saver is called with the
        finished drawing, only new modelspace entities may be added to what
        is there now (anything else may change: layers, blocks, paperspace).
        Called again for the same target, a child writes the entities added
        since.  Nothing happens where it does not pay; the call then saves
        whole."""
        target = Path(target)
        early = self._early
        if early is not None and early.target == target and early.ends is None:
            if split_export.same_start(doc, early.written):
                early.add_piece(doc)
            else:
                self.drop()               # an entity written already is gone: the call saves whole
            return
        self.drop()
        self.wait()                       # one save at a time
        if self._pays(doc) and split_export.splittable(doc):
            self._early = _Early(target)
            self._early.add_piece(doc)

    def __call__(self, doc: "Drawing", target: Path | str) -> None:
        """Save ``doc`` to ``target`` (atomically): in a child process when
        it pays, else now; a save begun early (:meth:`begin`) is finished
        (the parts are joined when waited for).  :meth:`wait` before using
        the file."""
        target = Path(target)
        early = self._early
        if early is not None and early.target == target and early.ends is None \
                and split_export.same_start(doc, early.written):
            try:
                early.finish(doc)
            except BaseException:
                self.drop()
                raise
            return
        self.drop()                       # begun for another drawing, or an entity written already is gone
        self.wait()                       # one save at a time
        if not self._pays(doc):
            _save(doc, target)
            return
        self._job = fork_call(_save, doc, target, what=f"saving {target.name}")

    @property
    def running(self) -> bool:
        """A save is under way in a child process (not yet waited for)."""
        return (self._job is not None and self._job.running) or self._early is not None

    def drop(self) -> None:
        """Drop a save begun early and not finished (the drawing it was
        writing will not be saved): its children are stopped, their pieces
        removed."""
        early = self._early
        if early is not None and early.ends is None:
            self._early = None
            early.drop()

    def wait(self) -> None:
        """Wait for the save, if any; raise what its child raised.  A save
        begun early is joined into its target here."""
        job, self._job = self._job, None
        early, self._early = self._early, None
        if early is not None and early.ends is None:
            self._early = early           # not finished yet: nothing to wait for
        elif early is not None:
            early.join()
        if job is not None:
            job.wait()

    def stop(self) -> None:
        """Stop a child still saving (its temporary file is left to the
        caller's staging folder) and reap it."""
        early, self._early = self._early, None
        if early is not None:
            early.drop()
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
