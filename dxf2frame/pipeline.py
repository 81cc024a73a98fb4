"""One function per command: read -> check -> solve -> combine -> write.

The CLI and the batch runner call these; they never print and never exit.
``solve_file`` never raises for bad input: it returns a :class:`FileOutcome`
whose status says what happened, so one bad drawing cannot stop a batch.
"""
from __future__ import annotations

import gc
import math
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .solver import CaseResult, Determinacy, check, combine, solve
from .solver.combinations import builtin_combinations, format_combination, parse_combination
from .solver.errors import MissingSectionError, SolverError, UnstableFrameError

from .atomic import same_file
from .drawing_model import DrawingModel
from .errors import AnalysisError, CannotWriteError, Dxf2FrameError, InputFileError, SettingsError, one_line
from .read.reader import read_file
from .read.sketch_checks import EQUAL_STIFFNESS_WARNING, combination_problems, stiffness_basis, unknown_case_error
from .settings import STANDARD_CASES, Settings, load_settings
from .staging import OutputSet, writing

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

__all__ = [
    "Analysis",
    "SolveRequest",
    "FileOutcome",
    "analyse",
    "combination_specs",
    "solve_file",
    "output_paths",
    "check_outputs",
    "EXIT_OK",
    "EXIT_BAD_INPUT",
    "EXIT_UNSTABLE",
    "EXIT_INTERNAL",
    "EXIT_CANNOT_WRITE",
]

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_UNSTABLE = 0, 1, 2, 3
#: an output could not be written (read-only folder, disk full, file size
#: limit, no permission): the user's machine, not the drawing; the previous
#: outputs are kept
EXIT_CANNOT_WRITE = CannotWriteError.exit_code  # 4


@dataclass
class Analysis:
    """Everything computed for one drawing (all in SI).

    ``document`` is the ezdxf document the model was read from, as opened
    (reading does not modify it): the result drawing is drawn into it
    instead of reading the file a second time.
    """

    model: DrawingModel
    settings: Settings
    determinacy: Determinacy
    cases: list[CaseResult] = field(default_factory=list)
    combinations: list[CaseResult] = field(default_factory=list)
    timings: dict[str, float] = field(default_factory=dict)
    document: "Drawing | None" = field(default=None, repr=False)

    @property
    def results(self) -> list[CaseResult]:
        """Load cases first, then combinations (the report's order)."""
        return self.cases + self.combinations

    @property
    def stable(self) -> bool:
        return self.determinacy.status != "unstable"


def combination_specs(settings: Settings, present: list[str]) -> list[tuple[str, dict[str, float], str]]:
    """(name, factors, family) of every combination the settings ask for,
    built-in families first, then the settings' own list ("user").

    A case name in the settings' list is mapped through ``[cases]``; one that
    is neither a case of the drawing (``present``) nor a standard case
    letter is a :class:`SettingsError` naming the formula; a standard case
    the drawing has no loads in contributes nothing (as in the built-in
    sets)."""
    specs: list[tuple[str, dict[str, float], str]] = []
    seen: set[str] = set()
    for family in settings.combinations_builtin:
        for name, factors in builtin_combinations(family, present):
            key = f"{family}:{name}"
            if key not in seen:
                seen.add(key)
                specs.append((name, factors, family))
    for text in settings.combinations_extra:
        try:
            factors = parse_combination(text)
        except ValueError as exc:
            raise SettingsError(f"cannot read combination {text!r}: {exc}", key="combinations.extra") from exc
        mapped: dict[str, float] = {}
        for c, f in factors.items():
            c = c if c in present else settings.case_name(c)
            mapped[c] = mapped.get(c, 0.0) + f
        factors = mapped
        unknown = [c for c in factors if c not in present and c not in STANDARD_CASES]
        if unknown:
            raise unknown_case_error(text, unknown[0], present)
        missing = [c for c in factors if c not in present]
        if missing:
            # a combination naming a case the drawing does not have: the
            # missing case contributes nothing (as with the built-in sets)
            factors = {c: f for c, f in factors.items() if c in present}
            if not factors:
                continue
        specs.append((format_combination(factors), factors, "user"))
    return specs


def strict_message(warnings: list[str]) -> str:
    """The error of ``--strict`` for a drawing with warnings."""
    return (f"--strict: {len(warnings)} warning(s) make this drawing bad input; the first: "
            f"{one_line(warnings[0])}")


def _member_where(model: DrawingModel, ids) -> tuple[str, str]:
    """(handle, layer) of the first member named in ``ids`` (for messages)."""
    for mid in ids:
        for m in model.frame.members:
            if m.id == mid or m.group == mid:
                return m.handle, m.layer
    return "", ""


def _solve_equal(frame) -> dict[str, CaseResult]:
    """Solve a frame without sections with equal relative stiffness (see
    :mod:`solver.relative`); the results carry no displacements."""
    from dxf2frame.solver.relative import equal_stiffness_section, without_deflections

    saved = [m.section for m in frame.members]
    section = equal_stiffness_section(frame)
    try:
        for m in frame.members:
            m.section = section
        cases = solve(frame)
    finally:
        for m, s in zip(frame.members, saved):
            m.section = s
    return {k: without_deflections(v) for k, v in cases.items()}


def _solve_checked(model: DrawingModel, det: Determinacy, *, equal: bool = False) -> dict[str, CaseResult]:
    """``solver.solve`` with its errors turned into bad-input errors that name
    the drawing entity, and every number of the results checked finite (a
    nearly singular model must not pass as an answer).  ``equal``: solve
    with equal relative stiffness (no sections given)."""
    frame = model.frame
    try:
        cases = _solve_equal(frame) if equal else solve(frame, determinate=det.status == "determinate")
    except MissingSectionError as exc:
        handle, layer = _member_where(model, exc.members)
        names = ", ".join(exc.members[:6]) + (" ..." if len(exc.members) > 6 else "")
        raise AnalysisError(
            f"the frame is statically indeterminate and {len(exc.members) or 'some'} member(s) have no "
            f"section ({names}); their stiffness decides the forces",
            handle=handle or exc.handle, layer=layer,
            hint="give E, A and I under [sections.default] (or per layer) in dxf2frame.toml",
        ) from None
    except UnstableFrameError as exc:
        where = ", ".join(f"({frame.nodes[n].x / model.unit_scale:.6g}, {frame.nodes[n].y / model.unit_scale:.6g})"
                          for n in exc.nodes[:4] if 0 <= n < len(frame.nodes))
        raise AnalysisError(
            "the stiffness of the frame is (nearly) singular although the determinacy check found it stable"
            + (f"; no stiffness at the joint(s) {where} {model.length_unit}" if where else ""),
            handle=exc.handle,
            hint="look for very short members, members of very different sizes, or springs of very "
                 "different stiffness there",
        ) from None
    except SolverError as exc:
        handle, layer = _member_where(model, exc.members)
        raise AnalysisError(exc.message, handle=exc.handle or handle, layer=layer) from None
    for res in cases.values():
        bad = _first_non_finite(res)
        if bad is not None:
            handle, layer = _member_where(model, [bad]) if bad else ("", "")
            raise AnalysisError(
                f"load case {res.name}: the analysis gave numbers that are not finite"
                + (f" in member {bad}" if bad else " in the reactions or displacements"),
                handle=handle, layer=layer,
                hint="the model is numerically ill-conditioned; look for very short members or extreme "
                     "values in the sections, springs or loads",
            )
    return cases


def _first_non_finite(res: CaseResult) -> str | None:
    """Id of the first member whose end forces are not finite, "" for a
    reaction or displacement that is not, None when all are finite."""
    bad = np.flatnonzero(~np.isfinite(np.asarray(res.members.end_forces, dtype=float)).all(axis=1))
    if len(bad):
        return list(res.members)[int(bad[0])]
    for r in res.reactions:
        if not all(math.isfinite(v) for v in (r.fx, r.fy, r.m)):
            return ""
    if res.displacements is not None and not np.all(np.isfinite(res.displacements)):
        return ""
    return None


def analyse(path: Path, settings: Settings | None = None, *, length_unit: str | None = None) -> Analysis:
    """Read, check and (when stable) solve one drawing.

    Raises :class:`~dxf2frame.errors.Dxf2FrameError` for bad input, among
    them :class:`~dxf2frame.errors.AnalysisError` when the solver cannot
    work with the model as drawn (members without sections in an
    indeterminate frame, a nearly singular stiffness, results that are not
    finite numbers), naming the drawing entity.  An unstable frame is not an
    error: ``Analysis.determinacy.status`` says so and no results are
    computed.
    """
    t = {}
    t0 = time.perf_counter()
    settings = settings if settings is not None else load_settings(None, path)
    model, document = read_file(path, settings, length_unit=length_unit)
    t["read"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    det = check(model.frame, unit_scale=model.unit_scale)
    t["check"] = time.perf_counter() - t0
    analysis = Analysis(model, settings, det, timings=t, document=document)
    # settings and stiffness problems are bad input: said before solving
    present = list(model.frame.cases())
    specs = combination_specs(settings, present)
    model.warnings.extend(combination_problems(settings, present, specs))
    if det.status == "unstable":
        return analysis
    basis = stiffness_basis(model.frame, det.status, settings)
    if basis == "equal":
        model.warnings.append(EQUAL_STIFFNESS_WARNING)

    t0 = time.perf_counter()
    cases = _solve_checked(model, det, equal=basis == "equal")
    t["solve"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    analysis.cases = list(cases.values())
    for name, factors, family in specs:
        analysis.combinations.append(combine(cases, factors, name, family=family))
    t["combine"] = time.perf_counter() - t0
    return analysis


# -- the solve command, one file -------------------------------------------------


@dataclass
class SolveRequest:
    """Options of ``solve`` that apply to every file.

    ``out``: for one input, a ``.dxf`` path for the result drawing or a
    folder; for many inputs, a folder.  Default: a folder ``solved`` beside
    each input.  ``report``: JSON path (one input only); default beside the
    output drawing.  ``units``: (force, length) of the report, e.g. ``("kN", "m")``
    (default: the settings' force unit and the drawing's length unit).
    """

    out: Path | None = None
    report: Path | None = None
    units: tuple[str, str] | None = None
    probes: list[tuple[float, float]] = field(default_factory=list)
    show: str | None = None
    png: bool = True
    csv: bool = True
    sheets: bool = False
    settings_path: Path | None = None
    length_unit: str | None = None
    single: bool = True
    strict: bool = False


@dataclass
class FileOutcome:
    """What happened to one drawing (picklable, for process pools)."""

    source: str
    status: str  # "ok" | "unstable" | "bad input" | "cannot write" | "internal error" | "worker killed"
    exit_code: int
    message: str = ""
    determinacy: str = ""
    degree: int | None = None
    max_m: float | None = None
    max_v: float | None = None
    max_n: float | None = None
    worst_deflection_ratio: float | None = None
    units: tuple[str, str] | None = None
    seconds: float = 0.0
    outputs: list[str] = field(default_factory=list)
    timings: dict[str, float] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    traceback: str = ""  # of an internal error, for --debug


def output_paths(source: Path, req: SolveRequest) -> dict[str, Path]:
    """Where the result drawing, report, CSV and PNG of ``source`` go."""
    if req.out is not None and req.single and req.out.suffix.lower() == ".dxf":
        drawing = req.out
    else:
        folder = req.out if req.out is not None else source.parent / "solved"
        drawing = folder / f"{source.stem}-results.dxf"
    paths = {
        "drawing": drawing,
        "report": req.report if (req.report is not None and req.single) else drawing.with_suffix(".json"),
        "csv": drawing.with_suffix(".csv"),
        "png": drawing.with_suffix(".png"),
    }
    return paths


def _governing(report: dict) -> dict[str, float | None]:
    """Largest |M|, |V|, |N| over the strength combinations (LRFD family,
    else every combination, else the cases) and the worst span/deflection
    ratio at service level (ASD family, else the unfactored cases: a
    deflection limit is checked under service loads, common practice),
    from a report dict."""
    results = report.get("results", [])
    combos = [r for r in results if r.get("kind") == "combination"]
    strength = [r for r in combos if r.get("family") == "LRFD"] or combos or results
    service = [r for r in combos if r.get("family") == "ASD"] or \
        [r for r in results if r.get("kind") == "case"]
    big: dict[str, float | None] = {"m": None, "v": None, "n": None}
    for r in strength:
        rows = r["members"]                         # a report Table: its columns, no row dicts
        for key in ("m", "v", "n"):
            both = np.abs(np.concatenate([rows.numbers(f"{key}_min"), rows.numbers(f"{key}_max")]))
            both = both[np.isfinite(both)]
            if len(both):
                v = float(both.max())
                big[key] = v if big[key] is None else max(big[key], v)
    ratio = None
    for r in service:
        d = r["members"].numbers("deflection_ratio")
        d = d[np.isfinite(d)]
        if len(d):
            ratio = float(d.min()) if ratio is None else min(ratio, float(d.min()))
    return {"max_m": big["m"], "max_v": big["v"], "max_n": big["n"], "worst_deflection_ratio": ratio}


def check_outputs(source: Path, paths: dict[str, Path]) -> None:
    """Refuse output paths that would overwrite the input drawing, each
    other, or an existing folder, and an output folder that is a file.

    Raises :class:`~dxf2frame.errors.SettingsError` (bad input, exit 2)
    before anything is computed or written.
    """
    seen: dict[Path, str] = {}
    for key, target in paths.items():
        if same_file(target, source):
            flag = "--report" if key == "report" else "--out"
            raise SettingsError(f"the {key} output {target} would overwrite the input drawing; choose another {flag}")
        if target.is_dir():
            raise SettingsError(f"the {key} output {target} is an existing folder; choose another --out")
        norm = target.absolute()
        if norm in seen:
            raise SettingsError(f"the {seen[norm]} and the {key} would both be written to {target}")
        seen[norm] = key
    for folder in {t.parent for t in paths.values()}:
        for parent in (folder, *folder.parents):
            if parent.exists():
                if not parent.is_dir():
                    raise InputFileError(f"cannot write into {folder}: {parent} is a file, not a folder")
                break


#: above this many members the preview shows the moment panel only
PREVIEW_PANEL_LIMIT = 2000


def _render_preview(drawing: Path, png: Path, analysis: Analysis, show: str,
                    force_u: str, length_u: str) -> list[str]:
    """PNG preview: one panel per diagram for a solved frame (moment, shear,
    axial, reactions with the deflected shape), the whole drawing for an
    unstable one."""
    from . import CAUTION
    from .draw import preview
    from .draw.style import result_layer_names

    source = analysis.document if analysis.document is not None else drawing  # drawn in memory, not re-read
    if not analysis.stable:
        return preview.render_panels_png(source, png, [("", [])])
    names = result_layer_names(analysis.settings.output_layers)
    loads = analysis.settings.layer("loads")
    panels = [
        (f"Bending moment M [{force_u}*{length_u}], drawn on the tension side", [names["moment"]]),
        (f"Shear V [{force_u}], + toward local +y", [names["shear"]]),
        (f"Axial force N [{force_u}], tension +", [names["axial"]]),
        ("Reactions, loads and deflected shape (exaggerated)", [names["reactions"], names["deflected"], loads]),
    ]
    if len(analysis.model.frame.members) > PREVIEW_PANEL_LIMIT:
        panels = panels[:1]
    hide = list(names.values()) + [loads]
    footer = f"{analysis.model.source.name}: showing {show}. {CAUTION}"
    return preview.render_panels_png(source, png, panels, hide=hide, footer=footer)


def _try_preview(drawing: Path, png: Path, analysis: Analysis, show: str, force_u: str, length_u: str,
                 warnings: list[str]) -> bool:
    """Render the preview; a preview that cannot be drawn is a warning (added
    to ``warnings``), never a failed solve: the drawing and report are
    the results.  Entities the preview left out are warnings too.  Returns
    whether a PNG was written."""
    try:
        notes = _render_preview(drawing, png, analysis, show, force_u, length_u)
    except MemoryError:
        warnings.append("preview: not drawn (not enough memory); the drawing and report are complete")
        return False
    except Exception as exc:  # noqa: BLE001 - matplotlib/ezdxf failures of any kind on odd content
        warnings.append(f"preview: not drawn ({type(exc).__name__}: {exc}); the drawing and report are complete")
        return False
    warnings.extend(notes or [])
    return png.exists()


def solve_file(source: Path | str, req: SolveRequest) -> FileOutcome:
    """Run the whole ``solve`` command on one drawing; never raises for bad input.

    Outputs are written into a hidden staging folder beside the result
    drawing and swapped in as one set only when all of them are complete
    (:class:`~dxf2frame.staging.OutputSet`): every target folder is checked
    writable before the first move, the previous outputs are kept aside
    until every move succeeded and put back on a failure.  So a run either
    replaces the whole previous set or leaves it complete and unchanged, and
    bad input leaves nothing behind.  An output that cannot be written (a
    read-only folder, a full disk, the file size limit) is status "cannot
    write", :data:`EXIT_CANNOT_WRITE`.  The input drawing is only read.

    The cyclic garbage collector is paused for the run: an ezdxf document is
    millions of small objects that every full collection walks again, while
    reference counting frees what the run drops anyway.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        return _solve_file(source, req)
    finally:
        if was_enabled:
            gc.enable()


def _solve_file(source: Path | str, req: SolveRequest) -> FileOutcome:
    """:func:`solve_file` with the collector paused."""
    from .report import report as report_mod  # writers are imported lazily: check-only runs stay light
    from .draw import writer  # the preview (matplotlib) is imported only when a PNG is asked for

    source = Path(source)
    t_start = time.perf_counter()
    outcome = FileOutcome(source=str(source), status="ok", exit_code=EXIT_OK)
    done = False
    try:
        settings = load_settings(req.settings_path, source)
        paths = output_paths(source, req)
        check_outputs(source, paths)
        analysis = analyse(source, settings, length_unit=req.length_unit)
        model, det = analysis.model, analysis.determinacy
        outcome.warnings = list(model.warnings) + [w for w in det.warnings if w not in model.warnings]
        if req.strict and outcome.warnings:
            raise Dxf2FrameError(strict_message(outcome.warnings))
        force_u, length_u = req.units or (settings.force_unit, model.length_unit)
        outcome.units = (force_u, length_u)
        outcome.determinacy, outcome.degree = det.status, det.degree

        if req.probes and analysis.results:
            # a probe off every member is bad input: say so before anything is written
            report_mod.locate_points(model, req.probes)
        final = paths["drawing"].parent
        what = f"the results of {source.name}"
        # everything is written into a staging folder first and the whole set
        # is swapped in at the end (staging.OutputSet): a failure leaves the
        # previous set of outputs complete and unchanged, or nothing
        with OutputSet(final, what=what) as out_set, writing(what, final):
            staged = {k: out_set.staged(p.name) for k, p in paths.items()}
            t0 = time.perf_counter()
            show = req.show or settings.combinations_draw
            if analysis.stable:
                writer.write_result_drawing(
                    source, staged["drawing"], model, det, analysis.results, show=show,
                    layers=settings.output_layers, force_unit=force_u, length_unit=length_u,
                    document=analysis.document,
                )
            else:
                writer.write_mechanism_drawing(source, staged["drawing"], model, det, settings.output_layers,
                                               document=analysis.document)
            analysis.timings["write"] = time.perf_counter() - t0
            # the report after the drawing: the writer's working arrays are
            # gone by then, so the two never hold memory at the same time
            t0 = time.perf_counter()
            rep = report_mod.assemble_report(
                model, det, analysis.results, force_unit=force_u, length_unit=length_u,
                probes=req.probes, deflection_limits=settings.deflection_limits(),
            )
            with_csv = req.csv and analysis.stable
            report_mod.write_json(rep, staged["report"], staged["csv"] if with_csv else None)
            analysis.timings["report"] = time.perf_counter() - t0
            written = ["drawing", "report"] + (["csv"] if with_csv else [])
            if req.png:
                t0 = time.perf_counter()
                drawn = _try_preview(staged["drawing"], staged["png"], analysis, show, force_u, length_u,
                                     outcome.warnings)
                analysis.timings["png"] = time.perf_counter() - t0
                if drawn:
                    written.append("png")
            if req.sheets and analysis.stable:
                from .handcheck import sheets as handcheck

                sheet_dir = out_set.staged(f"{paths['drawing'].stem}-sheets")
                handcheck.write_sheets(analysis, sheet_dir, points=req.probes,
                                       force_unit=force_u, length_unit=length_u)
                written.append("sheets")
                paths["sheets"] = final / sheet_dir.name
                staged["sheets"] = sheet_dir
            governing = _governing(rep) if analysis.stable else {}
            committed = out_set.commit({staged[k]: paths[k] for k in written})
        outcome.outputs = [str(t) for t in committed]

        outcome.timings = analysis.timings
        if not analysis.stable:
            outcome.status, outcome.exit_code = "unstable", EXIT_UNSTABLE
            outcome.message = one_line(det.detail)
        else:
            for k, v in governing.items():
                setattr(outcome, k, v)
            outcome.message = f"{det.status}" + (f", degree {det.degree}" if det.degree else "")
        done = True
    except CannotWriteError as exc:
        outcome.status, outcome.exit_code, outcome.message = "cannot write", EXIT_CANNOT_WRITE, one_line(str(exc))
    except Dxf2FrameError as exc:
        outcome.status, outcome.exit_code, outcome.message = "bad input", EXIT_BAD_INPUT, one_line(str(exc))
    except Exception as exc:  # noqa: BLE001 - a batch must survive anything
        outcome.status, outcome.exit_code = "internal error", EXIT_INTERNAL
        outcome.message = one_line(f"{type(exc).__name__}: {exc}")
        outcome.traceback = traceback.format_exc()
    finally:
        if not done:  # also on KeyboardInterrupt: the staging is gone, the previous outputs kept
            outcome.outputs = []
    outcome.seconds = time.perf_counter() - t_start
    return outcome
