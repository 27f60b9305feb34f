"""Decimal commas in a file whose fields are also separated by commas.

A tool set to a decimal-comma locale but exporting with a comma as the field
separator writes 1.015 V as ``1,015``: ``1e-06,1,015`` is then one time and
one voltage, or three numbers, and nothing in the row says which. Reading it
either way is a guess, and the wrong guess measures a different waveform, so
such a file is refused with a message that says how to export it again.

The evidence looked for, on the unquoted rows of numbers of a ',' separated
file with no decimal point anywhere in them (a decimal point settles the
decimal mark), each time with every row splitting into whole numbers and
integer/fraction pairs (``1`` then ``015``, the fraction possibly with an
exponent):

* the rows do not all have the same number of fields (``1`` beside
  ``1,015``), which a file with a comma decimal mark and ``%g``-style numbers
  gives;
* the header names fewer columns than the rows have fields, and the fields
  that would be fractions are all of one width or start with a zero
  (``time,voltage`` over ``0,000001,1,015``);
* with no header, a column of digits that starts with a zero (``015``,
  ``000001``), of one width, after a column of integers that are not
  zero-padded themselves: the digits after a decimal comma, not a number.

Values in double quotes are unambiguous (RFC 4180: the comma inside belongs
to the field) and are read as decimal-comma numbers, except when every such
value could as well be a number with a thousands separator (``"1,015"`` and
never ``"0,5"`` or ``"1,0153"``), which is refused too.

Nothing here raises: each check returns the line to name and the sentence.
"""

from __future__ import annotations

import re
from typing import Callable

from ._fields import row_kind, split_row

__all__ = ["FIX", "pairs_into", "row_clash", "unquoted_clash", "quoted_clash",
           "decimal_comma_clash"]

_INT = re.compile(r"[+-]?\d+$")
_FRAC = re.compile(r"\d+(?:[eE][+-]?\d+)?$")
_PADDED = re.compile(r"[+-]?0\d")
_THOUSANDS = re.compile(r"[+-]?[1-9]\d{0,2}(?:,\d{3})+$")
#: Field counts above this are not searched for a pairing (no export has them).
_MAX_FIELDS = 24

#: How to fix the export; every refusal ends with it.
FIX = ("In the export settings of the scope or logger, choose a semicolon or a tab as the "
       "field separator, or a point as the decimal mark, and export the capture again")

_CLASH = ("the numbers seem to be written with a decimal comma while commas also separate "
          "the fields, so a value such as '1,015' reads as one number or two and the columns "
          "cannot be told apart")


def pairs_into(fields: list[str], m: int) -> bool:
    """Whether the comma-split fields can be put back together into ``m`` numbers.

    Parameters
    ----------
    fields : list of str
        The fields of one row, split at every comma.
    m : int
        Numbers the row should hold.

    Returns
    -------
    bool
        True when, left to right, each number is one field or an integer
        field followed by a field of digits (its fraction), and there are
        exactly ``m`` numbers with at least one such pair.
    """
    k = len(fields)
    if not (0 < m < k <= 2 * m) or k > 2 * _MAX_FIELDS:
        return False
    reach = {0: {0}}  # fields used -> numbers they can make
    for i in range(k):
        for n in reach.get(i, ()):
            reach.setdefault(i + 1, set()).add(n + 1)
            if i + 1 < k and _INT.match(fields[i]) and _FRAC.match(fields[i + 1]):
                reach.setdefault(i + 2, set()).add(n + 1)
    return m in reach.get(k, set())


def row_clash(fields: list[str], k: int) -> str | None:
    """Why a row with a field count other than ``k`` looks like decimal commas, or None.

    For a row met after the sniffed head of a ',' separated file.
    """
    if len(fields) <= k or any("." in f for f in fields) or not pairs_into(fields, k):
        return None
    return (f"{_CLASH}: this row has {len(fields)} fields where the rows above have {k}. "
            f"{FIX}")


def _fraction_like(values: list[str]) -> bool:
    if any(len(v) > 1 and v[0] == "0" for v in values):
        return True
    return len({len(v) for v in values}) == 1 and all(v.isdigit() for v in values)


def unquoted_clash(rows: list[tuple[int, str, list[str]]], header: list[str] | None,
                   header_line: int | None) -> tuple[int, str] | None:
    """Look for decimal commas in the rows of numbers of a ',' separated file.

    Parameters
    ----------
    rows : list of (int, str, list of str)
        1-based line, text and comma-split fields of each row of numbers of
        the data block, in file order (a truncated last line left out).
    header : list of str or None
        The names on the line above the data when it is a row of names
        (split at commas, whatever their count), else None.
    header_line : int or None
        1-based line of those names.

    Returns
    -------
    (int, str) or None
        The line to name and the reason, or None when nothing points to a
        decimal comma.
    """
    if not rows or any("." in text or '"' in text for _, text, _ in rows):
        return None  # a point settles the decimal mark; quoting would have kept '1,015' whole
    counts = [len(f) for _, _, f in rows]
    lo, hi = min(counts), max(counts)
    if hi < 2:
        return None
    if lo != hi:
        m = len(header) if header is not None and len(header) <= lo else lo
        if all(len(f) == m or pairs_into(f, m) for _, _, f in rows):
            first = counts[0]
            line, text, f = next(r for r in rows if len(r[2]) != first)
            return line, (f"{_CLASH}: line {rows[0][0]} has {first} fields and this row "
                          f"{len(f)} ('{text.strip()}'). {FIX}")
        return None
    k = hi
    if k > _MAX_FIELDS:
        return None
    fields = [f for _, _, f in rows]
    ok = [p for p in range(k - 1)
          if all(_INT.match(f[p]) and _FRAC.match(f[p + 1]) for f in fields)]
    if header is not None and len(header) < k:
        m = len(header)
        good = [p for p in ok if _fraction_like([f[p + 1] for f in fields])]
        chosen: list[int] = []
        for p in good:  # the most non-overlapping pairs: leftmost first
            if not chosen or p >= chosen[-1] + 2:
                chosen.append(p)
        if k <= 2 * m and len(chosen) >= k - m:
            line, text, _ = rows[0]
            return line, (f"{_CLASH}: the header on line {header_line} names {m} "
                          f"column{'s' if m != 1 else ''} but the rows have {k} fields "
                          f"('{text.strip()}'). {FIX}")
        return None
    if header is not None:
        return None  # a name for every field settles it
    for p in ok:
        ints = [f[p] for f in fields]
        fracs = [f[p + 1] for f in fields]
        if (any(_PADDED.match(v) for v in ints) or len({len(v) for v in fracs}) != 1
                or len(fracs[0]) < 2 or not any(v[0] == "0" for v in fracs)):
            continue
        line, text, f = next(r for r in rows if r[2][p + 1][0] == "0")
        return line, (f"{_CLASH}: field {p + 2} ('{f[p + 1]}') has a leading zero like the "
                      f"digits after a decimal comma, and there is no header to say how many "
                      f"columns there are ('{text.strip()}'). {FIX}")
    return None


def quoted_clash(rows: list[tuple[int, str, list[str]]]) -> tuple[int, str] | None:
    """Refuse quoted ``"1,015"`` values that could be a thousands separator.

    Parameters
    ----------
    rows : list of (int, str, list of str)
        1-based line, text and fields (quotes honoured) of each data row of
        a ',' separated, decimal-comma file.

    Returns
    -------
    (int, str) or None
        The line to name and the reason, or None when some value settles
        the comma as a decimal mark (``"0,5"``, ``"1,0153"``, ``"2,5E-3"``).
    """
    commas = [(line, text, v) for line, text, f in rows for v in f if "," in v]
    if not commas or not all(_THOUSANDS.match(v) for _, _, v in commas):
        return None
    line, text, v = commas[0]
    return line, (f"the quoted values such as '{v}' can be read with a decimal comma or with "
                  f"a comma between thousands, and no value in the file settles which "
                  f"('{text.strip()}'). In the export settings of the scope or logger, choose "
                  f"a point as the decimal mark and no thousands separator, or a semicolon or "
                  f"a tab as the field separator, and export the capture again")


def decimal_comma_clash(lines: list[tuple[int, str]], start: int, decimal: str, whole: bool,
                        header_names: Callable[[str, int], list[str] | None]
                        ) -> tuple[int, str] | None:
    """Run the checks on the data block the sniff found in a ',' separated file.

    Parameters
    ----------
    lines : list of (int, str)
        Byte offset and text of each line of the head of the file.
    start : int
        Index in ``lines`` of the first data row the sniff found.
    decimal : str
        The decimal mark found: ``"."``, or ``","`` for quoted values.
    whole : bool
        True when ``lines`` reach the end of the file.
    header_names : callable
        ``header_names(text, n)``: the ``n`` column names on a line, or None
        when it is not a row of names.

    Returns
    -------
    (int, str) or None
        1-based line and reason for refusing the file, or None.
    """
    s0 = start  # rows of numbers just above the block, whatever their field count
    while s0 > 0 and row_kind(lines[s0 - 1][1], ",", decimal)[0] != "text":
        s0 -= 1
    rows = []
    for i in range(s0, len(lines)):
        kind, k, _ = row_kind(lines[i][1], ",", decimal)
        if kind == "text":
            break
        if kind == "numeric":
            rows.append((i + 1, lines[i][1], split_row(lines[i][1], ",")[:k]))
    if whole and len(rows) > 1 and len(rows[-1][2]) < len(rows[-2][2]):
        rows.pop()  # a truncated last line
    if decimal == ",":
        return quoted_clash(rows)
    above = next((i for i in range(s0 - 1, -1, -1) if lines[i][1].strip()), None)
    header = None
    if above is not None:
        names = split_row(lines[above][1], ",")
        while len(names) > 1 and not names[-1]:
            names.pop()
        header = header_names(lines[above][1], len(names))
    return unquoted_clash(rows, header, None if above is None else above + 1)
