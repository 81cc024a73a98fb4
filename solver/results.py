"""Results of load cases and combinations: reactions, displacements and
member forces, with superposition and envelopes.

A :class:`CaseResult` is linear in the loads, so a combination is the sum
of scaled case results (:func:`combine`); member diagrams stay exact
because a :class:`~dxf2frame.solver.forces.MemberResults` adds end forces and
concatenates the (scaled) member loads.

Sign conventions: reactions are the forces the supports exert on the
structure, global X, Y, moment counter-clockwise; member forces follow
:mod:`solver.forces` (tension +, clockwise shear +, sagging +).
"""
from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from .combinations import format_combination
from .forces import MemberResult, MemberResults

__all__ = [
    "Reaction",
    "CaseResult",
    "combine",
    "combine_many",
    "envelope",
    "reaction_envelope",
    "MemberResult",
    "MemberResults",
]


@dataclass(frozen=True)
class Reaction:
    """Force a support exerts on the structure.

    ``node`` and its coordinates ``x``, ``y``; ``fx``, ``fy`` [force] along
    global X, Y; ``m`` [force*length] counter-clockwise; ``support_index``
    is the position of the support in ``Frame.supports``.  Spring forces
    are included.
    """

    node: int
    x: float
    y: float
    fx: float
    fy: float
    m: float
    support_index: int

    def scaled(self, f: float) -> "Reaction":
        return replace(self, fx=self.fx * f, fy=self.fy * f, m=self.m * f)

    def __add__(self, other: "Reaction") -> "Reaction":
        if not isinstance(other, Reaction):
            return NotImplemented
        if other.support_index != self.support_index:
            raise ValueError("cannot add reactions of different supports")
        return replace(self, fx=self.fx + other.fx, fy=self.fy + other.fy, m=self.m + other.m)


def _merge_factors(a: Mapping[str, float], fa: float, b: Mapping[str, float] | None = None, fb: float = 0.0) -> dict:
    out: dict[str, float] = {}
    for src, f in ((a, fa), (b or {}, fb)):
        for k, v in src.items():
            out[k] = round(out.get(k, 0.0) + f * v, 12)
    return {k: v for k, v in out.items() if v != 0.0}


@dataclass(eq=False)
class CaseResult:
    """Result of one load case or combination.

    Attributes
    ----------
    name : case name, or the combination's name
    kind : "case" or "combination"
    factors : {case name: factor} of the load cases in this result
    displacements : (n_nodes, 3) global ux, uy [length], rz [rad, CCW], or
        None when the frame was solved without sections.  At a node where
        every member end is pinned and nothing restrains rotation there is
        no single node rotation; rz is reported as 0 there.
    reactions : one :class:`Reaction` per support, in ``Frame.supports`` order
    members : {member id: MemberResult} (a lazy mapping; see
        :class:`~dxf2frame.solver.forces.MemberResults`, whose ``table()`` gives the
        extremes of all members at once)
    family : name of the set a combination belongs to ("LRFD", "ASD",
        "user", ...), "" for a load case
    frame_cases : every load case the frame has (used by :func:`combine`)
    """

    name: str
    kind: str
    factors: dict[str, float]
    displacements: np.ndarray | None
    reactions: list[Reaction]
    members: MemberResults
    family: str = ""
    frame_cases: tuple[str, ...] = field(default_factory=tuple)

    def scaled(self, f: float, name: str | None = None) -> "CaseResult":
        """Every force and displacement multiplied by ``f``."""
        f = float(f)
        factors = _merge_factors(self.factors, f)
        return CaseResult(
            name if name is not None else (format_combination(factors) or f"0*{self.name}"),
            "combination",
            factors,
            None if self.displacements is None else self.displacements * f,
            [r.scaled(f) for r in self.reactions],
            self.members.scaled(f),
            self.family,
            self.frame_cases,
        )

    def __add__(self, other: "CaseResult") -> "CaseResult":
        """Superposition of two results of the same frame."""
        if not isinstance(other, CaseResult):
            return NotImplemented
        if len(other.reactions) != len(self.reactions):
            raise ValueError("cannot add results of different frames")
        disp = None
        if self.displacements is not None and other.displacements is not None:
            disp = self.displacements + other.displacements
        factors = _merge_factors(self.factors, 1.0, other.factors, 1.0)
        return CaseResult(
            format_combination(factors) or f"{self.name}+{other.name}",
            "combination",
            factors,
            disp,
            [a + b for a, b in zip(self.reactions, other.reactions)],
            self.members + other.members,
            self.family if self.family == other.family else "",
            self.frame_cases or other.frame_cases,
        )

    def reaction_array(self) -> np.ndarray:
        """(n_supports, 3) array of fx, fy, m."""
        return np.array([(r.fx, r.fy, r.m) for r in self.reactions], dtype=float).reshape(-1, 3)

    def member_table(self) -> dict[str, np.ndarray]:
        """Extremes of every member as arrays (see ``MemberResults.table``)."""
        return self.members.table()


def combine(
    case_results: Mapping[str, CaseResult],
    factors,
    name: str | None = None,
    *,
    family: str = "",
):
    """Superpose load-case results.

    Parameters
    ----------
    case_results : {case name: CaseResult} (from :func:`solver.solve`)
    factors : {case name: factor}, e.g. ``{"D": 1.2, "L": 1.6}``.  A case
        with a non-zero factor must be in ``case_results``, unless the frame
        has no loads of that case at all: then it contributes nothing and is
        skipped (so a standard combination can name snow on a frame without
        snow).  A case the frame has but ``case_results`` lacks is an error.
        Also accepted: a list of ``(name, factors)`` pairs or a mapping
        ``{name: factors}``; the function then returns
        ``{name: CaseResult}`` (see :func:`combine_many`).
    name : name of the result (default: the factors written out)
    family : set the combination belongs to ("LRFD", "ASD", "user", ...)

    Returns
    -------
    CaseResult with ``kind="combination"`` and ``factors`` holding the
    factors of the cases actually used.
    """
    if not isinstance(factors, Mapping) or any(isinstance(v, Mapping) for v in factors.values()):
        return combine_many(case_results, factors, family=family)
    if not case_results:
        raise ValueError("no load-case results to combine")
    any_result = next(iter(case_results.values()))
    frame_cases = set(any_result.frame_cases)
    total: CaseResult | None = None
    for case, f in factors.items():
        f = float(f)
        if f == 0.0:
            continue
        r = case_results.get(case)
        if r is None:
            if case in frame_cases:
                raise KeyError(f"load case {case!r} is in the frame but not among the solved results")
            continue  # the frame has no such loads: contributes nothing
        term = r.scaled(f)
        total = term if total is None else total + term
    if total is None:
        total = any_result.scaled(0.0)
        total.factors = {}
    label = name if name is not None else (format_combination(total.factors) or "0")
    return replace(total, name=label, kind="combination", family=family)


def combine_many(
    case_results: Mapping[str, CaseResult],
    combos: Iterable[tuple[str, Mapping[str, float]]] | Mapping[str, Mapping[str, float]],
    *,
    family: str = "",
) -> dict[str, CaseResult]:
    """``{name: combine(case_results, factors, name)}`` for each
    ``(name, factors)`` pair (or mapping item) of ``combos``."""
    items = combos.items() if isinstance(combos, Mapping) else combos
    out: dict[str, CaseResult] = {}
    for name, factors in items:
        out[name] = combine(case_results, dict(factors), name, family=family)
    return out


def _results_list(results) -> list[CaseResult]:
    if isinstance(results, Mapping):
        return list(results.values())
    return list(results)


def envelope(results: Sequence[CaseResult] | Mapping[str, CaseResult]) -> dict[str, dict]:
    """Largest and smallest N, V, M and deflection of every member over
    several results.

    Returns
    -------
    ``{member id: {...}}`` with, for q in n, v, m: ``q_max``, ``q_max_at``
    (position from the member start), ``q_max_by`` (name of the governing
    result), and the same for ``q_min``; and ``deflection_max`` (largest
    |displacement|), ``deflection_max_at``, ``deflection_max_by`` (None
    when the results carry no deflections).  Ties go to the earlier result.
    """
    res = _results_list(results)
    if not res:
        return {}
    ids = res[0].members.layout.ids
    tables = [r.members.table() for r in res]
    names = [r.name for r in res]
    out: dict[str, dict] = {mid: {} for mid in ids}
    cols: dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]] = {}
    for q in ("n", "v", "m"):
        for ext, pick in (("max", np.argmax), ("min", np.argmin)):
            vals = np.vstack([t[f"{q}_{ext}"] for t in tables])
            ats = np.vstack([t[f"{q}_{ext}_at"] for t in tables])
            w = pick(vals, axis=0)
            j = np.arange(vals.shape[1])
            cols[f"{q}_{ext}"] = (vals[w, j], ats[w, j], w)
    dv = np.vstack([t["deflection_max"] for t in tables])
    da = np.vstack([t["deflection_max_at"] for t in tables])
    have = ~np.all(np.isnan(dv), axis=0)
    dw = np.argmax(np.where(np.isnan(dv), -np.inf, dv), axis=0)
    j = np.arange(dv.shape[1])
    dval, dat = dv[dw, j], da[dw, j]
    for i, mid in enumerate(ids):
        row = out[mid]
        for key, (v, a, w) in cols.items():
            row[key] = float(v[i])
            row[f"{key}_at"] = float(a[i])
            row[f"{key}_by"] = names[int(w[i])]
        if have[i]:
            row["deflection_max"] = float(dval[i])
            row["deflection_max_at"] = float(dat[i])
            row["deflection_max_by"] = names[int(dw[i])]
        else:
            row["deflection_max"] = row["deflection_max_at"] = row["deflection_max_by"] = None
    return out


def reaction_envelope(results: Sequence[CaseResult] | Mapping[str, CaseResult]) -> list[dict]:
    """Per support (``Frame.supports`` order): node, x, y and for c in fx,
    fy, m: ``c_max``, ``c_max_by``, ``c_min``, ``c_min_by``."""
    res = _results_list(results)
    if not res:
        return []
    arr = np.stack([r.reaction_array() for r in res])  # (R, s, 3)
    out = []
    for k, r0 in enumerate(res[0].reactions):
        row = {"node": r0.node, "x": r0.x, "y": r0.y, "support_index": r0.support_index}
        for ci, comp in enumerate(("fx", "fy", "m")):
            col = arr[:, k, ci]
            hi, lo = int(np.argmax(col)), int(np.argmin(col))
            row[f"{comp}_max"], row[f"{comp}_max_by"] = float(col[hi]), res[hi].name
            row[f"{comp}_min"], row[f"{comp}_min_by"] = float(col[lo]), res[lo].name
        out.append(row)
    return out
