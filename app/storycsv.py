"""The window's CSV export: the figures, then the rest of the story in the same two columns.

``report.figures_csv`` holds the summary figures. A reader of the window's CSV
also needs what the window showed beside them: how the fit window was set,
the channels, the circuit as stated, the diagnosis (its numbers and its
words) and the self-check. Those rows follow the figures as ``figure,value``
pairs with dotted names (``diagnosis.tau_s``, ``context_check.slope.verdict``),
taken from the same documents as the JSON export
(``report.export.diagnosis_document`` and ``selfcheck_document``), and every
cell goes through ``report.export.safe_cell``.

When the window was not the trimmed one (dragged, or shortened to keep
clipped samples out) the figures' ``trim_fraction`` row is left out: the
table then states the window used, never a trim beside it.
"""

from __future__ import annotations

import csv
import io
from typing import TYPE_CHECKING, Any, Iterator

if TYPE_CHECKING:
    from trueslope.core.results import Analysis


def window_from_trim(a: Analysis) -> bool:
    """True when the fit window is the trimmed one (as ``summary.window_note`` decides)."""
    codes = {w.code for w in a.warnings}
    return a.settings.window_s is None and "clipped" not in codes


def _flat(prefix: str, value: Any) -> Iterator[tuple[str, Any]]:
    """``(dotted name, cell)`` rows of a JSON-typed value: dicts by key, text lists one
    row per entry (numbered from 1), number lists in one cell."""
    if isinstance(value, dict):
        for k, v in value.items():
            yield from _flat(f"{prefix}.{k}", v)
    elif isinstance(value, (list, tuple)):
        if all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in value) and value:
            yield prefix, " ".join(repr(x) for x in value)
        elif not value:
            yield prefix, ""
        else:
            for i, x in enumerate(value, 1):
                yield from _flat(f"{prefix}.{i}", x)
    else:
        yield prefix, "" if value is None else value


def story_rows(a: Analysis) -> list[tuple[str, Any]]:
    """The rows that follow the figures: window, channels, circuit, diagnosis, self-check,
    warnings."""
    from trueslope.core.report.export import diagnosis_document, selfcheck_document
    from trueslope.core.report.summary import window_note

    s = a.settings
    rows: list[tuple[str, Any]] = [("window_set", window_note(a))]
    if s.window_s is not None:
        rows.append(("window_requested_start_s", float(s.window_s[0])))
        rows.append(("window_requested_end_s", float(s.window_s[1])))
    rows.append(("sync_channel", "" if s.sync_channel is None else str(s.sync_channel)))
    rows.append(("excluded_cycles", " ".join(str(i) for i in s.excluded_cycles)))
    if s.context is None:
        rows.append(("circuit", "not stated"))
    else:
        rows += list(_flat("circuit", s.context.to_dict()))
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
    for i, w in enumerate(a.warnings, 1):
        rows.append((f"warning.{i}", str(w)))
    return rows


def window_csv(a: Analysis) -> str:
    """The window's CSV table: ``report.figures_csv`` (less ``trim_fraction`` when the
    window was not the trimmed one), then :func:`story_rows`, all cells neutralised."""
    from trueslope.core.report.export import figures_csv, safe_cell

    keep_trim = window_from_trim(a)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    for row in csv.reader(io.StringIO(figures_csv(a))):
        if row and row[0] == "trim_fraction" and not keep_trim:
            continue
        w.writerow([safe_cell(c) for c in row])
    for name, value in story_rows(a):
        w.writerow([safe_cell(name), safe_cell(value)])
    return buf.getvalue()
