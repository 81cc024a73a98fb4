"""Crossing member lines, as drafters draw them (convention v2).

A multi-storey frame is drawn twice: once the way drafters usually draw it,
each column line full height and each floor line full width (the interior
joints are crossings), and once with every member drawn joint to joint.
The two drawings describe the same frame, so they must give the same
reactions and member end moments.  The independent check is statics: the
sum of the vertical reactions equals the total applied load (equilibrium
of the whole frame, a free body of the structure).  Crossing braces on
FRAME-BRACES and crossings under a CROSSOVER block stay separate.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings as hsettings, strategies as st

from dxf_builders import add_crossover, add_joint, add_load, add_member, add_support, new_drawing
from dxf2frame.read.cleanup import Segment, SupportSpec, UdlSpec, build_frame
from dxf2frame.cli import main
from dxf2frame.pipeline import analyse
from dxf2frame.read import read_drawing
from dxf2frame.settings import Settings
from dxf2frame.solver import Section, solve

SECTIONS = Settings.from_dict({"sections": {"default": {"E": "200 GPa", "A": "8000 mm**2", "I": "1.2e8 mm**4"}}})


def _frame_drawing(path: Path, xs, ys, w_kn_m: float, *, full: bool) -> Path:
    """Columns at ``xs`` from y=0 to max(ys); floors at ``ys`` (> 0) from
    min(xs) to max(xs); fixed bases; a UDL of ``w`` on every floor bay."""
    doc = new_drawing("m")
    msp = doc.modelspace()
    levels = [0.0, *ys]
    if full:
        for x in xs:
            add_member(msp, (x, 0), (x, ys[-1]))
        for y in ys:
            add_member(msp, (xs[0], y), (xs[-1], y))
    else:
        for x in xs:
            for y0, y1 in zip(levels[:-1], levels[1:]):
                add_member(msp, (x, y0), (x, y1))
        for y in ys:
            for x0, x1 in zip(xs[:-1], xs[1:]):
                add_member(msp, (x0, y), (x1, y))
    for x in xs:
        add_support(msp, "fixed", (x, 0))
    for y in ys:
        for x0, x1 in zip(xs[:-1], xs[1:]):
            # a UDL loads the stretch of the drawn line between joints under it
            add_load(msp, "udl", ((x0 + x1) / 2, y), W=f"{w_kn_m} kN/m", CASE="D")
    doc.saveas(path)
    return path


def _end_moments(analysis) -> dict[tuple, tuple[float, float]]:
    """{rounded (x0, y0, x1, y1) of each analysis member: (M start, M end) [N*m]}."""
    frame = analysis.model.frame
    res = analysis.cases[0]
    out = {}
    for m in frame.members:
        a, b = frame.nodes[m.start], frame.nodes[m.end]
        key = tuple(round(v, 6) for v in (a.x, a.y, b.x, b.y))
        f = np.asarray(res.members[m.id].end_forces, dtype=float)
        out[key] = (float(f[2]), float(f[5]))
    return out


def test_full_height_columns_and_full_width_floors_are_joined(tmp_path):
    xs, ys, w = (0.0, 6.0, 12.0, 18.0), (3.5, 7.0, 10.5, 14.0), 20.0
    full = analyse(_frame_drawing(tmp_path / "full.dxf", xs, ys, w, full=True), SECTIONS)
    split = analyse(_frame_drawing(tmp_path / "split.dxf", xs, ys, w, full=False), SECTIONS)
    # 4 column lines x 5 levels = 20 joints, as a drafter means it
    assert len(full.model.frame.nodes) == len(xs) * (len(ys) + 1) == 20
    assert full.model.crossings_joined == (len(xs) - 2) * (len(ys) - 1)   # interior crossings
    assert len(full.model.frame.members) == len(split.model.frame.members)

    # statics: the vertical reactions carry the whole load (free body of the frame)
    total = w * 1e3 * (xs[-1] - xs[0]) * len(ys)
    for a in (full, split):
        ry = sum(r.fy for r in a.cases[0].reactions)
        assert math.isclose(ry, total, rel_tol=1e-9)

    # the same frame: the same reactions and end moments
    for ra, rb in zip(full.cases[0].reactions, split.cases[0].reactions):
        assert np.allclose((ra.fx, ra.fy, ra.m), (rb.fx, rb.fy, rb.m), rtol=1e-9, atol=1e-6 * total)
    mf, ms = _end_moments(full), _end_moments(split)
    assert mf.keys() == ms.keys()
    for k in mf:
        assert np.allclose(mf[k], ms[k], rtol=1e-8, atol=1e-9 * total)


def test_check_reports_joined_and_separate_crossings(tmp_path, capsys):
    """An X-braced bay: the braces (FRAME-BRACES) cross each other and stay
    separate; a beam drawn across a column line under a CROSSOVER stays
    separate; a post crossing the beam is joined."""
    doc = new_drawing("m")
    msp = doc.modelspace()
    doc.layers.add("FRAME-BRACES")
    add_member(msp, (0, 0), (0, 4))
    add_member(msp, (6, 0), (6, 4))
    add_member(msp, (-1, 4), (7, 4))                       # column tops land inside it: T-junctions
    b1 = add_member(msp, (0, 0), (6, 4), layer="FRAME-BRACES")
    b2 = add_member(msp, (0, 4), (6, 0), layer="FRAME-BRACES")
    add_member(msp, (3, 3), (3, 6))                         # a post through the beam: joined
    add_member(msp, (-2, 2), (1, 2))                        # passes column 0 under a CROSSOVER
    add_crossover(msp, (0, 2))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "pin", (6, 0))
    add_support(msp, "fixed", (-2, 2))
    path = tmp_path / "braced.dxf"
    doc.saveas(path)
    model = read_drawing(path)
    # joined: column 0 and column 6 with the beam (their tops are inside the
    # beam's span: T-junctions, not crossings); the post with the beam
    assert model.crossings_joined == 1
    texts = model.crossings_separate
    assert len(texts) == 2
    braces = next(t for t in texts if "unjoined layers" in t)
    assert f"#{b1.dxf.handle}" in braces and f"#{b2.dxf.handle}" in braces and "(3, 2)" in braces
    assert any("CROSSOVER" in t and "(0, 2)" in t for t in texts)

    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "crossings    1 joined, 2 left separate" in out


def test_joint_on_crossing_braces_joins_them_and_settings_unjoin_other_layers(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6, 4), layer="FRAME-BRACES")
    add_member(msp, (0, 4), (6, 0), layer="FRAME-BRACES")
    add_joint(msp, (3, 2))
    for p in ((0, 0), (6, 4), (0, 4), (6, 0)):
        add_support(msp, "pin", p)
    path = tmp_path / "x.dxf"
    doc.saveas(path)
    assert len(read_drawing(path).frame.members) == 4        # JOINT keeps its meaning
    # an office that keeps its bracing on FRAME-X says so in the settings
    doc2 = new_drawing("m")
    msp2 = doc2.modelspace()
    add_member(msp2, (0, 0), (6, 4), layer="FRAME-X")
    add_member(msp2, (0, 4), (6, 0), layer="FRAME-X")
    for p in ((0, 0), (6, 4), (0, 4), (6, 0)):
        add_support(msp2, "pin", p)
    path2 = tmp_path / "x2.dxf"
    doc2.saveas(path2)
    assert len(read_drawing(path2).frame.members) == 4        # joined by default
    s = Settings.from_dict({"geometry": {"unjoined_layers": ["frame-x"]}})
    m2 = read_drawing(path2, s)
    assert len(m2.frame.members) == 2 and len(m2.crossings_separate) == 1


def _solve_segments(segs, supports, loads):
    res = build_frame(segs, supports, (), loads, tol=1e-4,
                      section_for=lambda layer: Section(E=200e9, A=5e-3, I=8e-5))
    out = solve(res.frame)["D"]
    frame = res.frame
    moments = {}
    for m in frame.members:
        a, b = frame.nodes[m.start], frame.nodes[m.end]
        f = np.asarray(out.members[m.id].end_forces, dtype=float)
        moments[tuple(round(v, 6) for v in (a.x, a.y, b.x, b.y))] = (f[2], f[5])
    return [(r.fx, r.fy, r.m) for r in out.reactions], moments


@hsettings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    bays=st.lists(st.integers(3, 9), min_size=1, max_size=3),
    storeys=st.lists(st.integers(3, 5), min_size=1, max_size=3),
    loads=st.lists(st.tuples(st.integers(0, 8), st.integers(0, 8), st.floats(1.0, 50.0)), min_size=1, max_size=4),
    base=st.sampled_from(["fixed", "pin"]),
)
def test_crossing_lines_and_split_lines_give_identical_results(bays, storeys, loads, base):
    """Hypothesis: the same frame drawn with crossing full lines or with
    split lines gives the same reactions and end moments (superposition of
    the same model: nothing but the drawing differs)."""
    xs = np.concatenate([[0.0], np.cumsum(bays)]).astype(float)
    ys = np.cumsum(storeys).astype(float)
    levels = np.concatenate([[0.0], ys])
    full = [Segment((x, 0.0), (x, ys[-1]), f"C{i}", "FRAME-COLUMNS") for i, x in enumerate(xs)]
    full += [Segment((xs[0], y), (xs[-1], y), f"F{j}", "FRAME-BEAMS") for j, y in enumerate(ys)]
    split = [Segment((x, y0), (x, y1), f"C{i}_{k}", "FRAME-COLUMNS")
             for i, x in enumerate(xs) for k, (y0, y1) in enumerate(zip(levels[:-1], levels[1:]))]
    split += [Segment((x0, y), (x1, y), f"F{j}_{k}", "FRAME-BEAMS")
              for j, y in enumerate(ys) for k, (x0, x1) in enumerate(zip(xs[:-1], xs[1:]))]
    supports = [SupportSpec((x, 0.0), base, handle=f"S{i}") for i, x in enumerate(xs)]
    # UDLs on bays, by the point in the middle of a bay: it loads the stretch
    # between joints under it, however the line was drawn
    udl_full, udl_split = [], []
    for bi, fj, w in loads:
        b, j = bi % len(bays), fj % len(ys)
        x0, x1, y = xs[b], xs[b + 1], ys[j]
        mid = ((x0 + x1) / 2, y)
        udl_full.append(UdlSpec(mid, w * 1e3, w * 1e3, handle="U"))
        udl_split.append(UdlSpec(mid, w * 1e3, w * 1e3, handle="U"))
    rf, mf = _solve_segments(full, supports, udl_full)
    rs, ms = _solve_segments(split, supports, udl_split)
    total = sum(w for *_, w in loads) * 1e3 * max(bays)
    assert np.allclose(rf, rs, rtol=1e-8, atol=1e-7 * total)
    # statics: sum of vertical reactions = total load
    applied = sum(w * 1e3 * (xs[bi % len(bays) + 1] - xs[bi % len(bays)]) for bi, _, w in loads)
    assert math.isclose(sum(r[1] for r in rf), applied, rel_tol=1e-9)
    assert mf.keys() == ms.keys()
    for k in mf:
        assert np.allclose(mf[k], ms[k], rtol=1e-7, atol=1e-7 * total)


@hsettings(max_examples=5, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(
    bays=st.lists(st.integers(3, 9), min_size=2, max_size=3),
    storeys=st.lists(st.integers(3, 5), min_size=2, max_size=3),
    w=st.floats(1.0, 40.0),
)
def test_drawings_with_crossing_or_split_lines_give_identical_results(tmp_path_factory, bays, storeys, w):
    """Hypothesis, through the DXF reader: the same frame drawn both ways
    gives the same reactions and end moments; statics checks the total."""
    folder = tmp_path_factory.mktemp("grid")
    xs = tuple(float(v) for v in np.concatenate([[0.0], np.cumsum(bays)]))
    ys = tuple(float(v) for v in np.cumsum(storeys))
    full = analyse(_frame_drawing(folder / "full.dxf", xs, ys, w, full=True), SECTIONS)
    split = analyse(_frame_drawing(folder / "split.dxf", xs, ys, w, full=False), SECTIONS)
    total = w * 1e3 * (xs[-1] - xs[0]) * len(ys)
    assert math.isclose(sum(r.fy for r in full.cases[0].reactions), total, rel_tol=1e-9)   # statics
    for ra, rb in zip(full.cases[0].reactions, split.cases[0].reactions):
        assert np.allclose((ra.fx, ra.fy, ra.m), (rb.fx, rb.fy, rb.m), rtol=1e-8, atol=1e-8 * total)
    mf, ms = _end_moments(full), _end_moments(split)
    assert mf.keys() == ms.keys()
    for k in mf:
        assert np.allclose(mf[k], ms[k], rtol=1e-7, atol=1e-8 * total)
