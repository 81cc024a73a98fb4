"""Section properties from shape texts and drawn outlines.

Checks against the formulas of the properties-of-plane-areas table of
Roark's Formulas for Stress and Strain (rectangle, hollow rectangle,
circle and circular tube, from memory), the parallel-axis theorem for an
I made of three rectangles, and a hand computation of an L-shaped outline
worked in the test; any star-shaped polygon against sympy's exact
polygon integration (sympy.integrals.intpoly).
"""
from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import Polygon as ShPolygon

from dxf2frame.solver.shapes import (
    CHS_SEGMENTS,
    ShapeError,
    parse_shape,
    polygon_properties,
    section_from_outline,
    section_from_shape,
    shape_polygon,
    shape_properties,
)

MM = 1e-3  # metres per millimetre


def test_parse():
    assert parse_shape("I 310x165x6x10") == ("I", (310.0, 165.0, 6.0, 10.0))
    assert parse_shape("rect 200 X 400") == ("RECT", (200.0, 400.0))
    assert parse_shape("RHS200*100*8") == ("RHS", (200.0, 100.0, 8.0))
    assert parse_shape(" CHS 168.3x7.1 ") == ("CHS", (168.3, 7.1))


@pytest.mark.parametrize("bad", ["", "HEB 200", "I 310x165x6", "RECT 200x-400", "RECT 200xabc", "RHS 100x100x60",
                                 "I 310x165x170x10", "I 310x165x6x160", "CHS 100x60", "RECT 200x400x3"])
def test_parse_errors(bad):
    with pytest.raises(ShapeError):
        parse_shape(bad)


def test_rectangle():
    b, h = 200.0, 400.0
    p = shape_properties("RECT 200x400", MM)
    assert p.area == pytest.approx(b * h * MM**2, rel=1e-12)             # A = bh (Roark)
    assert p.Ix == pytest.approx(b * h**3 / 12 * MM**4, rel=1e-12)       # I = bh^3/12 (Roark)
    assert p.Iy == pytest.approx(h * b**3 / 12 * MM**4, rel=1e-12)
    assert p.cx == pytest.approx(0, abs=1e-15) and p.cy == pytest.approx(0, abs=1e-15)
    assert p.depth == pytest.approx(0.4) and p.width == pytest.approx(0.2)
    s = section_from_shape("RECT 200x400", 30e9, MM)
    assert s.name == "RECT 200x400" and s.E == 30e9
    assert s.I == pytest.approx(b * h**3 / 12 * MM**4, rel=1e-12)


def test_hollow_rectangle():
    h, b, t = 200.0, 100.0, 8.0
    p = shape_properties("RHS 200x100x8", MM)
    # hollow rectangle: (b h^3 - b_i h_i^3) / 12 (Roark, from memory)
    bi, hi = b - 2 * t, h - 2 * t
    assert p.area == pytest.approx((b * h - bi * hi) * MM**2, rel=1e-12)
    assert p.Ix == pytest.approx((b * h**3 - bi * hi**3) / 12 * MM**4, rel=1e-12)


def test_circle_and_tube():
    D, t = 168.3, 7.1
    d = D - 2 * t
    p = shape_properties("CHS 168.3x7.1", MM)
    # circular tube: A = pi (D^2 - d^2)/4, I = pi (D^4 - d^4)/64 (Roark, from memory)
    assert p.area == pytest.approx(math.pi * (D**2 - d**2) / 4 * MM**2, rel=1e-12)
    assert p.Ix == pytest.approx(math.pi * (D**4 - d**4) / 64 * MM**4, rel=1e-12)
    solid = shape_properties("CHS 100x50", 1.0)
    assert solid.Ix == pytest.approx(math.pi * 100**4 / 64, rel=1e-12)  # solid circle pi D^4/64 (Roark)
    # the drawn polygon converges on the circle: an inscribed regular polygon
    # of n sides has I = pi D^4/64 (1 - O((2 pi/n)^2))
    poly = shape_polygon("CHS 168.3x7.1", MM)
    fine = polygon_properties(list(poly.exterior.coords), [list(r.coords) for r in poly.interiors])
    assert len(poly.exterior.coords) - 1 == CHS_SEGMENTS
    assert fine.Ix == pytest.approx(math.pi * (D**4 - d**4) / 64 * MM**4, rel=(2 * math.pi / CHS_SEGMENTS) ** 2)


def test_i_section_parallel_axis():
    h, b, tw, tf = 310.0, 165.0, 6.0, 10.0
    p = shape_properties("I 310x165x6x10", MM)
    # three rectangles, flanges moved to the centroid by the parallel-axis
    # theorem I = I_own + A d^2 (Roark, properties of plane areas, from memory)
    hw = h - 2 * tf
    flange = b * tf**3 / 12 + b * tf * ((h - tf) / 2) ** 2
    web = tw * hw**3 / 12
    assert p.area == pytest.approx((2 * b * tf + tw * hw) * MM**2, rel=1e-12)
    assert p.Ix == pytest.approx((2 * flange + web) * MM**4, rel=1e-12)
    assert p.Iy == pytest.approx((2 * tf * b**3 / 12 + hw * tw**3 / 12) * MM**4, rel=1e-12)
    assert p.depth == pytest.approx(h * MM)
    # turned a quarter: bending about the web axis, 2 tf b^3/12 + hw tw^3/12 (Roark)
    weak = section_from_shape("I 310x165x6x10", 210e9, MM, axis="y")
    assert weak.I == pytest.approx((2 * tf * b**3 / 12 + hw * tw**3 / 12) * MM**4, rel=1e-12)
    with pytest.raises(ValueError):
        section_from_shape("I 310x165x6x10", 210e9, MM, axis="z")


def test_drawn_l_shape_hand_computation():
    # L 100 x 80, legs 10 thick: vertical leg 10 wide x 100 high at the left,
    # horizontal leg 70 x 10 at the bottom right of it (mm), drawn clockwise
    # starting anywhere, away from the origin
    ox, oy = 5000.0, -300.0
    pts = [(0, 0), (0, 100), (10, 100), (10, 10), (80, 10), (80, 0)]
    outline = [(ox + x, oy + y) for x, y in pts][::-1]
    p = polygon_properties(outline, unit=MM)
    # hand computation (composite areas, parallel-axis theorem):
    #   part 1: 10 x 100, A1 = 1000, centroid y1 = 50, own I = 10*100^3/12
    #   part 2: 70 x 10,  A2 = 700,  centroid y2 = 5,  own I = 70*10^3/12
    A1, y1, I1 = 1000.0, 50.0, 10 * 100**3 / 12
    A2, y2, I2 = 700.0, 5.0, 70 * 10**3 / 12
    A = A1 + A2                                   # 1700 mm^2
    yc = (A1 * y1 + A2 * y2) / A                  # 31.47 mm
    Ix = I1 + A1 * (y1 - yc) ** 2 + I2 + A2 * (y2 - yc) ** 2
    xc = (A1 * 5.0 + A2 * 45.0) / A               # x centroids 5 and 10 + 35
    assert p.area == pytest.approx(A * MM**2, rel=1e-12)
    assert p.cy == pytest.approx((oy + yc) * MM, rel=1e-12)
    assert p.cx == pytest.approx((ox + xc) * MM, rel=1e-12)
    assert p.Ix == pytest.approx(Ix * MM**4, rel=1e-12)
    s = section_from_outline(outline + [outline[0]], 200e9, unit=MM, name="L-drawn")
    assert s.I == pytest.approx(Ix * MM**4, rel=1e-12) and s.name == "L-drawn"


def test_outline_with_hole_equals_hollow_rectangle():
    outer = [(0, 0), (100, 0), (100, 200), (0, 200)]
    hole = [(8, 8), (8, 192), (92, 192), (92, 8)]
    p = polygon_properties(outer, [hole])
    assert p.Ix == pytest.approx((100 * 200**3 - 84 * 184**3) / 12, rel=1e-12)  # hollow rectangle (Roark)


def test_bad_outlines():
    with pytest.raises(ShapeError):
        polygon_properties([(0, 0), (1, 1), (1, 0), (0, 1)])  # crosses itself
    with pytest.raises(ShapeError):
        polygon_properties([(0, 0), (1, 0)])
    with pytest.raises(ShapeError):
        polygon_properties([(0, 0), (1, 0), (1, 1), (0, 1)], [[(2, 2), (3, 2), (3, 3)]])  # hole outside
    with pytest.raises(ShapeError):
        shape_properties("RECT 1x1", unit=0)


# --------------------------------------------------------------------------
# any polygon against sympy's polygon integration (an independent library)

def _sympy_props(pts):
    """Area, centroid y and centroidal I_x by sympy's exact integration over
    the polygon (it takes the vertices clockwise)."""
    import sympy as sy
    from sympy.integrals.intpoly import polytope_integrate

    x, y = sy.symbols("x y")
    cw = pts if _signed_area(pts) < 0 else pts[::-1]
    poly = sy.Polygon(*[sy.Point(sy.Rational(px), sy.Rational(py)) for px, py in cw])
    A = polytope_integrate(poly, sy.Integer(1))
    Sy = polytope_integrate(poly, y)
    Iyy = polytope_integrate(poly, y**2)
    cy = Sy / A
    return float(A), float(cy), float(Iyy - A * cy**2)


def _signed_area(pts):
    return 0.5 * sum(x0 * y1 - x1 * y0 for (x0, y0), (x1, y1) in zip(pts, pts[1:] + pts[:1]))


@settings(max_examples=30)
@given(st.lists(st.tuples(st.floats(0.2, 1.0), st.floats(0.5, 2.0)), min_size=3, max_size=9),
       st.booleans())
def test_star_polygon_against_sympy(arms, clockwise):
    # a star-shaped (simple, possibly non-convex) polygon: vertex k at angle
    # 2 pi (k + f_k/2)/n and radius r_k, off the origin, rounded to 1e-3
    n = len(arms)
    pts = [(round(3.0 + r * math.cos(2 * math.pi * (k + f / 2) / n), 3),
            round(-1.0 + r * math.sin(2 * math.pi * (k + f / 2) / n), 3)) for k, (f, r) in enumerate(arms)]
    if clockwise:
        pts = pts[::-1]
    if not ShPolygon(pts).is_valid or abs(_signed_area(pts)) < 1e-3:
        return
    A, cy, Ix = _sympy_props(pts)
    p = polygon_properties(pts)
    assert p.area == pytest.approx(A, rel=1e-9)       # sympy polytope_integrate
    assert p.cy == pytest.approx(cy, rel=1e-9)
    assert p.Ix == pytest.approx(Ix, rel=1e-9)
