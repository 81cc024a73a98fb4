"""Moving loads and influence lines.

A load path runs along members (:func:`path_along_members`, an ordered
chain of member ids, or :func:`path_through_points`, a polyline whose
segments lie on members).  :class:`MovingLoads` factorises the frame's
stiffness once and solves a unit load on each active dof of the path's
nodes as the columns of one right-hand side (two or three per node, not
one per station).  A point load on a member equals its fixed-end forces on
that member plus their reversal applied at the member's end nodes, so the
solution for a unit load at any path station is a combination of those
nodal solutions plus the clamped-member forces of the member it stands on
(superposition: the frame is linear).  From those unit-load solutions it
gives

* influence lines (:meth:`MovingLoads.influence_line`): a reaction
  component, or N, V, M at a point of a member, as the load moves along
  the path;
* the envelope of N, V, M along every member under a :class:`Vehicle`
  (axle loads and spacings) crossing the path in both directions
  (:meth:`MovingLoads.envelope`), with the governing vehicle position.
  Members' end forces under the placements come from products with the
  nodal solutions; a member no axle stands on carries end forces only (N,
  V constant, M linear along it), a cubic in the vehicle's position
  between the placements where an axle crosses a path node, so a few
  placements of each such stretch decide its extremes; only the members
  the path runs on see the axles' own steps and ramps.

Units: the frame's (N, m in the DXF pipeline); the unit load is 1 [force].
The load acts along ``direction`` (global, default (0, -1): downward); an
axle load is positive along it.  Path coordinate ``s`` [length] runs from
the first point of the path.  Member results follow :mod:`solver.forces`
(N tension +, V clockwise +, M sagging +, x from the member start).  The
vehicle's effect alone is reported: add the other loads by superposition.

Examples
--------
A 12 m simple span crossed by one 80 kN axle: the largest moment is
PL/4 = 240 kN*m, at midspan.

>>> from dxf2frame.solver import Frame, Section, MovingLoads, Vehicle, path_along_members
>>> f = Frame()
>>> a, b = f.add_node(0.0, 0.0), f.add_node(12.0, 0.0)
>>> _ = f.add_member(a, b, Section(E=200e9, A=5e-3, I=8e-5), id="G1")
>>> _ = f.add_support(a, "pin"); _ = f.add_support(b, "roller")
>>> ml = MovingLoads(f, path_along_members(f, ["G1"]))
>>> g = ml.envelope(Vehicle((80e3,)), step=0.5)["G1"].governing("M_max")
>>> round(g["value"] / 1e3, 6), g["x"]
(240.0, 6.0)
>>> ml.influence_line("fy", support=0, step=3.0).values.round(6).tolist()
[1.0, 0.75, 0.5, 0.25, 0.0]
"""
from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from .element import condense, hermite_shapes
from .errors import LoadError, SolverError
from .model import Frame
from .stiffness import FrameModel, displacements, factorise, prepare, support_reactions

__all__ = [
    "LoadPath",
    "Vehicle",
    "MovingLoads",
    "UnitLoadSolutions",
    "InfluenceLine",
    "MemberEnvelope",
    "path_along_members",
    "path_through_points",
    "locate_point",
    "station_grid",
]


# --------------------------------------------------------------------------
# paths


@dataclass(frozen=True, eq=False)
class LoadPath:
    """A path made of member stretches, in travel order.

    Stretch i lies on member ``member[i]`` (index in ``Frame.members``)
    from local position ``a0[i]`` to ``a1[i]`` [length] (``a1 < a0`` where
    the path runs against the member); ``s0[i]`` is the path coordinate of
    its start.  ``length`` is the path's total length.
    """

    member: np.ndarray
    a0: np.ndarray
    a1: np.ndarray
    s0: np.ndarray
    length: float

    def locate(self, s) -> tuple[np.ndarray, np.ndarray]:
        """(member index, position from the member start) of path
        coordinates ``s`` (array, 0 <= s <= length)."""
        s = np.clip(np.asarray(s, dtype=float), 0.0, self.length)
        i = np.clip(np.searchsorted(self.s0, s, side="right") - 1, 0, len(self.s0) - 1)
        t = s - self.s0[i]
        a = self.a0[i] + np.sign(self.a1[i] - self.a0[i]) * t
        lo, hi = np.minimum(self.a0[i], self.a1[i]), np.maximum(self.a0[i], self.a1[i])
        return self.member[i], np.clip(a, lo, hi)


def station_grid(length: float, step: float) -> np.ndarray:
    """Stations 0, step, 2*step, ... along ``length``, its end included
    (one more station where ``step`` does not divide it) [length]."""
    if not (step > 0):
        raise ValueError("step must be positive")
    n = int(np.floor(length / step + 1e-9))
    s = np.arange(n + 1) * float(step)
    return s if abs(s[-1] - length) <= 1e-9 * length else np.append(s, length)


def _path(pieces: list[tuple[int, float, float]]) -> LoadPath:
    j = np.array([p[0] for p in pieces], dtype=np.intp)
    a0 = np.array([p[1] for p in pieces], dtype=float)
    a1 = np.array([p[2] for p in pieces], dtype=float)
    ln = np.abs(a1 - a0)
    s0 = np.concatenate([[0.0], np.cumsum(ln)[:-1]])
    return LoadPath(j, a0, a1, s0, float(ln.sum()))


def _member_ends(frame: Frame):
    xy = np.array([(nd.x, nd.y) for nd in frame.nodes], dtype=float).reshape(-1, 2)
    si = np.array([mb.start for mb in frame.members], dtype=np.intp)
    ei = np.array([mb.end for mb in frame.members], dtype=np.intp)
    return xy, si, ei


def path_along_members(frame: Frame, member_ids: Sequence[str]) -> LoadPath:
    """The path along an ordered chain of members, each sharing a node with
    the next; it starts at the end of the first member that the second
    does not touch.  Raises LoadError for a broken chain."""
    index = frame.member_index()
    ms = []
    for mid in member_ids:
        if mid not in index:
            raise LoadError(f"path member {mid!r} does not exist", members=[str(mid)])
        ms.append(frame.members[index[mid]])
    if not ms:
        raise LoadError("the path has no members")
    if len(ms) == 1:
        at = ms[0].start
    else:
        shared = {ms[1].start, ms[1].end}
        at = ms[0].start if ms[0].end in shared else ms[0].end
    pieces = []
    for mb in ms:
        L = frame.geometry(mb)[0]
        if mb.start == at:
            pieces.append((index[mb.id], 0.0, L))
            at = mb.end
        elif mb.end == at:
            pieces.append((index[mb.id], L, 0.0))
            at = mb.start
        else:
            raise LoadError(f"path member {mb.id} does not continue the chain at node {at}",
                            handle=mb.handle, members=[mb.id])
    return _path(pieces)


def path_through_points(frame: Frame, points: Sequence[tuple[float, float]], tol: float | None = None) -> LoadPath:
    """The path along a polyline ``points`` [(x, y), ...] whose segments
    lie on members (within ``tol`` [length], default 1e-6 of the frame's
    extent).  Each segment is covered by the members lying along it;
    a stretch of a segment with no member under it raises LoadError."""
    pts = np.asarray(points, dtype=float).reshape(-1, 2)
    if len(pts) < 2:
        raise LoadError("a path needs at least two points")
    xy, si, ei = _member_ends(frame)
    ext = float(np.ptp(xy, axis=0).max()) if len(xy) else 1.0
    tol = 1e-6 * max(ext, 1.0) if tol is None else float(tol)
    P, Q = xy[si], xy[ei]
    pieces: list[tuple[int, float, float]] = []
    for p0, p1 in zip(pts[:-1], pts[1:]):
        d = p1 - p0
        seg = float(np.hypot(*d))
        if seg <= tol:
            continue
        u = d / seg
        nrm = np.array([-u[1], u[0]])
        on = (np.abs((P - p0) @ nrm) <= tol) & (np.abs((Q - p0) @ nrm) <= tol)
        tp, tq = (P - p0) @ u, (Q - p0) @ u
        lo, hi = np.maximum(np.minimum(tp, tq), 0.0), np.minimum(np.maximum(tp, tq), seg)
        cand = np.flatnonzero(on & (hi - lo > tol))
        cand = cand[np.argsort(lo[cand])]
        reach = 0.0
        for j in cand:
            if lo[j] > reach + tol:
                break
            if hi[j] <= reach + tol:
                continue
            start = max(lo[j], reach)
            L = float(np.hypot(*(Q[j] - P[j])))
            fwd = tq[j] > tp[j]
            a0 = (start - tp[j]) if fwd else (tp[j] - start)
            a1 = (hi[j] - tp[j]) if fwd else (tp[j] - hi[j])
            pieces.append((int(j), float(np.clip(a0, 0, L)), float(np.clip(a1, 0, L))))
            reach = hi[j]
        if reach < seg - tol:
            at = p0 + reach * u
            raise LoadError(f"the path leaves the members at ({at[0]:g}, {at[1]:g})")
    if not pieces:
        raise LoadError("the path covers no member")
    return _path(pieces)


def locate_point(frame: Frame, x: float, y: float, tol: float | None = None) -> tuple[str, float]:
    """(member id, position from its start [length]) of the member passing
    nearest to (x, y), within ``tol`` (default 1e-6 of the frame's
    extent); LoadError when no member passes there."""
    xy, si, ei = _member_ends(frame)
    ext = float(np.ptp(xy, axis=0).max()) if len(xy) else 1.0
    tol = 1e-6 * max(ext, 1.0) if tol is None else float(tol)
    d = xy[ei] - xy[si]
    L = np.hypot(d[:, 0], d[:, 1])
    t = np.clip(((np.array([x, y]) - xy[si]) * d).sum(axis=1) / L**2, 0.0, 1.0)
    gap = np.hypot(*(xy[si] + t[:, None] * d - np.array([x, y])).T)
    j = int(np.argmin(gap))
    if gap[j] > tol:
        raise LoadError(f"no member passes through ({x:g}, {y:g})")
    return frame.members[j].id, float(t[j] * L[j])


# --------------------------------------------------------------------------
# vehicles


@dataclass(frozen=True)
class Vehicle:
    """A train of axle loads.

    ``loads`` [force] from the front axle back, positive along the load
    direction; ``spacings`` [length] between consecutive axles (one fewer
    than the loads).  ``name`` is a label.
    """

    loads: tuple[float, ...]
    spacings: tuple[float, ...] = ()
    name: str = ""

    def __post_init__(self) -> None:
        if len(self.loads) < 1 or len(self.spacings) != len(self.loads) - 1:
            raise ValueError("a vehicle needs one or more axle loads and one spacing between each pair")
        if any(not np.isfinite(v) for v in self.loads) or any(not (s >= 0) for s in self.spacings):
            raise ValueError("axle loads must be finite and spacings non-negative")

    @property
    def offsets(self) -> np.ndarray:
        """(k,) distance of each axle behind the front axle [length]."""
        return np.concatenate([[0.0], np.cumsum(np.asarray(self.spacings, dtype=float))])

    def axle_positions(self, front: float, direction: int) -> np.ndarray:
        """Path coordinates of the axles with the front axle at ``front``,
        travelling toward increasing s (``direction`` +1) or decreasing s
        (-1)."""
        return float(front) - direction * self.offsets


# --------------------------------------------------------------------------
# unit-load solutions


@dataclass(eq=False)
class UnitLoadSolutions:
    """A unit point load at each of ``s`` (path coordinates), solved.

    ``member``, ``a`` (ns,): where each station lies; ``p`` (ns, 2) the
    unit load's local (axial, transverse) components; ``start_forces`` (m,
    3, ns) every member's start-end forces ``Ni, Vi, Mi`` (local, by the
    start node on the member: with the member's own loads they fix N, V, M
    everywhere along it);
    ``reactions`` (n_supports, 3, ns) global fx, fy, m of each support.
    """

    s: np.ndarray
    member: np.ndarray
    a: np.ndarray
    p: np.ndarray
    start_forces: np.ndarray
    reactions: np.ndarray

    def member_values(self, which: str, rows: np.ndarray, x: np.ndarray, side: str = "right") -> np.ndarray:
        """(k, ns) value of N, V or M at (member ``rows[i]``, position
        ``x[i]``) for the unit load at each station: the end forces plus
        the unit load itself where it lies on that member before x (at x
        itself: included for ``side="right"``)."""
        rows = np.asarray(rows, dtype=np.intp)
        x = np.asarray(x, dtype=float)
        fe = self.start_forces[rows]  # (k, 3, ns)
        same = rows[:, None] == self.member[None, :]
        before = (self.a[None, :] <= x[:, None]) if side == "right" else (self.a[None, :] < x[:, None])
        hit = same & before
        if which == "N":
            return -fe[:, 0, :] - hit * self.p[None, :, 0]
        if which == "V":
            return fe[:, 1, :] + hit * self.p[None, :, 1]
        if which == "M":
            return (-fe[:, 2, :] + fe[:, 1, :] * x[:, None]
                    + hit * self.p[None, :, 1] * (x[:, None] - self.a[None, :]))
        raise KeyError(f"unknown quantity {which!r}; expected N, V or M")


@dataclass(eq=False)
class InfluenceLine:
    """Value of a quantity as a unit load moves along the path.

    ``s`` (ns,) path coordinates [length]; ``xy`` (ns, 2) the load points;
    ``values`` (ns,) the quantity per unit load [its unit / force];
    ``quantity`` says what it is.
    """

    quantity: str
    s: np.ndarray
    xy: np.ndarray
    values: np.ndarray

    def at(self, s) -> np.ndarray:
        """Linear interpolation between the stations."""
        return np.interp(s, self.s, self.values)


class _Rows(Mapping):
    """Read-only mapping of each key of ``arrays`` to the slice ``rows``
    of its array (one member's part of the envelope's arrays, cut when
    asked for)."""

    __slots__ = ("_arrays", "_rows")

    def __init__(self, arrays: dict[str, np.ndarray], rows: slice) -> None:
        self._arrays, self._rows = arrays, rows

    def __getitem__(self, key: str) -> np.ndarray:
        return self._arrays[key][self._rows]

    def __iter__(self) -> Iterator[str]:
        return iter(self._arrays)

    def __len__(self) -> int:
        return len(self._arrays)

    def __repr__(self) -> str:
        return repr(dict(self))


@dataclass(eq=False)
class MemberEnvelope:
    """Extremes of N, V, M along one member under a moving vehicle.

    ``x`` (k,) positions from the member start [length].  ``values`` maps
    keys ``N_max N_min V_max V_min M_max M_min`` to (k,) arrays;
    ``front`` the path coordinate of the front axle that governs each
    value; ``direction`` +1 / -1 the travel direction then.
    """

    member: str
    x: np.ndarray
    values: Mapping[str, np.ndarray] = field(default_factory=dict)
    front: Mapping[str, np.ndarray] = field(default_factory=dict)
    direction: Mapping[str, np.ndarray] = field(default_factory=dict)

    def governing(self, key: str) -> dict:
        """The extreme of ``key`` (e.g. "M_max") over the member: value,
        x, front axle position and direction."""
        v = self.values[key]
        i = int(np.argmax(v) if key.endswith("max") else np.argmin(v))
        return {"value": float(v[i]), "x": float(self.x[i]), "front": float(self.front[key][i]),
                "direction": int(self.direction[key][i])}


def _unit_fixed_end_forces(model: FrameModel, j: np.ndarray, a: np.ndarray, p: np.ndarray) -> np.ndarray:
    """(ns, 6) fixed-end forces of one unit point load per station (local
    components ``p``), releases condensed (clamped values from the Hermite
    shapes, as :func:`solver.element.clamped_fixed_end_forces`)."""
    Lm = model.L[j]
    xi = a / Lm
    h1, h2, h3, h4 = hermite_shapes(xi, Lm)
    px, py = p[:, 0], p[:, 1]
    f0 = -np.column_stack([(1 - xi) * px, h1 * py, h2 * py, xi * px, h3 * py, h4 * py])
    rs, re = model.rel_s[j], model.rel_e[j]
    if rs.any() or re.any():
        _, fc = condense(model.k_full[j], f0[:, :, None], rs, re)
        f0 = fc[:, :, 0]
    return f0


@dataclass(eq=False)
class _NodalBasis:
    """A unit load on each active dof of the path's nodes, solved.

    ``col`` (3n,) the basis column of each global dof (-1 for a dof that is
    not in the basis); ``start_forces`` (m, 3, nb) every member's
    start-end forces ``Ni, Vi, Mi`` under each unit nodal load (local);
    ``reactions`` (n_supports, 3, nb) global fx, fy, m of each support.
    """

    col: np.ndarray
    start_forces: np.ndarray
    reactions: np.ndarray


@dataclass(eq=False)
class _Stations:
    """Unit point loads at path coordinates ``s`` (ns,) as loads on the
    frame: ``member``, ``a`` where each lies, ``p`` (ns, 2) its local
    (axial, transverse) components, ``f0`` (ns, 6) its fixed-end forces
    on that member (releases condensed) and ``W`` (nb, ns) the sparse
    equivalent nodal loads in the basis dofs (node axes)."""

    s: np.ndarray
    member: np.ndarray
    a: np.ndarray
    p: np.ndarray
    f0: np.ndarray
    W: sp.csr_matrix


@dataclass(eq=False)
class _Placements:
    """Every vehicle placement as axle loads at distinct path stations.

    ``fronts``, ``dirs`` (n_place,) front axle position and travel
    direction; ``st`` the stations; ``u``, ``place``, ``load`` (ne,) one
    entry per axle on the path (station index, placement index, axle load
    [force]; axles of one placement at one station summed), sorted by
    the station's member, then placement; ``WP`` (nb, n_place) dense
    equivalent nodal loads of each placement; ``pieces`` (n_pieces + 1,)
    the bounds of the runs of consecutive placements in one direction with
    every axle on the same path stretch (or off the path) throughout.
    Within a piece every member's end forces are a cubic in the front
    axle's position (the fixed-end forces of a point load are Hermite
    cubics in its position), hence in the placement's index.
    """

    fronts: np.ndarray
    dirs: np.ndarray
    st: _Stations
    u: np.ndarray
    place: np.ndarray
    load: np.ndarray
    WP: np.ndarray
    pieces: np.ndarray
    _windows: list | None = None

    @property
    def n(self) -> int:
        return len(self.fronts)

    def windows(self) -> list[tuple[int, int, int, int]]:
        """(c0, c1, r0, r1): blocks of _COLS placements and the basis rows
        r0:r1 their axles load (r1 <= r0: none)."""
        if self._windows is None:
            nz = self.WP != 0.0
            has = nz.any(axis=0)
            first = np.where(has, nz.argmax(axis=0), nz.shape[0])
            last = np.where(has, nz.shape[0] - nz[::-1].argmax(axis=0), 0)
            self._windows = [(c0, min(self.n, c0 + _COLS), int(first[c0:c0 + _COLS].min()),
                              int(last[c0:c0 + _COLS].max())) for c0 in range(0, self.n, _COLS)]
        return self._windows

    def product(self, G: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
        """``G @ WP`` (G: (r, nb) per unit nodal load) for every placement,
        in blocks of _COLS placements, each with only the basis rows its
        axles load: consecutive placements load a few neighbouring path
        nodes.  The blocks are small products, which the BLAS runs on the
        calling thread: woken worker threads keep spinning after a large
        product and, on a shared machine, slowed the rest of the envelope
        several times over."""
        out = np.empty((G.shape[0], self.n)) if out is None else out
        for c0, c1, r0, r1 in self.windows():
            if r1 > r0:
                np.matmul(G[:, r0:r1], self.WP[r0:r1, c0:c1], out=out[:, c0:c1])
            else:
                out[:, c0:c1] = 0.0
        return out


class MovingLoads:
    """Unit-load solutions of a frame along a load path, from one
    factorisation (see the module docstring).

    Parameters
    ----------
    frame : the frame (sections needed unless ``determinate`` is True)
    path : a :class:`LoadPath`
    direction : global direction of the load (unit vector after scaling),
        default (0, -1), downward
    determinate : as in :func:`solver.solve`
    """

    def __init__(self, frame: Frame, path: LoadPath, *, direction: tuple[float, float] = (0.0, -1.0),
                 determinate: bool | None = None) -> None:
        d = np.asarray(direction, dtype=float)
        if not (d.shape == (2,) and np.all(np.isfinite(d)) and np.hypot(*d) > 0):
            raise ValueError("direction must be a non-zero (x, y) vector")
        self.frame, self.path = frame, path
        self.direction = d / np.hypot(*d)
        self.model = prepare(frame, determinate=determinate)
        self._fact = factorise(self.model)
        self._basis_cache: _NodalBasis | None = None

    # -- unit loads ----------------------------------------------------------

    def stations(self, step: float) -> np.ndarray:
        """Path coordinates 0, step, 2*step, ... up to and including the
        path's end [length] (:func:`station_grid` of the path's length)."""
        return station_grid(self.path.length, step)

    def _basis(self) -> _NodalBasis:
        """Unit nodal loads on every active dof (free or restrained) of the
        nodes at the ends of the path's members, solved as the columns of
        one right-hand side (computed once, then kept)."""
        if self._basis_cache is not None:
            return self._basis_cache
        model = self.model
        N = model.n_dofs
        # the path's nodes in travel order, so that the loads of nearby
        # placements fall on neighbouring basis columns
        pth = self.path
        fwd = pth.a1 >= pth.a0
        seq = np.column_stack([np.where(fwd, model.si[pth.member], model.ei[pth.member]),
                               np.where(fwd, model.ei[pth.member], model.si[pth.member])]).ravel()
        nodes = seq[np.sort(np.unique(seq, return_index=True)[1])]
        dofs = (3 * nodes[:, None] + np.arange(3)[None, :]).ravel()
        dofs = dofs[model.act[dofs]]
        nb = len(dofs)
        col = np.full(N, -1, dtype=np.intp)
        col[dofs] = np.arange(nb)
        F = np.zeros((N, nb))
        F[dofs, np.arange(nb)] = 1.0
        # in groups of _RHS columns: small triangular solves, which a threaded
        # BLAS runs on the calling thread (see _Placements.product)
        U = np.concatenate([displacements(model, self._fact, _Rhs(F[:, c:c + _RHS]))
                            for c in range(0, max(nb, 1), _RHS)], axis=1)
        # (m, 3, nb) start-end forces k[:3] T u; einsum keeps these many tiny
        # products off the BLAS (see _Placements.product)
        fe = np.einsum("mij,mjc->mic", np.einsum("mij,mjk->mik", model.k_loc[:, :3, :], model.T), U[model.dof])
        Rs = support_reactions(model, U, F)
        nd = np.array([sp_.node for sp_ in self.frame.supports], dtype=np.intp)
        cn, sn = model.sup.cos[nd][:, None], model.sup.sin[nd][:, None]
        R = np.stack([cn * Rs[:, 0] - sn * Rs[:, 1], sn * Rs[:, 0] + cn * Rs[:, 1], Rs[:, 2]], axis=1)
        self._basis_cache = _NodalBasis(col, fe, R)
        return self._basis_cache

    def _stations(self, s: np.ndarray) -> _Stations:
        """The unit loads at path coordinates ``s`` as fixed-end forces on
        their members and equivalent nodal loads in the basis dofs."""
        model, basis = self.model, self._basis()
        j, a = self.path.locate(s)
        c, sn = model.c[j], model.s[j]
        gx, gy = self.direction
        p = np.column_stack([c * gx + sn * gy, -sn * gx + c * gy])
        f0 = _unit_fixed_end_forces(model, j, a, p)
        eq = -np.einsum("sji,sj->si", model.T[j], f0)  # (ns, 6) node axes
        col = basis.col[model.dof[j]]
        if np.any((col < 0) & (eq != 0.0)):
            raise SolverError("a path station puts a couple on a joint where every member end is pinned")
        keep = col >= 0
        ns = len(s)
        W = sp.csr_matrix((eq[keep], (col[keep], np.broadcast_to(np.arange(ns)[:, None], col.shape)[keep])),
                          shape=(basis.start_forces.shape[2], ns))
        return _Stations(s, j, a, p, f0, W)

    def unit_solutions(self, s) -> UnitLoadSolutions:
        """Solve a unit load at each path coordinate of ``s``.

        A point load on a member is its fixed-end forces on that member
        plus their reversal applied at the member's two end nodes, so every
        station's solution is a combination of the unit nodal loads at the
        path's nodes (:meth:`_basis`, solved once) plus the fixed-end
        forces on the loaded member itself."""
        st = self._stations(np.asarray(s, dtype=float).ravel())
        basis = self._basis()
        m, _, nb = basis.start_forces.shape
        ns = len(st.s)
        fe = np.asarray(st.W.T @ basis.start_forces.reshape(3 * m, nb).T).T.reshape(m, 3, ns)
        fe[st.member, :, np.arange(ns)] += st.f0[:, :3]
        n_sup = basis.reactions.shape[0]
        R = np.asarray(st.W.T @ basis.reactions.reshape(3 * n_sup, nb).T).T.reshape(n_sup, 3, ns)
        return UnitLoadSolutions(st.s, st.member, st.a, st.p, fe, R)

    def points(self, s) -> np.ndarray:
        """(ns, 2) global coordinates of path coordinates ``s``."""
        j, a = self.path.locate(s)
        m = self.model
        return m.xy[m.si[j]] + a[:, None] * np.column_stack([m.c[j], m.s[j]])

    # -- influence lines -----------------------------------------------------

    def influence_line(self, quantity: str, *, step: float, member: str | None = None, x: float | None = None,
                       support: int | None = None, side: str = "right") -> InfluenceLine:
        """Influence line of ``quantity`` at the path stations (``step``).

        ``quantity`` is "N", "V" or "M" at position ``x`` of ``member`` (at a
        jump, the value just right of x, or just left with ``side="left"``),
        or "fx", "fy", "m" of the reaction of support number ``support``
        (its index in ``Frame.supports``; global, moment CCW).
        """
        s = self.stations(step)
        sol = self.unit_solutions(s)
        if quantity in ("fx", "fy", "m"):
            if support is None or not (0 <= support < sol.reactions.shape[0]):
                raise ValueError("give the index of an existing support")
            vals = sol.reactions[support, ("fx", "fy", "m").index(quantity)]
            label = f"{quantity} of support {support}"
        else:
            if member is None or x is None:
                raise ValueError("give the member and the position x")
            row = self.frame.member_index()[member]
            vals = sol.member_values(quantity, np.array([row]), np.array([float(x)]), side)[0]
            label = f"{quantity} of member {member} at x={float(x):g}"
        return InfluenceLine(label, s, self.points(s), vals)

    # -- vehicles ------------------------------------------------------------

    def _fronts(self, vehicle: Vehicle, step: float, directions: Sequence[int]):
        """(fronts, dirs, positions (n_place, k)) of every placement: the
        front axle on the station grid from the vehicle's first touch of
        the path to its last."""
        Lp, Lv = self.path.length, float(vehicle.offsets[-1])
        k = int(np.ceil((Lp + Lv) / step - 1e-9))
        grid = np.arange(k + 1) * float(step)
        fronts, dirs = [], []
        for d in directions:
            fronts.append(grid if d > 0 else Lp - grid)
            dirs.append(np.full(len(grid), int(d)))
        fronts, dirs = np.concatenate(fronts), np.concatenate(dirs)
        pos = fronts[:, None] - dirs[:, None] * vehicle.offsets[None, :]
        return fronts, dirs, pos

    def _placements(self, vehicle: Vehicle, step: float, directions: Sequence[int]) -> _Placements:
        """Every placement of ``vehicle`` as loads at the distinct axle
        positions on the path (see :class:`_Placements`)."""
        fronts, dirs, pos = self._fronts(vehicle, float(step), [int(d) for d in directions])
        Lp = self.path.length
        tol = 1e-9 * max(Lp, 1.0)
        on = (pos >= -tol) & (pos <= Lp + tol)
        s_on = np.clip(pos[on], 0.0, Lp)
        uniq, inv = np.unique(np.round(s_on / tol).astype(np.int64), return_inverse=True)
        s_u = np.empty(len(uniq))
        s_u[inv.ravel()] = s_on  # one representative of each distinct position
        st = self._stations(s_u)
        loads = np.broadcast_to(np.asarray(vehicle.loads, dtype=float), pos.shape)[on]
        A = sp.csr_matrix((loads, (inv.ravel(), np.nonzero(on)[0])), shape=(len(s_u), pos.shape[0]))
        A.sum_duplicates()
        WP = np.asarray((st.W @ A).toarray())
        Ac = A.tocoo()
        order = np.lexsort((Ac.col, st.member[Ac.row]))
        # the path stretch of each axle (-1: off the path), as locate() puts it
        pth = self.path
        stretch = np.clip(np.searchsorted(pth.s0, s_u, side="right") - 1, 0, len(pth.s0) - 1)
        sig = np.full(pos.shape, -1, dtype=np.intp)
        sig[on] = stretch[inv.ravel()]
        new = np.ones(len(fronts), bool)
        new[1:] = np.any(sig[1:] != sig[:-1], axis=1) | (dirs[1:] != dirs[:-1])
        pieces = np.append(np.flatnonzero(new), len(fronts))
        return _Placements(fronts, dirs, st, Ac.row[order].astype(np.intp), Ac.col[order].astype(np.intp),
                           Ac.data[order], WP, pieces)

    def _member_forces(self, pl: _Placements, rows: np.ndarray) -> np.ndarray:
        """(len(rows), 3, n_place) start-end forces Ni, Vi, Mi of members
        ``rows`` (ascending) under every placement: the unit nodal loads
        superposed, plus the fixed-end forces of the axles standing on
        each member."""
        basis = self._basis()
        nb = pl.WP.shape[0]
        F = pl.product(basis.start_forces[rows].reshape(-1, nb)).reshape(len(rows), 3, pl.n)
        j = pl.st.member[pl.u]
        k = np.searchsorted(rows, j)
        mine = (k < len(rows)) & (rows[np.minimum(k, len(rows) - 1)] == j)
        if mine.any():
            # the axles' fixed-end forces summed per member and placement, then added
            at = k[mine] * pl.n + pl.place[mine]
            w = pl.load[mine, None] * pl.st.f0[pl.u[mine], :3]
            for c in range(3):
                F[:, c, :] += np.bincount(at, w[:, c], minlength=F.shape[0] * pl.n).reshape(F.shape[0], pl.n)
        return F

    def envelope(self, vehicle: Vehicle, *, step: float, points_per_member: int = 11,
                 directions: Sequence[int] = (1, -1), chunk: int = 1024) -> dict[str, MemberEnvelope]:
        """Envelope of N, V, M along every member as ``vehicle`` crosses the
        path (front axle moved by ``step``, in each of ``directions``).

        Every member is sampled at ``points_per_member`` equally spaced
        points plus every axle position on it (an extreme under moving
        point loads lies under an axle).  N and V are taken on both sides
        of each point; at each point the value of the first placement (in
        placement order) reaching the extreme governs, the right side
        before the left.  At most ``chunk`` members are treated at a time
        (fewer where a megabyte of work space holds fewer).

        How: the unit loads are solved once, at the path's nodes
        (:meth:`unit_solutions`), and members' end forces under placements
        follow by dense products.  A member with no axle on it anywhere
        carries end forces only: N and V are constant along it and M = Vi x
        - Mi; between the placements where an axle crosses a path node its
        end forces are cubics in the front axle's position, so each extreme
        is found from a few placements per such piece
        (:func:`_piece_extremes`).  On a member axles stand on, the
        placements that put an axle there add the axles' own steps (N, V)
        and ramps (M) from each axle's position on; the others give
        straight lines of M, whose extremes are found exactly from a few
        tangent samples and the lines above the tangents' kinks
        (:func:`_line_extremes`).  Every value is the sum the former
        one-column-per-station route gave, to rounding.
        """
        pl = self._placements(vehicle, float(step), directions)
        st = pl.st
        L = self.model.L
        m = len(L)
        rows, xs = self._samples(st, points_per_member)
        bounds = np.searchsorted(rows, np.arange(m + 1))
        ns = len(rows)
        # best (sign * value, placement) per sample, for q in N V M, sign +1
        # (max) and -1 (min), side right and left (M has no jumps: right only)
        best = {key: (np.full(ns, -np.inf), np.zeros(ns, np.intp))
                for key in [(q, sg, sd) for q in "NVM" for sg in (1, -1) for sd in ("right", "left")
                            if q != "M" or sd == "right"]}
        on = np.unique(st.member[pl.u])  # members an axle stands on
        free = np.setdiff1d(np.arange(m), on)
        t = np.linspace(0.0, 1.0, max(int(points_per_member), 2))
        # members without axles in blocks: a quantity's work array (members x
        # about two placements per piece, see _piece_extremes) about a megabyte
        blk = max(1, min(int(chunk), _CELLS // max(4 * len(pl.pieces), 1)))
        fe = self._basis().start_forces
        for lo in range(0, len(free), blk):
            r = free[lo:lo + blk]
            _piece_extremes(pl, fe[r].transpose(1, 0, 2), L[r], t, bounds[r], best)
        if len(on):
            _loaded_extremes(pl, self._member_forces(pl, on), on, rows, xs, bounds, L, best)
        vals: dict[str, np.ndarray] = {}
        at: dict[str, np.ndarray] = {}
        for q in "NVM":
            for sg, ext in ((1, "max"), (-1, "min")):
                vr, ar = best[(q, sg, "right")]
                if q == "M":
                    v, a = vr, ar
                else:  # the left side governs only when strictly beyond the right
                    vl, al = best[(q, sg, "left")]
                    left = vl > vr
                    v, a = np.where(left, vl, vr), np.where(left, al, ar)
                vals[f"{q}_{ext}"], at[f"{q}_{ext}"] = sg * v, a
        return self._by_member(rows, xs, vals, at, pl.fronts, pl.dirs)

    def reaction_envelope(self, vehicle: Vehicle, *, step: float,
                          directions: Sequence[int] = (1, -1)) -> list[dict]:
        """Per support (``Frame.supports`` order): for c in fx, fy, m (global,
        moment CCW) ``c_max``, ``c_min`` and the governing ``c_max_front``,
        ``c_max_direction`` (likewise for min) as ``vehicle`` crosses the
        path."""
        pl = self._placements(vehicle, float(step), directions)
        Rb = self._basis().reactions
        n_sup, _, nb = Rb.shape
        R = pl.product(Rb.reshape(3 * n_sup, nb)).reshape(n_sup, 3, -1)
        out = []
        for k, sup in enumerate(self.frame.supports):
            row: dict = {"node": sup.node, "support_index": k}
            for ci, comp in enumerate(("fx", "fy", "m")):
                col = R[k, ci]
                for ext, i in (("max", int(np.argmax(col))), ("min", int(np.argmin(col)))):
                    row[f"{comp}_{ext}"] = float(col[i])
                    row[f"{comp}_{ext}_front"] = float(pl.fronts[i])
                    row[f"{comp}_{ext}_direction"] = int(pl.dirs[i])
            out.append(row)
        return out

    def axle_points(self, vehicle: Vehicle, front: float, direction: int) -> np.ndarray:
        """(k, 2) global coordinates of the axles on the path with the front
        axle at path coordinate ``front`` travelling in ``direction`` (+1 /
        -1), for drawing a governing position; axles off the path are
        left out."""
        s = vehicle.axle_positions(front, direction)
        tol = 1e-9 * max(self.path.length, 1.0)
        s = s[(s >= -tol) & (s <= self.path.length + tol)]
        return self.points(s)

    def _samples(self, st: _Stations, per_member: int) -> tuple[np.ndarray, np.ndarray]:
        """(rows, x) sample points of every member, sorted by member then x."""
        L = self.model.L
        m = len(L)
        t = np.linspace(0.0, 1.0, max(int(per_member), 2))
        rows = np.concatenate([np.repeat(np.arange(m), len(t)), st.member])
        xs = np.concatenate([(L[:, None] * t[None, :]).ravel(), st.a])
        order = np.lexsort((xs, rows))
        rows, xs = rows[order], xs[order]
        keep = np.ones(len(rows), bool)
        keep[1:] = (rows[1:] != rows[:-1]) | (np.diff(xs) > 1e-9 * L[rows[1:]])
        return rows[keep], xs[keep]

    def _by_member(self, rows, xs, vals, at, fronts, dirs) -> dict[str, MemberEnvelope]:
        """One MemberEnvelope per member; its arrays are slices of one array
        per key, cut when read (read-only use)."""
        bounds = np.searchsorted(rows, np.arange(len(self.model.ids) + 1)).tolist()
        fr = {key: fronts[at[key]] for key in vals}
        dr = {key: dirs[at[key]] for key in vals}
        return {mid: MemberEnvelope(mid, xs[sl], _Rows(vals, sl), _Rows(fr, sl), _Rows(dr, sl))
                for mid, sl in zip(self.model.ids, map(slice, bounds[:-1], bounds[1:]))}


_COLS = 128  # placements per block of the end-force products
_RHS = 16  # unit nodal loads per solve of the basis
_CELLS = 1 << 17  # values per work array (a megabyte) when members or samples go in blocks


def _merge(best: tuple[np.ndarray, np.ndarray], idx, v: np.ndarray | float, a: np.ndarray | int) -> None:
    """Fold values ``v`` of placements ``a`` (arrays, or one value and
    placement for all) at samples ``idx`` (indices or a slice) into the
    running best (value, placement): larger wins, equal keeps the earlier
    placement."""
    bv, ba = best
    cv, ca = bv[idx], ba[idx]
    better = v > cv
    tie = v == cv
    bv[idx] = np.where(better, v, cv)
    ba[idx] = np.where(better, a, np.where(tie, np.minimum(a, ca), ca))


def _extreme(arr: np.ndarray):
    """(first argmax, max, first argmin, min) of each row of ``arr``."""
    r = np.arange(arr.shape[0])
    i1, i2 = np.argmax(arr, axis=1), np.argmin(arr, axis=1)
    return i1, arr[r, i1], i2, arr[r, i2]


_PIECE_MIN = 6  # placements a piece needs to be reduced by its cubic (fewer: every one evaluated)

# Bernstein coefficients b0..b3 of a cubic on u in [0, 1] to its monomial
# coefficients in v = 2u - 1 (rows c0..c3): B_j(u) = C(3, j) u^j (1 - u)^(3-j)
# with u = (1 + v) / 2, 1 - u = (1 - v) / 2
_BERN_TO_V = np.array([[1.0, 3.0, 3.0, 1.0],
                       [-3.0, -3.0, 3.0, 3.0],
                       [3.0, -3.0, -3.0, 3.0],
                       [-1.0, 3.0, -3.0, 1.0]]) / 8.0


def _piece_extremes(pl: "_Placements", G: np.ndarray, L: np.ndarray, t: np.ndarray, first: np.ndarray,
                    best: dict) -> None:
    """Extremes over every placement at the samples of members with no
    axle on them: N and V are constant along such a member and M = x Vi -
    Mi linear, at its samples x = L t (indices ``first + k``).

    ``G`` (3, r, nb) the members' start-end forces Ni, Vi, Mi per unit
    nodal load of the basis, ``L`` (r,), ``t`` (k,) from 0 to 1.

    Within a piece of n placements (:class:`_Placements`) each quantity is
    a cubic in u = k / (n - 1), k the placement's index in the piece.  Its
    Bernstein coefficients b0..b3 on [0, 1] come from its values at four
    placements (k = 0, (n-1)//3, 2(n-1)//3, n-1) by the same products
    with the unit nodal loads; b0 and b3 are the values at the piece's
    ends.  The largest value over a piece's placements is at an end or at
    the two placements next to a real root of the cubic's derivative; the
    cubic lies within the hull of b0..b3.  So the ends (and every
    placement of the pieces too short to reduce) give a first extreme, and
    only the pieces whose b1 or b2 passes it are searched at the
    placements next to their stationary points (the cubic evaluated there
    by Horner's rule in v = 2u - 1).  Of equal values the first placement
    governs."""
    r, nb = G.shape[1], G.shape[2]
    if r == 0:
        return
    b = pl.pieces
    n = np.diff(b)
    big = n >= _PIECE_MIN
    start, last = b[:-1][big], n[big] - 1
    pb = len(start)
    ns = n[~big]
    small = np.repeat(b[:-1][~big] - np.cumsum(ns) + ns, ns) + np.arange(ns.sum())
    # the placements evaluated exactly, ascending: ends of the reduced
    # pieces, every placement of the others
    D = np.sort(np.concatenate([start, start + last, small]))
    nD = len(D)
    c0, c3 = np.searchsorted(D, start), np.searchsorted(D, start + last)  # columns of b0, b3
    cols = [pl.WP[:, D]]
    if pb:
        # b1, b2 of each piece from its values at the four nodes: with b0 =
        # q0 and b3 = q3, q1 and q2 give two equations in b1, b2
        k1, k2 = last // 3, (2 * last) // 3
        u = np.stack([k1 / last, k2 / last], axis=1)  # (pb, 2)
        Bm = np.stack([(1 - u) ** 3, 3 * u * (1 - u) ** 2, 3 * u ** 2 * (1 - u), u ** 3], axis=2)  # (pb, 2, 4)
        inv = np.linalg.inv(Bm[:, :, 1:3])  # (pb, 2, 2): (b1, b2) = inv (q12 - B0 q0 - B3 q3)
        W = np.concatenate([-inv @ Bm[:, :, :1], inv, -inv @ Bm[:, :, 3:]], axis=2)  # (pb, 2, 4) on q0..q3
        nodes = np.stack([start, start + k1, start + k2, start + last], axis=1)  # (pb, 4)
        cols.append(np.einsum("npa,pja->njp", pl.WP[:, nodes], W).reshape(nb, 2 * pb))  # all b1, then all b2
    F = (G.reshape(3 * r, nb) @ np.concatenate(cols, axis=1)).reshape(3, r, -1)
    nf = 2 + len(t)
    xs = [L * tk for tk in t]

    def quantity(f):
        """(r, columns) quantity f (N, V, M at t[f - 2]) from F."""
        return -F[0] if f == 0 else F[1] if f == 1 else xs[f - 2][:, None] * F[1] - F[2]

    # per sign (+1 largest, -1 smallest): per quantity and member the
    # extreme (sign * value) and its placement
    ext = {sg: (np.empty((nf, r)), np.empty((nf, r), np.intp)) for sg in (1, -1)}
    found = []  # pieces to search: (quantity, member, piece, b0..b3)
    for f in range(nf):
        Q = quantity(f)
        i1, v1, i2, v2 = _extreme(Q[:, :nD])
        ext[1][0][f], ext[1][1][f], ext[-1][0][f], ext[-1][1][f] = v1, D[i1], -v2, D[i2]
        if pb:
            b1, b2 = Q[:, nD:nD + pb], Q[:, nD + pb:]  # (r, pb)
            rr, pp = np.nonzero((np.maximum(b1, b2) > v1[:, None]) | (np.minimum(b1, b2) < v2[:, None]))
            if len(rr):
                found.append((np.full(len(rr), f), rr, pp, Q[rr, c0[pp]], b1[rr, pp], b2[rr, pp], Q[rr, c3[pp]]))
    if found:
        f_, r_, p_, *bz = (np.concatenate(c) for c in zip(*found))
        cm = _BERN_TO_V @ np.array(bz)  # (4, n) monomial coefficients in v
        # real roots of c1 + 2 c2 v + 3 c3 v^2 in [-1, 1], as the integers k next to them
        A_, B_, C_ = 3 * cm[3], 2 * cm[2], cm[1]
        with np.errstate(divide="ignore", invalid="ignore"):
            disc = B_ * B_ - 4 * A_ * C_
            q = -0.5 * (B_ + np.copysign(np.sqrt(np.maximum(disc, 0.0)), B_))
            r1, r2 = q / A_, C_ / q
            roots = np.stack([np.fmin(r1, r2), np.fmax(r1, r2)])  # ascending; a nan gives way to the other
        ok = (disc >= 0) & (np.abs(roots) <= 1.0)  # False for nan, inf
        roots = np.where(ok, roots, np.where(ok[::-1], roots[::-1], -1.0))  # a missing root repeats the other
        lp = last[p_]
        kr = np.floor((roots + 1) * 0.5 * lp)
        k = np.minimum(np.concatenate([kr, kr + 1])[[0, 2, 1, 3]], lp)  # (4, n) ascending
        v = 2 * k / lp - 1
        val = ((cm[3] * v + cm[2]) * v + cm[1]) * v + cm[0]
        tgt = f_ * r + r_  # ascending: by quantity, then member (then piece)
        seg = np.concatenate([[0], np.flatnonzero(np.diff(tgt)) + 1])
        cnt = np.diff(np.append(seg, len(tgt)))
        tt = tgt[seg]
        k = k.astype(np.intp)
        for sg in (1, -1):
            w = val if sg > 0 else -val
            w_, kb = w[0], k[0]
            for c in range(1, 4):  # the first, the earliest placement, of equal values
                kb = np.where(w[c] > w_, k[c], kb)
                w_ = np.maximum(w_, w[c])
            pa = start[p_] + kb
            gmax = np.maximum.reduceat(w_, seg)
            ga = np.minimum.reduceat(np.where(w_ == np.repeat(gmax, cnt), pa, pl.n), seg)
            ev, ea = ext[sg][0].reshape(-1), ext[sg][1].reshape(-1)
            better = (gmax > ev[tt]) | ((gmax == ev[tt]) & (ga < ea[tt]))
            ev[tt[better]], ea[tt[better]] = gmax[better], ga[better]
    every = (first[:, None] + np.arange(len(t))).ravel()
    for sg in (1, -1):
        ev, ea = ext[sg]
        for f, q in ((0, "N"), (1, "V")):
            for side in ("right", "left"):
                best[(q, sg, side)][0][every] = np.repeat(ev[f], len(t))
                best[(q, sg, side)][1][every] = np.repeat(ea[f], len(t))
        for kk in range(len(t)):
            best[("M", sg, "right")][0][first + kk] = ev[2 + kk]
            best[("M", sg, "right")][1][first + kk] = ea[2 + kk]


def _loaded_extremes(pl: "_Placements", Fp: np.ndarray, on: np.ndarray, rows: np.ndarray, xs: np.ndarray,
                     bounds: np.ndarray, L: np.ndarray, best: dict) -> None:
    """Extremes over every placement at the samples of the members ``on``
    that axles stand on, from their start-end forces ``Fp`` (len(on), 3,
    n_place).

    A placement with no axle on the member gives constant N and V there
    and M linear in x (:func:`_line_extremes`); one with axles adds each
    axle's own step (N, V) and ramp (M) from its position on.  A sample at
    an axle takes the axle for the right side and not for the left (exact
    comparisons, as :meth:`UnitLoadSolutions.member_values`)."""
    st = pl.st
    offset = np.concatenate([[0.0], np.cumsum(L + 1.0)])
    keys = xs + offset[rows]  # ascending: samples are sorted by member, then x
    ent_j = st.member[pl.u]
    eb = np.searchsorted(ent_j, np.concatenate([on, [on[-1] + 1]]))
    for k, j in enumerate(on):
        e = slice(eb[k], eb[k + 1])
        Q, re_ = np.unique(pl.place[e], return_inverse=True)
        u, P = pl.u[e], pl.load[e]
        i0, i1 = bounds[j], bounds[j + 1]
        n = i1 - i0
        x = xs[i0:i1]
        idx = np.arange(i0, i1)
        akey = st.a[u] + offset[j]
        fR = np.clip(np.searchsorted(keys, akey, side="left") - i0, 0, n)
        fL = np.clip(np.searchsorted(keys, akey, side="right") - i0, 0, n)
        # the axles of each loaded placement in slots (len(Q), kmax) by
        # position; a slot without an axle sits past the last sample
        o = np.lexsort((fR, re_))
        g0 = np.searchsorted(re_[o], np.arange(len(Q)))
        slot = np.arange(len(o)) - g0[re_[o]]
        kmax = int(slot.max()) + 1
        first = np.full((len(Q), kmax + 1), n)
        first[:, 0] = 0
        first[re_[o], slot + 1] = fR[o]
        Ni, Vi, Mi = Fp[k]
        px, py = P * st.p[u, 0], P * st.p[u, 1]
        # N and V of the placements without an axle here: constant along x;
        # with no axial component of the axles, N is the end forces' alone
        # for every placement, loaded or not
        axial = bool(np.any(px))
        for q, base in (("N", -Ni), ("V", Vi)):
            for sg in (1, -1):
                w = sg * base
                if q == "V" or axial:
                    w[Q] = -np.inf
                i = int(np.argmax(w))
                for side in ("right", "left"):  # the member's first values: set, not merged
                    best[(q, sg, side)][0][i0:i1], best[(q, sg, side)][1][i0:i1] = w[i], i
        # the loaded placements, in blocks of samples (about a megabyte per array)
        rows_blk = max(16, _CELLS // max(len(Q), 1))
        for s0 in range(0, n, rows_blk):
            s1 = min(n, s0 + rows_blk)
            _loaded_block(s0, s1, x[s0:s1], slice(i0 + s0, i0 + s1), Q, re_, o, slot,
                          np.clip(first, s0 - 1, s1) - (s0 - 1),
                          fR, fL, Ni[Q], Vi[Q], Mi[Q], px, py, st.a[u], best)
        # M of the others: lines in x
        line = np.ones(pl.n, bool)
        line[Q] = False
        _line_extremes(x, Vi, Mi, line, idx, best)


def _level_steps(val, base, re_, o, slot, runs, n, nq):
    """(n, nq) per placement (column) ``base`` plus the sum of ``val`` over
    its axles whose level has begun at each row: its levels base, base +
    v1, base + (v1 + v2), ... (axles in ``slot`` order) repeated over
    ``runs`` rows each (a row of ``runs`` per placement, kmax + 1 long)."""
    lev = np.zeros((nq, runs.size // nq))
    lev[re_[o], slot + 1] = val[o]
    np.cumsum(lev, axis=1, out=lev)
    lev += base[:, None]
    return np.ascontiguousarray(np.repeat(lev.ravel(), runs).reshape(nq, n).T)


def _loaded_block(s0, s1, x, idx, Q, re_, o, slot, first, fR, fL, NiQ, ViQ, MiQ, px, py, a, best) -> None:
    """Samples s0:s1 of a member (``x``, indices ``idx``: a slice) under its loaded
    placements ``Q``: the axles (entries; ``re_`` their placement in Q,
    ``o`` their order by placement then position, ``slot`` their rank in
    that order within the placement) with first samples ``fR`` (right
    side) and ``fL`` (left), and the placements' end forces.

    Row r of the work arrays is sample s0 - 1 + r (row 0: the sample before
    the block, or before the member's first: no axle there); ``first``
    (len(Q), kmax + 1) is the first row of each level.  The right side at a
    sample is its row.  The left side leaves out the axles standing at the
    sample itself: that is the row before, as no axle stands between two
    samples, except at the few samples just past an axle that was merged
    with a sample a rounding away (the samples are at most one per 1e-9 of
    the member's length), which are worked out as right side less the
    axles there."""
    n, nq = s1 - s0, len(Q)
    first[:, 0] = 0  # level 0 (no axle) from the first row
    exact = (fL > fR) & (fR >= s0) & (fR < s1)  # axles standing at a sample of the block
    off = (fL == fR) & (fR >= s0) & (fR < s1)  # axles between two samples, counted from the later
    redo = np.unique(fR[off] - s0)
    if len(redo):
        hit = exact & np.isin(fR - s0, redo)
        hit_row, hit_col = np.searchsorted(redo, fR[hit] - s0), re_[hit]

    def both(arr, q, val):
        """Right and left extremes of ``arr`` (n + 1 rows) merged into best."""
        i1_, v1, i2_, v2 = _extreme(arr)
        out = {"right": (v1[1:], i1_[1:], v2[1:], i2_[1:]), "left": (v1[:-1], i1_[:-1], v2[:-1], i2_[:-1])}
        if len(redo):
            rows_ = arr[redo + 1]
            np.subtract.at(rows_, (hit_row, hit_col), val[hit])
            j1, w1, j2, w2 = _extreme(rows_)
            l1, li1, l2, li2 = (c.copy() for c in out["left"])
            l1[redo], li1[redo], l2[redo], li2[redo] = w1, j1, w2, j2
            out["left"] = (l1, li1, l2, li2)
        for side, (w1, j1, w2, j2) in out.items():
            _merge(best[(q, 1, side)], idx, w1, Q[j1])
            _merge(best[(q, -1, side)], idx, -w2, Q[j2])

    runs = np.empty_like(first)  # rows at each level
    runs[:, :-1] = first[:, 1:] - first[:, :-1]
    runs[:, -1] = n + 1 - first[:, -1]
    runs = runs.ravel()
    if np.any(px):  # (without, N is the end forces' alone: see _loaded_extremes)
        NR = _level_steps(-px, -NiQ, re_, o, slot, runs, n + 1, nq)
        both(NR, "N", -px)
    VR = _level_steps(py, ViQ, re_, o, slot, runs, n + 1, nq)
    both(VR, "V", py)
    # M: x Vi - Mi plus the axles' ramps py (x - a), i.e.
    # x (Vi + sum py) - (Mi + sum py a), on the rows of the samples
    C2 = _level_steps(py * a, MiQ, re_, o, slot, runs, n + 1, nq)[1:]
    E = x[:, None] * VR[1:]
    E -= C2
    i1_, v1, i2_, v2 = _extreme(E)
    _merge(best[("M", 1, "right")], idx, v1, Q[i1_])
    _merge(best[("M", -1, "right")], idx, -v2, Q[i2_])


def _line_extremes(x: np.ndarray, Vi: np.ndarray, Mi: np.ndarray, use: np.ndarray, idx: np.ndarray,
                   best: dict) -> None:
    """Extremes of M = x Vi - Mi at the samples ``x`` (ascending, indices
    ``idx``) of one member over the placements ``use`` (bool, n_place),
    whose effect on the member is end forces only, so M is a straight
    line in x for each of them.

    The extremes are found exactly at about a dozen tangent samples (all
    placements evaluated).  Between two tangent samples the upper
    envelope of the lines lies above LB, the larger of the two lines
    found there, a convex broken line with one kink x*; any line minus LB
    is concave, and not positive at the two tangent samples, so a line
    can reach the envelope between them only if it is above LB at x*.
    Only those lines are evaluated at the samples in between (likewise
    for the lower envelope).
    """
    n = len(x)
    if not use.any():
        return
    K = np.unique(np.round(np.linspace(0, n - 1, min(n, 11))).astype(np.intp))
    cand_p = np.flatnonzero(use)
    V, M = Vi[cand_p], Mi[cand_p]
    Et = np.multiply.outer(x[K], V) - M  # (|K|, n_use)
    not_k = np.ones(n, bool)
    not_k[K] = False
    inner = np.flatnonzero(not_k)
    gap = np.searchsorted(K, inner) - 1  # interval of each inner sample
    for sg in (1, -1):
        w = sg * Et
        qk = np.argmax(w, axis=1)
        _merge(best[("M", sg, "right")], idx[K], w[np.arange(len(K)), qk], cand_p[qk])
        if not len(inner):
            continue
        # lines a + b x, a = -sg Mi, b = sg Vi; the two tangents of each gap
        a0, b0 = -sg * M[qk[:-1]], sg * V[qk[:-1]]
        a1, b1 = -sg * M[qk[1:]], sg * V[qk[1:]]
        xl, xr = x[K[:-1]], x[K[1:]]
        den = b1 - b0
        with np.errstate(divide="ignore", invalid="ignore"):
            xk = np.where(den > 0, (a0 - a1) / np.where(den > 0, den, 1.0), xl)
        xk = np.clip(xk, xl, xr)
        lb = np.maximum(a0 + b0 * xk, a1 + b1 * xk)
        above = sg * (np.multiply.outer(xk, V) - M) > lb[:, None]  # (gaps, n_use)
        above[np.arange(len(xl)), qk[:-1]] = True
        above[np.arange(len(xl)), qk[1:]] = True
        gr, gc = np.divmod(np.flatnonzero(above), above.shape[1])  # by gap, then placement (ascending)
        cnt = np.bincount(gr, minlength=len(xl))
        cstart = np.concatenate([[0], np.cumsum(cnt)[:-1]])
        c = cnt[gap]
        tot = int(c.sum())
        gstart = np.concatenate([[0], np.cumsum(c)[:-1]])
        ps = np.repeat(np.arange(len(inner)), c)
        pc = gc[np.repeat(cstart[gap] - gstart, c) + np.arange(tot)]
        val = sg * (x[inner][ps] * V[pc] - M[pc])
        gmax = np.maximum.reduceat(val, gstart)
        first = np.minimum.reduceat(np.where(val == np.repeat(gmax, c), pc, len(cand_p)), gstart)
        _merge(best[("M", sg, "right")], idx[inner], gmax, cand_p[first])


@dataclass(eq=False)
class _Rhs:
    """Load columns for :func:`solver.stiffness.displacements` (no
    settlements)."""

    F: np.ndarray

    @property
    def Ur(self) -> np.ndarray:
        return np.broadcast_to(0.0, self.F.shape)
