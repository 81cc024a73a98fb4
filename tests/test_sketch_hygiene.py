"""What a drafter may not have meant is said, never solved silently.

Load cases: a load without CASE (default D, one warning with the count), an
office case name (CASE=LIVE) that enters no combination (warning naming
it) or is mapped onto L by ``[cases]`` (then the LRFD envelope includes it:
checked against the simple-beam moment wl**2/8 of the AISC beam diagrams,
from memory, with the ASCE/SEI 7 LRFD factors 1.2D + 1.6L, from memory),
an unknown case in a combination formula (exit 2 naming the formula).
Sections keyed by a layer no member uses (exit 2 with a close match).
A beam stopping 2 mm short of its column (near miss, warned and marked).
"""
from __future__ import annotations

import json
import re
from pathlib import Path

import ezdxf
import pytest

from dxf_builders import add_load, add_member, add_support, new_drawing
from dxf2frame.cli import main

SPAN = 8.0
SECTIONS = """
[sections.default]
E = "200 GPa"
A = "5000 mm**2"
I = "8e7 mm**4"
"""


def _beam(tmp_path: Path, settings: str | None, *loads: dict) -> Path:
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (SPAN, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (SPAN, 0))
    for attrs in loads:
        add_load(msp, "udl", (SPAN / 2, 0), **attrs)
    path = tmp_path / "beam.dxf"
    doc.saveas(path)
    if settings is not None:
        (tmp_path / "dxf2frame.toml").write_text(settings, encoding="utf-8")
    return path


def _run(capsys, *args) -> tuple[int, str, str]:
    rc = main([str(a) for a in args])
    out = capsys.readouterr()
    return rc, out.out, out.err


def _lrfd_moment(report: dict) -> float:
    return max(m["m_max"] for r in report["results"] if r.get("family") == "LRFD" for m in r["members"])


def test_office_case_name_warns_until_mapped(tmp_path, capsys):
    wd, wl = 5.0, 4.0
    path = _beam(tmp_path, SECTIONS, {"W": f"{wd} kN/m", "CASE": "D"}, {"W": f"{wl} kN/m", "CASE": "LIVE"})
    rc, out, _ = _run(capsys, "check", path)
    assert rc == 0 and re.search(r"warning .*load case 'LIVE' enters no load combination", out)
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "a", "--no-png")
    assert rc == 0 and "'LIVE' enters no load combination" in err
    rep = json.loads((tmp_path / "a" / "beam-results.json").read_text())
    assert any("'LIVE'" in w for w in rep["warnings"])
    # simple beam, uniform load: M = wl**2/8 (AISC beam diagrams, from memory);
    # LRFD without L: 1.4D governs
    assert _lrfd_moment(rep) == pytest.approx(1.4 * wd * SPAN**2 / 8, rel=1e-6)

    (tmp_path / "dxf2frame.toml").write_text(SECTIONS + '[cases]\nlive = "L"\n', encoding="utf-8")
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "b", "--no-png")
    assert rc == 0 and "enters no load combination" not in err
    rep = json.loads((tmp_path / "b" / "beam-results.json").read_text())
    # ASCE/SEI 7 LRFD 1.2D + 1.6L (from memory) on the simple-beam moment
    assert _lrfd_moment(rep) == pytest.approx((1.2 * wd + 1.6 * wl) * SPAN**2 / 8, rel=1e-6)


@pytest.mark.parametrize("written, meant", [("LR", "Lr"), ("l", "L")])
def test_a_standard_case_in_the_wrong_letter_case_names_the_case_meant(tmp_path, capsys, written, meant):
    path = _beam(tmp_path, SECTIONS, {"W": "5 kN/m", "CASE": "D"}, {"W": "4 kN/m", "CASE": written})
    rc, out, _ = _run(capsys, "check", path)
    said = [t for t in out.splitlines() if f"load case '{written}' enters no load combination" in t]
    assert rc == 0 and len(said) == 1
    assert f"standard case '{meant}' only in letter case" in said[0] and f"CASE={meant}" in said[0]


def test_gravity_loads_that_act_upward_are_said_per_case(tmp_path, capsys):
    # W = -5 kN/m along gravity in case D is a dead load lifting the beam: a
    # minus sign written for +Y up; said once per case naming the blocks.
    # Wind may lift (W = -2 kN/m in case W): not said.
    path = _beam(tmp_path, SECTIONS, {"W": "-5 kN/m", "CASE": "D"}, {"W": "-3 kN/m", "CASE": "D"},
                 {"W": "-2 kN/m", "CASE": "W"}, {"W": "4 kN/m", "CASE": "L"})
    rc, out, _ = _run(capsys, "check", path)
    said = [t for t in out.splitlines() if "act upward" in t]
    assert rc == 0 and len(said) == 1 and "2 load(s) of case D act upward" in said[0]
    path = _beam(tmp_path, SECTIONS, {"W": "5 kN/m", "CASE": "D"}, {"W": "-2 kN/m", "CASE": "W"})
    rc, out, _ = _run(capsys, "check", path)
    assert rc == 0 and "act upward" not in out


def test_a_combination_naming_a_case_twice_is_said(tmp_path, capsys):
    # 1.2D + 1.6L + 1.6L: the terms add up to 1.2D + 3.2L (arithmetic), most
    # often a typo; said by check and solve, computed as read
    path = _beam(tmp_path, SECTIONS + '[combinations]\nbuiltin = []\nextra = ["1.2D+1.6L+1.6L", "1.2D+1.6L"]\n',
                 {"W": "5 kN/m", "CASE": "D"}, {"W": "4 kN/m", "CASE": "L"})
    rc, out, _ = _run(capsys, "check", path)
    said = [t for t in out.splitlines() if "more than one term" in t]
    assert rc == 0 and len(said) == 1 and "'1.2D+3.2L'" in said[0]
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "o", "--no-png")
    assert rc == 0 and "more than one term" in err
    rep = json.loads((tmp_path / "o" / "beam-results.json").read_text())
    m = {r["name"]: max(x["m_max"] for x in r["members"]) for r in rep["results"]}
    # simple beam, uniform load: M = w l**2 / 8 (AISC beam diagrams, from memory)
    assert m["1.2D+3.2L"] == pytest.approx((1.2 * 5 + 3.2 * 4) * SPAN**2 / 8, rel=1e-6)


def test_an_envelope_of_a_family_no_combination_has_is_said(tmp_path, capsys):
    path = _beam(tmp_path, SECTIONS + '[combinations]\ndraw = "envelope:LRDF"\n', {"W": "5 kN/m", "CASE": "D"})
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "o", "--no-png")
    assert rc == 0 and "no combination is of family 'LRDF'" in err and "did you mean envelope:LRFD" in err
    rep = json.loads((tmp_path / "o" / "beam-results.json").read_text())
    assert any("'LRDF'" in w for w in rep["warnings"])
    # the default envelope:LRFD of a drawing with only its own combinations: nothing said
    (tmp_path / "b").mkdir()
    path = _beam(tmp_path / "b", SECTIONS + '[combinations]\nbuiltin = []\nextra = ["1.5D"]\n',
                 {"W": "5 kN/m", "CASE": "D"})
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "b" / "o", "--no-png")
    assert rc == 0 and "family" not in err


def test_loads_without_case_are_counted_in_one_warning(tmp_path, capsys):
    path = _beam(tmp_path, SECTIONS, {"W": "5 kN/m", "CASE": ""}, {"W": "2 kN/m", "CASE": " "},
                 {"W": "1 kN/m", "CASE": "D"})
    rc, out, _ = _run(capsys, "check", path)
    lines = [ln for ln in out.splitlines() if "no CASE" in ln]
    assert rc == 0 and len(lines) == 1 and "2 load(s)" in lines[0]


def test_unknown_case_in_a_formula_is_bad_input_but_an_absent_standard_case_is_not(tmp_path, capsys):
    path = _beam(tmp_path, SECTIONS + '[combinations]\nextra = ["1.2D+1.6Q"]\n', {"W": "5 kN/m", "CASE": "D"})
    for cmd in (("check", path), ("solve", path, "--out", tmp_path / "o", "--no-png")):
        rc, _, err = _run(capsys, *cmd)
        assert rc == 2 and "'1.2D+1.6Q'" in err and "'Q'" in err, err
    assert not (tmp_path / "o").exists()
    # S is a standard case letter the drawing simply has no loads in
    (tmp_path / "dxf2frame.toml").write_text(SECTIONS + '[combinations]\nextra = ["1.2D+1.6L+0.5S"]\n')
    rc, out, _ = _run(capsys, "check", path, "--strict")
    assert rc == 0 and re.search(r"note .*no loads in case\(s\) L, S", out)   # a note, not a warning
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "o2", "--no-png")
    assert rc == 0, err


def test_section_keyed_by_an_unused_layer_is_bad_input(tmp_path, capsys):
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, 4), layer="FRAME-COLUMNS")
    add_member(msp, (0, 4), (6, 4), layer="FRAME-BEAMS")
    add_member(msp, (6, 4), (6, 0), layer="FRAME-COLUMNS")
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "fixed", (6, 0))
    add_load(msp, "udl", (3, 4), W="5 kN/m", CASE="D")
    path = tmp_path / "portal.dxf"
    doc.saveas(path)
    typo = SECTIONS + '[sections."FRAME-COLUMN"]\nI = "2e8 mm**4"\n'
    (tmp_path / "dxf2frame.toml").write_text(typo)
    for cmd in (("check", path), ("solve", path, "--out", tmp_path / "o", "--no-png")):
        rc, _, err = _run(capsys, *cmd)
        assert rc == 2, err
        assert "FRAME-COLUMN" in err and "FRAME-BEAMS, FRAME-COLUMNS" in err and "did you mean 'FRAME-COLUMNS'" in err
    (tmp_path / "dxf2frame.toml").write_text(typo.replace('"FRAME-COLUMN"', '"FRAME-COLUMNS"'))
    rc, out, _ = _run(capsys, "check", path)
    assert rc == 0
    assert "FRAME-BEAMS: default section" in out and 'FRAME-COLUMNS: own section [sections."FRAME-COLUMNS"]' in out


@pytest.mark.parametrize("slip, said", [
    ('I = "8e7 mm**4"', 'I = "8e7 m**4"'),
    ('A = "5000 mm**2"', 'A = "5000 m**2"'),
    ('E = "200 GPa"', 'E = "200 MPa"'),
])
def test_a_section_in_the_wrong_unit_is_said(tmp_path, capsys, slip, said):
    # r = sqrt(I/A) by hand: I in m**4 gives sqrt(8e7 / 5e-3) = 1.26e5 m,
    # longer than the 8 m span (a rigid beam); A in m**2 gives sqrt(8e-5 /
    # 5000) = 1.26e-4 m, L/r = 63,000 where frame members stay within a few
    # hundred (common practice); E in MPa is 0.2 GPa, below timber's 10 GPa
    # (common practice).  Said by check and solve alike; solved as given.
    path = _beam(tmp_path, SECTIONS.replace(slip, said), {"W": "10 kN/m", "CASE": "D"})
    said_lines = ("check the units of I and A", "check E's unit")
    for cmd in (("check", path), ("solve", path, "--out", tmp_path / "o", "--no-png")):
        rc, out, err = _run(capsys, *cmd)
        hits = [t for t in (out + err).splitlines() if "[sections.default]" in t and t.endswith(said_lines)]
        assert rc == 0 and len(hits) == 1, out + err
    # the section as given in SECTIONS (r = 0.126 m, L/r = 63): nothing said
    (tmp_path / "ok").mkdir()
    path = _beam(tmp_path / "ok", SECTIONS, {"W": "10 kN/m", "CASE": "D"})
    rc, out, err = _run(capsys, "check", path)
    assert rc == 0 and not [t for t in (out + err).splitlines() if t.endswith(said_lines)]


def _gap_frame(tmp_path: Path, gap_mm: float) -> tuple[Path, str, str]:
    """Portal in mm: the beam stops ``gap_mm`` short of the right column."""
    doc = new_drawing("mm")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, 3000))
    beam = add_member(msp, (0, 3000), (6000 - gap_mm, 3000))
    col = add_member(msp, (6000, 0), (6000, 3000))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "fixed", (6000, 0))
    add_load(msp, "udl", (3000, 3000), W="5 kN/m", CASE="D")
    path = tmp_path / "gap.dxf"
    doc.saveas(path)
    (tmp_path / "dxf2frame.toml").write_text(SECTIONS + '[geometry]\nsnap = "0.5 mm"\n')
    return path, beam.dxf.handle, col.dxf.handle


def test_beam_stopping_short_of_its_column_is_a_near_miss(tmp_path, capsys):
    path, beam, col = _gap_frame(tmp_path, 2.0)
    rc, out, _ = _run(capsys, "check", path)
    warn = [ln for ln in out.splitlines() if "near miss" in ln]
    assert rc == 0 and len(warn) == 1, out      # one warning for the pair, not one per free end
    assert f"#{beam}" in warn[0] and f"#{col}" in warn[0] and "2 mm" in warn[0]
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "o", "--no-png")
    assert rc == 0 and "near miss" in err
    doc = ezdxf.readfile(tmp_path / "o" / "gap-results.dxf")
    marks = [c for c in doc.modelspace().query("CIRCLE") if c.dxf.layer == "RESULT-NOTES"]
    assert any(abs(c.dxf.center.x - 5998) < 1 and abs(c.dxf.center.y - 3000) < 1 for c in marks)


def test_a_gap_wider_than_the_near_miss_distance_and_a_true_cantilever_are_not_warned(tmp_path, capsys):
    # 10 snap tolerances = 5 mm; 2 % of the shorter member (3000 mm) = 60 mm:
    # a 200 mm gap is a deliberate one
    path, _, _ = _gap_frame(tmp_path, 200.0)
    rc, out, _ = _run(capsys, "check", path)
    assert rc == 0 and "near miss" not in out
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, 3))
    add_member(msp, (0, 3), (2.5, 3))          # a cantilever canopy far from anything
    add_support(msp, "fixed", (0, 0))
    add_load(msp, "force", (2.5, 3), P="5 kN", CASE="D")
    (tmp_path / "c").mkdir()
    doc.saveas(tmp_path / "c" / "canopy.dxf")
    rc, out, _ = _run(capsys, "check", tmp_path / "c" / "canopy.dxf")
    assert rc == 0 and "near miss" not in out


def test_batch_shows_every_files_warnings_and_strict_makes_them_bad_input(tmp_path, capsys):
    a = tmp_path / "a"
    a.mkdir()
    gap, _, _ = _gap_frame(a, 2.0)
    b = tmp_path / "b"
    b.mkdir()
    clean = _beam(b, SECTIONS, {"W": "5 kN/m", "CASE": "D"})
    rc, out, err = _run(capsys, "solve", gap, clean, "--workers", "1", "--no-png", "--out", tmp_path / "o")
    assert rc == 0
    assert re.search(r"warning: gap\.dxf: near miss", err)           # a batch loses no warning
    head = out.splitlines()[0].split()
    assert head[-3:] == ["warnings", "time", "s"]
    rows = {ln.split()[0]: ln.split() for ln in out.splitlines()[2:4]}
    # the column before the time: the near miss, and the two checks the loose beam fails
    # (it hangs as a cantilever: span/deflection and drift worse than their limits)
    assert rows["gap.dxf"][-2] == "3" and rows["beam.dxf"][-2] == "0"
    assert "deflection check fails" in err and "drift check fails" in err

    rc, _, err = _run(capsys, "check", gap, "--strict")
    assert rc == 2 and "--strict: 1 warning(s)" in err
    rc, _, err = _run(capsys, "solve", gap, "--strict", "--no-png", "--out", tmp_path / "s")
    assert rc == 2 and "--strict" in err and "near miss" in err
    assert not (tmp_path / "s").exists() or not any((tmp_path / "s").iterdir())
    rc, _, _ = _run(capsys, "solve", clean, "--strict", "--no-png", "--out", tmp_path / "s2")
    assert rc == 0


def test_mistyped_unit_is_bad_input_with_a_suggestion(tmp_path, capsys):
    # the SI prefix giga is G and pascal is Pa (SI brochure, BIPM): '200 Gpa' means '200 GPa'
    path = _beam(tmp_path, SECTIONS.replace('"200 GPa"', '"200 Gpa"'), {"W": "5 kN/m", "CASE": "D"})
    rc, _, err = _run(capsys, "check", path)
    assert rc == 2 and "did you mean '200 GPa'?" in err and "Traceback" not in err
    assert "UndefinedUnitError" not in err and "registry" not in err
    # the same in a load attribute, naming the entity
    path = _beam(tmp_path, SECTIONS, {"W": "5 KN/m", "CASE": "D"})
    rc, _, err = _run(capsys, "solve", path, "--no-png", "--out", tmp_path / "o")
    assert rc == 2 and "did you mean '5 kN/m'?" in err and "LOADS" in err


def test_a_line_drawn_just_past_its_column_is_a_near_miss(tmp_path, capsys):
    """Overshoot: the beam runs 2 mm past the right column's top, leaving a
    2 mm free stub (10 snap tolerances = 5 mm)."""
    doc = new_drawing("mm")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (0, 3000))
    beam = add_member(msp, (0, 3000), (6002, 3000))
    col = add_member(msp, (6000, 0), (6000, 3000))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "fixed", (6000, 0))
    path = tmp_path / "over.dxf"
    doc.saveas(path)
    (tmp_path / "dxf2frame.toml").write_text(SECTIONS + '[geometry]\nsnap = "0.5 mm"\n')
    rc, out, _ = _run(capsys, "check", path)
    warn = [ln for ln in out.splitlines() if "near miss" in ln]
    assert rc == 0 and len(warn) == 1, out
    assert f"#{beam.dxf.handle}" in warn[0] and f"#{col.dxf.handle}" in warn[0] and "runs 2 mm past" in warn[0]


def test_new_settings_keys_are_validated():
    from dxf2frame.errors import SettingsError
    from dxf2frame.settings import Settings

    s = Settings.from_dict({"cases": {"live": "l", "Roof": "LR"}, "analysis": {"missing_sections": "Refuse"},
                            "geometry": {"unjoined_layers": ["frame-x", "FRAME-X"]}, "blocks": {"crossover": "XO"}})
    assert s.case_name("Live") == "L" and s.case_name("ROOF") == "Lr" and s.case_name("W") == "W"
    assert s.missing_sections == "refuse" and s.unjoined_layers == ("FRAME-X",)
    assert s.block_kind("xo") == "CROSSOVER" and s.block_kind("CROSSOVER") is None
    for bad, key in (({"cases": {"LIVE": "Q"}}, "cases.LIVE"),
                     ({"analysis": {"missing_sections": "guess"}}, "analysis.missing_sections"),
                     ({"geometry": {"unjoined_layers": "FRAME-BRACES"}}, "geometry.unjoined_layers")):
        with pytest.raises(SettingsError) as ei:
            Settings.from_dict(bad)
        assert key in str(ei.value)


def test_a_drawing_without_loads_is_bad_input_and_check_still_reports_it(tmp_path, capsys):
    """No load blocks at all (a forgotten layer, a frozen load layer): solve
    says so instead of writing empty diagrams with an "ok"; check still
    reports the frame (a simple beam: statically determinate)."""
    path = _beam(tmp_path, None)
    rc, _, err = _run(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert rc == 2 and "no loads" in err and "'LOADS'" in err, err
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())
    rc, out, err = _run(capsys, "check", path)
    assert rc == 0, err
