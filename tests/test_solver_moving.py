"""Moving loads and influence lines, against closed-form results named
beside each check (AISC beam diagrams, the classical absolute-maximum
rule for a train of loads, Mueller-Breslau's principle)."""
from __future__ import annotations

import numpy as np
import pytest

from dxf2frame.solver import (
    Frame,
    LoadError,
    MovingLoads,
    Section,
    Vehicle,
    locate_point,
    path_along_members,
    path_through_points,
)
from solver_frames import two_bay_portal

SEC = Section(E=200e9, A=5e-3, I=8e-5)   # Pa, m^2, m^4


def simple_span(L: float, reverse: bool = False) -> Frame:
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(L, 0.0)
    if reverse:  # drawn right to left: the path runs against the member
        f.add_member(b, a, SEC, id="B")
    else:
        f.add_member(a, b, SEC, id="B")
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    return f


def two_spans(L: float) -> Frame:
    f = Frame()
    n = [f.add_node(i * L, 0.0) for i in range(3)]
    f.add_member(n[0], n[1], SEC, id="S1")
    f.add_member(n[1], n[2], SEC, id="S2")
    f.add_support(n[0], "pin")
    f.add_support(n[1], "roller")
    f.add_support(n[2], "roller")
    return f


def test_single_moving_load_gives_pl_over_4_at_midspan():
    # simple beam, concentrated load at centre: M_max = PL/4 (AISC beam
    # diagrams, from memory); the largest shear is P with the load at a
    # support (statics)
    L, P = 12.0, 80e3
    f = simple_span(L)
    ml = MovingLoads(f, path_along_members(f, ["B"]))
    env = ml.envelope(Vehicle((P,)), step=0.25)["B"]
    g = env.governing("M_max")
    assert g["value"] == pytest.approx(P * L / 4, rel=1e-9)
    assert g["x"] == pytest.approx(L / 2) and g["front"] == pytest.approx(L / 2)
    assert env.governing("V_max")["value"] == pytest.approx(P, rel=1e-9)
    assert env.governing("V_min")["value"] == pytest.approx(-P, rel=1e-9)
    # a downward load never hogs a simple span
    assert env.governing("M_min")["value"] == pytest.approx(0.0, abs=1e-6 * P * L)


@pytest.mark.parametrize("reverse", [False, True])
def test_two_axles_absolute_maximum_moment_by_the_classical_rule(reverse):
    # classical rule (any bridge engineering text, from memory): the
    # absolute maximum moment occurs under the heavier axle when the span
    # centre bisects the distance between it and the resultant.
    # P1 = 100 kN, P2 = 50 kN, 4 m apart, span 20 m: the resultant R =
    # 150 kN lies e = 50*4/150 = 4/3 m from P1; P1 then stands at x = L/2 -
    # e/2 = 28/3 m, the left reaction is R (L/2 - e/2) / L = 70 kN and
    # M = 70 * 28/3 = 653.33 kN*m (more than P1 alone at midspan, 500).
    L, P1, P2, d = 20.0, 100e3, 50e3, 4.0
    f = simple_span(L, reverse)
    ml = MovingLoads(f, path_along_members(f, ["B"]))
    env = ml.envelope(Vehicle((P1, P2), (d,)), step=1.0 / 3.0)["B"]
    # sagging is M > 0 about the member's local y: negative for a member
    # drawn right to left (its local y points down)
    g = env.governing("M_min" if reverse else "M_max")
    assert abs(g["value"]) == pytest.approx(70e3 * 28.0 / 3.0, rel=1e-9)
    x_heavy = 28.0 / 3.0 if not reverse else L - 28.0 / 3.0  # member x runs from its start node
    x_alt = L - x_heavy  # the mirror position (the vehicle the other way round)
    assert min(abs(g["x"] - x_heavy), abs(g["x"] - x_alt)) < 1e-6


def test_interior_reaction_influence_line_of_two_equal_spans():
    # Mueller-Breslau: the influence line of R_B is the deflected shape
    # for a unit lift at B.  Remove B: a simple span 2L with a unit load at
    # x deflects at its centre x(3L^2 - x^2)/(12EI) (x <= L; simple-beam
    # concentrated load, AISC beam diagrams, from memory) and a unit load
    # at the centre deflects it L^3/(6EI), so R_B(x) = x(3L^2 - x^2)/(2L^3),
    # symmetric about B.
    L = 6.0
    f = two_spans(L)
    ml = MovingLoads(f, path_along_members(f, ["S1", "S2"]))
    il = ml.influence_line("fy", support=1, step=0.25)
    x = np.where(il.s <= L, il.s, 2 * L - il.s)
    expected = x * (3 * L**2 - x**2) / (2 * L**3)
    assert np.allclose(il.values, expected, atol=1e-9)
    assert il.values.max() == pytest.approx(1.0)
    assert np.allclose(il.xy[:, 0], il.s) and np.allclose(il.xy[:, 1], 0.0)


def test_midspan_moment_influence_line_of_a_simple_span():
    # simple beam, load at a: M at x0 = a (L - x0) / L for a <= x0, and
    # x0 (L - a) / L beyond (statics; the triangle of any structures text)
    L, x0 = 10.0, 4.0
    f = simple_span(L)
    ml = MovingLoads(f, path_along_members(f, ["B"]))
    il = ml.influence_line("M", member="B", x=x0, step=0.5)
    a = il.s
    expected = np.where(a <= x0, a * (L - x0) / L, x0 * (L - a) / L)
    assert np.allclose(il.values, expected, atol=1e-9)
    # shear at x0 jumps by the unit load as it passes: -a/L before, 1 - a/L after
    v_right = ml.influence_line("V", member="B", x=x0, step=0.5)
    v_left = ml.influence_line("V", member="B", x=x0, step=0.5, side="left")
    assert np.allclose(v_right.values, np.where(a <= x0, -a / L, 1 - a / L), atol=1e-9)
    assert np.allclose(v_left.values, np.where(a < x0, -a / L, 1 - a / L), atol=1e-9)


def test_polyline_path_over_two_members_matches_the_chain():
    L = 6.0
    f = two_spans(L)
    by_chain = MovingLoads(f, path_along_members(f, ["S1", "S2"]))
    by_points = MovingLoads(f, path_through_points(f, [(2 * L, 0.0), (0.0, 0.0)]))
    a = by_chain.influence_line("fy", support=0, step=0.5)
    b = by_points.influence_line("fy", support=0, step=0.5)
    assert np.allclose(a.values, b.values[::-1], atol=1e-12)
    # end support of two spans, unit load at x in span 1: moments about
    # the far end give R_A = 1 - x/(2L) - R_B(x)/2 (statics with the
    # Mueller-Breslau R_B above)
    x = a.s[a.s <= L]
    rb = x * (3 * L**2 - x**2) / (2 * L**3)
    assert np.allclose(a.values[a.s <= L], 1 - x / (2 * L) - rb / 2, atol=1e-9)


def test_bad_paths_are_refused():
    f = two_spans(6.0)
    with pytest.raises(LoadError):
        path_along_members(f, ["S1", "nope"])
    with pytest.raises(LoadError):
        path_through_points(f, [(0.0, 0.0), (0.0, 5.0)])
    g = Frame()
    n = [g.add_node(0, 0), g.add_node(1, 0), g.add_node(5, 0), g.add_node(6, 0)]
    g.add_member(n[0], n[1], SEC, id="A")
    g.add_member(n[2], n[3], SEC, id="C")
    with pytest.raises(LoadError):
        path_along_members(g, ["A", "C"])
    with pytest.raises(ValueError):
        Vehicle((1.0, 2.0), ())


def test_locate_point_on_a_member():
    f = two_spans(6.0)
    assert locate_point(f, 9.0, 0.0) == ("S2", pytest.approx(3.0))
    with pytest.raises(LoadError):
        locate_point(f, 3.0, 1.0)


def test_hinged_beam_influence_lines_are_the_statics_of_its_parts():
    # cantilever A-B (fixed at A, a = 4 m) carrying at an internal hinge B
    # a suspended span B-C (roller at C, L = 10 m).  Statically determinate,
    # so its influence lines are straight (Mueller-Breslau; statics): for a
    # unit load at x, R_A = 1 and M_A = x (hogging) on A-B; on B-C the hinge
    # passes (L - x)/(L - a) to the cantilever: R_A = (L - x)/(L - a), and
    # M_A = a (L - x)/(L - a).
    a, L = 4.0, 10.0
    f = Frame()
    n0, n1, n2 = f.add_node(0.0, 0.0), f.add_node(a, 0.0), f.add_node(L, 0.0)
    f.add_member(n0, n1, SEC, id="AB", release_end=True)
    f.add_member(n1, n2, SEC, id="BC")
    f.add_support(n0, "fixed")
    f.add_support(n2, "roller")
    ml = MovingLoads(f, path_along_members(f, ["AB", "BC"]))
    fy = ml.influence_line("fy", support=0, step=0.5)
    mA = ml.influence_line("m", support=0, step=0.5)
    x = fy.s
    share = np.where(x <= a, 1.0, (L - x) / (L - a))
    arm = np.where(x <= a, x, a)
    assert np.allclose(fy.values, share, atol=1e-9)
    # the support's reaction couple balances the load's moment about A:
    # m = (unit load, downward) * lever arm, counter-clockwise positive
    assert np.allclose(mA.values, share * arm, atol=1e-9)


def test_unit_load_solutions_superpose_to_the_direct_solution():
    # superposition (the frame is linear): a vehicle's effect at one
    # placement equals a direct solve with its axles as point loads.  A
    # property of the method, checked on an inclined, hinged, two-span
    # frame with a column, where every unit-load path of the code is used.
    from dxf2frame.solver import PointLoad, solve
    f = Frame()
    n = [f.add_node(0.0, 0.0), f.add_node(5.0, 1.0), f.add_node(11.0, 1.0), f.add_node(5.0, -3.0)]
    f.add_member(n[0], n[1], SEC, id="R1", release_end=True)
    f.add_member(n[1], n[2], SEC, id="R2")
    f.add_member(n[3], n[1], SEC, id="COL")
    f.add_support(n[0], "pin")
    f.add_support(n[2], "roller", angle=0.3)
    f.add_support(n[3], "fixed")
    path = path_along_members(f, ["R1", "R2"])
    ml = MovingLoads(f, path)
    veh = Vehicle((60e3, 40e3), (2.5,))
    front = 7.0
    s = veh.axle_positions(front, +1)
    sol = ml.unit_solutions(s)
    for (j, a), P in zip(zip(*path.locate(s)), veh.loads):
        f.add_load(PointLoad(f.members[j].id, float(a), py=-P, case="V"))
    direct = solve(f)["V"]
    by_units = sol.reactions @ np.asarray(veh.loads)
    assert np.allclose(by_units, direct.reaction_array(), rtol=1e-9, atol=1e-6)
    rows = np.array([0, 1, 1, 2])
    xs = np.array([1.0, 0.5, 4.0, 2.0])
    for q, name in (("N", "axial"), ("V", "shear"), ("M", "moment")):
        got = sol.member_values(q, rows, xs) @ np.asarray(veh.loads)
        want = [getattr(direct.members[f.members[r].id], name)(x) for r, x in zip(rows, xs)]
        assert np.allclose(got, want, rtol=1e-9, atol=1e-6)


def test_reaction_envelope_and_governing_axle_points():
    # simple span L = 10 m, axles 100 + 50 kN 4 m apart: the largest left
    # reaction puts the heavy axle on the support, the light one 4 m in:
    # 100 + 50 * 6/10 = 130 kN (influence line of a simple-span reaction,
    # statics)
    L = 10.0
    f = simple_span(L)
    ml = MovingLoads(f, path_along_members(f, ["B"]))
    veh = Vehicle((100e3, 50e3), (4.0,))
    env = ml.reaction_envelope(veh, step=0.5)
    left = env[0]
    assert left["fy_max"] == pytest.approx(130e3, rel=1e-9)
    assert left["fy_min"] == pytest.approx(0.0, abs=1e-6)
    pts = ml.axle_points(veh, left["fy_max_front"], left["fy_max_direction"])
    assert sorted(pts[:, 0].round(9).tolist()) == [0.0, 4.0]
    assert np.allclose(pts[:, 1], 0.0)


def test_two_span_hogging_envelope_by_the_three_moment_equation():
    # two equal spans L, unit load at x in span 1: the three-moment equation
    # gives the support moment M_B = -x (L^2 - x^2) / (4 L^2) (from memory),
    # largest at x = L / sqrt(3): |M_B| = L / (6 sqrt(3)) = 0.0962 L per unit
    # load.  One moving load P: the envelope's hogging at B is that times P
    # (the stations fall within L/600 of the peak, where the curve is flat).
    L, P = 6.0, 10e3
    f = two_spans(L)
    ml = MovingLoads(f, path_along_members(f, ["S1", "S2"]))
    env = ml.envelope(Vehicle((P,)), step=L / 600)
    g = env["S1"].governing("M_min")
    assert g["x"] == pytest.approx(L)
    assert g["value"] == pytest.approx(-P * L / (6 * np.sqrt(3)), rel=1e-5)
    # the influence line itself, at the stations
    il = ml.influence_line("M", member="S1", x=L, step=0.5)
    x = il.s[il.s <= L]
    assert np.allclose(il.values[il.s <= L], -x * (L**2 - x**2) / (4 * L**2), atol=1e-9)


def _ramp_frame() -> tuple[Frame, list[tuple[str, float, float]]]:
    """An inclined ramp R1 (3-4-5, L = 5 m) hinged into a deck R2 (6 m) on a
    fixed column, the deck continuing as R3 (3 m, drawn right to left)
    onto a roller, and an inclined roller under the R2/R3 joint.  Returns
    the frame and the path as (member, start x, end x) in travel order;
    every length and path station is a multiple of 0.25 m, so the axle
    positions and the report's samples are exact binary numbers."""
    f = Frame()
    n = [f.add_node(0.0, 0.0), f.add_node(3.0, 4.0), f.add_node(9.0, 4.0), f.add_node(3.0, 0.0),
         f.add_node(12.0, 4.0)]
    f.add_member(n[0], n[1], SEC, id="R1", release_end=True)
    f.add_member(n[1], n[2], SEC, id="R2")
    f.add_member(n[3], n[1], SEC, id="COL")
    f.add_member(n[4], n[2], SEC, id="R3", release_start=True)
    f.add_support(n[0], "pin")
    f.add_support(n[2], "roller", angle=0.3)
    f.add_support(n[3], "fixed")
    f.add_support(n[4], "roller")
    return f, [("R1", 0.0, 5.0), ("R2", 0.0, 6.0), ("R3", 3.0, 0.0)]


def _short_middle_span() -> tuple[Frame, list[tuple[str, float, float]]]:
    """Three continuous spans 6 + 1.5 + 6 m on pins and rollers: a vehicle
    longer than the middle span can stand on both sides of it at once, so
    the placements with no axle on it give it end moments in every
    proportion (not one shape scaled)."""
    f = Frame()
    n = [f.add_node(x, 0.0) for x in (0.0, 6.0, 7.5, 13.5)]
    for k, mid in enumerate(("A", "B", "C")):
        f.add_member(n[k], n[k + 1], SEC, id=mid)
    f.add_support(n[0], "pin")
    for k in (1, 2, 3):
        f.add_support(n[k], "roller")
    return f, [("A", 0.0, 6.0), ("B", 0.0, 1.5), ("C", 0.0, 6.0)]


def _spans_on_a_spring() -> tuple[Frame, list[tuple[str, float, float]]]:
    """The three spans with the third support a vertical spring (5 MN/m)
    and a rotational spring at the far end: the unit loads' reactions
    include spring forces."""
    f, chain = _short_middle_span()
    f.supports[2] = type(f.supports[2]).of_kind(2, "spring", ky=5e6)
    f.supports[3] = type(f.supports[3]).of_kind(3, "roller", kr=2e7)
    return f, chain


def _span_of_ten() -> tuple[Frame, list[tuple[str, float, float]]]:
    """A simple span of 10 m (pin, roller)."""
    return simple_span(10.0), [("B", 0.0, 10.0)]


def _two_bay_portal() -> tuple[Frame, list[tuple[str, float, float]]]:
    """Two bays of 6 m on three 4 m columns with fixed feet, the path on
    the beams: the columns carry end forces only, and their end moments
    take every proportion as the vehicle crosses (sway and bending of the
    beams mixed)."""
    return two_bay_portal(SEC, first_column=0), [("B1", 0.0, 6.0), ("B2", 0.0, 6.0)]


@pytest.mark.parametrize("frame, direction, step, vehicle, cells, ways", [
    (_ramp_frame, (0.0, -1.0), 0.25, Vehicle((60e3, 40e3), (2.5,)), None, (1, -1)),
    (_ramp_frame, (1.0, -2.0), 0.25, Vehicle((60e3, 40e3), (2.5,)), None, (1, -1)),
    (_ramp_frame, (1.0, -2.0), 0.25, Vehicle((60e3, 40e3), (2.5,)), 40, (1, -1)),  # work in the smallest blocks
    (_short_middle_span, (0.0, -1.0), 0.125, Vehicle((50e3, 80e3, 30e3), (3.0, 1.25)), None, (1, -1)),
    (_spans_on_a_spring, (0.0, -1.0), 0.125, Vehicle((50e3, 80e3), (3.0,)), None, (1, -1)),
    (_two_bay_portal, (0.0, -1.0), 0.125, Vehicle((50e3, 80e3), (2.5,)), None, (1, -1)),
    # a coarse step: between the placements where an axle crosses a node
    # some runs are shorter than the piece search reduces (every placement
    # of them evaluated), the others longer
    (_two_bay_portal, (1.0, -2.0), 0.375, Vehicle((50e3, 80e3, 20e3), (2.5, 1.0)), None, (1, -1)),
    # stations 3e-9 m (k = 1, 2, 3) past the span's regular samples at 1 m
    # spacing: within 1e-9 of its length, so they are no samples of their
    # own and an axle stands between two samples
    (_span_of_ten, (1.0, -2.0), 1.0 + 3e-9, Vehicle((60e3,)), None, (1,)),
])
def test_envelope_equals_the_extremes_of_direct_solves_of_every_placement(frame, direction, step, vehicle, cells,
                                                                          ways, monkeypatch):
    # The envelope must be the largest and smallest N, V, M over the
    # vehicle's placements.  Cross-check by an independent route: every
    # placement (front axle at k * step, both ways) is put on the frame as
    # ordinary point loads, one load case each, solved by solver.solve, and
    # N, V, M (both sides of a jump) read at the envelope's samples.  The
    # ramp frame has a hinge, an inclined path member, a member drawn
    # against the path, an inclined roller and a column off the path; the
    # inclined load direction gives the axles an axial component on every
    # member.
    from dxf2frame.solver import PointLoad, moving, solve
    if cells:
        monkeypatch.setattr(moving, "_CELLS", cells)
    f, chain = frame()
    g = np.asarray(direction) / np.hypot(*direction)
    ml = MovingLoads(f, path_along_members(f, [c[0] for c in chain]), direction=tuple(direction))
    env = ml.envelope(vehicle, step=step, directions=ways)
    starts = np.cumsum([0.0] + [abs(b - a) for _, a, b in chain])
    Lp, Lv = starts[-1], float(vehicle.offsets[-1])
    n_front = int(np.ceil((Lp + Lv) / step - 1e-9)) + 1
    fronts = []
    for d in ways:
        fronts += [(k * step if d > 0 else Lp - k * step, d) for k in range(n_front)]
    for i, (front, d) in enumerate(fronts):
        for s, P in zip(front - d * vehicle.offsets, vehicle.loads):
            if not 0.0 <= s <= Lp:
                continue
            k = min(int(np.searchsorted(starts, s, side="right")) - 1, len(chain) - 1)
            mid, a, b = chain[k]
            x = a + np.sign(b - a) * (s - starts[k])
            f.add_load(PointLoad(mid, float(x), px=P * g[0], py=P * g[1], case=f"P{i}"))
    direct = solve(f, [f"P{i}" for i in range(len(fronts))])
    for mid, e in env.items():
        for q, name in (("N", "axial"), ("V", "shear"), ("M", "moment")):
            vals = np.array([[[getattr(direct[f"P{i}"].members[mid], name)(x, side) for side in ("right", "left")]
                              for x in e.x] for i in range(len(fronts))])  # (placement, sample, side)
            scale = max(np.abs(vals).max(), 1.0)
            assert np.allclose(e.values[f"{q}_max"], vals.max(axis=(0, 2)), rtol=0, atol=1e-9 * scale)
            assert np.allclose(e.values[f"{q}_min"], vals.min(axis=(0, 2)), rtol=0, atol=1e-9 * scale)
            # the governing placement reported gives that extreme itself
            for key, red in ((f"{q}_max", np.max), (f"{q}_min", np.min)):
                i = [fronts.index((fr, int(dr))) for fr, dr in zip(e.front[key], e.direction[key])]
                got = red(vals[i, np.arange(len(e.x))], axis=1)
                assert np.allclose(got, e.values[key], rtol=0, atol=1e-9 * scale)
    # support reactions: the extremes over the same direct solves
    R = np.array([direct[f"P{i}"].reaction_array() for i in range(len(fronts))])  # (placement, support, 3)
    scale = max(np.abs(R).max(), 1.0)
    for k, row in enumerate(ml.reaction_envelope(vehicle, step=step, directions=ways)):
        for ci, comp in enumerate(("fx", "fy", "m")):
            assert row[f"{comp}_max"] == pytest.approx(R[:, k, ci].max(), abs=1e-9 * scale)
            assert row[f"{comp}_min"] == pytest.approx(R[:, k, ci].min(), abs=1e-9 * scale)


def test_envelope_of_a_span_off_the_path_by_the_three_moment_equation():
    # Two equal spans L, the vehicle (one load P) on span 1 only: span 2
    # carries end forces alone.  Three-moment equation (from memory): a
    # unit load at x in span 1 gives M_B = -x (L^2 - x^2) / (4 L^2), largest
    # at x = L / sqrt(3): |M_B| = L / (6 sqrt(3)); span 2 has no load, so its
    # moment falls linearly from M_B to zero at C: M(x2) = M_B (1 - x2 / L).
    # Its hogging envelope is P L / (6 sqrt(3)) (1 - x2 / L) (stations within
    # L/600 of the peak, where the curve is flat), and a downward load on
    # span 1 never makes span 2 sag.
    L, P = 6.0, 10e3
    f = two_spans(L)
    ml = MovingLoads(f, path_along_members(f, ["S1"]))
    e = ml.envelope(Vehicle((P,)), step=L / 600)["S2"]
    assert np.allclose(e.values["M_min"], -P * L / (6 * np.sqrt(3)) * (1 - e.x / L), rtol=1e-5, atol=1e-6)
    assert np.all(e.values["M_max"] <= 1e-9 * P * L)
    # shear in span 2 is constant along it, V = dM/dx = -M_B / L (statics),
    # largest with the load at L / sqrt(3): P / (6 sqrt(3))
    assert len(e.x) == 11
    assert np.allclose(e.values["V_max"], P / (6 * np.sqrt(3)), rtol=1e-5)


@pytest.mark.parametrize("seed", range(6))
def test_line_envelope_equals_brute_force(seed):
    # The envelope of straight lines M = x V - M0 (a member's moment under
    # placements that put no axle on it) found from a few tangent samples
    # and the lines above their kinks, against evaluating every line at
    # every sample (numpy brute force).  The lines tangent to the parabolas
    # y = s ((x - 2.5)^2 + 40) (y = s (2 (c - 2.5) x + 2.5^2 - c^2 + 40) for
    # s = +-1 at tangent points c) make the upper and lower envelopes curved,
    # so each sample has its own extreme line (the hard case for the
    # pruning); lines near zero are mixed in.
    from dxf2frame.solver.moving import _line_extremes
    rng = np.random.default_rng(seed)
    n_lines, n_x = 300, 60
    c = rng.uniform(0.0, 5.0, (2, n_lines))  # tangent points
    s = np.array([[1.0], [-1.0]])
    V = np.concatenate([(2 * s * (c - 2.5)).ravel(), 0.1 * rng.normal(size=50)])
    M = np.concatenate([(-s * (2.5**2 - c**2 + 40.0)).ravel(), 0.1 * rng.normal(size=50)])
    x = np.sort(rng.uniform(0.0, 5.0, n_x))
    use = rng.random(len(V)) > 0.1
    best = {("M", sg, "right"): (np.full(n_x, -np.inf), np.zeros(n_x, np.intp)) for sg in (1, -1)}
    _line_extremes(x, V, M, use, np.arange(n_x), best)
    E = np.multiply.outer(x, V) - M
    E[:, ~use] = np.nan
    for sg in (1, -1):
        want = np.nanargmax(sg * E, axis=1)
        assert len(set(want)) > 20  # a curved envelope: many different extreme lines
        v, a = best[("M", sg, "right")]
        assert np.array_equal(a, want)
        assert np.array_equal(v, sg * E[np.arange(n_x), want])


def test_column_envelope_inside_governed_by_placements_that_govern_neither_end():
    # The columns of the two-bay portal carry end forces only, so M is a
    # straight line along each under every placement; inside a column the
    # extreme comes from placements that give the largest value at neither
    # end (the envelope of the lines is curved).  Brute force: every
    # placement solved by solver.solve as point loads, M read at the
    # column's eleven points.
    from dxf2frame.solver import PointLoad, solve
    f, chain = _two_bay_portal()
    vehicle, step = Vehicle((50e3, 80e3), (2.5,)), 0.125
    env = MovingLoads(f, path_along_members(f, [c[0] for c in chain])).envelope(vehicle, step=step)
    Lp = 12.0
    n_front = int(np.ceil((Lp + 2.5) / step - 1e-9)) + 1
    fronts = [(k * step, 1) for k in range(n_front)] + [(Lp - k * step, -1) for k in range(n_front)]
    for i, (front, d) in enumerate(fronts):
        for s, P in zip(front - d * vehicle.offsets, vehicle.loads):
            if 0.0 <= s <= Lp:
                mid, x = ("B1", s) if s < 6.0 else ("B2", s - 6.0)
                f.add_load(PointLoad(mid, float(x), px=0.0, py=-P, case=f"P{i}"))
    direct = solve(f, [f"P{i}" for i in range(len(fronts))])
    inside_only = 0
    for col in ("C0", "C1", "C2"):
        e = env[col]
        M = np.array([[direct[f"P{i}"].members[col].moment(x) for x in e.x] for i in range(len(fronts))])
        scale = np.abs(M).max()
        for key, sg in (("M_max", 1), ("M_min", -1)):
            want = (sg * M).argmax(axis=0)  # the governing placement at each point
            inside_only += len(set(want[1:-1]) - {want[0], want[-1]})
            assert np.allclose(e.values[key], M[want, np.arange(len(e.x))], rtol=0, atol=1e-9 * scale)
            got = [fronts.index((fr, int(dr))) for fr, dr in zip(e.front[key], e.direction[key])]
            assert np.allclose(M[got, np.arange(len(e.x))], e.values[key], rtol=0, atol=1e-9 * scale)
    assert inside_only >= 10  # the hard case: many points governed by placements governing no end


@pytest.mark.parametrize("loads, spacings", [((60e3, 40e3), (1.3,)), ((60e3, 40e3, 30e3), (0.7, 2.1))])
def test_a_decimal_step_never_hides_a_shear_extreme(loads, spacings):
    # with a step of 0.1 m (not a binary fraction) a station can round to
    # two positions; whichever side of an axle's jump a sample then takes,
    # the envelope must be at least as extreme as every placement at the
    # exact decimal positions, both sides of every sample (direct solves
    # of point loads by the ordinary solver, independent of the envelope)
    from dxf2frame.solver import PointLoad, solve

    def span():
        f = Frame()
        a, b = f.add_node(0.0, 0.0), f.add_node(10.0, 0.0)
        f.add_member(a, b, SEC, id="S")
        f.add_support(a, "pin")
        f.add_support(b, "roller")
        return f

    env = MovingLoads(span(), path_along_members(span(), ["S"])).envelope(Vehicle(loads, spacings), step=0.1)["S"]
    offsets = np.concatenate([[0.0], np.cumsum(spacings)])
    vmax, vmin = np.full(len(env.x), -np.inf), np.full(len(env.x), np.inf)
    for d in (1, -1):
        for k in range(int(round((10.0 + offsets[-1]) * 10)) + 1):
            g = span()
            where = [k / 10 - o if d == 1 else 10.0 - k / 10 + o for o in offsets]
            on = [(w, s) for w, s in zip(loads, where) if -1e-12 <= s <= 10.0 + 1e-12]
            if not on:
                continue
            for w, s in on:
                g.add_load(PointLoad("S", min(max(s, 0.0), 10.0), 0.0, -w, case="D"))
            r = solve(g)["D"].members["S"]
            for i, xi in enumerate(env.x):
                for xx in (max(xi - 1e-7, 0.0), min(xi + 1e-7, 10.0)):
                    v = r.shear(xx)
                    vmax[i], vmin[i] = max(vmax[i], v), min(vmin[i], v)
    tol = 1e-6 * max(loads)
    assert np.all(env.values["V_max"] >= vmax - tol)
    assert np.all(env.values["V_min"] <= vmin + tol)


def test_off_path_extreme_inside_a_piece_equals_direct_solves():
    # Two equal spans, the path on span 1 only: span 2 carries end forces
    # alone, and its hogging over the middle support peaks with the axles
    # well inside the stretch where both stand on span 1 (for one load at
    # L / sqrt(3), three-moment equation, from memory).  Between the
    # placements where an axle crosses a path node the envelope is found
    # from four placements per stretch (its ends and thirds: fronts at
    # multiples of 1.5 m here) and the placements next to the cubic's
    # stationary points; the extreme must still be that of every
    # placement solved directly (solver.solve, point loads, one case per
    # placement) and the governing placement one of the others.
    from dxf2frame.solver import PointLoad, solve
    L, step = 6.0, 0.05
    vehicle = Vehicle((60e3, 40e3), (1.5,))
    f = two_spans(L)
    env = MovingLoads(f, path_along_members(f, ["S1"])).envelope(vehicle, step=step)["S2"]
    n_front = int(round((L + 1.5) / step)) + 1
    fronts = [(k * step, 1) for k in range(n_front)] + [(L - k * step, -1) for k in range(n_front)]
    for i, (front, d) in enumerate(fronts):
        for s, P in zip(front - d * vehicle.offsets, vehicle.loads):
            if 0.0 <= s <= L:
                f.add_load(PointLoad("S1", float(s), px=0.0, py=-P, case=f"P{i}"))
    direct = solve(f, [f"P{i}" for i in range(len(fronts))])
    res = [direct[f"P{i}"].members["S2"] for i in range(len(fronts))]
    for q, name in (("N", "axial"), ("V", "shear"), ("M", "moment")):
        vals = np.array([[getattr(r, name)(x) for x in env.x] for r in res])  # (placement, sample)
        scale = max(np.abs(vals).max(), 1.0)
        for key, red in ((f"{q}_max", np.max), (f"{q}_min", np.min)):
            assert np.allclose(env.values[key], red(vals, axis=0), rtol=0, atol=1e-9 * scale)
            i = [fronts.index((round(fr / step) * step, int(dr))) for fr, dr in zip(env.front[key], env.direction[key])]
            assert np.allclose(vals[i, np.arange(len(env.x))], env.values[key], rtol=0, atol=1e-9 * scale)
    g = env.governing("M_min")
    assert g["value"] < 0 and g["x"] == 0.0
    assert 1.5 < g["front"] < 6.0
    assert abs(g["front"] / 1.5 - round(g["front"] / 1.5)) > 1e-6  # no placement evaluated as a node


@pytest.mark.parametrize("seed", range(4))
def test_piece_extremes_equal_brute_force(seed):
    # Quantities that are cubics in the placement's index within each piece
    # (random coefficients, pieces of 1 to 80 placements, many with an
    # interior maximum or minimum), reduced by the piece search, against
    # evaluating every placement (numpy brute force).
    from types import SimpleNamespace

    from dxf2frame.solver.moving import _piece_extremes
    rng = np.random.default_rng(seed)
    sizes = rng.integers(1, 80, 30)
    bounds = np.concatenate([[0], np.cumsum(sizes)])
    nb, r, t = 5, 40, np.linspace(0.0, 1.0, 11)
    cols = []
    for n in sizes:
        k = np.arange(n) / max(n - 1, 1)
        # parabolas with their vertex inside the piece, plus a little cubic
        k0, c = rng.uniform(0.2, 0.8), rng.normal(size=(nb, 3))
        cols.append(30 * c[:, :1] + 10 * c[:, 1:2] * (k - k0) ** 2 + c[:, 2:] * (k - 0.5) ** 3)
    WP = np.concatenate(cols, axis=1)
    pl = SimpleNamespace(pieces=bounds, WP=WP, n=WP.shape[1])
    G = rng.normal(size=(3, r, nb))
    L = rng.uniform(1.0, 8.0, r)
    first = np.arange(r) * len(t)
    best = {key: (np.full(r * len(t), -np.inf), np.zeros(r * len(t), np.intp))
            for key in [(q, sg, sd) for q in "NVM" for sg in (1, -1) for sd in ("right", "left")]}
    _piece_extremes(pl, G, L, t, first, best)
    F = np.einsum("qrb,bp->qrp", G, WP)
    want = {"N": np.repeat(-F[0], len(t), axis=0), "V": np.repeat(F[1], len(t), axis=0),
            "M": (L[:, None] * t[None, :]).reshape(-1, 1) * np.repeat(F[1], len(t), axis=0)
            - np.repeat(F[2], len(t), axis=0)}  # (sample, placement)
    interior = 0
    for q, E in want.items():
        scale = np.abs(E).max()
        for sg in (1, -1):
            v, a = best[(q, sg, "right")]
            w = sg * E
            assert np.allclose(v, w.max(axis=1), rtol=0, atol=1e-12 * scale)
            assert np.allclose(w[np.arange(len(a)), a], v, rtol=0, atol=1e-12 * scale)
            p = w.argmax(axis=1)
            inside = (p != bounds[np.searchsorted(bounds, p, side="right") - 1]) & ~np.isin(p + 1, bounds)
            interior += int(inside.sum())
    assert interior > 100  # many extremes inside pieces, at no end
