"""A ramp whose capacitor absorbs like a given dielectric: the predictions behind ``whatif``.

A dielectric is known by its standard recovery figure (``absorption``'s table). Under the
assumption ``absorption`` states (SOURCES.md [even-spread]: absorption spread evenly per
decade of time constant), a standard figure fixes the density per decade: the standard
test is linear in the branches' strengths to first order, so the density is the figure
over that of a network of 1 % a decade, computed exactly by ``absorption.recovery``.

The ramp: a current ``I`` into ``C`` between ``v0`` and ``v1`` (measurement frame), an
optional shunt ``R`` (SOURCES.md [loading]) and the Dow branches (SOURCES.md
[absorption]), solved exactly as a linear network in its periodic steady state: the ramp
by the network's modes until the node reaches ``v1``, then the node driven back to ``v0``
over the reset time while the branches follow (:class:`_Network`, :func:`_periodic`).
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from .absorption import (DIELECTRIC_ABSORPTION, SPREAD_TOP_S, STANDARD_CHARGE_S,
                         STANDARD_READ_S, STANDARD_SHORT_S, even_spread, recovery)
from .errors import AnalysisError
from .rootfind import brentq

#: The density per decade of the unit network the standard figure is scaled from.
UNIT_PER_DECADE = 0.01
#: Points of a predicted curve over the window (the nonlinearity to about 1e-3 of itself).
CURVE_POINTS = 1001


def typical_pct(dielectric: str) -> float:
    """A dielectric's typical standard figure: the geometric middle of its range, %."""
    row = next((r for r in DIELECTRIC_ABSORPTION if r.dielectric == dielectric), None)
    if row is None:
        names = ", ".join(r.dielectric for r in DIELECTRIC_ABSORPTION)
        raise AnalysisError(f"no typical absorption for {dielectric!r}; known: {names}")
    return math.sqrt(row.low_pct * row.high_pct)


@lru_cache(maxsize=64)
def _unit_standard_pct(low_s: float) -> float:
    unit = even_spread(UNIT_PER_DECADE, low_s, SPREAD_TOP_S)
    return 100.0 * recovery(unit, STANDARD_CHARGE_S, STANDARD_SHORT_S, STANDARD_READ_S)


def branches_for(standard_pct: float, low_s: float) -> list[tuple[float, float]]:
    """Branches ``(k_i, tau_i)`` spread evenly from ``low_s`` to ``absorption.SPREAD_TOP_S``
    whose standard recovery figure is ``standard_pct``."""
    if not standard_pct > 0:
        return []
    per_decade = UNIT_PER_DECADE * standard_pct / _unit_standard_pct(float(low_s))
    return [(b.ratio, b.tau_s) for b in even_spread(per_decade, low_s, SPREAD_TOP_S)]


class _Network:
    """The capacitor, its branches and a shunt, solved exactly by modes.

    With node voltages ``x = (v, u_1 .. u_n)`` and capacitances over ``C``
    (``M = diag(1, k_1 .. k_n)``), ``M dx/dt = -K x + f``: ``K`` the conductances over
    ``C`` (``k_i / tau_i`` between ``v`` and ``u_i``, ``1 / (R C)`` from ``v`` to ground),
    ``f = (I / C, 0 ..)``. With ``S = M^-1/2 K M^-1/2 = Q L Q^T`` (``numpy.linalg.eigh``)
    each mode obeys ``dz/dt = -l z + h``, so ``z(t) = z0 exp(-l t) + h t phi(l t)``,
    ``phi(a) = (1 - exp(-a)) / a`` (exact as ``l -> 0``, where the charge only grows).
    """

    def __init__(self, I: float, C: float, R: float | None,
                 branches: list[tuple[float, float]]) -> None:
        self.k = np.array([b[0] for b in branches], dtype=float)
        self.tau = np.array([b[1] for b in branches], dtype=float)
        n = self.k.size + 1
        m = np.concatenate([[1.0], self.k])
        K = np.zeros((n, n))
        g = self.k / self.tau
        K[0, 0] = g.sum() + (1.0 / (R * C) if R is not None else 0.0)
        K[0, 1:] = K[1:, 0] = -g
        K[np.arange(1, n), np.arange(1, n)] = g
        self.root = np.sqrt(m)
        lam, self.Q = np.linalg.eigh(K / np.outer(self.root, self.root))
        self.lam = np.clip(lam, 0.0, None)
        self.h = self.Q.T @ (np.eye(n)[0] * (I / C) / self.root)

    def _phi_t(self, t: np.ndarray) -> np.ndarray:
        a = np.outer(t, self.lam)
        with np.errstate(divide="ignore", invalid="ignore"):
            out = np.where(a > 1e-12, -np.expm1(-a) / np.where(a > 0, a, 1.0), 1.0 - a / 2)
        return out * t[:, None]

    def states(self, x0: np.ndarray, t: np.ndarray) -> np.ndarray:
        """Node voltages at the times ``t`` (rows) from ``x0`` at 0."""
        z0 = self.Q.T @ (self.root * x0)
        z = np.exp(-np.outer(t, self.lam)) * z0 + self._phi_t(t) * self.h
        return (z @ self.Q.T) / self.root

    def node(self, x0: np.ndarray, t: np.ndarray) -> np.ndarray:
        """The capacitor's voltage alone at the times ``t`` (cheaper than :meth:`states`)."""
        z0 = self.Q.T @ (self.root * x0)
        z = np.exp(-np.outer(t, self.lam)) * z0 + self._phi_t(t) * self.h
        return z @ self.Q[0]

    def reset(self, u: np.ndarray, v0: float, v1: float, reset_s: float) -> np.ndarray:
        """The branches after the node is driven linearly from v1 to v0 in ``reset_s``."""
        if reset_s <= 0:
            return u
        e = np.exp(-reset_s / self.tau)
        return v0 + (v1 - v0) / reset_s * self.tau * -np.expm1(-reset_s / self.tau) \
            + (u - v1) * e


def _periodic(net: _Network, v0: float, v1: float, T: float, reset_s: float) -> np.ndarray:
    """The branches' voltages at the ramp start in the periodic steady state for a ramp
    of ``T``. A cycle is affine in them: the ramp gives ``u_T = P u + p`` (``P`` the
    branch block of the propagator ``M^-1/2 Q exp(-L T) Q^T M^1/2``), the reset
    ``u' = e u_T + r`` (``e = exp(-t_r / tau)``); ``(1 - e P) u = e p + r`` is solved
    directly (a slow branch would take ages to settle by iterating)."""
    n = net.k.size
    if n == 0:
        return np.zeros(0)
    E = (net.Q * np.exp(-net.lam * T)) @ net.Q.T
    E = E / net.root[:, None] * net.root[None, :]
    p = net.states(np.concatenate([[v0], np.zeros(n)]), np.array([T]))[0, 1:]
    e = np.exp(-reset_s / net.tau) if reset_s > 0 else np.ones(n)
    r = net.reset(np.zeros(n), v0, v1, reset_s)
    return np.linalg.solve(np.eye(n) - e[:, None] * E[1:, 1:], e * p + r)


def absorbing_ramp(I: float, C: float, v0: float, v1: float, R: float | None,
                   branches: list[tuple[float, float]], reset_s: float,
                   window: tuple[float, float]) -> tuple[float, np.ndarray, np.ndarray, float,
                                                         float]:
    """The periodic ramp of the network (:class:`_Network`) between ``v0`` and ``v1``.

    Returns
    -------
    ramp_time_s, time_s, voltage_v, slope_v_per_s, nonlinearity_pct
        ``time_s`` over the whole ramp; slope and nonlinearity of the least-squares line
        (``numpy.polyfit``) over the window fractions, % of the fitted span. The ramp
        time is ``inf`` (and the figures NaN) when the ramp never reaches ``v1``.
    """
    net = _Network(I, C, R, branches)
    T = C * (v1 - v0) / I
    u0 = np.full(net.k.size, 0.5 * (v0 + v1))
    if R is not None and I * R > v1:
        T = R * C * math.log((I * R - v0) / (I * R - v1))
    for _ in range(3):
        x0 = np.concatenate([[v0], u0])

        def gap(t: float) -> float:
            return float(net.node(x0, np.array([t]))[0]) - v1
        hi = 1.5 * T
        while gap(hi) < 0 and hi < 1e3 * T:
            hi *= 2.0
        if gap(hi) < 0:
            return math.inf, np.zeros(0), np.zeros(0), math.nan, math.nan
        lo = 0.5 * T if gap(0.5 * T) < 0 else 1e-12 * T
        T = brentq(gap, lo, hi, xtol=1e-12 * T)
        u0 = _periodic(net, v0, v1, T, reset_s)
    x0 = np.concatenate([[v0], u0])
    t = np.linspace(window[0] * T, window[1] * T, CURVE_POINTS)
    v = net.node(x0, t)
    width = float(t[-1] - t[0])
    u = (t - t[0]) / width
    p = np.polyfit(u, v - v0, 1)
    nl = 100.0 * float(np.max(np.abs(v - v0 - np.polyval(p, u)))) / float(p[0])
    whole = np.linspace(0.0, T, 201)
    return T, whole, net.node(x0, whole), float(p[0]) / width, nl


def max_absorption_pct(target_pct: float, I: float, C: float, v0: float, v1: float,
                       R: float | None, reset_s: float, window: tuple[float, float]) -> float:
    """The largest standard recovery figure (an even spread from the reset time up) that
    keeps the nonlinearity at ``target_pct``, %; NaN where even none does (the shunt alone
    exceeds it) and ``inf`` where even 100 % would not reach it."""
    low = max(reset_s, 1e-9)

    def nl_at(pct_: float) -> float:
        nl = absorbing_ramp(I, C, v0, v1, R, branches_for(pct_, low), reset_s, window)[4]
        return nl if math.isfinite(nl) else 1e3

    base = nl_at(0.0)
    if not base < target_pct:
        return math.nan
    # nearly linear in the strength: start from the line through 0 and 1 %, then bracket
    unit = nl_at(1.0)
    guess = (target_pct - base) / (unit - base) if unit > base else 100.0
    guess = min(max(guess, 1e-4), 100.0)
    lo, hi = guess / 1.5, min(guess * 1.5, 100.0)
    while lo > 1e-4 and nl_at(lo) > target_pct:
        lo /= 3.0
    while hi < 100.0 and nl_at(hi) < target_pct:
        hi = min(hi * 3.0, 100.0)
    if nl_at(hi) < target_pct:
        return math.inf
    return brentq(lambda x: nl_at(x) - target_pct, lo, hi, rtol=1e-3)
