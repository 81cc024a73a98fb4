"""solver: planar frame analysis with no dependency on DXF.

Build a :class:`Frame`, then :func:`check` it and :func:`solve` it.  All
quantities are in one consistent unit system chosen by the caller.

What engineers check next, on top of the solution: storeys and their
drift (:mod:`solver.storeys`), sections from shape texts or drawn outlines
(:mod:`solver.shapes`), self-weight loads (:mod:`solver.selfweight`),
combinations with wind and earthquake both ways
(:func:`with_reversals`), and pattern live load (:mod:`solver.patterns`).
Beyond first order: the elastic critical load factor and P-Delta
(:mod:`solver.second_order`), moving loads and influence lines
(:mod:`solver.moving`).
"""
from .model import *  # noqa: F401,F403
from .model import __all__ as _model_all
from .errors import LoadError, MissingSectionError, SolverError, SupportError, UnstableFrameError
from .forces import DeflectionCheck, LoadSet, MemberLayout, MemberResult, MemberResults
from .results import CaseResult, Reaction, combine, combine_many, envelope, reaction_envelope
from .combinations import (REVERSIBLE_DEFAULT, builtin_combinations, format_combination, parse_combination,
                           with_reversals)
from .stiffness import solve
from .determinacy import check, Determinacy
from .second_order import (ALPHA_CR_LIMIT, BucklingError, BucklingResult, ConvergenceError, SecondOrderResult,
                           SwayAmplification, critical_load_factor, critical_load_factors, second_order,
                           second_order_many, storey_levels,
                           sway_amplification)
from .shapes import (SectionProperties, ShapeError, parse_shape, polygon_properties, section_from_outline,
                     section_from_shape, shape_polygon, shape_properties)
# the public names of these modules are their __all__, exported as they are
from . import moving, patterns, selfweight, storeys
from .moving import *  # noqa: F401,F403
from .storeys import *  # noqa: F401,F403
from .selfweight import *  # noqa: F401,F403
from .patterns import *  # noqa: F401,F403

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
    "with_reversals",
    "REVERSIBLE_DEFAULT",
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
    # sections from shapes
    "ShapeError",
    "SectionProperties",
    "parse_shape",
    "shape_polygon",
    "shape_properties",
    "polygon_properties",
    "section_from_shape",
    "section_from_outline",
] + moving.__all__ + storeys.__all__ + selfweight.__all__ + patterns.__all__
