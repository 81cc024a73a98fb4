"""Hand-check sheets: the forces on a free body (:mod:`.terms`), the cut and the
equilibrium sums (:mod:`.free_body`), the sheet's wording (:mod:`.wording`) and figures (:mod:`.figures`), and which
cuts an analysed drawing gets and the files (:mod:`.sheets`).
"""
from .terms import Term, DistributedPart, Side
from .free_body import FreeBody, Method, cut_free_body
from ..numbers import fmt
from .wording import SheetHeader, sheet_markdown, sheet_text
from .sheets import SheetRequestError, drawing_revision, write_cut_sheets, write_sheets, write_sheets_staged

__all__ = [
    "Term",
    "DistributedPart",
    "Side",
    "FreeBody",
    "Method",
    "cut_free_body",
    "fmt",
    "SheetHeader",
    "sheet_markdown",
    "sheet_text",
    "SheetRequestError",
    "drawing_revision",
    "write_cut_sheets",
    "write_sheets",
    "write_sheets_staged",
]
