"""Second-order and moving-load results in the result drawing: the buckled
shape of the lowest mode (layer key ``buckling``), the axles of each
vehicle at its critical position (``moving``) and the influence lines of
the probes (``influence``), each on a layer of its own, names remappable
through ``[output_layers]``.  Also the drawing of a frame that buckles
under a strength combination (no results, the buckled shape and a note),
as for an unstable frame.

The outcomes come in as plain objects (see :mod:`dxf2frame.further`);
coordinates in the model are SI and drawn in drawing units
(``model.unit_scale`` m per drawing unit).
"""
from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Mapping

import numpy as np
from ezdxf.enums import TextEntityAlignment

from .. import CAUTION
from ..atomic import atomic_path
from ..settings import DEFAULT_OUTPUT_LAYERS as _SETTINGS_OUTPUT_LAYERS, FURTHER_OUTPUT_LAYER_KEYS
from .curves import chain_polylines, chord_tolerance, frame_geom, straight_chains
from .legend import notes_paragraphs
from .obstacles import DrawingObstacles, drawing_obstacles, keep_clear
from .style import Pen, clear_result_layers, prepare_layers, result_layer_names

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

__all__ = ["further_layer_names", "annotate_further", "write_buckling_drawing"]

_SHAPE_TARGET = 0.10    # largest drawn buckling movement / frame size
_INFLUENCE_TARGET = 0.12  # largest influence ordinate / frame size


def further_layer_names(layers: Mapping[str, str] | None = None) -> dict[str, str]:
    """{"buckling"|"moving"|"influence": layer name}, the defaults overridden
    by ``layers`` (the settings' ``[output_layers]``)."""
    names = {k: _SETTINGS_OUTPUT_LAYERS[k] for k in FURTHER_OUTPUT_LAYER_KEYS}
    for k, v in (layers or {}).items():
        if k in names and v:
            names[k] = str(v)
    return names


def _buckled_shape(pen: Pen, model, b, layer: str, size: float, h: float, label: str) -> None:
    """The buckled shape of ``b`` (a BucklingResult) over the frame: one
    dashed polyline per straight run of elements (the shape is continuous
    at a joint), thinned to the chord tolerance as the deflected shape is
    (:func:`dxf2frame.draw.curves.chain_polylines`), and ``label`` above
    its largest movement."""
    frame = model.frame
    shape = np.asarray(b.member_shape, dtype=float)
    n_el = len(frame.members)
    if not n_el or not shape.size:
        return
    mag = np.hypot(shape[..., 0], shape[..., 1])                       # (m, k)
    peak = float(mag.max())
    if not peak > 0:
        return
    k = _SHAPE_TARGET * size / peak
    geom = frame_geom(model)
    along = np.asarray(b.member_points, dtype=float)
    t = along / np.where(along[:, -1:] > 0, along[:, -1:], 1.0)          # 0..1 along each member
    base = geom.start[:, None, :] + t[:, :, None] * (geom.end - geom.start)[:, None, :]
    moved = (base + k * shape).reshape(-1, 2)
    bounds = np.arange(n_el + 1) * shape.shape[1]
    si = np.array([m.start for m in frame.members])
    ei = np.array([m.end for m in frame.members])
    runs, _pts = chain_polylines(moved, bounds, straight_chains(si, ei, geom.t),
                                 chord_tolerance(h, k * mag.max(axis=1), size))
    for run in runs:
        pen.polyline(run, layer, dashed=True)
    top = moved[int(np.argmax(mag.ravel()))]
    pen.text(label, top + np.array([0.0, 1.5 * h]), h, layer)


def _fresh_layers(doc: "Drawing", model, *layer_sets: dict[str, str], text_height: float | None = None,
                  clear: bool = True):
    """Set up each set of result layers, emptied first unless ``clear`` is
    False; (frame geometry, its size, the text height: ``text_height`` when
    given, else the frame's default) [drawing units]."""
    for names in layer_sets:
        if clear:
            clear_result_layers(doc, names.values())
        prepare_layers(doc, names)
    geom = frame_geom(model)
    return geom, geom.size, geom.text_height_or(text_height)


def annotate_further(doc: "Drawing", model, stability=None, moving=None, *,
                     layers: Mapping[str, str] | None = None,
                     content: DrawingObstacles | None = None,
                     text_height: float | None = None) -> list[str]:
    """Draw the second-order and moving-load results into ``doc`` (already
    annotated with the first-order results, which emptied these layers
    too: :func:`dxf2frame.draw.writer.annotate_results`).  Returns legend
    lines.

    ``content``: the drawing's own entities as obstacles when the caller
    has them (the first-order writer measures them); only the result
    layers are measured here then.  ``text_height`` [drawing units]: as
    the first-order results' (the settings' ``[drawing]``); None sizes
    texts to the frame."""
    names = further_layer_names(layers)
    geom, size, h = _fresh_layers(doc, model, names, text_height=text_height, clear=False)
    ours = {n.upper() for n in names.values()}
    # the drafter's content and the first-order result layers, before these layers are drawn
    if content is None:
        obst = drawing_obstacles(doc, lambda layer: layer.upper() in ours)
    else:
        first = {n.upper() for n in result_layer_names(layers).values()}

        def not_first_order(layer: str) -> bool:
            u = layer.upper()
            return u in ours or not (u in first or u.startswith("RESULT-"))

        obst = content.joined(drawing_obstacles(doc, not_first_order))
    msp = doc.modelspace()
    before = len(msp)
    pen = Pen(doc, size)
    us = model.unit_scale
    legend = []
    low = stability.lowest if stability is not None else None
    if low is not None:
        _buckled_shape(pen, model, low, names["buckling"], size, h,
                       f"buckled shape, {low.name}: alpha_cr = {low.alpha_cr:.3g}")
        legend.append(f"{names['buckling']}: buckled shape of the lowest mode ({low.name}, alpha_cr = "
                      f"{low.alpha_cr:.3g}), largest movement {int(_SHAPE_TARGET * 100)} % of the frame size")
    if stability is not None and stability.second_order:
        first = next(iter(stability.second_order))
        legend.append("P-Delta results of the strength combinations are in the report (second_order.results); "
                      f"the diagrams above are first order unless drawn with --show \"{first} (second order)\"")
    if moving is not None:
        for kv, v in enumerate(moving.vehicles):
            c = v.critical
            if not c or not len(v.axles):
                continue
            pts = v.axles / us
            for p in pts:
                pen.arrow(p + np.array([0.0, 3.0 * h]), p, 0.8 * h, names["moving"])
                pen.circle(p, 0.4 * h, names["moving"])
            pen.text(f"{v.name}: critical position for M in {c['member']}",
                     (float(np.mean(pts[:, 0])), pts[0][1] + (4.2 + 1.6 * kv) * h), h, names["moving"])
        if moving.vehicles:
            legend.append(f"{names['moving']}: axles of each vehicle at the position giving its largest |M|")
        for kp, pi in enumerate(moving.influence):
            line = pi.lines["M"]
            xy = line.xy / us
            big = float(np.max(np.abs(line.values))) if len(line.values) else 0.0
            k = _INFLUENCE_TARGET * size / big if big > 0 else 0.0
            pen.polyline(xy, names["influence"])
            pen.polyline(xy + np.column_stack([np.zeros(len(xy)), k * line.values]), names["influence"], dashed=True)
            pen.circle(pi.point, 0.5 * h, names["influence"])
            pen.text(f"influence line of M at ({pi.point[0]:g}, {pi.point[1]:g}), largest {big / us:.4g} "
                     f"{model.length_unit} per unit load", (xy[0][0], xy[0][1] - (2.5 + 1.6 * kp) * h), h,
                     names["influence"],
                     align=TextEntityAlignment.TOP_LEFT)
        if moving.influence:
            legend.append(f"{names['influence']}: influence lines of M, + drawn upward (sagging), per unit load")
    if legend:
        pen.notes(["Second order and moving loads:"] + legend + [f"CAUTION: {CAUTION}"],
                  (geom.bounds[0], geom.bounds[1] - 6.0 * h), h, max(0.6 * size, 45 * h),
                  result_layer_names(layers)["notes"])
    # every text written here moves, as a whole, to the nearest place clear of
    # the drafter's content, the first-order results and each other
    texts = [e for e in list(msp)[before:] if e.dxftype() in ("TEXT", "MTEXT")]
    if texts:
        keep_clear([[e] for e in texts], obst, [], obst.extents or geom.bounds, 0.5 * h)
    return legend


def write_buckling_drawing(source: Path, out: Path, model, det, stability, *,
                           layers: Mapping[str, str] | None = None, document: "Drawing | None" = None,
                           text_height: float | None = None) -> None:
    """Write a copy of the drawing marking the buckled shape of the
    combination that buckles (``stability.buckled``): no results, a note
    naming it, the caution (atomic).  ``text_height`` as in
    :func:`annotate_further`."""
    import ezdxf

    doc = document if document is not None else ezdxf.readfile(str(source))
    names, fnames = result_layer_names(layers), further_layer_names(layers)
    geom, size, h = _fresh_layers(doc, model, names, fnames, text_height=text_height)
    pen = Pen(doc, size)
    b = stability.buckled
    _buckled_shape(pen, model, b, fnames["buckling"], size, h, f"buckles: {b.name}")
    shown = (f"combination {b.name} buckles: its load reaches the elastic critical load (alpha_cr = "
             f"{b.alpha_cr:.3g} <= 1); no results; the buckled shape of the lowest mode is drawn on layer "
             f"{fnames['buckling']}")
    x0, y = geom.bounds[2] + 0.25 * size, geom.bounds[3]
    pen.text("dxf2frame: the frame buckles", (x0, y), 1.4 * h, names["notes"], style="D2F-NOTES",
             align=TextEntityAlignment.TOP_LEFT)
    pen.notes(notes_paragraphs(model, det, None, shown, []), (x0, y - 2.6 * h), h,
              max(0.6 * size, 45 * h), names["notes"])
    with atomic_path(Path(out)) as tmp:
        doc.saveas(tmp)
