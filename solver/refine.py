"""Members cut into equal pieces, for analyses that need more than one
element per member (elastic buckling, second order).  Every member gets
the same number of pieces, or each its own.

The cubic element is exact for a linear analysis, so :func:`solve` never
subdivides; a geometric stiffness built on the same cubics is not (one
element overestimates the Euler load of a pinned column by about 22 %),
so the second-order analyses run on a refined copy of the frame and map
the results back to the drawn members: the refinement is invisible in
their results.

Node ``i`` of the frame stays node ``i`` of the copy; the interior nodes
follow.  Piece ``k`` of member ``j`` is member ``offsets[j] + k`` of the
copy (``j * n + k`` when every member has ``n`` pieces), with the
member's section and direction; its first piece keeps the start
release, its last piece the end release.  Member loads are carried to the
pieces they act on (a distributed load split with its intensity
interpolated); nodal loads, settlements and supports are unchanged.
Units are the frame's.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .errors import LoadError
from .model import DistributedLoad, Frame, MemberCouple, NodalLoad, PointLoad, Settlement

__all__ = ["RefinedFrame", "subdivide"]


@dataclass(frozen=True, eq=False)
class RefinedFrame:
    """A frame with its members cut into equal elements.

    Attributes
    ----------
    frame : the refined copy
    pieces : elements per member, the largest count when they differ
    n_nodes : node count of the original frame (its nodes come first)
    counts : (m,) elements of each original member
    offsets : (m + 1,) index in the copy of each member's first element
        (the last entry is the copy's member count)
    nodes : (sum of counts + m,) node ids of the copy along the members,
        start to end; member ``j``'s are ``nodes[offsets[j] + j :
        offsets[j + 1] + j + 1]``
    """

    frame: Frame
    pieces: int
    n_nodes: int
    counts: np.ndarray
    offsets: np.ndarray
    nodes: np.ndarray

    @property
    def uniform(self) -> bool:
        """Every member has the same number of pieces."""
        return bool(np.all(self.counts == self.pieces))

    @property
    def chain(self) -> np.ndarray:
        """(m, pieces + 1) node ids along each member, start to end (every
        member cut into the same number of pieces only)."""
        if not self.uniform:
            raise ValueError("the members have different numbers of pieces")
        return self.nodes.reshape(len(self.counts), self.pieces + 1)

    def first_piece(self, j: np.ndarray | int):
        """Index in the copy of the first element of original member ``j``."""
        return self.offsets[np.asarray(j)]

    def last_piece(self, j: np.ndarray | int):
        """Index in the copy of the last element of original member ``j``."""
        return self.offsets[np.asarray(j) + 1] - 1


def _split_member_load(ld, L: float, n: int, ids: list[str]) -> list:
    """The load ``ld`` on a member of length ``L`` as loads on its ``n``
    pieces (ids ``ids``), positions measured from each piece's start."""
    h = L / n
    if isinstance(ld, (PointLoad, MemberCouple)):
        a = min(max(float(ld.a), 0.0), L)
        k = min(int(a // h), n - 1)
        kw = dict(ld.__dict__, member=ids[k], a=a - k * h)
        return [type(ld)(**kw)]
    q1 = tuple(ld.q1)
    q2 = q1 if ld.q2 is None else tuple(ld.q2)
    a = min(max(float(ld.a), 0.0), L)
    b = L if ld.b is None else min(max(float(ld.b), 0.0), L)
    if b < a:
        a, b, q1, q2 = b, a, q2, q1
    out = []
    for k in range(n):
        lo, hi = max(a, k * h), min(b, (k + 1) * h)
        if hi - lo <= 1e-9 * L:
            continue

        def q(x):
            r = (x - a) / (b - a)
            return (q1[0] + (q2[0] - q1[0]) * r, q1[1] + (q2[1] - q1[1]) * r)

        out.append(DistributedLoad(ids[k], q(lo), q(hi), lo - k * h, hi - k * h, ld.axes, ld.projected,
                                   ld.case, ld.handle))
    return out


def subdivide(frame: Frame, pieces: int | Sequence[int]) -> RefinedFrame:
    """The frame with every member cut into ``pieces`` equal elements, or
    member ``j`` into ``pieces[j]`` (see the module docstring).  Loads are
    expected to be valid (run :func:`solver.stiffness.load_vectors` on the
    original first for the checks and their messages)."""
    m = len(frame.members)
    counts = np.broadcast_to(np.asarray(pieces, dtype=np.intp), (m,)).copy() if m else np.zeros(0, np.intp)
    if np.ndim(pieces) == 0 and int(pieces) < 1 or m and counts.min() < 1:
        raise ValueError("pieces must be at least 1")
    out = Frame()
    for nd in frame.nodes:
        out.add_node(nd.x, nd.y, nd.sources)
    chains: list[list[int]] = []
    piece_ids: dict[str, list[str]] = {}
    lengths: dict[str, float] = {}
    for j, mb in enumerate(frame.members):
        n = int(counts[j])
        a, b = frame.nodes[mb.start], frame.nodes[mb.end]
        nodes = [mb.start]
        for k in range(1, n):
            t = k / n
            nodes.append(out.add_node(a.x + t * (b.x - a.x), a.y + t * (b.y - a.y)))
        nodes.append(mb.end)
        chains.append(nodes)
        ids = [f"{mb.id}#{k}" if n > 1 else mb.id for k in range(n)]
        for k in range(n):
            out.add_member(nodes[k], nodes[k + 1], mb.section, release_start=mb.release_start and k == 0,
                           release_end=mb.release_end and k == n - 1, id=ids[k], layer=mb.layer,
                           handle=mb.handle, group=mb.group)
        piece_ids[mb.id] = ids
        lengths[mb.id] = float(np.hypot(b.x - a.x, b.y - a.y))
    out.supports = list(frame.supports)
    for ld in frame.loads:
        if isinstance(ld, (NodalLoad, Settlement)):
            out.loads.append(ld)
            continue
        ids = piece_ids.get(ld.member)
        if ids is None:
            raise LoadError(f"load on member {ld.member!r}, which does not exist", handle=ld.handle)
        if len(ids) == 1:
            out.loads.append(ld)
        else:
            out.loads.extend(_split_member_load(ld, lengths[ld.member], len(ids), ids))
    offsets = np.concatenate(([0], np.cumsum(counts))).astype(np.intp)
    flat = np.array([i for c in chains for i in c], dtype=np.intp)
    return RefinedFrame(out, int(counts.max()) if m else 1, len(frame.nodes), counts, offsets, flat)
