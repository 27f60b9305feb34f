"""Reports: the readable summary, JSON and CSV. Reads results; results never format themselves."""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path
from typing import Any, Iterable

from .results import Analysis, CycleFigures
from .units import format_si

#: One-sentence definition of every summary figure (tooltips in the window, README).
FIGURE_DEFINITIONS: dict[str, str] = {
    "direction": "Rising: slow rise and fast reset downwards; falling: the mirror image.",
    "full_cycles": "Cycles with a whole ramp and retrace inside the record.",
    "partial_cycles": "Cut-off cycles at the ends of the record, left out of every figure.",
    "frequency_hz": "1 / mean period between reset edges (50 % crossings of the fast edge).",
    "period_s": "Mean time between successive reset edges.",
    "period_jitter_s": "Standard deviation of the periods between reset edges.",
    "ramp_time_s": "Mean time from the end of one reset to the start of the next.",
    "retrace_time_s": "Mean duration of the fast reset edge, its 90-10 % crossings extrapolated to the levels.",
    "offset_v": "Best-fit line's value at the ramp start.",
    "start_v": "Level where the averaged ramp starts (local line through its first 3 %).",
    "end_v": "Level where the averaged ramp ends (local line through its last 3 %).",
    "amplitude_v": "|end level - start level|.",
    "slope_v_per_s": "Slope of the least-squares line over the fit window of the averaged cycle (true sign).",
    "slope_ci95_v_per_s": "95 % interval of the slope from the spread of the per-cycle slopes (Student t).",
    "peak_deviation_v": "Largest |systematic residual| against the best-fit line over the window (noise smoothed away).",
    "nonlinearity_pct": "100 x peak deviation / fitted span over the window (best-fit line, IEEE 1241 independent basis).",
    "terminal_nonlinearity_pct": "100 x largest deviation from the chord through the window's end points / swing (IEEE 1241 terminal basis).",
    "slope_error_pct": "Sweep slope error e_s = (v'(start) - v'(end)) / v'(start) over the window (Millman and Taub).",
    "displacement_error_pct": "Sweep displacement error e_d = deviation from the chord at its largest / swing; positive when the ramp bows above the chord (Millman and Taub).",
    "transmission_error_pct": "Sweep transmission error e_t = (v'(start) T - swing) / (v'(start) T) (Millman and Taub).",
    "midpoint_time_error_s": "How late (+) or early (-) the ramp crosses the window's mid level, against the chord.",
    "midpoint_time_error_pct": "Midpoint time error as % of the ramp time.",
    "residual_rms_v": "RMS of every sample's residual about its own cycle's best-fit line (noise and shape).",
    "noise_rms_v": "Random noise of one sample, from the cycle-to-cycle spread at the same phase.",
    "adc_step_v": "Quantisation step detected in the samples (none when they are not on a grid).",
    "nonlinearity_floor_pct": "Smallest nonlinearity this capture resolves: 4 standard deviations of the smoothed averaged residual / span.",
    "below_floor": "True when the nonlinearity is below the resolution floor: straight to within the noise.",
    "trim_fraction": "Fraction of each ramp left out of the fit at each end.",
    "window_start_s": "Fit window start, seconds from the ramp start.",
    "window_end_s": "Fit window end, seconds from the ramp start.",
    "fitted_span_v": "Rise of the best-fit line across the fit window.",
}


def _fmt(value: Any, unit: str, digits: int = 4) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "—"
    if unit in ("%", "pct"):
        return f"{float(value):.{min(digits, 3)}g} %"
    return format_si(float(value), unit, digits)


def _pct(value: float | None, digits: int = 3) -> str:
    if value is None or not math.isfinite(value):
        return "—"
    return f"{value:.{digits}g} %"


def _jitter(jitter_s: float, dt_s: float) -> str:
    """Period jitter with its size in sample intervals (edges are timed to a fraction of one)."""
    if not math.isfinite(jitter_s):
        return "—"
    samples = jitter_s / dt_s
    if samples < 1e-4:
        return "none measurable (< 0.0001 sample)"
    return f"{_fmt(jitter_s, 's', 3)} RMS ({samples:.2g} sample{'s' if samples > 1 else ''})"


def summary_lines(a: Analysis) -> list[str]:
    """The readable summary of one analysis, as lines of text."""
    f = a.figures
    lo, hi = f.slope_ci95_v_per_s
    half = 0.5 * (hi - lo)
    lines = [
        f"{Path(a.source).name} — channel {a.channel}: {a.samples} samples at "
        f"{_fmt(1.0 / a.sample_interval_s, 'Sa/s')}",
        f"  {f.direction} sawtooth, {f.full_cycles} full cycles ({f.partial_cycles} partial left out)"
        + (" — segmented from the sync channel" if a.segmentation.source == "sync" else ""),
        f"  frequency      {_fmt(f.frequency_hz, 'Hz', 6)}   period {_fmt(f.period_s, 's', 6)}"
        f"   jitter {_jitter(f.period_jitter_s, a.sample_interval_s)}",
        f"  ramp time      {_fmt(f.ramp_time_s, 's')}   retrace {_fmt(f.retrace_time_s, 's', 3)}",
        f"  slope          {_fmt(f.slope_v_per_s, 'V/s', 5)} ± {_fmt(half, 'V/s', 2)} (95 %)",
        f"  offset         {_fmt(f.offset_v, 'V')}   start {_fmt(f.start_v, 'V')}   end {_fmt(f.end_v, 'V')}"
        f"   amplitude {_fmt(f.amplitude_v, 'V')}",
        f"  window         {_fmt(f.window_start_s, 's')} to {_fmt(f.window_end_s, 's')} from the ramp start"
        f" (trim {f.trim_fraction:g})",
        f"  nonlinearity   {_pct(f.nonlinearity_pct)} of span (best-fit line; peak deviation "
        f"{_fmt(f.peak_deviation_v, 'V', 3)})"
        + ("  — below the resolution floor" if f.below_floor else ""),
        f"                 {_pct(f.terminal_nonlinearity_pct)} against the terminal line",
        f"  sweep errors   slope e_s {_pct(f.slope_error_pct)}   displacement e_d "
        f"{_pct(f.displacement_error_pct)}   transmission e_t {_pct(f.transmission_error_pct)}",
        f"  mid-level      crosses {_fmt(abs(f.midpoint_time_error_s), 's', 3)} "
        f"{'late' if f.midpoint_time_error_s > 0 else 'early'} against the chord "
        f"({_pct(f.midpoint_time_error_pct)} of the ramp time)",
        f"  resolution     noise {_fmt(f.noise_rms_v, 'V', 3)} RMS, ADC step "
        f"{_fmt(f.adc_step_v, 'V', 3) if f.adc_step_v else 'none found'}, floor "
        f"{_pct(f.nonlinearity_floor_pct)}",
    ]
    lines += findings_lines(a)
    for w in a.warnings:
        lines.append(f"  note: {w}")
    return lines


def findings_lines(a: Analysis) -> list[str]:
    """Diagnosis and self-check lines of the summary (empty when absent)."""
    out: list[str] = []
    d = a.diagnosis
    if d is not None:
        tau = f", tau {_fmt(d.tau_s, 's', 3)}" if getattr(d, "tau_s", None) else ""
        shunt = (f", equivalent shunt {_fmt(d.equivalent_shunt_ohm, 'Ω', 3)}"
                 if getattr(d, "equivalent_shunt_ohm", None) else "")
        vc = getattr(d, "voltage_coefficient_per_v", None)
        vc_txt = f", slope changes {100 * vc:+.3g} % per volt" if vc else ""
        out.append(f"  diagnosis      {d.signature} ({d.curvature}; {d.strength_words}{tau}{shunt}{vc_txt})")
        out.append(f"                 {d.explanation}")
        for step in d.next_checks:
            out.append(f"    - {step}")
    c = a.context_check
    if c is not None:
        out.append("  self-check")
        for it in c.items:
            if it.expected is None or it.measured is None:
                known = it.measured if it.measured is not None else it.expected
                value = f" {_fmt(known, it.unit)}" if known is not None else ""
                note = f" — {it.likely_cause}" if it.likely_cause else ""
                out.append(f"    {it.name}:{value} ({it.verdict}){note}")
                continue
            dev = "" if it.deviation_pct is None else f" ({it.deviation_pct:+.3g} %)"
            line = (f"    {it.name}: expected {_fmt(it.expected, it.unit)}, measured "
                    f"{_fmt(it.measured, it.unit)} — {it.verdict}{dev}")
            if it.likely_cause:
                line += f"; likely {it.likely_cause}"
            out.append(line)
        if c.summary:
            out.append(f"    {c.summary}")
    return out


def summary_text(a: Analysis) -> str:
    """The readable summary as one string."""
    return "\n".join(summary_lines(a))


def to_json(analyses: Analysis | Iterable[Analysis], indent: int | None = 2) -> str:
    """One JSON document for one analysis, a list for several."""
    if isinstance(analyses, Analysis):
        return json.dumps(analyses.to_dict(), indent=indent, allow_nan=False)
    return json.dumps([a.to_dict() for a in analyses], indent=indent, allow_nan=False)


CYCLE_COLUMNS = [
    "index", "ramp_start_s", "ramp_time_s", "retrace_time_s", "period_s", "offset_v", "start_v",
    "end_v", "amplitude_v", "slope_v_per_s", "slope_ci95_low_v_per_s", "slope_ci95_high_v_per_s",
    "peak_deviation_v", "nonlinearity_pct", "terminal_nonlinearity_pct", "residual_rms_v", "outlier",
]


def _cycle_row(c: CycleFigures) -> list[Any]:
    d = c.to_dict()
    lo, hi = d.pop("slope_ci95_v_per_s")
    d["slope_ci95_low_v_per_s"], d["slope_ci95_high_v_per_s"] = lo, hi
    return [d[k] for k in CYCLE_COLUMNS]


def cycles_csv(a: Analysis) -> str:
    """Per-cycle figures as CSV text (SI units in the column names)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CYCLE_COLUMNS)
    for c in a.cycles:
        w.writerow(_cycle_row(c))
    return buf.getvalue()


def figures_csv(a: Analysis) -> str:
    """Summary figures as two-column CSV text: figure, value (SI)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["figure", "value"])
    d = a.to_dict()
    for k, v in d.items():
        if k in ("cycles", "diagnosis", "context_check", "metadata", "warnings"):
            continue
        if isinstance(v, list):
            v = " ".join("" if x is None else repr(x) for x in v)
        w.writerow([k, "" if v is None else v])
    if a.diagnosis is not None:
        w.writerow(["diagnosis_signature", a.diagnosis.signature])
    return buf.getvalue()
