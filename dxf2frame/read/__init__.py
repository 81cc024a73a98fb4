"""Reading a drawing: open the file (:mod:`dxf2frame.drawing_file`), dispatch its
entities (:mod:`.dispatch`), read member linework (:mod:`.linework`) and
symbol inserts (:mod:`.symbol_inserts`) in one reading pass (:mod:`.context`),
and build the analysis frame (:mod:`.cleanup`); :mod:`.reader` holds the
drawing-wide checks and the entry points.
"""
from ..drawing_file import open_document
from .reader import read_drawing, read_file, read_document, MAX_RELATIVE_ROUNDING
from .context import MAX_COORDINATE_M
from .dispatch import HANDLERS, SYMBOL_GROUPS
from .cleanup import (
    Segment,
    SupportSpec,
    ConnectionSpec,
    ForceSpec,
    CoupleSpec,
    UdlSpec,
    CleanResult,
    build_frame,
)

__all__ = [
    "open_document",
    "read_drawing",
    "read_file",
    "read_document",
    "MAX_RELATIVE_ROUNDING",
    "MAX_COORDINATE_M",
    "HANDLERS",
    "SYMBOL_GROUPS",
    "Segment",
    "SupportSpec",
    "ConnectionSpec",
    "ForceSpec",
    "CoupleSpec",
    "UdlSpec",
    "CleanResult",
    "build_frame",
]
