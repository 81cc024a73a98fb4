"""Batch console: a live bar on a terminal, plain lines in logs, plain tables."""
from __future__ import annotations

import io

from dxf2frame.console import batch_progress, render_table


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_plain_lines_when_not_a_terminal():
    out = io.StringIO()
    with batch_progress(2, out) as advance:
        advance("/x/rev-1.dxf", "ok")
        advance("/x/rev-2.dxf", "bad input")
    lines = out.getvalue().splitlines()
    assert lines == ["[##########          ] 1/2  rev-1.dxf: ok",
                     "[####################] 2/2  rev-2.dxf: bad input"]
    assert "\x1b" not in out.getvalue()  # no terminal control codes in a log


def test_live_bar_on_a_terminal_keeps_failures_on_screen():
    out = Terminal()
    with batch_progress(2, out) as advance:
        advance("/x/rev-1.dxf", "ok")
        advance("/x/rev-2.dxf", "bad input")
    text = out.getvalue()
    assert "2/2" in text and "rev-2.dxf: bad input" in text
    assert "\x1b[" in text  # drawn with terminal control codes


def test_table_columns_fit_their_longest_cell():
    text = render_table(["file", "max |M|"], [["a.dxf", "12.5 kN*m"], ["a-long-name.dxf", "1 kN*m"]])
    head, rule, *rows = text.splitlines()
    assert head.split() == ["file", "max", "|M|"]
    assert rows[1].startswith("a-long-name.dxf  1 kN*m")
    assert rows[0].index("12.5") == head.index("max") == rows[1].index("1 kN")
    assert set(rule) <= {"-", " "} and all(ln == ln.rstrip() for ln in text.splitlines())
