"""A root of a function of one variable in a bracket, without SciPy.

Brent's method (R. P. Brent, *Algorithms for Minimization without Derivatives*, 1973,
chapter 4, procedure *zero*; SOURCES.md [brent]): inverse quadratic interpolation or the
secant step where it stays inside the bracket and shrinks it fast enough, bisection
otherwise, so the bracket always closes. It is what ``scipy.optimize.brentq`` runs; having
it here spares the command line SciPy's optimisation package, whose import costs more than
the analysis of a small capture. Agreement with SciPy is checked in
``tests/core/test_rootfind.py``.
"""

from __future__ import annotations

import math
from typing import Callable

#: Machine epsilon of a float64.
EPS = 2.220446049250313e-16


def brentq(f: Callable[[float], float], a: float, b: float, xtol: float = 2e-12,
           rtol: float = 4 * EPS, max_calls: int = 200) -> float:
    """The root of ``f`` in ``[a, b]``, to ``xtol + rtol |x|``.

    Raises
    ------
    ValueError
        ``f(a)`` and ``f(b)`` have the same sign, or the root was not reached in
        ``max_calls`` evaluations.
    """
    fa, fb = f(a), f(b)
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    if (fa > 0) == (fb > 0):
        raise ValueError("f(a) and f(b) must have opposite signs")
    c, fc = a, fa
    d = e = b - a
    for _ in range(max_calls):
        if (fb > 0) == (fc > 0):  # keep the root between b and c
            c, fc = a, fa
            d = e = b - a
        if abs(fc) < abs(fb):  # b is the best estimate
            a, b, c = b, c, b
            fa, fb, fc = fb, fc, fb
        tol = 2.0 * EPS * abs(b) + 0.5 * (xtol + rtol * abs(b))
        m = 0.5 * (c - b)
        if abs(m) <= tol or fb == 0.0:
            return b
        if abs(e) >= tol and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:  # secant
                p, q = 2.0 * m * s, 1.0 - s
            else:  # inverse quadratic interpolation
                q, r = fa / fc, fb / fc
                p = s * (2.0 * m * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0:
                q = -q
            else:
                p = -p
            if 2.0 * p < min(3.0 * m * q - abs(tol * q), abs(e * q)):
                e, d = d, p / q
            else:
                d = e = m
        else:
            d = e = m
        a, fa = b, fb
        b += d if abs(d) > tol else math.copysign(tol, m)
        fb = f(b)
    raise ValueError(f"no root to the tolerance after {max_calls} evaluations")
