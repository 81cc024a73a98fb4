"""Reading the revision history: the listing, the trend of one value, the
trend plot, and rebuilding the history from saved reports.

Changes between consecutive revisions are the comparison's own
(:func:`dxf2frame.revisions.compare_reports` on the reports the history
gives back, :func:`dxf2frame.revisions.history.revision_report`): the
same matching by geometry, the same governing values and the same flags
as ``compare`` on the two reports.  Every value is shown in the newest
revision's units (or those asked for).
"""
from __future__ import annotations

import math
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Mapping, Sequence

from ..errors import InputFileError, one_line
from .compare import compare_reports
from .data import MEMBER_QUANTITIES, REACTION_QUANTITIES, Comparison, RevisionDiff
from .history import HISTORY_FILENAME, History, Revision, content_hash, revision_of, revision_report, set_aside
from .outputs import format_percent, unit_labels
from .reports import convert_report, load_json_report, member_governing, support_governing

__all__ = ["SeriesView", "series_views", "history_table", "trend", "write_trend_png", "rebuild_history",
           "resolve_revision"]


@dataclass
class SeriesView:
    """The revisions of one series, oldest first, their reports converted to
    one set of units, and the comparison of consecutive ones (None with
    fewer than two revisions)."""

    series: str
    revisions: list[Revision]
    reports: list[dict]
    comparison: Comparison | None

    @property
    def units(self) -> dict[str, str]:
        return self.reports[-1]["units"]


def series_views(revisions: Sequence[Revision], *, threshold: float, units: tuple[str, str] | None = None,
                 series: str | None = None) -> list[SeriesView]:
    """Group revisions by series (or keep ``series`` only) and compare each group."""
    groups: dict[str, list[Revision]] = {}
    for r in revisions:
        groups.setdefault(r.series, []).append(r)
    if series is not None:
        if series not in groups:
            raise InputFileError(f"no series {series!r} in the history; it holds "
                                 f"{', '.join(sorted(groups)) or 'no solves'}")
        groups = {series: groups[series]}
    out = []
    for name, revs in groups.items():
        reps = [revision_report(r) for r in revs]
        fu, lu = units or (reps[-1]["units"]["force"], reps[-1]["units"]["length"])
        conv = [convert_report(r, fu, lu) for r in reps]
        cmp = compare_reports(reps, threshold=threshold, units=(fu, lu)) if len(reps) >= 2 else None
        out.append(SeriesView(name, revs, conv, cmp))
    return out


# -- the listing ---------------------------------------------------------------


def _largest(report: Mapping, q: str) -> float | None:
    vals = [g[q] for g in member_governing(report).values() if g[q] is not None]
    return max(vals) if vals else None


def _worst_ratio(rev: Revision) -> float | None:
    vals = [m["deflection_ratio"] for m in rev.members if m["deflection_ratio"] is not None]
    return min(vals) if vals else None


def change_summary(p: RevisionDiff) -> str:
    """One line: what changed from the previous revision."""
    if p.notes:
        return "; ".join(p.notes)
    parts = []
    if p.flagged_members:
        parts.append(f"{len(p.flagged_members)} member(s)")
    if p.flagged_reactions:
        parts.append(f"{len(p.flagged_reactions)} support(s)")
    text = (", ".join(parts) + " changed") if parts else "no change above the threshold"
    extra = [f"{n} {what}" for n, what in ((len(p.new_members), "new member(s)"),
                                           (len(p.removed_members), "removed member(s)"),
                                           (len(p.new_supports), "new support(s)"),
                                           (len(p.removed_supports), "removed support(s)")) if n]
    if extra:
        text += "; " + ", ".join(extra)
    best = None
    for item, name in [(m, m.new.id) for m in p.matched] + [(r, "support at ({:.4g}, {:.4g})".format(*r.new_at))
                                                            for r in p.reactions]:
        for v in item.values:
            if v.flagged and v.change is not None and math.isfinite(v.change) and (best is None or v.change > best[0]):
                best = (v.change, f"{v.quantity} of {name} {format_percent(v)}")
    if best:
        text += f"; largest: {best[1]}"
    return text


def history_table(views: Sequence[SeriesView]) -> str:
    """Plain-text listing: per series, one line per revision with its
    governing values and what changed from the previous one."""
    from ..numbers import summary_value

    out: list[str] = []
    for v in views:
        u = unit_labels(v.units)
        thr = f"; changes above {100 * v.comparison.threshold:g}% counted" if v.comparison else ""
        out.append(f"series {v.series}: {len(v.revisions)} recorded solve(s), units {v.units['force']}, "
                   f"{v.units['length']}{thr}")
        head = ["revision", "drawing", "solved at (UTC)", "determinacy", f"max |M| {u['M']}", f"max |V| {u['V']}",
                f"max |N| {u['N']}", "span/defl", "warnings", "changes from the previous revision"]
        rows = []
        for k, (rev, rep) in enumerate(zip(v.revisions, v.reports)):
            det = rev.status + (f" ({rev.degree})" if rev.degree else "")
            ratio = _worst_ratio(rev)
            change = "-" if k == 0 or v.comparison is None else change_summary(v.comparison.pairs[k - 1])
            rows.append([rev.name, rev.drawing, rev.solved_at[:19].replace("T", " "), det,
                         summary_value(_largest(rep, "M")), summary_value(_largest(rep, "V")),
                         summary_value(_largest(rep, "N")), "n/a" if ratio is None else f"L/{ratio:.0f}",
                         str(len(rev.warnings)), change])
        widths = [max(len(r[i]) for r in [head] + rows) for i in range(len(head))]
        line = lambda r: ("  " + "  ".join(c.ljust(w) for c, w in zip(r, widths))).rstrip()  # noqa: E731
        out += [line(head), line(["-" * w for w in widths])] + [line(r) for r in rows] + [""]
    return "\n".join(out).rstrip() + "\n"


# -- trends --------------------------------------------------------------------


def _point(text: str) -> tuple[float, float] | None:
    if "," not in text:
        return None
    try:
        x, y = (float(c) for c in text.split(","))
    except ValueError:
        raise InputFileError(f"--trend {text!r}: a support is given as X,Y (numbers)") from None
    return x, y


def trend(view: SeriesView, ident: str, quantity: str | None = None) -> tuple[str, list[float | None], str]:
    """The governing value of one member or support across the revisions.

    ``ident``: a member id (as reported in any revision; followed through
    the comparison's matching to the earlier and later revisions), or
    ``X,Y``: the support at that point (in the series' length unit).
    ``quantity``: N, V, M, deflection (members; default M) or fx, fy, m
    (supports; default fy).  Returns ``(quantity, values, unit)``, a value
    None where the member or support is not in that revision.
    """
    pt = _point(ident)
    n = len(view.revisions)
    qs = REACTION_QUANTITIES if pt is not None else MEMBER_QUANTITIES
    q = quantity or ("fy" if pt is not None else "M")
    if q not in qs:
        raise InputFileError(f"--quantity {q!r}: for a {'support' if pt is not None else 'member'} give one of "
                             f"{', '.join(qs)}")
    unit = unit_labels(view.units)[q]
    pairs = view.comparison.pairs if view.comparison else []
    tol = view.comparison.tolerance if view.comparison else 1e-9
    if pt is not None:
        supports = [support_governing(r, tol) for r in view.reports]
        keys: list = [None] * n
        for k in range(n - 1, -1, -1):
            at = supports[k][0]
            near = [p for p in at if math.dist(p, pt) <= max(tol, 1e-9)]
            if near:
                keys[k] = min(near, key=lambda p: math.dist(p, pt))
                break
        else:
            raise InputFileError(f"--trend {ident}: no support at ({pt[0]:g}, {pt[1]:g}) "
                                 f"{view.units['length']} in any revision of {view.series}")
        _follow(keys, k, pairs, lambda ch: (ch.old_at, ch.new_at), attr="reactions")
        values = []
        for k in range(n):
            at, gov = supports[k]
            if keys[k] is None or not at:
                values.append(None)
                continue
            j = min(range(len(at)), key=lambda i: math.dist(at[i], keys[k]))
            values.append(gov[j][q] if math.dist(at[j], keys[k]) <= max(tol, 1e-9) else None)
        return q, values, unit
    govs = [member_governing(r) for r in view.reports]
    keys = [None] * n
    for k in range(n - 1, -1, -1):
        if ident in govs[k]:
            keys[k] = ident
            break
    else:
        raise InputFileError(f"--trend {ident}: no member {ident!r} in any revision of {view.series} "
                             "(give a member id as in the report, or X,Y for a support)")
    _follow(keys, k, pairs, lambda ch: (ch.old.id, ch.new.id), attr="matched")
    return q, [None if keys[k] is None else govs[k].get(keys[k], {}).get(q) for k in range(n)], unit


def _follow(keys: list, start: int, pairs: Sequence[RevisionDiff], ends, attr: str) -> None:
    """Fill ``keys`` from revision ``start`` backwards and forwards through
    the matched members (or supports) of consecutive pairs."""
    for k in range(start - 1, -1, -1):
        hit = next((ends(ch)[0] for ch in getattr(pairs[k], attr) if ends(ch)[1] == keys[k + 1]), None)
        if hit is None:
            break
        keys[k] = hit
    for k in range(start + 1, len(keys)):
        hit = next((ends(ch)[1] for ch in getattr(pairs[k - 1], attr) if ends(ch)[0] == keys[k - 1]), None)
        if hit is None:
            break
        keys[k] = hit


def write_trend_png(view: SeriesView, ident: str, quantity: str, values: Sequence[float | None], unit: str,
                    out: Path) -> Path:
    """Plot the trend as a PNG (matplotlib object API, Agg), written atomically."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    from .. import CAUTION
    from ..atomic import atomic_path

    out = Path(out)
    if out.is_dir():
        raise InputFileError(f"--png {out}: a folder; give a file name ending in .png")
    if not out.parent.is_dir():
        raise InputFileError(f"--png {out}: the folder {out.parent} does not exist")
    fig = Figure(figsize=(8, 4.5), dpi=120)
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    xs = list(range(len(values)))
    pts = [(x, v) for x, v in zip(xs, values) if v is not None]
    if pts:
        ax.plot([p[0] for p in pts], [p[1] for p in pts], marker="o", color="#5b3a6b")
        for x, v in pts:
            ax.annotate(f"{v:.4g}", (x, v), textcoords="offset points", xytext=(0, 6), ha="center", fontsize=8)
    ax.set_xticks(xs, [r.name for r in view.revisions], rotation=30, ha="right", fontsize=8)
    ax.set_xlim(-0.5, max(len(values) - 0.5, 0.5))
    what = "support at" if _point(ident) else "member"
    ax.set_ylabel(f"max |{quantity}| [{unit}]" if quantity != "deflection" else f"deflection [{unit}]")
    ax.set_title(f"{view.series}: {what} {ident}, governing {quantity} across revisions", fontsize=10)
    ax.grid(True, alpha=0.3)
    fig.text(0.01, 0.01, CAUTION, fontsize=6, wrap=True)
    ax.margins(y=0.15)
    fig.subplots_adjust(bottom=0.22)
    with atomic_path(out) as tmp:
        fig.savefig(tmp, format="png")
    return out


# -- labels for compare --------------------------------------------------------


def resolve_revision(revisions: Sequence[Revision], ref: str) -> Revision:
    """The revision a ``compare --history`` argument names: ``#ID`` (a solve
    id), ``LABEL`` or ``SERIES:LABEL``; a label recorded more than once
    names its latest solve.  Anything else is an :class:`InputFileError`."""
    if ref.startswith("#"):
        hit = [r for r in revisions if str(r.id) == ref[1:]]
        if not hit:
            raise InputFileError(f"{ref}: no solve with that id in the history")
        return hit[0]
    series, _, label = ref.rpartition(":")
    hit = [r for r in revisions if r.label is not None and r.label.upper() == label.upper()
           and (not series or r.series == series)]
    if not hit:
        raise InputFileError(f"{ref}: no revision labelled {label!r} in the history"
                             + (f" of series {series!r}" if series else "")
                             + "; labels: " + (", ".join(sorted({f'{r.series}:{r.label}' for r in revisions
                                                                 if r.label})) or "none"))
    if len({r.series for r in hit}) > 1:
        raise InputFileError(f"{ref}: the label is in several series ({', '.join(sorted({r.series for r in hit}))}); "
                             "write SERIES:LABEL")
    return max(hit, key=lambda r: r.id)


# -- rebuilding ----------------------------------------------------------------


def _report_files(folder: Path) -> list[Path]:
    """JSON files in the folder and its immediate subfolders (``solved`` and
    any ``--out`` folder beside the drawings), hidden ones left out."""
    files = []
    for sub in [folder] + sorted(p for p in folder.iterdir() if p.is_dir() and not p.name.startswith(".")):
        files += sorted(p for p in sub.glob("*.json") if not p.name.startswith("."))
    return files


def rebuild_history(folder: Path) -> tuple[int, list[str], Path | None]:
    """Rebuild the history of ``folder`` from the saved JSON reports.

    Each file is read and validated as the comparison validates reports;
    one that is not a report is skipped with a note.  The drawing is the
    report's ``source`` in ``folder``; its content hash is recorded only
    when the drawing is not newer than the report.  The time of each solve
    is the report file's modification time.  A present history is first
    renamed aside (``...before-rebuild-<time>.sqlite``), never deleted.
    Returns ``(solves recorded, notes, the old history's new path or None)``.
    """
    import datetime as dt

    folder = Path(folder)
    if not folder.is_dir():
        raise InputFileError(f"{folder}: not a folder")
    found = []
    notes: list[str] = []
    for path in _report_files(folder):
        try:
            rep = load_json_report(path)
        except InputFileError as exc:
            notes.append(f"skipped {path}: {one_line(str(exc))}")
            continue
        if not isinstance(rep.get("source"), str) or not rep.get("determinacy"):
            notes.append(f"skipped {path}: not a solve report (no source drawing or determinacy)")
            continue
        found.append((path.stat().st_mtime, path, rep))
    old = folder / HISTORY_FILENAME
    moved = None
    if old.exists():
        moved = set_aside(old, "before-rebuild")
        if moved is None:
            raise InputFileError(f"{old}: cannot rename the present history aside; nothing rebuilt")
    found.sort(key=lambda t: (t[0], str(t[1])))
    with History(folder) as hist:
        for mtime, path, rep in found:
            drawing = folder / Path(rep["source"]).name
            digest = None
            if drawing.is_file() and drawing.stat().st_mtime <= mtime:
                digest = content_hash(drawing)
            series, label, label_from = revision_of(drawing)
            when = dt.datetime.fromtimestamp(mtime, dt.timezone.utc).isoformat(timespec="milliseconds")
            hist.record(rep, drawing=drawing.name, series=series, label=label, label_from=label_from,
                        digest=digest, solved_at=when, report_path=os.fspath(path))
    return len(found), notes, moved
