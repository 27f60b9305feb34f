"""Documents to file: the JSON document of an analysis and the CSV tables.

The JSON keys are the figures' SI names (``slope_v_per_s``...); the diagnosis
and self-check carry their sentences beside their numbers, written by
:mod:`.prose`. CSV cells that a spreadsheet would run as a formula are
neutralised.
"""

from __future__ import annotations

import csv
import io
import json
import re
from pathlib import Path
from typing import Any, Iterable, Iterator

from ..jsonable import plain
from ..results import Analysis, CycleFigures
from .summary import window_note
from .prose import (PROBE_MATCH_WORDS, explanation, likely_cause, next_checks,
                    selfcheck_summary, strength_words)

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




def diagnosis_document(a: Analysis) -> dict[str, Any]:
    """The diagnosis as JSON types: its numbers and codes, and its words."""
    d = a.diagnosis
    doc = d.to_dict()
    doc.update(strength_words=strength_words(d.strength), explanation=explanation(d),
               next_checks=list(next_checks(d)))
    return doc


def selfcheck_document(a: Analysis) -> dict[str, Any] | None:
    """The self-check as JSON types, each item with its likely cause in words."""
    c = a.context_check
    if c is None:
        return None
    doc = c.to_dict()
    doc["items"] = [dict(i.to_dict(), likely_cause=likely_cause(i, a.diagnosis))
                    for i in c.items]
    doc["probe_match_code"] = c.probe_match
    doc["probe_match"] = PROBE_MATCH_WORDS[c.probe_match]
    doc["summary"] = selfcheck_summary(c, a.diagnosis)
    return doc


def analysis_document(a: Analysis) -> dict[str, Any]:
    """The flat JSON document of one analysis (the command line's ``--json``)."""
    d: dict[str, Any] = {
        "file": a.source,
        "channel": a.channel,
        "samples": a.samples,
        "sample_interval_s": a.sample_interval_s,
    }
    d.update(a.figures.to_dict())
    d["window_set"] = window_note(a)
    if not window_from_trim(a):
        d["trim_fraction"] = None  # the window was not the trimmed one
    d["averaged_noise_rms_v"] = plain(a.noise.averaged_noise_rms_v)
    d["segmentation_source"] = a.segmentation.source
    d["low_level_v"] = plain(a.segmentation.levels.low_v)
    d["high_level_v"] = plain(a.segmentation.levels.high_v)
    d["warnings"] = [str(w) for w in a.warnings]
    d["warning_codes"] = [w.code for w in a.warnings]
    d["metadata"] = dict(a.metadata)
    d["settings"] = a.settings.to_dict()
    d["diagnosis"] = diagnosis_document(a)
    d["context_check"] = selfcheck_document(a)
    d["cycles"] = [c.to_dict() for c in a.cycles]
    return d


def to_json(analyses: Analysis | Iterable[Analysis], indent: int | None = 2) -> str:
    """One JSON document for one analysis, a list for several."""
    if isinstance(analyses, Analysis):
        return json.dumps(analysis_document(analyses), indent=indent, allow_nan=False)
    return json.dumps([analysis_document(a) for a in analyses], indent=indent, allow_nan=False)


CYCLE_COLUMNS = [
    "index", "ramp_start_s", "ramp_time_s", "retrace_time_s", "period_s", "offset_v", "start_v",
    "end_v", "amplitude_v", "slope_v_per_s", "slope_ci95_low_v_per_s", "slope_ci95_high_v_per_s",
    "peak_deviation_v", "nonlinearity_pct", "terminal_nonlinearity_pct", "residual_rms_v", "outlier",
]


#: A cell that is a plain number (what a spreadsheet reads as a number, never a formula).
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
#: First characters that make a spreadsheet run a cell as a formula (or a DDE command).
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def safe_cell(value: Any) -> Any:
    """A CSV cell a spreadsheet will not run as a formula.

    Text starting with = + - @, a tab or a carriage return gets a leading apostrophe,
    unless it is a plain number such as ``-1.5e-3``; numbers (and booleans) pass unchanged.
    """
    if isinstance(value, str) and value[:1] in _FORMULA_START and not _NUMBER.fullmatch(value):
        return "'" + value
    return value


def cycle_row(c: CycleFigures) -> list[Any]:
    """One cycle as a CSV row in :data:`CYCLE_COLUMNS` order."""
    d = c.to_dict()
    lo, hi = d.pop("slope_ci95_v_per_s")
    d["slope_ci95_low_v_per_s"], d["slope_ci95_high_v_per_s"] = lo, hi
    return [d[k] for k in CYCLE_COLUMNS]


def _csv_text(header: list[str], rows: Iterable[list[Any]]) -> str:
    """Rows as CSV text through the csv module, every cell neutralised."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow([safe_cell(h) for h in header])
    for row in rows:
        w.writerow([safe_cell(c) for c in row])
    return buf.getvalue()


def cycles_csv(a: Analysis) -> str:
    """Per-cycle figures as CSV text (SI units in the column names)."""
    return _csv_text(CYCLE_COLUMNS, (cycle_row(c) for c in a.cycles))


def batch_cycles_csv(analyses: Iterable[Analysis]) -> str:
    """Per-cycle figures of several captures as one CSV table: the column ``file`` (the
    capture's file name) first, then :data:`CYCLE_COLUMNS`."""
    return _csv_text(["file"] + CYCLE_COLUMNS,
                     ([Path(a.source).name] + cycle_row(c) for a in analyses for c in a.cycles))


def window_from_trim(a: Analysis) -> bool:
    """True when the fit window is the trimmed one (not explicit, not shortened by clipping)."""
    return a.settings.window_s is None and "clipped" not in {w.code for w in a.warnings}


def _flat(prefix: str, value: Any) -> Iterator[tuple[str, Any]]:
    """``(dotted name, cell)`` rows of a JSON-typed value: dicts by key, text lists one
    row per entry (numbered from 1), number lists in one cell."""
    if isinstance(value, dict):
        for k, v in value.items():
            yield from _flat(f"{prefix}.{k}", v)
    elif isinstance(value, (list, tuple)):
        if value and all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in value):
            yield prefix, " ".join(repr(x) for x in value)
        elif not value:
            yield prefix, ""
        else:
            for i, x in enumerate(value, 1):
                yield from _flat(f"{prefix}.{i}", x)
    else:
        yield prefix, "" if value is None else value


def story_rows(a: Analysis) -> list[tuple[str, Any]]:
    """What belongs beside the figures in a table: the window as set, channels, excluded
    cycles, the circuit as stated, the diagnosis (numbers and words), the self-check item
    by item, and the warnings; dotted names (``diagnosis.tau_s``)."""
    s = a.settings
    rows: list[tuple[str, Any]] = [("window_set", window_note(a))]
    if s.window_s is not None:
        rows += [("window_requested_start_s", float(s.window_s[0])),
                 ("window_requested_end_s", float(s.window_s[1]))]
    rows.append(("sync_channel", "" if s.sync_channel is None else str(s.sync_channel)))
    rows.append(("excluded_cycles", " ".join(str(i) for i in s.excluded_cycles)))
    rows += (list(_flat("circuit", s.context.to_dict())) if s.context is not None
             else [("circuit", "not stated")])
    rows += list(_flat("diagnosis", diagnosis_document(a)))
    check = selfcheck_document(a)
    if check is None:
        rows.append(("context_check", "not run: no circuit stated"))
    else:
        items = check.pop("items", [])
        rows += list(_flat("context_check", check))
        for item in items:
            name = str(item.get("name", "item")).replace(" ", "_")
            rows += [(k, v) for k, v in _flat(f"context_check.{name}", item)
                     if not k.endswith(".name")]
    rows += [(f"warning.{i}", str(w)) for i, w in enumerate(a.warnings, 1)]
    return rows


def figures_csv(a: Analysis) -> str:
    """The summary as two-column CSV text, ``figure,value`` (SI): the figures (the slope's
    interval as two rows; no trim beside a window that was not the trimmed one), then
    :func:`story_rows`. Every cell formula-safe."""
    rows = []
    for k, v in analysis_document(a).items():
        if k in ("cycles", "diagnosis", "context_check", "metadata", "warnings",
                 "warning_codes", "settings", "window_set"):
            continue
        if k == "trim_fraction" and v is None:
            continue  # the window was not the trimmed one: the story's window_set says how
        if k == "slope_ci95_v_per_s":
            rows += [["slope_ci95_low_v_per_s", v[0]], ["slope_ci95_high_v_per_s", v[1]]]
            continue
        if isinstance(v, list):
            v = " ".join("" if x is None else repr(x) for x in v)
        rows.append([k, "" if v is None else v])
    rows.append(["diagnosis_signature", a.diagnosis.signature])
    rows += [[k, v] for k, v in story_rows(a)]
    return _csv_text(["figure", "value"], rows)
