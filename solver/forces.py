"""Exact internal forces and deflections along members.

A member's internal forces follow from its end forces and the loads on its
span by equilibrium of the free body to the left of a cut at x (local x
from the member start, local y turned 90 degrees counter-clockwise):

* ``N(x) = -Ni - sum(axial loads on [0, x])``                  (tension +)
* ``V(x) =  Vi + sum(transverse loads on [0, x])``   (clockwise shear +)
* ``M(x) = -Mi + Vi*x + sum(P*(x - a)) - sum(couples on [0, x])``
  (positive when the member bends concave toward local +y)

where ``[Ni, Vi, Mi, Nj, Vj, Mj]`` are the forces the nodes exert on the
member in local axes (moments counter-clockwise).  Between load break
points N and V are polynomials of degree <= 2 and M of degree <= 3 (loads
vary at most linearly), so everything here is exact: the member is cut into
*pieces* at every load break point, each piece holds its polynomial
coefficients, and extremes come from the piece ends and the analytic roots
of the derivative.  Deflections integrate ``EI v'' = M`` and ``EA u' = N``
piece by piece with the end displacements as boundary values: v is a
quintic and u a cubic on each piece, again exact.

The work is vectorised over many members at once (:class:`MemberResults`
holds all members of one load case or combination as arrays); a single
:class:`MemberResult` uses the same code with one member.

Units: whatever the frame uses (N, m, N*m, N/m in the DXF pipeline).
"""
from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from math import comb

import numpy as np

__all__ = [
    "LoadSet",
    "MemberLayout",
    "MemberResult",
    "MemberResults",
    "DeflectionCheck",
    "real_roots_unit",
]

_POS_TOL = 1e-9  # relative tolerance on positions along a member (x / L)


# --------------------------------------------------------------------------
# loads in member axes


def _arr(a, cols: int) -> np.ndarray:
    out = np.asarray(a, dtype=float)
    if out.size == 0:
        return np.zeros((0, cols))
    return out.reshape(-1, cols)


def _idx(a, n: int) -> np.ndarray:
    out = np.asarray(a, dtype=np.intp).ravel()
    if out.size != n:
        raise ValueError("member index array does not match the load array")
    return out


@dataclass(frozen=True, eq=False)
class LoadSet:
    """Member-load primitives of one or many members, in local member axes.

    Components are along the member's local x (axial) and y (transverse,
    90 degrees counter-clockwise from x); distributed intensities are per
    unit *member* length.  Positions ``a``, ``b`` are distances from the
    member start.

    Attributes
    ----------
    points : (k, 3) rows ``a, px, py`` -- concentrated forces [force]
    couples : (k, 2) rows ``a, m`` -- concentrated couples, CCW [force*length]
    distributed : (k, 6) rows ``a, b, qx1, qy1, qx2, qy2`` -- intensity
        (qx1, qy1) at ``a`` varying linearly to (qx2, qy2) at ``b`` [force/length]
    point_member, couple_member, dist_member : (k,) member index of each row
        (all zero for the loads of a single member)
    """

    points: np.ndarray
    couples: np.ndarray
    distributed: np.ndarray
    point_member: np.ndarray
    couple_member: np.ndarray
    dist_member: np.ndarray

    @classmethod
    def build(cls, points=(), couples=(), distributed=(), point_member=None, couple_member=None,
              dist_member=None) -> "LoadSet":
        """Build from array-likes; missing member indices default to 0."""
        p, c, d = _arr(points, 3), _arr(couples, 2), _arr(distributed, 6)
        pm = np.zeros(len(p), np.intp) if point_member is None else _idx(point_member, len(p))
        cm = np.zeros(len(c), np.intp) if couple_member is None else _idx(couple_member, len(c))
        dm = np.zeros(len(d), np.intp) if dist_member is None else _idx(dist_member, len(d))
        return cls(p, c, d, pm, cm, dm)

    @classmethod
    def empty(cls) -> "LoadSet":
        return cls.build()

    def __len__(self) -> int:
        return len(self.points) + len(self.couples) + len(self.distributed)

    def scaled(self, f: float) -> "LoadSet":
        """Every force multiplied by ``f`` (positions unchanged)."""
        p = self.points.copy()
        p[:, 1:] *= f
        c = self.couples.copy()
        c[:, 1] *= f
        d = self.distributed.copy()
        d[:, 2:] *= f
        return LoadSet(p, c, d, self.point_member, self.couple_member, self.dist_member)

    def __add__(self, other: "LoadSet") -> "LoadSet":
        """Both sets of loads together (superposition)."""
        if not isinstance(other, LoadSet):
            return NotImplemented
        return LoadSet(
            np.concatenate([self.points, other.points]),
            np.concatenate([self.couples, other.couples]),
            np.concatenate([self.distributed, other.distributed]),
            np.concatenate([self.point_member, other.point_member]),
            np.concatenate([self.couple_member, other.couple_member]),
            np.concatenate([self.dist_member, other.dist_member]),
        )

    @cached_property
    def _groups(self) -> tuple:
        out = []
        for rows, mem in ((self.points, self.point_member), (self.couples, self.couple_member),
                          (self.distributed, self.dist_member)):
            order = np.argsort(mem, kind="stable")
            out.append((rows[order], mem[order]))
        return tuple(out)

    def of_member(self, j: int) -> "LoadSet":
        """The loads of member ``j``, re-indexed as member 0."""
        parts = []
        for rows, mem in self._groups:
            lo, hi = np.searchsorted(mem, [j, j + 1])
            parts.append(rows[lo:hi])
        return LoadSet.build(*parts)


# --------------------------------------------------------------------------
# geometry and stiffness of many members


@dataclass(frozen=True, eq=False)
class MemberLayout:
    """Geometry and stiffness of the members of one frame (shared by every
    result of that frame).

    Attributes
    ----------
    ids : member ids in frame order
    length, cos, sin : (m,) length and direction of local x
    EA, EI : (m,) axial [force] and bending [force*length**2] stiffness, or
        None when the frame was solved without sections (no deflections)
    """

    ids: tuple[str, ...]
    length: np.ndarray
    cos: np.ndarray
    sin: np.ndarray
    EA: np.ndarray | None = None
    EI: np.ndarray | None = None

    @cached_property
    def index(self) -> dict[str, int]:
        return {mid: i for i, mid in enumerate(self.ids)}

    def __len__(self) -> int:
        return len(self.ids)


# --------------------------------------------------------------------------
# polynomial helpers


def _polyval(coef: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Evaluate ascending coefficients row-wise: coef (P, d+1), t (P,)."""
    out = coef[:, -1].copy()
    for k in range(coef.shape[1] - 2, -1, -1):
        out = out * t + coef[:, k]
    return out


def _polyder(coef: np.ndarray) -> np.ndarray:
    d = coef.shape[1] - 1
    if d == 0:
        return np.zeros((coef.shape[0], 1))
    return coef[:, 1:] * np.arange(1, d + 1)


def _polymul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    out = np.zeros((a.shape[0], a.shape[1] + b.shape[1] - 1))
    for i in range(a.shape[1]):
        out[:, i:i + b.shape[1]] += a[:, i:i + 1] * b
    return out


def _to_unit(coef: np.ndarray, h: np.ndarray) -> np.ndarray:
    """Coefficients in t in [0, h] -> coefficients in s = t/h in [0, 1]."""
    return coef * h[:, None] ** np.arange(coef.shape[1])


@lru_cache(maxsize=None)
def _bernstein_matrix(n: int) -> np.ndarray:
    """B such that ascending power coefficients ``a`` (degree n) on [0, 1]
    give the Bernstein coefficients ``a @ B``."""
    B = np.zeros((n + 1, n + 1))
    for i in range(n + 1):
        for k in range(i + 1):
            B[k, i] = comb(i, k) / comb(n, k)
    return B


def _split_half(b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """de Casteljau subdivision at 1/2 of Bernstein coefficients (W, n)."""
    n = b.shape[1]
    left = np.empty_like(b)
    right = np.empty_like(b)
    cur = b
    left[:, 0], right[:, -1] = cur[:, 0], cur[:, -1]
    for j in range(1, n):
        cur = 0.5 * (cur[:, :-1] + cur[:, 1:])
        left[:, j], right[:, n - 1 - j] = cur[:, 0], cur[:, -1]
    return left, right


def _sign_changes(b: np.ndarray, tol: np.ndarray) -> np.ndarray:
    s = np.sign(b)
    s[np.abs(b) <= tol[:, None]] = 0.0
    n = b.shape[1]
    idx = np.where(s != 0, np.arange(n), 0)
    np.maximum.accumulate(idx, axis=1, out=idx)
    filled = np.take_along_axis(s, idx, axis=1)
    return np.count_nonzero(filled[:, 1:] * filled[:, :-1] < 0, axis=1)


def real_roots_unit(coef: np.ndarray, rows: np.ndarray | None = None,
                    ref: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Real roots in [0, 1] of many polynomials at once.

    Parameters
    ----------
    coef : (P, d+1) ascending coefficients of polynomials in s
    rows : optional (P,) labels returned with each root (default 0..P-1)
    ref : optional (P,) magnitude below which a coefficient counts as zero
        after scaling by 1e-13 (default: each polynomial's own largest
        coefficient); a polynomial entirely below it has no roots reported

    Returns
    -------
    (labels, s) : one entry per root in [0, 1].  Roots are isolated with
    the variation-diminishing property of the Bernstein form (the number
    of sign changes of the Bernstein coefficients bounds the number of
    roots on the interval and has its parity; intervals with one change
    hold exactly one root) by repeated halving, then located by
    safeguarded Newton iteration inside their bracket.  A multiple root is
    reported at the centre of an interval narrower than 2**-44.
    """
    coef = np.asarray(coef, dtype=float)
    P, n = coef.shape
    rows = np.arange(P) if rows is None else np.asarray(rows)
    if P == 0:
        return rows[:0], np.zeros(0)
    own = np.abs(coef).max(axis=1)
    scale = own if ref is None else np.maximum(np.asarray(ref, dtype=float), 0.0)
    live = np.flatnonzero((own > 1e-13 * scale) & (own > 0))
    if n == 1 or len(live) == 0:
        return rows[:0], np.zeros(0)
    c = coef[live] / own[live, None]
    tol_row = np.full(len(live), 1e-14) * np.maximum(scale[live] / own[live], 1.0)
    found_w, found_s = [], []
    # deflate roots at the ends (a member end at a support is a common
    # one): divide by s or by (1 - s) while the end value is negligible
    d = c.copy()
    for _ in range(n - 1):
        z0 = np.abs(d[:, 0]) <= tol_row
        z1 = np.abs(d.sum(axis=1)) <= tol_row * np.abs(d).sum(axis=1) + 1e-300
        z0 &= np.abs(d).max(axis=1) > tol_row
        z1 &= np.abs(d).max(axis=1) > tol_row
        if not (z0.any() or z1.any()):
            break
        found_w += [np.flatnonzero(z0), np.flatnonzero(z1 & ~z0)]
        found_s += [np.zeros(int(z0.sum())), np.ones(int((z1 & ~z0).sum()))]
        if z0.any():
            d[z0, :-1] = d[z0, 1:]
            d[z0, -1] = 0.0
        z1 &= ~z0
        if z1.any():  # synthetic division by (s - 1), remainder dropped
            q = np.zeros_like(d[z1])
            acc = np.zeros(int(z1.sum()))
            for k in range(n - 1, 0, -1):
                acc = acc + d[z1, k]
                q[:, k - 1] = acc
            d[z1] = q
    B = d @ _bernstein_matrix(n - 1)
    B /= np.maximum(np.abs(B).max(axis=1), 1e-300)[:, None]
    who = np.arange(len(live))
    lo = np.zeros(len(live))
    width = 1.0
    iso_w, iso_lo, iso_w_len, iso_b0 = [], [], [], []
    for depth in range(46):
        if len(who) == 0:
            break
        tol = tol_row[who]
        z0 = np.abs(B[:, 0]) <= tol
        z1 = np.abs(B[:, -1]) <= tol
        found_w += [who[z0], who[z1]]
        found_s += [lo[z0], lo[z1] + width]
        var = _sign_changes(B, tol)
        # a clean bracket: one sign change and both end values clearly
        # non-zero (an end root is recorded above; halving moves the
        # interior root away from it)
        one = (var == 1) & ~z0 & ~z1
        if one.any():
            iso_w.append(who[one])
            iso_lo.append(lo[one])
            iso_w_len.append(np.full(int(one.sum()), width))
            iso_b0.append(B[one, 0])
        many = (var >= 1) & ~one
        if depth == 45:
            found_w.append(who[many])
            found_s.append(lo[many] + 0.5 * width)
            break
        if not many.any():
            break
        Bl, Br = _split_half(B[many])
        width *= 0.5
        who = np.concatenate([who[many], who[many]])
        lo = np.concatenate([lo[many], lo[many] + width])
        B = np.concatenate([Bl, Br])
        # a root exactly at the common midpoint is found by both halves'
        # end tests; duplicates are harmless to callers
    if iso_w:
        w = np.concatenate(iso_w)
        a = np.concatenate(iso_lo)
        b = a + np.concatenate(iso_w_len)
        sa = np.sign(np.concatenate(iso_b0))
        cw = d[w]
        dw = _polyder(cw)
        # start from the secant of the bracket (false position), not its
        # middle: Newton is then usually in its quadratic range at once
        fa, fb = _polyval(cw, a), _polyval(cw, b)
        with np.errstate(divide="ignore", invalid="ignore"):
            x = a + (b - a) * fa / (fa - fb)
        x = np.where(np.isfinite(x) & (x > a) & (x < b), x, 0.5 * (a + b))
        act = np.arange(len(w))
        for _ in range(80):
            cx = cw[act]
            fx = _polyval(cx, x[act])
            fp = _polyval(dw[act], x[act])
            same = np.sign(fx) == sa[act]
            a[act] = np.where(same, x[act], a[act])
            b[act] = np.where(same, b[act], x[act])
            with np.errstate(divide="ignore", invalid="ignore"):
                xn = x[act] - fx / fp
            ok = np.isfinite(xn) & (xn > a[act]) & (xn < b[act])
            xnew = np.where(ok, xn, 0.5 * (a[act] + b[act]))
            # converged: a Newton step this small leaves an error of its
            # square; or f is down to the rounding noise of evaluating it
            # (Horner with |coefficients|), where further steps only wander
            noise = np.abs(fx) <= 8e-16 * _polyval(np.abs(cx), x[act])
            done = (np.abs(xnew - x[act]) <= 1e-14) | noise | (b[act] - a[act] <= 4e-16)
            x[act] = np.where(noise, x[act], xnew)
            act = act[~done]
            if len(act) == 0:
                break
        found_w.append(w)
        found_s.append(x)
    wa = np.concatenate(found_w) if found_w else np.zeros(0, np.intp)
    sa_ = np.concatenate(found_s) if found_s else np.zeros(0)
    return rows[live[wa]], np.clip(sa_, 0.0, 1.0)


# --------------------------------------------------------------------------
# piecewise representation of many members


@dataclass(frozen=True, eq=False)
class _Pieces:
    """Members cut at every load break point; polynomial data per piece.

    Per piece p (pieces of a member are contiguous, in increasing x):
    ``mem, x0, h`` and the values just right of x0 ``N0, V0, M0``, the load
    intensity at x0 and its slope ``qx0, gx, qy0, gy`` (local, per length),
    and with stiffness ``u0, v0, th0`` (local displacements and slope at x0),
    ``EA, EI`` of the piece's member.
    Per member j: ``start[j]``, ``count[j]`` (pieces), ``left0[j]`` = (N, V, M)
    just left of x = 0 and ``rightL[j]`` = (N, V, M) just right of x = L.
    """

    mem: np.ndarray
    x0: np.ndarray
    h: np.ndarray
    N0: np.ndarray
    V0: np.ndarray
    M0: np.ndarray
    qx0: np.ndarray
    gx: np.ndarray
    qy0: np.ndarray
    gy: np.ndarray
    start: np.ndarray
    count: np.ndarray
    length: np.ndarray
    left0: np.ndarray
    rightL: np.ndarray
    u0: np.ndarray | None = None
    v0: np.ndarray | None = None
    th0: np.ndarray | None = None
    EA: np.ndarray | None = None
    EI: np.ndarray | None = None
    _cache: dict = field(default_factory=dict, repr=False)

    def coef(self, which: str) -> np.ndarray:
        """Polynomial coefficients in t = x - x0 (ascending powers) of
        "N", "V", "M", "u", "v" or "th" on every piece (cached)."""
        hit = self._cache.get(which)
        if hit is None:
            hit = self._cache[which] = self._coef(which)
        return hit

    def _coef(self, which: str) -> np.ndarray:
        if which == "N":
            return np.column_stack([self.N0, -self.qx0, -0.5 * self.gx])
        if which == "V":
            return np.column_stack([self.V0, self.qy0, 0.5 * self.gy])
        if which == "M":
            return np.column_stack([self.M0, self.V0, 0.5 * self.qy0, self.gy / 6.0])
        if self.EI is None:
            raise ValueError("no stiffness: deflections are not available")
        ea, ei = self.EA, self.EI
        if which == "u":
            return np.column_stack([self.u0, self.N0 / ea, -0.5 * self.qx0 / ea, -self.gx / (6.0 * ea)])
        if which == "v":
            return np.column_stack([self.v0, self.th0, 0.5 * self.M0 / ei, self.V0 / (6.0 * ei),
                                    self.qy0 / (24.0 * ei), self.gy / (120.0 * ei)])
        if which == "th":
            return np.column_stack([self.th0, self.M0 / ei, 0.5 * self.V0 / ei, self.qy0 / (6.0 * ei),
                                    self.gy / (24.0 * ei)])
        raise KeyError(which)

    def values(self, which: str, t: np.ndarray, pieces: np.ndarray | None = None) -> np.ndarray:
        c = self.coef(which)
        if pieces is not None:
            c = c[pieces]
        return _polyval(c, t)

    def member(self, j: int) -> "_Pieces":
        """The pieces of member ``j`` alone, as a one-member table (views of
        this one's arrays: a member of a big result evaluates without
        rebuilding its pieces)."""
        s, c = int(self.start[j]), int(self.count[j])
        sl = slice(s, s + c)

        def cut(a):
            return None if a is None else a[sl]

        return _Pieces(
            mem=np.zeros(c, np.intp), x0=self.x0[sl], h=self.h[sl], N0=self.N0[sl], V0=self.V0[sl],
            M0=self.M0[sl], qx0=self.qx0[sl], gx=self.gx[sl], qy0=self.qy0[sl], gy=self.gy[sl],
            start=np.zeros(1, np.intp), count=self.count[j:j + 1], length=self.length[j:j + 1],
            left0=self.left0[j:j + 1], rightL=self.rightL[j:j + 1], u0=cut(self.u0), v0=cut(self.v0),
            th0=cut(self.th0), EA=cut(self.EA), EI=cut(self.EI),
        )


def _build_pieces(
    length: np.ndarray,
    end_forces: np.ndarray,
    loads: LoadSet,
    end_disp: np.ndarray | None = None,
    EA: np.ndarray | None = None,
    EI: np.ndarray | None = None,
) -> _Pieces:
    """Cut every member at its load break points and integrate piecewise.

    ``length`` (m,), ``end_forces`` (m, 6), ``end_disp`` (m, 4) local
    ``u_i, v_i, u_j, v_j`` (with ``EA``, ``EI``) or None.
    """
    L = np.asarray(length, dtype=float)
    m = len(L)
    ef = np.asarray(end_forces, dtype=float).reshape(m, 6)
    P_, C_, D_ = loads.points, loads.couples, loads.distributed
    pm, cm, dm = loads.point_member, loads.couple_member, loads.dist_member
    ar = np.arange(m)

    # break points: member ends and every load position, sorted per member
    e_mem = np.concatenate([ar, ar, pm, cm, dm, dm])
    e_x = np.concatenate([np.zeros(m), L, P_[:, 0], C_[:, 0], D_[:, 0], D_[:, 1]])
    order = np.lexsort((e_x, e_mem))
    sm, sx = e_mem[order], e_x[order]
    new = np.ones(len(sm), bool)
    new[1:] = (sm[1:] != sm[:-1]) | (sx[1:] != sx[:-1])
    bp_of_sorted = np.cumsum(new) - 1
    bp_of_entry = np.empty(len(order), np.intp)
    bp_of_entry[order] = bp_of_sorted
    bp_mem, bp_x = sm[new], sx[new]
    nbp = len(bp_mem)
    bp_start = np.searchsorted(bp_mem, ar)
    bp_count = np.diff(np.append(bp_start, nbp))
    k0 = 2 * m
    bp_p = bp_of_entry[k0:k0 + len(P_)]
    k0 += len(P_)
    bp_c = bp_of_entry[k0:k0 + len(C_)]
    k0 += len(C_)
    bp_da = bp_of_entry[k0:k0 + len(D_)]
    bp_db = bp_of_entry[k0 + len(D_):]
    last_bp = bp_start + bp_count - 1

    # pieces: every break point except the last of each member
    is_piece = np.ones(nbp, bool)
    is_piece[last_bp] = False
    piece_bp = np.flatnonzero(is_piece)
    npc = len(piece_bp)
    mem = bp_mem[piece_bp]
    x0 = bp_x[piece_bp]
    h = bp_x[piece_bp + 1] - x0
    start = bp_start - ar  # piece id = bp id - member index
    count = bp_count - 1

    # concentrated jumps at break points (left free body: N -= px, V += py, M -= c)
    jN = np.bincount(bp_p, weights=-P_[:, 1], minlength=nbp)
    jV = np.bincount(bp_p, weights=P_[:, 2], minlength=nbp)
    jM = np.bincount(bp_c, weights=-C_[:, 1], minlength=nbp)

    # distributed loads spread over the pieces they cover
    qx0 = np.zeros(npc)
    gx = np.zeros(npc)
    qy0 = np.zeros(npc)
    gy = np.zeros(npc)
    if len(D_):
        ncov = bp_db - bp_da
        total = int(ncov.sum())
        if total:
            d_of = np.repeat(np.arange(len(D_)), ncov)
            first_piece = bp_da - dm
            within = np.arange(total) - np.repeat(np.cumsum(ncov) - ncov, ncov)
            pc = first_piece[d_of] + within
            a, b = D_[d_of, 0], D_[d_of, 1]
            span = b - a
            gxd = (D_[d_of, 4] - D_[d_of, 2]) / span
            gyd = (D_[d_of, 5] - D_[d_of, 3]) / span
            qxa = D_[d_of, 2] + gxd * (x0[pc] - a)
            qya = D_[d_of, 3] + gyd * (x0[pc] - a)
            qx0 = np.bincount(pc, weights=qxa, minlength=npc)
            gx = np.bincount(pc, weights=gxd, minlength=npc)
            qy0 = np.bincount(pc, weights=qya, minlength=npc)
            gy = np.bincount(pc, weights=gyd, minlength=npc)

    with_defl = end_disp is not None and EI is not None and EA is not None
    N0 = np.zeros(npc)
    V0 = np.zeros(npc)
    M0 = np.zeros(npc)
    if with_defl:
        eai = np.asarray(EA, float)[mem]
        eii = np.asarray(EI, float)[mem]
        up0 = np.zeros(npc)
        vp0 = np.zeros(npc)
        tp0 = np.zeros(npc)
    # march along each member piece by piece (vectorised over members)
    by_count = np.argsort(-count, kind="stable")
    sorted_count = count[by_count]
    for k in range(int(count.max()) if m else 0):
        js = by_count[: int(np.searchsorted(-sorted_count, -k, side="left"))]
        p = start[js] + k
        b = piece_bp[p]
        if k == 0:
            N0[p] = -ef[js, 0] + jN[b]
            V0[p] = ef[js, 1] + jV[b]
            M0[p] = -ef[js, 2] + jM[b]
        else:
            q = p - 1
            hq = h[q]
            N0[p] = N0[q] - qx0[q] * hq - 0.5 * gx[q] * hq**2 + jN[b]
            V0[p] = V0[q] + qy0[q] * hq + 0.5 * gy[q] * hq**2 + jV[b]
            M0[p] = M0[q] + V0[q] * hq + 0.5 * qy0[q] * hq**2 + gy[q] * hq**3 / 6.0 + jM[b]
            if with_defl:
                ei, ea = eii[q], eai[q]
                up0[p] = up0[q] + (N0[q] * hq - 0.5 * qx0[q] * hq**2 - gx[q] * hq**3 / 6.0) / ea
                vp0[p] = vp0[q] + tp0[q] * hq + (0.5 * M0[q] * hq**2 + V0[q] * hq**3 / 6.0
                                                 + qy0[q] * hq**4 / 24.0 + gy[q] * hq**5 / 120.0) / ei
                tp0[p] = tp0[q] + (M0[q] * hq + 0.5 * V0[q] * hq**2 + qy0[q] * hq**3 / 6.0
                                   + gy[q] * hq**4 / 24.0) / ei

    # values at the member ends
    lastp = start + count - 1
    hl = h[lastp]
    NL = N0[lastp] - qx0[lastp] * hl - 0.5 * gx[lastp] * hl**2
    VL = V0[lastp] + qy0[lastp] * hl + 0.5 * gy[lastp] * hl**2
    ML = M0[lastp] + V0[lastp] * hl + 0.5 * qy0[lastp] * hl**2 + gy[lastp] * hl**3 / 6.0
    rightL = np.column_stack([NL + jN[last_bp], VL + jV[last_bp], ML + jM[last_bp]])
    left0 = np.column_stack([-ef[:, 0], ef[:, 1], -ef[:, 2]])

    u0 = v0 = th0 = None
    ea_p = ei_p = None
    if with_defl:
        d = np.asarray(end_disp, dtype=float).reshape(m, 4)
        ei_l = eii[lastp]
        # v = v_i + th_i x + (particular part with zero value and slope at
        # x = 0); th_i follows from v(L) = v_j
        vpL = vp0[lastp] + tp0[lastp] * hl + (0.5 * M0[lastp] * hl**2 + V0[lastp] * hl**3 / 6.0
                                              + qy0[lastp] * hl**4 / 24.0 + gy[lastp] * hl**5 / 120.0) / ei_l
        th_i = (d[:, 3] - d[:, 1] - vpL) / L
        u0 = d[mem, 0] + up0
        v0 = d[mem, 1] + th_i[mem] * x0 + vp0
        th0 = th_i[mem] + tp0
        ea_p, ei_p = eai, eii
    return _Pieces(mem, x0, h, N0, V0, M0, qx0, gx, qy0, gy, start, count, L, left0, rightL,
                   u0, v0, th0, ea_p, ei_p)


class _Grouped:
    """Candidate points of many members sorted by (member, x) once, so that
    per-member extremes are cheap reductions."""

    def __init__(self, mem: np.ndarray, x: np.ndarray, m: int) -> None:
        order = np.lexsort((x, mem))
        self.order = order
        self.mem = mem[order]
        self.x = x[order]
        self.m = m
        self.starts = np.searchsorted(self.mem, np.arange(m))
        if m and np.any(np.diff(np.append(self.starts, len(self.mem))) == 0):
            raise ValueError("a member without candidate points")

    def pick(self, val: np.ndarray, largest: bool) -> tuple[np.ndarray, np.ndarray]:
        """Per member: largest (or smallest) value and its position (the
        smallest x among exact ties)."""
        v = val[self.order]
        red = np.maximum if largest else np.minimum
        best = red.reduceat(v, self.starts)
        hit = np.flatnonzero(v == best[self.mem])
        first = hit[np.searchsorted(self.mem[hit], np.arange(self.m))]
        return best, self.x[first]


def _member_ref(pc: _Pieces, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Per piece: the largest |value| over its member's piece ends."""
    ref = np.zeros(len(pc.length))
    np.maximum.at(ref, pc.mem, np.maximum(np.abs(a), np.abs(b)))
    return ref[pc.mem]


def _force_candidates(pc: _Pieces) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(member, x, N, V, M) at every point where an extreme of N, V or M can
    sit: both sides of every break point, roots of V, vertices of N and V."""
    m = len(pc.length)
    ar = np.arange(m)
    npc = len(pc.mem)
    allp = np.arange(npc)
    mems = [ar, ar, pc.mem, pc.mem]
    xs = [np.zeros(m), pc.length, pc.x0, pc.x0 + pc.h]
    Ne, Ve, Me = pc.values("N", pc.h), pc.values("V", pc.h), pc.values("M", pc.h)
    N = [pc.left0[:, 0], pc.rightL[:, 0], pc.N0, Ne]
    V = [pc.left0[:, 1], pc.rightL[:, 1], pc.V0, Ve]
    M = [pc.left0[:, 2], pc.rightL[:, 2], pc.M0, Me]
    # interior candidates (t within the piece)
    cand_p, cand_t = [], []
    rp, rs = real_roots_unit(_to_unit(pc.coef("V"), pc.h), ref=_member_ref(pc, pc.V0, Ve))
    cand_p.append(rp)
    cand_t.append(rs * pc.h[rp])
    for q, g in ((pc.qy0, pc.gy), (pc.qx0, pc.gx)):
        nz = g != 0
        t = np.zeros(npc)
        t[nz] = -q[nz] / g[nz]
        ok = nz & (t > 0) & (t < pc.h)
        cand_p.append(allp[ok])
        cand_t.append(t[ok])
    cp = np.concatenate(cand_p)
    ct = np.concatenate(cand_t)
    mems.append(pc.mem[cp])
    xs.append(pc.x0[cp] + ct)
    N.append(pc.values("N", ct, cp))
    V.append(pc.values("V", ct, cp))
    M.append(pc.values("M", ct, cp))
    return (np.concatenate(mems), np.concatenate(xs), np.concatenate(N), np.concatenate(V), np.concatenate(M))


def _extremes_batch(pc: _Pieces) -> dict[str, np.ndarray]:
    """Per member: n/v/m _max/_min and their positions (arrays)."""
    mem, x, N, V, M = _force_candidates(pc)
    g = _Grouped(mem, x, len(pc.length))
    out: dict[str, np.ndarray] = {}
    for key, val in (("n", N), ("v", V), ("m", M)):
        out[f"{key}_max"], out[f"{key}_max_at"] = g.pick(val, True)
        out[f"{key}_min"], out[f"{key}_min_at"] = g.pick(val, False)
    return out


def _max_abs_batch(pc: _Pieces, parts: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Per member: max over x of sqrt(sum(part(x)**2)) and its position,
    where each part is given by (P, d+1) ascending coefficients in s = t/h.
    Exact: the piece ends and the real roots of the derivative of the sum
    of squares (of the part itself when there is one part: |p| peaks where
    p' = 0, a polynomial of half the degree); pieces whose Bernstein bound
    cannot beat the best end value of their member are skipped."""
    m = len(pc.length)
    n = max(a.shape[1] for a in parts)
    padded = [np.pad(a, ((0, 0), (0, n - a.shape[1]))) for a in parts]
    single = len(parts) == 1
    f = padded[0] if single else sum(_polymul(a, a) for a in padded)
    f0 = f[:, 0]
    f1 = f.sum(axis=1)
    mem = np.concatenate([pc.mem, pc.mem])
    xs = np.concatenate([pc.x0, pc.x0 + pc.h])
    ends = np.concatenate([f0, f1])
    fv = ends * ends if single else np.maximum(ends, 0.0)        # squared magnitude at the piece ends
    best_end = np.zeros(m)
    np.maximum.at(best_end, mem, fv)
    bern = f @ _bernstein_matrix(f.shape[1] - 1)
    bound = (bern * bern).max(axis=1) if single else bern.max(axis=1)
    live = np.flatnonzero(bound > best_end[pc.mem] * (1.0 + 1e-12))
    if len(live):
        df = _polyder(f[live])
        ref = np.zeros(m)
        np.maximum.at(ref, pc.mem[live], np.abs(df).max(axis=1))
        rp, rs = real_roots_unit(df, live, ref=ref[pc.mem[live]])
        vals = [_polyval(a[rp], rs) for a in parts]
        fr = sum(v * v for v in vals)
        mem = np.concatenate([mem, pc.mem[rp]])
        xs = np.concatenate([xs, pc.x0[rp] + rs * pc.h[rp]])
        fv = np.concatenate([fv, fr])
    val, at = _Grouped(mem, xs, m).pick(fv, True)
    return np.sqrt(val), at


def _displacement_parts(pc: _Pieces) -> list[np.ndarray]:
    return [_to_unit(pc.coef("u"), pc.h), _to_unit(pc.coef("v"), pc.h)]


# --------------------------------------------------------------------------
# one member


@dataclass(frozen=True)
class DeflectionCheck:
    """Largest deflection of a member against span / limit.

    ``value`` [length] and position ``at``; ``allowed`` = length / limit;
    ``ratio`` = length / value (inf when value is 0); ``ok`` = value <= allowed.
    """

    value: float
    at: float
    allowed: float
    ratio: float
    limit: float
    ok: bool


_EXTREME_KEYS = ("n_max", "n_max_at", "n_min", "n_min_at", "v_max", "v_max_at", "v_min", "v_min_at",
                 "m_max", "m_max_at", "m_min", "m_min_at")


def _as_out(x, arr: np.ndarray):
    return float(arr[0]) if np.ndim(x) == 0 else arr


@dataclass(eq=False)
class MemberResult:
    """Internal forces and deflection of one member for one load case or
    combination, exact along the member.

    Parameters
    ----------
    length, cos, sin : member length and direction of local x (global)
    end_forces : (6,) forces by the nodes on the member, local axes,
        ``[Ni, Vi, Mi, Nj, Vj, Mj]`` (moments counter-clockwise)
    loads : :class:`LoadSet` of the member loads in local axes
    end_displacements : (4,) local ``u_i, v_i, u_j, v_j`` or None (no sections)
    EA, EI : axial and bending stiffness, or None
    id : member id (informative)

    Sign convention: N tension positive; V positive when it turns the
    element clockwise; M positive when it bends the member concave toward
    local +y.  Positions x run from the member start, 0 <= x <= length.

    Examples
    --------
    A 6 m simple span under 10 (force/length) downward, held up by 30 at
    each end:

    >>> from solver.forces import LoadSet, MemberResult
    >>> q = LoadSet.build(distributed=[(0.0, 6.0, 0.0, -10.0, 0.0, -10.0)])
    >>> mr = MemberResult(6.0, 1.0, 0.0, [0, 30, 0, 0, 30, 0], q)
    >>> mr.moment(3.0), mr.shear(6.0, side="left")
    (45.0, -30.0)
    >>> mr.extremes()["m_max"], mr.extremes()["m_max_at"]
    (45.0, 3.0)
    """

    length: float
    cos: float
    sin: float
    end_forces: np.ndarray
    loads: LoadSet = field(default_factory=LoadSet.empty)
    end_displacements: np.ndarray | None = None
    EA: float | None = None
    EI: float | None = None
    id: str = ""

    def __post_init__(self) -> None:
        self.length = float(self.length)
        if not (self.length > 0 and np.isfinite(self.length)):
            raise ValueError(f"member length must be positive, got {self.length!r}")
        self.end_forces = np.asarray(self.end_forces, dtype=float).reshape(6)
        if self.end_displacements is not None:
            self.end_displacements = np.asarray(self.end_displacements, dtype=float).reshape(4)
        ld = self.loads
        pos = np.concatenate([ld.points[:, 0], ld.couples[:, 0], ld.distributed[:, 0], ld.distributed[:, 1]])
        tol = _POS_TOL * self.length
        if pos.size and (pos.min() < -tol or pos.max() > self.length + tol):
            raise ValueError(f"a load position lies outside the member (length {self.length:g})")
        if len(ld.distributed) and np.any(ld.distributed[:, 1] <= ld.distributed[:, 0]):
            raise ValueError("a distributed load needs a < b")

    @property
    def has_deflection(self) -> bool:
        return self.end_displacements is not None and self.EA is not None and self.EI is not None

    @cached_property
    def _pieces(self) -> _Pieces:
        src = self.__dict__.get("_source")
        if src is not None:  # part of a MemberResults: share the pieces built for all members
            parent, j = src
            return parent._pieces().member(j)
        defl = self.has_deflection
        return _build_pieces(
            np.array([self.length]), self.end_forces[None, :], self.loads,
            self.end_displacements[None, :] if defl else None,
            np.array([self.EA]) if defl else None, np.array([self.EI]) if defl else None,
        )

    @cached_property
    def _breaks(self) -> np.ndarray:
        pc = self._pieces
        return np.append(pc.x0, self.length)

    def _positions(self, x) -> np.ndarray:
        xa = np.atleast_1d(np.asarray(x, dtype=float))
        tol = _POS_TOL * self.length
        if np.any(xa < -tol) or np.any(xa > self.length + tol) or not np.all(np.isfinite(xa)):
            raise ValueError(f"positions must lie in [0, {self.length:g}] along member {self.id or ''}".rstrip())
        return np.clip(xa, 0.0, self.length)

    def _force(self, which: str, x, side: str) -> np.ndarray | float:
        col = {"N": 0, "V": 1, "M": 2}[which]
        xa = self._positions(x)
        pc = self._pieces
        bps = self._breaks
        npc = len(pc.mem)
        if side == "right":
            k = np.searchsorted(bps, xa, side="right") - 1
        elif side == "left":
            k = np.searchsorted(bps, xa, side="left") - 1
        else:
            raise ValueError("side must be 'right' or 'left'")
        kk = np.clip(k, 0, npc - 1)
        out = pc.values(which, xa - pc.x0[kk], kk)
        out = np.where(k >= npc, pc.rightL[0, col], out)
        out = np.where(k < 0, pc.left0[0, col], out)
        return _as_out(x, out)

    def axial(self, x, side: str = "right"):
        """N(x) [force], tension positive.  At a jump, the value just right
        of x (``side="left"``: just left)."""
        return self._force("N", x, side)

    def shear(self, x, side: str = "right"):
        """V(x) [force], positive when it turns the element clockwise."""
        return self._force("V", x, side)

    def moment(self, x, side: str = "right"):
        """M(x) [force*length], positive concave toward local +y."""
        return self._force("M", x, side)

    def forces(self, x, side: str = "right") -> tuple:
        """(N, V, M) at x."""
        return self.axial(x, side), self.shear(x, side), self.moment(x, side)

    def deflection(self, x) -> tuple | None:
        """Local displacements (u along local x, v along local y) [length]
        at x, exact; None without sections."""
        if not self.has_deflection:
            return None
        xa = self._positions(x)
        pc = self._pieces
        k = np.clip(np.searchsorted(self._breaks, xa, side="right") - 1, 0, len(pc.mem) - 1)
        t = xa - pc.x0[k]
        return _as_out(x, pc.values("u", t, k)), _as_out(x, pc.values("v", t, k))

    def rotation(self, x):
        """Slope dv/dx of the deflected member [rad], CCW positive; None
        without sections."""
        if not self.has_deflection:
            return None
        xa = self._positions(x)
        pc = self._pieces
        k = np.clip(np.searchsorted(self._breaks, xa, side="right") - 1, 0, len(pc.mem) - 1)
        return _as_out(x, pc.values("th", xa - pc.x0[k], k))

    def global_deflection(self, x) -> tuple | None:
        """Displacements along global X, Y at x; None without sections."""
        d = self.deflection(x)
        if d is None:
            return None
        u, v = d
        return (self.cos * np.asarray(u) - self.sin * np.asarray(v),
                self.sin * np.asarray(u) + self.cos * np.asarray(v))

    @cached_property
    def _extremes(self) -> dict[str, float]:
        src = self.__dict__.get("_source")
        if src is not None:  # part of a MemberResults: one vectorised pass for all members
            parent, j = src
            tab = parent.force_table()
        else:
            tab, j = _extremes_batch(self._pieces), 0
        return {k: float(tab[k][j]) for k in _EXTREME_KEYS}

    def extremes(self) -> dict[str, float]:
        """Largest and smallest N, V, M and their positions (exact):
        keys ``n_min n_max v_min v_max m_min m_max`` and ``*_at``."""
        return dict(self._extremes)

    def critical_points(self) -> np.ndarray:
        """Sorted positions: the ends, every load break point, the zeros of
        V (extremes of M) and the zeros of M."""
        pc = self._pieces
        pts = [self._breaks]
        for which in ("V", "M"):
            c = pc.coef(which)
            ends = pc.values(which, pc.h)
            rp, rs = real_roots_unit(_to_unit(c, pc.h), ref=_member_ref(pc, c[:, 0], ends))
            pts.append(pc.x0[rp] + rs * pc.h[rp])
        x = np.sort(np.concatenate(pts))
        x = np.clip(x, 0.0, self.length)
        keep = np.concatenate(([True], np.diff(x) > _POS_TOL * self.length * 1e-3))
        return x[keep]

    def max_deflection(self) -> tuple[float, float] | None:
        """(largest |displacement| [length], its position x): the magnitude
        sqrt(u**2 + v**2) of the displacement vector, exact; None without
        sections."""
        if not self.has_deflection:
            return None
        src = self.__dict__.get("_source")
        if src is not None:
            parent, j = src
            tab = parent.deflection_table()
            return float(tab["deflection_max"][j]), float(tab["deflection_max_at"][j])
        pc = self._pieces
        val, at = _max_abs_batch(pc, _displacement_parts(pc))
        return float(val[0]), float(at[0])

    def max_relative_deflection(self) -> tuple[float, float] | None:
        """(largest |transverse deflection| from the chord joining the
        displaced ends [length], its position x); None without sections."""
        if not self.has_deflection:
            return None
        pc = self._pieces
        vi, vj = self.end_displacements[1], self.end_displacements[3]
        c = pc.coef("v").copy()
        slope = (vj - vi) / self.length
        c[:, 0] -= vi + slope * pc.x0
        c[:, 1] -= slope
        val, at = _max_abs_batch(pc, [_to_unit(c, pc.h)])
        return float(val[0]), float(at[0])

    def deflection_check(self, limit: float, relative: bool = False) -> DeflectionCheck | None:
        """Largest deflection against ``length / limit`` (e.g. limit=240);
        ``relative=True`` measures from the chord between the displaced
        ends.  None without sections."""
        r = self.max_relative_deflection() if relative else self.max_deflection()
        if r is None:
            return None
        value, at = r
        allowed = self.length / float(limit)
        ratio = self.length / value if value > 0 else float("inf")
        return DeflectionCheck(value, at, allowed, ratio, float(limit), bool(value <= allowed * (1 + 1e-12)))

    def scaled(self, f: float) -> "MemberResult":
        """This result with every force and displacement multiplied by f."""
        return MemberResult(
            self.length, self.cos, self.sin, self.end_forces * f, self.loads.scaled(f),
            None if self.end_displacements is None else self.end_displacements * f,
            self.EA, self.EI, self.id,
        )

    def __add__(self, other: "MemberResult") -> "MemberResult":
        """Superposition of two results of the same member."""
        if not isinstance(other, MemberResult):
            return NotImplemented
        if abs(other.length - self.length) > _POS_TOL * self.length:
            raise ValueError("cannot add results of members of different length")
        d = None
        if self.end_displacements is not None and other.end_displacements is not None:
            d = self.end_displacements + other.end_displacements
        return MemberResult(self.length, self.cos, self.sin, self.end_forces + other.end_forces,
                            self.loads + other.loads, d, self.EA if d is not None else None,
                            self.EI if d is not None else None, self.id)


# --------------------------------------------------------------------------
# all members of one result


class MemberResults(Mapping):
    """The :class:`MemberResult` of every member of one result, keyed by
    member id (a read-only mapping that builds each entry on first access).

    Holds the data of all members as arrays: ``end_forces`` (m, 6) local,
    ``end_displacements`` (m, 4) local ``u_i, v_i, u_j, v_j`` or None,
    ``loads`` (:class:`LoadSet` indexed by member), and the shared
    :class:`MemberLayout`.  Batch methods work on every member at once
    (vectorised, no per-member Python loop): :meth:`table` gives the
    extremes, :meth:`critical_points` the critical points and
    :meth:`sample` the values at any (member, x) pairs.
    """

    def __init__(self, layout: MemberLayout, end_forces: np.ndarray, loads: LoadSet,
                 end_displacements: np.ndarray | None = None) -> None:
        self.layout = layout
        self.end_forces = np.asarray(end_forces, dtype=float).reshape(len(layout), 6)
        self.loads = loads
        self.end_displacements = (None if end_displacements is None or layout.EI is None
                                  else np.asarray(end_displacements, dtype=float).reshape(len(layout), 4))
        self._cache: dict[str, MemberResult] = {}
        self._ftable: dict[str, np.ndarray] | None = None
        self._dtable: dict[str, np.ndarray] | None = None
        self._rtable: dict[str, np.ndarray] | None = None
        self._pc: _Pieces | None = None
        self._bx: tuple[np.ndarray, np.ndarray] | None = None
        self._crit: tuple[np.ndarray, np.ndarray] | None = None

    # Mapping protocol
    def __getitem__(self, mid: str) -> MemberResult:
        hit = self._cache.get(mid)
        if hit is not None:
            return hit
        j = self.layout.index[mid]
        lay = self.layout
        d = self.end_displacements
        mr = MemberResult(
            float(lay.length[j]), float(lay.cos[j]), float(lay.sin[j]), self.end_forces[j].copy(),
            self.loads.of_member(j), None if d is None else d[j].copy(),
            None if d is None else float(lay.EA[j]), None if d is None else float(lay.EI[j]), mid,
        )
        mr.__dict__["_source"] = (self, j)
        self._cache[mid] = mr
        return mr

    def __iter__(self) -> Iterator[str]:
        return iter(self.layout.ids)

    def __len__(self) -> int:
        return len(self.layout)

    def __contains__(self, mid: object) -> bool:
        return mid in self.layout.index

    def __repr__(self) -> str:
        return f"MemberResults({len(self)} members)"

    @property
    def has_deflection(self) -> bool:
        return self.end_displacements is not None

    def _pieces(self) -> _Pieces:
        if self._pc is None:
            lay = self.layout
            self._pc = _build_pieces(lay.length, self.end_forces, self.loads, self.end_displacements,
                                     lay.EA if self.has_deflection else None,
                                     lay.EI if self.has_deflection else None)
        return self._pc

    def release(self) -> None:
        """Drop the piecewise polynomials and the sampling caches (rebuilt
        on demand, in milliseconds); the extreme tables already computed
        are kept.  Lets a caller going through many results of a large
        frame hold one result's working data at a time."""
        self._pc = None
        self._bx = None
        self._crit = None
        self._cache.clear()

    def force_table(self) -> dict[str, np.ndarray]:
        """Extremes of N, V, M of every member (arrays in layout order),
        keys as :meth:`MemberResult.extremes`; one vectorised pass."""
        if self._ftable is None:
            pc = self._pieces()
            self._ftable = _extremes_batch(pc)
            pc._cache.clear()  # coefficient arrays are cheap to rebuild; do not hold them per result
        return self._ftable

    def deflection_table(self) -> dict[str, np.ndarray]:
        """``deflection_max`` (largest |displacement|, as
        :meth:`MemberResult.max_deflection`) and ``deflection_max_at`` of
        every member; NaN without sections."""
        if self._dtable is None:
            if self.has_deflection:
                pc = self._pieces()
                val, at = _max_abs_batch(pc, _displacement_parts(pc))
                pc._cache.clear()
            else:
                val, at = np.full(len(self), np.nan), np.full(len(self), np.nan)
            self._dtable = {"deflection_max": val, "deflection_max_at": at}
        return self._dtable

    def relative_deflection_table(self, reference: np.ndarray | None = None) -> dict[str, np.ndarray]:
        """``deflection_rel_max`` (largest |transverse deflection| [length]
        measured from a straight reference line) and ``deflection_rel_max_at``
        (its position from the member start) of every member, exact and
        vectorised; NaN without sections.

        Parameters
        ----------
        reference : (m, 2) local transverse displacements (along local y)
            of the reference line at x = 0 and at x = L of each member, in
            layout order.  Default: the member's own displaced ends
            ``v_i, v_j`` (the chord), which gives exactly
            :meth:`MemberResult.max_relative_deflection` per member.  A
            span of several collinear elements passes the chord of the
            whole span evaluated at each element's ends.
        """
        m = len(self)
        if not self.has_deflection:
            return {"deflection_rel_max": np.full(m, np.nan), "deflection_rel_max_at": np.full(m, np.nan)}
        if reference is None:
            if self._rtable is None:
                self._rtable = self._relative(self.end_displacements[:, [1, 3]])
            return self._rtable
        return self._relative(np.asarray(reference, dtype=float).reshape(m, 2))

    def _relative(self, ref: np.ndarray) -> dict[str, np.ndarray]:
        pc = self._pieces()
        c = pc._coef("v").copy()
        slope = (ref[:, 1] - ref[:, 0]) / pc.length
        c[:, 0] -= ref[pc.mem, 0] + slope[pc.mem] * pc.x0
        c[:, 1] -= slope[pc.mem]
        val, at = _max_abs_batch(pc, [_to_unit(c, pc.h)])
        return {"deflection_rel_max": val, "deflection_rel_max_at": at}

    def table(self) -> dict[str, np.ndarray]:
        """:meth:`force_table` and :meth:`deflection_table` together."""
        return {**self.force_table(), **self.deflection_table()}

    # -- batch evaluation (all members at once) ---------------------------

    def _entries(self) -> tuple[np.ndarray, np.ndarray]:
        """(bx, first): the break positions of every member, flat (member j:
        its piece starts in order, then its length, at ``first[j]`` ..
        ``first[j] + count[j]``)."""
        if self._bx is None:
            pc = self._pieces()
            m = len(self)
            first = pc.start + np.arange(m)
            bx = np.empty(len(pc.mem) + m)
            bx[np.arange(len(pc.mem)) + pc.mem] = pc.x0
            bx[first + pc.count] = pc.length
            self._bx = (bx, first)
        return self._bx

    def _locate(self, rows: np.ndarray, x: np.ndarray, side: str) -> np.ndarray:
        """Local piece index k of each (row, x): the last break of the row at
        or before x (``side="right"``) or strictly before x (``"left"``);
        -1 before the start, ``count`` at or after the end.  A vectorised
        bisection with exact comparisons (a value at a break point lands on
        the chosen side however the float rounds elsewhere)."""
        bx, first = self._entries()
        f0 = first[rows]
        lo = f0.copy()
        hi = f0 + self._pieces().count[rows] + 1
        right = side == "right"
        while True:
            act = lo < hi
            if not act.any():
                break
            mid = (lo + hi) >> 1
            v = bx[np.where(act, mid, 0)]
            go = (v <= x) if right else (v < x)
            lo = np.where(act & go, mid + 1, lo)
            hi = np.where(act & ~go, mid, hi)
        return lo - f0 - 1

    def _query(self, rows, x) -> tuple[np.ndarray, np.ndarray, tuple]:
        rows_a = np.asarray(rows, dtype=np.intp)
        xa = np.asarray(x, dtype=float)
        rows_a, xa = np.broadcast_arrays(rows_a, xa)
        shape = xa.shape
        rows_a, xa = rows_a.ravel(), xa.ravel()
        m = len(self)
        if len(rows_a) and (rows_a.min() < 0 or rows_a.max() >= m):
            raise IndexError(f"member rows must lie in [0, {m})")
        L = self.layout.length[rows_a]
        tol = _POS_TOL * L
        if np.any(xa < -tol) or np.any(xa > L + tol) or not np.all(np.isfinite(xa)):
            raise ValueError("positions must lie in [0, length] of their members")
        return rows_a, np.clip(xa, 0.0, L), shape

    def sample(self, which: str, rows, x, side: str = "right") -> np.ndarray:
        """Values at local positions of many members at once.

        Parameters
        ----------
        which : "N", "V", "M" (internal forces [force], [force*length]) or
            "u", "v" (local displacements [length]), "th" (slope [rad])
        rows : (k,) member indices in the order of this mapping (layout order)
        x : (k,) positions from each member's start [length], 0 <= x <= L
        side : at a jump of N, V or M, the value just right of x ("right")
            or just left ("left"); at x = 0 "left" gives the end force
            itself, at x = L "right" likewise (see :meth:`MemberResult.axial`)

        Returns
        -------
        (k,) values, exactly as :class:`MemberResult` gives them.
        """
        return self.sample_many((which,), rows, x, side)[which]

    def sample_many(self, which: Sequence[str], rows, x, side: str = "right") -> dict[str, np.ndarray]:
        """:meth:`sample` of several quantities at the same points, sharing
        the work of finding each point's piece; returns ``{which: values}``."""
        if side not in ("right", "left"):
            raise ValueError("side must be 'right' or 'left'")
        cols = {}
        for w in which:
            col = {"N": 0, "V": 1, "M": 2}.get(w)
            if col is None and w not in ("u", "v", "th"):
                raise KeyError(f"unknown quantity {w!r}; expected N, V, M, u, v or th")
            if col is None and not self.has_deflection:
                raise ValueError("no stiffness: deflections are not available")
            cols[w] = col
        rows_a, xa, shape = self._query(rows, x)
        pc = self._pieces()
        cnt = pc.count[rows_a]
        located: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        out: dict[str, np.ndarray] = {}
        for w, col in cols.items():
            how = side if col is not None else "right"      # displacements are continuous
            if how not in located:
                k = self._locate(rows_a, xa, how)
                located[how] = (k, pc.start[rows_a] + np.clip(k, 0, cnt - 1))
            k, p = located[how]
            vals = _polyval(pc._coef(w)[p], xa - pc.x0[p])
            if col is not None:
                before, after = k < 0, k >= cnt
                if before.any():
                    vals[before] = pc.left0[rows_a[before], col]
                if after.any():
                    vals[after] = pc.rightL[rows_a[after], col]
            out[w] = vals.reshape(shape)
        return out

    def critical_points(self) -> tuple[np.ndarray, np.ndarray]:
        """(rows, x) of every member's critical points, sorted by row then
        x: the ends, every load break point, the zeros of V (extremes of M)
        and the zeros of M (as :meth:`MemberResult.critical_points`)."""
        if self._crit is None:
            pc = self._pieces()
            m = len(self)
            rows = [pc.mem, np.arange(m)]
            xs = [pc.x0, pc.length]
            for which in ("V", "M"):
                c = pc._coef(which)
                ends = _polyval(c, pc.h)
                rp, rs = real_roots_unit(_to_unit(c, pc.h), ref=_member_ref(pc, c[:, 0], ends))
                rows.append(pc.mem[rp])
                xs.append(pc.x0[rp] + rs * pc.h[rp])
            r, x = np.concatenate(rows), np.concatenate(xs)
            x = np.clip(x, 0.0, pc.length[r])
            order = np.lexsort((x, r))
            r, x = r[order], x[order]
            keep = np.ones(len(r), bool)
            keep[1:] = (r[1:] != r[:-1]) | (np.diff(x) > _POS_TOL * pc.length[r[1:]] * 1e-3)
            self._crit = (r[keep], x[keep])
        return self._crit

    def scaled(self, f: float) -> "MemberResults":
        return MemberResults(self.layout, self.end_forces * f, self.loads.scaled(f),
                             None if self.end_displacements is None else self.end_displacements * f)

    def __add__(self, other: "MemberResults") -> "MemberResults":
        if not isinstance(other, MemberResults):
            return NotImplemented
        if other.layout is not self.layout and other.layout.ids != self.layout.ids:
            raise ValueError("cannot add results of different frames")
        d = None
        if self.end_displacements is not None and other.end_displacements is not None:
            d = self.end_displacements + other.end_displacements
        return MemberResults(self.layout, self.end_forces + other.end_forces, self.loads + other.loads, d)
