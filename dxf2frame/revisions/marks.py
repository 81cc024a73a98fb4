"""The marked drawing: a copy of the newest revision with its changes drawn.

:func:`mark_changes` adds one layer (settings ``[output_layers] changes``)
with revision clouds (:func:`cloud_points`) and numbered tags around the
flagged, new and removed members and supports of the last pair of
revisions, and a change schedule beside the frame.
"""
from __future__ import annotations

import math
from pathlib import Path
from typing import Mapping, Sequence

import numpy as np
import shapely

from ..atomic import atomic_path
from ..draw import LabelPlacer, DrawingObstacles, drawing_obstacles, keep_clear
from ..errors import InputFileError
from .data import Comparison, MemberRef, ValueChange
from ..numbers import cell_value
from .outputs import format_percent, format_point, unit_labels
from ..settings import Settings
from ..units import INSUNITS, length_unit_scale

__all__ = ["cloud_points", "mark_changes"]


# -- the marked drawing ----------------------------------------------------------------------

_CHANGES_COLOR = 30  # ACI orange, the nearest index colour of the true colour below
_CHANGES_RGB = (222, 110, 24)  # our own scheme: warm orange, apart from the result layers' hues
#: tag of a changed member or support: a notation of its own (C1... are combination keys)
_CHANGED_TAG = "Δ"
_NEW_COLOR = 3  # ACI green
_REMOVED_COLOR = 8  # ACI grey
_CLOUD_BULGE = 0.55  # tan(included angle / 4): scallops of about 115 degrees


def cloud_points(xmin: float, ymin: float, xmax: float, ymax: float, arc: float) -> list[tuple[float, float, float]]:
    """Vertices ``(x, y, bulge)`` of a closed revision cloud around a box.

    The box is walked counter-clockwise; each edge is cut into scallops of
    chord about ``arc`` with a positive bulge, so every arc bulges outward.
    """
    corners = [(xmin, ymin), (xmax, ymin), (xmax, ymax), (xmin, ymax)]
    pts: list[tuple[float, float, float]] = []
    for k in range(4):
        (x0, y0), (x1, y1) = corners[k], corners[(k + 1) % 4]
        n = max(1, int(round(math.hypot(x1 - x0, y1 - y0) / arc)))
        for s in range(n):
            t = s / n
            pts.append((x0 + t * (x1 - x0), y0 + t * (y1 - y0), _CLOUD_BULGE))
    return pts


def _drawing_unit(doc, fallback: str | None) -> str:
    code = int(doc.header.get("$INSUNITS", 0) or 0)
    if code in INSUNITS:
        return INSUNITS[code]
    if fallback:
        return fallback
    raise InputFileError("the drawing's $INSUNITS header does not give its length unit; "
                         "give --length-unit or [units] length in the settings")


def _value_line(vc: ValueChange, unit: str) -> str:
    label = {"deflection": "defl"}.get(vc.quantity, vc.quantity)
    pct = format_percent(vc)
    return f"{label} {cell_value(vc.old)} -> {cell_value(vc.new)} {unit}" + (f" {pct}" if pct else "")


def mark_changes(
    newest_dxf_source: Path | str,
    newest_report: Mapping,
    cmp: Comparison,
    out_path: Path | str,
    settings: Settings | None = None,
    *,
    drawing_unit: str | None = None,
) -> Path:
    """Write a copy of the newest drawing with a layer marking the last pair's changes.

    On the layer ``settings.output_layer("changes")`` (default
    ``"RESULT-CHANGES"``; ``settings`` None: the defaults):

    * a revision cloud (closed LWPOLYLINE of outward arcs) around each
      flagged member and each flagged support, with a numbered tag
      (``Δ1``, ``Δ2``, ...: not ``C1``, which names combinations) in a
      circle beside it;
    * a green cloud and tag ``N1``, ... around each new member and support;
    * a dashed grey line and tag ``R1``, ... where a removed member was;
    * a change schedule to the right of the frame (moved to the nearest
      place clear of the drawing's own content and of the marks): per tag
      the member or support and one line per flagged quantity, e.g.
      ``M 33.1 -> 41.2 kN*m (+24%)``.

    Every original entity is kept.  The copy passes ezdxf's audit and is
    written atomically.  ``newest_report`` gives the drawing's length unit
    (``units.drawing_length``) when the header does not; ``drawing_unit``
    overrides both.
    """
    from ..drawing_file import open_document

    settings = settings or Settings()
    src = Path(newest_dxf_source)
    # the same opening path as check and solve: damaged files are recovered
    doc, _notes = open_document(src, settings)
    unit = drawing_unit or _drawing_unit(doc, (newest_report.get("units") or {}).get("drawing_length")
                                         or settings.length_unit)
    s = length_unit_scale(cmp.units["length"]) / length_unit_scale(unit)  # comparison length -> drawing units
    layer = settings.output_layer("changes")
    obst = drawing_obstacles(doc, lambda name: name.upper() == layer.upper() or name.upper().startswith("RESULT-"))
    _prepare_layer(doc, layer)
    pair = cmp.pairs[-1] if cmp.pairs else None
    pen = _Marker.around(doc.modelspace(), layer, pair, s)
    if pair is not None:
        pen.keep_clear_of(list(obst.geoms) + _member_lines(pair, s))
        entries = _mark_pair(pen, pair, unit_labels(cmp.units))
        n0 = len(pen.msp)
        _write_schedule(pen, pair, cmp, entries)
        _keep_schedule_clear(pen, list(pen.msp)[n0:], obst)
    return _save_audited(doc, Path(out_path))


# -- the steps of a marked drawing -----------------------------------------------------------


def _prepare_layer(doc, layer: str) -> None:
    if layer not in doc.layers:
        lay = doc.layers.add(layer, color=_CHANGES_COLOR)
        if doc.dxfversion > "AC1009":                  # R12 has no true colour
            lay.rgb = _CHANGES_RGB
    if "D2F-CLOUD" not in doc.linetypes:
        doc.linetypes.add("D2F-CLOUD", pattern=[0.6, 0.5, -0.1], description="dxf2frame change cloud")


class _Marker:
    """Draws clouds, tags and texts on the changes layer, sized to the extent
    of the compared members (``s``: comparison length -> drawing units)."""

    def __init__(self, msp, layer: str, s: float, lo: np.ndarray, hi: np.ndarray) -> None:
        self.msp, self.layer, self.s = msp, layer, s
        self.lo, self.hi = lo, hi
        self.extent = float(max(hi[0] - lo[0], hi[1] - lo[1], 1e-9))
        self.margin, self.arc, self.height = 0.015 * self.extent, 0.02 * self.extent, 0.011 * self.extent

    @classmethod
    def around(cls, msp, layer: str, pair, s: float) -> "_Marker":
        refs = [m.new for m in pair.matched] + pair.new_members + pair.removed_members if pair else []
        pts = [p for r in refs for p in (r.start, r.end)]
        pts += [p for r in (pair.reactions if pair else []) for p in (r.new_at,)]
        xy = np.array(pts or [(0.0, 0.0), (1.0, 1.0)], float) * s
        return cls(msp, layer, s, xy.min(axis=0), xy.max(axis=0))

    def attribs(self, color: int | None) -> dict:
        return {"layer": self.layer} if color is None else {"layer": self.layer, "color": color}

    def cloud(self, box, color: int | None = None) -> None:
        xmin, ymin, xmax, ymax = box
        m = self.margin
        self.msp.add_lwpolyline(cloud_points(xmin - m, ymin - m, xmax + m, ymax + m, self.arc),
                                format="xyb", close=True, dxfattribs=self.attribs(color))

    def keep_clear_of(self, obstacles: Sequence) -> None:
        """Tags placed from now on avoid ``obstacles`` (the drawing's own content) and each other."""
        self.placer = LabelPlacer(list(obstacles), cell=4 * self.height)

    def tag(self, label: str, at: tuple[float, float], color: int | None = None) -> None:
        r = 1.3 * self.height * max(1.0, 0.45 * len(label))
        placer = getattr(self, "placer", None)
        if placer is not None:
            # the preferred place, else rings around it (8 directions, farther each time)
            d = np.array([(math.cos(a), math.sin(a)) for a in np.linspace(0, 2 * math.pi, 8, endpoint=False)])
            cands = [np.array(at)] + [np.array(at) + d * (k * 1.5 * r) for k in range(1, 7)]
            cands = np.vstack(cands)
            ok = placer.free_of_obstacles(cands, r, r)
            free = [c for c, good in zip(cands, ok) if good and placer.free_of_boxes((c[0] - r, c[1] - r, c[0] + r, c[1] + r))]
            at = tuple(map(float, free[0])) if free else at
            placer.add((at[0] - r, at[1] - r, at[0] + r, at[1] + r))
        self.msp.add_circle(at, r, dxfattribs=self.attribs(color))
        self.msp.add_mtext(label, dxfattribs={**self.attribs(color), "char_height": self.height, "insert": at,
                                              "attachment_point": 5})  # middle centre

    def beside(self, a: tuple[float, float], b: tuple[float, float]) -> tuple[float, float]:
        """A point off the midpoint of a-b on its local +y side, clear of the cloud."""
        L = math.dist(a, b) or 1.0
        nx, ny = -(b[1] - a[1]) / L, (b[0] - a[0]) / L
        d = 2 * self.margin + 1.6 * self.height
        return (0.5 * (a[0] + b[0]) + d * nx, 0.5 * (a[1] + b[1]) + d * ny)

    def off_point(self, x: float, y: float) -> tuple[float, float]:
        """A tag's place below right of a point."""
        d = 2 * self.margin + 1.6 * self.height
        return (x + d, y - d)

    def ends(self, r: MemberRef) -> tuple[tuple[float, float], tuple[float, float]]:
        s = self.s
        return (r.start[0] * s, r.start[1] * s), (r.end[0] * s, r.end[1] * s)


def _box_of(a, b) -> tuple[float, float, float, float]:
    return min(a[0], b[0]), min(a[1], b[1]), max(a[0], b[0]), max(a[1], b[1])


def _mark_pair(pen: _Marker, pair, u: Mapping[str, str]) -> list[tuple[str, list[str], int | None]]:
    """Clouds and tags of the pair's changes; returns the schedule entries
    (tag, lines, colour) in tag order."""
    s = pen.s
    entries: list[tuple[str, list[str], int | None]] = []
    for k, m in enumerate(pair.flagged_members, start=1):
        a, b = pen.ends(m.new)
        pen.cloud(_box_of(a, b))
        pen.tag(f"{_CHANGED_TAG}{k}", pen.beside(a, b))
        head = f"member {m.new.id} on {m.new.layer}" + (f", {m.how} from {m.old.id}" if m.how != "same ends" else "")
        entries.append((f"{_CHANGED_TAG}{k}", [head] + [_value_line(v, u[v.quantity]) for v in m.values if v.flagged], None))
    base = len(pair.flagged_members)
    for k, r in enumerate(pair.flagged_reactions, start=base + 1):
        x, y = r.new_at[0] * s, r.new_at[1] * s
        pen.cloud((x, y, x, y))
        pen.tag(f"{_CHANGED_TAG}{k}", pen.off_point(x, y))
        entries.append((f"{_CHANGED_TAG}{k}", [f"reaction at {format_point(r.new_at)}"
                                                 + (f" (moved from {format_point(r.old_at)})"
                                                    if r.old_at != r.new_at else "")]
                        + [_value_line(v, u[v.quantity]) for v in r.values if v.flagged], None))
    for k, m in enumerate(pair.new_members, start=1):
        a, b = pen.ends(m)
        pen.cloud(_box_of(a, b), _NEW_COLOR)
        pen.tag(f"N{k}", pen.beside(a, b), _NEW_COLOR)
        entries.append((f"N{k}", [f"new member {m.id} on {m.layer}"], _NEW_COLOR))
    for k, p in enumerate(pair.new_supports, start=len(pair.new_members) + 1):
        x, y = p[0] * s, p[1] * s
        pen.cloud((x, y, x, y), _NEW_COLOR)
        pen.tag(f"N{k}", pen.off_point(x, y), _NEW_COLOR)
        entries.append((f"N{k}", [f"new support at {format_point(p)}"], _NEW_COLOR))
    for k, m in enumerate(pair.removed_members, start=1):
        a, b = pen.ends(m)
        pen.msp.add_line(a, b, dxfattribs={**pen.attribs(_REMOVED_COLOR), "linetype": "D2F-CLOUD",
                                           "ltscale": max(pen.extent / 50.0, 1e-6)})
        pen.tag(f"R{k}", pen.beside(a, b), _REMOVED_COLOR)
        entries.append((f"R{k}", [f"removed member {m.id} on {m.layer}"], _REMOVED_COLOR))
    for k, p in enumerate(pair.removed_supports, start=len(pair.removed_members) + 1):
        entries.append((f"R{k}", [f"removed support at {format_point(p)}"], _REMOVED_COLOR))
    return entries


def _write_schedule(pen: _Marker, pair, cmp: Comparison, entries: list[tuple[str, list[str], int | None]]) -> None:
    """The change schedule, right of the frame: a title, then per tag its lines."""
    h = pen.height
    x0, y = float(pen.hi[0]) + 6 * pen.margin, float(pen.hi[1])
    title = [f"CHANGES {pair.old_source} -> {pair.new_source}",
             f"flagged above {100 * cmp.threshold:g}% ({cmp.units['force']}, {cmp.units['length']})"]
    title += pair.notes
    if not (entries or pair.notes):
        title.append("no change above the threshold")
    # a width wide enough for the longest line: each line stays one line (ezdxf measures it so too)
    width = 0.75 * h * max([len(t) for t in title] + [len(label) + 2 + len(t) for label, lines, _c in entries
                                                     for t in lines])
    pen.msp.add_mtext("\\P".join(title), dxfattribs={**pen.attribs(None), "char_height": h, "insert": (x0, y),
                                                       "attachment_point": 1, "width": width})
    y -= (len(title) + 1) * 1.7 * h
    for label, lines, color in entries:
        pen.msp.add_mtext(f"{label}  " + "\\P      ".join(lines),
                          dxfattribs={**pen.attribs(color), "char_height": h, "insert": (x0, y),
                                      "attachment_point": 1, "width": width})  # top left
        y -= (len(lines) + 0.6) * 1.7 * h


def _member_lines(pair, s: float) -> list:
    """The newest revision's members as lines in drawing units (tags keep off them)."""
    refs = [m.new for m in pair.matched] + list(pair.new_members)
    return [shapely.LineString([(r.start[0] * s, r.start[1] * s), (r.end[0] * s, r.end[1] * s)]) for r in refs]


def _keep_schedule_clear(pen: _Marker, schedule: list, obst: DrawingObstacles) -> None:
    """Move the schedule's texts as one group to the nearest place clear of
    the drawing's own content and of the clouds and tags
    (:func:`~dxf2frame.draw.obstacles.keep_clear`, as the result drawing's
    legend and notes are moved)."""
    from ezdxf import bbox

    b = bbox.extents(schedule, fast=False)
    if not b.has_data:
        return
    own = set(schedule)
    ours = []
    for e in pen.msp.query(f'*[layer=="{pen.layer}"]'):
        m = bbox.extents([e], fast=True) if e not in own else None
        if m is not None and m.has_data:
            ours.append(shapely.box(m.extmin.x, m.extmin.y, m.extmax.x, m.extmax.y))
    content = obst.extents or (b.extmin.x, b.extmin.y, b.extmax.x, b.extmax.y)
    if ours:
        x0, y0, x1, y1 = shapely.total_bounds(ours)
        content = (min(content[0], x0), min(content[1], y0), max(content[2], x1), max(content[3], y1))
    keep_clear([schedule], obst, ours, content, pen.height)


def _save_audited(doc, out_path: Path) -> Path:
    auditor = doc.audit()
    if auditor.has_errors:  # pragma: no cover - would be a bug here
        raise RuntimeError(f"the marked drawing fails the audit: {[str(e) for e in auditor.errors][:3]}")
    out_path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_path(out_path) as tmp:
        doc.saveas(tmp)
    return out_path
