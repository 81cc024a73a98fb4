"""A result drawing the drafter can issue: output units, legend wording,
placement clear of the drafter's own content, shared scales.

Drawings are built here with ezdxf and the project's symbol blocks.
"""
from __future__ import annotations

import json
import re
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from dxf2frame.cli import main
from dxf2frame.settings import Settings
from dxf2frame.symbols import define_blocks, define_layers, insert_symbol

NUM = r"(-?\d+(?:\.\d+)?(?:e[-+]?\d+)?)"
SETTINGS = """\
[combinations]
builtin = []
"""


def beam(path: Path, *, span: float, insunits: int, scale: float, w: str = "10 kN/m",
         udls: list[tuple[float, dict]] | None = None) -> Path:
    """A simply supported beam from (0, 0) to (span, 0) in drawing units,
    pin and roller at its ends, a uniform load of case D over it; or, with
    ``udls``, a UDL symbol at each (x, attributes) instead."""
    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = insunits
    define_layers(doc)
    define_blocks(doc)
    msp = doc.modelspace()
    msp.add_line((0, 0), (span, 0), dxfattribs={"layer": "FRAME"})
    insert_symbol(msp, "PIN", (0, 0), layer="SUPPORTS", scale=scale)
    insert_symbol(msp, "ROLLER", (span, 0), layer="SUPPORTS", scale=scale)
    for x, attrs in udls if udls is not None else [(span / 3, {"W": w, "CASE": "D"})]:
        insert_symbol(msp, "UDL", (x, 0), layer="LOADS", scale=scale, **attrs)
    doc.saveas(path)
    return path


def test_default_output_units_follow_the_drawing_system():
    # our rule (README, "Settings file"): metric drawings read kN and m, US ones kip and ft
    assert Settings().output_units("mm") == ("kN", "m")
    assert Settings().output_units("cm") == ("kN", "m")
    assert Settings().output_units("inch") == ("kip", "ft")
    assert Settings().output_units("ft") == ("kip", "ft")
    fixed = Settings.from_dict({"units": {"output_force": "N", "output_length": "mm"}})
    assert fixed.output_units("ft") == ("N", "mm")


def test_mm_drawing_reads_kn_m_and_the_legend_names_mm(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    L = 6000.0                                                     # mm
    src = beam(tmp_path / "beam-mm.dxf", span=L, insunits=4, scale=200.0)
    out = tmp_path / "out" / "beam-mm.dxf"
    assert main(["solve", str(src), "--out", str(out)]) == 0
    rep = json.loads(out.with_suffix(".json").read_text())
    assert rep["units"]["force"] == "kN" and rep["units"]["length"] == "m"
    doc = ezdxf.readfile(out)
    msp = doc.modelspace()
    moments = [e.dxf.text for e in msp.query('TEXT MTEXT[layer=="RESULT-MOMENT"]') if e.dxftype() == "TEXT"]
    # AISC Manual Table 3-23 Case 1 (from memory): Mmax = w l^2 / 8 = 10 kN/m * (6 m)^2 / 8 = 45 kN*m
    values = [float(m.group(1)) for t in moments if (m := re.match(r"M=" + NUM, t))]
    assert any(v == pytest.approx(45.0, rel=1e-3) for v in values), moments
    legend = [t for t in moments if t.startswith("moment:")]
    assert legend and "1 mm on the drawing = " in legend[0] and "kN*m" in legend[0], legend
    assert "kN*mm" not in " ".join(moments)


def test_units_option_still_overrides(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    src = beam(tmp_path / "beam-mm.dxf", span=6000.0, insunits=4, scale=200.0)
    out = tmp_path / "o" / "beam.dxf"
    assert main(["solve", str(src), "--out", str(out), "--units", "kN,mm"]) == 0
    rep = json.loads(out.with_suffix(".json").read_text())
    assert rep["units"]["length"] == "mm"


# -- an office sheet: the tool's texts keep clear of the drafter's content ------------------------


def office_sheet(path: Path, *, beam_y: float = 4000.0, hoist: str = "20 kN") -> Path:
    """A portal frame in mm (columns 4 m, beam 6 m) with what an office puts
    around it, tight: grid bubbles over the columns, a dimension under the
    frame, level texts at the left, general notes at the right and a title
    block under the right column."""
    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = 4
    define_layers(doc)
    define_blocks(doc)
    for name in ("GRID", "DIMS", "ANNO", "TITLE"):
        doc.layers.add(name)
    msp = doc.modelspace()
    msp.add_line((0, 0), (0, beam_y), dxfattribs={"layer": "FRAME"})
    msp.add_line((0, beam_y), (6000, beam_y), dxfattribs={"layer": "FRAME"})
    msp.add_line((6000, beam_y), (6000, 0), dxfattribs={"layer": "FRAME"})
    insert_symbol(msp, "FIXED", (0, 0), layer="SUPPORTS", scale=200)
    insert_symbol(msp, "PIN", (6000, 0), layer="SUPPORTS", scale=200)
    insert_symbol(msp, "UDL", (3000, beam_y), layer="LOADS", scale=200, W="12 kN/m", CASE="D")
    insert_symbol(msp, "FORCE", (0, beam_y), layer="LOADS", scale=200, P=hoist, DIR="+X", CASE="W")
    for x, name in ((0, "A"), (6000, "B")):                         # grid bubbles
        msp.add_circle((x, beam_y + 1500), 300, dxfattribs={"layer": "GRID"})
        msp.add_text(name, height=250, dxfattribs={"layer": "GRID"}).set_placement(
            (x, beam_y + 1500), align=ezdxf.enums.TextEntityAlignment.MIDDLE_CENTER)
    dim = msp.add_linear_dim(base=(0, -900), p1=(0, 0), p2=(6000, 0), dxfattribs={"layer": "DIMS"})
    dim.render()
    for y, text in ((0, "GROUND +0.000"), (beam_y, f"ROOF +{beam_y / 1000:.3f}")):
        msp.add_text(text, height=200, dxfattribs={"layer": "ANNO"}).set_placement(
            (-2600, y + 100))
    msp.add_mtext("GENERAL NOTES\\P1. STEEL GRADE 350.\\P2. DO NOT SCALE.",
                  dxfattribs={"layer": "ANNO", "char_height": 180, "width": 2400}).set_location((6900, beam_y))
    msp.add_lwpolyline([(6600, -2400), (10600, -2400), (10600, -1200), (6600, -1200)], close=True,
                       dxfattribs={"layer": "TITLE"})
    msp.add_text("PACKING SHED PORTAL", height=250, dxfattribs={"layer": "TITLE"}).set_placement((6800, -1700))
    msp.add_text("DWG S-101 REV A", height=180, dxfattribs={"layer": "TITLE"}).set_placement((6800, -2200))
    doc.saveas(path)
    return path


def _boxes(entities):
    from ezdxf import bbox

    out = []
    for e in entities:
        b = bbox.extents([e])
        if b.has_data:
            out.append((e, (b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y)))
    return out


def _overlap(a, b) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def _check_clear(result: Path) -> None:
    doc = ezdxf.readfile(result)
    msp = doc.modelspace()
    ours = [e for e in msp if e.dxf.layer.upper().startswith("RESULT-")]
    original = _boxes([e for e in msp if not e.dxf.layer.upper().startswith("RESULT-")])
    texts = _boxes([e for e in ours if e.dxftype() in ("TEXT", "MTEXT")])
    assert texts
    for e, b in texts:
        hits = [(o.dxftype(), o.dxf.layer) for o, ob in original if _overlap(b, ob)]
        assert not hits, f"{e.dxftype()} {e.plain_text() if e.dxftype() == 'MTEXT' else e.dxf.text!r} on {hits}"
    for i, (e, b) in enumerate(texts):
        for f, c in texts[i + 1:]:
            assert not _overlap(b, c), (e.dxf.layer, f.dxf.layer)


def test_result_texts_keep_clear_of_the_office_sheet(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text("[combinations]\nbuiltin = [\"LRFD\"]\n")
    a = office_sheet(tmp_path / "portal-A.dxf")
    b = office_sheet(tmp_path / "portal-B.dxf", beam_y=4300.0, hoist="30 kN")
    out = tmp_path / "solved"
    assert main(["solve", str(a), "--out", str(out / "portal-A.dxf"), "--no-png", "--probe", "3000,4000"]) == 0
    _check_clear(out / "portal-A.dxf")
    cmp_dir = tmp_path / "cmp"
    assert main(["compare", str(a), str(b), "--out", str(cmp_dir)]) == 0
    marked = [p for p in cmp_dir.glob("*.dxf")]
    assert marked
    for p in marked:
        _check_clear(p)


def crowded_office_sheet(path: Path) -> Path:
    """The office sheet with a room schedule written all over the bay, tight
    (texts every 450 mm across, every 300 mm up; the beam's own row kept
    free): no label finds room right beside its point there."""
    office_sheet(path)
    doc = ezdxf.readfile(path)
    msp = doc.modelspace()
    for i in range(13):
        for j in range(-9, 6):
            if j:
                msp.add_text("RM", height=200, dxfattribs={"layer": "ANNO"}).set_placement(
                    (250 + i * 450, 4050 + j * 300))
    doc.saveas(path)
    return path


def _notes(path: Path) -> str:
    return " ".join(e.plain_text() for e in ezdxf.readfile(path).modelspace().query('MTEXT[layer=="RESULT-NOTES"]'))


def test_labels_with_no_room_near_go_farther_out_and_drops_are_reported(tmp_path, capsys):
    """A label that must be written (the diagram's extreme, a reaction, a
    probe) and has no room near goes to a free place farther out with a
    leader, never onto the drafter's content; values left out are named in a
    warning on the console, in the report and on the notes layer."""
    (tmp_path / "dxf2frame.toml").write_text("[combinations]\nbuiltin = [\"LRFD\"]\n")
    src = crowded_office_sheet(tmp_path / "crowded.dxf")
    out = tmp_path / "o" / "crowded.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png", "--probe", "3000,4000"]) == 0
    _check_clear(out)
    texts = [e.dxf.text for e in ezdxf.readfile(out).modelspace().query("TEXT")]
    assert [t for t in texts if t.startswith("P1 ")], "the probe is drawn (farther out)"
    assert [t for t in texts if t.startswith("M=")], "the moment's extreme is drawn"
    warned = [w for w in json.loads(out.with_suffix(".json").read_text())["warnings"] if "want of room" in w]
    assert len(warned) == 1 and re.search(r"\d+ value label\(s\) \([NVM]=", warned[0]), warned
    assert "left out for want of room" in capsys.readouterr().err
    assert "left out for want of room" in _notes(out)


def test_a_probe_with_no_free_place_keeps_its_values_in_the_notes(tmp_path, capsys, monkeypatch):
    """When no free place is found for a probe's values (simulated: the
    search for a place farther out finds none), the marker is drawn without
    them, never on the drafter's content; the values go to the notes and the
    console, and a warning says so."""
    from dxf2frame.draw import writer

    monkeypatch.setattr(writer, "_far_spots", lambda *_a, **_k: (lambda _box: None))
    (tmp_path / "dxf2frame.toml").write_text("[combinations]\nbuiltin = [\"LRFD\"]\n")
    src = crowded_office_sheet(tmp_path / "crowded.dxf")
    out = tmp_path / "o" / "crowded.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png", "--probe", "3000,4000"]) == 0
    _check_clear(out)
    msp = ezdxf.readfile(out).modelspace()
    assert not [e for e in msp.query('TEXT[layer=="RESULT-TAGS"]') if e.dxf.text.startswith("P1 ")]
    assert msp.query('CIRCLE[layer=="RESULT-TAGS"]'), "the marker itself is drawn"
    notes = _notes(out)
    assert "Probe values (not drawn" in notes and "P1 N=" in notes
    warned = [w for w in json.loads(out.with_suffix(".json").read_text())["warnings"] if "probe marker" in w]
    assert len(warned) == 1 and "P1 N=" in warned[0]
    console = capsys.readouterr().out
    assert [ln for ln in console.splitlines() if ln.startswith("probe (3000, 4000)")], console


def test_text_height_and_fixed_moment_scale_from_settings(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS + """
[drawing]
text_height = "2.5 mm"
plot_scale = 50
[drawing.scales]
moment = "20 kN*m per m"
""")
    src = beam(tmp_path / "beam-mm.dxf", span=6000.0, insunits=4, scale=200.0)
    out = tmp_path / "o" / "beam.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png"]) == 0
    doc = ezdxf.readfile(out)
    texts = [e for e in doc.modelspace().query('TEXT[layer=="RESULT-MOMENT"]')]
    # 2.5 mm plotted at 1:50 is 125 mm on an mm drawing (definition of a plot scale)
    assert {round(e.dxf.height, 6) for e in texts if e.dxf.text.startswith("M=")} == {125.0}
    legend = [e.dxf.text for e in texts if e.dxf.text.startswith("moment:")]
    # 20 kN*m per m is 0.02 kN*m per mm on the drawing
    assert "1 mm on the drawing = 0.02 kN*m" in legend[0], legend
    outline = [e for e in doc.modelspace().query('LWPOLYLINE[layer=="RESULT-MOMENT"]')
               if any(abs(p[0]) < 1e-6 and abs(p[1]) < 1e-6 for p in e.get_points("xy"))]
    low = min(p[1] for e in outline for p in e.get_points("xy"))
    # AISC Manual Table 3-23 Case 1 (from memory): 45 kN*m at midspan -> 45 / 0.02 = 2250 mm below the beam
    assert low == pytest.approx(-2250.0, rel=1e-6)


@pytest.mark.parametrize("bad", ['moment = "50 kN*m"', 'moment = "50 kN per m"', 'deflected = "1 m per m"'])
def test_bad_fixed_scales_are_refused(bad):
    import tomllib

    from dxf2frame.errors import SettingsError

    with pytest.raises(SettingsError, match="drawing.scales"):
        Settings.from_dict(tomllib.loads("[drawing.scales]\n" + bad))


def _moment_legend(path: Path) -> str:
    doc = ezdxf.readfile(path)
    return [e.dxf.text for e in doc.modelspace().query('TEXT[layer=="RESULT-MOMENT"]')
            if e.dxf.text.startswith("moment:")][0]


@pytest.mark.parametrize("workers", ["1", "2"])  # the first pass in this process, and in a pool
def test_revisions_solved_in_one_batch_share_every_scale(tmp_path, workers):
    folder = tmp_path / "revs"
    folder.mkdir()
    (folder / "dxf2frame.toml").write_text(SETTINGS)
    a = beam(folder / "rev-A.dxf", span=6.0, insunits=6, scale=0.2, w="10 kN/m")
    b = beam(folder / "rev-B.dxf", span=6.0, insunits=6, scale=0.2, w="20 kN/m")
    alone = tmp_path / "alone"
    for f in (a, b):
        assert main(["solve", str(f), "--out", str(alone / f.name), "--no-png"]) == 0
    # on their own, twice the load (AISC Table 3-23 Case 1: M = wl^2/8) gets another scale
    assert _moment_legend(alone / "rev-A.dxf") != _moment_legend(alone / "rev-B.dxf")
    out = tmp_path / "batch"
    assert main(["solve", str(a), str(b), "--out", str(out), "--no-png", "--workers", workers]) == 0
    legends = {}
    for f in sorted(out.glob("*.dxf")):
        doc = ezdxf.readfile(f)
        legends[f.name] = sorted(e.dxf.text for e in doc.modelspace().query("TEXT")
                                 if re.match(r"(moment|shear|axial):", e.dxf.text))
    assert len(legends) == 2
    first, second = legends.values()
    assert first == second and first, legends


def test_compare_draws_no_diagrams_so_it_has_no_scale_to_share(tmp_path):
    """``compare`` of two drawings writes the comparison and one change drawing
    whose only result layer is the change marks: no diagram, no legend scale
    (so no scale to share between the revisions; README, compare section)."""
    from dxf2frame.draw.style import DEFAULT_OUTPUT_LAYERS

    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    a = beam(tmp_path / "rev-A.dxf", span=6.0, insunits=6, scale=0.2, w="10 kN/m")
    b = beam(tmp_path / "rev-B.dxf", span=6.0, insunits=6, scale=0.2, w="20 kN/m")
    out = tmp_path / "cmp"
    assert main(["compare", str(a), str(b), "--out", str(out)]) == 0
    drawings = sorted(out.glob("*.dxf"))
    assert [p.name for p in drawings] == ["rev-B-changes.dxf"]
    assert not list(out.glob("*.png"))
    doc = ezdxf.readfile(drawings[0])
    layers = {e.dxf.layer for e in doc.modelspace()}
    diagram_layers = {DEFAULT_OUTPUT_LAYERS[k] for k in ("axial", "shear", "moment", "deflected", "reactions")}
    assert "RESULT-CHANGES" in layers and not layers & diagram_layers, layers
    assert not [e for e in doc.modelspace().query("TEXT MTEXT")
                if re.search(r"on the drawing = ", e.plain_text() if e.dxftype() == "MTEXT" else e.dxf.text)]


def test_envelope_reactions_max_and_min_together_with_uplift(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text('[combinations]\nbuiltin = ["LRFD"]\n')
    src = beam(tmp_path / "roof.dxf", span=6.0, insunits=6, scale=0.2,
               udls=[(2.0, {"W": "10 kN/m", "CASE": "D"}), (4.0, {"W": "30 kN/m", "DIR": "Y", "CASE": "W"})])
    out = tmp_path / "o" / "roof.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png"]) == 0
    import csv

    rows = list(csv.DictReader((out.parent / "roof-reactions.csv").open()))
    ry = [r for r in rows if r["component"] == "Ry"]
    assert len(ry) == 2
    for r in ry:
        # ASCE/SEI 7 LRFD basic combinations with the wind acting both ways (the default):
        # 1.2D - 1.0W governs the largest Ry, 0.9D + 1.0W the smallest; statics of a simple
        # span: each support takes half, (1.2 * 10 + 30) * 6 / 2 = 126 kN and
        # (0.9 * 10 - 30) * 6 / 2 = -63 kN (uplift)
        assert float(r["max"]) == pytest.approx(126.0, rel=1e-6)
        assert float(r["min"]) == pytest.approx(-63.0, rel=1e-6)
        assert r["uplift"] == "yes"
    texts = [e.dxf.text for e in ezdxf.readfile(out).modelspace().query('TEXT[layer=="RESULT-REACTIONS"]')]
    both = [t for t in texts if t.startswith("Ry max 126")]
    assert len(both) == 2 and all("min -63" in t and "UPLIFT" in t for t in both), texts
    notes = " ".join(e.plain_text() for e in ezdxf.readfile(out).modelspace().query('MTEXT[layer=="RESULT-NOTES"]'))
    assert "Reaction schedule" in notes and "UPLIFT" in notes


def test_result_drawing_renders_with_the_ezdxf_drawing_addon(tmp_path):
    """Smoke: the office sheet's result drawing renders (ezdxf's own renderer, low resolution)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from ezdxf.addons.drawing import Frontend, RenderContext
    from ezdxf.addons.drawing.matplotlib import MatplotlibBackend

    (tmp_path / "dxf2frame.toml").write_text("[combinations]\nbuiltin = [\"LRFD\"]\n")
    src = office_sheet(tmp_path / "portal.dxf")
    out = tmp_path / "o" / "portal.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png"]) == 0
    doc = ezdxf.readfile(out)
    fig = plt.figure(figsize=(4, 3))
    ax = fig.add_axes([0, 0, 1, 1])
    Frontend(RenderContext(doc), MatplotlibBackend(ax)).draw_layout(doc.modelspace(), finalize=True)
    png = tmp_path / "render.png"
    fig.savefig(png, dpi=50)
    plt.close(fig)
    assert png.stat().st_size > 1000


def test_the_preview_window_holds_every_text_whole(tmp_path):
    """The PNG preview's window holds every text as drawn (its glyph
    outlines, measured by matplotlib), not only its insertion point: a
    reaction label at the frame's edge is not cut off."""
    from dxf2frame.draw import preview

    (tmp_path / "dxf2frame.toml").write_text("[combinations]\nbuiltin = [\"LRFD\"]\n")
    src = office_sheet(tmp_path / "portal.dxf")
    out = tmp_path / "o" / "portal.dxf"
    assert main(["solve", str(src), "--out", str(out)]) == 0
    assert out.with_suffix(".png").stat().st_size > 1000
    scene = preview._Scene(ezdxf.readfile(out), lambda _layer: True)
    x0, y0, x1, y1 = scene.box
    tol = 1e-6 * max(x1 - x0, y1 - y0)
    checked = 0
    for (_layer, x, y, h, rot, text, _c, ha, va) in scene.shapes.texts:
        path = preview._text_path(text, h, rot, ha, va, x, y)
        if path is None:
            continue
        e = path.get_extents()
        assert x0 - tol <= e.x0 and e.x1 <= x1 + tol and y0 - tol <= e.y0 and e.y1 <= y1 + tol, text
        checked += 1
    assert checked > 20


def test_member_tags_match_the_report_ids_and_no_empty_mechanism_layer(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text("[combinations]\nbuiltin = [\"LRFD\"]\n")
    src = office_sheet(tmp_path / "portal.dxf")
    out = tmp_path / "o" / "portal.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png"]) == 0
    rep = json.loads(out.with_suffix(".json").read_text())
    ids = {m["id"] for m in rep["results"][0]["members"]}
    doc = ezdxf.readfile(out)
    tags = {e.dxf.text for e in doc.modelspace().query('TEXT[layer=="RESULT-TAGS"]')}
    assert tags == ids and len(ids) == 3
    assert "RESULT-MECHANISM" not in doc.layers


def test_probe_values_reach_the_console(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    src = beam(tmp_path / "beam.dxf", span=6.0, insunits=6, scale=0.2)
    assert main(["solve", str(src), "--out", str(tmp_path / "o" / "b.dxf"), "--no-png", "--probe", "3,0"]) == 0
    out = capsys.readouterr().out
    line = [ln for ln in out.splitlines() if ln.startswith("probe (3, 0)")]
    # AISC Manual Table 3-23 Case 1 (from memory): at midspan V = 0 and M = w l^2 / 8 = 45 kN*m
    assert line and "M=45" in line[0] and "kN*m" in line[0], out


def test_probe_off_member_names_the_distance_unit(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    src = beam(tmp_path / "beam.dxf", span=6000.0, insunits=4, scale=200.0)
    assert main(["solve", str(src), "--out", str(tmp_path / "o" / "b.dxf"), "--no-png", "--probe", "3000,500"]) == 2
    assert "is 500 mm away" in capsys.readouterr().err


@pytest.mark.parametrize("unit, least", [("mm", 500.0), ("m", 0.5), ("ft", 1.5)])
def test_template_symbols_are_sized_to_the_drawing_unit(tmp_path, unit, least):
    from ezdxf import bbox

    out = tmp_path / f"new-{unit}.dxf"
    assert main(["template", str(out), "--length-unit", unit]) == 0
    doc = ezdxf.readfile(out)
    pin = [e for e in doc.blocks["PIN"] if e.dxftype() != "ATTDEF"]
    # a support symbol should read at about half a metre or more of model space (common practice)
    assert bbox.extents(pin).size.x >= least


def test_a_column_sheet_names_the_tension_face_as_drawn(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = 6
    define_layers(doc)
    define_blocks(doc)
    msp = doc.modelspace()
    msp.add_line((0, 0), (0, 3), dxfattribs={"layer": "FRAME"})
    insert_symbol(msp, "FIXED", (0, 0), layer="SUPPORTS", scale=0.2)
    insert_symbol(msp, "FORCE", (0, 3), layer="LOADS", scale=0.2, P="10 kN", ANGLE="0", CASE="D")
    src = tmp_path / "post.dxf"
    doc.saveas(src)
    out = tmp_path / "sheets"
    assert main(["explain", str(src), "--at", "0,1", "--result", "D", "--out", str(out)]) == 0
    text = " ".join(p.read_text() for p in out.rglob("*.md"))
    # statics of a cantilever post pushed to the right at its top: it bends to the right, so the
    # tension is on its left face (M = -P (3 - 1) = -20 kN*m, hogging in our sign convention)
    assert "left face" in text and "bottom of a left-to-right beam" not in text


def test_deflected_shape_is_drawn_at_service_level_with_its_largest_value(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text("""
[combinations]
builtin = ["LRFD", "ASD"]
[sections.default]
E = "200 GPa"
A = "5000 mm**2"
I = "8e7 mm**4"
""")
    src = beam(tmp_path / "beam.dxf", span=6.0, insunits=6, scale=0.2,
               udls=[(2.0, {"W": "10 kN/m", "CASE": "D"}), (4.0, {"W": "5 kN/m", "CASE": "L"})])
    out = tmp_path / "o" / "beam.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png"]) == 0
    texts = [e.dxf.text for e in ezdxf.readfile(out).modelspace().query('TEXT[layer=="RESULT-DEFLECTED"]')]
    got = [re.match(r"max displacement " + NUM + r" mm \((.+)\)", t) for t in texts]
    got = [m for m in got if m]
    assert len(got) == 1, texts
    # AISC Manual Table 3-23 Case 1 (from memory): 5 w l^4 / (384 E I) under the service load D + L
    # (ASCE/SEI 7 ASD combination 2): 5 * 15e3 * 6^4 / (384 * 200e9 * 8e-5) = 15.82 mm
    assert float(got[0].group(1)) == pytest.approx(15.82, rel=5e-3)
    assert got[0].group(2).replace(" ", "") in ("D+L", "1.0D+1.0L", "D+1.0L", "1D+1L")


def portal(path: Path, right: float) -> Path:
    """A portal in metres: columns at x = 0 and ``right``, 4 m tall, both pinned at the base."""
    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = 6
    define_layers(doc)
    define_blocks(doc)
    msp = doc.modelspace()
    for a, b in (((0, 0), (0, 4)), ((0, 4), (right, 4)), ((right, 4), (right, 0))):
        msp.add_line(a, b, dxfattribs={"layer": "FRAME"})
    insert_symbol(msp, "PIN", (0, 0), layer="SUPPORTS", scale=0.2)
    insert_symbol(msp, "PIN", (right, 0), layer="SUPPORTS", scale=0.2)
    insert_symbol(msp, "UDL", (right / 2, 4), layer="LOADS", scale=0.2, W="10 kN/m", CASE="D")
    doc.saveas(path)
    return path


def test_a_support_moved_with_its_matched_column_is_the_same_support(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    a = portal(tmp_path / "portal-A.dxf", 6.0)
    b = portal(tmp_path / "portal-B.dxf", 6.3)
    out = tmp_path / "cmp"
    assert main(["compare", str(a), str(b), "--out", str(out)]) == 0
    data = json.loads(next(out.glob("*.json")).read_text())
    pair = data["pairs"][-1] if "pairs" in data else data
    assert not pair.get("new_supports")
    moved = [r for r in pair["reactions"] if r["old_at"] != r["new_at"]]
    assert len(moved) == 1 and moved[0]["old_at"] == [6.0, 0.0] and moved[0]["new_at"] == [6.3, 0.0]
    assert not pair.get("removed_supports")


def test_probe_marked_on_the_tags_layer(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text(SETTINGS)
    src = beam(tmp_path / "beam.dxf", span=6.0, insunits=6, scale=0.2)
    out = tmp_path / "o" / "b.dxf"
    assert main(["solve", str(src), "--out", str(out), "--no-png", "--probe", "3,0"]) == 0
    texts = [e.dxf.text for e in ezdxf.readfile(out).modelspace().query('TEXT[layer=="RESULT-TAGS"]')]
    probe = [t for t in texts if t.startswith("P1 ")]
    # AISC Manual Table 3-23 Case 1 (from memory): at midspan V = 0, M = w l^2 / 8 = 45 kN*m
    assert probe and "M=45" in probe[0], texts


# -- hand-check sheets: symbols sized from the sheet's scale, texts clear of each other -------------


def _gable_free_body(x: float):
    """A gable frame like the demo's (columns 5 m, rafters rising 1.5 m over
    4.5 m, fixed feet), three distributed loads stacked on each rafter (dead,
    snow on plan, wind along the rafter's normal) and a sway load; cut in the
    left rafter at ``x`` [m] from its start."""
    from dxf2frame.solver import DistributedLoad, Frame, NodalLoad, Section, solve

    sec = Section(E=200e9, A=5e-3, I=8e-5)
    f = Frame()
    n = [f.add_node(*p) for p in ((0, 0), (0, 5), (4.5, 6.5), (9, 5), (9, 0))]
    f.add_member(n[0], n[1], sec, id="C1")
    r1 = f.add_member(n[1], n[2], sec, id="R1")
    r2 = f.add_member(n[2], n[3], sec, id="R2")
    f.add_member(n[4], n[3], sec, id="C2")
    f.add_support(n[0], "fixed")
    f.add_support(n[4], "fixed")
    for r in (r1, r2):
        f.add_load(DistributedLoad(r.id, q1=(0.0, -1.8e3)))
        f.add_load(DistributedLoad(r.id, q1=(0.0, -1.2e3), projected=True))
        f.add_load(DistributedLoad(r.id, q1=(0.0, -0.7e3), q2=(0.0, -0.2e3)))
    f.add_load(NodalLoad(n[1], fx=4e3))
    res = solve(f)["D"]
    from dxf2frame.handcheck import cut_free_body

    return cut_free_body(f, res, r1.id, x, side="end")


def _texts_and_arrows(fig):
    """(text, box in display pixels) of every non-empty text of the figure's
    axes (titles included), and (gid, arrow style, length [inch]) of every
    arrow, measured by matplotlib's own renderer after drawing."""
    from matplotlib.text import Annotation

    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    texts, arrows = [], []
    for ax in fig.axes:
        for t in [*ax.texts, ax.title]:
            if isinstance(t, Annotation):
                tail = ax.transData.transform(t.xyann)
                head = ax.transData.transform(t.xy)
                arrows.append((t.get_gid(), t.arrowprops["arrowstyle"], float(np.hypot(*(head - tail))) / fig.dpi))
            if t.get_text().strip() and t.get_visible():
                b = t.get_window_extent(renderer)
                texts.append((t.get_text(), (b.x0, b.y0, b.x1, b.y1)))
    return texts, arrows


@pytest.mark.parametrize("x", [0.2, 2.5, 4.74])
def test_hand_check_sheet_texts_clear_and_arrows_readable(x):
    """On the figure of a hand-check sheet (PNG) and its PDF page no two
    texts' boxes intersect (matplotlib's renderer measures them: the sheet
    is a matplotlib figure, not a DXF), and every force arrow keeps a
    readable length on the paper whatever the free body's size."""
    from dxf2frame.handcheck.figures import sheet_figure, sheet_page
    from dxf2frame.report import unit_factors

    fb = _gable_free_body(x)
    uf = unit_factors("kN", "m")
    for fig in (sheet_figure(fb, uf), sheet_page(fb, uf, ["sheet text"])):
        texts, arrows = _texts_and_arrows(fig)
        assert len(texts) > 8
        for i, (a, ba) in enumerate(texts):
            for b, bb in texts[i + 1:]:
                assert not _overlap(ba, bb), (a, b)
        forces = [length for gid, _style, length in arrows if gid == "force"]
        rows = [length for gid, style, length in arrows if gid == "row" and style == "-|>"]
        assert len(forces) >= 6 and rows
        # an arrow shorter than about 0.4 inch on paper reads as a tick (common practice)
        assert min(forces) >= 0.4, sorted(forces)[:3]
        # a row arrow keeps at least about three head lengths (common practice)
        assert min(rows) >= 0.12, sorted(rows)[:3]

