"""Result drawing (DXF copy with result layers), PNG preview and atomic writes.

Drawings are built with ezdxf in the test (tests/dxf_builders.py); frames
are built by hand to match them (solver.Frame in SI, DrawingModel with
unit_scale 1.0) unless the reader is exercised end to end.  Expected numbers
come from published closed forms, cited beside each check.
"""
from __future__ import annotations

import itertools
import re
from collections import Counter
from pathlib import Path

import ezdxf
import numpy as np
import pytest
import shapely
from hypothesis import given, settings as hsettings, strategies as st

from dxf2frame import CAUTION
from dxf2frame.atomic import atomic_path, write_text
from dxf2frame.drawing_model import DrawingModel
from dxf2frame.errors import SettingsError
from dxf2frame.draw import DEFAULT_OUTPUT_LAYERS, LabelPlacer, TEXT_STYLES

try:
    from tests import dxf_builders as B
except ImportError:  # tests/ itself on sys.path
    import dxf_builders as B

solver = pytest.importorskip("dxf2frame.solver")
pytest.importorskip("dxf2frame.solver.forces")
pytest.importorskip("dxf2frame.solver.results")

from dxf2frame.solver import DistributedLoad, Frame, NodalLoad, Section, check, combine, solve  # noqa: E402

from dxf2frame.draw import curves as diagram_curves, preview, writer  # noqa: E402

SEC = Section(E=200e9, A=5e-3, I=8e-5)
RESULT_LAYERS = {n.upper() for n in DEFAULT_OUTPUT_LAYERS.values()}
NUM = r"(-?\d+(?:\.\d+)?(?:e[-+]?\d+)?)"
# header values a CAD program rewrites on every save (time stamps, next handle, ...)
SAVE_METADATA = {"$TDUPDATE", "$TDUUPDATE", "$HANDSEED", "$VERSIONGUID", "$FINGERPRINTGUID", "$ACADMAINTVER",
                 "$EXTMIN", "$EXTMAX", "$PEXTMIN", "$PEXTMAX", "$LIMMIN", "$LIMMAX", "$PLIMMIN", "$PLIMMAX",
                 "$TDCREATE", "$TDUCREATE", "$TDINDWG", "$TDUSRTIMER", "$CMATERIAL", "$DWGCODEPAGE"}


# -- fixtures ----------------------------------------------------------------------


def beam_drawing(tmp_path: Path, L: float = 6.0, *, dxfversion: str = "R2018", extras: bool = True):
    """A simple span on FRAME with supports, a UDL block and unrelated content."""
    if dxfversion == "R12":
        doc = ezdxf.new("R12")
        doc.layers.add("FRAME")
    else:
        doc = B.new_drawing("m", dxfversion=dxfversion)
    msp = doc.modelspace()
    line = B.add_member(msp, (0, 0), (L, 0))
    if dxfversion != "R12":
        B.add_support(msp, "pin", (0, 0))
        B.add_support(msp, "roller", (L, 0))
        B.add_load(msp, "udl", (L / 2, 0), W="10 kN/m", CASE="D")
    if extras:
        doc.layers.add("TITLE", color=5)
        msp.add_text("GRID A", dxfattribs={"layer": "TITLE", "height": 0.2}).set_placement((0, 3))
        msp.add_circle((L + 2, 3), 0.3, dxfattribs={"layer": "TITLE"})
        doc.header["$LTSCALE"] = 2.5
        doc.header["$USERR1"] = 1.25
    path = tmp_path / "beam.dxf"
    doc.saveas(path)
    return path, line.dxf.handle


def beam_frame(handle: str, L: float = 6.0, cases: dict[str, float] | None = None) -> Frame:
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(L, 0.0)
    m = f.add_member(a, b, SEC, id=f"{handle}-1", layer="FRAME", handle=handle)
    f.add_support(a, "pin")
    f.add_support(b, "roller")
    for case, w in (cases or {"D": 10e3}).items():
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w), case=case))
    return f


def model_for(frame: Frame, source: Path) -> DrawingModel:
    xs = [n.x for n in frame.nodes]
    ys = [n.y for n in frame.nodes]
    return DrawingModel(frame=frame, source=source, length_unit="m", unit_scale=1.0,
                        extents=(min(xs), min(ys), max(xs), max(ys)), n_loads=len(frame.loads))


def solved_beam(tmp_path: Path, **kw):
    src, handle = beam_drawing(tmp_path, **kw)
    frame = beam_frame(handle)
    det = check(frame)
    results = list(solve(frame).values())
    return src, model_for(frame, src), det, results


def texts(doc, layer: str) -> list:
    return [e for e in doc.modelspace() if e.dxftype() == "TEXT" and e.dxf.layer.upper() == layer.upper()]


def text_pos(e) -> tuple[float, float]:
    p = e.dxf.align_point if e.dxf.hasattr("align_point") else e.dxf.insert
    return float(p[0]), float(p[1])


def layer_census(doc) -> tuple[Counter, dict[str, tuple[str, str]]]:
    """Entity count per layer and handle -> (type, layer), for non-result layers of every layout."""
    counts, handles = Counter(), {}
    for layout in doc.layouts:
        for e in layout:
            layer = e.dxf.get("layer", "0")
            if layer.upper() in RESULT_LAYERS:
                continue
            counts[layer] += 1
            handles[e.dxf.handle] = (e.dxftype(), layer)
    return counts, handles


def write(tmp_path: Path, src, model, det, results, show=None, name="out.dxf", layers=None):
    out = tmp_path / name
    writer.write_result_drawing(src, out, model, det, results, show=show, layers=layers,
                                force_unit="kN", length_unit="m")
    return out


# -- the copy keeps the drawing ----------------------------------------------------------


def test_copy_keeps_every_original_entity_layer_block_and_header(tmp_path):
    src, model, det, results = solved_beam(tmp_path)
    out = write(tmp_path, src, model, det, results, show="D")
    before, after = ezdxf.readfile(src), ezdxf.readfile(out)
    c0, h0 = layer_census(before)
    c1, h1 = layer_census(after)
    assert c0 == c1                      # entity count per original layer unchanged
    assert h0 == h1                      # same handles, types and layers
    assert {l.dxf.name for l in before.layers} <= {l.dxf.name for l in after.layers}
    assert {b.name for b in before.blocks} <= {b.name for b in after.blocks}
    for name in ("FRAME", "TITLE"):
        assert after.layers.get(name).color == before.layers.get(name).color
    ins0 = {e.dxf.handle: {a.dxf.tag: a.dxf.text for a in e.attribs} for e in before.modelspace().query("INSERT")}
    ins1 = {e.dxf.handle: {a.dxf.tag: a.dxf.text for a in e.attribs} for e in after.modelspace().query("INSERT")}
    assert ins0 == ins1 and ins0         # attributes kept
    for var in before.header.varnames():
        if var not in SAVE_METADATA:
            assert after.header.get(var) == before.header.get(var), var
    assert after.header["$LTSCALE"] == 2.5 and after.header["$USERR1"] == 1.25
    assert before.dxfversion == after.dxfversion


def test_source_is_never_written(tmp_path):
    src, model, det, results = solved_beam(tmp_path)
    data = src.read_bytes()
    write(tmp_path, src, model, det, results, show="D")
    assert src.read_bytes() == data
    with pytest.raises(SettingsError):
        writer.write_result_drawing(src, src, model, det, results, show="D", layers=None,
                                    force_unit="kN", length_unit="m")
    assert src.read_bytes() == data


def test_an_already_loaded_document_can_be_reused(tmp_path):
    src, model, det, results = solved_beam(tmp_path)
    doc = ezdxf.readfile(src)
    out = tmp_path / "reused.dxf"
    writer.write_result_drawing(src, out, model, det, results, show="D", force_unit="kN", length_unit="m",
                                document=doc)
    again = ezdxf.readfile(out)
    assert layer_census(again)[1] == layer_census(ezdxf.readfile(src))[1]
    assert texts(again, "RESULT-MOMENT")


def test_output_passes_audit_and_reads_back(tmp_path):
    src, model, det, results = solved_beam(tmp_path)
    out = write(tmp_path, src, model, det, results, show="D")
    doc = ezdxf.readfile(out)
    auditor = doc.audit()
    assert not auditor.has_errors, [str(e.message) for e in auditor.errors]
    layers = {l.dxf.name.upper() for l in doc.layers}
    for key in ("axial", "shear", "moment", "reactions", "deflected", "notes"):
        assert DEFAULT_OUTPUT_LAYERS[key] in layers
    for style in TEXT_STYLES:
        assert style in doc.styles


# -- the numbers on the drawing ------------------------------------------------------------


def test_midspan_moment_label_is_wl2_over_8(tmp_path):
    L, w = 6.0, 10e3
    src, model, det, results = solved_beam(tmp_path, L=L)
    doc = ezdxf.readfile(write(tmp_path, src, model, det, results, show="D"))
    # AISC Manual Table 3-23 Case 1, simple beam with uniform load (from memory): Mmax = wl^2/8 at centre
    expected = w * L**2 / 8 / 1e3
    hits = []
    for e in texts(doc, "RESULT-MOMENT"):
        m = re.fullmatch(r"M=" + NUM, e.dxf.text)
        if m and float(m.group(1)) == pytest.approx(expected, rel=1e-3):
            hits.append(text_pos(e))
    assert hits, [e.dxf.text for e in texts(doc, "RESULT-MOMENT")]
    x, y = hits[0]
    assert abs(x - L / 2) < 0.1 * L      # at midspan
    assert y < 0                         # beside the sagging diagram, drawn on the tension side (below)


def test_moment_diagram_on_tension_side_with_stated_scale(tmp_path):
    L, w = 6.0, 10e3
    src, model, det, results = solved_beam(tmp_path, L=L)
    doc = ezdxf.readfile(write(tmp_path, src, model, det, results, show="D"))
    legend = [e.dxf.text for e in texts(doc, "RESULT-MOMENT") if e.dxf.text.startswith("moment:")]
    assert len(legend) == 1
    per_unit = float(re.search(r"1 m on the drawing = " + NUM + r" kN\*m", legend[0]).group(1))
    # the diagram's outline starts at the member's start; the legend swatch is a small box elsewhere
    outlines = [list(e.get_points("xy")) for e in doc.modelspace().query('LWPOLYLINE[layer=="RESULT-MOMENT"]')]
    diag = [pt for pts in outlines if pts[0] == pytest.approx((0.0, 0.0), abs=1e-12) for pt in pts]
    assert diag
    low = min(y for _x, y in diag)
    high = max(y for _x, y in diag)
    # AISC Table 3-23 Case 1 (from memory): wl^2/8 drawn at the stated scale, below the beam (sagging)
    assert low == pytest.approx(-(w * L**2 / 8 / 1e3) / per_unit, rel=1e-6)
    assert high == pytest.approx(0.0, abs=1e-9)
    # our drawing rule: the largest ordinate is 8-12 % of the frame's larger side
    assert 0.08 <= abs(low) / L <= 0.12


def test_shear_end_values_zero_crossing_and_reactions(tmp_path):
    L, w = 6.0, 10e3
    src, model, det, results = solved_beam(tmp_path, L=L)
    doc = ezdxf.readfile(write(tmp_path, src, model, det, results, show="D"))
    shear = [e.dxf.text for e in texts(doc, "RESULT-SHEAR")]
    # AISC Table 3-23 Case 1 (from memory): V = +-wl/2 at the ends (sign by our convention)
    vals = sorted(float(m.group(1)) for t in shear if (m := re.fullmatch(r"V=" + NUM, t)))
    assert vals == pytest.approx([-w * L / 2 / 1e3, w * L / 2 / 1e3], rel=1e-3)
    # same case: Vx = w(l/2 - x) is zero at x = l/2, where the drawn curve crosses the member
    # (zero crossings are written for the moment only; the outline shows the shear's)
    outline = [np.asarray(e.get_points("xy"))[:, :2] for e in doc.modelspace().query('LWPOLYLINE[layer=="RESULT-SHEAR"]')]
    curve = next(pts for pts in outline if tuple(pts[0]) == (0.0, 0.0))[1:-1]   # less the baseline ends
    k = int(np.flatnonzero(np.sign(curve[:-1, 1]) != np.sign(curve[1:, 1]))[0])
    (x0, y0), (x1, y1) = curve[k], curve[k + 1]
    assert x0 + (x1 - x0) * y0 / (y0 - y1) == pytest.approx(L / 2, rel=1e-6)
    reac = [e for e in texts(doc, "RESULT-REACTIONS")]
    ry = sorted(float(m.group(1)) for e in reac if (m := re.fullmatch(r"Ry=" + NUM, e.dxf.text)))
    # same case: R = wl/2 at each support, upward
    assert ry == pytest.approx([w * L / 2 / 1e3] * 2, rel=1e-3)
    arrows = doc.modelspace().query('SOLID[layer=="RESULT-REACTIONS"]')
    assert len(arrows) == 2


def test_envelope_names_governing_combination(tmp_path):
    L, wD, wL = 6.0, 10e3, 5e3
    src, handle = beam_drawing(tmp_path, L=L)
    frame = beam_frame(handle, L, {"D": wD, "L": wL})
    cases = solve(frame)
    # ASCE/SEI 7 basic strength combinations 1 and 2 (from memory): 1.4D; 1.2D + 1.6L
    combos = [combine(cases, {"D": 1.4}, "1.4D", family="LRFD"),
              combine(cases, {"D": 1.2, "L": 1.6}, "1.2D+1.6L", family="LRFD"),
              combine(cases, {"D": 1.0, "L": 1.0}, "D+L", family="ASD")]
    results = list(cases.values()) + combos
    doc = ezdxf.readfile(write(tmp_path, src, model_for(frame, src), check(frame), results, show=None))
    moment = [e.dxf.text for e in texts(doc, "RESULT-MOMENT")]
    # the key beside a value is listed under the layer's scale line: "governing: C2 = 1.2D+1.6L"
    keys = dict(re.findall(r"(C\d+) = ([^,\s]+)", " ".join(t for t in moment if not t.startswith("M="))))
    # AISC Table 3-23 Case 1 (from memory) with the factored load 1.2*10 + 1.6*5 = 20 kN/m: wl^2/8 = 90
    expected = (1.2 * wD + 1.6 * wL) * L**2 / 8 / 1e3
    found = [(float(m.group(1)), m.group(2)) for t in moment if (m := re.fullmatch(r"M=" + NUM + r" \[(C\d+)\]", t))]
    assert len(found) == 1, moment                        # ends are zero: only the midspan extreme
    assert found[0][0] == pytest.approx(expected, rel=1e-3) and keys[found[0][1]] == "1.2D+1.6L", moment
    notes = " ".join(e.plain_text() for e in doc.modelspace().query('MTEXT[layer=="RESULT-NOTES"]'))
    assert "envelope of 2 LRFD combinations" in notes      # the ASD one is not part of it
    assert f"{found[0][1]} = 1.2D+1.6L" in notes            # the notes list every key
    assert CAUTION in " ".join(notes.split())


def test_rerun_on_output_replaces_results(tmp_path):
    src, model, det, results = solved_beam(tmp_path)
    out1 = write(tmp_path, src, model, det, results, show="D", name="one.dxf")
    out2 = write(tmp_path, out1, model, det, results, show="D", name="two.dxf")
    d1, d2 = ezdxf.readfile(out1), ezdxf.readfile(out2)
    per_layer = lambda d: Counter(e.dxf.layer for e in d.modelspace())  # noqa: E731
    assert per_layer(d1) == per_layer(d2)
    assert layer_census(d1)[1] == layer_census(d2)[1]


def test_a_rerun_without_second_order_keeps_no_earlier_buckled_shape(tmp_path):
    # a source holding an earlier result's second-order and moving-load layers: a result
    # drawn without them must not show the old ones as if they were current
    src, model, det, results = solved_beam(tmp_path)
    doc = ezdxf.readfile(src)
    for layer in ("RESULT-BUCKLING", "RESULT-MOVING", "RESULT-INFLUENCE"):
        doc.modelspace().add_lwpolyline([(0, 0), (1, 1)], dxfattribs={"layer": layer})
    doc.saveas(tmp_path / "old-result.dxf")
    out = write(tmp_path, tmp_path / "old-result.dxf", model, det, results, show="D", name="new.dxf")
    layers = {e.dxf.layer for e in ezdxf.readfile(out).modelspace()}
    assert not layers & {"RESULT-BUCKLING", "RESULT-MOVING", "RESULT-INFLUENCE"}


def test_settings_rename_result_layers(tmp_path):
    src, model, det, results = solved_beam(tmp_path)
    doc = ezdxf.readfile(write(tmp_path, src, model, det, results, show="D", layers={"moment": "MY-MOMENTS"}))
    assert texts(doc, "MY-MOMENTS") and not texts(doc, "RESULT-MOMENT")


def test_unknown_result_name(tmp_path):
    src, model, det, results = solved_beam(tmp_path)
    with pytest.raises(SettingsError, match="no load case or combination named"):
        write(tmp_path, src, model, det, results, show="1.6W")
    assert not (tmp_path / "out.dxf").exists()


def test_r12_drawing_gets_r12_entities(tmp_path):
    src, handle = beam_drawing(tmp_path, dxfversion="R12")
    frame = beam_frame(handle)
    out = write(tmp_path, src, model_for(frame, src), check(frame), list(solve(frame).values()), show="D")
    doc = ezdxf.readfile(out)
    assert doc.dxfversion == "AC1009"
    assert not doc.audit().has_errors
    assert doc.modelspace().query('POLYLINE[layer=="RESULT-MOMENT"]')
    assert texts(doc, "RESULT-NOTES")


# -- labels -----------------------------------------------------------------------------------


def test_label_placer_skips_lines_and_taken_spots():
    placer = LabelPlacer([shapely.LineString([(0, 0), (10, 0)])], cell=1.0)
    # first candidate straddles the line, second is free
    x, y, ok = placer.place([(5.0, 0.0), (5.0, 1.0)], 0.5, 0.2)
    assert ok and (x, y) == (5.0, 1.0)
    # the same spot is now taken: the next free one is used
    x, y, ok = placer.place([(5.0, 1.0), (5.0, 2.0)], 0.5, 0.2)
    assert ok and (x, y) == (5.0, 2.0)
    # nothing free: placed at the first candidate anyway
    x, y, ok = placer.place([(5.0, 0.0)], 0.5, 0.2)
    assert not ok and (x, y) == (5.0, 0.0) and placer.forced == 1


@hsettings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 20), st.floats(0, 20)), min_size=1, max_size=40))
def test_fitted_labels_never_overlap(centres):
    placer = LabelPlacer([shapely.LineString([(0, 10), (20, 10)])], cell=2.0)
    boxes = []
    for cx, cy in centres:
        cands = [(cx, cy), (cx, cy + 1.0), (cx + 2.0, cy), (cx, cy - 1.0)]
        x, y, ok = placer.place(cands, 0.8, 0.3)
        if ok:
            boxes.append(shapely.box(x - 0.8, y - 0.3, x + 0.8, y + 0.3))
    for a, b in itertools.combinations(boxes, 2):
        assert a.intersection(b).area < 1e-12
    for b in boxes:
        assert not b.intersects(shapely.LineString([(0, 10), (20, 10)]))


def test_portal_frame_labels_do_not_overlap(tmp_path):
    """A fixed-base portal under gravity and sway load: labels keep apart and off the members."""
    doc = B.new_drawing("m")
    msp = doc.modelspace()
    pts = [(0, 0), (0, 4), (6, 4), (6, 0)]
    lines = [B.add_member(msp, a, b) for a, b in zip(pts[:-1], pts[1:])]
    src = B.save(doc, tmp_path / "portal.dxf")
    f = Frame()
    n = [f.add_node(*p) for p in pts]
    for (i, j), ln in zip(((0, 1), (1, 2), (3, 2)), lines):
        f.add_member(n[i], n[j], SEC, id=f"{ln.dxf.handle}-1", layer="FRAME", handle=ln.dxf.handle)
    f.add_support(n[0], "fixed")
    f.add_support(n[3], "fixed")
    f.add_load(DistributedLoad(f.members[1].id, q1=(0.0, -20e3), case="D"))
    f.add_load(NodalLoad(n[1], fx=15e3, case="D"))
    out = tmp_path / "out.dxf"
    model = model_for(f, src)
    doc_out = ezdxf.readfile(src)
    summary = writer.annotate_results(doc_out, model, check(f), list(solve(f).values()), show="D",
                                      force_unit="kN", length_unit="m")
    doc_out.saveas(out)
    assert summary.forced == 0
    from ezdxf.fonts import fonts

    h = summary.text_height
    font = fonts.make_font(TEXT_STYLES["D2F-LABELS"], cap_height=h)
    boxes: dict[str, list] = {}
    for key in ("axial", "shear", "moment", "reactions"):
        for e in texts(doc_out, DEFAULT_OUTPUT_LAYERS[key]):
            if e.dxf.halign != 1:      # legend lines are left-aligned, labels centred
                continue
            x, y = text_pos(e)
            w = font.text_width(e.dxf.text)
            boxes.setdefault(key, []).append(shapely.box(x - w / 2, y - h / 2, x + w / 2, y + h / 2))
    # each result layer is read on its own (the diagrams of different layers lie on top of each other)
    assert sum(map(len, boxes.values())) >= 8
    for layer_boxes in boxes.values():
        for a, b in itertools.combinations(layer_boxes, 2):
            assert not a.intersects(b)
    members = shapely.MultiLineString([[pts[0], pts[1]], [pts[1], pts[2]], [pts[3], pts[2]]])
    assert not any(b.intersects(members) for bs in boxes.values() for b in bs)
    # nothing below 2 % of a diagram's largest value is written (our rule; the largest is always written)
    for key in ("axial", "shear", "moment"):
        vals = np.abs(_diagram_values(doc_out, key))
        assert len(vals) and vals.min() >= 0.02 * vals.max() * (1 - 1e-3)
    assert not ezdxf.readfile(out).audit().has_errors


def _diagram_values(doc, key: str) -> list[float]:
    sym = {"axial": "N", "shear": "V", "moment": "M"}[key]
    return [float(m.group(1)) for e in texts(doc, DEFAULT_OUTPUT_LAYERS[key])
            if (m := re.fullmatch(sym + "=" + NUM + r"( \[.*\])?", e.dxf.text))]


def _one_member_model(tmp_path: Path, L: float, supports: dict[int, str], loads) -> tuple:
    src, handle = beam_drawing(tmp_path, L=L)
    f = Frame()
    a, b = f.add_node(0.0, 0.0), f.add_node(L, 0.0)
    m = f.add_member(a, b, SEC, id=f"{handle}-1", layer="FRAME", handle=handle)
    for node, kind in supports.items():
        f.add_support(node, kind)
    for case, w in loads.items():
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w), case=case))
    return src, f


def test_fixed_beam_end_and_midspan_values_and_contraflexure_ticks(tmp_path):
    L, w = 6.0, 10e3
    src, f = _one_member_model(tmp_path, L, {0: "fixed", 1: "fixed"}, {"D": w})
    out = write(tmp_path, src, model_for(f, src), check(f), list(solve(f).values()), show="D")
    doc = ezdxf.readfile(out)
    vals = sorted(_diagram_values(doc, "moment"))
    # AISC Manual Table 3-23 Case 15, beam fixed at both ends, uniform load (from memory):
    # M = wl^2/12 (hogging) at each end, wl^2/24 (sagging) at the centre; one label per end, one at midspan
    assert vals == pytest.approx([-w * L**2 / 12 / 1e3] * 2 + [w * L**2 / 24 / 1e3], rel=1e-3)
    # same case: points of zero moment 0.2113 l from each end, marked by a tick across the beam and a "0"
    h = writer.annotate_results(ezdxf.readfile(src), model_for(f, src), check(f), list(solve(f).values()),
                                show="D", force_unit="kN", length_unit="m").text_height
    ticks = sorted(e.dxf.start.x for e in doc.modelspace().query('LINE[layer=="RESULT-MOMENT"]')
                   if abs(e.dxf.start.x - e.dxf.end.x) < 1e-9 and abs(e.dxf.start.y + e.dxf.end.y) < 1e-9
                   and abs(e.dxf.start.y - e.dxf.end.y) == pytest.approx(1.2 * h))
    a = L * (0.5 - (1 / 12) ** 0.5)   # root of w/12 (6lx - 6x^2 - l^2) = 0, i.e. 0.2113 l
    assert ticks == pytest.approx([a, L - a], rel=1e-4)
    zeros = [text_pos(e) for e in texts(doc, "RESULT-MOMENT") if e.dxf.text == "0"]
    assert len(zeros) == 2 and all(min(abs(x - a), abs(x - L + a)) < 2 * h for x, _y in zeros)
    # shear and axial: zero crossings are not written; N = 0 everywhere is not labelled at all
    assert not [e for e in texts(doc, "RESULT-SHEAR") if e.dxf.text == "0"]
    assert _diagram_values(doc, "axial") == []


@pytest.mark.parametrize("uplift, both", [(20e3, True), (11e3, False)])
def test_envelope_end_writes_the_other_sign_only_when_it_matters(tmp_path, uplift, both):
    L, wD = 3.0, 10e3
    src, f = _one_member_model(tmp_path, L, {0: "fixed"}, {"D": wD, "W": -uplift})
    cases = solve(f)
    # ASCE/SEI 7 basic strength combinations 1 and 7 (from memory): 1.4D; 0.9D + 1.0W
    results = list(cases.values()) + [combine(cases, {"D": 1.4}, "1.4D", family="LRFD"),
                                      combine(cases, {"D": 0.9, "W": 1.0}, "0.9D+W", family="LRFD")]
    doc = ezdxf.readfile(write(tmp_path, src, model_for(f, src), check(f), results, show="envelope:LRFD"))
    # AISC Table 3-23 Case 22, cantilever with uniform load (from memory): M = wl^2/2 at the support,
    # hogging (negative) under gravity, sagging when the net load is uplift; zero at the free end
    hog = -1.4 * wD * L**2 / 2 / 1e3
    sag = (uplift - 0.9 * wD) * L**2 / 2 / 1e3
    expected = [hog, sag] if both else [hog]     # the other sign only when >= 25 % of the larger (our rule)
    assert sorted(_diagram_values(doc, "moment")) == pytest.approx(sorted(expected), rel=1e-3)
    # the support's reaction moment is the same couple, counter-clockwise positive (statics); an
    # envelope's reaction label carries both bounds side by side
    mr = [(float(m.group(1)), float(m.group(2))) for e in texts(doc, "RESULT-REACTIONS")
          if (m := re.fullmatch(r"Mr max " + NUM + r" \[C\d\] min " + NUM + r" \[C\d\]", e.dxf.text))]
    assert len(mr) == 1
    assert sorted(mr[0]) == pytest.approx(sorted([-hog, -sag]), rel=1e-3)


def test_rigid_knee_value_is_written_once(tmp_path):
    """An L-shaped cantilever frame: the knee moment belongs to the column
    and to the arm; it is written once."""
    H, a, P = 4.0, 3.0, 10e3
    doc = B.new_drawing("m")
    msp = doc.modelspace()
    col, arm = B.add_member(msp, (0, 0), (0, H)), B.add_member(msp, (0, H), (a, H))
    src = B.save(doc, tmp_path / "knee.dxf")
    f = Frame()
    n = [f.add_node(0, 0), f.add_node(0, H), f.add_node(a, H)]
    f.add_member(n[0], n[1], SEC, id=f"{col.dxf.handle}-1", layer="FRAME", handle=col.dxf.handle)
    f.add_member(n[1], n[2], SEC, id=f"{arm.dxf.handle}-1", layer="FRAME", handle=arm.dxf.handle)
    f.add_support(n[0], "fixed")
    f.add_load(NodalLoad(n[2], fy=-P, case="D"))
    out = write(tmp_path, src, model_for(f, src), check(f), list(solve(f).values()), show="D")
    doc = ezdxf.readfile(out)
    # statics (method of sections): the arm's moment grows from 0 at the tip to P*a at the knee, and the
    # column carries P*a over its height; one label for the lot, the zero at the tip is not written
    assert [abs(v) for v in _diagram_values(doc, "moment")] == pytest.approx([P * a / 1e3], rel=1e-3)
    # same statics: V = P along the arm, none in the column; N = -P in the column (compression), none in the arm
    assert [abs(v) for v in _diagram_values(doc, "shear")] == pytest.approx([P / 1e3], rel=1e-3)
    assert _diagram_values(doc, "axial") == pytest.approx([-P / 1e3], rel=1e-3)
    reac = {m.group(1): float(m.group(2)) for e in texts(doc, "RESULT-REACTIONS")
            if (m := re.fullmatch(r"(R[xy]|Mr)=" + NUM, e.dxf.text))}
    # statics: Ry = P up, Mr = P*a counter-clockwise; no horizontal reaction
    assert reac == pytest.approx({"Ry": P / 1e3, "Mr": P * a / 1e3}, rel=1e-3)


def test_notes_paragraph_breaks_survive_line_wrapping(tmp_path):
    """Every paragraph of the notes starts a new line in ezdxf's renderer,
    whatever the wrapping width (it drops a break that directly follows a
    word it has just wrapped)."""
    from ezdxf.fonts import fonts
    from ezdxf.tools.text import text_wrap

    L, wD, wL = 6.0, 10e3, 5e3
    src, handle = beam_drawing(tmp_path, L=L)
    frame = beam_frame(handle, L, {"D": wD, "L": wL})
    cases = solve(frame)
    combos = [combine(cases, {"D": 1.4}, "1.4D", family="LRFD"),
              combine(cases, {"D": 1.2, "L": 1.6}, "1.2D+1.6L", family="LRFD")]
    doc = ezdxf.readfile(write(tmp_path, src, model_for(frame, src), check(frame), list(cases.values()) + combos))
    (mt,) = doc.modelspace().query('MTEXT[layer=="RESULT-NOTES"]')
    plain = mt.plain_text()
    paragraphs = [p.strip() for p in plain.split("\n") if p.strip()]
    assert len(paragraphs) >= 6
    h = mt.dxf.char_height
    font = fonts.make_font(TEXT_STYLES["D2F-NOTES"], cap_height=h)
    for width in np.linspace(12 * h, 60 * h, 97):
        lines = [line.strip() for line in text_wrap(plain, float(width), font.text_width)]
        missing = [p[:15] for p in paragraphs
                   if not any(line.startswith(p[:15]) or (line and p.startswith(line)) for line in lines)]
        assert not missing, (width, missing)


# -- unstable frames ---------------------------------------------------------------------------


def test_mechanism_drawing(tmp_path):
    src, handle = beam_drawing(tmp_path)
    f = Frame()
    a, b = f.add_node(0, 0), f.add_node(6, 0)
    f.add_member(a, b, SEC, id=f"{handle}-1", layer="FRAME", handle=handle)
    f.add_support(a, "roller")
    f.add_support(b, "roller")      # nothing holds it along X: one mechanism (classical count)
    det = check(f)
    assert det.status == "unstable"
    out = tmp_path / "mech.dxf"
    writer.write_mechanism_drawing(src, out, model_for(f, src), det, None)
    doc = ezdxf.readfile(out)
    assert not doc.audit().has_errors
    msp = doc.modelspace()
    assert msp.query('LWPOLYLINE[layer=="RESULT-MECHANISM"]')
    assert len(msp.query('CIRCLE[layer=="RESULT-MECHANISM"]')) == 2   # both nodes slide
    notes = " ".join(" ".join(e.plain_text().split()) for e in msp.query('MTEXT[layer=="RESULT-NOTES"]'))
    assert "unstable" in notes and CAUTION in notes
    assert layer_census(doc)[0] == layer_census(ezdxf.readfile(src))[0]


# -- preview -----------------------------------------------------------------------------------


def test_png_preview_is_not_blank(tmp_path):
    import matplotlib.image as mpimg

    src, model, det, results = solved_beam(tmp_path)
    out = write(tmp_path, src, model, det, results, show="D")
    png = tmp_path / "out.png"
    preview.render_png(out, png)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    img = mpimg.imread(png)[..., :3]
    assert img.shape[0] > 100 and img.shape[1] > 300
    ink = np.any(img < 0.9, axis=-1).mean()
    assert 0.005 < ink < 0.8                       # something drawn, background white
    colours = {tuple(np.round(c, 1)) for c in img.reshape(-1, 3)[::97]}
    assert len(colours) >= 4                       # coloured result layers, not just black lines
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


# -- atomic writes ------------------------------------------------------------------------------


def test_failed_save_leaves_no_file(tmp_path, monkeypatch):
    src, model, det, results = solved_beam(tmp_path)

    def broken_saveas(self, filename, *a, **k):
        Path(filename).write_text("0\nSECTION\n")     # a partial file...
        raise OSError("disk full")                     # ...then the failure

    monkeypatch.setattr(ezdxf.document.Drawing, "saveas", broken_saveas)
    with pytest.raises(OSError, match="disk full"):
        write(tmp_path, src, model, det, results, show="D")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["beam.dxf"]


def test_atomic_write_keeps_previous_version_on_failure(tmp_path):
    target = tmp_path / "a.txt"
    write_text(target, "complete")
    with pytest.raises(RuntimeError):
        with atomic_path(target) as tmp:
            tmp.write_text("half")
            raise RuntimeError("boom")
    assert target.read_text() == "complete"
    assert [p.name for p in tmp_path.iterdir()] == ["a.txt"]


# -- end to end through the reader ----------------------------------------------------------------


def test_reading_the_output_gives_the_same_model(tmp_path):
    reader = pytest.importorskip("dxf2frame.read")
    settings_mod = pytest.importorskip("dxf2frame.settings")
    L = 6.0
    src, _handle = beam_drawing(tmp_path, L=L)
    s = settings_mod.Settings()
    model = reader.read_drawing(src, s)
    det = check(model.frame)
    results = list(solve(model.frame, determinate=det.status == "determinate").values())
    out = tmp_path / "solved.dxf"
    writer.write_result_drawing(src, out, model, det, results, show="D", layers=s.output_layers,
                                force_unit="kN", length_unit="m")
    again = reader.read_drawing(out, s)
    f0, f1 = model.frame, again.frame
    assert [(n.x, n.y) for n in f0.nodes] == [(n.x, n.y) for n in f1.nodes]
    assert [(m.id, m.start, m.end, m.group) for m in f0.members] == [(m.id, m.start, m.end, m.group) for m in f1.members]
    assert [(s_.node, s_.kind) for s_ in f0.supports] == [(s_.node, s_.kind) for s_ in f1.supports]
    assert len(f0.loads) == len(f1.loads) and again.warnings == model.warnings
    # AISC Table 3-23 Case 1 (from memory): the 10 kN/m UDL block gives wl^2/8 = 45 kN*m at midspan
    doc = ezdxf.readfile(out)
    assert any(re.fullmatch(r"M=45(\.0+)?", e.dxf.text) for e in texts(doc, "RESULT-MOMENT"))


# -- batch sampling path ------------------------------------------------------------------------


class _MemberByMember:
    """The solver's member results without any batch interface, so the
    writer falls back to one MemberResult at a time."""

    def __init__(self, members):
        self._m = members

    def __getitem__(self, mid):
        return self._m[mid]

    def __iter__(self):
        return iter(self._m)

    def __len__(self):
        return len(self._m)

    def table(self):
        return self._m.table()


class _Batch(_MemberByMember):
    """The batch interface the writer uses when results offer it
    (critical_points() and sample(which, rows, x, side)): the solver's own
    when it has one, else the same contract built from the per-member API."""

    _FN = {"N": "axial", "V": "shear", "M": "moment"}

    def critical_points(self):
        own = getattr(self._m, "critical_points", None)
        if callable(own):
            return own()
        ids = list(self._m)
        rows, xs = [], []
        for j, mid in enumerate(ids):
            cp = np.asarray(self._m[mid].critical_points(), float)
            rows.append(np.full(len(cp), j))
            xs.append(cp)
        return np.concatenate(rows), np.concatenate(xs)

    def sample(self, which, rows, x, side="right"):
        own = getattr(self._m, "sample", None)
        if callable(own):
            return own(which, rows, x, side=side)
        ids = list(self._m)
        rows, x = np.asarray(rows), np.asarray(x, float)
        out = np.empty(len(x))
        for j in np.unique(rows):
            sel = rows == j
            mr = self._m[ids[j]]
            if which in ("u", "v"):
                out[sel] = mr.deflection(x[sel])[0 if which == "u" else 1]
            else:
                out[sel] = getattr(mr, self._FN[which])(x[sel], side=side)
        return out


def test_batch_sampling_draws_the_same_as_member_by_member(tmp_path):
    import dataclasses

    L, wD, wL = 6.0, 10e3, 5e3
    src, handle = beam_drawing(tmp_path, L=L)
    frame = beam_frame(handle, L, {"D": wD, "L": wL})
    cases = solve(frame)
    # ASCE/SEI 7 basic strength combinations (from memory): 1.4D; 1.2D + 1.6L
    results = list(cases.values()) + [combine(cases, {"D": 1.4}, "1.4D", family="LRFD"),
                                      combine(cases, {"D": 1.2, "L": 1.6}, "1.2D+1.6L", family="LRFD")]
    slow = [dataclasses.replace(r, members=_MemberByMember(r.members)) for r in results]
    fast = [dataclasses.replace(r, members=_Batch(r.members)) for r in results]
    model, det = model_for(frame, src), check(frame)

    def drawn(res):
        doc = ezdxf.readfile(src)
        writer.annotate_results(doc, model, det, res, show="envelope:LRFD", force_unit="kN", length_unit="m")
        msp = doc.modelspace()
        txt = sorted((e.dxf.layer, e.dxf.text, tuple(np.round(text_pos(e), 9))) for e in msp.query("TEXT"))
        lines = sorted((e.dxf.layer, tuple(np.round(np.asarray(e.get_points("xy")), 9).ravel()))
                       for e in msp.query("LWPOLYLINE"))
        return txt, lines

    assert drawn(slow) == drawn(fast)


# -- drawn curves: thinning and straight runs ------------------------------------------------


def _dp_reference(p: np.ndarray, tol: np.ndarray, a: int, b: int, keep: np.ndarray) -> None:
    """Douglas & Peucker (1973), recursive, one polyline (from memory): keep
    the point farthest from the chord (here the segment) when it is beyond
    the tolerance, recurse on both halves."""
    if b <= a + 1:
        return
    line = shapely.LineString([p[a], p[b]]) if np.any(p[a] != p[b]) else shapely.Point(p[a])
    dev = shapely.distance(line, shapely.points(p[a + 1:b]))
    j = int(np.argmax(dev))
    if dev[j] > tol[a + 1 + j]:
        keep[a + 1 + j] = True
        _dp_reference(p, tol, a, a + 1 + j, keep)
        _dp_reference(p, tol, a + 1 + j, b, keep)


@hsettings(max_examples=30, deadline=None)
@given(st.lists(st.tuples(st.integers(2, 30), st.floats(0.1, 30.0), st.floats(1e-4, 0.2), st.integers(0, 10**6)),
                min_size=1, max_size=12))
def test_thinning_is_douglas_peucker_on_every_polyline_at_once(spec):
    pts, anchors, tols, ref = [], [], [], []
    for n, freq, tol, seed in spec:
        rng = np.random.default_rng(seed)
        x = np.sort(rng.random(n)) * 5
        p = np.column_stack([x, np.sin(freq * x) + 0.1 * rng.standard_normal(n)])
        a = np.zeros(n, bool)
        a[[0, -1]] = True
        a[rng.random(n) < 0.1] = True                       # a few fixed points inside
        t = np.full(n, tol)
        k = a.copy()
        fixed = np.flatnonzero(a)
        for i0, i1 in zip(fixed[:-1], fixed[1:]):
            _dp_reference(p, t, int(i0), int(i1), k)
        pts.append(p), anchors.append(a), tols.append(t), ref.append(k)
    keep = diagram_curves.thin(np.concatenate(pts), np.concatenate(anchors), np.concatenate(tols))
    assert np.array_equal(keep, np.concatenate(ref))
    # and so every left-out point lies within its tolerance of the drawn line (the DP guarantee)
    at = 0
    for p, t in zip(pts, tols):
        k = keep[at:at + len(p)]
        at += len(p)
        drawn = shapely.LineString(p[k])
        assert all(drawn.distance(shapely.Point(q)) <= tt * (1 + 1e-9) + 1e-12 for q, tt in zip(p[~k], t[~k]))


def test_straight_runs_follow_member_lines():
    # a two-storey column line (split at the floor) and a floor beam split at a column
    xy = np.array([(0, 0), (0, 3), (0, 6), (5, 3), (10, 3)], float)
    si, ei = np.array([0, 1, 1, 3]), np.array([1, 2, 3, 4])
    d = xy[ei] - xy[si]
    t = d / np.hypot(d[:, 0], d[:, 1])[:, None]
    assert diagram_curves.straight_chains(si, ei, t) == [[0, 1], [2, 3]]


def _two_span_beam(tmp_path: Path, L: float, w: float):
    """A beam drawn as one line over three supports (the analysis splits it at the middle one)."""
    doc = B.new_drawing("m")
    msp = doc.modelspace()
    line = B.add_member(msp, (0, 0), (2 * L, 0))
    src = B.save(doc, tmp_path / "two-span.dxf")
    f = Frame()
    n = [f.add_node(x, 0.0) for x in (0.0, L, 2 * L)]
    h = line.dxf.handle
    for k, (i, j) in enumerate(((0, 1), (1, 2)), start=1):
        m = f.add_member(n[i], n[j], SEC, id=f"{h}-{k}", layer="FRAME", handle=h)
        f.add_load(DistributedLoad(m.id, q1=(0.0, -w), case="D"))
    f.add_support(n[0], "pin")
    f.add_support(n[1], "roller")
    f.add_support(n[2], "roller")
    return src, f


def test_continuous_beam_is_one_thinned_outline_true_to_the_curve(tmp_path):
    L, w = 6.0, 10e3
    src, f = _two_span_beam(tmp_path, L, w)
    doc = ezdxf.readfile(src)
    summary = writer.annotate_results(doc, model_for(f, src), check(f), list(solve(f).values()), show="D",
                                      force_unit="kN", length_unit="m")
    msp = doc.modelspace()
    per_unit = summary.scales["moment"]                   # kN*m per drawing unit
    outlines = [np.asarray(e.get_points("xy"))[:, :2] for e in msp.query('LWPOLYLINE[layer=="RESULT-MOMENT"]')]
    runs = [p for p in outlines if tuple(p[0]) == (0.0, 0.0)]
    # one closed outline over both spans (the legend swatch is the other polyline on the layer)
    assert len(runs) == 1 and len(outlines) == 2
    run = runs[0]
    assert run[:, 0].max() == pytest.approx(2 * L, abs=1e-12)
    # fills stay per element
    assert len(msp.query('HATCH[layer=="RESULT-MOMENT"]')) == 2
    # AISC Manual Table 3-23 Case 29, two equal spans with uniform load (from memory): M = -wl^2/8 over the
    # middle support (hogging: drawn above, the tension side), +9wl^2/128 at 3l/8 from each end support;
    # both are drawn points (the interior extremes are always kept)
    k = 1e-3 / per_unit                                  # drawing units per N*m
    def has_vertex(x, y):
        return np.any(np.hypot(run[:, 0] - x, run[:, 1] - y) <= 1e-9 * L)
    assert has_vertex(L, w * L**2 / 8 * k)
    assert has_vertex(3 * L / 8, -9 * w * L**2 / 128 * k) and has_vertex(2 * L - 3 * L / 8, -9 * w * L**2 / 128 * k)
    # thinned: the shear is linear along each span (same case: V = 3wl/8 - wx, from memory), so its outline is
    # the run's two baseline ends and each span's two end values, however many stations were sampled
    shear = [np.asarray(e.get_points("xy")) for e in msp.query('LWPOLYLINE[layer=="RESULT-SHEAR"]')
             if tuple(e.get_points("xy")[0][:2]) == (0.0, 0.0)]
    assert len(shear) == 1 and len(shear[0]) == 6
    # every point of the exact diagram lies within the chord tolerance of the drawn line, plus the error of the
    # 16 sampling intervals: a chord of length d under a parabola of curvature w misses it by w d^2 / 8 (from memory)
    omax = w * L**2 / 8 * k
    tol = min(diagram_curves.CHORD_TEXT * summary.text_height, diagram_curves.CHORD_REL * omax)
    x = np.linspace(0.0, L, 401)
    exact = 3 * w * L * x / 8 - w * x**2 / 2             # same case: R = 3wl/8 at the end support
    line = shapely.LineString(run)
    pts = np.column_stack([np.r_[x, 2 * L - x], np.r_[-exact, -exact] * k])
    dist = shapely.distance(line, shapely.points(pts))
    assert dist.max() <= tol + w * (L / 16) ** 2 / 8 * k
    # the outline crosses the member exactly at each contraflexure tick: same case, M = 0 at 3l/4 from the ends
    ticks = sorted(e.dxf.start[0] for e in msp.query('LINE[layer=="RESULT-MOMENT"]')
                   if e.dxf.start[0] == pytest.approx(e.dxf.end[0], abs=1e-12))
    assert ticks == pytest.approx([3 * L / 4, 2 * L - 3 * L / 4], rel=1e-9)
    y = run[:, 1]
    nz = np.flatnonzero(np.abs(y) > 1e-9 * omax)
    cross = []
    for a, b in zip(nz[:-1], nz[1:]):
        if y[a] * y[b] < 0:                                # through zero between two vertices, or at the ones between
            x0 = run[a, 0] - y[a] * (run[b, 0] - run[a, 0]) / (y[b] - y[a]) if b == a + 1 else run[a + 1:b, 0].mean()
            cross.append(x0)
    assert sorted(cross) == pytest.approx(ticks, rel=1e-9)
    # the deflected shape: one polyline over both spans, from support to support
    bent = [np.asarray(e.get_points("xy"))[:, :2] for e in msp.query('LWPOLYLINE[layer=="RESULT-DEFLECTED"]')
            if not e.closed]
    assert len(bent) == 1
    assert bent[0][0] == pytest.approx((0.0, 0.0), abs=1e-9) and bent[0][-1] == pytest.approx((2 * L, 0.0), abs=1e-9)
