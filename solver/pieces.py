"""Members cut into polynomial pieces, and extremes over the pieces of many members at once.

A member's internal forces follow from its end forces and the loads on its
span by equilibrium of the free body to the left of a cut at x (local x
from the member start, local y turned 90 degrees counter-clockwise):

* ``N(x) = -Ni - sum(axial loads on [0, x])``                  (tension +)
* ``V(x) =  Vi + sum(transverse loads on [0, x])``   (clockwise shear +)
* ``M(x) = -Mi + Vi*x + sum(P*(x - a)) - sum(couples on [0, x])``
  (positive when the member bends concave toward local +y)

where ``[Ni, Vi, Mi, Nj, Vj, Mj]`` are the forces the nodes exert on the
member in local axes (moments counter-clockwise).  :func:`_build_pieces`
cuts every member at its load break points; between them N and V are
polynomials of degree <= 2 and M of degree <= 3 (loads vary at most
linearly), and with stiffness the deflections integrate ``EI v'' = M`` and
``EA u' = N`` piece by piece with the end displacements as boundary values
(v a quintic, u a cubic on each piece).  :class:`_Pieces` holds the result
as arrays; :func:`_extremes_batch` gives every member's extremes of N, V, M
and :func:`_max_abs_batch` the largest magnitude of a (vector) quantity,
exactly, from the piece ends and the roots of the derivative.

Units: whatever the frame uses (N, m, N*m, N/m in the DXF pipeline).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .member_data import LoadSet
from .polynomials import _bernstein_matrix, _polyder, _polymul, _polyval, _to_unit, real_roots_unit


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


@dataclass(frozen=True, eq=False)
class _Breaks:
    """Break points of many members: every member end and load position,
    sorted per member, with the break point of each load."""

    mem: np.ndarray
    x: np.ndarray
    start: np.ndarray
    count: np.ndarray
    of_point: np.ndarray
    of_couple: np.ndarray
    of_dist_a: np.ndarray
    of_dist_b: np.ndarray
    last: np.ndarray


def _break_points(L: np.ndarray, loads: LoadSet) -> _Breaks:
    """The break points of every member (see :class:`_Breaks`)."""
    m = len(L)
    ar = np.arange(m)
    P_, C_, D_ = loads.points, loads.couples, loads.distributed
    pm, cm, dm = loads.point_member, loads.couple_member, loads.dist_member
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

    return _Breaks(bp_mem, bp_x, bp_start, bp_count, bp_p, bp_c, bp_da, bp_db, last_bp)


def _piece_loads(D_: np.ndarray, dm: np.ndarray, br: _Breaks, x0: np.ndarray):
    """(qx0, gx, qy0, gy): distributed load intensity at each piece start
    and its slope, the loads spread over the pieces they cover."""
    npc = len(x0)
    bp_da, bp_db = br.of_dist_a, br.of_dist_b
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

    return qx0, gx, qy0, gy


def _march(ef, piece_bp, start, count, h, jumps, loads_on, stiff):
    """N, V, M (and with ``stiff`` = (EA, EI) per piece the particular
    axial and transverse displacement and slope, zero at the member start)
    just right of each piece start: equilibrium of the left free body,
    marching along every member piece by piece (vectorised over members)."""
    jN, jV, jM = jumps
    qx0, gx, qy0, gy = loads_on
    npc, m = len(h), len(start)
    with_defl = stiff is not None
    N0 = np.zeros(npc)
    V0 = np.zeros(npc)
    M0 = np.zeros(npc)
    up0 = vp0 = tp0 = None
    if with_defl:
        eai, eii = stiff
        up0 = np.zeros(npc)
        vp0 = np.zeros(npc)
        tp0 = np.zeros(npc)
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

    return N0, V0, M0, up0, vp0, tp0


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
    P_, C_ = loads.points, loads.couples
    ar = np.arange(m)
    br = _break_points(L, loads)
    bp_mem, bp_x, bp_start, bp_count = br.mem, br.x, br.start, br.count
    bp_p, bp_c, last_bp = br.of_point, br.of_couple, br.last
    nbp = len(bp_mem)

    # pieces: every break point except the last of each member
    is_piece = np.ones(nbp, bool)
    is_piece[last_bp] = False
    piece_bp = np.flatnonzero(is_piece)
    mem = bp_mem[piece_bp]
    x0 = bp_x[piece_bp]
    h = bp_x[piece_bp + 1] - x0
    start = bp_start - ar  # piece id = bp id - member index
    count = bp_count - 1

    # concentrated jumps at break points (left free body: N -= px, V += py, M -= c)
    jN = np.bincount(bp_p, weights=-P_[:, 1], minlength=nbp)
    jV = np.bincount(bp_p, weights=P_[:, 2], minlength=nbp)
    jM = np.bincount(bp_c, weights=-C_[:, 1], minlength=nbp)


    qx0, gx, qy0, gy = _piece_loads(loads.distributed, loads.dist_member, br, x0)
    with_defl = end_disp is not None and EI is not None and EA is not None
    stiff = (np.asarray(EA, float)[mem], np.asarray(EI, float)[mem]) if with_defl else None
    N0, V0, M0, up0, vp0, tp0 = _march(ef, piece_bp, start, count, h, (jN, jV, jM), (qx0, gx, qy0, gy),
                                       stiff)

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
        eai, eii = stiff
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


# --------------------------------------------------------------------------
# extremes of many members at once


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


def _piece_ends(pc: _Pieces) -> np.ndarray:
    """Per piece: the position of its end, taken as the next piece's start
    (the break point itself) or the member's length for the last piece, so
    a value at a jump is reported at the jump and not an ulp beyond it
    (``x0 + h`` can round past the break point, where the left-side value
    no longer holds)."""
    end = pc.x0 + pc.h
    same = pc.mem[1:] == pc.mem[:-1]
    if np.all(pc.x0[1:][same] >= pc.x0[:-1][same]):        # pieces run along each member
        end[:-1][same] = pc.x0[1:][same]
        last = np.append(~same, True)
        end[last] = pc.length[pc.mem[last]]
    return end


def _force_candidates(pc: _Pieces) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(member, x, N, V, M) at every point where an extreme of N, V or M can
    sit: both sides of every break point, roots of V, vertices of N and V."""
    m = len(pc.length)
    ar = np.arange(m)
    npc = len(pc.mem)
    allp = np.arange(npc)
    mems = [ar, ar, pc.mem, pc.mem]
    xs = [np.zeros(m), pc.length, pc.x0, _piece_ends(pc)]
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
    xs = np.concatenate([pc.x0, _piece_ends(pc)])
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
