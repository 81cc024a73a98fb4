"""The dispatch table, and block references read through it.

:data:`HANDLERS` maps a DXF entity type to its handler, ``handler(ctx,
entity, source)``: the linework of :mod:`dxf2frame.read.linework` and
``INSERT``; types not listed are ignored.  An ``INSERT`` (each cell of a
MINSERT grid on its own, handle ``<insert>.i``) is

* on an input layer (``SUPPORTS``, ``CONNECTIONS``, ``LOADS``): a
  convention symbol of that layer's group (:data:`SYMBOL_GROUPS`), read by
  :mod:`dxf2frame.read.symbol_inserts`; any other block there is an
  :class:`~dxf2frame.errors.UnknownBlockError`;
* elsewhere: a convention symbol is ignored with a warning (one for a
  whole grid); any other block with something to read
  (:meth:`ReadContext.block_reads`) is exploded (ezdxf ``virtual_entities()``, at
  most 16 levels deep) and its pieces go through :data:`HANDLERS` as if
  drawn in model space, handle ``<insert>_<entity>``, pieces on layer
  ``0`` on the layer of the reference.  Blocks with nothing to read are
  never exploded, however deep they nest or large their grid.

A MINSERT grid that is read is refused when it has more cells than
``limits.max_entities`` or a zero spacing along a count above 1 (copies
stacked on one point: the drawing shows one symbol but holds several).  A
block reference without an insertion point (a damaged file) is refused
rather than placed at the origin.

An anonymous reference to a dynamic block counts under the dynamic
block's own name.  Rotation, scale factors and insertion point must be
finite numbers; a reference that cannot be exploded is a
:class:`~dxf2frame.errors.GeometryError`.  :data:`ENTITY_DATA_ERRORS`
are what ezdxf or the geometry code raise for entity data they cannot
use.
"""
from __future__ import annotations

import math
from typing import Callable

import ezdxf
from ezdxf.dynblkhelper import get_dynamic_block_definition

from ..errors import GeometryError, UnknownBlockError
from .linework import handle_curve, handle_line, handle_lwpolyline, handle_polyline, handle_solid3d
from .context import ReadContext, Source
from .symbol_inserts import SYMBOL_HANDLERS

__all__ = ["HANDLERS", "SYMBOL_GROUPS", "grid_size"]

_MAX_DEPTH = 16

#: what ezdxf or the geometry code raises for entity data it cannot use
ENTITY_DATA_ERRORS = (ValueError, TypeError, ArithmeticError, IndexError, KeyError, AttributeError,
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


def _handle_insert(ctx: ReadContext, e, src: Source) -> None:
    rows, cols = grid_size(e)
    if rows * cols == 1 or not _grid_is_read(ctx, e, src):
        # one reference, or a grid that is ignored (with one warning) as a whole
        _insert_one(ctx, e, src)
        return
    _check_grid(ctx, e, src, rows, cols)
    for i, cell in enumerate(e.multi_insert(), start=1):
        _insert_one(ctx, cell, Source(f"{src.handle}.{i}", src.layer, src.virtual, src.depth))


def grid_size(e) -> tuple[int, int]:
    """(rows, columns) of a MINSERT grid as written, (1, 1) for a plain INSERT;
    counts below 1 or unreadable count as 1."""
    out = []
    for key in ("row_count", "column_count"):
        try:
            out.append(max(1, int(e.dxf.get(key, 1))))
        except (TypeError, ValueError, OverflowError):
            out.append(1)
    return out[0], out[1]


def _grid_is_read(ctx: ReadContext, e, src: Source) -> bool:
    """True when the cells of a grid are read one by one: symbols (or wrong
    blocks) on an input layer, or a non-symbol block with something to read."""
    if ctx.role_of_layer(src.layer) is not None:
        return True
    if ctx.settings.block_kind(_block_name(ctx, e)) is not None:
        return False  # a symbol off its layer: one warning for the whole grid
    return ctx.block_reads(e.dxf.name, src.layer)


def _check_grid(ctx: ReadContext, e, src: Source, rows: int, cols: int) -> None:
    """A MINSERT grid that is read: within the entity limit, its insertion
    point present, and no cells stacked on one point.

    A grid with a zero row or column spacing puts several copies on one
    point: the drawing shows one symbol (one load arrow, one support) but
    holds several, so a drafter cannot see what will be analysed; it is
    refused rather than read as stacked loads."""
    name = _block_name(ctx, e)
    cells = rows * cols
    limit = ctx.settings.max_entities
    if cells > limit:
        raise GeometryError(
            f"MINSERT of block '{name}' has {rows} x {cols} = {cells} cells, more than the limit of {limit}",
            handle=src.handle,
            layer=src.layer,
            hint="raise [limits] max_entities in dxf2frame.toml if this is intended",
        )
    _check_insertion_point(e, src)
    raw = (e.dxf.get("row_count", 1), e.dxf.get("column_count", 1))
    if not all(isinstance(n, int) and n >= 1 for n in raw):
        raise GeometryError(
            f"MINSERT of block '{name}' has {raw[0]} rows and {raw[1]} columns: a count below 1 would read "
            "no cell at all",
            handle=src.handle,
            layer=src.layer,
            hint="the file is damaged or was written by a faulty program; insert the block again",
        )
    stacked = [(what, n) for what, n, key in (("row", rows, "row_spacing"), ("column", cols, "column_spacing"))
               if n > 1 and not e.dxf.get(key, 0.0)]
    if stacked:
        what = " and ".join(f"{n} {w}s at {w} spacing 0" for w, n in stacked)
        copies = math.prod(n for _, n in stacked)
        raise GeometryError(
            f"MINSERT of block '{name}' stacks {copies} copies on each point ({what}): the drawing shows "
            f"one but holds {copies}",
            handle=src.handle,
            layer=src.layer,
            hint="give the grid a spacing, or set the count to 1 (write one symbol with the total value)",
        )


def _check_insertion_point(e, src: Source) -> None:
    """A block reference whose insertion point is missing from the file
    (damaged group codes) is refused: ezdxf would place it at the origin."""
    if not e.dxf.hasattr("insert"):
        raise GeometryError(
            "block reference has no insertion point (group codes 10/20 missing or damaged); it would be "
            "placed at the origin",
            handle=src.handle,
            layer=src.layer,
            hint="the file is damaged or was written by a faulty program; insert the block again",
        )


def _block_name(ctx: ReadContext, e) -> str:
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


def _check_insert_numbers(e, src: Source) -> None:
    """Rotation, scale and insertion point of a block reference must be
    finite, and the insertion point must be present."""
    if not src.virtual:
        _check_insertion_point(e, src)
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


def _insert_one(ctx: ReadContext, e, src: Source) -> None:
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
        SYMBOL_HANDLERS[kind](ctx, e, kind, src)
        return
    if kind is not None:
        right = ctx.settings.layers[_ROLE_OF_KIND[kind]]
        ctx.warnings.append(
            f"block '{name}' #{src.handle} on layer '{src.layer}' ignored: {kind} symbols belong on layer '{right}'"
        )
        return
    if not ctx.block_reads(e.dxf.name, src.layer):
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
    except ENTITY_DATA_ERRORS as exc:
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
        eff = src.layer if lay == "0" else ctx.text(lay, "the layer name", f"{src.handle}_{h}")
        if ctx.settings.is_result_layer(eff):
            continue
        handler = HANDLERS.get(v.dxftype())
        if handler is not None:
            handler(ctx, v, Source(f"{src.handle}_{h}", eff, True, src.depth + 1))



#: DXF entity type -> handler(ctx, entity, source); types not listed are ignored
HANDLERS: dict[str, Callable[[ReadContext, object, Source], None]] = {
    "LINE": handle_line,
    "LWPOLYLINE": handle_lwpolyline,
    "POLYLINE": handle_polyline,
    "INSERT": _handle_insert,
    "ARC": handle_curve,
    "CIRCLE": handle_curve,
    "ELLIPSE": handle_curve,
    "SPLINE": handle_curve,
    "3DFACE": handle_solid3d,
    "3DSOLID": handle_solid3d,
    "MESH": handle_solid3d,
    "BODY": handle_solid3d,
    "REGION": handle_solid3d,
    "SURFACE": handle_solid3d,
    "EXTRUDEDSURFACE": handle_solid3d,
    "LOFTEDSURFACE": handle_solid3d,
    "REVOLVEDSURFACE": handle_solid3d,
    "SWEPTSURFACE": handle_solid3d,
    "PLANESURFACE": handle_solid3d,
}
