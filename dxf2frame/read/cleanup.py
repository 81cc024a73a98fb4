"""Drawn linework and symbols -> a clean ``solver.Frame``.

Pure geometry on plain tuples: nothing here knows about DXF, so it is
tested without drawings.  All coordinates, tolerances and loads are SI
(m, N, N/m, N*m); the caller converts drawing units first.

What :func:`build_frame` does, in order:

1. Segments not longer than the tolerance are dropped (warning naming the
   handle).
2. Endpoints, support points and connection points closer than the
   tolerance are merged (pairs from an STRtree of the points, clusters keep their first point).
3. A segment is split where another segment's end, a support, a JOINT or a
   HINGE lies on its interior (within tolerance; candidates come from a
   shapely STRtree, so no all-pairs loop).  Two segments that cross are
   joined rigidly at the crossing (both are split there), as drafters draw
   column lines full height and floor lines full width; they stay separate
   when both lie on an unjoined layer (``unjoined_layers``, default
   ``FRAME-BRACES``) or a CROSSOVER symbol sits on the crossing.  A JOINT
   or HINGE on a crossing joins it whatever the layers.  FORCE and COUPLE
   loads do not split anything.
4. Pieces get ids ``"<handle>-<k>"``, k = 1, 2, ... counted along the drawn
   entity from its first vertex.  A piece split only by a HINGE that
   touches nothing else becomes elements ``"<handle>-<k>a"``,
   ``"<handle>-<k>b"``, ... (lettered from the piece's start) sharing
   ``group = "<handle>-<k>"``.
5. Exact duplicates (same two nodes) are dropped with a warning naming
   both handles.
6. Each member starts at its end with the smaller X; when the X values
   differ by no more than the tolerance the smaller Y is the start.
7. Supports, hinge releases, settlements; every connected part must hold a
   support.
8. Loads: FORCE/COUPLE on a node -> ``NodalLoad``, inside a span ->
   ``PointLoad`` / ``MemberCouple`` at distance ``a`` from the member
   start; UDL -> ``DistributedLoad`` on the piece (group) under its
   insertion point, ``FROM``/``TO`` measured from that piece's start.

Examples
--------
>>> res = build_frame([Segment((0.0, 0.0), (6.0, 0.0), "2A", "FRAME")],
...                   supports=[SupportSpec((0.0, 0.0), "pin", handle="3B"),
...                             SupportSpec((6.0, 0.0), "roller", handle="3C")],
...                   tol=1e-4)
>>> [(m.id, m.start, m.end) for m in res.frame.members]
[('2A-1', 0, 1)]
"""
from __future__ import annotations

import math
import string
from collections import defaultdict
from dataclasses import dataclass, field
from typing import Callable, Iterable, Literal, Sequence, Union

import networkx as nx
import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from ..solver import (
    DistributedLoad,
    Frame,
    MemberCouple,
    NodalLoad,
    PointLoad,
    Section,
    Settlement,
)

from ..errors import DrawingError, GeometryError

__all__ = [
    "Point",
    "Segment",
    "SupportSpec",
    "ConnectionSpec",
    "ForceSpec",
    "CoupleSpec",
    "UdlSpec",
    "LoadSpec",
    "CleanResult",
    "build_frame",
    "default_tolerance",
    "DEFAULT_UNJOINED_LAYERS",
]

#: member layers whose crossings stay separate unless a JOINT or HINGE joins them
DEFAULT_UNJOINED_LAYERS: tuple[str, ...] = ("FRAME-BRACES",)

Point = tuple[float, float]


# ---------------------------------------------------------------------------
# input records
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Segment:
    """One straight piece of drawn linework [m].

    ``index`` orders the pieces of one drawn entity (polyline segments, arc
    chords) from its first vertex; member numbering follows it.
    """

    p0: Point
    p1: Point
    handle: str
    layer: str
    index: int = 0


@dataclass(frozen=True)
class SupportSpec:
    """A support symbol.

    kind : pin, roller, fixed, slider, spring
    angle : [rad] counter-clockwise turn of the support axes x', y'
    kx, ky : spring stiffness along x', y' [N/m]; kr rotational [N*m/rad]
    settle : prescribed (dx [m], dy [m], rz [rad]) in global axes, or None
    settle_case : load case of the settlement
    """

    at: Point
    kind: str
    angle: float = 0.0
    kx: float | None = None
    ky: float | None = None
    kr: float | None = None
    settle: tuple[float, float, float] | None = None
    settle_case: str = "D"
    handle: str = ""
    layer: str = ""


@dataclass(frozen=True)
class ConnectionSpec:
    """A JOINT, HINGE or CROSSOVER symbol.  ``layers``: for a hinge, the
    member layers whose ends are released (None = all member ends at the
    joint).  A CROSSOVER keeps the two members crossing under it separate."""

    at: Point
    kind: Literal["joint", "hinge", "crossover"]
    layers: tuple[str, ...] | None = None
    handle: str = ""
    layer: str = ""


@dataclass(frozen=True)
class ForceSpec:
    """Concentrated force (fx, fy) [N] along global X, Y at ``at``."""

    at: Point
    fx: float
    fy: float
    case: str = "D"
    handle: str = ""
    layer: str = ""


@dataclass(frozen=True)
class CoupleSpec:
    """Concentrated couple ``m`` [N*m], counter-clockwise positive, at ``at``."""

    at: Point
    m: float
    case: str = "D"
    handle: str = ""
    layer: str = ""


@dataclass(frozen=True)
class UdlSpec:
    """Distributed load on the member piece under ``at``.

    w1, w2 : intensity [N/m] at the start and end of the loaded length
        (positive along ``direction``: GRAVITY acts toward -Y, NORMAL toward
        local -y, X and Y along +X, +Y)
    start, end : FROM and TO [m] from the piece's start (None: piece ends)
    projected : True when w is per unit horizontal projection
    basis_given : False when the block gave no BASIS (per length taken)
    """

    at: Point
    w1: float
    w2: float
    start: float | None = None
    end: float | None = None
    direction: Literal["GRAVITY", "X", "Y", "NORMAL"] = "GRAVITY"
    projected: bool = False
    case: str = "D"
    handle: str = ""
    layer: str = ""
    basis_given: bool = True


LoadSpec = Union[ForceSpec, CoupleSpec, UdlSpec]


@dataclass
class CleanResult:
    """Output of :func:`build_frame`.

    frame : the analysis model (SI)
    warnings : texts naming entity handles
    extents : (xmin, ymin, xmax, ymax) of the members [m]
    crossings_joined : number of crossing points where members were joined
    crossings_separate : one text per crossing left separate (both handles,
        where, and why: unjoined layers or a CROSSOVER)
    """

    frame: Frame
    warnings: list[str] = field(default_factory=list)
    extents: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)
    crossings_joined: int = 0
    crossings_separate: list[str] = field(default_factory=list)


def default_tolerance(points: np.ndarray, *, floor: float = 0.5e-3, rel: float = 1e-6) -> float:
    """Default snap tolerance [m]: the larger of ``floor`` (0.5 mm) and ``rel``
    times the diagonal of the points' bounding box."""
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    if len(pts) == 0:
        return floor
    diag = float(np.hypot(*(pts.max(axis=0) - pts.min(axis=0))))
    return max(floor, rel * diag)


# ---------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------


class _Units:
    """Formats lengths in drawing units for messages."""

    def __init__(self, name: str, scale: float) -> None:
        self.name, self.scale = name, scale

    def fmt(self, metres: float) -> str:
        return f"{metres / self.scale:.6g} {self.name}"


def _cluster(points: np.ndarray, tol: float) -> np.ndarray:
    """Label of each point's cluster: points within ``tol`` (transitively)
    share a label; the label is the index of the cluster's first point."""
    n = len(points)
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    geoms = shapely.points(points)
    a, b = shapely.STRtree(geoms).query(geoms, predicate="dwithin", distance=tol)
    keep = a < b
    a, b = a[keep], b[keep]
    if len(a) == 0:
        return np.arange(n)
    g = coo_matrix((np.ones(len(a), dtype=np.int8), (a, b)), shape=(n, n))
    _, comp = connected_components(g, directed=False)
    first = np.full(comp.max() + 1, n, dtype=np.int64)
    np.minimum.at(first, comp, np.arange(n))
    return first[comp]


def _crossings(segs: Sequence[Segment], tol: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Proper crossings of the segments: (i, j, points) with i < j, where the
    interiors of segments i and j cross at a point farther than ``tol`` from
    every end of both (an end on another segment is a T-junction, handled
    by the split step).  Collinear overlaps are not crossings."""
    n = len(segs)
    if n < 2:
        return np.zeros(0, np.intp), np.zeros(0, np.intp), np.zeros((0, 2))
    A = np.array([s.p0 for s in segs], dtype=float)
    B = np.array([s.p1 for s in segs], dtype=float)
    lines = shapely.linestrings(np.stack([A, B], axis=1))
    i, j = shapely.STRtree(lines).query(lines, predicate="crosses")
    keep = i < j
    i, j = i[keep], j[keep]
    d1, d2 = B[i] - A[i], B[j] - A[j]
    den = d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]
    ok = den != 0.0
    i, j, d1, d2, den = i[ok], j[ok], d1[ok], d2[ok], den[ok]
    r = A[j] - A[i]
    t = (r[:, 0] * d2[:, 1] - r[:, 1] * d2[:, 0]) / den  # along segment i
    u = (r[:, 0] * d1[:, 1] - r[:, 1] * d1[:, 0]) / den  # along segment j
    L1, L2 = np.hypot(d1[:, 0], d1[:, 1]), np.hypot(d2[:, 0], d2[:, 1])
    inner = (t * L1 > tol) & ((1 - t) * L1 > tol) & (u * L2 > tol) & ((1 - u) * L2 > tol)
    P = A[i] + t[:, None] * d1
    return i[inner], j[inner], P[inner]


def _handles_text(handles: Iterable[str], limit: int = 8) -> str:
    hs = list(dict.fromkeys(h for h in handles if h))
    text = ", ".join(f"#{h}" for h in hs[:limit])
    if len(hs) > limit:
        text += f" and {len(hs) - limit} more"
    return text


def _starts_first(a: np.ndarray, b: np.ndarray, tol: float) -> bool:
    """True when point ``a`` is the member start per the convention."""
    dx = b[0] - a[0]
    if abs(dx) > tol:
        return dx > 0
    return b[1] >= a[1]


@dataclass
class _Element:
    id: str
    group: str
    n0: int  # cluster label of the start
    n1: int  # cluster label of the end
    handle: str
    layer: str


# ---------------------------------------------------------------------------
# main entry
# ---------------------------------------------------------------------------


def build_frame(
    segments: Sequence[Segment],
    supports: Sequence[SupportSpec] = (),
    connections: Sequence[ConnectionSpec] = (),
    loads: Sequence[LoadSpec] = (),
    *,
    tol: float,
    section_for: Callable[[str], Section | None] | None = None,
    unit: tuple[str, float] = ("m", 1.0),
    unjoined_layers: Iterable[str] = DEFAULT_UNJOINED_LAYERS,
) -> CleanResult:
    """Snap, split and assemble the analysis model.

    Parameters
    ----------
    segments : drawn straight pieces [m]
    supports, connections, loads : symbols (SI)
    tol : snap tolerance [m] (> 0)
    section_for : layer name -> Section or None
    unit : (name, metres per unit) of the drawing, used to state distances
        in error messages in drawing units
    unjoined_layers : member layers (case-insensitive) whose crossings with
        each other stay separate

    Returns
    -------
    CleanResult

    Raises
    ------
    GeometryError
        No members, a part without supports.
    DrawingError
        A symbol off every member, two supports on one node, an ambiguous
        or invalid load.
    """
    if not tol > 0:
        raise ValueError("tolerance must be positive")
    units = _Units(*unit)
    section_for = section_for or (lambda layer: None)
    warnings: list[str] = []
    segs = _drop_zero_length(segments, tol, warnings)
    crossovers = [c for c in connections if c.kind == "crossover"]
    connections = [c for c in connections if c.kind != "crossover"]
    # crossings: joined unless unjoined layers or a CROSSOVER say otherwise
    cross_xy, crossings_separate = _joined_crossings(
        segs, tol, {x.upper() for x in unjoined_layers}, crossovers, connections, units, warnings)
    sn = _snap(segs, supports, connections, cross_xy, tol, warnings)
    splits, hinge_only = _split_points(sn, connections, tol)
    kept = _drop_duplicates(_elements(sn, splits, hinge_only, tol), warnings)
    frame, node_of = _assemble(kept, sn, supports, connections, section_for)
    at = _Locator(frame, tol, units)
    support_at = _add_supports(frame, supports, sn.sup_lab, node_of, at, warnings)
    ends_at = _member_ends(frame)
    for nid, spec in support_at.items():
        _note_moved_to_joint(spec, nid, at, ends_at, warnings)
        _note_large_settlement(spec, nid, at, ends_at, warnings)
    _add_hinges(frame, connections, sn.con_lab, node_of, ends_at, at, warnings)
    _check_every_part_supported(frame, support_at)
    _add_loads(frame, _note_twin_loads(loads, warnings), at, ends_at, warnings)
    xy = at.node_xy
    ext = (float(xy[:, 0].min()), float(xy[:, 1].min()), float(xy[:, 0].max()), float(xy[:, 1].max()))
    return CleanResult(frame, warnings, ext, len(np.unique(sn.cross_lab)), crossings_separate)


# -- the steps of build_frame ---------------------------------------------------------------


def _drop_zero_length(segments: Sequence[Segment], tol: float, warnings: list[str]) -> list[Segment]:
    """1. Members shorter than the snap tolerance are dropped (with a warning)."""
    segs: list[Segment] = []
    for s in segments:
        if math.hypot(s.p1[0] - s.p0[0], s.p1[1] - s.p0[1]) <= tol:
            warnings.append(
                f"zero-length member #{s.handle} on layer '{s.layer}' dropped (shorter than the snap tolerance)"
            )
        else:
            segs.append(s)
    if not segs:
        raise GeometryError(
            "the drawing has no members",
            hint="draw member centrelines as LINE or LWPOLYLINE on layer FRAME or FRAME-*",
        )
    return segs


@dataclass
class _Snapped:
    """Every point snapped: ``pts`` holds the segment ends in drawing order,
    then support, connection and crossing points; ``e0``/``e1`` label each
    segment's ends, the other arrays the symbols' points."""

    segs: list[Segment]
    pts: np.ndarray
    e0: np.ndarray
    e1: np.ndarray
    sup_lab: np.ndarray
    con_lab: np.ndarray
    cross_lab: np.ndarray


def _snap(segs: list[Segment], supports: Sequence[SupportSpec], connections: Sequence[ConnectionSpec],
          cross_xy, tol: float, warnings: list[str]) -> _Snapped:
    """2. Snap: points closer than ``tol`` become one (a cluster keeps the
    first drawn point); a segment whose ends snap together is dropped."""
    n, nsup, ncon, ncross = len(segs), len(supports), len(connections), len(cross_xy)
    pts = np.empty((2 * n + nsup + ncon + ncross, 2))
    pts[0 : 2 * n : 2] = [s.p0 for s in segs]
    pts[1 : 2 * n : 2] = [s.p1 for s in segs]
    if nsup:
        pts[2 * n : 2 * n + nsup] = [s.at for s in supports]
    if ncon:
        pts[2 * n + nsup : 2 * n + nsup + ncon] = [c.at for c in connections]
    if ncross:
        pts[2 * n + nsup + ncon :] = cross_xy
    label = _cluster(pts, tol)
    e0, e1 = label[0 : 2 * n : 2].copy(), label[1 : 2 * n : 2].copy()
    sn = _Snapped(segs, pts, e0, e1, label[2 * n : 2 * n + nsup], label[2 * n + nsup : 2 * n + nsup + ncon],
                  label[2 * n + nsup + ncon :])
    collapsed = e0 == e1
    if collapsed.any():
        for i in np.flatnonzero(collapsed):
            s = segs[i]
            warnings.append(f"zero-length member #{s.handle} on layer '{s.layer}' dropped (its ends snap together)")
        keep = ~collapsed
        sn.segs = [s for s, k in zip(segs, keep) if k]
        sn.e0, sn.e1 = e0[keep], e1[keep]
        if not sn.segs:
            raise GeometryError("the drawing has no members after snapping")
    return sn


def _split_points(sn: _Snapped, connections: Sequence[ConnectionSpec], tol: float):
    """3. Where each segment is split: every snapped point within ``tol`` of
    its inside, in order along it.  Returns ``(splits, hinge_only)``:
    segment -> labels, and whether a label is a hinge that only releases a
    span (an internal pin: the member stays one reported member)."""
    pts, e0, e1 = sn.pts, sn.e0, sn.e1
    endpoint_labels = np.unique(np.concatenate([e0, e1]))
    joint_labels = {int(l) for l, c in zip(sn.con_lab, connections) if c.kind == "joint"}
    hinge_labels = {int(l) for l, c in zip(sn.con_lab, connections) if c.kind == "hinge"}
    support_labels = {int(l) for l in sn.sup_lab}
    cand = np.unique(np.concatenate([endpoint_labels, sn.sup_lab, sn.con_lab, sn.cross_lab]).astype(np.int64))
    cand_xy = pts[cand]

    A, B = pts[e0], pts[e1]
    lines = shapely.linestrings(np.stack([A, B], axis=1))
    tree = shapely.STRtree(lines)
    pi, si = tree.query(shapely.points(cand_xy), predicate="dwithin", distance=tol)
    lab = cand[pi]
    ok = (lab != e0[si]) & (lab != e1[si])
    pi, si, lab = pi[ok], si[ok], lab[ok]
    d = B[si] - A[si]
    L = np.hypot(d[:, 0], d[:, 1])
    rel = cand_xy[pi] - A[si]
    s_along = (rel[:, 0] * d[:, 0] + rel[:, 1] * d[:, 1]) / L
    inside = (s_along > 0) & (s_along < L)
    pi, si, lab, s_along = pi[inside], si[inside], lab[inside], s_along[inside]
    order = np.lexsort((s_along, si))
    si, lab, s_along = si[order], lab[order], s_along[order]
    interior_count = defaultdict(int)
    for l_ in lab.tolist():
        interior_count[l_] += 1
    endpoint_set = set(endpoint_labels.tolist())

    def hinge_only(lbl: int) -> bool:
        return (
            lbl in hinge_labels
            and lbl not in endpoint_set
            and lbl not in support_labels
            and lbl not in joint_labels
            and interior_count[lbl] == 1
        )

    splits: dict[int, list[int]] = defaultdict(list)
    for s_i, l_ in zip(si.tolist(), lab.tolist()):
        if not splits[s_i] or splits[s_i][-1] != l_:
            splits[s_i].append(l_)
    return splits, hinge_only


def _elements(sn: _Snapped, splits: dict[int, list[int]], hinge_only: Callable[[int], bool],
              tol: float) -> list[_Element]:
    """4. Pieces and ids: ``<handle>-<k>`` along each drawn entity; a span
    split only by a hinge gives elements ``<handle>-<k>a``, ``...b`` of one group."""
    segs, pts = sn.segs, sn.pts
    first_seen: dict[str, int] = {}
    for i, s in enumerate(segs):
        first_seen.setdefault(s.handle, i)
    seg_order = sorted(range(len(segs)), key=lambda i: (first_seen[segs[i].handle], segs[i].index, i))
    k_of_handle: dict[str, int] = defaultdict(int)
    elements: list[_Element] = []
    for i in seg_order:
        s = segs[i]
        chain = [int(sn.e0[i]), *splits.get(i, []), int(sn.e1[i])]
        # pieces: runs between non-hinge-only boundaries
        runs: list[list[int]] = [[chain[0]]]
        for lbl in chain[1:-1]:
            runs[-1].append(lbl)
            if not hinge_only(lbl):
                runs.append([lbl])
        runs[-1].append(chain[-1])
        for run in runs:
            k_of_handle[s.handle] += 1
            gid = f"{s.handle}-{k_of_handle[s.handle]}"
            if len(run) == 2:
                a, b = run
                if not _starts_first(pts[a], pts[b], tol):
                    a, b = b, a
                elements.append(_Element(gid, gid, a, b, s.handle, s.layer))
                continue
            if not _starts_first(pts[run[0]], pts[run[-1]], tol):
                run = run[::-1]
            for j, (a, b) in enumerate(zip(run[:-1], run[1:])):
                suffix = string.ascii_lowercase[j] if j < 26 else f"_{j + 1}"
                elements.append(_Element(gid + suffix, gid, a, b, s.handle, s.layer))
    return elements


def _drop_duplicates(elements: list[_Element], warnings: list[str]) -> list[_Element]:
    """5. Elements between the same two nodes: the first drawn is kept."""
    seen: dict[tuple[int, int], _Element] = {}
    kept: list[_Element] = []
    dup_pairs: dict[tuple[str, str], tuple[str, str]] = {}
    for el in elements:
        key = (min(el.n0, el.n1), max(el.n0, el.n1))
        if key in seen:
            first = seen[key]
            dup_pairs.setdefault((first.handle, el.handle), (first.layer, el.layer))
            continue
        seen[key] = el
        kept.append(el)
    for (h1, h2), (l1, l2) in dup_pairs.items():
        if h1 == h2:
            warnings.append(f"member #{h1} on layer '{l1}' overlaps itself; the repeated part was dropped")
        else:
            warnings.append(
                f"duplicate member #{h2} on layer '{l2}' dropped: it repeats #{h1} on layer '{l1}'"
            )
    return kept


def _assemble(kept: list[_Element], sn: _Snapped, supports: Sequence[SupportSpec],
              connections: Sequence[ConnectionSpec], section_for) -> tuple[Frame, dict[int, int]]:
    """6. Nodes (numbered in the order members reach them, with the handles
    of what meets there) and members; returns the frame and label -> node."""
    frame = Frame()
    node_of: dict[int, int] = {}
    node_sources: dict[int, list[str]] = defaultdict(list)
    for el in kept:
        for lbl in (el.n0, el.n1):
            if lbl not in node_of:
                node_of[lbl] = len(node_of)
            node_sources[lbl].append(el.handle)
    for s, lbl in zip(supports, sn.sup_lab.tolist()):
        node_sources[lbl].append(s.handle)
    for c, lbl in zip(connections, sn.con_lab.tolist()):
        node_sources[lbl].append(c.handle)
    for lbl, nid in sorted(node_of.items(), key=lambda kv: kv[1]):
        frame.add_node(sn.pts[lbl, 0], sn.pts[lbl, 1], tuple(dict.fromkeys(node_sources[lbl])))
    for el in kept:  # already oriented: start = smaller X (ties: smaller Y)
        frame.add_member(
            node_of[el.n0],
            node_of[el.n1],
            section_for(el.layer),
            id=el.id,
            layer=el.layer,
            handle=el.handle,
            group=el.group,
        )
    return frame, node_of


class _Locator:
    """Where symbols fall on the assembled frame: nodes and members indexed
    once, the refusal of a symbol off every member in drawing units."""

    def __init__(self, frame: Frame, tol: float, units: _Units) -> None:
        self.frame, self.tol, self.units = frame, tol, units
        self.node_xy = np.array([[nd.x, nd.y] for nd in frame.nodes])
        self.node_tree = shapely.STRtree(shapely.points(self.node_xy))
        mA = self.node_xy[[m.start for m in frame.members]]
        mB = self.node_xy[[m.end for m in frame.members]]
        self.mtree = shapely.STRtree(shapely.linestrings(np.stack([mA, mB], axis=1)))
        self.lengths = {m.id: frame.geometry(m) for m in frame.members}

    def distance_to_members(self, p: Point) -> float:
        _, dist = self.mtree.query_nearest(shapely.points(p), return_distance=True)
        return float(dist[0])

    def off_member(self, kind: str, spec) -> DrawingError:
        units = self.units
        return DrawingError(
            f"{kind} is not on any member: its insertion point ({spec.at[0] / units.scale:.6g}, "
            f"{spec.at[1] / units.scale:.6g}) is {units.fmt(self.distance_to_members(spec.at))} from the nearest member",
            handle=spec.handle,
            layer=spec.layer,
            hint="move the block's insertion point onto a member centreline",
        )

    def near(self, points: np.ndarray) -> tuple[list[int | None], list[np.ndarray]]:
        """For each point: the node within ``tol`` (or None) and the members within ``tol``."""
        if not len(points):
            return [], []
        (qi, ni), nd = self.node_tree.query_nearest(shapely.points(points), return_distance=True,
                                                    all_matches=False)
        near_node: list[int | None] = [None] * len(points)
        for q, i, d in zip(qi.tolist(), ni.tolist(), nd.tolist()):
            if d <= self.tol:
                near_node[q] = int(i)
        lp, lm = self.mtree.query(shapely.points(points), predicate="dwithin", distance=self.tol)
        order = np.argsort(lp, kind="stable")
        lp, lm = lp[order], lm[order]
        cuts = np.searchsorted(lp, np.arange(len(points) + 1))
        return near_node, [lm[cuts[i] : cuts[i + 1]] for i in range(len(points))]

    def position(self, mi: int, p: Point) -> float:
        """Distance of ``p`` along member ``mi`` from its start, clamped to the member."""
        frame = self.frame
        m = frame.members[mi]
        L_, c, s_ = self.lengths[m.id]
        a = frame.nodes[m.start]
        return min(max((p[0] - a.x) * c + (p[1] - a.y) * s_, 0.0), L_)

    def member_under(self, kind: str, spec, cands: np.ndarray, warnings: list[str]) -> int:
        """The member a symbol inside a span loads; crossing members not joined there: the nearer (warned)."""
        if len(cands) == 0:
            raise self.off_member(kind, spec)
        if len(cands) == 1:
            return int(cands[0])
        frame = self.frame
        dists = shapely.distance(shapely.points(spec.at), self.mtree.geometries.take(cands))
        best = int(cands[int(np.argmin(dists))])
        gset = {frame.members[int(c)].group for c in cands}
        if len(gset) > 1:
            warnings.append(
                f"{kind} #{spec.handle} lies on members {', '.join(sorted(gset))}, which cross without "
                f"being joined; applied to {frame.members[best].id}"
            )
        return best


def _add_supports(frame: Frame, supports: Sequence[SupportSpec], sup_lab: np.ndarray, node_of: dict[int, int],
                  at: _Locator, warnings: list[str]) -> dict[int, SupportSpec]:
    """7. Supports (one per node) and their settlements; returns node -> support."""
    support_at: dict[int, SupportSpec] = {}
    for spec, lbl in zip(supports, sup_lab.tolist()):
        if lbl not in node_of:
            raise at.off_member(f"{spec.kind} support", spec)
        nid = node_of[lbl]
        if nid in support_at:
            other = support_at[nid]
            raise DrawingError(
                f"two supports on one node: #{other.handle} and #{spec.handle}",
                handle=spec.handle,
                layer=spec.layer,
                hint="keep one support per node (use SPRING attributes or a FIXED block to combine restraints)",
            )
        support_at[nid] = spec
        if spec.kind == "spring" and spec.kx is None and spec.ky is None and spec.kr is None:
            warnings.append(f"spring support #{spec.handle} has no KX, KY or KR: it restrains nothing")
        frame.add_support(
            nid,
            spec.kind,
            spec.angle,
            kx=spec.kx,
            ky=spec.ky,
            kr=spec.kr,
            handle=spec.handle,
            layer=spec.layer,
        )
        if spec.settle is not None and any(v != 0.0 for v in spec.settle):
            dx, dy, rz = spec.settle
            frame.add_load(Settlement(nid, dx, dy, rz, case=spec.settle_case, handle=spec.handle))
    return support_at


def _member_ends(frame: Frame) -> dict[int, list[tuple[int, str]]]:
    """node -> [(member index, "start" or "end")] of the member ends at it."""
    ends_at: dict[int, list[tuple[int, str]]] = defaultdict(list)
    for mi, m in enumerate(frame.members):
        ends_at[m.start].append((mi, "start"))
        ends_at[m.end].append((mi, "end"))
    return ends_at


def _add_hinges(frame: Frame, connections: Sequence[ConnectionSpec], con_lab: np.ndarray, node_of: dict[int, int],
                ends_at: dict[int, list[tuple[int, str]]], at: _Locator, warnings: list[str]) -> None:
    """7. Hinges release the member ends at their node (all, or those on the
    layers their MEMBERS attribute names); every connection must sit on a member."""
    for spec, lbl in zip(connections, con_lab.tolist()):
        if lbl not in node_of:
            raise at.off_member(spec.kind.upper(), spec)
        if spec.kind != "hinge":
            continue
        nid = node_of[lbl]
        wanted = {x.upper() for x in spec.layers} if spec.layers else None
        released = 0
        for mi, side in ends_at[nid]:
            m = frame.members[mi]
            if wanted is not None and m.layer.upper() not in wanted:
                continue
            setattr(m, f"release_{side}", True)
            released += 1
        if released == 0:
            warnings.append(
                f"hinge #{spec.handle} releases no member end: no member at it is on layer(s) "
                f"{', '.join(sorted(wanted or []))}"
            )


def _check_every_part_supported(frame: Frame, support_at: dict[int, SupportSpec]) -> None:
    """8. Every connected part of the frame needs a support."""
    g = nx.Graph()
    g.add_nodes_from(range(len(frame.nodes)))
    g.add_edges_from((m.start, m.end, {"mi": mi}) for mi, m in enumerate(frame.members))
    for comp in nx.connected_components(g):
        if not any(nid in support_at for nid in comp):
            mis = sorted({d["mi"] for _, _, d in g.subgraph(comp).edges(data=True)})
            first = frame.members[mis[0]]
            raise GeometryError(
                f"part made of members {_handles_text(frame.members[i].handle for i in mis)} has no support",
                handle=first.handle,
                layer=first.layer,
                hint="add a support block on layer SUPPORTS, or connect the part to the rest of the frame",
            )


#: the name of each kind of load symbol in messages
_LOAD_KIND = {ForceSpec: "force", CoupleSpec: "couple", UdlSpec: "UDL"}


def _shortest_at(nid: int, at: _Locator, ends_at: dict[int, list[tuple[int, str]]]) -> float:
    """Length of the shortest member ending at joint ``nid`` (0 when none)."""
    return min((at.lengths[at.frame.members[mi].id][0] for mi, _ in ends_at.get(nid, [])), default=0.0)


def _note_twin_loads(loads: Sequence[LoadSpec], warnings: list[str]) -> Sequence[LoadSpec]:
    """Warn of each load with an exact twin before it (same kind, point,
    case and values: most often a block pasted twice in place), naming both
    handles.  Both are applied, as drawn (loads stacked at a point add up);
    the warning says the load counts twice."""
    seen: dict[tuple, LoadSpec] = {}
    for spec in loads:
        key = (type(spec), round(spec.at[0], 9), round(spec.at[1], 9),
               *(v for f, v in vars(spec).items() if f not in ("at", "handle", "layer")))
        first = seen.setdefault(key, spec)
        if first is not spec:
            warnings.append(f"{_LOAD_KIND[type(spec)]} #{spec.handle} on layer '{spec.layer}' repeats #{first.handle} (same point, "
                            f"case and values): both are applied, twice the load; if one is a copy pasted in "
                            f"place, delete it")
    return loads


#: cases whose loads are given per horizontal projection on a roof (roof
#: live, snow, rain: ASCE/SEI 7, from memory), and the cosine of a member's
#: slope below which per length and per projection differ by over 1 %
PROJECTED_CASES = ("Lr", "S", "R")
SLOPED = 0.99


#: a load taken at a joint from farther than this fraction of the shortest
#: member there is a warning: it moves the load by a length that matters
MOVED_TO_JOINT = 0.01


def _note_moved_to_joint(spec, nid: int, at: _Locator, ends_at: dict[int, list[tuple[int, str]]],
                         warnings: list[str]) -> None:
    """Warn when symbol ``spec`` (a load or a support) is put at joint
    ``nid`` from farther than MOVED_TO_JOINT of the shortest member there (a
    snap tolerance set large moves symbols silently otherwise)."""
    node = at.node_xy[nid]
    d = float(np.hypot(spec.at[0] - node[0], spec.at[1] - node[1]))
    shortest = _shortest_at(nid, at, ends_at)
    if shortest > 0 and d > MOVED_TO_JOINT * shortest:
        if isinstance(spec, SupportSpec):
            kind, does, meant = f"{spec.kind} support", "stands", "stands inside the span"
        else:
            kind, does, meant = _LOAD_KIND[type(spec)], "is applied", "loads the span"
        u = at.units
        warnings.append(
            f"{kind} #{spec.handle} on layer '{spec.layer}' is {u.fmt(d)} from the joint at "
            f"({node[0] / u.scale:.6g}, {node[1] / u.scale:.6g}) and {does} at the joint, being within the "
            f"snap tolerance ({u.fmt(at.tol)}); if it {meant}, move it onto the member or lower "
            f"[geometry] snap")


#: a settlement over this fraction of the shortest member at its support
#: is a warning (a bare number is in the drawing's unit: 25 in an m drawing)
LARGE_SETTLEMENT = 0.05


def _note_large_settlement(spec: SupportSpec, nid: int, at: _Locator, ends_at: dict[int, list[tuple[int, str]]],
                           warnings: list[str]) -> None:
    """Warn when support ``spec`` settles by more than LARGE_SETTLEMENT of
    the shortest member at its joint: settlements are millimetres to a few
    centimetres, and such a one is most often a bare number read in the
    drawing's unit (-25 meaning mm in a drawing in m)."""
    if spec.settle is None:
        return
    move = float(np.hypot(spec.settle[0], spec.settle[1]))
    shortest = _shortest_at(nid, at, ends_at)
    if shortest > 0 and move > LARGE_SETTLEMENT * shortest:
        u = at.units
        warnings.append(
            f"{spec.kind} support #{spec.handle} on layer '{spec.layer}' settles by {u.fmt(move)}, "
            f"{100 * move / shortest:.0f} % of the shortest member at it ({u.fmt(shortest)}); a bare SETTLE_X / "
            f"SETTLE_Y is in the drawing's unit ({u.name}): give the unit ('-25 mm') if another is meant")


def _add_loads(frame: Frame, loads: Sequence[LoadSpec], at: _Locator, ends_at: dict[int, list[tuple[int, str]]],
               warnings: list[str]) -> None:
    """9. Loads: on a node a nodal load, inside a span a member load; a UDL
    loads the whole reported member (group) it sits on."""
    groups: dict[str, list[int]] = defaultdict(list)
    for mi, m in enumerate(frame.members):
        groups[m.group].append(mi)
    near_node, near_members = at.near(np.array([ld.at for ld in loads], dtype=float).reshape(-1, 2))
    sloped: dict[str, list[str]] = {}   # case -> UDLs per length on sloped members, BASIS not given
    for li, spec in enumerate(loads):
        nid, cands = near_node[li], near_members[li]
        if nid is not None:
            _note_moved_to_joint(spec, nid, at, ends_at, warnings)
        if isinstance(spec, ForceSpec):
            if nid is not None:
                frame.add_load(NodalLoad(nid, spec.fx, spec.fy, 0.0, case=spec.case, handle=spec.handle))
            else:
                mi = at.member_under("force", spec, cands, warnings)
                frame.add_load(
                    PointLoad(frame.members[mi].id, at.position(mi, spec.at), spec.fx, spec.fy,
                              axes="global", case=spec.case, handle=spec.handle)
                )
        elif isinstance(spec, CoupleSpec):
            if nid is not None:
                frame.add_load(NodalLoad(nid, 0.0, 0.0, spec.m, case=spec.case, handle=spec.handle))
            else:
                mi = at.member_under("couple", spec, cands, warnings)
                frame.add_load(
                    MemberCouple(frame.members[mi].id, at.position(mi, spec.at), spec.m,
                                 case=spec.case, handle=spec.handle)
                )
        elif isinstance(spec, UdlSpec):
            if nid is not None:
                touching = {frame.members[mi].group for mi, _ in ends_at[nid]}
                if len(touching) != 1:
                    raise DrawingError(
                        f"UDL sits on the joint of members {', '.join(sorted(touching))}; "
                        "it is not clear which one it loads",
                        handle=spec.handle,
                        layer=spec.layer,
                        hint="move its insertion point inside the span of the member it loads",
                    )
                group = touching.pop()
            else:
                group = frame.members[at.member_under("UDL", spec, cands, warnings)].group
            _add_udl(frame, spec, groups[group], group, at.lengths, at.tol, at.units)
            if not spec.basis_given and not spec.projected and spec.case in PROJECTED_CASES \
                    and abs(at.lengths[frame.members[groups[group][0]].id][1]) < SLOPED:
                sloped.setdefault(spec.case, []).append(spec.handle)
        else:  # pragma: no cover - programming error
            raise TypeError(f"unknown load spec {spec!r}")
    for case, handles in sorted(sloped.items()):
        warnings.append(f"{len(handles)} UDL(s) of case {case} on sloped members give no BASIS "
                        f"({_handles_text(handles)}) and are "
                        f"read per member length; {case} loads are usually given per horizontal projection "
                        f"(ASCE/SEI 7 roof live, snow and rain loads, from memory): write BASIS=PROJECTED if so, "
                        f"or BASIS=LENGTH to say per length is meant")


def _joined_crossings(
    segs: Sequence[Segment],
    tol: float,
    unjoined: set[str],
    crossovers: Sequence[ConnectionSpec],
    connections: Sequence[ConnectionSpec],
    units: _Units,
    warnings: list[str],
) -> tuple[np.ndarray, list[str]]:
    """Crossing points [m] where the crossing members are joined, and a text
    for each crossing left separate.  A crossing stays separate when both
    members lie on ``unjoined`` layers (upper case) or a CROSSOVER lies on it
    within ``tol``, unless a JOINT or HINGE lies on it.  A CROSSOVER on no
    crossing is a warning naming it."""
    i, j, P = _crossings(segs, tol)
    used = np.zeros(len(crossovers), dtype=bool)
    over = np.zeros(len(P), dtype=bool)
    if len(crossovers) and len(P):
        ctree = shapely.STRtree(shapely.points(np.array([c.at for c in crossovers], dtype=float)))
        k, hits = ctree.query(shapely.points(P), predicate="dwithin", distance=tol)
        over[k] = True
        used[hits] = True
    for c, u in zip(crossovers, used):
        if not u:
            warnings.append(
                f"CROSSOVER #{c.handle} on layer '{c.layer}' sits on no crossing of two members "
                f"({units.fmt(tol)} snap tolerance); it has no effect"
            )
    by_symbol = np.zeros(len(P), dtype=bool)
    if connections and len(P):
        jtree = shapely.STRtree(shapely.points(np.array([c.at for c in connections], dtype=float)))
        by_symbol[jtree.query(shapely.points(P), predicate="dwithin", distance=tol)[0]] = True
    both_unjoined = np.array(
        [segs[a].layer.upper() in unjoined and segs[b].layer.upper() in unjoined for a, b in zip(i, j)],
        dtype=bool,
    )
    separate = (over | both_unjoined) & ~by_symbol
    texts = []
    for a, b, p, o in zip(i[separate], j[separate], P[separate], over[separate]):
        why = "CROSSOVER" if o else "unjoined layers"
        texts.append(
            f"#{segs[a].handle} ('{segs[a].layer}') x #{segs[b].handle} ('{segs[b].layer}') at "
            f"({p[0] / units.scale:.6g}, {p[1] / units.scale:.6g}) {units.name}: {why}"
        )
    return P[~separate], texts


def _add_udl(frame: Frame, spec: UdlSpec, mis: list[int], group: str, lengths, tol: float, units: _Units) -> None:
    """Distribute one UDL over the elements ``mis`` of member ``group``."""
    first, last = frame.members[mis[0]], frame.members[mis[-1]]
    g0 = frame.nodes[first.start]
    # elements of a group are collinear and lettered from the group start
    offsets = []
    for mi in mis:
        m = frame.members[mi]
        a = frame.nodes[m.start]
        offsets.append(math.hypot(a.x - g0.x, a.y - g0.y))
    Lg = offsets[-1] + lengths[last.id][0]

    a0 = 0.0 if spec.start is None else spec.start
    b0 = Lg if spec.end is None else spec.end
    if b0 > Lg and b0 - Lg <= tol:
        b0 = Lg
    if a0 < 0 and a0 >= -tol:
        a0 = 0.0
    if not (0.0 <= a0 < b0 <= Lg):
        raise DrawingError(
            f"UDL loaded length FROM {units.fmt(a0)} TO {units.fmt(b0)} does not fit member {group} "
            f"of length {units.fmt(Lg)}",
            handle=spec.handle,
            layer=spec.layer,
            hint="FROM and TO are distances from the member start (its end with the smaller X); 0 <= FROM < TO <= length",
        )

    def w_at(x: float) -> float:
        return spec.w1 + (spec.w2 - spec.w1) * (x - a0) / (b0 - a0)

    if spec.direction == "GRAVITY":
        vec, axes = (0.0, -1.0), "global"
    elif spec.direction == "X":
        vec, axes = (1.0, 0.0), "global"
    elif spec.direction == "Y":
        vec, axes = (0.0, 1.0), "global"
    else:  # NORMAL: local -y
        vec, axes = (0.0, -1.0), "local"

    for mi, off in zip(mis, offsets):
        m = frame.members[mi]
        L = lengths[m.id][0]
        lo, hi = max(a0, off), min(b0, off + L)
        if hi - lo <= 1e-12 * max(1.0, Lg):
            continue
        wl, wh = w_at(lo), w_at(hi)
        a_loc = lo - off
        b_loc = hi - off
        frame.add_load(
            DistributedLoad(
                m.id,
                q1=(vec[0] * wl, vec[1] * wl),
                q2=(vec[0] * wh, vec[1] * wh),
                a=0.0 if a_loc <= tol * 1e-3 else a_loc,
                b=None if L - b_loc <= tol * 1e-3 else b_loc,
                axes=axes,
                projected=spec.projected,
                case=spec.case,
                handle=spec.handle,
            )
        )
