"""Self-weight as gravity load along the members.

Checks against the AISC Steel Construction Manual beam diagrams, case 1
(simple beam, uniform load: M_max = wl^2/8 at mid-span, deflection
5wl^4/384EI, from memory) with w = rho g A, and statics (the vertical
reactions of a frame carry its whole weight, rho g A times the member
length for an inclined member).
"""
from __future__ import annotations

import math

import pytest

from dxf2frame.solver import Frame, MissingSectionError, Section, solve
from dxf2frame.solver.errors import LoadError
from dxf2frame.solver.selfweight import DENSITY, STANDARD_GRAVITY, add_self_weight, self_weight_loads
from dxf2frame.solver.shapes import section_from_shape

G = 9.80665  # standard gravity, m/s^2 (SI definition)


def test_constants():
    assert STANDARD_GRAVITY == G                 # standard gravity (SI, exact by definition)
    assert DENSITY["steel"] == 7850.0            # structural steel (common practice)
    assert DENSITY["concrete"] == 2400.0         # plain normal-weight concrete (common practice)
    assert DENSITY["reinforced_concrete"] == 2500.0


def test_simple_steel_beam_midspan_moment():
    L = 8.0
    sec = section_from_shape("I 310x165x6x10", 210e9, unit=1e-3)
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, sec)
    f.add_support(a, "pin"), f.add_support(b, "roller")
    loads = add_self_weight(f, "steel")
    assert len(loads) == 1 and loads[0].case == "D"
    res = solve(f)["D"]
    w = 7850.0 * G * sec.A  # N/m
    # AISC beam diagrams case 1 (from memory): M_max = w l^2 / 8 at mid-span
    assert res.members[m.id].moment(L / 2) == pytest.approx(w * L**2 / 8, rel=1e-12)
    # AISC case 1: mid-span deflection 5 w l^4 / (384 E I), downward
    assert res.displacements is not None
    assert res.members[m.id].deflection(L / 2)[1] == pytest.approx(-5 * w * L**4 / (384 * sec.E * sec.I), rel=1e-9)


def test_inclined_member_total_vertical_reaction():
    # a rafter pinned at the foot and on a roller (horizontal surface) at the top
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(6, 2.5)
    sec = Section(200e9, 4.2e-3, 5e-5)
    f.add_member(a, b, sec)
    f.add_support(a, "pin"), f.add_support(b, "roller")
    add_self_weight(f, 7850.0, case="SW")
    res = solve(f)["SW"]
    Lm = math.hypot(6, 2.5)
    # statics: the vertical reactions carry the whole weight rho g A (member length)
    assert sum(r.fy for r in res.reactions) == pytest.approx(7850.0 * G * 4.2e-3 * Lm, rel=1e-12)
    assert sum(r.fx for r in res.reactions) == pytest.approx(0.0, abs=1e-9)


def test_densities_by_section_name_and_group():
    f = Frame()
    n = [f.add_node(0, 0), f.add_node(0, 4), f.add_node(5, 4), f.add_node(5, 0)]
    col = Section(200e9, 6e-3, 8e-5, name="COL")
    beam = Section(30e9, 0.12, 1.6e-3, name="RC-BEAM")
    f.add_member(n[0], n[1], col), f.add_member(n[1], n[2], beam), f.add_member(n[3], n[2], col)
    f.add_support(n[0], "fixed"), f.add_support(n[3], "fixed")
    loads = self_weight_loads(f, {"COL": "steel", "RC-BEAM": "reinforced_concrete"})
    assert not f.loads                        # self_weight_loads does not add
    f.loads.extend(loads)
    res = solve(f)["D"]
    total = G * (2 * 7850 * 6e-3 * 4 + 2500 * 0.12 * 5)
    assert sum(r.fy for r in res.reactions) == pytest.approx(total, rel=1e-12)  # statics: weight = reactions
    # a function of the member works too
    loads2 = self_weight_loads(f, lambda m: 0.0 if m.section.name == "COL" else 2400.0)
    assert [ld.member for ld in loads2] == ["M2"]


def test_errors():
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(3, 0)
    f.add_member(a, b, Section(200e9, 1e-3, 1e-5, name="X"), handle="2A")
    with pytest.raises(LoadError, match="no density") as e:
        self_weight_loads(f, {"Y": 7850})
    assert e.value.handle == "2A"
    with pytest.raises(LoadError, match="unknown material"):
        self_weight_loads(f, "unobtainium")
    with pytest.raises(LoadError):
        self_weight_loads(f, -1.0)
    f.add_member(a, b, None)
    with pytest.raises(MissingSectionError):
        self_weight_loads(f, 7850)
