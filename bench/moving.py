"""Moving loads against one solve, in process (``python bench/run.py --moving``).

On a generated frame of about ``members`` analysis members (the same
drawings as the main benchmark, :mod:`bench.generate`) read once through
:func:`dxf2frame.pipeline.analyse`, it times, each the best of
``repeat`` runs:

* *one solve*: :func:`dxf2frame.solver.solve` of every load case and the
  combinations of the settings (:func:`dxf2frame.solver.combine`): the
  results counted in ``results`` (21 on the generated frames: D, L, W and
  the built-in sets' nine LRFD and nine ASD combinations); the same with
  the first twelve combinations only (``solve15_s``: 15 results, the
  count the issue's target names);
* *moving*: :class:`dxf2frame.solver.MovingLoads` on a path along the
  roof beam line (the top floor's beams, one chain) with ``stations``
  stations, a two-axle vehicle crossing both ways, the envelope of N, V,
  M along every member (one factorisation, unit loads at the path's nodes
  superposed);
* *unit solutions*: :class:`dxf2frame.solver.MovingLoads` and
  :meth:`~dxf2frame.solver.MovingLoads.unit_solutions` at the path's
  stations: every member's end forces and every reaction per unit load at
  each of the 2,000 stations (the superposed influence data, before any
  vehicle; ``unit_s``);
* *alpha_cr*: the elastic critical load factors of the LRFD combinations
  (the default ``[second_order] analysis = "check"`` of every solve).

Figures are wall-clock seconds of this process (no drawing read or
written); the ratio moving / solve is the figure bench/README.md records.
"""
from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

from bench.generate import spec_for_members, write_frame  # noqa: E402

__all__ = ["measure_moving"]


def _best(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(max(1, repeat)):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def measure_moving(members: int = 500, stations: int = 2000, repeat: int = 3, *, alpha_cr: bool = True) -> dict:
    """The figures above as a dict (seconds, counts, machine load)."""
    from dxf2frame.pipeline import analyse, combination_specs
    from dxf2frame.solver import (MovingLoads, Vehicle, combine, critical_load_factors, path_along_members,
                                  solve)

    with tempfile.TemporaryDirectory() as tmp:
        path = write_frame(spec_for_members(members), Path(tmp) / "frame.dxf")
        an = analyse(path)
    frame = an.model.frame
    specs = combination_specs(an.settings, list(frame.cases()))

    def one_solve(which=specs):
        cases = solve(frame)
        return [combine(cases, f, n, family=fam) for n, f, fam in which], cases

    combos, cases = one_solve()
    n_results = len(cases) + len(combos)
    top = max(nd.y for nd in frame.nodes)
    beams = sorted((m for m in frame.members if m.layer.upper() == "FRAME-BEAMS"
                    and abs(frame.nodes[m.start].y - top) < 1e-9), key=lambda m: frame.nodes[m.start].x)
    path_ = path_along_members(frame, [m.id for m in beams])
    step = path_.length / (stations - 1)
    vehicle = Vehicle((60e3, 40e3), (2.0,), "bench")

    def moving():
        return MovingLoads(frame, path_).envelope(vehicle, step=step)

    def unit():
        ml = MovingLoads(frame, path_)
        return ml.unit_solutions(ml.stations(step))

    out = {
        "members": len(frame.members),
        "stations": int(round(path_.length / step)) + 1,
        "results": n_results,
        "solve_s": _best(one_solve, repeat),
        "solve15_s": _best(lambda: one_solve(specs[:12]), repeat),
        "moving_s": _best(moving, repeat),
        "unit_s": _best(unit, repeat),
        "load_average": list(os.getloadavg()),
        "cpus": os.cpu_count(),
    }
    out["ratio"] = out["moving_s"] / out["solve_s"]
    out["ratio15"] = out["moving_s"] / out["solve15_s"]
    out["unit_ratio15"] = out["unit_s"] / out["solve15_s"]
    if alpha_cr:
        lrfd = [(n, f) for n, f, fam in specs if fam == "LRFD"]
        out["alpha_cr_combinations"] = len(lrfd)
        out["alpha_cr_s"] = _best(lambda: critical_load_factors(frame, lrfd, raise_if_buckles=False), repeat)
    return out


if __name__ == "__main__":
    import json

    print(json.dumps(measure_moving(), indent=2))
