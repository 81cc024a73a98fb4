"""Sections from shape texts and self-weight, through the CLI.

Drawings are built with ezdxf in the test (tests/dxf_builders.py); every
numeric check names its source beside it.
"""
from __future__ import annotations

import json
import math
import re

import pytest

from dxf2frame.cli import main

from dxf_builders import add_load, add_member, add_support, new_drawing, save

G = 9.80665          # standard gravity [m/s^2] (CGPM 1901)
RHO_STEEL = 7850.0   # kg/m^3 (AISC Manual 490 lb/ft^3, from memory)


def _beam(tmp_path, toml: str, *, span: float = 6.0, rise: float = 0.0, udl: bool = False):
    (tmp_path / "dxf2frame.toml").write_text(toml, encoding="utf-8")
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (span, rise))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (span, rise))
    if udl:
        add_load(msp, "udl", (span / 2, rise / 2), W="5 kN/m", CASE="L")
    return save(doc, tmp_path / "beam.dxf")


def _solve(tmp_path, path, capsys):
    out = tmp_path / "out"
    code = main(["solve", str(path), "--out", str(out), "--no-png", "--units", "kN,m"])
    text = capsys.readouterr()
    f = out / "beam-results.json"
    return code, (json.loads(f.read_text()) if f.exists() else None), text


def _check(path, capsys):
    code = main(["check", str(path)])
    return code, capsys.readouterr()


def _i_section(d, b, tw, tf):
    """A and I of an I section by the parallel-axis theorem (Roark's Formulas
    for Stress and Strain, properties of plane areas, from memory): two
    flanges b*tf at (d - tf)/2 from the axis, a web tw*(d - 2tf)."""
    hw = d - 2 * tf
    a = 2 * b * tf + tw * hw
    i = 2 * (b * tf**3 / 12 + b * tf * ((d - tf) / 2) ** 2) + tw * hw**3 / 12
    return a, i


def test_shape_gives_a_and_i_printed_by_check(tmp_path, capsys):
    path = _beam(tmp_path, '[sections.default]\nE = "200 GPa"\nshape = "I 310x165x6x10"\n'
                           '[sections."FRAME"]\nshape = "RECT 200x400"\nE = "30 GPa"\n')
    code, out = _check(path, capsys)
    assert code == 0, out.err
    line = next(ln for ln in out.out.splitlines() if "FRAME:" in ln)
    # rectangle: A = b h, I = b h^3 / 12 (Roark's, properties of plane areas, from memory)
    assert f"A = {200 * 400:.5g} mm**2" in line and f"I = {200 * 400**3 / 12:.5g} mm**4" in line


def test_shape_in_inches_is_reported_in_inches(tmp_path, capsys):
    path = _beam(tmp_path, '[sections.default]\nmaterial = "steel"\nshape = "CHS 6.625x0.28"\nshape_unit = "in"\n')
    code, out = _check(path, capsys)
    assert code == 0, out.err
    D, t = 6.625, 0.28
    d = D - 2 * t
    # tube: A = pi (D^2 - d^2) / 4, I = pi (D^4 - d^4) / 64 (Roark's, properties of plane areas, from memory)
    assert f"A = {math.pi * (D**2 - d**2) / 4:.5g} in**2" in out.out
    assert f"I = {math.pi * (D**4 - d**4) / 64:.5g} in**4" in out.out
    assert "E = 200 GPa" in out.out      # steel, AISC 360 E = 29,000 ksi (from memory)


def test_i_shape_stiffness_reaches_the_deflection(tmp_path, capsys):
    L, w = 6.0, 5e3
    path = _beam(tmp_path, '[sections.default]\nE = "200 GPa"\nshape = "I 310x165x6x10"\n[combinations]\nbuiltin = []\n',
                 span=L, udl=True)
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 0, text.err
    _, i = _i_section(0.310, 0.165, 0.006, 0.010)
    (m,) = rep["results"][0]["members"]
    # simply supported beam, uniform load: 5 w L^4 / (384 E I) (AISC Manual beam diagrams case 1, from memory)
    assert m["deflection_rel_max"] == pytest.approx(5 * w * L**4 / (384 * 200e9 * i), rel=1e-6)


def test_self_weight_of_a_simple_beam(tmp_path, capsys):
    L = 6.0
    path = _beam(tmp_path, '[sections.default]\nE = "200 GPa"\nshape = "I 310x165x6x10"\nmaterial = "steel"\n'
                           '[self_weight]\ncase = "D"\n[combinations]\nbuiltin = []\n', span=L)
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 0, text.err
    a, _ = _i_section(0.310, 0.165, 0.006, 0.010)
    q = RHO_STEEL * G * a / 1e3                       # kN/m
    (d,) = rep["results"]
    assert d["name"] == "D"
    # simply supported beam, uniform load: M_mid = q L^2 / 8 (AISC Manual beam diagrams case 1, from memory)
    assert d["members"][0]["m_max"] == pytest.approx(q * L**2 / 8, rel=1e-9)
    assert any(n.startswith("self-weight") for n in rep["notes"])
    code, out = _check(path, capsys)
    assert "self-weight" in out.out and f"{q * L:.4g} kN" in out.out


@pytest.mark.parametrize("density, said", [("7850 kg/m**3", False), ("7850 t/m**3", True), ("7.85 kg/m**3", True),
                                           ("490 lb/ft**3", False)])
def test_a_density_in_the_wrong_unit_is_said(tmp_path, capsys, density, said):
    # steel is 7850 kg/m^3 = 490 lb/ft^3 (AISC Manual, from memory); 7850 t/m^3
    # is a thousand times that and 7.85 kg/m^3 a thousandth: both said, by
    # check and solve, and solved as given
    path = _beam(tmp_path, f'[sections.default]\nE = "200 GPa"\nshape = "I 310x165x6x10"\ndensity = "{density}"\n'
                           '[self_weight]\ncase = "D"\n[combinations]\nbuiltin = []\n')
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 0, text.err
    hits = [w for w in rep["warnings"] if "density" in w and "check its unit" in w]
    assert len(hits) == int(said)
    code, out = _check(path, capsys)
    assert ("check its unit" in out.out) == said


def test_self_weight_of_an_inclined_member(tmp_path, capsys):
    span, rise = 4.0, 3.0                              # a 3-4-5 member, 5 m long
    path = _beam(tmp_path, '[sections.default]\nE = "200 GPa"\nA = "4000 mm**2"\nI = "1e7 mm**4"\n'
                           'density = "7850 kg/m**3"\n[self_weight]\ncase = "SW"\n[combinations]\nbuiltin = []\n',
                 span=span, rise=rise)
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 0, text.err
    (sw,) = rep["results"]
    assert sw["name"] == "SW"
    # statics: the vertical reactions carry the whole weight rho g A (member length)
    total = sum(r["fy"] for r in sw["reactions"])
    assert total == pytest.approx(RHO_STEEL * G * 4000e-6 * 5.0 / 1e3, rel=1e-9)


@pytest.mark.parametrize("toml, key", [
    ('[sections.default]\nE = "200 GPa"\nshape = "I 310x165"\n', "sections.default.shape"),
    ('[sections.default]\nE = "200 GPa"\nshape = "RECT 2x4"\nA = "1 m**2"\n', "sections.default.shape"),
    ('[sections.default]\nE = "200 GPa"\nshape = "RECT 2x4"\nshape_unit = "furlong"\n', "sections.default.shape_unit"),
    ('[sections.default]\nshape = "RECT 2x4"\nmaterial = "cheese"\n', "sections.default.material"),
    ('[sections.default]\nE = "200 GPa"\nshape = "RECT 200x400"\n[self_weight]\ncase = "D"\n', "self_weight.case"),
    ('[self_weight]\ncase = "D"\nrho = 1\n', "self_weight.rho"),
])
def test_bad_shape_and_self_weight_settings(tmp_path, capsys, toml, key):
    path = _beam(tmp_path, toml)
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 2 and key in text.err and rep is None


def _angle_drawing(tmp_path, toml: str, *, closed: bool = True):
    (tmp_path / "dxf2frame.toml").write_text(toml, encoding="utf-8")
    doc = new_drawing(units="mm")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6000, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6000, 0))
    add_load(msp, "udl", (3000, 0), W="2 kN/m", CASE="D")
    doc.layers.add("SECTION-L1")
    # an L: a 100 x 10 leg along the bottom and a 10 x 140 leg up the left side (mm)
    msp.add_lwpolyline([(20000, 0), (20100, 0), (20100, 10), (20010, 10), (20010, 150), (20000, 150)],
                       close=closed, dxfattribs={"layer": "SECTION-L1"})
    return save(doc, tmp_path / "beam.dxf")


def test_section_drawn_as_an_outline(tmp_path, capsys):
    path = _angle_drawing(tmp_path, '[sections.default]\nE = "200 GPa"\noutline = "L1"\n[combinations]\nbuiltin = []\n')
    # hand computation (parallel-axis theorem, worked here): legs A1 = 100*10 at y 5, A2 = 10*140 at y 80
    a1, y1, a2, y2 = 1000.0, 5.0, 1400.0, 80.0
    area = a1 + a2
    yc = (a1 * y1 + a2 * y2) / area
    inertia = 100 * 10**3 / 12 + a1 * (y1 - yc) ** 2 + 10 * 140**3 / 12 + a2 * (y2 - yc) ** 2   # mm^4
    code, out = _check(path, capsys)
    assert code == 0, out.err
    got = re.search(r"A = (\S+) mm\*\*2, I = (\S+) mm\*\*4", out.out)
    assert float(got.group(1)) == pytest.approx(area, rel=1e-4)          # printed to 5 digits
    assert float(got.group(2)) == pytest.approx(inertia, rel=1e-4)
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 0, text.err
    # simply supported beam, uniform load: 5 w L^4 / (384 E I) (AISC Manual beam diagrams case 1, from memory)
    defl = 5 * 2e3 * 6.0**4 / (384 * 200e9 * inertia * 1e-12)
    assert rep["results"][0]["members"][0]["deflection_rel_max"] == pytest.approx(defl, rel=1e-6)


def test_section_outline_missing_or_open(tmp_path, capsys):
    path = _angle_drawing(tmp_path, '[sections.default]\nE = "200 GPa"\noutline = "B7"\n')
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 2 and "sections.default.outline" in text.err and "SECTION-B7" in text.err and rep is None
    path = _angle_drawing(tmp_path, '[sections.default]\nE = "200 GPa"\noutline = "L1"\n', closed=False)
    code, rep, text = _solve(tmp_path, path, capsys)
    assert code == 2 and "SECTION-L1" in text.err and "closed" in text.err
