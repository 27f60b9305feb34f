"""Make the demo captures of ``sample_captures/`` -- INVENTED DEMO DATA, not measurements.

Each capture comes from a physical model of one ramp generator, integrated
with :func:`scipy.integrate.solve_ivp`, then "digitised" the way a bench
oscilloscope would: a 10x probe loading the timing node, Gaussian noise of
about 2 mV and an 8-bit converter spanning the vertical scale.

The circuit
-----------
A transistor current source (PNP source for a rising ramp, NPN sink for a
falling one) drives the timing capacitor. Its finite output resistance, the
capacitor's leakage and the probe's 10 Mohm form one shunt ``R_sh`` to
ground; the probe's ~12 pF sits across the capacitor. A window comparator
closes a reset switch (on-resistance ``R_sw``) when the ramp reaches its far
threshold and opens it again at the near one, after a propagation delay.
Dielectric absorption is a Dow model: series R_i-C_i branches across the
capacitor. A class-2 ceramic's bias dependence is a differential
capacitance ``C(v) = C0 (1 - beta v)``.

Node equations, state ``y = (v, v_1 .. v_m)``::

    (C0 (1 - beta v) + C_probe) dv/dt = I - v / R_sh - sum_i (v - v_i) / R_i
                                        + s (V_reset - v) / R_sw
    dv_i/dt = (v - v_i) / (R_i C_i)

with ``I`` positive for a source, negative for a sink, and ``s = 1`` while
the switch is closed. (Kirchhoff's current law at the timing node; the Dow
model as in P. C. Dow, IRE Trans. Electronic Computers, 1958, from memory.)

Run from the repository root::

    .venv/bin/python sample_captures/make_samples.py          # rewrite the files
    .venv/bin/python sample_captures/make_samples.py --check  # compare, write nothing

A fixed seed per capture makes the output byte-for-byte repeatable.
"""

from __future__ import annotations

import argparse
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

HERE = Path(__file__).resolve().parent

#: Tolerances of the integration: far below one ADC step (20 mV) and the noise.
RTOL = 1e-10
ATOL = 1e-12


@dataclass(frozen=True)
class Branch:
    """One Dow dielectric-absorption branch: ``capacitance_f`` charged through its own resistance.

    The branch time constant ``tau_s`` sets the series resistance ``tau_s / capacitance_f``.
    """

    capacitance_f: float
    tau_s: float

    @property
    def resistance_ohm(self) -> float:
        return self.tau_s / self.capacitance_f


@dataclass(frozen=True)
class RampCircuit:
    """A current-source ramp generator with comparator reset (all values SI).

    ``direction`` is ``"rising"`` (source charges, switch discharges to
    ``reset_target_v``) or ``"falling"`` (sink discharges, switch recharges).
    """

    direction: str
    capacitance_f: float
    current_a: float
    source_resistance_ohm: float
    leakage_resistance_ohm: float
    lower_threshold_v: float
    upper_threshold_v: float
    switch_resistance_ohm: float
    reset_target_v: float
    comparator_delay_s: float
    threshold_noise_v: float
    voltage_coefficient_per_v: float = 0.0
    branches: tuple[Branch, ...] = ()
    probe_resistance_ohm: float = 10e6
    probe_capacitance_f: float = 12e-12
    #: The current source's soft start at power-up: ``I (1 - exp(-t / soft_start_s))``.
    soft_start_s: float = 0.0

    @property
    def shunt_resistance_ohm(self) -> float:
        """Source output resistance || leakage || probe."""
        g = 1 / self.source_resistance_ohm + 1 / self.leakage_resistance_ohm \
            + 1 / self.probe_resistance_ohm
        return 1 / g

    @property
    def signed_current_a(self) -> float:
        return self.current_a if self.direction == "rising" else -self.current_a

    def rhs(self, closed: bool):
        """Right-hand side of the node equations with the switch open or closed."""
        c0, beta, cp = self.capacitance_f, self.voltage_coefficient_per_v, self.probe_capacitance_f
        i0, g_sh = self.signed_current_a, 1 / self.shunt_resistance_ohm
        g_sw = 1 / self.switch_resistance_ohm if closed else 0.0
        v_sw = self.reset_target_v
        g_b = np.array([1 / b.resistance_ohm for b in self.branches])
        c_b = np.array([b.capacitance_f for b in self.branches])

        soft = self.soft_start_s

        def f(_t: float, y: np.ndarray) -> np.ndarray:
            v, vb = y[0], y[1:]
            ib = g_b * (v - vb)
            drive = i0 * -np.expm1(-_t / soft) if soft > 0 else i0
            i = drive - g_sh * v - ib.sum() + g_sw * (v_sw - v)
            out = np.empty_like(y)
            out[0] = i / (c0 * (1 - beta * v) + cp)
            out[1:] = ib / c_b
            return out

        return f


@dataclass(frozen=True)
class Scope:
    """How the capture is digitised.

    The converter has ``2**bits`` codes of ``step_v`` from ``bottom_v`` (the
    vertical scale and position), so every sample is ``bottom_v + k step_v``.
    """

    sample_interval_s: float
    samples: int
    pretrigger_samples: int
    step_v: float
    bottom_v: float
    noise_rms_v: float = 2e-3
    bits: int = 8

    def digitise(self, v: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        """Add the front-end noise, then quantise and clip to the converter's codes."""
        noisy = v + rng.normal(0.0, self.noise_rms_v, v.shape)
        code = np.clip(np.rint((noisy - self.bottom_v) / self.step_v), 0, 2 ** self.bits - 1)
        return code.astype(np.int64)


@dataclass(frozen=True)
class Phase:
    """One stretch of the simulation with the switch in one state."""

    t0_s: float
    t1_s: float
    closed: bool
    sol: object  # scipy OdeSolution


def simulate(c: RampCircuit, t_end_s: float, rng: np.random.Generator,
             y0: np.ndarray | None = None) -> list[Phase]:
    """Integrate the generator from a cold-ish start until ``t_end_s``.

    The absorption branches start at mid-swing so the warm-up is short; each
    threshold crossing gets its own comparator input noise, then the switch
    changes state one comparator delay later.
    """
    lo, hi = c.lower_threshold_v, c.upper_threshold_v
    start = lo if c.direction == "rising" else hi
    y = (np.array([start] + [0.5 * (lo + hi)] * len(c.branches), dtype=float) if y0 is None
         else np.asarray(y0, dtype=float))
    t, closed, phases = 0.0, False, []
    f_open, f_closed = c.rhs(False), c.rhs(True)
    while t < t_end_s:
        # which threshold ends this phase: the far one while ramping, the near one while resetting
        rising_now = (c.direction == "rising") != closed
        level = (hi if rising_now else lo) + rng.normal(0.0, c.threshold_noise_v)

        def crossing(_t, yy, level=level):
            return yy[0] - level
        crossing.terminal = True
        crossing.direction = 1.0 if rising_now else -1.0
        f = f_closed if closed else f_open
        # the switch phase is short and fast; bound its step so the event is not stepped over
        max_step = np.inf if not closed else 0.05 * c.switch_resistance_ohm * c.capacitance_f
        r = solve_ivp(f, (t, t_end_s + 1.0), y, method="DOP853", rtol=RTOL, atol=ATOL,
                      events=crossing, dense_output=True, max_step=max_step)
        if r.status != 1:
            raise RuntimeError(f"no threshold crossing after t = {t:.6g} s: {r.message}")
        t_e = float(r.t_events[0][0])
        phases.append(Phase(t, t_e, closed, r.sol))
        # the comparator decides late: the same phase runs on for its delay
        t_d = t_e + c.comparator_delay_s
        r = solve_ivp(f, (t_e, t_d), r.y_events[0][0], method="DOP853", rtol=RTOL, atol=ATOL,
                      dense_output=True, max_step=max_step)
        phases.append(Phase(t_e, t_d, closed, r.sol))
        t, y, closed = t_d, r.y[:, -1], not closed
    return phases


def sample(phases: list[Phase], times_s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Node voltage and switch state at ``times_s`` (sorted), from the dense solutions."""
    if times_s.size and not (phases[0].t0_s <= times_s[0] and times_s[-1] <= phases[-1].t1_s):
        raise ValueError("sample times outside the simulated span")
    v = np.empty(times_s.shape)
    closed = np.zeros(times_s.shape, dtype=bool)
    starts = np.array([p.t0_s for p in phases])
    k = np.searchsorted(starts, times_s, side="right") - 1
    for i in np.unique(k):
        sel = k == i
        v[sel] = phases[i].sol(times_s[sel])[0]
        closed[sel] = phases[i].closed
    return v, closed


def _state_at(phases: list[Phase], t_s: float) -> np.ndarray:
    """Full state vector at one time, from the phase that holds it."""
    for p in phases:
        if p.t0_s <= t_s <= p.t1_s:
            return p.sol(t_s)
    raise ValueError(f"t = {t_s} s is outside the phases given")


def switch_closings(phases: list[Phase]) -> np.ndarray:
    """Times the reset switch closes (the comparator output's rising edge)."""
    return np.array([p.t0_s for p, q in zip(phases[1:], phases) if p.closed and not q.closed])


def record(c: RampCircuit, scope: Scope, rng: np.random.Generator, warmup_s: float):
    """Simulate and sample one record, triggered on a switch closing after ``warmup_s``.

    Returns (sample times relative to the trigger, node voltage, switch state,
    phases). The sample grid has a random sub-sample offset from the trigger, as
    a real scope's does.
    """
    dt, n = scope.sample_interval_s, scope.samples
    span = n * dt
    phases = simulate(c, warmup_s + span + 0.2 * span, rng)
    edges = switch_closings(phases)
    t_trig = float(edges[np.searchsorted(edges, warmup_s + scope.pretrigger_samples * dt)])
    k = np.arange(n) - scope.pretrigger_samples
    t_rel = k * dt
    frac = rng.uniform(0.0, 1.0)
    v, closed = sample(phases, t_trig + (k + frac) * dt)
    return t_rel, v, closed, phases


def true_figures(c: RampCircuit, phases: list[Phase], trim: float = 0.05) -> dict[str, float]:
    """Noise-free figures of the last full ramp simulated (the model's truth).

    Fit window: the ramp between switch opening and closing, trimmed by
    ``trim`` of its duration at each end. Nonlinearity is max |residual| of the
    least-squares line (numpy.polyfit) over the fitted span; the slope error is
    (v'(a) - v'(b)) / v'(a) in the ramp's own direction (Millman and Taub's
    sweep-speed error, from memory).
    """
    ramps = [(p, q) for p, q in zip(phases[:-1], phases[1:]) if not p.closed and not q.closed]
    first, second = ramps[-2]  # the last ramp may be cut by the end of the simulation
    a0, b0 = first.t0_s, second.t1_s
    T = b0 - a0
    a, b = a0 + trim * T, b0 - trim * T
    tt = np.linspace(a, b, 4001)
    ph = [first, second]
    v, _ = sample(ph, tt)
    sgn = 1.0 if c.direction == "rising" else -1.0
    x = sgn * v
    p = np.polyfit(tt - a, x, 1)
    res = x - np.polyval(p, tt - a)
    span = p[0] * (b - a)
    f = c.rhs(False)
    d_a = sgn * f(a, _state_at(ph, a))[0]
    d_b = sgn * f(b, _state_at(ph, b))[0]
    closes = switch_closings(phases)
    return {
        "ramp_time_s": T,
        "period_s": float(np.mean(np.diff(closes[-6:]))),
        "start_v": float(first.sol(a0)[0]),
        "end_v": float(second.sol(b0)[0]),
        "slope_v_per_s": sgn * p[0],
        "nonlinearity_pct": 100 * float(np.max(np.abs(res))) / span,
        "slope_error_pct": 100 * (d_a - d_b) / d_a,
    }


# --- the three scenarios -------------------------------------------------------------------

FILM = RampCircuit(
    direction="rising", capacitance_f=10e-9, current_a=100e-6,
    source_resistance_ohm=20e6, leakage_resistance_ohm=1e12,
    lower_threshold_v=1.0, upper_threshold_v=4.0,
    switch_resistance_ohm=100.0, reset_target_v=0.0,
    comparator_delay_s=100e-9, threshold_noise_v=0.5e-3,
    branches=(Branch(5e-12, 50e-6),),  # 0.05 % of C, tau 50 us: polypropylene
)
FILM_SCOPE = Scope(sample_interval_s=50e-9, samples=100_000, pretrigger_samples=20_000,
                   step_v=0.02, bottom_v=-0.12)
#: The comparator's logic output, digitised on its own channel (1 V/div, 40 mV codes).
SYNC_SCOPE = Scope(sample_interval_s=50e-9, samples=100_000, pretrigger_samples=20_000,
                   step_v=0.04, bottom_v=-0.4)
#: A 3.3 V CMOS output high, a little under the rail (and clear of a code boundary).
SYNC_HIGH_V = 3.29

X7R = RampCircuit(
    direction="rising", capacitance_f=47e-9, current_a=200e-6,
    source_resistance_ohm=20e6, leakage_resistance_ohm=10e9,
    lower_threshold_v=1.0, upper_threshold_v=4.0,
    switch_resistance_ohm=20.0, reset_target_v=0.0,
    comparator_delay_s=100e-9, threshold_noise_v=0.5e-3,
    voltage_coefficient_per_v=0.015,
    # 2.5 % of C in three branches, tau 20 us, 1 ms and 100 ms: X7R; most of it slow, so the
    # bias dependence (convex) stays the main bend and the absorption shows early in the ramp
    branches=(Branch(70.5e-12, 20e-6), Branch(235e-12, 1e-3), Branch(869.5e-12, 100e-3)),
)
X7R_SCOPE = Scope(sample_interval_s=100e-9, samples=106_000, pretrigger_samples=15_000,
                  step_v=0.02, bottom_v=-0.12)

ELECTROLYTIC = RampCircuit(
    direction="falling", capacitance_f=10e-6, current_a=1e-3,
    source_resistance_ohm=2e6, leakage_resistance_ohm=5e6,
    lower_threshold_v=1.0, upper_threshold_v=4.0,
    switch_resistance_ohm=10.0, reset_target_v=5.0,
    comparator_delay_s=100e-9, threshold_noise_v=0.5e-3,
    # 10 % of C in three branches, tau 2 ms, 20 ms and 200 ms: aluminium electrolytic
    branches=(Branch(0.4e-6, 2e-3), Branch(0.3e-6, 20e-3), Branch(0.3e-6, 200e-3)),
)
ELECTROLYTIC_SCOPE = Scope(sample_interval_s=2e-6, samples=150_000, pretrigger_samples=10_000,
                           step_v=0.02, bottom_v=-0.12)
#: The comparator output of the electrolytic circuit (5 V logic, 2 V/div, 80 mV codes).
RESET_SCOPE = Scope(sample_interval_s=2e-6, samples=150_000, pretrigger_samples=10_000,
                    step_v=0.08, bottom_v=-0.8)
#: A 5 V CMOS output high, a little under the rail.
RESET_HIGH_V = 4.98


def _preamble(lines: list[tuple[str, str]]) -> str:
    return "# trueslope demo capture\n" + "".join(f"{k}: {v}\n" for k, v in lines)


def _common() -> list[tuple[str, str]]:
    return [
        ("source", "INVENTED DEMO DATA from a physical model (not a measurement)"),
        ("generator", "sample_captures/make_samples.py"),
        ("probe", "10x passive probe (10 Mohm || 12 pF at the tip)"),
        ("vertical resolution", "8 bit"),
        ("noise", "2 mV rms before quantisation"),
    ]


def _fmt_codes(scope: Scope, code: np.ndarray, scale: float = 1.0, decimals: int = 2) -> np.ndarray:
    """Format converter codes as exact decimal strings of ``bottom + k step`` (times ``scale``)."""
    # integer arithmetic in units of the last decimal keeps every code an exact short decimal
    unit = 10 ** decimals
    base = int(round(scope.bottom_v * scale * unit))
    step = int(round(scope.step_v * scale * unit))
    ints = base + code * step
    sign = np.where(ints < 0, "-", "")
    a = np.abs(ints)
    if decimals == 0:
        return np.char.add(sign, a.astype(str))
    whole = (a // unit).astype(str)
    part = np.char.zfill((a % unit).astype(str), decimals)
    return np.char.add(np.char.add(np.char.add(sign, whole), "."), part)


def film_capture() -> str:
    rng = np.random.default_rng(20241201)
    c, s = FILM, FILM_SCOPE
    t, v, closed, _ = record(c, s, rng, warmup_s=1e-3)
    ramp = _fmt_codes(s, s.digitise(v, rng))
    sync = _fmt_codes(SYNC_SCOPE, SYNC_SCOPE.digitise(np.where(closed, SYNC_HIGH_V, 0.0), rng))
    times = np.char.mod("%.5e", t)
    head = _preamble([
        ("scenario", "PNP current source charging a 10 nF polypropylene film capacitor "
                     "and a comparator resetting it between 1 V and 4 V"),
        *_common(),
        ("vertical scale", "ramp 0.5 V/div and 20 mV per code; sync 1 V/div and 40 mV per code"),
        ("sync channel", "comparator output (3.3 V logic; high while the reset switch is closed)"),
        ("sample interval", "5e-08"),
        ("samples", str(s.samples)),
        ("trigger", "sync rising edge at time 0"),
    ])
    rows = np.char.add(np.char.add(np.char.add(np.char.add(times, ","), ramp), ","), sync)
    return head + "time [s],ramp [V],sync [V]\n" + "\n".join(rows.tolist()) + "\n"


def x7r_capture() -> str:
    rng = np.random.default_rng(20241202)
    c, s = X7R, X7R_SCOPE
    t, v, _, _ = record(c, s, rng, warmup_s=20e-3)
    mv = _fmt_codes(s, s.digitise(v, rng), scale=1e3, decimals=0)
    # time in milliseconds with a decimal comma; the grid is a whole number of 1e-4 ms
    tick = np.rint(t / 1e-7).astype(np.int64)  # units of 0.0001 ms
    sign = np.where(tick < 0, "-", "")
    a = np.abs(tick)
    times = np.char.add(np.char.add(np.char.add(sign, (a // 10_000).astype(str)), ","),
                        np.char.zfill((a % 10_000).astype(str), 4))
    head = _preamble([
        ("scenario", "PNP current source charging a 47 nF X7R ceramic capacitor "
                     "and a comparator resetting it between 1 V and 4 V"),
        *_common(),
        ("vertical scale", "0.5 V/div and 20 mV per code"),
        ("sample interval", "1e-07"),
        ("samples", str(s.samples)),
        ("trigger", "reset edge at time 0"),
        ("number format", "decimal comma"),
    ])
    rows = np.char.add(np.char.add(times, ";"), mv)
    return head + "Zeit (ms);CH1 (mV)\n" + "\n".join(rows.tolist()) + "\n"


def electrolytic_capture() -> str:
    rng = np.random.default_rng(20241203)
    c, s = ELECTROLYTIC, ELECTROLYTIC_SCOPE
    _, v, closed, _ = record(c, s, rng, warmup_s=1.0)
    ramp = _fmt_codes(s, s.digitise(v, rng))
    reset = _fmt_codes(RESET_SCOPE, RESET_SCOPE.digitise(np.where(closed, RESET_HIGH_V, 0.0), rng))
    head = _preamble([
        ("scenario", "NPN current sink discharging a 10 uF aluminium electrolytic capacitor "
                     "and a comparator recharging it to the 5 V supply between 1 V and 4 V"),
        *_common(),
        ("vertical scale", "ramp 0.5 V/div and 20 mV per code; reset 2 V/div and 80 mV per code"),
        ("reset channel", "comparator output (5 V logic; high while the recharge switch is closed)"),
        ("sample interval", "2e-6"),
        ("samples", str(s.samples)),
        ("first sample", "10000 samples before a recharge edge"),
    ])
    rows = np.char.add(np.char.add(ramp, "\t"), reset)
    return head + "ramp [V]\treset [V]\n" + "\n".join(rows.tolist()) + "\n"


CAPTURES = {
    "film_cap_ramp.csv": film_capture,
    "x7r_cap_ramp.csv": x7r_capture,
    "electrolytic_ramp.txt": electrolytic_capture,
}


def all_captures() -> dict:
    """The three captures above and the rest of the demo set (``demo_set``)."""
    import demo_set
    return {**CAPTURES, **demo_set.CAPTURES}
CIRCUITS = {"film_cap_ramp.csv": (FILM, 1e-3), "x7r_cap_ramp.csv": (X7R, 20e-3),
            "electrolytic_ramp.txt": (ELECTROLYTIC, 1.0)}


def describe(name: str) -> str:
    """The model's noise-free figures for one capture (for the README)."""
    c, warm = CIRCUITS[name]
    nominal_ramp_s = c.capacitance_f * (c.upper_threshold_v - c.lower_threshold_v) / c.current_a
    phases = simulate(c, warm + 8 * nominal_ramp_s, np.random.default_rng(0))
    f = true_figures(c, phases)
    return (f"{name}: shunt {c.shunt_resistance_ohm:.4g} ohm, period {f['period_s']:.6g} s, "
            f"ramp {f['ramp_time_s']:.6g} s, ramp {f['start_v']:.4f} V -> {f['end_v']:.4f} V, "
            f"slope {f['slope_v_per_s']:.6g} V/s, LS nonlinearity (5 % trim) "
            f"{f['nonlinearity_pct']:.4f} %, slope error {f['slope_error_pct']:.4f} %")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description="Write the invented demo captures.")
    ap.add_argument("--out", type=Path, default=HERE, help="folder to write to (default: here)")
    ap.add_argument("--check", action="store_true",
                    help="regenerate in memory and compare with the files; write nothing")
    ap.add_argument("--describe", action="store_true",
                    help="print the model's noise-free figures of each capture")
    args = ap.parse_args(argv)
    if args.describe:
        for name in CAPTURES:
            print(describe(name))
        return 0
    status = 0
    for name, make in all_captures().items():
        text = make()
        data = text.encode("ascii")
        path = args.out / name
        if args.check:
            same = path.exists() and path.read_bytes() == data
            print(f"{name}: {'identical' if same else 'DIFFERS'}")
            status |= 0 if same else 1
        else:
            path.write_bytes(data)
            print(f"{name}: {len(data) / 1e6:.2f} MB, {text.count(chr(10))} lines")
    if not args.check:
        import demo_set
        for name in demo_set.write_extras(args.out):
            print(f"{name}: written")
    return status


if __name__ == "__main__":
    sys.exit(main())
