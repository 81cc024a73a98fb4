"""Reading a drawing: open the file, dispatch its entities, read member
linework and symbol inserts, and build the analysis frame (:mod:`.cleanup`).
"""
from .reader import (  # noqa: F401
    read_drawing,
    read_document,
    open_document,
    HANDLERS,
    SYMBOL_GROUPS,
    MAX_COORDINATE_M,
    MAX_RELATIVE_ROUNDING,
)

__all__ = [
    "read_drawing",
    "read_document",
    "open_document",
    "HANDLERS",
    "SYMBOL_GROUPS",
    "MAX_COORDINATE_M",
    "MAX_RELATIVE_ROUNDING",
]
