"""The JSON report (schema 1) and the CSV of member extremes (:mod:`.report`),
long lists kept as numpy columns and written block by block (:mod:`.table`).
"""
from .report import (
    UnitFactors,
    unit_factors,
    MemberGroup,
    member_groups,
    element_table,
    locate_points,
    assemble_report,
    build_report,
    to_plain,
    dumps_report,
    write_json,
    reaction_schedule,
    write_reaction_schedule,
    write_csv,
    CSV_COLUMNS,
)
from .table import Table

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
    "dumps_report",
    "write_json",
    "reaction_schedule",
    "write_reaction_schedule",
    "write_csv",
    "CSV_COLUMNS",
    "Table",
]
