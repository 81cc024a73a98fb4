"""Load combinations: parsing, the built-in ASCE/SEI 7-16 sets, superposition
and envelopes.

The built-in sets are checked against the basic combinations of ASCE/SEI
7-16 sections 2.3.1 (strength design) and 2.4.1 (allowable stress design)
as written down from memory.  Member values are checked against AISC Steel
Construction Manual Table 3-23 case 1 (simple beam, uniform load: M = wl^2/8,
deflection 5wl^4/384EI, from memory) with the factored load of each
combination.
"""
from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dxf2frame.solver import DistributedLoad, Frame, Section, combine, envelope, solve
from dxf2frame.solver.combinations import (
    ASCE7_EDITION,
    CombinationSyntaxError,
    builtin_combinations,
    expand_template,
    format_combination,
    parse_combination,
)
from dxf2frame.solver.results import combine_many, reaction_envelope

E, A, I = 200e9, 5e-3, 8e-5
ALL = ["D", "L", "Lr", "S", "R", "W", "E"]


# --------------------------------------------------------------------------
# text


def test_parse_plain_sums():
    assert parse_combination("1.2D + 1.6L + 0.5S") == {"D": 1.2, "L": 1.6, "S": 0.5}
    assert parse_combination("0.9D+1.0W") == {"D": 0.9, "W": 1.0}
    assert parse_combination("D") == {"D": 1.0}
    assert parse_combination("1.2*D + 1.6 * L") == {"D": 1.2, "L": 1.6}
    assert parse_combination("0.9D - 1.0W") == {"D": 0.9, "W": -1.0}
    assert parse_combination("D + 0.5D") == {"D": 1.5}  # repeated terms add up
    assert parse_combination("1.2 D_1 + .2 Wind2") == {"D_1": 1.2, "Wind2": 0.2}
    # no exponents: E is the earthquake case
    assert parse_combination("D + 0.75L + 0.525E + 0.75S") == {"D": 1.0, "L": 0.75, "E": 0.525, "S": 0.75}
    assert parse_combination("2E+1W") == {"E": 2.0, "W": 1.0}


def test_case_names_are_case_sensitive():
    assert parse_combination("1.6L + 0.5Lr") == {"L": 1.6, "Lr": 0.5}
    assert parse_combination("1.6l") == {"l": 1.6}


def test_parentheses_distribute():
    # ASCE 7-16 2.4.1 combination 6a is written D + 0.75L + 0.75(0.6W) + 0.75Lr (from memory)
    got = parse_combination("D + 0.75(L + 0.6W)")
    assert got["D"] == 1.0 and got["L"] == 0.75
    assert got["W"] == pytest.approx(0.45)  # 0.75 x 0.6


@pytest.mark.parametrize("bad", ["", "1.2D +", "D + (L", "1.2*", "D|L", "D + 1.6", "2D!", "(L|S)"])
def test_parse_errors(bad):
    with pytest.raises(CombinationSyntaxError):
        parse_combination(bad)


def test_format():
    assert format_combination({"D": 1.2, "L": 1.6, "S": 0.5}) == "1.2D+1.6L+0.5S"
    assert format_combination({"D": 1.0, "L": 1.0}) == "D+L"
    assert format_combination({"D": 0.9, "W": -1.0}) == "0.9D-W"
    assert format_combination({"D": 1.0, "L": 0.75, "W": 0.75 * 0.6}) == "D+0.75L+0.45W"
    assert format_combination({"D": 1.2, "L": 0.0}) == "1.2D"


names = st.from_regex(r"[A-Za-z_][A-Za-z0-9_]{0,4}", fullmatch=True)
factors = st.floats(-5, 5).map(lambda f: round(f, 3)).filter(lambda f: f != 0)


@settings(max_examples=60, deadline=None)
@given(st.dictionaries(names, factors, min_size=1, max_size=5))
def test_format_then_parse_round_trip(fac):
    assert parse_combination(format_combination(fac)) == pytest.approx(fac)


def test_template_alternatives():
    got = expand_template("1.2D + 1.6(Lr|S|R) + (L|0.5W)")
    assert len(got) == 6
    assert {"D": 1.2, "S": 1.6, "W": 0.5} in got


# --------------------------------------------------------------------------
# built-in sets (ASCE/SEI 7-16, from memory)

LRFD_ALL = [
    {"D": 1.4},  # 2.3.1 (1)
    {"D": 1.2, "L": 1.6, "Lr": 0.5},  # 2.3.1 (2)
    {"D": 1.2, "L": 1.6, "S": 0.5},
    {"D": 1.2, "L": 1.6, "R": 0.5},
    {"D": 1.2, "Lr": 1.6, "L": 1.0},  # 2.3.1 (3)
    {"D": 1.2, "Lr": 1.6, "W": 0.5},
    {"D": 1.2, "S": 1.6, "L": 1.0},
    {"D": 1.2, "S": 1.6, "W": 0.5},
    {"D": 1.2, "R": 1.6, "L": 1.0},
    {"D": 1.2, "R": 1.6, "W": 0.5},
    {"D": 1.2, "W": 1.0, "L": 1.0, "Lr": 0.5},  # 2.3.1 (4)
    {"D": 1.2, "W": 1.0, "L": 1.0, "S": 0.5},
    {"D": 1.2, "W": 1.0, "L": 1.0, "R": 0.5},
    {"D": 1.2, "E": 1.0, "L": 1.0, "S": 0.2},  # 2.3.1 (5)
    {"D": 0.9, "W": 1.0},  # 2.3.1 (6)
    {"D": 0.9, "E": 1.0},  # 2.3.1 (7)
]

ASD_ALL = [
    {"D": 1.0},  # 2.4.1 (1)
    {"D": 1.0, "L": 1.0},  # 2.4.1 (2)
    {"D": 1.0, "Lr": 1.0},  # 2.4.1 (3)
    {"D": 1.0, "S": 1.0},
    {"D": 1.0, "R": 1.0},
    {"D": 1.0, "L": 0.75, "Lr": 0.75},  # 2.4.1 (4)
    {"D": 1.0, "L": 0.75, "S": 0.75},
    {"D": 1.0, "L": 0.75, "R": 0.75},
    {"D": 1.0, "W": 0.6},  # 2.4.1 (5)
    {"D": 1.0, "E": 0.7},
    {"D": 1.0, "L": 0.75, "W": 0.45, "Lr": 0.75},  # 2.4.1 (6a)
    {"D": 1.0, "L": 0.75, "W": 0.45, "S": 0.75},
    {"D": 1.0, "L": 0.75, "W": 0.45, "R": 0.75},
    {"D": 1.0, "L": 0.75, "E": 0.525, "S": 0.75},  # 2.4.1 (6b)
    {"D": 0.6, "W": 0.6},  # 2.4.1 (7)
    {"D": 0.6, "E": 0.7},  # 2.4.1 (8)
]


def _as_sets(combos):
    return [frozenset((k, round(v, 9)) for k, v in f.items()) for _, f in combos]


@pytest.mark.parametrize("kind, expected", [("LRFD", LRFD_ALL), ("ASD", ASD_ALL)])
def test_builtin_sets_with_every_case(kind, expected):
    got = builtin_combinations(kind, ALL)
    assert sorted(map(sorted, _as_sets(got))) == sorted(map(sorted, _as_sets([("", f) for f in expected])))
    for name, fac in got:
        assert parse_combination(name) == pytest.approx(fac)  # names are the formatted factors
    assert ASCE7_EDITION == "ASCE/SEI 7-16"


def test_builtin_sets_drop_absent_cases_and_duplicates():
    # only D and L: ASCE 7-16 2.3.1 (1), (2) and (3)-(5) reduced to 1.2D + L
    assert [n for n, _ in builtin_combinations("LRFD", ["D", "L"])] == ["1.4D", "1.2D+1.6L", "1.2D+L"]
    # 2.4.1 (1), (2), (4)
    assert [n for n, _ in builtin_combinations("asd", ["D", "L"])] == ["D", "D+L", "D+0.75L"]
    # D alone: only the combinations that are D alone by definition
    assert [n for n, _ in builtin_combinations("LRFD", ["D"])] == ["1.4D"]
    assert [n for n, _ in builtin_combinations("ASD", ["D"])] == ["D"]
    # wind but no live or roof loads: 2.3.1 (3) gives 1.2D + 0.5W, (4) 1.2D + W, (6) 0.9D + W
    got = [n for n, _ in builtin_combinations("LRFD", ["D", "W"])]
    assert got == ["1.4D", "1.2D+0.5W", "1.2D+W", "0.9D+W"]
    # no dead load case: the rest still combine
    assert ("1.6L", {"L": 1.6}) in builtin_combinations("LRFD", ["L"])


def test_builtin_unknown_kind_and_custom_templates():
    with pytest.raises(ValueError):
        builtin_combinations("LSD", ALL)
    got = builtin_combinations("mine", ["D", "L", "S"], templates=["1.35D + 1.5(L|S)"])
    assert got == [("1.35D+1.5L", {"D": 1.35, "L": 1.5}), ("1.35D+1.5S", {"D": 1.35, "S": 1.5})]


# --------------------------------------------------------------------------
# superposition and envelopes on a simple beam


def _beam(L=6.0, wD=10e3, wL=6e3, wW=-18e3):
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, Section(E, A, I))
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -wD), case="D"))
    f.add_load(DistributedLoad(m.id, q1=(0.0, -wL), case="L"))
    f.add_load(DistributedLoad(m.id, q1=(0.0, -wW), case="W"))  # wind uplift
    return f, m


def test_combination_is_the_factored_load():
    L, wD, wL = 6.0, 10e3, 6e3
    f, m = _beam(L, wD, wL)
    res = solve(f)
    c = combine(res, {"D": 1.2, "L": 1.6}, "1.2D+1.6L", family="LRFD")
    assert c.kind == "combination" and c.family == "LRFD" and c.name == "1.2D+1.6L"
    assert c.factors == {"D": 1.2, "L": 1.6}
    w = 1.2 * wD + 1.6 * wL  # ASCE 7-16 2.3.1 (2)
    mr = c.members[m.id]
    assert mr.moment(L / 2) == pytest.approx(w * L**2 / 8, rel=1e-12)  # AISC case 1: wl^2/8
    assert mr.deflection(L / 2)[1] == pytest.approx(-5 * w * L**4 / (384 * E * I), rel=1e-12)  # AISC case 1
    assert mr.extremes()["m_max_at"] == pytest.approx(L / 2)  # AISC case 1: at center
    assert c.reactions[0].fy == pytest.approx(w * L / 2, rel=1e-12)  # AISC case 1: R = wl/2
    # the same by operators
    d = res["D"].scaled(1.2) + res["L"].scaled(1.6)
    assert d.members[m.id].moment(1.0) == pytest.approx(w * 1.0 * (L - 1.0) / 2, rel=1e-12)  # AISC case 1: Mx
    assert d.factors == {"D": 1.2, "L": 1.6}


def test_combine_skips_cases_the_frame_does_not_have():
    f, m = _beam()
    res = solve(f)
    c = combine(res, {"D": 1.2, "L": 1.6, "S": 0.5})  # no snow loads on this frame
    assert c.factors == {"D": 1.2, "L": 1.6}
    assert c.name == "1.2D+1.6L"
    partial = {"D": res["D"]}
    with pytest.raises(KeyError):  # L is in the frame but was not solved
        combine(partial, {"D": 1.2, "L": 1.6}, "x")


def test_combine_many_and_list_form():
    f, m = _beam()
    res = solve(f)
    combos = builtin_combinations("LRFD", list(res))
    out = combine(res, combos, family="LRFD")
    assert list(out) == [n for n, _ in combos]
    assert all(r.family == "LRFD" for r in out.values())
    assert combine_many(res, dict(combos)).keys() == out.keys()


def test_envelope_over_lrfd():
    L, wD, wL, wW = 6.0, 10e3, 6e3, -18e3
    f, m = _beam(L, wD, wL, wW)
    res = solve(f)
    combos = [combine(res, fac, name) for name, fac in builtin_combinations("LRFD", list(res))]
    env = envelope(combos)[m.id]
    # downward: 1.2D + 1.6L governs (ASCE 7-16 2.3.1 (2), the largest downward load)
    w_down = 1.2 * wD + 1.6 * wL
    assert env["m_max"] == pytest.approx(w_down * L**2 / 8, rel=1e-12)  # AISC case 1
    assert env["m_max_by"] == "1.2D+1.6L"
    assert env["m_max_at"] == pytest.approx(L / 2)  # AISC case 1: at center
    # uplift: 0.9D + 1.0W (2.3.1 (6)) reverses the moment
    w_up = 0.9 * wD + 1.0 * wW
    assert env["m_min"] == pytest.approx(w_up * L**2 / 8, rel=1e-12)  # AISC case 1, negative load
    assert env["m_min_by"] == "0.9D+W"
    assert env["deflection_max"] == pytest.approx(5 * w_down * L**4 / (384 * E * I), rel=1e-9)  # AISC case 1
    assert env["deflection_max_by"] == "1.2D+1.6L"
    reac = reaction_envelope(combos)
    assert reac[0]["fy_max"] == pytest.approx(w_down * L / 2, rel=1e-12)  # AISC case 1: R = wl/2
    assert reac[0]["fy_min"] == pytest.approx(w_up * L / 2, rel=1e-12)  # AISC case 1
    assert reac[0]["fy_min_by"] == "0.9D+W"


def test_envelope_without_sections():
    f, m = _beam()
    f.members[0].section = None
    res = solve(f, determinate=True)
    env = envelope([combine(res, {"D": 1.4}, "1.4D")])[m.id]
    assert env["deflection_max"] is None
    assert env["m_max"] == pytest.approx(1.4 * 10e3 * 36 / 8, rel=1e-12)  # AISC case 1 with 1.4D
    assert math.isclose(env["m_max_at"], 3.0)  # AISC case 1: at center
