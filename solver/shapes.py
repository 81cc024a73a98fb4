"""Cross-section properties from a shape text or a drawn outline.

Shape texts (the names are our own)::

    I 310x165x6x10     depth x flange width x web thickness x flange thickness
    RECT 200x400       width b x depth h
    RHS 200x100x8      depth h x width b x wall thickness t
    CHS 168.3x7.1      outside diameter D x wall thickness t

The keyword is case-insensitive, ``x`` or ``*`` separates the numbers.
Depth is measured along the section's vertical axis: the member bends
about the horizontal centroidal axis (the strong axis of an I or an RHS
drawn this way).  Root and corner radii are ignored: the I is three
rectangles, the RHS a rectangle with a rectangular hole (both slightly
conservative on area and stiffness for rolled or formed sections).

The numbers are in a length unit the caller states: ``unit`` is the size
of one such unit in the unit of the frame (0.001 for millimetres in a
frame in metres).  Results are then area [length**2] and second moments
[length**4] of the frame's unit.

Properties
----------
Area, centroid and second moments of a polygon come from Green's theorem
applied to its vertices (exact for any polygon, holes included: the outer
ring is taken counter-clockwise, holes clockwise)::

    A   = 1/2  sum (x_i y_i+1 - x_i+1 y_i)
    I_x = 1/12 sum (x_i y_i+1 - x_i+1 y_i)(y_i^2 + y_i y_i+1 + y_i+1^2)

taken about a point near the centroid (numerically safe) and moved to the
centroid by the parallel-axis theorem.  A CHS uses the exact closed forms
of a circular tube, A = pi (D^2 - d^2) / 4 and I = pi (D^4 - d^4) / 64;
its polygon (``CHS_SEGMENTS`` sides) serves for drawing only.

Examples
--------
>>> p = shape_properties("I 310x165x6x10", unit=1e-3)   # sizes in mm, frame in m
>>> round(p.area * 1e6), round(p.Ix * 1e6, 2)          # mm^2, 10^6 mm^4
(5040, 86.47)
>>> polygon_properties([(0, 0), (2, 0), (2, 6), (0, 6)]).Ix   # b h^3 / 12
36.0
"""
from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from shapely.geometry import Polygon
from shapely.geometry.polygon import orient

from .model import Section

__all__ = [
    "ShapeError",
    "SectionProperties",
    "CHS_SEGMENTS",
    "parse_shape",
    "shape_polygon",
    "shape_properties",
    "polygon_properties",
    "section_from_shape",
    "section_from_outline",
]

CHS_SEGMENTS = 128
"""Sides of the polygon drawn for a circular hollow section."""

_SHAPES = {"I": 4, "RECT": 2, "RHS": 3, "CHS": 2}
_TEXT = re.compile(r"^\s*([A-Za-z]+)\s*([0-9.eE+\-xX*\s]+?)\s*$")


class ShapeError(ValueError):
    """A shape text or outline that does not describe a section."""


@dataclass(frozen=True)
class SectionProperties:
    """Properties of a plane section [frame length units].

    ``area`` A; ``cx``, ``cy`` centroid in the outline's coordinates;
    ``Ix`` second moment about the horizontal centroidal axis (bending of
    the member in the frame's plane); ``Iy`` about the vertical
    centroidal axis; ``Ixy`` product of area about the centroid;
    ``depth``, ``width`` extents along y and x.
    """

    area: float
    cx: float
    cy: float
    Ix: float
    Iy: float
    Ixy: float
    depth: float
    width: float


def parse_shape(text: str) -> tuple[str, tuple[float, ...]]:
    """``"I 310x165x6x10"`` -> ``("I", (310.0, 165.0, 6.0, 10.0))`` (the
    numbers as written, no unit applied).  Raises :class:`ShapeError`."""
    m = _TEXT.match(str(text))
    if not m:
        raise ShapeError(f"shape {text!r}: expected a keyword ({', '.join(_SHAPES)}) and sizes like 200x400")
    kind = m.group(1).upper()
    if kind not in _SHAPES:
        raise ShapeError(f"shape {text!r}: unknown kind {m.group(1)!r}; expected one of {', '.join(_SHAPES)}")
    parts = re.split(r"\s*[xX*]\s*", m.group(2).strip())
    try:
        dims = tuple(float(p) for p in parts)
    except ValueError:
        raise ShapeError(f"shape {text!r}: sizes must be numbers separated by 'x'") from None
    if len(dims) != _SHAPES[kind]:
        raise ShapeError(f"shape {text!r}: {kind} takes {_SHAPES[kind]} sizes, got {len(dims)}")
    if not all(math.isfinite(d) and d > 0 for d in dims):
        raise ShapeError(f"shape {text!r}: sizes must be positive")
    _check_proportions(text, kind, dims)
    return kind, dims


def _check_proportions(text: str, kind: str, d: tuple[float, ...]) -> None:
    if kind == "I":
        h, b, tw, tf = d
        if tw >= b or 2 * tf >= h:
            raise ShapeError(f"shape {text!r}: the web must be thinner than the flange width and the two "
                             "flanges thinner than the depth")
    elif kind == "RHS":
        h, b, t = d
        if 2 * t >= min(h, b):
            raise ShapeError(f"shape {text!r}: the wall must be thinner than half the smaller side")
    elif kind == "CHS":
        D, t = d
        if 2 * t > D:
            raise ShapeError(f"shape {text!r}: the wall must be at most half the diameter")


def _rect(x0: float, y0: float, x1: float, y1: float) -> list[tuple[float, float]]:
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def shape_polygon(text: str, unit: float) -> Polygon:
    """The outline of a shape as a shapely polygon, centred on the origin,
    depth along y, in frame units (sizes times ``unit``)."""
    kind, dims = parse_shape(text)
    u = _unit(unit)
    d = tuple(v * u for v in dims)
    if kind == "RECT":
        b, h = d
        return Polygon(_rect(-b / 2, -h / 2, b / 2, h / 2))
    if kind == "RHS":
        h, b, t = d
        return Polygon(_rect(-b / 2, -h / 2, b / 2, h / 2), [_rect(-b / 2 + t, -h / 2 + t, b / 2 - t, h / 2 - t)])
    if kind == "I":
        h, b, tw, tf = d
        y1, y2 = h / 2, h / 2 - tf
        return Polygon([(-b / 2, -y1), (b / 2, -y1), (b / 2, -y2), (tw / 2, -y2), (tw / 2, y2), (b / 2, y2),
                        (b / 2, y1), (-b / 2, y1), (-b / 2, y2), (-tw / 2, y2), (-tw / 2, -y2), (-b / 2, -y2)])
    D, t = d
    ang = np.linspace(0.0, 2 * math.pi, CHS_SEGMENTS, endpoint=False)
    outer = np.column_stack([np.cos(ang), np.sin(ang)]) * (D / 2)
    r_in = D / 2 - t
    holes = [np.column_stack([np.cos(ang), np.sin(ang)]) * r_in] if r_in > 0 else []
    return Polygon(outer, holes)


def _unit(unit: float) -> float:
    u = float(unit)
    if not (math.isfinite(u) and u > 0):
        raise ShapeError(f"length unit must be a positive number, got {unit!r}")
    return u


def _ring_sums(xy: np.ndarray) -> tuple[float, float, float, float, float, float]:
    """Green's theorem sums of one closed ring (last vertex != first):
    A, Sx (= int y dA), Sy (= int x dA), Ixx (= int y^2), Iyy (= int x^2),
    Ixy (= int xy), signed by the ring's orientation (CCW positive)."""
    x, y = xy[:, 0], xy[:, 1]
    x1, y1 = np.roll(x, -1), np.roll(y, -1)
    c = x * y1 - x1 * y
    A = c.sum() / 2
    Sy = ((x + x1) * c).sum() / 6
    Sx = ((y + y1) * c).sum() / 6
    Ixx = ((y * y + y * y1 + y1 * y1) * c).sum() / 12
    Iyy = ((x * x + x * x1 + x1 * x1) * c).sum() / 12
    Ixy = ((x * y1 + 2 * x * y + 2 * x1 * y1 + x1 * y) * c).sum() / 24
    return A, Sx, Sy, Ixx, Iyy, Ixy


def _ring(coords) -> np.ndarray:
    a = np.asarray(coords, dtype=float).reshape(-1, 2)
    if len(a) > 1 and np.allclose(a[0], a[-1], rtol=0, atol=0):
        a = a[:-1]
    return a


def _polygon_props(poly: Polygon) -> SectionProperties:
    if poly.is_empty or not poly.is_valid or poly.area <= 0:
        raise ShapeError("section outline is not a valid polygon (it crosses itself, has no area, or a hole "
                         "lies outside it)")
    poly = orient(poly, sign=1.0)  # exterior CCW, holes CW
    minx, miny, maxx, maxy = poly.bounds
    ox, oy = (minx + maxx) / 2, (miny + maxy) / 2
    tot = np.zeros(6)
    for ring in [poly.exterior, *poly.interiors]:
        xy = _ring(ring.coords) - (ox, oy)
        tot += _ring_sums(xy)
    A, Sx, Sy, Ixx, Iyy, Ixy = tot
    cx, cy = Sy / A, Sx / A
    return SectionProperties(
        area=float(A),
        cx=float(cx + ox),
        cy=float(cy + oy),
        Ix=float(Ixx - A * cy * cy),
        Iy=float(Iyy - A * cx * cx),
        Ixy=float(Ixy - A * cx * cy),
        depth=float(maxy - miny),
        width=float(maxx - minx),
    )


def polygon_properties(
    vertices: Sequence[tuple[float, float]],
    holes: Sequence[Sequence[tuple[float, float]]] = (),
    *,
    unit: float = 1.0,
) -> SectionProperties:
    """Properties of a section drawn as a closed outline.

    Parameters
    ----------
    vertices : (x, y) of the outer boundary, either orientation; the
        first vertex may be repeated at the end.  y is the section's
        vertical axis (depth), x its width.
    holes : outlines of holes, each like ``vertices``
    unit : size of one outline unit in frame units (0.001 for an outline
        in millimetres and a frame in metres)

    Raises
    ------
    ShapeError : fewer than 3 vertices, a self-crossing outline, a hole
        outside the outline or crossing it
    """
    u = _unit(unit)
    outer = _ring(vertices) * u
    if len(outer) < 3:
        raise ShapeError("a section outline needs at least 3 vertices")
    inner = [_ring(h) * u for h in holes]
    if any(len(h) < 3 for h in inner):
        raise ShapeError("a hole outline needs at least 3 vertices")
    return _polygon_props(Polygon(outer, inner))


def shape_properties(text: str, unit: float) -> SectionProperties:
    """Properties of a shape text (see the module docstring), sizes times
    ``unit`` in frame units.  Exact by polygon integration; a CHS by the
    closed forms of a circular tube."""
    kind, dims = parse_shape(text)
    if kind != "CHS":
        return _polygon_props(shape_polygon(text, unit))
    u = _unit(unit)
    D, t = dims[0] * u, dims[1] * u
    d = D - 2 * t
    A = math.pi * (D * D - d * d) / 4
    I = math.pi * (D**4 - d**4) / 64
    return SectionProperties(A, 0.0, 0.0, I, I, 0.0, D, D)


def _about(p: SectionProperties, axis: str) -> float:
    if axis == "x":
        return p.Ix
    if axis == "y":
        return p.Iy
    raise ValueError("axis must be 'x' (bending about the horizontal axis) or 'y' (about the vertical axis)")


def section_from_shape(text: str, E: float, unit: float, name: str | None = None, *, axis: str = "x") -> Section:
    """A :class:`~dxf2frame.solver.model.Section` from a shape text: ``E``
    [force/length**2], A and I from :func:`shape_properties`; the name
    defaults to the text.  ``axis="x"`` (default) bends about the
    horizontal centroidal axis (an I or RHS about its strong axis);
    ``axis="y"`` about the vertical one (the shape turned a quarter)."""
    p = shape_properties(text, unit)
    return Section(E=E, A=p.area, I=_about(p, axis), name=name if name is not None else " ".join(str(text).split()))


def section_from_outline(
    vertices: Sequence[tuple[float, float]],
    E: float,
    holes: Sequence[Sequence[tuple[float, float]]] = (),
    *,
    unit: float = 1.0,
    name: str = "",
    axis: str = "x",
) -> Section:
    """A :class:`~dxf2frame.solver.model.Section` from a drawn outline (see
    :func:`polygon_properties`), bending about the horizontal centroidal
    axis (``axis="x"``, default) or the vertical one (``axis="y"``)."""
    p = polygon_properties(vertices, holes, unit=unit)
    return Section(E=E, A=p.area, I=_about(p, axis), name=name)
