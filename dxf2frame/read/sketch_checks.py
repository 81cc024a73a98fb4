"""Checks that catch a model the drafter may not have meant.

A wrong model with a green "ok" is the worst outcome, so whatever the
reader meets that a drafter may not have meant is said, naming the
handle, and every guess is a warning.  ``check`` and ``solve`` call the
same functions here, so the two commands agree on every drawing.

* :func:`default_case_warning`: loads without a CASE (put in case D).
* :func:`check_section_keys`: a section keyed by a layer no member uses is
  an error (a typo must not fall back to the default section silently).
* :func:`section_lines`: which section each member layer got (for check).
* :func:`upward_gravity_loads`: a force or UDL in a gravity case (D, L,
  Lr, S, R) that acts upward (a sign written for +Y up).
* :func:`section_warnings`: a section whose E, or whose radius of gyration
  against the members' lengths, lies far outside any structural member (a
  unit slip: I in m**4 for mm**4).
* :func:`combination_problems`: an unknown case in a combination formula is
  an error; a case that enters no combination is a warning.
* :func:`near_misses`: a free member end close to another member or a
  support.
* :func:`stiffness_basis`: what stiffness the solver uses (the sections,
  none for a determinate frame, or equal relative stiffness), or the error
  that refuses the frame.

Units: the frame is in SI (m); messages give lengths in drawing units.
"""
from __future__ import annotations

import difflib
import re
from typing import Iterable, Sequence

import numpy as np
import shapely

from dxf2frame.solver import Frame, Settlement

from ..errors import AnalysisError, SettingsError
from ..settings import STANDARD_CASES, Settings

__all__ = [
    "default_case_warning",
    "check_section_keys",
    "section_lines",
    "section_warnings",
    "upward_gravity_loads",
    "combination_problems",
    "absent_case_notes",
    "near_misses",
    "near_miss_distance",
    "stiffness_basis",
    "EQUAL_STIFFNESS_WARNING",
]

#: the warning of a frame solved with equal relative stiffness
EQUAL_STIFFNESS_WARNING = (
    "no sections given: the statically indeterminate frame is solved with equal relative stiffness "
    "(the same EI for every member, axial shortening neglected), as hand methods assume; the forces "
    "rest on that assumption and no deflections are computed; give E, A and I under [sections] in "
    "dxf2frame.toml for the real stiffness"
)


def _handles(handles: Sequence[str], limit: int = 8) -> str:
    hs = list(dict.fromkeys(handles))
    text = ", ".join(f"#{h}" for h in hs[:limit])
    return text + (f" and {len(hs) - limit} more" if len(hs) > limit else "")


def default_case_warning(handles: Sequence[str]) -> str | None:
    """One warning for all loads that had no CASE and went to case D."""
    if not handles:
        return None
    return (f"{len(handles)} load(s) have no CASE attribute and were put in load case D, the default "
            f"({_handles(handles)}); give CASE on every load")


def _suggest(word: str, choices: Iterable[str]) -> str:
    close = difflib.get_close_matches(word.upper(), [c.upper() for c in choices], n=1, cutoff=0.6)
    if not close:
        return ""
    original = next(c for c in choices if c.upper() == close[0])
    return f"; did you mean {original!r}?"


def check_section_keys(frame: Frame, settings: Settings) -> None:
    """Raise :class:`SettingsError` for a ``[sections."LAYER"]`` whose layer
    no member uses, naming the key, the member layers and the closest one."""
    used = sorted({m.layer.upper() for m in frame.members})
    for key in settings.sections:
        if key == "DEFAULT" or key in used:
            continue
        raise SettingsError(
            f"[sections.\"{key}\"] is keyed by a layer no member uses; member layers: {', '.join(used)}"
            + _suggest(key, used),
            path=str(settings.source or ""), key=f"sections.{key}",
        )


#: E of structural materials [Pa]: timber about 10 GPa, concrete 30, steel
#: 200 (common practice); outside these bounds E is taken as a unit slip
E_PLAUSIBLE = (1e9, 1e12)
#: slenderness L / r of the longest member beyond which a section is taken as
#: a unit slip (frame members stay within a few hundred: common practice)
SLENDERNESS_PLAUSIBLE = 10_000.0


def section_warnings(frame: Frame, settings: Settings, unit: tuple[str, float] = ("m", 1.0)) -> list[str]:
    """Warnings for each member layer whose section is far outside any
    structural member: E outside :data:`E_PLAUSIBLE`, a radius of gyration
    r = sqrt(I/A) longer than the layer's longest member, or a slenderness
    L/r beyond :data:`SLENDERNESS_PLAUSIBLE`.  Such a section is almost
    always a unit slip in the settings (I in m**4 for mm**4 makes a beam
    rigid and moves the moments elsewhere without a sign); the frame is
    solved as given.  ``unit``: the drawing's length unit and its size in m,
    for the lengths in the messages."""
    name, scale = unit
    layers: dict[str, list] = {}
    for m in frame.members:
        if m.section is not None:
            layers.setdefault(m.layer.upper(), []).append(m)
    out = []
    for layer in sorted(layers):
        ms = layers[layer]
        key = f'[sections."{layer}"]' if layer in settings.sections else "[sections.default]"
        sec = ms[0].section
        longest = max(ms, key=lambda m: frame.geometry(m)[0])
        L = frame.geometry(longest)[0]
        r = float(np.sqrt(sec.I / sec.A))
        where = f"layer {layer} ({key})"
        if not E_PLAUSIBLE[0] <= sec.E <= E_PLAUSIBLE[1]:
            out.append(f"{where}: E = {sec.E / 1e9:.4g} GPa lies outside 1-1000 GPa, where structural materials "
                       f"lie (timber about 10 GPa, concrete 30, steel 200: common practice); check E's unit")
        if r > L:
            out.append(f"{where}: the radius of gyration sqrt(I/A) = {r / scale:.4g} {name} is longer than the "
                       f"layer's longest member ({longest.group}, handle {longest.handle}, {L / scale:.6g} {name}); "
                       f"check the units of I and A")
        elif L / r > SLENDERNESS_PLAUSIBLE:
            out.append(f"{where}: the slenderness L/r of its longest member ({longest.group}, handle "
                       f"{longest.handle}) is {L / r:.3g} (r = sqrt(I/A) = {r / scale:.4g} {name}), far beyond "
                       f"any frame member (a few hundred: common practice); check the units of I and A")
    return out


#: the standard cases whose loads act down (dead, live, roof live, snow,
#: rain); wind and earthquake may lift
GRAVITY_CASES = ("D", "L", "Lr", "S", "R")


def upward_gravity_loads(loads: Sequence) -> list[str]:
    """One warning per gravity case (:data:`GRAVITY_CASES`) holding forces
    or UDLs that act upward: a force whose upward component is its larger
    one, a UDL along gravity with a negative intensity or along +Y with a
    positive one.  Most often a sign written for +Y up where the blocks
    take gravity as positive; the loads are applied as written.
    ``loads``: the reader's load specs (:mod:`dxf2frame.read.cleanup`)."""
    from .cleanup import ForceSpec, UdlSpec

    up: dict[str, list[str]] = {}
    for ld in loads:
        if ld.case not in GRAVITY_CASES:
            continue
        if isinstance(ld, ForceSpec):
            lifts = ld.fy > 0 and ld.fy >= abs(ld.fx)
        elif isinstance(ld, UdlSpec):
            w = ld.w1 + ld.w2
            lifts = (ld.direction == "GRAVITY" and w < 0) or (ld.direction == "Y" and w > 0)
        else:
            continue
        if lifts:
            up.setdefault(ld.case, []).append(ld.handle)
    out = []
    for case, handles in sorted(up.items()):
        out.append(f"{len(handles)} load(s) of case {case} act upward ({_handles(handles)}), though {case} loads act down "
                   f"unless something lifts: the blocks take gravity as positive (P along the arrow, W along DIR = "
                   f"GRAVITY), so a minus sign written for +Y up reverses a load; applied as written")
    return out


def section_lines(frame: Frame, settings: Settings) -> list[str]:
    """``LAYER: <where its section comes from>`` for each member layer,
    with the A and I it got (and the shape they come from)."""
    out = []
    got = {}
    for m in frame.members:
        got.setdefault(m.layer.upper(), m.section)
    for layer in sorted(got):
        if layer in settings.sections:
            sec = got[layer] or settings.sections[layer]
            out.append(f"{layer}: own section [sections.\"{layer}\"]" + (f" {sec.name}" if sec.name else "")
                       + _section_values(settings, layer, sec))
        elif "DEFAULT" in settings.sections:
            sec = got[layer] or settings.sections["DEFAULT"]
            out.append(f"{layer}: default section [sections.default]" + (f" {sec.name}" if sec.name else "")
                       + _section_values(settings, "DEFAULT", sec))
        else:
            out.append(f"{layer}: none")
    return out


def _section_values(settings: Settings, key: str, sec) -> str:
    """``": A = 5040 mm**2, I = 8.647e+07 mm**4 (shape I 310x165x6x10 (mm))"``
    of the section ``sec`` the members got; in in**2 and in**4 for a shape
    given in inches or feet."""
    shape = settings.section_shapes.get(key)
    inch = shape is not None and shape.endswith(("(in)", "(inch)", "(ft)"))
    u, f = ("in", 0.0254) if inch else ("mm", 1e-3)
    text = f": A = {sec.A / f**2:.5g} {u}**2, I = {sec.I / f**4:.5g} {u}**4, E = {sec.E / 1e9:.4g} GPa"
    if key in settings.section_shapes:
        text += f" (shape {settings.section_shapes[key]})"
    elif key in settings.section_outlines:
        text += f" (outline drawn on layer SECTION-{settings.section_outlines[key]})"
    density = settings.section_density.get(key, settings.section_density.get("DEFAULT"))
    if density is not None:
        text += f", density {density:.5g} kg/m**3"
    return text


def combination_problems(settings: Settings, present: Sequence[str], specs) -> list[str]:
    """Warnings for the load cases of the drawing that enter no combination
    of ``specs`` ((name, factors, family) as built by
    :func:`dxf2frame.pipeline.combination_specs`).  Nothing when the
    settings ask for no combination at all (cases only, on purpose)."""
    if not settings.combinations_builtin and not settings.combinations_extra:
        return []
    used = {c for _, factors, _ in specs for c in factors}
    out = _repeated_terms(settings.combinations_extra)
    for c in present:
        if c in used:
            continue
        like = [k for k in STANDARD_CASES if k.upper() == c.strip().upper()]
        if c in STANDARD_CASES:
            hint = "add a combination with it under [combinations]"
        elif like:   # 'LR' for 'Lr', 'l' for 'L', 'D ' for 'D': case names are exact
            hint = (f"it differs from the standard case {like[0]!r} only in letter case or spaces, and case names "
                    f"are exact: write CASE={like[0]} on its loads, or map it in [cases] ({c.strip()} = "
                    f"\"{like[0]}\")")
        else:
            hint = (f"map it onto a standard case letter in [cases] (e.g. {c} = \"L\") or name it in "
                    "[combinations] extra")
        out.append(f"load case {c!r} enters no load combination: it is solved on its own but left out of every "
                   f"combination and envelope; {hint}")
    return out


def _repeated_terms(formulas: Sequence[str]) -> list[str]:
    """A warning for each combination of the settings that names a case in
    two terms (``1.2D+1.6L+1.6L``): the terms add up, which a typo makes
    silently."""
    from dxf2frame.solver.combinations import format_combination, parse_combination

    out = []
    for text in formulas:
        names = re.findall(r"[A-Za-z][A-Za-z0-9_]*", str(text))
        twice = sorted({n for n in names if names.count(n) > 1})
        if twice:
            try:
                read = format_combination(parse_combination(str(text)))
            except ValueError:
                continue
            out.append(f"combination {text!r} names {', '.join(twice)} in more than one term: the terms add up, "
                       f"so it is read as {read!r}; write each case once if that is not meant")
    return out


def absent_case_notes(settings: Settings, present: Sequence[str]) -> list[str]:
    """Notes (not warnings) for the settings' own combinations that name a
    standard case the drawing has no loads in: normal (a frame without snow
    loads), the term contributes nothing."""
    from dxf2frame.solver.combinations import parse_combination

    out = []
    for text in settings.combinations_extra:
        try:
            names = {settings.case_name(c) if c not in present else c for c in parse_combination(text)}
        except ValueError:
            continue
        absent = sorted(c for c in names if c not in present and c in STANDARD_CASES)
        if absent:
            out.append(f"combination {text!r}: the drawing has no loads in case(s) {', '.join(absent)}; "
                       "those terms contribute nothing")
    return out


def unknown_case_error(text: str, name: str, present: Sequence[str]) -> SettingsError:
    """The error for a combination formula naming a case that is neither a
    standard case letter nor a case of the drawing."""
    choices = list(dict.fromkeys([*present, *STANDARD_CASES]))
    return SettingsError(
        f"combination {text!r} names load case {name!r}, which is neither a standard case letter "
        f"({', '.join(STANDARD_CASES)}) nor a load case of this drawing ({', '.join(present) or 'none'})"
        + _suggest(name, choices),
        key="combinations.extra",
    )


def near_miss_distance(tol: float, shorter: float) -> float:
    """Largest gap [m] still taken for a near miss: the larger of 10 snap
    tolerances and 2 % of the shorter of the two members (convention v2)."""
    return max(10.0 * tol, 0.02 * shorter)


def near_misses(frame: Frame, tol: float, unit: tuple[str, float]) -> list[tuple[float, float, str]]:
    """Free member ends (one member, no support) within
    :func:`near_miss_distance` of another member or of a support.

    Returns (x, y) of the free end in drawing units and the warning text
    (both handles, the gap and where), one per pair of entities.
    """
    name, scale = unit
    n, members = len(frame.nodes), frame.members
    if not members:
        return []
    xy = np.array([(nd.x, nd.y) for nd in frame.nodes], dtype=float)
    si = np.array([m.start for m in members])
    ei = np.array([m.end for m in members])
    degree = np.bincount(np.concatenate([si, ei]), minlength=n)
    supported = np.zeros(n, dtype=bool)
    for s in frame.supports:
        supported[s.node] = True
    L = np.hypot(*(xy[ei] - xy[si]).T)
    lines = shapely.linestrings(np.stack([xy[si], xy[ei]], axis=1))
    tree = shapely.STRtree(lines)
    sup_nodes = np.array([s.node for s in frame.supports], dtype=np.intp)
    sup_tree = shapely.STRtree(shapely.points(xy[sup_nodes])) if len(sup_nodes) else None
    seen: set[frozenset] = set()
    out = []
    free = np.flatnonzero((degree == 1) & ~supported)
    for nid in free.tolist():
        mi = int(np.flatnonzero((si == nid) | (ei == nid))[0])
        own = members[mi]
        p = shapely.points(xy[nid])
        reach = near_miss_distance(tol, L[mi])
        best = None  # (gap, handle, layer, what, overshoot)
        other_end = own.end if own.start == nid else own.start
        for k in tree.query(p, predicate="dwithin", distance=reach).tolist():
            if k == mi or members[k].handle == own.handle and members[k].group == own.group:
                continue
            gap = float(shapely.distance(p, lines[k]))
            # a short piece beyond a joint is a line drawn past the member it meets
            overshoot = other_end in (members[k].start, members[k].end)
            limit = reach if overshoot else near_miss_distance(tol, min(L[mi], L[k]))
            if gap <= limit and (best is None or gap < best[0]):
                best = (gap, members[k].handle, members[k].layer, "member", overshoot)
        near_sup = (sup_tree.query(p, predicate="dwithin", distance=reach).tolist()
                    if sup_tree is not None else [])
        for s_i in near_sup:
            sn = int(sup_nodes[s_i])
            gap = float(np.hypot(*(xy[sn] - xy[nid])))
            if sn != nid and (best is None or gap < best[0]):
                s = frame.supports[s_i]
                best = (gap, s.handle, s.layer, f"{s.kind} support", False)
        if best is None:
            continue
        gap, h2, l2, what, overshoot = best
        pair = frozenset((own.handle, h2))
        if pair in seen:
            continue
        seen.add(pair)
        x, y = xy[nid] / scale
        where = f"the free end of member #{own.handle} on layer '{own.layer}' at ({x:.6g}, {y:.6g}) {name}"
        if overshoot:
            text = (f"near miss: {where} runs {gap / scale:.3g} {name} past member #{h2} on layer '{l2}', "
                    "leaving a short free stub; trim the line to the joint (or draw the stub clearly longer)")
        else:
            text = (f"near miss: {where} stops {gap / scale:.3g} {name} short of {what} #{h2} on layer '{l2}'; "
                    "a joint was probably meant: join the lines, or move them clearly apart")
        out.append((float(x), float(y), text))
    return out


def stiffness_basis(frame: Frame, status: str, settings: Settings) -> str:
    """What stiffness the solver works with: ``"sections"`` (every member
    has one), ``"none"`` (a determinate or unstable frame: forces need no
    stiffness) or ``"equal"`` (no member has a section: equal relative
    stiffness, to be warned about).

    Raises :class:`AnalysisError` when the frame cannot be solved as drawn:
    only some members have sections, the settings ask to refuse, or spring
    supports or settlements make the forces depend on the real stiffness.
    """
    missing = [m for m in frame.members if m.section is None]
    if not missing:
        return "sections"
    if status != "indeterminate":
        return "none"
    first = missing[0]
    names = ", ".join(m.id for m in missing[:6]) + (" ..." if len(missing) > 6 else "")
    hint = "give E, A and I under [sections.default] (or per layer) in dxf2frame.toml"
    if len(missing) < len(frame.members):
        raise AnalysisError(
            f"the frame is statically indeterminate and {len(missing)} member(s) have no section ({names}) while "
            "others have one; their stiffness decides the forces",
            handle=first.handle, layer=first.layer, hint=hint)
    if settings.missing_sections == "refuse":
        raise AnalysisError(
            f"the frame is statically indeterminate and its members have no section ({names}); their stiffness "
            "decides the forces ([analysis] missing_sections = \"refuse\")",
            handle=first.handle, layer=first.layer, hint=hint)
    springs = [s for s in frame.supports if s.kind == "spring"]
    settle = [ld for ld in frame.loads if isinstance(ld, Settlement)]
    if springs or settle:
        what = (f"spring support #{springs[0].handle}" if springs
                else f"the settlement of support #{settle[0].handle}")
        raise AnalysisError(
            f"the frame is statically indeterminate, its members have no section and {what} makes the forces depend "
            "on the real stiffness (equal relative stiffness cannot stand in for it)",
            handle=springs[0].handle if springs else settle[0].handle,
            layer=springs[0].layer if springs else "", hint=hint)
    return "equal"
