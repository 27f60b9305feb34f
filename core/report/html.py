"""The bench report: one self-contained HTML document for one or several captures.

Inline CSS and inline SVG plots (:mod:`.svg`), no scripts and nothing fetched, so the
file can be mailed, archived and opened anywhere. Every number goes through
:mod:`.numbers` (through :func:`.summary.figure_value` for the figures), every sentence
through :mod:`.prose`, and every string that comes from a capture (file names,
channel names, metadata, warnings) or from the user is escaped.

Verdicts and a comparison are duck-typed, so this module needs neither the limits nor
the comparison module: a verdict is any object with ``.verdict`` (a word or an enum
whose value is one: "pass", "fail", "undecided") and ``.results`` (items shown as a
table from their ``to_dict()``); a comparison is any object with ``to_dict()``
(shown as tables, each number formatted by the SI unit in its key's name) and,
optionally, ``overlay``: ``(label, u, percent)`` curves that replace the ones drawn
here from the analyses.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
from importlib import metadata as _metadata
from pathlib import Path
from typing import Any, Mapping, Sequence

from ..jsonable import plain as _json_plain
from ..results import Analysis
from .numbers import FIGURE_GROUPS, FIGURES, MISSING, figure_text, pct, plain, quantity, si
from .prose import explanation, likely_cause, next_checks, selfcheck_summary
from .summary import diagnosis_line, figure_label, figure_value, window_note
from .svg import esc, normalised_residual, overlay_svg, residual_svg, trace_svg

#: Figures set side by side when several captures are reported.
COMPARE_KEYS = ("nonlinearity_pct", "terminal_nonlinearity_pct", "nonlinearity_floor_pct",
                "slope_v_per_s", "ramp_time_s", "frequency_hz")

#: The stated circuit: field of ``CircuitContext``, its label, its unit.
CIRCUIT_FIELDS = (("capacitance_f", "Capacitance", "F"), ("current_a", "Current", "A"),
                  ("set_resistor_ohm", "Set resistor", "Ω"), ("reference_v", "Reference", "V"),
                  ("probe_resistance_ohm", "Probe resistance", "Ω"),
                  ("probe_capacitance_f", "Probe capacitance", "F"),
                  ("low_threshold_v", "Lower threshold", "V"),
                  ("high_threshold_v", "Upper threshold", "V"))

#: The unit a number carries, read from the end of its key (longest first).
KEY_UNITS = (("_v_per_s", "V/s"), ("_pct", "%"), ("_hz", "Hz"), ("_ohm", "Ω"), ("_s", "s"),
             ("_v", "V"), ("_f", "F"), ("_a", "A"))

CSS = """
:root { --ink:#1d2733; --muted:#6b7785; --rule:#dfe4ea; --pass:#1e7a46; --fail:#b3261e;
        --open:#9a6700; --soft:#f5f7f9; }
* { box-sizing: border-box; }
body { font-family: system-ui, 'Segoe UI', Helvetica, Arial, sans-serif; color: var(--ink);
       max-width: 980px; margin: 2rem auto; padding: 0 1.2rem; line-height: 1.45;
       font-size: 15px; }
h1 { font-size: 1.6rem; margin: 0 0 .2rem; }
h2 { font-size: 1.25rem; border-bottom: 2px solid var(--ink); padding-bottom: .2rem;
     margin-top: 2.2rem; }
h3 { font-size: 1.02rem; margin: 1.4rem 0 .4rem; }
.byline { color: var(--muted); margin: 0 0 1rem; }
table { border-collapse: collapse; width: 100%; margin: .3rem 0 .8rem; }
th, td { text-align: left; vertical-align: top; padding: .28rem .55rem;
         border-bottom: 1px solid var(--rule); }
th { font-weight: 600; background: var(--soft); }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
.groups { display: grid; grid-template-columns: repeat(auto-fit, minmax(300px, 1fr));
          gap: 0 1.4rem; }
.groups th { width: 55%; background: none; font-weight: normal; color: var(--muted); }
.badge { display: inline-block; padding: .05rem .55rem; border-radius: .7rem; color: #fff;
         font-weight: 600; font-size: .85rem; letter-spacing: .02em; }
.pass { background: var(--pass); } .fail { background: var(--fail); }
.undecided { background: var(--open); }
.free { white-space: pre-wrap; }
.plot { margin: .6rem 0; max-width: 100%; overflow-x: auto; }
.plot svg { max-width: 100%; height: auto; }
.mono { font-family: ui-monospace, 'SFMono-Regular', Menlo, Consolas, monospace;
        font-size: .85rem; overflow-wrap: anywhere; }
.note { color: var(--muted); }
section.capture { page-break-before: always; }
@media print { body { margin: 0; max-width: none; font-size: 11pt; }
               .plot { page-break-inside: avoid; } }
"""


def installed_version() -> str:
    """The version of the installed trueslope package (``"unknown"`` when not installed)."""
    try:
        return _metadata.version("trueslope")
    except _metadata.PackageNotFoundError:
        return "unknown"


def _table(header: Sequence[str], rows: Sequence[Sequence[str]]) -> str:
    """A table from cells that are already HTML (escaped by the caller)."""
    head = "".join(f"<th>{h}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _pairs(rows: Sequence[tuple[str, str]]) -> str:
    """A two-column table of label and value (both already HTML)."""
    return "<table>" + "".join(f"<tr><th>{k}</th><td>{v}</td></tr>" for k, v in rows) + "</table>"


def _label(a: Analysis) -> str:
    return f"{Path(a.source).name} — {a.channel}"


def verdict_word(v: Any) -> str:
    """A verdict object's word: its ``.verdict`` (or an enum's value), lower case."""
    word = getattr(v, "verdict", v)
    word = getattr(word, "value", word)
    return str(word).strip().lower() if word is not None else "undecided"


def _badge(v: Any) -> str:
    word = verdict_word(v)
    cls = word if word in ("pass", "fail") else "undecided"
    return f'<span class="badge {cls}">{esc(word)}</span>'


def _verdict_for(verdicts: Any, i: int, a: Analysis) -> Any:
    """The verdict of the i-th capture: by position in a sequence, or by the capture's
    path or file name in a mapping."""
    if verdicts is None:
        return None
    if isinstance(verdicts, Mapping):
        return verdicts.get(a.source, verdicts.get(Path(a.source).name))
    return verdicts[i] if i < len(verdicts) else None


def auto_text(key: str, value: Any) -> str:
    """A value read from a plain-JSON document, formatted by :mod:`.numbers`: a summary
    figure by its own format, other numbers by the SI unit their key's name ends in."""
    if value is None or isinstance(value, (bool, str)):
        return plain(value)
    if isinstance(value, (list, tuple)):
        return ", ".join(auto_text(key, v) for v in value) if value else MISSING
    if isinstance(value, dict):
        return "; ".join(f"{k}: {auto_text(str(k), v)}" for k, v in value.items())
    if key in FIGURES:
        return figure_text(key, value)
    if key.endswith("_frac"):
        return pct(100.0 * value)
    return quantity(value, next((u for suffix, u in KEY_UNITS if key.endswith(suffix)), ""))


def _as_document(obj: Any) -> Any:
    """Any result-like object as plain JSON types."""
    to_dict = getattr(obj, "to_dict", None)
    if callable(to_dict):
        return to_dict()
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return _json_plain(obj)
    if isinstance(obj, (Mapping, list, tuple, str, int, float, bool)) or obj is None:
        return _json_plain(obj)
    return str(obj)


def _records_table(records: Sequence[Any]) -> str:
    """Rows of records (their documents' keys as columns, in order of appearance)."""
    docs = [_as_document(r) for r in records]
    docs = [d if isinstance(d, dict) else {"item": d} for d in docs]
    columns: list[str] = []
    for d in docs:
        columns += [str(k) for k in d if str(k) not in columns]
    return _table([esc(c.replace("_", " ")) for c in columns],
                  [[esc(auto_text(c, d.get(c))) for c in columns] for d in docs])


def document_html(doc: Any, key: str = "", depth: int = 0) -> str:
    """A plain-JSON document as nested tables (deeper than four levels, as JSON text)."""
    if depth > 4:
        return f'<span class="mono">{esc(json.dumps(doc, ensure_ascii=False))}</span>'
    if isinstance(doc, dict):
        rows = [(esc(str(k).replace("_", " ")), document_html(v, str(k), depth + 1))
                for k, v in doc.items()]
        return _pairs(rows)
    if isinstance(doc, list) and doc and all(isinstance(d, dict) for d in doc):
        return _records_table(doc)
    return esc(auto_text(key, doc))


# ------------------------------------------------------------------------ sections

def _summary(analyses: Sequence[Analysis], verdicts: Any) -> str:
    header = ["#", "Capture", "Channel"] + (["Verdict"] if verdicts is not None else []) + [
        esc(figure_label("nonlinearity_pct")), esc(figure_label("nonlinearity_floor_pct")),
        "Diagnosis"]
    rows = []
    for i, a in enumerate(analyses):
        v = _verdict_for(verdicts, i, a)
        row = [f'<a href="#capture-{i + 1}">{plain(i + 1)}</a>', esc(Path(a.source).name),
               esc(a.channel)]
        if verdicts is not None:
            row.append(_badge(v) if v is not None else f'<span class="note">{MISSING}</span>')
        row += [esc(figure_value(a, "nonlinearity_pct")),
                esc(figure_text("nonlinearity_floor_pct", a.figures.nonlinearity_floor_pct)),
                esc(diagnosis_line(a))]
        rows.append(row)
    return '<section id="summary"><h2>Summary</h2>' + _table(header, rows) + "</section>"


def _verdict_block(v: Any) -> str:
    results = list(getattr(v, "results", None) or ())
    out = [f"<h3>Verdict {_badge(v)}</h3>"]
    if results:
        out.append(_records_table(results))
    return "".join(out)


def _figures(a: Analysis) -> str:
    blocks = []
    for group, keys in FIGURE_GROUPS:
        rows = [(esc(figure_label(k)), f'<span class="num">{esc(figure_value(a, k))}</span>')
                for k in keys]
        blocks.append(f"<div><h4>{esc(group)}</h4>{_pairs(rows)}</div>")
    return '<h3>Figures</h3><div class="groups">' + "".join(blocks) + "</div>"


def _diagnosis(a: Analysis) -> str:
    d = a.diagnosis
    steps = "".join(f"<li>{esc(s)}</li>" for s in next_checks(d))
    return (f"<h3>Diagnosis</h3><p><strong>{esc(diagnosis_line(a))}</strong></p>"
            f"<p>{esc(explanation(d))}</p><p>Next checks on the bench:</p><ol>{steps}</ol>")


def _item_value(value: float | None, unit: str) -> str:
    return pct(value) if unit == "%" else si(value, unit)


def _selfcheck(a: Analysis) -> str:
    c = a.context_check
    if c is None:
        return ('<h3>Self-check</h3><p class="note">No circuit values were stated, so the '
                'capture was not checked against the parts.</p>')
    rows = []
    for it in c.items:
        rows.append([esc(it.name), esc(_item_value(it.expected, it.unit)),
                     esc(_item_value(it.measured, it.unit)), esc(it.verdict),
                     esc(MISSING if it.deviation_pct is None
                         else pct(it.deviation_pct, signed=True)),
                     esc(likely_cause(it, a.diagnosis) or MISSING)])
    return ("<h3>Self-check against the stated circuit</h3>"
            + _table(["Figure", "Expected", "Measured", "Verdict", "Deviation", "Likely cause"],
                     rows)
            + f"<p>{esc(selfcheck_summary(c, a.diagnosis))}</p>")


def _plots(a: Analysis) -> str:
    return ('<h3>Plots</h3>'
            f'<div class="plot">{trace_svg(a)}</div><div class="plot">{residual_svg(a)}</div>')


def _capture(i: int, a: Analysis, verdict: Any) -> str:
    parts = [f'<section class="capture" id="capture-{i + 1}">'
             f"<h2>{plain(i + 1)}. {esc(_label(a))}</h2>"]
    if verdict is not None:
        parts.append(_verdict_block(verdict))
    parts += [_figures(a), _diagnosis(a), _selfcheck(a), _plots(a)]
    if a.warnings:
        parts.append("<h3>Notes on the capture</h3><ul>"
                     + "".join(f"<li>{esc(w)}</li>" for w in a.warnings) + "</ul>")
    parts.append("</section>")
    return "".join(parts)


def _overlay_curves(analyses: Sequence[Analysis], comparison: Any) -> list[tuple[str, Any, Any]]:
    given = getattr(comparison, "overlay", None) if comparison is not None else None
    if given is not None and not callable(given):
        try:
            curves = [(str(label), u, y) for label, u, y in given]
            if curves:
                return curves
        except (TypeError, ValueError):
            pass
    return [(_label(a), *normalised_residual(a)) for a in analyses]


def comparison_section(analyses: Sequence[Analysis], comparison: Any = None) -> str:
    """The captures side by side: a few figures, the residuals overlaid (normalised to
    the span and the ramp time), and the comparison's own document when one is given."""
    header = ["Capture"] + [esc(figure_label(k)) for k in COMPARE_KEYS] + ["Diagnosis"]
    rows = [[esc(_label(a))] + [esc(figure_text(k, getattr(a.figures, k))) for k in COMPARE_KEYS]
            + [esc(a.diagnosis.signature)] for a in analyses]
    out = ['<section id="comparison"><h2>Comparison</h2>', _table(header, rows),
           f'<div class="plot">{overlay_svg(_overlay_curves(analyses, comparison))}</div>']
    if comparison is not None and hasattr(comparison, "entries"):
        out.append(_comparison_tables(comparison))
    elif comparison is not None:  # any other comparison object: its document as tables
        out.append("<h3>Differences and groups</h3>" + document_html(_as_document(comparison)))
    out.append("</section>")
    return "".join(out)


def _comparison_tables(c: Any) -> str:
    """The comparison's ranking, differences from the reference and group statistics as
    tables (the overlay is the plot above; its arrays stay in the JSON)."""
    from .compare_text import TABLE_FIGURES
    name = {e.path: Path(e.path).name for e in c.entries}
    by_path = {e.path: e for e in c.entries}
    rank_rows = []
    for path in c.ranking:
        e = by_path[path]
        verdict = e.limits.verdict if e.limits is not None else "—"
        rank_rows.append([esc(str(e.rank)), esc(name[path] + (" (reference)" if e.is_reference
                                                              else "")),
                          esc(e.group), esc(figure_text("nonlinearity_pct", e.nonlinearity_pct)
                                            if e.status == "ok" else "not measured"),
                          esc(e.signature or e.error_message or "—"), esc(verdict)])
    out = ["<h3>Ranking</h3>", _table(["#", "Capture", "Group", "Nonlinearity", "Diagnosis",
                                        "Limits"], rank_rows)]
    diff_rows = []
    for t in c.table:
        cells = [esc(name.get(t.path, t.path))]
        for d in (x for k in TABLE_FIGURES for x in t.figures if x.figure == k):
            text = figure_text(d.figure, d.value)
            if d.difference is not None and not by_path[t.path].is_reference:
                text += f" ({'+' if d.difference > 0 else ''}{figure_text(d.figure, d.difference)})"
            cells.append(esc(text))
        diff_rows.append(cells)
    out += ["<h3>Figures and differences from the reference</h3>",
            _table(["Capture"] + [esc(figure_label(k)) for k in TABLE_FIGURES], diff_rows)]
    stat_rows = [[esc(st.group), esc(figure_label(st.figure)), esc(str(st.count)),
                  esc(figure_text(st.figure, st.mean)), esc(figure_text(st.figure, st.std)),
                  esc(figure_text(st.figure, st.min)), esc(figure_text(st.figure, st.max))]
                 for st in c.statistics if st.figure in TABLE_FIGURES]
    if stat_rows:
        out += ["<h3>Groups</h3>", _table(["Group", "Figure", "n", "Mean", "Standard deviation",
                                            "Min", "Max"], stat_rows)]
    return "".join(out)


def _circuit_rows(a: Analysis) -> str:
    ctx = a.settings.context
    if ctx is None or ctx.is_empty:
        return "none stated"
    parts = [f"{label} {si(getattr(ctx, name), unit)}" for name, label, unit in CIRCUIT_FIELDS
             if getattr(ctx, name) is not None]
    parts.append(f"tolerance {pct(100.0 * ctx.tolerance_frac)}")
    return esc("; ".join(parts))


def _checksum(files_sha256: Mapping[str, str] | None, source: str) -> str:
    if not files_sha256:
        return MISSING
    for key in (source, str(Path(source).resolve()), Path(source).name):
        if key in files_sha256:
            return str(files_sha256[key])
    return MISSING


def _conditions(analyses: Sequence[Analysis], files_sha256: Mapping[str, str] | None,
                free: Sequence[tuple[str, str | None]], limits_text: str | None,
                tool_version: str, generated_at: str) -> str:
    out = ['<section id="conditions"><h2>Conditions</h2>']
    rows = [(k, f'<span class="free">{esc(v)}</span>') for k, v in free if v]
    rows += [("Tool", esc(f"trueslope {tool_version}")), ("Report made", esc(generated_at))]
    out.append(_pairs(rows))
    out.append("<h3>Files</h3>" + _table(
        ["#", "File", "SHA-256", "Channel", "Sync channel", "Samples", "Sample interval"],
        [[plain(i + 1), f'<span class="mono">{esc(a.source)}</span>',
          f'<span class="mono">{esc(_checksum(files_sha256, a.source))}</span>', esc(a.channel),
          esc(plain(a.settings.sync_channel) if a.settings.sync_channel is not None else "none"),
          esc(plain(a.samples)), esc(si(a.sample_interval_s, "s"))]
         for i, a in enumerate(analyses)]))
    out.append("<h3>Measurement settings</h3>" + _table(
        ["#", "Fit window", "Cycles left out by hand", "Circuit values"],
        [[plain(i + 1),
          esc(f"{window_note(a)}: {figure_text('window_start_s', a.figures.window_start_s)} to "
              f"{figure_text('window_end_s', a.figures.window_end_s)} from the ramp start"),
          esc(", ".join(plain(c) for c in a.settings.excluded_cycles) or "none"),
          _circuit_rows(a)] for i, a in enumerate(analyses)]))
    out.append("<h3>Limits</h3>" + (f'<p class="free">{esc(limits_text)}</p>' if limits_text
                                     else '<p class="note">No limits were applied.</p>'))
    for i, a in enumerate(analyses):
        if a.metadata:
            out.append(f"<h3>File metadata, capture {plain(i + 1)}</h3>"
                       + _table(["Key", "Value"], [[esc(k), esc(v)]
                                                   for k, v in a.metadata.items()]))
    out.append("</section>")
    return "".join(out)


def _when(generated_at: _dt.datetime | _dt.date | str) -> str:
    if isinstance(generated_at, _dt.datetime):
        return generated_at.isoformat(sep=" ", timespec="seconds")
    if isinstance(generated_at, _dt.date):
        return generated_at.isoformat()
    return str(generated_at)


def html_report(analyses: Analysis | Sequence[Analysis], *, title: str,
                operator: str | None = None, unit_serial: str | None = None,
                notes: str | None = None, limits_text: str | None = None,
                verdicts: Sequence[Any] | Mapping[str, Any] | None = None,
                comparison: Any = None, files_sha256: Mapping[str, str] | None = None,
                tool_version: str, generated_at: _dt.datetime | _dt.date | str) -> str:
    """One self-contained HTML document reporting one or several analyses.

    Parameters
    ----------
    analyses : Analysis or sequence of Analysis
        What was measured, in the order shown.
    title : str
        The report's title.
    operator, unit_serial, notes : str, optional
        Free fields: who measured, the unit or serial number under test, remarks.
    limits_text : str, optional
        The limits applied, as text (shown as written).
    verdicts : sequence or mapping, optional
        One verdict object per capture (by position, ``None`` for none), or a mapping
        from a capture's path or file name to its verdict; each has ``.verdict`` and
        ``.results`` (see the module's docstring).
    comparison : object, optional
        A comparison of the analyses with ``to_dict()`` and optionally ``overlay``.
    files_sha256 : mapping, optional
        SHA-256 hex digest of each capture file, keyed by its path as in
        ``Analysis.source`` (or its resolved path, or its file name).
    tool_version : str
        The trueslope version (:func:`installed_version`).
    generated_at : datetime, date or str
        When the report was made.

    Returns
    -------
    str
        The HTML document.
    """
    items = [analyses] if isinstance(analyses, Analysis) else list(analyses)
    free = [("Operator", operator), ("Unit or serial", unit_serial), ("Notes", notes)]
    body = [f"<header><h1>{esc(title)}</h1>"
            f'<p class="byline">{esc(_when(generated_at))} · trueslope {esc(tool_version)}'
            + "".join(f" · {esc(k)}: {esc(v)}" for k, v in free[:2] if v) + "</p></header>",
            _summary(items, verdicts)]
    if len(items) > 1 or comparison is not None:
        body.append(comparison_section(items, comparison))
    body += [_capture(i, a, _verdict_for(verdicts, i, a)) for i, a in enumerate(items)]
    body.append(_conditions(items, files_sha256, free, limits_text, tool_version,
                            _when(generated_at)))
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>{esc(title)}</title>\n<style>{CSS}</style>\n</head>\n<body>\n"
            + "\n".join(body) + "\n</body>\n</html>\n")
