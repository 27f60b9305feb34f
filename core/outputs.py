"""Writing files trueslope makes (reports, sessions) without ever harming one.

One rule for every output: the text goes to a temporary file in the target's own
folder, is flushed to the disk (``fsync``), and only then takes the target's name
(``os.replace``, or a hard link when the target must not exist), so a crash or a
full disk leaves either the old file or the new one, never half of one. An
existing file is overwritten only when asked (``force``), and an input file --
by its resolved path or by its device and inode, so a hard link or a symlink to
it counts -- is never written onto, forced or not.
"""

from __future__ import annotations

import errno
import os
import tempfile
from pathlib import Path
from typing import Iterable

from .errors import OutputError, OutputExistsError, OutputIsInputError

__all__ = ["OutputError", "OutputExistsError", "OutputIsInputError", "check_output",
           "write_text_atomic"]


def _same_file(a: Path, b: Path) -> bool:
    """Same file by resolved path, or by device and inode when both exist."""
    try:
        if a.resolve() == b.resolve():
            return True
    except (OSError, RuntimeError):  # a symlink loop resolves to nothing comparable
        pass
    try:
        sa, sb = os.stat(a), os.stat(b)
    except OSError:
        return False
    return (sa.st_dev, sa.st_ino) == (sb.st_dev, sb.st_ino)


def _umask() -> int:
    """The process's umask without changing it (``os.umask`` sets it, racing other
    threads); read from /proc where there is one, else the common 022."""
    try:
        with open("/proc/self/status", encoding="ascii", errors="replace") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    return 0o022


def _why(exc: OSError) -> str:
    """An operating-system refusal in a few words (never Python's own text)."""
    return {errno.EACCES: "permission denied", errno.EPERM: "permission denied",
            errno.ENOENT: "its folder does not exist", errno.ENOSPC: "the disk is full",
            errno.EROFS: "the disk is read-only", errno.EISDIR: "it is a folder",
            errno.ENOTDIR: "a part of its path is not a folder",
            errno.ENAMETOOLONG: "the name is too long"}.get(exc.errno or 0,
                                                           exc.strerror or "the system refused")


def check_output(path: str | Path, force: bool = False, *,
                 inputs: Iterable[str | Path] = ()) -> Path:
    """Refuse, before any work is done, an output that :func:`write_text_atomic` would
    refuse: one of the inputs, a folder, a missing folder, or an existing file without
    ``force``. Returns the path."""
    target = Path(path)
    name = target.name or str(target)
    for src in inputs:
        if _same_file(target, Path(src)):
            raise OutputIsInputError(f"{name} is one of the input files: choose another "
                                     f"name for the output")
    if target.is_dir():
        raise OutputError(f"cannot write {name}: it is a folder")
    parent = target.parent if str(target.parent) else Path(".")
    if not parent.is_dir():
        raise OutputError(f"cannot write {name}: its folder does not exist")
    if target.exists() and not force:
        raise OutputExistsError(f"{name} already exists: pass --force to overwrite it")
    return target


def write_text_atomic(path: str | Path, text: str, force: bool = False, *,
                      inputs: Iterable[str | Path] = (), encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``path`` atomically, refusing to overwrite unless ``force``.

    Parameters
    ----------
    path : str or Path
        The file to write.
    text : str
        Its whole content.
    force : bool
        Overwrite an existing file (never an input file).
    inputs : iterable of str or Path
        The files the output was made from; writing onto any of them is refused.
    encoding : str
        Text encoding, UTF-8 by default.

    Returns
    -------
    Path
        The path written.

    Raises
    ------
    OutputIsInputError
        ``path`` is one of ``inputs`` (same resolved path, or same device and inode).
    OutputExistsError
        ``path`` exists and ``force`` is false.
    OutputError
        The folder is missing or not writable, the disk is full, ``path`` is a folder.
    """
    target = check_output(path, force, inputs=inputs)
    name = target.name or str(target)
    folder = target.parent if str(target.parent) else Path(".")
    data = text.encode(encoding)
    try:
        mode = os.stat(target).st_mode & 0o777 if target.exists() else 0o666 & ~_umask()
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{name}.", suffix=".tmp")
    except OSError as exc:
        raise OutputError(f"cannot write {name}: {_why(exc)}") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        if hasattr(os, "chmod"):
            os.chmod(tmp, mode)
        _commit(tmp, target, force, name)
    except OutputError:
        raise
    except OSError as exc:
        raise OutputError(f"cannot write {name}: {_why(exc)}") from None
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    _sync_folder(folder)
    return target


def _commit(tmp: str, target: Path, force: bool, name: str) -> None:
    """Give the temporary file the target's name. Without ``force`` a hard link takes
    the name only if it is still free (a file that appeared since the check is kept);
    where links are not supported, the check made before has to do."""
    if force:
        os.replace(tmp, target)
        return
    try:
        os.link(tmp, target)
    except FileExistsError:
        raise OutputExistsError(f"{name} already exists: pass --force to overwrite it") from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK,
                             getattr(errno, "ENOTSUP", errno.EOPNOTSUPP)):
            raise
        os.replace(tmp, target)


def _sync_folder(folder: Path) -> None:
    """Flush the folder's entry for the new name too (POSIX; best effort)."""
    if os.name != "posix":
        return
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
