"""Supports of a frame gathered per node: node axes, rigid restraints and
springs.

A supported node's translational dofs are expressed in the axes of its
supports (x', y' turned ``angle`` counter-clockwise from global X, Y), so
an inclined roller is an exact zero displacement along y' (a
transformation of the node, not a penalty).  Springs act along the same
axes.  Units: spring stiffness [force/length] or [force*length/rad].
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import SupportError
from .model import Frame

__all__ = ["SupportData", "gather_supports"]


@dataclass
class SupportData:
    """Node axes and restraints gathered from the supports (node axes =
    the axes of the node's supports; global for unsupported nodes)."""

    cos: np.ndarray  # (n,) node axes
    sin: np.ndarray
    rigid: np.ndarray  # (n, 3) bool, in node axes
    spring: np.ndarray  # (n, 3) spring stiffness on non-rigid components
    owner: np.ndarray  # (n, 3) support index owning each rigid restraint (-1)
    springs: list[tuple[int, int, int, float]]  # (support index, node, comp, k)
    supported: np.ndarray  # (n,) bool


def gather_supports(frame: Frame) -> SupportData:
    n = len(frame.nodes)
    angle = np.zeros(n)
    have = np.zeros(n, bool)
    for s in frame.supports:  # axes from the first support that restrains a translation
        if not (0 <= s.node < n):
            raise SupportError(f"support on node {s.node}, which does not exist", handle=s.handle)
        if not have[s.node] and (s.ux or s.uy):
            angle[s.node], have[s.node] = s.angle, True
    for s in frame.supports:
        if not have[s.node]:
            angle[s.node], have[s.node] = s.angle, True
    rigid = np.zeros((n, 3), bool)
    spring = np.zeros((n, 3))
    owner = np.full((n, 3), -1)
    springs: list[tuple[int, int, int, float]] = []
    for si, s in enumerate(frame.supports):
        d = s.angle - angle[s.node]
        if abs(math.sin(d)) < 1e-9:
            cx, cy = 0, 1
        elif abs(math.cos(d)) < 1e-9:
            cx, cy = 1, 0
        elif s.ux or s.uy or s.kx or s.ky:
            raise SupportError(
                f"two supports at node {s.node} have axes that are neither parallel nor perpendicular",
                handle=s.handle, nodes=[s.node])
        else:
            cx, cy = 0, 1
        for fixed, k, comp in ((s.ux, s.kx, cx), (s.uy, s.ky, cy), (s.rz, s.kr, 2)):
            if fixed:
                rigid[s.node, comp] = True
                if owner[s.node, comp] < 0:
                    owner[s.node, comp] = si
            elif k is not None and k != 0:
                if not (math.isfinite(k) and k > 0):
                    raise SupportError(f"spring stiffness must be positive, got {k!r}", handle=s.handle,
                                       nodes=[s.node])
                springs.append((si, s.node, comp, float(k)))
    springs = [t for t in springs if not rigid[t[1], t[2]]]
    for _, node, comp, k in springs:
        spring[node, comp] += k
    return SupportData(np.cos(angle), np.sin(angle), rigid, spring, owner, springs, have)
