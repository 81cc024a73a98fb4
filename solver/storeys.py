"""Storeys of a planar frame, storey drift, and the node displacement table.

Levels from the frame itself
----------------------------
A *column* is a member within ``column_angle`` (default 5 degrees) of
vertical; a *beam* is a member within ``beam_angle`` (default 30 degrees,
so that pitched rafters count and the eaves of a portal are a level) of
horizontal.  A *level* is an elevation where a beam meets a column (a node
that ends both).  The *base* is the lowest column bottom.  Elevations
closer than ``tol`` merge into one level.  An explicit list of elevations
may replace the levels found (the base is added below them when lower).

Storey ``k`` (1 = lowest) spans from level ``k-1`` (the base for k = 1)
up to level ``k``; its height ``h`` is the difference of the elevations.

Drift
-----
For each column whose top ends at a level, the column line is followed
down (through column members only) to the level below; the column's drift
is ``ux(top) - ux(bottom)``.  The storey drift is the **mean** of its
columns' drifts (the default, ``measure="mean"``): with axially stiff
beams every column of a storey sways alike, the mean is then the floor's
sway and is not disturbed by a column whose top moves locally (a beam's
axial shortening, a column standing on a flexible transfer beam).
``measure="max"`` takes the column drift of largest magnitude instead (the
conservative choice when the floor is not rigid in its plane).  The drift
ratio is ``drift / h``; it is compared with ``1 / limit``.

The default limit h/400 is common practice for the drift of a frame under
service wind (the usual range is h/600 to h/400); seismic drift limits of
the building codes are larger and apply to the amplified design drift, so
choose the limit the project's code sets.

Units and signs: global X right, Y up; ``ux`` [length] positive to the
right, so a positive drift is a sway to the right; heights [length];
ratios are dimensionless.

Examples
--------
A fixed-base portal, 4 m high, pushed by 10 kN at the eaves:

>>> from dxf2frame.solver import Frame, NodalLoad, Section, solve
>>> f = Frame()
>>> a, b, c, d = (f.add_node(x, y) for x, y in [(0, 0), (0, 4), (6, 4), (6, 0)])
>>> for s, e in ((a, b), (b, c), (d, c)):
...     _ = f.add_member(s, e, Section(E=200e9, A=1.0, I=8e-5))   # A: axially rigid
>>> _ = f.add_support(a, "fixed"); _ = f.add_support(d, "fixed")
>>> _ = f.add_load(NodalLoad(b, fx=10e3, case="W"))
>>> st = find_storeys(f)
>>> st.levels
(4.0,)
>>> dr = storey_drifts(f, solve(f)["W"], st)[0]
>>> round(dr.drift * 1e3, 3), round(1 / dr.ratio), dr.ok   # slope deflection: H h^3 / (15 E I), h/1500
(2.667, 1500, True)
"""
from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .model import Frame
from .results import CaseResult

__all__ = [
    "DEFAULT_DRIFT_LIMIT",
    "Storey",
    "Storeys",
    "StoreyDrift",
    "find_storeys",
    "storey_drifts",
    "drift_envelope",
    "node_table",
]

DEFAULT_DRIFT_LIMIT = 400.0
"""Drift limit as h / limit: h/400, common practice for service wind drift
(usual range h/600 to h/400)."""


@dataclass(frozen=True)
class Storey:
    """One storey.

    ``index`` 1 for the lowest; ``bottom``, ``top`` elevations [length] of
    the level below and of its own level; ``height`` = top - bottom;
    ``columns`` ``((top node, bottom node), ...)``: the column lines
    followed from a top node at this level down to a node at the level
    below.
    """

    index: int
    bottom: float
    top: float
    columns: tuple[tuple[int, int], ...]

    @property
    def height(self) -> float:
        return self.top - self.bottom

    @property
    def top_nodes(self) -> tuple[int, ...]:
        return tuple(t for t, _ in self.columns)


@dataclass(frozen=True)
class Storeys:
    """The storeys of a frame, lowest first.

    ``base`` elevation of the lowest column bottom [length]; ``levels``
    elevations of the storey tops [length], ascending; ``warnings``
    one-line texts about guesses made (levels very close together, a
    level whose columns could not be followed down).
    """

    base: float
    storeys: tuple[Storey, ...]
    warnings: tuple[str, ...] = ()

    @property
    def levels(self) -> tuple[float, ...]:
        return tuple(s.top for s in self.storeys)

    def __len__(self) -> int:
        return len(self.storeys)

    def __iter__(self):
        return iter(self.storeys)

    def __getitem__(self, i: int) -> Storey:
        return self.storeys[i]


@dataclass(frozen=True)
class StoreyDrift:
    """Drift of one storey in one result.

    ``drift`` [length] (positive: the level sways to the right relative to
    the level below), ``ratio`` = drift / height (signed),
    ``allowed_ratio`` = 1 / limit, ``ok`` = |ratio| <= allowed_ratio,
    ``result`` the name of the load case or combination, ``measure``
    "mean" or "max", ``column_drifts`` the drift of each column line of
    the storey (order of ``Storey.columns``).
    """

    storey: int
    bottom: float
    top: float
    height: float
    drift: float
    ratio: float
    allowed_ratio: float
    ok: bool
    result: str
    measure: str
    column_drifts: tuple[float, ...]

    @property
    def limit(self) -> float:
        """The limit as h / limit (400 for h/400)."""
        return 1.0 / self.allowed_ratio


def _member_kinds(frame: Frame, column_angle: float, beam_angle: float):
    xy = np.array([(n.x, n.y) for n in frame.nodes], dtype=float).reshape(-1, 2)
    s = np.array([m.start for m in frame.members], dtype=np.intp)
    e = np.array([m.end for m in frame.members], dtype=np.intp)
    d = xy[e] - xy[s]
    ang = np.degrees(np.arctan2(np.abs(d[:, 1]), np.abs(d[:, 0])))  # 0 horizontal, 90 vertical
    is_col = ang >= 90.0 - column_angle
    is_beam = ang <= beam_angle
    # a column's lower and upper end
    low = np.where(d[:, 1] >= 0, s, e)
    high = np.where(d[:, 1] >= 0, e, s)
    return xy, s, e, is_col, is_beam, low, high


def _cluster(values: Sequence[float], tol: float) -> list[float]:
    out: list[list[float]] = []
    for v in sorted(values):
        if out and v - out[-1][-1] <= tol:
            out[-1].append(v)
        else:
            out.append([v])
    return [float(np.mean(g)) for g in out]


def find_storeys(
    frame: Frame,
    levels: Iterable[float] | None = None,
    *,
    column_angle: float = 5.0,
    beam_angle: float = 30.0,
    tol: float | None = None,
    length_text: Callable[[float], str] | None = None,
) -> Storeys:
    """Storeys of a frame, from where beams meet columns or from a list.

    Parameters
    ----------
    frame : the frame
    levels : elevations [length] of the storey tops, or None to find them
        (elevations of nodes that end both a beam and a column)
    column_angle : largest angle [degrees] from vertical of a column
    beam_angle : largest angle [degrees] from horizontal of a beam
    tol : elevations closer than this [length] are one level (default
        1e-6 times the frame's largest extent)
    length_text : how a length [length] is written in the warnings and the
        error (default ``f"{v:g}"``), e.g. in the drawing's own unit

    Returns
    -------
    :class:`Storeys` (empty when the frame has no column)

    Raises
    ------
    ValueError : an explicit level has no column top on it
    """
    if not frame.members:
        return Storeys(0.0, ())
    xy, s, e, is_col, is_beam, low, high = _member_kinds(frame, column_angle, beam_angle)
    if not is_col.any():
        return Storeys(0.0, ())
    extent = float(np.ptp(xy, axis=0).max()) if len(xy) else 0.0
    tol = 1e-6 * max(extent, 1e-300) if tol is None else float(tol)
    fmt = length_text or (lambda v: f"{v:g}")
    y = xy[:, 1]
    base = float(y[low[is_col]].min())
    warnings: list[str] = []
    if levels is None:
        beam_nodes = set(s[is_beam]) | set(e[is_beam])
        col_nodes = set(s[is_col]) | set(e[is_col])
        joint = sorted(beam_nodes & col_nodes)
        tops = _cluster([float(y[n]) for n in joint if y[n] > base + tol], tol)
    else:
        tops = _cluster([float(v) for v in levels if float(v) > base + tol], tol)
    # column members by their upper node (for walking down a column line)
    below: dict[int, list[int]] = {}
    for j in np.flatnonzero(is_col):
        below.setdefault(int(high[j]), []).append(int(low[j]))
    elev = [base] + tops
    storeys: list[Storey] = []
    for k in range(1, len(elev)):
        bot, top = elev[k - 1], elev[k]
        tops_here = sorted(n for n in below if abs(y[n] - top) <= tol)
        if not tops_here:
            if levels is not None:
                raise ValueError(f"level at elevation {fmt(top)} has no column top on it")
            continue  # pragma: no cover - a found level always has one
        cols: list[tuple[int, int]] = []
        for t in tops_here:
            for start in below[t]:
                n = start
                seen = {t}
                while y[n] > bot + tol and n in below and n not in seen:
                    seen.add(n)
                    n = below[n][0]
                if abs(y[n] - bot) <= tol:
                    cols.append((t, n))
                else:
                    warnings.append(
                        f"storey {k}: the column under node {t} does not reach the level at {fmt(bot)}; "
                        "it is left out of the drift")
        if not cols:
            warnings.append(f"storey {k} (levels {fmt(bot)} to {fmt(top)}) has no column line from level to level")
        storeys.append(Storey(k, bot, top, tuple(dict.fromkeys(cols))))
    if len(storeys) > 1:
        hs = np.array([st.height for st in storeys])
        small = np.flatnonzero(hs < 0.1 * np.median(hs))
        for i in small:
            st = storeys[i]
            warnings.append(
                f"storey {st.index} is only {fmt(st.height)} high (levels {fmt(st.bottom)} and {fmt(st.top)}); "
                "two levels drawn a little apart may have been meant as one")
    return Storeys(base, tuple(storeys), tuple(warnings))


def storey_drifts(
    frame: Frame,
    result: CaseResult,
    storeys: Storeys | None = None,
    *,
    limit: float = DEFAULT_DRIFT_LIMIT,
    measure: str = "mean",
) -> list[StoreyDrift]:
    """Drift of every storey in one result.

    Parameters
    ----------
    frame : the frame the result belongs to
    result : a load case or combination result with displacements
    storeys : from :func:`find_storeys` (found from the frame by default)
    limit : allowed drift as h / limit (default 400: h/400, common
        practice for service wind drift; usual range 600 to 400)
    measure : "mean" (default) or "max" over the storey's column lines

    Returns
    -------
    one :class:`StoreyDrift` per storey that has column lines, lowest first

    Raises
    ------
    ValueError : the result has no displacements (solved without sections)
    """
    if result.displacements is None:
        raise ValueError(f"result {result.name!r} has no displacements (members without sections)")
    if measure not in ("mean", "max"):
        raise ValueError("measure must be 'mean' or 'max'")
    if not (limit > 0 and math.isfinite(limit)):
        raise ValueError(f"drift limit must be a positive number, got {limit!r}")
    st_all = find_storeys(frame) if storeys is None else storeys
    ux = result.displacements[:, 0]
    allowed = 1.0 / float(limit)
    out: list[StoreyDrift] = []
    for st in st_all:
        if not st.columns:
            continue
        cd = np.array([ux[t] - ux[b] for t, b in st.columns], dtype=float)
        drift = float(cd.mean()) if measure == "mean" else float(cd[int(np.argmax(np.abs(cd)))])
        ratio = drift / st.height
        out.append(StoreyDrift(st.index, st.bottom, st.top, st.height, drift, ratio, allowed,
                               bool(abs(ratio) <= allowed), result.name, measure,
                               tuple(float(v) for v in cd)))
    return out


def drift_envelope(
    frame: Frame,
    results: Sequence[CaseResult] | Mapping[str, CaseResult],
    storeys: Storeys | None = None,
    *,
    limit: float = DEFAULT_DRIFT_LIMIT,
    measure: str = "mean",
) -> list[StoreyDrift]:
    """Per storey, the drift of largest magnitude over several results
    (the governing result is its ``result``); results without
    displacements are skipped.  Ties go to the earlier result."""
    res = list(results.values()) if isinstance(results, Mapping) else list(results)
    st_all = find_storeys(frame) if storeys is None else storeys
    best: dict[int, StoreyDrift] = {}
    for r in res:
        if r.displacements is None:
            continue
        for d in storey_drifts(frame, r, st_all, limit=limit, measure=measure):
            cur = best.get(d.storey)
            if cur is None or abs(d.ratio) > abs(cur.ratio):
                best[d.storey] = d
    return [best[k] for k in sorted(best)]


def node_table(frame: Frame, result: CaseResult) -> dict[str, np.ndarray]:
    """Node coordinates and displacements of one result as arrays.

    Keys: ``node`` (id), ``x``, ``y`` [length], ``ux``, ``uy`` [length,
    global X right / Y up], ``rz`` [rad, counter-clockwise].  When the
    result has no displacements (solved without sections) ``ux``, ``uy``
    and ``rz`` are NaN.
    """
    n = len(frame.nodes)
    xy = np.array([(nd.x, nd.y) for nd in frame.nodes], dtype=float).reshape(n, 2)
    d = result.displacements
    if d is None:
        d = np.full((n, 3), np.nan)
    return {
        "node": np.array([nd.id for nd in frame.nodes], dtype=np.intp),
        "x": xy[:, 0].copy(),
        "y": xy[:, 1].copy(),
        "ux": np.asarray(d[:, 0], dtype=float).copy(),
        "uy": np.asarray(d[:, 1], dtype=float).copy(),
        "rz": np.asarray(d[:, 2], dtype=float).copy(),
    }
