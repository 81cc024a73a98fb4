"""Hardening, round 2: hostile number texts, block grids, damaged inserts,
undecodable bytes, damaged report files and far-away linework.

Every drawing is built here with ezdxf; resource cases run under an
address-space limit (``resource.setrlimit``) so a regression fails fast
instead of exhausting the machine.  Beam values are checked against the
AISC Manual, Table 3-23 (via ``check_simple_beam``).
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, assume, given, settings as hsettings, strategies as st

from dxf_builders import add_load
from dxf2frame.errors import UnitError
from dxf2frame.units import parse_quantity
from test_hardening import (FAST_SETTINGS, SPAN, assert_bad_input, beam_doc, run_cli, solve_ok,
                            write_case)


# ---------------------------------------------------------------------------
# number texts: minus signs and commas
# ---------------------------------------------------------------------------

#: minus-like characters -> read as a minus? (True: yes, silently or with a
#: warning; False: refused).  U+2212 is the Unicode minus sign; the dashes
#: are what word processors and CAD text editors put in its place.
MINUS_LIKE = {
    "-": True, "\u2212": True, "\u2013": True, "\u2012": True, "\u2010": True, "\u2011": True,
    "\ufe63": True, "\uff0d": True, "\u2014": False, "\u2015": False, "\u00ad": False, "\u207b": False,
    "\u208b": False, "\u2796": False, "~": False,
}
WARNED = {"\u2013", "\u2012", "\u2010", "\u2011", "\ufe63", "\uff0d"}


def _force(text: str, notes: list | None = None) -> float:
    return parse_quantity(text, "force", default_unit="kN", handle="2F", layer="LOADS", tag="P", notes=notes)


@pytest.mark.parametrize("dash", sorted(MINUS_LIKE))
def test_minus_like_characters_are_a_minus_or_refused(dash):
    notes: list[str] = []
    if MINUS_LIKE[dash]:
        # 1 kN = 1000 N (SI prefix k = 1e3)
        assert _force(f"{dash}5 kN", notes) == -5000.0
        assert bool(notes) == (dash in WARNED)
        if notes:
            assert "#2F" in notes[0] and "'LOADS'" in notes[0] and "P" in notes[0] and "minus" in notes[0]
    else:
        with pytest.raises(UnitError) as exc:
            _force(f"{dash}5 kN")
        assert exc.value.handle == "2F" and f"U+{ord(dash):04X}" in str(exc.value)


@pytest.mark.parametrize("text, fix", [
    ("5,5 kN", "'5.5 kN'"), ("1,000 kN", "'1000 kN'"), ("1.000,5 kN", "point as the decimal mark"),
    ("-2,25", "'-2.25'"), ("1 000 kN", "'1000 kN'"), ("1\u00a0000 kN", "'1000 kN'"),
])
def test_commas_and_grouped_digits_are_refused_as_ambiguous(text, fix):
    with pytest.raises(UnitError) as exc:
        _force(text)
    msg = str(exc.value)
    assert "#2F" in msg and "'LOADS'" in msg and "attribute P" in msg and repr(text.strip())[1:-1] in msg
    assert fix in msg


@pytest.mark.parametrize("space", ["\u00a0", "\u2009", "\u202f", "\t", "  "])
def test_any_space_between_number_and_unit_is_a_space(space):
    assert _force(f"5{space}kN") == 5000.0  # 1 kN = 1000 N (SI prefix)
    assert _force(f"\u2212 2.5{space}kN") == -2500.0


@pytest.mark.parametrize("junk", [";", "!", "=", "#", "[", "]", "%", "&", "|", "\u00d7", "\u2044"])
def test_characters_the_unit_parser_would_drop_are_refused(junk):
    # the unit parser reads "5 kN; 2" as 10 kN: such texts must be refused
    with pytest.raises(UnitError):
        _force(f"5 kN{junk} 2")


_DIGITS = st.integers(min_value=0, max_value=99_999)
_FRACTION = st.integers(min_value=0, max_value=999)


@hsettings(max_examples=400, suppress_health_check=[HealthCheck.too_slow], deadline=None)
@given(whole=_DIGITS, frac=_FRACTION, sign=st.sampled_from(sorted(MINUS_LIKE) + ["", "+"]),
       sep=st.sampled_from([".", ",", "", " ", "\u00a0", "'", "\u066b", "\u2009"]),
       group=st.sampled_from(["", ",", ".", " ", "'"]), unit=st.sampled_from(["kN", " kN", "", " N"]))
def test_number_texts_are_read_exactly_or_refused(whole, frac, sign, sep, group, unit):
    """A number text with any minus-like sign, decimal mark and thousands
    separator is either read as exactly the number meant or refused."""
    digits = str(whole)
    if group and whole >= 1000:
        digits = f"{whole:,}".replace(",", group)
    text = f"{sign}{digits}{sep}{frac if sep else ''}{unit}"
    # "1.000 kN" is one kilonewton by the convention (a point is the decimal mark)
    assume(not (group == "." and whole >= 1000 and text.count(".") == 1))
    meant = whole + (frac / 10 ** len(str(frac)) if sep else 0.0)
    if sign in MINUS_LIKE:
        meant = -meant
    # bare numbers are in kN (the default unit); 1 kN = 1000 N (SI prefix)
    meant *= 1.0 if unit.strip() == "N" else 1000.0
    try:
        value = _force(text)
    except UnitError:
        return
    assert value == pytest.approx(meant, rel=1e-12, abs=1e-9), text


def test_unicode_minus_and_comma_from_the_command_line(tmp_path, capsys):
    doc = beam_doc()
    msp = doc.modelspace()
    up = add_load(msp, "force", (SPAN / 2, 0.0), P="\u221220 kN")  # acts upward: -20 kN along the arrow
    down = add_load(msp, "force", (SPAN / 2, 0.0), P="\u201320 kN")  # en dash: -20 kN, with a warning
    add_load(msp, "force", (SPAN / 2, 0.0), P="40 kN")
    path = write_case(tmp_path / "in", doc)
    report, err = solve_ok(capsys, path, tmp_path / "out")
    # the three point loads cancel (-20 - 20 + 40 = 0): the beam carries only
    # its uniform load, R = wL/2 (AISC Manual, Table 3-23 case 1; from memory)
    from test_hardening import check_simple_beam
    check_simple_beam(report)
    warned = [w for w in report["warnings"] if "en dash" in w]
    assert len(warned) == 1 and f"#{down.dxf.handle}" in warned[0], report["warnings"]
    # nothing about the minus sign of the load written with U+2212 (the two
    # -20 kN blocks at one point are said to repeat each other, both applied,
    # and to act upward in case D)
    assert not any(f"#{up.dxf.handle}" in w for w in report["warnings"] if "repeats" not in w and "upward" not in w)
    assert [w for w in report["warnings"] if "repeats" in w and f"#{up.dxf.handle}" in w]
    assert "en dash" in err

    doc = beam_doc()
    bad = add_load(doc.modelspace(), "force", (SPAN / 2, 0.0), P="5,5 kN")
    path = write_case(tmp_path / "in2", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out2", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out2", names=(f"#{bad.dxf.handle}", "'LOADS'", "P", "5,5 kN",
                                                         "'5.5 kN'"))


# ---------------------------------------------------------------------------
# MINSERT grids and damaged block references
# ---------------------------------------------------------------------------


def _minsert(msp, block, at, *, rows=1, cols=1, row_spacing=0.0, col_spacing=0.0, layer="LOADS", **attribs):
    ins = msp.add_blockref(block, at, dxfattribs={
        "layer": layer, "row_count": rows, "column_count": cols,
        "row_spacing": row_spacing, "column_spacing": col_spacing})
    for tag, value in attribs.items():
        ins.add_attrib(tag.upper(), str(value), insert=at)
    return ins


def test_minsert_with_zero_spacing_stacks_loads_and_is_refused(tmp_path, capsys):
    doc = beam_doc()
    ins = _minsert(doc.modelspace(), "FORCE", (SPAN / 2, 0.0), cols=10, P="5 kN")
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=(f"#{ins.dxf.handle}", "'LOADS'", "10 columns", "spacing 0",
                                                        "FORCE"))


def test_minsert_grid_gives_one_load_per_cell(tmp_path, capsys):
    doc = beam_doc(w="0 kN/m")
    _minsert(doc.modelspace(), "FORCE", (1.0, 0.0), cols=3, col_spacing=1.0, P="10 kN")
    path = write_case(tmp_path / "in", doc)
    report, _ = solve_ok(capsys, path, tmp_path / "out")
    res = next(r for r in report["results"] if r["name"] == "D")
    fy = [f for _, f in sorted((r["x"], r["fy"]) for r in res["reactions"])]
    # statics (moments about the left support): R_right = sum(P x) / L = 10 (1 + 2 + 3) / 6 = 10 kN,
    # R_left = 30 - 10 = 20 kN
    assert fy == pytest.approx([20.0, 10.0], rel=1e-9)


def _text_without_insertion_x(doc, handle: str, code: str = "10") -> bytes:
    import io
    import re

    buf = io.StringIO()
    doc.write(buf)
    text = buf.getvalue()
    start = text.index(f"\n  5\n{handle}\n")
    end = text.index("\n  0\n", start)
    entity = re.sub(rf"\n {code}\n[^\n]*", "", text[start:end], count=1)
    return (text[:start] + entity + text[end:]).encode("utf-8")


@pytest.mark.parametrize("code", ["10", "20"])
@pytest.mark.parametrize("where", ["loads", "frame-block"])
def test_insert_without_insertion_point_is_refused(tmp_path, capsys, where, code):
    from dxf_builders import add_block, add_member, insert_block

    doc = beam_doc()
    msp = doc.modelspace()
    if where == "loads":
        ins = add_load(msp, "force", (2.5, 0.0), P="5 kN")
    else:
        blk = add_block(doc, "BRACE")
        add_member(blk, (0, 0), (0, 2.0))
        ins = insert_block(msp, "BRACE", (3.0, 0.0))
    data = _text_without_insertion_x(doc, ins.dxf.handle, code)
    path = write_case(tmp_path / "in", data=data)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=(f"#{ins.dxf.handle}", "insertion point"))


# ---------------------------------------------------------------------------
# unbounded work: grids and nested blocks counted before anything is expanded
# ---------------------------------------------------------------------------

_LIMITED_RUN = """
import resource, sys
resource.setrlimit(resource.RLIMIT_AS, ({mb} << 20, {mb} << 20))
from dxf2frame.cli import main
for args in {cases!r}:
    try:
        rc = main(args)
    except MemoryError:
        rc = "MemoryError"
    print("RC", rc, flush=True)
"""


def _run_limited(cases: list[list[str]], mb: int = 1500, timeout: float = 120.0):
    """Run CLI commands in one fresh interpreter under an address-space limit
    of ``mb`` MiB; returns (exit statuses, stderr)."""
    import os
    import subprocess
    import sys

    env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1", "MPLBACKEND": "Agg"}
    script = _LIMITED_RUN.format(mb=mb, cases=[[str(a) for a in c] for c in cases])
    proc = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, env=env, timeout=timeout)
    codes = [line.split()[1] for line in proc.stdout.splitlines() if line.startswith("RC ")]
    return codes, proc.stderr


def _grid_drawings(tmp_path):
    """Four 1000 x 1000 grids (a million cells each): PIN on SUPPORTS, FORCE on
    LOADS, a block holding a FRAME line, and a decorative block on its own layer."""
    from dxf_builders import add_block, add_member

    out = {}
    for kind in ("pin", "force", "frame-block", "decor"):
        doc = beam_doc()
        msp = doc.modelspace()
        if kind == "pin":
            ins = _minsert(msp, "PIN", (0, 10), rows=1000, cols=1000, row_spacing=1, col_spacing=1, layer="SUPPORTS")
        elif kind == "force":
            ins = _minsert(msp, "FORCE", (0, 10), rows=1000, cols=1000, row_spacing=1, col_spacing=1, P="1 kN")
        elif kind == "frame-block":
            add_member(add_block(doc, "POST"), (0, 0), (0, 0.5))
            ins = _minsert(msp, "POST", (0, 10), rows=1000, cols=1000, row_spacing=1, col_spacing=1, layer="0")
        else:
            doc.layers.add("TILES")
            blk = add_block(doc, "TILE")
            blk.add_circle((0, 0), 0.2, dxfattribs={"layer": "TILES"})
            ins = _minsert(msp, "TILE", (0, 10), rows=1000, cols=1000, row_spacing=1, col_spacing=1, layer="TILES")
        out[kind] = (write_case(tmp_path / kind, doc), ins.dxf.handle)
    return out


def test_huge_grids_are_refused_before_expanding_anything(tmp_path):
    cases = _grid_drawings(tmp_path)
    runs = []
    for kind, (path, _) in cases.items():
        runs.append(["check", path])
        runs.append(["solve", path, "--out", tmp_path / f"out-{kind}"])
    codes, err = _run_limited(runs)
    assert codes == ["2"] * len(runs), err
    lines = err.strip().splitlines()
    assert len(lines) == len(runs), err
    for line, args in zip(lines, runs):
        handle = next(h for k, (p, h) in cases.items() if p == args[1])
        for text in (f"#{handle}", "1000 x 1000", "1000000", "limit of 500000", "max_entities"):
            assert text in line, (text, line)
    assert not any((tmp_path / f"out-{kind}").exists() and any((tmp_path / f"out-{kind}").iterdir())
                   for kind in cases)


def test_nested_block_expansion_is_counted(tmp_path, capsys):
    from dxf_builders import add_block, insert_block

    doc = beam_doc()
    msp = doc.modelspace()
    doc.layers.add("DECOR")
    leaf = add_block(doc, "B0")
    leaf.add_point((0, 0), dxfattribs={"layer": "DECOR"})
    for level in range(1, 7):  # B6 holds 10 B5, each 10 B4, ...: 10**6 points
        blk = add_block(doc, f"B{level}")
        for k in range(10):
            insert_block(blk, f"B{level - 1}", (k, 0), layer="DECOR")
    top = insert_block(msp, "B6", (0, 20), layer="DECOR")
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=(f"#{top.dxf.handle}", "'DECOR'", "B6", "limit of 500000"))


def test_decorative_blocks_nested_deeply_are_not_refused(tmp_path, capsys):
    from dxf_builders import add_block, insert_block

    doc = beam_doc()
    doc.layers.add("DECOR")
    add_block(doc, "N0").add_circle((0, 0), 0.1, dxfattribs={"layer": "DECOR"})
    for level in range(1, 25):
        insert_block(add_block(doc, f"N{level}"), f"N{level - 1}", (0.1, 0), layer="0")
    insert_block(doc.modelspace(), "N24", (0, 5), layer="DECOR")
    path = write_case(tmp_path / "in", doc)
    from test_hardening import check_simple_beam
    report, _ = solve_ok(capsys, path, tmp_path / "out")
    check_simple_beam(report)

    # the same nesting with a member at the bottom matters: refused
    doc = beam_doc()
    add_block(doc, "N0").add_line((0, 0), (0, 1), dxfattribs={"layer": "FRAME"})
    for level in range(1, 25):
        insert_block(add_block(doc, f"N{level}"), f"N{level - 1}", (0.1, 0), layer="0")
    deep = insert_block(doc.modelspace(), "N24", (0, 5), layer="0")
    path = write_case(tmp_path / "in2", doc)
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=(f"#{deep.dxf.handle}", "nested more than 16 deep"))


# ---------------------------------------------------------------------------
# attribute lengths
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("tag, command", [("CASE", "solve"), ("CASE", "explain"), ("P", "solve"), ("P", "check")])
def test_huge_attribute_values_are_refused_and_not_echoed(tmp_path, capsys, tag, command):
    doc = beam_doc()
    values = {"P": "5 kN", "CASE": "L"}
    values[tag] = ("9" if tag == "P" else "X") * 1_000_000 + " kN" * (tag == "P")
    ins = add_load(doc.modelspace(), "force", (SPAN / 2, 0.0), **values)
    path = write_case(tmp_path / "in", doc)
    args = [command, path] + (["--out", tmp_path / "out", "--no-png"] if command == "solve" else [])
    if command == "explain":
        args += ["--out", tmp_path / "out"]
    rc, _, err = run_cli(capsys, *args)
    assert_bad_input(rc, err, tmp_path / "out", names=(f"#{ins.dxf.handle}", "'LOADS'", tag,
                                                         "characters", "max_attribute_chars"))
    assert len(err) < 400, err


def test_attribute_length_limit_is_a_setting(tmp_path, capsys):
    doc = beam_doc(case="Dead load of the roof")
    path = write_case(tmp_path / "in", doc, settings=FAST_SETTINGS + "[limits]\nmax_attribute_chars = 10\n")
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=("CASE", "21 characters", "limit of 10"))
    write_case(tmp_path / "in", doc, settings=FAST_SETTINGS + "[limits]\nmax_attribute_chars = 0\n")
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=("limits.max_attribute_chars",))


def test_messages_shorten_long_texts():
    from dxf2frame.errors import DrawingError

    exc = DrawingError("value " + "x" * 100_000, handle="A" * 5000, layer="L" * 5000, hint="h" * 100_000)
    assert len(str(exc)) < 2000 and "100006 characters" in str(exc)


# ---------------------------------------------------------------------------
# bytes that are not UTF-8 in an R2018 file
# ---------------------------------------------------------------------------


def _latin1_drawing(folder, name="frame.dxf"):
    """A beam on layer 'FRAME-Bé' with a FORCE of case 'Lé', saved as R2018
    (UTF-8) and then patched so that both 'é' are the single Latin-1 byte E9,
    as an older program would write them."""
    doc = beam_doc(frame_layer="FRAME-Bé")
    add_load(doc.modelspace(), "force", (SPAN / 2, 0.0), P="12 kN", CASE="Lé")
    path = write_case(folder, doc, name=name)
    data = path.read_bytes()
    assert data.count("é".encode("utf-8")) >= 2
    path.write_bytes(data.replace("é".encode("utf-8"), b"\xe9"))
    return path


@pytest.mark.parametrize("command", ["check", "solve", "explain", "compare", "batch"])
def test_bytes_that_are_not_utf8_are_read_as_latin1_with_a_warning(tmp_path, capsys, command):
    a = _latin1_drawing(tmp_path / "in")
    out = tmp_path / "out"
    if command == "check":
        args = ["check", a]
    elif command == "solve":
        args = ["solve", a, "--out", out, "--units", "kN,m"]
    elif command == "explain":
        args = ["explain", a, "--out", out, "--at", "3,0"]
    elif command == "compare":
        b = _latin1_drawing(tmp_path / "in", name="frame-b.dxf")
        args = ["compare", a, b, "--out", out]
    else:
        _latin1_drawing(tmp_path / "in", name="frame-b.dxf")
        args = ["solve", tmp_path / "in", "--out", out, "--no-png", "--units", "kN,m"]
    rc, stdout, err = run_cli(capsys, *args)
    assert rc == 0, err
    assert "Traceback" not in err and "internal error" not in err
    if command in ("check", "solve"):
        assert "not UTF-8" in stdout + err and "Windows-1252" in stdout + err
    if command in ("solve", "batch"):
        report = json.loads((out / "frame-results.json").read_text(encoding="utf-8"))
        assert "Lé" in [r["name"] for r in report["results"]]
        res = next(r for r in report["results"] if r["name"] == "Lé")
        # 12 kN at midspan of a simple beam: R = P/2 = 6 kN each (AISC Manual, Table 3-23 case 7; from memory)
        assert sorted(r["fy"] for r in res["reactions"]) == pytest.approx([6.0, 6.0], rel=1e-9)
        assert {m["layer"] for m in res["members"]} == {"FRAME-Bé"}
        assert any("not UTF-8" in w for w in report["warnings"])


# ---------------------------------------------------------------------------
# compare: report files that are not what the schema says
# ---------------------------------------------------------------------------


def _two_reports(tmp_path, capsys):
    for name in ("rev-a", "rev-b"):
        path = write_case(tmp_path / "in", beam_doc(), name=f"{name}.dxf")
        solve_ok(capsys, path, tmp_path / "reports")
    return tmp_path / "reports" / "rev-a-results.json", tmp_path / "reports" / "rev-b-results.json"


def _set(report: dict, path: str, value):
    *head, last = path.split(".")
    node = report
    for key in head:
        node = node[int(key)] if isinstance(node, list) else node[key]
    node[int(last) if isinstance(node, list) else last] = value


@pytest.mark.parametrize("key, value", [
    ("results.0.members.0.m_max", "12.5"),
    ("results.0.members.0.start", ["0", 0]),
    ("results.0.reactions.0.x", None),
    ("results.0.reactions.0.fy", True),
    ("results.0.members.0.n_min", [1, 2]),
    ("results.0.members", {"a": 1}),
    ("results.0", "D"),
    ("units.force", 5),
])
def test_compare_refuses_report_values_of_the_wrong_type(tmp_path, capsys, key, value):
    a, b = _two_reports(tmp_path, capsys)
    report = json.loads(b.read_text(encoding="utf-8"))
    _set(report, key, value)
    b.write_text(json.dumps(report), encoding="utf-8")
    rc, _, err = run_cli(capsys, "compare", a, b, "--out", tmp_path / "cmp")
    shown = key.replace(".0.", "[0].").replace(".0", "[0]") if key.startswith("results") else key
    assert_bad_input(rc, err, tmp_path / "cmp", names=(str(b), shown))


@pytest.mark.parametrize("text, names", [
    ("[" * 100_000 + "]" * 100_000, ("nested too deep",)),
    ('{"schema": 1, "units": {"force": "kN", "length": "m"}, "results": [], "x": ' + "9" * 5000 + "}",
     ("not a JSON report",)),
])
def test_compare_refuses_hostile_json(tmp_path, capsys, text, names):
    a, b = _two_reports(tmp_path, capsys)
    b.write_text(text, encoding="utf-8")
    rc, _, err = run_cli(capsys, "compare", a, b, "--out", tmp_path / "cmp")
    assert_bad_input(rc, err, tmp_path / "cmp", names=(str(b),) + names)
    assert len(err) < 600


def test_compare_refuses_a_huge_integer_value(tmp_path, capsys):
    a, b = _two_reports(tmp_path, capsys)
    text = b.read_text(encoding="utf-8")
    report = json.loads(text)
    old = report["results"][0]["members"][0]["m_max"]
    report["results"][0]["members"][0]["m_max"] = 10 ** 400  # within the parser's digit limit, beyond a float
    b.write_text(json.dumps(report), encoding="utf-8")
    rc, _, err = run_cli(capsys, "compare", a, b, "--out", tmp_path / "cmp")
    assert_bad_input(rc, err, tmp_path / "cmp", names=(str(b), "results[0].members[0].m_max", "finite number"))
    assert old is not None


# ---------------------------------------------------------------------------
# the preview: far-away linework, huge decorative grids, failures
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("far", [1e308, 1e200, 1e13])
def test_far_away_line_on_another_layer_does_not_stop_the_preview(tmp_path, capsys, far):
    doc = beam_doc()
    doc.layers.add("DECOR")
    line = doc.modelspace().add_line((-far, 0), (far, far), dxfattribs={"layer": "DECOR"})
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--units", "kN,m")
    assert rc == 0, err
    assert (tmp_path / "out" / "frame-results.png").stat().st_size > 1000
    assert f"#{line.dxf.handle}" in err and "not drawn" in err
    from test_hardening import check_simple_beam
    check_simple_beam(json.loads((tmp_path / "out" / "frame-results.json").read_text(encoding="utf-8")))


def test_huge_decorative_grid_is_left_out_of_the_preview(tmp_path):
    from dxf_builders import add_block

    doc = beam_doc()
    doc.layers.add("TILES")
    add_block(doc, "TILE").add_circle((0, 0), 0.2, dxfattribs={"layer": "TILES"})
    grid = _minsert(doc.modelspace(), "TILE", (0, 10), rows=300, cols=300, row_spacing=1, col_spacing=1,
                    layer="TILES")
    path = write_case(tmp_path / "in", doc)
    codes, err = _run_limited([["solve", path, "--out", tmp_path / "out", "--units", "kN,m"]], timeout=90)
    assert codes == ["0"], err
    assert f"#{grid.dxf.handle}" in err and "180000" in err  # 90000 cells, each a reference and a circle
    assert "not drawn" in err
    assert (tmp_path / "out" / "frame-results.png").exists()


def test_a_preview_that_fails_is_a_warning(tmp_path, capsys, monkeypatch):
    import dxf2frame.draw.preview as preview

    def broken(*a, **kw):
        raise ValueError("figure size must be positive finite")

    monkeypatch.setattr(preview, "render_panels_png", broken)
    path = write_case(tmp_path / "in", beam_doc())
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--units", "kN,m")
    assert rc == 0, err
    assert "preview: not drawn" in err and "figure size" in err
    assert not (tmp_path / "out" / "frame-results.png").exists()
    assert (tmp_path / "out" / "frame-results.json").exists() and (tmp_path / "out" / "frame-results.dxf").exists()
    report = json.loads((tmp_path / "out" / "frame-results.json").read_text())
    assert any("preview: not drawn" in w for w in report["warnings"])   # the report says so too


# ---------------------------------------------------------------------------
# truncated files
# ---------------------------------------------------------------------------


def _cut(doc, where: str) -> bytes:
    import io

    buf = io.StringIO()
    doc.write(buf)
    text = buf.getvalue()
    if where == "entities":  # just after the first member's handle
        start = text.index("\nENTITIES\n")
        at = text.index("\nLINE\n", start) + len("\nLINE\n  5\n")
    elif where == "header":
        at = text.index("$INSUNITS") - 40
    elif where == "blocks":
        at = text.index("\nBLOCKS\n") + 300
    else:  # after the ENTITIES section, inside OBJECTS
        at = text.index("\nOBJECTS\n") + 200
    return text[:at].encode("utf-8")


@pytest.mark.parametrize("where, section", [("entities", "ENTITIES"), ("header", "HEADER"), ("blocks", "BLOCKS")])
@pytest.mark.parametrize("command", ["check", "solve"])
def test_truncated_files_are_called_damaged(tmp_path, capsys, where, section, command):
    path = write_case(tmp_path / "in", data=_cut(beam_doc(), where))
    args = [command, path] + (["--out", tmp_path / "out", "--no-png"] if command == "solve" else [])
    rc, _, err = run_cli(capsys, *args)
    assert_bad_input(rc, err, tmp_path / "out", names=(str(path), "damaged", f"inside the {section} section"))


def test_file_cut_after_its_entities_is_read_with_a_warning(tmp_path, capsys):
    path = write_case(tmp_path / "in", data=_cut(beam_doc(), "objects"))
    report, err = solve_ok(capsys, path, tmp_path / "out")
    from test_hardening import check_simple_beam
    check_simple_beam(report)
    assert "recovery mode" in err


def test_long_names_in_warnings_and_settings_errors_are_shortened(tmp_path, capsys):
    from dxf_builders import add_support

    doc = beam_doc()
    long_layer = "DECOR-" + "x" * 5000
    doc.layers.add(long_layer)
    add_support(doc.modelspace(), "pin", (10.0, 10.0), layer=long_layer)  # a symbol off its layer: a warning
    path = write_case(tmp_path / "in", doc)
    report, err = solve_ok(capsys, path, tmp_path / "out")
    assert report["warnings"] and all(len(w) < 1000 for w in report["warnings"])
    write_case(tmp_path / "in", doc, settings=FAST_SETTINGS + f'[units]\nlength = "{"q" * 100_000}"\n'.replace(
        "[units]\n", "", 1).replace("length", "[geometry]\nsnap", 1))
    rc, _, err = run_cli(capsys, "check", path)
    assert rc == 2 and len(err) < 1200, err[:300]


@pytest.mark.parametrize("key", ["source", "results.0.members.0.layer", "results.0.name"])
def test_compare_refuses_half_surrogate_escapes(tmp_path, capsys, key):
    a, b = _two_reports(tmp_path, capsys)
    report = json.loads(b.read_text(encoding="utf-8"))
    _set(report, key, "FR\udce9")
    b.write_text(json.dumps(report), encoding="utf-8")  # ensure_ascii: written as the escape \\udce9
    rc, _, err = run_cli(capsys, "compare", a, b, "--out", tmp_path / "cmp")
    shown = key.replace(".0.", "[0].").replace(".0", "[0]")
    assert_bad_input(rc, err, tmp_path / "cmp", names=(str(b), shown, "UTF-16"))


@pytest.mark.parametrize("command", ["check", "solve"])
def test_file_name_that_is_not_utf8_is_refused(tmp_path, capsys, command):
    import os

    folder = tmp_path / "in"
    path = write_case(folder, beam_doc())
    odd = Path(os.fsdecode(os.fsencode(str(folder)) + b"/Tr\xe4ger.dxf"))
    path.rename(odd)
    args = [command, odd] + (["--out", tmp_path / "out", "--no-png"] if command == "solve" else [])
    rc, _, err = run_cli(capsys, *args)
    assert_bad_input(rc, err, tmp_path / "out", names=("Tr\\xe4ger.dxf", "not UTF-8", "rename"))


@pytest.mark.parametrize("bottom", ["decor", "frame"])
def test_thousands_of_nested_blocks_do_not_exhaust_the_stack(tmp_path, capsys, bottom):
    from dxf_builders import add_block, insert_block

    doc = beam_doc()
    doc.layers.add("DECOR")
    layer = "FRAME" if bottom == "frame" else "DECOR"
    add_block(doc, "D0").add_line((0, 0), (0, 1), dxfattribs={"layer": layer})
    for level in range(1, 3000):
        insert_block(add_block(doc, f"D{level}"), f"D{level - 1}", (0, 0), layer="0")
    top = insert_block(doc.modelspace(), "D2999", (10, 10), layer="DECOR")
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--units", "kN,m")
    if bottom == "decor":
        assert rc == 0, err
        assert f"#{top.dxf.handle}" in err and "3000 levels deep" in err and "not drawn" in err
        assert (tmp_path / "out" / "frame-results.png").exists()
        from test_hardening import check_simple_beam
        check_simple_beam(json.loads((tmp_path / "out" / "frame-results.json").read_text(encoding="utf-8")))
    else:
        assert_bad_input(rc, err, tmp_path / "out", names=(f"#{top.dxf.handle}", "nested more than 16 deep"))


def test_minsert_with_a_count_of_zero_is_refused(tmp_path, capsys):
    import io

    doc = beam_doc()
    ins = _minsert(doc.modelspace(), "FORCE", (1.0, 0.0), rows=2, cols=3, row_spacing=1.0, col_spacing=1.0,
                   P="10 kN")
    buf = io.StringIO()
    doc.write(buf)
    text = buf.getvalue()
    start = text.index(f"\n  5\n{ins.dxf.handle}\n")
    end = text.index("\n  0\n", start)
    entity = text[start:end].replace("\n 71\n2\n", "\n 71\n0\n")  # row count 0: ezdxf would read no cell
    path = write_case(tmp_path / "in", data=(text[:start] + entity + text[end:]).encode("utf-8"))
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=(f"#{ins.dxf.handle}", "0 rows", "no cell"))


@pytest.mark.parametrize("text", ["5-2", "3*2 kN", "2 kN + 1", "10/2/5 kN", "4 kN*2"])
def test_calculations_in_number_texts_are_refused(text):
    """The unit parser evaluates arithmetic ('5-2' would be read as 3 kN):
    a value is one number and its unit, so a calculation is refused."""
    with pytest.raises(UnitError, match="calculation"):
        _force(text)


@pytest.mark.parametrize("text, kind, meant", [
    # 3/8 in = 0.375 in = 0.009525 m (1 in = 25.4 mm exactly, by definition of the inch)
    ("3/8 in", "length", 0.009525),
    # 204 in^4 = 204 * 0.0254^4 m^4 (same definition)
    ("204 in**4", "inertia", 204 * 0.0254 ** 4),
    ("9100 mm^2", "area", 9100e-6),
    ("200 N/mm\u00b2", "stress", 200e6),
])
def test_units_with_exponents_and_plain_fractions_are_one_number(text, kind, meant):
    assert parse_quantity(text, kind, default_unit="") == pytest.approx(meant, rel=1e-12)
