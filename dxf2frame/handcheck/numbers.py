"""Numbers on the hand-check sheets: :func:`fmt` (four significant figures,
fixed-point where readable) and the default units of a sheet (N, m) when no
:class:`~dxf2frame.report.UnitFactors` are given."""
from __future__ import annotations

import math

from ..report.report import UnitFactors

__all__ = ["fmt"]

SI_UNITS = UnitFactors("N", "m", 1.0, 1.0)


# -- number formatting -----------------------------------------------------------


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
