"""Indeterminate sketches without a settings file: equal relative stiffness.

A sketch rarely carries sections; hand methods solve an indeterminate frame
with the same EI for every member and no axial shortening.  Each drawing
here is solved through the CLI with no settings file at all and compared
with a published closed form within 0.5 %; the report has no deflections,
and check and solve agree (both exit 0, both warn).
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from dxf_builders import add_load, add_member, add_support, new_drawing
from dxf2frame.cli import main

W = 10.0    # kN/m
L = 6.0     # m
REL = 5e-3  # 0.5 %


def _solve(tmp_path: Path, doc, capsys) -> dict:
    path = tmp_path / "sketch.dxf"
    doc.saveas(path)
    assert not (tmp_path / "dxf2frame.toml").exists()
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr()
    assert "equal relative stiffness" in out.out
    assert main(["solve", str(path), "--out", str(tmp_path / "out"), "--no-png"]) == 0
    err = capsys.readouterr().err
    assert "equal relative stiffness" in err
    rep = json.loads((tmp_path / "out" / "sketch-results.json").read_text())
    assert any("equal relative stiffness" in w for w in rep["warnings"])
    case = next(r for r in rep["results"] if r["kind"] == "case" and r["name"] == "D")
    for m in case["members"]:
        assert m["deflection_max"] is None and m["deflection_ratio"] is None and m["deflection_ok"] is None
    notes = (tmp_path / "out" / "sketch-results.dxf").read_text(errors="replace")
    assert "equal relative stiffness" in notes        # the notes layer carries the warning
    return case


def _reaction(case: dict, x: float) -> dict:
    return next(r for r in case["reactions"] if math.isclose(r["x"], x, abs_tol=1e-9))


def _m_extremes(case: dict) -> tuple[float, float]:
    return (min(m["m_min"] for m in case["members"]), max(m["m_max"] for m in case["members"]))


def test_propped_cantilever_udl(tmp_path, capsys):
    # AISC Manual, beam diagrams and formulas: beam fixed at one end, supported
    # at the other, uniformly distributed load (from memory): R1 = 3wl/8 at the
    # supported end, R2 = 5wl/8 at the fixed end, M at the fixed end = wl**2/8,
    # largest positive moment 9wl**2/128 at 3l/8 from the supported end
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (L, 0))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "roller", (L, 0))
    add_load(msp, "udl", (L / 2, 0), W=f"{W} kN/m", CASE="D")
    case = _solve(tmp_path, doc, capsys)
    assert _reaction(case, L)["fy"] == pytest.approx(3 * W * L / 8, rel=REL)
    assert _reaction(case, 0.0)["fy"] == pytest.approx(5 * W * L / 8, rel=REL)
    assert abs(_reaction(case, 0.0)["m"]) == pytest.approx(W * L**2 / 8, rel=REL)
    m_min, m_max = _m_extremes(case)
    assert m_min == pytest.approx(-W * L**2 / 8, rel=REL)
    assert m_max == pytest.approx(9 * W * L**2 / 128, rel=REL)


def test_fixed_fixed_beam_udl(tmp_path, capsys):
    # AISC Manual, beam diagrams and formulas: beam fixed at both ends,
    # uniformly distributed load (from memory): R = wl/2, M at the ends =
    # wl**2/12 (hogging), M at the centre = wl**2/24
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (L, 0))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "fixed", (L, 0))
    add_load(msp, "udl", (L / 2, 0), W=f"{W} kN/m", CASE="D")
    case = _solve(tmp_path, doc, capsys)
    for x in (0.0, L):
        assert _reaction(case, x)["fy"] == pytest.approx(W * L / 2, rel=REL)
    m_min, m_max = _m_extremes(case)
    assert m_min == pytest.approx(-W * L**2 / 12, rel=REL)
    assert m_max == pytest.approx(W * L**2 / 24, rel=REL)


def test_two_span_continuous_beam_udl(tmp_path, capsys):
    # AISC Manual, beam diagrams and formulas: continuous beam, two equal
    # spans, uniform load on both spans (from memory): R1 = R3 = 3wl/8,
    # R2 = 10wl/8, M over the middle support = wl**2/8 (hogging), largest
    # positive moment 9wl**2/128.  Drawn as one line over three supports.
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (2 * L, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (L, 0))
    add_support(msp, "roller", (2 * L, 0))
    add_load(msp, "udl", (L / 2, 0), W=f"{W} kN/m", CASE="D")
    add_load(msp, "udl", (1.5 * L, 0), W=f"{W} kN/m", CASE="D")
    case = _solve(tmp_path, doc, capsys)
    assert _reaction(case, 0.0)["fy"] == pytest.approx(3 * W * L / 8, rel=REL)
    assert _reaction(case, L)["fy"] == pytest.approx(10 * W * L / 8, rel=REL)
    assert _reaction(case, 2 * L)["fy"] == pytest.approx(3 * W * L / 8, rel=REL)
    m_min, m_max = _m_extremes(case)
    assert m_min == pytest.approx(-W * L**2 / 8, rel=REL)
    assert m_max == pytest.approx(9 * W * L**2 / 128, rel=REL)


def test_pinned_base_portal_equal_ei_slope_deflection(tmp_path, capsys):
    """Portal: columns of height h on pins, beam of span l, rigid corners
    B (top left) and C (top right), UDL w on the beam; equal EI.

    Slope deflection, worked here.  By symmetry there is no sway and
    theta_C = -theta_B.  Beam BC: M_BC = (2EI/l)(2 theta_B + theta_C) - wl**2/12
    = (2EI/l) theta_B - wl**2/12.  Column AB, pinned at A (modified
    slope-deflection equation for a far end pinned): M_BA = (3EI/h) theta_B.
    Joint B: M_BA + M_BC = 0 gives EI theta_B (3/h + 2/l) = wl**2/12, so the
    corner moment is M_B = (wl**2/12) (3/h) / (3/h + 2/l).  Then the base
    shear H = M_B / h, the vertical reactions wl/2 (statics) and the beam's
    midspan moment wl**2/8 - M_B.
    """
    h, l_, w = 4.0, 6.0, W
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, h))
    add_member(msp, (0, h), (l_, h))
    add_member(msp, (l_, h), (l_, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "pin", (l_, 0))
    add_load(msp, "udl", (l_ / 2, h), W=f"{w} kN/m", CASE="D")
    case = _solve(tmp_path, doc, capsys)
    m_b = (w * l_**2 / 12) * (3 / h) / (3 / h + 2 / l_)
    left, right = _reaction(case, 0.0), _reaction(case, l_)
    assert left["fy"] == pytest.approx(w * l_ / 2, rel=REL)
    assert right["fy"] == pytest.approx(w * l_ / 2, rel=REL)
    assert abs(left["fx"]) == pytest.approx(m_b / h, rel=REL)
    assert left["fx"] == pytest.approx(-right["fx"], rel=1e-9)
    m_min, m_max = _m_extremes(case)
    assert m_min == pytest.approx(-m_b, rel=REL)
    assert m_max == pytest.approx(w * l_**2 / 8 - m_b, rel=REL)


def test_springs_need_real_sections_and_check_agrees(tmp_path, capsys):
    """Equal relative stiffness cannot stand in for the real stiffness when a
    spring support shares the load: check and solve both refuse (exit 2)."""
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (L, 0))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "spring", (L, 0), KY="500 kN/m")
    add_load(msp, "udl", (L / 2, 0), W=f"{W} kN/m", CASE="D")
    path = tmp_path / "spring.dxf"
    doc.saveas(path)
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "spring support" in err and "no section" in err
    assert main(["solve", str(path), "--out", str(tmp_path / "out"), "--no-png"]) == 2
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())
