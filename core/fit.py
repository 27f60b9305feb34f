"""Straight-line fits: one line with its confidence interval, every cycle's line at once,
and the Legendre series whose degree the data choose.

The best-fit (independently based) line is ordinary least squares; the
terminal-based line passes through the window's end points. These are the two
reference-line conventions of IEEE Std 1241 (SOURCES.md [ieee1241]).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.polynomial import legendre
from scipy import stats

from .capture import CancelFn, ProgressFn, stop_if_cancelled
from .errors import AnalysisError
from .results import CycleArrays, LineFit, PhaseSums, Segmentation

#: Samples handled per vectorised block of the kernel: bounds the working memory.
BLOCK_SAMPLES = 1_000_000
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
    tq = float(stats.t.ppf(0.975, dof))
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
               groups: int = 1) -> tuple[CycleArrays, PhaseSums]:
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

    Returns
    -------
    (CycleArrays, PhaseSums)
        Per-cycle line fits over each cycle's window (measurement frame), and
        the sums of every ramp sample by phase bin for the coherent average.

    Notes
    -----
    Each cycle's line is ordinary least squares in sample-index units from
    prefix sums (any sum over a contiguous range is a difference of two
    entries): with ``L`` samples, ``Sxx = L (L^2 - 1) / 12``, slope
    ``Sxy / Sxx``, ``SSR = Syy - L ybar^2 - b Sxy``, slope standard error
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
    out = {k: np.zeros(nc) for k in ("slope", "intercept", "se", "dof", "peak", "tpeak",
                                      "span", "tspan", "start", "end", "ssr", "nwin")}
    acc = {k: np.zeros(bins + 1) for k in ("n", "u", "y", "r", "rr")}
    grouped = groups > 1
    # interleaved (cycle c in group c % groups), so each group spans the whole record and
    # keeps the regular advance of the sampling phase from cycle to cycle that the whole
    # average has
    member = np.arange(nc) % groups if grouped else None
    g_n = np.zeros(groups * (bins + 1)) if grouped else None
    g_y = np.zeros(groups * (bins + 1)) if grouped else None
    g_u = np.zeros(groups * (bins + 1)) if grouped else None
    # blocks of about an eighth of the record (at most BLOCK_SAMPLES) keep the working
    # memory a small multiple of the record on short and long captures alike
    block = int(min(BLOCK_SAMPLES, max(50_000, x.size // 8)))
    c0 = 0
    while c0 < nc:
        stop_if_cancelled(cancel)
        c1 = int(np.searchsorted(r1, r0[c0] + block, side="right"))
        c1 = min(max(c1, c0 + 1), nc)
        sl = slice(c0, c1)
        base = int(r0[c0])
        stop = int(r1[c1 - 1])
        xs = x[base:stop]
        m = xs.size
        kk = np.arange(m, dtype=float)
        # prefix sums: any sum over a contiguous range is a difference of two entries
        cy = np.zeros(m + 1)
        cky = np.zeros(m + 1)
        cyy = np.zeros(m + 1)
        np.cumsum(xs, out=cy[1:])
        np.cumsum(kk * xs, out=cky[1:])
        np.cumsum(xs * xs, out=cyy[1:])
        a_ = w0[sl] - base
        b_ = w1[sl] - base
        L = (b_ - a_).astype(float)
        sy = cy[b_] - cy[a_]
        sky = cky[b_] - cky[a_]
        syy = cyy[b_] - cyy[a_]
        ybar = sy / L
        kbar = 0.5 * (a_ + b_ - 1)
        sxx_k = L * (L * L - 1.0) / 12.0
        sxy_k = sky - kbar * sy
        bk = sxy_k / sxx_k  # volts per sample
        ssr = np.maximum(syy - L * ybar * ybar - bk * sxy_k, 0.0)
        s0 = ps[sl] - base  # fractional ramp start, block samples
        # per-sample cycle id over ramp + retrace: cycle c owns [r0_c, r0_c+1)
        starts = r0[sl] - base
        lens = np.diff(np.append(starts, m))
        cid = np.repeat(np.arange(c1 - c0), lens)
        bk_s = bk[cid]
        r = xs - (ybar - bk * kbar)[cid]
        r -= bk_s * kk
        absr = np.empty(m + 1)
        np.abs(r, out=absr[:m])
        absr[m] = 0.0
        inter = np.empty(2 * (c1 - c0), dtype=np.int64)
        inter[0::2] = a_
        inter[1::2] = b_
        out["peak"][sl] = np.maximum.reduceat(absr, inter)[0::2]
        # terminal line through the means of the first and last h window samples
        h = np.maximum(1, (b_ - a_) // 50)
        hy = (cy[a_ + h] - cy[a_]) / h
        hk = a_ + 0.5 * (h - 1)
        ty = (cy[b_] - cy[b_ - h]) / h
        tk = b_ - 1 - 0.5 * (h - 1)
        bt = (ty - hy) / np.where(tk != hk, tk - hk, np.inf)
        # the terminal residual is the best-fit one plus the gap between the two lines
        rt = r + (ybar - bk * kbar - (hy - bt * hk))[cid]
        rt += (bk - bt)[cid] * kk
        np.abs(rt, out=absr[:m])
        out["tpeak"][sl] = np.maximum.reduceat(absr, inter)[0::2]
        out["tspan"][sl] = bt * (wb[sl] - wa[sl]) / dt
        # start and end levels: local means near the ramp ends, moved to the ends along the slope
        e0 = r0[sl] - base
        e1 = r1[sl] - base
        g = np.maximum(2, np.round(LEVEL_FRACTION * (e1 - e0)).astype(np.int64))
        ms = (cy[e0 + g] - cy[e0]) / g
        me = (cy[e1] - cy[e1 - g]) / g
        out["start"][sl] = ms - bk * (e0 + 0.5 * (g - 1) - s0)
        out["end"][sl] = me + bk * ((pe[sl] - base) - (e1 - 1 - 0.5 * (g - 1)))
        out["slope"][sl] = bk / dt
        out["intercept"][sl] = ybar - bk * (kbar - s0)
        out["dof"][sl] = L - 2
        out["se"][sl] = np.sqrt(ssr / np.maximum(L - 2, 1) / sxx_k) / dt
        out["span"][sl] = bk / dt * (wb[sl] - wa[sl])
        out["ssr"][sl] = ssr
        out["nwin"][sl] = L
        # phase-binned accumulation of every ramp sample; retrace samples go to a spare bin
        inv = 1.0 / (T[sl] / dt)
        u = kk * inv[cid]
        u -= (s0 * inv)[cid]
        bi = (u * bins).astype(np.int64)
        np.minimum(bi, bins - 1, out=bi)
        # past its ramp's end (u > 1) a sample belongs to the retrace: the spare bin
        bi[u > 1.0] = bins
        acc["n"] += np.bincount(bi, minlength=bins + 1)
        acc["u"] += np.bincount(bi, u, bins + 1)
        acc["y"] += np.bincount(bi, xs, bins + 1)
        acc["r"] += np.bincount(bi, r, bins + 1)
        acc["rr"] += np.bincount(bi, r * r, bins + 1)
        if grouped:
            gi = bi + (member[c0:c1] * (bins + 1))[cid]
            g_n += np.bincount(gi, minlength=groups * (bins + 1))
            g_y += np.bincount(gi, xs, groups * (bins + 1))
            g_u += np.bincount(gi, u, groups * (bins + 1))
        c0 = c1
        if progress is not None:
            progress(c1 / nc)
    sums = PhaseSums(count=acc["n"][:bins], phase=acc["u"][:bins], voltage_v=acc["y"][:bins],
                     residual_v=acc["r"][:bins], residual_sq_v2=acc["rr"][:bins],
                     group_count=None if g_n is None else g_n.reshape(groups, bins + 1)[:, :bins],
                     group_voltage_v=None if g_y is None else
                     g_y.reshape(groups, bins + 1)[:, :bins],
                     group_phase=None if g_u is None else g_u.reshape(groups, bins + 1)[:, :bins])
    cyc = CycleArrays(ramp_start_s=rs, ramp_time_s=T, slope_v_per_s=out["slope"],
                      intercept_v=out["intercept"], slope_stderr_v_per_s=out["se"],
                      dof=out["dof"], peak_deviation_v=out["peak"],
                      terminal_peak_v=out["tpeak"], fitted_span_v=out["span"],
                      terminal_span_v=out["tspan"], start_v=out["start"], end_v=out["end"],
                      ssr_v2=out["ssr"], window_samples=out["nwin"])
    return cyc, sums


