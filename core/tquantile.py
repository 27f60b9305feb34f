"""The 97.5 % point of Student's t distribution, for 95 % intervals, without SciPy.

Every interval trueslope states is ``b +/- t(0.975, dof) se``. Importing
``scipy.stats`` for that one number costs more than a whole analysis of a
small capture, so the quantile is computed here: the Cornish-Fisher expansion
of t about the normal quantile (Abramowitz & Stegun 26.7.5; SOURCES.md
[abramowitz-stegun]) as the start, then Newton steps on the distribution
function written as a regularised incomplete beta function,
``F(t) = 1 - I_x(dof / 2, 1 / 2) / 2`` with ``x = dof / (dof + t^2)`` (A&S
26.7.1 and 26.5.27), evaluated by its continued fraction (A&S 26.5.8). One and
two degrees of freedom have closed forms. Agreement with
``scipy.stats.t.ppf(0.975, dof)`` is checked in ``tests/core/test_tquantile.py``.
"""

from __future__ import annotations

import math

import numpy as np

#: The normal distribution's 97.5 % point, Phi^-1(0.975) (``scipy.special.ndtri(0.975)``).
Z975 = 1.959963984540054
#: Beyond this many degrees of freedom the expansion alone is exact to double precision
#: (its first omitted term is of order dof^-5; measured against scipy: 3e-16 at 1000).
EXPANSION_DOF = 1000.0


def _incomplete_beta_cf(a: float, b: float, x: float) -> float:
    """Continued fraction of the regularised incomplete beta function (modified Lentz)."""
    tiny = 1e-300
    qab, qap, qam = a + b, a + 1.0, a - 1.0
    c, d = 1.0, 1.0 - qab * x / qap
    d = 1.0 / (d if abs(d) > tiny else tiny)
    h = d
    for m in range(1, 100_000):
        m2 = 2 * m
        aa = m * (b - m) * x / ((qam + m2) * (a + m2))
        d = 1.0 + aa * d
        d = 1.0 / (d if abs(d) > tiny else tiny)
        c = 1.0 + aa / c
        c = c if abs(c) > tiny else tiny
        h *= d * c
        aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2))
        d = 1.0 + aa * d
        d = 1.0 / (d if abs(d) > tiny else tiny)
        c = 1.0 + aa / c
        c = c if abs(c) > tiny else tiny
        step = d * c
        h *= step
        if abs(step - 1.0) < 1e-16:
            break
    return h


def _upper_tail(t: float, dof: float) -> float:
    """``1 - F(t)`` for ``t >= 0``: ``I_x(dof / 2, 1 / 2) / 2``, ``x = dof / (dof + t^2)``."""
    a, b = 0.5 * dof, 0.5
    q = t * t / (dof + t * t)  # 1 - x, formed without cancellation
    log_x, log_1mx = math.log1p(-q), math.log(q) if q > 0 else -math.inf
    front = math.exp(math.lgamma(a + b) - math.lgamma(a) - math.lgamma(b)
                     + a * log_x + b * log_1mx)
    if 1.0 - q < (a + 1.0) / (a + b + 2.0):
        ix = front * _incomplete_beta_cf(a, b, 1.0 - q) / a
    else:  # the symmetry I_x(a, b) = 1 - I_(1-x)(b, a), where the fraction converges fast
        ix = 1.0 - front * _incomplete_beta_cf(b, a, q) / b
    return 0.5 * ix


def _density(t: float, dof: float) -> float:
    return math.exp(math.lgamma(0.5 * (dof + 1)) - math.lgamma(0.5 * dof)
                    - 0.5 * math.log(dof * math.pi) - 0.5 * (dof + 1) * math.log1p(t * t / dof))


def _expansion(dof: float) -> float:
    """Cornish-Fisher expansion of the quantile in powers of 1/dof (A&S 26.7.5)."""
    x = Z975
    g1 = (x ** 3 + x) / 4
    g2 = (5 * x ** 5 + 16 * x ** 3 + 3 * x) / 96
    g3 = (3 * x ** 7 + 19 * x ** 5 + 17 * x ** 3 - 15 * x) / 384
    g4 = (79 * x ** 9 + 776 * x ** 7 + 1482 * x ** 5 - 1920 * x ** 3 - 945 * x) / 92160
    return x + g1 / dof + g2 / dof ** 2 + g3 / dof ** 3 + g4 / dof ** 4


def _one(dof: float) -> float:
    if not dof > 0:
        return math.nan
    if dof == 1.0:
        return math.tan(0.475 * math.pi)  # Cauchy: tan(pi (p - 1/2))
    if dof == 2.0:
        return math.sqrt(2.0 / (0.05 * 1.95) - 2.0)  # sqrt(2 / (alpha (2 - alpha)) - 2)
    if dof >= EXPANSION_DOF:
        return _expansion(dof)
    # the expansion is a good start from a few degrees of freedom up; below, a start past
    # the root (the distribution function is concave there, so Newton steps come down to it
    # without overshooting)
    t = _expansion(dof) if dof >= 3 else 15.0 / dof
    for _ in range(60):
        step = (_upper_tail(t, dof) - 0.025) / _density(t, dof)
        t += step
        if abs(step) <= 1e-15 * t:
            break
    return t


def t_quantile_975(dof):
    """Student's t quantile ``t(0.975, dof)``, a float or an array like ``dof``.

    Parameters
    ----------
    dof : float or array_like
        Degrees of freedom (> 0; need not be whole). NaN where not positive.
    """
    if np.ndim(dof) == 0:
        return _one(float(dof))
    d = np.asarray(dof, dtype=float)
    return np.array([_one(float(v)) for v in d.ravel()]).reshape(d.shape)
