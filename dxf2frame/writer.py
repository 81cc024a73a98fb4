"""Result layers in a copy of the drawing.

The source drawing is read afresh, so the copy keeps every original entity,
layer, block, attribute, header value and handle.  Results go on their own
layers (names remappable through the settings' ``[output_layers]``):

=============  =====================================================
key            content
=============  =====================================================
axial          N diagram along the members, positive toward local +y
shear          V diagram along the members, positive toward local +y
moment         M diagram along the members, positive (sagging) toward
               local -y: M is drawn on the tension side
reactions      arrows and values at the supports
deflected      exaggerated deflected shape (when sections are known)
notes          legend title and a notes block (units, signs, what is
               shown, determinacy, warnings, safety caution)
mechanism      mechanism modes of an unstable frame
=============  =====================================================

Anything already on these layers is deleted first, so running the tool on
its own output replaces the old results instead of stacking them.  The
reader ignores these layers, so reading the output again gives the same
model.

Scales: one per diagram type, a round number chosen so that the largest
ordinate is about 8-12 % of the larger side of the frame's extents, stated
in the legend as "moment: 1 drawing unit = X kN*m".  Text height is 1/60 of
that side.  The deflected shape is exaggerated so that the largest
displacement is about 4-5 % of it.

Which values are written (per element and diagram; what one would write
by hand):

* the value at each end.  For an envelope: the bound of larger magnitude
  with the key of its governing combination, plus the other bound only if
  it has the other sign and is at least 25 % of the larger;
* the interior extremes: the largest and the smallest value when they lie
  inside the element, not at an end (for an envelope: the largest positive
  of the max curve and the largest negative of the min curve);
* one value at mid-length instead of two end values when the value is the
  same all along (within 0.5 % of the diagram's largest value; e.g. the
  axial force of a column), and likewise for an envelope bound that is
  constant and governs both ends;
* moment only, single results only: each zero crossing (point of
  contraflexure, at most two per element) is marked by a short tick across
  the member and a "0" beside it.  Envelopes get no zero marks: their
  bounds' crossings belong to no single combination;
* nothing below 2 % of the diagram's largest |value| (reactions are always
  written);
* at a node, values of one diagram from different elements whose
  magnitudes agree within 0.5 % of the diagram's largest value are written
  once (at a rigid joint of two members without an external couple the
  end moments are equal); a constant element's one value counts at both
  its end nodes.

Envelope keys: a value's governing combination is written as a short key,
"M=-16.40 [C7]"; Ck is the k-th combination of the envelope.  Under each
layer's scale line the legend lists the keys that layer uses
("governing: C2 = 1.2D+1.6L, C7 = ..."), so each layer reads on its own;
the notes list every key.  "[all]" beside a reaction: every combination
gives the same value.

Placing (:class:`LabelPlacer`), layer by layer (each result layer is read
on its own, as the preview's panels show them; the diagrams of different
layers lie on top of each other anyway): labels go most important first
(the diagram's overall extreme, reactions, interior extremes, constant
values, end values, the other sign at an end, zero marks), larger values
first within a kind.  Each tries candidate boxes in turn: beyond the
diagram's tip, on the other side of the member (end values flush with the
element's end, on its inner side), then all around the point, and keeps
the first that overlaps no placed label of its layer, no member line, no
outline or zero tick of its own diagram (on elements long enough for
labels), no reaction arrow (reactions), and none of the drawing's own TEXT
and MTEXT (titles, grid marks; at most 1000).  Only obstacles within reach
of some label are indexed, so a big frame with few labels stays cheap.  A
label that does not sit right beside its point gets a leader line from the
point.  When nothing near is free:

* end values, the other sign at an end and zero marks are dropped
  (``DrawingSummary.dropped`` counts them);
* interior extremes and constant values try rings farther out (1.5, 3 and
  5 text heights, with a leader) and are dropped only if those are full
  too (a dense frame seen whole);
* the diagram's overall extreme and the reactions are always written, on
  top of other labels if need be (``DrawingSummary.forced``).

Elements shorter than three text heights get outlines only: no fill, no
labels, except the diagram's overall extreme.

Legend: per result layer a swatch, its scale line and its keys, on that
layer; a frame wider than tall gets these blocks in rows under the
drawing, a taller one a column to its right, so a picture of one layer
keeps close to the frame.  Title and notes (notes layer) go to the right.

Sampling: each element is sampled at its critical points (ends, load
breaks, zeros of V and M, from every result drawn) plus 17 even stations,
with both limits where a value jumps, so ends, extremes and zero crossings
are exact.  When the results offer batch sampling
(``members.critical_points()`` and ``members.sample(which, rows, x,
side)``) every element is sampled in a few vectorised calls; otherwise
through each ``MemberResult``.

Drawing: the sampled curves are thinned before they are written
(Douglas-Peucker, all elements at once): a point is left out only while
the drawn line stays within the chord tolerance of it, 0.04 text heights
(0.1 mm when labels plot at 2.5 mm, under half the 0.25 mm line weight)
and at most 1 % of the element's largest ordinate (deflected shape: of
its largest drawn displacement), so the shape stays true when zoomed in
on one element.  Always written: element ends, both limits of a jump, an
interior extreme that stands out from the ends, and for a single
result's moment the points at each change of sign (the outline crosses
the member at the zero tick).  Elements that continue each other in a
straight line (a floor beam split at every column, a column line split
at every floor) are drawn as one run: one closed outline per diagram
(baseline start, the curve along every element of the run, baseline end,
for an envelope the min curve back), stepping across the member where
the value jumps at a joint, as a continuous diagram is drawn by hand;
and one deflected-shape polyline.  Fills stay per element.

DXF R12 drawings get the same content with R12 entities (POLYLINE, TEXT,
ACI colours, no fills).
"""
from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Iterable, Sequence

import ezdxf
import numpy as np
import shapely
from ezdxf import colors as ezcolors
from ezdxf import recover
from ezdxf.enums import TextEntityAlignment

from . import CAUTION, __version__
from .atomic import atomic_path
from .errors import InputFileError, SettingsError
from .report import UnitFactors, unit_factors
from .settings import DEFAULT_OUTPUT_LAYERS as _SETTINGS_OUTPUT_LAYERS

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

    from .drawing_model import DrawingModel

__all__ = [
    "DEFAULT_OUTPUT_LAYERS",
    "LayerStyle",
    "RESULT_LAYER_STYLES",
    "LINETYPES",
    "TEXT_STYLES",
    "LabelPlacer",
    "Selection",
    "DrawingSummary",
    "result_layer_names",
    "select_results",
    "prepare_layers",
    "clear_result_layers",
    "annotate_results",
    "annotate_mechanism",
    "write_result_drawing",
    "write_mechanism_drawing",
]

# -- the scheme ------------------------------------------------------------------

#: result layer key -> default layer name (the settings' defaults, less the
#: comparison layer, which the compare command draws)
DEFAULT_OUTPUT_LAYERS: dict[str, str] = {k: v for k, v in _SETTINGS_OUTPUT_LAYERS.items() if k != "changes"}


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

_DIAGRAMS = ("axial", "shear", "moment")
_SYMBOL = {"axial": "N", "shear": "V", "moment": "M"}
#: side a positive value is drawn on, in units of local +y
_SIDE = {"axial": 1.0, "shear": 1.0, "moment": -1.0}
_SAMPLES = 17              # stations per element besides the critical points
_DEFL_SAMPLES = 9          # stations per element for the deflected shape (a cubic-like curve)
# Chord tolerance of the drawn curves (diagram outlines, deflected shape): a
# sampled point is left out only while the drawn polyline stays within this
# distance of it.  Text is sized for a plot where the label height reads as
# about 2.5 mm; 0.04 of it is then 0.1 mm on paper, less than half the
# result layers' 0.25 mm line weight, so the thinned line is not told apart
# from the exact one.  Zoomed in on a single element the absolute limit
# could be coarse next to a small diagram, so it is also never more than 1 %
# of that element's largest ordinate (deflected shape: of its largest drawn
# displacement): the shape stays true at any zoom.
_CHORD_TEXT = 0.04         # chord tolerance / text height
_CHORD_REL = 0.01          # chord tolerance / the element's largest ordinate
_ORDINATE_TARGET = 0.115   # largest ordinate / frame size, before rounding the scale
_DEFLECTION_TARGET = 0.05  # largest drawn displacement / frame size
_MECHANISM_TARGET = 0.10   # largest drawn mechanism movement / frame size
_TEXT_RATIO = 1.0 / 60.0   # text height / frame size
_ZERO_LABEL = 5e-4         # |M| below this fraction of the diagram max counts as zero when finding crossings
_SKIP_LABEL = 0.02         # values below this fraction of the diagram's largest |value| are not written
_SAME_AT_JOINT = 0.005     # end values at a node this close in magnitude (fraction of the max) are written once
_OTHER_SIGN = 0.25         # envelope: the other sign at an end is written when at least this fraction of the larger
_FLAT = 0.005              # an element whose values vary less than this fraction of the max gets one label
_MAX_ZEROS = 2             # moment zero crossings marked per element
_LEGEND_CHARS = 40         # legend lines wrap at about this many characters
_MAX_TEXT_OBSTACLES = 1000  # the drawing's own texts labels keep off (none when there are more)
_MAX_WARNINGS = 8          # listed in the notes block
_NICE = (1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0)


# -- small helpers -----------------------------------------------------------------


def _nice_up(v: float) -> float:
    """Smallest round number (1, 1.2, 1.5, 2, 2.5, 3, 4, 5, 6, 8 x 10^k) >= v."""
    e = math.floor(math.log10(v))
    m = v / 10.0**e
    for n in _NICE:
        if n >= m * (1 - 1e-12):
            return n * 10.0**e
    return 10.0 ** (e + 1)


def _nice_down(v: float) -> float:
    """Largest round number <= v."""
    e = math.floor(math.log10(v))
    m = v / 10.0**e
    for n in reversed(_NICE):
        if n <= m * (1 + 1e-12):
            return n * 10.0**e
    return 10.0**e


def _fmt(v: float) -> str:
    """Four significant figures, no exponent between 1e-3 and 1e6."""
    if not math.isfinite(v) or v == 0.0:
        return "0"
    a = abs(v)
    if a >= 1e6 or a < 1e-3:
        return f"{v:.3e}"
    digits = max(0, 3 - math.floor(math.log10(a)))
    s = f"{v:.{digits}f}"
    return "0" if float(s) == 0.0 else s


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


def _load_source(source: Path, settings: Any = None) -> "Drawing":
    """Read the drawing afresh, repairing a damaged file the way the reader
    does (:func:`dxf2frame.reader.open_document`), so whatever the analysis
    accepted can be annotated."""
    try:
        from .reader import open_document
    except ImportError:  # pragma: no cover - reader not installed: plain ezdxf
        open_document = None
    if open_document is not None:
        from .settings import Settings

        doc, _notes = open_document(source, settings if isinstance(settings, Settings) else None)
        return doc
    try:
        return ezdxf.readfile(source)
    except OSError as exc:
        raise InputFileError(f"{source}: cannot read ({exc})") from exc
    except Exception:  # noqa: BLE001 - ezdxf raises several kinds for damaged files
        try:
            doc, _auditor = recover.readfile(source)
        except Exception as exc:  # noqa: BLE001
            raise InputFileError(f"{source}: cannot read as DXF ({exc})") from exc
        return doc


def _check_target(source: Path, out: Path) -> None:
    try:
        same = Path(out).resolve() == Path(source).resolve()
    except OSError:
        same = False
    if same:
        raise SettingsError("the output drawing would overwrite the input; choose another output path")


# -- layers ---------------------------------------------------------------------------


def result_layer_names(settings: Any = None) -> dict[str, str]:
    """Result layer key -> layer name, from ``settings.output_layer(key)`` or the defaults."""
    names = dict(DEFAULT_OUTPUT_LAYERS)
    getter = getattr(settings, "output_layer", None) if settings is not None else None
    if getter is not None:
        for key in names:
            try:
                value = getter(key)
            except (KeyError, AttributeError, SettingsError):
                continue
            if value:
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


# -- drawing primitives ------------------------------------------------------------------


class _Pen:
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


# -- labels ------------------------------------------------------------------------------


Box = tuple[float, float, float, float]


class LabelPlacer:
    """Place axis-aligned text boxes so they avoid each other and given lines.

    Parameters
    ----------
    obstacles : shapely geometries (member lines, diagram outlines, arrow
        shafts, the drawing's own texts) that labels should not touch;
        indexed once in an STRtree
    cell : grid cell size for the placed boxes (about 4 text heights)

    Placed boxes live in a uniform grid (dict of cells), so each test looks
    at a handful of neighbours; obstacle tests are STRtree queries, one per
    batch of candidate boxes (:meth:`free_of_obstacles`).  ``placed`` counts the boxes recorded,
    ``forced`` those recorded although they overlap something, ``extent``
    is the bounding box (xmin, ymin, xmax, ymax) of every recorded box (None
    before the first).
    """

    def __init__(self, obstacles: Sequence, cell: float) -> None:
        geoms = [g for g in obstacles if g is not None and not g.is_empty]
        self._tree = shapely.STRtree(geoms) if geoms else None
        self._cell = cell if cell > 0 else 1.0
        self._grid: dict[tuple[int, int], list[Box]] = {}
        self.placed = 0
        self.forced = 0
        self.extent: Box | None = None

    def _cells(self, b: Box) -> Iterable[tuple[int, int]]:
        c = self._cell
        for i in range(math.floor(b[0] / c), math.floor(b[2] / c) + 1):
            for j in range(math.floor(b[1] / c), math.floor(b[3] / c) + 1):
                yield i, j

    def fits(self, b: Box) -> bool:
        """True when box ``b`` = (xmin, ymin, xmax, ymax) touches no placed box and no obstacle."""
        if not self.free_of_boxes(b):
            return False
        if self._tree is not None and len(self._tree.query(shapely.box(*b), predicate="intersects")):
            return False
        return True

    def free_of_boxes(self, b: Box) -> bool:
        """True when box ``b`` overlaps no placed box (obstacles not tested)."""
        for cell in self._cells(b):
            for o in self._grid.get(cell, ()):
                if b[0] < o[2] and o[0] < b[2] and b[1] < o[3] and o[1] < b[3]:
                    return False
        return True

    def free_of_obstacles(self, centres: np.ndarray, half_w: float, half_h: float) -> np.ndarray:
        """Mask of the boxes centred at ``centres`` (k, 2) that touch no
        obstacle, in one STRtree query (placed boxes not tested)."""
        c = np.asarray(centres, dtype=float).reshape(-1, 2)
        ok = np.ones(len(c), dtype=bool)
        if self._tree is not None and len(c):
            boxes = shapely.box(c[:, 0] - half_w, c[:, 1] - half_h, c[:, 0] + half_w, c[:, 1] + half_h)
            ok[self._tree.query(boxes, predicate="intersects")[0]] = False
        return ok

    def take(self, b: Box) -> None:
        """Record box ``b`` as a placed label (the caller checked it is free)."""
        self.add(b)
        self.placed += 1

    def add(self, b: Box) -> None:
        """Record box ``b`` as taken (whether or not it fits)."""
        for cell in self._cells(b):
            self._grid.setdefault(cell, []).append(b)
        e = self.extent
        self.extent = b if e is None else (min(e[0], b[0]), min(e[1], b[1]), max(e[2], b[2]), max(e[3], b[3]))

    def try_place(self, cx: float, cy: float, half_w: float, half_h: float) -> bool:
        """Record the box centred at (cx, cy) when it is free; True if it was."""
        b = (cx - half_w, cy - half_h, cx + half_w, cy + half_h)
        if not self.fits(b):
            return False
        self.take(b)
        return True

    def place(self, candidates: Sequence[tuple[float, float]], half_w: float, half_h: float) -> tuple[float, float, bool]:
        """Centre of the first free candidate box (or the first candidate, forced).

        Returns ``(x, y, fitted)``; the chosen box is recorded either way.
        """
        for cx, cy in candidates:
            if self.try_place(cx, cy, half_w, half_h):
                return cx, cy, True
        cx, cy = candidates[0]
        self.add((cx - half_w, cy - half_h, cx + half_w, cy + half_h))
        self.placed += 1
        self.forced += 1
        return cx, cy, False


@dataclass
class _Spot:
    """One way to write a label: its text and the point it belongs to.

    anchor : the point the value belongs to (curve tip, arrow middle)
    base : the matching point on the member (or the node)
    out : unit vector from the member toward the anchor's side
    along : unit vector along the member
    inward : end values: +1 or -1, the direction along ``along`` into the
        element (the label sits flush with the element's end); 0 otherwise
    key : index of the governing result of an envelope (None: no key written)
    """

    text: str
    anchor: np.ndarray
    base: np.ndarray
    out: np.ndarray
    along: np.ndarray
    inward: float = 0.0
    key: int | None = None


#: placing order: the diagram's overall extreme gets 0 (set later)
_PRIORITY = {"reaction": 0.5, "extreme": 1.0, "flat": 1.5, "end": 2.0, "other": 2.5, "zero": 3.0}
#: kinds that are written even when crowded (farther out with a leader line, else overlapping)
_MUST = {"reaction", "extreme", "flat"}


@dataclass
class _Label:
    """A value to write.

    kind : "extreme" (interior), "end", "other" (the other sign at an
        envelope's end), "flat" (one value for a whole element), "zero"
        (a zero crossing of the moment), "reaction"
    value : the value [SI]; ordering and joint merging use its magnitude
    spots : where it may be written; several when equal values at a joint
        were merged (written once, beside whichever member has room)
    must : when crowded, tried farther out (with a leader line) before it is dropped
    force : written even where it overlaps (the diagram's overall extreme, reactions)
    nodes : the node an end value belongs to; both end nodes for a flat
        element's one value; none for the others
    element : the element it belongs to (-1: none)
    """

    priority: float
    kind: str
    value: float
    layer: str
    spots: list[_Spot]
    must: bool = False
    force: bool = False
    nodes: tuple[int, ...] = ()
    element: int = -1
    partner: "_Label | None" = None      # "other": the larger bound at the same end
    merged_into: "_Label | None" = None  # set when merged into another label at a joint


# -- which results to draw --------------------------------------------------------------------


@dataclass
class Selection:
    """The results a drawing shows.

    label : words for the notes ("combination 1.2D+1.6L", "envelope of 6 LRFD
        combinations")
    results : the CaseResult objects (one, or the envelope's members)
    envelope : True when max/min curves over ``results`` are drawn
    """

    label: str
    results: list
    envelope: bool


def _squash(name: str) -> str:
    return "".join(name.split()).lower()


def select_results(results: Sequence, show: str | None) -> Selection:
    """Pick what to draw.

    ``show`` is a result name (spaces and case ignored), ``"envelope"`` /
    ``"envelope:all"`` (every combination), or ``"envelope:<family>"``
    (combinations whose ``family`` is that name, e.g. LRFD or ASD; without
    a ``family`` attribute, names starting with it).  ``None`` means
    ``"envelope:LRFD"``.  An envelope with no matching combination falls
    back to all combinations, then to all results; an envelope of a single
    result is drawn as that result.

    Raises :class:`SettingsError` for an unknown result name.
    """
    results = list(results)
    if not results:
        raise SettingsError("there are no results to draw")
    show = (show or "envelope:LRFD").strip()
    if show.lower().startswith("envelope"):
        _, _, fam = show.partition(":")
        fam = fam.strip() or "all"
        combos = [r for r in results if r.kind == "combination"]
        chosen, what = [], ""
        if fam.lower() != "all":
            chosen = [r for r in combos if str(getattr(r, "family", "") or "").lower() == fam.lower()]
            if not chosen and not any(getattr(r, "family", None) for r in combos):
                chosen = [r for r in combos if r.name.lower().startswith(fam.lower())]
            what = f"{fam} combinations"
        if not chosen:
            chosen, what = combos, "combinations"
            if fam.lower() != "all" and combos:
                what = f"combinations (no {fam} combination found)"
        if not chosen:
            chosen, what = results, "load cases (no combinations defined)"
        if len(chosen) == 1:
            r = chosen[0]
            return Selection(f"{'combination' if r.kind == 'combination' else 'load case'} {r.name}", chosen, False)
        return Selection(f"envelope of {len(chosen)} {what}: " + ", ".join(r.name for r in chosen), chosen, True)
    want = _squash(show)
    for r in results:
        if _squash(r.name) == want:
            return Selection(f"{'combination' if r.kind == 'combination' else 'load case'} {r.name}", [r], False)
    raise SettingsError(
        f"no load case or combination named {show!r} to draw; available: "
        + ", ".join(r.name for r in results) + ", envelope:LRFD, envelope:ASD, envelope:all",
        key="combinations.draw",
    )


# -- sampling ---------------------------------------------------------------------------------


def _call(mr, name: str, xs: np.ndarray, left: bool = False) -> np.ndarray:
    f = getattr(mr, name)
    if left:
        try:
            v = f(xs, side="left")
        except TypeError:
            v = f(xs)
    else:
        v = f(xs)
    return np.broadcast_to(np.asarray(v, dtype=float), xs.shape)


_WHICH = {"axial": "N", "shear": "V", "moment": "M"}


class _Bounds:
    """Per station, the largest and smallest value over results added one
    at a time, and which result gave each (ties: the earlier result), so an
    envelope never holds all its results' samples at once."""

    def __init__(self, first: np.ndarray) -> None:
        self.hi, self.lo = first.astype(float), first.astype(float)
        self.hi_at = np.zeros(len(first), np.int32)
        self.lo_at = np.zeros(len(first), np.int32)

    def add(self, k: int, v: np.ndarray) -> None:
        up, dn = v > self.hi, v < self.lo
        self.hi[up], self.hi_at[up] = v[up], k
        self.lo[dn], self.lo_at[dn] = v[dn], k

    @classmethod
    def of(cls, rows: Sequence[np.ndarray]) -> "_Bounds":
        b = cls(np.asarray(rows[0], dtype=float))
        for k, v in enumerate(rows[1:], start=1):
            b.add(k, np.asarray(v, dtype=float))
        return b


@dataclass
class _Stations:
    """Sample stations of every element, flat: element-major, x ascending.

    eid, x [m] : element index (``frame.members`` order) and position
    crit : an interior critical point (load break, zero of V or M): a jump
        may sit there and the point is always drawn
    first, last : the element's end stations
    values : diagram key -> (right, left), the :class:`_Bounds` over the
        results [SI] of the values just right and just left of each station
    """

    eid: np.ndarray
    x: np.ndarray
    crit: np.ndarray
    first: np.ndarray
    last: np.ndarray
    values: dict[str, tuple[_Bounds, _Bounds]]

    @property
    def starts(self) -> np.ndarray:
        return np.flatnonzero(self.first)


def _merge_stations(eid: np.ndarray, x: np.ndarray, isc: np.ndarray, lengths: np.ndarray):
    """Sort candidate stations by element and x, merge those closer than
    1e-9 of the element length (keeping the critical flag), pin the ends."""
    order = np.lexsort((~isc, x, eid))
    eid, x, isc = eid[order], x[order], isc[order]
    new = np.ones(len(x), bool)
    new[1:] = (eid[1:] != eid[:-1]) | (x[1:] - x[:-1] > 1e-9 * lengths[eid[1:]])
    starts = np.flatnonzero(new)
    crit = np.maximum.reduceat(isc, starts)
    eid, x = eid[starts], x[starts].copy()
    first = np.ones(len(eid), bool)
    first[1:] = eid[1:] != eid[:-1]
    last = np.ones(len(eid), bool)
    last[:-1] = eid[1:] != eid[:-1]
    x[first], x[last] = 0.0, lengths[eid[last]]
    return eid, x, crit & ~first & ~last, first, last


def _sample_member_by_member(results: Sequence, frame, lengths: np.ndarray) -> _Stations:
    """Sample through each result's per-member API (``MemberResult`` calls)."""
    n_el = len(frame.members)
    eids, xs, iscs = [], [], []
    lin = np.linspace(0.0, 1.0, _SAMPLES)
    for i, m in enumerate(frame.members):
        L = float(lengths[i])
        for r in results:
            try:
                cp = np.asarray(r.members[m.id].critical_points(), dtype=float).ravel()
            except Exception:  # noqa: BLE001 - a result without critical points still draws
                cp = np.zeros(0)
            eids.append(np.full(len(cp), i))
            xs.append(np.clip(cp, 0.0, L))
            iscs.append(np.ones(len(cp), bool))
    eids.append(np.repeat(np.arange(n_el), _SAMPLES))
    xs.append(np.outer(lengths, lin).ravel())
    iscs.append(np.zeros(n_el * _SAMPLES, bool))
    eid, x, crit, first, last = _merge_stations(np.concatenate(eids).astype(int), np.concatenate(xs),
                                                np.concatenate(iscs), lengths)
    lmask = crit | last
    bounds = np.append(np.flatnonzero(first), len(x))
    values = {}
    for key in _DIAGRAMS:
        right = np.empty((len(results), len(x)))
        left = np.empty_like(right)
        for i, m in enumerate(frame.members):
            sl = slice(bounds[i], bounds[i + 1])
            xi, li = x[sl], lmask[sl]
            for k, r in enumerate(results):
                mr = r.members[m.id]
                right[k, sl] = _call(mr, key, xi)
                lv = right[k, sl].copy()
                if li.any():
                    lv[li] = _call(mr, key, xi[li], left=True)
                left[k, sl] = lv
        values[key] = (_Bounds.of(right), _Bounds.of(left))
    return _Stations(eid, x, crit, first, last, values)


def _has_batch(results: Sequence) -> bool:
    return all(callable(getattr(r.members, "sample", None)) and callable(getattr(r.members, "critical_points", None))
               for r in results)


def _sample_batch(results: Sequence, frame, lengths: np.ndarray) -> _Stations:
    """Sample every element of every result at once through a batch API of
    the solver's member results (used when the results offer it):

    * ``members.critical_points() -> (rows, x)``: the critical points of all
      members (rows in the mapping's iteration order);
    * ``members.sample(which, rows, x, side="right")``: N, V or M (which =
      "N", "V", "M") at local x [m] of the given rows.
    """
    n_el = len(frame.members)
    eids, xs, iscs, layouts = [], [], [], []
    for r in results:
        pos = {mid: j for j, mid in enumerate(r.members)}
        to_layout = np.array([pos[m.id] for m in frame.members], dtype=int)
        layouts.append(to_layout)
        inv = np.full(len(pos), -1, dtype=int)
        inv[to_layout] = np.arange(n_el)
        rows, x = r.members.critical_points()
        release = getattr(r.members, "release", None)
        if release is not None:
            release()
        rows = inv[np.asarray(rows, dtype=int)]
        ok = rows >= 0
        rows, x = rows[ok], np.asarray(x, dtype=float)[ok]
        eids.append(rows)
        xs.append(np.clip(x, 0.0, lengths[rows]))
        iscs.append(np.ones(len(rows), bool))
    lin = np.linspace(0.0, 1.0, _SAMPLES)
    eids.append(np.repeat(np.arange(n_el), _SAMPLES))
    xs.append(np.outer(lengths, lin).ravel())
    iscs.append(np.zeros(n_el * _SAMPLES, bool))
    eid, x, crit, first, last = _merge_stations(np.concatenate(eids), np.concatenate(xs),
                                                np.concatenate(iscs), lengths)
    lmask = crit | last
    which = [_WHICH[key] for key in _DIAGRAMS]
    values: dict[str, tuple[_Bounds, _Bounds]] = {}
    for k, (r, lay) in enumerate(zip(results, layouts)):
        many = getattr(r.members, "sample_many", None)
        if many is not None:
            right = many(which, lay[eid], x)
            at_left = many(which, lay[eid[lmask]], x[lmask], side="left")
        else:
            right = {w: r.members.sample(w, lay[eid], x) for w in which}
            at_left = {w: r.members.sample(w, lay[eid[lmask]], x[lmask], side="left") for w in which}
        for key, w in zip(_DIAGRAMS, which):
            rv = np.asarray(right[w], dtype=float)
            lv = rv.copy()
            lv[lmask] = at_left[w]
            if k == 0:
                values[key] = (_Bounds(rv), _Bounds(lv))
            else:
                values[key][0].add(k, rv)
                values[key][1].add(k, lv)
        del right, at_left
        release = getattr(r.members, "release", None)
        if release is not None:
            release()                 # one result's pieces at a time on large frames
    return _Stations(eid, x, crit, first, last, values)


def _segment_max(v: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Largest |v| of each element's stretch of a flat array."""
    return np.maximum.reduceat(np.abs(v), starts) if len(v) else np.zeros(0)


@dataclass
class _FlatCurve:
    """One diagram curve of every element, flat: element-major polyline
    points with both limits where the value jumps.

    eid, x [m], y [SI] : element, position and value of each point
    who : index of the result giving the value (envelopes)
    fixed : points that are always drawn (ends, both limits of each jump)
    bounds : bounds[i]:bounds[i+1] are element i's points
    role : "single", "max" or "min"
    """

    eid: np.ndarray
    x: np.ndarray
    y: np.ndarray
    who: np.ndarray
    fixed: np.ndarray
    bounds: np.ndarray
    role: str

    def element(self, i: int) -> "_Curve":
        sl = slice(self.bounds[i], self.bounds[i + 1])
        return _Curve(self.x[sl], self.y[sl], self.who[sl], self.role, self.fixed[sl])


@dataclass
class _Curve:
    """The curve of one diagram along one element (a view of a _FlatCurve)."""

    x: np.ndarray
    y: np.ndarray
    who: np.ndarray
    role: str
    fixed: np.ndarray


def _flat_curve(st: _Stations, right: np.ndarray, left: np.ndarray, wr: np.ndarray, wl: np.ndarray,
                role: str, n_el: int) -> _FlatCurve:
    """Polyline points through the stations, doubled where the value jumps."""
    tol = 1e-9 * _segment_max(right, st.starts)[st.eid] + 1e-300
    jump = st.crit & (np.abs(left - right) > tol)
    first, fw = right.copy(), wr.copy()
    first[st.last], fw[st.last] = left[st.last], wl[st.last]
    first[jump], fw[jump] = left[jump], wl[jump]
    counts = 1 + jump.astype(int)
    at = np.cumsum(counts) - counts
    total = int(counts.sum())
    y, who = np.empty(total), np.empty(total, int)
    y[at], who[at] = first, fw
    y[at[jump] + 1], who[at[jump] + 1] = right[jump], wr[jump]
    eid = np.repeat(st.eid, counts)
    fixed = np.repeat(jump | st.first | st.last, counts)
    bounds = np.searchsorted(eid, np.arange(n_el + 1))
    return _FlatCurve(eid, np.repeat(st.x, counts), y, who, fixed, bounds, role)


def _curves(st: _Stations, key: str, envelope: bool, n_el: int) -> list[_FlatCurve]:
    """The curves of one diagram; the stations' values of ``key`` are used
    up (dropped from ``st``) to keep memory down on large frames."""
    right, left = st.values.pop(key)
    if not envelope:
        z = np.zeros(len(right.hi), int)
        return [_flat_curve(st, right.hi, left.hi, z, z, "single", n_el)]
    return [
        _flat_curve(st, right.hi, left.hi, right.hi_at, left.hi_at, "max", n_el),
        _flat_curve(st, right.lo, left.lo, right.lo_at, left.lo_at, "min", n_el),
    ]


def _thin(pts: np.ndarray, anchor: np.ndarray, tol: np.ndarray) -> np.ndarray:
    """Mask of the points of many polylines (flat, (k, 2)) to draw so that
    each drawn polyline stays within ``tol`` (per point) of all its points.

    Douglas-Peucker, all polylines at once: every pass adds, on each stretch
    between two kept points, the point farthest from the chord (the segment
    between them, so a point beyond its ends counts too) when it lies
    farther than its tolerance.  ``anchor``: points kept whatever their
    distance; the first and last point of each polyline must be among them
    (so a stretch never spans two polylines).  A stretch with no point
    beyond its tolerance is done: its points leave the next passes.
    """
    keep = np.asarray(anchor, dtype=bool).copy()
    kept = np.flatnonzero(keep)
    free = np.flatnonzero(~keep)
    while len(free):
        k = np.searchsorted(kept, free)
        a, b = pts[kept[k - 1]], pts[kept[k]]
        d, q = b - a, pts[free] - a
        dd = d[:, 0] ** 2 + d[:, 1] ** 2
        f = np.clip((q[:, 0] * d[:, 0] + q[:, 1] * d[:, 1]) / np.where(dd > 0, dd, 1.0), 0.0, 1.0)
        dev = np.hypot(q[:, 0] - f * d[:, 0], q[:, 1] - f * d[:, 1])      # distance to the chord segment
        dev[dev <= tol[free]] = -1.0
        runs = np.flatnonzero(np.r_[True, k[1:] != k[:-1]])               # free points of one stretch
        worst = np.maximum.reduceat(dev, runs)
        busy = worst > 0
        if not busy.any():
            break
        worst = np.repeat(np.where(busy, worst, np.inf), np.diff(np.r_[runs, len(k)]))
        new = dev >= worst
        keep[free[new]] = True
        kept = np.flatnonzero(keep)
        free = free[np.repeat(busy, np.diff(np.r_[runs, len(k)])) & ~new]
    return keep


def _chord_tolerance(h: float, scale: np.ndarray, size: float) -> np.ndarray:
    """Per element: the chord tolerance [drawing units] of a curve whose
    largest ordinate on that element is ``scale`` (see ``_CHORD_TEXT``)."""
    return np.maximum(np.minimum(_CHORD_TEXT * h, _CHORD_REL * np.asarray(scale, dtype=float)), 1e-9 * size)


def _first_per_element(idx: np.ndarray, eid: np.ndarray) -> np.ndarray:
    """The first of the (sorted) point indices ``idx`` of each element."""
    if not len(idx):
        return idx
    e = eid[idx]
    return idx[np.r_[True, e[1:] != e[:-1]]]


def _drawn(c: _FlatCurve, along: np.ndarray, o: np.ndarray, tol: np.ndarray, zero: float | None = None) -> np.ndarray:
    """Mask of the curve points worth drawing.

    along, o : each point's position along its element and ordinate
        [drawing units] (the outline in the element's own axes)
    tol : per element, the chord tolerance [drawing units]: the drawn
        curve keeps within it of every sampled point (:func:`_thin`)
    zero : |value| [SI] below which a value counts as zero (a single
        result's moment, which gets zero ticks; None: not used)

    Always drawn: the element's ends, both limits of each jump, the
    element's largest and smallest ordinate where it stands out from both
    ends by more than the tolerance (the interior extremes that get
    labels), and with ``zero`` the points at each change of sign (the
    near-zero points between, else the two on either side), so the drawn
    curve crosses the member exactly where the zero tick is.
    """
    n = len(o)
    anchor = c.fixed.copy()
    if not n:
        return anchor
    starts, lasts = c.bounds[:-1], c.bounds[1:] - 1
    ok = lasts >= starts
    starts, lasts = starts[ok], lasts[ok]
    elems = np.flatnonzero(ok)
    hi = np.full(len(c.bounds) - 1, -np.inf)
    lo = np.full(len(c.bounds) - 1, np.inf)
    hi[elems] = np.maximum.reduceat(o, starts)
    lo[elems] = np.minimum.reduceat(o, starts)
    end_hi = np.full_like(hi, np.inf)
    end_lo = np.full_like(lo, -np.inf)
    end_hi[elems] = np.maximum(o[starts], o[lasts])
    end_lo[elems] = np.minimum(o[starts], o[lasts])
    top = _first_per_element(np.flatnonzero(o == hi[c.eid]), c.eid)
    anchor[top[hi[c.eid[top]] - end_hi[c.eid[top]] > tol[c.eid[top]]]] = True
    bot = _first_per_element(np.flatnonzero(o == lo[c.eid]), c.eid)
    anchor[bot[end_lo[c.eid[bot]] - lo[c.eid[bot]] > tol[c.eid[bot]]]] = True
    if zero is not None:
        nz = np.flatnonzero(np.abs(c.y) > zero)
        if len(nz) > 1:
            a, b = nz[:-1], nz[1:]
            cross = (c.eid[a] == c.eid[b]) & (np.sign(c.y[a]) != np.sign(c.y[b]))
            a, b = a[cross], b[cross]
            gap = b > a + 1                                # zero at the points between: those; else both sides
            a, b = np.where(gap, a + 1, a), np.where(gap, b - 1, b)
            mark = np.zeros(n + 1, dtype=int)
            np.add.at(mark, a, 1)
            np.add.at(mark, b + 1, -1)
            anchor |= np.cumsum(mark)[:n] > 0
    return _thin(np.column_stack([along, o]), anchor, tol[c.eid])


def _element_labels(cs: list[tuple["_Curve", np.ndarray, np.ndarray, np.ndarray]], sym: str, t: np.ndarray,
                    nrm: np.ndarray, L: float, nodes: tuple[int, int], element: int, gmax: float,
                    factor: float, keyed: bool) -> list[_Label]:
    """Label requests of one element and diagram (rules in the module docstring).

    cs : per curve of the element (one "single" curve, or the "max" and
        "min" curves of an envelope): (curve, ordinates [drawing units],
        curve points, base points on the member)
    t, nrm : unit local x and y of the element; L : its length [m]
    nodes : its start and end node; gmax : the diagram's largest |value| [SI]
    factor : SI -> report units; keyed : append the governing result's key
    """
    skip = _SKIP_LABEL * gmax
    tol = _SAME_AT_JOINT * gmax
    flat = [float(np.ptp(c.y)) <= _FLAT * gmax for c, *_r in cs]
    mid = [int(np.argmin(np.abs(c.x - L / 2))) for c, *_r in cs]
    out: list[_Label] = []

    def add(kind: str, ci: int, j: int, inward: float = 0.0, at: tuple[int, ...] = ()) -> _Label | None:
        c, o, pts, base = cs[ci]
        v = float(c.y[j])
        if not abs(v) >= skip or v == 0.0:
            return None
        text = f"{sym}={_fmt(v * factor)}"
        key = None
        if keyed:
            key = int(c.who[j])
            text += f" [C{key + 1}]"
        u = nrm if o[j] >= 0 else -nrm
        spot = _Spot(text, pts[j], base[j], u, t, inward, key)
        out.append(_Label(_PRIORITY[kind], kind, v, "", [spot], must=kind in _MUST, nodes=at, element=element))
        return out[-1]

    def picks(js: list[int]) -> list[tuple[str, int]]:
        """(kind, curve) written at one end (or at mid-length): the value, or
        for an envelope the bound of larger magnitude, plus the other bound
        when it has the other sign and is not much smaller."""
        if len(cs) == 1:
            return [("end", 0)]
        vmax, vmin = float(cs[0][0].y[js[0]]), float(cs[1][0].y[js[1]])
        big, other = (0, 1) if abs(vmax) >= abs(vmin) else (1, 0)
        vb, vo = (vmax, vmin) if big == 0 else (vmin, vmax)
        got = [("end", big)]
        if vo * vb < 0 and abs(vo) >= _OTHER_SIGN * abs(vb):
            got.append(("other", other))
        return got

    def write(group: list[tuple[str, int]], where: int, at_mid: set[tuple[str, int]]) -> None:
        """One end's picks (``where`` 0: start, 1: end); those in ``at_mid``
        go to mid-length instead, once.  The other bound is tied to the
        larger one (it is not written without it)."""
        big = None
        for kind, ci in group:
            if (kind, ci) in at_mid:
                lb = add("flat" if kind == "end" else kind, ci, mid[ci], 0.0, nodes)
            else:
                j = 0 if where == 0 else len(cs[ci][0].y) - 1
                lb = add(kind, ci, j, 1.0 if where == 0 else -1.0, nodes[where:where + 1])
            if kind == "other" and lb is not None:
                lb.partner = big
            elif kind == "end":
                big = lb

    if all(flat):                                      # one value for the whole element
        write(picks(mid), 0, set(picks(mid)))
        return out
    at_start, at_end = picks([0] * len(cs)), picks([len(c.y) - 1 for c, *_r in cs])
    # a bound that is constant along the element and written at both ends: once, at mid-length
    once = {pk for pk in at_start if pk in at_end and flat[pk[1]]}
    write(at_start, 0, once)
    write([pk for pk in at_end if pk not in once], 1, set())
    for ci, (c, *_r) in enumerate(cs):
        inner = np.flatnonzero((c.x > 1e-9 * L) & (c.x < L * (1 - 1e-9)))
        if not len(inner):
            continue
        hi, lo = max(c.y[0], c.y[-1]), min(c.y[0], c.y[-1])
        if c.role in ("single", "max"):
            j = int(inner[np.argmax(c.y[inner])])
            if c.y[j] > hi + tol and (c.role == "single" or c.y[j] > 0):     # a true interior maximum
                add("extreme", ci, j)
        if c.role in ("single", "min"):
            j = int(inner[np.argmin(c.y[inner])])
            if c.y[j] < lo - tol and (c.role == "single" or c.y[j] < 0):     # a true interior minimum
                add("extreme", ci, j)
    return out


def _merge_at_joints(labels: list[_Label], tol: float) -> list[_Label]:
    """Values at one node whose magnitudes agree within ``tol`` [SI] and that
    come from different elements become one label with several spots
    (written once).  A flat element's one value counts at both its end nodes
    (but two flat values are not merged: they may be far apart).  Order is
    kept; linear in the number of labels."""
    out: list[_Label] = []
    groups: dict[int, list[tuple[_Label, set[int]]]] = {}
    for lb in labels:
        home = None
        for node in lb.nodes:
            for rep, elements in groups.get(node, ()):
                if (lb.element not in elements and abs(abs(lb.value) - abs(rep.value)) <= tol
                        and not (lb.kind == "flat" and rep.kind == "flat")):
                    home = (rep, elements)
                    break
            if home is not None:
                break
        if home is None:
            entry = (lb, {lb.element})
            for node in lb.nodes:
                groups.setdefault(node, []).append(entry)
            out.append(lb)
            continue
        rep, elements = home
        lb.merged_into = rep
        rep.spots += lb.spots
        rep.priority = min(rep.priority, lb.priority)
        rep.must = rep.must or lb.must
        rep.force = rep.force or lb.force
        elements.add(lb.element)
    return out


def _zero_crossings(c: _Curve, tol: float) -> list[float]:
    """Positions [m] where the curve changes sign (not at a jump)."""
    out: list[float] = []
    nz = np.flatnonzero(np.abs(c.y) > tol)
    for a, b in zip(nz[:-1], nz[1:]):
        if np.sign(c.y[a]) == np.sign(c.y[b]):
            continue
        if b == a + 1:
            if c.x[b] - c.x[a] <= 1e-12:
                continue  # a jump through zero, not a crossing
            x0 = c.x[a] + (c.x[b] - c.x[a]) * c.y[a] / (c.y[a] - c.y[b])
        else:
            zs = c.x[a + 1:b]
            x0 = float(zs.mean())
        out.append(float(x0))
    return out


# -- summary -----------------------------------------------------------------------------------


@dataclass
class DrawingSummary:
    """What was drawn (for tests and logs).

    scales : diagram key -> report units per drawing unit (None: all zero)
    deflection_factor : exaggeration of the deflected shape (None: not drawn)
    text_height : label height [drawing units]
    labels, forced : labels written, and how many of them overlap something
        (a diagram's overall extreme or a reaction with no free spot)
    dropped : values left out for want of room (see the module docstring)
    entities : entities added
    shown : the notes' description of what is drawn
    """

    layers: dict[str, str]
    scales: dict[str, float | None] = field(default_factory=dict)
    deflection_factor: float | None = None
    deflection_result: str | None = None
    text_height: float = 0.0
    labels: int = 0
    forced: int = 0
    dropped: int = 0
    entities: int = 0
    shown: str = ""


# -- geometry of the frame -------------------------------------------------------------------


@dataclass
class _FrameGeom:
    """Element geometry in drawing units, in ``frame.members`` order."""

    start: np.ndarray     # (m, 2)
    end: np.ndarray       # (m, 2)
    t: np.ndarray         # (m, 2) unit local x
    n: np.ndarray         # (m, 2) unit local y
    length_m: np.ndarray  # (m,) metres
    bounds: tuple[float, float, float, float]
    size: float


def _frame_geom(model: "DrawingModel") -> _FrameGeom:
    frame = model.frame
    us = model.unit_scale
    xy = np.array([(n.x, n.y) for n in frame.nodes], dtype=float).reshape(-1, 2) / us
    si = np.array([m.start for m in frame.members], dtype=int)
    ei = np.array([m.end for m in frame.members], dtype=int)
    a, b = xy[si], xy[ei]
    d = b - a
    ld = np.hypot(d[:, 0], d[:, 1])
    t = d / np.where(ld > 0, ld, 1.0)[:, None]
    n = np.column_stack([-t[:, 1], t[:, 0]])
    pts = xy if len(xy) else np.zeros((1, 2))
    x0, y0 = pts.min(0)
    x1, y1 = pts.max(0)
    ex = tuple(float(v) for v in (model.extents or (0, 0, 0, 0)))
    if ex[2] > ex[0] or ex[3] > ex[1]:
        x0, y0, x1, y1 = min(x0, ex[0]), min(y0, ex[1]), max(x1, ex[2]), max(y1, ex[3])
    size = max(x1 - x0, y1 - y0)
    if not size > 0:
        size = 1.0
    return _FrameGeom(a, b, t, n, ld * us, (float(x0), float(y0), float(x1), float(y1)), float(size))


# -- the result drawing -----------------------------------------------------------------------------


_RING = np.column_stack([np.cos(np.radians(np.arange(0.0, 360.0, 30.0))),
                         np.sin(np.radians(np.arange(0.0, 360.0, 30.0)))])
_RING[np.abs(_RING) < 1e-12] = 0.0


def _ring(anchor: np.ndarray, half_w: float, half_h: float, gaps: Sequence[float], pref: np.ndarray) -> np.ndarray:
    """Box centres all around ``anchor`` (every 30 degrees), the box edge
    ``gap`` from it, for each gap in turn; directions closest to ``pref``
    first.  Shape (12 * len(gaps), 2)."""
    d = _RING
    with np.errstate(divide="ignore"):
        ext = np.minimum(half_w / np.abs(d[:, 0]), half_h / np.abs(d[:, 1]))   # centre to box edge along d
    order = np.argsort(-(d @ pref), kind="stable")
    d, ext = d[order], ext[order]
    g = np.repeat(np.asarray(gaps, dtype=float), len(d))
    return anchor + np.tile(d, (len(gaps), 1)) * (g + np.tile(ext, len(gaps)))[:, None]


def _candidates(sp: _Spot, kind: str, half_w: float, half_h: float, h: float, far: bool = False) -> np.ndarray:
    """Centres to try for a label box of half size ``half_w`` x ``half_h``, best first.

    Near candidates: beyond the diagram's tip, on the other side of the
    member, farther out, then all around the anchor point; end values sit
    flush with the element's end on its inner side; a zero crossing's "0"
    sits in one of the four corners beside its tick.  ``far``: rings
    farther from the anchor (written with a leader line), for labels that
    must be written.
    """
    u, t = sp.out, sp.along
    gap = 0.35 * h
    e = half_w * abs(u[0]) + half_h * abs(u[1])           # box half-extent along u
    s = half_w * abs(t[0]) + half_h * abs(t[1])           # box half-extent along t
    tip = sp.anchor + u * (gap + e)
    back = sp.base - u * (gap + e)
    if kind == "zero":
        a, b = t * (s + 0.3 * h), u * (e + 0.25 * h)
        return np.array([sp.base + b + a, sp.base + b - a, sp.base - b + a, sp.base - b - a])
    if sp.inward:
        w = t * sp.inward
        f = w * (s + 0.25 * h)
        first, pref = [tip + f, back + f], w + 0.5 * u
    else:
        half = t * (s + 0.5 * gap)
        first, pref = [tip, tip + half, tip - half, back, back + half, back - half, tip + u * (2 * e + gap)], u
    if far:
        return _ring(sp.anchor, half_w, half_h, (1.5 * h, 3.0 * h, 5.0 * h), pref)
    return np.vstack([np.array(first), _ring(sp.anchor, half_w, half_h, (gap, 1.2 * h), pref)])


def _place_one(placer: LabelPlacer, lb: _Label, font, h: float):
    """(spot, x, y, half_w, half_h) where ``lb`` is written, or None when it
    is dropped (no free spot, and not allowed to overlap)."""
    opts = []
    for sp in lb.spots:
        hw = 0.5 * _text_width(font, sp.text, h) + 0.15 * h
        opts.append((sp, hw, 0.7 * h))
    for far in (False, True):
        if far and not lb.must:
            return None
        tries = []
        for sp, hw, hh in opts:
            cands = _candidates(sp, lb.kind, hw, hh, h, far)
            tries.append((cands, placer.free_of_obstacles(cands, hw, hh)))
        for k in range(max(len(c) for c, _ok in tries)):
            for (sp, hw, hh), (cands, ok) in zip(opts, tries):     # the merged spots take turns
                if k < len(cands) and ok[k]:
                    x, y = float(cands[k][0]), float(cands[k][1])
                    b = (x - hw, y - hh, x + hw, y + hh)
                    if placer.free_of_boxes(b):
                        placer.take(b)
                        return sp, x, y, hw, hh
    if not lb.force:
        return None
    sp, hw, hh = opts[0]
    c = _candidates(sp, lb.kind, hw, hh, h)[0]
    x, y, _ok = placer.place([(float(c[0]), float(c[1]))], hw, hh)      # nothing free: overlap
    return sp, x, y, hw, hh


def _apart(sp: _Spot, x: float, y: float, half_w: float, half_h: float) -> float:
    """How far the box centred at (x, y) sits from its spot: the larger of
    its gaps across and along the member, from the anchor or the base
    point, whichever is nearer."""
    c = np.array([x, y])
    gaps = []
    for p in (sp.anchor, sp.base):
        g = 0.0
        for d in (sp.out, sp.along):
            ext = half_w * abs(d[0]) + half_h * abs(d[1])
            g = max(g, abs(float((p - c) @ d)) - ext)
        gaps.append(g)
    return min(gaps)


def _place_labels(pen: _Pen, placer: LabelPlacer, labels: list[_Label], font, h: float) -> tuple[int, set[int]]:
    """Write the labels of one layer, most important (then largest) first;
    returns (labels dropped, envelope keys written)."""
    dropped, used = 0, set()
    lost: set[int] = set()          # id() of the labels dropped
    order = sorted(range(len(labels)),
                   key=lambda k: (labels[k].priority, -float(f"{abs(labels[k].value):.9g}"), k))
    for k in order:
        lb = labels[k]
        partner = lb.partner
        while partner is not None and partner.merged_into is not None:
            partner = partner.merged_into
        # the other bound at an end is not written without the larger one
        got = None if partner is not None and id(partner) in lost else _place_one(placer, lb, font, h)
        if got is None:
            lost.add(id(lb))
            dropped += 1
            continue
        sp, x, y, hw, hh = got
        if _apart(sp, x, y, hw, hh) > 1.0 * h:
            # a leader from the point to the label when the label does not sit right beside it
            q = np.array([min(max(sp.anchor[0], x - hw), x + hw), min(max(sp.anchor[1], y - hh), y + hh)])
            pen.line(sp.anchor, q, lb.layer)
        pen.text(sp.text, (x, y), h, lb.layer)
        if sp.key is not None:
            used.add(sp.key)
    return dropped, used


def _drawing_texts(doc: "Drawing", result_layers: Iterable[str], limit: int = _MAX_TEXT_OBSTACLES) -> list:
    """Boxes (shapely) of the drawing's own TEXT and MTEXT in modelspace
    (titles, grid marks), so labels keep off them; none when there are more
    than ``limit`` (a heavily annotated sheet: not worth the time)."""
    from ezdxf import bbox

    skip = {n.upper() for n in result_layers}
    ents = [e for e in doc.modelspace().query("TEXT MTEXT") if e.dxf.get("layer", "0").upper() not in skip]
    if len(ents) > limit:
        return []
    out = []
    for e in ents:
        try:
            b = bbox.extents([e], fast=True)
        except Exception:  # noqa: BLE001 - an odd text entity is just not an obstacle
            continue
        if b.has_data:
            out.append(shapely.box(b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y))
    return out


def _as_lines(polys: list[np.ndarray]) -> np.ndarray:
    """shapely LineStrings (an object array) of a list of (k, 2) polylines, in one call."""
    polys = [q for q in polys if len(q) >= 2]
    if not polys:
        return np.zeros(0, dtype=object)
    idx = np.repeat(np.arange(len(polys)), [len(q) for q in polys])
    return shapely.linestrings(np.vstack(polys), indices=idx)


def _near(geoms: np.ndarray, labels: list[_Label], reach: float) -> list:
    """The geometries (object array) whose box may come within ``reach`` of
    a label's anchor or base point: the only ones a label of the list can
    touch.

    The points are binned in a grid of ``reach``-sized cells (a summed-area
    table), and a geometry is kept when a point lies in the cells its box
    grown by ``reach`` covers (a few more than needed, never fewer).  Linear
    in the number of geometries; no new geometry is made, so a big frame
    with a handful of labels costs little.
    """
    if not len(geoms) or not labels or not reach > 0:
        return []
    at = np.array([p for lb in labels for sp in lb.spots for p in (sp.anchor, sp.base)], dtype=float)
    origin = at.min(0)
    cells = np.floor((at - origin) / reach).astype(int)
    shape = cells.max(0) + 1
    grid = np.zeros(shape + 1, dtype=int)                       # summed-area table, zero first row/column
    np.add.at(grid, (cells[:, 0] + 1, cells[:, 1] + 1), 1)
    grid = grid.cumsum(0).cumsum(1)
    box = shapely.bounds(geoms)
    lo = np.floor((box[:, :2] - reach - origin) / reach).astype(int)
    hi = np.floor((box[:, 2:] + reach - origin) / reach).astype(int)
    inside = np.all((hi >= 0) & (lo < shape), axis=1)
    lo, hi = np.clip(lo, 0, shape - 1), np.clip(hi, 0, shape - 1) + 1
    count = grid[hi[:, 0], hi[:, 1]] - grid[lo[:, 0], hi[:, 1]] - grid[hi[:, 0], lo[:, 1]] + grid[lo[:, 0], lo[:, 1]]
    return list(geoms[inside & (count > 0)])


@dataclass
class _Ctx:
    """What drawing one diagram needs to know about the drawing.

    small : elements too short (drawn length < 3 text heights) for fills and labels
    chains : runs of elements in a straight line (:func:`_straight_chains`), drawn as one outline
    keyed : an envelope is drawn: labels carry the governing result's key
    nodes : (m, 2) start and end node of each element
    """

    pen: _Pen
    geom: _FrameGeom
    h: float
    us: float
    small: np.ndarray
    chains: list[list[int]]
    keyed: bool
    nodes: np.ndarray
    uf: UnitFactors


def _draw_diagram(ctx: _Ctx, key: str, layer: str, curves: list[_FlatCurve], labels: list[_Label],
                  legend: list[tuple[str, str]], lines: list[np.ndarray], extents: list[Box]) -> float | None:
    """Outline (and fill) of one diagram type on every element, its label
    requests and its legend line; returns the scale (report units per
    drawing unit) or None when the diagram is zero everywhere.  The
    outlines of the elements long enough for labels and the zero-crossing
    ticks are appended to ``lines`` (obstacles for this layer's labels),
    the box of the whole diagram to ``extents``."""
    geom, h, us, uf = ctx.geom, ctx.h, ctx.us, ctx.uf
    size = geom.size
    factor, unit = (uf.moment, uf.moment_unit) if key == "moment" else (uf.force, uf.force_unit)
    gmax = max((float(np.max(np.abs(c.y))) for c in curves if len(c.y)), default=0.0)
    if not gmax > 0:
        legend.append((key, f"{key}: zero everywhere"))
        return None
    per_unit = _nice_up(gmax * factor / (_ORDINATE_TARGET * size))   # report units per drawing unit
    k_si = factor / per_unit                                         # drawing units per SI unit
    where = "tension side" if key == "moment" else "+ toward local +y"
    legend.append((key, f"{key}: 1 drawing unit = {per_unit:g} {unit} ({where})"))
    transparency = RESULT_LAYER_STYLES[key].fill_transparency
    sym = _SYMBOL[key]
    # every point of every curve in drawing coordinates, at once
    ords = [c.y * (k_si * _SIDE[key]) for c in curves]                # ordinates [drawing units]
    omax = np.max([_segment_max(o, c.bounds[:-1]) for c, o in zip(curves, ords)], axis=0)
    tol = _chord_tolerance(h, omax, size)
    zero = _ZERO_LABEL * gmax if key == "moment" and curves[0].role == "single" else None   # zero ticks
    flat = []
    for c, o in zip(curves, ords):
        along = c.x / us
        base = geom.start[c.eid] + along[:, None] * geom.t[c.eid]
        pts = base + o[:, None] * geom.n[c.eid]
        flat.append((o, base, pts, _drawn(c, along, o, tol, zero)))
        if len(pts):
            extents.append((*map(float, pts.min(0)), *map(float, pts.max(0))))

    def element_labels(i: int) -> list[_Label]:
        cs = []
        for c, (o, base, pts, _keep) in zip(curves, flat):
            sl = slice(c.bounds[i], c.bounds[i + 1])
            cs.append((c.element(i), o[sl], pts[sl], base[sl]))
        got = _element_labels(cs, sym, geom.t[i], geom.n[i], float(geom.length_m[i]),
                              (int(ctx.nodes[i, 0]), int(ctx.nodes[i, 1])), int(i), gmax, factor, ctx.keyed)
        for lb in got:
            lb.layer = layer
        return got

    mine: list[_Label] = []
    tick = 0.6 * h
    shown = omax > 1e-9 * size
    for poly in _outlines(curves, [(pts, keep) for _o, _base, pts, keep in flat], geom, shown, ctx.chains):
        ctx.pen.polyline(poly, layer, closed=True)
    for i in np.flatnonzero(shown & ~ctx.small):                     # long enough for fills and labels
        a, t, nrm = geom.start[i], geom.t[i], geom.n[i]
        # the element's own part of the outline, closed at its ends: fill and obstacle
        ring = [a[None, :]]
        for c, (_o, _base, pts, keep) in zip(curves, flat):
            sl = slice(c.bounds[i], c.bounds[i + 1])
            seg = pts[sl][keep[sl]]
            ring.append(seg if c.role != "min" else seg[::-1])
            if len(ring) == 2:
                ring.append(geom.end[i][None, :])
        poly = np.vstack(ring)
        lines.append(poly)
        if omax[i] >= 0.15 * h:
            ctx.pen.fill(poly, layer, transparency)
        mine += element_labels(i)
        if key == "moment" and curves[0].role == "single":
            # zero crossings (points of contraflexure): a tick across the member, "0" beside it if there is room
            for x0 in _zero_crossings(curves[0].element(i), _ZERO_LABEL * gmax)[:_MAX_ZEROS]:
                p = a + t * (x0 / us)
                ends = np.array([p - nrm * tick, p + nrm * tick])
                ctx.pen.line(ends[0], ends[1], layer)
                lines.append(ends)
                mine.append(_Label(_PRIORITY["zero"], "zero", 0.0, layer, [_Spot("0", p, p, nrm, t)],
                                   element=int(i)))
    mine = _merge_at_joints(mine, _SAME_AT_JOINT * gmax)
    # the diagram's overall extreme is always written, first in line
    ci = int(np.argmax([float(np.max(np.abs(c.y))) if len(c.y) else 0.0 for c in curves]))
    top = int(curves[ci].eid[int(np.argmax(np.abs(curves[ci].y)))])
    pool = mine if not ctx.small[top] else element_labels(top)
    best = max((lb for lb in pool if lb.kind != "zero"), key=lambda lb: abs(lb.value), default=None)
    if best is not None:
        if pool is not mine:
            mine.append(best)
        best.priority = 0.0
        best.must = best.force = True
    labels += mine
    return per_unit


def _outlines(curves: list[_FlatCurve], drawn: list[tuple[np.ndarray, np.ndarray]], geom: _FrameGeom,
              shown: np.ndarray, chains: list[list[int]]) -> list[np.ndarray]:
    """The closed outlines of one diagram, one per run of elements in a
    straight line (``chains``, broken where an element's diagram is zero
    everywhere: ``shown`` False): the run's baseline start, the curve along
    every element of the run, the baseline end, and for an envelope the min
    curve back (the band of possible values).  Where the value jumps at a
    joint the outline steps across it, as a continuous diagram is drawn by
    hand.  ``drawn``: per curve, its points (drawing coordinates) and the
    mask of those drawn.  Built for all runs at once (one sort)."""
    n_el = len(shown)
    if not shown.any():
        return []
    seq = np.concatenate([np.asarray(c, dtype=int) for c in chains])
    cid = np.repeat(np.arange(len(chains)), [len(c) for c in chains])
    on = shown[seq]
    brk = np.r_[True, cid[1:] != cid[:-1]] | np.r_[True, ~on[:-1]]
    run = (np.cumsum(brk) - 1)[on]                                  # run of each shown element, in run order
    seq = seq[on]
    run = np.r_[0, np.cumsum(run[1:] != run[:-1])]                  # renumbered 0..k-1
    n_run = int(run[-1]) + 1
    run_of = np.full(n_el, -1)
    rank = np.zeros(n_el, dtype=int)
    run_of[seq] = run
    rank[seq] = np.arange(len(seq))
    heads = seq[np.r_[True, run[1:] != run[:-1]]]
    tails = seq[np.r_[run[1:] != run[:-1], True]]
    zeros = np.zeros(n_run, dtype=int)
    parts = [(geom.start[heads], np.arange(n_run), zeros, zeros, zeros),
             (geom.end[tails], np.arange(n_run), zeros + 2, zeros, zeros)]
    for c, (pts, keep) in zip(curves, drawn):
        k = np.flatnonzero(keep & shown[c.eid])
        e = c.eid[k]
        back = -1 if c.role == "min" else 1
        parts.append((pts[k], run_of[e], np.full(len(k), 1 if back > 0 else 3), back * rank[e], back * k))
    pts = np.concatenate([q[0] for q in parts])
    r, part, pos, idx = (np.concatenate([q[j] for q in parts]) for j in (1, 2, 3, 4))
    order = np.lexsort((idx, pos, part, r))
    pts, r = pts[order], r[order]
    # a point on top of the one before it (a value continuous at a joint, zero at an end) is drawn once
    step = np.abs(np.diff(pts, axis=0)).max(1) if len(pts) > 1 else np.zeros(0)
    dup = np.r_[False, (r[1:] == r[:-1]) & (step <= 1e-9 * geom.size)]
    pts, r = pts[~dup], r[~dup]
    bounds = np.searchsorted(r, np.arange(n_run + 1))
    return [pts[a:b] for a, b in zip(bounds[:-1], bounds[1:])]


def _wrap(text: str, width: int = 0) -> list[str]:
    """A legend line wrapped to about ``_LEGEND_CHARS`` characters."""
    return textwrap.wrap(text, width or _LEGEND_CHARS, break_on_hyphens=False) or [""]


def _wrap_items(head: str, items: list[str], width: int = 0) -> list[str]:
    """``head`` then the items joined by ", ", wrapped between items (an item is never split)."""
    width = width or _LEGEND_CHARS
    rows, row = [], head
    for k, item in enumerate(items):
        piece = item + ("," if k < len(items) - 1 else "")
        if row and len(row) + 1 + len(piece) > width:
            rows.append(row)
            row = piece
        else:
            row = f"{row} {piece}" if row else piece
    return rows + [row]


def annotate_results(
    doc: "Drawing",
    model: "DrawingModel",
    det,
    results: Sequence,
    *,
    show: str | None,
    settings: Any = None,
    force_unit: str,
    length_unit: str,
) -> DrawingSummary:
    """Draw the result layers into an open document (see the module docstring).

    Removes the previous content of the result layers first.  Values are
    converted from SI to ``force_unit`` / ``length_unit`` for the text.
    """
    names = result_layer_names(settings)
    clear_result_layers(doc, names.values())
    prepare_layers(doc, names)
    sel = select_results(results, show)
    uf = unit_factors(force_unit, length_unit)
    texts = _drawing_texts(doc, names.values())        # the drawing's own, before we add ours
    geom = _frame_geom(model)
    size = geom.size
    h = float(f"{size * _TEXT_RATIO:.2g}")
    pen = _Pen(doc, size)
    summary = DrawingSummary(layers=names, text_height=h, shown=sel.label)
    frame = model.frame

    # 1. sample every element once
    n_el = len(frame.members)
    if n_el and _has_batch(sel.results):
        stations = _sample_batch(sel.results, frame, geom.length_m)
    elif n_el:
        stations = _sample_member_by_member(sel.results, frame, geom.length_m)
    else:
        stations = None

    us = model.unit_scale
    small = geom.length_m / us < 3 * h
    nodes = np.array([(m.start, m.end) for m in frame.members], dtype=int).reshape(-1, 2)
    chains = _straight_chains(nodes[:, 0], nodes[:, 1], geom.t)
    ctx = _Ctx(pen=pen, geom=geom, h=h, us=us, small=small, chains=chains, keyed=sel.envelope, nodes=nodes, uf=uf)
    legend: list[tuple[str, str]] = []
    boxes: list[Box] = [geom.bounds]                   # of everything drawn, for the legend's place
    labels: dict[str, list[_Label]] = {key: [] for key in (*_DIAGRAMS, "reactions")}
    lines: dict[str, list[np.ndarray]] = {key: [] for key in _DIAGRAMS}

    # 2. draw the diagrams
    for key in _DIAGRAMS:
        curves = _curves(stations, key, sel.envelope, n_el) if stations is not None else []
        summary.scales[key] = _draw_diagram(ctx, key, names[key], curves, labels[key], legend, lines[key], boxes)
        del curves                                     # one diagram's arrays at a time (large frames)
    stations = None

    # 3. reactions
    arrows = _draw_reactions(pen, model, geom, sel, names["reactions"], uf, h, labels["reactions"])
    legend.append(("reactions", f"reactions: {uf.force_unit}, {uf.moment_unit}; arrows show each component's "
                                f"direction, values signed (+X, +Y, moment counter-clockwise)"))

    # 4. deflected shape
    bent = _draw_deflected(pen, model, geom, sel, names["deflected"], h, summary, legend, chains=chains)

    # 5. labels, layer by layer (each result layer reads on its own), most important first
    members = shapely.linestrings(np.stack([geom.start, geom.end], axis=1)) if n_el else np.zeros(0, dtype=object)
    font = _font(h)
    used: dict[str, set[int]] = {}
    if arrows:
        boxes.append(tuple(float(v) for v in shapely.total_bounds(arrows)))
    for key, todo in labels.items():
        if not todo:
            continue
        # obstacles: member lines, this layer's outlines and ticks (reactions: the arrows), the drawing's texts
        reach = 7.0 * h + 2.5 * max(_text_width(font, sp.text, h) for lb in todo for sp in lb.spots)
        own = list(arrows) if key == "reactions" else _near(_as_lines(lines[key]), todo, reach)
        placer = LabelPlacer(_near(members, todo, reach) + own + texts, cell=4 * h)
        dropped, used[key] = _place_labels(pen, placer, todo, font, h)
        summary.labels += placer.placed
        summary.forced += placer.forced
        summary.dropped += dropped
        if placer.extent is not None:
            boxes.append(placer.extent)
    if bent is not None and len(bent):
        boxes.append((*bent.min(0), *bent.max(0)))
    b = np.array(boxes, dtype=float)
    content = (float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max()))

    # 6. legend and notes beside the frame
    keys = {key: [(k, sel.results[k].name) for k in sorted(ks)] for key, ks in used.items() if ks}
    shown = sel.label
    if sel.envelope:
        head, _sep, _names = sel.label.partition(": ")
        shown = head + ": " + ", ".join(f"C{k + 1} = {r.name}" for k, r in enumerate(sel.results))
    _draw_legend_and_notes(pen, model, det, geom, names, legend, h, uf, shown, sel.envelope,
                           content=content, keys=keys, font=font)
    summary.entities = pen.count
    return summary


def _font(h: float):
    try:
        from ezdxf.fonts import fonts

        return fonts.make_font(TEXT_STYLES["D2F-LABELS"], cap_height=h)
    except Exception:  # noqa: BLE001 - no font machinery: estimate widths
        return None


def _text_width(font, text: str, h: float) -> float:
    if font is not None:
        try:
            return float(font.text_width(text))
        except Exception:  # noqa: BLE001
            pass
    return 0.9 * h * len(text)


def _reaction_table(sel: Selection) -> tuple[list[int], np.ndarray]:
    """Support nodes and their reactions (k results, nodes, 3) [SI]."""
    nodes: list[int] = []
    for r in sel.results:
        for rc in r.reactions:
            if int(rc.node) not in nodes:
                nodes.append(int(rc.node))
    index = {n: i for i, n in enumerate(nodes)}
    table = np.zeros((len(sel.results), len(nodes), 3))
    for k, r in enumerate(sel.results):
        for rc in r.reactions:
            table[k, index[int(rc.node)]] += (rc.fx, rc.fy, rc.m)
    return nodes, table


def _draw_reactions(pen: _Pen, model, geom: _FrameGeom, sel: Selection, layer: str, uf: UnitFactors,
                    h: float, labels: list[_Label]) -> list:
    """Arrows at the supports and their label requests; returns the arrow
    shafts as shapely lines (obstacles for the reaction labels).

    For an envelope each component gets the bound of larger magnitude with
    its key, plus the other bound when it has the other sign and is at
    least ``_OTHER_SIGN`` of the larger; ``[all]`` when every result gives
    the same value.  Reactions are written however small.
    """
    nodes, table = _reaction_table(sel)
    if not nodes:
        return []
    frame = model.frame
    size = geom.size
    La, gap, head = 0.07 * size, 0.012 * size, min(0.3 * 0.07 * size, 1.4 * h)
    fmax = float(np.max(np.abs(table[:, :, :2]))) if table.size else 0.0
    mmax = float(np.max(np.abs(table[:, :, 2]))) if table.size else 0.0
    shafts = []
    for i, nid in enumerate(nodes):
        p = np.array([frame.nodes[nid].x, frame.nodes[nid].y]) / model.unit_scale
        for comp, sym in ((0, "Rx"), (1, "Ry"), (2, "Mr")):
            vals = table[:, i, comp]
            ref = mmax if comp == 2 else fmax
            if not ref > 0 or np.max(np.abs(vals)) <= 1e-9 * ref:
                continue
            kmax, kmin = int(np.argmax(vals)), int(np.argmin(vals))
            kb, ko = (kmax, kmin) if abs(vals[kmax]) >= abs(vals[kmin]) else (kmin, kmax)
            v_big, v_oth = float(vals[kb]), float(vals[ko])
            factor = uf.moment if comp == 2 else uf.force
            texts: list[tuple[str, int | None, float]]
            if not sel.envelope:
                texts = [(f"{sym}={_fmt(v_big * factor)}", None, v_big)]
            elif abs(v_big - v_oth) <= 1e-9 * ref:
                texts = [(f"{sym}={_fmt(v_big * factor)} [all]", None, v_big)]
            else:
                texts = [(f"{sym}={_fmt(v_big * factor)} [C{kb + 1}]", kb, v_big)]
                if v_oth * v_big < 0 and abs(v_oth) >= _OTHER_SIGN * abs(v_big):
                    texts.append((f"{sym}={_fmt(v_oth * factor)} [C{ko + 1}]", ko, v_oth))
            if comp == 0:
                a, b = p + (-gap - La, 0.0), p + (-gap, 0.0)
                tail, tip = (a, b) if v_big > 0 else (b, a)
                pen.arrow(tail, tip, head, layer)
                shafts.append(shapely.LineString([a, b]))
                out, along, anchor = np.array([0.0, 1.0]), np.array([1.0, 0.0]), (a + b) / 2
            elif comp == 1:
                a, b = p + (0.0, -gap - La), p + (0.0, -gap)
                tail, tip = (a, b) if v_big > 0 else (b, a)
                pen.arrow(tail, tip, head, layer)
                shafts.append(shapely.LineString([a, b]))
                out, along, anchor = np.array([1.0, 0.0]), np.array([0.0, 1.0]), (a + b) / 2
            else:
                r = 0.045 * size
                a0, a1 = 30.0, 300.0
                pen.arc(p, r, a0, a1, layer)
                ang = math.radians(a1 if v_big > 0 else a0)
                tip = p + r * np.array([math.cos(ang), math.sin(ang)])
                tang = np.array([-math.sin(ang), math.cos(ang)]) * (1.0 if v_big > 0 else -1.0)
                pen.arrow(tip - tang * head * 1.2, tip, head, layer)
                arc_pts = [p + r * np.array([math.cos(q), math.sin(q)])
                           for q in np.radians(np.linspace(a0, a1, 10))]
                shafts.append(shapely.LineString(arc_pts))
                d = np.array([math.cos(math.radians(165)), math.sin(math.radians(165))])
                out, along, anchor = d, np.array([0.0, 1.0]), p + d * r
            for k, (text, key, v) in enumerate(texts):
                spot = _Spot(text, anchor - along * (1.6 * h * k), p, out, along, 0.0, key)
                labels.append(_Label(_PRIORITY["reaction"] + 0.01 * k, "reaction", v, layer, [spot], must=True, force=True))
    return shafts


def _draw_deflected(pen: _Pen, model, geom: _FrameGeom, sel: Selection, layer: str, h: float,
                    summary: DrawingSummary, legend: list[tuple[str, str]],
                    chains: list[list[int]] | None = None) -> np.ndarray | None:
    """Exaggerated deflected shape of the result (or, for an envelope, of the
    result with the largest nodal displacement).

    Elements long enough to carry labels are drawn exactly (the member
    results' deflection); shorter ones as the chord between their displaced
    ends, unless the results offer batch sampling (``members.sample("u" |
    "v", rows, x)``), which draws every element exactly.  The exaggeration
    uses the exact largest displacement when the results have
    ``member_table()``.  Returns the drawn points (k, 2), or None.
    """
    cands = [r for r in sel.results if getattr(r, "displacements", None) is not None]
    if not cands:
        legend.append(("deflected", "deflected shape: not available (member sections are needed)"))
        return
    mags = [float(np.max(np.hypot(r.displacements[:, 0], r.displacements[:, 1]))) if len(r.displacements) else 0.0
            for r in cands]
    res = cands[int(np.argmax(mags))]
    frame = model.frame
    us = model.unit_scale
    n_el = len(frame.members)
    if not n_el:
        return
    unit = np.linspace(0.0, 1.0, _DEFL_SAMPLES)
    node_d = np.asarray(res.displacements, dtype=float)[:, :2] / us             # drawing units
    si = np.array([m.start for m in frame.members])
    ei = np.array([m.end for m in frame.members])
    chords = 0
    if callable(getattr(res.members, "sample", None)):
        pos = {mid: j for j, mid in enumerate(res.members)}
        rows = np.repeat(np.array([pos[m.id] for m in frame.members]), _DEFL_SAMPLES)
        x = np.outer(geom.length_m, unit).ravel()
        u = np.asarray(res.members.sample("u", rows, x), float).reshape(n_el, -1, 1)
        v = np.asarray(res.members.sample("v", rows, x), float).reshape(n_el, -1, 1)
        t, nrm = geom.t[:, None, :], geom.n[:, None, :]
        base = (geom.start[:, None, :] + np.outer(geom.length_m / us, unit)[:, :, None] * t).reshape(-1, 2)
        disp = ((u * t + v * nrm) / us).reshape(-1, 2)
        bounds = np.arange(n_el + 1) * _DEFL_SAMPLES
    else:
        small = geom.length_m / us < 3 * h
        bases, disps = [], []                                                    # per element
        for i, m in enumerate(frame.members):
            if small[i]:
                bases.append(np.vstack([geom.start[i], geom.end[i]]))
                disps.append(node_d[[si[i], ei[i]]])
                chords += 1
                continue
            d = res.members[m.id].deflection(geom.length_m[i] * unit)
            if d is None:
                legend.append(("deflected", "deflected shape: not available (member sections are needed)"))
                return
            u, v = (np.broadcast_to(np.asarray(q, float), unit.shape) for q in d)
            disps.append((np.outer(u, geom.t[i]) + np.outer(v, geom.n[i])) / us)
            bases.append(geom.start[i] + np.outer(geom.length_m[i] * unit / us, geom.t[i]))
        base, disp = np.concatenate(bases), np.concatenate(disps)
        bounds = np.r_[0, np.cumsum([len(q) for q in bases])]
    mag = np.hypot(disp[:, 0], disp[:, 1])
    dmax = float(mag.max())
    table = getattr(res, "member_table", None)
    if table is not None:
        exact = np.asarray(table().get("deflection_max", []), dtype=float) / us
        if exact.size and np.isfinite(exact).any():
            dmax = max(dmax, float(np.nanmax(exact)))
    if not dmax > 0:
        legend.append(("deflected", "deflected shape: no displacement"))
        return
    factor = _nice_down(_DEFLECTION_TARGET * geom.size / dmax)
    # one polyline per straight chain of elements (a beam line split at every
    # column, a column line split at every floor): the displacement is
    # continuous at a node, so the chain's curve is one line and its dashes
    # run on through the joints.  Thinned to the chord tolerance, with 1 % of
    # the element's largest drawn displacement as the relative part.
    moved = base + factor * disp
    tol = _chord_tolerance(h, factor * np.maximum.reduceat(mag, bounds[:-1]), geom.size)
    chains = chains if chains is not None else _straight_chains(si, ei, geom.t)
    seq = np.concatenate([np.asarray(c, dtype=int) for c in chains])
    head = np.zeros(len(seq), dtype=bool)
    head[np.cumsum([0] + [len(c) for c in chains[:-1]])] = True
    first = bounds[seq] + ~head                            # a joint is drawn as the previous element's end
    count = bounds[seq + 1] - first
    at = np.cumsum(count) - count
    idx = np.repeat(first - at, count) + np.arange(int(count.sum()))
    pts = moved[idx]
    lengths = np.add.reduceat(count, np.flatnonzero(head))
    ends = np.cumsum(lengths)
    anchor = np.zeros(len(pts), dtype=bool)
    anchor[ends - 1] = True
    anchor[ends - lengths] = True
    keep = _thin(pts, anchor, np.repeat(tol[seq], count))
    for a, b in zip(ends - lengths, ends):
        pen.polyline(pts[a:b][keep[a:b]], layer, dashed=True)
    summary.deflection_factor = factor
    summary.deflection_result = res.name
    which = f" of {res.name}" if sel.envelope or len(sel.results) > 1 else ""
    note = "; short elements drawn as chords" if chords else ""
    legend.append(("deflected", f"deflected shape{which}: displacements exaggerated x {factor:g}{note}"))
    return pts


def _straight_chains(si: np.ndarray, ei: np.ndarray, t: np.ndarray) -> list[list[int]]:
    """Elements (indices) in runs that continue each other in a straight
    line: element j follows i when it starts at i's end node in the same
    direction.  Every element is in exactly one run, in order along it."""
    n = len(si)
    by_start: dict[int, list[int]] = {}
    for j in range(n):
        by_start.setdefault(int(si[j]), []).append(j)
    nxt = np.full(n, -1)
    has_prev = np.zeros(n, dtype=bool)
    for i in range(n):
        for j in by_start.get(int(ei[i]), ()):
            if j != i and not has_prev[j] and float(t[i] @ t[j]) > 1.0 - 1e-9:
                nxt[i], has_prev[j] = j, True
                break
    chains, seen = [], np.zeros(n, dtype=bool)
    for i in [*np.flatnonzero(~has_prev), *range(n)]:    # heads first; then anything left (a loop cannot be straight)
        if seen[i]:
            continue
        chain = []
        while i >= 0 and not seen[i]:
            chain.append(int(i))
            seen[i] = True
            i = nxt[i]
        chains.append(chain)
    return chains


def _notes_paragraphs(model, det, uf: UnitFactors | None, shown: str, extra: list[str]) -> list[str]:
    paras = [
        f"dxf2frame {__version__}",
        f"Source: {Path(model.source).name}",
    ]
    if uf is not None:
        paras.append(f"Units: force {uf.force_unit}, moment {uf.moment_unit}, length {uf.length_unit}; "
                     f"drawing unit {model.length_unit}")
        paras.append(
            "Sign convention: axial force N tension positive; shear V positive when it turns the element "
            "clockwise; moment M positive when it bends the member concave toward its local +y side "
            "(sagging for a beam drawn left to right). Local x runs from the member end with the smaller X "
            "(ties: smaller Y); local y is local x turned 90 degrees counter-clockwise. Reactions act on the "
            "structure along +X and +Y, moments counter-clockwise positive."
        )
    paras.append(f"Shown: {shown}")
    deg = f", degree {det.degree}" if getattr(det, "degree", 0) else ""
    mech = f", {det.mechanisms} mechanism(s)" if getattr(det, "mechanisms", 0) else ""
    paras.append(f"Determinacy: {det.status}{deg}{mech}. {det.count_check}")
    if det.detail:
        paras.append(det.detail)
    paras += extra
    warnings = list(model.warnings) + [w for w in (getattr(det, "warnings", None) or []) if w not in model.warnings]
    if warnings:
        paras.append(f"Warnings ({len(warnings)}):")
        paras += [f"- {w}" for w in warnings[:_MAX_WARNINGS]]
        if len(warnings) > _MAX_WARNINGS:
            paras.append(f"- ... and {len(warnings) - _MAX_WARNINGS} more (see the report)")
    paras += ["", f"CAUTION: {CAUTION}"]
    return paras


def _draw_legend_and_notes(pen: _Pen, model, det, geom: _FrameGeom, names: dict[str, str],
                           legend: list[tuple[str, str]], h: float, uf: UnitFactors | None, shown: str,
                           envelope: bool, *, content: Box, keys: dict[str, list[tuple[int, str]]],
                           font) -> None:
    """The legend: per result layer a swatch, its scale line and the keys of
    the combinations that govern a value written on it (all on that layer);
    then the title and the notes block (notes layer).

    ``content`` is the box of everything drawn so far.  A frame wider than
    tall gets the legend blocks in rows under the drawing and the notes to
    its right; a taller one gets one column to the right (legend, then
    notes).  Either way the result layers' own content stays close to the
    frame, so a picture of one layer wastes little room.
    """
    blocks = []
    rank = {"moment": 0, "shear": 1, "axial": 2, "reactions": 3, "deflected": 4}
    for key, line in sorted(legend, key=lambda kl: rank.get(kl[0], 9)):
        rows = _wrap(line)
        if keys.get(key):
            rows += _wrap_items("governing:", [f"C{k + 1} = {name}" for k, name in keys[key]])
        blocks.append((key, rows))
    sw = 2.0 * h
    widths = [sw + 0.8 * h + max(_text_width(font, row, h) for row in rows) for _key, rows in blocks]
    pitch = 1.6 * h
    size = geom.size
    side_x = content[2] + max(0.05 * size, 3 * h)
    gx0, gy0, gx1, gy1 = geom.bounds

    def block(x: float, y: float, key: str, rows: list[str]) -> None:
        layer = names[key]
        pen.polyline([(x, y), (x + sw, y), (x + sw, y - h), (x, y - h)], layer, closed=True,
                     dashed=key == "deflected")
        for k, row in enumerate(rows):
            pen.text(row, (x + sw + 0.8 * h, y - k * pitch), h, layer, style="D2F-NOTES",
                     align=TextEntityAlignment.TOP_LEFT)

    if gx1 - gx0 >= gy1 - gy0:                         # under the drawing, in rows
        # at least three blocks to a row: the five layers' legends in two rows
        left = content[0]
        avail = max(content[2] - content[0], 3 * max(widths, default=0.0) + 4.0 * h)
        x, y, row_h = left, content[1] - 2.5 * h, 0.0
        right = side_x
        for (key, rows), w in zip(blocks, widths):
            if x > left and x + w > left + avail:
                x, y, row_h = left, y - row_h - 1.2 * h, 0.0
            block(x, y, key, rows)
            right = max(right, x + w + 3.0 * h)        # the notes start clear of every block
            x += w + 2.0 * h
            row_h = max(row_h, (len(rows) - 1) * pitch + h)
        side_x = right
        y = gy1
    else:                                             # one column to the right
        y = gy1 - 2.6 * h
        for key, rows in blocks:
            block(side_x, y, key, rows)
            y -= len(rows) * pitch + 0.4 * h
        y += 2.6 * h - 0.8 * h
    x0 = side_x
    pen.text("dxf2frame results", (x0, y), 1.4 * h, names["notes"], style="D2F-NOTES",
             align=TextEntityAlignment.TOP_LEFT)
    y -= 2.6 * h
    if envelope:
        for row in _wrap("[Ck] beside a value: combination Ck of the envelope governs it", 60):
            pen.text(row, (x0, y), h, names["notes"], style="D2F-NOTES", align=TextEntityAlignment.TOP_LEFT)
            y -= pitch
        y -= 0.4 * h
    paras = _notes_paragraphs(model, det, uf, shown, [])
    pen.notes(paras, (x0, y - 0.8 * h), h, max(0.6 * size, 45 * h), names["notes"])


def write_result_drawing(
    source: Path,
    out: Path,
    model: "DrawingModel",
    det,
    results: Sequence,
    *,
    show: str | None,
    settings: Any = None,
    force_unit: str,
    length_unit: str,
    document: "Drawing | None" = None,
) -> None:
    """Write a copy of ``source`` with the result layers to ``out`` (atomic).

    Parameters
    ----------
    source : the input drawing (read again, never written)
    out : the result drawing; must not be ``source``
    model, det, results : the analysis (SI), results = cases then combinations
    show : a result name, or ``"envelope:LRFD"`` / ``"envelope:ASD"`` /
        ``"envelope:all"`` / ``"envelope"``; None = ``"envelope:LRFD"``
    settings : for the result layer names (``settings.output_layer(key)``)
    force_unit, length_unit : units of the values written as text
    document : optional: ``source`` already loaded with ``ezdxf.readfile``
        and not modified since (the reader's document), to save reading the
        file a second time; it is annotated in place

    Raises
    ------
    InputFileError  the source cannot be read
    SettingsError  unknown ``show`` name, or ``out`` is the source
    """
    source, out = Path(source), Path(out)
    _check_target(source, out)
    doc = document if document is not None else _load_source(source, settings)
    annotate_results(doc, model, det, results, show=show, settings=settings,
                     force_unit=force_unit, length_unit=length_unit)
    with atomic_path(out) as tmp:
        doc.saveas(tmp)


# -- unstable frames -------------------------------------------------------------------------------


def annotate_mechanism(doc: "Drawing", model: "DrawingModel", det, settings: Any = None) -> DrawingSummary:
    """Draw the mechanism modes of an unstable frame into an open document.

    Each mode is the frame displaced by the mode (scaled so the largest
    movement is about 10 % of the frame's size), drawn on the mechanism
    layer with circles at the nodes that move and a "mode k" label; a notes
    block explains the instability and carries the caution.
    """
    names = result_layer_names(settings)
    clear_result_layers(doc, names.values())
    prepare_layers(doc, names)
    geom = _frame_geom(model)
    size = geom.size
    h = float(f"{size * _TEXT_RATIO:.2g}")
    pen = _Pen(doc, size)
    frame = model.frame
    layer = names["mechanism"]
    xy = np.array([(n.x, n.y) for n in frame.nodes], dtype=float).reshape(-1, 2) / model.unit_scale
    modes = list(getattr(det, "modes", None) or [])
    drawn = 0
    for k, mode in enumerate(modes, start=1):
        mv = np.asarray(mode, dtype=float).reshape(len(xy), -1)[:, :2]
        mag = np.hypot(mv[:, 0], mv[:, 1])
        peak = float(mag.max()) if len(mag) else 0.0
        if not peak > 1e-12:
            continue
        moved = xy + mv * (_MECHANISM_TARGET * size / peak)
        for m in frame.members:
            pen.polyline([moved[m.start], moved[m.end]], layer, dashed=True)
        for nid in np.flatnonzero(mag > 1e-6 * peak):
            pen.circle(xy[nid], 0.6 * h, layer)
            pen.line(xy[nid], moved[nid], layer)
        top = int(np.argmax(mag))
        pen.text(f"mode {k}", moved[top] + np.array([0.0, 1.5 * h]), h, layer)
        drawn += 1
    legend = [("mechanism", f"mechanism: {drawn} mode(s) drawn displaced (largest movement "
                            f"{int(_MECHANISM_TARGET * 100)} % of the frame size); circles mark moving nodes")]
    involved = getattr(det, "nodes_involved", None) or []
    extra = []
    for k, nodes in enumerate(involved, start=1):
        pts = ", ".join(f"({frame.nodes[n].x / model.unit_scale:.4g}, {frame.nodes[n].y / model.unit_scale:.4g})"
                        for n in list(nodes)[:12])
        more = " ..." if len(nodes) > 12 else ""
        extra.append(f"Mode {k} moves nodes at {pts}{more} (drawing coordinates)")
    shown = "the frame is unstable: no results; the mechanism modes are drawn instead"
    x0 = geom.bounds[2] + 0.25 * size
    y = geom.bounds[3]
    pen.text("dxf2frame: unstable frame", (x0, y), 1.4 * h, names["notes"], style="D2F-NOTES",
             align=TextEntityAlignment.TOP_LEFT)
    y -= 2.6 * h
    for key, line in legend:
        pen.text(line, (x0, y), h, names[key], style="D2F-NOTES", align=TextEntityAlignment.TOP_LEFT)
        y -= 1.9 * h
    pen.notes(_notes_paragraphs(model, det, None, shown, extra), (x0, y - 0.8 * h), h,
              max(0.6 * size, 45 * h), names["notes"])
    return DrawingSummary(layers=names, text_height=h, entities=pen.count, shown=shown)


def write_mechanism_drawing(source: Path, out: Path, model: "DrawingModel", det, settings: Any = None, *,
                            document: "Drawing | None" = None) -> None:
    """Write a copy of ``source`` that shows the mechanism of an unstable
    frame (atomic); ``document`` as for :func:`write_result_drawing`."""
    source, out = Path(source), Path(out)
    _check_target(source, out)
    doc = document if document is not None else _load_source(source, settings)
    annotate_mechanism(doc, model, det, settings)
    with atomic_path(out) as tmp:
        doc.saveas(tmp)
