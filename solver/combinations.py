"""Load combinations: text such as ``1.2D + 1.6L + 0.5S`` <-> factors, and
the built-in basic combinations of ASCE/SEI 7.

Syntax
------
A combination is a sum of terms ``[factor][*]NAME`` or
``[factor][*](combination)``; ``-`` subtracts.  Factors are plain decimals
(no exponent: ``0.525E`` is 0.525 times the earthquake case).  Case names are letters,
digits and underscores and start with a letter or underscore; they are
case-sensitive (``L`` and ``Lr`` differ).  Examples::

    1.2D + 1.6L + 0.5S       0.9D+1.0W       D + 0.75(L + 0.6W)

Templates (the built-in sets, or sets supplied by the settings) may also
hold alternatives separated by ``|`` inside parentheses:
``1.2D + 1.6L + 0.5(Lr|S|R)`` stands for three combinations.

>>> parse_combination("1.2D + 1.6L + 0.5S")
{'D': 1.2, 'L': 1.6, 'S': 0.5}
>>> format_combination({"D": 0.9, "W": 1.0})
'0.9D+W'

Built-in sets
-------------
The strength (LRFD) and allowable-stress (ASD) basic combinations of
ASCE/SEI 7-16, sections 2.3.1 and 2.4.1, written down from memory (check
them against the standard in force for the project; the exceptions of the
standard, such as the 0.5 factor on L in some LRFD combinations, are not
applied).  They are plain data (:data:`LRFD_BASIC`, :data:`ASD_BASIC`)
and :func:`builtin_combinations` accepts replacement templates.
"""
from __future__ import annotations

import re
from collections.abc import Sequence

__all__ = [
    "CombinationSyntaxError",
    "ASCE7_EDITION",
    "LRFD_BASIC",
    "ASD_BASIC",
    "BUILTIN_SETS",
    "parse_combination",
    "format_combination",
    "expand_template",
    "builtin_combinations",
    "REVERSIBLE_DEFAULT",
    "with_reversals",
]

REVERSIBLE_DEFAULT: tuple[str, ...] = ("W", "E")
"""Cases that act both ways by default: wind and earthquake."""

ASCE7_EDITION = "ASCE/SEI 7-16"

# ASCE/SEI 7-16 section 2.3.1, basic combinations for strength design
# (from memory).
LRFD_BASIC: tuple[str, ...] = (
    "1.4D",
    "1.2D + 1.6L + 0.5(Lr|S|R)",
    "1.2D + 1.6(Lr|S|R) + (L|0.5W)",
    "1.2D + 1.0W + L + 0.5(Lr|S|R)",
    "1.2D + 1.0E + L + 0.2S",
    "0.9D + 1.0W",
    "0.9D + 1.0E",
)

# ASCE/SEI 7-16 section 2.4.1, basic combinations for allowable stress
# design (from memory).
ASD_BASIC: tuple[str, ...] = (
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

BUILTIN_SETS: dict[str, tuple[str, ...]] = {"LRFD": LRFD_BASIC, "ASD": ASD_BASIC}

DEAD = "D"


class CombinationSyntaxError(ValueError):
    """Text that is not a combination; the message shows where."""

    def __init__(self, text: str, pos: int, what: str) -> None:
        self.text, self.pos = text, pos
        super().__init__(f"{what} at position {pos + 1} in {text!r}")


_TOKEN = re.compile(
    r"\s*(?:(?P<num>\d+\.?\d*|\.\d+)|(?P<name>[A-Za-z_][A-Za-z0-9_]*)|(?P<op>[-+*()|]))"
)


def _tokens(text: str) -> list[tuple[str, str, int]]:
    out, pos = [], 0
    while pos < len(text):
        if text[pos:].strip() == "":
            break
        mt = _TOKEN.match(text, pos)
        if not mt:
            raise CombinationSyntaxError(text, pos, f"unexpected character {text[pos]!r}")
        kind = mt.lastgroup
        out.append((kind, mt.group(kind), mt.start(kind)))
        pos = mt.end()
    out.append(("end", "", len(text)))
    return out


def _clean(f: float) -> float:
    return round(f, 12) + 0.0


class _Parser:
    """Recursive descent over the token list.  Each rule returns a list of
    alternatives, each a {case: factor} dict (a single alternative unless
    ``|`` appears)."""

    def __init__(self, text: str) -> None:
        self.text = text
        self.toks = _tokens(text)
        self.i = 0

    def peek(self) -> tuple[str, str, int]:
        return self.toks[self.i]

    def take(self) -> tuple[str, str, int]:
        t = self.toks[self.i]
        self.i += 1
        return t

    def fail(self, what: str):
        raise CombinationSyntaxError(self.text, self.peek()[2], what)

    def parse(self) -> list[dict[str, float]]:
        alts = self.sum()
        if self.peek()[0] != "end":
            self.fail(f"unexpected {self.peek()[1]!r}")
        return alts

    def sum(self) -> list[dict[str, float]]:
        sign = 1.0
        if self.peek()[1] in "+-" and self.peek()[0] == "op":
            sign = -1.0 if self.take()[1] == "-" else 1.0
        acc = _scale(self.term(), sign)
        while self.peek()[0] == "op" and self.peek()[1] in ("+", "-"):
            sign = -1.0 if self.take()[1] == "-" else 1.0
            acc = _product(acc, _scale(self.term(), sign))
        return acc

    def term(self) -> list[dict[str, float]]:
        factor = 1.0
        kind, val, _ = self.peek()
        if kind == "num":
            self.take()
            factor = float(val)
            if self.peek()[1] == "*":
                self.take()
        kind, val, _ = self.peek()
        if kind == "name":
            self.take()
            return [{val: factor}]
        if kind == "op" and val == "(":
            self.take()
            alts = self.sum()
            while self.peek()[1] == "|":
                self.take()
                alts = alts + self.sum()
            if self.peek()[1] != ")":
                self.fail("expected ')'")
            self.take()
            return _scale(alts, factor)
        self.fail("expected a case name or '('")
        raise AssertionError  # pragma: no cover


def _scale(alts: list[dict[str, float]], f: float) -> list[dict[str, float]]:
    return [{k: v * f for k, v in a.items()} for a in alts]


def _product(a: list[dict[str, float]], b: list[dict[str, float]]) -> list[dict[str, float]]:
    out = []
    for x in a:
        for y in b:
            z = dict(x)
            for k, v in y.items():
                z[k] = z.get(k, 0.0) + v
            out.append(z)
    return out


def _tidy(d: dict[str, float]) -> dict[str, float]:
    return {k: _clean(v) for k, v in d.items() if _clean(v) != 0.0}


def parse_combination(text: str) -> dict[str, float]:
    """``"1.2D + 1.6L + 0.5S"`` -> ``{"D": 1.2, "L": 1.6, "S": 0.5}``.

    Terms naming the same case add up; parentheses distribute a factor
    (``0.75(L + 0.6W)``).  Alternatives (``|``) are not allowed here.
    Raises :class:`CombinationSyntaxError` (a ValueError) on bad text.
    """
    if not isinstance(text, str) or not text.strip():
        raise CombinationSyntaxError(str(text), 0, "empty combination")
    alts = _Parser(text).parse()
    if len(alts) != 1:
        raise CombinationSyntaxError(text, text.find("|"), "alternatives '|' are only allowed in templates")
    return _tidy(alts[0])


def expand_template(template: str) -> list[dict[str, float]]:
    """All combinations a template stands for, e.g.
    ``"1.2D + 1.6L + 0.5(Lr|S|R)"`` -> three factor dicts."""
    return [_tidy(a) for a in _Parser(template).parse()]


def _num(f: float) -> str:
    """Plain decimal (never an exponent, which the parser would not read)."""
    text = f"{f:.12f}".rstrip("0").rstrip(".")
    return text if text not in ("", "-0") else "0"


def format_combination(factors: dict[str, float]) -> str:
    """``{"D": 1.2, "L": 1.6, "S": 0.5}`` -> ``"1.2D+1.6L+0.5S"`` (factor
    1 is left out; terms keep the dict order; zero factors are dropped)."""
    parts: list[str] = []
    for name, f in factors.items():
        f = _clean(float(f))
        if f == 0.0:
            continue
        mag = abs(f)
        body = name if mag == 1.0 else f"{_num(mag)}{name}"
        if not parts:
            parts.append(body if f > 0 else f"-{body}")
        else:
            parts.append(("+" if f > 0 else "-") + body)
    return "".join(parts)


def builtin_combinations(
    kind: str,
    present_cases: Sequence[str],
    templates: Sequence[str] | None = None,
    *,
    reversible: Sequence[str] = (),
) -> list[tuple[str, dict[str, float]]]:
    """The basic combinations of one set for the load cases a frame has.

    Parameters
    ----------
    kind : "LRFD" or "ASD" (case-insensitive) -- ASCE/SEI 7-16 sections
        2.3.1 and 2.4.1, from memory
    present_cases : names of the load cases the frame has
    templates : replacement templates (e.g. from the settings file); by
        default the built-in set of ``kind``

    Returns
    -------
    ``[(name, factors), ...]``: every alternative expanded, terms whose case
    is absent dropped, combinations that became duplicates dropped (first
    kept), and combinations left with no case but D dropped -- except the
    ones that are D alone by definition (1.4D, D).  ``name`` is the
    formatted combination, e.g. ``"1.2D+1.6L+0.5S"``.  With
    ``reversible`` (e.g. ``["W", "E"]``) the list goes through
    :func:`with_reversals`.
    """
    if templates is None:
        key = str(kind).upper()
        if key not in BUILTIN_SETS:
            raise ValueError(f"unknown combination set {kind!r}; expected one of {sorted(BUILTIN_SETS)}")
        templates = BUILTIN_SETS[key]
    present = set(present_cases)
    out: list[tuple[str, dict[str, float]]] = []
    seen: set[tuple] = set()
    for tpl in templates:
        for full in expand_template(tpl):
            dead_only = set(full) <= {DEAD}
            kept = {k: v for k, v in full.items() if k in present}
            if not kept:
                continue
            if not dead_only and set(kept) <= {DEAD}:
                continue
            sig = tuple(sorted(kept.items()))
            if sig in seen:
                continue
            seen.add(sig)
            out.append((format_combination(kept), kept))
    return with_reversals(out, reversible) if reversible else out


def with_reversals(
    combos: Sequence[tuple[str, dict[str, float]]],
    reversible: Sequence[str] = REVERSIBLE_DEFAULT,
) -> list[tuple[str, dict[str, float]]]:
    """Every combination holding a reversible case, with both signs.

    Wind and earthquake act in either direction along the frame: each
    combination of ``combos`` that holds a case of ``reversible`` (with a
    non-zero factor) is followed by its mirror, that case's factor negated
    (``1.2D+W+L`` then ``1.2D-W+L``).  Several reversible cases in one
    combination flip independently (2**k variants).  Names are the
    formatted factors, so they show the sign; a combination given by name
    keeps its name for the sign it was written with, and its mirrors are
    named by their factors (followed by ``" (mirror of <name>)"`` in the
    odd case that a given combination of other factors bears that name).
    A mirror that is itself in the list is left to it (name and place);
    duplicates among the given combinations are dropped, first kept; other
    combinations pass unchanged.

    >>> with_reversals([("0.9D+W", {"D": 0.9, "W": 1.0})])
    [('0.9D+W', {'D': 0.9, 'W': 1.0}), ('0.9D-W', {'D': 0.9, 'W': -1.0})]
    """
    rev = list(dict.fromkeys(reversible))
    combos = [(name, dict(factors)) for name, factors in combos]
    given_names = {name for name, _ in combos}

    def signature(f: dict[str, float]) -> tuple:
        return tuple(sorted((k, v) for k, v in f.items() if v != 0.0))

    given_sigs = {signature(f) for _, f in combos}
    out: list[tuple[str, dict[str, float]]] = []
    seen: set[tuple] = set()

    def push(name: str, f: dict[str, float]) -> None:
        sig = signature(f)
        if sig not in seen:
            seen.add(sig)
            out.append((name, f))

    for name, factors in combos:
        push(name, factors)
        flips = [c for c in rev if factors.get(c, 0.0) != 0.0]
        for mask in range(1, 2 ** len(flips)):
            g = dict(factors)
            for i, c in enumerate(flips):
                if mask >> i & 1:
                    g[c] = -g[c]
            if signature(g) in given_sigs:  # given in the list: it keeps its own name and place
                continue
            mirror = format_combination(g)
            if mirror in given_names:  # a given combination of other factors bears this name
                mirror = f"{mirror} (mirror of {name})"
            push(mirror, g)
    return out
