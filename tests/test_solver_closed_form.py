"""The frame solver against published closed forms and independent statics.

Every expected value comes from outside the project: the beam diagrams and
formulas of the AISC Steel Construction Manual (Table 3-23) and Roark's
Formulas for Stress and Strain (beam tables), the method of joints, the
slope-deflection method, or equilibrium equations solved independently with
sympy.  Handbook entries are quoted from memory (named by their load case,
not by a case number).

Sign convention under test (drawing-convention.md): tension +; shear +
when it turns the element clockwise; moment + when the member bends
concave toward local +y (sagging for a beam drawn left to right); reactions
global X, Y and counter-clockwise moment, acting on the structure.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp

from solver import (
    DistributedLoad,
    Frame,
    MemberCouple,
    MissingSectionError,
    NodalLoad,
    PointLoad,
    Section,
    Settlement,
    UnstableFrameError,
    solve,
)

E, A, I = 200e9, 5e-3, 8e-5          # steel, a mid-size rolled section [Pa, m^2, m^4]
SEC = Section(E=E, A=A, I=I)
EI = E * I
REL = 1e-9                            # relative tolerance on exact results


def close(a, b, rel=REL, scale=None):
    """|a - b| <= rel * scale (scale defaults to |b|, at least 1e-300)."""
    s = abs(b) if scale is None else scale
    return abs(a - b) <= rel * max(s, 1e-300)


def beam(L, supports, sec=SEC, n_spans=1, **kw):
    """A straight horizontal beam from (0,0) to (L*n_spans, 0), one member per span."""
    f = Frame()
    nodes = [f.add_node(k * L, 0.0) for k in range(n_spans + 1)]
    mems = [f.add_member(nodes[k], nodes[k + 1], sec, **kw) for k in range(n_spans)]
    for node, kind in supports:
        f.add_support(nodes[node], kind)
    return f, nodes, mems


def moment_of(fx, fy, px, py, ox, oy):
    """Counter-clockwise moment about (ox, oy) of the force (fx, fy) acting at (px, py)."""
    return (px - ox) * fy - (py - oy) * fx


def reaction_at(res, node):
    return next(r for r in res.reactions if r.node == node)


# --------------------------------------------------------------------------- beams
def test_simple_beam_uniform_load():
    L, w = 6.0, 10e3
    f, (a, b), (m,) = beam(L, [(0, "pin"), (1, "roller")])
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    res = solve(f)["D"]
    mr = res.members[m.id]
    # AISC Table 3-23, simple beam - uniformly distributed load: R = wL/2,
    # Mmax = wL^2/8 at centre, deflection 5wL^4/(384EI) at centre (from memory)
    assert close(reaction_at(res, a).fy, w * L / 2)
    assert close(reaction_at(res, b).fy, w * L / 2)
    assert close(mr.moment(L / 2), w * L**2 / 8)
    assert close(mr.shear(0.0), w * L / 2)              # V = R at the left end, up on the left face
    assert close(mr.shear(L), -w * L / 2)
    # M(x) = wx(L - x)/2 along the span (same table)
    x = np.linspace(0, L, 13)
    assert np.allclose(mr.moment(x), w * x * (L - x) / 2, rtol=0, atol=REL * w * L**2)
    ex = mr.extremes()
    assert close(ex["m_max"], w * L**2 / 8) and close(ex["m_max_at"], L / 2)
    u, v = mr.deflection(L / 2)
    assert close(v, -5 * w * L**4 / (384 * EI))
    dmax, at = mr.max_deflection()
    assert close(dmax, 5 * w * L**4 / (384 * EI)) and close(at, L / 2, rel=1e-6)
    # AISC Table 3-23 (same case): deflection at x: wx(L^3 - 2Lx^2 + x^3)/(24EI)
    xs = np.array([0.7, 2.0, 4.4])
    assert np.allclose(mr.deflection(xs)[1], -w * xs * (L**3 - 2 * L * xs**2 + xs**3) / (24 * EI), rtol=1e-9, atol=0)


def test_simple_beam_point_load_anywhere():
    L, P, a_ = 7.0, 25e3, 2.0
    b_ = L - a_
    f, (na, nb), (m,) = beam(L, [(0, "pin"), (1, "roller")])
    f.add_load(PointLoad(m.id, a=a_, py=-P))
    mr = solve(f)["D"].members[m.id]
    # AISC Table 3-23, simple beam - concentrated load at any point:
    # Mmax = Pab/L at the load, deflection at the load Pa^2b^2/(3EIL) (from memory)
    assert close(mr.moment(a_), P * a_ * b_ / L)
    assert close(mr.deflection(a_)[1], -P * a_**2 * b_**2 / (3 * EI * L))
    # shear jumps by P at the load: Pb/L left of it, -Pa/L right of it (same table)
    assert close(mr.shear(a_, side="left"), P * b_ / L)
    assert close(mr.shear(a_, side="right"), -P * a_ / L)
    assert close(mr.shear(a_), -P * a_ / L)            # default: value just right of x


def test_cantilever_end_load():
    L, P = 4.0, 12e3
    f, (a, b), (m,) = beam(L, [(0, "fixed")])
    f.add_load(NodalLoad(b, fy=-P))
    res = solve(f)["D"]
    mr = res.members[m.id]
    # AISC Table 3-23, cantilever beam - concentrated load at free end:
    # M at the support = -PL (hogging), tip deflection PL^3/(3EI) (from memory)
    assert close(mr.moment(0.0), -P * L)
    assert close(mr.moment(L), 0.0, scale=P * L)
    assert close(mr.deflection(L)[1], -P * L**3 / (3 * EI))
    assert close(res.displacements[b, 1], -P * L**3 / (3 * EI))
    # tip slope PL^2/(2EI), clockwise (same table)
    assert close(res.displacements[b, 2], -P * L**2 / (2 * EI))
    r = reaction_at(res, a)
    assert close(r.fy, P) and close(r.m, P * L)         # wall pushes up, counter-clockwise couple


def test_propped_cantilever_uniform_load():
    L, w = 8.0, 6e3
    f, (a, b), (m,) = beam(L, [(0, "fixed"), (1, "roller")])
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    res = solve(f)["D"]
    mr = res.members[m.id]
    # AISC Table 3-23, beam fixed at one end, supported at other - uniformly
    # distributed load: R_fixed = 5wL/8, R_prop = 3wL/8, M_fixed = -wL^2/8,
    # Mmax+ = 9wL^2/128 at 3L/8 from the prop (from memory)
    assert close(reaction_at(res, a).fy, 5 * w * L / 8)
    assert close(reaction_at(res, b).fy, 3 * w * L / 8)
    assert close(mr.moment(0.0), -w * L**2 / 8)
    ex = mr.extremes()
    assert close(ex["m_max"], 9 * w * L**2 / 128)
    assert close(ex["m_max_at"], L - 3 * L / 8)
    assert close(ex["m_min"], -w * L**2 / 8) and ex["m_min_at"] == 0.0


def test_fixed_fixed_uniform_load():
    L, w = 5.0, 9e3
    f, (a, b), (m,) = beam(L, [(0, "fixed"), (1, "fixed")])
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    mr = solve(f)["D"].members[m.id]
    # AISC Table 3-23, beam fixed at both ends - uniformly distributed load:
    # M_end = -wL^2/12, M_centre = +wL^2/24, deflection wL^4/(384EI) (from memory)
    assert close(mr.moment(0.0), -w * L**2 / 12)
    assert close(mr.moment(L), -w * L**2 / 12)
    assert close(mr.moment(L / 2), w * L**2 / 24)
    assert close(mr.deflection(L / 2)[1], -w * L**4 / (384 * EI))
    # zeros of M at x = L(1/2 -+ sqrt(3)/6) (from M(x) = w(6Lx - L^2 - 6x^2)/12, same table)
    cp = mr.critical_points()
    for x0 in (L * (0.5 - math.sqrt(3) / 6), L * (0.5 + math.sqrt(3) / 6), L / 2):
        assert np.min(np.abs(cp - x0)) <= 1e-9 * L


def test_two_equal_continuous_spans():
    L, w = 6.0, 10e3
    f, nodes, (m1, m2) = beam(L, [(0, "pin"), (1, "roller"), (2, "roller")], n_spans=2)
    for m in (m1, m2):
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    res = solve(f)["D"]
    # AISC Table 3-23, continuous beam - two equal spans - uniform load on both
    # spans: R_centre = 10wL/8 = 1.25wL, R_end = 3wL/8, M over the support
    # = -wL^2/8 (from memory)
    assert close(reaction_at(res, nodes[1]).fy, 1.25 * w * L)
    assert close(reaction_at(res, nodes[0]).fy, 3 * w * L / 8)
    assert close(reaction_at(res, nodes[2]).fy, 3 * w * L / 8)
    assert close(res.members[m1.id].moment(L), -w * L**2 / 8)
    assert close(res.members[m2.id].moment(0.0), -w * L**2 / 8)
    # Mmax+ = 9wL^2/128 at 3L/8 from the end supports (same table)
    assert close(res.members[m1.id].extremes()["m_max"], 9 * w * L**2 / 128)
    assert close(res.members[m1.id].extremes()["m_max_at"], 3 * L / 8)


def test_triangular_load_simple_span():
    L, w = 9.0, 12e3
    f, (a, b), (m,) = beam(L, [(0, "pin"), (1, "roller")])
    f.add_load(DistributedLoad(m.id, q1=(0.0, 0.0), q2=(0.0, -w)))
    res = solve(f)["D"]
    mr = res.members[m.id]
    # AISC Table 3-23, simple beam - load increasing uniformly to one end:
    # R1 = W/3, R2 = 2W/3 (W = wL/2), Mmax = 2WL/(9 sqrt 3) = wL^2/(9 sqrt 3)
    # at x = L/sqrt 3 (from memory)
    assert close(reaction_at(res, a).fy, w * L / 6)
    assert close(reaction_at(res, b).fy, w * L / 3)
    ex = mr.extremes()
    assert close(ex["m_max"], w * L**2 / (9 * math.sqrt(3)))
    assert close(ex["m_max_at"], L / math.sqrt(3))
    # same table: max deflection 0.01304 W L^3/EI at x = L sqrt(1 - sqrt(8/15))
    # = 0.5193 L (from memory; the coefficient is given to 4 figures)
    W = w * L / 2
    dmax, at = mr.max_deflection()
    assert dmax == pytest.approx(0.01304 * W * L**3 / EI, rel=5e-4)
    assert at == pytest.approx(L * math.sqrt(1 - math.sqrt(8 / 15)), rel=1e-6)


def test_partial_trapezoidal_load_on_fixed_beam_by_integration():
    # fixed-end moments of any load q(x) on a clamped beam (Roark, beam fixed at
    # both ends, general load): M_A = -int q x b^2/L^2, M_B = -int q x^2 b/L^2 with
    # b = L - x; sympy integrates the trapezoid exactly (independent of the solver)
    L, a_, b_, q1, q2 = 6.0, 1.5, 4.5, -4e3, -10e3
    x = sp.symbols("x")
    q = q1 + (q2 - q1) * (x - a_) / (b_ - a_)
    MA = float(sp.integrate(q * x * (L - x) ** 2 / L**2, (x, a_, b_)))
    MB = float(sp.integrate(q * x**2 * (L - x) / L**2, (x, a_, b_)))
    f, (na, nb), (m,) = beam(L, [(0, "fixed"), (1, "fixed")])
    f.add_load(DistributedLoad(m.id, q1=(0.0, q1), q2=(0.0, q2), a=a_, b=b_))
    mr = solve(f)["D"].members[m.id]
    # downward load (q < 0) gives hogging end moments: M(0) = MA, M(L) = MB
    assert close(mr.moment(0.0), MA)
    assert close(mr.moment(L), MB)


def test_couple_on_simple_span_by_statics():
    # statics (sympy): simple span, CCW couple C at a; R_left = -C/L (from sum of
    # moments about the right support), M jumps by -C at a (left free body)
    L, C, a_ = 5.0, 30e3, 2.0
    Ra, Rb = sp.symbols("Ra Rb")
    sol = sp.solve([Ra + Rb, C + Rb * L], [Ra, Rb])
    f, (na, nb), (m,) = beam(L, [(0, "pin"), (1, "roller")])
    f.add_load(MemberCouple(m.id, a=a_, m=C))
    res = solve(f)["D"]
    mr = res.members[m.id]
    assert close(reaction_at(res, na).fy, float(sol[Ra]))
    assert close(mr.moment(a_, side="left"), float(sol[Ra]) * a_, scale=C)
    assert close(mr.moment(a_, side="right"), float(sol[Ra]) * a_ - C, scale=C)


# --------------------------------------------------------------------------- frames
def test_pinned_base_portal_lateral_load():
    h, L, H = 4.0, 6.0, 20e3
    Ic, Ib = 8e-5, 2.4e-4
    big_A = 10.0                      # nearly axially rigid, as slope-deflection assumes
    # (axial strain changes the sway by about I / (A h^2) = 5e-7 relative)
    f = Frame()
    a, b, c, d = f.add_node(0, 0), f.add_node(0, h), f.add_node(L, h), f.add_node(L, 0)
    col1 = f.add_member(a, b, Section(E, big_A, Ic))
    bm = f.add_member(b, c, Section(E, big_A, Ib))
    col2 = f.add_member(d, c, Section(E, big_A, Ic))
    f.add_support(a, "pin")
    f.add_support(d, "pin")
    f.add_load(NodalLoad(b, fx=H))
    res = solve(f)["D"]
    # slope-deflection method (clockwise-positive end moments), far ends pinned:
    # M_BA = 3EIc/h (thB - psi), M_CD = 3EIc/h (thC - psi), M_BC = 2EIb/L (2thB + thC),
    # M_CB = 2EIb/L (2thC + thB); joints B, C: sum = 0; storey shear M_BA + M_CD = -H h
    tB, tC, psi = sp.symbols("tB tC psi")
    kc, kb = 3 * E * Ic / h, 2 * E * Ib / L
    MBA, MCD = kc * (tB - psi), kc * (tC - psi)
    MBC, MCB = kb * (2 * tB + tC), kb * (2 * tC + tB)
    s = sp.solve([MBA + MBC, MCB + MCD, MBA + MCD + H * h], [tB, tC, psi])
    sway = float(s[psi]) * h
    assert res.displacements[b, 0] == pytest.approx(sway, rel=5e-6)
    assert res.displacements[c, 0] == pytest.approx(sway, rel=5e-6)
    # antisymmetric load on a symmetric frame: each pinned base takes H/2
    # horizontally, and moment equilibrium gives vertical reactions -+H h / L
    ra, rd = reaction_at(res, a), reaction_at(res, d)
    assert close(ra.fx, -H / 2, rel=1e-6) and close(rd.fx, -H / 2, rel=1e-6)
    assert close(ra.fy, -H * h / L) and close(rd.fy, H * h / L)
    # column top moment: the lower free body carries only the base reaction,
    # M = -(r x F) about the cut (see module docstring); column local x points up
    m_top = -moment_of(ra.fx, ra.fy, 0, 0, 0, h)
    assert close(res.members[col1.id].moment(h), m_top)
    assert close(abs(m_top), H * h / 2, rel=1e-6)
    # slope-deflection end moment M_BA (clockwise on the member) = the
    # counter-clockwise node force on the member's end: Mj = -M_BA
    assert res.members[col1.id].end_forces[5] == pytest.approx(-float(MBA.subs(s)), rel=1e-6)
    assert close(res.members[bm.id].axial(L / 2), -H / 2, rel=1e-6)   # beam strut carries H/2


def test_three_hinged_frame_matches_sympy_statics():
    """Determinate frame: reactions and moments equal the free-body solution."""
    h, L, w, H = 5.0, 12.0, 8e3, 15e3
    f = Frame()
    a, b, c, d, e = (f.add_node(0, 0), f.add_node(0, h), f.add_node(L / 2, h), f.add_node(L, h), f.add_node(L, 0))
    m_ab = f.add_member(a, b, SEC)
    m_bc = f.add_member(b, c, SEC, release_end=True)
    m_cd = f.add_member(c, d, SEC, release_start=True)
    m_ed = f.add_member(e, d, SEC)
    f.add_support(a, "pin")
    f.add_support(e, "pin")
    for m in (m_bc, m_cd):
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    f.add_load(NodalLoad(b, fx=H))
    res = solve(f)["D"]
    # sympy: unknown reactions, three equilibrium equations + zero moment at the crown hinge
    Ax, Ay, Ex, Ey = sp.symbols("Ax Ay Ex Ey")
    eqs = [
        Ax + Ex + H,
        Ay + Ey - w * L,
        # moments about A: H at B (0, h), load wL at (L/2, h), reactions at E (L, 0)
        moment_of(H, 0, 0, h, 0, 0) + moment_of(0, -w * L, L / 2, h, 0, 0) + moment_of(Ex, Ey, L, 0, 0, 0),
        # left half about the crown hinge C (L/2, h): A reactions, H at B, load w L/2 at (L/4, h)
        moment_of(Ax, Ay, 0, 0, L / 2, h) + moment_of(H, 0, 0, h, L / 2, h) + moment_of(0, -w * L / 2, L / 4, h, L / 2, h),
    ]
    s = sp.solve(eqs, [Ax, Ay, Ex, Ey])
    ra, re = reaction_at(res, a), reaction_at(res, e)
    for got, want in ((ra.fx, s[Ax]), (ra.fy, s[Ay]), (re.fx, s[Ex]), (re.fy, s[Ey])):
        assert close(got, float(want), scale=w * L)
    # moment in the left beam at x from B: left free body = column AB + beam [0, x]
    for x in (1.0, 3.3, L / 2 - 1e-3):
        # M = -(sum of CCW moments about the cut (x, h) of the forces on the left part)
        mom = -(
            moment_of(float(s[Ax]), float(s[Ay]), 0, 0, x, h)     # reaction at A
            + moment_of(H, 0, 0, h, x, h)                         # H at B
            + moment_of(0, -w * x, x / 2, h, x, h)                # load w x at x/2
        )
        assert close(res.members[m_bc.id].moment(x), mom, scale=w * L**2)
    assert close(res.members[m_bc.id].moment(L / 2), 0.0, scale=w * L**2)


def test_truss_by_method_of_joints():
    # 3-4-5 triangle: A(0,0), B(8,0), apex C(4,3); P down at C.  Method of joints:
    # at C, 2 F sin(theta) = -P with sin = 3/5 -> F_AC = F_BC = -5P/6 (compression);
    # at A, F_AB + F_AC cos(theta) = 0 with cos = 4/5 -> F_AB = 2P/3 (tension)
    P = 30e3
    f = Frame()
    a, b, c = f.add_node(0, 0), f.add_node(8, 0), f.add_node(4, 3)
    ab = f.add_member(a, b, SEC, release_start=True, release_end=True)
    ac = f.add_member(a, c, SEC, release_start=True, release_end=True)
    cb = f.add_member(c, b, SEC, release_start=True, release_end=True)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_load(NodalLoad(c, fy=-P))
    res = solve(f)["D"]
    assert close(res.members[ab.id].axial(4.0), 2 * P / 3)
    assert close(res.members[ac.id].axial(2.5), -5 * P / 6)
    assert close(res.members[cb.id].axial(2.5), -5 * P / 6)
    for m in (ab, ac, cb):
        ex = res.members[m.id].extremes()
        assert abs(ex["m_max"]) <= 1e-9 * P and abs(ex["m_min"]) <= 1e-9 * P
    assert close(reaction_at(res, a).fy, P / 2) and close(reaction_at(res, b).fy, P / 2)
    # without sections the determinate truss still solves (forces only)
    g = Frame()
    for n in f.nodes:
        g.add_node(n.x, n.y)
    for m in f.members:
        g.add_member(m.start, m.end, None, release_start=True, release_end=True, id=m.id)
    g.supports = list(f.supports)
    g.loads = list(f.loads)
    with pytest.raises(MissingSectionError):
        solve(g)
    r2 = solve(g, determinate=True)["D"]
    assert r2.displacements is None
    assert r2.members[ab.id].deflection(1.0) is None and r2.members[ab.id].max_deflection() is None
    assert close(r2.members[ab.id].axial(4.0), 2 * P / 3)
    assert close(r2.members[ac.id].axial(1.0), -5 * P / 6)


def test_pratt_truss_matches_sympy_method_of_joints():
    """A 4-panel truss: member forces from the joint equations solved by sympy."""
    pw, ht, P = 3.0, 2.5, 10e3
    f = Frame()
    bottom = [f.add_node(k * pw, 0.0) for k in range(5)]
    top = [f.add_node(k * pw, ht) for k in range(1, 4)]
    pairs = [(bottom[k], bottom[k + 1]) for k in range(4)]
    pairs += [(top[k], top[k + 1]) for k in range(2)]
    pairs += [(bottom[0], top[0]), (top[2], bottom[4])]
    pairs += [(bottom[k], top[k - 1]) for k in (1, 2, 3)]
    pairs += [(top[0], bottom[2]), (bottom[2], top[2])]
    mems = [f.add_member(i, j, SEC, release_start=True, release_end=True) for i, j in pairs]
    f.add_support(bottom[0], "pin")
    f.add_support(bottom[4], "roller")
    for k in (1, 2, 3):
        f.add_load(NodalLoad(bottom[k], fy=-P))
    f.add_load(NodalLoad(top[0], fx=0.4 * P))
    res = solve(f)["D"]
    # method of joints: sum of forces at every joint = 0, tension positive
    forces = sp.symbols(f"F0:{len(mems)}")
    R = sp.symbols("Rax Ray Rby")
    xy = [(n.x, n.y) for n in f.nodes]
    eqx = {n: 0 for n in range(len(xy))}
    eqy = {n: 0 for n in range(len(xy))}
    for F, (i, j) in zip(forces, pairs):
        dx, dy = xy[j][0] - xy[i][0], xy[j][1] - xy[i][1]
        ln = math.hypot(dx, dy)
        eqx[i] += F * dx / ln; eqy[i] += F * dy / ln       # a tension pulls joint i toward j
        eqx[j] -= F * dx / ln; eqy[j] -= F * dy / ln
    eqx[bottom[0]] += R[0]; eqy[bottom[0]] += R[1]; eqy[bottom[4]] += R[2]
    for k in (1, 2, 3):
        eqy[bottom[k]] -= P
    eqx[top[0]] += 0.4 * P
    sol = sp.solve(list(eqx.values()) + list(eqy.values()), list(forces) + list(R))
    for F, m in zip(forces, mems):
        assert close(res.members[m.id].axial(0.5), float(sol[F]), scale=P)
    assert close(reaction_at(res, bottom[0]).fx, float(sol[R[0]]), scale=P)


def test_inclined_roller():
    # statics (sympy): pin at A, roller at B on a 30 degree slope; the roller
    # pushes normal to its rolling surface, direction (-sin30, cos30)
    L, P, ang = 6.0, 40e3, math.radians(30)
    f, (a, b), (m,) = beam(L, [(0, "pin")])
    f.add_support(b, "roller", angle=ang)
    f.add_load(PointLoad(m.id, a=L / 2, py=-P))
    res = solve(f)["D"]
    Ax, Ay, Rn = sp.symbols("Ax Ay Rn")
    s = sp.solve([Ax - Rn * math.sin(ang), Ay + Rn * math.cos(ang) - P, Rn * math.cos(ang) * L - P * L / 2], [Ax, Ay, Rn])
    rb = reaction_at(res, b)
    assert close(rb.fx, -float(s[Rn]) * math.sin(ang))
    assert close(rb.fy, float(s[Rn]) * math.cos(ang))
    assert close(reaction_at(res, a).fx, float(s[Ax]))
    # the beam carries the horizontal thrust between A and B as axial force:
    # left free body gives N = -Ax
    assert close(res.members[m.id].axial(1.0), -float(s[Ax]))
    # the roller moves only along its rolling surface
    ux, uy = res.displacements[b, 0], res.displacements[b, 1]
    assert abs(-math.sin(ang) * ux + math.cos(ang) * uy) <= 1e-12 * abs(ux)


def test_settlement_of_fixed_fixed_beam():
    L, delta = 6.0, 0.012
    f, (a, b), (m,) = beam(L, [(0, "fixed"), (1, "fixed")])
    f.add_load(Settlement(b, dy=-delta, case="SET"))
    res = solve(f)["SET"]
    mr = res.members[m.id]
    # slope-deflection / Roark (fixed-fixed beam, end displaced transversely):
    # end moments 6EI delta/L^2, shear 12EI delta/L^3 (from memory); the right
    # end dropping gives hogging at the left end, sagging at the right end
    assert close(mr.moment(0.0), -6 * EI * delta / L**2)
    assert close(mr.moment(L), 6 * EI * delta / L**2)
    assert close(mr.shear(L / 3), 12 * EI * delta / L**3)
    assert close(res.displacements[b, 1], -delta)
    # the dropped support pulls the beam down after it; the other one pushes up
    assert close(reaction_at(res, b).fy, -12 * EI * delta / L**3)
    assert close(reaction_at(res, a).fy, 12 * EI * delta / L**3)


def test_spring_propped_cantilever():
    # superposition of cantilever formulas (AISC Table 3-23, cantilever with
    # uniform load: tip deflection wL^4/(8EI); with end load: PL^3/(3EI); from
    # memory) with a prop spring k: R (L^3/3EI + 1/k) = wL^4/(8EI)
    L, w, k = 5.0, 7e3, 2e6
    f, (a, b), (m,) = beam(L, [(0, "fixed")])
    f.add_support(b, "spring", ky=k)
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    res = solve(f)["D"]
    R = (w * L**4 / (8 * EI)) / (L**3 / (3 * EI) + 1 / k)
    assert close(reaction_at(res, b).fy, R)
    assert close(res.displacements[b, 1], -R / k)


def test_projected_load_on_rafter():
    # statics: a load per horizontal projection w on a rafter of horizontal run d
    # totals w*d vertically; simply supported, each end takes w d / 2
    d, rise, w = 8.0, 3.0, 5e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(d, rise)
    m = f.add_member(a, b, SEC)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w), projected=True))
    res = solve(f)["D"]
    assert close(reaction_at(res, a).fy + reaction_at(res, b).fy, w * d)
    assert close(reaction_at(res, b).fy, w * d / 2)
    # max moment w d^2 / 8 at mid-length (statics of the inclined simple beam)
    assert close(res.members[m.id].extremes()["m_max"], w * d**2 / 8)


def test_gerber_beam_hinge_matches_statics():
    # fixed at A, internal hinge at C (x = 4), roller at B (x = 10); P at x = 7.
    # statics: span CB is simply supported -> V_C = P * 3/6; cantilever AC carries
    # V_C at its tip: M_A = -V_C * 4 (hogging), R_A = V_C
    P = 18e3
    f = Frame()
    a, c, b = f.add_node(0, 0), f.add_node(4, 0), f.add_node(10, 0)
    ac = f.add_member(a, c, SEC, release_end=True)
    cb = f.add_member(c, b, SEC, release_start=True)
    f.add_support(a, "fixed")
    f.add_support(b, "roller")
    f.add_load(PointLoad(cb.id, a=3.0, py=-P))
    res = solve(f)["D"]
    vc = P * 3 / 6
    assert close(res.members[ac.id].moment(0.0), -vc * 4)
    assert close(reaction_at(res, a).fy, vc)
    assert close(reaction_at(res, b).fy, P - vc)
    assert close(res.members[cb.id].moment(3.0), vc * 3)
    assert close(res.members[ac.id].moment(4.0), 0.0, scale=P)


# --------------------------------------------------------------------------- mechanisms
def test_mechanism_raises():
    f, _, (m,) = beam(5.0, [(0, "roller"), (1, "roller")])       # nothing holds it horizontally
    f.add_load(PointLoad(m.id, a=2.0, px=1e3, py=-1e3))
    with pytest.raises(UnstableFrameError) as err:
        solve(f)
    assert "mechanism" in str(err.value)


def test_couple_at_fully_hinged_joint_is_unstable():
    f = Frame()
    a, b, c = f.add_node(0, 0), f.add_node(3, 0), f.add_node(3, 3)
    f.add_member(a, b, SEC, release_end=True)
    f.add_member(b, c, SEC, release_start=True)
    f.add_support(a, "fixed")
    f.add_support(c, "fixed")
    f.add_load(NodalLoad(b, m=5e3))
    with pytest.raises(UnstableFrameError):
        solve(f)
