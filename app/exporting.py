"""Exports from the window: the analysis as JSON, its figures and its story as CSV, the
cycles as CSV, plots as captioned PNG and SVG, the clipboard.

The texts come from :mod:`trueslope.core.report`: the JSON document is
:func:`~trueslope.core.report.export.analysis_document`, the per-cycle table
:func:`~trueslope.core.report.export.cycles_csv`, the clipboard text the
terminal's summary. The window's CSV is
:func:`~trueslope.core.report.export.figures_csv` followed by the rest of the
story (``report.figures_csv``): the window used, the channels, the circuit, the
diagnosis and the self-check. Pictures carry a caption (:func:`caption_lines`):
file, channel, date and the headline figures with the window used.

pyqtgraph's own SVG exporter fails on plot curves in pyqtgraph 0.14 with the
Qt 6 releases we use: Qt now writes path coordinates separated by spaces, and
the exporter's coordinate rewriting expects ``x,y`` pairs, so it raises
``ValueError: not enough values to unpack``. :func:`save_svg` tries it first
(a later pyqtgraph may fix it), checks what it wrote, and otherwise renders
the scene through Qt's own :class:`QtSvg.QSvgGenerator`.
"""

from __future__ import annotations

import json
import os
import xml.etree.ElementTree as ET
from datetime import datetime
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
    """Write the figures and the rest of the story as one two-column CSV table
    (``report.figures_csv``)."""
    from trueslope.core.report import figures_csv
    Path(path).write_text(figures_csv(analysis), encoding="utf-8", newline="")


def save_cycles_csv(analysis: Analysis, path: str | os.PathLike[str]) -> None:
    """Write the per-cycle figures as CSV (``report.cycles_csv``)."""
    from trueslope.core.report.export import cycles_csv
    Path(path).write_text(cycles_csv(analysis), encoding="utf-8", newline="")


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


def caption_lines(analysis: Analysis, when: datetime | None = None) -> list[str]:
    """The caption of an exported picture: file, channel and date; the headline figures;
    the fit window used (its edges and how it was set, never a trim beside a dragged one).

    Every figure is written by ``report.summary.figure_value`` with its window label.
    """
    from trueslope.core.report.numbers import figure_text
    from trueslope.core.report.summary import figure_label, figure_value, window_note

    a = analysis
    f = a.figures
    when = when or datetime.now()
    head = f"{Path(a.source).name} — channel {a.channel}"
    if a.segmentation.source == "sync" and a.settings.sync_channel is not None:
        head += f", resets from {a.settings.sync_channel}"
    captured = next((v for k, v in a.metadata.items() if "date" in k.lower() and v), "")
    if captured:
        head += f" — captured {captured}"
    head += f" — exported {when:%Y-%m-%d %H:%M}"
    figures = "     ".join(f"{figure_label(k)}: {figure_value(a, k)}"
                           for k in ("nonlinearity_pct", "slope_v_per_s", "frequency_hz"))
    window = (f"Fit window: {figure_text('window_start_s', f.window_start_s)} to "
              f"{figure_text('window_end_s', f.window_end_s)} from the ramp start "
              f"({window_note(a)})")
    return [head, figures, window]


#: Caption text size and margin, pixels at scale 1.
_CAPTION_PX = 13
_CAPTION_PAD = 8


def _caption_font(scale: float) -> QtGui.QFont:
    font = QtGui.QFont(QtWidgets.QApplication.font())
    font.setPixelSize(max(1, round(_CAPTION_PX * scale)))
    return font


def _wrap(lines: list[str], font: QtGui.QFont, width: float) -> list[str]:
    """``lines`` broken at spaces so that each fits ``width`` pixels in ``font``."""
    fm = QtGui.QFontMetricsF(font)
    out: list[str] = []
    for line in lines:
        words = line.split(" ")
        cur = ""
        for w in words:
            trial = w if not cur else f"{cur} {w}"
            if cur and fm.horizontalAdvance(trial) > width:
                out.append(cur)
                cur = w.lstrip()
            else:
                cur = trial
        out.append(cur)
    return out


def _caption_height(n_lines: int, font: QtGui.QFont, scale: float) -> float:
    return 2 * _CAPTION_PAD * scale + n_lines * QtGui.QFontMetricsF(font).lineSpacing()


def _paint_caption(painter: QtGui.QPainter, lines: list[str], font: QtGui.QFont,
                   width: float, scale: float) -> float:
    """Draw the wrapped caption at the top of ``painter``'s device; returns its height."""
    from . import theme
    fm = QtGui.QFontMetricsF(font)
    height = _caption_height(len(lines), font, scale)
    painter.save()
    painter.setFont(font)
    painter.setPen(QtGui.QColor(theme.PLOT_FOREGROUND))
    y = _CAPTION_PAD * scale + fm.ascent()
    for line in lines:
        painter.drawText(QtCore.QPointF(_CAPTION_PAD * scale, y), line)
        y += fm.lineSpacing()
    painter.setPen(QtGui.QPen(QtGui.QColor(theme.PLOT_FOREGROUND), max(1.0, scale * 0.5)))
    painter.drawLine(QtCore.QPointF(0, height - 1), QtCore.QPointF(width, height - 1))
    painter.restore()
    return height


def _scene_rect(view: QtWidgets.QGraphicsView) -> QtCore.QRectF:
    # What the user sees: the view's viewport mapped into the scene.
    return view.mapToScene(view.viewport().rect()).boundingRect()


def save_png(view: QtWidgets.QGraphicsView, path: str | os.PathLike[str], scale: float = 2.0,
             caption: list[str] | None = None) -> None:
    """Render the plots to a PNG at ``scale`` times the on-screen size, with ``caption``
    (lines of text, wrapped to the width) above them.

    Raises
    ------
    OSError
        The image could not be written.
    """
    src = _scene_rect(view)
    w, h = max(1, round(src.width() * scale)), max(1, round(src.height() * scale))
    font = _caption_font(scale)
    lines = _wrap(caption, font, w - 2 * _CAPTION_PAD * scale) if caption else []
    top = round(_caption_height(len(lines), font, scale)) if lines else 0
    image = QtGui.QImage(QtCore.QSize(w, h + top), QtGui.QImage.Format.Format_ARGB32)
    image.fill(view.backgroundBrush().color())
    painter = QtGui.QPainter(image)
    painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
    painter.setRenderHint(QtGui.QPainter.RenderHint.TextAntialiasing, True)
    if lines:
        _paint_caption(painter, lines, font, w, scale)
    view.scene().render(painter, QtCore.QRectF(0, top, w, h), src)
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


def save_svg_qt(view: QtWidgets.QGraphicsView, path: str | os.PathLike[str],
                caption: list[str] | None = None) -> None:
    """Render the plots to SVG through :class:`QtSvg.QSvgGenerator`, ``caption`` above."""
    src = _scene_rect(view)
    w, h = max(1, round(src.width())), max(1, round(src.height()))
    font = _caption_font(1.0)
    lines = _wrap(caption, font, w - 2 * _CAPTION_PAD) if caption else []
    top = round(_caption_height(len(lines), font, 1.0)) if lines else 0
    gen = QtSvg.QSvgGenerator()
    gen.setFileName(str(path))
    gen.setSize(QtCore.QSize(w, h + top))
    gen.setViewBox(QtCore.QRect(0, 0, w, h + top))
    # pyqtgraph's axes replay QPictures recorded at the screen's resolution: at the
    # generator's default 72 dpi they would be drawn at 72/96 of their size, off the grid.
    gen.setResolution(max(1, round(view.logicalDpiX())))
    gen.setTitle(caption[0] if caption else "trueslope plots")
    gen.setDescription("\n".join(caption) if caption
                       else "Trace view and residual strip exported by trueslope")
    painter = QtGui.QPainter(gen)
    painter.fillRect(QtCore.QRectF(0, 0, w, h + top), view.backgroundBrush())
    if lines:
        _paint_caption(painter, lines, font, w, 1.0)
    view.scene().render(painter, QtCore.QRectF(0, top, w, h), src)
    painter.end()


_SVG_NS = "http://www.w3.org/2000/svg"


def _length(text: str | None) -> float | None:
    try:
        return float(str(text).strip().rstrip("px").strip()) if text else None
    except ValueError:
        return None


def _caption_svg_file(path: str | os.PathLike[str], caption: list[str]) -> None:
    """Add ``caption`` as text elements above the drawing of an SVG file (the viewBox grows
    upwards by the caption's height, so the drawing itself is not touched)."""
    from . import theme
    ET.register_namespace("", _SVG_NS)
    ET.register_namespace("xlink", "http://www.w3.org/1999/xlink")
    tree = ET.parse(path)
    root = tree.getroot()
    box = [float(x) for x in (root.get("viewBox") or "").replace(",", " ").split()] or None
    width = _length(root.get("width")) or (box[2] if box else 800.0)
    height = _length(root.get("height")) or (box[3] if box else 600.0)
    if not box or len(box) != 4:
        box = [0.0, 0.0, width, height]
    user = box[2] / width if width else 1.0  # user units per pixel
    font = _caption_font(1.0)
    lines = _wrap(caption, font, width - 2 * _CAPTION_PAD)
    fm = QtGui.QFontMetricsF(font)
    top = _caption_height(len(lines), font, 1.0)
    y0 = box[1] - top * user
    group = ET.Element(f"{{{_SVG_NS}}}g", {"id": "caption"})
    ET.SubElement(group, f"{{{_SVG_NS}}}rect", {
        "x": f"{box[0]:g}", "y": f"{y0:g}", "width": f"{box[2]:g}", "height": f"{top * user:g}",
        "fill": theme.PLOT_BACKGROUND})
    for i, line in enumerate(lines):
        t = ET.SubElement(group, f"{{{_SVG_NS}}}text", {
            "x": f"{box[0] + _CAPTION_PAD * user:g}",
            "y": f"{y0 + (_CAPTION_PAD + fm.ascent() + i * fm.lineSpacing()) * user:g}",
            "font-family": font.family(), "font-size": f"{_CAPTION_PX * user:g}",
            "fill": theme.PLOT_FOREGROUND})
        t.text = line
    root.insert(0, group)
    root.set("viewBox", f"{box[0]:g} {y0:g} {box[2]:g} {box[3] + top * user:g}")
    root.set("width", f"{width:g}")
    root.set("height", f"{height + top:g}")
    tree.write(path, encoding="utf-8", xml_declaration=True)


def save_svg(view: QtWidgets.QGraphicsView, path: str | os.PathLike[str],
             caption: list[str] | None = None) -> str:
    """Write the plots as SVG, ``caption`` above them as text; pyqtgraph's exporter first,
    Qt's generator where it fails.

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
            if caption:
                _caption_svg_file(path, caption)
            if _svg_ok(path):
                return "pyqtgraph"
    except Exception:  # noqa: BLE001 - any failure of the exporter means: use Qt's
        pass
    save_svg_qt(view, path, caption)
    if not _svg_ok(path):
        raise OSError(f"could not write a valid SVG to {path}")
    return "qt"
