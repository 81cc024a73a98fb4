"""Direct stiffness solution of a planar frame, as named steps.

:func:`solve` runs the steps in order; each is a function of its own so
the second-order and moving-load analyses reuse them:

1. :func:`prepare` -- geometry, stiffness properties, supports, the dof
   map and the assembled sparse stiffness (:class:`FrameModel`; nothing
   here depends on the loads);
2. :func:`load_vectors` -- nodal load vectors, prescribed settlements and
   fixed-end forces of every case (:class:`LoadVectors`);
3. :func:`factorise` -- the free-free stiffness (plus any extra matrix,
   e.g. a geometric stiffness) scaled to unit diagonal and factorised once
   (:class:`Factorisation`); a singular matrix is a mechanism;
4. :func:`displacements` -- ``K_ff u_f = F_f - K_fr u_r`` for all cases at
   once (the cases are the columns of one right-hand side);
5. recovery -- :func:`member_end_forces`, :func:`support_reactions` and
   :func:`case_results`.

Elements are 2D frame members (axial + Euler-Bernoulli bending, prismatic)
with optional moment releases at either end, condensed out at element
level (:mod:`solver.element`).  Supports restrain movement along their own
axes (:mod:`solver.supports`); settlements prescribe the restrained
components.

Sign conventions: global X right, Y up, rotations and moments
counter-clockwise.  Member end forces are the forces the nodes exert on
the member, in local axes (x start -> end, y 90 degrees CCW from x).
Reactions are the forces the supports exert on the structure, global.
Units: one consistent system chosen by the caller (N, m, Pa in the DXF
pipeline).
"""
from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from .case_loads import gather_loads
from .element import condense, element_stiffness, fixed_end_forces, full_local_stiffness, clamped_fixed_end_forces
from .errors import LoadError, MissingSectionError, SolverError, UnstableFrameError
from .forces import LoadSet, MemberLayout, MemberResults
from .model import Frame, Member
from .results import CaseResult, Reaction
from .supports import SupportData, gather_supports

__all__ = [
    "solve",
    "element_stiffness",
    "fixed_end_forces",
    "PIVOT_TOL",
    "FrameModel",
    "LoadVectors",
    "Factorisation",
    "prepare",
    "load_vectors",
    "factorise",
    "displacements",
    "member_end_forces",
    "support_reactions",
    "case_results",
    "assemble",
    "unstable",
]

PIVOT_TOL = 1e-11
"""Smallest pivot of the unit-diagonal stiffness matrix accepted as stable."""

_RHS_BLOCK = 64  # right-hand-side columns per SuperLU solve call


# --------------------------------------------------------------------------
# step 1: the model without loads


@dataclass(frozen=True, eq=False)
class FrameModel:
    """A frame ready for loads: geometry, stiffness, supports, dofs and the
    assembled stiffness matrix.

    Dofs are three per node, ``3*node + (0, 1, 2)``: translations along the
    node axes (the axes of the node's supports; global for unsupported
    nodes) and the rotation.  ``act`` marks dofs that exist (a rotation is
    dropped where nothing gives it stiffness: every member end pinned and
    no rotational restraint; a node without members has no dofs);
    ``rig`` the rigidly restrained ones, ``free`` the unknowns.

    Attributes
    ----------
    frame : the frame
    xy : (n, 2) node coordinates
    si, ei : (m,) start and end node of each member
    L, c, s : (m,) member length and direction cosines of local x
    rel_s, rel_e : (m,) moment releases
    ids : member ids in frame order
    EA, EI : (m,) axial [force] and bending [force*length**2] stiffness
        (nominal values when ``nominal``)
    nominal : some member has no section; the frame is solved with nominal
        stiffness (forces only, valid for a determinate frame)
    missing : the members without a section
    sup : the supports gathered per node
    act, rig, free : (3n,) bool dof masks; ``free_idx``, ``rig_idx`` indices
    T : (m, 6, 6) rotation from node axes to member local axes
    dof : (m, 6) global dof numbers of each member's ends
    k_full : (m, 6, 6) local stiffness before condensation of releases
    k_loc : (m, 6, 6) local stiffness, releases condensed
    K : (3n, 3n) assembled stiffness in node axes (CSR, no springs)
    spring_diag : (3n,) spring stiffness on the free dofs (0 elsewhere)
    """

    frame: Frame
    xy: np.ndarray
    si: np.ndarray
    ei: np.ndarray
    L: np.ndarray
    c: np.ndarray
    s: np.ndarray
    rel_s: np.ndarray
    rel_e: np.ndarray
    ids: tuple[str, ...]
    EA: np.ndarray
    EI: np.ndarray
    nominal: bool
    missing: tuple[Member, ...]
    sup: SupportData
    act: np.ndarray
    rig: np.ndarray
    free: np.ndarray
    free_idx: np.ndarray
    rig_idx: np.ndarray
    T: np.ndarray
    dof: np.ndarray
    k_full: np.ndarray
    k_loc: np.ndarray
    K: sp.csr_matrix
    spring_diag: np.ndarray

    @property
    def n_dofs(self) -> int:
        return 3 * len(self.xy)

    def layout(self) -> MemberLayout:
        """Geometry and stiffness of the members for the results (no
        stiffness when ``nominal``)."""
        return MemberLayout(self.ids, self.L, self.c, self.s, None if self.nominal else self.EA,
                            None if self.nominal else self.EI)

    def geo(self) -> tuple:
        """(L, c, s, {member id: index}) as :func:`~dxf2frame.solver.case_loads.gather_loads` takes it."""
        return (self.L, self.c, self.s, dict(zip(self.ids, range(len(self.ids)))))


def _member_geometry(frame: Frame):
    """Node coordinates, member ends, lengths, directions, releases and
    ids, checked (members exist, refer to nodes, have length, unique ids)."""
    if not frame.members:
        raise SolverError("the frame has no members")
    n = len(frame.nodes)
    m = len(frame.members)
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
    return xy, si, ei, L, c, s, rel_s, rel_e, ids


def _member_stiffness(frame: Frame, L: np.ndarray, determinate: bool | None):
    """(EA, EI, nominal, missing): the sections' stiffness, or nominal
    values when some member has no section and the caller says the frame
    is determinate."""
    m = len(frame.members)
    missing = tuple(mb for mb in frame.members if mb.section is None)
    if missing:
        if determinate is not True:
            raise MissingSectionError(
                f"{len(missing)} member(s) have no section ({', '.join(mb.id for mb in missing[:8])}"
                f"{' ...' if len(missing) > 8 else ''}); give sections, or solve with determinate=True "
                "after checking that the frame is statically determinate",
                handle=missing[0].handle, members=[mb.id for mb in missing])
        return np.ones(m), np.full(m, float(np.mean(L)) ** 2), True, missing
    EA = np.array([mb.section.E * mb.section.A for mb in frame.members], dtype=float)
    EI = np.array([mb.section.E * mb.section.I for mb in frame.members], dtype=float)
    return EA, EI, False, missing


def _active_dofs(n: int, si, ei, rel_s, rel_e, sup: SupportData) -> np.ndarray:
    """(3n,) bool: the dofs that exist.  A rotation is dropped where
    nothing gives it stiffness (every member end pinned, no rotational
    restraint); a node without members has no dofs at all."""
    rot_ends = np.bincount(si[~rel_s], minlength=n) + np.bincount(ei[~rel_e], minlength=n)
    touched = np.bincount(np.concatenate([si, ei]), minlength=n) > 0
    active = np.repeat(touched[:, None], 3, axis=1)
    active[:, 2] &= (rot_ends > 0) | sup.rigid[:, 2] | (sup.spring[:, 2] > 0)
    return active.ravel()


def _node_to_local(c, s, si, ei, sup: SupportData) -> np.ndarray:
    """(m, 6, 6) rotation taking end displacements in node axes to member
    local axes."""
    m = len(c)
    T = np.zeros((m, 6, 6))
    for end, nodes in ((0, si), (3, ei)):
        ce = c * sup.cos[nodes] + s * sup.sin[nodes]
        se = s * sup.cos[nodes] - c * sup.sin[nodes]
        T[:, end, end] = ce
        T[:, end, end + 1] = se
        T[:, end + 1, end] = -se
        T[:, end + 1, end + 1] = ce
        T[:, end + 2, end + 2] = 1.0
    return T


def assemble(model_or_T, k_local: np.ndarray, dof: np.ndarray | None = None,
             n_dofs: int | None = None) -> sp.csr_matrix:
    """Assemble local element matrices (m, 6, 6) into one sparse (3n, 3n)
    matrix in node axes: ``sum T^T k T`` scattered to the member dofs.

    Called as ``assemble(model, k_local)`` with a :class:`FrameModel`, or
    ``assemble(T, k_local, dof, n_dofs)``.
    """
    if isinstance(model_or_T, FrameModel):
        T, dof, n_dofs = model_or_T.T, model_or_T.dof, model_or_T.n_dofs
    else:
        T = model_or_T
    ke = np.einsum("mji,mjk,mkl->mil", T, k_local, T, optimize=True)
    rows = np.repeat(dof, 6, axis=1).ravel()
    cols = np.tile(dof, (1, 6)).ravel()
    return sp.csr_matrix((ke.ravel(), (rows, cols)), shape=(n_dofs, n_dofs))


def prepare(frame: Frame, *, determinate: bool | None = None) -> FrameModel:
    """Step 1: check the frame and assemble its stiffness (see
    :class:`FrameModel`).  ``determinate`` as in :func:`solve`."""
    xy, si, ei, L, c, s, rel_s, rel_e, ids = _member_geometry(frame)
    EA, EI, nominal, missing = _member_stiffness(frame, L, determinate)
    sup = gather_supports(frame)
    n = len(xy)
    act = _active_dofs(n, si, ei, rel_s, rel_e, sup)
    rig = sup.rigid.ravel() & act
    free = act & ~rig
    k_full = full_local_stiffness(L, EA, EI)
    k_loc, _ = condense(k_full, None, rel_s, rel_e)
    T = _node_to_local(c, s, si, ei, sup)
    dof = np.column_stack([3 * si, 3 * si + 1, 3 * si + 2, 3 * ei, 3 * ei + 1, 3 * ei + 2])
    K = assemble(T, k_loc, dof, 3 * n)
    return FrameModel(frame, xy, si, ei, L, c, s, rel_s, rel_e, ids, EA, EI, nominal, missing, sup,
                      act, rig, free, np.flatnonzero(free), np.flatnonzero(rig), T, dof, k_full, k_loc, K,
                      sup.spring.ravel() * free)


# --------------------------------------------------------------------------
# step 2: loads


@dataclass(eq=False)
class LoadVectors:
    """The loads of several cases (the columns), in the model's dofs.

    Attributes
    ----------
    names : the case names, one per column
    F : (3n, nc) nodal loads in node axes, the equivalent nodal loads of
        the member loads included
    Ur : (3n, nc) prescribed displacements of the rigid dofs (settlements,
        node axes; zero on every other dof)
    f0 : (nc, m, 6) fixed-end forces of the member loads, local axes,
        releases condensed
    loadsets : the member loads of each case (local axes, for the diagrams)
    """

    names: list[str]
    F: np.ndarray
    Ur: np.ndarray
    f0: np.ndarray
    loadsets: list[LoadSet]

    def combined(self, factors: dict[str, float], name: str) -> "LoadVectors":
        """One column: the sum of the cases scaled by ``factors`` (cases
        not among ``names`` contribute nothing)."""
        w = np.array([float(factors.get(nm, 0.0)) for nm in self.names])
        ls = LoadSet.empty()
        for f, l in zip(w, self.loadsets):
            if f != 0.0 and len(l):
                ls = ls + l.scaled(f)
        return LoadVectors([name], self.F @ w[:, None], self.Ur @ w[:, None],
                           np.einsum("c,cmk->mk", w, self.f0)[None], [ls])


def _node_axes(sup: SupportData, vec: np.ndarray) -> np.ndarray:
    """(n, 3) global (x, y, rotation) -> (3n,) in node axes."""
    out = np.empty(3 * len(vec))
    out[0::3] = sup.cos * vec[:, 0] + sup.sin * vec[:, 1]
    out[1::3] = -sup.sin * vec[:, 0] + sup.cos * vec[:, 1]
    out[2::3] = vec[:, 2]
    return out


def load_vectors(model: FrameModel, case_names: Sequence[str]) -> LoadVectors:
    """Step 2: gather and check the loads of ``case_names`` and turn them
    into load vectors (see :class:`LoadVectors`).

    Raises LoadError for a load that cannot be applied (including a
    settlement at a node without support) and UnstableFrameError for a
    load on a dof that does not exist (a couple on a joint where every
    member end is pinned, or a load on a node without members)."""
    case_names = list(case_names)
    N, m, nc = model.n_dofs, len(model.ids), len(case_names)
    sup = model.sup
    per_case = gather_loads(model.frame, case_names, model.geo())
    F = np.zeros((N, nc))
    Ur = np.zeros((N, nc))
    f0 = np.zeros((nc, m, 6))
    loadsets: list[LoadSet] = []
    for ci, name in enumerate(case_names):
        cl = per_case[name]
        F[:, ci] = _node_axes(sup, cl.nodal)
        ls = cl.loadset()
        loadsets.append(ls)
        if len(ls):
            f0[ci] = clamped_fixed_end_forces(model.L, ls)
        if cl.settle_set.any():
            bad = np.flatnonzero(cl.settle_set.any(axis=1) & ~sup.supported)
            if len(bad):
                raise LoadError(f"settlement at node {int(bad[0])}, which has no support", nodes=[int(bad[0])])
            Ur[:, ci] = _node_axes(sup, cl.settle)
    Ur[~model.rig] = 0.0
    if (model.rel_s.any() or model.rel_e.any()) and nc:
        _, fc = condense(model.k_full, np.moveaxis(f0, 0, 2), model.rel_s, model.rel_e)
        f0 = np.moveaxis(fc, 2, 0)
    if nc:  # equivalent nodal loads: -T^T f0, scattered to the nodes
        eq = -np.einsum("mji,cmj->cmi", model.T, f0, optimize=True)
        for ci in range(nc):
            F[:, ci] += np.bincount(model.dof.ravel(), weights=eq[ci].ravel(), minlength=N)
    dropped = ~model.act
    if nc and np.any(np.abs(F[dropped]) > 0):
        bad = np.flatnonzero(np.any(np.abs(F[dropped]) > 0, axis=1))
        raise unstable(np.flatnonzero(dropped)[bad], "a load on a joint where every member end is pinned"
                       " (or on a node without members)")
    return LoadVectors(case_names, F, Ur, f0, loadsets)


# --------------------------------------------------------------------------
# steps 3 and 4: factorise and solve


def unstable(dofs: Iterable[int], what: str) -> UnstableFrameError:
    """The error for a mechanism found at ``dofs`` (global dof numbers)."""
    nodes = sorted({int(d) // 3 for d in dofs})
    shown = ", ".join(str(v) for v in nodes[:12]) + (" ..." if len(nodes) > 12 else "")
    return UnstableFrameError(
        f"the frame is a mechanism ({what} at node(s) {shown}); "
        "add supports, members or rigid joints (solver.check explains the mechanism)",
        nodes=nodes,
    )


@dataclass(eq=False)
class Factorisation:
    """The free-free stiffness, scaled to unit diagonal and factorised
    (SuperLU, symmetric mode): ``solve(rhs)`` gives ``K_ff^-1 rhs`` for a
    (n_free,) or (n_free, k) right-hand side.  ``lu`` is None when the
    frame has no free dof."""

    free_idx: np.ndarray
    scale: np.ndarray
    lu: object | None
    Kff: sp.csc_matrix | None

    def solve(self, rhs: np.ndarray) -> np.ndarray:
        if self.lu is None:
            return np.zeros_like(rhs, dtype=float)
        if rhs.ndim == 1:
            return self.scale * self.lu.solve(self.scale * rhs)
        sc = self.scale[:, None]
        k = rhs.shape[1]
        if k <= _RHS_BLOCK:
            return sc * self.lu.solve(sc * rhs)
        # SuperLU's solve slows down far more than in proportion to the
        # number of columns: many right-hand sides go in blocks (each
        # column's solution is the same either way)
        out = np.empty((rhs.shape[0], k))
        for lo in range(0, k, _RHS_BLOCK):
            blk = np.asfortranarray(sc * rhs[:, lo:lo + _RHS_BLOCK])
            out[:, lo:lo + _RHS_BLOCK] = sc * self.lu.solve(blk)
        return out


def factorise(model: FrameModel, extra: sp.spmatrix | None = None, *,
              on_singular=None) -> Factorisation:
    """Step 3: factorise ``K_ff + springs (+ extra_ff)``.

    ``extra`` is an optional (3n, 3n) matrix in node axes added to the
    stiffness (a geometric stiffness for second-order analysis).  A
    non-positive diagonal, a failed factorisation or a pivot below
    :data:`PIVOT_TOL` of the unit-diagonal matrix raises the error
    ``on_singular(dofs, what)`` returns (default: UnstableFrameError naming
    the nodes).
    """
    err = on_singular or unstable
    free_idx = model.free_idx
    if not len(free_idx):
        return Factorisation(free_idx, np.ones(0), None, None)
    K = model.K if extra is None else (model.K + extra).tocsr()
    Kff = (K[free_idx][:, free_idx] + sp.diags(model.spring_diag[free_idx])).tocsc()
    diag = Kff.diagonal()
    if np.any(diag <= 0):
        raise err(free_idx[diag <= 0], "no stiffness")
    dsc = 1.0 / np.sqrt(diag)
    Ds = sp.diags(dsc)
    Ks = (Ds @ Kff @ Ds).tocsc()
    try:
        lu = splu(Ks, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                  options={"SymmetricMode": True})
    except RuntimeError:
        raise err(free_idx, "singular stiffness") from None
    piv = np.abs(lu.U.diagonal())
    if piv.size and (not np.all(np.isfinite(piv)) or piv.min() < PIVOT_TOL):
        inv = np.empty_like(lu.perm_c)
        inv[lu.perm_c] = np.arange(len(inv))
        weak = inv[np.flatnonzero(~(piv >= PIVOT_TOL))]
        raise err(free_idx[weak], "no stiffness left after elimination")
    return Factorisation(free_idx, dsc, lu, Kff)


def displacements(model: FrameModel, fact: Factorisation, loads: LoadVectors,
                  extra: sp.spmatrix | None = None) -> np.ndarray:
    """Step 4: (3n, nc) displacements in node axes, ``K_ff u_f = F_f -
    K_fr u_r`` (``extra`` as given to :func:`factorise`)."""
    free_idx, rig_idx = model.free_idx, model.rig_idx
    nc = loads.F.shape[1]
    U = np.zeros((model.n_dofs, nc))
    U[rig_idx] = loads.Ur[rig_idx]
    if len(free_idx) and nc:
        K = model.K if extra is None else (model.K + extra).tocsr()
        Kf = K[free_idx]
        rhs = loads.F[free_idx] - (Kf[:, rig_idx] @ loads.Ur[rig_idx] if len(rig_idx) else 0.0)
        U[free_idx] = fact.solve(rhs)
        if not np.all(np.isfinite(U)):
            raise unstable(free_idx, "non-finite displacements")
    return U


def _confirm_determinate(model: FrameModel) -> None:
    """A frame solved without sections must be statically determinate:
    confirm by counting (valid once the frame is known to be stable)."""
    unknowns = (int(np.sum(3 - model.rel_s - model.rel_e)) + int(model.rig.sum())
                + int(np.sum(model.spring_diag > 0)))
    degree = unknowns - int(model.act.sum())
    if degree != 0:
        missing = model.missing
        raise MissingSectionError(
            f"the frame is statically indeterminate (degree {degree}) and {len(missing)} member(s) "
            "have no section; its forces depend on the stiffness",
            handle=missing[0].handle, members=[mb.id for mb in missing])


# --------------------------------------------------------------------------
# step 5: recovery


def member_end_forces(model: FrameModel, U: np.ndarray, f0: np.ndarray,
                      k_local: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """(dl, fe): member end displacements (m, 6, nc) and end forces (m, 6,
    nc) in local axes, ``fe = k dl + f0`` (``k_local`` defaults to the
    model's condensed elastic stiffness; pass ``k + kg`` for second order).
    ``f0`` is (nc, m, 6)."""
    k = model.k_loc if k_local is None else k_local
    de = U[model.dof]  # (m, 6, nc) node axes
    dl = np.einsum("mij,mjc->mic", model.T, de, optimize=True)
    fe = np.einsum("mij,mjc->mic", k, dl, optimize=True) + np.moveaxis(f0, 0, 2)
    return dl, fe


def support_reactions(model: FrameModel, U: np.ndarray, F: np.ndarray,
                      extra: sp.spmatrix | None = None) -> np.ndarray:
    """(n_supports, 3, nc) reactions in node axes (x', y', moment) of each
    support: rigid restraints ``K u - F`` (with ``extra`` added to K),
    springs ``-k u``."""
    N, nc = model.n_dofs, U.shape[1]
    rig_idx = model.rig_idx
    R = np.zeros((N, nc))
    if len(rig_idx):
        K = model.K if extra is None else (model.K + extra).tocsr()
        R[rig_idx] = K[rig_idx] @ U - F[rig_idx]
    Rs = np.zeros((len(model.frame.supports), 3, nc))
    own = model.sup.owner.ravel()
    for g in rig_idx:
        Rs[own[g], g % 3] += R[g]
    for si_, node, comp, k in model.sup.springs:
        Rs[si_, comp] -= k * U[3 * node + comp]
    return Rs


def global_displacements(model: FrameModel, U: np.ndarray) -> np.ndarray:
    """(n, 3, nc) node displacements: global ux, uy [length], rz [rad]."""
    sup = model.sup
    ux = sup.cos[:, None] * U[0::3] - sup.sin[:, None] * U[1::3]
    uy = sup.sin[:, None] * U[0::3] + sup.cos[:, None] * U[1::3]
    return np.stack([ux, uy, U[2::3]], axis=1)


def case_results(model: FrameModel, loads: LoadVectors, U: np.ndarray, dl: np.ndarray, fe: np.ndarray,
                 Rs: np.ndarray, *, kind: str = "case", factors: Sequence[dict] | None = None,
                 family: str = "") -> dict[str, CaseResult]:
    """Step 5: one :class:`CaseResult` per column of ``loads``
    (``factors``: the case factors of each column; default ``{name: 1}``)."""
    frame, nominal = model.frame, model.nominal
    sup, xy = model.sup, model.xy
    gd = global_displacements(model, U)
    layout = model.layout()
    frame_cases = tuple(frame.cases())
    results: dict[str, CaseResult] = {}
    for ci, name in enumerate(loads.names):
        reactions = []
        for k_, sp_ in enumerate(frame.supports):
            nd = sp_.node
            cn, sn = sup.cos[nd], sup.sin[nd]
            rx, ry, rm = Rs[k_, :, ci]
            reactions.append(Reaction(nd, float(xy[nd, 0]), float(xy[nd, 1]), float(cn * rx - sn * ry),
                                      float(sn * rx + cn * ry), float(rm), k_))
        disp = None if nominal else gd[:, :, ci].copy()
        ed = None if nominal else dl[:, [0, 1, 3, 4], ci]
        members = MemberResults(layout, fe[:, :, ci], loads.loadsets[ci], ed)
        fac = {name: 1.0} if factors is None else dict(factors[ci])
        results[name] = CaseResult(name, kind, fac, disp, reactions, members, family=family,
                                   frame_cases=frame_cases)
    return results


# --------------------------------------------------------------------------
# the whole linear analysis


def solve(frame: Frame, cases: Iterable[str] | None = None, *, determinate: bool | None = None) -> dict[str, CaseResult]:
    """Solve every load case of a frame (first-order, linear elastic).

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
    model = prepare(frame, determinate=determinate)
    loads = load_vectors(model, case_names)
    fact = factorise(model)
    U = displacements(model, fact, loads)
    if model.nominal:
        _confirm_determinate(model)
    dl, fe = member_end_forces(model, U, loads.f0)
    Rs = support_reactions(model, U, loads.F)
    return case_results(model, loads, U, dl, fe, Rs)
