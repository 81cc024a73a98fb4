"""Many drawings at once: a process pool (or a Dask cluster), per-file
progress, and a summary table.  One bad drawing never stops the batch.
"""
from __future__ import annotations

import contextlib
import glob
import os
import signal
import sys
import time
from collections import deque
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from pathlib import Path
from typing import Callable, Iterable

from .console import batch_progress, render_table
from .errors import InputFileError, one_line
from .numbers import summary_value
from .pipeline import (EXIT_BAD_INPUT, EXIT_CANNOT_WRITE, EXIT_INTERNAL, EXIT_OK, EXIT_UNSTABLE, FileOutcome,
                       SolveRequest, output_paths, solve_file)
from .staging import Terminated, raise_terminated, sweep_stale

__all__ = ["expand_inputs", "run_batch", "solve_many", "summary_table", "batch_exit_code", "BatchInterrupted"]


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
    from .report import report
    from .draw import writer  # noqa: F401
    from .units import registry

    if png:
        from .draw import preview  # noqa: F401

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
    Every diagram gets one scale for all the drawings
    (:func:`with_shared_scales`) unless the settings fix it.

    A pool worker killed from outside does not stop the batch (see
    :func:`_solve_in_pools`).  Ctrl-C or SIGTERM cancels the work not yet
    started and stops the running workers at once (their staging folders
    cleaned), then raises :class:`BatchInterrupted` carrying the outcomes
    of the drawings that finished.
    """
    n = len(files)
    _check_output_clash(files, req)
    workers = max(1, workers if workers is not None else _default_workers())
    if workers > 1 and n > 1 and not scheduler:
        _warm_up(req.png)
    try:
        req = with_shared_scales(files, req, 1 if scheduler else workers)
    except KeyboardInterrupt as exc:  # Ctrl-C or SIGTERM during the first pass: nothing solved yet
        raise BatchInterrupted([], n, getattr(exc, "exit_code", 130)) from None
    results: dict[int, FileOutcome] = {}
    if scheduler:
        from .distributed import solve_on_dask

        for k, (i, out) in enumerate(solve_on_dask(files, req, scheduler), start=1):
            results[i] = out
            if on_done:
                on_done(out, k, n)
        return [results[i] for i in range(n)]

    def report(i: int, out: FileOutcome) -> None:
        results[i] = out
        if on_done:
            on_done(out, len(results), n)

    try:
        if workers == 1 or n == 1:
            for i, f in enumerate(files):
                report(i, solve_file(f, req))
        else:
            _solve_in_pools(files, req, min(workers, n), report)
    except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM as staging.Terminated
        raise BatchInterrupted([results[i] for i in sorted(results)], n,
                               getattr(exc, "exit_code", 130)) from None
    return [results[i] for i in range(n)]


def with_shared_scales(files: list[Path], req: SolveRequest, workers: int = 1) -> SolveRequest:
    """``req`` with one scale per diagram for all ``files`` (the largest of
    the drawings' own, rounded up to a round number in SI units per
    metre), so revisions drawn in one batch compare by eye.  A first pass
    reads and solves each drawing (nothing written), in a pool of
    ``workers`` processes when more than one; drawings that fail here are
    left to the solve to report.  One file, or scales already given:
    ``req`` unchanged."""
    from dataclasses import replace

    from .draw.writer import nice_up

    if len(files) < 2 or req.scales is not None:
        return req
    shared: dict[str, float] = {}
    for got in _first_pass(files, req, workers):
        for key, v in got.items():
            shared[key] = max(shared.get(key, 0.0), v)
    return replace(req, scales={k: nice_up(v) for k, v in shared.items()})


def _first_pass(files: list[Path], req: SolveRequest, workers: int) -> list[dict[str, float]]:
    """The natural diagram scales of each drawing (``{}`` for one that does
    not solve), in a process pool when ``workers`` > 1.  A pool that breaks
    (a worker killed from outside) leaves its drawings to a pass in this
    process; Ctrl-C stops the pool and propagates."""
    workers = min(workers, len(files))
    if workers <= 1:
        return [_natural_scales(f, req) for f in files]
    pool = ProcessPoolExecutor(max_workers=workers, initializer=_worker_init)
    try:
        futures = [pool.submit(_natural_scales, f, req) for f in files]
        got: list[dict[str, float]] = []
        for f, fut in zip(files, futures):
            try:
                got.append(fut.result())
            except Exception:  # noqa: BLE001 - a broken pool: this drawing here, the solve reports it
                got.append(_natural_scales(f, req))
        return got
    except BaseException:
        _stop_pool(pool)
        raise
    finally:
        pool.shutdown(wait=True)


def _natural_scales(source: Path, req: SolveRequest) -> dict[str, float]:
    """The diagram scales ``source`` would get on its own (``{}`` when it
    does not read or solve: the solve itself reports what is wrong)."""
    from .draw.writer import natural_scales
    from .pipeline import analyse
    from .settings import load_settings

    try:
        settings = load_settings(req.settings_path, source)
        an = analyse(Path(source), settings, length_unit=req.length_unit)
        if not an.stable:
            return {}
        return natural_scales(an.model, an.results, req.show or settings.combinations_draw)
    except Exception:  # noqa: BLE001 - the solve itself reports what is wrong with a drawing
        return {}


class BatchInterrupted(KeyboardInterrupt):
    """Ctrl-C (or SIGTERM) during a batch: the work still pending was
    cancelled and the running workers stopped (their staging folders
    cleaned).  ``finished``: the outcomes of the drawings done before, in
    the order of the inputs; ``total``: the number of inputs;
    ``exit_code``: 130 (Ctrl-C) or 143 (SIGTERM)."""

    def __init__(self, finished: list[FileOutcome], total: int, exit_code: int = 130) -> None:
        super().__init__(f"interrupted after {len(finished)} of {total} drawings")
        self.finished, self.total, self.exit_code = finished, total, exit_code


def _worker_init() -> None:
    """Each pool worker: Ctrl-C at the terminal reaches the whole process
    group, but only the parent acts on it (it cancels the batch and stops
    the workers); SIGTERM kills an idle worker at once."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)


def _solve_in_worker(source: Path, req: SolveRequest) -> FileOutcome:
    """``solve_file`` in a pool worker.  SIGTERM (the parent stopping the
    batch) unwinds the run like Ctrl-C, which removes its staging folder,
    and then ends the worker."""
    signal.signal(signal.SIGTERM, raise_terminated)
    try:
        return solve_file(source, req)
    except Terminated:
        os._exit(Terminated.exit_code)
    finally:
        signal.signal(signal.SIGTERM, signal.SIG_DFL)


def _stop_pool(pool: ProcessPoolExecutor) -> None:
    """Cancel the work not yet started and stop the running workers now.

    ``ProcessPoolExecutor`` has no public way to stop running work, so its
    worker processes are read from the private ``_processes``; each gets
    SIGTERM (it cleans its staging folder and exits), then SIGKILL if it
    has not gone within a few seconds."""
    procs = list((getattr(pool, "_processes", None) or {}).values())
    pool.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        with contextlib.suppress(Exception):
            p.terminate()
    for p in procs:
        with contextlib.suppress(Exception):
            p.join(timeout=5)
            if p.is_alive():
                p.kill()
                p.join(timeout=5)
    pool.shutdown(wait=True)


def _sweep_outputs(source: Path, req: SolveRequest) -> None:
    """Remove the staging folders of dead workers where ``source`` writes."""
    for folder in {p.parent for p in output_paths(Path(source), req).values()}:
        sweep_stale(folder)


def _killed_outcome(source: Path, req: SolveRequest) -> FileOutcome:
    """The outcome of a drawing whose worker process was killed (SIGKILL, as
    the out-of-memory killer does) even when it was retried alone; the dead
    worker's staging folders are removed."""
    _sweep_outputs(source, req)
    return FileOutcome(
        str(source), "worker killed", EXIT_INTERNAL,
        "the process solving this drawing was killed from outside (perhaps by the system for lack of "
        "memory), also when retried alone; nothing was written for it, the other drawings were solved")


def _solve_alone(source: Path, req: SolveRequest) -> FileOutcome:
    """One drawing in a pool of its own: tells a drawing that kills its
    worker from one that only shared a pool with it."""
    pool = ProcessPoolExecutor(max_workers=1, initializer=_worker_init)
    try:
        return pool.submit(_solve_in_worker, source, req).result()
    except BrokenProcessPool:
        pool.shutdown(wait=True)  # the dead worker reaped, so its staging can go
        return _killed_outcome(source, req)
    except KeyboardInterrupt:
        _stop_pool(pool)
        raise
    finally:
        pool.shutdown(wait=True)


def _solve_in_pools(files: list[Path], req: SolveRequest, workers: int,
                    report: Callable[[int, FileOutcome], None]) -> None:
    """Solve ``files`` in a process pool, at most ``workers`` at a time,
    calling ``report(index, outcome)`` as each finishes.

    A worker killed from outside (the out-of-memory killer) breaks the
    whole pool: every file then in flight is retried alone in a pool of its
    own (the one that kills its worker again gets status "worker killed"),
    and the files not yet started go on in a new pool.  Ctrl-C stops the
    pool at once (pending work cancelled, running workers stopped and their
    staging folders cleaned) and propagates."""
    pending = deque(range(len(files)))
    while pending:
        suspects: list[int] = []
        pool = ProcessPoolExecutor(max_workers=min(workers, len(pending)), initializer=_worker_init)
        in_flight: dict = {}
        try:
            while (pending and not suspects) or in_flight:
                while pending and not suspects and len(in_flight) < workers:
                    i = pending.popleft()
                    try:
                        in_flight[pool.submit(_solve_in_worker, files[i], req)] = i
                    except BrokenProcessPool:
                        pending.appendleft(i)
                        break
                if not in_flight:
                    break
                done, _ = wait(in_flight, return_when=FIRST_COMPLETED)
                for fut in done:
                    i = in_flight.pop(fut)
                    try:
                        out = fut.result()
                    except BrokenProcessPool:
                        suspects.append(i)
                        continue
                    except Exception as exc:  # noqa: BLE001 - anything else from the pool machinery
                        out = FileOutcome(str(files[i]), "internal error", EXIT_INTERNAL,
                                          f"{type(exc).__name__}: {exc}")
                    report(i, out)
        except BaseException:
            _stop_pool(pool)
            for i in in_flight.values():  # a worker stuck in C code past the grace time was SIGKILLed
                _sweep_outputs(files[i], req)
            for fut, i in in_flight.items():  # finished while the pool stopped: their outputs are in place
                if fut.done() and not fut.cancelled() and fut.exception() is None:
                    with contextlib.suppress(Exception):
                        report(i, fut.result())
            raise
        pool.shutdown(wait=True)
        for i in sorted(suspects):
            report(i, _solve_alone(files[i], req))


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


def _with_source_text(o: FileOutcome, text: str) -> str:
    return f"{Path(o.source).name}: {one_line(text)}"


def summary_table(outcomes: list[FileOutcome]) -> str:
    """Plain-text table: file, status, determinacy, governing |M|, |V|, |N|,
    worst span/deflection ("n/a" for a frame solved without sections), the
    worst storey drift (service level), the number of warnings, time.  A
    value worse than its limit is marked " !" and a note line follows the
    table."""
    head = ["file", "status", "determinacy", "max |M|", "max |V|", "max |N|", "span/defl", "drift", "warnings",
            "time s"]
    rows = []
    for o in outcomes:
        u = o.units
        det = o.determinacy + (f" ({o.degree})" if o.degree else "") if o.determinacy else "-"
        rows.append([
            Path(o.source).name, o.status, det,
            summary_value(o.max_m) + (f" {u[0]}*{u[1]}" if u and o.max_m is not None else ""),
            summary_value(o.max_v) + (f" {u[0]}" if u and o.max_v is not None else ""),
            summary_value(o.max_n) + (f" {u[0]}" if u and o.max_n is not None else ""),
            ("n/a" if o.status == "ok" else "-") if o.worst_deflection_ratio is None
            else f"L/{o.worst_deflection_ratio:.0f}" + (" !" if o.deflection_fails else ""),
            _drift_cell(o),
            str(len(o.warnings)),
            f"{o.seconds:.2f}",
        ])
    return render_table(head, rows) + _checks_note(outcomes)


def _drift_cell(o: FileOutcome) -> str:
    """Worst service storey drift as ``h/n`` (`` !`` when a drift check
    fails); "n/a" for a solved frame without storeys or sections."""
    if o.worst_drift_ratio is None:
        return "n/a" if o.status == "ok" else "-"
    return f"h/{o.worst_drift_ratio:.0f}" + (" !" if o.drift_fails else "")


def _checks_note(outcomes: list[FileOutcome]) -> str:
    """A line under the table when a check fails (the warnings name the member or storey)."""
    if not any(o.deflection_fails or o.drift_fails for o in outcomes):
        return ""
    return ("\nchecks: ! = worse than the limit in the settings ([deflection] limit, [drift] limit); "
            "the warnings name each member and storey")


def run_batch(files: list[Path], req: SolveRequest, *, workers: int | None = None,
              scheduler: str | None = None, stream=None, debug: bool = False) -> int:
    """Solve, print progress and messages, print the summary; return the exit status.

    ``debug``: print the traceback of each internal error after its line."""
    stream = stream or sys.stdout
    err = sys.stderr
    single = len(files) == 1
    t0 = time.perf_counter()

    try:
        with batch_progress(len(files), err) as advance:
            def progress(out: FileOutcome, k: int, n: int) -> None:
                if not single:
                    advance(out.source, out.status)

            outcomes = solve_many(files, req, workers=workers, scheduler=scheduler, on_done=progress)
    except BatchInterrupted as stop:
        return _report_interrupted(stop, stream, err, time.perf_counter() - t0)
    for o in outcomes:
        where = _with_source(o)
        if o.status in ("bad input", "cannot write"):
            print(f"dxf2frame: error: {where}", file=err)
        elif o.status == "worker killed":
            print(f"dxf2frame: error: {where}", file=err)
        elif o.status == "internal error":
            print(f"dxf2frame: internal error: {where} (please report it)", file=err)
            if debug and o.traceback:
                print(o.traceback.rstrip("\n"), file=err)
        elif o.status == "unstable":
            why = "a mechanism" if o.determinacy in ("unstable", "") else "it buckles"
            print(f"dxf2frame: {o.source}: the frame is unstable ({why}); no results. {one_line(o.message)}",
                  file=err)
        # every file's warnings reach the console (in a batch prefixed with the file)
        for w in o.warnings:
            print(f"dxf2frame: warning: {one_line(w) if single else _with_source_text(o, w)}", file=err)
        for line in o.probe_lines:                    # --probe values reach the console too
            print(line if single else f"{Path(o.source).name}: {line}", file=stream)
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


def _report_interrupted(stop: BatchInterrupted, stream, err, seconds: float) -> int:
    """After Ctrl-C or SIGTERM: the summary of the drawings that finished and
    one line saying how many were not solved; returns 130 (143 for SIGTERM)."""
    if stop.finished:
        print(summary_table(stop.finished), file=stream)
    why = "terminated" if stop.exit_code == 143 else "interrupted"
    left = stop.total - len(stop.finished)
    print(f"dxf2frame: {why} after {seconds:.1f} s: {len(stop.finished)} of {stop.total} drawing(s) finished "
          f"(their outputs are complete); {left} not solved, nothing written for them", file=err)
    return stop.exit_code
