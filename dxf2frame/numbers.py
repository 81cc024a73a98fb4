"""Numbers written for people: the one family of formatters.

Each place that writes a number for a reader uses one of these, so a
change of style is made here once:

* :func:`fmt`: four significant figures, fixed point where readable
  (hand-check sheets and their figures);
* :func:`label_value`: the values drawn on the result layers;
* :func:`cell_value`: the cells of the revision comparison tables and the
  marked drawing's change schedule;
* :func:`summary_value`: the governing values in the batch summary.

The machine-read outputs (JSON, CSV) are not formatted here: they carry
full precision (:mod:`dxf2frame.report.table`).
"""
from __future__ import annotations

import math

__all__ = ["fmt", "label_value", "cell_value", "summary_value"]


def fmt(value: float, zero: float = 0.0, *, sign: bool = False) -> str:
    """``value`` with four significant figures, fixed-point where readable.

    ``zero``: magnitudes at or below it print as ``0`` (round-off noise).
    ``sign``: always print the sign (``+12.00``).

    >>> fmt(12345.678), fmt(-0.0123456), fmt(1e-13, 1e-9), fmt(3.0, sign=True), fmt(-9.99999)
    ('12350', '-0.01235', '0', '+3.000', '-10.00')
    """
    v = float(value)
    if v == 0.0 or abs(v) <= zero or not math.isfinite(v):
        return "0" if math.isfinite(v) else str(v)
    v = float(f"{v:.3e}")  # round to 4 significant figures first (9.99996 -> 10.00)
    e = math.floor(math.log10(abs(v)))
    if -4 <= e < 7:
        s = f"{v:.{max(0, 3 - e)}f}"
    else:
        s = f"{v:.3e}"
    if sign and not s.startswith("-"):
        s = "+" + s
    return s


def label_value(v: float) -> str:
    """A value as drawn on the result layers: four significant figures, no
    exponent between 1e-3 and 1e6, non-finite values as ``0``.

    >>> label_value(45.0), label_value(-0.01234), label_value(2.5e6)
    ('45.00', '-0.01234', '2.500e+06')
    """
    if not math.isfinite(v) or v == 0.0:
        return "0"
    a = abs(v)
    if a >= 1e6 or a < 1e-3:
        return f"{v:.3e}"
    digits = max(0, 3 - math.floor(math.log10(a)))
    s = f"{v:.{digits}f}"
    return "0" if float(s) == 0.0 else s


def cell_value(v: float | None) -> str:
    """A value in a comparison table: ``-`` for none, whole units from 1000
    up, else four significant figures.

    >>> cell_value(None), cell_value(12345.6), cell_value(0.012345)
    ('-', '12346', '0.01235')
    """
    if v is None:
        return "-"
    if v == 0:
        return "0"
    if abs(v) >= 1000:
        return f"{v:.0f}"
    return f"{v:.4g}"


def summary_value(v: float | None, digits: int = 4) -> str:
    """A governing value in the batch summary: ``-`` for none, else
    ``digits`` significant figures (``%g``).

    >>> summary_value(None), summary_value(78.9012), summary_value(123456.0)
    ('-', '78.9', '1.235e+05')
    """
    return "-" if v is None else f"{v:.{digits}g}"
