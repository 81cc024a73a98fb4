"""Exceptions for bad input.

Every error that comes from the drawing names the DXF entity handle and the
layer, says what is wrong and what to do.  The CLI prints ``str(error)`` as
one line and exits with status 2; nothing is written.
"""
from __future__ import annotations

import re

_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f\ud800-\udfff]")


def one_line(text: str) -> str:
    """``text`` as one printable line: line breaks and tabs become spaces,
    other control characters (and undecodable bytes kept as surrogates)
    become ``\\xNN`` escapes.  Messages quote drawing content, which may be
    anything."""
    t = " ".join(str(text).replace("\t", " ").splitlines())
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()) & 0xFF:02x}", t).strip()

#: longest quoted text (a value, a layer name) a message echoes [characters]
MAX_ECHO = 80


def shorten(text: str, limit: int = MAX_ECHO) -> str:
    """``text`` cut to about ``limit`` characters for a message: a long value
    (an attribute of a megabyte) keeps its start and end and says how long
    it was, so the message stays one readable line."""
    t = str(text)
    if len(t) <= limit:
        return t
    keep = max(limit - 30, 10)
    return f"{t[: keep * 2 // 3]}...{t[-(keep // 3):]} ({len(t)} characters)"


__all__ = [
    "one_line",
    "shorten",
    "MAX_ECHO",
    "Dxf2FrameError",
    "DrawingError",
    "UnitError",
    "GeometryError",
    "UnsupportedEntityError",
    "UnknownBlockError",
    "SettingsError",
    "InputFileError",
    "AnalysisError",
    "CannotWriteError",
]


class Dxf2FrameError(Exception):
    """Base class of everything dxf2frame reports as bad input (exit 2)."""

    exit_code = 2


class DrawingError(Dxf2FrameError):
    """A problem with one entity of the drawing.

    Parameters
    ----------
    message : what is wrong
    handle : DXF handle of the offending entity ("" if none)
    layer : its layer ("" if none)
    hint : what the user can do about it
    """

    def __init__(self, message: str, *, handle: str = "", layer: str = "", hint: str = "") -> None:
        self.message = message
        self.handle = handle
        self.layer = layer
        self.hint = hint
        super().__init__(str(self))

    def __str__(self) -> str:
        where = []
        if self.handle:
            where.append(f"entity #{shorten(self.handle)}")
        if self.layer:
            where.append(f"on layer '{shorten(self.layer)}'")
        head = (" ".join(where) + ": ") if where else ""
        tail = f" ({shorten(self.hint, 10 * MAX_ECHO)})" if self.hint else ""
        return f"{head}{shorten(self.message, 10 * MAX_ECHO)}{tail}"


class UnitError(DrawingError):
    """An attribute value with no parsable quantity or a unit of the wrong kind."""


class GeometryError(DrawingError):
    """Linework that cannot become a planar frame (3D, arcs, off-member blocks...)."""


class UnsupportedEntityError(GeometryError):
    """An entity type the reader does not understand on a tagged layer."""


class UnknownBlockError(DrawingError):
    """A block reference on a tagged layer whose name is not in the convention."""


class SettingsError(Dxf2FrameError):
    """A settings file that cannot be read or holds an invalid value."""

    def __init__(self, message: str, *, path: str = "", key: str = "") -> None:
        self.path, self.key = path, key
        where = f"{path}: " if path else ""
        k = f"[{shorten(key)}] " if key else ""
        super().__init__(f"{where}{k}{shorten(message, 10 * MAX_ECHO)}")


class InputFileError(Dxf2FrameError):
    """The file is missing, unreadable, not a DXF, or over the size limits."""


class AnalysisError(DrawingError):
    """The model read from the drawing cannot be analysed as given: members
    without sections in an indeterminate frame, a load the solver cannot
    apply, a nearly singular stiffness, results that are not finite."""


class CannotWriteError(Dxf2FrameError):
    """An output cannot be written: a read-only or missing-permission folder,
    a full disk, the file size limit.  The user's machine, not the drawing:
    exit status 4 (``EXIT_CANNOT_WRITE``); the previous outputs are kept."""

    exit_code = 4
