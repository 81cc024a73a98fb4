"""The Examples sections of the solver's modules run as doctests (each
example's numbers are commented with the closed form they show)."""
from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["solver.model", "solver.combinations", "solver.storeys", "solver.shapes", "solver.selfweight",
           "solver.patterns"]


@pytest.mark.parametrize("name", MODULES)
def test_doctests(name):
    mod = importlib.import_module(name)
    res = doctest.testmod(mod, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert res.attempted > 0 and res.failed == 0
