"""What each CLI command does, given parsed arguments; returns the exit status.

Bad input raises :class:`~dxf2frame.errors.Dxf2FrameError`, which the CLI
prints as one line (exit 2).
"""
from __future__ import annotations

from collections import Counter
from pathlib import Path

from . import CAUTION
from .errors import one_line

__all__ = ["run_check", "run_solve", "run_compare", "run_explain", "run_template", "run_watch"]


def _say(*lines: str) -> None:
    print("\n".join(lines))


def run_check(args) -> int:
    from .solver import check

    from .pipeline import EXIT_OK, EXIT_UNSTABLE
    from .read.reader import read_drawing
    from .settings import load_settings

    from .pipeline import combination_specs
    from .read.sketch_checks import (EQUAL_STIFFNESS_WARNING, absent_case_notes, combination_problems, section_lines,
                                 stiffness_basis)

    settings = load_settings(args.settings, args.drawing)
    model = read_drawing(args.drawing, settings, length_unit=args.length_unit)
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
        length_unit=args.length_unit, single=single, strict=args.strict,
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
    for p in paths:
        if not p.is_file():
            raise InputFileError(f"{p}: no such file")
    units = args.units
    reports: list[dict] = []
    settings = None
    for p in paths:
        if p.suffix.lower() == ".dxf":
            rep, settings = _report_of_drawing(p, args, units)
        else:
            rep = load_json_report(p)
            settings = None
        reports.append(rep)
    newest = paths[-1]
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


def _report_of_drawing(path: Path, args, units: tuple[str, str] | None):
    """Solve a drawing in memory and build its report (nothing written)."""
    from .pipeline import analyse
    from .report import build_report
    from .settings import load_settings

    settings = load_settings(args.settings, path)
    an = analyse(path, settings, length_unit=args.length_unit)
    fu, lu = units if units else (settings.force_unit, an.model.length_unit)
    rep = build_report(an.model, an.determinacy, an.results, force_unit=fu, length_unit=lu,
                       deflection_limits=settings.deflection_limits())
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
    if not analysis.stable:
        _say(f"dxf2frame: the frame is unstable, no sheets written: {analysis.determinacy.detail}", CAUTION)
        return EXIT_UNSTABLE
    force_u, length_u = args.units or (settings.force_unit, analysis.model.length_unit)
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
    from .symbols import define_blocks, define_layers
    from .units import insunits_code

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
    define_blocks(doc)
    with writing(args.path.name, folder), atomic_path(args.path) as tmp:
        doc.saveas(tmp)
    _say(f"wrote {args.path}: layers FRAME, FRAME-BRACES (crossings there stay separate), SUPPORTS, "
         "CONNECTIONS, LOADS and the symbol blocks (CROSSOVER keeps two crossing members apart)",
         CAUTION)
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
