"""Hostile inputs for the fuzz test and the fuzz campaign (test data, not references).

Each generator in :data:`GENERATORS` writes one file into a folder it is given and
returns its path; :func:`make_case` adds random settings and command-line options.
Everything follows from ``(generator, seed)``, so a failing input is rebuilt with::

    .venv/bin/python -m tests.support.hostile GENERATOR SEED [FOLDER]

The families: mutations of the demo captures in ``sample_captures/`` (their preamble and
a head or an every-k-th-row thinning of their data), degenerate text layouts, random
bytes, ``.npy`` files with mutated headers or hostile arrays, WAV files with mutated
chunks, and random settings. :func:`refusal_problem` and :func:`figure_problem` state the
contract every input is held to (DEVELOPERS.md, "Errors").
"""

from __future__ import annotations

import functools
import io
import math
import random
import struct
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np

SAMPLES = Path(__file__).resolve().parents[2] / "sample_captures"
TEXT_SAMPLES = ("film_cap_ramp.csv", "x7r_cap_ramp.csv", "electrolytic_ramp.txt")
#: Figures of a finished analysis that must be finite numbers.
HEADLINE = ("nonlinearity_pct", "terminal_nonlinearity_pct", "slope_v_per_s", "amplitude_v",
            "ramp_time_s", "period_s", "frequency_hz", "noise_rms_v", "nonlinearity_floor_pct")
#: Field texts that a scope, a spreadsheet or a broken disk may leave in a number's place.
BAD_FIELDS = (b"nan", b"NaN", b"inf", b"-inf", b"Infinity", b"1e200", b"-1e200", b"1e-300",
              b"-1e-300", b"1e308", b"1.8e308", b"5e-324", b"", b" ", b"-", b"+", b".", b"e5",
              b"1e", b"0x1p3", b"1_000", b"\xe2\x88\x921", b"1,5", b"--1", b"1.2.3", b'"1"',
              b"NULL", b"#N/A", b"9" * 400, b"\x00", b"\xff\xfe", b"1e99999")
SUFFIXES = (".csv", ".txt", ".dat", ".tsv", ".npy", ".wav", "", ".CSV")


# ----------------------------------------------------------------- writing

def _write(folder: Path, stem: str, rng: random.Random, data: bytes, suffix: str) -> Path:
    """Write ``data`` under a name that is usually plain and sometimes has spaces or
    non-ASCII letters; 1 in 10 files gets a suffix that does not match its content."""
    if rng.random() < 0.1:
        suffix = rng.choice(SUFFIXES)
    name = f"{stem} µ ramp{suffix}" if rng.random() < 0.15 else f"{stem}{suffix}"
    path = Path(folder) / name
    path.write_bytes(data)
    return path


def _table(columns: list[np.ndarray], names: list[str] | None, delim: str = ",",
           fmt: str = "{:.9g}") -> bytes:
    rows = [delim.join(names)] if names else []
    plain = [np.asarray(c).tolist() for c in columns]  # Python floats: repr() is "1.5"
    rows += [delim.join(fmt.format(x) for x in row) for row in zip(*plain)]
    return ("\n".join(rows) + "\n").encode()


def _ramp(n: int, period: float, rng: random.Random, lo: float = 1.0, hi: float = 4.0,
          noise: float = 0.002) -> np.ndarray:
    k = np.arange(n) + rng.random() * period
    v = lo + (hi - lo) * np.mod(k, period) / period
    return v + noise * np.random.default_rng(rng.randrange(2**32)).standard_normal(n)


# ------------------------------------------------------- mutated demo captures

@functools.lru_cache(maxsize=None)
def _sample(name: str) -> tuple[tuple[bytes, ...], tuple[bytes, ...]]:
    """Preamble and header lines, then the first 60 000 data lines, of a demo capture."""
    lines = (SAMPLES / name).read_bytes().splitlines()
    first = next(i for i, line in enumerate(lines) if line[:1] in b"+-.0123456789")
    return tuple(lines[:first]), tuple(lines[first:first + 60000])


def _base(rng: random.Random) -> tuple[list[bytes], list[bytes], bytes, str]:
    """(preamble lines, data lines, delimiter, suffix) of a demo capture: mostly every
    k-th row, so a few thousand lines still hold several cycles; else a plain head."""
    name = rng.choice(TEXT_SAMPLES)
    head, data = _sample(name)
    if rng.random() < 0.75:
        step = rng.randint(8, 40)
        rows = list(data[rng.randrange(step)::step][:rng.randint(200, 3000)])
    else:
        rows = list(data[:rng.randint(1000, 20000)])
    delim = b";" if b";" in head[-1] else b"\t" if b"\t" in head[-1] else b","
    return list(head), rows, delim, Path(name).suffix


def _join(lines: list[bytes]) -> bytes:
    return b"\n".join(lines) + b"\n"


def _text_mutation(mutate: Callable) -> Callable[[random.Random, Path, str], Path]:
    """A generator from ``mutate(rng, head, rows, delim) -> bytes``."""
    def generate(rng: random.Random, folder: Path, stem: str) -> Path:
        head, rows, delim, suffix = _base(rng)
        return _write(folder, stem, rng, mutate(rng, head, rows, delim), suffix)
    generate.__doc__ = mutate.__doc__
    return generate


def _flip(rng, head, rows, delim):
    """Random bits flipped."""
    b = bytearray(_join(head + rows))
    for _ in range(rng.randint(1, 50)):
        b[rng.randrange(len(b))] ^= 1 << rng.randrange(8)
    return bytes(b)


def _insert(rng, head, rows, delim):
    """Random bytes or troublesome snippets inserted."""
    b = bytearray(_join(head + rows))
    for _ in range(rng.randint(1, 20)):
        bit = rng.choice([bytes(rng.randrange(256) for _ in range(rng.randint(1, 8))),
                          b",", b"\n", b'"', b"e", b"-", b"nan", b"\x00", b"\xff\xfe", b"1e999",
                          b"\r", delim * 3])
        at = rng.randrange(len(b) + 1)
        b[at:at] = bit
    return bytes(b)


def _delete(rng, head, rows, delim):
    """Random spans deleted."""
    b = bytearray(_join(head + rows))
    for _ in range(rng.randint(1, 10)):
        at = rng.randrange(len(b))
        del b[at:at + rng.randint(1, 200)]
    return bytes(b)


def _truncate(rng, head, rows, delim):
    """Cut anywhere: inside the preamble, the header, mid-line, after one byte."""
    b = _join(head + rows)
    return b[:rng.choice([1, rng.randrange(len(b)), rng.randrange(len(_join(head)) + 1),
                          len(b) - rng.randint(1, 6)])]


def _duplicate(rng, head, rows, delim):
    """Data lines (or a block of them, or the header) repeated in place."""
    rows = list(rows)
    for _ in range(rng.randint(1, 50)):
        i = rng.randrange(len(rows))
        rows[i:i] = rows[i:i + rng.choice([1, 1, 2, 50])]
    if rng.random() < 0.3:
        rows.insert(rng.randrange(len(rows)), head[-1])
    return _join(head + rows)


def _shuffle(rng, head, rows, delim):
    """Data lines swapped, a block reversed, or all of them shuffled."""
    rows = list(rows)
    how = rng.randrange(3)
    if how == 0:
        for _ in range(rng.randint(1, 20)):
            i, j = rng.randrange(len(rows)), rng.randrange(len(rows))
            rows[i], rows[j] = rows[j], rows[i]
    elif how == 1:
        i = rng.randrange(len(rows))
        rows[i:i + 500] = rows[i:i + 500][::-1]
    else:
        rng.shuffle(rows)
    return _join(head + rows)


def _swap_delimiters(rng, head, rows, delim):
    """The delimiter swapped for another, in every line or in some."""
    new = rng.choice([b",", b";", b"\t", b" ", b"|", b"  ", b", "])
    share = rng.choice([1.0, 0.5, 0.01])
    lines = [line.replace(delim, new) if rng.random() < share else line
             for line in head[-1:] + rows]
    return _join(head[:-1] + lines)


def _inject(rng, head, rows, delim):
    """Fields replaced by NaN, infinities, huge and tiny numbers, text, blanks."""
    rows = list(rows)
    value = rng.choice(BAD_FIELDS)
    for _ in range(rng.choice([1, 2, 10, 200])):
        i = rng.randrange(len(rows))
        fields = rows[i].split(delim)
        fields[rng.randrange(len(fields))] = value if rng.random() < 0.7 else rng.choice(BAD_FIELDS)
        rows[i] = delim.join(fields)
    return _join(head + rows)


def _scale(rng, head, rows, delim):
    """One column (time or voltage) multiplied by a huge, tiny, zero or negative factor."""
    factor = rng.choice([1e200, 1e300, 1e-300, 1e-310, 0.0, -1.0, 1e12, 1e-12, 1.5e308])
    comma = delim == b";"
    ncol = len(rows[0].split(delim))
    col = rng.randrange(ncol)
    out = []
    for line in rows:
        fields = line.split(delim)
        try:
            x = float(fields[col].replace(b",", b".")) * factor
        except (ValueError, IndexError):
            out.append(line)
            continue
        text = repr(x).encode()
        fields[col] = text.replace(b".", b",") if comma else text
        out.append(delim.join(fields))
    return _join(head + out)


def _decimal_commas(rng, head, rows, delim):
    """Decimal points turned into commas in every row or some (also among commas)."""
    share = rng.choice([1.0, 0.5, 0.001])
    out = [line.replace(b".", b",") if rng.random() < share else line for line in rows]
    if rng.random() < 0.3:
        out = [line.replace(delim, b",") for line in out]
    return _join(head + out)


def _encoding(rng, head, rows, delim):
    """Byte-order marks, UTF-16 and UTF-32 text, Latin-1 unit letters."""
    text = _join(head + rows)
    how = rng.randrange(6)
    if how == 0:
        return b"\xef\xbb\xbf" + text
    if how == 1:
        return text.decode("latin-1").encode("utf-16")
    if how == 2:
        return text.decode("latin-1").encode("utf-16-le")
    if how == 3:
        return text.decode("latin-1").encode("utf-32")
    if how == 4:
        return b"\xef\xbb\xbf\xef\xbb\xbf" + text
    return text.replace(b"[V]", b"[\xb5V]").replace(b"[s]", b"[\xb5s]")


def _nul(rng, head, rows, delim):
    """NUL bytes: one, a run of them, or one after every byte."""
    b = bytearray(_join(head + rows))
    how = rng.randrange(3)
    if how == 2:
        return bytes(x for c in b for x in (c, 0))
    at = rng.randrange(len(b))
    b[at:at] = b"\x00" * (1 if how == 0 else rng.randint(2, 100000))
    return bytes(b)


def _long_line(rng, head, rows, delim):
    """A line of up to two million characters in the preamble or among the rows."""
    n = rng.choice([10**5, 10**6, 2 * 10**6])
    line = rng.choice([b"1" * n, (b"1" + delim) * (n // 2), b" " * n, b"# " + b"x" * n,
                       b"sample interval: " + b"9" * n])
    lines = head + rows
    lines.insert(rng.randrange(len(lines) + 1), line)
    return _join(lines)


def _many_columns(rng, head, rows, delim):
    """Every row widened to hundreds or thousands of columns (the header too, or not)."""
    k = rng.choice([30, 300, 3000])
    out = [delim.join([line] * k) for line in rows[:min(rng.choice([50, 300, 2000]), 600000 // k)]]
    header = delim.join([head[-1]] * k) if rng.random() < 0.5 else head[-1]
    return _join(head[:-1] + [header] + out)


def _line_endings(rng, head, rows, delim):
    """CRLF, CR alone, blank lines between rows, padding, a missing last newline."""
    how = rng.randrange(5)
    if how == 0:
        return b"\r\n".join(head + rows) + b"\r\n"
    if how == 1:
        return b"\r".join(head + rows) + b"\r"
    if how == 2:
        return b"\n\n".join(head + rows)
    if how == 3:
        return _join([b"  " + line + b"  " + delim for line in head + rows])
    return b"\n".join(head + rows)


def _header(rng, head, rows, delim):
    """The header's names and units mangled, removed or repeated mid-data."""
    how = rng.randrange(5)
    names = head[-1].split(delim)
    if how == 0:
        names = [n.replace(b"[", b"[furlongs ").replace(b"(", b"(furlongs ") for n in names]
    elif how == 1:
        names = [names[0]] * len(names)
    elif how == 2:
        names = [b"[ns]", b"[kV]", b"(\xc2\xb5s)", b"[]", b"[%]"][:len(names)]
    elif how == 3:
        return _join(head[:-1] + rows)
    else:
        rows = list(rows)
        for _ in range(rng.randint(1, 5)):
            rows.insert(rng.randrange(len(rows)), head[-1])
    return _join(head[:-1] + [delim.join(names)] + rows)


def _preamble(rng, head, rows, delim):
    """A preamble stating an absurd sample interval or sample count."""
    value = rng.choice([b"0", b"-1", b"nan", b"inf", b"1e300", b"1e-300", b"abc", b"5e-08 s",
                        b"5e-324", b"1e-6 furlongs", b"", b"2u", b"-0"])
    key = rng.choice([b"sample interval", b"samples", b"Sample Rate", b"xincrement", b"dt"])
    line = key + b": " + value
    head = [h for h in head if not h.lower().startswith(b"sample interval")]
    return _join([line] + head + rows)


# ----------------------------------------------------------- degenerate layouts

def _degenerate(rng: random.Random, folder: Path, stem: str) -> Path:
    """One column, one row, header only, constant, alternating, empty, almost too short."""
    n = rng.choice([1, 2, 15, 16, 17, 100, 3000])
    t = np.arange(n) * 1e-6
    v = _ramp(n, rng.choice([2.0, 3.0, 50.0, 500.0]), rng)
    how = rng.randrange(10)
    if how == 0:
        data = _table([v], None)
    elif how == 1:
        data = _table([v], ["CH1 [V]"]) if rng.random() < 0.5 else \
            b"sample interval: 1e-6\nCH1 [V]\n" + _table([v], None)
    elif how == 2:
        data = b"time [s],CH1 [V]\n" + b"0,1\n" * rng.choice([0, 1])
    elif how == 3:
        data = _table([t, np.full(n, rng.choice([0.0, 3.3, -1e200, 1e-300]))],
                      ["time [s]", "CH1 [V]"])
    elif how == 4:
        data = _table([t, np.tile([0.0, 5.0], n)[:n]], ["time [s]", "CH1 [V]"])
    elif how == 5:
        good = _table([t, v], None).splitlines()
        data = b"\n".join(g if i % 2 else b"text,row" for i, g in enumerate(good)) + b"\n"
    elif how == 6:
        data = rng.choice([b"", b"\n" * 50, b" \t \n", b"\xef\xbb\xbf", b",,,\n,,,\n", b"#\n"])
    elif how == 7:
        data = _table([t], ["time [s]"])
    elif how == 8:
        data = _table([np.arange(n), t, v], ["index", "time [s]", "CH1 [V]"], fmt="{:.12g}")
    else:
        data = _table([t, v, v, v], ["time [s]", "CH1 [V]", "CH1 [V]", "ch1 [v]"])
    return _write(folder, stem, rng, data, ".csv")


def _waveforms(rng: random.Random, folder: Path, stem: str) -> Path:
    """Well-formed text holding no usable sawtooth, or one at the edge of what can be measured."""
    n = rng.choice([16, 64, 1000, 5000, 20000])
    t = np.arange(n) * rng.choice([1e-6, 1e-300, 1e300, 5e-324 * 4, 1.0])
    k = np.arange(n, dtype=float)
    p = rng.choice([2.0, 3.0, 4.5, 100.0, n / 1.5, float(n)])
    shapes = {
        "sine": np.sin(2 * np.pi * k / p), "square": np.sign(np.sin(2 * np.pi * k / p + 0.1)),
        "triangle": np.abs(np.mod(k, p) / p - 0.5), "noise": np.random.default_rng(
            rng.randrange(2**32)).standard_normal(n), "step": (k > n / 2).astype(float),
        "impulse": (k == n // 2).astype(float), "ramp": _ramp(n, p, rng, noise=0.0),
        "huge offset": 1e200 + _ramp(n, p, rng) * 1e185, "tiny": _ramp(n, p, rng) * 1e-300,
        "uneven resets": _ramp(n, p, rng) * (1 + (np.floor(k / p) % 3)),
        "long retrace": 4 - 3 * np.minimum(1, np.mod(k, p) / (0.9 * p)) ** 0.5,
        "two levels": np.where(np.mod(k, p) < 1, 0.0, 1.0),
    }
    name = rng.choice(sorted(shapes))
    cols, names = [t, shapes[name]], ["time [s]", "CH1 [V]"]
    if rng.random() < 0.3:
        cols.append(_ramp(n, rng.choice([50.0, 333.3]), rng))
        names.append("CH2 [V]")
    return _write(folder, stem, rng, _table(cols, names, fmt="{!r}"), ".csv")


def _time_axis(rng: random.Random, folder: Path, stem: str) -> Path:
    """A good ramp against a time column that is constant, backwards, jittered or gapped."""
    n = rng.choice([100, 2000, 6000])
    v = _ramp(n, rng.choice([100.0, 700.0]), rng)
    t = np.arange(n) * 1e-6
    how = rng.randrange(6)
    if how == 0:
        t = np.zeros(n)
    elif how == 1:
        t = t[::-1].copy()
    elif how == 2:
        t = t + np.random.default_rng(rng.randrange(2**32)).uniform(0, 3e-6, n)
    elif how == 3:
        t[n // 2:] += 1e300
    elif how == 4:
        t = np.repeat(t[::2], 2)[:n]
    else:
        t = t * 1e-308
    return _write(folder, stem, rng, _table([t, v], ["time [s]", "CH1 [V]"], fmt="{!r}"), ".csv")


def _sawtooth(rng: random.Random, folder: Path, stem: str) -> Path:
    """Readable sawtooths that test the measuring: spikes, clipping, dropouts, an unsteady
    start, 3 to 6 samples a ramp, thousands of cycles, one-bit or picovolt or kilovolt-offset
    samples, a reset as long as the ramp, a sync channel."""
    n = rng.choice([200, 3000, 20000])
    p = rng.choice([3.0, 4.0, 6.5, 50.0, 400.0, 1500.0])
    v = _ramp(n, p, rng, noise=rng.choice([0.0, 0.002, 0.2]))
    k = np.arange(n)
    how = rng.randrange(9)
    if how == 0:
        v[rng.sample(range(n), min(n, rng.randint(1, 40)))] = rng.choice([10.0, -10.0, 1e6])
    elif how == 1:
        v = np.clip(v, -1e9, rng.choice([2.0, 3.0, 3.99]))
    elif how == 2:
        v[rng.randrange(n):][:rng.randint(1, 500)] = 0.0
    elif how == 3:
        v = v * (1 - np.exp(-k / (n / rng.choice([3, 10]))))
    elif how == 4:
        v = np.where(v > 2.5, 1.0, 0.0)
    elif how == 5:
        v = v * rng.choice([1e-12, 1e-9, 1e6]) + rng.choice([0.0, 1e3, 1e6])
    elif how == 6:
        v = 4 - 3 * np.abs(2 * np.mod(k, p) / p - 1) ** rng.choice([1.0, 0.3, 3.0])
    elif how == 7:
        v = np.round(v * rng.choice([1, 2, 8])) / 8
    cols, names = [k * 1e-6, v], ["time [s]", "ramp [V]"]
    if rng.random() < 0.4:
        cols.append(np.where(np.mod(k + rng.random() * p, p) < rng.choice([1, p / 2]), 3.3, 0.0))
        names.append("sync [V]")
    data = _table(cols, names, fmt="{!r}")
    return _write(folder, stem, rng, data, ".csv")


def _good(rng: random.Random, folder: Path, stem: str) -> Path:
    """An unchanged head or thinning of a demo capture (it is the options that are hostile)."""
    head, rows, delim, suffix = _base(rng)
    return _write(folder, stem, rng, _join(head + rows), suffix)


# ----------------------------------------------------------------- random bytes

def _random_bytes(rng: random.Random, folder: Path, stem: str) -> Path:
    """Noise: any bytes, printable text, digits and separators, behind a real magic or not."""
    n = rng.choice([0, 1, 15, 16, 17, 1000, 50000])
    alphabet = rng.choice([bytes(range(256)), bytes(range(32, 127)) + b"\n",
                           b"0123456789.,;-+eE\n\t "])
    body = bytes(rng.choice(alphabet) for _ in range(n))
    magic = rng.choice([b"", b"", b"\x93NUMPY", b"\x93NUMPY\x01\x00",
                        b"RIFF\x00\x00\x00\x00WAVE", b"RIFF\xff\xff\xff\xffWAVEfmt ",
                        b"RF64\xff\xff\xff\xffWAVE"])
    return _write(folder, stem, rng, magic + body, rng.choice([".csv", ".bin", ".npy", ".wav"]))


# ----------------------------------------------------------------------- .npy

def _npy_bytes(arr: np.ndarray, allow_pickle: bool = False) -> bytes:
    f = io.BytesIO()
    np.save(f, arr, allow_pickle=allow_pickle)
    return f.getvalue()


def _npy_header(rng: random.Random, folder: Path, stem: str) -> Path:
    """A ramp saved by numpy whose header dictionary, version or length field is mutated."""
    n = rng.choice([16, 300, 5000])
    data = _npy_bytes(_ramp(n, 97.0, rng))
    hlen = struct.unpack("<H", data[8:10])[0]
    body = data[10 + hlen:]
    shape = rng.choice([f"({n},)", "(0,)", "(1000000000000,)", "(-1,)", "(3, 0)",
                        "(2, 2, 2, 2)", "()", f"({n // 2}, 2)", f"({n}, 0)", "(4611686018427387904,)",
                        "(1.5,)", "('a',)", f"({n * 2},)", f"(2, {n // 2})"])
    descr = rng.choice(["'<f8'", "'|O'", "'<U10'", "'>f8'", "'<c16'", "'|b1'", "'<M8[s]'",
                        "'|V8'", "'<f2'", "'<i8'", "[('t', '<f8'), ('v', '<f8')]",
                        "[('a', '|O')]", "'<q9'", "123", "None", "'|S0'", "[('', '<f8')]"])
    order = rng.choice(["False", "True", "1", "'yes'", "None"])
    header = rng.choice([
        f"{{'descr': {descr}, 'fortran_order': {order}, 'shape': {shape}, }}",
        f"{{'descr': '<f8', 'fortran_order': False, 'shape': {shape}, }}",
        f"{{'descr': {descr}, 'fortran_order': False, 'shape': ({n},), }}",
        "not a dict", "{}", "{'descr': '<f8'}", "[1, 2, 3]",
        f"{{'descr': '<f8', 'fortran_order': False, 'shape': ({n},), 'extra': 1}}",
        "{'descr': '<f8', 'fortran_order': False, 'shape': (" + " " * 70000 + "),}"])
    raw = header.encode("latin-1")
    raw += b" " * ((-len(raw) - 11) % 64) + b"\n"
    version = rng.choice([b"\x01\x00", b"\x01\x00", b"\x02\x00", b"\x03\x00", b"\x09\x09"])
    if version == b"\x01\x00" and len(raw) < 65536:
        length = struct.pack("<H", len(raw) if rng.random() < 0.8 else rng.randrange(65536))
    else:
        length = struct.pack("<I", len(raw) if rng.random() < 0.8 else rng.randrange(2**32))
    return _write(folder, stem, rng, b"\x93NUMPY" + version + length + raw + body, ".npy")


def _npy_arrays(rng: random.Random, folder: Path, stem: str) -> Path:
    """Valid .npy files of awkward arrays: objects, complex, bool, text, dates, structured,
    odd shapes, Fortran order, big-endian, NaN, huge values, one sample."""
    n = rng.choice([1, 15, 16, 2000])
    v = _ramp(n, 97.0, rng)
    arrays = [
        lambda: np.array(list(v), dtype=object), lambda: v + 1j * v, lambda: v > 2,
        lambda: v.astype("U12"), lambda: np.arange(n).astype("M8[s]"),
        lambda: (v * 40).astype(np.int8), lambda: (v * 1e15).astype(np.uint64),
        lambda: v.astype(np.float16), lambda: v.astype(">f8"),
        lambda: np.stack([v, v], axis=1), lambda: np.stack([v, v]),
        lambda: v[:, None], lambda: v[None, :], lambda: np.tile(v[:, None], (1, 500)),
        lambda: np.asfortranarray(np.stack([np.arange(n) * 1e-6, v], axis=1)),
        lambda: np.zeros(0), lambda: np.float64(3.0), lambda: v.reshape(1, 1, -1),
        lambda: np.where(np.arange(n) % 7 == 3, np.nan, v), lambda: np.minimum(v * 1e307, 1.7e308),
        lambda: np.rec.fromarrays([np.arange(n) * 1e-6, v.astype(str)], names="t,label"),
        lambda: np.rec.fromarrays([np.arange(n) * 1e-6, v], names="time,volts"),
        lambda: np.array([v, v[:-1]], dtype=object) if n > 1 else v,
    ]
    arr = rng.choice(arrays)()
    pickled = getattr(arr, "dtype", None) is not None and arr.dtype.hasobject
    return _write(folder, stem, rng, _npy_bytes(np.asarray(arr), allow_pickle=pickled), ".npy")


def _npy_damage(rng: random.Random, folder: Path, stem: str) -> Path:
    """A valid .npy cut short, with bytes flipped, or with its magic or version bent."""
    data = bytearray(_npy_bytes(_ramp(rng.choice([16, 5000]), 97.0, rng)))
    how = rng.randrange(4)
    if how == 0:
        data = data[:rng.randrange(len(data))]
    elif how == 1:
        for _ in range(rng.randint(1, 10)):
            data[rng.randrange(min(len(data), 128))] ^= 1 << rng.randrange(8)
    elif how == 2:
        data[6:8] = bytes([rng.randrange(256), rng.randrange(256)])
    else:
        data += bytes(rng.randrange(256) for _ in range(rng.randint(1, 100)))
    return _write(folder, stem, rng, bytes(data), ".npy")


# ------------------------------------------------------------------------ WAV

def _wav_bytes(frames: bytes, *, tag: int = 1, channels: int = 1, rate: int = 48000,
               bits: int = 16, block_align: int | None = None, byte_rate: int | None = None,
               fmt_extra: bytes = b"", fmt_size: int | None = None, data_size: int | None = None,
               riff_size: int | None = None, magic: bytes = b"RIFF", fmt_first: bool = True,
               extra: bytes = b"") -> bytes:
    """A WAV file written field by field (RIFF header, ``fmt `` and ``data`` chunks), any
    field overridable with a wrong value."""
    align = channels * bits // 8 if block_align is None else block_align
    brate = rate * align if byte_rate is None else byte_rate
    body = struct.pack("<HHIIHH", tag, channels, rate & 0xFFFFFFFF, brate & 0xFFFFFFFF,
                       align & 0xFFFF, bits & 0xFFFF) + fmt_extra
    fmt = b"fmt " + struct.pack("<I", len(body) if fmt_size is None else fmt_size) + body
    data = b"data" + struct.pack("<I", len(frames) if data_size is None else data_size) + frames
    chunks = extra + (fmt + data if fmt_first else data + fmt)
    size = 4 + len(chunks) if riff_size is None else riff_size
    return magic + struct.pack("<I", size & 0xFFFFFFFF) + b"WAVE" + chunks


def _wav_frames(rng: random.Random, n: int, channels: int = 1) -> bytes:
    v = (_ramp(n, 211.0, rng, lo=-0.8, hi=0.8) * 32767).astype("<i2")
    return np.repeat(v, channels).tobytes()


def _wav_fmt(rng: random.Random, folder: Path, stem: str) -> Path:
    """A 16-bit ramp whose ``fmt `` chunk says 0 channels, block align 0, 0 bits, a zero or
    huge rate, an unknown or half-written format tag."""
    frames = _wav_frames(rng, rng.choice([16, 2000, 20000]))
    field_, value = rng.choice([
        ("channels", 0), ("channels", 65535), ("channels", 3), ("block_align", 0),
        ("block_align", 1), ("block_align", 3), ("bits", 0), ("bits", 1), ("bits", 7),
        ("bits", 12), ("bits", 24), ("bits", 64), ("bits", 128), ("bits", 65535), ("tag", 0),
        ("tag", 2), ("tag", 0x55), ("tag", 3), ("tag", 0xFFFE), ("rate", 0), ("rate", 1),
        ("rate", 2**32 - 1), ("byte_rate", 0)])
    extra = b"" if field_ != "tag" or value != 0xFFFE else rng.choice(
        [b"", b"\x16\x00", b"\x16\x00\x10\x00\x04\x00\x00\x00" + b"\x01\x00" + b"\x00" * 14,
         b"\x16\x00" + bytes(22)])
    return _write(folder, stem, rng, _wav_bytes(frames, fmt_extra=extra, **{field_: value}), ".wav")


def _wav_chunks(rng: random.Random, folder: Path, stem: str) -> Path:
    """Chunk sizes that lie (data 0, huge or odd, fmt 0 or huge), chunks out of order or
    missing, a giant unknown chunk, an RF64 magic, and files cut anywhere."""
    frames = _wav_frames(rng, rng.choice([16, 2000]))
    kw = rng.choice([
        {"data_size": 0}, {"data_size": 0xFFFFFFFF}, {"data_size": len(frames) + 1},
        {"data_size": 3}, {"fmt_size": 0}, {"fmt_size": 2}, {"fmt_size": 0x7FFFFFFF},
        {"riff_size": 0}, {"riff_size": 0xFFFFFFFF}, {"fmt_first": False}, {"magic": b"RF64"},
        {"extra": b"LIST" + struct.pack("<I", 0xFFFFFFF0) + b"INFO"},
        {"extra": b"junk" + struct.pack("<I", 3) + b"abc"}, {}])
    data = _wav_bytes(frames, **kw)
    if not kw or rng.random() < 0.3:
        data = data[:rng.choice([4, 12, 20, 36, 44, 45, rng.randrange(len(data))])]
    if rng.random() < 0.1:
        data = data.replace(b"fmt ", b"fmt_")
    return _write(folder, stem, rng, data, ".wav")


def _wav_content(rng: random.Random, folder: Path, stem: str) -> Path:
    """Well-formed WAVs of awkward content: NaN and infinite floats, float64, 8 and 24 bit,
    one frame, 15 frames, eight channels, silence, a 1 Hz or 4 GHz rate."""
    n = rng.choice([1, 15, 16, 3000])
    v = _ramp(n, 211.0, rng, lo=-0.8, hi=0.8)
    how = rng.randrange(7)
    if how == 0:
        w = v.astype("<f4")
        w[::rng.choice([2, 50, max(1, n)])] = rng.choice([np.nan, np.inf, 3e38])
        return _write(folder, stem, rng, _wav_bytes(w.tobytes(), tag=3, bits=32), ".wav")
    if how == 1:
        return _write(folder, stem, rng, _wav_bytes(v.astype("<f8").tobytes(), tag=3, bits=64),
                      ".wav")
    if how == 2:
        return _write(folder, stem, rng,
                      _wav_bytes((v * 127 + 128).astype("u1").tobytes(), bits=8), ".wav")
    if how == 3:
        i = (v * 8388607).astype("<i4")
        b = b"".join(int(x).to_bytes(4, "little", signed=True)[:3] for x in i)
        return _write(folder, stem, rng, _wav_bytes(b, bits=24), ".wav")
    if how == 4:
        return _write(folder, stem, rng, _wav_bytes(_wav_frames(rng, n, 8), channels=8), ".wav")
    if how == 5:
        return _write(folder, stem, rng, _wav_bytes(bytes(2 * n)), ".wav")
    return _write(folder, stem, rng, _wav_bytes(_wav_frames(rng, n), rate=rng.choice(
        [1, 2**32 - 1, 7])), ".wav")


GENERATORS: dict[str, Callable[[random.Random, Path, str], Path]] = {
    "text-flip": _text_mutation(_flip), "text-insert": _text_mutation(_insert),
    "text-delete": _text_mutation(_delete), "text-truncate": _text_mutation(_truncate),
    "text-duplicate-lines": _text_mutation(_duplicate),
    "text-shuffle-lines": _text_mutation(_shuffle),
    "text-swap-delimiters": _text_mutation(_swap_delimiters),
    "text-inject-values": _text_mutation(_inject), "text-scale-column": _text_mutation(_scale),
    "text-decimal-commas": _text_mutation(_decimal_commas),
    "text-encoding": _text_mutation(_encoding), "text-nul": _text_mutation(_nul),
    "text-long-line": _text_mutation(_long_line),
    "text-many-columns": _text_mutation(_many_columns),
    "text-line-endings": _text_mutation(_line_endings),
    "text-header": _text_mutation(_header), "text-preamble": _text_mutation(_preamble),
    "degenerate-layout": _degenerate, "degenerate-waveform": _waveforms,
    "degenerate-time-axis": _time_axis, "engine-sawtooth": _sawtooth,
    "engine-options": _good, "random-bytes": _random_bytes,
    "npy-header": _npy_header, "npy-arrays": _npy_arrays, "npy-damage": _npy_damage,
    "wav-fmt": _wav_fmt, "wav-chunks": _wav_chunks, "wav-content": _wav_content,
}


# ------------------------------------------------------------- random options

_CONTEXT = {
    "capacitance": ["47n", "10n", "1e300", "1e-300", "-1n", "0", "nan", "inf", "abc", "4k7",
                    "47nF", "47 uV", "1,5n", ""],
    "current": ["1.2m", "1e300", "1e-300", "-1m", "0", "1e-18"],
    "set_resistor": ["3.3k", "1e300", "1e-300", "0", "-1"],
    "reference": ["1.25", "-1.25", "0", "1e300", "1e-300"],
    "probe": ["10M,12p", "1M", "1e300,1e300", "0", "10M,-1p", "1e-300,1e-300", ",12p",
              "10M,12p,3", "10M,"],
    "tolerance": ["10%", "0", "100%", "1e-300", "99.999%", "-5%", "1e300"],
    "thresholds": ["0.05,4", "4,0.05", "1e300,-1e300", "1,1", "1", "1,2,3", "nan,1",
                   "1e-300,2e-300", "-4,-0.05"],
}


@dataclass(frozen=True)
class Options:
    """Random settings; :meth:`settings` builds them (and may refuse), :meth:`cli_args`
    types them as options (``--name=value``, so argparse never mistakes a value for an
    option)."""

    trim_fraction: float | None = None
    window_s: tuple[float, float] | None = None
    channel: str | int | None = None
    sync_channel: str | int | None = None
    phase_bins: int | None = None
    context: dict[str, str] = field(default_factory=dict)
    sample_interval_s: float | None = None
    json: bool = False

    def settings(self):
        """The :class:`~trueslope.core.settings.Settings`; raises ``SettingsError``."""
        from trueslope.core.circuit import parse_context
        from trueslope.core.settings import Settings
        kw = {k: getattr(self, k) for k in ("trim_fraction", "window_s", "channel",
                                            "sync_channel", "phase_bins")
              if getattr(self, k) is not None}
        if self.context:
            kw["context"] = parse_context(**self.context)
        return Settings(**kw)

    def cli_args(self) -> list[str]:
        a = [] if self.trim_fraction is None else [f"--trim={self.trim_fraction!r}"]
        if self.window_s is not None:
            a.append(f"--window={self.window_s[0]!r},{self.window_s[1]!r}")
        for opt, value in (("--channel", self.channel), ("--sync-channel", self.sync_channel)):
            if value is not None:
                a.append(f"{opt}={value}")
        if self.sample_interval_s is not None:
            a.append(f"--sample-interval={self.sample_interval_s!r}")
        a += [f"--{k.replace('_', '-')}={v}" for k, v in self.context.items()]
        return a + (["--json"] if self.json else [])


def random_options(rng: random.Random, share: float = 0.35) -> Options:
    """Default options most of the time; else each setting drawn with a fair chance of
    being absurd (trims outside 0-0.4, windows of 1e300 s, negative intervals ...)."""
    if rng.random() >= share:
        return Options(json=rng.random() < 0.5)
    pick = lambda p, values: rng.choice(values) if rng.random() < p else None  # noqa: E731
    window = pick(0.3, [(0.0, 1e-4), (2e-5, 4.8e-4), (0.0, 1e300), (1e-300, 2e-300),
                        (5e-4, 1e-4), (0.0, math.inf), (math.nan, 1.0), (-1.0, 1.0),
                        (0.0, 5e-324), (1e3, 2e3)])
    return Options(
        trim_fraction=pick(0.4, [0.0, 0.05, 0.4, 0.41, -0.1, 1e-300, math.nan, math.inf, 0.5]),
        window_s=window,
        channel=pick(0.3, [0, 1, 2, -1, 99, "CH1", "ramp", "sync", "left", "", " 1 ",
                           "\uff11", "time", "0"]),
        sync_channel=pick(0.15, [1, 0, "sync", "reset", 5, "CH2"]),
        phase_bins=pick(0.15, [16, 17, 100, 2001, 10**5, 10**6]),
        context={k: rng.choice(v) for k, v in _CONTEXT.items() if rng.random() < 0.2},
        sample_interval_s=pick(0.3, [2e-6, 5e-8, 1e300, 1e-300, -1e-6, 0.0, math.nan,
                                     math.inf, 5e-324, 1.0, 3600.0]),
        json=rng.random() < 0.5)


# ----------------------------------------------------------------------- cases

@dataclass(frozen=True)
class Case:
    generator: str
    seed: int
    path: Path
    options: Options

    def describe(self) -> str:
        return f"{self.generator} seed {self.seed} ({self.path.name}; {' '.join(self.options.cli_args()) or 'defaults'})"


def make_case(generator: str, seed: int, folder: Path) -> Case:
    """Write the input of ``(generator, seed)`` into ``folder`` (which must exist)."""
    rng = random.Random(f"{generator}/{seed}")
    path = GENERATORS[generator](rng, Path(folder), f"{generator}-{seed}")
    share = {"engine-options": 1.0, "engine-sawtooth": 0.5}.get(generator, 0.35)
    return Case(generator, seed, path, random_options(rng, share))


def case_stream(seed: int, count: int) -> list[tuple[str, int]]:
    """``count`` (generator, seed) pairs, the generators in turn, deterministic from ``seed``."""
    rng = random.Random(seed)
    names = sorted(GENERATORS)
    return [(names[i % len(names)], rng.randrange(2**32)) for i in range(count)]


# -------------------------------------------------------------------- contract

def refusal_problem(exc: BaseException, path: Path) -> str | None:
    """What is wrong with a refusal, or None. Every refusal is a ``TrueslopeError`` whose
    message is one line; a ``SettingsError`` names its ``field`` (the command line and the
    window name the option from it), every other one names the file."""
    from trueslope.core.errors import SettingsError, TrueslopeError
    if not isinstance(exc, TrueslopeError):
        return f"{type(exc).__name__} is not a TrueslopeError"
    text = str(exc)
    if not text.strip() or "\n" in text or "\r" in text:
        return f"{type(exc).__name__} message is not one line: {text!r}"
    if isinstance(exc, SettingsError):
        return None if exc.field else f"SettingsError without a field: {text!r}"
    if Path(path).name not in text:
        return f"{type(exc).__name__} message does not name {Path(path).name!r}: {text!r}"
    return None


def figure_problem(analysis) -> str | None:
    """Which headline figures of a finished analysis are not finite, or None."""
    bad = {k: getattr(analysis.figures, k) for k in HEADLINE
           if not math.isfinite(getattr(analysis.figures, k))}
    return f"non-finite figures {bad}" if bad else None


if __name__ == "__main__":  # rebuild one input: GENERATOR SEED [FOLDER]
    out = Path(sys.argv[3] if len(sys.argv) > 3 else ".")
    out.mkdir(parents=True, exist_ok=True)
    print(make_case(sys.argv[1], int(sys.argv[2]), out).describe())
