"""PNG preview of a DXF drawing.

:func:`render_panels_png` (the preview of ``solve``) draws from the
geometry of the document already in memory (the result drawing as the
writer built it; nothing is read again): every entity is flattened once
into vertex arrays (block definitions once per block, each reference by one
numpy transform), and each panel is a handful of matplotlib collections
(one ``LineCollection`` per colour, weight and dash, one ``PolyCollection``
per fill colour), never an artist per entity.  Only readable text is drawn
as text artists.  :func:`render_png` renders a whole drawing file with
ezdxf's drawing add-on.

The picture is the modelspace of the drawing on a white background, cropped
to the drawn content, written atomically.  Text too small to read in the
picture (under 1.5 pixels tall, e.g. the attributes of thousands of load
blocks on a big frame) is left out: drawing glyphs nobody can read is what
makes big previews slow.  Matplotlib is used through its
object API with the Agg canvas (no pyplot, no change of the process-wide
matplotlib backend), so rendering is safe in worker processes and threads.
"""
from __future__ import annotations

import io
import math
from functools import lru_cache
from pathlib import Path
from typing import Iterable

import ezdxf
import numpy as np
from ezdxf import bbox
from matplotlib.collections import PathCollection
from matplotlib.path import Path as MplPath
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from ..atomic import write_bytes

__all__ = ["render_png", "render_doc_png", "render_panels_png"]


#: Longest side of the picture in inches; with dpi=150 about 1800 px.
_FIGURE_INCHES = 12.0
#: Text shorter than this in the picture [px] is not drawn.
_MIN_TEXT_PX = 1.5
_TEXT_TYPES = {"TEXT", "ATTRIB", "MTEXT", "ATTDEF"}


def _load(dxf_path: Path) -> "ezdxf.document.Drawing":
    """Open the drawing the way the reader does (damaged files recovered)."""
    from ..drawing_file import open_document

    doc, _notes = open_document(dxf_path)
    return doc


def render_doc_png(
    doc: "ezdxf.document.Drawing",
    png_path: Path,
    *,
    dpi: int = 150,
    layers: Iterable[str] | None = None,
) -> list[str]:
    """Render the modelspace of an open document to ``png_path`` (atomic).

    Returns notes naming the entities left out (see :class:`_Bounded`).

    Parameters
    ----------
    doc : an ezdxf document
    png_path : output PNG file
    dpi : resolution; the longer side of the picture is about 12 inches
    layers : when given, only entities on these layers are drawn (names
        compared case-insensitively); otherwise every visible layer.
    """
    # ezdxf's drawing add-on imports pyplot: loaded only for this whole-drawing render
    from ezdxf.addons.drawing import Frontend, RenderContext
    from ezdxf.addons.drawing.config import BackgroundPolicy, Configuration
    from ezdxf.addons.drawing.matplotlib import MatplotlibBackend
    from ezdxf.addons.drawing.properties import LayoutProperties

    msp = doc.modelspace()
    keep = {name.upper() for name in layers} if layers is not None else None

    def wanted_layer(entity) -> bool:
        return keep is None or entity.dxf.get("layer", "0").upper() in keep

    bounded = _Bounded(doc, msp, wanted_layer)
    wanted = bounded.drawn(wanted_layer)
    box = bounded.box
    fig = Figure(dpi=dpi)
    FigureCanvasAgg(fig)
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    ctx = RenderContext(doc)
    config = Configuration(background_policy=BackgroundPolicy.WHITE)
    layout_properties = LayoutProperties.from_layout(msp)
    layout_properties.set_colors("#ffffff")
    backend = _quick_backend_class()(ax) if box is not None else MatplotlibBackend(ax)
    frontend = Frontend(ctx, backend, config)
    if box is not None:
        span = max(box[2] - box[0], box[3] - box[1])
        frontend.push_property_override_function(_hide_small_text(_MIN_TEXT_PX * span / (_FIGURE_INCHES * dpi)))
    frontend.draw_layout(msp, finalize=True, filter_func=wanted, layout_properties=layout_properties)
    if box is not None:
        # paths were added without updating the data limits (see _QuickBackend)
        pad = 0.03 * max(box[2] - box[0], box[3] - box[1])
        ax.set_xlim(box[0] - pad, box[2] + pad)
        ax.set_ylim(box[1] - pad, box[3] + pad)
    # size the figure to the drawing's aspect ratio (tight bounds)
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    w, h = abs(x1 - x0), abs(y1 - y0)
    if w <= 0 or h <= 0:
        w = h = 1.0
    if w >= h:
        size = (_FIGURE_INCHES, max(_FIGURE_INCHES * h / w, 1.0))
    else:
        size = (max(_FIGURE_INCHES * w / h, 1.0), _FIGURE_INCHES)
    fig.set_size_inches(*size)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white")
    write_bytes(png_path, buf.getvalue())
    return bounded.notes


@lru_cache(maxsize=1)
def _quick_backend_class():
    """The collecting backend (defined on first use: its base class comes
    from ezdxf's drawing add-on, which imports pyplot)."""
    from ezdxf.addons.drawing.matplotlib import MatplotlibBackend
    from ezdxf.npshapes import to_matplotlib_path

    class _QuickBackend(MatplotlibBackend):
        """Matplotlib backend that collects what the frontend draws and adds it
        as a few collections at the end instead of one artist per primitive
        (one artist each is most of the time of a big drawing).

        Drawing order: translucent fills (the diagram hatches), then lines and
        outlines, then opaque fills (text glyphs, arrow heads, solids), then
        points.  The caller sets the axes limits from the drawing's extents.
        """

        def __init__(self, ax, **kwargs) -> None:
            super().__init__(ax, **kwargs)
            self._lines: dict[tuple, list] = {}
            self._fills: dict[str, list] = {}
            self._points: dict[str, list] = {}

        def draw_point(self, pos, properties) -> None:
            self._points.setdefault(properties.color, []).append((pos.x, pos.y))

        def draw_line(self, start, end, properties) -> None:
            key = (properties.color, self.get_lineweight(properties))
            self._lines.setdefault(key, []).append(MplPath([(start.x, start.y), (end.x, end.y)]))

        def draw_solid_lines(self, lines, properties) -> None:
            key = (properties.color, self.get_lineweight(properties))
            bucket = self._lines.setdefault(key, [])
            for s, e in lines:
                bucket.append(MplPath([(s.x, s.y), (e.x, e.y)]))

        def draw_path(self, path, properties) -> None:
            key = (properties.color, self.get_lineweight(properties))
            self._lines.setdefault(key, []).append(to_matplotlib_path([path]))

        def draw_filled_paths(self, paths, properties) -> None:
            self._fills.setdefault(properties.color, []).append(to_matplotlib_path(paths, detect_holes=True))

        def draw_filled_polygon(self, points, properties) -> None:
            xy = [(p.x, p.y) for p in points.vertices()]
            if len(xy) >= 3:
                self._fills.setdefault(properties.color, []).append(MplPath(xy + [xy[0]], closed=True))

        def finalize(self) -> None:
            def fills(translucent: bool) -> None:
                for color, paths in self._fills.items():
                    if (len(color) == 9 and color[7:].lower() != "ff") == translucent:
                        self.ax.add_collection(PathCollection(paths, facecolors=color, edgecolors="none",
                                                              linewidths=0), autolim=False)

            fills(True)
            for (color, lw), paths in self._lines.items():
                self.ax.add_collection(PathCollection(paths, facecolors="none", edgecolors=color,
                                                      linewidths=lw), autolim=False)
            fills(False)
            for color, pts in self._points.items():
                self.ax.scatter(*zip(*pts), s=0.1, c=color)
            super().finalize()

    return _QuickBackend


#: coordinates beyond this [drawing units] are no drawing's content (the
#: reader refuses them on input layers); entities reaching them are not drawn
_MAX_COORDINATE = 1e12
#: a block reference (a MINSERT grid, nested blocks) expanding to more
#: entities than this is not drawn: drawing it would take minutes
_MAX_PIECES = 20_000
#: a block reference opening more levels of nested blocks than this is not
#: drawn: the drawing add-on follows nesting by recursion
_MAX_NESTING = 100


class _Bounded:
    """Which entities of a layout the preview can draw in bounded time and
    space, and their extents.

    Left out (each listed in :attr:`notes`): entities whose bounding box is
    not finite or reaches beyond :data:`_MAX_COORDINATE` (a stray line to
    1e308 would make the window infinite), and block references that
    expand to more than :data:`_MAX_PIECES` entities (a decorative grid of a
    million cells) or nest more than :data:`_MAX_NESTING` levels deep.  Entities without a box (text of unknown size) are drawn.
    """

    def __init__(self, doc, msp, wanted) -> None:
        from ..block_expansion import expanded_count, nesting_depth

        self.notes: list[str] = []
        self._left_out: set[int] = set()
        memo: dict[str, int] = {}
        depths: dict[str, int] = {}
        total = bbox.BoundingBox()
        for e in msp:
            if not wanted(e):
                continue
            if e.dxftype() == "INSERT":
                n = expanded_count(e, doc.blocks, memo)
                if n > _MAX_PIECES:
                    self._leave_out(e, f"it expands to {n} entities")
                    continue
                depth = nesting_depth(e, doc.blocks, depths)
                if depth > _MAX_NESTING:
                    self._leave_out(e, f"its blocks nest {depth} levels deep")
                    continue
            try:
                box = bbox.BoundingBox()
                for b in bbox.multi_recursive([e], fast=True):
                    box.extend(b)
            except Exception:  # noqa: BLE001 - no box: drawn, not counted in the window
                continue
            if not box.has_data:
                continue
            corners = (box.extmin.x, box.extmin.y, box.extmax.x, box.extmax.y)
            if not all(math.isfinite(c) and abs(c) <= _MAX_COORDINATE for c in corners):
                self._leave_out(e, f"it reaches {max(abs(c) for c in corners):.3g} drawing units from the origin")
                continue
            total.extend(box)
        self.box = None
        if total.has_data and max(total.size.x, total.size.y) > 0:
            self.box = (total.extmin.x, total.extmin.y, total.extmax.x, total.extmax.y)

    def _leave_out(self, e, why: str) -> None:
        self._left_out.add(id(e))
        if len(self.notes) < 5:
            self.notes.append(f"preview: {e.dxftype()} #{e.dxf.handle} on layer '{e.dxf.get('layer', '0')}' "
                              f"not drawn ({why})")

    def drawn(self, wanted):
        """``wanted`` less the entities left out."""
        left_out = self._left_out
        return lambda e: id(e) not in left_out and wanted(e)


def _hide_small_text(min_height: float):
    """Property override: text entities (also inside blocks) below ``min_height`` are not drawn."""

    def override(entity, properties) -> None:
        kind = entity.dxftype()
        if kind not in _TEXT_TYPES:
            return
        h = entity.dxf.get("char_height" if kind == "MTEXT" else "height", 0.0)
        if h and h < min_height:
            properties.is_visible = False

    return override


def render_png(
    dxf_path: Path,
    png_path: Path,
    *,
    dpi: int = 150,
    layers: list[str] | None = None,
) -> list[str]:
    """Render the modelspace of the DXF file ``dxf_path`` to ``png_path``.

    White background, picture cropped to the drawing's content, written
    atomically (a failure leaves no PNG).  ``layers`` limits the drawing to
    the named layers (e.g. the frame layers plus ``RESULT-MOMENT``).
    Raises :class:`~dxf2frame.errors.InputFileError` if the file cannot be
    read.  Returns notes naming entities left out (see :class:`_Bounded`).
    """
    return render_doc_png(_load(Path(dxf_path)), Path(png_path), dpi=dpi, layers=layers)


#: Panel width of a multi-panel preview [in].
_PANEL_INCHES = 8.0
#: at most this many text artists per panel (the rest is too small to read anyway)
_MAX_TEXTS = 800
#: segments of a full circle when arcs are flattened
_CIRCLE_SEGMENTS = 48


class _Layers:
    """Colour (hex), dash and visibility of the drawing's layers."""

    def __init__(self, doc) -> None:
        self.color: dict[str, str] = {}
        self.dashed: dict[str, bool] = {}
        self.weight: dict[str, int] = {}
        self.hidden: set[str] = set()
        for layer in doc.layers:
            name = layer.dxf.name.upper()
            if layer.is_off() or layer.is_frozen():
                self.hidden.add(name)
            if layer.dxf.hasattr("true_color"):
                self.color[name] = "#%06x" % layer.dxf.true_color
            else:
                self.color[name] = _aci_hex(abs(layer.dxf.get("color", 7)))
            self.dashed[name] = _is_dashed(layer.dxf.get("linetype", "Continuous"))
            self.weight[name] = layer.dxf.get("lineweight", -3)


def _aci_hex(aci: int) -> str:
    from ezdxf.colors import aci2rgb

    if aci in (0, 7, 256) or not 1 <= aci <= 255:
        return "#000000"  # black/white prints black on the white picture
    r, g, b = aci2rgb(aci)
    return f"#{r:02x}{g:02x}{b:02x}"


def _is_dashed(linetype: str) -> bool:
    return linetype.upper() not in ("CONTINUOUS", "BYLAYER", "BYBLOCK", "")


class _Style:
    """Resolved (colour, line width [pt], dashed) of an entity."""

    __slots__ = ()

    @staticmethod
    def of(e, layer: str, layers: _Layers, block_style: tuple[str, float, bool] | None):
        dxf = e.dxf
        if dxf.hasattr("true_color"):
            color = "#%06x" % dxf.true_color
        else:
            aci = dxf.get("color", 256)
            if aci == 256:
                # "" is layer 0 inside a block: the reference's colour (None: decided per reference)
                color = layers.color.get(layer, "#000000") if layer else None
            elif aci == 0:
                color = block_style[0] if block_style else None
            else:
                color = _aci_hex(aci)
        lt = dxf.get("linetype", "BYLAYER").upper()
        if lt == "BYLAYER":
            dashed = layers.dashed.get(layer, False)
        elif lt == "BYBLOCK":
            dashed = block_style[2] if block_style else False
        else:
            dashed = _is_dashed(lt)
        lw = dxf.get("lineweight", -1)
        if lw == -1:
            lw = layers.weight.get(layer, -3)
        width = min(max(lw / 100 * 72 / 25.4, 0.4), 2.5) if lw > 0 else 0.6
        return color, width, dashed


def _arc_points(cx: float, cy: float, r: float, a0: float, a1: float) -> np.ndarray:
    """Vertices of an arc from ``a0`` to ``a1`` [degrees, counter-clockwise]."""
    sweep = (a1 - a0) % 360.0 or 360.0
    n = max(4, int(math.ceil(_CIRCLE_SEGMENTS * sweep / 360.0)))
    t = np.radians(a0 + np.linspace(0.0, sweep, n + 1))
    return np.column_stack([cx + r * np.cos(t), cy + r * np.sin(t)])


def _path_points(e) -> list[np.ndarray]:
    """Any curve entity through ezdxf's path flattening (bulges, ellipses, splines)."""
    from ezdxf import path as ezpath

    p = ezpath.make_path(e)
    pts = np.array([(v.x, v.y) for v in p.control_vertices()], dtype=float)
    if len(pts) < 1:
        return []
    size = float(np.ptp(pts, axis=0).max()) if len(pts) > 1 else 0.0
    out = []
    for sub in p.sub_paths():
        v = np.array([(q.x, q.y) for q in sub.flattening(max(size, 1e-9) * 2e-3, segments=8)], dtype=float)
        if len(v) >= 2:
            out.append(v)
    return out


class _Shapes:
    """Flattened geometry of a set of entities: polylines and fills per
    (layer, style), and texts; in the coordinates of the entities' owner
    (a block or the modelspace)."""

    def __init__(self) -> None:
        self.lines: dict[tuple, list[np.ndarray]] = {}
        self.fills: dict[tuple, list[np.ndarray]] = {}
        self.texts: list[tuple] = []  # (layer, x, y, height, rotation deg, text, color, ha, va)

    def line(self, key: tuple, pts: np.ndarray) -> None:
        self.lines.setdefault(key, []).append(pts)

    def fill(self, key: tuple, pts: np.ndarray) -> None:
        self.fills.setdefault(key, []).append(pts)


_TEXT_ALIGN = {  # TextEntityAlignment name -> (ha, va)
    "LEFT": ("left", "baseline"), "CENTER": ("center", "baseline"), "RIGHT": ("right", "baseline"),
    "ALIGNED": ("center", "baseline"), "MIDDLE": ("center", "center"), "FIT": ("center", "baseline"),
    "BOTTOM_LEFT": ("left", "bottom"), "BOTTOM_CENTER": ("center", "bottom"), "BOTTOM_RIGHT": ("right", "bottom"),
    "MIDDLE_LEFT": ("left", "center"), "MIDDLE_CENTER": ("center", "center"), "MIDDLE_RIGHT": ("right", "center"),
    "TOP_LEFT": ("left", "top"), "TOP_CENTER": ("center", "top"), "TOP_RIGHT": ("right", "top"),
}
_MTEXT_ALIGN = {1: ("left", "top"), 2: ("center", "top"), 3: ("right", "top"),
                4: ("left", "center"), 5: ("center", "center"), 6: ("right", "center"),
                7: ("left", "bottom"), 8: ("center", "bottom"), 9: ("right", "bottom")}


class _Scene:
    """The geometry of a modelspace, flattened once, with what was left out."""

    def __init__(self, doc, wanted) -> None:
        from ..block_expansion import expanded_count, nesting_depth

        self.doc = doc
        self.layers = _Layers(doc)
        self.shapes = _Shapes()
        self.notes: list[str] = []
        self._blocks: dict[str, _Shapes | None] = {}
        self._counts: dict[str, int] = {}
        self._depths: dict[str, int] = {}
        lo = np.full(2, np.inf)
        hi = np.full(2, -np.inf)
        for e in doc.modelspace():
            layer = e.dxf.get("layer", "0").upper()
            if layer in self.layers.hidden or not wanted(layer):
                continue
            kind = e.dxftype()
            if kind == "INSERT":
                n = expanded_count(e, doc.blocks, self._counts)
                if n > _MAX_PIECES:
                    self._leave_out(e, f"it expands to {n} entities")
                    continue
                depth = nesting_depth(e, doc.blocks, self._depths)
                if depth > _MAX_NESTING:
                    self._leave_out(e, f"its blocks nest {depth} levels deep")
                    continue
            one = _Shapes()
            try:
                self._add(e, layer, one, None, 0)
            except Exception:  # noqa: BLE001 - an entity the preview cannot flatten is not drawn
                continue
            arrays = [a for group in (one.lines, one.fills) for lst in group.values() for a in lst]
            if one.texts:
                arrays.append(np.array([(t[1], t[2]) for t in one.texts], dtype=float))
            if not arrays:
                continue
            pts = np.concatenate(arrays)
            if not np.isfinite(pts).all() or np.abs(pts).max() > _MAX_COORDINATE:
                with np.errstate(invalid="ignore", over="ignore"):
                    reach = float(np.nanmax(np.abs(pts))) if np.isfinite(pts).any() else float("inf")
                self._leave_out(e, f"it reaches {reach:.3g} drawing units from the origin")
                continue
            lo = np.minimum(lo, pts.min(axis=0))
            hi = np.maximum(hi, pts.max(axis=0))
            for k, v in one.lines.items():
                self.shapes.lines.setdefault(k, []).extend(v)
            for k, v in one.fills.items():
                self.shapes.fills.setdefault(k, []).extend(v)
            self.shapes.texts.extend(one.texts)
        if self.shapes.texts:                         # every text whole, not only its insertion point
            corners = _text_corners(self.shapes.texts)
            corners = corners[np.all(np.isfinite(corners), axis=1) & (np.abs(corners).max(axis=1) <= _MAX_COORDINATE)]
            if len(corners):
                lo = np.minimum(lo, corners.min(axis=0))
                hi = np.maximum(hi, corners.max(axis=0))
        self.box = None
        if np.isfinite(lo).all() and (hi - lo).max() > 0:
            self.box = (float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1]))

    def _leave_out(self, e, why: str) -> None:
        if len(self.notes) < 5:
            self.notes.append(f"preview: {e.dxftype()} #{e.dxf.handle} on layer '{e.dxf.get('layer', '0')}' "
                              f"not drawn ({why})")

    # -- flattening ---------------------------------------------------------------

    def _add(self, e, layer: str, out: _Shapes, block_style, depth: int) -> None:
        """Flatten ``e`` (on ``layer``, already resolved) into ``out``."""
        kind = e.dxftype()
        if kind in ("ATTDEF", "POINT", "VIEWPORT", "IMAGE", "WIPEOUT"):
            return
        style = _Style.of(e, layer, self.layers, block_style)
        key = (layer, *style)
        if kind == "LINE":
            s, t = e.dxf.start, e.dxf.end
            out.line(key, np.array([(s.x, s.y), (t.x, t.y)], dtype=float))
        elif kind == "LWPOLYLINE":
            if any(b for b in e.lwpoints.values[4::5]):  # bulges: arcs
                for pts in _path_points(e):
                    out.line(key, pts)
            else:
                pts = np.asarray(e.lwpoints.values, dtype=float).reshape(-1, 5)[:, :2]
                if e.closed and len(pts) > 1:
                    pts = np.vstack([pts, pts[:1]])
                if len(pts) >= 2:
                    out.line(key, pts)
        elif kind in ("CIRCLE", "ARC"):
            c, r = e.dxf.center, e.dxf.radius
            a0, a1 = (0.0, 360.0) if kind == "CIRCLE" else (e.dxf.start_angle, e.dxf.end_angle)
            out.line(key, _arc_points(c.x, c.y, r, a0, a1))
        elif kind in ("SOLID", "TRACE", "3DFACE"):
            v = [e.dxf.get(f"vtx{i}") for i in range(4)]
            v = [p for p in (v[0], v[1], v[3], v[2]) if p is not None] if kind != "3DFACE" else [p for p in v if p]
            out.fill((layer, style[0], 1.0), np.array([(p.x, p.y) for p in v], dtype=float))
        elif kind == "HATCH":
            from ezdxf import path as ezpath

            alpha = 1.0 - (e.transparency if e.dxf.hasattr("transparency") else 0.0)
            for p in ezpath.from_hatch(e):
                pts = np.array([(q.x, q.y) for q in p.flattening(1e-3 * max(1e-9, _path_size(p)), segments=8)],
                               dtype=float)
                if len(pts) >= 3:
                    out.fill((layer, style[0], alpha), pts)
        elif kind in ("TEXT", "ATTRIB"):
            self._text(e, layer, style[0], out)
        elif kind == "MTEXT":
            ins = e.dxf.insert
            ha, va = _MTEXT_ALIGN.get(e.dxf.get("attachment_point", 1), ("left", "top"))
            h = e.dxf.get("char_height", 1.0)
            out.texts.append((layer, ins.x, ins.y, h, e.get_rotation(),
                              _wrapped(e.plain_text(), e.dxf.get("width", 0.0), h), style[0], ha, va))
        elif kind == "INSERT":
            self._insert(e, layer, out, style, depth)
        elif kind in ("POLYLINE", "ELLIPSE", "SPLINE"):
            for pts in _path_points(e):
                out.line(key, pts)

    def _text(self, e, layer: str, color: str, out: _Shapes) -> None:
        text = e.plain_text() if hasattr(e, "plain_text") else e.dxf.get("text", "")
        if not text.strip():
            return
        try:
            align, p1, p2 = e.get_placement()
            ha, va = _TEXT_ALIGN.get(align.name, ("left", "baseline"))
        except Exception:  # noqa: BLE001 - odd alignment data: place at the insertion point
            p1, (ha, va) = e.dxf.insert, ("left", "baseline")
        out.texts.append((layer, p1.x, p1.y, e.dxf.get("height", 1.0), e.dxf.get("rotation", 0.0),
                          text, color, ha, va))

    def _block(self, name: str, depth: int) -> _Shapes | None:
        """The flattened content of a block in its own coordinates (once per block)."""
        if name in self._blocks:
            return self._blocks[name]
        self._blocks[name] = None  # a block containing itself draws once
        blk = self.doc.blocks.get(name)
        if blk is None:
            return None
        shapes = _Shapes()
        for e in blk:
            # layer "0" inside a block takes the reference's layer: marked "" here
            layer = e.dxf.get("layer", "0").upper()
            if layer != "0" and layer in self.layers.hidden:
                continue
            try:
                self._add(e, "" if layer == "0" else layer, shapes, None, depth + 1)
            except Exception:  # noqa: BLE001 - not drawn, as at the top level
                continue
        self._blocks[name] = shapes
        return shapes

    def _insert(self, e, layer: str, out: _Shapes, style, depth: int) -> None:
        if depth > _MAX_NESTING:
            return
        refs = list(e.multi_insert()) if e.mcount > 1 else [e]
        content = self._block(e.dxf.name, depth)
        for ref in refs:
            if content is not None:
                m = np.array(list(ref.matrix44()), dtype=float).reshape(4, 4)
                lin, off = m[:2, :2], m[3, :2]
                scale = math.sqrt(abs(np.linalg.det(lin))) or 1.0
                for (lyr, color, width, dashed), lst in content.lines.items():
                    k = (lyr or layer, color or style[0], width, dashed)
                    for pts in lst:
                        out.line(k, pts @ lin + off)
                for (lyr, color, alpha), lst in content.fills.items():
                    for pts in lst:
                        out.fill((lyr or layer, color or style[0], alpha), pts @ lin + off)
                for (lyr, x, y, h, rot, text, color, ha, va) in content.texts:
                    q = np.array([x, y]) @ lin + off
                    out.texts.append((lyr or layer, q[0], q[1], h * scale, rot + math.degrees(
                        math.atan2(lin[0, 1], lin[0, 0])), text, color or style[0], ha, va))
        for a in e.attribs:
            if not a.dxf.get("invisible", 0):
                a_layer = a.dxf.get("layer", layer).upper()
                self._text(a, a_layer, _Style.of(a, a_layer, self.layers, style)[0] or style[0], out)


def _path_size(p) -> float:
    pts = [(v.x, v.y) for v in p.control_vertices()]
    if len(pts) < 2:
        return 0.0
    a = np.asarray(pts, dtype=float)
    return float(np.ptp(a, axis=0).max())


def _draw_panel(ax, shapes: _Shapes, show, min_text: float, pt_per_unit: float) -> None:
    """Add the shapes on layers ``show(layer)`` to ``ax`` as collections:
    translucent fills, lines, opaque fills, then readable text."""
    from matplotlib.collections import LineCollection, PolyCollection

    def fills(translucent: bool) -> None:
        groups: dict[tuple, list] = {}
        for (layer, color, alpha), lst in shapes.fills.items():
            if show(layer) and (alpha < 1.0) == translucent:
                groups.setdefault((color, alpha), []).extend(lst)
        for (color, alpha), lst in groups.items():
            ax.add_collection(PolyCollection(lst, facecolors=color, edgecolors="none", linewidths=0,
                                             alpha=alpha), autolim=False)

    fills(True)
    groups: dict[tuple, list] = {}
    for (layer, color, width, dashed), lst in shapes.lines.items():
        if show(layer):
            groups.setdefault((color, width, dashed), []).extend(lst)
    for (color, width, dashed), lst in groups.items():
        ax.add_collection(LineCollection(lst, colors=color, linewidths=width,
                                         linestyles="--" if dashed else "solid"), autolim=False)
    fills(False)
    glyphs: dict[str, list] = {}
    drawn = 0
    for (layer, x, y, h, rot, text, color, ha, va) in shapes.texts:
        if drawn >= _MAX_TEXTS:
            break
        if not show(layer) or h < min_text:
            continue
        path = _text_path(text, h, rot, ha, va, x, y)
        if path is not None:
            glyphs.setdefault(color, []).append(path)
            drawn += 1
    for color, paths in glyphs.items():
        ax.add_collection(PathCollection(paths, facecolors=color, edgecolors="none", linewidths=0), autolim=False)


#: font size per cap height: DXF text height is the height of a capital letter
_EM_PER_CAP = 1.0 / 0.72
_LINE_SPACING = 1.6  # cap heights from one line of MTEXT to the next (common practice for drawing text)


def _text_path(text: str, h: float, rot: float, ha: str, va: str, x: float, y: float):
    """The outline of ``text`` in drawing units: cap height ``h``, turned by
    ``rot`` degrees about its alignment point ``(x, y)``.  Glyph outlines
    are cached by matplotlib, so many labels cost little and all of one
    colour become one collection (no text artist per label)."""
    from matplotlib.textpath import TextPath
    from matplotlib.transforms import Affine2D

    lines = [ln for ln in text.splitlines() if ln.strip()] or []
    if not lines:
        return None
    parts = []
    for k, line in enumerate(lines):
        try:
            p = TextPath((0.0, -k * _LINE_SPACING * h), line, size=h * _EM_PER_CAP, prop=_FONT)
        except Exception:  # noqa: BLE001 - a character the font cannot outline: the label is left out
            return None
        if len(p.vertices):
            parts.append(p)
    if not parts:
        return None
    path = MplPath.make_compound_path(*parts)
    (x0, y0), (x1, y1) = path.vertices.min(axis=0), path.vertices.max(axis=0)  # control points: close enough
    dx = {"left": 0.0, "center": -(x0 + x1) / 2, "right": -x1}[ha]
    dy = {"baseline": 0.0, "bottom": -y0, "center": -(y0 + y1) / 2, "top": -y1}[va]
    return Affine2D().translate(dx, dy).rotate_deg(rot).translate(x, y).transform_path(path)


#: em per character of a line of text, an upper estimate of DejaVu Sans' average advance
#: (digits 0.64 em, lower case about 0.6 em; common practice for sizing text boxes)
_EM_PER_CHAR = 0.68


def _wrapped(text: str, width: float, h: float) -> str:
    """An MTEXT's lines wrapped to its column ``width`` (drawing units; 0:
    no column), at about as many characters as fit, as CAD shows it."""
    import textwrap

    if not width or width <= 0 or not h > 0:
        return text
    chars = max(8, int(width / (_EM_PER_CHAR * h * _EM_PER_CAP)))
    return "\n".join(row for line in text.splitlines()
                     for row in (textwrap.wrap(line, chars, break_on_hyphens=False) or [""]))


def _text_corners(texts: list[tuple]) -> np.ndarray:
    """Corners (4k, 2) of the boxes the texts take as :func:`_text_path`
    draws them (estimated from the character count, without outlining the
    glyphs; all texts at once): so the picture's window holds every text
    whole, not only its insertion point."""
    rows = [[ln for ln in str(t[5]).splitlines() if ln.strip()] or [""] for t in texts]
    x, y, h, rot = (np.array([t[j] for t in texts], dtype=float) for j in (1, 2, 3, 4))
    n_lines = np.array([len(r) for r in rows], dtype=float)
    w = np.array([max(len(ln) for ln in r) for r in rows], dtype=float) * _EM_PER_CHAR * h * _EM_PER_CAP
    lo, hi = -(n_lines - 1) * _LINE_SPACING * h - 0.3 * h, h             # descender below, cap height above
    dx = np.select([np.array([t[7] == "center" for t in texts]), np.array([t[7] == "right" for t in texts])],
                   [-w / 2, -w], 0.0)
    va = np.array([t[8] for t in texts])
    dy = np.select([va == "bottom", va == "center", va == "top"], [-lo, -(lo + hi) / 2, -hi], 0.0)
    cx = np.stack([dx, dx + w, dx + w, dx], axis=1)                     # (k, 4)
    cy = np.stack([lo + dy, lo + dy, hi + dy, hi + dy], axis=1)
    a = np.radians(rot)[:, None]
    px = x[:, None] + cx * np.cos(a) - cy * np.sin(a)
    py = y[:, None] + cx * np.sin(a) + cy * np.cos(a)
    return np.stack([px.ravel(), py.ravel()], axis=1)


def _font():
    from matplotlib.font_manager import FontProperties

    return FontProperties(family="DejaVu Sans")


_FONT = _font()


def render_panels_png(
    source,
    png_path: Path,
    panels: list[tuple[str, list[str]]],
    *,
    hide: Iterable[str] = (),
    footer: str = "",
    dpi: int = 150,
) -> list[str]:
    """Render one picture made of panels, one per result quantity.

    Each panel shows the drawing's own layers (less ``hide``, e.g. every
    result layer and the load symbols) plus the panel's layers, so the
    moment, shear and axial diagrams do not pile on top of each other as
    they do when every layer is switched on in CAD.  All panels share the
    same window, so they line up.  Written atomically.

    Parameters
    ----------
    source : an open ezdxf document (the result drawing in memory: nothing
        is read again) or the path of a DXF file
    panels : (title, [layer names]) per panel, drawn left to right, two per row
    hide : layers never drawn in any panel (compared case-insensitively)
    footer : a line of text under the panels (the caution)

    Returns notes naming the entities left out: coordinates beyond
    :data:`_MAX_COORDINATE` or not finite, block references expanding to
    more than :data:`_MAX_PIECES` entities or nesting deeper than
    :data:`_MAX_NESTING` levels.
    """
    doc = _load(Path(source)) if isinstance(source, (str, Path)) else source
    hidden = {h.upper() for h in hide}
    shown_extra = {name.upper() for _, names in panels for name in names}
    scene = _Scene(doc, lambda layer: layer not in hidden or layer in shown_extra)
    box = scene.box or (0.0, 0.0, 1.0, 1.0)
    pad = 0.04 * max(box[2] - box[0], box[3] - box[1])
    x0, y0, x1, y1 = box[0] - pad, box[1] - pad, box[2] + pad, box[3] + pad
    w, h = x1 - x0, y1 - y0
    cols = 2 if len(panels) > 1 else 1
    rows = -(-len(panels) // cols)
    title_in, footer_in = 0.35, (0.45 if footer else 0.1)
    panel_h = min(max(_PANEL_INCHES * h / w, 1.5), 4 * _PANEL_INCHES)
    fig = Figure(dpi=dpi, figsize=(_PANEL_INCHES * cols, rows * (panel_h + title_in) + footer_in))
    FigureCanvasAgg(fig)
    fig_w, fig_h = fig.get_size_inches()
    # data units -> inches: the panel keeps the aspect ratio, the tighter side decides
    inch_per_unit = min(_PANEL_INCHES / w, panel_h / h)
    min_text = _MIN_TEXT_PX / (inch_per_unit * dpi)
    for k, (title, names) in enumerate(panels):
        r, c = divmod(k, cols)
        left = c * _PANEL_INCHES / fig_w
        bottom = (fig_h - (r + 1) * (panel_h + title_in)) / fig_h
        ax = fig.add_axes((left, bottom, _PANEL_INCHES / fig_w, panel_h / fig_h))
        ax.set_axis_off()
        keep = {n.upper() for n in names}
        _draw_panel(ax, scene.shapes, lambda layer, keep=keep: layer not in hidden or layer in keep,
                    min_text, inch_per_unit * 72.0)
        ax.set_xlim(x0, x1)
        ax.set_ylim(y0, y1)
        ax.set_aspect("equal", adjustable="box")
        if title:
            fig.text(left + 0.01, bottom + panel_h / fig_h + 0.05 / fig_h, title, fontsize=11,
                     fontweight="bold", va="bottom", ha="left", color="#222222")
    if footer:
        fig.text(0.01, 0.12 / fig_h, footer, fontsize=9, va="bottom", ha="left", color="#444444")
    buf = io.BytesIO()
    # light compression: a preview is rewritten on every save in watch
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white", pil_kwargs={"compress_level": 1})
    write_bytes(png_path, buf.getvalue())
    return scene.notes
