"""Hand-check sheets: free bodies against closed-form values and the solver.

Every closed-form value names its source beside it.  Comparisons of the
sheet with the solver at the same point are consistency checks between two
independent routes (member end forces + member loads inside the solver,
statics of a whole isolated part on the sheet), never snapshot values.
"""
from __future__ import annotations

import math
import re
from argparse import Namespace
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from dxf2frame.solver import DistributedLoad, Frame, MemberCouple, NodalLoad, PointLoad, Section, solve

from dxf2frame import CAUTION
from dxf2frame.handcheck import (
    SheetHeader,
    cut_free_body,
    sheet_markdown,
    sheet_text,
    write_cut_sheets,
)
from dxf2frame.report import unit_factors

SEC = Section(E=200e9, A=5e-3, I=8e-5)


# -- helpers -----------------------------------------------------------------------

_EQ = re.compile(r"=>\s+([NVM]) = ([+-])\[(.*)\] = (\S+) ")


def evaluate_printed(fb, units=None) -> dict[str, tuple[float, float, float]]:
    """Redo each printed equation as a checker would: add the printed terms.

    Returns {"N"|"V"|"M": (sum of printed terms with the printed sign,
    printed result, largest printed term)}.
    """
    out = {}
    for line in fb.equations(units):
        mt = _EQ.search(line)
        assert mt, line
        name, sign, inner, printed = mt.groups()
        terms = [float(t) for t in re.findall(r"\(([-+0-9.e]+)\)", inner)] if inner != "0" else []
        total = math.fsum(terms) * (1.0 if sign == "+" else -1.0)
        out[name] = (total, float(printed), max([abs(t) for t in terms] + [0.0]))
    return out


def assert_sheet_matches_solver(fb, rel=1e-9, res=None):
    """The sheet's exact sums equal the solver's values at the same point, and
    the printed equations, evaluated term by term, give the printed results.

    ``res``: the result solved, whose largest reaction sets the round-off
    level of the whole solution (a cut with no force on its free body)."""
    whole = max([abs(v) for r in res.reactions for v in (r.fx, r.fy, r.m)] + [0.0]) if res else 0.0
    for key in ("n", "v", "m"):
        ref = getattr(fb, f"solver_{key}")
        scale = max([abs(getattr(t, key)) for t in fb.terms] + [abs(ref), whole, 1.0])
        assert getattr(fb, key) == pytest.approx(ref, rel=rel, abs=rel * scale), key
    for name, (total, printed, big) in evaluate_printed(fb).items():
        ref = getattr(fb, f"solver_{name.lower()}")
        # four significant figures per printed term
        tol = 1e-3 * max(big, abs(ref)) + 1e-9 * max(whole, 1.0)
        assert total == pytest.approx(printed, abs=tol * len(fb.terms) + 1e-9)
        assert printed == pytest.approx(ref, abs=tol)


def simple_beam(L: float, *, fixed_left: bool = False, right: str | None = "roller"):
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(L, 0.0)
    m = f.add_member(a, b, SEC)
    f.add_support(a, "fixed" if fixed_left else "pin")
    if right:
        f.add_support(b, right)
    return f, m


# -- closed-form checks --------------------------------------------------------------


def test_cantilever_end_load():
    # Cantilever fixed at the left end (x = 0), free at x = L, force P down at
    # the free end.  AISC Steel Construction Manual, Table 3-23 (beam diagrams
    # and formulas), "Cantilever beam - concentrated load at free end":
    # V = P everywhere, M = P*x at distance x from the free end (magnitudes).
    # Signs by our convention: the part right of the cut carries P downward,
    # so the cut face of that part (its left face) must push up: up on the
    # left face = positive shear, V = +P.  The beam is bent concave down
    # (tension on top): hogging, M = -P*x.
    P, L = 12e3, 5.0
    f, m = simple_beam(L, fixed_left=True, right=None)
    f.add_load(PointLoad(m.id, L, py=-P))
    res = solve(f)["D"]
    for from_free_end in (0.5, 2.0, 4.5):
        fb = cut_free_body(f, res, m.id, L - from_free_end)
        assert fb.side == "end" and fb.method == "statics"   # no support on the free side
        assert fb.v == pytest.approx(P, rel=1e-12)                   # AISC cantilever: V = P
        assert fb.m == pytest.approx(-P * from_free_end, rel=1e-12)  # AISC cantilever: M = P x, hogging
        assert fb.n == pytest.approx(0.0, abs=1e-9)                  # statics: no axial load
        assert [t.kind for t in fb.terms] == ["point load"]
        assert fb.meaning("m").startswith("hogging")
        assert_sheet_matches_solver(fb)


def _overhang(l: float, a: float, P: float):
    f = Frame()
    n0, n1, n2 = f.add_node(0.0, 0.0), f.add_node(l, 0.0), f.add_node(l + a, 0.0)
    span = f.add_member(n0, n1, SEC, id="AB")
    over = f.add_member(n1, n2, SEC, id="BC")
    f.add_support(n0, "pin")
    f.add_support(n1, "roller")
    f.add_load(PointLoad(over.id, a, py=-P))
    return f, span, over


def test_overhanging_beam_load_at_end_of_overhang():
    # AISC Steel Construction Manual, Table 3-23, "Beam overhanging one
    # support - concentrated load at end of overhang": R1 = P a / l (acting
    # downward at the far support), R2 = P (l + a) / l, M_max = P a at R2,
    # between the supports M = P a x / l (x from R1), in the overhang
    # M = P x1 (x1 from the load).  All moments hog the beam.
    l, a, P = 6.0, 2.0, 9e3
    f, span, over = _overhang(l, a, P)
    res = solve(f)["D"]

    # inside the overhang, 0.5 from the load: free side, no support
    fb = cut_free_body(f, res, over.id, a - 0.5)
    assert fb.side == "end" and fb.method == "statics"
    assert fb.m == pytest.approx(-P * 0.5, rel=1e-12)              # AISC: M = P x1, hogging
    assert fb.v == pytest.approx(P, rel=1e-12)                     # AISC: V = P in the overhang
    assert_sheet_matches_solver(fb)

    # between the supports at x = l/3: the side toward R1 has one reaction
    fb = cut_free_body(f, res, span.id, l / 3)
    assert fb.side == "start" and fb.method == "reactions"
    (r1,) = [t for t in fb.terms if t.kind == "reaction"]
    assert r1.fy == pytest.approx(-P * a / l, rel=1e-9)            # AISC: R1 = P a / l, downward
    assert fb.m == pytest.approx(-P * a * (l / 3) / l, rel=1e-9)   # AISC: M = P a x / l, hogging
    assert fb.v == pytest.approx(-P * a / l, rel=1e-9)             # AISC: V = R1 between supports
    assert_sheet_matches_solver(fb)

    # at the support R2 (end of the span member): the maximum moment
    fb = cut_free_body(f, res, span.id, l)
    assert fb.m == pytest.approx(-P * a, rel=1e-9)                 # AISC: M_max = P a at R2
    assert fb.meaning("m").startswith("hogging")
    assert_sheet_matches_solver(fb)


def test_inclined_point_load_split_into_components():
    # Simple span, pin at the left, roller at the right, a force P at midspan
    # acting 30 degrees below the horizontal, pointing right.  Statics (from
    # memory): components P cos30 along the beam and P sin30 across it; the
    # pin alone takes the horizontal component, so the beam carries
    # N = P cos30 (tension) between the pin and the load and N = 0 beyond;
    # the vertical reactions are P sin30 / 2 each (AISC Table 3-23, "Simple
    # beam - concentrated load at center", R = P/2, for the vertical part).
    P, L = 20e3, 8.0
    f, m = simple_beam(L)
    ang = math.radians(-30.0)
    f.add_load(PointLoad(m.id, L / 2, px=P * math.cos(ang), py=P * math.sin(ang), handle="2F"))
    res = solve(f)["D"]

    fb = cut_free_body(f, res, m.id, L / 4)
    loads = [t for t in fb.terms if t.kind == "point load"]
    if loads:  # the chosen side holds the load: its components are on the sheet
        (p,) = loads
        assert p.fx == pytest.approx(P * math.cos(math.radians(30)), rel=1e-12)   # P cos30
        assert p.fy == pytest.approx(-P * math.sin(math.radians(30)), rel=1e-12)  # P sin30, down
        assert p.along == pytest.approx(P * math.cos(math.radians(30)), rel=1e-12)
        assert p.across == pytest.approx(-P * math.sin(math.radians(30)), rel=1e-12)
        assert p.handle == "2F"
    assert fb.n == pytest.approx(P * math.cos(math.radians(30)), rel=1e-9)        # statics: tension
    assert fb.meaning("n") == "tension"
    assert fb.v == pytest.approx(P * math.sin(math.radians(30)) / 2, rel=1e-9)    # AISC: R = P/2
    assert fb.m == pytest.approx(P * math.sin(math.radians(30)) / 2 * L / 4, rel=1e-9)  # R x
    assert_sheet_matches_solver(fb)

    # the start side (pin) shows the horizontal reaction equal to the axial force
    fb = cut_free_body(f, res, m.id, L / 4, side="start")
    (pin,) = [t for t in fb.terms if t.kind == "reaction"]
    assert -pin.fx == pytest.approx(P * math.cos(math.radians(30)), rel=1e-9)  # statics: Ax = -P cos30
    assert fb.n == pytest.approx(-pin.fx, rel=1e-12)
    assert_sheet_matches_solver(fb)

    # the sheet states the components of the load (printed to 4 figures)
    fb = cut_free_body(f, res, m.id, 3 * L / 4, side="start")
    md = sheet_markdown(fb, SheetHeader(title="inclined load"), unit_factors("kN", "m"))
    assert "components Fx = 17.32, Fy = -10.00" in md   # 20 cos30 = 17.32, 20 sin30 = 10 (kN)
    assert fb.n == pytest.approx(0.0, abs=1e-6)          # statics: beyond the load N = 0
    assert_sheet_matches_solver(fb)


def test_cut_inside_uniform_load_midspan():
    # AISC Steel Construction Manual, Table 3-23, case 1 "Simple beam -
    # uniformly distributed load": R = wL/2, M_max = wL^2/8 at the centre,
    # V = 0 there.  The left half carries a resultant wL/2 at L/4 from the cut.
    w, L = 10e3, 6.0
    f, m = simple_beam(L)
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    res = solve(f)["D"]
    fb = cut_free_body(f, res, m.id, L / 2)
    assert fb.side == "start"
    (wt,) = [t for t in fb.terms if t.kind == "distributed"]
    assert wt.distributed.resultant == pytest.approx(w * L / 2, rel=1e-12)     # w L/2 on the half
    assert wt.distributed.centroid_from_cut == pytest.approx(L / 4, rel=1e-12)  # centroid at L/4
    assert wt.fy == pytest.approx(-w * L / 2, rel=1e-12)
    assert fb.m == pytest.approx(w * L**2 / 8, rel=1e-9)                        # AISC case 1: wL^2/8
    assert fb.v == pytest.approx(0.0, abs=1e-6)                                 # AISC case 1: V = 0
    assert fb.meaning("m").startswith("sagging")
    assert_sheet_matches_solver(fb)
    md = sheet_markdown(fb, SheetHeader(title="udl"), unit_factors("kN", "m"))
    # resultant and centroid on the sheet: 10 kN/m * 3 m = 30 kN at 1.5 m from the cut
    assert "resultant w × 3.000 m = 30.00 kN" in md
    assert "1.500 m from the cut" in md
    assert "M = +[" in md or "M = -[" in md
    assert "| M | 45.00 kN*m | sagging" in md      # wL^2/8 = 10*36/8 = 45 kN*m


def test_cut_inside_partial_triangular_load():
    # Simple span with a load rising linearly from 0 at x = 0 to w at x = L
    # (AISC Table 3-23, "Simple beam - load increasing uniformly to one end"):
    # R1 = W/3, R2 = 2W/3 with W = wL/2, M_x = W x (L^2 - x^2) / (3 L^2).
    w, L = 6e3, 9.0
    W = w * L / 2
    f, m = simple_beam(L)
    f.add_load(DistributedLoad(m.id, q1=(0.0, 0.0), q2=(0.0, -w)))
    res = solve(f)["D"]
    for x in (2.0, 5.0, 7.5):
        fb = cut_free_body(f, res, m.id, x, side="start")
        assert fb.m == pytest.approx(W * x * (L**2 - x**2) / (3 * L**2), rel=1e-9)  # AISC formula
        (wt,) = [t for t in fb.terms if t.kind == "distributed"]
        # triangle 0..w x/L over [0, x]: resultant w x^2 / (2L) at x/3 from the cut (statics)
        assert wt.distributed.resultant == pytest.approx(w * x**2 / (2 * L), rel=1e-12)
        assert wt.distributed.centroid_from_cut == pytest.approx(x / 3, rel=1e-12)
        assert_sheet_matches_solver(fb)


def test_propped_cantilever_uses_solved_reaction():
    # Indeterminate: AISC Table 3-23, "Beam fixed at one end, supported at
    # other - uniformly distributed load": R2 (prop) = 3wL/8, so at midspan
    # M = 3wL/8 * L/2 - w (L/2)^2 / 2 = wL^2/16 (sagging).
    w, L = 8e3, 7.0
    f, m = simple_beam(L, fixed_left=True)
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    res = solve(f)["D"]
    fb = cut_free_body(f, res, m.id, L / 2)
    assert fb.side == "end" and fb.method == "reactions"   # one reaction beats the fixed end's two
    (prop,) = [t for t in fb.terms if t.kind == "reaction"]
    assert prop.fy == pytest.approx(3 * w * L / 8, rel=1e-9)  # AISC: R2 = 3wL/8
    assert fb.m == pytest.approx(w * L**2 / 16, rel=1e-9)     # from the AISC reactions
    assert_sheet_matches_solver(fb)


# -- frames: whole parts, loops, combinations ------------------------------------------


def _l_frame():
    """A cantilevered L: column fixed at its foot, beam to the right, an
    inclined rafter beyond; nodal, member, couple and distributed loads."""
    f = Frame()
    n0 = f.add_node(0.0, 0.0)
    n1 = f.add_node(0.0, 4.0)
    n2 = f.add_node(5.0, 4.0)
    n3 = f.add_node(8.0, 6.0)
    col = f.add_member(n0, n1, SEC, id="COL")
    beam = f.add_member(n1, n2, SEC, id="BEAM")
    raft = f.add_member(n2, n3, SEC, id="RAFT")
    f.add_support(n0, "fixed")
    f.add_load(DistributedLoad(beam.id, q1=(0.0, -4e3), q2=(0.0, -9e3), a=1.0, b=4.5, case="D"))
    f.add_load(DistributedLoad(raft.id, q1=(0.0, -3e3), projected=True, case="S"))
    f.add_load(DistributedLoad(col.id, q1=(2e3, 0.0), case="W"))
    f.add_load(DistributedLoad(raft.id, q1=(0.0, -1.5e3), q2=(0.0, 2.5e3), axes="local", case="W"))
    f.add_load(PointLoad(beam.id, 2.5, px=3e3, py=-7e3, case="L"))
    f.add_load(PointLoad(raft.id, 1.0, px=-1e3, py=-2e3, axes="local", case="L"))
    f.add_load(MemberCouple(beam.id, 3.5, 6e3, case="L"))
    f.add_load(NodalLoad(n2, fx=1e3, fy=-4e3, m=-2e3, case="D"))
    f.add_load(NodalLoad(n3, fy=-5e3, case="L"))
    return f


def test_determinate_frame_cuts_in_every_member_and_combination():
    # The only support is at the column foot, so every cut has a support-free
    # side: the sheet's equations are statics of that side alone and must
    # reproduce the solver's values (equilibrium, independent route).
    from dxf2frame.solver import combine

    f = _l_frame()
    cases = solve(f)
    combo = combine(cases, {"D": 1.2, "L": 1.6, "S": 0.5}, "1.2D+1.6L+0.5S")
    for res in list(cases.values()) + [combo]:
        for mem in f.members:
            L = f.geometry(mem)[0]
            for x in (0.0, 0.3 * L, 0.5 * L, L):
                fb = cut_free_body(f, res, mem.id, x)
                assert fb.method == "statics"
                assert_sheet_matches_solver(fb, res=res)
                assert not any(t.kind == "reaction" for t in fb.terms)


def test_cut_exactly_at_a_point_load_both_limits():
    # Simple span with P at midspan: AISC Table 3-23, "Simple beam -
    # concentrated load at center": V = +P/2 left of the load, -P/2 right of it.
    P, L = 10e3, 4.0
    f, m = simple_beam(L)
    f.add_load(PointLoad(m.id, L / 2, py=-P))
    res = solve(f)["D"]
    right = cut_free_body(f, res, m.id, L / 2)
    left = cut_free_body(f, res, m.id, L / 2, limit="left")
    assert right.v == pytest.approx(-P / 2, rel=1e-12)   # AISC: V = -P/2 just right of the load
    assert left.v == pytest.approx(P / 2, rel=1e-12)     # AISC: V = +P/2 just left of the load
    assert right.m == pytest.approx(P * L / 4, rel=1e-12)  # AISC: M_max = P L / 4
    assert_sheet_matches_solver(right)
    assert_sheet_matches_solver(left)


def test_member_in_a_closed_loop_uses_end_forces():
    # A braced rectangle on a pin and a roller: the diagonal closes a loop, so
    # no cut through one member frees a part; the free body is the member
    # piece with its end forces from the stiffness solution.
    f = Frame()
    n0, n1, n2, n3 = (f.add_node(*p) for p in ((0, 0), (6, 0), (6, 3), (0, 3)))
    bottom = f.add_member(n0, n1, SEC, id="B")
    f.add_member(n1, n2, SEC, id="R")
    top = f.add_member(n3, n2, SEC, id="T")
    f.add_member(n0, n3, SEC, id="L")
    diag = f.add_member(n0, n2, SEC, id="D")
    f.add_support(n0, "pin")
    f.add_support(n1, "roller")
    f.add_load(DistributedLoad(top.id, q1=(0.0, -5e3)))
    f.add_load(PointLoad(bottom.id, 2.0, py=-8e3))
    f.add_load(NodalLoad(n3, fx=4e3))
    res = solve(f)["D"]
    for mem, x in ((top, 1.0), (top, 4.5), (bottom, 2.0), (diag, 3.0)):
        fb = cut_free_body(f, res, mem.id, x)
        assert fb.method == "end forces"
        assert fb.side == ("start" if x <= f.geometry(mem)[0] / 2 else "end")
        assert "stiffness solution (indeterminate frame)" in fb.description
        assert_sheet_matches_solver(fb, res=res)


def test_portal_with_fixed_feet_takes_the_side_with_fewer_reactions():
    # Fixed-foot portal with a horizontal load at the top left: every member is
    # a bridge of the member graph, each side of a beam cut holds one fixed
    # foot, so the reactions (from the stiffness solution) enter the sheet.
    # Global check (statics, from memory): the two feet carry the whole
    # horizontal load, sum of Rx = -H.
    f = Frame()
    n0, n1, n2, n3 = (f.add_node(*p) for p in ((0, 0), (0, 4), (6, 4), (6, 0)))
    f.add_member(n0, n1, SEC, id="C1")
    beam = f.add_member(n1, n2, SEC, id="BM")
    f.add_member(n3, n2, SEC, id="C2")
    f.add_support(n0, "fixed")
    f.add_support(n3, "fixed")
    H = 10e3
    f.add_load(NodalLoad(n1, fx=H))
    f.add_load(DistributedLoad(beam.id, q1=(0.0, -3e3)))
    res = solve(f)["D"]
    assert sum(r.fx for r in res.reactions) == pytest.approx(-H, rel=1e-9)  # statics
    fb = cut_free_body(f, res, beam.id, 2.0)
    assert fb.method == "reactions"
    assert len([t for t in fb.terms if t.kind == "reaction"]) == 1
    assert_sheet_matches_solver(fb, rel=1e-8, res=res)


@settings(max_examples=25, deadline=None)
@given(
    x=st.floats(min_value=0.0, max_value=1.0),
    member=st.sampled_from(["COL", "BEAM", "RAFT"]),
    fd=st.floats(min_value=0.0, max_value=2.0),
    fl=st.floats(min_value=-1.5, max_value=1.5),
)
def test_sheet_equals_solver_anywhere(x, member, fd, fl):
    # Equilibrium of the isolated part (statics) against the solver's member
    # functions, at random points and factors.
    from dxf2frame.solver import combine

    f = _l_frame()
    cases = solve(f)
    res = combine(cases, {"D": fd, "L": fl, "W": 1.0}, "random")
    L = f.geometry(f.member(member))[0]
    fb = cut_free_body(f, res, member, x * L)
    assert_sheet_matches_solver(fb, rel=1e-8, res=res)


# -- the sheet and its files ----------------------------------------------------------------


def test_sheet_text_and_files(tmp_path: Path):
    w, L = 10e3, 6.0
    f, m = simple_beam(L)
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w), handle="3C"))
    f.add_load(PointLoad(m.id, 1.0, py=-5e3, case="L", handle="4D"))
    cases = solve(f)
    from dxf2frame.solver import combine

    combo = combine(cases, {"D": 1.2, "L": 1.6}, "1.2D+1.6L")
    uf = unit_factors("kN", "m")
    sheets = [
        (cut_free_body(f, combo, m.id, 2.0, side="start"),
         SheetHeader(title="beam at 2 m", source="beam.dxf", revision="0123456789ab")),
        (cut_free_body(f, cases["D"], m.id, 4.0), SheetHeader(title="beam at 4 m")),
    ]
    paths = write_cut_sheets(sheets, tmp_path / "sheets", uf)
    names = sorted(p.name for p in paths)
    assert names == ["sheet-1.md", "sheet-1.png", "sheet-2.md", "sheet-2.png", "sheets.pdf"]
    md = (tmp_path / "sheets" / "sheet-1.md").read_text(encoding="utf-8")
    assert CAUTION in md
    assert "beam.dxf" in md and "0123456789ab" in md
    assert "1.2 × D + 1.6 × L" in md
    assert "![free body" in md and "sheet-1.png" in md
    assert "#3C" in md and "#4D" in md
    assert not re.search(r"\b20\d\d-\d\d-\d\d\b", md)  # no date: reproducible sheets
    pdf = (tmp_path / "sheets" / "sheets.pdf").read_bytes()
    assert pdf.startswith(b"%PDF")
    assert len(re.findall(rb"/Type\s*/Page\b", pdf)) == 2
    assert (tmp_path / "sheets" / "sheet-1.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    # reproducible: the same input gives the same files
    first = {p.name: p.read_bytes() for p in paths}
    again = write_cut_sheets(sheets, tmp_path / "sheets", uf)
    assert {p.name: p.read_bytes() for p in again} == first
    # fewer cuts: the leftover sheet of the earlier run is removed
    write_cut_sheets(sheets[:1], tmp_path / "sheets", uf)
    assert sorted(p.name for p in (tmp_path / "sheets").iterdir()) == ["sheet-1.md", "sheet-1.png", "sheets.pdf"]
    assert sheet_text(*sheets[0], uf)[0].startswith("Hand check")


def test_sheet_units_convert(tmp_path: Path):
    # 45 kN*m = 45e3 N*m = 33.19 kip*ft (1 kip*ft = 1355.818 N*m, from memory)
    w, L = 10e3, 6.0
    f, m = simple_beam(L)
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w)))
    fb = cut_free_body(f, solve(f)["D"], m.id, L / 2)
    md = sheet_markdown(fb, SheetHeader(title="udl"), unit_factors("kip", "ft"))
    assert "| M | 33.19 kip*ft | sagging" in md
    got = evaluate_printed(fb, unit_factors("kip", "ft"))
    assert got["M"][1] == pytest.approx(33.19, abs=0.01)


# -- from a drawing ---------------------------------------------------------------------------


def _drawing(tmp_path: Path) -> Path:
    from dxf_builders import add_load, add_member, add_support, new_drawing, save

    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6, 0))
    add_member(msp, (6, 0), (8, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6, 0))
    add_load(msp, "udl", (3, 0), W="10 kN/m", CASE="D")
    add_load(msp, "force", (8, 0), P="5 kN", CASE="L")
    path = tmp_path / "overhang.dxf"
    save(doc, path)
    return path


def test_write_sheets_and_explain_command_from_a_drawing(tmp_path: Path, capsys):
    from dxf2frame.commands import run_explain
    from dxf2frame.handcheck import write_sheets
    from dxf2frame.pipeline import analyse

    path = _drawing(tmp_path)
    analysis = analyse(path)
    written = write_sheets(analysis, tmp_path / "auto", force_unit="kN", length_unit="m")
    mds = [p for p in written if p.suffix == ".md"]
    assert len(mds) == 2  # one per reported member (span and overhang)
    text = mds[0].read_text(encoding="utf-8")
    assert "overhang.dxf" in text and "largest |M|" in text

    # explain at the roller (x = 6 m) for case L: M = -P a = -5 kN * 2 m
    # (AISC Table 3-23, beam overhanging one support, load at end of overhang)
    args = Namespace(drawing=path, at=[(6.0, 0.0)], result="L", out=tmp_path / "expl", units=("kN", "m"),
                     settings=None, length_unit=None, debug=False)
    assert run_explain(args) == 0
    md = (tmp_path / "expl" / "sheet-1.md").read_text(encoding="utf-8")
    assert "| M | -10.00 kN*m | hogging" in md   # AISC overhang: M = P a = 10 kN*m, hogging
    assert "load case L" in md
    assert CAUTION in capsys.readouterr().out


def test_sheet_requests_that_cannot_be_met(tmp_path: Path):
    from dxf2frame.errors import DrawingError
    from dxf2frame.handcheck import SheetRequestError, write_sheets
    from dxf2frame.pipeline import analyse

    analysis = analyse(_drawing(tmp_path))
    with pytest.raises(SheetRequestError, match="no load case or combination named 'Q'"):
        write_sheets(analysis, tmp_path / "x", result_name="Q", force_unit="kN", length_unit="m")
    with pytest.raises(DrawingError):  # a point 3 m off the beam
        write_sheets(analysis, tmp_path / "x", points=[(3.0, 3.0)], force_unit="kN", length_unit="m")
    # a named result and no points: each member's largest |M| under that result;
    # for case L (5 kN at the overhang end) the span's is at the roller:
    # M = P a = 10 kN*m (AISC Table 3-23, beam overhanging one support)
    written = write_sheets(analysis, tmp_path / "named", result_name="L", force_unit="kN", length_unit="m")
    texts = [p.read_text(encoding="utf-8") for p in written if p.suffix == ".md"]
    assert all("load case L" in t for t in texts)
    assert any("| M | -10.00 kN*m | hogging" in t for t in texts)
    with pytest.raises(ValueError):
        f, m = simple_beam(4.0)
        f.add_load(PointLoad(m.id, 2.0, py=-1.0))
        cut_free_body(f, solve(f)["D"], m.id, 4.5)  # outside the member
