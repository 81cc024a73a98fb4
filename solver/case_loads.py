"""Loads of a frame sorted by load case and checked: nodal loads and
settlements as node arrays, member loads as local-axis rows ready for a
:class:`~dxf2frame.solver.member_data.LoadSet`.

Global loads on members are turned into local components here (x along the
member, y 90 degrees counter-clockwise); a projected distributed load is
scaled by |cos| of the member angle.  Units: forces [force], couples
[force*length], intensities [force/length], positions [length] from the
member start, settlements [length] and [rad].
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import LoadError
from .member_data import LoadSet
from .model import DistributedLoad, Frame, MemberCouple, NodalLoad, PointLoad, Settlement

__all__ = ["CaseLoads", "gather_loads", "POS_TOL"]

POS_TOL = 1e-9
"""Relative tolerance on load positions (a / L)."""


@dataclass
class CaseLoads:
    nodal: np.ndarray  # (n, 3) global fx, fy, m
    points: list
    couples: list
    dists: list
    settle: np.ndarray  # (n, 3) global dx, dy, rz
    settle_set: np.ndarray  # (n, 3) bool: a settlement was given

    @classmethod
    def empty(cls, n: int) -> "CaseLoads":
        return cls(np.zeros((n, 3)), [], [], [], np.zeros((n, 3)), np.zeros((n, 3), bool))

    def loadset(self) -> LoadSet:
        p = np.array(self.points, dtype=float).reshape(-1, 4)
        c = np.array(self.couples, dtype=float).reshape(-1, 3)
        d = np.array(self.dists, dtype=float).reshape(-1, 7)
        return LoadSet.build(p[:, 1:], c[:, 1:], d[:, 1:], p[:, 0].astype(np.intp),
                             c[:, 0].astype(np.intp), d[:, 0].astype(np.intp))


def _finite(handle: str, *vals: float) -> None:
    for v in vals:
        if not (isinstance(v, (int, float, np.floating, np.integer)) and math.isfinite(v)):
            raise LoadError(f"load value {v!r} is not a finite number", handle=handle)


def _position(a: float, L: float, handle: str, mid: str) -> float:
    _finite(handle, a)
    tol = POS_TOL * L
    if a < -tol or a > L + tol:
        raise LoadError(f"position {a:g} lies outside member {mid} (length {L:g})", handle=handle, members=[mid])
    return min(max(float(a), 0.0), L)


def gather_loads(frame: Frame, cases: list[str], geo: tuple) -> dict[str, CaseLoads]:
    L, c, s, index = geo
    n = len(frame.nodes)
    out = {name: CaseLoads.empty(n) for name in cases}
    for ld in frame.loads:
        cl = out.get(ld.case)
        if cl is None:
            continue
        h = getattr(ld, "handle", "")
        if isinstance(ld, (NodalLoad, Settlement)):
            if not (0 <= ld.node < n):
                raise LoadError(f"load on node {ld.node}, which does not exist", handle=h)
            if isinstance(ld, NodalLoad):
                _finite(h, ld.fx, ld.fy, ld.m)
                cl.nodal[ld.node] += (ld.fx, ld.fy, ld.m)
            else:
                _finite(h, ld.dx, ld.dy, ld.rz)
                cl.settle[ld.node] += (ld.dx, ld.dy, ld.rz)
                cl.settle_set[ld.node] |= np.array([ld.dx != 0, ld.dy != 0, ld.rz != 0])
            continue
        j = index.get(ld.member)
        if j is None:
            raise LoadError(f"load on member {ld.member!r}, which does not exist", handle=h)
        Lj, cj, sj = L[j], c[j], s[j]
        if isinstance(ld, PointLoad):
            a = _position(ld.a, Lj, h, ld.member)
            _finite(h, ld.px, ld.py)
            px, py = (ld.px, ld.py) if ld.axes == "local" else (cj * ld.px + sj * ld.py, -sj * ld.px + cj * ld.py)
            cl.points.append((j, a, px, py))
        elif isinstance(ld, MemberCouple):
            a = _position(ld.a, Lj, h, ld.member)
            _finite(h, ld.m)
            cl.couples.append((j, a, ld.m))
        elif isinstance(ld, DistributedLoad):
            q1 = tuple(ld.q1)
            q2 = q1 if ld.q2 is None else tuple(ld.q2)
            _finite(h, *q1, *q2)
            a = _position(ld.a, Lj, h, ld.member)
            b = _position(Lj if ld.b is None else ld.b, Lj, h, ld.member)
            if b < a:
                a, b, q1, q2 = b, a, q2, q1
            if b - a <= POS_TOL * Lj:
                raise LoadError(f"distributed load on member {ld.member} covers no length (a={a:g}, b={b:g})",
                                handle=h, members=[ld.member])
            f = abs(cj) if ld.projected else 1.0
            if ld.axes == "local":
                l1, l2 = q1, q2
            else:
                l1 = (cj * q1[0] + sj * q1[1], -sj * q1[0] + cj * q1[1])
                l2 = (cj * q2[0] + sj * q2[1], -sj * q2[0] + cj * q2[1])
            cl.dists.append((j, a, b, f * l1[0], f * l1[1], f * l2[0], f * l2[1]))
        else:
            raise LoadError(f"unknown load type {type(ld).__name__}", handle=h)
    return out
