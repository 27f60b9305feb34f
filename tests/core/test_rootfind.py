"""Brent's root finder (core.rootfind) against scipy.optimize.brentq, the reference library."""

from __future__ import annotations

import math

import pytest
from scipy import optimize

from trueslope.core.rootfind import brentq

CASES = [
    (lambda x: x * x - 2.0, 0.0, 2.0),                      # sqrt(2)
    (lambda x: math.cos(x) - x, 0.0, 1.0),                   # the Dottie number
    (lambda x: math.exp(x) - 1e6, 0.0, 20.0),                # steep
    (lambda x: (x - 0.3) ** 3, -1.0, 1.0),                   # a triple root
    (lambda x: math.log(x) + 5.0, 1e-9, 1.0),                # wide range
    (lambda x: x - 1e-10, 0.0, 1.0),                         # near the bracket's end
]


@pytest.mark.parametrize("f,a,b", CASES)
def test_agrees_with_scipy(f, a, b):
    want = optimize.brentq(f, a, b, xtol=1e-14, rtol=1e-14, maxiter=1000)
    got = brentq(f, a, b, xtol=1e-14, rtol=1e-14)
    assert got == pytest.approx(want, abs=1e-12, rel=1e-12)


def test_refuses_a_bracket_without_a_sign_change():
    with pytest.raises(ValueError, match="opposite signs"):
        brentq(lambda x: x * x + 1.0, -1.0, 1.0)


def test_an_end_that_is_a_root_is_returned():
    assert brentq(lambda x: x - 2.0, 2.0, 3.0) == 2.0
