"""Properties every solution must have, on randomly generated frames.

* Global equilibrium (statics): the support reactions balance the applied
  loads, forces and moments, to 1e-9 relative.  The load resultants are
  computed here from the model's definitions, independently of the solver.
* Member free bodies: the internal forces at the member ends equal the end
  forces (N = -Ni, V = Vi, M = -Mi at the start; N = Nj, V = -Vj, M = Mj at
  the end), i.e. each member is in equilibrium with its loads.
* Superposition (linear first-order analysis): case A + case B equals the
  frame loaded with A and B together.
* A statically determinate beam gives the reactions of the free-body
  equations solved by sympy, with or without member sections.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from solver import (
    DistributedLoad,
    Frame,
    MemberCouple,
    NodalLoad,
    PointLoad,
    Section,
    Settlement,
    combine,
    solve,
)

E = 200e9
PROPS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# --------------------------------------------------------------------------- statics helpers
def member_point(f: Frame, m, a: float) -> tuple[float, float, float, float]:
    """Global position of the point at distance a along m, and (cos, sin) of m."""
    p, q = f.nodes[m.start], f.nodes[m.end]
    L = math.hypot(q.x - p.x, q.y - p.y)
    c, s = (q.x - p.x) / L, (q.y - p.y) / L
    return p.x + a * c, p.y + a * s, c, s


def to_global(vx: float, vy: float, axes: str, c: float, s: float) -> tuple[float, float]:
    if axes == "global":
        return vx, vy
    return c * vx - s * vy, s * vx + c * vy


def load_resultant(f: Frame, case: str) -> tuple[float, float, float, float]:
    """(Fx, Fy, M about the origin, scale) of the applied loads of a case.
    Distributed loads are integrated with Simpson's rule, exact for the
    quadratic integrand of a linear load."""
    fx = fy = mo = scale = 0.0
    for ld in f.loads:
        if ld.case != case or isinstance(ld, Settlement):
            continue
        if isinstance(ld, NodalLoad):
            n = f.nodes[ld.node]
            pts = [(n.x, n.y, ld.fx, ld.fy, 1.0)]
            mo += ld.m
            scale += abs(ld.m)
        elif isinstance(ld, MemberCouple):
            pts = []
            mo += ld.m
            scale += abs(ld.m)
        elif isinstance(ld, PointLoad):
            x, y, c, s = member_point(f, f.member(ld.member), ld.a)
            gx, gy = to_global(ld.px, ld.py, ld.axes, c, s)
            pts = [(x, y, gx, gy, 1.0)]
        else:
            m = f.member(ld.member)
            L = f.geometry(m)[0]
            a, b = ld.a, (L if ld.b is None else ld.b)
            q2 = ld.q1 if ld.q2 is None else ld.q2
            pts = []
            for t, wt in ((0.0, 1 / 6), (0.5, 4 / 6), (1.0, 1 / 6)):
                x, y, c, s = member_point(f, m, a + t * (b - a))
                k = abs(c) if ld.projected else 1.0
                qx = k * (ld.q1[0] + t * (q2[0] - ld.q1[0]))
                qy = k * (ld.q1[1] + t * (q2[1] - ld.q1[1]))
                gx, gy = to_global(qx, qy, ld.axes, c, s)
                pts.append((x, y, gx, gy, wt * (b - a)))
        for x, y, gx, gy, wt in pts:
            fx += wt * gx
            fy += wt * gy
            mo += wt * (x * gy - y * gx)
            scale += wt * math.hypot(gx, gy) * (1 + math.hypot(x, y))
    return fx, fy, mo, scale


def reaction_resultant(res) -> tuple[float, float, float, float]:
    fx = sum(r.fx for r in res.reactions)
    fy = sum(r.fy for r in res.reactions)
    mo = sum(r.x * r.fy - r.y * r.fx + r.m for r in res.reactions)
    scale = sum(abs(r.fx) + abs(r.fy) + abs(r.m) + math.hypot(r.x, r.y) * math.hypot(r.fx, r.fy) for r in res.reactions)
    return fx, fy, mo, scale


# --------------------------------------------------------------------------- frame generator
@st.composite
def frames(draw, cases=("A", "B")):
    """A random multi-bay, multi-storey frame with random sections, releases,
    supports and loads of every kind in the given cases."""
    nb = draw(st.integers(1, 3))
    ns = draw(st.integers(1, 2))
    widths = [draw(st.floats(3.0, 9.0)) for _ in range(nb)]
    heights = [draw(st.floats(2.5, 5.0)) for _ in range(ns)]
    xs = np.concatenate([[0.0], np.cumsum(widths)])
    ys = np.concatenate([[0.0], np.cumsum(heights)])
    f = Frame()
    node = {(i, j): f.add_node(xs[i], ys[j]) for j in range(ns + 1) for i in range(nb + 1)}

    def section():
        return Section(E=E, A=draw(st.floats(1e-3, 2e-2)), I=draw(st.floats(1e-5, 5e-4)))

    bases = [draw(st.sampled_from(["fixed", "pin"])) for _ in range(nb + 1)]
    all_fixed = all(b == "fixed" for b in bases)
    for j in range(ns):
        for i in range(nb + 1):
            f.add_member(node[i, j], node[i, j + 1], section())
    for j in range(1, ns + 1):
        for i in range(nb):
            rs = all_fixed and draw(st.booleans())
            re = all_fixed and draw(st.booleans())
            f.add_member(node[i, j], node[i + 1, j], section(), release_start=rs, release_end=re)
    for i, kind in enumerate(bases):
        f.add_support(node[i, 0], kind)
    # optional spring or inclined roller at a roof corner
    extra = draw(st.sampled_from(["none", "spring", "roller"]))
    if extra == "spring":
        f.add_support(node[nb, ns], "spring", kx=draw(st.floats(1e5, 1e8)))
    elif extra == "roller":
        f.add_support(node[nb, ns], "roller", angle=draw(st.floats(-1.2, 1.2)))

    force = st.floats(-5e4, 5e4)
    for case in cases:
        for _ in range(draw(st.integers(1, 6))):
            kind = draw(st.sampled_from(["nodal", "point", "couple", "dist", "settle"]))
            if kind == "nodal":
                n = draw(st.sampled_from(sorted(node.values())))
                f.add_load(NodalLoad(n, fx=draw(force), fy=draw(force), m=draw(force), case=case))
                continue
            if kind == "settle":
                i = draw(st.integers(0, nb))
                f.add_load(Settlement(node[i, 0], dx=draw(st.floats(-0.01, 0.01)), dy=draw(st.floats(-0.01, 0.01)),
                                      rz=draw(st.floats(-0.002, 0.002)), case=case))
                continue
            m = draw(st.sampled_from(f.members))
            L = f.geometry(m)[0]
            axes = draw(st.sampled_from(["global", "local"]))
            if kind == "point":
                f.add_load(PointLoad(m.id, a=draw(st.floats(0.0, L)), px=draw(force), py=draw(force), axes=axes, case=case))
            elif kind == "couple":
                f.add_load(MemberCouple(m.id, a=draw(st.floats(0.0, L)), m=draw(force), case=case))
            else:
                a = draw(st.floats(0.0, 0.6 * L))
                b = draw(st.floats(a + 0.1 * L, L))
                f.add_load(DistributedLoad(m.id, q1=(draw(force) / 5, draw(force) / 5), q2=(draw(force) / 5, draw(force) / 5),
                                           a=a, b=b, axes=axes, projected=draw(st.booleans()), case=case))
    return f


# --------------------------------------------------------------------------- properties
@PROPS
@given(frames())
def test_global_equilibrium(f):
    results = solve(f, ["A", "B"])
    for case, res in results.items():
        lx, ly, lm, ls = load_resultant(f, case)
        rx, ry, rm, rs = reaction_resultant(res)
        scale = max(ls, rs, 1.0)
        # statics: reactions + loads = 0, forces and moments about the origin
        assert abs(rx + lx) <= 1e-9 * scale
        assert abs(ry + ly) <= 1e-9 * scale
        assert abs(rm + lm) <= 1e-9 * scale


@PROPS
@given(frames())
def test_member_free_bodies(f):
    res = solve(f, ["A"])["A"]
    for m in f.members:
        mr = res.members[m.id]
        L = mr.length
        Ni, Vi, Mi, Nj, Vj, Mj = mr.end_forces
        sc = 1.0 + np.abs(mr.end_forces).max() * (1 + L)
        # internal forces at the ends equal the end forces (free body of the member)
        assert abs(mr.axial(0.0, side="left") + Ni) <= 1e-9 * sc
        assert abs(mr.shear(0.0, side="left") - Vi) <= 1e-9 * sc
        assert abs(mr.moment(0.0, side="left") + Mi) <= 1e-9 * sc
        assert abs(mr.axial(L, side="right") - Nj) <= 1e-9 * sc
        assert abs(mr.shear(L, side="right") + Vj) <= 1e-9 * sc
        assert abs(mr.moment(L, side="right") - Mj) <= 1e-9 * sc
        # released ends carry no moment
        if m.release_start:
            assert abs(Mi) <= 1e-9 * sc
        if m.release_end:
            assert abs(Mj) <= 1e-9 * sc
        # the member's deflected shape meets its end displacements
        u, v = mr.deflection(np.array([0.0, L]))
        d = mr.end_displacements
        assert np.allclose([u[0], v[0], u[1], v[1]], d, rtol=0, atol=1e-9 * (np.abs(d).max() + 1e-12))


@PROPS
@given(frames(cases=("A", "B")))
def test_superposition(f):
    both = Frame(f.nodes, f.members, f.supports, [_with_case(ld, "AB") for ld in f.loads])
    results = solve(f, ["A", "B"])
    ab = solve(both, ["AB"])["AB"]
    comb = combine(results, {"A": 1.0, "B": 1.0}, "A+B")
    assert comb.kind == "combination"
    sc_r = max(reaction_resultant(ab)[3], 1.0)
    for r1, r2 in zip(comb.reactions, ab.reactions):
        assert abs(r1.fx - r2.fx) + abs(r1.fy - r2.fy) + abs(r1.m - r2.m) <= 1e-9 * sc_r
    dsc = np.abs(ab.displacements).max() + 1e-15
    assert np.allclose(comb.displacements, ab.displacements, rtol=0, atol=1e-9 * dsc)
    for m in f.members:
        m1, m2 = comb.members[m.id], ab.members[m.id]
        x = np.linspace(0.0, m2.length, 7)
        sc = 1.0 + np.abs(m2.end_forces).max() * (1 + m2.length)
        assert np.allclose(m1.moment(x), m2.moment(x), rtol=0, atol=1e-9 * sc)
        assert np.allclose(m1.shear(x), m2.shear(x), rtol=0, atol=1e-9 * sc)
        assert np.allclose(m1.axial(x), m2.axial(x), rtol=0, atol=1e-9 * sc)
        e1, e2 = m1.extremes(), m2.extremes()
        for k in ("n_max", "n_min", "v_max", "v_min", "m_max", "m_min"):
            assert abs(e1[k] - e2[k]) <= 1e-9 * sc
        assert m1.max_deflection()[0] == pytest.approx(m2.max_deflection()[0], rel=1e-7, abs=1e-9 * dsc)
    # scaling: -1.5 x case A, member by member and for the reactions
    ra = results["A"]
    neg = ra.scaled(-1.5)
    for r1, r2 in zip(neg.reactions, ra.reactions):
        assert r1.fy == pytest.approx(-1.5 * r2.fy, rel=1e-12, abs=1e-9)
    m0 = f.members[0]
    x = np.linspace(0, neg.members[m0.id].length, 5)
    assert np.allclose(neg.members[m0.id].moment(x), -1.5 * ra.members[m0.id].moment(x), rtol=1e-12, atol=1e-6)


def _with_case(ld, case):
    from dataclasses import replace

    return replace(ld, case=case)


# --------------------------------------------------------------------------- determinate beams vs sympy
@st.composite
def determinate_beams(draw):
    L = draw(st.floats(2.0, 12.0))
    kind = draw(st.sampled_from(["simple", "cantilever"]))
    ang = draw(st.floats(-0.8, 0.8)) if kind == "simple" else 0.0
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(L, 0.0)
    m = f.add_member(a, b, Section(E=E, A=draw(st.floats(1e-3, 1e-2)), I=draw(st.floats(1e-5, 1e-3))))
    if kind == "simple":
        f.add_support(a, "pin")
        f.add_support(b, "roller", angle=ang)
    else:
        f.add_support(a, "fixed")
    force = st.floats(-4e4, 4e4)
    for _ in range(draw(st.integers(1, 4))):
        what = draw(st.sampled_from(["point", "couple", "dist"]))
        if what == "point":
            f.add_load(PointLoad(m.id, a=draw(st.floats(0, L)), px=draw(force), py=draw(force)))
        elif what == "couple":
            f.add_load(MemberCouple(m.id, a=draw(st.floats(0, L)), m=draw(force)))
        else:
            lo = draw(st.floats(0, 0.5 * L))
            f.add_load(DistributedLoad(m.id, q1=(draw(force) / 4, draw(force) / 4), q2=(draw(force) / 4, draw(force) / 4),
                                       a=lo, b=draw(st.floats(lo + 0.2 * L, L))))
    return f, kind, ang


@settings(max_examples=15, deadline=None)
@given(determinate_beams())
def test_determinate_beam_equals_sympy_statics(data):
    f, kind, ang = data
    lx, ly, lm, scale = load_resultant(f, "D")
    L = f.nodes[1].x
    # free-body equations of the whole beam, reactions unknown (sympy)
    if kind == "simple":
        ax, ay, rn = sp.symbols("ax ay rn")
        # roller at (L, 0) pushes along its y' axis (-sin, cos)
        eqs = [ax - rn * math.sin(ang) + lx, ay + rn * math.cos(ang) + ly, L * rn * math.cos(ang) + lm]
        s = sp.solve(eqs, [ax, ay, rn])
        want = [(0, float(s[ax]), float(s[ay]), 0.0), (1, -float(s[rn]) * math.sin(ang), float(s[rn]) * math.cos(ang), 0.0)]
    else:
        ax, ay, am = sp.symbols("ax ay am")
        s = sp.solve([ax + lx, ay + ly, am + lm], [ax, ay, am])
        want = [(0, float(s[ax]), float(s[ay]), float(s[am]))]
    tol = 1e-9 * max(scale, 1.0)
    for res in (solve(f)["D"], solve(_no_sections(f), determinate=True)["D"]):
        for (k, fx, fy, mm), r in zip(want, res.reactions):
            assert abs(r.fx - fx) <= tol and abs(r.fy - fy) <= tol and abs(r.m - mm) <= tol


def _no_sections(f: Frame) -> Frame:
    g = Frame(list(f.nodes), [], list(f.supports), list(f.loads))
    for m in f.members:
        g.add_member(m.start, m.end, None, release_start=m.release_start, release_end=m.release_end, id=m.id)
    return g
