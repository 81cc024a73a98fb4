"""Member data shared by the results of a frame, as arrays over many members.

:class:`LoadSet` holds the member-load primitives (concentrated forces,
couples, linearly varying distributed loads) in local member axes, each row
tagged with its member's index; :class:`MemberLayout` holds the members'
ids, lengths, directions and stiffness in frame order.

Local axes: x along the member from its start, y turned 90 degrees
counter-clockwise from x; couples counter-clockwise.  Units: whatever the
frame uses (N, m, N*m, N/m in the DXF pipeline).
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

__all__ = ["LoadSet", "MemberLayout"]


# --------------------------------------------------------------------------
# loads in member axes


def _arr(a, cols: int) -> np.ndarray:
    out = np.asarray(a, dtype=float)
    if out.size == 0:
        return np.zeros((0, cols))
    return out.reshape(-1, cols)


def _idx(a, n: int) -> np.ndarray:
    out = np.asarray(a, dtype=np.intp).ravel()
    if out.size != n:
        raise ValueError("member index array does not match the load array")
    return out


@dataclass(frozen=True, eq=False)
class LoadSet:
    """Member-load primitives of one or many members, in local member axes.

    Components are along the member's local x (axial) and y (transverse,
    90 degrees counter-clockwise from x); distributed intensities are per
    unit *member* length.  Positions ``a``, ``b`` are distances from the
    member start.

    Attributes
    ----------
    points : (k, 3) rows ``a, px, py`` -- concentrated forces [force]
    couples : (k, 2) rows ``a, m`` -- concentrated couples, CCW [force*length]
    distributed : (k, 6) rows ``a, b, qx1, qy1, qx2, qy2`` -- intensity
        (qx1, qy1) at ``a`` varying linearly to (qx2, qy2) at ``b`` [force/length]
    point_member, couple_member, dist_member : (k,) member index of each row
        (all zero for the loads of a single member)
    """

    points: np.ndarray
    couples: np.ndarray
    distributed: np.ndarray
    point_member: np.ndarray
    couple_member: np.ndarray
    dist_member: np.ndarray

    @classmethod
    def build(cls, points=(), couples=(), distributed=(), point_member=None, couple_member=None,
              dist_member=None) -> "LoadSet":
        """Build from array-likes; missing member indices default to 0."""
        p, c, d = _arr(points, 3), _arr(couples, 2), _arr(distributed, 6)
        pm = np.zeros(len(p), np.intp) if point_member is None else _idx(point_member, len(p))
        cm = np.zeros(len(c), np.intp) if couple_member is None else _idx(couple_member, len(c))
        dm = np.zeros(len(d), np.intp) if dist_member is None else _idx(dist_member, len(d))
        return cls(p, c, d, pm, cm, dm)

    @classmethod
    def empty(cls) -> "LoadSet":
        return cls.build()

    def __len__(self) -> int:
        return len(self.points) + len(self.couples) + len(self.distributed)

    def scaled(self, f: float) -> "LoadSet":
        """Every force multiplied by ``f`` (positions unchanged)."""
        p = self.points.copy()
        p[:, 1:] *= f
        c = self.couples.copy()
        c[:, 1] *= f
        d = self.distributed.copy()
        d[:, 2:] *= f
        return LoadSet(p, c, d, self.point_member, self.couple_member, self.dist_member)

    def __add__(self, other: "LoadSet") -> "LoadSet":
        """Both sets of loads together (superposition)."""
        if not isinstance(other, LoadSet):
            return NotImplemented
        return LoadSet(
            np.concatenate([self.points, other.points]),
            np.concatenate([self.couples, other.couples]),
            np.concatenate([self.distributed, other.distributed]),
            np.concatenate([self.point_member, other.point_member]),
            np.concatenate([self.couple_member, other.couple_member]),
            np.concatenate([self.dist_member, other.dist_member]),
        )

    @cached_property
    def _groups(self) -> tuple:
        out = []
        for rows, mem in ((self.points, self.point_member), (self.couples, self.couple_member),
                          (self.distributed, self.dist_member)):
            order = np.argsort(mem, kind="stable")
            out.append((rows[order], mem[order]))
        return tuple(out)

    def of_member(self, j: int) -> "LoadSet":
        """The loads of member ``j``, re-indexed as member 0."""
        parts = []
        for rows, mem in self._groups:
            lo, hi = np.searchsorted(mem, [j, j + 1])
            parts.append(rows[lo:hi])
        return LoadSet.build(*parts)


# --------------------------------------------------------------------------
# geometry and stiffness of many members


@dataclass(frozen=True, eq=False)
class MemberLayout:
    """Geometry and stiffness of the members of one frame (shared by every
    result of that frame).

    Attributes
    ----------
    ids : member ids in frame order
    length, cos, sin : (m,) length and direction of local x
    EA, EI : (m,) axial [force] and bending [force*length**2] stiffness, or
        None when the frame was solved without sections (no deflections)
    """

    ids: tuple[str, ...]
    length: np.ndarray
    cos: np.ndarray
    sin: np.ndarray
    EA: np.ndarray | None = None
    EI: np.ndarray | None = None

    @cached_property
    def index(self) -> dict[str, int]:
        return {mid: i for i, mid in enumerate(self.ids)}

    def __len__(self) -> int:
        return len(self.ids)
