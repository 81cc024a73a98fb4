"""solver: planar frame analysis with no dependency on DXF.

Build a :class:`Frame`, then :func:`check` it and :func:`solve` it.  All
quantities are in one consistent unit system chosen by the caller.
"""
from .model import *  # noqa: F401,F403
from .model import __all__ as _model_all

__all__ = list(_model_all)
