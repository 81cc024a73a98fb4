"""Tests of solver.determinacy: classical count, rank test, mechanisms.

Expected degrees and stability come from standard statics texts (the
classical counts r + 3m vs 3j + c for frames and b + r vs 2j for pin-jointed
trusses, and the textbook examples of improper supports), recalled from
memory where marked, from rigid-body kinematics, or from an exact rank
computed with sympy on an equilibrium matrix assembled independently in this
file (free-body equilibrium of every node, exact rational arithmetic).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy
from hypothesis import given, settings, strategies as st

import dxf2frame.solver.determinacy as det
from dxf2frame.solver.determinacy import Determinacy, FrameDataError, check
from dxf2frame.solver.model import DistributedLoad, Frame, MemberCouple, NodalLoad, PointLoad, Support

PIN_BOTH = dict(release_start=True, release_end=True)


# ---------------------------------------------------------------------------
# frames
# ---------------------------------------------------------------------------


def simple_beam(L: float = 6.0) -> Frame:
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    f.add_member(a, b)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    return f


def beam(kinds: dict[float, str], xs: list[float], hinges: tuple[float, ...] = ()) -> Frame:
    """Continuous beam through nodes at xs; supports by x; internal hinges by x."""
    f = Frame()
    ids = [f.add_node(x, 0) for x in xs]
    for k in range(len(xs) - 1):
        f.add_member(ids[k], ids[k + 1], release_start=xs[k] in hinges, release_end=xs[k + 1] in hinges)
    for x, kind in kinds.items():
        f.add_support(ids[xs.index(x)], kind)
    return f


def portal(base: str = "pin", crown_hinge: bool = False) -> Frame:
    """Columns 4 high at x = 0 and 6, beam on top; optional hinge at mid-beam."""
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(0, 4)
    d, c = f.add_node(6, 0), f.add_node(6, 4)
    f.add_member(a, b)
    f.add_member(d, c)
    if crown_hinge:
        m = f.add_node(3, 4)
        f.add_member(b, m, release_end=True)
        f.add_member(m, c, release_start=True)
    else:
        f.add_member(b, c)
    f.add_support(a, base)
    f.add_support(d, base)
    return f


def four_bar(c: tuple[float, float] = (4, 3)) -> tuple[Frame, list[int]]:
    """Ground pins A(0,0), D(4,0); bars AB, BC, DC, all ends pinned."""
    f = Frame()
    A, B, C, D = f.add_node(0, 0), f.add_node(0, 3), f.add_node(*c), f.add_node(4, 0)
    f.add_member(A, B, **PIN_BOTH)
    f.add_member(B, C, **PIN_BOTH)
    f.add_member(D, C, **PIN_BOTH)
    f.add_support(A, "pin")
    f.add_support(D, "pin")
    return f, [A, B, C, D]


def grid(bays: int, storeys: int, *, truss: bool, diagonals: bool = True, skip: tuple[int, ...] = ()) -> Frame:
    """Regular multi-storey frame, 4 m bays, 3 m storeys.

    truss=False: rigid joints, fixed bases, no diagonals.  truss=True: every
    member pinned at both ends, pinned bases, one diagonal per panel except in
    the storeys listed in ``skip``.
    """
    f = Frame()
    ids = {(i, j): f.add_node(4.0 * i, 3.0 * j) for j in range(storeys + 1) for i in range(bays + 1)}
    rel = PIN_BOTH if truss else {}
    for j in range(storeys):
        for i in range(bays + 1):
            f.add_member(ids[i, j], ids[i, j + 1], **rel)
        for i in range(bays):
            f.add_member(ids[i, j + 1], ids[i + 1, j + 1], **rel)
            if truss and diagonals and j not in skip:
                f.add_member(ids[i, j], ids[i + 1, j + 1], **rel)
    for i in range(bays + 1):
        f.add_support(ids[i, 0], "pin" if truss else "fixed")
    return f


def triangle_truss() -> Frame:
    f = Frame()
    a, b, c = f.add_node(0, 0), f.add_node(8, 0), f.add_node(4, 3)
    for p, q in ((a, b), (a, c), (b, c)):
        f.add_member(p, q, **PIN_BOTH)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    return f


def square_truss_two_diagonals() -> Frame:
    f = Frame()
    a, b, c, d = f.add_node(0, 0), f.add_node(4, 0), f.add_node(4, 4), f.add_node(0, 4)
    for p, q in ((a, b), (b, c), (c, d), (d, a), (a, c), (b, d)):
        f.add_member(p, q, **PIN_BOTH)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    return f


def three_rollers() -> Frame:
    return beam({0: "roller", 4: "roller", 8: "roller"}, [0, 4, 8])


def concurrent_rollers() -> Frame:
    """Reaction lines of the three rollers all pass through (0, 3):
    at x=0 vertical; at x=2 along (-2, 3); at x=4 along (-4, 3)."""
    f = Frame()
    n = [f.add_node(x, 0) for x in (0, 2, 4)]
    f.add_member(n[0], n[1])
    f.add_member(n[1], n[2])
    f.add_support(n[0], "roller")
    # a roller turned by angle pushes along (-sin, cos)
    f.add_support(n[1], "roller", angle=math.atan2(2, 3))
    f.add_support(n[2], "roller", angle=math.atan2(4, 3))
    return f


def collinear_three_hinges() -> Frame:
    """Pins at (0,0) and (8,0), internal hinge at (4,0) on the same line."""
    return beam({0: "pin", 8: "pin"}, [0, 4, 8], hinges=(4,))


def three_member_pin() -> Frame:
    """Three cantilevers fixed at their far ends, pinned together at (0, 0)."""
    f = Frame()
    o = f.add_node(0, 0)
    for x, y in ((-4, 0), (4, 0), (0, -4)):
        n = f.add_node(x, y)
        if (x, y) < (0, 0):  # member start = smaller X, then smaller Y
            f.add_member(n, o, release_end=True)
        else:
            f.add_member(o, n, release_start=True)
        f.add_support(n, "fixed")
    return f


# ---------------------------------------------------------------------------
# independent exact count: sympy rank of the nodal equilibrium matrix
# ---------------------------------------------------------------------------


def exact_counts(nodes, members, supports) -> tuple[int, int]:
    """(degree, mechanisms) from an exact equilibrium matrix.

    nodes: list of integer (x, y); members: (a, b, release_a, release_b);
    supports: (node, ux, uy, rz, quarter_turns).  Unknowns per member:
    n = N / L, end moments at unreleased ends; reaction components.
    Equations: Fx, Fy, M per node, without M where every member end is
    released and no rotational restraint exists.  End moments M_a, M_b of a
    member with chord d = (dx, dy) act on the nodes as couples plus the
    shear pair (M_a + M_b) / L^2 * (-dy, dx) (free-body equilibrium of the
    member).
    """
    nn = len(nodes)
    rigid = [0] * nn
    for a, b, ra, rb in members:
        rigid[a] += not ra
        rigid[b] += not rb
    rot = [False] * nn
    for nd, ux, uy, rz, q in supports:
        rot[nd] |= rz
    row = {}
    for i in range(nn):
        row[i, 0] = len(row)
        row[i, 1] = len(row)
        if rigid[i] or rot[i]:
            row[i, 2] = len(row)
    cols = []

    def column(entries):
        v = [sympy.Integer(0)] * len(row)
        for (i, k), val in entries:
            v[row[i, k]] += val
        cols.append(v)

    for a, b, ra, rb in members:
        dx = sympy.Integer(nodes[b][0] - nodes[a][0])
        dy = sympy.Integer(nodes[b][1] - nodes[a][1])
        L2 = dx**2 + dy**2
        column([((a, 0), dx), ((a, 1), dy), ((b, 0), -dx), ((b, 1), -dy)])
        for end, released in ((a, ra), (b, rb)):
            if not released:
                column([((a, 0), -dy / L2), ((a, 1), dx / L2), ((b, 0), dy / L2), ((b, 1), -dx / L2), ((end, 2), 1)])
    for nd, ux, uy, rz, q in supports:
        c, s = [(1, 0), (0, 1), (-1, 0), (0, -1)][q % 4]
        if ux:
            column([((nd, 0), c), ((nd, 1), s)])
        if uy:
            column([((nd, 0), -s), ((nd, 1), c)])
        if rz:
            column([((nd, 2), 1)])
    A = sympy.Matrix(cols).T if cols else sympy.zeros(len(row), 0)
    rank = A.rank()
    return len(cols) - rank, len(row) - rank


def build(nodes, members, supports) -> Frame:
    f = Frame()
    for x, y in nodes:
        f.add_node(x, y)
    for a, b, ra, rb in members:
        f.add_member(a, b, release_start=ra, release_end=rb)
    for nd, ux, uy, rz, q in supports:
        f.supports.append(Support(node=nd, ux=ux, uy=uy, rz=rz, angle=q * math.pi / 2))
    return f


# ---------------------------------------------------------------------------
# classical examples
# ---------------------------------------------------------------------------


def assert_result(d: Determinacy, status: str, degree: int, mechanisms: int) -> None:
    assert (d.status, d.degree, d.mechanisms) == (status, degree, mechanisms), d.detail


def assert_inextensional(f: Frame, mode: np.ndarray) -> None:
    """A mechanism stretches no member, turns no rigid member end against its
    chord and moves no support along a restrained direction (definition of an
    inextensional mechanism, compatibility B u = 0)."""
    P = np.array([[n.x, n.y] for n in f.nodes], dtype=float)
    for m in f.members:
        d = P[m.end] - P[m.start]
        L = float(np.hypot(*d))
        e, perp = d / L, np.array([-d[1], d[0]]) / L
        du = mode[m.end, :2] - mode[m.start, :2]
        assert du @ e == pytest.approx(0.0, abs=1e-8)
        chord = du @ perp / L
        if not m.release_start:
            assert (mode[m.start, 2] - chord) * L == pytest.approx(0.0, abs=1e-8)
        if not m.release_end:
            assert (mode[m.end, 2] - chord) * L == pytest.approx(0.0, abs=1e-8)
    for s in f.supports:
        ax, ay = s.axes
        if s.ux:
            assert mode[s.node, :2] @ ax == pytest.approx(0.0, abs=1e-8)
        if s.uy:
            assert mode[s.node, :2] @ ay == pytest.approx(0.0, abs=1e-8)
        if s.rz:
            assert mode[s.node, 2] == pytest.approx(0.0, abs=1e-8)


def test_simply_supported_beam_is_determinate():
    d = check(simple_beam())
    # r = 3 (pin 2 + roller 1), m = 1, j = 2: 3 + 3 = 6 = 3*2 (statics texts, from memory)
    assert_result(d, "determinate", 0, 0)
    # the count text spelled out as r + 3m vs 3j + c with these numbers (hand count, same source)
    assert d.count_check.startswith("r + 3m = 3 + 3*1 = 6 ; 3j + c = 3*2 + 0 = 6 -> r + 3m = 3j + c (count says determinate)")
    assert "rank test agrees" in d.count_check
    assert d.modes == [] and d.nodes_involved == [] and d.warnings == []


def test_propped_cantilever_degree_one():
    # fixed + roller: 4 reactions, 3 equilibrium equations -> degree 1 (statics texts, from memory)
    assert_result(check(beam({0: "fixed", 6: "roller"}, [0, 6])), "indeterminate", 1, 0)


def test_fixed_fixed_beam_reports_axial_degree_three():
    # 6 reactions - 3 equations = 3 (2 flexural + 1 axial redundant; statics texts, from memory).
    # The module reports the full degree including the axial redundant.
    d = check(beam({0: "fixed", 6: "fixed"}, [0, 6]))
    assert_result(d, "indeterminate", 3, 0)
    assert "degree 3" in d.detail and "rank test agrees" in d.count_check


def test_two_hinged_portal_degree_one():
    # 4 reactions - 3 equations = 1 (two-hinged portal frame, statics texts, from memory)
    assert_result(check(portal("pin")), "indeterminate", 1, 0)


def test_fixed_base_portal_degree_three():
    # 6 reactions - 3 equations = 3 (fixed-base portal, statics texts, from memory)
    assert_result(check(portal("fixed")), "indeterminate", 3, 0)


def test_three_hinged_frame_is_determinate():
    # 4 reactions - 3 equations - 1 hinge condition = 0 (three-hinged frame, statics texts, from memory)
    d = check(portal("pin", crown_hinge=True))
    assert_result(d, "determinate", 0, 0)
    # c = 2 released ends - 1 pure pin = 1; r + 3m = 4 + 3*4 = 16 = 3*5 + 1 (hand count, same formula)
    assert "r + 3m = 4 + 3*4 = 16 ; 3j + c = 3*5 + 1 = 16" in d.count_check


def test_pin_jointed_triangle_truss_is_determinate():
    # b + r = 3 + 3 = 6 = 2j (method of joints count, statics texts, from memory)
    assert_result(check(triangle_truss()), "determinate", 0, 0)


def test_truss_with_redundant_diagonal_degree_one():
    # b + r - 2j = 6 + 3 - 8 = 1 (method of joints count, statics texts, from memory)
    d = check(square_truss_two_diagonals())
    assert_result(d, "indeterminate", 1, 0)
    assert "rank test agrees" in d.count_check


def test_cantilever_with_fixed_support_is_determinate():
    # 3 reactions, 3 equations (statics texts, from memory)
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(0, 5)
    f.add_member(a, b)
    f.add_support(a, "fixed")
    assert_result(check(f), "determinate", 0, 0)


def test_gerber_beam_with_internal_hinge_is_determinate():
    # fixed (3) + roller (1) reactions, 3 equations + 1 hinge condition -> 0 (statics texts, from memory)
    assert_result(check(beam({0: "fixed", 8: "roller"}, [0, 4, 8], hinges=(4,))), "determinate", 0, 0)


def test_roller_on_thirty_degree_slope_is_stable():
    # pin + inclined roller whose reaction line misses the pin: 3 non-concurrent,
    # non-parallel reactions -> determinate (statics texts, from memory)
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(6, 0)
    f.add_member(a, b)
    f.add_support(a, "pin")
    f.add_support(b, "roller", angle=math.radians(30))
    assert_result(check(f), "determinate", 0, 0)


def test_spring_counts_as_a_reaction():
    # a spring support restrains like one reaction component (convention of this
    # project's model docstring); pin + vertical spring = 3 reactions -> determinate
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(6, 0)
    f.add_member(a, b)
    f.add_support(a, "pin")
    f.add_support(b, "spring", ky=1e6)
    assert_result(check(f), "determinate", 0, 0)


def test_pure_internal_pin_joining_three_members():
    f = three_member_pin()
    d = check(f)
    # three cantilevers (each determinate) joined by one pin: the pin adds
    # 2 * (3 - 1) = 4 interaction forces (statics texts, from memory) ...
    assert_result(d, "indeterminate", 4, 0)
    # ... and independently: exact sympy rank of the nodal equilibrium matrix
    nodes = [(0, 0), (-4, 0), (4, 0), (0, -4)]
    members = [(1, 0, False, True), (0, 2, True, False), (3, 0, False, True)]
    supports = [(i, True, True, True, 0) for i in (1, 2, 3)]
    assert exact_counts(nodes, members, supports) == (4, 0)  # sympy, independent assembly
    # c = 3 released ends - 1 pure pin = 2 (a hinge joining n ends gives n - 1 conditions, from memory)
    assert "3j + c = 3*4 + 2 = 14" in d.count_check


# ---------------------------------------------------------------------------
# unstable frames
# ---------------------------------------------------------------------------


def test_beam_on_three_horizontal_rollers_slides():
    d = check(three_rollers())
    # parallel reactions cannot resist a force across them: one mechanism, and the
    # three vertical reactions with two remaining equations leave one redundant
    # (improper supports, statics texts, from memory)
    assert_result(d, "unstable", 1, 1)
    assert "parallel" in d.detail and "(0, 1)" in d.detail and "(1, 0)" in d.detail
    mode = d.modes[0]
    # rigid translation along X: every node moves (1, 0), no rotation (rigid-body kinematics)
    assert np.allclose(np.abs(mode[:, 0]), 1.0) and np.allclose(mode[:, 1:], 0.0, atol=1e-9)
    assert "rank test disagrees" in d.count_check and "count says determinate" in d.count_check


def test_three_concurrent_reactions_turn_about_their_meeting_point():
    d = check(concurrent_rollers())
    # three reactions meeting at one point cannot resist a moment about it
    # (improper supports, statics texts, from memory)
    assert_result(d, "unstable", 1, 1)
    assert "concurrent at (0, 3)" in d.detail
    mode = d.modes[0]
    # rotation about c = (0, 3): v = w x (p - c) = w * (3, x) at p = (x, 0) (planar rigid-body kinematics)
    for (x, y), (ux, uy, rz) in zip([(0, 0), (2, 0), (4, 0)], mode):
        assert ux * x == pytest.approx(uy * 3.0, abs=1e-9)
        assert ux == pytest.approx(rz * 3.0, abs=1e-9)


def test_roller_reacting_through_the_pin_is_concurrent():
    # pin at (0,0), roller at (6,0) turned 90 deg pushes horizontally along y = 0,
    # through the pin: concurrent reactions (statics texts, from memory)
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(6, 0)
    f.add_member(a, b)
    f.add_support(a, "pin")
    f.add_support(b, "roller", angle=math.pi / 2)
    d = check(f)
    assert_result(d, "unstable", 1, 1)
    assert "concurrent at (0, 0)" in d.detail
    assert d.nodes_involved == [[1]]


def test_four_bar_linkage_is_a_mechanism():
    f, (A, B, C, D) = four_bar()
    d = check(f)
    # Gruebler count: 3 * (4 links - 1) - 2 * 4 pins = 1 degree of freedom (from memory)
    assert_result(d, "unstable", 0, 1)
    # b + r = 3 + 4 = 7 < 2j = 8 (truss count, from memory) and the frame count agrees
    assert "count says unstable, at least 1 mechanism" in d.count_check and "rank test agrees" in d.count_check
    # the two free joints move, the supported ones do not
    assert d.nodes_involved == [[B, C]]
    mode = d.modes[0]
    assert np.allclose(mode[[A, D]], 0.0, atol=1e-9)
    # parallelogram linkage: AB turns about A so B moves perpendicular to AB (horizontally),
    # the coupler BC translates, C moves like B (rigid-link kinematics, from memory)
    assert np.allclose(mode[B, :2], mode[C, :2]) and abs(mode[B, 1]) < 1e-9
    assert abs(mode[B, 0]) == pytest.approx(1.0)
    assert "linkage" in d.detail and "(0, 3)" in d.detail


def test_general_four_bar_mode_is_inextensional():
    f, (A, B, C, D) = four_bar(c=(5, 2))
    d = check(f)
    assert_result(d, "unstable", 0, 1)  # Gruebler count, from memory
    u = d.modes[0][:, :2]
    P = np.array([[n.x, n.y] for n in f.nodes])
    # first-order length change (u_j - u_i) . (p_j - p_i) = 0 for every bar (definition of an
    # inextensional mechanism); supported joints fixed
    for i, j in ((A, B), (B, C), (D, C)):
        assert (u[j] - u[i]) @ (P[j] - P[i]) == pytest.approx(0.0, abs=1e-9)
    assert np.allclose(u[[A, D]], 0.0, atol=1e-9)
    assert np.hypot(u[:, 0], u[:, 1]).max() == pytest.approx(1.0)  # normalisation contract


def test_three_collinear_hinges_are_unstable():
    d = check(collinear_three_hinges())
    # three-hinged arch with its hinges on one line is unstable (statics texts, from memory);
    # r + 3m = 4 + 6 = 10 = 3*3 + 1, so only the rank test sees it
    assert_result(d, "unstable", 1, 1)
    assert "lie on one line" in d.detail
    assert "0 (0, 0)" in d.detail and "1 (4, 0)" in d.detail and "2 (8, 0)" in d.detail
    # the crown moves across the line, the supports do not (rigid-body kinematics)
    mode = d.modes[0]
    assert abs(mode[1, 1]) == pytest.approx(1.0) and np.allclose(mode[[0, 2], :2], 0.0, atol=1e-9)
    assert "rank test disagrees" in d.count_check


def test_unsupported_part_is_named():
    f = simple_beam()
    c, e = f.add_node(10, 0), f.add_node(12, 1)
    f.add_member(c, e, id="LOOSE")
    d = check(f)
    # a free rigid body in the plane has 3 degrees of freedom (rigid-body kinematics, from memory)
    assert_result(d, "unstable", 0, 3)
    assert "part made of member LOOSE has no support" in d.detail
    assert all(set(n) <= {c, e} for n in d.nodes_involved)
    assert all(m == ["LOOSE"] for m in d.members_involved)
    assert all(np.allclose(md[:2], 0.0) for md in d.modes)


def test_slider_and_roller_give_parallel_reactions():
    # slider (Y + moment) and roller (Y): no horizontal reaction at all, so the beam
    # slides along X (statics texts, from memory); 3 reactions, 1 redundant vertical/moment
    d = check(beam({0: "slider", 6: "roller"}, [0, 6]))
    assert_result(d, "unstable", 1, 1)
    assert "slide along (1, 0)" in d.detail


def test_single_roller_has_two_mechanisms():
    # one reaction component: 3 - 1 = 2 rigid-body freedoms left (statics, from memory)
    d = check(beam({0: "roller"}, [0, 6]))
    assert_result(d, "unstable", 0, 2)
    assert "slide along (1, 0)" in d.detail and "turn as a rigid body about (0, 0)" in d.detail


# ---------------------------------------------------------------------------
# warnings, options, errors
# ---------------------------------------------------------------------------


def test_two_force_member_with_transverse_load_is_flagged():
    f = Frame()
    a, b, c = f.add_node(0, 0), f.add_node(3, 4), f.add_node(6, 0)
    bar = f.add_member(a, b, **PIN_BOTH, id="S1")
    f.add_member(b, c, **PIN_BOTH, id="S2")
    f.add_member(a, c, **PIN_BOTH, id="TIE")
    f.add_support(a, "pin")
    f.add_support(c, "roller")
    f.add_load(DistributedLoad(bar.id, q1=(0.0, -2e3)))        # gravity on an inclined bar: transverse
    f.add_load(PointLoad("TIE", a=3.0, px=5e3, py=0.0))         # along the tie: axial only
    f.add_load(NodalLoad(b, fy=-1e3))
    d = check(f)
    assert d.warnings == [
        "member S1 is pinned at both ends and carries a transverse load: it is analysed as a simply "
        "supported beam between its pins, not as a two-force member"
    ]
    f.add_load(MemberCouple("S2", a=1.0, m=2e3))
    assert any(w.startswith("member S2 is pinned at both ends") for w in check(f).warnings)


def test_unit_scale_quotes_drawing_coordinates():
    d = check(three_rollers(), unit_scale=1e-3)   # drawing in mm, model in m
    assert "(0, 1)" in d.detail  # directions are unitless
    d = check(collinear_three_hinges(), unit_scale=1e-3)
    assert "1 (4000, 0)" in d.detail


def test_zero_length_member_raises_with_handle():
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(0, 0)
    f.add_member(a, b, handle="2F")
    with pytest.raises(FrameDataError) as err:
        check(f)
    assert err.value.handle == "2F" and "zero length" in str(err.value)


def test_near_mechanism_is_warned():
    # crown hinge 1e-8 of the span off the support line: stable in exact arithmetic,
    # practically a mechanism (common practice: flag near-singular equilibrium matrices)
    f = beam({0: "pin", 8: "pin"}, [0, 4, 8], hinges=(4,))
    f.nodes[1].y = 8e-8
    d = check(f)
    assert d.status == "determinate"
    assert any("close to a mechanism" in w for w in d.warnings)


def test_report_block_has_the_schema_keys():
    # keys fixed by the report schema, version 1
    assert set(check(simple_beam()).to_dict()) == {"status", "degree", "mechanisms", "count_check", "detail"}


# ---------------------------------------------------------------------------
# dense and sparse paths agree on the textbook results
# ---------------------------------------------------------------------------

TEXTBOOK = [
    # (frame factory, status, degree, mechanisms) -- sources as in the tests above (from memory)
    (simple_beam, "determinate", 0, 0),
    (lambda: portal("pin"), "indeterminate", 1, 0),
    (lambda: portal("pin", crown_hinge=True), "determinate", 0, 0),
    (square_truss_two_diagonals, "indeterminate", 1, 0),
    (three_member_pin, "indeterminate", 4, 0),
    (three_rollers, "unstable", 1, 1),
    (concurrent_rollers, "unstable", 1, 1),
    (lambda: four_bar()[0], "unstable", 0, 1),
    (collinear_three_hinges, "unstable", 1, 1),
]


@pytest.mark.parametrize("make, status, degree, mechanisms", TEXTBOOK)
def test_sparse_path_matches_textbook(make, status, degree, mechanisms, monkeypatch):
    calls = []
    real = det._null_space_sparse
    monkeypatch.setattr(det, "_null_space_sparse", lambda *a, **k: calls.append(1) or real(*a, **k))
    f = make()
    d = check(f, dense_limit=0)
    assert_result(d, status, degree, mechanisms)
    assert calls  # the sparse search ran
    for mode in d.modes:
        assert_inextensional(f, mode)


@pytest.mark.parametrize("make, status, degree, mechanisms", TEXTBOOK)
@settings(max_examples=8, deadline=None)
@given(scale=st.floats(1e-3, 1e3), angle=st.floats(-math.pi, math.pi), shift=st.floats(-1e4, 1e4))
def test_result_does_not_depend_on_units_or_placement(make, status, degree, mechanisms, scale, angle, shift):
    # statics is unchanged by a change of length unit and a rigid motion of the
    # whole frame with its supports (from memory); same textbook values as above
    f = make()
    c, s = math.cos(angle), math.sin(angle)
    for nd in f.nodes:
        x, y = nd.x * scale, nd.y * scale
        nd.x, nd.y = c * x - s * y + shift, s * x + c * y - shift
    for sup in f.supports:
        sup.angle += angle
    assert_result(check(f), status, degree, mechanisms)


# ---------------------------------------------------------------------------
# large frames
# ---------------------------------------------------------------------------


def test_large_rigid_multistorey_frame():
    bays, storeys = 40, 60
    f = grid(bays, storeys, truss=False)
    assert len(f.members) == 4860
    d = check(f)
    # fixed-base rigid frame: 3 redundants per closed loop, bays * storeys loops (from memory)
    assert_result(d, "indeterminate", 3 * bays * storeys, 0)
    assert "rank test agrees" in d.count_check


def test_large_braced_pin_jointed_frame_uses_sparse_path(monkeypatch):
    calls = []
    real = det._null_space_sparse
    monkeypatch.setattr(det, "_null_space_sparse", lambda *a, **k: calls.append(1) or real(*a, **k))
    bays, storeys = 40, 60
    f = grid(bays, storeys, truss=True)
    b, r, j = len(f.members), 2 * (bays + 1), len(f.nodes)
    d = check(f)
    # truss count b + r - 2j (method of joints, statics texts, from memory); stable frame
    assert_result(d, "indeterminate", b + r - 2 * j, 0)
    assert calls


def test_large_frame_with_unbraced_storeys(monkeypatch):
    calls = []
    real = det._null_space_sparse
    monkeypatch.setattr(det, "_null_space_sparse", lambda *a, **k: calls.append(1) or real(*a, **k))
    bays, storeys, skip = 40, 60, (3, 10, 11)
    f = grid(bays, storeys, truss=True, skip=skip)
    b, r, j = len(f.members), 2 * (bays + 1), len(f.nodes)
    d = check(f)
    # a pin-jointed storey with no diagonal sways: one mechanism per unbraced storey
    # (statics texts, from memory); degree = b + r - 2j + mechanisms (identity of the count)
    assert_result(d, "unstable", b + r - 2 * j + len(skip), len(skip))
    assert calls
    assert len(d.modes) == len(skip) and all(m.shape == (j, 3) for m in d.modes)
    # each sway moves only nodes above an unbraced storey, horizontally (rigid-body kinematics)
    lowest = 3.0 * (min(skip) + 1)
    for mode, involved in zip(d.modes, d.nodes_involved):
        assert all(f.nodes[i].y >= lowest - 1e-9 for i in involved)
        assert np.allclose(mode[:, 1], 0.0, atol=1e-6)


# ---------------------------------------------------------------------------
# random small frames against an exact independent count
# ---------------------------------------------------------------------------

GRID_POINTS = [(x, y) for x in range(3) for y in range(3)]


@st.composite
def random_frames(draw):
    n = draw(st.integers(2, 5))
    nodes = draw(st.lists(st.sampled_from(GRID_POINTS), min_size=n, max_size=n, unique=True))
    pairs = [(a, b) for a in range(n) for b in range(a + 1, n)]
    chosen = draw(st.lists(st.sampled_from(pairs), min_size=1, max_size=min(6, len(pairs)), unique=True))
    members = [(a, b, draw(st.booleans()), draw(st.booleans())) for a, b in chosen]
    kinds = {"pin": (True, True, False), "roller": (False, True, False), "fixed": (True, True, True),
             "slider": (False, True, True)}
    supports = []
    for _ in range(draw(st.integers(0, 3))):
        ux, uy, rz = kinds[draw(st.sampled_from(sorted(kinds)))]
        supports.append((draw(st.integers(0, n - 1)), ux, uy, rz, draw(st.integers(0, 3))))
    return nodes, members, supports


@settings(max_examples=40, deadline=None)
@given(random_frames())
def test_random_frames_match_exact_rank(spec):
    nodes, members, supports = spec
    degree, mechanisms = exact_counts(nodes, members, supports)  # sympy exact rank, independent assembly
    f = build(nodes, members, supports)
    for limit in (det.DENSE_LIMIT, 0):
        d = check(f, dense_limit=limit)
        assert (d.degree, d.mechanisms) == (degree, mechanisms), (limit, d.detail)
        assert d.status == ("unstable" if mechanisms else "indeterminate" if degree else "determinate")
        assert len(d.modes) == mechanisms
        for mode in d.modes:
            assert np.hypot(mode[:, 0], mode[:, 1]).max() == pytest.approx(1.0)  # normalisation contract
            assert_inextensional(f, mode)
        if mechanisms:  # the modes are independent (their count is the mechanism count)
            stack = np.array([m.ravel() for m in d.modes])
            assert np.linalg.matrix_rank(stack, tol=1e-8) == mechanisms

