"""Which of many axis-aligned boxes touch none of a fixed set of obstacles:
the same answer as an STRtree ``intersects`` query, without listing every
touching pair.

A label search on a dense frame tries thousands of candidate boxes, each
touching dozens of member lines and load symbols; the STRtree lists every
one of those pairs (tens of millions on a 5,000-member frame) when one
would do.  :class:`Occupancy` rasters the obstacles once into two grids of
small square cells (positions in drawing units):

* *surely touched*: cells the obstacle certainly meets (boxes and
  axis-parallel lines by their extents, other lines by points on them,
  each with a safety margin against rounding);
* *maybe touched*: cells the obstacle may meet (extents grown by the same
  margin; a slanted line cut into pieces no longer than a cell, each
  piece's extents).

Summed-area tables of both answer each box in constant time: a box that
holds a surely-touched cell wholly inside it is blocked; a box whose cells
are all untouched (maybe) is free; only the few boxes in between (an
obstacle in the thin band of cells along the box's edge) are tested
exactly, by the STRtree.  Box and obstacle both count as closed sets, as
shapely's ``intersects`` does, so the answer equals the STRtree's
(the grids only decide where the answer is certain).  The grids are made
at the first call with more than a handful of boxes: a few boxes placed
against a big drawing go straight to the STRtree.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np
import shapely

__all__ = ["Occupancy", "present"]

_MAX_CELLS = 1_000_000     # cells of one grid (4 MB a table); a wider spread gets larger cells (more exact tests)
_FEW = 16                  # boxes tested straight by the STRtree, before the grids are made
_MARGIN = 1e-7             # safety margin against rounding [cells], plus a relative part of the coordinates
_MAX_PIECES = 500_000      # half-cell pieces of slanted segments; beyond, their extents only (memory)


def present(geoms: Sequence) -> np.ndarray:
    """The geometries of ``geoms`` that are neither None nor empty, as an
    object array (tested all at once, not one property call each)."""
    arr = np.empty(len(geoms), dtype=object)
    arr[:] = list(geoms)
    if not len(arr):
        return arr
    return arr[~shapely.is_missing(arr) & ~shapely.is_empty(arr)]


class Occupancy:
    """Exact ``touches any obstacle`` tests for many boxes at once.

    Parameters
    ----------
    obstacles : shapely geometries (empty and None ones are skipped)
    cell : grid cell size [drawing units]; about a fifth of the smallest
        box to be tested keeps the exact tests few.  Raised when the
        obstacles spread over more than ``_MAX_CELLS`` cells.
    """

    def __init__(self, obstacles: Sequence, cell: float) -> None:
        geoms = present(obstacles)
        self.tree = shapely.STRtree(geoms) if len(geoms) else None
        self._geoms = geoms
        self._want_cell = float(cell) if cell > 0 else 1.0
        self._sure = self._maybe = None
        self._built = not len(geoms)           # the grids are made at the first call with many boxes

    def _build(self) -> None:
        """Make the two grids (see the module docstring)."""
        self._built = True
        geoms = self._geoms
        b = shapely.bounds(geoms)
        if not np.all(np.isfinite(b)):
            return                                         # no grid: every box is tested exactly
        lo = np.array([b[:, 0].min(), b[:, 1].min()])            # by columns: a tall array reduces slowly along axis 0
        hi = np.array([b[:, 2].max(), b[:, 3].max()])
        cell = self._want_cell
        span = np.maximum(hi - lo, cell)
        if np.prod(span / cell + 1) > _MAX_CELLS:
            cell = float(np.sqrt(np.prod(span) / _MAX_CELLS)) * 1.01
        self._origin = lo
        self._cell = cell
        self._shape = np.floor((hi - lo) / cell).astype(int) + 1
        self._nx, self._ny = (int(v) for v in self._shape)
        # rounding of (x - origin) / cell, in cells, with room to spare
        self._eps = _MARGIN + 1e-12 * float(np.max(np.abs(np.r_[lo, hi]))) / cell
        sure_boxes, maybe_boxes, sure_points = self._parts(geoms, b)
        self._sure = self._table(self._sure_ranges(sure_boxes), self._point_cells(sure_points))
        self._maybe = self._table(self._maybe_ranges(maybe_boxes), None)

    # -- building ------------------------------------------------------------

    def _parts(self, geoms: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(boxes the obstacles surely fill, boxes that cover them, points
        surely on them), each as (k, 4) or (k, 2) arrays."""
        kind = shapely.get_type_id(geoms)
        flat = (b[:, 0] == b[:, 2]) | (b[:, 1] == b[:, 3])                  # a point or an axis-parallel line
        rect = flat & np.isin(kind, (0, 1, 2))
        poly = np.flatnonzero(kind == 3)
        if len(poly):                                                       # a polygon that is its own box
            n = shapely.get_num_coordinates(geoms[poly])
            ok = (n == 5) & (shapely.get_num_interior_rings(geoms[poly]) == 0)
            cand = poly[ok]
            if len(cand):
                xy, which = shapely.get_coordinates(geoms[cand], return_index=True)
                bb = b[cand][which]
                on = (((xy[:, 0] == bb[:, 0]) | (xy[:, 0] == bb[:, 2]))
                      & ((xy[:, 1] == bb[:, 1]) | (xy[:, 1] == bb[:, 3])))
                good = np.ones(len(cand), dtype=bool)
                good[which[~on]] = False
                rect[cand[good]] = True
        sure = [b[rect]]
        maybe = [b[rect]]
        points = [np.zeros((0, 2))]
        rest = np.flatnonzero(~rect)
        lines = rest[np.isin(kind[rest], (1, 2))]
        other = rest[~np.isin(kind[rest], (1, 2))]
        maybe.append(b[other])                                              # polygons, collections: their extents
        if len(lines):
            xy, which = shapely.get_coordinates(geoms[lines], return_index=True)
            same = which[1:] == which[:-1]
            a, z = xy[:-1][same], xy[1:][same]                              # every segment
            lo, hi = np.minimum(a, z), np.maximum(a, z)
            axis = (lo[:, 0] == hi[:, 0]) | (lo[:, 1] == hi[:, 1])
            segs = np.column_stack([lo, hi])
            sure.append(segs[axis])
            maybe.append(segs[axis])
            a, z = a[~axis], z[~axis]
            n = np.maximum(np.ceil(np.hypot(*(z - a).T) / (0.5 * self._cell)).astype(int), 1)
            if len(a) and n.sum() > _MAX_PIECES:
                # too many pieces to hold at once (a 20,000-member frame's diagram outlines
                # in a fine grid: some 200 MB): the segments' extents only, so the boxes near
                # them are left to the exact test
                maybe.append(np.column_stack([np.minimum(a, z), np.maximum(a, z)]))
            elif len(a):
                # slanted segments: pieces of at most half a cell; their ends lie on the
                # segment (surely touched cells), their extents cover it (maybe touched)
                seg = np.repeat(np.arange(len(a)), n + 1)
                t = (np.arange(int(n.sum() + len(n))) - np.repeat(np.cumsum(n + 1) - (n + 1), n + 1)) / n[seg]
                p = a[seg] + (z - a)[seg] * t[:, None]
                points.append(p)
                inner = np.ones(len(p), dtype=bool)
                inner[np.cumsum(n + 1) - 1] = False                        # a piece from each point to the next
                p0, p1 = p[:-1][inner[:-1]], p[1:][inner[:-1]]
                maybe.append(np.column_stack([np.minimum(p0, p1), np.maximum(p0, p1)]))
        return np.vstack(sure), np.vstack(maybe), np.vstack(points)

    def _index(self, v: np.ndarray, axis: int) -> np.ndarray:
        """Position of ``v`` in cells along ``axis`` (not rounded)."""
        return (v - self._origin[axis]) / self._cell

    def _sure_ranges(self, boxes: np.ndarray) -> np.ndarray:
        """Cell ranges (i0, j0, i1, j1), inclusive, that each box surely meets:
        cells reaching past the box's low edge and starting before its high
        edge, by more than the margin."""
        e = self._eps
        i0 = np.floor(self._index(boxes[:, 0], 0) + e)
        i1 = np.ceil(self._index(boxes[:, 2], 0) - e) - 1
        j0 = np.floor(self._index(boxes[:, 1], 1) + e)
        j1 = np.ceil(self._index(boxes[:, 3], 1) - e) - 1
        return np.column_stack([i0, j0, i1, j1])

    def _maybe_ranges(self, boxes: np.ndarray) -> np.ndarray:
        """Cell ranges that each box may meet (grown by the margin)."""
        e = self._eps
        return np.column_stack([np.floor(self._index(boxes[:, 0], 0) - e), np.floor(self._index(boxes[:, 1], 1) - e),
                                np.floor(self._index(boxes[:, 2], 0) + e), np.floor(self._index(boxes[:, 3], 1) + e)])

    def _point_cells(self, p: np.ndarray) -> np.ndarray:
        """Cells that hold each point with the margin to spare (others left out)."""
        u, v = self._index(p[:, 0], 0), self._index(p[:, 1], 1)
        fu, fv = np.floor(u), np.floor(v)
        e = self._eps
        ok = (u - fu > e) & (fu + 1 - u > e) & (v - fv > e) & (fv + 1 - v > e)
        return np.column_stack([fu[ok], fv[ok], fu[ok], fv[ok]])

    def _table(self, ranges: np.ndarray, more: np.ndarray | None) -> np.ndarray:
        """Summed-area table (nx + 1, ny + 1) of the number of ranges over each cell."""
        if more is not None and len(more):
            ranges = np.vstack([ranges, more])
        nx, ny = (int(s) for s in self._shape)
        r = ranges[(ranges[:, 2] >= ranges[:, 0]) & (ranges[:, 3] >= ranges[:, 1])]
        i0 = np.clip(r[:, 0], 0, nx).astype(int)
        j0 = np.clip(r[:, 1], 0, ny).astype(int)
        i1 = np.clip(r[:, 2] + 1, 0, nx).astype(int)
        j1 = np.clip(r[:, 3] + 1, 0, ny).astype(int)
        # difference array of the ranges: +1 at two corners, -1 at the other two, in one count
        corners = np.concatenate([i0 * (ny + 1) + j0, i1 * (ny + 1) + j1, i1 * (ny + 1) + j0, i0 * (ny + 1) + j1])
        signs = np.repeat([1.0, -1.0], 2 * len(i0))
        d = np.bincount(corners, weights=signs, minlength=(nx + 1) * (ny + 1)).astype(np.int32).reshape(nx + 1, ny + 1)
        np.cumsum(d, axis=0, out=d)
        np.cumsum(d, axis=1, out=d)
        count = (d[:nx, :ny] > 0).astype(np.int32)               # cells touched
        sat = np.zeros((nx + 1, ny + 1), dtype=np.int32)
        np.cumsum(count, axis=0, out=count)
        np.cumsum(count, axis=1, out=sat[1:, 1:])
        return sat

    # -- testing ---------------------------------------------------------------

    def _sum(self, sat: np.ndarray, i0, j0, i1, j1) -> np.ndarray:
        """Touched cells in the inclusive ranges (clipped to the grid; empty ranges count 0)."""
        nx, ny = self._nx, self._ny
        a0 = np.minimum(np.maximum(i0, 0), nx).astype(np.intp)
        b0 = np.minimum(np.maximum(j0, 0), ny).astype(np.intp)
        a1 = np.maximum(np.minimum(i1 + 1, nx).astype(np.intp), a0)
        b1 = np.maximum(np.minimum(j1 + 1, ny).astype(np.intp), b0)
        return sat[a1, b1] - sat[a0, b1] - sat[a1, b0] + sat[a0, b0]

    def free(self, x0: np.ndarray, y0: np.ndarray, x1: np.ndarray, y1: np.ndarray) -> np.ndarray:
        """Mask of the boxes [x0, x1] x [y0, y1] (arrays of one length) that
        touch no obstacle (closed sets, as shapely's ``intersects``)."""
        x0, y0, x1, y1 = (np.ravel(q).astype(float, copy=False) for q in np.broadcast_arrays(x0, y0, x1, y1))
        ok = np.ones(len(x0), dtype=bool)
        if self.tree is None or not len(x0):
            return ok
        if not self._built and len(x0) > _FEW:
            self._build()
        if self._sure is None:
            undecided = np.arange(len(x0))
        else:
            e = self._eps
            u0, u1 = self._index(x0, 0), self._index(x1, 0)
            v0, v1 = self._index(y0, 1), self._index(y1, 1)
            # cells wholly inside the box (with the margin) and cells the box may meet
            blocked = self._sum(self._sure, np.ceil(u0 + e), np.ceil(v0 + e),
                                np.floor(u1 - e) - 1, np.floor(v1 - e) - 1) > 0
            clear = self._sum(self._maybe, np.floor(u0 - e), np.floor(v0 - e),
                              np.floor(u1 + e), np.floor(v1 + e)) == 0
            ok[blocked] = False
            undecided = np.flatnonzero(~blocked & ~clear)
        if len(undecided):
            boxes = shapely.box(x0[undecided], y0[undecided], x1[undecided], y1[undecided])
            ok[undecided[self.tree.query(boxes, predicate="intersects")[0]]] = False
        return ok
