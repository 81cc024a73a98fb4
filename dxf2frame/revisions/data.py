"""The data classes of a revision comparison, and what it compares.

:class:`MemberRef` is a member of one revision (id, layer, handle, end
points); :class:`ValueChange` one governing value, old and new;
:class:`MemberChange` and :class:`ReactionChange` a member or support
found in both revisions with its values; :class:`RevisionDiff` what
changed between two consecutive revisions and :class:`Comparison` the
whole series.  Each has ``to_dict`` (the comparison JSON).  The quantities
compared and their dimensions: :data:`MEMBER_QUANTITIES`,
:data:`REACTION_QUANTITIES`.  :func:`dxf2frame.revisions.compare_reports`
builds them.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

__all__ = ["FLOOR_FRACTION", "MEMBER_QUANTITIES", "REACTION_QUANTITIES", "MemberRef", "ValueChange",
           "MemberChange", "ReactionChange", "RevisionDiff", "Comparison"]

#: floor of the relative-change denominator, as a fraction of the largest
#: value of the same dimension in the pair of revisions
FLOOR_FRACTION = 0.02

#: member quantities compared, with their dimension ("force", "moment", "length")
MEMBER_QUANTITIES: dict[str, str] = {"N": "force", "V": "force", "M": "moment", "deflection": "length"}
#: reaction quantities compared
REACTION_QUANTITIES: dict[str, str] = {"fx": "force", "fy": "force", "m": "moment"}


# -- data ------------------------------------------------------------------------


@dataclass(frozen=True)
class MemberRef:
    """A reported member of one revision: id, layer, DXF handle, end points
    and length in the comparison's length unit."""

    id: str
    layer: str
    handle: str
    start: tuple[float, float]
    end: tuple[float, float]

    @property
    def length(self) -> float:
        return math.hypot(self.end[0] - self.start[0], self.end[1] - self.start[1])

    @property
    def midpoint(self) -> tuple[float, float]:
        return (0.5 * (self.start[0] + self.end[0]), 0.5 * (self.start[1] + self.end[1]))

    def to_dict(self) -> dict:
        return {"id": self.id, "layer": self.layer, "handle": self.handle,
                "start": list(self.start), "end": list(self.end), "length": self.length}


@dataclass(frozen=True)
class ValueChange:
    """One governing value, old and new (magnitudes in the comparison's units).

    ``change`` is ``|new - old| / max(|old|, floor)`` (a fraction, >= 0), or
    None when either value is missing (no deflection without sections).
    """

    quantity: str
    old: float | None
    new: float | None
    change: float | None
    flagged: bool

    @property
    def delta(self) -> float | None:
        """new - old, or None."""
        if self.old is None or self.new is None:
            return None
        return self.new - self.old

    def to_dict(self) -> dict:
        return {"quantity": self.quantity, "old": self.old, "new": self.new, "delta": self.delta,
                "change": self.change, "flagged": self.flagged}


class _Changes:
    """Shared by member and reaction changes: a tuple ``values`` of
    :class:`ValueChange`."""

    values: tuple[ValueChange, ...]

    @property
    def flagged(self) -> bool:
        return any(v.flagged for v in self.values)

    def value(self, quantity: str) -> ValueChange:
        """The :class:`ValueChange` of ``quantity`` ("N", "V", "M", "deflection", "fx", ...)."""
        for v in self.values:
            if v.quantity == quantity:
                return v
        raise KeyError(quantity)


@dataclass(frozen=True)
class MemberChange(_Changes):
    """A member matched between two revisions and its governing values.

    ``how``: ``"same ends"``, ``"overlap"`` (split/merged) or ``"moved"``.
    """

    old: MemberRef
    new: MemberRef
    how: str
    values: tuple[ValueChange, ...]

    def to_dict(self) -> dict:
        return {"old": self.old.to_dict(), "new": self.new.to_dict(), "how": self.how,
                "flagged": self.flagged, "values": [v.to_dict() for v in self.values]}


@dataclass(frozen=True)
class ReactionChange(_Changes):
    """A support found at the same place in both revisions and its governing
    reaction components ``fx``, ``fy``, ``m`` (magnitudes)."""

    old_at: tuple[float, float]
    new_at: tuple[float, float]
    values: tuple[ValueChange, ...]

    def to_dict(self) -> dict:
        return {"old_at": list(self.old_at), "new_at": list(self.new_at), "flagged": self.flagged,
                "values": [v.to_dict() for v in self.values]}


@dataclass
class RevisionDiff:
    """What changed from revision ``old_index`` to ``new_index``."""

    old_source: str
    new_source: str
    old_index: int
    new_index: int
    matched: list[MemberChange] = field(default_factory=list)
    new_members: list[MemberRef] = field(default_factory=list)
    removed_members: list[MemberRef] = field(default_factory=list)
    reactions: list[ReactionChange] = field(default_factory=list)
    new_supports: list[tuple[float, float]] = field(default_factory=list)
    removed_supports: list[tuple[float, float]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    @property
    def flagged_members(self) -> list[MemberChange]:
        return [m for m in self.matched if m.flagged]

    @property
    def flagged_reactions(self) -> list[ReactionChange]:
        return [r for r in self.reactions if r.flagged]

    @property
    def changed(self) -> bool:
        """True when anything is flagged, added or removed."""
        return bool(self.flagged_members or self.flagged_reactions or self.new_members
                    or self.removed_members or self.new_supports or self.removed_supports)

    def to_dict(self) -> dict:
        return {
            "old": self.old_source, "new": self.new_source,
            "old_index": self.old_index, "new_index": self.new_index,
            "members": [m.to_dict() for m in self.matched],
            "new_members": [m.to_dict() for m in self.new_members],
            "removed_members": [m.to_dict() for m in self.removed_members],
            "reactions": [r.to_dict() for r in self.reactions],
            "new_supports": [list(p) for p in self.new_supports],
            "removed_supports": [list(p) for p in self.removed_supports],
            "notes": list(self.notes),
        }


@dataclass
class Comparison:
    """The comparison of a series of revisions, oldest first.

    ``units``: ``{"force": ..., "length": ...}`` of every number;
    ``tolerance``: matching tolerance in that length unit;
    ``pairs``: one :class:`RevisionDiff` per consecutive pair.
    """

    sources: list[str]
    units: dict[str, str]
    threshold: float
    tolerance: float
    pairs: list[RevisionDiff]

    @property
    def changed(self) -> bool:
        return any(p.changed for p in self.pairs)

    def to_dict(self) -> dict:
        return {
            "comparison": 1,
            "sources": list(self.sources),
            "units": dict(self.units),
            "threshold": self.threshold,
            "tolerance": self.tolerance,
            "floor_fraction": FLOOR_FRACTION,
            "pairs": [p.to_dict() for p in self.pairs],
        }
