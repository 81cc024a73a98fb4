"""A DXF document written in two parts, so that its save can start before
the drawing is finished.

Most of a result drawing's DXF text is the drafter's own modelspace
entities and the diagrams; the legend, the notes and the second-order
layers that come last are a small part of it.  A save that must wait for
those last entities can still write everything before them while they
are drawn:

* :func:`write_entities` exports modelspace entities present *now* (a
  slice of them; in pieces as the drawing grows), exactly as
  :meth:`ezdxf.document.Drawing.write` exports them;
* once the drawing is finished, :func:`write_head` writes what precedes
  them in the file (HEADER, CLASSES, TABLES, BLOCKS and the start of the
  ENTITIES section) and :func:`write_tail` what follows them (the
  modelspace entities added since, the active paperspace's entities, the
  end of the section, OBJECTS and the rest).

Head, entities and tail joined are byte for byte the file
:meth:`~ezdxf.document.Drawing.saveas` writes (the test suite compares
them with ezdxf's fixed metadata), provided that the modelspace entities
written first were neither changed nor removed in between: only new
entities may be added to modelspace meanwhile (anything may change
elsewhere: tables, blocks, paperspace, objects, header).
:func:`same_start` checks the part of that condition that can be checked
cheaply (none removed, none inserted before them); changing an entity
already written is up to the caller not to do.

Only DXF R2000 and later drawings are split (:func:`splittable`); an R12
drawing writes its handles on a header switch and is saved whole.
"""
from __future__ import annotations

import itertools
import operator
from typing import TYPE_CHECKING, TextIO

from ezdxf.lldxf.const import DXF12
from ezdxf.lldxf.tagwriter import TagWriter

if TYPE_CHECKING:
    from ezdxf.document import Drawing
    from ezdxf.entities import DXFEntity

__all__ = ["ENTITIES_START", "modelspace_entities", "same_start", "splittable", "write_entities", "write_head",
           "write_tail"]

#: the start of the ENTITIES section, as ezdxf writes it
ENTITIES_START = "  0\nSECTION\n  2\nENTITIES\n"


def splittable(doc: "Drawing") -> bool:
    """The drawing can be written in parts (DXF R2000 or later)."""
    return doc.dxfversion > DXF12


def modelspace_entities(doc: "Drawing") -> list["DXFEntity"]:
    """The modelspace entities in the order they are written (the live ones)."""
    return list(doc.modelspace().entity_space)


def same_start(doc: "Drawing", before: list["DXFEntity"]) -> bool:
    """The modelspace still starts with the entities ``before`` (a
    :func:`modelspace_entities` taken earlier), the same objects in the
    same order: none was removed or inserted among them."""
    now = modelspace_entities(doc)
    return len(now) >= len(before) and all(map(operator.is_, now, before))


def _writer(doc: "Drawing", fp: TextIO) -> TagWriter:
    return TagWriter(fp, write_handles=True, dxfversion=doc.dxfversion)


def write_entities(doc: "Drawing", fp: TextIO, start: int, stop: int) -> None:
    """Modelspace entities ``start`` to ``stop`` (as a slice) to the text
    stream ``fp`` (pending changes committed first, as a save does)."""
    doc.commit_pending_changes()
    tw = _writer(doc, fp)
    for entity in itertools.islice(doc.modelspace().entity_space, start, stop):
        entity.export_dxf(tw)


def write_head(doc: "Drawing", fp: TextIO) -> None:
    """Everything that precedes the modelspace entities in the file: the
    document brought up to date as a save does it (pending changes,
    required classes, header variables, metadata and handle seed), then
    HEADER, CLASSES, TABLES, BLOCKS and the start of ENTITIES."""
    doc.commit_pending_changes()
    doc.update_all()
    tw = _writer(doc, fp)
    doc.header.export_dxf(tw)
    doc.classes.export_dxf(tw)
    doc.tables.export_dxf(tw)
    doc.blocks.export_dxf(tw)
    tw.write_str(ENTITIES_START)


def write_tail(doc: "Drawing", fp: TextIO, start: int) -> None:
    """Everything that follows the first ``start`` modelspace entities: the
    later ones, the active paperspace's entities, the end of ENTITIES,
    OBJECTS, any other section kept from the source, and EOF.  Call after
    :func:`write_head` (which brings the document up to date)."""
    tw = _writer(doc, fp)
    for entity in itertools.islice(doc.modelspace().entity_space, start, None):
        entity.export_dxf(tw)
    doc.active_layout().entity_space.export_dxf(tw)
    tw.write_tag2(0, "ENDSEC")
    doc.objects.export_dxf(tw)
    if doc.acdsdata.is_valid:
        doc.acdsdata.export_dxf(tw)
    for section in doc.stored_sections:
        section.export_dxf(tw)
    tw.write_tag2(0, "EOF")
