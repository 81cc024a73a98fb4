"""All-or-nothing output sets: stage every file, then swap the whole set in.

A command that writes several files (``solve``: drawing, report, CSV, PNG,
sheets; ``explain``: sheets; ``compare``: table and marked drawing) writes
them into a hidden staging folder first and moves them into place together
with :meth:`OutputSet.commit`.  The commit

1. checks every target folder is writable before the first move (it makes
   the folder and a hidden folder inside it for the previous files; a
   read-only, full or missing-permission folder fails here, nothing moved);
2. renames each previous target aside into that hidden folder, then moves
   the new file in;
3. on any failure removes what it moved and renames the previous files back,
   so the folder holds the complete previous set, unchanged;
4. on success drops the previous files.

The staging folders are named ``.dxf2frame-<pid>-<random>``: a folder whose
owner process is gone (killed by SIGKILL, a power cut) is removed by the
next run that writes into the same folder; a live run's folder is never
touched (checked with ``os.kill(pid, 0)``).

Errors of the machine rather than of the drawing (read-only folder, disk
full, file size limit, no permission) become :class:`CannotWriteError`
naming what could not be written, where, and why.
"""
from __future__ import annotations

import contextlib
import errno
import os
import re
import shutil
import socket
import tempfile
from pathlib import Path
from typing import Iterable, Iterator, Mapping

from .errors import CannotWriteError, one_line

__all__ = [
    "OutputSet",
    "Terminated",
    "raise_terminated",
    "STAGING_PREFIX",
    "WRITE_ERRNOS",
    "cannot_write",
    "writing",
    "sweep_stale",
    "make_folders",
    "move_into_place",
    "remove_path",
]

#: hidden staging and set-aside folders start with this, then the owner pid
STAGING_PREFIX = ".dxf2frame-"
_OWNED = re.compile(re.escape(STAGING_PREFIX) + r"(\d+)-")
_OWNER_FILE = "owner"

#: errno values that mean "the machine cannot take this file", not a fault of ours
WRITE_ERRNOS = frozenset(
    getattr(errno, name) for name in
    ("EACCES", "EPERM", "EROFS", "ENOSPC", "EDQUOT", "EFBIG", "EIO", "ENAMETOOLONG", "EMLINK", "ETXTBSY")
    if hasattr(errno, name)
)


class Terminated(KeyboardInterrupt):
    """SIGTERM turned into an exception, so that it unwinds like Ctrl-C: every
    ``finally`` and context manager on the way cleans up (staging folders
    included).  The CLI exits with 128 + 15 = 143."""

    exit_code = 143


def raise_terminated(signum, frame) -> None:
    """Signal handler for SIGTERM: raise :class:`Terminated`."""
    raise Terminated()


def cannot_write(exc: OSError, what: str, where: Path | str) -> CannotWriteError:
    """A :class:`CannotWriteError` for ``exc``: what, where, why, one line."""
    why = exc.strerror or type(exc).__name__
    if exc.errno == getattr(errno, "EFBIG", None):
        why += " (the file size limit, ulimit -f, is reached)"
    return CannotWriteError(one_line(f"cannot write {what} to {where}: {why}"))


@contextlib.contextmanager
def writing(what: str, where: Path | str) -> Iterator[None]:
    """Turn an OSError of the machine (:data:`WRITE_ERRNOS`) raised inside the
    block into :class:`CannotWriteError`; anything else passes unchanged."""
    try:
        yield
    except OSError as exc:
        if isinstance(exc, CannotWriteError) or exc.errno not in WRITE_ERRNOS:
            raise
        raise cannot_write(exc, what, where) from exc


def make_folders(folder: Path) -> list[Path]:
    """``mkdir -p``; returns the folders it created, outermost first."""
    missing = []
    for parent in (folder, *folder.parents):
        if parent.exists():
            break
        missing.append(parent)
    folder.mkdir(parents=True, exist_ok=True)
    return missing[::-1]


def remove_path(path: Path) -> None:
    """Remove a file or a folder tree; quietly does nothing if it is gone."""
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path, ignore_errors=True)
    else:
        with contextlib.suppress(OSError):
            path.unlink()


def move_into_place(staged: Path, target: Path) -> None:
    """Rename ``staged`` to ``target`` (atomic on one file system; across file
    systems a hidden copy beside the target is renamed)."""
    if staged.is_dir() and target.exists():
        shutil.rmtree(target)
    try:
        os.replace(staged, target)
    except OSError as exc:
        if exc.errno != errno.EXDEV:
            raise
        tmp = target.with_name(f".{target.name}.{os.getpid()}.tmp")
        try:
            if staged.is_dir():
                shutil.copytree(staged, tmp)
            else:
                shutil.copy2(staged, tmp)
            os.replace(tmp, target)
        except BaseException:
            remove_path(tmp)
            raise


def _pid_alive(pid: int) -> bool:
    if pid <= 0:
        return True  # not a pid we wrote: never remove
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # PermissionError: another user's live process
        return True
    return True


def sweep_stale(folder: Path) -> list[Path]:
    """Remove staging folders in ``folder`` whose owner process is dead.

    Only folders named ``.dxf2frame-<pid>-...`` whose owner file names this
    host are considered; a folder of this process or of any live process
    is kept.  Returns the folders removed.  Never raises.
    """
    removed: list[Path] = []
    try:
        entries = list(Path(folder).iterdir())
    except OSError:
        return removed
    host = socket.gethostname()
    for p in entries:
        m = _OWNED.match(p.name)
        if not m or not p.is_dir() or p.is_symlink():
            continue
        pid = int(m.group(1))
        if pid == os.getpid() or _pid_alive(pid):
            continue
        try:
            owner = (p / _OWNER_FILE).read_text(encoding="utf-8").split()
        except (OSError, UnicodeDecodeError):
            continue
        if len(owner) != 2 or owner != [str(pid), host]:
            continue  # another machine sharing the folder: its pids are not ours to test
        shutil.rmtree(p, ignore_errors=True)
        if not p.exists():
            removed.append(p)
    return removed


def _owned_folder(parent: Path) -> Path:
    """A fresh ``.dxf2frame-<pid>-XXXX`` folder in ``parent`` with its owner file."""
    path = Path(tempfile.mkdtemp(prefix=f"{STAGING_PREFIX}{os.getpid()}-", dir=parent))
    try:
        (path / _OWNER_FILE).write_text(f"{os.getpid()} {socket.gethostname()}\n", encoding="utf-8")
    except BaseException:
        shutil.rmtree(path, ignore_errors=True)
        raise
    return path


class OutputSet:
    """A staging folder and the all-or-nothing move of its files into place.

    Use as a context manager::

        with OutputSet(folder, what="the results of shed.dxf") as out:
            write_a(out.staged("a.dxf")); write_b(out.staged("b.json"))
            out.commit({out.staged("a.dxf"): folder / "a.dxf", ...})

    ``anchor`` is the folder the staging folder goes in (created, with its
    parents, and removed again if the set is never committed and it stays
    empty).  Leaving the block without a commit (an exception, Ctrl-C,
    SIGTERM turned into an exception) removes the staging folder and every
    folder made for the set.
    """

    def __init__(self, anchor: Path | str, *, what: str = "the results") -> None:
        self.anchor = Path(anchor)
        self.what = what
        self.folder: Path | None = None
        self.created: list[Path] = []
        self.committed: list[Path] = []
        self._aside: dict[Path, Path] = {}  # target folder -> hidden folder for the previous files

    def __enter__(self) -> "OutputSet":
        with writing(self.what, self.anchor):
            self.created += make_folders(self.anchor)
            sweep_stale(self.anchor)
            self.folder = _owned_folder(self.anchor)
        self._aside[self.anchor.absolute()] = self.folder
        return self

    def staged(self, name: str) -> Path:
        """Path of ``name`` inside the staging folder."""
        assert self.folder is not None, "use OutputSet as a context manager"
        return self.folder / name

    def _aside_folder(self, folder: Path) -> Path:
        key = folder.absolute()
        if key not in self._aside:
            sweep_stale(folder)
            self._aside[key] = _owned_folder(folder)
        return self._aside[key]

    def commit(self, moves: Mapping[Path, Path], *, drop: Iterable[Path] = ()) -> list[Path]:
        """Move every ``staged -> target`` into place, all or none.

        ``drop``: previous files that are no part of the new set (sheets of
        an earlier run with more cuts); they go with the previous files on
        success and come back with them on a failure.

        Raises :class:`CannotWriteError` when a target folder cannot be
        written (nothing moved) or a move fails (everything moved undone,
        the previous files back in place).  Returns the targets.
        """
        pairs = [(Path(s), Path(t)) for s, t in moves.items()]
        drop = [Path(p) for p in drop if Path(p) not in {t for _, t in pairs}]
        for target in [t for _, t in pairs] + drop:  # 1. every folder writable before the first move
            with writing(target.name, target.parent):
                self.created += make_folders(target.parent)
                self._aside_folder(target.parent)
        moved: list[Path] = []
        set_aside: list[tuple[Path, Path]] = []
        try:
            for k, target in enumerate(drop):
                with writing(target.name, target.parent):
                    if target.exists() or target.is_symlink():
                        old = self._aside_folder(target.parent) / f"dropped-{k}-{target.name}"
                        os.replace(target, old)
                        set_aside.append((old, target))
            for k, (staged, target) in enumerate(pairs):
                with writing(target.name, target.parent):
                    if target.exists() or target.is_symlink():  # 2. keep the previous file
                        old = self._aside_folder(target.parent) / f"previous-{k}-{target.name}"
                        os.replace(target, old)
                        set_aside.append((old, target))
                    move_into_place(staged, target)
                    moved.append(target)
        except BaseException:
            for target in reversed(moved):  # 3. undo: the new files out, the previous back
                remove_path(target)
            for old, target in reversed(set_aside):
                with contextlib.suppress(OSError):
                    os.replace(old, target)
            raise
        self.committed = [t for _, t in pairs]
        return self.committed

    def __exit__(self, exc_type, exc, tb) -> None:
        for folder in self._aside.values():  # 4. the previous files go with the hidden folders
            shutil.rmtree(folder, ignore_errors=True)
        if not self.committed:
            for folder in reversed(self.created):
                with contextlib.suppress(OSError):
                    folder.rmdir()  # only if empty
