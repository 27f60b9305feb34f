"""The shapes of the causes with physical parameters, in seconds and volts, for a set of captures.

Each function gives the ramp's shape in the measurement frame (always rising) as a
column ``g(t)`` such that the ramp is ``a + s g(t)`` with ``a`` and ``s`` free for
each capture (its start level and slope); the physical parameters inside ``g`` are
what a set of captures of one circuit shares. ``t`` is seconds from the ramp start.

Shunt loading (SOURCES.md [loading]). A current ``I`` into ``C`` with ``R``
across it: ``v = v_inf - (v_inf - v0) exp(-t / tau)``, ``tau = R C``, so
``g = tau (1 - exp(-t / tau))``: the slope falls from ``s`` with the time constant.

Capacitance changing with voltage at constant current (SOURCES.md [voltage-coefficient]).
``C = C_s (1 + beta u)``, ``u`` the voltage above the ramp's start: the charge
``I t = C_s (u + beta u^2 / 2)`` gives ``u = (sqrt(1 + 2 beta s t) - 1) / beta``,
``s = I / C_s``, written ``g = 2 t / (sqrt(1 + 2 beta s t) + 1)`` so that it is
exact at ``beta -> 0``. The slope's fractional change per volt at the start is
``-beta`` (the figure ``Diagnosis.voltage_coefficient_per_v`` reports).

Dow branches (SOURCES.md [absorption]). A branch ``R_i`` in series with ``C_i``
across ``C``, ``tau_i = R_i C_i``, ``k_i = C_i / C``. The branch voltage ``u_i``
lags the node: ``e_i = v - u_i``, ``de_i/dt = dv/dt - e_i / tau_i``, and the node
obeys ``C dv/dt = I - sum C_i e_i / tau_i``. To first order in ``k_i`` the lag is
that of the ideal periodic ramp (slope ``s`` for ``T``, back down at
``-s T / t_r`` for the retrace time ``t_r``); in its periodic steady state the
lag at the ramp's start is ``e_0 = s tau (1 + D)`` with

    D = (q a - r b) / (a + b - a b) - 1,
    a = 1 - exp(-T / tau), b = 1 - exp(-t_r / tau), q = 1 - b, r = T / t_r,

(derived here from the two exponential phases and ``e(T + t_r) = e(0)``), and the
node integrates to ``v = v0 + s (1 - k) t - k s tau D (1 - exp(-t / tau))``. So
``g = t - A tau D (1 - exp(-t / tau))``, ``A = k / (1 - k)``: ``D < 0``, and the
branch's returned charge makes the slope start high. The amplitude is fixed by
``k``, ``tau``, ``T`` and ``t_r``: that is what ties captures at other rates
together.

A probe whose compensation is off (SOURCES.md [probe-comp]) shows the node through ``1 + kappa`` at high
frequency and ``1`` at DC, settling with its own time constant: the displayed
trace is ``v - kappa' e(t)``, the same lag, so the same ``g`` with ``A = -kappa'``
and an offset from the node (:func:`probe_end_offset`). Only levels tell the two
apart: absorption never moves the trace off the comparator's levels.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["branches_of", "lag_factor", "relaxation_shape", "relaxation_terms", "shunt_shape",
           "probe_end_offset", "spread_band", "spread_branches", "voltage_shape"]

#: Branches a decade of an even spread (the density is what the set measures).
SPREAD_PER_DECADE = 4
#: An even spread reaches this many times the longest ramp time: slower branches only add
#: capacitance (``D -> -1``) and bend nothing.
SPREAD_REACH = 30.0


def shunt_shape(t: np.ndarray, tau_s: float) -> np.ndarray:
    """``tau (1 - exp(-t / tau))``, seconds (``-expm1`` keeps the digits of a long tau)."""
    return -tau_s * np.expm1(-t / tau_s)


def voltage_shape(t: np.ndarray, beta_per_v: float, slope_v_per_s: float) -> np.ndarray | None:
    """``2 t / (sqrt(1 + 2 beta s t) + 1)``, seconds; None where the capacitance would
    reach zero inside ``t`` (``1 + 2 beta s t <= 0``)."""
    z = 1.0 + 2.0 * beta_per_v * slope_v_per_s * t
    if np.any(z <= 1e-9):
        return None
    return 2.0 * t / (np.sqrt(z) + 1.0)


def _phi(z: float) -> float:
    """``(1 - exp(-z)) / z``, 1 at z = 0."""
    return -math.expm1(-z) / z if z > 1e-12 else 1.0 - z / 2.0


def lag_factor(tau_s: float, ramp_time_s: float, retrace_time_s: float) -> float:
    """``D`` of the module docstring: the lag at the ramp's start is ``s tau (1 + D)``.

    ``D`` runs from ``-(T + t_r) / t_r`` for a branch much faster than the reset
    to ``-1`` for one much slower than the cycle.
    """
    T, tr, tau = float(ramp_time_s), max(float(retrace_time_s), 0.0), float(tau_s)
    a = -math.expm1(-T / tau)
    b = -math.expm1(-tr / tau)
    q = 1.0 - b
    rb = (T / tau) * _phi(tr / tau)          # r b, finite as t_r -> 0
    return (q * a - rb) / (a + b - a * b) - 1.0


def relaxation_terms(t: np.ndarray, branches: list[tuple[float, float]],
                     ramp_time_s: float, retrace_time_s: float) -> np.ndarray:
    """``sum A_i tau_i D_i (1 - exp(-t / tau_i))``, seconds: what the branches take from a
    ramp's time course (``t`` minus this is :func:`relaxation_shape`)."""
    out = np.zeros_like(np.asarray(t, dtype=float))
    for amp, tau in branches:
        out += amp * tau * lag_factor(tau, ramp_time_s, retrace_time_s) * -np.expm1(-t / tau)
    return out


def relaxation_shape(t: np.ndarray, branches: list[tuple[float, float]],
                     ramp_time_s: float, retrace_time_s: float) -> np.ndarray:
    """``t - sum A_i tau_i D_i (1 - exp(-t / tau_i))``, seconds.

    ``branches`` are ``(A_i, tau_i)``: ``A = k / (1 - k)`` for absorption (positive),
    minus the tail's fraction for a probe's compensation. With a shunt as well, the two
    add to first order: ``shunt_shape - relaxation_terms``.
    """
    return np.asarray(t, dtype=float) - relaxation_terms(t, branches, ramp_time_s,
                                                         retrace_time_s)


def probe_end_offset(branches: list[tuple[float, float]], slope_v_per_s: float,
                     ramp_time_s: float, retrace_time_s: float) -> float:
    """Where a probe's tail puts the trace at the ramp's end, against the node, volts.

    The displayed trace is ``v - kappa e``; with ``A = -kappa`` it is off the node (the
    comparator's trip level) at ``t = T`` by ``A e_T``, the lag there being
    ``e_T = s tau (1 + D exp(-T / tau))``, summed over the tails. Absorption gives 0 there.
    The end is the better place to look: the ramp overshoots its trip level only by the
    comparator's delay times the ramp's slope, where the fast reset overshoots its level by
    the delay times the reset's far steeper slew.
    """
    T, tr = float(ramp_time_s), float(retrace_time_s)
    return float(sum(amp * slope_v_per_s * tau
                     * (1.0 + lag_factor(tau, T, tr) * math.exp(-T / tau))
                     for amp, tau in branches))


def spread_band(members) -> tuple[float, float]:
    """The time constants an even spread covers for a set: from the shortest reset time
    (faster branches empty during the reset and only add capacitance) to
    :data:`SPREAD_REACH` times the longest ramp time, seconds."""
    resets = [m.retrace_time_s for m in members if m.retrace_time_s > 0]
    lo = min(resets) if resets else 1e-3 * min(m.ramp_time_s for m in members)
    return float(lo), float(SPREAD_REACH * max(m.ramp_time_s for m in members))


def spread_branches(per_decade: float, band_s: tuple[float, float]) -> list[tuple[float, float]]:
    """``(A, tau)`` of :data:`SPREAD_PER_DECADE` equal branches a decade over ``band_s``,
    at the logarithmic middles of equal steps, totalling ``per_decade`` a decade."""
    lo, hi = band_s
    decades = math.log10(hi / lo)
    count = max(1, int(math.ceil(decades * SPREAD_PER_DECADE)))
    step = decades / count
    return [(per_decade * step, lo * 10.0 ** (step * (i + 0.5))) for i in range(count)]


def branches_of(model: str, theta, band_s: tuple[float, float]) -> list[tuple[float, float]]:
    """The ``(A, tau)`` branches a relaxation model's shared parameters stand for:
    ``(A, ln tau)`` pairs, or the log of the density per decade of an even spread (after
    the shunt's parameter in ``shunt-and-spread``)."""
    if model == "relaxation-spread":
        return spread_branches(math.exp(float(theta[0])), band_s)
    if model == "shunt-and-spread":
        return spread_branches(math.exp(float(theta[1])), band_s)
    return [(float(theta[i]), math.exp(float(theta[i + 1]))) for i in range(0, len(theta), 2)]
