"""The noise model: how much of a residual is noise, and what a capture can resolve.

One model serves the whole pipeline (the averaged cycle's floor in
``linearity`` and the model comparison's weights in ``diagnose``):

* the noise of one sample is estimated robustly, as the normal-consistent
  median absolute deviation (``scipy.stats.median_abs_deviation`` with
  ``scale="normal"``, i.e. 1.4826 x MAD; SOURCES.md [robust]) of first
  differences, divided by sqrt(2);
* the systematic part of a residual is its Savitzky-Golay smoothing (cubic,
  about 1/20 of the window; SOURCES.md [savgol]);
* what the smoothing leaves, ``y - S y``, is compared with the standard
  errors the cycle-to-cycle spread gives. For white noise of variance
  ``s^2`` the high-pass residual at a point has variance
  ``s^2 (1 - 2 c_0 + sum_j c_j^2) = s^2 (1 - sum_j c_j^2)``, because a
  least-squares smoother is a projection (its centre weight ``c_0`` equals
  the sum of its squared weights). So ``E[(hp / se)^2] = 1 - sum c^2`` and the
  *excess scatter ratio* is
  ``sqrt(median((hp / se)^2) / m_1 / (1 - sum c^2))``, with ``m_1`` the
  median of a chi-square variable with one degree of freedom (0.4549; the
  median, not the mean, so a glitch cannot inflate it). A ratio above 1 means
  structure repeated in every cycle (quantisation locked to the sample clock)
  that the spread does not show; the errors are widened by it;
* noise correlated from bin to bin averages down more slowly than independent
  noise; :func:`correlation_inflation` measures the variance inflation by
  batch means (SOURCES.md [batch-means]).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import signal, stats

#: Savitzky-Golay polynomial order for the systematic residual.
SMOOTH_ORDER = 3
#: Median of a chi-square variable with one degree of freedom (scipy.stats.chi2(1).median()).
CHI2_1_MEDIAN = 0.454936423119572


def robust_sigma(values: np.ndarray) -> float:
    """Normal-consistent robust standard deviation: 1.4826 x the median absolute deviation."""
    return float(stats.median_abs_deviation(values, scale="normal")) if values.size else 0.0


def estimate_noise_rms(x: np.ndarray) -> float:
    """Sample-to-sample noise, volts RMS: ``robust_sigma(diff(x)) / sqrt(2)``.

    The ramp's own slope and the rare reset edges barely move a median. On
    long records 40 evenly spread stretches of 50 000 samples stand for the
    whole (a tenth of the work).
    """
    if x.size > 2_000_000:
        starts = np.linspace(0, x.size - 50_001, 40).astype(np.int64)
        d = np.concatenate([np.diff(x[s:s + 50_000]) for s in starts])
    else:
        d = np.diff(x)
    return robust_sigma(d) / math.sqrt(2.0)


def adc_step(v: np.ndarray) -> float | None:
    """Quantisation step of the samples, volts, or None when they are not on a grid.

    The step is the smallest spacing between distinct sample values (its 5th
    percentile, so a stray value cannot set it), accepted when nearly all
    spacings are whole multiples of it.
    """
    sub = v[:: max(1, v.size // 1_000_000)]
    u = np.unique(sub)
    if u.size < 3 or u.size > 0.5 * sub.size:
        return None
    d = np.diff(u)
    step = float(np.percentile(d, 5))
    if step <= 0:
        return None
    ratio = d / step
    near = np.abs(ratio - np.round(ratio)) < 0.05
    return step if np.mean(near) > 0.95 else None


def _odd(n: int) -> int:
    return n if n % 2 else n + 1


def smoothing_window(n_points: int) -> int:
    """Savitzky-Golay window (points) for a residual of ``n_points``: about 1/20 of it."""
    w = _odd(max(SMOOTH_ORDER + 4, n_points // 20))
    return min(w, _odd(max(SMOOTH_ORDER + 2, n_points)) - (0 if n_points % 2 else 2))


def smoother_kept_fraction(window: int) -> float:
    """``1 - sum(c^2)``: the fraction of white-noise variance the smoother leaves."""
    return max(1.0 - float(np.sum(signal.savgol_coeffs(window, SMOOTH_ORDER) ** 2)), 1e-6)


def smoother_gain(window: int) -> float:
    """``sqrt(sum(c^2))``: noise on one smoothed point per unit noise of a raw point."""
    return float(np.sqrt(np.sum(signal.savgol_coeffs(window, SMOOTH_ORDER) ** 2)))


def excess_scatter(high_pass: np.ndarray, se: np.ndarray, window: int) -> float:
    """How much more a residual scatters about its smoothing than its errors say.

    Parameters
    ----------
    high_pass : ndarray
        ``y - S y``, the residual minus its Savitzky-Golay smoothing of ``window`` points.
    se : ndarray
        Standard error of each point.

    Returns
    -------
    float
        ``sqrt(median((hp / se)^2) / CHI2_1_MEDIAN / (1 - sum c^2))``: 1 for
        white noise of the stated size (derivation in the module docstring).
    """
    z2 = (high_pass / se) ** 2
    return float(np.sqrt(np.median(z2) / CHI2_1_MEDIAN / smoother_kept_fraction(window)))


def correlation_inflation(z: np.ndarray) -> float:
    """Variance inflation of correlated noise, by batch means.

    Parameters
    ----------
    z : ndarray
        Residuals normalised by their standard errors (unit variance if independent).

    Returns
    -------
    float
        The largest ``m median(block_mean^2) / CHI2_1_MEDIAN`` over blocks of
        m = 2, 4, 8... points (up to 1/32 of the series), at least 1; for
        independent noise each is 1. The median keeps a real feature that a
        few blocks hold (a glitch) from passing for noise.
    """
    n = z.size
    best = 1.0
    m = 2
    while m <= n // 32:
        k = n // m
        blocks = z[: k * m].reshape(k, m).mean(axis=1)
        best = max(best, m * float(np.median(blocks * blocks)) / CHI2_1_MEDIAN)
        m *= 2
    return best
