"""What the trace area shows before the first capture: how to open one, and recent files."""

from __future__ import annotations

from pathlib import Path

from PySide6 import QtCore, QtWidgets


class Welcome(QtWidgets.QFrame):
    """What the trace area shows before the first capture: how to open one, and recent files.

    Signals
    -------
    open_requested(str)
        The user picked a recent capture (its path).
    dialog_requested()
        The user asked for the open dialog.
    """

    open_requested = QtCore.Signal(str)
    dialog_requested = QtCore.Signal()

    def __init__(self, parent: QtWidgets.QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("welcome")
        lay = QtWidgets.QVBoxLayout(self)
        lay.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
        title = QtWidgets.QLabel("Open a ramp capture")
        title.setObjectName("welcomeTitle")
        title.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
        hint = QtWidgets.QLabel("File ▸ Open (Ctrl+O), or drop a CSV or text export from the "
                                "scope onto this window.")
        hint.setObjectName("muted")
        hint.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
        button = QtWidgets.QPushButton("Open a capture…")
        button.clicked.connect(self.dialog_requested.emit)
        self.recent_box = QtWidgets.QVBoxLayout()
        lay.addWidget(title)
        lay.addWidget(hint)
        lay.addSpacing(10)
        lay.addWidget(button, 0, QtCore.Qt.AlignmentFlag.AlignCenter)
        lay.addSpacing(10)
        lay.addLayout(self.recent_box)

    def refresh(self, recent: list[str]) -> None:
        while self.recent_box.count():
            w = self.recent_box.takeAt(0).widget()
            if w is not None:
                w.deleteLater()
        if recent:
            label = QtWidgets.QLabel("Recent captures")
            label.setObjectName("muted")
            label.setAlignment(QtCore.Qt.AlignmentFlag.AlignCenter)
            self.recent_box.addWidget(label)
        for path in recent[:5]:
            b = QtWidgets.QPushButton(Path(path).name)
            b.setToolTip(path)
            b.setFlat(True)
            b.setCursor(QtCore.Qt.CursorShape.PointingHandCursor)
            b.clicked.connect(lambda _=False, p=path: self.open_requested.emit(p))
            self.recent_box.addWidget(b, 0, QtCore.Qt.AlignmentFlag.AlignCenter)
