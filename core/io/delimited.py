"""Delimited text captures: CSV, TSV, semicolon and white-space columns.

The layout (preamble, header, units row, delimiter, decimal mark) is told
from the head of the file by :mod:`.dialect`; this module reads the data rows
it points at.

Reading: the data bytes are memory-mapped (read-only) and parsed in blocks of
a few MiB, by ``pyarrow.csv`` for single-character delimiters and by pandas'
C parser for runs of white space, with progress and a cancel check between
blocks. A block either engine refuses (or where pandas fills a short row with
NaN) is parsed again line by line, which either reads it (blank lines with
spaces, a stray trailing delimiter) or says exactly which line and field is
wrong. Line numbers in messages are 1-based physical lines of the file.

A truncated last line (fewer fields than the others, or, with no line end
after it, a number cut short) is dropped with a warning.

Bounds, so that any file is answered quickly and in bounded memory: a line
longer than ``MAX_LINE_BYTES`` is refused wherever it is met (in the head
before the sniff splits anything, in a block before it is split), and a row of
more than ``MAX_COLUMNS`` numbers is refused by the sniff.
"""

from __future__ import annotations

import bisect
import mmap
import os
from typing import Callable

import numpy as np

from ..capture import Capture
from ..errors import (CaptureFormatError, EmptyCaptureError, RaggedRowsError,
                      TrueslopeWarning)
from ._assemble import Column, assemble, column_units
from ._decimal_comma import row_clash
from ._fields import MAX_LINE_BYTES, long_line, row_fields, to_float
from ._files import open_regular
from .dialect import (MIN_RUN, SNIFF_LINES, Dialect, Sniff, decode_head, describe_layout,
                      head_lines, sniff_lines)

#: Lines looked at for data after a preamble longer than the first sniff's lines.
LONG_PREAMBLE_LINES = 5000
HEAD_BYTES = 64 * 1024
MAX_HEAD_BYTES = 1024 * 1024
#: Bytes of data parsed per block; progress and cancel are checked between blocks.
BLOCK_BYTES = 64 * 1024 * 1024
MIN_BLOCK_BYTES = 64 * 1024
#: Blocks a file is read in (fewer for a small one, more past BLOCK_BYTES each); a file
#: parsed on the thread pool (THREADED_PARSE_BYTES) in fewer, so each call has work for it.
BLOCKS_PER_FILE = 16
BIG_FILE_BLOCKS = 4


class _Blocks:
    """The data bytes of a memory-mapped file, the blocks they are read in,
    and the row-to-line mapping messages need."""

    def __init__(self, mm: mmap.mmap, start: int, end: int, first_line: int,
                 encoding: str, dialect: Dialect, path: str) -> None:
        self.mm, self.start, self.end = mm, start, end
        self.first_line, self.encoding, self.dialect, self.path = first_line, encoding, dialect, path
        self.bounds: list[tuple[int, int]] = []
        # A few blocks for a mid-sized file, so progress moves and cancel is heard; big
        # blocks, because each call of the parser costs a start-up and a copy.
        per = BLOCKS_PER_FILE if end - start < THREADED_PARSE_BYTES else BIG_FILE_BLOCKS
        step = min(BLOCK_BYTES, max(MIN_BLOCK_BYTES, (end - start) // per))
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
        if len(raw) > MAX_LINE_BYTES:
            raise CaptureFormatError(long_line(len(raw), True, raw[:MAX_LINE_BYTES]),
                                     blk.path, line)
        text = raw.decode(blk.encoding, errors="replace").strip()
        if text:
            parts = row_fields(text, d, k)
            if len(parts) != k:
                clash = row_clash(parts, k) if (d, dec) == (",", ".") else None
                if clash is not None:
                    raise CaptureFormatError(clash, blk.path, line)
                raise RaggedRowsError(
                    f"the row has {len(parts)} field{'s' if len(parts) != 1 else ''}, expected "
                    f"{k} like the first data row (line {blk.first_line})", blk.path, line)
            for j, p in enumerate(parts):
                v = to_float(p, dec)
                if v is None:
                    sep = "decimal comma" if dec == "," else "decimal point"
                    raise CaptureFormatError(
                        f"{p!r} is not a number; expected {k} numbers per row ({sep})",
                        blk.path, line, j + 1)
                cols[j].append(v)
        line += 1
    return [np.array(c, dtype=np.float64) for c in cols]


#: Files at least this large are parsed on pyarrow's thread pool. Smaller ones are parsed
#: on the calling thread: the pool's threads, once started, can abort the process at its
#: exit (a native thread still running while the interpreter shuts down), and a small
#: file gains little from them.
THREADED_PARSE_BYTES = 64 * 1024 * 1024


def _arrow_reader(dialect: Dialect, threads: bool = False):
    import pyarrow as pa
    import pyarrow.csv as pacsv
    k = dialect.fields
    names = [f"f{i}" for i in range(k + (1 if dialect.trailing else 0))]
    ro = pacsv.ReadOptions(column_names=names, use_threads=threads, block_size=1 << 20)
    po = pacsv.ParseOptions(delimiter=dialect.delimiter, ignore_empty_lines=True)
    co = pacsv.ConvertOptions(column_types={n: pa.float64() for n in names[:k]},
                              include_columns=names[:k], null_values=[""],
                              strings_can_be_null=False, quoted_strings_can_be_null=True,
                              decimal_point=dialect.decimal)

    def read(view: memoryview) -> list[list[np.ndarray]]:
        table = pacsv.read_csv(pa.BufferReader(pa.py_buffer(view)), read_options=ro,
                               parse_options=po, convert_options=co)
        # views of Arrow's buffers (they keep them alive): the caller copies them into the
        # capture's arrays at once, so the block's buffers are freed block by block
        return [_float_chunks(table.column(i)) for i in range(k)]

    return read, (pa.ArrowException,)


def _float_chunks(column) -> list[np.ndarray]:
    """A float64 Arrow column as numpy arrays, one per chunk, nulls as NaN.

    Read from the chunks' buffers: pyarrow's own ``to_numpy`` imports pandas, which
    costs more than reading a small capture."""
    out = []
    for chunk in column.chunks:
        n = len(chunk)
        validity, data = chunk.buffers()[:2]
        values = np.frombuffer(data, dtype=np.float64, count=n, offset=chunk.offset * 8)
        if chunk.null_count:
            bits = np.unpackbits(np.frombuffer(validity, dtype=np.uint8), bitorder="little")
            values = np.where(bits[chunk.offset:chunk.offset + n] == 0, np.nan, values)
        out.append(values)
    return out


class _Columns:
    """The capture's columns, filled block by block straight from the parser's pieces
    (one copy of every number). Room is set from the bytes per row of the first block
    (rows in a capture are alike in length), grown if a later block needs more, and the
    spare cut off at the end."""

    def __init__(self, fields: int, data_bytes: int) -> None:
        self.fields, self.data_bytes, self.rows, self.bytes_done = fields, data_bytes, 0, 0
        self.arrays = [np.empty(0) for _ in range(fields)]

    def append(self, pieces: list[list[np.ndarray]], block_bytes: int) -> None:
        n = sum(p.shape[0] for p in pieces[0]) if pieces else 0
        self.bytes_done += block_bytes
        need = self.rows + n
        if need > self.arrays[0].shape[0]:
            left = max(0, self.data_bytes - self.bytes_done)
            per_byte = need / max(1, self.bytes_done)
            self._grow(need + int(per_byte * left * 1.01) + 1024)
        for j in range(self.fields):
            at = self.rows
            for piece in pieces[j]:
                self.arrays[j][at:at + piece.shape[0]] = piece
                at += piece.shape[0]
        self.rows = need

    def _grow(self, size: int) -> None:
        for j, a in enumerate(self.arrays):
            if a.shape[0] == 0:
                self.arrays[j] = np.empty(size)
            else:
                a.resize(size, refcheck=False)  # in place where it can be (no other views)

    def finish(self) -> list[np.ndarray]:
        for a in self.arrays:
            if a.shape[0] != self.rows:
                a.resize(self.rows, refcheck=False)
        return self.arrays


def _pandas_reader(dialect: Dialect):
    import io

    import pandas as pd
    k = dialect.fields

    def read(view: memoryview) -> list[list[np.ndarray]]:
        df = pd.read_csv(io.BytesIO(view), sep=r"\s+", header=None, names=list(range(k)),
                         index_col=False, dtype=np.float64, decimal=dialect.decimal,
                         engine="c", skip_blank_lines=True)
        out = [df[i].to_numpy(dtype=np.float64, copy=True) for i in range(k)]
        if any(np.isnan(c).any() for c in out):
            # pandas pads a short row with NaN: let the exact reader decide.
            raise ValueError("NaN in block")
        return [[c] for c in out]

    return read, (ValueError, pd.errors.ParserError, pd.errors.EmptyDataError)


def _data_end(blk_mm: mmap.mmap, size: int, sniff: Sniff, path: str
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
    if e - ls > MAX_LINE_BYTES:
        return e, None, None  # not split here: the block reader refuses it, naming its line
    text = blk_mm[ls:e].decode(sniff.encoding, errors="replace").strip()
    parts = row_fields(text, d, k)
    reason = None
    if len(parts) < k:
        reason = f"it has {len(parts)} of the {k} fields"
    elif not has_eol and len(parts) == k:
        bad = next((p for p in parts if p and to_float(p, dec) is None), None)
        if bad is not None:
            reason = f"its field {bad!r} is not a complete number"
        else:
            prev: list[list[str]] = []
            pe = ls - 1
            while len(prev) < 8 and pe > start:
                ps = blk_mm.rfind(b"\n", start, pe) + 1 or start
                t = blk_mm[ps:pe].decode(sniff.encoding, errors="replace").strip()
                if t:
                    f = row_fields(t, d, k)
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


def _refuse_long_lines(head: bytes, whole: bool, path: str) -> None:
    """Refuse a line over ``MAX_LINE_BYTES`` in the head, before anything splits it."""
    a, line = 0, 1
    while True:
        nl = head.find(b"\n", a)
        end = len(head) if nl < 0 else nl
        if end - a > MAX_LINE_BYTES or (nl < 0 and not whole and end - a >= MAX_LINE_BYTES):
            raise CaptureFormatError(
                long_line(end - a, nl >= 0 or whole, head[a:a + MAX_LINE_BYTES]), path, line)
        if nl < 0:
            return
        a, line = nl + 1, line + 1


def read_delimited(path: str, *, sample_interval_s: float | None = None,
                   progress: Callable[[float], None] = lambda f: None,
                   cancel: Callable[[], None] = lambda: None) -> Capture:
    """Read a delimited text capture (the layouts accepted: :mod:`.dialect`).

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
    with open_regular(path) as f:
        size = os.fstat(f.fileno()).st_size
        if size == 0:
            raise EmptyCaptureError("the file is empty (0 bytes)", path)
        head = f.read(HEAD_BYTES)
        if not head.strip():
            raise EmptyCaptureError("the file holds only blank lines", path)
        encoding, bom = decode_head(head, path)
        sniff = None
        while True:
            whole = len(head) >= size
            _refuse_long_lines(head, whole, path)
            lines = head_lines(head, whole, encoding, bom)
            sniff = sniff_lines(lines[:SNIFF_LINES], encoding, whole and len(lines) <= SNIFF_LINES,
                                path)
            if sniff is None and len(lines) > SNIFF_LINES:
                # a preamble longer than the first sniff: look further, but boundedly (a
                # file of no numbers at all must be refused in well under a second)
                more = lines[:LONG_PREAMBLE_LINES]
                sniff = sniff_lines(more, encoding, whole and len(lines) <= LONG_PREAMBLE_LINES,
                                    path)
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
                f"no rows of numbers found in the first {min(len(lines), LONG_PREAMBLE_LINES)} "
                f"lines; expected rows of "
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
            cols = [Column(values=v, name=name, quantity=q, number=j + 1, scale=scale)
                    for j, (v, (name, q, scale)) in enumerate(zip(columns, units))]
            progress(0.97)
            # Still inside: messages about rows read the map to find their line.
            return assemble(cols, path=path, locate=blk, layout=describe_layout(sniff),
                            metadata=sniff.metadata, warnings=sniff.warnings + warnings,
                            sample_interval_s=sample_interval_s, decimal=dia.decimal,
                            cancel=cancel)
        finally:
            try:
                mm.close()
            except BufferError:  # a view still alive: the collector closes it
                pass


def _read_data(mm: mmap.mmap, size: int, sniff: Sniff, path: str,
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
            engine, engine_errors = _arrow_reader(dia, threads=size >= THREADED_PARSE_BYTES)
    except ImportError:
        engine, engine_errors = None, ()
    total = max(1, end - blk.start)
    out = _Columns(dia.fields, end - blk.start)
    view = memoryview(mm)
    try:
        for a, b in blk.bounds:
            cancel()
            got = None
            if engine is not None:
                try:
                    got = engine(view[a:b])
                except engine_errors:
                    got = None
            if got is None:
                got = [[c] for c in _parse_lines(blk, a, b, cancel)]
            blk.first_rows.append(out.rows)
            out.append(got, b - a)
            del got  # frees the block's buffers
            progress(0.02 + 0.93 * (b - blk.start) / total)
    finally:
        view.release()
    columns = out.finish()
    rows = out.rows
    if rows == 0:
        what = f" a header on line {sniff.header_line} but" if sniff.header_line else ""
        raise EmptyCaptureError(f"found{what} no rows of numbers to read", path)
    return columns, warnings, blk
