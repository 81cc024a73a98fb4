"""The occupancy grid answers "does this box touch any obstacle?" exactly as
shapely's own ``intersects`` predicate does (an independent library: GEOS
through an STRtree query), for boxes, axis-parallel and slanted lines,
points and other polygons, including boxes that just touch an obstacle's
edge or end."""
from __future__ import annotations

import numpy as np
import pytest
import shapely
from hypothesis import given, settings, strategies as st

from dxf2frame.draw.occupancy import Occupancy


def _shapely_free(geoms, x0, y0, x1, y1):
    """The reference answer: boxes with no intersecting obstacle, by GEOS."""
    tree = shapely.STRtree(geoms)
    ok = np.ones(len(x0), dtype=bool)
    ok[tree.query(shapely.box(x0, y0, x1, y1), predicate="intersects")[0]] = False
    return ok


def _obstacles(rng, n):
    geoms = []
    for _ in range(n):
        kind = int(rng.integers(0, 6))
        x, y = rng.uniform(0, 20, 2).round(int(rng.integers(0, 3)))
        if kind == 0:
            geoms.append(shapely.box(x, y, x + rng.uniform(0, 3), y + rng.uniform(0, 2)))
        elif kind == 1:
            geoms.append(shapely.LineString([(x, y), (x + rng.uniform(-5, 5), y)]))
        elif kind == 2:
            geoms.append(shapely.LineString([(x, y), (x, y + rng.uniform(-5, 5))]))
        elif kind == 3:
            geoms.append(shapely.LineString(np.c_[x + rng.uniform(-5, 5, 4), y + rng.uniform(-5, 5, 4)]))
        elif kind == 4:
            geoms.append(shapely.Point(x, y))
        else:
            geoms.append(shapely.Polygon([(x, y), (x + 2, y + 1), (x, y + 3)]))
    return geoms


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("cell", [0.05, 0.3, 1.0, 6.0])
def test_same_answer_as_shapely_intersects(seed, cell):
    rng = np.random.default_rng(seed)
    geoms = _obstacles(rng, int(rng.integers(1, 80)))
    m = 3000
    x0, y0 = rng.uniform(-3, 23, m), rng.uniform(-3, 23, m)
    # a quarter of the boxes start exactly on an obstacle's x, a quarter end exactly on its y
    xy = shapely.get_coordinates(geoms)
    pick = rng.integers(0, len(xy), m // 2)
    x0[: m // 4] = xy[pick[: m // 4], 0]
    h = rng.choice([0.5, 1.0, 1.4], m)
    y0[m // 4: m // 2] = xy[pick[m // 4:], 1] - h[m // 4: m // 2]
    x1 = x0 + rng.uniform(0.0, 4.0, m)
    y1 = y0 + h
    occ = Occupancy(geoms, cell)
    few = occ.free(x0[:5], y0[:5], x1[:5], y1[:5])                 # a handful: straight to the STRtree
    got = occ.free(x0, y0, x1, y1)                                 # many: through the grids
    assert np.array_equal(got, _shapely_free(geoms, x0, y0, x1, y1))
    assert np.array_equal(few, got[:5])


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(-8, 8), st.integers(-8, 8), st.integers(0, 4), st.integers(0, 4)),
                min_size=1, max_size=12),
       st.lists(st.tuples(st.integers(-10, 10), st.integers(-10, 10), st.integers(0, 5), st.integers(0, 5)),
                min_size=20, max_size=60),
       st.sampled_from([0.25, 0.5, 1.0, 3.0]))
def test_boxes_and_lines_on_the_grid_lines_themselves(obst, boxes, cell):
    """Integer coordinates with cells of 1/4 to 3 units: obstacles and
    boxes lie on cell edges and touch at edges and corners, the cases a
    grid gets wrong first."""
    geoms = []
    for x, y, w, h in obst:
        geoms.append(shapely.box(x, y, x + w, y + h) if w and h else shapely.LineString([(x, y), (x + w, y + h)]))
    b = np.array(boxes, dtype=float)
    x0, y0, x1, y1 = b[:, 0], b[:, 1], b[:, 0] + b[:, 2], b[:, 1] + b[:, 3]
    got = Occupancy(geoms, cell).free(x0, y0, x1, y1)
    assert np.array_equal(got, _shapely_free(geoms, x0, y0, x1, y1))


def test_far_from_the_origin_and_a_wide_spread():
    """Coordinates near 1e7 (a drawing placed in survey coordinates) and
    obstacles spread over more cells than the grid may hold."""
    rng = np.random.default_rng(7)
    geoms = [shapely.affinity.translate(g, 1e7, 2e7) for g in _obstacles(rng, 60)]
    geoms.append(shapely.box(1e7 + 5e5, 2e7, 1e7 + 5e5 + 1, 2e7 + 1))           # far off: large cells
    m = 2000
    x0, y0 = 1e7 + rng.uniform(-3, 23, m), 2e7 + rng.uniform(-3, 23, m)
    x1, y1 = x0 + rng.uniform(0, 3, m), y0 + 1.4
    for cell in (0.1, 1e-4):
        got = Occupancy(geoms, cell).free(x0, y0, x1, y1)
        assert np.array_equal(got, _shapely_free(geoms, x0, y0, x1, y1))


def test_more_slanted_pieces_than_held_gives_the_same_answer(monkeypatch):
    """Slanted lines that would be cut into more half-cell pieces than the
    grid holds at once are covered by their extents only: the boxes near
    them go to the exact test, the answers stay shapely's."""
    import dxf2frame.draw.occupancy as occupancy

    monkeypatch.setattr(occupancy, "_MAX_PIECES", 50)
    rng = np.random.default_rng(11)
    geoms = _obstacles(rng, 60)
    m = 2000
    x0, y0 = rng.uniform(-3, 23, m), rng.uniform(-3, 23, m)
    x1, y1 = x0 + rng.uniform(0, 3, m), y0 + 1.0
    got = Occupancy(geoms, 0.05).free(x0, y0, x1, y1)
    assert np.array_equal(got, _shapely_free(geoms, x0, y0, x1, y1))


def test_no_obstacles_every_box_is_free():
    occ = Occupancy([None, shapely.LineString()], 1.0)
    assert Occupancy([], 1.0).free([0.0], [0.0], [1.0], [1.0]).all()
    assert occ.free([0.0, 5.0], [0.0, 5.0], [1.0, 6.0], [1.0, 6.0]).all()


@pytest.mark.parametrize("seed", range(4))
def test_free_spot_finds_the_same_place_through_either_index(seed):
    # the nearest free place for a box, inside the extents and outside them, is the same
    # whether the obstacles are indexed by shapely's STRtree or by the occupancy grid
    from dxf2frame.draw.obstacles import free_spot

    rng = np.random.default_rng(100 + seed)
    geoms = _obstacles(rng, 300)
    ext = (0.0, 0.0, 20.0, 20.0)
    for _ in range(20):
        x, y = rng.uniform(0, 18, 2)
        box = (x, y, x + rng.uniform(0.5, 3), y + rng.choice([0.5, 1.0]))
        for inside in (True, False):
            want = free_spot(box, [], ext, 0.1, tree=shapely.STRtree(geoms), inside=inside)
            got = free_spot(box, [], ext, 0.1, tree=Occupancy(geoms, 0.2), inside=inside)
            assert got == want
