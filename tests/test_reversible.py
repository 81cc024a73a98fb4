"""Wind and earthquake acting both ways: every combination holding them
appears with both signs.

The expected lists are the basic combinations of ASCE/SEI 7-16 section
2.3.1 (strength design) and 2.4.1 (allowable stress design), written down
from memory, with each W and E term once positive and once negative (wind
and earthquake act in either direction, which the standard leaves to the
designer to consider).
"""
from __future__ import annotations

import pytest

from dxf2frame.solver import DistributedLoad, Frame, NodalLoad, Section, combine_many, solve
from dxf2frame.solver.combinations import REVERSIBLE_DEFAULT, builtin_combinations, parse_combination, with_reversals

ALL = ["D", "L", "Lr", "S", "R", "W", "E"]


def test_lrfd_with_reversals_matches_asce7_2_3_1():
    got = [name for name, _ in builtin_combinations("LRFD", ALL, reversible=["W", "E"])]
    # ASCE/SEI 7-16 2.3.1 (from memory), each W and E with both signs
    expected = [
        "1.4D",                                                                      # 1
        "1.2D+1.6L+0.5Lr", "1.2D+1.6L+0.5S", "1.2D+1.6L+0.5R",                       # 2
        "1.2D+1.6Lr+L", "1.2D+1.6Lr+0.5W", "1.2D+1.6Lr-0.5W",                        # 3
        "1.2D+1.6S+L", "1.2D+1.6S+0.5W", "1.2D+1.6S-0.5W",
        "1.2D+1.6R+L", "1.2D+1.6R+0.5W", "1.2D+1.6R-0.5W",
        "1.2D+W+L+0.5Lr", "1.2D-W+L+0.5Lr", "1.2D+W+L+0.5S", "1.2D-W+L+0.5S",        # 4
        "1.2D+W+L+0.5R", "1.2D-W+L+0.5R",
        "1.2D+E+L+0.2S", "1.2D-E+L+0.2S",                                            # 5
        "0.9D+W", "0.9D-W",                                                          # 6
        "0.9D+E", "0.9D-E",                                                          # 7
    ]
    assert got == expected
    # every name reads back as its factors
    for name, factors in builtin_combinations("LRFD", ALL, reversible=["W", "E"]):
        assert parse_combination(name) == factors


def test_asd_with_reversals_matches_asce7_2_4_1():
    got = dict(builtin_combinations("ASD", ["D", "L", "Lr", "W", "E"], reversible=REVERSIBLE_DEFAULT))
    # ASCE/SEI 7-16 2.4.1 combination 6a: D + 0.75L + 0.75(0.6W) + 0.75Lr (from memory)
    assert got["D+0.75L+0.45W+0.75Lr"] == {"D": 1.0, "L": 0.75, "W": pytest.approx(0.45), "Lr": 0.75}
    assert got["D+0.75L-0.45W+0.75Lr"]["W"] == pytest.approx(-0.45)
    # 2.4.1 combinations 7 and 8: 0.6D + 0.6W and 0.6D + 0.7E (from memory), both ways
    for name in ("0.6D+0.6W", "0.6D-0.6W", "0.6D+0.7E", "0.6D-0.7E", "D+0.6W", "D-0.6W", "D+0.7E", "D-0.7E"):
        assert name in got
    # without reversible cases nothing changes
    assert "0.6D-0.6W" not in dict(builtin_combinations("ASD", ["D", "L", "Lr", "W", "E"]))


def test_user_list_keeps_names_and_drops_duplicates():
    combos = [("wind up", {"D": 0.9, "W": 1.0}), ("0.9D-W", {"D": 0.9, "W": -1.0}), ("D+L", {"D": 1.0, "L": 1.0}),
              ("both", {"D": 1.0, "W": 0.5, "E": 0.7})]
    got = with_reversals(combos, ["W", "E"])
    names = [n for n, _ in got]
    assert names[:3] == ["wind up", "0.9D-W", "D+L"]   # the mirror of "wind up" is already there
    assert names[3:] == ["both", "D-0.5W+0.7E", "D+0.5W-0.7E", "D-0.5W-0.7E"]  # 2 x 2 sign choices
    assert with_reversals(combos, []) == combos


def test_reversed_wind_mirrors_the_sway():
    # a symmetric portal under lateral wind: superposition, the mirrored
    # combination differs only in the sign of the wind part (linearity)
    f = Frame()
    a, b, c, d = f.add_node(0, 0), f.add_node(0, 4), f.add_node(6, 4), f.add_node(6, 0)
    sec = Section(200e9, 5e-3, 8e-5)
    f.add_member(a, b, sec), f.add_member(b, c, sec), f.add_member(d, c, sec)
    f.add_support(a, "fixed"), f.add_support(d, "fixed")
    f.add_load(DistributedLoad("M2", q1=(0, -10e3), case="D"))
    f.add_load(NodalLoad(b, fx=8e3, case="W"))
    cases = solve(f)
    res = combine_many(cases, builtin_combinations("LRFD", ["D", "W"], reversible=["W"]))
    up, down = res["0.9D+W"], res["0.9D-W"]
    wind = cases["W"].displacements[b, 0]
    assert up.displacements[b, 0] - down.displacements[b, 0] == pytest.approx(2 * wind, rel=1e-12)


def test_mirror_name_never_shadows_a_given_name():
    combos = [("0.9D-W", {"D": 1.0}), ("0.9D+W", {"D": 0.9, "W": 1.0})]
    got = with_reversals(combos, ["W"])
    names = [n for n, _ in got]
    assert names == ["0.9D-W", "0.9D+W", "0.9D-W (mirror of 0.9D+W)"]
    assert len(set(names)) == len(names)
