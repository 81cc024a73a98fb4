"""solver: planar frame analysis with no dependency on DXF.

Build a :class:`Frame`, then :func:`check` it and :func:`solve` it.  All
quantities are in one consistent unit system chosen by the caller.
"""
from .model import *  # noqa: F401,F403
from .model import __all__ as _model_all
from .errors import LoadError, MissingSectionError, SolverError, SupportError, UnstableFrameError
from .forces import DeflectionCheck, LoadSet, MemberLayout, MemberResult, MemberResults
from .results import CaseResult, Reaction, combine, combine_many, envelope, reaction_envelope
from .combinations import builtin_combinations, format_combination, parse_combination
from .stiffness import solve
from .determinacy import check, Determinacy
from .second_order import (ALPHA_CR_LIMIT, BucklingError, BucklingResult, ConvergenceError, SecondOrderResult,
                           SwayAmplification, critical_load_factor, critical_load_factors, second_order,
                           second_order_many, storey_levels,
                           sway_amplification)
from .moving import (InfluenceLine, LoadPath, MemberEnvelope, MovingLoads, UnitLoadSolutions, Vehicle,
                     locate_point, path_along_members, path_through_points)

__all__ = list(_model_all) + [
    "solve",
    "CaseResult",
    "Reaction",
    "MemberResult",
    "MemberResults",
    "MemberLayout",
    "LoadSet",
    "DeflectionCheck",
    "combine",
    "combine_many",
    "envelope",
    "reaction_envelope",
    "parse_combination",
    "format_combination",
    "builtin_combinations",
    "SolverError",
    "UnstableFrameError",
    "MissingSectionError",
    "LoadError",
    "SupportError",
    "check",
    "Determinacy",
    "critical_load_factor",
    "critical_load_factors",
    "second_order",
    "second_order_many",
    "sway_amplification",
    "storey_levels",
    "BucklingResult",
    "SecondOrderResult",
    "SwayAmplification",
    "BucklingError",
    "ConvergenceError",
    "ALPHA_CR_LIMIT",
    "MovingLoads",
    "Vehicle",
    "LoadPath",
    "InfluenceLine",
    "MemberEnvelope",
    "UnitLoadSolutions",
    "path_along_members",
    "path_through_points",
    "locate_point",
]
