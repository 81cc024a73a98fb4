"""Pattern live load (ASCE/SEI 7-16 section 4.3.3, partial loading).

Checks against the published moment coefficients of a continuous beam of
three equal spans under uniform load (the continuous-beam diagrams of the
AISC Steel Construction Manual, coefficients from memory): largest
positive moment in an end span 0.101 wL^2 with the two end spans loaded,
largest negative moment at the first interior support -0.117 wL^2 with
the two spans beside it loaded.  A hypothesis property test checks the
envelope against every one of the 2^n arrangements on a random 4-span
beam, each solved independently as its own frame.
"""
from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dxf2frame.solver import DistributedLoad, Frame, LoadError, NodalLoad, PointLoad, Section, solve
from dxf2frame.solver.patterns import pattern_envelope, pattern_parts
from solver_frames import two_bay_portal

SEC = Section(200e9, 5e-3, 8e-5)


def continuous_beam(spans, loads, split=False, sections=None):
    """A beam on a pin and rollers; ``loads`` per span: uniform w [N/m]
    (negative down) or None.  With ``split`` every span is drawn as two
    members meeting at mid-span."""
    f = Frame()
    x = np.concatenate([[0.0], np.cumsum(spans)])
    sup = [f.add_node(float(v), 0.0) for v in x]
    for i, (a, b) in enumerate(zip(sup[:-1], sup[1:])):
        sec = sections[i] if sections else SEC
        if split:
            mnode = f.add_node(float((x[i] + x[i + 1]) / 2), 0.0)
            pieces = [f.add_member(a, mnode, sec, id=f"S{i + 1}a"), f.add_member(mnode, b, sec, id=f"S{i + 1}b")]
        else:
            pieces = [f.add_member(a, b, sec, id=f"S{i + 1}")]
        if loads[i] is not None:
            for p in pieces:
                f.add_load(DistributedLoad(p.id, q1=(0.0, loads[i]), case="L"))
    f.add_support(sup[0], "pin")
    for n in sup[1:]:
        f.add_support(n, "roller")
    return f


def test_three_equal_spans_published_coefficients():
    L, w = 6.0, 10e3
    f = continuous_beam([L, L, L], [-w, -w, -w])
    env = pattern_envelope(f, "L")
    assert [p.name for p in env.parts] == ["S1", "S2", "S3"]
    ext = env.member_extremes("M")
    # continuous beam, three equal spans (AISC continuous-beam diagrams, from
    # memory): end span, spans 1 and 3 loaded: +0.101 wL^2
    assert ext["S1"]["max"] / (w * L**2) == pytest.approx(0.101, abs=5e-4)
    assert ext["S1"]["max_parts"] == ("S1", "S3")
    assert ext["S1"]["max_by"] == "L on S1, S3"
    assert ext["S1"]["max_at"] / L == pytest.approx(0.45, abs=1e-9)  # zero shear at R_A/w = 0.45L (statics)
    # first interior support, spans 1 and 2 loaded: -0.117 wL^2
    assert ext["S1"]["min"] / (w * L**2) == pytest.approx(-0.117, abs=5e-4)
    assert ext["S1"]["min_parts"] == ("S1", "S2")
    assert ext["S1"]["min_at"] == pytest.approx(L)
    # centre span, spans 2 alone: +0.075 wL^2 (same table, from memory)
    assert ext["S2"]["max"] / (w * L**2) == pytest.approx(0.075, abs=5e-4)
    assert ext["S2"]["max_parts"] == ("S2",)
    # all spans loaded (no pattern) gives only 0.080 wL^2 in the end span
    # (same table, from memory): the pattern governs
    full = solve(f)["L"]
    assert full.members["S1"].moment(0.4 * L) / (w * L**2) == pytest.approx(0.080, abs=5e-4)


def test_spans_drawn_as_several_members_are_one_part():
    L, w = 5.0, 8e3
    f = continuous_beam([L, L, L], [-w, -w, -w], split=True)
    parts = pattern_parts(f, "L")
    assert [p.name for p in parts] == ["S1a+S1b", "S2a+S2b", "S3a+S3b"]
    assert len(pattern_parts(f, "L", by="member")) == 6
    env = pattern_envelope(f, "L")
    ext = env.member_extremes("M")
    # first interior support, spans 1 and 2 loaded: -0.117 wL^2 (AISC
    # continuous-beam diagrams, from memory)
    assert ext["S1b"]["min"] / (w * L**2) == pytest.approx(-0.117, abs=5e-4)
    assert ext["S1b"]["min_by"] == "L on S1a+S1b, S2a+S2b"


def test_factor_and_base():
    L, w, d = 6.0, 10e3, 4e3
    f = continuous_beam([L, L, L], [-w, -w, -w])
    for m in ("S1", "S2", "S3"):
        f.add_load(DistributedLoad(m, q1=(0, -d), case="D"))
    cases = solve(f)
    base = cases["D"].scaled(1.2, name="1.2D")
    env = pattern_envelope(f, "L")
    ext = env.member_extremes("M", factor=1.6, base=base)
    # dead load on all spans: 0.080 dL^2 in the end span at 0.4L; the pattern
    # moment of the live part: 0.101 wL^2 at 0.45L (AISC continuous-beam
    # diagrams, from memory); the sum at 0.45L (dead: 0.4*0.45 - 0.45^2/2 =
    # 0.07875, statics of the end span with R_A = 0.4dL) bounds the peak
    lower = 1.2 * 0.07875 * d * L**2 + 1.6 * 0.10125 * w * L**2
    assert ext["S1"]["max"] >= lower * (1 - 1e-9)
    assert ext["S1"]["max"] <= (1.2 * 0.080 * d + 1.6 * 0.10125 * w) * L**2 * (1 + 1e-9)
    assert ext["S1"]["max_by"] == "L on S1, S3"
    # the first interior support: -0.100 dL^2 (all loaded) - 0.117 wL^2 (from memory)
    assert ext["S1"]["min"] / L**2 == pytest.approx(1.2 * -0.100 * d + 1.6 * -0.1167 * w, rel=1e-3)


def test_nodal_parts_and_errors():
    L = 4.0
    f = continuous_beam([L, L], [None, None], split=True)
    f.add_load(NodalLoad(3, fy=-5e3, case="L"))      # mid-span node of span 1
    f.add_load(NodalLoad(1, fy=-5e3, case="L"))      # on the interior support: its own part
    f.add_load(PointLoad("S2b", 1.0, py=-3e3, case="L"))
    parts = pattern_parts(f, "L")
    assert [p.name for p in parts] == ["S1a+S1b", "S2a+S2b", "node 1"]
    with pytest.raises(ValueError, match="no loads"):
        pattern_envelope(f, "Lr")
    with pytest.raises(ValueError):
        pattern_parts(f, "L", by="bay")
    f.add_load(PointLoad("nope", 1.0, py=-1.0, case="L", handle="3F"))
    with pytest.raises(LoadError) as e:
        pattern_parts(f, "L")
    assert e.value.handle == "3F"


@settings(max_examples=25)
@given(
    spans=st.lists(st.floats(2.0, 9.0), min_size=4, max_size=4),
    w=st.lists(st.floats(-30e3, 30e3).filter(lambda v: abs(v) > 100), min_size=4, max_size=4),
    I=st.lists(st.floats(2e-5, 4e-4), min_size=4, max_size=4),
)
def test_envelope_bounds_every_pattern(spans, w, I):
    sections = [Section(200e9, 5e-3, i) for i in I]
    f = continuous_beam(spans, w, sections=sections)
    env = pattern_envelope(f, "L")
    for which in ("M", "V"):
        st_env = env.station_envelope(which)
        rows, x = st_env["rows"], st_env["x"]
        seen_max = np.full(len(rows), -np.inf)
        seen_min = np.full(len(rows), np.inf)
        for mask in itertools.product((False, True), repeat=4):
            # every arrangement solved on its own, independently of the parts
            loads = [wi if on else None for wi, on in zip(w, mask)]
            g = continuous_beam(spans, loads, sections=sections)
            if any(mask):
                v = solve(g)["L"].members.sample(which, rows, x)
            else:
                v = np.zeros(len(rows))
            tol = 1e-9 * max(1.0, float(np.abs(v).max()))
            assert np.all(v <= st_env["max"] + tol)
            assert np.all(v >= st_env["min"] - tol)
            seen_max, seen_min = np.maximum(seen_max, v), np.minimum(seen_min, v)
        # superposition: the envelope is attained by one of the arrangements
        scale = max(1.0, float(np.abs(seen_max).max()), float(np.abs(seen_min).max()))
        np.testing.assert_allclose(st_env["max"], seen_max, rtol=0, atol=1e-9 * scale)
        np.testing.assert_allclose(st_env["min"], seen_min, rtol=0, atol=1e-9 * scale)


def test_in_combination():
    L, w, d = 6.0, 10e3, 4e3
    f = continuous_beam([L, L, L], [-w, -w, -w])
    for m in ("S1", "S2", "S3"):
        f.add_load(DistributedLoad(m, q1=(0, -d), case="D"))
    cases = solve(f)
    env = pattern_envelope(f, "L")
    base, factor = env.in_combination(cases, {"D": 1.2, "L": 1.6})
    assert factor == 1.6 and base.name == "1.2D"
    ext = env.member_extremes("M", factor=factor, base=base)
    # first interior support, dead on all spans -0.100 dL^2, live on spans 1
    # and 2 -0.117 wL^2 (continuous-beam coefficients, from memory; the
    # exact -7/60 here)
    assert ext["S1"]["min"] / L**2 == pytest.approx(1.2 * -0.100 * d + 1.6 * -7 / 60 * w, rel=1e-9)
    assert ext["S1"]["min_by"] == "L on S1, S2"
    b14, f0 = env.in_combination(cases, {"D": 1.4})
    assert f0 == 0.0 and b14.name == "1.4D"
    none_base, f16 = env.in_combination(cases, {"L": 1.6})
    assert none_base is None and f16 == 1.6


def test_two_bay_frame_parts_are_the_beams():
    # two bays, fixed bases; live load on both beams.  Every arrangement is
    # solved on its own (superposition check, independent of the parts).
    def frame(on1, on2):
        f = two_bay_portal(SEC)
        if on1:
            f.add_load(DistributedLoad("B1", q1=(0, -12e3), case="L"))
        if on2:
            f.add_load(DistributedLoad("B2", q1=(0, -12e3), case="L"))
        return f

    env = pattern_envelope(frame(True, True), "L")
    assert [p.name for p in env.parts] == ["B1", "B2"]
    ext = env.member_extremes("M")
    for mid in ("C1", "C2", "B1", "B2"):
        tops = [solve(frame(a, b))["L"].members[mid].extremes() for a, b in ((1, 0), (0, 1), (1, 1))]
        assert ext[mid]["max"] == pytest.approx(max(0.0, *(t["m_max"] for t in tops)), rel=1e-9, abs=1e-6)
        assert ext[mid]["min"] == pytest.approx(min(0.0, *(t["m_min"] for t in tops)), rel=1e-9, abs=1e-6)
    # the middle column bends most with one bay loaded
    assert ext["C2"]["max_parts"] in (("B1",), ("B2",))
