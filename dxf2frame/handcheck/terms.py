"""The forces on a hand-check free body, one :class:`Term` each.

A term is one reaction, nodal load, member load or member end force on the
free body: its global components ``fx``, ``fy`` [force] and couple
[force*length, counter-clockwise positive], its point of application, the
lever arms ``dx``, ``dy`` from the cut and its moment about the cut
``dx*fy - dy*fx + couple``.  Its contribution to N, V, M at the cut follows
the signs of :mod:`dxf2frame.handcheck` (N tension +, V clockwise +, M
sagging +; the start side takes ``N = -along``, ``V = +across``,
``M = -moment``, the end side the opposite).  A distributed load becomes its
resultant at its centroid over the part on the free body
(:class:`DistributedPart`; two triangular parts when the intensity turns).
Units are the frame's (N, m for a frame read from a drawing).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Callable, Literal

import numpy as np

from ..report.report import UnitFactors

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..solver import Frame

__all__ = ["Side", "DistributedPart", "Term"]

#: the units of a sheet when no others are given: the frame's own (N, m)
SI_UNITS = UnitFactors("N", "m", 1.0, 1.0)

Side = Literal["start", "end"]


# -- the terms --------------------------------------------------------------------


@dataclass(frozen=True)
class DistributedPart:
    """The part of a distributed load that lies on a free body.

    Attributes
    ----------
    member : member id the load is on
    s0, s1 : loaded stretch on the free body, distances from the member start [length]
    w0, w1 : intensity at ``s0`` and ``s1`` along ``direction`` [force/length],
        per unit ``basis_length`` (member length, or horizontal projection)
    direction : unit vector (global) the intensity acts along
    basis_length : length the intensities act over [length]
    projected : True when the intensities are per unit horizontal projection
    centroid_s : centroid of the part, distance from the member start [length]
    centroid_from_cut : distance along the member from the cut to the
        centroid, for the cut member only (None otherwise) [length]
    member_axis : unit vector (global) of the member's local x
    """

    member: str
    s0: float
    s1: float
    w0: float
    w1: float
    direction: tuple[float, float]
    basis_length: float
    projected: bool
    centroid_s: float
    centroid_from_cut: float | None
    member_axis: tuple[float, float] = (1.0, 0.0)

    @property
    def resultant(self) -> float:
        """Magnitude of the resultant [force]: mean intensity times basis length."""
        return 0.5 * (self.w0 + self.w1) * self.basis_length


@dataclass(frozen=True)
class Term:
    """One external force on a free body, and what it contributes at the cut.

    Attributes
    ----------
    label : short name used on the sheet and figure (R1, P2, C1, W1, E1)
    kind : "reaction", "nodal force", "point load", "couple", "distributed"
        or "end force"
    description : what and where, in words
    handle : DXF handle of the load or support entity ("" if unknown)
    point : point of application (x, y) in the frame's coordinates [length]
    fx, fy : global components [force]
    couple : concentrated couple [force*length], counter-clockwise positive
    dx, dy : lever arms, ``point - cut`` [length]
    along, across : components along local x' and y' of the cut member [force]
    moment : moment about the cut ``dx*fy - dy*fx + couple`` [force*length], CCW +
    n, v, m : contribution to N, V, M at the cut (N tension +, V clockwise +,
        M sagging +)
    distributed : the resultant's data for a distributed load, else None
    member, s : for a load on a member, its id and the distance of the load
        from the member start [length] ("" and None otherwise)
    """

    label: str
    kind: str
    description: str
    handle: str
    point: tuple[float, float]
    fx: float
    fy: float
    couple: float
    dx: float
    dy: float
    along: float
    across: float
    moment: float
    n: float
    v: float
    m: float
    distributed: DistributedPart | None = None
    member: str = ""
    s: float | None = None


def _term(
    label: str, kind: str, description: str, handle: str, point: tuple[float, float],
    f: tuple[float, float], couple: float, cut: tuple[float, float],
    ex: tuple[float, float], side: Side, distributed: DistributedPart | None = None,
    member: str = "", s: float | None = None,
) -> Term:
    fx, fy = float(f[0]), float(f[1])
    dx, dy = point[0] - cut[0], point[1] - cut[1]
    along = fx * ex[0] + fy * ex[1]
    across = -fx * ex[1] + fy * ex[0]
    moment = dx * fy - dy * fx + couple
    sg = -1.0 if side == "start" else 1.0
    return Term(label, kind, description, handle, (float(point[0]), float(point[1])), fx, fy, float(couple),
                dx, dy, along, across, moment, sg * along, -sg * across, sg * moment, distributed,
                member, None if s is None else float(s))


class TermBuilder:
    """Collects the terms of one candidate free body."""

    def __init__(self, side: Side, cut: tuple[float, float], ex: tuple[float, float]) -> None:
        self.side, self.cut, self.ex = side, cut, ex
        self.terms: list[Term] = []
        self.count: dict[str, int] = {}

    def add(self, prefix: str, kind: str, description: str, handle: str, point, f, couple: float,
            distributed: DistributedPart | None = None, *, member: str = "", s: float | None = None) -> None:
        k = self.count[prefix] = self.count.get(prefix, 0) + 1
        self.terms.append(_term(f"{prefix}{k}", kind, description, handle, point, f, couple, self.cut,
                                self.ex, self.side, distributed, member, s))


def case_text(case: str, factor: float) -> str:
    return f"case {case}" if factor == 1.0 else f"{factor:g} × case {case}"


def add_member_loads(
    b: TermBuilder, frame: "Frame", loads_by_member: dict[str, list[tuple[Any, float]]],
    mid: str, lo: float, hi: float, *, cut_member: bool, x_cut: float,
    own: Callable[[float], bool],
) -> None:
    """Terms for the loads on member ``mid`` between ``lo`` and ``hi`` (from its start).

    ``own(a)`` says whether a concentrated load at ``a`` belongs to this
    free body (decides loads exactly at the cut).
    """
    from ..solver import DistributedLoad, MemberCouple, PointLoad

    mem = frame.member(mid)
    L, c, s = frame.geometry(mem)
    p0 = frame.nodes[mem.start]
    ex, ey = (c, s), (-s, c)

    def at(a: float) -> tuple[float, float]:
        return (p0.x + c * a, p0.y + s * a)

    def glob(px: float, py: float, axes: str) -> tuple[float, float]:
        if axes == "local":
            return (px * ex[0] + py * ey[0], px * ex[1] + py * ey[1])
        return (px, py)

    for ld, factor in loads_by_member.get(mid, ()):
        why = case_text(ld.case, factor)
        if isinstance(ld, PointLoad):
            if not own(ld.a):
                continue
            f = glob(ld.px * factor, ld.py * factor, ld.axes)
            b.add("P", "point load", f"force on member {mid} ({why})", ld.handle, at(ld.a), f, 0.0,
                  member=mid, s=ld.a)
        elif isinstance(ld, MemberCouple):
            if not own(ld.a):
                continue
            b.add("C", "couple", f"couple on member {mid} ({why})", ld.handle, at(ld.a), (0.0, 0.0),
                  ld.m * factor, member=mid, s=ld.a)
        elif isinstance(ld, DistributedLoad):
            a0 = float(ld.a)
            a1 = float(L if ld.b is None else ld.b)
            if a1 <= a0:
                continue
            s0, s1 = max(a0, lo), min(a1, hi)
            if s1 - s0 <= 1e-12 * L:
                continue
            q1 = np.array(glob(*ld.q1, ld.axes), dtype=float) * factor
            q2 = np.array(glob(*(ld.q2 if ld.q2 is not None else ld.q1), ld.axes), dtype=float) * factor

            def q(sv: float) -> np.ndarray:
                return q1 + (q2 - q1) * (sv - a0) / (a1 - a0)

            proj = abs(c) if ld.projected else 1.0
            if proj == 0.0:
                continue
            basis = (s1 - s0) * proj
            qa, qb = q(s0), q(s1)
            _add_distributed(b, mid, s0, s1, qa, qb, basis, bool(ld.projected), (c, s), at,
                             x_cut if cut_member else None, why, ld.handle)


def _add_distributed(
    b: TermBuilder, mid: str, s0: float, s1: float, qa: np.ndarray, qb: np.ndarray, basis: float,
    projected: bool, axis: tuple[float, float], at: Callable[[float], tuple[float, float]],
    x_cut: float | None, why: str, handle: str,
) -> None:
    """One resultant term (intensity keeps its direction) or two triangular ones."""
    na, nb = float(np.hypot(*qa)), float(np.hypot(*qb))
    if na == 0.0 and nb == 0.0:
        return
    cross = float(qa[0] * qb[1] - qa[1] * qb[0])
    dot = float(qa @ qb)
    basis_txt = "per unit horizontal projection" if projected else "per unit length"
    parts: list[tuple[float, float, np.ndarray]] = []  # (w0, w1, unit direction)
    if na == 0.0 or nb == 0.0 or (abs(cross) <= 1e-12 * na * nb and dot > 0):
        u = (qa + qb) / float(np.hypot(*(qa + qb)))
        parts.append((float(qa @ u), float(qb @ u), u))
    else:  # direction changes along the stretch: split into two triangles
        parts.append((na, 0.0, qa / na))
        parts.append((0.0, nb, qb / nb))
    length = s1 - s0
    for w0, w1, u in parts:
        if w0 + w1 <= 0.0:
            continue
        t = length * (w0 + 2.0 * w1) / (3.0 * (w0 + w1))  # centroid of a trapezoid from s0
        sc = s0 + t
        part = DistributedPart(mid, s0, s1, w0, w1, (float(u[0]), float(u[1])), basis,
                               projected, sc, abs(sc - x_cut) if x_cut is not None else None, axis)
        total = part.resultant
        shape = "uniform" if math.isclose(w0, w1, rel_tol=1e-12) else ("triangular" if min(w0, w1) == 0 else "linear")
        desc = f"{shape} load {basis_txt} on member {mid} ({why}), replaced by its resultant at the centroid"
        b.add("W", "distributed", desc, handle, at(sc), (total * u[0], total * u[1]), 0.0, part, member=mid, s=sc)

