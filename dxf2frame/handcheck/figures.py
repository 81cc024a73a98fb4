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


def _arrow(ax: "Axes", tail, head, color: str, *, lw: float = 1.4, ls: str = "-", z: int = 3) -> None:
    ax.annotate("", xy=tuple(head), xytext=tuple(tail),
                arrowprops=dict(arrowstyle="-|>", color=color, lw=lw, linestyle=ls, shrinkA=0, shrinkB=0,
                                mutation_scale=10), zorder=z)


def _arc(ax: "Axes", center, r: float, a0: float, a1: float, color: str, *, lw: float = 1.3) -> None:
    """An arc arrow around ``center`` from angle ``a0`` to ``a1`` [rad], head at ``a1``."""
    t = np.linspace(a0, a1, 40)
    xs, ys = center[0] + r * np.cos(t), center[1] + r * np.sin(t)
    ax.plot(xs[:-1], ys[:-1], color=color, lw=lw, zorder=3)
    _arrow(ax, (xs[-3], ys[-3]), (xs[-1], ys[-1]), color, lw=lw)


def _curved(ax: "Axes", center, r: float, ccw: bool, color: str, *, lw: float = 1.3) -> tuple[float, float]:
    """A 270 degree arc arrow around ``center``; returns a point for its label."""
    a0, a1 = (-0.75 * math.pi, 0.75 * math.pi) if ccw else (0.75 * math.pi, -0.75 * math.pi)
    _arc(ax, center, r, a0, a1, color, lw=lw)
    return center[0] + 1.25 * r, center[1] + 1.25 * r


def _label(ax: "Axes", at, text: str, color: str, *, ha: str = "left", va: str = "bottom", size: float = 7) -> None:
    ax.text(at[0], at[1], text, color=color, fontsize=size, ha=ha, va=va, zorder=5,
            bbox=dict(boxstyle="round,pad=0.1", fc="white", ec="none", alpha=0.75))


class _Placer:
    """Nudges load labels so that they do not sit on top of each other.

    Text extents are estimated in data units from the drawing's size (the
    exact extents are only known after layout); good enough to separate
    labels of forces sharing a point."""

    def __init__(self, ax: "Axes", size: float) -> None:
        self.ax, self.cw, self.h = ax, 0.018 * size, 0.05 * size
        self.boxes: list[tuple[float, float, float, float]] = []

    def __call__(self, at, text: str, color: str, *, ha: str = "center", va: str = "center") -> None:
        w = self.cw * len(text)
        x0 = {"left": at[0], "center": at[0] - w / 2, "right": at[0] - w}[ha]
        y = float(at[1])
        for _ in range(12):
            box = (x0, y - self.h / 2, x0 + w, y + self.h / 2)
            if not any(box[0] < b[2] and b[0] < box[2] and box[1] < b[3] and b[1] < box[3] for b in self.boxes):
                break
            y -= self.h
        self.boxes.append(box)
        _label(self.ax, (at[0], y), text, color, ha=ha, va="center")


def draw_free_body(ax: "Axes", fb: "FreeBody", uf: "UnitFactors") -> None:
    """Draw the free body of ``fb`` into ``ax`` (coordinates in ``uf.length_unit``)."""
    k = uf.length
    segs = [(np.array(a) * k, np.array(b) * k) for a, b in fb.segments]
    cut = np.array(fb.cut_point) * k
    pts = [p for s in segs for p in s] + [cut] + [np.array(t.point) * k for t in fb.terms]
    pts_arr = np.array(pts)
    lo, hi = pts_arr.min(axis=0), pts_arr.max(axis=0)
    size = float(max(hi - lo)) or fb.length * k or 1.0
    _draw_body(ax, fb, segs, cut, size, k)
    drawn = _draw_cut_forces(ax, fb, cut, size)
    drawn += _draw_terms(ax, fb, uf, size)
    allp = np.array(pts + drawn)
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    n_x, n_y = _draw_dimensions(ax, fb, cut, size, lo, hi, k)
    ax.set_aspect("equal")
    pad = 0.15 * size
    ax.set_xlim(lo[0] - 2 * pad, hi[0] + 2 * pad + (0.12 * size * n_y))
    ax.set_ylim(lo[1] - pad - 0.09 * size * n_x, hi[1] + pad)
    ax.set_axis_off()
    ax.set_title(f"Free body: {fb.side} side of the cut (forces at the cut in their positive sense; "
                 f"dimensions in {uf.length_unit})", fontsize=7.5)


def _draw_body(ax: "Axes", fb: "FreeBody", segs, cut: np.ndarray, size: float, k: float) -> None:
    """The members of the free body, its joints and the cut face."""
    ex = np.array(fb.axis, dtype=float)
    ey = np.array([-ex[1], ex[0]])
    for a, b in segs:
        ax.plot([a[0], b[0]], [a[1], b[1]], color="black", lw=2.6, solid_capstyle="round", zorder=2)
    for j in fb.joints:
        ax.plot(j[0] * k, j[1] * k, "o", color="black", ms=3, zorder=2)
    ax.plot(*np.array([cut - 0.07 * size * ey, cut + 0.07 * size * ey]).T, color=INTERNAL, lw=1.0, ls="--")


def _draw_cut_forces(ax: "Axes", fb: "FreeBody", cut: np.ndarray, size: float) -> list[np.ndarray]:
    """N, V, M at the cut in their positive sense; returns the points drawn."""
    ex = np.array(fb.axis, dtype=float)
    ey = np.array([-ex[1], ex[0]])
    la = 0.2 * size
    out = ex if fb.side == "start" else -ex
    vdir = -ey if fb.side == "start" else ey
    _arrow(ax, cut, cut + 0.8 * la * out, INTERNAL)
    _label(ax, cut + 0.8 * la * out, " N", INTERNAL, va="center")
    vbase = cut + 0.25 * la * out
    _arrow(ax, vbase - 0.4 * la * vdir, vbase + 0.4 * la * vdir, INTERNAL)
    _label(ax, vbase + 0.45 * la * vdir, "V", INTERNAL, ha="center", va="center")
    lab = _curved(ax, cut, 0.12 * size, fb.side == "start", INTERNAL)
    _label(ax, lab, "M", INTERNAL)
    return [cut + 0.8 * la * out, vbase - 0.4 * la * vdir, vbase + 0.4 * la * vdir, np.array(lab)]


def _draw_terms(ax: "Axes", fb: "FreeBody", uf: "UnitFactors", size: float) -> list[np.ndarray]:
    """Every load and reaction on the free body, labelled; returns the points drawn."""
    k = uf.length
    drawn: list[np.ndarray] = []
    wmax = max([max(abs(t.distributed.w0), abs(t.distributed.w1)) for t in fb.terms if t.distributed] + [0.0])
    place = _Placer(ax, size)
    stacked: dict[str, float] = {}
    seen: dict[tuple[float, float], int] = {}
    for t in fb.terms:
        p = np.array(t.point) * k
        key = (round(float(p[0]) / size, 3), round(float(p[1]) / size, 3))
        stagger = 1.0 + 0.45 * seen.get(key, 0)
        seen[key] = seen.get(key, 0) + 1
        la = 0.2 * size * stagger
        color = SUPPORT if t.kind in ("reaction", "end force") else LOAD
        if t.distributed is not None:
            drawn += _draw_distributed(ax, t, p, uf, size, wmax, stacked, place)
            continue
        if t.kind == "reaction":
            for comp, vec in ((t.fx, np.array([1.0, 0.0])), (t.fy, np.array([0.0, 1.0]))):
                if abs(comp) > 1e-12 * (abs(t.fx) + abs(t.fy)):
                    dvec = vec * math.copysign(1.0, comp)
                    _arrow(ax, p - dvec * la, p, color)
                    drawn.append(p - dvec * la)
                    place(p - dvec * la, f"{t.label}{'x' if vec[0] else 'y'} = "
                           f"{_fmt(abs(comp) * uf.force)} {uf.force_unit}", color, ha="center", va="center")
        elif t.fx or t.fy:
            f = np.array([t.fx, t.fy])
            u = f / np.linalg.norm(f)
            _arrow(ax, p - u * la, p, color)
            drawn.append(p - u * la)
            place(p - u * la, f"{t.label} = {_fmt(np.linalg.norm(f) * uf.force)} {uf.force_unit}", color,
                   ha="center", va="center")
        if t.couple:
            at = _curved(ax, p, 0.08 * size, t.couple > 0, color)
            drawn += [np.array(at), p - 0.08 * size]
            place(at, f"{t.label} = {_fmt(abs(t.couple) * uf.moment)} {uf.moment_unit}", color, ha="left")
    return drawn


def _draw_distributed(ax: "Axes", t, p: np.ndarray, uf: "UnitFactors", size: float, wmax: float,
                      stacked: dict[str, float], place) -> list[np.ndarray]:
    """A distributed load as its diagram of arrows plus its resultant (dashed);
    several on one member are stacked away from it.  Returns the points drawn."""
    k = uf.length
    d = t.distributed
    u = np.array(d.direction)
    along = np.array(d.member_axis)
    c0 = p - (d.centroid_s - d.s0) * along * k
    c1 = p + (d.s1 - d.centroid_s) * along * k
    n = max(3, int(8 * np.linalg.norm(c1 - c0) / size) + 2)
    lift = stacked.get(d.member, 0.0)
    stacked[d.member] = lift + 0.14 * size
    c0, c1 = c0 - u * lift, c1 - u * lift
    tails = []
    for i in range(n):
        f = i / (n - 1)
        w = d.w0 + (d.w1 - d.w0) * f
        head = c0 + (c1 - c0) * f
        h = 0.12 * size * (abs(w) / wmax if wmax else 0.0)
        tail = head - u * h
        tails.append(tail)
        if h > 1e-9 * size:
            _arrow(ax, tail, head, LOAD, lw=0.8)
    tails = np.array(tails)
    ax.plot(tails[:, 0], tails[:, 1], color=LOAD, lw=0.8)
    la = 0.2 * size
    _arrow(ax, p - u * (1.1 * la + lift), p - u * lift, LOAD, ls="--", lw=1.2)
    place(p - u * (1.15 * la + lift), f"{t.label} = {_fmt(d.resultant * uf.force)} {uf.force_unit}", LOAD,
          ha="center", va="center")
    return list(tails) + [p - u * (1.15 * la + lift)]


def _draw_dimensions(ax: "Axes", fb: "FreeBody", cut: np.ndarray, size: float, lo: np.ndarray, hi: np.ndarray,
                     k: float) -> tuple[int, int]:
    """Dimension lines from the cut to the points of application (up to five
    each way); returns how many were drawn along x and along y."""
    xs = sorted({round(float(t.point[0] * k - cut[0]), 9) for t in fb.terms} - {0.0}, key=abs)[:5]
    ys = sorted({round(float(t.point[1] * k - cut[1]), 9) for t in fb.terms} - {0.0}, key=abs)[:5]
    ybase = lo[1] - 0.12 * size
    for i, dx in enumerate(xs):
        y = ybase - i * 0.09 * size
        ax.annotate("", xy=(cut[0] + dx, y), xytext=(cut[0], y),
                    arrowprops=dict(arrowstyle="<->", color=DIM, lw=0.7, shrinkA=0, shrinkB=0))
        _label(ax, (cut[0] + dx / 2, y), f"{_fmt(abs(dx))}", DIM, ha="center", va="bottom", size=6)
    xbase = hi[0] + 0.2 * size
    for i, dy in enumerate(ys):
        x = xbase + i * 0.12 * size
        ax.annotate("", xy=(x, cut[1] + dy), xytext=(x, cut[1]),
                    arrowprops=dict(arrowstyle="<->", color=DIM, lw=0.7, shrinkA=0, shrinkB=0))
        _label(ax, (x, cut[1] + dy / 2), f" {_fmt(abs(dy))}", DIM, ha="left", va="center", size=6)
    if xs or ys:
        ax.plot([cut[0]], [cut[1]], "x", color=DIM, ms=5)
    return len(xs), len(ys)


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
        _arrow(ax, (-1.1, -0.32 * s), (-1.1, 0.32 * s), INTERNAL)
        _arrow(ax, (1.1, 0.32 * s), (1.1, -0.32 * s), INTERNAL)
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
    fig = Figure(figsize=(9.0, 4.2))
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
