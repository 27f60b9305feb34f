"""What the window remembers between runs: trim fraction, last folder, geometry, recent files,
and the circuit values given for each capture.

Backed by :class:`QtCore.QSettings` in INI format under our own organisation
name. Tests and the screenshot mode pass their own store (a temporary INI
file, or a store that never writes) so they neither read nor change the
user's settings.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

from PySide6 import QtCore

from trueslope.core.settings import DEFAULT_TRIM_FRACTION, MAX_TRIM_FRACTION

ORGANISATION = "trueslope-bench"
APPLICATION = "trueslope"
MAX_RECENT = 8
#: Keys of the circuit form a capture's values are kept under.
CIRCUIT_KEYS = ("capacitance", "current", "set_resistor", "reference", "probe", "tolerance")


def capture_key(path: str | os.PathLike[str]) -> str:
    """The key a capture's values are kept under: its resolved path, as a hash
    (a path's slashes would nest QSettings groups)."""
    resolved = str(Path(path).resolve())
    return hashlib.sha256(resolved.encode("utf-8", "surrogatepass")).hexdigest()[:24]


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

    # -- circuit values, per capture ----------------------------------------------

    def circuit(self, path: str | os.PathLike[str]) -> dict[str, str | None] | None:
        """The circuit form's texts kept for the capture at ``path`` (None if never given)."""
        raw = self._s.value(f"circuits/{capture_key(path)}")
        try:
            doc = json.loads(str(raw)) if raw else None
        except ValueError:
            return None
        if not isinstance(doc, dict) or not isinstance(doc.get("values"), dict):
            return None
        values = doc["values"]
        return {k: (str(values[k]) if values.get(k) else None) for k in CIRCUIT_KEYS}

    def set_circuit(self, path: str | os.PathLike[str], texts: dict[str, str | None]) -> None:
        """Keep the circuit form's texts for the capture at ``path`` (all empty: forget them)."""
        key = f"circuits/{capture_key(path)}"
        values = {k: texts.get(k) for k in CIRCUIT_KEYS if texts.get(k)}
        if not values:
            if self._writable:
                self._s.remove(key)
            return
        self._set(key, json.dumps({"path": str(Path(path).resolve()), "values": values}))


class CircuitMemory:
    """The circuit values of each capture opened in this session, backed by a :class:`Store`.

    Values belong to the capture they were given for: :meth:`texts_for` gives
    a file's own values (kept in memory, else read from the store), never
    another file's; :attr:`previous` names the last other capture that had
    values, for the form's explicit "use the last capture's circuit".
    """

    def __init__(self, store: Store) -> None:
        self._store = store
        self._texts: dict[str, dict[str, str | None]] = {}
        self._names: dict[str, str] = {}
        self._current: str | None = None
        self.previous: tuple[str, dict[str, str | None]] | None = None

    def texts_for(self, path: str) -> dict[str, str | None]:
        """The form's texts for the capture at ``path`` (all None if never given)."""
        key = capture_key(path)
        if key not in self._texts:
            self._texts[key] = self._store.circuit(path) or {k: None for k in CIRCUIT_KEYS}
            self._names[key] = Path(path).name
        return dict(self._texts[key])

    def context_for(self, path: str):
        """The :class:`~trueslope.core.circuit.CircuitContext` kept for ``path`` (None if
        none, or if the kept values no longer parse)."""
        from trueslope.core.circuit import parse_context
        from trueslope.core.errors import SettingsError

        try:
            return parse_context(**self.texts_for(path))
        except SettingsError:
            return None

    def switch_to(self, path: str) -> None:
        """``path`` is now the open capture; the one before becomes :attr:`previous`
        if it had values."""
        key = capture_key(path)
        if self._current is not None and self._current != key:
            texts = self._texts.get(self._current, {})
            if any(texts.values()):
                self.previous = (self._names.get(self._current, ""), dict(texts))
        self._current = key
        self.texts_for(path)

    def remember(self, path: str, texts: dict[str, str | None]) -> None:
        """Keep ``texts`` as the values of the capture at ``path`` (memory and store)."""
        key = capture_key(path)
        self._texts[key] = {k: texts.get(k) for k in CIRCUIT_KEYS}
        self._names[key] = Path(path).name
        self._store.set_circuit(path, texts)
