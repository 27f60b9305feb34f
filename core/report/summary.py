"""The readable summary of an analysis, as the terminal prints it."""

from __future__ import annotations

import math
from pathlib import Path

from ..results import Analysis
from .numbers import FIGURE_GROUPS, FIGURES
from .numbers import figure_text as ft
from .numbers import pct, si
from .prose import (explanation, likely_cause, next_checks, requirements_text,
                    selfcheck_summary, strength_words)


def _jitter(jitter_s: float, dt_s: float) -> str:
    """Period jitter with its size in sample intervals (edges are timed to a fraction of one)."""
    if not math.isfinite(jitter_s):
        return "—"
    samples = jitter_s / dt_s
    if samples < 1e-4:
        return "none measurable (< 0.0001 sample)"
    return f"{ft('period_jitter_s', jitter_s)} RMS ({samples:.2g} sample{'s' if samples > 1 else ''})"


def window_note(a: Analysis) -> str:
    """How the fit window was set: trimmed, explicit, or shortened (clipping, ramp end)."""
    f = a.figures
    codes = {w.code for w in a.warnings}
    if "clipped" in codes:
        return "shortened to keep clipped samples out"
    if a.settings.window_s is not None:
        return "cut at the ramp's end" if "window-clipped" in codes else "set explicitly"
    return f"{ft('trim_fraction', f.trim_fraction)} trimmed at each end"


def figure_value(a: Analysis, key: str) -> str:
    """A summary figure as the terminal and the window show it, with what belongs beside it
    (the slope's interval, the jitter in samples, the midpoint error as % of the ramp,
    a bound's mark)."""
    f = a.figures
    v = getattr(f, key)
    if key == "slope_v_per_s":
        lo, hi = f.slope_ci95_v_per_s
        text = f"{ft(key, v)} ± {ft('slope_ci95_v_per_s', 0.5 * (hi - lo))} (95 %)"
    elif key == "period_jitter_s":
        text = _jitter(v, a.sample_interval_s)
    elif key == "midpoint_time_error_s":
        text = (f"{ft(key, v)} ({ft('midpoint_time_error_pct', f.midpoint_time_error_pct)} "
                f"of the ramp time; + is late)")
    elif key == "full_cycles":
        text = f"{f.full_cycles} ({f.partial_cycles} partial left out)"
    elif key == "adc_step_v" and not v:
        text = "none found"
    elif key == "nonlinearity_pct" and f.below_floor:
        text = f"{ft(key, v)} (below the resolution floor)"
    elif key == "trim_fraction":
        text = window_note(a)
    else:
        text = ft(key, v)
    if key in f.bounds:
        text += " (a bound: clipped)"
    return text


def figure_label(key: str) -> str:
    """The figure's one label (``Fit window``'s trim row says how the window was set)."""
    return "Window set" if key == "trim_fraction" else FIGURES[key].label


def summary_lines(a: Analysis) -> list[str]:
    """The readable summary of one analysis, as lines of text."""
    f = a.figures
    lines = [
        f"{Path(a.source).name} — channel {a.channel}: {a.samples} samples at "
        f"{si(1.0 / a.sample_interval_s, 'Sa/s')}",
        f"  {f.direction} sawtooth, {f.full_cycles} full cycles ({f.partial_cycles} partial left out)"
        + (" — segmented from the sync channel" if a.segmentation.source == "sync" else ""),
    ]
    width = max(len(figure_label(k)) for _, keys in FIGURE_GROUPS for k in keys)
    for group, keys in FIGURE_GROUPS:
        lines.append(f"  {group}")
        for k in keys:
            lines.append(f"    {figure_label(k):<{width}}  {figure_value(a, k)}")
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


def what_it_takes_lines(a: Analysis) -> list[str]:
    """For a bowed ramp, what would keep it within the default target (``whatif``);
    nothing for a straight one or where the figures cannot say."""
    if a.diagnosis.signature == "linear" or not a.figures.nonlinearity_pct > 0:
        return []
    from ..errors import TrueslopeError
    from ..whatif import requirements
    try:
        req = requirements(a.figures, a.diagnosis, a.settings.context)
    except (TrueslopeError, ArithmeticError, ValueError):
        return []
    return ["What it would take:"] + [f"  {line}" for line in requirements_text(req)]


def absorption_summary_lines(a: Analysis) -> list[str]:
    """For a ramp diagnosed with dielectric absorption, what this capture measures of it:
    the one-capture explanation (``explain``), whose branch strengths the reset ties to
    the shape, worded by ``explain_text`` and ``absorption_text``; nothing otherwise."""
    if a.diagnosis.signature != "dielectric-absorption":
        return []
    from ..errors import TrueslopeError
    from ..explain import explain
    from .explain_text import CHECK_WORDS, absorption_block
    try:
        e = explain([a], [a.settings.context])
    except (TrueslopeError, ArithmeticError, ValueError):
        return []
    lines = absorption_block(e)
    if not lines:
        return []
    if e.check:
        lines.append(CHECK_WORDS[e.check])
    lines.append("Captures at other charging currents pin the branches down: "
                 "'trueslope explain' takes them together.")
    return ["Absorption at this ramp's time scale:"] + [f"  {line}" for line in lines]


def findings_lines(a: Analysis) -> list[str]:
    """Diagnosis and self-check lines of the summary."""
    d = a.diagnosis
    out = [f"  Diagnosis: {diagnosis_line(a)}", f"    {explanation(d)}"]
    out += [f"    - {step}" for step in next_checks(d)]
    out += [f"  {line}" for line in what_it_takes_lines(a)]
    out += [f"  {line}" for line in absorption_summary_lines(a)]
    c = a.context_check
    if c is not None:
        out.append("  Self-check against the stated circuit")
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
