"""Result layers in a copy of the drawing.

The source drawing is read afresh, so the copy keeps every original entity,
layer, block, attribute, header value and handle.  Results go on their own
layers (names remappable through the settings' ``[output_layers]``):

=============  =====================================================
key            content
=============  =====================================================
axial          N diagram along the members, positive toward local +y
shear          V diagram along the members, positive toward local +y
moment         M diagram along the members, positive (sagging) toward
               local -y: M is drawn on the tension side
reactions      arrows and values at the supports
deflected      exaggerated deflected shape (when sections are known)
notes          legend title and a notes block (units, signs, what is
               shown, determinacy, warnings, safety caution)
mechanism      mechanism modes of an unstable frame
=============  =====================================================

Anything already on these layers is deleted first, so running the tool on
its own output replaces the old results instead of stacking them.  The
reader ignores these layers, so reading the output again gives the same
model.

Scales: one per diagram type, a round number chosen so that the largest
ordinate is about 8-12 % of the larger side of the frame's extents, stated
in the legend as "moment: 1 mm on the drawing = X kN*m" (naming the
drawing's own unit).  Text height is 1/60 of
that side.  The deflected shape is exaggerated so that the largest
displacement is about 4-5 % of it.

Elements shorter than three text heights get outlines only: no fill, no
labels, except the diagram's overall extreme.

Which values get labels and where they go: :mod:`dxf2frame.draw.labels`; how
the diagrams are sampled, thinned and joined into runs:
:mod:`dxf2frame.draw.curves`; what a drawing shows (one result or an
envelope): :mod:`dxf2frame.draw.selection`; the layers' colours,
linetypes and text styles: :mod:`dxf2frame.draw.style`; the legend and
notes: :mod:`dxf2frame.draw.legend`.

DXF R12 drawings get the same content with R12 entities (POLYLINE, TEXT,
ACI colours, no fills).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Callable, Mapping, Sequence

import numpy as np
import shapely
from ezdxf.enums import TextEntityAlignment

from ..atomic import atomic_path, same_file
from ..drawing_file import open_document
from .curves import (DIAGRAMS, FrameGeom, frame_geom, chain_polylines, chord_tolerance, sample_curves, drawn_curves, FlatCurve, has_batch, sample_batch,
                             sample_member_by_member, segment_max, straight_chains, zero_crossings)
from ..errors import SettingsError
from .obstacles import DrawingObstacles, drawing_obstacles, free_spot, keep_clear, points_box
from .occupancy import Occupancy
from .labels import (OTHER_SIGN, PRIORITY, SAME_AT_JOINT, Box, LabelPlacer, as_lines, drawing_texts,
                     label_requests, label_font, Label, centre_lift, merge_at_joints, geometries_near, place_labels, Spot, text_width)
from .legend import draw_legend_and_notes, notes_paragraphs
from ..numbers import label_value
from ..report.report import UnitFactors, unit_factors
from .selection import Selection, select_results
from .further import further_layer_names
from .style import RESULT_LAYER_STYLES, Pen, clear_result_layers, prepare_layers, result_layer_names

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

    from ..drawing_model import DrawingModel

__all__ = [
    "DrawingSummary",
    "annotate_results",
    "annotate_mechanism",
    "write_result_drawing",
    "write_mechanism_drawing",
]



# -- constants -----------------------------------------------------------------

_SYMBOL = {"axial": "N", "shear": "V", "moment": "M"}
#: side a positive value is drawn on, in units of local +y
_SIDE = {"axial": 1.0, "shear": 1.0, "moment": -1.0}
_DEFL_SAMPLES = 9          # stations per element for the deflected shape (a cubic-like curve)
_ORDINATE_TARGET = 0.115   # largest ordinate / frame size, before rounding the scale
#: diagram ordinates at or below this (SI units) are floating-point dust, not
#: forces: such a diagram is zero everywhere (a scale fitted to it would
#: overflow the drawing's coordinates)
_DUST = 1e-150
_DEFLECTION_TARGET = 0.05  # largest drawn displacement / frame size
_MECHANISM_TARGET = 0.10   # largest drawn mechanism movement / frame size
_ZERO_LABEL = 5e-4         # |M| below this fraction of the diagram max counts as zero when finding crossings
_MAX_ZEROS = 2             # moment zero crossings marked per element
_NICE = (1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0)


# -- small helpers -------------------------------------------------------------


def _nice_up(v: float) -> float:
    """Smallest round number (1, 1.2, 1.5, 2, 2.5, 3, 4, 5, 6, 8 x 10^k) >= v."""
    e = math.floor(math.log10(v))
    m = v / 10.0**e
    for n in _NICE:
        if n >= m * (1 - 1e-12):
            return n * 10.0**e
    return 10.0 ** (e + 1)


def _nice_down(v: float) -> float:
    """Largest round number <= v."""
    e = math.floor(math.log10(v))
    m = v / 10.0**e
    for n in reversed(_NICE):
        if n <= m * (1 + 1e-12):
            return n * 10.0**e
    return 10.0**e


def drawing_unit_text(unit: str) -> str:
    """The drawing unit as a legend names it: ``"inch"`` -> ``"in"``, others unchanged.

    >>> drawing_unit_text("inch"), drawing_unit_text("mm")
    ('in', 'mm')
    """
    return "in" if unit == "inch" else unit


def _load_source(source: Path) -> "Drawing":
    """Read the drawing afresh the way the reader does (damaged files
    recovered, :func:`dxf2frame.drawing_file.open_document`), so whatever the
    analysis accepted can be annotated."""
    doc, _notes = open_document(source)
    return doc


def _check_target(source: Path, out: Path) -> None:
    if same_file(out, source):
        raise SettingsError("the output drawing would overwrite the input; choose another output path")


# -- summary -------------------------------------------------------------------


@dataclass
class DrawingSummary:
    """What was drawn (for tests and logs).

    scales : diagram key -> report units per drawing unit (None: all zero)
    deflection_factor : exaggeration of the deflected shape (None: not drawn)
    text_height : label height [drawing units]
    labels, forced : labels written, and how many of them overlap something
        (none: a label with no free spot near goes farther out, or is
        dropped; see :mod:`dxf2frame.draw.labels`)
    dropped : values left out for want of room (see the module docstring)
    dropped_values : their texts (member tags: the member id)
    warnings : what the drawing could not show as asked (values left out,
        a probe with no free place); also in the notes, and the pipeline
        adds them to the report's warnings and the console
    entities : entities added
    shown : the notes' description of what is drawn
    content : the drawing's own entities as obstacles (measured once, for
        whatever is drawn after the results)
    """

    layers: dict[str, str]
    scales: dict[str, float | None] = field(default_factory=dict)
    deflection_factor: float | None = None
    deflection_result: str | None = None
    text_height: float = 0.0
    labels: int = 0
    forced: int = 0
    dropped: int = 0
    dropped_values: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    content: "DrawingObstacles | None" = field(default=None, repr=False)
    entities: int = 0
    shown: str = ""


# -- the result drawing --------------------------------------------------------


@dataclass
class _Ctx:
    """What drawing one diagram needs to know about the drawing.

    small : elements too short (drawn length < 3 text heights) for fills and labels
    chains : runs of elements in a straight line (:func:`straight_chains`), drawn as one outline
    keyed : an envelope is drawn: labels carry the governing result's key
    nodes : (m, 2) start and end node of each element
    """

    pen: Pen
    geom: FrameGeom
    h: float
    us: float
    small: np.ndarray
    chains: list[list[int]]
    keyed: bool
    nodes: np.ndarray
    uf: UnitFactors
    drawing_unit: str = "drawing unit"
    fixed: Mapping[str, float] = field(default_factory=dict)   # diagram -> SI units per metre on the drawing


nice_up = _nice_up  # public: a batch rounds its shared scales the same way


def natural_scales(model: "DrawingModel", results: Sequence, show: str | None) -> dict[str, float]:
    """The scale each diagram would get on its own (SI units per metre on
    the drawing, before rounding): a batch takes the largest of its
    drawings' so that one scale fits all.  Diagrams zero everywhere are
    left out."""
    sel = select_results(results, show)
    geom = frame_geom(model)
    frame = model.frame
    n_el = len(frame.members)
    if not n_el:
        return {}
    stations = (sample_batch(sel.results, frame, geom.length_m) if has_batch(sel.results)
                else sample_member_by_member(sel.results, frame, geom.length_m))
    out = {}
    for key in DIAGRAMS:
        curves = sample_curves(stations, key, sel.envelope, n_el)
        gmax = max((float(np.max(np.abs(c.y))) for c in curves if len(c.y)), default=0.0)
        if gmax > _DUST:
            out[key] = gmax / (_ORDINATE_TARGET * geom.size * model.unit_scale)
    return out


def _draw_diagram(ctx: _Ctx, key: str, layer: str, curves: list[FlatCurve], labels: list[Label],
                  legend: list[tuple[str, str]], lines: list[np.ndarray], extents: list[Box]) -> float | None:
    """Outline (and fill) of one diagram type on every element, its label
    requests and its legend line; returns the scale (report units per
    drawing unit) or None when the diagram is zero everywhere.  The
    outlines of the elements long enough for labels and the zero-crossing
    ticks are appended to ``lines`` (obstacles for this layer's labels),
    the box of the whole diagram to ``extents``."""
    # Long by intent: one diagram's outline, fill, ticks and label requests share the arrays of its
    # curves; split, they would be passed around whole.
    geom, h, us, uf = ctx.geom, ctx.h, ctx.us, ctx.uf
    size = geom.size
    factor, unit = (uf.moment, uf.moment_unit) if key == "moment" else (uf.force, uf.force_unit)
    gmax = max((float(np.max(np.abs(c.y))) for c in curves if len(c.y)), default=0.0)
    if not gmax > _DUST:
        legend.append((key, f"{key}: zero everywhere"))
        return None
    if key in ctx.fixed:                                             # the settings' [drawing.scales]
        per_unit = float(f"{ctx.fixed[key] * us * factor:.6g}")
    else:
        per_unit = _nice_up(gmax * factor / (_ORDINATE_TARGET * size))   # report units per drawing unit
    k_si = factor / per_unit                                         # drawing units per SI unit
    where = "tension side" if key == "moment" else "+ toward local +y"
    legend.append((key, f"{key}: 1 {ctx.drawing_unit} on the drawing = {per_unit:g} {unit} ({where})"))
    transparency = RESULT_LAYER_STYLES[key].fill_transparency
    sym = _SYMBOL[key]
    # every point of every curve in drawing coordinates, at once
    ords = [c.y * (k_si * _SIDE[key]) for c in curves]                # ordinates [drawing units]
    omax = np.max([segment_max(o, c.bounds[:-1]) for c, o in zip(curves, ords)], axis=0)
    tol = chord_tolerance(h, omax, size)
    zero = _ZERO_LABEL * gmax if key == "moment" and curves[0].role == "single" else None   # zero ticks
    flat = []
    for c, o in zip(curves, ords):
        along = c.x / us
        base = geom.start[c.eid] + along[:, None] * geom.t[c.eid]
        pts = base + o[:, None] * geom.n[c.eid]
        flat.append((o, base, pts, drawn_curves(c, along, o, tol, zero)))
        if len(pts):
            extents.append(points_box(pts))

    def element_labels(i: int) -> list[Label]:
        cs = []
        for c, (o, base, pts, _keep) in zip(curves, flat):
            sl = slice(c.bounds[i], c.bounds[i + 1])
            cs.append((c.element(i), o[sl], pts[sl], base[sl]))
        got = label_requests(cs, sym, geom.t[i], geom.n[i], float(geom.length_m[i]),
                              (int(ctx.nodes[i, 0]), int(ctx.nodes[i, 1])), int(i), gmax, factor, ctx.keyed)
        for lb in got:
            lb.layer = layer
        return got

    mine: list[Label] = []
    tick = 0.6 * h
    shown = omax > 1e-9 * size
    for poly in _outlines(curves, [(pts, keep) for _o, _base, pts, keep in flat], geom, shown, ctx.chains):
        ctx.pen.polyline(poly, layer, closed=True)
    for i in np.flatnonzero(shown & ~ctx.small):                     # long enough for fills and labels
        a, t, nrm = geom.start[i], geom.t[i], geom.n[i]
        # the element's own part of the outline, closed at its ends: fill and obstacle
        ring = [a[None, :]]
        for c, (_o, _base, pts, keep) in zip(curves, flat):
            sl = slice(c.bounds[i], c.bounds[i + 1])
            seg = pts[sl][keep[sl]]
            ring.append(seg if c.role != "min" else seg[::-1])
            if len(ring) == 2:
                ring.append(geom.end[i][None, :])
        poly = np.vstack(ring)
        lines.append(poly)
        if omax[i] >= 0.15 * h:
            ctx.pen.fill(poly, layer, transparency)
        mine += element_labels(i)
        if key == "moment" and curves[0].role == "single":
            # zero crossings (points of contraflexure): a tick across the member, "0" beside it if there is room
            for x0 in zero_crossings(curves[0].element(i), _ZERO_LABEL * gmax)[:_MAX_ZEROS]:
                p = a + t * (x0 / us)
                ends = np.array([p - nrm * tick, p + nrm * tick])
                ctx.pen.line(ends[0], ends[1], layer)
                lines.append(ends)
                mine.append(Label(PRIORITY["zero"], "zero", 0.0, layer, [Spot("0", p, p, nrm, t)],
                                   element=int(i)))
    mine = merge_at_joints(mine, SAME_AT_JOINT * gmax)
    # the diagram's overall extreme is always written, first in line
    ci = int(np.argmax([float(np.max(np.abs(c.y))) if len(c.y) else 0.0 for c in curves]))
    top = int(curves[ci].eid[int(np.argmax(np.abs(curves[ci].y)))])
    pool = mine if not ctx.small[top] else element_labels(top)
    best = max((lb for lb in pool if lb.kind != "zero"), key=lambda lb: abs(lb.value), default=None)
    if best is not None:
        if pool is not mine:
            mine.append(best)
        best.priority = 0.0
        best.must = best.force = True
    labels += mine
    return per_unit


def _outlines(curves: list[FlatCurve], drawn: list[tuple[np.ndarray, np.ndarray]], geom: FrameGeom,
              shown: np.ndarray, chains: list[list[int]]) -> list[np.ndarray]:
    """The closed outlines of one diagram, one per run of elements in a
    straight line (``chains``, broken where an element's diagram is zero
    everywhere: ``shown`` False): the run's baseline start, the curve along
    every element of the run, the baseline end, and for an envelope the min
    curve back (the band of possible values).  Where the value jumps at a
    joint the outline steps across it, as a continuous diagram is drawn by
    hand.  ``drawn``: per curve, its points (drawing coordinates) and the
    mask of those drawn.  Built for all runs at once (one sort)."""
    n_el = len(shown)
    if not shown.any():
        return []
    seq = np.concatenate([np.asarray(c, dtype=int) for c in chains])
    cid = np.repeat(np.arange(len(chains)), [len(c) for c in chains])
    on = shown[seq]
    brk = np.r_[True, cid[1:] != cid[:-1]] | np.r_[True, ~on[:-1]]
    run = (np.cumsum(brk) - 1)[on]                                  # run of each shown element, in run order
    seq = seq[on]
    run = np.r_[0, np.cumsum(run[1:] != run[:-1])]                  # renumbered 0..k-1
    n_run = int(run[-1]) + 1
    run_of = np.full(n_el, -1)
    rank = np.zeros(n_el, dtype=int)
    run_of[seq] = run
    rank[seq] = np.arange(len(seq))
    heads = seq[np.r_[True, run[1:] != run[:-1]]]
    tails = seq[np.r_[run[1:] != run[:-1], True]]
    zeros = np.zeros(n_run, dtype=int)
    parts = [(geom.start[heads], np.arange(n_run), zeros, zeros, zeros),
             (geom.end[tails], np.arange(n_run), zeros + 2, zeros, zeros)]
    for c, (pts, keep) in zip(curves, drawn):
        k = np.flatnonzero(keep & shown[c.eid])
        e = c.eid[k]
        back = -1 if c.role == "min" else 1
        parts.append((pts[k], run_of[e], np.full(len(k), 1 if back > 0 else 3), back * rank[e], back * k))
    pts = np.concatenate([q[0] for q in parts])
    r, part, pos, idx = (np.concatenate([q[j] for q in parts]) for j in (1, 2, 3, 4))
    order = np.lexsort((idx, pos, part, r))
    pts, r = pts[order], r[order]
    # a point on top of the one before it (a value continuous at a joint, zero at an end) is drawn once
    step = np.abs(np.diff(pts, axis=0)).max(1) if len(pts) > 1 else np.zeros(0)
    dup = np.r_[False, (r[1:] == r[:-1]) & (step <= 1e-9 * geom.size)]
    pts, r = pts[~dup], r[~dup]
    bounds = np.searchsorted(r, np.arange(n_run + 1))
    return [pts[a:b] for a, b in zip(bounds[:-1], bounds[1:])]


def annotate_results(
    doc: "Drawing",
    model: "DrawingModel",
    det,
    results: Sequence,
    *,
    show: str | None,
    layers: Mapping[str, str] | None = None,
    force_unit: str,
    length_unit: str,
    drift: Mapping | None = None,
    text_height: float | None = None,
    scales: Mapping[str, float] | None = None,
    probes: Sequence[tuple[float, float]] = (),
    before_notes: "Callable[[], None] | None" = None,
    begin_save: "Callable[[], None] | None" = None,
) -> DrawingSummary:
    """Draw the result layers into an open document (see the module docstring).

    Removes the previous content of the result layers first (the
    second-order and moving-load layers' too: a source that holds an
    earlier result keeps none of it).  Values are
    converted from SI to ``force_unit`` / ``length_unit`` for the text.
    ``layers``: result layer key -> name (the settings' ``[output_layers]``;
    None: the defaults).  ``drift``: storey drift options (``{"limit",
    "measure", "levels"}``, levels in drawing units; None: the defaults).
    ``text_height``: text height [drawing units]
    (None: 1/60 of the frame's size); ``scales``: fixed diagram scales
    {"moment"|"shear"|"axial": SI units per metre on the drawing};
    ``probes``: drawing points marked on the tags layer with N, V, M (of
    the drawn result; for an envelope, of the result with the largest
    |M| there, keyed).  ``before_notes``: called once the diagrams and
    their labels are drawn and before the legend and notes, which read the
    model's warnings then (the pipeline collects work done meanwhile on
    another core; an exception raised there abandons the drawing).
    ``begin_save``: called once the previous results are removed; from
    then on the drawing only gains modelspace entities (a save can start,
    :meth:`dxf2frame.background_save.BackgroundSave.begin`).
    """
    # Long by intent: the numbered steps below are the recipe of a result drawing; each is a call,
    # and the working arrays of one diagram are released before the next.
    names = result_layer_names(layers)
    clear_result_layers(doc, [*names.values(), *further_layer_names(layers).values()])
    _drop_layer(doc, names["mechanism"])               # a stable frame has no mechanism: no empty layer
    if begin_save is not None:
        begin_save()                                   # only new modelspace entities from here on
    prepare_layers(doc, {k: v for k, v in names.items() if k != "mechanism"})
    sel = select_results(results, show)
    uf = unit_factors(force_unit, length_unit)
    obst = _drawing_content(doc, names.values())       # the drawing's own, before we add ours
    geom = frame_geom(model)
    size = geom.size
    h = geom.text_height_or(text_height)
    pen = Pen(doc, size)
    summary = DrawingSummary(layers=names, text_height=h, shown=sel.label, content=obst)
    frame = model.frame

    # 1. sample every element once
    n_el = len(frame.members)
    if n_el and has_batch(sel.results):
        stations = sample_batch(sel.results, frame, geom.length_m)
    elif n_el:
        stations = sample_member_by_member(sel.results, frame, geom.length_m)
    else:
        stations = None

    us = model.unit_scale
    small = geom.length_m / us < 3 * h
    nodes = np.array([(m.start, m.end) for m in frame.members], dtype=int).reshape(-1, 2)
    chains = straight_chains(nodes[:, 0], nodes[:, 1], geom.t)
    ctx = _Ctx(pen=pen, geom=geom, h=h, us=us, small=small, chains=chains, keyed=sel.envelope, nodes=nodes, uf=uf,
               drawing_unit=drawing_unit_text(model.length_unit), fixed=dict(scales or {}))
    legend: list[tuple[str, str]] = []
    boxes: list[Box] = [geom.bounds]                   # of everything drawn, for the legend's place
    labels: dict[str, list[Label]] = {key: [] for key in (*DIAGRAMS, "reactions", "deflected")}
    lines: dict[str, list[np.ndarray]] = {key: [] for key in DIAGRAMS}

    # 2. draw the diagrams
    for key in DIAGRAMS:
        curves = sample_curves(stations, key, sel.envelope, n_el) if stations is not None else []
        summary.scales[key] = _draw_diagram(ctx, key, names[key], curves, labels[key], legend, lines[key], boxes)
        del curves                                     # one diagram's arrays at a time (large frames)
    stations = None

    # 3. reactions
    schedule: list[str] = []
    schedule_keys: set[int] = set()
    arrows = _draw_reactions(pen, model, geom, sel, names["reactions"], uf, h, labels["reactions"],
                             schedule, schedule_keys)
    legend.append(("reactions", f"reactions: {uf.force_unit}, {uf.moment_unit}; arrows show each component's "
                                f"direction, values signed (+X, +Y, moment counter-clockwise)"))

    # 4. deflected shape
    bent = _draw_deflected(pen, model, geom, sel, names["deflected"], h, summary, legend, chains=chains,
                           service=service_results(results), uf=uf, labels=labels["deflected"])
    boxes += _draw_near_misses(pen, model, names["notes"], h)
    _storey_drift_labels(model, geom, results, names["deflected"], drift, legend, labels["deflected"])

    # 5. labels, layer by layer (each result layer reads on its own), most important first
    members = shapely.linestrings(np.stack([geom.start, geom.end], axis=1)) if n_el else np.zeros(0, dtype=object)
    font = label_font(h)
    used: dict[str, set[int]] = {}
    taken: dict = {}                                   # every layer's label boxes: no two result texts overlap
    if arrows:
        boxes.append(tuple(float(v) for v in shapely.total_bounds(arrows)))
    all_lines = list(arrows) + [g for key in lines for g in as_lines(lines[key])]
    far = _far_spots(obst, list(members) + all_lines, taken, geom.bounds, 0.3 * h, 10.0 * h)
    for key, todo in labels.items():
        if not todo:
            continue
        # obstacles: member lines, this layer's outlines and ticks (reactions: the arrows), the drawing's texts
        reach = 7.0 * h + 2.5 * max(text_width(font, sp.text, h) for lb in todo for sp in lb.spots)
        own = list(arrows) if key == "reactions" else geometries_near(as_lines(lines.get(key, [])), todo, reach)
        placer = LabelPlacer(geometries_near(members, todo, reach) + own + geometries_near(obst.geoms, todo, reach),
                             cell=4 * h, taken=taken)
        dropped, used[key] = place_labels(pen, placer, todo, font, h, far)
        summary.labels += placer.placed
        summary.forced += placer.forced
        summary.dropped_values += dropped
        if placer.extent is not None:
            boxes.append(placer.extent)
    tags_left_out = _draw_tags(pen, model, geom, names["tags"], h, font, members, obst, taken)
    summary.dropped_values += tags_left_out
    summary.dropped = len(summary.dropped_values)
    if summary.dropped:
        summary.warnings.append(_dropped_warning(summary.dropped_values, tags_left_out))
    probe_notes: list[str] = []
    if probes:
        unplaced = _draw_probes(pen, model, sel, probes, names["tags"], h, font, uf, members, obst, taken, far)
        if unplaced:
            probe_notes = [f"Probe values (not drawn, no free place on the drawing): {'; '.join(unplaced)}"]
            summary.warnings.append(
                f"drawing: {len(unplaced)} probe marker(s) found no free place on the drawing and are not "
                f"drawn; their values are in the notes, the report and the console: {'; '.join(unplaced)}")
    if bent is not None and len(bent):
        boxes.append(points_box(bent))
    b = np.array(boxes, dtype=float)
    content = (float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max()))

    # 6. legend and notes beside the frame
    if before_notes is not None:
        before_notes()
    if schedule_keys:
        used["reactions"] = used.get("reactions", set()) | schedule_keys
    keys = {key: [(k, sel.results[k].name) for k in sorted(ks)] for key, ks in used.items() if ks}
    shown = sel.label
    if sel.envelope:
        head, _sep, _names = sel.label.partition(": ")
        shown = head + ": " + ", ".join(f"C{k + 1} = {r.name}" for k, r in enumerate(sel.results))
    groups = draw_legend_and_notes(pen, model, det, geom, names, legend, h, uf, shown, sel.envelope,
                                   content=content, keys=keys, font=font,
                                   extra=_schedule_notes(schedule, uf) + probe_notes,
                                   warnings=summary.warnings)
    placed = list(shapely.box(*taken_boxes(taken).T))
    keep_clear(groups, obst, list(members) + [shapely.box(*b) for b in boxes] + placed,
                content, 0.8 * h)
    summary.entities = pen.count
    return summary


_LISTED_DROPS = 12          # dropped values named in the warning (the rest counted)


def _dropped_warning(texts: list[str], tags: list[str]) -> str:
    """The warning naming the values left out of the drawing for want of room."""
    values = texts[:len(texts) - len(tags)]                  # the member tags come last
    named = [("zero-crossing mark" if t == "0" else t) for t in values[:_LISTED_DROPS]]
    more = f" and {len(values) - _LISTED_DROPS} more" if len(values) > _LISTED_DROPS else ""
    parts = []
    if values:
        parts.append(f"{len(values)} value label(s) ({', '.join(named)}{more}); every value is in the report")
    if tags:
        parts.append(f"{len(tags)} member tag(s) ({', '.join(tags[:_LISTED_DROPS])}"
                     f"{' ...' if len(tags) > _LISTED_DROPS else ''}); the ids are in the report")
    return f"drawing: left out for want of room: {'; '.join(parts)}"


def _far_spots(obst: DrawingObstacles, ours: list, taken: dict, frame_box: Box, gap: float, near: float):
    """A function giving, for a label box with nothing free near it, the
    shift to the nearest place clear of the drawing's own content, of
    ``ours`` (member lines, outlines, arrows) and of every label placed so
    far (:func:`dxf2frame.draw.obstacles.free_spot`): within widening
    windows around the box up to ``near``, else just outside the drawing's
    extents.  The drawing's content and ``ours`` are indexed once (an
    :class:`~dxf2frame.draw.occupancy.Occupancy` with cells of ``near``/40,
    a quarter text height)."""
    ext = frame_box if obst.extents is None else (
        min(frame_box[0], obst.extents[0]), min(frame_box[1], obst.extents[1]),
        max(frame_box[2], obst.extents[2]), max(frame_box[3], obst.extents[3]))
    tree = Occupancy(list(obst.geoms) + list(ours), near / 40.0)

    def far(box: Box) -> tuple[float, float] | None:
        placed = taken_boxes(taken)
        for r in (0.3 * near, near):                   # widening windows around the box (past the extents too)
            window = (box[0] - r, box[1] - r, box[2] + r, box[3] + r)
            inside = placed[(placed[:, 0] < window[2]) & (placed[:, 2] > window[0])
                            & (placed[:, 1] < window[3]) & (placed[:, 3] > window[1])]
            dx, dy = free_spot(box, list(shapely.box(*inside.T)), window, gap, tree=tree)
            if (window[0] <= box[0] + dx and box[2] + dx <= window[2]
                    and window[1] <= box[1] + dy and box[3] + dy <= window[3]):
                return dx, dy                         # a free place near
        return free_spot(box, list(shapely.box(*placed.T)), ext, gap, tree=tree, inside=False)   # outside the extents

    return far


def taken_boxes(taken: dict) -> np.ndarray:
    """The boxes of a placer grid (cell -> boxes; a box is listed in every
    cell it covers) once each, as a (k, 4) array."""
    return np.array(list({b for cell in taken.values() for b in cell}), dtype=float).reshape(-1, 4)


def _drawing_content(doc, result_layers) -> DrawingObstacles:
    """The drawing's own entities (not on ``result_layers`` nor on any
    ``RESULT-`` layer) as obstacles, computed once."""
    skip = {n.upper() for n in result_layers}
    return drawing_obstacles(doc, lambda layer: layer.upper() in skip or layer.upper().startswith("RESULT-"))


def _largest_displacement(res) -> float:
    """Largest displacement of a result [m]: at the nodes, and inside the
    members when the result has the exact member table (a simple beam's
    nodes do not move)."""
    d = np.asarray(res.displacements, dtype=float)
    big = float(np.max(np.hypot(d[:, 0], d[:, 1]))) if len(d) else 0.0
    table = getattr(res, "member_table", None)
    if table is not None:
        inner = np.asarray(table().get("deflection_max", []), dtype=float)
        if inner.size and np.isfinite(inner).any():
            big = max(big, float(np.nanmax(inner)))
    return big


def service_results(results: Sequence) -> list:
    """The results a deflected shape is drawn for: the ASD combinations
    (service level), else the load cases, else all of them."""
    asd = [r for r in results if r.kind == "combination" and (r.family or "").upper() == "ASD"]
    if asd:
        return asd
    return [r for r in results if r.kind == "case"] or list(results)


def _drop_layer(doc, name: str) -> None:
    """Remove layer ``name`` when it exists (its entities were cleared)."""
    if name in doc.layers:
        try:
            doc.layers.remove(name)
        except Exception:  # noqa: BLE001 - a layer ezdxf keeps (current layer): leave it, empty
            pass


def _draw_tags(pen: Pen, model, geom: FrameGeom, layer: str, h: float, font, members, obst: DrawingObstacles,
               taken: dict) -> list[str]:
    """The member tags: each reported member's id (a drawn span, its pieces
    grouped) beside its middle, clear of everything placed; returns the
    ids of the tags left out for want of room."""
    frame = model.frame
    spans: dict[str, list[int]] = {}
    for i, m in enumerate(frame.members):
        spans.setdefault(m.group, []).append(i)
    if not spans:
        return []
    th = 0.8 * h
    near = list(obst.near((geom.bounds[0] - 10 * h, geom.bounds[1] - 10 * h,
                           geom.bounds[2] + 10 * h, geom.bounds[3] + 10 * h)))
    placer = LabelPlacer(list(members) + near, cell=4 * h, taken=taken)
    hh = 0.7 * th
    ids = list(spans)
    a, b = np.empty((len(ids), 2)), np.empty((len(ids), 2))
    for k, gid in enumerate(ids):          # the span's two far ends along its first member
        idx = spans[gid]
        if len(idx) == 1:
            a[k], b[k] = geom.start[idx[0]], geom.end[idx[0]]
            continue
        pts = np.vstack([geom.start[idx], geom.end[idx]])
        proj = pts @ geom.t[idx[0]]
        a[k], b[k] = pts[int(np.argmin(proj))], pts[int(np.argmax(proj))]
    n = geom.n[[spans[gid][0] for gid in ids]]
    hws = np.array([0.5 * text_width(font, gid, h) * (th / h) + 0.15 * th for gid in ids])  # the font is sized for h
    # candidates in order of preference: along the span (f), off it (d), above then below (side)
    f = np.array([0.5, 0.35, 0.65, 0.2, 0.8])[None, :, None, None, None]
    d = np.stack([np.full(len(ids), hh + 0.3 * h), hws + 0.3 * h, np.full(len(ids), 2.5 * h)], axis=1)
    side = np.array([1.0, -1.0])[None, None, None, :, None]
    cands = (a[:, None, None, None, :] + (b - a)[:, None, None, None, :] * f
             + n[:, None, None, None, :] * side * d[:, None, :, None, None]).reshape(len(ids), 30, 2)
    # the obstacles do not change while tags are placed: one query for every candidate of every tag
    clear = placer.free_of_obstacles(cands.reshape(-1, 2), np.repeat(hws, 30), hh).reshape(len(ids), 30)
    dropped: list[str] = []
    for k, gid in enumerate(ids):
        hw = hws[k]
        for cx, cy in cands[k][clear[k]]:
            box = (cx - hw, cy - hh, cx + hw, cy + hh)
            if placer.free_of_boxes(box):
                placer.take(box)
                pen.text(gid, (float(cx), float(cy) + centre_lift(font, th)), th, layer)
                break
        else:
            dropped.append(gid)
    return dropped


def _draw_probes(pen: Pen, model, sel: Selection, probes, layer: str, h: float, font, uf: UnitFactors,
                 members, obst: DrawingObstacles, taken: dict, far_spot=None) -> list[str]:
    """A marker at each probe point and its N, V, M beside it (tags layer),
    clear of the drawing's content and of every result text: beside the
    point when there is room, else at the free place ``far_spot`` finds
    (with a leader).  A probe whose values find no free place gets the
    marker only; returns the texts of those probes (for the notes and a
    warning)."""
    from ..report.report import locate_points

    placer = LabelPlacer(list(members) + list(obst.geoms), cell=4 * h, taken=taken)
    unplaced: list[str] = []
    for k, ((px, py), (mid, xl)) in enumerate(zip(probes, locate_points(model, probes)), start=1):
        x = np.array([xl])
        vals = [(float(np.asarray(r.members[mid].axial(x))[0]), float(np.asarray(r.members[mid].shear(x))[0]),
                 float(np.asarray(r.members[mid].moment(x))[0])) for r in sel.results]
        j = int(np.argmax([abs(v[2]) for v in vals]))
        n, v, m = vals[j]
        key = f" [C{j + 1}]" if sel.envelope else ""
        text = (f"P{k} N={label_value(n * uf.force)} V={label_value(v * uf.force)} "
                f"M={label_value(m * uf.moment)}{key}")
        pen.circle((px, py), 0.4 * h, layer)
        hw, hh = 0.5 * text_width(font, text, h) + 0.15 * h, 0.7 * h
        ring = [(px + dx * (hw + 0.6 * h * s), py + dy * (hh + 0.6 * h * s))
                for s in (1, 3, 6) for dx, dy in ((1, 1), (-1, 1), (1, -1), (-1, -1), (0, 1), (0, -1))]
        at = next(((cx, cy) for cx, cy in ring if placer.try_place(cx, cy, hw, hh)), None)
        if at is None and far_spot is not None:
            cx, cy = ring[0]
            got = far_spot((cx - hw, cy - hh, cx + hw, cy + hh))
            if got is not None and placer.try_place(cx + got[0], cy + got[1], hw, hh):
                at = (cx + got[0], cy + got[1])
                # a leader from the marker to the nearest point of the text's box
                q = (min(max(px, at[0] - hw), at[0] + hw), min(max(py, at[1] - hh), at[1] + hh))
                pen.line((px, py), q, layer)
        if at is None:
            unplaced.append(f"{text} at ({px:g}, {py:g})")
            continue
        pen.text(text, (at[0], at[1] + centre_lift(font, h)), h, layer)
    return unplaced


def _schedule_notes(schedule: list[str], uf: UnitFactors) -> list[str]:
    """The reaction schedule of an envelope as notes paragraphs."""
    if not schedule:
        return []
    return [f"Reaction schedule ({uf.force_unit}, {uf.moment_unit}; max and min over the envelope, "
            "a line ending in UPLIFT has a negative minimum Ry):"] + [f"- {row}" for row in schedule]


def _draw_near_misses(pen: Pen, model, layer: str, h: float) -> list[Box]:
    """A circle and the words "near miss?" at each free member end that
    stops just short of another member or a support (the warning in the
    notes names both handles); returns the boxes drawn on."""
    boxes: list[Box] = []
    for x, y, _text in model.near_misses:
        r = 1.2 * h
        pen.circle((x, y), r, layer)
        pen.text("near miss?", (x, y + r + 0.8 * h), 0.8 * h, layer)
        boxes.append((x - 4 * h, y - r, x + 4 * h, y + r + 1.4 * h))
    return boxes


def _reaction_table(sel: Selection) -> tuple[list[int], np.ndarray]:
    """Support nodes and their reactions (k results, nodes, 3) [SI]."""
    nodes: list[int] = []
    for r in sel.results:
        for rc in r.reactions:
            if int(rc.node) not in nodes:
                nodes.append(int(rc.node))
    index = {n: i for i, n in enumerate(nodes)}
    table = np.zeros((len(sel.results), len(nodes), 3))
    for k, r in enumerate(sel.results):
        for rc in r.reactions:
            table[k, index[int(rc.node)]] += (rc.fx, rc.fy, rc.m)
    return nodes, table


def _draw_reactions(pen: Pen, model, geom: FrameGeom, sel: Selection, layer: str, uf: UnitFactors,
                    h: float, labels: list[Label], schedule: list[str] | None = None,
                    used_keys: set[int] | None = None) -> list:
    """Arrows at the supports and their label requests; returns the arrow
    shafts as shapely lines (obstacles for the reaction labels).

    For an envelope each component gets one arrow (in the direction of the
    bound of larger magnitude) and one label with both bounds side by
    side, "Ry max 685.2 [C2] min -12.3 [C5] UPLIFT" (a negative minimum of
    Ry: the support is pulled up); ``[all]`` when every result gives the
    same value.  The same lines go to ``schedule`` (the notes' reaction
    schedule) and the keys used to ``used_keys``.  Reactions are written
    however small.
    """
    schedule = [] if schedule is None else schedule
    used_keys = set() if used_keys is None else used_keys
    nodes, table = _reaction_table(sel)
    if not nodes:
        return []
    frame = model.frame
    size = geom.size
    La, gap, head = 0.07 * size, 0.012 * size, min(0.3 * 0.07 * size, 1.4 * h)
    fmax = float(np.max(np.abs(table[:, :, :2]))) if table.size else 0.0
    mmax = float(np.max(np.abs(table[:, :, 2]))) if table.size else 0.0
    shafts = []
    for i, nid in enumerate(nodes):
        p = np.array([frame.nodes[nid].x, frame.nodes[nid].y]) / model.unit_scale
        for comp, sym in ((0, "Rx"), (1, "Ry"), (2, "Mr")):
            vals = table[:, i, comp]
            ref = mmax if comp == 2 else fmax
            if not ref > 0 or np.max(np.abs(vals)) <= 1e-9 * ref:
                continue
            kmax, kmin = int(np.argmax(vals)), int(np.argmin(vals))
            kb, ko = (kmax, kmin) if abs(vals[kmax]) >= abs(vals[kmin]) else (kmin, kmax)
            v_big, v_oth = float(vals[kb]), float(vals[ko])
            factor = uf.moment if comp == 2 else uf.force
            texts: list[tuple[str, int | None, float]]
            if not sel.envelope:
                texts = [(f"{sym}={label_value(v_big * factor)}", None, v_big)]
            elif abs(v_big - v_oth) <= 1e-9 * ref:
                texts = [(f"{sym}={label_value(v_big * factor)} [all]", None, v_big)]
            else:
                # max and min side by side in one label, so both stay at the support
                hi, lo = float(vals[kmax]), float(vals[kmin])
                flag = " UPLIFT" if comp == 1 and lo < 0 else ""
                texts = [(f"{sym} max {label_value(hi * factor)} [C{kmax + 1}] min {label_value(lo * factor)} "
                          f"[C{kmin + 1}]{flag}", kb, v_big)]
                schedule.append(f"node {nid} {sym}: max {label_value(hi * factor)} [C{kmax + 1}], "
                                f"min {label_value(lo * factor)} [C{kmin + 1}]{flag}")
                used_keys.update((kmax, kmin))
            if comp == 0:
                a, b = p + (-gap - La, 0.0), p + (-gap, 0.0)
                tail, tip = (a, b) if v_big > 0 else (b, a)
                pen.arrow(tail, tip, head, layer)
                shafts.append(shapely.LineString([a, b]))
                out, along, anchor = np.array([0.0, 1.0]), np.array([1.0, 0.0]), (a + b) / 2
            elif comp == 1:
                a, b = p + (0.0, -gap - La), p + (0.0, -gap)
                tail, tip = (a, b) if v_big > 0 else (b, a)
                pen.arrow(tail, tip, head, layer)
                shafts.append(shapely.LineString([a, b]))
                out, along, anchor = np.array([1.0, 0.0]), np.array([0.0, 1.0]), (a + b) / 2
            else:
                r = 0.045 * size
                a0, a1 = 30.0, 300.0
                pen.arc(p, r, a0, a1, layer)
                ang = math.radians(a1 if v_big > 0 else a0)
                tip = p + r * np.array([math.cos(ang), math.sin(ang)])
                tang = np.array([-math.sin(ang), math.cos(ang)]) * (1.0 if v_big > 0 else -1.0)
                pen.arrow(tip - tang * head * 1.2, tip, head, layer)
                arc_pts = [p + r * np.array([math.cos(q), math.sin(q)])
                           for q in np.radians(np.linspace(a0, a1, 10))]
                shafts.append(shapely.LineString(arc_pts))
                d = np.array([math.cos(math.radians(165)), math.sin(math.radians(165))])
                out, along, anchor = d, np.array([0.0, 1.0]), p + d * r
            for k, (text, key, v) in enumerate(texts):
                spot = Spot(text, anchor - along * (1.6 * h * k), p, out, along, 0.0, key)
                labels.append(Label(PRIORITY["reaction"] + 0.01 * k, "reaction", v, layer, [spot], must=True, force=True))
    return shafts


def _draw_deflected(pen: Pen, model, geom: FrameGeom, sel: Selection, layer: str, h: float,
                    summary: DrawingSummary, legend: list[tuple[str, str]],
                    chains: list[list[int]] | None = None, service: Sequence | None = None,
                    uf: UnitFactors | None = None, labels: list[Label] | None = None) -> np.ndarray | None:
    """Exaggerated deflected shape at service level: of the result among
    ``service`` (:func:`service_results`; None: the drawn results) with the
    largest nodal displacement.  The largest displacement gets a label
    request (appended to ``labels``) with its value in mm (inch for a US
    output unit) and the result's name.

    Elements long enough to carry labels are drawn exactly (the member
    results' deflection); shorter ones as the chord between their displaced
    ends, unless the results offer batch sampling (``members.sample("u" |
    "v", rows, x)``), which draws every element exactly.  The exaggeration
    uses the exact largest displacement when the results have
    ``member_table()``.  Returns the drawn points (k, 2), or None.
    """
    # Long by intent: the exaggeration factor, the chords of short elements and the run polylines
    # share the sampled displacements.
    pool = list(service) if service else list(sel.results)
    cands = [r for r in pool if getattr(r, "displacements", None) is not None]
    if not cands:
        legend.append(("deflected", "deflected shape: not available (member sections are needed)"))
        return
    mags = [_largest_displacement(r) for r in cands]
    res = cands[int(np.argmax(mags))]
    frame = model.frame
    us = model.unit_scale
    n_el = len(frame.members)
    if not n_el:
        return
    unit = np.linspace(0.0, 1.0, _DEFL_SAMPLES)
    node_d = np.asarray(res.displacements, dtype=float)[:, :2] / us             # drawing units
    si = np.array([m.start for m in frame.members])
    ei = np.array([m.end for m in frame.members])
    chords = 0
    if callable(getattr(res.members, "sample", None)):
        pos = {mid: j for j, mid in enumerate(res.members)}
        rows = np.repeat(np.array([pos[m.id] for m in frame.members]), _DEFL_SAMPLES)
        x = np.outer(geom.length_m, unit).ravel()
        u = np.asarray(res.members.sample("u", rows, x), float).reshape(n_el, -1, 1)
        v = np.asarray(res.members.sample("v", rows, x), float).reshape(n_el, -1, 1)
        t, nrm = geom.t[:, None, :], geom.n[:, None, :]
        base = (geom.start[:, None, :] + np.outer(geom.length_m / us, unit)[:, :, None] * t).reshape(-1, 2)
        disp = ((u * t + v * nrm) / us).reshape(-1, 2)
        bounds = np.arange(n_el + 1) * _DEFL_SAMPLES
    else:
        small = geom.length_m / us < 3 * h
        bases, disps = [], []                                                    # per element
        for i, m in enumerate(frame.members):
            if small[i]:
                bases.append(np.vstack([geom.start[i], geom.end[i]]))
                disps.append(node_d[[si[i], ei[i]]])
                chords += 1
                continue
            d = res.members[m.id].deflection(geom.length_m[i] * unit)
            if d is None:
                legend.append(("deflected", "deflected shape: not available (member sections are needed)"))
                return
            u, v = (np.broadcast_to(np.asarray(q, float), unit.shape) for q in d)
            disps.append((np.outer(u, geom.t[i]) + np.outer(v, geom.n[i])) / us)
            bases.append(geom.start[i] + np.outer(geom.length_m[i] * unit / us, geom.t[i]))
        base, disp = np.concatenate(bases), np.concatenate(disps)
        bounds = np.r_[0, np.cumsum([len(q) for q in bases])]
    mag = np.hypot(disp[:, 0], disp[:, 1])
    dmax = float(mag.max())
    table = getattr(res, "member_table", None)
    if table is not None:
        exact = np.asarray(table().get("deflection_max", []), dtype=float) / us
        if exact.size and np.isfinite(exact).any():
            dmax = max(dmax, float(np.nanmax(exact)))
    if not dmax > 0:
        legend.append(("deflected", "deflected shape: no displacement"))
        return
    factor = _nice_down(_DEFLECTION_TARGET * geom.size / dmax)
    # one polyline per straight chain of elements (a beam line split at every
    # column, a column line split at every floor): the displacement is
    # continuous at a node, so the chain's curve is one line and its dashes
    # run on through the joints.  Thinned to the chord tolerance, with 1 % of
    # the element's largest drawn displacement as the relative part.
    moved = base + factor * disp
    tol = chord_tolerance(h, factor * np.maximum.reduceat(mag, bounds[:-1]), geom.size)
    chains = chains if chains is not None else straight_chains(si, ei, geom.t)
    runs, pts = chain_polylines(moved, bounds, chains, tol)
    for run in runs:
        pen.polyline(run, layer, dashed=True)
    summary.deflection_factor = factor
    summary.deflection_result = res.name
    if labels is not None and uf is not None:
        k = int(np.argmax(mag))
        small_unit, per_m = ("in", 1 / 0.0254) if uf.length_unit in ("ft", "inch", "in") else ("mm", 1000.0)
        value = float(mag[k]) * us * per_m
        text = f"max displacement {label_value(value)} {small_unit} ({res.name})"
        spot = Spot(text, moved[k], base[k], np.array([0.0, 1.0]), np.array([1.0, 0.0]), 0.0, None)
        lb = Label(PRIORITY["extreme"], "extreme", value, layer, [spot], must=True)
        labels.append(lb)
        # the legend carries the value too: the label is written only where it has room
        note_value = f"; largest displacement {label_value(value)} {small_unit}"
    else:
        note_value = ""
    which = f" of {res.name} (service level)"
    note = "; short elements drawn as chords" if chords else ""
    legend.append(("deflected", f"deflected shape{which}: displacements exaggerated x {factor:g}{note_value}{note}"))
    return pts


def _storey_drift_labels(model, geom: FrameGeom, results: Sequence, layer: str, drift: Mapping | None,
                         legend: list[tuple[str, str]], labels: list[Label]) -> None:
    """Each storey's worst service-level drift ratio (the ASD combinations,
    else the load cases) as a short label ``h/812`` (`` !`` when worse than
    the limit) at the right of the frame at the storey's top level, on the
    deflected-shape layer; the labels join the shared placement, so they
    keep clear of the drafter's content and of every other result text."""
    from ..report.storeys import ratio_text, service_results
    from ..solver import drift_envelope, find_storeys

    drift = dict(drift or {})
    service = [r for r in service_results(results) if r.displacements is not None]
    if not service or not model.frame.members:
        return
    levels = drift.get("levels")
    us = model.unit_scale
    try:
        storeys = find_storeys(model.frame, None if levels is None else [v * us for v in levels])
    except ValueError:
        return                                          # the report says so (bad input)
    worst = drift_envelope(model.frame, service, storeys, limit=float(drift.get("limit") or 400.0),
                           measure=str(drift.get("measure") or "mean"))
    if not worst:
        return
    x = geom.bounds[2]
    for d in worst:
        text = ratio_text(d.ratio) + ("" if d.ok else " !")
        at = np.array([x, d.top / us])
        spot = Spot(text, at, at, np.array([1.0, 0.0]), np.array([0.0, 1.0]), 0.0, None)
        labels.append(Label(PRIORITY["extreme"], "extreme", float(d.ratio), layer, [spot], must=True))
    # the legend carries every ratio too: a label is written only where it has room
    listed = ", ".join(ratio_text(d.ratio) + ("" if d.ok else " !") for d in worst)
    legend.append(("deflected", f"storey drift: worst service-level ratio at each level (h = storey height; "
                                f"limit h/{worst[0].limit:g}; ! = worse than the limit), from the lowest "
                                f"storey up: {listed}"))


def write_result_drawing(
    source: Path,
    out: Path,
    model: "DrawingModel",
    det,
    results: Sequence,
    *,
    show: str | None,
    layers: Mapping[str, str] | None = None,
    force_unit: str,
    length_unit: str,
    document: "Drawing | None" = None,
    drift: Mapping | None = None,
    text_height: float | None = None,
    scales: Mapping[str, float] | None = None,
    probes: Sequence[tuple[float, float]] = (),
    extra: "Callable[[Drawing, DrawingObstacles | None], object] | None" = None,
    saver: "Callable[[Drawing, Path], None] | None" = None,
    before_notes: "Callable[[], None] | None" = None,
) -> DrawingSummary:
    """Write a copy of ``source`` with the result layers to ``out`` (atomic);
    returns what was drawn (:class:`DrawingSummary`, with its warnings).

    Parameters
    ----------
    source : the input drawing (read again, never written)
    out : the result drawing; must not be ``source``
    model, det, results : the analysis (SI), results = cases then combinations
    show : a result name, or ``"envelope:LRFD"`` / ``"envelope:ASD"`` /
        ``"envelope:all"`` / ``"envelope"``; None = ``"envelope:LRFD"``
    layers : result layer key -> name (the settings' ``[output_layers]``; None: the defaults)
    force_unit, length_unit : units of the values written as text
    drift : storey drift options (see :func:`annotate_results`)
    document : optional: ``source`` already loaded with ``ezdxf.readfile``
        and not modified since (the reader's document), to save reading the
        file a second time; it is annotated in place
    text_height, scales, probes : see :func:`annotate_results`
    extra : optional: draws more result layers into the annotated document
        before it is saved (the second-order and moving-load layers);
        called as ``extra(doc, content)`` with the drawing's own entities
        as obstacles (measured once, by the results' placement)
    before_notes : see :func:`annotate_results`
    saver : optional: saves the annotated document to ``out`` instead of
        an atomic save here (:class:`dxf2frame.background_save.BackgroundSave`
        saves it on another core; the caller waits for it); a saver with a
        ``begin(doc, out)`` method is told once the previous results are
        removed (from then on the drawing only gains modelspace entities),
        so that it can start writing, and again once the diagrams and
        labels are drawn

    Raises
    ------
    InputFileError  the source cannot be read
    SettingsError  unknown ``show`` name, or ``out`` is the source
    """
    source, out = Path(source), Path(out)
    _check_target(source, out)
    doc = document if document is not None else _load_source(source)
    begin = getattr(saver, "begin", None)
    begin_save, notes_step = None, before_notes
    if begin is not None:
        def begin_save() -> None:
            begin(doc, out)

        def notes_step() -> None:
            begin(doc, out)                        # the diagrams and labels: the save's second piece
            if before_notes is not None:
                before_notes()
    summary = annotate_results(doc, model, det, results, show=show, layers=layers,
                               force_unit=force_unit, length_unit=length_unit, drift=drift,
                               text_height=text_height, scales=scales, probes=probes,
                               before_notes=notes_step, begin_save=begin_save)
    if extra is not None:
        extra(doc, summary.content)
    if saver is not None:
        saver(doc, out)
        return summary
    with atomic_path(out) as tmp:
        doc.saveas(tmp)
    return summary


# -- unstable frames -----------------------------------------------------------


def annotate_mechanism(doc: "Drawing", model: "DrawingModel", det,
                       layers: Mapping[str, str] | None = None) -> DrawingSummary:
    """Draw the mechanism modes of an unstable frame into an open document.

    Each mode is the frame displaced by the mode (scaled so the largest
    movement is about 10 % of the frame's size), drawn on the mechanism
    layer with circles at the nodes that move and a "mode k" label; a notes
    block explains the instability and carries the caution.  ``layers`` as
    for :func:`annotate_results`.
    """
    names = result_layer_names(layers)
    clear_result_layers(doc, names.values())
    drawn_here = ("mechanism", "notes")               # no empty result layers in an unstable result
    for key, name in names.items():
        if key not in drawn_here:
            _drop_layer(doc, name)
    prepare_layers(doc, {k: names[k] for k in drawn_here})
    geom = frame_geom(model)
    size = geom.size
    h = geom.text_height
    pen = Pen(doc, size)
    frame = model.frame
    layer = names["mechanism"]
    xy = np.array([(n.x, n.y) for n in frame.nodes], dtype=float).reshape(-1, 2) / model.unit_scale
    modes = list(det.modes)
    drawn = 0
    for k, mode in enumerate(modes, start=1):
        mv = np.asarray(mode, dtype=float).reshape(len(xy), -1)[:, :2]
        mag = np.hypot(mv[:, 0], mv[:, 1])
        peak = float(mag.max()) if len(mag) else 0.0
        if not peak > 1e-12:
            continue
        moved = xy + mv * (_MECHANISM_TARGET * size / peak)
        for m in frame.members:
            pen.polyline([moved[m.start], moved[m.end]], layer, dashed=True)
        for nid in np.flatnonzero(mag > 1e-6 * peak):
            pen.circle(xy[nid], 0.6 * h, layer)
            pen.line(xy[nid], moved[nid], layer)
        top = int(np.argmax(mag))
        pen.text(f"mode {k}", moved[top] + np.array([0.0, 1.5 * h]), h, layer)
        drawn += 1
    legend = [("mechanism", f"mechanism: {drawn} mode(s) drawn displaced (largest movement "
                            f"{int(_MECHANISM_TARGET * 100)} % of the frame size); circles mark moving nodes")]
    involved = det.nodes_involved
    extra = []
    for k, nodes in enumerate(involved, start=1):
        pts = ", ".join(f"({frame.nodes[n].x / model.unit_scale:.4g}, {frame.nodes[n].y / model.unit_scale:.4g})"
                        for n in list(nodes)[:12])
        more = " ..." if len(nodes) > 12 else ""
        extra.append(f"Mode {k} moves nodes at {pts}{more} (drawing coordinates)")
    shown = "the frame is unstable: no results; the mechanism modes are drawn instead"
    x0 = geom.bounds[2] + 0.25 * size
    y = geom.bounds[3]
    pen.text("dxf2frame: unstable frame", (x0, y), 1.4 * h, names["notes"], style="D2F-NOTES",
             align=TextEntityAlignment.TOP_LEFT)
    y -= 2.6 * h
    for key, line in legend:
        pen.text(line, (x0, y), h, names[key], style="D2F-NOTES", align=TextEntityAlignment.TOP_LEFT)
        y -= 1.9 * h
    pen.notes(notes_paragraphs(model, det, None, shown, extra), (x0, y - 0.8 * h), h,
              max(0.6 * size, 45 * h), names["notes"])
    return DrawingSummary(layers=names, text_height=h, entities=pen.count, shown=shown)


def write_mechanism_drawing(source: Path, out: Path, model: "DrawingModel", det,
                            layers: Mapping[str, str] | None = None, *, document: "Drawing | None" = None) -> None:
    """Write a copy of ``source`` that shows the mechanism of an unstable
    frame (atomic); ``layers`` and ``document`` as for :func:`write_result_drawing`."""
    source, out = Path(source), Path(out)
    _check_target(source, out)
    doc = document if document is not None else _load_source(source)
    annotate_mechanism(doc, model, det, layers)
    with atomic_path(out) as tmp:
        doc.saveas(tmp)
