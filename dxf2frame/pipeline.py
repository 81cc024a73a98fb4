"""One function per command: read -> check -> solve -> combine -> write.

The CLI and the batch runner call these; they never print and never exit.
``solve_file`` never raises for bad input: it returns a :class:`FileOutcome`
whose status says what happened, so one bad drawing cannot stop a batch.
"""
from __future__ import annotations

import math
import os
import shutil
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

from solver import CaseResult, Determinacy, check, combine, solve
from solver.combinations import builtin_combinations, format_combination, parse_combination

from .drawing_model import DrawingModel
from .errors import Dxf2FrameError, SettingsError
from .reader import read_drawing
from .settings import Settings, load_settings

__all__ = [
    "Analysis",
    "SolveRequest",
    "FileOutcome",
    "analyse",
    "combination_specs",
    "solve_file",
    "output_paths",
    "EXIT_OK",
    "EXIT_BAD_INPUT",
    "EXIT_UNSTABLE",
    "EXIT_INTERNAL",
]

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_UNSTABLE = 0, 1, 2, 3


@dataclass
class Analysis:
    """Everything computed for one drawing (all in SI)."""

    model: DrawingModel
    settings: Settings
    determinacy: Determinacy
    cases: list[CaseResult] = field(default_factory=list)
    combinations: list[CaseResult] = field(default_factory=list)
    timings: dict[str, float] = field(default_factory=dict)

    @property
    def results(self) -> list[CaseResult]:
        """Load cases first, then combinations (the report's order)."""
        return self.cases + self.combinations

    @property
    def stable(self) -> bool:
        return self.determinacy.status != "unstable"


def combination_specs(settings: Settings, present: list[str]) -> list[tuple[str, dict[str, float], str]]:
    """(name, factors, family) of every combination the settings ask for,
    built-in families first, then the settings' own list ("user")."""
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
        missing = [c for c in factors if c not in present]
        if missing:
            # a combination naming a case the drawing does not have: the
            # missing case contributes nothing (as with the built-in sets)
            factors = {c: f for c, f in factors.items() if c in present}
            if not factors:
                continue
        specs.append((format_combination(factors), factors, "user"))
    return specs


def analyse(path: Path, settings: Settings | None = None, *, length_unit: str | None = None) -> Analysis:
    """Read, check and (when stable) solve one drawing.

    Raises :class:`~dxf2frame.errors.Dxf2FrameError` for bad input.  An
    unstable frame is not an error: ``Analysis.determinacy.status`` says so
    and no results are computed.
    """
    t = {}
    t0 = time.perf_counter()
    settings = settings if settings is not None else load_settings(None, path)
    model = read_drawing(path, settings, length_unit=length_unit)
    t["read"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    det = check(model.frame)
    t["check"] = time.perf_counter() - t0
    analysis = Analysis(model, settings, det, timings=t)
    if det.status == "unstable":
        return analysis

    t0 = time.perf_counter()
    cases = solve(model.frame, determinate=det.status == "determinate")
    t["solve"] = time.perf_counter() - t0

    t0 = time.perf_counter()
    analysis.cases = list(cases.values())
    for name, factors, family in combination_specs(settings, list(cases)):
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
    output drawing.  ``units``: ``"FORCE,LENGTH"`` for the report.
    """

    out: Path | None = None
    report: Path | None = None
    units: str | None = None
    probes: list[tuple[float, float]] = field(default_factory=list)
    show: str | None = None
    png: bool = True
    csv: bool = True
    sheets: bool = False
    settings_path: Path | None = None
    length_unit: str | None = None
    single: bool = True


@dataclass
class FileOutcome:
    """What happened to one drawing (picklable, for process pools)."""

    source: str
    status: str  # "ok" | "unstable" | "bad input" | "internal error"
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


def _report_units(req: SolveRequest, model: DrawingModel, settings: Settings) -> tuple[str, str]:
    if req.units:
        parts = [p.strip() for p in req.units.split(",")]
        if len(parts) != 2 or not all(parts):
            raise SettingsError(f"--units takes FORCE,LENGTH (for example kN,m or kip,ft), got {req.units!r}")
        return parts[0], parts[1]
    return settings.force_unit, model.length_unit


def _governing(report: dict) -> dict[str, float | None]:
    """Largest |M|, |V|, |N| over combinations (or cases when there are
    none) and the worst span/deflection ratio, from a report dict."""
    results = report.get("results", [])
    combos = [r for r in results if r.get("kind") == "combination"] or results
    big = {"m": None, "v": None, "n": None}
    ratio = None
    for r in combos:
        for m in r.get("members", []):
            for key in ("m", "v", "n"):
                v = max(abs(m[f"{key}_min"]), abs(m[f"{key}_max"]))
                big[key] = v if big[key] is None else max(big[key], v)
            d = m.get("deflection_ratio")
            if d is not None and math.isfinite(d):
                ratio = d if ratio is None else min(ratio, d)
    return {"max_m": big["m"], "max_v": big["v"], "max_n": big["n"], "worst_deflection_ratio": ratio}


def solve_file(source: Path | str, req: SolveRequest) -> FileOutcome:
    """Run the whole ``solve`` command on one drawing; never raises for bad input."""
    from . import report as report_mod  # writers are imported lazily: check-only runs stay light
    from . import writer, preview

    source = Path(source)
    t_start = time.perf_counter()
    outcome = FileOutcome(source=str(source), status="ok", exit_code=EXIT_OK)
    try:
        settings = load_settings(req.settings_path, source)
        analysis = analyse(source, settings, length_unit=req.length_unit)
        model, det = analysis.model, analysis.determinacy
        force_u, length_u = _report_units(req, model, settings)
        outcome.units = (force_u, length_u)
        outcome.determinacy, outcome.degree = det.status, det.degree

        t0 = time.perf_counter()
        rep = report_mod.build_report(
            model, det, analysis.results, force_unit=force_u, length_unit=length_u,
            probes=req.probes, deflection_limits=settings.deflection_limits(),
        )
        analysis.timings["report"] = time.perf_counter() - t0
        paths = output_paths(source, req)
        final = paths["drawing"].parent
        final.mkdir(parents=True, exist_ok=True)
        if paths["drawing"].resolve() == source.resolve():
            raise SettingsError("the output drawing would overwrite the input; choose another --out")
        # everything is written into a staging folder first and moved into
        # place at the end, so a failure leaves no partial output
        staging = Path(tempfile.mkdtemp(prefix=".dxf2frame-", dir=final))
        try:
            staged = {k: staging / p.name for k, p in paths.items()}
            t0 = time.perf_counter()
            if analysis.stable:
                show = req.show or settings.combinations_draw
                writer.write_result_drawing(
                    source, staged["drawing"], model, det, analysis.results, show=show,
                    settings=settings, force_unit=force_u, length_unit=length_u,
                )
            else:
                writer.write_mechanism_drawing(source, staged["drawing"], model, det, settings)
            analysis.timings["write"] = time.perf_counter() - t0
            report_mod.write_json(rep, staged["report"])
            written = ["drawing", "report"]
            if req.csv and analysis.stable:
                report_mod.write_csv(rep, staged["csv"])
                written.append("csv")
            if req.png:
                t0 = time.perf_counter()
                preview.render_png(staged["drawing"], staged["png"])
                analysis.timings["png"] = time.perf_counter() - t0
                written.append("png")
            if req.sheets and analysis.stable:
                from . import handcheck

                sheet_dir = staging / f"{paths['drawing'].stem}-sheets"
                handcheck.write_sheets(analysis, sheet_dir, points=req.probes,
                                       force_unit=force_u, length_unit=length_u)
                written.append("sheets")
                paths["sheets"] = final / sheet_dir.name
                staged["sheets"] = sheet_dir
            for key in written:
                target = paths[key]
                target.parent.mkdir(parents=True, exist_ok=True)
                if staged[key].is_dir() and target.exists():
                    shutil.rmtree(target)
                os.replace(staged[key], target)
                outcome.outputs.append(str(target))
        finally:
            shutil.rmtree(staging, ignore_errors=True)

        outcome.timings = analysis.timings
        if not analysis.stable:
            outcome.status, outcome.exit_code = "unstable", EXIT_UNSTABLE
            outcome.message = det.detail
        else:
            for k, v in _governing(rep).items():
                setattr(outcome, k, v)
            outcome.message = f"{det.status}" + (f", degree {det.degree}" if det.degree else "")
    except Dxf2FrameError as exc:
        outcome.status, outcome.exit_code, outcome.message = "bad input", EXIT_BAD_INPUT, str(exc)
        outcome.outputs = []
    except Exception as exc:  # noqa: BLE001 - a batch must survive anything
        outcome.status, outcome.exit_code = "internal error", EXIT_INTERNAL
        outcome.message = f"{type(exc).__name__}: {exc}"
        outcome.outputs = []
    outcome.seconds = time.perf_counter() - t_start
    return outcome
