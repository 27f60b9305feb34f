"""Fields and numbers of one row of delimited text.

The sniff (:mod:`.dialect`) and the block reader (:mod:`.delimited`) split
rows and read numbers the same way; this is that one way.
"""

from __future__ import annotations

import csv
import re

from ._assemble import MAX_COLUMNS

__all__ = ["MAX_LINE_BYTES", "is_number", "split_row", "row_kind", "row_fields", "to_float",
           "wide_row", "long_line"]

#: Longest line, bytes. A row of 64 columns of 20-character numbers is under 2 KiB
#: and a preamble line rarely passes 200 bytes; 64 KiB is far beyond both, yet a
#: line this long is split and checked in milliseconds. Longer lines are refused
#: before anything splits them.
MAX_LINE_BYTES = 64 * 1024

_DELIMS = ((",", "','"), (";", "';'"), ("\t", "tabs"))

_NUM_POINT = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$")
_NUM_COMMA = re.compile(r"[+-]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][+-]?\d+)?$")
_NONFINITE = re.compile(r"[+-]?(?:nan|inf|infinity)$", re.IGNORECASE)


def is_number(f: str, decimal: str) -> bool:
    """Whether a field is one number (or nan/inf) written with this decimal mark.

    Parameters
    ----------
    f : str
        The field, stripped.
    decimal : str
        ``"."`` or ``","``.

    Returns
    -------
    bool
    """
    return bool((_NUM_COMMA if decimal == "," else _NUM_POINT).match(f) or _NONFINITE.match(f))


def split_row(line: str, delimiter: str | None) -> list[str]:
    """Split a line at every delimiter, stripping spaces and one pair of quotes.

    A delimiter inside double quotes belongs to its field (RFC 4180), so
    ``1e-06,"1,015"`` is two fields.

    Parameters
    ----------
    line : str
        One line of text.
    delimiter : str or None
        A single character; None splits on runs of white space (no empty fields).

    Returns
    -------
    list of str
        Every field, empty ones included.
    """
    if delimiter is None:
        return line.split()
    if '"' in line:
        try:
            quoted = next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))
        except (csv.Error, StopIteration):
            quoted = None
        if quoted is not None:
            return [p.strip() for p in quoted]
    parts = [p.strip() for p in line.split(delimiter)]
    return [p[1:-1].strip() if len(p) >= 2 and p[0] == p[-1] == '"' else p for p in parts]


def row_kind(line: str, d: str | None, decimal: str,
             limit: int | None = None) -> tuple[str, int, bool]:
    """("blank" | "numeric" | "text" | "wide", field count, row ends in the delimiter).

    ``d`` is the delimiter (None: runs of white space), ``decimal`` the mark.
    With ``limit``, a row of more than ``limit`` fields whose first ``limit + 1``
    fields are numbers is "wide", and the rest of its fields are not looked at.

    A row ending in the delimiter counts one field less, so that rows with and
    without a trailing delimiter belong to the same block of data.
    """
    if not line.strip():
        return "blank", 0, False
    parts = split_row(line, d)
    trailing = d is not None and len(parts) > 1 and parts[-1] == ""
    count = len(parts) - (1 if trailing else 0)
    wide = limit is not None and count > limit
    if wide:
        parts = parts[:limit + 1]
    seen = False
    for p in parts:
        if p == "":
            continue
        if not is_number(p, decimal):
            return "text", count, trailing
        seen = True
    if wide and seen:
        return "wide", count, trailing
    return ("numeric" if seen else "blank"), count, trailing


def wide_row(count: int, delimiter: str | None) -> str:
    """Message for a row of numbers with more than ``MAX_COLUMNS`` fields."""
    sep = {",": "','", ";": "';'", "\t": "tabs", None: "spaces"}[delimiter]
    return (f"the row holds {count} numbers separated by {sep}; trueslope reads at most "
            f"{MAX_COLUMNS} columns (a time column and the channels), one sample per row. "
            f"If the samples run along the line, export them as one column")


def long_line(size: int, complete: bool, sample: bytes) -> str:
    """Message for a line longer than ``MAX_LINE_BYTES`` (``sample``: its first bytes)."""
    counts = [(sample.count(d.encode()) + 1, w) for d, w in _DELIMS]
    counts.append((len(sample.split()), "spaces"))
    n, sep = max(counts)
    kib = MAX_LINE_BYTES // 1024
    what = (f"the line is {size / 1024:.0f} KiB long" if complete
            else f"no line end in the first {kib} KiB: the line is longer than that")
    fields = f" ({n} fields separated by {sep} in its first {kib} KiB)" if n > MAX_COLUMNS else ""
    return (f"{what}{fields}; a capture row is a few numbers (at most {MAX_COLUMNS} columns) "
            f"and no line may pass {kib} KiB: this is not a capture of rows of numbers")


def row_fields(line: str, delimiter: str | None, k: int) -> list[str]:
    """Split a data row into its fields, stripped of spaces and quotes.

    Parameters
    ----------
    line : str
        One line of text.
    delimiter : str or None
        The dialect's delimiter; None splits on runs of white space.
    k : int
        Fields the row is expected to hold. One trailing empty field more
        (a row ending in the delimiter) is dropped.

    Returns
    -------
    list of str
        The fields; their count may differ from ``k`` (a ragged row).
    """
    parts = split_row(line, delimiter)
    if delimiter is not None and len(parts) == k + 1 and parts[-1] == "":
        parts.pop()
    return parts


def to_float(text: str, decimal: str) -> float | None:
    """Read one field as a number.

    Parameters
    ----------
    text : str
        The field, stripped; an empty field reads as NaN.
    decimal : str
        ``"."`` or ``","``, the dialect's decimal mark.

    Returns
    -------
    float or None
        None when the field is not a number written with that decimal mark.
    """
    if text == "":
        return float("nan")
    if decimal == ",":
        if "." in text or not (_NUM_COMMA.match(text) or _NONFINITE.match(text)):
            return None
        text = text.replace(",", ".")
    elif not (_NUM_POINT.match(text) or _NONFINITE.match(text)):
        return None
    return float(text)
