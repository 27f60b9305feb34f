"""The window's palette and plot styling, in one place.

The colours are our own: a warm paper background for the plots, a graphite
trace, a brick-red fit line and an ochre analysis band. Trace colours
deliberately avoid the saturated yellow, cyan, magenta and green that bench
instruments use for their channels, so a screenshot is never mistaken for one.
"""

from __future__ import annotations

#: Plot background and foreground (axes, tick labels).
PLOT_BACKGROUND = "#fbf8f2"
PLOT_FOREGROUND = "#3a3f47"
GRID_ALPHA = 0.18

#: The capture itself.
TRACE = "#39475a"
#: A second, faint copy of the trace outside the shown cycle would be noise;
#: the shown cycle is marked by a soft background band instead.
SHOWN_CYCLE_FILL = (120, 132, 150, 28)
#: Fitted straight line (drawn over the trace).
FIT_LINE = "#b5412b"
FIT_LINE_OTHER = (181, 65, 43, 110)
#: The analysis window band (draggable).
BAND_FILL = (214, 163, 58, 42)
BAND_HOVER = (214, 163, 58, 90)
BAND_EDGE = "#a97b1f"
#: Residual strip.
RESIDUAL_POINTS = (96, 104, 118, 150)
RESIDUAL_SMOOTH = "#6b2d5c"
NOISE_BAND = (90, 120, 160, 45)
ZERO_LINE = (58, 63, 71, 120)
#: A predicted ramp ("What it would take"), drawn dashed over the measured one.
PREDICTION = "#1f6f8b"

#: Colours of the self-check's verdicts: one for every verdict that agrees with
#: the stated parts (``trueslope.core.selfcheck.AGREES``), one for every verdict
#: against them (``DISAGREES``), and a grey for the rest ("not checked").
VERDICT_AGREES = "#2f6b3a"
VERDICT_DISAGREES = "#9b2c22"
VERDICT_DEFAULT = "#6a6f78"
VERDICT_COLOURS = {
    "within tolerance": VERDICT_AGREES,
    "outside": VERDICT_DISAGREES,
    "not checked": VERDICT_DEFAULT,
}

#: Message banner styles: (background, border, text).
BANNER_ERROR = ("#f7e1dc", "#c9826f", "#5a1d12")
BANNER_INFO = ("#f3ecd9", "#cdb67a", "#4b3b10")

#: Outlying cycles in the cycle list; cycles left out by hand are greyed.
OUTLIER_BACKGROUND = "#f5dcd3"
EXCLUDED_TEXT = "#9a9ca1"

STYLESHEET = """
QMainWindow { background: #eeebe4; }
QGroupBox { font-weight: 600; border: 1px solid #d5cfc2; border-radius: 4px;
            margin-top: 14px; padding-top: 6px; background: #f8f6f1; }
QGroupBox::title { subcontrol-origin: margin; left: 8px; padding: 0 4px; color: #4b3f2a; }
QTreeWidget, QTableView, QTableWidget { background: #fffdf9; alternate-background-color: #f6f2ea;
            gridline-color: #e3ddd0; }
QHeaderView::section { background: #e9e4d9; border: 0; border-right: 1px solid #d5cfc2;
            padding: 3px 6px; font-weight: 600; }
QTabWidget::pane { border: 1px solid #d5cfc2; background: #f8f6f1; }
QTabBar::tab { background: #e4dfd3; padding: 5px 12px; border: 1px solid #d5cfc2;
            border-bottom: 0; margin-right: 2px; }
QTabBar::tab:selected { background: #f8f6f1; }
QLabel#headline { font-size: 20px; font-weight: 600; color: #2d3540; }
QLabel#headlineSub { color: #5b6270; }
QLabel#signature { font-size: 15px; font-weight: 600; color: #2d3540; }
QLabel#muted { color: #6a6f78; }
QLabel#formError { color: #9b2c22; }
QLabel#formNote { color: #6a6f78; }
QLabel#staleMark { background: #fff3d6; border: 1px solid #c99a2e; border-radius: 3px;
            color: #5a4310; padding: 3px 6px; font-weight: 600; }
QLabel#cycleNote { color: #5b6270; }
QFrame#welcome { background: #fbf8f2; border: 1px dashed #cbbf9f; border-radius: 6px; }
QLabel#welcomeTitle { font-size: 22px; font-weight: 600; color: #39475a; }
"""


def verdict_colour(verdict: str) -> str:
    """Text colour of a self-check verdict: by whether the core counts it as agreeing
    with the stated parts or against them; anything else a neutral grey."""
    from trueslope.core.selfcheck import AGREES, DISAGREES

    word = str(verdict).strip().lower()
    if word in AGREES:
        return VERDICT_AGREES
    if word in DISAGREES:
        return VERDICT_DISAGREES
    return VERDICT_DEFAULT
