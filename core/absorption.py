"""The absorption a dielectric is known by: what a ramp capture measures, and the standard figure.

A ramp at bench rates sees only the Dow-model absorption branches whose time
constants lie near its own time scale; the standard recovery-voltage test (an
hour's charge, a short of seconds, a reading within minutes) sees the slow
ones. From fitted Dow branches (:class:`Branch`: ``C_i / C`` and
``tau_i = R_i C_i``), :func:`absorption_figures` reports:

- the absorbed fraction per decade of time constant inside the band the ramp
  sees (reset time to ramp time); a short-time recovery figure at that time
  scale (charged steady, shorted one reset time, opened, read 3 ramp times on);
- the standard test's figure extrapolated under the stated assumption that the
  absorption is spread evenly per decade of time constant (SOURCES.md
  [even-spread]); the assumption is part of the result;
- where that figure falls in a table of typical absorption by dielectric
  (:data:`DIELECTRIC_ABSORPTION`, SOURCES.md [dielectric-table]).

Every recovery figure is computed exactly for the linear network (SOURCES.md
[absorption]): with node voltages ``x = (V, u_1 .. u_n)`` (main capacitor,
branch capacitors) and capacitances normalised by ``C``,
``M dx/dt = -K x``, ``M = diag(1, C_1/C, ..)``, ``K`` the symmetric
conductance matrix over ``C`` (``g_i = (C_i/C) / tau_i`` between ``V`` and
``u_i``, plus ``1 / (R_short C)`` to ground while shorted). The generalised
symmetric eigenproblem ``K phi = lambda M phi`` (:func:`numpy.linalg.eigh` of ``M^-1/2 K M^-1/2``)
gives ``x(t) = Phi exp(-Lambda t) Phi^T M x(0)``. :func:`branch_from_relaxation`
turns the one-capture diagnosis (a relaxation time and amplitude) into a branch
through the periodic steady state of one branch (derived in its docstring).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Iterable

import numpy as np
from .errors import AnalysisError
from .jsonable import ToDict
from .minimise import bounded_minimum
from .rootfind import brentq

#: The standard recovery test as commonly described (IEC 60384-1; SOURCES.md [absorption]):
#: charge, short (through the resistance), highest reading within, s and ohm.
STANDARD_CHARGE_S, STANDARD_SHORT_S, STANDARD_SHORT_OHM, STANDARD_READ_S = 3600.0, 10.0, 5.0, 9e2
#: The short-time figure is read this many ramp times after the short is opened.
READ_RAMPS = 3.0
#: The even spread is assumed from the visible band's lower edge up to this time constant, s:
#: a branch much slower than the test's hour of charge hardly charges (SOURCES.md [even-spread]).
SPREAD_TOP_S = 1e5
#: Branches per decade of the evenly spread network the extrapolation computes.
SPREAD_PER_DECADE = 8
#: Points of the logarithmic grid on which the highest recovered voltage is looked for.
_PEAK_GRID = 600
_EDGE = 1e-9  # relative tolerance: a branch on a band edge counts as inside


@dataclass(frozen=True)
class Branch(ToDict):
    """One Dow-model absorption branch (a series ``R_i C_i`` across the main capacitor).

    Attributes
    ----------
    ratio : float
        ``C_i / C``, the branch capacitance over the main capacitance (>= 0).
    tau_s : float
        ``tau_i = R_i C_i``, s (> 0).
    """

    ratio: float
    tau_s: float


@dataclass(frozen=True)
class DielectricRow(ToDict):
    """One row of the handbook table: typical absorption of a dielectric, in % of the charge
    voltage recovered in the standard test; ``basis`` says how sure (SOURCES.md
    [dielectric-table]): ``"published"`` or ``"from memory"``."""

    dielectric: str
    low_pct: float
    high_pct: float
    basis: str


#: Typical absorption by dielectric, lowest first (SOURCES.md [dielectric-table]).
DIELECTRIC_ABSORPTION: tuple[DielectricRow, ...] = (
    DielectricRow("PTFE", 0.01, 0.03, "published"),
    DielectricRow("polystyrene", 0.01, 0.05, "published"),
    DielectricRow("polypropylene", 0.05, 0.1, "published"),
    DielectricRow("polycarbonate", 0.1, 0.2, "from memory"),
    DielectricRow("polyester (PET)", 0.2, 0.5, "published"),
    DielectricRow("C0G/NP0 ceramic", 0.3, 0.6, "published"),
    DielectricRow("mica", 0.3, 0.7, "from memory"),
    DielectricRow("tantalum", 1.0, 5.0, "from memory"),
    DielectricRow("X7R and other class 2 ceramics", 2.0, 2.5, "published"),
    DielectricRow("aluminium electrolytic", 10.0, 15.0, "published"),
)


@dataclass(frozen=True)
class DielectricPlacement(ToDict):
    """Where a standard-test figure falls in :data:`DIELECTRIC_ABSORPTION`.

    Attributes
    ----------
    recovery_pct : float
        The figure placed, %.
    within : tuple of str
        The dielectrics whose typical range holds it.
    nearest : str
        The dielectric whose range is closest on a logarithmic scale (one of ``within``
        when that is not empty; the lowest row for a figure of zero).
    distance_decades : float
        ``|log10(figure / nearest range edge)|``, 0 inside a range; inf for zero.
    position : str
        ``"within"``, ``"between"`` two rows' ranges, ``"below"`` or ``"above"`` all.
    """

    recovery_pct: float
    within: tuple[str, ...]
    nearest: str
    distance_decades: float
    position: str


@dataclass(frozen=True)
class AbsorptionFigures(ToDict):
    """What a ramp capture says about dielectric absorption (``report.absorption_text`` words it).

    Attributes
    ----------
    branches : tuple of Branch
        The fitted branches given.
    ramp_time_s, reset_time_s : float
        The capture's ramp time and reset time, s.
    band_low_s, band_high_s, band_decades : float
        The band of time constants the ramp sees (by default reset time to ramp
        time) and its width ``log10(high / low)``.
    visible_branches : int
        Branches with ``tau_s`` in the band (edges included).
    visible_ratio : float
        ``sum C_i / C`` over those branches.
    absorbed_pct_per_decade : float
        ``100 visible_ratio / band_decades``, % of C per decade of time constant.
    short_charge, short_short_s, short_read_s, short_recovery_pct : str, float, float, float
        The short-time test: ``"steady"`` (every branch at the charge voltage),
        shorted (ideally) for ``short_short_s`` = the reset time, opened, and read
        ``short_read_s`` = :data:`READ_RAMPS` ramp times later; the voltage then, %
        of the charge voltage, computed on the given branches.
    standard_charge_s, standard_short_s, standard_short_ohm, standard_read_s : float
        The standard test (SOURCES.md [absorption]): charge, short (through
        ``standard_short_ohm`` when the capacitance is known, else ideal and 0),
        reading window, s and ohm.
    standard_from_branches_pct : float
        The standard test computed on the given branches alone, %: what the
        network as fitted would show (no branch slower than it is seen).
    standard_recovery_pct : float
        The standard test's figure extrapolated: computed on a network with
        ``absorbed_pct_per_decade`` spread evenly from ``spread_low_s`` to
        ``spread_high_s`` (:data:`SPREAD_PER_DECADE` branches a decade), %.
    spread_low_s, spread_high_s : float
        The range of time constants the assumption spreads the absorption over, s.
    assumption : str
        The assumption behind ``standard_recovery_pct``, to print beside it.
    placement : DielectricPlacement
        ``standard_recovery_pct`` against :data:`DIELECTRIC_ABSORPTION`.
    """

    branches: tuple[Branch, ...]
    ramp_time_s: float
    reset_time_s: float
    band_low_s: float
    band_high_s: float
    band_decades: float
    visible_branches: int
    visible_ratio: float
    absorbed_pct_per_decade: float
    short_charge: str
    short_short_s: float
    short_read_s: float
    short_recovery_pct: float
    standard_charge_s: float
    standard_short_s: float
    standard_short_ohm: float
    standard_read_s: float
    standard_from_branches_pct: float
    standard_recovery_pct: float
    spread_low_s: float
    spread_high_s: float
    assumption: str
    placement: DielectricPlacement


def _positive(name: str, value: float, allow_zero: bool = False,
              allow_inf: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise AnalysisError(f"{name} must be a number, got {value!r}") from None
    if math.isnan(v) or (math.isinf(v) and not allow_inf) or v < 0.0 or (
            v == 0.0 and not allow_zero):
        need = "zero or more" if allow_zero else "more than zero"
        raise AnalysisError(f"{name} must be a finite number {need}, got {value!r}")
    return v


def checked_branches(branches: Iterable[Branch | tuple[float, float]]) -> tuple[Branch, ...]:
    """The branches as :class:`Branch` values, checked.

    Raises
    ------
    AnalysisError
        A ratio below zero or not finite, a time constant not above zero.
    """
    out = []
    for b in branches:
        ratio, tau = (b.ratio, b.tau_s) if isinstance(b, Branch) else b
        out.append(Branch(_positive("an absorption branch's C_i/C", ratio, allow_zero=True),
                          _positive("an absorption branch's time constant", tau)))
    return tuple(out)


def _modes(ratios: np.ndarray, taus: np.ndarray, short_g: float) -> tuple[np.ndarray, ...]:
    """``lambda``, ``Phi`` (M-orthonormal) and ``M`` of ``M dx/dt = -K x``; ``short_g`` is
    ``1 / (R_short C)``, 1/s (0 when open)."""
    g = ratios / taus
    k = np.zeros((ratios.size + 1, ratios.size + 1))
    k[0, 0] = g.sum() + short_g
    k[0, 1:] = k[1:, 0] = -g
    k[1:, 1:] = np.diag(g)
    root = np.sqrt(np.concatenate(([1.0], ratios)))  # M diagonal: phi = M^-1/2 q, phi^T M phi = 1
    lam, q = np.linalg.eigh(k / np.outer(root, root))
    return np.clip(lam, 0.0, None), q / root[:, None], np.diag(root * root)


def recovery(branches: Iterable[Branch | tuple[float, float]], charge_s: float, short_s: float,
             read_s: float, *, short_ohm: float = 0.0, capacitance_f: float | None = None,
             peak: bool = True) -> float:
    """The recovery-voltage test on a Dow network, exactly, as a fraction of the charge voltage.

    From rest, the main capacitor is held at the charge voltage ``V_c`` by an ideal
    source for ``charge_s`` (every branch then holds ``V_c (1 - exp(-charge_s / tau_i))``;
    ``inf`` for steady), shorted for ``short_s`` (ideally, ``V = 0``, each branch
    decaying as ``exp(-t / tau_i)``; or through ``short_ohm`` when ``capacitance_f`` is
    given, the network then evolving with ``1 / (R_short C)`` to ground), and opened.

    Parameters
    ----------
    branches : iterable of Branch or (ratio, tau_s)
    charge_s, short_s, read_s : float
        Durations of the charge, the short and the reading window, s.
    short_ohm : float, optional
        Resistance of the short, ohm (used only with ``capacitance_f``).
    capacitance_f : float, optional
        The main capacitance, F.
    peak : bool, optional
        True: the highest voltage within ``read_s`` of opening (the standard test's
        reading); False: the voltage at ``read_s``.

    Returns
    -------
    float
        ``V / V_c`` after opening.

    Raises
    ------
    AnalysisError
        A bad branch or a duration that is not a positive number.
    """
    bs = [b for b in checked_branches(branches) if b.ratio > 0.0]
    _positive("the charge time", charge_s, allow_inf=True)
    _positive("the short time", short_s, allow_zero=True)
    _positive("the reading time", read_s)
    if not bs:
        return 0.0
    ratios = np.array([b.ratio for b in bs])
    taus = np.array([b.tau_s for b in bs])
    u = -np.expm1(-charge_s / taus) if math.isfinite(charge_s) else np.ones_like(taus)
    if capacitance_f is not None and short_ohm > 0.0:
        short_g = 1.0 / (_positive("the short's resistance", short_ohm)
                         * _positive("the capacitance", capacitance_f))
        lam, phi, m = _modes(ratios, taus, short_g)
        x = phi @ (np.exp(-lam * short_s) * (phi.T @ (m @ np.concatenate(([1.0], u)))))
    else:
        x = np.concatenate(([0.0], u * np.exp(-short_s / taus)))
    lam, phi, m = _modes(ratios, taus, 0.0)
    amp = phi[0] * (phi.T @ (m @ x))  # V(t) = sum amp_k exp(-lam_k t)

    def v(t: np.ndarray | float) -> np.ndarray:
        return np.exp(-np.multiply.outer(np.atleast_1d(t), lam)) @ amp

    end = float(v(read_s)[0])
    if not peak:
        return end
    grid = np.concatenate(([0.0], np.geomspace(read_s * 1e-12, read_s, _PEAK_GRID)))
    vals = v(grid)
    i = int(np.argmax(vals))
    if i >= grid.size - 1:
        return max(end, float(vals[i]))
    lo, hi = grid[max(i - 1, 0)], grid[i + 1]
    _, low = bounded_minimum(lambda s: -float(v(s)[0]), lo, hi, xatol=1e-9 * hi)
    return max(float(vals[i]), -float(low), end)


def even_spread(per_decade: float, low_s: float, high_s: float,
                per_decade_branches: int = SPREAD_PER_DECADE) -> tuple[Branch, ...]:
    """Branches spreading ``per_decade`` (``C_i / C`` per decade of time constant) evenly
    from ``low_s`` to ``high_s``: ``m`` branches a decade, each ``per_decade / m``, at the
    logarithmic middles of equal steps (SOURCES.md [even-spread])."""
    _positive("the absorption per decade", per_decade, allow_zero=True)
    decades = math.log10(_positive("the spread's top", high_s)
                         / _positive("the spread's bottom", low_s))
    count = max(1, int(math.ceil(decades * per_decade_branches - 1e-9)))
    step = decades / count
    taus = low_s * 10.0 ** (step * (np.arange(count) + 0.5))
    return tuple(Branch(per_decade * step, float(t)) for t in taus)


def place_dielectric(recovery_pct: float) -> DielectricPlacement:
    """Where a standard-test figure falls among the typical ranges of
    :data:`DIELECTRIC_ABSORPTION` (SOURCES.md [dielectric-table]).

    The distance to a range is ``|log10(figure / edge)|`` to its nearer edge, 0 inside.
    """
    v = float(recovery_pct)
    rows = DIELECTRIC_ABSORPTION
    if not math.isfinite(v) or v <= 0.0:
        low = min(rows, key=lambda r: r.low_pct)
        return DielectricPlacement(v, (), low.dielectric, math.inf, "below")
    within = tuple(r.dielectric for r in rows if r.low_pct <= v <= r.high_pct)

    def distance(r: DielectricRow) -> float:
        if r.low_pct <= v <= r.high_pct:
            return 0.0
        return abs(math.log10(v / (r.low_pct if v < r.low_pct else r.high_pct)))

    near = min(rows, key=lambda r: (distance(r), r.high_pct - r.low_pct))
    if within:
        position = "within"
    elif v < min(r.low_pct for r in rows):
        position = "below"
    elif v > max(r.high_pct for r in rows):
        position = "above"
    else:
        position = "between"
    return DielectricPlacement(v, within, near.dielectric, distance(near), position)


#: The assumption behind the extrapolated standard figure, printed beside it (with the range).
ASSUMPTION = ("absorption spread evenly per decade of time constant over the range, at the "
              "density measured at the ramp's time scale (a depolarisation current falling "
              "as 1/t, the Curie-von Schweidler law with exponent 1; from memory); a real "
              "dielectric's density drifts with time constant, so the figure is an estimate, "
              "not a measurement")


def absorption_figures(branches: Iterable[Branch | tuple[float, float]], ramp_time_s: float,
                       reset_time_s: float, *,
                       visible_band_s: tuple[float, float] | None = None,
                       read_ramps: float = READ_RAMPS, capacitance_f: float | None = None,
                       spread_top_s: float = SPREAD_TOP_S) -> AbsorptionFigures:
    """What a ramp capture measures of dielectric absorption, and the standard figure it implies.

    Parameters
    ----------
    branches : iterable of Branch or (ratio, tau_s)
        Fitted Dow branches, ``C_i / C`` and ``tau_i = R_i C_i`` (s).
    ramp_time_s, reset_time_s : float
        The ramp time and the reset (retrace) time of the capture, s.
    visible_band_s : (float, float), optional
        The band of time constants the capture sees, s. Default ``(reset_time_s,
        ramp_time_s)``: a branch faster than the reset is discharged within it and
        recharged at the ramp's very start, so it only adds to ``C``; one slower than
        the ramp holds nearly the mean ramp level and looks like a shunt.
    read_ramps : float, optional
        The short-time test reads this many ramp times after opening (default 3).
    capacitance_f : float, optional
        The main capacitance, F: the standard test's short then goes through
        :data:`STANDARD_SHORT_OHM`; without it the short is ideal (the difference is
        ``5 ohm x C`` against a 10 s short).
    spread_top_s : float, optional
        Top of the range the even spread is assumed over, s (default 1e5).

    Returns
    -------
    AbsorptionFigures
        With ``absorbed_pct_per_decade = 100 sum_band(C_i / C) / log10(high / low)``
        and the standard figure extrapolated from it (``standard_recovery_pct``); for a
        density ``k`` per decade this is near ``k log10(t_read / t_short) = 1.95 k``
        (each branch with ``t_short << tau_i << t_read`` gives back its charge;
        *derived*); computed exactly on the spread network (1.83 k from 1 µs).

    Raises
    ------
    AnalysisError
        A bad branch; a time that is not positive; a band whose top is not above its
        bottom.
    """
    bs = checked_branches(branches)
    ramp = _positive("the ramp time", ramp_time_s)
    reset = _positive("the reset time", reset_time_s)
    lo, hi = (reset, ramp) if visible_band_s is None else (
        _positive("the band's bottom", visible_band_s[0]),
        _positive("the band's top", visible_band_s[1]))
    if not hi > lo:
        raise AnalysisError(f"the band of time constants seen must rise: {lo!r} s to {hi!r} s "
                            "(is the reset time shorter than the ramp time?)")
    top = _positive("the spread's top", spread_top_s)
    if not top > lo:
        raise AnalysisError(f"the spread's top ({top!r} s) must be above the band ({lo!r} s)")
    decades = math.log10(hi / lo)
    seen = [b for b in bs if lo * (1 - _EDGE) <= b.tau_s <= hi * (1 + _EDGE)]
    ratio = float(sum(b.ratio for b in seen))
    density = ratio / decades
    read = _positive("the reading time in ramp times", read_ramps) * ramp
    short = 100.0 * recovery(bs, math.inf, reset, read, peak=False)
    std = dict(short_ohm=STANDARD_SHORT_OHM, capacitance_f=capacitance_f)
    std_args = (STANDARD_CHARGE_S, STANDARD_SHORT_S, STANDARD_READ_S)
    from_branches = 100.0 * recovery(bs, *std_args, **std)
    extrapolated = 100.0 * recovery(even_spread(density, lo, top), *std_args, **std)
    return AbsorptionFigures(
        branches=bs, ramp_time_s=ramp, reset_time_s=reset, band_low_s=lo, band_high_s=hi,
        band_decades=decades, visible_branches=len(seen), visible_ratio=ratio,
        absorbed_pct_per_decade=100.0 * density, short_charge="steady", short_short_s=reset,
        short_read_s=read, short_recovery_pct=short, standard_charge_s=STANDARD_CHARGE_S,
        standard_short_s=STANDARD_SHORT_S,
        standard_short_ohm=STANDARD_SHORT_OHM if capacitance_f is not None else 0.0,
        standard_read_s=STANDARD_READ_S, standard_from_branches_pct=from_branches,
        standard_recovery_pct=extrapolated, spread_low_s=lo, spread_high_s=top,
        assumption=ASSUMPTION, placement=place_dielectric(extrapolated))


def _held_lag(ratio: float, tau_obs_s: float, ramp_s: float, reset_s: float) -> float:
    """``u_0 / s``, s: the branch voltage left at a ramp's start over the unloaded slope
    ``s = I / C``, in the periodic steady state (see :func:`branch_from_relaxation`)."""
    e = math.exp(-ramp_s / tau_obs_s)
    d = math.exp(-reset_s / (tau_obs_s * (1.0 + ratio)))
    return d * (ramp_s + tau_obs_s * math.expm1(-ramp_s / tau_obs_s)) / (
        1.0 + ratio * (1.0 - d) - d * e)


def branch_from_relaxation(amplitude_fraction: float, tau_s: float, ramp_time_s: float,
                           reset_time_s: float) -> Branch:
    """The Dow branch behind one capture's early relaxation (one branch, periodic steady state).

    A current ``I`` charges ``C`` with one branch ``C_1 = rho C``, ``tau = R_1 C_1``;
    after each ramp (``T``) the main capacitor is held at the start level for the reset
    time ``t_r`` (the branch meanwhile decays with ``tau``) and the next ramp starts
    with the branch ``u_0`` above it. With ``w = V - u_1``, ``dw/dt = I/C - w / tau'``,
    ``tau' = tau / (1 + rho)``, and charge ``C V + C_1 u_1 = C_1 u_0 + I t``, so along the
    ramp (exact; *derived*)::

        V(t) = const + s t / (1 + rho) - A_0 exp(-t / tau'),   s = I / C,
        A_0 = rho (u_0 + s tau') / (1 + rho),
        u_0 / s = D (T - tau' (1 - E)) / (1 + rho (1 - D) - D E),
        E = exp(-T / tau'),  D = exp(-t_r / tau).

    With the fitted late slope ``b / T = s / (1 + rho)`` the measured fraction is
    ``f = A_0 / b = rho (u_0 / s + tau') / T``, solved for ``rho`` by
    ``rootfind.brentq`` (the right side rises with ``rho``).

    Parameters
    ----------
    amplitude_fraction : float
        ``f``: the relaxation's amplitude at the ramp's start over the linear part's
        rise across the ramp. From ``models``' fit ``a + b x - A exp(-(x - x0) / r)``
        (``x = t / T``, ``x0`` the window's start): ``f = A exp(x0 / r) / b``.
    tau_s : float
        The fitted relaxation time ``tau' = r T``, s (the diagnosis's ``tau_s``).
    ramp_time_s, reset_time_s : float
        ``T`` and ``t_r``, s (``t_r`` may be 0).

    Returns
    -------
    Branch
        ``ratio = rho``, ``tau_s = (1 + rho) tau'``.

    Raises
    ------
    AnalysisError
        A negative or non-finite fraction; a time constant or ramp time not above zero.
    """
    f = _positive("the relaxation's amplitude fraction", amplitude_fraction, allow_zero=True)
    tau_obs = _positive("the relaxation time", tau_s)
    ramp = _positive("the ramp time", ramp_time_s)
    reset = _positive("the reset time", reset_time_s, allow_zero=True)
    if f == 0.0:
        return Branch(0.0, tau_obs)

    def excess(rho: float) -> float:
        return rho * (_held_lag(rho, tau_obs, ramp, reset) + tau_obs) - f * ramp

    hi = max(f * ramp / tau_obs, 1e-12)
    while excess(hi) < 0.0:
        hi *= 4.0
        if hi > 1e9:
            raise AnalysisError(f"no branch explains an amplitude fraction of {f!r}")
    rho = brentq(excess, 0.0, hi, xtol=1e-15, rtol=1e-13)
    return Branch(float(rho), float(tau_obs * (1.0 + rho)))
