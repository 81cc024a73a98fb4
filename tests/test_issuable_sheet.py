"""A result drawing the drafter can issue: output units, legend wording,
placement clear of the drafter's own content, shared scales.

Drawings are built here with ezdxf and the project's symbol blocks.
"""
from __future__ import annotations

import json
import re
from pathlib import Path

import ezdxf
import pytest

from dxf2frame.cli import main
from dxf2frame.settings import Settings
from dxf2frame.symbols import define_blocks, define_layers, insert_symbol

NUM = r"(-?\d+(?:\.\d+)?(?:e[-+]?\d+)?)"
SETTINGS = """\
[combinations]
builtin = []
"""


def beam(path: Path, *, span: float, insunits: int, scale: float, w: str = "10 kN/m") -> Path:
    """A simply supported beam from (0, 0) to (span, 0) in drawing units,
    pin and roller at its ends, a uniform load of case D over it."""
    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = insunits
    define_layers(doc)
    define_blocks(doc)
    msp = doc.modelspace()
    msp.add_line((0, 0), (span, 0), dxfattribs={"layer": "FRAME"})
    insert_symbol(msp, "PIN", (0, 0), layer="SUPPORTS", scale=scale)
    insert_symbol(msp, "ROLLER", (span, 0), layer="SUPPORTS", scale=scale)
    insert_symbol(msp, "UDL", (span / 3, 0), layer="LOADS", scale=scale, W=w, CASE="D")
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
