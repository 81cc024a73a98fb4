"""Outputs are swapped in as one set, and the machine's faults are not ours.

A run either replaces the whole previous set of outputs (drawing, report,
CSV, PNG, sheets) or leaves it complete and byte for byte unchanged; a
folder that cannot be written, a full disk or the file size limit is one
line naming what, where and why, and exit status 4 (not "internal error").
Interrupted runs (Ctrl-C, SIGTERM) and dead runs leave no staging folders.

The tests run as root in CI, where file permissions stop nothing: a
read-only folder is simulated by monkeypatching the calls that would meet
it (a real-permission variant runs only as an ordinary user), the file size
limit is real (``RLIMIT_FSIZE`` binds root too).
"""
from __future__ import annotations

import errno
import json
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from dxf_builders import add_load, add_member, add_support, new_drawing
from dxf2frame.cli import main
from test_hardening import FAST_SETTINGS

ROOT = Path(__file__).resolve().parents[1]



def beam(folder: Path, w: float = 10.0, name: str = "frame.dxf") -> Path:
    """A simply supported 6 m beam under a uniform load ``w`` kN/m."""
    doc = new_drawing("m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (6, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (6, 0))
    add_load(msp, "udl", (2, 0), W=f"{w} kN/m", CASE="D")
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / name
    doc.saveas(path)
    (folder / "dxf2frame.toml").write_text(FAST_SETTINGS, encoding="utf-8")
    return path


def run_cli(capsys, *args) -> tuple[int, str, str]:
    capsys.readouterr()
    rc = main([str(a) for a in args])
    cap = capsys.readouterr()
    return rc, cap.out, cap.err


def snapshot(*folders: Path) -> dict[Path, bytes]:
    """Every file below the folders (hidden ones included) and its bytes."""
    return {p: p.read_bytes() for f in folders if f.exists() for p in sorted(f.rglob("*")) if p.is_file()}


def hidden(*folders: Path) -> list[Path]:
    return [p for f in folders if f.exists() for p in f.rglob(".*")]


@pytest.fixture
def solved_once(tmp_path, capsys):
    """A first solve: drawing, CSV, PNG in ``out``, the report in ``rep``;
    then the drawing is changed (twice the load) so a second solve would
    write different files."""
    path = beam(tmp_path / "in")
    out, rep = tmp_path / "out", tmp_path / "rep"
    rep.mkdir()
    rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json", "--units", "kN,m")
    assert rc == 0, err
    before = snapshot(out, rep)
    assert {p.suffix for p in before} == {".dxf", ".json", ".csv", ".png"}
    beam(tmp_path / "in", w=20.0)
    return path, out, rep, before


def test_a_failed_later_move_puts_the_previous_set_back(solved_once, capsys, monkeypatch):
    import dxf2frame.staging as staging

    path, out, rep, before = solved_once
    real_move, calls = staging.move_into_place, []

    def failing_second(staged, target):
        calls.append(target)
        if len(calls) == 2:  # the drawing is in place already; the report move fails
            raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(target))
        real_move(staged, target)

    monkeypatch.setattr(staging, "move_into_place", failing_second)
    rc, stdout, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json", "--units", "kN,m")
    assert rc == 4, err
    assert len(calls) == 2 and calls[1] == rep / "frame.json"
    assert err.strip().splitlines() == [err.strip()] and "Traceback" not in err
    assert "cannot write frame.json" in err and str(rep) in err and os.strerror(errno.EROFS) in err
    assert snapshot(out, rep) == before  # the complete previous set, unchanged
    assert hidden(out, rep) == []
    assert "wrote" not in stdout


def test_a_read_only_report_folder_stops_before_the_first_move(solved_once, capsys, monkeypatch):
    """As root a chmod stops nothing: the read-only folder is simulated where
    the commit meets it (making its hidden folder for the previous files)."""
    import tempfile

    import dxf2frame.staging as staging

    path, out, rep, before = solved_once
    real_mkdtemp, real_move, moves = tempfile.mkdtemp, staging.move_into_place, []

    def mkdtemp(*a, dir=None, **kw):
        if dir is not None and Path(dir) == rep:
            raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(dir))
        return real_mkdtemp(*a, dir=dir, **kw)

    monkeypatch.setattr(tempfile, "mkdtemp", mkdtemp)
    monkeypatch.setattr(staging, "move_into_place", lambda s, t: (moves.append(t), real_move(s, t)))
    rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json", "--units", "kN,m")
    assert rc == 4, err
    assert moves == []  # checked before the first move
    assert "cannot write frame.json" in err and str(rep) in err and "Read-only file system" in err
    assert snapshot(out, rep) == before
    assert hidden(out, rep) == []


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0,
                    reason="file permissions do not stop root")
def test_a_real_read_only_report_folder(solved_once, capsys):
    path, out, rep, before = solved_once
    rep.chmod(0o555)
    try:
        rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json")
    finally:
        rep.chmod(0o755)
    assert rc == 4, err
    assert "cannot write" in err and str(rep) in err and "Permission denied" in err
    assert snapshot(out, rep) == before
    assert hidden(out, rep) == []


def test_a_new_solve_replaces_the_whole_set(solved_once, capsys):
    path, out, rep, before = solved_once
    rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json", "--units", "kN,m")
    assert rc == 0, err
    after = snapshot(out, rep)
    assert set(after) == set(before)
    # the node and drift CSVs hold positions and displacements only: a frame solved
    # without sections (this beam) has none, so twice the load leaves them alike
    same_without_sections = ("-drift.csv", "-nodes.csv")
    assert all(after[p] != before[p] for p in after
               if p.suffix in (".json", ".csv", ".dxf") and not p.name.endswith(same_without_sections))
    report = json.loads((rep / "frame.json").read_text(encoding="utf-8"))
    m = max(r["m_max"] for r in report["results"][0]["members"])
    # M max = wL^2/8 = 20 * 36 / 8 = 90 kN*m (AISC Manual, Table 3-23 case 1; from memory)
    assert m == pytest.approx(90.0, rel=1e-6)
    assert hidden(out, rep) == []


def test_disk_full_while_staging_is_exit_4_and_keeps_the_previous_set(solved_once, capsys, monkeypatch):
    import dxf2frame.draw.writer as writer

    path, out, rep, before = solved_once
    real = writer.write_result_drawing

    def full(source, target, *a, **kw):
        real(source, target, *a, **kw)
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(target))

    monkeypatch.setattr(writer, "write_result_drawing", full)
    rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json")
    assert rc == 4, err
    assert "cannot write the results of frame.dxf" in err and str(out) in err and "No space left" in err
    assert snapshot(out, rep) == before
    assert hidden(out, rep) == []


def _limit_file_size(limit: int):
    def apply() -> None:
        import resource

        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
    return apply


def test_file_size_limit_is_exit_4_not_a_killed_process(tmp_path):
    """``ulimit -f``: the kernel sends SIGXFSZ (which would kill the process
    without a word) and the write fails with EFBIG; the CLI ignores the
    signal and says which file could not be written."""
    path = beam(tmp_path / "in")
    out = tmp_path / "out"
    proc = subprocess.run(
        [sys.executable, "-m", "dxf2frame", "solve", str(path), "--out", str(out), "--no-png"],
        capture_output=True, text=True, cwd=ROOT, timeout=120, preexec_fn=_limit_file_size(20_000),
        env={**os.environ, "PYTHONDONTWRITEBYTECODE": "1"},
    )
    assert proc.returncode == 4, (proc.returncode, proc.stderr)
    assert "Traceback" not in proc.stderr and len(proc.stderr.strip().splitlines()) == 1, proc.stderr
    assert "cannot write" in proc.stderr and "file size limit" in proc.stderr
    assert snapshot(out) == {} and hidden(out) == []


# ---------------------------------------------------------------------------
# explain and compare: the same staged, all-or-nothing output as solve
# ---------------------------------------------------------------------------


def test_explain_failing_midway_leaves_no_sheet(tmp_path, capsys, monkeypatch):
    """The disk fills after the first sheet's figure is written: no
    ``sheets/sheet-1.png`` may be left behind, and no ``sheets`` folder."""
    import dxf2frame.handcheck.sheets as handcheck

    path = beam(tmp_path / "in")

    def full(target, text, **kw):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(target))

    monkeypatch.setattr(handcheck, "write_text", full)
    rc, _, err = run_cli(capsys, "explain", path, "--at", "3,0", "--result", "D")
    assert rc == 4, err
    assert "cannot write the hand-check sheets of frame.dxf" in err and "No space left" in err
    assert not (tmp_path / "in" / "sheets").exists()


def test_explain_failing_keeps_the_previous_sheets(tmp_path, capsys, monkeypatch):
    import dxf2frame.staging as staging

    path = beam(tmp_path / "in")
    out = tmp_path / "sheets"
    rc, _, err = run_cli(capsys, "explain", path, "--at", "1,0", "--at", "3,0", "--result", "D", "--out", out)
    assert rc == 0, err
    before = snapshot(out)
    assert {p.name for p in before} >= {"sheet-1.md", "sheet-2.png", "sheets.pdf"}
    real_move, calls = staging.move_into_place, []

    def failing_third(staged, target):
        calls.append(target)
        if len(calls) == 3:
            raise OSError(errno.EIO, os.strerror(errno.EIO), str(target))
        real_move(staged, target)

    monkeypatch.setattr(staging, "move_into_place", failing_third)
    # one cut now: sheet-2 of the previous run would be dropped by a success
    rc, _, err = run_cli(capsys, "explain", path, "--at", "4,0", "--result", "D", "--out", out)
    assert rc == 4, err
    assert snapshot(out) == before and hidden(out) == []
    monkeypatch.setattr(staging, "move_into_place", real_move)
    rc, _, err = run_cli(capsys, "explain", path, "--at", "4,0", "--result", "D", "--out", out)
    assert rc == 0, err
    assert sorted(p.name for p in out.iterdir()) == ["sheet-1.md", "sheet-1.png", "sheets.pdf"]


def test_compare_failing_midway_leaves_no_folder_and_no_table(tmp_path, capsys, monkeypatch):
    import dxf2frame.revisions as compare

    rev_a = beam(tmp_path / "in", name="rev-A.dxf")
    rev_b = beam(tmp_path / "in", w=20.0, name="rev-B.dxf")
    out = tmp_path / "compared"

    def full(*a, **kw):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(compare, "mark_changes", full)  # after the table files are staged
    rc, stdout, err = run_cli(capsys, "compare", rev_a, rev_b, "--out", out)
    assert rc == 4, err
    assert "cannot write the comparison of rev-B.dxf" in err and str(out) in err
    assert not out.exists()
    assert stdout == ""  # no table without its files


# ---------------------------------------------------------------------------
# --debug shows the traceback of an internal error
# ---------------------------------------------------------------------------


@pytest.mark.parametrize("debug", [False, True])
def test_debug_prints_the_traceback_of_an_internal_error(tmp_path, capsys, monkeypatch, debug):
    import dxf2frame.draw.writer as writer

    def broken_writer(*a, **kw):
        raise RuntimeError("a fault of ours")

    monkeypatch.setattr(writer, "write_result_drawing", broken_writer)
    path = beam(tmp_path / "in")
    rc, _, err = run_cli(capsys, "solve", path, "--out", tmp_path / "out", "--no-png",
                         *(["--debug"] if debug else []))
    assert rc == 1
    assert "internal error" in err and "a fault of ours" in err
    if debug:
        assert "Traceback (most recent call last)" in err and "broken_writer" in err
    else:
        assert "Traceback" not in err and len(err.strip().splitlines()) == 1


# ---------------------------------------------------------------------------
# SIGTERM and SIGKILL: no staging folder survives
# ---------------------------------------------------------------------------


def test_sigterm_during_a_solve_cleans_up_and_exits_143(solved_once, capsys, monkeypatch):
    import dxf2frame.draw.writer as writer

    path, out, rep, before = solved_once
    real = writer.write_result_drawing

    def terminated_midway(*a, **kw):
        real(*a, **kw)  # a staged drawing exists...
        os.kill(os.getpid(), signal.SIGTERM)  # ...when the service manager stops us
        raise AssertionError("SIGTERM must unwind the run")  # pragma: no cover

    monkeypatch.setattr(writer, "write_result_drawing", terminated_midway)
    handler_before = signal.getsignal(signal.SIGTERM)
    rc, stdout, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json")
    assert rc == 143, err
    assert "terminated" in err and "Traceback" not in err
    assert snapshot(out, rep) == before and hidden(out, rep) == []
    assert signal.getsignal(signal.SIGTERM) == handler_before  # main restores the handler


def _killed_run_in(folder: Path) -> int:
    """A process that stages a half-written file in ``folder`` and is then
    killed outright (SIGKILL: no cleanup can run); returns its pid."""
    code = (
        "import os, signal, sys\n"
        "from dxf2frame.staging import OutputSet\n"
        "s = OutputSet(sys.argv[1]).__enter__()\n"
        "s.staged('frame-results.dxf').write_text('half a drawing')\n"
        "os.kill(os.getpid(), signal.SIGKILL)\n"
    )
    proc = subprocess.Popen([sys.executable, "-c", code, str(folder)], cwd=ROOT)
    assert proc.wait(timeout=60) == -signal.SIGKILL
    return proc.pid


def test_staging_folders_of_killed_runs_are_removed_by_the_next_run(tmp_path, capsys):
    path = beam(tmp_path / "in")
    out = tmp_path / "out"
    out.mkdir()
    dead = _killed_run_in(out)
    [left] = hidden(out)
    assert left.name.startswith(f".dxf2frame-{dead}-") and (left / "frame-results.dxf").exists()
    # a run still going: its folder must survive the next run
    live = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        import socket

        live_dir = out / f".dxf2frame-{live.pid}-busy"
        live_dir.mkdir()
        (live_dir / "owner").write_text(f"{live.pid} {socket.gethostname()}\n")
        rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--no-png")
        assert rc == 0, err
        assert hidden(out) == [live_dir] and (live_dir / "owner").exists()
    finally:
        live.kill()
        live.wait()


# ---------------------------------------------------------------------------
# batch faults: a killed worker, Ctrl-C
# ---------------------------------------------------------------------------


def _batch(folder: Path, names: list[str]) -> list[Path]:
    return [beam(folder, w=10.0 + k, name=n) for k, n in enumerate(names)]


def test_a_killed_worker_does_not_stop_the_batch(tmp_path, capsys, monkeypatch):
    """The worker solving ``killer.dxf`` kills itself with SIGKILL while it
    stages its outputs (as the out-of-memory killer would); the pool workers
    are forked, so they see this monkeypatch."""
    import dxf2frame.draw.writer as writer

    real = writer.write_result_drawing

    def oom(source, target, *a, **kw):
        real(source, target, *a, **kw)
        if Path(source).name == "killer.dxf":
            os.kill(os.getpid(), signal.SIGKILL)

    monkeypatch.setattr(writer, "write_result_drawing", oom)
    names = ["a.dxf", "b.dxf", "killer.dxf", "d.dxf", "e.dxf"]
    files = _batch(tmp_path / "in", names)
    out = tmp_path / "out"
    rc, stdout, err = run_cli(capsys, "solve", *files, "--out", out, "--no-png", "--workers", "2")
    assert rc == 1, err
    rows = {line.split()[0]: line.split()[1] for line in stdout.splitlines() if line.endswith(tuple("0123456789"))
            and line.split()[0] in names}
    assert rows == {"a.dxf": "ok", "b.dxf": "ok", "killer.dxf": "worker", "d.dxf": "ok", "e.dxf": "ok"}, stdout
    assert "killer.dxf" in err and "killed" in err and "Traceback" not in err
    assert sorted(p.name for p in out.glob("*.json")) == [f"{n[:-4]}-results.json" for n in names if n != "killer.dxf"]
    assert not list(out.glob("killer*")) and hidden(out) == []


def test_ctrl_c_on_a_batch_cancels_at_once_and_reports_what_finished(tmp_path, capsys, monkeypatch):
    """``stop.dxf``'s worker sends SIGINT to the batch (the parent) as a user
    pressing Ctrl-C would; every other drawing but ``quick.dxf`` takes 60 s
    in its staging folder.  The batch must stop within seconds, report the
    drawings that finished, leave no staging folder and exit 130."""
    import time

    import dxf2frame.draw.writer as writer

    real = writer.write_result_drawing

    def slow(source, target, *a, **kw):
        real(source, target, *a, **kw)
        name = Path(source).name
        if name == "stop.dxf":
            os.kill(os.getppid(), signal.SIGINT)
        if name not in ("quick.dxf", "stop.dxf"):
            time.sleep(60)

    monkeypatch.setattr(writer, "write_result_drawing", slow)
    names = ["quick.dxf", "slow-1.dxf", "stop.dxf", "slow-2.dxf", "slow-3.dxf", "slow-4.dxf"]
    files = _batch(tmp_path / "in", names)
    out = tmp_path / "out"
    t0 = time.perf_counter()
    rc, stdout, err = run_cli(capsys, "solve", *files, "--out", out, "--no-png", "--workers", "2")
    assert time.perf_counter() - t0 < 30
    assert rc == 130, err
    assert "interrupted" in err and "Traceback" not in err
    assert "quick.dxf" in stdout  # what finished is reported
    assert not list(out.glob("slow-*")) and hidden(out) == []


def test_template_into_a_full_disk_is_exit_4(tmp_path, capsys, monkeypatch):
    import ezdxf.document

    def full(self, filename, *a, **kw):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(filename))

    monkeypatch.setattr(ezdxf.document.Drawing, "saveas", full)
    rc, _, err = run_cli(capsys, "template", tmp_path / "new.dxf")
    assert rc == 4, err
    assert "cannot write new.dxf" in err and str(tmp_path) in err and "No space left" in err
    assert list(tmp_path.iterdir()) == []


# -- the result drawing saved by a child process (dxf2frame.background_save) ------------

def _fork_every_save(monkeypatch):
    import dxf2frame.background_save as bg

    if not bg.can_fork():
        pytest.skip("needs fork, two CPUs and a single-threaded process")
    monkeypatch.setattr(bg, "MIN_ENTITIES", 0)


def test_a_drawing_saved_by_a_child_process_is_the_whole_set(solved_once, capsys, monkeypatch):
    import ezdxf

    _fork_every_save(monkeypatch)
    path, out, rep, before = solved_once
    rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json", "--units", "kN,m")
    assert rc == 0, err
    after = snapshot(out, rep)
    assert sorted(p.name for p in after) == sorted(p.name for p in before)
    assert hidden(out, rep) == []
    layers = {e.dxf.layer for e in ezdxf.readfile(out / "frame-results.dxf").modelspace()}
    assert {"RESULT-MOMENT", "RESULT-NOTES"} <= layers
    # twice the load of the first solve: the report changed with it
    assert json.loads((rep / "frame.json").read_text())["results"] != json.loads(before[rep / "frame.json"])["results"]


def test_a_child_that_cannot_save_is_exit_4_and_keeps_the_previous_set(solved_once, capsys, monkeypatch):
    import ezdxf

    _fork_every_save(monkeypatch)
    path, out, rep, before = solved_once

    def full(self, *a, **k):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(ezdxf.document.Drawing, "saveas", full)
    # the save begun once the diagrams are drawn (dxf2frame.split_export) fails the same way
    monkeypatch.setattr("dxf2frame.split_export.write_entities", full)
    rc, _, err = run_cli(capsys, "solve", path, "--out", out, "--report", rep / "frame.json")
    assert rc == 4, err
    assert "cannot write the results of frame.dxf" in err and "No space left" in err
    assert snapshot(out, rep) == before
    assert hidden(out, rep) == []
