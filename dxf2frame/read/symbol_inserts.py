"""Convention symbols: a symbol block reference -> a support, connection or load.

One function per symbol kind, called as ``handler(ctx, insert, kind,
source)`` through :data:`SYMBOL_HANDLERS` once
:mod:`dxf2frame.read.dispatch` has found a symbol on its own layer.
Each appends a :class:`~dxf2frame.read.cleanup.SupportSpec`,
:class:`~dxf2frame.read.cleanup.ConnectionSpec`,
:class:`~dxf2frame.read.cleanup.ForceSpec`, :class:`~dxf2frame.read.cleanup.CoupleSpec`
or :class:`~dxf2frame.read.cleanup.UdlSpec` to the reading state; a missing or
contradictory attribute is a :class:`~dxf2frame.errors.DrawingError`
naming the insert.

Units and signs: the insertion point in metres; quantities in SI (forces
N, distributed loads and linear springs N/m, couples N*m, rotational
springs N*m/rad, FROM, TO and settlements m, angles rad), bare numbers in
the settings' force unit and the drawing unit.  A support's angle is the
direction of the block's local +X after the insert's full transformation
[rad, counter-clockwise from +X].  A FORCE acts along the transformed
local -Y (its arrow) unless ``ANGLE`` (counter-clockwise from +X, the
direction it acts) is given; a COUPLE is counter-clockwise positive; a
load or settlement without ``CASE`` belongs to case D (loads that took
that default are counted for one warning); a CASE named in the settings'
``[cases]`` is mapped onto its standard letter.
"""
from __future__ import annotations

import math
import re
from typing import Callable

from ezdxf.math import Vec3

from .cleanup import ConnectionSpec, CoupleSpec, ForceSpec, SupportSpec, UdlSpec
from ..errors import DrawingError, GeometryError
from .context import ReadContext, Source

_SPLIT_LIST = re.compile(r"[,;]")


# ---------------------------------------------------------------------------
# symbol handlers
# ---------------------------------------------------------------------------


def _placement(ctx: ReadContext, e, src: Source) -> tuple[tuple[float, float], Vec3, Vec3]:
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


def _case(attrs: dict[str, str], ctx: ReadContext | None = None, src: Source | None = None) -> str:
    """Load case of a symbol: its CASE text (an office name mapped onto a
    standard letter by the settings' ``[cases]``), else ``D``; a load (given
    ``ctx`` and ``src``) that took the default is counted for a warning."""
    text = attrs.get("CASE", "").strip()
    if not text:
        if ctx is not None and src is not None:
            ctx.default_case.append(src.handle)
        return "D"
    return ctx.settings.case_name(text) if ctx is not None else text


def _symbol_support(ctx: ReadContext, e, kind: str, src: Source) -> None:
    at, ux, _ = _placement(ctx, e, src)
    attrs = ctx.attributes(e, src)
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
        SupportSpec(at, kind.lower(), angle, settle=settle, settle_case=_case(attrs, ctx),
                    handle=src.handle, layer=src.layer, **stiff)
    )


def _symbol_connection(ctx: ReadContext, e, kind: str, src: Source) -> None:
    at, _, _ = _placement(ctx, e, src)
    layers = None
    if kind == "HINGE":
        ctx.hinges += 1
        attrs = ctx.attributes(e, src)
        if "MEMBERS" in attrs:
            layers = tuple(s.strip() for s in _SPLIT_LIST.split(attrs["MEMBERS"]) if s.strip()) or None
    ctx.connections.append(ConnectionSpec(at, kind.lower(), layers, src.handle, src.layer))


def _missing(what: str, tags: str, src: Source, ctx: ReadContext) -> DrawingError:
    return DrawingError(
        f"{what} has no {tags} attribute",
        handle=src.handle,
        layer=src.layer,
        hint=f"give its value as an attribute, e.g. {ctx.settings.attr(tags.split()[0])}='10 kN'",
    )


def _symbol_force(ctx: ReadContext, e, kind: str, src: Source) -> None:
    ctx.n_loads += 1
    at, _, arrow = _placement(ctx, e, src)
    attrs = ctx.attributes(e, src)
    P = ctx.quantity(attrs, "P", "force", src)
    if P is None:
        raise _missing("FORCE", "P", src, ctx)
    ang = ctx.quantity(attrs, "ANGLE", "angle", src)
    if ang is not None:
        _note_radians(attrs.get("ANGLE", ""), ctx, src)
        dx, dy = math.cos(ang), math.sin(ang)
    else:
        dx, dy = arrow.x, arrow.y
    ctx.loads.append(ForceSpec(at, P * dx, P * dy, _case(attrs, ctx, src), src.handle, src.layer))


def _note_radians(text: str, ctx: ReadContext, src: Source) -> None:
    """Warn when a bare ANGLE (read in degrees) is a round angle in radians
    (-1.5708 for -pi/2): a force almost along X instead of down is no model
    a drafter means, yet it solves without complaint."""
    try:
        v = float(text.strip())
    except ValueError:
        return  # a unit given: read as written
    k = v / (math.pi / 12)  # multiples of 15 degrees
    if v == round(v) or abs(v) > 2 * math.pi + 1e-3 or round(k) == 0 or abs(k - round(k)) > 2e-3:
        return
    deg = round(k) * 15
    ctx.warnings.append(
        f"force #{src.handle} on layer '{src.layer}': {ctx.settings.attr('ANGLE')}={text.strip()} is read in "
        f"degrees (nearly along X), yet it is {deg} degrees in radians; write {deg} (degrees) or "
        f"'{text.strip()} rad' to say which is meant")


def _symbol_couple(ctx: ReadContext, e, kind: str, src: Source) -> None:
    ctx.n_loads += 1
    at, _, _ = _placement(ctx, e, src)
    attrs = ctx.attributes(e, src)
    M = ctx.quantity(attrs, "M", "moment", src)
    if M is None:
        raise _missing("COUPLE", "M", src, ctx)
    ctx.loads.append(CoupleSpec(at, M, _case(attrs, ctx, src), src.handle, src.layer))


def _choice(attrs: dict[str, str], tag: str, allowed: tuple[str, ...], default: str, src: Source, ctx: ReadContext) -> str:
    v = attrs.get(tag, default).strip().upper()
    if v not in allowed:
        raise DrawingError(
            f"attribute {ctx.settings.attr(tag)} = {attrs.get(tag)!r} is not one of {', '.join(allowed)}",
            handle=src.handle,
            layer=src.layer,
            hint=f"set {ctx.settings.attr(tag)} to one of {', '.join(allowed)}",
        )
    return v


def _symbol_udl(ctx: ReadContext, e, kind: str, src: Source) -> None:
    ctx.n_loads += 1
    at, _, _ = _placement(ctx, e, src)
    attrs = ctx.attributes(e, src)
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
        UdlSpec(at, w1, w2, start, end, direction, basis == "PROJECTED", _case(attrs, ctx, src), src.handle, src.layer,
                basis_given="BASIS" in attrs)
    )


SYMBOL_HANDLERS: dict[str, Callable] = {
    "PIN": _symbol_support,
    "ROLLER": _symbol_support,
    "FIXED": _symbol_support,
    "SLIDER": _symbol_support,
    "SPRING": _symbol_support,
    "JOINT": _symbol_connection,
    "HINGE": _symbol_connection,
    "CROSSOVER": _symbol_connection,
    "FORCE": _symbol_force,
    "COUPLE": _symbol_couple,
    "UDL": _symbol_udl,
}
