"""What the window remembers between runs: trim fraction, last folder, geometry, recent files.

Backed by :class:`QtCore.QSettings` in INI format under our own organisation
name. Tests and the screenshot mode pass their own store (a temporary INI
file, or a store that never writes) so they neither read nor change the
user's settings.
"""

from __future__ import annotations

import os
from pathlib import Path

from PySide6 import QtCore

from trueslope.core.settings import DEFAULT_TRIM_FRACTION, MAX_TRIM_FRACTION

ORGANISATION = "trueslope-bench"
APPLICATION = "trueslope"
MAX_RECENT = 8


class Store:
    """Typed access to the persisted window settings.

    Parameters
    ----------
    settings : QSettings, optional
        Where to keep them; by default the user's INI file for our
        organisation and application names.
    writable : bool
        False makes every setter a no-op (screenshot mode).
    """

    def __init__(self, settings: QtCore.QSettings | None = None, writable: bool = True) -> None:
        if settings is None:
            settings = QtCore.QSettings(QtCore.QSettings.Format.IniFormat,
                                        QtCore.QSettings.Scope.UserScope,
                                        ORGANISATION, APPLICATION)
        self._s = settings
        self._writable = writable

    @classmethod
    def at(cls, path: str | os.PathLike[str]) -> "Store":
        """A store kept in one INI file (tests)."""
        return cls(QtCore.QSettings(str(path), QtCore.QSettings.Format.IniFormat))

    @classmethod
    def read_only(cls) -> "Store":
        """A store that starts empty and never writes (screenshots)."""
        s = QtCore.QSettings(str(Path(os.devnull)), QtCore.QSettings.Format.IniFormat)
        return cls(s, writable=False)

    @property
    def file_name(self) -> str:
        return self._s.fileName()

    def _set(self, key: str, value: object) -> None:
        if self._writable:
            self._s.setValue(key, value)

    def sync(self) -> None:
        if self._writable:
            self._s.sync()

    # -- trim fraction ---------------------------------------------------------

    @property
    def trim_fraction(self) -> float:
        raw = self._s.value("analysis/trim_fraction", DEFAULT_TRIM_FRACTION)
        try:
            t = float(raw)
        except (TypeError, ValueError):
            return DEFAULT_TRIM_FRACTION
        return t if 0.0 <= t <= MAX_TRIM_FRACTION else DEFAULT_TRIM_FRACTION

    @trim_fraction.setter
    def trim_fraction(self, value: float) -> None:
        self._set("analysis/trim_fraction", float(value))

    # -- folders and recent files ----------------------------------------------

    @property
    def last_folder(self) -> str:
        folder = str(self._s.value("files/last_folder", "") or "")
        return folder if folder and Path(folder).is_dir() else str(Path.home())

    @last_folder.setter
    def last_folder(self, folder: str) -> None:
        self._set("files/last_folder", str(folder))

    @property
    def recent_files(self) -> list[str]:
        raw = self._s.value("files/recent", [])
        if isinstance(raw, str):
            raw = [raw] if raw else []
        return [str(p) for p in (raw or [])][:MAX_RECENT]

    def add_recent(self, path: str) -> None:
        path = str(Path(path).resolve())
        files = [p for p in self.recent_files if p != path]
        files.insert(0, path)
        self._set("files/recent", files[:MAX_RECENT])

    def clear_recent(self) -> None:
        self._set("files/recent", [])

    # -- geometry ----------------------------------------------------------------

    def geometry(self, key: str) -> QtCore.QByteArray | None:
        raw = self._s.value(f"window/{key}")
        return raw if isinstance(raw, QtCore.QByteArray) and not raw.isEmpty() else None

    def set_geometry(self, key: str, data: QtCore.QByteArray) -> None:
        self._set(f"window/{key}", data)
