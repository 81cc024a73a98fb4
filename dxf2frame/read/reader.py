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
  (``PIN ROLLER FIXED SLIDER SPRING`` / ``JOINT HINGE CROSSOVER`` /
  ``FORCE COUPLE UDL``, names case-insensitive and remappable).  Any other
  block name there is an :class:`UnknownBlockError`; a symbol of another
  group (a FORCE on SUPPORTS) likewise.  MINSERT grids give one symbol per
  grid cell; a grid with a zero row or column spacing (copies stacked on
  one point) is refused.
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

Where the parts live
--------------------
The reading state and the point checks in
:mod:`dxf2frame.read.context`, the member linework in
:mod:`dxf2frame.read.linework`, the symbols in :mod:`dxf2frame.read.symbol_inserts`,
the dispatch table and block references in
:mod:`dxf2frame.read.dispatch`, opening the file in
:mod:`dxf2frame.drawing_file`; this module checks the drawing as a whole
(entity count, shared handles, unit, precision) and builds the model.
Every public name is importable from here.
"""
from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING

from .section_outlines import sections_with_outlines
from ..block_expansion import check_expansion
from .cleanup import build_frame, default_tolerance
from ..drawing_file import describe_entity, open_document
from ..drawing_model import DrawingModel
from .dispatch import ENTITY_DATA_ERRORS, HANDLERS
from ..errors import MAX_ECHO, DrawingError, GeometryError, InputFileError, shorten
from .context import ReadContext, Source, decode_surrogates
from ..settings import Settings, load_settings
from .sketch_checks import (check_section_keys, default_case_warning, near_misses, section_warnings,
                            upward_gravity_loads)
from ..units import INSUNITS, INSUNITS_OTHER, length_unit_scale, normalise_length_unit, parse_quantity

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

__all__ = [
    "read_drawing",
    "read_file",
    "read_document",
    "MAX_RELATIVE_ROUNDING",
]

#: largest accepted rounding of a member's length, relative to the length,
#: caused by storing its end coordinates as doubles far from the origin
#: (max |coordinate| * 2**-52 / shortest member); beyond it the numbers in
#: the report would carry that rounding in their sixth or seventh digit
MAX_RELATIVE_ROUNDING = 1e-7

_DOUBLE_EPS = 2.0**-52


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
    what = INSUNITS_OTHER.get(code, f"code {code}")
    raise DrawingError(
        f"the drawing does not give a usable length unit ($INSUNITS = {code}, {what})",
        hint="set the drawing units to inches, feet, mm, cm or m, or give [units] length in "
        "dxf2frame.toml, or pass --length-unit",
    )


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
        what = ", ".join(describe_entity(e) for e in group)
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
    check_expansion(doc, settings.max_entities)
    warnings: list[str] = []
    _check_handles(doc, settings, warnings)
    unit = _drawing_unit(doc, settings, length_unit, warnings)
    scale = length_unit_scale(unit)
    snap_m = _snap_metres(settings, unit, scale)
    ctx = ReadContext(doc, settings, unit, scale, max(0.5e-3, snap_m or 0.0) / scale,
                      _default_units(settings.force_unit, unit), warnings=warnings)
    _read_entities(ctx, doc, settings)
    ctx.warnings.extend(ctx.lookalike_warnings())
    ctx.warnings.extend(upward_gravity_loads(ctx.loads))
    if not ctx.segments:
        raise GeometryError(
            f"no members found on layer '{settings.layers['frame']}' or '{settings.layers['frame']}-*'",
            hint="draw member centrelines as LINE or LWPOLYLINE on those layers (or remap [layers] frame)",
        )
    tol = snap_m if snap_m is not None and snap_m > 0 else _default_snap(ctx)
    result = build_frame(
        ctx.segments,
        ctx.supports,
        ctx.connections,
        ctx.loads,
        tol=tol,
        section_for=sections_with_outlines(doc, settings, scale),
        unit=(unit, scale),
        unjoined_layers=settings.unjoined_layers,
    )
    ctx.warnings.extend(result.warnings)
    _check_precision(result.frame, unit, scale)
    check_section_keys(result.frame, settings)
    ctx.warnings.extend(_slips(result, settings, snap_m, unit, scale, doc))
    default_case = default_case_warning(ctx.default_case)
    if default_case:
        ctx.warnings.append(default_case)
    misses = near_misses(result.frame, tol, (unit, scale))
    ctx.warnings.extend(text for _, _, text in misses)
    x0, y0, x1, y1 = result.extents
    return DrawingModel(
        frame=result.frame,
        source=source,
        length_unit=unit,
        unit_scale=scale,
        warnings=[decode_surrogates(shorten(w, 10 * MAX_ECHO)) for w in ctx.warnings],  # names quoted raw
        hinges=ctx.hinges,
        n_loads=ctx.n_loads,
        extents=(x0 / scale, y0 / scale, x1 / scale, y1 / scale),
        force_unit=settings.force_unit,
        crossings_joined=result.crossings_joined,
        crossings_separate=result.crossings_separate,
        near_misses=misses,
    )


def _slips(result, settings: Settings, snap_m: float | None, unit: str, scale: float, doc) -> list[str]:
    """Warnings for values that read fine but are far outside any building
    frame, most often a unit slip: the frame's size in the drawing's unit,
    a large snap tolerance, implausible sections."""
    out = _implausible_size(result.extents, unit, scale, doc)
    if snap_m is not None and snap_m > 0:
        out += _large_snap(result.frame, snap_m, unit, scale)
    return out + section_warnings(result.frame, settings, (unit, scale))


#: the largest side [m] of a frame's extents outside which the drawing's
#: length unit is taken as wrong (a frame of buildings or footbridges:
#: common practice)
PLAUSIBLE_SIZE_M = (0.5, 1000.0)


def _implausible_size(extents, unit: str, scale: float, doc) -> list[str]:
    """A warning when the frame, read in ``unit``, is smaller than half a
    metre or larger than a kilometre across: a drawing in mm whose header
    says m is solved as a frame 1000 times too large without it."""
    x0, y0, x1, y1 = extents
    size = max(x1 - x0, y1 - y0)
    lo, hi = PLAUSIBLE_SIZE_M
    if size <= 0 or lo <= size <= hi:
        return []
    try:
        code = int(doc.header.get("$INSUNITS", 0) or 0)
    except (TypeError, ValueError):
        code = 0
    alts = [f"{u}: {size / scale * length_unit_scale(u):.4g} m" for u in ("mm", "cm", "m", "in", "ft")
            if u != unit and lo <= size / scale * length_unit_scale(u) <= hi]
    fix = "pass --length-unit" if INSUNITS.get(code) == unit else "give [units] length or pass --length-unit"
    return [f"the frame is {size:.4g} m across read in {unit} ($INSUNITS = {code}), "
            f"{'larger' if size > hi else 'smaller'} than any building frame ({lo:g} m to {hi / 1000:g} km: common "
            f"practice); if the drawing is in another unit, {fix}"
            + (f" (in {'; in '.join(alts)})" if alts else "")]


#: a snap tolerance given in the settings above this fraction of the
#: shortest member is a warning (most often a unit slip: 5 m for 5 mm)
LARGE_SNAP = 0.05


def _large_snap(frame, snap_m: float, unit: str, scale: float) -> list[str]:
    """A warning when the settings' snap tolerance ``snap_m`` [m] exceeds
    LARGE_SNAP of the shortest member: end points, supports and loads that
    close together are merged, so the model may not be the one drawn."""
    if not frame.members:
        return []
    lengths = [frame.geometry(m)[0] for m in frame.members]
    i = min(range(len(lengths)), key=lengths.__getitem__)
    if snap_m <= LARGE_SNAP * lengths[i]:
        return []
    m = frame.members[i]
    return [f"[geometry] snap = {snap_m / scale:.6g} {unit} is {100 * snap_m / lengths[i]:.0f} % of the shortest "
            f"member, {m.group} (handle {m.handle}, layer {m.layer}, {lengths[i] / scale:.6g} {unit}): end points, "
            f"supports and loads closer than that are merged or taken at a joint, which may not be the frame "
            f"drawn; check the snap's unit (a few mm is common practice)"]


def _snap_metres(settings: Settings, unit: str, scale: float) -> float | None:
    """The settings' snap tolerance in metres (a bare number is in drawing units)."""
    if settings.snap is None:
        return None
    if isinstance(settings.snap, str):
        return parse_quantity(settings.snap, "length", default_unit=unit, tag="geometry.snap")
    return float(settings.snap) * scale


def _default_snap(ctx: ReadContext) -> float:
    """The snap tolerance [m] when the settings give none: from the spread of
    the member end points (:func:`~dxf2frame.read.cleanup.default_tolerance`)."""
    import numpy as np

    pts = [s.p0 for s in ctx.segments] + [s.p1 for s in ctx.segments]
    return default_tolerance(np.asarray(pts))


def _default_units(force: str, unit: str) -> dict[str, str]:
    """Kind -> the unit of a bare number in an attribute: the settings' force
    unit and the drawing's length unit."""
    return {
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


def _read_entities(ctx: ReadContext, doc, settings: Settings) -> None:
    """Hand every modelspace entity off the result layers to its handler."""
    for e in doc.modelspace():
        handler = HANDLERS.get(e.dxftype())
        if handler is None:
            continue
        layer = ctx.text(e.dxf.get("layer", "0"), "the layer name", e.dxf.handle or "")
        if settings.is_result_layer(layer):
            continue
        try:
            handler(ctx, e, Source(e.dxf.handle or "", layer))
        except ENTITY_DATA_ERRORS as exc:
            # ezdxf could load the entity but not interpret it: damaged data
            raise DrawingError(
                f"cannot interpret this {e.dxftype()} ({type(exc).__name__}: {exc})",
                handle=e.dxf.handle or "",
                layer=layer,
                hint="its data look damaged; redraw the entity",
            ) from None


def read_drawing(
    path: Path | str,
    settings: Settings | None = None,
    *,
    length_unit: str | None = None,
) -> DrawingModel:
    """Open a DXF file and read it (see the module docstring); as
    :func:`read_file` without the document."""
    return read_file(path, settings, length_unit=length_unit)[0]


def read_file(
    path: Path | str,
    settings: Settings | None = None,
    *,
    length_unit: str | None = None,
) -> tuple[DrawingModel, "Drawing"]:
    """Open a DXF file and read it: the model and the ezdxf document as
    opened (the reading does not modify it, so the writers can draw into it
    instead of reading the file again).

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
    model.warnings[:0] = notes
    return model, doc
