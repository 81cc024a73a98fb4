"""Exact internal forces and deflections along members.

:class:`MemberResult` gives N, V, M and the deflection of one member,
exactly, anywhere along it; :class:`MemberResults` holds all members of one
load case or combination as arrays and works on every member at once
(tables of extremes, sampling, critical points).  Both evaluate the
piecewise polynomials of :mod:`solver.pieces` (a single member uses the
same code with one member); the member loads and geometry are
:class:`~dxf2frame.solver.member_data.LoadSet` and
:class:`~dxf2frame.solver.member_data.MemberLayout`, and the root finder is
:func:`~dxf2frame.solver.polynomials.real_roots_unit` (all re-exported here).

Sign convention (local x from the member start, local y turned 90 degrees
counter-clockwise): N tension positive; V positive when it turns the
element clockwise; M positive when it bends the member concave toward
local +y.  End forces ``[Ni, Vi, Mi, Nj, Vj, Mj]`` are the forces the nodes
exert on the member in local axes (moments counter-clockwise).

Units: whatever the frame uses (N, m, N*m, N/m in the DXF pipeline).
"""
from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from .member_data import LoadSet, MemberLayout
from .pieces import _Pieces, _build_pieces, _displacement_parts, _extremes_batch, _max_abs_batch, _member_ref
from .polynomials import _polyval, _to_unit, real_roots_unit

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

    >>> from dxf2frame.solver.forces import LoadSet, MemberResult
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
