"""Pure shapes of the physical causes of a bowed ramp, on ``x = t / T`` (T: ramp time).

Each is the varying column of a model in ``diagnose``: the model is a few
fixed columns (a constant, or a constant and ``x``) plus ``a * shape(theta, x)``
with one nonlinear parameter ``theta``. All are continuous through
``theta -> 0``, where they become the line ``x``. Sources: SOURCES.md
[loading], [voltage-coefficient], [absorption].
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


def early_relaxation(r: float, x: np.ndarray, x_start: float) -> np.ndarray:
    """``-exp(-(x - x_start) / r)``: a Dow-model absorption branch relaxing after each
    reset, time constant ``r`` ramp times, seen from the fit window's start."""
    return -np.exp(-(x - x_start) / r)
