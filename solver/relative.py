"""Equal relative stiffness for a frame drawn without sections.

Hand methods (slope deflection, moment distribution, the three-moment
equation) solve an indeterminate frame with the same EI for every member
and neglect axial shortening.  :func:`equal_stiffness_section` gives the
one section that reproduces those assumptions in the stiffness method;
:func:`without_deflections` drops the displacements of a result solved
with it (they rest on invented numbers and must not be reported).

Choice of the axial stiffness: EA = ``AXIAL_RATIO`` * EI / Lmax**2, Lmax
the longest member.  Axial shortening changes the moments of an
indeterminate frame by a fraction of the order of (EI/EA)/L**2; real
members have EA*L**2/EI = (L/r)**2 of 1e3..1e4 (slenderness L/r of 30 to
100, common practice), so AXIAL_RATIO = 1e5 makes shortening at least ten
times smaller than in any real frame for every member longer than a third
of the longest one (and 1e-5 of the effect for the longest ones), while
the spread of the stiffness terms, about AXIAL_RATIO * Lmax / Lmin, stays
far from what double precision and the solver's pivot check (1e-11 after
diagonal scaling) can take.

>>> from dxf2frame.solver import Frame, Section
>>> f = Frame(); a = f.add_node(0, 0); b = f.add_node(4, 0)
>>> _ = f.add_member(a, b)
>>> s = equal_stiffness_section(f)
>>> round(s.E * s.A * 16 / (s.E * s.I))
100000
"""
from __future__ import annotations

import dataclasses

import numpy as np

from .model import Frame, Section
from .forces import MemberResults
from .results import CaseResult

__all__ = ["AXIAL_RATIO", "equal_stiffness_section", "without_deflections"]

#: EA * Lmax**2 / EI of the equal relative stiffness (see the module text)
AXIAL_RATIO = 1e5

#: nominal E [Pa] and I [m**4]: any values give the same forces; these keep
#: the displacements of a metre-scale frame near ordinary magnitudes
_E, _I = 200e9, 1e-4


def equal_stiffness_section(frame: Frame, axial_ratio: float = AXIAL_RATIO) -> Section:
    """One section for every member: nominal E and I, and A such that
    EA = ``axial_ratio`` * EI / Lmax**2 (SI: Pa, m**2, m**4)."""
    lengths = np.array([frame.geometry(m)[0] for m in frame.members], dtype=float)
    lmax = float(lengths.max()) if len(lengths) else 1.0
    return Section(E=_E, A=axial_ratio * _I / lmax**2, I=_I, name="equal relative stiffness")


def without_deflections(res: CaseResult) -> CaseResult:
    """The same forces and reactions, with no displacements (as a frame
    solved without sections reports them)."""
    mr = res.members
    layout = dataclasses.replace(mr.layout, EA=None, EI=None)
    members = MemberResults(layout, mr.end_forces, mr.loads, None)
    return CaseResult(res.name, res.kind, dict(res.factors), None, res.reactions, members,
                      res.family, res.frame_cases)
