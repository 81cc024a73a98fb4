"""The legend and notes block beside the frame (positions and sizes in
drawing units).

Legend: per result layer a swatch, its scale line and its keys, on that
layer; a frame wider than tall gets these blocks in rows under the
drawing, a taller one a column to its right, so a picture of one layer
keeps close to the frame.  Title and notes (notes layer) go to the right.

The notes (notes layer): program version, source drawing, units, the
sign convention, what is shown, the determinacy, warnings (at most
eight listed) and the safety caution.
"""
from __future__ import annotations

import textwrap
from pathlib import Path
from typing import TYPE_CHECKING

from ezdxf.enums import TextEntityAlignment

from .. import CAUTION, __version__
from .labels import Box, text_width
from ..report.report import UnitFactors

if TYPE_CHECKING:  # pragma: no cover
    from .style import Pen
    from .curves import FrameGeom


# -- constants -----------------------------------------------------------------

_LEGEND_CHARS = 40         # legend lines wrap at about this many characters
_MAX_WARNINGS = 8          # listed in the notes block


# -- legend and notes ----------------------------------------------------------


def _wrap(text: str, width: int = 0) -> list[str]:
    """A legend line wrapped to about ``_LEGEND_CHARS`` characters; a last
    row of one short word takes the word before it along (no lone "it").

    >>> _wrap("combination Ck of the envelope governs it", 38)
    ['combination Ck of the envelope', 'governs it']
    """
    rows = textwrap.wrap(text, width or _LEGEND_CHARS, break_on_hyphens=False) or [""]
    if len(rows) > 1 and " " not in rows[-1] and len(rows[-1]) <= 4 and " " in rows[-2]:
        head, word = rows[-2].rsplit(" ", 1)
        rows[-2:] = [head, f"{word} {rows[-1]}"]
    return rows


def _wrap_items(head: str, items: list[str], width: int = 0) -> list[str]:
    """``head`` then the items joined by ", ", wrapped between items (an item is never split)."""
    width = width or _LEGEND_CHARS
    rows, row = [], head
    for k, item in enumerate(items):
        piece = item + ("," if k < len(items) - 1 else "")
        if row and len(row) + 1 + len(piece) > width:
            rows.append(row)
            row = piece
        else:
            row = f"{row} {piece}" if row else piece
    return rows + [row]


def notes_paragraphs(model, det, uf: UnitFactors | None, shown: str, extra: list[str],
                     more_warnings: list[str] | tuple = ()) -> list[str]:
    """The notes block's paragraphs; ``more_warnings``: the drawing's own
    (values left out for want of room), listed with the model's."""
    paras = [
        f"dxf2frame {__version__}",
        f"Source: {Path(model.source).name}",
    ]
    if uf is not None:
        paras.append(f"Units: force {uf.force_unit}, moment {uf.moment_unit}, length {uf.length_unit}; "
                     f"drawing unit {model.length_unit}")
        paras.append(
            "Sign convention: axial force N tension positive; shear V positive when it turns the element "
            "clockwise; moment M positive when it bends the member concave toward its local +y side "
            "(sagging for a beam drawn left to right). Local x runs from the member end with the smaller X "
            "(ties: smaller Y); local y is local x turned 90 degrees counter-clockwise. Reactions act on the "
            "structure along +X and +Y, moments counter-clockwise positive."
        )
    paras.append(f"Shown: {shown}")
    deg = f", degree {det.degree}" if det.degree else ""
    mech = f", {det.mechanisms} mechanism(s)" if det.mechanisms else ""
    paras.append(f"Determinacy: {det.status}{deg}{mech}. {det.count_check}")
    if det.detail:
        paras.append(det.detail)
    paras += extra + list(model.notes)
    warnings = list(model.warnings) + [w for w in det.warnings if w not in model.warnings]
    warnings += [w for w in more_warnings if w not in warnings]
    if warnings:
        paras.append(f"Warnings ({len(warnings)}):")
        paras += [f"- {w}" for w in warnings[:_MAX_WARNINGS]]
        if len(warnings) > _MAX_WARNINGS:
            paras.append(f"- ... and {len(warnings) - _MAX_WARNINGS} more (see the report)")
    paras += ["", f"CAUTION: {CAUTION}"]
    return paras


def draw_legend_and_notes(pen: Pen, model, det, geom: FrameGeom, names: dict[str, str],
                           legend: list[tuple[str, str]], h: float, uf: UnitFactors | None, shown: str,
                           envelope: bool, *, content: Box, keys: dict[str, list[tuple[int, str]]],
                           font, extra: list[str] | None = None, warnings: list[str] | tuple = ()) -> list[list]:
    """The legend: per result layer a swatch, its scale line and the keys of
    the combinations that govern a value written on it (all on that layer);
    then the title and the notes block (notes layer).

    ``content`` is the box of everything drawn so far.  A frame wider than
    tall gets the legend blocks in rows under the drawing and the notes to
    its right; a taller one gets one column to the right (legend, then
    notes).  Either way the result layers' own content stays close to the
    frame, so a picture of one layer wastes little room.

    ``extra``: more notes paragraphs (the reaction schedule); ``warnings``:
    the drawing's own warnings, listed with the model's.
    Returns the entities drawn as two groups, the legend blocks and the
    title with the notes, so the caller can move each clear of the
    drawing's own content.
    """
    msp = pen.msp
    n0 = len(msp)
    blocks = []
    rank = {"moment": 0, "shear": 1, "axial": 2, "reactions": 3, "deflected": 4}
    for key, line in sorted(legend, key=lambda kl: rank.get(kl[0], 9)):
        rows = _wrap(line)
        if keys.get(key):
            rows += _wrap_items("governing:", [f"C{k + 1} = {name}" for k, name in keys[key]])
        blocks.append((key, rows))
    sw = 2.0 * h
    widths = [sw + 0.8 * h + max(text_width(font, row, h) for row in rows) for _key, rows in blocks]
    pitch = 1.6 * h
    size = geom.size
    side_x = content[2] + max(0.05 * size, 3 * h)
    gx0, gy0, gx1, gy1 = geom.bounds

    def block(x: float, y: float, key: str, rows: list[str]) -> None:
        layer = names[key]
        pen.polyline([(x, y), (x + sw, y), (x + sw, y - h), (x, y - h)], layer, closed=True,
                     dashed=key == "deflected")
        for k, row in enumerate(rows):
            pen.text(row, (x + sw + 0.8 * h, y - k * pitch), h, layer, style="D2F-NOTES",
                     align=TextEntityAlignment.TOP_LEFT)

    if gx1 - gx0 >= gy1 - gy0:                         # under the drawing, in rows
        # at least three blocks to a row: the five layers' legends in two rows
        left = content[0]
        avail = max(content[2] - content[0], 3 * max(widths, default=0.0) + 4.0 * h)
        x, y, row_h = left, content[1] - 2.5 * h, 0.0
        right = side_x
        for (key, rows), w in zip(blocks, widths):
            if x > left and x + w > left + avail:
                x, y, row_h = left, y - row_h - 1.2 * h, 0.0
            block(x, y, key, rows)
            right = max(right, x + w + 3.0 * h)        # the notes start clear of every block
            x += w + 2.0 * h
            row_h = max(row_h, (len(rows) - 1) * pitch + h)
        side_x = right
        y = gy1
    else:                                             # one column to the right
        y = gy1 - 2.6 * h
        for key, rows in blocks:
            block(side_x, y, key, rows)
            y -= len(rows) * pitch + 0.4 * h
        y += 2.6 * h - 0.8 * h
    n1 = len(msp)
    x0 = side_x
    pen.text("dxf2frame results", (x0, y), 1.4 * h, names["notes"], style="D2F-NOTES",
             align=TextEntityAlignment.TOP_LEFT)
    y -= 2.6 * h
    if envelope:
        for row in _wrap("[Ck] beside a value: combination Ck of the envelope governs it", 60):
            pen.text(row, (x0, y), h, names["notes"], style="D2F-NOTES", align=TextEntityAlignment.TOP_LEFT)
            y -= pitch
        y -= 0.4 * h
    paras = notes_paragraphs(model, det, uf, shown, list(extra or []), warnings)
    pen.notes(paras, (x0, y - 0.8 * h), h, max(0.6 * size, 45 * h), names["notes"])
    added = list(msp)[n0:]
    return [added[:n1 - n0], added[n1 - n0:]]
