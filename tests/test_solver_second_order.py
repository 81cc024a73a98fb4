"""Second-order analysis: elastic critical load factor and P-Delta.

Every numeric check is against a closed-form result named beside it
(Euler buckling loads, effective lengths, the exact beam-column solution
of a cantilever), never against a number the code produced.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from dxf2frame.solver import (
    ALPHA_CR_LIMIT,
    BucklingError,
    BucklingResult,
    DistributedLoad,
    Frame,
    NodalLoad,
    PointLoad,
    Section,
    SecondOrderResult,
    Settlement,
    critical_load_factor,
    second_order,
    solve,
)

E, A, I = 200e9, 5e-3, 8e-5     # Pa, m^2, m^4 (a mid-size steel column)
EI = E * I


def column(h: float, base: str, top: str | None, P: float, H: float = 0.0, case: str = "D"):
    """A vertical column of height h [m] with axial load P [N] (downward)
    and lateral load H [N] at the top."""
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(0.0, h)
    f.add_member(a, b, Section(E, A, I), id="C")
    f.add_support(a, base)
    if top is not None:  # a roller guiding the top vertically (rolls along global Y)
        f.add_support(b, top, angle=math.pi / 2)
    f.add_load(NodalLoad(b, fx=H, fy=-P, case=case))
    return f


@pytest.mark.parametrize("pieces", [4, 8])
def test_pinned_column_euler_load(pieces):
    # Euler: Pcr = pi^2 EI / L^2 for a pin-ended column (any strength of
    # materials text, from memory)
    h, P = 6.0, 100e3
    res = critical_load_factor(column(h, "pin", "roller", P), "D", subdivisions=pieces)
    assert isinstance(res, BucklingResult)
    assert res.alpha_cr * P == pytest.approx(math.pi**2 * EI / h**2, rel=0.01)


def test_cantilever_column_euler_load():
    # Euler: Pcr = pi^2 EI / (4 L^2) for a column fixed at the base, free at
    # the top (effective length 2L; from memory)
    h, P = 4.0, 50e3
    res = critical_load_factor(column(h, "fixed", None, P), "D")
    assert res.alpha_cr * P == pytest.approx(math.pi**2 * EI / (4 * h**2), rel=0.01)
    # the buckled shape leans the top sideways, with the base held
    assert abs(res.shape[1, 0]) == pytest.approx(1.0)
    assert np.allclose(res.shape[0, :2], 0.0)
    # and along the member it follows 1 - cos(pi x / 2L) (the Euler mode)
    x = res.member_points[0]
    ux = res.member_shape[0, :, 0] / res.member_shape[0, -1, 0]
    assert np.allclose(ux, 1 - np.cos(np.pi * x / (2 * h)), atol=0.01)


def test_geometric_stiffness_with_linear_axial_force_matches_its_integral():
    # the work of an axial force varying linearly along the element on the
    # Hermite cubics' slopes, integral(N(x) v'(x) w'(x) dx), integrated by
    # sympy (independent of the Gauss rule used in the code)
    import sympy
    from dxf2frame.solver.element import geometric_stiffness
    x, L, N1, N2 = sympy.symbols("x L N1 N2", positive=True)
    xi = x / L
    shapes = [1 - 3 * xi**2 + 2 * xi**3, x * (1 - xi) ** 2, 3 * xi**2 - 2 * xi**3, x * (xi**2 - xi)]
    Nx = N1 + (N2 - N1) * xi
    exact = [[sympy.integrate(Nx * sympy.diff(a, x) * sympy.diff(b, x), (x, 0, L)) for b in shapes] for a in shapes]
    vals = {L: 3.7, N1: -25e3, N2: 11e3}
    want = np.array([[float(e.subs(vals)) for e in row] for row in exact])
    got = geometric_stiffness(np.array([3.7]), np.array([-25e3]), np.array([11e3]))[0]
    v = [1, 2, 4, 5]
    assert np.allclose(got[np.ix_(v, v)], want, rtol=1e-12, atol=1e-9)
    assert np.allclose(got[[0, 3], :], 0.0) and np.allclose(got[:, [0, 3]], 0.0)


def test_cantilever_buckles_under_its_own_weight_at_greenhill_load():
    # a column fixed at the base and free at the top buckles under its own
    # weight q when q L^3 = 7.837 EI (Greenhill; Timoshenko and Gere,
    # Theory of Elastic Stability, from memory).  The axial force varies
    # along each element, which the geometric stiffness must follow
    h, q = 8.0, 2e3   # m, N/m downward along the column
    f = column(h, "fixed", None, 0.0, H=1.0)      # H: a nudge; the sway is the mode, not the answer
    f.add_load(DistributedLoad("C", (0.0, -q), case="D"))
    res = critical_load_factor(f, "D")
    assert res.alpha_cr * q * h**3 == pytest.approx(7.837 * EI, rel=0.01)


def _strut_under_tie_factor(L: float, P: float, EI1: float, EI2: float) -> float:
    """The exact elastic critical load factor of a column fixed at its foot
    (EI1, length L) loaded by P at its head, held above by a tie (EI2,
    length L, equal EA, so each carries P/2) pinned at its top support: the
    beam-column equations EI w(4) + N w(2) = 0 (compression, trigonometric)
    and EI w(4) - T w(2) = 0 (tension, hyperbolic) with the end and joint
    conditions, whose determinant vanishes at the critical factor
    (Timoshenko and Gere, Theory of Elastic Stability, from memory);
    solved here with numpy and scipy, independently of the code."""
    from scipy.optimize import brentq

    def det(alpha: float) -> float:
        N = alpha * P / 2
        k1, k2 = math.sqrt(N / EI1), math.sqrt(N / EI2)
        z = [0.0] * 4

        def strut(x, d):   # w1 = a sin + b cos + c x + e: its d-th derivative's coefficients
            s, c = math.sin(k1 * x), math.cos(k1 * x)
            return [[s, c, x, 1.0], [k1 * c, -k1 * s, 1.0, 0.0], [-k1**2 * s, -k1**2 * c, 0.0, 0.0],
                    [-k1**3 * c, k1**3 * s, 0.0, 0.0]][d] + z

        def tie(x, d):     # w2 = a sinh + b cosh + c x + e
            s, c = math.sinh(k2 * x), math.cosh(k2 * x)
            return z + [[s, c, x, 1.0], [k2 * c, k2 * s, 1.0, 0.0], [k2**2 * s, k2**2 * c, 0.0, 0.0],
                        [k2**3 * c, k2**3 * s, 0.0, 0.0]][d]

        def sway_force(w3, EI, w1, compression):   # horizontal force -EI w(3) - N w(1), N compressive
            return -EI * np.array(w3) - compression * np.array(w1)

        rows = [strut(0, 0), strut(0, 1), tie(L, 0), tie(L, 2),                           # foot fixed, top pinned
                np.subtract(strut(L, 0), tie(0, 0)), np.subtract(strut(L, 1), tie(0, 1)),  # the joint moves as one
                np.subtract(EI1 * np.array(strut(L, 2)), EI2 * np.array(tie(0, 2))),       # moment carried over
                sway_force(strut(L, 3), EI1, strut(L, 1), N) - sway_force(tie(0, 3), EI2, tie(0, 1), -N)]
        return float(np.linalg.det(np.array(rows, dtype=float)))

    grid = np.linspace(0.01, 200.0, 20000)
    vals = np.array([det(a) for a in grid])
    i = int(np.flatnonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))[0])
    return brentq(det, grid[i], grid[i + 1])


def test_tie_in_tension_is_refined_like_a_strut():
    # a strut held at its head by a slender tie: the tie's tension stiffens
    # the sway, and one element overstates that (more than twice the factor
    # here) while four elements per member are still about 5 % high.  The
    # adaptive refinement cuts the tie as its tension needs and must give
    # the exact beam-column value within 1 % (worked above)
    L, P, r = 4.0, 1000e3, 20.0
    f = Frame()
    a, b, c = f.add_node(0.0, 0.0), f.add_node(0.0, L), f.add_node(0.0, 2 * L)
    f.add_member(a, b, Section(E, A, I), id="S")
    f.add_member(b, c, Section(E, A, I / r), id="T")
    f.add_support(a, "fixed")
    f.add_support(c, "pin")
    f.add_load(NodalLoad(b, fy=-P, case="D"))
    exact = _strut_under_tie_factor(L, P, EI, EI / r)
    assert critical_load_factor(f, "D").alpha_cr == pytest.approx(exact, rel=0.01)

@pytest.mark.parametrize("adaptive", [True, False])
def test_pinned_column_mode_is_a_half_sine(adaptive):
    # Euler's pin-ended mode is sin(pi x / L) (any strength of materials
    # text, from memory); the adaptive refinement draws it from the
    # elements' own cubic field, the uniform one from its nodes
    h, P = 6.0, 100e3
    res = critical_load_factor(column(h, "pin", "roller", P), "D", adaptive=adaptive)
    x = res.member_points[0]
    ux = res.member_shape[0, :, 0] / res.member_shape[0, 2, 0]
    assert np.allclose(ux, np.sin(np.pi * x / h), atol=0.01)
    assert np.max(np.hypot(res.member_shape[..., 0], res.member_shape[..., 1])) == pytest.approx(1.0)


def test_strut_between_two_fixed_supports_buckles_at_four_times_euler():
    # a member whose ends are both fixed supports has no bending shape of
    # its own with one element per member: the adaptive refinement must
    # still find its buckling.  Squeezed by a settlement delta of its top
    # support, N = EA delta / L; it buckles at Pcr = 4 pi^2 EI / L^2
    # (fixed-fixed Euler load, effective length L/2; from memory)
    h, delta = 5.0, 1e-4
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(0.0, h)
    f.add_member(a, b, Section(E, A, I), id="C")
    f.add_support(a, "fixed")
    f.add_support(b, "fixed")
    f.add_load(Settlement(b, dy=-delta, case="D"))
    res = critical_load_factor(f, "D")
    N = E * A * delta / h
    assert res.alpha_cr * N == pytest.approx(4 * math.pi**2 * EI / h**2, rel=0.01)


def test_pinned_truss_strut_buckles_between_its_pins():
    # a member pinned at both ends (released end moments) still buckles at
    # its Euler load: the releases must not remove its bending stiffness
    # (pi^2 EI / L^2, from memory)
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(5.0, 0.0)
    f.add_member(a, b, Section(E, A, I), release_start=True, release_end=True)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_load(NodalLoad(b, fx=-10e3, case="D"))
    res = critical_load_factor(f, "D")
    assert res.alpha_cr * 10e3 == pytest.approx(math.pi**2 * EI / 25.0, rel=0.01)


def _portal(h: float, span: float, base: str, P: float, H: float = 0.0):
    """Portal frame with a practically rigid beam (I 1e5 times the
    columns'), axial load P [N] on each column top, H at the left top."""
    f = Frame()
    n0, n1 = f.add_node(0.0, 0.0), f.add_node(0.0, h)
    n2, n3 = f.add_node(span, h), f.add_node(span, 0.0)
    col, beam = Section(E, A, I), Section(E, 100 * A, 1e5 * I)
    f.add_member(n0, n1, col, id="CL")
    f.add_member(n1, n2, beam, id="B")
    f.add_member(n3, n2, col, id="CR")
    f.add_support(n0, base)
    f.add_support(n3, base)
    f.add_load(NodalLoad(n1, fx=H, fy=-P, case="D"))
    f.add_load(NodalLoad(n2, fy=-P, case="D"))
    return f


def test_fixed_base_sway_portal_with_rigid_beam():
    # each column is fixed at the base and, through the rigid beam, held
    # against rotation but free to sway at the top (fixed-guided): effective
    # length K = 1, Pcr = pi^2 EI / h^2 per column (effective-length chart
    # of sway frames, G_top = 0, G_base = 0; from memory)
    h, P = 5.0, 200e3
    res = critical_load_factor(_portal(h, 8.0, "fixed", P), "D")
    assert res.alpha_cr * P == pytest.approx(math.pi**2 * EI / h**2, rel=0.01)
    # sway mode: both column tops move sideways together
    assert res.shape[1, 0] == pytest.approx(res.shape[2, 0], rel=1e-3)


def test_pinned_base_sway_portal_with_rigid_beam():
    # pinned base, rotation held at the top, free to sway: K = 2, so
    # Pcr = pi^2 EI / (2h)^2 per column (sway-frame effective-length chart,
    # G_top = 0, G_base = infinity; from memory)
    h, P = 5.0, 50e3
    res = critical_load_factor(_portal(h, 8.0, "pin", P), "D")
    assert res.alpha_cr * P == pytest.approx(math.pi**2 * EI / (2 * h) ** 2, rel=0.01)


def test_first_order_criterion_reported():
    # alpha_cr >= 10 for first-order analysis to suffice (EN 1993-1-1
    # 5.2.1(3), from memory; common practice)
    assert ALPHA_CR_LIMIT == 10.0
    h = 6.0
    pcr = math.pi**2 * EI / h**2
    light = critical_load_factor(column(h, "pin", "roller", pcr / 20), "D")
    heavy = critical_load_factor(column(h, "pin", "roller", pcr / 5), "D")
    assert light.first_order_ok and not heavy.first_order_ok
    assert "alpha_cr >= 10" in light.criterion


def test_combination_at_or_over_the_critical_load_raises_naming_it():
    h = 6.0
    pcr = math.pi**2 * EI / h**2
    f = column(h, "pin", "roller", 0.8 * pcr)
    with pytest.raises(BucklingError) as ei:
        critical_load_factor(f, {"D": 1.5}, name="1.5D")
    assert ei.value.combination == "1.5D" and "1.5D" in str(ei.value)
    with pytest.raises(BucklingError):
        second_order(f, {"D": 1.5}, name="1.5D")
    # asked not to raise, it still reports the factor: 1/(0.8*1.5) of the load
    res = critical_load_factor(f, {"D": 1.5}, raise_if_buckles=False)
    assert res.buckles and res.alpha_cr == pytest.approx(1 / 1.2, rel=0.01)


def test_tension_only_frame_has_no_critical_load():
    f = column(4.0, "fixed", None, -100e3)  # pulled, not pushed
    res = critical_load_factor(f, "D")
    assert math.isinf(res.alpha_cr) and res.first_order_ok


@pytest.mark.parametrize("ratio", [0.2, 0.5, 0.8])
def test_cantilever_beam_column_moment_amplification(ratio):
    # exact beam-column solution of a cantilever with axial P and tip
    # lateral H (Timoshenko and Gere, Theory of Elastic Stability, from
    # memory): base moment M = H tan(kL) / k, k = sqrt(P / EI), i.e. the
    # first-order moment H L amplified by tan(kL) / (kL)
    h, H = 4.0, 5e3
    P = ratio * math.pi**2 * EI / (4 * h**2)
    res = second_order(column(h, "fixed", None, P, H), "D", name="P+H")
    assert isinstance(res, SecondOrderResult)
    k = math.sqrt(P / EI)
    exact = H * math.tan(k * h) / k
    assert abs(res.result.reactions[0].m) == pytest.approx(exact, rel=0.01)
    assert abs(res.result.members["C"].moment(0.0)) == pytest.approx(exact, rel=0.01)
    # the diagram runs from that base moment to zero at the free tip
    assert res.result.members["C"].moment(h) == pytest.approx(0.0, abs=1e-6 * exact)
    # tip deflection, exact: H (tan(kL) - kL) / (P k) (same source, from memory)
    assert res.result.displacements[1, 0] == pytest.approx(H * (math.tan(k * h) - k * h) / (P * k), rel=0.01)
    # the first-order companion is plain statics: M = H L
    assert abs(res.first_order.reactions[0].m) == pytest.approx(H * h, rel=1e-9)
    # the storey report carries the same amplification
    (st,) = res.storeys
    assert st.moment_ratio == pytest.approx(math.tan(k * h) / (k * h), rel=0.01)
    assert res.alpha_cr == pytest.approx(1 / ratio, rel=0.01)


def test_p_delta_keeps_global_equilibrium_of_horizontal_forces():
    # P-Delta changes moments, not the storey shear: the horizontal
    # reactions still balance the applied lateral load (statics)
    h, P, H = 5.0, 300e3, 20e3
    res = second_order(_portal(h, 8.0, "fixed", P, H), "D")
    assert sum(r.fx for r in res.result.reactions) == pytest.approx(-H, rel=1e-6)
    assert sum(r.fy for r in res.result.reactions) == pytest.approx(2 * P, rel=1e-6)
    # sway amplification of the storey: about 1 / (1 - 1/alpha_cr) for a
    # sway frame (amplification factor of EN 1993-1-1 5.2.2(5), from memory;
    # common practice; within 3 % here)
    (st,) = [s for s in res.storeys if s.level == pytest.approx(h)]
    assert st.drift_ratio == pytest.approx(1 / (1 - 1 / res.alpha_cr), rel=0.03)
    assert set(st.members) == {"CL", "CR"}


def test_second_order_result_looks_like_a_first_order_one():
    f = _portal(5.0, 8.0, "fixed", 100e3, 10e3)
    f.add_load(PointLoad("B", 4.0, py=-30e3, case="L"))
    res = second_order(f, "1.2D + 1.6L", family="LRFD")
    first = solve(f)
    r = res.result
    assert r.kind == "combination" and r.family == "LRFD" and r.factors == {"D": 1.2, "L": 1.6}
    assert set(r.members) == {"CL", "B", "CR"}
    assert r.displacements.shape == (4, 3)
    assert len(r.reactions) == len(first["D"].reactions)
    # with alpha_cr large the second order stays close to the first order
    # combination (a check of the plumbing, not of a number)
    lin = first["D"].scaled(1.2) + first["L"].scaled(1.6)
    assert res.alpha_cr > 10
    assert np.allclose(r.reaction_array(), lin.reaction_array(), rtol=0.05, atol=1e-6 * 130e3)


@pytest.mark.parametrize("hinge", ["pin support", "member release"])
def test_pinned_base_portal_p_delta_against_the_beam_column_solution(hinge):
    # Pinned-base portal, rigid beam, equal axial load P on each column and
    # a lateral load H: by symmetry each column carries H/2 and is a
    # cantilever of height h held against rotation at the top, free to
    # sway at the pinned base.  Exact beam-column result (Timoshenko and
    # Gere, from memory): top moment (H/2) tan(kh)/k, k = sqrt(P/EI); and
    # alpha_cr = Pcr/P with Pcr = pi^2 EI/(2h)^2 (K = 2, as above).
    h, span, H = 5.0, 8.0, 10e3
    P = 0.4 * math.pi**2 * EI / (2 * h) ** 2
    if hinge == "pin support":
        f = _portal(h, span, "pin", P, H)
    else:  # fixed supports, the columns hinged to them by a member release
        f = _portal(h, span, "fixed", P, H)
        f.members[0].release_start = True
        f.members[2].release_start = True
    res = second_order(f, "D")
    k = math.sqrt(P / EI)
    exact = 0.5 * H * math.tan(k * h) / k
    for cid in ("CL", "CR"):
        assert abs(res.result.members[cid].moment(h)) == pytest.approx(exact, rel=0.01)
        assert abs(res.result.members[cid].moment(0.0)) == pytest.approx(0.0, abs=1e-6 * exact)
    assert res.alpha_cr == pytest.approx(1 / 0.4, rel=0.01)
    assert not res.first_order_ok


def test_many_combinations_each_its_own_analysis():
    # alpha_cr scales inversely with the load factor (the eigenproblem is
    # linear in the load): 1.0D and 2.0D of a pinned column give Pcr/P and
    # Pcr/(2P) (Euler, from memory)
    from dxf2frame.solver import critical_load_factors, second_order_many
    h, P = 6.0, 100e3
    pcr = math.pi**2 * EI / h**2
    f = column(h, "pin", "roller", P)
    res = critical_load_factors(f, {"1.0D": "1.0D", "2.0D": {"D": 2.0}})
    assert list(res) == ["1.0D", "2.0D"]
    assert res["1.0D"].alpha_cr == pytest.approx(pcr / P, rel=0.01)
    assert res["2.0D"].alpha_cr == pytest.approx(pcr / (2 * P), rel=0.01)
    g = column(4.0, "fixed", None, 200e3, 5e3)
    pd = second_order_many(g, [("a", {"D": 1.0}), ("b", {"D": 1.5})])
    for name, fac in (("a", 1.0), ("b", 1.5)):
        # Timoshenko and Gere as above, with P and H both scaled by fac
        k = math.sqrt(fac * 200e3 / EI)
        exact = fac * 5e3 * math.tan(k * 4.0) / k
        assert abs(pd[name].result.reactions[0].m) == pytest.approx(exact, rel=0.01)
        assert pd[name].name == name


def test_p_delta_that_does_not_converge_says_so():
    from dxf2frame.solver import ConvergenceError
    f = _portal(5.0, 8.0, "fixed", 300e3, 20e3)
    with pytest.raises(ConvergenceError) as ei:
        second_order(f, "D", name="W1", tol=1e-15, max_iterations=1)
    assert ei.value.combination == "W1" and "W1" in str(ei.value)


@pytest.mark.parametrize("ratio", [0.3, 0.6])
def test_member_bow_in_the_detailed_result(ratio):
    # pin-ended beam-column, axial P and uniform lateral q: exact midspan
    # moment M = (q / k^2) (sec(kL/2) - 1), k = sqrt(P/EI) (Timoshenko and
    # Gere, from memory), against qL^2/8 at first order.  The member's own
    # bow is carried by the subdivided result at its subdivision points.
    from dxf2frame.solver import DistributedLoad
    L, q = 6.0, 2e3
    P = ratio * math.pi**2 * EI / L**2
    f = column(L, "pin", "roller", P)
    f.add_load(DistributedLoad("C", q1=(q, 0.0), case="D"))
    res = second_order(f, "D")
    k = math.sqrt(P / EI)
    exact = q / k**2 * (1 / math.cos(k * L / 2) - 1)
    mid = res.detail.members["C#2"].moment(0.0)    # 4 pieces: C#2 starts at midspan
    assert abs(mid) == pytest.approx(exact, rel=0.01)
    assert abs(res.first_order.members["C"].moment(L / 2)) == pytest.approx(q * L**2 / 8, rel=1e-9)


def test_factors_and_mode_are_the_same_on_every_run():
    # repeatability, not a value: the eigenvalue runs start from a fixed
    # vector, so a drawing solved twice gives the same factors to the last
    # digit and the same buckled shape (revision comparisons and the label
    # placed at the shape's peak depend on it)
    f = Frame()
    grid = [[f.add_node(6.0 * i, 3.5 * j) for i in range(4)] for j in range(6)]   # 3 bays, 5 storeys
    for j in range(5):
        for i in range(4):
            f.add_member(grid[j][i], grid[j + 1][i], Section(E, A, I))
        for i in range(3):
            f.add_member(grid[j + 1][i], grid[j + 1][i + 1], Section(E, A, I))
            f.add_load(NodalLoad(grid[j + 1][i + 1], fx=2e3, fy=-400e3, case="D"))
    for i in range(4):
        f.add_support(grid[0][i], "fixed")
    a = critical_load_factor(f, "D", modes=3)
    b = critical_load_factor(f, "D", modes=3)
    assert np.array_equal(a.factors_found, b.factors_found)
    assert np.array_equal(a.member_shape, b.member_shape)
