"""The readable summary of an analysis, as the terminal prints it."""

from __future__ import annotations

import math
from pathlib import Path

from ..results import Analysis
from .numbers import figure_text as ft
from .numbers import pct, si
from .prose import explanation, likely_cause, next_checks, selfcheck_summary, strength_words


def _jitter(jitter_s: float, dt_s: float) -> str:
    """Period jitter with its size in sample intervals (edges are timed to a fraction of one)."""
    if not math.isfinite(jitter_s):
        return "—"
    samples = jitter_s / dt_s
    if samples < 1e-4:
        return "none measurable (< 0.0001 sample)"
    return f"{ft('period_jitter_s', jitter_s)} RMS ({samples:.2g} sample{'s' if samples > 1 else ''})"


def summary_lines(a: Analysis) -> list[str]:
    """The readable summary of one analysis, as lines of text."""
    f = a.figures
    lo, hi = f.slope_ci95_v_per_s
    lines = [
        f"{Path(a.source).name} — channel {a.channel}: {a.samples} samples at "
        f"{si(1.0 / a.sample_interval_s, 'Sa/s')}",
        f"  {f.direction} sawtooth, {f.full_cycles} full cycles ({f.partial_cycles} partial left out)"
        + (" — segmented from the sync channel" if a.segmentation.source == "sync" else ""),
        f"  frequency      {ft('frequency_hz', f.frequency_hz)}   period {ft('period_s', f.period_s)}"
        f"   jitter {_jitter(f.period_jitter_s, a.sample_interval_s)}",
        f"  ramp time      {ft('ramp_time_s', f.ramp_time_s)}   retrace {ft('retrace_time_s', f.retrace_time_s)}",
        f"  slope          {ft('slope_v_per_s', f.slope_v_per_s)} ± "
        f"{ft('slope_ci95_v_per_s', 0.5 * (hi - lo))} (95 %)",
        f"  offset         {ft('offset_v', f.offset_v)}   start {ft('start_v', f.start_v)}   "
        f"end {ft('end_v', f.end_v)}   amplitude {ft('amplitude_v', f.amplitude_v)}",
        f"  window         {ft('window_start_s', f.window_start_s)} to "
        f"{ft('window_end_s', f.window_end_s)} from the ramp start"
        + (f" (trim {ft('trim_fraction', f.trim_fraction)} at each end)"
           if a.settings.window_s is None else " (set explicitly)"),
        f"  nonlinearity   {ft('nonlinearity_pct', f.nonlinearity_pct)} of span (best-fit line; "
        f"peak deviation {ft('peak_deviation_v', f.peak_deviation_v)})"
        + ("  — below the resolution floor" if f.below_floor else ""),
        f"                 {ft('terminal_nonlinearity_pct', f.terminal_nonlinearity_pct)} against "
        f"the end-point line",
        f"  sweep errors   slope e_s {ft('slope_error_pct', f.slope_error_pct)}   displacement e_d "
        f"{ft('displacement_error_pct', f.displacement_error_pct)}   transmission e_t "
        f"{ft('transmission_error_pct', f.transmission_error_pct)}",
        f"  mid-level      crosses {ft('midpoint_time_error_s', abs(f.midpoint_time_error_s))} "
        f"{'late' if f.midpoint_time_error_s > 0 else 'early'} against the chord "
        f"({ft('midpoint_time_error_pct', f.midpoint_time_error_pct)} of the ramp time)",
        f"  resolution     noise {ft('noise_rms_v', f.noise_rms_v)} RMS, ADC step "
        f"{ft('adc_step_v', f.adc_step_v) if f.adc_step_v else 'none found'}, floor "
        f"{ft('nonlinearity_floor_pct', f.nonlinearity_floor_pct)}",
    ]
    lines += findings_lines(a)
    for w in a.warnings:
        lines.append(f"  note: {w}")
    return lines


def diagnosis_line(a: Analysis) -> str:
    """The diagnosis in one line: signature, curvature, strength and its parameters."""
    d = a.diagnosis
    tau = f", tau {si(d.tau_s, 's', 3)}" if d.tau_s else ""
    shunt = (f", equivalent shunt {si(d.equivalent_shunt_ohm, 'Ω', 3)}"
             if d.equivalent_shunt_ohm else "")
    vc = d.voltage_coefficient_per_v
    vc_txt = f", slope changes {pct(100 * vc, signed=True)} per volt" if vc else ""
    return f"{d.signature} ({d.curvature}; {strength_words(d.strength)}{tau}{shunt}{vc_txt})"


def findings_lines(a: Analysis) -> list[str]:
    """Diagnosis and self-check lines of the summary."""
    d = a.diagnosis
    out = [f"  diagnosis      {diagnosis_line(a)}", f"                 {explanation(d)}"]
    out += [f"    - {step}" for step in next_checks(d)]
    c = a.context_check
    if c is not None:
        out.append("  self-check")
        for it in c.items:
            cause = likely_cause(it, d)
            if it.expected is None or it.measured is None:
                known = it.measured if it.measured is not None else it.expected
                value = f" {_value(known, it.unit)}" if known is not None else ""
                note = f" — {cause}" if cause else ""
                out.append(f"    {it.name}:{value} ({it.verdict}){note}")
                continue
            dev = "" if it.deviation_pct is None else f" ({pct(it.deviation_pct, signed=True)})"
            line = (f"    {it.name}: expected {_value(it.expected, it.unit)}, measured "
                    f"{_value(it.measured, it.unit)} — {it.verdict}{dev}")
            if cause:
                line += f"; likely {cause}"
            out.append(line)
        out.append(f"    {selfcheck_summary(c, d)}")
    return out


def _value(value: float | None, unit: str) -> str:
    return pct(value) if unit == "%" else si(value, unit)


def summary_text(a: Analysis) -> str:
    """The readable summary as one string."""
    return "\n".join(summary_lines(a))
