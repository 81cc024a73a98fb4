"""The dispatch table, and block references read through it.

:data:`HANDLERS` maps a DXF entity type to its handler, ``handler(ctx,
entity, source)``: the linework of :mod:`dxf2frame.linework` and
``INSERT``; types not listed are ignored.  An ``INSERT`` (each cell of a
MINSERT grid on its own, handle ``<insert>.i``) is

* on an input layer (``SUPPORTS``, ``CONNECTIONS``, ``LOADS``): a
  convention symbol of that layer's group (:data:`SYMBOL_GROUPS`), read by
  :mod:`dxf2frame.symbol_inserts`; any other block there is an
  :class:`~dxf2frame.errors.UnknownBlockError`;
* elsewhere: a convention symbol is ignored with a warning; any other
  block with something to read is exploded (ezdxf ``virtual_entities()``,
  at most 16 levels deep) and its pieces go through :data:`HANDLERS` as if
  drawn in model space, handle ``<insert>_<entity>``, pieces on layer
  ``0`` on the layer of the reference.

An anonymous reference to a dynamic block counts under the dynamic
block's own name.  Rotation, scale factors and insertion point must be
finite numbers; a reference that cannot be exploded is a
:class:`~dxf2frame.errors.GeometryError`.  :data:`_ENTITY_DATA_ERRORS`
are what ezdxf or the geometry code raise for entity data they cannot
use.
"""
from __future__ import annotations

import math
from typing import Callable

import ezdxf
from ezdxf.dynblkhelper import get_dynamic_block_definition

from .errors import GeometryError, UnknownBlockError
from .linework import _handle_curve, _handle_line, _handle_lwpolyline, _handle_polyline, _handle_solid3d
from .reading_context import _Ctx, _Source
from .symbol_inserts import _SYMBOL_HANDLERS

__all__ = ["HANDLERS", "SYMBOL_GROUPS"]

_MAX_DEPTH = 16

#: what ezdxf or the geometry code raises for entity data it cannot use
_ENTITY_DATA_ERRORS = (ValueError, TypeError, ArithmeticError, IndexError, KeyError, AttributeError,
                       ezdxf.DXFError)

#: which symbol kinds belong on which input layer role
SYMBOL_GROUPS: dict[str, tuple[str, ...]] = {
    "supports": ("PIN", "ROLLER", "FIXED", "SLIDER", "SPRING"),
    "connections": ("JOINT", "HINGE", "CROSSOVER"),
    "loads": ("FORCE", "COUPLE", "UDL"),
}
_ROLE_OF_KIND = {k: role for role, kinds in SYMBOL_GROUPS.items() for k in kinds}


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
