"""Load combinations: parsing, naming, and the built-in ASCE/SEI 7 sets.

A combination is a dict ``{case: factor}``.  Text form: a sum of
``factor case`` terms, e.g. ``"1.2D + 1.6L + 0.5S"``; the factor may be
followed by ``*``, omitted (1.0) or negative, and may multiply a bracketed
sum: ``"D + 0.75(L + 0.6W)"``.  Case names are letters, digits and
underscores starting with a letter or underscore; they are case-sensitive
(``L`` is live load, ``Lr`` roof live load).

The built-in sets are written as templates in the same syntax plus
alternatives ``(Lr|S|R)`` ("Lr or S or R"), each alternative with its own
optional factor: ``"1.2D + 1.6(Lr|S|R) + (L|0.5W)"``.  They can be replaced
by passing other templates (the settings file may list them).
"""
from __future__ import annotations

import itertools
import re
from collections.abc import Sequence

__all__ = [
    "parse_combination",
    "format_combination",
    "expand_template",
    "builtin_combinations",
    "LRFD_TEMPLATES",
    "ASD_TEMPLATES",
    "BUILTIN_TEMPLATES",
]

# Basic combinations of ASCE/SEI 7-16, written from memory (not copied from
# the standard's text): strength design, section 2.3.1 (combinations 1-7),
# and allowable stress design, section 2.4.1 (combinations 1-8, with 6 in
# its two parts).  D dead, L live, Lr roof live, S snow, R rain, W wind,
# E earthquake.  The edition's load-factor exceptions (e.g. 0.5L for
# light occupancies) and the special seismic combinations are not included.
LRFD_TEMPLATES: tuple[str, ...] = (
    "1.4D",
    "1.2D + 1.6L + 0.5(Lr|S|R)",
    "1.2D + 1.6(Lr|S|R) + (L|0.5W)",
    "1.2D + 1.0W + L + 0.5(Lr|S|R)",
    "1.2D + 1.0E + L + 0.2S",
    "0.9D + 1.0W",
    "0.9D + 1.0E",
)
ASD_TEMPLATES: tuple[str, ...] = (
    "D",
    "D + L",
    "D + (Lr|S|R)",
    "D + 0.75L + 0.75(Lr|S|R)",
    "D + (0.6W|0.7E)",
    "D + 0.75L + 0.75(0.6W) + 0.75(Lr|S|R)",
    "D + 0.75L + 0.75(0.7E) + 0.75S",
    "0.6D + 0.6W",
    "0.6D + 0.7E",
)
BUILTIN_TEMPLATES: dict[str, tuple[str, ...]] = {"LRFD": LRFD_TEMPLATES, "ASD": ASD_TEMPLATES}

_TOKEN = re.compile(r"\s*(?:(?P<num>\d+(?:\.\d*)?|\.\d+)|(?P<name>[A-Za-z_][A-Za-z0-9_]*)|(?P<op>[-+*()|]))")
_DEAD = "D"


def _tokens(text: str) -> list[tuple[str, str, int]]:
    out = []
    pos = 0
    text = text.rstrip()
    while pos < len(text):
        mt = _TOKEN.match(text, pos)
        if not mt:
            raise ValueError(f"cannot read combination {text!r} at position {pos}: {text[pos:pos + 10]!r}")
        kind = mt.lastgroup
        out.append((kind, mt.group(kind), mt.start(kind)))
        pos = mt.end()
    return out


class _Parser:
    """Recursive-descent parser of combination text.  The result of a
    sub-expression is a list of alternatives, each a ``{case: factor}``."""

    def __init__(self, text: str, allow_alternatives: bool) -> None:
        self.text = text
        self.toks = _tokens(text)
        self.i = 0
        self.alt = allow_alternatives

    def error(self, what: str) -> ValueError:
        pos = self.toks[self.i][2] if self.i < len(self.toks) else len(self.text)
        return ValueError(f"combination {self.text!r}: {what} at position {pos}")

    def peek(self) -> tuple[str, str, int] | None:
        return self.toks[self.i] if self.i < len(self.toks) else None

    def take(self, value: str | None = None) -> tuple[str, str, int] | None:
        t = self.peek()
        if t is not None and (value is None or t[1] == value):
            self.i += 1
            return t
        return None

    def parse(self) -> list[dict[str, float]]:
        if not self.toks:
            raise ValueError("empty combination")
        res = self.expr()
        if self.peek() is not None:
            raise self.error(f"unexpected {self.peek()[1]!r}")
        return res

    def expr(self) -> list[dict[str, float]]:
        sign = 1.0
        if self.take("-"):
            sign = -1.0
        else:
            self.take("+")
        acc = self.term(sign)
        while True:
            t = self.peek()
            if t is None or t[0] != "op" or t[1] not in ("+", "-"):
                return acc
            self.i += 1
            acc = _product(acc, self.term(-1.0 if t[1] == "-" else 1.0))

    def term(self, sign: float) -> list[dict[str, float]]:
        factor = sign
        t = self.peek()
        if t is not None and t[0] == "num":
            self.i += 1
            factor *= float(t[1])
            self.take("*")
        t = self.peek()
        if t is None:
            raise self.error("a case name or '(' expected")
        if t[0] == "name":
            self.i += 1
            return [{t[1]: factor}]
        if t[1] == "(":
            self.i += 1
            alts = self.expr()
            while self.take("|"):
                if not self.alt:
                    raise self.error("'|' (alternatives) is only allowed in templates")
                alts = alts + self.expr()
            if not self.take(")"):
                raise self.error("')' expected")
            return [{k: factor * v for k, v in a.items()} for a in alts]
        raise self.error(f"a case name or '(' expected, not {t[1]!r}")


def _product(a: list[dict[str, float]], b: list[dict[str, float]]) -> list[dict[str, float]]:
    out = []
    for x, y in itertools.product(a, b):
        z = dict(x)
        for k, v in y.items():
            z[k] = z.get(k, 0.0) + v
        out.append(z)
    return out


def _clean(f: float) -> float:
    """Round away binary noise from products such as 0.75 * 0.6."""
    return float(f"{f:.12g}")


def parse_combination(text: str) -> dict[str, float]:
    """Parse ``"1.2D + 1.6L + 0.5S"`` into ``{"D": 1.2, "L": 1.6, "S": 0.5}``.

    Terms are ``[factor][*]case`` or ``[factor][*](sum)``; a repeated case
    adds up.  Raises ValueError on anything else.

    >>> parse_combination("1.2D + 1.6L + 0.5S")
    {'D': 1.2, 'L': 1.6, 'S': 0.5}
    >>> parse_combination("D + 0.75(L + 0.6W)")
    {'D': 1.0, 'L': 0.75, 'W': 0.45}
    """
    (res,) = _Parser(text, allow_alternatives=False).parse()
    return {k: _clean(v) for k, v in res.items()}


def format_combination(factors: dict[str, float]) -> str:
    """Compact name of a combination: ``{"D": 1.2, "L": 1.6}`` -> ``"1.2D+1.6L"``.
    Factor 1 is omitted (``"D+L"``), zero terms are dropped.

    >>> format_combination({"D": 1.2, "L": 1.6, "S": 0.5})
    '1.2D+1.6L+0.5S'
    """
    parts = []
    for case, f in factors.items():
        if f == 0:
            continue
        mag = abs(f)
        txt = case if mag == 1.0 else f"{mag:.6g}{case}"
        parts.append(("-" if f < 0 else ("+" if parts else "")) + txt)
    return "".join(parts) if parts else "0"


def expand_template(template: str, present_cases: Sequence[str]) -> list[dict[str, float]]:
    """Every combination a template stands for, with the terms of absent
    cases dropped (before duplicates are removed by the caller).

    >>> expand_template("1.2D + 1.6L + 0.5(Lr|S|R)", ["D", "L", "S"])
    [{'D': 1.2, 'L': 1.6}, {'D': 1.2, 'L': 1.6, 'S': 0.5}, {'D': 1.2, 'L': 1.6}]
    """
    present = set(present_cases)
    out = []
    for alt in _Parser(template, allow_alternatives=True).parse():
        out.append({k: _clean(v) for k, v in alt.items() if k in present and v != 0})
    return out


def builtin_combinations(
    kind: str, present_cases: Sequence[str], templates: Sequence[str] | None = None
) -> list[tuple[str, dict[str, float]]]:
    """The basic combinations of a design method for the cases a frame has.

    Parameters
    ----------
    kind : "LRFD" (ASCE/SEI 7-16 2.3.1) or "ASD" (2.4.1), case-insensitive
    present_cases : load cases of the frame
    templates : replace the built-in templates (same syntax)

    Returns ``[(name, {case: factor}), ...]`` in template order.  Absent
    cases are dropped from each combination; a combination left with no
    case but D is dropped unless its template is D alone (1.4D, D); empty
    ones and duplicates are dropped.
    """
    key = kind.upper()
    if templates is None:
        if key not in BUILTIN_TEMPLATES:
            raise ValueError(f"unknown combination set {kind!r}; expected one of {sorted(BUILTIN_TEMPLATES)}")
        templates = BUILTIN_TEMPLATES[key]
    seen: set[tuple] = set()
    out = []
    for tpl in templates:
        full = _Parser(tpl, allow_alternatives=True).parse()
        dead_only = all(set(a) <= {_DEAD} for a in full)
        for combo in expand_template(tpl, present_cases):
            if not combo:
                continue
            if not dead_only and set(combo) <= {_DEAD}:
                continue
            sig = tuple(sorted(combo.items()))
            if sig in seen:
                continue
            seen.add(sig)
            out.append((format_combination(combo), combo))
    return out
