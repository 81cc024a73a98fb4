"""Saving the result drawing in a forked child process
(dxf2frame.background_save): the same file as a save in the process, the
child's errors brought back to the parent, a child stopped when the
caller fails, and no fork where it is not safe.

No engineering numbers here: these check file handling only.
"""
from __future__ import annotations

import errno
import threading
import time

import ezdxf
import pytest

from dxf2frame.background_save import BackgroundSave, BackgroundSaveError, can_fork

forking = pytest.mark.skipif(not can_fork(), reason="needs fork, two CPUs and a single-threaded process")


def _doc(n: int = 50):
    doc = ezdxf.new()
    msp = doc.modelspace()
    for i in range(n):
        msp.add_line((i, 0), (i, 1), dxfattribs={"layer": "FRAME-COLUMNS"})
    return doc


def _lines(path):
    return sorted((tuple(e.dxf.start), tuple(e.dxf.end)) for e in ezdxf.readfile(path).modelspace()
                  if e.dxftype() == "LINE")


@forking
def test_child_writes_the_same_drawing(tmp_path):
    doc = _doc()
    with BackgroundSave(min_entities=0) as saver:
        saver(doc, tmp_path / "a.dxf")
        saver.wait()
    doc.saveas(tmp_path / "b.dxf")
    assert _lines(tmp_path / "a.dxf") == _lines(tmp_path / "b.dxf")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.dxf", "b.dxf"]   # no temporary file left


def _saving_raises(monkeypatch, tmp_path, exc: BaseException) -> BackgroundSave:
    """A child process started to save, whose ezdxf save raises ``exc``."""
    def failing(self, *a, **k):
        raise exc

    monkeypatch.setattr(ezdxf.document.Drawing, "saveas", failing)
    saver = BackgroundSave(min_entities=0)
    saver(_doc(), tmp_path / "a.dxf")
    return saver


@forking
def test_a_full_disk_in_the_child_is_an_oserror_with_its_errno(tmp_path, monkeypatch):
    saver = _saving_raises(monkeypatch, tmp_path, OSError(errno.ENOSPC, "No space left on device"))
    with pytest.raises(OSError) as info:
        saver.wait()
    assert info.value.errno == errno.ENOSPC
    assert not (tmp_path / "a.dxf").exists()


@forking
def test_other_failures_of_the_child_are_raised_as_they_were(tmp_path, monkeypatch):
    saver = _saving_raises(monkeypatch, tmp_path, ValueError("an entity the writer cannot export"))
    with pytest.raises(ValueError, match="an entity the writer cannot export"):
        saver.wait()


class _Unpicklable(Exception):
    def __reduce__(self):
        raise TypeError("no pickling")


@forking
def test_an_exception_that_does_not_pickle_is_named(tmp_path, monkeypatch):
    saver = _saving_raises(monkeypatch, tmp_path, _Unpicklable("a lock inside"))
    with pytest.raises(BackgroundSaveError, match="_Unpicklable: a lock inside"):
        saver.wait()


@forking
def test_a_failing_caller_stops_the_child(tmp_path, monkeypatch):
    def slow(self, *a, **k):
        time.sleep(60)

    monkeypatch.setattr(ezdxf.document.Drawing, "saveas", slow)
    t0 = time.monotonic()
    with pytest.raises(RuntimeError, match="report failed"):
        with BackgroundSave(min_entities=0) as saver:
            saver(_doc(), tmp_path / "a.dxf")
            assert saver.running
            raise RuntimeError("report failed")
    assert not saver.running and time.monotonic() - t0 < 30     # stopped and reaped, not waited for
    assert not (tmp_path / "a.dxf").exists()


def test_small_drawings_and_threaded_processes_save_at_once(tmp_path):
    saver = BackgroundSave()           # the default threshold: far above 50 entities
    saver(_doc(), tmp_path / "a.dxf")
    assert not saver.running and (tmp_path / "a.dxf").exists()
    stop = threading.Event()
    t = threading.Thread(target=stop.wait)
    t.start()
    try:
        assert not can_fork()
        saver = BackgroundSave(min_entities=0)
        saver(_doc(), tmp_path / "b.dxf")
        assert not saver.running and (tmp_path / "b.dxf").exists()
    finally:
        stop.set()
        t.join()
