"""The one model of an oscilloscope's ADC used by every test: noise first, then the codes."""

from __future__ import annotations

import numpy as np


def full_scale_for(v: np.ndarray, margin: float = 0.1) -> tuple[float, float]:
    """An ADC range that holds the signal with ``margin`` of its span spare at each end
    (as a scope set up with the trace filling most of the screen)."""
    lo, hi = float(np.min(v)), float(np.max(v))
    span = hi - lo
    return lo - margin * span, hi + margin * span


def quantise(v: np.ndarray, bits: int | None, full_scale_v: tuple[float, float],
             noise_v: float = 0.0, seed: int = 0) -> np.ndarray:
    """What an ADC records of ``v``: Gaussian noise added first, then rounded to the codes.

    ``q = (hi - lo) / 2**bits``; code ``k = clip(round((v + n - lo) / q), 0, 2**bits - 1)``;
    the value returned is ``lo + k q`` in volts (mid-tread quantiser, Widrow's model). The
    noise ``n`` is ``numpy.random.default_rng(seed).normal(0, noise_v, v.size)``. With
    ``bits`` None or 0 the noisy samples are returned unrounded (an ideal ADC).
    """
    rng = np.random.default_rng(seed)
    x = np.asarray(v, dtype=float)
    if noise_v:
        x = x + rng.normal(0.0, noise_v, x.size)
    if not bits:
        return x
    lo, hi = full_scale_v
    q = (hi - lo) / 2 ** bits
    codes = np.clip(np.round((x - lo) / q), 0, 2 ** bits - 1)
    return lo + codes * q
