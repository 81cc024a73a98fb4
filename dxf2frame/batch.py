"""Many drawings at once: a process pool (or a Dask cluster), per-file
progress, and a summary table.  One bad drawing never stops the batch.
"""
from __future__ import annotations

import glob
import os
import sys
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from pathlib import Path
from typing import Callable, Iterable

from .errors import InputFileError, one_line
from .pipeline import (EXIT_BAD_INPUT, EXIT_CANNOT_WRITE, EXIT_INTERNAL, EXIT_OK, EXIT_UNSTABLE, FileOutcome,
                       SolveRequest, output_paths, solve_file)

__all__ = ["expand_inputs", "run_batch", "solve_many", "summary_table", "batch_exit_code"]


def expand_inputs(patterns: Iterable[str]) -> list[Path]:
    """Files named or matched by glob patterns, in order, without repeats.
    A name that matches nothing is kept, so that it is reported as missing."""
    seen: dict[Path, None] = {}
    for pat in patterns:
        hits = sorted(glob.glob(pat)) if glob.has_magic(pat) else [pat]
        p0 = Path(pat)
        if not glob.has_magic(pat) and p0.is_dir():
            hits = sorted(str(p) for p in p0.glob("*.dxf"))
        for h in hits:
            seen.setdefault(Path(h), None)
    return list(seen)


def _default_workers() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not Linux
        return os.cpu_count() or 1


def _check_output_clash(files: list[Path], req: SolveRequest) -> None:
    """Two inputs whose results would land on the same path (same name in
    different folders, one --out folder) would overwrite each other:
    refuse before solving anything."""
    seen: dict[Path, Path] = {}
    for f in files:
        target = output_paths(Path(f), req)["drawing"].resolve()
        if target in seen:
            raise InputFileError(
                f"{seen[target]} and {f} would both write {target.name}; "
                "give them different names or leave out --out (results then go beside each drawing)")
        seen[target] = Path(f)


def _warm_up(png: bool) -> None:
    """Import the writers (the preview only when PNGs are asked for) and
    build the unit registry once in the parent, so forked workers inherit
    them instead of each paying for them."""
    from . import report, writer  # noqa: F401
    from .units import registry

    if png:
        from . import preview  # noqa: F401

    registry()


def solve_many(
    files: list[Path],
    req: SolveRequest,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    on_done: Callable[[FileOutcome, int, int], None] | None = None,
) -> list[FileOutcome]:
    """Solve every file; outcomes come back in the order of ``files``.

    ``workers``: processes (default: the cores available; 1 runs in this
    process).  ``scheduler``: address of a Dask distributed scheduler, or
    ``"local"`` for an in-process Dask cluster (needs the ``dask`` extra).
    ``on_done(outcome, done_count, total)`` is called as each file finishes.
    """
    n = len(files)
    _check_output_clash(files, req)
    results: dict[int, FileOutcome] = {}
    if scheduler:
        from .distributed import solve_on_dask

        for k, (i, out) in enumerate(solve_on_dask(files, req, scheduler), start=1):
            results[i] = out
            if on_done:
                on_done(out, k, n)
        return [results[i] for i in range(n)]

    workers = max(1, workers if workers is not None else _default_workers())
    if workers == 1 or n == 1:
        for k, f in enumerate(files, start=1):
            results[k - 1] = out = solve_file(f, req)
            if on_done:
                on_done(out, k, n)
    else:
        _warm_up(req.png)
        with ProcessPoolExecutor(max_workers=min(workers, n)) as pool:
            futs = {pool.submit(solve_file, f, req): i for i, f in enumerate(files)}
            for k, fut in enumerate(as_completed(futs), start=1):
                i = futs[fut]
                try:
                    out = fut.result()
                except Exception as exc:  # noqa: BLE001 - a worker died
                    out = FileOutcome(str(files[i]), "internal error", EXIT_INTERNAL, f"{type(exc).__name__}: {exc}")
                results[i] = out
                if on_done:
                    on_done(out, k, n)
    return [results[i] for i in range(n)]


def batch_exit_code(outcomes: list[FileOutcome]) -> int:
    """The worst status of the batch: 2 if any drawing was bad input, else 4
    if any output could not be written, else 1 if any internal error (a
    killed worker included), else 3 if any frame was unstable, else 0."""
    codes = {o.exit_code for o in outcomes}
    for code in (EXIT_BAD_INPUT, EXIT_CANNOT_WRITE, EXIT_INTERNAL, EXIT_UNSTABLE):
        if code in codes:
            return code
    return EXIT_OK


def _with_source(o: FileOutcome) -> str:
    """The outcome's message prefixed with its file, unless it names it already."""
    msg = one_line(o.message)
    return msg if msg.startswith(str(o.source)) else f"{o.source}: {msg}"


def _fmt(v: float | None, digits: int = 4) -> str:
    return "-" if v is None else f"{v:.{digits}g}"


def summary_table(outcomes: list[FileOutcome]) -> str:
    """Plain-text table: file, status, determinacy, governing |M|, |V|, |N|,
    worst span/deflection, time."""
    head = ["file", "status", "determinacy", "max |M|", "max |V|", "max |N|", "span/defl", "time s"]
    rows = []
    for o in outcomes:
        u = o.units
        det = o.determinacy + (f" ({o.degree})" if o.degree else "") if o.determinacy else "-"
        rows.append([
            Path(o.source).name, o.status, det,
            _fmt(o.max_m) + (f" {u[0]}*{u[1]}" if u and o.max_m is not None else ""),
            _fmt(o.max_v) + (f" {u[0]}" if u and o.max_v is not None else ""),
            _fmt(o.max_n) + (f" {u[0]}" if u and o.max_n is not None else ""),
            "-" if o.worst_deflection_ratio is None else f"L/{o.worst_deflection_ratio:.0f}",
            f"{o.seconds:.2f}",
        ])
    widths = [max(len(r[i]) for r in [head] + rows) for i in range(len(head))]
    line = lambda r: "  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip()  # noqa: E731
    return "\n".join([line(head), line(["-" * w for w in widths])] + [line(r) for r in rows])


def run_batch(files: list[Path], req: SolveRequest, *, workers: int | None = None,
              scheduler: str | None = None, stream=None, debug: bool = False) -> int:
    """Solve, print progress and messages, print the summary; return the exit status.

    ``debug``: print the traceback of each internal error after its line."""
    stream = stream or sys.stdout
    err = sys.stderr
    single = len(files) == 1
    t0 = time.perf_counter()

    def progress(out: FileOutcome, k: int, n: int) -> None:
        if single:
            return
        bar = "#" * int(20 * k / n)
        print(f"[{bar:<20}] {k}/{n}  {Path(out.source).name}: {out.status}", file=err, flush=True)

    outcomes = solve_many(files, req, workers=workers, scheduler=scheduler, on_done=progress)
    for o in outcomes:
        where = _with_source(o)
        if o.status in ("bad input", "cannot write"):
            print(f"dxf2frame: error: {where}", file=err)
        elif o.status == "internal error":
            print(f"dxf2frame: internal error: {where} (please report it)", file=err)
            if debug and o.traceback:
                print(o.traceback.rstrip("\n"), file=err)
        elif o.status == "unstable":
            print(f"dxf2frame: {o.source}: the frame is unstable (a mechanism); no results. {one_line(o.message)}",
                  file=err)
        if single and o.status in ("ok", "unstable"):
            for w in o.warnings:
                print(f"dxf2frame: warning: {one_line(w)}", file=err)
    if single:
        o = outcomes[0]
        if o.outputs:
            print("\n".join(f"wrote {p}" for p in o.outputs), file=stream)
        if o.status == "ok":
            print(summary_table(outcomes), file=stream)
    else:
        print(summary_table(outcomes), file=stream)
        print(f"{len(outcomes)} drawings in {time.perf_counter() - t0:.1f} s", file=stream)
    return batch_exit_code(outcomes)
