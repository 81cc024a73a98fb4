"""Plain data model of a planar frame.

Everything here is unit-agnostic: use one consistent set of units (the DXF
reader uses newtons and metres, so E in Pa, A in m**2, I in m**4, forces in
N, distributed loads in N/m, moments in N*m).

Geometry and axes
-----------------
* Global axes: X to the right, Y up, rotations counter-clockwise positive.
* A member runs from ``start`` to ``end`` node.  Local x runs start -> end;
  local y is local x turned 90 degrees counter-clockwise.
* Member loads are positioned by ``a`` (and ``b``), distances along the
  member measured from the start node.

Examples
--------
A simply supported 6 m beam under 10 kN/m (SI units):

>>> from dxf2frame.solver import Frame, Section, DistributedLoad, solve
>>> f = Frame()
>>> a, b = f.add_node(0.0, 0.0), f.add_node(6.0, 0.0)
>>> m = f.add_member(a, b, Section(E=200e9, A=5e-3, I=8e-5))
>>> _ = f.add_support(a, "pin"); _ = f.add_support(b, "roller")
>>> _ = f.add_load(DistributedLoad(m.id, q1=(0.0, -10e3), case="D"))
>>> res = solve(f)["D"]
>>> round(res.members[m.id].moment(3.0) / 1e3, 6)   # wL^2/8 = 45 kN*m
45.0
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal, Union

import math

__all__ = [
    "Section",
    "Node",
    "Member",
    "Support",
    "SUPPORT_KINDS",
    "NodalLoad",
    "PointLoad",
    "MemberCouple",
    "DistributedLoad",
    "Settlement",
    "Load",
    "Frame",
]

Axes = Literal["global", "local"]


@dataclass(frozen=True)
class Section:
    """Member stiffness properties.

    Attributes
    ----------
    E : Young's modulus [force/length**2]
    A : cross-section area [length**2]
    I : second moment of area about the bending axis [length**4]
    name : optional label (e.g. the section designation)
    """

    E: float
    A: float
    I: float
    name: str = ""

    def __post_init__(self) -> None:
        for k in ("E", "A", "I"):
            v = getattr(self, k)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
                raise ValueError(f"section {self.name or ''}: {k} must be a positive finite number, got {v!r}")


@dataclass
class Node:
    """A joint of the frame at (x, y).  ``sources`` holds DXF handles (or any
    labels) of the entities that created or touch this node."""

    id: int
    x: float
    y: float
    sources: tuple[str, ...] = ()


@dataclass
class Member:
    """A straight prismatic frame element between two nodes.

    Attributes
    ----------
    id : stable identifier (string), unique in the frame
    start, end : node ids
    section : stiffness properties, or None when unknown (a statically
        determinate frame solves without them; deflections are then None)
    release_start, release_end : True where the member end is pinned to its
        node (moment release, M = 0 at that end)
    layer, handle : where the member came from in the drawing (empty when
        built by hand)
    group : id of the reported member this element belongs to.  The DXF
        reader splits a drawn span at an internal hinge; both pieces carry
        the same ``group`` so the report shows one member.  Defaults to
        ``id``.
    """

    id: str
    start: int
    end: int
    section: Section | None = None
    release_start: bool = False
    release_end: bool = False
    layer: str = ""
    handle: str = ""
    group: str = ""

    def __post_init__(self) -> None:
        if not self.group:
            self.group = self.id


SUPPORT_KINDS: dict[str, tuple[bool, bool, bool]] = {
    # restrained (x', y', rotation) in the support's own axes
    "pin": (True, True, False),
    "roller": (False, True, False),
    "fixed": (True, True, True),
    "slider": (False, True, True),
    "spring": (False, False, False),
}


@dataclass
class Support:
    """A support at a node.

    The support has its own axes x', y' turned ``angle`` radians
    counter-clockwise from global X, Y.  ``ux``/``uy`` restrain movement
    along x'/y', ``rz`` restrains rotation.  A roller at ``angle`` rolls
    along x' and pushes along y'.  Springs (``kx``, ``ky`` [force/length]
    along x', y'; ``kr`` [force*length/rad]) act where the direction is not
    rigidly restrained.
    """

    node: int
    ux: bool
    uy: bool
    rz: bool
    angle: float = 0.0
    kx: float | None = None
    ky: float | None = None
    kr: float | None = None
    kind: str = "pin"
    handle: str = ""
    layer: str = ""

    @classmethod
    def of_kind(cls, node: int, kind: str, angle: float = 0.0, **kw) -> "Support":
        """Build a support from a kind name: pin, roller, fixed, slider, spring."""
        k = kind.lower()
        if k not in SUPPORT_KINDS:
            raise ValueError(f"unknown support kind {kind!r}; expected one of {sorted(SUPPORT_KINDS)}")
        ux, uy, rz = SUPPORT_KINDS[k]
        return cls(node=node, ux=ux, uy=uy, rz=rz, angle=angle, kind=k, **kw)

    @property
    def axes(self) -> tuple[tuple[float, float], tuple[float, float]]:
        """Unit vectors of the support's x' and y' axes in global X, Y."""
        c, s = math.cos(self.angle), math.sin(self.angle)
        return (c, s), (-s, c)

    @property
    def n_restraints(self) -> int:
        """Reaction components: rigid restraints plus springs."""
        return sum(
            1
            for fixed, k in ((self.ux, self.kx), (self.uy, self.ky), (self.rz, self.kr))
            if fixed or (k is not None and k > 0)
        )


@dataclass
class NodalLoad:
    """Force (fx, fy) [force] along global X, Y and couple m [force*length],
    counter-clockwise positive, applied at a node."""

    node: int
    fx: float = 0.0
    fy: float = 0.0
    m: float = 0.0
    case: str = "D"
    handle: str = ""


@dataclass
class PointLoad:
    """Concentrated force on a member at distance ``a`` from its start.

    (px, py) are components along global X, Y (``axes="global"``) or local
    x, y (``axes="local"``).
    """

    member: str
    a: float
    px: float = 0.0
    py: float = 0.0
    axes: Axes = "global"
    case: str = "D"
    handle: str = ""


@dataclass
class MemberCouple:
    """Concentrated couple ``m`` [force*length], counter-clockwise positive,
    on a member at distance ``a`` from its start."""

    member: str
    a: float
    m: float
    case: str = "D"
    handle: str = ""


@dataclass
class DistributedLoad:
    """Linearly varying distributed force on a member.

    Intensity ``q1`` = (qx, qy) at distance ``a`` from the start and ``q2``
    at ``b``, linear in between [force per unit length].  ``b=None`` means
    the member end; ``q2=None`` means uniform (q2 = q1).  Components are
    along global X, Y or local x, y per ``axes``.  With ``projected=True``
    the intensity is per unit horizontal projection of the member (roof
    snow, live load on a rafter): the load per unit member length is then
    q * |cos(member angle)|.
    """

    member: str
    q1: tuple[float, float]
    q2: tuple[float, float] | None = None
    a: float = 0.0
    b: float | None = None
    axes: Axes = "global"
    projected: bool = False
    case: str = "D"
    handle: str = ""


@dataclass
class Settlement:
    """Prescribed movement of a supported node along global X, Y and
    rotation (counter-clockwise) [length, length, rad].  Only components
    the support restrains rigidly take effect (for a rotated support the
    global vector is projected on its restrained axes)."""

    node: int
    dx: float = 0.0
    dy: float = 0.0
    rz: float = 0.0
    case: str = "D"
    handle: str = ""


Load = Union[NodalLoad, PointLoad, MemberCouple, DistributedLoad, Settlement]


@dataclass
class Frame:
    """A planar frame: nodes, members, supports and loads by case."""

    nodes: list[Node] = field(default_factory=list)
    members: list[Member] = field(default_factory=list)
    supports: list[Support] = field(default_factory=list)
    loads: list[Load] = field(default_factory=list)

    # -- building -------------------------------------------------------
    def add_node(self, x: float, y: float, sources: tuple[str, ...] = ()) -> int:
        """Append a node and return its id (its index in ``nodes``)."""
        nid = len(self.nodes)
        self.nodes.append(Node(nid, float(x), float(y), tuple(sources)))
        return nid

    def add_member(
        self,
        start: int,
        end: int,
        section: Section | None = None,
        *,
        release_start: bool = False,
        release_end: bool = False,
        id: str | None = None,
        layer: str = "",
        handle: str = "",
        group: str = "",
    ) -> Member:
        """Append a member from node ``start`` to node ``end``."""
        if start == end:
            raise ValueError("a member needs two different nodes")
        mid = id if id is not None else f"M{len(self.members) + 1}"
        m = Member(mid, start, end, section, release_start, release_end, layer, handle, group)
        self.members.append(m)
        return m

    def add_support(self, node: int, kind: str = "pin", angle: float = 0.0, **kw) -> Support:
        """Append a support of the given kind (pin, roller, fixed, slider,
        spring) at ``node``; ``angle`` [rad] turns its axes."""
        s = Support.of_kind(node, kind, angle, **kw)
        self.supports.append(s)
        return s

    def add_load(self, load: Load) -> Load:
        self.loads.append(load)
        return load

    # -- queries --------------------------------------------------------
    def member(self, mid: str) -> Member:
        for m in self.members:
            if m.id == mid:
                return m
        raise KeyError(mid)

    def member_index(self) -> dict[str, int]:
        return {m.id: i for i, m in enumerate(self.members)}

    def cases(self) -> list[str]:
        """Load case names in first-seen order."""
        seen: dict[str, None] = {}
        for ld in self.loads:
            seen.setdefault(ld.case, None)
        return list(seen)

    def geometry(self, m: Member) -> tuple[float, float, float]:
        """(length, cos, sin) of a member's local x axis."""
        a, b = self.nodes[m.start], self.nodes[m.end]
        dx, dy = b.x - a.x, b.y - a.y
        L = math.hypot(dx, dy)
        return L, dx / L, dy / L

    @property
    def has_sections(self) -> bool:
        return all(m.section is not None for m in self.members)
