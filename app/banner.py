"""The message strip across the top of the window, and the one-line text it shows for an error.

Errors stay until dismissed or replaced; an optional button offers the next step.
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable

from PySide6 import QtCore, QtWidgets

from trueslope.core.errors import SettingsError, TrueslopeError

from . import theme
from .fields import settings_message


def describe_error(exc: BaseException) -> str:
    """A one-line message for the banner: our errors read well as they are; a settings
    error is prefixed with the label of the window's field it is about."""
    if isinstance(exc, SettingsError):
        return settings_message(exc)
    if isinstance(exc, TrueslopeError):
        return str(exc)
    if isinstance(exc, OSError):
        name = Path(exc.filename).name if exc.filename else "the file"
        return f"{name}: {exc.strerror or exc}"
    if isinstance(exc, MemoryError):
        return "not enough memory to hold this capture"
    return f"unexpected {type(exc).__name__}: {exc}"


class MessageBanner(QtWidgets.QFrame):
    """A message strip inside the window (errors stay until dismissed or replaced)."""

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("banner")
        lay = QtWidgets.QHBoxLayout(self)
        lay.setContentsMargins(10, 6, 6, 6)
        self.label = QtWidgets.QLabel("")
        self.label.setWordWrap(True)
        self.label.setTextInteractionFlags(QtCore.Qt.TextInteractionFlag.TextSelectableByMouse)
        self.action = QtWidgets.QPushButton("")
        self.action.hide()
        self.close_button = QtWidgets.QToolButton()
        self.close_button.setText("✕")
        self.close_button.setToolTip("Dismiss")
        self.close_button.setAutoRaise(True)
        self.close_button.clicked.connect(self.dismiss)
        lay.addWidget(self.label, 1)
        lay.addWidget(self.action)
        lay.addWidget(self.close_button)
        self._callback: Callable[[], None] | None = None
        self.action.clicked.connect(self._act)
        self.kind = ""
        self.hide()

    def _style(self, colours: tuple[str, str, str]) -> None:
        bg, border, fg = colours
        self.setStyleSheet(f"QFrame#banner {{ background: {bg}; border: 1px solid {border}; "
                           f"border-radius: 4px; }} QFrame#banner QLabel {{ color: {fg}; }}")

    def show_message(self, text: str, kind: str = "error", action: str | None = None,
                     callback: Callable[[], None] | None = None) -> None:
        """Show ``text``; ``kind`` is ``"error"`` or ``"info"``; an optional button runs ``callback``."""
        self.kind = kind
        self._style(theme.BANNER_ERROR if kind == "error" else theme.BANNER_INFO)
        prefix = "Problem: " if kind == "error" else ""
        self.label.setText(prefix + text)
        self._callback = callback
        self.action.setVisible(bool(action and callback))
        self.action.setText(action or "")
        self.show()

    def text(self) -> str:
        return self.label.text() if self.isVisible() else ""

    def dismiss(self) -> None:
        self.kind = ""
        self._callback = None
        self.hide()

    def _act(self) -> None:
        cb = self._callback
        self.dismiss()
        if cb is not None:
            cb()

