"""Every sentence trueslope writes about a finding: diagnosis, bench steps, self-check.

Core results hold numbers and codes; this module words them, the same for the
terminal, the window and every export. Numbers inside sentences go through
:mod:`.numbers`, so a figure reads the same wherever it appears.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

from ..results import CheckItem, ContextCheck, Diagnosis
from ..selfcheck import AGREES, DISAGREES
from .numbers import finite, pct, si

#: Strength boundaries (multiples of the resolution floor): below 1 the shape is
#: not above the noise.
STRENGTH_CLEAR = 3.0
STRENGTH_STRONG = 10.0

#: Each physical cause in words.
CAUSE_NAMES = {"shunt-loading": "shunt loading", "voltage-coefficient": "a voltage coefficient",
               "dielectric-absorption": "dielectric absorption",
               "capacitance-growing": "a capacitance that grows with voltage"}

#: What each probe-match code means.
PROBE_MATCH_WORDS = {
    "probe-10x": "10x probe (about 10 Mohm)",
    "scope-input": "1x probe or scope input (about 1 Mohm)",
    "neither": "neither",
    "none": "no shunt loading found",
}


def strength_words(strength: float) -> str:
    """Words a technician reads for a strength (multiple of the resolution floor)."""
    if not math.isfinite(strength):
        return "not measurable"
    n = f"{strength:.2g}x the resolution" if strength < 10 else f"{strength:.0f}x the resolution"
    if strength < 1.0:
        return f"not above the noise ({n})"
    if strength < STRENGTH_CLEAR:
        return f"slight ({n})"
    if strength < STRENGTH_STRONG:
        return f"clear ({n})"
    return f"strong ({n})"


def _where(frac: float) -> str:
    if frac < 0.3:
        return "early in the ramp"
    if frac > 0.7:
        return "late in the ramp"
    return "near the middle of the ramp"


def _shape_sentence(d: Diagnosis) -> str:
    s = d.shape
    if s is None:
        return "The ramp shows a shape that could not be described."
    kind = {"bow": "a single bow",
            "s-bend": "an S-shaped bend (the curvature changes sign along the ramp)",
            "wavy": f"a wavy shape with about {s.bumps} bumps"}[s.kind]
    return (f"The ramp shows {kind}; its largest deviation from the best-fit line, "
            f"{pct(s.peak_pct)} of the span, lies {_where(s.peak_in_window_fraction)} "
            f"({100 * s.peak_at_fraction:.0f} % of the ramp time), and the slope is steepest "
            f"at {100 * s.steepest_at_fraction:.0f} % and flattest at "
            f"{100 * s.flattest_at_fraction:.0f} % of the ramp.")


def explanation(d: Diagnosis) -> str:
    """Two or three plain sentences on what the shape says."""
    if d.signature == "linear":
        why = ("no curved model fits the averaged ramp better than a straight line by a clear "
               "margin" if d.reason == "no-clear-margin" else
               "a faint curve is there statistically, but it bends less than the capture "
               "resolves")
        lean = ""
        if d.closest_cause is not None:
            lean = (f" The closest cause, {CAUSE_NAMES.get(d.closest_cause, d.closest_cause)}, "
                    f"would bend it by "
                    f"{pct(d.closest_cause_pct)} of the span.")
        return (f"The ramp is straight to within what this capture resolves "
                f"({pct(d.floor_pct)} of the span): {why}.{lean}")
    return _explained(d) + _also_sentence(d)


def _explained(d: Diagnosis) -> str:
    """The winning physical cause in words."""
    if d.signature == "shunt-loading":
        r_txt = (f" With the capacitance given, that is {si(d.equivalent_shunt_ohm, 'Ω', 3)} "
                 f"across it." if d.equivalent_shunt_ohm is not None else
                 " Give the capacitance to turn this into a resistance.")
        return (f"The slope falls steadily as the voltage rises (by {pct(d.slope_change_pct)} "
                f"across the window), the exponential approach of a current into a capacitor "
                f"with a resistance across it, time constant R C = {si(d.tau_s, 's', 3)} "
                f"({d.tau_fraction:.3g} ramp times).{r_txt} The model's bow is {pct(d.bow_pct)} "
                f"of the span.")
    if d.signature == "voltage-coefficient" and d.vc_form == "growing":
        return (f"The slope falls as the voltage rises, by about "
                f"{pct(-100 * (d.voltage_coefficient_per_v or math.nan))} per volt: a "
                f"capacitance that grows with voltage at constant current (for example a "
                f"junction at the ramp node whose reverse bias shrinks as the ramp rises). "
                f"A resistance across the capacitor bends a ramp much the same way, but here "
                f"the shape fits the growing capacitance better by a clear margin. The model's bow is "
                f"{pct(d.bow_pct)} of the span.")
    if d.signature == "voltage-coefficient":
        form = {"exp": "a charging current rising in proportion to the voltage fits better "
                       "than a capacitance falling in proportion to it",
                "sqrt": "a capacitance falling in proportion to the voltage fits better than "
                        "a charging current rising in proportion to it"}.get(
            d.vc_form or "", "at this curvature the two cannot be told apart from the shape "
                             "alone")
        return (f"The slope rises as the voltage rises, by about "
                f"{pct(100 * (d.voltage_coefficient_per_v or math.nan))} per volt: the "
                f"capacitance falls with DC bias (class 2 ceramics do this), or the charge "
                f"current grows with the voltage; {form}. The model's bow is {pct(d.bow_pct)} of the "
                f"span.")
    if d.signature == "dielectric-absorption":
        return (f"The slope starts high after each reset and settles with a time constant of "
                f"about {si(d.tau_s, 's', 3)} ({pct(100 * (d.tau_fraction or math.nan))} of the "
                f"ramp), as charge soaks back into the dielectric (dielectric absorption, the "
                f"Dow model's series R-C branches). The model's bow is {pct(d.bow_pct)} of the span; "
                f"it would change with the repetition rate.")
    return _unexplained(d)


def _rival_words(d: Diagnosis, cause: str) -> str:
    """A cause that also fits, named with its parameter."""
    if cause == "voltage-coefficient":
        vc = d.also_voltage_coefficient_per_v
        if vc is not None and vc < 0:
            return (f"a capacitance that grows with voltage (about {pct(-100 * vc)} per volt "
                    f"at the ramp start)")
        return (f"a voltage coefficient (the slope rising about {pct(100 * (vc or math.nan))} "
                f"per volt)")
    if cause == "shunt-loading":
        return f"a resistance across the capacitor (R C about {si(d.also_tau_s, 's', 3)})"
    return f"dielectric absorption (time constant about {si(d.also_tau_s, 's', 3)})"


def _also_sentence(d: Diagnosis) -> str:
    """The causes the data cannot rule out, said aloud."""
    if not d.also_consistent:
        return ""
    names = " and with ".join(_rival_words(d, c) for c in d.also_consistent)
    which = ("The first next check tells them apart" if len(d.also_consistent) == 1 else
             "The first next checks tell them apart")
    return (f" The shape is also consistent with {names}: at this bow and resolution both "
            f"fit the averaged ramp almost equally well. {which}.")


def _unexplained(d: Diagnosis) -> str:
    """An unclassified shape in words."""
    if d.reason == "not-measurable":
        return (f"The shape could not be judged: the fit window holds too few usable points "
                f"({d.window_points}) or no rise.")
    if d.reason == "fit-failed":
        return "The shape could not be judged: the model fits failed."
    if d.reason == "relaxation-low":
        description = (
            f"The slope starts low after each reset and rises to its final value with a "
            f"time constant of about {si(d.tau_s, 's', 3)} "
            f"({pct(100 * (d.tau_fraction or math.nan))} of the ramp): the opposite of "
            f"dielectric absorption, as an under-compensated probe or a slow-settling reset "
            f"would give.")
    else:
        description = _shape_sentence(d)
    nearest = ""
    if d.closest_cause is not None:
        nearest = (f" The nearest listed cause, "
                   f"{CAUSE_NAMES.get(d.closest_cause, d.closest_cause)}, leaves "
                   f"{pct(d.closest_cause_pct)} of the span unexplained.")
    return (f"{description} None of shunt loading, a voltage coefficient or dielectric "
            f"absorption explains it.{nearest}")


NEXT_CHECKS: dict[str, tuple[str, ...]] = {
    "linear": (
        "Nothing to correct at this resolution. To look closer, average more cycles or "
        "capture with more vertical resolution (a more sensitive range with the scope's "
        "offset, or a high-resolution acquisition mode).",
    ),
    "shunt-loading": (
        "Re-capture at another repetition rate: loading bends the ramp the same way at any "
        "rate (same time constant), while dielectric absorption changes with the rate.",
        "Move the probe from 1x to 10x, or measure through a buffer, and re-capture: if the "
        "bow shrinks, the probe or the scope input is the shunt.",
        "Check the current source's output resistance (its compliance headroom at the top of "
        "the ramp) and look for leakage across the capacitor (flux residue, a damp board, a "
        "leaky electrolytic).",
        "Compare the equivalent shunt with 10 Mohm (10x probe) and 1 Mohm (1x probe or scope "
        "input): give the timing capacitance and the probe in the circuit context for this check.",
    ),
    "voltage-coefficient": (
        "Swap the timing capacitor for a C0G/NP0 ceramic or a polypropylene film part of the "
        "same value: a class 2 ceramic (X7R, X5R, Y5V) loses capacitance with DC bias.",
        "Measure at a lower supply or a smaller swing: a voltage coefficient's bow shrinks "
        "with the swing, while a fixed timing defect does not.",
        "Check that the charging current does not rise with the ramp voltage (measure the "
        "current at the bottom and top of the ramp; look for positive feedback or a "
        "bootstrap that over-compensates).",
    ),
    "dielectric-absorption": (
        "Re-capture at another repetition rate: absorption changes with the rate (the early "
        "relaxation keeps its time constant while the ramp's length changes); loading does "
        "not.",
        "Check the probe's compensation on the scope's calibrator square wave: a "
        "mis-compensated 10x probe adds an exponential tail after every reset edge that looks "
        "just like this.",
        "Swap to a polypropylene or C0G part (dielectric absorption about 0.1 % or less, "
        "against about 2 % for X7R and 10 % or more for an aluminium electrolytic).",
        "Lengthen the reset (discharge) time and see whether the early relaxation shrinks.",
    ),
    "unclassified": (
        "Check the probe's compensation on the scope's calibrator square wave: a "
        "mis-compensated 10x probe adds an exponential tail after every reset edge.",
        "Look at the supply and the reference at the ramp rate for ripple or steps that the "
        "current source passes on.",
        "Capture a few single cycles at full resolution to see whether the shape repeats in "
        "every cycle or comes and goes (interference).",
        "Check the reset switch and comparator for ringing or a slow release at the start of "
        "the ramp.",
    ),
}


#: The bench step that tells a shunt from a capacitance growing with voltage.
SHUNT_OR_GROWING_C = (
    "To tell a resistance across the capacitor from a capacitance that grows with voltage, "
    "re-capture at another charging current with the same swing (same thresholds): a "
    "shunt's bow scales with the ramp time over R C, so halving the current about doubles "
    "it, while a voltage coefficient's bow stays the same. Or change the swing and the "
    "current together so the ramp time stays the same: a voltage coefficient's bow scales "
    "with the swing, a shunt's does not.")

#: Bench steps for a capacitance growing with voltage (a concave voltage coefficient).
GROWING_CAPACITANCE_CHECKS = (
    SHUNT_OR_GROWING_C,
    "Look for a junction on the ramp node (a clamp or protection diode, a transistor's "
    "collector, a JFET gate) whose reverse bias shrinks as the ramp rises: its capacitance "
    "grows with the ramp voltage. Lift it, or use a lower-capacitance part, and re-capture.",
    "Swap the timing capacitor for a C0G/NP0 ceramic or a polypropylene film part of the "
    "same value and re-capture: if the bow stays, the capacitor is not the cause.",
    "Re-capture at another repetition rate: dielectric absorption changes with the rate, a "
    "voltage coefficient does not.",
)


def next_checks(d: Diagnosis) -> tuple[str, ...]:
    """Bench steps that would confirm or rule out the cause found; when another cause
    fits nearly as well, the step that tells the two apart comes first."""
    if d.signature == "voltage-coefficient" and d.vc_form == "growing":
        return GROWING_CAPACITANCE_CHECKS
    checks = _cause_checks(d)
    pair = {d.signature, *d.also_consistent}
    if {"shunt-loading", "voltage-coefficient"} <= pair:
        checks = (SHUNT_OR_GROWING_C,) + checks
    return checks


def _cause_checks(d: Diagnosis) -> tuple[str, ...]:
    checks = NEXT_CHECKS[d.signature]
    if d.signature != "shunt-loading" or d.equivalent_shunt_ohm is None:
        return checks
    if d.probe_match == "neither":
        verdict = ("neither a 10x probe (about 10 Mohm) nor a 1x probe or scope input (about "
                   "1 Mohm): look for leakage or the current source's output resistance first")
    else:
        verdict = (f"that is what a {PROBE_MATCH_WORDS[d.probe_match]} presents: lift or "
                   f"change the probe to confirm")
    return checks[:-1] + (f"The equivalent shunt is {si(d.equivalent_shunt_ohm, 'Ω', 3)}; "
                          f"{verdict}.",)


#: The likely causes of a self-check item outside its tolerance, by code.
CAUSE_WORDS = {
    "unstated-capacitance": "capacitance in parallel that is not stated (probe, cable, board: "
                            "state the probe's R and C in the circuit context)",
    "capacitance-high": "the capacitance is above its marked value",
    "current-low": "the current is below the stated value (the current source running out "
                   "of headroom, set resistor high, reference low)",
    "shunt-leaks-current": "part of the current leaks through the shunt found{shunt}",
    "absorption-adds-capacitance": "the absorption branches add capacitance",
    "capacitance-low": "the capacitance is below its marked value (tolerance; a class 2 "
                       "ceramic loses capacitance under DC bias)",
    "current-high": "the current is above the stated value (set resistor low, reference high)",
    "voltage-coefficient-lowers-capacitance": "the voltage coefficient found lowers the "
                                              "capacitance along the ramp",
    "voltage-coefficient-raises-capacitance": "the voltage coefficient found raises the "
                                              "capacitance along the ramp",
    "ramp-slower-than-ic": "the ramp takes longer than I/C gives:",
    "ramp-faster-than-ic": "the ramp is faster than I/C gives:",
    "probe-stops-ramp": "the stated probe resistance would stop the ramp below the upper "
                        "threshold, so the circuit does not run on the stated values",
    "follows-ramp-time": "follows the ramp time (the retrace is taken as measured)",
    "ramp-slower": "follows the ramp time: the ramp is slower than predicted",
    "ramp-faster": "follows the ramp time: the ramp is faster than predicted",
    "implied-current": "measured slope × stated capacitance",
    "implied-capacitance": "stated current / measured slope",
    "no-shunt-found": "no shunt loading found in the ramp's shape",
    "another-resistance": "another resistance is in parallel with the probe: the current "
                          "source's output resistance, leakage across the capacitor, or a "
                          "scope input",
    "probe-higher-or-other-cause": "the probe's resistance is higher than stated, or the "
                                   "bend has another cause",
    "nl-lower-resistance": "a lower resistance than the stated probe's is across the "
                           "capacitor{shunt_eq}: the current source's output resistance, "
                           "leakage, or a scope input",
    "nl-voltage-coefficient": "the capacitance changes with voltage (class 2 ceramic) or the "
                              "current does",
    "nl-absorption": "dielectric absorption in the timing capacitor (or a mis-compensated "
                     "probe)",
    "nl-unexplained": "a shape the stated parts do not explain (see the diagnosis)",
    "nl-other-cause": "the bow has a cause other than the stated parts",
    "probe-not-on-node": "the probe's resistance is higher than stated, or the probe was not "
                         "on the node during the capture",
}


def likely_cause(item: CheckItem, diagnosis: Diagnosis | None) -> str:
    """The likely causes of an item, in words, joined by "; or "."""
    r = diagnosis.equivalent_shunt_ohm if diagnosis is not None else None
    fill = {"shunt": f" ({si(r, 'Ω')})" if r else "",
            "shunt_eq": f" (equivalent {si(r, 'Ω')})" if r else ""}
    words = [CAUSE_WORDS[c].format(**fill) for c in item.causes]
    if len(words) > 1 and words[0].endswith(":"):
        return f"{words[0]} " + "; or ".join(words[1:])
    return "; or ".join(words)


def selfcheck_summary(c: ContextCheck, diagnosis: Diagnosis | None) -> str:
    """Two or three sentences on the self-check."""
    items = c.items
    checked = [i for i in items if i.verdict in AGREES or i.verdict in DISAGREES]
    out = [i for i in checked if i.verdict in DISAGREES]
    parts = []
    if checked:
        if out:
            def how(i: CheckItem) -> str:
                if i.name == "nonlinearity":
                    return (f"{i.name} ({pct(i.measured)} measured, {pct(i.expected)} from the "
                            f"parts: {i.verdict})")
                if i.deviation_pct is None:
                    return i.name
                return f"{i.name} ({pct(i.deviation_pct, signed=True)})"
            lead = "Likely cause of the first" if len(out) > 1 else "Likely cause"
            parts.append(f"{len(checked) - len(out)} of {len(checked)} figures agree with the "
                         f"stated parts (within {pct(100 * c.tolerance_frac)}, the shapes "
                         f"within their own tolerance); against: "
                         f"{', '.join(how(i) for i in out)}. {lead}: "
                         f"{likely_cause(out[0], diagnosis)}.")
        else:
            parts.append(f"All {len(checked)} figures agree with the stated parts within "
                         f"their tolerance.")
    else:
        implied = [i for i in items if i.name.startswith("implied") and i.measured is not None]
        lead = ""
        if implied:
            i = implied[0]
            lead = f"The {i.name} is {si(i.measured, i.unit)} ({likely_cause(i, diagnosis)}). "
        parts.append(f"{lead}To check the ramp against the parts, give both the capacitance "
                     f"and the current (or the set resistor and the reference).")
    if c.equivalent_shunt_ohm is not None:
        parts.append(f"The equivalent shunt, {si(c.equivalent_shunt_ohm, 'Ω')}, looks like: "
                     f"{PROBE_MATCH_WORDS[c.probe_match]}.")
    p, m = c.probe_predicted_nonlinearity_pct, c.measured_nonlinearity_pct
    if p is not None:
        if not c.bow_resolved:
            parts.append(f"The stated probe alone predicts {pct(p)} nonlinearity; the "
                         f"measured {pct(m)} is within the capture's resolution.")
        elif c.probe_explains_bow:
            parts.append(f"The stated probe alone predicts {pct(p)} nonlinearity, as "
                         f"measured ({pct(m)}): the probe explains the bow.")
        else:
            parts.append(f"The stated probe alone predicts {pct(p)} nonlinearity, against "
                         f"{pct(m)} measured: the probe does not explain the bow.")
    return " ".join(parts)


if TYPE_CHECKING:  # the type only: whatif's solvers are not loaded to word a diagnosis
    from ..whatif import Requirements


def requirements_text(req: Requirements) -> list[str]:
    """What keeps the nonlinearity at the target (``whatif.requirements``), one sentence a line."""
    target = pct(req.target_nonlinearity_pct)
    if req.target_met:
        lines = [f"The measured nonlinearity, {pct(req.measured_nonlinearity_pct)}, already "
                 f"meets the target of {target}."]
    else:
        lines = [f"The measured nonlinearity, {pct(req.measured_nonlinearity_pct)}, is above "
                 f"the target of {target}."]
    held = ("at the stated current" if req.held == "current"
            else "with the ramp time held")
    if req.min_shunt_ohm is not None:
        lines.append(f"To stay within {target} {held}, everything across the capacitor "
                     f"(source output resistance, leakage and probe in parallel) must total "
                     f"at least {si(req.min_shunt_ohm, 'Ω')} (a time constant of at least "
                     f"{si(req.min_time_constant_s, 's')}).")
    else:
        lines.append(f"To stay within {target} {held}, the time constant of everything across "
                     f"the capacitor must be at least {si(req.min_time_constant_s, 's')}; "
                     f"give the capacitance to have it as a resistance.")
    if req.measured_shunt_ohm is not None:
        lines.append(f"The shunt measured is {si(req.measured_shunt_ohm, 'Ω')}.")
    lines.append(f"A capacitance falling with voltage may change by at most "
                 f"{pct(100 * req.max_voltage_coefficient_per_v)} per volt over this swing.")
    if finite(req.max_absorption_pct):
        lines.append(f"The capacitor's dielectric may absorb at most "
                     f"{pct(req.max_absorption_pct)} in the standard recovery test (assuming "
                     f"absorption spread evenly per decade of time constant).")
    elif req.measured_tau_s is not None:
        lines.append("With the measured shunt no dielectric keeps the target: the shunt "
                     "alone bends the ramp further.")
    if req.max_ramp_time_s is not None:
        lines.append(f"With the measured shunt (time constant {si(req.measured_tau_s, 's')}), "
                     f"the ramp must last no longer than {si(req.max_ramp_time_s, 's')}.")
    return lines


def prediction_notes(prediction) -> str:
    """What to know of a predicted change (``whatif.ChangePrediction``), or ''."""
    if getattr(prediction, "remainder_clamped", False):
        return ("The measured shunt is already higher than the part taken away, so nothing "
                "else is taken to be across the capacitor.")
    return ""
