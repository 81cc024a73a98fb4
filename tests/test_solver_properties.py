"""Properties every solved frame must have, on random frames (hypothesis).

* Global equilibrium (Newton's laws): the reactions balance the applied
  loads, forces and moments, to 1e-9 relative.
* Superposition (linear elasticity): case A + case B = a case with both.
* Maxwell-Betti reciprocity: the displacement at i due to a unit load at j
  equals the displacement at j due to a unit load at i.
* Member free-body equilibrium and the sign convention: N(L) = Nj,
  V(L) = -Vj, M(L) = Mj, M(0) = -Mi.
* Rigid rotation of the whole problem leaves member forces unchanged.
* The analytic extremes bound a dense sampling of the exact diagrams (the
  deflection from the chord too).
* Batch sampling agrees with single sampling and survives dropping caches.
"""
from __future__ import annotations

import math
import os

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from dxf2frame.solver import (
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

# modest by default; the suite's long run (DXF2FRAME_LONG=1) asks for more
SETTINGS = dict(max_examples=400 if os.environ.get("DXF2FRAME_LONG", "") == "1" else 25, deadline=None,
                suppress_health_check=[HealthCheck.too_slow])


@st.composite
def frames(draw, cases=("A", "B"), settlements=True):
    """A stable random frame: a tree of rigidly joined members grown from a
    fixed support (stable by construction), plus extra supports (inclined
    rollers, pins, springs) and extra members (some pin-ended) that can
    only stiffen it; random loads of every kind."""
    n = draw(st.integers(3, 7))
    pts = draw(st.lists(st.tuples(st.integers(0, 8), st.integers(0, 6)), min_size=n, max_size=n, unique=True))
    f = Frame()
    for x, y in pts:
        f.add_node(float(x), float(y))
    sec = lambda: Section(  # noqa: E731
        draw(st.sampled_from([200e9, 30e9])), draw(st.floats(2e-3, 2e-2)), draw(st.floats(1e-5, 5e-4))
    )
    for k in range(1, n):
        f.add_member(draw(st.integers(0, k - 1)), k, sec())
    f.add_support(0, "fixed", angle=draw(st.floats(-1.0, 1.0)))
    for k in draw(st.lists(st.integers(1, n - 1), max_size=2, unique=True)):
        kind = draw(st.sampled_from(["pin", "roller", "spring", "fixed"]))
        kw = {"kx": 1e7, "ky": 3e6, "kr": 1e6} if kind == "spring" else {}
        f.add_support(k, kind, angle=draw(st.floats(-1.5, 1.5)), **kw)
    for _ in range(draw(st.integers(0, 2))):
        i, j = draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))
        if i != j:
            rel = draw(st.booleans())
            f.add_member(min(i, j), max(i, j), sec(), release_start=rel, release_end=draw(st.booleans()))
    ids = [m.id for m in f.members]
    for case in cases:
        for _ in range(draw(st.integers(1, 5))):
            kind = draw(st.sampled_from(["nodal", "point", "couple", "dist", "dist"]))
            val = lambda: draw(st.floats(-50e3, 50e3))  # noqa: E731
            if kind == "nodal":
                f.add_load(NodalLoad(draw(st.integers(0, n - 1)), val(), val(), val(), case=case))
                continue
            mid = draw(st.sampled_from(ids))
            L = f.geometry(f.member(mid))[0]
            if kind == "point":
                f.add_load(PointLoad(mid, draw(st.floats(0, 1)) * L, val(), val(),
                                     axes=draw(st.sampled_from(["global", "local"])), case=case))
            elif kind == "couple":
                f.add_load(MemberCouple(mid, draw(st.floats(0, 1)) * L, val(), case=case))
            else:
                a = draw(st.floats(0, 0.7)) * L
                b = a + draw(st.floats(0.1, 1.0)) * (L - a)
                f.add_load(DistributedLoad(mid, (val() / 10, val() / 10), (val() / 10, val() / 10), a, b,
                                           axes=draw(st.sampled_from(["global", "local"])),
                                           projected=draw(st.booleans()), case=case))
        if settlements and draw(st.booleans()):
            f.add_load(Settlement(0, 1e-3 * draw(st.floats(-1, 1)), 1e-3 * draw(st.floats(-1, 1)),
                                  1e-4 * draw(st.floats(-1, 1)), case=case))
    return f


def applied_totals(f: Frame, case: str):
    """(Fx, Fy, Mz about the origin, scale) of the applied loads of a case,
    from the load definitions (distributed loads by Simpson's rule, exact
    for the at most quadratic integrands of a linear load)."""
    Fx = Fy = Mz = 0.0
    scale = 0.0
    for ld in f.loads:
        if ld.case != case or isinstance(ld, Settlement):
            continue
        if isinstance(ld, NodalLoad):
            nd = f.nodes[ld.node]
            Fx, Fy = Fx + ld.fx, Fy + ld.fy
            Mz += nd.x * ld.fy - nd.y * ld.fx + ld.m
            scale += abs(ld.fx) + abs(ld.fy) + abs(ld.m)
            continue
        m = f.member(ld.member)
        L, c, s = f.geometry(m)
        x0, y0 = f.nodes[m.start].x, f.nodes[m.start].y

        def at(t):
            return x0 + c * t, y0 + s * t

        def to_global(px, py, axes):
            return (c * px - s * py, s * px + c * py) if axes == "local" else (px, py)

        if isinstance(ld, MemberCouple):
            Mz += ld.m
            scale += abs(ld.m)
        elif isinstance(ld, PointLoad):
            gx, gy = to_global(ld.px, ld.py, ld.axes)
            x, y = at(ld.a)
            Fx, Fy, Mz = Fx + gx, Fy + gy, Mz + x * gy - y * gx
            scale += abs(gx) + abs(gy)
        else:
            b = L if ld.b is None else ld.b
            q2 = ld.q1 if ld.q2 is None else ld.q2
            k = abs(c) if ld.projected else 1.0
            ts = (ld.a, 0.5 * (ld.a + b), b)
            w = np.array([1.0, 4.0, 1.0]) * (b - ld.a) / 6.0
            for t, wt in zip(ts, w):
                r = (t - ld.a) / (b - ld.a)
                qx, qy = to_global(ld.q1[0] + r * (q2[0] - ld.q1[0]), ld.q1[1] + r * (q2[1] - ld.q1[1]), ld.axes)
                x, y = at(t)
                Fx, Fy = Fx + wt * k * qx, Fy + wt * k * qy
                Mz += wt * k * (x * qy - y * qx)
                scale += wt * k * (abs(qx) + abs(qy))
    return Fx, Fy, Mz, scale


def stiffness_scale(f: Frame, r) -> float:
    """Size of the stiffness terms k*u that cancel in the equilibrium sums
    (a settlement moves the frame without producing net forces): the
    roundoff of the solve is relative to these."""
    if r.displacements is None:
        return 0.0
    ka = max(m.section.E * m.section.A / f.geometry(m)[0] for m in f.members)
    kb = max(4 * m.section.E * m.section.I / f.geometry(m)[0] for m in f.members)
    d = r.displacements
    return ka * np.abs(d[:, :2]).max() + kb * np.abs(d[:, 2]).max()


def flexibility_scale(f: Frame, case: str) -> float:
    """Natural size of the displacements of a case: load * L^3 / EI with
    the largest load sum and span and the smallest EI, plus settlements."""
    Lmax = max(f.geometry(m)[0] for m in f.members)
    EImin = min(m.section.E * m.section.I for m in f.members)
    settle = max([abs(v) for ld in f.loads if isinstance(ld, Settlement) and ld.case == case
                  for v in (ld.dx, ld.dy, ld.rz * Lmax)] + [0.0])
    return applied_totals(f, case)[3] * Lmax**3 / EImin + settle


def extent(f: Frame) -> float:
    return max(1.0, max(math.hypot(n.x, n.y) for n in f.nodes))


@settings(**SETTINGS)
@given(frames())
def test_global_equilibrium(f):
    res = solve(f)
    for case, r in res.items():
        Fx, Fy, Mz, scale = applied_totals(f, case)
        R = r.reaction_array()
        rx, ry = R[:, 0].sum(), R[:, 1].sum()
        rm = sum(rc.x * rc.fy - rc.y * rc.fx + rc.m for rc in r.reactions)
        big = scale + np.abs(R).sum() + stiffness_scale(f, r) + 1e-30
        # Newton: sum of all external forces and moments on the frame is zero
        assert abs(rx + Fx) <= 1e-9 * big
        assert abs(ry + Fy) <= 1e-9 * big
        assert abs(rm + Mz) <= 1e-9 * big * extent(f)


@settings(**SETTINGS)
@given(frames(cases=("A", "B"), settlements=True))
def test_superposition(f):
    both = [ld for ld in f.loads if ld.case in ("A", "B")]
    for ld in both:
        kw = {k: getattr(ld, k) for k in ld.__dataclass_fields__}
        kw["case"] = "AB"
        f.add_load(type(ld)(**kw))
    res = solve(f)
    ab = combine(res, {"A": 1.0, "B": 1.0}, "A+B")
    ref = res["AB"]
    big = np.abs(ref.reaction_array()).max() + np.abs(ab.reaction_array()).max() + 1e-30
    # linear elasticity: results add; a settlement's reactions are k*u terms
    # that cancel, so their roundoff is relative to the stiffness terms
    assert np.allclose(ab.reaction_array(), ref.reaction_array(), rtol=0,
                       atol=1e-9 * (big + stiffness_scale(f, ref)))
    dbig = 1e-30 + max(np.abs(ref.displacements).max(),
                       max(ref.members[mid].max_deflection()[0] for mid in ref.members),
                       flexibility_scale(f, "AB"))
    assert np.allclose(ab.displacements, ref.displacements, rtol=0, atol=1e-9 * dbig)
    for mid in ref.members:
        m1, m2 = ab.members[mid], ref.members[mid]
        xs = np.linspace(0, m1.length, 7)
        fbig = np.abs(m2.end_forces).max() + big + stiffness_scale(f, ref) + 1e-30
        for name in ("axial", "shear", "moment"):
            assert np.allclose(getattr(m1, name)(xs), getattr(m2, name)(xs), rtol=0, atol=1e-8 * fbig)
        e1, e2 = m1.extremes(), m2.extremes()
        assert math.isclose(e1["m_max"], e2["m_max"], rel_tol=0, abs_tol=1e-8 * fbig)
        u1, v1 = m1.deflection(xs)
        u2, v2 = m2.deflection(xs)
        assert np.allclose(v1, v2, rtol=0, atol=1e-8 * dbig)
        assert np.allclose(u1, u2, rtol=0, atol=1e-8 * dbig)


@settings(**SETTINGS)
@given(frames(cases=("A",), settlements=False), st.data())
def test_reciprocity(f, data):
    n = len(f.nodes)
    i, j = data.draw(st.integers(0, n - 1)), data.draw(st.integers(0, n - 1))
    di, dj = data.draw(st.integers(0, 1)), data.draw(st.integers(0, 1))
    f.loads = [NodalLoad(i, fx=float(di == 0), fy=float(di == 1), case="P"),
               NodalLoad(j, fx=float(dj == 0), fy=float(dj == 1), case="Q")]
    res = solve(f)
    # Maxwell-Betti: u_j(P) = u_i(Q)
    a, b = res["P"].displacements[j, dj], res["Q"].displacements[i, di]
    scale = max(np.abs(res["P"].displacements[:, :2]).max(), np.abs(res["Q"].displacements[:, :2]).max())
    assert math.isclose(a, b, rel_tol=1e-7, abs_tol=1e-9 * scale + 1e-300)


@settings(**SETTINGS)
@given(frames(cases=("A",)))
def test_member_ends_follow_the_sign_convention(f):
    r = solve(f)["A"]
    big = 1e-30 + max(np.abs(mr.end_forces).max() + sum(np.abs(a).sum() for a in (
        mr.loads.points[:, 1:], mr.loads.couples[:, 1:], mr.loads.distributed[:, 2:] * mr.length))
        for mr in r.members.values()) + stiffness_scale(f, r)
    for mid, mr in r.members.items():
        Ni, Vi, Mi, Nj, Vj, Mj = mr.end_forces
        L = mr.length
        # free body of the whole member: just right of x = L the cut sees the
        # far-end forces; just left of x = 0, the near-end ones
        assert math.isclose(mr.axial(L, side="right"), Nj, abs_tol=1e-9 * big)
        assert math.isclose(mr.shear(L, side="right"), -Vj, abs_tol=1e-9 * big)
        assert math.isclose(mr.moment(L, side="right"), Mj, abs_tol=1e-9 * big * max(1.0, L))
        assert math.isclose(mr.moment(0.0, side="left"), -Mi, abs_tol=1e-12 * big)


@settings(**SETTINGS)
@given(frames(cases=("A",), settlements=False), st.floats(-math.pi, math.pi))
def test_rotating_the_whole_problem_changes_no_member_force(f, phi):
    c, s = math.cos(phi), math.sin(phi)
    g = Frame()
    for nd in f.nodes:
        g.add_node(c * nd.x - s * nd.y, s * nd.x + c * nd.y)
    for m in f.members:
        g.add_member(m.start, m.end, m.section, release_start=m.release_start, release_end=m.release_end)
    for sp in f.supports:
        g.add_support(sp.node, sp.kind, angle=sp.angle + phi, kx=sp.kx, ky=sp.ky, kr=sp.kr)
    rot = lambda v: (c * v[0] - s * v[1], s * v[0] + c * v[1])  # noqa: E731
    for ld in f.loads:
        if isinstance(ld, NodalLoad):
            g.add_load(NodalLoad(ld.node, *rot((ld.fx, ld.fy)), ld.m, case=ld.case))
        elif isinstance(ld, PointLoad):
            p = (ld.px, ld.py) if ld.axes == "local" else rot((ld.px, ld.py))
            g.add_load(PointLoad(ld.member, ld.a, *p, axes=ld.axes, case=ld.case))
        elif isinstance(ld, MemberCouple):
            g.add_load(MemberCouple(ld.member, ld.a, ld.m, case=ld.case))
        elif isinstance(ld, DistributedLoad):
            if ld.projected:  # per horizontal projection is not rotation invariant
                continue
            q2 = ld.q1 if ld.q2 is None else ld.q2
            q = (ld.q1, q2) if ld.axes == "local" else (rot(ld.q1), rot(q2))
            g.add_load(DistributedLoad(ld.member, q[0], q[1], ld.a, ld.b, axes=ld.axes, case=ld.case))
    f.loads = [ld for ld in f.loads if not (isinstance(ld, DistributedLoad) and ld.projected)]
    if not f.loads:
        return
    r1, r2 = solve(f)["A"], solve(g)["A"]
    big = applied_totals(f, "A")[3] + max(np.abs(m.end_forces).max() for m in r1.members.values()) + 1.0
    for mid, m1 in r1.members.items():
        m2 = r2.members[mid]
        xs = np.linspace(0, m1.length, 5)
        # objectivity: internal forces in member axes do not depend on the
        # orientation of the global axes
        for name in ("axial", "shear", "moment"):
            assert np.allclose(getattr(m1, name)(xs), getattr(m2, name)(xs), rtol=0, atol=1e-7 * big * m1.length)


@settings(**SETTINGS)
@given(frames(cases=("A",)))
def test_extremes_and_max_deflection_bound_a_dense_sampling(f):
    r = solve(f)["A"]
    table = r.members.table()
    fbig = max(np.abs(mr.end_forces).max() for mr in r.members.values()) + stiffness_scale(f, r) + 1.0
    dbig = 1e-30 + max(np.abs(r.displacements[:, :2]).max(), np.nanmax(table["deflection_max"]))
    for k, (mid, mr) in enumerate(r.members.items()):
        xs = np.linspace(0, mr.length, 401)
        ex = mr.extremes()
        for q, fn in (("n", mr.axial), ("v", mr.shear), ("m", mr.moment)):
            vals = np.concatenate([fn(xs), fn(xs, side="left")])
            tol = 1e-9 * (np.abs(vals).max() + fbig)
            assert vals.max() <= ex[f"{q}_max"] + tol
            assert vals.min() >= ex[f"{q}_min"] - tol
            # the reported value is attained (from one side) at the reported position
            for ext in ("max", "min"):
                at = ex[f"{q}_{ext}_at"]
                got = (fn(at), fn(at, side="left"))
                assert min(abs(g - ex[f"{q}_{ext}"]) for g in got) <= tol
            assert table[f"{q}_max"][k] == ex[f"{q}_max"]
        u, v = mr.deflection(xs)
        dmax, at = mr.max_deflection()
        mag = np.hypot(u, v)
        assert mag.max() <= dmax * (1 + 1e-9) + 1e-12 * dbig
        ua, va = mr.deflection(at)
        assert math.isclose(math.hypot(ua, va), dmax, rel_tol=1e-9, abs_tol=1e-12 * dbig)
        assert math.isclose(table["deflection_max"][k], dmax, rel_tol=1e-9, abs_tol=1e-12 * dbig)


@settings(**SETTINGS)
@given(frames(cases=("A",)), st.data())
def test_batch_sampling_agrees_and_survives_release(f, data):
    """``sample_many`` gives what ``sample`` gives quantity by quantity, and
    dropping the cached pieces (``release``) changes no value: a property of
    the API, no number of the solver is asserted."""
    r = solve(f)["A"].members
    m = len(r)
    rows = np.array(data.draw(st.lists(st.integers(0, m - 1), min_size=1, max_size=12)))
    frac = np.array(data.draw(st.lists(st.floats(0.0, 1.0), min_size=len(rows), max_size=len(rows))))
    x = frac * r.layout.length[rows]
    which = ("N", "V", "M", "u", "v") if r.has_deflection else ("N", "V", "M")
    for side in ("right", "left"):
        many = r.sample_many(which, rows, x, side=side)
        for w in which:
            assert np.array_equal(many[w], r.sample(w, rows, x, side=side))
    before = {k: v.copy() for k, v in r.table().items()}
    crit = tuple(a.copy() for a in r.critical_points())
    r.release()
    again = r.sample_many(which, rows, x)
    assert all(np.array_equal(again[w], r.sample(w, rows, x)) for w in which)
    assert all(np.array_equal(before[k], v, equal_nan=True) for k, v in r.table().items())
    assert all(np.array_equal(a, b) for a, b in zip(crit, r.critical_points()))


@settings(**SETTINGS)
@given(frames(cases=("A",)))
def test_relative_deflection_bounds_a_dense_sampling(f):
    """The largest deflection from the chord (exact, from the roots of the
    derivative) is at least every sampled one and is attained: the chord
    is the straight line through the displaced ends (geometry)."""
    r = solve(f)["A"].members
    if not r.has_deflection:
        return
    tab = r.relative_deflection_table()
    for k, mid in enumerate(r):
        mr = r[mid]
        xs = np.linspace(0.0, mr.length, 401)
        v = np.asarray(mr.deflection(xs)[1])
        rel = np.abs(v - (v[0] + (v[-1] - v[0]) * xs / mr.length))
        scale = 1e-30 + np.abs(v).max()
        assert rel.max() <= tab["deflection_rel_max"][k] * (1 + 1e-9) + 1e-12 * scale
        at = tab["deflection_rel_max_at"][k]
        va = float(np.asarray(mr.deflection(np.array([at]))[1])[0])
        chord = v[0] + (v[-1] - v[0]) * at / mr.length
        assert math.isclose(abs(va - chord), tab["deflection_rel_max"][k], rel_tol=1e-9, abs_tol=1e-12 * scale)
