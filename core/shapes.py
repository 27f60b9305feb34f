"""Pure shapes of the physical causes of a bowed ramp, on ``x = t / T`` (T: ramp time).

Each is the varying column of a model in ``diagnose``: the model is a few
fixed columns (a constant, or a constant and ``x``) plus ``a * shape(theta, x)``
with one nonlinear parameter ``theta``. All are continuous through
``theta -> 0``, where they become the line ``x``. Sources: SOURCES.md
[loading], [voltage-coefficient], [absorption].

A shunt and a capacitance growing with voltage bend a ramp alike: both start
``x - theta x^2 / 2`` and part only at ``x^3`` (``k^2 / 6`` against
``g^2 / 2``), so on a small bow the data rarely tell them apart.
"""

from __future__ import annotations

import numpy as np


def saturating(k: float, x: np.ndarray) -> np.ndarray:
    """``(1 - exp(-k x)) / k``: a current into C with R across it, ``k = T / (R C)``.

    With a negative ``k`` it is ``(exp(|k| x) - 1) / |k|``, a charge current
    growing in proportion to the voltage.
    """
    if abs(k) < 1e-9:
        return x.copy()
    return -np.expm1(-k * x) / k


def falling_capacitance(g: float, x: np.ndarray) -> np.ndarray:
    """``(1 - sqrt(1 - 2 g x)) / g``: constant current into ``C0 (1 - beta V)`` (exact).

    Written as ``2 x / (1 + sqrt(1 - 2 g x))``, the same value without cancellation.
    """
    if abs(g) < 1e-9:
        return x.copy()
    return 2.0 * x / (1.0 + np.sqrt(1.0 - 2.0 * g * x))


def growing_capacitance(g: float, x: np.ndarray) -> np.ndarray:
    """``(sqrt(1 + 2 g x) - 1) / g``: constant current into ``C0 (1 + beta V)`` (exact).

    Charge balance from the ramp start ``V0``:
    ``C0 [(V - V0) + beta (V^2 - V0^2) / 2] = I t``. With ``W = 1 + beta V`` this is
    ``(W^2 - W0^2) / (2 beta) = I t / C0``, so ``W = W0 sqrt(1 + 2 g x)`` with
    ``g = beta I T / (C0 W0^2)``, and
    ``V - V0 = (I T / (C0 W0)) (sqrt(1 + 2 g x) - 1) / g``. The coefficient of the
    shape is the starting slope times T, ``a = I T / (C0 W0)``, so the capacitance
    grows (and the slope falls) by ``g / a = beta / (1 + beta V0)`` per volt at the
    ramp start; the slope at ``x`` is the starting slope over ``sqrt(1 + 2 g x)``.
    Concave; ``falling_capacitance`` with ``g -> -g``. Written as
    ``2 x / (1 + sqrt(1 + 2 g x))``, the same value without cancellation.
    """
    if abs(g) < 1e-9:
        return x.copy()
    return 2.0 * x / (1.0 + np.sqrt(1.0 + 2.0 * g * x))


def early_relaxation(r: float, x: np.ndarray, x_start: float) -> np.ndarray:
    """``-exp(-(x - x_start) / r)``: a Dow-model absorption branch relaxing after each
    reset, time constant ``r`` ramp times, seen from the fit window's start."""
    return -np.exp(-(x - x_start) / r)
