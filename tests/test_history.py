"""The revision history: recording solves, listing revisions, changes that
match ``compare``, concurrent writers, damaged and newer databases."""
from __future__ import annotations

import hashlib
import json
import multiprocessing
import sqlite3
from pathlib import Path

import pytest

from dxf2frame.cli import main
from dxf2frame.revisions import (
    HISTORY_FILENAME,
    History,
    compare_reports,
    record_report,
    revision_of,
    series_views,
    trend,
)
from dxf2frame.revisions.reports import load_json_report
from test_compare import two_span_drawing

CASES_ONLY = """\
[units]
force = "kN"
[combinations]
builtin = []
"""




#: five revisions: (label, w_left, w_right, stub)
REVISIONS = [("A", 10.0, 8.0, False), ("B", 14.0, 8.0, False), ("C", 14.0, 8.0, True),
             ("D", 14.0, 12.0, True), ("E", 14.0, 12.0, True)]


def five_revisions(folder: Path) -> list[Path]:
    (folder / "dxf2frame.toml").write_text(CASES_ONLY)
    return [two_span_drawing(folder / f"span-rev-{lab}.dxf", wl, wr, stub=stub) for lab, wl, wr, stub in REVISIONS]


def test_revision_label_rule():
    assert revision_of("shed-rev-B.dxf") == ("shed", "B", "file name")
    assert revision_of("shed_REV3.dxf") == ("shed", "3", "file name")
    assert revision_of("shed rev.P2.dxf") == ("shed", "P2", "file name")
    assert revision_of("shed.dxf") == ("shed", None, None)
    assert revision_of("shed-rev-B.dxf", {"REVISION": "C"}) == ("shed", "C", "property")


def test_round_trip_of_five_revisions(tmp_path, capsys):
    drawings = five_revisions(tmp_path)
    # a batch of two workers, newest first: the workers write at once, the listing orders by label
    assert main(["solve", *map(str, reversed(drawings)), "--no-png", "--history", "--workers", "2"]) == 0
    assert (tmp_path / HISTORY_FILENAME).is_file()
    capsys.readouterr()
    assert main(["history", str(tmp_path)]) == 0
    listing = capsys.readouterr().out
    for lab, *_ in REVISIONS:
        assert f"span-rev-{lab}.dxf" in listing

    with History(tmp_path, create=False) as hist:
        revs = hist.revisions()
    assert [r.label for r in revs] == [lab for lab, *_ in REVISIONS]
    for r in revs:  # the sha256 of the file as solved
        assert r.content_hash == hashlib.sha256((tmp_path / r.drawing).read_bytes()).hexdigest()
    left = {r.label: next(m for m in r.members if m["layer"] == "FRAME-LEFT") for r in revs}
    for lab, wl, _wr, _s in REVISIONS:
        assert left[lab]["m"] == pytest.approx(wl * 6**2 / 8, rel=1e-6)  # wL^2/8, AISC beam formulas case 1 (from memory)
        assert left[lab]["v"] == pytest.approx(wl * 6 / 2, rel=1e-6)  # wL/2, AISC case 1 (from memory)

    # the changes between consecutive revisions are exactly what compare says on the saved reports
    (view,) = series_views(revs, threshold=0.05)
    reports = [load_json_report(tmp_path / "solved" / f"span-rev-{lab}-results.json") for lab, *_ in REVISIONS]
    direct = compare_reports(reports, threshold=0.05)
    assert len(view.comparison.pairs) == len(direct.pairs) == 4
    for h, d in zip(view.comparison.pairs, direct.pairs):
        assert sorted((m.old.id, m.new.id, m.how, m.flagged) for m in h.matched) == \
            sorted((m.old.id, m.new.id, m.how, m.flagged) for m in d.matched)
        assert [m.id for m in h.new_members] == [m.id for m in d.new_members]
        assert [m.id for m in h.removed_members] == [m.id for m in d.removed_members]
        assert sorted(r.new_at for r in h.flagged_reactions) == sorted(r.new_at for r in d.flagged_reactions)
        for a, b in zip(sorted(h.matched, key=lambda m: m.new.id), sorted(d.matched, key=lambda m: m.new.id)):
            for q in ("N", "V", "M"):
                assert a.value(q).new == pytest.approx(b.value(q).new, rel=1e-9, abs=1e-9)
    # B flags the left span only; C adds the post; E changes nothing
    ab, bc, cd, de = view.comparison.pairs
    assert [m.new.layer for m in ab.flagged_members] == ["FRAME-LEFT"]
    assert [m.layer for m in bc.new_members] == ["FRAME-POSTS"]
    assert not de.changed

    # the trend of the left span's moment follows the member through the revisions
    left_id = left["E"]["member"]
    q, values, unit = trend(view, left_id)
    assert q == "M" and unit == "kN*m"
    assert values == pytest.approx([wl * 36 / 8 for _l, wl, _r, _s in REVISIONS], rel=1e-6)  # wL^2/8, AISC case 1
    # the support at x = 12 carries the right span's wL/2 (AISC beam formulas case 1, from memory)
    q, values, unit = trend(view, "12,0")
    assert q == "fy" and unit == "kN"
    assert values == pytest.approx([wr * 6 / 2 for _l, _wl, wr, _s in REVISIONS], rel=1e-6)
    out = tmp_path / "trend.png"
    assert main(["history", str(tmp_path), "--trend", left_id, "--png", str(out)]) == 0
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    # compare takes labels from the history and says what compare on the files says
    assert main(["compare", "A", "B", "--history", str(tmp_path), "--out", str(tmp_path / "cmp")]) == 0
    data = json.loads((tmp_path / "cmp" / "span-rev-B-comparison.json").read_text())
    assert [m["new"]["layer"] for m in data["pairs"][0]["members"] if m["flagged"]] == ["FRAME-LEFT"]
    assert (tmp_path / "cmp" / "span-rev-B-changes.dxf").is_file()  # the drawing is unchanged: marked copy
    assert main(["compare", "A", "Q", "--history", str(tmp_path)]) == 2
    assert "no revision labelled 'Q'" in capsys.readouterr().err


def test_label_from_a_header_property_and_settings_switch(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text(CASES_ONLY + "[history]\nrecord = true\n")
    d = two_span_drawing(tmp_path / "span.dxf", 10.0, 8.0, revision="P3")
    assert main(["solve", str(d), "--no-png"]) == 0
    assert main(["solve", str(d), "--no-png", "--no-history"]) == 0
    with History(tmp_path, create=False) as hist:
        (rev,) = hist.revisions()
    assert (rev.series, rev.label, rev.label_from) == ("span", "P3", "property")


def test_history_is_off_by_default(tmp_path):
    (tmp_path / "dxf2frame.toml").write_text(CASES_ONLY)
    d = two_span_drawing(tmp_path / "span.dxf", 10.0, 8.0)
    assert main(["solve", str(d), "--no-png"]) == 0
    assert not (tmp_path / HISTORY_FILENAME).exists()


def _synthetic_report(k: int, w: float) -> dict:
    """A schema-1 report of one 6 m simple beam under w (kN/m)."""
    beam = {"id": "B-1", "layer": "FRAME", "handle": "B", "start": [0, 0], "end": [6, 0], "length": 6,
            "n_min": 0, "n_max": 0, "v_min": -3 * w, "v_max": 3 * w, "m_min": 0, "m_max": 4.5 * w,
            "deflection_max": None}
    return {"schema": 1, "source": f"beam-rev-{k}.dxf", "units": {"force": "kN", "length": "m"},
            "determinacy": {"status": "determinate", "degree": 0, "mechanisms": 0}, "warnings": [],
            "results": [{"name": "D", "kind": "case", "members": [beam],
                         "reactions": [{"x": 0, "y": 0, "fx": 0, "fy": 3 * w, "m": 0},
                                       {"x": 6, "y": 0, "fx": 0, "fy": 3 * w, "m": 0}]}]}


def _writer(folder: str, who: int, n: int) -> None:
    for k in range(n):
        record_report(_synthetic_report(k, 1.0 + who + k), Path(folder) / f"beam-{who}-rev-{k}.dxf",
                      digest=f"{who}-{k}")


def test_two_processes_writing_at_once(tmp_path):
    n = 40
    ctx = multiprocessing.get_context("spawn")
    procs = [ctx.Process(target=_writer, args=(str(tmp_path), who, n)) for who in (1, 2)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(timeout=240)
        assert p.exitcode == 0
    con = sqlite3.connect(tmp_path / HISTORY_FILENAME)
    try:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert con.execute("SELECT COUNT(*) FROM solves").fetchone()[0] == 2 * n
        # one transaction per solve: every solve has its member and both supports
        assert con.execute("SELECT COUNT(*) FROM members").fetchone()[0] == 2 * n
        assert con.execute("SELECT COUNT(*) FROM supports").fetchone()[0] == 4 * n
        assert {r[0] for r in con.execute("SELECT content_hash FROM solves")} == \
            {f"{w}-{k}" for w in (1, 2) for k in range(n)}
    finally:
        con.close()


def test_truncated_database_is_reported_and_set_aside(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(CASES_ONLY)
    drawings = five_revisions(tmp_path)
    for d in drawings[:2]:
        assert main(["solve", str(d), "--no-png", "--history"]) == 0
    db = tmp_path / HISTORY_FILENAME
    data = db.read_bytes()
    cut = data[: len(data) // 2]
    db.write_bytes(cut)
    capsys.readouterr()
    assert main(["history", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert str(db) in err and "damaged" in err and "--rebuild" in err
    aside = list(tmp_path.glob(".dxf2frame-history.damaged-*.sqlite"))
    assert len(aside) == 1 and aside[0].read_bytes() == cut  # set aside as it was, not deleted
    assert not db.exists()

    # a solve meeting a damaged history still succeeds, says so, and starts a new one
    db.write_bytes(cut)
    assert main(["solve", str(drawings[2]), "--no-png", "--history"]) == 0
    assert "history" in capsys.readouterr().err
    assert len(list(tmp_path.glob(".dxf2frame-history.damaged-*.sqlite"))) == 2
    with History(tmp_path, create=False) as hist:
        assert [r.label for r in hist.revisions()] == ["C"]

    # the history is rebuilt from the saved reports
    assert main(["history", str(tmp_path), "--rebuild"]) == 0
    with History(tmp_path, create=False) as hist:
        assert [r.label for r in hist.revisions()] == ["A", "B", "C"]
    assert list(tmp_path.glob(".dxf2frame-history.before-rebuild-*.sqlite"))


def test_newer_schema_is_refused_and_left_alone(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(CASES_ONLY)
    d = two_span_drawing(tmp_path / "span-rev-A.dxf", 10.0, 8.0)
    assert main(["solve", str(d), "--no-png", "--history"]) == 0
    db = tmp_path / HISTORY_FILENAME
    con = sqlite3.connect(db)
    con.execute("UPDATE meta SET value = '99' WHERE key = 'schema_version'")
    con.commit()
    con.close()
    capsys.readouterr()
    assert main(["history", str(tmp_path)]) == 2
    assert "schema version 99" in capsys.readouterr().err
    assert db.exists()
    assert main(["solve", str(d), "--no-png", "--history"]) == 0  # a warning, never a failed solve
    assert "schema version 99" in capsys.readouterr().err


def test_no_history_is_bad_input(tmp_path, capsys):
    assert main(["history", str(tmp_path)]) == 2
    assert "no revision history" in capsys.readouterr().err


def test_history_settings_are_checked(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(CASES_ONLY + "[history]\nrecrod = true\n")
    d = two_span_drawing(tmp_path / "span.dxf", 10.0, 8.0)
    assert main(["solve", str(d), "--no-png"]) == 2
    assert "history.recrod" in capsys.readouterr().err


def test_a_history_that_cannot_be_written_is_a_warning_not_a_failed_solve(tmp_path, capsys):
    (tmp_path / "dxf2frame.toml").write_text(CASES_ONLY)
    (tmp_path / HISTORY_FILENAME).mkdir()  # something in the way that is no database file
    d = two_span_drawing(tmp_path / "span-rev-A.dxf", 10.0, 8.0)
    assert main(["solve", str(d), "--no-png", "--history"]) == 0
    err = capsys.readouterr().err
    assert "history: not recorded" in err
    assert (tmp_path / "solved" / "span-rev-A-results.json").is_file()
    assert (tmp_path / HISTORY_FILENAME).is_dir()  # left as it was


def test_compare_history_arguments_are_labels_never_files(tmp_path, capsys, monkeypatch):
    drawings = five_revisions(tmp_path)
    for d in drawings[:2]:
        assert main(["solve", str(d), "--no-png", "--history"]) == 0
    monkeypatch.chdir(tmp_path)
    (tmp_path / "A").write_text("not a drawing")  # a file named like a label does not matter
    assert main(["compare", "A", "#2", "--history", str(tmp_path), "--out", str(tmp_path / "cmp")]) == 0
    assert (tmp_path / "cmp" / "span-rev-B-comparison.json").is_file()
