"""Build small test drawings with ezdxf, following the drawing convention.

Every test that needs a drawing builds it here, in code; no binary
fixtures are checked in.

>>> doc = new_drawing(units="m")
>>> msp = doc.modelspace()
>>> _ = add_member(msp, (0, 0), (6, 0))
>>> _ = add_support(msp, "pin", (0, 0))
>>> _ = add_support(msp, "roller", (6, 0))
>>> _ = add_load(msp, "udl", (3, 0), W="10 kN/m", CASE="D")

Blocks defined by :func:`new_drawing` (insertion point = base point
(0, 0)) and their ATTDEFs, with the default text in brackets:

* ``PIN ROLLER FIXED SLIDER``: CASE [D], SETTLE_X, SETTLE_Y, SETTLE_R
* ``SPRING``: the same plus KX, KY, KR
* ``JOINT``, ``CROSSOVER``: none; ``HINGE``: MEMBERS
* ``FORCE`` (arrow tip at the base point, pointing to local -Y): P, ANGLE, CASE [D]
* ``COUPLE``: M, CASE [D]
* ``UDL``: W, W1, W2, FROM, TO, DIR [GRAVITY], BASIS [LENGTH], CASE [D]

Only the attributes passed as keyword arguments become ATTRIBs of an
insert; the others fall back to the ATTDEF defaults.
"""
from __future__ import annotations

from pathlib import Path
from typing import Iterable, Sequence

import ezdxf
from ezdxf.document import Drawing
from ezdxf.entities import Insert, Line, LWPolyline, Polyline
from ezdxf.layouts import BaseLayout, BlockLayout

__all__ = [
    "UNIT_CODES",
    "BLOCK_ATTDEFS",
    "new_drawing",
    "define_symbol_blocks",
    "add_member",
    "add_polyline",
    "add_symbol",
    "add_support",
    "add_load",
    "add_hinge",
    "add_joint",
    "add_crossover",
    "add_block",
    "insert_block",
    "save",
]

#: $INSUNITS code by unit name
UNIT_CODES: dict[str | None, int] = {None: 0, "in": 1, "inch": 1, "ft": 2, "mm": 4, "cm": 5, "m": 6}

_SUPPORT_ATTRS = {"CASE": "D", "SETTLE_X": "", "SETTLE_Y": "", "SETTLE_R": ""}

#: block name -> {tag: default text}
BLOCK_ATTDEFS: dict[str, dict[str, str]] = {
    "PIN": dict(_SUPPORT_ATTRS),
    "ROLLER": dict(_SUPPORT_ATTRS),
    "FIXED": dict(_SUPPORT_ATTRS),
    "SLIDER": dict(_SUPPORT_ATTRS),
    "SPRING": {**_SUPPORT_ATTRS, "KX": "", "KY": "", "KR": ""},
    "JOINT": {},
    "HINGE": {"MEMBERS": ""},
    "CROSSOVER": {},
    "FORCE": {"P": "", "ANGLE": "", "CASE": "D"},
    "COUPLE": {"M": "", "CASE": "D"},
    "UDL": {"W": "", "W1": "", "W2": "", "FROM": "", "TO": "", "DIR": "GRAVITY", "BASIS": "LENGTH", "CASE": "D"},
}

_SYMBOL_LINES: dict[str, list[tuple[tuple[float, float], tuple[float, float]]]] = {
    "PIN": [((0, 0), (-0.2, -0.3)), ((-0.2, -0.3), (0.2, -0.3)), ((0.2, -0.3), (0, 0))],
    "ROLLER": [((0, 0), (-0.2, -0.25)), ((-0.2, -0.25), (0.2, -0.25)), ((0.2, -0.25), (0, 0)),
               ((-0.25, -0.35), (0.25, -0.35))],
    "FIXED": [((-0.3, 0), (0.3, 0)), ((-0.3, 0), (-0.4, -0.1)), ((0.3, 0), (0.2, -0.1))],
    "SLIDER": [((-0.3, 0), (0.3, 0)), ((-0.3, -0.1), (0.3, -0.1))],
    "SPRING": [((0, 0), (0.1, -0.1)), ((0.1, -0.1), (-0.1, -0.2)), ((-0.1, -0.2), (0, -0.3))],
    "JOINT": [((-0.1, 0), (0.1, 0)), ((0, -0.1), (0, 0.1))],
    "HINGE": [((-0.1, -0.1), (0.1, 0.1)), ((-0.1, 0.1), (0.1, -0.1))],
    "CROSSOVER": [((-0.2, 0), (-0.1, 0.1)), ((-0.1, 0.1), (0.1, 0.1)), ((0.1, 0.1), (0.2, 0))],
    "FORCE": [((0, 1), (0, 0)), ((0, 0), (-0.1, 0.2)), ((0, 0), (0.1, 0.2))],
    "COUPLE": [((0.3, 0), (0, 0.3)), ((0, 0.3), (-0.3, 0))],
    "UDL": [((-0.5, 0.5), (0.5, 0.5)), ((0, 0.5), (0, 0))],
}


def define_symbol_blocks(doc: Drawing, names: Iterable[str] | None = None) -> None:
    """Define the convention's symbol blocks (graphics on layer 0 plus ATTDEFs)."""
    for name in names or BLOCK_ATTDEFS:
        if name in doc.blocks:
            continue
        blk = doc.blocks.new(name)
        for a, b in _SYMBOL_LINES.get(name, []):
            blk.add_line(a, b)
        for i, (tag, default) in enumerate(BLOCK_ATTDEFS.get(name, {}).items()):
            blk.add_attdef(tag, (0.5, -0.3 * (i + 1)), text=default, dxfattribs={"height": 0.2})


def new_drawing(units: str | int | None = "m", *, dxfversion: str = "R2018") -> Drawing:
    """A new drawing with $INSUNITS set, the input layers and the symbol blocks.

    ``units``: "m", "mm", "cm", "ft", "in" (or an $INSUNITS code); None
    leaves the drawing unitless ($INSUNITS = 0).
    """
    doc = ezdxf.new(dxfversion, setup=False)
    code = units if isinstance(units, int) else UNIT_CODES[units]
    doc.header["$INSUNITS"] = code
    for name in ("FRAME", "SUPPORTS", "CONNECTIONS", "LOADS"):
        if name not in doc.layers:
            doc.layers.add(name)
    define_symbol_blocks(doc)
    return doc


def _xy(p: Sequence[float]) -> tuple[float, ...]:
    return tuple(float(c) for c in p)


def add_member(layout: BaseLayout, p0: Sequence[float], p1: Sequence[float], layer: str = "FRAME") -> Line:
    """A LINE from p0 to p1 (2 or 3 coordinates) on ``layer``."""
    return layout.add_line(_xy(p0), _xy(p1), dxfattribs={"layer": layer})


def add_polyline(
    layout: BaseLayout,
    points: Sequence[Sequence[float]],
    layer: str = "FRAME",
    *,
    closed: bool = False,
    bulges: Sequence[float] | None = None,
    legacy: bool = False,
    elevation: float = 0.0,
) -> LWPolyline | Polyline:
    """An LWPOLYLINE (``legacy=False``) or a 2D POLYLINE through ``points``.

    ``bulges[i]`` is the bulge of the segment starting at vertex i.
    """
    bulges = list(bulges) if bulges is not None else [0.0] * len(points)
    if legacy:
        pl = layout.add_polyline2d(
            [(float(p[0]), float(p[1])) for p in points],
            close=closed,
            dxfattribs={"layer": layer, "elevation": (0.0, 0.0, float(elevation))},
        )
        for v, b in zip(pl.vertices, bulges):
            v.dxf.bulge = float(b)
        return pl
    return layout.add_lwpolyline(
        [(float(p[0]), float(p[1]), 0.0, 0.0, float(b)) for p, b in zip(points, bulges)],
        format="xyseb",
        close=closed,
        dxfattribs={"layer": layer, "elevation": float(elevation)},
    )


def add_symbol(
    layout: BaseLayout,
    block: str,
    at: Sequence[float],
    rotation: float = 0.0,
    *,
    layer: str,
    xscale: float = 1.0,
    yscale: float = 1.0,
    **attribs: object,
) -> Insert:
    """Insert block ``block`` at ``at`` (rotation in degrees) and attach an
    ATTRIB for each keyword argument whose value is not None."""
    ins = layout.add_blockref(
        block,
        _xy(at),
        dxfattribs={"layer": layer, "rotation": float(rotation), "xscale": float(xscale), "yscale": float(yscale)},
    )
    for i, (tag, value) in enumerate(attribs.items()):
        if value is None:
            continue
        ins.add_attrib(tag.upper(), str(value), insert=(float(at[0]) + 0.5, float(at[1]) - 0.3 * (i + 1)))
    return ins


def add_support(
    layout: BaseLayout,
    kind: str,
    at: Sequence[float],
    rotation: float = 0.0,
    *,
    layer: str = "SUPPORTS",
    xscale: float = 1.0,
    yscale: float = 1.0,
    **attribs: object,
) -> Insert:
    """A support block (pin, roller, fixed, slider, spring) on layer SUPPORTS."""
    return add_symbol(layout, kind.upper(), at, rotation, layer=layer, xscale=xscale, yscale=yscale, **attribs)


def add_load(
    layout: BaseLayout,
    kind: str,
    at: Sequence[float],
    rotation: float = 0.0,
    *,
    layer: str = "LOADS",
    xscale: float = 1.0,
    yscale: float = 1.0,
    **attribs: object,
) -> Insert:
    """A load block (force, couple, udl) on layer LOADS."""
    return add_symbol(layout, kind.upper(), at, rotation, layer=layer, xscale=xscale, yscale=yscale, **attribs)


def add_hinge(
    layout: BaseLayout, at: Sequence[float], members: str | Sequence[str] | None = None, *, layer: str = "CONNECTIONS"
) -> Insert:
    """A HINGE block; ``members`` (layer names) becomes the MEMBERS attribute."""
    if members is not None and not isinstance(members, str):
        members = ",".join(members)
    return add_symbol(layout, "HINGE", at, layer=layer, MEMBERS=members)


def add_joint(layout: BaseLayout, at: Sequence[float], *, layer: str = "CONNECTIONS") -> Insert:
    """A JOINT block (joins crossing members)."""
    return add_symbol(layout, "JOINT", at, layer=layer)


def add_crossover(layout: BaseLayout, at: Sequence[float], *, layer: str = "CONNECTIONS") -> Insert:
    """A CROSSOVER block (keeps crossing members separate)."""
    return add_symbol(layout, "CROSSOVER", at, layer=layer)


def add_block(doc: Drawing, name: str, base_point: Sequence[float] = (0.0, 0.0)) -> BlockLayout:
    """A new empty block definition to fill with the helpers above (for nesting)."""
    return doc.blocks.new(name, base_point=_xy(base_point))


def insert_block(
    layout: BaseLayout,
    name: str,
    at: Sequence[float],
    rotation: float = 0.0,
    *,
    layer: str = "0",
    xscale: float = 1.0,
    yscale: float = 1.0,
) -> Insert:
    """A plain block reference (no attributes)."""
    return layout.add_blockref(
        name,
        _xy(at),
        dxfattribs={"layer": layer, "rotation": float(rotation), "xscale": float(xscale), "yscale": float(yscale)},
    )


def save(doc: Drawing, path: str | Path) -> Path:
    """Write the drawing and return its path."""
    p = Path(path)
    doc.saveas(p)
    return p
