"""Long report lists kept as columns, written as JSON text without building a dict per row.

A report of a 20,000-member frame with 15 results holds 300,000 member
entries.  As Python dicts they cost about 1.5 GiB and most of the time of
writing the report; as numpy columns they cost a few MiB.  :class:`Table`
keeps one such list as columns and gives it two faces:

* a read-only sequence of dicts (``table[i]``, iteration), built on demand,
  for code that wants the report as plain JSON-like data;
* :meth:`Table.json_lines`: each row as the exact JSON text the standard
  encoder writes for that dict (same key order, ``", "`` and ``": "``
  separators, ``float.__repr__`` numbers, ``null`` for a missing value),
  built column by column with a single ``%`` template per row;
* :meth:`Table.csv_rows`: the same texts as CSV cells.

Numbers are written with 12 significant digits (:func:`number_texts`,
correctly rounded by ``%.12g``); NaN
and infinity mean "no value" and become ``null`` / ``None``.  The dict face
gives each number as the float its JSON text reads back as, so both faces
agree exactly.
"""
from __future__ import annotations

import json
import math
from collections.abc import Sequence
from typing import Any, Iterator

import numpy as np

__all__ = ["DictColumn", "Table", "as_written", "json_number", "number_texts"]

_ENC = json.JSONEncoder(ensure_ascii=False, allow_nan=False).encode


def json_number(v) -> float | None:
    """A JSON-safe float (12 significant digits) or None for NaN/inf/None."""
    if v is None:
        return None
    f = float(v)
    if not math.isfinite(f):
        return None
    return 0.0 if f == 0.0 else float(f"{f:.12g}")
_CONST = {None: "null", True: "true", False: "false"}


def number_texts(values: Any) -> list[str]:
    """JSON text of each number: 12 significant digits (``%.12g``, so a
    whole number has no ``.0``), ``null`` for NaN and infinity."""
    a = np.asarray(values, dtype=float)
    out = list(map("%.12g".__mod__, a.tolist()))
    bad = np.flatnonzero(~np.isfinite(a))
    for i in bad.tolist():
        out[i] = "null"
    return out


def _json_texts(values: np.ndarray | Sequence) -> list[str]:
    """JSON text of each value of a column."""
    if isinstance(values, np.ndarray):
        return number_texts(values)
    cache: dict[Any, str] = {}
    out = []
    for v in values:
        if v is None or v is True or v is False:
            out.append(_CONST[v])
        elif type(v) is str:
            t = cache.get(v)
            if t is None:
                t = cache[v] = _ENC(v)
            out.append(t)
        else:
            out.append(_ENC(v))
    return out


def _read_back(values: Any) -> list[float | None]:
    """Numbers exactly as their JSON text (:func:`number_texts`) reads back; None for null."""
    return [None if t == "null" else float(t) for t in number_texts(values)]


def as_written(values: Any) -> np.ndarray:
    """:func:`_read_back` as a float array, NaN for null."""
    return np.array([math.nan if v is None else v for v in _read_back(values)], dtype=float)


def _python_values(values: np.ndarray | Sequence) -> list:
    """A column as Python values; numbers exactly as their JSON text reads back."""
    return _read_back(values) if isinstance(values, np.ndarray) else list(values)


class DictColumn(Sequence):
    """A column whose value in each row is a dict built on demand from
    parallel lists: ``DictColumn({"a": [1, 2], "b": [3, 4]})[1] == {"a": 2, "b": 4}``
    (an envelope's ``governing`` entry per member, without a dict per row
    in memory)."""

    def __init__(self, parts: dict[str, Sequence]) -> None:
        self.parts = parts
        self._n = len(next(iter(parts.values()))) if parts else 0

    def __len__(self) -> int:
        return self._n

    def __getitem__(self, i):
        if isinstance(i, slice):
            return DictColumn({k: v[i] for k, v in self.parts.items()})
        return {k: v[i] for k, v in self.parts.items()}


class Table(Sequence):
    """Rows of one report list (e.g. the members of one result), as columns.

    Parameters
    ----------
    heads : per row, the leading keys and values (a dict; rows may differ,
        e.g. an optional key present on some rows only)
    columns : ``(key, values)`` pairs written after the head, in order.
        ``values`` is a float numpy array (numbers, rounded to 12
        significant digits; NaN -> null) or a sequence of JSON-ready Python
        values (str, bool, None, numbers, lists, dicts), one per row.
    head_texts : optional, the JSON text of each head without its braces
        (``json.dumps(head)[1:-1]``), to share the encoding between tables
        with the same heads.
    """

    def __init__(self, heads: list[dict], columns: list[tuple[str, np.ndarray | Sequence]],
                 head_texts: list[str] | None = None) -> None:
        n = len(heads)
        for key, values in columns:
            if len(values) != n:
                raise ValueError(f"column {key!r} has {len(values)} values for {n} rows")
        if any(not h for h in heads):
            raise ValueError("every row needs a non-empty head")
        self.heads = heads
        self.columns = columns
        self._head_texts = head_texts
        self._texts: list[list[str]] | None = None

    def __len__(self) -> int:
        return len(self.heads)

    def __repr__(self) -> str:
        return f"Table({len(self)} rows, keys {self.keys()})"

    def keys(self) -> list[str]:
        """Keys of the first row (heads may add optional keys on some rows)."""
        head = list(self.heads[0]) if self.heads else []
        return head + [k for k, _ in self.columns]

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        n = len(self)
        if i < 0:
            i += n
        if not 0 <= i < n:
            raise IndexError("row index out of range")
        row = dict(self.heads[i])
        for key, values in self.columns:
            row[key] = _python_values(values[i:i + 1])[0]
        return row

    def __iter__(self) -> Iterator[dict]:
        keys = [k for k, _ in self.columns]
        cols = [_python_values(v) for _, v in self.columns]
        for head, vals in zip(self.heads, zip(*cols) if cols else ((),) * len(self)):
            row = dict(head)
            row.update(zip(keys, vals))
            yield row

    def to_list(self) -> list[dict]:
        """Every row as a dict."""
        return list(self)

    def numbers(self, key: str) -> np.ndarray:
        """A number column as floats (NaN for none), as held (not rounded)."""
        for k, values in self.columns:
            if k == key:
                return np.asarray(values, dtype=float)
        return np.array([math.nan if h.get(key) is None else h[key] for h in self.heads], dtype=float)

    def head_texts(self) -> list[str]:
        if self._head_texts is None:
            self._head_texts = [_ENC(h)[1:-1] for h in self.heads]
        return self._head_texts

    def chunks(self, size: int = 4096) -> Iterator["Table"]:
        """The rows in consecutive blocks of at most ``size`` (tables of
        their own, sharing this table's arrays), so a writer holds the text
        of one block at a time."""
        texts = self.head_texts()
        for a in range(0, len(self), size):
            b = min(a + size, len(self))
            yield Table(self.heads[a:b], [(k, v[a:b]) for k, v in self.columns], head_texts=texts[a:b])

    def texts(self) -> list[list[str]]:
        """JSON text of every value, per column (kept: the JSON and the CSV
        of a block are written from the same texts; write a large table
        block by block, see :meth:`chunks`)."""
        if self._texts is None:
            self._texts = [_json_texts(v) for _, v in self.columns]
        return self._texts

    def json_lines(self) -> list[str]:
        """Each row as one line of JSON, as ``json.dumps(row, ensure_ascii=False)``
        writes it (numbers with 12 significant digits)."""
        tmpl = "{%s" + "".join(", " + _ENC(k).replace("%", "%%") + ": %s" for k, _ in self.columns) + "}"
        return list(map(tmpl.__mod__, zip(self.head_texts(), *self.texts())))

    def csv_cells(self, key: str) -> list:
        """One key's values as CSV cells: numbers as their JSON text, an
        empty cell for null; head values as they are (the csv module quotes
        strings as needed)."""
        for (k, values), texts in zip(self.columns, self.texts()):
            if k == key:
                if isinstance(values, np.ndarray):
                    return ["" if t == "null" else t for t in texts]
                return list(values)
        return [h.get(key) for h in self.heads]
