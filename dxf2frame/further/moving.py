"""Moving loads and influence lines of a solved drawing.

The path is the settings' ``[moving] path_layer``: a frame layer whose
members form one chain (travel starts at the chain's end with the smaller
X, then the smaller Y), or a layer of its own holding one polyline (or
line) drawn along members.  Each vehicle of ``[[moving.vehicles]]`` crosses
the path in both directions, its front axle moved by ``step``; the
envelope of N, V, M along every member and the governing positions come
from :class:`dxf2frame.solver.MovingLoads` (one factorisation, unit-load
solutions superposed).  The vehicle's effect alone is reported (add the
other loads by superposition); loads act downward (global -Y).

Influence lines (``--influence X,Y``): N, V, M at the member point under
(X, Y), and the reaction components of a support there, per unit load
moving along the path.  Units: SI (N, m) in the outcome; the report and
CSV convert.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import networkx as nx
import numpy as np

from ..errors import AnalysisError, DrawingError, SettingsError
from ..solver import InfluenceLine, LoadPath, MemberEnvelope, MovingLoads, Vehicle, path_along_members, \
    path_through_points, station_grid
from ..solver.errors import LoadError, MissingSectionError, SolverError

__all__ = ["MovingOutcome", "VehicleOutcome", "ProbeInfluence", "load_path", "run_moving"]


@dataclass
class VehicleOutcome:
    """One vehicle's envelopes (per element id), support reaction extremes
    (see :meth:`MovingLoads.reaction_envelope`) and its critical position:
    the largest |M| anywhere, with the axle points (k, 2) [m]."""

    name: str
    loads: tuple[float, ...]
    spacings: tuple[float, ...]
    envelopes: dict[str, MemberEnvelope]
    reactions: list[dict]
    critical: dict
    axles: np.ndarray


@dataclass
class ProbeInfluence:
    """Influence lines at one probe: ``point`` (X, Y) in drawing units,
    the element ``member`` and position ``x`` [m] under it, ``support``
    (index, or None) of a support there, and ``lines`` by quantity (N, V,
    M of the member; fx, fy, m of the support)."""

    point: tuple[float, float]
    member: str
    x: float
    support: int | None
    lines: dict[str, InfluenceLine] = field(default_factory=dict)


@dataclass
class MovingOutcome:
    """The path (``layer``, ``kind`` "members" or "polyline", ``length``
    [m]), ``step`` [m], one :class:`VehicleOutcome` per vehicle, the
    influence lines per probe, and the :class:`MovingLoads` used (for
    drawing)."""

    layer: str
    kind: str
    length: float
    step: float
    vehicles: list[VehicleOutcome]
    influence: list[ProbeInfluence]
    loads: MovingLoads


def _chain(frame, layer: str) -> list[str]:
    """Element ids of the members on ``layer`` in travel order."""
    on = [m for m in frame.members if m.layer.upper() == layer.upper()]
    if not on:
        raise SettingsError(f"no member on the path layer {layer!r}", key="moving.path_layer")
    g = nx.MultiGraph()
    for m in on:
        g.add_edge(m.start, m.end, id=m.id)
    ends = [n for n in g.nodes if g.degree(n) == 1]
    branch = [n for n in g.nodes if g.degree(n) > 2]
    if not nx.is_connected(g) or branch or len(ends) != 2:
        first = on[0]
        why = "branches" if branch else ("is closed" if len(ends) != 2 and nx.is_connected(g) else
                                         "is not one connected chain")
        raise DrawingError(f"the members on the path layer {layer!r} do not form one chain (it {why})",
                           handle=first.handle, layer=first.layer)
    start = min(ends, key=lambda n: (frame.nodes[n].x, frame.nodes[n].y))
    return [g.edges[u, v, k]["id"] for u, v, k in nx.eulerian_path(g, source=start, keys=True)]


def _polyline(model, document, layer: str) -> tuple[list[tuple[float, float]], str]:
    """Points [m] of the one polyline or line on ``layer``, and its handle."""
    if document is None:
        raise SettingsError(f"the path layer {layer!r} cannot be read", key="moving.path_layer")
    ents = [e for e in document.modelspace() if e.dxf.layer.upper() == layer.upper()
            and e.dxftype() in ("LWPOLYLINE", "POLYLINE", "LINE")]
    if len(ents) != 1:
        raise SettingsError(f"the path layer {layer!r} holds {len(ents)} lines or polylines; draw exactly one",
                            key="moving.path_layer")
    e = ents[0]
    if e.dxftype() == "LINE":
        pts = [tuple(e.dxf.start)[:2], tuple(e.dxf.end)[:2]]
    elif e.dxftype() == "LWPOLYLINE":
        pts = [tuple(p)[:2] for p in e.get_points("xy")]
        closed = e.closed
    else:
        pts = [tuple(v.dxf.location)[:2] for v in e.vertices]
        closed = e.is_closed
    if e.dxftype() != "LINE" and closed:
        pts.append(pts[0])
    return [(x * model.unit_scale, y * model.unit_scale) for x, y in pts], e.dxf.handle


def _path(model, document, layer: str, settings) -> tuple[LoadPath, str]:
    frame = model.frame
    if settings.is_frame_layer(layer):
        try:
            return path_along_members(frame, _chain(frame, layer)), "members"
        except LoadError as exc:
            raise DrawingError(exc.message, handle=exc.handle, layer=layer) from None
    pts, handle = _polyline(model, document, layer)
    xy = np.array([(n.x, n.y) for n in frame.nodes], dtype=float)
    tol = 1e-3 * max(float(np.ptp(xy, axis=0).max()) if len(xy) else 1.0, 1e-9)
    try:
        return path_through_points(frame, pts, tol=tol), "polyline"
    except LoadError as exc:
        raise DrawingError(f"path polyline: {exc.message} (coordinates in m)", handle=handle, layer=layer,
                           hint="draw the path along member centrelines") from None


def _vehicle(ml: MovingLoads, spec, step: float) -> VehicleOutcome:
    v = Vehicle(tuple(spec.loads), tuple(spec.spacings), spec.name)
    envs = ml.envelope(v, step=step)
    reactions = ml.reaction_envelope(v, step=step)
    best = None
    for mid, env in envs.items():
        for key in ("M_max", "M_min"):
            g = env.governing(key)
            if best is None or abs(g["value"]) > abs(best["value"]):
                best = dict(g, member=mid, key=key)
    axles = ml.axle_points(v, best["front"], best["direction"]) if best else np.zeros((0, 2))
    return VehicleOutcome(spec.name, tuple(spec.loads), tuple(spec.spacings), envs, reactions, best or {}, axles)


def _influence(ml: MovingLoads, model, probes, step: float) -> list[ProbeInfluence]:
    from ..report.report import locate_points

    if not probes:
        return []
    frame = model.frame
    s = ml.stations(step)
    sol = ml.unit_solutions(s)
    xy = ml.points(s)
    index = frame.member_index()
    out = []
    for (px, py), (mid, x) in zip(probes, locate_points(model, probes)):
        row = np.array([index[mid]])
        pi = ProbeInfluence((float(px), float(py)), mid, x, None)
        for q in ("N", "V", "M"):
            vals = sol.member_values(q, row, np.array([x]))[0]
            pi.lines[q] = InfluenceLine(f"{q} of member {mid} at x={x:g} m", s, xy, vals)
        nodes = np.array([(n.x, n.y) for n in frame.nodes], dtype=float) / model.unit_scale
        size = float(np.ptp(nodes, axis=0).max()) if len(nodes) else 1.0
        for k, sup in enumerate(frame.supports):
            if np.hypot(*(nodes[sup.node] - (px, py))) <= 1e-3 * size:
                pi.support = k
                for ci, c in enumerate(("fx", "fy", "m")):
                    pi.lines[c] = InfluenceLine(f"{c} of support {k}", s, xy, sol.reactions[k, ci])
                break
        out.append(pi)
    return out


MAX_STATIONS_PER_MEMBER = 5000
"""Most stations one member of the path may carry.  Every axle position on
a member of the path is a point of its envelope, so the work there grows
as the square of its stations: about a second at 2,000 on one member,
ten minutes at 56,000 (a step given in mm for m)."""


def _round_up(v: float, digits: int = 3) -> float:
    """``v`` > 0 rounded up to ``digits`` significant digits."""
    q = 10.0 ** (math.floor(math.log10(v)) - digits + 1)
    return math.ceil(v / q - 1e-9) * q


def _check_station_count(frame, path: LoadPath, step: float) -> None:
    """SettingsError when ``step`` [m] puts more than
    MAX_STATIONS_PER_MEMBER stations on one member of ``path``."""
    stretch = np.abs(path.a1 - path.a0)
    i = int(np.argmax(stretch))
    n = len(station_grid(float(stretch[i]), step))
    if n > MAX_STATIONS_PER_MEMBER:
        mb = frame.members[int(path.member[i])]
        raise SettingsError(
            f"step {step:g} m puts {n:,} stations on member {mb.group} ({stretch[i]:g} m of the path); at most "
            f"{MAX_STATIONS_PER_MEMBER:,} per member are analysed, a step of at least "
            f"{_round_up(stretch[i] / (MAX_STATIONS_PER_MEMBER - 1)):g} m here; check the step's unit (e.g. '0.25 m', "
            f"not '0.25 mm')", key="moving.step")


def load_path(model, document, settings) -> tuple[LoadPath, str]:
    """The load path of ``settings`` (``[moving] path_layer``, which must be
    given) and its kind ("members" or "polyline"), with the step checked
    against it; used by ``check`` and ``solve`` alike.

    Raises SettingsError / DrawingError for a path that is not one chain of
    members or a polyline along them, a step not shorter than the path, or
    one that puts more than MAX_STATIONS_PER_MEMBER stations on a member.
    """
    path, kind = _path(model, document, settings.moving_path_layer, settings)
    if not settings.moving_step < path.length:
        raise SettingsError(f"step {settings.moving_step:g} m is not shorter than the path ({path.length:g} m)",
                            key="moving.step")
    _check_station_count(model.frame, path, settings.moving_step)
    return path, kind


def run_moving(analysis, probes) -> MovingOutcome | None:
    """Moving loads and influence lines of a solved
    :class:`~dxf2frame.pipeline.Analysis`; ``probes`` are the
    ``--influence`` points (X, Y) in drawing units.  None when the settings
    give no path and no probe is asked for.

    Raises SettingsError / DrawingError / AnalysisError (bad input) for a
    path that is not one chain of members, a probe off every member,
    ``--influence`` without a path, or a frame the moving loads cannot be
    solved on.
    """
    s = analysis.settings
    if s.moving_path_layer is None:
        if probes:
            raise SettingsError("--influence needs a load path: give [moving] path_layer in the settings",
                                key="moving.path_layer")
        return None
    model = analysis.model
    layer = s.moving_path_layer
    path, kind = load_path(model, analysis.document, s)
    try:
        ml = MovingLoads(model.frame, path, determinate=analysis.determinacy.status == "determinate")
        vehicles = [_vehicle(ml, spec, s.moving_step) for spec in s.moving_vehicles]
        influence = _influence(ml, model, probes, s.moving_step)
    except MissingSectionError:
        raise AnalysisError("moving loads on a statically indeterminate frame need the members' sections",
                            layer=layer, hint="give E, A and I under [sections.default]") from None
    except SolverError as exc:
        raise AnalysisError(f"moving loads: {exc.message}", handle=exc.handle, layer=layer) from None
    return MovingOutcome(layer, kind, path.length, s.moving_step, vehicles, influence, ml)
