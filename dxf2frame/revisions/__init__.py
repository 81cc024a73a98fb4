"""Comparing revisions: the data (:mod:`.data`), reading reports
(:mod:`.reports`), matching members by geometry (:mod:`.matching`), the
relative changes (:mod:`.compare`), tables, CSV and JSON (:mod:`.outputs`)
and the newest drawing with the changes marked (:mod:`.marks`); the
revision history of a folder (:mod:`.history`: the SQLite store;
:mod:`.history_view`: listing, trends, rebuilding).
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
from .history import (HISTORY_FILENAME, SCHEMA_VERSION, DamagedHistoryError, History, HistoryError, Revision,
                      content_hash, record_report, revision_of, revision_report)
from .history_view import SeriesView, history_table, rebuild_history, resolve_revision, series_views, trend

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
    "HISTORY_FILENAME",
    "SCHEMA_VERSION",
    "HistoryError",
    "DamagedHistoryError",
    "History",
    "Revision",
    "content_hash",
    "record_report",
    "revision_of",
    "revision_report",
    "SeriesView",
    "series_views",
    "history_table",
    "trend",
    "rebuild_history",
    "resolve_revision",
]
