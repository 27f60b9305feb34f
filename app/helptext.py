"""Texts of the Help menu: bench safety, keyboard, measurement definitions; and the
scrolling box that shows a long one."""

from __future__ import annotations

import html

SAFETY_HTML = """
<h3>Bench safety</h3>
<p>trueslope only reads files, but measuring a ramp generator means probing live circuits.
The usual cautions apply; they do not replace your local electrical codes, your workplace's
rules or the advice of a licensed electrician where one is required.</p>
<ul>
<li><b>Mains-powered gear.</b> Keep mains wiring enclosed and fused, unplug before you
touch the primary side, and use an isolating transformer only as your training and local
practice allow: it removes the earth reference that protective devices rely on.</li>
<li><b>Scope ground clips.</b> On an earthed (mains-grounded) oscilloscope the probe's
ground clip is tied to mains earth. Never clip it to a point that is not at earth potential:
it shorts that point to earth through the probe and the scope, and can destroy the probe,
the circuit or the scope and hurt you. To measure between two live points use a
differential probe, or two channels and the math difference.</li>
<li><b>Electrolytic capacitors.</b> Fit them the right way round and within their voltage
rating. A reversed or over-driven electrolytic heats, can vent or burst, and throws hot
electrolyte. Wear eye protection when trying a new timing capacitor, and discharge large
capacitors through a resistor before handling them.</li>
<li><b>Stored charge.</b> A ramp capacitor or a supply's reservoir capacitor can hold a
charge after power-off. Check with a meter before you touch.</li>
</ul>
<p>When in doubt, defer to local codes and licensed practice.</p>
"""

SHORTCUTS: tuple[tuple[str, str], ...] = (
    ("F1", "The user guide"),
    ("Ctrl+O", "Open a capture"),
    ("] or Page Down", "Next cycle"),
    ("[ or Page Up", "Previous cycle"),
    ("Z", "Zoom to the shown cycle"),
    ("A", "Zoom to the whole capture"),
    ("F", "Each cycle's own fitted line on or off"),
    ("Ctrl+Shift+C", "Copy the figures to the clipboard"),
    ("Esc", "Cancel the running load or analysis"),
    ("Ctrl+Q", "Quit"),
)


def shortcuts_html() -> str:
    rows = "".join(f"<tr><td><b>{html.escape(k)}</b>&nbsp;&nbsp;</td><td>{html.escape(v)}</td></tr>"
                   for k, v in SHORTCUTS)
    return (f"<h3>Keyboard</h3><table>{rows}</table>"
            "<p>Drag the ochre band in the trace view to move the analysis window; "
            "releasing it measures again. Scroll to zoom, drag the background to pan.</p>")


#: Tallest a help box may be, as a share of the screen's available height.
MAX_SCREEN_SHARE = 0.85


def definitions_html(definitions: dict[str, str] | None = None) -> str:
    """The figures' definitions under the window's labels, grouped as the figures panel
    groups them (``report.numbers.FIGURE_GROUPS``); defined figures in no group follow
    under "Also in the exports"."""
    from trueslope.core.report import FIGURE_DEFINITIONS
    from trueslope.core.report.numbers import FIGURE_GROUPS, FIGURES

    defs = dict(FIGURE_DEFINITIONS if definitions is None else definitions)
    groups = [(name, [k for k in keys if k in defs]) for name, keys in FIGURE_GROUPS]
    grouped = {k for _, keys in groups for k in keys}
    rest = [k for k in defs if k not in grouped and k in FIGURES]
    if rest:
        groups.append(("Also in the exports", rest))
    parts = ["<h3>Measurement definitions</h3>"]
    for name, keys in groups:
        if not keys:
            continue
        rows = "".join(f"<tr><td valign='top' width='34%'><b>{html.escape(FIGURES[k].label)}</b>"
                       f"</td><td valign='top'>{html.escape(defs[k])}</td></tr>" for k in keys)
        parts.append(f"<h4>{html.escape(name)}</h4>"
                     f"<table cellspacing='0' cellpadding='3' width='100%'>{rows}</table>")
    rows = "".join(f"<tr><td valign='top' width='34%'><b>{html.escape(name)}</b></td>"
                   f"<td valign='top'>{html.escape(text)}</td></tr>" for name, text in TOOLS)
    parts.append(f"<h4>Beyond one capture</h4>"
                 f"<table cellspacing='0' cellpadding='3' width='100%'>{rows}</table>")
    return "".join(parts)


#: Short help for the tools that go past the figures of one capture: (name, what it does).
TOOLS: tuple[tuple[str, str], ...] = (
    ("Explain", "On the Bench comparison tab: finds the one cause (shunt loading, a "
     "capacitance that changes with voltage, dielectric absorption or a probe's "
     "compensation) that accounts for every selected capture of the same circuit, taken at "
     "other currents, swings or capacitances, with its circuit values shared by all of them, "
     "their 95 % intervals and how much worse the other causes fit. Each capture's plot "
     "shows its averaged ramp minus its best-fit line with the shared model over it; a "
     "capture the model does not explain is marked. When the set cannot decide, it names "
     "the capture to take next. Circuit values come from each capture's circuit form; give "
     "the capacitance for every capture or for none."),
    ("What it would take", "On the Diagnosis tab, for a bowed ramp: the least total "
     "resistance across the capacitor, the largest voltage coefficient and the longest ramp "
     "that keep the nonlinearity within a target (default 0.1 %). Try a change (a 10x probe "
     "in place of 1x, a current source's output resistance, another capacitance or "
     "dielectric) to draw the predicted ramp dashed over the measured one, with its "
     "predicted figures beside the measured ones. Predicting a change needs the capacitance "
     "in the circuit form."),
)


def text_box(parent, title: str):
    """A dialog holding a text browser and a Close button: ``(dialog, browser, the
    screen's available geometry)``."""
    from PySide6 import QtWidgets

    dlg = QtWidgets.QDialog(parent)
    dlg.setWindowTitle(title)
    lay = QtWidgets.QVBoxLayout(dlg)
    view = QtWidgets.QTextBrowser(dlg)
    lay.addWidget(view, 1)
    buttons = QtWidgets.QDialogButtonBox(QtWidgets.QDialogButtonBox.StandardButton.Close, dlg)
    buttons.rejected.connect(dlg.reject)
    lay.addWidget(buttons)
    screen = (parent.screen() if parent is not None else None) or \
        QtWidgets.QApplication.primaryScreen()
    return dlg, view, screen.availableGeometry()


def scrolling_dialog(parent, title: str, body_html: str):
    """A non-modal box showing ``body_html`` in a scrolling view, sized to its text but
    never taller than :data:`MAX_SCREEN_SHARE` of the screen's available height."""
    dlg, view, avail = text_box(parent, title)
    view.setOpenExternalLinks(False)
    view.setHtml(body_html)
    width = min(720, int(0.9 * avail.width()))
    view.document().setTextWidth(width - 40)
    wanted = int(view.document().size().height()) + 90
    height = min(wanted, int(MAX_SCREEN_SHARE * avail.height()))
    dlg.resize(width, height)
    dlg.setMaximumHeight(int(MAX_SCREEN_SHARE * avail.height()))
    return dlg


ABOUT_HTML = """
<h3>trueslope</h3>
<p>A bench companion that measures how straight a ramp (sawtooth) waveform is,
from oscilloscope exports: the fitted slope, the nonlinearity against a best-fit
and an end-point line, what the bow suggests about the circuit, and what this
capture can resolve.</p>
"""
