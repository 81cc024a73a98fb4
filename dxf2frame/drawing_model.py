"""The frame read from a drawing, plus the drawing facts the writers need."""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from .solver import Frame

__all__ = ["DrawingModel"]


@dataclass
class DrawingModel:
    """What the reader hands on.

    Attributes
    ----------
    frame : the analysis model in SI units (N, m, Pa)
    source : path of the drawing read
    length_unit : pint name of the drawing's length unit ("m", "mm", "ft", "inch", ...)
    unit_scale : metres per drawing unit; drawing coordinate = x_m / unit_scale
    warnings : texts naming entity handles (duplicates dropped, zero-length...)
    hinges : number of HINGE blocks applied
    n_loads : number of load blocks read
    extents : (xmin, ymin, xmax, ymax) of the frame in drawing units
    force_unit : pint name of the default force unit of the settings
    crossings_joined : crossing points where members were joined rigidly
    crossings_separate : one text per crossing left separate (handles,
        where, why)
    near_misses : free member ends close to another member or a support,
        as (x, y) in drawing units and the warning text
    """

    frame: Frame
    source: Path
    length_unit: str
    unit_scale: float
    warnings: list[str] = field(default_factory=list)
    hinges: int = 0
    n_loads: int = 0
    extents: tuple[float, float, float, float] = (0.0, 0.0, 0.0, 0.0)
    force_unit: str = "kN"
    crossings_joined: int = 0
    crossings_separate: list[str] = field(default_factory=list)
    near_misses: list[tuple[float, float, str]] = field(default_factory=list)
    # loads the tool generated (issue 18: self-weight), one line each, for
    # check, the report's notes and the notes layer
    notes: list[str] = field(default_factory=list)

    def to_drawing(self, x_m: float, y_m: float) -> tuple[float, float]:
        """Convert analysis coordinates (m) to drawing coordinates."""
        return x_m / self.unit_scale, y_m / self.unit_scale
