"""Hand-check sheets: a free body cut at a point, its equilibrium equations
with numbers, the sheet's wording and figures.
"""
from .sheets import (  # noqa: F401
    Term,
    DistributedPart,
    FreeBody,
    SheetHeader,
    SheetRequestError,
    cut_free_body,
    fmt,
    sheet_markdown,
    sheet_text,
    write_cut_sheets,
    write_sheets,
    run_explain_command,
    drawing_revision,
    Side,
    Method,
)

__all__ = [
    "Term",
    "DistributedPart",
    "FreeBody",
    "SheetHeader",
    "SheetRequestError",
    "cut_free_body",
    "fmt",
    "sheet_markdown",
    "sheet_text",
    "write_cut_sheets",
    "write_sheets",
    "run_explain_command",
    "drawing_revision",
    "Side",
    "Method",
]
