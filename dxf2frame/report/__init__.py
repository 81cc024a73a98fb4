"""The JSON report (schema 1) and the CSV of member extremes.
"""
from .report import (  # noqa: F401
    UnitFactors,
    unit_factors,
    MemberGroup,
    member_groups,
    element_table,
    locate_points,
    assemble_report,
    build_report,
    to_plain,
    Table,
    dumps_report,
    write_json,
    write_csv,
    CSV_COLUMNS,
)

__all__ = [
    "UnitFactors",
    "unit_factors",
    "MemberGroup",
    "member_groups",
    "element_table",
    "locate_points",
    "assemble_report",
    "build_report",
    "to_plain",
    "Table",
    "dumps_report",
    "write_json",
    "write_csv",
    "CSV_COLUMNS",
]
