"""Generate multi-storey, multi-bay frame drawings for the benchmark.

A frame of ``bays`` x ``storeys`` is drawn the way a drafter would sketch
it under the drawing convention:

* one ``LWPOLYLINE`` per column line on ``FRAME-COLUMNS``, a vertex at
  every floor (each segment is a column member);
* one ``LINE`` per floor on ``FRAME-BEAMS`` running the full width; the
  analysis splits it at every column it meets (T-junctions), so each bay
  is a beam member;
* a ``FIXED`` support at the foot of every column;
* on every beam a dead and a live ``UDL`` (cases ``D`` and ``L``);
* a lateral ``FORCE`` (case ``W``, ``ANGLE=0``) at the left column on
  every floor;
* a ``dxf2frame.toml`` beside the drawing with column and beam sections
  and the built-in LRFD and ASD combinations.

Analysis members: ``storeys * (2 * bays + 1)``.  Units: the drawing is in
metres (``$INSUNITS`` = 6); loads carry their unit text (kN, kN/m).

Example
-------
>>> spec = spec_for_members(500)
>>> spec.members >= 450
True
"""
from __future__ import annotations

import math
import sys
from dataclasses import dataclass, replace
from pathlib import Path

import ezdxf

ROOT = Path(__file__).resolve().parent.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from dxf2frame.symbols import define_blocks, define_layers, insert_symbol  # noqa: E402

__all__ = ["FrameSpec", "spec_for_members", "build_drawing", "write_frame", "write_revisions", "SETTINGS_TOML"]

#: settings written beside every generated drawing (SI sections of a
#: generic steel frame; the numbers only need to be plausible)
SETTINGS_TOML = """\
# written by bench/generate.py
[units]
force = "kN"

[geometry]
snap = "5 mm"

[sections.default]
name = "column"
E = "200 GPa"
A = "1.1e4 mm**2"
I = "2.2e8 mm**4"

[sections."FRAME-BEAMS"]
name = "beam"
E = "200 GPa"
A = "7.6e3 mm**2"
I = "2.5e8 mm**4"

[combinations]
builtin = ["LRFD", "ASD"]
draw = "envelope:LRFD"

[deflection]
limit = 240
"""


@dataclass(frozen=True)
class FrameSpec:
    """A regular plane frame.

    bays, storeys : counts
    bay, storey : bay width and storey height [m]
    dead, live : beam UDL intensities [kN/m] (cases D and L)
    wind : lateral force per floor at the left column [kN] (case W)
    """

    bays: int
    storeys: int
    bay: float = 6.0
    storey: float = 3.5
    dead: float = 12.0
    live: float = 8.0
    wind: float = 15.0

    @property
    def members(self) -> int:
        """Analysis members: columns plus beams (each bay of each floor)."""
        return self.storeys * (2 * self.bays + 1)

    @property
    def label(self) -> str:
        return f"{self.bays}x{self.storeys}"


def spec_for_members(target: int, **kw) -> FrameSpec:
    """The near-square frame (bays ~ storeys) whose member count is closest
    to ``target``; ``kw`` overrides the other fields of :class:`FrameSpec`."""
    if target < 3:
        raise ValueError("a frame needs at least 3 members")
    best: FrameSpec | None = None
    b0 = max(1, int(math.sqrt(target / 2)))
    for bays in range(max(1, b0 - 3), b0 + 4):
        storeys = max(1, round(target / (2 * bays + 1)))
        spec = FrameSpec(bays, storeys, **kw)
        key = (abs(spec.members - target), abs(bays - storeys))
        if best is None or key < (abs(best.members - target), abs(best.bays - best.storeys)):
            best = spec
    assert best is not None
    return best


def build_drawing(spec: FrameSpec) -> ezdxf.document.Drawing:
    """The frame of ``spec`` as an ezdxf document (metres)."""
    doc = ezdxf.new("R2018", setup=False)
    doc.header["$INSUNITS"] = 6  # metres
    define_layers(doc)
    define_blocks(doc, ["FIXED", "UDL", "FORCE"])
    for name in ("FRAME-COLUMNS", "FRAME-BEAMS", "ANNOTATION"):
        doc.layers.add(name, color=7)
    msp = doc.modelspace()
    B, S, w, h = spec.bays, spec.storeys, spec.bay, spec.storey
    sym = 0.02 * max(B * w, S * h) ** 0.5  # symbol scale [m]

    for i in range(B + 1):
        x = i * w
        msp.add_lwpolyline([(x, k * h) for k in range(S + 1)], dxfattribs={"layer": "FRAME-COLUMNS"})
        insert_symbol(msp, "FIXED", (x, 0.0), layer="SUPPORTS", scale=sym)
    dead, live, wind = f"{spec.dead:g} kN/m", f"{spec.live:g} kN/m", f"{spec.wind:g} kN"
    for k in range(1, S + 1):
        y = k * h
        msp.add_line((0.0, y), (B * w, y), dxfattribs={"layer": "FRAME-BEAMS"})
        for i in range(B):
            x0 = i * w
            insert_symbol(msp, "UDL", (x0 + 0.35 * w, y), layer="LOADS", scale=sym, W=dead, CASE="D")
            insert_symbol(msp, "UDL", (x0 + 0.65 * w, y), layer="LOADS", scale=sym, W=live, CASE="L")
        insert_symbol(msp, "FORCE", (0.0, y), layer="LOADS", scale=sym, rotation=90.0, P=wind, ANGLE="0",
                      CASE="W")
    msp.add_text(f"BENCHMARK FRAME {spec.label} ({spec.members} MEMBERS)", height=0.5,
                 dxfattribs={"layer": "ANNOTATION"}).set_placement((0.0, -2.0))
    return doc


def write_frame(spec: FrameSpec, path: Path | str, *, settings: bool = True) -> Path:
    """Write the drawing of ``spec`` to ``path`` (and ``dxf2frame.toml``
    beside it unless ``settings`` is False); return the drawing path."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    build_drawing(spec).saveas(path)
    if settings:
        (path.parent / "dxf2frame.toml").write_text(SETTINGS_TOML)
    return path


def write_revisions(spec: FrameSpec, folder: Path | str, count: int) -> list[Path]:
    """``count`` revisions of one frame in ``folder`` (one settings file):
    revision k carries the live load ``spec.live * (1 + 0.05 k)``."""
    folder = Path(folder)
    out = []
    for k in range(count):
        rev = replace(spec, live=round(spec.live * (1.0 + 0.05 * k), 6))
        out.append(write_frame(rev, folder / f"frame-{spec.label}-rev-{k + 1:02d}.dxf", settings=(k == 0)))
    return out


if __name__ == "__main__":  # pragma: no cover - manual use
    import argparse

    ap = argparse.ArgumentParser(description="write one benchmark frame drawing")
    ap.add_argument("members", type=int, help="target number of analysis members")
    ap.add_argument("out", type=Path, help="output .dxf path")
    a = ap.parse_args()
    s = spec_for_members(a.members)
    print(write_frame(s, a.out), s.label, s.members)
