"""Why a ramp bows: physical models of the averaged cycle compared by information criterion.

The systematic shape of the averaged ramp (measurement frame, always rising)
is fitted over the fit window by weighted least squares, each bin weighted by
its standard error, with one model per physical cause:

============================  =====================================================  ======
model                         shape, ``x = t / T`` (T = mean ramp time)              params
============================  =====================================================  ======
``line``                      ``a + b x``                                            2
``shunt-loading``             ``a + b (1 - exp(-k x)) / k``, ``k = T / tau > 0``:     3
                              current into C with R across it, ``dV/dt = I/C - V/RC``
``voltage-coefficient``       slope rising with voltage, the better of               3
                              ``a + b (exp(k x) - 1) / k`` (charge current growing
                              with V) and ``a + b (1 - sqrt(1 - 2 g x)) / g``
                              (``C = C0 (1 - beta V)`` at constant current, exact)
``dielectric-absorption``     ``a + b x - A exp(-(x - x0) / r)``, ``A > 0``,          4
                              ``r = tau / T < 1/2``: the early relaxation of a
                              Dow-model absorption branch after each reset
``polynomial``                Legendre series of the degree (2..10) with the lowest  3..11
                              criterion: the catch-all for shapes none of the
                              above explains
============================  =====================================================  ======

Each model's score is the Bayesian information criterion
``BIC = chi2 + p ln n`` with ``chi2 = sum(((v - model) / stderr)^2)`` (Schwarz,
Ann. Statist. 6, 1978). Every nonlinear model has one nonlinear parameter
(``k``, ``g`` or ``r``); for a fixed value the others follow by linear least
squares (variable projection), so the fit is a bounded one-dimensional
search (:func:`scipy.optimize.minimize_scalar`) started from the best point
of a logarithmic grid, which cannot fail to converge.

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
   the resolution floor or below :data:`ADEQUATE_FRACTION` of the bow.
3. ``unclassified`` when none does, or when the model chosen is the early
   relaxation with the slope starting *low* (no listed cause gives that; an
   under-compensated probe does); the shape is then described in words.

``strength`` is the peak deviation of the chosen model (the catch-all for
``unclassified``) from the best-fit line, as a multiple of the resolution
floor.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np
from numpy.polynomial import legendre
from scipy import ndimage, optimize, signal

from .context import CircuitContext, probe_match
from .linearity import SMOOTH_ORDER, smoothing_window
from .results import AveragedCycle, Figures, NoiseFloor, _plain
from .units import format_si

#: A curved model must lower the BIC by more than this to beat the line. On the
#: scale of Kass and Raftery ("Bayes factors", J. Amer. Statist. Assoc. 90, 1995;
#: from memory) a difference of 6 to 10 is strong evidence, above 10 very strong.
BIC_MARGIN = 6.0
#: A model explains the shape when what it leaves is below the resolution floor or
#: below this fraction of the bow's peak.
ADEQUATE_FRACTION = 0.25
#: Longest absorption time constant, as a fraction of the ramp ("shorter than the ramp").
DA_MAX_TAU_FRACTION = 0.5
#: Largest ``k = T / tau`` of the exponential models: the slope changes by e^3 at most.
MAX_RATE = 3.0
#: Highest Legendre degree of the catch-all polynomial.
MAX_POLY_DEGREE = 10
#: Resolution is never taken finer than this (percent of the span), so that
#: noise-free simulated data is not judged against a floor of zero.
MIN_FLOOR_PCT = 1e-4
#: Bins over which the noise of one sample is averaged (at least; or 1/20 of the window).
NOISE_SMOOTH_BINS = 25
#: Median of a chi-square variable with one degree of freedom (scipy.stats.chi2.median(1)).
CHI2_1_MEDIAN = 0.454936423119572
#: Strength boundaries: below 1 the shape is not above the noise.
STRENGTH_CLEAR = 3.0
STRENGTH_STRONG = 10.0

SIGNATURES = ("linear", "shunt-loading", "voltage-coefficient", "dielectric-absorption",
              "unclassified")


@dataclass(frozen=True)
class Diagnosis:
    """What the shape of the averaged ramp says about its cause.

    Attributes
    ----------
    signature : str
        One of ``"linear"``, ``"shunt-loading"``, ``"voltage-coefficient"``,
        ``"dielectric-absorption"``, ``"unclassified"``.
    strength : float
        Peak deviation of the best curved model from the best-fit line, as a
        multiple of the resolution floor (below 1: not above the noise).
    strength_words : str
        The same for a technician, e.g. ``"clear (4.2x the resolution)"``.
    curvature : str
        ``"concave"`` (the slope falls along the ramp), ``"convex"`` (it
        rises) or ``"none"``.
    tau_s : float or None
        Time constant of the winning model: ``R C`` for shunt loading, the
        relaxation time for dielectric absorption, seconds.
    equivalent_shunt_ohm : float or None
        ``tau_s / C`` for shunt loading when the capacitance is known (the
        probe's capacitance added), ohms.
    explanation : str
        Two or three plain sentences.
    next_checks : tuple of str
        Bench steps that would confirm or rule out the cause.
    model_scores : dict of str to float
        BIC of every model tried (lower is better).
    voltage_coefficient_per_v : float or None
        For ``voltage-coefficient``: fractional rise of the slope per volt of
        ramp at its start (for a capacitance ``C0 (1 - beta V)``, this is
        ``beta`` referred to the start voltage), 1/V.
    evidence : float
        BIC of the line minus BIC of the best curved model: how strongly the
        data prefer a curve (above :data:`BIC_MARGIN` counts).
    unexplained_pct : float or None
        Peak systematic residual left by the winning physical model, % of
        the fitted span (None for ``linear``).
    """

    signature: str
    strength: float
    strength_words: str
    curvature: str
    tau_s: float | None
    equivalent_shunt_ohm: float | None
    explanation: str
    next_checks: tuple[str, ...]
    model_scores: dict[str, float] = field(default_factory=dict)
    voltage_coefficient_per_v: float | None = None
    evidence: float = 0.0
    unexplained_pct: float | None = None

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON types; non-finite numbers become None."""
        return {
            "signature": self.signature,
            "strength": _plain(self.strength),
            "strength_words": self.strength_words,
            "curvature": self.curvature,
            "tau_s": _plain(self.tau_s),
            "equivalent_shunt_ohm": _plain(self.equivalent_shunt_ohm),
            "explanation": self.explanation,
            "next_checks": list(self.next_checks),
            "model_scores": _plain(dict(self.model_scores)),
            "voltage_coefficient_per_v": _plain(self.voltage_coefficient_per_v),
            "evidence": _plain(self.evidence),
            "unexplained_pct": _plain(self.unexplained_pct),
        }


# ----------------------------------------------------------------------------- model fitting

@dataclass(frozen=True)
class ModelFit:
    """One model fitted to the window of the averaged cycle (internal, but public for tests).

    Attributes
    ----------
    name : str
    params : int
        Number of fitted parameters (the BIC penalty counts them).
    chi2 : float
        Sum of squared, standard-error-weighted residuals.
    bic : float
    curve : ndarray
        Model values on the window's bins, volts.
    theta : float or None
        The nonlinear parameter: ``k``, ``g`` or ``r`` (dimensionless).
    coef : ndarray
        Linear coefficients, in the order of the model's basis.
    variant : str
        Which form of the model won (``"exp"`` or ``"sqrt"`` for the voltage
        coefficient, the degree for the polynomial).
    rival_chi2 : float or None
        chi2 of the other form, where a model has two.
    """

    name: str
    params: int
    chi2: float
    bic: float
    curve: np.ndarray
    theta: float | None
    coef: np.ndarray
    variant: str = ""
    rival_chi2: float | None = None


class _Fitter:
    """Weighted least squares on fixed bins: a fixed basis plus one column that varies.

    The fixed columns are projected out once (QR), so each trial of the
    varying column costs a few dot products:
    ``chi2 = |r_y|^2 - (r_g . r_y)^2 / |r_g|^2`` with ``r`` the weighted
    residuals after the fixed columns.
    """

    def __init__(self, x: np.ndarray, y: np.ndarray, w: np.ndarray) -> None:
        self.x = x
        self.w = w
        self.wy = w * y
        self.n = x.size
        self.log_n = math.log(self.n)
        self._q: dict[int, tuple[np.ndarray, np.ndarray]] = {}

    def solve(self, basis: np.ndarray) -> tuple[float, np.ndarray]:
        """chi2 and coefficients of ``y ~ basis @ c`` (basis: n x p, full column rank)."""
        q, r = np.linalg.qr(basis * self.w[:, None])
        qy = q.T @ self.wy
        c = np.linalg.solve(r, qy) if abs(np.linalg.det(r)) > 0 else np.linalg.lstsq(
            r, qy, rcond=None)[0]
        res = self.wy - q @ qy
        return float(res @ res), c

    def _projector(self, fixed: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        key = fixed.shape[1]
        if key not in self._q:
            q, r = np.linalg.qr(fixed * self.w[:, None])
            self._q[key] = (q, r, self.wy - q @ (q.T @ self.wy))
        return self._q[key]

    def profile(self, name: str, fixed: np.ndarray, column: Callable[[float], np.ndarray],
                lo: float, hi: float, sign: float = 1.0, grid: int = 40,
                variant: str = "") -> ModelFit | None:
        """Fit ``y ~ fixed @ c + a * column(theta)``, theta in [lo, hi] (log grid).

        Only solutions with ``sign * a > 0`` are admissible (the physical sign of
        the bend); others score +inf. Returns None when no trial was admissible.
        """
        q, rq, ry = self._projector(fixed)
        ry2 = float(ry @ ry)
        s_lo, s_hi = math.log(lo), math.log(hi)

        def cost(s: float) -> float:
            g = self.w * column(math.exp(s))
            if not np.all(np.isfinite(g)):
                return math.inf
            rg = g - q @ (q.T @ g)
            gg = float(rg @ rg)
            if gg <= 1e-300:
                return math.inf
            gy = float(rg @ ry)
            if sign * gy <= 0:
                return math.inf
            return ry2 - gy * gy / gg

        ss = np.linspace(s_lo, s_hi, grid)
        costs = np.array([cost(s) for s in ss])
        finite = np.isfinite(costs)
        if not np.any(finite):
            return None
        i = int(np.argmin(np.where(finite, costs, np.inf)))
        best_s, best_c = float(ss[i]), float(costs[i])
        a_, b_ = ss[max(i - 1, 0)], ss[min(i + 1, grid - 1)]
        if b_ > a_:
            res = optimize.minimize_scalar(cost, bounds=(a_, b_), method="bounded",
                                           options={"xatol": 1e-5 * (s_hi - s_lo)})
            if math.isfinite(res.fun) and res.fun < best_c:
                best_s = float(res.x)
        theta = math.exp(best_s)
        col = column(theta)
        g = self.w * col
        rg = g - q @ (q.T @ g)
        a = float(rg @ ry) / float(rg @ rg)
        # the fixed columns' coefficients: least squares of what the column leaves
        c_fixed = np.linalg.solve(rq, q.T @ (self.wy - a * g))
        c = np.append(c_fixed, a)
        curve = fixed @ c_fixed + a * col
        res = self.wy - self.w * curve
        chi2 = float(res @ res)
        p = fixed.shape[1] + 2
        return ModelFit(name=name, params=p, chi2=chi2, bic=chi2 + p * self.log_n,
                        curve=curve, theta=theta, coef=c, variant=variant)


class LegendreSeries:
    """Weighted least-squares Legendre series of every degree up to ``top`` at once.

    The Legendre basis on ``[-1, 1]`` is well conditioned on an even grid, so the
    normal equations are safe; the Cholesky factor of their matrix holds the
    factor of every leading block, so the residual of every degree is one
    cumulative sum: ``chi2(d) = |w y|^2 - sum_{j <= d} z_j^2``, ``L z = V^T W^2 y``.
    """

    def __init__(self, x: np.ndarray, y: np.ndarray, w: np.ndarray, top: int) -> None:
        u = 2.0 * (x - x[0]) / max(x[-1] - x[0], 1e-300) - 1.0
        self.v = legendre.legvander(u, top)
        a = self.v * w[:, None]
        wy = w * y
        self.chol = np.linalg.cholesky(a.T @ a)
        self.z = np.linalg.solve(self.chol, a.T @ wy)
        self.chi2 = np.maximum(float(wy @ wy) - np.cumsum(self.z * self.z), 0.0)

    def coef(self, d: int) -> np.ndarray:
        """Coefficients of the degree-``d`` fit."""
        return np.linalg.solve(self.chol[: d + 1, : d + 1].T, self.z[: d + 1])

    def curve(self, d: int) -> np.ndarray:
        """Values of the degree-``d`` fit on the bins."""
        return self.v[:, : d + 1] @ self.coef(d)


def _expm1_over(k: float, x: np.ndarray) -> np.ndarray:
    """(1 - exp(-k x)) / k, continuous through k = 0."""
    if abs(k) < 1e-9:
        return x.copy()
    return -np.expm1(-k * x) / k


def _sqrt_form(g: float, x: np.ndarray) -> np.ndarray:
    """(1 - sqrt(1 - 2 g x)) / g: charge at constant current into C0 (1 - beta V)."""
    if abs(g) < 1e-9:
        return x.copy()
    return 2.0 * x / (1.0 + np.sqrt(1.0 - 2.0 * g * x))  # same value, no cancellation


def fit_models(x: np.ndarray, y: np.ndarray, sigma: np.ndarray,
               x_start: float, bin_width: float) -> dict[str, ModelFit]:
    """Fit every model of the module docstring.

    Parameters
    ----------
    x : ndarray
        Bin times as a fraction of the ramp time (0 = ramp start).
    y : ndarray
        Averaged voltage, measurement frame, volts.
    sigma : ndarray
        Standard error of each bin, volts (positive).
    x_start : float
        Start of the fit window (fraction of the ramp).
    bin_width : float
        Spacing of the bins (fraction of the ramp).

    Returns
    -------
    dict
        ``"line"``, ``"shunt-loading"``, ``"voltage-coefficient"``,
        ``"dielectric-absorption"``, ``"relaxation-low"`` (early relaxation
        with the slope starting low) and ``"polynomial"``; a model whose fit
        found no admissible solution is left out.
    """
    f = _Fitter(x, y, 1.0 / sigma)
    one = np.ones_like(x)
    out: dict[str, ModelFit] = {}
    chi2, c = f.solve(np.column_stack([one, x]))
    out["line"] = ModelFit("line", 2, chi2, chi2 + 2 * f.log_n, np.column_stack([one, x]) @ c,
                           None, c)

    x_end = float(x[-1])
    # the smallest rates leave a bend far below any noise: the models reach the line
    kmin = 1e-7
    const = one[:, None]
    shunt = f.profile("shunt-loading", const, lambda k: _expm1_over(k, x), kmin, MAX_RATE)
    if shunt is not None:
        out["shunt-loading"] = shunt
    vc_exp = f.profile("voltage-coefficient", const, lambda k: _expm1_over(-k, x), kmin,
                       MAX_RATE, variant="exp")
    g_hi = 0.4999 / max(x_end, 1e-9)
    vc_sqrt = f.profile("voltage-coefficient", const, lambda g: _sqrt_form(g, x), kmin * g_hi,
                        g_hi, variant="sqrt")
    cands = [m for m in (vc_exp, vc_sqrt) if m is not None]
    if cands:
        best = min(cands, key=lambda m: m.chi2)
        rival = max(cands, key=lambda m: m.chi2) if len(cands) == 2 else None
        out["voltage-coefficient"] = dataclasses.replace(
            best, rival_chi2=None if rival is None else rival.chi2)
    # An early relaxation must still be visible at the window's start and must
    # not be finer than the bins.
    r_lo = max(x_start / 7.0, 2.0 * bin_width, 1e-4)
    r_hi = DA_MAX_TAU_FRACTION
    if r_lo < r_hi:
        lin = np.column_stack([one, x])

        def relax(r: float) -> np.ndarray:
            return -np.exp(-(x - x_start) / r)

        da = f.profile("dielectric-absorption", lin, relax, r_lo, r_hi, sign=1.0)
        if da is not None:
            out["dielectric-absorption"] = da
        low = f.profile("relaxation-low", lin, relax, r_lo, r_hi, sign=-1.0)
        if low is not None:
            out["relaxation-low"] = low
    # catch-all: Legendre series over the window, degree by BIC
    top = min(MAX_POLY_DEGREE, x.size - 3)
    if top >= 2:
        series = LegendreSeries(x, y, f.w, top)
        chi2s = series.chi2
        degs = np.arange(2, top + 1)
        bics = chi2s[degs] + (degs + 1) * f.log_n
        d = int(degs[int(np.argmin(bics))])
        out["polynomial"] = ModelFit("polynomial", d + 1, float(chi2s[d]), float(bics[d - 2]),
                                     series.curve(d), None, series.coef(d), variant=str(d))
    return out


# ----------------------------------------------------------------------------- words

def strength_words(strength: float) -> str:
    """Words a technician reads for a strength (multiple of the resolution floor)."""
    if not math.isfinite(strength):
        return "not measurable"
    n = f"{strength:.2g}x the resolution" if strength < 10 else f"{strength:.0f}x the resolution"
    if strength < 1.0:
        return f"not above the noise ({n})"
    if strength < STRENGTH_CLEAR:
        return f"slight ({n})"
    if strength < STRENGTH_STRONG:
        return f"clear ({n})"
    return f"strong ({n})"


def _si(value: float, unit: str) -> str:
    """Engineering notation for the explanation text (e.g. 4.70 MΩ, 120 µs)."""
    return format_si(value, unit, 3)


def _where(frac: float) -> str:
    if frac < 0.3:
        return "early in the ramp"
    if frac > 0.7:
        return "late in the ramp"
    return "near the middle of the ramp"


NEXT_CHECKS: dict[str, tuple[str, ...]] = {
    "linear": (
        "Nothing to correct at this resolution. To look closer, average more cycles or "
        "capture with more vertical resolution (a more sensitive range with the scope's "
        "offset, or a high-resolution acquisition mode).",
    ),
    "shunt-loading": (
        "Re-capture at another repetition rate: loading bends the ramp the same way at any "
        "rate (same time constant), while dielectric absorption changes with the rate.",
        "Move the probe from 1x to 10x, or measure through a buffer, and re-capture: if the "
        "bow shrinks, the probe or the scope input is the shunt.",
        "Check the current source's output resistance (its compliance headroom at the top of "
        "the ramp) and look for leakage across the capacitor (flux residue, a damp board, a "
        "leaky electrolytic).",
        "Compare the equivalent shunt with 10 Mohm (10x probe) and 1 Mohm (1x probe or scope "
        "input): give the timing capacitance and the probe in the circuit context for this check.",
    ),
    "voltage-coefficient": (
        "Swap the timing capacitor for a C0G/NP0 ceramic or a polypropylene film part of the "
        "same value: a class 2 ceramic (X7R, X5R, Y5V) loses capacitance with DC bias.",
        "Measure at a lower supply or a smaller swing: a voltage coefficient's bow shrinks "
        "with the swing, while a fixed timing defect does not.",
        "Check that the charging current does not rise with the ramp voltage (measure the "
        "current at the bottom and top of the ramp; look for positive feedback or a "
        "bootstrap that over-compensates).",
    ),
    "dielectric-absorption": (
        "Re-capture at another repetition rate: absorption changes with the rate (the early "
        "relaxation keeps its time constant while the ramp's length changes); loading does "
        "not.",
        "Check the probe's compensation on the scope's calibrator square wave: a "
        "mis-compensated 10x probe adds an exponential tail after every reset edge that looks "
        "just like this.",
        "Swap to a polypropylene or C0G part (dielectric absorption about 0.1 % or less, "
        "against about 2 % for X7R and 10 % or more for an aluminium electrolytic).",
        "Lengthen the reset (discharge) time and see whether the early relaxation shrinks.",
    ),
    "unclassified": (
        "Check the probe's compensation on the scope's calibrator square wave: a "
        "mis-compensated 10x probe adds an exponential tail after every reset edge.",
        "Look at the supply and the reference at the ramp rate for ripple or steps that the "
        "current source passes on.",
        "Capture a few single cycles at full resolution to see whether the shape repeats in "
        "every cycle or comes and goes (interference).",
        "Check the reset switch and comparator for ringing or a slow release at the start of "
        "the ramp.",
    ),
}


# ----------------------------------------------------------------------------- diagnosis

def _smooth_peak(values: np.ndarray) -> tuple[float, int]:
    """Peak |systematic part| of a residual (Savitzky-Golay as in the pipeline) and its index."""
    n = values.size
    w = smoothing_window(n)
    if w <= SMOOTH_ORDER or n < w:
        s = values
    else:
        s = signal.savgol_filter(values, w, SMOOTH_ORDER, mode="interp")
    i = int(np.argmax(np.abs(s)))
    return float(abs(s[i])), i


def _describe_shape(x: np.ndarray, y: np.ndarray, fits: dict[str, ModelFit],
                    span: float) -> str:
    """A sentence describing a shape none of the physical models explains."""
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
    frac = (x[i] - x[0]) / max(x[-1] - x[0], 1e-300)
    slope = np.gradient(curve, x)
    j_hi, j_lo = int(np.argmax(slope)), int(np.argmin(slope))
    peak_pct = 100.0 * abs(dev[i]) / span if span > 0 else math.nan
    if crossings <= 2:
        kind = "a single bow"
    elif crossings == 3:
        kind = "an S-shaped bend (the curvature changes sign along the ramp)"
    else:
        kind = f"a wavy shape with about {crossings - 1} bumps"
    return (f"The ramp shows {kind}; its largest deviation from the best-fit line, "
            f"{peak_pct:.3g} % of the span, lies {_where(frac)} ({100 * x[i]:.0f} % of the ramp "
            f"time), and the slope is steepest at {100 * x[j_hi]:.0f} % and flattest at "
            f"{100 * x[j_lo]:.0f} % of the ramp.")


def _curvature_of(fit: ModelFit | None, x: np.ndarray, line: np.ndarray, floor_v: float) -> str:
    """Sign of the bow from the parabola through the model's deviation from the line."""
    if fit is None:
        return "none"
    dev = fit.curve - line
    u = 2.0 * (x - x[0]) / max(x[-1] - x[0], 1e-300) - 1.0
    c = legendre.legfit(u, dev, 2)
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
    inw = np.asarray(averaged.in_window, dtype=bool)
    t = np.asarray(averaged.time_s, dtype=float)[inw]
    y = np.asarray(averaged.measured_v, dtype=float)[inw]
    se = np.asarray(averaged.stderr_v, dtype=float)[inw]
    ok = np.isfinite(t) & np.isfinite(y)
    t, y, se = t[ok], y[ok], se[ok]
    T = float(averaged.ramp_time_s) if averaged.ramp_time_s > 0 else float(figures.ramp_time_s)
    span = float(figures.fitted_span_v) if math.isfinite(figures.fitted_span_v) else math.nan
    if not (t.size >= 8 and T > 0 and span > 0):
        return _not_measurable(t.size)
    floor_pct = noise.nonlinearity_floor_pct
    if not math.isfinite(floor_pct):
        return _not_measurable(t.size)
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
    se = np.sqrt(ndimage.uniform_filter1d(per_sample, k, mode="nearest") / cnt)
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
    x = t / T
    bin_width = float(np.median(np.diff(x))) if x.size > 1 else 1.0
    x_start = float(averaged.window_start_s) / T

    try:
        with np.errstate(all="ignore"):
            fits = fit_models(x, y, se, x_start, bin_width)
    except (np.linalg.LinAlgError, ValueError) as exc:  # pragma: no cover - defensive
        return _not_measurable(t.size, f"the model fits failed ({exc})")
    scores = {name: m.bic for name, m in fits.items()}
    line = fits["line"]
    poly = fits.get("polynomial")
    curved = [m for k, m in fits.items() if k != "line"]
    best_curved = min(curved, key=lambda m: m.bic)
    evidence = line.bic - best_curved.bic
    physical = [fits[k] for k in ("shunt-loading", "voltage-coefficient",
                                  "dielectric-absorption") if k in fits]
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
    win = min(adequate, key=lambda m: m.bic) if adequate else None
    best_phys = min(physical, key=lambda m: m.bic) if physical else None
    ref = win or poly or best_curved
    strength = _bend(ref, line) / floor_v
    words = strength_words(strength)
    ctx_c = _context_capacitance(context)

    if evidence <= BIC_MARGIN or strength < 1.0:
        if best_phys is not None and evidence <= BIC_MARGIN:
            strength = _bend(best_phys, line) / floor_v
            words = strength_words(strength)
        why = ("no curved model fits the averaged ramp better than a straight line by a clear "
               "margin" if evidence <= BIC_MARGIN else
               "a faint curve is there statistically, but it bends less than the capture "
               "resolves")
        lean = ""
        if best_phys is not None and strength > 0.3:
            lean = (f" The closest cause, {best_phys.name}, would bend it by "
                    f"{100 * _bend(best_phys, line) / span:.2g} % of the span.")
        explanation = (f"The ramp is straight to within what this capture resolves "
                       f"({floor_pct:.2g} % of the span): {why}.{lean}")
        return Diagnosis(signature="linear", strength=strength, strength_words=words,
                         curvature="none", tau_s=None, equivalent_shunt_ohm=None,
                         explanation=explanation, next_checks=NEXT_CHECKS["linear"],
                         model_scores=scores, evidence=float(evidence))

    if win is not None and win.name != "relaxation-low":
        return _physical(win, x, line, T, span, strength, words, scores, evidence,
                         left[win.name], ctx_c)

    # unclassified: say what it looks like
    if win is not None:  # an early relaxation with the slope starting low
        tau = win.theta * T
        curv = "convex"
        description = (
            f"The slope starts low after each reset and rises to its final value with a "
            f"time constant of about {_si(tau, 's')} ({100 * win.theta:.2g} % of the ramp): "
            f"the opposite of dielectric absorption, as an under-compensated probe or a "
            f"slow-settling reset would give.")
        unexplained = left[win.name]
    else:
        tau = None
        curv = _curvature_of(poly or best_curved, x, line.curve, floor_v)
        description = _describe_shape(x, y, fits, span)
        unexplained = min((left[m.name] for m in physical), default=bow_v)
    nearest = ""
    if best_phys is not None:
        nearest = (f" The nearest listed cause, {best_phys.name}, leaves "
                   f"{100 * left[best_phys.name] / span:.2g} % of the span unexplained.")
    explanation = (f"{description} None of shunt loading, a voltage coefficient or "
                   f"dielectric absorption explains it.{nearest}")
    return Diagnosis(signature="unclassified", strength=strength, strength_words=words,
                     curvature=curv, tau_s=tau, equivalent_shunt_ohm=None,
                     explanation=explanation, next_checks=NEXT_CHECKS["unclassified"],
                     model_scores=scores, evidence=float(evidence),
                     unexplained_pct=100.0 * unexplained / span)


def _scatter_ratio(y: np.ndarray, se: np.ndarray) -> float:
    """RMS of (y - smoothed y) / se, corrected for what the smoothing absorbs.

    For white noise of standard deviation se, the Savitzky-Golay residual has
    variance ``se^2 (1 - sum(c^2))`` (c: the filter's coefficients), so the
    ratio is 1. The mean square is taken from the median (robust to a glitch).
    """
    n = y.size
    w = smoothing_window(n)
    if n < w or w <= SMOOTH_ORDER + 1:
        return 1.0
    hp = y - signal.savgol_filter(y, w, SMOOTH_ORDER, mode="interp")
    keep = 1.0 - float(np.sum(signal.savgol_coeffs(w, SMOOTH_ORDER) ** 2))
    return float(np.sqrt(np.median((hp / se) ** 2) / CHI2_1_MEDIAN / max(keep, 1e-6)))


def _correlation_inflation(x: np.ndarray, y: np.ndarray, se: np.ndarray) -> float:
    """How much more the noise varies at longer scales than independent bins would.

    The residual of a smooth catch-all fit (Legendre degree ``MAX_POLY_DEGREE``)
    is normalised by ``se`` and averaged in blocks of 2, 4, 8... bins (up to
    1/32 of the window); for independent noise ``m var(block mean) = 1``. The
    largest such ratio (at least 1) is returned: the variance inflation factor
    of correlated noise (the batch-means method).
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
    best = 1.0
    m = 2
    while m <= n // 32:
        k = n // m
        blocks = z[: k * m].reshape(k, m).mean(axis=1)
        # median, not mean: a real feature the catch-all misses (a glitch) sits in a
        # few blocks and must not pass for noise; for normal z, median(z^2) = 0.4549
        best = max(best, m * float(np.median(blocks * blocks)) / CHI2_1_MEDIAN)
        m *= 2
    return best


def _bend(m: ModelFit | None, line: ModelFit) -> float:
    """Largest distance of a model from the best-fit line over the window, volts."""
    return float(np.max(np.abs(m.curve - line.curve))) if m is not None else 0.0


def _context_capacitance(context: CircuitContext | None) -> float | None:
    if context is None:
        return None
    c = getattr(context, "effective_capacitance_f", None)
    return float(c) if c is not None and math.isfinite(c) and c > 0 else None


def _physical(win: ModelFit, x: np.ndarray, line: ModelFit, T: float,
              span: float, strength: float, words: str,
              scores: dict[str, float], evidence: float, left_v: float,
              cap_f: float | None) -> Diagnosis:
    name = win.name
    tau = shunt = vcoef = None
    pct = 100.0 * float(np.max(np.abs(win.curve - line.curve))) / span
    if name == "shunt-loading":
        tau = T / win.theta
        slope_drop = 1.0 - math.exp(-win.theta * (x[-1] - x[0]))
        if cap_f is not None:
            shunt = tau / cap_f
        r_txt = (f" With the capacitance given, that is {_si(shunt, 'Ω')} across it." if
                 shunt is not None else " Give the capacitance to turn this into a resistance.")
        explanation = (
            f"The slope falls steadily as the voltage rises (by {100 * slope_drop:.2g} % across "
            f"the window), the exponential approach of a current into a capacitor with a "
            f"resistance across it, time constant R C = {_si(tau, 's')} "
            f"({tau / T:.3g} ramp times).{r_txt} The bow is {pct:.2g} % of the span.")
        curvature = "concave"
    elif name == "voltage-coefficient":
        # slope per volt at the ramp start: k / (s T) for the exponential form and
        # g / (s T) for the square-root form, s T being the coefficient b
        vcoef = win.theta / float(win.coef[1])
        if win.rival_chi2 is not None and win.rival_chi2 - win.chi2 > BIC_MARGIN:
            form = ("a charging current rising in proportion to the voltage fits better than "
                    "a capacitance falling in proportion to it" if win.variant == "exp" else
                    "a capacitance falling in proportion to the voltage fits better than a "
                    "charging current rising in proportion to it")
        else:
            form = "at this curvature the two cannot be told apart from the shape alone"
        explanation = (
            f"The slope rises as the voltage rises, by about {100 * vcoef:.2g} % per volt: the "
            f"capacitance falls with DC bias (class 2 ceramics do this), or the charge current "
            f"grows with the voltage; {form}. The bow is {pct:.2g} % of the span.")
        curvature = "convex"
    else:  # dielectric absorption
        tau = win.theta * T
        explanation = (
            f"The slope starts high after each reset and settles with a time constant of about "
            f"{_si(tau, 's')} ({100 * win.theta:.2g} % of the ramp), as charge soaks back into "
            f"the dielectric (dielectric absorption, the Dow model's series R-C branches). "
            f"The bow is {pct:.2g} % of the span; it would change with the repetition rate.")
        curvature = "concave"
    return Diagnosis(signature=name, strength=strength, strength_words=words,
                     curvature=curvature, tau_s=tau, equivalent_shunt_ohm=shunt,
                     explanation=explanation, next_checks=_checks_for(name, shunt),
                     model_scores=scores, voltage_coefficient_per_v=vcoef,
                     evidence=float(evidence), unexplained_pct=100.0 * left_v / span)


def _checks_for(name: str, shunt_ohm: float | None) -> tuple[str, ...]:
    """The bench steps of a signature; for shunt loading, what the resistance found resembles."""
    checks = NEXT_CHECKS[name]
    if name != "shunt-loading" or shunt_ohm is None:
        return checks
    match = probe_match(shunt_ohm)
    if match == "neither":
        verdict = ("neither a 10x probe (about 10 Mohm) nor a 1x probe or scope input (about "
                   "1 Mohm): look for leakage or the current source's output resistance first")
    else:
        verdict = f"that is what a {match} presents: lift or change the probe to confirm"
    return checks[:-1] + (f"The equivalent shunt is {_si(shunt_ohm, 'Ω')}; {verdict}.",)


def _not_measurable(n: int, why: str | None = None) -> Diagnosis:
    reason = why or f"the fit window holds too few usable points ({n}) or no rise"
    return Diagnosis(signature="unclassified", strength=math.nan,
                     strength_words="not measurable", curvature="none", tau_s=None,
                     equivalent_shunt_ohm=None,
                     explanation=f"The shape could not be judged: {reason}.",
                     next_checks=NEXT_CHECKS["unclassified"], model_scores={})
