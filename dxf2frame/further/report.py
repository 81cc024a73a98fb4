"""Report sections of the second-order step (``"second_order"``) and of
moving loads (``"moving"``), and the influence-line CSV.

Values in the report's units (``UnitFactors`` multiply SI values);
alpha_cr is dimensionless (null when nothing is in compression); an
influence ordinate is per unit load: N, V, fx, fy dimensionless, M and m
in the report's length unit.
"""
from __future__ import annotations

import csv
import io
import math
from pathlib import Path

from ..atomic import atomic_path
from ..solver import ALPHA_CR_LIMIT

__all__ = ["second_order_section", "moving_section", "write_influence_csv", "INFLUENCE_CSV_COLUMNS"]

INFLUENCE_CSV_COLUMNS = ("probe_x", "probe_y", "member", "quantity", "s", "x", "y", "value", "value_unit")

_CRITERION = (f"first-order analysis suffices when alpha_cr >= {ALPHA_CR_LIMIT:g} (elastic analysis; "
              "EN 1993-1-1 5.2.1(3), from memory; common practice)")


def _num(v) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def _negligible(so) -> tuple[float, float]:
    """(drift, moment) below which a storey's first-order value is rounding
    noise (a symmetric frame under symmetric load does not sway): 1e-9 of
    the combination's largest displacement and end moment."""
    import numpy as np

    fo = so.first_order
    ef = np.asarray(fo.members.end_forces, dtype=float)
    m = float(np.max(np.abs(ef[:, [2, 5]]))) if ef.size else 0.0
    d = float(np.max(np.abs(fo.displacements[:, :2]))) if fo.displacements is not None and fo.displacements.size else 0.0
    return 1e-9 * d, 1e-9 * m


def _storey(s, tiny_d: float, tiny_m: float, uf) -> dict:
    """One storey's sway amplification; a ratio of noise is null."""
    return {
        "level": _num(s.level * uf.length), "below": _num(s.below * uf.length),
        "drift_first": _num(s.drift_first * uf.length), "drift_second": _num(s.drift_second * uf.length),
        "drift_amplification": _num(s.drift_ratio) if abs(s.drift_first) > tiny_d else None,
        "column_moment_first": _num(s.moment_first * uf.moment),
        "column_moment_second": _num(s.moment_second * uf.moment),
        "moment_amplification": _num(s.moment_ratio) if abs(s.moment_first) > tiny_m else None,
        "columns": list(s.members)}


def second_order_section(st, uf) -> dict:
    """The ``"second_order"`` report section of a StabilityOutcome."""
    out: dict = {"analysis": st.analysis, "criterion": _CRITERION, "caution":
                 "second-order results are preliminary and must be checked by a qualified engineer"}
    if st.skipped:
        out["skipped"] = st.skipped
    combos = []
    for name, b in st.buckling.items():
        row = {"name": name, "alpha_cr": _num(b.alpha_cr), "first_order_ok": bool(b.first_order_ok),
               "buckles": bool(b.buckles)}
        so = st.second_order.get(name)
        if so is not None:
            row["second_order_result"] = f"{name} (second order)"
            row["iterations"] = int(so.iterations)
            tiny_d, tiny_m = _negligible(so)
            row["storeys"] = [_storey(s, tiny_d, tiny_m, uf) for s in so.storeys]
        combos.append(row)
    out["combinations"] = combos
    if st.buckled is not None:
        out["buckled"] = st.buckled.name
    return out


def _member_rows(env, group: str, uf) -> dict:
    row: dict = {"member": env.member, "group": group}
    for key in ("N_max", "N_min", "V_max", "V_min", "M_max", "M_min"):
        g = env.governing(key)
        f = uf.moment if key[0] == "M" else uf.force
        k = key.lower()
        row[k] = _num(g["value"] * f)
        row[f"{k}_x"] = _num(g["x"] * uf.length)
        row[f"{k}_front"] = _num(g["front"] * uf.length)
        row[f"{k}_direction"] = "forward" if g["direction"] > 0 else "backward"
    return row


def moving_section(mv, frame, uf) -> dict:
    """The ``"moving"`` report section of a MovingOutcome."""
    groups = {m.id: (m.group or m.id) for m in frame.members}
    vehicles = []
    for v in mv.vehicles:
        c = v.critical
        reactions = []
        for r in v.reactions:
            node = frame.nodes[r["node"]]
            row = {"node": int(r["node"]), "x": _num(node.x * uf.length), "y": _num(node.y * uf.length)}
            for comp in ("fx", "fy", "m"):
                f = uf.moment if comp == "m" else uf.force
                for ext in ("max", "min"):
                    row[f"{comp}_{ext}"] = _num(r[f"{comp}_{ext}"] * f)
            reactions.append(row)
        vehicles.append({
            "name": v.name,
            "axles": [_num(p * uf.force) for p in v.loads],
            "spacings": [_num(s * uf.length) for s in v.spacings],
            "critical": {"member": c.get("member"), "quantity": c.get("key", "").lower(),
                         "value": _num(c["value"] * uf.moment) if c else None,
                         "x": _num(c["x"] * uf.length) if c else None,
                         "front": _num(c["front"] * uf.length) if c else None,
                         "direction": ("forward" if c.get("direction", 1) > 0 else "backward") if c else None,
                         "axle_points": [[_num(x * uf.length), _num(y * uf.length)] for x, y in v.axles]},
            "members": [_member_rows(env, groups.get(mid, mid), uf) for mid, env in v.envelopes.items()],
            "reactions": reactions,
        })
    return {
        "path": {"layer": mv.layer, "kind": mv.kind, "length": _num(mv.length * uf.length)},
        "step": _num(mv.step * uf.length),
        "directions": ["forward", "backward"],
        "load_direction": "downward (global -Y)",
        "note": "the vehicle's effect alone; positions along the path from its start; "
                "forward = toward the path's end",
        "caution": "moving-load results are preliminary and must be checked by a qualified engineer",
        "vehicles": vehicles,
        "influence": [{"point": list(p.point), "member": p.member, "x": _num(p.x * uf.length),
                       "support": p.support, "quantities": list(p.lines)} for p in mv.influence],
    }


def write_influence_csv(mv, path: Path | str, uf) -> None:
    """One row per probe, quantity and path station (atomic)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(INFLUENCE_CSV_COLUMNS)
    for p in mv.influence:
        for q, line in p.lines.items():
            per_unit = q in ("M", "m")
            unit = uf.length_unit if per_unit else "1"
            f = uf.length if per_unit else 1.0
            for s, (x, y), v in zip(line.s, line.xy, line.values):
                w.writerow([f"{p.point[0]:.10g}", f"{p.point[1]:.10g}", p.member, q, f"{s * uf.length:.10g}",
                            f"{x * uf.length:.10g}", f"{y * uf.length:.10g}", f"{v * f:.10g}", unit])
    with atomic_path(Path(path)) as tmp:
        Path(tmp).write_text(buf.getvalue(), encoding="utf-8")
