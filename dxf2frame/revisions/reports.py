"""Reading the report dicts a comparison works on (JSON report, schema 1).

``check_report`` refuses what is not a schema-1 report;
:func:`convert_report` converts one to another force and length unit;
``member_refs`` lists its members as :class:`MemberRef`;
``member_governing`` and ``support_governing`` give the governing
magnitudes per member and per support location, over the results of kind
``"combination"`` (or every result when there are none).
"""
from __future__ import annotations

import copy
import json
import math
import re
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from ..errors import InputFileError, one_line, shorten
from .data import MEMBER_QUANTITIES, REACTION_QUANTITIES, MemberRef
from ..units import length_unit_scale, unit_factor

__all__ = ["convert_report", "load_json_report"]


# -- report access -------------------------------------------------------------


def _governing_results(report: Mapping) -> list[Mapping]:
    results = list(report.get("results") or [])
    return [r for r in results if r.get("kind") == "combination"] or results


def member_refs(report: Mapping) -> list[MemberRef]:
    """The members of a report (from its first result), in report order."""
    seen: dict[str, MemberRef] = {}
    for res in report.get("results") or []:
        for m in res.get("members") or []:
            if m["id"] not in seen:
                seen[m["id"]] = MemberRef(
                    str(m["id"]), str(m.get("layer", "")), str(m.get("handle", "")),
                    (float(m["start"][0]), float(m["start"][1])), (float(m["end"][0]), float(m["end"][1])),
                )
        if seen:
            break
    return list(seen.values())


def _absmax(a: float | None, b: float | None) -> float | None:
    vals = [abs(float(v)) for v in (a, b) if v is not None]
    return max(vals) if vals else None


def _bigger(a: float | None, b: float | None) -> float | None:
    if a is None:
        return b
    if b is None:
        return a
    return max(a, b)


def member_governing(report: Mapping) -> dict[str, dict[str, float | None]]:
    """{member id: {"N", "V", "M", "deflection": governing magnitude or None}}."""
    out: dict[str, dict[str, float | None]] = {}
    for res in _governing_results(report):
        for m in res.get("members") or []:
            g = out.setdefault(m["id"], {q: None for q in MEMBER_QUANTITIES})
            g["N"] = _bigger(g["N"], _absmax(m.get("n_min"), m.get("n_max")))
            g["V"] = _bigger(g["V"], _absmax(m.get("v_min"), m.get("v_max")))
            g["M"] = _bigger(g["M"], _absmax(m.get("m_min"), m.get("m_max")))
            d = m.get("deflection_max")
            g["deflection"] = _bigger(g["deflection"], abs(float(d)) if d is not None else None)
    return out


def support_governing(report: Mapping, tol: float) -> tuple[list[tuple[float, float]], list[dict[str, float]]]:
    """Support locations and their governing |fx|, |fy|, |m|.

    Reactions of different results are gathered by location (within
    ``tol``), so the order of the report's reaction lists does not matter.
    """
    where: list[tuple[float, float]] = []
    gov: list[dict[str, float]] = []
    for res in _governing_results(report):
        used: set[int] = set()
        for rc in res.get("reactions") or []:
            p = (float(rc["x"]), float(rc["y"]))
            k = None
            if where:
                d = np.hypot(*(np.asarray(where) - np.asarray(p)).T)
                for j in np.argsort(d, kind="stable"):
                    if d[j] > tol:
                        break
                    if int(j) not in used:
                        k = int(j)
                        break
            if k is None:
                where.append(p)
                gov.append({q: 0.0 for q in REACTION_QUANTITIES})
                k = len(where) - 1
            used.add(k)
            for q in REACTION_QUANTITIES:
                v = rc.get(q)
                if v is not None:
                    gov[k][q] = max(gov[k][q], abs(float(v)))
    return where, gov


# -- units ---------------------------------------------------------------------------


def check_report(report: Any, label: str) -> None:
    if not isinstance(report, Mapping) or report.get("schema") != 1 or not isinstance(report.get("units"), Mapping):
        raise InputFileError(f"{label}: not a dxf2frame report (schema 1 with 'units' and 'results')")
    if "force" not in report["units"] or "length" not in report["units"]:
        raise InputFileError(f"{label}: the report's 'units' must give 'force' and 'length'")
    if not isinstance(report.get("results", []), list):
        raise InputFileError(f"{label}: 'results' must be a list")
    _check_schema(report, label)


# -- schema of the values a comparison reads -------------------------------------------

#: keys of each list entry a comparison reads -> what they must be
#: ("num": a finite number; "num?": a finite number or null; "text"; "point": [x, y])
_ENTRY_KEYS: dict[str, dict[str, str]] = {
    "members": {"id": "text", "layer": "text?", "handle": "text?", "start": "point", "end": "point",
                "length": "num?", "n_min": "num?", "n_max": "num?", "v_min": "num?", "v_max": "num?",
                "m_min": "num?", "m_max": "num?", "m_min_at": "num?", "m_max_at": "num?",
                "deflection_max": "num?"},
    "reactions": {"x": "num", "y": "num", "fx": "num?", "fy": "num?", "m": "num?"},
    "probes": {"n": "num?", "v": "num?", "m": "num?"},
}


def _is_number(v: Any) -> bool:
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        return False
    try:
        return math.isfinite(float(v))
    except OverflowError:  # an integer of hundreds of digits
        return False


def _value_ok(v: Any, what: str) -> bool:
    optional = what.endswith("?")
    if v is None:
        return optional
    kind = what.rstrip("?")
    if kind == "num":
        return _is_number(v)
    if kind == "text":
        return isinstance(v, (str, int)) and not isinstance(v, bool)
    return isinstance(v, list) and len(v) == 2 and all(_is_number(c) for c in v)  # point


def _describe(v: Any) -> str:
    if isinstance(v, (dict, list)):
        return f"a {'list' if isinstance(v, list) else 'table'} of {len(v)} entries"
    return shorten(repr(v), 40)


def _check_schema(report: Mapping, label: str) -> None:
    """Every value a comparison reads has the type report-schema.md gives it:
    an :class:`InputFileError` names the file and the key path otherwise
    (``results[0].members[3].m_max``)."""
    units = report["units"]
    for k in ("force", "length"):
        if not isinstance(units[k], str):
            raise InputFileError(f"{label}: units.{k} must be a unit name, got {_describe(units[k])}")
    if "source" in report and not isinstance(report["source"], str):
        raise InputFileError(f"{label}: source must be a file name, got {_describe(report['source'])}")
    for i, res in enumerate(report.get("results") or []):
        where = f"results[{i}]"
        if not isinstance(res, Mapping):
            raise InputFileError(f"{label}: {where} must be a table, got {_describe(res)}")
        for key in ("name", "kind"):
            if key in res and not isinstance(res[key], str):
                raise InputFileError(f"{label}: {where}.{key} must be a text, got {_describe(res[key])}")
        for group, keys in _ENTRY_KEYS.items():
            entries = res.get(group)
            if entries is None:
                continue
            if not isinstance(entries, list):
                raise InputFileError(f"{label}: {where}.{group} must be a list, got {_describe(entries)}")
            for j, entry in enumerate(entries):
                at = f"{where}.{group}[{j}]"
                if not isinstance(entry, Mapping):
                    raise InputFileError(f"{label}: {at} must be a table, got {_describe(entry)}")
                for key, what in keys.items():
                    if key not in entry:
                        if what.endswith("?") or group == "probes":
                            continue
                        raise InputFileError(f"{label}: {at} has no '{key}'")
                    if not _value_ok(entry[key], what):
                        need = {"num": "a finite number", "text": "a text", "point": "a point [x, y] of numbers"}
                        raise InputFileError(
                            f"{label}: {at}.{key} must be {need[what.rstrip('?')]}"
                            f"{' or null' if what.endswith('?') else ''}, got {_describe(entry[key])}"
                        )


def convert_report(report: Mapping, force_unit: str, length_unit: str) -> dict:
    """A copy of ``report`` with member, reaction and probe values converted
    to ``force_unit`` and ``length_unit`` (``units`` updated).

    Converted: member ``start``, ``end``, ``length``, ``m_min_at``,
    ``m_max_at``, ``deflection_max`` (length), ``n_*``, ``v_*`` (force),
    ``m_min``, ``m_max`` (moment); reaction ``x``, ``y``, ``fx``, ``fy``,
    ``m``; probe ``n``, ``v``, ``m``.  Other keys are copied as they are.
    Raises ``UnitError`` for an unknown unit.
    """
    out = copy.deepcopy(dict(report))
    fu, lu = report["units"]["force"], report["units"]["length"]
    F = unit_factor(fu, "force") / unit_factor(force_unit, "force")
    L = length_unit_scale(lu) / length_unit_scale(length_unit)
    M = F * L
    if F == 1.0 and L == 1.0:
        out["units"] = {**out["units"], "force": force_unit, "length": length_unit}
        return out

    def sc(v, f):
        return None if v is None else float(v) * f

    for res in out.get("results") or []:
        for m in res.get("members") or []:
            for k in ("start", "end"):
                if m.get(k) is not None:
                    m[k] = [float(c) * L for c in m[k]]
            for k in ("length", "m_min_at", "m_max_at", "deflection_max"):
                if k in m:
                    m[k] = sc(m[k], L)
            for k in ("n_min", "n_max", "v_min", "v_max"):
                if k in m:
                    m[k] = sc(m[k], F)
            for k in ("m_min", "m_max"):
                if k in m:
                    m[k] = sc(m[k], M)
        for rc in res.get("reactions") or []:
            for k, f in (("x", L), ("y", L), ("fx", F), ("fy", F), ("m", M)):
                if k in rc:
                    rc[k] = sc(rc[k], f)
        for pr in res.get("probes") or []:
            for k, f in (("n", F), ("v", F), ("m", M)):
                if k in pr:
                    pr[k] = sc(pr[k], f)
    out["units"] = {**out["units"], "force": force_unit, "length": length_unit,
                    "moment": f"{force_unit}*{length_unit}", "distributed": f"{force_unit}/{length_unit}"}
    return out


def load_json_report(path: Path) -> dict:
    """A report JSON file read and checked (schema 1, every value a
    comparison reads); anything else is an :class:`InputFileError` naming the
    file (and the key)."""
    try:
        text = path.read_text(encoding="utf-8")
        data = json.loads(text)
    except OSError as exc:
        raise InputFileError(f"{path}: cannot read: {exc.strerror or exc}") from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputFileError(f"{path}: not a JSON report: {exc}") from None
    except RecursionError:
        raise InputFileError(f"{path}: not a JSON report: lists or tables nested too deep") from None
    except ValueError as exc:  # an integer longer than Python's digit limit
        raise InputFileError(f"{path}: not a JSON report: {shorten(str(exc), 120)}") from None
    if _ESCAPED_SURROGATE.search(text):
        _refuse_lone_surrogates(data, path)
    check_report(data, str(path))
    return data


_ESCAPED_SURROGATE = re.compile(r"\\u[dD][89a-fA-F][0-9a-fA-F]{2}")
_LONE_SURROGATE = re.compile("[\ud800-\udfff]")


def _refuse_lone_surrogates(data, path: Path) -> None:
    """A JSON text may escape half a UTF-16 pair (``"\\udce9"``): such a
    string cannot be written to any file or terminal, so the report is
    refused naming the key."""
    stack = [(data, "")]
    while stack:
        node, where = stack.pop()
        items = node.items() if isinstance(node, dict) else enumerate(node) if isinstance(node, list) else ()
        for k, v in items:
            at = f"{where}[{k}]" if isinstance(node, list) else (f"{where}.{k}" if where else str(k))
            if isinstance(v, (dict, list)):
                stack.append((v, at))
            elif isinstance(v, str) and _LONE_SURROGATE.search(v) or isinstance(k, str) and _LONE_SURROGATE.search(k):
                raise InputFileError(f"{path}: {one_line(shorten(at))} holds an escaped character that is "
                                     "not a Unicode character (half of a UTF-16 pair)")
