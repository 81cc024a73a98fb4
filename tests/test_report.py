"""JSON report (schema 1) and CSV of member extremes.

Frames are built by hand (solver.Frame in SI) with a DrawingModel around
them; every expected number comes from a published closed form or a unit
definition, cited beside the check.
"""
from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

solver = pytest.importorskip("dxf2frame.solver")
pytest.importorskip("dxf2frame.solver.forces")
pytest.importorskip("dxf2frame.solver.results")

from dxf2frame.solver import DistributedLoad, Frame, NodalLoad, Section, Settlement, check, combine, solve  # noqa: E402

from dxf2frame import CAUTION  # noqa: E402
from dxf2frame.drawing_model import DrawingModel  # noqa: E402
from dxf2frame.errors import DrawingError  # noqa: E402
from dxf2frame.report import CSV_COLUMNS, build_report, write_csv, write_json  # noqa: E402

E, A, I = 200e9, 5e-3, 8e-5  # Pa, m**2, m**4
SEC = Section(E=E, A=A, I=I)
LBF = 4.4482216152605  # N per pound-force, exact by definition (NIST SP 811)
FT = 0.3048            # m per international foot, exact by definition


def _model(frame: Frame, *, unit_scale: float = 1.0, length_unit: str = "m") -> DrawingModel:
    xs = [n.x / unit_scale for n in frame.nodes]
    ys = [n.y / unit_scale for n in frame.nodes]
    return DrawingModel(frame=frame, source=Path("frame.dxf"), length_unit=length_unit, unit_scale=unit_scale,
                        extents=(min(xs), min(ys), max(xs), max(ys)), n_loads=len(frame.loads))


def simple_span(L: float = 6.0, w: float = 10e3, layer: str = "FRAME", cases=("D",)) -> Frame:
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(L, 0.0)
    m = f.add_member(a, b, SEC, id="2A-1", layer=layer, handle="2A")
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    for case in cases:
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w), case=case))
    return f


def _results(frame: Frame):
    det = check(frame)
    return det, list(solve(frame).values())


def test_schema_keys_and_types():
    frame = simple_span()
    det, results = _results(frame)
    rep = build_report(_model(frame), det, results, force_unit="kN", length_unit="m", probes=[(3.0, 0.0)])
    assert rep["schema"] == 1
    assert rep["source"] == "frame.dxf"
    assert rep["units"]["force"] == "kN" and rep["units"]["length"] == "m"
    assert set(rep["model"]) >= {"nodes", "members", "supports", "hinges", "loads"}
    assert set(rep["determinacy"]) >= {"status", "degree", "mechanisms", "count_check", "detail"}
    assert rep["determinacy"]["status"] == "determinate"
    assert rep["caution"] == CAUTION
    assert isinstance(rep["warnings"], list)
    (res,) = rep["results"]
    assert set(res) >= {"name", "kind", "reactions", "members", "probes"}
    assert res["name"] == "D" and res["kind"] == "case"
    for r in res["reactions"]:
        assert set(r) >= {"x", "y", "fx", "fy", "m"}
    (mem,) = res["members"]
    keys = {"id", "layer", "handle", "start", "end", "length", "n_min", "n_max", "v_min", "v_max",
            "m_min", "m_max", "m_max_at", "m_min_at", "deflection_max"}
    assert set(mem) >= keys
    assert mem["id"] == "2A-1" and mem["handle"] == "2A" and mem["layer"] == "FRAME"
    assert set(res["probes"][0]) >= {"x", "y", "member", "n", "v", "m"}
    json.dumps(rep, allow_nan=False)  # plain JSON types only


def test_simple_span_udl_closed_form():
    L, w = 6.0, 10e3
    frame = simple_span(L, w)
    det, results = _results(frame)
    rep = build_report(_model(frame), det, results, force_unit="kN", length_unit="m")
    mem = rep["results"][0]["members"][0]
    # AISC Manual Table 3-23 Case 1 (simple beam, uniform load), from memory: Mmax = wl^2/8 at centre
    assert mem["m_max"] == pytest.approx(w * L**2 / 8 / 1e3, rel=1e-9)
    assert mem["m_max_at"] == pytest.approx(L / 2, rel=1e-9)
    # same table, Case 1: V = wl/2 at the supports (positive at the left end by our sign convention)
    assert mem["v_max"] == pytest.approx(w * L / 2 / 1e3, rel=1e-9)
    assert mem["v_min"] == pytest.approx(-w * L / 2 / 1e3, rel=1e-9)
    # same table, Case 1: deflection at centre 5wl^4/(384EI) (reported as a magnitude)
    delta = 5 * w * L**4 / (384 * E * I)
    assert mem["deflection_max"] == pytest.approx(delta, rel=1e-6)
    assert mem["deflection_ratio"] == pytest.approx(L / delta, rel=1e-6)
    # statics (from memory, AISC Case 1): each reaction wl/2 upward, no horizontal reaction
    fy = sorted(r["fy"] for r in rep["results"][0]["reactions"])
    assert fy == pytest.approx([w * L / 2 / 1e3] * 2, rel=1e-9)
    assert all(abs(r["fx"]) < 1e-9 for r in rep["results"][0]["reactions"])
    # axial force zero under transverse load only (equilibrium along the member)
    assert abs(mem["n_min"]) < 1e-9 and abs(mem["n_max"]) < 1e-9


def test_unit_conversion_kip_ft():
    L, w = 6.0, 10e3
    frame = simple_span(L, w)
    det, results = _results(frame)
    rep = build_report(_model(frame), det, results, force_unit="kip", length_unit="ft")
    mem = rep["results"][0]["members"][0]
    kip, kipft = 1000 * LBF, 1000 * LBF * FT  # unit definitions (NIST SP 811)
    # AISC Table 3-23 Case 1 (from memory): wl^2/8, wl/2, converted by the unit definitions
    assert mem["m_max"] == pytest.approx(w * L**2 / 8 / kipft, rel=1e-9)
    assert mem["v_max"] == pytest.approx(w * L / 2 / kip, rel=1e-9)
    assert mem["length"] == pytest.approx(L / FT, rel=1e-10)  # the report keeps 12 significant figures
    assert mem["m_max_at"] == pytest.approx(L / 2 / FT, rel=1e-9)
    assert rep["units"]["moment"] == "kip*ft"


def test_group_of_elements_reported_as_one_member():
    """A span split at a load point for analysis is one reported member."""
    L, P = 6.0, 20e3
    f = Frame()
    a, b, c = f.add_node(0, 0), f.add_node(L / 2, 0), f.add_node(L, 0)
    f.add_member(a, b, SEC, id="3C-1a", layer="FRAME", handle="3C", group="3C-1")
    f.add_member(b, c, SEC, id="3C-1b", layer="FRAME", handle="3C", group="3C-1")
    f.add_support(a, "pin")
    f.add_support(c, "roller")
    f.add_load(NodalLoad(b, fy=-P, case="D"))
    det, results = _results(f)
    rep = build_report(_model(f), det, results, force_unit="kN", length_unit="m")
    assert rep["model"]["members"] == 1
    (mem,) = rep["results"][0]["members"]
    assert mem["id"] == "3C-1" and mem["handle"] == "3C"
    assert mem["length"] == pytest.approx(L)
    assert mem["start"] == pytest.approx([0.0, 0.0]) and mem["end"] == pytest.approx([L, 0.0])
    # AISC Table 3-23 Case 7 (simple beam, central point load), from memory: Mmax = Pl/4 under the load
    assert mem["m_max"] == pytest.approx(P * L / 4 / 1e3, rel=1e-9)
    assert mem["m_max_at"] == pytest.approx(L / 2, rel=1e-9)
    # same case: V = P/2 each side
    assert mem["v_max"] == pytest.approx(P / 2 / 1e3, rel=1e-9)
    assert mem["v_min"] == pytest.approx(-P / 2 / 1e3, rel=1e-9)
    # same case: centre deflection Pl^3/(48EI)
    assert mem["deflection_max"] == pytest.approx(P * L**3 / (48 * E * I), rel=1e-6)
    # the supports do not move, so from the member's chord (its two supports)
    # the deflection is the same Pl^3/(48EI) (AISC case 7), even though the
    # deflected node sits between the two elements
    assert mem["deflection_rel_max"] == pytest.approx(P * L**3 / (48 * E * I), rel=1e-6)
    assert mem["deflection_ratio"] == pytest.approx(L / (P * L**3 / (48 * E * I)), rel=1e-6)


def test_probes_in_drawing_units():
    """Drawing in mm (unit_scale 0.001 m per unit); probe at X=1500 mm."""
    L, w = 6.0, 10e3
    frame = simple_span(L, w)
    model = _model(frame, unit_scale=1e-3, length_unit="mm")
    det, results = _results(frame)
    rep = build_report(model, det, results, force_unit="kN", length_unit="m", probes=[(1500.0, 0.0)])
    (p,) = rep["results"][0]["probes"]
    x = 1.5
    assert p["member"] == "2A-1"
    # AISC Table 3-23 Case 1 (from memory): Mx = w x (l - x) / 2, Vx = w (l/2 - x)
    assert p["m"] == pytest.approx(w * x * (L - x) / 2 / 1e3, rel=1e-9)
    assert p["v"] == pytest.approx(w * (L / 2 - x) / 1e3, rel=1e-9)
    assert p["x"] == 1500.0 and p["y"] == 0.0


def test_probe_off_the_frame_is_an_error():
    frame = simple_span()
    det, results = _results(frame)
    with pytest.raises(DrawingError, match=r"not on any member; the nearest, 2A-1, is 2(\.\d+)? \S+ away"):
        build_report(_model(frame), det, results, force_unit="kN", length_unit="m", probes=[(3.0, 2.0)])


def test_cantilever_fixed_end_reaction_moment_sign():
    L, w = 4.0, 5e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, SEC, id="4D-1", layer="FRAME", handle="4D")
    f.add_support(a, "fixed")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w), case="D"))
    det, results = _results(f)
    rep = build_report(_model(f), det, results, force_unit="kN", length_unit="m")
    (r,) = rep["results"][0]["reactions"]
    # statics of a cantilever (AISC Table 3-23, cantilever with uniform load, from memory):
    # R = wl up; the wall's moment on the beam is wl^2/2 counter-clockwise (load on the right pulls clockwise)
    assert r["fy"] == pytest.approx(w * L / 1e3, rel=1e-9)
    assert r["m"] == pytest.approx(w * L**2 / 2 / 1e3, rel=1e-9)
    mem = rep["results"][0]["members"][0]
    # hogging at the wall: M = -wl^2/2 (concave toward -y)
    assert mem["m_min"] == pytest.approx(-w * L**2 / 2 / 1e3, rel=1e-9)
    assert mem["m_min_at"] == pytest.approx(0.0, abs=1e-9)
    # same table: free-end deflection wl^4/(8EI)
    assert mem["deflection_max"] == pytest.approx(w * L**4 / (8 * E * I), rel=1e-6)


def test_propped_cantilever_indeterminate():
    L, w = 8.0, 12e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, SEC, id="5E-1", layer="FRAME", handle="5E")
    f.add_support(a, "fixed")
    f.add_support(b, "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -w), case="D"))
    det, results = _results(f)
    rep = build_report(_model(f), det, results, force_unit="kN", length_unit="m")
    assert rep["determinacy"]["status"] == "indeterminate"
    res = rep["results"][0]
    by_x = {round(r["x"], 6): r for r in res["reactions"]}
    # AISC Table 3-23, beam fixed at one end and supported at the other, uniform load (from memory):
    # R at the simple support 3wl/8, at the fixed end 5wl/8, fixed-end moment wl^2/8
    assert by_x[L]["fy"] == pytest.approx(3 * w * L / 8 / 1e3, rel=1e-6)
    assert by_x[0.0]["fy"] == pytest.approx(5 * w * L / 8 / 1e3, rel=1e-6)
    mem = res["members"][0]
    assert mem["m_min"] == pytest.approx(-w * L**2 / 8 / 1e3, rel=1e-6)
    # same case: largest positive moment 9wl^2/128 at 3l/8 from the simple support
    assert mem["m_max"] == pytest.approx(9 * w * L**2 / 128 / 1e3, rel=1e-6)
    assert mem["m_max_at"] == pytest.approx(L - 3 * L / 8, rel=1e-6)


def test_deflection_limits_by_layer():
    L, w = 6.0, 10e3
    frame = simple_span(L, w, layer="FRAME-BEAMS")
    det, results = _results(frame)
    limits = {"limit": 240, "layers": {"FRAME-BEAMS": 360}}
    mem = build_report(_model(frame), det, results, force_unit="kN", length_unit="m",
                       deflection_limits=limits)["results"][0]["members"][0]
    assert mem["deflection_limit"] == 360
    # AISC Table 3-23 Case 1 (from memory): delta = 5wl^4/(384EI)
    ratio = L / (5 * w * L**4 / (384 * E * I))
    assert mem["deflection_ratio"] == pytest.approx(ratio, rel=1e-6)
    assert mem["deflection_ok"] is (ratio >= 360)


def test_combinations_and_envelope_governing():
    L, wD, wL = 6.0, 10e3, 5e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    m = f.add_member(a, b, SEC, id="6F-1", layer="FRAME", handle="6F")
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -wD), case="D"))
    f.add_load(DistributedLoad(m.id, q1=(0.0, -wL), case="L"))
    det = check(f)
    cases = solve(f)
    # ASCE/SEI 7 strength combinations 1 and 2 (from memory): 1.4D and 1.2D + 1.6L
    combos = [combine(cases, {"D": 1.4}, "1.4D", family="LRFD"),
              combine(cases, {"D": 1.2, "L": 1.6}, "1.2D+1.6L", family="LRFD")]
    rep = build_report(_model(f), det, list(cases.values()) + combos, force_unit="kN", length_unit="m")
    assert [r["kind"] for r in rep["results"]] == ["case", "case", "combination", "combination"]
    by_name = {r["name"]: r for r in rep["results"]}
    # AISC Table 3-23 Case 1 (from memory): wl^2/8 with the factored intensity
    assert by_name["1.2D+1.6L"]["members"][0]["m_max"] == pytest.approx((1.2 * wD + 1.6 * wL) * L**2 / 8 / 1e3)
    assert by_name["1.4D"]["members"][0]["m_max"] == pytest.approx(1.4 * wD * L**2 / 8 / 1e3)
    env = {e["name"]: e for e in rep["envelopes"]}["envelope:LRFD"]
    (em,) = env["members"]
    # 1.2*10 + 1.6*5 = 20 kN/m > 1.4*10 = 14 kN/m, so 1.2D+1.6L governs the sagging moment
    assert em["m_max_by"] == "1.2D+1.6L"
    assert em["m_max"] == pytest.approx(20e3 * L**2 / 8 / 1e3)
    # the smallest span/deflection ratio governs: L / (5wl^4/384EI) with
    # w = 20 kN/m (AISC Table 3-23 Case 1, from memory)
    assert em["deflection_ratio_by"] == "1.2D+1.6L"
    assert em["deflection_ratio"] == pytest.approx(L / (5 * 20e3 * L**4 / (384 * E * I)), rel=1e-6)
    assert em["deflection_rel_max"] == pytest.approx(5 * 20e3 * L**4 / (384 * E * I), rel=1e-6)


def test_unstable_frame_has_no_results():
    """A beam on two horizontal rollers can slide: a mechanism."""
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(5, 0)
    m = f.add_member(a, b, SEC, id="7G-1", layer="FRAME", handle="7G")
    f.add_support(a, "roller")
    f.add_support(b, "roller")
    f.add_load(DistributedLoad(m.id, q1=(0.0, -1e3), case="D"))
    det = check(f)
    assert det.status == "unstable"
    rep = build_report(_model(f), det, [], force_unit="kN", length_unit="m", probes=[(2.0, 0.0)])
    assert rep["results"] == []
    assert rep["determinacy"]["status"] == "unstable"
    # two rollers give 2 reaction components for 3 rigid-body freedoms: one mechanism (classical count)
    assert rep["determinacy"]["mechanisms"] == 1
    json.dumps(rep, allow_nan=False)


def test_write_json_and_csv(tmp_path: Path):
    L, w = 6.0, 10e3
    frame = simple_span(L, w, cases=("D", "L"))
    det, results = _results(frame)
    rep = build_report(_model(frame), det, results, force_unit="kN", length_unit="m")
    jpath, cpath = tmp_path / "r.json", tmp_path / "r.csv"
    write_json(rep, jpath)
    write_csv(rep, cpath)
    back = json.loads(jpath.read_text(encoding="utf-8"), parse_constant=lambda c: pytest.fail(f"non-JSON {c}"))
    assert back == rep                      # the compact layout loses nothing
    assert back["schema"] == 1 and len(back["results"]) == 2
    rows = list(csv.DictReader(cpath.open(newline="", encoding="utf-8")))
    assert tuple(rows[0].keys()) == CSV_COLUMNS
    assert len(rows) == 2  # one per result x member
    assert {r["result"] for r in rows} == {"D", "L"}
    for r in rows:
        assert r["member"] == "2A-1" and r["handle"] == "2A"
        # AISC Table 3-23 Case 1 (from memory): wl^2/8
        assert float(r["m_max"]) == pytest.approx(w * L**2 / 8 / 1e3)
        assert float(r["m_max_at"]) == pytest.approx(L / 2)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.csv", "r.json"]  # no temporary files left


def test_span_check_ignores_support_settlement():
    L, w, delta = 6.0, 10e3, 0.02
    f = simple_span(L, w)
    f.add_load(Settlement(1, dy=-delta, case="D"))
    det, results = _results(f)
    mem = build_report(_model(f), det, results, force_unit="kN", length_unit="m")["results"][0]["members"][0]
    sag = 5 * w * L**4 / (384 * E * I)  # AISC Table 3-23 Case 1 (from memory): 5wl^4/(384EI)
    # a determinate beam rotates rigidly on a settlement: from the chord the sag stays (AISC case 1)
    assert mem["deflection_rel_max"] == pytest.approx(sag, rel=1e-6)
    assert mem["deflection_ratio"] == pytest.approx(L / sag, rel=1e-6)
    # the total movement adds the rigid rotation: delta/2 at mid-span (geometry)
    assert mem["deflection_max"] >= sag + delta / 2 - 1e-9


def _two_bay_portal(H: float = 4.0, L: float = 6.0, P: float = 30e3, w: float = 8e3) -> Frame:
    """Two bays, three fixed-base columns, lateral load P at the left eave,
    beam load w on both beams (case D)."""
    f = Frame()
    base = [f.add_node(k * L, 0.0) for k in range(3)]
    top = [f.add_node(k * L, H) for k in range(3)]
    for k in range(3):
        f.add_member(base[k], top[k], SEC, id=f"C{k}-1", layer="COLS", handle=f"C{k}")
        f.add_support(base[k], "fixed")
    for k in range(2):
        f.add_member(top[k], top[k + 1], SEC, id=f"B{k}-1", layer="BEAMS", handle=f"B{k}")
        f.add_load(DistributedLoad(f"B{k}-1", q1=(0.0, -w), case="D"))
    f.add_load(NodalLoad(top[0], fx=P, case="D"))
    return f


def test_two_bay_portal_beam_ratio_uses_chord_deflection():
    f = _two_bay_portal()
    det, results = _results(f)
    rep = build_report(_model(f), det, results, force_unit="kN", length_unit="m")
    rows = {m["id"]: m for m in rep["results"][0]["members"]}
    members = solve(f)["D"].members  # independent: the solver's one-member method
    for mid in ("B0-1", "B1-1", "C0-1", "C1-1", "C2-1"):
        row, mr = rows[mid], members[mid]
        rel = mr.max_relative_deflection()[0]
        # both ends held (support or another member): the span check measures
        # from the chord between the displaced ends (common practice)
        assert row["deflection_rel_max"] == pytest.approx(rel, rel=1e-9)
        assert row["deflection_ratio"] == pytest.approx(mr.length / rel, rel=1e-9)
    # the beams ride on the sway: their total movement exceeds the chord
    # deflection by at least the horizontal sway of their ends (geometry)
    beam = rows["B0-1"]
    sway = abs(members["B0-1"].global_deflection(0.0)[0])
    assert sway > 0
    assert beam["deflection_max"] >= sway
    assert beam["deflection_ratio"] > beam["length"] / beam["deflection_max"]


def test_cantilever_ratio_uses_tip_deflection():
    L, P = 3.0, 15e3
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(L, 0)
    f.add_member(a, b, SEC, id="7G-1", layer="FRAME", handle="7G")
    f.add_support(a, "fixed")
    f.add_load(NodalLoad(b, fy=-P, case="D"))
    det, results = _results(f)
    mem = build_report(_model(f), det, results, force_unit="kN", length_unit="mm",
                       deflection_limits={"limit": 180})["results"][0]["members"][0]
    tip = P * L**3 / (3 * E * I)  # AISC Table 3-23 Case 22 (from memory): cantilever end load Pl^3/(3EI)
    assert mem["deflection_max"] == pytest.approx(tip * 1e3, rel=1e-6)  # in mm (unit definition)
    # the free end is touched by no other member and no support: the check
    # uses the total tip deflection, length / (Pl^3/3EI) (AISC case 22)
    assert mem["deflection_ratio"] == pytest.approx(L / tip, rel=1e-6)
    assert mem["deflection_ok"] is (L / tip >= 180)


# ---------------------------------------------------------------------------
# the column-wise report (what `solve` writes) and the plain one agree
# ---------------------------------------------------------------------------


def _two_span_with_combos():
    """Two spans, two cases and two combinations: member tables, envelopes
    and a layer with a deflection limit of its own."""
    f = Frame()
    a, b, c = f.add_node(0.0, 0.0), f.add_node(5.0, 0.0), f.add_node(9.0, 0.0)
    m1 = f.add_member(a, b, SEC, id="A-1", layer="FRAME, main", handle="A")   # a comma for the CSV
    m2 = f.add_member(b, c, SEC, id="B-1", layer='FRAME "2"', handle="B")     # quotes for JSON and CSV
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    f.add_support(c, "roller")
    for m in (m1, m2):
        f.add_load(DistributedLoad(m.id, q1=(0.0, -8e3), case="D"))
        f.add_load(DistributedLoad(m.id, q1=(0.0, -5e3), case="L"))
    det = check(f)
    cases = solve(f)
    combos = [combine(cases, {"D": 1.2, "L": 1.6}, "1.2D+1.6L", family="LRFD"),
              combine(cases, {"D": 1.0, "L": 1.0}, "D+L", family="ASD")]
    return f, det, list(cases.values()) + combos


def test_column_wise_report_reads_back_as_the_plain_report(tmp_path):
    from dxf2frame.report import Table, assemble_report, to_plain

    f, det, results = _two_span_with_combos()
    kw = dict(force_unit="kN", length_unit="m", deflection_limits={"limit": 240, "layers": {"FRAME, main": 360}})
    lazy = assemble_report(_model(f), det, results, **kw)
    assert isinstance(lazy["results"][0]["members"], Table)
    plain = build_report(_model(f), det, results, **kw)
    assert to_plain(lazy) == plain
    write_json(lazy, tmp_path / "r.json", tmp_path / "r.csv")
    assert json.loads((tmp_path / "r.json").read_text(encoding="utf-8")) == plain
    # every member entry of the file is one line of its own
    lines = (tmp_path / "r.json").read_text(encoding="utf-8").splitlines()
    ids = [json.loads(ln.strip().rstrip(","))["id"] for ln in lines if ln.lstrip().startswith('{"id": ')]
    assert ids == ["A-1", "B-1"] * (len(results) + 3)   # each result, then the LRFD, ASD and "all" envelopes
    # the CSV written in the same pass equals the one written from the plain report
    write_csv(plain, tmp_path / "plain.csv")
    with open(tmp_path / "r.csv", newline="", encoding="utf-8") as fa, \
            open(tmp_path / "plain.csv", newline="", encoding="utf-8") as fb:
        ra, rb = list(csv.reader(fa)), list(csv.reader(fb))
    assert ra[0] == rb[0] == list(CSV_COLUMNS)
    assert len(ra) == len(rb) == 1 + 4 * 2
    for x, y in zip(ra[1:], rb[1:]):
        assert x[:5] == y[:5]                       # names, ids, layers (commas and quotes survive)
        assert [float(v) if v else None for v in x[5:]] == [float(v) if v else None for v in y[5:]]


def test_table_rows_match_their_json_lines():
    import numpy as np

    from dxf2frame.report.table import Table

    heads = [{"id": "a", "start": [0.0, 1.5]}, {"id": "b%s", "start": [2.0, 3.0], "elements": ["b-1", "b-2"]}]
    t = Table(heads, [("v", np.array([1.0 / 3.0, np.nan])), ("by", ["x", None]), ("ok", [True, None]),
                      ("g", [{"m": "x"}, {"m": "y"}])])
    rows = list(t)
    assert rows[1] == {"id": "b%s", "start": [2.0, 3.0], "elements": ["b-1", "b-2"], "v": None, "by": None,
                       "ok": None, "g": {"m": "y"}}
    assert rows[0]["v"] == float("%.12g" % (1.0 / 3.0))   # 12 significant digits
    assert [json.loads(line) for line in t.json_lines()] == rows
    assert t[1] == rows[1] and t[-2] == rows[0] and t[0:2] == rows
