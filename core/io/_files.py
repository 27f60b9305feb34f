"""Opening a capture file: regular files only, for reading only.

A FIFO blocks ``open()`` until a writer appears, and a device such as
``/dev/zero`` never ends (while reporting 0 bytes); neither is a capture. So
the path is checked with :func:`os.stat` before anything opens it, and the
file is then opened read-only and non-blocking and checked again on the open
descriptor (a name swapped for a FIFO in between cannot block the reader).
Every reader opens its file through :func:`open_regular`.
"""

from __future__ import annotations

import os
import stat
from typing import BinaryIO

from ..errors import CaptureReadError

__all__ = ["open_regular", "check_regular"]


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "a special file"


def _refuse(mode: int, path: str) -> CaptureReadError:
    if stat.S_ISDIR(mode):
        return CaptureReadError("this is a folder, not a capture file", path)
    return CaptureReadError(
        f"is not a regular file (a FIFO / device / folder): it is {_kind(mode)}; "
        f"expected a capture file saved on disk", path)


def _os_error(exc: OSError, path: str) -> CaptureReadError:
    if isinstance(exc, FileNotFoundError):
        return CaptureReadError("no such file", path)
    if isinstance(exc, IsADirectoryError):
        return CaptureReadError("this is a folder, not a capture file", path)
    if isinstance(exc, PermissionError):
        return CaptureReadError("permission denied: the file cannot be read", path)
    return CaptureReadError(f"cannot be read: {exc.strerror or 'the system refused'}", path)


def check_regular(path: str) -> os.stat_result:
    """Stat ``path`` and refuse anything but a regular file, without opening it.

    Raises
    ------
    CaptureReadError
        Missing, no permission, a folder, a FIFO, a device or a socket.
    """
    try:
        st = os.stat(path)
    except (OSError, ValueError) as exc:  # ValueError: a NUL byte in the name
        if isinstance(exc, OSError):
            raise _os_error(exc, path) from None
        raise CaptureReadError("the file name is not a valid path", path) from None
    if not stat.S_ISREG(st.st_mode):
        raise _refuse(st.st_mode, path)
    return st


def open_regular(path: str) -> BinaryIO:
    """Open a regular file for reading only (binary, buffered).

    Parameters
    ----------
    path : str
        The capture file.

    Returns
    -------
    file object
        Opened ``rb``; the caller closes it.

    Raises
    ------
    CaptureReadError
        As :func:`check_regular`, or when the open itself fails.
    """
    check_regular(path)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) \
        | getattr(os, "O_CLOEXEC", 0) | getattr(os, "O_BINARY", 0)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        raise _os_error(exc, path) from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            raise _refuse(st.st_mode, path)
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)  # a regular file: ordinary reads from here on
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise
