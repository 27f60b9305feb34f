"""A comparison and its limit verdicts in words and tables, for the terminal and the reports.

Reads :class:`~trueslope.core.compare.Comparison`; every number through :mod:`.numbers`.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from ..compare import Comparison, ComparedEntry
from ..limits import LimitResult, LimitVerdict
from .numbers import FIGURES, figure_text, pct, plain
from .prose import strength_words

#: Figures of the side-by-side table in the terminal (the JSON carries all of them).
TABLE_FIGURES = ("nonlinearity_pct", "slope_v_per_s", "frequency_hz", "amplitude_v",
                 "ramp_time_s", "nonlinearity_floor_pct")


def limit_line(r: LimitResult) -> str:
    """One limit's verdict in words, e.g. ``nonlinearity 0.62 % above max 0.5 % by 0.12 %``."""
    label = FIGURES[r.figure].label if r.figure in FIGURES else r.figure
    if isinstance(r.value, str) or r.value is None:
        shown = plain(r.value)
    else:
        shown = figure_text(r.figure, r.value) if r.figure in FIGURES else plain(r.value)
    if r.verdict == "pass":
        return f"{label}: {shown} — pass"
    if r.verdict == "undecided":
        why = {"floor": "below what the capture resolves, so a limit this tight cannot be "
                        "decided from this capture",
               "lower-bound": "clipped: only a bound is known",
               "upper-bound": "clipped: only a bound is known",
               "unresolved": "the capture cannot resolve it",
               "none": "not measured"}.get(r.judged_as, "cannot be decided")
        return f"{label}: {shown} — cannot be decided ({why})"
    if r.one_of:
        return f"{label}: {shown} — fail (must be {' or '.join(r.one_of)})"
    side = "below the minimum" if r.low is not None and r.bound == r.low else "above the maximum"
    bound = figure_text(r.figure, r.bound) if r.figure in FIGURES else plain(r.bound)
    excess = figure_text(r.figure, r.excess) if r.figure in FIGURES else plain(r.excess)
    return (f"{label}: {shown} — fail, {side} {bound} by {excess}"
            f" ({pct(r.excess_pct)} of the limit)")


def verdict_lines(v: LimitVerdict) -> list[str]:
    """The verdict of one capture against its limits."""
    head = {"pass": "PASS", "fail": "FAIL", "undecided": "CANNOT BE DECIDED"}[v.verdict]
    out = [f"  limits: {head} ({v.passed} pass, {v.failed} fail, {v.undecided} undecided)"]
    out += [f"    {limit_line(r)}" for r in v.results if r.verdict != "pass"]
    return out


def _entry_word(e: ComparedEntry) -> str:
    if e.status != "ok":
        return f"not measured: {e.error_message}"
    sig = e.signature or "—"
    return f"{sig}, {strength_words(e.strength)}" if e.strength is not None else sig


def comparison_lines(c: Comparison) -> list[str]:
    """The comparison as the terminal prints it: ranking, table, differences, groups."""
    name = {e.path: Path(e.path).name for e in c.entries}
    by_path = {e.path: e for e in c.entries}
    rows = {t.path: {d.figure: d for d in t.figures} for t in c.table}
    lines = [f"Comparison of {len(c.entries)} captures"
             + (f", reference {name.get(c.reference, c.reference)}" if c.reference else "")
             + (f"; limits {Path(c.limits_source).name}: {c.verdict}" if c.limits_source else "")]
    lines.append("  ranked by nonlinearity (straightest first):")
    for path in c.ranking:
        e = by_path[path]
        mark = " (reference)" if e.is_reference else ""
        verdict = f"  [{e.limits.verdict}]" if e.limits is not None else ""
        nl = figure_text("nonlinearity_pct", e.nonlinearity_pct) if e.status == "ok" else ""
        lines.append(f"    {e.rank:>3}. {name[path]}{mark}  {e.group}  {nl}  "
                     f"{_entry_word(e)}{verdict}")
    good = [p for p in c.ranking if by_path[p].status == "ok"]
    for path in good:
        lines.append(f"  {name[path]}")
        for fig in TABLE_FIGURES:
            d = rows.get(path, {}).get(fig)
            if d is None:
                continue
            diff = ""
            if not by_path[path].is_reference and d.difference is not None:
                sign = "+" if d.difference > 0 else ""
                diff = (f"   {sign}{figure_text(fig, d.difference)}"
                        + (f" ({pct(d.difference_pct, signed=True)})"
                           if d.difference_pct is not None else "")
                        + " from the reference")
            lines.append(f"    {FIGURES[fig].label}: {figure_text(fig, d.value)}{diff}")
        e = by_path[path]
        if e.limits is not None:
            lines += ["  " + ln for ln in verdict_lines(e.limits)]
    groups = sorted({s.group for s in c.statistics})
    if len(groups) > 1 or (groups and groups[0] != "all"):
        lines.append("  groups (count, mean, standard deviation, min, max):")
        for s in c.statistics:
            if s.figure not in TABLE_FIGURES:
                continue
            f = s.figure
            lines.append(f"    {s.group} · {FIGURES[f].label}: n={s.count}, mean "
                         f"{figure_text(f, s.mean)}, sd {figure_text(f, s.std)}, "
                         f"{figure_text(f, s.min)} to {figure_text(f, s.max)}")
    return lines


def comparison_text(c: Comparison) -> str:
    """The comparison as one string."""
    return "\n".join(comparison_lines(c))


def comparison_document(c: Comparison) -> dict[str, Any]:
    """The comparison as JSON types (numbers and codes, and each limit's line in words)."""
    doc = c.to_dict()
    for entry, e in zip(doc["entries"], c.entries):
        if e.limits is not None:
            entry["limits"]["lines"] = [limit_line(r) for r in e.limits.results]
    return doc


def comparison_json(c: Comparison, indent: int | None = 2) -> str:
    return json.dumps(comparison_document(c), indent=indent, allow_nan=False)
