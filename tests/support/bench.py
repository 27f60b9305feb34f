"""Bench-reality captures: the ramp generator as a circuit, and what a scope records of it.

The circuit (our own scenario): a transistor current source ``I`` charges a film capacitor
``C``, optionally loaded by a shunt ``R`` (a probe, leakage, the source's output
resistance); a comparator fires when the ramp reaches ``v_high`` and closes a discharge
switch that brings the node back to ``v_low`` in a short retrace, where the comparator
releases it. Every stretch of the waveform obeys one first-order equation,

    dV/dt = a - V / tau,

whose closed form ``V(s) = a tau + (V0 - a tau) exp(-s / tau)`` (``V0 + a s`` when there
is no resistive path, tau infinite) gives the voltage at every sample time exactly, and
``s = tau ln((a tau - V0) / (a tau - V1))`` the time to go from ``V0`` to ``V1``
(any first-order linear ODE text, e.g. Boyce & DiPrima, ch. 2 -- from memory). The
stretches:

- ramp: ``C dV/dt = I - V/R``, so ``a = I/C``, ``tau = R C`` (falling ramp: ``-I``);
- linear retrace: a constant-current sink ``I_d`` switched on as well:
  ``a = (I - I_d)/C``, ``tau = R C``; ``I_d`` is solved so the retrace lasts ``retrace_s``;
- exponential retrace: a switch of resistance ``R_on`` to a level ``V_sink`` a tenth of
  the swing beyond ``v_low``, released by the comparator at ``v_low``:
  ``a = I/C + V_sink/(R_on C)``, ``1/tau = 1/(R C) + 1/(R_on C)``; ``R_on`` is solved so
  the retrace lasts ``retrace_s``.

``tests/core/test_bench_reality.py`` checks this closed form against
``scipy.integrate.solve_ivp`` of the same equations.

The scope side is :func:`tests.support.quantise.quantise` (Gaussian noise, then an ADC of
8 to 12 bits over a stated range; its top and bottom codes clip).

Every capture function returns ``(Capture, truth)``. The truth dict holds, from the
noiseless model of one steady cycle: ``slope_v_per_s`` and ``nonlinearity_pct`` of the
least-squares line (``numpy.polyfit``, degree 1, on 20001 points of the noiseless ramp)
over the ramp trimmed 5 % at each end (or over the stated window), nonlinearity being
``100 max|residual| / (slope x window length)``; ``frequency_hz``, ``period_s``,
``ramp_time_s``, ``retrace_time_s``; ``start_v`` and ``end_v`` (the ramp's first and last
values); ``full_cycles`` (steady cycles wholly inside the record, each from a ramp start
after a reset to the end of its own retrace); ``signature``; ``direction``; ``dt_s``; and
what each scenario adds (documented in its function).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from scipy import optimize

from trueslope.core.capture import Capture

from .quantise import full_scale_for, quantise

#: Fraction of the ramp left out of the reference fit at each end (the default window).
TRIM = 0.05
#: Points of the noiseless ramp the reference fit uses.
TRUTH_POINTS = 20001


# ------------------------------------------------------------------ the circuit

@dataclass(frozen=True)
class Stretch:
    """One stretch of the waveform: ``dV/dt = a - V/tau`` from ``v0`` for ``duration_s``."""

    start_s: float
    duration_s: float
    v0: float
    a: float
    tau_s: float  # math.inf: no resistive path

    def at(self, s: np.ndarray) -> np.ndarray:
        """Voltage ``s`` seconds into the stretch (closed form)."""
        return relax(self.v0, self.a, self.tau_s, s)


def relax(v0: float, a: float, tau_s: float, s):
    """Closed form of ``dV/dt = a - V/tau``, ``V(0) = v0``, at ``s`` seconds."""
    s = np.asarray(s, dtype=float)
    if math.isinf(tau_s):
        return v0 + a * s
    v_inf = a * tau_s
    return v_inf + (v0 - v_inf) * np.exp(-s / tau_s)


def time_to(v0: float, v1: float, a: float, tau_s: float) -> float:
    """Seconds ``dV/dt = a - V/tau`` takes from ``v0`` to ``v1`` (raises if never)."""
    if math.isinf(tau_s):
        s = (v1 - v0) / a
    else:
        v_inf = a * tau_s
        ratio = (v_inf - v0) / (v_inf - v1)
        if not ratio > 1.0:
            raise ValueError(f"the node never goes from {v0} V to {v1} V "
                             f"(it settles at {v_inf} V)")
        s = tau_s * math.log(ratio)
    if not s > 0:
        raise ValueError(f"the node never goes from {v0} V to {v1} V")
    return float(s)


@dataclass(frozen=True)
class RampCircuit:
    """Current source into a capacitor, comparator reset; values in SI units.

    ``v_start`` is where the ramp starts (the comparator's release level) and ``v_stop``
    where it ends (its trip level); a falling ramp has ``v_stop < v_start`` and a current
    sink. ``shunt_ohm`` None is no shunt. ``retrace`` is ``"linear"`` or
    ``"exponential"``, lasting ``retrace_s``.
    """

    current_a: float = 1e-3
    capacitance_f: float = 10e-9
    shunt_ohm: float | None = None
    v_start: float = 1.0
    v_stop: float = 5.0
    retrace_s: float = 1e-6
    retrace: str = "linear"

    @property
    def falling(self) -> bool:
        return self.v_stop < self.v_start

    @property
    def tau_s(self) -> float:
        return math.inf if self.shunt_ohm is None else self.shunt_ohm * self.capacitance_f

    @property
    def ramp_a(self) -> float:
        return (-1.0 if self.falling else 1.0) * self.current_a / self.capacitance_f

    def ramp_from(self, v0: float, start_s: float) -> Stretch:
        """The ramp from ``v0`` until the comparator trips at ``v_stop``."""
        d = time_to(v0, self.v_stop, self.ramp_a, self.tau_s)
        return Stretch(start_s, d, v0, self.ramp_a, self.tau_s)

    def retrace_from(self, start_s: float) -> Stretch:
        """The retrace from ``v_stop`` back to ``v_start``, lasting ``retrace_s``."""
        v0, v1, want = self.v_stop, self.v_start, self.retrace_s
        if self.retrace == "linear":
            # a sink current I_d against the ramp's current, solved for the duration
            if math.isinf(self.tau_s):
                return Stretch(start_s, want, v0, (v1 - v0) / want, self.tau_s)
            edge = v1 / self.tau_s  # the drive at which the node would just settle at v1
            steep = edge + 2.0 * (v1 - v0) / want  # drives faster than |v1 - v0| / (want/2)
            slow = edge + 1e-9 * (steep - edge)
            a = optimize.brentq(lambda x: time_to(v0, v1, x, self.tau_s) - want, steep, slow,
                                xtol=1e-15 * abs(steep), rtol=1e-14)
            return Stretch(start_s, want, v0, a, self.tau_s)
        if self.retrace == "exponential":
            sink = v1 - 0.1 * (v0 - v1)
            c = self.capacitance_f

            def stretch(r_on):
                g = 1.0 / r_on + (0.0 if self.shunt_ohm is None else 1.0 / self.shunt_ohm)
                return self.ramp_a + sink / (r_on * c), c / g

            def miss(log_r):
                a, tau = stretch(math.exp(log_r))
                return time_to(v0, v1, a, tau) - want
            # above this R_on the ramp's own current holds the node short of v1
            r_max = (v1 - sink) / (self.ramp_a * c)
            log_r = optimize.brentq(miss, math.log(1e-9 * r_max), math.log(0.999 * r_max),
                                    xtol=1e-14)
            a, tau = stretch(math.exp(log_r))
            return Stretch(start_s, want, v0, a, tau)
        raise ValueError(f"unknown retrace {self.retrace!r}")

    def ramp_time_s(self) -> float:
        return time_to(self.v_start, self.v_stop, self.ramp_a, self.tau_s)

    def period_s(self) -> float:
        return self.ramp_time_s() + self.retrace_s


def steady_stretches(c: RampCircuit, start_s: float, cycles: int) -> list[Stretch]:
    """``cycles`` steady cycles (ramp and retrace) from ``start_s``."""
    out, t = [], start_s
    for _ in range(cycles):
        r = c.ramp_from(c.v_start, t)
        d = c.retrace_from(t + r.duration_s)
        out += [r, d]
        t = d.start_s + d.duration_s
    return out


def sample(stretches: list[Stretch], t: np.ndarray, before_v: float | None = None
           ) -> np.ndarray:
    """The waveform at times ``t``; before the first stretch ``before_v`` (or its start),
    after the last the last stretch continues."""
    t = np.asarray(t, dtype=float)
    if np.any(np.diff(t) < 0):
        raise ValueError("sample times must be in order")
    starts = np.array([s.start_s for s in stretches])
    edges = np.searchsorted(t, starts, side="left")
    v = np.empty(t.shape)
    v[:edges[0]] = stretches[0].v0 if before_v is None else before_v
    ends = np.append(edges[1:], t.size)
    for s, i, j in zip(stretches, edges, ends):
        if j > i:
            v[i:j] = s.at(t[i:j] - s.start_s)
    return v


def _end(s: Stretch) -> float:
    return s.start_s + s.duration_s


def ramp_truth(c: RampCircuit, window_s: tuple[float, float] | None = None) -> dict:
    """Least-squares figures of one steady ramp of the noiseless model (numpy.polyfit).

    Over ``window_s`` (seconds from the ramp start, its end cut at the ramp's end) or the
    ramp trimmed :data:`TRIM` at each end. Returns ``slope_v_per_s``, ``nonlinearity_pct``
    and the window used.
    """
    tr = c.ramp_time_s()
    a, b = (TRIM * tr, (1 - TRIM) * tr) if window_s is None else (window_s[0],
                                                                  min(window_s[1], tr))
    s = np.linspace(a, b, TRUTH_POINTS)
    v = relax(c.v_start, c.ramp_a, c.tau_s, s)
    slope, icpt = np.polyfit(s, v, 1)
    resid = v - (slope * s + icpt)
    nl = 100.0 * float(np.max(np.abs(resid))) / abs(slope * (b - a))
    return {"slope_v_per_s": float(slope), "nonlinearity_pct": nl,
            "window_start_s": float(a), "window_end_s": float(b)}


def base_truth(c: RampCircuit, dt: float, full_cycles: int, signature: str,
               window_s: tuple[float, float] | None = None) -> dict:
    """The truth every scenario shares (see the module docstring)."""
    period = c.period_s()
    t = {"frequency_hz": 1.0 / period, "period_s": period, "ramp_time_s": c.ramp_time_s(),
         "retrace_time_s": c.retrace_s, "start_v": c.v_start, "end_v": c.v_stop,
         "full_cycles": int(full_cycles), "signature": signature,
         "direction": "falling" if c.falling else "rising", "dt_s": float(dt)}
    t.update(ramp_truth(c, window_s))
    return t


def _capture(v: np.ndarray, dt: float, name: str) -> Capture:
    return Capture(source=f"{name}.csv", channels={"CH1": v}, sample_interval_s=dt)


def _times(n: int, dt: float) -> np.ndarray:
    return dt * np.arange(n)


def steady_record(c: RampCircuit, cycles: int, samples_per_ramp: float, lead_phase=0.4,
                  tail_phase=0.3):
    """Noiseless record of ``cycles`` full steady cycles with a partial cycle at each end.

    The record starts ``lead_phase`` of the way into a ramp and ends ``tail_phase`` into
    the ramp after the last full cycle. Returns ``(t, v, dt, stretches, first_full_s)``.
    """
    tr = c.ramp_time_s()
    dt = tr / samples_per_ramp
    st = steady_stretches(c, 0.0, cycles + 2)
    t_begin = lead_phase * tr
    t_stop = _end(st[2 * cycles + 1]) + tail_phase * tr
    n = int(math.floor((t_stop - t_begin) / dt))
    t = t_begin + _times(n, dt)
    v = sample(st, t)
    return t - t_begin, v, dt, st, _end(st[1]) - t_begin


# ------------------------------------------------------------------ the captures

#: The everyday circuit: 1 mA into 10 nF, 1 V to 5 V (40 us ramp), 1 us linear retrace.
FILM = RampCircuit()


def power_up(bits=10, noise_v=2e-3, seed=1, steady=14, samples_per_ramp=300,
             circuit: RampCircuit = FILM, off_level_v=0.0):
    """The scope triggered on power-up: the node sits at ``off_level_v`` (supply off) for
    a third of a period, the first ramp runs from there to the trip level (longer than a
    steady one), then ``steady`` steady cycles and a partial ramp.

    Extra truth: ``steady_start_s``, the start of the first steady ramp (the end of the
    first retrace): what precedes it is the unsteady start left out.
    """
    c = circuit
    tr = c.ramp_time_s()
    dt = tr / samples_per_ramp
    on = c.period_s() / 3.0
    first = c.ramp_from(off_level_v, on)
    back = c.retrace_from(_end(first))
    st = [first, back] + steady_stretches(c, _end(back), steady + 1)
    t_stop = _end(st[2 * steady + 1]) + 0.4 * tr
    t = _times(int(t_stop / dt), dt)
    v = sample(st, t, before_v=off_level_v)
    fs = full_scale_for(v)
    truth = base_truth(c, dt, steady, "linear" if c.shunt_ohm is None else "shunt-loading")
    truth.update(steady_start_s=_end(back), first_ramp_s=first.duration_s, power_on_s=on)
    return _capture(quantise(v, bits, fs, noise_v, seed), dt, "power_up"), truth


def probe_settling(bits=10, noise_v=2e-3, seed=2, cycles=20, samples_per_ramp=300,
                   offset_v=1.0):
    """A 10x probe just connected: the trace settles onto the steady waveform as an offset
    ``offset_v exp(-t/tau_p)`` with ``tau_p`` a fifth of the record's first fifth.

    Extra truth: ``settled_s`` (5 tau_p, a fifth of the record: the offset is below
    0.7 % of its start); ``must_count`` the full cycles starting at or after it (every one
    of them must be counted); ``may_count`` those whose offset drift across their period
    is under 1 % of the swing (no cycle beyond these may be counted: such a drift alone
    moves a cycle's slope by 1 %, twice the slope tolerance); ``tau_p_s``.
    """
    c = FILM
    t, v, dt, st, first_full = steady_record(c, cycles, samples_per_ramp)
    record = t[-1] + dt
    tau_p = record / 5.0 / 5.0
    v = v + offset_v * np.exp(-t / tau_p)
    period = c.period_s()
    starts = first_full + period * np.arange(cycles)
    drift = offset_v * np.exp(-starts / tau_p) * (1.0 - math.exp(-period / tau_p))
    swing = abs(c.v_stop - c.v_start)
    must = int(np.count_nonzero(starts >= 5 * tau_p))
    may = int(np.count_nonzero(drift < 0.01 * swing))
    fs = full_scale_for(v)
    truth = base_truth(c, dt, must, "linear")
    truth.update(settled_s=5 * tau_p, must_count=must, may_count=may, tau_p_s=tau_p,
                 cycle_starts_s=starts.tolist())
    return _capture(quantise(v, bits, fs, noise_v, seed), dt, "probe_settling"), truth


def generator_off(bits=10, noise_v=2e-3, seed=3, cycles=18, samples_per_ramp=300,
                  off_phase=0.55, flat_share=0.15):
    """The generator switched off ``off_phase`` of the way into the ramp after the last
    full cycle: its supply collapses, the node falls to 0 V (time constant a third of the
    retrace) and stays there for the last ``flat_share`` of the record.

    Extra truth: ``steady_end_s`` (end of the last full cycle: the start of the
    interrupted ramp), ``off_s`` (the switch-off instant).
    """
    c = FILM
    tr = c.ramp_time_s()
    dt = tr / samples_per_ramp
    st = steady_stretches(c, 0.0, cycles + 1)
    t_begin = 0.4 * tr
    steady_end = _end(st[2 * cycles + 1])
    cut = c.ramp_from(c.v_start, steady_end)
    t_off = steady_end + off_phase * cut.duration_s
    v_off = float(cut.at(t_off - steady_end))
    tau_off = c.retrace_s / 3.0
    st = st[:2 * cycles + 2] + [replace(cut, duration_s=t_off - steady_end),
                                Stretch(t_off, math.inf, v_off, 0.0, tau_off)]
    t_stop = t_begin + (t_off - t_begin) / (1.0 - flat_share)
    t = t_begin + _times(int((t_stop - t_begin) / dt), dt)
    v = sample(st, t)
    fs = full_scale_for(v)
    truth = base_truth(c, dt, cycles, "linear")
    truth.update(steady_end_s=steady_end - t_begin, off_s=t_off - t_begin)
    return _capture(quantise(v, bits, fs, noise_v, seed), dt, "generator_off"), truth


def spike_positions(count=20, seed=44, cycles=16, samples_per_ramp=300):
    """``count`` seeded spike positions as ``(cycle, phase)``: the cycle among the full
    ones, the phase as a fraction of its period. Even-numbered ones sit on the ramp
    between the 30 % and 70 % levels (between a segmenter's thresholds); the others
    anywhere in the cycle, retrace included."""
    rng = np.random.default_rng(seed)
    c = FILM
    ramp_share = c.ramp_time_s() / c.period_s()
    out = []
    for i in range(count):
        k = int(rng.integers(0, cycles))
        u = rng.uniform(0.3, 0.7) * ramp_share if i % 2 == 0 else rng.uniform(0.0, 1.0)
        out.append((k, float(u)))
    return out


def with_spike(cycle: int, phase: float, bits=10, noise_v=2e-3, seed=4, cycles=16,
               samples_per_ramp=300, spike_v=-1.0):
    """The everyday ramp with one sample hit by EMI: it reads ``spike_v``. The scope's
    range reaches below -1 V so the spike is recorded, not clipped.

    Extra truth: ``spike_s`` (the spike sample's time), ``spike_index``,
    ``spike_cycle_start_s`` and ``spike_cycle_end_s`` (the full cycle holding it).
    """
    c = FILM
    t, v, dt, st, first_full = steady_record(c, cycles, samples_per_ramp)
    period = c.period_s()
    start = first_full + cycle * period
    i = int(round((start + phase * period) / dt))
    v = v.copy()
    v[i] = spike_v
    fs = (-1.5, 5.6)
    truth = base_truth(c, dt, cycles, "linear")
    truth.update(spike_s=float(t[i]), spike_index=i, spike_cycle_start_s=start,
                 spike_cycle_end_s=start + period)
    return _capture(quantise(v, bits, fs, noise_v, seed), dt, "spike"), truth


def clipped(bits=10, noise_v=2e-3, seed=5, cycles=16, samples_per_ramp=400,
            clip_share=0.10, circuit: RampCircuit = replace(FILM, retrace_s=1e-6)):
    """The scope's range set so its top code sits ``clip_share`` of the swing below the
    ramp's top: the top of every ramp is recorded flat at the top code.

    Extra truth: ``clip_v`` (the top code's value), ``clip_from_s`` (seconds from the ramp
    start at which the noiseless ramp reaches the top code's lower decision level,
    ``clip_v - q/2``), ``clipped_share_pct`` (share of each ramp's duration above it),
    ``top_code_v`` (same as ``clip_v``), ``adc_step_v``.
    """
    c = circuit
    t, v, dt, st, first_full = steady_record(c, cycles, samples_per_ramp)
    swing = c.v_stop - c.v_start
    top = c.v_stop - clip_share * swing
    lo = c.v_start - 0.3 * swing
    q = (top - lo) / (2 ** bits - 1)
    fs = (lo, lo + 2 ** bits * q)
    decision = top - 0.5 * q
    t_clip = time_to(c.v_start, decision, c.ramp_a, c.tau_s)
    truth = base_truth(c, dt, cycles, "linear" if c.shunt_ohm is None else "shunt-loading")
    truth.update(clip_v=top, top_code_v=top, adc_step_v=q, clip_from_s=t_clip,
                 clipped_share_pct=100.0 * (1.0 - t_clip / c.ramp_time_s()),
                 first_full_s=first_full)
    return _capture(quantise(v, bits, fs, noise_v, seed), dt, "clipped"), truth


def edge_moves(kind="coarse", bits=12, noise_v=1e-3, seed=6):
    """Identical cycles whose reset edge falls at a different place between samples from
    cycle to cycle.

    ``kind="coarse"``: 22 full cycles at 40 samples per ramp and a retrace of 1.6 samples
    (41.6 samples per period, so the edge moves through the sample grid);
    ``kind="exponential"``: 12 full cycles, 200.3 samples per ramp, an exponential
    retrace lasting 15 % of the period.
    """
    if kind == "coarse":
        tr = FILM.ramp_time_s()
        c = replace(FILM, retrace_s=1.6 * tr / 40.0)
        cycles, spr = 22, 40.0
    elif kind == "exponential":
        tr = FILM.ramp_time_s()
        c = replace(FILM, retrace="exponential", retrace_s=0.15 / 0.85 * tr)
        cycles, spr = 12, 200.3
    else:
        raise ValueError(kind)
    t, v, dt, st, _ = steady_record(c, cycles, spr)
    fs = full_scale_for(v)
    return (_capture(quantise(v, bits, fs, noise_v, seed), dt, f"edge_{kind}"),
            base_truth(c, dt, cycles, "linear"))


#: The honest-floor circuit: 2 mA into 10 nF with a 100 kOhm shunt (tau 1 ms), 0.5 V to
#: 4.3 V, so the least-squares nonlinearity over the trimmed ramp is about 0.15 %.
FLOOR_CIRCUIT = RampCircuit(current_a=2e-3, capacitance_f=10e-9, shunt_ohm=100e3,
                            v_start=0.5, v_stop=4.3, retrace_s=0.4e-6)
#: 8 bits over 5.12 V: 20 mV per code.
FLOOR_RANGE = (-0.2, 4.92)


def honest_floor(cycles=1013, noise_v=3e-3, seed=7, samples_per_ramp=200.37,
                 locked=False):
    """The honest-floor circuit at 8 bits (20 mV codes).

    ``locked=False``: a free-running generator, the scope's clock unrelated to it
    (``samples_per_ramp`` not a whole number, so each cycle meets the codes at new
    sampling phases). ``locked=True``: the scope's sample clock locked to the generator,
    a whole number of samples per period (the ramp time rounded), every cycle sampled at
    the same phases; with ``noise_v=0`` every cycle then records the very same codes.
    """
    c = FLOOR_CIRCUIT
    if locked:
        per = round(c.period_s() / (c.ramp_time_s() / samples_per_ramp))
        dt = c.period_s() / per
        one = sample(steady_stretches(c, 0.0, 1), dt * np.arange(per))
        lead = int(0.4 * per)
        v = np.tile(one, cycles + 2)[lead:lead + (cycles + 1) * per + int(0.3 * per)]
    else:
        _, v, dt, _, _ = steady_record(c, cycles, samples_per_ramp)
    truth = base_truth(c, dt, cycles, "shunt-loading")
    truth.update(adc_step_v=(FLOOR_RANGE[1] - FLOOR_RANGE[0]) / 256,
                 samples_per_period=c.period_s() / dt)
    return _capture(quantise(v, 8, FLOOR_RANGE, noise_v, seed), dt, "honest_floor"), truth


def flat_dc(level_v=1.2, noise_v=2e-3, bits=10, seed=8, samples=20000, dt=1e-7):
    """A constant ``level_v`` with noise: the generator is not running."""
    v = np.full(samples, level_v)
    return (_capture(quantise(v, bits, (-0.5, 5.5), noise_v, seed), dt, "flat_dc"),
            {"level_v": level_v, "dt_s": dt})


def single_cycle(bits=10, noise_v=2e-3, seed=9, samples_per_ramp=400):
    """Exactly one full cycle: half a ramp, a reset, one full ramp, a reset, a third of a
    ramp."""
    c = FILM
    t, v, dt, st, _ = steady_record(c, 1, samples_per_ramp, lead_phase=0.5, tail_phase=0.33)
    fs = full_scale_for(v)
    return (_capture(quantise(v, bits, fs, noise_v, seed), dt, "single_cycle"),
            base_truth(c, dt, 1, "linear"))


#: A shunt-loaded everyday ramp: 1 mA into 10 nF with 270 kOhm across it (tau 2.7 ms).
SHUNTED = replace(FILM, shunt_ohm=270e3)


def window_past_end(bits=12, noise_v=1e-3, seed=10, cycles=20, samples_per_ramp=300,
                    start_fraction=0.2, end_fraction=1.5):
    """The shunt-loaded ramp with an explicit fit window from ``start_fraction`` to
    ``end_fraction`` of the ramp time: its end lies past the ramp's end.

    Extra truth: ``requested_window_s``; the figures (slope, nonlinearity, window) are
    over the window cut at the ramp's end.
    """
    c = SHUNTED
    tr = c.ramp_time_s()
    win = (start_fraction * tr, end_fraction * tr)
    t, v, dt, st, _ = steady_record(c, cycles, samples_per_ramp)
    fs = full_scale_for(v)
    truth = base_truth(c, dt, cycles, "shunt-loading", window_s=win)
    truth["requested_window_s"] = win
    return _capture(quantise(v, bits, fs, noise_v, seed), dt, "window"), truth


#: A falling ramp: a current sink discharges 10 nF from 5 V to 1 V, a switch resets it
#: up; the capacitor is returned to the 6 V rail, so at power-up the node starts at 6 V.
FALLING = replace(FILM, v_start=5.0, v_stop=1.0)


def falling_power_up(**kw):
    """:func:`power_up` of the falling ramp, the node starting at the 6 V rail."""
    kw.setdefault("steady", 12)
    return power_up(circuit=FALLING, off_level_v=6.0, **kw)


def spike_and_clipping(bits=10, noise_v=2e-3, seed=11, cycles=16, samples_per_ramp=400,
                       cycle=7, phase=0.45):
    """:func:`clipped` with one EMI sample at the bottom code in cycle ``cycle`` at
    ``phase`` of its period (the range does not reach -1 V, so the spike clips low)."""
    cap, truth = clipped(bits, noise_v, seed, cycles, samples_per_ramp)
    v = np.array(cap.channels["CH1"])
    period = truth["period_s"]
    dt = truth["dt_s"]
    start = truth["first_full_s"] + cycle * period
    i = int(round((start + phase * period) / dt))
    lo = truth["clip_v"] - (2 ** bits - 1) * truth["adc_step_v"]
    v[i] = lo
    truth.update(spike_s=i * dt, spike_index=i, spike_cycle_start_s=start,
                 spike_cycle_end_s=start + period)
    return _capture(v, dt, "spike_clipped"), truth


#: Coarse sampling of a strongly loaded ramp: 1 mA into 10 nF with 100 kOhm across it.
COARSE_SHUNT = replace(FILM, shunt_ohm=100e3)


def coarse_shunt(bits=10, noise_v=2e-3, seed=12, cycles=40, samples_per_ramp=29.7):
    """The 100 kOhm-loaded ramp at about 30 samples per ramp (the retrace, 1 us, is shorter
    than a sample: the reset shows as a one-sample drop)."""
    c = COARSE_SHUNT
    t, v, dt, st, _ = steady_record(c, cycles, samples_per_ramp)
    fs = full_scale_for(v)
    return (_capture(quantise(v, bits, fs, noise_v, seed), dt, "coarse_shunt"),
            base_truth(c, dt, cycles, "shunt-loading"))


# ------------------------------------------------------------------ reading messages

_PREFIX = {"p": 1e-12, "n": 1e-9, "u": 1e-6, "\u00b5": 1e-6, "\u03bc": 1e-6, "m": 1e-3,
           "": 1.0}


def times_in(text: str) -> list[float]:
    """Every time written in ``text`` with a unit (``12.3 µs``, ``4.1e-5 s``), in seconds."""
    import re
    out = []
    for num, pre in re.findall(
            r"([-+]?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?)\s*(p|n|u|\u00b5|\u03bc|m|)s(?![\w/])", text):
        out.append(float(num) * _PREFIX[pre])
    return out


def percents_in(text: str) -> list[float]:
    """Every percentage written in ``text`` (``10.2 %``, ``10%``)."""
    import re
    return [float(x) for x in re.findall(r"([-+]?\d+(?:\.\d+)?)\s*%", text)]
