"""Telling how a delimited text capture is written: the *sniff*.

Layout accepted, top to bottom::

    [preamble]  metadata lines: "key,value", "key: value", "# comment", ...
    [header]    one row of column names, optionally followed by a row of units
    data        rows of numbers, one sample per row, a fixed number of fields

How the layout is found (on the first 1000 lines): every candidate
dialect (comma, semicolon, tab or runs of white space; decimal point, or
decimal comma where the delimiter is not a comma, or is a comma and the
file quotes values holding one, ``"1,015"``) splits the lines, and the
data block is the first run of at least 8 consecutive rows of numbers with the
same field count. The dialect that explains the most rows (minus the rows it
cannot explain) wins; ties go against a comma dialect whose fields look like
"0,05" split in two (a decimal comma), then to the one whose header has a name
for every field, then to more fields, then to the order above. The non-blank
line just before the data is the header when it splits into the same number
of fields and no name is a number or a ``key: value`` pair; a row of units
under a row of names is merged into it. Lines above are the preamble.

A ',' separated file whose unquoted numbers seem to carry decimal commas
too (``1e-06,1,015``) is refused, with the way to export it again: see
:mod:`._decimal_comma` for the evidence.

Known ambiguity: a single column of decimal-comma numbers with no header and
no fraction starting with 0 reads as two integer columns; a header row
settles it.

Nothing here reads the file: the caller hands over the bytes of its head.
Reading the data rows is :mod:`.delimited`'s job.
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field

from ..errors import CaptureFormatError, TrueslopeWarning
from ..units import lookup_column_unit
from ._decimal_comma import decimal_comma_clash
from ._assemble import MAX_COLUMNS
from ._fields import is_number, row_kind as _kind, split_row, wide_row

__all__ = ["SNIFF_LINES", "MIN_RUN", "Dialect", "Sniff", "decode_head", "head_lines",
           "sniff_lines", "describe_layout"]

#: Lines the layout is guessed from (more only when no data is found in them).
SNIFF_LINES = 1000
#: Consecutive numeric rows that mark the start of the data.
MIN_RUN = 8

_UNIT_TOKEN = re.compile(r"^[\(\[\{]?\s*([^\(\)\[\]\{\}]*?)\s*[\)\]\}]?$")

# (delimiter, decimal); None is a run of white space. Order breaks ties.
_CANDIDATES: tuple[tuple[str | None, str], ...] = (
    (",", "."), (";", "."), ("\t", "."), (None, "."), (";", ","), ("\t", ","), (None, ","),
    (",", ","))
_DELIM_WORDS = {",": "',' separated", ";": "';' separated", "\t": "tab separated",
                None: "space separated"}

_COMMENT = ("#", "//", "%", "!", "*")


@dataclass(frozen=True)
class Dialect:
    """How the data rows are written."""

    delimiter: str | None
    decimal: str
    fields: int
    trailing: bool = False  # rows end with a delimiter (one empty field more)


@dataclass
class Sniff:
    """What the sniff found in the head of a delimited text file.

    Attributes
    ----------
    dialect : Dialect
        Delimiter, decimal mark and field count of the data rows.
    encoding : str
        Text encoding of the file, ``"utf-8"`` or ``"cp1252"``.
    data_line : int
        1-based line of the first data row.
    data_offset : int
        Byte offset of that row from the start of the file.
    header : list of str or None
        Column names, units merged in when a units row was found.
    header_line : int or None
        1-based line of the (first) header row.
    units_row : bool
        Whether a row of units under the names was merged into ``header``.
    metadata : dict of str to str
        Key/value pairs of the preamble, in file order.
    preamble_lines : int
        Preamble lines that gave a metadata entry.
    warnings : list of TrueslopeWarning
        Findings about the layout (e.g. a header with the wrong name count).
    """

    dialect: Dialect
    encoding: str
    data_line: int
    data_offset: int
    header: list[str] | None
    header_line: int | None
    units_row: bool
    metadata: dict[str, str]
    preamble_lines: int
    warnings: list[TrueslopeWarning] = field(default_factory=list)


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
        if n and (is_number(n, dec) or re.match(r"^[^:=]*[^\W\d_][^:=]*\s*[:=]\s*\S", n)):
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


def decode_head(head: bytes, path: str) -> tuple[str, int]:
    """Tell the text encoding from the first bytes of the file.

    Parameters
    ----------
    head : bytes
        The first bytes of the file.
    path : str
        The file, for messages.

    Returns
    -------
    encoding : str
        ``"utf-8"``, or ``"cp1252"`` when the head is not valid UTF-8.
    bom : int
        Length in bytes of a UTF-8 byte-order mark, 0 when there is none.

    Raises
    ------
    CaptureFormatError
        UTF-16 text, binary data, or lines ending in a bare carriage return.
    """
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


def head_lines(head: bytes, complete: bool, encoding: str, bom: int) -> list[tuple[int, str]]:
    """Split the head of the file into lines.

    Parameters
    ----------
    head : bytes
        The first bytes of the file.
    complete : bool
        True when ``head`` is the whole file, so its last line is complete
        even without a line end; otherwise the part after the last line end
        is left out.
    encoding : str
        As given by :func:`decode_head`.
    bom : int
        Byte-order mark length, as given by :func:`decode_head`.

    Returns
    -------
    list of (int, str)
        Byte offset in the file and text (line end removed) of each line.
    """
    out = []
    pos = bom
    chunks = head[bom:].split(b"\n")
    if not complete:
        chunks = chunks[:-1]
    for raw in chunks:
        out.append((pos, raw.decode(encoding, errors="replace").rstrip("\r")))
        pos += len(raw) + 1
    return out


def _refuse_decimal_commas(lines: list[tuple[int, str]], start: int, dec: str,
                           whole: bool, path: str | None) -> None:
    """Raise when a ',' separated file's numbers seem to hold decimal commas too."""
    found = decimal_comma_clash(lines, start, dec, whole,
                                lambda text, n: _header_names(text, ",", dec, n))
    if found is not None:
        raise CaptureFormatError(found[1], path, found[0])


#: A row's kind does not depend on which digits it holds, only on where digits are, so
#: rows are classified by their shape (every ASCII digit as 0): the rows of a capture
#: come in a handful of shapes, each classified once per dialect.
_DIGITS_AS_ZERO = str.maketrans("123456789", "000000000")


def _kinds(shapes: list[str], d: str | None, dec: str) -> list[tuple[str, int, bool]]:
    """:func:`row_kind` of every row shape (a shape met again reads its first answer)."""
    known: dict[str, tuple[str, int, bool]] = {}
    out = []
    for shape in shapes:
        kind = known.get(shape)
        if kind is None:
            kind = known[shape] = _kind(shape, d, dec, MAX_COLUMNS)
        out.append(kind)
    return out


def sniff_lines(lines: list[tuple[int, str]], encoding: str, whole: bool,
                path: str | None = None) -> Sniff | None:
    """Find the dialect, the data start, the header and the preamble.

    Parameters
    ----------
    lines : list of (int, str)
        Lines of the head, as given by :func:`head_lines`.
    encoding : str
        Text encoding, recorded in the result.
    whole : bool
        True when ``lines`` reach the end of the file, so a short last line
        is a truncated row and not evidence against a dialect.
    path : str, optional
        The file, for messages.

    Returns
    -------
    Sniff or None
        None when no line is a row of numbers in any dialect.

    Raises
    ------
    CaptureFormatError
        A ',' separated file whose numbers seem to be written with a decimal
        comma as well (see :mod:`._decimal_comma`); a row of more than
        ``MAX_COLUMNS`` numbers (named by its line).
    """
    best = None
    widest: tuple[int, int, str | None] | None = None  # (line index, fields, delimiter)
    present = {c for c in (",", ";", "\t") if any(c in text for _, text in lines)}
    shapes = [text.translate(_DIGITS_AS_ZERO) for _, text in lines]
    seen: dict[tuple, list] = {}
    for prio, (d, dec) in enumerate(_CANDIDATES):
        if d == dec and not any("," in p for _, text in lines if '"' in text
                                for p in split_row(text, d)):
            continue  # a comma is both only where quotes keep "1,015" whole
        # a delimiter found on no line splits nothing: every such delimiter gives the same
        # rows for a decimal mark, so they are classified once
        key = ("absent", dec) if d is not None and d not in present else (d, dec)
        kinds = seen.get(key)
        if kinds is None:
            kinds = seen[key] = _kinds(shapes, d, dec)
        wide = next((i for i, kd in enumerate(kinds) if kd[0] == "wide"), None)
        if wide is not None and (widest is None or wide < widest[0]):
            widest = (wide, kinds[wide][1], d)
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
        # "0,05" read as two integers "0" and "05" hints at a decimal comma
        # ("0057,0887" does not: no integer part is zero-padded).
        suspicious = 0
        if d == "," and dec == ".":
            for i in range(start, min(len(lines), start + 50)):
                if re.search(r"(?:^|,)\s*[+-]?(?:0|[1-9]\d*)\s*,\s*0\d", lines[i][1]):
                    suspicious = 1
                    break
        header_match = 0
        if header_idx is not None and kinds[header_idx][0] == "text":
            if _header_names(lines[header_idx][1], d, dec, k) is not None:
                header_match = 1
        score = (coverage - bad, -suspicious, header_match, k, -prio)
        if best is None or score > best[0]:
            best = (score, d, dec, k, start, header_idx, trailing)
    if widest is not None:
        # Refused here, before any block reader turns thousands of fields into arrays.
        raise CaptureFormatError(wide_row(widest[1], widest[2]), path, widest[0] + 1)
    if best is None:
        return None
    _, d, dec, k, start, header_idx, trailing = best
    if d == ",":
        _refuse_decimal_commas(lines, start, dec, whole, path)
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
            parts = [p for p in split_row(text, d) if p]
            if len(parts) > 2 and not any(is_number(p, dec) for p in parts):
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
    return Sniff(dialect=dialect, encoding=encoding, data_line=start + 1,
                 data_offset=lines[start][0], header=header, header_line=header_line,
                 units_row=units_row, metadata=metadata, preamble_lines=count,
                 warnings=warnings)


def describe_layout(s: Sniff) -> str:
    """Short description of the layout found, e.g. ``"delimited text, ',' separated, header"``."""
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
