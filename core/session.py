"""A bench session: which captures were measured, how, and what they were compared by.

A session file is JSON of trueslope's own design (``"format": "trueslope-session"``,
``"version": 1``). Each capture is kept with its SHA-256 and size, so a session
opened later says which files changed on disk instead of measuring something else
in silence; its path is stored relative to the session file when the capture lies
in the session's folder or below it, so the folder can move as a whole. In memory
every path is absolute. Loading validates every key and refuses, in one line naming
the file and the key, anything it does not understand, including a session written
by a newer trueslope.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import os
import re
from dataclasses import dataclass
from pathlib import Path, PurePosixPath
from typing import Any, Callable

from .circuit import CircuitContext
from .errors import SessionError, SettingsError
from .jsonable import ToDict
from .outputs import write_text_atomic
from .settings import DEFAULT_TRIM_FRACTION, Settings

SESSION_FORMAT = "trueslope-session"
SESSION_VERSION = 1
#: A session file is small; anything larger is not one (and is not read into memory).
MAX_SESSION_BYTES = 16 * 1024 * 1024
_SHA256 = re.compile(r"[0-9a-f]{64}")
_CIRCUIT_KEYS = tuple(f.name for f in dataclasses.fields(CircuitContext))


@dataclass(frozen=True)
class GroupSpec(ToDict):
    """A group of captures for the comparison: its name and the file-name patterns
    (``fnmatch`` style, e.g. ``"before_*.csv"``) that put a capture in it."""

    name: str
    patterns: tuple[str, ...] = ()


@dataclass(frozen=True)
class SessionCapture(ToDict):
    """One capture of the session and how it is measured.

    Attributes
    ----------
    path : str
        The capture file, absolute.
    sha256 : str
        SHA-256 of the file when the session was saved, 64 lower-case hex digits.
    size_bytes : int
        Its size then, bytes.
    channel, sync_channel : str, int or None
        Channel measured and the sync channel, by name or 0-based index.
    sample_interval_s : float or None
        The sample interval given for a file that states none, seconds.
    trim_fraction : float
        Fit window trim at each end, fraction of the ramp time.
    window_s : (float, float) or None
        Explicit fit window, seconds from the ramp start.
    excluded_cycles : tuple of int
        Cycles left out of the average by hand (0-based).
    phase_bins : int or None
        Points of the averaged cycle; None chooses.
    context : CircuitContext or None
        The stated circuit values.
    group : str or None
        The comparison group it belongs to.
    """

    path: str
    sha256: str
    size_bytes: int
    channel: str | int | None = None
    sync_channel: str | int | None = None
    sample_interval_s: float | None = None
    trim_fraction: float = DEFAULT_TRIM_FRACTION
    window_s: tuple[float, float] | None = None
    excluded_cycles: tuple[int, ...] = ()
    phase_bins: int | None = None
    context: CircuitContext | None = None
    group: str | None = None

    @property
    def settings(self) -> Settings:
        """The settings this capture is measured with (validated)."""
        return Settings(trim_fraction=self.trim_fraction, window_s=self.window_s,
                        channel=self.channel, sync_channel=self.sync_channel,
                        phase_bins=self.phase_bins, context=self.context,
                        excluded_cycles=self.excluded_cycles)


@dataclass(frozen=True)
class FileChange(ToDict):
    """A capture whose file is not the one the session saw: ``reason`` is ``"missing"``
    (or unreadable), ``"size"`` (size differs) or ``"content"`` (same size, other
    SHA-256)."""

    path: str
    reason: str


@dataclass(frozen=True)
class Session(ToDict):
    """A bench session: the captures and what they were compared by.

    Attributes
    ----------
    captures : tuple of SessionCapture
    reference : str or None
        Absolute path of the capture the comparison is made against.
    groups : tuple of GroupSpec
        Comparison groups by file-name pattern.
    limits_path : str or None
        Absolute path of the limits file.
    title, operator, unit_serial, notes : str or None
        Free fields of the report.
    """

    captures: tuple[SessionCapture, ...] = ()
    reference: str | None = None
    groups: tuple[GroupSpec, ...] = ()
    limits_path: str | None = None
    title: str | None = None
    operator: str | None = None
    unit_serial: str | None = None
    notes: str | None = None

    def changed_files(self) -> tuple[FileChange, ...]:
        """The captures whose file is missing, or differs in size or SHA-256 from when
        the session was saved, in session order."""
        out = []
        for c in self.captures:
            try:
                size = os.stat(c.path).st_size
                reason = "size" if size != c.size_bytes else (
                    "content" if file_sha256(c.path) != c.sha256 else "")
            except OSError:
                reason = "missing"
            if reason:
                out.append(FileChange(c.path, reason))
        return tuple(out)

    def settings_for(self, capture: SessionCapture | int | str) -> Settings:
        """The settings of a capture, given as itself, its index or its path."""
        return self.capture(capture).settings

    def capture(self, which: SessionCapture | int | str) -> SessionCapture:
        """A capture of the session by index or path (a ``SessionCapture`` is returned as is).

        Raises
        ------
        KeyError
            No capture has that path.
        """
        if isinstance(which, SessionCapture):
            return which
        if isinstance(which, int):
            return self.captures[which]
        wanted = os.path.abspath(which)
        for c in self.captures:
            if c.path == wanted:
                return c
        raise KeyError(f"the session holds no capture {Path(which).name}")


def file_sha256(path: str | Path, chunk_bytes: int = 1 << 20) -> str:
    """SHA-256 of a file's content, hex, read in chunks (any size)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(chunk_bytes), b""):
            h.update(block)
    return h.hexdigest()


def capture_entry(path: str | Path, settings: Settings | None = None, *,
                  group: str | None = None, sample_interval_s: float | None = None
                  ) -> SessionCapture:
    """A session entry for a capture file as it is now (its SHA-256 and size) measured
    with ``settings``."""
    s = settings or Settings()
    p = os.path.abspath(path)
    return SessionCapture(path=p, sha256=file_sha256(p), size_bytes=os.stat(p).st_size,
                          channel=s.channel, sync_channel=s.sync_channel,
                          sample_interval_s=sample_interval_s, trim_fraction=s.trim_fraction,
                          window_s=s.window_s, excluded_cycles=tuple(s.excluded_cycles),
                          phase_bins=s.phase_bins, context=s.context, group=group)


# ------------------------------------------------------------------------ writing

def _stored(path: str | None, folder: Path) -> str | None:
    """A path as written: relative (``/`` separated) under the session's folder, else absolute."""
    if path is None:
        return None
    p = Path(os.path.abspath(path))
    try:
        return PurePosixPath(*p.relative_to(folder).parts).as_posix()
    except ValueError:
        return str(p)


def session_document(session: Session, session_path: str | Path) -> dict[str, Any]:
    """The JSON document of a session to be saved at ``session_path``."""
    folder = Path(os.path.abspath(session_path)).parent
    captures = []
    for c in session.captures:
        d = c.to_dict()
        d["path"] = _stored(c.path, folder)
        d["context"] = (None if c.context is None else
                        {k: getattr(c.context, k) for k in _CIRCUIT_KEYS})
        captures.append(d)
    return {"format": SESSION_FORMAT, "version": SESSION_VERSION,
            "title": session.title, "operator": session.operator,
            "unit_serial": session.unit_serial, "notes": session.notes,
            "reference": _stored(session.reference, folder),
            "groups": [g.to_dict() for g in session.groups],
            "limits_path": _stored(session.limits_path, folder),
            "captures": captures}


def save_session(path: str | Path, session: Session, force: bool = False) -> Path:
    """Write the session file atomically (:func:`trueslope.core.outputs.write_text_atomic`):
    never over an existing file unless ``force``, never over one of its captures."""
    text = json.dumps(session_document(session, path), indent=2, allow_nan=False,
                      ensure_ascii=False) + "\n"
    inputs = [c.path for c in session.captures] + (
        [session.limits_path] if session.limits_path else [])
    return write_text_atomic(path, text, force, inputs=inputs)


# ------------------------------------------------------------------------ reading

class _Reader:
    """Validates one session document, naming the file and the key in every refusal."""

    def __init__(self, path: Path) -> None:
        self.path, self.folder = path, Path(os.path.abspath(path)).parent

    def fail(self, key: str | None, message: str) -> SessionError:
        return SessionError(message, self.path, key)

    def keys(self, d: Any, key: str, allowed: tuple[str, ...], required: tuple[str, ...] = ()
             ) -> dict[str, Any]:
        if not isinstance(d, dict):
            raise self.fail(key or None, "expected an object ({...})")
        for k in d:
            if k not in allowed:
                raise self.fail(f"{key}.{k}" if key else k, "unknown key")
        for k in required:
            if k not in d:
                raise self.fail(f"{key}.{k}" if key else k, "missing")
        return d

    def text(self, v: Any, key: str, optional: bool = True) -> str | None:
        if v is None and optional:
            return None
        if not isinstance(v, str):
            raise self.fail(key, "expected text")
        return v

    def number(self, v: Any, key: str, check: Callable[[float], bool] = math.isfinite,
               expected: str = "a finite number") -> float:
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not check(float(v)):
            raise self.fail(key, f"expected {expected}, got {json.dumps(v)[:40]}")
        return float(v)

    def integer(self, v: Any, key: str, lo: int = 0) -> int:
        if isinstance(v, bool) or not isinstance(v, int) or v < lo:
            raise self.fail(key, f"expected a whole number of at least {lo}, "
                                 f"got {json.dumps(v)[:40]}")
        return v

    def channel(self, v: Any, key: str) -> str | int | None:
        if v is None or isinstance(v, str):
            return v
        return self.integer(v, key)

    def file(self, v: Any, key: str) -> str | None:
        s = self.text(v, key)
        if s is None:
            return None
        if not s.strip() or "\x00" in s:
            raise self.fail(key, "expected a file path")
        p = Path(s)
        return os.path.normpath(p if p.is_absolute() else self.folder / p)

    def context(self, v: Any, key: str) -> CircuitContext | None:
        if v is None:
            return None
        d = self.keys(v, key, _CIRCUIT_KEYS + ("effective_current_a", "effective_capacitance_f"))
        values = {k: (None if d[k] is None else self.number(d[k], f"{key}.{k}"))
                  for k in _CIRCUIT_KEYS if k in d}
        try:
            return CircuitContext(**values)
        except SettingsError as exc:
            raise self.fail(f"{key} ({exc.field})" if exc.field else key, exc.message) from None

    def capture(self, d: Any, key: str) -> SessionCapture:
        fields = tuple(f.name for f in dataclasses.fields(SessionCapture))
        d = self.keys(d, key, fields, ("path", "sha256", "size_bytes"))
        sha = self.text(d["sha256"], f"{key}.sha256", optional=False)
        if not _SHA256.fullmatch(sha or ""):
            raise self.fail(f"{key}.sha256", "expected 64 lower-case hex digits")
        window = d.get("window_s")
        if window is not None:
            if not isinstance(window, list) or len(window) != 2:
                raise self.fail(f"{key}.window_s", "expected [start, end] in seconds, or null")
            window = tuple(self.number(w, f"{key}.window_s") for w in window)
        excluded = d.get("excluded_cycles", [])
        if not isinstance(excluded, list):
            raise self.fail(f"{key}.excluded_cycles", "expected a list of cycle numbers")
        interval = d.get("sample_interval_s")
        c = SessionCapture(
            path=self.file(d["path"], f"{key}.path") or "",
            sha256=sha or "", size_bytes=self.integer(d["size_bytes"], f"{key}.size_bytes"),
            channel=self.channel(d.get("channel"), f"{key}.channel"),
            sync_channel=self.channel(d.get("sync_channel"), f"{key}.sync_channel"),
            sample_interval_s=None if interval is None else self.number(
                interval, f"{key}.sample_interval_s", lambda x: math.isfinite(x) and x > 0,
                "a positive number of seconds"),
            trim_fraction=self.number(d.get("trim_fraction", DEFAULT_TRIM_FRACTION),
                                      f"{key}.trim_fraction"),
            window_s=window,  # type: ignore[arg-type]
            excluded_cycles=tuple(self.integer(x, f"{key}.excluded_cycles") for x in excluded),
            phase_bins=None if d.get("phase_bins") is None else self.integer(
                d["phase_bins"], f"{key}.phase_bins"),
            context=self.context(d.get("context"), f"{key}.context"),
            group=self.text(d.get("group"), f"{key}.group"))
        try:
            c.settings  # noqa: B018 -- validates the settings
        except SettingsError as exc:
            raise self.fail(f"{key}.{exc.field}" if exc.field else key, exc.message) from None
        return c

    def session(self, doc: Any) -> Session:
        doc = self.keys(doc, "", ("format", "version", "title", "operator", "unit_serial",
                                  "notes", "reference", "groups", "limits_path", "captures"),
                        ("format", "version", "captures"))
        if doc["format"] != SESSION_FORMAT:
            raise self.fail("format", f"not a trueslope session (expected "
                                      f"{json.dumps(SESSION_FORMAT)})")
        version = doc["version"]
        if isinstance(version, bool) or not isinstance(version, int) or version < 1:
            raise self.fail("version", "expected a whole number")
        if version > SESSION_VERSION:
            raise self.fail("version", f"written by a newer trueslope (session version "
                                       f"{version}); this one reads version "
                                       f"{SESSION_VERSION}: update trueslope to open it")
        if not isinstance(doc["captures"], list):
            raise self.fail("captures", "expected a list")
        caps = tuple(self.capture(c, f"captures[{i}]") for i, c in enumerate(doc["captures"]))
        groups = doc.get("groups") or []
        if not isinstance(groups, list):
            raise self.fail("groups", "expected a list")
        specs = []
        for i, g in enumerate(groups):
            g = self.keys(g, f"groups[{i}]", ("name", "patterns"), ("name",))
            pats = g.get("patterns", [])
            if not isinstance(pats, list):
                raise self.fail(f"groups[{i}].patterns", "expected a list of patterns")
            specs.append(GroupSpec(self.text(g["name"], f"groups[{i}].name", False) or "",
                                   tuple(self.text(p, f"groups[{i}].patterns", False) or ""
                                         for p in pats)))
        reference = self.file(doc.get("reference"), "reference")
        if reference is not None and reference not in {c.path for c in caps}:
            raise self.fail("reference", "names no capture of the session")
        return Session(captures=caps, reference=reference, groups=tuple(specs),
                       limits_path=self.file(doc.get("limits_path"), "limits_path"),
                       **{k: self.text(doc.get(k), k) for k in ("title", "operator",
                                                                "unit_serial", "notes")})


def _no_constant(name: str) -> Any:
    """NaN and Infinity are not JSON; Python's reader would take them."""
    raise ValueError(name)


def _no_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    d: dict[str, Any] = {}
    for k, v in pairs:
        if k in d:
            raise ValueError(k)
        d[k] = v
    return d


def load_session(path: str | Path) -> Session:
    """Read and validate a session file.

    Raises
    ------
    SessionError
        The file cannot be read, is not JSON, is not a session, comes from a newer
        trueslope, or a key holds what it may not; the message names the file and the key.
    """
    p = Path(path)
    try:
        if not p.is_file():
            raise SessionError("no such file" if not p.exists() else "not a file", p)
        if p.stat().st_size > MAX_SESSION_BYTES:
            raise SessionError("too large to be a session file", p)
        raw = p.read_bytes()
    except OSError:
        raise SessionError("cannot be read", p) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise SessionError("not UTF-8 text", p) from None
    try:
        doc = json.loads(text, object_pairs_hook=_no_duplicates, parse_constant=_no_constant)
    except json.JSONDecodeError as exc:
        raise SessionError(f"not valid JSON (line {exc.lineno}, column {exc.colno})", p) from None
    except ValueError as exc:
        raise SessionError(f"not a valid session: {str(exc)[:40]!r} is a repeated key or "
                           f"not a number JSON allows", p) from None
    except RecursionError:
        raise SessionError("nested too deeply to be a session file", p) from None
    return _Reader(p).session(doc)
