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

Where the parts live: the data classes in :mod:`dxf2frame.revisions.data`,
reading and converting reports in :mod:`dxf2frame.revisions.reports`,
matching in :mod:`dxf2frame.revisions.matching`, the tables, CSV and JSON in
:mod:`dxf2frame.revisions.outputs`, the marked drawing in
:mod:`dxf2frame.revisions.marks`; this module compares.  The ``compare``
command itself runs in :mod:`dxf2frame.commands`.

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

import math
from typing import Iterable, Mapping, Sequence

import numpy as np

from ..errors import InputFileError
from .data import (FLOOR_FRACTION, MEMBER_QUANTITIES, REACTION_QUANTITIES, Comparison, MemberChange,
                   ReactionChange, RevisionDiff, ValueChange)
from .matching import match_members
from .reports import check_report, convert_report, member_governing, member_refs, support_governing

__all__ = [
    "DEFAULT_THRESHOLD",
    "TOLERANCE_FRACTION",
    "compare_reports",
]

#: relative change flagged by default (settings ``[compare] threshold``)
DEFAULT_THRESHOLD = 0.05
#: default matching tolerance, as a fraction of the larger drawing extent
TOLERANCE_FRACTION = 1e-3


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
    pts = [p for rep in reports for r in member_refs(rep) for p in (r.start, r.end)]
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

    old_refs, new_refs = member_refs(old_rep), member_refs(new_rep)
    g_old, g_new = member_governing(old_rep), member_governing(new_rep)
    at_old, s_old = support_governing(old_rep, tol)
    at_new, s_new = support_governing(new_rep, tol)
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
    unplaced: list[int] = []
    for j, p in enumerate(at_new):
        best = None
        for i, q in enumerate(at_old):
            if i in used_old:
                continue
            d = math.dist(p, q)
            if d <= tol and (best is None or d < best[0]):
                best = (d, i)
        if best is None:
            unplaced.append(j)
            continue
        i = best[1]
        used_old.add(i)
        values = tuple(_change(q, s_old[i][q], s_new[j][q], floors[dim], threshold)
                       for q, dim in REACTION_QUANTITIES.items())
        diff.reactions.append(ReactionChange(at_old[i], p, values))
    # a support that moved with its member: the same end of a matched member in both revisions
    for j in unplaced:
        i = _moved_support(at_new[j], at_old, used_old, diff.matched, tol)
        if i is None:
            diff.new_supports.append(at_new[j])
            continue
        used_old.add(i)
        values = tuple(_change(q, s_old[i][q], s_new[j][q], floors[dim], threshold)
                       for q, dim in REACTION_QUANTITIES.items())
        diff.reactions.append(ReactionChange(at_old[i], at_new[j], values))
    diff.removed_supports = [q for i, q in enumerate(at_old) if i not in used_old]
    return diff


def _moved_support(p, at_old, used_old: set[int], matched, tol: float) -> int | None:
    """Index of the old support at the end of a matched member whose new end
    is at ``p`` (the support moved with the member: the same support), or
    None.  The member's ends correspond start to start unless the match
    reversed it (then the nearer pairing is taken)."""
    for mc in matched:
        a, b = mc.old, mc.new
        same = math.dist(a.start, b.start) + math.dist(a.end, b.end)
        swapped = math.dist(a.start, b.end) + math.dist(a.end, b.start)
        ends = ((b.start, a.start), (b.end, a.end)) if same <= swapped else ((b.start, a.end), (b.end, a.start))
        for new_end, old_end in ends:
            if math.dist(p, new_end) > tol:
                continue
            for i, q in enumerate(at_old):
                if i not in used_old and math.dist(q, old_end) <= tol:
                    return i
    return None


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
        check_report(rep, str(rep.get("source", f"revision {k + 1}")) if isinstance(rep, Mapping) else f"revision {k + 1}")
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
