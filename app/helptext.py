"""Texts of the Help menu: bench safety, keyboard, measurement definitions."""

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
    ("Ctrl+O", "Open a capture"),
    ("] or Page Down", "Next cycle"),
    ("[ or Page Up", "Previous cycle"),
    ("Z", "Zoom to the shown cycle"),
    ("A", "Zoom to the whole capture"),
    ("F", "Fitted line over every cycle, or only the shown one"),
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


def definitions_html(definitions: dict[str, str]) -> str:
    rows = "".join(f"<tr><td valign='top'><b>{html.escape(k)}</b>&nbsp;&nbsp;</td>"
                   f"<td>{html.escape(v)}</td></tr>" for k, v in definitions.items())
    return f"<h3>Measurement definitions</h3><table>{rows}</table>"


ABOUT_HTML = """
<h3>trueslope</h3>
<p>A bench companion that measures how straight a ramp (sawtooth) waveform is,
from oscilloscope exports: the fitted slope, the nonlinearity against a best-fit
and an end-point line, what the bow suggests about the circuit, and what this
capture can resolve.</p>
"""
