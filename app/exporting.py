"""Exports from the window: figures as JSON and CSV, plots as PNG and SVG, the clipboard.

The texts come from :mod:`trueslope.core.report`: the JSON document is
:func:`~trueslope.core.report.export.analysis_document`, the CSV table
:func:`~trueslope.core.report.export.figures_csv` (its cells neutralised by
``safe_cell``), the clipboard text the terminal's summary. This module only
writes them and renders the plots.

pyqtgraph's own SVG exporter fails on plot curves in pyqtgraph 0.14 with the
Qt 6 releases we use: Qt now writes path coordinates separated by spaces, and
the exporter's coordinate rewriting expects ``x,y`` pairs, so it raises
``ValueError: not enough values to unpack``. :func:`save_svg` tries it first
(a later pyqtgraph may fix it), checks what it wrote, and otherwise renders
the scene through Qt's own :class:`QtSvg.QSvgGenerator`.
"""

from __future__ import annotations

import os
import xml.etree.ElementTree as ET
import json
from pathlib import Path
from typing import TYPE_CHECKING

from PySide6 import QtCore, QtGui, QtSvg, QtWidgets

if TYPE_CHECKING:
    from trueslope.core.results import Analysis


def save_json(analysis: Analysis, path: str | os.PathLike[str]) -> None:
    """Write the analysis as the command line's JSON document (strict JSON: no NaN)."""
    from trueslope.core.report.export import analysis_document
    text = json.dumps(analysis_document(analysis), indent=2, allow_nan=False)
    Path(path).write_text(text, encoding="utf-8")


def save_csv(analysis: Analysis, path: str | os.PathLike[str]) -> None:
    """Write the summary figures as CSV (SI values; text cells safe for a spreadsheet)."""
    from trueslope.core.report.export import figures_csv
    Path(path).write_text(figures_csv(analysis), encoding="utf-8", newline="")


def copy_figures(analysis: Analysis, clipboard: QtGui.QClipboard | None = None) -> str:
    """Put the summary figures on the clipboard as plain text.

    Plain text only: handing the clipboard a QMimeData made in Python (to add
    the CSV as well) crashes PySide6 when the application exits.

    Returns
    -------
    str
        The text placed on the clipboard.
    """
    from trueslope.core.report import summary_text
    text = summary_text(analysis)
    (clipboard or QtWidgets.QApplication.clipboard()).setText(text)
    return text


def _scene_rect(view: QtWidgets.QGraphicsView) -> QtCore.QRectF:
    # What the user sees: the view's viewport mapped into the scene.
    return view.mapToScene(view.viewport().rect()).boundingRect()


def save_png(view: QtWidgets.QGraphicsView, path: str | os.PathLike[str], scale: float = 2.0) -> None:
    """Render the plots to a PNG at ``scale`` times the on-screen size.

    Raises
    ------
    OSError
        The image could not be written.
    """
    src = _scene_rect(view)
    size = QtCore.QSize(max(1, round(src.width() * scale)), max(1, round(src.height() * scale)))
    image = QtGui.QImage(size, QtGui.QImage.Format.Format_ARGB32)
    image.fill(view.backgroundBrush().color())
    painter = QtGui.QPainter(image)
    painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
    painter.setRenderHint(QtGui.QPainter.RenderHint.TextAntialiasing, True)
    view.scene().render(painter, QtCore.QRectF(0, 0, size.width(), size.height()), src)
    painter.end()
    if not image.save(str(path), "PNG"):
        raise OSError(f"could not write {path}")


def _svg_ok(path: str | os.PathLike[str]) -> bool:
    """True when ``path`` is well-formed SVG that draws at least one path or polyline."""
    try:
        root = ET.parse(path).getroot()
    except (ET.ParseError, OSError):
        return False
    if not root.tag.endswith("svg"):
        return False
    return any(el.tag.rsplit("}", 1)[-1] in ("path", "polyline") for el in root.iter())


def save_svg_qt(view: QtWidgets.QGraphicsView, path: str | os.PathLike[str]) -> None:
    """Render the plots to SVG through :class:`QtSvg.QSvgGenerator`."""
    src = _scene_rect(view)
    w, h = max(1, round(src.width())), max(1, round(src.height()))
    gen = QtSvg.QSvgGenerator()
    gen.setFileName(str(path))
    gen.setSize(QtCore.QSize(w, h))
    gen.setViewBox(QtCore.QRect(0, 0, w, h))
    gen.setTitle("trueslope plots")
    gen.setDescription("Trace view and residual strip exported by trueslope")
    painter = QtGui.QPainter(gen)
    painter.fillRect(QtCore.QRectF(0, 0, w, h), view.backgroundBrush())
    view.scene().render(painter, QtCore.QRectF(0, 0, w, h), src)
    painter.end()


def save_svg(view: QtWidgets.QGraphicsView, path: str | os.PathLike[str]) -> str:
    """Write the plots as SVG; pyqtgraph's exporter first, Qt's generator where it fails.

    Returns
    -------
    str
        ``"pyqtgraph"`` or ``"qt"``: which renderer wrote the file.

    Raises
    ------
    OSError
        Neither renderer could write a valid file.
    """
    try:
        import pyqtgraph.exporters as exporters
        exporters.SVGExporter(view.scene()).export(str(path))
        if _svg_ok(path):
            return "pyqtgraph"
    except Exception:  # noqa: BLE001 - any failure of the exporter means: use Qt's
        pass
    save_svg_qt(view, path)
    if not _svg_ok(path):
        raise OSError(f"could not write a valid SVG to {path}")
    return "qt"
