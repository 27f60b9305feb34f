"""The noise model: how much of a residual is noise, and what a capture can resolve.

One model serves the whole pipeline (the averaged cycle's floor in
``linearity`` and the model comparison's weights in ``diagnose``):

* the noise of one sample is estimated robustly, as the normal-consistent
  median absolute deviation (MAD / Phi^-1(3/4), i.e. 1.4826 x MAD, what
  ``scipy.stats.median_abs_deviation`` gives with ``scale="normal"``;
  SOURCES.md [robust]) of first differences, divided by sqrt(2);
* the systematic part of a residual is its Savitzky-Golay smoothing (cubic,
  about 1/20 of the window; SOURCES.md [savgol]), computed here with numpy
  (:func:`savgol_coeffs`, :func:`savgol_filter`: importing SciPy's signal
  package would cost more than a whole analysis of a small capture);
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

#: Savitzky-Golay polynomial order for the systematic residual.
SMOOTH_ORDER = 3
#: Phi^-1(3/4): the median absolute deviation of a normal variable in standard deviations.
MAD_PER_SIGMA = 0.6744897501960817
#: Median of a chi-square variable with one degree of freedom (scipy.stats.chi2(1).median()).
CHI2_1_MEDIAN = 0.454936423119572


def _median_in_place(v: np.ndarray) -> float:
    """``numpy.median`` of a float array of the caller's own, which it sorts.

    The same value as ``numpy.median`` (the middle of the sorted values, or the mean
    of the two middle ones). numpy's sort is vectorised; its partition at the middle,
    which ``numpy.median`` uses, is several times slower on quantised samples, whose
    differences are mostly equal (measured on the project machine, 2 M values: sort
    2-5 ms, ``numpy.median`` 8-25 ms, a partition at the middle alone up to 57 ms)."""
    n = v.size
    v.sort()
    if np.isnan(v[-1]):
        return float("nan")  # sorted last, as numpy's median says
    k = n // 2
    if n % 2:
        return float(v[k])
    return float((v[k - 1] + v[k]) / 2)


def robust_sigma(values: np.ndarray, overwrite: bool = False) -> float:
    """Normal-consistent robust standard deviation: 1.4826 x the median absolute deviation.

    With ``overwrite`` the values (a float64 array of the caller's own) are the working
    space (reordered and overwritten) instead of a copy."""
    if not values.size:
        return 0.0
    work = values if overwrite else np.array(values, dtype=float)
    med = _median_in_place(work)
    np.subtract(work, med, out=work)
    np.abs(work, out=work)
    return _median_in_place(work) / MAD_PER_SIGMA


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
    return robust_sigma(np.asarray(d, dtype=float), overwrite=True) / math.sqrt(2.0)


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


def savgol_coeffs(window: int, order: int) -> np.ndarray:
    """Weights of the Savitzky-Golay smoother: the value at the centre of a window of
    ``window`` points (odd) of the least-squares polynomial of degree ``order``.

    The minimum-norm solution ``c`` of ``A c = e_0``, ``A[i, j] = x_j^i`` for the
    offsets ``x_j = j - window // 2``: ``c . y`` is then the fitted polynomial's
    constant term (SOURCES.md [savgol]). Symmetric, so correlation and convolution
    with it are the same.
    """
    x = np.arange(window, dtype=float) - window // 2
    a = x[None, :] ** np.arange(order + 1)[:, None]
    e0 = np.zeros(order + 1)
    e0[0] = 1.0
    return np.linalg.lstsq(a, e0, rcond=None)[0]


def savgol_filter(y: np.ndarray, window: int, order: int, axis: int = -1) -> np.ndarray:
    """Savitzky-Golay smoothing of ``y`` along ``axis`` (window odd, at most its length).

    Inside, each point is the centre value of the polynomial fitted to the ``window``
    points around it; within half a window of either end, the values of the one
    polynomial fitted to the first (last) ``window`` points (what
    ``scipy.signal.savgol_filter`` calls ``mode="interp"``).
    """
    y = np.ascontiguousarray(np.moveaxis(np.asarray(y, dtype=float), axis, -1))
    n = y.shape[-1]
    if window > n or window % 2 == 0:
        raise ValueError(f"a Savitzky-Golay window of {window} points on {n} points")
    half = window // 2
    out = np.empty(y.shape)
    out[..., half:n - half] = (np.lib.stride_tricks.sliding_window_view(y, window, axis=-1)
                               @ savgol_coeffs(window, order))
    rows, out_rows = y.reshape(-1, n), out.reshape(-1, n)
    k = np.arange(window, dtype=float)
    for first, at in ((0, slice(0, half)), (n - window, slice(n - half, n))):
        # one polynomial per row (numpy.polyfit takes the rows as columns), highest power first
        p = np.polyfit(k, rows[:, first:first + window].T, order)
        pos = np.arange(at.start, at.stop, dtype=float) - first
        out_rows[:, at] = (np.polynomial.polynomial.polyvander(pos, order) @ p[::-1]).T
    return np.moveaxis(out, -1, axis)


def moving_mean(values: np.ndarray, size: int) -> np.ndarray:
    """Mean of the ``size`` values around each one, the ends extended by repeating the
    end values (``scipy.ndimage.uniform_filter1d`` with ``mode="nearest"``: the window
    of point ``i`` runs from ``i - size // 2`` for ``size`` points)."""
    v = np.asarray(values, dtype=float)
    lead = size // 2
    padded = np.concatenate((np.full(lead, v[0]), v, np.full(size - 1 - lead, v[-1])))
    run = np.concatenate(([0.0], np.cumsum(padded)))
    return (run[size:] - run[:-size]) / size


def smoother_kept_fraction(window: int) -> float:
    """``1 - sum(c^2)``: the fraction of white-noise variance the smoother leaves."""
    return max(1.0 - float(np.sum(savgol_coeffs(window, SMOOTH_ORDER) ** 2)), 1e-6)


def smoother_gain(window: int) -> float:
    """``sqrt(sum(c^2))``: noise on one smoothed point per unit noise of a raw point."""
    return float(np.sqrt(np.sum(savgol_coeffs(window, SMOOTH_ORDER) ** 2)))


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
