"""What each CLI command does, given parsed arguments; returns the exit status.

Bad input raises :class:`~dxf2frame.errors.Dxf2FrameError`, which the CLI
prints as one line (exit 2).
"""
from __future__ import annotations

from collections import Counter
from pathlib import Path

from . import CAUTION
from .errors import one_line

__all__ = ["run_check", "run_solve", "run_compare", "run_explain", "run_template"]


def _say(*lines: str) -> None:
    print("\n".join(lines))


def run_check(args) -> int:
    from solver import check

    from .pipeline import EXIT_OK, EXIT_UNSTABLE
    from .reader import read_drawing
    from .settings import load_settings

    from .pipeline import combination_specs
    from .sketch_checks import (EQUAL_STIFFNESS_WARNING, absent_case_notes, combination_problems, section_lines,
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
    if getattr(args, "strict", False) and warnings:
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
                     debug=getattr(args, "debug", False))


def _output_folder(out: Path | None, inputs: list[Path]) -> None:
    """``--out`` of compare/explain names a folder: refuse an existing file
    (above all an input drawing) before anything is computed."""
    if out is None:
        return
    out = Path(out)
    for parent in (out, *out.parents):
        if parent.exists():
            if not parent.is_dir():
                from .errors import InputFileError

                what = "an input drawing" if any(parent.resolve() == Path(p).resolve() for p in inputs) else "a file"
                raise InputFileError(f"--out {out}: {parent} is {what}, not a folder; choose a folder for the results")
            return


def run_compare(args) -> int:
    from .compare import run_compare_command

    _output_folder(getattr(args, "out", None), list(args.revisions))
    return run_compare_command(args)


def run_explain(args) -> int:
    from .handcheck import run_explain_command

    _output_folder(getattr(args, "out", None), [args.drawing])
    return run_explain_command(args)


def run_template(args) -> int:
    import ezdxf

    from .atomic import atomic_path
    from .errors import InputFileError
    from .staging import writing
    from .symbols import define_blocks, define_layers

    units = {"in": 1, "inch": 1, "ft": 2, "feet": 2, "foot": 2, "mm": 4, "cm": 5, "m": 6}
    code = units.get(args.length_unit.lower())
    if code is None:
        raise InputFileError(f"--length-unit must be one of {', '.join(sorted(units))}, got {args.length_unit!r}")
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
