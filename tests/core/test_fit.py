"""The line fit and its confidence interval against reference libraries.

References: numpy.polyfit, scipy.stats.linregress and statsmodels OLS.
"""

import numpy as np
import pytest
from scipy import stats

from trueslope.core.errors import AnalysisError
from trueslope.core.fit import fit_line


@pytest.fixture
def noisy_line():
    rng = np.random.default_rng(7)
    t = np.linspace(0.0, 1e-3, 501)
    v = 0.3 + 4.2e3 * t + rng.normal(0.0, 2e-3, t.size)
    return t, v


def test_slope_and_intercept_match_numpy_polyfit(noisy_line):
    t, v = noisy_line
    fit = fit_line(t, v)
    b, a = np.polyfit(t, v, 1)  # reference: numpy.polyfit
    assert fit.slope_v_per_s == pytest.approx(b, rel=1e-12)
    assert fit.intercept_v == pytest.approx(a, rel=1e-10, abs=1e-12)


def test_standard_error_matches_scipy_linregress(noisy_line):
    t, v = noisy_line
    fit = fit_line(t, v)
    ref = stats.linregress(t, v)  # reference: scipy.stats.linregress
    assert fit.slope_v_per_s == pytest.approx(ref.slope, rel=1e-12)
    assert fit.slope_stderr_v_per_s == pytest.approx(ref.stderr, rel=1e-9)
    assert fit.intercept_stderr_v == pytest.approx(ref.intercept_stderr, rel=1e-9)


def test_confidence_interval_matches_statsmodels_ols(noisy_line):
    # statsmodels is a declared test dependency (pyproject.toml [test]): imported, not skipped
    import statsmodels.api as sm
    t, v = noisy_line
    fit = fit_line(t, v)
    res = sm.OLS(v, sm.add_constant(t)).fit()  # reference: statsmodels OLS
    lo, hi = res.conf_int(alpha=0.05)[1]
    assert fit.slope_ci95_v_per_s[0] == pytest.approx(lo, rel=1e-9)
    assert fit.slope_ci95_v_per_s[1] == pytest.approx(hi, rel=1e-9)


def test_frequency_weights_equal_repeated_points():
    # weights as sample counts: same line as repeating each point (numpy.polyfit on the repeats)
    t = np.array([0.0, 1.0, 2.0, 3.0, 4.0])
    v = np.array([0.1, 1.1, 1.9, 3.2, 3.9])
    w = np.array([1, 3, 2, 1, 4])
    fit = fit_line(t, v, weights=w)
    b, a = np.polyfit(np.repeat(t, w), np.repeat(v, w), 1)
    assert fit.slope_v_per_s == pytest.approx(b, rel=1e-12)
    assert fit.intercept_v == pytest.approx(a, rel=1e-12)


def test_too_few_points_is_a_typed_error():
    with pytest.raises(AnalysisError, match="at least 3 points"):
        fit_line(np.array([0.0, 1.0]), np.array([0.0, 1.0]))
    with pytest.raises(ValueError):  # the family also subclasses ValueError
        fit_line(np.zeros(5), np.arange(5.0))
