"""The side panels: figures, cycle list, findings (with the circuit-context form), capture.

One module per panel. Each panel only reads a finished
:class:`~trueslope.core.results.Analysis`; none of them computes anything.
"""

from .capture import CapturePanel
from .context_form import ContextForm
from .cycles import CycleTable
from .figures import FiguresPanel
from .findings import FindingsPanel

__all__ = ["CapturePanel", "ContextForm", "CycleTable", "FiguresPanel", "FindingsPanel"]
