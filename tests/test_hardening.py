"""Hostile and broken drawings: never a traceback, never a partial output,
never a silent wrong answer.

Every bad input must end with exit status 2 and one line on stderr that
names the file, or the entity handle and layer, and leave the output folder
without a single file (hidden staging files included).  Input that can be
salvaged (a damaged file the recover mode repairs, a member shorter than
the snap tolerance, a drawing far from the origin) gives a warning and the
correct answer, checked against closed-form results.

Most cases run the CLI in-process (``dxf2frame.cli.main``) with capsys; a
few run ``python -m dxf2frame`` in a subprocess to prove the exit status
and the absence of a traceback end to end.

Long run: nothing here depends on ``DXF2FRAME_LONG``; see
``test_mutation.py`` and ``test_pipeline_properties.py``.
"""
from __future__ import annotations

import io
import json
import math
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import ezdxf
import pytest
from hypothesis import HealthCheck, given, settings as hsettings, strategies as st

from dxf_builders import add_load, add_member, add_support, new_drawing
from dxf2frame.cli import main
from dxf2frame.errors import SettingsError, UnitError, one_line
from dxf2frame.settings import Settings
from dxf2frame.units import KINDS, parse_quantity

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "drawings"

FAST_SETTINGS = """\
[units]
force = "kN"
[sections.default]
E = "200 GPa"
A = "5000 mm**2"
I = "8e7 mm**4"
[combinations]
builtin = []
draw = "D"
"""

W_KN_M = 10.0  # kN/m on every test beam
SPAN = 6.0


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------


def beam_doc(*, span: float = SPAN, offset: tuple[float, float] = (0.0, 0.0), units: str = "m",
             frame_layer: str = "FRAME", case: str = "D", w: str = f"{W_KN_M} kN/m"):
    """A simply supported beam (pin at the left, roller at the right) under a
    uniform gravity load over its whole length."""
    ox, oy = offset
    doc = new_drawing(units)
    if frame_layer not in doc.layers:
        doc.layers.add(frame_layer)
    msp = doc.modelspace()
    add_member(msp, (ox, oy), (ox + span, oy), layer=frame_layer)
    add_support(msp, "pin", (ox, oy))
    add_support(msp, "roller", (ox + span, oy))
    add_load(msp, "udl", (ox + span / 3, oy), W=w, CASE=case)
    return doc


def write_case(folder: Path, doc=None, *, data: bytes | None = None, settings: str | None = FAST_SETTINGS,
               name: str = "frame.dxf", fmt: str = "asc") -> Path:
    """Write a drawing (or raw bytes) and its settings file into ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / name
    if data is not None:
        path.write_bytes(data)
    else:
        doc.saveas(path, fmt=fmt)
    if settings is not None:
        (folder / "dxf2frame.toml").write_text(settings, encoding="utf-8")
    return path


def run_cli(capsys, *args: str) -> tuple[int, str, str]:
    capsys.readouterr()
    rc = main([str(a) for a in args])
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def files_in(folder: Path) -> list[Path]:
    """Every file below ``folder`` (hidden ones included)."""
    return [p for p in folder.rglob("*") if p.is_file()] if folder.exists() else []


def assert_bad_input(rc: int, err: str, out_dir: Path | None = None, *, names: tuple[str, ...] = ()) -> None:
    """Exit 2, one line on stderr naming what is wrong, no output file."""
    assert rc == 2, err
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("dxf2frame: error: "), err
    for text in names:
        assert text in lines[0], (text, lines[0])
    if out_dir is not None:
        assert files_in(out_dir) == [], files_in(out_dir)


def solve_ok(capsys, path: Path, out: Path, *extra: str) -> tuple[dict, str]:
    """Solve and return the JSON report and stderr; the run must succeed."""
    rc, stdout, err = run_cli(capsys, "solve", path, "--out", out, "--no-png", "--units", "kN,m", *extra)
    assert rc == 0, err
    assert "Traceback" not in err
    report = json.loads((out / f"{path.stem}-results.json").read_text(encoding="utf-8"))
    return report, err


def check_simple_beam(report: dict, *, span: float = SPAN, w: float = W_KN_M, case: str = "D",
                      x0: float = 0.0) -> None:
    """Reactions and midspan moment of a simply supported beam under a
    uniform load w over span L."""
    res = next(r for r in report["results"] if r["name"] == case)
    fy = sorted((r["x"], r["fy"]) for r in res["reactions"])
    assert [x for x, _ in fy] == pytest.approx([x0, x0 + span], rel=1e-12, abs=1e-9)
    # R = wL/2 at each end (AISC Manual, Table 3-23 case 1, simple beam - uniformly distributed load; from memory)
    assert [f for _, f in fy] == pytest.approx([w * span / 2] * 2, rel=1e-6)
    m_max = max(m["m_max"] for m in res["members"])
    # M max = wL^2/8 at midspan (AISC Manual, Table 3-23 case 1; from memory)
    assert m_max == pytest.approx(w * span**2 / 8, rel=1e-6)


@pytest.fixture
def demo_copy(tmp_path) -> Path:
    """The two demo revisions and their settings copied into a scratch folder."""
    folder = tmp_path / "demo"
    folder.mkdir()
    for name in ("packing-shed-rev-A.dxf", "packing-shed-rev-B.dxf", "dxf2frame.toml"):
        shutil.copy2(DEMO / name, folder / name)
    return folder


# ---------------------------------------------------------------------------
# files that are not (usable) DXF drawings
# ---------------------------------------------------------------------------

NOT_DXF = {
    "empty": b"",
    "blank": b"\n\n   \r\n\t\n",
    "random": bytes((i * 97 + 13) % 256 for i in range(4000)),
    "png": b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR" + bytes(200),
    "text": "Bemessung der Träger\nnot a drawing at all\n".encode("utf-8"),
    "json": b'{"schema": 1, "results": []}',
    "half-binary": b"AutoCAD Binary DXF\r\n\x1a\x00" + bytes(range(256)) * 3,
}


@pytest.mark.parametrize("command", ["check", "solve"])
@pytest.mark.parametrize("kind", sorted(NOT_DXF))
def test_not_a_dxf_file(tmp_path, capsys, kind, command):
    path = write_case(tmp_path / "in", data=NOT_DXF[kind])
    out = tmp_path / "out"
    args = [command, path] + (["--out", out, "--no-png"] if command == "solve" else [])
    rc, _, err = run_cli(capsys, *args)
    assert_bad_input(rc, err, out, names=(str(path),))
    assert re.search(r"empty|not a readable DXF", err), err


def test_missing_file_and_folder_named_like_a_drawing(tmp_path, capsys):
    rc, _, err = run_cli(capsys, "check", tmp_path / "nope.dxf")
    assert_bad_input(rc, err, names=("nope.dxf", "not found"))
    folder = tmp_path / "folder.dxf"
    folder.mkdir()
    rc, _, err = run_cli(capsys, "check", folder)
    assert_bad_input(rc, err, names=("folder.dxf", "not a file"))


# ---------------------------------------------------------------------------
# drawings without a frame
# ---------------------------------------------------------------------------


def _empty():
    return new_drawing("m")


def _no_frame_layer():
    doc = new_drawing("m")
    doc.layers.add("WALLS")
    add_member(doc.modelspace(), (0, 0), (6, 0), layer="WALLS")
    return doc


def _only_supports():
    doc = new_drawing("m")
    add_support(doc.modelspace(), "pin", (0, 0))
    add_support(doc.modelspace(), "roller", (6, 0))
    return doc


def _only_loads():
    doc = new_drawing("m")
    add_load(doc.modelspace(), "force", (3, 0), P="5 kN")
    add_load(doc.modelspace(), "udl", (3, 0), W="2 kN/m")
    return doc


@pytest.mark.parametrize("build", [_empty, _no_frame_layer, _only_supports, _only_loads],
                         ids=["empty", "no-frame-layer", "only-supports", "only-loads"])
@pytest.mark.parametrize("command", ["check", "solve"])
def test_drawing_without_members(tmp_path, capsys, build, command):
    path = write_case(tmp_path / "in", build())
    out = tmp_path / "out"
    args = [command, path] + (["--out", out, "--no-png"] if command == "solve" else [])
    rc, _, err = run_cli(capsys, *args)
    assert_bad_input(rc, err, out, names=("no members", "'FRAME'"))


def test_loads_with_members_but_no_supports(tmp_path, capsys):
    doc = new_drawing("m")
    line = add_member(doc.modelspace(), (0, 0), (6, 0))
    add_load(doc.modelspace(), "udl", (3, 0), W="2 kN/m")
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=(f"#{line.dxf.handle}", "no support"))


# ---------------------------------------------------------------------------
# damaged, binary and recovered files
# ---------------------------------------------------------------------------


def _dxf_text(doc) -> str:
    s = io.StringIO()
    doc.write(s)
    return s.getvalue()


def test_binary_dxf_gives_the_same_results_as_ascii(tmp_path, capsys):
    doc = beam_doc()
    asc = write_case(tmp_path / "asc", doc)
    binary = write_case(tmp_path / "bin", doc, fmt="bin")
    assert binary.read_bytes().startswith(b"AutoCAD Binary DXF")
    rep_a, _ = solve_ok(capsys, asc, tmp_path / "out-a")
    rep_b, _ = solve_ok(capsys, binary, tmp_path / "out-b")
    check_simple_beam(rep_b)
    assert rep_b["results"] == rep_a["results"]  # same drawing, two encodings


@pytest.mark.parametrize("damage", ["no-eof", "bad-header-number", "cut-in-objects"])
def test_damaged_file_is_recovered_with_a_warning(tmp_path, capsys, damage):
    text = _dxf_text(beam_doc())
    if damage == "no-eof":
        text = text[: text.rstrip().rfind("EOF")]
    elif damage == "bad-header-number":
        assert "$LTSCALE\n 40\n1.0\n" in text
        text = text.replace("$LTSCALE\n 40\n1.0\n", "$LTSCALE\n 40\n1.0abc\n")
    else:
        text = text[: text.find("OBJECTS") + 300]
    path = write_case(tmp_path / "in", data=text.encode("utf-8"))
    with pytest.raises(ezdxf.DXFStructureError):
        ezdxf.readfile(path)  # the file really is damaged
    rc, out, err = run_cli(capsys, "check", path)
    assert rc == 0, err
    assert "recovery mode" in out
    report, err = solve_ok(capsys, path, tmp_path / "out")
    assert "recovery mode" in err and "Traceback" not in err
    assert any("recovery mode" in w for w in report["warnings"])
    check_simple_beam(report)


def _with_shared_handle(doc, a, b) -> str:
    """DXF text of ``doc`` where entity ``b`` carries the handle of ``a``."""
    text = _dxf_text(doc)
    pattern = rf"(\n  0\n{b.dxftype()}\n  5\n){b.dxf.handle}\n"
    out, n = re.subn(pattern, rf"\g<1>{a.dxf.handle}\n", text, count=1)
    assert n == 1
    return out


@pytest.mark.parametrize("damaged", [False, True], ids=["readable", "needs-recovery"])
def test_members_sharing_a_handle_are_refused(tmp_path, capsys, damaged):
    doc = new_drawing("m")
    msp = doc.modelspace()
    first = add_member(msp, (0, 0), (6, 0))
    second = add_member(msp, (6, 0), (6, 4))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6, 4), rotation=90)
    add_load(msp, "udl", (3, 0), W="10 kN/m")
    text = _with_shared_handle(doc, first, second)
    if damaged:  # the recover mode would silently drop one of the two lines
        text = text[: text.rstrip().rfind("EOF")]
    path = write_case(tmp_path / "in", data=text.encode("utf-8"))
    for command in ("check", "solve"):
        args = [command, path] + (["--out", tmp_path / "out", "--no-png"] if command == "solve" else [])
        rc, _, err = run_cli(capsys, *args)
        assert_bad_input(rc, err, tmp_path / "out", names=(f"#{first.dxf.handle}", "share", "'FRAME'"))


def test_shared_handle_outside_the_frame_is_only_a_warning(tmp_path, capsys):
    doc = beam_doc()
    doc.layers.add("NOTES")
    msp = doc.modelspace()
    a = msp.add_text("grid A", dxfattribs={"layer": "NOTES"})
    b = msp.add_text("grid B", dxfattribs={"layer": "NOTES"})
    path = write_case(tmp_path / "in", data=_with_shared_handle(doc, a, b).encode("utf-8"))
    report, err = solve_ok(capsys, path, tmp_path / "out")
    assert f"#{a.dxf.handle}" in err and "share" in err
    check_simple_beam(report)


# ---------------------------------------------------------------------------
# numbers: huge, tiny, NaN, infinite
# ---------------------------------------------------------------------------


def test_drawing_far_from_the_origin_gives_the_correct_answer(tmp_path, capsys):
    x0 = 1e9  # metres
    path = write_case(tmp_path / "in", beam_doc(offset=(x0, -x0)))
    report, _ = solve_ok(capsys, path, tmp_path / "out")
    check_simple_beam(report, x0=x0)


def test_a_huge_span_gives_the_correct_answer(tmp_path, capsys):
    span = 1e9
    path = write_case(tmp_path / "in", beam_doc(span=span, w="1 kN/m"))
    report, _ = solve_ok(capsys, path, tmp_path / "out")
    check_simple_beam(report, span=span, w=1.0)


def test_coordinates_beyond_any_drawing_are_refused(tmp_path, capsys):
    doc = beam_doc(span=1e300)
    line = next(iter(doc.modelspace().query("LINE")))
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=(f"#{line.dxf.handle}", "'FRAME'", "from the origin"))


def test_short_members_far_from_the_origin_are_refused(tmp_path, capsys):
    # a 2 mm member 1e9 m out: doubles there are spaced 1.2e-7 m apart, so its
    # length would carry a rounding of about 6e-5 of itself (IEEE 754 binary64)
    doc = beam_doc(span=0.002, offset=(1e9, 0.0))
    line = next(iter(doc.modelspace().query("LINE")))
    path = write_case(tmp_path / "in", doc, settings=FAST_SETTINGS + '[geometry]\nsnap = "0.01 mm"\n')
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=(f"#{line.dxf.handle}", "'FRAME'", "move the drawing near the origin"))


def test_member_shorter_than_the_tolerance_is_dropped_with_a_warning(tmp_path, capsys):
    doc = beam_doc()
    stub = add_member(doc.modelspace(), (SPAN, 0.0), (SPAN + 1e-4, 0.0))  # 0.1 mm < 0.5 mm default snap
    path = write_case(tmp_path / "in", doc)
    report, err = solve_ok(capsys, path, tmp_path / "out")
    assert f"#{stub.dxf.handle}" in err and "zero-length" in err
    check_simple_beam(report)


BAD_NUMBERS = ["nan", "NaN", "inf", "-inf", "1e999", "-1e999 kN", "1e308 kip"]


@pytest.mark.parametrize("text", BAD_NUMBERS)
def test_non_finite_force_attribute(tmp_path, capsys, text):
    doc = beam_doc()
    ins = add_load(doc.modelspace(), "force", (2.0, 0.0), P=text)
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=(f"#{ins.dxf.handle}", "'LOADS'", "P"))


@pytest.mark.parametrize("block, layer, attrs, tag", [
    ("udl", "LOADS", {"W": "5 kN/m", "FROM": "nan"}, "FROM"),
    ("udl", "LOADS", {"W1": "inf", "W2": "1"}, "W1"),
    ("force", "LOADS", {"P": "5 kN", "ANGLE": "nan"}, "ANGLE"),
    ("couple", "LOADS", {"M": "-inf"}, "M"),
    ("spring", "SUPPORTS", {"KY": "nan"}, "KY"),
    ("pin", "SUPPORTS", {"SETTLE_Y": "1e999"}, "SETTLE_Y"),
])
def test_non_finite_attributes_name_the_block(tmp_path, capsys, block, layer, attrs, tag):
    doc = beam_doc()
    msp = doc.modelspace()
    ins = (add_support(msp, block, (3.0, 0.0), **attrs) if layer == "SUPPORTS"
           else add_load(msp, block, (2.0, 0.0), **attrs))
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=(f"#{ins.dxf.handle}", f"'{layer}'", tag))


def _set_nan_start(doc):
    line = next(iter(doc.modelspace().query("LINE")))
    line.dxf.start = (math.nan, 0.0, 0.0)
    return line


def _set_inf_end(doc):
    line = next(iter(doc.modelspace().query("LINE")))
    line.dxf.end = (math.inf, 0.0, 0.0)
    return line


def _force_with(key, value):
    def build(doc):
        ins = add_load(doc.modelspace(), "force", (2.0, 0.0), P="5 kN")
        if key == "insert":
            ins.dxf.insert = value
        else:
            ins.dxf.set(key, value)
        return ins
    return build


@pytest.mark.parametrize("corrupt", [
    _set_nan_start, _set_inf_end,
    _force_with("rotation", math.nan), _force_with("xscale", math.inf), _force_with("yscale", math.nan),
    _force_with("insert", (math.inf, 0.0, 0.0)),
], ids=["line-nan", "line-inf", "rotation-nan", "xscale-inf", "yscale-nan", "insert-inf"])
@pytest.mark.parametrize("command", ["check", "solve"])
def test_non_finite_geometry_names_the_entity(tmp_path, capsys, corrupt, command):
    doc = beam_doc()
    entity = corrupt(doc)
    path = write_case(tmp_path / "in", doc)
    out = tmp_path / "out"
    args = [command, path] + (["--out", out, "--no-png"] if command == "solve" else [])
    rc, _, err = run_cli(capsys, *args)
    assert_bad_input(rc, err, out, names=(f"#{entity.dxf.handle}", f"'{entity.dxf.layer}'", "finite"))


# ---------------------------------------------------------------------------
# text in any script
# ---------------------------------------------------------------------------

UNICODE_SECTION = """
[sections."FRAME-TRÄGER"]
E = "200 GPa"
A = "7600 mm**2"
I = "2.5e8 mm**4"
"""


def test_non_ascii_layer_names_and_case_names(tmp_path, capsys):
    case = "Schnee-雪"
    doc = beam_doc(frame_layer="FRAME-Träger", case=case)
    path = write_case(tmp_path / "in", doc, settings=FAST_SETTINGS + UNICODE_SECTION)
    report, _ = solve_ok(capsys, path, tmp_path / "out", "--show", case)
    check_simple_beam(report, case=case)
    assert {m["layer"] for m in report["results"][0]["members"]} == {"FRAME-Träger"}


def test_non_ascii_attribute_text_is_a_clear_error(tmp_path, capsys):
    doc = beam_doc()
    doc.layers.add("FRAME-Stütze")
    ins = add_load(doc.modelspace(), "force", (2.0, 0.0), P="fünf kN\u2028\u0007")
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=(f"#{ins.dxf.handle}", "'LOADS'", "fünf"))
    assert "\x07" not in err  # control characters are escaped, the message stays one line


def test_r12_drawing_with_non_ascii_text(tmp_path, capsys):
    doc = new_drawing(None, dxfversion="R12")  # R12 has no $INSUNITS: the unit comes from --length-unit
    msp = doc.modelspace()
    add_member(msp, (0, 0), (SPAN, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (SPAN, 0))
    add_load(msp, "udl", (2, 0), W=f"{W_KN_M} kN/m", CASE="Lé")
    path = write_case(tmp_path / "in", doc)
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=("length unit",))
    report, _ = solve_ok(capsys, path, tmp_path / "out", "--length-unit", "m", "--show", "Lé")
    check_simple_beam(report, case="Lé")


# ---------------------------------------------------------------------------
# limits from the settings
# ---------------------------------------------------------------------------


def test_file_size_limit(tmp_path, capsys):
    path = write_case(tmp_path / "in", beam_doc(), settings=FAST_SETTINGS + "[limits]\nmax_file_mb = 0.001\n")
    for command in ("check", "solve"):
        args = [command, path] + (["--out", tmp_path / "out", "--no-png"] if command == "solve" else [])
        rc, _, err = run_cli(capsys, *args)
        assert_bad_input(rc, err, tmp_path / "out", names=(str(path), "more than the limit of 0.001 MB",
                                                           "max_file_mb"))


def test_entity_count_limit(tmp_path, capsys):
    path = write_case(tmp_path / "in", beam_doc(), settings=FAST_SETTINGS + "[limits]\nmax_entities = 20\n")
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=(str(path), "more than the limit of 20", "max_entities"))


def test_far_too_many_entities_are_refused_before_parsing(tmp_path, capsys, monkeypatch):
    import dxf2frame.drawing_file as drawing_file

    doc = beam_doc()
    msp = doc.modelspace()
    for i in range(3000):
        msp.add_point((i, 10.0))
    path = write_case(tmp_path / "in", doc, settings=FAST_SETTINGS + "[limits]\nmax_entities = 100\n")

    def no_parsing(*a, **kw):
        raise AssertionError("the file was parsed although it is far over the limit")

    monkeypatch.setattr(drawing_file.ezdxf, "readfile", no_parsing)
    monkeypatch.setattr(drawing_file.recover, "readfile", no_parsing)
    rc, _, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, names=(str(path), "more than the limit of 100", "max_entities"))


@pytest.mark.parametrize("text, names", [
    (b"[units\nforce = ", ("dxf2frame.toml", "not valid TOML")),
    (b'[units]\nforce = "\xff\xfe"\n', ("dxf2frame.toml", "UTF-8")),
    (b"a = " + b"[" * 5000 + b"]" * 5000, ("dxf2frame.toml",)),
    (b'[sections.default]\nE = "nan GPa"\nA = "1 m**2"\nI = "1 m**4"\n', ("sections.default.E",)),
])
def test_broken_settings_file(tmp_path, capsys, text, names):
    path = write_case(tmp_path / "in", beam_doc(), settings=None)
    (path.parent / "dxf2frame.toml").write_bytes(text)
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=names)


# ---------------------------------------------------------------------------
# the analysis cannot run as drawn
# ---------------------------------------------------------------------------


def test_indeterminate_frame_without_sections_refused_when_the_settings_say_so(tmp_path, capsys):
    """With [analysis] missing_sections = "refuse" an indeterminate frame
    without sections is bad input for check and solve alike (by default it
    is solved with equal relative stiffness: tests/test_equal_stiffness.py)."""
    doc = new_drawing("m")
    msp = doc.modelspace()
    line = add_member(msp, (0, 0), (SPAN, 0))
    add_support(msp, "fixed", (0, 0))
    add_support(msp, "roller", (SPAN, 0))
    add_load(msp, "udl", (3, 0), W="10 kN/m")
    path = write_case(tmp_path / "in", doc, settings='[units]\nforce = "kN"\n[combinations]\nbuiltin = []\n'
                      '[analysis]\nmissing_sections = "refuse"\n')
    rc, out, err = run_cli(capsys, "check", path)
    assert_bad_input(rc, err, None, names=(f"#{line.dxf.handle}", "'FRAME'", "no section"))
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=(f"#{line.dxf.handle}", "'FRAME'", "no section"))


# ---------------------------------------------------------------------------
# outputs: never over the input, never half written
# ---------------------------------------------------------------------------


def test_report_path_on_the_input_is_refused(tmp_path, capsys):
    path = write_case(tmp_path / "in", beam_doc())
    before = path.read_bytes()
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--report", path, "--no-png")
    assert_bad_input(rc, err, tmp_path / "out", names=("overwrite the input",))
    assert path.read_bytes() == before


def test_output_drawing_on_the_input_is_refused(tmp_path, capsys):
    path = write_case(tmp_path / "in", beam_doc())
    before = path.read_bytes()
    rc, _, err = run_cli(capsys, "solve", path, "--out", path, "--no-png")
    assert_bad_input(rc, err, names=("overwrite the input",))
    assert path.read_bytes() == before


def test_output_folder_below_a_file_is_refused(tmp_path, capsys):
    path = write_case(tmp_path / "in", beam_doc())
    blocker = tmp_path / "results"
    blocker.write_text("a file, not a folder")
    rc, _, err = run_cli(capsys, "solve", path, "--out", blocker / "sub", "--no-png")
    assert_bad_input(rc, err, names=("is a file, not a folder",))


@pytest.mark.parametrize("where, status", [("writer", 1), ("csv", 4), ("second-move", 4)])
def test_a_failure_while_writing_leaves_nothing(tmp_path, capsys, monkeypatch, where, status):
    import dxf2frame.report.report as report_mod
    import dxf2frame.staging as staging
    import dxf2frame.draw.writer as writer

    if where == "writer":
        real = writer.write_result_drawing

        def broken(source, out, *a, **kw):
            real(source, out, *a, **kw)  # a complete staged drawing exists...
            raise RuntimeError("disk full")  # ...and then something fails

        monkeypatch.setattr(writer, "write_result_drawing", broken)
    elif where == "csv":
        def broken_rows(fc, res, *_args, **_kw):
            fc.write("D,ca")  # half a row of the CSV (written with the JSON)...
            raise OSError(28, "No space left on device")  # ...then the disk is full

        monkeypatch.setattr(report_mod, "_csv_rows", broken_rows)
    else:
        real_move = staging.move_into_place
        calls = []

        def flaky(staged, target):
            calls.append(target)
            if len(calls) == 2:
                raise OSError(5, "Input/output error")
            real_move(staged, target)

        monkeypatch.setattr(staging, "move_into_place", flaky)
    path = write_case(tmp_path / "in", beam_doc())
    out = tmp_path / "deep" / "out"
    rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--no-png")
    assert rc == status and "Traceback" not in err, err
    if status == 1:
        assert "internal error" in err
    else:  # the machine, not the drawing: one line naming what, where and why
        assert len(err.strip().splitlines()) == 1, err
        assert "cannot write" in err and str(out) in err
        assert ("No space left" if where == "csv" else "Input/output error") in err
    assert files_in(tmp_path / "deep") == []
    assert not (tmp_path / "deep").exists()  # folders made for the outputs are removed again


# ---------------------------------------------------------------------------
# the input is never touched
# ---------------------------------------------------------------------------


def _fingerprint(path: Path) -> tuple[bytes, int]:
    return path.read_bytes(), path.stat().st_mtime_ns


def test_input_bytes_and_timestamp_unchanged_by_every_command(demo_copy, tmp_path, capsys):
    rev_a, rev_b = demo_copy / "packing-shed-rev-A.dxf", demo_copy / "packing-shed-rev-B.dxf"
    settings = demo_copy / "dxf2frame.toml"
    old = 1_500_000_000_000_000_000  # a timestamp long past, so a rewrite could not keep it by chance
    for p in (rev_a, rev_b, settings):
        os.utime(p, ns=(old, old))
    before = {p: _fingerprint(p) for p in (rev_a, rev_b, settings)}
    runs = [
        ["check", rev_a],
        ["solve", rev_a, "--out", tmp_path / "solved", "--no-png"],
        ["compare", rev_a, rev_b, "--out", tmp_path / "compared"],
        ["explain", rev_a, "--at", "4.5,2.8", "--result", "D", "--out", tmp_path / "sheets"],
    ]
    for args in runs:
        rc, _, err = run_cli(capsys, *args)
        assert rc == 0, (args[0], err)
        assert {p: _fingerprint(p) for p in before} == before, args[0]
    assert sorted(p.name for p in demo_copy.iterdir()) == sorted(["dxf2frame.toml", "packing-shed-rev-A.dxf",
                                                                 "packing-shed-rev-B.dxf"])


def test_input_unchanged_after_bad_input_and_unstable_runs(tmp_path, capsys):
    doc = beam_doc()
    ins = add_load(doc.modelspace(), "force", (2.0, 0.0), P="nan")
    bad = write_case(tmp_path / "bad", doc)
    unstable = new_drawing("m")
    msp = unstable.modelspace()
    add_member(msp, (0, 0), (SPAN, 0))
    add_support(msp, "roller", (0, 0))
    add_support(msp, "roller", (SPAN, 0))  # nothing holds it along X
    add_load(msp, "udl", (3, 0), W="1 kN/m")
    shaky = write_case(tmp_path / "shaky", unstable)
    for path, expected in ((bad, 2), (shaky, 3)):
        before = _fingerprint(path)
        rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / f"out-{path.parent.name}", "--no-png")
        assert rc == expected, err
        assert _fingerprint(path) == before
    assert f"#{ins.dxf.handle}" in run_cli(capsys, "check", bad)[2]


# ---------------------------------------------------------------------------
# end to end in a subprocess: exit status and stderr as a user sees them
# ---------------------------------------------------------------------------


def _subprocess(args: list, **env: str) -> subprocess.CompletedProcess:
    full_env = {**os.environ, **env}
    return subprocess.run([sys.executable, "-m", "dxf2frame", *map(str, args)], capture_output=True,
                          text=True, encoding="utf-8", errors="replace", env=full_env, cwd=ROOT, timeout=120)


def test_subprocess_not_a_dxf(tmp_path):
    path = write_case(tmp_path / "in", data=NOT_DXF["png"])
    proc = _subprocess(["solve", path, "--out", tmp_path / "out", "--no-png"])
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr and len(proc.stderr.strip().splitlines()) == 1, proc.stderr
    assert files_in(tmp_path / "out") == []


def test_subprocess_nan_attribute_on_an_ascii_console(tmp_path):
    doc = beam_doc(frame_layer="FRAME-Träger")
    ins = add_load(doc.modelspace(), "force", (2.0, 0.0), P="nan kN ✗")
    path = write_case(tmp_path / "in", doc)
    proc = _subprocess(["check", path], PYTHONIOENCODING="ascii")
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr and len(proc.stderr.strip().splitlines()) == 1, proc.stderr
    assert f"#{ins.dxf.handle}" in proc.stderr and "\\u2717" in proc.stderr  # escaped, not a crash


def test_subprocess_damaged_but_salvageable(tmp_path):
    text = _dxf_text(beam_doc())
    path = write_case(tmp_path / "in", data=text[: text.rstrip().rfind("EOF")].encode("utf-8"))
    proc = _subprocess(["solve", path, "--out", tmp_path / "out", "--no-png", "--units", "kN,m"])
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr and "recovery mode" in proc.stderr
    check_simple_beam(json.loads((tmp_path / "out" / "frame-results.json").read_text(encoding="utf-8")))


# ---------------------------------------------------------------------------
# attribute text and settings values: any input, a value or a clear error
# ---------------------------------------------------------------------------

_UNITISH = st.sampled_from(["kN", "kip", "N", "m", "ft", "kN/m", "kip*ft", "GPa", "in**4", "mm**2", "deg",
                            "rad", "**", "^", "*", "/", "(", ")", "e", "E", "1e", "nan", "inf", " ", "-", "+",
                            ".", ",", "%", "__class__", "lambda", "\u2212", "\u00b2", "µ", "Å"])
_ATTRIBUTE_TEXT = st.one_of(
    st.text(max_size=40),
    st.lists(st.one_of(_UNITISH, st.integers(-10**6, 10**6).map(str), st.floats().map(repr)), max_size=8)
    .map(" ".join),
)


@hsettings(max_examples=300, suppress_health_check=[HealthCheck.too_slow])
@given(text=_ATTRIBUTE_TEXT, kind=st.sampled_from(sorted(KINDS)))
def test_any_attribute_text_parses_or_is_a_unit_error(text, kind):
    try:
        value = parse_quantity(text, kind, default_unit=KINDS[kind][0], handle="2F", layer="LOADS", tag="P")
    except UnitError as exc:
        assert exc.handle == "2F" and exc.layer == "LOADS"
        assert "\n" not in one_line(str(exc))
    else:
        assert isinstance(value, float) and math.isfinite(value)


_TOML_SCALAR = st.one_of(st.text(max_size=12), st.integers(-10**20, 10**20), st.floats(), st.booleans(),
                         st.sampled_from(["200 GPa", "5 mm", "kN", "m", "LRFD", "1.2D + 1.6L", "FRAME", "nan"]))
_TOML_VALUE = st.recursive(_TOML_SCALAR, lambda inner: st.one_of(
    st.lists(inner, max_size=3), st.dictionaries(st.text(max_size=8), inner, max_size=3)), max_leaves=8)
_SECTION_NAMES = st.sampled_from(["units", "geometry", "limits", "layers", "blocks", "attributes",
                                  "output_layers", "sections", "combinations", "deflection", "compare", "bogus"])
_KEYS = st.sampled_from(["force", "length", "snap", "arc_segments", "max_file_mb", "max_entities", "frame",
                         "supports", "pin", "P", "axial", "default", "E", "A", "I", "builtin", "extra", "draw",
                         "limit", "threshold", "name"])


@hsettings(max_examples=300, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.dictionaries(_SECTION_NAMES, st.one_of(_TOML_VALUE, st.dictionaries(_KEYS, _TOML_VALUE, max_size=4)),
                            max_size=4))
def test_any_settings_table_validates_or_is_a_settings_error(data):
    try:
        s = Settings.from_dict(data, path="fuzz.toml")
    except SettingsError as exc:
        assert str(exc).startswith("fuzz.toml")
    else:
        assert s.max_entities > 0 and s.max_file_mb > 0


# ---------------------------------------------------------------------------
# failures in other modules (minimal cases, routed in the report)
# ---------------------------------------------------------------------------


def test_invalid_attribute_handle_is_recovered_by_every_stage(tmp_path, capsys):
    doc = beam_doc()
    udl = next(iter(doc.modelspace().query("INSERT[name=='UDL']")))
    text = _dxf_text(doc)
    handle = udl.attribs[0].dxf.handle
    text, n = re.subn(rf"(\n  0\nATTRIB\n  5\n){handle}\n", r"\g<1>NOT-A-HANDLE\n", text, count=1)
    assert n == 1
    path = write_case(tmp_path / "in", data=text.encode("utf-8"))
    with pytest.raises(ValueError, match="Invalid handle"):
        ezdxf.readfile(path)  # what the writer trips on
    rc, _, err = run_cli(capsys, "check", path)
    assert rc == 0, err  # the reader recovers the file (with a warning)
    report, err = solve_ok(capsys, path, tmp_path / "out")
    check_simple_beam(report)


@pytest.mark.parametrize("damage", ["no-eof", "invalid-handle"])
def test_compare_accepts_what_solve_accepts(demo_copy, tmp_path, capsys, damage):
    newest = demo_copy / "packing-shed-rev-B.dxf"
    text = newest.read_text(encoding="utf-8")
    if damage == "no-eof":
        text = text[: text.rstrip().rfind("EOF")]
    else:
        text, n = re.subn(r"(\n  0\nATTRIB\n  5\n)[0-9A-F]+\n", r"\g<1>NOT-A-HANDLE\n", text, count=1)
        assert n == 1
    newest.write_text(text, encoding="utf-8")
    rc, _, err = run_cli(capsys, "check", newest)
    assert rc == 0, err  # the reader recovers it
    rc, _, err = run_cli(capsys, "compare", demo_copy / "packing-shed-rev-A.dxf", newest, "--out", tmp_path / "cmp")
    assert rc == 0, err


def test_tiny_values_survive_report_rounding():
    import numpy as np

    from dxf2frame.report.table import number_texts

    tiny = [1e-300, -2.5e-308, 5e-324]
    # rounding to 12 significant digits leaves these representable values unchanged (IEEE 754 binary64)
    assert [float(t) for t in number_texts(np.array(tiny))] == tiny


# ---------------------------------------------------------------------------
# command-line arguments that would clobber the input or cannot work
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("command", ["compare", "explain"])
def test_results_folder_on_an_input_drawing_is_refused(demo_copy, capsys, command):
    rev_a = demo_copy / "packing-shed-rev-A.dxf"
    before = _fingerprint(rev_a)
    inputs = [rev_a, demo_copy / "packing-shed-rev-B.dxf"] if command == "compare" else [rev_a]
    rc, _, err = run_cli(capsys, command, *inputs, "--out", rev_a)
    assert_bad_input(rc, err, names=("is an input drawing, not a folder",))
    assert _fingerprint(rev_a) == before


def test_template_into_a_missing_folder(tmp_path, capsys):
    rc, _, err = run_cli(capsys, "template", tmp_path / "no" / "such" / "frame.dxf")
    assert_bad_input(rc, err, names=("does not exist",))
    assert not (tmp_path / "no").exists()


@pytest.mark.parametrize("probe", ["nan,0", "0,inf", "1e999,1"])
def test_non_finite_probe_is_a_usage_error(tmp_path, capsys, probe):
    path = write_case(tmp_path / "in", beam_doc())
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png", "--probe", probe)
    assert rc == 2 and "Traceback" not in err and "finite" in err
    assert files_in(tmp_path / "out") == []
