"""The live loop: re-solve a drawing each time it is saved.

A CAD program saves a drawing in several steps (write a temporary file,
rename it over the old one, touch it again, ...).  :class:`Debouncer`
collapses such a burst into one solve: a drawing is solved once no event
has arrived for it for ``settle`` seconds *and* its size and modification
time did not change over that interval.  File events come from
``watchdog`` (inotify, FSEvents, ReadDirectoryChangesW, or polling where
none exists); the solve runs in the calling thread, so the imports, the
unit registry and matplotlib's font cache stay warm between solves.

Every solve goes through :func:`dxf2frame.pipeline.solve_file`: the result
drawing, report and preview are staged and swapped in as one set, so a CAD
program reloading the result (or holding it as an external reference)
never sees half a file, and a broken save leaves the previous results in
place (the drawing gets its one-line error instead).

>>> clock = iter([0.0, 0.1, 0.5, 0.9]).__next__
>>> d = Debouncer(settle=0.3, clock=clock, stat=lambda p: (100, 1))
>>> d.note(Path("a.dxf"))            # t = 0.0
>>> d.note(Path("a.dxf"))            # t = 0.1: a second step of the same save
>>> d.due()                          # t = 0.5: quiet for 0.4 s, size and time unchanged
[PosixPath('a.dxf')]
>>> d.due()                          # t = 0.9: nothing left
[]
"""
from __future__ import annotations

import queue
import sys
import threading
import time
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from typing import Callable, Iterable, TextIO

from .errors import InputFileError, one_line
from .numbers import summary_value
from .pipeline import FileOutcome, SolveRequest, solve_file
from .staging import STAGING_PREFIX

__all__ = ["Debouncer", "Watch", "watch_request", "solve_line", "is_own_output", "describe_targets", "DEFAULT_SETTLE"]

#: seconds a drawing must stay quiet (no event, same size and time) before it is solved
DEFAULT_SETTLE = 0.3

#: relative change of a governing value below which the line says it did not change
_SAME = 5e-4


def _file_stamp(path: Path) -> tuple[int, int] | None:
    """(size, mtime in ns) of ``path``, None when it does not exist (yet)."""
    try:
        st = path.stat()
    except OSError:
        return None
    return st.st_size, st.st_mtime_ns


class Debouncer:
    """Collapse the file events of one save into one solve.

    ``note(path)`` records an event; ``due()`` returns the paths that have
    been quiet for ``settle`` seconds and whose (size, mtime) is the same as
    at the last look; a path whose stamp changed meanwhile waits another
    ``settle`` seconds, one that vanished (mid-rename) is dropped until its
    next event.  ``clock`` (seconds) and ``stat`` are injectable for tests.
    """

    def __init__(self, settle: float = DEFAULT_SETTLE, *, clock: Callable[[], float] = time.monotonic,
                 stat: Callable[[Path], object] = _file_stamp) -> None:
        self.settle = float(settle)
        self._clock, self._stat = clock, stat
        self._pending: dict[Path, tuple[float, object]] = {}

    def note(self, path: Path) -> None:
        """An event for ``path``: (re)start its quiet interval."""
        self._pending[path] = (self._clock(), self._stat(path))

    def due(self) -> list[Path]:
        """The paths ready to solve now (removed from the pending set), in the order noted."""
        now = self._clock()
        ready = []
        for path, (since, stamp) in list(self._pending.items()):
            if now - since < self.settle:
                continue
            current = self._stat(path)
            if current is None:
                del self._pending[path]           # gone: a rename will bring it back
            elif current != stamp:
                self._pending[path] = (now, current)  # still being written
            else:
                del self._pending[path]
                ready.append(path)
        return ready

    def wait_hint(self) -> float:
        """Seconds until the next pending path may be due (``settle`` when none is pending)."""
        if not self._pending:
            return self.settle
        now = self._clock()
        return max(0.0, min(since + self.settle - now for since, _ in self._pending.values()))

    def __bool__(self) -> bool:
        return bool(self._pending)


def is_own_output(path: Path) -> bool:
    """True for files the tool (or an atomic save) writes: result drawings,
    hidden temporary and staging files, CAD back-up and lock files."""
    name = path.name
    low = name.lower()
    return (name.startswith(".") or name.startswith("~") or low.endswith("-results.dxf")
            or low.endswith("-changes.dxf") or ".tmp" in low or name.startswith(STAGING_PREFIX)
            or any(part.startswith(STAGING_PREFIX) for part in path.parts))


def watch_request(args) -> SolveRequest:
    """The :class:`SolveRequest` of ``watch`` from parsed arguments (one
    place, so that switches of the solve, e.g. recording a history, are added
    here).  ``--out`` is always a folder in watch.  The revision history is
    recorded by default (``--no-history`` turns it off): a drafter saving
    revision after revision gets their trend for free."""
    return SolveRequest(
        out=args.out, units=args.units, show=args.show, png=not args.no_png,
        settings_path=args.settings, length_unit=args.length_unit, single=False, strict=args.strict,
        history=getattr(args, "history", True),
    )


_GOVERNING = (("max_m", "|M|"), ("max_v", "|V|"), ("max_n", "|N|"))


def _change(previous: FileOutcome | None, now: FileOutcome) -> str:
    """What changed since the previous good solve of the same drawing."""
    if previous is None:
        return "first solve"
    parts = []
    for key, label in _GOVERNING:
        a, b = getattr(previous, key), getattr(now, key)
        if a is None or b is None:
            if (a is None) != (b is None):
                parts.append(f"{label} {'gone' if b is None else 'new'}")
            continue
        rel = (b - a) / abs(a) if a else (0.0 if b == a else float("inf"))
        if abs(rel) >= _SAME:
            parts.append(f"{label} {rel:+.1%}" if rel != float("inf") else f"{label} was 0")
    a, b = previous.worst_deflection_ratio, now.worst_deflection_ratio
    if a is not None and b is not None and abs(b - a) >= _SAME * abs(a):
        parts.append(f"L/{a:.0f} -> L/{b:.0f}")
    if previous.determinacy != now.determinacy or previous.degree != now.degree:
        parts.append(f"was {previous.determinacy}" + (f" ({previous.degree})" if previous.degree else ""))
    return "change " + ", ".join(parts) if parts else "no change"


def solve_line(o: FileOutcome, previous: FileOutcome | None, *, at: datetime | None = None) -> str:
    """One console line for one solve: time, file, status, warnings,
    governing values and the change since ``previous`` (the last good solve
    of the same drawing)."""
    stamp = (at or datetime.now()).strftime("%H:%M:%S")
    name = Path(o.source).name
    if o.status == "ok":
        u = o.units or ("", "")
        det = o.determinacy + (f" ({o.degree})" if o.degree else "")
        values = [f"|M| {summary_value(o.max_m)} {u[0]}*{u[1]}" if o.max_m is not None else "",
                  f"|V| {summary_value(o.max_v)} {u[0]}" if o.max_v is not None else "",
                  f"|N| {summary_value(o.max_n)} {u[0]}" if o.max_n is not None else "",
                  f"L/{o.worst_deflection_ratio:.0f}" if o.worst_deflection_ratio is not None else ""]
        body = "  ".join([det, f"{len(o.warnings)} warning(s)"] + [v for v in values if v]
                         + [_change(previous, o)])
    elif o.status == "unstable":
        body = f"{len(o.warnings)} warning(s)  mechanism drawing and report written: {one_line(o.message)}"
    else:
        kept = "previous results kept" if previous is not None else "nothing written"
        body = f"{one_line(o.message)} ({kept})"
    return f"{stamp}  {name}  {o.status}  {body}  [{o.seconds:.2f} s]"


@dataclass
class Watch:
    """Watch drawings and re-solve each on save.

    ``targets``: folders (every ``*.dxf`` directly in them, added later
    too) and/or single drawings.  ``request``: the solve options
    (:func:`watch_request`).  ``stream``: where the lines go.  ``settle``:
    the debounce interval [s].  ``initial``: solve every drawing found at
    start once.
    """

    targets: list[Path]
    request: SolveRequest
    stream: TextIO = field(default_factory=lambda: sys.stdout)
    settle: float = DEFAULT_SETTLE
    initial: bool = True
    solves: int = 0
    last: dict[Path, FileOutcome] = field(default_factory=dict)   # last outcome per drawing
    good: dict[Path, FileOutcome] = field(default_factory=dict)   # last good outcome per drawing

    def __post_init__(self) -> None:
        self.targets = [Path(t).absolute() for t in self.targets]
        for t in self.targets:
            if not t.exists():
                raise InputFileError(f"{t}: no such file or folder to watch")
            if t.is_file() and t.suffix.lower() != ".dxf":
                raise InputFileError(f"{t}: not a .dxf drawing")
        self._folders = {t for t in self.targets if t.is_dir()}
        self._files = {t for t in self.targets if t.is_file()}
        self._events: "queue.Queue[Path]" = queue.Queue()

    # -- which paths count --------------------------------------------------------

    def wanted(self, path: Path) -> bool:
        """A drawing this watch solves: a ``.dxf`` named on the command line,
        or directly in a watched folder, and not one of our own outputs."""
        path = Path(path).absolute()
        if path.suffix.lower() != ".dxf" or is_own_output(path):
            return False
        if path in self._files:
            return True
        # the default output folder solved/ is below the watched folder (not
        # watched); in an --out folder that is watched too, the result
        # drawings are recognised by name (is_own_output)
        return path.parent in self._folders

    def drawings(self) -> list[Path]:
        """The drawings there now, sorted."""
        found = set(self._files)
        for folder in self._folders:
            found.update(p.absolute() for p in folder.glob("*") if p.is_file() and self.wanted(p))
        return sorted(found)

    # -- the loop ---------------------------------------------------------------

    def solve(self, path: Path) -> FileOutcome:
        """Solve one drawing now and print its line."""
        outcome = solve_file(path, self.request)
        self.solves += 1
        previous = self.good.get(path)
        print(solve_line(outcome, previous), file=self.stream, flush=True)
        old = set(self.last[path].warnings) if path in self.last else set()
        for w in outcome.warnings:
            if w not in old:       # a new warning is said once in full; the count stays in the line
                print(f"    warning: {one_line(w)}", file=self.stream, flush=True)
        self.last[path] = outcome
        if outcome.status in ("ok", "unstable"):
            self.good[path] = outcome
        return outcome

    def _on_event(self, path: str | bytes) -> None:
        p = Path(path.decode() if isinstance(path, bytes) else path)
        if self.wanted(p):
            self._events.put(p.absolute())

    def run(self, stop: threading.Event | None = None, *, ready: threading.Event | None = None) -> int:
        """Watch until ``stop`` is set (or Ctrl-C / SIGTERM, which propagate
        as ``KeyboardInterrupt`` after the observer is stopped).  ``ready``
        is set once the observer is running and the drawings found at start
        are solved.  Returns the number of solves."""
        from watchdog.events import FileSystemEventHandler
        from watchdog.observers import Observer

        _warm_up(self.request.png)
        watch = self

        class Handler(FileSystemEventHandler):
            def on_any_event(self, event) -> None:
                if event.is_directory or event.event_type in ("opened", "closed_no_write", "deleted"):
                    return
                watch._on_event(event.src_path)
                dest = getattr(event, "dest_path", "")
                if dest:
                    watch._on_event(dest)

        observer = Observer()
        handler = Handler()
        for folder in sorted(self._folders | {f.parent for f in self._files}):
            observer.schedule(handler, str(folder), recursive=False)
        observer.start()
        try:
            debounce = Debouncer(self.settle)
            if self.initial:
                for p in self.drawings():
                    self.solve(p)
            if ready is not None:
                ready.set()
            stop = stop or threading.Event()
            while not stop.is_set():
                try:
                    debounce.note(self._events.get(timeout=min(0.1, debounce.wait_hint() + 0.01)))
                    while True:  # drain the burst
                        debounce.note(self._events.get_nowait())
                except queue.Empty:
                    pass
                for p in debounce.due():
                    self.solve(p)
        finally:
            observer.stop()
            observer.join(timeout=5)
        return self.solves


def _warm_up(png: bool) -> None:
    """Import the writers (the preview too when PNGs are asked for) and build
    the unit registry before the first save, so no solve pays for them."""
    from .draw import writer  # noqa: F401
    from .report import report  # noqa: F401
    from .units import registry

    if png:
        from .draw import preview  # noqa: F401
    registry()


def describe_targets(targets: Iterable[Path], req: SolveRequest) -> str:
    """The first line of ``watch``: what is watched and where results go."""
    names = ", ".join(str(t) for t in targets)
    where = str(req.out) if req.out is not None else "a 'solved' folder beside each drawing"
    return f"watching {names}; results go to {where}; Ctrl-C stops"
