"""PNG preview of a DXF drawing, rendered by ezdxf's drawing add-on.

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
from pathlib import Path
from typing import Iterable

import ezdxf
from ezdxf import bbox
from ezdxf.addons.drawing import Frontend, RenderContext
from ezdxf.addons.drawing.config import BackgroundPolicy, Configuration
from ezdxf.addons.drawing.matplotlib import MatplotlibBackend
from ezdxf.npshapes import to_matplotlib_path
from matplotlib.collections import PathCollection
from matplotlib.path import Path as MplPath
from ezdxf.addons.drawing.properties import LayoutProperties
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
    backend = _QuickBackend(ax) if box is not None else MatplotlibBackend(ax)
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


def render_panels_png(
    dxf_path: Path,
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
    same window, so they line up.

    Parameters
    ----------
    panels : (title, [layer names]) per panel, drawn left to right, two per row
    hide : layers never drawn in any panel (compared case-insensitively)
    footer : a line of text under the panels (the caution)
    """
    doc = _load(Path(dxf_path))
    msp = doc.modelspace()
    hidden = {h.upper() for h in hide}
    shown_extra = {name.upper() for _, names in panels for name in names}

    def base(entity) -> bool:
        return entity.dxf.get("layer", "0").upper() not in hidden

    def in_any_panel(entity) -> bool:
        layer = entity.dxf.get("layer", "0").upper()
        return layer not in hidden or layer in shown_extra

    bounded = _Bounded(doc, msp, in_any_panel)
    box = bounded.box
    if box is None:
        return render_doc_png(doc, png_path, dpi=dpi)
    pad = 0.04 * max(box[2] - box[0], box[3] - box[1])
    x0, y0, x1, y1 = box[0] - pad, box[1] - pad, box[2] + pad, box[3] + pad
    w, h = x1 - x0, y1 - y0
    cols = 2 if len(panels) > 1 else 1
    rows = -(-len(panels) // cols)
    title_in, footer_in = 0.35, (0.45 if footer else 0.1)
    panel_h = max(_PANEL_INCHES * h / w, 1.5)
    fig = Figure(dpi=dpi, figsize=(_PANEL_INCHES * cols, rows * (panel_h + title_in) + footer_in))
    FigureCanvasAgg(fig)
    fig_w, fig_h = fig.get_size_inches()
    span = max(w, h)
    for k, (title, names) in enumerate(panels):
        r, c = divmod(k, cols)
        left = c * _PANEL_INCHES / fig_w
        bottom = (fig_h - (r + 1) * (panel_h + title_in)) / fig_h
        ax = fig.add_axes((left, bottom, _PANEL_INCHES / fig_w, panel_h / fig_h))
        ax.set_axis_off()
        keep = {n.upper() for n in names}

        def wanted(entity, keep=keep, drawn=bounded.drawn(in_any_panel)) -> bool:
            return drawn(entity) and (base(entity) or entity.dxf.get("layer", "0").upper() in keep)

        config = Configuration(background_policy=BackgroundPolicy.WHITE)
        props = LayoutProperties.from_layout(msp)
        props.set_colors("#ffffff")
        frontend = Frontend(RenderContext(doc), _QuickBackend(ax, adjust_figure=False), config)
        frontend.push_property_override_function(_hide_small_text(_MIN_TEXT_PX * span / (_PANEL_INCHES * dpi)))
        frontend.draw_layout(msp, finalize=True, filter_func=wanted, layout_properties=props)
        ax.set_xlim(x0, x1)
        ax.set_ylim(y0, y1)
        ax.set_aspect("equal", adjustable="box")
        fig.text(left + 0.01, bottom + panel_h / fig_h + 0.05 / fig_h, title, fontsize=11,
                 fontweight="bold", va="bottom", ha="left", color="#222222")
    if footer:
        fig.text(0.01, 0.12 / fig_h, footer, fontsize=9, va="bottom", ha="left", color="#444444")
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white")
    write_bytes(png_path, buf.getvalue())
    return bounded.notes
