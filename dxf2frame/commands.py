"""What each CLI command does, given parsed arguments; returns the exit status.

Bad input raises :class:`~dxf2frame.errors.Dxf2FrameError`, which the CLI
prints as one line (exit 2).
"""
from __future__ import annotations

from collections import Counter
from pathlib import Path

from . import CAUTION
from .errors import one_line

__all__ = ["run_check", "run_solve", "run_compare", "run_explain", "run_template", "run_history", "run_watch"]


def _say(*lines: str) -> None:
    print("\n".join(lines))


def _warn_model(analysis, source: Path | None = None) -> None:
    """The model's warnings on stderr, as ``solve`` prints them (with the
    drawing's name when several drawings are read)."""
    import sys

    from .errors import one_line

    model, det = analysis.model, analysis.determinacy
    for w in list(model.warnings) + [w for w in det.warnings if w not in model.warnings]:
        where = f"{source.name}: " if source is not None else ""
        print(f"dxf2frame: warning: {where}{one_line(w)}", file=sys.stderr)


def run_check(args) -> int:
    from .solver import check

    from .pipeline import EXIT_OK, EXIT_UNSTABLE
    from .read.reader import read_file
    from .settings import load_settings

    from .pipeline import add_self_weight_loads, combination_specs
    from .read.sketch_checks import (EQUAL_STIFFNESS_WARNING, absent_case_notes, combination_problems, section_lines,
                                 stiffness_basis)

    settings = load_settings(args.settings, args.drawing)
    model, document = read_file(args.drawing, settings, length_unit=args.length_unit)
    add_self_weight_loads(model, settings)
    frame = model.frame
    det = check(frame, unit_scale=model.unit_scale)
    # the same checks as solve, so that the two commands agree
    present = list(frame.cases())
    model.warnings.extend(combination_problems(settings, present, combination_specs(settings, present)))
    basis = stiffness_basis(frame, det.status, settings)
    if basis == "equal":
        model.warnings.append(EQUAL_STIFFNESS_WARNING)
    stiffness = {
        "sections": "given for every member",
        "none": "not needed for the forces (deflections need sections)" if det.status != "unstable" else "-",
        "equal": "none given: equal relative stiffness (equal EI, axial shortening neglected), no deflections",
    }[basis]
    moving = _moving_lines(model, document, settings)
    loads_per_case = Counter(ld.case for ld in frame.loads)
    kinds = Counter(s.kind for s in frame.supports)
    _say(
        f"drawing      {args.drawing}",
        f"units        length {model.length_unit}, force {model.force_unit}",
        f"nodes        {len(frame.nodes)}",
        f"members      {len(frame.members)} analysis members "
        f"({len({m.group for m in frame.members})} reported)",
        f"supports     {len(frame.supports)}" + (f" ({', '.join(f'{n} {k}' for k, n in sorted(kinds.items()))})" if kinds else ""),
        f"hinges       {model.hinges}",
        f"crossings    {model.crossings_joined} joined"
        + (f", {len(model.crossings_separate)} left separate" if model.crossings_separate else ""),
        *(f"  separate   {t}" for t in model.crossings_separate),
        f"loads        {model.n_loads} blocks; per case: "
        + (", ".join(f"{c} {n}" for c, n in loads_per_case.items()) or "none"),
        f"sections     {stiffness}",
        *(f"  layer      {t}" for t in section_lines(frame, settings)),
        *(f"self-weight  {t.removeprefix('self-weight: ')}" for t in model.notes if t.startswith("self-weight")),
        _storeys_line(model, settings),
        *moving,
        "",
        f"determinacy  {det.status}" + (f", degree {det.degree}" if det.status == "indeterminate" else "")
        + (f", {det.mechanisms} mechanism(s)" if det.mechanisms else ""),
        f"count        {det.count_check}",
        f"detail       {det.detail}",
    )
    for note in absent_case_notes(settings, present):
        _say(f"note         {note}")
    warnings = list(model.warnings) + [w for w in det.warnings if w not in model.warnings]
    for w in warnings:
        _say(f"warning      {one_line(w)}")
    if args.strict and warnings:
        from .errors import Dxf2FrameError
        from .pipeline import strict_message

        raise Dxf2FrameError(strict_message(warnings))
    return EXIT_UNSTABLE if det.status == "unstable" else EXIT_OK


def _moving_lines(model, document, settings) -> list[str]:
    """``moving       path FRAME-DECK: 2 members, 28 m, step 0.25 m (113
    stations); vehicles ...`` when the settings give a load path (checked
    as ``solve`` checks it: a bad path or step raises), else nothing."""
    if settings.moving_path_layer is None:
        return []
    from .further import load_path
    from .solver import station_grid

    path, kind = load_path(model, document, settings)
    step = settings.moving_step
    n = len(station_grid(path.length, step))
    what = f"{len(set(path.member.tolist()))} member(s)" + (", polyline" if kind == "polyline" else "")
    vehicles = "; ".join(f"{v.name} ({len(v.loads)} axle(s))" for v in settings.moving_vehicles)
    return [f"moving       path {settings.moving_path_layer}: {what}, {path.length:.6g} m, step {step:g} m "
            f"({n:,} stations); vehicles: {vehicles or 'none (influence lines only)'}"]


def _storeys_line(model, settings) -> str:
    """``storeys      2 (tops at 2.8, 5 m; drift limit h/400)`` from the frame or ``[drift] levels``."""
    from .pipeline import storeys_of

    st = storeys_of(model, settings)
    if not len(st):
        return "storeys      none (no level where a beam meets a column)"
    tops = ", ".join(f"{t / model.unit_scale:.6g}" for t in st.levels)
    return (f"storeys      {len(st)} (tops at {tops} {model.length_unit}; drift limit h/{settings.drift_limit:g}, "
            f"{settings.drift_measure} of the column lines)")


def run_solve(args) -> int:
    from .batch import expand_inputs, run_batch
    from .errors import InputFileError
    from .pipeline import SolveRequest

    files = expand_inputs(args.drawings)
    if not files:
        raise InputFileError(f"no drawing matches {' '.join(args.drawings)}")
    single = len(files) == 1
    if not single and args.report is not None:
        raise InputFileError("--report names one file; with several drawings leave it out "
                             "(each report goes beside its result drawing)")
    req = SolveRequest(
        out=args.out, report=args.report, units=args.units, probes=list(args.probe), show=args.show,
        png=not args.no_png, sheets=args.sheets, settings_path=args.settings,
        length_unit=args.length_unit, single=single, strict=args.strict, history=args.history,
        influence=list(args.influence),
    )
    return run_batch(files, req, workers=args.workers, scheduler=args.scheduler,
                     debug=args.debug)


def _output_folder(out: Path | None, inputs: list[Path]) -> None:
    """``--out`` of compare/explain names a folder: refuse an existing file
    (above all an input drawing) before anything is computed."""
    if out is None:
        return
    out = Path(out)
    for parent in (out, *out.parents):
        if parent.exists():
            if not parent.is_dir():
                from .atomic import same_file
                from .errors import InputFileError

                what = "an input drawing" if any(same_file(parent, p) for p in inputs) else "a file"
                raise InputFileError(f"--out {out}: {parent} is {what}, not a folder; choose a folder for the results")
            return


def run_compare(args, *, stream=None) -> int:
    """The ``compare`` command: returns 0 (changes or not).

    ``args``: ``revisions`` (paths, oldest first; ``.dxf`` drawings are
    solved in memory, anything else is read as a JSON report), ``out``
    (folder, default ``compared`` beside the newest input), ``threshold``
    (fraction, default from the newest revision's settings), ``units``
    ((force, length) or None), ``settings``, ``length_unit``.
    """
    import sys

    from .errors import InputFileError
    from .revisions import compare_reports, comparison_table, mark_changes, write_comparison
    from .revisions.reports import load_json_report
    from .settings import load_settings
    from .staging import OutputSet, writing

    _output_folder(args.out, list(args.revisions))
    stream = stream or sys.stdout
    paths = [Path(p) for p in args.revisions]
    if len(paths) < 2:
        raise InputFileError("compare needs two or more revisions (drawings or JSON reports), oldest first")
    units = args.units
    history = getattr(args, "history", None)
    if history is not None:  # revision labels of the history, never files
        paths, reports, newest_dxf = _history_revisions(Path(history), list(args.revisions))
        settings = None
    else:
        for p in paths:
            if not p.is_file():
                raise InputFileError(f"{p}: no such file")
        reports: list[dict] = []
        settings = None
        for p in paths:
            if p.suffix.lower() == ".dxf":
                rep, settings = _report_of_drawing(p, args, units)
            else:
                rep = load_json_report(p)
                settings = None
            reports.append(rep)
        newest_dxf = None
    newest = paths[-1]
    if history is None:
        newest_dxf = newest if newest.suffix.lower() == ".dxf" else _drawing_for_report(newest, reports[-1])
    if settings is None:
        settings = load_settings(args.settings, newest_dxf or newest)
    threshold = args.threshold if args.threshold is not None else settings.compare_threshold
    cmp = compare_reports(reports, threshold=threshold, units=units)

    table = comparison_table(cmp)
    out = Path(args.out) if args.out else newest.parent / "compared"
    # staged and swapped in as one set (staging.OutputSet): a failure leaves
    # the previous comparison complete, never an empty folder or half of it
    what = f"the comparison of {newest.name}"
    with OutputSet(out, what=what) as out_set, writing(what, out):
        staged = write_comparison(cmp, out_set.staged("files"), stem=f"{newest.stem}-comparison")
        if newest_dxf is not None:
            staged["drawing"] = mark_changes(
                newest_dxf, reports[-1], cmp, out_set.staged("files") / f"{newest_dxf.stem}-changes.dxf",
                settings, drawing_unit=args.length_unit if newest.suffix.lower() == ".dxf" else None)
        written = dict(zip(staged, out_set.commit({p: out / p.name for p in staged.values()})))
    print(table, file=stream, end="")
    if newest_dxf is None:
        print(f"note: the drawing of {newest} was not found beside it; no marked drawing written", file=stream)
    for p in written.values():
        print(f"wrote {p}", file=stream)
    return 0


def _history_revisions(folder: Path, refs: list[str]) -> tuple[list[Path], list[dict], Path | None]:
    """``compare --history FOLDER``: the revisions named by label (``B``,
    ``SERIES:B``) or solve id (``#12``) in the folder's history, as report
    dicts; the paths they stand for (the drawings, for naming the outputs);
    and the newest drawing when it is still the file that was solved (same
    content hash), for the marked copy."""
    from .revisions.history import History, content_hash, revision_report
    from .revisions.history_view import resolve_revision

    if not folder.is_dir():
        from .errors import InputFileError

        raise InputFileError(f"--history {folder}: not a folder")
    with History(folder, create=False, check=True) as hist:
        revisions = hist.revisions()
    chosen = [resolve_revision(revisions, ref) for ref in refs]
    paths = [folder / r.drawing for r in chosen]
    newest = paths[-1]
    same = newest.is_file() and chosen[-1].content_hash is not None and content_hash(newest) == chosen[-1].content_hash
    return paths, [revision_report(r) for r in chosen], newest if same else None


def _report_of_drawing(path: Path, args, units: tuple[str, str] | None):
    """Solve a drawing in memory and build its report (nothing written)."""
    from .pipeline import analyse
    from .report import build_report
    from .settings import load_settings

    settings = load_settings(args.settings, path)
    an = analyse(path, settings, length_unit=args.length_unit)
    _warn_model(an, path)
    fu, lu = units if units else settings.output_units(an.model.length_unit)
    rep = build_report(an.model, an.determinacy, an.results, force_unit=fu, length_unit=lu,
                       deflection_limits=settings.deflection_limits(), drift=settings.drift_options())
    return rep, settings


def _drawing_for_report(path: Path, report) -> Path | None:
    """The drawing a JSON report was made from, if it can be found beside it."""
    name = report.get("source")
    if not name:
        return None
    for folder in (path.parent, path.parent.parent):
        cand = folder / str(name)
        if cand.is_file() and cand.suffix.lower() == ".dxf":
            return cand
    return None


def run_explain(args) -> int:
    """The ``explain`` command: hand-check sheets for points of one drawing.

    ``args``: ``drawing`` (Path), ``at`` (list of (X, Y) drawing points),
    ``result`` (case or combination name or None), ``out`` (folder or None:
    ``sheets`` beside the drawing), ``units`` ((force, length) or None),
    ``settings`` (Path or None), ``length_unit`` (str or None).
    Returns the exit status (0 written, 3 unstable frame).
    """
    from .handcheck import write_sheets_staged
    from .pipeline import EXIT_OK, EXIT_UNSTABLE, analyse
    from .settings import load_settings

    _output_folder(args.out, [args.drawing])
    drawing = Path(args.drawing)
    settings = load_settings(args.settings, drawing)
    analysis = analyse(drawing, settings, length_unit=args.length_unit)
    _warn_model(analysis)
    if not analysis.stable:
        _say(f"dxf2frame: the frame is unstable, no sheets written: {analysis.determinacy.detail}", CAUTION)
        return EXIT_UNSTABLE
    force_u, length_u = args.units or settings.output_units(analysis.model.length_unit)
    out = Path(args.out) if args.out else drawing.parent / "sheets"
    # staged and swapped in as one set: a failure leaves the previous sheets complete
    written = write_sheets_staged(analysis, out, points=list(args.at or []), result_name=args.result,
                                  force_unit=force_u, length_unit=length_u)
    n = sum(1 for p in written if p.suffix == ".md")
    _say(f"wrote {n} hand-check sheet(s) to {out} (Markdown + PNG per cut, all in {written[-1].name})", CAUTION)
    return EXIT_OK


def run_template(args) -> int:
    import ezdxf

    from .atomic import atomic_path
    from .errors import InputFileError
    from .staging import writing
    from .symbols import SYMBOL_SIZE, define_blocks, define_layers
    from .units import insunits_code, normalise_length_unit

    code = insunits_code(args.length_unit)
    if code is None:
        raise InputFileError(f"--length-unit must be one of m, mm, cm, ft, in, got {args.length_unit!r}")
    if args.path.exists():
        raise InputFileError(f"{args.path} exists already; choose a new file name")
    folder = args.path.parent if str(args.path.parent) else Path(".")
    if not folder.is_dir():
        raise InputFileError(f"{args.path}: the folder {folder} does not exist; create it first")
    doc = ezdxf.new("R2018", setup=True)
    doc.header["$INSUNITS"] = code
    define_layers(doc)
    define_blocks(doc, size=SYMBOL_SIZE.get(normalise_length_unit(args.length_unit), 1.0))
    with writing(args.path.name, folder), atomic_path(args.path) as tmp:
        doc.saveas(tmp)
    _say(f"wrote {args.path}: layers FRAME, FRAME-BRACES (crossings there stay separate), SUPPORTS, "
         "CONNECTIONS, LOADS and the symbol blocks (CROSSOVER keeps two crossing members apart)",
         CAUTION)
    return 0


def run_history(args, *, stream=None) -> int:
    """The ``history`` command: list the recorded revisions of a folder, or
    the trend of one member's or support's governing value (``--trend``,
    with ``--png`` a plot); ``--rebuild`` first rebuilds the history from
    the saved JSON reports.  Returns 0; bad input (no history, a damaged
    one, which is set aside, an unknown member) raises (exit 2)."""
    import sys

    from .errors import InputFileError
    from .revisions.history import History
    from .revisions.history_view import history_table, rebuild_history, series_views, trend, write_trend_png
    from .settings import load_settings

    stream = stream or sys.stdout
    folder = Path(args.folder)
    if not folder.is_dir():
        raise InputFileError(f"{folder}: not a folder")
    if args.png is not None and not args.trend:
        raise InputFileError("--png draws a trend: give --trend MEMBER (or --trend X,Y for a support)")
    if args.rebuild:
        n, notes, moved = rebuild_history(folder)
        for note in notes:
            print(f"note: {note}", file=stream)
        if moved is not None:
            print(f"the previous history was kept as {moved}", file=stream)
        print(f"rebuilt the history of {folder} from {n} report(s)", file=stream)
    settings = load_settings(args.settings, folder / "history.dxf")
    threshold = args.threshold if args.threshold is not None else settings.compare_threshold
    with History(folder, create=False, check=True) as hist:
        revisions = hist.revisions()
    if not revisions:
        print(f"no solves recorded in {hist.path}", file=stream)
        return 0
    views = series_views(revisions, threshold=threshold, units=args.units, series=args.series)
    if not args.trend:
        print(history_table(views), file=stream, end="")
        return 0
    if len(views) > 1:
        raise InputFileError(f"the history holds several series ({', '.join(v.series for v in views)}); "
                             "choose one with --series")
    view = views[0]
    quantity, values, unit = trend(view, args.trend, args.quantity)
    print(f"series {view.series}: {args.trend}, governing {quantity} [{unit}]", file=stream)
    for rev, v in zip(view.revisions, values):
        print(f"  {rev.name:<16} {'-' if v is None else f'{v:.6g}'}", file=stream)
    if args.png is not None:
        out = write_trend_png(view, args.trend, quantity, values, unit, Path(args.png))
        print(f"wrote {out}", file=stream)
    return 0


def run_watch(args) -> int:
    """The ``watch`` command: solve each drawing when it is saved, until
    Ctrl-C (exit 130) or SIGTERM (exit 143)."""
    import sys

    from .watch import Watch, describe_targets, watch_request

    req = watch_request(args)
    w = Watch([Path(t) for t in args.targets], req, settle=args.settle, initial=not args.changes_only)
    _say(describe_targets(w.targets, req), CAUTION)
    try:
        w.run()
    except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM as staging.Terminated
        code = getattr(exc, "exit_code", 130)
        why = "terminated" if code == 143 else "stopped"
        print(f"dxf2frame: watch {why} after {w.solves} solve(s); the results written are complete",
              file=sys.stderr)
        return code
    return 0
