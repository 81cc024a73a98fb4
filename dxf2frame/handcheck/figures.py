"""Figures of the hand-check sheets (matplotlib object API, no pyplot).

Two drawings per cut:

* the free body: the isolated part of the frame, every force on it (loads
  blue, reactions and member end forces green, distributed loads as a row
  of arrows with their resultant dashed at the centroid), the internal
  forces N, V, M at the cut drawn in their *positive* sense (red), and
  dimension lines from the cut to the points of application;
* the element at the cut: a short piece of the member drawn along its
  local x', with N, V and M in their *true* directions on both faces and
  their magnitudes without sign, so it reads the same under any sign
  convention.

Arrows are drawn at a fixed length (not to scale); the numbers carry the
magnitudes.  Coordinates are the frame's, shown in the sheet's length unit.
The free body is drawn at a scale (drawing units per inch of paper) chosen
so that it, its symbols and labels fill the axes; arrows, arcs and rows of
load arrows have fixed sizes on the paper (at least 0.44 inch for a force
arrow; up to twice that on a short free body with room to spare), so they
read the same on a 20 m frame and on a stub at a joint.  Every label is
measured by matplotlib's renderer and written where it touches nothing
drawn and no other label, moved to the nearest free place when its own is
taken (the placement of the result drawing,
:func:`dxf2frame.draw.obstacles.free_spot`), with a leader when moved far.
Figures are built on :class:`matplotlib.figure.Figure` directly, so nothing
touches the process-wide matplotlib state.
"""
from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.patches import Rectangle

from ..numbers import fmt

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.axes import Axes

    from .free_body import FreeBody
    from ..report.report import UnitFactors

__all__ = ["draw_free_body", "draw_element", "sheet_figure", "sheet_page"]

LOAD = "#1f5fbf"
SUPPORT = "#2e8b3a"
INTERNAL = "#c0282d"
DIM = "#555555"


def _fmt(v: float) -> str:
    return fmt(v)


# sizes on the sheet [inch]: symbols are sized from the sheet's scale (drawing units per inch),
# so an arrow reads the same however long the free body is
_FORCE_IN = 0.6          # a force arrow (reaction, load)
_RESULTANT_IN = 0.25     # a distributed load's resultant, beyond its row of arrows
_CUT_IN = 0.55           # N and V at the cut
_CUT_ARC_IN = 0.3        # M at the cut
_COUPLE_IN = 0.22        # a couple's arc
_ROW_IN = 0.3            # the largest arrow of a distributed load's row
_ROW_HEAD_IN = 0.12      # a row arrow shorter than this is drawn without its head (too short to carry one)
_STACK_IN = 0.38         # spacing of distributed loads stacked on one member
_DIM_GAP_IN = 0.22       # from the drawing to the first dimension line
_DIM_PITCH_IN = (0.24, 0.42)  # between dimension lines (along x, along y): a label fits between two
_MARGIN_IN = 0.12        # white border inside the axes
_LABEL_PT, _DIM_PT = 7.0, 6.0
_DIM_MIN_IN = 0.08       # a dimension shorter than this on paper is not drawn (the equations give it)
_LEADER_IN = 0.25        # a label moved farther than this from its place gets a leader line
_MAX_GROW = 2.0          # symbols of a short free body are drawn up to this much larger
_MIN_GROW = 0.8          # and of a crowded one down to this much smaller
_BODY_SHARE = 0.45       # the free body itself gets at least this share of the axes' width or height


def _arrow(ax: "Axes", tail, head, color: str, *, lw: float = 1.4, ls: str = "-", z: int = 3,
           gid: str = "force", head_on: bool = True) -> None:
    ax.annotate("", xy=tuple(head), xytext=tuple(tail),
                arrowprops=dict(arrowstyle="-|>" if head_on else "-", color=color, lw=lw, linestyle=ls,
                                shrinkA=0, shrinkB=0, mutation_scale=10), zorder=z).set_gid(gid)


def _arc(ax: "Axes", center, r: float, a0: float, a1: float, color: str, *, lw: float = 1.3) -> np.ndarray:
    """An arc arrow around ``center`` from angle ``a0`` to ``a1`` [rad], head
    at ``a1``; returns the arc's points."""
    t = np.linspace(a0, a1, 40)
    xs, ys = center[0] + r * np.cos(t), center[1] + r * np.sin(t)
    ax.plot(xs[:-1], ys[:-1], color=color, lw=lw, zorder=3)
    _arrow(ax, (xs[-3], ys[-3]), (xs[-1], ys[-1]), color, lw=lw, gid="arc")
    return np.column_stack([xs, ys])


def _curved(ax: "Axes", center, r: float, ccw: bool, color: str, *, lw: float = 1.3) -> np.ndarray:
    """A 270 degree arc arrow around ``center``; returns its points."""
    a0, a1 = (-0.75 * math.pi, 0.75 * math.pi) if ccw else (0.75 * math.pi, -0.75 * math.pi)
    return _arc(ax, center, r, a0, a1, color, lw=lw)


class _Sheet:
    """One drawing of a free body at a fixed scale: ``s`` drawing units per
    inch of the sheet.  Collects what is drawn as obstacles (shapely) and
    the labels to write; :meth:`write_labels` writes them where they touch
    nothing drawn and no other label, each moved to the nearest free place
    when its own is taken (:func:`dxf2frame.draw.obstacles.free_spot`, the
    result drawing's placement), with a leader line when moved far."""

    def __init__(self, ax: "Axes", s: float, grow: float = 1.0) -> None:
        self.ax, self.s, self.grow = ax, s, grow
        self.lines: list = []
        self.labels: list[tuple] = []      # (anchor, text, color, size, along, box centre offset rule)
        self.boxes: list[tuple[float, float, float, float]] = []

    def inch(self, v: float) -> float:
        """A symbol's size of ``v`` inches on the sheet in drawing units
        (times ``grow`` on a sheet with room to spare)."""
        return v * self.s * self.grow

    def line(self, pts) -> None:
        import shapely

        a = np.asarray(pts, dtype=float).reshape(-1, 2)
        if len(a) >= 2:
            self.lines.append(shapely.LineString(a))

    def arrow(self, tail, head, color: str, **kw) -> None:
        _arrow(self.ax, tail, head, color, **kw)
        self.line([tail, head])

    def label(self, at, text: str, color: str, *, away=(0.0, 0.0), size: float = _LABEL_PT) -> None:
        """A label for the point ``at``, placed beside it on the side ``away``
        (a unit vector; (0, 0): centred on it) when that place is free."""
        self.labels.append((np.asarray(at, dtype=float), text, color, size, np.asarray(away, dtype=float)))

    def extents(self) -> tuple[float, float, float, float] | None:
        import shapely

        geoms = self.lines + [shapely.box(*b) for b in self.boxes]
        if not geoms:
            return None
        b = shapely.total_bounds(np.array(geoms, dtype=object))
        return float(b[0]), float(b[1]), float(b[2]), float(b[3])

    def write_labels(self) -> None:
        import shapely

        from ..draw.obstacles import free_spot

        ax, s = self.ax, self.s
        fig = ax.figure
        renderer = fig.canvas.get_renderer()
        ext = self.extents()
        if ext is None:
            return
        grow = self.inch(0.35)
        room = (ext[0] - grow, ext[1] - grow, ext[2] + grow, ext[3] + grow)
        gap = 0.03 * s
        for at, text, color, size, away in self.labels:
            t = ax.text(0.0, 0.0, text, color=color, fontsize=size, ha="center", va="center", zorder=5,
                        bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.85))
            bb = t.get_window_extent(renderer)
            pad = 2 * 0.1 * size / 72.0                                  # the box's pad, both sides [in]
            w = (bb.width / fig.dpi + pad) * s
            h = (bb.height / fig.dpi + pad) * s
            reach = 0.5 * (w * abs(away[0]) + h * abs(away[1]))          # centre to edge along ``away``
            c = at + away * (reach + gap + self.inch(0.02))
            box = (c[0] - w / 2, c[1] - h / 2, c[0] + w / 2, c[1] + h / 2)
            blocked = self.lines + [shapely.box(*b) for b in self.boxes]
            dx, dy = free_spot(box, blocked, room, gap)
            c = c + (dx, dy)
            t.set_position((float(c[0]), float(c[1])))
            self.boxes.append((c[0] - w / 2, c[1] - h / 2, c[0] + w / 2, c[1] + h / 2))
            if math.hypot(dx, dy) > self.inch(_LEADER_IN):
                q = (min(max(at[0], c[0] - w / 2), c[0] + w / 2), min(max(at[1], c[1] - h / 2), c[1] + h / 2))
                ax.plot([at[0], q[0]], [at[1], q[1]], color=color, lw=0.5, zorder=4)
                self.line([at, q])


def _axes_inches(ax: "Axes") -> tuple[float, float]:
    fw, fh = ax.figure.get_size_inches()
    pos = ax.get_position()
    return float(pos.width * fw), float(pos.height * fh)


def draw_free_body(ax: "Axes", fb: "FreeBody", uf: "UnitFactors") -> None:
    """Draw the free body of ``fb`` into ``ax`` (coordinates in ``uf.length_unit``).

    The sheet's scale (drawing units per inch) is chosen so that the free
    body, its arrows, labels and dimensions fill the axes; arrows, arcs and
    text have fixed sizes on the sheet, and the labels are placed clear of
    each other and of everything drawn."""
    k = uf.length
    segs = [(np.array(a) * k, np.array(b) * k) for a, b in fb.segments]
    cut = np.array(fb.cut_point) * k
    pts = np.array([p for sg in segs for p in sg] + [cut] + [np.array(t.point) * k for t in fb.terms])
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    span = np.maximum(hi - lo, 1e-12)
    W, H = _axes_inches(ax)
    # the scale at which the body with its symbols (fixed sizes on the sheet)
    # just fills the axes: from the body alone, then from what the symbols
    # took at the scale tried (a few passes)
    s = max(span[0] / W, span[1] / H, 1e-9 * (fb.length * k or 1.0))
    grow = 1.0

    def layout(s: float, grow: float) -> tuple[float, float, float, float]:
        ax.cla()
        sheet = _Sheet(ax, s, grow)
        _draw_body(sheet, fb, segs, cut, k)
        _draw_cut_forces(sheet, fb, cut)
        _draw_terms(sheet, fb, uf)
        _draw_dimensions(sheet, fb, cut, k)
        sheet.write_labels()
        x0, y0, x1, y1 = sheet.extents() or (lo[0], lo[1], hi[0], hi[1])
        m = _MARGIN_IN * s
        return x0 - m, y0 - m, x1 + m, y1 + m

    changed = False                                    # the symbols' size is changed once at most
    for _attempt in range(10):
        x0, y0, x1, y1 = layout(s, grow)
        need = max((x1 - x0) / W, (y1 - y0) / H)
        if need <= s * 1.0001:
            used = need / s
            if not changed and used < 0.75:
                # a short free body leaves the sheet mostly empty: larger symbols (not text)
                grow, changed = min(_MAX_GROW, 0.9 / used), True
                continue
            break
        # symbols take (extent - body) / s inches along each axis: the body gets the rest;
        # when that is less than _BODY_SHARE of the axes, the symbols are drawn smaller first
        size = np.array([W, H])
        room = size - (np.array([x1 - x0, y1 - y0]) - span) / s
        if not changed and float(np.min(room / size)) < _BODY_SHARE:
            grow, changed = _MIN_GROW, True
            continue
        s = float(np.max(span / np.maximum(room, 0.15 * size))) * 1.01
    else:
        # not settled: everything a little smaller, the labels placed again at that scale
        s = need * 1.01
        x0, y0, x1, y1 = layout(s, grow)
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    ax.set_xlim(cx - s * W / 2, cx + s * W / 2)
    ax.set_ylim(cy - s * H / 2, cy + s * H / 2)
    ax.set_aspect("equal")
    ax.set_axis_off()
    ax.set_title(f"Free body: {fb.side} side of the cut (forces at the cut in their positive sense; "
                 f"dimensions in {uf.length_unit})", fontsize=7.5)


def _draw_body(sheet: _Sheet, fb: "FreeBody", segs, cut: np.ndarray, k: float) -> None:
    """The members of the free body, its joints and the cut face."""
    ax = sheet.ax
    ex = np.array(fb.axis, dtype=float)
    ey = np.array([-ex[1], ex[0]])
    for a, b in segs:
        ax.plot([a[0], b[0]], [a[1], b[1]], color="black", lw=2.6, solid_capstyle="round", zorder=2)
        sheet.line([a, b])
    for j in fb.joints:
        ax.plot(j[0] * k, j[1] * k, "o", color="black", ms=3, zorder=2)
    face = np.array([cut - sheet.inch(0.25) * ey, cut + sheet.inch(0.25) * ey])
    ax.plot(*face.T, color=INTERNAL, lw=1.0, ls="--")
    sheet.line(face)


def _draw_cut_forces(sheet: _Sheet, fb: "FreeBody", cut: np.ndarray) -> None:
    """N, V, M at the cut in their positive sense."""
    ex = np.array(fb.axis, dtype=float)
    ey = np.array([-ex[1], ex[0]])
    la = sheet.inch(_CUT_IN)
    out = ex if fb.side == "start" else -ex
    vdir = -ey if fb.side == "start" else ey
    sheet.arrow(cut, cut + la * out, INTERNAL)
    sheet.label(cut + la * out, "N", INTERNAL, away=out)
    vbase = cut + 0.35 * la * out
    sheet.arrow(vbase - 0.5 * la * vdir, vbase + 0.5 * la * vdir, INTERNAL)
    sheet.label(vbase + 0.5 * la * vdir, "V", INTERNAL, away=vdir)
    arc = _curved(sheet.ax, cut, sheet.inch(_CUT_ARC_IN), fb.side == "start", INTERNAL)
    sheet.line(arc)
    sheet.label(cut + sheet.inch(_CUT_ARC_IN) * np.array([0.72, 0.72]), "M", INTERNAL, away=(0.7071, 0.7071))


def _draw_terms(sheet: _Sheet, fb: "FreeBody", uf: "UnitFactors") -> None:
    """Every load and reaction on the free body, labelled."""
    k = uf.length
    wmax = max([max(abs(t.distributed.w0), abs(t.distributed.w1)) for t in fb.terms if t.distributed] + [0.0])
    stacked: dict[str, float] = {}
    seen: dict[tuple[float, float, float, float], int] = {}
    unit = sheet.inch(1.0)
    for t in fb.terms:
        p = np.array(t.point) * k
        color = SUPPORT if t.kind in ("reaction", "end force") else LOAD
        if t.distributed is not None:
            _draw_distributed(sheet, t, p, uf, wmax, stacked)
            continue

        def force(dvec: np.ndarray, text: str) -> None:
            # forces along one line of action at one point are drawn one behind the other
            key = (round(float(p[0]) / unit, 2), round(float(p[1]) / unit, 2),
                   round(float(dvec[0]), 3), round(float(dvec[1]), 3))
            la = sheet.inch(_FORCE_IN) * (1.0 + 0.6 * seen.get(key, 0))
            seen[key] = seen.get(key, 0) + 1
            sheet.arrow(p - dvec * la, p, color)
            sheet.label(p - dvec * la, text, color, away=-dvec)

        if t.kind == "reaction":
            for comp, vec in ((t.fx, np.array([1.0, 0.0])), (t.fy, np.array([0.0, 1.0]))):
                if abs(comp) > 1e-12 * (abs(t.fx) + abs(t.fy)):
                    force(vec * math.copysign(1.0, comp), f"{t.label}{'x' if vec[0] else 'y'} = "
                          f"{_fmt(abs(comp) * uf.force)} {uf.force_unit}")
        elif t.fx or t.fy:
            f = np.array([t.fx, t.fy])
            force(f / np.linalg.norm(f), f"{t.label} = {_fmt(np.linalg.norm(f) * uf.force)} {uf.force_unit}")
        if t.couple:
            r = sheet.inch(_COUPLE_IN)
            arc = _curved(sheet.ax, p, r, t.couple > 0, color)
            sheet.line(arc)
            sheet.label(p + r * np.array([0.72, 0.72]), f"{t.label} = {_fmt(abs(t.couple) * uf.moment)} "
                        f"{uf.moment_unit}", color, away=(0.7071, 0.7071))


def _draw_distributed(sheet: _Sheet, t, p: np.ndarray, uf: "UnitFactors", wmax: float,
                      stacked: dict[str, float]) -> None:
    """A distributed load as its row of arrows plus its resultant (dashed);
    several on one member are stacked away from it."""
    k = uf.length
    d = t.distributed
    u = np.array(d.direction)
    along = np.array(d.member_axis)
    c0 = p - (d.centroid_s - d.s0) * along * k
    c1 = p + (d.s1 - d.centroid_s) * along * k
    n = max(3, int(np.linalg.norm(c1 - c0) / sheet.inch(0.3)) + 2)
    lift = stacked.get(d.member, 0.0)
    stacked[d.member] = lift + sheet.inch(_STACK_IN)
    c0, c1 = c0 - u * lift, c1 - u * lift
    tails = []
    for i in range(n):
        f = i / (n - 1)
        w = d.w0 + (d.w1 - d.w0) * f
        head = c0 + (c1 - c0) * f
        h = sheet.inch(_ROW_IN) * (abs(w) / wmax if wmax else 0.0)
        tail = head - u * h
        tails.append(tail)
        if h > sheet.inch(0.01):
            sheet.arrow(tail, head, LOAD, lw=0.8, gid="row", head_on=h >= sheet.inch(_ROW_HEAD_IN))
    tails = np.array(tails)
    sheet.ax.plot(tails[:, 0], tails[:, 1], color=LOAD, lw=0.8)
    sheet.line(tails)
    start = p - u * (sheet.inch(_ROW_IN + _RESULTANT_IN) + lift)
    sheet.arrow(start, p - u * lift, LOAD, ls="--", lw=1.2)
    sheet.label(start, f"{t.label} = {_fmt(d.resultant * uf.force)} {uf.force_unit}", LOAD, away=-u)


def _draw_dimensions(sheet: _Sheet, fb: "FreeBody", cut: np.ndarray, k: float) -> None:
    """Dimension lines from the cut to the points of application (up to five
    each way, none shorter than :data:`_DIM_MIN_IN` on paper: the sheet's
    equations state every lever arm), under and to the right of everything
    drawn."""
    ax = sheet.ax
    tiny = _DIM_MIN_IN * sheet.s                       # shorter on paper: left to the sheet's equations
    xs = sorted({round(float(t.point[0] * k - cut[0]), 9) for t in fb.terms
                 if abs(t.point[0] * k - cut[0]) >= tiny}, key=abs)[:5]
    ys = sorted({round(float(t.point[1] * k - cut[1]), 9) for t in fb.terms
                 if abs(t.point[1] * k - cut[1]) >= tiny}, key=abs)[:5]
    ext = sheet.extents() or (cut[0], cut[1], cut[0], cut[1])
    short = sheet.inch(0.25)

    def dim(a, b) -> None:
        style = "<->" if math.dist(a, b) >= short else "|-|"
        ax.annotate("", xy=tuple(b), xytext=tuple(a),
                    arrowprops=dict(arrowstyle=style, color=DIM, lw=0.7, shrinkA=0, shrinkB=0,
                                    mutation_scale=6 if style == "|-|" else 10)).set_gid("dim")
        sheet.line([a, b])

    for i, dx in enumerate(xs):
        y = ext[1] - sheet.inch(_DIM_GAP_IN + i * _DIM_PITCH_IN[0])
        dim((cut[0], y), (cut[0] + dx, y))
        sheet.label((cut[0] + dx / 2, y), f"{_fmt(abs(dx))}", DIM, away=(0.0, 1.0), size=_DIM_PT)
    for i, dy in enumerate(ys):
        x = ext[2] + sheet.inch(_DIM_GAP_IN + i * _DIM_PITCH_IN[1])
        dim((x, cut[1]), (x, cut[1] + dy))
        sheet.label((x, cut[1] + dy / 2), f"{_fmt(abs(dy))}", DIM, away=(1.0, 0.0), size=_DIM_PT)
    if xs or ys:
        ax.plot([cut[0]], [cut[1]], "x", color=DIM, ms=5)


def draw_element(ax: "Axes", fb: "FreeBody", uf: "UnitFactors") -> None:
    """A short element at the cut with N, V, M in their true directions (no signs)."""
    n, v, m = fb.n, fb.v, fb.m
    zn, zv, zm = fb._zero("n"), fb._zero("v"), fb._zero("m")
    ax.add_patch(Rectangle((-1, -0.35), 2, 0.7, fc="#eeeeee", ec="black", lw=1.0))
    if abs(n) > zn:
        s = 1.0 if n > 0 else -1.0  # tension: arrows pull away from both faces
        _arrow(ax, (-1.0 if s > 0 else -1.9, 0), (-1.9 if s > 0 else -1.0, 0), INTERNAL)
        _arrow(ax, (1.0 if s > 0 else 1.9, 0), (1.9 if s > 0 else 1.0, 0), INTERNAL)
        ax.text(0, 0.05, f"N = {_fmt(abs(n) * uf.force)} {uf.force_unit}\n"
                f"{'tension' if n > 0 else 'compression'}", ha="center", va="center", fontsize=7, color=INTERNAL)
    if abs(v) > zv:
        s = 1.0 if v > 0 else -1.0  # positive: up on the left face, down on the right face
        _arrow(ax, (-1.1, -0.4 * s), (-1.1, 0.4 * s), INTERNAL)
        _arrow(ax, (1.1, 0.4 * s), (1.1, -0.4 * s), INTERNAL)
        ax.text(0, -0.62, f"V = {_fmt(abs(v) * uf.force)} {uf.force_unit}", ha="center", va="top",
                fontsize=7, color=INTERNAL)
    if abs(m) > zm:
        sag = m > 0  # sagging: clockwise on the left face, counter-clockwise on the right face
        half = 0.5 * math.pi
        if sag:
            _arc(ax, (-1.0, 0.0), 0.6, 3 * half, half, "#7a1fa2")   # clockwise round the left face
            _arc(ax, (1.0, 0.0), 0.6, -half, half, "#7a1fa2")       # counter-clockwise round the right face
        else:
            _arc(ax, (-1.0, 0.0), 0.6, half, 3 * half, "#7a1fa2")
            _arc(ax, (1.0, 0.0), 0.6, half, -half, "#7a1fa2")
        ax.text(0, 0.68, f"M = {_fmt(abs(m) * uf.moment)} {uf.moment_unit}, {'sagging' if sag else 'hogging'}",
                ha="center", va="bottom", fontsize=7, color="#7a1fa2")
    _arrow(ax, (-0.6, -1.05), (0.6, -1.05), DIM, lw=0.8)
    ax.text(0, -1.12, "local x' (member start → end)", ha="center", va="top", fontsize=6, color=DIM)
    ax.set_xlim(-2.3, 2.3)
    ax.set_ylim(-1.5, 1.25)
    ax.set_aspect("equal")
    ax.set_axis_off()
    ax.set_title("Element at the cut: true directions", fontsize=7.5)


def sheet_figure(fb: "FreeBody", uf: "UnitFactors") -> Figure:
    """The PNG figure of one sheet: free body (left) and element (right)."""
    fig = Figure(figsize=(9.0, 5.0))
    FigureCanvasAgg(fig)
    draw_free_body(fig.add_axes((0.01, 0.02, 0.66, 0.92)), fb, uf)
    draw_element(fig.add_axes((0.69, 0.15, 0.30, 0.7)), fb, uf)
    return fig


def sheet_page(fb: "FreeBody", uf: "UnitFactors", lines: list[str]) -> Figure:
    """One A4 portrait PDF page: the sheet's text above, its figures below."""
    fig = Figure(figsize=(8.27, 11.69))
    FigureCanvasAgg(fig)
    top, bottom = 0.975, 0.40
    height_pt = (top - bottom) * 11.69 * 72
    width_pt = 0.92 * 8.27 * 72
    longest = max((len(s) for s in lines), default=1)
    size = min(8.0, height_pt / (1.22 * max(len(lines), 1)), width_pt / (0.61 * max(longest, 1)))
    fig.text(0.04, top, "\n".join(lines), family="monospace", fontsize=size, va="top", ha="left",
             linespacing=1.1)
    draw_free_body(fig.add_axes((0.03, 0.02, 0.62, 0.36)), fb, uf)
    draw_element(fig.add_axes((0.66, 0.08, 0.32, 0.26)), fb, uf)
    return fig
