"""The look of the result layers, and the pen that draws on them.

The scheme is our own: one layer per result key (names remappable through
the settings' ``[output_layers]``, see :func:`result_layer_names`), each
with a true colour and the nearest ACI colour, a linetype
(:data:`LINETYPES`), a lineweight and a fill transparency
(:data:`RESULT_LAYER_STYLES`), and two text styles (:data:`TEXT_STYLES`).
:func:`prepare_layers` creates or restyles them in a drawing,
:func:`clear_result_layers` empties them.

:class:`Pen` adds the entities (polylines, fills, lines, solids, arcs,
circles, TEXT, a block of notes, arrows) to modelspace and counts them;
coordinates and sizes are in drawing units.  DXF R12 drawings get the same
content with R12 entities (POLYLINE, TEXT, ACI colours, no fills).
"""
from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Iterable, Mapping, Sequence

import numpy as np
from ezdxf import colors as ezcolors
from ezdxf.enums import TextEntityAlignment

from ..settings import DEFAULT_OUTPUT_LAYERS as _SETTINGS_OUTPUT_LAYERS, FURTHER_OUTPUT_LAYER_KEYS

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

__all__ = ["DEFAULT_OUTPUT_LAYERS", "LayerStyle", "RESULT_LAYER_STYLES", "LINETYPES", "TEXT_STYLES",
           "result_layer_names", "prepare_layers", "clear_result_layers"]


# -- the scheme ----------------------------------------------------------------

#: result layer key -> default layer name (the settings' defaults, less the
#: comparison layer, which the compare command draws, and the buckling,
#: moving-load and influence layers, which :mod:`dxf2frame.further` draws)
DEFAULT_OUTPUT_LAYERS: dict[str, str] = {k: v for k, v in _SETTINGS_OUTPUT_LAYERS.items()
                                         if k != "changes" and k not in FURTHER_OUTPUT_LAYER_KEYS}


@dataclass(frozen=True)
class LayerStyle:
    """How one result layer looks.

    rgb : true colour of the layer (entities are BYLAYER); the nearest ACI
        colour is stored as well for programs that ignore true colour
    linetype : linetype name (``CONTINUOUS`` or one of :data:`LINETYPES`)
    lineweight : in 1/100 mm
    fill_transparency : transparency of the diagram fills, 0 opaque .. 1 clear
    description : layer description written into the drawing
    """

    rgb: tuple[int, int, int]
    linetype: str
    lineweight: int
    fill_transparency: float
    description: str


#: Our own colour scheme: muted, print-friendly hues that stay apart from the
#: plain ACI primaries drafters tend to use for their linework, and that keep
#: distinct when printed in grey (different lightness per diagram type).
RESULT_LAYER_STYLES: dict[str, LayerStyle] = {
    # deep teal: axial force N
    "axial": LayerStyle((0, 118, 136), "CONTINUOUS", 25, 0.65, "dxf2frame: axial force N (tension +, toward local +y)"),
    # ochre: shear V
    "shear": LayerStyle((201, 133, 0), "CONTINUOUS", 25, 0.65, "dxf2frame: shear V (+ toward local +y)"),
    # plum: bending moment M
    "moment": LayerStyle((125, 58, 150), "CONTINUOUS", 25, 0.65, "dxf2frame: bending moment M (tension side)"),
    # brick red: reactions
    "reactions": LayerStyle((178, 42, 36), "CONTINUOUS", 35, 0.0, "dxf2frame: support reactions"),
    # sea green, dashed: exaggerated deflected shape
    "deflected": LayerStyle((38, 140, 84), "D2F-DASH", 25, 0.0, "dxf2frame: deflected shape (exaggerated)"),
    # slate: legend and notes
    "notes": LayerStyle((62, 72, 84), "CONTINUOUS", 18, 0.0, "dxf2frame: legend and notes"),
    # burnt orange, dash-dot: mechanism modes of an unstable frame
    "mechanism": LayerStyle((214, 96, 10), "D2F-DASHDOT", 35, 0.0, "dxf2frame: mechanism modes"),
    # dark slate blue: member tags (the report's member ids)
    "tags": LayerStyle((72, 84, 120), "CONTINUOUS", 18, 0.0, "dxf2frame: member tags (report ids)"),
    # indigo, dash-dot: buckled shape of the lowest mode (second order)
    "buckling": LayerStyle((72, 61, 160), "D2F-DASHDOT", 30, 0.0, "dxf2frame: buckled shape (lowest mode)"),
    # dark olive: vehicle axles at the critical position (moving loads)
    "moving": LayerStyle((107, 112, 20), "CONTINUOUS", 35, 0.0, "dxf2frame: moving load, critical position"),
    # steel blue, dashed: influence lines
    "influence": LayerStyle((40, 96, 160), "D2F-DASH", 25, 0.0, "dxf2frame: influence lines (per unit load)"),
}


#: linetype name -> (description, ezdxf pattern [total, dash, gap, ...]);
#: patterns are one drawing unit long, entities set ``ltscale`` to the
#: drawing's size so the dashes read at any drawing unit.
LINETYPES: dict[str, tuple[str, list[float]]] = {
    "D2F-DASH": ("dxf2frame dashes __ __ __", [1.0, 0.7, -0.3]),
    "D2F-DASHDOT": ("dxf2frame dash dot __ . __ .", [1.0, 0.6, -0.15, 0.0, -0.25]),
}


#: text style name -> font file
TEXT_STYLES: dict[str, str] = {
    "D2F-LABELS": "DejaVuSans.ttf",
    "D2F-NOTES": "DejaVuSans.ttf",
}


# -- small helpers -------------------------------------------------------------


def _text_safe(s: str) -> str:
    """TEXT content: one line, no %% control codes."""
    return s.replace("\n", " ").replace("%%", "% %")


def _mtext_safe(s: str) -> str:
    """MTEXT content of one paragraph: escape backslash and braces."""
    return s.replace("\\", "\\\\").replace("{", "\\{").replace("}", "\\}").replace("\n", " ")


def _nearest_aci(rgb: tuple[int, int, int]) -> int:
    best, best_d = 7, math.inf
    for aci in range(1, 256):
        r, g, b = ezcolors.aci2rgb(aci)
        d = (r - rgb[0]) ** 2 + (g - rgb[1]) ** 2 + (b - rgb[2]) ** 2
        if d < best_d:
            best, best_d = aci, d
    return best


# -- layers --------------------------------------------------------------------


def result_layer_names(layers: Mapping[str, str] | None = None) -> dict[str, str]:
    """Result layer key -> layer name: the defaults, overridden by ``layers``
    (the settings' ``[output_layers]``) for the keys drawn here."""
    names = dict(DEFAULT_OUTPUT_LAYERS)
    for key, value in (layers or {}).items():
        if key in names and value:
            names[key] = str(value)
    return names


def _is_legacy(doc: "Drawing") -> bool:
    return doc.dxfversion <= "AC1009"


def prepare_layers(doc: "Drawing", names: dict[str, str]) -> None:
    """Create (or restyle) the result layers, our linetypes and text styles."""
    legacy = _is_legacy(doc)
    for lt_name, (desc, pattern) in LINETYPES.items():
        if lt_name not in doc.linetypes:
            doc.linetypes.add(lt_name, pattern=pattern, description=desc)
    for style_name, font in TEXT_STYLES.items():
        if style_name not in doc.styles:
            doc.styles.add(style_name, font=font)
    for key, name in names.items():
        style = RESULT_LAYER_STYLES[key]
        layer = doc.layers.get(name) if name in doc.layers else doc.layers.add(name)
        layer.color = _nearest_aci(style.rgb)
        layer.dxf.linetype = style.linetype
        layer.on()
        layer.thaw()
        layer.unlock()
        if not legacy:
            layer.rgb = style.rgb
            layer.dxf.lineweight = style.lineweight
            layer.dxf.plot = 1
            try:
                layer.description = style.description
            except Exception:  # noqa: BLE001 - description needs an appid; cosmetic only
                pass


def clear_result_layers(doc: "Drawing", names: Iterable[str]) -> int:
    """Delete every entity on the given layers in all layouts; return the count."""
    wanted = {n.upper() for n in names}
    removed = 0
    for layout in doc.layouts:
        doomed = [e for e in layout if e.dxf.get("layer", "0").upper() in wanted]
        for e in doomed:
            layout.delete_entity(e)
        removed += len(doomed)
    return removed


# -- drawing primitives --------------------------------------------------------


class Pen:
    """Adds entities to modelspace, with R12 fallbacks (POLYLINE, TEXT, no fills)."""

    def __init__(self, doc: "Drawing", size: float) -> None:
        self.msp = doc.modelspace()
        self.legacy = _is_legacy(doc)
        self.ltscale = size / 60.0
        self.count = 0

    def polyline(self, pts: np.ndarray | Sequence, layer: str, *, closed: bool = False, dashed: bool = False) -> None:
        pts = np.asarray(pts, dtype=float)[:, :2]
        attribs: dict[str, Any] = {"layer": layer}
        if self.legacy:
            self.msp.add_polyline2d(pts.tolist(), close=closed, dxfattribs=attribs)
        else:
            if dashed:
                attribs["ltscale"] = self.ltscale
            pl = self.msp.add_lwpolyline([], format="xy", close=closed, dxfattribs=attribs)
            data = np.zeros((len(pts), 5))
            data[:, :2] = pts
            try:  # fast path: ezdxf keeps LWPOLYLINE vertices as an (n, 5) float array
                pl.lwpoints.values = data
                if len(pl) != len(pts):
                    raise TypeError
            except (AttributeError, TypeError):
                pl.set_points(pts.tolist(), format="xy")
        self.count += 1

    def fill(self, pts: np.ndarray, layer: str, transparency: float) -> None:
        if self.legacy:
            return
        hatch = self.msp.add_hatch(color=256, dxfattribs={"layer": layer})
        hatch.paths.add_polyline_path(np.asarray(pts, dtype=float)[:, :2].tolist(), is_closed=True)
        hatch.set_solid_fill(color=256)
        if transparency > 0:
            hatch.transparency = transparency
        self.count += 1

    def line(self, a, b, layer: str) -> None:
        self.msp.add_line((a[0], a[1]), (b[0], b[1]), dxfattribs={"layer": layer})
        self.count += 1

    def solid(self, pts, layer: str) -> None:
        self.msp.add_solid([(p[0], p[1]) for p in pts], dxfattribs={"layer": layer})
        self.count += 1

    def arc(self, center, radius: float, start_deg: float, end_deg: float, layer: str) -> None:
        self.msp.add_arc((center[0], center[1]), radius, start_deg, end_deg, dxfattribs={"layer": layer})
        self.count += 1

    def circle(self, center, radius: float, layer: str) -> None:
        self.msp.add_circle((center[0], center[1]), radius, dxfattribs={"layer": layer})
        self.count += 1

    def text(self, s: str, pos, height: float, layer: str, *, style: str = "D2F-LABELS",
             align: TextEntityAlignment = TextEntityAlignment.MIDDLE_CENTER) -> None:
        t = self.msp.add_text(_text_safe(s), height=height, dxfattribs={"layer": layer, "style": style})
        t.set_placement((pos[0], pos[1]), align=align)
        self.count += 1

    def notes(self, paragraphs: list[str], pos, height: float, width: float, layer: str) -> None:
        """A block of text, top-left at ``pos``: MTEXT, or TEXT lines in R12."""
        if self.legacy:  # TEXT has no wrapping: lines of about ``width`` (average glyph 0.55 x height)
            y = pos[1]
            chars = max(20, int(width / (0.55 * height)))
            for p in paragraphs:
                for line in textwrap.wrap(p, chars, break_on_hyphens=False) or [""]:
                    self.text(line, (pos[0], y), height, layer, style="D2F-NOTES",
                              align=TextEntityAlignment.TOP_LEFT)
                    y -= 1.7 * height
            return
        # a space before each paragraph break: ezdxf's MTEXT renderer drops a
        # break that directly follows a word it has just wrapped to a new line
        content = " \\P".join(_mtext_safe(p) for p in paragraphs)
        mt = self.msp.add_mtext(content, dxfattribs={"layer": layer, "style": "D2F-NOTES"})
        mt.dxf.char_height = height
        mt.dxf.width = width
        mt.set_location((pos[0], pos[1]), attachment_point=1)
        self.count += 1

    def arrow(self, tail, tip, head: float, layer: str) -> None:
        """A straight arrow: shaft and a filled head whose point is at ``tip``."""
        tail, tip = np.asarray(tail, float), np.asarray(tip, float)
        d = tip - tail
        n = float(np.hypot(*d))
        if n == 0:
            return
        u = d / n
        head = min(head, 0.6 * n)
        base = tip - u * head
        p = np.array([-u[1], u[0]]) * head * 0.35
        self.line(tail, base, layer)
        self.solid([tip, base + p, base - p], layer)
