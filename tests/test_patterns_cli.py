"""Pattern live load through the CLI ([patterns] cases): the envelope per
member with the governing pattern named, in the report's ``patterns``.
"""
from __future__ import annotations

import json

import pytest

from dxf2frame.cli import main

from dxf_builders import add_load, add_member, add_support, new_drawing, save

L, W = 6.0, 10.0      # span [m], live load [kN/m]


def _three_spans(tmp_path, toml: str):
    (tmp_path / "dxf2frame.toml").write_text(
        '[sections.default]\nE = "200 GPa"\nA = "5000 mm**2"\nI = "8e7 mm**4"\n' + toml, encoding="utf-8")
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    lines = []
    for i in range(3):
        lines.append(add_member(msp, (L * i, 0), (L * i + L, 0)))
        add_load(msp, "udl", (L * i + L / 2, 0), W=f"{W} kN/m", CASE="L")
    add_support(msp, "pin", (0, 0))
    for i in range(1, 4):
        add_support(msp, "roller", (L * i, 0))
    return save(doc, tmp_path / "cb.dxf"), [f"{ln.dxf.handle}-1" for ln in lines]


def _solve(tmp_path, path, capsys):
    out = tmp_path / "out"
    code = main(["solve", str(path), "--out", str(out), "--no-png", "--units", "kN,m"])
    text = capsys.readouterr()
    assert code == 0, text.err
    return json.loads((out / "cb-results.json").read_text()), text


def test_three_equal_spans_pattern_coefficients(tmp_path, capsys):
    path, (m1, m2, m3) = _three_spans(tmp_path, '[combinations]\nbuiltin = []\nextra = ["1.6L"]\n'
                                                '[patterns]\ncases = ["L"]\n')
    rep, text = _solve(tmp_path, path, capsys)
    (p,) = rep["patterns"]
    assert p["case"] == "L" and p["parts"] == [m1, m2, m3]
    res = {r["name"]: {m["id"]: m for m in r["members"]} for r in p["results"]}
    end = res["L"][m1]
    # continuous beam of three equal spans, coefficient tables (e.g. AISC Manual beam diagrams for
    # continuous beams; from memory): largest end-span positive moment 0.101 w L^2 with spans 1 and 3
    # loaded (0.10125 exactly); largest first-interior-support moment -0.117 w L^2 (-7/60) with spans 1, 2
    assert end["m_max"] == pytest.approx(0.10125 * W * L**2, rel=1e-6)
    assert end["m_max_by"] == f"L on {m1}, {m3}"
    assert end["m_min"] == pytest.approx(-7 / 60 * W * L**2, rel=1e-6)
    assert end["m_min_by"] == f"L on {m1}, {m2}"
    # the combination scales the arrangement by its factor (linear frame)
    assert res["1.6L"][m1]["m_min"] == pytest.approx(-1.6 * 7 / 60 * W * L**2, rel=1e-6)
    # the summary's largest |M| is the pattern's (the case with every span loaded gives only 0.100 w L^2)
    assert f"{1.6 * 7 / 60 * W * L**2:.4g} kN*m" in text.out
    assert any(n.startswith("pattern load: L") for n in rep["notes"])


def test_pattern_case_not_drawn_is_a_warning(tmp_path, capsys):
    path, _ = _three_spans(tmp_path, '[combinations]\nbuiltin = []\n[patterns]\ncases = ["Lr"]\n')
    rep, text = _solve(tmp_path, path, capsys)
    assert "patterns" not in rep and "[patterns] case 'Lr'" in text.err


def test_bad_pattern_settings(tmp_path, capsys):
    path, _ = _three_spans(tmp_path, '[patterns]\ncases = ["L"]\nby = "bay"\n')
    code = main(["solve", str(path), "--out", str(tmp_path / "out"), "--no-png"])
    assert code == 2 and "patterns.by" in capsys.readouterr().err


def test_pattern_envelope_drawn_when_shown(tmp_path, capsys):
    import ezdxf

    path, (m1, m2, m3) = _three_spans(tmp_path, '[combinations]\nbuiltin = []\nextra = ["1.6L"]\n'
                                                '[patterns]\ncases = ["L"]\n')
    out = tmp_path / "out"
    code = main(["solve", str(path), "--out", str(out), "--no-png", "--units", "kN,m", "--show", "patterns:1.6L"])
    assert code == 0, capsys.readouterr().err
    doc = ezdxf.readfile(out / "cb-results.dxf")
    texts = " ".join(t.dxf.text for t in doc.modelspace().query('TEXT[layer=="RESULT-MOMENT"]'))
    # the first interior support: -1.6 * 7/60 w L^2 (three-span coefficient table, from memory)
    assert f"M={-1.6 * 7 / 60 * W * L**2:.2f}" in texts
    assert f"1.6(L on {m1}, {m2})" in texts                    # the governing pattern is named
    code = main(["solve", str(path), "--out", str(tmp_path / "o2"), "--no-png", "--show", "patterns:D"])
    assert code == 2 and "no patterned result named 'D'" in capsys.readouterr().err
