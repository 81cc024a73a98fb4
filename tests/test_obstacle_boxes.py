"""Boxes of block references as obstacles: measured once per block and
placed by each reference's transform, checked against ezdxf's own bbox of
the whole reference (an independent measurement of the same entity)."""
from __future__ import annotations

import ezdxf
import numpy as np
import pytest
from ezdxf import bbox
from ezdxf.enums import TextEntityAlignment

from dxf2frame.draw.obstacles import drawing_obstacles
from dxf2frame.symbols import define_blocks, define_layers, insert_symbol


def _sheet():
    doc = ezdxf.new("R2018")
    define_layers(doc)
    define_blocks(doc)
    msp = doc.modelspace()
    refs = [
        insert_symbol(msp, "UDL", (2.0, 0.0), layer="LOADS", scale=0.2, W="10 kN/m", CASE="D"),
        insert_symbol(msp, "PIN", (0.0, 0.0), layer="SUPPORTS", scale=0.3),
        insert_symbol(msp, "FORCE", (5.0, 3.0), layer="LOADS", scale=0.25, P="12 kN", CASE="W"),
    ]
    turned = insert_symbol(msp, "ROLLER", (6.0, 0.0), layer="SUPPORTS", scale=0.3)
    turned.dxf.rotation = 30.0
    blk = doc.blocks.new("GRID-BUBBLE")
    blk.add_circle((0, 0), 0.4)
    blk.add_attdef("NO", (0, 0), dxfattribs={"height": 0.3})
    bubble = msp.add_blockref("GRID-BUBBLE", (0.0, 8.0), dxfattribs={"xscale": 2.0, "yscale": 2.0})
    bubble.add_attrib("NO", "A", (0.0, 8.0), dxfattribs={"height": 0.6})
    bubbles = [bubble]
    for x in (7.0, 14.0):   # the same text twice, centred on its bubble (measured once, placed twice)
        other = msp.add_blockref("GRID-BUBBLE", (x, 8.0), dxfattribs={"xscale": 2.0, "yscale": 2.0})
        att = other.add_attrib("NO", "B", (x, 8.0), dxfattribs={"height": 0.6})
        att.set_placement((x, 8.0), align=TextEntityAlignment.MIDDLE_CENTER)
        bubbles.append(other)
    return doc, refs + bubbles, turned


def _ezdxf_box(e):
    b = bbox.extents([e], fast=True)
    return np.array([b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y])


def test_plain_references_get_ezdxfs_own_box():
    doc, plain, _ = _sheet()
    obst = drawing_obstacles(doc, lambda layer: False)
    got = np.array([g.bounds for g in obst.geoms])
    for e in plain:
        want = _ezdxf_box(e)
        assert np.any(np.all(np.isclose(got, want, atol=1e-9), axis=1)), (e.dxf.name, want)


def test_a_turned_reference_gets_a_box_that_holds_its_content():
    doc, _, turned = _sheet()
    obst = drawing_obstacles(doc, lambda layer: False)
    want = _ezdxf_box(turned)
    holds = [g.bounds for g in obst.geoms
             if g.bounds[0] <= want[0] + 1e-9 and g.bounds[1] <= want[1] + 1e-9
             and g.bounds[2] >= want[2] - 1e-9 and g.bounds[3] >= want[3] - 1e-9]
    assert holds
    # and not much larger: a loose bound for this symbol (plain geometry of a box turned by
    # 30 degrees, whose axis-aligned box grows by at most (cos 30 + sin 30)**2 = 1.87)
    w, h = want[2] - want[0], want[3] - want[1]
    assert min((b[2] - b[0]) * (b[3] - b[1]) for b in holds) <= 2.0 * w * h + 1e-9


@pytest.mark.parametrize("cells", [(2, 3)])
def test_a_grid_of_references_is_measured_whole(cells):
    doc, _, _ = _sheet()
    msp = doc.modelspace()
    grid = msp.add_blockref("GRID-BUBBLE", (20.0, 0.0))
    grid.dxf.row_count, grid.dxf.column_count = cells
    grid.dxf.row_spacing = grid.dxf.column_spacing = 2.0
    want = _ezdxf_box(grid)
    obst = drawing_obstacles(doc, lambda layer: False)
    got = np.array([g.bounds for g in obst.geoms])
    assert np.any(np.all(np.isclose(got, want, atol=1e-9), axis=1))


def test_references_of_one_block_at_other_scales_mirrors_and_points_each_get_their_own_box():
    # the placed box of a block is worked out once per scale and rotation and moved to
    # each insertion point: references that differ in any of these must not share it
    doc = ezdxf.new("R2018")
    blk = doc.blocks.new("MARK", base_point=(0.5, 0.25))
    blk.add_line((0, 0), (2, 0))
    blk.add_line((0, 0), (0, 1))
    msp = doc.modelspace()
    refs = [msp.add_blockref("MARK", (x, y), dxfattribs={"xscale": sx, "yscale": sy})
            for x, y, sx, sy in [(0, 0, 1, 1), (10, 5, 1, 1), (0, 10, -1, 1), (10, 10, 2, -0.5), (20, 0, 1, 1)]]
    refs[-1].dxf.rotation = 90.0                         # a quarter turn: its box is exact
    obst = drawing_obstacles(doc, lambda layer: False)
    got = np.array([g.bounds for g in obst.geoms])
    for e in refs:
        want = _ezdxf_box(e)
        assert np.any(np.all(np.isclose(got, want, atol=1e-9), axis=1)), (e.dxf.insert, want)
