"""Member centrelines: linework on the member layers -> straight segments.

One handler per kind of linework, each called as ``handler(ctx, entity,
source)`` through :data:`dxf2frame.read.dispatch.HANDLERS`; an entity off
the member layers (``FRAME``, ``FRAME-*``) is left alone.

* ``LINE``, ``LWPOLYLINE``, 2D ``POLYLINE`` and a 3D ``POLYLINE`` whose
  points all lie in Z = 0 (within the Z tolerance): one segment per
  straight piece, a closed polyline with its closing piece;
* ``ARC``, ``CIRCLE``, ``ELLIPSE``, ``SPLINE``, bulged polyline pieces and
  curve-fit polylines: chorded into ``geometry.arc_segments`` straight
  pieces each, an error when that is 0;
* mesh polylines and the 3D entities (``3DFACE``, ``3DSOLID``, ``MESH``,
  surfaces, ...): an error.

Units: vertices in drawing units (OCS points taken to the WCS, the Z and
extrusion checks of :class:`~dxf2frame.read.context.ReadContext` applied); the
segments stored are in metres, numbered from the entity's first point.
A bulge is the tangent of a quarter of the included angle, positive
counter-clockwise.
"""
from __future__ import annotations

import math

from ezdxf.math import Vec3, bulge_center

from ..errors import GeometryError, UnsupportedEntityError
from .context import ReadContext, Source


# ---------------------------------------------------------------------------
# linework handlers
# ---------------------------------------------------------------------------


def _arc_points(p0, p1, bulge: float, n: int) -> list[tuple[float, float]]:
    """Chord points (excluding p0, including p1) of a bulged segment in OCS."""
    c = bulge_center(p0, p1, bulge)
    theta = 4.0 * math.atan(bulge)  # signed included angle, CCW positive
    x0, y0 = p0[0] - c[0], p0[1] - c[1]
    out = []
    for i in range(1, n + 1):
        t = theta * i / n
        ct, st = math.cos(t), math.sin(t)
        out.append((c[0] + x0 * ct - y0 * st, c[1] + x0 * st + y0 * ct))
    out[-1] = (p1[0], p1[1])
    return out


def _curve_error(what: str, src: Source) -> GeometryError:
    return GeometryError(
        f"{what}: members must be straight",
        handle=src.handle,
        layer=src.layer,
        hint="draw the member as straight LINE or LWPOLYLINE segments, or set [geometry] arc_segments = N "
        "in dxf2frame.toml to chord curves into N members",
    )


def _bulged_ocs_points(ctx: ReadContext, verts: list[tuple[float, float, float]], closed: bool, src: Source, kind: str):
    """OCS 2D points along (x, y, bulge) vertices, chording bulges if allowed."""
    if not verts:
        return []
    pts = [(verts[0][0], verts[0][1])]
    seq = list(verts) + ([verts[0]] if closed and len(verts) > 2 else [])
    for (x0, y0, b), (x1, y1, _) in zip(seq[:-1], seq[1:]):
        if b and abs(b) > 1e-12:
            n = ctx.settings.arc_segments
            if n <= 0:
                raise _curve_error(f"{kind} has an arc (bulged) segment", src)
            pts.extend(_arc_points((x0, y0), (x1, y1), b, n))
        else:
            pts.append((x1, y1))
    return pts


def handle_line(ctx: ReadContext, e, src: Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        ctx.note_off_frame(src)
        return
    ctx.check_extrusion(e, src)
    a, b = Vec3(e.dxf.start), Vec3(e.dxf.end)
    ctx.add_polyline([a.xyz, b.xyz], src)


def handle_lwpolyline(ctx: ReadContext, e, src: Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        ctx.note_off_frame(src)
        return
    ctx.check_extrusion(e, src)
    elev = float(e.dxf.get("elevation", 0.0))
    verts = [(x, y, b) for x, y, b in e.get_points("xyb")]
    pts2 = _bulged_ocs_points(ctx, verts, bool(e.closed), src, "LWPOLYLINE")
    ocs = e.ocs()
    pts = [tuple(ocs.to_wcs(Vec3(x, y, elev))) for x, y in pts2]
    ctx.add_polyline(pts, src)


def handle_polyline(ctx: ReadContext, e, src: Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        ctx.note_off_frame(src)
        return
    if e.is_poly_face_mesh or e.is_polygon_mesh:
        raise UnsupportedEntityError(
            "a mesh POLYLINE is not a member centreline",
            handle=src.handle,
            layer=src.layer,
            hint="draw members as LINE or LWPOLYLINE, or move the mesh off the FRAME layers",
        )
    closed = bool(e.is_closed)
    curved = bool(e.dxf.flags & (e.CURVE_FIT_VERTICES_ADDED | e.SPLINE_FIT_VERTICES_ADDED))
    if curved and ctx.settings.arc_segments <= 0:
        raise _curve_error("curve-fit POLYLINE", src)
    vertices = [v for v in e.vertices if not (v.dxf.flags & v.SPLINE_FRAME_CONTROL_POINT)]
    if e.is_3d_polyline:
        pts = [Vec3(v.dxf.location).xyz for v in vertices]
        if closed and len(pts) > 2:
            pts.append(pts[0])
        ctx.add_polyline(pts, src)
        return
    ctx.check_extrusion(e, src)
    elev = float(Vec3(e.dxf.get("elevation", (0, 0, 0))).z)
    verts = [(Vec3(v.dxf.location).x, Vec3(v.dxf.location).y, 0.0 if curved else float(v.dxf.get("bulge", 0.0)))
             for v in vertices]
    pts2 = _bulged_ocs_points(ctx, verts, closed, src, "POLYLINE")
    ocs = e.ocs()
    ctx.add_polyline([tuple(ocs.to_wcs(Vec3(x, y, elev))) for x, y in pts2], src)


def handle_curve(ctx: ReadContext, e, src: Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        ctx.note_off_frame(src)
        return
    t = e.dxftype()
    n = ctx.settings.arc_segments
    if n <= 0:
        raise _curve_error(f"{t} entity", src)
    if t in ("ARC", "CIRCLE", "ELLIPSE"):
        ctx.check_extrusion(e, src)
    if t == "ARC":
        pts = list(e.vertices(e.angles(n + 1)))
    elif t == "CIRCLE":
        pts = list(e.vertices([360.0 * i / n for i in range(n)]))
        pts.append(pts[0])
    elif t == "ELLIPSE":
        pts = list(e.vertices(e.params(n + 1)))
    else:  # SPLINE
        pts = list(e.construction_tool().approximate(n))
    ctx.add_polyline([Vec3(p).xyz for p in pts], src)


def handle_solid3d(ctx: ReadContext, e, src: Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        ctx.note_off_frame(src)
        return
    raise UnsupportedEntityError(
        f"{e.dxftype()} is a 3D entity, not a member centreline",
        handle=src.handle,
        layer=src.layer,
        hint="draw members as LINE or LWPOLYLINE in the X-Y plane, or move this entity off the FRAME layers",
    )
