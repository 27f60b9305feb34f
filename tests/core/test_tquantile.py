"""Student's t quantile of ``core/tquantile.py`` against SciPy.

Reference: ``scipy.stats.t.ppf(0.975, dof)`` (SOURCES.md [reference-libraries]);
the method is SOURCES.md [abramowitz-stegun]. Both are double-precision
evaluations of the same function, so they agree to rounding: 1e-12 relative
(measured worst, numpy 2.4.6 and scipy 1.17.1: 9e-14 between 100 and 1000
degrees of freedom, where the Newton steps stop).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from trueslope.core.tquantile import t_quantile_975

DOFS = [1, 1.01, 1.5, 2, 2.5, 3, 4, 5, 7, 10, 13.7, 20, 30, 50, 97, 100, 333, 999, 1000,
        1001, 4321, 1e5, 1e7, 1e12]


@pytest.mark.parametrize("dof", DOFS)
def test_matches_scipy_t_ppf(dof):
    assert t_quantile_975(dof) == pytest.approx(stats.t.ppf(0.975, dof), rel=1e-12)


def test_every_whole_dof_up_to_1200_and_arrays_keep_their_shape():
    d = np.arange(1, 1201, dtype=float).reshape(40, 30)
    q = t_quantile_975(d)
    assert q.shape == d.shape
    np.testing.assert_allclose(q, stats.t.ppf(0.975, d), rtol=1e-12)


def test_closed_forms_and_refusals():
    # one degree of freedom is the Cauchy distribution: tan(pi (p - 1/2)) (A&S 26.7.1)
    assert t_quantile_975(1) == pytest.approx(math.tan(math.pi * 0.475), rel=1e-15)
    assert math.isnan(t_quantile_975(0)) and math.isnan(t_quantile_975(-3))
