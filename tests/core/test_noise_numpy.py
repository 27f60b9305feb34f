"""The numpy Savitzky-Golay smoother, moving mean and robust scale of ``core/noise.py``
against SciPy's.

References: ``scipy.signal.savgol_coeffs`` / ``savgol_filter(mode="interp")``,
``scipy.ndimage.uniform_filter1d(mode="nearest")`` and
``scipy.stats.median_abs_deviation(scale="normal")`` (SOURCES.md [reference-libraries],
[savgol], [robust]). Both sides are double-precision evaluations of the same formulas:
agreement to 1e-12 of the data's scale (measured: 3e-14 or better).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import ndimage, signal, stats

from trueslope.core.noise import moving_mean, robust_sigma, savgol_coeffs, savgol_filter

CASES = [(50, 7), (2000, 101), (301, 301), (1000, 9), (999, 49)]


@pytest.mark.parametrize("n, window", CASES)
def test_savgol_matches_scipy(n, window):
    rng = np.random.default_rng(n + window)
    y = rng.normal(size=n) + np.linspace(0, 5, n) ** 2
    scale = float(np.max(np.abs(y)))
    np.testing.assert_allclose(savgol_filter(y, window, 3),
                               signal.savgol_filter(y, window, 3, mode="interp"),
                               rtol=0, atol=1e-12 * scale)
    rows = rng.normal(size=(8, n))
    np.testing.assert_allclose(savgol_filter(rows, window, 3, axis=1),
                               signal.savgol_filter(rows, window, 3, axis=1, mode="interp"),
                               rtol=0, atol=1e-12)
    np.testing.assert_allclose(savgol_filter(rows.T, window, 3, axis=0),
                               signal.savgol_filter(rows.T, window, 3, axis=0, mode="interp"),
                               rtol=0, atol=1e-12)
    np.testing.assert_allclose(savgol_coeffs(window, 3), signal.savgol_coeffs(window, 3),
                               rtol=0, atol=1e-14)


@pytest.mark.parametrize("n, size", [(10, 3), (10, 4), (100, 1), (100, 100), (1000, 51),
                                     (1000, 50), (7, 7)])
def test_moving_mean_matches_uniform_filter1d(n, size):
    x = np.random.default_rng(n * size).gamma(2.0, size=n) * 1e-6
    np.testing.assert_allclose(moving_mean(x, size),
                               ndimage.uniform_filter1d(x, size, mode="nearest"), rtol=1e-12)


def test_robust_sigma_matches_scipy():
    x = np.random.default_rng(3).standard_t(3, size=100_001)
    assert robust_sigma(x) == pytest.approx(stats.median_abs_deviation(x, scale="normal"),
                                            rel=1e-15)
    assert robust_sigma(np.zeros(0)) == 0.0


@pytest.mark.parametrize("n", [1, 2, 7, 10_000, 100_001])
def test_robust_sigma_of_quantised_samples_matches_scipy(n):
    """Quantised samples (many equal values), odd and even counts, the working-space
    form too: the same value as scipy's, which takes numpy's median twice."""
    rng = np.random.default_rng(n)
    x = np.round(rng.normal(0.0, 2e-3, n) / 20e-3) * 20e-3 + rng.integers(0, 3, n) * 20e-3
    want = stats.median_abs_deviation(x, scale="normal")
    assert robust_sigma(x) == pytest.approx(want, rel=1e-15, abs=0)
    mine = x.copy()
    assert robust_sigma(mine, overwrite=True) == pytest.approx(want, rel=1e-15, abs=0)
    assert np.isnan(robust_sigma(np.array([1.0, np.nan, 2.0])))  # as numpy's median says
