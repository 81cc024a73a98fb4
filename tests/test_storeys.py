"""Storeys found from the frame, storey drift and the node table.

Checks against the slope-deflection method (a fixed-base portal worked in
the test with sympy) and against the sway stiffness of a column fixed at
both ends, 12EI/h^3 (published stiffness of a fixed-fixed column under
end translation, from memory), for a shear-type frame with very stiff
beams.
"""
from __future__ import annotations

import pytest
import sympy as sy
from hypothesis import given, settings
from hypothesis import strategies as st

from dxf2frame.solver import Frame, NodalLoad, Section, solve
from dxf2frame.solver.storeys import DEFAULT_DRIFT_LIMIT, drift_envelope, find_storeys, node_table, storey_drifts

E = 200e9
A_RIGID = 1e3  # m^2: axial strain negligible, as the slope-deflection method assumes


def portal(h=4.0, L=6.0, Ic=8e-5, Ib=1.6e-4, H=10e3):
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(0, h)
    c, d = f.add_node(L, h), f.add_node(L, 0)
    f.add_member(a, b, Section(E, A_RIGID, Ic), id="C1")
    f.add_member(b, c, Section(E, A_RIGID, Ib), id="B1")
    f.add_member(d, c, Section(E, A_RIGID, Ic), id="C2")
    f.add_support(a, "fixed")
    f.add_support(d, "fixed")
    f.add_load(NodalLoad(b, fx=H, case="W"))
    return f


def test_portal_levels_found():
    f = portal()
    st = find_storeys(f)
    assert st.base == 0.0
    assert st.levels == (4.0,)
    assert sorted(st[0].columns) == [(1, 0), (2, 3)]
    assert st.warnings == ()


def test_portal_sway_slope_deflection():
    h, L, Ic, Ib, H = 4.0, 6.0, 8e-5, 1.6e-4, 10e3
    f = portal(h, L, Ic, Ib, H)
    res = solve(f)["W"]
    # Slope-deflection method (end moments clockwise positive, psi = sway/h):
    # M_AB = 2k(th - 3psi), M_BA = 2k(2th - 3psi) for the fixed-base columns
    # (k = EIc/h), M_BC = 2K(2th + th) for the beam with both joints turning
    # alike (K = EIb/L); joint B: M_BA + M_BC = 0; storey shear: the column
    # shears balance H: -2 (M_AB + M_BA)/h = H.
    th, psi = sy.symbols("theta psi")
    k, K = sy.Rational(1) * E * Ic / h, E * Ib / L
    M_AB = 2 * k * (th - 3 * psi)
    M_BA = 2 * k * (2 * th - 3 * psi)
    M_BC = 2 * K * 3 * th
    sol = sy.solve([M_BA + M_BC, -2 * (M_AB + M_BA) / h - H], [th, psi], dict=True)[0]
    sway = float(sol[psi]) * h
    d = storey_drifts(f, res)
    assert len(d) == 1
    assert d[0].drift == pytest.approx(sway, rel=1e-6)          # slope-deflection sway
    assert d[0].ratio == pytest.approx(sway / h, rel=1e-6)
    assert d[0].height == 4.0
    assert d[0].allowed_ratio == 1 / 400                        # h/400, common practice
    assert d[0].ok == (abs(sway / h) <= 1 / 400)
    # the same portal pushed to the left drifts the other way
    f.loads[0] = NodalLoad(1, fx=-H, case="W")
    d2 = storey_drifts(f, solve(f)["W"])
    assert d2[0].drift == pytest.approx(-sway, rel=1e-6)


def two_storey(h1=3.5, h2=3.0, L=5.0, Ic=(8e-5, 6e-5), H=(20e3, 12e3)):
    f = Frame()
    n = {}
    for i, yv in enumerate((0.0, h1, h1 + h2)):
        n[i, 0], n[i, 1] = f.add_node(0, yv), f.add_node(L, yv)
    for lvl in (1, 2):
        for side in (0, 1):
            f.add_member(n[lvl - 1, side], n[lvl, side], Section(E, A_RIGID, Ic[lvl - 1]))
        f.add_member(n[lvl, 0], n[lvl, 1], Section(E, A_RIGID, 1e3))  # very stiff beam
    f.add_support(n[0, 0], "fixed")
    f.add_support(n[0, 1], "fixed")
    f.add_load(NodalLoad(n[1, 0], fx=H[0], case="W"))
    f.add_load(NodalLoad(n[2, 0], fx=H[1], case="W"))
    f.add_load(NodalLoad(n[2, 1], fy=-50e3, case="D"))
    return f


def test_shear_frame_storey_drift():
    h1, h2, Ic, H = 3.5, 3.0, (8e-5, 6e-5), (20e3, 12e3)
    f = two_storey(h1, h2, Ic=Ic, H=H)
    st = find_storeys(f)
    assert st.levels == (3.5, 6.5)
    res = solve(f)
    d = storey_drifts(f, res["W"], st)
    # shear-type frame: storey drift = V h^3 / (12 sum EI), columns fixed at
    # both ends (sway stiffness 12EI/h^3 per column, from memory)
    V1, V2 = H[0] + H[1], H[1]
    assert d[0].drift == pytest.approx(V1 * h1**3 / (12 * 2 * E * Ic[0]), rel=1e-4)
    assert d[1].drift == pytest.approx(V2 * h2**3 / (12 * 2 * E * Ic[1]), rel=1e-4)
    assert [x.storey for x in d] == [1, 2]
    assert d[1].height == pytest.approx(3.0)
    # both columns of a storey sway alike: mean and max agree
    dmax = storey_drifts(f, res["W"], st, measure="max")
    assert dmax[1].drift == pytest.approx(d[1].drift, rel=1e-6)
    # the worst over D and W is W in both storeys
    env = drift_envelope(f, res, st, limit=600)
    assert [x.result for x in env] == ["W", "W"]
    assert env[0].allowed_ratio == 1 / 600


def test_explicit_levels_and_errors():
    f = two_storey()
    st = find_storeys(f, levels=[6.5])
    assert st.levels == (6.5,)
    assert st[0].height == 6.5 and len(st[0].columns) == 2
    with pytest.raises(ValueError, match="elevation 5"):
        find_storeys(f, levels=[5.0])
    res = solve(f)["W"]
    with pytest.raises(ValueError):
        storey_drifts(f, res, measure="median")
    with pytest.raises(ValueError):
        storey_drifts(f, res, limit=0)


def test_pitched_portal_eaves_is_a_level():
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(0, 5)
    r = f.add_node(6, 6.0)  # 9.5 degree rafter
    c, d = f.add_node(12, 5), f.add_node(12, 0)
    sec = Section(E, 1e-2, 1e-4)
    for s, e in ((a, b), (b, r), (r, c), (d, c)):
        f.add_member(s, e, sec)
    f.add_support(a, "pin"), f.add_support(d, "pin")
    st = find_storeys(f)
    assert st.levels == (5.0,)


def test_close_levels_warn():
    f = Frame()
    ns = [f.add_node(0, 0), f.add_node(0, 3.0), f.add_node(0, 3.05), f.add_node(4, 3.0), f.add_node(4, 3.05),
          f.add_node(4, 0)]
    sec = Section(E, 1e-2, 1e-4)
    f.add_member(ns[0], ns[1], sec), f.add_member(ns[1], ns[2], sec)
    f.add_member(ns[5], ns[3], sec), f.add_member(ns[3], ns[4], sec)
    f.add_member(ns[1], ns[3], sec), f.add_member(ns[2], ns[4], sec)
    st = find_storeys(f)
    assert len(st) == 2
    assert any("two levels" in w for w in st.warnings)


def test_node_table():
    f = portal()
    res = solve(f)["W"]
    t = node_table(f, res)
    assert list(t) == ["node", "x", "y", "ux", "uy", "rz"]
    assert t["x"].tolist() == [0, 0, 6, 6] and t["y"].tolist() == [0, 4, 4, 0]
    # fixed bases do not move (support definition)
    assert t["ux"][0] == 0 and t["uy"][3] == 0 and t["rz"][0] == 0
    # the two column tops move alike: the beam is axially rigid (A = 1000 m^2)
    assert t["ux"][1] == pytest.approx(t["ux"][2], rel=1e-6)
    assert DEFAULT_DRIFT_LIMIT == 400.0  # h/400, common practice for service wind drift


@settings(max_examples=20)
@given(st.lists(st.tuples(st.floats(2.5, 5.0), st.floats(2e-5, 3e-4), st.floats(-50e3, 50e3)),
                min_size=1, max_size=4),
       st.integers(1, 3))
def test_shear_frame_any_height(storeys, bays):
    # n storeys, ``bays`` bays, very stiff beams, fixed bases: storey k
    # drifts V_k h_k^3 / (12 sum EI) (fixed-fixed columns, sway stiffness
    # 12EI/h^3, from memory), V_k the sum of the lateral loads at and above
    # level k
    f = Frame()
    yv = 0.0
    row = [f.add_node(5.0 * j, 0.0) for j in range(bays + 1)]
    for n in row:
        f.add_support(n, "fixed")
    for h, Ic, H in storeys:
        yv += h
        new = [f.add_node(5.0 * j, yv) for j in range(bays + 1)]
        for a, b in zip(row, new):
            f.add_member(a, b, Section(E, A_RIGID, Ic))
        for a, b in zip(new[:-1], new[1:]):
            f.add_member(a, b, Section(E, A_RIGID, 1e3))
        f.add_load(NodalLoad(new[0], fx=H, case="W"))
        row = new
    st_ = find_storeys(f)
    assert len(st_) == len(storeys)
    d = storey_drifts(f, solve(f)["W"], st_)
    expect = [sum(H for _, _, H in storeys[k:]) * h**3 / (12 * (bays + 1) * E * Ic)
              for k, (h, Ic, _) in enumerate(storeys)]
    scale = max(abs(v) for v in expect) + 1e-15  # the stiff beams still turn a little
    for k, (h, Ic, _) in enumerate(storeys):
        assert d[k].drift == pytest.approx(expect[k], rel=1e-4, abs=1e-4 * scale)
        assert d[k].height == pytest.approx(h)
