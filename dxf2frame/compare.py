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

Where the parts live: the data classes in :mod:`dxf2frame.revision_data`,
reading and converting reports in :mod:`dxf2frame.revision_reports`,
matching in :mod:`dxf2frame.revision_match`, the tables, CSV and JSON in
:mod:`dxf2frame.revision_output`, the marked drawing in
:mod:`dxf2frame.revision_marks`; this module compares and runs the
``compare`` command.  Every public name is importable from here.

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

import json
import re
import math
import sys
from pathlib import Path
from typing import Iterable, Mapping, Sequence

import numpy as np

from .errors import InputFileError, one_line, shorten
from .revision_data import (FLOOR_FRACTION, MEMBER_QUANTITIES, REACTION_QUANTITIES, Comparison, MemberChange,
                            MemberRef, ReactionChange, RevisionDiff, ValueChange)
from .revision_marks import cloud_points, mark_changes
from .revision_match import MOVE_FRACTION, PARALLEL_DEG, match_members
from .revision_output import CSV_COLUMNS, comparison_rows, comparison_table, unit_labels, write_comparison
from .revision_reports import _check_report, _member_governing, _member_refs, _support_governing, convert_report
from .staging import OutputSet, writing
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


# -- the command ----------------------------------------------------------------------------


def _load_json_report(path: Path) -> dict:
    try:
        text = path.read_text(encoding="utf-8")
        data = json.loads(text)
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read: {exc.strerror or exc}") from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputFileError(f"{path}: not a JSON report: {exc}") from None
    except RecursionError:
        raise InputFileError(f"{path}: not a JSON report: lists or tables nested too deep") from None
    except ValueError as exc:  # an integer longer than Python's digit limit
        raise InputFileError(f"{path}: not a JSON report: {shorten(str(exc), 120)}") from None
    if _ESCAPED_SURROGATE.search(text):
        _refuse_lone_surrogates(data, path)
    _check_report(data, str(path))
    return data


_ESCAPED_SURROGATE = re.compile(r"\\u[dD][89a-fA-F][0-9a-fA-F]{2}")
_LONE_SURROGATE = re.compile("[\ud800-\udfff]")


def _refuse_lone_surrogates(data, path: Path) -> None:
    """A JSON text may escape half a UTF-16 pair (``"\\udce9"``): such a
    string cannot be written to any file or terminal, so the report is
    refused naming the key."""
    stack = [(data, "")]
    while stack:
        node, where = stack.pop()
        items = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
        for k, v in items:
            at = f"{where}[{k}]" if isinstance(node, list) else (f"{where}.{k}" if where else str(k))
            if isinstance(v, (dict, list)):
                stack.append((v, at))
            elif isinstance(v, str) and _LONE_SURROGATE.search(v) or isinstance(k, str) and _LONE_SURROGATE.search(k):
                raise InputFileError(f"{path}: {one_line(shorten(at))} holds an escaped character that is "
                                     "not a Unicode character (half of a UTF-16 pair)")


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

    table = comparison_table(cmp)
    out = Path(args.out) if getattr(args, "out", None) else newest.parent / "compared"
    # staged and swapped in as one set (staging.OutputSet): a failure leaves
    # the previous comparison complete, never an empty folder or half of it
    what = f"the comparison of {newest.name}"
    with OutputSet(out, what=what) as out_set, writing(what, out):
        staged = write_comparison(cmp, out_set.staged("files"), stem=f"{newest.stem}-comparison")
        if newest_dxf is not None:
            staged["drawing"] = mark_changes(
                newest_dxf, reports[-1], cmp, out_set.staged("files") / f"{newest_dxf.stem}-changes.dxf",
                settings, drawing_unit=getattr(args, "length_unit", None)
                if newest.suffix.lower() == ".dxf" else None)
        written = dict(zip(staged, out_set.commit({p: out / p.name for p in staged.values()})))
    print(table, file=stream, end="")
    if newest_dxf is None:
        print(f"note: the drawing of {newest} was not found beside it; no marked drawing written", file=stream)
    for p in written.values():
        print(f"wrote {p}", file=stream)
    return 0
