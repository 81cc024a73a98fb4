"""One function per command: read -> check -> solve -> combine -> write.

The CLI and the batch runner call these; they never print and never exit.
``solve_file`` never raises for bad input: it returns a :class:`FileOutcome`
whose status says what happened, so one bad drawing cannot stop a batch.
"""
from __future__ import annotations

import contextlib
import gc
import math
import time
import traceback
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .solver import CaseResult, Determinacy, check, combine, solve
from .solver.combinations import builtin_combinations, format_combination, parse_combination
from .solver.errors import MissingSectionError, SolverError, UnstableFrameError

from .atomic import same_file
from .background_save import BackgroundSave
from .forked import Forked, can_fork, fork_call
from .drawing_model import DrawingModel
from .errors import AnalysisError, CannotWriteError, Dxf2FrameError, InputFileError, SettingsError, one_line
from .read.reader import read_file
from .read.sketch_checks import EQUAL_STIFFNESS_WARNING, combination_problems, stiffness_basis, unknown_case_error
from .settings import STANDARD_CASES, Settings, load_settings
from .staging import OutputSet, writing

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

    from .draw.writer import DrawingSummary

    from .further import Further

__all__ = [
    "Analysis",
    "SolveRequest",
    "FileOutcome",
    "analyse",
    "combination_specs",
    "add_self_weight_loads",
    "storeys_of",
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
    # pattern live load (issue 18): report.patterns.PatternedCase per patterned case
    patterns: list = field(default_factory=list)
    # second order and moving loads (dxf2frame.further.Further), set by solve
    further: "Further | None" = field(default=None, repr=False)

    @property
    def buckled(self):
        """The BucklingResult of a strength combination whose load reaches
        its elastic critical load (reported as unstable), or None."""
        return self.further.buckled if self.further is not None else None

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
    return _both_ways(specs, settings)


def _both_ways(specs: list[tuple[str, dict[str, float], str]], settings: Settings
               ) -> list[tuple[str, dict[str, float], str]]:
    """Every combination holding a reversible case (``[combinations]
    reversible``, mapped through ``[cases]``) followed by its mirror with
    that factor negated, per family (``solver.with_reversals``; the names
    show the sign)."""
    from .solver import with_reversals

    rev = [settings.case_name(c) for c in settings.combinations_reversible]
    if not rev:
        return specs
    out: list[tuple[str, dict[str, float], str]] = []
    for family in dict.fromkeys(f for _, _, f in specs):
        mine = [(n, f) for n, f, fam in specs if fam == family]
        out += [(n, f, family) for n, f in with_reversals(mine, rev)]
    return out


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


def storeys_of(model: DrawingModel, settings: Settings):
    """The frame's storeys (``solver.find_storeys``; ``[drift] levels`` in
    drawing units when given); their warnings (guesses) join
    ``model.warnings``, so ``check``, ``solve`` and ``--strict`` agree.

    Raises :class:`SettingsError` (key ``drift.levels``) for a level with no
    column top on it."""
    from .report.storeys import model_storeys

    st = model_storeys(model, settings.drift_levels)
    model.warnings.extend(w for w in st.warnings if w not in model.warnings)
    return st


#: densities of building materials [kg/m**3] (timber about 500, concrete
#: 2400, steel 7850, lead 11,340: common practice); outside, a unit slip
DENSITY_PLAUSIBLE = (100.0, 25_000.0)


def add_self_weight_loads(model: DrawingModel, settings: Settings) -> None:
    """With ``[self_weight] case`` set: a gravity load rho*g*A along every
    member (``solver.add_self_weight``), in that case (mapped through
    ``[cases]``), and a line in ``model.notes`` with the total.

    Raises :class:`SettingsError` naming the layer of a member whose section
    has no density or no area."""
    from .solver import STANDARD_GRAVITY, add_self_weight

    case = settings.self_weight_case
    if case is None or not model.frame.members:
        return
    frame = model.frame
    for m in frame.members:
        if m.section is None:
            raise SettingsError(f"[self_weight] needs the area of every member; layer {m.layer} has no section "
                                f"(member {m.group}, handle {m.handle})", key="self_weight.case")
        if settings.density_for(m.layer) is None:
            raise SettingsError(f"[self_weight] needs a density for layer {m.layer} (member {m.group}, handle "
                                f"{m.handle}): give density = \"7850 kg/m**3\" or material = \"steel\" in its "
                                "section or in [sections.default]", key="self_weight.case")
    for layer in sorted({m.layer.upper() for m in frame.members}):
        rho = settings.density_for(layer)
        if not DENSITY_PLAUSIBLE[0] <= rho <= DENSITY_PLAUSIBLE[1]:
            key = f'[sections."{layer}"]' if layer in settings.section_density else "[sections.default]"
            model.warnings.append(
                f"self-weight: layer {layer} ({key}) has a density of {rho:.5g} kg/m**3, outside "
                f"{DENSITY_PLAUSIBLE[0]:g}-{DENSITY_PLAUSIBLE[1]:g} kg/m**3 where building materials lie "
                f"(timber about 500, concrete 2400, steel 7850: common practice); check its unit")
    case = settings.case_name(case)
    loads = add_self_weight(frame, lambda m: settings.density_for(m.layer), case)
    length = {m.id: frame.geometry(m)[0] for m in frame.members}
    total = sum(-ld.q1[1] * length[ld.member] for ld in loads)           # N
    model.notes.append(f"self-weight: {len(loads)} member loads, {total / 1e3:.4g} kN in all, in load case {case} "
                       f"(density x g x A along each member, g = {STANDARD_GRAVITY} m/s**2; densities from "
                       "[sections])")


def _add_patterns(analysis: Analysis, cases: dict[str, CaseResult]) -> None:
    """Pattern envelopes of the ``[patterns] cases`` (see report.patterns);
    a wanted case the drawing lacks is a warning.  Skipped for a frame
    solved with equal relative stiffness (no displacements needed, but the
    parts would be solved with other stiffness than the cases)."""
    settings, model = analysis.settings, analysis.model
    if not settings.pattern_cases or not model.frame.members:
        return
    from .report.patterns import pattern_cases

    wanted = [settings.case_name(c) for c in settings.pattern_cases]
    if any(r.displacements is None for r in cases.values()) and analysis.determinacy.status != "determinate":
        model.warnings.append("[patterns]: no pattern envelope for a frame solved without sections "
                              "(give sections: the arrangement of the parts depends on the stiffness)")
        return
    analysis.patterns, notes = pattern_cases(model.frame, cases, analysis.combinations, wanted,
                                             settings.pattern_by,
                                             determinate=analysis.determinacy.status == "determinate")
    model.warnings.extend(notes)
    for pc in analysis.patterns:
        model.notes.append(f"pattern load: {pc.case} arranged {pc.by} by {pc.by} ({len(pc.envelope.parts)} parts) "
                           f"in {len(pc.results)} result(s); the envelopes with the governing patterns are in the "
                           "report (patterns) and the summary; the diagrams show the case as drawn")


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
    add_self_weight_loads(model, settings)
    storeys_of(model, settings)
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
    if not present:
        raise AnalysisError(
            "the drawing has no loads, so there is nothing to solve",
            hint=f"put load blocks on layer '{settings.layers['loads']}' (or set [self_weight] case); "
                 "'dxf2frame check' reports the frame without loads")
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
    _add_patterns(analysis, cases)
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
    (default: the settings' ``[units] output_*``, else kN and m for a metric
    drawing, kip and ft for a US one).  ``scales``: diagram scales shared
    by the drawings of a batch {"moment"|"shear"|"axial": SI units per
    metre on the drawing}; the settings' ``[drawing.scales]`` win.
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
    # -- revision history (issue 19) --
    #: record the solve in the folder's revision history: True, False, or
    #: None for the settings' ``[history] record``
    history: bool | None = None
    scales: dict[str, float] | None = None
    # influence lines (--influence X,Y), drawing units
    influence: list[tuple[float, float]] = field(default_factory=list)

    def __post_init__(self) -> None:
        # paths given as strings, as a script would write them
        for name in ("out", "report", "settings_path"):
            value = getattr(self, name)
            if value is not None and not isinstance(value, Path):
                setattr(self, name, Path(value))


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
    # storeys and drift (issue 18): worst service drift as h / n, and whether
    # any span/deflection or drift check fails
    worst_drift_ratio: float | None = None
    deflection_fails: bool = False
    drift_fails: bool = False
    units: tuple[str, str] | None = None
    seconds: float = 0.0
    outputs: list[str] = field(default_factory=list)
    timings: dict[str, float] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    traceback: str = ""  # of an internal error, for --debug
    probe_lines: list[str] = field(default_factory=list)   # N, V, M at each --probe, for the console


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
        "reactions": drawing.with_name(f"{drawing.stem}-reactions.csv"),
        "png": drawing.with_suffix(".png"),
    }
    paths.update(_storey_paths(drawing))
    if req.influence:
        paths["influence"] = drawing.with_name(f"{drawing.stem}-influence.csv")
    return paths


def _storey_paths(drawing: Path) -> dict[str, Path]:
    """The storey drift and node CSVs beside the member CSV."""
    return {"drift_csv": drawing.with_name(f"{drawing.stem}-drift.csv"),
            "nodes_csv": drawing.with_name(f"{drawing.stem}-nodes.csv")}


def _storey_checks(report: dict) -> dict:
    """Worst service drift (as h / n, from the report's ``storeys``) and
    which checks fail (from its ``checks``)."""
    ratios = [abs(s["ratio"]) for s in report.get("storeys", []) if s.get("ratio")]
    kinds = {c["check"] for c in report.get("checks", [])}
    return {"worst_drift_ratio": (1.0 / max(ratios)) if ratios else None,
            "deflection_fails": "deflection" in kinds, "drift_fails": "drift" in kinds}


def _strength_results(results: list[dict]) -> list[dict]:
    """The report's strength results: the LRFD combinations, else every
    combination, else the load cases."""
    combos = [r for r in results if r.get("kind") == "combination"]
    return [r for r in combos if r.get("family") == "LRFD"] or combos or results


def _governing(report: dict) -> dict[str, float | None]:
    """Largest |M|, |V|, |N| over the strength combinations (LRFD family,
    else every combination, else the cases) and the worst span/deflection
    ratio at service level (ASD family, else the unfactored cases: a
    deflection limit is checked under service loads, common practice),
    from a report dict."""
    results = report.get("results", [])
    combos = [r for r in results if r.get("kind") == "combination"]
    strength = _strength_results(results)
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
    # round-off (an axial force of 1e-16 kN in a beam with vertical loads)
    # is no governing value: below 1e-9 of the larger of max |V| and max |N|
    # (for M: of that force times one length unit) it reads 0
    noise = 1e-9 * max((v for v in (big["v"], big["n"]) if v is not None), default=0.0)
    for key in ("m", "v", "n"):
        if big[key] is not None and big[key] <= noise:
            big[key] = 0.0
    ratio = None
    for r in service:
        d = r["members"].numbers("deflection_ratio")
        d = d[np.isfinite(d)]
        if len(d):
            ratio = float(d.min()) if ratio is None else min(ratio, float(d.min()))
    return {"max_m": big["m"], "max_v": big["v"], "max_n": big["n"], "worst_deflection_ratio": ratio}


def _pattern_drawing(analysis: Analysis, show: str) -> tuple[list[CaseResult], str]:
    """What the result drawing draws: ``show = "patterns:<result>"`` (a
    patterned case or a combination holding one) draws the envelope of the
    arrangements that govern M somewhere (each built as a result of family
    ``patterns:<result>``); anything else the results as they are."""
    if not show.lower().startswith("patterns:"):
        return _reported(analysis), show
    want = show.partition(":")[2].strip()
    squash = lambda s: "".join(s.split()).lower()  # noqa: E731
    for pc in analysis.patterns:
        for name, base, factor in pc.results:
            if squash(name) != squash(want):
                continue
            env = pc.envelope.station_envelope("M", factor=factor, base=base)
            chosen = dict.fromkeys(list(env["max_parts"]) + list(env["min_parts"]))
            family = f"patterns:{name}"
            extra = []
            for parts in chosen:
                r = pc.envelope.pattern_result(parts, factor=factor, base=base)
                extra.append(replace(r, family=family))
            return _reported(analysis) + extra, f"envelope:{family}"
    names = [n for pc in analysis.patterns for n, _, _ in pc.results]
    raise SettingsError(f"no patterned result named {want!r} to draw; patterned: "
                        + (", ".join(names) or "none (set [patterns] cases)"), key="combinations.draw")


def _add_pattern_report(rep: dict, analysis: Analysis, force_u: str, length_u: str) -> None:
    """The report's ``patterns`` (see report.patterns) when any case is patterned."""
    if not analysis.patterns:
        return
    from .report.patterns import pattern_entries
    from .report.report import unit_factors

    uf = unit_factors(force_u, length_u)
    rep["patterns"] = pattern_entries(analysis.model.frame, analysis.patterns, uf.force, uf.length)


def _pattern_governing(report: dict, governing: dict) -> None:
    """Raise the summary's largest |M|, |V|, |N| to the pattern envelopes of
    the strength results (as :func:`_governing` picks them)."""
    if not report.get("patterns"):
        return
    strength = {r["name"] for r in _strength_results(report.get("results", []))}
    for p in report["patterns"]:
        for res in p["results"]:
            if res["name"] not in strength:
                continue
            for m in res["members"]:
                for q in ("m", "v", "n"):
                    vals = [abs(v) for v in (m[f"{q}_max"], m[f"{q}_min"]) if v is not None]
                    if vals:
                        cur = governing.get(f"max_{q}")
                        governing[f"max_{q}"] = max(vals) if cur is None else max(cur, max(vals))


def _write_storey_csvs(report: dict, staged: dict[str, Path]) -> list[str]:
    """The drift and node CSVs (see report.storeys); returns their keys."""
    from .report.storeys import write_drift_csv, write_nodes_csv

    write_drift_csv(report, staged["drift_csv"])
    write_nodes_csv(report, staged["nodes_csv"])
    return ["drift_csv", "nodes_csv"]


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
    if not analysis.stable or analysis.buckled is not None:
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
    hide = list(names.values()) + [loads] + _further_layer_names(analysis)
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


def _history_on(req: SolveRequest, settings: Settings) -> bool:
    return settings.history_record if req.history is None else bool(req.history)


def _history_digest(source: Path, req: SolveRequest, settings: Settings) -> str | None:
    """The content hash of the drawing as it is before it is read, when the
    solve is to be recorded in the revision history."""
    if not _history_on(req, settings):
        return None
    from .revisions.history import content_hash

    return content_hash(source)


def _record_history(source: Path, req: SolveRequest, settings: Settings, analysis: Analysis, report: dict,
                    digest: str | None, report_path: Path, warnings: list[str]) -> None:
    """Record the finished report in the folder's revision history (after the
    output set is committed).  A history that cannot be written is a
    warning (added to ``warnings``), never a failed solve; a damaged one
    is set aside first (renamed, never deleted) and a new one started."""
    if not _history_on(req, settings):
        return
    import sqlite3

    from .revisions.history import DamagedHistoryError, HistoryError, document_properties, record_report

    props = document_properties(analysis.document)
    kw = dict(digest=digest, properties=props, label_property=settings.history_label_property,
              report_path=report_path)
    try:
        try:
            record_report(report, source, **kw)
        except DamagedHistoryError as exc:
            warnings.append(f"history: {one_line(str(exc))}; a new history starts with this solve")
            record_report(report, source, **kw)
    except HistoryError as exc:
        warnings.append(f"history: not recorded: {one_line(str(exc))}")
    except (OSError, sqlite3.Error) as exc:
        warnings.append(f"history: not recorded in {source.parent}: {one_line(f'{type(exc).__name__}: {exc}')}")


def drawing_scale_options(settings: Settings, model, req: "SolveRequest") -> dict:
    """The writer's text height and fixed diagram scales (the settings'
    ``[drawing]``, then the scales a batch shares, ``req.scales``, for the
    diagrams the settings leave free) and the probe points to mark."""
    scales = {**(req.scales or {}), **settings.diagram_scales}
    return {"text_height": settings.text_height_for(model.unit_scale), "scales": scales,
            "probes": list(req.probes)}


# -- second order and moving loads (dxf2frame.further) ------------------------------


#: members from which the alpha_cr check runs on the second core while the
#: result diagrams are drawn (below that it takes less time than the fork)
STABILITY_FORK_MEMBERS = 1000


def _run_further(analysis: Analysis, req: SolveRequest) -> None:
    """The second-order step and the moving loads into ``analysis.further``;
    their warnings join the model's."""
    from .further import run_further

    analysis.further = run_further(analysis, req.influence, analysis.model.warnings)


def _further_forks(analysis: Analysis, req: SolveRequest) -> bool:
    """The alpha_cr check runs on the second core while the result diagrams
    are drawn (:func:`_start_further`, :func:`_join_further`): a large
    frame whose check is the default alpha_cr alone (no P-Delta results to
    draw, no ``--strict`` refusal to make before anything is drawn), where
    a fork is safe (:func:`dxf2frame.forked.can_fork`)."""
    return (analysis.settings.second_order == "check" and not req.strict and analysis.stable
            and len(analysis.model.frame.members) >= STABILITY_FORK_MEMBERS and can_fork())


def _start_further(analysis: Analysis) -> "Forked":
    """The alpha_cr check started in a forked child."""
    from .further import stability_with_warnings

    return fork_call(stability_with_warnings, analysis, what="the alpha_cr check")


def _join_further(job: "Forked | None", analysis: Analysis, req: SolveRequest, outcome: FileOutcome) -> None:
    """Collect a check started by :func:`_start_further` (nothing when it
    ran in this process or was collected already), then the moving loads;
    the warnings join the model's and the outcome's."""
    if job is None or not job.running:
        return
    from .further import run_further

    stability, said = job.wait()
    warnings = analysis.model.warnings
    warnings += [w for w in said if w not in warnings]
    analysis.further = run_further(analysis, req.influence, warnings, stability=stability)
    _gather_warnings(outcome, analysis)


def _gather_warnings(outcome: FileOutcome, analysis: Analysis) -> None:
    """The model's and the determinacy check's warnings, in that order (as
    the report gives them)."""
    from .report.report import report_warnings

    outcome.warnings = report_warnings(analysis.model, analysis.determinacy)


@contextlib.contextmanager
def _stopped_at_exit(job: "Forked | None"):
    """Kill and reap a forked check still running when the block ends (a
    failure before it was collected)."""
    try:
        yield
    finally:
        if job is not None and job.running:
            job.stop()


class _LateBuckling(Exception):
    """The alpha_cr check collected while drawing found a combination that
    buckles: the result drawing is abandoned for the buckled one."""


def _reported(analysis: Analysis) -> list[CaseResult]:
    """Results for the report and drawing: none when a combination buckles
    (never solved into nonsense), else the cases, combinations and the
    second-order results."""
    if analysis.buckled is not None:
        return []
    return analysis.results + (analysis.further.results if analysis.further is not None else [])


def _further_layer_names(analysis: Analysis) -> list[str]:
    """The buckling, moving and influence layers (kept out of the preview's
    diagram panels)."""
    from .draw import further_layer_names

    return list(further_layer_names(analysis.settings.output_layers).values())


def _buckling_message(b) -> str:
    return (f"combination {b.name} buckles: its load reaches the elastic critical load (alpha_cr = "
            f"{b.alpha_cr:.3g} <= 1); no results, the buckled shape is drawn")


def _write_buckled(source: Path, out: Path, analysis: Analysis) -> None:
    from .draw import write_buckling_drawing

    write_buckling_drawing(source, out, analysis.model, analysis.determinacy, analysis.further.stability,
                           layers=analysis.settings.output_layers, document=analysis.document,
                           text_height=analysis.settings.text_height_for(analysis.model.unit_scale))


def _further_layers(analysis: Analysis):
    """The writer's ``extra``: buckled shape, vehicle axles, influence lines
    (looked up when the writer calls it: a check run on the second core is
    collected by then)."""
    def draw(doc, content):
        fu = analysis.further
        if fu is None or (fu.stability is None and fu.moving is None):
            return None
        from .draw import annotate_further

        return annotate_further(doc, analysis.model, fu.stability, fu.moving,
                                layers=analysis.settings.output_layers, content=content,
                                text_height=analysis.settings.text_height_for(analysis.model.unit_scale))
    return draw


def _add_further(rep: dict, analysis: Analysis, force_u: str, length_u: str, influence_csv: Path | None) -> None:
    """The report's "second_order" and "moving" sections; the influence CSV."""
    fu = analysis.further
    if fu is None:
        return
    from .further import write_influence_csv
    from .report import unit_factors

    uf = unit_factors(force_u, length_u)
    fu.add_to_report(rep, analysis.model.frame, uf)
    if influence_csv is not None and fu.moving is not None and fu.moving.influence:
        write_influence_csv(fu.moving, influence_csv, uf)


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

    With the revision history on (``req.history``, else the settings'
    ``[history] record``) the finished report is recorded in the history
    of the drawing's folder once the output set is committed
    (:mod:`dxf2frame.revisions.history`); a history that cannot be written
    is a warning of the outcome, never a failed solve.

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
    """:func:`solve_file` with the collector paused: prepare (every check of
    bad input before anything is written), write the output set, record the
    outcome; every failure becomes the outcome's status."""
    source = Path(source)
    t_start = time.perf_counter()
    outcome = FileOutcome(source=str(source), status="ok", exit_code=EXIT_OK)
    done = False
    try:
        run = _prepare(source, req, outcome)
        committed, governing, rep = _write_outputs(run, req, outcome)
        outcome.outputs = [str(t) for t in committed]
        _record_history(run.source, req, run.settings, run.analysis, rep, run.digest, run.paths["report"],
                        outcome.warnings)
        _record(outcome, run.analysis, governing)
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


@dataclass
class _Run:
    """One drawing ready to be written: its analysis, output paths and units."""

    source: Path
    settings: Settings
    paths: dict[str, Path]
    analysis: Analysis
    force_unit: str
    length_unit: str
    digest: str | None = None  # content hash for the revision history, taken before reading
    further_job: "Forked | None" = None  # the alpha_cr check running on the second core, if it does


def _prepare(source: Path, req: SolveRequest, outcome: FileOutcome) -> _Run:
    """Settings, output paths, the analysis and every refusal that must come
    before a file is written (strict warnings, probes off every member)."""
    from .report import report as report_mod  # imported lazily: check-only runs stay light

    settings = load_settings(req.settings_path, source)
    paths = output_paths(source, req)
    check_outputs(source, paths)
    digest = _history_digest(source, req, settings)
    analysis = analyse(source, settings, length_unit=req.length_unit)
    model, det = analysis.model, analysis.determinacy
    forks = _further_forks(analysis, req)
    if not forks:
        _run_further(analysis, req)
    _gather_warnings(outcome, analysis)
    if req.strict and outcome.warnings:
        raise Dxf2FrameError(strict_message(outcome.warnings))
    force_u, length_u = req.units or settings.output_units(model.length_unit)
    outcome.units = (force_u, length_u)
    outcome.determinacy, outcome.degree = det.status, det.degree
    if req.probes and analysis.results:
        # a probe off every member is bad input: say so before anything is written
        report_mod.locate_points(model, req.probes)
    job = _start_further(analysis) if forks else None   # the last step: no refusal can follow
    return _Run(source, settings, paths, analysis, force_u, length_u, digest, job)


def _write_drawing(run: _Run, req: SolveRequest, outcome: FileOutcome, target: Path, show: str,
                   saver: BackgroundSave) -> "DrawingSummary | None":
    """The result drawing (or the buckled or mechanism one) into ``target``;
    returns what the result drawing shows (None for the others).  A check
    running on the second core is collected before the notes are drawn; if
    a combination buckles the result drawing is abandoned for the buckled
    one."""
    from .draw import writer  # the preview (matplotlib) is imported only when a PNG is asked for

    source, settings, analysis = run.source, run.settings, run.analysis
    model, det = analysis.model, analysis.determinacy
    force_u, length_u = run.force_unit, run.length_unit
    sheet = None                                   # what the result drawing shows (its warnings)
    if analysis.buckled is not None:
        _write_buckled(source, target, analysis)
    elif analysis.stable:
        drawn_results, drawn_show = _pattern_drawing(analysis, show)

        def before_notes() -> None:
            # the alpha_cr check ran on the second core while the diagrams were drawn
            _join_further(run.further_job, analysis, req, outcome)
            if analysis.buckled is not None:
                raise _LateBuckling

        try:
            sheet = writer.write_result_drawing(
                source, target, model, det, drawn_results, show=drawn_show,
                layers=settings.output_layers, force_unit=force_u, length_unit=length_u,
                document=analysis.document, drift=settings.drift_options(),
                extra=_further_layers(analysis), saver=saver,
                before_notes=before_notes if run.further_job is not None else None,
                **drawing_scale_options(settings, model, req),
            )
        except _LateBuckling:
            saver.drop()                           # the result drawing begun early is not saved
            analysis.document = None               # annotated in part: the source is read again
            _write_buckled(source, target, analysis)
    else:
        writer.write_mechanism_drawing(source, target, model, det, settings.output_layers,
                                       document=analysis.document)
    return sheet


def _write_outputs(run: _Run, req: SolveRequest, outcome: FileOutcome) -> tuple[list[Path], dict, dict]:
    """Drawing, report (and CSV), preview and sheets into a staging folder,
    then the whole set swapped in (:class:`~dxf2frame.staging.OutputSet`): a
    failure leaves the previous set of outputs complete and unchanged, or
    nothing.  Returns the files committed, the governing values and the
    report."""
    from .draw.selection import missing_family
    from .report import report as report_mod

    source, settings, paths, analysis = run.source, run.settings, run.paths, run.analysis
    model, det = analysis.model, analysis.determinacy
    force_u, length_u = run.force_unit, run.length_unit
    final = paths["drawing"].parent
    what = f"the results of {source.name}"
    with _stopped_at_exit(run.further_job), OutputSet(final, what=what) as out_set, writing(what, final), \
            BackgroundSave() as saver:
        staged = {k: out_set.staged(p.name) for k, p in paths.items()}
        t0 = time.perf_counter()
        show = req.show or settings.combinations_draw
        missing = missing_family(_reported(analysis), show)
        if missing and missing not in model.warnings:
            model.warnings.append(missing)
        sheet = _write_drawing(run, req, outcome, staged["drawing"], show, saver)
        _join_further(run.further_job, analysis, req, outcome)   # (collected above when drawn)
        analysis.timings["write"] = time.perf_counter() - t0
        # the preview before the report, so that a preview that fails is a
        # warning of the report as well as of the console
        drawn = False
        if req.png:
            t0 = time.perf_counter()
            drawn = _try_preview(staged["drawing"], staged["png"], analysis, show, force_u, length_u,
                                 outcome.warnings)
            analysis.timings["png"] = time.perf_counter() - t0
        # the report after the drawing: the writer's working arrays are
        # gone by then, so the two never hold memory at the same time (a
        # large drawing is meanwhile saved by a child process, on another
        # core: dxf2frame.background_save)
        t0 = time.perf_counter()
        rep = report_mod.assemble_report(
            model, det, _reported(analysis), force_unit=force_u, length_unit=length_u,
            probes=req.probes, deflection_limits=settings.deflection_limits(),
            drift=settings.drift_options(),
        )
        _add_pattern_report(rep, analysis, force_u, length_u)
        _add_further(rep, analysis, force_u, length_u, staged.get("influence"))
        if sheet is not None:                          # what the drawing could not show (values left out)
            rep["warnings"] += [w for w in sheet.warnings if w not in rep["warnings"]]
        rep["warnings"] += [w for w in outcome.warnings if w not in rep["warnings"]]
        outcome.warnings += [w for w in rep["warnings"] if w not in outcome.warnings]
        solved = analysis.stable and analysis.buckled is None    # results to tabulate (not a mechanism, none buckles)
        with_csv = req.csv and solved
        outcome.probe_lines = report_mod.probe_lines(rep)
        report_mod.write_json(rep, staged["report"], staged["csv"] if with_csv else None)
        analysis.timings["report"] = time.perf_counter() - t0
        written = ["drawing", "report"] + (["csv"] if with_csv else [])
        written += ["reactions"] if with_csv and report_mod.write_reaction_schedule(rep, staged["reactions"]) else []
        written += _write_storey_csvs(rep, staged) if with_csv else []
        written += ["influence"] if "influence" in staged and staged["influence"].exists() else []
        written += ["png"] if drawn else []
        if req.sheets and solved:
            from .handcheck import sheets as handcheck

            sheet_dir = out_set.staged(f"{paths['drawing'].stem}-sheets")
            handcheck.write_sheets(analysis, sheet_dir, points=req.probes,
                                   force_unit=force_u, length_unit=length_u)
            written.append("sheets")
            paths["sheets"] = final / sheet_dir.name
            staged["sheets"] = sheet_dir
        governing = {**_governing(rep), **_storey_checks(rep)} if solved else {}
        _pattern_governing(rep, governing)
        saver.wait()                                   # the result drawing, if a child process saved it
        committed = out_set.commit({staged[k]: paths[k] for k in written})
    return committed, governing, rep


def _record(outcome: FileOutcome, analysis: Analysis, governing: dict) -> None:
    """Status, message, timings and governing values of a finished run."""
    det = analysis.determinacy
    outcome.timings = analysis.timings
    if not analysis.stable:
        outcome.status, outcome.exit_code = "unstable", EXIT_UNSTABLE
        outcome.message = one_line(det.detail)
    elif analysis.buckled is not None:
        outcome.status, outcome.exit_code = "unstable", EXIT_UNSTABLE
        outcome.message = _buckling_message(analysis.buckled)
    else:
        for k, v in governing.items():
            setattr(outcome, k, v)
        outcome.message = f"{det.status}" + (f", degree {det.degree}" if det.degree else "")
