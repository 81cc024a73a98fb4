"""The second-order step of a solved drawing: the elastic critical load
factor alpha_cr of every strength combination and, when the settings ask
for it (``[second_order] analysis = "p-delta"``), a P-Delta analysis of
each (second-order results do not superpose: each combination is its own
analysis).

Strength combinations are the LRFD set, else every combination, else each
load case alone.  The criterion for first-order analysis to suffice is
alpha_cr >= 10 (elastic analysis; EN 1993-1-1 5.2.1(3), from memory;
common practice): :data:`dxf2frame.solver.ALPHA_CR_LIMIT`.  A combination
with alpha_cr <= 1 buckles: :attr:`StabilityOutcome.buckled` names it and
the pipeline reports the drawing as unstable (exit 3) instead of solving
it.  Units: SI (N, m), as the model.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np
from scipy.sparse.linalg import ArpackError

from ..errors import AnalysisError
from ..solver import (ALPHA_CR_LIMIT, BucklingError, BucklingResult, CaseResult, ConvergenceError,
                      SecondOrderResult, critical_load_factors, second_order_many)
from ..solver.errors import MissingSectionError, SolverError

__all__ = ["StabilityOutcome", "SECOND_ORDER_KIND", "run_stability", "strength_combinations"]

#: ``kind`` of a second-order result in the report and the drawing
SECOND_ORDER_KIND = "second-order"


@dataclass
class StabilityOutcome:
    """What the second-order step found.

    ``analysis`` the settings' choice; ``buckling`` alpha_cr per strength
    combination; ``second_order`` the P-Delta results (``analysis ==
    "p-delta"``), each also as a :class:`CaseResult` of kind
    :data:`SECOND_ORDER_KIND` in ``results``; ``buckled`` the first
    combination whose load reaches its critical load; ``skipped`` why
    nothing was computed ("" when it was).
    """

    analysis: str
    buckling: dict[str, BucklingResult] = field(default_factory=dict)
    second_order: dict[str, SecondOrderResult] = field(default_factory=dict)
    results: list[CaseResult] = field(default_factory=list)
    buckled: BucklingResult | None = None
    skipped: str = ""

    @property
    def lowest(self) -> BucklingResult | None:
        """The strength combination with the lowest finite alpha_cr."""
        finite = [b for b in self.buckling.values() if np.isfinite(b.alpha_cr)]
        return min(finite, key=lambda b: b.alpha_cr) if finite else None


def strength_combinations(cases: list[CaseResult], combinations: list[CaseResult]) -> list[tuple[str, dict, str]]:
    """(name, factors, family) of the strength combinations: the LRFD set,
    else every combination, else each load case alone."""
    lrfd = [c for c in combinations if c.family == "LRFD"]
    chosen = lrfd or combinations
    if chosen:
        return [(c.name, dict(c.factors), c.family) for c in chosen]
    return [(c.name, {c.name: 1.0}, "") for c in cases]


def run_stability(analysis, warnings: list[str]) -> StabilityOutcome:
    """The second-order step of a solved :class:`~dxf2frame.pipeline.Analysis`.

    A combination with alpha_cr < 10 analysed to first order only is a
    warning (added to ``warnings``).  Raises AnalysisError (bad input) when
    the P-Delta iteration does not converge.
    """
    s = analysis.settings
    out = StabilityOutcome(s.second_order)
    if s.second_order == "off":
        return out
    frame = analysis.model.frame
    specs = strength_combinations(analysis.cases, analysis.combinations)
    if not specs:
        out.skipped = "no loads"
        return out
    if any(m.section is None for m in frame.members):
        out.skipped = "members without a section (alpha_cr needs E, A and I)"
        return out
    try:
        out.buckling = critical_load_factors(frame, [(n, f) for n, f, _ in specs],
                                             subdivisions=s.second_order_subdivisions, raise_if_buckles=False)
    except (MissingSectionError, ArpackError, np.linalg.LinAlgError) as exc:
        out.skipped = f"alpha_cr could not be computed ({type(exc).__name__}: {exc})"
        return out
    except SolverError as exc:
        out.skipped = f"alpha_cr could not be computed ({exc.message})"
        return out
    out.buckled = next((b for b in out.buckling.values() if b.buckles), None)
    if out.buckled is not None:
        return out
    if s.second_order == "p-delta":
        _p_delta(analysis, out, specs)
    else:
        low = [b for b in out.buckling.values() if b.alpha_cr < ALPHA_CR_LIMIT]
        for b in low:
            warnings.append(f"combination {b.name}: alpha_cr = {b.alpha_cr:.3g} < {ALPHA_CR_LIMIT:g}, so a "
                            "second-order analysis is needed (EN 1993-1-1 5.2.1(3), from memory; common "
                            "practice); the results are first order: set [second_order] analysis = \"p-delta\"")
    return out


def _p_delta(analysis, out: StabilityOutcome, specs) -> None:
    """P-Delta analysis of each strength combination into ``out``."""
    s = analysis.settings
    frame = analysis.model.frame
    by_family: dict[str, list[tuple[str, dict]]] = {}
    for n, f, fam in specs:
        by_family.setdefault(fam, []).append((n, f))
    try:
        for fam, combos in by_family.items():
            out.second_order.update(second_order_many(
                frame, combos, family=fam, subdivisions=s.second_order_subdivisions,
                tol=s.second_order_tolerance, max_iterations=s.second_order_max_iterations))
    except BucklingError as exc:  # the P-Delta stiffness became singular below alpha_cr
        name = exc.combination
        b = out.buckling.get(name)
        out.buckled = dataclasses.replace(b, alpha_cr=min(b.alpha_cr, 1.0)) if b is not None else None
        out.second_order.clear()
        return
    except ConvergenceError as exc:
        raise AnalysisError(exc.message, hint="raise [second_order] max_iterations or the tolerance; "
                                              "a frame close to buckling converges slowly") from None
    out.results = [dataclasses.replace(r.result, name=f"{name} (second order)", kind=SECOND_ORDER_KIND)
                   for name, r in out.second_order.items()]
