"""Reversible cases through the CLI: combinations holding wind appear with
both signs by default ([combinations] reversible = ["W", "E"]), the names
show the sign, and ``reversible = []`` turns it off.
"""
from __future__ import annotations

import json

import pytest

from dxf2frame.cli import main

from dxf_builders import add_load, add_member, add_support, new_drawing, save

H, P = 3.0, 10.0   # column height [m], wind force at the top [kN]


def _column(tmp_path, toml: str):
    (tmp_path / "dxf2frame.toml").write_text(toml, encoding="utf-8")
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, H))
    add_support(msp, "fixed", (0, 0))
    add_load(msp, "force", (0, H), P=f"{P} kN", ANGLE="0", CASE="W")     # toward +X
    add_load(msp, "force", (0, H), P="20 kN", CASE="D")                  # down
    return save(doc, tmp_path / "col.dxf")


def _results(tmp_path, path, capsys) -> dict:
    out = tmp_path / "out"
    code = main(["solve", str(path), "--out", str(out), "--no-png", "--units", "kN,m"])
    assert code == 0, capsys.readouterr().err
    rep = json.loads((out / "col-results.json").read_text())
    return {r["name"]: r for r in rep["results"]}


def _base_moment(res) -> float:
    (r,) = res["reactions"]
    return r["m"]


def test_wind_acts_both_ways_by_default(tmp_path, capsys):
    res = _results(tmp_path, _column(tmp_path, '[combinations]\nbuiltin = ["LRFD"]\nextra = ["1.1D + W"]\n'), capsys)
    for plus, minus in (("0.9D+W", "0.9D-W"), ("1.1D+W", "1.1D-W")):
        assert plus in res and minus in res
        # statics of a cantilever: base moment = (factor) P h, counter-clockwise reaction
        # against a force toward +X at the top (sign convention of the report: reactions +CCW)
        assert _base_moment(res[plus]) == pytest.approx(P * H, rel=1e-9)
        assert _base_moment(res[minus]) == pytest.approx(-P * H, rel=1e-9)
        assert res[minus]["factors"]["W"] == -res[plus]["factors"]["W"]


def test_reversible_off(tmp_path, capsys):
    res = _results(tmp_path, _column(tmp_path, '[combinations]\nbuiltin = ["LRFD"]\nreversible = []\n'), capsys)
    assert "0.9D+W" in res and not any("-W" in name for name in res)


def test_reversible_bad_value(tmp_path, capsys):
    path = _column(tmp_path, '[combinations]\nreversible = "W"\n')
    code = main(["solve", str(path), "--out", str(tmp_path / "out"), "--no-png"])
    assert code == 2 and "combinations.reversible" in capsys.readouterr().err
