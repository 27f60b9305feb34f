"""Straight-line fits: one line with its confidence interval, every cycle's line at once,
and the Legendre series whose degree the data choose.

The best-fit (independently based) line is ordinary least squares; the
terminal-based line passes through the window's end points. These are the two
reference-line conventions of IEEE Std 1241 (SOURCES.md [ieee1241]).
"""

from __future__ import annotations

import math
from dataclasses import fields

import numpy as np
from numpy.polynomial import legendre

from .capture import CancelFn, ProgressFn, stop_if_cancelled
from .errors import AnalysisError
from .results import CycleArrays, LineFit, PhaseSums, Segmentation
from .tquantile import t_quantile_975

#: Samples handled per vectorised block of the kernel: a block's dozen working arrays
#: (512 KiB each) stay in the processor's cache.
BLOCK_SAMPLES = 1 << 16
#: Fraction of the ramp at each end used for the start and end levels.
LEVEL_FRACTION = 0.03


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
    tq = float(t_quantile_975(dof))
    return LineFit(slope_v_per_s=b, intercept_v=a, slope_stderr_v_per_s=se_b,
                   intercept_stderr_v=se_a, slope_ci95_v_per_s=(b - tq * se_b, b + tq * se_b),
                   residual_rms_v=float(np.sqrt(ssr / n_eff)), n=int(t.size))


def window_bounds(ramp_time_s, trim: float, window_s: tuple[float, float] | None,
                  limits_s: tuple[float | None, float | None] | None = None):
    """Fit window ``(start, end)`` in seconds from the ramp start, for one ramp time or many.

    ``trim`` of the ramp at each end, or the explicit ``window_s`` cut at the ramp's
    end; then kept within ``limits_s`` (earliest start, latest end; None for no limit),
    which keep clipped samples out of the fit.
    """
    if window_s is None:
        a, b = trim * ramp_time_s, (1.0 - trim) * ramp_time_s
    else:
        a = np.full_like(np.asarray(ramp_time_s, dtype=float), float(window_s[0]))
        a = a if a.ndim else float(a)
        b = np.minimum(float(window_s[1]), ramp_time_s)
    if limits_s is not None:
        if limits_s[0] is not None:
            a = np.maximum(a, limits_s[0])
        if limits_s[1] is not None:
            b = np.minimum(b, limits_s[1])
    return a, b


def to_unit_interval(x: np.ndarray) -> np.ndarray:
    """Map ``x`` (ascending) linearly onto ``[-1, 1]``, the Legendre polynomials' domain."""
    return 2.0 * (x - x[0]) / max(float(x[-1] - x[0]), 1e-300) - 1.0


class LegendreSeries:
    """Weighted least-squares Legendre series of every degree up to ``top`` at once.

    The Legendre basis on ``[-1, 1]`` is well conditioned on an even grid, so the
    normal equations are safe; the Cholesky factor of their matrix holds the
    factor of every leading block, so the residual of every degree is one
    cumulative sum: ``chi2(d) = |w y|^2 - sum_{j <= d} z_j^2``, ``L z = V^T W^2 y``.
    """

    def __init__(self, x: np.ndarray, y: np.ndarray, w: np.ndarray, top: int) -> None:
        self.u = to_unit_interval(x)
        self.scale = 2.0 / max(float(x[-1] - x[0]), 1e-300)  # du/dx
        self.v = legendre.legvander(self.u, top)
        a = self.v * w[:, None]
        wy = w * y
        self.log_n = math.log(x.size)
        self.chol = np.linalg.cholesky(a.T @ a)
        self.z = np.linalg.solve(self.chol, a.T @ wy)
        self.chi2 = np.maximum(float(wy @ wy) - np.cumsum(self.z * self.z), 0.0)

    def bic(self, d: int) -> float:
        """Bayesian information criterion ``chi2 + (d + 1) ln n`` of the degree-``d`` fit."""
        return float(self.chi2[d]) + (d + 1) * self.log_n

    def best_degree(self, lowest: int = 0) -> int:
        """The degree from ``lowest`` to ``top`` with the lowest BIC (the lowest on a tie)."""
        degs = np.arange(lowest, self.chi2.size)
        return int(degs[int(np.argmin([self.bic(int(d)) for d in degs]))])

    def coef(self, d: int) -> np.ndarray:
        """Coefficients of the degree-``d`` fit."""
        return np.linalg.solve(self.chol[: d + 1, : d + 1].T, self.z[: d + 1])

    def curve(self, d: int) -> np.ndarray:
        """Values of the degree-``d`` fit on the points."""
        return self.v[:, : d + 1] @ self.coef(d)

    def end_derivatives(self, d: int) -> tuple[float, float]:
        """d/dx of the degree-``d`` fit at the first and last point."""
        dc = legendre.legder(self.coef(d))
        if dc.size == 0:
            return 0.0, 0.0
        a, b = legendre.legval(np.array([-1.0, 1.0]), dc) * self.scale
        return float(a), float(b)


def cycle_pass(x: np.ndarray, dt: float, t0: float, seg: Segmentation, trim: float,
               window_s: tuple[float, float] | None, bins: int,
               progress: ProgressFn | None = None, cancel: CancelFn | None = None,
               limits_s: tuple[float | None, float | None] | None = None,
               groups: int = 1, member: np.ndarray | None = None
               ) -> tuple[CycleArrays, PhaseSums]:
    """Fit every cycle and accumulate the phase-binned average, block by block.

    Parameters
    ----------
    x : ndarray
        Samples in the measurement frame (mirrored for a falling ramp), volts.
    dt, t0 : float
        Sample interval and first-sample time, seconds.
    seg : Segmentation
    trim, window_s : fit window (see :class:`~trueslope.core.settings.Settings`).
    bins : int
        Phase bins of the averaged cycle.
    limits_s : (float or None, float or None), optional
        Earliest start and latest end of the window (seconds from the ramp start).
    groups : int
        Also sum the samples by phase bin in this many interleaved groups of cycles
        (cycle ``c`` in group ``c % groups``), for the resolution floor.
    member : ndarray of int, optional
        Each cycle's group instead of ``c % groups`` (the cycles' places in a longer
        list, so that sums over a few of them can be subtracted from the list's).

    Returns
    -------
    (CycleArrays, PhaseSums)
        Per-cycle line fits over each cycle's window (measurement frame), and
        the sums of every ramp sample by phase bin for the coherent average.

    Notes
    -----
    Each cycle's line is ordinary least squares in sample-index units from two
    sums over its window, ``Sy = sum y`` and ``Sjy = sum j y``
    (``numpy.add.reduceat``), and the closed forms of the index sums: with ``L``
    samples, ``Sxx = L (L^2 - 1) / 12``, ``Sxy = Sjy - jbar Sy``, slope
    ``Sxy / Sxx``. The residual sum of squares and the largest residuals are
    direct sums and maxima of the residuals themselves, slope standard error
    ``sqrt(SSR / (L - 2) / Sxx) / dt``.
    """
    rs = seg.ramp_start_s
    re = seg.ramp_end_s
    T = re - rs
    nc = rs.size
    # fractional sample positions of each ramp's start and end
    ps = (rs - t0) / dt
    pe = (re - t0) / dt
    r0 = np.clip(np.ceil(ps - 1e-9).astype(np.int64), 0, x.size)
    r1 = np.clip(np.floor(pe + 1e-9).astype(np.int64) + 1, 0, x.size)
    if np.any(r1 - r0 < 4):
        raise AnalysisError("a ramp holds fewer than 4 samples: the capture is too coarse "
                            "(sample faster, or show fewer cycles)")
    wa, wb = window_bounds(T, trim, window_s, limits_s)
    w0 = np.clip(np.ceil(ps + wa / dt - 1e-9).astype(np.int64), r0, r1)
    w1 = np.clip(np.floor(ps + wb / dt + 1e-9).astype(np.int64) + 1, w0, r1)
    if np.any(w1 - w0 < 3):
        raise AnalysisError("the fit window holds fewer than 3 samples of a ramp; "
                            "widen the window or lower the trim fraction")
    if member is None:
        # interleaved (cycle c in group c % groups), so each group spans the whole record
        # and keeps the regular advance of the sampling phase from cycle to cycle that the
        # whole average has
        member = np.arange(nc) % groups
    width = bins + 1  # each group's bins and a spare one that takes the retrace samples
    out = {k: np.empty(nc) for k in ("slope", "intercept", "se", "peak", "tpeak", "tspan",
                                      "start", "end", "ssr")}
    acc = {k: np.zeros(groups * width) for k in ("n", "u", "y", "r", "rr")}
    # Blocks of whole cycles small enough that the dozen arrays of a block stay in the
    # processor's cache: every pass over a block then reads the cache, not memory.
    block = max(BLOCK_SAMPLES, 1)
    kk_all = np.arange(int(min(x.size, block + int(np.max(r1 - r0, initial=0)))) + 1,
                       dtype=float)
    shown = 0.0
    c0 = 0
    while c0 < nc:
        stop_if_cancelled(cancel)
        c1 = int(np.searchsorted(r1, r0[c0] + block, side="right"))
        c1 = min(max(c1, c0 + 1), nc)
        _block(x, int(r0[c0]), int(r1[c1 - 1]), slice(c0, c1), r0, r1, w0, w1, ps, pe, T / dt,
               member[c0:c1] * width, bins, kk_all, out, acc)
        c0 = c1
        if progress is not None and (c1 / nc - shown >= 0.01 or c1 == nc):
            shown = c1 / nc  # a call a percent, however many blocks
            progress(shown)
    L = (w1 - w0).astype(float)
    span = wb - wa
    sxx_k = L * (L * L - 1.0) / 12.0
    se = np.sqrt(out["ssr"] / np.maximum(L - 2, 1) / sxx_k) / dt
    g = {k: a.reshape(groups, width)[:, :bins] for k, a in acc.items()}
    grouped = groups > 1
    sums = PhaseSums(count=g["n"].sum(axis=0), phase=g["u"].sum(axis=0),
                     voltage_v=g["y"].sum(axis=0), residual_v=g["r"].sum(axis=0),
                     residual_sq_v2=g["rr"].sum(axis=0),
                     group_count=g["n"] if grouped else None,
                     group_voltage_v=g["y"] if grouped else None,
                     group_phase=g["u"] if grouped else None)
    slope = out["slope"] / dt
    cyc = CycleArrays(ramp_start_s=rs, ramp_time_s=T, slope_v_per_s=slope,
                      intercept_v=out["intercept"], slope_stderr_v_per_s=se,
                      dof=L - 2, peak_deviation_v=out["peak"],
                      terminal_peak_v=out["tpeak"], fitted_span_v=slope * span,
                      terminal_span_v=out["tspan"] * span / dt, start_v=out["start"],
                      end_v=out["end"], ssr_v2=out["ssr"], window_samples=L)
    return cyc, sums


def without(sums: PhaseSums, part: PhaseSums) -> PhaseSums:
    """The phase sums of a set of cycles less those of some of them (``part``, from
    :func:`cycle_pass` over those cycles with the same bins, groups and membership)."""
    def less(a, b):
        return None if a is None or b is None else a - b
    return PhaseSums(*(less(getattr(sums, f.name), getattr(part, f.name))
                       for f in fields(PhaseSums)))


def _window_reduce(ufunc, values: np.ndarray, cuts: np.ndarray) -> np.ndarray:
    """``ufunc`` over each window ``[cuts[2c], cuts[2c + 1])`` of ``values``.

    ``reduceat`` reduces from each cut to the next and the last cut to the end, so a
    final cut at the end of ``values`` is dropped: its window then runs to the end."""
    if cuts[-1] >= values.size:
        cuts = cuts[:-1]
    return ufunc.reduceat(values, cuts)[0::2]


def _stretch_means(xs: np.ndarray, a: np.ndarray, b: np.ndarray, h: np.ndarray
                   ) -> tuple[np.ndarray, np.ndarray]:
    """Means of the first and of the last ``h`` samples of each ``[a, b)`` (``2 h <= b - a``)."""
    cuts = np.empty(4 * a.size, dtype=np.int64)
    cuts[0::4] = a
    cuts[1::4] = a + h
    cuts[2::4] = b - h
    cuts[3::4] = b
    if cuts[-1] >= xs.size:
        cuts = cuts[:-1]
    s = np.add.reduceat(xs, cuts)
    return s[0::4] / h, s[2::4] / h


def _block(x: np.ndarray, base: int, stop: int, sl: slice, r0, r1, w0, w1, ps, pe,
           ramp_samples: np.ndarray, offset: np.ndarray, bins: int, kk_all: np.ndarray,
           out: dict, acc: dict) -> None:
    """One block of :func:`cycle_pass`: the cycles ``sl``, samples ``base`` to ``stop``.

    Per-cycle values reach the samples by ``numpy.repeat`` over each cycle's run of
    samples (its ramp and the retrace after it), never by gathers."""
    xs = x[base:stop]
    m = xs.size
    kk = kk_all[:m]
    e0 = r0[sl] - base
    e1 = r1[sl] - base
    a_ = w0[sl] - base
    b_ = w1[sl] - base
    n = e0.size
    owns = np.diff(e0, append=m)  # cycle c owns its ramp and the retrace up to the next ramp
    cuts = np.empty(2 * n, dtype=np.int64)
    cuts[0::2] = a_
    cuts[1::2] = b_
    # the line over each window: Sy and Sjy over the window, the index sums in closed form
    L = (b_ - a_).astype(float)
    sy = _window_reduce(np.add, xs, cuts)
    sjy = _window_reduce(np.add, kk * xs, cuts)
    kbar = a_ + 0.5 * (L - 1.0)
    bk = (sjy - kbar * sy) / (L * (L * L - 1.0) / 12.0)  # volts per sample
    ybar = sy / L
    at0 = ybar - bk * kbar  # the line's value at block sample 0
    r = xs - np.repeat(at0, owns)
    r -= np.repeat(bk, owns) * kk
    rr = r * r
    out["ssr"][sl] = _window_reduce(np.add, rr, cuts)
    out["peak"][sl] = _window_reduce(np.maximum, np.abs(r), cuts)
    # short stretches: the terminal line's ends, the start and end levels (each stretch
    # lies inside its window or ramp, so the cuts stay in order)
    h = np.maximum(1, (b_ - a_) // 50)
    hy, ty = _stretch_means(xs, a_, b_, h)
    hk = a_ + 0.5 * (h - 1)
    tk = b_ - 1 - 0.5 * (h - 1)
    # terminal line through the means of the first and last h window samples
    bt = (ty - hy) / np.where(tk != hk, tk - hk, np.inf)
    rt = xs - np.repeat(hy - bt * hk, owns)
    rt -= np.repeat(bt, owns) * kk
    out["tpeak"][sl] = _window_reduce(np.maximum, np.abs(rt, out=rt), cuts)
    s0 = ps[sl] - base  # fractional ramp start, block samples
    out["tspan"][sl] = bt
    # start and end levels: local means near the ramp ends, moved to the ends along the slope
    g = np.maximum(2, np.round(LEVEL_FRACTION * (e1 - e0)).astype(np.int64))
    ms, me = _stretch_means(xs, e0, e1, g)
    out["start"][sl] = ms - bk * (e0 + 0.5 * (g - 1) - s0)
    out["end"][sl] = me + bk * ((pe[sl] - base) - (e1 - 1 - 0.5 * (g - 1)))
    out["slope"][sl] = bk
    out["intercept"][sl] = ybar - bk * (kbar - s0)
    # phase u = (j - ramp start) / ramp samples of every sample, from its index j in the
    # record (not in the block), so that a sample lands in the same bin whichever cycles
    # share its block: the sums of some cycles can then be taken away exactly (``without``).
    # Past its ramp's end (the retrace) a sample goes to the spare bin.
    inv = 1.0 / ramp_samples[sl]
    rate = np.repeat(inv, owns)
    u = kk + float(base)  # record indices, exact in float64
    u *= rate
    u -= np.repeat(ps[sl] * inv, owns)
    gi = (u * bins).astype(np.int64)
    np.minimum(gi, bins, out=gi)
    # within a ramp only its last sample can reach phase 1: past the ramp's end by up to
    # 1e-9 of a sample (the spare bin) or at its very end (the last bin); its first may be
    # below 0 by rounding (bin 0, as truncation gives)
    last = e1 - 1
    u_last = (last + float(base)) * inv - ps[sl] * inv
    gi[last] = np.where(u_last > 1.0, bins, np.minimum((u_last * bins).astype(np.int64),
                                                       bins - 1))
    if offset.size and np.any(offset):
        gi += np.repeat(offset, owns)
    size = acc["n"].size
    acc["n"] += np.bincount(gi, minlength=size)
    acc["u"] += np.bincount(gi, u, size)
    acc["y"] += np.bincount(gi, xs, size)
    acc["r"] += np.bincount(gi, r, size)
    acc["rr"] += np.bincount(gi, rr, size)
