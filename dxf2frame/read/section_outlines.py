"""Sections drawn in the drawing: closed polylines on ``SECTION-<name>`` layers.

A section table of the settings may say ``outline = "B1"`` instead of
giving A and I: the section is then the closed polyline (LWPOLYLINE or
POLYLINE, straight segments) drawn on layer ``SECTION-B1``, full size in
drawing units, its vertical axis the depth; further closed polylines on
the same layer inside it are holes.  Area and second moment about the
horizontal centroidal axis come from ``solver.section_from_outline``
(exact polygon integration).  The ``SECTION-*`` layers are not frame
layers: nothing else on them is read.
"""
from __future__ import annotations

from typing import Callable

from shapely.geometry import Polygon

from ..errors import DrawingError, SettingsError
from ..settings import Settings
from ..solver import Section, ShapeError, section_from_outline

__all__ = ["SECTION_LAYER_PREFIX", "outline_sections", "sections_with_outlines"]

SECTION_LAYER_PREFIX = "SECTION-"


def _rings(doc) -> dict[str, list[tuple[str, list[tuple[float, float]]]]]:
    """{outline name (upper case): [(handle, vertices), ...]} of the closed
    polylines on ``SECTION-*`` layers."""
    out: dict[str, list] = {}
    for e in doc.modelspace().query("LWPOLYLINE POLYLINE"):
        layer = str(e.dxf.get("layer", "0")).upper()
        if not layer.startswith(SECTION_LAYER_PREFIX):
            continue
        handle = e.dxf.handle or ""
        if not e.is_closed:
            raise DrawingError("a section outline must be a closed polyline", handle=handle, layer=layer,
                               hint="close the polyline (or move it off the SECTION- layer)")
        if e.dxftype() == "LWPOLYLINE":
            pts = [(float(x), float(y), float(b)) for x, y, b in e.get_points("xyb")]
        else:
            pts = [(float(v.dxf.location.x), float(v.dxf.location.y), float(v.dxf.get("bulge", 0.0)))
                   for v in e.vertices]
        if any(b for _, _, b in pts):
            raise DrawingError("a section outline with arc segments (bulges)", handle=handle, layer=layer,
                               hint="draw the outline with straight segments only")
        out.setdefault(layer[len(SECTION_LAYER_PREFIX):], []).append((handle, [(x, y) for x, y, _ in pts]))
    return out


def outline_sections(doc, settings: Settings, scale: float) -> dict[str, Section]:
    """{section key: Section} for every section of the settings given by
    ``outline``; ``scale`` metres per drawing unit.

    Raises :class:`SettingsError` when no closed polyline is on the named
    layer, :class:`DrawingError` (handle and layer) for an outline that is
    not a section (open, arcs, crossing itself, a hole outside)."""
    wanted = settings.section_outlines
    if not wanted:
        return {}
    rings = _rings(doc)
    out: dict[str, Section] = {}
    for key, name in wanted.items():
        found = rings.get(name)
        where = "default" if key == "DEFAULT" else key
        if not found:
            raise SettingsError(f"outline = {name!r}: no closed polyline on layer {SECTION_LAYER_PREFIX}{name} "
                                f"(layers with outlines: {', '.join(SECTION_LAYER_PREFIX + n for n in rings) or 'none'})",
                                path=str(settings.source or ""), key=f"sections.{where}.outline")
        found = sorted(found, key=lambda hp: -abs(Polygon(hp[1]).area) if len(hp[1]) >= 3 else 0.0)
        handle, outer = found[0]
        base = settings.sections[key]
        try:
            out[key] = section_from_outline(outer, base.E, [v for _, v in found[1:]], unit=scale,
                                            name=base.name or f"outline {name}")
        except (ShapeError, ValueError) as exc:
            raise DrawingError(f"section outline {name}: {exc}", handle=handle,
                               layer=SECTION_LAYER_PREFIX + name) from None
    return out


def sections_with_outlines(doc, settings: Settings, scale: float) -> Callable[[str], Section | None]:
    """``layer -> Section``: the settings' sections, those given by an
    outline replaced by the drawn one."""
    drawn = outline_sections(doc, settings, scale)
    if not drawn:
        return settings.section_for

    def section_for(layer: str) -> Section | None:
        key = layer.upper()
        if key in drawn:
            return drawn[key]
        if key not in settings.sections and "DEFAULT" in drawn:
            return drawn["DEFAULT"]
        return settings.section_for(layer)

    return section_for
