"""Console output of many-drawing runs: the progress of a batch and its tables.

Drawn with ``rich``.  On a terminal the progress is a live bar (files done,
elapsed time, the last file and its status); when the output is not a
terminal (a CI log, a pipe, a file) every finished file is one plain line
``[#####     ] k/n name: status``, so logs stay readable and greppable.
Tables are plain text either way (``summary_table`` returns a string), with
columns sized to their contents.

>>> print(render_table(["file", "status"], [["a.dxf", "ok"], ["long-name.dxf", "bad input"]]))
file           status
-------------- ---------
a.dxf          ok
long-name.dxf  bad input
"""
from __future__ import annotations

import contextlib
import io
from pathlib import Path
from typing import Callable, Iterator, TextIO

__all__ = ["render_table", "batch_progress"]


def render_table(head: list[str], rows: list[list[str]]) -> str:
    """A plain-text table: header, a rule of dashes, the rows; columns
    left-aligned, two spaces apart (the rule one), no trailing spaces (greppable, stable in
    logs and tests)."""
    from rich import box
    from rich.console import Console
    from rich.table import Table

    table = Table(box=box.Box("    \n    \n -  \n    \n    \n    \n    \n    \n", ascii=True),
                  show_edge=False, pad_edge=False, padding=(0, 1, 0, 1), collapse_padding=True,
                  header_style="", show_lines=False)
    for h in head:
        table.add_column(h, no_wrap=True, overflow="ignore")
    for r in rows:
        table.add_row(*r)
    buf = io.StringIO()
    Console(file=buf, width=100_000, force_terminal=False, no_color=True, legacy_windows=False,
            emoji=False, highlight=False, markup=False).print(table)
    lines = [ln.rstrip() for ln in buf.getvalue().splitlines()]
    return "\n".join(lines)


@contextlib.contextmanager
def batch_progress(total: int, stream: TextIO) -> Iterator[Callable[[str, str], None]]:
    """Yield ``advance(source, status)``, called once per finished drawing.

    A live bar when ``stream`` is a terminal, else one plain line per file.
    """
    isatty = getattr(stream, "isatty", None)
    if not (isatty is not None and isatty()):  # a log or a pipe: plain lines, rich not even imported
        done = [0]

        def plain(source: str, status: str) -> None:
            done[0] += 1
            bar = "#" * int(20 * done[0] / total)
            print(f"[{bar:<20}] {done[0]}/{total}  {Path(source).name}: {status}", file=stream, flush=True)

        yield plain
        return

    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    console = Console(file=stream, highlight=False, markup=False, emoji=False)

    with Progress(TextColumn("solving"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
                  TextColumn("{task.fields[last]}"), console=console, transient=False) as bar:
        task = bar.add_task("solve", total=total, last="")

        def live(source: str, status: str) -> None:
            name = Path(source).name
            if status != "ok":           # what went wrong stays on screen above the bar
                bar.console.print(f"{name}: {status}", style="bold red" if status != "unstable" else "yellow")
            bar.update(task, advance=1, last=f"{name}: {status}")

        yield live
