"""Benchmark of the whole ``solve`` on generated building frames.

For each size (analysis members) the benchmark generates a multi-storey,
multi-bay frame drawing (:mod:`bench.generate`) and measures, each in a
fresh subprocess (clean peak memory, no warm caches):

* the *floor*: ``ezdxf.readfile`` + ``saveas`` of the same drawing [s];
* the full ``solve`` (:func:`dxf2frame.pipeline.solve_file` with
  ``png=False, csv=True, sheets=False``: read, clean, check, solve every
  case and combination, internal forces, result layers, JSON and CSV) [s]
  and its ratio to the floor;
* the time split by stage [s] (timers wrapped around the pipeline's
  functions in the child process only; production code is not changed);
* the peak resident memory of the child [MiB] (``ru_maxrss``);

then the growth of the solve time between two sizes (ratio and exponent
``log(t2/t1) / log(m2/m1)``) and a batch figure: ``--batch`` revisions of
the smallest frame through :func:`dxf2frame.batch.solve_many` with 1 and
with 2 workers, next to the speed-up the machine itself gives 2 processes
on a trivial CPU-bound task at that moment (the ceiling on a shared host).

It prints a table and writes ``bench/results.json`` (``--out``).  It is
not a unit test; ``tests/test_bench_smoke.py`` runs :func:`run` at a tiny
size to keep it working.

Usage::

    python bench/run.py                      # 500, 5000, 20000 members, batch of 20
    python bench/run.py --sizes 500,5000 --repeat 3
    python bench/run.py --quick              # a tiny run (seconds)
    python bench/run.py --moving             # moving loads vs one solve (bench/moving.py), in process
"""
from __future__ import annotations

import argparse
import json
import math
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any, Callable

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from bench.generate import FrameSpec, spec_for_members, write_frame, write_revisions  # noqa: E402

__all__ = ["run", "main", "TARGETS", "STAGES", "format_table"]

#: stages of the time split, in pipeline order
STAGES: tuple[str, ...] = (
    "read", "clean", "check", "assemble", "factorise", "combine", "forces", "report", "write", "other",
)

#: the issue's targets: (key, description, limit, sense)
TARGETS: tuple[tuple[str, str, float, str], ...] = (
    ("ratio_5000", "full solve / ezdxf floor at 5,000 members", 2.0, "<="),
    ("growth_5000_20000", "time growth 5k -> 20k members", 4.5, "<="),
    ("batch_speedup", "batch speed-up, 2 workers vs 1", 1.7, ">="),
    ("peak_mib_20000", "peak memory at 20,000 members [MiB]", 1024.0, "<"),
    # the live loop and the whole job (issue 19): medians
    ("ratio_nopng_5000", "solve --no-png / ezdxf floor at 5,000 members (median)", 1.5, "<="),
    ("ratio_png_5000", "solve with preview / ezdxf floor at 5,000 members (median)", 2.0, "<="),
    ("preview_s_5000", "preview of the 5,000-member frame [s] (median)", 1.0, "<"),
    ("warm_s", "warm re-solve of the demo in watch, no preview [s] (median)", 0.5, "<"),
    ("warm_png_s", "warm re-solve of the demo in watch, with preview [s] (median)", 1.0, "<"),
    ("cold_png_s", "cold solve of the demo with preview, whole command [s] (median)", 2.0, "<"),
    ("demo_batch_speedup", "batch of 12 demo drawings, 2 workers vs 1 (medians)", 1.6, ">="),
)

PYTHON = sys.executable


# ---------------------------------------------------------------------------
# child side: one measurement per process
# ---------------------------------------------------------------------------


def _maxrss_mib() -> float:
    """Peak resident set size of this process [MiB] (Linux: ru_maxrss in KiB)."""
    r = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return r / 1024.0 if sys.platform != "darwin" else r / 2**20


def _children_maxrss_mib() -> float:
    """Peak resident set size of the largest finished child of this process
    [MiB]: the process that saved the result drawing on the second core,
    if one did (its pages shared with this process counted in both)."""
    r = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return r / 1024.0 if sys.platform != "darwin" else r / 2**20


class _StageClock:
    """Exclusive wall time per label of nested wrapped calls: the time of a
    call minus the time of the wrapped calls inside it."""

    def __init__(self) -> None:
        self.total: dict[str, float] = {}
        self.calls: dict[str, int] = {}
        self.peak_after: dict[str, float] = {}  # ru_maxrss [MiB] when the label's last call ended
        self.detail: dict[str, float] = {}  # inclusive time of detail timers, "stage: step"
        self.counts: dict[str, int] = {}
        self._stack: list[tuple[str, list[float]]] = []  # (label, [child time]) per open call

    def timed(self, label: str, fn: Callable, *, detail: bool = False) -> Callable:
        """``fn`` wrapped with a timer.  A ``detail`` timer records the
        inclusive time of a call as ``"<stage>: <label>"`` (the stage whose
        call is open, ``other`` outside every stage) and leaves the stages'
        own times alone (the finer split in ``detail``)."""
        clock = self
        if detail:
            def inner(*a, **kw):
                key = f"{clock._stack[-1][0] if clock._stack else 'other'}: {label}"
                t0 = time.perf_counter()
                try:
                    return fn(*a, **kw)
                finally:
                    clock.detail[key] = clock.detail.get(key, 0.0) + time.perf_counter() - t0

            inner.__wrapped__ = fn  # type: ignore[attr-defined]
            return inner

        def wrapper(*a, **kw):
            clock._stack.append((label, [0.0]))
            t0 = time.perf_counter()
            try:
                return fn(*a, **kw)
            finally:
                dt = time.perf_counter() - t0
                inner = clock._stack.pop()[1][0]
                clock.total[label] = clock.total.get(label, 0.0) + dt - inner
                clock.calls[label] = clock.calls.get(label, 0) + 1
                clock.peak_after[label] = _maxrss_mib()
                if clock._stack:
                    clock._stack[-1][1][0] += dt

        wrapper.__wrapped__ = fn  # type: ignore[attr-defined]
        return wrapper

    def patch(self, owner: Any, name: str, label: str, *, detail: bool = False) -> None:
        """Wrap ``owner.name`` (skipped when the code no longer has it)."""
        if hasattr(owner, name):
            setattr(owner, name, self.timed(label, getattr(owner, name), detail=detail))


class _TimedLU:
    """Proxy of a SuperLU factorisation whose ``solve`` is timed."""

    def __init__(self, lu, clock: _StageClock) -> None:
        self._lu = lu
        self.solve = clock.timed("factorise", lu.solve)

    def __getattr__(self, name: str):
        return getattr(self._lu, name)


def _install_timers() -> _StageClock:
    """Wrap the pipeline's stage functions with timers (this process only)."""
    import dxf2frame.pipeline as pipeline
    import dxf2frame.read.reader as reader
    import dxf2frame.report.report as report
    import dxf2frame.draw.writer as writer
    import dxf2frame.solver.forces as forces
    import dxf2frame.solver.stiffness as stiffness

    clock = _StageClock()
    clock.patch(pipeline, "read_file", "read")
    clock.patch(reader, "build_frame", "clean")
    clock.patch(pipeline, "check", "check")
    clock.patch(pipeline, "solve", "assemble")
    splu = stiffness.splu
    factor = clock.timed("factorise", splu)
    stiffness.splu = lambda *a, **kw: _TimedLU(factor(*a, **kw), clock)
    clock.patch(pipeline, "combine", "combine")
    for name in ("table", "force_table", "deflection_table", "relative_deflection_table", "sample", "sample_many",
                 "critical_points"):
        if hasattr(forces.MemberResults, name):
            clock.patch(forces.MemberResults, name, "forces")
    for name in ("critical_points", "_force", "deflection", "max_deflection", "extremes"):
        clock.patch(forces.MemberResult, name, "forces")
    for name, step in (("assemble_report", "build"), ("write_json", "json + csv"), ("write_csv", "csv")):
        clock.patch(report, name, step, detail=True)  # inside the stage timer: "report: <step>"
        clock.patch(report, name, "report")
    clock.patch(writer, "write_result_drawing", "write")
    clock.patch(writer, "write_mechanism_drawing", "write")
    # finer split (inclusive times inside the stages above; "other" holds
    # settings, summary and moving the outputs into place)
    import ezdxf.document

    clock.patch(reader, "open_document", "ezdxf load", detail=True)
    clock.patch(writer, "annotate_results", "draw results", detail=True)
    clock.patch(ezdxf.document.Drawing, "saveas", "ezdxf save", detail=True)
    clock.patch(pipeline, "load_settings", "settings", detail=True)
    clock.patch(pipeline, "_governing", "summary", detail=True)
    saveas = ezdxf.document.Drawing.saveas

    def counting_saveas(doc, *a, **kw):
        clock.counts["output_entities"] = len(doc.modelspace())
        clock.counts["output_database_entities"] = len(doc.entitydb)
        return saveas(doc, *a, **kw)

    ezdxf.document.Drawing.saveas = counting_saveas
    return clock


def _child_floor(path: Path, out: Path) -> dict:
    import ezdxf

    t0 = time.perf_counter()
    doc = ezdxf.readfile(path)
    t1 = time.perf_counter()
    doc.saveas(out)
    t2 = time.perf_counter()
    n = len(doc.modelspace())
    return {"seconds": t2 - t0, "read_s": t1 - t0, "save_s": t2 - t1, "entities": n,
            "database_entities": len(doc.entitydb),
            "peak_mib": _maxrss_mib()}


def _child_solve_png(path: Path, out: Path) -> dict:
    """One default ``solve`` (preview included), imports before the clock."""
    from dxf2frame import pipeline
    from dxf2frame.draw import preview, writer  # noqa: F401
    from dxf2frame.pipeline import SolveRequest
    from dxf2frame.report import report  # noqa: F401

    req = SolveRequest(out=out, png=True, csv=True, sheets=False)
    t0 = time.perf_counter()
    outcome = pipeline.solve_file(path, req)
    total = time.perf_counter() - t0
    return {"seconds": total, "status": outcome.status, "message": outcome.message[:300],
            "png_s": outcome.timings.get("png"), "pipeline_timings": dict(outcome.timings),
            "png_written": any(p.endswith(".png") for p in outcome.outputs), "peak_mib": _maxrss_mib()}


def _child_warm(path: Path, out: Path, repeat: int) -> dict:
    """Re-solves of one drawing in one warm process, as ``watch`` does them
    (:meth:`dxf2frame.watch.Watch.solve`): a first solve warms the process
    (not timed, as watch's start-up solve), then ``repeat`` timed solves
    without and with the preview, alternating."""
    import io

    from dxf2frame.pipeline import SolveRequest
    from dxf2frame.watch import Watch

    loops = {png: Watch([path], SolveRequest(out=out / ("png" if png else "nopng"), png=png, single=False),
                        stream=io.StringIO()) for png in (False, True)}
    for w in loops.values():
        w.solve(path.absolute())
    runs: dict[bool, list[float]] = {False: [], True: []}
    statuses = set()
    for _ in range(repeat):
        for png, w in loops.items():
            t0 = time.perf_counter()
            o = w.solve(path.absolute())
            runs[png].append(time.perf_counter() - t0)
            statuses.add(o.status)
    return {"seconds": sum(runs[False]) + sum(runs[True]), "runs_s": runs[False], "runs_png_s": runs[True],
            "statuses": sorted(statuses)}


def _child_solve(path: Path, out: Path, timed: bool = False) -> dict:
    """One ``solve``; with ``timed`` the stage timers are installed (they
    cost time of their own, so the solve time of record comes from untimed runs)."""
    # what this solve uses is imported before the clock (the floor does not
    # time ``import ezdxf`` either); no PNG is made, so no matplotlib
    from dxf2frame import pipeline, report  # noqa: F401
    from dxf2frame.draw import writer  # noqa: F401
    from dxf2frame.pipeline import SolveRequest

    if timed:
        # the split run saves the result drawing in this process (no child
        # on the second core: dxf2frame.background_save), so that its
        # stages add up to its time
        import dxf2frame.background_save as background_save

        background_save.MIN_ENTITIES = 2**62
    clock = _install_timers() if timed else _StageClock()
    base = _maxrss_mib()
    req = SolveRequest(out=out, png=False, csv=True, sheets=False)
    t0 = time.perf_counter()
    outcome = pipeline.solve_file(path, req)
    total = time.perf_counter() - t0
    peak = _maxrss_mib()             # before anything below reads the outputs back
    saver_peak = _children_maxrss_mib()
    stages = {k: clock.total.get(k, 0.0) for k in STAGES if k != "other"}
    stages["other"] = max(0.0, total - sum(stages.values()))
    n_results = None
    rep = next((p for p in outcome.outputs if p.endswith(".json")), None)
    if rep:
        with open(rep) as fh:
            n_results = len(json.load(fh).get("results", []))
    return {
        "seconds": total, "status": outcome.status, "message": outcome.message[:300],
        "stages": stages, "pipeline_timings": dict(outcome.timings), "calls": dict(clock.calls),
        "results": n_results, "peak_mib": peak, "import_mib": base, "saver_peak_mib": saver_peak,
        "peak_after_mib": dict(clock.peak_after), "detail": dict(clock.detail), **clock.counts,
        "output_mb": sum(os.path.getsize(p) for p in outcome.outputs) / 2**20,
    }


def _child_batch(folder: Path, workers: int, out: Path) -> dict:
    from dxf2frame.batch import solve_many
    from dxf2frame.pipeline import SolveRequest

    files = sorted(folder.glob("*.dxf"))
    req = SolveRequest(out=out, png=False, csv=True, sheets=False, single=False)
    t0 = time.perf_counter()
    outcomes = solve_many(files, req, workers=workers)
    total = time.perf_counter() - t0
    return {"seconds": total, "files": len(files), "workers": workers,
            "ok": sum(o.status == "ok" for o in outcomes),
            "statuses": sorted({o.status for o in outcomes})}


def _spin(n: int) -> int:
    """A pure-Python CPU-bound task (no I/O, no shared data)."""
    s = 0
    for i in range(n):
        s += i * i
    return s


def _child_ceiling(n: int = 8_000_000, tasks: int = 4) -> dict:
    """The machine's own parallel speed-up: ``tasks`` copies of a trivial
    CPU-bound task one after another, then on a pool of 2 processes."""
    from concurrent.futures import ProcessPoolExecutor

    t0 = time.perf_counter()
    for _ in range(tasks):
        _spin(n)
    serial = time.perf_counter() - t0
    with ProcessPoolExecutor(2) as pool:
        list(pool.map(_spin, [1000, 1000]))  # start the workers before the clock
        t0 = time.perf_counter()
        list(pool.map(_spin, [n] * tasks))
        parallel = time.perf_counter() - t0
    return {"seconds": serial + parallel, "serial_s": serial, "parallel_s": parallel,
            "speedup": serial / parallel}


def _child(argv: list[str]) -> None:
    kind = argv[0]
    if kind == "floor":
        res = _child_floor(Path(argv[1]), Path(argv[2]))
    elif kind in ("solve", "split"):
        res = _child_solve(Path(argv[1]), Path(argv[2]), timed=kind == "split")
    elif kind == "solve-png":
        res = _child_solve_png(Path(argv[1]), Path(argv[2]))
    elif kind == "warm":
        res = _child_warm(Path(argv[1]), Path(argv[2]), int(argv[3]))
    elif kind == "batch":
        res = _child_batch(Path(argv[1]), int(argv[2]), Path(argv[3]))
    elif kind == "ceiling":
        res = _child_ceiling()
    elif kind == "moving":
        from bench.moving import measure_moving

        res = measure_moving()
    else:
        raise SystemExit(f"unknown child job {kind!r}")
    print("BENCH-RESULT " + json.dumps(res))


# ---------------------------------------------------------------------------
# parent side
# ---------------------------------------------------------------------------


def _spawn(args: list[str], env: dict | None = None) -> dict:
    """Run one child job in a fresh interpreter and return its result dict.

    The child's numerical libraries run on one thread unless the caller's
    environment says otherwise, as the ``dxf2frame`` command sets them
    (``dxf2frame.cli.single_threaded_numerics``)."""
    from dxf2frame.cli import THREAD_VARIABLES

    env = dict(os.environ if env is None else env)
    for var in THREAD_VARIABLES:
        env.setdefault(var, "1")
    proc = subprocess.run([PYTHON, str(Path(__file__).resolve()), "--child", *args],
                          capture_output=True, text=True, env=env, cwd=str(ROOT))
    for line in reversed(proc.stdout.splitlines()):
        if line.startswith("BENCH-RESULT "):
            return json.loads(line[len("BENCH-RESULT "):])
    raise RuntimeError(f"benchmark child {args[0]} failed (exit {proc.returncode}):\n{proc.stderr[-3000:]}")


def _best(runs: list[dict]) -> dict:
    return min(runs, key=lambda r: r["seconds"])


def _measure_size(spec: FrameSpec, work: Path, repeat: int, log: Callable[[str], None]) -> dict:
    folder = work / f"frame-{spec.label}"
    drawing = folder / f"frame-{spec.label}.dxf"
    if not drawing.exists():
        log(f"  generating {drawing.name} ({spec.members} members)")
        t0 = time.perf_counter()
        write_frame(spec, drawing)
        log(f"  generated in {time.perf_counter() - t0:.1f} s")
    floors, solves, pngs = [], [], []
    for k in range(repeat):
        floors.append(_spawn(["floor", str(drawing), str(folder / "floor-copy.dxf")]))
        log(f"  floor  run {k + 1}/{repeat}: {floors[-1]['seconds']:.2f} s")
        solves.append(_spawn(["solve", str(drawing), str(folder / "solved")]))
        s = solves[-1]
        log(f"  solve  run {k + 1}/{repeat}: {s['seconds']:.2f} s ({s['status']}), peak {s['peak_mib']:.0f} MiB")
        if s["status"] != "ok":
            raise RuntimeError(f"solve of {drawing} ended {s['status']}: {s['message']}")
        pngs.append(_spawn(["solve-png", str(drawing), str(folder / "solved-png")]))
        log(f"  solve with preview run {k + 1}/{repeat}: {pngs[-1]['seconds']:.2f} s "
            f"(preview {pngs[-1]['png_s'] or 0:.2f} s)")
    # the split by stage comes from one more run with timers around the
    # stages; the timers cost time of their own, so it is not the time of record
    split = _spawn(["split", str(drawing), str(folder / "solved")])
    log(f"  split  run: {split['seconds']:.2f} s with stage timers")
    fb, sb = _best(floors), _best(solves)
    return {
        "members": spec.members, "bays": spec.bays, "storeys": spec.storeys,
        "entities": fb["entities"], "database_entities": fb["database_entities"],
        "output_entities": split.get("output_entities"),
        "output_database_entities": split.get("output_database_entities"),
        "file_mb": drawing.stat().st_size / 2**20,
        "floor_s": fb["seconds"], "floor_read_s": fb["read_s"], "floor_save_s": fb["save_s"],
        "solve_s": sb["seconds"], "ratio": sb["seconds"] / fb["seconds"],
        "stages": split["stages"], "split_s": split["seconds"], "pipeline_timings": sb["pipeline_timings"],
        "results": sb["results"], "output_mb": sb["output_mb"],
        "peak_mib": max(s["peak_mib"] for s in solves), "import_mib": sb["import_mib"],
        "saver_peak_mib": max(s.get("saver_peak_mib", 0.0) for s in solves),
        "peak_after_mib": split["peak_after_mib"], "detail": split["detail"],
        "floor_peak_mib": max(f["peak_mib"] for f in floors),
        "repeats": repeat, "floor_runs_s": [f["seconds"] for f in floors],
        "solve_runs_s": [s["seconds"] for s in solves],
        **_medians(floors, solves, pngs),
    }


def _median(values: list[float]) -> float:
    v = sorted(values)
    n = len(v)
    return v[n // 2] if n % 2 else 0.5 * (v[n // 2 - 1] + v[n // 2])


def _medians(floors: list[dict], solves: list[dict], pngs: list[dict]) -> dict:
    """Median figures of the runs (on a shared machine the median says more than the best run)."""
    floor = _median([f["seconds"] for f in floors])
    nopng = _median([s["seconds"] for s in solves])
    png = _median([p["seconds"] for p in pngs])
    return {"floor_median_s": floor, "solve_median_s": nopng, "ratio_median": nopng / floor,
            "solve_png_median_s": png, "ratio_png_median": png / floor,
            "preview_median_s": _median([p["png_s"] or 0.0 for p in pngs]),
            "solve_png_runs_s": [p["seconds"] for p in pngs], "preview_runs_s": [p["png_s"] for p in pngs]}


DEMO = ROOT / "drawings" / "packing-shed-rev-A.dxf"


def _measure_loop(work: Path, repeat: int, demo_batch: int, log: Callable[[str], None]) -> dict:
    """The live loop and the small-drawing figures on the demo drawing:
    warm re-solves (as in watch), the cold command with its preview, and a
    batch of ``demo_batch`` demo drawings with 1 and 2 workers."""
    import shutil

    folder = work / "loop"
    folder.mkdir(parents=True, exist_ok=True)
    shutil.copy(DEMO.parent / "dxf2frame.toml", folder / "dxf2frame.toml")
    demo = folder / DEMO.name
    shutil.copy(DEMO, demo)
    warm = _spawn(["warm", str(demo), str(folder / "warm-out"), str(max(3, repeat))])
    log(f"loop: warm re-solve median {_median(warm['runs_s']):.3f} s, with preview "
        f"{_median(warm['runs_png_s']):.3f} s")
    # A cold start as on an installed copy: modules compiled once (an
    # environment with PYTHONDONTWRITEBYTECODE would recompile every module
    # of the package on each start), so one untimed run first.
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["MPLBACKEND"] = "Agg"
    cold = []
    for k in range(max(3, repeat) + 1):
        t0 = time.perf_counter()
        proc = subprocess.run([PYTHON, "-m", "dxf2frame", "solve", str(demo), "--out", str(folder / "cold-out")],
                              capture_output=True, text=True, cwd=str(ROOT), env=env)
        took = time.perf_counter() - t0
        if proc.returncode != 0:
            raise RuntimeError(f"cold solve of the demo failed: {proc.stderr[-2000:]}")
        if k == 0:
            continue
        cold.append(took)
        log(f"loop: cold solve with preview run {k}: {took:.2f} s")
    res = {"warm_s": _median(warm["runs_s"]), "warm_png_s": _median(warm["runs_png_s"]),
           "warm_runs_s": warm["runs_s"], "warm_png_runs_s": warm["runs_png_s"], "warm_statuses": warm["statuses"],
           "cold_png_s": _median(cold), "cold_runs_s": cold}
    if demo_batch > 0:
        bfolder = folder / f"batch-{demo_batch}"
        bfolder.mkdir(exist_ok=True)
        shutil.copy(DEMO.parent / "dxf2frame.toml", bfolder / "dxf2frame.toml")
        revs = sorted(DEMO.parent.glob("packing-shed-rev-*.dxf"))
        for i in range(demo_batch):
            shutil.copy(revs[i % len(revs)], bfolder / f"shed-{i + 1:02d}.dxf")
        runs: dict[int, list[float]] = {1: [], 2: []}
        for k in range(max(3, repeat)):
            for w in (1, 2):
                r = _spawn(["batch", str(bfolder), str(w), str(folder / f"batch-out-{w}")])
                runs[w].append(r["seconds"])
                log(f"loop: batch of {demo_batch} demo drawings, {w} worker(s), run {k + 1}: {r['seconds']:.2f} s "
                    f"({r['ok']} ok)")
        res["demo_batch"] = {"files": demo_batch, "workers_1_s": _median(runs[1]), "workers_2_s": _median(runs[2]),
                             "speedup": _median(runs[1]) / _median(runs[2]), "runs_1_s": runs[1],
                             "runs_2_s": runs[2], "machine_ceiling": _spawn(["ceiling"])["speedup"]}
    return res


def _growth(sizes: list[dict], a: int, b: int) -> dict | None:
    ra = next((s for s in sizes if s["target"] == a), None)
    rb = next((s for s in sizes if s["target"] == b), None)
    if ra is None or rb is None:
        return None
    tr = rb["solve_s"] / ra["solve_s"]
    mr = rb["members"] / ra["members"]
    return {"from": a, "to": b, "time_ratio": tr, "member_ratio": mr, "exponent": math.log(tr) / math.log(mr),
            "floor_ratio": rb["floor_s"] / ra["floor_s"]}


def _targets(res: dict) -> list[dict]:
    sizes = {s["target"]: s for s in res["sizes"]}
    values = {
        "ratio_5000": sizes[5000]["ratio"] if 5000 in sizes else None,
        "growth_5000_20000": res["growth"]["time_ratio"] if res.get("growth") else None,
        "batch_speedup": res["batch"]["speedup"] if res.get("batch") else None,
        "peak_mib_20000": sizes[20000]["peak_mib"] if 20000 in sizes else None,
        "ratio_nopng_5000": sizes[5000]["ratio_median"] if 5000 in sizes else None,
        "ratio_png_5000": sizes[5000]["ratio_png_median"] if 5000 in sizes else None,
        "preview_s_5000": sizes[5000]["preview_median_s"] if 5000 in sizes else None,
    }
    loop = res.get("loop") or {}
    for key in ("warm_s", "warm_png_s", "cold_png_s"):
        values[key] = loop.get(key)
    values["demo_batch_speedup"] = (loop.get("demo_batch") or {}).get("speedup")
    out = []
    for key, text, limit, sense in TARGETS:
        v = values[key]
        met = None if v is None else (v <= limit if sense == "<=" else v >= limit if sense == ">=" else v < limit)
        out.append({"key": key, "target": text, "limit": limit, "sense": sense, "value": v, "met": met})
    return out


def _machine() -> dict:
    import ezdxf
    import numpy
    import scipy

    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover
        cores = os.cpu_count()
    return {"python": platform.python_version(), "platform": platform.platform(), "cores": cores,
            "numpy": numpy.__version__, "scipy": scipy.__version__, "ezdxf": ezdxf.__version__,
            "load_average": list(os.getloadavg()) if hasattr(os, "getloadavg") else None}


def run(
    sizes: list[int] = (500, 5000, 20000),
    *,
    batch: int = 20,
    batch_members: int = 500,
    repeat: int = 1,
    repeat_large: int = 1,
    batch_repeat: int = 1,
    workdir: Path | None = None,
    loop: bool = True,
    demo_batch: int = 12,
    log: Callable[[str], None] = lambda s: None,
) -> dict:
    """Run the benchmark and return the results dict (see ``bench/README.md``).

    sizes : target analysis-member counts
    batch : revisions in the batch figure (0: skip it)
    batch_members : size of the batch frames
    repeat : runs per size below 10,000 members (best run reported)
    repeat_large : runs per size of 10,000 members and more
    batch_repeat : runs of each batch figure (1 and 2 workers alternate; best kept)
    workdir : where drawings and outputs go (default: a temporary folder,
        removed afterwards); an existing drawing there is reused
    loop : measure the live loop on the demo drawing (warm re-solves as in
        watch, the cold command, a batch of ``demo_batch`` demo drawings)
    """
    started = time.strftime("%Y-%m-%dT%H:%M:%S")
    tmp = None
    if workdir is None:
        tmp = tempfile.TemporaryDirectory(prefix="dxf2frame-bench-")
        workdir = Path(tmp.name)
    workdir = Path(workdir)
    workdir.mkdir(parents=True, exist_ok=True)
    t_all = time.perf_counter()
    try:
        res: dict[str, Any] = {"schema": 1, "started": started, "machine": _machine(), "sizes": []}
        for target in sizes:
            spec = spec_for_members(int(target))
            log(f"size {target}: frame {spec.label} = {spec.members} members")
            n = repeat if target < 10000 else repeat_large
            row = {"target": int(target), **_measure_size(spec, workdir, max(1, n), log)}
            res["sizes"].append(row)
        res["growth"] = _growth(res["sizes"], 5000, 20000)
        if batch > 0:
            spec = spec_for_members(batch_members)
            folder = workdir / f"batch-{spec.label}-{batch}"
            if not folder.exists() or len(list(folder.glob("*.dxf"))) != batch:
                log(f"batch: generating {batch} revisions of {spec.label} ({spec.members} members)")
                write_revisions(spec, folder, batch)
            runs: dict[int, list[dict]] = {1: [], 2: []}
            for k in range(max(1, batch_repeat)):
                for w in (1, 2):
                    runs[w].append(_spawn(["batch", str(folder), str(w), str(workdir / f"batch-out-{w}")]))
                    r = runs[w][-1]
                    log(f"batch: {batch} files, {w} worker(s), run {k + 1}: {r['seconds']:.2f} s ({r['ok']} ok)")
            b1, b2 = _best(runs[1]), _best(runs[2])
            ceiling = _spawn(["ceiling"])
            log(f"batch: machine ceiling (2 processes on a trivial CPU-bound task): x{ceiling['speedup']:.2f}")
            res["batch"] = {"files": batch, "members": spec.members, "workers_1_s": b1["seconds"],
                            "workers_2_s": b2["seconds"], "speedup": b1["seconds"] / b2["seconds"],
                            "ok": min(r["ok"] for w in (1, 2) for r in runs[w]),
                            "runs_1_s": [r["seconds"] for r in runs[1]], "runs_2_s": [r["seconds"] for r in runs[2]],
                            "machine_ceiling": ceiling["speedup"]}
        else:
            res["batch"] = None
        res["loop"] = _measure_loop(workdir, repeat, demo_batch, log) if loop else None
        res["targets"] = _targets(res)
        res["seconds"] = time.perf_counter() - t_all
        return res
    finally:
        if tmp is not None:
            tmp.cleanup()


def format_table(res: dict) -> str:
    """The results as plain text: one row per size, the stage split, the
    growth, the batch figure and the targets."""
    lines = []
    head = ["members", "frame", "floor s", "solve s", "ratio", "peak MiB", "results"]
    rows = [[str(s["members"]), f"{s['bays']}x{s['storeys']}", f"{s['floor_s']:.2f}", f"{s['solve_s']:.2f}",
             f"{s['ratio']:.2f}", f"{s['peak_mib']:.0f}", str(s["results"])] for s in res["sizes"]]
    w = [max(len(r[i]) for r in [head] + rows) for i in range(len(head))]
    fmt = lambda r: "  ".join(c.rjust(k) for c, k in zip(r, w))  # noqa: E731
    lines += [fmt(head), fmt(["-" * k for k in w])] + [fmt(r) for r in rows]
    lines.append("")
    head = ["members"] + list(STAGES)
    rows = [[str(s["members"])] + [f"{s['stages'].get(k, 0.0):.2f}" for k in STAGES] for s in res["sizes"]]
    w = [max(len(r[i]) for r in [head] + rows) for i in range(len(head))]
    lines += ["time by stage [s]", fmt(head), fmt(["-" * k for k in w])] + [fmt(r) for r in rows]
    keys = sorted({k for s in res["sizes"] for k in s.get("detail", {})})
    if keys:
        lines += ["", "detail (inclusive, inside the stages above) [s]"]
        for k in keys:
            lines.append(f"  {k:<26}" + "".join(f"{s.get('detail', {}).get(k, 0.0):>10.2f}" for s in res["sizes"]))
        lines.append(f"  {'entities in / out':<26}" + "".join(
            f"{s.get('database_entities', 0):>7}/{s.get('output_database_entities') or 0}" for s in res["sizes"]))
    g = res.get("growth")
    if g:
        lines += ["", f"growth {g['from']} -> {g['to']} members: time x{g['time_ratio']:.2f} for members "
                      f"x{g['member_ratio']:.2f} (exponent {g['exponent']:.2f}; floor x{g['floor_ratio']:.2f})"]
    b = res.get("batch")
    if b:
        lines += [f"batch of {b['files']} x {b['members']} members: 1 worker {b['workers_1_s']:.2f} s, "
                  f"2 workers {b['workers_2_s']:.2f} s, speed-up x{b['speedup']:.2f} "
                  f"(this machine's ceiling on a trivial CPU-bound task: x{b['machine_ceiling']:.2f})"]
    rows = [s for s in res["sizes"] if "ratio_png_median" in s]
    if rows:
        lines += ["", "medians: members  floor s  --no-png s (ratio)  with preview s (ratio)  preview s"]
        for s in rows:
            lines.append(f"  {s['members']:>7}  {s['floor_median_s']:7.2f}  {s['solve_median_s']:7.2f} "
                         f"({s['ratio_median']:.2f})      {s['solve_png_median_s']:7.2f} ({s['ratio_png_median']:.2f})"
                         f"        {s['preview_median_s']:.2f}")
    lp = res.get("loop")
    if lp:
        lines += [f"live loop (demo, medians): warm re-solve {lp['warm_s']:.3f} s, with preview "
                  f"{lp['warm_png_s']:.3f} s; cold solve with preview {lp['cold_png_s']:.2f} s"]
        db = lp.get("demo_batch")
        if db:
            lines += [f"batch of {db['files']} demo drawings: 1 worker {db['workers_1_s']:.2f} s, 2 workers "
                      f"{db['workers_2_s']:.2f} s, speed-up x{db['speedup']:.2f} (machine ceiling "
                      f"x{db['machine_ceiling']:.2f})"]
    lines += ["", "targets:"]
    for t in res["targets"]:
        v = "n/a" if t["value"] is None else f"{t['value']:.2f}"
        met = {True: "met", False: "NOT met", None: "not measured"}[t["met"]]
        lines.append(f"  {t['target']}: {v} (target {t['sense']} {t['limit']:g}) {met}")
    return "\n".join(lines)


def _moving_only(out: Path | None) -> int:
    """``--moving``: print the moving-load figure; write it to ``out`` if given.
    Measured in a child process whose numerical libraries run on one
    thread, as the command runs them."""
    res = _spawn(["moving"])
    print(f"moving loads, in process: {res['stations']} stations on {res['members']} members "
          f"{res['moving_s']:.3f} s; one solve with {res['results']} results {res['solve_s']:.4f} s; "
          f"ratio {res['ratio']:.1f}; against 15 results {res['solve15_s']:.4f} s, ratio {res['ratio15']:.1f} "
          f"(target < 2); unit-load solutions at the stations {res['unit_s']:.4f} s, "
          f"{res['unit_ratio15']:.1f} x the 15-result solve; alpha_cr of {res.get('alpha_cr_combinations', 0)} "
          f"combinations {res.get('alpha_cr_s', float('nan')):.3f} s; load average "
          f"{', '.join(f'{v:.2f}' for v in res['load_average'])} on {res['cpus']} cores")
    if out is not None:
        out.parent.mkdir(parents=True, exist_ok=True)
        out.write_text(json.dumps({"moving": res}, indent=2) + "\n")
    return 0


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if argv[:1] == ["--child"]:
        _child(argv[1:])
        return 0
    ap = argparse.ArgumentParser(description="benchmark dxf2frame solve against the ezdxf read+write floor")
    ap.add_argument("--sizes", default="500,5000,20000", help="target member counts, comma separated")
    ap.add_argument("--batch", type=int, default=20, help="revisions in the batch figure (0: skip)")
    ap.add_argument("--batch-members", type=int, default=500, help="members of each batch frame")
    ap.add_argument("--batch-repeat", type=int, default=1, help="runs of each batch figure (best kept)")
    ap.add_argument("--repeat", type=int, default=3, help="runs per size below 10,000 members (best kept)")
    ap.add_argument("--repeat-large", type=int, default=1, help="runs per size of 10,000 members or more")
    ap.add_argument("--quick", action="store_true", help="tiny run: 2 bays x 3 storeys, batch of 2, one run")
    ap.add_argument("--workdir", type=Path, default=None, help="keep drawings and outputs here (reused)")
    ap.add_argument("--no-loop", action="store_true", help="skip the live-loop figures on the demo drawing")
    ap.add_argument("--demo-batch", type=int, default=12, help="demo drawings in the small batch figure (0: skip)")
    ap.add_argument("--out", type=Path, default=None,
                    help="results file (default bench/results.json; --quick writes none unless given)")
    ap.add_argument("--moving", action="store_true",
                    help="only the moving-load figure: a 2,000-station path on a 500-member frame against "
                         "one solve of every case and combination (21 results on the generated frames: D, L, W "
                         "and the built-in sets), in process (bench/moving.py)")
    a = ap.parse_args(argv)
    if a.moving:
        return _moving_only(a.out)
    if a.quick:
        sizes, batch, bm, rep = [15], 2, 15, 1
    else:
        sizes = [int(s) for s in a.sizes.split(",") if s.strip()]
        batch, bm, rep = a.batch, a.batch_members, a.repeat
    res = run(sizes, batch=batch, batch_members=bm, repeat=rep, repeat_large=a.repeat_large,
              batch_repeat=1 if a.quick else a.batch_repeat,
              workdir=a.workdir, loop=not a.no_loop, demo_batch=0 if a.quick else a.demo_batch,
              log=lambda s: print(s, file=sys.stderr, flush=True))
    print(format_table(res))
    out = a.out if a.out is not None else (None if a.quick else HERE / "results.json")
    if out is not None:
        out.parent.mkdir(parents=True, exist_ok=True)
        out.write_text(json.dumps(res, indent=2) + "\n")
        print(f"\nwrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
