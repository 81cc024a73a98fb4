"""Atomic file writes: a finished file or no file at all.

Every writer in the project goes through this module.  The content is
written to a temporary file in the target's own folder (same file system,
so the final :func:`os.replace` is an atomic rename), flushed to disk, and
only then renamed over the target.  If anything fails on the way the
temporary file is removed and the target is left as it was (absent, or the
previous complete version).

Examples
--------
>>> import tempfile, pathlib
>>> d = pathlib.Path(tempfile.mkdtemp())
>>> write_text(d / "a.txt", "hello")
>>> (d / "a.txt").read_text()
'hello'
>>> with atomic_path(d / "b.txt") as tmp:
...     _ = tmp.write_text("via a path")       # any library that wants a path
>>> (d / "b.txt").read_text()
'via a path'
>>> sorted(p.name for p in d.iterdir())        # no temporary files left
['a.txt', 'b.txt']
"""
from __future__ import annotations

import contextlib
import os
import secrets
from pathlib import Path
from typing import IO, Iterator

__all__ = [
    "same_file",
    "atomic_path",
    "atomic_open",
    "write_text",
    "write_bytes",
    "temp_name",
]


def same_file(a: Path | str, b: Path | str) -> bool:
    """True when ``a`` and ``b`` name the same file (symlinks, hard links,
    ``..`` and case-insensitive file systems included); for paths that do
    not exist yet, when they resolve to the same place."""
    a, b = Path(a), Path(b)
    try:
        if a.exists() and b.exists():
            return os.path.samefile(a, b)
        return a.resolve() == b.resolve()
    except OSError:
        return a.absolute() == b.absolute()


def temp_name(target: Path) -> Path:
    """A fresh temporary path beside ``target``.

    The name is hidden (leading dot), unique, and keeps the target's suffix
    so that libraries choosing a format from the extension (matplotlib,
    ezdxf) still do the right thing: ``.out.dxf`` -> ``.out.<random>.tmp.dxf``.
    """
    target = Path(target)
    return target.with_name(f".{target.stem}.{secrets.token_hex(4)}.tmp{target.suffix}")


def _fsync_file(path: Path) -> None:
    """Flush a file written by a third-party library to the disk."""
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:  # some file systems do not support fsync on read handles
        pass
    finally:
        os.close(fd)


def _fsync_dir(folder: Path) -> None:
    """Make the rename itself durable (POSIX); a no-op where unsupported."""
    if os.name != "posix":
        return
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def _remove_quietly(path: Path) -> None:
    with contextlib.suppress(FileNotFoundError, IsADirectoryError, PermissionError):
        path.unlink()


@contextlib.contextmanager
def atomic_path(target: Path | str) -> Iterator[Path]:
    """Yield a temporary path to write; rename it to ``target`` on success.

    Use this for libraries that write to a path themselves (``doc.saveas``,
    ``fig.savefig``).  On an exception inside the block the temporary file
    is deleted and the exception propagates; ``target`` is untouched.  If
    the block finishes without creating the temporary file, nothing is
    renamed and ``FileNotFoundError`` is raised.

    Parameters
    ----------
    target : the final file; its folder must exist.
    """
    target = Path(target)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise FileNotFoundError(f"output folder does not exist: {folder}")
    tmp = temp_name(target)
    try:
        yield tmp
        if not tmp.exists():
            raise FileNotFoundError(f"nothing was written for {target}")
        _fsync_file(tmp)
        os.replace(tmp, target)
    except BaseException:
        _remove_quietly(tmp)
        raise
    _fsync_dir(folder)


@contextlib.contextmanager
def atomic_open(
    target: Path | str, mode: str = "w", *, encoding: str | None = "utf-8", newline: str | None = None
) -> Iterator[IO]:
    """Open a temporary file for writing; rename it to ``target`` on success.

    ``mode`` is ``"w"`` (text, ``encoding`` and ``newline`` as for
    :func:`open`) or ``"wb"`` (bytes).  The file is flushed and fsynced
    before the rename.
    """
    if mode not in ("w", "wb"):
        raise ValueError(f"atomic_open supports modes 'w' and 'wb', not {mode!r}")
    with atomic_path(target) as tmp:
        if mode == "wb":
            fh = open(tmp, "xb")
        else:
            fh = open(tmp, "x", encoding=encoding, newline=newline)
        with fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())


def write_text(target: Path | str, text: str, *, encoding: str = "utf-8", newline: str | None = None) -> None:
    """Write ``text`` to ``target`` atomically."""
    with atomic_open(target, "w", encoding=encoding, newline=newline) as fh:
        fh.write(text)


def write_bytes(target: Path | str, data: bytes) -> None:
    """Write ``data`` to ``target`` atomically."""
    with atomic_open(target, "wb") as fh:
        fh.write(data)
