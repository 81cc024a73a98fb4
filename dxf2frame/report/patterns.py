"""Pattern live load in the report: the top-level ``patterns`` key.

For every load case of ``[patterns] cases`` (ASCE/SEI 7-16 4.3.3, partial
loading) the case is split into parts (by span or member,
:func:`solver.pattern_envelope`), each part solved once, and per result
holding the case -- the case itself and every combination with a non-zero
factor on it -- the envelope over every arrangement of the parts is given
per member with the governing pattern named::

    "patterns": [
      {"case": "L", "by": "span", "parts": ["M1", "M2", "M3"],
       "results": [
         {"name": "L", "factor": 1,
          "members": [{"id": "1A-1", "element": "1A-1",
                       "m_max": 36.45, "m_max_at": 2.4, "m_max_by": "L on M1, M3",
                       "m_min": ..., "v_max": ..., "n_min": ..., ...}, ...]},
         {"name": "1.2D+1.6L", "factor": 1.6, ...}]}]

Values in the report's units (forces FORCE, moments FORCE*LENGTH,
positions LENGTH from the member start), signs as everywhere in the
report.  ``id`` is the reported member (group), ``element`` the analysis
element.  The other cases of a combination are present in every
arrangement; the ``*_by`` text names the parts of the patterned case that
are loaded.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

from .table import json_number

__all__ = ["PatternedCase", "pattern_cases", "pattern_entries"]


@dataclass
class PatternedCase:
    """One patterned load case: its solver envelope and the results holding
    it, ``(name, base, factor)`` (``base`` None for the case itself)."""

    case: str
    by: str
    envelope: Any                                     # solver.PatternEnvelope
    results: list[tuple[str, Any, float]] = field(default_factory=list)


def pattern_cases(frame, cases: Mapping[str, Any], combinations: Sequence, wanted: Sequence[str], by: str,
                  determinate: bool | None = None) -> tuple[list[PatternedCase], list[str]]:
    """The patterned cases of ``wanted`` present in ``cases`` ({name:
    CaseResult}), with the combinations holding them; and one warning per
    wanted case the drawing does not have."""
    from ..solver import pattern_envelope

    out, notes = [], []
    for case in wanted:
        if case not in cases:
            notes.append(f"[patterns] case {case!r} has no loads in this drawing; no pattern envelope for it "
                         f"(cases drawn: {', '.join(cases) or 'none'})")
            continue
        env = pattern_envelope(frame, case, by, determinate=determinate)
        pc = PatternedCase(case, by, env, [(case, None, 1.0)])
        for combo in combinations:
            factors = combo.factors or {}
            if float(factors.get(case, 0.0)) == 0.0:
                continue
            base, factor = env.in_combination(cases, factors, combo.name)
            pc.results.append((combo.name, base, factor))
        out.append(pc)
    return out, notes


def pattern_entries(frame, patterned: Sequence[PatternedCase], force: float, length: float) -> list[dict]:
    """The report's ``patterns`` entries (``force``, ``length``: report
    units per N and per m)."""
    group = {m.id: m.group for m in frame.members}
    scale = {"N": force, "V": force, "M": force * length}
    out = []
    for pc in patterned:
        results = []
        for name, base, factor in pc.results:
            ext = {q: pc.envelope.member_extremes(q, factor=factor, base=base) for q in ("N", "V", "M")}
            rows = []
            for m in frame.members:
                row: dict[str, Any] = {"id": group[m.id], "element": m.id}
                for q in ("M", "V", "N"):
                    e = ext[q][m.id]
                    k = q.lower()
                    for side in ("max", "min"):
                        row[f"{k}_{side}"] = json_number(e[side] * scale[q])
                        row[f"{k}_{side}_at"] = json_number(e[f"{side}_at"] * length)
                        row[f"{k}_{side}_by"] = e[f"{side}_by"]
                rows.append(row)
            results.append({"name": name, "factor": json_number(factor), "members": rows})
        out.append({"case": pc.case, "by": pc.by, "parts": [p.name for p in pc.envelope.parts],
                    "results": results})
    return out
