"""Beyond first order, for a solved drawing: the elastic critical load
factor and P-Delta analysis of the strength combinations
(:mod:`.stability`), moving loads and influence lines (:mod:`.moving`),
and their report sections and CSV (:mod:`.report`).  The numerics are the
solver's (:mod:`dxf2frame.solver.second_order`,
:mod:`dxf2frame.solver.moving`); this package takes them to and from the
drawing, the settings and the report.
"""
from __future__ import annotations

from dataclasses import dataclass

from .moving import MovingOutcome, ProbeInfluence, VehicleOutcome, load_path, run_moving
from .report import INFLUENCE_CSV_COLUMNS, moving_section, second_order_section, write_influence_csv
from .stability import SECOND_ORDER_KIND, StabilityOutcome, run_stability, strength_combinations

__all__ = [
    "Further",
    "run_further",
    "StabilityOutcome",
    "MovingOutcome",
    "VehicleOutcome",
    "ProbeInfluence",
    "SECOND_ORDER_KIND",
    "INFLUENCE_CSV_COLUMNS",
    "run_stability",
    "stability_with_warnings",
    "load_path",
    "run_moving",
    "strength_combinations",
    "second_order_section",
    "moving_section",
    "write_influence_csv",
]


@dataclass
class Further:
    """The second-order and moving-load outcomes of one drawing."""

    stability: StabilityOutcome | None = None
    moving: MovingOutcome | None = None

    @property
    def buckled(self):
        """The BucklingResult of the combination that buckles, or None."""
        return self.stability.buckled if self.stability is not None else None

    @property
    def results(self) -> list:
        """Second-order results (kind :data:`SECOND_ORDER_KIND`)."""
        return self.stability.results if self.stability is not None else []

    def add_to_report(self, report: dict, frame, uf) -> None:
        """Add the ``"second_order"`` (with the second-order results,
        moved out of ``"results"``) and ``"moving"`` sections."""
        if self.stability is not None:
            report["second_order"] = second_order_section(self.stability, uf)
            # second-order results live in their own section: the schema's
            # "results" holds load cases and combinations only
            results = report.get("results", [])
            report["second_order"]["results"] = [r for r in results if r.get("kind") == SECOND_ORDER_KIND]
            report["results"] = [r for r in results if r.get("kind") != SECOND_ORDER_KIND]
        if self.moving is not None:
            report["moving"] = moving_section(self.moving, frame, uf)


def stability_with_warnings(analysis) -> tuple[StabilityOutcome, list[str]]:
    """:func:`run_stability` of an analysis with the warnings it gives (for
    a call in another process, whose appends would not reach the caller)."""
    said: list[str] = []
    return run_stability(analysis, said), said


def run_further(analysis, influence=(), warnings: list[str] | None = None,
                stability: StabilityOutcome | None = None) -> Further:
    """The second-order step and the moving loads of a solved analysis
    (nothing for an unstable frame); ``influence`` are the probe points
    (X, Y) in drawing units; warnings are appended to ``warnings``.  A
    buckling combination stops before the moving loads.  ``stability``:
    the second-order step already done (its warnings already given)."""
    out = Further()
    if not analysis.stable:  # reported as unstable (exit 3): nothing more to compute
        return out
    said = warnings if warnings is not None else []
    out.stability = stability if stability is not None else run_stability(analysis, said)
    if out.buckled is None:
        s = analysis.settings
        if s.moving_path_layer is not None and not s.moving_vehicles and not influence:
            said.append(f"[moving] path_layer '{s.moving_path_layer}' is given but no vehicle, so nothing moves "
                        "along it: add [[moving.vehicles]], or ask for influence lines along the path with "
                        "--influence X,Y")
        else:
            out.moving = run_moving(analysis, list(influence))
    return out
