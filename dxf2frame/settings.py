"""Per-project settings file (``dxf2frame.toml``).

The file is TOML and is found, in this order: the path given explicitly
(``--settings``), ``dxf2frame.toml`` beside the drawing, else built-in
defaults.  Every key is optional; an unknown key is an error naming it, so
a typo never passes silently.  The schema (see DEVELOPERS.md):

``[units]``
    ``force`` (unit of bare numbers in force attributes, default ``"kN"``),
    ``length`` (drawing unit when ``$INSUNITS`` is missing, unitless or not
    one of inch/ft/mm/cm/m; no default), ``output_force`` and
    ``output_length`` (units of the report, the drawing's text and the
    comparison; default kN and m for a drawing in mm, cm or m, kip and ft
    for one in inch or ft; ``--units`` overrides both).
``[geometry]``
    ``snap`` (snap tolerance: a quantity string such as ``"5 mm"`` or a bare
    number in drawing units; default: the larger of 0.5 mm and 1e-6 of the
    frame's extents diagonal), ``arc_segments`` (0: arcs and bulges are an
    error; N > 0: chord each into N straight members), ``unjoined_layers``
    (member layers whose crossings with each other stay separate; default
    ``["FRAME-BRACES"]``; every other crossing is joined rigidly).
``[limits]``
    ``max_file_mb`` (200), ``max_entities`` (500000: entities after every
    MINSERT cell and nested block is counted), ``max_attribute_chars``
    (500: longest attribute value read).
``[layers]``
    input layer names ``frame``, ``supports``, ``connections``, ``loads``.
``[blocks]``
    block names by kind: ``pin roller fixed slider spring joint hinge
    crossover force couple udl``, e.g. ``pin = "SUP-PIN"``.  A remapped kind no longer
    answers to its default name.
``[attributes]``
    attribute tags by their convention name, e.g. ``P = "FORCE_VALUE"``.
``[output_layers]``
    result layer names ``axial shear moment reactions deflected notes
    mechanism changes tags``.
``[sections.default]``, ``[sections."<LAYER>"]``
    ``E``, ``A``, ``I`` as quantity strings with units (``"200 GPa"``,
    ``"5000 mm**2"``, ``"8e7 mm**4"``) and an optional ``name``.  A layer
    section may leave out values that the default section gives.  Instead
    of A and I: ``shape`` (``"I 310x165x6x10"``, sizes in ``shape_unit``,
    default mm) or ``outline`` (the closed polyline on layer
    ``SECTION-<name>``); ``material`` (a name of ``solver.DENSITY``: the
    density, and E for steel and aluminium) or ``density``
    (``"7850 kg/m**3"``).
``[self_weight]``
    ``case``: the load case the members' own weight joins (needs a density
    for every member's section).
``[cases]``
    an office's own load case names mapped onto the standard case letters
    of ASCE/SEI 7 (``D L Lr S R W E``), e.g. ``LIVE = "L"``; names are
    matched case-insensitively.
``[analysis]``
    ``missing_sections``: ``"equal"`` (default: an indeterminate frame
    without any section is solved with equal relative stiffness, with a
    warning) or ``"refuse"`` (it is bad input).
``[combinations]``
    ``builtin`` (subset of ``["LRFD", "ASD"]``), ``extra`` (list of
    combination strings, parsed by the solver), ``draw`` (what the
    diagrams in the output drawing show), ``reversible`` (cases acting both
    ways, default ``["W", "E"]``).
``[deflection]``
    ``limit`` (span / limit, default 240), ``[deflection.layers]`` per
    member layer.
``[compare]``
    ``threshold`` (relative change reported by the revision comparison,
    default 0.05).
``[history]``
    ``record`` (record every ``solve`` in the folder's revision history,
    default false; ``--history``/``--no-history`` override it),
    ``label_property`` (custom header property holding the revision label,
    default ``"REVISION"``).
``[patterns]``
    ``cases`` (load cases arranged span by span for the envelope, e.g.
    ``["L"]``), ``by`` (``"span"`` or ``"member"``).
``[drift]``
    ``limit`` (storey drift as h / limit, default 400), ``measure``
    (``"mean"`` or ``"max"`` over a storey's column lines), ``levels``
    (storey tops in drawing units; default: where beams meet columns).
``[drawing]``
    ``text_height`` (plotted height of the result texts, e.g. ``"2.5 mm"``),
    ``plot_scale`` (N of a 1:N plot, default 1); both unset: texts are 1/60
    of the frame's size.  ``[drawing.scales]``: a fixed scale per diagram
    (``moment``, ``shear``, ``axial``) as ``"<value> per <length on the
    drawing>"``, e.g. ``moment = "50 kN*m per m"``; unset: each diagram is
    scaled to the drawing (one scale for all the drawings of a batch).
``[second_order]``
    ``analysis``: ``"off"``, ``"check"`` (default: alpha_cr of every
    strength combination) or ``"p-delta"`` (also a P-Delta analysis of
    each); ``tolerance`` (1e-8), ``max_iterations`` (50), ``subdivisions``
    (elements per member in the P-Delta analysis, 4).
``[moving]``
    ``path_layer`` (a frame layer whose members form one chain, or a layer
    holding one polyline along members), ``step`` (``"0.25 m"``),
    ``[[moving.vehicles]]`` with ``name``, ``axles`` (``["40 kN", "25 kN"]``,
    front first) and ``spacings`` (``["1.6 m"]``).

Layer names are matched case-insensitively, as CAD programs do.  Quantity
strings are parsed by :mod:`dxf2frame.units`; this module itself does not
touch pint.
"""
from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from .solver import Section

from .errors import SettingsError, UnitError
from .units import normalise_length_unit, parse_quantity, unit_factor

__all__ = [
    "Settings",
    "load_settings",
    "SETTINGS_FILENAME",
    "DEFAULT_OUTPUT_LAYERS",
    "BLOCK_KINDS",
    "ATTRIBUTE_TAGS",
    "OUTPUT_LAYER_KEYS",
    "STANDARD_CASES",
    "MISSING_SECTIONS_CHOICES",
    "SECOND_ORDER_CHOICES",
    "VehicleSpec",
    "FURTHER_OUTPUT_LAYER_KEYS",
]

#: standard load case letters (ASCE/SEI 7): the built-in combinations use them
STANDARD_CASES: tuple[str, ...] = ("D", "L", "Lr", "S", "R", "W", "E")

#: what an indeterminate frame without any section does: solve with equal
#: relative stiffness (with a warning) or refuse (exit 2)
MISSING_SECTIONS_CHOICES: tuple[str, ...] = ("equal", "refuse")

#: what the second-order step does: nothing, alpha_cr of every strength
#: combination (the default), or alpha_cr and a P-Delta analysis of each
SECOND_ORDER_CHOICES: tuple[str, ...] = ("off", "check", "p-delta")

SETTINGS_FILENAME = "dxf2frame.toml"


@dataclass(frozen=True)
class VehicleSpec:
    """A vehicle of ``[[moving.vehicles]]`` in SI: ``loads`` [N] front axle
    first, ``spacings`` [m] between consecutive axles."""

    name: str
    loads: tuple[float, ...]
    spacings: tuple[float, ...]

#: convention block names (the kinds), upper case
BLOCK_KINDS: tuple[str, ...] = (
    "PIN", "ROLLER", "FIXED", "SLIDER", "SPRING", "JOINT", "HINGE", "CROSSOVER", "FORCE", "COUPLE", "UDL",
)

#: attribute tags of the convention
ATTRIBUTE_TAGS: tuple[str, ...] = (
    "P", "M", "W", "W1", "W2", "FROM", "TO", "DIR", "BASIS", "CASE", "ANGLE",
    "KX", "KY", "KR", "SETTLE_X", "SETTLE_Y", "SETTLE_R", "MEMBERS",
)

DEFAULT_OUTPUT_LAYERS: dict[str, str] = {
    "axial": "RESULT-AXIAL",
    "shear": "RESULT-SHEAR",
    "moment": "RESULT-MOMENT",
    "reactions": "RESULT-REACTIONS",
    "deflected": "RESULT-DEFLECTED",
    "notes": "RESULT-NOTES",
    "mechanism": "RESULT-MECHANISM",
    "changes": "RESULT-CHANGES",
    "tags": "RESULT-TAGS",
    # second order and moving loads
    "buckling": "RESULT-BUCKLING",
    "moving": "RESULT-MOVING",
    "influence": "RESULT-INFLUENCE",
}
#: result layers drawn by the second-order and moving-load plumbing
#: (:mod:`dxf2frame.further`), not by the main result writer
FURTHER_OUTPUT_LAYER_KEYS: tuple[str, ...] = ("buckling", "moving", "influence")
OUTPUT_LAYER_KEYS: tuple[str, ...] = tuple(DEFAULT_OUTPUT_LAYERS)

#: any layer starting with this is treated as written by this tool
RESULT_LAYER_PREFIX = "RESULT-"

#: drawing units of the US customary system: their results default to kip and ft
_US_LENGTHS = frozenset({"inch", "ft"})

_DEFAULT_LAYERS = {"frame": "FRAME", "supports": "SUPPORTS", "connections": "CONNECTIONS", "loads": "LOADS"}
_BUILTIN_COMBOS = ("LRFD", "ASD")
_TOP_KEYS = {
    "units", "geometry", "limits", "layers", "blocks", "attributes",
    "output_layers", "sections", "combinations", "deflection", "compare", "cases", "analysis",
    "history",
    "drawing",
    "second_order", "moving",
}
# storeys and drift (issue 18)
_TOP_KEYS = _TOP_KEYS | {"drift", "self_weight", "patterns"}
#: how a storey's drift is taken over its column lines (solver.storey_drifts)
DRIFT_MEASURES: tuple[str, ...] = ("mean", "max")


def _ro(d: Mapping) -> dict:
    """A copy of ``d``; Settings holds plain dicts so that it pickles (batch
    workers) -- treat them as read-only."""
    return dict(d)


@dataclass(frozen=True)
class Settings:
    """Validated settings.  Build with :func:`load_settings` or
    :meth:`Settings.from_dict`; ``Settings()`` gives the defaults.

    Attributes
    ----------
    force_unit : pint unit text of bare numbers in force attributes
    length_unit : drawing unit when the header does not say (None: must be given)
    snap : snap tolerance; str (quantity with unit), float (drawing units) or None (automatic)
    arc_segments : 0 = arcs are errors, N = chord each arc into N members
    unjoined_layers : upper-case member layers whose crossings with each
        other stay separate (every other crossing is joined rigidly)
    max_file_mb, max_entities, max_attribute_chars : input limits
    layers : {"frame"|"supports"|"connections"|"loads": layer name}
    blocks : {kind (upper case, e.g. "PIN"): block name (upper case)}
    attributes : {convention tag: tag used in the drawing (upper case)}
    output_layers : {key: result layer name}
    sections : {"DEFAULT" or upper-case layer name: solver.Section in SI (Pa, m**2, m**4)}
    cases : {upper-case office case name: standard case letter}
    missing_sections : "equal" (an indeterminate frame without any section
        is solved with equal relative stiffness, with a warning) or "refuse"
    combinations_builtin : names of built-in sets ("LRFD", "ASD")
    combinations_extra : combination strings such as "1.2D + 1.6L"
    combinations_draw : what the output drawing shows ("envelope:LRFD", a case or combination)
    combinations_reversible : load cases acting both ways: every
        combination holding one also appears with its factor negated
    deflection_limit : span / limit, default 240
    deflection_layers : {upper-case layer: limit}
    compare_threshold : relative change flagged by the revision comparison
    source : the settings file read, or None for defaults
    history_record : record every solve in the folder's revision history
    history_label_property : custom header property holding the revision label
    drift_limit : storey drift limit as h / limit, default 400 (common
        practice for service wind drift, usual range 600 to 400)
    drift_measure : "mean" (default) or "max" over a storey's column lines
    drift_levels : storey top elevations in drawing units, or None (found
        where beams meet columns)
    output_force, output_length : units of the results (None: chosen from
        the drawing's unit system, see :meth:`output_units`)
    text_height_plotted, plot_scale : plotted text height [m] and N of the
        1:N plot (None: automatic), see :meth:`text_height_for`
    diagram_scales : {"moment"|"shear"|"axial": fixed scale in SI units
        (N*m or N) per metre on the drawing}
    second_order : "off", "check" (alpha_cr of every strength combination,
        the default) or "p-delta" (also a P-Delta analysis of each)
    second_order_tolerance, second_order_max_iterations : P-Delta
        convergence (relative change, dimensionless) and iteration limit
    second_order_subdivisions : elements per member in the P-Delta
        analysis (the alpha_cr check cuts each member only as finely as
        its axial force needs)
    moving_path_layer : layer of the moving-load path (a chain of members
        on a frame layer, or one polyline on a layer of its own); None: no
        moving loads
    moving_step : distance between vehicle positions [m]
    moving_vehicles : the vehicles (:class:`VehicleSpec`, SI)
    """

    force_unit: str = "kN"
    length_unit: str | None = None
    snap: str | float | None = None
    arc_segments: int = 0
    unjoined_layers: tuple[str, ...] = ("FRAME-BRACES",)
    max_file_mb: float = 200.0
    max_entities: int = 500_000
    max_attribute_chars: int = 500
    layers: Mapping[str, str] = field(default_factory=lambda: _ro(_DEFAULT_LAYERS))
    blocks: Mapping[str, str] = field(default_factory=lambda: _ro({k: k for k in BLOCK_KINDS}))
    attributes: Mapping[str, str] = field(default_factory=lambda: _ro({t: t for t in ATTRIBUTE_TAGS}))
    output_layers: Mapping[str, str] = field(default_factory=lambda: _ro(DEFAULT_OUTPUT_LAYERS))
    sections: Mapping[str, Section] = field(default_factory=lambda: _ro({}))
    cases: Mapping[str, str] = field(default_factory=lambda: _ro({}))
    missing_sections: str = "equal"
    combinations_builtin: tuple[str, ...] = _BUILTIN_COMBOS
    combinations_extra: tuple[str, ...] = ()
    combinations_draw: str = "envelope:LRFD"
    deflection_limit: float = 240.0
    deflection_layers: Mapping[str, float] = field(default_factory=lambda: _ro({}))
    compare_threshold: float = 0.05
    source: Path | None = None
    # -- revision history (issue 19) --
    history_record: bool = False
    history_label_property: str = "REVISION"
    # storeys and drift (issue 18): h / limit, "mean" or "max" over the
    # column lines, storey tops in drawing units (None: found from the frame)
    drift_limit: float = 400.0
    drift_measure: str = "mean"
    drift_levels: tuple[float, ...] | None = None
    # sections from shapes and self-weight (issue 18): density [kg/m**3] per
    # section key, the shape text and outline name per section key, the case
    # the members' own weight joins (None: no self-weight)
    section_density: Mapping[str, float] = field(default_factory=lambda: _ro({}))
    section_shapes: Mapping[str, str] = field(default_factory=lambda: _ro({}))
    section_outlines: Mapping[str, str] = field(default_factory=lambda: _ro({}))
    self_weight_case: str | None = None
    # reversible cases (issue 18): combinations holding them appear with both signs
    combinations_reversible: tuple[str, ...] = ("W", "E")
    # pattern live load (issue 18): cases arranged span by span, and how
    pattern_cases: tuple[str, ...] = ()
    pattern_by: str = "span"
    # -- output units and drawing (issue 17) --
    output_force: str | None = None
    output_length: str | None = None
    text_height_plotted: float | None = None          # m on the plotted sheet
    plot_scale: float | None = None                   # N of 1:N
    diagram_scales: Mapping[str, float] = field(default_factory=lambda: _ro({}))   # SI per metre of drawing
    # second order and moving loads ([second_order], [moving])
    second_order: str = "check"
    second_order_tolerance: float = 1e-8
    second_order_max_iterations: int = 50
    second_order_subdivisions: int = 4
    moving_path_layer: str | None = None
    moving_step: float = 0.25
    moving_vehicles: tuple[VehicleSpec, ...] = ()

    # derived lookups (built once)
    def __post_init__(self) -> None:
        kind_of = {}
        for kind, name in self.blocks.items():
            kind_of[name.upper()] = kind.upper()
        object.__setattr__(self, "_kind_of_block", kind_of)
        object.__setattr__(self, "_tag_of_drawing", {v.upper(): k for k, v in self.attributes.items()})
        object.__setattr__(self, "_result_layers", {v.upper() for v in self.output_layers.values()})

    # -- construction -------------------------------------------------------
    @classmethod
    def from_dict(cls, data: Mapping[str, Any], path: str | Path | None = None) -> "Settings":
        """Validate a parsed TOML mapping.  Raises ``SettingsError`` naming the key."""
        return _build(data, str(path) if path else "", Path(path) if path else None)

    # -- lookups ------------------------------------------------------------
    def section_for(self, layer: str) -> Section | None:
        """Section of members on ``layer``: the layer's own, else the default,
        else None (no sections given: a determinate frame still solves)."""
        return self.sections.get(layer.upper(), self.sections.get("DEFAULT"))

    def case_name(self, name: str) -> str:
        """Load case of a CASE text: the standard letter an office name is
        mapped onto in ``[cases]``, else the text itself."""
        return self.cases.get(name.strip().upper(), name.strip())

    def block_kind(self, name: str) -> str | None:
        """Convention kind ("PIN", "ROLLER", ..., "UDL") of a block name
        (case-insensitive, after remapping), or None if not a convention block."""
        return self._kind_of_block.get(name.upper())  # type: ignore[attr-defined]

    def attr(self, tag: str) -> str:
        """Tag used in the drawing for the convention tag ``tag`` (upper case)."""
        return self.attributes.get(tag.upper(), tag.upper())

    def canonical_tag(self, drawing_tag: str) -> str | None:
        """Convention tag of a tag found in the drawing (inverse of :meth:`attr`).

        A convention tag that the settings remapped to another name returns
        None (it no longer counts); other tags are returned upper-cased."""
        t = drawing_tag.upper()
        mapped = self._tag_of_drawing.get(t)  # type: ignore[attr-defined]
        if mapped is not None:
            return mapped
        if t in self.attributes:
            return None
        return t

    def output_layer(self, key: str) -> str:
        """Result layer name for ``key`` (axial, shear, moment, reactions,
        deflected, notes, mechanism, changes)."""
        try:
            return self.output_layers[key]
        except KeyError:
            raise KeyError(f"unknown output layer key {key!r}; expected one of {OUTPUT_LAYER_KEYS}") from None

    def layer(self, key: str) -> str:
        """Input layer name for ``key`` (frame, supports, connections, loads)."""
        return self.layers[key]

    def is_frame_layer(self, name: str) -> bool:
        """True for the frame layer and any layer named ``<frame>-...``."""
        n, f = name.upper(), self.layers["frame"].upper()
        return n == f or n.startswith(f + "-")

    def is_result_layer(self, name: str) -> bool:
        """True for layers this tool writes (the output layers, and any layer
        starting with ``RESULT-``); the reader ignores them."""
        n = name.upper()
        return n in self._result_layers or n.startswith(RESULT_LAYER_PREFIX)  # type: ignore[attr-defined]

    def output_units(self, drawing_unit: str) -> tuple[str, str]:
        """(force, length) units the results are written in for a drawing in
        ``drawing_unit``: the ``[units] output_*`` keys, else kN and m for a
        metric drawing and kip and ft for one in inch or feet.

        >>> Settings().output_units("mm"), Settings().output_units("inch")
        (('kN', 'm'), ('kip', 'ft'))
        """
        us = normalise_length_unit(drawing_unit) in _US_LENGTHS
        return (self.output_force or ("kip" if us else "kN"),
                self.output_length or ("ft" if us else "m"))

    def text_height_for(self, unit_scale: float) -> float | None:
        """Result text height in drawing units (``unit_scale``: metres per
        drawing unit), or None when neither ``text_height`` nor
        ``plot_scale`` is set (the writer then sizes texts to the frame).

        >>> Settings(text_height_plotted=0.0025, plot_scale=100.0).text_height_for(0.001)
        250.0
        """
        if self.text_height_plotted is None and self.plot_scale is None:
            return None
        plotted = self.text_height_plotted if self.text_height_plotted is not None else 0.0025
        return plotted * (self.plot_scale or 1.0) / unit_scale

    def deflection_limit_for(self, layer: str) -> float:
        """Span / limit ratio for members on ``layer``."""
        return self.deflection_layers.get(layer.upper(), self.deflection_limit)

    def density_for(self, layer: str) -> float | None:
        """Density [kg/m**3] of the section of ``layer`` (its own, else the
        default's), or None."""
        return self.section_density.get(layer.upper(), self.section_density.get("DEFAULT"))

    def drift_options(self) -> dict[str, Any]:
        """``{"limit": 400.0, "measure": "mean", "levels": None}`` (levels in drawing units)."""
        return {"limit": self.drift_limit, "measure": self.drift_measure,
                "levels": None if self.drift_levels is None else list(self.drift_levels)}

    def deflection_limits(self) -> dict[str, Any]:
        """``{"limit": 240.0, "layers": {"FRAME-BEAMS": 360.0}}`` (layer names upper case)."""
        return {"limit": self.deflection_limit, "layers": dict(self.deflection_layers)}


# ---------------------------------------------------------------------------
# validation
# ---------------------------------------------------------------------------


def _table(data: Mapping[str, Any], key: str, path: str) -> Mapping[str, Any]:
    v = data.get(key, {})
    if not isinstance(v, Mapping):
        raise SettingsError("must be a table", path=path, key=key)
    return v


def _check_keys(table: Mapping[str, Any], allowed, where: str, path: str) -> None:
    allowed_upper = {a.upper(): a for a in allowed}
    for k in table:
        if str(k).upper() not in allowed_upper:
            raise SettingsError(
                f"unknown key {k!r}; expected one of {', '.join(sorted(allowed))}",
                path=path,
                key=f"{where}.{k}" if where else str(k),
            )


def _str(v: Any, key: str, path: str) -> str:
    if not isinstance(v, str) or not v.strip():
        raise SettingsError(f"must be a non-empty string, got {v!r}", path=path, key=key)
    return v.strip()


def _choice(v: Any, choices, key: str, path: str) -> str:
    """A word from ``choices`` (any case), returned in lower case."""
    word = _str(v, key, path).lower()
    if word not in choices:
        raise SettingsError(f"must be one of {', '.join(choices)}, got {v!r}", path=path, key=key)
    return word


def _number(v: Any, key: str, path: str, *, positive: bool = True, allow_zero: bool = False) -> float:
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise SettingsError(f"must be a number, got {v!r}", path=path, key=key)
    if positive and (v < 0 or (v == 0 and not allow_zero)):
        raise SettingsError(f"must be {'>= 0' if allow_zero else '> 0'}, got {v!r}", path=path, key=key)
    return float(v)


def _ratio_limit(v: Any, key: str, path: str, letter: str) -> float:
    """The n of a limit span / n (``letter`` "L") or height / n ("h"): a
    number of at least 1, or the text ``"L/360"``.  A number below 1 is
    the ratio itself (0.00278 for L/360), which would pass every member: it
    is refused with the n it stands for."""
    if isinstance(v, str):
        m = re.fullmatch(rf"\s*{letter}\s*/\s*([0-9]*\.?[0-9]+)\s*", v, flags=re.IGNORECASE)
        if not m:
            raise SettingsError(f"must be n of {letter}/n, as a number (360) or as \"{letter}/360\", got {v!r}",
                                path=path, key=key)
        v = float(m.group(1))
    n = _number(v, key, path)
    if n < 1:
        raise SettingsError(f"is n of {letter}/n, at least 1; {n:g} looks like the ratio itself, {letter}/"
                            f"{1 / n:.4g}: write {1 / n:.4g} (or \"{letter}/{1 / n:.4g}\")", path=path, key=key)
    return n


def _is_bare_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _quantity(v: Any, kind: str, key: str, path: str) -> float:
    if isinstance(v, bool) or not isinstance(v, str):
        raise SettingsError(
            f"give a quantity with its unit as a string (e.g. E = \"200 GPa\"), got {v!r}",
            path=path,
            key=key,
        )
    if _is_bare_number(v):
        raise SettingsError(f"{v!r} has no unit; write it with one (e.g. \"200 GPa\")", path=path, key=key)
    try:
        value = parse_quantity(v, kind, default_unit="")
    except UnitError as exc:
        raise SettingsError(exc.message, path=path, key=key) from None
    if value <= 0:
        raise SettingsError(f"must be positive, got {v!r}", path=path, key=key)
    return value


def _remap(data: Mapping[str, Any], key: str, names, path: str, *, allowed: set[str], what: str) -> dict[str, str]:
    """Table ``[key]`` mapping the convention's ``names`` to an office's own
    (upper case); a name used for two entries is an error."""
    table = _table(data, key, path)
    _check_keys(table, allowed, key, path)
    out = {n: n for n in names}
    for k, v in table.items():
        out[k.upper()] = _str(v, f"{key}.{k}", path).upper()
    values = list(out.values())
    dup = {n for n in values if values.count(n) > 1}
    if dup:
        raise SettingsError(what.format(sorted(dup)), path=path, key=key)
    return out


def _build(data: Mapping[str, Any], path: str, source: Path | None) -> Settings:
    """Settings from the parsed TOML ``data``, table by table in the order of
    the file's documentation; the first problem is a SettingsError naming
    ``path`` and the key."""
    _check_keys(data, _TOP_KEYS, "", path)
    kw: dict[str, Any] = {"source": source}
    kw.update(_read_units(data, path))
    kw.update(_read_geometry(data, path))
    kw.update(_read_limits(data, path))
    kw.update(_read_layers(data, path))
    kw.update(_read_output_layers(data, path, kw["layers"]))
    kw.update(_read_sections(data, path))
    kw.update(_read_cases(data, path))
    kw.update(_read_analysis(data, path))
    kw.update(_read_combinations(data, path))
    kw.update(_read_deflection(data, path))
    kw.update(_read_compare(data, path))
    _history_settings(data, path, kw)
    _drift_settings(data, path, kw)
    _self_weight_settings(data, path, kw)
    _reversible_settings(data, path, kw)
    _pattern_settings(data, path, kw)
    kw.update(_drawing_options(_table(data, "drawing", path), path))
    kw.update(_second_order_and_moving(data, path))
    return Settings(**kw)


def _read_units(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[units]: the force unit of bare numbers and the drawing unit when the header has none."""
    kw: dict[str, Any] = {}
    u = _table(data, "units", path)
    _check_keys(u, {"force", "length", "output_force", "output_length"}, "units", path)
    kw.update(_output_units(u, path))
    if "force" in u:
        f = _str(u["force"], "units.force", path)
        try:
            unit_factor(f, "force")
        except UnitError as exc:
            raise SettingsError(exc.message, path=path, key="units.force") from None
        kw["force_unit"] = f
    if "length" in u:
        try:
            kw["length_unit"] = normalise_length_unit(_str(u["length"], "units.length", path))
        except UnitError as exc:
            raise SettingsError(exc.message, path=path, key="units.length") from None
    return kw


def _read_geometry(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[geometry]: snap tolerance, arc chords, layers whose crossings stay separate."""
    kw: dict[str, Any] = {}
    g = _table(data, "geometry", path)
    _check_keys(g, {"snap", "arc_segments", "unjoined_layers"}, "geometry", path)
    if "unjoined_layers" in g:
        ul = g["unjoined_layers"]
        if not isinstance(ul, list) or not all(isinstance(x, str) and x.strip() for x in ul):
            raise SettingsError("must be a list of layer names, e.g. [\"FRAME-BRACES\"]", path=path,
                                key="geometry.unjoined_layers")
        kw["unjoined_layers"] = tuple(dict.fromkeys(x.strip().upper() for x in ul))
    if "snap" in g:
        s = g["snap"]
        if isinstance(s, str) and _is_bare_number(s):
            kw["snap"] = _number(float(s), "geometry.snap", path, allow_zero=True)
        elif isinstance(s, str):
            try:
                if parse_quantity(s, "length", default_unit="") < 0:
                    raise SettingsError("must not be negative", path=path, key="geometry.snap")
            except UnitError as exc:
                raise SettingsError(exc.message, path=path, key="geometry.snap") from None
            kw["snap"] = s.strip()
        else:
            kw["snap"] = _number(s, "geometry.snap", path, allow_zero=True)
    if "arc_segments" in g:
        n = g["arc_segments"]
        if isinstance(n, bool) or not isinstance(n, int) or n < 0 or n > 10_000:
            raise SettingsError(f"must be an integer 0..10000, got {n!r}", path=path, key="geometry.arc_segments")
        kw["arc_segments"] = n
    return kw


def _read_limits(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[limits]: the sizes a drawing may have."""
    kw: dict[str, Any] = {}
    lim = _table(data, "limits", path)
    _check_keys(lim, {"max_file_mb", "max_entities", "max_attribute_chars"}, "limits", path)
    if "max_file_mb" in lim:
        kw["max_file_mb"] = _number(lim["max_file_mb"], "limits.max_file_mb", path)
    if "max_entities" in lim:
        kw["max_entities"] = int(_number(lim["max_entities"], "limits.max_entities", path))
    if "max_attribute_chars" in lim:
        n = lim["max_attribute_chars"]
        if isinstance(n, bool) or not isinstance(n, int) or n < 1:
            raise SettingsError(f"must be an integer >= 1, got {n!r}", path=path, key="limits.max_attribute_chars")
        kw["max_attribute_chars"] = n
    return kw


def _read_layers(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[layers], [blocks], [attributes]: the convention's input names, remapped one to one."""
    kw: dict[str, Any] = {}
    lay = _table(data, "layers", path)
    _check_keys(lay, set(_DEFAULT_LAYERS), "layers", path)
    layers = dict(_DEFAULT_LAYERS)
    for k, v in lay.items():
        layers[k.lower()] = _str(v, f"layers.{k}", path)
    if len({v.upper() for v in layers.values()}) != len(layers):
        raise SettingsError("two input roles share one layer name", path=path, key="layers")
    kw["layers"] = _ro(layers)

    # [blocks] and [attributes]: the convention's names, remapped one to one
    kw["blocks"] = _ro(_remap(data, "blocks", BLOCK_KINDS, path, allowed={k.lower() for k in BLOCK_KINDS},
                              what="block name(s) {} used for two kinds"))
    kw["attributes"] = _ro(_remap(data, "attributes", ATTRIBUTE_TAGS, path, allowed=set(ATTRIBUTE_TAGS),
                                  what="tag(s) {} used for two attributes"))
    return kw


def _read_output_layers(data: Mapping[str, Any], path: str, layers: Mapping[str, str]) -> dict[str, Any]:
    """[output_layers]: result layer names, none on an input layer."""
    kw: dict[str, Any] = {}
    ol = _table(data, "output_layers", path)
    _check_keys(ol, set(OUTPUT_LAYER_KEYS), "output_layers", path)
    outs = dict(DEFAULT_OUTPUT_LAYERS)
    for k, v in ol.items():
        outs[k.lower()] = _str(v, f"output_layers.{k}", path)
    inputs = {v.upper() for v in layers.values()}
    for k, v in outs.items():
        if v.upper() in inputs or v.upper().startswith(layers["frame"].upper() + "-"):
            raise SettingsError(f"result layer {v!r} clashes with an input layer", path=path, key=f"output_layers.{k}")
    kw["output_layers"] = _ro(outs)
    return kw


def _read_sections(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[sections]: E, A, I per member layer, [sections.default] filling the gaps."""
    kw: dict[str, Any] = {}
    sec = _table(data, "sections", path)
    raw: dict[str, Mapping[str, Any]] = {}
    for name, tab in sec.items():
        key = f"sections.{name}"
        if not isinstance(tab, Mapping):
            raise SettingsError("must be a table with E, A, I (and optionally name)", path=path, key=key)
        _check_keys(tab, {"E", "A", "I", "name"} | SECTION_SHAPE_KEYS, key, path)
        raw[str(name).upper()] = {
            ("name" if str(k).lower() == "name" else str(k).upper()): v for k, v in tab.items()
        }
    default_vals: dict[str, float] = {}
    if "DEFAULT" in raw:
        for q, kind in (("E", "stress"), ("A", "area"), ("I", "inertia")):
            if q in raw["DEFAULT"]:
                default_vals[q] = _quantity(raw["DEFAULT"][q], kind, f"sections.default.{q}", path)
        default_vals.update(_shape_values("DEFAULT", raw["DEFAULT"], path))
    sections: dict[str, Section] = {}
    for name, tab in raw.items():
        vals = dict(default_vals)
        for q, kind in (("E", "stress"), ("A", "area"), ("I", "inertia")):
            if q in tab:
                vals[q] = _quantity(tab[q], kind, f"sections.{name}.{q}", path)
        vals.update(_shape_values(name, tab, path))
        missing = [q for q in ("E", "A", "I") if q not in vals]
        if missing:
            raise SettingsError(
                f"missing {', '.join(missing)} (give them here or in [sections.default])",
                path=path,
                key=f"sections.{name}",
            )
        label = tab.get("name", "" if name == "DEFAULT" else name)
        if not isinstance(label, str):
            raise SettingsError("must be a string", path=path, key=f"sections.{name}.name")
        sections[name] = Section(E=vals["E"], A=vals["A"], I=vals["I"], name=label)
    kw["sections"] = _ro(sections)
    return kw


def _read_cases(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[cases]: office case names onto the standard case letters."""
    kw: dict[str, Any] = {}
    ca = _table(data, "cases", path)
    standard = {c.upper(): c for c in STANDARD_CASES}
    cases: dict[str, str] = {}
    for k, v in ca.items():
        target = _str(v, f"cases.{k}", path)
        if target.upper() not in standard:
            raise SettingsError(
                f"maps onto {target!r}, which is not a standard case letter ({', '.join(STANDARD_CASES)})",
                path=path, key=f"cases.{k}",
            )
        cases[str(k).strip().upper()] = standard[target.upper()]
    kw["cases"] = _ro(cases)
    return kw


def _read_analysis(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[analysis]: what an indeterminate frame without sections gets."""
    kw: dict[str, Any] = {}
    an = _table(data, "analysis", path)
    _check_keys(an, {"missing_sections"}, "analysis", path)
    if "missing_sections" in an:
        kw["missing_sections"] = _choice(an["missing_sections"], MISSING_SECTIONS_CHOICES,
                                         "analysis.missing_sections", path)
    return kw


def _read_combinations(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[combinations]: built-in sets, own formulas, what is drawn."""
    kw: dict[str, Any] = {}
    co = _table(data, "combinations", path)
    _check_keys(co, {"builtin", "extra", "draw", "reversible"}, "combinations", path)
    if "builtin" in co:
        b = co["builtin"]
        if not isinstance(b, list) or not all(isinstance(x, str) for x in b):
            raise SettingsError("must be a list of strings", path=path, key="combinations.builtin")
        bad = [x for x in b if x.upper() not in _BUILTIN_COMBOS]
        if bad:
            raise SettingsError(f"unknown built-in set(s) {bad}; expected LRFD and/or ASD", path=path, key="combinations.builtin")
        kw["combinations_builtin"] = tuple(x.upper() for x in b)
    if "extra" in co:
        e = co["extra"]
        if not isinstance(e, list) or not all(isinstance(x, str) and x.strip() for x in e):
            raise SettingsError("must be a list of non-empty strings", path=path, key="combinations.extra")
        kw["combinations_extra"] = tuple(x.strip() for x in e)
    if "draw" in co:
        kw["combinations_draw"] = _str(co["draw"], "combinations.draw", path)
    return kw


def _read_deflection(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[deflection]: span/limit, per layer."""
    kw: dict[str, Any] = {}
    de = _table(data, "deflection", path)
    _check_keys(de, {"limit", "layers"}, "deflection", path)
    if "limit" in de:
        kw["deflection_limit"] = _ratio_limit(de["limit"], "deflection.limit", path, "L")
    if "layers" in de:
        dl = de["layers"]
        if not isinstance(dl, Mapping):
            raise SettingsError("must be a table of layer = limit", path=path, key="deflection.layers")
        kw["deflection_layers"] = _ro(
            {str(k).upper(): _ratio_limit(v, f"deflection.layers.{k}", path, "L") for k, v in dl.items()}
        )
    return kw


def _read_compare(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """[compare]: the threshold of a flagged change."""
    kw: dict[str, Any] = {}
    cp = _table(data, "compare", path)
    _check_keys(cp, {"threshold"}, "compare", path)
    if "threshold" in cp:
        t = cp["threshold"]
        if isinstance(t, str) and t.strip().endswith("%"):
            try:
                t = float(t.strip()[:-1]) / 100.0
            except ValueError:
                raise SettingsError(f"must be a fraction (0.05) or a percentage (\"5 %\"), got {cp['threshold']!r}",
                                    path=path, key="compare.threshold") from None
        t = _number(t, "compare.threshold", path, allow_zero=True)
        if t >= 1:
            raise SettingsError(f"is a fraction of the old value (0.05 flags changes over 5 %); {t:g} would flag "
                                f"only changes over {100 * t:g} %: write {t / 100:g} or \"{t:g} %\" if {t:g} % is meant",
                                path=path, key="compare.threshold")
        kw["compare_threshold"] = t
    return kw


def _history_settings(data: Mapping[str, Any], path: str, kw: dict[str, Any]) -> None:
    """``[history]``: ``record`` (bool), ``label_property`` (text)."""
    hi = _table(data, "history", path)
    _check_keys(hi, {"record", "label_property"}, "history", path)
    if "record" in hi:
        if not isinstance(hi["record"], bool):
            raise SettingsError(f"must be true or false, got {hi['record']!r}", path=path, key="history.record")
        kw["history_record"] = hi["record"]
    if "label_property" in hi:
        kw["history_label_property"] = _str(hi["label_property"], "history.label_property", path)


# -- sections from shapes, materials and self-weight (issue 18) ------------------

#: keys of a section table besides E, A, I, name
SECTION_SHAPE_KEYS = frozenset({"shape", "shape_unit", "outline", "material", "density"})

#: Young's modulus [Pa] of the materials whose E is one value: structural
#: steel 200 GPa (AISC 360 E = 29,000 ksi; from memory), aluminium alloys
#: 70 GPa (EN 1999-1-1 3.2.5, from memory).  Concrete and timber vary with
#: grade: give E.
MATERIAL_E: dict[str, float] = {"steel": 200e9, "aluminium": 70e9}

_SHAPE_UNITS = {"mm": 1e-3, "cm": 1e-2, "m": 1.0, "in": 0.0254, "inch": 0.0254, "ft": 0.3048}


def _shape_values(name: str, tab: Mapping[str, Any], path: str) -> dict[str, Any]:
    """E, A, I given by a section's ``shape`` (with ``shape_unit``) and
    ``material``; ``{}`` when the table has neither.  Raises SettingsError
    for a bad shape, unit or material, or a shape given with A or I."""
    from .solver import DENSITY, ShapeError, shape_properties

    key = f"sections.{'default' if name == 'DEFAULT' else name}"
    tab = {str(k).lower(): v for k, v in tab.items()}
    out: dict[str, Any] = {}
    if "material" in tab:
        mat = _str(tab["material"], f"{key}.material", path)
        if mat not in DENSITY:
            raise SettingsError(f"unknown material {mat!r}; expected one of {', '.join(DENSITY)}",
                                path=path, key=f"{key}.material")
        if mat in MATERIAL_E and "e" not in tab:
            out["E"] = MATERIAL_E[mat]
    unit_text = tab.get("shape_unit", "mm")
    if "shape_unit" in tab and "shape" not in tab:
        raise SettingsError("shape_unit without shape", path=path, key=f"{key}.shape_unit")
    if "outline" in tab:
        if any(q in tab for q in ("a", "i", "shape")):
            raise SettingsError("give the section by outline or by shape / A and I, not both", path=path,
                                key=f"{key}.outline")
        # stand-ins, replaced by the outline drawn on layer SECTION-<name> when the drawing is
        # read (read.section_outlines; a missing outline is an error there, never these values)
        out["A"], out["I"] = 1.0, 1.0
    if "shape" in tab:
        both = [q.upper() for q in ("a", "i") if q in tab]
        if both or "outline" in tab:
            raise SettingsError(f"give the section by shape or by {' and '.join(both) or 'outline'}, not both",
                                path=path, key=f"{key}.shape")
        if not isinstance(unit_text, str) or unit_text.strip().lower() not in _SHAPE_UNITS:
            raise SettingsError(f"must be one of {', '.join(_SHAPE_UNITS)}, got {unit_text!r}", path=path,
                                key=f"{key}.shape_unit")
        text = _str(tab["shape"], f"{key}.shape", path)
        try:
            p = shape_properties(text, _SHAPE_UNITS[unit_text.strip().lower()])
        except ShapeError as exc:
            raise SettingsError(str(exc), path=path, key=f"{key}.shape") from None
        out["A"], out["I"] = p.area, p.Ix
    return out


def _section_extras(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """Per section (upper-case layer or DEFAULT): density [kg/m**3] from
    ``density`` or ``material``, the shape text, the outline name."""
    from .solver import DENSITY

    dens, shapes, outlines = {}, {}, {}
    for name, tab in _table(data, "sections", path).items():
        if not isinstance(tab, Mapping):
            continue
        up = str(name).upper()
        key = f"sections.{name}"
        t = {str(k).lower(): v for k, v in tab.items()}
        if "density" in t:
            dens[up] = _quantity(t["density"], "density", f"{key}.density", path)
        elif "material" in t and t["material"] in DENSITY:
            dens[up] = DENSITY[t["material"]]
        if "shape" in t:
            shapes[up] = f"{str(t['shape']).strip()} ({str(t.get('shape_unit', 'mm')).strip()})"
        if "outline" in t:
            outlines[up] = _str(t["outline"], f"{key}.outline", path).upper()
    default = outlines.get("DEFAULT")
    if default is not None:              # a layer section taking A and I from a drawn default outline
        for name, tab in _table(data, "sections", path).items():
            t = {str(k).lower() for k in tab} if isinstance(tab, Mapping) else set()
            if str(name).upper() != "DEFAULT" and not t & {"a", "i", "shape", "outline"}:
                outlines[str(name).upper()] = default
    return {"section_density": _ro(dens), "section_shapes": _ro(shapes), "section_outlines": _ro(outlines)}


def _pattern_settings(data: Mapping[str, Any], path: str, kw: dict[str, Any]) -> None:
    """``[patterns]``: ``cases`` (load cases arranged part by part, ASCE/SEI
    7-16 4.3.3 partial loading), ``by`` ("span" or "member")."""
    pt = _table(data, "patterns", path)
    _check_keys(pt, {"cases", "by"}, "patterns", path)
    if "cases" in pt:
        c = pt["cases"]
        if not isinstance(c, list) or not all(isinstance(x, str) and x.strip() for x in c):
            raise SettingsError("must be a list of load case names, e.g. [\"L\"]", path=path, key="patterns.cases")
        kw["pattern_cases"] = tuple(dict.fromkeys(x.strip() for x in c))
    if "by" in pt:
        kw["pattern_by"] = _choice(pt["by"], ("span", "member"), "patterns.by", path)


def _reversible_settings(data: Mapping[str, Any], path: str, kw: dict[str, Any]) -> None:
    """``[combinations] reversible``: load cases that act both ways (default
    ``["W", "E"]``; ``[]`` for none)."""
    co = _table(data, "combinations", path)
    if "reversible" in co:
        r = co["reversible"]
        if not isinstance(r, list) or not all(isinstance(x, str) and x.strip() for x in r):
            raise SettingsError("must be a list of load case names, e.g. [\"W\", \"E\"] (or [] for none)",
                                path=path, key="combinations.reversible")
        kw["combinations_reversible"] = tuple(dict.fromkeys(x.strip() for x in r))


def _self_weight_settings(data: Mapping[str, Any], path: str, kw: dict[str, Any]) -> None:
    """``[self_weight] case``: the load case the members' own weight joins;
    densities come from the sections (``density`` or ``material``)."""
    kw.update(_section_extras(data, path))
    sw = _table(data, "self_weight", path)
    _check_keys(sw, {"case"}, "self_weight", path)
    if "case" in sw:
        kw["self_weight_case"] = _str(sw["case"], "self_weight.case", path)


def _drift_settings(data: Mapping[str, Any], path: str, kw: dict[str, Any]) -> None:
    """``[drift]``: ``limit`` (h / limit), ``measure`` ("mean" or "max"),
    ``levels`` (storey tops in drawing units, ascending)."""
    dr = _table(data, "drift", path)
    _check_keys(dr, {"limit", "measure", "levels"}, "drift", path)
    if "limit" in dr:
        kw["drift_limit"] = _ratio_limit(dr["limit"], "drift.limit", path, "h")
    if "measure" in dr:
        kw["drift_measure"] = _choice(dr["measure"], DRIFT_MEASURES, "drift.measure", path)
    if "levels" in dr:
        lv = dr["levels"]
        if (not isinstance(lv, list) or not lv
                or not all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in lv)):
            raise SettingsError("must be a non-empty list of elevations in drawing units, e.g. [3000, 6000]",
                                path=path, key="drift.levels")
        kw["drift_levels"] = tuple(sorted(float(v) for v in lv))


def _output_units(u: Mapping[str, Any], path: str) -> dict[str, str]:
    """``[units] output_force`` and ``output_length``, each checked to be a
    unit of its kind."""
    kw = {}
    for key, kind in (("output_force", "force"), ("output_length", "length")):
        if key in u:
            text = _str(u[key], f"units.{key}", path)
            try:
                text = normalise_length_unit(text) if kind == "length" else text
                unit_factor(text, kind)
            except UnitError as exc:
                raise SettingsError(exc.message, path=path, key=f"units.{key}") from None
            kw[key] = text
    return kw


#: diagrams whose scale can be fixed, and the kind of their values
DIAGRAM_SCALE_KINDS: dict[str, str] = {"moment": "moment", "shear": "force", "axial": "force"}


def _drawing_options(d: Mapping[str, Any], path: str) -> dict[str, Any]:
    """``[drawing]``: text height, plot scale and fixed diagram scales."""
    _check_keys(d, {"text_height", "plot_scale", "scales"}, "drawing", path)
    kw: dict[str, Any] = {}
    if "text_height" in d:
        kw["text_height_plotted"] = _quantity(d["text_height"], "length", "drawing.text_height", path)
    if "plot_scale" in d:
        kw["plot_scale"] = _number(d["plot_scale"], "drawing.plot_scale", path)
    sc = d.get("scales", {})
    if not isinstance(sc, Mapping):
        raise SettingsError("must be a table, e.g. moment = \"50 kN*m per m\"", path=path, key="drawing.scales")
    _check_keys(sc, set(DIAGRAM_SCALE_KINDS), "drawing.scales", path)
    scales = {}
    for k, v in sc.items():
        key = f"drawing.scales.{k}"
        text = _str(v, key, path)
        value, sep, length = text.partition(" per ")
        if not sep:
            raise SettingsError(f"write it as \"<value> per <length on the drawing>\", e.g. \"50 kN*m per m\", "
                                f"got {text!r}", path=path, key=key)
        length = length.strip()
        if length and not any(c.isdigit() for c in length.split()[0]):
            length = "1 " + length
        per = _quantity(value.strip(), DIAGRAM_SCALE_KINDS[k.lower()], key, path)
        along = _quantity(length, "length", key, path)
        scales[k.lower()] = per / along
    kw["diagram_scales"] = _ro(scales)
    return kw


def _int_in(v: Any, lo: int, hi: int, key: str, path: str) -> int:
    if isinstance(v, bool) or not isinstance(v, int) or not lo <= v <= hi:
        raise SettingsError(f"must be an integer {lo}..{hi}, got {v!r}", path=path, key=key)
    return v


def _quantity_list(v: Any, kind: str, key: str, path: str) -> tuple[float, ...]:
    if not isinstance(v, list):
        raise SettingsError(f"must be a list of quantities with units (e.g. [\"40 kN\"]), got {v!r}",
                            path=path, key=key)
    return tuple(_quantity(x, kind, f"{key}[{i}]", path) for i, x in enumerate(v))


def _second_order_and_moving(data: Mapping[str, Any], path: str) -> dict[str, Any]:
    """Settings fields of ``[second_order]`` and ``[moving]``."""
    kw: dict[str, Any] = {}
    so = _table(data, "second_order", path)
    _check_keys(so, {"analysis", "tolerance", "max_iterations", "subdivisions"}, "second_order", path)
    if "analysis" in so:
        kw["second_order"] = _choice(so["analysis"], SECOND_ORDER_CHOICES, "second_order.analysis", path)
    if "tolerance" in so:
        t = _number(so["tolerance"], "second_order.tolerance", path)
        if t >= 0.1:
            raise SettingsError(f"must be below 0.1 (a relative change), got {t!r}", path=path,
                                key="second_order.tolerance")
        kw["second_order_tolerance"] = t
    if "max_iterations" in so:
        kw["second_order_max_iterations"] = _int_in(so["max_iterations"], 1, 1000, "second_order.max_iterations",
                                                    path)
    if "subdivisions" in so:
        kw["second_order_subdivisions"] = _int_in(so["subdivisions"], 1, 64, "second_order.subdivisions", path)

    mv = _table(data, "moving", path)
    _check_keys(mv, {"path_layer", "step", "vehicles"}, "moving", path)
    if "path_layer" in mv:
        kw["moving_path_layer"] = _str(mv["path_layer"], "moving.path_layer", path)
    if "step" in mv:
        kw["moving_step"] = _quantity(mv["step"], "length", "moving.step", path)
    vehicles = mv.get("vehicles", [])
    if not isinstance(vehicles, list) or not all(isinstance(v, Mapping) for v in vehicles):
        raise SettingsError("must be an array of tables ([[moving.vehicles]])", path=path, key="moving.vehicles")
    specs, names = [], set()
    for i, v in enumerate(vehicles):
        key = f"moving.vehicles[{i}]"
        _check_keys(v, {"name", "axles", "spacings"}, key, path)
        name = _str(v.get("name", f"vehicle {i + 1}"), f"{key}.name", path)
        if name.upper() in names:
            raise SettingsError(f"vehicle name {name!r} used twice", path=path, key=f"{key}.name")
        names.add(name.upper())
        loads = _quantity_list(v.get("axles"), "force", f"{key}.axles", path)
        spacings = _quantity_list(v.get("spacings", []), "length", f"{key}.spacings", path)
        if not loads:
            raise SettingsError("a vehicle needs at least one axle load", path=path, key=f"{key}.axles")
        if len(spacings) != len(loads) - 1:
            raise SettingsError(f"{len(loads)} axle(s) need {max(len(loads) - 1, 0)} spacing(s), got "
                                f"{len(spacings)}", path=path, key=f"{key}.spacings")
        specs.append(VehicleSpec(name, loads, spacings))
    kw["moving_vehicles"] = tuple(specs)
    if specs and "moving_path_layer" not in kw:
        raise SettingsError("vehicles are given but no path: add path_layer", path=path, key="moving.path_layer")
    # a path without vehicles serves influence lines (--influence) alone
    return kw


def load_settings(path: Path | str | None = None, drawing: Path | str | None = None) -> Settings:
    """Read settings.

    Parameters
    ----------
    path : explicit settings file; must exist
    drawing : the drawing being read; ``dxf2frame.toml`` beside it is used
        when ``path`` is None and the file exists

    Returns
    -------
    Settings (defaults when no file is given or found)

    Raises
    ------
    SettingsError
        Missing explicit file, invalid TOML, unknown key or invalid value.
    """
    if path is None:
        if drawing is None:
            return Settings()
        candidate = Path(drawing).parent / SETTINGS_FILENAME
        if not candidate.is_file():
            return Settings()
        path = candidate
    p = Path(path)
    try:
        with open(p, "rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise SettingsError("settings file not found", path=str(p)) from None
    except tomllib.TOMLDecodeError as exc:
        raise SettingsError(f"not valid TOML: {exc}", path=str(p)) from None
    except UnicodeDecodeError as exc:
        raise SettingsError(f"not UTF-8 text (byte {exc.start}): save the file as UTF-8", path=str(p)) from None
    except RecursionError:
        raise SettingsError("not valid TOML: nested too deeply", path=str(p)) from None
    except OSError as exc:
        raise SettingsError(f"cannot read settings file: {exc.strerror or exc}", path=str(p)) from None
    return _build(data, str(p), p)
