"""The state of one reading pass, and where each entity came from.

:class:`Source` names the entity a model object comes from: its handle
path, its effective layer, whether it is a piece of an exploded block, and
how deep in nested blocks.  :class:`ReadContext` holds the document, the settings,
the drawing unit and all that was read so far (segments, supports,
connections, loads, warnings, hinge and load counts), with the helpers
every handler uses: the role of a layer, adding a polyline, the Z and
extrusion checks, attribute texts (the insert's ATTRIBs, else the block's
ATTDEF defaults) and their quantities.

Units: points come in drawing units; ``ReadContext.scale`` is metres per drawing
unit and the segments stored are in metres.  Attribute quantities are SI
floats (:func:`dxf2frame.units.parse_quantity`); a bare number is taken in
``ReadContext.defaults[kind]`` (the settings' force unit and the drawing unit).
:func:`_check_finite` refuses a point that is not finite or lies beyond
:data:`MAX_COORDINATE_M`.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

from ezdxf.math import Vec3

from .cleanup import ConnectionSpec, Segment, SupportSpec
from ..errors import DrawingError, GeometryError, one_line, shorten
from ..settings import Settings
from ..units import parse_quantity

__all__ = ["MAX_COORDINATE_M"]

#: largest coordinate magnitude accepted [m]; beyond it the geometry
#: libraries overflow and no structural drawing needs it
MAX_COORDINATE_M = 1e12


# ---------------------------------------------------------------------------
# reading state
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Source:
    """Where an entity sits: handle path, effective layer, virtual (from a block)."""

    handle: str
    layer: str
    virtual: bool = False
    depth: int = 0


@dataclass
class ReadContext:
    doc: object
    settings: Settings
    unit: str  # drawing length unit (pint name)
    scale: float  # m per drawing unit
    z_tol: float  # drawing units
    defaults: dict[str, str]
    segments: list[Segment] = field(default_factory=list)
    supports: list[SupportSpec] = field(default_factory=list)
    connections: list[ConnectionSpec] = field(default_factory=list)
    loads: list = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    hinges: int = 0
    n_loads: int = 0
    default_case: list[str] = field(default_factory=list)  # handles of loads without CASE
    # layer -> (lines, first handle) of linework on layers named like the
    # frame layer but not matching it (FRAME_BRACES): not read, said
    lookalikes: dict[str, tuple[int, str]] = field(default_factory=dict)
    _attdefs: dict[str, dict[str, str]] = field(default_factory=dict)
    _reads_memo: dict[tuple[str, str], bool] = field(default_factory=dict)
    _decoded: set[str] = field(default_factory=set)

    # -- helpers -------------------------------------------------------------
    def role_of_layer(self, layer: str) -> str | None:
        u = layer.upper()
        for role in ("supports", "connections", "loads"):
            if u == self.settings.layers[role].upper():
                return role
        return None

    def note_off_frame(self, src: Source) -> None:
        """Linework on a layer that is no frame layer: remembered when the
        layer is named like one (``FRAME_BRACES``, ``Frame Braces``,
        ``FRAMES``), whose lines a drafter meant as members."""
        frame = self.settings.layers["frame"].upper()
        if re.sub(r"[\s_.]+", "-", src.layer.strip().upper()).startswith(frame):
            n, first = self.lookalikes.get(src.layer, (0, src.handle))
            self.lookalikes[src.layer] = (n + 1, first)

    def lookalike_warnings(self) -> list[str]:
        """One warning per layer of :meth:`note_off_frame`."""
        frame = self.settings.layers["frame"]
        return [f"layer '{layer}' holds {n} line(s) or curve(s) (e.g. #{first}) that are not read as members: "
                f"member layers "
                f"are {frame} and {frame}-*; rename it (e.g. "
                f"{frame}-{re.sub(r'[^A-Z0-9]+', '-', layer.upper()[len(frame):]).strip('-') or 'MEMBERS'}) "
                f"if its lines are members"
                for layer, (n, first) in sorted(self.lookalikes.items())]

    def add_polyline(self, pts: list[tuple[float, float, float]], src: Source) -> None:
        """Add consecutive segments through WCS points (drawing units), numbered
        from the first point, converted to metres."""
        self.check_z(pts, src)
        s = self.scale
        for k, (a, b) in enumerate(zip(pts[:-1], pts[1:])):
            self.segments.append(Segment((a[0] * s, a[1] * s), (b[0] * s, b[1] * s), src.handle, src.layer, k))

    def check_z(self, pts, src: Source) -> None:
        for p in pts:
            _check_finite(p, src, self.scale)
            if abs(p[2]) > self.z_tol:
                raise GeometryError(
                    f"point at Z = {p[2]:.6g} {self.unit}: the frame must lie in the X-Y plane (Z = 0)",
                    handle=src.handle,
                    layer=src.layer,
                    hint="move the entity to Z = 0 (e.g. flatten the drawing)",
                )

    def check_extrusion(self, entity, src: Source) -> None:
        ext = Vec3(entity.dxf.get("extrusion", (0.0, 0.0, 1.0)))
        if src.virtual:
            # a mirrored block reference legitimately turns +Z into -Z
            bad = not (abs(ext.x) < 1e-9 and abs(ext.y) < 1e-9)
        else:
            bad = not ext.isclose(Vec3(0, 0, 1), abs_tol=1e-9)
        if bad:
            raise GeometryError(
                f"{entity.dxftype()} has extrusion direction {tuple(round(c, 6) for c in ext)}, not +Z",
                handle=src.handle,
                layer=src.layer,
                hint="the frame must be drawn in the world X-Y plane; redraw it in the WCS",
            )

    def attdef_defaults(self, block_name: str) -> dict[str, str]:
        d = self._attdefs.get(block_name)
        if d is None:
            d = {}
            blk = self.doc.blocks.get(block_name)
            if blk is not None:
                for e in blk.query("ATTDEF"):
                    d[e.dxf.tag.upper()] = e.dxf.get("text", "")
            self._attdefs[block_name] = d
        return d

    def attributes(self, insert, src: Source | None = None) -> dict[str, str]:
        """Convention tag -> stripped text; ATTRIBs first, ATTDEF defaults for
        missing tags; empty values omitted.  A value longer than
        ``limits.max_attribute_chars`` is a :class:`DrawingError` naming
        ``src`` (the insert by default)."""
        raw: dict[str, str] = {}
        for tag, text in self.attdef_defaults(insert.dxf.name).items():
            raw[tag] = text
        for a in insert.attribs:
            raw[a.dxf.tag.upper()] = a.dxf.get("text", "")
        out: dict[str, str] = {}
        where = src.handle if src is not None else (insert.dxf.handle or "")
        for tag, text in raw.items():
            t = self.text((text or "").strip(), f"attribute {tag}", where)
            canon = self.settings.canonical_tag(tag)
            if t and canon is not None:
                if len(t) > self.settings.max_attribute_chars:
                    raise _too_long(tag, t, self.settings.max_attribute_chars, insert, src)
                out[canon] = t
        return out

    def block_reads(self, name: str, layer: str) -> bool:
        """True when exploding a reference of block ``name`` on ``layer``
        gives the reader something: an entity on a frame or input layer, a
        convention symbol (read, or ignored with a warning), or a nested
        reference to a block that reads.  Pieces on layer ``0`` take the
        layer of the reference; result layers are skipped.  Decorative
        nesting of any depth (also a block containing itself) gives False,
        so it is never exploded or refused."""
        memo = self._reads_memo
        if (name, layer) in memo:
            return memo[(name, layer)]
        # iterative depth-first search: a hostile file may nest thousands of
        # blocks, deeper than Python's recursion limit
        stack: list[list] = []  # [key, entities iterator, found, depends on an open block]
        on_path: set[tuple[str, str]] = set()
        result = False

        def enter(key: tuple[str, str]) -> None:
            blk = self.doc.blocks.get(key[0])
            if blk is None:
                memo[key] = False
                return
            stack.append([key, iter(blk), False, False])
            on_path.add(key)

        def finish(found: bool, open_cycle: bool) -> None:
            nonlocal result
            key = stack.pop()[0]
            on_path.discard(key)
            if found or not open_cycle:
                memo[key] = found
            if stack:
                stack[-1][2] = stack[-1][2] or found
                stack[-1][3] = stack[-1][3] or (open_cycle and not found)
            else:
                result = found

        enter((name, layer))
        if not stack:
            return False
        while stack:
            frame = stack[-1]
            (_, layer_of_ref), entities = frame[0], frame[1]
            if frame[2]:
                finish(True, False)
                continue
            e = next(entities, None)
            if e is None:
                finish(False, frame[3])
                continue
            t = e.dxftype()
            if t == "ATTDEF":
                continue
            lay = e.dxf.get("layer", "0")
            eff = layer_of_ref if lay == "0" else lay
            if self.settings.is_result_layer(eff):
                continue
            if t == "INSERT":
                nested = e.dxf.get("name", "")
                if self.role_of_layer(eff) is not None or self.settings.block_kind(nested) is not None:
                    frame[2] = True
                elif (nested, eff) in memo:
                    frame[2] = memo[(nested, eff)]
                elif (nested, eff) in on_path:
                    frame[3] = True  # a cycle adds nothing the first pass does not find
                else:
                    enter((nested, eff))
            elif self.settings.is_frame_layer(eff) or self.role_of_layer(eff):
                frame[2] = True
        return result

    def text(self, raw: str, what: str, handle: str) -> str:
        """A text from the drawing (layer name, attribute value) with bytes
        that were not UTF-8 (kept by ezdxf as surrogates) decoded as
        Windows-1252, the usual code page of older CAD programs; each such
        text is a warning naming the entity once.  Other texts are returned
        unchanged."""
        if not _SURROGATE.search(raw):
            return raw
        fixed = decode_surrogates(raw)
        if raw not in self._decoded:
            self._decoded.add(raw)
            self.warnings.append(
                f"{what} of #{handle} holds bytes that are not UTF-8 ({one_line(shorten(raw))}); read as "
                f"Windows-1252: '{shorten(fixed)}' (save the drawing again as UTF-8 to silence this warning)"
            )
        return fixed

    def quantity(self, attrs: dict[str, str], tag: str, kind: str, src: Source, default_unit: str | None = None):
        text = attrs.get(tag)
        if text is None:
            return None
        return parse_quantity(
            text,
            kind,
            default_unit=default_unit or self.defaults[kind],
            handle=src.handle,
            layer=src.layer,
            tag=self.settings.attr(tag),
            notes=self.warnings,
        )



_SURROGATE = re.compile("[\udc80-\udcff]")


def decode_surrogates(text: str) -> str:
    """Undecodable bytes (surrogate escapes U+DC80..U+DCFF) decoded as
    Windows-1252; anything that still cannot be decoded becomes U+FFFD."""
    raw = text.encode("utf-8", "surrogateescape")
    out = raw.decode("utf-8", "surrogateescape")
    return _SURROGATE.sub(lambda m: bytes([ord(m.group()) - 0xDC00]).decode("cp1252", "replace"), out)


def _too_long(tag: str, text: str, limit: int, insert, src: Source | None) -> DrawingError:
    """The refusal of an attribute value over ``limits.max_attribute_chars``."""
    handle = src.handle if src is not None else (insert.dxf.handle or "")
    layer = src.layer if src is not None else insert.dxf.get("layer", "")
    return DrawingError(
        f"attribute {shorten(tag, 40)} has a value of {len(text)} characters ({shorten(text, 40)!r}), "
        f"more than the limit of {limit}",
        handle=handle,
        layer=layer,
        hint="shorten it, or raise [limits] max_attribute_chars in dxf2frame.toml if this is intended",
    )


# ---------------------------------------------------------------------------
# point checks
# ---------------------------------------------------------------------------


def _check_finite(p, src: Source, scale: float) -> None:
    """A point (drawing units) must be a finite number and not absurdly far out."""
    if not all(math.isfinite(c) for c in p):
        raise GeometryError(
            f"a coordinate is not a finite number ({', '.join(f'{c:g}' for c in p)})",
            handle=src.handle,
            layer=src.layer,
            hint="the file is damaged or was written by a faulty program; redraw the entity",
        )
    big = max(abs(c) for c in p) * scale
    if big > MAX_COORDINATE_M:
        raise GeometryError(
            f"a coordinate is {big:.3g} m from the origin (more than {MAX_COORDINATE_M:g} m)",
            handle=src.handle,
            layer=src.layer,
            hint="move the drawing near the origin, or check the drawing unit",
        )
