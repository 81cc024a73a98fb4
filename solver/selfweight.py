"""Self-weight of members as gravity loads.

Each member gets a uniform distributed load along its whole length,
straight down (global -Y), of intensity per unit member length::

    q = rho * g * A        [N/m] = [kg/m^3] * [m/s^2] * [m^2]

so an inclined member carries its true weight (rho g A L in total, the
load being per unit member length, not per horizontal projection).

Units: SI throughout -- density in kg/m^3, the section area in m^2 (the
frame in metres), g in m/s^2, loads in N/m.  A frame in other units needs
``g`` given in (frame force unit per kg) * ... i.e. convert first.

Densities (:data:`DENSITY`) are nominal values for self-weight; check them
against the values the project's code prescribes.

Examples
--------
>>> from dxf2frame.solver import Frame, Section
>>> f = Frame()
>>> m = f.add_member(f.add_node(0, 0), f.add_node(6, 0), Section(E=200e9, A=5e-3, I=8e-5))
>>> [round(ld.q1[1], 2) for ld in self_weight_loads(f, "steel")]   # N/m: 7850 * g * A
[-384.91]
"""
from __future__ import annotations

import math
from collections.abc import Callable, Mapping

from .errors import LoadError, MissingSectionError
from .model import DistributedLoad, Frame, Member

__all__ = ["STANDARD_GRAVITY", "DENSITY", "self_weight_loads", "add_self_weight"]

STANDARD_GRAVITY = 9.80665
"""Standard acceleration of gravity [m/s^2] (a defined value of the SI:
CGPM 1901, adopted in ISO 80000-3)."""

DENSITY: dict[str, float] = {
    # structural steel: 7850 kg/m^3 (EN 1993-1-1 3.2.6 and the AISC Manual's
    # 490 lb/ft^3; from memory)
    "steel": 7850.0,
    # plain normal-weight concrete: 24 kN/m^3 -> about 2400 kg/m^3
    # (EN 1991-1-1 Table A.1, from memory)
    "concrete": 2400.0,
    # reinforced concrete, normal reinforcement: +1 kN/m^3 -> about 2500
    # kg/m^3 (EN 1991-1-1 Table A.1, from memory)
    "reinforced_concrete": 2500.0,
    # aluminium alloys: 2700 kg/m^3 (EN 1999-1-1 3.2.5, from memory)
    "aluminium": 2700.0,
    # softwood and glulam strength classes: mean densities (EN 338 and EN
    # 14080, from memory)
    "timber_C16": 370.0,
    "timber_C24": 420.0,
    "timber_C30": 460.0,
    "timber_GL24h": 420.0,
    "timber_GL28h": 460.0,
    # hardwood class D30: mean density (EN 338, from memory)
    "timber_D30": 640.0,
}
"""Nominal densities [kg/m^3] by material name."""

Density = float | Mapping[str, float] | Callable[[Member], float]


def _density_of(m: Member, density: Density) -> float:
    if callable(density) and not isinstance(density, Mapping):
        rho = density(m)
    elif isinstance(density, Mapping):
        rho = None
        for key in (m.id, m.group, m.section.name if m.section else None, m.layer):
            if key and key in density:
                rho = density[key]
                break
        if rho is None:
            raise LoadError(f"no density for member {m.id} (section {m.section.name if m.section else '?'!r}, "
                            f"layer {m.layer!r})", handle=m.handle, members=[m.id])
    else:
        rho = density
    if isinstance(rho, str):
        if rho not in DENSITY:
            raise LoadError(f"member {m.id}: unknown material {rho!r}; expected one of {', '.join(DENSITY)}",
                            handle=m.handle, members=[m.id])
        rho = DENSITY[rho]
    try:
        rho = float(rho)
    except (TypeError, ValueError):
        raise LoadError(f"member {m.id}: density {rho!r} is not a number", handle=m.handle,
                        members=[m.id]) from None
    if not (math.isfinite(rho) and rho >= 0):
        raise LoadError(f"member {m.id}: density must be a non-negative number [kg/m^3], got {rho!r}",
                        handle=m.handle, members=[m.id])
    return rho


def self_weight_loads(frame: Frame, density: Density, case: str = "D", *,
                      g: float = STANDARD_GRAVITY) -> list[DistributedLoad]:
    """Gravity loads of the members' own weight (not added to the frame).

    Parameters
    ----------
    frame : the frame, in metres, with sections (A in m^2)
    density : kg/m^3 (or a material name of :data:`DENSITY`) for every
        member; or a mapping looked up by member id, then member group,
        section name, layer; or a function of the :class:`Member`
    case : the load case the loads join ("D", or a case of their own)
    g : acceleration of gravity [m/s^2]

    Returns
    -------
    one :class:`DistributedLoad` per member (zero-density members skipped):
    ``q1 = (0, -rho g A)`` [N/m] in global axes, per unit member length,
    whole length, ``handle`` the member's handle

    Raises
    ------
    MissingSectionError : a member without section (no area)
    LoadError : a member without density, or a bad density
    """
    if not (math.isfinite(g) and g > 0):
        raise ValueError(f"g must be a positive number, got {g!r}")
    out: list[DistributedLoad] = []
    for m in frame.members:
        if m.section is None:
            raise MissingSectionError(f"member {m.id} has no section: its self-weight is unknown",
                                      handle=m.handle, members=[m.id])
        rho = _density_of(m, density)
        if rho == 0.0:
            continue
        q = rho * g * m.section.A
        out.append(DistributedLoad(m.id, q1=(0.0, -q), axes="global", projected=False, case=case,
                                   handle=m.handle))
    return out


def add_self_weight(frame: Frame, density: Density, case: str = "D", *,
                    g: float = STANDARD_GRAVITY) -> list[DistributedLoad]:
    """:func:`self_weight_loads` added to ``frame.loads``; returns them."""
    loads = self_weight_loads(frame, density, case, g=g)
    frame.loads.extend(loads)
    return loads
