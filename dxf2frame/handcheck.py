"""Hand-check calculation sheets: the free body behind a value at a point.

A checker redoes a number from the program with a calculator: cut the member
at the point, isolate one side, list every force on it and write the three
equilibrium equations.  This module does exactly that and writes the result
as Markdown (with a PNG figure per cut) and as one PDF with a page per cut.

Choice of the free body
-----------------------
The frame's members form a graph on its nodes (supports are not part of
it; they act through their reactions).  Cutting member ``e`` at ``x``
separates the frame into two parts exactly when ``e`` is a *bridge* of that
graph (removing it leaves its two end nodes unconnected).

* ``e`` is a bridge: the two candidate free bodies are "the piece of ``e``
  from its start to the cut plus everything connected to the start node"
  and the same on the end side.  The side with no support is preferred
  (its cut forces follow from its loads by statics alone, method
  ``"statics"``); if both sides carry supports, the side with fewer
  non-zero reaction components is used and the reactions are taken as
  already solved (values from the :class:`~solver.results.CaseResult`,
  method ``"reactions"``).  Ties go to the side with fewer forces, then to
  the start side.  A loop *inside* a support-free side does not matter:
  equilibrium of the whole isolated part holds whatever its internal
  indeterminacy.
* ``e`` lies in a closed loop (removing it leaves its ends connected): no
  cut through ``e`` alone frees a part of the frame.  The free body is then
  the piece of ``e`` from its nearer end to the cut, loaded by the member
  end forces at that end, taken from the stiffness solution (method
  ``"end forces"``, labelled as such on the sheet), plus the member loads
  on the piece.

Forces on the free body (:class:`Term`)
--------------------------------------
Every reaction, nodal load, member load and end force on the chosen side
is one term: its global components ``fx``, ``fy`` [force] and couple
[force*length, counter-clockwise positive], its point of application, the
lever arms ``dx``, ``dy`` from the cut to that point and its moment about
the cut ``dx*fy - dy*fx + couple``.  A distributed load is replaced by its
resultant at its centroid over the part that lies on the free body (one
term while the intensity keeps its direction, otherwise two triangular
parts); the sheet states intensity, loaded length, resultant and centroid.
Settlements put no force on a free body (their effect is in the reactions).

Signs at the cut
----------------
Local axes of the cut member: ``x'`` from its start to its end, ``y'``
turned 90 degrees counter-clockwise.  Internal forces on the cut face, in
their positive sense:

* start-side free body (its cut face looks along +x'): N along +x'
  (tension), V along -y', M counter-clockwise (sagging);
* end-side free body (its cut face looks along -x'): N along -x', V along
  +y', M clockwise.

So for the start side ``N = -sum(F.x')``, ``V = +sum(F.y')``,
``M = -sum(moment about the cut)``, and for the end side the opposite signs.
N > 0 is tension, V > 0 turns the element clockwise, M > 0 bends the member
concave toward +y' (sagging for a beam drawn left to right).  Each term's
contribution to N, V, M is stored on the term; the sheet's N, V, M are the
exact sums of the terms (:attr:`FreeBody.n` etc.), printed with four
significant figures.

Files
-----
For each cut ``sheet-<k>.md`` with the figure ``sheet-<k>.png`` beside it,
and ``sheets.pdf`` with one page per cut.  Sheets carry no date, so the same
drawing gives the same sheets.  Every file is written atomically.

Example
-------
>>> from solver import Frame, PointLoad, solve
>>> f = Frame()
>>> a, b = f.add_node(0.0, 0.0), f.add_node(4.0, 0.0)
>>> m = f.add_member(a, b)
>>> _ = f.add_support(a, "fixed")
>>> _ = f.add_load(PointLoad(m.id, 4.0, py=-10e3))
>>> fb = cut_free_body(f, solve(f, determinate=True)["D"], m.id, 1.0)
>>> fb.side, fb.method, round(fb.v), round(fb.m)      # V = +P, M = -P*(L-x)
('end', 'statics', 10000, -30000)
"""
from __future__ import annotations

import hashlib
import math
import re
import textwrap
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable, Iterable, Literal, Sequence

import networkx as nx
import numpy as np

from . import CAUTION
from .atomic import atomic_path, write_text
from .errors import Dxf2FrameError
from .report import UnitFactors, locate_points, member_groups, unit_factors

if TYPE_CHECKING:  # pragma: no cover - typing only
    from solver import Frame

    from .pipeline import Analysis

__all__ = [
    "Term",
    "DistributedPart",
    "FreeBody",
    "SheetHeader",
    "SheetRequestError",
    "cut_free_body",
    "fmt",
    "sheet_markdown",
    "sheet_text",
    "write_cut_sheets",
    "write_sheets",
    "run_explain_command",
    "drawing_revision",
]

Side = Literal["start", "end"]
Method = Literal["statics", "reactions", "end forces"]

_SI = UnitFactors("N", "m", 1.0, 1.0)
_NUMERIC = re.compile(r"[-+]?\d")  # a table cell holding a number (right-aligned in text)


class SheetRequestError(Dxf2FrameError):
    """A sheet request that cannot be met (unknown load case or combination,
    a point off the member, an unstable frame)."""


# -- number formatting -----------------------------------------------------------


def fmt(value: float, zero: float = 0.0, *, sign: bool = False) -> str:
    """``value`` with four significant figures, fixed-point where readable.

    ``zero``: magnitudes at or below it print as ``0`` (round-off noise).
    ``sign``: always print the sign (``+12.00``).

    >>> fmt(12345.678), fmt(-0.0123456), fmt(1e-13, 1e-9), fmt(3.0, sign=True), fmt(-9.99999)
    ('12350', '-0.01235', '0', '+3.000', '-10.00')
    """
    v = float(value)
    if v == 0.0 or abs(v) <= zero or not math.isfinite(v):
        return "0" if math.isfinite(v) else str(v)
    v = float(f"{v:.3e}")  # round to 4 significant figures first (9.99996 -> 10.00)
    e = math.floor(math.log10(abs(v)))
    if -4 <= e < 7:
        s = f"{v:.{max(0, 3 - e)}f}"
    else:
        s = f"{v:.3e}"
    if sign and not s.startswith("-"):
        s = "+" + s
    return s


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


# -- the free body ----------------------------------------------------------------


@dataclass
class FreeBody:
    """One side of a cut through member ``member`` at ``x`` and the forces on it.

    ``n``, ``v``, ``m`` are the internal forces at the cut from the
    equilibrium of this free body (exact sums of the terms' contributions);
    ``solver_n``, ``solver_v``, ``solver_m`` are the stiffness solution's
    values at the same point, for comparison.  All values in the frame's
    units (N, m for a frame read from a drawing).
    """

    member: str
    x: float
    length: float
    side: Side
    method: Method
    cut_point: tuple[float, float]
    axis: tuple[float, float]
    terms: list[Term]
    nodes: tuple[int, ...]
    segments: tuple[tuple[tuple[float, float], tuple[float, float]], ...]
    joints: tuple[tuple[float, float], ...]
    supports: tuple[int, ...]
    result_name: str
    result_kind: str
    factors: dict[str, float]
    solver_n: float
    solver_v: float
    solver_m: float
    description: str
    notes: tuple[str, ...] = ()
    limit: Literal["right", "left"] = "right"

    @property
    def n(self) -> float:
        """Axial force at the cut [force], tension positive."""
        return math.fsum(t.n for t in self.terms)

    @property
    def v(self) -> float:
        """Shear at the cut [force], positive when it turns the element clockwise."""
        return math.fsum(t.v for t in self.terms)

    @property
    def m(self) -> float:
        """Bending moment at the cut [force*length], sagging (concave to +y') positive."""
        return math.fsum(t.m for t in self.terms)

    # -- wording -------------------------------------------------------------
    def _zero(self, key: str) -> float:
        """Round-off level for quantity ``key`` (n, v, m)."""
        big = max([abs(getattr(t, key)) for t in self.terms] + [abs(getattr(self, f"solver_{key}"))], default=0.0)
        return 1e-9 * big

    def meaning(self, key: str) -> str:
        """Plain meaning of the sign of N, V or M (``key`` in "n", "v", "m")."""
        val = getattr(self, key)
        if abs(val) <= self._zero(key):
            return {"n": "no axial force", "v": "no shear", "m": "no bending moment"}[key]
        if key == "n":
            return "tension" if val > 0 else "compression"
        if key == "v":
            return ("positive: turns the element clockwise (up on its left face, down on its right face)"
                    if val > 0 else
                    "negative: turns the element counter-clockwise (down on its left face, up on its right face)")
        return ("sagging (tension on the local -y face, bottom of a left-to-right beam)" if val > 0 else
                "hogging (tension on the local +y face, top of a left-to-right beam)")

    def equations(self, units: UnitFactors | None = None) -> list[str]:
        """The three equilibrium equations with the numbers substituted.

        Each line reads ``<sum> = 0  =>  Q = <sign>[(t1) + (t2) + ...] = value unit``;
        the bracket holds every term's component (four significant figures),
        so the result can be redone with a calculator.
        """
        uf = units or _SI
        start = self.side == "start"
        rows = [
            ("N", "n", "along", uf.force, uf.force_unit,
             "ΣF along x' = 0", "N" if start else "-N", "-" if start else "+"),
            ("V", "v", "across", uf.force, uf.force_unit,
             "ΣF along y' = 0", "-V" if start else "V", "+" if start else "-"),
            ("M", "m", "moment", uf.moment, uf.moment_unit,
             "ΣM about the cut = 0", "M" if start else "-M", "-" if start else "+"),
        ]
        lines = []
        for name, key, comp, factor, unit, title, lhs, sign in rows:
            vals = [getattr(t, comp) * factor for t in self.terms]
            zero = 1e-9 * max([abs(v) for v in vals] + [0.0])
            inner = " + ".join(f"({fmt(v, zero, sign=True)})" for v in vals) or "0"
            result = getattr(self, key) * factor
            lines.append(
                f"{title}:  {lhs} + [{inner}] = 0  =>  {name} = {sign}[{inner}] = "
                f"{fmt(result, self._zero(key) * factor)} {unit}"
            )
        return lines


def _result_factors(result) -> dict[str, float]:
    """{case: factor} of a case result or combination."""
    factors = dict(getattr(result, "factors", None) or {})
    if not factors:
        factors = {result.name: 1.0}
    return {k: float(v) for k, v in factors.items() if float(v) != 0.0}


def _member_value(mr, what: str, x: float, limit: str) -> float:
    fn = getattr(mr, what)
    arr = np.array([x], dtype=float)
    val = fn(arr) if limit == "right" else fn(arr, side="left")
    return float(np.asarray(val, dtype=float).ravel()[0])


class _Builder:
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


def _case_text(case: str, factor: float) -> str:
    return f"case {case}" if factor == 1.0 else f"{factor:g} × case {case}"


def _add_member_loads(
    b: _Builder, frame: "Frame", loads_by_member: dict[str, list[tuple[Any, float]]],
    mid: str, lo: float, hi: float, *, cut_member: bool, x_cut: float,
    own: Callable[[float], bool],
) -> None:
    """Terms for the loads on member ``mid`` between ``lo`` and ``hi`` (from its start).

    ``own(a)`` says whether a concentrated load at ``a`` belongs to this
    free body (decides loads exactly at the cut).
    """
    from solver import DistributedLoad, MemberCouple, PointLoad

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
        why = _case_text(ld.case, factor)
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
    b: _Builder, mid: str, s0: float, s1: float, qa: np.ndarray, qb: np.ndarray, basis: float,
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


def _member_graph(frame: "Frame") -> nx.MultiGraph:
    g = nx.MultiGraph()
    g.add_nodes_from(range(len(frame.nodes)))
    for m in frame.members:
        g.add_edge(m.start, m.end, key=m.id)
    return g


def cut_free_body(
    frame: "Frame",
    result,
    member_id: str,
    x: float,
    *,
    side: Literal["auto", "start", "end"] = "auto",
    limit: Literal["right", "left"] = "right",
) -> FreeBody:
    """Cut member ``member_id`` at ``x`` and build the free body a checker would use.

    Parameters
    ----------
    frame : the solved frame (its loads are read per case)
    result : the ``CaseResult`` of a load case or combination (reactions,
        member results, combination factors)
    member_id : id of the member (analysis element) to cut
    x : distance of the cut from the member start along local x, in
        ``[0, length]`` [length]
    side : "auto" (see the module docstring) or force the start/end side
        (ignored for a member in a closed loop, where the nearer end is used)
    limit : at a concentrated load exactly at ``x``, "right" gives the value
        just past it (the load belongs to the start side), "left" just before

    Returns
    -------
    FreeBody with its terms; ``n``, ``v``, ``m`` are its equilibrium values.

    Raises
    ------
    KeyError  unknown member;  ValueError  ``x`` outside the member.
    """
    mem = frame.member(member_id)
    L, c, s = frame.geometry(mem)
    tol = 1e-9 * L
    if not (-tol <= x <= L + tol):
        raise ValueError(f"cut at x = {x:g} is outside member {member_id} of length {L:g}")
    x = min(max(float(x), 0.0), L)
    p0 = frame.nodes[mem.start]
    cut = (p0.x + c * x, p0.y + s * x)
    ex = (c, s)
    factors = _result_factors(result)
    mr = result.members[member_id]
    solver_vals = {k: _member_value(mr, f, x, limit) for k, f in (("n", "axial"), ("v", "shear"), ("m", "moment"))}

    def own_start(a: float) -> bool:
        return a <= x + tol if limit == "right" else a < x - tol

    # loads of this result, by member and by node
    from solver import DistributedLoad, MemberCouple, NodalLoad, PointLoad, Settlement

    loads_by_member: dict[str, list[tuple[Any, float]]] = {}
    nodal: list[tuple[Any, float]] = []
    settlements = False
    for ld in frame.loads:
        fct = factors.get(ld.case)
        if not fct:
            continue
        if isinstance(ld, (PointLoad, MemberCouple, DistributedLoad)):
            loads_by_member.setdefault(ld.member, []).append((ld, fct))
        elif isinstance(ld, NodalLoad):
            nodal.append((ld, fct))
        elif isinstance(ld, Settlement):
            settlements = True

    g = _member_graph(frame)
    g.remove_edge(mem.start, mem.end, key=member_id)
    bridge = not nx.has_path(g, mem.start, mem.end)

    def piece_geometry(lo: float, hi: float):
        return ((p0.x + c * lo, p0.y + s * lo), (p0.x + c * hi, p0.y + s * hi))

    if not bridge:
        near: Side = "start" if x <= 0.5 * L else "end"
        b = _Builder(near, cut, ex)
        node = mem.start if near == "start" else mem.end
        ef = np.asarray(mr.end_forces, dtype=float).ravel()
        ni, vi, mi = (ef[0:3] if near == "start" else ef[3:6])
        fglob = (ni * c - vi * s, ni * s + vi * c)
        pn = frame.nodes[node]
        b.add("E", "end force",
              f"member end forces exerted by node {node} on member {member_id}, from the stiffness "
              f"solution (indeterminate frame)",
              "", (pn.x, pn.y), fglob, float(mi), member=member_id, s=0.0 if near == "start" else L)
        lo, hi = (0.0, x) if near == "start" else (x, L)
        own = own_start if near == "start" else (lambda a: not own_start(a))
        _add_member_loads(b, frame, loads_by_member, member_id, lo, hi, cut_member=True, x_cut=x, own=own)
        desc = (f"{near} side of the cut: the piece of member {member_id} from its {near} (node {node}) to the "
                f"cut. Member {member_id} lies in a closed loop of the frame (removing it leaves its ends "
                f"connected), so no cut through it alone frees a part of the frame; the piece carries the "
                f"member end forces from the stiffness solution (indeterminate frame) at node {node}.")
        return FreeBody(member_id, x, L, near, "end forces", cut, ex, b.terms, (node,),
                        (piece_geometry(lo, hi),), ((pn.x, pn.y),), (), result.name,
                        getattr(result, "kind", "case"), factors, solver_vals["n"], solver_vals["v"],
                        solver_vals["m"], desc, (), limit)

    candidates = []
    for sd in ("start", "end"):
        node = mem.start if sd == "start" else mem.end
        comp = nx.node_connected_component(g, node)
        b = _Builder(sd, cut, ex)
        reactions = [r for r in result.reactions if r.node in comp]
        sup_idx = tuple(sorted({int(r.support_index) for r in reactions}
                               | {i for i, sp in enumerate(frame.supports) if sp.node in comp}))
        for r in reactions:
            sp = frame.supports[r.support_index] if 0 <= r.support_index < len(frame.supports) else None
            kind = sp.kind if sp is not None else "support"
            pn = frame.nodes[r.node]
            b.add("R", "reaction", f"reaction of the {kind} at node {r.node} (solved)",
                  sp.handle if sp is not None else "", (pn.x, pn.y), (r.fx, r.fy), float(r.m))
        for ld, fct in nodal:
            if ld.node in comp:
                pn = frame.nodes[ld.node]
                why = _case_text(ld.case, fct)
                if ld.fx or ld.fy:
                    b.add("P", "nodal force", f"force at node {ld.node} ({why})", ld.handle, (pn.x, pn.y),
                          (ld.fx * fct, ld.fy * fct), 0.0)
                if ld.m:
                    b.add("C", "couple", f"couple at node {ld.node} ({why})", ld.handle, (pn.x, pn.y),
                          (0.0, 0.0), ld.m * fct)
        others = [m for m in frame.members if m.id != member_id and m.start in comp]
        segs = []
        for om in others:
            Lo = frame.geometry(om)[0]
            _add_member_loads(b, frame, loads_by_member, om.id, 0.0, Lo, cut_member=False, x_cut=x,
                              own=lambda a: True)
            na, nb = frame.nodes[om.start], frame.nodes[om.end]
            segs.append(((na.x, na.y), (nb.x, nb.y)))
        lo, hi = (0.0, x) if sd == "start" else (x, L)
        own = own_start if sd == "start" else (lambda a: not own_start(a))
        _add_member_loads(b, frame, loads_by_member, member_id, lo, hi, cut_member=True, x_cut=x, own=own)
        segs.insert(0, piece_geometry(lo, hi))
        scale = max([abs(v) for r in result.reactions for v in (r.fx, r.fy, r.m)] + [0.0])
        nonzero = sum(1 for r in reactions for v in (r.fx, r.fy, r.m) if abs(v) > 1e-9 * scale)
        cost = (1 if sup_idx else 0, nonzero, len(b.terms), 0 if sd == "start" else 1)
        candidates.append((cost, sd, node, comp, b, sup_idx, segs, others))

    if side == "auto":
        chosen = min(candidates, key=lambda t: t[0])
    else:
        chosen = next(t for t in candidates if t[1] == side)
    _cost, sd, node, comp, b, sup_idx, segs, others = chosen
    method: Method = "reactions" if sup_idx else "statics"
    desc = f"{sd} side of the cut: the piece of member {member_id} from its {sd} (node {node}) to the cut"
    if others:
        ids = [m.id for m in others]
        listed = ", ".join(ids[:6]) + (f" and {len(ids) - 6} more" if len(ids) > 6 else "")
        desc += f", with everything connected beyond node {node} (members {listed})"
    desc += "."
    if method == "statics":
        desc += " No support on this side: its cut forces follow from its loads by statics alone."
    else:
        at_nodes = sorted({frame.supports[i].node for i in sup_idx})
        desc += (" Both sides carry supports; this side needs fewer reaction components. The reactions "
                 f"at node(s) {', '.join(map(str, at_nodes))} are taken as solved.")
    notes = ()
    if settlements and method != "statics":
        notes = ("Support settlements act in this result; they put no force on the free body, their "
                 "effect is contained in the reactions.",)
    joints = tuple((frame.nodes[n].x, frame.nodes[n].y) for n in sorted(comp))
    return FreeBody(member_id, x, L, sd, method, cut, ex, b.terms, tuple(sorted(comp)), tuple(segs), joints,
                    sup_idx, result.name, getattr(result, "kind", "case"), factors, solver_vals["n"],
                    solver_vals["v"], solver_vals["m"], desc, notes, limit)


# -- the sheet --------------------------------------------------------------------


@dataclass(frozen=True)
class SheetHeader:
    """What the sheet says about where the numbers come from.

    Attributes
    ----------
    title : heading, e.g. "member 1A-1 at 2.500 m from its start"
    source : drawing file name ("" when the frame was built by hand)
    revision : first 12 hex digits of the SHA-256 of the drawing file
    member : which member, in words (id, entity handle, layer, ends)
    cut : where the cut is, in words (drawing coordinates, distance)
    frame_status : determinacy of the frame, in words
    reason : why this cut (a requested point, a governing extreme)
    """

    title: str
    source: str = ""
    revision: str = ""
    member: str = ""
    cut: str = ""
    frame_status: str = ""
    reason: str = ""


def _result_text(fb: FreeBody, family: str | None = None) -> str:
    if fb.result_kind == "combination":
        parts = " + ".join(f"{f:g} × {c}" for c, f in fb.factors.items())
        fam = f", {family}" if family and family not in ("user", "all") else ""
        return f"load combination {fb.result_name}{fam} = {parts}"
    return f"load case {fb.result_name}"


def _method_text(fb: FreeBody) -> str:
    return {
        "statics": "statics of the free body alone (no support on it)",
        "reactions": "statics of the free body with the solved reactions of its supports",
        "end forces": "member end forces from the stiffness solution (indeterminate frame)",
    }[fb.method]


def _term_rows(fb: FreeBody, uf: UnitFactors) -> tuple[list[str], list[list[str]], list[str]]:
    """Table of forces (header, rows) and the detail lines of distributed loads."""
    head = ["term", "what", f"at X, Y [{uf.length_unit}]", f"Fx [{uf.force_unit}]", f"Fy [{uf.force_unit}]",
            f"couple [{uf.moment_unit}]", f"along x' [{uf.force_unit}]", f"along y' [{uf.force_unit}]",
            f"dx [{uf.length_unit}]", f"dy [{uf.length_unit}]", f"moment about cut [{uf.moment_unit}]"]
    fz = 1e-9 * max([abs(v) for t in fb.terms for v in (t.fx, t.fy)] + [0.0]) * uf.force
    mz = 1e-9 * max([abs(t.moment) for t in fb.terms] + [0.0]) * uf.moment
    rows, details = [], []
    for t in fb.terms:
        what = t.kind + (f" #{t.handle}" if t.handle else "")
        rows.append([
            t.label, what, f"{fmt(t.point[0] * uf.length)}, {fmt(t.point[1] * uf.length)}",
            fmt(t.fx * uf.force, fz), fmt(t.fy * uf.force, fz), fmt(t.couple * uf.moment, mz),
            fmt(t.along * uf.force, fz), fmt(t.across * uf.force, fz),
            fmt(t.dx * uf.length, 1e-12), fmt(t.dy * uf.length, 1e-12), fmt(t.moment * uf.moment, mz),
        ])
        d = t.distributed
        line = f"{t.label}: {t.description}"
        if t.s is not None and t.kind in ("point load", "couple"):
            line += f", at {fmt(t.s * uf.length)} {uf.length_unit} from the start of member {t.member}"
        if d is not None:
            wu = f"{uf.force_unit}/{uf.length_unit}"
            if math.isclose(d.w0, d.w1, rel_tol=1e-12):
                inten = f"w = {fmt(d.w0 * uf.distributed)} {wu}"
                res_txt = f"w × {fmt(d.basis_length * uf.length)} {uf.length_unit}"
            else:
                inten = f"w = {fmt(d.w0 * uf.distributed)} to {fmt(d.w1 * uf.distributed)} {wu}"
                res_txt = f"(w1 + w2)/2 × {fmt(d.basis_length * uf.length)} {uf.length_unit}"
            basis = " of horizontal projection" if d.projected else ""
            ang = math.degrees(math.atan2(d.direction[1], d.direction[0]))
            line += (f". {inten}, acting at {ang:.4g}° from +X, over {fmt(d.basis_length * uf.length)} "
                     f"{uf.length_unit}{basis} (from {fmt(d.s0 * uf.length)} to {fmt(d.s1 * uf.length)} "
                     f"{uf.length_unit} along the member); resultant {res_txt} = "
                     f"{fmt(d.resultant * uf.force)} {uf.force_unit} at its centroid, "
                     f"{fmt(d.centroid_s * uf.length)} {uf.length_unit} from the member start")
            if d.centroid_from_cut is not None:
                line += f", {fmt(d.centroid_from_cut * uf.length)} {uf.length_unit} from the cut"
        elif t.kind in ("point load", "nodal force", "reaction", "end force") and (t.fx or t.fy):
            mag = math.hypot(t.fx, t.fy)
            ang = math.degrees(math.atan2(t.fy, t.fx))
            line += (f". Magnitude {fmt(mag * uf.force)} {uf.force_unit} at {ang:.4g}° from +X: "
                     f"components Fx = {fmt(t.fx * uf.force, fz)}, Fy = {fmt(t.fy * uf.force, fz)}; "
                     f"along the member {fmt(t.along * uf.force, fz)}, across {fmt(t.across * uf.force, fz)}")
        details.append(line)
    return head, rows, details


def _blocks(fb: FreeBody, header: SheetHeader, uf: UnitFactors, figure: str | None,
            family: str | None) -> list[tuple[str, Any]]:
    """The sheet as a list of (kind, content) blocks: h1, h2, p, quote, list, table, image."""
    c, s = fb.axis
    B: list[tuple[str, Any]] = [("h1", f"Hand check: {header.title}")]
    facts = []
    if header.source:
        facts.append(f"Drawing: {header.source}" + (f", revision (SHA-256) {header.revision}" if header.revision else ""))
    facts.append(f"Result: {_result_text(fb, family)}")
    facts.append(f"Units: forces {uf.force_unit}, lengths {uf.length_unit}, moments {uf.moment_unit}, "
                 f"distributed loads {uf.force_unit}/{uf.length_unit}")
    if header.member:
        facts.append(f"Member: {header.member}")
    facts.append(f"Cut: {header.cut}" if header.cut else
                 f"Cut: member {fb.member} at x = {fmt(fb.x * uf.length)} {uf.length_unit} from its start")
    if header.frame_status:
        facts.append(f"Frame: {header.frame_status}")
    if header.reason:
        facts.append(f"Why this cut: {header.reason}")
    facts.append(f"Method: {_method_text(fb)}")
    B.append(("list", facts))
    B.append(("quote", CAUTION))

    B.append(("h2", "Free body"))
    B.append(("p", fb.description[:1].upper() + fb.description[1:]))
    c, s = c + 0.0, s + 0.0
    B.append(("p", f"Local axes of member {fb.member}: x' = ({c:.4f}, {s:.4f}) from its start to its end, "
                   f"y' = ({0.0 - s:.4f}, {c:.4f}) (x' turned 90° counter-clockwise). Cut point "
                   f"({fmt(fb.cut_point[0] * uf.length)}, {fmt(fb.cut_point[1] * uf.length)}) {uf.length_unit}."))
    if figure:
        B.append(("image", figure))

    B.append(("h2", "Forces on the free body"))
    B.append(("p", "Global components Fx, Fy (positive along +X, +Y), components along the member's local "
                   "axes x', y', lever arms dx, dy from the cut to the point of application, and moment "
                   "about the cut = dx·Fy − dy·Fx + couple (counter-clockwise positive)."))
    head, rows, details = _term_rows(fb, uf)
    if rows:
        B.append(("table", (head, rows)))
        B.append(("list", details))
    else:
        B.append(("p", "No force acts on this free body."))
    for note in fb.notes:
        B.append(("p", note))

    B.append(("h2", "Equilibrium of the free body"))
    if fb.side == "start":
        pos = ("N along +x' (pulling away from the body: tension), V along −y', "
               "M counter-clockwise")
    else:
        pos = ("N along −x' (pulling away from the body: tension), V along +y', "
               "M clockwise")
    B.append(("p", f"Internal forces on the cut face in their positive sense: {pos}."))
    B.append(("list", fb.equations(uf)))

    B.append(("h2", "Result at the cut"))
    mz = fb._zero("m") * uf.moment
    vals = [
        ["N", f"{fmt(fb.n * uf.force, fb._zero('n') * uf.force)} {uf.force_unit}", fb.meaning("n")],
        ["V", f"{fmt(fb.v * uf.force, fb._zero('v') * uf.force)} {uf.force_unit}", fb.meaning("v")],
        ["M", f"{fmt(fb.m * uf.moment, mz)} {uf.moment_unit}", fb.meaning("m")],
    ]
    B.append(("table", (["quantity", "value", "meaning"], vals)))
    sol = (f"The stiffness solution gives at the same point N = {fmt(fb.solver_n * uf.force, fb._zero('n') * uf.force)}, "
           f"V = {fmt(fb.solver_v * uf.force, fb._zero('v') * uf.force)} {uf.force_unit}, "
           f"M = {fmt(fb.solver_m * uf.moment, mz)} {uf.moment_unit}")
    agree = all(
        abs(getattr(fb, k) - getattr(fb, f"solver_{k}")) <= 1e-6 * max(1.0, abs(getattr(fb, f"solver_{k}"))) +
        1e3 * fb._zero(k)
        for k in ("n", "v", "m")
    )
    sol += " (agrees)." if agree else " (DIFFERS: please report this sheet)."
    B.append(("p", sol))
    return B


def _md_cell(text: str) -> str:
    return str(text).replace("|", "\\|")


def sheet_markdown(fb: FreeBody, header: SheetHeader, units: UnitFactors | None = None, *,
                   figure: str | None = None, family: str | None = None) -> str:
    """The sheet as Markdown; ``figure`` is the file name of the PNG to embed."""
    uf = units or _SI
    out: list[str] = []
    for kind, content in _blocks(fb, header, uf, figure, family):
        if kind == "h1":
            out += [f"# {content}", ""]
        elif kind == "h2":
            out += [f"## {content}", ""]
        elif kind == "p":
            out += [content, ""]
        elif kind == "quote":
            out += [f"> {content}", ""]
        elif kind == "list":
            out += [f"- {x}" for x in content] + [""]
        elif kind == "image":
            out += [f"![free body and element at the cut]({content})", ""]
        elif kind == "table":
            head, rows = content
            out.append("| " + " | ".join(_md_cell(h) for h in head) + " |")
            out.append("|" + "|".join("---" for _ in head) + "|")
            out += ["| " + " | ".join(_md_cell(c) for c in r) + " |" for r in rows]
            out.append("")
    return "\n".join(out).rstrip() + "\n"


def sheet_text(fb: FreeBody, header: SheetHeader, units: UnitFactors | None = None, *,
               width: int = 118, family: str | None = None) -> list[str]:
    """The sheet as plain text lines (fixed-width tables), for the PDF page."""
    uf = units or _SI
    out: list[str] = []

    def wrap(text: str, indent: str = "", first: str = "") -> list[str]:
        return textwrap.wrap(text, width, initial_indent=first or indent, subsequent_indent=indent,
                             break_on_hyphens=False) or [""]

    for kind, content in _blocks(fb, header, uf, None, family):
        if kind == "h1":
            out += [content, "=" * min(width, len(content))]
        elif kind == "h2":
            out += ["", content.upper()]
        elif kind == "p":
            out += wrap(content)
        elif kind == "quote":
            out += wrap(content, "  ", "! ")
        elif kind == "list":
            for item in content:
                out += wrap(item, "    ", "  - ")
        elif kind == "table":
            head, rows = content
            cols = list(zip(*([head] + rows)))
            widths = [max(len(str(v)) for v in col) for col in cols]
            out.append("  ".join(str(h).ljust(w) for h, w in zip(head, widths)).rstrip())
            out.append("  ".join("-" * w for w in widths))
            for r in rows:
                out.append("  ".join(str(v).rjust(w) if _NUMERIC.match(str(v)) else str(v).ljust(w)
                                     for v, w in zip(r, widths)).rstrip())
    return out


# -- files ------------------------------------------------------------------------


def drawing_revision(path: Path | str) -> str:
    """First 12 hex digits of the SHA-256 of the file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()[:12]


_SHEET_FILE = re.compile(r"sheet-(\d+)\.(md|png)$")


def write_cut_sheets(
    sheets: Sequence[tuple[FreeBody, SheetHeader]],
    folder: Path | str,
    units: UnitFactors | None = None,
    *,
    families: Sequence[str | None] | None = None,
) -> list[Path]:
    """Write ``sheet-<k>.md`` + ``sheet-<k>.png`` per free body and ``sheets.pdf``.

    Sheets left over from an earlier run with more cuts (``sheet-<j>.md``
    and ``.png`` with ``j`` beyond the new count) are removed so the folder
    describes one run.  Returns the paths written (Markdown, PNG, then PDF).
    """
    from matplotlib.backends.backend_pdf import PdfPages

    from .handcheck_figures import sheet_figure, sheet_page

    uf = units or _SI
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    fams = list(families) if families is not None else [None] * len(sheets)
    written: list[Path] = []
    for k, ((fb, header), fam) in enumerate(zip(sheets, fams), start=1):
        png = folder / f"sheet-{k}.png"
        fig = sheet_figure(fb, uf)
        with atomic_path(png) as tmp:
            fig.savefig(tmp, dpi=130, format="png", metadata={"Software": None})
        md = folder / f"sheet-{k}.md"
        write_text(md, sheet_markdown(fb, header, uf, figure=png.name, family=fam))
        written += [md, png]
    pdf = folder / "sheets.pdf"
    with atomic_path(pdf) as tmp:
        with PdfPages(tmp, metadata={"CreationDate": None, "ModDate": None, "Producer": None,
                                     "Creator": "dxf2frame"}) as pages:
            for (fb, header), fam in zip(sheets, fams):
                page = sheet_page(fb, uf, sheet_text(fb, header, uf, family=fam))
                pages.savefig(page)
    written.append(pdf)
    for old in folder.iterdir():
        mt = _SHEET_FILE.match(old.name)
        if mt and int(mt.group(1)) > len(sheets):
            old.unlink(missing_ok=True)
    return written


# -- from an analysed drawing ------------------------------------------------------


def _find_result(analysis: "Analysis", name: str):
    for r in analysis.results:
        if r.name == name:
            return r
    compact = name.replace(" ", "")
    for r in analysis.results:
        if r.name.replace(" ", "") == compact:
            return r
    names = ", ".join(r.name for r in analysis.results) or "none"
    raise SheetRequestError(f"no load case or combination named {name!r}; the drawing has: {names}")


def _strength_candidates(analysis: "Analysis") -> list:
    """Strength (LRFD) combinations; else the settings' own combinations; else the first case."""
    lrfd = [r for r in analysis.combinations if str(getattr(r, "family", "")).upper() == "LRFD"]
    if lrfd:
        return lrfd
    user = [r for r in analysis.combinations if str(getattr(r, "family", "")).lower() in ("user", "", "none")]
    if user:
        return user
    return analysis.cases[:1] or analysis.combinations[:1]


def _default_cuts(analysis: "Analysis", cands: Sequence) -> list[tuple[str, float, Any, str]]:
    """(element, x, result, reason) at the largest |M| of each reported member
    under the result of ``cands`` that governs it."""
    frame = analysis.model.frame
    cuts = []
    for g in member_groups(frame).values():
        best = None  # (|M|, element, x, result)
        for r in cands:
            for m in g.members:
                ext = r.members[m.id].extremes()
                for val, at in ((ext["m_max"], ext["m_max_at"]), (ext["m_min"], ext["m_min_at"])):
                    if best is None or abs(val) > best[0] * (1 + 1e-12):
                        best = (abs(val), m.id, float(at), r)
        if best is None:
            continue
        if best[0] == 0.0:  # no bending anywhere: cut at mid-length under the largest |N|
            nbest = None
            for r in cands:
                for m in g.members:
                    ext = r.members[m.id].extremes()
                    big = max(abs(ext["n_min"]), abs(ext["n_max"]))
                    if nbest is None or big > nbest[0]:
                        nbest = (big, m.id, 0.5 * frame.geometry(m)[0], r)
            best = nbest
            reason = f"member {g.id} carries no bending; mid-length cut under the largest |N| ({best[3].name})"
        else:
            reason = f"largest |M| of member {g.id} under {best[3].name}"
        cuts.append((best[1], best[2], best[3], reason))
    return cuts


def _governing_at(analysis: "Analysis", mid: str, x: float):
    cands = _strength_candidates(analysis)
    if not cands:
        raise SheetRequestError("no results to write sheets for")
    return max(cands, key=lambda r: abs(_member_value(r.members[mid], "moment", x, "right")))


def _status_text(det) -> str:
    if det is None:
        return ""
    if det.status == "determinate":
        return "statically determinate: reactions and internal forces follow from statics"
    if det.status == "indeterminate":
        return (f"statically indeterminate, degree {det.degree}: reactions and end forces come from the "
                "stiffness solution")
    return det.status


#: without explicit points, at most this many sheets (the members with the largest |M|)
MAX_DEFAULT_SHEETS = 40


def write_sheets(
    analysis: "Analysis",
    folder: Path | str,
    *,
    points: Iterable[tuple[float, float]] = (),
    result_name: str | None = None,
    force_unit: str,
    length_unit: str,
) -> list[Path]:
    """Write calculation sheets for an analysed drawing.

    Parameters
    ----------
    analysis : a stable :class:`~dxf2frame.pipeline.Analysis`
    folder : output folder (created)
    points : cut points (X, Y) in drawing units; default: for each reported
        member, the point of largest |M| under the strength combination that
        governs it
    result_name : load case or combination; default per point: the strength
        (LRFD) combination with the largest |M| there, else the first case
    force_unit, length_unit : units on the sheets (pint names)

    Returns
    -------
    The files written: ``sheet-<k>.md``, ``sheet-<k>.png``, ..., ``sheets.pdf``.

    Raises
    ------
    SheetRequestError  unstable frame or unknown ``result_name``;
    DrawingError  a point on no member;  UnitError  unknown unit.
    """
    if not analysis.stable or not analysis.results:
        raise SheetRequestError("the frame is unstable (a mechanism): there are no results to check")
    uf = unit_factors(force_unit, length_unit)
    model = analysis.model
    frame = model.frame
    scale = model.unit_scale
    fixed = _find_result(analysis, result_name) if result_name else None
    groups = member_groups(frame)
    group_of = {m.id: (g, off) for g in groups.values() for m, off in zip(g.members, g.offsets)}

    pts = [(float(px), float(py)) for px, py in points]
    cuts: list[tuple[str, float, Any, str]] = []
    if pts:
        for (px, py), (mid, x) in zip(pts, locate_points(model, pts)):
            r = fixed if fixed is not None else _governing_at(analysis, mid, x)
            why = f"requested point ({px:g}, {py:g})"
            if fixed is None:
                why += f"; {r.name} gives the largest |M| there among the strength combinations"
            cuts.append((mid, x, r, why))
    else:
        cuts = _default_cuts(analysis, [fixed] if fixed is not None else _strength_candidates(analysis))
        if len(cuts) > MAX_DEFAULT_SHEETS:
            # a checker reviews the worst members first: keep those with the
            # largest |M| at their governing point
            cuts = sorted(cuts, key=lambda c: -abs(float(c[2].members[c[0]].moment(c[1]))))
            cuts = cuts[:MAX_DEFAULT_SHEETS]

    source = Path(model.source)
    try:
        revision = drawing_revision(source)
    except OSError:
        revision = ""
    status = _status_text(analysis.determinacy)
    sheets, fams = [], []
    for mid, x, r, why in cuts:
        fb = cut_free_body(frame, r, mid, x)
        g, off = group_of[mid]
        mem = frame.member(mid)
        X, Y = model.to_drawing(*fb.cut_point)
        at = (off + x) * uf.length
        member_txt = (f"{g.id}" + (f" (entity #{mem.handle}" if mem.handle else " (") +
                      (f", layer {mem.layer})" if mem.layer else ")") +
                      f", from ({fmt(g.start[0] / scale)}, {fmt(g.start[1] / scale)}) to "
                      f"({fmt(g.end[0] / scale)}, {fmt(g.end[1] / scale)}) {model.length_unit} (drawing), "
                      f"length {fmt(g.length * uf.length)} {uf.length_unit}")
        member_txt = member_txt.replace(" ()", "")
        if len(g.members) > 1:
            member_txt += f"; analysis element {mid} (the member is split at a load or hinge)"
        cut_txt = (f"drawing point ({fmt(X)}, {fmt(Y)}) {model.length_unit}, {fmt(at)} {uf.length_unit} "
                   f"from the member start")
        if len(g.members) > 1:
            cut_txt += f" ({fmt(x * uf.length)} {uf.length_unit} from the start of element {mid})"
        header = SheetHeader(
            title=f"member {g.id} at {fmt(at)} {uf.length_unit} from its start, {r.name}",
            source=source.name, revision=revision, member=member_txt, cut=cut_txt,
            frame_status=status, reason=why,
        )
        sheets.append((fb, header))
        fams.append(getattr(r, "family", None))
    return write_cut_sheets(sheets, folder, uf, families=fams)


def _sheet_units(text: str | None, default_force: str, default_length: str) -> tuple[str, str]:
    if not text:
        return default_force, default_length
    parts = [p.strip() for p in text.split(",")]
    if len(parts) != 2 or not all(parts):
        raise SheetRequestError(f"--units takes FORCE,LENGTH (for example kN,m or kip,ft), got {text!r}")
    return parts[0], parts[1]


def run_explain_command(args) -> int:
    """The ``explain`` subcommand: sheets for points of one drawing.

    ``args``: ``drawing`` (Path), ``at`` (list of (X, Y) drawing points),
    ``result`` (case or combination name or None), ``out`` (folder or None:
    ``sheets`` beside the drawing), ``units`` ("FORCE,LENGTH" or None),
    ``settings`` (Path or None), ``length_unit`` (str or None).
    Returns the exit status (0 written, 3 unstable frame).
    """
    from .pipeline import EXIT_OK, EXIT_UNSTABLE, analyse
    from .settings import load_settings

    drawing = Path(args.drawing)
    settings = load_settings(getattr(args, "settings", None), drawing)
    analysis = analyse(drawing, settings, length_unit=getattr(args, "length_unit", None))
    if not analysis.stable:
        print(f"dxf2frame: the frame is unstable, no sheets written: {analysis.determinacy.detail}")
        print(CAUTION)
        return EXIT_UNSTABLE
    force_u, length_u = _sheet_units(getattr(args, "units", None), settings.force_unit,
                                     analysis.model.length_unit)
    out = Path(args.out) if getattr(args, "out", None) else drawing.parent / "sheets"
    written = write_sheets(analysis, out, points=list(getattr(args, "at", None) or []),
                           result_name=getattr(args, "result", None), force_unit=force_u, length_unit=length_u)
    n = sum(1 for p in written if p.suffix == ".md")
    print(f"wrote {n} hand-check sheet(s) to {out} (Markdown + PNG per cut, all in {written[-1].name})")
    print(CAUTION)
    return EXIT_OK
