"""Render trueslope's icon (``packaging/icons/trueslope.svg``) to PNG at 48, 128 and 256 px.

Run after changing the SVG, from the repository root, with the project's venv::

    QT_QPA_PLATFORM=offscreen .venv/bin/python packaging/make_icons.py

Qt's own SVG renderer draws it (no other tool needed); the PNGs are committed beside the SVG
as ``trueslope-48.png``, ``trueslope-128.png`` and ``trueslope-256.png``.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

#: Side lengths of the PNG renderings, pixels (the .desktop entry's hicolor sizes).
SIZES = (48, 128, 256)
ICONS = Path(__file__).resolve().parent / "icons"


def render(svg: Path, size: int, out: Path) -> None:
    """Draw ``svg`` into a transparent ``size`` x ``size`` image and save it as PNG.

    Raises
    ------
    RuntimeError
        When Qt cannot read the SVG or cannot write the PNG.
    """
    from PySide6 import QtCore, QtGui, QtSvg

    renderer = QtSvg.QSvgRenderer(str(svg))
    if not renderer.isValid():
        raise RuntimeError(f"{svg}: Qt could not read this SVG")
    image = QtGui.QImage(size, size, QtGui.QImage.Format.Format_ARGB32_Premultiplied)
    image.fill(QtCore.Qt.GlobalColor.transparent)
    painter = QtGui.QPainter(image)
    painter.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing)
    painter.setRenderHint(QtGui.QPainter.RenderHint.SmoothPixmapTransform)
    renderer.render(painter, QtCore.QRectF(0, 0, size, size))
    painter.end()
    if not image.save(str(out), "PNG"):
        raise RuntimeError(f"{out}: could not write the PNG")


def main() -> int:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6 import QtGui

    app = QtGui.QGuiApplication.instance() or QtGui.QGuiApplication(sys.argv[:1])  # noqa: F841
    svg = ICONS / "trueslope.svg"
    for size in SIZES:
        out = ICONS / f"trueslope-{size}.png"
        render(svg, size, out)
        print(f"{out.relative_to(ICONS.parent.parent)}  {size}x{size}  {out.stat().st_size} bytes")
    return 0


if __name__ == "__main__":
    sys.exit(main())
