"""The bench report as PDF, written by Qt itself (no browser).

:func:`write_pdf` lays the self-contained HTML report of
:func:`trueslope.core.report.html.html_report` out on A4 pages with a
``QTextDocument`` and prints it through ``QPdfWriter``. Qt's rich-text engine
draws no inline SVG, so each ``<svg>...</svg>`` of the report becomes an image
resource first: rendered by ``QSvgRenderer`` at print resolution and put back as
``<img src="svgN">`` at its width on the page. The few HTML5 section tags the
engine does not know become ``<div>`` so their page breaks still apply.

The file is written the way every trueslope output is: whole or not at all, never
over an existing file unless asked, never onto an input
(:func:`trueslope.core.outputs.write_text_atomic`).
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from pathlib import Path

#: Page margins, millimetres.
MARGIN_MM = 15.0
#: Resolution of the PDF and of the plots drawn into it, dots per inch.
PRINT_DPI = 300
#: The layout unit of ``QTextDocument`` when printing: a CSS pixel, 1/96 inch.
LAYOUT_DPI = 96.0
#: Widest a plot may be on the page, layout pixels (A4 less the margins: 180 mm).
_A4_TEXT_WIDTH_PX = (210.0 - 2 * MARGIN_MM) / 25.4 * LAYOUT_DPI

_SVG = re.compile(r"<svg\b.*?</svg>", re.DOTALL | re.IGNORECASE)
_SECTION = re.compile(r"<(/?)(section|header|footer|main|article)\b", re.IGNORECASE)


def _app() -> None:
    """Qt's painting needs a GUI application: make one when none exists (the command line)."""
    from PySide6 import QtGui
    if QtGui.QGuiApplication.instance() is None:
        import os
        import sys
        if sys.platform.startswith("linux") and not (os.environ.get("DISPLAY")
                                                      or os.environ.get("WAYLAND_DISPLAY")):
            os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
        _app.keep = QtGui.QGuiApplication(sys.argv[:1])  # type: ignore[attr-defined]


def svg_images(html: str, width_px: float = _A4_TEXT_WIDTH_PX, dpi: int = PRINT_DPI):
    """The report's HTML with each inline SVG replaced by ``<img src="svgN">``, and the
    images, rendered at ``dpi``, by name.

    Parameters
    ----------
    html : str
    width_px : float
        Widest a plot may be, layout pixels (1/96 inch).
    dpi : int
        Resolution of the images.

    Returns
    -------
    (str, dict of str -> QImage)
    """
    from PySide6 import QtCore, QtGui, QtSvg

    images: dict[str, QtGui.QImage] = {}

    def replace(match: re.Match[str]) -> str:
        renderer = QtSvg.QSvgRenderer(QtCore.QByteArray(match.group(0).encode("utf-8")))
        if not renderer.isValid():
            return ""
        size = renderer.defaultSize()
        if size.isEmpty():
            size = QtCore.QSize(640, 320)
        w = min(float(size.width()), width_px)
        h = w * size.height() / size.width()
        scale = dpi / LAYOUT_DPI
        image = QtGui.QImage(max(1, round(w * scale)), max(1, round(h * scale)),
                             QtGui.QImage.Format.Format_ARGB32_Premultiplied)
        image.fill(QtGui.QColor("white"))
        painter = QtGui.QPainter(image)
        painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
        renderer.render(painter)
        painter.end()
        name = f"svg{len(images) + 1}"
        images[name] = image
        return f'<img src="{name}" width="{round(w)}" height="{round(h)}">'

    return _SVG.sub(replace, html), images


def pdf_bytes(html: str) -> bytes:
    """The report's HTML laid out on A4 pages, as the bytes of a PDF file."""
    from PySide6 import QtCore, QtGui

    _app()
    body, images = svg_images(_SECTION.sub(lambda m: f"<{m.group(1)}div", html))
    doc = QtGui.QTextDocument()
    doc.setDocumentMargin(0)
    for name, image in images.items():
        doc.addResource(QtGui.QTextDocument.ResourceType.ImageResource, QtCore.QUrl(name), image)
    doc.setHtml(body)
    buffer = QtCore.QBuffer()
    buffer.open(QtCore.QIODevice.OpenModeFlag.WriteOnly)
    writer = QtGui.QPdfWriter(buffer)
    writer.setResolution(PRINT_DPI)
    writer.setPageSize(QtGui.QPageSize(QtGui.QPageSize.PageSizeId.A4))
    writer.setPageMargins(QtCore.QMarginsF(MARGIN_MM, MARGIN_MM, MARGIN_MM, MARGIN_MM),
                          QtGui.QPageLayout.Unit.Millimeter)
    writer.setCreator("trueslope")
    title = doc.metaInformation(QtGui.QTextDocument.MetaInformation.DocumentTitle)
    if title:
        writer.setTitle(title)
    doc.print_(writer)
    del writer  # finishes the file
    buffer.close()
    return bytes(buffer.data())


def write_pdf(html: str, out: str | Path, force: bool = False, *,
              inputs: Iterable[str | Path] = ()) -> Path:
    """Write the report's HTML as a PDF file (A4, margins of :data:`MARGIN_MM`).

    Parameters
    ----------
    html : str
        The self-contained report (inline CSS, inline SVG plots).
    out : str or Path
        The PDF to write.
    force : bool
        Replace an existing file.
    inputs : iterable of str or Path
        The files the report was made from; writing onto any of them is refused.

    Returns
    -------
    Path

    Raises
    ------
    trueslope.core.errors.OutputExistsError, OutputIsInputError, OutputError
        As :func:`trueslope.core.outputs.write_text_atomic`.
    """
    from trueslope.core.outputs import check_output, write_text_atomic

    check_output(out, force, inputs=inputs)  # before the work, as the command line does
    data = pdf_bytes(html)
    # Latin-1 maps each of the 256 byte values to one character and back, so the one
    # atomic writer of core writes these bytes exactly.
    return write_text_atomic(out, data.decode("latin-1"), force, inputs=inputs,
                             encoding="latin-1")
