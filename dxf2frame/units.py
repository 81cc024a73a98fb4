"""Physical quantities in attribute text -> SI floats.

Attribute values in a drawing may carry their own unit (``"2 kip/ft"``,
``"35 kN"``, ``"15 kip*ft"``, ``"200 GPa"``, ``"204 in**4"``); a bare number
takes a default unit chosen by the caller (the settings file's force unit,
the drawing's length unit, ...).  Everything is returned in SI base units:

==================  ============================  ======================
kind                dimension                     SI unit returned
==================  ============================  ======================
force               force                         N
distributed         force / length                N/m
moment              force * length                N*m
length              length                        m
stress              force / length**2 (E)         Pa
area                length**2                     m**2
inertia             length**4                     m**4
spring_linear       force / length                N/m
spring_rotational   force * length / angle        N*m/rad
angle               angle (dimensionless)         rad
==================  ============================  ======================

One pint ``UnitRegistry`` is created lazily per process
(:func:`registry`); parsed strings are cached, so a drawing with 20,000
identical load attributes parses each distinct text once.

Exponents are limited to two digits (``in**4`` is fine, ``10**10**10`` is
rejected) so that hostile attribute text cannot make the parser compute
huge integers.

Examples
--------
>>> round(parse_quantity("2 kip/ft", "distributed", default_unit="kN/m"), 3)
29187.806
>>> parse_quantity("35", "force", default_unit="kN")
35000.0
"""
from __future__ import annotations

import math
import re
from functools import lru_cache

from .errors import UnitError, shorten

__all__ = [
    "KINDS",
    "registry",
    "build_registry",
    "parse_quantity",
    "unit_factor",
    "length_unit_scale",
    "normalise_length_unit",
    "force_length_units",
    "INSUNITS",
    "INSUNITS_OTHER",
    "insunits_code",
    "number_text",
]

#: kind -> (SI unit pint string, human description, example)
KINDS: dict[str, tuple[str, str, str]] = {
    "force": ("N", "a force", "35 kN"),
    "distributed": ("N/m", "a distributed load (force per length)", "4.5 kN/m"),
    "moment": ("N*m", "a moment (force times length)", "15 kip*ft"),
    "length": ("m", "a length", "1.5 m"),
    "stress": ("Pa", "a modulus (force per area)", "200 GPa"),
    "area": ("m**2", "an area", "5000 mm**2"),
    "inertia": ("m**4", "a second moment of area (length**4)", "204 in**4"),
    "spring_linear": ("N/m", "a spring stiffness (force per length)", "500 kN/m"),
    "spring_rotational": ("N*m/rad", "a rotational stiffness (force*length per radian)", "2000 kN*m/rad"),
    "angle": ("rad", "an angle", "30 deg"),
    "density": ("kg/m**3", "a density (mass per volume)", "7850 kg/m**3"),   # self-weight (issue 18)
}

#: $INSUNITS codes the reader understands -> short pint name of the unit
INSUNITS: dict[int, str] = {1: "inch", 2: "ft", 4: "mm", 5: "cm", 6: "m"}
#: the other $INSUNITS codes, named in the message that refuses them
INSUNITS_OTHER: dict[int, str] = {
    0: "unitless", 3: "miles", 7: "kilometres", 8: "microinches", 9: "mils", 10: "yards",
    11: "angstroms", 12: "nanometres", 13: "microns", 14: "decimetres", 15: "decametres",
    16: "hectometres", 17: "gigametres", 18: "astronomical units", 19: "light years",
    20: "parsecs", 21: "US survey feet", 22: "US survey inches", 23: "US survey yards",
    24: "US survey miles",
}

# Exact metres per unit (by definition; avoids 12 * 0.0254 float noise).
_EXACT_LENGTH: dict[str, float] = {
    "inch": 0.0254,
    "ft": 0.3048,
    "mm": 1e-3,
    "cm": 1e-2,
    "m": 1.0,
}
_LENGTH_ALIASES: dict[str, str] = {
    "in": "inch", "inch": "inch", "inches": "inch", '"': "inch",
    "ft": "ft", "foot": "ft", "feet": "ft", "'": "ft",
    "mm": "mm", "millimeter": "mm", "millimetre": "mm", "millimeters": "mm", "millimetres": "mm",
    "cm": "cm", "centimeter": "cm", "centimetre": "cm", "centimeters": "cm", "centimetres": "cm",
    "m": "m", "meter": "m", "metre": "m", "meters": "m", "metres": "m",
}

_MAX_TEXT = 80
_POWER = re.compile(r"\*\*|\^")
_SMALL_EXPONENT = re.compile(r"\s*\(?\s*[-+]?\d{1,2}(?:\.\d+)?(?![\d.])\s*\)?")
_CHAINED_POWER = re.compile(r"\s*(\*\*|\^)")
_HAS_DIGIT = re.compile(r"\d")


# -- characters of number texts ------------------------------------------------
# The unit parser silently drops characters it does not know ("\u22125 kN"
# would be +5 kN, "5,5 kN" 55 kN, "5 kN; 2" 10 kN), so every character is
# checked here first: a text is read exactly as written or refused.

#: the Unicode minus sign: what CAD programs write for "-"; read silently
_MINUS_SIGN = "\u2212"
#: dashes a drafter may have typed for a minus: read as "-" with a warning
_MINUS_LIKE: dict[str, str] = {
    "\u2013": "an en dash",
    "\u2012": "a figure dash",
    "\u2010": "a hyphen",
    "\u2011": "a non-breaking hyphen",
    "\ufe63": "a small hyphen-minus",
    "\uff0d": "a full-width hyphen-minus",
}
#: characters of a number text besides ASCII letters and digits (pint reads
#: "kN\u00b7m", "mm\u00b2", "30\u00b0" and "\u00b5m" correctly)
_PLAIN = frozenset(" .+-*/^()_\u00b7\u00b2\u00b3\u00b0\u00b5")
_GROUPED_DIGITS = re.compile(r"\d\s+\d")
_SPACES = re.compile(r"\s+")
_TWO_POINTS = re.compile(r"\.\d*\.")
#: the one number a value starts with: a decimal (with exponent) or a plain fraction such as 3/8
_LEADING_NUMBER = re.compile(r"[+-]?(?:\d+/\d+(?![\d.])|(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)")
#: digits a unit may carry: an exponent after ** or ^
_UNIT_EXPONENT = re.compile(r"(?:\*\*|\^)\s*[+-]?\d+(?:\.\d+)?")


def number_text(text: str) -> tuple[str, str | None]:
    """Check the characters of a number text and normalise its minus sign.

    Returns ``(text, note)``: the text with the Unicode minus (U+2212) and
    minus-like dashes (:data:`_MINUS_LIKE`) replaced by ``-``, and a note
    when a dash was taken for a minus (``None`` otherwise).

    Raises ``_ParseFailure`` for a comma (a decimal comma and a thousands
    comma cannot be told apart: ``"1,000"`` is 1 or 1000), digits grouped
    by spaces (``"1 000"``), two points in one number (``"1.000.5"``), and any character that is not an ASCII letter
    or digit, a non-ASCII letter (``\u00b5``, ``\u00c5``) or one of
    ``. + - * / ^ ( ) _ \u00b7 \u00b2 \u00b3 \u00b0``: the unit parser would
    drop it and read another number.
    """
    t = str(text).strip()
    if len(t) > _MAX_TEXT:
        raise _ParseFailure(f"value of {len(t)} characters, longer than {_MAX_TEXT} ({shorten(t)!r})")
    dashes = sorted({_MINUS_LIKE[c] for c in t if c in _MINUS_LIKE})
    t = t.replace(_MINUS_SIGN, "-")
    for c in _MINUS_LIKE:
        t = t.replace(c, "-")
    if "," in t:
        raise _ParseFailure(_comma_message(t))
    if _GROUPED_DIGITS.search(t):
        raise _ParseFailure(
            f"{shorten(t)!r} has digits separated by a space (a thousands separator?); write one number "
            f"without separators, e.g. {_GROUPED_DIGITS.sub(lambda m: m.group()[0] + m.group()[-1], t)!r}"
        )
    t = _SPACES.sub(" ", t)  # a no-break or thin space between number and unit is a space
    if _TWO_POINTS.search(t):
        raise _ParseFailure(
            f"{shorten(t)!r} has two decimal points in one number (points as thousands separators?); "
            "write the number with one decimal point and no thousands separator, e.g. '1000.5 kN'"
        )
    for c in t:
        if not (c.isascii() and c.isalnum() or c in _PLAIN or (not c.isascii() and c.isalpha())):
            raise _ParseFailure(
                f"{shorten(t)!r} holds the character {c!r} (U+{ord(c):04X}), which is not part of a number or unit"
            )
    if _is_arithmetic(t):
        raise _ParseFailure(
            f"{shorten(t)!r} is a calculation, not one number with a unit; write the value it stands for "
            "as one number (the unit parser would silently work the sum out)"
        )
    note = None
    if dashes:
        note = f"{' and '.join(dashes)} read as a minus sign in {shorten(t)!r}"
    return t, note


def _is_arithmetic(t: str) -> bool:
    """True when a number text is more than one number and a unit: ``5-2``,
    ``3*2 kN``, ``2 kN + 1``.  A unit may carry exponents (``in**4``,
    ``mm^2``); a plain fraction (``3/8 in``) is one number."""
    m = _LEADING_NUMBER.match(t)
    if m is None:
        return False  # no leading number: the unit parser says what is wrong
    rest = t[m.end():]
    if rest and not (rest[0] == " " or rest[0].isalpha() or rest[0] in "(\u00b0\u00b5"):
        return True
    return any(c in "0123456789" for c in _UNIT_EXPONENT.sub("", rest))


def _comma_message(t: str) -> str:
    """The refusal of a number text with a comma, with the two readings."""
    head = f"{shorten(t)!r}: a comma in a number is ambiguous (decimal comma or thousands separator)"
    m = re.fullmatch(r"([-+]?\d*),(\d+)(.*)", t)
    if m and "." not in t:
        decimal = f"{m.group(1)}.{m.group(2)}{m.group(3)}"
        thousands = f"{m.group(1)}{m.group(2)}{m.group(3)}"
        return f"{head}; write {decimal!r} if the comma is a decimal point, or {thousands!r} for a thousands separator"
    return f"{head}; write the number with a point as the decimal mark and no thousands separator, e.g. '5.5 kN'"


@lru_cache(maxsize=1)
def registry():
    """The process-wide pint ``UnitRegistry`` (created on first use by
    :func:`build_registry`)."""
    return build_registry()


def build_registry():
    """A new pint ``UnitRegistry``.

    Pint keeps its parsed unit definitions in the user's cache folder
    (``cache_folder=":auto:"``), which cuts the registry's build from about
    0.35 s to a few hundredths on every later start.  A cache that cannot be
    read or written (read-only home, a file half-written by another process)
    costs only that time: the registry is then built from the definitions
    alone, with the same units.
    """
    import pint

    try:
        return pint.UnitRegistry(cache_folder=":auto:")
    except Exception:  # noqa: BLE001 - any cache failure: build without it
        return pint.UnitRegistry()


class _ParseFailure(Exception):
    """Internal: a message without the entity context."""


def _check_text(text: str) -> str:
    t = text.strip()
    if not t:
        raise _ParseFailure("empty value")
    if len(t) > _MAX_TEXT:
        raise _ParseFailure(f"value longer than {_MAX_TEXT} characters")
    if not _HAS_DIGIT.search(t):
        raise _ParseFailure(f"no number in {t!r}")
    for m in _POWER.finditer(t):
        e = _SMALL_EXPONENT.match(t, m.end())
        if e is None or _CHAINED_POWER.match(t, e.end()):
            raise _ParseFailure(f"exponent too large or not a plain number in {t!r}")
    return t


@lru_cache(maxsize=256)
def _unit_si_factor(unit: str, kind: str) -> float:
    """SI value of one ``unit`` (which must have the dimension of ``kind``)."""
    import pint

    ureg = registry()
    si, what, example = KINDS[kind]
    try:
        q = ureg.parse_expression(unit) if unit else ureg.Quantity(1.0)
        if not isinstance(q, ureg.Quantity):
            q = ureg.Quantity(float(q))
        return float(q.to(si).magnitude)
    except pint.DimensionalityError:
        raise _ParseFailure(f"unit {unit!r} is not {what} (e.g. '{example}')") from None
    except pint.UndefinedUnitError as exc:
        raise _ParseFailure(_unknown_unit_text(unit, exc, kind)) from None
    except Exception as exc:  # pint raises many kinds for bad text
        raise _ParseFailure(f"unknown unit {unit!r} ({exc})") from None



#: units a structural drawing uses, in their usual spelling (for "did you mean")
_COMMON_UNITS: tuple[str, ...] = (
    "N", "kN", "MN", "lbf", "kip", "tonf", "Pa", "kPa", "MPa", "GPa", "psi", "ksi", "psf", "ksf",
    "m", "mm", "cm", "km", "inch", "in", "ft", "yd", "deg", "rad", "kgf",
)


def _unknown_unit_text(text: str, exc: Exception, kind: str) -> str:
    """"unknown unit 'Gpa' in '200 Gpa'; did you mean '200 GPa'?" (without
    the unit library's own wording).  The suggestion is the common unit
    spelled the same but for letter case, else the closest by spelling,
    offered only when the corrected text reads as the wanted kind."""
    import difflib

    names = getattr(exc, "unit_names", None) or exc.args[:1]
    bad = names[0] if isinstance(names, (tuple, list)) and names else str(names)
    bad = str(bad)
    msg = f"unknown unit {bad!r} in {text.strip()!r}"
    same_case = [u for u in _COMMON_UNITS if u.lower() == bad.lower()]
    close = same_case or difflib.get_close_matches(bad, _COMMON_UNITS, n=3, cutoff=0.6)
    for cand in close:
        fixed = re.sub(rf"(?<![A-Za-z_]){re.escape(bad)}(?![A-Za-z_0-9])", cand, text.strip())
        try:
            _parse_cached(fixed if _HAS_DIGIT.search(fixed) else f"1 {fixed}", kind, "")
        except Exception:  # noqa: BLE001 - only a suggestion
            continue
        return f"{msg}; did you mean {fixed!r}?"
    return msg


def _describe_dimension(q) -> str:
    """A short human name of a quantity's dimension, for error messages."""
    for kind, (si, what, _) in KINDS.items():
        try:
            q.to(si)
            return what
        except Exception:
            continue
    return f"of dimension {q.dimensionality}"


@lru_cache(maxsize=8192)
def _parse_cached(text: str, kind: str, default_unit: str) -> float:
    import pint

    if kind not in KINDS:
        raise ValueError(f"unknown quantity kind {kind!r}; expected one of {sorted(KINDS)}")
    t = text.strip()
    # fast path: a bare number
    try:
        bare = float(t)
    except ValueError:
        bare = None
    if bare is not None:
        value = bare * _unit_si_factor(default_unit, kind)
    else:
        t = _check_text(t)
        ureg = registry()
        si, what, example = KINDS[kind]
        try:
            q = ureg.parse_expression(t)
        except pint.UndefinedUnitError as exc:
            raise _ParseFailure(_unknown_unit_text(t, exc, kind)) from None
        except Exception as exc:
            raise _ParseFailure(f"cannot read {t!r} as a quantity ({type(exc).__name__}: {exc})") from None
        if not isinstance(q, ureg.Quantity):
            q = ureg.Quantity(float(q))
        if q.unitless:
            value = float(q.magnitude) * _unit_si_factor(default_unit, kind)
        else:
            try:
                value = float(q.to(si).magnitude)
            except pint.DimensionalityError:
                raise _ParseFailure(
                    f"{t!r} is {_describe_dimension(q)}, expected {what} (e.g. '{example}')"
                ) from None
            except Exception as exc:
                raise _ParseFailure(f"cannot convert {t!r} ({exc})") from None
    if not math.isfinite(value):
        raise _ParseFailure(f"{text.strip()!r} is not a finite number")
    return value


def parse_quantity(
    text: str,
    kind: str,
    *,
    default_unit: str,
    handle: str = "",
    layer: str = "",
    tag: str = "",
    notes: list[str] | None = None,
) -> float:
    """Parse attribute text as a physical quantity and return it in SI units.

    Parameters
    ----------
    text : attribute text, e.g. ``"2 kip/ft"`` or a bare ``"12.5"``
    kind : one of :data:`KINDS` (force, distributed, moment, length, stress,
        area, inertia, spring_linear, spring_rotational, angle)
    default_unit : pint unit text applied to a bare number (``"kN"``,
        ``"(kN)/(ft)"``, ``"deg"``, ...)
    handle, layer, tag : where the text came from, for the error message
    notes : a list that receives a warning (naming handle, layer and tag)
        when a dash was read as a minus sign; see :func:`number_text`

    Returns
    -------
    float in the SI unit of ``kind`` (N, N/m, N*m, m, Pa, m**2, m**4, N/m,
    N*m/rad, rad).

    Raises
    ------
    UnitError
        Empty, NaN or infinite values, text pint cannot read, a unit of
        the wrong dimension, a comma in a number, or a character that is
        no part of a number or unit; the message names handle, layer, tag
        and value.
    """
    try:
        t, note = number_text(str(text))
        value = _parse_cached(t, kind, default_unit)
    except (_ParseFailure, ArithmeticError) as exc:
        # ArithmeticError: pint overflows on text such as 'N**1E3'
        what = KINDS[kind][1]
        label = f"attribute {tag}: " if tag else ""
        reason = str(exc) if isinstance(exc, _ParseFailure) else f"cannot read {shorten(str(text).strip())!r} ({exc})"
        raise UnitError(
            f"{label}{reason}",
            handle=handle,
            layer=layer,
            hint=f"write {what} with a unit, e.g. '{KINDS[kind][2]}'",
        ) from None
    if note is not None and notes is not None:
        where = " ".join(w for w in (f"#{handle}" if handle else "", f"on layer '{layer}'" if layer else "") if w)
        notes.append(f"{where + ': ' if where else ''}{tag or 'value'}: {note} (write '-' to silence this warning)")
    return value


def unit_factor(unit: str, kind: str) -> float:
    """SI value of one ``unit`` of the given kind, e.g. ``unit_factor("kip", "force")``.

    Raises ``UnitError`` when the unit is unknown or of another dimension.
    """
    try:
        return _unit_si_factor(unit, kind)
    except _ParseFailure as exc:
        raise UnitError(str(exc), hint=f"use a unit of {KINDS[kind][1]}") from None


def normalise_length_unit(name: str) -> str:
    """Short name of a length unit (``"feet"`` -> ``"ft"``, ``"in"`` -> ``"inch"``).

    Unknown names are returned stripped but otherwise unchanged after
    checking that pint reads them as a length (``UnitError`` if not).
    """
    key = name.strip()
    short = _LENGTH_ALIASES.get(key.lower())
    if short:
        return short
    unit_factor(key, "length")
    return key


def length_unit_scale(name: str) -> float:
    """Metres per one ``name`` (exact for inch, ft, mm, cm, m)."""
    short = normalise_length_unit(name)
    if short in _EXACT_LENGTH:
        return _EXACT_LENGTH[short]
    return unit_factor(short, "length")


def force_length_units(text: str) -> tuple[str, str]:
    """``"FORCE,LENGTH"`` (the ``--units`` option) -> ``(force, length)``,
    both checked to be known units of their kind.

    >>> force_length_units("kip, ft")
    ('kip', 'ft')
    """
    parts = [p.strip() for p in text.split(",")]
    if len(parts) != 2 or not all(parts):
        raise UnitError(f"takes FORCE,LENGTH (for example kN,m or kip,ft), got {text!r}")
    unit_factor(parts[0], "force")
    length_unit_scale(parts[1])
    return parts[0], parts[1]


def insunits_code(name: str) -> int | None:
    """The ``$INSUNITS`` code of a length unit the reader understands
    (``"feet"`` -> 2), None for any other name.

    >>> insunits_code("mm"), insunits_code("inches"), insunits_code("yd")
    (4, 1, None)
    """
    short = _LENGTH_ALIASES.get(name.strip().lower())
    return next((code for code, unit in INSUNITS.items() if unit == short), None)
