"""The words of a hand-check sheet: :class:`SheetHeader` and the sheet as
Markdown (:func:`sheet_markdown`) or as fixed-width text lines for the PDF
page (:func:`sheet_text`).

Both are built from the same blocks (headings, facts, the table of forces,
the equilibrium equations, the result at the cut and its comparison with
the stiffness solution), so they say the same.  Values are converted to the
sheet's units (:class:`~dxf2frame.report.UnitFactors`; N and m by default)
and printed with four significant figures; signs as in
:mod:`dxf2frame.handcheck`.
"""
from __future__ import annotations

import math
import re
import textwrap
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from .. import CAUTION
from ..numbers import fmt
from .terms import SI_UNITS
from ..report.report import UnitFactors

if TYPE_CHECKING:  # pragma: no cover - typing only
    from .free_body import FreeBody

__all__ = ["SheetHeader", "sheet_markdown", "sheet_text"]

_NUMERIC = re.compile(r"[-+]?\d")  # a table cell holding a number (right-aligned in text)


# -- the sheet --------------------------------------------------------------------


@dataclass(frozen=True)
class SheetHeader:
    """What the sheet says about where the numbers come from.

    Attributes
    ----------
    title : heading, e.g. "member 1A-1 at 2.500 m from its start"
    source : drawing file name ("" when the frame was built by hand)
    revision : first 12 hex digits of the SHA-256 of the drawing file
    member : which member, in words (id, entity handle, layer, ends)
    cut : where the cut is, in words (drawing coordinates, distance)
    frame_status : determinacy of the frame, in words
    reason : why this cut (a requested point, a governing extreme)
    """

    title: str
    source: str = ""
    revision: str = ""
    member: str = ""
    cut: str = ""
    frame_status: str = ""
    reason: str = ""


def _result_text(fb: FreeBody, family: str | None = None) -> str:
    if fb.result_kind == "combination":
        parts = " + ".join(f"{f:g} × {c}" for c, f in fb.factors.items())
        fam = f", {family}" if family and family not in ("user", "all") else ""
        return f"load combination {fb.result_name}{fam} = {parts}"
    return f"load case {fb.result_name}"


def _method_text(fb: FreeBody) -> str:
    return {
        "statics": "statics of the free body alone (no support on it)",
        "reactions": "statics of the free body with the solved reactions of its supports",
        "end forces": "member end forces from the stiffness solution (indeterminate frame)",
    }[fb.method]


def _term_rows(fb: FreeBody, uf: UnitFactors) -> tuple[list[str], list[list[str]], list[str]]:
    """Table of forces (header, rows) and the detail lines of distributed loads."""
    head = ["term", "what", f"at X, Y [{uf.length_unit}]", f"Fx [{uf.force_unit}]", f"Fy [{uf.force_unit}]",
            f"couple [{uf.moment_unit}]", f"along x' [{uf.force_unit}]", f"along y' [{uf.force_unit}]",
            f"dx [{uf.length_unit}]", f"dy [{uf.length_unit}]", f"moment about cut [{uf.moment_unit}]"]
    fz = 1e-9 * max([abs(v) for t in fb.terms for v in (t.fx, t.fy)] + [0.0]) * uf.force
    mz = 1e-9 * max([abs(t.moment) for t in fb.terms] + [0.0]) * uf.moment
    rows, details = [], []
    for t in fb.terms:
        what = t.kind + (f" #{t.handle}" if t.handle else "")
        rows.append([
            t.label, what, f"{fmt(t.point[0] * uf.length)}, {fmt(t.point[1] * uf.length)}",
            fmt(t.fx * uf.force, fz), fmt(t.fy * uf.force, fz), fmt(t.couple * uf.moment, mz),
            fmt(t.along * uf.force, fz), fmt(t.across * uf.force, fz),
            fmt(t.dx * uf.length, 1e-12), fmt(t.dy * uf.length, 1e-12), fmt(t.moment * uf.moment, mz),
        ])
        d = t.distributed
        line = f"{t.label}: {t.description}"
        if t.s is not None and t.kind in ("point load", "couple"):
            line += f", at {fmt(t.s * uf.length)} {uf.length_unit} from the start of member {t.member}"
        if d is not None:
            wu = f"{uf.force_unit}/{uf.length_unit}"
            if math.isclose(d.w0, d.w1, rel_tol=1e-12):
                inten = f"w = {fmt(d.w0 * uf.distributed)} {wu}"
                res_txt = f"w × {fmt(d.basis_length * uf.length)} {uf.length_unit}"
            else:
                inten = f"w = {fmt(d.w0 * uf.distributed)} to {fmt(d.w1 * uf.distributed)} {wu}"
                res_txt = f"(w1 + w2)/2 × {fmt(d.basis_length * uf.length)} {uf.length_unit}"
            basis = " of horizontal projection" if d.projected else ""
            ang = math.degrees(math.atan2(d.direction[1], d.direction[0]))
            line += (f". {inten}, acting at {ang:.4g}° from +X, over {fmt(d.basis_length * uf.length)} "
                     f"{uf.length_unit}{basis} (from {fmt(d.s0 * uf.length)} to {fmt(d.s1 * uf.length)} "
                     f"{uf.length_unit} along the member); resultant {res_txt} = "
                     f"{fmt(d.resultant * uf.force)} {uf.force_unit} at its centroid, "
                     f"{fmt(d.centroid_s * uf.length)} {uf.length_unit} from the member start")
            if d.centroid_from_cut is not None:
                line += f", {fmt(d.centroid_from_cut * uf.length)} {uf.length_unit} from the cut"
        elif t.kind in ("point load", "nodal force", "reaction", "end force") and (t.fx or t.fy):
            mag = math.hypot(t.fx, t.fy)
            ang = math.degrees(math.atan2(t.fy, t.fx))
            line += (f". Magnitude {fmt(mag * uf.force)} {uf.force_unit} at {ang:.4g}° from +X: "
                     f"components Fx = {fmt(t.fx * uf.force, fz)}, Fy = {fmt(t.fy * uf.force, fz)}; "
                     f"along the member {fmt(t.along * uf.force, fz)}, across {fmt(t.across * uf.force, fz)}")
        details.append(line)
    return head, rows, details


def _blocks(fb: FreeBody, header: SheetHeader, uf: UnitFactors, figure: str | None,
            family: str | None) -> list[tuple[str, Any]]:
    """The sheet as a list of (kind, content) blocks: h1, h2, p, quote, list, table, image."""
    c, s = fb.axis
    B: list[tuple[str, Any]] = [("h1", f"Hand check: {header.title}")]
    facts = []
    if header.source:
        facts.append(f"Drawing: {header.source}" + (f", revision (SHA-256) {header.revision}" if header.revision else ""))
    facts.append(f"Result: {_result_text(fb, family)}")
    facts.append(f"Units: forces {uf.force_unit}, lengths {uf.length_unit}, moments {uf.moment_unit}, "
                 f"distributed loads {uf.force_unit}/{uf.length_unit}")
    if header.member:
        facts.append(f"Member: {header.member}")
    facts.append(f"Cut: {header.cut}" if header.cut else
                 f"Cut: member {fb.member} at x = {fmt(fb.x * uf.length)} {uf.length_unit} from its start")
    if header.frame_status:
        facts.append(f"Frame: {header.frame_status}")
    if header.reason:
        facts.append(f"Why this cut: {header.reason}")
    facts.append(f"Method: {_method_text(fb)}")
    B.append(("list", facts))
    B.append(("quote", CAUTION))

    B.append(("h2", "Free body"))
    B.append(("p", fb.description[:1].upper() + fb.description[1:]))
    c, s = c + 0.0, s + 0.0
    B.append(("p", f"Local axes of member {fb.member}: x' = ({c:.4f}, {s:.4f}) from its start to its end, "
                   f"y' = ({0.0 - s:.4f}, {c:.4f}) (x' turned 90° counter-clockwise). Cut point "
                   f"({fmt(fb.cut_point[0] * uf.length)}, {fmt(fb.cut_point[1] * uf.length)}) {uf.length_unit}."))
    if figure:
        B.append(("image", figure))

    B.append(("h2", "Forces on the free body"))
    B.append(("p", "Global components Fx, Fy (positive along +X, +Y), components along the member's local "
                   "axes x', y', lever arms dx, dy from the cut to the point of application, and moment "
                   "about the cut = dx·Fy − dy·Fx + couple (counter-clockwise positive)."))
    head, rows, details = _term_rows(fb, uf)
    if rows:
        B.append(("table", (head, rows)))
        B.append(("list", details))
    else:
        B.append(("p", "No force acts on this free body."))
    for note in fb.notes:
        B.append(("p", note))

    B.append(("h2", "Equilibrium of the free body"))
    if fb.side == "start":
        pos = ("N along +x' (pulling away from the body: tension), V along −y', "
               "M counter-clockwise")
    else:
        pos = ("N along −x' (pulling away from the body: tension), V along +y', "
               "M clockwise")
    B.append(("p", f"Internal forces on the cut face in their positive sense: {pos}."))
    B.append(("list", fb.equations(uf)))

    B.append(("h2", "Result at the cut"))
    mz = fb._zero("m") * uf.moment
    vals = [
        ["N", f"{fmt(fb.n * uf.force, fb._zero('n') * uf.force)} {uf.force_unit}", fb.meaning("n")],
        ["V", f"{fmt(fb.v * uf.force, fb._zero('v') * uf.force)} {uf.force_unit}", fb.meaning("v")],
        ["M", f"{fmt(fb.m * uf.moment, mz)} {uf.moment_unit}", fb.meaning("m")],
    ]
    B.append(("table", (["quantity", "value", "meaning"], vals)))
    sol = (f"The stiffness solution gives at the same point N = {fmt(fb.solver_n * uf.force, fb._zero('n') * uf.force)}, "
           f"V = {fmt(fb.solver_v * uf.force, fb._zero('v') * uf.force)} {uf.force_unit}, "
           f"M = {fmt(fb.solver_m * uf.moment, mz)} {uf.moment_unit}")
    agree = all(
        abs(getattr(fb, k) - getattr(fb, f"solver_{k}")) <= 1e-6 * max(1.0, abs(getattr(fb, f"solver_{k}"))) +
        1e3 * fb._zero(k)
        for k in ("n", "v", "m")
    )
    sol += " (agrees)." if agree else " (DIFFERS: please report this sheet)."
    B.append(("p", sol))
    return B


def _md_cell(text: str) -> str:
    return str(text).replace("|", "\\|")


def sheet_markdown(fb: FreeBody, header: SheetHeader, units: UnitFactors | None = None, *,
                   figure: str | None = None, family: str | None = None) -> str:
    """The sheet as Markdown; ``figure`` is the file name of the PNG to embed."""
    uf = units or SI_UNITS
    out: list[str] = []
    for kind, content in _blocks(fb, header, uf, figure, family):
        if kind == "h1":
            out += [f"# {content}", ""]
        elif kind == "h2":
            out += [f"## {content}", ""]
        elif kind == "p":
            out += [content, ""]
        elif kind == "quote":
            out += [f"> {content}", ""]
        elif kind == "list":
            out += [f"- {x}" for x in content] + [""]
        elif kind == "image":
            out += [f"![free body and element at the cut]({content})", ""]
        elif kind == "table":
            head, rows = content
            out.append("| " + " | ".join(_md_cell(h) for h in head) + " |")
            out.append("|" + "|".join("---" for _ in head) + "|")
            out += ["| " + " | ".join(_md_cell(c) for c in r) + " |" for r in rows]
            out.append("")
    return "\n".join(out).rstrip() + "\n"


def sheet_text(fb: FreeBody, header: SheetHeader, units: UnitFactors | None = None, *,
               width: int = 118, family: str | None = None) -> list[str]:
    """The sheet as plain text lines (fixed-width tables), for the PDF page."""
    uf = units or SI_UNITS
    out: list[str] = []

    def wrap(text: str, indent: str = "", first: str = "") -> list[str]:
        return textwrap.wrap(text, width, initial_indent=first or indent, subsequent_indent=indent,
                             break_on_hyphens=False) or [""]

    for kind, content in _blocks(fb, header, uf, None, family):
        if kind == "h1":
            out += [content, "=" * min(width, len(content))]
        elif kind == "h2":
            out += ["", content.upper()]
        elif kind == "p":
            out += wrap(content)
        elif kind == "quote":
            out += wrap(content, "  ", "! ")
        elif kind == "list":
            for item in content:
                out += wrap(item, "    ", "  - ")
        elif kind == "table":
            head, rows = content
            cols = list(zip(*([head] + rows)))
            widths = [max(len(str(v)) for v in col) for col in cols]
            out.append("  ".join(str(h).ljust(w) for h, w in zip(head, widths)).rstrip())
            out.append("  ".join("-" * w for w in widths))
            for r in rows:
                out.append("  ".join(str(v).rjust(w) if _NUMERIC.match(str(v)) else str(v).ljust(w)
                                     for v, w in zip(r, widths)).rstrip())
    return out

