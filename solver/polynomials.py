"""Polynomial helpers and real-root isolation, vectorised over many polynomials.

Polynomials are rows of ascending coefficients (``coef[:, k]`` multiplies
``t**k``): row-wise evaluation, derivative and product, rescaling from
``[0, h]`` to ``[0, 1]``, the Bernstein basis on ``[0, 1]``, and
:func:`real_roots_unit`, the real roots in ``[0, 1]`` of many polynomials at
once (Bernstein root isolation by halving, then safeguarded Newton).
Dimensionless: the caller's units pass through unchanged.
"""
from __future__ import annotations

from functools import lru_cache
from math import comb

import numpy as np

__all__ = ["real_roots_unit"]


def _polyval(coef: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Evaluate ascending coefficients row-wise: coef (P, d+1), t (P,)."""
    out = coef[:, -1].copy()
    for k in range(coef.shape[1] - 2, -1, -1):
        out = out * t + coef[:, k]
    return out


def _polyder(coef: np.ndarray) -> np.ndarray:
    d = coef.shape[1] - 1
    if d == 0:
        return np.zeros((coef.shape[0], 1))
    return coef[:, 1:] * np.arange(1, d + 1)


def _polymul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    out = np.zeros((a.shape[0], a.shape[1] + b.shape[1] - 1))
    for i in range(a.shape[1]):
        out[:, i:i + b.shape[1]] += a[:, i:i + 1] * b
    return out


def _to_unit(coef: np.ndarray, h: np.ndarray) -> np.ndarray:
    """Coefficients in t in [0, h] -> coefficients in s = t/h in [0, 1]."""
    return coef * h[:, None] ** np.arange(coef.shape[1])


@lru_cache(maxsize=None)
def _bernstein_matrix(n: int) -> np.ndarray:
    """B such that ascending power coefficients ``a`` (degree n) on [0, 1]
    give the Bernstein coefficients ``a @ B``."""
    B = np.zeros((n + 1, n + 1))
    for i in range(n + 1):
        for k in range(i + 1):
            B[k, i] = comb(i, k) / comb(n, k)
    return B


def _split_half(b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """de Casteljau subdivision at 1/2 of Bernstein coefficients (W, n)."""
    n = b.shape[1]
    left = np.empty_like(b)
    right = np.empty_like(b)
    cur = b
    left[:, 0], right[:, -1] = cur[:, 0], cur[:, -1]
    for j in range(1, n):
        cur = 0.5 * (cur[:, :-1] + cur[:, 1:])
        left[:, j], right[:, n - 1 - j] = cur[:, 0], cur[:, -1]
    return left, right


def _sign_changes(b: np.ndarray, tol: np.ndarray) -> np.ndarray:
    s = np.sign(b)
    s[np.abs(b) <= tol[:, None]] = 0.0
    n = b.shape[1]
    idx = np.where(s != 0, np.arange(n), 0)
    np.maximum.accumulate(idx, axis=1, out=idx)
    filled = np.take_along_axis(s, idx, axis=1)
    return np.count_nonzero(filled[:, 1:] * filled[:, :-1] < 0, axis=1)


def _deflate_end_roots(c: np.ndarray, tol_row: np.ndarray):
    """(d, found_w, found_s): deflate roots at the ends (a member end at a
    support is a common one): divide by s or by (1 - s) while the end
    value is negligible; the roots taken out are listed (row, s)."""
    n = c.shape[1]
    found_w: list[np.ndarray] = []
    found_s: list[np.ndarray] = []
    d = c.copy()
    for _ in range(n - 1):
        z0 = np.abs(d[:, 0]) <= tol_row
        z1 = np.abs(d.sum(axis=1)) <= tol_row * np.abs(d).sum(axis=1) + 1e-300
        z0 &= np.abs(d).max(axis=1) > tol_row
        z1 &= np.abs(d).max(axis=1) > tol_row
        if not (z0.any() or z1.any()):
            break
        found_w += [np.flatnonzero(z0), np.flatnonzero(z1 & ~z0)]
        found_s += [np.zeros(int(z0.sum())), np.ones(int((z1 & ~z0).sum()))]
        if z0.any():
            d[z0, :-1] = d[z0, 1:]
            d[z0, -1] = 0.0
        z1 &= ~z0
        if z1.any():  # synthetic division by (s - 1), remainder dropped
            q = np.zeros_like(d[z1])
            acc = np.zeros(int(z1.sum()))
            for k in range(n - 1, 0, -1):
                acc = acc + d[z1, k]
                q[:, k - 1] = acc
            d[z1] = q
    return d, found_w, found_s


def _isolate(d: np.ndarray, tol_row: np.ndarray, found_w: list, found_s: list):
    """Isolate the roots in [0, 1] by halving the Bernstein form: roots
    met at an interval end or left in an interval narrower than 2**-45
    are appended to ``found_w``/``found_s``; returns the clean brackets
    (rows, interval starts, widths, Bernstein value at the start)."""
    n = d.shape[1]
    B = d @ _bernstein_matrix(n - 1)
    B /= np.maximum(np.abs(B).max(axis=1), 1e-300)[:, None]
    who = np.arange(len(d))
    lo = np.zeros(len(d))
    width = 1.0
    iso_w, iso_lo, iso_w_len, iso_b0 = [], [], [], []
    for depth in range(46):
        if len(who) == 0:
            break
        tol = tol_row[who]
        z0 = np.abs(B[:, 0]) <= tol
        z1 = np.abs(B[:, -1]) <= tol
        found_w += [who[z0], who[z1]]
        found_s += [lo[z0], lo[z1] + width]
        var = _sign_changes(B, tol)
        # a clean bracket: one sign change and both end values clearly
        # non-zero (an end root is recorded above; halving moves the
        # interior root away from it)
        one = (var == 1) & ~z0 & ~z1
        if one.any():
            iso_w.append(who[one])
            iso_lo.append(lo[one])
            iso_w_len.append(np.full(int(one.sum()), width))
            iso_b0.append(B[one, 0])
        many = (var >= 1) & ~one
        if depth == 45:
            found_w.append(who[many])
            found_s.append(lo[many] + 0.5 * width)
            break
        if not many.any():
            break
        Bl, Br = _split_half(B[many])
        width *= 0.5
        who = np.concatenate([who[many], who[many]])
        lo = np.concatenate([lo[many], lo[many] + width])
        B = np.concatenate([Bl, Br])
        # a root exactly at the common midpoint is found by both halves'
        # end tests; duplicates are harmless to callers
    return iso_w, iso_lo, iso_w_len, iso_b0


def _polish(cw: np.ndarray, a: np.ndarray, b: np.ndarray, sa: np.ndarray) -> np.ndarray:
    """Safeguarded Newton iteration of polynomials ``cw`` inside their
    brackets [a, b] (``sa``: sign at a); returns the roots."""
    dw = _polyder(cw)
    # start from the secant of the bracket (false position), not its
    # middle: Newton is then usually in its quadratic range at once
    fa, fb = _polyval(cw, a), _polyval(cw, b)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = a + (b - a) * fa / (fa - fb)
    x = np.where(np.isfinite(x) & (x > a) & (x < b), x, 0.5 * (a + b))
    act = np.arange(len(cw))
    for _ in range(80):
        cx = cw[act]
        fx = _polyval(cx, x[act])
        fp = _polyval(dw[act], x[act])
        same = np.sign(fx) == sa[act]
        a[act] = np.where(same, x[act], a[act])
        b[act] = np.where(same, b[act], x[act])
        with np.errstate(divide="ignore", invalid="ignore"):
            xn = x[act] - fx / fp
        ok = np.isfinite(xn) & (xn > a[act]) & (xn < b[act])
        xnew = np.where(ok, xn, 0.5 * (a[act] + b[act]))
        # converged: a Newton step this small leaves an error of its
        # square; or f is down to the rounding noise of evaluating it
        # (Horner with |coefficients|), where further steps only wander
        noise = np.abs(fx) <= 8e-16 * _polyval(np.abs(cx), x[act])
        done = (np.abs(xnew - x[act]) <= 1e-14) | noise | (b[act] - a[act] <= 4e-16)
        x[act] = np.where(noise, x[act], xnew)
        act = act[~done]
        if len(act) == 0:
            break
    return x


def real_roots_unit(coef: np.ndarray, rows: np.ndarray | None = None,
                    ref: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Real roots in [0, 1] of many polynomials at once.

    Parameters
    ----------
    coef : (P, d+1) ascending coefficients of polynomials in s
    rows : optional (P,) labels returned with each root (default 0..P-1)
    ref : optional (P,) magnitude below which a coefficient counts as zero
        after scaling by 1e-13 (default: each polynomial's own largest
        coefficient); a polynomial entirely below it has no roots reported

    Returns
    -------
    (labels, s) : one entry per root in [0, 1].  Roots are isolated with
    the variation-diminishing property of the Bernstein form (the number
    of sign changes of the Bernstein coefficients bounds the number of
    roots on the interval and has its parity; intervals with one change
    hold exactly one root) by repeated halving, then located by
    safeguarded Newton iteration inside their bracket.  A multiple root is
    reported at the centre of an interval narrower than 2**-44.
    """
    coef = np.asarray(coef, dtype=float)
    P, n = coef.shape
    rows = np.arange(P) if rows is None else np.asarray(rows)
    if P == 0:
        return rows[:0], np.zeros(0)
    own = np.abs(coef).max(axis=1)
    scale = own if ref is None else np.maximum(np.asarray(ref, dtype=float), 0.0)
    live = np.flatnonzero((own > 1e-13 * scale) & (own > 0))
    if n == 1 or len(live) == 0:
        return rows[:0], np.zeros(0)
    c = coef[live] / own[live, None]
    tol_row = np.full(len(live), 1e-14) * np.maximum(scale[live] / own[live], 1.0)
    d, found_w, found_s = _deflate_end_roots(c, tol_row)
    iso_w, iso_lo, iso_w_len, iso_b0 = _isolate(d, tol_row, found_w, found_s)
    if iso_w:
        w = np.concatenate(iso_w)
        a = np.concatenate(iso_lo)
        b = a + np.concatenate(iso_w_len)
        sa = np.sign(np.concatenate(iso_b0))
        found_w.append(w)
        found_s.append(_polish(d[w], a, b, sa))
    wa = np.concatenate(found_w) if found_w else np.zeros(0, np.intp)
    sa_ = np.concatenate(found_s) if found_s else np.zeros(0)
    return rows[live[wa]], np.clip(sa_, 0.0, 1.0)
