"""Brent's bounded minimum of ``core/minimise.py`` against SciPy.

Reference: ``scipy.optimize.minimize_scalar(method="bounded")``
(SOURCES.md [reference-libraries]), which runs the same published algorithm
(SOURCES.md [brent]); on these functions the two return the same abscissa to
the last bit (measured, scipy 1.17.1), so the check allows only rounding.
"""

from __future__ import annotations

import math
import warnings

import pytest
from scipy import optimize

from trueslope.core.minimise import bounded_minimum

FUNCTIONS = {
    "parabola": lambda s: (s - 0.3) ** 2,
    "cosine": lambda s: math.cos(3 * s) + 0.1 * s,
    "inf below 0.1": lambda s: math.inf if s < 0.1 else (s - 0.2) ** 4,
    "kink": lambda s: abs(s - 0.77),
    "exp": lambda s: math.exp(s) - 2 * s,
}
INTERVALS = [(-1.0, 1.0), (0.0, 2.0), (0.05, 0.95), (-3.0, 0.5)]


@pytest.mark.parametrize("name", list(FUNCTIONS))
@pytest.mark.parametrize("lo, hi", INTERVALS)
def test_matches_scipy_minimize_scalar_bounded(name, lo, hi):
    f = FUNCTIONS[name]
    xatol = 1e-5 * (hi - lo)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # scipy's parabola through inf
        ref = optimize.minimize_scalar(f, bounds=(lo, hi), method="bounded",
                                       options={"xatol": xatol})
    x, fx = bounded_minimum(f, lo, hi, xatol)
    assert x == pytest.approx(ref.x, rel=1e-12, abs=1e-12)
    assert fx == pytest.approx(ref.fun, rel=1e-12, abs=1e-15)
    assert lo <= x <= hi
