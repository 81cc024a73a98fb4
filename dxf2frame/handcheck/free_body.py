"""The free body of a hand-check sheet: :func:`cut_free_body` and :class:`FreeBody`.

Cuts a member at a point, chooses the side a checker would isolate (a side
without supports by statics alone, else the side with fewer reaction
components with the solved reactions, or for a member in a closed loop the
piece to its nearer end with the member end forces), and collects the
forces on it as :class:`~dxf2frame.handcheck.terms.Term` objects.  The
choice and the signs are set out in :mod:`dxf2frame.handcheck`.  N, V, M at
the cut are the exact sums of the terms (N tension +, V clockwise +, M
sagging +), in the frame's units (N, m for a frame read from a drawing).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

import networkx as nx
import numpy as np

from ..numbers import fmt
from .terms import SI_UNITS, Side, Term, TermBuilder, add_member_loads, case_text
from ..report.report import UnitFactors

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..solver import Frame

__all__ = ["Method", "FreeBody", "cut_free_body"]

Method = Literal["statics", "reactions", "end forces"]


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
        ax, ay = self.axis
        below = _face(ay, -ax)                     # the side local -y points to, as seen on the drawing
        above = _face(-ay, ax)
        return (f"sagging (tension on the local -y face, here the {below} face of the member)" if val > 0 else
                f"hogging (tension on the local +y face, here the {above} face of the member)")

    def equations(self, units: UnitFactors | None = None) -> list[str]:
        """The three equilibrium equations with the numbers substituted.

        Each line reads ``<sum> = 0  =>  Q = <sign>[(t1) + (t2) + ...] = value unit``;
        the bracket holds every term's component (four significant figures),
        so the result can be redone with a calculator.
        """
        uf = units or SI_UNITS
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
    factors = dict(result.factors or {})
    if not factors:
        factors = {result.name: 1.0}
    return {k: float(v) for k, v in factors.items() if float(v) != 0.0}


def member_value(mr, what: str, x: float, limit: str) -> float:
    fn = getattr(mr, what)
    arr = np.array([x], dtype=float)
    val = fn(arr) if limit == "right" else fn(arr, side="left")
    return float(np.asarray(val, dtype=float).ravel()[0])


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
    cut = _locate_cut(frame, result, member_id, x, limit)
    loads = _loads_of_result(frame, cut.factors)
    g = _member_graph(frame)
    g.remove_edge(cut.mem.start, cut.mem.end, key=member_id)
    if nx.has_path(g, cut.mem.start, cut.mem.end):
        # a closed loop: no cut through this member alone frees a part of the frame
        return _end_force_body(frame, result, cut, loads)
    candidates = [_side_candidate(frame, result, cut, loads, g, sd) for sd in ("start", "end")]
    if side == "auto":
        chosen = min(candidates, key=lambda c: c.cost)
    else:
        chosen = next(c for c in candidates if c.side == side)
    return _side_body(frame, result, cut, loads, chosen)


# -- the steps of a cut ------------------------------------------------------------


@dataclass
class _Cut:
    """Where member ``mem`` is cut and what the solver says there."""

    mem: Any                  # the solver's Member
    L: float                  # its length
    c: float                  # cos, sin of local x
    s: float
    x: float                  # the cut, from the member start, clamped to [0, L]
    tol: float
    limit: str
    point: tuple[float, float]
    factors: dict[str, float]
    solver_vals: dict[str, float]

    @property
    def ex(self) -> tuple[float, float]:
        return (self.c, self.s)

    def own_start(self, a: float) -> bool:
        """Does a concentrated load at ``a`` belong to the start side?"""
        return a <= self.x + self.tol if self.limit == "right" else a < self.x - self.tol

    def owner(self, side: Side):
        return self.own_start if side == "start" else (lambda a: not self.own_start(a))

    def span(self, side: Side) -> tuple[float, float]:
        """The piece of the cut member on ``side``, as (lo, hi) along local x."""
        return (0.0, self.x) if side == "start" else (self.x, self.L)

    def piece(self, lo: float, hi: float, p0) -> tuple[tuple[float, float], tuple[float, float]]:
        return ((p0.x + self.c * lo, p0.y + self.s * lo), (p0.x + self.c * hi, p0.y + self.s * hi))


@dataclass
class _Loads:
    """The loads of one result: member loads by member, nodal loads, and
    whether support settlements act (each with its factor)."""

    by_member: dict[str, list[tuple[Any, float]]]
    nodal: list[tuple[Any, float]]
    settlements: bool


@dataclass
class _Candidate:
    """One side of a cut through a bridge member, with everything beyond it."""

    cost: tuple
    side: Side
    node: int
    comp: set
    builder: TermBuilder
    sup_idx: tuple[int, ...]
    segs: list
    others: list


def _locate_cut(frame: "Frame", result, member_id: str, x: float, limit: str) -> _Cut:
    mem = frame.member(member_id)
    L, c, s = frame.geometry(mem)
    tol = 1e-9 * L
    if not (-tol <= x <= L + tol):
        raise ValueError(f"cut at x = {x:g} is outside member {member_id} of length {L:g}")
    x = min(max(float(x), 0.0), L)
    p0 = frame.nodes[mem.start]
    mr = result.members[member_id]
    solver_vals = {k: member_value(mr, f, x, limit) for k, f in (("n", "axial"), ("v", "shear"), ("m", "moment"))}
    return _Cut(mem, L, c, s, x, tol, limit, (p0.x + c * x, p0.y + s * x), _result_factors(result), solver_vals)


def _loads_of_result(frame: "Frame", factors: dict[str, float]) -> _Loads:
    from ..solver import DistributedLoad, MemberCouple, NodalLoad, PointLoad, Settlement

    loads = _Loads({}, [], False)
    for ld in frame.loads:
        fct = factors.get(ld.case)
        if not fct:
            continue
        if isinstance(ld, (PointLoad, MemberCouple, DistributedLoad)):
            loads.by_member.setdefault(ld.member, []).append((ld, fct))
        elif isinstance(ld, NodalLoad):
            loads.nodal.append((ld, fct))
        elif isinstance(ld, Settlement):
            loads.settlements = True
    return loads


def _end_force_body(frame: "Frame", result, cut: _Cut, loads: _Loads) -> FreeBody:
    """The piece of a member in a closed loop from its nearer end to the cut,
    loaded by the member end forces of the stiffness solution."""
    mem, member_id, L, c, s = cut.mem, cut.mem.id, cut.L, cut.c, cut.s
    near: Side = "start" if cut.x <= 0.5 * L else "end"
    b = TermBuilder(near, cut.point, cut.ex)
    node = mem.start if near == "start" else mem.end
    ef = np.asarray(result.members[member_id].end_forces, dtype=float).ravel()
    ni, vi, mi = (ef[0:3] if near == "start" else ef[3:6])
    fglob = (ni * c - vi * s, ni * s + vi * c)
    pn = frame.nodes[node]
    b.add("E", "end force",
          f"member end forces exerted by node {node} on member {member_id}, from the stiffness "
          f"solution (indeterminate frame)",
          "", (pn.x, pn.y), fglob, float(mi), member=member_id, s=0.0 if near == "start" else L)
    lo, hi = cut.span(near)
    add_member_loads(b, frame, loads.by_member, member_id, lo, hi, cut_member=True, x_cut=cut.x, own=cut.owner(near))
    desc = (f"{near} side of the cut: the piece of member {member_id} from its {near} (node {node}) to the "
            f"cut. Member {member_id} lies in a closed loop of the frame (removing it leaves its ends "
            f"connected), so no cut through it alone frees a part of the frame; the piece carries the "
            f"member end forces from the stiffness solution (indeterminate frame) at node {node}.")
    return FreeBody(member_id, cut.x, L, near, "end forces", cut.point, cut.ex, b.terms, (node,),
                    (cut.piece(lo, hi, frame.nodes[mem.start]),), ((pn.x, pn.y),), (), result.name,
                    result.kind, cut.factors, cut.solver_vals["n"], cut.solver_vals["v"],
                    cut.solver_vals["m"], desc, (), cut.limit)


def _side_candidate(frame: "Frame", result, cut: _Cut, loads: _Loads, g: nx.MultiGraph, sd: Side) -> _Candidate:
    """Everything on side ``sd`` of a cut through a bridge member: reactions,
    nodal loads, the loads of the members beyond, the piece of the cut member;
    its cost ranks the sides as a checker would."""
    mem, member_id = cut.mem, cut.mem.id
    node = mem.start if sd == "start" else mem.end
    comp = nx.node_connected_component(g, node)
    b = TermBuilder(sd, cut.point, cut.ex)
    reactions = [r for r in result.reactions if r.node in comp]
    sup_idx = tuple(sorted({int(r.support_index) for r in reactions}
                           | {i for i, sp in enumerate(frame.supports) if sp.node in comp}))
    for r in reactions:
        sp = frame.supports[r.support_index] if 0 <= r.support_index < len(frame.supports) else None
        kind = sp.kind if sp is not None else "support"
        pn = frame.nodes[r.node]
        b.add("R", "reaction", f"reaction of the {kind} at node {r.node} (solved)",
              sp.handle if sp is not None else "", (pn.x, pn.y), (r.fx, r.fy), float(r.m))
    for ld, fct in loads.nodal:
        if ld.node in comp:
            pn = frame.nodes[ld.node]
            why = case_text(ld.case, fct)
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
        add_member_loads(b, frame, loads.by_member, om.id, 0.0, Lo, cut_member=False, x_cut=cut.x,
                         own=lambda a: True)
        na, nb = frame.nodes[om.start], frame.nodes[om.end]
        segs.append(((na.x, na.y), (nb.x, nb.y)))
    lo, hi = cut.span(sd)
    add_member_loads(b, frame, loads.by_member, member_id, lo, hi, cut_member=True, x_cut=cut.x, own=cut.owner(sd))
    segs.insert(0, cut.piece(lo, hi, frame.nodes[mem.start]))
    scale = max([abs(v) for r in result.reactions for v in (r.fx, r.fy, r.m)] + [0.0])
    nonzero = sum(1 for r in reactions for v in (r.fx, r.fy, r.m) if abs(v) > 1e-9 * scale)
    cost = (1 if sup_idx else 0, nonzero, len(b.terms), 0 if sd == "start" else 1)
    return _Candidate(cost, sd, node, comp, b, sup_idx, segs, others)


def _side_body(frame: "Frame", result, cut: _Cut, loads: _Loads, chosen: _Candidate) -> FreeBody:
    """The chosen side as a free body, with the words that explain the choice."""
    member_id, sd, node, comp, sup_idx, others = (cut.mem.id, chosen.side, chosen.node, chosen.comp,
                                                  chosen.sup_idx, chosen.others)
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
    if loads.settlements and method != "statics":
        notes = ("Support settlements act in this result; they put no force on the free body, their "
                 "effect is contained in the reactions.",)
    joints = tuple((frame.nodes[n].x, frame.nodes[n].y) for n in sorted(comp))
    return FreeBody(member_id, cut.x, cut.L, sd, method, cut.point, cut.ex, chosen.builder.terms, tuple(sorted(comp)),
                    tuple(chosen.segs), joints, sup_idx, result.name, result.kind, cut.factors,
                    cut.solver_vals["n"], cut.solver_vals["v"], cut.solver_vals["m"], desc, notes, cut.limit)


def _face(dx: float, dy: float) -> str:
    """The face a direction (dx, dy) points to on the drawing: right, left, top or bottom.

    >>> _face(0.0, -1.0), _face(1.0, 0.2)
    ('bottom', 'right')
    """
    if abs(dx) > abs(dy):
        return "right" if dx > 0 else "left"
    return "top" if dy > 0 else "bottom"
