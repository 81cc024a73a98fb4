"""How many entities the block references of a drawing expand to.

A 29 KB file can hold one MINSERT of a million cells, or ten blocks each
referencing the next ten times; reading, writing or previewing such a
drawing would take minutes and gigabytes.  :func:`check_expansion` counts,
without expanding anything, the entities the model space holds once every
MINSERT grid cell and every nested block reference is counted on its own
(on every layer: the preview draws decorative blocks too) and refuses the
drawing when that count is over ``limits.max_entities``.

Counting is linear in the size of the file: the count of one block is
computed once (memoised); a block that contains itself counts its first
pass only (the reader refuses such nesting where it matters).
"""
from __future__ import annotations

from collections.abc import Callable

from .errors import GeometryError

__all__ = ["expanded_count", "nesting_depth", "check_expansion"]


def _cells(e) -> int:
    n = 1
    for key in ("row_count", "column_count"):
        try:
            n *= max(1, int(e.dxf.get(key, 1)))
        except (TypeError, ValueError, OverflowError):
            pass
    return n


def expanded_count(insert, blocks, memo: dict[str, int] | None = None) -> int:
    """Entities a block reference stands for: its cells times (one for the
    reference itself plus the expanded count of the block's entities).

    Parameters
    ----------
    insert : an ezdxf INSERT (MINSERT) entity
    blocks : the document's block collection (``doc.blocks``)
    memo : block name -> expanded count of its content, shared between calls
    """
    memo = {} if memo is None else memo
    return _cells(insert) * (1 + _block_count(insert.dxf.get("name", ""), blocks, memo))


def _block_count(root: str, blocks, memo: dict[str, int]) -> int:
    """Expanded count of the content of block ``root`` (memoised in ``memo``);
    a reference back into a block still being counted (a block containing
    itself) counts its cells only."""

    def open_block(blk) -> tuple[list[tuple[str, int]], int]:
        refs, direct = [], 0
        for e in blk:
            if e.dxftype() == "INSERT":
                refs.append((e.dxf.get("name", ""), _cells(e)))
            else:
                direct += 1
        return refs, direct

    return _fold_blocks(root, blocks, memo, open_block,
                        add=lambda total, cells, child: total + cells * (1 + child),
                        finish=lambda total: total)


def nesting_depth(insert, blocks, memo: dict[str, int] | None = None) -> int:
    """Levels of block references a block reference opens (1 for a block
    without nested references); a block containing itself counts one pass."""
    memo = {} if memo is None else memo

    def open_block(blk) -> tuple[list[tuple[str, int]], int]:
        return [(e.dxf.get("name", ""), 1) for e in blk if e.dxftype() == "INSERT"], 0

    return _fold_blocks(insert.dxf.get("name", ""), blocks, memo, open_block,
                        add=lambda deepest, _cells, child: max(deepest, child),
                        finish=lambda deepest: 1 + deepest)


def _fold_blocks(root: str, blocks, memo: dict[str, int], open_block: Callable,
                 add: Callable[[int, int, int], int], finish: Callable[[int], int]) -> int:
    """A value of block ``root`` folded up from the blocks it references,
    children first (memoised in ``memo``; a missing block is 0).

    ``open_block(block) -> ([(child name, cells)], start value)``;
    ``add(value, cells, child value) -> value`` takes in one reference;
    ``finish(value)`` is the block's value once all are in.  A reference
    back into a block still open (a block containing itself) adds a child
    value of 0.  Iterative: a hostile file may nest thousands of blocks,
    deeper than Python's recursion limit."""
    if root in memo:
        return memo[root]
    stack: list[list] = []  # [name, [(child, cells)], next index, value]
    on_path: set[str] = set()

    def enter(name: str) -> None:
        blk = blocks.get(name)
        if blk is None:
            memo[name] = 0
            return
        refs, value = open_block(blk)
        stack.append([name, refs, 0, value])
        on_path.add(name)

    enter(root)
    while stack:
        frame = stack[-1]
        name, refs, k = frame[0], frame[1], frame[2]
        if k < len(refs):
            child, cells = refs[k]
            if child in memo or child in on_path:
                frame[3] = add(frame[3], cells, memo.get(child, 0))
                frame[2] += 1
            else:
                enter(child)  # taken in when its frame is done (or its memo set to 0)
            continue
        stack.pop()
        on_path.discard(name)
        memo[name] = finish(frame[3])
    return memo[root]


def check_expansion(doc, limit: int) -> int:
    """Refuse a drawing whose model space expands to more than ``limit``
    entities (MINSERT cells and nested block references counted one by one).

    Returns the expanded count.  Raises a
    :class:`~dxf2frame.errors.GeometryError` naming the block reference
    that expands most (its handle, layer, cell count and expanded count)
    and the limit.
    """
    memo: dict[str, int] = {}
    total, worst, worst_n = 0, None, 0
    for e in doc.modelspace():
        if e.dxftype() != "INSERT":
            total += 1
            continue
        n = expanded_count(e, doc.blocks, memo)
        total += n
        if n > worst_n:
            worst, worst_n = e, n
    if total <= limit or worst is None:
        return total
    cells = _cells(worst)
    rows, cols = (worst.dxf.get("row_count", 1), worst.dxf.get("column_count", 1))
    grid = f"a MINSERT grid of {rows} x {cols} = {cells} cells of" if cells > 1 else "a reference to"
    whole = "" if worst_n == total else f"; the drawing expands to {total} in all"
    raise GeometryError(
        f"{grid} block '{worst.dxf.get('name', '')}', which expands to {worst_n} entities (references and "
        f"the entities of their blocks){whole}, more than the limit of {limit}",
        handle=worst.dxf.handle or "",
        layer=worst.dxf.get("layer", "0"),
        hint="raise [limits] max_entities in dxf2frame.toml if this is intended",
    )
