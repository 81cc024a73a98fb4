"""The curves of the N, V and M diagrams along every element, and which of
their points are drawn.

Stations and curves are flat arrays over all elements (element-major,
``frame.members`` order).  Positions ``x`` are metres along the element
from its start (local x), values ``y`` SI (N, N*m) as the member results
give them (N tension positive; V positive when it turns the element
clockwise; M positive when it bends the member concave toward its local
+y side); the writer scales them to ordinates in drawing units and
chooses the side each diagram is drawn on.
:func:`drawn_curves` and :func:`thin` work on those ordinates, in drawing units.
:func:`straight_chains` finds the runs of elements drawn as one line.

Sampling: each element is sampled at its critical points (ends, load
breaks, zeros of V and M, from every result drawn) plus 17 even stations,
with both limits where a value jumps, so ends, extremes and zero crossings
are exact.  When the results offer batch sampling
(``members.critical_points()`` and ``members.sample(which, rows, x,
side)``) every element is sampled in a few vectorised calls; otherwise
through each ``MemberResult``.

Drawing: the sampled curves are thinned before they are written
(Douglas-Peucker, all elements at once): a point is left out only while
the drawn line stays within the chord tolerance of it, 0.04 text heights
(0.1 mm when labels plot at 2.5 mm, under half the 0.25 mm line weight)
and at most 1 % of the element's largest ordinate (deflected shape: of
its largest drawn displacement), so the shape stays true when zoomed in
on one element.  Always written: element ends, both limits of a jump, an
interior extreme that stands out from the ends, and for a single
result's moment the points at each change of sign (the outline crosses
the member at the zero tick).  Elements that continue each other in a
straight line (a floor beam split at every column, a column line split
at every floor) are drawn as one run: one closed outline per diagram
(baseline start, the curve along every element of the run, baseline end,
for an envelope the min curve back), stepping across the member where
the value jumps at a joint, as a continuous diagram is drawn by hand;
and one deflected-shape polyline (and one buckled-shape polyline,
:func:`chain_polylines`).  Fills stay per element.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Sequence

import numpy as np

if TYPE_CHECKING:
    from ..drawing_model import DrawingModel


# -- constants -----------------------------------------------------------------

DIAGRAMS = ("axial", "shear", "moment")
_SAMPLES = 17              # stations per element besides the critical points
# Chord tolerance of the drawn curves (diagram outlines, deflected shape): a
# sampled point is left out only while the drawn polyline stays within this
# distance of it.  Text is sized for a plot where the label height reads as
# about 2.5 mm; 0.04 of it is then 0.1 mm on paper, less than half the
# result layers' 0.25 mm line weight, so the thinned line is not told apart
# from the exact one.  Zoomed in on a single element the absolute limit
# could be coarse next to a small diagram, so it is also never more than 1 %
# of that element's largest ordinate (deflected shape: of its largest drawn
# displacement): the shape stays true at any zoom.
CHORD_TEXT = 0.04         # chord tolerance / text height
CHORD_REL = 0.01          # chord tolerance / the element's largest ordinate


# -- geometry of the frame -----------------------------------------------------

_TEXT_RATIO = 1.0 / 60.0   # default text height / frame size


@dataclass
class FrameGeom:
    """Element geometry in drawing units, in ``frame.members`` order."""

    start: np.ndarray     # (m, 2)
    end: np.ndarray       # (m, 2)
    t: np.ndarray         # (m, 2) unit local x
    n: np.ndarray         # (m, 2) unit local y
    length_m: np.ndarray  # (m,) metres
    bounds: tuple[float, float, float, float]
    size: float

    @property
    def text_height(self) -> float:
        """The result texts' default height [drawing units]: 1/60 of the
        frame's size, to two significant digits."""
        return float(f"{self.size * _TEXT_RATIO:.2g}")

    def text_height_or(self, given: float | None) -> float:
        """``given`` when it is a positive height (the settings'
        ``[drawing]``), else :attr:`text_height` [drawing units]."""
        return given if given and given > 0 else self.text_height


def frame_geom(model: "DrawingModel") -> FrameGeom:
    frame = model.frame
    us = model.unit_scale
    xy = np.array([(n.x, n.y) for n in frame.nodes], dtype=float).reshape(-1, 2) / us
    si = np.array([m.start for m in frame.members], dtype=int)
    ei = np.array([m.end for m in frame.members], dtype=int)
    a, b = xy[si], xy[ei]
    d = b - a
    ld = np.hypot(d[:, 0], d[:, 1])
    t = d / np.where(ld > 0, ld, 1.0)[:, None]
    n = np.column_stack([-t[:, 1], t[:, 0]])
    pts = xy if len(xy) else np.zeros((1, 2))
    x0, y0 = pts.min(0)
    x1, y1 = pts.max(0)
    ex = tuple(float(v) for v in (model.extents or (0, 0, 0, 0)))
    if ex[2] > ex[0] or ex[3] > ex[1]:
        x0, y0, x1, y1 = min(x0, ex[0]), min(y0, ex[1]), max(x1, ex[2]), max(y1, ex[3])
    size = max(x1 - x0, y1 - y0)
    if not size > 0:
        size = 1.0
    return FrameGeom(a, b, t, n, ld * us, (float(x0), float(y0), float(x1), float(y1)), float(size))


# -- sampling ------------------------------------------------------------------


def _call(mr, name: str, xs: np.ndarray, left: bool = False) -> np.ndarray:
    f = getattr(mr, name)
    if left:
        try:
            v = f(xs, side="left")
        except TypeError:
            v = f(xs)
    else:
        v = f(xs)
    return np.broadcast_to(np.asarray(v, dtype=float), xs.shape)


_WHICH = {"axial": "N", "shear": "V", "moment": "M"}


class _Bounds:
    """Per station, the largest and smallest value over results added one
    at a time, and which result gave each (ties: the earlier result), so an
    envelope never holds all its results' samples at once."""

    def __init__(self, first: np.ndarray) -> None:
        self.hi, self.lo = first.astype(float), first.astype(float)
        self.hi_at = np.zeros(len(first), np.int32)
        self.lo_at = np.zeros(len(first), np.int32)

    def add(self, k: int, v: np.ndarray) -> None:
        up, dn = v > self.hi, v < self.lo
        self.hi[up], self.hi_at[up] = v[up], k
        self.lo[dn], self.lo_at[dn] = v[dn], k

    @classmethod
    def of(cls, rows: Sequence[np.ndarray]) -> "_Bounds":
        b = cls(np.asarray(rows[0], dtype=float))
        for k, v in enumerate(rows[1:], start=1):
            b.add(k, np.asarray(v, dtype=float))
        return b


@dataclass
class _Stations:
    """Sample stations of every element, flat: element-major, x ascending.

    eid, x [m] : element index (``frame.members`` order) and position
    crit : an interior critical point (load break, zero of V or M): a jump
        may sit there and the point is always drawn
    first, last : the element's end stations
    values : diagram key -> (right, left), the :class:`_Bounds` over the
        results [SI] of the values just right and just left of each station
    """

    eid: np.ndarray
    x: np.ndarray
    crit: np.ndarray
    first: np.ndarray
    last: np.ndarray
    values: dict[str, tuple[_Bounds, _Bounds]]

    @property
    def starts(self) -> np.ndarray:
        return np.flatnonzero(self.first)


def _merge_stations(eid: np.ndarray, x: np.ndarray, isc: np.ndarray, lengths: np.ndarray):
    """Sort candidate stations by element and x, merge those closer than
    1e-9 of the element length (keeping the critical flag), pin the ends."""
    order = np.lexsort((~isc, x, eid))
    eid, x, isc = eid[order], x[order], isc[order]
    new = np.ones(len(x), bool)
    new[1:] = (eid[1:] != eid[:-1]) | (x[1:] - x[:-1] > 1e-9 * lengths[eid[1:]])
    starts = np.flatnonzero(new)
    crit = np.maximum.reduceat(isc, starts)
    eid, x = eid[starts], x[starts].copy()
    first = np.ones(len(eid), bool)
    first[1:] = eid[1:] != eid[:-1]
    last = np.ones(len(eid), bool)
    last[:-1] = eid[1:] != eid[:-1]
    x[first], x[last] = 0.0, lengths[eid[last]]
    return eid, x, crit & ~first & ~last, first, last


def sample_member_by_member(results: Sequence, frame, lengths: np.ndarray) -> _Stations:
    """Sample through each result's per-member API (``MemberResult`` calls)."""
    n_el = len(frame.members)
    eids, xs, iscs = [], [], []
    lin = np.linspace(0.0, 1.0, _SAMPLES)
    for i, m in enumerate(frame.members):
        L = float(lengths[i])
        for r in results:
            try:
                cp = np.asarray(r.members[m.id].critical_points(), dtype=float).ravel()
            except Exception:  # noqa: BLE001 - a result without critical points still draws
                cp = np.zeros(0)
            eids.append(np.full(len(cp), i))
            xs.append(np.clip(cp, 0.0, L))
            iscs.append(np.ones(len(cp), bool))
    eids.append(np.repeat(np.arange(n_el), _SAMPLES))
    xs.append(np.outer(lengths, lin).ravel())
    iscs.append(np.zeros(n_el * _SAMPLES, bool))
    eid, x, crit, first, last = _merge_stations(np.concatenate(eids).astype(int), np.concatenate(xs),
                                                np.concatenate(iscs), lengths)
    lmask = crit | last
    bounds = np.append(np.flatnonzero(first), len(x))
    values = {}
    for key in DIAGRAMS:
        right = np.empty((len(results), len(x)))
        left = np.empty_like(right)
        for i, m in enumerate(frame.members):
            sl = slice(bounds[i], bounds[i + 1])
            xi, li = x[sl], lmask[sl]
            for k, r in enumerate(results):
                mr = r.members[m.id]
                right[k, sl] = _call(mr, key, xi)
                lv = right[k, sl].copy()
                if li.any():
                    lv[li] = _call(mr, key, xi[li], left=True)
                left[k, sl] = lv
        values[key] = (_Bounds.of(right), _Bounds.of(left))
    return _Stations(eid, x, crit, first, last, values)


def has_batch(results: Sequence) -> bool:
    return all(callable(getattr(r.members, "sample", None)) and callable(getattr(r.members, "critical_points", None))
               for r in results)


def sample_batch(results: Sequence, frame, lengths: np.ndarray) -> _Stations:
    """Sample every element of every result at once through a batch API of
    the solver's member results (used when the results offer it):

    * ``members.critical_points() -> (rows, x)``: the critical points of all
      members (rows in the mapping's iteration order);
    * ``members.sample(which, rows, x, side="right")``: N, V or M (which =
      "N", "V", "M") at local x [m] of the given rows.
    """
    n_el = len(frame.members)
    eids, xs, iscs, layouts = [], [], [], []
    for r in results:
        pos = {mid: j for j, mid in enumerate(r.members)}
        to_layout = np.array([pos[m.id] for m in frame.members], dtype=int)
        layouts.append(to_layout)
        inv = np.full(len(pos), -1, dtype=int)
        inv[to_layout] = np.arange(n_el)
        rows, x = r.members.critical_points()
        release = getattr(r.members, "release", None)
        if release is not None:
            release()
        rows = inv[np.asarray(rows, dtype=int)]
        ok = rows >= 0
        rows, x = rows[ok], np.asarray(x, dtype=float)[ok]
        eids.append(rows)
        xs.append(np.clip(x, 0.0, lengths[rows]))
        iscs.append(np.ones(len(rows), bool))
    lin = np.linspace(0.0, 1.0, _SAMPLES)
    eids.append(np.repeat(np.arange(n_el), _SAMPLES))
    xs.append(np.outer(lengths, lin).ravel())
    iscs.append(np.zeros(n_el * _SAMPLES, bool))
    eid, x, crit, first, last = _merge_stations(np.concatenate(eids), np.concatenate(xs),
                                                np.concatenate(iscs), lengths)
    lmask = crit | last
    which = [_WHICH[key] for key in DIAGRAMS]
    values: dict[str, tuple[_Bounds, _Bounds]] = {}
    for k, (r, lay) in enumerate(zip(results, layouts)):
        many = getattr(r.members, "sample_many", None)
        if many is not None:
            right = many(which, lay[eid], x)
            at_left = many(which, lay[eid[lmask]], x[lmask], side="left")
        else:
            right = {w: r.members.sample(w, lay[eid], x) for w in which}
            at_left = {w: r.members.sample(w, lay[eid[lmask]], x[lmask], side="left") for w in which}
        for key, w in zip(DIAGRAMS, which):
            rv = np.asarray(right[w], dtype=float)
            lv = rv.copy()
            lv[lmask] = at_left[w]
            if k == 0:
                values[key] = (_Bounds(rv), _Bounds(lv))
            else:
                values[key][0].add(k, rv)
                values[key][1].add(k, lv)
        del right, at_left
        release = getattr(r.members, "release", None)
        if release is not None:
            release()                 # one result's pieces at a time on large frames
    return _Stations(eid, x, crit, first, last, values)


# -- curves --------------------------------------------------------------------


def segment_max(v: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Largest |v| of each element's stretch of a flat array."""
    return np.maximum.reduceat(np.abs(v), starts) if len(v) else np.zeros(0)


@dataclass
class FlatCurve:
    """One diagram curve of every element, flat: element-major polyline
    points with both limits where the value jumps.

    eid, x [m], y [SI] : element, position and value of each point
    who : index of the result giving the value (envelopes)
    fixed : points that are always drawn (ends, both limits of each jump)
    bounds : bounds[i]:bounds[i+1] are element i's points
    role : "single", "max" or "min"
    """

    eid: np.ndarray
    x: np.ndarray
    y: np.ndarray
    who: np.ndarray
    fixed: np.ndarray
    bounds: np.ndarray
    role: str

    def element(self, i: int) -> "Curve":
        sl = slice(self.bounds[i], self.bounds[i + 1])
        return Curve(self.x[sl], self.y[sl], self.who[sl], self.role, self.fixed[sl])


@dataclass
class Curve:
    """The curve of one diagram along one element (a view of a FlatCurve)."""

    x: np.ndarray
    y: np.ndarray
    who: np.ndarray
    role: str
    fixed: np.ndarray


def _flat_curve(st: _Stations, right: np.ndarray, left: np.ndarray, wr: np.ndarray, wl: np.ndarray,
                role: str, n_el: int) -> FlatCurve:
    """Polyline points through the stations, doubled where the value jumps."""
    tol = 1e-9 * segment_max(right, st.starts)[st.eid] + 1e-300
    jump = st.crit & (np.abs(left - right) > tol)
    first, fw = right.copy(), wr.copy()
    first[st.last], fw[st.last] = left[st.last], wl[st.last]
    first[jump], fw[jump] = left[jump], wl[jump]
    counts = 1 + jump.astype(int)
    at = np.cumsum(counts) - counts
    total = int(counts.sum())
    y, who = np.empty(total), np.empty(total, int)
    y[at], who[at] = first, fw
    y[at[jump] + 1], who[at[jump] + 1] = right[jump], wr[jump]
    eid = np.repeat(st.eid, counts)
    fixed = np.repeat(jump | st.first | st.last, counts)
    bounds = np.searchsorted(eid, np.arange(n_el + 1))
    return FlatCurve(eid, np.repeat(st.x, counts), y, who, fixed, bounds, role)


def sample_curves(st: _Stations, key: str, envelope: bool, n_el: int) -> list[FlatCurve]:
    """The curves of one diagram; the stations' values of ``key`` are used
    up (dropped from ``st``) to keep memory down on large frames."""
    right, left = st.values.pop(key)
    if not envelope:
        z = np.zeros(len(right.hi), int)
        return [_flat_curve(st, right.hi, left.hi, z, z, "single", n_el)]
    return [
        _flat_curve(st, right.hi, left.hi, right.hi_at, left.hi_at, "max", n_el),
        _flat_curve(st, right.lo, left.lo, right.lo_at, left.lo_at, "min", n_el),
    ]


# -- what is drawn -------------------------------------------------------------


def thin(pts: np.ndarray, anchor: np.ndarray, tol: np.ndarray) -> np.ndarray:
    """Mask of the points of many polylines (flat, (k, 2)) to draw so that
    each drawn polyline stays within ``tol`` (per point) of all its points.

    Douglas-Peucker, all polylines at once: every pass adds, on each stretch
    between two kept points, the point farthest from the chord (the segment
    between them, so a point beyond its ends counts too) when it lies
    farther than its tolerance.  ``anchor``: points kept whatever their
    distance; the first and last point of each polyline must be among them
    (so a stretch never spans two polylines).  A stretch with no point
    beyond its tolerance is done: its points leave the next passes.
    """
    keep = np.asarray(anchor, dtype=bool).copy()
    kept = np.flatnonzero(keep)
    free = np.flatnonzero(~keep)
    while len(free):
        k = np.searchsorted(kept, free)
        a, b = pts[kept[k - 1]], pts[kept[k]]
        d, q = b - a, pts[free] - a
        dd = d[:, 0] ** 2 + d[:, 1] ** 2
        f = np.clip((q[:, 0] * d[:, 0] + q[:, 1] * d[:, 1]) / np.where(dd > 0, dd, 1.0), 0.0, 1.0)
        dev = np.hypot(q[:, 0] - f * d[:, 0], q[:, 1] - f * d[:, 1])      # distance to the chord segment
        dev[dev <= tol[free]] = -1.0
        runs = np.flatnonzero(np.r_[True, k[1:] != k[:-1]])               # free points of one stretch
        worst = np.maximum.reduceat(dev, runs)
        busy = worst > 0
        if not busy.any():
            break
        worst = np.repeat(np.where(busy, worst, np.inf), np.diff(np.r_[runs, len(k)]))
        new = dev >= worst
        keep[free[new]] = True
        kept = np.flatnonzero(keep)
        free = free[np.repeat(busy, np.diff(np.r_[runs, len(k)])) & ~new]
    return keep


def chain_polylines(pts: np.ndarray, bounds: np.ndarray, chains: list[list[int]],
                    tol: np.ndarray) -> tuple[list[np.ndarray], np.ndarray]:
    """One thinned polyline per straight chain of elements.

    ``pts`` (k, 2): the points of every element, element-major, element
    ``i`` owning ``pts[bounds[i]:bounds[i + 1]]`` from its start to its end;
    the curve must be continuous at a joint (a displaced shape), which is
    drawn once, as the previous element's end.  ``chains``:
    :func:`straight_chains`; ``tol``: the chord tolerance of each element
    (:func:`chord_tolerance`).  Returns (the polylines, every point of them
    before thinning, in chain order)."""
    seq = np.concatenate([np.asarray(c, dtype=int) for c in chains])
    head = np.zeros(len(seq), dtype=bool)
    head[np.cumsum([0] + [len(c) for c in chains[:-1]])] = True
    first = bounds[seq] + ~head                            # a joint is drawn as the previous element's end
    count = bounds[seq + 1] - first
    at = np.cumsum(count) - count
    idx = np.repeat(first - at, count) + np.arange(int(count.sum()))
    run = pts[idx]
    lengths = np.add.reduceat(count, np.flatnonzero(head))
    ends = np.cumsum(lengths)
    anchor = np.zeros(len(run), dtype=bool)
    anchor[ends - 1] = True
    anchor[ends - lengths] = True
    keep = thin(run, anchor, np.repeat(np.asarray(tol, dtype=float)[seq], count))
    return [run[a:b][keep[a:b]] for a, b in zip(ends - lengths, ends)], run


def chord_tolerance(h: float, scale: np.ndarray, size: float) -> np.ndarray:
    """Per element: the chord tolerance [drawing units] of a curve whose
    largest ordinate on that element is ``scale`` (see ``CHORD_TEXT``)."""
    return np.maximum(np.minimum(CHORD_TEXT * h, CHORD_REL * np.asarray(scale, dtype=float)), 1e-9 * size)


def _first_per_element(idx: np.ndarray, eid: np.ndarray) -> np.ndarray:
    """The first of the (sorted) point indices ``idx`` of each element."""
    if not len(idx):
        return idx
    e = eid[idx]
    return idx[np.r_[True, e[1:] != e[:-1]]]


def drawn_curves(c: FlatCurve, along: np.ndarray, o: np.ndarray, tol: np.ndarray, zero: float | None = None) -> np.ndarray:
    """Mask of the curve points worth drawing.

    along, o : each point's position along its element and ordinate
        [drawing units] (the outline in the element's own axes)
    tol : per element, the chord tolerance [drawing units]: the drawn
        curve keeps within it of every sampled point (:func:`thin`)
    zero : |value| [SI] below which a value counts as zero (a single
        result's moment, which gets zero ticks; None: not used)

    Always drawn: the element's ends, both limits of each jump, the
    element's largest and smallest ordinate where it stands out from both
    ends by more than the tolerance (the interior extremes that get
    labels), and with ``zero`` the points at each change of sign (the
    near-zero points between, else the two on either side), so the drawn
    curve crosses the member exactly where the zero tick is.
    """
    n = len(o)
    anchor = c.fixed.copy()
    if not n:
        return anchor
    starts, lasts = c.bounds[:-1], c.bounds[1:] - 1
    ok = lasts >= starts
    starts, lasts = starts[ok], lasts[ok]
    elems = np.flatnonzero(ok)
    hi = np.full(len(c.bounds) - 1, -np.inf)
    lo = np.full(len(c.bounds) - 1, np.inf)
    hi[elems] = np.maximum.reduceat(o, starts)
    lo[elems] = np.minimum.reduceat(o, starts)
    end_hi = np.full_like(hi, np.inf)
    end_lo = np.full_like(lo, -np.inf)
    end_hi[elems] = np.maximum(o[starts], o[lasts])
    end_lo[elems] = np.minimum(o[starts], o[lasts])
    top = _first_per_element(np.flatnonzero(o == hi[c.eid]), c.eid)
    anchor[top[hi[c.eid[top]] - end_hi[c.eid[top]] > tol[c.eid[top]]]] = True
    bot = _first_per_element(np.flatnonzero(o == lo[c.eid]), c.eid)
    anchor[bot[end_lo[c.eid[bot]] - lo[c.eid[bot]] > tol[c.eid[bot]]]] = True
    if zero is not None:
        nz = np.flatnonzero(np.abs(c.y) > zero)
        if len(nz) > 1:
            a, b = nz[:-1], nz[1:]
            cross = (c.eid[a] == c.eid[b]) & (np.sign(c.y[a]) != np.sign(c.y[b]))
            a, b = a[cross], b[cross]
            gap = b > a + 1                                # zero at the points between: those; else both sides
            a, b = np.where(gap, a + 1, a), np.where(gap, b - 1, b)
            mark = np.zeros(n + 1, dtype=int)
            np.add.at(mark, a, 1)
            np.add.at(mark, b + 1, -1)
            anchor |= np.cumsum(mark)[:n] > 0
    return thin(np.column_stack([along, o]), anchor, tol[c.eid])


def zero_crossings(c: Curve, tol: float) -> list[float]:
    """Positions [m] where the curve changes sign (not at a jump)."""
    out: list[float] = []
    nz = np.flatnonzero(np.abs(c.y) > tol)
    for a, b in zip(nz[:-1], nz[1:]):
        if np.sign(c.y[a]) == np.sign(c.y[b]):
            continue
        if b == a + 1:
            if c.x[b] - c.x[a] <= 1e-12:
                continue  # a jump through zero, not a crossing
            x0 = c.x[a] + (c.x[b] - c.x[a]) * c.y[a] / (c.y[a] - c.y[b])
        else:
            zs = c.x[a + 1:b]
            x0 = float(zs.mean())
        out.append(float(x0))
    return out


# -- straight runs -------------------------------------------------------------


def straight_chains(si: np.ndarray, ei: np.ndarray, t: np.ndarray) -> list[list[int]]:
    """Elements (indices) in runs that continue each other in a straight
    line: element j follows i when it starts at i's end node in the same
    direction.  Every element is in exactly one run, in order along it."""
    n = len(si)
    by_start: dict[int, list[int]] = {}
    for j in range(n):
        by_start.setdefault(int(si[j]), []).append(j)
    nxt = np.full(n, -1)
    has_prev = np.zeros(n, dtype=bool)
    for i in range(n):
        for j in by_start.get(int(ei[i]), ()):
            if j != i and not has_prev[j] and float(t[i] @ t[j]) > 1.0 - 1e-9:
                nxt[i], has_prev[j] = j, True
                break
    chains, seen = [], np.zeros(n, dtype=bool)
    for i in [*np.flatnonzero(~has_prev), *range(n)]:    # heads first; then anything left (a loop cannot be straight)
        if seen[i]:
            continue
        chain = []
        while i >= 0 and not seen[i]:
            chain.append(int(i))
            seen[i] = True
            i = nxt[i]
        chains.append(chain)
    return chains
