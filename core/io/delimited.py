"""Delimited text captures: CSV, TSV, semicolon and white-space columns.

Layout accepted, top to bottom::

    [preamble]  metadata lines: "key,value", "key: value", "# comment", ...
    [header]    one row of column names, optionally followed by a row of units
    data        rows of numbers, one sample per row, a fixed number of fields

How the layout is found (the *sniff*, on the first 1000 lines): every candidate
dialect (comma, semicolon, tab or runs of white space; decimal point, or
decimal comma where the delimiter is not a comma) splits the lines, and the
data block is the first run of at least 8 consecutive rows of numbers with the
same field count. The dialect that explains the most rows (minus the rows it
cannot explain) wins; ties go against a comma dialect whose fields look like
"0,05" split in two (a decimal comma), then to the one whose header has a name
for every field, then to more fields, then to the order above. The non-blank
line just before the data is the header when it splits into the same number
of fields and no name is a number or a ``key: value`` pair; a row of units
under a row of names is merged into it. Lines above are the preamble.

Known ambiguity: a single column of decimal-comma numbers with no header and
no fraction starting with 0 reads as two integer columns; a header row
settles it.

Reading: the data bytes are memory-mapped (read-only) and parsed in blocks of
a few MiB, by ``pyarrow.csv`` for single-character delimiters and by pandas'
C parser for runs of white space, with progress and a cancel check between
blocks. A block either engine refuses (or where pandas fills a short row with
NaN) is parsed again line by line, which either reads it (blank lines with
spaces, a stray trailing delimiter) or says exactly which line and field is
wrong. Line numbers in messages are 1-based physical lines of the file.

A truncated last line (fewer fields than the others, or, with no line end
after it, a number cut short) is dropped with a warning.
"""

from __future__ import annotations

import bisect
import csv
import mmap
import os
import re
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from ..capture import Capture
from ..errors import (CaptureFormatError, EmptyCaptureError, RaggedRowsError,
                      TrueslopeWarning)
from ._assemble import Column, assemble, column_units
from ..units import lookup_column_unit

HEAD_BYTES = 64 * 1024
MAX_HEAD_BYTES = 1024 * 1024
#: Bytes of data parsed per block; progress and cancel are checked between blocks.
BLOCK_BYTES = 4 * 1024 * 1024
MIN_BLOCK_BYTES = 64 * 1024
#: Lines the layout is guessed from (more only when no data is found in them).
SNIFF_LINES = 1000
#: Consecutive numeric rows that mark the start of the data.
MIN_RUN = 8

_NUM_POINT = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$")
_NUM_COMMA = re.compile(r"[+-]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][+-]?\d+)?$")
_NONFINITE = re.compile(r"[+-]?(?:nan|inf|infinity)$", re.IGNORECASE)
_UNIT_TOKEN = re.compile(r"^[\(\[\{]?\s*([^\(\)\[\]\{\}]*?)\s*[\)\]\}]?$")

# (delimiter, decimal); None is a run of white space. Order breaks ties.
_CANDIDATES: tuple[tuple[str | None, str], ...] = (
    (",", "."), (";", "."), ("\t", "."), (None, "."), (";", ","), ("\t", ","), (None, ","))
_DELIM_WORDS = {",": "',' separated", ";": "';' separated", "\t": "tab separated",
                None: "space separated"}


@dataclass(frozen=True)
class Dialect:
    """How the data rows are written."""

    delimiter: str | None
    decimal: str
    fields: int
    trailing: bool = False  # rows end with a delimiter (one empty field more)


@dataclass
class _Sniff:
    dialect: Dialect
    encoding: str
    data_line: int            # 1-based line of the first data row
    data_offset: int          # byte offset of that row
    header: list[str] | None
    header_line: int | None
    units_row: bool
    metadata: dict[str, str]
    preamble_lines: int
    warnings: list[TrueslopeWarning] = field(default_factory=list)


def _is_number(f: str, decimal: str) -> bool:
    return bool((_NUM_COMMA if decimal == "," else _NUM_POINT).match(f) or _NONFINITE.match(f))


def _split(line: str, delimiter: str | None) -> list[str]:
    if delimiter is None:
        return line.split()
    parts = [p.strip() for p in line.split(delimiter)]
    return [p[1:-1].strip() if len(p) >= 2 and p[0] == p[-1] == '"' else p for p in parts]


def _fields(line: str, delimiter: str | None, k: int) -> list[str]:
    """Fields of a data row expected to hold ``k``; one trailing empty field
    more (a row ending in the delimiter) is dropped."""
    parts = _split(line, delimiter)
    if delimiter is not None and len(parts) == k + 1 and parts[-1] == "":
        parts.pop()
    return parts


def _kind(line: str, d: str | None, decimal: str) -> tuple[str, int, bool]:
    """("blank" | "numeric" | "text", field count, row ends in the delimiter).

    A row ending in the delimiter counts one field less, so that rows with and
    without a trailing delimiter belong to the same block of data.
    """
    if not line.strip():
        return "blank", 0, False
    parts = _split(line, d)
    trailing = d is not None and len(parts) > 1 and parts[-1] == ""
    count = len(parts) - (1 if trailing else 0)
    seen = False
    for p in parts:
        if p == "":
            continue
        if not _is_number(p, decimal):
            return "text", count, trailing
        seen = True
    return ("numeric" if seen else "blank"), count, trailing


def _split_header(line: str, d: str | None, k: int) -> list[str] | None:
    """Header names, or None when the line cannot give exactly ``k`` names."""
    text = line.strip()
    if d is not None:
        try:
            parts = next(csv.reader([text], delimiter=d, skipinitialspace=True))
        except (csv.Error, StopIteration):
            parts = text.split(d)
        parts = [p.strip() for p in parts]
        while len(parts) > k and parts and parts[-1] == "":
            parts.pop()
        return parts if len(parts) == k else None
    tries = [text.split()]
    merged: list[str] = []
    for t in text.split():
        if merged and re.fullmatch(r"[\(\[\{][^\)\]\}]*[\)\]\}]", t):
            merged[-1] += " " + t
        else:
            merged.append(t)
    tries.append(merged)
    tries.append([t for t in re.split(r"\t|\s{2,}", text) if t])
    if '"' in text:
        try:
            tries.append([t for t in next(csv.reader([text], delimiter=" ", skipinitialspace=True)) if t])
        except (csv.Error, StopIteration):
            pass
    for parts in tries:
        if len(parts) == k:
            return [p.strip().strip('"') for p in parts]
    return None


def _header_names(line: str, d: str | None, dec: str, k: int) -> list[str] | None:
    """The ``k`` column names on this line, or None when it is not a header.

    Not a header: a line that does not split into ``k`` names, a name that is
    a number, a ``key: value`` or ``key = value`` pair (preamble), or, for a
    single column, a comment line. A comment marker before a row of several
    names is allowed (``# time, ch1`` as numpy.savetxt writes a header).
    """
    text = line.strip()
    for marker in _COMMENT:
        if text.startswith(marker):
            if k == 1:
                return None
            text = text[len(marker):].strip()
            break
    names = _split_header(text, d, k)
    if names is None:
        return None
    for n in names:
        if n and (_is_number(n, dec) or re.match(r"^[^:=]*[^\W\d_][^:=]*\s*[:=]\s*\S", n)):
            return None
    return names


def _is_unit_row(names: list[str]) -> bool:
    seen = False
    for n in names:
        if not n:
            continue
        m = _UNIT_TOKEN.match(n)
        if not m or lookup_column_unit(m.group(1)) is None:
            return False
        seen = True
    return seen


_COMMENT = ("#", "//", "%", "!", "*")


def _key_value(line: str, d: str | None) -> tuple[str, str] | None:
    text = line.strip()
    for marker in _COMMENT + ((";",) if d != ";" else ()):
        if text.startswith(marker):
            text = text[len(marker):].strip()
            break
    if not re.search(r"\w", text):
        return None
    seps = [s for s in ((d,) if d else ()) + (":", "=", "\t") if s]
    best = None
    for s in seps:
        i = text.find(s)
        if i > 0 and re.search(r"[^\W\d_]", text[:i]) and (best is None or i < best[0]):
            best = (i, s)
    if best is None and d is None:
        m = re.match(r"^(.*?[^\W\d_].*?)\s+([+-]?\.?\d[\d.,eE+-]*\s*[^\W\d_/%]*[/%]?\w*)$", text)
        if m:
            return m.group(1).strip(), m.group(2).strip()
    if best is None:
        return text, ""
    i, s = best
    key = text[:i].strip().strip('"').strip()
    value = text[i + len(s):].strip()
    if d:
        value = value.rstrip(d + " ").strip()
    return key, value.strip('"').strip()


def _decode_head(head: bytes, path: str) -> tuple[str, int]:
    """Encoding of the text and the length of a byte-order mark."""
    if head[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise CaptureFormatError(
            "the file is UTF-16 text; save it as UTF-8 (or plain ASCII) text", path)
    bom = 3 if head.startswith(b"\xef\xbb\xbf") else 0
    body = head[bom:]
    if b"\x00" in body:
        raise CaptureFormatError(
            "binary data, not a capture: expected delimited text, a NumPy .npy file or a WAV file",
            path)
    controls = sum(1 for b in body[:8192] if b < 32 and b not in (9, 10, 12, 13))
    if controls > max(2, 0.01 * min(len(body), 8192)):
        raise CaptureFormatError(
            "binary data, not a capture: expected delimited text, a NumPy .npy file or a WAV file",
            path)
    if b"\n" not in body and body.count(b"\r") > 1:
        raise CaptureFormatError(
            "lines end in a bare carriage return (old Mac style); expected LF or CRLF line "
            "ends: convert the file, e.g. by opening and saving it in a text editor", path)
    cut = body.rfind(b"\n")
    sample = body if cut < 0 else body[:cut]
    try:
        sample.decode("utf-8")
        return "utf-8", bom
    except UnicodeDecodeError:
        pass
    high = sum(1 for b in sample[:8192] if b >= 128)
    if high > 0.3 * max(1, min(len(sample), 8192)):
        raise CaptureFormatError(
            "binary data, not a capture: expected delimited text, a NumPy .npy file or a WAV file",
            path)
    return "cp1252", bom


def _head_lines(head: bytes, complete: bool, encoding: str, bom: int) -> list[tuple[int, str]]:
    """(byte offset, text) of each complete line of the head, BOM removed."""
    out = []
    pos = bom
    chunks = head[bom:].split(b"\n")
    if not complete:
        chunks = chunks[:-1]
    for raw in chunks:
        out.append((pos, raw.decode(encoding, errors="replace").rstrip("\r")))
        pos += len(raw) + 1
    return out


def _sniff(lines: list[tuple[int, str]], encoding: str, whole: bool) -> _Sniff | None:
    """Dialect, data start, header and preamble of the head lines; None if no data."""
    best = None
    for prio, (d, dec) in enumerate(_CANDIDATES):
        kinds = [_kind(text, d, dec) for _, text in lines]
        runs: list[tuple[int, int, int]] = []  # (start index, count, fields)
        cur: list[int] | None = None
        for i, (kind, k, _) in enumerate(kinds):
            if kind == "blank":
                continue
            if kind == "numeric" and cur is not None and cur[2] == k:
                cur[1] += 1
                continue
            if cur is not None:
                runs.append(tuple(cur))  # type: ignore[arg-type]
                cur = None
            if kind == "numeric":
                cur = [i, 1, k]
        if cur is not None:
            runs.append(tuple(cur))  # type: ignore[arg-type]
        if not runs:
            continue
        long_runs = [r for r in runs if r[1] >= MIN_RUN]
        start, _, k = long_runs[0] if long_runs else max(runs, key=lambda r: (r[1], r[0]))
        in_run = [kinds[i] for i in range(start, len(kinds)) if kinds[i][0] == "numeric"
                  and kinds[i][1] == k]
        trailing = sum(1 for kd in in_run if kd[2]) > len(in_run) // 2
        header_idx = next((i for i in range(start - 1, -1, -1) if kinds[i][0] != "blank"), None)
        widened = False
        if trailing and header_idx is not None:
            # "1," under a header "CH1,CH2" is an empty last column, not a trailing delimiter.
            names = _header_names(lines[header_idx][1], d, dec, k + 1)
            if names is not None and names[-1]:
                trailing, k, widened = False, k + 1, True

        def fits(kd: tuple[str, int, bool]) -> bool:
            return kd[0] == "numeric" and (kd[1] == k or (widened and kd[1] == k - 1))

        after = [kinds[i] for i in range(start, len(kinds)) if kinds[i][0] != "blank"]
        if whole and after and not fits(after[-1]) and after[-1][1] < k:
            after = after[:-1]  # a truncated last line is not evidence against the dialect
        coverage = sum(1 for kd in after if fits(kd))
        bad = len(after) - coverage
        # "0,05" read as two integers "0" and "05" hints at a decimal comma.
        suspicious = 0
        if d == "," and dec == ".":
            for i in range(start, min(len(lines), start + 50)):
                if re.search(r"(?:^|,)\s*0\d", lines[i][1]):
                    suspicious = 1
                    break
        header_match = 0
        if header_idx is not None and kinds[header_idx][0] == "text":
            if _header_names(lines[header_idx][1], d, dec, k) is not None:
                header_match = 1
        score = (coverage - bad, -suspicious, header_match, k, -prio)
        if best is None or score > best[0]:
            best = (score, d, dec, k, start, header_idx, trailing)
    if best is None:
        return None
    _, d, dec, k, start, header_idx, trailing = best
    dialect = Dialect(d, dec, k, trailing)
    warnings: list[TrueslopeWarning] = []
    header = None
    header_line = None
    units_row = False
    first_meta = header_idx  # last preamble line (index), inclusive
    if header_idx is not None:
        text = lines[header_idx][1]
        names = _header_names(text, d, dec, k)
        kind = _kind(text, d, dec)[0]
        if names is not None and kind == "text":
            header, header_line = names, header_idx + 1
            first_meta = header_idx - 1
            above = next((i for i in range(header_idx - 1, -1, -1) if lines[i][1].strip()), None)
            if above is not None and _is_unit_row(names):
                top = _header_names(lines[above][1], d, dec, k)
                if top is not None and not _is_unit_row(top):
                    # Names on one row, units on the next: "Time,CH1" then "s,mV".
                    header = [f"{n} [{u.strip('()[]{} ')}]" if u else n for n, u in zip(top, names)]
                    header_line, units_row, first_meta = above + 1, True, above - 1
        elif kind == "text":
            parts = [p for p in _split(text, d) if p]
            if len(parts) > 2 and not any(_is_number(p, dec) for p in parts):
                warnings.append(TrueslopeWarning(
                    "header-mismatch",
                    f"line {header_idx + 1} looks like a row of column names but has "
                    f"{len(parts)} names for {k} columns of numbers; it was kept as metadata "
                    f"and the columns were numbered"))
    metadata: dict[str, str] = {}
    count = 0
    last = -1 if first_meta is None else first_meta
    for i in range(0, last + 1):
        text = lines[i][1]
        if not text.strip():
            continue
        kv = _key_value(text, d)
        if kv is None:
            continue
        count += 1
        key, value = kv
        key = key or f"line {i + 1}"
        if key in metadata:
            key = f"{key} (line {i + 1})"
        metadata[key] = value
    return _Sniff(dialect=dialect, encoding=encoding, data_line=start + 1,
                  data_offset=lines[start][0], header=header, header_line=header_line,
                  units_row=units_row, metadata=metadata, preamble_lines=count,
                  warnings=warnings)


def _to_float(text: str, decimal: str) -> float | None:
    if text == "":
        return float("nan")
    if decimal == ",":
        if "." in text or not (_NUM_COMMA.match(text) or _NONFINITE.match(text)):
            return None
        text = text.replace(",", ".")
    elif not (_NUM_POINT.match(text) or _NONFINITE.match(text)):
        return None
    return float(text)


class _Blocks:
    """The data bytes of a memory-mapped file, the blocks they are read in,
    and the row-to-line mapping messages need."""

    def __init__(self, mm: mmap.mmap, start: int, end: int, first_line: int,
                 encoding: str, dialect: Dialect, path: str) -> None:
        self.mm, self.start, self.end = mm, start, end
        self.first_line, self.encoding, self.dialect, self.path = first_line, encoding, dialect, path
        self.bounds: list[tuple[int, int]] = []
        # About 16 blocks for a mid-sized file, so progress moves; big blocks
        # for a big file, so the parser's per-call cost stays small.
        step = min(BLOCK_BYTES, max(MIN_BLOCK_BYTES, (end - start) // 16))
        a = start
        while a < end:
            b = min(end, a + step)
            if b < end:
                nl = mm.find(b"\n", b, end)
                b = end if nl < 0 else nl + 1
            self.bounds.append((a, b))
            a = b
        self.first_rows: list[int] = []
        self._line_cache: dict[int, int] = {}

    def count_lines(self, a: int, b: int) -> int:
        n, step = 0, 16 * 1024 * 1024
        for x in range(a, b, step):
            n += self.mm[x:min(b, x + step)].count(b"\n")
        return n

    def line_at(self, offset: int) -> int:
        """1-based line number of the line starting at byte ``offset`` of the data."""
        if offset not in self._line_cache:
            self._line_cache[offset] = self.first_line + self.count_lines(self.start, offset)
        return self._line_cache[offset]

    def where(self, row: int) -> tuple[int | None, str]:
        i = max(0, bisect.bisect_right(self.first_rows, row) - 1)
        a, b = self.bounds[i]
        line = self.line_at(a)
        left = row - self.first_rows[i]
        for raw in self.mm[a:b].split(b"\n"):
            if raw.strip():
                if left == 0:
                    return line, f"line {line}"
                left -= 1
            line += 1
        return None, f"data row {row + 1}"


def _parse_lines(blk: _Blocks, a: int, b: int, cancel: Callable[[], None]) -> list[np.ndarray]:
    """Line-by-line reading of bytes [a, b): exact, slower, names the bad line."""
    d, dec, k = blk.dialect.delimiter, blk.dialect.decimal, blk.dialect.fields
    cols: list[list[float]] = [[] for _ in range(k)]
    line = blk.line_at(a)
    for i, raw in enumerate(blk.mm[a:b].split(b"\n")):
        if i and i % 20000 == 0:
            cancel()
        text = raw.decode(blk.encoding, errors="replace").strip()
        if text:
            parts = _fields(text, d, k)
            if len(parts) != k:
                raise RaggedRowsError(
                    f"the row has {len(parts)} field{'s' if len(parts) != 1 else ''}, expected "
                    f"{k} like the first data row (line {blk.first_line})", blk.path, line)
            for j, p in enumerate(parts):
                v = _to_float(p, dec)
                if v is None:
                    sep = "decimal comma" if dec == "," else "decimal point"
                    raise CaptureFormatError(
                        f"{p!r} is not a number; expected {k} numbers per row ({sep})",
                        blk.path, line, j + 1)
                cols[j].append(v)
        line += 1
    return [np.array(c, dtype=np.float64) for c in cols]


def _arrow_reader(dialect: Dialect):
    import pyarrow as pa
    import pyarrow.csv as pacsv
    k = dialect.fields
    names = [f"f{i}" for i in range(k + (1 if dialect.trailing else 0))]
    ro = pacsv.ReadOptions(column_names=names, use_threads=True, block_size=1 << 20)
    po = pacsv.ParseOptions(delimiter=dialect.delimiter, ignore_empty_lines=True)
    co = pacsv.ConvertOptions(column_types={n: pa.float64() for n in names[:k]},
                              include_columns=names[:k], null_values=[""],
                              strings_can_be_null=False, quoted_strings_can_be_null=True,
                              decimal_point=dialect.decimal)

    def read(view: memoryview) -> list[np.ndarray]:
        table = pacsv.read_csv(pa.BufferReader(pa.py_buffer(view)), read_options=ro,
                               parse_options=po, convert_options=co)
        out = [table.column(i).to_numpy() for i in range(k)]
        del table
        return out

    return read, (pa.ArrowException,)


def _pandas_reader(dialect: Dialect):
    import io

    import pandas as pd
    k = dialect.fields

    def read(view: memoryview) -> list[np.ndarray]:
        df = pd.read_csv(io.BytesIO(view), sep=r"\s+", header=None, names=list(range(k)),
                         index_col=False, dtype=np.float64, decimal=dialect.decimal,
                         engine="c", skip_blank_lines=True)
        out = [df[i].to_numpy(dtype=np.float64, copy=True) for i in range(k)]
        if any(np.isnan(c).any() for c in out):
            # pandas pads a short row with NaN: let the exact reader decide.
            raise ValueError("NaN in block")
        return out

    return read, (ValueError, pd.errors.ParserError, pd.errors.EmptyDataError)


def _data_end(blk_mm: mmap.mmap, size: int, sniff: _Sniff, path: str
              ) -> tuple[int, TrueslopeWarning | None, int | None]:
    """End of the data bytes, and the truncated last line dropped (warning, offset)."""
    d, dec, k = sniff.dialect.delimiter, sniff.dialect.decimal, sniff.dialect.fields
    start = sniff.data_offset
    e = size
    while e > start:
        a = max(start, e - 65536)
        stripped = blk_mm[a:e].rstrip()
        if stripped:
            e = a + len(stripped)
            break
        e = a
    if e <= start:
        return start, None, None
    ls = blk_mm.rfind(b"\n", start, e) + 1 or start
    if ls <= start:
        return e, None, None
    has_eol = blk_mm.find(b"\n", e, size) >= 0
    text = blk_mm[ls:e].decode(sniff.encoding, errors="replace").strip()
    parts = _fields(text, d, k)
    reason = None
    if len(parts) < k:
        reason = f"it has {len(parts)} of the {k} fields"
    elif not has_eol and len(parts) == k:
        bad = next((p for p in parts if p and _to_float(p, dec) is None), None)
        if bad is not None:
            reason = f"its field {bad!r} is not a complete number"
        else:
            prev: list[list[str]] = []
            pe = ls - 1
            while len(prev) < 8 and pe > start:
                ps = blk_mm.rfind(b"\n", start, pe) + 1 or start
                t = blk_mm[ps:pe].decode(sniff.encoding, errors="replace").strip()
                if t:
                    f = _fields(t, d, k)
                    if len(f) == k:
                        prev.append(f)
                pe = ps - 1
            last = parts[-1]
            if prev and len(last) < min(len(p[-1]) for p in prev):
                reason = (f"it has no line end and its last number {last!r} is shorter than "
                          f"the same column on the lines before (cut short)")
    if reason is None:
        return e, None, None
    return ls, TrueslopeWarning("truncated-last-line", reason), ls


def read_delimited(path: str, *, sample_interval_s: float | None = None,
                   progress: Callable[[float], None] = lambda f: None,
                   cancel: Callable[[], None] = lambda: None) -> Capture:
    """Read a delimited text capture (see the module docstring for the layout).

    Parameters
    ----------
    path : str
        The file; opened for reading only (and memory-mapped read-only).
    sample_interval_s : float, optional
        Seconds per sample for files without a time column; overrides an
        interval found in the preamble.
    progress : callable
        Called with the fraction done, 0 to 1.
    cancel : callable
        Raises :class:`~trueslope.core.errors.Cancelled` to stop.

    Returns
    -------
    Capture

    Raises
    ------
    EmptyCaptureError, CaptureFormatError, RaggedRowsError, UnknownUnitError,
    TimeAxisError, NonFiniteDataError, TooFewSamplesError, NoSampleIntervalError
    """
    with open(path, "rb") as f:
        size = os.fstat(f.fileno()).st_size
        if size == 0:
            raise EmptyCaptureError("the file is empty (0 bytes)", path)
        head = f.read(HEAD_BYTES)
        if not head.strip():
            raise EmptyCaptureError("the file holds only blank lines", path)
        encoding, bom = _decode_head(head, path)
        sniff = None
        while True:
            whole = len(head) >= size
            lines = _head_lines(head, whole, encoding, bom)
            sniff = _sniff(lines[:SNIFF_LINES], encoding, whole and len(lines) <= SNIFF_LINES)
            if sniff is None and len(lines) > SNIFF_LINES:
                sniff = _sniff(lines, encoding, whole)
            if (sniff is not None and sniff.data_line < len(lines) - MIN_RUN) or whole \
                    or len(head) >= MAX_HEAD_BYTES:
                break
            head += f.read(MAX_HEAD_BYTES - len(head))
        if sniff is None:
            if not lines:
                raise CaptureFormatError(
                    f"no line end in the first {len(head) // 1024} KiB: this is not a text "
                    f"capture of rows of numbers", path)
            raise EmptyCaptureError(
                f"no rows of numbers found in the first {len(lines)} lines; expected rows of "
                f"numbers separated by commas, semicolons, tabs or spaces, after an optional "
                f"preamble and a header row", path)
        progress(0.02)
        cancel()
        dia = sniff.dialect
        units = column_units(sniff.header or [""] * dia.fields, path, sniff.header_line)
        mm = mmap.mmap(f.fileno(), 0, access=mmap.ACCESS_READ)
        if hasattr(mm, "madvise") and hasattr(mmap, "MADV_SEQUENTIAL"):
            mm.madvise(mmap.MADV_SEQUENTIAL)  # read once, front to back: let the OS read ahead
        try:
            columns, warnings, blk = _read_data(mm, size, sniff, path, progress, cancel)
            for c, (_, _, scale) in zip(columns, units):
                if scale != 1.0:
                    c *= scale
            cols = [Column(values=v, name=name, quantity=q, number=j + 1)
                    for j, (v, (name, q, _)) in enumerate(zip(columns, units))]
            progress(0.97)
            # Still inside: messages about rows read the map to find their line.
            return assemble(cols, path=path, locate=blk, layout=_layout(sniff),
                            metadata=sniff.metadata, warnings=sniff.warnings + warnings,
                            sample_interval_s=sample_interval_s, decimal=dia.decimal,
                            cancel=cancel)
        finally:
            try:
                mm.close()
            except BufferError:  # a view still alive: the collector closes it
                pass


def _read_data(mm: mmap.mmap, size: int, sniff: _Sniff, path: str,
               progress: Callable[[float], None], cancel: Callable[[], None]):
    end, trunc, trunc_at = _data_end(mm, size, sniff, path)
    blk = _Blocks(mm, sniff.data_offset, end, sniff.data_line, sniff.encoding, sniff.dialect, path)
    warnings: list[TrueslopeWarning] = []
    if trunc is not None and trunc_at is not None:
        line = blk.line_at(trunc_at) if trunc_at > blk.start else blk.first_line
        warnings.append(TrueslopeWarning(
            trunc.code, f"line {line} (the last line) looks truncated: {trunc.message}; "
                        f"it was left out"))
    dia = sniff.dialect
    try:
        if dia.delimiter is None:
            engine, engine_errors = _pandas_reader(dia)
        else:
            engine, engine_errors = _arrow_reader(dia)
    except ImportError:
        engine, engine_errors = None, ()
    parts: list[list[np.ndarray]] = []
    total = max(1, end - blk.start)
    view = memoryview(mm)
    try:
        rows = 0
        for a, b in blk.bounds:
            cancel()
            got = None
            if engine is not None:
                try:
                    got = engine(view[a:b])
                except engine_errors:
                    got = None
            if got is None:
                got = _parse_lines(blk, a, b, cancel)
            blk.first_rows.append(rows)
            rows += got[0].shape[0] if got else 0
            parts.append(got)
            progress(0.02 + 0.93 * (b - blk.start) / total)
    finally:
        view.release()
    if not parts:
        columns = [np.empty(0) for _ in range(dia.fields)]
    elif len(parts) == 1:
        # Arrow's zero-copy views are read-only; the capture owns writable arrays.
        columns = [c if c.flags.writeable else c.copy() for c in parts[0]]
    else:
        columns = []
        for j in range(dia.fields):
            columns.append(np.concatenate([p[j] for p in parts]))
            for p in parts:
                p[j] = None  # type: ignore[call-overload]  # free block memory as we go
    if rows == 0:
        what = f" a header on line {sniff.header_line} but" if sniff.header_line else ""
        raise EmptyCaptureError(f"found{what} no rows of numbers to read", path)
    return columns, warnings, blk


def _layout(s: _Sniff) -> str:
    d = s.dialect
    parts = ["delimited text", "one column" if d.fields == 1 else _DELIM_WORDS[d.delimiter]]
    if d.decimal == ",":
        parts.append("decimal comma")
    if s.header is None:
        parts.append("no header")
    else:
        parts.append("header with a units row" if s.units_row else "header")
    if s.preamble_lines:
        parts.append(f"{s.preamble_lines} preamble line{'s' if s.preamble_lines != 1 else ''}")
    return ", ".join(parts)
