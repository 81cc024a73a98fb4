"""Second-order analysis of a planar frame: the elastic critical load
factor (alpha_cr) and P-Delta analysis of one combination.

Both work on one combination at a time (second-order results do not
superpose) and on a refined copy of the frame (:mod:`solver.refine`,
``subdivisions`` elements per member, 4 by default; alpha_cr cuts each
member only as finely as its compression needs, see
:func:`critical_load_factors`), invisible in the results: forces, displacements and reactions are those of the drawn
members and nodes.  The geometric stiffness is the consistent
beam-column matrix of :func:`solver.element.geometric_stiffness` (P-Delta
and P-delta together), with each element's axial force varying linearly
between its end values (a column's self-weight, a rafter's load along
it); member end releases carry it over the statically condensed shapes
(:func:`solver.element.condensation_map`).

Units: the frame's (N, m, Pa in the DXF pipeline).  Axial force tension
positive; a load factor is dimensionless.  Sign conventions as in
:mod:`solver.stiffness`.

Examples
--------
A 5 m flagpole column, fixed at the base, 100 kN on its top: the Euler
load of a cantilever is pi^2 EI / (2L)^2.

>>> import math
>>> from dxf2frame.solver import Frame, Section, NodalLoad, critical_load_factor, second_order
>>> f = Frame()
>>> a, b = f.add_node(0.0, 0.0), f.add_node(0.0, 5.0)
>>> _ = f.add_member(a, b, Section(E=200e9, A=5e-3, I=8e-5))
>>> _ = f.add_support(a, "fixed")
>>> _ = f.add_load(NodalLoad(b, fx=2e3, fy=-100e3, case="D"))
>>> res = critical_load_factor(f, "1.0D")
>>> euler = math.pi**2 * 200e9 * 8e-5 / (2 * 5.0) ** 2
>>> round(res.alpha_cr * 100e3 / euler, 3), res.first_order_ok
(1.0, True)
>>> pd = second_order(f, "1.0D")
>>> round(abs(pd.result.reactions[0].m) / 10e3, 2)   # 2 kN * 5 m, amplified
1.06
"""
from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
from scipy.sparse.linalg import LinearOperator, eigsh

from .combinations import format_combination, parse_combination
from .element import condensation_map, geometric_stiffness, hermite_shapes, hermite_slopes
from .errors import SolverError, UnstableFrameError
from .model import Frame
from .refine import RefinedFrame, subdivide
from .results import CaseResult
from .stiffness import (FrameModel, LoadVectors, assemble, case_results, displacements, factorise,
                        load_vectors, member_end_forces, prepare, support_reactions)

__all__ = [
    "BucklingError",
    "ConvergenceError",
    "BucklingResult",
    "SwayAmplification",
    "SecondOrderResult",
    "ALPHA_CR_LIMIT",
    "ELEMENT_LOAD_RATIO",
    "MOST_PIECES",
    "critical_load_factor",
    "critical_load_factors",
    "second_order",
    "second_order_many",
    "storey_levels",
    "sway_amplification",
    "axial_ends",
    "chord_shears",
]

ALPHA_CR_LIMIT = 10.0
"""alpha_cr at or above which first-order analysis is taken to suffice:
the elastic-analysis criterion of EN 1993-1-1, 5.2.1(3) (from memory),
used here as common practice."""

CRITERION = ("first-order analysis suffices when alpha_cr >= 10 (elastic analysis; EN 1993-1-1 5.2.1(3), "
             "from memory; common practice)")


class BucklingError(UnstableFrameError):
    """The load of a combination reaches the elastic critical load
    (alpha_cr <= 1): the frame buckles and no equilibrium state exists to
    report.  ``combination`` names it, ``alpha_cr`` is the factor found
    (0 when the P-Delta stiffness itself became singular)."""

    def __init__(self, message: str, *, combination: str = "", alpha_cr: float = 0.0, **kw) -> None:
        self.combination = combination
        self.alpha_cr = float(alpha_cr)
        super().__init__(message, **kw)


class ConvergenceError(SolverError):
    """The P-Delta iteration did not converge within its iteration limit.
    ``combination`` names the combination."""

    def __init__(self, message: str, *, combination: str = "", **kw) -> None:
        self.combination = combination
        super().__init__(message, **kw)


# --------------------------------------------------------------------------
# shared steps


def _factors(frame: Frame, factors) -> dict[str, float]:
    """{case: factor} from a mapping, a combination text, or None (every
    case of the frame at 1.0)."""
    if factors is None:
        return {c: 1.0 for c in frame.cases()}
    if isinstance(factors, str):
        return parse_combination(factors)
    return {str(k): float(v) for k, v in factors.items()}


@dataclass(eq=False)
class _Setup:
    """The original frame and its refined copy, both prepared, with the
    combination's loads on each."""

    name: str
    factors: dict[str, float]
    model0: FrameModel
    loads0: LoadVectors
    refined: RefinedFrame
    model: FrameModel
    loads: LoadVectors
    C: np.ndarray  # (m_ref, 6, 6) condensation map of the refined elements
    fact: object = None  # the refined frame's K factorised, shared by the combinations

    def factorised(self):
        """The refined frame's elastic stiffness, factorised once."""
        if self.fact is None:
            self.fact = factorise(self.model)
        return self.fact


@dataclass(eq=False)
class _Prepared:
    """The frame and its refined copy, prepared, with every load case's
    load vectors on each (shared by the combinations of one frame)."""

    frame: Frame
    model0: FrameModel
    cases0: LoadVectors
    refined: RefinedFrame
    model: FrameModel
    cases: LoadVectors
    C: np.ndarray
    fact: object = None  # K of the refined frame factorised (first use), the same for every combination


def _prepare(frame: Frame, subdivisions: int | np.ndarray, base: _Prepared | None = None) -> _Prepared:
    """The frame and its refined copy prepared; ``base`` a preparation of
    the same frame whose drawn model and load vectors are reused.  One
    piece per member is the drawn model itself."""
    cases = list(frame.cases())
    if base is not None:
        model0, cases0 = base.model0, base.cases0
    else:
        model0 = prepare(frame)  # checks geometry, sections, supports
        cases0 = load_vectors(model0, cases)  # checks loads
    m = len(frame.members)
    if np.all(np.asarray(subdivisions) == 1):
        ends = np.column_stack([model0.si, model0.ei]).ravel()
        refined = RefinedFrame(frame, 1, len(frame.nodes), np.ones(m, dtype=np.intp),
                               np.arange(m + 1, dtype=np.intp), ends.astype(np.intp))
        model, cases_r = model0, cases0
    else:
        refined = subdivide(frame, subdivisions)
        model = prepare(refined.frame)
        cases_r = load_vectors(model, cases)
    return _Prepared(frame, model0, cases0, refined, model, cases_r,
                     condensation_map(model.k_full, model.rel_s, model.rel_e))


def _setup(frame: Frame, factors, name: str | None, subdivisions: int,
           prep: _Prepared | None = None) -> _Setup:
    prep = prep if prep is not None else _prepare(frame, subdivisions)
    fac = _factors(frame, factors)
    label = name if name is not None else (format_combination(fac) or "0")
    if prep.fact is None:
        prep.fact = factorise(prep.model)  # K does not depend on the combination: one factorisation
    return _Setup(label, fac, prep.model0, prep.cases0.combined(fac, label), prep.refined, prep.model,
                  prep.cases.combined(fac, label), prep.C, prep.fact)


def _combos(combinations) -> list[tuple[str, dict]]:
    """(name, factors) pairs from a mapping {name: factors or text} or a
    sequence of pairs."""
    items = combinations.items() if isinstance(combinations, Mapping) else combinations
    return [(str(n), f) for n, f in items]


def axial_ends(fe: np.ndarray) -> np.ndarray:
    """(m, 2) axial force at the start and the end of each element from
    its end forces (m, 6) [force], tension positive: ``(-Ni, Nj)``."""
    return np.column_stack([-fe[:, 0], fe[:, 3]])


def _kg_local(st: _Setup, N: np.ndarray) -> np.ndarray:
    """(m_ref, 6, 6) geometric stiffness of the refined elements for axial
    forces ``N``, (m,) constant along each element or (m, 2) at its ends
    (linear between), releases carried over the condensed shapes."""
    N = np.asarray(N, dtype=float)
    kg = geometric_stiffness(st.model.L, N[:, 0], N[:, 1]) if N.ndim == 2 else geometric_stiffness(st.model.L, N)
    if st.model.rel_s.any() or st.model.rel_e.any():
        kg = np.einsum("mji,mjk,mkl->mil", st.C, kg, st.C, optimize=True)
    return kg


def _first_order(st: _Setup) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(U, dl, fe) of the refined frame under the combination, linear."""
    fact = st.factorised()
    U = displacements(st.model, fact, st.loads)
    dl, fe = member_end_forces(st.model, U, st.loads.f0)
    return U, dl, fe


# --------------------------------------------------------------------------
# elastic critical load factor


@dataclass(eq=False)
class BucklingResult:
    """Elastic critical load factor of one combination.

    Attributes
    ----------
    name, factors : the combination
    alpha_cr : the factor by which the combination's loads must be
        multiplied to reach elastic buckling (inf when no member is in
        compression); dimensionless
    factors_found : the lowest positive load factors found, ascending
    shape : (n_nodes, 3) buckled shape at the frame's nodes, global ux, uy,
        rz, scaled so that the largest translation of any point is 1
    member_points : (m, k) positions along each member [length] of the
        points in ``member_shape``
    member_shape : (m, k, 2) buckled shape along each member, global ux,
        uy at ``member_points`` (same scale as ``shape``), for drawing
    first_order_ok : alpha_cr >= :data:`ALPHA_CR_LIMIT` (see ``criterion``)
    criterion : the rule used, in words
    """

    name: str
    factors: dict[str, float]
    alpha_cr: float
    factors_found: np.ndarray
    shape: np.ndarray
    member_points: np.ndarray
    member_shape: np.ndarray
    first_order_ok: bool
    criterion: str = CRITERION

    @property
    def buckles(self) -> bool:
        """The combination's own load reaches the critical load."""
        return self.alpha_cr <= 1.0


#: the largest ``alpha_cr * |N| / P_E`` an element may carry under the
#: adaptive refinement of :func:`critical_load_factors`, ``P_E = pi^2 EI /
#: h^2`` of the element's own length ``h``.  1/16 is what each of the four
#: elements of a pinned column at its own Euler load carries, the accuracy
#: of the uniform refinement (``subdivisions=4``: the Euler load within
#: about 0.1 %); the cubic element's error falls with the square of the
#: ratio, so no element of the adaptive refinement is less accurate than
#: those.
ELEMENT_LOAD_RATIO = 1.0 / 16.0

#: the most elements the adaptive refinement cuts one member into (a tie
#: pulled to 64 times its own Euler load reaches it)
MOST_PIECES = 32


def _lowest_factors(A: sp.spmatrix, B: sp.spmatrix, fact, modes: int, v0: np.ndarray | None = None,
                    near: bool = False):
    """Eigenpairs of ``B phi = lambda A phi`` with the smallest positive
    lambda, as ``mu = 1 / lambda`` of ``A phi = mu B phi`` (``A = -Kg``
    indefinite, ``B = K`` positive definite and factorised in ``fact``):
    the spectral transformation of shift-invert about sigma = 0, with K
    supplying the inner product the indefinite Kg cannot.  ``v0`` a
    starting vector (optional); ``near``: it is close to the wanted mode
    (the same combination on a coarser refinement)."""
    n = A.shape[0]
    if n <= 3 * modes + 12:  # too small for Lanczos: dense and exact
        mu, phi = sla.eigh(A.toarray(), B.toarray())
    else:
        Binv = LinearOperator((n, n), matvec=fact.solve, dtype=float)
        if v0 is not None and not (np.all(np.isfinite(v0)) and np.any(v0)):
            v0 = None
        near = near and v0 is not None
        if v0 is None:
            # a fixed start instead of ARPACK's random one: the same drawing
            # gives the same factors to the last digit and the same mode
            # (and so the same label place) on every run
            v0 = np.random.default_rng(20261204).standard_normal(n)
        # two more Ritz vectors than asked for keep Lanczos from settling on
        # the wrong one of close factors; a start near the wanted mode
        # needs one
        k = min(modes + (1 if near else 2), n - 2)
        # a Krylov space of 18 from a near start converges without a
        # restart on the benchmark frames (19 solves with K at 5,000 and
        # 20,000 members; 10 took 18 and 25, a restart throwing work away)
        ncv = min(n, max(2 * k + 14, 18) if near else max(2 * k + 1, 24))
        # tol 1e-6 from an arbitrary start: load factors to about six
        # digits, far more than the three a report gives (and finer than
        # the discretisation's own error); machine precision (tol=0) costs
        # half again as many solves with K for no visible change.  From a
        # start near the wanted mode, 1e-4: the factor's error is bounded
        # by the residual and falls with its square, so it still has at
        # least four digits (on the benchmark frame the same nine digits
        # as at 1e-6, with fewer solves with K); which mode it
        # is, is guarded by the caller (a finer frame's factor never above
        # the coarser one's)
        mu, phi = eigsh(A, k=k, M=B, Minv=Binv, which="LA", ncv=ncv, tol=1e-4 if near else 1e-6, v0=v0)
    order = np.argsort(-mu)
    return mu[order], phi[:, order]


def _global(st: _Setup, phi_full: np.ndarray) -> np.ndarray:
    """(n, 3) global ux, uy, rz at the refined frame's nodes of a vector in
    node axes."""
    sup = st.model.sup
    U = phi_full.reshape(-1, 3)
    ux = sup.cos * U[:, 0] - sup.sin * U[:, 1]
    uy = sup.sin * U[:, 0] + sup.cos * U[:, 1]
    return np.column_stack([ux, uy, U[:, 2]])


def _along(st: _Setup, g: np.ndarray, j: np.ndarray, t: np.ndarray) -> np.ndarray:
    """(len(j), 3) global ux, uy, rz at the fractions ``t`` of original
    members ``j``, from the refined frame's node values ``g`` (global):
    the element's own field, the axial displacement linear and the
    transverse one cubic (Hermite), with a released end's rotation taken
    from the statically condensed shape."""
    r, model = st.refined, st.model
    n = r.counts[j]
    p = np.minimum((t * n).astype(np.intp), n - 1)
    x = t * n - p
    e = r.offsets[j] + p
    c, sn, h = model.c[e], model.s[e], model.L[e]
    gi, gj = g[model.si[e]], g[model.ei[e]]
    d = np.column_stack([c * gi[:, 0] + sn * gi[:, 1], -sn * gi[:, 0] + c * gi[:, 1], gi[:, 2],
                         c * gj[:, 0] + sn * gj[:, 1], -sn * gj[:, 0] + c * gj[:, 1], gj[:, 2]])
    d = np.einsum("mij,mj->mi", st.C[e], d)
    u = (1.0 - x) * d[:, 0] + x * d[:, 3]
    v = sum(f * d[:, k] for f, k in zip(hermite_shapes(x, h), (1, 2, 4, 5)))
    th = sum(f * d[:, k] for f, k in zip(hermite_slopes(x, h), (1, 2, 4, 5)))
    return np.column_stack([c * u - sn * v, sn * u + c * v, th])


def _shape_at(st: _Setup, phi_full: np.ndarray, points: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Node shape (n0, 3), member points (m, k) and member shape (m, k, 2)
    of a refined-frame displacement vector at ``points`` equally spaced
    points of each member, scaled to unit largest translation."""
    g = _global(st, phi_full)
    m0, k = len(st.model0.ids), max(2, int(points))
    t = np.linspace(0.0, 1.0, k)
    j = np.repeat(np.arange(m0), k)
    mshape = _along(st, g, j, np.tile(t, m0))[:, :2].reshape(m0, k, 2)
    big = max(float(np.max(np.hypot(g[:, 0], g[:, 1]))) if len(g) else 0.0,
              float(np.max(np.hypot(mshape[..., 0], mshape[..., 1]))) if mshape.size else 0.0)
    if big > 0:
        g, mshape = g / big, mshape / big
    return g[: st.refined.n_nodes], t[None, :] * st.model0.L[:, None], mshape


def _carried(coarse: _Setup, phi_full: np.ndarray, fine: _Setup) -> np.ndarray:
    """A coarse refinement's mode carried onto a finer one's free dofs
    (a starting vector for the fine eigenproblem): the original nodes'
    values as they are, each interior node's from its element's field."""
    r = fine.refined
    full = np.zeros(fine.model.n_dofs)
    n0 = r.n_nodes
    full[: 3 * n0] = phi_full[: 3 * n0]
    members = np.repeat(np.arange(len(r.counts)), r.counts + 1)
    at = np.arange(len(r.nodes)) - (r.offsets[members] + members)
    inner = (at > 0) & (at < r.counts[members])
    j = members[inner]
    vals = _along(coarse, _global(coarse, phi_full), j, at[inner] / r.counts[j])
    full.reshape(-1, 3)[r.nodes[inner]] = vals  # interior nodes carry no supports: node axes are global
    return full[fine.model.free_idx]


def _critical(st: _Setup, N: np.ndarray, modes: int, v0: np.ndarray | None = None,
              near: bool = False) -> tuple[np.ndarray, np.ndarray | None]:
    """(lowest positive load factors, the first mode on all refined dofs)
    for element axial forces ``N`` (``v0``, ``near`` as in
    :func:`_lowest_factors`)."""
    model = st.model
    Kg = assemble(model, _kg_local(st, N))
    idx = model.free_idx
    fact = st.factorised()
    A = (-Kg)[idx][:, idx].tocsc()
    if not len(idx) or abs(A).max() == 0.0:
        return np.array([math.inf]), None
    mu, phi = _lowest_factors(A, fact.Kff, fact, modes, v0, near)
    scale = max(float(np.max(np.abs(mu))), 1e-300)
    pos = mu > 1e-9 * scale
    if not pos.any():
        return np.array([math.inf]), None
    full = np.zeros(model.n_dofs)
    full[idx] = phi[:, 0]
    return np.sort(1.0 / mu[pos])[:modes], full


def _pieces_needed(st: _Setup, N: np.ndarray, alpha: float, most: int) -> tuple[np.ndarray, float]:
    """(m,) elements each member needs so that none carries more than
    :data:`ELEMENT_LOAD_RATIO` of its own Euler load at the load factor
    (at most ``most``), for element axial forces ``N`` [force] (at the
    ends, (m, 2)) and the factor ``alpha`` found with one element per
    member.  Tension counts as compression does: a member in tension
    stiffens the frame, and one element overstates that as much as it
    understates the softening of a compressed one (the cubic misses the
    hyperbolic shape as it misses the trigonometric one).

    That factor can miss a member's own buckling between its ends (one
    element with both ends pinned, or between two fixed ends, has no
    bending shape of its own), so the factor used is the least of
    ``alpha`` and each compressed member's own buckling factor with its
    ends held: ``P_E / |N|`` with both ends pinned, else ``4 P_E / |N|``
    (fixed-fixed, the most any end restraint gives).  Each is the Rayleigh
    quotient of a shape the whole frame admits, so an upper bound of the
    frame's factor like ``alpha``: the counts are on the safe side.

    Also returns the largest ``alpha * |N| / P_E`` of a member (0 when
    nothing carries an axial force): below 1 no member can buckle between
    its held ends below ``alpha``, so the modes found with one element per
    member are the frame's own modes and a good start for the finer run.
    """
    model = st.model
    N = np.asarray(N, dtype=float)
    big = np.abs(N).max(axis=1) if N.ndim == 2 else np.abs(N)
    N = N.min(axis=1) if N.ndim == 2 else N
    PE = math.pi ** 2 * model.EI / model.L ** 2
    comp = N < 0.0
    if comp.any():
        own = np.where(model.rel_s & model.rel_e, 1.0, 4.0)[comp] * PE[comp] / -N[comp]
        alpha = min(alpha, float(own.min()))
    if not np.isfinite(alpha):
        return np.ones(len(N), dtype=np.intp), 0.0
    rho = alpha * big / PE
    counts = np.clip(np.ceil(np.sqrt(rho / ELEMENT_LOAD_RATIO) - 1e-9), 1, most).astype(np.intp)
    return counts, float(rho.max()) if len(rho) else 0.0


def critical_load_factor(frame: Frame, factors: Mapping[str, float] | str | None = None, *,
                         name: str | None = None, subdivisions: int = 4, modes: int = 1,
                         raise_if_buckles: bool = True, adaptive: bool = True) -> BucklingResult:
    """Elastic critical load factor alpha_cr of a combination.

    Solves the generalised eigenproblem ``K phi = lambda (-Kg) phi`` for
    its smallest positive lambda, Kg built from the first-order axial
    forces of the combination (so the loads are taken to grow in
    proportion).  K is factorised once (SuperLU) and the lowest factors
    come from ARPACK (scipy.sparse.linalg.eigsh) on the inverse problem,
    shift-invert about zero; a tiny frame uses a dense solver.

    Parameters
    ----------
    frame : the frame; every member needs a section
    factors : {case: factor}, a combination text (``"1.2D + 1.6L"``), or
        None for every case at 1.0
    name : the combination's name (default: the factors written out)
    subdivisions : elements per member without ``adaptive`` (4 gives the
        Euler load of a pinned column within about 0.1 %); member shapes
        are given at ``subdivisions + 1`` points either way
    modes : how many of the lowest factors to report in ``factors_found``
    raise_if_buckles : raise :class:`BucklingError` when alpha_cr <= 1
    adaptive : cut each member into as many elements as its own axial
        force needs (see :func:`critical_load_factors`)

    Returns
    -------
    :class:`BucklingResult` (``alpha_cr`` is inf when nothing is in
    compression; ``shape`` is then zero)
    """
    fac = _factors(frame, factors)
    label = name if name is not None else (format_combination(fac) or "0")
    return critical_load_factors(frame, [(label, fac)], subdivisions=subdivisions, modes=modes,
                                 raise_if_buckles=raise_if_buckles, adaptive=adaptive)[label]


def _result(st: _Setup, found: np.ndarray, mode: np.ndarray | None, points: int,
            raise_if_buckles: bool) -> BucklingResult:
    """The :class:`BucklingResult` of a set-up combination's factors and
    first mode."""
    alpha = float(found[0])
    m0, k = len(st.model0.ids), max(2, int(points))
    if mode is None:
        shape, pts, mshape = np.zeros((st.refined.n_nodes, 3)), np.zeros((m0, k)), np.zeros((m0, k, 2))
    else:
        shape, pts, mshape = _shape_at(st, mode, k)
    res = BucklingResult(st.name, st.factors, alpha, found, shape, pts, mshape, alpha >= ALPHA_CR_LIMIT)
    if raise_if_buckles and res.buckles:
        raise BucklingError(
            f"combination {st.name} buckles: its load reaches the elastic critical load "
            f"(alpha_cr = {alpha:.3g} <= 1); the frame cannot carry it", combination=st.name, alpha_cr=alpha)
    return res


def _factors_and_mode(st: _Setup, modes: int, v0: np.ndarray | None = None, near: bool = False):
    """(lowest factors, first mode, element axial forces at the ends (m,
    2)) of a set-up combination (``v0``, ``near`` as in
    :func:`_lowest_factors`)."""
    _, _, fe = _first_order(st)
    N = axial_ends(fe[:, :, 0])
    found, mode = _critical(st, N, modes, v0, near)
    return found, mode, N


def critical_load_factors(frame: Frame, combinations, *, subdivisions: int = 4, modes: int = 1,
                          raise_if_buckles: bool = True, adaptive: bool = True) -> dict[str, BucklingResult]:
    """:func:`critical_load_factor` of several combinations of one frame,
    ``{name: BucklingResult}`` in the given order; the frame is refined,
    checked and its load cases turned into load vectors once.

    ``combinations`` is ``{name: factors}`` (factors a mapping or a
    combination text) or a sequence of ``(name, factors)`` pairs.  With
    ``raise_if_buckles`` the first combination with alpha_cr <= 1 raises
    :class:`BucklingError` naming it.

    With ``adaptive`` (the default) the frame is first solved with one
    element per member; each member is then cut into the fewest equal
    elements (at most :data:`MOST_PIECES`) that keep every element's
    axial force at the factors found within :data:`ELEMENT_LOAD_RATIO`
    of the element's own Euler load, the largest count any combination
    asks for, and the combinations are solved again on that one refined
    frame, starting from the first modes (unless some member reached its
    own Euler load in the first run, where a mode the coarse frame could
    not show may be lower).  A member with a small axial force stays one
    element, where the cubic is already close to exact; a pin-ended
    column at its own Euler load gets 4, as the uniform default; a
    member far beyond its Euler load (a heavily pulled tie) gets more.
    The first pass overestimates the factors (a coarser Rayleigh-Ritz
    basis) and may miss a member's buckling between its ends, which
    :func:`_pieces_needed` bounds separately, so the counts are on the
    safe side.  Without ``adaptive`` every member is cut into
    ``subdivisions``.  Member shapes are reported at ``subdivisions + 1``
    equally spaced points either way.
    """
    combos = _combos(combinations)
    most, modes = max(1, int(subdivisions)), max(1, int(modes))
    first: list = []
    if adaptive:
        rough = _prepare(frame, 1)
        counts = np.ones(len(frame.members), dtype=np.intp)
        for n, f in combos:
            st = _setup(frame, f, n, 1, rough)
            found, mode, N = _factors_and_mode(st, modes)
            need, rho = _pieces_needed(st, N, float(found[0]), MOST_PIECES)
            counts = np.maximum(counts, need)
            first.append((st, found, mode if rho < 1.0 else None))
        if counts.max() == 1:   # (then every rho < 1: no mode was dropped above)
            return {st.name: _result(st, found, mode, most + 1, raise_if_buckles) for st, found, mode in first}
        prep = _prepare(frame, counts, rough)
    else:
        prep = _prepare(frame, most)
    out = {}
    for i, (n, f) in enumerate(combos):
        st = _setup(frame, f, n, most, prep)
        v0 = None
        if first and first[i][2] is not None:
            v0 = _carried(first[i][0], first[i][2], st)
        found, mode, _ = _factors_and_mode(st, modes, v0, near=True)
        if v0 is not None and not found[0] <= first[i][1][0] * (1.0 + 1e-6):
            # the finer frame can only lower the factor (its elements hold
            # the coarser ones' shapes): a higher one means the start led
            # Lanczos astray, so solve again without it
            found, mode, _ = _factors_and_mode(st, modes)
        out[n] = _result(st, found, mode, most + 1, raise_if_buckles)
    return out


# --------------------------------------------------------------------------
# P-Delta


@dataclass(frozen=True)
class SwayAmplification:
    """Second-order over first-order sway of one storey.

    ``level`` is the storey's top elevation and ``below`` its bottom
    [length]; ``drift_first``/``drift_second`` the mean lateral
    displacement (global X) of the nodes at ``level`` less that of the
    nodes at ``below`` [length]; ``moment_first``/``moment_second`` the sum
    of |end moments| [force*length] of the storey's columns (members
    reaching from ``below`` to ``level``); each ``*_ratio`` is second over
    first (nan when the first-order value is zero).  ``members`` are the
    columns' ids.
    """

    level: float
    below: float
    drift_first: float
    drift_second: float
    drift_ratio: float
    moment_first: float
    moment_second: float
    moment_ratio: float
    members: tuple[str, ...]


@dataclass(eq=False)
class SecondOrderResult:
    """P-Delta result of one combination.

    Attributes
    ----------
    result : the second-order :class:`CaseResult` (kind "combination"),
        usable wherever a first-order one is: reactions, node
        displacements, member end forces and end displacements are
        second order; member shears are perpendicular to the displaced
        chord (:func:`chord_shears`), so a member's N, V, M diagram runs
        between its second-order end moments with the member loads in
        between (the member's own bow, P-delta, between its ends is not
        added to it).  Do not superpose it with other results.
    first_order : the first-order result of the same combination
    alpha_cr : elastic critical load factor of the combination
    iterations : P-Delta iterations used
    storeys : :class:`SwayAmplification` per storey level
    first_order_ok : alpha_cr >= :data:`ALPHA_CR_LIMIT`
    criterion : the rule used, in words
    detail : the same result on the internally subdivided frame (member
        ``id`` cut into ``id#0``, ``id#1``, ...; its nodes after the
        frame's own), whose diagrams also carry each member's own bow
        (P-delta) at the subdivision points
    """

    result: CaseResult
    first_order: CaseResult
    alpha_cr: float
    iterations: int
    storeys: list[SwayAmplification] = field(default_factory=list)
    first_order_ok: bool = False
    criterion: str = CRITERION
    detail: CaseResult | None = None

    @property
    def name(self) -> str:
        return self.result.name


def _ratio(a: float, b: float) -> float:
    return b / a if abs(a) > 0 else math.nan


def storey_levels(frame: Frame, tol: float | None = None) -> list[float]:
    """Distinct node elevations (global Y) of a frame, ascending, merged
    within ``tol`` (default 1e-6 of the frame's height) [length]."""
    y = np.sort(np.array([nd.y for nd in frame.nodes], dtype=float))
    if not len(y):
        return []
    t = tol if tol is not None else 1e-6 * max(float(y[-1] - y[0]), 1.0)
    keep = np.concatenate(([True], np.diff(y) > t))
    return [float(v) for v in y[keep]]


def sway_amplification(frame: Frame, first: CaseResult, second: CaseResult,
                       levels: Sequence[float] | None = None) -> list[SwayAmplification]:
    """Storey-by-storey amplification of sway (see
    :class:`SwayAmplification`); ``levels`` are the storey elevations
    [length] (default: every distinct node elevation)."""
    lv = sorted(float(v) for v in (levels if levels is not None else storey_levels(frame)))
    if len(lv) < 2 or first.displacements is None or second.displacements is None:
        return []
    y = np.array([nd.y for nd in frame.nodes], dtype=float)
    tol = 1e-6 * max(lv[-1] - lv[0], 1.0)
    u1, u2 = first.displacements[:, 0], second.displacements[:, 0]
    ends = np.array([(y[mb.start], y[mb.end]) for mb in frame.members]).reshape(-1, 2)
    lo, hi = ends.min(axis=1), ends.max(axis=1)
    ef1, ef2 = first.members.end_forces, second.members.end_forces
    out = []
    for below, level in zip(lv[:-1], lv[1:]):
        at_top, at_bot = np.abs(y - level) <= tol, np.abs(y - below) <= tol
        if not at_top.any():
            continue

        def drift(u):
            return float(np.mean(u[at_top]) - (np.mean(u[at_bot]) if at_bot.any() else 0.0))

        cols = np.flatnonzero((lo <= below + tol) & (hi >= level - tol) & (hi - lo > tol))
        m1 = float(np.sum(np.abs(ef1[cols][:, [2, 5]])))
        m2 = float(np.sum(np.abs(ef2[cols][:, [2, 5]])))
        d1, d2 = drift(u1), drift(u2)
        out.append(SwayAmplification(level, below, d1, d2, _ratio(d1, d2), m1, m2, _ratio(m1, m2),
                                     tuple(frame.members[j].id for j in cols)))
    return out


def chord_shears(fe: np.ndarray, fe_first: np.ndarray, L: np.ndarray) -> np.ndarray:
    """Second-order end forces (m, 6) with the shears taken perpendicular
    to each member's displaced chord.

    The P-Delta end forces ``(k + kg) d`` are in the undeformed member
    axes, where the axial force's sideways component at the rotated chord
    (N * psi) appears as shear, so the end moments do not balance the
    shears on the undeformed member.  A self-equilibrated pair of
    transverse forces ``+r/L`` at the start, ``-r/L`` at the end removes
    the imbalance ``r``; the member loads' share of the moment equation is
    taken from the first-order end forces ``fe_first`` of the same loads
    (which balance them exactly).  The N, V, M diagram of the member then
    runs from its second-order start moment to its second-order end
    moment.
    """
    out = np.array(fe, dtype=float)
    imbalance = (out[:, 2] + out[:, 5] + out[:, 4] * L) - (fe_first[:, 2] + fe_first[:, 5] + fe_first[:, 4] * L)
    out[:, 1] += imbalance / L
    out[:, 4] -= imbalance / L
    return out


def _to_original(st: _Setup, U: np.ndarray, dl: np.ndarray, fe: np.ndarray):
    """Refined-frame displacements and element end values -> those of the
    drawn nodes and members."""
    m0 = len(st.model0.ids)
    first, last = st.refined.first_piece(np.arange(m0)), st.refined.last_piece(np.arange(m0))
    fe0 = np.concatenate([fe[first, 0:3], fe[last, 3:6]], axis=1)
    dl0 = np.concatenate([dl[first, 0:3], dl[last, 3:6]], axis=1)
    return U[: 3 * st.refined.n_nodes], dl0, fe0


def _buckled(st: _Setup, dofs, what: str) -> BucklingError:
    return BucklingError(f"combination {st.name} buckles: the second-order stiffness is singular ({what})",
                         combination=st.name, nodes=sorted({int(d) // 3 for d in dofs}))


def second_order(frame: Frame, factors: Mapping[str, float] | str | None = None, *, name: str | None = None,
                 family: str = "", subdivisions: int = 4, tol: float = 1e-8, max_iterations: int = 50,
                 levels: Sequence[float] | None = None) -> SecondOrderResult:
    """P-Delta analysis of one combination.

    Iterates ``(K + Kg(N)) u = F``, Kg from the element axial forces of the
    previous step (first-order forces to start), until the largest change
    of displacement and of axial force are both within ``tol`` relative
    to their largest values; member end forces are recovered as ``(k +
    kg) d + f0`` with the second-order end displacements.

    Parameters
    ----------
    frame : the frame; every member needs a section
    factors : {case: factor}, a combination text, or None (every case 1.0)
    name, family : the result's name and combination set
    subdivisions : elements per member used internally
    tol : relative convergence tolerance (dimensionless)
    max_iterations : iteration limit
    levels : storey elevations [length] for the sway amplification
        (default: every distinct node elevation)

    Raises
    ------
    BucklingError : alpha_cr <= 1, or the second-order stiffness becomes
        singular during the iteration
    ConvergenceError : no convergence within ``max_iterations``
    """
    return _p_delta(frame, _setup(frame, factors, name, subdivisions), family, tol, max_iterations, levels)


def _p_delta(frame: Frame, st: _Setup, family: str, tol: float, max_iterations: int,
             levels: Sequence[float] | None) -> SecondOrderResult:
    """:func:`second_order` of a set-up combination."""
    U, dl, fe = _first_order(st)
    fe_lin = fe[:, :, 0].copy()
    N = axial_ends(fe_lin)
    found, _ = _critical(st, N, 1)
    alpha = float(found[0])
    if alpha <= 1.0:
        raise BucklingError(
            f"combination {st.name} buckles: its load reaches the elastic critical load "
            f"(alpha_cr = {alpha:.3g} <= 1); no second-order equilibrium exists", combination=st.name,
            alpha_cr=alpha)
    U, dl, fe, Kg, it = _iterate(st, U, N, tol, max_iterations)
    fe_sub = fe.copy()
    fe_sub[:, :, 0] = chord_shears(fe[:, :, 0], fe_lin, st.model.L)
    Rs = support_reactions(st.model, U, st.loads.F, Kg)
    detail = case_results(st.model, st.loads, U, dl, fe_sub, Rs, kind="combination", factors=[st.factors],
                          family=family)[st.name]
    U0, dl0, fe0 = _to_original(st, U, dl, fe)
    first = _linear_result(st, family)
    fe0[:, :, 0] = chord_shears(fe0[:, :, 0], first.members.end_forces, st.model0.L)
    res = case_results(st.model0, st.loads0, U0, dl0, fe0, Rs,
                       kind="combination", factors=[st.factors], family=family)[st.name]
    storeys = sway_amplification(frame, first, res, levels)
    return SecondOrderResult(res, first, alpha, it, storeys, alpha >= ALPHA_CR_LIMIT, detail=detail)


def _iterate(st: _Setup, U: np.ndarray, N: np.ndarray, tol: float, max_iterations: int):
    """The P-Delta iteration from the first-order state (U, N): (U, dl, fe,
    Kg, iterations) at convergence."""
    model = st.model
    if int(max_iterations) < 1:
        raise ValueError("max_iterations must be at least 1")
    for it in range(1, int(max_iterations) + 1):
        kg = _kg_local(st, N)
        Kg = assemble(model, kg)
        fact = factorise(model, Kg, on_singular=lambda d, w: _buckled(st, d, w))
        U_new = displacements(model, fact, st.loads, Kg)
        dl, fe = member_end_forces(model, U_new, st.loads.f0, model.k_loc + kg)
        N_new = axial_ends(fe[:, :, 0])
        du = np.max(np.abs(U_new - U)) <= tol * max(np.max(np.abs(U_new)), 1e-300)
        dn = np.max(np.abs(N_new - N)) <= tol * max(np.max(np.abs(N_new)), 1e-300) if len(N) else True
        U, N = U_new, N_new
        if du and dn:
            return U, dl, fe, Kg, it
    raise ConvergenceError(f"combination {st.name}: the P-Delta iteration did not converge in "
                           f"{max_iterations} iterations (tolerance {tol:g})", combination=st.name)


def _linear_result(st: _Setup, family: str) -> CaseResult:
    """First-order result of the combination on the drawn frame."""
    model0 = st.model0
    fact = factorise(model0)
    U = displacements(model0, fact, st.loads0)
    dl, fe = member_end_forces(model0, U, st.loads0.f0)
    Rs = support_reactions(model0, U, st.loads0.F)
    return case_results(model0, st.loads0, U, dl, fe, Rs, kind="combination", factors=[st.factors],
                        family=family)[st.name]


def second_order_many(frame: Frame, combinations, *, family: str = "", subdivisions: int = 4,
                      tol: float = 1e-8, max_iterations: int = 50,
                      levels: Sequence[float] | None = None) -> dict[str, SecondOrderResult]:
    """:func:`second_order` of several combinations of one frame (each its
    own analysis), ``{name: SecondOrderResult}`` in the given order; the
    frame is refined, checked and its load cases turned into load vectors
    once.  ``combinations`` as in :func:`critical_load_factors`.  The first
    combination that buckles raises :class:`BucklingError` naming it."""
    prep = _prepare(frame, subdivisions)
    return {n: _p_delta(frame, _setup(frame, f, n, subdivisions, prep), family, tol, max_iterations, levels)
            for n, f in _combos(combinations)}
