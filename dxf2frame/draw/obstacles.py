"""The drafter's own content as obstacles for what the tool writes
(positions in drawing units).

Every modelspace entity off the result layers counts: titles, title
blocks, dimensions, grid lines and bubbles, hatches, notes.  Lines and
light polylines are obstacles as their linework (a sheet border around
everything is a line, not a box covering the whole sheet); every other
entity by its extents (``ezdxf.bbox``, blocks expanded).  A block
reference that spans most of the drawing (a title block drawn as one
block with the sheet border) is expanded one level so that its parts,
not its overall box, are the obstacles.  Linework reaching beyond 1e12
drawing units is no drawing's content and is left out (as in the preview).

Computed once per drawing and indexed in one STRtree; :func:`free_spot`
finds the nearest free place for a box (a legend, a notes block, a change
list), outside the drawing's extents when nothing inside is free.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable, Iterable, Sequence

import numpy as np
import shapely
from ezdxf import bbox

from .occupancy import Occupancy, present

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

__all__ = ["DrawingObstacles", "drawing_obstacles", "free_spot", "keep_clear", "points_box"]

Box = tuple[float, float, float, float]

_BIG_INSERT = 0.4          # a block reference wider and taller than this fraction of the extents is expanded
_MAX_CANDIDATES = 40_000   # positions tried inside the extents for one box
_FAR = 1e12                # coordinates beyond this [drawing units] are no drawing's content (as in the preview)
_OUTSIDE_STEPS = 64        # positions tried outward from each side of the extents
_INVISIBLE = 1             # the flag of an invisible attribute (DXF group 70)


@dataclass
class DrawingObstacles:
    """The drawing's own content.

    geoms : object array of shapely geometries (boxes and linework)
    extents : (xmin, ymin, xmax, ymax) of all of it, or None for an empty drawing
    """

    geoms: np.ndarray
    extents: Box | None

    def joined(self, other: "DrawingObstacles") -> "DrawingObstacles":
        """The obstacles of both."""
        ext = [e for e in (self.extents, other.extents) if e is not None]
        extents = (min(e[0] for e in ext), min(e[1] for e in ext), max(e[2] for e in ext),
                   max(e[3] for e in ext)) if ext else None
        return DrawingObstacles(np.concatenate([self.geoms, other.geoms]), extents)

    def near(self, box: Box) -> list:
        """The geometries whose extents touch ``box`` (for small searches)."""
        if not len(self.geoms):
            return []
        b = shapely.bounds(self.geoms)
        keep = (b[:, 0] <= box[2]) & (b[:, 2] >= box[0]) & (b[:, 1] <= box[3]) & (b[:, 3] >= box[1])
        return list(self.geoms[keep])


def _linework(e) -> np.ndarray | None:
    """(k, 2) vertices of a LINE or an unfilled LWPOLYLINE without bulges; None otherwise."""
    t = e.dxftype()
    if t == "LINE":
        s, t = e.dxf.start, e.dxf.end
        return np.array([(s.x, s.y), (t.x, t.y)], dtype=float)
    if t == "LWPOLYLINE":
        pts = _xyb(e)
        if len(pts) < 2 or np.any(pts[:, 2]) or e.dxf.get("const_width", 0):
            return None
        xy = pts[:, :2]
        return np.vstack([xy, xy[:1]]) if e.closed else xy
    return None


def _xyb(e) -> np.ndarray:
    """(k, 3) x, y, bulge of an LWPOLYLINE's vertices, read from its vertex
    array at once (ezdxf keeps x, y, start width, end width, bulge per
    vertex); through ``get_points`` where that array is not there."""
    try:
        v = np.asarray(e.lwpoints.values, dtype=float).reshape(-1, 5)
        return v[:, [0, 1, 4]]
    except Exception:  # noqa: BLE001 - another vertex store: the public call
        return np.array([p[:3] for p in e.get_points("xyb")], dtype=float).reshape(-1, 3)


def drawing_obstacles(doc: "Drawing", skip_layer: Callable[[str], bool], *,
                      member_layer: Callable[[str], bool] = lambda _l: False) -> DrawingObstacles:
    """The obstacles of ``doc``'s modelspace (see the module docstring).

    ``skip_layer(name)``: True for the layers the tool writes (result
    layers); ``member_layer(name)``: True for the frame's member layers,
    whose lines and polylines are left out (the writer has them).
    """
    cache = bbox.Cache()
    polys: list[np.ndarray] = []
    boxes: list[Box] = []
    others = []
    for e in doc.modelspace():
        layer = e.dxf.get("layer", "0")
        if skip_layer(layer):
            continue
        pts = _linework(e)
        if pts is not None:
            if not member_layer(layer):
                polys.append(pts)
            continue
        others.append(e)
    _boxes_of(others, boxes, cache)
    polys = [p for p in polys if np.abs(p).max() < _FAR]
    measured = _boxes_within_reach(boxes)
    ext = _extents(polys, measured)
    if ext is not None:
        # the unmeasured boxes stay in line with their entities here (NaN), dropped after
        boxes = _expand_big_inserts(others, boxes, ext, polys, cache)
        polys = [p for p in polys if np.abs(p).max() < _FAR]
    else:
        boxes = measured
    geoms = list(shapely.box(*np.array(boxes, dtype=float).T)) if boxes else []
    if polys:
        idx = np.repeat(np.arange(len(polys)), [len(p) for p in polys])
        geoms += list(shapely.linestrings(np.vstack(polys), indices=idx))
    return DrawingObstacles(geoms=np.array(geoms, dtype=object), extents=_extents(polys, boxes))


def _boxes_of(entities: Sequence, boxes: list[Box], cache) -> None:
    blocks: dict = {}                          # block name -> its content's box; (name, scales, rotation) -> placed box
    texts: dict[tuple, Box | None] = {}
    for e in entities:
        got = _insert_box(e, blocks, texts) if e.dxftype() == "INSERT" else None
        if got is None:
            try:
                b = bbox.extents([e], fast=True, cache=cache)
            except Exception:  # noqa: BLE001 - an entity ezdxf cannot measure is no obstacle
                b = None
            got = (b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y) if b is not None and b.has_data else None
        boxes.append(got if got is not None else (np.nan,) * 4)


def _insert_box(e, blocks: dict, texts: dict[tuple, Box | None]) -> Box | None:
    """The box of a plain block reference (one cell, in the drawing's plane):
    the box of its block's content, measured once per block name, with its
    four corners placed by the reference's transform (worked out once per
    block name, scales and rotation, then moved to each insertion point;
    both kept in ``blocks``), joined with the boxes of its visible
    non-empty attributes (each measured once per text and look, ``texts``:
    :func:`_attrib_box`).  A rotated reference gets the box of the turned
    box, a little larger than its content's own (conservative for
    placement).  None where this does not apply (a MINSERT grid, a
    reference out of the plane, a block that cannot be measured): the
    caller measures the whole reference."""
    try:
        dxf = e.dxf.all_existing_dxf_attribs()              # one copy, not a lookup per key
        if e.mcount > 1 or tuple(dxf.get("extrusion", (0.0, 0.0, 1.0))) != (0.0, 0.0, 1.0):
            return None
        name = dxf.get("name", "")
        if name not in blocks:
            blk = e.doc.blocks.get(name) if e.doc is not None else None
            if blk is None:
                return None
            b = bbox.extents((x for x in blk if x.dxftype() != "ATTDEF"), fast=True)
            blocks[name] = (b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y) if b.has_data else None
        local = blocks[name]
        at = dxf.get("insert", (0.0, 0.0, 0.0))
        xs, ys = [], []
        if local is not None:
            # in the drawing's plane the transform is linear part + insertion point:
            # the turned and scaled box, relative to the insertion point, is the same
            # for every reference of one block, scale and rotation
            look = (name, dxf.get("xscale", 1.0), dxf.get("yscale", 1.0), dxf.get("zscale", 1.0),
                    dxf.get("rotation", 0.0))
            if look not in blocks:
                x0, y0, x1, y1 = local
                pts = list(e.matrix44().transform_vertices([(x0, y0), (x1, y0), (x1, y1), (x0, y1)]))
                blocks[look] = (min(p.x for p in pts) - at[0], min(p.y for p in pts) - at[1],
                                max(p.x for p in pts) - at[0], max(p.y for p in pts) - at[1])
            r = blocks[look]
            xs, ys = [r[0] + at[0], r[2] + at[0]], [r[1] + at[1], r[3] + at[1]]
        for a in e.attribs:
            adxf = a.dxf.all_existing_dxf_attribs()
            if not adxf.get("flags", 0) & _INVISIBLE and str(adxf.get("text", "")).strip():
                ab = _attrib_box(a, adxf, texts)
                if ab is not None:
                    xs += [ab[0], ab[2]]
                    ys += [ab[1], ab[3]]
    except Exception:  # noqa: BLE001 - anything unusual: measure the whole reference instead
        return None
    if not xs:
        return None
    return (min(xs), min(ys), max(xs), max(ys))


def _attrib_box(a, dxf: dict, texts: dict[tuple, Box | None]) -> Box | None:
    """The box of one attribute text (``dxf``: its DXF attributes as set).
    ezdxf measures each distinct look (text, style, height, width,
    rotation, alignment) once; the box moves with the point the text hangs
    from (the alignment point for aligned text, else the insertion point).
    A text stretched between two points (aligned, fit), out of the plane or
    carrying MTEXT is measured alone."""
    halign, valign = dxf.get("halign", 0), dxf.get("valign", 0)
    plain = (halign not in (3, 5) and tuple(dxf.get("extrusion", (0.0, 0.0, 1.0))) == (0.0, 0.0, 1.0)
             and not a.has_embedded_mtext_entity)
    if not plain:
        b = bbox.extents([a], fast=True)
        return (b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y) if b.has_data else None
    hangs = (halign, valign) != (0, 0) and "align_point" in dxf
    at = dxf["align_point"] if hangs else dxf.get("insert", a.dxf.insert)
    key = (dxf.get("text"), dxf.get("style", ""), dxf.get("height", 0.0), dxf.get("width", 1.0),
           dxf.get("rotation", 0.0), dxf.get("oblique", 0.0), halign, valign, dxf.get("text_generation_flag", 0),
           hangs)
    if key not in texts:
        b = bbox.extents([a], fast=True)
        texts[key] = (b.extmin.x - at.x, b.extmin.y - at.y, b.extmax.x - at.x, b.extmax.y - at.y) \
            if b.has_data else None
    rel = texts[key]
    return None if rel is None else (rel[0] + at.x, rel[1] + at.y, rel[2] + at.x, rel[3] + at.y)


def _expand_big_inserts(entities: Sequence, boxes: list[Box], ext: Box, polys: list, cache) -> list[Box]:
    """Replace the box of each block reference spanning most of the drawing
    by the obstacles of its parts (lines as linework, the rest as boxes)."""
    w, h = ext[2] - ext[0], ext[3] - ext[1]
    out: list[Box] = []
    for e, b in zip(entities, boxes):
        big = (e.dxftype() == "INSERT" and b[2] - b[0] > _BIG_INSERT * w and b[3] - b[1] > _BIG_INSERT * h)
        if not big:
            out.append(b)
            continue
        try:
            parts = list(e.virtual_entities())
        except Exception:  # noqa: BLE001 - keep the box when the block cannot be expanded
            out.append(b)
            continue
        rest = []
        for p in parts:
            pts = _linework(p)
            if pts is not None:
                polys.append(pts)
            else:
                rest.append(p)
        _boxes_of(rest, out, cache)
    return _boxes_within_reach(out)


def _boxes_within_reach(boxes: list[Box]) -> list[Box]:
    """The boxes measured (no NaN) and within ``_FAR`` of the origin."""
    if not boxes:
        return []
    b = np.array(boxes, dtype=float).reshape(-1, 4)
    with np.errstate(invalid="ignore"):
        keep = np.all(np.abs(b) < _FAR, axis=1)
    return [boxes[k] for k in np.flatnonzero(keep)]


def _extents(polys: list[np.ndarray], boxes: Sequence[Box]) -> Box | None:
    """(xmin, ymin, xmax, ymax) of the polylines and the measured boxes, or None."""
    parts = [np.vstack(polys)] if polys else []
    if len(boxes):
        b = np.array(boxes, dtype=float).reshape(-1, 4)
        b = b[np.all(np.isfinite(b), axis=1)]
        parts += [b[:, :2], b[:, 2:]]
    if not parts or not sum(len(q) for q in parts):
        return None
    return points_box(np.vstack(parts))


def points_box(xy: np.ndarray) -> Box:
    """The box (xmin, ymin, xmax, ymax) of (k, 2) points, k >= 1; reduced
    column by column (numpy reduces a tall (k, 2) array along axis 0 some
    fifty times slower)."""
    return (float(xy[:, 0].min()), float(xy[:, 1].min()), float(xy[:, 0].max()), float(xy[:, 1].max()))


def free_spot(box: Box, obstacles: Sequence, extents: Box | None, gap: float, *,
              tree: "shapely.STRtree | Occupancy | None" = None, inside: bool = True) -> tuple[float, float]:
    """Shift (dx, dy) that moves ``box`` to the nearest place touching none
    of ``obstacles`` (shapely geometries) with ``gap`` around it.

    Places inside ``extents`` come first (nearest to where the box is);
    when none is free, the nearest place just outside the extents (right,
    below, left or above; farther out past obstacles beyond the extents).
    (0, 0) when the box is free where it is.  ``tree``: more obstacles,
    indexed once by the caller (many boxes placed against one drawing),
    as an STRtree or an :class:`~dxf2frame.draw.occupancy.Occupancy`;
    ``inside`` False: no search inside the extents (the caller searched
    near the box already), only the places outside them.
    """
    geoms = present(obstacles)
    trees = [t for t in (shapely.STRtree(geoms) if len(geoms) else None, tree) if t is not None]
    w, h = box[2] - box[0], box[3] - box[1]

    def free(x0: np.ndarray, y0: np.ndarray) -> np.ndarray:
        ok = np.ones(len(x0), dtype=bool)
        if len(x0):
            lo_x, lo_y, hi_x, hi_y = x0 - gap, y0 - gap, x0 + w + gap, y0 + h + gap
            cand = None
            for t in trees:
                if isinstance(t, Occupancy):
                    ok &= t.free(lo_x, lo_y, hi_x, hi_y)
                    continue
                cand = shapely.box(lo_x, lo_y, hi_x, hi_y) if cand is None else cand
                ok[t.query(cand, predicate="intersects")[0]] = False
        return ok

    if free(np.array([box[0]]), np.array([box[1]]))[0]:
        return 0.0, 0.0
    if extents is None:
        return 0.0, 0.0
    ex0, ey0, ex1, ey1 = extents
    if inside and ex1 - ex0 > w and ey1 - ey0 > h:
        step = max(min(w, h) / 2, gap, 1e-9)
        nx, ny = (ex1 - ex0 - w) / step + 1, (ey1 - ey0 - h) / step + 1
        if nx * ny > _MAX_CANDIDATES:
            step *= float(np.sqrt(nx * ny / _MAX_CANDIDATES))
        xs = np.arange(ex0, ex1 - w + 1e-12, step)
        ys = np.arange(ey0, ey1 - h + 1e-12, step)
        gx, gy = (a.ravel() for a in np.meshgrid(xs, ys))
        ok = free(gx, gy)
        if ok.any():
            d = np.hypot(gx[ok] - box[0], gy[ok] - box[1])
            k = int(np.argmin(d))
            return float(gx[ok][k] - box[0]), float(gy[ok][k] - box[1])
    # outside the extents: right, below, left, above, each at the nearest
    # position along that side, stepping farther out past anything already
    # placed there (the obstacles may reach beyond the extents)
    top = min(max(box[1], ey0), ey1 - h) if ey1 - ey0 > h else ey1 - h
    left = min(max(box[0], ex0), ex1 - w) if ex1 - ex0 > w else ex0
    k = np.arange(_OUTSIDE_STEPS, dtype=float)
    sides = [
        (ex1 + 2 * gap + k * (w + gap), np.full_like(k, top)),
        (np.full_like(k, left), ey0 - 2 * gap - h - k * (h + gap)),
        (ex0 - 2 * gap - w - k * (w + gap), np.full_like(k, top)),
        (np.full_like(k, left), ey1 + 2 * gap + k * (h + gap)),
    ]
    clear = free(np.concatenate([xs for xs, _ys in sides]), np.concatenate([ys for _xs, ys in sides]))
    outside = []
    for (xs, ys), ok_side in zip(sides, clear.reshape(len(sides), -1)):       # one test for all four sides
        ok = np.flatnonzero(ok_side)
        j = int(ok[0]) if len(ok) else len(k) - 1
        outside.append((float(xs[j]), float(ys[j])))
    best = min(outside, key=lambda p: np.hypot(p[0] - box[0], p[1] - box[1]))
    return float(best[0] - box[0]), float(best[1] - box[1])


def keep_clear(groups: list[list], obst: DrawingObstacles, ours: list, content: Box, gap: float) -> None:
    """Move each group of entities (the legend, the notes) as a whole to the
    nearest place clear of the drawing's own content, of ``ours`` (what the
    tool drew: member lines, diagram extents, labels) and of the groups
    placed before it; outside the drawing's extents when nothing inside is
    free."""
    ext = content if obst.extents is None else (
        min(content[0], obst.extents[0]), min(content[1], obst.extents[1]),
        max(content[2], obst.extents[2]), max(content[3], obst.extents[3]))
    fixed = Occupancy(list(obst.geoms) + list(ours), gap)    # indexed once for every group
    blocked: list = []                                      # the groups placed so far
    for ents in groups:
        if not ents:
            continue
        b = bbox.extents(ents, fast=False)
        if not b.has_data:
            continue
        box = (b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y)
        dx, dy = free_spot(box, blocked, ext, gap, tree=fixed)
        if dx or dy:
            for e in ents:
                e.translate(dx, dy, 0.0)
        moved = (box[0] + dx, box[1] + dy, box[2] + dx, box[3] + dy)
        blocked.append(shapely.box(*moved))
        ext = (min(ext[0], moved[0]), min(ext[1], moved[1]), max(ext[2], moved[2]), max(ext[3], moved[3]))
