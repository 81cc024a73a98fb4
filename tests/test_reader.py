"""Reading drawings into the analysis model, per the drawing convention.

Drawings are built in each test with ezdxf (tests/dxf_builders.py).
Expected values are hand calculations: plane rotations and mirror images
of block coordinates (rotation by t maps (x, y) to (x cos t - y sin t,
x sin t + y cos t)), exact unit definitions (NIST SP 811: 1 ft = 0.3048 m,
1 in = 0.0254 m, 1 lbf = 4.4482216152605 N, so 1 kip = 4448.2216152605 N)
and linear interpolation of load intensities.
"""
from __future__ import annotations

import math
from pathlib import Path

import ezdxf
import pytest
from hypothesis import given, settings as hsettings, strategies as st

from dxf_builders import (
    add_block,
    add_hinge,
    add_joint,
    add_load,
    add_member,
    add_polyline,
    add_support,
    add_symbol,
    define_symbol_blocks,
    insert_block,
    new_drawing,
    save,
)
from dxf2frame.read.cleanup import ConnectionSpec, ForceSpec, Segment, SupportSpec, UdlSpec, build_frame
from dxf2frame.errors import (
    DrawingError,
    GeometryError,
    InputFileError,
    UnitError,
    UnknownBlockError,
    UnsupportedEntityError,
)
from dxf2frame.read import read_document, read_drawing
from dxf2frame.settings import Settings
from dxf2frame.solver import DistributedLoad, MemberCouple, NodalLoad, PointLoad, Settlement

KIP = 4448.2216152605  # N (NIST SP 811, exact by definition)
FT = 0.3048  # m (NIST SP 811, exact by definition)
INCH = 0.0254  # m (NIST SP 811, exact by definition)
C30, S30 = math.cos(math.radians(30)), math.sin(math.radians(30))


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------


def read(doc, tmp_path: Path, settings: Settings | None = None, **kw):
    """Save ``doc`` and read it back from the file."""
    return read_drawing(save(doc, tmp_path / "frame.dxf"), settings or Settings(), **kw)


def members(model) -> dict:
    return {m.id: m for m in model.frame.members}


def xy(model, nid: int) -> tuple[float, float]:
    n = model.frame.nodes[nid]
    return (n.x, n.y)


def ends(model, mid: str) -> tuple[tuple[float, float], tuple[float, float]]:
    m = members(model)[mid]
    return xy(model, m.start), xy(model, m.end)


def node_at(model, x: float, y: float, tol: float = 1e-9) -> int:
    for n in model.frame.nodes:
        if abs(n.x - x) <= tol and abs(n.y - y) <= tol:
            return n.id
    raise AssertionError(f"no node at ({x}, {y}); nodes: {[(n.x, n.y) for n in model.frame.nodes]}")


def loads_of(model, cls) -> list:
    return [ld for ld in model.frame.loads if isinstance(ld, cls)]


def simple_beam(units: str = "m", span: float = 6.0):
    """A beam (0,0)-(span,0) with a pin and a roller at its ends."""
    doc = new_drawing(units)
    msp = doc.modelspace()
    line = add_member(msp, (0, 0), (span, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (span, 0))
    return doc, msp, line


# ---------------------------------------------------------------------------
# linework
# ---------------------------------------------------------------------------


def test_line_lwpolyline_polyline_on_frame_layers(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    line = add_member(msp, (0, 0), (4, 0), layer="FRAME")
    lw = add_polyline(msp, [(4, 0), (4, 3), (8, 3)], layer="FRAME-COLUMNS")
    pl = add_polyline(msp, [(8, 3), (8, 0)], layer="FRAME-BEAMS", legacy=True)
    add_member(msp, (0, 5), (8, 5), layer="NOTES")  # not a member layer
    add_member(msp, (0, 6), (8, 6), layer="FRAMEWORK")  # not FRAME nor FRAME-*
    add_support(msp, "pin", (0, 0))
    add_support(msp, "fixed", (8, 0))
    model = read(doc, tmp_path)
    ms = members(model)
    h1, h2, h3 = line.dxf.handle, lw.dxf.handle, pl.dxf.handle
    assert set(ms) == {f"{h1}-1", f"{h2}-1", f"{h2}-2", f"{h3}-1"}
    assert ms[f"{h2}-1"].layer == "FRAME-COLUMNS" and ms[f"{h3}-1"].layer == "FRAME-BEAMS"
    assert ends(model, f"{h2}-2") == ((4, 3), (8, 3))  # drawn coordinates, metres
    # a vertical member drawn top-down starts at its lower end (ties on X: smaller Y)
    assert ends(model, f"{h3}-1") == ((8, 0), (8, 3))
    assert len(model.frame.nodes) == 5  # hand count: (0,0) (4,0) (4,3) (8,3) (8,0)
    assert model.extents == (0, 0, 8, 3)  # bounding box of the drawn members, drawing units


def test_closed_polyline_and_numbering_along_entity(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    sq = add_polyline(msp, [(0, 0), (4, 0), (4, 4), (0, 4)], closed=True)
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (2, 0))  # splits the first segment
    add_support(msp, "roller", (4, 0))
    model = read(doc, tmp_path)
    h = sq.dxf.handle
    # k counts analysis members along the drawn entity from its first vertex
    # hand count: 4 sides, the first split by the roller at (2, 0)
    assert sorted(members(model)) == sorted(f"{h}-{k}" for k in range(1, 6))
    assert ends(model, f"{h}-1") == ((0, 0), (2, 0))  # drawn coordinates (m)
    assert ends(model, f"{h}-2") == ((2, 0), (4, 0))  # drawn coordinates (m)
    assert ends(model, f"{h}-3") == ((4, 0), (4, 4))  # drawn coordinates (m)
    assert ends(model, f"{h}-5") == ((0, 0), (0, 4))  # closing segment


def test_member_start_is_smaller_x(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    line = add_member(msp, (6, 2), (0, 0))  # drawn right to left
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6, 2))
    model = read(doc, tmp_path)
    assert ends(model, f"{line.dxf.handle}-1") == ((0, 0), (6, 2))  # drawn coordinates (m)


# ---------------------------------------------------------------------------
# blocks: nesting, scale, rotation, mirroring, attributes
# ---------------------------------------------------------------------------


def test_nested_blocks_with_transforms(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    bay = add_block(doc, "BAY")
    add_polyline(bay, [(0, 0), (0, 3), (4, 3), (4, 0)])
    add_support(bay, "pin", (0, 0))
    add_support(bay, "roller", (4, 0))
    site = add_block(doc, "SITE")
    inner = insert_block(site, "BAY", (10, 0), rotation=90)
    outer = insert_block(msp, "SITE", (100, 50))
    model = read(doc, tmp_path)
    # BAY point (x, y) -> rotate 90 deg: (-y, x) -> + (10, 0) -> + (100, 50)
    expect = {(0, 0): (110, 50), (0, 3): (107, 50), (4, 3): (107, 54), (4, 0): (110, 54)}
    got = sorted((round(n.x, 9), round(n.y, 9)) for n in model.frame.nodes)
    assert got == sorted(expect.values())
    assert len(model.frame.members) == 3  # hand count: 3 polyline segments
    sup = {(round(xy(model, s.node)[0], 9), round(xy(model, s.node)[1], 9)): s for s in model.frame.supports}
    assert sup[(110, 50)].kind == "pin"
    roller = sup[(110, 54)]
    assert roller.kind == "roller"
    assert roller.angle == pytest.approx(math.pi / 2)  # 90 deg of the enclosing insert
    # handles chain the inserts down to the entity inside the block
    for m in model.frame.members:
        assert m.handle.startswith(f"{outer.dxf.handle}_{inner.dxf.handle}_")
    assert all(s.handle.startswith(f"{outer.dxf.handle}_{inner.dxf.handle}_") for s in model.frame.supports)


def test_block_scale_mirror_and_layer0_inheritance(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    piece = add_block(doc, "PIECE")
    add_member(piece, (0, 0), (3, 0), layer="0")  # layer 0: takes the insert's layer
    add_member(piece, (0, 0), (0, 2), layer="0")
    insert_block(msp, "PIECE", (10, 0), layer="FRAME-BEAMS", xscale=-2, yscale=1)
    insert_block(msp, "PIECE", (50, 50), layer="0")  # layer-0 pieces on layer 0: not members
    add_support(msp, "fixed", (10, 0))
    model = read(doc, tmp_path)
    # mirror and scale: (x, y) -> (10 - 2x, y)
    segs = sorted(tuple(sorted([xy(model, m.start), xy(model, m.end)])) for m in model.frame.members)
    assert segs == [((4, 0), (10, 0)), ((10, 0), (10, 2))]
    assert {m.layer for m in model.frame.members} == {"FRAME-BEAMS"}


def test_rotated_roller_restraint_direction(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6, 0), rotation=30)  # on a 30 degree slope
    model = read(doc, tmp_path)
    roller = next(s for s in model.frame.supports if s.kind == "roller")
    assert roller.angle == pytest.approx(math.radians(30))  # insert rotation 30 deg
    (cx, sx), (cy, sy) = roller.axes
    assert (cx, sx) == pytest.approx((C30, S30))  # rolls along the slope
    assert (cy, sy) == pytest.approx((-S30, C30))  # restrains normal to the slope
    assert (roller.ux, roller.uy, roller.rz) == (False, True, False)


def test_mirrored_roller_still_restrains_vertical(tmp_path):
    doc, msp, _ = simple_beam()
    for s in list(msp.query("INSERT")):
        if s.dxf.name == "ROLLER":
            s.dxf.xscale = -1
    model = read(doc, tmp_path)
    roller = next(s for s in model.frame.supports if s.kind == "roller")
    _, (cy, sy) = roller.axes
    assert abs(cy) == pytest.approx(0, abs=1e-12) and abs(sy) == pytest.approx(1)


@pytest.mark.parametrize(
    "rotation, xscale, yscale, angle, expected",
    [
        (0, 1, 1, None, (0, -1)),  # arrow points down at rotation 0
        (90, 1, 1, None, (1, 0)),  # (0, -1) turned 90 deg CCW
        (0, 1, -1, None, (0, 1)),  # mirrored about local X: arrow up
        (30, -1, 1, None, (S30, -C30)),  # mirror in x leaves (0, -1); then turned 30 deg
        (0, 2, 0.5, None, (0, -1)),  # non-uniform scale keeps the direction
        (90, 1, 1, "45", (math.sqrt(0.5), math.sqrt(0.5))),  # ANGLE overrides the rotation
        (0, 1, 1, "180 deg", (-1, 0)),
    ],
)
def test_force_direction(tmp_path, rotation, xscale, yscale, angle, expected):
    doc, msp, line = simple_beam()
    add_load(msp, "force", (2, 0), rotation, xscale=xscale, yscale=yscale, P="10 kN", ANGLE=angle)
    model = read(doc, tmp_path)
    (pl,) = loads_of(model, PointLoad)
    assert pl.member == f"{line.dxf.handle}-1"
    assert pl.a == pytest.approx(2.0)  # inserted at x = 2 m from the start
    # P = 10 kN = 1e4 N (SI prefix k = 1e3) along the hand-turned arrow
    assert (pl.px, pl.py) == pytest.approx((10e3 * expected[0], 10e3 * expected[1]), abs=1e-6)
    assert pl.axes == "global"


@pytest.mark.parametrize("angle, said", [("-1.5708", -90), ("3.1416", 180), ("0.7854", 45), ("-90", None),
                                         ("2", None), ("-1.5708 rad", None), ("12.5", None)])
def test_an_angle_written_in_radians_is_said(tmp_path, angle, said):
    # ANGLE is read in degrees: -1.5708 is a force 1.57 degrees below +X,
    # though it is -pi/2 (-90 degrees) to four decimals; said, naming the
    # block.  A whole number, a unit, or no round angle in radians: silent.
    doc, msp, line = simple_beam()
    force = add_load(msp, "force", (2, 0), P="10 kN", ANGLE=angle)
    model = read(doc, tmp_path)
    hits = [w for w in model.warnings if "in radians" in w]
    if said is None:
        assert not hits
    else:
        assert len(hits) == 1 and f"#{force.dxf.handle}" in hits[0] and f"write {said} (degrees)" in hits[0]
        (pl,) = loads_of(model, PointLoad)
        # read as written, in degrees (cos, sin of the angle by hand)
        rad = math.radians(float(angle))
        assert (pl.px, pl.py) == pytest.approx((10e3 * math.cos(rad), 10e3 * math.sin(rad)))


def test_a_load_block_pasted_twice_in_place_is_said(tmp_path):
    doc, msp, line = simple_beam()
    a = add_load(msp, "force", (2, 0), P="10 kN", CASE="D")
    b = add_load(msp, "force", (2, 0), P="10 kN", CASE="D")   # the same block pasted in place
    add_load(msp, "force", (2, 0), P="10 kN", CASE="L")       # another case at the point: a load of its own
    add_load(msp, "force", (2, 0), P="4 kN", CASE="D")        # another value: a load of its own
    model = read(doc, tmp_path)
    forces = sorted((ld.case, round(-ld.py)) for ld in loads_of(model, PointLoad))
    assert forces == [("D", 4000), ("D", 10000), ("D", 10000), ("L", 10000)]   # N; applied as drawn
    said = [w for w in model.warnings if "repeats" in w]
    assert len(said) == 1 and f"#{b.dxf.handle}" in said[0] and f"#{a.dxf.handle}" in said[0]


@pytest.mark.parametrize("case, basis, said", [("S", "", True), ("Lr", "", True), ("S", "PROJECTED", False),
                                              ("S", "LENGTH", False), ("D", "", False)])
def test_a_roof_load_on_a_slope_without_basis_is_said(tmp_path, case, basis, said):
    # snow, roof live and rain loads are given per horizontal projection
    # (ASCE/SEI 7, from memory); on a rafter at 1:2 (cos = 2/sqrt(5) = 0.894)
    # per length gives 12 % more load, so a UDL of those cases that does not
    # say its BASIS is said; dead load is per length; BASIS given: silent
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6, 3))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6, 3))
    udl = add_load(msp, "udl", (3, 1.5), W="2 kN/m", CASE=case, BASIS=basis)
    model = read(doc, tmp_path)
    hits = [w for w in model.warnings if "give no BASIS" in w]
    assert len(hits) == int(said) and (not said or f"#{udl.dxf.handle}" in hits[0])


def test_attdef_defaults_fill_missing_attribs(tmp_path):
    doc = ezdxf.new("R2018", setup=False)
    doc.header["$INSUNITS"] = 6
    define_symbol_blocks(doc, ["PIN", "ROLLER"])
    force = doc.blocks.new("FORCE")
    force.add_attdef("P", (0, 0), text="5 kN")
    force.add_attdef("CASE", (0, -1), text="L")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6, 0))
    add_load(msp, "force", (3, 0))  # no ATTRIBs at all
    add_load(msp, "force", (4, 0), P="7 kN")  # ATTRIB wins over the default
    add_load(msp, "force", (5, 0), P="7 kN", CASE="")  # blank ATTRIB: not given, convention default
    model = read(doc, tmp_path)
    got = sorted((round(ld.a, 9), ld.py, ld.case) for ld in loads_of(model, PointLoad))
    # 1 kN = 1e3 N; a blank CASE falls back to the convention's default case D
    assert got == [(3.0, -5e3, "L"), (4.0, -7e3, "L"), (5.0, -7e3, "D")]


def test_minsert_gives_one_symbol_per_cell(tmp_path):
    doc, msp, line = simple_beam()
    ins = add_load(msp, "force", (1, 0), P="1 kN")
    ins.dxf.column_count = 3
    ins.dxf.column_spacing = 2.0
    model = read(doc, tmp_path)
    # grid cells at x = 1 + 2k m (column spacing 2)
    assert sorted(round(ld.a, 9) for ld in loads_of(model, PointLoad)) == [1.0, 3.0, 5.0]
    assert model.n_loads == 3  # one load per cell


def test_convention_block_on_wrong_layer_warns(tmp_path):
    doc, msp, _ = simple_beam()
    add_symbol(msp, "FORCE", (3, 0), layer="0", P="10 kN")
    model = read(doc, tmp_path)
    assert not model.frame.loads
    assert any("FORCE" in w and "LOADS" in w for w in model.warnings)


# ---------------------------------------------------------------------------
# geometry cleanup
# ---------------------------------------------------------------------------


def test_snap_endpoints_within_tolerance(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (5, 0))
    add_member(msp, (5.0003, 0.0002), (10, 0))  # 0.36 mm gap < default 0.5 mm
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (10, 0))
    model = read(doc, tmp_path)
    assert len(model.frame.nodes) == 3 and len(model.frame.members) == 2  # hand count: 3 nodes, 2 members
    node_at(model, 5, 0)  # merged onto the first point


def test_snap_tolerance_from_settings(tmp_path):
    doc = new_drawing("mm")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (5000, 0))
    add_member(msp, (5003, 0), (10000, 0))  # 3 mm gap
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (10000, 0))
    model = read(doc, tmp_path)  # default 0.5 mm: the gap stays open (two parts, each supported)
    assert len(model.frame.nodes) == 4  # hand count: 2 separate members, 4 ends
    model = read(doc, tmp_path, Settings.from_dict({"geometry": {"snap": "5 mm"}}))
    assert len(model.frame.nodes) == 3  # hand count: gap closed
    model = read(doc, tmp_path, Settings.from_dict({"geometry": {"snap": 4}}))  # bare: drawing units (mm)
    assert len(model.frame.nodes) == 3  # hand count: gap closed


def test_a_load_taken_at_a_joint_from_afar_and_a_large_snap_are_warnings(tmp_path):
    # A snap of 1500 mm (a slip for 1.5 mm) takes a force drawn 1 m inside a
    # 6 m span to the pin: the frame solved is not the one drawn, so both
    # the move and the snap's size are warnings naming what they touch.
    doc, msp, line = simple_beam("mm", 6000.0)
    force = add_load(msp, "force", (1000, 0), P="10 kN", ANGLE="-90", CASE="D")
    model = read(doc, tmp_path)  # default snap: the force loads the span
    assert [ld.a for ld in loads_of(model, PointLoad)] == [pytest.approx(1.0)]
    assert not [w for w in model.warnings if "snap" in w]
    model = read(doc, tmp_path, Settings.from_dict({"geometry": {"snap": "1500 mm"}}))
    assert len(loads_of(model, NodalLoad)) == 1 and not loads_of(model, PointLoad)
    moved = [w for w in model.warnings if "applied at the joint" in w]
    assert len(moved) == 1 and f"#{force.dxf.handle}" in moved[0] and "1000 mm" in moved[0]
    large = [w for w in model.warnings if w.startswith("[geometry] snap = 1500 mm")]
    assert len(large) == 1 and f"handle {line.dxf.handle}" in large[0] and "25 %" in large[0]
    # a snap of a few mm on the same beam: neither
    model = read(doc, tmp_path, Settings.from_dict({"geometry": {"snap": "5 mm"}}))
    assert not [w for w in model.warnings if "snap" in w]
    # a support drawn 800 mm inside the span goes to the beam's end likewise
    doc = new_drawing("mm")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6000, 0))
    pin = add_support(msp, "pin", (800, 0))
    add_support(msp, "roller", (6000, 0))
    model = read(doc, tmp_path)  # default snap: the pin splits the beam, 800 mm of cantilever
    assert len(model.frame.members) == 2 and not [w for w in model.warnings if "snap" in w]
    model = read(doc, tmp_path, Settings.from_dict({"geometry": {"snap": "1500 mm"}}))
    moved = [w for w in model.warnings if "stands at the joint" in w]
    assert len(moved) == 1 and f"#{pin.dxf.handle}" in moved[0] and "800 mm" in moved[0]


@pytest.mark.parametrize("header, span, said", [("m", 6000.0, "in mm: 6 m"), ("mm", 240.0, "in in: 6.096 m"),
                                               ("m", 6.0, None), ("mm", 6000.0, None), ("ft", 20.0, None)])
def test_a_frame_of_no_building_size_is_said(tmp_path, header, span, said):
    # A 6 m beam drawn in mm in a drawing whose header says m is a 6 km beam;
    # 240 (inches) in a header of mm is a 0.24 m one: both said, with what
    # the frame would measure in the other units (6000 mm = 6 m; 240 in =
    # 240 x 0.0254 m = 6.096 m, the inch exact by definition).
    doc, msp, line = simple_beam(header, span)
    model = read(doc, tmp_path)
    hits = [w for w in model.warnings if "than any building frame" in w]
    if said is None:
        assert not hits
    else:
        assert len(hits) == 1 and said in hits[0] and "--length-unit" in hits[0]


def test_lines_on_a_layer_named_like_the_frame_layer_are_said(tmp_path):
    # FRAME_BRACES and "Frame Braces" are no member layers (FRAME, FRAME-*):
    # their braces are left out of the frame, which then sways, so each
    # layer is a warning naming a handle; a layer of another name is not.
    doc, msp, line = simple_beam()
    b1 = add_member(msp, (0, 0), (3, 2), layer="FRAME_BRACES")
    add_member(msp, (3, 2), (6, 0), layer="FRAME_BRACES")
    b3 = add_member(msp, (0, 1), (6, 1), layer="Frame Braces")
    add_member(msp, (0, -1), (6, -1), layer="GRID")
    model = read(doc, tmp_path)
    assert len(model.frame.members) == 1   # the beam alone, as the layers say
    said = [w for w in model.warnings if "not read as members" in w]
    assert len(said) == 2
    assert "'FRAME_BRACES' holds 2 line(s)" in said[0] and f"#{b1.dxf.handle}" in said[0] and "FRAME-BRACES" in said[0]
    assert "'Frame Braces' holds 1 line(s)" in said[1] and f"#{b3.dxf.handle}" in said[1]


@pytest.mark.parametrize("settle, said", [("-25", True), ("-25 mm", False), ("-0.4 m", True), ("-0.2 m", False)])
def test_a_settlement_of_a_size_no_support_settles_is_said(tmp_path, settle, said):
    # a bare -25 in a drawing in m is 25 m, not 25 mm; said when a support
    # settles by more than 5 % of the shortest member at it (6 m: 0.3 m)
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6, 0))
    add_member(msp, (6, 0), (12, 0))
    add_support(msp, "pin", (0, 0))
    mid = add_support(msp, "roller", (6, 0), SETTLE_Y=settle)
    add_support(msp, "roller", (12, 0))
    model = read(doc, tmp_path)
    (st,) = loads_of(model, Settlement)
    assert st.dy == pytest.approx(float(settle.split()[0]) * (1e-3 if "mm" in settle else 1.0))  # read as written
    hits = [w for w in model.warnings if "settles by" in w]
    assert len(hits) == int(said) and (not said or f"#{mid.dxf.handle}" in hits[0])


def test_t_junction_splits_the_through_member(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    beam = add_member(msp, (0, 3), (10, 3))
    col = add_member(msp, (4, 0), (4, 3))  # top end lands inside the beam
    add_support(msp, "fixed", (4, 0))
    model = read(doc, tmp_path)
    hb = beam.dxf.handle
    # hand count: beam split at the column top, plus the column
    assert sorted(members(model)) == sorted([f"{hb}-1", f"{hb}-2", f"{col.dxf.handle}-1"])
    assert ends(model, f"{hb}-1") == ((0, 3), (4, 3))  # drawn coordinates (m)
    assert ends(model, f"{hb}-2") == ((4, 3), (10, 3))  # drawn coordinates (m)


def braced_rectangle(connection: str | None):
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_polyline(msp, [(0, 0), (0, 4), (6, 4), (6, 0)])
    add_member(msp, (0, 0), (6, 4), layer="FRAME-BRACES")
    add_member(msp, (0, 4), (6, 0), layer="FRAME-BRACES")
    add_support(msp, "pin", (0, 0))
    add_support(msp, "pin", (6, 0))
    if connection == "joint":
        add_joint(msp, (3, 2))
    elif connection == "hinge":
        add_hinge(msp, (3, 2))
    return doc


def test_crossing_members_stay_unjoined(tmp_path):
    model = read(braced_rectangle(None), tmp_path)
    # hand count: 3 polyline segments + 2 braces; 4 corners
    assert len(model.frame.members) == 5 and len(model.frame.nodes) == 4


def test_joint_on_crossing_splits_both(tmp_path):
    model = read(braced_rectangle("joint"), tmp_path)
    # each brace split in two: 3 + 4 members; 4 corners + crossing
    assert len(model.frame.members) == 7 and len(model.frame.nodes) == 5
    centre = node_at(model, 3, 2)
    at_centre = [m for m in model.frame.members if centre in (m.start, m.end)]
    assert len(at_centre) == 4  # four brace halves meet at the crossing
    assert not any(m.release_start or m.release_end for m in model.frame.members)


def test_hinge_on_crossing_pins_both(tmp_path):
    model = read(braced_rectangle("hinge"), tmp_path)
    centre = node_at(model, 3, 2)
    at_centre = [m for m in model.frame.members if centre in (m.start, m.end)]
    assert len(at_centre) == 4  # four brace halves meet at the crossing
    for m in at_centre:
        assert (m.release_end if m.end == centre else m.release_start)
    assert model.hinges == 1  # one HINGE block


def test_duplicates_and_zero_length_dropped_with_warnings(tmp_path):
    doc, msp, line = simple_beam()
    dup = add_member(msp, (6, 0), (0, 0))  # same member drawn again, reversed
    dot = add_member(msp, (3, 3), (3, 3))
    model = read(doc, tmp_path)
    assert len(model.frame.members) == 1  # the duplicate and the zero-length line are dropped
    text = " ".join(model.warnings)
    assert f"#{dup.dxf.handle}" in text and f"#{line.dxf.handle}" in text and "duplicate" in text
    assert f"#{dot.dxf.handle}" in text and "zero-length" in text


def test_unsupported_part_is_an_error_naming_handles(tmp_path):
    doc, msp, _ = simple_beam()
    a = add_member(msp, (0, 10), (4, 10))
    b = add_member(msp, (4, 10), (4, 14))
    with pytest.raises(GeometryError) as exc:
        read(doc, tmp_path)
    msg = str(exc.value)
    assert f"#{a.dxf.handle}" in msg and f"#{b.dxf.handle}" in msg and "no support" in msg


def test_supports_split_a_continuous_beam(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    beam = add_member(msp, (0, 0), (20, 0))
    for x, kind in ((0, "pin"), (8, "roller"), (20, "roller")):
        add_support(msp, kind, (x, 0))
    model = read(doc, tmp_path)
    h = beam.dxf.handle
    assert sorted(members(model)) == [f"{h}-1", f"{h}-2"]  # hand count: split at the support at 8 m
    assert ends(model, f"{h}-2") == ((8, 0), (20, 0))  # drawn coordinates (m)


def test_hinge_inside_span_splits_for_analysis_only(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    beam = add_member(msp, (0, 0), (10, 0))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "roller", (10, 0))
    add_hinge(msp, (4, 0))
    model = read(doc, tmp_path)
    h = beam.dxf.handle
    ms = members(model)
    assert sorted(ms) == [f"{h}-1a", f"{h}-1b"]  # hand count: one span, split at the hinge
    assert ms[f"{h}-1a"].group == ms[f"{h}-1b"].group == f"{h}-1"
    assert ends(model, f"{h}-1a") == ((0, 0), (4, 0))  # hinge at x = 4 m
    assert ms[f"{h}-1a"].release_end and not ms[f"{h}-1a"].release_start
    assert ms[f"{h}-1b"].release_start and not ms[f"{h}-1b"].release_end


def test_hinge_members_attribute_releases_listed_layers_only(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    col = add_member(msp, (0, 0), (0, 3), layer="FRAME-COLUMNS")
    beam = add_member(msp, (0, 3), (6, 3), layer="FRAME-BEAMS")
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "roller", (6, 3))
    add_hinge(msp, (0, 3), members=["frame-beams"])
    model = read(doc, tmp_path)
    ms = members(model)
    assert ms[f"{beam.dxf.handle}-1"].release_start
    assert not ms[f"{col.dxf.handle}-1"].release_end


def test_force_inside_span_does_not_split(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    line = add_member(msp, (10, 0), (0, 0))  # drawn right to left
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (10, 0))
    add_load(msp, "force", (3, 0), P="12 kN", CASE="L")
    add_load(msp, "couple", (7, 0), M="5 kN*m", CASE="L")
    add_load(msp, "force", (10, 0), P="2 kN")  # on a node
    model = read(doc, tmp_path)
    assert len(model.frame.members) == 1  # the force does not split the member
    (pl,) = loads_of(model, PointLoad)
    # a is measured from the member start, the end with the smaller X
    # 12 kN = 1.2e4 N (SI prefix), acting down
    assert (pl.member, pl.a, pl.py, pl.case) == (f"{line.dxf.handle}-1", pytest.approx(3.0), -12e3, "L")
    (mc,) = loads_of(model, MemberCouple)
    assert (mc.a, mc.m) == (pytest.approx(7.0), pytest.approx(5e3))  # 1 kN*m = 1e3 N*m
    (nl,) = loads_of(model, NodalLoad)
    assert nl.node == node_at(model, 10, 0) and nl.fy == pytest.approx(-2e3)  # 2 kN = 2e3 N (SI prefix), acting down


# ---------------------------------------------------------------------------
# units
# ---------------------------------------------------------------------------


def test_feet_drawing_kip_loads(tmp_path):
    doc = new_drawing("ft")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (20, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (20, 0))
    add_load(msp, "udl", (10, 0), W="2 kip/ft", CASE="D")
    add_load(msp, "force", (5, 0), P="8", CASE="L")  # bare: settings force unit (kip)
    add_load(msp, "force", (15, 0), P="35 kN", CASE="L")
    add_load(msp, "couple", (12, 0), M="15", CASE="W")  # bare: kip*ft
    add_load(msp, "udl", (10, 0), W="2", FROM="5", TO="10", CASE="S")  # bare: kip/ft and ft
    model = read(doc, tmp_path, Settings.from_dict({"units": {"force": "kip"}}))
    assert model.length_unit == "ft" and model.unit_scale == 0.3048  # exact (NIST SP 811)
    assert model.force_unit == "kip"
    node_at(model, 20 * FT, 0)  # 20 ft = 6.096 m (NIST SP 811)
    d, s = sorted(loads_of(model, DistributedLoad), key=lambda ld: ld.case)
    assert d.q1 == pytest.approx((0, -2 * KIP / FT), rel=1e-12)  # 2 kip/ft in N/m (NIST SP 811)
    assert s.q1 == pytest.approx((0, -2 * KIP / FT), rel=1e-12)  # bare 2 -> 2 kip/ft
    assert s.a == pytest.approx(5 * FT, rel=1e-12) and s.b == pytest.approx(10 * FT, rel=1e-12)  # ft -> m
    p8, p35 = sorted(loads_of(model, PointLoad), key=lambda ld: ld.a)
    assert p8.py == pytest.approx(-8 * KIP, rel=1e-12)  # 8 kip (NIST SP 811)
    assert p35.py == pytest.approx(-35e3, rel=1e-12)  # 35 kN
    (mc,) = loads_of(model, MemberCouple)
    assert mc.m == pytest.approx(15 * KIP * FT, rel=1e-12)  # 15 kip*ft (NIST SP 811)
    assert model.extents == pytest.approx((0, 0, 20, 0))  # drawing units


def test_inch_drawing_bare_moment_and_mm_settlement(tmp_path):
    doc = new_drawing("in")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (120, 0))
    add_support(msp, "fixed", (0, 0), SETTLE_Y="-10 mm", SETTLE_R="0.002", CASE="SD")
    add_load(msp, "couple", (120, 0), M="100")  # bare: kip*in
    model = read(doc, tmp_path, Settings.from_dict({"units": {"force": "kip"}}))
    (nl,) = loads_of(model, NodalLoad)
    assert nl.m == pytest.approx(100 * KIP * INCH, rel=1e-12)  # kip*in (NIST SP 811)
    (st_,) = loads_of(model, Settlement)
    # -10 mm = -0.01 m; bare SETTLE_R in rad
    assert (st_.dx, st_.dy, st_.rz, st_.case) == (0.0, pytest.approx(-0.01), pytest.approx(0.002), "SD")


def test_bare_settlement_in_drawing_units(tmp_path):
    doc = new_drawing("mm")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6000, 0))
    add_support(msp, "pin", (0, 0), SETTLE_X="2", SETTLE_Y="-12")
    add_support(msp, "roller", (6000, 0), SETTLE_Y="-0.5 in")
    model = read(doc, tmp_path)
    got = sorted((round(s.dx, 12), round(s.dy, 12), s.case) for s in loads_of(model, Settlement))
    # 12 mm = 0.012 m; 0.5 in = 0.0127 m (NIST SP 811); default case D
    assert got == [(0.0, -0.0127, "D"), (0.002, -0.012, "D")]


def test_missing_insunits(tmp_path):
    doc, msp, _ = simple_beam(units=None)
    with pytest.raises(DrawingError, match="length-unit"):
        read(doc, tmp_path)
    model = read(doc, tmp_path, length_unit="mm")
    assert model.unit_scale == 1e-3 and model.length_unit == "mm"  # 1 mm = 1e-3 m (SI prefix)
    model = read(doc, tmp_path, Settings.from_dict({"units": {"length": "feet"}}))
    assert model.length_unit == "ft"
    node_at(model, 6 * FT, 0)  # 6 ft (NIST SP 811)


def test_settings_file_beside_drawing(tmp_path):
    doc, msp, _ = simple_beam(units=None)
    path = save(doc, tmp_path / "beam.dxf")
    (tmp_path / "dxf2frame.toml").write_text('[units]\nlength = "cm"\n')
    model = read_drawing(path)
    assert model.length_unit == "cm" and model.unit_scale == 0.01  # 1 cm = 0.01 m (SI prefix)


def test_unsupported_insunits_and_override(tmp_path):
    doc, msp, _ = simple_beam(units=3)  # miles
    with pytest.raises(DrawingError, match="INSUNITS = 3"):
        read(doc, tmp_path)
    doc, msp, _ = simple_beam(units="mm")
    model = read(doc, tmp_path, length_unit="m")
    assert model.unit_scale == 1.0  # --length-unit m wins over the header
    assert any("mm" in w for w in model.warnings)


def test_wrong_dimension_names_handle_and_layer(tmp_path):
    doc, msp, _ = simple_beam()
    f = add_load(msp, "force", (3, 0), P="15 kip*ft")
    with pytest.raises(UnitError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == f.dxf.handle and exc.value.layer == "LOADS"
    assert "moment" in str(exc.value) and "force" in str(exc.value)


def test_unparsable_value(tmp_path):
    doc, msp, _ = simple_beam()
    u = add_load(msp, "udl", (3, 0), W="ten kN/m")
    with pytest.raises(UnitError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == u.dxf.handle and "W" in str(exc.value)


# ---------------------------------------------------------------------------
# supports and loads
# ---------------------------------------------------------------------------


def test_support_kinds_and_springs(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_polyline(msp, [(0, 0), (0, 4), (6, 4), (12, 4), (12, 0)])
    handles = {
        "fixed": add_support(msp, "fixed", (0, 0)).dxf.handle,
        "slider": add_support(msp, "slider", (12, 0)).dxf.handle,
        "spring": add_support(msp, "spring", (6, 4), KX="500 kN/m", KY="200", KR="2000 kN*m/rad").dxf.handle,
    }
    model = read(doc, tmp_path)
    by_kind = {s.kind: s for s in model.frame.supports}
    assert (by_kind["fixed"].ux, by_kind["fixed"].uy, by_kind["fixed"].rz) == (True, True, True)
    assert (by_kind["slider"].ux, by_kind["slider"].uy, by_kind["slider"].rz) == (False, True, True)
    sp = by_kind["spring"]
    assert (sp.ux, sp.uy, sp.rz) == (False, False, False)
    assert sp.kx == pytest.approx(500e3)  # 500 kN/m
    assert sp.ky == pytest.approx(200e3)  # bare: kN per drawing unit (m)
    assert sp.kr == pytest.approx(2e6)  # 2000 kN*m/rad
    assert {k: s.handle for k, s in by_kind.items()} == handles
    assert all(s.layer == "SUPPORTS" for s in model.frame.supports)


def test_two_supports_on_one_node(tmp_path):
    doc, msp, _ = simple_beam()
    extra = add_support(msp, "fixed", (0, 0))
    with pytest.raises(DrawingError) as exc:
        read(doc, tmp_path)
    first = next(i for i in msp.query("INSERT") if i.dxf.name == "PIN")
    assert exc.value.handle == extra.dxf.handle and "two supports" in str(exc.value)
    assert f"#{first.dxf.handle}" in str(exc.value)  # names both


def test_udl_linear_from_to_across_internal_hinge(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    beam = add_member(msp, (10, 0), (0, 0))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "roller", (10, 0))
    add_hinge(msp, (4, 0))
    u = add_load(msp, "udl", (7, 0), W1="1 kN/m", W2="4 kN/m", FROM="2", TO="8", CASE="L")
    model = read(doc, tmp_path)
    h = beam.dxf.handle
    la, lb = sorted(loads_of(model, DistributedLoad), key=lambda ld: ld.member)
    # w(x) = 1 + 3 (x - 2) / 6 kN/m along the whole span (linear interpolation)
    assert la.member == f"{h}-1a" and lb.member == f"{h}-1b"
    assert (la.a, la.b) == (pytest.approx(2.0), None)  # 2 m to the hinge at 4 m
    assert la.q1 == pytest.approx((0, -1e3)) and la.q2 == pytest.approx((0, -2e3))
    assert (lb.a, lb.b) == (0.0, pytest.approx(4.0))  # hinge (4 m) to 8 m
    assert lb.q1 == pytest.approx((0, -2e3)) and lb.q2 == pytest.approx((0, -4e3))
    assert la.case == lb.case == "L" and la.handle == u.dxf.handle


def test_udl_directions_and_basis(tmp_path):
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (8, 6))  # a rafter
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (8, 6))
    add_load(msp, "udl", (4, 3), W="1 kN/m")  # DIR and BASIS from the ATTDEF defaults
    add_load(msp, "udl", (4, 3), W="2 kN/m", DIR="X", CASE="W")
    add_load(msp, "udl", (4, 3), W="-3 kN/m", DIR="y", CASE="W")
    add_load(msp, "udl", (4, 3), W="4 kN/m", DIR="NORMAL", CASE="W")
    add_load(msp, "udl", (4, 3), W="5 kN/m", BASIS="PROJECTED", CASE="S")
    model = read(doc, tmp_path)
    got = [(ld.q1, ld.axes, ld.projected, ld.case) for ld in loads_of(model, DistributedLoad)]
    assert got == [
        ((0.0, -1e3), "global", False, "D"),  # GRAVITY: global -Y
        ((2e3, 0.0), "global", False, "W"),  # X: global +X, sign as given
        ((0.0, -3e3), "global", False, "W"),  # Y: global +Y, sign as given
        ((0.0, -4e3), "local", False, "W"),  # NORMAL: local -y
        ((0.0, -5e3), "global", True, "S"),  # per unit horizontal projection
    ]


@pytest.mark.parametrize(
    "attribs, match",
    [
        ({"W": "1", "FROM": "4", "TO": "2"}, "does not fit"),
        ({"W": "1", "TO": "7"}, "does not fit"),
        ({"W": "1", "DIR": "DOWN"}, "GRAVITY"),
        ({"W": "1", "BASIS": "AREA"}, "PROJECTED"),
        ({"W1": "1"}, "W2"),
        ({"W": "1", "W1": "1", "W2": "2"}, "both"),
        ({}, "no W"),
    ],
)
def test_udl_bad_attributes(tmp_path, attribs, match):
    doc, msp, _ = simple_beam()
    u = add_load(msp, "udl", (3, 0), **attribs)
    with pytest.raises(DrawingError, match=match) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == u.dxf.handle


def test_every_object_keeps_its_handle(tmp_path):
    doc, msp, line = simple_beam()
    loads = [
        add_load(msp, "force", (2, 0), P="1 kN"),
        add_load(msp, "couple", (0, 0), M="1 kN*m"),
        add_load(msp, "udl", (3, 0), W="1 kN/m", CASE="L"),
    ]
    model = read(doc, tmp_path)
    assert [m.handle for m in model.frame.members] == [line.dxf.handle]
    inserts = {i.dxf.handle for i in msp.query("INSERT")}
    assert {s.handle for s in model.frame.supports} <= inserts
    assert [ld.handle for ld in model.frame.loads] == [i.dxf.handle for i in loads]
    assert all(line.dxf.handle in n.sources for n in model.frame.nodes)
    assert model.n_loads == 3 and model.frame.cases() == ["D", "L"]


# ---------------------------------------------------------------------------
# errors
# ---------------------------------------------------------------------------


def test_support_off_member(tmp_path):
    doc, msp, _ = simple_beam()
    bad = add_support(msp, "pin", (3, 2))
    with pytest.raises(DrawingError) as exc:
        read(doc, tmp_path)
    err = exc.value
    assert err.handle == bad.dxf.handle and err.layer == "SUPPORTS"
    assert "2 m" in str(err)  # distance to the beam, in drawing units


def test_load_off_member(tmp_path):
    doc, msp, _ = simple_beam(units="ft")
    bad = add_load(msp, "force", (3, 1.5), P="1 kip")
    with pytest.raises(DrawingError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == bad.dxf.handle and exc.value.layer == "LOADS"
    assert "1.5 ft" in str(exc.value)


def test_3d_entities_are_errors(tmp_path):
    doc, msp, _ = simple_beam()
    bad = add_member(msp, (0, 0, 0), (0, 3, 2))
    with pytest.raises(GeometryError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == bad.dxf.handle and "Z" in str(exc.value)

    doc, msp, _ = simple_beam()
    bad = add_polyline(msp, [(0, 0), (0, 3)], elevation=1.0)
    with pytest.raises(GeometryError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == bad.dxf.handle

    doc, msp, _ = simple_beam()
    bad = add_member(msp, (0, 0), (0, 3))
    bad.dxf.extrusion = (0, 0, -1)
    with pytest.raises(GeometryError, match="extrusion") as exc:
        read(doc, tmp_path)
    assert exc.value.handle == bad.dxf.handle

    doc, msp, _ = simple_beam()
    face = msp.add_3dface([(0, 0), (1, 0), (1, 1)], dxfattribs={"layer": "FRAME"})
    with pytest.raises(UnsupportedEntityError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == face.dxf.handle


def test_3d_polylines(tmp_path):
    doc, msp, _ = simple_beam()
    flat = msp.add_polyline3d([(0, 0, 0), (0, 4, 0), (3, 4, 0)], dxfattribs={"layer": "FRAME"})
    model = read(doc, tmp_path)  # a 3D polyline lying in Z = 0 is planar: accepted
    assert len([m for m in model.frame.members if m.handle == flat.dxf.handle]) == 2

    doc, msp, _ = simple_beam()
    bent = msp.add_polyline3d([(0, 0, 0), (0, 4, 1)], dxfattribs={"layer": "FRAME"})
    with pytest.raises(GeometryError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == bent.dxf.handle

    doc, msp, _ = simple_beam()
    mesh = msp.add_polyface(dxfattribs={"layer": "FRAME"})
    mesh.append_face([(0, 0, 0), (1, 0, 0), (1, 1, 0)])
    with pytest.raises(UnsupportedEntityError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == mesh.dxf.handle


def test_arcs_are_errors_unless_chorded(tmp_path):
    doc, msp, _ = simple_beam()
    arc = msp.add_arc((3, 0), 3, 0, 180, dxfattribs={"layer": "FRAME"})
    with pytest.raises(GeometryError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == arc.dxf.handle and "arc_segments" in str(exc.value)
    model = read(doc, tmp_path, Settings.from_dict({"geometry": {"arc_segments": 6}}))
    chords = [m for m in model.frame.members if m.handle == arc.dxf.handle]
    assert len(chords) == 6
    node_at(model, 3, 3, tol=1e-9)  # top of the arc: centre + radius along +Y
    for m in chords:  # chord of a 30 degree arc of radius 3: 2 r sin(15 deg)
        assert model.frame.geometry(m)[0] == pytest.approx(2 * 3 * math.sin(math.radians(15)))


def test_bulged_polyline(tmp_path):
    doc, msp, _ = simple_beam()
    pl = add_polyline(msp, [(0, 0), (6, 0)], bulges=[1.0, 0.0])  # bulge 1 = half circle
    with pytest.raises(GeometryError, match="bulge") as exc:
        read(doc, tmp_path)
    assert exc.value.handle == pl.dxf.handle
    model = read(doc, tmp_path, Settings.from_dict({"geometry": {"arc_segments": 4}}))
    # bulge 1 = half circle, counter-clockwise from (0,0) to (6,0): passes (3, -3)
    node_at(model, 3, -3, tol=1e-9)
    assert len([m for m in model.frame.members if m.handle == pl.dxf.handle]) == 4


def test_unknown_block_on_tagged_layer(tmp_path):
    doc, msp, _ = simple_beam()
    add_block(doc, "ANCHOR")
    bad = add_symbol(msp, "ANCHOR", (0, 0), layer="SUPPORTS")
    with pytest.raises(UnknownBlockError) as exc:
        read(doc, tmp_path)
    assert exc.value.handle == bad.dxf.handle and exc.value.layer == "SUPPORTS"
    assert "PIN" in str(exc.value)  # says what to use

    doc, msp, _ = simple_beam()
    bad = add_symbol(msp, "FORCE", (3, 0), layer="SUPPORTS", P="1 kN")
    with pytest.raises(UnknownBlockError, match="LOADS"):
        read(doc, tmp_path)


def test_remapped_block_and_attribute_names(tmp_path):
    doc, msp, line = simple_beam()
    add_block(doc, "ARROW").add_attdef("VAL", (0, 0), text="")
    add_symbol(msp, "ARROW", (3, 0), layer="LOADS", VAL="4 kN")
    s = Settings.from_dict({"blocks": {"force": "arrow"}, "attributes": {"P": "VAL"}})
    model = read(doc, tmp_path, s)
    (pl,) = loads_of(model, PointLoad)
    assert pl.py == pytest.approx(-4e3)


def test_input_file_errors(tmp_path):
    with pytest.raises(InputFileError, match="missing.dxf"):
        read_drawing(tmp_path / "missing.dxf", Settings())
    junk = tmp_path / "junk.dxf"
    junk.write_bytes(b"\x00\x9f not a drawing \xff" * 50)
    with pytest.raises(InputFileError, match="junk.dxf"):
        read_drawing(junk, Settings())
    doc, _, _ = simple_beam()
    path = save(doc, tmp_path / "beam.dxf")
    with pytest.raises(InputFileError, match="MB"):
        read_drawing(path, Settings.from_dict({"limits": {"max_file_mb": 0.001}}))
    with pytest.raises(InputFileError, match="entities"):
        read_drawing(path, Settings.from_dict({"limits": {"max_entities": 5}}))


def test_damaged_file_is_recovered_with_warning(tmp_path):
    doc, _, _ = simple_beam()
    path = save(doc, tmp_path / "beam.dxf")
    text = path.read_text()
    # cut out the HEADER section: ezdxf.readfile refuses it, the recover mode repairs it
    start = text.index("HEADER") - len("  0\nSECTION\n  2\n")
    end = text.index("ENDSEC", start) + len("ENDSEC\n")
    path.write_text(text[:start] + text[end:])
    model = read_drawing(path, Settings(), length_unit="m")
    assert len(model.frame.members) == 1
    assert any("repaired" in w for w in model.warnings)


# ---------------------------------------------------------------------------
# result layers are ignored
# ---------------------------------------------------------------------------


def _model_key(model):
    f = model.frame
    return (
        [(n.x, n.y) for n in f.nodes],
        [(m.id, m.start, m.end, m.release_start, m.release_end) for m in f.members],
        [(s.node, s.kind, s.angle) for s in f.supports],
        [repr(ld) for ld in f.loads],
    )


def test_result_layers_are_ignored(tmp_path):
    doc, msp, _ = simple_beam()
    add_load(msp, "udl", (3, 0), W="10 kN/m")
    before = read(doc, tmp_path)
    add_member(msp, (0, 1), (6, 1), layer="RESULT-MOMENT")
    add_polyline(msp, [(0, -1), (3, -2), (6, -1)], layer="RESULT-DEFLECTED")
    add_symbol(msp, "FORCE", (0, 0), layer="RESULT-REACTIONS", P="30 kN")
    msp.add_text("M max = 45 kN*m", dxfattribs={"layer": "RESULT-NOTES"})
    marks = add_block(doc, "RESULT-MARKS")
    add_member(marks, (0, 0), (1, 1), layer="FRAME")
    insert_block(msp, "RESULT-MARKS", (2, 2), layer="RESULT-NOTES")
    after = read(doc, tmp_path)
    assert _model_key(after) == _model_key(before)


# ---------------------------------------------------------------------------
# cleanup without DXF
# ---------------------------------------------------------------------------


def test_cleanup_plain_records():
    res = build_frame(
        [Segment((0.0, 0.0), (10.0, 0.0), "A", "FRAME"), Segment((5.0, 0.0), (5.0, 4.0), "B", "FRAME")],
        supports=[SupportSpec((0.0, 0.0), "pin", handle="S1"), SupportSpec((10.0, 0.0), "roller", handle="S2")],
        connections=[ConnectionSpec((5.0, 4.0), "hinge", handle="H1")],
        loads=[ForceSpec((5.0, 4.0), 1.0, 0.0, handle="F1"), UdlSpec((2.0, 0.0), 3.0, 3.0, handle="U1")],
        tol=1e-6,
    )
    f = res.frame
    assert sorted(m.id for m in f.members) == ["A-1", "A-2", "B-1"]
    (nl,) = [ld for ld in f.loads if isinstance(nl := ld, NodalLoad)]
    assert (f.nodes[nl.node].x, f.nodes[nl.node].y) == (5.0, 4.0)
    assert f.member("B-1").release_end  # hinge at the free top end
    (ud,) = [ld for ld in f.loads if isinstance(ld, DistributedLoad)]
    assert ud.member == "A-1" and ud.q1 == (0.0, -3.0)


def test_udl_on_a_joint_is_ambiguous():
    with pytest.raises(DrawingError, match="joint") as exc:
        build_frame(
            [Segment((0.0, 0.0), (5.0, 0.0), "A", "FRAME"), Segment((5.0, 0.0), (10.0, 0.0), "B", "FRAME")],
            supports=[SupportSpec((0.0, 0.0), "pin"), SupportSpec((10.0, 0.0), "roller")],
            loads=[UdlSpec((5.0, 0.0), 1.0, 1.0, handle="U9")],
            tol=1e-6,
        )
    assert exc.value.handle == "U9"


@hsettings(max_examples=25, deadline=None)
@given(
    st.lists(st.floats(min_value=0.05, max_value=0.95), min_size=0, max_size=6, unique=True),
    st.floats(min_value=0, max_value=2 * math.pi),
    st.floats(min_value=1.0, max_value=50.0),
)
def test_supports_along_a_beam_split_it(fractions, angle, span):
    # a beam at any angle; each interior support adds one member; lengths add up to the span
    fractions = sorted(fractions)
    fractions = [f for i, f in enumerate(fractions) if i == 0 or f - fractions[i - 1] > 0.01]
    c, s = math.cos(angle), math.sin(angle)
    pts = [(span * f * c, span * f * s) for f in fractions]
    res = build_frame(
        [Segment((0.0, 0.0), (span * c, span * s), "B", "FRAME")],
        supports=[SupportSpec((0.0, 0.0), "pin")] + [SupportSpec(p, "roller") for p in pts],
        tol=1e-6,
    )
    f = res.frame
    assert len(f.members) == len(fractions) + 1
    assert sum(f.geometry(m)[0] for m in f.members) == pytest.approx(span, rel=1e-9)
    assert [m.id for m in f.members] == [f"B-{k}" for k in range(1, len(fractions) + 2)]
    for m in f.members:  # start = smaller X (ties: smaller Y), per the convention
        a, b = f.nodes[m.start], f.nodes[m.end]
        assert a.x < b.x or (abs(a.x - b.x) <= 1e-6 and a.y <= b.y)


# ---------------------------------------------------------------------------
# the command line turns reader errors into exit status 2 and one line
# ---------------------------------------------------------------------------


def test_cli_reports_bad_input_in_one_line(tmp_path, capsys):
    from dxf2frame.cli import main

    doc, msp, _ = simple_beam()
    bad = add_load(msp, "force", (3, 2), P="1 kN")
    path = save(doc, tmp_path / "bad.dxf")
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert f"#{bad.dxf.handle}" in err and "LOADS" in err and "insertion point" in err


def test_read_document_from_an_open_drawing():
    doc, msp, line = simple_beam(units="cm", span=600)
    model = read_document(doc, "in-memory.dxf", Settings())
    assert model.source == Path("in-memory.dxf")
    assert model.unit_scale == 0.01  # 1 cm = 0.01 m (SI prefix)
    node_at(model, 6.0, 0.0)  # 600 cm = 6 m (SI prefix)


def test_dynamic_block_reference_counts_under_its_own_name(tmp_path):
    doc, msp, _ = simple_beam()
    for app in ("AcDbDynamicBlockGUID", "AcDbBlockRepBTag"):
        doc.appids.add(app)
    force = doc.blocks.get("FORCE")
    force.block_record.set_xdata("AcDbDynamicBlockGUID", [(1000, "{0000-GUID}")])
    anon = doc.blocks.new_anonymous_block("U")  # what CAD makes for a stretched dynamic block
    anon.add_attdef("P", (0, 0), text="")
    anon.block_record.set_xdata("AcDbBlockRepBTag", [(1070, 1), (1005, force.block_record.dxf.handle)])
    add_symbol(msp, anon.name, (3, 0), layer="LOADS", P="6 kN")
    model = read(doc, tmp_path)
    (pl,) = loads_of(model, PointLoad)
    assert pl.py == pytest.approx(-6e3)  # 6 kN = 6e3 N (SI prefix), arrow down
