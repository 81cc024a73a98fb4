"""Storeys, storey drift, the node table and the failing checks of a report.

Added to the report (schema 1: keys added, none renamed):

* top level ``storeys``: one entry per storey found in the frame (or set
  by ``[drift] levels``), lowest first: ``storey`` (1 = lowest),
  ``bottom``, ``top``, ``height`` [LENGTH], and over the service-level
  results (the ASD combinations, else the load cases) the drift of
  largest magnitude: ``drift`` [LENGTH, + = the level sways toward +X
  relative to the level below], ``ratio`` (drift / height, signed),
  ``ratio_text`` (``"h/812"``), ``limit`` (400 for h/400), ``ok``,
  ``governing`` (the result); drift values are null when the frame was
  solved without sections;
* top level ``drift_check``: ``limit``, ``measure`` ("mean" or "max" over
  the storey's column lines), ``results`` (the service-level result names
  the storeys' worst drift is taken over);
* top level ``checks``: every failing check, ``{"check": "deflection",
  "member", "layer", "handle", "result", "ratio", "limit"}`` (ratio =
  span / deflection) or ``{"check": "drift", "storey", "result", "ratio",
  "limit"}`` (ratio = height / |drift|); empty when all pass;
* per result ``drift``: per storey ``storey``, ``drift``, ``ratio``,
  ``ok`` (empty without sections);
* per result ``nodes``: per node ``node`` (id), ``x``, ``y`` [LENGTH], ``ux``,
  ``uy`` [LENGTH, global +X right, +Y up], ``rotation`` [rad,
  counter-clockwise]; displacements null without sections.

The drift limit h/400 is common practice for service wind drift (usual
range h/600 to h/400).
"""
from __future__ import annotations

import csv
import math
from pathlib import Path
from typing import TYPE_CHECKING, Any, Mapping, Sequence

import numpy as np

from ..atomic import atomic_open
from ..solver import DEFAULT_DRIFT_LIMIT, Storeys, find_storeys, node_table, storey_drifts
from .table import Table, json_number

if TYPE_CHECKING:  # pragma: no cover
    from ..solver import Frame

__all__ = [
    "DRIFT_CSV_COLUMNS",
    "NODE_CSV_COLUMNS",
    "service_results",
    "model_storeys",
    "drift_entries",
    "storey_summary",
    "node_rows",
    "failing_checks",
    "check_warnings",
    "add_storeys",
    "finish_checks",
    "ratio_text",
    "write_drift_csv",
    "write_nodes_csv",
]

DRIFT_CSV_COLUMNS = ("result", "kind", "storey", "bottom", "top", "height", "drift", "ratio", "limit", "ok")
NODE_CSV_COLUMNS = ("result", "kind", "node", "x", "y", "ux", "uy", "rotation")


def ratio_text(ratio: float | None, letter: str = "h") -> str:
    """``"h/812"`` for a drift ratio 1/812 (either sign); ``"-"`` for none.

    >>> ratio_text(-1 / 812.4)
    'h/812'
    """
    if ratio is None or not math.isfinite(ratio):
        return "-"
    if ratio == 0:
        return f"{letter}/inf"
    return f"{letter}/{1.0 / abs(ratio):.0f}"


def service_results(results: Sequence) -> list:
    """The results a service-level check (drift, deflection) uses: the ASD
    combinations, else the load cases (common practice: serviceability
    under unfactored loads)."""
    asd = [r for r in results if r.kind == "combination" and r.family == "ASD"]
    return asd or [r for r in results if r.kind == "case"]


def model_storeys(model, levels: Sequence[float] | None) -> Storeys:
    """The storeys of a drawing's model; ``levels``: ``[drift] levels`` in
    drawing units, or None to find them.  Elevations in the warnings are
    written in the drawing's own unit (``3000 mm``), as the drafter drew them.

    Raises :class:`~dxf2frame.errors.SettingsError` (key ``drift.levels``)
    for a level with no column top on it."""
    from ..errors import SettingsError

    us = model.unit_scale

    def in_drawing_units(v: float) -> str:
        return f"{v / us:.6g} {model.length_unit}"

    try:
        return find_storeys(model.frame, None if levels is None else [v * us for v in levels],
                            length_text=in_drawing_units)
    except ValueError as exc:
        raise SettingsError(f"{exc} ([drift] levels are elevations in drawing units, {model.length_unit})",
                            key="drift.levels") from None


def drift_entries(frame: "Frame", res, storeys: Storeys, limit: float, measure: str) -> list:
    """``solver.StoreyDrift`` of every storey in one result; empty without displacements."""
    if res.displacements is None or not len(storeys):
        return []
    return storey_drifts(frame, res, storeys, limit=limit, measure=measure)


def storey_summary(storeys: Storeys, per_result: Mapping[str, list], service: Sequence[str],
                   limit: float, length: float) -> list[dict]:
    """The top-level ``storeys`` entries: each storey's worst drift over the
    ``service`` results (ties: the earlier result); ``length``: report
    units per metre."""
    out = []
    for st in storeys:
        best = None
        for name in service:
            for d in per_result.get(name, []):
                if d.storey == st.index and (best is None or abs(d.ratio) > abs(best.ratio)):
                    best = d
        out.append({
            "storey": st.index,
            "bottom": json_number(st.bottom * length), "top": json_number(st.top * length),
            "height": json_number(st.height * length),
            "drift": json_number(best.drift * length) if best else None,
            "ratio": json_number(best.ratio) if best else None,
            "ratio_text": ratio_text(best.ratio) if best else "-",
            "limit": json_number(limit),
            "ok": bool(best.ok) if best else None,
            "governing": best.result if best else None,
        })
    return out


def drift_rows(drifts: list, length: float) -> list[dict]:
    """The per-result ``drift`` entries."""
    return [{"storey": d.storey, "drift": json_number(d.drift * length), "ratio": json_number(d.ratio),
             "ok": bool(d.ok)} for d in drifts]


def node_heads(frame: "Frame") -> list[dict]:
    """Heads of the node table (shared by every result)."""
    return [{"node": int(n.id)} for n in frame.nodes]


def node_rows(frame: "Frame", res, length: float, heads: list[dict], head_texts: list[str] | None) -> Table:
    """The per-result ``nodes`` table in report units."""
    t = node_table(frame, res)
    cols = [("x", t["x"] * length), ("y", t["y"] * length), ("ux", t["ux"] * length),
            ("uy", t["uy"] * length), ("rotation", t["rz"])]
    return Table(heads, cols, head_texts=head_texts)


def failing_checks(report: Mapping) -> list[dict]:
    """Every failing span/deflection check (over the service-level results,
    the worst result per member) and drift check (from ``storeys``)."""
    out: list[dict] = []
    service = set(report.get("drift_check", {}).get("results", []))
    worst: dict[str, dict] = {}
    for r in report.get("results", []):
        if r["name"] not in service:
            continue
        members = r["members"]
        ok = (_column(members, "deflection_ok") if isinstance(members, Table)
              else [m.get("deflection_ok") for m in members])
        for i, flag in enumerate(ok):
            if flag is not False:
                continue
            m = members[i]
            cur = worst.get(m["id"])
            if cur is None or m["deflection_ratio"] < cur["ratio"]:
                worst[m["id"]] = {"check": "deflection", "member": m["id"], "layer": m["layer"],
                                  "handle": m["handle"], "result": r["name"], "ratio": m["deflection_ratio"],
                                  "limit": m["deflection_limit"]}
    out += list(worst.values())
    for s in report.get("storeys", []):
        if s.get("ok") is False:
            out.append({"check": "drift", "storey": s["storey"], "result": s["governing"],
                        "ratio": json_number(1.0 / abs(s["ratio"])), "limit": s["limit"]})
    return out


def _column(table: Table, key: str) -> Sequence:
    for k, values in table.columns:
        if k == key:
            return values
    return [h.get(key) for h in table.heads]


def add_storeys(report: dict, model, results: Sequence, length: float,
                drift: Mapping[str, Any] | None) -> list[str]:
    """Add ``storeys``, ``drift_check``, and per result ``drift`` and
    ``nodes`` to an assembled report (entries of ``report["results"]`` in
    the order of ``results``); ``length``: report units per metre;
    ``drift``: ``{"limit", "measure", "levels"}`` (levels in drawing units
    or None).  Returns the storey warnings (guesses made), also added to
    the report's warnings.

    Raises :class:`~dxf2frame.errors.SettingsError` when a level of
    ``[drift] levels`` has no column top on it.
    """
    drift = dict(drift or {})
    limit = float(drift.get("limit") or DEFAULT_DRIFT_LIMIT)
    measure = str(drift.get("measure") or "mean")
    frame = model.frame
    storeys = model_storeys(model, drift.get("levels"))
    heads = node_heads(frame)
    texts = Table(heads, []).head_texts() if heads else None
    per_result: dict[str, list] = {}
    for res, entry in zip(results, report["results"]):
        d = drift_entries(frame, res, storeys, limit, measure)
        per_result[res.name] = d
        entry["drift"] = drift_rows(d, length)
        entry["nodes"] = node_rows(frame, res, length, heads, texts) if heads else []
    service = [r.name for r in service_results(results)]
    report["storeys"] = storey_summary(storeys, per_result, service, limit, length)
    report["drift_check"] = {"limit": limit, "measure": measure, "results": service}
    notes = list(storeys.warnings)
    report["warnings"] = list(report.get("warnings", [])) + [w for w in notes if w not in report["warnings"]]
    return notes


def finish_checks(report: dict) -> list[str]:
    """Add ``checks`` (the failing checks) to a report with ``storeys`` and
    a warning line per failing check to its warnings; returns those lines."""
    report["checks"] = failing_checks(report)
    lines = check_warnings(report["checks"])
    report["warnings"] = list(report.get("warnings", [])) + lines
    return lines


def check_warnings(checks: Sequence[Mapping]) -> list[str]:
    """One warning line per failing check."""
    lines = []
    for c in checks:
        if c["check"] == "deflection":
            lines.append(f"deflection check fails: member {c['member']} (layer {c['layer']}, handle {c['handle']}) "
                         f"deflects L/{c['ratio']:.0f} in {c['result']}, worse than the limit L/{c['limit']:g}")
        else:
            lines.append(f"drift check fails: storey {c['storey']} drifts h/{c['ratio']:.0f} in {c['result']}, "
                         f"worse than the limit h/{c['limit']:g}")
    return lines


def _cell(v: Any) -> Any:
    return "" if v is None else v


def write_drift_csv(report: Mapping, path: Path | str) -> None:
    """One row per result x storey (:data:`DRIFT_CSV_COLUMNS`), atomically;
    ``bottom``, ``top``, ``height``, ``drift`` in the report's length unit."""
    geo = {s["storey"]: s for s in report.get("storeys", [])}
    limit = report.get("drift_check", {}).get("limit", DEFAULT_DRIFT_LIMIT)
    with atomic_open(path, "w", encoding="utf-8", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(DRIFT_CSV_COLUMNS)
        for r in report.get("results", []):
            for d in r.get("drift", []):
                s = geo.get(d["storey"], {})
                w.writerow([r["name"], r["kind"], d["storey"], _cell(s.get("bottom")), _cell(s.get("top")),
                            _cell(s.get("height")), _cell(d["drift"]), _cell(d["ratio"]), limit,
                            "true" if d["ok"] else "false"])


def write_nodes_csv(report: Mapping, path: Path | str) -> None:
    """One row per result x node (:data:`NODE_CSV_COLUMNS`), atomically; an
    empty cell means no value (solved without sections)."""
    with atomic_open(path, "w", encoding="utf-8", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(NODE_CSV_COLUMNS)
        for r in report.get("results", []):
            nodes = r.get("nodes")
            if nodes is None:
                continue
            if isinstance(nodes, Table):
                cells = [nodes.csv_cells(k) for k in ("node", "x", "y", "ux", "uy", "rotation")]
                name, kind = r["name"], r["kind"]
                for row in zip(*cells):
                    w.writerow([name, kind, *row])
            else:
                for n in nodes:
                    w.writerow([r["name"], r["kind"], n["node"], *(_cell(n[k]) for k in
                                                                 ("x", "y", "ux", "uy", "rotation"))])
