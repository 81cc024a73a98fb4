"""Element level of the direct stiffness method: local stiffness, static
condensation of released end rotations, fixed-end forces, and the
geometric stiffness of an axially loaded member.

Elements are 2D frame members (axial + Euler-Bernoulli bending, prismatic)
with dofs ``u_i, v_i, th_i, u_j, v_j, th_j`` in local axes (x start -> end,
y 90 degrees counter-clockwise from x, rotations counter-clockwise).
Every function works on many members at once: arrays of shape (m, ...).

Member loads enter through fixed-end forces computed from the exact
homogeneous solutions of the element: the Hermite cubics (bending) and the
linear functions (axial) are the displacement fields of a unit end
movement with the other end clamped, so by Betti's reciprocal theorem the
fixed-end reaction in dof k is ``-(integral of shape_k * load)``, exact for
any load (3-point Gauss quadrature is exact for the degree-4 integrand of a
linearly varying load).  Released ends condense these forces with the
same algebra as the stiffness.

Units: whatever the frame uses (N, m, Pa in the DXF pipeline): EA [force],
EI [force*length**2], axial force N [force], tension positive.
"""
from __future__ import annotations

import math

import numpy as np

from .member_data import LoadSet

__all__ = [
    "full_local_stiffness",
    "release_groups",
    "condense",
    "condensation_map",
    "element_stiffness",
    "clamped_fixed_end_forces",
    "fixed_end_forces",
    "geometric_stiffness",
    "hermite_shapes",
    "hermite_slopes",
]

_GAUSS_S = np.array([-math.sqrt(0.6), 0.0, math.sqrt(0.6)])
_GAUSS_W = np.array([5.0, 8.0, 5.0]) / 9.0


def hermite_shapes(xi, L) -> tuple:
    """The cubic shape functions of the transverse displacement at the
    fractions ``xi`` of elements of length ``L``: ``v = h1 v_i + h2 th_i +
    h3 v_j + h4 th_j`` (the rotation ones carry the length)."""
    return (1 - 3 * xi**2 + 2 * xi**3, L * (xi - 2 * xi**2 + xi**3),
            3 * xi**2 - 2 * xi**3, L * (-(xi**2) + xi**3))


def hermite_slopes(xi, L) -> tuple:
    """Their slopes d/dx at the fractions ``xi``: ``v' = d1 v_i + d2 th_i +
    d3 v_j + d4 th_j`` [1/length for d1, d3; dimensionless for d2, d4]."""
    return ((-6 * xi + 6 * xi**2) / L, 1 - 4 * xi + 3 * xi**2,
            (6 * xi - 6 * xi**2) / L, -2 * xi + 3 * xi**2)


def full_local_stiffness(L: np.ndarray, EA: np.ndarray, EI: np.ndarray) -> np.ndarray:
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


def release_groups(rel_s: np.ndarray, rel_e: np.ndarray) -> list[tuple[np.ndarray, list[int]]]:
    groups = []
    for rs, re, R in ((True, False, [2]), (False, True, [5]), (True, True, [2, 5])):
        idx = np.flatnonzero((rel_s == rs) & (rel_e == re))
        if len(idx):
            groups.append((idx, R))
    return groups


def condense(k: np.ndarray, vecs: np.ndarray | None, rel_s: np.ndarray, rel_e: np.ndarray):
    """Static condensation of released end rotations.

    ``k`` (m, 6, 6) is condensed in place of a copy; ``vecs`` (m, 6, c)
    fixed-end forces are condensed with it.  Rows and columns of released
    dofs become exactly zero.
    """
    k = k.copy()
    vecs = None if vecs is None else vecs.copy()
    for idx, R in release_groups(rel_s, rel_e):
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
    k, _ = condense(full_local_stiffness(L, EA, EI), None, rs, re)
    return k


def clamped_fixed_end_forces(L: np.ndarray, loads: LoadSet) -> np.ndarray:
    """(m, 6) fixed-end forces (by the nodes on the member, local) of
    clamped-clamped members: minus the work-equivalent nodal loads of the
    exact element shape functions."""
    m = len(L)
    out = np.zeros((m, 6))

    def add(mem, px, py, xi, Lm):
        h1, h2, h3, h4 = hermite_shapes(xi, Lm)
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
        d1, d2, d3, d4 = hermite_slopes(C[:, 0] / Lm, Lm)
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
    f = clamped_fixed_end_forces(L, loads)
    rs = np.broadcast_to(np.asarray(release_start, dtype=bool), L.shape)
    re = np.broadcast_to(np.asarray(release_end, dtype=bool), L.shape)
    if not (rs.any() or re.any()):
        return f
    # condensation needs stiffness ratios only: unit EA, EI
    k = full_local_stiffness(L, np.ones_like(L), np.ones_like(L))
    _, fc = condense(k, f[:, :, None], rs, re)
    return fc[:, :, 0]


def condensation_map(k: np.ndarray, rel_s: np.ndarray, rel_e: np.ndarray) -> np.ndarray:
    """(m, 6, 6) map ``C`` from the element dofs to the element dofs with
    the released end rotations eliminated by static condensation: ``d =
    C d`` sets each released rotation to the value that makes its end
    moment zero under ``k`` (``th_R = -k_RR^-1 k_R. d``) and ignores the
    released components of the input.  ``C^T k C`` is the condensed
    stiffness of :func:`condense`; ``C^T kg C`` carries any other element
    matrix (the geometric stiffness) over the same deformed shapes, a
    Rayleigh-Ritz reduction that keeps an eigenproblem linear.
    """
    m = len(k)
    C = np.broadcast_to(np.eye(6), (m, 6, 6)).copy()
    for idx, R in release_groups(rel_s, rel_e):
        kg = k[idx]
        kRR = kg[:, R][:, :, R]
        rows = -np.linalg.solve(kRR, kg[:, R, :])  # (g, r, 6)
        rows[:, :, R] = 0.0
        Cg = C[idx]
        Cg[:, R, :] = rows
        C[idx] = Cg
    return C


def geometric_stiffness(length, axial, axial_end=None) -> np.ndarray:
    """Local geometric stiffness matrices (m, 6, 6) of members carrying an
    axial force ``axial`` [force], tension positive, dofs ``u_i, v_i, th_i,
    u_j, v_j, th_j``; with ``axial_end`` the force varies linearly from
    ``axial`` at the start to ``axial_end`` at the end (a member under an
    axial distributed load, such as a column's self-weight), integrated
    exactly (three-point Gauss: the integrand is of degree five).

    This is the consistent beam-column geometric stiffness: the work of
    the axial force on the transverse displacement gradient,
    ``N * integral(v' w')``, integrated with the same Hermite cubics as the
    elastic stiffness::

        N/L * [[ 6/5,   L/10,    -6/5,   L/10   ],      rows/cols v_i, th_i,
               [ L/10,  2L^2/15, -L/10, -L^2/30 ],                v_j, th_j
               [-6/5,  -L/10,     6/5,  -L/10   ],
               [ L/10, -L^2/30,  -L/10,  2L^2/15]]

    It is chosen over the simpler P-Delta "string" stiffness (``N/L`` on
    the transverse translations only) because it also carries the
    member's own bow (P-delta), so an elastic buckling load converges to
    the Euler value with a few elements per member (within 0.1 % at four
    elements of a pinned column), where the string stiffness alone cannot
    find the buckling of a single braced member at all.  The axial rows
    are zero (no change of axial stiffness with N).  Compression (N < 0)
    lowers the stiffness ``k + kg``.
    """
    L = np.atleast_1d(np.asarray(length, dtype=float))
    P = np.broadcast_to(np.asarray(axial, dtype=float), L.shape)
    g = np.zeros((len(L), 6, 6))
    v = [1, 2, 4, 5]
    if axial_end is not None:
        P2 = np.broadcast_to(np.asarray(axial_end, dtype=float), L.shape)
        blk = np.zeros((len(L), 4, 4))
        for s, w in zip(_GAUSS_S, _GAUSS_W):
            xi = 0.5 + 0.5 * s
            d = np.column_stack(np.broadcast_arrays(*hermite_slopes(xi, L)))
            blk += (0.5 * w * L * (P + (P2 - P) * xi))[:, None, None] * d[:, :, None] * d[:, None, :]
        idx = np.array(v)
        g[:, idx[:, None], idx] = blk
        return g
    a = P / L
    block = [[6 / 5, L / 10, -6 / 5, L / 10],
             [L / 10, 2 * L**2 / 15, -L / 10, -L**2 / 30],
             [-6 / 5, -L / 10, 6 / 5, -L / 10],
             [L / 10, -L**2 / 30, -L / 10, 2 * L**2 / 15]]
    for r, ir in enumerate(v):
        for c, ic in enumerate(v):
            g[:, ir, ic] = a * block[r][c]
    return g
