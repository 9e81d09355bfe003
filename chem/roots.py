"""A bracketed scalar root finder (Brent's method), so the core needs no scipy.optimize at import.

Brent (1973), *Algorithms for Minimization without Derivatives*, ch. 4
("zero"): inverse quadratic interpolation or the secant step when they stay
inside the bracket and shrink it fast enough, bisection otherwise.  It cannot
leave the bracket and converges at least as fast as bisection.
"""

from __future__ import annotations

import math
from typing import Callable

_EPS = 2.220446049250313e-16


class RootError(ValueError):
    """The function has the same sign at both ends of the bracket."""


def brent(f: Callable[[float], float], a: float, b: float, *, xtol: float = 1e-12, rtol: float = 4 * _EPS,
          maxiter: int = 200) -> float:
    """A root of ``f`` in [a, b], where f(a) and f(b) differ in sign (or one is 0)."""
    fa, fb = f(a), f(b)
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0) == (fb > 0):
        raise RootError(f"f has the same sign at both ends of [{a:g}, {b:g}]")
    c, fc = a, fa
    d = e = b - a
    for _ in range(maxiter):
        if (fb > 0) == (fc > 0):
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 2.0 * rtol * abs(b) + 0.5 * xtol
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0.0:
            return b
        if abs(e) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:                       # secant step
                p = 2.0 * m * s
                q = 1.0 - s
            else:                            # inverse quadratic interpolation
                q = fa / fc
                r = fb / fc
                p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0:
                q = -q
            else:
                p = -p
            if 2.0 * p < min(3.0 * m * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q
            else:
                d = e = m                    # bisection
        else:
            d = e = m
        a, fa = b, fb
        b += d if abs(d) > tol else math.copysign(tol, m)
        fb = f(b)
    return b
