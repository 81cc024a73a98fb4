"""The frame solver against published closed forms and independent
solutions.

Each numeric check names its source beside it.  "AISC" means the AISC Steel
Construction Manual, Table 3-23 "Shears, Moments and Deflections" (beam
diagrams and formulas), case numbers from memory.  Where a problem has no
handbook formula, sympy solves the free-body (and, for indeterminate
beams, compatibility) equations independently of the solver.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sy
from sympy.physics.continuum_mechanics.beam import Beam

from dxf2frame.solver import (
    DistributedLoad,
    Frame,
    LoadError,
    MemberCouple,
    MissingSectionError,
    NodalLoad,
    PointLoad,
    Section,
    Settlement,
    UnstableFrameError,
    solve,
)

E, A, I = 200e9, 5e-3, 8e-5
EI = E * I
SEC = Section(E, A, I)
REL = 1e-9


def approx(v, rel=REL, abs_=None):
    return pytest.approx(v, rel=rel, abs=abs_ if abs_ is not None else 1e-9 * max(1.0, abs(v)))


def beam(L: float, left: str, right: str, *, sec=SEC, release_end=False, n_spans=1):
    """Horizontal beam of n equal spans on supports (left, interior pins..., right)."""
    f = Frame()
    nodes = [f.add_node(k * L, 0.0) for k in range(n_spans + 1)]
    members = [f.add_member(nodes[k], nodes[k + 1], sec) for k in range(n_spans)]
    if release_end:
        members[-1].release_end = True
    f.add_support(nodes[0], left)
    for k in range(1, n_spans):
        f.add_support(nodes[k], "roller")
    f.add_support(nodes[-1], right)
    return f, nodes, members


# --------------------------------------------------------------------------
# single spans


def test_simple_beam_uniform_load():
    L, w = 6.0, 10e3
    f, (a, b), (m,) = beam(L, "pin", "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    r = solve(f)["D"]
    mr = r.members[m.id]
    assert mr.moment(L / 2) == approx(w * L**2 / 8)  # AISC case 1: Mmax = wl^2/8
    assert mr.shear(0.0) == approx(w * L / 2)  # AISC case 1: R = V = wl/2
    assert mr.shear(L) == approx(-w * L / 2)  # AISC case 1: V = -wl/2 at the right end
    assert mr.moment(1.5) == approx(w * 1.5 * (L - 1.5) / 2)  # AISC case 1: Mx = wx(l-x)/2
    assert mr.deflection(L / 2)[1] == approx(-5 * w * L**4 / (384 * EI))  # AISC case 1: 5wl^4/384EI
    ex = mr.extremes()
    assert ex["m_max"] == approx(w * L**2 / 8)  # AISC case 1
    assert ex["m_max_at"] == approx(L / 2)  # AISC case 1: at center
    dmax, at = mr.max_deflection()
    assert dmax == approx(5 * w * L**4 / (384 * EI))  # AISC case 1
    assert at == approx(L / 2)  # AISC case 1: at center
    assert [rc.fy for rc in r.reactions] == [approx(w * L / 2), approx(w * L / 2)]  # AISC case 1
    # per unit length check of the span/limit: 5wl^4/384EI against l/240 (common practice limit)
    chk = mr.deflection_check(240)
    assert chk.allowed == approx(L / 240)  # common practice: span/240
    assert chk.ok == (5 * w * L**4 / (384 * EI) <= L / 240)  # AISC case 1 value vs the limit


def test_relative_deflection_ignores_support_settlement():
    L, w, delta = 6.0, 10e3, 0.02
    f, (a, b), (m,) = beam(L, "pin", "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    f.add_load(Settlement(b, dy=-delta))
    mr = solve(f)["D"].members[m.id]
    # a settlement of a determinate beam is a rigid rotation: measured from
    # the chord the sag stays 5wl^4/384EI at mid-span (AISC case 1)
    rel, at = mr.max_relative_deflection()
    assert rel == approx(5 * w * L**4 / (384 * EI))
    assert at == approx(L / 2)
    assert mr.moment(L / 2) == approx(w * L**2 / 8)  # AISC case 1: no force from the settlement
    assert mr.max_deflection()[0] > rel  # the absolute movement includes the settlement
    chk = mr.deflection_check(360, relative=True)
    assert chk.value == approx(5 * w * L**4 / (384 * EI))  # AISC case 1
    assert chk.allowed == approx(L / 360)  # common practice: span/360


def test_relative_deflection_table_ignores_support_settlement():
    L, w, delta = 6.0, 10e3, 0.02
    f, (a, b), (m,) = beam(L, "pin", "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    f.add_load(Settlement(b, dy=-delta))
    res = solve(f)["D"].members
    tab = res.relative_deflection_table()
    # measured from the chord the sag is 5wl^4/384EI at mid-span (AISC case 1, from memory)
    assert tab["deflection_rel_max"][0] == approx(5 * w * L**4 / (384 * EI))
    assert tab["deflection_rel_max_at"][0] == approx(L / 2)  # AISC case 1: at center
    # the total movement includes the settlement: at mid-span the sag plus
    # delta/2 (superposition of AISC case 1 and a rigid rotation about the pin)
    assert res.deflection_table()["deflection_max"][0] >= 5 * w * L**4 / (384 * EI) + delta / 2 - 1e-12
    # a reference line through the undisplaced supports (v = 0, v = 0)
    # measures the total transverse deflection: at mid-span the sag plus
    # half the settlement (superposition of AISC case 1 and a rigid rotation)
    tot = res.relative_deflection_table(np.zeros((1, 2)))
    assert tot["deflection_rel_max"][0] >= 5 * w * L**4 / (384 * EI) + delta / 2 - 1e-12


def test_relative_deflection_table_is_each_members_chord_deflection():
    # a portal frame under a lateral load and a beam load: the columns sway,
    # the beam bends; the table must equal the one-member method of each
    H, L, P, w = 4.0, 6.0, 20e3, 8e3
    f = Frame()
    n0, n1, n2, n3 = f.add_node(0, 0), f.add_node(0, H), f.add_node(L, H), f.add_node(L, 0)
    ms = [f.add_member(n0, n1, SEC), f.add_member(n1, n2, SEC), f.add_member(n3, n2, SEC)]
    f.add_support(n0, "fixed")
    f.add_support(n3, "pin")
    f.add_load(NodalLoad(n1, fx=P))
    f.add_load(DistributedLoad(ms[1].id, q1=(0.0, -w)))
    res = solve(f)["D"].members
    tab = res.relative_deflection_table()
    for j, mid in enumerate(res):
        one = solve(f)["D"].members[mid].max_relative_deflection()
        assert tab["deflection_rel_max"][j] == approx(one[0])
        assert tab["deflection_rel_max_at"][j] == approx(one[1], abs_=1e-9 * L)


def test_simple_beam_point_load_off_centre():
    L, P, a_ = 8.0, 25e3, 5.0
    b_ = L - a_
    f, _, (m,) = beam(L, "pin", "roller")
    f.add_load(PointLoad(m.id, a_, 0.0, -P))
    mr = solve(f)["D"].members[m.id]
    assert mr.moment(a_) == approx(P * a_ * b_ / L)  # AISC case 8: Mmax = Pab/l at the load
    assert mr.shear(a_, side="left") == approx(P * b_ / L)  # AISC case 8: V1 = R1 = Pb/l
    assert mr.shear(a_) == approx(-P * a_ / L)  # AISC case 8: V2 = R2 = Pa/l
    assert mr.deflection(a_)[1] == approx(-P * a_**2 * b_**2 / (3 * EI * L))  # AISC case 8: Pa^2b^2/3EIl
    dmax, at = mr.max_deflection()
    # AISC case 8 (a > b): max at x = sqrt(a(a+2b)/3), value Pab(a+2b)sqrt(3a(a+2b))/27EIl
    assert at == approx(math.sqrt(a_ * (a_ + 2 * b_) / 3))
    assert dmax == approx(P * a_ * b_ * (a_ + 2 * b_) * math.sqrt(3 * a_ * (a_ + 2 * b_)) / (27 * EI * L))


def test_cantilever_end_load():
    L, P = 4.0, 12e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, SEC)
    f.add_support(a, "fixed")
    f.add_load(NodalLoad(b, fy=-P))
    r = solve(f)["D"]
    mr = r.members[m.id]
    assert mr.moment(0.0) == approx(-P * L)  # AISC case 22: Mmax = Pl at the fixed end (hogging)
    assert mr.deflection(L)[1] == approx(-P * L**3 / (3 * EI))  # AISC case 22: Pl^3/3EI
    assert r.displacements[b, 2] == approx(-P * L**2 / (2 * EI))  # Roark Table 8.1 case 1a (from memory): PL^2/2EI
    assert r.reactions[0].m == approx(P * L)  # statics: the wall resists PL counter-clockwise
    assert mr.max_deflection() == (approx(P * L**3 / (3 * EI)), approx(L))  # AISC case 22: at the free end


def test_cantilever_with_rotational_spring_base():
    L, P, kr = 3.0, 5e3, 2e6
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, SEC)
    f.add_support(a, "pin", kr=kr)
    f.add_load(NodalLoad(b, fy=-P))
    r = solve(f)["D"]
    # superposition of the elastic cantilever (AISC case 22) and a rigid
    # rotation PL/kr of the base (Roark, from memory)
    assert r.members[m.id].deflection(L)[1] == approx(-(P * L**3 / (3 * EI) + P * L * L / kr))
    assert r.reactions[0].m == approx(P * L)  # statics: the spring carries PL


def test_propped_cantilever_uniform_load():
    L, w = 5.0, 8e3
    for f, m in (
        (lambda t: (t[0], t[2][0]))(beam(L, "fixed", "roller")),
        # the same beam as a fixed-fixed member released at its end (condensed)
        (lambda t: (t[0], t[2][0]))(beam(L, "fixed", "fixed", release_end=True)),
    ):
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
        r = solve(f)["D"]
        mr = r.members[m.id]
        assert r.reactions[0].fy == approx(5 * w * L / 8)  # AISC case 12: R1 = 5wl/8
        assert r.reactions[1].fy == approx(3 * w * L / 8)  # AISC case 12: R2 = 3wl/8
        assert mr.moment(0.0) == approx(-w * L**2 / 8)  # AISC case 12: M1 = wl^2/8 (hogging)
        ex = mr.extremes()
        assert ex["m_max"] == approx(9 * w * L**2 / 128)  # AISC case 12: M = 9wl^2/128
        assert ex["m_max_at"] == approx(5 * L / 8)  # AISC case 12: at 3l/8 from the propped end
        assert r.reactions[1].m == approx(0.0, abs_=1e-6)  # released end carries no moment


def test_fixed_fixed_uniform_load():
    L, w = 7.0, 6e3
    f, _, (m,) = beam(L, "fixed", "fixed")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    mr = solve(f)["D"].members[m.id]
    assert mr.moment(0.0) == approx(-w * L**2 / 12)  # AISC case 15: M = wl^2/12 at the ends
    assert mr.moment(L) == approx(-w * L**2 / 12)  # AISC case 15
    assert mr.moment(L / 2) == approx(w * L**2 / 24)  # AISC case 15: M = wl^2/24 at center
    assert mr.deflection(L / 2)[1] == approx(-w * L**4 / (384 * EI))  # AISC case 15: wl^4/384EI
    # AISC case 15: M = 0 at x = 0.2113 l, i.e. l(1/2 - sqrt(3)/6)
    cps = mr.critical_points()
    assert np.min(np.abs(cps - L * (0.5 - math.sqrt(3) / 6))) < 1e-9 * L


def test_fixed_fixed_point_load():
    L, P, a_ = 6.0, 30e3, 2.0
    b_ = L - a_
    f, _, (m,) = beam(L, "fixed", "fixed")
    f.add_load(PointLoad(m.id, a_, 0.0, -P))
    r = solve(f)["D"]
    mr = r.members[m.id]
    assert mr.moment(0.0) == approx(-P * a_ * b_**2 / L**2)  # AISC case 18: M1 = Pab^2/l^2
    assert mr.moment(L) == approx(-P * a_**2 * b_ / L**2)  # AISC case 18: M2 = Pa^2b/l^2
    assert r.reactions[0].fy == approx(P * b_**2 * (3 * a_ + b_) / L**3)  # AISC case 18: R1
    assert mr.moment(a_) == approx(2 * P * a_**2 * b_**2 / L**3)  # AISC case 18: Ma = 2Pa^2b^2/l^3


def test_triangular_load_simple_span():
    L, w = 9.0, 12e3
    f, _, (m,) = beam(L, "pin", "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, 0.0), q2=(0.0, -w)))
    r = solve(f)["D"]
    ex = r.members[m.id].extremes()
    assert ex["m_max"] == approx(w * L**2 / (9 * math.sqrt(3)))  # AISC case 2: 2Wl/(9 sqrt 3), W = wl/2
    assert ex["m_max_at"] == approx(L / math.sqrt(3))  # AISC case 2: at x = l/sqrt(3) = 0.5774 l
    assert r.reactions[0].fy == approx(w * L / 6)  # AISC case 2: R1 = W/3
    assert r.reactions[1].fy == approx(w * L / 3)  # AISC case 2: R2 = 2W/3


def test_overhanging_beam_uniform_load():
    L, a_, w = 8.0, 2.0, 5e3
    f = Frame()
    n0, n1, n2 = f.add_node(0, 0), f.add_node(L, 0), f.add_node(L + a_, 0)
    m1, m2 = f.add_member(n0, n1, SEC), f.add_member(n1, n2, SEC)
    f.add_support(n0, "pin")
    f.add_support(n1, "roller")
    for m in (m1, m2):
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    r = solve(f)["D"]
    ex = r.members[m1.id].extremes()
    assert r.reactions[0].fy == approx(w * (L**2 - a_**2) / (2 * L))  # AISC case 24: R1 = w(l^2-a^2)/2l
    assert r.reactions[1].fy == approx(w * (L + a_) ** 2 / (2 * L))  # AISC case 24: R2 = w(l+a)^2/2l
    assert ex["m_max"] == approx(w * (L + a_) ** 2 * (L - a_) ** 2 / (8 * L**2))  # AISC case 24: M1
    assert ex["m_max_at"] == approx(L / 2 * (1 - a_**2 / L**2))  # AISC case 24: x = l/2(1 - a^2/l^2)
    assert ex["m_min"] == approx(-w * a_**2 / 2)  # AISC case 24: M2 = wa^2/2 over the support
    # statics: M = R1 x - w x^2 / 2 vanishes again at x = 2 R1 / w = (l^2 - a^2)/l
    cps = r.members[m1.id].critical_points()
    assert np.min(np.abs(cps - (L**2 - a_**2) / L)) < 1e-9 * L


def test_two_equal_continuous_spans():
    L, w = 5.0, 9e3
    f, nodes, members = beam(L, "pin", "roller", n_spans=2)
    for m in members:
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    r = solve(f)["D"]
    fy = [rc.fy for rc in r.reactions]  # supports in order: left, centre, right
    assert fy[1] == approx(1.25 * w * L)  # AISC case 29: R2 = 10wl/8
    assert fy[0] == approx(3 * w * L / 8)  # AISC case 29: R1 = 3wl/8
    assert r.members[members[0].id].moment(L) == approx(-w * L**2 / 8)  # AISC case 29: M = wl^2/8 at R2


def test_member_couple_on_simple_beam():
    L, C, a_ = 6.0, 18e3, 2.0
    f, _, (m,) = beam(L, "pin", "roller")
    f.add_load(MemberCouple(m.id, a_, C))
    r = solve(f)["D"]
    mr = r.members[m.id]
    assert r.reactions[0].fy == approx(C / L)  # statics (Roark Table 8.1 case 3, from memory): R = M0/l
    assert r.reactions[1].fy == approx(-C / L)  # statics
    assert mr.moment(a_, side="left") == approx(C * a_ / L)  # statics: R1 * a
    assert mr.moment(a_) == approx(C * a_ / L - C)  # statics: the CCW couple drops M by M0


# --------------------------------------------------------------------------
# indeterminate beams against sympy's beam module (Macaulay's method)


def _sympy_fixed_fixed(L, loads, release_end=False):
    """Reactions and moment function of a beam fixed at x=0 and fixed (or
    pinned) at x=L, solved by sympy.physics.continuum_mechanics (downward
    loads positive, sagging moment positive, couples CCW positive)."""
    b = Beam(L, 1, 1)
    R1, M1, R2, M2 = sy.symbols("R1 M1 R2 M2")
    b.apply_load(R1, 0, -1)
    b.apply_load(M1, 0, -2)
    b.apply_load(R2, L, -1)
    unknowns = [R1, M1, R2]
    if not release_end:
        b.apply_load(M2, L, -2)
        unknowns.append(M2)
    for kind, *vals in loads:
        if kind == "point":
            a_, P = vals
            b.apply_load(P, a_, -1)
        elif kind == "couple":
            a_, C = vals
            b.apply_load(C, a_, -2)
        elif kind == "trap":
            a_, b_, w1, w2 = vals
            b.apply_load(w1, a_, 0, end=b_)
            b.apply_load(sy.Rational(w2 - w1) / (b_ - a_), a_, 1, end=b_)
    b.bc_deflection = [(0, 0), (L, 0)]
    b.bc_slope = [(0, 0)] + ([] if release_end else [(L, 0)])
    b.solve_for_reaction_loads(*unknowns)
    return b.reaction_loads, b.bending_moment(), (R1, M1, R2)


@pytest.mark.parametrize("release_end", [False, True])
def test_partial_trapezoid_point_and_couple_against_sympy(release_end):
    L = 6
    loads = [("trap", 1, 4, 2000, 5000), ("point", sy.Rational(9, 2), 7000), ("couple", 2, 3000)]
    reac, Mx, (R1, M1, R2) = _sympy_fixed_fixed(L, loads, release_end)
    f, _, (m,) = beam(float(L), "fixed", "fixed", release_end=release_end)
    f.add_load(DistributedLoad(m.id, q1=(0.0, -2000.0), q2=(0.0, -5000.0), a=1.0, b=4.0))
    f.add_load(PointLoad(m.id, 4.5, 0.0, -7000.0))
    f.add_load(MemberCouple(m.id, 2.0, 3000.0))
    r = solve(f)["D"]
    mr = r.members[m.id]
    # sympy reactions are downward-positive point loads; ours are upward
    assert r.reactions[0].fy == approx(-float(reac[R1]))  # sympy Beam (Macaulay) solution
    assert r.reactions[1].fy == approx(-float(reac[R2]))  # sympy Beam (Macaulay) solution
    assert r.reactions[0].m == approx(float(reac[M1]))  # sympy Beam: CCW couple at the wall
    x = sy.Symbol("x")
    for xv in (0.5, 1.0, 2.5, 3.3, 4.5, 5.2):
        expect = float(Mx.subs(x, xv))
        assert mr.moment(xv, side="left") == approx(expect, abs_=1e-6)  # sympy Beam bending moment


# --------------------------------------------------------------------------
# frames


def _portal(h, L, Ic, Ib, area=5e-3):
    f = Frame()
    a, b, c, d = f.add_node(0, 0), f.add_node(0, h), f.add_node(L, h), f.add_node(L, 0)
    col = Section(E, area, Ic)
    ab = f.add_member(a, b, col)
    bc = f.add_member(b, c, Section(E, area, Ib))
    dc = f.add_member(d, c, col)  # start = smaller Y at equal X
    f.add_support(a, "pin")
    f.add_support(d, "pin")
    return f, (a, b, c, d), (ab, bc, dc)


def test_pinned_base_portal_lateral_load():
    h, L, P = 4.0, 6.0, 20e3
    Ic, Ib = 8e-5, 1.6e-4
    f, (a, b, c, d), (ab, bc, dc) = _portal(h, L, Ic, Ib)
    # lateral load shared by the two knees: an antisymmetric load on a
    # symmetric portal, so each base takes P/2 exactly (symmetry argument)
    # and overturning gives vertical reactions Ph/L (statics)
    f.add_load(NodalLoad(b, fx=P / 2, case="W"))
    f.add_load(NodalLoad(c, fx=P / 2, case="W"))
    r = solve(f)["W"]
    ra, rd = r.reactions
    assert ra.fx == approx(-P / 2)
    assert rd.fx == approx(-P / 2)
    assert rd.fy == approx(P * h / L)  # statics: moments about A
    assert ra.fy == approx(-P * h / L)  # statics
    # knee moments Ph/2 (statics on a column: base shear P/2 times h)
    assert abs(r.members[ab.id].moment(h)) == approx(P * h / 2)

    # sway by the slope-deflection method (published method; clockwise
    # moments and rotations positive, far ends pinned: M = 3EK(theta - psi)),
    # which neglects axial strain: compare a portal with a huge area
    f, (a, b, c, d), (ab, bc, dc) = _portal(h, L, Ic, Ib, area=100.0)
    f.add_load(NodalLoad(b, fx=P, case="W"))
    r = solve(f)["W"]
    tB, tC, psi = sy.symbols("tB tC psi")
    MBA = 3 * E * Ic / h * (tB - psi)
    MBC = 2 * E * Ib / L * (2 * tB + tC)
    MCB = 2 * E * Ib / L * (2 * tC + tB)
    MCD = 3 * E * Ic / h * (tC - psi)
    sol = sy.solve([MBA + MBC, MCB + MCD, MBA + MCD + P * h], [tB, tC, psi], dict=True)[0]
    sway = float(sol[psi]) * h
    assert r.displacements[b, 0] == approx(sway, rel=1e-6)  # slope-deflection (axial strain ~1e-8)
    assert r.displacements[b, 2] == approx(-float(sol[tB]), rel=1e-6)  # slope-deflection, CW -> CCW


def test_pinned_base_portal_gravity_load():
    h, L, w = 4.0, 6.0, 15e3
    Ic, Ib = 8e-5, 2.4e-4
    f, (a, b, c, d), (ab, bc, dc) = _portal(h, L, Ic, Ib, area=100.0)  # slope-deflection: no axial strain
    f.add_load(DistributedLoad(bc.id, q1=(0.0, -w)))
    r = solve(f)["D"]
    # slope deflection with fixed-end moments -wL^2/12, +wL^2/12 (AISC case
    # 15) on the beam, clockwise positive; symmetric so no sway
    tB, tC, psi = sy.symbols("tB tC psi")
    FEM = w * L**2 / 12
    MBA = 3 * E * Ic / h * (tB - psi)
    MBC = 2 * E * Ib / L * (2 * tB + tC) - FEM
    MCB = 2 * E * Ib / L * (2 * tC + tB) + FEM
    MCD = 3 * E * Ic / h * (tC - psi)
    sol = sy.solve([MBA + MBC, MCB + MCD, MBA + MCD], [tB, tC, psi], dict=True)[0]
    mba = float(MBA.subs(sol))
    # our end moment Mj of column AB at B is CCW: -M_BA (clockwise positive)
    assert r.members[ab.id].moment(h) == approx(-mba, rel=1e-6)  # slope-deflection
    assert r.reactions[0].fx == approx(mba / h, rel=1e-6)  # column free body: H = M_BA / h
    assert r.reactions[0].fy == approx(w * L / 2)  # symmetry
    # statics on the beam: end moments M_BC = -M_BA (clockwise on the left
    # end is hogging), plus the simple-span wL^2/8 (AISC case 1)
    assert r.members[bc.id].moment(L / 2) == approx(w * L**2 / 8 - mba, rel=1e-6)


def test_truss_by_method_of_joints():
    # symmetric triangle, apex load P: chords -P/(2 sin a), tie P/(2 tan a)
    # (method of joints at the apex and a support)
    span, rise, P = 8.0, 3.0, 40e3
    f = Frame()
    a, b, c = f.add_node(0, 0), f.add_node(span, 0), f.add_node(span / 2, rise)
    tie = f.add_member(a, b, SEC, release_start=True, release_end=True)
    left = f.add_member(a, c, SEC, release_start=True, release_end=True)
    right = f.add_member(c, b, SEC, release_start=True, release_end=True)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_load(NodalLoad(c, fy=-P))
    r = solve(f)["D"]
    al = math.atan2(rise, span / 2)
    assert r.members[tie.id].axial(1.0) == approx(P / (2 * math.tan(al)))  # method of joints
    assert r.members[left.id].axial(1.0) == approx(-P / (2 * math.sin(al)))  # method of joints
    assert r.members[right.id].axial(1.0) == approx(-P / (2 * math.sin(al)))  # method of joints
    assert r.members[left.id].extremes()["m_max"] == approx(0.0, abs_=1e-6)  # pin-ended bars carry no moment


def _pratt_truss(sections):
    f = Frame()
    xs = [0.0, 4.0, 8.0, 12.0]
    bot = [f.add_node(x, 0.0) for x in xs]
    top = [f.add_node(4.0, 3.0), f.add_node(8.0, 3.0)]
    pairs = [(bot[0], bot[1]), (bot[1], bot[2]), (bot[2], bot[3]), (top[0], top[1]), (bot[0], top[0]),
             (top[1], bot[3]), (bot[1], top[0]), (bot[2], top[1]), (top[0], bot[2])]
    ms = [f.add_member(i, j, sections, release_start=True, release_end=True) for i, j in pairs]
    f.add_support(bot[0], "pin")
    f.add_support(bot[3], "roller")
    f.add_load(NodalLoad(bot[1], fy=-10e3))
    f.add_load(NodalLoad(bot[2], fy=-20e3))
    f.add_load(NodalLoad(top[0], fx=5e3))
    return f, pairs, ms


@pytest.mark.parametrize("with_sections", [True, False])
def test_pratt_truss_against_sympy_joints(with_sections):
    f, pairs, ms = _pratt_truss(SEC if with_sections else None)
    r = solve(f, determinate=None if with_sections else True)["D"]
    # method of joints, solved by sympy: one tension per bar, three reactions
    T = sy.symbols(f"t0:{len(pairs)}")
    Ax, Ay, Dy = sy.symbols("Ax Ay Dy")
    xy = [(sy.nsimplify(n.x), sy.nsimplify(n.y)) for n in f.nodes]
    eqs = {k: [0, 0] for k in range(len(xy))}
    for t, (i, j) in zip(T, pairs):
        dx, dy = xy[j][0] - xy[i][0], xy[j][1] - xy[i][1]
        ln = sy.sqrt(dx**2 + dy**2)
        eqs[i][0] += t * dx / ln
        eqs[i][1] += t * dy / ln
        eqs[j][0] -= t * dx / ln
        eqs[j][1] -= t * dy / ln
    eqs[0][0] += Ax
    eqs[0][1] += Ay
    eqs[3][1] += Dy
    for ld in f.loads:
        eqs[ld.node][0] += sy.nsimplify(ld.fx)
        eqs[ld.node][1] += sy.nsimplify(ld.fy)
    sol = sy.solve([e for pair in eqs.values() for e in pair], [*T, Ax, Ay, Dy], dict=True)[0]
    for t, m in zip(T, ms):
        assert r.members[m.id].axial(0.5) == approx(float(sol[t]), abs_=1e-6)  # method of joints (sympy)
    assert r.reactions[0].fx == approx(float(sol[Ax]))  # method of joints (sympy)
    assert r.reactions[1].fy == approx(float(sol[Dy]))  # method of joints (sympy)
    if not with_sections:
        assert r.displacements is None
        assert r.members[ms[0].id].deflection(1.0) is None


def test_inclined_roller():
    L, P, alpha = 6.0, 10e3, math.radians(30)
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, SEC)
    f.add_support(a, "pin")
    f.add_support(b, "roller", angle=alpha)  # rolling surface at 30 degrees
    f.add_load(PointLoad(m.id, L / 2, 0.0, -P))
    r = solve(f)["D"]
    pin, roller = r.reactions
    # statics: the roller pushes along the normal to its rolling surface,
    # (-sin a, cos a); moments about the pin give its vertical part P/2
    assert roller.fy == approx(P / 2)
    assert roller.fx == approx(-P / 2 * math.tan(alpha))
    assert pin.fx == approx(P / 2 * math.tan(alpha))
    assert r.members[m.id].axial(1.0) == approx(-P / 2 * math.tan(alpha))  # statics: the beam is compressed
    # the roller node moves only along its rolling surface (normal component zero)
    ux, uy = r.displacements[1, :2]
    assert -math.sin(alpha) * ux + math.cos(alpha) * uy == approx(0.0, abs_=1e-15)  # roller kinematics


def test_settlement_of_fixed_fixed_beam():
    L, delta = 5.0, 0.01
    f, (a, b), (m,) = beam(L, "fixed", "fixed")
    f.add_load(Settlement(b, dy=-delta))
    r = solve(f)["D"]
    mr = r.members[m.id]
    assert mr.moment(0.0) == approx(-6 * EI * delta / L**2)  # slope-deflection (from memory): 6EI delta/L^2
    assert mr.moment(L) == approx(6 * EI * delta / L**2)  # slope-deflection (from memory)
    assert mr.shear(L / 2) == approx(12 * EI * delta / L**3)  # statics: V = (M2 - M1)/L
    assert mr.deflection(L)[1] == approx(-delta)


def test_settlement_of_centre_support_of_two_spans():
    L, delta = 5.0, 0.004
    f, nodes, members = beam(L, "pin", "roller", n_spans=2)
    f.add_load(Settlement(nodes[1], dy=-delta))
    r = solve(f)["D"]
    # compatibility: the centre reaction that pulls a 2L simple span down by
    # delta is P = 48EI delta/(2L)^3 = 6EI delta/L^3 (AISC case 7 deflection)
    assert r.reactions[1].fy == approx(-6 * EI * delta / L**3)
    assert r.members[members[0].id].moment(L) == approx(3 * EI * delta / L**2)  # statics: P(2L)/4, sagging


def test_spring_support_shares_the_load():
    L, P, k = 4.0, 10e3, 1e6
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    f.add_member(a, b, SEC)
    f.add_support(a, "fixed")
    f.add_support(b, "spring", ky=k)
    f.add_load(NodalLoad(b, fy=-P))
    r = solve(f)["D"]
    kb = 3 * EI / L**3  # AISC case 22: tip stiffness of a cantilever
    assert r.reactions[1].fy == approx(P * k / (k + kb))  # springs in parallel (from memory)
    assert r.reactions[0].fy == approx(P * kb / (k + kb))  # springs in parallel


def test_projected_load_on_inclined_member():
    run, rise, w = 6.0, 2.5, 4e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(run, rise)
    m = f.add_member(a, b, SEC)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w), projected=True))
    r = solve(f)["D"]
    Lm = math.hypot(run, rise)
    # statics: per horizontal projection, an inclined simple beam has the
    # moments of the horizontal beam of its run (AISC case 1 on the run)
    assert r.members[m.id].extremes()["m_max"] == approx(w * run**2 / 8)
    assert r.members[m.id].extremes()["m_max_at"] == approx(Lm / 2)
    assert r.reactions[0].fy + r.reactions[1].fy == approx(w * run)  # statics: total load w * run


def test_local_normal_load_on_inclined_member():
    run, rise, q = 4.0, 3.0, 2e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(run, rise)
    m = f.add_member(a, b, SEC)
    f.add_support(a, "pin")
    f.add_support(b, "roller", angle=math.atan2(rise, run))  # rolls along the member
    f.add_load(DistributedLoad(m.id, q1=(0.0, -q), axes="local"))
    r = solve(f)["D"]
    Lm = 5.0
    assert r.members[m.id].moment(Lm / 2) == approx(q * Lm**2 / 8)  # AISC case 1 on the member length
    assert r.members[m.id].axial(1.0) == approx(0.0, abs_=1e-6)  # roller along the member: no axial force


# --------------------------------------------------------------------------
# determinate frames against plain equilibrium (sympy)


def _gable(sections, hinge_at_apex=False):
    f = Frame()
    A_, B_, C_, D_, E_ = (f.add_node(0, 0), f.add_node(0, 4), f.add_node(3, 5.5), f.add_node(6, 4), f.add_node(6, 0))
    ab = f.add_member(A_, B_, sections)
    bc = f.add_member(B_, C_, sections, release_end=hinge_at_apex)
    cd = f.add_member(C_, D_, sections, release_start=hinge_at_apex)
    ed = f.add_member(E_, D_, sections)
    f.add_support(A_, "pin")
    f.add_support(E_, "pin" if hinge_at_apex else "roller")
    f.add_load(PointLoad(bc.id, 1.2, 0.0, -8e3))
    f.add_load(DistributedLoad(cd.id, q1=(0.0, -3e3), projected=True))
    f.add_load(DistributedLoad(ab.id, q1=(2e3, 0.0), q2=(4e3, 0.0), a=0.5, b=3.5))
    f.add_load(MemberCouple(ed.id, 1.0, 5e3))
    f.add_load(NodalLoad(C_, fx=1e3))
    f.add_load(DistributedLoad(bc.id, q1=(0.0, -1.5e3), q2=(0.0, -0.5e3), a=0.4, b=2.9, axes="local"))
    return f, (ab, bc, cd, ed)


def _sym_member_loads(f: Frame):
    """Every load as (force vector, point of application) or a couple, in
    exact sympy arithmetic, computed from the load definitions directly."""
    items = []  # (mid or None, s along member or None, Fx, Fy, Px, Py, couple)
    for ld in f.loads:
        if isinstance(ld, NodalLoad):
            n = f.nodes[ld.node]
            items.append((None, None, sy.nsimplify(ld.fx), sy.nsimplify(ld.fy), sy.nsimplify(n.x),
                          sy.nsimplify(n.y), sy.nsimplify(ld.m)))
            continue
        m = f.member(ld.member)
        p0, p1 = f.nodes[m.start], f.nodes[m.end]
        x0, y0 = sy.nsimplify(p0.x), sy.nsimplify(p0.y)
        dx, dy = sy.nsimplify(p1.x) - x0, sy.nsimplify(p1.y) - y0
        Lm = sy.sqrt(dx**2 + dy**2)
        c, s = dx / Lm, dy / Lm
        if isinstance(ld, MemberCouple):
            a_ = sy.nsimplify(ld.a)
            items.append((m.id, a_, 0, 0, x0 + c * a_, y0 + s * a_, sy.nsimplify(ld.m)))
        elif isinstance(ld, PointLoad):
            a_ = sy.nsimplify(ld.a)
            px, py = sy.nsimplify(ld.px), sy.nsimplify(ld.py)
            if ld.axes == "local":
                px, py = c * px - s * py, s * px + c * py
            items.append((m.id, a_, px, py, x0 + c * a_, y0 + s * a_, 0))
        elif isinstance(ld, DistributedLoad):
            # integrate the load exactly: resultant and its moment, split in
            # many slices is not needed -- sympy integrates the linear law
            t = sy.Symbol("t")
            a_ = sy.nsimplify(ld.a)
            b_ = Lm if ld.b is None else sy.nsimplify(ld.b)
            q1 = [sy.nsimplify(v) for v in ld.q1]
            q2 = q1 if ld.q2 is None else [sy.nsimplify(v) for v in ld.q2]
            qx = q1[0] + (q2[0] - q1[0]) * (t - a_) / (b_ - a_)
            qy = q1[1] + (q2[1] - q1[1]) * (t - a_) / (b_ - a_)
            if ld.axes == "local":
                qx, qy = c * qx - s * qy, s * qx + c * qy
            if ld.projected:
                qx, qy = qx * sy.Abs(c), qy * sy.Abs(c)
            items.append((m.id, (a_, b_, t), qx, qy, x0 + c * t, y0 + s * t, 0))
    return items


def _resultant_about(items, px, py, upto=None):
    """Sum of forces and of CCW moments about (px, py).  ``upto`` maps the
    member ids to keep to the distance from the member start up to which
    their loads count (None: every load, nodal ones included)."""
    Fx = Fy = Mz = 0
    for mid, pos, fx, fy, x, y, cpl in items:
        if upto is not None and mid not in upto:
            continue
        lim = sy.oo if upto is None else upto[mid]
        if isinstance(pos, tuple):
            a_, b_, t = pos
            hi = sy.Min(b_, lim)
            if hi <= a_:
                continue
            Fx += sy.integrate(fx, (t, a_, hi))
            Fy += sy.integrate(fy, (t, a_, hi))
            Mz += sy.integrate((x - px) * fy - (y - py) * fx, (t, a_, hi))
        elif pos is None or pos <= lim:
            Fx += fx
            Fy += fy
            Mz += (x - px) * fy - (y - py) * fx + cpl
    return sy.nsimplify(Fx), sy.nsimplify(Fy), sy.simplify(Mz)


@pytest.mark.parametrize("with_sections", [True, False])
def test_determinate_gable_frame_against_sympy_equilibrium(with_sections):
    f, (ab, bc, cd, ed) = _gable(SEC if with_sections else None)
    r = solve(f, determinate=True)["D"]
    items = _sym_member_loads(f)
    Ax, Ay, Ey = sy.symbols("Ax Ay Ey")
    Fx, Fy, Mz = _resultant_about(items, 0, 0)
    sol = sy.solve([Ax + Fx, Ay + Ey + Fy, 6 * Ey + Mz], [Ax, Ay, Ey], dict=True)[0]
    assert r.reactions[0].fx == approx(float(sol[Ax]))  # sympy: sum Fx = 0
    assert r.reactions[0].fy == approx(float(sol[Ay]))  # sympy: sum Fy = 0
    assert r.reactions[1].fy == approx(float(sol[Ey]))  # sympy: sum M about A = 0

    # internal forces at a cut 2.0 along rafter B-C, from the free body on
    # its start side (column AB, support A and the rafter up to the cut)
    s_cut = sy.Rational(2)
    Lbc = sy.sqrt(3**2 + sy.Rational(3, 2) ** 2)
    c, s = 3 / Lbc, sy.Rational(3, 2) / Lbc
    px, py = c * s_cut, 4 + s * s_cut

    Fx, Fy, Mz = _resultant_about(items, px, py, upto={ab.id: sy.oo, bc.id: s_cut})
    Fx += sol[Ax]
    Fy += sol[Ay]
    Mz += (0 - px) * sol[Ay] - (0 - py) * sol[Ax]
    mr = r.members[bc.id]
    assert mr.moment(2.0) == approx(float(-Mz), abs_=1e-6)  # sympy free body: M = -sum of CCW moments
    assert mr.axial(2.0) == approx(float(-(Fx * c + Fy * s)), abs_=1e-6)  # sympy free body
    assert mr.shear(2.0) == approx(float(-Fx * s + Fy * c), abs_=1e-6)  # sympy free body


def test_three_hinged_frame_against_sympy_equilibrium():
    f, (ab, bc, cd, ed) = _gable(SEC, hinge_at_apex=True)
    r = solve(f)["D"]
    items = _sym_member_loads(f)
    Ax, Ay, Ex, Ey = sy.symbols("Ax Ay Ex Ey")
    Fx, Fy, Mz = _resultant_about(items, 0, 0)
    # left part (A, AB, BC) about the hinge C(3, 5.5): no moment through the hinge;
    # the nodal load at C itself acts on the joint, not on the left part
    lx, ly, lm = _resultant_about(items, 3, sy.Rational(11, 2), upto={ab.id: sy.oo, bc.id: sy.oo})
    hinge = lm + (0 - 3) * Ay - (0 - sy.Rational(11, 2)) * Ax
    sol = sy.solve([Ax + Ex + Fx, Ay + Ey + Fy, 6 * Ey + Mz, hinge], [Ax, Ay, Ex, Ey], dict=True)[0]
    assert r.reactions[0].fx == approx(float(sol[Ax]))  # sympy: three-hinged frame equilibrium
    assert r.reactions[0].fy == approx(float(sol[Ay]))  # sympy
    assert r.reactions[1].fx == approx(float(sol[Ex]))  # sympy
    assert r.reactions[1].fy == approx(float(sol[Ey]))  # sympy
    assert r.members[bc.id].moment(r.members[bc.id].length) == approx(0.0, abs_=1e-6)  # hinge: M = 0


# --------------------------------------------------------------------------
# errors


def test_mechanism_raises():
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(4, 0)
    f.add_member(a, b, SEC)
    f.add_support(a, "pin")
    f.add_load(NodalLoad(b, fy=-1e3))
    with pytest.raises(UnstableFrameError) as ei:
        solve(f)
    assert "mechanism" in str(ei.value)
    assert 1 in ei.value.nodes or 0 in ei.value.nodes


def test_couple_on_a_fully_pinned_joint_is_unstable():
    f, pairs, ms = _pratt_truss(SEC)
    f.add_load(NodalLoad(f.loads[0].node, m=1e3))
    with pytest.raises(UnstableFrameError):
        solve(f)


def test_missing_sections():
    f, _, (m,) = beam(5.0, "fixed", "roller", sec=None)
    f.add_load(DistributedLoad(m.id, q1=(0.0, -1e3)))
    with pytest.raises(MissingSectionError):
        solve(f)
    with pytest.raises(MissingSectionError):  # indeterminate: the caller's claim is checked
        solve(f, determinate=True)
    g, _, (m2,) = beam(5.0, "pin", "roller", sec=None)
    g.add_load(DistributedLoad(m2.id, q1=(0.0, -1e3)))
    r = solve(g, determinate=True)["D"]
    assert r.members[m2.id].moment(2.5) == approx(1e3 * 25 / 8)  # AISC case 1: wl^2/8
    assert r.members[m2.id].max_deflection() is None


def test_bad_loads():
    f, _, (m,) = beam(5.0, "pin", "roller")
    f.add_load(PointLoad(m.id, 6.0, 0.0, -1.0, handle="1F"))
    with pytest.raises(LoadError) as ei:
        solve(f)
    assert ei.value.handle == "1F"
    g, _, (m2,) = beam(5.0, "pin", "roller")
    g.add_load(PointLoad("nope", 1.0, 0.0, -1.0))
    with pytest.raises(LoadError):
        solve(g)
