"""The physical models of a bowed ramp, fitted to the averaged cycle by weighted least squares.

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
``capacitance-growing``       ``a + b (sqrt(1 + 2 g x) - 1) / g``, ``g > 0``:          3
                              ``C = C0 (1 + beta V)`` at constant current (exact),
                              concave like the shunt and hard to tell from it
``dielectric-absorption``     ``a + b x - A exp(-(x - x0) / r)``, ``A > 0``,          4
                              ``r = tau / T < 1/2``: the early relaxation of a
                              Dow-model absorption branch after each reset
``relaxation-low``            the same with ``A < 0`` (slope starting low)           4
``polynomial``                Legendre series of the degree (2..10) with the lowest  3..11
                              criterion: the catch-all for shapes none of the
                              above explains
============================  =====================================================  ======

The shapes are in ``shapes``. Each model's score is the Bayesian information
criterion ``BIC = chi2 + p ln n`` with ``chi2 = sum(((v - model) / stderr)^2)``
(SOURCES.md [bic]). Every nonlinear model has one nonlinear parameter (``k``,
``g`` or ``r``); for a fixed value the others follow by linear least squares
(variable projection), so the fit is a bounded one-dimensional search (Brent's
method, :func:`trueslope.core.minimise.bounded_minimum`) started from the best point
of a logarithmic grid, which cannot fail to converge.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from . import shapes
from .fit import LegendreSeries
from .minimise import bounded_minimum

#: Longest absorption time constant, as a fraction of the ramp ("shorter than the ramp").
DA_MAX_TAU_FRACTION = 0.5
#: Largest ``k = T / tau`` of the exponential models: the slope changes by e^3 at most.
MAX_RATE = 3.0
#: Highest Legendre degree of the catch-all polynomial.
MAX_POLY_DEGREE = 10


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


class Fitter:
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
            x_min, f_min = bounded_minimum(cost, a_, b_, xatol=1e-5 * (s_hi - s_lo))
            if math.isfinite(f_min) and f_min < best_c:
                best_s = float(x_min)
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
        ``"capacitance-growing"``, ``"dielectric-absorption"``,
        ``"relaxation-low"`` (early relaxation with the slope starting low) and
        ``"polynomial"``; a model whose fit found no admissible solution is left out.
    """
    f = Fitter(x, y, 1.0 / sigma)
    one = np.ones_like(x)
    out: dict[str, ModelFit] = {}
    chi2, c = f.solve(np.column_stack([one, x]))
    out["line"] = ModelFit("line", 2, chi2, chi2 + 2 * f.log_n, np.column_stack([one, x]) @ c,
                           None, c)

    x_end = float(x[-1])
    # the smallest rates leave a bend far below any noise: the models reach the line
    kmin = 1e-7
    const = one[:, None]
    shunt = f.profile("shunt-loading", const, lambda k: shapes.saturating(k, x), kmin, MAX_RATE)
    if shunt is not None:
        out["shunt-loading"] = shunt
    vc_exp = f.profile("voltage-coefficient", const, lambda k: shapes.saturating(-k, x), kmin,
                       MAX_RATE, variant="exp")
    g_hi = 0.4999 / max(x_end, 1e-9)
    vc_sqrt = f.profile("voltage-coefficient", const, lambda g: shapes.falling_capacitance(g, x), kmin * g_hi,
                        g_hi, variant="sqrt")
    cands = [m for m in (vc_exp, vc_sqrt) if m is not None]
    if cands:
        best = min(cands, key=lambda m: m.chi2)
        rival = max(cands, key=lambda m: m.chi2) if len(cands) == 2 else None
        out["voltage-coefficient"] = dataclasses.replace(
            best, rival_chi2=None if rival is None else rival.chi2)
    # the capacitance may grow until the slope has fallen by e^MAX_RATE over the window
    g_up = math.expm1(2.0 * MAX_RATE) / (2.0 * max(x_end, 1e-9))
    grow = f.profile("capacitance-growing", const,
                     lambda g: shapes.growing_capacitance(g, x), kmin, g_up)
    if grow is not None:
        out["capacitance-growing"] = grow
    # An early relaxation must still be visible at the window's start and must
    # not be finer than the bins.
    r_lo = max(x_start / 7.0, 2.0 * bin_width, 1e-4)
    r_hi = DA_MAX_TAU_FRACTION
    if r_lo < r_hi:
        lin = np.column_stack([one, x])

        def relax(r: float) -> np.ndarray:
            return shapes.early_relaxation(r, x, x_start)

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
        d = series.best_degree(2)
        out["polynomial"] = ModelFit("polynomial", d + 1, float(series.chi2[d]), series.bic(d),
                                     series.curve(d), None, series.coef(d), variant=str(d))
    return out
