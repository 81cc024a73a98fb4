"""Revision comparison: what changed in the results between issues of a drawing.

The comparison works on report dicts (JSON report, schema 1), so a revision
may be given as a drawing (solved in memory first) or as a report written
earlier.  For each consecutive pair of revisions (oldest first):

1. **Members are matched by geometry**, never by id (handles change when a
   drawing is redrawn).  Members are straight segments in the report's
   length unit:

   * ``"same ends"``: both end points within the tolerance (either
     orientation);
   * ``"overlap"``: split or merged members: the largest overlap of a
     member with the flat-capped buffer of a parallel member (directions
     within :data:`PARALLEL_DEG`), found with a shapely ``STRtree``.  A new
     piece of a split member and an old piece of a merged one are matched
     in two passes, so a match may be many-to-one;
   * ``"moved"``: a parallel member on the same layer whose midpoint moved
     less than :data:`MOVE_FRACTION` of its length;
   * what is left is listed as new (in the newer revision) or removed.

2. **Governing values** per member: over the results of kind
   ``"combination"`` (or every result when there are none), the largest
   ``max(|min|, |max|)`` of N, V and M, and the largest ``|deflection_max|``.
   Reactions are matched by location (within the tolerance) and compared
   by their largest ``|fx|``, ``|fy|``, ``|m|``.

3. **Relative change** ``|new - old| / max(|old|, floor)``; the floor is
   :data:`FLOOR_FRACTION` of the largest value of the same dimension
   (forces: N, V, fx, fy; moments: M, m; deflections) in either revision,
   so that near-zero values do not flag numerical noise.  A change above
   the threshold (default 5 %, settings ``[compare] threshold``) is
   flagged.

Units: every report is converted to one set of units (the newest report's,
or those asked for) before comparing; forces in FORCE, moments in
FORCE*LENGTH, coordinates, lengths and deflections in LENGTH.  Signs do
not enter: governing values are magnitudes.

Outputs: :func:`comparison_table` (terminal), :func:`write_comparison`
(CSV and JSON), :func:`mark_changes` (a copy of the newest drawing with a
layer of revision clouds and ``old -> new`` texts).

Example
-------
>>> def rep(w):  # a one-member report with governing |M| = w * 36 / 8
...     m = {"id": "A-1", "layer": "FRAME", "handle": "A", "start": [0, 0], "end": [6, 0],
...          "length": 6, "n_min": 0, "n_max": 0, "v_min": -3 * w, "v_max": 3 * w,
...          "m_min": 0, "m_max": 4.5 * w, "m_max_at": 3, "m_min_at": 0, "deflection_max": None}
...     return {"schema": 1, "source": f"w{w}.dxf", "units": {"force": "kN", "length": "m"},
...             "results": [{"name": "D", "kind": "case", "reactions": [], "members": [m]}]}
>>> cmp = compare_reports([rep(10), rep(12)])
>>> ch = cmp.pairs[0].matched[0]
>>> ch.how, ch.value("M").old, ch.value("M").new, round(ch.value("M").change, 3), ch.flagged
('same ends', 45.0, 54.0, 0.2, True)
"""
from __future__ import annotations

import copy
import csv
import io
import json
import math
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from .atomic import atomic_path, write_text
from .errors import InputFileError
from .units import length_unit_scale, unit_factor

__all__ = [
    "DEFAULT_THRESHOLD",
    "FLOOR_FRACTION",
    "PARALLEL_DEG",
    "MOVE_FRACTION",
    "TOLERANCE_FRACTION",
    "MEMBER_QUANTITIES",
    "REACTION_QUANTITIES",
    "MemberRef",
    "ValueChange",
    "MemberChange",
    "ReactionChange",
    "RevisionDiff",
    "Comparison",
    "compare_reports",
    "match_members",
    "convert_report",
    "comparison_table",
    "comparison_rows",
    "unit_labels",
    "CSV_COLUMNS",
    "write_comparison",
    "mark_changes",
    "cloud_points",
    "run_compare_command",
]

#: relative change flagged by default (settings ``[compare] threshold``)
DEFAULT_THRESHOLD = 0.05
#: floor of the relative-change denominator, as a fraction of the largest
#: value of the same dimension in the pair of revisions
FLOOR_FRACTION = 0.02
#: members whose directions differ by less than this [degrees] are parallel
PARALLEL_DEG = 2.0
#: a "moved" member's midpoint moved less than this fraction of its length
MOVE_FRACTION = 0.25
#: default matching tolerance, as a fraction of the larger drawing extent
TOLERANCE_FRACTION = 1e-3
#: smallest overlap, as a fraction of the shorter member, to count as "overlap"
MIN_OVERLAP_FRACTION = 0.1

#: member quantities compared, with their dimension ("force", "moment", "length")
MEMBER_QUANTITIES: dict[str, str] = {"N": "force", "V": "force", "M": "moment", "deflection": "length"}
#: reaction quantities compared
REACTION_QUANTITIES: dict[str, str] = {"fx": "force", "fy": "force", "m": "moment"}


# -- data ------------------------------------------------------------------------


@dataclass(frozen=True)
class MemberRef:
    """A reported member of one revision: id, layer, DXF handle, end points
    and length in the comparison's length unit."""

    id: str
    layer: str
    handle: str
    start: tuple[float, float]
    end: tuple[float, float]

    @property
    def length(self) -> float:
        return math.hypot(self.end[0] - self.start[0], self.end[1] - self.start[1])

    @property
    def midpoint(self) -> tuple[float, float]:
        return (0.5 * (self.start[0] + self.end[0]), 0.5 * (self.start[1] + self.end[1]))

    def to_dict(self) -> dict:
        return {"id": self.id, "layer": self.layer, "handle": self.handle,
                "start": list(self.start), "end": list(self.end), "length": self.length}


@dataclass(frozen=True)
class ValueChange:
    """One governing value, old and new (magnitudes in the comparison's units).

    ``change`` is ``|new - old| / max(|old|, floor)`` (a fraction, >= 0), or
    None when either value is missing (no deflection without sections).
    """

    quantity: str
    old: float | None
    new: float | None
    change: float | None
    flagged: bool

    @property
    def delta(self) -> float | None:
        """new - old, or None."""
        if self.old is None or self.new is None:
            return None
        return self.new - self.old

    def to_dict(self) -> dict:
        return {"quantity": self.quantity, "old": self.old, "new": self.new, "delta": self.delta,
                "change": self.change, "flagged": self.flagged}


class _Changes:
    """Shared by member and reaction changes: a tuple ``values`` of
    :class:`ValueChange`."""

    values: tuple[ValueChange, ...]

    @property
    def flagged(self) -> bool:
        return any(v.flagged for v in self.values)

    def value(self, quantity: str) -> ValueChange:
        """The :class:`ValueChange` of ``quantity`` ("N", "V", "M", "deflection", "fx", ...)."""
        for v in self.values:
            if v.quantity == quantity:
                return v
        raise KeyError(quantity)


@dataclass(frozen=True)
class MemberChange(_Changes):
    """A member matched between two revisions and its governing values.

    ``how``: ``"same ends"``, ``"overlap"`` (split/merged) or ``"moved"``.
    """

    old: MemberRef
    new: MemberRef
    how: str
    values: tuple[ValueChange, ...]

    def to_dict(self) -> dict:
        return {"old": self.old.to_dict(), "new": self.new.to_dict(), "how": self.how,
                "flagged": self.flagged, "values": [v.to_dict() for v in self.values]}


@dataclass(frozen=True)
class ReactionChange(_Changes):
    """A support found at the same place in both revisions and its governing
    reaction components ``fx``, ``fy``, ``m`` (magnitudes)."""

    old_at: tuple[float, float]
    new_at: tuple[float, float]
    values: tuple[ValueChange, ...]

    def to_dict(self) -> dict:
        return {"old_at": list(self.old_at), "new_at": list(self.new_at), "flagged": self.flagged,
                "values": [v.to_dict() for v in self.values]}


@dataclass
class RevisionDiff:
    """What changed from revision ``old_index`` to ``new_index``."""

    old_source: str
    new_source: str
    old_index: int
    new_index: int
    matched: list[MemberChange] = field(default_factory=list)
    new_members: list[MemberRef] = field(default_factory=list)
    removed_members: list[MemberRef] = field(default_factory=list)
    reactions: list[ReactionChange] = field(default_factory=list)
    new_supports: list[tuple[float, float]] = field(default_factory=list)
    removed_supports: list[tuple[float, float]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    @property
    def flagged_members(self) -> list[MemberChange]:
        return [m for m in self.matched if m.flagged]

    @property
    def flagged_reactions(self) -> list[ReactionChange]:
        return [r for r in self.reactions if r.flagged]

    @property
    def changed(self) -> bool:
        """True when anything is flagged, added or removed."""
        return bool(self.flagged_members or self.flagged_reactions or self.new_members
                    or self.removed_members or self.new_supports or self.removed_supports)

    def to_dict(self) -> dict:
        return {
            "old": self.old_source, "new": self.new_source,
            "old_index": self.old_index, "new_index": self.new_index,
            "members": [m.to_dict() for m in self.matched],
            "new_members": [m.to_dict() for m in self.new_members],
            "removed_members": [m.to_dict() for m in self.removed_members],
            "reactions": [r.to_dict() for r in self.reactions],
            "new_supports": [list(p) for p in self.new_supports],
            "removed_supports": [list(p) for p in self.removed_supports],
            "notes": list(self.notes),
        }


@dataclass
class Comparison:
    """The comparison of a series of revisions, oldest first.

    ``units``: ``{"force": ..., "length": ...}`` of every number;
    ``tolerance``: matching tolerance in that length unit;
    ``pairs``: one :class:`RevisionDiff` per consecutive pair.
    """

    sources: list[str]
    units: dict[str, str]
    threshold: float
    tolerance: float
    pairs: list[RevisionDiff]

    @property
    def changed(self) -> bool:
        return any(p.changed for p in self.pairs)

    def to_dict(self) -> dict:
        return {
            "comparison": 1,
            "sources": list(self.sources),
            "units": dict(self.units),
            "threshold": self.threshold,
            "tolerance": self.tolerance,
            "floor_fraction": FLOOR_FRACTION,
            "pairs": [p.to_dict() for p in self.pairs],
        }


# -- report access -------------------------------------------------------------


def _governing_results(report: Mapping) -> list[Mapping]:
    results = list(report.get("results") or [])
    return [r for r in results if r.get("kind") == "combination"] or results


def _member_refs(report: Mapping) -> list[MemberRef]:
    """The members of a report (from its first result), in report order."""
    seen: dict[str, MemberRef] = {}
    for res in report.get("results") or []:
        for m in res.get("members") or []:
            if m["id"] not in seen:
                seen[m["id"]] = MemberRef(
                    str(m["id"]), str(m.get("layer", "")), str(m.get("handle", "")),
                    (float(m["start"][0]), float(m["start"][1])), (float(m["end"][0]), float(m["end"][1])),
                )
        if seen:
            break
    return list(seen.values())


def _absmax(a: float | None, b: float | None) -> float | None:
    vals = [abs(float(v)) for v in (a, b) if v is not None]
    return max(vals) if vals else None


def _bigger(a: float | None, b: float | None) -> float | None:
    if a is None:
        return b
    if b is None:
        return a
    return max(a, b)


def _member_governing(report: Mapping) -> dict[str, dict[str, float | None]]:
    """{member id: {"N", "V", "M", "deflection": governing magnitude or None}}."""
    out: dict[str, dict[str, float | None]] = {}
    for res in _governing_results(report):
        for m in res.get("members") or []:
            g = out.setdefault(m["id"], {q: None for q in MEMBER_QUANTITIES})
            g["N"] = _bigger(g["N"], _absmax(m.get("n_min"), m.get("n_max")))
            g["V"] = _bigger(g["V"], _absmax(m.get("v_min"), m.get("v_max")))
            g["M"] = _bigger(g["M"], _absmax(m.get("m_min"), m.get("m_max")))
            d = m.get("deflection_max")
            g["deflection"] = _bigger(g["deflection"], abs(float(d)) if d is not None else None)
    return out


def _support_governing(report: Mapping, tol: float) -> tuple[list[tuple[float, float]], list[dict[str, float]]]:
    """Support locations and their governing |fx|, |fy|, |m|.

    Reactions of different results are gathered by location (within
    ``tol``), so the order of the report's reaction lists does not matter.
    """
    where: list[tuple[float, float]] = []
    gov: list[dict[str, float]] = []
    for res in _governing_results(report):
        used: set[int] = set()
        for rc in res.get("reactions") or []:
            p = (float(rc["x"]), float(rc["y"]))
            k = None
            if where:
                d = np.hypot(*(np.asarray(where) - np.asarray(p)).T)
                for j in np.argsort(d, kind="stable"):
                    if d[j] > tol:
                        break
                    if int(j) not in used:
                        k = int(j)
                        break
            if k is None:
                where.append(p)
                gov.append({q: 0.0 for q in REACTION_QUANTITIES})
                k = len(where) - 1
            used.add(k)
            for q in REACTION_QUANTITIES:
                v = rc.get(q)
                if v is not None:
                    gov[k][q] = max(gov[k][q], abs(float(v)))
    return where, gov


# -- units ---------------------------------------------------------------------------


def _check_report(report: Any, label: str) -> None:
    if not isinstance(report, Mapping) or report.get("schema") != 1 or not isinstance(report.get("units"), Mapping):
        raise InputFileError(f"{label}: not a dxf2frame report (schema 1 with 'units' and 'results')")
    if "force" not in report["units"] or "length" not in report["units"]:
        raise InputFileError(f"{label}: the report's 'units' must give 'force' and 'length'")
    if not isinstance(report.get("results", []), list):
        raise InputFileError(f"{label}: 'results' must be a list")


def convert_report(report: Mapping, force_unit: str, length_unit: str) -> dict:
    """A copy of ``report`` with member, reaction and probe values converted
    to ``force_unit`` and ``length_unit`` (``units`` updated).

    Converted: member ``start``, ``end``, ``length``, ``m_min_at``,
    ``m_max_at``, ``deflection_max`` (length), ``n_*``, ``v_*`` (force),
    ``m_min``, ``m_max`` (moment); reaction ``x``, ``y``, ``fx``, ``fy``,
    ``m``; probe ``n``, ``v``, ``m``.  Other keys are copied as they are.
    Raises ``UnitError`` for an unknown unit.
    """
    out = copy.deepcopy(dict(report))
    fu, lu = report["units"]["force"], report["units"]["length"]
    F = unit_factor(fu, "force") / unit_factor(force_unit, "force")
    L = length_unit_scale(lu) / length_unit_scale(length_unit)
    M = F * L
    if F == 1.0 and L == 1.0:
        out["units"] = {**out["units"], "force": force_unit, "length": length_unit}
        return out

    def sc(v, f):
        return None if v is None else float(v) * f

    for res in out.get("results") or []:
        for m in res.get("members") or []:
            for k in ("start", "end"):
                if m.get(k) is not None:
                    m[k] = [float(c) * L for c in m[k]]
            for k in ("length", "m_min_at", "m_max_at", "deflection_max"):
                if k in m:
                    m[k] = sc(m[k], L)
            for k in ("n_min", "n_max", "v_min", "v_max"):
                if k in m:
                    m[k] = sc(m[k], F)
            for k in ("m_min", "m_max"):
                if k in m:
                    m[k] = sc(m[k], M)
        for rc in res.get("reactions") or []:
            for k, f in (("x", L), ("y", L), ("fx", F), ("fy", F), ("m", M)):
                if k in rc:
                    rc[k] = sc(rc[k], f)
        for pr in res.get("probes") or []:
            for k, f in (("n", F), ("v", F), ("m", M)):
                if k in pr:
                    pr[k] = sc(pr[k], f)
    out["units"] = {**out["units"], "force": force_unit, "length": length_unit,
                    "moment": f"{force_unit}*{length_unit}", "distributed": f"{force_unit}/{length_unit}"}
    return out


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
    import shapely
    from shapely import STRtree

    n_old, n_new = len(old), len(new)
    if n_old == 0 or n_new == 0:
        return [], list(range(n_new)), list(range(n_old))
    lo, ln = _lines(old), _lines(new)
    do, dn = _directions(old), _directions(new)
    len_o = np.array([r.length for r in old])
    len_n = np.array([r.length for r in new])
    tree = STRtree(lo)
    cand = tree.query(ln, predicate="dwithin", distance=tolerance)  # [new idx], [old idx]
    ci_new, ci_old = cand[0].astype(int), cand[1].astype(int)
    order = np.lexsort((ci_old, ci_new))
    ci_new, ci_old = ci_new[order], ci_old[order]

    pairs: list[tuple[int, int, str]] = []
    old_used = np.zeros(n_old, bool)
    new_used = np.zeros(n_new, bool)

    # 1. same end points, either orientation
    so = np.array([r.start for r in old]); eo = np.array([r.end for r in old])
    sn = np.array([r.start for r in new]); en = np.array([r.end for r in new])
    if len(ci_new):
        d_same = np.maximum(np.hypot(*(so[ci_old] - sn[ci_new]).T), np.hypot(*(eo[ci_old] - en[ci_new]).T))
        d_swap = np.maximum(np.hypot(*(so[ci_old] - en[ci_new]).T), np.hypot(*(eo[ci_old] - sn[ci_new]).T))
        d = np.minimum(d_same, d_swap)
        ok = np.flatnonzero(d <= tolerance)
        for k in sorted(ok, key=lambda k: (d[k], ci_new[k], ci_old[k])):
            i, j = ci_old[k], ci_new[k]
            if not old_used[i] and not new_used[j]:
                old_used[i] = new_used[j] = True
                pairs.append((int(i), int(j), "same ends"))

    # 2. overlap of parallel members (split or merged)
    sin_par = math.sin(math.radians(PARALLEL_DEG))
    free = ~old_used[ci_old] & ~new_used[ci_new]
    par = np.abs(do[ci_old, 0] * dn[ci_new, 1] - do[ci_old, 1] * dn[ci_new, 0]) <= sin_par
    sel = np.flatnonzero(free & par)
    if len(sel):
        bufs = shapely.buffer(lo[ci_old[sel]], tolerance, cap_style="flat")
        ov = shapely.length(shapely.intersection(ln[ci_new[sel]], bufs))
        shorter = np.minimum(len_o[ci_old[sel]], len_n[ci_new[sel]])
        keep = ov > np.maximum(tolerance, MIN_OVERLAP_FRACTION * shorter)
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
            old_used[i] = new_used[j] = True
            pairs.append((i, j, "overlap"))

    # 3. moved: same layer, parallel, midpoint moved less than a fraction of the length
    rest_o = np.flatnonzero(~old_used)
    rest_n = np.flatnonzero(~new_used)
    if len(rest_o) and len(rest_n):
        mid_o = shapely.points([old[i].midpoint for i in rest_o])
        mid_n = shapely.points([new[j].midpoint for j in rest_n])
        reach = MOVE_FRACTION * max(len_o[rest_o].max(), len_n[rest_n].max())
        q = STRtree(mid_o).query(mid_n, predicate="dwithin", distance=reach)
        cands = []
        for a, b in zip(q[0], q[1]):
            j, i = int(rest_n[a]), int(rest_o[b])
            if old[i].layer.upper() != new[j].layer.upper():
                continue
            if abs(do[i, 0] * dn[j, 1] - do[i, 1] * dn[j, 0]) > sin_par:
                continue
            dist = math.dist(old[i].midpoint, new[j].midpoint)
            if dist < MOVE_FRACTION * max(len_o[i], len_n[j]):
                cands.append((dist, j, i))
        for dist, j, i in sorted(cands):
            if not old_used[i] and not new_used[j]:
                old_used[i] = new_used[j] = True
                pairs.append((i, j, "moved"))

    pairs.sort(key=lambda p: (p[1], p[0]))
    return pairs, [int(j) for j in np.flatnonzero(~new_used)], [int(i) for i in np.flatnonzero(~old_used)]


# -- comparing -------------------------------------------------------------------------


def _relative(old: float | None, new: float | None, floor: float) -> float | None:
    if old is None or new is None:
        return None
    d = abs(new - old)
    den = max(abs(old), floor)
    if den <= 0.0:
        return 0.0 if d == 0.0 else math.inf
    return d / den


def _change(q: str, old: float | None, new: float | None, floor: float, threshold: float) -> ValueChange:
    rel = _relative(old, new, floor)
    return ValueChange(q, old, new, rel, bool(rel is not None and rel > threshold))


def _largest(values: Iterable[float | None]) -> float:
    vals = [abs(v) for v in values if v is not None and math.isfinite(v)]
    return max(vals) if vals else 0.0


def _floors(gov_members: Sequence[Mapping], gov_supports: Sequence[Sequence[Mapping]], fraction: float) -> dict[str, float]:
    """Floor of each dimension from the largest value in both revisions."""
    force = _largest(
        [g[q] for gm in gov_members for g in gm.values() for q in ("N", "V")]
        + [s[q] for gs in gov_supports for s in gs for q in ("fx", "fy")]
    )
    moment = _largest([g["M"] for gm in gov_members for g in gm.values()]
                      + [s["m"] for gs in gov_supports for s in gs])
    length = _largest([g["deflection"] for gm in gov_members for g in gm.values()])
    return {"force": fraction * force, "moment": fraction * moment, "length": fraction * length}


def _extent(reports: Sequence[Mapping]) -> float:
    pts = [p for rep in reports for r in _member_refs(rep) for p in (r.start, r.end)]
    pts += [(float(rc["x"]), float(rc["y"])) for rep in reports for res in (rep.get("results") or [])[:1]
            for rc in res.get("reactions") or []]
    if not pts:
        return 0.0
    a = np.asarray(pts, dtype=float)
    return float(np.max(a.max(axis=0) - a.min(axis=0)))


def _diff(old_rep: Mapping, new_rep: Mapping, k: int, threshold: float, tol: float,
          floor_fraction: float) -> RevisionDiff:
    diff = RevisionDiff(str(old_rep.get("source", f"revision {k}")), str(new_rep.get("source", f"revision {k + 1}")),
                        k, k + 1)
    for rep, label in ((old_rep, diff.old_source), (new_rep, diff.new_source)):
        status = (rep.get("determinacy") or {}).get("status")
        if not rep.get("results"):
            why = "the frame is unstable" if status == "unstable" else "the report has no results"
            diff.notes.append(f"{label}: {why}; nothing to compare")
    if diff.notes:
        return diff

    old_refs, new_refs = _member_refs(old_rep), _member_refs(new_rep)
    g_old, g_new = _member_governing(old_rep), _member_governing(new_rep)
    at_old, s_old = _support_governing(old_rep, tol)
    at_new, s_new = _support_governing(new_rep, tol)
    floors = _floors([g_old, g_new], [s_old, s_new], floor_fraction)

    pairs, new_only, removed = match_members(old_refs, new_refs, tol)
    empty = {q: None for q in MEMBER_QUANTITIES}
    for i, j, how in pairs:
        a, b = old_refs[i], new_refs[j]
        go, gn = g_old.get(a.id, empty), g_new.get(b.id, empty)
        values = tuple(_change(q, go[q], gn[q], floors[dim], threshold) for q, dim in MEMBER_QUANTITIES.items())
        diff.matched.append(MemberChange(a, b, how, values))
    diff.new_members = [new_refs[j] for j in new_only]
    diff.removed_members = [old_refs[i] for i in removed]

    # reactions: nearest support location within the tolerance, one to one
    used_old: set[int] = set()
    for j, p in enumerate(at_new):
        best = None
        for i, q in enumerate(at_old):
            if i in used_old:
                continue
            d = math.dist(p, q)
            if d <= tol and (best is None or d < best[0]):
                best = (d, i)
        if best is None:
            diff.new_supports.append(p)
            continue
        i = best[1]
        used_old.add(i)
        values = tuple(_change(q, s_old[i][q], s_new[j][q], floors[dim], threshold)
                       for q, dim in REACTION_QUANTITIES.items())
        diff.reactions.append(ReactionChange(at_old[i], p, values))
    diff.removed_supports = [q for i, q in enumerate(at_old) if i not in used_old]
    return diff


def compare_reports(
    reports: list[dict],
    *,
    threshold: float = DEFAULT_THRESHOLD,
    tolerance: float | None = None,
    units: tuple[str, str] | None = None,
    floor_fraction: float = FLOOR_FRACTION,
) -> Comparison:
    """Compare report dicts (schema 1), oldest first, pair by pair.

    Parameters
    ----------
    reports : two or more reports
    threshold : relative change above which a value is flagged (0.05 = 5 %)
    tolerance : matching tolerance in the comparison's length unit
        (default :data:`TOLERANCE_FRACTION` of the larger drawing extent)
    units : (force, length) of the comparison (default: the newest report's)
    floor_fraction : see :data:`FLOOR_FRACTION`

    Raises
    ------
    InputFileError  fewer than two reports, or one that is not a schema-1 report
    UnitError  a unit that pint does not know
    """
    if len(reports) < 2:
        raise InputFileError("compare needs two or more revisions, oldest first")
    for k, rep in enumerate(reports):
        _check_report(rep, str(rep.get("source", f"revision {k + 1}")) if isinstance(rep, Mapping) else f"revision {k + 1}")
    if not (threshold >= 0 and math.isfinite(threshold)):
        raise InputFileError(f"the threshold must be a fraction >= 0, got {threshold!r}")
    fu, lu = units if units else (reports[-1]["units"]["force"], reports[-1]["units"]["length"])
    conv = [convert_report(r, fu, lu) for r in reports]
    if tolerance is None:
        ext = _extent(conv)
        tolerance = TOLERANCE_FRACTION * ext if ext > 0 else 1e-9
    pairs = [_diff(conv[k], conv[k + 1], k, threshold, float(tolerance), floor_fraction)
             for k in range(len(conv) - 1)]
    sources = [str(r.get("source", f"revision {k + 1}")) for k, r in enumerate(conv)]
    return Comparison(sources, {"force": fu, "length": lu}, float(threshold), float(tolerance), pairs)


# -- text output ------------------------------------------------------------------------


def _fmt(v: float | None) -> str:
    if v is None:
        return "-"
    if v == 0:
        return "0"
    if abs(v) >= 1000:
        return f"{v:.0f}"
    return f"{v:.4g}"


def _pct(vc: ValueChange) -> str:
    if vc.change is None:
        return ""
    if math.isinf(vc.change):
        return "(new)"
    sign = "+" if (vc.delta or 0) >= 0 else "-"
    pct = 100 * vc.change
    return f"({sign}{pct:.1f}%)" if pct < 9.95 else f"({sign}{pct:.0f}%)"


def _cell(vc: ValueChange) -> str:
    if vc.old is None and vc.new is None:
        return "-"
    text = f"{_fmt(vc.old)} -> {_fmt(vc.new)}"
    if vc.old is not None and vc.new is not None and vc.old != vc.new:
        text += f" {_pct(vc)}"
    return text + (" *" if vc.flagged else "")


def unit_labels(units: Mapping[str, str]) -> dict[str, str]:
    """Unit text of each compared quantity."""
    f, l = units["force"], units["length"]
    return {"N": f, "V": f, "M": f"{f}*{l}", "deflection": l, "fx": f, "fy": f, "m": f"{f}*{l}"}


def _grid(head: list[str], rows: list[list[str]], indent: str = "  ") -> list[str]:
    widths = [max(len(r[i]) for r in [head] + rows) for i in range(len(head))]

    def line(r):
        return (indent + "  ".join(c.ljust(w) for c, w in zip(r, widths))).rstrip()

    return [line(head), line(["-" * w for w in widths])] + [line(r) for r in rows]


def _pt(p: tuple[float, float]) -> str:
    return f"({_fmt(p[0])}, {_fmt(p[1])})"


def comparison_table(cmp: Comparison, *, only_flagged: bool = False) -> str:
    """Readable plain-text tables, one block per pair of revisions.

    Cells read ``old -> new (+x%)``; ``*`` marks a flagged change.
    """
    u = unit_labels(cmp.units)
    out: list[str] = []
    for p in cmp.pairs:
        out.append(f"{p.old_source} -> {p.new_source}   (units {cmp.units['force']}, {cmp.units['length']}; "
                   f"* = change above {100 * cmp.threshold:g}%)")
        for n in p.notes:
            out.append(f"  note: {n}")
        if p.notes:
            out.append("")
            continue
        hows: dict[str, int] = {}
        for m in p.matched:
            hows[m.how] = hows.get(m.how, 0) + 1
        how_text = ", ".join(f"{n} {h}" for h, n in hows.items())
        out.append(f"  members: {len(p.matched)} matched ({how_text or 'none'}), {len(p.new_members)} new, "
                   f"{len(p.removed_members)} removed; flagged: {len(p.flagged_members)} member(s), "
                   f"{len(p.flagged_reactions)} reaction(s)")
        rows = [m for m in p.matched if m.flagged or not only_flagged]
        if rows:
            head = ["member (old -> new)", "layer", "how"] + [f"max |{q}| {u[q]}" if q != "deflection"
                                                               else f"deflection {u[q]}" for q in MEMBER_QUANTITIES]
            grid = [[f"{m.old.id} -> {m.new.id}" if m.old.id != m.new.id else m.new.id, m.new.layer, m.how]
                    + [_cell(m.value(q)) for q in MEMBER_QUANTITIES] for m in rows]
            out += _grid(head, grid)
        rows_r = [r for r in p.reactions if r.flagged or not only_flagged]
        if rows_r:
            out.append("")
            head = ["support at"] + [f"max |{q}| {u[q]}" for q in REACTION_QUANTITIES]
            out += _grid(head, [[_pt(r.new_at)] + [_cell(r.value(q)) for q in REACTION_QUANTITIES] for r in rows_r])
        for m in p.new_members:
            out.append(f"  new member {m.id} on {m.layer}: {_pt(m.start)} to {_pt(m.end)}")
        for m in p.removed_members:
            out.append(f"  removed member {m.id} on {m.layer}: {_pt(m.start)} to {_pt(m.end)}")
        for s in p.new_supports:
            out.append(f"  new support at {_pt(s)}")
        for s in p.removed_supports:
            out.append(f"  removed support at {_pt(s)}")
        out.append("")
    return "\n".join(out).rstrip() + "\n"


#: columns of the comparison CSV (one row per pair x member or support x quantity)
CSV_COLUMNS: tuple[str, ...] = (
    "old_revision", "new_revision", "item", "old_id", "new_id", "layer", "how", "x", "y",
    "quantity", "unit", "old", "new", "delta", "change", "flagged",
)


def comparison_rows(cmp: Comparison) -> list[dict[str, Any]]:
    """Flat rows of the comparison (the CSV's content)."""
    u = unit_labels(cmp.units)
    rows: list[dict[str, Any]] = []
    for p in cmp.pairs:
        base = {"old_revision": p.old_source, "new_revision": p.new_source}
        for m in p.matched:
            x, y = m.new.midpoint
            for v in m.values:
                rows.append({**base, "item": "member", "old_id": m.old.id, "new_id": m.new.id, "layer": m.new.layer,
                             "how": m.how, "x": x, "y": y, "quantity": v.quantity, "unit": u[v.quantity],
                             "old": v.old, "new": v.new, "delta": v.delta, "change": v.change,
                             "flagged": v.flagged})
        for m in p.new_members:
            x, y = m.midpoint
            rows.append({**base, "item": "member", "new_id": m.id, "layer": m.layer, "how": "new", "x": x, "y": y})
        for m in p.removed_members:
            x, y = m.midpoint
            rows.append({**base, "item": "member", "old_id": m.id, "layer": m.layer, "how": "removed", "x": x, "y": y})
        for r in p.reactions:
            for v in r.values:
                rows.append({**base, "item": "reaction", "how": "same place", "x": r.new_at[0], "y": r.new_at[1],
                             "quantity": v.quantity, "unit": u[v.quantity], "old": v.old, "new": v.new,
                             "delta": v.delta, "change": v.change, "flagged": v.flagged})
        for s in p.new_supports:
            rows.append({**base, "item": "reaction", "how": "new", "x": s[0], "y": s[1]})
        for s in p.removed_supports:
            rows.append({**base, "item": "reaction", "how": "removed", "x": s[0], "y": s[1]})
    return rows


def _json_clean(obj: Any) -> Any:
    if isinstance(obj, dict):
        return {str(k): _json_clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_json_clean(v) for v in obj]
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        f = float(obj)
        return f if math.isfinite(f) else None
    return obj


def write_comparison(cmp: Comparison, folder: Path | str, *, stem: str = "comparison") -> dict[str, Path]:
    """Write ``<stem>.csv`` and ``<stem>.json`` into ``folder`` (created),
    each atomically.  Returns ``{"csv": path, "json": path}``."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    paths = {"csv": folder / f"{stem}.csv", "json": folder / f"{stem}.json"}
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(CSV_COLUMNS), lineterminator="\n")
    w.writeheader()
    for r in comparison_rows(cmp):
        w.writerow({k: ("" if r.get(k) is None else (f"{r[k]:.12g}" if isinstance(r[k], float) else r[k]))
                    for k in CSV_COLUMNS})
    write_text(paths["csv"], buf.getvalue())
    write_text(paths["json"], json.dumps(_json_clean(cmp.to_dict()), indent=2, ensure_ascii=False,
                                         allow_nan=False) + "\n")
    return paths


# -- the marked drawing ----------------------------------------------------------------------

_CHANGES_COLOR = 30  # ACI orange
_NEW_COLOR = 3  # ACI green
_REMOVED_COLOR = 8  # ACI grey
_CLOUD_BULGE = 0.55  # tan(included angle / 4): scallops of about 115 degrees


def cloud_points(xmin: float, ymin: float, xmax: float, ymax: float, arc: float) -> list[tuple[float, float, float]]:
    """Vertices ``(x, y, bulge)`` of a closed revision cloud around a box.

    The box is walked counter-clockwise; each edge is cut into scallops of
    chord about ``arc`` with a positive bulge, so every arc bulges outward.
    """
    corners = [(xmin, ymin), (xmax, ymin), (xmax, ymax), (xmin, ymax)]
    pts: list[tuple[float, float, float]] = []
    for k in range(4):
        (x0, y0), (x1, y1) = corners[k], corners[(k + 1) % 4]
        n = max(1, int(round(math.hypot(x1 - x0, y1 - y0) / arc)))
        for s in range(n):
            t = s / n
            pts.append((x0 + t * (x1 - x0), y0 + t * (y1 - y0), _CLOUD_BULGE))
    return pts


def _drawing_unit(doc, fallback: str | None) -> str:
    from .units import INSUNITS

    code = int(doc.header.get("$INSUNITS", 0) or 0)
    if code in INSUNITS:
        return INSUNITS[code]
    if fallback:
        return fallback
    raise InputFileError("the drawing's $INSUNITS header does not give its length unit; "
                         "give --length-unit or [units] length in the settings")


def _layer_name(settings) -> str:
    try:
        return settings.output_layer("changes")
    except (AttributeError, KeyError):
        return "RESULT-CHANGES"


def _value_line(vc: ValueChange, unit: str) -> str:
    label = {"deflection": "defl"}.get(vc.quantity, vc.quantity)
    pct = _pct(vc)
    return f"{label} {_fmt(vc.old)} -> {_fmt(vc.new)} {unit}" + (f" {pct}" if pct else "")


def mark_changes(
    newest_dxf_source: Path | str,
    newest_report: Mapping,
    cmp: Comparison,
    out_path: Path | str,
    settings=None,
    *,
    drawing_unit: str | None = None,
) -> Path:
    """Write a copy of the newest drawing with a layer marking the last pair's changes.

    On the layer ``settings.output_layer("changes")`` (else
    ``"RESULT-CHANGES"``):

    * a revision cloud (closed LWPOLYLINE of outward arcs) around each
      flagged member and each flagged support, with a numbered tag
      (``C1``, ``C2``, ...) in a circle beside it;
    * a green cloud and tag ``N1``, ... around each new member and support;
    * a dashed grey line and tag ``R1``, ... where a removed member was;
    * a change schedule to the right of the frame: per tag the member or
      support and one line per flagged quantity, e.g.
      ``M 33.1 -> 41.2 kN*m (+24%)``.

    Every original entity is kept.  The copy passes ezdxf's audit and is
    written atomically.  ``newest_report`` gives the drawing's length unit
    (``units.drawing_length``) when the header does not; ``drawing_unit``
    overrides both.
    """
    from .reader import open_document
    from .settings import Settings

    src = Path(newest_dxf_source)
    # the same opening path as check and solve: damaged files are recovered
    doc, _notes = open_document(src, settings if isinstance(settings, Settings) else None)
    unit = drawing_unit or _drawing_unit(doc, (newest_report.get("units") or {}).get("drawing_length")
                                         or getattr(settings, "length_unit", None))
    s = length_unit_scale(cmp.units["length"]) / length_unit_scale(unit)  # comparison length -> drawing units
    layer = _layer_name(settings)
    if layer not in doc.layers:
        doc.layers.add(layer, color=_CHANGES_COLOR)
    if "D2F-CLOUD" not in doc.linetypes:
        doc.linetypes.add("D2F-CLOUD", pattern=[0.6, 0.5, -0.1], description="dxf2frame change cloud")
    msp = doc.modelspace()
    u = unit_labels(cmp.units)

    pair = cmp.pairs[-1] if cmp.pairs else None
    refs = [m.new for m in pair.matched] + pair.new_members + pair.removed_members if pair else []
    pts = [p for r in refs for p in (r.start, r.end)]
    pts += [p for r in (pair.reactions if pair else []) for p in (r.new_at,)]
    xy = np.array(pts or [(0.0, 0.0), (1.0, 1.0)], float) * s
    lo, hi = xy.min(axis=0), xy.max(axis=0)
    extent = float(max(hi[0] - lo[0], hi[1] - lo[1], 1e-9))
    margin, arc, height = 0.015 * extent, 0.02 * extent, 0.011 * extent

    def attribs(color: int | None) -> dict:
        return {"layer": layer} if color is None else {"layer": layer, "color": color}

    def cloud(box, color: int | None = None) -> None:
        xmin, ymin, xmax, ymax = box
        msp.add_lwpolyline(cloud_points(xmin - margin, ymin - margin, xmax + margin, ymax + margin, arc),
                           format="xyb", close=True, dxfattribs=attribs(color))

    def tag(label: str, at: tuple[float, float], color: int | None = None) -> None:
        r = 1.3 * height * max(1.0, 0.45 * len(label))
        msp.add_circle(at, r, dxfattribs=attribs(color))
        msp.add_mtext(label, dxfattribs={**attribs(color), "char_height": height, "insert": at,
                                         "attachment_point": 5})  # middle centre

    def beside(a: tuple[float, float], b: tuple[float, float]) -> tuple[float, float]:
        """A point off the midpoint of a-b on its local +y side, clear of the cloud."""
        L = math.dist(a, b) or 1.0
        nx, ny = -(b[1] - a[1]) / L, (b[0] - a[0]) / L
        d = 2 * margin + 1.6 * height
        return (0.5 * (a[0] + b[0]) + d * nx, 0.5 * (a[1] + b[1]) + d * ny)

    def ends(r: MemberRef) -> tuple[tuple[float, float], tuple[float, float]]:
        return (r.start[0] * s, r.start[1] * s), (r.end[0] * s, r.end[1] * s)

    def box_of(a, b) -> tuple[float, float, float, float]:
        return min(a[0], b[0]), min(a[1], b[1]), max(a[0], b[0]), max(a[1], b[1])

    entries: list[tuple[str, list[str], int | None]] = []
    if pair is not None:
        for k, m in enumerate(pair.flagged_members, start=1):
            a, b = ends(m.new)
            cloud(box_of(a, b))
            tag(f"C{k}", beside(a, b))
            head = f"member {m.new.id} on {m.new.layer}" + (f", {m.how} from {m.old.id}" if m.how != "same ends" else "")
            entries.append((f"C{k}", [head] + [_value_line(v, u[v.quantity]) for v in m.values if v.flagged], None))
        base = len(pair.flagged_members)
        for k, r in enumerate(pair.flagged_reactions, start=base + 1):
            x, y = r.new_at[0] * s, r.new_at[1] * s
            cloud((x, y, x, y))
            tag(f"C{k}", (x + 2 * margin + 1.6 * height, y - 2 * margin - 1.6 * height))
            entries.append((f"C{k}", [f"reaction at {_pt(r.new_at)}"]
                            + [_value_line(v, u[v.quantity]) for v in r.values if v.flagged], None))
        for k, m in enumerate(pair.new_members, start=1):
            a, b = ends(m)
            cloud(box_of(a, b), _NEW_COLOR)
            tag(f"N{k}", beside(a, b), _NEW_COLOR)
            entries.append((f"N{k}", [f"new member {m.id} on {m.layer}"], _NEW_COLOR))
        for k, p in enumerate(pair.new_supports, start=len(pair.new_members) + 1):
            x, y = p[0] * s, p[1] * s
            cloud((x, y, x, y), _NEW_COLOR)
            tag(f"N{k}", (x + 2 * margin + 1.6 * height, y - 2 * margin - 1.6 * height), _NEW_COLOR)
            entries.append((f"N{k}", [f"new support at {_pt(p)}"], _NEW_COLOR))
        for k, m in enumerate(pair.removed_members, start=1):
            a, b = ends(m)
            msp.add_line(a, b, dxfattribs={**attribs(_REMOVED_COLOR), "linetype": "D2F-CLOUD",
                                           "ltscale": max(extent / 50.0, 1e-6)})
            tag(f"R{k}", beside(a, b), _REMOVED_COLOR)
            entries.append((f"R{k}", [f"removed member {m.id} on {m.layer}"], _REMOVED_COLOR))
        for k, p in enumerate(pair.removed_supports, start=len(pair.removed_members) + 1):
            entries.append((f"R{k}", [f"removed support at {_pt(p)}"], _REMOVED_COLOR))

        # the change schedule, right of the frame
        x0, y = float(hi[0]) + 6 * margin, float(hi[1])
        title = [f"CHANGES {pair.old_source} -> {pair.new_source}",
                 f"flagged above {100 * cmp.threshold:g}% ({cmp.units['force']}, {cmp.units['length']})"]
        title += pair.notes
        if not (entries or pair.notes):
            title.append("no change above the threshold")
        msp.add_mtext("\\P".join(title), dxfattribs={**attribs(None), "char_height": height, "insert": (x0, y),
                                                       "attachment_point": 1})
        y -= (len(title) + 1) * 1.7 * height
        for label, lines, color in entries:
            msp.add_mtext(f"{label}  " + "\\P      ".join(lines),
                          dxfattribs={**attribs(color), "char_height": height, "insert": (x0, y),
                                      "attachment_point": 1})  # top left
            y -= (len(lines) + 0.6) * 1.7 * height

    auditor = doc.audit()
    if auditor.has_errors:  # pragma: no cover - would be a bug here
        raise RuntimeError(f"the marked drawing fails the audit: {[str(e) for e in auditor.errors][:3]}")
    out_path = Path(out_path)
    out_path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_path(out_path) as tmp:
        doc.saveas(tmp)
    return out_path



def _load_json_report(path: Path) -> dict:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read: {exc.strerror or exc}") from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputFileError(f"{path}: not a JSON report: {exc}") from None
    _check_report(data, str(path))
    return data


def _report_of_drawing(path: Path, args, units: tuple[str, str] | None):
    """Solve a drawing in memory and build its report (nothing written)."""
    from . import report as report_mod
    from .pipeline import analyse
    from .settings import load_settings

    settings = load_settings(getattr(args, "settings", None), path)
    an = analyse(path, settings, length_unit=getattr(args, "length_unit", None))
    fu, lu = units if units else (settings.force_unit, an.model.length_unit)
    limits = settings.deflection_limits() if hasattr(settings, "deflection_limits") else None
    rep = report_mod.build_report(an.model, an.determinacy, an.results, force_unit=fu, length_unit=lu,
                                  deflection_limits=limits)
    return rep, settings


def _drawing_for_report(path: Path, report: Mapping) -> Path | None:
    """The drawing a JSON report was made from, if it can be found beside it."""
    name = report.get("source")
    if not name:
        return None
    for folder in (path.parent, path.parent.parent):
        cand = folder / str(name)
        if cand.is_file() and cand.suffix.lower() == ".dxf":
            return cand
    return None


def _parse_units(text: str | None) -> tuple[str, str] | None:
    if not text:
        return None
    parts = [p.strip() for p in text.split(",")]
    if len(parts) != 2 or not all(parts):
        raise InputFileError(f"--units takes FORCE,LENGTH (for example kN,m or kip,ft), got {text!r}")
    unit_factor(parts[0], "force")
    length_unit_scale(parts[1])
    return parts[0], parts[1]


def run_compare_command(args, *, stream=None) -> int:
    """The ``compare`` command: returns 0 (changes or not); bad input raises
    :class:`~dxf2frame.errors.Dxf2FrameError` (exit 2 from the CLI).

    ``args``: ``revisions`` (paths, oldest first; ``.dxf`` drawings are
    solved in memory, anything else is read as a JSON report), ``out``
    (folder, default ``compared`` beside the newest input), ``threshold``
    (fraction, default from the newest revision's settings), ``units``
    (``"FORCE,LENGTH"``), ``settings``, ``length_unit``.
    """
    from .settings import load_settings

    stream = stream or sys.stdout
    paths = [Path(p) for p in args.revisions]
    if len(paths) < 2:
        raise InputFileError("compare needs two or more revisions (drawings or JSON reports), oldest first")
    for p in paths:
        if not p.is_file():
            raise InputFileError(f"{p}: no such file")
    units = _parse_units(getattr(args, "units", None))
    reports: list[dict] = []
    settings = None
    for p in paths:
        if p.suffix.lower() == ".dxf":
            rep, settings = _report_of_drawing(p, args, units)
        else:
            rep = _load_json_report(p)
            settings = None
        reports.append(rep)
    newest = paths[-1]
    newest_dxf = newest if newest.suffix.lower() == ".dxf" else _drawing_for_report(newest, reports[-1])
    if settings is None:
        settings = load_settings(getattr(args, "settings", None), newest_dxf or newest)
    threshold = args.threshold if getattr(args, "threshold", None) is not None else settings.compare_threshold
    cmp = compare_reports(reports, threshold=threshold, units=units)

    print(comparison_table(cmp), file=stream, end="")
    out = Path(args.out) if getattr(args, "out", None) else newest.parent / "compared"
    written = write_comparison(cmp, out, stem=f"{newest.stem}-comparison")
    if newest_dxf is not None:
        written["drawing"] = mark_changes(newest_dxf, reports[-1], cmp, out / f"{newest_dxf.stem}-changes.dxf",
                                          settings, drawing_unit=getattr(args, "length_unit", None)
                                          if newest.suffix.lower() == ".dxf" else None)
    else:
        print(f"note: the drawing of {newest} was not found beside it; no marked drawing written", file=stream)
    for p in written.values():
        print(f"wrote {p}", file=stream)
    return 0
