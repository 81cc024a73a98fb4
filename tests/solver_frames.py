"""Frames built with the solver's own API for more than one test file
(no DXF: see dxf_builders.py for drawings)."""
from __future__ import annotations

from dxf2frame.solver import Frame, Section


def two_bay_portal(section: Section, *, first_column: int = 1) -> Frame:
    """Two bays of 6 m on three 4 m columns with fixed feet: columns
    ``C<first_column>`` ... from the left, beams ``B1`` and ``B2``; no loads."""
    f = Frame()
    feet = [f.add_node(x, 0.0) for x in (0.0, 6.0, 12.0)]
    tops = [f.add_node(x, 4.0) for x in (0.0, 6.0, 12.0)]
    for k in range(3):
        f.add_member(feet[k], tops[k], section, id=f"C{k + first_column}")
        f.add_support(feet[k], "fixed")
    f.add_member(tops[0], tops[1], section, id="B1")
    f.add_member(tops[1], tops[2], section, id="B2")
    return f
