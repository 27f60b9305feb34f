"""Per-cycle fits, the coherent average of all cycles, and the summary figures.

Definitions (stated in the README's "Measurement definitions"):

- fit window: each ramp trimmed by ``trim_fraction`` of its duration at each
  end, or an explicit window in seconds from the ramp start;
- best-fit line: least squares over the window (IEEE Std 1241 independently
  based line); terminal line: through the window's end points (IEEE Std 1241
  terminal-based line);
- peak deviation: largest |smoothed residual| of the averaged cycle against
  the best-fit line; ``nonlinearity_pct = 100 * peak / fitted span``;
- sweep errors (Millman and Taub, *Pulse, Digital and Switching Waveforms*,
  time-base generators): slope error ``e_s = (v'(a) - v'(b)) / v'(a)``,
  displacement error ``e_d`` = largest deviation from the chord / swing,
  transmission error ``e_t = (v'(a) T - V_s) / (v'(a) T)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import signal, stats

from .capture import CancelFn, ProgressFn
from .errors import AnalysisError, Cancelled
from .fit import fit_line
from .results import AveragedCycle, CycleFigures, LineFit, NoiseFloor, Segmentation

#: Samples handled per vectorised block: bounds the working memory.
BLOCK_SAMPLES = 1_000_000
#: Savitzky-Golay polynomial order for the systematic residual.
SMOOTH_ORDER = 3
#: The resolution floor is this many standard deviations of the smoothed averaged residual.
FLOOR_SIGMAS = 4.0
#: Fraction of the ramp at each end used for the start and end levels.
LEVEL_FRACTION = 0.03
#: Robust z-score beyond which a cycle is marked outlying.
OUTLIER_Z = 5.0


@dataclass(frozen=True)
class _CycleArrays:
    ramp_start_s: np.ndarray
    ramp_time_s: np.ndarray
    slope: np.ndarray
    intercept: np.ndarray
    slope_se: np.ndarray
    dof: np.ndarray
    peak: np.ndarray
    terminal_peak: np.ndarray
    span: np.ndarray
    terminal_span: np.ndarray
    start_v: np.ndarray
    end_v: np.ndarray
    ssr: np.ndarray
    n_win: np.ndarray


def _window_bounds(ramp_time_s: np.ndarray, trim: float,
                   window_s: tuple[float, float] | None) -> tuple[np.ndarray, np.ndarray]:
    if window_s is None:
        return trim * ramp_time_s, (1.0 - trim) * ramp_time_s
    a = np.full_like(ramp_time_s, float(window_s[0]))
    b = np.minimum(float(window_s[1]), ramp_time_s)
    return a, b


def adc_step(v: np.ndarray) -> float | None:
    """Quantisation step of the samples, volts, or None when they are not on a grid.

    The step is the smallest spacing between distinct sample values, accepted
    when nearly all spacings are whole multiples of it.
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


def cycle_pass(x: np.ndarray, dt: float, t0: float, seg: Segmentation, trim: float,
               window_s: tuple[float, float] | None, bins: int,
               progress: ProgressFn | None = None, cancel: CancelFn | None = None,
               ) -> tuple[_CycleArrays, dict[str, np.ndarray]]:
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

    Returns
    -------
    (cycles, accumulators)
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
    wa, wb = _window_bounds(T, trim, window_s)
    w0 = np.clip(np.ceil(ps + wa / dt - 1e-9).astype(np.int64), r0, r1)
    w1 = np.clip(np.floor(ps + wb / dt + 1e-9).astype(np.int64) + 1, w0, r1)
    if np.any(w1 - w0 < 3):
        raise AnalysisError("the fit window holds fewer than 3 samples of a ramp; "
                            "widen the window or lower the trim fraction")
    out = {k: np.zeros(nc) for k in ("slope", "intercept", "se", "dof", "peak", "tpeak",
                                      "span", "tspan", "start", "end", "ssr", "nwin")}
    acc = {k: np.zeros(bins + 1) for k in ("n", "u", "y", "r", "rr")}
    # blocks of about an eighth of the record (at most BLOCK_SAMPLES) keep the working
    # memory a small multiple of the record on short and long captures alike
    block = int(min(BLOCK_SAMPLES, max(50_000, x.size // 8)))
    c0 = 0
    while c0 < nc:
        if cancel is not None and cancel():
            raise Cancelled("analysis cancelled")
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
        c0 = c1
        if progress is not None:
            progress(c1 / nc)
    acc = {k: v[:bins] for k, v in acc.items()}
    cyc = _CycleArrays(ramp_start_s=rs, ramp_time_s=T, slope=out["slope"],
                       intercept=out["intercept"], slope_se=out["se"], dof=out["dof"],
                       peak=out["peak"], terminal_peak=out["tpeak"], span=out["span"],
                       terminal_span=out["tspan"], start_v=out["start"], end_v=out["end"],
                       ssr=out["ssr"], n_win=out["nwin"])
    return cyc, acc


def _odd(n: int) -> int:
    return n if n % 2 else n + 1


def smoothing_window(n_points: int) -> int:
    """Savitzky-Golay window (points) for a residual of ``n_points``: about 1/20 of it."""
    w = _odd(max(SMOOTH_ORDER + 4, n_points // 20))
    return min(w, _odd(max(SMOOTH_ORDER + 2, n_points)) - (0 if n_points % 2 else 2))


@dataclass(frozen=True)
class AverageResult:
    averaged: AveragedCycle
    noise: NoiseFloor
    derivative_a: float
    derivative_b: float
    smooth_v: np.ndarray  # smoothed averaged curve on the window bins (measurement frame)
    t_win: np.ndarray


def average_cycle(acc: dict[str, np.ndarray], ramp_time_s: float, trim: float,
                  window_s: tuple[float, float] | None, mirrored: bool,
                  noise_fallback_v: float, step_v: float | None) -> AverageResult:
    """Build the averaged cycle, fit its line, smooth its residual, find the noise floor."""
    n = acc["n"]
    keep = n > 0
    cnt = n[keep]
    u = acc["u"][keep] / cnt
    y = acc["y"][keep] / cnt
    rm = acc["r"][keep] / cnt
    var = np.maximum(acc["rr"][keep] / cnt - rm * rm, 0.0)
    multi = cnt >= 2
    if np.count_nonzero(multi) >= 0.5 * cnt.size:
        noise_rms = float(np.sqrt(np.sum(var[multi] * cnt[multi]) / np.sum(cnt[multi])))
        sd = np.sqrt(np.where(multi, var, noise_rms ** 2))
    else:
        noise_rms = float(noise_fallback_v)
        sd = np.full(cnt.size, noise_rms)
    stderr = np.maximum(sd, 1e-15) / np.sqrt(cnt)
    t = u * ramp_time_s
    if window_s is None:
        ta, tb = trim * ramp_time_s, (1.0 - trim) * ramp_time_s
    else:
        ta, tb = float(window_s[0]), min(float(window_s[1]), ramp_time_s)
    inw = (t >= ta) & (t <= tb)
    if np.count_nonzero(inw) < SMOOTH_ORDER + 3:
        raise AnalysisError("the fit window holds too few points of the averaged cycle")
    fit = fit_line(t[inw], y[inw], weights=cnt[inw])
    resid = y - fit.at(t)
    W = smoothing_window(int(np.count_nonzero(inw)))
    # smooth over the window widened by half a smoothing length where the ramp allows,
    # so the window's edges get centred estimates (the reset edges stay outside)
    iw = np.flatnonzero(inw)
    lo_i = max(0, iw[0] - W // 2)
    hi_i = min(t.size, iw[-1] + 1 + W // 2)
    ext = slice(lo_i, hi_i)
    sm_ext = signal.savgol_filter(resid[ext], W, SMOOTH_ORDER, mode="interp")
    sel = inw[ext]
    sm = sm_ext[sel]
    tw = t[inw]
    rw = resid[inw]
    smooth_full = np.full(resid.shape, np.nan)
    smooth_full[inw] = sm
    curve = fit.at(tw) + sm
    # The bins' standard errors come from the cycle-to-cycle spread; structure that
    # repeats in every cycle (quantisation patterns, sampling-clock beats) is not in
    # them. Scale them up so the smoothed model's scatter is consistent with them.
    point_sd_random = float(np.sqrt(np.mean(stderr[inw] ** 2)))
    # Bins whose samples agree across cycles (a whole number of samples per period, little
    # noise against the ADC step) get a near-zero spread; floor them at a fraction of the
    # typical bin before comparing, and compare by the median so a few such bins cannot
    # blow the ratio up (the median of a chi-square with one degree of freedom is 0.455).
    stderr = np.maximum(stderr, 0.5 * float(np.median(stderr[inw])))
    z2 = ((rw - sm) / stderr[inw]) ** 2
    hp_ratio = float(np.sqrt(np.median(z2) / 0.455 * W / max(W - SMOOTH_ORDER - 1, 1)))
    if hp_ratio > 1.0:
        stderr = stderr * hp_ratio
    d_a, d_b = _end_derivatives(tw, rw, stderr[inw], fit.slope_v_per_s)
    chord_b = (curve[-1] - curve[0]) / (tw[-1] - tw[0])
    term = curve - (curve[0] + chord_b * (tw - tw[0]))
    term_full = np.full(resid.shape, np.nan)
    term_full[inw] = term
    # noise left on one point of the smoothed residual
    point_sd = max(point_sd_random, float(np.std(rw - sm)) * math.sqrt(W / max(W - SMOOTH_ORDER - 1, 1)))
    gain = float(np.sqrt(np.sum(signal.savgol_coeffs(W, SMOOTH_ORDER) ** 2)))
    sm_sd = point_sd * gain
    span = abs(fit.slope_v_per_s * (tb - ta))
    floor = 100.0 * FLOOR_SIGMAS * sm_sd / span if span > 0 else math.inf
    noise = NoiseFloor(noise_rms_v=noise_rms, adc_step_v=step_v,
                       averaged_noise_rms_v=sm_sd, nonlinearity_floor_pct=floor)
    av = AveragedCycle(time_s=t, voltage_v=-y if mirrored else y, stderr_v=stderr, count=cnt,
                       in_window=inw, residual_v=resid, smoothed_residual_v=smooth_full,
                       terminal_residual_v=term_full, ramp_time_s=ramp_time_s,
                       window_start_s=ta, window_end_s=tb, fit=fit, mirrored=mirrored)
    return AverageResult(averaged=av, noise=noise, derivative_a=d_a, derivative_b=d_b,
                         smooth_v=curve, t_win=tw)


#: Highest polynomial degree tried for the slope at the window's ends.
MAX_DERIVATIVE_DEGREE = 6


def _end_derivatives(t: np.ndarray, r: np.ndarray, se: np.ndarray,
                     slope: float) -> tuple[float, float]:
    """Slope of the averaged ramp at the window's start and end, volts per second.

    The residual is fitted with Legendre polynomials of degree 0 to
    ``MAX_DERIVATIVE_DEGREE``, weighted by the bins' standard errors; the
    degree with the lowest Bayesian information criterion
    ``chi2 + k ln n`` is kept, so a ramp straight within its noise gets
    exactly the fitted line's slope at both ends.
    """
    n = t.size
    x = 2.0 * (t - t[0]) / (t[-1] - t[0]) - 1.0
    w = 1.0 / np.maximum(se, 1e-300)
    best = (math.inf, np.zeros(1))
    for deg in range(0, min(MAX_DERIVATIVE_DEGREE, n - 2) + 1):
        c = np.polynomial.legendre.legfit(x, r, deg, w=w)
        chi2 = float(np.sum(((r - np.polynomial.legendre.legval(x, c)) * w) ** 2))
        bic = chi2 + (deg + 1) * math.log(n)
        if bic < best[0] - 1e-9:
            best = (bic, c)
    dc = np.polynomial.legendre.legder(best[1])
    scale = 2.0 / (t[-1] - t[0])
    d = np.polynomial.legendre.legval(np.array([-1.0, 1.0]), dc) * scale if dc.size else np.zeros(2)
    return slope + float(d[0]), slope + float(d[1])


def end_levels(av: AveragedCycle) -> tuple[float, float]:
    """Start and end levels of the averaged ramp (measurement frame), volts.

    A line through the first (last) ``LEVEL_FRACTION`` of the ramp, evaluated
    at the ramp's start (end).
    """
    t = av.time_s
    y = av.measured_v
    T = av.ramp_time_s
    out = []
    for m, at in (((t <= LEVEL_FRACTION * T), 0.0), ((t >= (1 - LEVEL_FRACTION) * T), T)):
        if np.count_nonzero(m) < 3:
            order = np.argsort(np.abs(t - at))[:3]
            m = np.zeros(t.size, bool)
            m[order] = True
        tb, ta_ = t[m], y[m]
        if np.ptp(tb) > 0:
            p = np.polyfit(tb, ta_, 1, w=np.sqrt(av.count[m]))
            out.append(float(np.polyval(p, at)))
        else:
            out.append(float(np.mean(ta_)))
    return out[0], out[1]


def robust_outliers(series: list[tuple[np.ndarray, float, float]]) -> np.ndarray:
    """Mark cycles lying more than ``OUTLIER_Z`` robust standard deviations from the median.

    Parameters
    ----------
    series : list of (values, relative_floor, absolute_floor)
        Each figure with the smallest spread worth calling a difference: the
        robust scale (1.4826 x MAD) is raised to ``relative_floor x |median|``
        and ``absolute_floor``, so that near-identical cycles of a clean
        capture are not marked for differences nobody would act on.
    """
    n = series[0][0].size
    flag = np.zeros(n, dtype=bool)
    if n < 5:
        return flag
    for s, rel, absf in series:
        med = np.median(s)
        mad = 1.4826 * np.median(np.abs(s - med))
        scale = max(mad, rel * abs(med), absf, 1e-300)
        flag |= np.abs(s - med) > OUTLIER_Z * scale
    return flag


def slope_ci(fit: LineFit, slopes: np.ndarray) -> tuple[float, float]:
    """95 % interval of the mean slope: the spread of the per-cycle slopes (Student t),
    never narrower than the pooled least-squares interval."""
    half_ols = 0.5 * (fit.slope_ci95_v_per_s[1] - fit.slope_ci95_v_per_s[0])
    half = half_ols
    if slopes.size >= 3:
        sd = float(np.std(slopes, ddof=1))
        half = max(half, float(stats.t.ppf(0.975, slopes.size - 1)) * sd / math.sqrt(slopes.size))
    b = fit.slope_v_per_s
    return b - half, b + half


def build_cycles(cyc: _CycleArrays, seg: Segmentation, sign: float) -> tuple[CycleFigures, ...]:
    """Per-cycle records in true polarity."""
    period = seg.period_s
    retrace = seg.retrace_time_s
    tq = stats.t.ppf(0.975, np.maximum(cyc.dof, 1))
    with np.errstate(divide="ignore", invalid="ignore"):  # a flat cycle has no span: NaN
        nl = 100.0 * cyc.peak / np.abs(cyc.span)
        tnl = 100.0 * cyc.terminal_peak / np.abs(cyc.terminal_span)
    # floors: 0.2 % of slope or ramp time, 0.05 percentage points (+10 %) of nonlinearity
    out_flag = robust_outliers([(cyc.slope, 2e-3, 0.0), (cyc.ramp_time_s, 2e-3, 0.0),
                                (nl, 0.1, 0.05)])
    b = sign * cyc.slope
    h = tq * cyc.slope_se
    start = sign * cyc.start_v
    end = sign * cyc.end_v
    cols = zip(cyc.ramp_start_s.tolist(), cyc.ramp_time_s.tolist(), retrace.tolist(),
               period.tolist(), (sign * cyc.intercept).tolist(), start.tolist(), end.tolist(),
               np.abs(end - start).tolist(), b.tolist(), (b - h).tolist(), (b + h).tolist(),
               cyc.peak.tolist(), nl.tolist(), tnl.tolist(),
               np.sqrt(cyc.ssr / cyc.n_win).tolist(), out_flag.tolist())
    return tuple(
        CycleFigures(index=i, ramp_start_s=c[0], ramp_time_s=c[1], retrace_time_s=c[2],
                     period_s=c[3], offset_v=c[4], start_v=c[5], end_v=c[6], amplitude_v=c[7],
                     slope_v_per_s=c[8], slope_ci95_v_per_s=(c[9], c[10]),
                     peak_deviation_v=c[11], nonlinearity_pct=c[12],
                     terminal_nonlinearity_pct=c[13], residual_rms_v=c[14], outlier=c[15])
        for i, c in enumerate(cols))
