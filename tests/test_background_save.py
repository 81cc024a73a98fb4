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


# -- a save begun before the drawing is finished (BackgroundSave.begin) -------


def _office_doc(dxfversion: str = "R2018"):
    """A drawing with the kinds of entity an office sheet holds: lines,
    polylines, texts, an MTEXT, a dimension, a hatch, a block with an
    attribute, and a title block in paperspace."""
    doc = ezdxf.new(dxfversion, setup=True)
    msp = doc.modelspace()
    for i in range(30):
        msp.add_line((i, 0), (i, 3), dxfattribs={"layer": "FRAME-COLUMNS"})
    msp.add_lwpolyline([(0, 3), (10, 3), (20, 3.5)], dxfattribs={"layer": "FRAME-BEAMS"})
    msp.add_text("LEVEL 2", dxfattribs={"layer": "NOTES", "height": 0.2}).set_placement((0, 3.2))
    msp.add_mtext("GENERAL NOTES\\PALL STEEL S355, Ø 150 – 2.5 m², Ω", dxfattribs={"layer": "NOTES", "char_height": 0.2})
    msp.add_linear_dim(base=(0, -1), p1=(0, 0), p2=(10, 0)).render()
    hatch = msp.add_hatch(color=3)
    hatch.paths.add_polyline_path([(0, 0), (1, 0), (1, 1)], is_closed=True)
    bubble = doc.blocks.new("GRID-BUBBLE")
    bubble.add_circle((0, 0), 0.4)
    bubble.add_attdef("TAG", (0, 0), dxfattribs={"height": 0.3})
    msp.add_blockref("GRID-BUBBLE", (0, -2)).add_auto_attribs({"TAG": "A"})
    doc.paperspace().add_text("TITLE BLOCK", dxfattribs={"height": 2.5})
    return doc


def _finish(doc):
    """What the result writer adds after the diagrams: a new layer, texts,
    a polyline on it, and a layer of the paperspace title block."""
    doc.layers.add("RESULT-NOTES-LATE")
    msp = doc.modelspace()
    msp.add_text("a preliminary analysis aid, M in kN·m, Ω", dxfattribs={"layer": "RESULT-NOTES-LATE"})
    msp.add_lwpolyline([(0, 0), (5, 1), (9, 0)], dxfattribs={"layer": "RESULT-NOTES-LATE"})
    doc.paperspace().add_text("REVISION B", dxfattribs={"height": 2.5})


@pytest.fixture
def fixed_metadata():
    """ezdxf's fixed dates and ids, so that two saves of a drawing are the same bytes."""
    was = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    yield
    ezdxf.options.write_fixed_meta_data_for_testing = was


@pytest.mark.parametrize("dxfversion", ["R2000", "R2007", "R2018"])
def test_a_drawing_written_in_parts_is_the_whole_save(fixed_metadata, dxfversion):
    import io

    from dxf2frame import split_export

    doc = _office_doc(dxfversion)
    first = split_export.modelspace_entities(doc)
    body = io.StringIO()
    split_export.write_entities(doc, body, 0, len(first))
    _finish(doc)
    assert split_export.same_start(doc, first)
    head, tail, whole = io.StringIO(), io.StringIO(), io.StringIO()
    split_export.write_head(doc, head)
    split_export.write_tail(doc, tail, len(first))
    doc.write(whole)
    assert head.getvalue() + body.getvalue() + tail.getvalue() == whole.getvalue()
    assert not split_export.splittable(ezdxf.new("R12"))


def _assert_saved_early_as_whole(tmp_path, doc, meanwhile=None) -> None:
    """Begin saving ``doc``, let ``meanwhile(doc, begin_again)`` draw, add
    the legend and notes, finish: the file is byte for byte ezdxf's whole
    save of the finished drawing, and no part is left behind."""
    with BackgroundSave(min_entities=0) as saver:
        saver.begin(doc, tmp_path / "a.dxf")
        assert saver.running
        if meanwhile is not None:
            meanwhile(doc, lambda: saver.begin(doc, tmp_path / "a.dxf"))
        _finish(doc)                             # legend and notes: written by this process
        saver(doc, tmp_path / "a.dxf")
        saver.wait()
    doc.saveas(tmp_path / "b.dxf")
    assert (tmp_path / "a.dxf").read_bytes() == (tmp_path / "b.dxf").read_bytes()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.dxf", "b.dxf"]


@forking
@pytest.mark.parametrize("dxfversion", ["R2000", "R2018"])
def test_a_save_begun_early_writes_the_same_file(tmp_path, fixed_metadata, dxfversion):
    _assert_saved_early_as_whole(tmp_path, _office_doc(dxfversion))


@forking
def test_a_save_begun_in_two_pieces_writes_the_same_file(tmp_path, fixed_metadata):
    def diagrams(doc, begin_again):
        for i in range(20):
            doc.modelspace().add_lwpolyline([(i, 0), (i + 0.5, 1), (i + 1, 0)],
                                            dxfattribs={"layer": "RESULT-MOMENT-X"})
        begin_again()                            # the diagrams, by a second child

    _assert_saved_early_as_whole(tmp_path, _office_doc(), diagrams)


@forking
def test_an_entity_removed_after_the_early_start_gives_a_whole_save(tmp_path, fixed_metadata):
    def remove_one(doc, begin_again):
        msp = doc.modelspace()
        msp.delete_entity(msp[3])                # written by the child already: it must not be saved
        begin_again()                            # (not taken: the start differs)

    _assert_saved_early_as_whole(tmp_path, _office_doc(), remove_one)


@forking
def test_a_save_begun_and_never_finished_leaves_nothing(tmp_path):
    doc = _office_doc()
    with BackgroundSave(min_entities=0) as saver:
        saver.begin(doc, tmp_path / "a.dxf")
        saver.drop()                             # e.g. a combination found to buckle
        assert not saver.running
    with BackgroundSave(min_entities=0) as saver:
        saver.begin(doc, tmp_path / "b.dxf")     # the block ends without the drawing being finished
    time.sleep(0.2)
    assert list(tmp_path.iterdir()) == []


@forking
def test_a_failing_caller_stops_a_save_begun_early(tmp_path):
    doc = _office_doc()
    with pytest.raises(RuntimeError, match="legend failed"):
        with BackgroundSave(min_entities=0) as saver:
            saver.begin(doc, tmp_path / "a.dxf")
            raise RuntimeError("legend failed")
    assert not saver.running
    assert list(tmp_path.iterdir()) == []


@forking
def test_a_full_disk_while_joining_the_parts_is_an_oserror(tmp_path, monkeypatch):
    import shutil

    def full(*a, **k):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(shutil, "copyfileobj", full)          # the join of the parts
    doc = _office_doc()
    saver = BackgroundSave(min_entities=0)
    saver.begin(doc, tmp_path / "a.dxf")
    _finish(doc)
    saver(doc, tmp_path / "a.dxf")
    with pytest.raises(OSError) as info:
        saver.wait()
    assert info.value.errno == errno.ENOSPC
    assert list(tmp_path.iterdir()) == []


def test_r12_drawings_and_small_ones_are_not_begun_early(tmp_path):
    saver = BackgroundSave(min_entities=0)
    saver.begin(ezdxf.new("R12"), tmp_path / "a.dxf")
    assert not saver.running
    saver = BackgroundSave()                 # the default threshold: far above this drawing
    saver.begin(_office_doc(), tmp_path / "b.dxf")
    assert not saver.running
