"""The revision history: every recorded solve of the drawings of one folder,
kept in an embedded SQLite database beside them.

The file is :data:`HISTORY_FILENAME` in the drawing's folder.  One row of
``solves`` per recorded solve (drawing file name, series, revision label,
content hash, time, determinacy, warnings, units), with one row of
``members`` per reported member (id, layer, handle, end points, governing
|N|, |V|, |M|, |deflection| and the smallest span/deflection ratio) and
one row of ``supports`` per support location (governing |fx|, |fy|, |m|).
Values are in the report's units, which the solve row names.  The
governing values are those the comparison uses
(:func:`dxf2frame.revisions.reports.member_governing`,
``support_governing``: the combinations, or every result when there are
none); the deflection ratio is taken at service level (the ASD
combinations, else the load cases), as the batch summary does.  Members
keep their end points, so revisions are matched by geometry with the
comparison's own matching when they are read back
(:func:`revision_report` rebuilds a report dict the comparison reads).

Revision label and series (:func:`revision_of`): a custom header property
of the drawing named by the settings (``[history] label_property``,
default ``"REVISION"``, matched without regard to case) gives the label;
else the file name does: a stem ending in ``rev`` plus a label, separated
by ``-``, ``_``, ``.`` or a space (``shed-rev-B``, ``shed_REV3``,
``shed rev.P2``) gives the label (``B``, ``3``, ``P2``).  The series is the
file stem without that ending (``shed``), so the revisions of one frame
are listed together; a drawing without a label is its own series, its
solves told apart by their ids.

Safety of the file:

* schema versioned: ``meta`` holds ``schema_version``
  (:data:`SCHEMA_VERSION`); a newer version is refused
  (:class:`HistoryError`), never written to;
* concurrent writers (batch workers, a watch): WAL journal, a busy timeout
  of :data:`BUSY_TIMEOUT_S`, and one ``BEGIN IMMEDIATE`` transaction per
  solve, so a reader never sees half a solve;
* a damaged file (not a database, malformed, failing ``quick_check``) is
  renamed aside (:func:`set_aside`, ``.dxf2frame-history.damaged-<time>.sqlite``)
  and reported (:class:`DamagedHistoryError`); it is never deleted or
  silently replaced.

Example
-------
>>> revision_of("shed-rev-B.dxf")
('shed', 'B', 'file name')
>>> revision_of("shed.dxf", {"Revision": "C2"})
('shed', 'C2', 'property')
"""
from __future__ import annotations

import contextlib
import datetime as _dt
import hashlib
import json
import math
import os
import re
import sqlite3
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterator, Mapping

from ..errors import InputFileError
from .compare import TOLERANCE_FRACTION
from .reports import member_governing, member_refs, support_governing

__all__ = [
    "HISTORY_FILENAME",
    "SCHEMA_VERSION",
    "BUSY_TIMEOUT_S",
    "HistoryError",
    "DamagedHistoryError",
    "Revision",
    "History",
    "revision_of",
    "document_properties",
    "content_hash",
    "record_report",
    "revision_report",
    "set_aside",
]

#: the history database, in the drawing's folder
HISTORY_FILENAME = ".dxf2frame-history.sqlite"
#: version of the tables below; a database of a newer version is refused
SCHEMA_VERSION = 1
#: how long a writer waits for another one to finish its transaction [s]
BUSY_TIMEOUT_S = 60.0

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS solves (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    drawing TEXT NOT NULL,            -- file name, in the database's folder
    series TEXT NOT NULL,             -- file stem without the revision ending
    label TEXT,                       -- revision label, NULL when none
    label_from TEXT,                  -- 'property' | 'file name' | NULL
    content_hash TEXT,                -- sha256 of the drawing file solved (NULL: unknown)
    solved_at TEXT NOT NULL,          -- ISO 8601, UTC
    status TEXT NOT NULL,             -- determinacy status
    degree INTEGER,
    mechanisms INTEGER,
    warnings TEXT NOT NULL,           -- JSON list of texts
    force_unit TEXT NOT NULL,
    length_unit TEXT NOT NULL,
    drawing_length TEXT,              -- the drawing's own length unit
    report TEXT,                      -- path of the JSON report written, if known
    tool_version TEXT
);
CREATE TABLE IF NOT EXISTS members (
    solve_id INTEGER NOT NULL REFERENCES solves(id) ON DELETE CASCADE,
    seq INTEGER NOT NULL,
    member TEXT NOT NULL, layer TEXT, handle TEXT,
    x1 REAL NOT NULL, y1 REAL NOT NULL, x2 REAL NOT NULL, y2 REAL NOT NULL,
    n REAL, v REAL, m REAL, deflection REAL, deflection_ratio REAL,
    PRIMARY KEY (solve_id, seq)
);
CREATE TABLE IF NOT EXISTS supports (
    solve_id INTEGER NOT NULL REFERENCES solves(id) ON DELETE CASCADE,
    seq INTEGER NOT NULL,
    x REAL NOT NULL, y REAL NOT NULL, fx REAL, fy REAL, m REAL,
    PRIMARY KEY (solve_id, seq)
);
CREATE INDEX IF NOT EXISTS solves_series ON solves (series, id);
"""

_REV_ENDING = re.compile(r"^(?P<series>.+?)[-_. ]+rev[-_. ]*(?P<label>[A-Za-z0-9]+)$", re.IGNORECASE)


class HistoryError(InputFileError):
    """The history database cannot be used (newer schema, not readable):
    bad input, exit 2, naming the file."""


class DamagedHistoryError(HistoryError):
    """The history database was damaged; it has been renamed aside to
    ``moved_to`` (None when even the rename failed)."""

    def __init__(self, message: str, path: Path, moved_to: Path | None) -> None:
        super().__init__(message)
        self.path, self.moved_to = path, moved_to


# -- labels and hashes ---------------------------------------------------------


def revision_of(drawing: Path | str, properties: Mapping[str, str] | None = None,
                label_property: str = "REVISION") -> tuple[str, str | None, str | None]:
    """``(series, label, where the label came from)`` of a drawing file.

    ``properties``: the drawing's custom header properties; the one named
    ``label_property`` (any case) wins over the file name.  See the module
    docstring for the file name rule.
    """
    stem = Path(drawing).stem
    m = _REV_ENDING.match(stem)
    series = m.group("series") if m else stem
    for key, value in (properties or {}).items():
        if str(key).strip().upper() == label_property.strip().upper() and str(value).strip():
            return series, str(value).strip(), "property"
    if m:
        return series, m.group("label"), "file name"
    return series, None, None


def document_properties(document: Any) -> dict[str, str]:
    """The custom header properties of an ezdxf document ({} if none)."""
    try:
        return {str(k): str(v) for k, v in document.header.custom_vars}
    except Exception:  # noqa: BLE001 - an odd header: no properties
        return {}


def content_hash(path: Path | str) -> str | None:
    """sha256 of a file's bytes (hex), None when it cannot be read."""
    h = hashlib.sha256()
    try:
        with open(path, "rb") as fh:
            for block in iter(lambda: fh.read(1 << 20), b""):
                h.update(block)
    except OSError:
        return None
    return h.hexdigest()


# -- the database --------------------------------------------------------------


def _now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="milliseconds")


def _is_damage(exc: sqlite3.DatabaseError) -> bool:
    """True for errors that mean the file is damaged (not "locked" or "busy")."""
    name = getattr(exc, "sqlite_errorname", "")
    if name in ("SQLITE_CORRUPT", "SQLITE_NOTADB") or name.startswith(("SQLITE_CORRUPT_", "SQLITE_IOERR_SHORT_READ")):
        return True
    text = str(exc).lower()
    return "malformed" in text or "not a database" in text


def set_aside(path: Path, why: str = "damaged") -> Path | None:
    """Rename a damaged database (and its ``-wal`` / ``-shm`` files) to
    ``<name without .sqlite>.<why>-<UTC time>-<pid>.sqlite`` beside it; returns
    the new path, or None when it could not be renamed (another process
    already did, or the folder is read-only)."""
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%Y%m%dT%H%M%S.%fZ")
    target = path.with_name(f"{path.stem}.{why}-{stamp}-{os.getpid()}{path.suffix}")
    try:
        os.rename(path, target)
    except OSError:
        return None
    for extra in ("-wal", "-shm"):
        with contextlib.suppress(OSError):
            os.rename(f"{path}{extra}", f"{target}{extra}")
    return target


@dataclass
class Revision:
    """One recorded solve, as read back (values in ``units``)."""

    id: int
    drawing: str
    series: str
    label: str | None
    label_from: str | None
    content_hash: str | None
    solved_at: str
    status: str
    degree: int | None
    mechanisms: int | None
    warnings: list[str]
    units: dict[str, str]
    report: str | None
    members: list[dict] = field(default_factory=list)
    supports: list[dict] = field(default_factory=list)

    @property
    def name(self) -> str:
        """How the listing names it: ``B (#12)`` or ``#12``."""
        return f"{self.label} (#{self.id})" if self.label else f"#{self.id}"


class History:
    """The history database of one folder.

    ``History(folder)`` opens (creating when ``create``) the database in
    ``folder``.  Use as a context manager; :meth:`record` writes one solve
    in one transaction; :meth:`revisions` reads them back.

    Raises
    ------
    HistoryError  a newer schema version; a folder that does not exist
    DamagedHistoryError  the file is damaged (it has been set aside)
    """

    def __init__(self, folder: Path | str, *, create: bool = True, check: bool = False) -> None:
        self.folder = Path(folder)
        self.path = self.folder / HISTORY_FILENAME
        if not create and not self.path.exists():
            raise HistoryError(f"{self.path}: no revision history here (solve with --history to start one, "
                               "or rebuild it from the saved reports with 'dxf2frame history FOLDER --rebuild')")
        self._con: sqlite3.Connection | None = None
        with self._guard():
            self._con = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
            self._con.execute("PRAGMA foreign_keys = ON")
            mode = _wal(self._con)
            if mode and str(mode[0]).lower() != "wal":
                raise HistoryError(f"{self.path}: the database cannot use a write-ahead log here "
                                   f"(journal mode {mode[0]}); keep the history on a local disk")
            self._con.execute("PRAGMA synchronous = NORMAL")
            if check:
                bad = [r[0] for r in self._con.execute("PRAGMA quick_check").fetchall()]
                if bad != ["ok"]:
                    raise sqlite3.DatabaseError(f"database disk image is malformed ({'; '.join(bad[:3])})")
            self._ensure_schema()

    # -- plumbing ---------------------------------------------------------
    @contextlib.contextmanager
    def _guard(self) -> Iterator[None]:
        """Turn sqlite errors into errors naming the file; set a damaged file aside."""
        try:
            yield
        except HistoryError:
            self.close()
            raise
        except sqlite3.DatabaseError as exc:
            self.close()
            if _is_damage(exc):
                moved = set_aside(self.path)
                where = (f"it was set aside as {moved.name}" if moved is not None
                         else "it could not be renamed aside; move it away by hand")
                raise DamagedHistoryError(
                    f"{self.path}: the revision history is damaged ({exc}); {where}. Rebuild it from the "
                    f"saved reports with 'dxf2frame history {self.folder} --rebuild'", self.path, moved) from None
            raise HistoryError(f"{self.path}: cannot use the revision history ({exc})") from None

    def _ensure_schema(self) -> None:
        con = self._con
        assert con is not None
        have = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        if "meta" in have:
            row = con.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
            version = int(row[0]) if row and str(row[0]).isdigit() else None
            if version is None:
                raise sqlite3.DatabaseError("database disk image is malformed (no schema version in meta)")
            if version > SCHEMA_VERSION:
                raise HistoryError(
                    f"{self.path}: the revision history has schema version {version}, newer than this "
                    f"dxf2frame reads ({SCHEMA_VERSION}); update dxf2frame, or move the file away to start "
                    "a new history")
            return
        if have - {"sqlite_sequence"}:
            raise HistoryError(f"{self.path}: a database that is not a dxf2frame revision history "
                               f"(tables {', '.join(sorted(have))}); move it away")
        con.execute("BEGIN IMMEDIATE")
        try:
            for stmt in _SCHEMA.split(";"):
                if stmt.strip():
                    con.execute(stmt)
            con.execute("INSERT OR IGNORE INTO meta (key, value) VALUES ('schema_version', ?)",
                        (str(SCHEMA_VERSION),))
            con.execute("COMMIT")
        except BaseException:
            con.execute("ROLLBACK")
            raise

    def close(self) -> None:
        if self._con is not None:
            with contextlib.suppress(Exception):
                self._con.close()
            self._con = None

    def __enter__(self) -> "History":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # -- writing ----------------------------------------------------------
    def record(self, report: Mapping, *, drawing: str, series: str, label: str | None,
               label_from: str | None, digest: str | None, solved_at: str | None = None,
               report_path: str | None = None) -> int:
        """Record one solve from its finished report (schema 1, plain or
        with member :class:`~dxf2frame.report.Table` lists) in one
        transaction; returns the new solve id."""
        row, members, supports = _rows_of_report(report)
        con = self._con
        assert con is not None
        with self._guard():
            con.execute("BEGIN IMMEDIATE")
            try:
                cur = con.execute(
                    "INSERT INTO solves (drawing, series, label, label_from, content_hash, solved_at, status, degree,"
                    " mechanisms, warnings, force_unit, length_unit, drawing_length, report, tool_version)"
                    " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                    (drawing, series, label, label_from, digest, solved_at or _now(), row["status"], row["degree"],
                     row["mechanisms"], json.dumps(row["warnings"], ensure_ascii=False), row["force_unit"],
                     row["length_unit"], row["drawing_length"], report_path, row["tool_version"]))
                sid = int(cur.lastrowid)
                con.executemany("INSERT INTO members VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                                [(sid, k, *m) for k, m in enumerate(members)])
                con.executemany("INSERT INTO supports VALUES (?, ?, ?, ?, ?, ?, ?)",
                                [(sid, k, *s) for k, s in enumerate(supports)])
                con.execute("COMMIT")
            except BaseException:
                with contextlib.suppress(sqlite3.Error):
                    con.execute("ROLLBACK")
                raise
        return sid

    # -- reading ----------------------------------------------------------
    def revisions(self, series: str | None = None) -> list[Revision]:
        """Every recorded solve (of ``series``, or all), in revision order:
        by series, then unlabelled solves by id, then labels in natural
        order (``2`` before ``10``, ``Z`` before ``AA``), the same label by id."""
        con = self._con
        assert con is not None
        with self._guard():
            con.execute("BEGIN")  # one snapshot: a solve being written is not half seen
            try:
                q = "SELECT * FROM solves" + (" WHERE series = ?" if series is not None else "")
                con.row_factory = sqlite3.Row
                rows = con.execute(q, (series,) if series is not None else ()).fetchall()
                members: dict[int, list[dict]] = {}
                for r in con.execute("SELECT * FROM members ORDER BY solve_id, seq"):
                    members.setdefault(r["solve_id"], []).append(dict(r))
                supports: dict[int, list[dict]] = {}
                for r in con.execute("SELECT * FROM supports ORDER BY solve_id, seq"):
                    supports.setdefault(r["solve_id"], []).append(dict(r))
            finally:
                con.row_factory = None
                con.execute("COMMIT")
        out = [Revision(
            r["id"], r["drawing"], r["series"], r["label"], r["label_from"], r["content_hash"], r["solved_at"],
            r["status"], r["degree"], r["mechanisms"], list(json.loads(r["warnings"] or "[]")),
            {"force": r["force_unit"], "length": r["length_unit"], "drawing_length": r["drawing_length"]},
            r["report"], members.get(r["id"], []), supports.get(r["id"], [])) for r in rows]
        return sorted(out, key=_order_key)

    def count(self) -> int:
        """Number of recorded solves."""
        assert self._con is not None
        with self._guard():
            return int(self._con.execute("SELECT COUNT(*) FROM solves").fetchone()[0])


def _wal(con: sqlite3.Connection, attempts: int = 100) -> tuple | None:
    """Switch to the write-ahead log.  Two processes creating the database
    at once may find it locked for a moment: wait and try again (the busy
    timeout does not cover a journal mode change)."""
    for k in range(attempts):
        try:
            return con.execute("PRAGMA journal_mode = WAL").fetchone()
        except sqlite3.OperationalError as exc:
            if "locked" not in str(exc).lower() or k == attempts - 1:
                raise
            time.sleep(0.05)
    return None


def _natural(label: str) -> tuple:
    parts = re.findall(r"\d+|\D+", label.upper())
    return tuple((0, int(p), "") if p.isdigit() else (1, len(p), p) for p in parts)


def _order_key(r: Revision) -> tuple:
    return (r.series, r.label is not None, _natural(r.label) if r.label else (), r.id)


# -- from a report and back ------------------------------------------------------


def _num(v: Any) -> float | None:
    if v is None:
        return None
    f = float(v)
    return f if math.isfinite(f) else None


def _service_ratios(report: Mapping) -> dict[str, float]:
    """Smallest span/deflection ratio per member at service level (the ASD
    combinations, else the load cases)."""
    results = list(report.get("results") or [])
    service = [r for r in results if r.get("kind") == "combination" and r.get("family") == "ASD"] or \
        [r for r in results if r.get("kind") == "case"]
    out: dict[str, float] = {}
    for res in service:
        for m in res.get("members") or []:
            d = _num(m.get("deflection_ratio"))
            if d is not None:
                out[m["id"]] = min(out.get(m["id"], d), d)
    return out


def _rows_of_report(report: Mapping) -> tuple[dict, list[tuple], list[tuple]]:
    """The solve row, member rows and support rows of a finished report."""
    det = report.get("determinacy") or {}
    units = report.get("units") or {}
    row = {"status": str(det.get("status", "")), "degree": det.get("degree"), "mechanisms": det.get("mechanisms"),
           "warnings": [str(w) for w in report.get("warnings") or []], "force_unit": str(units.get("force", "")),
           "length_unit": str(units.get("length", "")), "drawing_length": units.get("drawing_length"),
           "tool_version": report.get("tool_version")}
    refs = member_refs(report)
    gov = member_governing(report)
    ratios = _service_ratios(report)
    members = []
    for r in refs:
        g = gov.get(r.id, {})
        members.append((r.id, r.layer, r.handle, r.start[0], r.start[1], r.end[0], r.end[1], _num(g.get("N")),
                        _num(g.get("V")), _num(g.get("M")), _num(g.get("deflection")), ratios.get(r.id)))
    pts = [p for r in refs for p in (r.start, r.end)]
    if pts:
        xs, ys = [p[0] for p in pts], [p[1] for p in pts]
        extent = max(max(xs) - min(xs), max(ys) - min(ys))
    else:
        extent = 0.0
    where, sgov = support_governing(report, TOLERANCE_FRACTION * extent if extent > 0 else 1e-9)
    supports = [(p[0], p[1], s["fx"], s["fy"], s["m"]) for p, s in zip(where, sgov)]
    return row, members, supports


def revision_report(rev: Revision) -> dict:
    """A report dict (schema 1) of a recorded revision that the comparison
    reads: one result of kind ``"combination"`` named ``"governing"`` whose
    members and reactions carry the recorded governing magnitudes, so that
    the comparison finds the same governing values and the same matching
    as on the full report."""
    members = [{"id": m["member"], "layer": m["layer"] or "", "handle": m["handle"] or "",
                "start": [m["x1"], m["y1"]], "end": [m["x2"], m["y2"]],
                "n_min": None, "n_max": m["n"], "v_min": None, "v_max": m["v"],
                "m_min": None, "m_max": m["m"], "deflection_max": m["deflection"],
                "deflection_ratio": m["deflection_ratio"]} for m in rev.members]
    reactions = [{"x": s["x"], "y": s["y"], "fx": s["fx"], "fy": s["fy"], "m": s["m"]} for s in rev.supports]
    results = [{"name": "governing", "kind": "combination", "reactions": reactions, "members": members}] \
        if rev.status != "unstable" else []
    units = {k: v for k, v in rev.units.items() if v}
    return {"schema": 1, "source": f"{rev.drawing} {rev.name}", "units": units,
            "determinacy": {"status": rev.status, "degree": rev.degree, "mechanisms": rev.mechanisms},
            "warnings": list(rev.warnings), "results": results}


def record_report(report: Mapping, drawing: Path, *, digest: str | None, properties: Mapping[str, str] | None = None,
                  label_property: str = "REVISION", report_path: Path | None = None,
                  solved_at: str | None = None) -> int:
    """Record a finished report of ``drawing`` in the history of the
    drawing's folder (created when missing); returns the solve id.

    Raises :class:`HistoryError` (and :class:`DamagedHistoryError`, the
    damaged file set aside) when the history cannot be used; ``OSError``
    or ``sqlite3.Error`` for a folder that cannot be written."""
    drawing = Path(drawing)
    series, label, label_from = revision_of(drawing, properties, label_property)
    with History(drawing.parent, check=True) as hist:
        return hist.record(report, drawing=drawing.name, series=series, label=label, label_from=label_from,
                           digest=digest, solved_at=solved_at,
                           report_path=str(report_path) if report_path is not None else None)
