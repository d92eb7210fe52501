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

__all__ = ["brent_root", "brent_minimum", "RootError"]

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
