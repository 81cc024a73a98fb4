"""Command line: ``dxf2frame <command> ...``.

Exit status: 0 done; 2 bad input (one line naming the entity handle and
layer, no output written); 3 the frame is unstable (report and mechanism
drawing written, no numbers); 4 an output could not be written (read-only
folder, disk full, file size limit, no permission: one line naming what,
where and why; the previous outputs are kept); 1 an internal error (please
report it, with --debug output); 130 interrupted (Ctrl-C), 143 terminated
(SIGTERM): no partial output.
"""
from __future__ import annotations

import argparse
import contextlib
import os
import logging
import math
import signal
import sys
import textwrap
from pathlib import Path

from . import CAUTION, __version__
from .errors import Dxf2FrameError, one_line

__all__ = ["main", "build_parser", "single_threaded_numerics", "THREAD_VARIABLES"]

EPILOG = (
    "exit status: 0 done, 2 bad input (nothing written), 3 frame unstable "
    "(report and mechanism drawing written), 4 an output could not be written "
    "(read-only folder, disk full, file size limit; previous outputs kept), "
    "1 internal error, 130 interrupted, 143 terminated.\n\n" + CAUTION
)


def _probe(text: str) -> tuple[float, float]:
    try:
        x, y = (float(v) for v in text.split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(f"takes X,Y in drawing units, got {text!r}") from None
    if not (math.isfinite(x) and math.isfinite(y)):
        raise argparse.ArgumentTypeError(f"takes finite X,Y in drawing units, got {text!r}")
    return x, y


def _seconds(text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"takes seconds, got {text!r}") from None
    if not (math.isfinite(v) and 0 <= v <= 60):
        raise argparse.ArgumentTypeError(f"takes 0 to 60 seconds, got {text!r}")
    return v


def _units(text: str) -> tuple[str, str]:
    """``--units FORCE,LENGTH`` of every command: two known units of the right kind."""
    from .units import force_length_units

    try:
        return force_length_units(text)
    except Dxf2FrameError as exc:
        raise argparse.ArgumentTypeError(one_line(str(exc))) from None


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("--settings", type=Path, metavar="TOML",
                   help="settings file (default: dxf2frame.toml beside the drawing, else built-in defaults)")
    p.add_argument("--length-unit", metavar="UNIT",
                   help="length unit of the drawing when its $INSUNITS header is missing (m, mm, cm, ft, in)")
    p.add_argument("--debug", action="store_true", help="show a traceback for internal errors")


def _strict(p: argparse.ArgumentParser) -> None:
    p.add_argument("--strict", action="store_true",
                   help="treat every warning as bad input (exit 2, nothing written): for CI pipelines")


def _history_flag(p: argparse.ArgumentParser) -> None:
    p.add_argument("--history", action=argparse.BooleanOptionalAction, default=None,
                   help="record each solve in the revision history of the drawing's folder "
                        "(default from settings: [history] record, off)")


def _history_parser(sub, fmt) -> None:
    p = sub.add_parser(
        "history", formatter_class=fmt, epilog=EPILOG,
        help="list the recorded revisions of a folder and what changed between them",
        description=textwrap.dedent("""\
            List the solves recorded in the folder's revision history
            (.dxf2frame-history.sqlite; solve with --history to record), per series of
            revisions: governing |M|, |V|, |N|, span/deflection, warnings, and what
            changed from the previous revision (as compare finds it). With --trend,
            the governing value of one member (its id) or support (X,Y) across the
            revisions, and with --png a plot of it.

            examples:
              dxf2frame history drawings
              dxf2frame history drawings --trend 111-1 --quantity M --png trend.png
              dxf2frame history drawings --rebuild"""),
    )
    p.add_argument("folder", nargs="?", default=".", help="folder of the drawings (default: the current one)")
    p.add_argument("--series", metavar="NAME", help="only this series (the file name without its revision ending)")
    p.add_argument("--trend", metavar="ID",
                   help="a member id (as in the report) or X,Y (a support, in the report's length unit)")
    p.add_argument("--quantity", metavar="Q", help="N, V, M or deflection for a member (default M); "
                                                   "fx, fy or m for a support (default fy)")
    p.add_argument("--png", type=Path, metavar="OUT", help="write the trend as a PNG plot")
    p.add_argument("--rebuild", action="store_true",
                   help="rebuild the history from the saved JSON reports in the folder and its subfolders "
                        "(the present history is renamed aside, not deleted)")
    p.add_argument("--threshold", type=float, metavar="FRACTION",
                   help="count changes larger than this fraction (default from settings: 0.05)")
    p.add_argument("--units", type=_units, metavar="FORCE,LENGTH", help="units of the listing, e.g. kN,m")
    p.add_argument("--settings", type=Path, metavar="TOML",
                   help="settings file (default: dxf2frame.toml in the folder, else built-in defaults)")
    p.add_argument("--debug", action="store_true", help="show a traceback for internal errors")


def build_parser() -> argparse.ArgumentParser:
    # Long by nature: one declaration per command and option, read top to bottom like the help it
    # prints.
    fmt = argparse.RawDescriptionHelpFormatter
    parser = argparse.ArgumentParser(
        prog="dxf2frame",
        formatter_class=fmt,
        description=textwrap.dedent("""\
            Analyse a planar frame sketched in a DXF drawing: member centrelines on
            FRAME layers, support/hinge/load blocks on SUPPORTS, CONNECTIONS and LOADS.
            Results are written as new layers in a copy of the drawing, never into it."""),
        epilog=EPILOG,
    )
    parser.add_argument("--version", action="version", version=f"dxf2frame {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser(
        "check", formatter_class=fmt, epilog=EPILOG,
        help="read a drawing and say what frame it describes and whether it is stable",
        description=textwrap.dedent("""\
            Read the drawing, clean the linework and print a model summary (nodes,
            members, supports, hinges, loads per case) and the determinacy result:
            determinate, indeterminate (with degree) or unstable (with the mechanism
            described). Writes nothing.

            example:  dxf2frame check drawings/packing-shed-rev-A.dxf"""),
    )
    p.add_argument("drawing", type=Path, help="DXF file to read")
    _strict(p)
    _common(p)

    p = sub.add_parser(
        "solve", formatter_class=fmt, epilog=EPILOG,
        help="solve drawings and write result drawings, reports and previews",
        description=textwrap.dedent("""\
            Solve every load case and load combination and write, per drawing:
            a copy of the drawing with result layers (N, V, M, reactions, deflected
            shape, notes), a JSON report, a CSV of member extremes and a PNG preview.
            Several drawings or glob patterns may be given; they are solved in
            parallel and a summary table is printed.

            examples:
              dxf2frame solve drawings/packing-shed-rev-A.dxf
              dxf2frame solve shed.dxf --out results/shed.dxf --units kip,ft --probe 4.5,2.8
              dxf2frame solve 'revisions/*.dxf' --workers 2"""),
    )
    p.add_argument("drawings", nargs="+", help="DXF files or glob patterns")
    p.add_argument("--out", type=Path, metavar="PATH",
                   help="result drawing (.dxf, one input) or folder (default: 'solved' beside each input)")
    p.add_argument("--report", type=Path, metavar="JSON",
                   help="JSON report path (one input only; default beside the result drawing)")
    p.add_argument("--units", type=_units, metavar="FORCE,LENGTH",
                   help="units of the report, e.g. kN,m or kip,ft (default: settings force unit, drawing unit)")
    p.add_argument("--probe", type=_probe, action="append", default=[], metavar="X,Y",
                   help="report N, V, M at this drawing point (repeatable)")
    p.add_argument("--influence", type=_probe, action="append", default=[], metavar="X,Y",
                   help="influence lines of N, V, M at this drawing point for a unit load moving along "
                        "the settings' [moving] path_layer (repeatable; drawn, and written as CSV)")
    p.add_argument("--show", metavar="NAME",
                   help="what to draw: a load case, a combination ('1.2D+1.6L+0.5S'), "
                        "or 'envelope:LRFD' / 'envelope:ASD' / 'envelope:all', or 'patterns:RESULT' for the pattern "
                        "envelope of a patterned case or combination (default from settings: envelope:LRFD)")
    p.add_argument("--no-png", action="store_true", help="skip the PNG preview")
    p.add_argument("--sheets", action="store_true",
                   help="also write hand-check calculation sheets for the probes and governing extremes")
    p.add_argument("--workers", type=int, default=None, metavar="N",
                   help="parallel processes for many drawings (default: number of cores)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run the batch on a Dask distributed scheduler (needs the 'dask' extra)")
    _history_flag(p)
    _strict(p)
    _common(p)

    p = sub.add_parser(
        "watch", formatter_class=fmt, epilog=EPILOG,
        help="re-solve drawings each time they are saved (the live loop beside CAD)",
        description=textwrap.dedent("""\
            Watch folders (every .dxf directly in them) or single drawings and solve
            a drawing each time it is saved: result drawing, report and preview are
            replaced as one set, so CAD reloading the result never sees half a file.
            One line per solve: file, status, warnings, governing values and the
            change since the last solve. A broken save prints its error and keeps
            the previous results. Runs until Ctrl-C.

            examples:
              dxf2frame watch drawings
              dxf2frame watch shed.dxf --no-png --settle 0.5"""),
    )
    p.add_argument("targets", nargs="+", metavar="FOLDER_OR_FILE", help="folders and/or DXF files to watch")
    p.add_argument("--out", type=Path, metavar="FOLDER",
                   help="folder for the results (default: 'solved' beside each drawing)")
    p.add_argument("--units", type=_units, metavar="FORCE,LENGTH",
                   help="units of the report, e.g. kN,m or kip,ft (default: settings force unit, drawing unit)")
    p.add_argument("--show", metavar="NAME", help="what to draw (as for solve; default from settings)")
    p.add_argument("--no-png", action="store_true", help="skip the PNG preview (faster)")
    p.add_argument("--settle", type=_seconds, default=0.3, metavar="SECONDS",
                   help="a drawing is solved once it has been quiet (no change of size or time) this long "
                        "(default 0.3)")
    p.add_argument("--history", action=argparse.BooleanOptionalAction, default=True,
                   help="record each solve in the revision history of the drawing's folder "
                        "(on by default in watch; --no-history turns it off)")
    p.add_argument("--changes-only", action="store_true",
                   help="do not solve the drawings found at start, only those saved afterwards")
    _strict(p)
    _common(p)

    p = sub.add_parser(
        "compare", formatter_class=fmt, epilog=EPILOG,
        help="compare revisions of a drawing and flag what changed in the results",
        description=textwrap.dedent("""\
            Given two or more revisions (drawings or JSON reports, oldest first),
            match members by geometry and report the change in governing N, V, M,
            deflection and reactions between consecutive revisions; changes above the
            threshold are flagged. Writes a CSV/JSON table and a copy of the newest
            drawing with the changed members marked.

            example:  dxf2frame compare drawings/packing-shed-rev-A.dxf drawings/packing-shed-rev-B.dxf"""),
    )
    p.add_argument("revisions", nargs="+", help="two or more DXF files or report JSON files, oldest first "
                                                "(with --history: revision labels or #IDs)")
    p.add_argument("--history", type=Path, metavar="FOLDER",
                   help="take the revisions from this folder's revision history: each argument is a label "
                        "(B, or SERIES:B) or a solve id (#12), never a file")
    p.add_argument("--out", type=Path, metavar="FOLDER", help="where to write (default: 'compared' beside the newest)")
    p.add_argument("--threshold", type=float, metavar="FRACTION",
                   help="flag changes larger than this fraction (default from settings: 0.05)")
    p.add_argument("--units", type=_units, metavar="FORCE,LENGTH", help="units of the comparison, e.g. kN,m")
    _common(p)

    _history_parser(sub, fmt)

    p = sub.add_parser(
        "explain", formatter_class=fmt, epilog=EPILOG,
        help="write hand-check sheets: the free-body equations behind values at points",
        description=textwrap.dedent("""\
            For each point (or, with no --at, each member's governing extremes), cut
            the member there, choose the free body a checker would choose, and write
            the equilibrium equations with the numbers substituted, a free-body
            figure, Markdown and PDF.

            example:  dxf2frame explain drawings/packing-shed-rev-A.dxf --at 4.5,2.8 --result D"""),
    )
    p.add_argument("drawing", type=Path, help="DXF file")
    p.add_argument("--at", type=_probe, action="append", default=[], metavar="X,Y",
                   help="cut point in drawing units (repeatable)")
    p.add_argument("--result", metavar="NAME",
                   help="load case or combination (default: the governing strength combination per point)")
    p.add_argument("--out", type=Path, metavar="FOLDER", help="where to write (default: 'sheets' beside the drawing)")
    p.add_argument("--units", type=_units, metavar="FORCE,LENGTH", help="units on the sheet, e.g. kN,m")
    _common(p)

    p = sub.add_parser(
        "template", formatter_class=fmt, epilog=EPILOG,
        help="write an empty drawing with the input layers and symbol blocks ready to use",
        description=textwrap.dedent("""\
            Start a new framing sketch: the layers FRAME, FRAME-BRACES, SUPPORTS,
            CONNECTIONS, LOADS and the support, connection (JOINT, HINGE, CROSSOVER)
            and load blocks with their attributes. Crossing members are joined
            unless both are on FRAME-BRACES or a CROSSOVER sits on the crossing.

            example:  dxf2frame template my-frame.dxf --length-unit m"""),
    )
    p.add_argument("path", type=Path, help="new DXF file to write")
    p.add_argument("--length-unit", default="m", metavar="UNIT", help="drawing unit: m, mm, cm, ft, in (default m)")
    return parser


def _fail(exc: BaseException, debug: bool) -> int:
    if isinstance(exc, Dxf2FrameError):
        print(f"dxf2frame: error: {one_line(str(exc))}", file=sys.stderr)
        return exc.exit_code
    if debug:
        raise exc
    print(f"dxf2frame: internal error: {one_line(f'{type(exc).__name__}: {exc}')} "
          "(rerun with --debug and report it)", file=sys.stderr)
    return 1


def _robust_streams() -> None:
    """Messages quote drawing content (layer names, attribute text) in any
    script: never let a console that cannot show a character turn a clear
    message into a crash."""
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None:
            try:
                reconfigure(errors="backslashreplace")
            except (ValueError, OSError):  # a closed or unusual stream: leave it
                pass


def _quiet_library_logs(debug: bool) -> None:
    """ezdxf logs the repairs it makes to damaged files; the reader turns them
    into warnings of the model, so they are not printed again (shown with
    --debug)."""
    log = logging.getLogger("ezdxf")
    if not debug and not any(isinstance(h, logging.NullHandler) for h in log.handlers):
        log.addHandler(logging.NullHandler())


@contextlib.contextmanager
def _signals_for_a_run():
    """For the duration of a command: SIGTERM unwinds like Ctrl-C (staging
    cleaned, exit 143), and SIGXFSZ (the file size limit, ``ulimit -f``) is
    ignored so that the write fails with EFBIG and is reported instead of
    the process dying without a word.  The previous handlers are restored
    (``main`` may run inside another program, or a test)."""
    from .staging import raise_terminated

    wanted = {"SIGTERM": raise_terminated, "SIGXFSZ": signal.SIG_IGN}
    saved = {}
    for name, handler in wanted.items():
        num = getattr(signal, name, None)
        if num is None:
            continue
        try:
            saved[num] = signal.signal(num, handler)
        except (ValueError, OSError):  # not the main thread: leave signals alone
            pass
    try:
        yield
    finally:
        for num, handler in saved.items():
            with contextlib.suppress(ValueError, OSError, TypeError):
                signal.signal(num, handler)


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status and never raises
    (except with ``--debug`` for an internal error)."""
    single_threaded_numerics()
    with _signals_for_a_run():
        return _main(argv)


#: environment variables that set the thread count of the BLAS/OpenMP
#: libraries under numpy and scipy
THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def single_threaded_numerics() -> None:
    """One thread for the BLAS and OpenMP libraries under numpy and scipy,
    unless the user set a count: the tool's dense work is small (eigenvalue
    vectors, element matrices) and a batch runs one process per core, so
    library threads only wait on each other.  (The alpha_cr check of a
    5,000-member frame: 3.3 s on one thread, 16 to 18 s with OpenBLAS's own
    threads on a busy 2-core machine.)  Takes effect only before numpy is
    first imported, i.e. from the command line."""
    if "numpy" in sys.modules:
        return
    for var in THREAD_VARIABLES:
        os.environ.setdefault(var, "1")


def _main(argv: list[str] | None) -> int:
    _robust_streams()
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, or a usage error (already printed)
        return exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 2)
    if args.command is None:
        parser.print_help()
        return 2
    _quiet_library_logs(getattr(args, "debug", False))
    from . import commands

    handler = getattr(commands, f"run_{args.command}")
    try:
        return handler(args)
    except Dxf2FrameError as exc:
        return _fail(exc, getattr(args, "debug", False))
    except KeyboardInterrupt as exc:
        code = getattr(exc, "exit_code", 130)  # staging.Terminated: SIGTERM, 143
        print("dxf2frame: " + ("terminated" if code == 143 else "interrupted")
              + "; no partial output", file=sys.stderr)
        return code
    except BrokenPipeError:
        # the reader of our output went away (``dxf2frame check x.dxf | head``):
        # not an error of ours; silence the interpreter's own complaint at exit
        try:
            sys.stdout = open(os.devnull, "w")  # noqa: SIM115
        except OSError:
            pass
        return 0
    except Exception as exc:  # noqa: BLE001
        return _fail(exc, getattr(args, "debug", False))


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
