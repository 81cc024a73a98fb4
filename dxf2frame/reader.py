"""Read a DXF drawing into the analysis model, per the drawing convention.

Entry points: :func:`read_drawing` (a path) and :func:`read_document` (an
already opened ezdxf ``Drawing``).  Both return a
:class:`~dxf2frame.drawing_model.DrawingModel` whose ``frame`` is in SI
(N, m, Pa, rad).

Supported entities (the dispatch table :data:`HANDLERS`)
-------------------------------------------------------
On member layers (``FRAME`` and ``FRAME-*``, remappable):

* ``LINE``: one member centreline.
* ``LWPOLYLINE`` and 2D ``POLYLINE`` (also a 3D ``POLYLINE`` whose points
  all lie in Z = 0): each straight segment is a member; a closed polyline
  includes its closing segment.
* ``ARC``, ``CIRCLE``, ``ELLIPSE``, ``SPLINE``, bulged polyline segments
  and curve-fit polylines: an error naming the handle, unless the settings
  give ``geometry.arc_segments = N > 0``; then each curve is chorded into N
  straight members (curve-fit polylines: through their fit vertices).
* ``3DFACE``, ``3DSOLID``, ``MESH``, ``BODY``, ``REGION``, surfaces and
  polyface / polygon-mesh ``POLYLINE``: error (not a planar centreline).
* Anything else (TEXT, MTEXT, DIMENSION, HATCH, POINT, ...): ignored.

``INSERT`` on any layer:

* on ``SUPPORTS`` / ``CONNECTIONS`` / ``LOADS``: a convention symbol
  (``PIN ROLLER FIXED SLIDER SPRING`` / ``JOINT HINGE`` /
  ``FORCE COUPLE UDL``, names case-insensitive and remappable).  Any other
  block name there is an :class:`UnknownBlockError`; a symbol of another
  group (a FORCE on SUPPORTS) likewise.  MINSERT grids give one symbol per
  grid cell.
* on any other layer: a convention symbol is ignored with a warning (it is
  on the wrong layer); any other block is exploded through ezdxf's
  ``virtual_entities()`` (recursively, with the insert's scale, rotation,
  mirroring and extrusion applied) and its pieces are read as if drawn in
  model space.  As in CAD, pieces on layer ``0`` take the layer of the
  block reference.
* an anonymous reference to a dynamic block (``*U12``) counts under the
  dynamic block's own name.

Entities on result layers (``RESULT-*`` and the configured output layers)
are ignored, so a solved drawing reads back to the same model.

Handles
-------
Every model object keeps the handle of the entity it came from.  A piece
of an exploded block gets the handle path ``"<insert>_<entity>"`` (deeper
nesting adds more ``_<handle>`` parts); cell i of a MINSERT adds ``.i``.

Symbols
-------
The insertion point is the node or load point.  The effective rotation is
the direction of the block's local +X after the insert's full
transformation (so a mirrored insert points the other way); a FORCE acts
along the transformed local -Y (its arrow) unless an ``ANGLE`` attribute
(degrees counter-clockwise from +X, the direction the force acts) says
otherwise.  Attribute values come from the insert's ATTRIBs, falling back
to the ATTDEF defaults of the block definition when an ATTRIB is missing;
a blank ATTRIB means "not given" (the convention's default applies, e.g.
CASE = D), it does not fall back to the ATTDEF text.

Units
-----
``$INSUNITS`` 1 (inch), 2 (ft), 4 (mm), 5 (cm), 6 (m).  An explicit
``length_unit`` argument (``--length-unit``) wins over the header (with a
warning when they differ); when the header is missing, 0 or another code,
the settings' ``units.length`` is used, else :class:`DrawingError`.  Bare
numbers in attributes: forces in the settings force unit; distributed
loads force/drawing-length; moments force*drawing-length; FROM, TO,
SETTLE_X, SETTLE_Y in drawing units; KX, KY force/drawing-length; KR
force*drawing-length/rad; ANGLE in degrees; SETTLE_R in radians.

Damaged and hostile files
-------------------------
:func:`open_document` refuses, with :class:`InputFileError` naming the
file, a missing or empty file, one that does not start like a DXF (ASCII
``0/SECTION`` or the binary sentinel), one over ``limits.max_file_mb``, and
an ASCII file whose count of entity tags is far over
``limits.max_entities`` (counted before parsing).  A file ezdxf cannot load
is read again in ezdxf's recover mode; the repairs (ezdxf's log messages and
the audit's fixes) become one warning of the model, and a repair that
dropped a drawing entity because its handle clashed is an error.
:func:`read_document` then refuses entities sharing a handle (when the
analysis reads any of them), coordinates, rotations and scale factors that
are not finite numbers, coordinates beyond :data:`MAX_COORDINATE_M`, and
geometry so far from the origin that the shortest member's length would be
rounded by more than :data:`MAX_RELATIVE_ROUNDING` of itself; entity data
ezdxf loads but cannot interpret are a :class:`DrawingError` naming the
entity.  Every error names the handle and layer where there is one.

Snap tolerance
--------------
``geometry.snap`` from the settings (a quantity, or a bare number in
drawing units); by default the larger of 0.5 mm and 1e-6 of the diagonal
of the linework's extents.  Z coordinates up to the larger of 0.5 mm and
the explicit snap count as zero.
"""
from __future__ import annotations

import contextlib
import logging
import math
import re
import threading
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Iterator

import ezdxf
from ezdxf import recover
from ezdxf.dynblkhelper import get_dynamic_block_definition
from ezdxf.math import Vec3, bulge_center

from .cleanup import (
    ConnectionSpec,
    CoupleSpec,
    ForceSpec,
    Segment,
    SupportSpec,
    UdlSpec,
    build_frame,
    default_tolerance,
)
from .drawing_model import DrawingModel
from .errors import (
    DrawingError,
    GeometryError,
    InputFileError,
    UnknownBlockError,
    UnsupportedEntityError,
)
from .settings import Settings, load_settings
from .units import INSUNITS, length_unit_scale, normalise_length_unit, parse_quantity

__all__ = ["read_drawing", "read_document", "open_document", "HANDLERS", "SYMBOL_GROUPS", "MAX_COORDINATE_M",
           "MAX_RELATIVE_ROUNDING"]

_MAX_DEPTH = 16

#: largest coordinate magnitude accepted [m]; beyond it the geometry
#: libraries overflow and no structural drawing needs it
MAX_COORDINATE_M = 1e12

#: largest accepted rounding of a member's length, relative to the length,
#: caused by storing its end coordinates as doubles far from the origin
#: (max |coordinate| * 2**-52 / shortest member); beyond it the numbers in
#: the report would carry that rounding in their sixth or seventh digit
MAX_RELATIVE_ROUNDING = 1e-7

_DOUBLE_EPS = 2.0**-52
_BINARY_SENTINEL = b"AutoCAD Binary DXF"
_NOTE_LIMIT = 5

#: what ezdxf or the geometry code raises for entity data it cannot use
_ENTITY_DATA_ERRORS = (ValueError, TypeError, ArithmeticError, IndexError, KeyError, AttributeError,
                       ezdxf.DXFError)
_INSUNITS_NAMES = {
    0: "unitless", 3: "miles", 7: "kilometres", 8: "microinches", 9: "mils", 10: "yards",
    11: "angstroms", 12: "nanometres", 13: "microns", 14: "decimetres", 15: "decametres",
    16: "hectometres", 17: "gigametres", 18: "astronomical units", 19: "light years",
    20: "parsecs", 21: "US survey feet", 22: "US survey inches", 23: "US survey yards",
    24: "US survey miles",
}

#: which symbol kinds belong on which input layer role
SYMBOL_GROUPS: dict[str, tuple[str, ...]] = {
    "supports": ("PIN", "ROLLER", "FIXED", "SLIDER", "SPRING"),
    "connections": ("JOINT", "HINGE"),
    "loads": ("FORCE", "COUPLE", "UDL"),
}
_ROLE_OF_KIND = {k: role for role, kinds in SYMBOL_GROUPS.items() for k in kinds}
_SPLIT_LIST = re.compile(r"[,;]")


# ---------------------------------------------------------------------------
# reading state
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class _Source:
    """Where an entity sits: handle path, effective layer, virtual (from a block)."""

    handle: str
    layer: str
    virtual: bool = False
    depth: int = 0


@dataclass
class _Ctx:
    doc: object
    settings: Settings
    unit: str  # drawing length unit (pint name)
    scale: float  # m per drawing unit
    z_tol: float  # drawing units
    defaults: dict[str, str]
    segments: list[Segment] = field(default_factory=list)
    supports: list[SupportSpec] = field(default_factory=list)
    connections: list[ConnectionSpec] = field(default_factory=list)
    loads: list = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    hinges: int = 0
    n_loads: int = 0
    _attdefs: dict[str, dict[str, str]] = field(default_factory=dict)
    _relevant: dict[str, tuple[bool, bool]] = field(default_factory=dict)

    # -- helpers -------------------------------------------------------------
    def role_of_layer(self, layer: str) -> str | None:
        u = layer.upper()
        for role in ("supports", "connections", "loads"):
            if u == self.settings.layers[role].upper():
                return role
        return None

    def add_polyline(self, pts: list[tuple[float, float, float]], src: _Source) -> None:
        """Add consecutive segments through WCS points (drawing units), numbered
        from the first point, converted to metres."""
        self.check_z(pts, src)
        s = self.scale
        for k, (a, b) in enumerate(zip(pts[:-1], pts[1:])):
            self.segments.append(Segment((a[0] * s, a[1] * s), (b[0] * s, b[1] * s), src.handle, src.layer, k))

    def check_z(self, pts, src: _Source) -> None:
        for p in pts:
            _check_finite(p, src, self.scale)
            if abs(p[2]) > self.z_tol:
                raise GeometryError(
                    f"point at Z = {p[2]:.6g} {self.unit}: the frame must lie in the X-Y plane (Z = 0)",
                    handle=src.handle,
                    layer=src.layer,
                    hint="move the entity to Z = 0 (e.g. flatten the drawing)",
                )

    def check_extrusion(self, entity, src: _Source) -> None:
        ext = Vec3(entity.dxf.get("extrusion", (0.0, 0.0, 1.0)))
        if src.virtual:
            # a mirrored block reference legitimately turns +Z into -Z
            bad = not (abs(ext.x) < 1e-9 and abs(ext.y) < 1e-9)
        else:
            bad = not ext.isclose(Vec3(0, 0, 1), abs_tol=1e-9)
        if bad:
            raise GeometryError(
                f"{entity.dxftype()} has extrusion direction {tuple(round(c, 6) for c in ext)}, not +Z",
                handle=src.handle,
                layer=src.layer,
                hint="the frame must be drawn in the world X-Y plane; redraw it in the WCS",
            )

    def attdef_defaults(self, block_name: str) -> dict[str, str]:
        d = self._attdefs.get(block_name)
        if d is None:
            d = {}
            blk = self.doc.blocks.get(block_name)
            if blk is not None:
                for e in blk.query("ATTDEF"):
                    d[e.dxf.tag.upper()] = e.dxf.get("text", "")
            self._attdefs[block_name] = d
        return d

    def attributes(self, insert) -> dict[str, str]:
        """Convention tag -> stripped text; ATTRIBs first, ATTDEF defaults for
        missing tags; empty values omitted."""
        raw: dict[str, str] = {}
        for tag, text in self.attdef_defaults(insert.dxf.name).items():
            raw[tag] = text
        for a in insert.attribs:
            raw[a.dxf.tag.upper()] = a.dxf.get("text", "")
        out: dict[str, str] = {}
        for tag, text in raw.items():
            t = (text or "").strip()
            canon = self.settings.canonical_tag(tag)
            if t and canon is not None:
                out[canon] = t
        return out

    def block_relevance(self, name: str) -> tuple[bool, bool]:
        """(has content on input layers or nested inserts, has layer-0 linework)."""
        r = self._relevant.get(name)
        if r is None:
            blk = self.doc.blocks.get(name)
            relevant = layer0 = False
            if blk is not None:
                for e in blk:
                    t = e.dxftype()
                    if t in ("ATTDEF",):
                        continue
                    lay = e.dxf.get("layer", "0")
                    if t == "INSERT":
                        relevant = True
                    elif lay == "0":
                        layer0 = True
                    elif self.settings.is_frame_layer(lay) or self.role_of_layer(lay):
                        relevant = True
            r = (relevant, layer0)
            self._relevant[name] = r
        return r

    def quantity(self, attrs: dict[str, str], tag: str, kind: str, src: _Source, default_unit: str | None = None):
        text = attrs.get(tag)
        if text is None:
            return None
        return parse_quantity(
            text,
            kind,
            default_unit=default_unit or self.defaults[kind],
            handle=src.handle,
            layer=src.layer,
            tag=self.settings.attr(tag),
        )


# ---------------------------------------------------------------------------
# linework handlers
# ---------------------------------------------------------------------------


def _check_finite(p, src: _Source, scale: float) -> None:
    """A point (drawing units) must be a finite number and not absurdly far out."""
    if not all(math.isfinite(c) for c in p):
        raise GeometryError(
            f"a coordinate is not a finite number ({', '.join(f'{c:g}' for c in p)})",
            handle=src.handle,
            layer=src.layer,
            hint="the file is damaged or was written by a faulty program; redraw the entity",
        )
    big = max(abs(c) for c in p) * scale
    if big > MAX_COORDINATE_M:
        raise GeometryError(
            f"a coordinate is {big:.3g} m from the origin (more than {MAX_COORDINATE_M:g} m)",
            handle=src.handle,
            layer=src.layer,
            hint="move the drawing near the origin, or check the drawing unit",
        )


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


def _curve_error(what: str, src: _Source) -> GeometryError:
    return GeometryError(
        f"{what}: members must be straight",
        handle=src.handle,
        layer=src.layer,
        hint="draw the member as straight LINE or LWPOLYLINE segments, or set [geometry] arc_segments = N "
        "in dxf2frame.toml to chord curves into N members",
    )


def _bulged_ocs_points(ctx: _Ctx, verts: list[tuple[float, float, float]], closed: bool, src: _Source, kind: str):
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


def _handle_line(ctx: _Ctx, e, src: _Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        return
    ctx.check_extrusion(e, src)
    a, b = Vec3(e.dxf.start), Vec3(e.dxf.end)
    ctx.add_polyline([a.xyz, b.xyz], src)


def _handle_lwpolyline(ctx: _Ctx, e, src: _Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        return
    ctx.check_extrusion(e, src)
    elev = float(e.dxf.get("elevation", 0.0))
    verts = [(x, y, b) for x, y, b in e.get_points("xyb")]
    pts2 = _bulged_ocs_points(ctx, verts, bool(e.closed), src, "LWPOLYLINE")
    ocs = e.ocs()
    pts = [tuple(ocs.to_wcs(Vec3(x, y, elev))) for x, y in pts2]
    ctx.add_polyline(pts, src)


def _handle_polyline(ctx: _Ctx, e, src: _Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
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


def _handle_curve(ctx: _Ctx, e, src: _Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
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


def _handle_solid3d(ctx: _Ctx, e, src: _Source) -> None:
    if not ctx.settings.is_frame_layer(src.layer):
        return
    raise UnsupportedEntityError(
        f"{e.dxftype()} is a 3D entity, not a member centreline",
        handle=src.handle,
        layer=src.layer,
        hint="draw members as LINE or LWPOLYLINE in the X-Y plane, or move this entity off the FRAME layers",
    )


# ---------------------------------------------------------------------------
# block references
# ---------------------------------------------------------------------------


def _handle_insert(ctx: _Ctx, e, src: _Source) -> None:
    if e.mcount > 1:
        for i, cell in enumerate(e.multi_insert(), start=1):
            _insert_one(ctx, cell, _Source(f"{src.handle}.{i}", src.layer, src.virtual, src.depth))
    else:
        _insert_one(ctx, e, src)


def _block_name(ctx: _Ctx, e) -> str:
    """Name of the referenced block; an anonymous reference to a dynamic block
    ("*U12") answers with the dynamic block's own name."""
    name = e.dxf.name
    if name.startswith("*"):
        try:
            dyn = get_dynamic_block_definition(e, ctx.doc)
        except Exception:  # damaged xdata: keep the anonymous name
            dyn = None
        if dyn is not None:
            return dyn.name
    return name


def _check_insert_numbers(e, src: _Source) -> None:
    """Rotation, scale and insertion point of a block reference must be finite."""
    for key in ("rotation", "xscale", "yscale", "zscale"):
        v = e.dxf.get(key, 0.0)
        if not (isinstance(v, (int, float)) and math.isfinite(v)):
            raise GeometryError(
                f"block reference has a {key} that is not a finite number ({v!r})",
                handle=src.handle,
                layer=src.layer,
                hint="the file is damaged or was written by a faulty program; insert the block again",
            )
    p = e.dxf.get("insert", (0.0, 0.0, 0.0))
    if not all(math.isfinite(c) for c in p):
        raise GeometryError(
            f"block reference has an insertion point that is not finite ({', '.join(f'{c:g}' for c in p)})",
            handle=src.handle,
            layer=src.layer,
            hint="the file is damaged or was written by a faulty program; insert the block again",
        )


def _insert_one(ctx: _Ctx, e, src: _Source) -> None:
    name = _block_name(ctx, e)
    kind = ctx.settings.block_kind(name)
    role = ctx.role_of_layer(src.layer)
    if role is not None:
        if kind is None:
            expected = ", ".join(ctx.settings.blocks[k] for k in SYMBOL_GROUPS[role])
            raise UnknownBlockError(
                f"block '{name}' is not a {role[:-1]} symbol",
                handle=src.handle,
                layer=src.layer,
                hint=f"use one of {expected} on this layer, or move the block to another layer",
            )
        if _ROLE_OF_KIND[kind] != role:
            right = ctx.settings.layers[_ROLE_OF_KIND[kind]]
            raise UnknownBlockError(
                f"block '{name}' is a {_ROLE_OF_KIND[kind][:-1]} symbol, not a {role[:-1]} symbol",
                handle=src.handle,
                layer=src.layer,
                hint=f"move it to layer '{right}'",
            )
        _check_insert_numbers(e, src)
        _SYMBOL_HANDLERS[kind](ctx, e, kind, src)
        return
    if kind is not None:
        right = ctx.settings.layers[_ROLE_OF_KIND[kind]]
        ctx.warnings.append(
            f"block '{name}' #{src.handle} on layer '{src.layer}' ignored: {kind} symbols belong on layer '{right}'"
        )
        return
    relevant, layer0 = ctx.block_relevance(e.dxf.name)
    layer0_counts = layer0 and ctx.settings.is_frame_layer(src.layer)
    if not (relevant or layer0_counts):
        return
    _check_insert_numbers(e, src)
    if not src.virtual:
        ctx.check_extrusion(e, src)
    if src.depth >= _MAX_DEPTH:
        raise GeometryError(
            f"blocks nested more than {_MAX_DEPTH} deep (does block '{name}' contain itself?)",
            handle=src.handle,
            layer=src.layer,
        )
    try:
        pieces = list(e.virtual_entities())
    except _ENTITY_DATA_ERRORS as exc:
        raise GeometryError(
            f"block reference '{name}' cannot be exploded into its pieces ({type(exc).__name__}: {exc})",
            handle=src.handle,
            layer=src.layer,
            hint="check the block's scale factors (non-zero, uniform for arcs) or insert it again",
        ) from None
    for i, v in enumerate(pieces):
        orig = getattr(v, "source_of_copy", None)
        h = orig.dxf.handle if orig is not None and orig.dxf.handle else str(i + 1)
        lay = v.dxf.get("layer", "0")
        eff = src.layer if lay == "0" else lay
        if ctx.settings.is_result_layer(eff):
            continue
        handler = HANDLERS.get(v.dxftype())
        if handler is not None:
            handler(ctx, v, _Source(f"{src.handle}_{h}", eff, True, src.depth + 1))


def _placement(ctx: _Ctx, e, src: _Source) -> tuple[tuple[float, float], Vec3, Vec3]:
    """(insertion point [m], unit local +X, unit local -Y) of a symbol in WCS."""
    if not src.virtual:
        ctx.check_extrusion(e, src)
    m = e.matrix44()
    p = e.ocs().to_wcs(Vec3(e.dxf.get("insert", (0, 0, 0))))
    ctx.check_z([p.xyz], src)
    ux = Vec3(m.transform_direction((1.0, 0.0, 0.0)))
    arrow = Vec3(m.transform_direction((0.0, -1.0, 0.0)))
    for v in (ux, arrow):
        if not (math.isfinite(v.magnitude) and v.magnitude > 0) or abs(v.z) > 1e-9 * v.magnitude:
            raise GeometryError(
                "block reference is tilted out of the X-Y plane or has a zero scale",
                handle=src.handle,
                layer=src.layer,
                hint="insert symbols in the world X-Y plane with non-zero scale",
            )
    return (p.x * ctx.scale, p.y * ctx.scale), ux.normalize(), arrow.normalize()


def _case(attrs: dict[str, str]) -> str:
    return attrs.get("CASE", "D").strip() or "D"


def _symbol_support(ctx: _Ctx, e, kind: str, src: _Source) -> None:
    at, ux, _ = _placement(ctx, e, src)
    attrs = ctx.attributes(e)
    angle = math.atan2(ux.y, ux.x)
    if abs(angle) < 1e-12:
        angle = 0.0
    q = ctx.quantity
    stiff = {k: q(attrs, t, kd, src) for k, t, kd in (
        ("kx", "KX", "spring_linear"), ("ky", "KY", "spring_linear"), ("kr", "KR", "spring_rotational"))}
    for k, v in stiff.items():
        if v is not None and v < 0:
            raise DrawingError(
                f"spring stiffness {k.upper()} = {attrs[k.upper()]!r} is negative",
                handle=src.handle, layer=src.layer, hint="give a stiffness >= 0",
            )
    sx = q(attrs, "SETTLE_X", "length", src)
    sy = q(attrs, "SETTLE_Y", "length", src)
    sr = q(attrs, "SETTLE_R", "angle", src, default_unit="rad")
    settle = None if sx is None and sy is None and sr is None else (sx or 0.0, sy or 0.0, sr or 0.0)
    ctx.supports.append(
        SupportSpec(at, kind.lower(), angle, settle=settle, settle_case=_case(attrs),
                    handle=src.handle, layer=src.layer, **stiff)
    )


def _symbol_connection(ctx: _Ctx, e, kind: str, src: _Source) -> None:
    at, _, _ = _placement(ctx, e, src)
    layers = None
    if kind == "HINGE":
        ctx.hinges += 1
        attrs = ctx.attributes(e)
        if "MEMBERS" in attrs:
            layers = tuple(s.strip() for s in _SPLIT_LIST.split(attrs["MEMBERS"]) if s.strip()) or None
    ctx.connections.append(ConnectionSpec(at, kind.lower(), layers, src.handle, src.layer))


def _missing(what: str, tags: str, src: _Source, ctx: _Ctx) -> DrawingError:
    return DrawingError(
        f"{what} has no {tags} attribute",
        handle=src.handle,
        layer=src.layer,
        hint=f"give its value as an attribute, e.g. {ctx.settings.attr(tags.split()[0])}='10 kN'",
    )


def _symbol_force(ctx: _Ctx, e, kind: str, src: _Source) -> None:
    ctx.n_loads += 1
    at, _, arrow = _placement(ctx, e, src)
    attrs = ctx.attributes(e)
    P = ctx.quantity(attrs, "P", "force", src)
    if P is None:
        raise _missing("FORCE", "P", src, ctx)
    ang = ctx.quantity(attrs, "ANGLE", "angle", src)
    if ang is not None:
        dx, dy = math.cos(ang), math.sin(ang)
    else:
        dx, dy = arrow.x, arrow.y
    ctx.loads.append(ForceSpec(at, P * dx, P * dy, _case(attrs), src.handle, src.layer))


def _symbol_couple(ctx: _Ctx, e, kind: str, src: _Source) -> None:
    ctx.n_loads += 1
    at, _, _ = _placement(ctx, e, src)
    attrs = ctx.attributes(e)
    M = ctx.quantity(attrs, "M", "moment", src)
    if M is None:
        raise _missing("COUPLE", "M", src, ctx)
    ctx.loads.append(CoupleSpec(at, M, _case(attrs), src.handle, src.layer))


def _choice(attrs: dict[str, str], tag: str, allowed: tuple[str, ...], default: str, src: _Source, ctx: _Ctx) -> str:
    v = attrs.get(tag, default).strip().upper()
    if v not in allowed:
        raise DrawingError(
            f"attribute {ctx.settings.attr(tag)} = {attrs.get(tag)!r} is not one of {', '.join(allowed)}",
            handle=src.handle,
            layer=src.layer,
            hint=f"set {ctx.settings.attr(tag)} to one of {', '.join(allowed)}",
        )
    return v


def _symbol_udl(ctx: _Ctx, e, kind: str, src: _Source) -> None:
    ctx.n_loads += 1
    at, _, _ = _placement(ctx, e, src)
    attrs = ctx.attributes(e)
    q = ctx.quantity
    w = q(attrs, "W", "distributed", src)
    w1 = q(attrs, "W1", "distributed", src)
    w2 = q(attrs, "W2", "distributed", src)
    if w1 is not None or w2 is not None:
        if w is not None:
            raise DrawingError(
                "UDL gives both W and W1/W2",
                handle=src.handle, layer=src.layer,
                hint="give W for a uniform load, or W1 and W2 for a linearly varying one",
            )
        if w1 is None or w2 is None:
            raise DrawingError(
                "UDL gives only one of W1 and W2",
                handle=src.handle, layer=src.layer,
                hint="give both W1 (at FROM) and W2 (at TO)",
            )
    elif w is None:
        raise _missing("UDL", "W or W1 and W2", src, ctx)
    else:
        w1 = w2 = w
    start = q(attrs, "FROM", "length", src)
    end = q(attrs, "TO", "length", src)
    direction = _choice(attrs, "DIR", ("GRAVITY", "X", "Y", "NORMAL"), "GRAVITY", src, ctx)
    basis = _choice(attrs, "BASIS", ("LENGTH", "PROJECTED"), "LENGTH", src, ctx)
    ctx.loads.append(
        UdlSpec(at, w1, w2, start, end, direction, basis == "PROJECTED", _case(attrs), src.handle, src.layer)
    )


_SYMBOL_HANDLERS: dict[str, Callable] = {
    "PIN": _symbol_support,
    "ROLLER": _symbol_support,
    "FIXED": _symbol_support,
    "SLIDER": _symbol_support,
    "SPRING": _symbol_support,
    "JOINT": _symbol_connection,
    "HINGE": _symbol_connection,
    "FORCE": _symbol_force,
    "COUPLE": _symbol_couple,
    "UDL": _symbol_udl,
}

#: DXF entity type -> handler(ctx, entity, source); types not listed are ignored
HANDLERS: dict[str, Callable[[_Ctx, object, _Source], None]] = {
    "LINE": _handle_line,
    "LWPOLYLINE": _handle_lwpolyline,
    "POLYLINE": _handle_polyline,
    "INSERT": _handle_insert,
    "ARC": _handle_curve,
    "CIRCLE": _handle_curve,
    "ELLIPSE": _handle_curve,
    "SPLINE": _handle_curve,
    "3DFACE": _handle_solid3d,
    "3DSOLID": _handle_solid3d,
    "MESH": _handle_solid3d,
    "BODY": _handle_solid3d,
    "REGION": _handle_solid3d,
    "SURFACE": _handle_solid3d,
    "EXTRUDEDSURFACE": _handle_solid3d,
    "LOFTEDSURFACE": _handle_solid3d,
    "REVOLVEDSURFACE": _handle_solid3d,
    "SWEPTSURFACE": _handle_solid3d,
    "PLANESURFACE": _handle_solid3d,
}


# ---------------------------------------------------------------------------
# public API
# ---------------------------------------------------------------------------


def _drawing_unit(doc, settings: Settings, length_unit: str | None, warnings: list[str]) -> str:
    try:
        code = int(doc.header.get("$INSUNITS", 0) or 0)
    except (TypeError, ValueError):
        code = 0
    header_unit = INSUNITS.get(code)
    if length_unit:
        name = normalise_length_unit(length_unit)
        if header_unit and header_unit != name:
            warnings.append(
                f"drawing header says its unit is {header_unit} ($INSUNITS = {code}); using {name} as requested"
            )
        return name
    if header_unit:
        return header_unit
    if settings.length_unit:
        return settings.length_unit
    what = _INSUNITS_NAMES.get(code, f"code {code}")
    raise DrawingError(
        f"the drawing does not give a usable length unit ($INSUNITS = {code}, {what})",
        hint="set the drawing units to inches, feet, mm, cm or m, or give [units] length in "
        "dxf2frame.toml, or pass --length-unit",
    )


def _describe(e) -> str:
    return f"{e.dxftype()} on layer '{e.dxf.get('layer', '0')}'"


def _check_handles(doc, settings: Settings, warnings: list[str]) -> None:
    """Entities that share one handle (a damaged file).

    Member ids, warnings and the output drawing name entities by handle, so
    a shared handle on anything the analysis reads is an error; elsewhere
    (title blocks, notes) it is a warning.
    """
    db = doc.entitydb
    frame_or_input = lambda lay: settings.is_frame_layer(lay) or any(  # noqa: E731
        lay.upper() == settings.layers[r].upper() for r in ("supports", "connections", "loads"))
    clashes: dict[str, list] = {}
    layouts = [doc.modelspace()]
    layouts += [b for b in doc.blocks if b.name.upper() not in ("*MODEL_SPACE", "*PAPER_SPACE")]
    for layout in layouts:
        for e in layout:
            h = e.dxf.handle
            if h is None:
                continue
            stored = db.get(h)
            if stored is not e:
                group = clashes.setdefault(h, [stored] if stored is not None else [])
                group.append(e)
    for h, group in clashes.items():
        relevant = any(
            e.dxftype() in HANDLERS and (e.dxftype() == "INSERT" or frame_or_input(e.dxf.get("layer", "0"))
                                         or e.dxf.get("layer", "0") == "0")
            for e in group
        )
        what = ", ".join(_describe(e) for e in group)
        if relevant:
            raise DrawingError(
                f"{len(group)} entities share this handle ({what}): the file is damaged",
                handle=h,
                layer=group[-1].dxf.get("layer", "0"),
                hint="open it in a CAD program, run its audit/repair command and save it again",
            )
        warnings.append(f"{len(group)} entities share the handle #{h} ({what}); they are not part of the frame")


def _check_precision(frame, unit: str, scale: float) -> None:
    """Refuse geometry whose member lengths are lost in floating-point
    rounding: coordinates far from the origin with short members."""
    if not frame.members or not frame.nodes:
        return
    far = max(max(abs(n.x), abs(n.y)) for n in frame.nodes)
    lengths = [(frame.geometry(m)[0], m) for m in frame.members]
    shortest, m = min(lengths, key=lambda t: t[0])
    if not math.isfinite(far) or not (shortest > 0):
        raise GeometryError("member geometry is not finite", handle=m.handle, layer=m.layer)
    rounding = far * _DOUBLE_EPS / shortest
    if rounding > MAX_RELATIVE_ROUNDING:
        raise GeometryError(
            f"the drawing lies {far / scale:.4g} {unit} from the origin but this member is only "
            f"{shortest / scale:.4g} {unit} long: its length is rounded by {rounding:.1e} of itself",
            handle=m.handle,
            layer=m.layer,
            hint="move the drawing near the origin (or check the drawing unit)",
        )


def read_document(
    doc,
    source: Path | str,
    settings: Settings | None = None,
    length_unit: str | None = None,
) -> DrawingModel:
    """Read an opened ezdxf ``Drawing``.

    Parameters
    ----------
    doc : ezdxf Drawing
    source : path reported as the model's source
    settings : Settings (defaults when None)
    length_unit : drawing unit overriding ``$INSUNITS`` ("m", "mm", "ft", "in", ...)

    Returns
    -------
    DrawingModel with the frame in SI units.

    Raises
    ------
    DrawingError and subclasses (handle + layer + what to do), also for
    entities sharing a handle, non-finite or far-out coordinates and
    entity data that cannot be interpreted;
    InputFileError when the drawing has more entities than the limit.
    """
    settings = settings or Settings()
    source = Path(source)
    n_entities = len(doc.entitydb)
    if n_entities > settings.max_entities:
        raise InputFileError(
            f"{source}: {n_entities} entities, more than the limit of {settings.max_entities} "
            "(raise [limits] max_entities in dxf2frame.toml if this is intended)"
        )
    warnings: list[str] = []
    _check_handles(doc, settings, warnings)
    unit = _drawing_unit(doc, settings, length_unit, warnings)
    scale = length_unit_scale(unit)
    force = settings.force_unit
    snap_m: float | None = None
    if settings.snap is not None:
        if isinstance(settings.snap, str):
            snap_m = parse_quantity(settings.snap, "length", default_unit=unit, tag="geometry.snap")
        else:
            snap_m = float(settings.snap) * scale
    z_tol = max(0.5e-3, snap_m or 0.0) / scale
    defaults = {
        "force": force,
        "distributed": f"({force})/({unit})",
        "moment": f"({force})*({unit})",
        "length": unit,
        "spring_linear": f"({force})/({unit})",
        "spring_rotational": f"({force})*({unit})/rad",
        "angle": "deg",
        "stress": f"({force})/({unit})**2",
        "area": f"({unit})**2",
        "inertia": f"({unit})**4",
    }
    ctx = _Ctx(doc, settings, unit, scale, z_tol, defaults, warnings=warnings)

    msp = doc.modelspace()
    for e in msp:
        handler = HANDLERS.get(e.dxftype())
        if handler is None:
            continue
        layer = e.dxf.get("layer", "0")
        if settings.is_result_layer(layer):
            continue
        try:
            handler(ctx, e, _Source(e.dxf.handle or "", layer))
        except _ENTITY_DATA_ERRORS as exc:
            # ezdxf could load the entity but not interpret it: damaged data
            raise DrawingError(
                f"cannot interpret this {e.dxftype()} ({type(exc).__name__}: {exc})",
                handle=e.dxf.handle or "",
                layer=layer,
                hint="its data look damaged; redraw the entity",
            ) from None

    if not ctx.segments:
        raise GeometryError(
            f"no members found on layer '{settings.layers['frame']}' or '{settings.layers['frame']}-*'",
            hint="draw member centrelines as LINE or LWPOLYLINE on those layers (or remap [layers] frame)",
        )
    if snap_m is not None and snap_m > 0:
        tol = snap_m
    else:
        import numpy as np

        pts = [s.p0 for s in ctx.segments] + [s.p1 for s in ctx.segments]
        tol = default_tolerance(np.asarray(pts))
    result = build_frame(
        ctx.segments,
        ctx.supports,
        ctx.connections,
        ctx.loads,
        tol=tol,
        section_for=settings.section_for,
        unit=(unit, scale),
    )
    ctx.warnings.extend(result.warnings)
    _check_precision(result.frame, unit, scale)
    x0, y0, x1, y1 = result.extents
    return DrawingModel(
        frame=result.frame,
        source=source,
        length_unit=unit,
        unit_scale=scale,
        warnings=ctx.warnings,
        hinges=ctx.hinges,
        n_loads=ctx.n_loads,
        extents=(x0 / scale, y0 / scale, x1 / scale, y1 / scale),
        force_unit=force,
    )


class _EzdxfMessages(logging.Handler):
    """Collects the warnings ezdxf logs in the current thread (repairs it made
    while loading), so they become warnings of the model instead of stray
    lines on stderr."""

    def __init__(self) -> None:
        super().__init__(level=logging.WARNING)
        self.thread = threading.get_ident()
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        if record.thread == self.thread:
            try:
                self.messages.append(record.getMessage())
            except Exception:  # noqa: BLE001 - a malformed log call must not stop the reading
                self.messages.append(str(record.msg))


@contextlib.contextmanager
def _ezdxf_messages() -> Iterator[list[str]]:
    log = logging.getLogger("ezdxf")
    handler = _EzdxfMessages()
    log.addHandler(handler)
    try:
        yield handler.messages
    finally:
        log.removeHandler(handler)


def _summarise(messages: list[str], limit: int = _NOTE_LIMIT) -> str:
    uniq = list(dict.fromkeys(" ".join(m.split()) for m in messages if m and m.strip()))
    text = "; ".join(uniq[:limit])
    if len(uniq) > limit:
        text += f"; and {len(uniq) - limit} more"
    return text


_ENTITY_TAG = re.compile(rb"\n[ \t]*0[ \t]*\r?\n[A-Za-z]")  # group code 0, then an entity/section name
_STRUCTURE_TAGS = 1000  # SECTION, ENDSEC, TABLE, ENDTAB, EOF... besides the entities


def _count_entity_tags(path: Path, chunk: int = 1 << 23) -> int:
    """Number of group-code-0 tags of an ASCII DXF (each starts an entity or
    a structure mark), counted without parsing, so that a file far over the
    entity limit is refused before ezdxf spends minutes loading it."""
    count, carry = 0, b"\n"
    with open(path, "rb") as fh:
        while True:
            block = fh.read(chunk)
            if not block:
                break
            data = carry + block
            # a tag cut by the chunk boundary starts at one of the last two
            # line breaks: count matches before the third-last, carry the rest
            cut = len(data)
            for _ in range(3):
                cut = data.rfind(b"\n", 0, cut)
                if cut <= 0:
                    cut = 0
                    break
            count += sum(1 for m in _ENTITY_TAG.finditer(data) if m.start() < cut)
            carry = data[cut:]
    return count + len(_ENTITY_TAG.findall(carry))


def _looks_like_dxf(head: bytes) -> bool:
    """True when the first bytes are those of a binary DXF or an ASCII DXF
    whose first tag (after comments) opens a SECTION; the recover mode
    would otherwise turn any text into an empty drawing."""
    if head.startswith(_BINARY_SENTINEL):
        return True
    lines = [ln.strip() for ln in head.decode("latin-1").lstrip("\ufeff\xef\xbb\xbf").splitlines()]
    k = 0
    while k + 1 < len(lines):
        code, value = lines[k], lines[k + 1]
        if code == "999":  # comment
            k += 2
            continue
        return code == "0" and value.upper() == "SECTION"
    return k > 0  # nothing but comments so far: let ezdxf decide


_CONFLICT = re.compile(r"Removed entity (\w+)\(#([0-9A-Fa-f]+)\) with a conflicting handle")


def open_document(path: Path | str, settings: Settings | None = None):
    """Open a DXF file (ASCII or binary) with ezdxf, repairing a damaged one.

    The file is read normally first; when ezdxf cannot load it the recover
    mode reads it again and repairs what it can.  Repairs are returned as
    notes (one text naming the file and up to five repairs), never printed.

    Parameters
    ----------
    path : the DXF file
    settings : for ``limits.max_file_mb`` (defaults when None)

    Returns
    -------
    (doc, notes) : the ezdxf ``Drawing`` and the list of notes

    Raises
    ------
    InputFileError
        Missing, not a file, empty, over the size limit, not DXF, or so
        damaged that the recover mode gives up.
    DrawingError
        The recover mode had to drop a drawing entity because its handle
        clashes with another one (the analysis would silently miss it).
    """
    p = Path(path)
    settings = settings or Settings()
    if not p.exists():
        raise InputFileError(f"{p}: file not found")
    if not p.is_file():
        raise InputFileError(f"{p}: not a file")
    try:
        size = p.stat().st_size
        with open(p, "rb") as fh:
            head = fh.read(4096)
    except OSError as exc:
        raise InputFileError(f"{p}: cannot read the file ({exc.strerror or exc})") from None
    if size > settings.max_file_mb * 1024 * 1024:
        raise InputFileError(
            f"{p}: {size / 1024 / 1024:.3g} MB, more than the limit of {settings.max_file_mb:g} MB "
            "(raise [limits] max_file_mb in dxf2frame.toml if this is intended)"
        )
    if not head.strip():
        raise InputFileError(f"{p}: the file is empty, not a DXF drawing")
    if not _looks_like_dxf(head):
        raise InputFileError(
            f"{p}: not a readable DXF file (it does not start with a DXF section)",
            )
    if not head.startswith(_BINARY_SENTINEL):
        tags = _count_entity_tags(p)
        if tags > settings.max_entities + _STRUCTURE_TAGS:
            raise InputFileError(
                f"{p}: about {tags} entities, more than the limit of {settings.max_entities} "
                "(raise [limits] max_entities in dxf2frame.toml if this is intended)"
            )
    notes: list[str] = []
    with _ezdxf_messages() as first_try:
        try:
            doc = ezdxf.readfile(p)
        except (FileNotFoundError, PermissionError, IsADirectoryError) as exc:
            raise InputFileError(f"{p}: cannot read the file ({exc.strerror or exc})") from None
        except MemoryError:
            raise InputFileError(f"{p}: not enough memory to read the file") from None
        except Exception as exc:  # noqa: BLE001 - structure errors, bad values, not DXF: try the recover mode
            doc, why = None, str(exc) if str(exc).startswith(type(exc).__name__) else f"{type(exc).__name__}: {exc}"
    if doc is not None:
        if first_try:
            notes.append(f"{p.name}: read with remarks from the DXF library: {_summarise(first_try)}")
        return doc, notes
    with _ezdxf_messages() as repairs:
        try:
            doc, auditor = recover.readfile(p)
        except MemoryError:
            raise InputFileError(f"{p}: not enough memory to read the file") from None
        except Exception as exc:  # noqa: BLE001 - anything ezdxf raises on garbage
            raise InputFileError(f"{p}: not a readable DXF file ({type(exc).__name__}: {exc})") from None
    fixes = [str(f.message) for f in auditor.fixes]
    for text in fixes:
        m = _CONFLICT.search(text)
        if m and m.group(1) in HANDLERS:
            kept = doc.entitydb.get(m.group(2))
            raise DrawingError(
                f"two entities share this handle ({m.group(1)} and "
                f"{_describe(kept) if kept is not None else 'another entity'}); the file is damaged and one "
                "of them would be lost",
                handle=m.group(2),
                layer=kept.dxf.get("layer", "") if kept is not None else "",
                hint="open it in a CAD program, run its audit/repair command and save it again",
            )
    done = repairs + fixes
    unrepaired = [str(e.message) for e in auditor.errors]
    text = f"{p.name}: damaged DXF ({_summarise([why], 1)[:200]}) read in recovery mode; {len(done)} problem(s) repaired"
    if done:
        text += f" ({_summarise(done)})"
    if unrepaired:
        text += f"; {len(unrepaired)} problem(s) left unrepaired: {_summarise(unrepaired)}"
    notes.append(text + "; check the results against the drawing")
    return doc, notes


def read_drawing(
    path: Path | str,
    settings: Settings | None = None,
    *,
    length_unit: str | None = None,
) -> DrawingModel:
    """Open a DXF file and read it (see the module docstring).

    A damaged file is repaired with ezdxf's recover mode (with a warning
    listing the repairs, see :func:`open_document`).  ``settings`` None:
    ``dxf2frame.toml`` beside the drawing, else defaults.

    Raises
    ------
    InputFileError
        Missing, unreadable, empty, not DXF, larger than
        ``limits.max_file_mb`` or with more than ``limits.max_entities``
        entities.
    DrawingError and subclasses
        Problems with single entities (handle + layer), entities sharing a
        handle, coordinates that are not finite or too far out.
    """
    p = Path(path)
    if not p.exists():
        raise InputFileError(f"{p}: file not found")
    if settings is None:
        settings = load_settings(None, drawing=p)
    doc, notes = open_document(p, settings)
    model = read_document(doc, p, settings, length_unit=length_unit)
    model.document = doc  # unmodified: the writers draw into it instead of reading the file again
    model.warnings[:0] = notes
    return model
