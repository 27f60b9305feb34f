"""The words of an :class:`~trueslope.core.explain.Explanation`: which cause explains a set of
captures, with what parameters, against which alternatives, and what to do next.

Every number goes through :mod:`.numbers`; the absorption figures are worded by
:mod:`.absorption_text`. The terminal, the window and the JSON document's ``text`` use
:func:`explanation_lines`.
"""

from __future__ import annotations

import math
from pathlib import Path

from ..circuit import probe_match
from .absorption_text import absorption_lines
from .numbers import finite, pct, si
from .prose import PROBE_MATCH_WORDS

__all__ = ["CAUSE_WORDS", "MODEL_WORDS", "absorption_block", "explanation_lines", "parameter_text", "verdict_line"]

#: The set's cause in words.
CAUSE_WORDS = {
    "linear": "no cause: the set is straight to within what it resolves",
    "shunt-loading": "shunt loading (a resistance across the capacitor)",
    "voltage-coefficient": "a capacitance that changes with voltage",
    "dielectric-absorption": "dielectric absorption",
    "absorption-and-shunt": "dielectric absorption and a resistance across the capacitor",
    "probe-compensation": "the probe's compensation (its step response is not flat)",
    "absorption-or-probe": "dielectric absorption or a mis-compensated probe "
                           "(the same shape at every rate)",
    "undecided": "not decided by this set",
}
#: Each model in words.
MODEL_WORDS = {"line": "straight line", "shunt-loading": "shunt loading",
               "voltage-coefficient": "voltage coefficient",
               "relaxation-1": "one relaxation branch (absorption or probe)",
               "relaxation-2": "two relaxation branches (absorption or probe)",
               "relaxation-spread": "relaxation spread evenly over the time constants",
               "shunt-and-spread": "shunt loading with a relaxation spread evenly over the "
                                   "time constants"}
#: A shared parameter's label.
PARAMETER_WORDS = {"shunt_ohm": "resistance across the capacitor",
                   "tau_s": "time constant R C", "voltage_coefficient_per_v":
                   "slope change per volt", "amplitude": "branch strength A = k/(1-k)",
                   "tau": "branch time constant",
                   "absorption_per_decade": "absorption per decade of time constant"}
#: Causes whose branches are read as absorption.
ABSORBING = ("dielectric-absorption", "absorption-and-shunt", "absorption-or-probe")
#: What to change for the next capture.
CHANGE_WORDS = {"current": "the charging current", "capacitance": "the timing capacitance "
                "(same current)", "swing": "the swing (upper comparator level)"}


def _label(name: str) -> str:
    key = name.rsplit("_", 1)[0] if name.startswith("amplitude") else (
        "tau" if name.startswith("tau_") and name != "tau_s" else name)
    n = name.split("_")[1] if key in ("amplitude", "tau") else ""
    return PARAMETER_WORDS.get(key, name) + (f" {n}" if n else "")


def parameter_text(p, cause: str = "") -> str:
    """One shared parameter with its 95 % interval, e.g. ``resistance across the capacitor
    2.201 MΩ (95 % interval 2.190 MΩ to 2.212 MΩ)``. For absorption a branch's strength
    ``A`` is shown as ``k = C_i / C = A / (1 + A)``; for a probe as the tail's share."""
    if p.name.startswith("amplitude") and cause in ABSORBING:
        n = p.name.split("_")[1]
        k = [pct(100 * a / (1 + a)) for a in (p.value, p.low, p.high)]
        return f"branch {n} C_i/C {k[0]} (95 % interval {k[1]} to {k[2]})"
    if p.name.startswith("amplitude") and cause == "probe-compensation":
        n = p.name.split("_")[1]
        k = [pct(100 * a, signed=True) for a in (p.value, p.low, p.high)]
        return (f"tail {n} {k[0]} of the step, + over-compensated (95 % interval {k[1]} to "
                f"{k[2]})")
    if p.unit == "1/V":
        value, lo, hi = (pct(100 * v) + "/V" for v in (p.value, p.low, p.high))
    elif p.unit:
        value, lo, hi = (si(v, p.unit, 4) for v in (p.value, p.low, p.high))
    else:
        value, lo, hi = (pct(100 * v) for v in (p.value, p.low, p.high))
    return f"{_label(p.name)} {value} (95 % interval {lo} to {hi})"


def verdict_line(e) -> str:
    """The set's answer in one sentence."""
    n = len(e.captures)
    what = f"{n} capture{'s' if n != 1 else ''}"
    if e.cause == "undecided":
        return (f"Across {what}: not decided between {MODEL_WORDS[e.best_model]} and "
                f"{MODEL_WORDS.get(e.runner_up, e.runner_up)} (the criterion differs by "
                f"{e.evidence:.1f}; {6:g} is needed).")
    evidence = ("" if not math.isfinite(e.evidence) else
                f"; the next cause's criterion is higher by {e.evidence:.1f}")
    return f"Across {what}: {CAUSE_WORDS[e.cause]}{evidence}."


def _levels_line(e) -> str | None:
    lc = e.level_check
    if lc is None:
        return None
    told = {"absorption": "absorption keeps it on the trip level",
            "probe": "a probe's tail moves it off the trip level",
            "unclear": "too small a difference to tell the two apart"}[lc.verdict]
    return (f"End of the ramp against the stated trip level: {si(lc.measured_offset_v, 'V', 3)} "
            f"(a probe's tail would put it at {si(lc.probe_offset_v, 'V', 3)}, absorption at "
            f"0 V; uncertainty {si(lc.uncertainty_v, 'V', 2)}): {told}.")


def _next_line(e) -> str | None:
    nc = e.next_capture
    if nc is None:
        return None
    a, b = nc.models
    pa, pb = (pct(v) if finite(v) else "no ramp (it would never reach the upper level)"
              for v in nc.predicted_pct)
    factor = f"{nc.factor:g}x"
    line = (f"Take next: a capture with {CHANGE_WORDS[nc.change]} changed by {factor}. "
            f"{MODEL_WORDS[a].capitalize()} predicts {pa}, {MODEL_WORDS[b]} {pb}")
    if nc.decides:
        return line + f", {pct(nc.separation_pct)} apart: that capture decides."
    return (line + f", only {pct(nc.separation_pct)} apart against a floor of "
            f"{pct(nc.floor_pct)}: average more cycles as well.")


CHECK_WORDS = {
    "probe-calibrator": ("Check the probe on the scope's calibrator square wave: a flat top "
                         "means the probe is compensated and the relaxation is the "
                         "capacitor's absorption; or state the comparator's levels (its low "
                         "and high thresholds) to let the ramp's end decide."),
}


def explanation_lines(e) -> list[str]:
    """The whole story of a set, one sentence a line."""
    lines = [verdict_line(e)]
    if e.unexplained:
        names = ", ".join(Path(c).name for c in e.unexplained)
        lines.append(f"No one cause explains every capture: the shape of {names} is not "
                     f"explained by it (another circuit, or a second cause there).")
    best = e.model(e.best_model)
    if best is not None and best.parameters:
        shared = ("shared by every capture"
                  if len(e.captures) > 1 else "of this capture")
        lines.append(f"{MODEL_WORDS[e.best_model].capitalize()}, {shared}: "
                     + "; ".join(parameter_text(p, e.cause) for p in best.parameters) + ".")
        shunt = next((p for p in best.parameters if p.name == "shunt_ohm"), None)
        if shunt is not None and probe_match(shunt.value) in ("probe-10x", "scope-input"):
            lines.append(f"That resistance looks like a "
                         f"{PROBE_MATCH_WORDS[probe_match(shunt.value)]}.")
    if e.shared == "time-constant" and e.best_model == "shunt-loading":
        lines.append("No capacitance was given, so the captures share the time constant: "
                     "this assumes the same capacitance in each.")
    others = [m for m in e.models if m.model != e.best_model]
    if others:
        lines.append("Against the others (criterion above the best; lower is better): "
                     + ", ".join(f"{MODEL_WORDS[m.model]} +{m.delta_bic:.1f}" for m in others)
                     + ".")
    for extra in (_levels_line(e), _next_line(e)):
        if extra:
            lines.append(extra)
    if e.check:
        lines.append(CHECK_WORDS[e.check])
    return lines + absorption_block(e)


def absorption_block(e) -> list[str]:
    """The absorption figures of an explanation and their range from the branches'
    uncertainty; empty when it has none."""
    if e.absorption is None:
        return []
    lines = absorption_lines(e.absorption)
    sp = e.absorption_spread
    if sp is not None:
        lines.append(f"From the branches' uncertainty (95 %): short-time recovery "
                     f"{pct(sp.short_recovery_low_pct)} to {pct(sp.short_recovery_high_pct)}, "
                     f"standard figure {pct(sp.standard_recovery_low_pct)} to "
                     f"{pct(sp.standard_recovery_high_pct)}.")
    return lines


def captures_line(e) -> str:
    """The captures explained, by file name."""
    return "Captures: " + ", ".join(Path(c).name for c in e.captures) + "."
