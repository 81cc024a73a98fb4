"""Load combinations: parsing, naming and the built-in ASCE/SEI 7 sets.

The expected combinations are the basic combinations of ASCE/SEI 7-16,
section 2.3.1 (strength design, LRFD) and section 2.4.1 (allowable stress
design, ASD), as recalled from memory (not read from the standard's text).
"""
from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from solver.combinations import (
    builtin_combinations,
    expand_template,
    format_combination,
    parse_combination,
)

ALL_CASES = ["D", "L", "Lr", "S", "R", "W", "E"]


def _set(combos):
    return {tuple(sorted(f.items())) for _, f in combos}


def _c(**kw):
    return tuple(sorted(kw.items()))


# ---------------------------------------------------------------- parsing
def test_parse_plain_sum():
    assert parse_combination("1.2D + 1.6L + 0.5S") == {"D": 1.2, "L": 1.6, "S": 0.5}
    assert parse_combination("0.9D+1.0W") == {"D": 0.9, "W": 1.0}


def test_parse_case_names_are_case_sensitive():
    # L (live) and Lr (roof live) are different load cases in ASCE/SEI 7 notation
    assert parse_combination("1.2D + 1.6Lr + L") == {"D": 1.2, "Lr": 1.6, "L": 1.0}


def test_parse_star_sign_repeat_and_underscore_names():
    assert parse_combination("1.2*D - 0.5 W") == {"D": 1.2, "W": -0.5}
    assert parse_combination("D + D") == {"D": 2.0}
    assert parse_combination("1.5 crane_1 + wind2") == {"crane_1": 1.5, "wind2": 1.0}


def test_parse_bracketed_sum():
    # D + 0.75(L + 0.6W): factors distribute, 0.75 * 0.6 = 0.45
    assert parse_combination("D + 0.75(L + 0.6W)") == {"D": 1.0, "L": 0.75, "W": 0.45}


@pytest.mark.parametrize("bad", ["", "1.2", "1.2D +", "D ++ L", "(D", "D*1.2", "1.2D + 0.5(Lr|S)", "D; L"])
def test_parse_rejects_malformed(bad):
    with pytest.raises(ValueError):
        parse_combination(bad)


# ---------------------------------------------------------------- naming
def test_format_examples():
    assert format_combination({"D": 1.2, "L": 1.6, "S": 0.5}) == "1.2D+1.6L+0.5S"
    assert format_combination({"D": 1.0, "L": 1.0}) == "D+L"
    assert format_combination({"D": 0.9, "W": -1.0}) == "0.9D-W"
    assert format_combination({"D": 0.0}) == "0"


names = st.from_regex(r"[A-Za-z_][A-Za-z0-9_]{0,4}", fullmatch=True)
factors = st.decimals(min_value=-99, max_value=99, places=3).map(float).filter(lambda v: v != 0)


@settings(max_examples=60, deadline=None)
@given(st.dictionaries(names, factors, min_size=1, max_size=5))
def test_format_then_parse_round_trip(combo):
    assert parse_combination(format_combination(combo)) == pytest.approx(combo, rel=1e-12)


# ---------------------------------------------------------------- templates
def test_expand_alternatives():
    # "0.5(Lr or S or R)" stands for three combinations
    got = expand_template("1.2D + 1.6L + 0.5(Lr|S|R)", ALL_CASES)
    assert got == [{"D": 1.2, "L": 1.6, "Lr": 0.5}, {"D": 1.2, "L": 1.6, "S": 0.5}, {"D": 1.2, "L": 1.6, "R": 0.5}]


def test_lrfd_full_set():
    # ASCE/SEI 7-16 2.3.1 basic combinations 1-7 (from memory), alternatives expanded
    expected = {
        _c(D=1.4),
        _c(D=1.2, L=1.6, Lr=0.5), _c(D=1.2, L=1.6, S=0.5), _c(D=1.2, L=1.6, R=0.5),
        _c(D=1.2, Lr=1.6, L=1.0), _c(D=1.2, Lr=1.6, W=0.5),
        _c(D=1.2, S=1.6, L=1.0), _c(D=1.2, S=1.6, W=0.5),
        _c(D=1.2, R=1.6, L=1.0), _c(D=1.2, R=1.6, W=0.5),
        _c(D=1.2, W=1.0, L=1.0, Lr=0.5), _c(D=1.2, W=1.0, L=1.0, S=0.5), _c(D=1.2, W=1.0, L=1.0, R=0.5),
        _c(D=1.2, E=1.0, L=1.0, S=0.2),
        _c(D=0.9, W=1.0),
        _c(D=0.9, E=1.0),
    }
    got = builtin_combinations("LRFD", ALL_CASES)
    assert len(got) == 16
    assert _set(got) == expected
    assert got[0] == ("1.4D", {"D": 1.4})


def test_asd_full_set():
    # ASCE/SEI 7-16 2.4.1 basic combinations 1-8 (from memory): 0.75*0.6W = 0.45W, 0.75*0.7E = 0.525E
    expected = {
        _c(D=1.0),
        _c(D=1.0, L=1.0),
        _c(D=1.0, Lr=1.0), _c(D=1.0, S=1.0), _c(D=1.0, R=1.0),
        _c(D=1.0, L=0.75, Lr=0.75), _c(D=1.0, L=0.75, S=0.75), _c(D=1.0, L=0.75, R=0.75),
        _c(D=1.0, W=0.6), _c(D=1.0, E=0.7),
        _c(D=1.0, L=0.75, W=0.45, Lr=0.75), _c(D=1.0, L=0.75, W=0.45, S=0.75), _c(D=1.0, L=0.75, W=0.45, R=0.75),
        _c(D=1.0, L=0.75, E=0.525, S=0.75),
        _c(D=0.6, W=0.6),
        _c(D=0.6, E=0.7),
    }
    got = builtin_combinations("asd", ALL_CASES)
    assert len(got) == 16
    assert _set(got) == expected


def test_absent_cases_are_dropped_with_duplicates():
    # a frame with dead and live load only: ASCE/SEI 7-16 2.3.1 gives 1.4D, 1.2D+1.6L,
    # and 1.2D+L (from combinations 3-5 without Lr/S/R/W/E); from memory
    assert builtin_combinations("LRFD", ["D", "L"]) == [
        ("1.4D", {"D": 1.4}), ("1.2D+1.6L", {"D": 1.2, "L": 1.6}), ("1.2D+L", {"D": 1.2, "L": 1.0})
    ]
    # 2.4.1 for D and L: D, D+L, D+0.75L (from memory)
    assert builtin_combinations("ASD", ["D", "L"]) == [
        ("D", {"D": 1.0}), ("D+L", {"D": 1.0, "L": 1.0}), ("D+0.75L", {"D": 1.0, "L": 0.75})
    ]


def test_dead_only_kept_only_where_the_template_is_dead_only():
    # 2.3.1 with dead load alone: only 1.4D governs; 1.2D and 0.9D variants are dropped
    assert builtin_combinations("LRFD", ["D"]) == [("1.4D", {"D": 1.4})]
    assert builtin_combinations("ASD", ["D"]) == [("D", {"D": 1.0})]


def test_wind_only_frame():
    # D and W present: 1.4D; 1.2D+0.5W (comb. 3); 1.2D+1.0W (comb. 4); 0.9D+1.0W (comb. 6) -- from memory
    assert _set(builtin_combinations("LRFD", ["D", "W"])) == {
        _c(D=1.4), _c(D=1.2, W=0.5), _c(D=1.2, W=1.0), _c(D=0.9, W=1.0)
    }


def test_no_dead_load_case():
    # combinations keep the cases that exist even without D
    got = builtin_combinations("LRFD", ["L"])
    assert _set(got) == {_c(L=1.6), _c(L=1.0)}


def test_user_templates_replace_builtin():
    got = builtin_combinations("mine", ["D", "L", "S"], templates=["1.3D + 1.5(L|S)"])
    assert got == [("1.3D+1.5L", {"D": 1.3, "L": 1.5}), ("1.3D+1.5S", {"D": 1.3, "S": 1.5})]


def test_unknown_set_is_an_error():
    with pytest.raises(ValueError):
        builtin_combinations("EUROCODE", ALL_CASES)


# ---------------------------------------------------------------- superposition of solved cases
def _simple_beam(L, loads):
    from solver import DistributedLoad, Frame, Section

    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(L, 0.0)
    m = f.add_member(a, b, Section(E=200e9, A=5e-3, I=8e-5))
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    for case, w in loads.items():
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w), case=case))
    return f, m


def test_combine_and_envelope_of_a_simple_beam():
    from solver import combine, envelope, solve

    L, wD, wL = 6.0, 4e3, 7e3
    f, m = _simple_beam(L, {"D": wD, "L": wL})
    cases = solve(f)
    combos = [combine(cases, fac, name, family="LRFD") for name, fac in builtin_combinations("LRFD", list(cases))]
    names = [c.name for c in combos]
    assert names == ["1.4D", "1.2D+1.6L", "1.2D+L"]
    # AISC Table 3-23, simple beam - uniform load: Mmax = wL^2/8 at midspan (from memory),
    # with w the factored load of each combination
    for c, w in zip(combos, (1.4 * wD, 1.2 * wD + 1.6 * wL, 1.2 * wD + wL)):
        assert c.kind == "combination" and c.family == "LRFD"
        assert c.members[m.id].moment(L / 2) == pytest.approx(w * L**2 / 8, rel=1e-12)
        assert sum(r.fy for r in c.reactions) == pytest.approx(w * L, rel=1e-12)   # statics
    env = envelope(combos)[m.id]
    assert env["m_max"] == pytest.approx((1.2 * wD + 1.6 * wL) * L**2 / 8, rel=1e-12)
    assert env["m_max_at"] == pytest.approx(L / 2, rel=1e-9)
    assert env["m_max_by"] == "1.2D+1.6L"
    # same table: deflection 5wL^4/(384EI) at midspan, governed by the heaviest load
    EI = 200e9 * 8e-5
    assert env["deflection_max"] == pytest.approx(5 * (1.2 * wD + 1.6 * wL) * L**4 / (384 * EI), rel=1e-9)
    assert env["deflection_max_by"] == "1.2D+1.6L"


def test_combine_skips_cases_the_frame_does_not_have():
    from solver import combine, solve

    L, wD = 5.0, 3e3
    f, m = _simple_beam(L, {"D": wD, "S": 1e3})
    cases = solve(f)
    # W is not in the frame at all: contributes nothing (statics: R = 1.2 wD L / 2)
    c = combine(cases, parse_combination("1.2D + 1.0W"), "1.2D+1.0W")
    assert c.factors == {"D": 1.2}
    assert c.reactions[0].fy == pytest.approx(1.2 * wD * L / 2, rel=1e-12)
    # S is in the frame but was not solved: an error, not a silent omission
    only_d = {"D": cases["D"]}
    with pytest.raises(KeyError):
        combine(only_d, {"D": 1.2, "S": 0.5}, "1.2D+0.5S")
