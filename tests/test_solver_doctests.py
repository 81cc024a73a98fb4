"""The Examples sections of the solver's modules run as doctests (each
example's numbers are commented with the closed form they show)."""
from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["dxf2frame.solver.model", "dxf2frame.solver.combinations", "dxf2frame.solver.storeys", "dxf2frame.solver.shapes", "dxf2frame.solver.selfweight",
           "dxf2frame.solver.patterns"]


@pytest.mark.parametrize("name", MODULES)
def test_doctests(name):
    mod = importlib.import_module(name)
    res = doctest.testmod(mod, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert res.attempted > 0 and res.failed == 0
