"""Exceptions raised by the frame solver.

The solver knows nothing about DXF, but every model object may carry the
handle of the drawing entity it came from; the exceptions below keep it
(``handle``) together with the node or member concerned, so the caller can
point the user at the right entity.
"""
from __future__ import annotations

__all__ = [
    "SolverError",
    "UnstableFrameError",
    "MissingSectionError",
    "LoadError",
    "SupportError",
]


class SolverError(Exception):
    """Base class of the solver's errors.

    Attributes
    ----------
    message : what is wrong
    handle : drawing handle of the entity concerned ("" when unknown)
    nodes : node ids concerned (may be empty)
    members : member ids concerned (may be empty)
    """

    def __init__(
        self,
        message: str,
        *,
        handle: str = "",
        nodes: tuple[int, ...] | list[int] = (),
        members: tuple[str, ...] | list[str] = (),
    ) -> None:
        self.message = message
        self.handle = handle
        self.nodes = tuple(int(n) for n in nodes)
        self.members = tuple(members)
        super().__init__(str(self))

    def __str__(self) -> str:
        head = f"entity #{self.handle}: " if self.handle else ""
        return f"{head}{self.message}"


class UnstableFrameError(SolverError):
    """The stiffness matrix is singular or nearly so: the frame (or the
    loaded part of it) is a mechanism.  ``nodes`` lists the joints where
    the factorisation found no stiffness."""


class MissingSectionError(SolverError):
    """Members without a section in a frame whose forces depend on the
    stiffness (statically indeterminate), or without the caller saying the
    frame is determinate.  ``members`` lists the members concerned."""


class LoadError(SolverError, ValueError):
    """A load that cannot be applied: unknown member or node, a position
    outside the member, an empty distributed stretch."""


class SupportError(SolverError, ValueError):
    """Supports that cannot be combined (two supports at one node whose
    axes are neither parallel nor perpendicular)."""
