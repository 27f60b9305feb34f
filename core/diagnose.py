"""Why a ramp bows: the physical models compared by information criterion, and the decision.

The systematic shape of the averaged ramp (measurement frame, always rising)
is fitted over the fit window with one model per physical cause
(``models``: a line, shunt loading, a voltage coefficient, a capacitance
growing with voltage, dielectric absorption, a slope starting low, and a
Legendre catch-all), each bin weighted by its standard error.

The noise in the criterion is the bins' standard errors, made robust three
ways before the fit: each bin's variance is averaged with its neighbours'
(a spread from a dozen cycles is itself noisy); the errors are widened when
the averaged curve scatters about its smoothed self more than they say
(structure repeated in every cycle); and they are widened by the variance
inflation of noise correlated from bin to bin (batch means of the catch-all's
residual). Each widening only ever makes a curve harder to claim.

The decision, in order:

1. ``linear`` unless some curved model beats the line by more than
   :data:`BIC_MARGIN` ("strong" evidence on the Kass and Raftery scale) *and*
   the chosen model bends further from the line than the capture's
   resolution floor (``noise.nonlinearity_floor_pct``).
2. Otherwise the model with the lowest BIC among those that *explain* the
   shape: the data hardly prefer the catch-all to it (BIC within
   :data:`BIC_MARGIN`), or what it leaves of the catch-all's curve is below
   the resolution floor or below :data:`ADEQUATE_FRACTION` of the bow. A rare
   cause gives way to the common one it mimics (:data:`LIKELIER`) unless its
   BIC is lower by more than :data:`BIC_MARGIN`: a capacitance growing with
   voltage is reported only when the data rule out a shunt.
3. ``unclassified`` when none does, or when the model chosen is the early
   relaxation with the slope starting *low* (no listed cause gives that; an
   under-compensated probe does); the shape is then described in words.

Every other cause that explains the shape with a BIC within :data:`BIC_MARGIN`
of the winner's is named in ``also_consistent`` with its parameter. A BIC
difference is about ``-2 ln`` of the Bayes factor (SOURCES.md [bayes-factors]), so
within 6 the data favour the winner by at most ``e^3``, about 20 to 1: less
than "strong" on the Kass and Raftery scale, too little to rule the other
out. It is the margin that a curve needs to beat the line and a model needs
to explain the shape, so one yardstick decides "found", "explains" and "also
possible". A shunt and a capacitance growing with voltage differ only at
third order in ``x`` (``shapes``): at a bow of a few tenths of a percent the
data rarely separate them, and the diagnosis says so.

``strength`` is the peak deviation of the chosen model (the catch-all for
``unclassified``) from the best-fit line, as a multiple of the resolution
floor.

This module returns numbers and codes only (:class:`~trueslope.core.results.Diagnosis`);
the explanation and the bench steps are written by ``report``. The noise
model is ``noise``'s; the shapes are ``shapes``'s.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.polynomial import legendre

from .circuit import CircuitContext, probe_match
from .fit import LegendreSeries, to_unit_interval
from .models import MAX_POLY_DEGREE, ModelFit, fit_models
from .noise import (SMOOTH_ORDER, correlation_inflation, excess_scatter, moving_mean,
                    savgol_filter, smoothing_window)
from .results import AveragedCycle, Diagnosis, Figures, NoiseFloor, ShapeDescription

#: A curved model must lower the BIC by more than this to beat the line. On the
#: scale of Kass and Raftery (SOURCES.md [bayes-factors]) a difference of 6 to 10 is strong evidence, above 10 very strong.
BIC_MARGIN = 6.0
#: A model explains the shape when what it leaves is below the resolution floor or
#: below this fraction of the bow's peak.
ADEQUATE_FRACTION = 0.25
#: Resolution is never taken finer than this (percent of the span), so that
#: noise-free simulated data is not judged against a floor of zero.
MIN_FLOOR_PCT = 1e-4
#: Bins over which the noise of one sample is averaged (at least; or 1/20 of the window).
NOISE_SMOOTH_BINS = 25

SIGNATURES = ("linear", "shunt-loading", "voltage-coefficient", "dielectric-absorption",
              "unclassified")
#: The cause (a signature) of each physical model.
CAUSE = {"shunt-loading": "shunt-loading", "voltage-coefficient": "voltage-coefficient",
         "capacitance-growing": "voltage-coefficient",
         "dielectric-absorption": "dielectric-absorption"}
#: A rare cause and the common one it mimics: a resistance across the timing
#: capacitor (a probe, a current source's output resistance, leakage) is an
#: everyday finding, a capacitance that grows with voltage an unusual one, so
#: the shunt keeps the signature unless the data prefer the other by BIC_MARGIN.
LIKELIER = {"capacitance-growing": "shunt-loading"}


def _smooth_peak(values: np.ndarray) -> tuple[float, int]:
    """Peak |systematic part| of a residual (Savitzky-Golay as in the pipeline) and its index."""
    n = values.size
    w = smoothing_window(n)
    if w <= SMOOTH_ORDER or n < w:
        s = values
    else:
        s = savgol_filter(values, w, SMOOTH_ORDER)
    i = int(np.argmax(np.abs(s)))
    return float(abs(s[i])), i


def _curvature_of(fit: ModelFit | None, x: np.ndarray, line: np.ndarray, floor_v: float) -> str:
    """Sign of the bow from the parabola through the model's deviation from the line."""
    if fit is None:
        return "none"
    dev = fit.curve - line
    c = legendre.legfit(to_unit_interval(x), dev, 2)
    # P2 term's peak is |c2| (at the ends); below half the floor it does not count
    if abs(c[2]) < 0.5 * floor_v:
        return "none"
    return "concave" if c[2] < 0 else "convex"


def diagnose(averaged: AveragedCycle, figures: Figures, noise: NoiseFloor,
             context: CircuitContext | None = None) -> Diagnosis:
    """Classify the systematic residual of the averaged cycle by its physical cause.

    Parameters
    ----------
    averaged : AveragedCycle
        The coherent average; only its bins inside the fit window are used,
        in the measurement frame (``measured_v``, always rising), weighted by
        ``stderr_v``.
    figures : Figures
        Summary figures (ramp time, fitted span).
    noise : NoiseFloor
        The resolution floor, ``nonlinearity_floor_pct``.
    context : CircuitContext, optional
        When it gives the capacitance, shunt loading also reports the
        equivalent resistance ``R = tau / (C + C_probe)``.

    Returns
    -------
    Diagnosis
        Never raises on a strange shape: it is then ``unclassified`` and
        described in words.

    Notes
    -----
    Models, criterion and decision rules are in the module docstring.
    """
    data = window_data(averaged, figures, noise)
    if data is None:
        n = int(np.count_nonzero(np.asarray(averaged.in_window, dtype=bool)))
        return _not_measurable(n, "not-measurable")
    t, y, se, T, span, floor_pct = (data.time_s, data.voltage_v, data.stderr_v,
                                    data.ramp_time_s, data.span_v, data.floor_pct)
    floor_v = floor_pct * span / 100.0
    x = t / T
    bin_width = float(np.median(np.diff(x))) if x.size > 1 else 1.0
    x_start = float(averaged.window_start_s) / T

    try:
        with np.errstate(all="ignore"):
            fits = fit_models(x, y, se, x_start, bin_width)
    except (np.linalg.LinAlgError, ValueError):  # pragma: no cover - defensive
        return _not_measurable(t.size, "fit-failed")
    scores = {name: m.bic for name, m in fits.items()}
    line = fits["line"]
    poly = fits.get("polynomial")
    curved = [m for k, m in fits.items() if k != "line"]
    best_curved = min(curved, key=lambda m: m.bic)
    evidence = line.bic - best_curved.bic
    physical = [fits[k] for k in CAUSE if k in fits]
    shapes = physical + ([fits["relaxation-low"]] if "relaxation-low" in fits else [])
    # The systematic shape is the catch-all's curve (its degree chosen by BIC, so it
    # follows the data as closely as the noise allows); a model explains the shape
    # when the data hardly prefer the catch-all to it, or when what it leaves of the
    # shape is below the resolution floor or a small fraction of the bow.
    shape = poly.curve if poly is not None else y
    bow_v = _bend(poly, line) if poly is not None else _smooth_peak(y - line.curve)[0]
    left = {m.name: float(np.max(np.abs(shape - m.curve))) for m in shapes}
    tol = max(floor_v, ADEQUATE_FRACTION * bow_v)
    adequate = [m for m in shapes
                if m.bic - best_curved.bic <= BIC_MARGIN or left[m.name] <= tol]
    win = _likelier(min(adequate, key=lambda m: m.bic), adequate) if adequate else None
    best_phys = _likelier(min(physical, key=lambda m: m.bic), physical) if physical else None
    ref = win or poly or best_curved
    strength = _bend(ref, line) / floor_v
    ctx_c = _context_capacitance(context)
    common = dict(model_scores=scores, evidence=float(evidence), floor_pct=floor_pct,
                  window_points=int(t.size))

    if evidence <= BIC_MARGIN or strength < 1.0:
        if best_phys is not None and evidence <= BIC_MARGIN:
            strength = _bend(best_phys, line) / floor_v
        lean = best_phys is not None and strength > 0.3
        return Diagnosis(
            signature="linear",
            reason="no-clear-margin" if evidence <= BIC_MARGIN else "below-resolution",
            strength=strength, curvature="none",
            closest_cause=CAUSE[best_phys.name] if lean else None,
            closest_cause_pct=100 * _bend(best_phys, line) / span if lean else None,
            **common)

    if win is not None and win.name != "relaxation-low":
        also = _also_consistent(win, adequate, T)
        return _physical(win, x, line, T, span, strength, left[win.name], ctx_c,
                         dict(common, **also))

    # unclassified: describe what it looks like
    nearest = dict(closest_cause=CAUSE[best_phys.name] if best_phys else None,
                   closest_cause_pct=(100.0 * left[best_phys.name] / span if best_phys
                                      else None))
    if win is not None:  # an early relaxation with the slope starting low
        return Diagnosis(signature="unclassified", reason="relaxation-low", strength=strength,
                         curvature="convex", tau_s=win.theta * T, tau_fraction=win.theta,
                         unexplained_pct=100.0 * left[win.name] / span, **nearest, **common)
    unexplained = min((left[m.name] for m in physical), default=bow_v)
    return Diagnosis(signature="unclassified", reason="no-model-fits", strength=strength,
                     curvature=_curvature_of(poly or best_curved, x, line.curve, floor_v),
                     shape=_shape(x, y, fits, span), unexplained_pct=100.0 * unexplained / span,
                     **nearest, **common)



@dataclass(frozen=True)
class WindowData:
    """The averaged cycle's bins inside the fit window, as the models are fitted to them.

    ``time_s`` from the ramp start, ``voltage_v`` in the measurement frame,
    ``stderr_v`` made robust (module docstring); ``ramp_time_s``; ``span_v`` the
    fitted span; ``floor_pct`` the resolution floor (at least :data:`MIN_FLOOR_PCT`).
    """

    time_s: np.ndarray
    voltage_v: np.ndarray
    stderr_v: np.ndarray
    ramp_time_s: float
    span_v: float
    floor_pct: float


def window_data(averaged: AveragedCycle, figures: Figures,
                noise: NoiseFloor) -> WindowData | None:
    """The bins the models are fitted to, with robust standard errors; None when the
    window holds fewer than 8 usable bins or the span or floor is not finite."""
    inw = np.asarray(averaged.in_window, dtype=bool)
    t = np.asarray(averaged.time_s, dtype=float)[inw]
    y = np.asarray(averaged.measured_v, dtype=float)[inw]
    se = np.asarray(averaged.stderr_v, dtype=float)[inw]
    ok = np.isfinite(t) & np.isfinite(y)
    t, y, se = t[ok], y[ok], se[ok]
    T = float(averaged.ramp_time_s) if averaged.ramp_time_s > 0 else float(figures.ramp_time_s)
    span = float(figures.fitted_span_v) if math.isfinite(figures.fitted_span_v) else math.nan
    if not (t.size >= 8 and T > 0 and span > 0):
        return None
    floor_pct = noise.nonlinearity_floor_pct
    if not math.isfinite(floor_pct):
        return None
    floor_pct = max(floor_pct, MIN_FLOOR_PCT)
    floor_v = floor_pct * span / 100.0
    good = np.isfinite(se) & (se > 0)
    fill = float(np.median(se[good])) if np.any(good) else floor_v
    se = np.where(good, se, fill)
    # Each bin's spread comes from few cycles, so its variance is itself noisy and
    # a bin that happens to look quiet would dominate the fit. The noise of one
    # sample varies slowly along a ramp: average it over neighbouring bins.
    cnt = np.asarray(averaged.count, dtype=float)[inw][ok]
    cnt = np.where(np.isfinite(cnt) & (cnt > 0), cnt, 1.0)
    per_sample = se * se * cnt
    k = int(min(max(NOISE_SMOOTH_BINS, se.size // 20), se.size))
    se = np.sqrt(moving_mean(per_sample, k) / cnt)
    # Structure repeated in every cycle (a quantisation pattern locked to the sample
    # clock) is not in the cycle-to-cycle spread; where the averaged curve scatters
    # about its smoothed self more than the standard errors say, widen them to match.
    se = se * max(1.0, _scatter_ratio(y, se))
    # Noise correlated from bin to bin (a bandwidth limit, bins finer than the
    # noise's correlation time) averages down more slowly than the chi-square
    # assumes; widen the errors by the variance inflation seen at longer scales.
    se = se * math.sqrt(_correlation_inflation(t / T, y, se))
    # a simulated, noise-free capture would give standard errors of zero
    se = np.maximum(se, 1e-8 * span)
    return WindowData(t, y, se, T, span, floor_pct)

def _scatter_ratio(y: np.ndarray, se: np.ndarray) -> float:
    """Excess scatter of the averaged curve about its own smoothing (``noise.excess_scatter``)."""
    n = y.size
    w = smoothing_window(n)
    if n < w or w <= SMOOTH_ORDER + 1:
        return 1.0
    hp = y - savgol_filter(y, w, SMOOTH_ORDER)
    return excess_scatter(hp, se, w)


def _correlation_inflation(x: np.ndarray, y: np.ndarray, se: np.ndarray) -> float:
    """Variance inflation of bin-to-bin correlated noise about a smooth catch-all.

    The residual of the Legendre series of degree ``MAX_POLY_DEGREE`` is
    normalised by ``se`` (and by the degrees of freedom the fit took), then
    handed to :func:`trueslope.core.noise.correlation_inflation`.
    """
    n = y.size
    if n < 64:
        return 1.0
    w = 1.0 / se
    try:
        fit = LegendreSeries(x, y, w, MAX_POLY_DEGREE).curve(MAX_POLY_DEGREE)
    except np.linalg.LinAlgError:
        return 1.0
    z = (y - fit) * w
    z = z / max(math.sqrt(1.0 - (MAX_POLY_DEGREE + 1) / n), 1e-3)
    return correlation_inflation(z)


def _bend(m: ModelFit | None, line: ModelFit) -> float:
    """Largest distance of a model from the best-fit line over the window, volts."""
    return float(np.max(np.abs(m.curve - line.curve))) if m is not None else 0.0


def _likelier(m: ModelFit, pool: list[ModelFit]) -> ModelFit:
    """``m``, or the common cause it mimics (:data:`LIKELIER`) when that is in ``pool``
    and ``m`` beats it by no more than :data:`BIC_MARGIN`."""
    other = next((p for p in pool if p.name == LIKELIER.get(m.name)), None)
    return other if other is not None and other.bic - m.bic <= BIC_MARGIN else m


def _also_consistent(win: ModelFit, adequate: list[ModelFit], T: float) -> dict:
    """The other causes that explain the shape within :data:`BIC_MARGIN` of ``win``,
    likeliest first, with the time constant or voltage coefficient each implies."""
    causes: list[str] = []
    tau = vc = None
    for m in sorted(adequate, key=lambda m: m.bic):
        cause = CAUSE.get(m.name)
        if (cause is None or cause == CAUSE[win.name] or cause in causes
                or m.bic - win.bic > BIC_MARGIN):
            continue
        causes.append(cause)
        if m.name == "shunt-loading" and tau is None:
            tau = T / m.theta
        elif m.name == "dielectric-absorption" and tau is None:
            tau = m.theta * T
        elif m.name in ("voltage-coefficient", "capacitance-growing") and vc is None:
            vc = _per_volt(m)
    return dict(also_consistent=tuple(causes), also_tau_s=tau,
                also_voltage_coefficient_per_v=vc)


def _per_volt(m: ModelFit) -> float:
    """Fractional change of the slope per volt at the ramp start, 1/V.

    ``theta / a`` with ``a`` (the shape's coefficient) the starting slope times
    T: ``k / a`` for the exponential form, ``g / a`` = ``beta / (1 -+ beta V0)``
    for the square-root forms (``shapes``); negative for a growing capacitance.
    """
    sign = -1.0 if m.name == "capacitance-growing" else 1.0
    return sign * m.theta / float(m.coef[1])


def _context_capacitance(context: CircuitContext | None) -> float | None:
    c = None if context is None else context.effective_capacitance_f
    return float(c) if c is not None and math.isfinite(c) and c > 0 else None


def _physical(win: ModelFit, x: np.ndarray, line: ModelFit, T: float, span: float,
              strength: float, left_v: float, cap_f: float | None,
              common: dict) -> Diagnosis:
    """The diagnosis of a physical cause: its parameters in physical units."""
    name = win.name
    bow_pct = 100.0 * _bend(win, line) / span
    unexplained = 100.0 * left_v / span
    if name == "shunt-loading":
        tau = T / win.theta
        shunt = tau / cap_f if cap_f is not None else None
        return Diagnosis(
            signature=name, reason="", strength=strength, curvature="concave", tau_s=tau,
            tau_fraction=tau / T, equivalent_shunt_ohm=shunt, probe_match=probe_match(shunt),
            slope_change_pct=100.0 * -math.expm1(-win.theta * (x[-1] - x[0])),
            bow_pct=bow_pct, unexplained_pct=unexplained, **common)
    if name == "voltage-coefficient":
        decided = win.rival_chi2 is not None and win.rival_chi2 - win.chi2 > BIC_MARGIN
        return Diagnosis(
            signature=name, reason="", strength=strength, curvature="convex",
            voltage_coefficient_per_v=_per_volt(win),
            vc_form=win.variant if decided else "undecided",
            bow_pct=bow_pct, unexplained_pct=unexplained, **common)
    if name == "capacitance-growing":
        return Diagnosis(
            signature="voltage-coefficient", reason="", strength=strength,
            curvature="concave", voltage_coefficient_per_v=_per_volt(win), vc_form="growing",
            bow_pct=bow_pct, unexplained_pct=unexplained, **common)
    return Diagnosis(  # dielectric absorption
        signature=name, reason="", strength=strength, curvature="concave",
        tau_s=win.theta * T, tau_fraction=win.theta, bow_pct=bow_pct,
        unexplained_pct=unexplained, **common)


def _not_measurable(n: int, reason: str) -> Diagnosis:
    return Diagnosis(signature="unclassified", reason=reason, strength=math.nan,
                     curvature="none", window_points=int(n))


def _shape(x: np.ndarray, y: np.ndarray, fits: dict[str, ModelFit],
           span: float) -> ShapeDescription:
    """A shape none of the physical models explains, in numbers."""
    poly = fits.get("polynomial")
    line = fits["line"].curve
    curve = poly.curve if poly is not None else y
    dev = curve - line
    # where the systematic deviation crosses the best-fit line (ignore crossings in noise)
    level = 0.1 * float(np.max(np.abs(dev))) if dev.size else 0.0
    sig = np.sign(np.where(np.abs(dev) > level, dev, 0.0))
    sig = sig[sig != 0]
    crossings = int(np.count_nonzero(np.diff(sig))) if sig.size else 0
    i = int(np.argmax(np.abs(dev)))
    slope = np.gradient(curve, x)
    kind = "bow" if crossings <= 2 else ("s-bend" if crossings == 3 else "wavy")
    return ShapeDescription(
        kind=kind, bumps=max(crossings - 1, 0) if kind == "wavy" else 0,
        peak_pct=100.0 * abs(dev[i]) / span if span > 0 else math.nan,
        peak_at_fraction=float(x[i]), steepest_at_fraction=float(x[int(np.argmax(slope))]),
        flattest_at_fraction=float(x[int(np.argmin(slope))]),
        peak_in_window_fraction=float((x[i] - x[0]) / max(x[-1] - x[0], 1e-300)))
