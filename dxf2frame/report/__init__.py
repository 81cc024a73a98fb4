"""The JSON report (schema 1) and the CSV of member extremes (:mod:`.report`),
long lists kept as numpy columns and written block by block (:mod:`.table`).
"""
from . import report
from .report import *  # noqa: F401,F403 - the module's public names, listed in its __all__
from .table import Table

__all__ = [*report.__all__, "Table"]
