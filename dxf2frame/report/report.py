"""The machine-readable report (JSON, schema 1) and the CSV of member extremes.

The keys of schema 1 (see the project's report schema) are a contract; this
module adds keys but never renames or drops one.  Added keys:

* top level: ``tool_version``, ``caution`` (the safety text), ``envelopes``
  (per combination family: the largest and smallest value of every member
  quantity and reaction, with the combination that governs it);
* ``units``: ``moment``, ``distributed``, ``drawing_length``;
* ``model``: ``elements`` (analysis elements; ``members`` counts reported
  members, i.e. groups of elements of one drawn span);
* ``determinacy``: ``warnings``, ``nodes_involved`` (unstable frames);
* per member: ``elements``, ``deflection_rel_max``, ``deflection_ratio``
  (length / the deflection a span check uses, see below; null when there is
  no deflection), ``deflection_limit`` (the span/limit ratio from the
  settings, null when none), ``deflection_ok``;
* per reaction: ``node``, ``support`` (the support kind);
* per probe: ``element``, ``at`` (distance from the member start),
  ``deflection``;
* storeys and drift: top level ``storeys``, ``drift_check``, ``checks``
  (the failing span/deflection and drift checks); per result ``drift``
  and ``nodes`` (see :mod:`.storeys`); ``notes``: one line per load the
  tool generated (self-weight).

Units and signs
---------------
The analysis is in SI (N, m); every number in the report is converted to
the report's force and length units at the very end: forces in FORCE,
moments in FORCE*LENGTH, positions, lengths and deflections in LENGTH.
Signs follow the drawing convention: N tension positive; V positive when it
turns the element clockwise; M positive when it bends the member concave
toward local +y (sagging for a beam drawn left to right); reactions along
global +X, +Y and moment counter-clockwise positive.  Numbers carry 12
significant digits (a whole number may be written without ``.0``); ``null``
means no value.

``deflection_max`` is the largest magnitude of the displacement of a point
of the member (sqrt(u**2 + v**2), including the movement of its ends), in
LENGTH, as the solver computes it exactly; null without member sections.

``deflection_rel_max`` is the largest transverse deflection of the member
measured from the chord joining its displaced end points (the first start
node and the last end node of its elements), in LENGTH, exact; null without
sections.  For a member of several collinear elements it is the largest over
its elements, each measured from that same member chord (so a deflected
internal node counts).  Rigid movement of the ends (sway, settlement) does
not enter it.

``deflection_ratio`` = length / the deflection a span check uses:

* both end nodes held (each is supported or joined by an element of another
  member): ``deflection_rel_max``, the deflection relative to the supports;
* an end node free (no support, no other member: a cantilever tip):
  ``deflection_max``, the total tip movement.

In an envelope, ``deflection_ratio`` is the smallest ratio over its
combinations (``deflection_ratio_by`` names it), ``deflection_rel_max`` the
largest relative deflection.
"""
from __future__ import annotations

import csv
import json
import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable, Iterable, Iterator, Mapping, Sequence

import numpy as np

from .. import CAUTION, __version__
from ..atomic import atomic_open
from ..errors import DrawingError
from ..numbers import label_value
from .table import DictColumn, Table, as_written, json_number
from ..units import length_unit_scale, unit_factor

if TYPE_CHECKING:  # pragma: no cover - typing only
    from ..solver import Frame, Member

    from ..drawing_model import DrawingModel

__all__ = [
    "UnitFactors",
    "unit_factors",
    "MemberGroup",
    "member_groups",
    "element_table",
    "locate_points",
    "assemble_report",
    "report_warnings",
    "build_report",
    "to_plain",
    "dumps_report",
    "write_json",
    "reaction_schedule",
    "write_reaction_schedule",
    "write_csv",
    "CSV_COLUMNS",
]

#: columns of the CSV, one row per result x member
CSV_COLUMNS: tuple[str, ...] = (
    "result", "kind", "member", "layer", "handle", "length",
    "n_min", "n_max", "v_min", "v_max", "m_min", "m_max",
    "m_min_at", "m_max_at", "deflection_max",
)

_QUANTITIES = ("n_min", "n_max", "v_min", "v_max", "m_min", "m_max")


# -- units --------------------------------------------------------------------


@dataclass(frozen=True)
class UnitFactors:
    """Multipliers from SI to the report's units.

    ``value_in_report = value_si * factor``: ``force`` for N, ``length``
    for m, ``moment`` for N*m, ``distributed`` for N/m.
    """

    force_unit: str
    length_unit: str
    force: float
    length: float

    @property
    def moment(self) -> float:
        return self.force * self.length

    @property
    def distributed(self) -> float:
        return self.force / self.length

    @property
    def moment_unit(self) -> str:
        return f"{self.force_unit}*{self.length_unit}"

    @property
    def distributed_unit(self) -> str:
        return f"{self.force_unit}/{self.length_unit}"


def unit_factors(force_unit: str, length_unit: str) -> UnitFactors:
    """Factors from SI to ``force_unit`` and ``length_unit`` (pint names).

    Raises :class:`~dxf2frame.errors.UnitError` for an unknown unit or one
    of the wrong dimension.

    >>> f = unit_factors("kN", "mm")
    >>> f.force, f.length, f.moment
    (0.001, 1000.0, 1.0)
    """
    return UnitFactors(force_unit, length_unit, 1.0 / unit_factor(force_unit, "force"),
                       1.0 / length_unit_scale(length_unit))


# -- member groups ------------------------------------------------------------


@dataclass
class MemberGroup:
    """The analysis elements of one reported member, in order from its start.

    ``offsets[k]`` is the distance [m] from the group's start to the start
    of ``members[k]``; ``length`` [m] is the total.
    """

    id: str
    members: list["Member"]
    offsets: list[float]
    length: float
    start: tuple[float, float]
    end: tuple[float, float]


def member_groups(frame: "Frame") -> dict[str, MemberGroup]:
    """Group the frame's elements by ``Member.group`` (first-seen order).

    Pieces of one drawn span all run the same way (start = smaller X, ties
    smaller Y), so they are ordered by their start node's (x, y).
    """
    by_group: dict[str, list] = {}
    for m in frame.members:
        by_group.setdefault(m.group, []).append(m)
    out: dict[str, MemberGroup] = {}
    nodes = frame.nodes
    for gid, members in by_group.items():
        members = sorted(members, key=lambda m: (nodes[m.start].x, nodes[m.start].y))
        offsets, total = [], 0.0
        for m in members:
            offsets.append(total)
            total += frame.geometry(m)[0]
        a, b = nodes[members[0].start], nodes[members[-1].end]
        out[gid] = MemberGroup(gid, members, offsets, total, (a.x, a.y), (b.x, b.y))
    return out


# -- numbers -------------------------------------------------------------------


_TABLE_KEYS = ("n_min", "n_max", "v_min", "v_max", "m_min", "m_max", "m_min_at", "m_max_at", "deflection_max")


def element_table(res, frame: "Frame") -> dict[str, np.ndarray]:
    """Extremes of every element of one result, in ``frame.members`` order [SI].

    Keys: n_min ... m_max, m_min_at, m_max_at (from the element start) and
    deflection_max (largest magnitude of the displacement along the
    element, NaN without sections), from the solver's vectorised
    ``member_table()``.
    """
    tbl = res.member_table()
    pos = {mid: i for i, mid in enumerate(res.members)}
    order = np.array([pos[m.id] for m in frame.members], dtype=int)
    return {k: np.asarray(tbl[k], dtype=float)[order] for k in _TABLE_KEYS}


@dataclass
class _GroupIndex:
    """Where each reported member's elements sit in ``frame.members``."""

    groups: list[MemberGroup]
    first: np.ndarray                     # element index of each group's first piece
    multi: list[tuple[int, list[int], list[float]]]  # (group, element indices, offsets [m])
    held: np.ndarray                      # per group: both end nodes supported or shared (bool)


def _group_index(frame: "Frame") -> _GroupIndex:
    groups = list(member_groups(frame).values())
    where = {m.id: i for i, m in enumerate(frame.members)}
    first = np.array([where[g.members[0].id] for g in groups], dtype=int)
    multi = [(gi, [where[m.id] for m in g.members], list(g.offsets))
             for gi, g in enumerate(groups) if len(g.members) > 1]
    return _GroupIndex(groups, first, multi, _held_ends(frame, groups))


def _held_ends(frame: "Frame", groups: list[MemberGroup]) -> np.ndarray:
    """Per group: True when both its end nodes (first start, last end) are
    held, i.e. carry a support or an element of another group.  A group's
    own elements are a straight chain, so exactly one of them touches each
    of its end nodes: another element makes the node count exceed one."""
    n = len(frame.nodes)
    ends = np.array([[m.start, m.end] for m in frame.members], dtype=int).reshape(-1, 2)
    deg = np.bincount(ends.ravel(), minlength=n)
    held = deg > 1
    for s in frame.supports:
        held[s.node] = True
    a = np.array([g.members[0].start for g in groups], dtype=int)
    b = np.array([g.members[-1].end for g in groups], dtype=int)
    return held[a] & held[b]


def _relative_table(res, frame: "Frame", gx: _GroupIndex) -> np.ndarray:
    """Per element (``frame.members`` order) [m]: the largest transverse
    deflection measured from the chord of its reported member (for a
    one-element member its own chord); NaN without sections, from the
    solver's vectorised ``relative_deflection_table``."""
    mres = res.members
    pos = {mid: i for i, mid in enumerate(mres)}
    order = np.array([pos[m.id] for m in frame.members], dtype=int)
    d = mres.end_displacements
    if not gx.multi or d is None:
        return np.asarray(mres.relative_deflection_table()["deflection_rel_max"], dtype=float)[order]
    # elements of one member are collinear and run the same way: their
    # local y agree, so the member chord is linear in the distance along it
    ref = d[:, [1, 3]].copy()
    for gi, idx, offs in gx.multi:
        rows = order[idx]
        vs, ve = d[rows[0], 1], d[rows[-1], 3]
        total = gx.groups[gi].length
        lens = np.array([frame.geometry(frame.members[i])[0] for i in idx])
        o = np.asarray(offs)
        ref[rows, 0] = vs + (ve - vs) * o / total
        ref[rows, 1] = vs + (ve - vs) * (o + lens) / total
    return np.asarray(mres.relative_deflection_table(ref)["deflection_rel_max"], dtype=float)[order]


def _group_values(tbl: dict[str, np.ndarray], gx: _GroupIndex) -> dict[str, np.ndarray]:
    """Element extremes combined per reported member (positions from the group's start)."""
    out = {k: v[gx.first].copy() for k, v in tbl.items()}
    for gi, idx, offs in gx.multi:
        for k, pick in (("n_min", np.min), ("n_max", np.max), ("v_min", np.min), ("v_max", np.max)):
            out[k][gi] = pick(tbl[k][idx])
        for k, better in (("m_min", np.argmin), ("m_max", np.argmax)):
            vals = tbl[k][idx]
            j = int(better(vals))          # first piece on ties: nearest the start
            out[k][gi] = vals[j]
            out[f"{k}_at"][gi] = offs[j] + tbl[f"{k}_at"][idx][j]
        for k in ("deflection_max", "deflection_rel_max"):
            d = tbl[k][idx]
            out[k][gi] = np.nan if np.all(np.isnan(d)) else np.nanmax(d)
    return out


def _limit_for(layer: str, limits: Mapping | None) -> float | None:
    """span/deflection limit of a layer from the settings' deflection table.

    Accepts ``{"limit": 240, "layers": {"FRAME-BEAMS": 360}}`` (the settings
    file's shape), a flat ``{"default": 240, "FRAME-BEAMS": 360}``, or an
    object with ``deflection_limit_for(layer)`` (a Settings).
    """
    if limits is None:
        return None
    fn = getattr(limits, "deflection_limit_for", None)
    if fn is not None:
        return float(fn(layer))
    if not limits:
        return None
    if "layers" in limits or "limit" in limits:
        per = limits.get("layers") or {}
        default = limits.get("limit", limits.get("default"))
    else:
        per, default = limits, limits.get("default")
    for key, val in per.items():
        if key.upper() == layer.upper():
            return float(val)
    return float(default) if default is not None else None


_ROW_KEYS = ("n_min", "n_max", "v_min", "v_max", "m_min", "m_max", "m_max_at", "m_min_at", "deflection_max",
             "deflection_rel_max")


@dataclass
class _StaticRows:
    """The parts of the member entries that do not depend on the result."""

    heads: list[dict]               # id, layer, handle, start, end, length (+ elements)
    lengths: np.ndarray             # [m]
    limits: np.ndarray              # span/deflection limit per member, NaN for none
    held: np.ndarray                # both end nodes held: the span check uses the relative deflection
    _texts: list[str] | None = None

    def head_texts(self) -> list[str]:
        """JSON text of each head (without braces), encoded once for all results."""
        if self._texts is None:
            self._texts = Table(self.heads, []).head_texts()
        return self._texts


def _static_rows(gx: _GroupIndex, uf: UnitFactors, limits: Mapping | None) -> _StaticRows:
    L = uf.length
    heads, limit_cache, lims = [], {}, []
    for grp in gx.groups:
        m0 = grp.members[0]
        head = {
            "id": grp.id, "layer": m0.layer, "handle": m0.handle,
            "start": [json_number(grp.start[0] * L), json_number(grp.start[1] * L)],
            "end": [json_number(grp.end[0] * L), json_number(grp.end[1] * L)],
            "length": json_number(grp.length * L),
        }
        if len(grp.members) > 1:
            head["elements"] = [m.id for m in grp.members]
        heads.append(head)
        if m0.layer not in limit_cache:
            limit_cache[m0.layer] = _limit_for(m0.layer, limits)
        lims.append(limit_cache[m0.layer])
    limits_arr = np.array([math.nan if v is None else v for v in lims], dtype=float)
    return _StaticRows(heads, np.array([g.length for g in gx.groups]), limits_arr, gx.held)


def _member_columns(res, frame: "Frame", gx: _GroupIndex, uf: UnitFactors, static: _StaticRows) -> dict[str, np.ndarray]:
    """Per reported member, for one result: the extremes in report units
    (keys of :data:`_ROW_KEYS`) and ``deflection_ratio`` (NaN where none):
    length / ``deflection_rel_max`` for a member with both ends held, else
    length / ``deflection_max``."""
    tbl = element_table(res, frame)
    tbl["deflection_rel_max"] = _relative_table(res, frame, gx)
    res.members.release()         # the tables are kept; large frames hold one result's pieces at a time
    g = _group_values(tbl, gx)
    F, L, M = uf.force, uf.length, uf.moment
    scale = {"n_min": F, "n_max": F, "v_min": F, "v_max": F, "m_min": M, "m_max": M,
             "m_max_at": L, "m_min_at": L, "deflection_max": L, "deflection_rel_max": L}
    cols = {k: g[k] * scale[k] for k in _ROW_KEYS}
    defl_m = np.where(static.held, g["deflection_rel_max"], g["deflection_max"])
    with np.errstate(divide="ignore", invalid="ignore"):
        cols["deflection_ratio"] = np.where(defl_m > 0, static.lengths / defl_m, np.nan)
    return cols


def _member_table(cols: dict[str, np.ndarray], static: _StaticRows) -> Table:
    """Report entries of every reported member from :func:`_member_columns`."""
    ratio = as_written(cols["deflection_ratio"])    # the check uses the ratio as the report gives it
    limit = static.limits
    known = np.isfinite(ratio) & np.isfinite(limit)
    ok = np.where(known, ratio >= np.where(known, limit, 0.0), False)
    columns: list[tuple[str, Any]] = [(k, cols[k]) for k in _ROW_KEYS]
    columns += [
        ("deflection_ratio", cols["deflection_ratio"]),
        ("deflection_limit", limit),
        ("deflection_ok", [bool(o) if k else None for o, k in zip(ok.tolist(), known.tolist())]),
    ]
    return Table(static.heads, columns, head_texts=static.head_texts())


def _reaction_rows(res, frame: "Frame", uf: UnitFactors) -> list[dict]:
    """Reactions summed per support node, in node order of first appearance."""
    kinds = {}
    for s in frame.supports:
        kinds.setdefault(s.node, s.kind)
    acc: dict[int, list[float]] = {}
    for r in res.reactions:
        a = acc.setdefault(int(r.node), [0.0, 0.0, 0.0])
        a[0] += r.fx
        a[1] += r.fy
        a[2] += r.m
    rows = []
    for node, (fx, fy, m) in acc.items():
        nd = frame.nodes[node]
        rows.append({
            "x": json_number(nd.x * uf.length), "y": json_number(nd.y * uf.length),
            "fx": json_number(fx * uf.force), "fy": json_number(fy * uf.force), "m": json_number(m * uf.moment),
            "node": node, "support": kinds.get(node, ""),
        })
    return rows


# -- probes -------------------------------------------------------------------


def locate_points(
    model: "DrawingModel", points: Iterable[tuple[float, float]], tolerance: float | None = None
) -> list[tuple[str, float]]:
    """Find the element under each drawing point.

    Parameters
    ----------
    model : the drawing model (frame in m, ``unit_scale`` m per drawing unit)
    points : (X, Y) in drawing units
    tolerance : largest distance [drawing units] from a member; default
        1/1000 of the larger side of the frame's extents.

    Returns
    -------
    (element id, local x [m]) per point.

    Raises
    ------
    DrawingError  when a point is farther than ``tolerance`` from every member.
    """
    frame = model.frame
    pts = list(points)
    if not pts:
        return []
    nodes = np.array([(n.x, n.y) for n in frame.nodes], dtype=float) / model.unit_scale
    si = np.array([m.start for m in frame.members])
    ei = np.array([m.end for m in frame.members])
    a, b = nodes[si], nodes[ei]
    d = b - a
    ll = np.einsum("ij,ij->i", d, d)
    if tolerance is None:
        span = np.ptp(nodes, axis=0).max() if len(nodes) else 1.0
        tolerance = 1e-3 * (span if span > 0 else 1.0)
    out = []
    for x, y in pts:
        p = np.array([float(x), float(y)])
        t = np.clip(np.einsum("ij,ij->i", p - a, d) / ll, 0.0, 1.0)
        q = a + t[:, None] * d
        dist = np.hypot(*(q - p).T)
        i = int(np.argmin(dist))
        m = frame.members[i]
        if dist[i] > tolerance:
            raise DrawingError(
                f"probe ({x:g}, {y:g}) is not on any member; the nearest, {m.group}, is {dist[i]:.4g} "
                f"{model.length_unit} away",
                hint=f"give a point within {tolerance:.3g} {model.length_unit} of a member centreline",
            )
        out.append((m.id, float(t[i] * math.sqrt(ll[i]) * model.unit_scale)))
    return out


def _probe_rows(res, located, probes, groups_of, uf: UnitFactors) -> list[dict]:
    rows = []
    for (px, py), (mid, xl) in zip(probes, located):
        mr = res.members[mid]
        x = np.array([xl])
        gid, off = groups_of[mid]
        row = {
            "x": json_number(px), "y": json_number(py), "member": gid,
            "n": json_number(float(np.asarray(mr.axial(x))[0]) * uf.force),
            "v": json_number(float(np.asarray(mr.shear(x))[0]) * uf.force),
            "m": json_number(float(np.asarray(mr.moment(x))[0]) * uf.moment),
            "element": mid, "at": json_number((off + xl) * uf.length),
        }
        try:
            d = mr.deflection(x)
        except Exception:  # noqa: BLE001
            d = None
        row["deflection"] = json_number(float(np.asarray(d[1])[0]) * uf.length) if d is not None else None
        rows.append(row)
    return rows


# -- envelopes ------------------------------------------------------------------


def _family(res) -> str:
    return res.family or "all"


def _envelope(name: str, family: str, names: list[str], cols: list[dict[str, np.ndarray]],
              reactions: list[list[dict]], static: _StaticRows) -> dict:
    """Envelope over results ``names`` from their member columns (report
    units) and reaction rows: per member and quantity the extreme value, its
    position for M, and the governing result (``<q>_by``; ties go to the
    earlier result)."""
    heads = [{"id": h["id"], "layer": h["layer"], "handle": h["handle"]} for h in static.heads]
    columns: list[tuple[str, Any]] = []
    by: dict[str, list[str]] = {}
    j = np.arange(len(heads))
    for q in _QUANTITIES:
        stack = np.vstack([c[q] for c in cols])
        w = np.argmax(stack, axis=0) if q.endswith("max") else np.argmin(stack, axis=0)
        by[q] = [names[k] for k in w.tolist()]
        columns += [(q, stack[w, j]), (f"{q}_by", by[q])]
        if q in ("m_max", "m_min"):
            columns.append((f"{q}_at", np.vstack([c[f"{q}_at"] for c in cols])[w, j]))
    dstack = np.vstack([c["deflection_max"] for c in cols])
    have = ~np.all(np.isnan(dstack), axis=0)
    dw = np.argmax(np.where(np.isnan(dstack), -np.inf, dstack), axis=0)
    rstack = np.vstack([c["deflection_rel_max"] for c in cols])
    qstack = np.vstack([c["deflection_ratio"] for c in cols])
    qhave = ~np.all(np.isnan(qstack), axis=0)
    qw = np.argmin(np.where(np.isnan(qstack), np.inf, qstack), axis=0)
    columns += [
        ("deflection_max", np.where(have, dstack[dw, j], np.nan)),
        ("deflection_max_by", [names[k] if h else None for k, h in zip(dw.tolist(), have.tolist())]),
        ("deflection_rel_max",
         np.where(have, np.nanmax(np.where(np.isnan(rstack), -np.inf, rstack), axis=0), np.nan)),
        ("deflection_ratio", np.where(qhave, qstack[qw, j], np.nan)),
        ("deflection_ratio_by", [names[k] if h else None for k, h in zip(qw.tolist(), qhave.tolist())]),
        ("deflection_limit", static.limits),
        ("governing", DictColumn({q: by[q] for q in _QUANTITIES})),
    ]
    members = Table(heads, columns)
    reac: dict[int, dict] = {}
    for rname, rows in zip(names, reactions):
        for rc in rows:
            e = reac.setdefault(rc["node"], {"node": rc["node"], "x": rc["x"], "y": rc["y"]})
            for c in ("fx", "fy", "m"):
                v = rc[c]
                if e.get(f"{c}_max") is None or v > e[f"{c}_max"]:
                    e[f"{c}_max"], e[f"{c}_max_by"] = v, rname
                if e.get(f"{c}_min") is None or v < e[f"{c}_min"]:
                    e[f"{c}_min"], e[f"{c}_min_by"] = v, rname
    return {"name": name, "family": family, "combinations": list(names),
            "members": members, "reactions": list(reac.values())}


# -- the report -----------------------------------------------------------------


def assemble_report(
    model: "DrawingModel",
    det,
    results: Sequence,
    *,
    force_unit: str,
    length_unit: str,
    probes: Iterable[tuple[float, float]] = (),
    deflection_limits: Mapping | None = None,
    probe_tolerance: float | None = None,
    drift: Mapping | None = None,
) -> dict:
    """Build the JSON report (schema 1), its long lists kept as columns.

    The result is the report as nested dicts and lists, except that the
    member lists of the results and envelopes are :class:`Table` objects
    (read-only sequences of dicts built on demand).  :func:`write_json` and
    :func:`write_csv` write it without materialising those rows;
    :func:`build_report` returns it as plain data.

    Parameters
    ----------
    model : the drawing model (frame in SI)
    det : the determinacy result (``solver.Determinacy``)
    results : ``CaseResult`` objects, load cases then combinations; empty
        for an unstable frame
    force_unit, length_unit : pint names of the report's units
    probes : (X, Y) drawing points where N, V, M are reported
    deflection_limits : span/deflection limits, ``{"limit": 240, "layers":
        {"FRAME-BEAMS": 360}}`` (or flat ``{"default": 240, layer: n}``)
    probe_tolerance : largest probe distance from a member [drawing units]
    drift : storey drift options ``{"limit": 400, "measure": "mean",
        "levels": None}`` (levels in drawing units; see
        :mod:`.storeys`); None: the defaults

    Raises
    ------
    DrawingError  a probe lies on no member
    UnitError  unknown report unit
    """
    # Long by intent: it lays out the schema-1 report block by block in the order of the schema
    # document.
    uf = unit_factors(force_unit, length_unit)
    frame = model.frame
    gx = _group_index(frame)
    static = _static_rows(gx, uf, deflection_limits)
    groups_of = {m.id: (g.id, off) for g in gx.groups for m, off in zip(g.members, g.offsets)}
    probes = [(float(x), float(y)) for x, y in probes]
    located = locate_points(model, probes, probe_tolerance) if (probes and results) else []

    det_warnings = list(det.warnings)
    determinacy = {
        "status": det.status,
        "degree": int(det.degree),
        "mechanisms": int(det.mechanisms),
        "count_check": det.count_check,
        "detail": det.detail,
        "warnings": det_warnings,
    }
    involved = det.nodes_involved
    if involved:
        determinacy["nodes_involved"] = [
            [{"node": int(n), "x": json_number(frame.nodes[n].x * uf.length), "y": json_number(frame.nodes[n].y * uf.length)}
             for n in mode]
            for mode in involved
        ]

    out_results, columns = [], []
    for res in results:
        cols = _member_columns(res, frame, gx, uf, static)
        columns.append(cols)
        entry = {
            "name": res.name,
            "kind": res.kind,
            "reactions": _reaction_rows(res, frame, uf),
            "members": _member_table(cols, static),
            "probes": _probe_rows(res, located, probes, groups_of, uf),
        }
        if res.factors:
            entry["factors"] = {k: float(v) for k, v in res.factors.items()}
        if res.family:
            entry["family"] = res.family
        out_results.append(entry)

    combos = [k for k, r in enumerate(results) if r.kind == "combination"]
    families: dict[str, list[int]] = {}
    for k in combos:
        families.setdefault(_family(results[k]), []).append(k)
    groups_to_envelope = [(f"envelope:{fam}", fam, ks) for fam, ks in families.items()]
    if len(families) > 1:
        groups_to_envelope.append(("envelope:all", "all", combos))
    envelopes = [
        _envelope(name, fam, [results[k].name for k in ks], [columns[k] for k in ks],
                  [out_results[k]["reactions"] for k in ks], static)
        for name, fam, ks in groups_to_envelope
    ]

    report = {
        "schema": 1,
        "source": Path(model.source).name,
        "units": {
            "force": force_unit, "length": length_unit,
            "moment": uf.moment_unit, "distributed": uf.distributed_unit,
            "drawing_length": model.length_unit,
        },
        "tool_version": __version__,
        "caution": CAUTION,
        "model": {
            "nodes": len(frame.nodes),
            "members": len(gx.groups),
            "supports": len(frame.supports),
            "hinges": int(model.hinges),
            "loads": int(model.n_loads),
            "elements": len(frame.members),
        },
        "determinacy": determinacy,
        "warnings": report_warnings(model, det),
        "results": out_results,
        "envelopes": envelopes,
    }
    _add_storeys_and_checks(report, model, results, uf, drift)
    return report


def report_warnings(model: "DrawingModel", det) -> list[str]:
    """The warnings of a solve: the model's (reading, guesses, the
    second-order check), then the determinacy check's that are not among
    them."""
    return list(model.warnings) + [w for w in det.warnings if w not in model.warnings]


def _add_storeys_and_checks(report: dict, model: "DrawingModel", results: Sequence, uf: UnitFactors,
                            drift: Mapping | None) -> None:
    """Storeys, drift, node tables and failing checks (see :mod:`.storeys`)."""
    from . import storeys

    storeys.add_storeys(report, model, results, uf.length, drift)
    storeys.finish_checks(report)
    report["notes"] = list(model.notes)           # loads the tool generated (self-weight)


def build_report(model: "DrawingModel", det, results: Sequence, **kw: Any) -> dict:
    """The JSON report (schema 1) as plain dicts and lists; arguments as
    :func:`assemble_report`."""
    return to_plain(assemble_report(model, det, results, **kw))


def to_plain(obj: Any) -> Any:
    """A copy of a report with every :class:`Table` turned into a list of dicts."""
    if isinstance(obj, Table):
        return obj.to_list()
    if isinstance(obj, dict):
        return {k: to_plain(v) for k, v in obj.items()}
    if isinstance(obj, list):
        return [to_plain(v) for v in obj]
    return obj


# -- writing ----------------------------------------------------------------------


def _default(obj: Any) -> Any:
    """JSON fallback for numpy scalars and arrays, paths."""
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, np.integer):
        return int(obj)
    if isinstance(obj, np.floating):
        return json_number(obj)
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"not JSON serialisable: {type(obj).__name__}")


def _is_table(v: Any) -> bool:
    if isinstance(v, Table):
        return len(v) > 0
    return isinstance(v, list) and bool(v) and all(isinstance(e, dict) for e in v)


def _json_chunks(report: Mapping, on_block: Callable[[Table, Table], None] | None = None) -> Iterator[str]:
    """The report as JSON text, in pieces (see :func:`dumps_report`).  A
    member table is written a block of rows at a time; ``on_block(table,
    block)`` is called after each block has been written."""
    enc = json.JSONEncoder(ensure_ascii=False, allow_nan=False, default=_default).encode

    def block(obj: Mapping, pad: str) -> Iterator[str]:
        items = list(obj.items())
        for n, (k, v) in enumerate(items):
            comma = "," if n < len(items) - 1 else ""
            head = f"{pad}{enc(str(k))}: "
            if not _is_table(v):
                yield head + enc(to_plain(v)) + comma + "\n"
                continue
            yield head + "[\n"
            inner = pad + "  "
            if isinstance(v, Table):
                sep = ",\n" + inner
                for i, part in enumerate(v.chunks()):
                    yield (sep if i else inner) + sep.join(part.json_lines())
                    if on_block is not None:
                        on_block(v, part)
                yield "\n"
            elif any(_is_table(x) for x in v[0].values()):   # rows of one list are alike
                for m, e in enumerate(v):
                    yield inner + "{\n"
                    yield from block(e, inner + "  ")
                    yield inner + ("}," if m < len(v) - 1 else "}") + "\n"
            else:
                yield inner + (",\n" + inner).join(map(enc, v)) + "\n"
            yield pad + "]" + comma + "\n"

    yield "{\n"
    yield from block(report, "  ")
    yield "}\n"


def dumps_report(report: Mapping) -> str:
    """The report as JSON text: nested objects indented, each entry of a
    long list (members, reactions, probes) on one line.  Member tables are
    written column-wise (:meth:`Table.json_lines`), other rows with the C
    encoder; NaN and infinity are refused."""
    return "".join(_json_chunks(report))


def probe_lines(report: Mapping) -> list[str]:
    """One console line per probe and result: where it lies and N, V, M
    there, in the report's units."""
    u = report.get("units", {})
    out = []
    for res in report.get("results", []):
        for p in res.get("probes", []) or []:
            out.append(f"probe ({p['x']:g}, {p['y']:g}) on {p['member']}, {res['name']}: "
                       f"N={label_value(p['n'])} {u.get('force', '')}, V={label_value(p['v'])} {u.get('force', '')}, "
                       f"M={label_value(p['m'])} {u.get('moment', '')}")
    return out


#: columns of the reaction schedule CSV (one row per envelope, support and component)
REACTION_SCHEDULE_COLUMNS = ("envelope", "node", "support", "x", "y", "component", "max", "max_by",
                             "min", "min_by", "governing", "uplift")


def reaction_schedule(report: Mapping) -> list[dict]:
    """Per envelope, support and component (Rx, Ry, M): max and min with
    the result governing each, ``governing`` (the one of larger magnitude)
    and ``uplift`` (Ry with a negative minimum: the support is pulled up
    under some combination).  Values in the report's units; empty when the
    report has no envelope."""
    rows = []
    for env in report.get("envelopes", []):
        for r in env.get("reactions", []):
            support = next((rc.get("support", "") for res in report.get("results", [])
                            for rc in res.get("reactions", []) if rc.get("node") == r["node"]), "")
            for comp, name in (("fx", "Rx"), ("fy", "Ry"), ("m", "M")):
                hi, lo = r.get(f"{comp}_max"), r.get(f"{comp}_min")
                if hi is None or lo is None:
                    continue
                gov = r[f"{comp}_max_by"] if abs(hi) >= abs(lo) else r[f"{comp}_min_by"]
                rows.append({"envelope": env["name"], "node": r["node"], "support": support, "x": r["x"], "y": r["y"],
                             "component": name, "max": hi, "max_by": r[f"{comp}_max_by"], "min": lo,
                             "min_by": r[f"{comp}_min_by"], "governing": gov,
                             "uplift": "yes" if comp == "fy" and lo < 0 else ""})
    return rows


def write_reaction_schedule(report: Mapping, path: Path | str) -> bool:
    """Write :func:`reaction_schedule` as CSV (atomically); False (nothing
    written) when the report has no envelope."""
    rows = reaction_schedule(report)
    if not rows:
        return False
    with atomic_open(path, "w", encoding="utf-8", newline="") as fh:
        w = csv.DictWriter(fh, REACTION_SCHEDULE_COLUMNS)
        w.writeheader()
        for row in rows:
            w.writerow({k: (f"{v:.6g}" if isinstance(v, float) else v) for k, v in row.items()})
    return True


def write_json(report: Mapping, path: Path | str, csv_path: Path | str | None = None) -> None:
    """Write the report as UTF-8 JSON (see :func:`dumps_report`), atomically;
    with ``csv_path`` also the CSV (:func:`write_csv`) in the same pass.

    The text is written piece by piece (member tables a block of rows at a
    time), so a report of a large frame is never held in memory as one
    string; in the same pass each block of a result's member table gives
    the CSV its rows from the same number texts.
    """
    if csv_path is None:
        with atomic_open(path, "w", encoding="utf-8") as fh:
            for chunk in _json_chunks(report):
                fh.write(chunk)
        return
    owner = {id(r.get("members")): r for r in report.get("results", [])}
    with atomic_open(path, "w", encoding="utf-8") as fh, \
            atomic_open(csv_path, "w", encoding="utf-8", newline="") as fc:
        csv.writer(fc).writerow(CSV_COLUMNS)

        own: dict = {}                                # the members' own cells, shared by the results

        def on_block(table: Table, part: Table) -> None:
            res = owner.get(id(table))
            if res is not None:
                _csv_rows(fc, res, part, own)

        for chunk in _json_chunks(report, on_block):
            fh.write(chunk)
        for res in report.get("results", []):        # results written as plain lists
            if not isinstance(res.get("members"), Table):
                _csv_rows(fc, res)


_NEEDS_QUOTES = re.compile('[,"\r\n]').search      # a CSV cell holding one of these is quoted


def _csv_text(values: Sequence) -> list[str]:
    """CSV cells of one column as the csv module writes them (excel
    dialect, minimal quoting): None empty, floats by repr, a string quoted
    when it holds a comma, a quote or a line break; each distinct value
    converted once."""
    cache: dict[Any, str] = {}
    out = []
    for v in values:
        t = cache.get(v) if v is not None else ""
        if t is None:
            s = repr(v) if isinstance(v, float) else str(v)
            if _NEEDS_QUOTES(s):
                s = '"' + s.replace('"', '""') + '"'
            t = cache[v] = s
        out.append(t)
    return out


_OWN_CSV = ("id", "layer", "handle", "length")      # the member's own CSV columns, the same in every result


def _own_cells(blk: Table, cache: dict | None) -> list[list[str]]:
    """CSV cells of a block's own columns (:data:`_OWN_CSV`).  When they
    come from the rows' heads (not from columns of the table) they are the
    same for every result whose block holds the same head dicts, so with a
    ``cache`` (one per write, while the report holds its heads) they are
    converted once, keyed by the identity of the block's heads."""
    key = None
    if cache is not None and not any(k in _OWN_CSV for k, _v in blk.columns):
        key = tuple(map(id, blk.heads))
        got = cache.get(key)
        if got is not None:
            return got
    got = [_csv_text(blk.csv_cells(k)) for k in _OWN_CSV]
    if key is not None:
        cache[key] = got
    return got


def _csv_rows(fc: Any, res: Mapping, part: Table | None = None, cache: dict | None = None) -> None:
    """Write the CSV rows of one result (a plain list of member dicts or a
    :class:`Table`), or of the block ``part`` of its table, to the text
    file ``fc`` (opened with ``newline=""``).  ``cache``: see :func:`_own_cells`."""
    members = res.get("members", [])
    if isinstance(members, Table):
        for blk in ([part] if part is not None else members.chunks()):
            n = len(blk)
            cols = [_csv_text([res["name"]]) * n, _csv_text([res["kind"]]) * n]
            cols += _own_cells(blk, cache)
            cols += [blk.csv_cells(k) for k in CSV_COLUMNS[6:]]      # number texts, "" for none
            if n:
                fc.write("\r\n".join(map(",".join, zip(*cols))) + "\r\n")
        return
    w = csv.writer(fc)
    for m in members:
        row = [res["name"], res["kind"], m["id"], m["layer"], m["handle"], m["length"]]
        row += [m[k] for k in CSV_COLUMNS[6:]]
        w.writerow(["" if v is None else v for v in row])


def write_csv(report: Mapping, path: Path | str) -> None:
    """Write one row per result x member (columns :data:`CSV_COLUMNS`), atomically.

    Values are in the report's units; an empty cell means no value (e.g. no
    deflection without sections).
    """
    with atomic_open(path, "w", encoding="utf-8", newline="") as fh:
        csv.writer(fh).writerow(CSV_COLUMNS)
        own: dict = {}
        for res in report.get("results", []):
            _csv_rows(fh, res, cache=own)
