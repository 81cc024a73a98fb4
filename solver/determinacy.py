"""Static determinacy and stability of a planar frame.

:func:`check` answers, before any solve: is the frame stable, statically
determinate, or indeterminate and to what degree; and when it is unstable,
which mechanisms it has, where, and why.

Two tests are made and reported side by side.

Classical count
    ``r + 3m`` against ``3j + c`` with r reaction components (each rigid
    restraint and each spring of a :class:`~dxf2frame.solver.model.Support` counts
    one), m members, j nodes and c condition equations of the releases:
    one per released member end, minus one per *pure pin* (a node where
    every member end is released and nothing restrains its rotation; a
    pin joining n member ends thus gives n - 1 conditions).  With this
    bookkeeping the count is exactly ``unknowns - equations`` of the
    equilibrium matrix below, so it agrees with the rank test whenever
    the frame has no hidden (geometric) instability.

Rank test (equilibrium-matrix method, Pellegrino and Calladine, 1986)
    Unknown forces: per member the basic forces N, M_start, M_end (less the
    released end moments), plus the reaction components.  Equations: Fx, Fy,
    M at every node, less the moment equation of each pure pin.  With A the
    equilibrium matrix, ``degree = unknowns - rank(A)`` (static
    indeterminacy) and ``mechanisms = equations - rank(A)`` (independent
    inextensional mechanisms).  The mechanisms span the null space of the
    compatibility matrix ``B = A^T``: nodal displacements that stretch no
    member, turn no rigid member end relative to its chord, and move no
    support.  Only that null space is computed; the degree then follows as
    ``unknowns - equations + mechanisms``.

Reported degree
    The full degree including axial redundants: a fixed-fixed beam is
    degree 3 (two flexural redundants plus the axial one).  On an unstable
    frame ``degree`` is still ``unknowns - rank(A)``: the redundants of the
    parts that are stable (a beam on three horizontal rollers has degree 1
    and one mechanism).

How the null space is found
    1. *Rigid clusters* (exact contraction).  Members joined through
       rigid (unreleased) ends, together with those nodes, can only move as
       one rigid body in a mechanism.  Each cluster becomes three unknowns
       (translation of its centroid and a rotation scaled by its radius);
       a node with no rigid connection keeps its own two translations (and
       its rotation, when a support restrains it); a member released at
       both ends is a bar.  Rows: one per bar (no stretch), two per pinned
       member end joining a cluster to another owner (same translation),
       one per reaction component.  A fully rigid multi-storey frame of
       20 000 members contracts to a handful of unknowns.  Coordinates are
       divided by the median member length, so entries are O(1) in any
       drawing unit, and every row is scaled to unit length.
    2. *Connected parts* (graph pre-check, ``scipy.sparse.csgraph``).
       Each connected part of the frame is treated on its own.  Its
       rigid-body mechanisms follow from its supports alone (a 3-column
       problem): translations along which every reaction is perpendicular
       (reactions all parallel), a rotation about the point where every
       reaction line meets (reactions concurrent), or all three when the
       part has no support.  These are named directly; pinning a few
       unknowns removes them before the numerical step.
    3. *Internal mechanisms* of what is left: dense SVD when the part has
       at most ``dense_limit`` unknowns (default :data:`DENSE_LIMIT`).
       Larger parts: ``K0 = B^T B`` (sparse, symmetric positive
       semidefinite) is factorised once (sparse LU) with a small shift,
       ``K0 + 1e-12 * lam_bound * I`` (lam_bound: Gershgorin bound of its
       largest eigenvalue), and a block of vectors is driven into its lowest
       eigenvectors by shifted inverse (subspace) iteration; the singular
       values of ``B @ X`` then decide, and the block doubles while every
       direction in it is null.  A block method is used rather than
       single-vector Lanczos (``eigsh``) because a null space of dimension
       above one is a repeated eigenvalue, which single-vector Lanczos can
       miss; taking singular values of ``B @ X`` rather than Ritz values of
       ``K0`` avoids squaring the condition number.
       Tolerance, both paths: a singular value counts as zero below
       ``max(10 * max(shape) * eps, 1e-10) * sigma_max`` (sigma_max by power
       iteration on the sparse path).  The floor treats hinges collinear to
       within the rounding of drawing coordinates as collinear: it is
       raised to ``100 * eps * max|coordinate| / Lc`` for frames drawn far
       from the origin, whose coordinate differences carry that relative
       rounding.  A stable frame whose ratio is below 1e-7 gets a
       near-mechanism warning.

Mode shapes
    Each mechanism is returned as an ``(n_nodes, 3)`` array of global
    (ux, uy, rz) in the frame's units, scaled so the largest nodal
    translation (vector length) is 1; rotations are then radians per
    that unit of translation (rad per length unit).  A pure pin has no
    rotation of its own and shows rz = 0.  When a part has several internal
    mechanisms, the basis is chosen so each mode moves as few unknowns as
    possible (pivoted QR), which usually localises them.

Examples
--------
>>> from dxf2frame.solver.model import Frame
>>> f = Frame()
>>> a, b = f.add_node(0.0, 0.0), f.add_node(6.0, 0.0)
>>> _ = f.add_member(a, b)
>>> _ = f.add_support(a, "fixed"); _ = f.add_support(b, "roller")
>>> d = check(f)
>>> d.status, d.degree, d.mechanisms
('indeterminate', 1, 0)
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components
from scipy.sparse.linalg import splu

from .errors import SolverError
from .model import DistributedLoad, Frame, MemberCouple, PointLoad

__all__ = ["Determinacy", "FrameDataError", "check", "DENSE_LIMIT"]

#: largest number of contracted unknowns of one connected part solved by a
#: dense SVD; above it the sparse search is faster (dense SVD is O(n^3) and
#: slows sharply when BLAS threads compete with other processes)
DENSE_LIMIT = 300

_EPS = float(np.finfo(float).eps)
_SVD_FACTOR = 10.0          # safety factor over max(shape) * eps * sigma_max
_SVD_FLOOR = 1e-10          # relative floor of the rank tolerance
_COORD_FACTOR = 100.0       # floor >= this * eps * max|coordinate| / Lc
_SHIFT = 1e-12              # shift of the sparse factorisation, * lam_bound
_ITERATIONS = 4             # shifted inverse iterations per block
_MAX_BLOCK = 256            # largest block of the sparse null-space search
_MAX_MODES = 50             # mode shapes kept (the count is always complete)
_NEAR_RATIO = 1e-7          # sigma_min / sigma_max below this: near-mechanism warning
_MOVE_TOL = 1e-6            # a normalised translation above this "moves"
_LIST_MAX = 12              # items named in a sentence before "... and N more"
_ROW_DROP = 1e-10           # rows shorter than this (before scaling) are void


class FrameDataError(SolverError, ValueError):
    """Frame data the check cannot use (no members, a zero-length member, a
    reference to a node that does not exist).  ``handle`` names the drawing
    entity ("" when built by hand)."""


@dataclass
class Determinacy:
    """Result of :func:`check`.

    Attributes
    ----------
    status : "determinate", "indeterminate" or "unstable"
    degree : static indeterminacy, axial redundants included (fixed-fixed
        beam: 3); ``unknowns - rank`` also on an unstable frame
    mechanisms : independent mechanisms (0 when stable)
    count_check : text of the classical count r + 3m vs 3j + c and whether
        the rank test agrees
    detail : plain-language explanation; for an unstable frame one
        sentence per mechanism naming the nodes (id and coordinates) and
        members that move, and why
    modes : one ``(n_nodes, 3)`` array (ux, uy, rz) per mechanism, largest
        nodal translation 1, rotations in rad per length unit
    nodes_involved : per mode, ids of the nodes that move
    members_involved : per mode, ids of the members that move
    warnings : notes that do not change the status (two-force members with
        transverse load, near-mechanisms, nodes without members)
    """

    status: str
    degree: int
    mechanisms: int
    count_check: str
    detail: str
    modes: list[np.ndarray] = field(default_factory=list)
    nodes_involved: list[list[int]] = field(default_factory=list)
    members_involved: list[list[str]] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)

    @property
    def stable(self) -> bool:
        """True unless the frame is a mechanism."""
        return self.status != "unstable"

    def to_dict(self) -> dict:
        """The ``determinacy`` block of the JSON report (schema 1)."""
        return {
            "status": self.status,
            "degree": int(self.degree),
            "mechanisms": int(self.mechanisms),
            "count_check": self.count_check,
            "detail": self.detail,
        }


# ---------------------------------------------------------------------------
# frame data as arrays
# ---------------------------------------------------------------------------


@dataclass
class _Geometry:
    """The frame as numpy arrays (model units) plus the nondimensional copy."""

    xy: np.ndarray          # (n, 2) node coordinates
    P: np.ndarray           # (n, 2) coordinates / Lc, shifted to the lower-left corner
    Lc: float               # characteristic length (median member length)
    node_ids: list[int]
    member_ids: list[str]
    start: np.ndarray       # (m,) node indices
    end: np.ndarray
    rel_s: np.ndarray       # (m,) bool
    rel_e: np.ndarray
    L: np.ndarray           # (m,) lengths / Lc
    e: np.ndarray           # (m, 2) unit vectors start -> end
    sup_node: np.ndarray    # (k,) node index of each translational reaction component
    sup_dir: np.ndarray     # (k, 2) its direction
    rot_restrained: np.ndarray  # (n,) bool: a rigid or spring rotational restraint
    r: int                  # reaction components
    n_rigid_ends: np.ndarray    # (n,) rigid member ends at each node
    n_ends: np.ndarray          # (n,) member ends at each node
    floor: float                # relative floor of the rank tolerance (see module docstring)

    @property
    def pure_pin(self) -> np.ndarray:
        """Nodes whose rotation is not a degree of freedom."""
        return (self.n_rigid_ends == 0) & ~self.rot_restrained


def _geometry(frame: Frame) -> _Geometry:
    if not frame.members:
        raise FrameDataError("the frame has no members")
    node_ids = [nd.id for nd in frame.nodes]
    index = {nid: i for i, nid in enumerate(node_ids)}
    xy = np.array([[nd.x, nd.y] for nd in frame.nodes], dtype=float).reshape(-1, 2)
    if not np.all(np.isfinite(xy)):
        bad = next(nd for nd in frame.nodes if not (math.isfinite(nd.x) and math.isfinite(nd.y)))
        raise FrameDataError(f"node {bad.id} has a non-finite coordinate",
                             handle=bad.sources[0] if bad.sources else "")

    def idx(nid: int, handle: str, what: str) -> int:
        try:
            return index[nid]
        except KeyError:
            raise FrameDataError(f"{what} refers to node {nid}, which does not exist", handle=handle) from None

    start = np.array([idx(m.start, m.handle, f"member {m.id}") for m in frame.members], dtype=np.int64)
    end = np.array([idx(m.end, m.handle, f"member {m.id}") for m in frame.members], dtype=np.int64)
    d = xy[end] - xy[start]
    length = np.hypot(d[:, 0], d[:, 1])
    span = float(np.ptp(xy, axis=0).max()) if len(xy) else 0.0
    short = length <= 1e-12 * max(span, 1e-300)
    if short.any():
        m = frame.members[int(np.flatnonzero(short)[0])]
        raise FrameDataError(f"member {m.id} has zero length", handle=m.handle, members=(m.id,))
    Lc = float(np.median(length))
    rel_s = np.array([m.release_start for m in frame.members], dtype=bool)
    rel_e = np.array([m.release_end for m in frame.members], dtype=bool)

    n = len(xy)
    sup_node: list[int] = []
    sup_dir: list[tuple[float, float]] = []
    rot = np.zeros(n, dtype=bool)
    r = 0
    for s in frame.supports:
        i = idx(s.node, s.handle, "support")
        ax, ay = s.axes
        for fixed, k, direction in ((s.ux, s.kx, ax), (s.uy, s.ky, ay)):
            if fixed or (k is not None and k > 0):
                sup_node.append(i)
                sup_dir.append(direction)
        if s.rz or (s.kr is not None and s.kr > 0):
            rot[i] = True
        r += s.n_restraints

    rigid = np.bincount(start[~rel_s], minlength=n) + np.bincount(end[~rel_e], minlength=n)
    ends = np.bincount(start, minlength=n) + np.bincount(end, minlength=n)
    return _Geometry(
        xy=xy,
        P=(xy - xy.min(axis=0)) / Lc,
        Lc=Lc,
        node_ids=node_ids,
        member_ids=[m.id for m in frame.members],
        start=start,
        end=end,
        rel_s=rel_s,
        rel_e=rel_e,
        L=length / Lc,
        e=d / length[:, None],
        sup_node=np.array(sup_node, dtype=np.int64),
        sup_dir=np.array(sup_dir, dtype=float).reshape(-1, 2),
        rot_restrained=rot,
        r=r,
        n_rigid_ends=rigid,
        n_ends=ends,
        floor=max(_SVD_FLOOR, _COORD_FACTOR * _EPS * float(np.abs(xy).max()) / Lc),
    )


# ---------------------------------------------------------------------------
# contracted compatibility matrix
# ---------------------------------------------------------------------------


@dataclass
class _Reduced:
    """Compatibility rows on the contracted unknowns.

    Unknowns: per rigid cluster c, (u0, v0, phi) at columns 3c..3c+2 (u0, v0
    translation of its reference point / Lc, phi = rotation * radius / Lc);
    then per free node (no rigid connection) its two translations / Lc and,
    when a support restrains its rotation, that rotation.
    """

    A: sp.csr_matrix            # rows scaled to unit length
    row_node: np.ndarray        # node index each row belongs to (for the part split)
    n_dof: int
    node_cluster: np.ndarray    # (n,) cluster index or -1
    member_cluster: np.ndarray  # (m,) cluster index or -1 (bar)
    cl_ref: np.ndarray          # (nc, 2) cluster reference points (nondimensional)
    cl_rad: np.ndarray          # (nc,) cluster radii (nondimensional)
    node_cols: np.ndarray       # (n, 3) columns giving a node's translation
    node_cx: np.ndarray         # (n, 3) coefficients of ux
    node_cy: np.ndarray         # (n, 3) coefficients of uy
    node_rcol: np.ndarray       # (n,) column of the node rotation (or 0)
    node_rcoef: np.ndarray      # (n,) its coefficient (0 where none)
    dof_node: np.ndarray        # (n_dof,) a node of the owner of each unknown


def _cluster_locator(ref: np.ndarray, rad: np.ndarray, cl: np.ndarray, pts: np.ndarray):
    """Columns (k, 3) and ux, uy coefficients (k, 3) of points ``pts``
    (nondimensional) moving with rigid clusters ``cl``."""
    k = len(cl)
    cols = 3 * cl[:, None] + np.arange(3)[None, :]
    rel = pts - ref[cl]
    cx = np.zeros((k, 3))
    cy = np.zeros((k, 3))
    cx[:, 0] = 1.0
    cy[:, 1] = 1.0
    cx[:, 2] = -rel[:, 1] / rad[cl]
    cy[:, 2] = rel[:, 0] / rad[cl]
    return cols, cx, cy


def _rows(cols_a, cx_a, cy_a, d, cols_b=None, cx_b=None, cy_b=None):
    """Row entries d . (loc_a - loc_b) for k rows: (cols (k, 3|6), vals)."""
    va = d[:, :1] * cx_a + d[:, 1:] * cy_a
    if cols_b is None:
        return cols_a, va
    vb = d[:, :1] * cx_b + d[:, 1:] * cy_b
    return np.hstack([cols_a, cols_b]), np.hstack([va, -vb])


def _rigid_clusters(geo: _Geometry):
    """(has_rigid, member_cluster, node_cluster, nc): members and nodes
    joined by rigid member ends form one cluster (-1: none)."""
    n, m = len(geo.xy), len(geo.start)
    has_rigid = ~(geo.rel_s & geo.rel_e)
    # graph of rigid member-end connections: vertices = nodes, then members
    ms = np.flatnonzero(~geo.rel_s)
    me = np.flatnonzero(~geo.rel_e)
    rows = np.concatenate([n + ms, n + me])
    cols = np.concatenate([geo.start[ms], geo.end[me]])
    g = sp.coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(n + m, n + m))
    _, label = connected_components(g, directed=False)
    cl_labels, member_cluster_h = np.unique(label[n:][has_rigid], return_inverse=True)
    nc = len(cl_labels)
    member_cluster = np.full(m, -1, dtype=np.int64)
    member_cluster[has_rigid] = member_cluster_h
    lookup = np.full(n + m, -1, dtype=np.int64)
    lookup[cl_labels] = np.arange(nc)
    node_cluster = np.where(geo.n_rigid_ends > 0, lookup[label[:n]], -1)

    return has_rigid, member_cluster, node_cluster, nc


def _cluster_frames(geo: _Geometry, has_rigid, member_cluster, nc: int):
    """(ref, rad): reference point and radius of each cluster, from the end
    points of its members (radius 1 for a cluster of no extent)."""
    hm = np.flatnonzero(has_rigid)
    pc = np.concatenate([member_cluster[hm], member_cluster[hm]])
    pts = np.vstack([geo.P[geo.start[hm]], geo.P[geo.end[hm]]])
    cnt = np.bincount(pc, minlength=nc).astype(float)
    ref = np.column_stack([np.bincount(pc, pts[:, 0], nc), np.bincount(pc, pts[:, 1], nc)]) / np.maximum(cnt, 1)[:, None]
    rad = np.zeros(nc)
    if len(pc):
        np.maximum.at(rad, pc, np.hypot(*(pts - ref[pc]).T))
    rad = np.where(rad > 0, rad, 1.0)

    return ref, rad


def _unknowns(geo: _Geometry, node_cluster, nc: int, ref, rad):
    """The contracted unknowns: three per cluster, two or three per free
    node; how each node's translation and rotation read from them, and
    the node of each unknown."""
    n = len(geo.xy)
    free = np.flatnonzero(node_cluster < 0)
    n_free_dof = np.where(geo.rot_restrained[free], 3, 2)
    free_start = 3 * nc + np.concatenate([[0], np.cumsum(n_free_dof)[:-1]]).astype(np.int64)
    n_dof = 3 * nc + int(n_free_dof.sum())

    node_cols = np.zeros((n, 3), dtype=np.int64)
    node_cx = np.zeros((n, 3))
    node_cy = np.zeros((n, 3))
    inc = np.flatnonzero(node_cluster >= 0)
    if len(inc):
        c_cols, c_cx, c_cy = _cluster_locator(ref, rad, node_cluster[inc], geo.P[inc])
        node_cols[inc], node_cx[inc], node_cy[inc] = c_cols, c_cx, c_cy
    node_cols[free] = free_start[:, None] + np.array([0, 1, 0])[None, :]
    node_cx[free, 0] = 1.0
    node_cy[free, 1] = 1.0
    node_rcol = np.zeros(n, dtype=np.int64)
    node_rcoef = np.zeros(n)
    if len(inc):
        node_rcol[inc] = 3 * node_cluster[inc] + 2
        node_rcoef[inc] = 1.0 / rad[node_cluster[inc]]
    fr = free[geo.rot_restrained[free]]
    node_rcol[fr] = free_start[geo.rot_restrained[free]] + 2
    node_rcoef[fr] = 1.0

    dof_node = np.zeros(n_dof, dtype=np.int64)
    if len(inc):
        dof_node[3 * node_cluster[inc][:, None] + np.arange(3)] = inc[:, None]
    for j in range(3):
        has = n_free_dof > j
        dof_node[free_start[has] + j] = free[has]

    return n_dof, node_cols, node_cx, node_cy, node_rcol, node_rcoef, dof_node


def _compatibility_blocks(geo: _Geometry, has_rigid, member_cluster, node_cluster, ref, rad, node_cols,
                          node_cx, node_cy, node_rcol, node_rcoef) -> list:
    """Row blocks ``(cols, vals, row_node)`` of the compatibility matrix:
    bars do not stretch, pinned ends of cluster members follow their node,
    supports hold their directions and rotations."""
    blocks: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []  # (cols, vals, row_node)
    # bars: no stretch
    bars = np.flatnonzero(~has_rigid)
    if len(bars):
        s, t = geo.start[bars], geo.end[bars]
        c, v = _rows(node_cols[s], node_cx[s], node_cy[s], geo.e[bars], node_cols[t], node_cx[t], node_cy[t])
        blocks.append((c, v, s))
    # pinned ends of cluster members: same translation as the node's owner
    one = np.flatnonzero(has_rigid & (geo.rel_s | geo.rel_e))
    if len(one):
        pin_node = np.where(geo.rel_s[one], geo.start[one], geo.end[one])
        pin_cl = member_cluster[one]
        keep = node_cluster[pin_node] != pin_cl
        pairs = np.unique(np.column_stack([pin_cl[keep], pin_node[keep]]), axis=0)
        if len(pairs):
            cl, nd = pairs[:, 0], pairs[:, 1]
            ca, xa, ya = _cluster_locator(ref, rad, cl, geo.P[nd])
            for d in (np.array([1.0, 0.0]), np.array([0.0, 1.0])):
                dd = np.tile(d, (len(nd), 1))
                c, v = _rows(ca, xa, ya, dd, node_cols[nd], node_cx[nd], node_cy[nd])
                blocks.append((c, v, nd))
    # supports: translational components, then rotational
    if len(geo.sup_node):
        s = geo.sup_node
        c, v = _rows(node_cols[s], node_cx[s], node_cy[s], geo.sup_dir)
        blocks.append((c, v, s))
    rn = np.flatnonzero(geo.rot_restrained)
    if len(rn):
        blocks.append((node_rcol[rn][:, None], node_rcoef[rn][:, None], rn))

    return blocks


def _stack_rows(blocks: list, n_dof: int):
    """(A, row_node): the blocks as one sparse matrix with unit rows (rows
    of no length dropped)."""
    if blocks:
        width = max(b[0].shape[1] for b in blocks)
        cols_l, vals_l, rnode = [], [], []
        for c, v, nd in blocks:
            pad = width - c.shape[1]
            cols_l.append(np.pad(c, ((0, 0), (0, pad))))
            vals_l.append(np.pad(v, ((0, 0), (0, pad))))
            rnode.append(nd)
        C = np.vstack(cols_l)
        V = np.vstack(vals_l)
        row_node = np.concatenate(rnode)
        R = np.repeat(np.arange(len(C)), width)
        A = sp.csr_matrix((V.ravel(), (R, C.ravel())), shape=(len(C), n_dof))
        A.sum_duplicates()
        norms = np.sqrt(np.asarray(A.multiply(A).sum(axis=1)).ravel())
        ok = norms > _ROW_DROP
        A = sp.diags(1.0 / np.where(ok, norms, 1.0)) @ A
        A = A[np.flatnonzero(ok)].tocsr()
        A.eliminate_zeros()
        row_node = row_node[ok]
    else:
        A = sp.csr_matrix((0, n_dof))
        row_node = np.zeros(0, dtype=np.int64)
    return A, row_node


def _reduce(geo: _Geometry) -> _Reduced:
    """Contract rigid clusters and assemble the compatibility rows (see the
    module docstring, step 1)."""
    has_rigid, member_cluster, node_cluster, nc = _rigid_clusters(geo)
    ref, rad = _cluster_frames(geo, has_rigid, member_cluster, nc)
    n_dof, node_cols, node_cx, node_cy, node_rcol, node_rcoef, dof_node = _unknowns(geo, node_cluster, nc, ref,
                                                                                    rad)
    blocks = _compatibility_blocks(geo, has_rigid, member_cluster, node_cluster, ref, rad, node_cols, node_cx,
                                   node_cy, node_rcol, node_rcoef)
    A, row_node = _stack_rows(blocks, n_dof)
    return _Reduced(A, row_node, n_dof, node_cluster, member_cluster, ref, rad, node_cols, node_cx, node_cy,
                    node_rcol, node_rcoef, dof_node)


# ---------------------------------------------------------------------------
# null spaces
# ---------------------------------------------------------------------------


def _null_space_dense(A: np.ndarray, floor: float = _SVD_FLOOR) -> tuple[np.ndarray, float | None]:
    """Orthonormal null-space basis (n, k) of a dense matrix and the ratio
    sigma_min / sigma_max of the smallest singular value counted nonzero."""
    m, n = A.shape
    if m == 0 or n == 0:
        return np.eye(n), None
    _, s, vt = np.linalg.svd(A, full_matrices=m < n)
    if s[0] == 0.0:
        return np.eye(n), None
    tol = max(_SVD_FACTOR * max(m, n) * _EPS, floor) * s[0]
    rank = int(np.count_nonzero(s > tol))
    ratio = float(s[rank - 1] / s[0]) if rank else None
    return vt[rank:].T.copy(), ratio


def _null_space_sparse(A: sp.csr_matrix, lower: int = 0, floor: float = _SVD_FLOOR) -> tuple[np.ndarray, float | None, bool]:
    """Null space of a sparse matrix by shifted inverse block iteration on
    ``A^T A`` (see the module docstring).

    The block ``X`` is driven into the eigenvectors of ``K0 = A^T A`` with
    the smallest eigenvalues through a sparse LU of ``K0 + shift * I``; then
    the singular values of ``A @ X`` (not the Ritz values of ``K0``, which
    square the condition) are compared with the same tolerance as the dense
    path, ``sigma_max`` being estimated by power iteration.

    Returns (basis (n, k), sigma_min / sigma_max of the smallest singular
    value counted nonzero or None, truncated) where ``truncated`` means the
    block reached ``_MAX_BLOCK`` with every direction null (the count is then
    a lower bound).
    """
    m, n = A.shape
    K = (A.T @ A).tocsc()
    if K.nnz == 0:
        return np.eye(n), None, False
    lam_bound = float(abs(K).sum(axis=0).max())     # Gershgorin bound of the largest eigenvalue
    rng = np.random.default_rng(20240611)
    x = rng.standard_normal(n)
    for _ in range(30):                              # power iteration: largest eigenvalue
        x = K @ x
        x /= np.linalg.norm(x) or 1.0
    sigma_max = math.sqrt(max(float(x @ (K @ x)), _EPS * lam_bound))
    tol = max(_SVD_FACTOR * max(m, n) * _EPS, floor) * sigma_max
    lu = splu((K + (_SHIFT * lam_bound) * sp.identity(n, format="csc")).tocsc(), permc_spec="MMD_AT_PLUS_A")
    k = min(n, max(8, lower + 8), _MAX_BLOCK)
    while True:
        X, _ = np.linalg.qr(rng.standard_normal((n, k)))
        for _ in range(_ITERATIONS):
            X, _ = np.linalg.qr(lu.solve(X))
        _, s, vt = np.linalg.svd(A @ X, full_matrices=m < k)
        s = np.concatenate([s, np.zeros(k - len(s))])
        null = s <= tol
        ns = int(null.sum())
        if ns < k or k >= n:
            above = s[~null]
            ratio = float(above.min() / sigma_max) if len(above) else None
            return X @ vt[null].T, ratio, False
        if k >= _MAX_BLOCK:
            return X @ vt[null].T, None, True
        k = min(n, 2 * k, _MAX_BLOCK)


def _localise(Z: np.ndarray) -> np.ndarray:
    """Recombine null-space columns so each is 1 at its own pivot unknown
    and 0 at the others (pivoted QR); modes then involve few unknowns."""
    q = Z.shape[1]
    if q <= 1:
        return Z
    _, _, piv = sla.qr(Z.T, mode="economic", pivoting=True)
    return Z @ np.linalg.inv(Z[piv[:q]])


# ---------------------------------------------------------------------------
# one connected part
# ---------------------------------------------------------------------------


def _groups(labels: np.ndarray, n_groups: int) -> list[np.ndarray]:
    """Indices of ``labels`` grouped by label 0..n_groups-1 (stable order)."""
    order = np.argsort(labels, kind="stable")
    return np.split(order, np.cumsum(np.bincount(labels, minlength=n_groups))[:-1])


@dataclass
class _Split:
    """The contracted problem cut into connected parts."""

    nodes: list[np.ndarray]
    members: list[np.ndarray]
    dofs: list[np.ndarray]          # global unknowns of each part
    sup: list[np.ndarray]           # indices into geo.sup_node
    entries: list[tuple[np.ndarray, np.ndarray, np.ndarray, int]]  # (row, col, value, n_rows), part-local
    local: np.ndarray               # (n_dof,) position of an unknown within its part

    def matrix(self, c: int, dense: bool) -> np.ndarray | sp.csr_matrix:
        """Rows of part ``c`` on its own unknowns, dense or sparse."""
        r, col, v, n_rows = self.entries[c]
        shape = (n_rows, len(self.dofs[c]))
        if dense:
            A = np.zeros(shape)
            A[r, col] = v
            return A
        return sp.csr_matrix((v, (r, col)), shape=shape)


def _split(geo: _Geometry, red: _Reduced, comp_of_node: np.ndarray, n_comp: int) -> _Split:
    dof_comp = comp_of_node[red.dof_node]
    dofs = _groups(dof_comp, n_comp)
    local = np.zeros(red.n_dof, dtype=np.int64)
    for d in dofs:
        local[d] = np.arange(len(d))
    row_comp = comp_of_node[red.row_node] if len(red.row_node) else np.zeros(0, dtype=np.int64)
    rows = _groups(row_comp, n_comp)
    local_row = np.zeros(len(row_comp), dtype=np.int64)
    for r in rows:
        local_row[r] = np.arange(len(r))
    coo = red.A.tocoo()
    entries = [
        (local_row[coo.row[e]], local[coo.col[e]], coo.data[e], len(rows[c]))
        for c, e in enumerate(_groups(dof_comp[coo.col], n_comp))
    ]
    sup = _groups(comp_of_node[geo.sup_node], n_comp) if len(geo.sup_node) else [np.zeros(0, dtype=np.int64)] * n_comp
    return _Split(
        nodes=_groups(comp_of_node, n_comp),
        members=_groups(comp_of_node[geo.start], n_comp),
        dofs=dofs,
        sup=sup,
        entries=entries,
        local=local,
    )


@dataclass
class _Mode:
    """One mechanism of a part, before it is put into words."""

    kind: str               # "free", "slide", "turn", "internal"
    z: np.ndarray           # the part's contracted unknowns
    direction: tuple[float, float] | None = None  # slide direction
    centre: tuple[float, float] | None = None     # turn centre (model units)


@dataclass
class _Part:
    nodes: np.ndarray
    members: np.ndarray
    dofs: np.ndarray
    modes: list[_Mode]
    supported: bool
    ratio: float | None
    truncated: bool
    parallel_dir: tuple[float, float] | None = None
    unresolved: int = 0     # mechanisms known from the count but beyond the search block

    @property
    def mechanisms(self) -> int:
        return len(self.modes) + self.unresolved


def _rigid_params(geo: _Geometry, red: _Reduced, nodes: np.ndarray, sup: np.ndarray, local: np.ndarray,
                  n_local: int):
    """Rigid-body motions of a part against its supports alone.

    Returns (S, G, centre, radius): S (rows, p) the restraint rows on the
    rigid parameters (tx, ty[, phi]) about the part's centroid, with
    rotation = phi / radius; G (n_local, p) maps the parameters to the
    part's contracted unknowns; p = 2 for a lone node (nothing to turn).
    """
    P = geo.P[nodes]
    centre = P.mean(axis=0)
    radius = float(np.hypot(*(P - centre).T).max()) if len(nodes) > 1 else 0.0
    p = 3 if radius > 0 else 2
    radius = radius if radius > 0 else 1.0
    sn, sd = geo.sup_node[sup], geo.sup_dir[sup]
    rows = [np.column_stack([sd, (-sd[:, 0] * (geo.P[sn, 1] - centre[1]) + sd[:, 1] * (geo.P[sn, 0] - centre[0])) / radius])]
    rot = nodes[geo.rot_restrained[nodes] & (red.node_cluster[nodes] >= 0)]
    if len(rot):
        rows.append(np.tile([0.0, 0.0, 1.0], (len(rot), 1)))
    S = np.vstack(rows)[:, :p]
    G = np.zeros((n_local, p))
    clusters = np.unique(red.node_cluster[nodes])
    clusters = clusters[clusters >= 0]
    if len(clusters):
        rel = red.cl_ref[clusters] - centre
        c0, c1, c2 = local[3 * clusters], local[3 * clusters + 1], local[3 * clusters + 2]
        G[c0, 0] = 1.0
        G[c1, 1] = 1.0
        if p == 3:
            G[c0, 2] = -rel[:, 1] / radius
            G[c1, 2] = rel[:, 0] / radius
            G[c2, 2] = red.cl_rad[clusters] / radius
    free = nodes[red.node_cluster[nodes] < 0]
    if len(free):
        f0, f1 = local[red.node_cols[free, 0]], local[red.node_cols[free, 1]]
        G[f0, 0] = 1.0
        G[f1, 1] = 1.0
        if p == 3:
            rel = geo.P[free] - centre
            G[f0, 2] = -rel[:, 1] / radius
            G[f1, 2] = rel[:, 0] / radius
    return S, G, centre, radius


def _small_null(S: np.ndarray, p: int, scale: float | None = None, floor: float = _SVD_FLOOR) -> np.ndarray:
    """Orthonormal null space (p, k) of a small dense restraint matrix;
    ``scale`` replaces its largest singular value in the tolerance (so the
    columns of a matrix can be tested against the whole matrix's scale)."""
    if S.shape[0] == 0:
        return np.eye(p)
    _, s, vt = np.linalg.svd(S, full_matrices=True)
    tol = max(_SVD_FACTOR * max(S.shape) * _EPS, floor) * (s[0] if scale is None else scale)
    rank = int(np.count_nonzero(s > tol))
    return vt[rank:].T


def _part(geo: _Geometry, red: _Reduced, split: _Split, c: int, dense_limit: int) -> _Part:
    nodes, dofs = split.nodes[c], split.dofs[c]
    dense = len(dofs) <= dense_limit
    A = split.matrix(c, dense)
    S, G, centre, radius = _rigid_params(geo, red, nodes, split.sup[c], split.local, len(dofs))
    p = G.shape[1]
    supported = S.shape[0] > 0
    Qp = _small_null(S, p, floor=geo.floor)   # rigid mechanisms in parameter space
    modes: list[_Mode] = []
    parallel_dir = None
    if Qp.shape[1] == p or not supported:
        modes = [_Mode("free", G @ Qp[:, j]) for j in range(Qp.shape[1])]
    else:
        # translations every reaction is normal to (same tolerance as for S)
        trans = _small_null(S[:, :2], 2, scale=float(np.linalg.norm(S, 2)), floor=geo.floor)
        for j in range(trans.shape[1]):
            t = np.array(_unit(trans[:, j]))
            q = np.zeros(p)
            q[:2] = t
            modes.append(_Mode("slide", G @ q, direction=(float(t[0]), float(t[1]))))
        if trans.shape[1] == 1 and len(split.sup[c]):
            parallel_dir = _unit((-trans[1, 0], trans[0, 0]))
        if Qp.shape[1] > trans.shape[1] and p == 3:
            Tq = np.zeros((p, trans.shape[1]))
            Tq[:2] = trans
            u, _, _ = np.linalg.svd(Qp - Tq @ (Tq.T @ Qp))
            q = u[:, 0]
            theta = q[2] / radius
            origin = geo.xy.min(axis=0)
            cx = (centre[0] - q[1] / theta) * geo.Lc + origin[0]
            cy = (centre[1] + q[0] / theta) * geo.Lc + origin[1]
            modes.append(_Mode("turn", G @ q, centre=(float(cx), float(cy))))
    n_rigid = len(modes)

    # internal mechanisms: hold the unknowns that carry the rigid modes, then take the null space
    Ar = A
    if n_rigid:
        R_local = np.column_stack([md.z for md in modes])
        _, _, piv = sla.qr(R_local.T, mode="economic", pivoting=True)
        E = sp.csr_matrix((np.ones(n_rigid), (np.arange(n_rigid), piv[:n_rigid])), shape=(n_rigid, len(dofs)))
        Ar = np.vstack([A, E.toarray()]) if dense else sp.vstack([A, E]).tocsr()
    lower = max(0, len(dofs) - Ar.shape[0])
    if dense:
        Z, ratio = _null_space_dense(Ar, geo.floor)
        truncated = False
    else:
        Z, ratio, truncated = _null_space_sparse(Ar, lower, geo.floor)
    Z = _localise(Z)
    modes += [_Mode("internal", Z[:, j]) for j in range(Z.shape[1])]
    unresolved = max(0, lower - Z.shape[1]) if truncated else 0
    return _Part(nodes, split.members[c], dofs, modes, supported, ratio, truncated, parallel_dir, unresolved)


# ---------------------------------------------------------------------------
# modes -> arrays and words
# ---------------------------------------------------------------------------


def _expand(geo: _Geometry, red: _Reduced, local: np.ndarray, part: _Part, z: np.ndarray) -> np.ndarray:
    """(n_nodes, 3) mode (ux, uy, rz) with max translation 1 (see module docstring)."""
    nodes = part.nodes
    cols = local[red.node_cols[nodes]]
    t = np.column_stack([(red.node_cx[nodes] * z[cols]).sum(axis=1), (red.node_cy[nodes] * z[cols]).sum(axis=1)])
    coef = red.node_rcoef[nodes]
    rz = np.where(coef != 0, coef * z[np.where(coef != 0, local[red.node_rcol[nodes]], 0)], 0.0)
    big = float(np.hypot(t[:, 0], t[:, 1]).max())
    if big <= 0.0:
        big = float(np.abs(rz).max()) or 1.0
    mode = np.zeros((len(geo.xy), 3))
    mode[nodes, :2] = t / big
    mode[nodes, 2] = rz / (big * geo.Lc)
    flat = mode[nodes, :2].ravel()
    if flat[int(np.argmax(np.abs(flat)))] < 0:
        mode = -mode
    return mode + 0.0   # no negative zeros


def _moving(geo: _Geometry, mode: np.ndarray, nodes: np.ndarray, members: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Nodes that translate in a mode, and members with a translating end."""
    tr = np.hypot(mode[:, 0], mode[:, 1])
    mv_nodes = nodes[tr[nodes] > _MOVE_TOL]
    mv_members = members[(tr[geo.start[members]] > _MOVE_TOL) | (tr[geo.end[members]] > _MOVE_TOL)]
    return mv_nodes, mv_members


def _active_hinges(geo: _Geometry, red: _Reduced, mode: np.ndarray, members: np.ndarray) -> np.ndarray:
    """Nodes where bodies meeting at a pin turn relative to each other."""
    n = len(geo.xy)
    t = mode[:, :2]
    rot_body = mode[:, 2] * geo.Lc            # dimensionless rotations
    hi = np.full(n, -np.inf)
    lo = np.full(n, np.inf)

    def add(nodes_, vals):
        np.maximum.at(hi, nodes_, vals)
        np.minimum.at(lo, nodes_, vals)

    bars = members[red.member_cluster[members] < 0]
    if len(bars):
        s, e = geo.start[bars], geo.end[bars]
        perp = np.column_stack([-geo.e[bars, 1], geo.e[bars, 0]])
        th = ((t[e] - t[s]) * perp).sum(axis=1) / geo.L[bars]
        add(s, th)
        add(e, th)
    cm = members[red.member_cluster[members] >= 0]
    if len(cm):
        # rotation of each cluster = rotation of any of its rigid nodes
        cl_rot = np.zeros(len(red.cl_rad))
        rigid_nodes = np.flatnonzero(red.node_cluster >= 0)
        cl_rot[red.node_cluster[rigid_nodes]] = rot_body[rigid_nodes]
        for ends in (geo.start[cm], geo.end[cm]):
            add(ends, cl_rot[red.member_cluster[cm]])
    if len(geo.sup_node):
        add(geo.sup_node, np.zeros(len(geo.sup_node)))
    spread = hi - lo
    return np.flatnonzero(np.isfinite(spread) & (spread > _MOVE_TOL))


def _collinear(P: np.ndarray, scale: float) -> bool:
    if len(P) < 3:
        return False
    Q = P - P.mean(axis=0)
    _, s, vt = np.linalg.svd(Q, full_matrices=False)
    dist = np.abs(Q @ vt[-1])
    return bool(dist.max() <= 1e-6 * max(s[0], scale))


def _unit(v) -> tuple[float, float]:
    """Unit vector with its first clearly nonzero component positive."""
    x, y = float(v[0]), float(v[1])
    h = math.hypot(x, y)
    x, y = x / h, y / h
    if x < -1e-9 or (abs(x) <= 1e-9 and y < 0):
        x, y = -x, -y
    return x + 0.0, y + 0.0


def _num(v: float) -> str:
    v = round(float(v), 4)
    return f"{0.0 if v == 0 else v:g}"


def _dir(v: tuple[float, float]) -> str:
    return f"({_num(round(v[0], 3))}, {_num(round(v[1], 3))})"


def _listing(items: list[str]) -> str:
    if len(items) > _LIST_MAX:
        return ", ".join(items[:_LIST_MAX]) + f" and {len(items) - _LIST_MAX} more"
    return ", ".join(items)


class _Words:
    """Formats nodes and members for the detail text."""

    def __init__(self, geo: _Geometry, unit_scale: float) -> None:
        self.geo = geo
        self.unit_scale = unit_scale

    def point(self, x: float, y: float) -> str:
        return f"({_num(x / self.unit_scale)}, {_num(y / self.unit_scale)})"

    def nodes(self, idx: np.ndarray) -> str:
        g = self.geo
        word = "node" if len(idx) == 1 else "nodes"
        return f"{word} " + _listing([f"{g.node_ids[i]} {self.point(*g.xy[i])}" for i in idx])

    def members(self, idx: np.ndarray) -> str:
        word = "member" if len(idx) == 1 else "members"
        return f"{word} " + _listing([self.geo.member_ids[k] for k in idx])


# ---------------------------------------------------------------------------
# classical count and warnings
# ---------------------------------------------------------------------------


def _count_text(r: int, m: int, j: int, c: int, degree: int, mechanisms: int) -> str:
    lhs, rhs = r + 3 * m, 3 * j + c
    c_txt = f"+ {c}" if c >= 0 else f"- {-c}"
    head = f"r + 3m = {r} + 3*{m} = {lhs} ; 3j + c = 3*{j} {c_txt} = {rhs} -> "
    if lhs == rhs:
        rel = "r + 3m = 3j + c (count says determinate)"
    elif lhs > rhs:
        rel = f"r + 3m > 3j + c (count says indeterminate, degree {lhs - rhs})"
    else:
        rel = f"r + 3m < 3j + c (count says unstable, at least {rhs - lhs} mechanism{'s' if rhs - lhs > 1 else ''})"
    if mechanisms == max(0, rhs - lhs):
        tail = "; rank test agrees"
    else:
        tail = (f"; rank test disagrees: {mechanisms} mechanism{'s' if mechanisms != 1 else ''} and degree "
                f"{degree}, a geometric instability the count cannot see")
    return head + rel + tail


def _transverse_warnings(frame: Frame, geo: _Geometry) -> list[str]:
    """Members released at both ends that carry a transverse member load."""
    both = {geo.member_ids[k]: k for k in np.flatnonzero(geo.rel_s & geo.rel_e)}
    flagged: dict[str, None] = {}
    for ld in frame.loads:
        k = both.get(getattr(ld, "member", None))
        if k is None:
            continue
        c, s = geo.e[k]
        transverse = False
        if isinstance(ld, MemberCouple):
            transverse = ld.m != 0
        elif isinstance(ld, PointLoad):
            vecs = [(ld.px, ld.py)]
            transverse = _has_transverse(vecs, ld.axes, c, s)
        elif isinstance(ld, DistributedLoad):
            vecs = [ld.q1, ld.q2 if ld.q2 is not None else ld.q1]
            transverse = _has_transverse(vecs, ld.axes, c, s)
        if transverse:
            flagged.setdefault(geo.member_ids[k], None)
    return [
        f"member {mid} is pinned at both ends and carries a transverse load: it is analysed as a simply "
        f"supported beam between its pins, not as a two-force member"
        for mid in flagged
    ]


def _has_transverse(vecs, axes: str, c: float, s: float) -> bool:
    for qx, qy in vecs:
        size = math.hypot(qx, qy)
        if size == 0:
            continue
        across = qy if axes == "local" else -s * qx + c * qy
        if abs(across) > 1e-9 * size:
            return True
    return False


# ---------------------------------------------------------------------------
# public entry point
# ---------------------------------------------------------------------------


def _check_warnings(frame: Frame, geo, parts, words) -> list[str]:
    """Warnings of :func:`check`: transverse loads on two-force members,
    lone nodes, a frame close to a mechanism, a truncated count."""
    warnings = _transverse_warnings(frame, geo)
    lone = np.flatnonzero(geo.n_ends == 0)
    if len(lone):
        warnings.append(f"{words.nodes(lone)} {'is' if len(lone) == 1 else 'are'} not connected to any member")
    ratios = [p.ratio for p in parts if p.ratio is not None and p.mechanisms == 0]
    if ratios and min(ratios) < _NEAR_RATIO:
        warnings.append(
            f"the frame is close to a mechanism (smallest singular value of the equilibrium matrix is "
            f"{min(ratios):.1e} of the largest): look for nearly collinear hinges or supports whose "
            f"reactions are nearly parallel or nearly meet at one point")
    if any(p.truncated for p in parts):
        warnings.append(f"more than {_MAX_BLOCK} mechanisms in one part: the count is a lower bound; "
                        "add supports and members first")

    return warnings


def _describe_mechanisms(geo, red, split, parts, words, n_comp: int):
    """(modes, nodes involved, members involved, sentences): the first
    :data:`_MAX_MODES` mechanism shapes of the parts in frame dofs and one
    sentence per mechanism (a part's free rigid-body modes in one)."""
    modes: list[np.ndarray] = []
    nodes_involved: list[list[int]] = []
    members_involved: list[list[str]] = []
    sentences: list[str] = []
    k = 0
    for p in parts:
        if not p.mechanisms:
            continue
        if len(modes) >= _MAX_MODES:
            k += p.mechanisms
            continue
        if n_comp == 1:
            part_name = "the frame"
        elif len(p.members):
            part_name = f"the part made of {words.members(p.members)}"
        else:
            part_name = f"the lone {words.nodes(p.nodes)}"
        shapes = []
        for md in p.modes[: _MAX_MODES - len(modes)]:
            mode = _expand(geo, red, split.local, p, md.z)
            mv_n, mv_m = _moving(geo, mode, p.nodes, p.members)
            shapes.append((md, mode, mv_n, mv_m))
            modes.append(mode)
            nodes_involved.append([geo.node_ids[i] for i in mv_n])
            members_involved.append([geo.member_ids[j] for j in mv_m])
        free = [s for s in shapes if s[0].kind == "free"]
        if free:
            first, last = k + 1, k + len(free)
            label = f"Mechanisms {first}-{last}" if len(free) > 1 else f"Mechanism {first}"
            what = "has no support" if not p.supported else "has no support that holds it"
            where = f" ({words.nodes(p.nodes)})" if len(p.members) else ""
            sentences.append(f"{label}: {part_name} {what}: it can move freely as a rigid body{where}.")
            k = last
        for md, mode, mv_n, mv_m in shapes:
            if md.kind == "free":
                continue
            k += 1
            if md.kind == "slide":
                if p.parallel_dir is not None:
                    why = (f"all support reactions are parallel (direction {_dir(p.parallel_dir)}), "
                           f"so none resists that movement")
                else:
                    why = "no support of it restrains translation"
                sentences.append(
                    f"Mechanism {k}: {part_name} can slide along {_dir(md.direction)} as a rigid body: {why}.")
            elif md.kind == "turn":
                at = words.point(*md.centre)
                sentences.append(
                    f"Mechanism {k}: {part_name} can turn as a rigid body about {at}: all reactions are "
                    f"concurrent at {at} (their lines of action meet there), so none resists that rotation.")
            else:
                hinges = _active_hinges(geo, red, mode, p.members)
                moving = f"{words.nodes(mv_n)} can move and {words.members(mv_m)} turn without straining any member"
                if _collinear(geo.P[hinges], 1.0):
                    sentences.append(
                        f"Mechanism {k}: {moving}, because the hinges at {words.nodes(hinges)} lie on one line.")
                else:
                    sentences.append(f"Mechanism {k}: {moving} (a linkage).")
        k += p.mechanisms - len(shapes)
        if p.truncated:
            sentences.append(f"{part_name[0].upper()}{part_name[1:]} has at least {p.mechanisms} mechanisms.")

    return modes, nodes_involved, members_involved, sentences


def _detail(status: str, degree: int, mechanisms: int, n_modes: int, sentences: list[str],
            warnings: list[str]) -> str:
    """The one-paragraph verdict of :func:`check` (appends to ``warnings``
    when mechanism shapes were dropped)."""
    if status == "unstable":
        plural = "s" if mechanisms != 1 else ""
        more = mechanisms - n_modes
        extra = f" ({more} more mechanism{'s' if more != 1 else ''} not described.)" if more > 0 else ""
        detail = (f"Unstable: {mechanisms} independent mechanism{plural}; the frame cannot carry load "
                  f"and is not solved. " + " ".join(sentences) + extra +
                  " Add a support or a member, or remove a hinge, near the nodes named.")
        if more > 0:
            warnings.append(f"only the first {n_modes} of {mechanisms} mechanism shapes are kept")
    elif status == "indeterminate":
        detail = (f"Stable and statically indeterminate to degree {degree}: {degree} redundant "
                  f"force{'s' if degree != 1 else ''} (axial redundants included) beyond what equilibrium "
                  f"alone gives.")
    else:
        detail = "Stable and statically determinate (degree 0): equilibrium alone gives every force."
    return detail


def check(frame: Frame, *, dense_limit: int = DENSE_LIMIT, unit_scale: float = 1.0) -> Determinacy:
    """Classify a frame as determinate, indeterminate (with degree) or
    unstable (with its mechanisms).

    Parameters
    ----------
    frame : the frame; only geometry, releases and supports matter (loads
        only for the two-force-member warning)
    dense_limit : parts with more contracted unknowns than this use the
        sparse null-space search instead of a dense SVD
    unit_scale : model length units per drawing unit; coordinates in
        ``detail`` are divided by it (pass ``DrawingModel.unit_scale`` to
        quote drawing coordinates).  Modes stay in model units.

    Returns
    -------
    Determinacy

    Raises
    ------
    FrameDataError  no members, a zero-length member, or a reference to a
        node that does not exist
    """
    geo = _geometry(frame)
    red = _reduce(geo)
    n, m = len(geo.xy), len(geo.start)
    words = _Words(geo, unit_scale)

    # connected parts of the frame (graph pre-check), each treated alone
    g = sp.coo_matrix((np.ones(m), (geo.start, geo.end)), shape=(n, n))
    n_comp, comp_of_node = connected_components(g, directed=False)
    split = _split(geo, red, comp_of_node, n_comp)
    parts = [_part(geo, red, split, c, dense_limit) for c in range(n_comp)]
    mechanisms = sum(p.mechanisms for p in parts)

    # counts: unknowns and equations of the full equilibrium matrix
    n_rigid_total = int(geo.n_rigid_ends.sum())
    pure = int(geo.pure_pin.sum())
    unknowns = m + n_rigid_total + geo.r
    equations = 3 * n - pure
    degree = unknowns - equations + mechanisms
    c_cond = (2 * m - n_rigid_total) - pure
    status = "unstable" if mechanisms else ("indeterminate" if degree > 0 else "determinate")
    count_check = _count_text(geo.r, m, n, c_cond, degree, mechanisms)

    warnings = _check_warnings(frame, geo, parts, words)
    modes, nodes_involved, members_involved, sentences = _describe_mechanisms(geo, red, split, parts, words,
                                                                              n_comp)
    detail = _detail(status, degree, mechanisms, len(modes), sentences, warnings)
    return Determinacy(status, int(degree), int(mechanisms), count_check, detail, modes, nodes_involved,
                       members_involved, warnings)
