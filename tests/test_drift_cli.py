"""Storeys, drift, node tables and failing checks, through the CLI.

Drawings are built with ezdxf in the test (tests/dxf_builders.py); every
numeric check names its source beside it.
"""
from __future__ import annotations

import csv
import json
import re

import ezdxf
import pytest
import sympy as sp

from dxf2frame.cli import main

from dxf_builders import add_load, add_member, add_support, new_drawing, save

E = 200e9          # Pa
IC = 8.0e-5        # m**4, columns
A_RIGID = "1 m**2"  # axially (nearly) rigid members: the sway formulas neglect axial strain


def _settings(tmp_path, body: str) -> None:
    (tmp_path / "dxf2frame.toml").write_text(body, encoding="utf-8")


def _sections(ib: float) -> str:
    return f"""
[units]
force = "kN"
[sections.default]
E = "200 GPa"
A = "{A_RIGID}"
I = "{IC} m**4"
[sections."FRAME-BEAMS"]
I = "{ib} m**4"
[combinations]
builtin = []
"""


def _portal_doc(h: float, span: float, push_kn: float, *, units: str = "m", push_at: float | None = None):
    """A fixed-base portal in drawing units, pushed toward +X at the left
    column's height ``push_at`` (default: its top)."""
    doc = new_drawing(units=units)
    msp = doc.modelspace()
    doc.layers.add("FRAME-BEAMS")
    add_member(msp, (0, 0), (0, h))
    add_member(msp, (span, 0), (span, h))
    add_member(msp, (0, h), (span, h), layer="FRAME-BEAMS")
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "fixed", (span, 0))
    add_load(msp, "force", (0, h if push_at is None else push_at), P=f"{push_kn} kN", ANGLE="0", CASE="W")
    return doc


def _portal(tmp_path, h: float, span: float, push_kn: float, name: str = "portal.dxf"):
    return save(_portal_doc(h, span, push_kn), tmp_path / name)


def _solve(tmp_path, path, capsys, *extra):
    out = tmp_path / "out"
    code = main(["solve", str(path), "--out", str(out), "--no-png", *extra])
    text = capsys.readouterr()
    stem = path.stem + "-results"
    rep = json.loads((out / f"{stem}.json").read_text()) if (out / f"{stem}.json").exists() else None
    return code, rep, text, out, stem


def _slope_deflection_sway(h: float, L: float, H: float, ic: float, ib: float) -> float:
    """Sway of a fixed-base portal by the slope-deflection method (the
    published worked method), solved here with sympy: unknowns the joint
    rotations of B and C and the sway; clockwise end moments
    M_ij = 2EI/l (2 th_i + th_j - 3 psi), psi = sway / h for the columns."""
    tb, tc, d = sp.symbols("tb tc d")
    psi = d / h
    mab = 2 * E * ic / h * (tb - 3 * psi)
    mba = 2 * E * ic / h * (2 * tb - 3 * psi)
    mbc = 2 * E * ib / L * (2 * tb + tc)
    mcb = 2 * E * ib / L * (2 * tc + tb)
    mcd = 2 * E * ic / h * (2 * tc - 3 * psi)
    mdc = 2 * E * ic / h * (tc - 3 * psi)
    sol = sp.solve([mba + mbc, mcb + mcd, (mab + mba) / h + (mcd + mdc) / h + H], [tb, tc, d], dict=True)[0]
    return float(sol[d])


def test_portal_sway_drift_and_node_table(tmp_path, capsys):
    h, L, H, ib = 4.0, 6.0, 10e3, 1.2e-4
    _settings(tmp_path, _sections(ib))
    path = _portal(tmp_path, h, L, H / 1e3)
    code, rep, text, out, stem = _solve(tmp_path, path, capsys, "--units", "kN,m")
    assert code == 0, text.err
    sway = _slope_deflection_sway(h, L, H, IC, ib)
    (st,) = rep["storeys"]
    assert st["height"] == pytest.approx(h)
    # slope-deflection method (solved with sympy above); axial strain of A = 1 m**2 is below 1e-6 of it
    assert st["drift"] == pytest.approx(sway, rel=1e-4)
    assert st["ratio"] == pytest.approx(sway / h, rel=1e-4)
    assert st["ratio_text"] == f"h/{h / sway:.0f}"
    assert st["governing"] == "W" and st["ok"] is True
    (w,) = [r for r in rep["results"] if r["name"] == "W"]
    assert w["drift"][0]["drift"] == pytest.approx(sway, rel=1e-4)
    tops = [n for n in w["nodes"] if n["y"] == pytest.approx(h)]
    assert len(tops) == 2
    for n in tops:
        assert n["ux"] == pytest.approx(sway, rel=1e-3)          # slope deflection: the beam stays its length
    bases = [n for n in w["nodes"] if n["y"] == 0]
    assert all(n["ux"] == 0 and n["uy"] == 0 and n["rotation"] == 0 for n in bases)   # fixed supports
    rows = list(csv.DictReader((out / f"{stem}-drift.csv").open()))
    assert [r["storey"] for r in rows] == ["1"]
    assert float(rows[0]["drift"]) == pytest.approx(sway, rel=1e-4)      # slope deflection, as above
    nodes = list(csv.DictReader((out / f"{stem}-nodes.csv").open()))
    assert len(nodes) == 4 and set(nodes[0]) == {"result", "kind", "node", "x", "y", "ux", "uy", "rotation"}
    # the ratio is drawn at the level on the deflected-shape layer
    doc = ezdxf.readfile(out / f"{stem}.dxf")
    texts = [t.dxf.text for t in doc.modelspace().query('TEXT[layer=="RESULT-DEFLECTED"]')]
    assert f"h/{h / sway:.0f}" in texts
    assert f"h/{h / sway:.0f}" in text.out                               # the summary's drift column


def test_stiff_beam_portal_tends_to_fixed_fixed_columns(tmp_path, capsys):
    h, L, H = 4.0, 6.0, 10e3
    _settings(tmp_path, _sections(IC * 1e4))
    code, rep, text, *_ = _solve(tmp_path, _portal(tmp_path, h, L, H / 1e3), capsys, "--units", "kN,m")
    assert code == 0, text.err
    # sway stiffness of a fixed-fixed column 12EI/h^3, two columns (from memory); beam 1e4 x stiffer
    assert rep["storeys"][0]["drift"] == pytest.approx(H * h**3 / (24 * E * IC), rel=1e-3)


def test_two_storey_shear_frame(tmp_path, capsys):
    h1, h2, L, H1, H2 = 4.0, 3.0, 6.0, 20e3, 10e3
    _settings(tmp_path, _sections(IC * 1e4))
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    doc.layers.add("FRAME-BEAMS")
    for x in (0, L):
        add_member(msp, (x, 0), (x, h1))
        add_member(msp, (x, h1), (x, h1 + h2))
        add_support(msp, "fixed", (x, 0))
    add_member(msp, (0, h1), (L, h1), layer="FRAME-BEAMS")
    add_member(msp, (0, h1 + h2), (L, h1 + h2), layer="FRAME-BEAMS")
    add_load(msp, "force", (0, h1), P=f"{H1 / 1e3} kN", ANGLE="0", CASE="W")
    add_load(msp, "force", (0, h1 + h2), P=f"{H2 / 1e3} kN", ANGLE="0", CASE="W")
    path = save(doc, tmp_path / "shear.dxf")
    code, rep, text, *_ = _solve(tmp_path, path, capsys, "--units", "kN,m")
    assert code == 0, text.err
    s1, s2 = rep["storeys"]
    assert (s1["bottom"], s1["top"], s2["top"]) == (0, h1, h1 + h2)
    # shear-type storey: drift = V h^3 / (12 sum EI), fixed-fixed columns (sway stiffness 12EI/h^3, from memory)
    assert s1["drift"] == pytest.approx((H1 + H2) * h1**3 / (12 * 2 * E * IC), rel=2e-3)
    assert s2["drift"] == pytest.approx(H2 * h2**3 / (12 * 2 * E * IC), rel=2e-3)


def test_failing_drift_is_marked(tmp_path, capsys):
    h, L, H = 4.0, 6.0, 10e3
    _settings(tmp_path, _sections(1.2e-4) + "[drift]\nlimit = 5000\n")
    code, rep, text, out, stem = _solve(tmp_path, _portal(tmp_path, h, L, H / 1e3), capsys)
    assert code == 0
    sway = _slope_deflection_sway(h, L, H, IC, 1.2e-4)
    assert h / sway < 5000                                   # slope deflection: about h/1300, worse than h/5000
    assert rep["storeys"][0]["ok"] is False
    (chk,) = [c for c in rep["checks"] if c["check"] == "drift"]
    assert chk["storey"] == 1 and chk["result"] == "W" and chk["limit"] == 5000
    assert "drift check fails: storey 1" in text.err
    assert f"h/{h / sway:.0f} !" in text.out and "checks:" in text.out
    doc = ezdxf.readfile(out / f"{stem}.dxf")
    assert f"h/{h / sway:.0f} !" in [t.dxf.text for t in doc.modelspace().query('TEXT[layer=="RESULT-DEFLECTED"]')]


def test_failing_span_deflection_is_marked(tmp_path, capsys):
    # a simply supported beam, 6 m, w = 20 kN/m, I = 2e-6 m**4: deflection 5wL^4/(384EI)
    # (AISC Manual beam diagrams, case 1, from memory) = 0.844 m, L/7 -- far worse than L/360
    L, w, i = 6.0, 20e3, 2e-6
    _settings(tmp_path, f'[sections.default]\nE = "200 GPa"\nA = "0.01 m**2"\nI = "{i} m**4"\n'
                        '[combinations]\nbuiltin = []\n[deflection]\nlimit = 360\n')
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    line = add_member(msp, (0, 0), (L, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (L, 0))
    add_load(msp, "udl", (L / 2, 0), W=f"{w / 1e3} kN/m", CASE="D")
    code, rep, text, *_ = _solve(tmp_path, save(doc, tmp_path / "soft.dxf"), capsys)
    assert code == 0
    ratio = L / (5 * w * L**4 / (384 * E * i))          # AISC beam diagrams case 1 (from memory)
    (chk,) = rep["checks"]
    assert chk["check"] == "deflection" and chk["handle"] == line.dxf.handle and chk["limit"] == 360
    assert chk["ratio"] == pytest.approx(ratio, rel=1e-6)
    assert f"handle {line.dxf.handle}" in text.err and "deflection check fails" in text.err
    assert f"L/{ratio:.0f} !" in text.out and "checks:" in text.out
    assert rep["storeys"] == []                           # a beam has no storey


def test_without_sections_nodes_are_null(tmp_path, capsys):
    # a determinate frame solves without sections: no displacements, so no drift
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, 3))
    add_member(msp, (0, 3), (4, 3))
    add_support(msp, "fixed", (0, 0))
    add_load(msp, "force", (0, 3), P="5 kN", ANGLE="0", CASE="W")
    code, rep, text, *_ = _solve(tmp_path, save(doc, tmp_path / "cant.dxf"), capsys)
    assert code == 0, text.err
    res = rep["results"][0]
    assert all(n["ux"] is None and n["rotation"] is None for n in res["nodes"])
    assert res["drift"] == []
    assert rep["storeys"][0]["drift"] is None and rep["storeys"][0]["ok"] is None


@pytest.mark.parametrize("body, key", [
    ("[drift]\nmeasure = \"median\"\n", "drift.measure"),
    ("[drift]\nlimt = 400\n", "drift.limt"),
    ("[drift]\nlevels = []\n", "drift.levels"),
    ("[drift]\nlevels = [2.5]\n", "drift.levels"),        # no column top at 2.5 m
])
def test_bad_drift_settings(tmp_path, capsys, body, key):
    _settings(tmp_path, _sections(1.2e-4) + body)
    code, rep, text, out, _ = _solve(tmp_path, _portal(tmp_path, 4.0, 6.0, 10.0), capsys)
    assert code == 2 and key in text.err
    assert not out.exists() or not any(out.iterdir())


def test_levels_from_settings(tmp_path, capsys):
    _settings(tmp_path, _sections(1.2e-4) + "[drift]\nlevels = [4.0]\nmeasure = \"max\"\n")
    code, rep, text, *_ = _solve(tmp_path, _portal(tmp_path, 4.0, 6.0, 10.0), capsys)
    assert code == 0
    assert [s["top"] for s in rep["storeys"]] == [4.0] and rep["drift_check"]["measure"] == "max"


def test_drawing_in_millimetres_levels_in_drawing_units(tmp_path, capsys):
    h, L, H, ib = 4.0, 6.0, 10e3, 1.2e-4
    _settings(tmp_path, _sections(ib) + "[drift]\nlevels = [4000]\n")
    doc = _portal_doc(4000, 6000, 10, units="mm")
    code, rep, text, *_ = _solve(tmp_path, save(doc, tmp_path / "mm.dxf"), capsys, "--units", "kN,mm")
    assert code == 0, text.err
    (st,) = rep["storeys"]
    assert st["top"] == 4000 and st["height"] == 4000
    # slope-deflection method (sympy, above), in millimetres
    assert st["drift"] == pytest.approx(_slope_deflection_sway(h, L, H, IC, ib) * 1e3, rel=1e-4)


def test_storey_warnings_give_levels_in_the_drawing_unit(tmp_path, capsys):
    """A column that stops short of the level below is left out of the drift;
    the warning names the level as the drafter drew it (mm here), not in
    the solver's metres."""
    _settings(tmp_path, _sections(1.2e-4))
    doc = _portal_doc(3000, 6000, 10, units="mm", push_at=6000)
    msp = doc.modelspace()
    add_member(msp, (0, 3000), (0, 6000))
    add_member(msp, (3000, 4500), (3000, 6000))          # a post standing on nothing at the lower level
    add_member(msp, (6000, 3000), (6000, 6000))
    add_member(msp, (0, 6000), (6000, 6000), layer="FRAME-BEAMS")
    add_member(msp, (3000, 4500), (6000, 4500), layer="FRAME-BEAMS")
    code, rep, text, *_ = _solve(tmp_path, save(doc, tmp_path / "mm.dxf"), capsys)
    assert code == 0, text.err
    warned = [w for w in text.err.splitlines() if "does not reach the level" in w]
    assert warned and all(re.search(r"the level at \d+ mm;", w) for w in warned), text.err
