"""Pattern (partial) loading of a live load case.

A live load need not be present everywhere at once: the load case is split
into *parts* -- the loads on each span -- and the arrangement that is most
unfavourable for each effect is looked for (ASCE/SEI 7-16 section 4.3.3,
partial loading: the full intensity of the live load on parts of the
structure when that gives a more severe effect than the whole).

Parts
-----
``by="span"`` (default): a span is a chain of members between *breaks*:
supported nodes, nodes where other than two members meet (the joints of a
frame), and nodes where two members meet at an angle of more than 1 degree
(a frame's corner, a roof ridge).  A straight beam drawn as several
members between two supports, or split at an internal hinge, is one span;
a column between its base and a joint is a span of its own; the two
rafters of a pitched roof are two spans (unbalanced loading covered).  ``by="member"``: every reported member (its
``group``) is a part.  A nodal load or settlement at a node inside a span
belongs to that span; at a break it is a part of its own ("node 7").
Spans carrying no load of the case are not parts.  A part is named by its
members: ``"M3"``, ``"M3+M4"``, or first and last for more than three
(``"M3..M9"``).

Envelope
--------
The frame is linear, so the effect of any arrangement is the sum of the
effects of its parts.  Each part is solved as its own sub-case; all parts
go to :func:`solver.solve` in one call, which factorises the stiffness
matrix once and solves every part as a column of one right-hand side.  At
a station the largest value over all 2**n arrangements is then exactly the
sum of the positive part values, and the smallest the sum of the negative
ones; the arrangement that gives it (the *governing pattern*) is the set of
parts with positive (negative) values.  ``factor`` scales the parts (a
combination's live-load factor) and ``base`` adds a result present in every
arrangement (the factored dead load and other cases).

Per member, :meth:`PatternEnvelope.member_extremes` takes the patterns that
govern at the stations (an even grid plus every part's critical points),
builds each of them as one result, and reads its exact extremes; this is
exact unless the governing pattern of the true extreme governs at no
station at all.

Sign conventions are those of :mod:`solver.forces` (tension +, clockwise
shear +, sagging moment +); units those of the frame.

Examples
--------
Three equal 6 m spans under 10 kN/m of live load:

>>> from dxf2frame.solver import DistributedLoad, Frame, Section
>>> f = Frame()
>>> n = [f.add_node(6.0 * i, 0.0) for i in range(4)]
>>> for i in range(3):
...     m = f.add_member(n[i], n[i + 1], Section(E=200e9, A=5e-3, I=8e-5))
...     _ = f.add_load(DistributedLoad(m.id, q1=(0.0, -10e3), case="L"))
>>> _ = f.add_support(n[0], "pin")
>>> for k in n[1:]:
...     _ = f.add_support(k, "roller")
>>> ext = pattern_envelope(f, "L").member_extremes("M")["M1"]
>>> round(ext["max"] / 1e3, 2), ext["max_by"]        # 0.10125 w L^2
(36.45, 'L on M1, M3')
>>> round(ext["min"] / 1e3, 2), ext["min_by"]        # -7/60 w L^2 at the support
(-42.0, 'L on M1, M2')
"""
from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace

import numpy as np

from .model import Frame, Load, MemberCouple, DistributedLoad, PointLoad
from .combinations import format_combination
from .errors import LoadError
from .results import CaseResult, combine
from .stiffness import solve

__all__ = ["PatternPart", "PatternEnvelope", "pattern_parts", "solve_pattern_parts", "pattern_envelope"]

_QUANTITY = {"N": "n", "V": "v", "M": "m"}
_KINK = float(np.sin(np.radians(1.0)))  # members meeting at more than 1 degree: a span break


@dataclass(frozen=True)
class PatternPart:
    """One part of a patterned load case.

    ``name`` e.g. ``"M3+M4"`` or ``"node 7"``; ``case`` the load case it is
    part of; ``members`` the member ids of the span (empty for a node
    part); ``loads`` the loads of the case in this part.
    """

    name: str
    case: str
    members: tuple[str, ...]
    loads: tuple[Load, ...]


def _spans(frame: Frame, by: str) -> tuple[dict[str, int], set[int]]:
    """{member id: span index}, span indices in member order; the break nodes."""
    deg = np.bincount([n for m in frame.members for n in (m.start, m.end)], minlength=len(frame.nodes))
    breaks = {s.node for s in frame.supports} | {int(i) for i in np.flatnonzero(deg != 2)}
    # a node joining two members at an angle (a frame's corner, a ridge) is a break too
    dirs: dict[int, list[tuple[float, float]]] = {}
    for m in frame.members:
        a, b = frame.nodes[m.start], frame.nodes[m.end]
        L = float(np.hypot(b.x - a.x, b.y - a.y)) or 1.0
        dirs.setdefault(m.start, []).append(((b.x - a.x) / L, (b.y - a.y) / L))
        dirs.setdefault(m.end, []).append(((a.x - b.x) / L, (a.y - b.y) / L))
    for n, ds in dirs.items():
        if len(ds) == 2 and abs(ds[0][0] * ds[1][1] - ds[0][1] * ds[1][0]) > _KINK:
            breaks.add(n)
    if by == "member":
        groups: dict[str, int] = {}
        return {m.id: groups.setdefault(m.group, len(groups)) for m in frame.members}, breaks
    if by != "span":
        raise ValueError("by must be 'span' or 'member'")
    parent = list(range(len(frame.members)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    at_node: dict[int, int] = {}
    for i, m in enumerate(frame.members):
        for n in (m.start, m.end):
            if n in breaks:
                continue
            j = at_node.setdefault(n, i)
            parent[find(i)] = find(j)
    roots: dict[int, int] = {}
    return {m.id: roots.setdefault(find(i), len(roots)) for i, m in enumerate(frame.members)}, breaks


def _span_name(members: list[str]) -> str:
    return "+".join(members) if len(members) <= 3 else f"{members[0]}..{members[-1]}"


def pattern_parts(frame: Frame, case: str, by: str = "span") -> list[PatternPart]:
    """Split the loads of ``case`` into parts by span (or member); see the
    module docstring.  Parts come in the order of their first member in
    ``frame.members`` (node parts after them, by node id)."""
    span_of, breaks = _spans(frame, by)
    members_of: dict[int, list[str]] = {}
    for m in frame.members:
        members_of.setdefault(span_of[m.id], []).append(m.id)
    node_span: dict[int, int] = {}
    for m in frame.members:
        for n in (m.start, m.end):
            if n not in breaks:
                node_span[n] = span_of[m.id]
    by_span: dict[int, list[Load]] = {}
    by_node: dict[int, list[Load]] = {}
    for ld in frame.loads:
        if ld.case != case:
            continue
        if isinstance(ld, (PointLoad, MemberCouple, DistributedLoad)):
            if ld.member not in span_of:
                raise LoadError(f"load on member {ld.member!r}, which does not exist", handle=ld.handle)
            by_span.setdefault(span_of[ld.member], []).append(ld)
        elif ld.node in node_span:
            by_span.setdefault(node_span[ld.node], []).append(ld)
        else:
            by_node.setdefault(ld.node, []).append(ld)
    parts = [PatternPart(_span_name(members_of[k]), case, tuple(members_of[k]), tuple(by_span[k]))
             for k in sorted(by_span)]
    parts += [PatternPart(f"node {n}", case, (), tuple(by_node[n])) for n in sorted(by_node)]
    return parts


def solve_pattern_parts(frame: Frame, parts: Iterable[PatternPart], *,
                        determinate: bool | None = None) -> dict[str, CaseResult]:
    """Solve every part as a sub-case, all in one :func:`solver.solve` call
    (one factorisation, the parts as columns of one right-hand side);
    ``determinate`` is passed on to :func:`solver.solve`.

    Returns ``{part name: CaseResult}``; each result is named
    ``"<case>[<part name>]"`` with factors ``{that name: 1.0}``.
    """
    parts = list(parts)
    subs = [f"{p.case}[{p.name}]" for p in parts]
    if len(set(subs)) != len(subs):
        raise ValueError("pattern part names must be unique")
    loads = [replace(ld, case=sub) for p, sub in zip(parts, subs) for ld in p.loads]
    sub_frame = Frame(frame.nodes, frame.members, frame.supports, loads)
    res = solve(sub_frame, cases=subs, determinate=determinate)
    frame_cases = tuple(frame.cases())
    return {p.name: replace(res[sub], frame_cases=frame_cases) for p, sub in zip(parts, subs)}


@dataclass
class PatternEnvelope:
    """Envelope of a patterned load case (see the module docstring).

    ``case`` the load case; ``parts`` its parts; ``part_results`` their
    solved results by part name.
    """

    case: str
    parts: tuple[PatternPart, ...]
    part_results: dict[str, CaseResult]
    _stations: dict[int, tuple[np.ndarray, np.ndarray]] = field(default_factory=dict, repr=False)

    def label(self, names: Iterable[str]) -> str:
        """Name of a pattern: ``"L on M1, M3"`` (``"L on no part"`` when empty)."""
        names = list(names)
        return f"{self.case} on {', '.join(names)}" if names else f"{self.case} on no part"

    def pattern_result(self, names: Iterable[str], *, factor: float = 1.0,
                       base: CaseResult | None = None) -> CaseResult:
        """The result of one arrangement: ``base + factor * (sum of the
        named parts)``, named by :meth:`label` (prefixed by the base's name
        when given)."""
        names = list(names)
        total: CaseResult | None = base
        for n in names:
            r = self.part_results[n].scaled(factor)
            total = r if total is None else total + r
        if total is None:
            any_r = next(iter(self.part_results.values()))
            total = any_r.scaled(0.0)
        lab = self.label(names)
        if factor != 1.0:
            lab = f"{factor:g}({lab})"
        name = lab if base is None else f"{base.name} + {lab}"
        return replace(total, name=name, kind="combination")

    def in_combination(self, case_results: Mapping[str, CaseResult], factors: Mapping[str, float],
                       name: str | None = None) -> tuple[CaseResult | None, float]:
        """``(base, factor)`` for a combination: ``base`` the combination of
        every other case (None when there is none), ``factor`` the
        combination's factor on the patterned case (0 when it lacks it).
        Pass them to :meth:`member_extremes` or :meth:`station_envelope`
        for the combination's envelope with the patterned case arranged.
        """
        others = {k: v for k, v in factors.items() if k != self.case and float(v) != 0.0}
        factor = float(factors.get(self.case, 0.0))
        if not others:
            return None, factor
        base = combine(case_results, others, name if name is not None else format_combination(others))
        return base, factor

    def stations(self, per_member: int = 21) -> tuple[np.ndarray, np.ndarray]:
        """(rows, x) of the stations: ``per_member`` evenly spaced points on
        every member (ends included) and every part's critical points,
        sorted by member row then position."""
        if per_member < 2:
            raise ValueError("at least 2 stations per member")
        got = self._stations.get(per_member)
        if got is None:
            any_r = next(iter(self.part_results.values()))
            L = any_r.members.layout.length
            m = len(L)
            t = np.linspace(0.0, 1.0, per_member)
            rows = [np.repeat(np.arange(m), per_member)]
            xs = [(L[:, None] * t[None, :]).ravel()]
            for r in self.part_results.values():
                cr, cx = r.members.critical_points()
                rows.append(cr)
                xs.append(cx)
            rr, xx = np.concatenate(rows), np.concatenate(xs)
            order = np.lexsort((xx, rr))
            rr, xx = rr[order], xx[order]
            keep = np.ones(len(rr), bool)
            keep[1:] = (rr[1:] != rr[:-1]) | (np.diff(xx) > 1e-9 * L[rr[1:]])
            got = (rr[keep], xx[keep])
            self._stations[per_member] = got
        return got

    def station_envelope(self, which: str = "M", per_member: int = 21, *, factor: float = 1.0,
                         base: CaseResult | None = None) -> dict[str, object]:
        """Largest and smallest ``which`` ("N", "V", "M") at every station.

        Returns ``{"rows", "x", "member", "max", "min", "max_by", "min_by",
        "max_parts", "min_parts"}``: arrays over the stations (``member``
        the member ids, ``*_by`` the pattern labels, ``*_parts`` tuples of
        part names).
        """
        if which not in _QUANTITY:
            raise KeyError(f"unknown quantity {which!r}; expected N, V or M")
        rows, x = self.stations(per_member)
        names = [p.name for p in self.parts]
        vals = np.vstack([factor * self.part_results[n].members.sample(which, rows, x) for n in names]) \
            if names else np.zeros((0, len(rows)))
        b = base.members.sample(which, rows, x) if base is not None else np.zeros(len(rows))
        pos, neg = vals > 0, vals < 0
        vmax = b + np.where(pos, vals, 0.0).sum(axis=0)
        vmin = b + np.where(neg, vals, 0.0).sum(axis=0)
        ids = np.array(next(iter(self.part_results.values())).members.layout.ids, dtype=object)
        max_parts = [tuple(n for n, on in zip(names, pos[:, k]) if on) for k in range(len(rows))]
        min_parts = [tuple(n for n, on in zip(names, neg[:, k]) if on) for k in range(len(rows))]
        return {
            "rows": rows, "x": x, "member": ids[rows], "max": vmax, "min": vmin,
            "max_parts": max_parts, "min_parts": min_parts,
            "max_by": [self.label(p) for p in max_parts], "min_by": [self.label(p) for p in min_parts],
        }

    def member_extremes(self, which: str = "M", per_member: int = 21, *, factor: float = 1.0,
                        base: CaseResult | None = None) -> dict[str, dict]:
        """Per member: ``max``, ``max_at`` (from the member start),
        ``max_by`` (the governing pattern's label), ``max_parts``, and the
        same for ``min``; exact extremes of the patterns governing at the
        stations (see the module docstring)."""
        env = self.station_envelope(which, per_member, factor=factor, base=base)
        q = _QUANTITY[which]
        rows = env["rows"]
        cand: dict[tuple[str, ...], None] = {}
        for k in range(len(rows)):
            cand.setdefault(env["max_parts"][k], None)
            cand.setdefault(env["min_parts"][k], None)
        # one result per distinct governing pattern (typically a few per span)
        tables = {p: self.pattern_result(p, factor=factor, base=base).members.force_table() for p in cand}
        ids = next(iter(self.part_results.values())).members.layout.ids
        out: dict[str, dict] = {}
        for j, mid in enumerate(ids):
            sel = np.flatnonzero(rows == j)
            row: dict[str, object] = {}
            for ext, better in (("max", np.greater), ("min", np.less)):
                best = None
                for k in sel:
                    p = env[f"{ext}_parts"][k]
                    v = float(tables[p][f"{q}_{ext}"][j])
                    if best is None or better(v, best[0]):
                        best = (v, float(tables[p][f"{q}_{ext}_at"][j]), p)
                v, at, p = best
                row[ext], row[f"{ext}_at"], row[f"{ext}_parts"], row[f"{ext}_by"] = v, at, p, self.label(p)
            out[mid] = row
        return out


def pattern_envelope(frame: Frame, case: str, by: str = "span", *,
                     determinate: bool | None = None) -> PatternEnvelope:
    """Split ``case`` into parts (:func:`pattern_parts`), solve them
    (:func:`solve_pattern_parts`) and return their :class:`PatternEnvelope`.

    Raises ValueError when the case has no loads.
    """
    parts = pattern_parts(frame, case, by)
    if not parts:
        raise ValueError(f"load case {case!r} has no loads to arrange in patterns")
    return PatternEnvelope(case, tuple(parts), solve_pattern_parts(frame, parts, determinate=determinate))
