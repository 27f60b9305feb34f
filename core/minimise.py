"""The minimum of a function of one variable on an interval, without SciPy.

Brent's method (R. P. Brent, *Algorithms for Minimization without
Derivatives*, 1973, chapter 5, procedure *fmin*; SOURCES.md [brent]): golden
section steps, and a parabola through the three best points whenever it
moves less than half the step before last and stays inside the interval.
It is what ``scipy.optimize.minimize_scalar(method="bounded")`` runs; having
it here spares the command line SciPy's optimisation package, whose import
costs more than a whole analysis of a small capture. Agreement with SciPy is
checked in ``tests/core/test_minimise.py``.
"""

from __future__ import annotations

import math
from typing import Callable

#: (3 - sqrt(5)) / 2: the golden section of an interval.
GOLDEN = 0.5 * (3.0 - math.sqrt(5.0))
#: Relative tolerance on the abscissa: the square root of the machine epsilon.
SQRT_EPS = math.sqrt(2.2e-16)


def bounded_minimum(f: Callable[[float], float], lo: float, hi: float, xatol: float,
                    max_calls: int = 500) -> tuple[float, float]:
    """A local minimum of ``f`` on ``[lo, hi]`` to within ``xatol``.

    Parameters
    ----------
    f : callable(float) -> float
        May return ``inf`` (a point to avoid).
    lo, hi : float
        The interval, ``lo < hi``.
    xatol : float
        Absolute tolerance on the abscissa (plus ``SQRT_EPS`` relative).
    max_calls : int
        Most evaluations of ``f``.

    Returns
    -------
    (x, f(x)) : tuple of float
    """
    a, b = float(lo), float(hi)
    x = w = v = a + GOLDEN * (b - a)
    fx = fw = fv = f(x)
    calls = 1
    step = before = 0.0  # the last step, and the one before it
    while calls < max_calls:
        mid = 0.5 * (a + b)
        tol1 = SQRT_EPS * abs(x) + xatol / 3.0
        tol2 = 2.0 * tol1
        if abs(x - mid) <= tol2 - 0.5 * (b - a):
            break
        golden = True
        if abs(before) > tol1:
            # the parabola through (x, fx), (w, fw), (v, fv): its vertex is x + p / q
            r = (x - w) * (fx - fv)
            q = (x - v) * (fx - fw)
            p = (x - v) * q - (x - w) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                p = -p
            q = abs(q)
            last, before = before, step
            if abs(p) < abs(0.5 * q * last) and q * (a - x) < p < q * (b - x):
                step = p / q
                u = x + step
                if u - a < tol2 or b - u < tol2:  # too near an end: a minimal step inwards
                    step = tol1 if mid >= x else -tol1
                golden = False
        if golden:
            before = (a - x) if x >= mid else (b - x)
            step = GOLDEN * before
        u = x + (1.0 if step >= 0 else -1.0) * max(abs(step), tol1)
        fu = f(u)
        calls += 1
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
