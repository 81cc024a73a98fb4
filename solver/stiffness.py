"""Direct stiffness solution of a planar frame.

Elements are 2D frame members (axial + Euler-Bernoulli bending, prismatic)
with optional moment releases at either end, condensed out at element
level.  Supports restrain movement along their own axes x', y' (turned
``angle`` counter-clockwise) and rotation; the translational dofs of a
supported node are expressed in those axes (a transformation of the node,
not a penalty), so an inclined roller is an exact zero displacement along
y'.  Springs act along the same axes.  Settlements prescribe the
restrained components.

Member loads enter through fixed-end forces computed from the exact
homogeneous solutions of the element: the Hermite cubics (bending) and the
linear functions (axial) are the displacement fields of a unit end
movement with the other end clamped, so by Betti's reciprocal theorem the
fixed-end reaction in dof k is ``-(integral of shape_k * load)``, exact for
any load (3-point Gauss quadrature is exact for the degree-4 integrand of a
linearly varying load).  Released ends condense these forces with the
same algebra as the stiffness.

One sparse matrix (scipy.sparse, CSC) is assembled for the whole frame,
scaled to unit diagonal and factorised once (SuperLU, symmetric mode); all
load cases are solved as the columns of one right-hand side.

Sign conventions: global X right, Y up, rotations and moments
counter-clockwise.  Member end forces are the forces the nodes exert on
the member, in local axes (x start -> end, y 90 degrees CCW from x).
Reactions are the forces the supports exert on the structure, global.
"""
from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from .errors import LoadError, MissingSectionError, SolverError, SupportError, UnstableFrameError
from .forces import LoadSet, MemberLayout, MemberResults
from .model import DistributedLoad, Frame, MemberCouple, NodalLoad, PointLoad, Settlement
from .results import CaseResult, Reaction

__all__ = ["solve", "element_stiffness", "fixed_end_forces", "PIVOT_TOL"]

PIVOT_TOL = 1e-11
"""Smallest pivot of the unit-diagonal stiffness matrix accepted as stable."""

_POS_TOL = 1e-9  # relative tolerance on load positions (a / L)
_GAUSS_S = np.array([-math.sqrt(0.6), 0.0, math.sqrt(0.6)])
_GAUSS_W = np.array([5.0, 8.0, 5.0]) / 9.0


# --------------------------------------------------------------------------
# element level


def _full_local_stiffness(L: np.ndarray, EA: np.ndarray, EI: np.ndarray) -> np.ndarray:
    """(m, 6, 6) local stiffness of rigidly connected members, dofs
    ``u_i, v_i, th_i, u_j, v_j, th_j``."""
    m = len(L)
    k = np.zeros((m, 6, 6))
    a = EA / L
    b12, b6, b4, b2 = 12 * EI / L**3, 6 * EI / L**2, 4 * EI / L, 2 * EI / L
    k[:, 0, 0] = k[:, 3, 3] = a
    k[:, 0, 3] = k[:, 3, 0] = -a
    k[:, 1, 1] = k[:, 4, 4] = b12
    k[:, 1, 4] = k[:, 4, 1] = -b12
    k[:, 1, 2] = k[:, 2, 1] = k[:, 1, 5] = k[:, 5, 1] = b6
    k[:, 2, 4] = k[:, 4, 2] = k[:, 4, 5] = k[:, 5, 4] = -b6
    k[:, 2, 2] = k[:, 5, 5] = b4
    k[:, 2, 5] = k[:, 5, 2] = b2
    return k


def _release_groups(rel_s: np.ndarray, rel_e: np.ndarray) -> list[tuple[np.ndarray, list[int]]]:
    groups = []
    for rs, re, R in ((True, False, [2]), (False, True, [5]), (True, True, [2, 5])):
        idx = np.flatnonzero((rel_s == rs) & (rel_e == re))
        if len(idx):
            groups.append((idx, R))
    return groups


def _condense(k: np.ndarray, vecs: np.ndarray | None, rel_s: np.ndarray, rel_e: np.ndarray):
    """Static condensation of released end rotations.

    ``k`` (m, 6, 6) is condensed in place of a copy; ``vecs`` (m, 6, c)
    fixed-end forces are condensed with it.  Rows and columns of released
    dofs become exactly zero.
    """
    k = k.copy()
    vecs = None if vecs is None else vecs.copy()
    for idx, R in _release_groups(rel_s, rel_e):
        kg = k[idx]
        kRR = kg[:, R][:, :, R]
        kR = kg[:, R, :]  # (g, r, 6)
        Q = np.swapaxes(np.linalg.solve(kRR, np.swapaxes(kg[:, :, R], 1, 2)), 1, 2)  # k[:, :, R] kRR^-1
        kc = kg - Q @ kR
        kc[:, R, :] = 0.0
        kc[:, :, R] = 0.0
        k[idx] = kc
        if vecs is not None:
            vg = vecs[idx]
            vc = vg - Q @ vg[:, R, :]
            vc[:, R, :] = 0.0
            vecs[idx] = vc
    return k, vecs


def element_stiffness(length, EA, EI, release_start=False, release_end=False) -> np.ndarray:
    """Local stiffness matrices (m, 6, 6) of frame members, released end
    rotations condensed out (their rows and columns are zero).

    Parameters are arrays (or scalars) of member length, axial stiffness
    EA [force], bending stiffness EI [force*length**2] and release flags.
    """
    L = np.atleast_1d(np.asarray(length, dtype=float))
    EA = np.broadcast_to(np.asarray(EA, dtype=float), L.shape)
    EI = np.broadcast_to(np.asarray(EI, dtype=float), L.shape)
    rs = np.broadcast_to(np.asarray(release_start, dtype=bool), L.shape)
    re = np.broadcast_to(np.asarray(release_end, dtype=bool), L.shape)
    k, _ = _condense(_full_local_stiffness(L, EA, EI), None, rs, re)
    return k


def _fef_clamped(L: np.ndarray, loads: LoadSet) -> np.ndarray:
    """(m, 6) fixed-end forces (by the nodes on the member, local) of
    clamped-clamped members: minus the work-equivalent nodal loads of the
    exact element shape functions."""
    m = len(L)
    out = np.zeros((m, 6))

    def shapes(xi, Lm):
        h1 = 1 - 3 * xi**2 + 2 * xi**3
        h2 = Lm * (xi - 2 * xi**2 + xi**3)
        h3 = 3 * xi**2 - 2 * xi**3
        h4 = Lm * (-(xi**2) + xi**3)
        return h1, h2, h3, h4

    def add(mem, px, py, xi, Lm):
        h1, h2, h3, h4 = shapes(xi, Lm)
        vals = -np.column_stack([(1 - xi) * px, h1 * py, h2 * py, xi * px, h3 * py, h4 * py])
        for col in range(6):
            out[:, col] += np.bincount(mem, weights=vals[:, col], minlength=m)

    P = loads.points
    if len(P):
        Lm = L[loads.point_member]
        add(loads.point_member, P[:, 1], P[:, 2], P[:, 0] / Lm, Lm)
    C = loads.couples
    if len(C):
        mem = loads.couple_member
        Lm = L[mem]
        xi = C[:, 0] / Lm
        d1 = (-6 * xi + 6 * xi**2) / Lm
        d2 = 1 - 4 * xi + 3 * xi**2
        d3 = (6 * xi - 6 * xi**2) / Lm
        d4 = -2 * xi + 3 * xi**2
        c = C[:, 1]
        vals = -np.column_stack([0 * c, d1 * c, d2 * c, 0 * c, d3 * c, d4 * c])
        for col in range(6):
            out[:, col] += np.bincount(mem, weights=vals[:, col], minlength=m)
    D = loads.distributed
    if len(D):
        mem = loads.dist_member
        Lm = L[mem]
        a, b = D[:, 0], D[:, 1]
        half, mid = 0.5 * (b - a), 0.5 * (a + b)
        for s, w in zip(_GAUSS_S, _GAUSS_W):
            x = mid + half * s
            r = (x - a) / (b - a)
            qx = D[:, 2] + (D[:, 4] - D[:, 2]) * r
            qy = D[:, 3] + (D[:, 5] - D[:, 3]) * r
            add(mem, w * half * qx, w * half * qy, x / Lm, Lm)
    return out


def fixed_end_forces(length, loads: LoadSet, release_start=False, release_end=False) -> np.ndarray:
    """Fixed-end forces (m, 6) ``[Ni, Vi, Mi, Nj, Vj, Mj]``: the forces the
    nodes exert on each member, local axes, when both end nodes are held
    still, released ends free to rotate (condensed: their moment is zero).

    ``loads`` is a :class:`~dxf2frame.solver.forces.LoadSet` indexed by member.
    """
    L = np.atleast_1d(np.asarray(length, dtype=float))
    f = _fef_clamped(L, loads)
    rs = np.broadcast_to(np.asarray(release_start, dtype=bool), L.shape)
    re = np.broadcast_to(np.asarray(release_end, dtype=bool), L.shape)
    if not (rs.any() or re.any()):
        return f
    # condensation needs stiffness ratios only: unit EA, EI
    k = _full_local_stiffness(L, np.ones_like(L), np.ones_like(L))
    _, fc = _condense(k, f[:, :, None], rs, re)
    return fc[:, :, 0]


# --------------------------------------------------------------------------
# supports


@dataclass
class _SupportData:
    """Node axes and restraints gathered from the supports (node axes =
    the axes of the node's supports; global for unsupported nodes)."""

    cos: np.ndarray  # (n,) node axes
    sin: np.ndarray
    rigid: np.ndarray  # (n, 3) bool, in node axes
    spring: np.ndarray  # (n, 3) spring stiffness on non-rigid components
    owner: np.ndarray  # (n, 3) support index owning each rigid restraint (-1)
    springs: list[tuple[int, int, int, float]]  # (support index, node, comp, k)
    supported: np.ndarray  # (n,) bool


def _gather_supports(frame: Frame) -> _SupportData:
    n = len(frame.nodes)
    angle = np.zeros(n)
    have = np.zeros(n, bool)
    for s in frame.supports:  # axes from the first support that restrains a translation
        if not (0 <= s.node < n):
            raise SupportError(f"support on node {s.node}, which does not exist", handle=s.handle)
        if not have[s.node] and (s.ux or s.uy):
            angle[s.node], have[s.node] = s.angle, True
    for s in frame.supports:
        if not have[s.node]:
            angle[s.node], have[s.node] = s.angle, True
    rigid = np.zeros((n, 3), bool)
    spring = np.zeros((n, 3))
    owner = np.full((n, 3), -1)
    springs: list[tuple[int, int, int, float]] = []
    for si, s in enumerate(frame.supports):
        d = s.angle - angle[s.node]
        if abs(math.sin(d)) < 1e-9:
            cx, cy = 0, 1
        elif abs(math.cos(d)) < 1e-9:
            cx, cy = 1, 0
        elif s.ux or s.uy or s.kx or s.ky:
            raise SupportError(
                f"two supports at node {s.node} have axes that are neither parallel nor perpendicular",
                handle=s.handle, nodes=[s.node])
        else:
            cx, cy = 0, 1
        for fixed, k, comp in ((s.ux, s.kx, cx), (s.uy, s.ky, cy), (s.rz, s.kr, 2)):
            if fixed:
                rigid[s.node, comp] = True
                if owner[s.node, comp] < 0:
                    owner[s.node, comp] = si
            elif k is not None and k != 0:
                if not (math.isfinite(k) and k > 0):
                    raise SupportError(f"spring stiffness must be positive, got {k!r}", handle=s.handle,
                                       nodes=[s.node])
                springs.append((si, s.node, comp, float(k)))
    springs = [t for t in springs if not rigid[t[1], t[2]]]
    for _, node, comp, k in springs:
        spring[node, comp] += k
    return _SupportData(np.cos(angle), np.sin(angle), rigid, spring, owner, springs, have)


# --------------------------------------------------------------------------
# loads


@dataclass
class _CaseLoads:
    nodal: np.ndarray  # (n, 3) global fx, fy, m
    points: list
    couples: list
    dists: list
    settle: np.ndarray  # (n, 3) global dx, dy, rz
    settle_set: np.ndarray  # (n, 3) bool: a settlement was given

    @classmethod
    def empty(cls, n: int) -> "_CaseLoads":
        return cls(np.zeros((n, 3)), [], [], [], np.zeros((n, 3)), np.zeros((n, 3), bool))

    def loadset(self) -> LoadSet:
        p = np.array(self.points, dtype=float).reshape(-1, 4)
        c = np.array(self.couples, dtype=float).reshape(-1, 3)
        d = np.array(self.dists, dtype=float).reshape(-1, 7)
        return LoadSet.build(p[:, 1:], c[:, 1:], d[:, 1:], p[:, 0].astype(np.intp),
                             c[:, 0].astype(np.intp), d[:, 0].astype(np.intp))


def _finite(handle: str, *vals: float) -> None:
    for v in vals:
        if not (isinstance(v, (int, float, np.floating, np.integer)) and math.isfinite(v)):
            raise LoadError(f"load value {v!r} is not a finite number", handle=handle)


def _position(a: float, L: float, handle: str, mid: str) -> float:
    _finite(handle, a)
    tol = _POS_TOL * L
    if a < -tol or a > L + tol:
        raise LoadError(f"position {a:g} lies outside member {mid} (length {L:g})", handle=handle, members=[mid])
    return min(max(float(a), 0.0), L)


def _gather_loads(frame: Frame, cases: list[str], geo: tuple) -> dict[str, _CaseLoads]:
    L, c, s, index = geo
    n = len(frame.nodes)
    out = {name: _CaseLoads.empty(n) for name in cases}
    for ld in frame.loads:
        cl = out.get(ld.case)
        if cl is None:
            continue
        h = getattr(ld, "handle", "")
        if isinstance(ld, (NodalLoad, Settlement)):
            if not (0 <= ld.node < n):
                raise LoadError(f"load on node {ld.node}, which does not exist", handle=h)
            if isinstance(ld, NodalLoad):
                _finite(h, ld.fx, ld.fy, ld.m)
                cl.nodal[ld.node] += (ld.fx, ld.fy, ld.m)
            else:
                _finite(h, ld.dx, ld.dy, ld.rz)
                cl.settle[ld.node] += (ld.dx, ld.dy, ld.rz)
                cl.settle_set[ld.node] |= np.array([ld.dx != 0, ld.dy != 0, ld.rz != 0])
            continue
        j = index.get(ld.member)
        if j is None:
            raise LoadError(f"load on member {ld.member!r}, which does not exist", handle=h)
        Lj, cj, sj = L[j], c[j], s[j]
        if isinstance(ld, PointLoad):
            a = _position(ld.a, Lj, h, ld.member)
            _finite(h, ld.px, ld.py)
            px, py = (ld.px, ld.py) if ld.axes == "local" else (cj * ld.px + sj * ld.py, -sj * ld.px + cj * ld.py)
            cl.points.append((j, a, px, py))
        elif isinstance(ld, MemberCouple):
            a = _position(ld.a, Lj, h, ld.member)
            _finite(h, ld.m)
            cl.couples.append((j, a, ld.m))
        elif isinstance(ld, DistributedLoad):
            q1 = tuple(ld.q1)
            q2 = q1 if ld.q2 is None else tuple(ld.q2)
            _finite(h, *q1, *q2)
            a = _position(ld.a, Lj, h, ld.member)
            b = _position(Lj if ld.b is None else ld.b, Lj, h, ld.member)
            if b < a:
                a, b, q1, q2 = b, a, q2, q1
            if b - a <= _POS_TOL * Lj:
                raise LoadError(f"distributed load on member {ld.member} covers no length (a={a:g}, b={b:g})",
                                handle=h, members=[ld.member])
            f = abs(cj) if ld.projected else 1.0
            if ld.axes == "local":
                l1, l2 = q1, q2
            else:
                l1 = (cj * q1[0] + sj * q1[1], -sj * q1[0] + cj * q1[1])
                l2 = (cj * q2[0] + sj * q2[1], -sj * q2[0] + cj * q2[1])
            cl.dists.append((j, a, b, f * l1[0], f * l1[1], f * l2[0], f * l2[1]))
        else:
            raise LoadError(f"unknown load type {type(ld).__name__}", handle=h)
    return out


# --------------------------------------------------------------------------
# solve


def _unstable(dofs: Iterable[int], what: str) -> UnstableFrameError:
    nodes = sorted({int(d) // 3 for d in dofs})
    shown = ", ".join(str(v) for v in nodes[:12]) + (" ..." if len(nodes) > 12 else "")
    return UnstableFrameError(
        f"the frame is a mechanism ({what} at node(s) {shown}); "
        "add supports, members or rigid joints (solver.check explains the mechanism)",
        nodes=nodes,
    )


def solve(frame: Frame, cases: Iterable[str] | None = None, *, determinate: bool | None = None) -> dict[str, CaseResult]:
    """Solve every load case of a frame.

    Parameters
    ----------
    frame : the frame (consistent units, e.g. N and m)
    cases : names of the load cases to solve (default: every case that has
        loads, in first-seen order); a name without loads gives a zero result
    determinate : say that the frame is statically determinate (e.g. from
        ``solver.check``).  Needed only when some member has no section:
        the forces of a determinate frame do not depend on stiffness, so it
        is solved with nominal stiffness and ``displacements`` is None.

    Returns
    -------
    ``{case name: CaseResult}``

    Raises
    ------
    UnstableFrameError : the stiffness matrix is singular (a mechanism), or
        a couple acts on a joint where every member end is pinned
    MissingSectionError : members without a section, unless ``determinate``
        is True and the frame is indeed determinate
    LoadError, SupportError : a load or support that cannot be applied
    """
    if not frame.members:
        raise SolverError("the frame has no members")
    case_names = list(frame.cases()) if cases is None else list(dict.fromkeys(cases))
    n = len(frame.nodes)
    m = len(frame.members)
    N = 3 * n
    xy = np.array([(nd.x, nd.y) for nd in frame.nodes], dtype=float).reshape(n, 2)
    si = np.array([mb.start for mb in frame.members], dtype=np.intp)
    ei = np.array([mb.end for mb in frame.members], dtype=np.intp)
    if si.min() < 0 or ei.min() < 0 or si.max() >= n or ei.max() >= n:
        bad = next(mb for mb in frame.members if not (0 <= mb.start < n and 0 <= mb.end < n))
        raise SolverError(f"member {bad.id} refers to a node that does not exist", handle=bad.handle,
                          members=[bad.id])
    d = xy[ei] - xy[si]
    L = np.hypot(d[:, 0], d[:, 1])
    if not np.all(L > 0):
        bad = frame.members[int(np.argmin(L))]
        raise SolverError(f"member {bad.id} has zero length", handle=bad.handle, members=[bad.id])
    c, s = d[:, 0] / L, d[:, 1] / L
    rel_s = np.array([mb.release_start for mb in frame.members], dtype=bool)
    rel_e = np.array([mb.release_end for mb in frame.members], dtype=bool)
    ids = tuple(mb.id for mb in frame.members)
    if len(set(ids)) != m:
        raise SolverError("member ids must be unique")

    # stiffness properties
    missing = [mb for mb in frame.members if mb.section is None]
    nominal = bool(missing)
    if nominal:
        if determinate is not True:
            raise MissingSectionError(
                f"{len(missing)} member(s) have no section ({', '.join(mb.id for mb in missing[:8])}"
                f"{' ...' if len(missing) > 8 else ''}); give sections, or solve with determinate=True "
                "after checking that the frame is statically determinate",
                handle=missing[0].handle, members=[mb.id for mb in missing])
        EA = np.ones(m)
        EI = np.full(m, float(np.mean(L)) ** 2)
    else:
        EA = np.array([mb.section.E * mb.section.A for mb in frame.members], dtype=float)
        EI = np.array([mb.section.E * mb.section.I for mb in frame.members], dtype=float)

    sup = _gather_supports(frame)

    # dofs: a rotation is dropped where nothing gives it stiffness (every
    # member end pinned, no rotational restraint); a node without members
    # has no dofs at all
    rot_ends = np.bincount(si[~rel_s], minlength=n) + np.bincount(ei[~rel_e], minlength=n)
    touched = np.bincount(np.concatenate([si, ei]), minlength=n) > 0
    active = np.repeat(touched[:, None], 3, axis=1)
    active[:, 2] &= (rot_ends > 0) | sup.rigid[:, 2] | (sup.spring[:, 2] > 0)
    act = active.ravel()
    rig = sup.rigid.ravel() & act
    free = act & ~rig
    free_idx = np.flatnonzero(free)
    rig_idx = np.flatnonzero(rig)

    # element matrices: local, condensed, then to node axes
    k_full = _full_local_stiffness(L, EA, EI)
    k_loc, _ = _condense(k_full, None, rel_s, rel_e)
    T = np.zeros((m, 6, 6))
    for end, nodes in ((0, si), (3, ei)):
        ce = c * sup.cos[nodes] + s * sup.sin[nodes]
        se = s * sup.cos[nodes] - c * sup.sin[nodes]
        T[:, end, end] = ce
        T[:, end, end + 1] = se
        T[:, end + 1, end] = -se
        T[:, end + 1, end + 1] = ce
        T[:, end + 2, end + 2] = 1.0
    ke = np.einsum("mji,mjk,mkl->mil", T, k_loc, T, optimize=True)
    dof = np.column_stack([3 * si, 3 * si + 1, 3 * si + 2, 3 * ei, 3 * ei + 1, 3 * ei + 2])
    rows = np.repeat(dof, 6, axis=1).ravel()
    cols = np.tile(dof, (1, 6)).ravel()
    K = sp.csr_matrix((ke.ravel(), (rows, cols)), shape=(N, N))
    spring_diag = sup.spring.ravel() * free

    # loads, case by case
    geo = (L, c, s, dict(zip(ids, range(m))))
    per_case = _gather_loads(frame, case_names, geo)
    nc = len(case_names)
    F = np.zeros((N, nc))
    Ur = np.zeros((N, nc))
    f0 = np.zeros((nc, m, 6))
    loadsets: list[LoadSet] = []
    for ci, name in enumerate(case_names):
        cl = per_case[name]
        nod = cl.nodal
        # global -> node axes
        F[0::3, ci] = sup.cos * nod[:, 0] + sup.sin * nod[:, 1]
        F[1::3, ci] = -sup.sin * nod[:, 0] + sup.cos * nod[:, 1]
        F[2::3, ci] = nod[:, 2]
        ls = cl.loadset()
        loadsets.append(ls)
        if len(ls):
            f0[ci] = _fef_clamped(L, ls)
        st = cl.settle
        if cl.settle_set.any():
            bad = np.flatnonzero(cl.settle_set.any(axis=1) & ~sup.supported)
            if len(bad):
                raise LoadError(f"settlement at node {int(bad[0])}, which has no support", nodes=[int(bad[0])])
            Ur[0::3, ci] = sup.cos * st[:, 0] + sup.sin * st[:, 1]
            Ur[1::3, ci] = -sup.sin * st[:, 0] + sup.cos * st[:, 1]
            Ur[2::3, ci] = st[:, 2]
    Ur[~rig] = 0.0
    if (rel_s.any() or rel_e.any()) and nc:
        _, fc = _condense(k_full, np.moveaxis(f0, 0, 2), rel_s, rel_e)
        f0 = np.moveaxis(fc, 2, 0)
    # equivalent nodal loads: -T^T f0, scattered to the nodes
    if nc:
        eq = -np.einsum("mji,cmj->cmi", T, f0, optimize=True)
        for ci in range(nc):
            F[:, ci] += np.bincount(dof.ravel(), weights=eq[ci].ravel(), minlength=N)
    dropped = ~act
    if nc and np.any(np.abs(F[dropped]) > 0):
        bad = np.flatnonzero(np.any(np.abs(F[dropped]) > 0, axis=1))
        raise _unstable(np.flatnonzero(dropped)[bad], "a load on a joint where every member end is pinned"
                        " (or on a node without members)")

    # solve K_ff u_f = F_f - K_fr u_r
    U = np.zeros((N, nc))
    U[rig_idx] = Ur[rig_idx]
    if len(free_idx):
        Kf = K[free_idx]
        Kff = (Kf[:, free_idx] + sp.diags(spring_diag[free_idx])).tocsc()
        rhs = F[free_idx] - (Kf[:, rig_idx] @ Ur[rig_idx] if len(rig_idx) else 0.0)
        diag = Kff.diagonal()
        if np.any(diag <= 0):
            raise _unstable(free_idx[diag <= 0], "no stiffness")
        dsc = 1.0 / np.sqrt(diag)
        Ds = sp.diags(dsc)
        Ks = (Ds @ Kff @ Ds).tocsc()
        try:
            lu = splu(Ks, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                      options={"SymmetricMode": True})
        except RuntimeError:
            raise _unstable(free_idx, "singular stiffness") from None
        piv = np.abs(lu.U.diagonal())
        if piv.size and (not np.all(np.isfinite(piv)) or piv.min() < PIVOT_TOL):
            inv = np.empty_like(lu.perm_c)
            inv[lu.perm_c] = np.arange(len(inv))
            weak = inv[np.flatnonzero(~(piv >= PIVOT_TOL))]
            raise _unstable(free_idx[weak], "no stiffness left after elimination")
        if nc:
            U[free_idx] = dsc[:, None] * lu.solve(dsc[:, None] * rhs)
            if not np.all(np.isfinite(U)):
                raise _unstable(free_idx, "non-finite displacements")

    # determinate frame without sections: confirm by counting (valid once
    # the frame is known to be stable)
    if nominal:
        unknowns = int(np.sum(3 - rel_s - rel_e)) + int(rig.sum()) + int(np.sum(spring_diag > 0))
        degree = unknowns - int(act.sum())
        if degree != 0:
            raise MissingSectionError(
                f"the frame is statically indeterminate (degree {degree}) and {len(missing)} member(s) "
                "have no section; its forces depend on the stiffness",
                handle=missing[0].handle, members=[mb.id for mb in missing])

    # member end forces (local) and end displacements
    de = U[dof]  # (m, 6, nc) node axes
    dl = np.einsum("mij,mjc->mic", T, de, optimize=True)
    fe = np.einsum("mij,mjc->mic", k_loc, dl, optimize=True) + np.moveaxis(f0, 0, 2)

    # reactions: rigid restraints K u - F, springs -k u (node axes)
    R = np.zeros((N, nc))
    if len(rig_idx):
        R[rig_idx] = K[rig_idx] @ U - F[rig_idx]
    nsup = len(frame.supports)
    Rs = np.zeros((nsup, 3, nc))
    own = sup.owner.ravel()
    for g in rig_idx:
        Rs[own[g], g % 3] += R[g]
    for si_, node, comp, k in sup.springs:
        Rs[si_, comp] -= k * U[3 * node + comp]

    # global displacements
    ux = sup.cos[:, None] * U[0::3] - sup.sin[:, None] * U[1::3]
    uy = sup.sin[:, None] * U[0::3] + sup.cos[:, None] * U[1::3]
    rz = U[2::3]

    layout = MemberLayout(ids, L, c, s, None if nominal else EA, None if nominal else EI)
    frame_cases = tuple(frame.cases())
    results: dict[str, CaseResult] = {}
    for ci, name in enumerate(case_names):
        reactions = []
        for k_, sp_ in enumerate(frame.supports):
            nd = sp_.node
            cn, sn = sup.cos[nd], sup.sin[nd]
            rx, ry, rm = Rs[k_, :, ci]
            reactions.append(Reaction(nd, float(xy[nd, 0]), float(xy[nd, 1]), float(cn * rx - sn * ry),
                                      float(sn * rx + cn * ry), float(rm), k_))
        disp = None if nominal else np.column_stack([ux[:, ci], uy[:, ci], rz[:, ci]])
        ed = None if nominal else dl[:, [0, 1, 3, 4], ci]
        members = MemberResults(layout, fe[:, :, ci], loadsets[ci], ed)
        results[name] = CaseResult(name, "case", {name: 1.0}, disp, reactions, members,
                                   frame_cases=frame_cases)
    return results
