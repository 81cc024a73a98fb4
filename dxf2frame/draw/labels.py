"""Result labels: which values are written, and where.

Values come in SI (N, N*m) and are written in the report units (a factor
from :func:`dxf2frame.report.unit_factors`); positions and sizes are in
drawing units.  :func:`label_requests` makes the label requests of one
element and diagram, :func:`merge_at_joints` merges equal values at a
node, :func:`place_labels` writes one layer's labels through a
:class:`LabelPlacer`.

Which values are written (per element and diagram; what one would write
by hand):

* the value at each end.  For an envelope: the bound of larger magnitude
  with the key of its governing combination, plus the other bound only if
  it has the other sign and is at least 25 % of the larger;
* the interior extremes: the largest and the smallest value when they lie
  inside the element, not at an end (for an envelope: the largest positive
  of the max curve and the largest negative of the min curve);
* one value at mid-length instead of two end values when the value is the
  same all along (within 0.5 % of the diagram's largest value; e.g. the
  axial force of a column), and likewise for an envelope bound that is
  constant and governs both ends;
* moment only, single results only: each zero crossing (point of
  contraflexure, at most two per element) is marked by a short tick across
  the member and a "0" beside it.  Envelopes get no zero marks: their
  bounds' crossings belong to no single combination;
* nothing below 2 % of the diagram's largest |value| (reactions are always
  written);
* at a node, values of one diagram from different elements whose
  magnitudes agree within 0.5 % of the diagram's largest value are written
  once (at a rigid joint of two members without an external couple the
  end moments are equal); a constant element's one value counts at both
  its end nodes.

Envelope keys: a value's governing combination is written as a short key,
"M=-16.40 [C7]"; Ck is the k-th combination of the envelope.  Under each
layer's scale line the legend lists the keys that layer uses
("governing: C2 = 1.2D+1.6L, C7 = ..."), so each layer reads on its own;
the notes list every key.  "[all]" beside a reaction: every combination
gives the same value.

Placing (:class:`LabelPlacer`), layer by layer (each result layer is read
on its own, as the preview's panels show them; the diagrams of different
layers lie on top of each other anyway): labels go most important first
(the diagram's overall extreme, reactions, interior extremes, constant
values, end values, the other sign at an end, zero marks), larger values
first within a kind.  Each tries candidate boxes in turn: beyond the
diagram's tip, on the other side of the member (end values flush with the
element's end, on its inner side), then all around the point, and keeps
the first that overlaps no placed label of its layer, no member line, no
outline or zero tick of its own diagram (on elements long enough for
labels), no reaction arrow (reactions), and none of the drawing's own TEXT
and MTEXT (titles, grid marks; at most 1000).  Only obstacles within reach
of some label are indexed, so a big frame with few labels stays cheap.  A
label that does not sit right beside its point gets a leader line from the
point.  When nothing near is free:

* end values, the other sign at an end and zero marks are dropped
  (``DrawingSummary.dropped`` counts them);
* interior extremes and constant values try rings farther out (1.5, 3 and
  5 text heights, with a leader) and are dropped only if those are full
  too (a dense frame seen whole);
* the diagram's overall extreme and the reactions try rings out to 12
  text heights (reactions) and then the nearest free place on the whole
  drawing (:func:`dxf2frame.draw.obstacles.free_spot`, outside the
  drawing's extents when nothing inside is free), with a leader; they are
  never written on the drafter's content nor on another result text.

Every value dropped is named in a warning (console, report, notes layer;
``DrawingSummary.dropped`` counts them, ``dropped_values`` lists them).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable, Iterable, Sequence

import numpy as np
import shapely

from ..numbers import label_value
from .occupancy import Occupancy, present
from .style import TEXT_STYLES, Pen

if TYPE_CHECKING:  # pragma: no cover
    from ezdxf.document import Drawing

    from .curves import Curve

__all__ = ["LabelPlacer"]


# -- constants -----------------------------------------------------------------

_SKIP_LABEL = 0.02         # values below this fraction of the diagram's largest |value| are not written
SAME_AT_JOINT = 0.005     # end values at a node this close in magnitude (fraction of the max) are written once
OTHER_SIGN = 0.25         # envelope: the other sign at an end is written when at least this fraction of the larger
_FLAT = 0.005              # an element whose values vary less than this fraction of the max gets one label
_MAX_TEXT_OBSTACLES = 1000  # the drawing's own texts labels keep off (none when there are more)


# -- small helpers -------------------------------------------------------------


# -- placing boxes -------------------------------------------------------------

Box = tuple[float, float, float, float]
#: finds a free place for a box anywhere on the drawing: the shift (dx, dy), or None
FarSpot = Callable[[Box], "tuple[float, float] | None"]


_PIECE = 16  # segments per piece of a long line in the placer's index


def _short_pieces(geoms: list) -> np.ndarray:
    """``geoms`` with every line of more than ``_PIECE`` segments cut into
    pieces of at most that many (the same linework).  A label box near a
    long diagram outline is then tested against a few short pieces the
    index finds, not against the whole outline."""
    if not geoms:
        return np.array([], dtype=object)
    arr = np.array(geoms, dtype=object)
    lines = shapely.get_type_id(arr) == 1                      # LineString
    counts = shapely.get_num_coordinates(arr)
    long = lines & (counts > _PIECE + 1)
    if not long.any():
        return arr
    pieces = []
    for g in arr[long]:
        xy = shapely.get_coordinates(g)
        starts = np.arange(0, len(xy) - 1, _PIECE)
        pieces.extend(shapely.linestrings(xy[a:a + _PIECE + 1]) for a in starts)
    return np.concatenate([arr[~long], np.array(pieces, dtype=object)])


class LabelPlacer:
    """Place axis-aligned text boxes so they avoid each other and given lines.

    Parameters
    ----------
    obstacles : shapely geometries (member lines, diagram outlines, arrow
        shafts, the drawing's own texts) that labels should not touch;
        indexed once in an STRtree
    cell : grid cell size for the placed boxes (about 4 text heights)
    taken : the grid of boxes placed before (shared by the placers of all
        result layers, so no two result texts overlap); None: a new one

    Placed boxes live in a uniform grid (dict of cells), so each test looks
    at a handful of neighbours; obstacle tests go to an
    :class:`~dxf2frame.draw.occupancy.Occupancy` of the obstacles (cells of
    1/16 of ``cell``, about a quarter text height), one call per batch of
    candidate boxes (:meth:`free_of_obstacles`).  ``placed`` counts the boxes recorded,
    ``forced`` those recorded although they overlap something, ``extent``
    is the bounding box (xmin, ymin, xmax, ymax) of every recorded box (None
    before the first).
    """

    def __init__(self, obstacles: Sequence, cell: float,
                 taken: dict[tuple[int, int], list[Box]] | None = None) -> None:
        geoms = _short_pieces(list(present(obstacles)))
        self._cell = cell if cell > 0 else 1.0
        self._occupancy = Occupancy(geoms, self._cell / 16.0)
        self._grid: dict[tuple[int, int], list[Box]] = {} if taken is None else taken
        self.placed = 0
        self.forced = 0
        self.extent: Box | None = None

    def _cells(self, b: Box) -> Iterable[tuple[int, int]]:
        c = self._cell
        for i in range(math.floor(b[0] / c), math.floor(b[2] / c) + 1):
            for j in range(math.floor(b[1] / c), math.floor(b[3] / c) + 1):
                yield i, j

    def fits(self, b: Box) -> bool:
        """True when box ``b`` = (xmin, ymin, xmax, ymax) touches no placed box and no obstacle."""
        if not self.free_of_boxes(b):
            return False
        return bool(self._occupancy.free(b[0], b[1], b[2], b[3])[0])

    def free_of_boxes(self, b: Box) -> bool:
        """True when box ``b`` overlaps no placed box (obstacles not tested)."""
        for cell in self._cells(b):
            for o in self._grid.get(cell, ()):
                if b[0] < o[2] and o[0] < b[2] and b[1] < o[3] and o[1] < b[3]:
                    return False
        return True

    def free_of_obstacles(self, centres: np.ndarray, half_w: "float | np.ndarray", half_h: float) -> np.ndarray:
        """Mask of the boxes centred at ``centres`` (k, 2) that touch no
        obstacle, in one call (placed boxes not tested); ``half_w`` one for
        all or one per box."""
        c = np.asarray(centres, dtype=float).reshape(-1, 2)
        return self._occupancy.free(c[:, 0] - half_w, c[:, 1] - half_h, c[:, 0] + half_w, c[:, 1] + half_h)

    def take(self, b: Box) -> None:
        """Record box ``b`` as a placed label (the caller checked it is free)."""
        self.add(b)
        self.placed += 1

    def add(self, b: Box) -> None:
        """Record box ``b`` as taken (whether or not it fits)."""
        for cell in self._cells(b):
            self._grid.setdefault(cell, []).append(b)
        e = self.extent
        self.extent = b if e is None else (min(e[0], b[0]), min(e[1], b[1]), max(e[2], b[2]), max(e[3], b[3]))

    def try_place(self, cx: float, cy: float, half_w: float, half_h: float) -> bool:
        """Record the box centred at (cx, cy) when it is free; True if it was."""
        b = (cx - half_w, cy - half_h, cx + half_w, cy + half_h)
        if not self.fits(b):
            return False
        self.take(b)
        return True

    def place(self, candidates: Sequence[tuple[float, float]], half_w: float, half_h: float) -> tuple[float, float, bool]:
        """Centre of the first free candidate box (or the first candidate, forced).

        Returns ``(x, y, fitted)``; the chosen box is recorded either way.
        """
        for cx, cy in candidates:
            if self.try_place(cx, cy, half_w, half_h):
                return cx, cy, True
        cx, cy = candidates[0]
        self.add((cx - half_w, cy - half_h, cx + half_w, cy + half_h))
        self.placed += 1
        self.forced += 1
        return cx, cy, False


# -- label requests ------------------------------------------------------------


@dataclass
class Spot:
    """One way to write a label: its text and the point it belongs to.

    anchor : the point the value belongs to (curve tip, arrow middle)
    base : the matching point on the member (or the node)
    out : unit vector from the member toward the anchor's side
    along : unit vector along the member
    inward : end values: +1 or -1, the direction along ``along`` into the
        element (the label sits flush with the element's end); 0 otherwise
    key : index of the governing result of an envelope (None: no key written)
    """

    text: str
    anchor: np.ndarray
    base: np.ndarray
    out: np.ndarray
    along: np.ndarray
    inward: float = 0.0
    key: int | None = None


#: placing order: the diagram's overall extreme gets 0 (set later)
PRIORITY = {"reaction": 0.5, "extreme": 1.0, "flat": 1.5, "end": 2.0, "other": 2.5, "zero": 3.0}
#: kinds that are written even when crowded (farther out with a leader line, else overlapping)
_MUST = {"reaction", "extreme", "flat"}


@dataclass
class Label:
    """A value to write.

    kind : "extreme" (interior), "end", "other" (the other sign at an
        envelope's end), "flat" (one value for a whole element), "zero"
        (a zero crossing of the moment), "reaction"
    value : the value [SI]; ordering and joint merging use its magnitude
    spots : where it may be written; several when equal values at a joint
        were merged (written once, beside whichever member has room)
    must : when crowded, tried farther out (with a leader line) before it is dropped
    force : written even where it overlaps (the diagram's overall extreme, reactions)
    nodes : the node an end value belongs to; both end nodes for a flat
        element's one value; none for the others
    element : the element it belongs to (-1: none)
    """

    priority: float
    kind: str
    value: float
    layer: str
    spots: list[Spot]
    must: bool = False
    force: bool = False
    nodes: tuple[int, ...] = ()
    element: int = -1
    partner: "Label | None" = None      # "other": the larger bound at the same end
    merged_into: "Label | None" = None  # set when merged into another label at a joint


def label_requests(cs: list[tuple["Curve", np.ndarray, np.ndarray, np.ndarray]], sym: str, t: np.ndarray,
                    nrm: np.ndarray, L: float, nodes: tuple[int, int], element: int, gmax: float,
                    factor: float, keyed: bool) -> list[Label]:
    """Label requests of one element and diagram (rules in the module docstring).

    cs : per curve of the element (one "single" curve, or the "max" and
        "min" curves of an envelope): (curve, ordinates [drawing units],
        curve points, base points on the member)
    t, nrm : unit local x and y of the element; L : its length [m]
    nodes : its start and end node; gmax : the diagram's largest |value| [SI]
    factor : SI -> report units; keyed : append the governing result's key
    """
    # Long by intent: the label rules of the module docstring, in the order they are stated there.
    skip = _SKIP_LABEL * gmax
    tol = SAME_AT_JOINT * gmax
    flat = [float(np.ptp(c.y)) <= _FLAT * gmax for c, *_r in cs]
    mid = [int(np.argmin(np.abs(c.x - L / 2))) for c, *_r in cs]
    out: list[Label] = []

    def add(kind: str, ci: int, j: int, inward: float = 0.0, at: tuple[int, ...] = ()) -> Label | None:
        c, o, pts, base = cs[ci]
        v = float(c.y[j])
        if not abs(v) >= skip or v == 0.0:
            return None
        text = f"{sym}={label_value(v * factor)}"
        key = None
        if keyed:
            key = int(c.who[j])
            text += f" [C{key + 1}]"
        u = nrm if o[j] >= 0 else -nrm
        spot = Spot(text, pts[j], base[j], u, t, inward, key)
        out.append(Label(PRIORITY[kind], kind, v, "", [spot], must=kind in _MUST, nodes=at, element=element))
        return out[-1]

    def picks(js: list[int]) -> list[tuple[str, int]]:
        """(kind, curve) written at one end (or at mid-length): the value, or
        for an envelope the bound of larger magnitude, plus the other bound
        when it has the other sign and is not much smaller."""
        if len(cs) == 1:
            return [("end", 0)]
        vmax, vmin = float(cs[0][0].y[js[0]]), float(cs[1][0].y[js[1]])
        big, other = (0, 1) if abs(vmax) >= abs(vmin) else (1, 0)
        vb, vo = (vmax, vmin) if big == 0 else (vmin, vmax)
        got = [("end", big)]
        if vo * vb < 0 and abs(vo) >= OTHER_SIGN * abs(vb):
            got.append(("other", other))
        return got

    def write(group: list[tuple[str, int]], where: int, at_mid: set[tuple[str, int]]) -> None:
        """One end's picks (``where`` 0: start, 1: end); those in ``at_mid``
        go to mid-length instead, once.  The other bound is tied to the
        larger one (it is not written without it)."""
        big = None
        for kind, ci in group:
            if (kind, ci) in at_mid:
                lb = add("flat" if kind == "end" else kind, ci, mid[ci], 0.0, nodes)
            else:
                j = 0 if where == 0 else len(cs[ci][0].y) - 1
                lb = add(kind, ci, j, 1.0 if where == 0 else -1.0, nodes[where:where + 1])
            if kind == "other" and lb is not None:
                lb.partner = big
            elif kind == "end":
                big = lb

    if all(flat):                                      # one value for the whole element
        write(picks(mid), 0, set(picks(mid)))
        return out
    at_start, at_end = picks([0] * len(cs)), picks([len(c.y) - 1 for c, *_r in cs])
    # a bound that is constant along the element and written at both ends: once, at mid-length
    once = {pk for pk in at_start if pk in at_end and flat[pk[1]]}
    write(at_start, 0, once)
    write([pk for pk in at_end if pk not in once], 1, set())
    for ci, (c, *_r) in enumerate(cs):
        inner = np.flatnonzero((c.x > 1e-9 * L) & (c.x < L * (1 - 1e-9)))
        if not len(inner):
            continue
        hi, lo = max(c.y[0], c.y[-1]), min(c.y[0], c.y[-1])
        if c.role in ("single", "max"):
            j = int(inner[np.argmax(c.y[inner])])
            if c.y[j] > hi + tol and (c.role == "single" or c.y[j] > 0):     # a true interior maximum
                add("extreme", ci, j)
        if c.role in ("single", "min"):
            j = int(inner[np.argmin(c.y[inner])])
            if c.y[j] < lo - tol and (c.role == "single" or c.y[j] < 0):     # a true interior minimum
                add("extreme", ci, j)
    return out


def merge_at_joints(labels: list[Label], tol: float) -> list[Label]:
    """Values at one node whose magnitudes agree within ``tol`` [SI] and that
    come from different elements become one label with several spots
    (written once).  A flat element's one value counts at both its end nodes
    (but two flat values are not merged: they may be far apart).  Order is
    kept; linear in the number of labels."""
    out: list[Label] = []
    groups: dict[int, list[tuple[Label, set[int]]]] = {}
    for lb in labels:
        home = None
        for node in lb.nodes:
            for rep, elements in groups.get(node, ()):
                if (lb.element not in elements and abs(abs(lb.value) - abs(rep.value)) <= tol
                        and not (lb.kind == "flat" and rep.kind == "flat")):
                    home = (rep, elements)
                    break
            if home is not None:
                break
        if home is None:
            entry = (lb, {lb.element})
            for node in lb.nodes:
                groups.setdefault(node, []).append(entry)
            out.append(lb)
            continue
        rep, elements = home
        lb.merged_into = rep
        rep.spots += lb.spots
        rep.priority = min(rep.priority, lb.priority)
        rep.must = rep.must or lb.must
        rep.force = rep.force or lb.force
        elements.add(lb.element)
    return out


# -- placing labels ------------------------------------------------------------

_RING = np.column_stack([np.cos(np.radians(np.arange(0.0, 360.0, 30.0))),
                         np.sin(np.radians(np.arange(0.0, 360.0, 30.0)))])
_RING[np.abs(_RING) < 1e-12] = 0.0


def _ring(anchor: np.ndarray, half_w: float, half_h: float, gaps: Sequence[float], pref: np.ndarray) -> np.ndarray:
    """Box centres all around ``anchor`` (every 30 degrees), the box edge
    ``gap`` from it, for each gap in turn; directions closest to ``pref``
    first.  Shape (12 * len(gaps), 2)."""
    d = _RING
    with np.errstate(divide="ignore"):
        ext = np.minimum(half_w / np.abs(d[:, 0]), half_h / np.abs(d[:, 1]))   # centre to box edge along d
    order = np.argsort(-(d @ pref), kind="stable")
    d, ext = d[order], ext[order]
    g = np.repeat(np.asarray(gaps, dtype=float), len(d))
    return anchor + np.tile(d, (len(gaps), 1)) * (g + np.tile(ext, len(gaps)))[:, None]


def _candidates(sp: Spot, kind: str, half_w: float, half_h: float, h: float, far: bool = False) -> np.ndarray:
    """Centres to try for a label box of half size ``half_w`` x ``half_h``, best first.

    Near candidates: beyond the diagram's tip, on the other side of the
    member, farther out, then all around the anchor point; end values sit
    flush with the element's end on its inner side; a zero crossing's "0"
    sits in one of the four corners beside its tick.  ``far``: rings
    farther from the anchor (written with a leader line), for labels that
    must be written.
    """
    u, t = sp.out, sp.along
    gap = 0.35 * h
    e = half_w * abs(u[0]) + half_h * abs(u[1])           # box half-extent along u
    s = half_w * abs(t[0]) + half_h * abs(t[1])           # box half-extent along t
    tip = sp.anchor + u * (gap + e)
    back = sp.base - u * (gap + e)
    if kind == "zero":
        a, b = t * (s + 0.3 * h), u * (e + 0.25 * h)
        return np.array([sp.base + b + a, sp.base + b - a, sp.base - b + a, sp.base - b - a])
    if sp.inward:
        w = t * sp.inward
        f = w * (s + 0.25 * h)
        first, pref = [tip + f, back + f], w + 0.5 * u
    else:
        half = t * (s + 0.5 * gap)
        first, pref = [tip, tip + half, tip - half, back, back + half, back - half, tip + u * (2 * e + gap)], u
    if far:
        gaps = (1.5 * h, 3.0 * h, 5.0 * h) + ((8.0 * h, 12.0 * h) if kind == "reaction" else ())
        return _ring(sp.anchor, half_w, half_h, gaps, pref)
    return np.vstack([np.array(first), _ring(sp.anchor, half_w, half_h, (gap, 1.2 * h), pref)])


def _place_one(placer: LabelPlacer, lb: Label, font, h: float, far_spot: "FarSpot | None" = None):
    """(spot, x, y, half_w, half_h) where ``lb`` is written, or None when it
    is dropped (no free spot).  A label that must be written (``force``)
    and finds nothing free near goes to the free spot ``far_spot`` finds
    (farther out, written with a leader), or is dropped when that place
    is taken too; with no ``far_spot`` it is written where it overlaps."""
    opts = []
    for sp in lb.spots:
        hw = 0.5 * text_width(font, sp.text, h) + 0.15 * h
        opts.append((sp, hw, 0.7 * h))
    for far in (False, True):
        if far and not lb.must:
            return None
        tries = []
        for sp, hw, hh in opts:
            cands = _candidates(sp, lb.kind, hw, hh, h, far)
            tries.append((cands, placer.free_of_obstacles(cands, hw, hh)))
        for k in range(max(len(c) for c, _ok in tries)):
            for (sp, hw, hh), (cands, ok) in zip(opts, tries):     # the merged spots take turns
                if k < len(cands) and ok[k]:
                    x, y = float(cands[k][0]), float(cands[k][1])
                    b = (x - hw, y - hh, x + hw, y + hh)
                    if placer.free_of_boxes(b):
                        placer.take(b)
                        return sp, x, y, hw, hh
    if not lb.force:
        return None
    sp, hw, hh = opts[0]
    c = _candidates(sp, lb.kind, hw, hh, h)[0]
    if far_spot is not None:                                    # a free place farther out, or none
        got = far_spot((float(c[0]) - hw, float(c[1]) - hh, float(c[0]) + hw, float(c[1]) + hh))
        if got is None:
            return None
        x, y = float(c[0]) + got[0], float(c[1]) + got[1]
        b = (x - hw, y - hh, x + hw, y + hh)
        if not placer.free_of_boxes(b):
            return None
        placer.take(b)
        return sp, x, y, hw, hh
    x, y, _ok = placer.place([(float(c[0]), float(c[1]))], hw, hh)      # nothing free: overlap
    return sp, x, y, hw, hh


def _apart(sp: Spot, x: float, y: float, half_w: float, half_h: float) -> float:
    """How far the box centred at (x, y) sits from its spot: the larger of
    its gaps across and along the member, from the anchor or the base
    point, whichever is nearer."""
    c = np.array([x, y])
    gaps = []
    for p in (sp.anchor, sp.base):
        g = 0.0
        for d in (sp.out, sp.along):
            ext = half_w * abs(d[0]) + half_h * abs(d[1])
            g = max(g, abs(float((p - c) @ d)) - ext)
        gaps.append(g)
    return min(gaps)


def place_labels(pen: Pen, placer: LabelPlacer, labels: list[Label], font, h: float,
                 far_spot: "FarSpot | None" = None) -> tuple[list[str], set[int]]:
    """Write the labels of one layer, most important (then largest) first;
    returns (the texts of the labels dropped, envelope keys written).
    ``far_spot``: see :func:`_place_one`."""
    dropped: list[str] = []
    used: set[int] = set()
    lost: set[int] = set()          # id() of the labels dropped
    order = sorted(range(len(labels)),
                   key=lambda k: (labels[k].priority, -float(f"{abs(labels[k].value):.9g}"), k))
    for k in order:
        lb = labels[k]
        partner = lb.partner
        while partner is not None and partner.merged_into is not None:
            partner = partner.merged_into
        # the other bound at an end is not written without the larger one
        got = None if partner is not None and id(partner) in lost else _place_one(placer, lb, font, h, far_spot)
        if got is None:
            lost.add(id(lb))
            dropped.append(lb.spots[0].text)
            continue
        sp, x, y, hw, hh = got
        if _apart(sp, x, y, hw, hh) > 1.0 * h:
            # a leader from the point to the label when the label does not sit right beside it
            q = np.array([min(max(sp.anchor[0], x - hw), x + hw), min(max(sp.anchor[1], y - hh), y + hh)])
            pen.line(sp.anchor, q, lb.layer)
        pen.text(sp.text, (x, y + centre_lift(font, h)), h, lb.layer)
        if sp.key is not None:
            used.add(sp.key)
    return dropped, used


def drawing_texts(doc: "Drawing", result_layers: Iterable[str], limit: int = _MAX_TEXT_OBSTACLES) -> list:
    """Boxes (shapely) of the drawing's own TEXT and MTEXT in modelspace
    (titles, grid marks), so labels keep off them; none when there are more
    than ``limit`` (a heavily annotated sheet: not worth the time)."""
    from ezdxf import bbox

    skip = {n.upper() for n in result_layers}
    ents = [e for e in doc.modelspace().query("TEXT MTEXT") if e.dxf.get("layer", "0").upper() not in skip]
    if len(ents) > limit:
        return []
    out = []
    for e in ents:
        try:
            b = bbox.extents([e], fast=True)
        except Exception:  # noqa: BLE001 - an odd text entity is just not an obstacle
            continue
        if b.has_data:
            out.append(shapely.box(b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y))
    return out


def as_lines(polys: list[np.ndarray]) -> np.ndarray:
    """shapely LineStrings (an object array) of a list of (k, 2) polylines, in one call."""
    polys = [q for q in polys if len(q) >= 2]
    if not polys:
        return np.zeros(0, dtype=object)
    idx = np.repeat(np.arange(len(polys)), [len(q) for q in polys])
    return shapely.linestrings(np.vstack(polys), indices=idx)


def geometries_near(geoms: np.ndarray, labels: list[Label], reach: float) -> list:
    """The geometries (object array) whose box may come within ``reach`` of
    a label's anchor or base point: the only ones a label of the list can
    touch.

    The points are binned in a grid of ``reach``-sized cells (a summed-area
    table), and a geometry is kept when a point lies in the cells its box
    grown by ``reach`` covers (a few more than needed, never fewer).  Linear
    in the number of geometries; no new geometry is made, so a big frame
    with a handful of labels costs little.
    """
    if not len(geoms) or not labels or not reach > 0:
        return []
    at = np.array([p for lb in labels for sp in lb.spots for p in (sp.anchor, sp.base)], dtype=float)
    origin = at.min(0)
    # cells of at least 1/4096 of the points' spread: a reach tiny against
    # the drawing (a symbol scaled almost to nothing) keeps the grid small
    cell = max(reach, float(np.ptp(at, axis=0).max()) / 4096.0)
    cells = np.floor((at - origin) / cell).astype(int)
    shape = cells.max(0) + 1
    grid = np.zeros(shape + 1, dtype=int)                       # summed-area table, zero first row/column
    np.add.at(grid, (cells[:, 0] + 1, cells[:, 1] + 1), 1)
    grid = grid.cumsum(0).cumsum(1)
    box = shapely.bounds(geoms)
    with np.errstate(over="ignore", invalid="ignore"):
        lo = np.floor((box[:, :2] - reach - origin) / cell)
        hi = np.floor((box[:, 2:] + reach - origin) / cell)
    inside = np.all((hi >= 0) & (lo < shape), axis=1)               # NaN (an empty geometry) is not
    lo = np.clip(np.nan_to_num(lo), 0, shape - 1).astype(int)
    hi = np.clip(np.nan_to_num(hi), 0, shape - 1).astype(int) + 1
    count = grid[hi[:, 0], hi[:, 1]] - grid[lo[:, 0], hi[:, 1]] - grid[hi[:, 0], lo[:, 1]] + grid[lo[:, 0], lo[:, 1]]
    return list(geoms[inside & (count > 0)])


def label_font(h: float):
    try:
        from ezdxf.fonts import fonts

        return fonts.make_font(TEXT_STYLES["D2F-LABELS"], cap_height=h)
    except Exception:  # noqa: BLE001 - no font machinery: estimate widths
        return None


def centre_lift(font, h: float) -> float:
    """How far above a box's centre a middle-centred TEXT of cap height
    ``h`` is inserted so that its extents (cap height above the baseline,
    the font's descender below, as ``ezdxf.bbox`` measures them) are
    centred in the box: half the descender."""
    d = None
    if font is not None:
        try:
            d = float(font.measurements.descender_height) * h / float(font.measurements.cap_height)
        except Exception:  # noqa: BLE001 - no metrics: a typical sans-serif descender
            d = None
    return 0.5 * (d if d is not None and d >= 0 else 0.3 * h)


def text_width(font, text: str, h: float) -> float:
    if font is not None:
        try:
            return float(font.text_width(text))
        except Exception:  # noqa: BLE001
            pass
    return 0.9 * h * len(text)
