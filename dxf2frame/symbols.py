"""The block library of the drawing convention: support, connection and load
symbols with their attribute definitions.

A drafter inserts these blocks on the layers SUPPORTS, CONNECTIONS and LOADS.
Only the block *name*, the insertion point, the rotation and the attributes
carry meaning; the linework inside is a symbol for people and is ignored by
the reader.  Symbols are drawn one unit tall: insert them with a scale that
suits the drawing (about 1/40 of the frame width reads well).

Example
-------
>>> import ezdxf
>>> from dxf2frame.symbols import define_blocks, insert_symbol
>>> doc = ezdxf.new()
>>> define_blocks(doc)
>>> ref = insert_symbol(doc.modelspace(), "FORCE", (2.0, 3.0), layer="LOADS", P="12 kN")
>>> ref.get_attrib_text("P")
'12 kN'
"""
from __future__ import annotations

import math
from typing import Any

__all__ = ["BLOCK_ATTRIBUTES", "define_blocks", "insert_symbol", "define_layers", "INPUT_LAYERS"]

#: attribute tags of each block, with their default text ("" = absent)
BLOCK_ATTRIBUTES: dict[str, dict[str, str]] = {
    "PIN": {"SETTLE_X": "", "SETTLE_Y": "", "SETTLE_R": "", "CASE": ""},
    "ROLLER": {"SETTLE_X": "", "SETTLE_Y": "", "SETTLE_R": "", "CASE": ""},
    "FIXED": {"SETTLE_X": "", "SETTLE_Y": "", "SETTLE_R": "", "CASE": ""},
    "SLIDER": {"SETTLE_X": "", "SETTLE_Y": "", "SETTLE_R": "", "CASE": ""},
    "SPRING": {"KX": "", "KY": "", "KR": "", "SETTLE_X": "", "SETTLE_Y": "", "SETTLE_R": "", "CASE": ""},
    "JOINT": {},
    "HINGE": {"MEMBERS": ""},
    "CROSSOVER": {},
    "FORCE": {"P": "", "ANGLE": "", "CASE": "D"},
    "COUPLE": {"M": "", "CASE": "D"},
    "UDL": {"W": "", "W1": "", "W2": "", "FROM": "", "TO": "", "DIR": "", "BASIS": "", "CASE": "D"},
}

#: input layers and their colours (ACI) in a fresh template
INPUT_LAYERS: dict[str, int] = {"FRAME": 7, "FRAME-BRACES": 8, "SUPPORTS": 3, "CONNECTIONS": 4, "LOADS": 1}


def _ground(blk, y: float, half: float = 0.6) -> None:
    blk.add_line((-half, y), (half, y))
    for k in range(5):
        x = -half + k * (2 * half / 4)
        blk.add_line((x, y), (x - 0.2, y - 0.2))


def _arrow_head(blk, tip: tuple[float, float], direction: float, size: float = 0.25) -> None:
    """A filled head whose tip is at ``tip`` pointing along ``direction`` (rad)."""
    c, s = math.cos(direction), math.sin(direction)
    bx, by = tip[0] - size * c, tip[1] - size * s
    px, py = -s * size * 0.4, c * size * 0.4
    blk.add_solid([tip, (bx + px, by + py), (bx - px, by - py)])


def _draw(name: str, blk) -> None:
    if name == "PIN":
        blk.add_lwpolyline([(0, 0), (-0.45, -0.7), (0.45, -0.7)], close=True)
        _ground(blk, -0.7)
    elif name == "ROLLER":
        blk.add_lwpolyline([(0, 0), (-0.45, -0.6), (0.45, -0.6)], close=True)
        for x in (-0.25, 0.25):
            blk.add_circle((x, -0.75), 0.15)
        _ground(blk, -0.9)
    elif name == "FIXED":
        blk.add_line((-0.6, 0), (0.6, 0))
        for k in range(6):
            x = -0.6 + k * 0.24
            blk.add_line((x, 0), (x - 0.2, -0.25))
    elif name == "SLIDER":
        blk.add_lwpolyline([(-0.4, 0), (0.4, 0), (0.4, -0.35), (-0.4, -0.35)], close=True)
        for x in (-0.2, 0.2):
            blk.add_circle((x, -0.47), 0.12)
        _ground(blk, -0.6)
    elif name == "SPRING":
        pts = [(0, 0), (0, -0.15)]
        for k in range(6):
            pts.append((0.2 if k % 2 == 0 else -0.2, -0.2 - k * 0.1))
        pts += [(0, -0.8), (0, -0.9)]
        blk.add_lwpolyline(pts)
        _ground(blk, -0.9)
    elif name == "JOINT":
        blk.add_solid([(-0.15, -0.15), (0.15, -0.15), (-0.15, 0.15), (0.15, 0.15)])
    elif name == "HINGE":
        blk.add_circle((0, 0), 0.2)
    elif name == "CROSSOVER":  # one line hopping over the other
        blk.add_line((-0.5, 0), (0.5, 0))
        blk.add_arc((0, 0), 0.25, 0, 180)
    elif name == "FORCE":
        blk.add_line((0, 0.25), (0, 1.2))
        _arrow_head(blk, (0, 0), -math.pi / 2)
    elif name == "COUPLE":
        blk.add_arc((0, 0), 0.5, -60, 200)
        end = math.radians(200)
        _arrow_head(blk, (0.5 * math.cos(end), 0.5 * math.sin(end)), end + math.pi / 2, 0.2)
    elif name == "UDL":
        blk.add_line((-1.0, 0.9), (1.0, 0.9))
        for x in (-1.0, -0.5, 0.0, 0.5, 1.0):
            blk.add_line((x, 0.9), (x, 0.2))
            _arrow_head(blk, (x, 0.0), -math.pi / 2, 0.2)


#: symbol width in drawing units: about a metre of model space, a round number in each unit
SYMBOL_SIZE: dict[str, float] = {"m": 1.0, "cm": 100.0, "mm": 1000.0, "ft": 3.0, "inch": 36.0}


def define_blocks(doc, names: list[str] | None = None, size: float = 1.0) -> None:
    """Add the convention's blocks (with ATTDEFs) to ``doc``; existing blocks
    of the same name are left alone.  ``size``: the symbols' width in
    drawing units (:data:`SYMBOL_SIZE` of the drawing's unit), so a pin
    reads as a pin in a drawing in mm as in one in metres."""
    style = "D2F-ATTR"
    if style not in doc.styles:
        doc.styles.add(style, font="DejaVuSans.ttf")
    for name in names or list(BLOCK_ATTRIBUTES):
        if name in doc.blocks:
            continue
        blk = doc.blocks.new(name)
        _draw(name, blk)
        for k, (tag, default) in enumerate(BLOCK_ATTRIBUTES[name].items()):
            blk.add_attdef(tag, insert=(0.7, -0.35 * k), text=default, height=0.25,
                           dxfattribs={"style": style})
        if size != 1.0:
            for e in blk:
                e.scale_uniform(size)


def define_layers(doc) -> None:
    """Create the input layers of the convention with a neutral colour each."""
    for name, color in INPUT_LAYERS.items():
        if name not in doc.layers:
            doc.layers.add(name, color=color)


def insert_symbol(msp, name: str, at: tuple[float, float], *, layer: str, rotation: float = 0.0,
                  scale: float = 1.0, **attribs: Any):
    """Insert block ``name`` at ``at`` with attribute values ``attribs``
    (tag=value; tags not given take the block's default text)."""
    ref = msp.add_blockref(name, at, dxfattribs={"layer": layer, "rotation": rotation,
                                                  "xscale": scale, "yscale": scale})
    values = {tag: str(v) for tag, v in attribs.items()}
    ref.add_auto_attribs(values)
    return ref
