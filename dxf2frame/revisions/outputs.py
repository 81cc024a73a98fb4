"""The comparison as text and files: terminal tables, rows, CSV and JSON.

:func:`comparison_table` gives plain-text tables, one block per pair of
revisions; :func:`comparison_rows` the flat rows (columns
:data:`CSV_COLUMNS`) and :func:`write_comparison` the CSV and JSON files,
each written atomically.  :func:`unit_labels` and the number formats
(``cell_value``, ``format_percent``, ``format_point``) are shared with the marked drawing.
"""
from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from ..atomic import write_text
from ..numbers import cell_value
from .data import MEMBER_QUANTITIES, REACTION_QUANTITIES, Comparison, ValueChange

__all__ = ["comparison_table", "comparison_rows", "unit_labels", "CSV_COLUMNS", "write_comparison"]


# -- text output ------------------------------------------------------------------------


def format_percent(vc: ValueChange) -> str:
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
    text = f"{cell_value(vc.old)} -> {cell_value(vc.new)}"
    if vc.old is not None and vc.new is not None and vc.old != vc.new:
        text += f" {format_percent(vc)}"
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


def format_point(p: tuple[float, float]) -> str:
    return f"({cell_value(p[0])}, {cell_value(p[1])})"


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
            out += _grid(head, [[format_point(r.new_at)] + [_cell(r.value(q)) for q in REACTION_QUANTITIES] for r in rows_r])
        for m in p.new_members:
            out.append(f"  new member {m.id} on {m.layer}: {format_point(m.start)} to {format_point(m.end)}")
        for m in p.removed_members:
            out.append(f"  removed member {m.id} on {m.layer}: {format_point(m.start)} to {format_point(m.end)}")
        for s in p.new_supports:
            out.append(f"  new support at {format_point(s)}")
        for s in p.removed_supports:
            out.append(f"  removed support at {format_point(s)}")
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
