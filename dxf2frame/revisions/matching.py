"""Matching the members of two revisions by geometry, never by id.

:func:`match_members` pairs members with the same end points, then
parallel members that overlap (split or merged members, through a shapely
``STRtree``), then parallel members on the same layer that moved a little;
the rest are new or removed.  The rules are set out in
:mod:`dxf2frame.revisions`; the limits are :data:`PARALLEL_DEG`,
:data:`MOVE_FRACTION` and :data:`MIN_OVERLAP_FRACTION`.
"""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from .data import MemberRef

__all__ = ["PARALLEL_DEG", "MOVE_FRACTION", "MIN_OVERLAP_FRACTION", "match_members"]

#: members whose directions differ by less than this [degrees] are parallel
PARALLEL_DEG = 2.0
#: a "moved" member's midpoint moved less than this fraction of its length
MOVE_FRACTION = 0.25
#: smallest overlap, as a fraction of the shorter member, to count as "overlap"
MIN_OVERLAP_FRACTION = 0.1


# -- matching --------------------------------------------------------------------------


def _lines(refs: Sequence[MemberRef]):
    import shapely

    return np.array([shapely.LineString([r.start, r.end]) for r in refs], dtype=object)


def _directions(refs: Sequence[MemberRef]) -> np.ndarray:
    d = np.array([[r.end[0] - r.start[0], r.end[1] - r.start[1]] for r in refs], dtype=float).reshape(-1, 2)
    n = np.hypot(d[:, 0], d[:, 1])
    n[n == 0] = 1.0
    return d / n[:, None]


def match_members(
    old: Sequence[MemberRef], new: Sequence[MemberRef], tolerance: float
) -> tuple[list[tuple[int, int, str]], list[int], list[int]]:
    """Match members of two revisions by geometry.

    Returns ``(pairs, new_only, removed)``: ``pairs`` are
    ``(old index, new index, how)`` sorted by new then old index, ``how`` in
    ``"same ends"``, ``"overlap"``, ``"moved"``; ``new_only`` and ``removed``
    are indices of unmatched new and old members.  Deterministic: ties go to
    the lower index.
    """
    from shapely import STRtree

    n_old, n_new = len(old), len(new)
    if n_old == 0 or n_new == 0:
        return [], list(range(n_new)), list(range(n_old))
    st = _Matching(old, new, tolerance)
    cand = STRtree(st.lo).query(st.ln, predicate="dwithin", distance=tolerance)  # [new idx], [old idx]
    ci_new, ci_old = cand[0].astype(int), cand[1].astype(int)
    order = np.lexsort((ci_old, ci_new))
    ci_new, ci_old = ci_new[order], ci_old[order]
    _match_same_ends(st, ci_old, ci_new)
    _match_overlaps(st, ci_old, ci_new)
    _match_moved(st)
    st.pairs.sort(key=lambda p: (p[1], p[0]))
    return (st.pairs, [int(j) for j in np.flatnonzero(~st.new_used)],
            [int(i) for i in np.flatnonzero(~st.old_used)])


class _Matching:
    """The state of one matching: both revisions' lines, directions and
    lengths, what is matched so far and the pairs found."""

    def __init__(self, old: Sequence[MemberRef], new: Sequence[MemberRef], tolerance: float) -> None:
        self.old, self.new, self.tolerance = old, new, tolerance
        self.lo, self.ln = _lines(old), _lines(new)
        self.do, self.dn = _directions(old), _directions(new)
        self.len_o = np.array([r.length for r in old])
        self.len_n = np.array([r.length for r in new])
        self.pairs: list[tuple[int, int, str]] = []
        self.old_used = np.zeros(len(old), bool)
        self.new_used = np.zeros(len(new), bool)

    def take(self, i: int, j: int, how: str) -> None:
        self.old_used[i] = self.new_used[j] = True
        self.pairs.append((i, j, how))


def _match_same_ends(st: _Matching, ci_old: np.ndarray, ci_new: np.ndarray) -> None:
    """Pass 1: the same end points, either orientation (closest first)."""
    so = np.array([r.start for r in st.old]); eo = np.array([r.end for r in st.old])
    sn = np.array([r.start for r in st.new]); en = np.array([r.end for r in st.new])
    if not len(ci_new):
        return
    d_same = np.maximum(np.hypot(*(so[ci_old] - sn[ci_new]).T), np.hypot(*(eo[ci_old] - en[ci_new]).T))
    d_swap = np.maximum(np.hypot(*(so[ci_old] - en[ci_new]).T), np.hypot(*(eo[ci_old] - sn[ci_new]).T))
    d = np.minimum(d_same, d_swap)
    ok = np.flatnonzero(d <= st.tolerance)
    for k in sorted(ok, key=lambda k: (d[k], ci_new[k], ci_old[k])):
        i, j = ci_old[k], ci_new[k]
        if not st.old_used[i] and not st.new_used[j]:
            st.take(int(i), int(j), "same ends")


def _match_overlaps(st: _Matching, ci_old: np.ndarray, ci_new: np.ndarray) -> None:
    """Pass 2: overlap of parallel members (split or merged): each new member
    takes the old one it overlaps most, then each old member left takes the
    new one it overlaps most (a match may be many-to-one)."""
    import shapely

    sin_par = math.sin(math.radians(PARALLEL_DEG))
    do, dn = st.do, st.dn
    free = ~st.old_used[ci_old] & ~st.new_used[ci_new]
    par = np.abs(do[ci_old, 0] * dn[ci_new, 1] - do[ci_old, 1] * dn[ci_new, 0]) <= sin_par
    sel = np.flatnonzero(free & par)
    if not len(sel):
        return
    bufs = shapely.buffer(st.lo[ci_old[sel]], st.tolerance, cap_style="flat")
    ov = shapely.length(shapely.intersection(st.ln[ci_new[sel]], bufs))
    shorter = np.minimum(st.len_o[ci_old[sel]], st.len_n[ci_new[sel]])
    keep = ov > np.maximum(st.tolerance, MIN_OVERLAP_FRACTION * shorter)
    sel, ov = sel[keep], ov[keep]
    best_for_new: dict[int, tuple[float, int]] = {}
    best_for_old: dict[int, tuple[float, int]] = {}
    for k, o in zip(sel, ov):
        i, j = int(ci_old[k]), int(ci_new[k])
        if j not in best_for_new or o > best_for_new[j][0] + 1e-12:
            best_for_new[j] = (float(o), i)
        if i not in best_for_old or o > best_for_old[i][0] + 1e-12:
            best_for_old[i] = (float(o), j)
    got: set[tuple[int, int]] = set()
    for j in sorted(best_for_new):
        i = best_for_new[j][1]
        got.add((i, j))
    for i in sorted(best_for_old):
        if not any(p[0] == i for p in got):
            got.add((i, best_for_old[i][1]))
    for i, j in got:
        st.take(i, j, "overlap")


def _match_moved(st: _Matching) -> None:
    """Pass 3: moved: same layer, parallel, midpoint moved less than
    :data:`MOVE_FRACTION` of the length (closest first)."""
    import shapely
    from shapely import STRtree

    old, new, do, dn = st.old, st.new, st.do, st.dn
    sin_par = math.sin(math.radians(PARALLEL_DEG))
    rest_o = np.flatnonzero(~st.old_used)
    rest_n = np.flatnonzero(~st.new_used)
    if not (len(rest_o) and len(rest_n)):
        return
    mid_o = shapely.points([old[i].midpoint for i in rest_o])
    mid_n = shapely.points([new[j].midpoint for j in rest_n])
    reach = MOVE_FRACTION * max(st.len_o[rest_o].max(), st.len_n[rest_n].max())
    q = STRtree(mid_o).query(mid_n, predicate="dwithin", distance=reach)
    cands = []
    for a, b in zip(q[0], q[1]):
        j, i = int(rest_n[a]), int(rest_o[b])
        if old[i].layer.upper() != new[j].layer.upper():
            continue
        if abs(do[i, 0] * dn[j, 1] - do[i, 1] * dn[j, 0]) > sin_par:
            continue
        dist = math.dist(old[i].midpoint, new[j].midpoint)
        if dist < MOVE_FRACTION * max(st.len_o[i], st.len_n[j]):
            cands.append((dist, j, i))
    for dist, j, i in sorted(cands):
        if not st.old_used[i] and not st.new_used[j]:
            st.take(i, j, "moved")
