"""Opening a DXF file: refusals before parsing, loading, recover mode.

:func:`open_document` refuses, with :class:`~dxf2frame.errors.InputFileError`
naming the file, a missing or empty file, one that does not start like a
DXF (ASCII ``0/SECTION`` or the binary sentinel), one over
``limits.max_file_mb``, and an ASCII file whose count of entity tags is far
over ``limits.max_entities`` (counted in chunks, without parsing), and an
ASCII file cut off before its ENTITIES section is complete (no ``EOF``,
:func:`_truncation`): it would read as a drawing with things missing.  A file
ezdxf cannot load is read again in ezdxf's recover mode; ezdxf's log
messages (collected per thread, never printed) and the audit's fixes become
one note, and a repair that dropped a drawing entity because its handle
clashed is a :class:`~dxf2frame.errors.DrawingError`.
"""
from __future__ import annotations

import contextlib
import logging
import re
import threading
from pathlib import Path
from typing import Iterator

import ezdxf
from ezdxf import recover

from .errors import DrawingError, InputFileError, one_line
from .settings import Settings

__all__ = ["open_document", "READ_ENTITY_TYPES"]

#: the entity types the reader analyses (one handler each in
#: :data:`dxf2frame.read.dispatch.HANDLERS`): a recover-mode repair that drops
#: one of them for a clashing handle is an error, not a note.  Kept here so
#: that opening a file (reader, writer, preview, revision marks) needs none of
#: the reading code.
READ_ENTITY_TYPES = frozenset({
    "LINE", "LWPOLYLINE", "POLYLINE", "INSERT", "ARC", "CIRCLE", "ELLIPSE", "SPLINE", "3DFACE", "3DSOLID", "MESH",
    "BODY", "REGION", "SURFACE", "EXTRUDEDSURFACE", "LOFTEDSURFACE", "REVOLVEDSURFACE", "SWEPTSURFACE",
    "PLANESURFACE",
})

_BINARY_SENTINEL = b"AutoCAD Binary DXF"
_UNDECODED = re.compile("[\ud800-\udfff]")
_NOTE_LIMIT = 5


def describe_entity(e) -> str:
    return f"{e.dxftype()} on layer '{e.dxf.get('layer', '0')}'"


class _EzdxfMessages(logging.Handler):
    """Collects the warnings ezdxf logs in the current thread (repairs it made
    while loading), so they become warnings of the model instead of stray
    lines on stderr."""

    def __init__(self) -> None:
        super().__init__(level=logging.WARNING)
        self.thread = threading.get_ident()
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        if record.thread == self.thread:
            try:
                self.messages.append(record.getMessage())
            except Exception:  # noqa: BLE001 - a malformed log call must not stop the reading
                self.messages.append(str(record.msg))


@contextlib.contextmanager
def _ezdxf_messages() -> Iterator[list[str]]:
    log = logging.getLogger("ezdxf")
    handler = _EzdxfMessages()
    log.addHandler(handler)
    try:
        yield handler.messages
    finally:
        log.removeHandler(handler)


def _summarise(messages: list[str], limit: int = _NOTE_LIMIT) -> str:
    uniq = list(dict.fromkeys(" ".join(m.split()) for m in messages if m and m.strip()))
    text = "; ".join(uniq[:limit])
    if len(uniq) > limit:
        text += f"; and {len(uniq) - limit} more"
    return text


_ENTITY_TAG = re.compile(rb"\n[ \t]*0[ \t]*\r?\n[A-Za-z]")  # group code 0, then an entity/section name
_STRUCTURE_TAGS = 1000  # SECTION, ENDSEC, TABLE, ENDTAB, EOF... besides the entities


def _count_entity_tags(path: Path, chunk: int = 1 << 23) -> int:
    """Number of group-code-0 tags of an ASCII DXF (each starts an entity or
    a structure mark), counted without parsing, so that a file far over the
    entity limit is refused before ezdxf spends minutes loading it."""
    count, carry = 0, b"\n"
    with open(path, "rb") as fh:
        while True:
            block = fh.read(chunk)
            if not block:
                break
            data = carry + block
            # a tag cut by the chunk boundary starts at one of the last two
            # line breaks: count matches before the third-last, carry the rest
            cut = len(data)
            for _ in range(3):
                cut = data.rfind(b"\n", 0, cut)
                if cut <= 0:
                    cut = 0
                    break
            count += sum(1 for m in _ENTITY_TAG.finditer(data) if m.start() < cut)
            carry = data[cut:]
    return count + len(_ENTITY_TAG.findall(carry))


_SECTION_MARK = re.compile(rb"\n[ \t]*0[ \t]*\r?\n(SECTION|ENDSEC|EOF)[ \t]*(?=\r?\n|$)"
                           rb"(?:(?=\r?\n[ \t]*2[ \t]*\r?\n([A-Za-z_]+)))?")
#: sections an analysis needs complete: a file cut inside them (or before
#: ENTITIES) is missing units, layers, blocks or entities
_NEEDED_SECTIONS = ("HEADER", "CLASSES", "TABLES", "BLOCKS", "ENTITIES")


def _truncation(path: Path, chunk: int = 1 << 23) -> str | None:
    """How an ASCII DXF file is cut off before its drawing is complete, or
    None.  A file without the final ``EOF`` whose ENTITIES section is not
    closed ends inside (or before) a section the analysis needs: reading it
    in recovery mode would silently give a drawing with members, loads or
    the length unit missing."""
    with open(path, "rb") as fh:          # a file that ends with its EOF mark is whole: no scan
        fh.seek(max(0, path.stat().st_size - 256))
        tail = b"\n" + fh.read()
    if any(m.group(1) == b"EOF" for m in _SECTION_MARK.finditer(tail)):
        return None
    events: dict[int, tuple[bytes, bytes | None]] = {}
    offset, carry = 0, b"\n"
    with open(path, "rb") as fh:
        while True:
            block = fh.read(chunk)
            if not block:
                break
            data = carry + block
            base = offset - len(carry)
            for m in _SECTION_MARK.finditer(data):
                events[base + m.start()] = (m.group(1), m.group(2))
            offset += len(block)
            carry = data[-256:]
    section, closed_entities = None, False
    for _, (mark, name) in sorted(events.items()):
        if mark == b"EOF":
            return None
        if mark == b"SECTION":
            section = (name or b"?").decode("ascii", "replace").upper()
        elif mark == b"ENDSEC":
            closed_entities = closed_entities or section == "ENTITIES"
            if section is not None and not section.startswith("after "):
                section = f"after {section}"
    if closed_entities:
        return None
    if section is None:
        return "it ends before its ENTITIES section"
    if section.startswith("after "):
        return f"it ends after the {section[6:]} section, before the ENTITIES section"
    if section not in _NEEDED_SECTIONS:
        return f"it ends inside the {section} section, before the ENTITIES section"
    return f"it ends inside the {section} section"


def _looks_like_dxf(head: bytes) -> bool:
    """True when the first bytes are those of a binary DXF or an ASCII DXF
    whose first tag (after comments) opens a SECTION; the recover mode
    would otherwise turn any text into an empty drawing."""
    if head.startswith(_BINARY_SENTINEL):
        return True
    lines = [ln.strip() for ln in head.decode("latin-1").lstrip("\ufeff\xef\xbb\xbf").splitlines()]
    k = 0
    while k + 1 < len(lines):
        code, value = lines[k], lines[k + 1]
        if code == "999":  # comment
            k += 2
            continue
        return code == "0" and value.upper() == "SECTION"
    return k > 0  # nothing but comments so far: let ezdxf decide


_CONFLICT = re.compile(r"Removed entity (\w+)\(#([0-9A-Fa-f]+)\) with a conflicting handle")


def open_document(path: Path | str, settings: Settings | None = None):
    """Open a DXF file (ASCII or binary) with ezdxf, repairing a damaged one.

    The file is read normally first; when ezdxf cannot load it the recover
    mode reads it again and repairs what it can.  Repairs are returned as
    notes (one text naming the file and up to five repairs), never printed.

    Parameters
    ----------
    path : the DXF file
    settings : for ``limits.max_file_mb`` (defaults when None)

    Returns
    -------
    (doc, notes) : the ezdxf ``Drawing`` and the list of notes

    Raises
    ------
    InputFileError
        Missing, not a file, empty, over the size limit, not DXF, or so
        damaged that the recover mode gives up.
    DrawingError
        The recover mode had to drop a drawing entity because its handle
        clashes with another one (the analysis would silently miss it).
    """
    # Long by intent: the refusals before parsing, the normal read and the recover read form one
    # sequence of fall-backs with one set of messages.
    p = Path(path)
    settings = settings or Settings()
    if not p.exists():
        raise InputFileError(f"{p}: file not found")
    if _UNDECODED.search(p.name):
        # the name goes into the report, the notes layer and the preview
        raise InputFileError(f"{one_line(str(p))}: the file name holds bytes that are not UTF-8; rename the file")
    if not p.is_file():
        raise InputFileError(f"{p}: not a file")
    try:
        size = p.stat().st_size
        with open(p, "rb") as fh:
            head = fh.read(4096)
    except OSError as exc:
        raise InputFileError(f"{p}: cannot read the file ({exc.strerror or exc})") from None
    if size > settings.max_file_mb * 1024 * 1024:
        raise InputFileError(
            f"{p}: {size / 1024 / 1024:.3g} MB, more than the limit of {settings.max_file_mb:g} MB "
            "(raise [limits] max_file_mb in dxf2frame.toml if this is intended)"
        )
    if not head.strip():
        raise InputFileError(f"{p}: the file is empty, not a DXF drawing")
    if not _looks_like_dxf(head):
        raise InputFileError(
            f"{p}: not a readable DXF file (it does not start with a DXF section)",
            )
    if not head.startswith(_BINARY_SENTINEL):
        tags = _count_entity_tags(p)
        if tags > settings.max_entities + _STRUCTURE_TAGS:
            raise InputFileError(
                f"{p}: about {tags} entities, more than the limit of {settings.max_entities} "
                "(raise [limits] max_entities in dxf2frame.toml if this is intended)"
            )
    if not head.startswith(_BINARY_SENTINEL):
        cut = _truncation(p)
        if cut is not None:
            raise InputFileError(
                f"{p}: the file is damaged: {cut} (cut off at {size} bytes?); the drawing is incomplete "
                "(members, loads or the length unit would be missing), so it is not read"
            )
    notes: list[str] = []
    with _ezdxf_messages() as first_try:
        try:
            doc = ezdxf.readfile(p)
        except (FileNotFoundError, PermissionError, IsADirectoryError) as exc:
            raise InputFileError(f"{p}: cannot read the file ({exc.strerror or exc})") from None
        except MemoryError:
            raise InputFileError(f"{p}: not enough memory to read the file") from None
        except Exception as exc:  # noqa: BLE001 - structure errors, bad values, not DXF: try the recover mode
            doc, why = None, str(exc) if str(exc).startswith(type(exc).__name__) else f"{type(exc).__name__}: {exc}"
    if doc is not None:
        if first_try:
            notes.append(f"{p.name}: read with remarks from the DXF library: {_summarise(first_try)}")
        return doc, notes
    with _ezdxf_messages() as repairs:
        try:
            doc, auditor = recover.readfile(p)
        except MemoryError:
            raise InputFileError(f"{p}: not enough memory to read the file") from None
        except Exception as exc:  # noqa: BLE001 - anything ezdxf raises on garbage
            raise InputFileError(f"{p}: not a readable DXF file ({type(exc).__name__}: {exc})") from None
    fixes = [str(f.message) for f in auditor.fixes]
    for text in fixes:
        m = _CONFLICT.search(text)
        if m and m.group(1) in READ_ENTITY_TYPES:
            kept = doc.entitydb.get(m.group(2))
            raise DrawingError(
                f"two entities share this handle ({m.group(1)} and "
                f"{describe_entity(kept) if kept is not None else 'another entity'}); the file is damaged and one "
                "of them would be lost",
                handle=m.group(2),
                layer=kept.dxf.get("layer", "") if kept is not None else "",
                hint="open it in a CAD program, run its audit/repair command and save it again",
            )
    done = repairs + fixes
    unrepaired = [str(e.message) for e in auditor.errors]
    text = f"{p.name}: damaged DXF ({_summarise([why], 1)[:200]}) read in recovery mode; {len(done)} problem(s) repaired"
    if done:
        text += f" ({_summarise(done)})"
    if unrepaired:
        text += f"; {len(unrepaired)} problem(s) left unrepaired: {_summarise(unrepaired)}"
    notes.append(text + "; check the results against the drawing")
    return doc, notes
