"""Regenerate the demo drawings: a two-bay orchard packing shed frame.

The scenario is invented: a steel portal frame on gridline 3 of a packing
shed at "Hollow Creek orchard", two bays of 9 m, eaves at 5 m, ridges at
6.2 m, with a storage loft in the left bay.  The loft beam is pinned to the
middle column (a HINGE releasing only the beam end) and runs into the
left column rigidly.

* ``packing-shed-rev-A.dxf``: first issue.
* ``packing-shed-rev-B.dxf``: the loft raised from 2.8 m to 3.0 m, and the
  fruit-bin hoist on the loft upgraded from 6 kN to 9 kN.

The settings beside them (``dxf2frame.toml``) take the rafters from a
shape text, add the steel's self-weight to the dead load, let the wind act
both ways and check the storey drift of the loft and the eaves against
h/400; the solved demo shows the drift ratios at each level and flags the
loft beam's span/deflection against its L/360 limit.

A second invented scenario, for second order and moving loads:
``footbridge/kestrel-lane-footbridge.dxf``, a steel footbridge of two
14 m spans carrying a cycle path over a drainage channel at "Kestrel
Lane", its deck continuous over a fixed-base steel pier 4 m high.  A
maintenance buggy and a bin trolley cross the deck (``footbridge/
dxf2frame.toml``: ``[moving]``, and ``[second_order]`` with P-Delta).

Run ``python drawings/make_demo.py`` to write all three next to this script.
"""
from __future__ import annotations

import sys
from pathlib import Path

import ezdxf

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from dxf2frame.symbols import define_blocks, define_layers, insert_symbol  # noqa: E402

SYMBOL = 0.35  # symbol scale, m


def build(loft_y: float, hoist: str, revision: str) -> ezdxf.document.Drawing:
    doc = ezdxf.new("R2018", setup=True)
    doc.header["$INSUNITS"] = 6  # metres
    define_layers(doc)
    define_blocks(doc)
    for name, color in (("FRAME-COLUMNS", 7), ("FRAME-RAFTERS", 7), ("FRAME-BEAMS", 7),
                        ("ANNOTATION", 8)):
        doc.layers.add(name, color=color)
    msp = doc.modelspace()

    # members: centrelines
    for x in (0.0, 9.0, 18.0):
        msp.add_line((x, 0.0), (x, 5.0), dxfattribs={"layer": "FRAME-COLUMNS"})
    for x0 in (0.0, 9.0):
        msp.add_lwpolyline([(x0, 5.0), (x0 + 4.5, 6.2), (x0 + 9.0, 5.0)],
                           dxfattribs={"layer": "FRAME-RAFTERS"})
    msp.add_line((0.0, loft_y), (9.0, loft_y), dxfattribs={"layer": "FRAME-BEAMS"})

    def put(name: str, at, layer: str, rotation: float = 0.0, **attribs):
        insert_symbol(msp, name, at, layer=layer, rotation=rotation, scale=SYMBOL, **attribs)

    # supports
    put("FIXED", (0.0, 0.0), "SUPPORTS")
    put("PIN", (9.0, 0.0), "SUPPORTS")
    put("FIXED", (18.0, 0.0), "SUPPORTS")
    # the loft beam sits on a cleat at the middle column: its end is pinned
    put("HINGE", (9.0, loft_y), "CONNECTIONS", MEMBERS="FRAME-BEAMS")

    # loads: dead (roof sheeting and purlins, loft floor), live, snow, wind
    rafter_mids = [(2.25, 5.6), (6.75, 5.6), (11.25, 5.6), (15.75, 5.6)]
    for p in rafter_mids:
        put("UDL", p, "LOADS", W="0.8 kN/m", CASE="D")
        put("UDL", (p[0] + 0.6, p[1] + (0.16 if p[0] in (2.25, 11.25) else -0.16)), "LOADS",
            W="1.1 kN/m", BASIS="PROJECTED", CASE="S")
    put("UDL", (2.0, loft_y), "LOADS", W="1.5 kN/m", CASE="D")
    put("UDL", (3.5, loft_y), "LOADS", W="3.5 kN/m", CASE="L")
    put("FORCE", (6.0, loft_y), "LOADS", P=hoist, CASE="L")
    put("FORCE", (0.0, 5.0), "LOADS", P="4 kN", ANGLE="0", CASE="W")
    for y in (1.5, 4.0):  # wind on the left column, below and above the loft
        put("UDL", (0.0, y), "LOADS", rotation=90, W="0.9 kN/m", DIR="X", CASE="W")

    msp.add_text(f"HOLLOW CREEK PACKING SHED - GRIDLINE 3 FRAME - REV {revision}",
                 height=0.3, dxfattribs={"layer": "ANNOTATION"}).set_placement((0.0, -1.6))
    return doc


def build_footbridge() -> ezdxf.document.Drawing:
    """The Kestrel Lane footbridge: deck on FRAME-DECK (the moving-load
    path), pier on FRAME-PIER, dead and pedestrian load on the deck, wind
    on the pier."""
    doc = ezdxf.new("R2018", setup=True)
    doc.header["$INSUNITS"] = 6  # metres
    define_layers(doc)
    define_blocks(doc)
    for name in ("FRAME-DECK", "FRAME-PIER", "ANNOTATION"):
        doc.layers.add(name, color=8 if name == "ANNOTATION" else 7)
    msp = doc.modelspace()
    msp.add_line((0.0, 4.0), (28.0, 4.0), dxfattribs={"layer": "FRAME-DECK"})
    msp.add_line((14.0, 0.0), (14.0, 4.0), dxfattribs={"layer": "FRAME-PIER"})

    def put(name: str, at, layer: str, rotation: float = 0.0, **attribs):
        insert_symbol(msp, name, at, layer=layer, rotation=rotation, scale=SYMBOL, **attribs)

    put("PIN", (0.0, 4.0), "SUPPORTS")
    put("ROLLER", (28.0, 4.0), "SUPPORTS")
    put("FIXED", (14.0, 0.0), "SUPPORTS")
    for x in (7.0, 21.0):   # deck, parapets and surfacing; pedestrians and cycles
        put("UDL", (x, 4.0), "LOADS", W="4.5 kN/m", CASE="D")
        put("UDL", (x + 1.5, 4.0), "LOADS", W="5 kN/m", CASE="L")
    put("UDL", (14.0, 2.0), "LOADS", rotation=90, W="1.2 kN/m", DIR="X", CASE="W")
    msp.add_text("KESTREL LANE FOOTBRIDGE - ELEVATION ON CENTRELINE", height=0.4,
                 dxfattribs={"layer": "ANNOTATION"}).set_placement((0.0, -1.6))
    return doc


def main(out_dir: Path = HERE) -> list[Path]:
    out_dir.mkdir(parents=True, exist_ok=True)
    paths = []
    for rev, loft_y, hoist in (("A", 2.8, "6 kN"), ("B", 3.0, "9 kN")):
        p = out_dir / f"packing-shed-rev-{rev}.dxf"
        build(loft_y, hoist, rev).saveas(p)
        paths.append(p)
    (out_dir / "footbridge").mkdir(exist_ok=True)
    p = out_dir / "footbridge" / "kestrel-lane-footbridge.dxf"
    build_footbridge().saveas(p)
    paths.append(p)
    return paths


if __name__ == "__main__":
    for p in main(Path(sys.argv[1]) if len(sys.argv) > 1 else HERE):
        print(p)
