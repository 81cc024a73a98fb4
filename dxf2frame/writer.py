"""Result layers in a copy of the drawing.

The source drawing is read afresh, so the copy keeps every original entity,
layer, block, attribute, header value and handle.  Results go on their own
layers (names remappable through the settings' ``[output_layers]``):

=============  =====================================================
key            content
=============  =====================================================
axial          N diagram per element, positive toward local +y
shear          V diagram per element, positive toward local +y
moment         M diagram per element, positive (sagging) toward local
               -y: M is drawn on the tension side
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
in the legend as "moment: 1 drawing unit = X kN*m".  Text height is 1/80 of
that side.  The deflected shape is exaggerated so that the largest
displacement is about 4-5 % of it.

Labels (values at element ends, at extremes and at zero crossings, and at
reactions) are placed by :class:`LabelPlacer`: each label tries candidate
positions in turn (beyond the diagram's tip, on the other side of the
member, shifted along the member, farther out) and keeps the first whose box
overlaps no placed label and no frame or arrow line (tested with a shapely
STRtree).  If no candidate is free the label goes to the first candidate
anyway, so a value is never silently dropped.  Near-zero values (below
5e-4 of the diagram's largest value) are not labelled; at most six labels
per element and diagram.  Elements shorter than three text heights (a big
frame seen whole) get outlines only: no fill, no labels, except the
diagram's overall extreme, which is always labelled.

Sampling: each element is sampled at its critical points (ends, load
breaks, zeros of V and M, from every result drawn) plus 17 even stations,
with both limits where a value jumps, so ends, extremes and zero crossings
are exact.  Points on straight stretches are not written.  When the
results offer batch sampling (``members.critical_points()`` and
``members.sample(which, rows, x, side)``) every element is sampled in a
few vectorised calls; otherwise through each ``MemberResult``.

DXF R12 drawings get the same content with R12 entities (POLYLINE, TEXT,
ACI colours, no fills).
"""
from __future__ import annotations

import math
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
from .report import UnitFactors, member_groups, unit_factors

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

#: result layer key -> default layer name
DEFAULT_OUTPUT_LAYERS: dict[str, str] = {
    "axial": "RESULT-AXIAL",
    "shear": "RESULT-SHEAR",
    "moment": "RESULT-MOMENT",
    "reactions": "RESULT-REACTIONS",
    "deflected": "RESULT-DEFLECTED",
    "notes": "RESULT-NOTES",
    "mechanism": "RESULT-MECHANISM",
}


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
_ORDINATE_TARGET = 0.115   # largest ordinate / frame size, before rounding the scale
_DEFLECTION_TARGET = 0.05  # largest drawn displacement / frame size
_MECHANISM_TARGET = 0.10   # largest drawn mechanism movement / frame size
_TEXT_RATIO = 1.0 / 80.0   # text height / frame size
_ZERO_LABEL = 5e-4         # values below this fraction of the diagram max are not labelled
_MAX_LABELS = 6            # per element and diagram
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
        if self.legacy:
            y = pos[1]
            for p in paragraphs:
                self.text(p, (pos[0], y), height, layer, style="D2F-NOTES", align=TextEntityAlignment.TOP_LEFT)
                y -= 1.7 * height
            return
        content = "\\P".join(_mtext_safe(p) for p in paragraphs)
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


class LabelPlacer:
    """Place axis-aligned text boxes so they avoid each other and given lines.

    Parameters
    ----------
    obstacles : shapely geometries (the frame's member lines, arrow shafts)
        that labels should not touch; indexed once in an STRtree
    cell : grid cell size for the placed boxes (about 4 text heights)

    Placed boxes live in a uniform grid (dict of cells), so each test looks
    at a handful of neighbours; line tests are STRtree queries.
    """

    def __init__(self, obstacles: Sequence, cell: float) -> None:
        geoms = [g for g in obstacles if g is not None and not g.is_empty]
        self._tree = shapely.STRtree(geoms) if geoms else None
        self._cell = cell if cell > 0 else 1.0
        self._grid: dict[tuple[int, int], list[tuple[float, float, float, float]]] = {}
        self.placed = 0
        self.forced = 0

    def _cells(self, b: tuple[float, float, float, float]) -> Iterable[tuple[int, int]]:
        c = self._cell
        for i in range(math.floor(b[0] / c), math.floor(b[2] / c) + 1):
            for j in range(math.floor(b[1] / c), math.floor(b[3] / c) + 1):
                yield i, j

    def fits(self, b: tuple[float, float, float, float]) -> bool:
        """True when box ``b`` = (xmin, ymin, xmax, ymax) touches no placed box and no obstacle."""
        for cell in self._cells(b):
            for o in self._grid.get(cell, ()):
                if b[0] < o[2] and o[0] < b[2] and b[1] < o[3] and o[1] < b[3]:
                    return False
        if self._tree is not None and len(self._tree.query(shapely.box(*b), predicate="intersects")):
            return False
        return True

    def add(self, b: tuple[float, float, float, float]) -> None:
        for cell in self._cells(b):
            self._grid.setdefault(cell, []).append(b)

    def place(self, candidates: Sequence[tuple[float, float]], half_w: float, half_h: float) -> tuple[float, float, bool]:
        """Centre of the first free candidate box (or the first candidate, forced).

        Returns ``(x, y, fitted)``; the chosen box is recorded either way.
        """
        for cx, cy in candidates:
            b = (cx - half_w, cy - half_h, cx + half_w, cy + half_h)
            if self.fits(b):
                self.add(b)
                self.placed += 1
                return cx, cy, True
        cx, cy = candidates[0]
        self.add((cx - half_w, cy - half_h, cx + half_w, cy + half_h))
        self.placed += 1
        self.forced += 1
        return cx, cy, False


@dataclass
class _Label:
    priority: float
    text: str
    layer: str
    anchor: np.ndarray          # the point the value belongs to (curve tip, arrow end)
    base: np.ndarray            # the point on the member (or the node)
    out: np.ndarray             # unit vector pointing away from the member toward the anchor
    along: np.ndarray           # unit vector along the member


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


@dataclass
class _Stations:
    """Sample stations of every element, flat: element-major, x ascending.

    eid, x [m] : element index (``frame.members`` order) and position
    crit : an interior critical point (load break, zero of V or M): a jump
        may sit there and the point is always drawn
    first, last : the element's end stations
    values : diagram key -> (right, left), each (k results, n stations) [SI],
        the values just right and just left of each station
    """

    eid: np.ndarray
    x: np.ndarray
    crit: np.ndarray
    first: np.ndarray
    last: np.ndarray
    values: dict[str, tuple[np.ndarray, np.ndarray]]

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
        values[key] = (right, left)
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
    values = {}
    for key in _DIAGRAMS:
        right = np.vstack([np.asarray(r.members.sample(_WHICH[key], lay[eid], x), dtype=float)
                           for r, lay in zip(results, layouts)])
        left = right.copy()
        for k, (r, lay) in enumerate(zip(results, layouts)):
            left[k, lmask] = r.members.sample(_WHICH[key], lay[eid[lmask]], x[lmask], side="left")
        values[key] = (right, left)
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
    fixed : points that are always drawn (ends, critical points, jumps)
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
    fixed = np.repeat(st.crit | st.first | st.last, counts)
    bounds = np.searchsorted(eid, np.arange(n_el + 1))
    return _FlatCurve(eid, np.repeat(st.x, counts), y, who, fixed, bounds, role)


def _curves(st: _Stations, key: str, envelope: bool, n_el: int) -> list[_FlatCurve]:
    right, left = st.values[key]
    if not envelope:
        z = np.zeros(right.shape[1], int)
        return [_flat_curve(st, right[0], left[0], z, z, "single", n_el)]
    return [
        _flat_curve(st, right.max(0), left.max(0), right.argmax(0), left.argmax(0), "max", n_el),
        _flat_curve(st, right.min(0), left.min(0), right.argmin(0), left.argmin(0), "min", n_el),
    ]


def _drawn(c: _FlatCurve, rel_tol: np.ndarray) -> np.ndarray:
    """Mask of the points worth drawing: the fixed points always; the points
    between two fixed points only where that stretch is not straight (some
    point deviates from the chord by more than ``rel_tol[element]`` of the
    element's largest |value|).  Extremes and jumps sit on fixed points, so dropping
    the others changes nothing a label refers to."""
    keep = c.fixed.copy()
    free = np.flatnonzero(~c.fixed)
    if not len(free):
        return keep
    fixed = np.flatnonzero(c.fixed)
    k = np.searchsorted(fixed, free)
    i0, i1 = fixed[k - 1], fixed[k]
    x0, x1, y0, y1 = c.x[i0], c.x[i1], c.y[i0], c.y[i1]
    span = np.where(x1 > x0, x1 - x0, 1.0)
    dev = np.abs(c.y[free] - (y0 + (y1 - y0) * (c.x[free] - x0) / span))
    run = np.zeros(len(fixed))
    np.maximum.at(run, k, dev)
    tol = (rel_tol * _segment_max(c.y, c.bounds[:-1]))[c.eid[free]]
    keep[free] = run[k] > tol
    return keep


def _curve_labels(c: _Curve, key: str, o: np.ndarray, pts: np.ndarray, base: np.ndarray, nrm: np.ndarray,
                  t: np.ndarray, L: float, zero_tol: float, gmax: float, factor: float,
                  names: list[str] | None, done: set) -> list[tuple["_Label", float]]:
    """Label requests of one curve: ends, interior extremes (or one label
    when the value is constant), each with its SI value.  ``names`` (the
    envelope's results) adds the governing one; ``done`` holds (position,
    text) already requested on this element, to skip duplicates."""
    layer_key = key
    picks: list[tuple[int, str]] = []
    if float(np.ptp(c.y)) <= 1e-6 * gmax:
        picks.append((int(np.argmin(np.abs(c.x - L / 2))), "const"))
    else:
        picks += [(0, "end"), (len(c.y) - 1, "end")]
        interior = (c.x > 1e-9 * L) & (c.x < L * (1 - 1e-9))
        if interior.any():
            idx = np.flatnonzero(interior)
            ends = (float(c.y[0]), float(c.y[-1]))
            tol = 1e-6 * gmax
            if c.role in ("single", "max"):
                j = int(idx[np.argmax(c.y[idx])])
                if c.y[j] > max(ends) + tol:           # a true interior maximum
                    picks.append((j, "extreme"))
            if c.role in ("single", "min"):
                j = int(idx[np.argmin(c.y[idx])])
                if c.y[j] < min(ends) - tol:           # a true interior minimum
                    picks.append((j, "extreme"))
    out = []
    for j, role in picks:
        v = float(c.y[j])
        if abs(v) <= zero_tol:
            continue
        text = f"{_SYMBOL[layer_key]}={_fmt(v * factor)}"
        tag = (round(float(c.x[j]) / L, 6), text)
        if tag in done:
            continue
        done.add(tag)
        if names is not None:
            text += f" [{names[int(c.who[j])]}]"
        u = nrm * (1.0 if o[j] >= 0 else -1.0)
        out.append((_Label(2.0 if role == "end" else 1.0, text, "", pts[j], base[j], u, t), v))
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
    labels, forced : labels written, and how many went to a crowded spot
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


def _label_candidates(lb: _Label, half_w: float, half_h: float, h: float) -> list[tuple[float, float]]:
    u, t = lb.out, lb.along
    gap = 0.35 * h
    e = half_w * abs(u[0]) + half_h * abs(u[1])           # box half-extent along u
    s = half_w * abs(t[0]) + half_h * abs(t[1])           # box half-extent along t
    c1 = lb.anchor + u * (gap + e)
    c2 = lb.base - u * (gap + e)
    step = 2 * s + gap
    cands = [c1, c2, c1 + t * step, c1 - t * step, c2 + t * step, c2 - t * step,
             c1 + u * (2 * e + gap), c1 + t * 2 * step, c1 - t * 2 * step]
    return [(float(c[0]), float(c[1])) for c in cands]


@dataclass
class _Ctx:
    """What drawing one diagram needs to know about the drawing.

    small : elements too short (drawn length < 3 text heights) for fills and labels
    rel_tol : per element, the straightness tolerance of the drawn outline
    envelope_names : result names when an envelope is drawn (labels name the governing one)
    offsets : per element, distance [m] from its reported member's start
    """

    pen: _Pen
    geom: _FrameGeom
    h: float
    us: float
    small: np.ndarray
    rel_tol: np.ndarray
    envelope_names: list[str] | None
    offsets: np.ndarray
    uf: UnitFactors


def _draw_diagram(ctx: _Ctx, key: str, layer: str, curves: list[_FlatCurve], labels: list[_Label],
                  legend: list[tuple[str, str]]) -> float | None:
    """Outline (and fill) of one diagram type on every element, its label
    requests and its legend line; returns the scale (report units per
    drawing unit) or None when the diagram is zero everywhere."""
    geom, h, us, uf = ctx.geom, ctx.h, ctx.us, ctx.uf
    size = geom.size
    factor, unit = (uf.moment, uf.moment_unit) if key == "moment" else (uf.force, uf.force_unit)
    gmax = max((float(np.max(np.abs(c.y))) for c in curves if len(c.y)), default=0.0)
    if not gmax > 0:
        legend.append((key, f"{key}: zero everywhere"))
        return None
    per_unit = _nice_up(gmax * factor / (_ORDINATE_TARGET * size))   # report units per drawing unit
    k_si = factor / per_unit                                         # drawing units per SI unit
    where = "drawn on the tension side" if key == "moment" else "+ toward local +y"
    legend.append((key, f"{key}: 1 drawing unit = {per_unit:g} {unit} ({where})"))
    transparency = RESULT_LAYER_STYLES[key].fill_transparency
    zero_tol = _ZERO_LABEL * gmax
    # every point of every curve in drawing coordinates, at once
    flat = []
    for c in curves:
        o = c.y * k_si * _SIDE[key]                                  # ordinates [drawing units]
        base = geom.start[c.eid] + (c.x / us)[:, None] * geom.t[c.eid]
        pts = base + o[:, None] * geom.n[c.eid]
        flat.append((o, base, pts, _drawn(c, ctx.rel_tol)))
    omax = np.max([_segment_max(o, c.bounds[:-1]) for c, (o, *_r) in zip(curves, flat)], axis=0)

    def element_labels(i: int, c: _FlatCurve, ci: int, done: set) -> list[tuple[_Label, float]]:
        o, base, pts, _keep = flat[ci]
        sl = slice(c.bounds[i], c.bounds[i + 1])
        got = _curve_labels(c.element(i), key, o[sl], pts[sl], base[sl], geom.n[i], geom.t[i],
                            float(geom.length_m[i]), zero_tol, gmax, factor, ctx.envelope_names, done)
        for lb, _v in got:
            lb.layer = layer
        return got

    best = None  # (|value|, label) of the largest labelled value
    for i in np.flatnonzero(omax > 1e-9 * size):
        a, t, nrm = geom.start[i], geom.t[i], geom.n[i]
        # one closed outline: baseline start, the curve, baseline end (for an
        # envelope then the min curve backwards: the band of possible values)
        ring = [a[None, :]]
        for c, (_o, _base, pts, keep) in zip(curves, flat):
            sl = slice(c.bounds[i], c.bounds[i + 1])
            seg = pts[sl][keep[sl]]
            ring.append(seg if c.role != "min" else seg[::-1])
            if len(ring) == 2:
                ring.append(geom.end[i][None, :])
        poly = np.vstack(ring)
        ctx.pen.polyline(poly, layer, closed=True)
        if ctx.small[i]:
            continue                                                 # too short for fills and labels
        if omax[i] >= 0.15 * h:
            ctx.pen.fill(poly, layer, transparency)
        count = 0
        done: set[tuple[float, str]] = set()
        for ci, c in enumerate(curves):
            for lb, v in element_labels(i, c, ci, done):
                if count < _MAX_LABELS:
                    labels.append(lb)
                    count += 1
                    if abs(v) > (best[0] if best else -1.0):
                        best = (abs(v), lb)
            if c.role == "single":
                for x0 in _zero_crossings(c.element(i), zero_tol)[:2]:
                    if count >= _MAX_LABELS:
                        break
                    p = a + t * (x0 / us)
                    xg = (ctx.offsets[i] + x0) * uf.length
                    labels.append(_Label(3.0, f"{_SYMBOL[key]}=0 @ {_fmt(xg)}", layer, p, p, nrm, t))
                    count += 1
    # the diagram's overall extreme always gets a label, first in line
    if best is None or best[0] < gmax * (1 - 1e-9):
        ci = int(np.argmax([np.max(np.abs(c.y)) for c in curves]))
        c = curves[ci]
        i = int(c.eid[int(np.argmax(np.abs(c.y)))])
        got = element_labels(i, c, ci, set())
        if got:
            lb, v = max(got, key=lambda g: abs(g[1]))
            labels.append(lb)
            best = (abs(v), lb)
    if best is not None:
        best[1].priority = 0.0
    return per_unit


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
    geom = _frame_geom(model)
    size = geom.size
    h = float(f"{size * _TEXT_RATIO:.2g}")
    pen = _Pen(doc, size)
    summary = DrawingSummary(layers=names, text_height=h, shown=sel.label)
    frame = model.frame
    groups_of = {m.id: off for g in member_groups(frame).values() for m, off in zip(g.members, g.offsets)}
    labels: list[_Label] = []

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
    ctx = _Ctx(pen=pen, geom=geom, h=h, us=us, small=small,
               # straightness tolerance of the drawn polylines: 0.1 % of the element's
               # largest value, 2 % on elements too short to read (a big frame seen whole)
               rel_tol=np.where(small, 2e-2, 1e-3),
               envelope_names=[r.name for r in sel.results] if sel.envelope else None,
               offsets=np.array([groups_of.get(m.id, 0.0) for m in frame.members]), uf=uf)
    legend: list[tuple[str, str]] = []

    # 2. draw the diagrams
    for key in _DIAGRAMS:
        curves = _curves(stations, key, sel.envelope, n_el) if stations is not None else []
        summary.scales[key] = _draw_diagram(ctx, key, names[key], curves, labels, legend)

    # 3. reactions
    arrows = _draw_reactions(pen, model, geom, sel, names["reactions"], uf, h, labels)
    legend.append(("reactions", f"reactions: {uf.force_unit}, {uf.moment_unit}; arrows show each component's "
                                f"direction, values signed (+X, +Y, moment counter-clockwise)"))

    # 4. deflected shape
    _draw_deflected(pen, model, geom, sel, names["deflected"], h, summary, legend)

    # 5. labels, most important first
    frame_lines = shapely.linestrings(np.stack([geom.start, geom.end], axis=1)) if len(geom.start) else []
    placer = LabelPlacer(list(frame_lines) + arrows, cell=4 * h)
    font = _font(h)
    labels.sort(key=lambda lb: lb.priority)
    for lb in labels:
        w = _text_width(font, lb.text, h)
        half_w, half_h = 0.5 * w + 0.15 * h, 0.5 * h + 0.2 * h
        x, y, _ok = placer.place(_label_candidates(lb, half_w, half_h, h), half_w, half_h)
        pen.text(lb.text, (x, y), h, lb.layer)
    summary.labels, summary.forced = placer.placed, placer.forced

    # 6. legend and notes beside the frame
    _draw_legend_and_notes(pen, model, det, geom, names, legend, h, uf, sel.label, sel.envelope)
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
    """Arrows at the supports; returns their shafts as shapely lines (label obstacles)."""
    nodes, table = _reaction_table(sel)
    if not nodes:
        return []
    frame = model.frame
    size = geom.size
    La, gap, head = 0.07 * size, 0.012 * size, min(0.3 * 0.07 * size, 1.4 * h)
    fmax = float(np.max(np.abs(table[:, :, :2]))) if table.size else 0.0
    mmax = float(np.max(np.abs(table[:, :, 2]))) if table.size else 0.0
    names = [r.name for r in sel.results]
    shafts = []
    for i, nid in enumerate(nodes):
        p = np.array([frame.nodes[nid].x, frame.nodes[nid].y]) / model.unit_scale
        for comp, sym in ((0, "Rx"), (1, "Ry"), (2, "Mr")):
            vals = table[:, i, comp]
            ref = mmax if comp == 2 else fmax
            if not ref > 0 or np.max(np.abs(vals)) <= 1e-9 * ref:
                continue
            kmax, kmin = int(np.argmax(vals)), int(np.argmin(vals))
            v_big = vals[kmax] if abs(vals[kmax]) >= abs(vals[kmin]) else vals[kmin]
            factor = uf.moment if comp == 2 else uf.force
            if sel.envelope and abs(vals[kmax] - vals[kmin]) > 1e-9 * ref:
                texts = [f"{sym} max={_fmt(vals[kmax] * factor)} [{names[kmax]}]",
                         f"{sym} min={_fmt(vals[kmin] * factor)} [{names[kmin]}]"]
            elif sel.envelope:
                texts = [f"{sym}={_fmt(v_big * factor)} [all]"]
            else:
                texts = [f"{sym}={_fmt(v_big * factor)}"]
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
            for k, text in enumerate(texts):
                labels.append(_Label(0.5 + 0.01 * k, text, layer, anchor - along * (1.6 * h * k), p, out, along))
    return shafts


def _draw_deflected(pen: _Pen, model, geom: _FrameGeom, sel: Selection, layer: str, h: float,
                    summary: DrawingSummary, legend: list[tuple[str, str]]) -> None:
    """Exaggerated deflected shape of the result (or, for an envelope, of the
    result with the largest nodal displacement).

    Elements long enough to carry labels are drawn exactly (the member
    results' deflection); shorter ones as the chord between their displaced
    ends, unless the results offer batch sampling (``members.sample("u" |
    "v", rows, x)``), which draws every element exactly.  The exaggeration
    uses the exact largest displacement when the results have
    ``member_table()``.
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
    shapes: list[tuple[np.ndarray, np.ndarray]] = []                           # (base points, displacements)
    chords = 0
    if callable(getattr(res.members, "sample", None)):
        pos = {mid: j for j, mid in enumerate(res.members)}
        rows = np.repeat(np.array([pos[m.id] for m in frame.members]), _DEFL_SAMPLES)
        x = np.outer(geom.length_m, unit).ravel()
        u = np.asarray(res.members.sample("u", rows, x), float).reshape(n_el, -1)
        v = np.asarray(res.members.sample("v", rows, x), float).reshape(n_el, -1)
        for i in range(n_el):
            disp = (np.outer(u[i], geom.t[i]) + np.outer(v[i], geom.n[i])) / us
            shapes.append((geom.start[i] + np.outer(geom.length_m[i] * unit / us, geom.t[i]), disp))
    else:
        small = geom.length_m / us < 3 * h
        for i, m in enumerate(frame.members):
            if small[i]:
                shapes.append((np.vstack([geom.start[i], geom.end[i]]), node_d[[si[i], ei[i]]]))
                chords += 1
                continue
            d = res.members[m.id].deflection(geom.length_m[i] * unit)
            if d is None:
                legend.append(("deflected", "deflected shape: not available (member sections are needed)"))
                return
            u, v = (np.broadcast_to(np.asarray(q, float), unit.shape) for q in d)
            disp = (np.outer(u, geom.t[i]) + np.outer(v, geom.n[i])) / us
            shapes.append((geom.start[i] + np.outer(geom.length_m[i] * unit / us, geom.t[i]), disp))
    dmax = max(float(np.max(np.hypot(dd[:, 0], dd[:, 1]))) for _b, dd in shapes)
    table = getattr(res, "member_table", None)
    if table is not None:
        exact = np.asarray(table().get("deflection_max", []), dtype=float) / us
        if exact.size and np.isfinite(exact).any():
            dmax = max(dmax, float(np.nanmax(exact)))
    if not dmax > 0:
        legend.append(("deflected", "deflected shape: no displacement"))
        return
    factor = _nice_down(_DEFLECTION_TARGET * geom.size / dmax)
    for base, disp in shapes:
        pen.polyline(base + factor * disp, layer, dashed=True)
    summary.deflection_factor = factor
    summary.deflection_result = res.name
    which = f" of {res.name}" if sel.envelope or len(sel.results) > 1 else ""
    note = "; short elements drawn as chords" if chords else ""
    legend.append(("deflected", f"deflected shape{which}: displacements exaggerated x {factor:g}{note}"))


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
                           envelope: bool) -> None:
    x0 = geom.bounds[2] + 0.25 * geom.size
    y = geom.bounds[3]
    pen.text("dxf2frame results", (x0, y), 1.4 * h, names["notes"], style="D2F-NOTES",
             align=TextEntityAlignment.TOP_LEFT)
    y -= 2.6 * h
    sw = 2.0 * h
    for key, line in legend:
        layer = names[key]
        pen.polyline([(x0, y), (x0 + sw, y), (x0 + sw, y - h), (x0, y - h)], layer, closed=True,
                     dashed=key == "deflected")
        pen.text(line, (x0 + sw + 0.8 * h, y), h, layer, style="D2F-NOTES", align=TextEntityAlignment.TOP_LEFT)
        y -= 1.9 * h
    if envelope:
        pen.text("[name] beside a value: the combination that governs it", (x0, y), h, names["notes"],
                 style="D2F-NOTES", align=TextEntityAlignment.TOP_LEFT)
        y -= 1.9 * h
    paras = _notes_paragraphs(model, det, uf, shown, [])
    pen.notes(paras, (x0, y - 0.8 * h), h, max(0.6 * geom.size, 45 * h), names["notes"])


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
