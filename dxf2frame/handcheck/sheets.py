"""Hand-check calculation sheets: the free body behind a value at a point.

A checker redoes a number from the program with a calculator: cut the member
at the point, isolate one side, list every force on it and write the three
equilibrium equations.  This module does exactly that and writes the result
as Markdown (with a PNG figure per cut) and as one PDF with a page per cut.

Choice of the free body
-----------------------
The frame's members form a graph on its nodes (supports are not part of
it; they act through their reactions).  Cutting member ``e`` at ``x``
separates the frame into two parts exactly when ``e`` is a *bridge* of that
graph (removing it leaves its two end nodes unconnected).

* ``e`` is a bridge: the two candidate free bodies are "the piece of ``e``
  from its start to the cut plus everything connected to the start node"
  and the same on the end side.  The side with no support is preferred
  (its cut forces follow from its loads by statics alone, method
  ``"statics"``); if both sides carry supports, the side with fewer
  non-zero reaction components is used and the reactions are taken as
  already solved (values from the :class:`~dxf2frame.solver.results.CaseResult`,
  method ``"reactions"``).  Ties go to the side with fewer forces, then to
  the start side.  A loop *inside* a support-free side does not matter:
  equilibrium of the whole isolated part holds whatever its internal
  indeterminacy.
* ``e`` lies in a closed loop (removing it leaves its ends connected): no
  cut through ``e`` alone frees a part of the frame.  The free body is then
  the piece of ``e`` from its nearer end to the cut, loaded by the member
  end forces at that end, taken from the stiffness solution (method
  ``"end forces"``, labelled as such on the sheet), plus the member loads
  on the piece.

Forces on the free body (:class:`Term`)
--------------------------------------
Every reaction, nodal load, member load and end force on the chosen side
is one term: its global components ``fx``, ``fy`` [force] and couple
[force*length, counter-clockwise positive], its point of application, the
lever arms ``dx``, ``dy`` from the cut to that point and its moment about
the cut ``dx*fy - dy*fx + couple``.  A distributed load is replaced by its
resultant at its centroid over the part that lies on the free body (one
term while the intensity keeps its direction, otherwise two triangular
parts); the sheet states intensity, loaded length, resultant and centroid.
Settlements put no force on a free body (their effect is in the reactions).

Signs at the cut
----------------
Local axes of the cut member: ``x'`` from its start to its end, ``y'``
turned 90 degrees counter-clockwise.  Internal forces on the cut face, in
their positive sense:

* start-side free body (its cut face looks along +x'): N along +x'
  (tension), V along -y', M counter-clockwise (sagging);
* end-side free body (its cut face looks along -x'): N along -x', V along
  +y', M clockwise.

So for the start side ``N = -sum(F.x')``, ``V = +sum(F.y')``,
``M = -sum(moment about the cut)``, and for the end side the opposite signs.
N > 0 is tension, V > 0 turns the element clockwise, M > 0 bends the member
concave toward +y' (sagging for a beam drawn left to right).  Each term's
contribution to N, V, M is stored on the term; the sheet's N, V, M are the
exact sums of the terms (:attr:`FreeBody.n` etc.), printed with four
significant figures.

Files
-----
For each cut ``sheet-<k>.md`` with the figure ``sheet-<k>.png`` beside it,
and ``sheets.pdf`` with one page per cut.  Sheets carry no date, so the same
drawing gives the same sheets.  Every file is written atomically.

Where the parts live
--------------------
Number formatting in :mod:`dxf2frame.numbers`, the terms in
:mod:`dxf2frame.handcheck.terms`, the cut and the choice of the free body
in :mod:`dxf2frame.handcheck.free_body`, the sheet's Markdown and text in
:mod:`dxf2frame.handcheck.wording`, the figures in
:mod:`dxf2frame.handcheck.figures`; this module picks the cuts of an
analysed drawing and writes the files.  The ``explain`` command itself runs
in :mod:`dxf2frame.commands`.

Example
-------
>>> from dxf2frame.solver import Frame, PointLoad, solve
>>> f = Frame()
>>> a, b = f.add_node(0.0, 0.0), f.add_node(4.0, 0.0)
>>> m = f.add_member(a, b)
>>> _ = f.add_support(a, "fixed")
>>> _ = f.add_load(PointLoad(m.id, 4.0, py=-10e3))
>>> fb = cut_free_body(f, solve(f, determinate=True)["D"], m.id, 1.0)
>>> fb.side, fb.method, round(fb.v), round(fb.m)      # V = +P, M = -P*(L-x)
('end', 'statics', 10000, -30000)
"""
from __future__ import annotations

import hashlib
import re
from pathlib import Path
from typing import TYPE_CHECKING, Any, Iterable, Protocol, Sequence

from ..atomic import atomic_path, write_text
from ..errors import Dxf2FrameError
from .free_body import FreeBody, cut_free_body, member_value
from ..numbers import fmt
from .terms import SI_UNITS
from .wording import SheetHeader, sheet_markdown, sheet_text
from ..report.report import UnitFactors, locate_points, member_groups, unit_factors

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..drawing_model import DrawingModel
    from ..solver import CaseResult, Determinacy

__all__ = [
    "SheetRequestError",
    "drawing_revision",
    "write_cut_sheets",
    "write_sheets",
    "write_sheets_staged",
]


class AnalysedDrawing(Protocol):
    """What the sheets need of an analysed drawing: a
    :class:`dxf2frame.pipeline.Analysis` has it."""

    model: "DrawingModel"
    determinacy: "Determinacy"
    cases: "list[CaseResult]"
    combinations: "list[CaseResult]"

    @property
    def results(self) -> "list[CaseResult]": ...

    @property
    def stable(self) -> bool: ...


class SheetRequestError(Dxf2FrameError):
    """A sheet request that cannot be met (unknown load case or combination,
    a point off the member, an unstable frame)."""


# -- files ------------------------------------------------------------------------


def drawing_revision(path: Path | str) -> str:
    """First 12 hex digits of the SHA-256 of the file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()[:12]


_SHEET_FILE = re.compile(r"sheet-(\d+)\.(md|png)$")


def write_cut_sheets(
    sheets: Sequence[tuple[FreeBody, SheetHeader]],
    folder: Path | str,
    units: UnitFactors | None = None,
    *,
    families: Sequence[str | None] | None = None,
) -> list[Path]:
    """Write ``sheet-<k>.md`` + ``sheet-<k>.png`` per free body and ``sheets.pdf``.

    Sheets left over from an earlier run with more cuts (``sheet-<j>.md``
    and ``.png`` with ``j`` beyond the new count) are removed so the folder
    describes one run.  Returns the paths written (Markdown, PNG, then PDF).
    """
    from matplotlib.backends.backend_pdf import PdfPages

    from .figures import sheet_figure, sheet_page

    uf = units or SI_UNITS
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    fams = list(families) if families is not None else [None] * len(sheets)
    written: list[Path] = []
    for k, ((fb, header), fam) in enumerate(zip(sheets, fams), start=1):
        png = folder / f"sheet-{k}.png"
        fig = sheet_figure(fb, uf)
        with atomic_path(png) as tmp:
            fig.savefig(tmp, dpi=130, format="png", metadata={"Software": None})
        md = folder / f"sheet-{k}.md"
        write_text(md, sheet_markdown(fb, header, uf, figure=png.name, family=fam))
        written += [md, png]
    pdf = folder / "sheets.pdf"
    with atomic_path(pdf) as tmp:
        with PdfPages(tmp, metadata={"CreationDate": None, "ModDate": None, "Producer": None,
                                     "Creator": "dxf2frame"}) as pages:
            for (fb, header), fam in zip(sheets, fams):
                page = sheet_page(fb, uf, sheet_text(fb, header, uf, family=fam))
                pages.savefig(page)
    written.append(pdf)
    for old in folder.iterdir():
        mt = _SHEET_FILE.match(old.name)
        if mt and int(mt.group(1)) > len(sheets):
            old.unlink(missing_ok=True)
    return written


# -- from an analysed drawing ------------------------------------------------------


def _find_result(analysis: "AnalysedDrawing", name: str):
    for r in analysis.results:
        if r.name == name:
            return r
    compact = name.replace(" ", "")
    for r in analysis.results:
        if r.name.replace(" ", "") == compact:
            return r
    names = ", ".join(r.name for r in analysis.results) or "none"
    raise SheetRequestError(f"no load case or combination named {name!r}; the drawing has: {names}")


def _strength_candidates(analysis: "AnalysedDrawing") -> list:
    """Strength (LRFD) combinations; else the settings' own combinations; else the first case."""
    lrfd = [r for r in analysis.combinations if r.family.upper() == "LRFD"]
    if lrfd:
        return lrfd
    user = [r for r in analysis.combinations if r.family.lower() in ("user", "", "none")]
    if user:
        return user
    return analysis.cases[:1] or analysis.combinations[:1]


def _default_cuts(analysis: "AnalysedDrawing", cands: Sequence) -> list[tuple[str, float, Any, str]]:
    """(element, x, result, reason) at the largest |M| of each reported member
    under the result of ``cands`` that governs it."""
    frame = analysis.model.frame
    cuts = []
    for g in member_groups(frame).values():
        best = None  # (|M|, element, x, result)
        for r in cands:
            for m in g.members:
                ext = r.members[m.id].extremes()
                for val, at in ((ext["m_max"], ext["m_max_at"]), (ext["m_min"], ext["m_min_at"])):
                    if best is None or abs(val) > best[0] * (1 + 1e-12):
                        best = (abs(val), m.id, float(at), r)
        if best is None:
            continue
        if best[0] == 0.0:  # no bending anywhere: cut at mid-length under the largest |N|
            nbest = None
            for r in cands:
                for m in g.members:
                    ext = r.members[m.id].extremes()
                    big = max(abs(ext["n_min"]), abs(ext["n_max"]))
                    if nbest is None or big > nbest[0]:
                        nbest = (big, m.id, 0.5 * frame.geometry(m)[0], r)
            best = nbest
            reason = f"member {g.id} carries no bending; mid-length cut under the largest |N| ({best[3].name})"
        else:
            reason = f"largest |M| of member {g.id} under {best[3].name}"
        cuts.append((best[1], best[2], best[3], reason))
    return cuts


def _governing_at(analysis: "AnalysedDrawing", mid: str, x: float):
    cands = _strength_candidates(analysis)
    if not cands:
        raise SheetRequestError("no results to write sheets for")
    return max(cands, key=lambda r: abs(member_value(r.members[mid], "moment", x, "right")))


def _status_text(det) -> str:
    if det is None:
        return ""
    if det.status == "determinate":
        return "statically determinate: reactions and internal forces follow from statics"
    if det.status == "indeterminate":
        return (f"statically indeterminate, degree {det.degree}: reactions and end forces come from the "
                "stiffness solution")
    return det.status


#: without explicit points, at most this many sheets (the members with the largest |M|)
MAX_DEFAULT_SHEETS = 40


def write_sheets(
    analysis: "AnalysedDrawing",
    folder: Path | str,
    *,
    points: Iterable[tuple[float, float]] = (),
    result_name: str | None = None,
    force_unit: str,
    length_unit: str,
) -> list[Path]:
    """Write calculation sheets for an analysed drawing.

    Parameters
    ----------
    analysis : a stable :class:`AnalysedDrawing` (a :class:`dxf2frame.pipeline.Analysis`)
    folder : output folder (created)
    points : cut points (X, Y) in drawing units; default: for each reported
        member, the point of largest |M| under the strength combination that
        governs it
    result_name : load case or combination; default per point: the strength
        (LRFD) combination with the largest |M| there, else the first case
    force_unit, length_unit : units on the sheets (pint names)

    Returns
    -------
    The files written: ``sheet-<k>.md``, ``sheet-<k>.png``, ..., ``sheets.pdf``.

    Raises
    ------
    SheetRequestError  unstable frame or unknown ``result_name``;
    DrawingError  a point on no member;  UnitError  unknown unit.
    """
    if not analysis.stable or not analysis.results:
        raise SheetRequestError("the frame is unstable (a mechanism): there are no results to check")
    uf = unit_factors(force_unit, length_unit)
    model = analysis.model
    frame = model.frame
    fixed = _find_result(analysis, result_name) if result_name else None
    groups = member_groups(frame)
    group_of = {m.id: (g, off) for g in groups.values() for m, off in zip(g.members, g.offsets)}
    cuts = _requested_cuts(analysis, points, fixed)
    source = Path(model.source)
    try:
        revision = drawing_revision(source)
    except OSError:
        revision = ""
    status = _status_text(analysis.determinacy)
    sheets, fams = [], []
    for mid, x, r, why in cuts:
        fb = cut_free_body(frame, r, mid, x)
        g, off = group_of[mid]
        sheets.append((fb, _sheet_header(model, fb, g, off, mid, x, r, why, uf, source.name, revision, status)))
        fams.append(r.family)
    return write_cut_sheets(sheets, folder, uf, families=fams)


def _requested_cuts(analysis: "AnalysedDrawing", points: Iterable[tuple[float, float]],
                    fixed) -> list[tuple[str, float, Any, str]]:
    """(element id, x, result, why) of every cut: at the given points, else
    at each member's governing extreme (the worst :data:`MAX_DEFAULT_SHEETS`)."""
    model = analysis.model
    pts = [(float(px), float(py)) for px, py in points]
    cuts: list[tuple[str, float, Any, str]] = []
    if pts:
        for (px, py), (mid, x) in zip(pts, locate_points(model, pts)):
            r = fixed if fixed is not None else _governing_at(analysis, mid, x)
            why = f"requested point ({px:g}, {py:g})"
            if fixed is None:
                why += f"; {r.name} gives the largest |M| there among the strength combinations"
            cuts.append((mid, x, r, why))
        return cuts
    cuts = _default_cuts(analysis, [fixed] if fixed is not None else _strength_candidates(analysis))
    if len(cuts) > MAX_DEFAULT_SHEETS:
        # a checker reviews the worst members first: keep those with the
        # largest |M| at their governing point
        cuts = sorted(cuts, key=lambda c: -abs(float(c[2].members[c[0]].moment(c[1]))))
        cuts = cuts[:MAX_DEFAULT_SHEETS]
    return cuts


def _sheet_header(model, fb: FreeBody, g, off: float, mid: str, x: float, r, why: str, uf: UnitFactors,
                  source_name: str, revision: str, status: str) -> SheetHeader:
    """The header of one sheet: the member, the cut, the frame, why this cut."""
    frame = model.frame
    scale = model.unit_scale
    mem = frame.member(mid)
    X, Y = model.to_drawing(*fb.cut_point)
    at = (off + x) * uf.length
    member_txt = (f"{g.id}" + (f" (entity #{mem.handle}" if mem.handle else " (") +
                  (f", layer {mem.layer})" if mem.layer else ")") +
                  f", from ({fmt(g.start[0] / scale)}, {fmt(g.start[1] / scale)}) to "
                  f"({fmt(g.end[0] / scale)}, {fmt(g.end[1] / scale)}) {model.length_unit} (drawing), "
                  f"length {fmt(g.length * uf.length)} {uf.length_unit}")
    member_txt = member_txt.replace(" ()", "")
    if len(g.members) > 1:
        member_txt += f"; analysis element {mid} (the member is split at a load or hinge)"
    cut_txt = (f"drawing point ({fmt(X)}, {fmt(Y)}) {model.length_unit}, {fmt(at)} {uf.length_unit} "
               f"from the member start")
    if len(g.members) > 1:
        cut_txt += f" ({fmt(x * uf.length)} {uf.length_unit} from the start of element {mid})"
    return SheetHeader(
        title=f"member {g.id} at {fmt(at)} {uf.length_unit} from its start, {r.name}",
        source=source_name, revision=revision, member=member_txt, cut=cut_txt,
        frame_status=status, reason=why,
    )


def write_sheets_staged(analysis: "AnalysedDrawing", out: Path, **options) -> list[Path]:
    """:func:`write_sheets` into a staging folder, then the whole set of
    sheets swapped into ``out`` (:class:`~dxf2frame.staging.OutputSet`):
    a failure (bad input found while writing, a full disk, Ctrl-C) leaves
    the previous sheets complete and no new file.  Sheets of an earlier run
    with more cuts are dropped with the swap.  Returns the paths in ``out``."""
    from ..staging import OutputSet, writing

    what = f"the hand-check sheets of {Path(analysis.model.source).name}"
    with OutputSet(out, what=what) as out_set, writing(what, out):
        staged = write_sheets(analysis, out_set.staged("sheets"), **options)
        count = sum(1 for p in staged if p.suffix == ".md")
        leftovers = [p for p in out.iterdir()
                     if (mt := _SHEET_FILE.match(p.name)) and int(mt.group(1)) > count]
        return out_set.commit({p: out / p.name for p in staged}, drop=leftovers)
