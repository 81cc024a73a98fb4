"""Revision comparison: member matching, governing values, flags, outputs.

Synthetic reports are built from closed-form beam results so that every
compared number has a source outside the project; the end-to-end tests at
the bottom solve generated drawings and check the changed moment against
the handbook formula.
"""
from __future__ import annotations

import csv
import json
import math
import random
from pathlib import Path

import ezdxf
import pytest
from hypothesis import given, settings as hsettings, strategies as st

from dxf2frame.cli import main
from dxf2frame.revisions import (
    FLOOR_FRACTION,
    MemberRef,
    compare_reports,
    comparison_table,
    convert_report,
    mark_changes,
    match_members,
    write_comparison,
)
from dxf2frame.errors import Dxf2FrameError

# -- synthetic reports from handbook formulas ---------------------------------------

E, I = 200e6, 8e-5  # kN/m^2, m^4 (a mid-size steel beam; values only feed the formula)


def ss_udl(w: float, L: float) -> dict[str, float]:
    """Simple beam, uniform load w over span L (AISC Steel Construction Manual,
    Beam Diagrams and Formulas, case 1; from memory): R = V = wL/2,
    M_max = wL^2/8 at midspan, deflection 5wL^4/(384EI)."""
    return {"V": w * L / 2, "M": w * L**2 / 8, "defl": 5 * w * L**4 / (384 * E * I), "R": w * L / 2}


def member(mid: str, start, end, *, layer: str = "FRAME", w: float = 0.0, n: float = 0.0) -> dict:
    L = math.dist(start, end)
    f = ss_udl(w, L)
    return {
        "id": mid, "layer": layer, "handle": mid.split("-")[0],
        "start": list(start), "end": list(end), "length": L,
        "n_min": -n, "n_max": 0.0, "v_min": -f["V"], "v_max": f["V"],
        "m_min": 0.0, "m_max": f["M"], "m_max_at": L / 2, "m_min_at": 0.0,
        "deflection_max": -f["defl"],
    }


def report(members: list[dict], reactions: list[dict] = (), *, source: str = "rev.dxf",
           units=("kN", "m"), kind: str = "case") -> dict:
    return {
        "schema": 1, "source": source, "units": {"force": units[0], "length": units[1]},
        "model": {"nodes": 0, "members": len(members), "supports": len(reactions), "hinges": 0, "loads": 0},
        "determinacy": {"status": "determinate", "degree": 0, "mechanisms": 0, "count_check": "", "detail": ""},
        "warnings": [],
        "results": [{"name": "D", "kind": kind, "reactions": list(reactions), "members": members, "probes": []}],
    }


def two_beams(w1: float, w2: float, source: str) -> dict:
    """Two 6 m simple spans side by side (0-6 and 6-12 m): spans are
    independent, so changing w1 changes only the first span and its two
    supports' share (reactions wL/2 each; AISC case 1, from memory)."""
    L = 6.0
    r1, r2 = ss_udl(w1, L)["R"], ss_udl(w2, L)["R"]
    reactions = [
        {"x": 0.0, "y": 0.0, "fx": 0.0, "fy": r1, "m": 0.0},
        {"x": 6.0, "y": 0.0, "fx": 0.0, "fy": r1 + r2, "m": 0.0},
        {"x": 12.0, "y": 0.0, "fx": 0.0, "fy": r2, "m": 0.0},
    ]
    return report([member("A1-1", (0, 0), (6, 0), w=w1), member("A2-1", (6, 0), (12, 0), w=w2)],
                  reactions, source=source)


# -- comparing -----------------------------------------------------------------------


def test_only_the_member_whose_load_changed_is_flagged():
    old, new = two_beams(10.0, 8.0, "a.dxf"), two_beams(12.0, 8.0, "b.dxf")
    cmp = compare_reports([old, new])
    (pair,) = cmp.pairs
    assert [m.new.id for m in pair.flagged_members] == ["A1-1"]
    ch = pair.flagged_members[0]
    assert ch.how == "same ends"
    assert ch.value("M").new == pytest.approx(12.0 * 36 / 8)  # wL^2/8, AISC beam formulas case 1 (from memory)
    assert ch.value("M").old == pytest.approx(10.0 * 36 / 8)  # wL^2/8, AISC beam formulas case 1 (from memory)
    assert ch.value("M").change == pytest.approx(0.2)  # (12 - 10) / 10: M is linear in w (same formula)
    assert ch.value("V").change == pytest.approx(0.2)  # V = wL/2 linear in w (AISC case 1, from memory)
    assert ch.value("deflection").change == pytest.approx(0.2)  # 5wL^4/384EI linear in w (AISC case 1, from memory)
    assert not ch.value("N").flagged
    # reactions: the left support (wL/2) and the middle one (w1L/2 + w2L/2) change; the right does not
    flagged_at = sorted(r.new_at for r in pair.flagged_reactions)
    assert flagged_at == [(0.0, 0.0), (6.0, 0.0)]
    mid = next(r for r in pair.reactions if r.new_at == (6.0, 0.0))
    assert mid.value("fy").new == pytest.approx(12.0 * 3 + 8.0 * 3)  # w1L/2 + w2L/2 (AISC case 1, from memory)
    assert not pair.new_members and not pair.removed_members


def test_threshold_decides_the_flag():
    old, new = two_beams(10.0, 8.0, "a.dxf"), two_beams(10.4, 8.0, "b.dxf")  # +4 %
    assert not compare_reports([old, new]).pairs[0].flagged_members  # 4 % < default 5 % (settings default)
    assert compare_reports([old, new], threshold=0.03).pairs[0].flagged_members


def test_near_zero_values_do_not_flag_noise():
    # axial force is zero in a beam under gravity (equilibrium along the axis);
    # round-off of 1e-9 kN against a 45 kN*m / 30 kN frame must not flag
    a = report([member("A-1", (0, 0), (6, 0), w=10.0, n=1e-12)], source="a")
    b = report([member("A-1", (0, 0), (6, 0), w=10.0, n=3e-9)], source="b")
    ch = compare_reports([a, b]).pairs[0].matched[0]
    assert not ch.value("N").flagged
    # the floor is FLOOR_FRACTION of the largest force: change = 3e-9 / (0.02 * 30)
    assert ch.value("N").change == pytest.approx((3e-9 - 1e-12) / (FLOOR_FRACTION * 30.0))  # wL/2 = 30 (AISC case 1)


def test_governing_values_use_combinations_when_present():
    rep = report([member("A-1", (0, 0), (6, 0), w=10.0)], source="a")
    combo = json.loads(json.dumps(rep["results"][0]))
    combo.update(name="1.4D", kind="combination")
    combo["members"] = [member("A-1", (0, 0), (6, 0), w=14.0)]
    rep["results"].append(combo)
    new = json.loads(json.dumps(rep))
    cmp = compare_reports([rep, new])
    # governing |M| is the combination's: 1.4 * wL^2/8 (AISC case 1, from memory)
    assert cmp.pairs[0].matched[0].value("M").old == pytest.approx(14.0 * 36 / 8)


def test_units_are_converted_before_comparing():
    kn_m = two_beams(10.0, 8.0, "a.dxf")
    kip = 4.4482216152605  # kN per kip: 1 lbf = 0.45359237 kg x 9.80665 m/s^2 (NIST SP 811, exact by definition)
    ft = 0.3048  # m per ft (international foot, exact by definition; NIST SP 811)
    same_in_kip_ft = convert_report(kn_m, "kip", "ft")
    assert same_in_kip_ft["results"][0]["members"][0]["m_max"] == pytest.approx(45.0 / (kip * ft))  # 45 kN*m
    assert same_in_kip_ft["results"][0]["members"][0]["end"] == pytest.approx([6 / ft, 0.0])
    cmp = compare_reports([same_in_kip_ft, kn_m])
    assert cmp.units == {"force": "kN", "length": "m"}
    p = cmp.pairs[0]
    assert len(p.matched) == 2 and not p.flagged_members and not p.flagged_reactions
    assert not p.new_members and not p.removed_members


def test_unstable_revision_is_noted_not_compared():
    good = two_beams(10.0, 8.0, "a.dxf")
    bad = report([], source="b.dxf")
    bad["results"] = []
    bad["determinacy"]["status"] = "unstable"
    cmp = compare_reports([good, bad, good])
    assert len(cmp.pairs) == 2
    assert all("unstable" in " ".join(p.notes) for p in cmp.pairs)
    assert "unstable" in comparison_table(cmp)


def test_bad_reports_are_bad_input():
    with pytest.raises(Dxf2FrameError):
        compare_reports([two_beams(1, 1, "a")])
    with pytest.raises(Dxf2FrameError):
        compare_reports([two_beams(1, 1, "a"), {"schema": 7}])


# -- matching -------------------------------------------------------------------------


def ref(mid, a, b, layer="FRAME"):
    return MemberRef(mid, layer, mid, tuple(map(float, a)), tuple(map(float, b)))


def by_id(old, new, pairs):
    return {(old[i].id, new[j].id, how) for i, j, how in pairs}


def test_same_ends_either_orientation_and_within_tolerance():
    old = [ref("a", (0, 0), (6, 0)), ref("b", (6, 0), (6, 4))]
    new = [ref("B", (6, 4.0004), (6, 0)), ref("A", (0, 0), (6, 0))]
    pairs, new_only, removed = match_members(old, new, 1e-3)
    assert by_id(old, new, pairs) == {("a", "A", "same ends"), ("b", "B", "same ends")}
    assert new_only == [] and removed == []


def test_split_and_merged_members_match_by_overlap():
    old = [ref("a", (0, 0), (9, 0)), ref("c1", (0, 5), (4, 5)), ref("c2", (4, 5), (9, 5))]
    new = [ref("a1", (0, 0), (4.5, 0)), ref("a2", (4.5, 0), (9, 0)), ref("c", (0, 5), (9, 5))]
    pairs, new_only, removed = match_members(old, new, 0.01)
    assert by_id(old, new, pairs) == {
        ("a", "a1", "overlap"), ("a", "a2", "overlap"),  # split: both pieces lie on the old member
        ("c2", "c", "overlap"), ("c1", "c", "overlap"),  # merged: both old pieces lie on the new member
    }
    assert new_only == [] and removed == []


def test_moved_member_matched_new_member_listed():
    # a loft beam raised 0.2 m (less than a quarter of its 9 m span), a new brace added
    old = [ref("col", (0, 0), (0, 5)), ref("beam", (0, 2.8), (9, 2.8), "FRAME-BEAMS")]
    new = [ref("col", (0, 0), (0, 5)), ref("beam2", (0.0, 3.0), (9, 3.0), "FRAME-BEAMS"),
           ref("brace", (0, 0), (9, 3.0), "FRAME-BRACES")]
    pairs, new_only, removed = match_members(old, new, 0.01)
    assert by_id(old, new, pairs) == {("col", "col", "same ends"), ("beam", "beam2", "moved")}
    assert [new[j].id for j in new_only] == ["brace"] and removed == []


def test_far_moved_or_turned_or_other_layer_members_are_not_matched():
    old = [ref("beam", (0, 2.8), (9, 2.8), "FRAME-BEAMS")]
    for other in (ref("x", (0, 6.0), (9, 6.0), "FRAME-BEAMS"),   # moved 3.2 m > 9/4
                  ref("x", (0, 2.8), (9, 3.4), "FRAME-BEAMS"),   # turned about 3.8 degrees
                  ref("x", (0, 3.0), (9, 3.0), "FRAME-RAFTERS")):  # another layer
        pairs, new_only, removed = match_members(old, [other], 0.01)
        assert pairs == [] and new_only == [0] and removed == [0]


def test_collinear_neighbours_touching_end_to_end_do_not_overlap():
    old = [ref("a", (0, 0), (4, 0))]
    new = [ref("b", (4, 0), (8, 0))]
    pairs, new_only, removed = match_members(old, new, 0.01)
    assert pairs == [] and new_only == [0] and removed == [0]


def test_removed_member_listed_in_comparison():
    old = report([member("A-1", (0, 0), (6, 0), w=10), member("B-1", (6, 0), (6, 4))], source="a")
    new = report([member("A-1", (0, 0), (6, 0), w=10)], source="b")
    p = compare_reports([old, new]).pairs[0]
    assert [m.id for m in p.removed_members] == ["B-1"] and not p.flagged_members


@hsettings(max_examples=25, deadline=None)
@given(
    seed=st.integers(0, 10_000),
    n=st.integers(1, 12),
    dx=st.floats(-1e-4, 1e-4),
)
def test_matching_is_deterministic_and_finds_every_unmoved_member(seed, n, dx):
    rng = random.Random(seed)
    old = []
    for k in range(n):  # a grid of distinct members (a fence of posts and rails)
        x = 3.0 * k
        old.append(ref(f"p{k}", (x, 0), (x, 4)))
        old.append(ref(f"r{k}", (x, 4), (x + 3.0, 4)))
    new = [ref(r.id.upper(), (r.start[0] + dx, r.start[1]), (r.end[0] + dx, r.end[1])) for r in old]
    shuffled = new[:]
    rng.shuffle(shuffled)
    pairs, new_only, removed = match_members(old, shuffled, 1e-3)
    assert {(a, b) for a, b, _ in by_id(old, shuffled, pairs)} == {(r.id, r.id.upper()) for r in old}
    assert {h for *_, h in by_id(old, shuffled, pairs)} == {"same ends"}
    assert new_only == [] and removed == []
    assert by_id(old, shuffled, match_members(old, shuffled, 1e-3)[0]) == by_id(old, shuffled, pairs)


# -- outputs ----------------------------------------------------------------------------


def test_table_csv_and_json(tmp_path):
    cmp = compare_reports([two_beams(10, 8, "a.dxf"), two_beams(12, 8, "b.dxf")])
    text = comparison_table(cmp)
    assert "a.dxf -> b.dxf" in text and "45 -> 54 (+20%) *" in text  # wL^2/8 for w = 10, 12 (AISC case 1)
    paths = write_comparison(cmp, tmp_path / "out", stem="b-comparison")
    rows = list(csv.DictReader(paths["csv"].open()))
    flagged = {(r["item"], r["new_id"], r["quantity"]) for r in rows if r["flagged"] == "True"}
    assert ("member", "A1-1", "M") in flagged and not any(r[1] == "A2-1" for r in flagged)
    data = json.loads(paths["json"].read_text())
    assert data["units"] == {"force": "kN", "length": "m"} and len(data["pairs"]) == 1
    assert sorted(p.name for p in (tmp_path / "out").iterdir()) == ["b-comparison.csv", "b-comparison.json"]


def _plain_drawing(path: Path) -> Path:
    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = 6
    doc.layers.add("FRAME")
    msp = doc.modelspace()
    msp.add_line((0, 0), (6, 0), dxfattribs={"layer": "FRAME"})
    msp.add_line((6, 0), (12, 0), dxfattribs={"layer": "FRAME"})
    doc.saveas(path)
    return path


def test_marked_drawing_has_clouds_and_texts(tmp_path):
    src = _plain_drawing(tmp_path / "b.dxf")
    old = two_beams(10, 8, "a.dxf")
    new = two_beams(12, 8, "b.dxf")
    new["results"][0]["members"].append(member("N-1", (0, 0), (0, 3)))  # a new post
    cmp = compare_reports([old, new])
    out = mark_changes(src, new, cmp, tmp_path / "marked" / "b-changes.dxf")
    doc = ezdxf.readfile(out)
    assert not doc.audit().has_errors
    marks = doc.modelspace().query('*[layer=="RESULT-CHANGES"]')
    clouds = [e for e in marks if e.dxftype() == "LWPOLYLINE"]
    texts = " | ".join(e.text for e in marks if e.dxftype() == "MTEXT")
    # one cloud per flagged member (1), flagged support (2) and new member (1)
    assert len(clouds) == 4
    assert all(e.closed and any(b != 0 for *_, b in e.get_points("xyb")) for e in clouds)
    assert "M 45 -> 54 kN*m (+20%)" in texts  # wL^2/8 for w = 10, 12 kN/m on 6 m (AISC case 1, from memory)
    assert "new member N-1" in texts
    assert len(doc.modelspace().query('LINE[layer=="FRAME"]')) == 2  # the original linework is kept
    assert [p.name for p in out.parent.iterdir()] == ["b-changes.dxf"]  # no temporary file left


def test_cli_compare_on_json_reports(tmp_path, capsys):
    a, b = tmp_path / "rev-a.json", tmp_path / "rev-b.json"
    a.write_text(json.dumps(two_beams(10, 8, "rev-a.dxf")))
    b.write_text(json.dumps(two_beams(12, 8, "rev-b.dxf")))
    code = main(["compare", str(a), str(b), "--threshold", "0.1"])
    assert code == 0  # changes found are not an error
    out = capsys.readouterr().out
    assert "A1-1" in out and "45 -> 54 (+20%) *" in out  # wL^2/8 (AISC case 1, from memory)
    folder = tmp_path / "compared"
    assert (folder / "rev-b-comparison.csv").is_file() and (folder / "rev-b-comparison.json").is_file()


def test_cli_compare_bad_input_exits_2(tmp_path, capsys):
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    a.write_text(json.dumps(two_beams(10, 8, "a.dxf")))
    b.write_text("{not json")
    assert main(["compare", str(a), str(b), "--out", str(tmp_path / "o")]) == 2
    assert "not a JSON report" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()
    assert main(["compare", str(a)]) == 2


# -- end to end: generated drawings and the demo revisions ---------------------------------

DEMO = Path(__file__).resolve().parent.parent / "drawings"

CASES_ONLY = """\
[units]
force = "kN"
[combinations]
builtin = []
"""


def two_span_drawing(path: Path, w_left: float, w_right: float, *, stub: bool = False,
                     revision: str | None = None) -> Path:
    """Two 6 m spans on a pin (x=0) and rollers (x=6, 12); the left span's
    end is hinged at x=6 (HINGE releasing FRAME-LEFT only), so each span is a
    simple beam: a load on one span does not reach the other.  ``stub``
    adds an unloaded 2 m post standing on the right end; ``revision`` a
    custom header property REVISION."""
    from dxf2frame.symbols import define_blocks, define_layers, insert_symbol

    doc = ezdxf.new("R2018")
    doc.header["$INSUNITS"] = 6
    if revision is not None:
        doc.header.custom_vars.append("Revision", revision)
    define_layers(doc)
    define_blocks(doc)
    for name in ("FRAME-LEFT", "FRAME-RIGHT", "FRAME-POSTS"):
        doc.layers.add(name)
    msp = doc.modelspace()
    msp.add_line((0, 0), (6, 0), dxfattribs={"layer": "FRAME-LEFT"})
    msp.add_line((6, 0), (12, 0), dxfattribs={"layer": "FRAME-RIGHT"})
    if stub:
        msp.add_line((12, 0), (12, 2), dxfattribs={"layer": "FRAME-POSTS"})
    put = lambda name, at, layer, **kw: insert_symbol(msp, name, at, layer=layer, scale=0.2, **kw)  # noqa: E731
    put("PIN", (0, 0), "SUPPORTS")
    put("ROLLER", (6, 0), "SUPPORTS")
    put("ROLLER", (12, 0), "SUPPORTS")
    put("HINGE", (6, 0), "CONNECTIONS", MEMBERS="FRAME-LEFT")
    put("UDL", (2, 0), "LOADS", W=f"{w_left} kN/m", CASE="D")
    put("UDL", (9, 0), "LOADS", W=f"{w_right} kN/m", CASE="D")
    doc.saveas(path)
    return path


def test_end_to_end_only_the_reloaded_span_is_flagged(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(CASES_ONLY)
    a = two_span_drawing(tmp_path / "span-A.dxf", 10.0, 8.0)
    b = two_span_drawing(tmp_path / "span-B.dxf", 14.0, 8.0)
    c = two_span_drawing(tmp_path / "span-C.dxf", 14.0, 8.0, stub=True)
    code = main(["compare", str(a), str(b), str(c), "--out", str(tmp_path / "cmp")])
    assert code == 0
    data = json.loads((tmp_path / "cmp" / "span-C-comparison.json").read_text())
    ab, bc = data["pairs"]
    flagged = [m for m in ab["members"] if m["flagged"]]
    assert [m["new"]["layer"] for m in flagged] == ["FRAME-LEFT"]
    m = {v["quantity"]: v for v in flagged[0]["values"]}
    assert m["M"]["old"] == pytest.approx(10.0 * 6**2 / 8, rel=1e-6)  # wL^2/8, AISC beam formulas case 1 (from memory)
    assert m["M"]["new"] == pytest.approx(14.0 * 6**2 / 8, rel=1e-6)  # wL^2/8, AISC beam formulas case 1 (from memory)
    assert m["V"]["new"] == pytest.approx(14.0 * 6 / 2, rel=1e-6)  # wL/2, AISC case 1 (from memory)
    right = next(x for x in ab["members"] if x["new"]["layer"] == "FRAME-RIGHT")
    assert {v["quantity"]: v["new"] for v in right["values"]}["M"] == pytest.approx(8.0 * 36 / 8, rel=1e-6)  # wL^2/8
    # supports at x = 0 and 6 carry the left span's wL/2; the one at x = 12 does not
    assert sorted(r["new_at"][0] for r in ab["reactions"] if r["flagged"]) == pytest.approx([0.0, 6.0])
    # C adds an unloaded post: listed as new, nothing else changes
    assert [n["layer"] for n in bc["new_members"]] == ["FRAME-POSTS"]
    assert not any(x["flagged"] for x in bc["members"]) and not bc["removed_members"]
    marked = ezdxf.readfile(tmp_path / "cmp" / "span-C-changes.dxf")
    assert not marked.audit().has_errors
    texts = [e.text for e in marked.modelspace().query('MTEXT[layer=="RESULT-CHANGES"]')]
    assert any("new member" in t for t in texts)
    assert "FRAME-LEFT" in capsys.readouterr().out


def test_demo_revisions(tmp_path, capsys):
    for name in ("packing-shed-rev-A.dxf", "packing-shed-rev-B.dxf", "dxf2frame.toml"):
        (tmp_path / name).write_bytes((DEMO / name).read_bytes())
    code = main(["compare", str(tmp_path / "packing-shed-rev-A.dxf"), str(tmp_path / "packing-shed-rev-B.dxf")])
    assert code == 0
    folder = tmp_path / "compared"
    data = json.loads((folder / "packing-shed-rev-B-comparison.json").read_text())
    (pair,) = data["pairs"]
    beams = [m for m in pair["members"] if m["new"]["layer"] == "FRAME-BEAMS"]
    # the loft beam was raised 0.2 m (< a quarter of its 9 m span): matched as moved
    assert [m["how"] for m in beams] == ["moved"]
    assert beams[0]["flagged"]  # the hoist went from 6 to 9 kN on it
    assert not pair["new_members"] and not pair["removed_members"]
    # the columns were split at the old and new loft levels: matched by overlap
    assert {m["how"] for m in pair["members"] if m["new"]["layer"] == "FRAME-COLUMNS"} >= {"overlap"}
    marked = ezdxf.readfile(folder / "packing-shed-rev-B-changes.dxf")
    assert not marked.audit().has_errors
    assert len(marked.modelspace().query('LWPOLYLINE[layer=="RESULT-CHANGES"]')) >= 1
    assert "moved" in capsys.readouterr().out
