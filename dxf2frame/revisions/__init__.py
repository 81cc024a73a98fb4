"""Comparing revisions: the data (:mod:`.data`), reading reports
(:mod:`.reports`), matching members by geometry (:mod:`.matching`), the
relative changes (:mod:`.compare`), tables, CSV and JSON (:mod:`.outputs`)
and the newest drawing with the changes marked (:mod:`.marks`).
"""
from .data import (
    FLOOR_FRACTION,
    MEMBER_QUANTITIES,
    REACTION_QUANTITIES,
    MemberRef,
    ValueChange,
    MemberChange,
    ReactionChange,
    RevisionDiff,
    Comparison,
)
from .reports import convert_report
from .matching import PARALLEL_DEG, MOVE_FRACTION, match_members
from .compare import DEFAULT_THRESHOLD, TOLERANCE_FRACTION, compare_reports
from .outputs import CSV_COLUMNS, comparison_rows, comparison_table, unit_labels, write_comparison
from .marks import cloud_points, mark_changes

__all__ = [
    "FLOOR_FRACTION",
    "MEMBER_QUANTITIES",
    "REACTION_QUANTITIES",
    "MemberRef",
    "ValueChange",
    "MemberChange",
    "ReactionChange",
    "RevisionDiff",
    "Comparison",
    "convert_report",
    "PARALLEL_DEG",
    "MOVE_FRACTION",
    "match_members",
    "DEFAULT_THRESHOLD",
    "TOLERANCE_FRACTION",
    "compare_reports",
    "CSV_COLUMNS",
    "comparison_rows",
    "comparison_table",
    "unit_labels",
    "write_comparison",
    "cloud_points",
    "mark_changes",
]
