"""Scalar root finding and bounded minimisation: Brent's methods, without scipy.

helix finds constraint boundaries (the radius where a margin reaches zero) and the
worst position of a vehicle with these two routines.  scipy offers the same
(``scipy.optimize.brentq`` and ``minimize_scalar(method="bounded")``) and the tests
check these against it; they live here because importing ``scipy.optimize`` costs
about a second on a small machine, several times the whole search.

References
----------
R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall, 1973:
chapter 4 (zero finding, "zero") and chapter 5 (one-dimensional minimisation,
"localmin").
"""
from __future__ import annotations

import math
from typing import Callable

import numpy as np

__all__ = ["brent_root", "brent_minimum", "brent_minimum_many", "RootError"]

_EPS = 2.220446049250313e-16


class RootError(ValueError):
    """The interval does not bracket a root."""


def brent_root(f: Callable[[float], float], a: float, b: float, xtol: float = 1e-12,
               rtol: float = 4 * _EPS, maxiter: int = 200) -> float:
    """A root of ``f`` in ``[a, b]`` where ``f(a)`` and ``f(b)`` differ in sign.

    Brent's "zero": bisection safeguarded inverse quadratic interpolation and secant
    steps; converges to within ``xtol + rtol * |x|``.
    """
    fa, fb = f(a), f(b)
    if fa == 0:
        return a
    if fb == 0:
        return b
    if (fa > 0) == (fb > 0):
        raise RootError(f"f({a}) and f({b}) have the same sign")
    c, fc = a, fa
    d = e = b - a
    for _ in range(maxiter):
        if (fb > 0) == (fc > 0):
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 2 * rtol * abs(b) + 0.5 * xtol
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0:
            return b
        if abs(e) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:  # secant
                p, q = 2 * m * s, 1 - s
            else:  # inverse quadratic interpolation
                q, r = fa / fc, fb / fc
                p = s * (2 * m * q * (q - r) - (b - a) * (r - 1))
                q = (q - 1) * (r - 1) * (s - 1)
            if p > 0:
                q = -q
            else:
                p = -p
            if 2 * p < min(3 * m * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q
            else:
                d = e = m
        else:
            d = e = m
        a, fa = b, fb
        b += d if abs(d) > tol else math.copysign(tol, m)
        fb = f(b)
    return b


def brent_minimum(f: Callable[[float], float], a: float, b: float, xtol: float = 1e-6,
                  maxiter: int = 200) -> tuple[float, float]:
    """``(x, f(x))`` at a local minimum of ``f`` on ``[a, b]``: Brent's "localmin",
    golden-section search with parabolic interpolation."""
    golden = 0.5 * (3 - math.sqrt(5))
    x = w = v = a + golden * (b - a)
    fx = fw = fv = f(x)
    d = e = 0.0
    for _ in range(maxiter):
        mid = 0.5 * (a + b)
        tol1 = math.sqrt(_EPS) * abs(x) + xtol / 3
        tol2 = 2 * tol1
        if abs(x - mid) <= tol2 - 0.5 * (b - a):
            break
        use_golden = True
        if abs(e) > tol1:
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            p = (x - v) * q - (x - w) * r
            q = 2 * (q - r)
            if q > 0:
                p = -p
            q = abs(q)
            if abs(p) < abs(0.5 * q * e) and q * (a - x) < p < q * (b - x):
                e, d = d, p / q
                u = x + d
                if u - a < tol2 or b - u < tol2:
                    d = math.copysign(tol1, mid - x)
                use_golden = False
        if use_golden:
            e = (a if x >= mid else b) - x
            d = golden * e
        u = x + (d if abs(d) >= tol1 else math.copysign(tol1, d))
        fu = f(u)
        if fu <= fx:
            if u >= x:
                a = x
            else:
                b = x
            v, fv, w, fw, x, fx = w, fw, x, fx, u, fu
        else:
            if u < x:
                a = u
            else:
                b = u
            if fu <= fw or w == x:
                v, fv, w, fw = w, fw, u, fu
            elif fu <= fv or v == x or v == w:
                v, fv = u, fu
    return x, fx


def brent_minimum_many(f: Callable, a, b, xtol: float = 1e-6,
                       maxiter: int = 200) -> tuple[np.ndarray, np.ndarray]:
    """:func:`brent_minimum` on many independent intervals ``[a_i, b_i]`` in lockstep:
    ``f`` takes the indices of the intervals still searching and one abscissa for each,
    and returns their values.  Every interval follows exactly the steps the scalar
    routine takes on it (the same arithmetic, element by element), so the results are
    the scalar ones; only the calls of ``f`` are shared."""
    a = np.array(a, float, copy=True, ndmin=1)
    b = np.array(b, float, copy=True, ndmin=1)
    golden = 0.5 * (3 - math.sqrt(5))
    x = a + golden * (b - a)
    w, v = x.copy(), x.copy()
    idx = np.arange(len(a))
    fx = np.asarray(f(idx, x), float).copy()
    fw, fv = fx.copy(), fx.copy()
    d = np.zeros(len(a))
    e = np.zeros(len(a))
    active = np.ones(len(a), bool)
    sq = math.sqrt(_EPS)
    for _ in range(maxiter):
        mid = 0.5 * (a + b)
        tol1 = sq * np.abs(x) + xtol / 3
        tol2 = 2 * tol1
        active &= ~(np.abs(x - mid) <= tol2 - 0.5 * (b - a))
        if not np.any(active):
            break
        with np.errstate(invalid="ignore", divide="ignore"):
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            p = (x - v) * q - (x - w) * r
            q = 2 * (q - r)
            p = np.where(q > 0, -p, p)
            q = np.abs(q)
            para = ((np.abs(e) > tol1) & (np.abs(p) < np.abs(0.5 * q * e))
                    & (q * (a - x) < p) & (p < q * (b - x)))
            d_para = p / q
        u_para = x + d_para
        d_para = np.where((u_para - a < tol2) | (b - u_para < tol2), np.copysign(tol1, mid - x), d_para)
        e_gold = np.where(x >= mid, a, b) - x
        e_new = np.where(para, d, e_gold)
        d_new = np.where(para, d_para, golden * e_gold)
        e = np.where(active, e_new, e)
        d = np.where(active, d_new, d)
        u = x + np.where(np.abs(d) >= tol1, d, np.copysign(tol1, d))
        live = np.flatnonzero(active)
        fu = fx.copy()
        fu[live] = f(live, u[live])
        better = active & (fu <= fx)
        worse = active & ~(fu <= fx)
        a = np.where(better & (u >= x), x, np.where(worse & (u < x), u, a))
        b = np.where(better & ~(u >= x), x, np.where(worse & ~(u < x), u, b))
        to_w = worse & ((fu <= fw) | (w == x))
        to_v = worse & ~to_w & ((fu <= fv) | (v == x) | (v == w))
        v_new = np.where(better | to_w, w, np.where(to_v, u, v))
        fv_new = np.where(better | to_w, fw, np.where(to_v, fu, fv))
        w_new = np.where(better, x, np.where(to_w, u, w))
        fw_new = np.where(better, fx, np.where(to_w, fu, fw))
        x = np.where(better, u, x)
        fx = np.where(better, fu, fx)
        v, fv, w, fw = v_new, fv_new, w_new, fw_new
    return x, fx
