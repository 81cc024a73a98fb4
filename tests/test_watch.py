"""The live loop: re-solve on save, debounced, surviving broken saves.

The debouncer is tested with an injected clock and file stamps (no
sleeping); the end-to-end tests run the real file observer in a thread and
poll the results with a timeout.
"""
from __future__ import annotations

import io
import os
import threading
import time
from pathlib import Path

import pytest

from dxf_builders import add_load, add_member, add_support, new_drawing
from dxf2frame.cli import build_parser
from dxf2frame.pipeline import SolveRequest
from dxf2frame.watch import Debouncer, Watch, is_own_output, watch_request

SETTINGS = """\
[units]
force = "kN"
[combinations]
builtin = []
"""
TIMEOUT = 60.0  # s: generous for a shared machine; the polls return as soon as the result is there


def beam_bytes(w_kn_m: float, span: float = 6.0) -> bytes:
    """A pin-roller beam of ``span`` m under a uniform gravity load, as the bytes of a DXF file."""
    doc = new_drawing(units="m")
    msp = doc.modelspace()
    add_member(msp, (0, 0), (span, 0))
    add_support(msp, "pin", (0, 0))
    add_support(msp, "roller", (span, 0))
    add_load(msp, "udl", (span / 3, 0), W=f"{w_kn_m} kN/m", CASE="D")
    text = io.StringIO()
    doc.write(text)
    return text.getvalue().encode("utf-8")


def save_in_steps(path: Path, data: bytes, steps: int = 3) -> None:
    """Write ``data`` to ``path`` the way some CAD programs save: truncate,
    write in pieces with a flush between, then touch the time."""
    with open(path, "wb") as f:
        k = len(data) // steps
        for i in range(steps):
            f.write(data[i * k: len(data) if i == steps - 1 else (i + 1) * k])
            f.flush()
    os.utime(path)


def wait_for(condition, what: str, timeout: float = TIMEOUT) -> None:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if condition():
            return
        time.sleep(0.02)
    raise AssertionError(f"timed out waiting for {what}")


# -- debouncer (injected clock and stamps: no waiting) -------------------------------


class FakeFiles:
    def __init__(self) -> None:
        self.now = 0.0
        self.stamps: dict[Path, tuple[int, int] | None] = {}

    def clock(self) -> float:
        return self.now

    def stat(self, p: Path):
        return self.stamps.get(p)


def test_debounce_collapses_a_save_written_in_steps():
    fs, p = FakeFiles(), Path("shed.dxf")
    d = Debouncer(0.3, clock=fs.clock, stat=fs.stat)
    for t, size in [(0.00, 0), (0.05, 4096), (0.10, 8192), (0.12, 9000)]:  # truncate, write, write, touch
        fs.now, fs.stamps[p] = t, (size, int(t * 1e9))
        d.note(p)
        assert d.due() == []
    fs.now = 0.35
    assert d.due() == []           # only 0.23 s since the last step
    fs.now = 0.45
    assert d.due() == [p]          # one solve for the whole save
    fs.now = 5.0
    assert d.due() == [] and not d


def test_debounce_waits_while_the_file_still_grows_without_events():
    fs, p = FakeFiles(), Path("shed.dxf")
    d = Debouncer(0.3, clock=fs.clock, stat=fs.stat)
    fs.stamps[p] = (100, 1)
    d.note(p)
    fs.now, fs.stamps[p] = 0.4, (200, 2)   # grew, but no event came (a missed notification)
    assert d.due() == []                   # not stable: wait another interval
    fs.now = 0.6
    assert d.due() == []
    fs.now = 0.75
    assert d.due() == [p]


def test_debounce_drops_a_file_that_vanished_mid_rename_until_it_returns():
    fs, p = FakeFiles(), Path("shed.dxf")
    d = Debouncer(0.3, clock=fs.clock, stat=fs.stat)
    d.note(p)                               # no such file right now (the old one renamed away)
    fs.now = 0.5
    assert d.due() == [] and not d
    fs.stamps[p] = (10, 3)
    d.note(p)                               # the rename brought it back
    fs.now = 0.9
    assert d.due() == [p]


def test_own_outputs_and_temporary_files_are_ignored(tmp_path):
    for name in ["shed-results.dxf", ".shed.1a2b.tmp.dxf", "~shed.dxf", "shed.dxf.tmp",
                 ".dxf2frame-123-abcd/shed-results.dxf"]:
        assert is_own_output(tmp_path / name), name
    assert not is_own_output(tmp_path / "shed.dxf")
    (tmp_path / "shed.dxf").write_bytes(beam_bytes(10))
    w = Watch([tmp_path], SolveRequest(png=False, single=False))
    assert w.wanted(tmp_path / "shed.dxf")
    assert not w.wanted(tmp_path / "solved" / "shed-results.dxf")   # not directly in the watched folder
    assert not w.wanted(tmp_path / "notes.txt")


def test_watch_request_is_built_from_the_command_line():
    args = build_parser().parse_args(["watch", "drawings", "--no-png", "--units", "kN,m", "--settle", "0.5"])
    req = watch_request(args)
    assert req.png is False and req.units == ("kN", "m") and req.single is False
    assert args.settle == 0.5
    assert req.history is True  # watch records the revision history by default
    off = watch_request(build_parser().parse_args(["watch", "drawings", "--no-history"]))
    assert off.history is False


# -- end to end, with the real observer ---------------------------------------------


class Running:
    """A Watch running in a thread until the test ends."""

    def __init__(self, watch: Watch) -> None:
        self.watch, self.stop, self.ready = watch, threading.Event(), threading.Event()
        self.error: BaseException | None = None
        self.thread = threading.Thread(target=self._run, daemon=True)

    def _run(self) -> None:
        try:
            self.watch.run(self.stop, ready=self.ready)
        except BaseException as exc:  # noqa: BLE001 - handed to the test
            self.error = exc

    def __enter__(self) -> "Running":
        self.thread.start()
        assert self.ready.wait(TIMEOUT), "the observer did not start"
        return self

    def __exit__(self, *exc) -> None:
        self.stop.set()
        self.thread.join(TIMEOUT)
        assert not self.thread.is_alive()
        if self.error is not None:
            raise self.error

    def solves_of(self, name: str) -> int:
        return sum(1 for line in self.watch.stream.getvalue().splitlines() if f"  {name}  " in line)


@pytest.fixture
def folder(tmp_path) -> Path:
    d = tmp_path / "sketches"
    d.mkdir()
    (d / "dxf2frame.toml").write_text(SETTINGS)
    return d


def test_three_saves_one_broken_keep_the_last_good_results(folder):
    shed = folder / "shed.dxf"
    report = folder / "solved" / "shed-results.json"
    drawing = folder / "solved" / "shed-results.dxf"
    w = Watch([folder], SolveRequest(png=False, single=False), stream=io.StringIO(), settle=0.2)
    with Running(w) as run:
        # save 1: 10 kN/m over 6 m
        save_in_steps(shed, beam_bytes(10))
        wait_for(lambda: run.solves_of("shed.dxf") == 1 and report.exists(), "the first solve")
        o1 = w.last[shed.absolute()]
        assert o1.status == "ok"
        # max M = wL^2/8 (AISC Manual, beam diagrams and formulas, case 1; from memory)
        assert o1.max_m == pytest.approx(10 * 6**2 / 8, rel=1e-6)
        first_report = report.read_bytes()

        # save 2: 12 kN/m
        save_in_steps(shed, beam_bytes(12))
        wait_for(lambda: run.solves_of("shed.dxf") == 2, "the second solve")
        o2 = w.last[shed.absolute()]
        assert o2.status == "ok"
        assert o2.max_m == pytest.approx(12 * 6**2 / 8, rel=1e-6)  # wL^2/8 (AISC case 1, from memory)
        assert o2.max_v == pytest.approx(12 * 6 / 2, rel=1e-6)     # V = wL/2 (AISC case 1, from memory)
        second_report, second_drawing = report.read_bytes(), drawing.read_bytes()
        assert second_report != first_report
        line = w.stream.getvalue().splitlines()[-1]
        assert "shed.dxf  ok" in line and "|M| +20.0%" in line     # 12/10 - 1 (the loads' ratio)

        # save 3: broken (a save cut short)
        save_in_steps(shed, beam_bytes(12)[:700])
        wait_for(lambda: run.solves_of("shed.dxf") == 3, "the broken save")
        o3 = w.last[shed.absolute()]
        assert o3.status == "bad input" and o3.message
        assert report.read_bytes() == second_report and drawing.read_bytes() == second_drawing
        assert "previous results kept" in w.stream.getvalue().splitlines()[-1]
        assert not [p for p in (folder / "solved").iterdir() if p.name.startswith(".")]  # no staging left


def test_a_save_in_several_steps_is_solved_once(folder):
    shed, other = folder / "shed.dxf", folder / "other.dxf"
    w = Watch([folder], SolveRequest(png=True, single=False), stream=io.StringIO(), settle=0.3)
    with Running(w) as run:
        save_in_steps(shed, beam_bytes(10), steps=5)
        wait_for(lambda: run.solves_of("shed.dxf") == 1, "the solve of the save")
        assert w.last[shed.absolute()].status == "ok"       # never solved half-written
        assert (folder / "solved" / "shed-results.png").exists()
        # a later save of another drawing: by the time it is solved, any
        # second solve of the first save would have happened (events are in order)
        save_in_steps(other, beam_bytes(5))
        wait_for(lambda: run.solves_of("other.dxf") == 1, "the solve of the other drawing")
        assert run.solves_of("shed.dxf") == 1
        # the results in solved/ did not trigger solves of their own
        assert w.solves == 2


@pytest.mark.parametrize("signame, code", [("SIGINT", 130), ("SIGTERM", 143)])
def test_the_command_stops_cleanly_on_a_signal(folder, signame, code):
    import signal
    import subprocess
    import sys

    (folder / "shed.dxf").write_bytes(beam_bytes(10))
    env = dict(os.environ, MPLBACKEND="Agg")
    proc = subprocess.Popen([sys.executable, "-m", "dxf2frame", "watch", str(folder), "--no-png"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    try:
        out = []
        end = time.monotonic() + TIMEOUT
        while time.monotonic() < end:          # the line of the first solve: the loop is running
            line = proc.stdout.readline()
            out.append(line)
            if "shed.dxf  ok" in line or not line:
                break
        assert any("shed.dxf  ok" in x for x in out), out
        proc.send_signal(getattr(signal, signame))
        assert proc.wait(TIMEOUT) == code
        assert "watch" in proc.stderr.read()
        assert not [p for p in (folder / "solved").iterdir() if p.name.startswith(".")]
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()


def test_results_written_into_the_watched_folder_do_not_trigger_solves(folder):
    shed = folder / "shed.dxf"
    w = Watch([folder], SolveRequest(out=folder, png=False, single=False), stream=io.StringIO(), settle=0.2)
    with Running(w) as run:
        save_in_steps(shed, beam_bytes(10))
        wait_for(lambda: run.solves_of("shed.dxf") == 1 and (folder / "shed-results.json").exists(), "the solve")
        # a sentinel save: solved after anything the results could have triggered
        save_in_steps(folder / "other.dxf", beam_bytes(5))
        wait_for(lambda: run.solves_of("other.dxf") == 1, "the sentinel")
        assert w.solves == 2 and run.solves_of("shed-results.dxf") == 0
