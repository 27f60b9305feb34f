"""The application's icon: trueslope's own mark (``packaging/icons``, installed as
``trueslope.icons``), set on the QApplication so every window carries it.

A missing icon is never an error: the window simply keeps Qt's default.
"""

from __future__ import annotations

from pathlib import Path

#: The PNG renderings, largest first (PNG needs no image plugin, in a bundle or not).
ICON_FILES = ("trueslope-256.png", "trueslope-128.png", "trueslope-48.png")


def icon_files() -> list[Path]:
    """The icon files found beside :mod:`trueslope.icons` (empty when it is not installed)."""
    try:
        from trueslope import icons
    except ImportError:
        return []
    folder = Path(icons.__file__).resolve().parent
    return [folder / name for name in ICON_FILES if (folder / name).is_file()]


def set_app_icon(app) -> bool:
    """Give ``app`` (a QApplication) trueslope's icon; returns whether one was found.

    Also names the desktop entry (``trueslope.desktop``), which a Wayland desktop needs to
    show the entry's icon beside the window.
    """
    from PySide6 import QtGui

    app.setDesktopFileName("trueslope")
    icon = QtGui.QIcon()
    for path in icon_files():
        icon.addFile(str(path))
    if icon.isNull():
        return False
    app.setWindowIcon(icon)
    return True
