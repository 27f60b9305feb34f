"""The shared parameters of a set's model: their covariance and 95 % intervals, in SI units.

The covariance is ``(J^T J)^-1`` of the projected residuals (SOURCES.md [joint-fit]),
``J`` by central differences, widened by ``chi2 / dof`` where that exceeds 1; an interval
is ``1.96`` standard errors, on the logarithm of a positive parameter (so it stays
positive and is asymmetric in the value).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from .jsonable import ToDict

#: z-value of a two-sided 95 % interval (normal).
Z95 = 1.959964


@dataclass(frozen=True)
class Parameter(ToDict):
    """A shared parameter: ``value`` with its 95 % interval ``low``..``high``, SI ``unit``."""

    name: str
    value: float
    low: float
    high: float
    unit: str


def covariance(residuals: Callable[[np.ndarray], np.ndarray], n: int, theta: np.ndarray,
               dof: int, chi2: float) -> np.ndarray:
    """``(J^T J)^-1`` of ``residuals`` (``n`` values) at ``theta`` (module docstring)."""
    p = theta.size
    if p == 0:
        return np.zeros((0, 0))
    jac = np.empty((n, p))
    for i in range(p):
        h = 1e-5 * max(1.0, abs(theta[i]))
        up, dn = theta.copy(), theta.copy()
        up[i] += h
        dn[i] -= h
        jac[:, i] = (residuals(up) - residuals(dn)) / (2 * h)
    cov = np.linalg.pinv(jac.T @ jac)
    return cov * max(1.0, chi2 / max(dof, 1))


def parameters(model: str, theta: np.ndarray, cov: np.ndarray,
               by_resistance: bool) -> tuple[Parameter, ...]:
    """A model's raw shared parameters ``theta`` as physical ones with their intervals."""
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None)) if theta.size else np.zeros(0)

    def positive(name: str, i: int, unit: str) -> Parameter:
        v, d = float(theta[i]), Z95 * float(se[i])

        def e(x: float) -> float:  # an unbounded interval stays finite
            return math.exp(min(max(x, -700.0), 700.0))
        return Parameter(name, e(v), e(v - d), e(v + d), unit)

    def signed(name: str, i: int, unit: str, sign: float = 1.0) -> Parameter:
        v, d = sign * float(theta[i]), Z95 * float(se[i])
        return Parameter(name, v, v - d, v + d, unit)

    if model == "shunt-loading":
        return (positive("shunt_ohm" if by_resistance else "tau_s", 0,
                         "Ω" if by_resistance else "s"),)
    if model == "voltage-coefficient":
        return (signed("voltage_coefficient_per_v", 0, "1/V", -1.0),)
    if model == "relaxation-spread":
        return (positive("absorption_per_decade", 0, ""),)
    if model == "shunt-and-spread":
        return (positive("shunt_ohm" if by_resistance else "tau_s", 0,
                         "Ω" if by_resistance else "s"),
                positive("absorption_per_decade", 1, ""))
    out: list[Parameter] = []
    for j in range(0, theta.size, 2):
        n = j // 2 + 1
        out += [signed(f"amplitude_{n}", j, ""), positive(f"tau_{n}_s", j + 1, "s")]
    return tuple(out)
