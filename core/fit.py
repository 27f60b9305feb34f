"""Straight-line fits: one line with its confidence interval, and many at once.

The best-fit (independently based) line is ordinary least squares; the
terminal-based line passes through the window's end points. These are the two
reference-line conventions of IEEE Std 1241.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from .errors import AnalysisError
from .results import LineFit


def fit_line(t_s: np.ndarray, v: np.ndarray, weights: np.ndarray | None = None) -> LineFit:
    """Least-squares line ``v = intercept_v + slope_v_per_s * t_s`` with a 95 % CI.

    Parameters
    ----------
    t_s : ndarray
        Times, seconds.
    v : ndarray
        Values, volts.
    weights : ndarray, optional
        Frequency weights (e.g. samples averaged in a point); the standard
        errors then treat the point as that many samples of equal noise.

    Returns
    -------
    LineFit
        Slope and intercept with OLS standard errors
        ``se_b = s / sqrt(Sxx)``, ``s^2 = SSR / (n - 2)``, and the slope's 95 %
        interval ``b +/- t(0.975, n - 2) se_b``.

    Raises
    ------
    AnalysisError
        Fewer than three points, or all times equal.
    """
    t = np.asarray(t_s, dtype=float)
    y = np.asarray(v, dtype=float)
    w = np.ones_like(t) if weights is None else np.asarray(weights, dtype=float)
    n_eff = float(np.sum(w))
    if t.size < 3 or n_eff < 3:
        raise AnalysisError(f"a line fit needs at least 3 points, got {t.size}")
    tm = float(np.sum(w * t) / n_eff)
    ym = float(np.sum(w * y) / n_eff)
    tc = t - tm
    sxx = float(np.sum(w * tc * tc))
    if sxx <= 0:
        raise AnalysisError("a line fit needs points at more than one time")
    b = float(np.sum(w * tc * (y - ym)) / sxx)
    a = ym - b * tm
    r = y - (a + b * t)
    ssr = float(np.sum(w * r * r))
    dof = n_eff - 2.0
    s2 = ssr / dof
    se_b = float(np.sqrt(s2 / sxx))
    se_a = float(np.sqrt(s2 * (1.0 / n_eff + tm * tm / sxx)))
    tq = float(stats.t.ppf(0.975, dof))
    return LineFit(slope_v_per_s=b, intercept_v=a, slope_stderr_v_per_s=se_b,
                   intercept_stderr_v=se_a, slope_ci95_v_per_s=(b - tq * se_b, b + tq * se_b),
                   residual_rms_v=float(np.sqrt(ssr / n_eff)), n=int(t.size))


def terminal_line(t_a: float, v_a: float, t_b: float, v_b: float) -> tuple[float, float]:
    """Slope and intercept of the line through two end points ``(t_a, v_a)``, ``(t_b, v_b)``."""
    if t_b == t_a:
        raise AnalysisError("terminal line needs two distinct end times")
    b = (v_b - v_a) / (t_b - t_a)
    return b, v_a - b * t_a
