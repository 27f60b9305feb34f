"""From numeric columns to a :class:`~trueslope.core.capture.Capture`.

Every reader ends here, so the rules below hold for every layout:

* an all-empty (all-NaN) column is left out, with a warning when it has a name;
* a column of sample numbers (integers rising by exactly 1) is an index: it is
  neither a channel nor time;
* the time axis is the first column with a time unit, else the first column
  named like time in any of several languages, else the first unit-less
  column that rises steadily (not a channel-like name);
* every sample must be finite: a NaN, an infinity or an empty field anywhere
  is an error naming where (trueslope never fills gaps, so one isolated blank
  field is refused just like a run of them);
* a sample beyond ``MAX_ABS_VOLTS``, a time beyond ``MAX_ABS_TIME_S`` or an
  interval outside ``MIN_INTERVAL_S``..``MAX_INTERVAL_S`` is refused, named as
  written in the file (before scaling to SI), so no later step computes with it;
* the sample interval comes from the time axis
  (``dt = (t[-1] - t[0]) / (n - 1)``), else the layout itself (a WAV rate),
  else the caller's ``sample_interval_s``, else the preamble.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Callable, Mapping, Protocol

import numpy as np

from ..capture import MAX_ABS_VOLTS, SAMPLE_INTERVAL_RANGE_S, Capture
from ..errors import (CaptureFormatError, EmptyCaptureError, NonFiniteDataError,
                      NoSampleIntervalError, OutOfRangeError, TimeAxisError, TooFewSamplesError,
                      TrueslopeWarning, UnknownUnitError)
from ..units import format_si, parse_column_unit
from ._preamble import interval_from_metadata

#: Fewest samples a capture may have.
MIN_SAMPLES = 16
#: A time column off its uniform grid by more than this fraction of dt gets a warning.
NONUNIFORM_FRACTION = 0.01
#: Sample interval given by the caller and the file's own may differ this much silently.
INTERVAL_AGREEMENT = 0.01

# Bounds of what a bench capture can hold. A value beyond them is a wrong unit,
# a corrupt export or a hostile file; refusing it at import means no later step
# ever computes with it (a 1e300 s step squared overflows, a 1e6 V "sample"
# is a mislabelled column).
#: Most columns a capture may have. A scope exports a handful of channels (4, 8,
#: 16 on a logic-analyser hybrid) plus time and an index; 64 leaves room for any
#: bench instrument while a row of thousands of numbers (a waveform written across
#: a line, or a hostile file) is refused before it is parsed into arrays.
MAX_COLUMNS = 64
#: Largest time value, seconds: about 317 years, so absolute Unix timestamps pass.
MAX_ABS_TIME_S = 1e10
#: The bench ranges of samples (volts; a WAV or integer .npy is in the same units
#: unscaled) and of the sample interval are the capture's own (``core/capture.py``).
MIN_INTERVAL_S, MAX_INTERVAL_S = SAMPLE_INTERVAL_RANGE_S

# Names of a time axis in the languages oscilloscope software is commonly set to.
_TIME_NAMES = frozenset([
    "t", "x", "time", "times", "zeit", "temps", "tiempo", "tempo", "tid", "tijd", "czas",
    "aika", "cas", "\u010das", "ido", "id\u0151", "\u0432\u0440\u0435\u043c\u044f",
    "\u65f6\u95f4", "\u6642\u9593", "sec", "secs", "second", "seconds", "timestamp",
    "time stamp", "horizontal", "x axis", "xaxis"])
_CHANNEL_LIKE = re.compile(
    r"^(ch|chan|channel|kanal|canal|voie|trace|signal|volt|volts|voltage|spannung|tension|"
    r"tensi\u00f3n|input|in|ain|adc|probe|v|u|y|math|ref|left|right)\s*[-_#]?\s*\d*$")
@dataclass(eq=False)
class Column:
    """One numeric column on its way into a capture.

    Attributes
    ----------
    values : ndarray
        float64 samples, already scaled to SI seconds or volts.
    name : str
        Clean name (unit removed); ``""`` when the layout gives none.
    quantity : str or None
        ``"time"``, ``"voltage"`` or None (no unit said).
    number : int
        1-based position in the file, for messages.
    scale : float
        Factor to SI still to apply (a column in mV: 1e-3). Readers leave it to
        :func:`assemble`, which checks the values as written against the bounds
        first, so a value that would overflow when scaled is named as written.
        1.0 when ``values`` are already in SI units.
    """

    values: np.ndarray
    name: str = ""
    quantity: str | None = None
    number: int = 0
    scale: float = 1.0

    def label(self) -> str:
        return f"column {self.number} ({self.name!r})" if self.name else f"column {self.number}"


class Locator(Protocol):
    """Says where a 0-based data row lies in the file."""

    def where(self, row: int) -> tuple[int | None, str]:
        """``(line, text)``: the 1-based physical line (None if lines do not
        apply to the layout) and words for a message (``"line 57"``)."""
        ...


class SampleLocator:
    """Locator of binary layouts: rows are sample indices."""

    def where(self, row: int) -> tuple[int | None, str]:
        return None, f"sample index {row}"


def column_units(names: list[str], path: str, line: int | None) -> list[tuple[str, str | None, float]]:
    """Clean name, quantity and scale of every header name (UnknownUnitError located)."""
    out = []
    for j, raw in enumerate(names):
        try:
            cu = parse_column_unit(raw)
        except UnknownUnitError as exc:
            raise UnknownUnitError(exc.message, path, line, j + 1) from None
        out.append((cu.name, cu.quantity, cu.scale))
    return out


def _is_index(x: np.ndarray) -> bool:
    n = x.shape[0]
    if n < 2 or not math.isfinite(x[0]) or x[0] != math.floor(x[0]):
        return False
    if x[1] - x[0] != 1.0 or x[-1] - x[0] != n - 1:  # cheap tests first
        return False
    return bool(np.all(np.diff(x) == 1.0))


def _is_time_name(name: str) -> bool:
    n = re.sub(r"\s+", " ", name.strip().lower())
    return n in _TIME_NAMES or n.startswith(("time", "zeit", "temps", "tiempo"))


def _rises_steadily(x: np.ndarray) -> bool:
    """Taken for a time axis: rises on all steps but at most 1 % of them (or 2),
    and never drops by more than 10 mean steps (a sawtooth's reset drops by its
    whole swing). A time axis with a glitch is then reported, not mistaken for
    a channel."""
    n = x.shape[0]
    if n < 3 or not (math.isfinite(x[0]) and math.isfinite(x[-1])):
        return False
    mean_step = (x[-1] - x[0]) / (n - 1)
    if not mean_step > 0:
        return False
    d = np.diff(x)
    if not np.isfinite(d).all():
        return False
    stalls = d.shape[0] - np.count_nonzero(d > 0)
    return bool(stalls <= max(2.0, 0.01 * d.shape[0]) and d.min() >= -10.0 * mean_step)


def _runs(mask: np.ndarray) -> tuple[int, int, int]:
    """First run of True in ``mask``: (start, end inclusive, total True count)."""
    idx = np.flatnonzero(mask)
    start = int(idx[0])
    gaps = np.flatnonzero(np.diff(idx) != 1)
    end = int(idx[gaps[0]]) if gaps.size else int(idx[-1])
    return start, end, int(idx.size)


def _span(locate: Locator, a: int, b: int) -> tuple[int | None, str]:
    la, ta = locate.where(a)
    if a == b:
        return la, ta
    lb, tb = locate.where(b)
    if la is not None and lb is not None:
        return la, f"lines {la}-{lb}"
    return la, f"{ta} to {tb.split()[-1]}"


def _bounds(cols: list[Column]) -> dict[int, tuple[float, float]]:
    """Least and greatest value of each column (by ``id``): a NaN makes both NaN and an
    infinity one of them, so finite bounds say the whole column is finite."""
    return {id(c): (float(np.min(c.values)), float(np.max(c.values))) for c in cols}


def _check_finite(cols: list[Column], locate: Locator, path: str,
                  bounds: dict[int, tuple[float, float]]) -> None:
    bad: np.ndarray | None = None
    names = []
    for c in cols:
        lo, hi = bounds[id(c)]
        if math.isfinite(lo) and math.isfinite(hi):
            continue
        m = ~np.isfinite(c.values)
        names.append(c.name or f"column {c.number}")
        bad = m if bad is None else (bad | m)
    if bad is None:
        return
    a, b, total = _runs(bad)
    line, where = _span(locate, a, b)
    first_col = next(c for c in cols if not np.isfinite(c.values[a]))
    more = "" if total == b - a + 1 else f" ({total} rows in all have one)"
    raise NonFiniteDataError(
        f"not a finite number (NaN, infinity or an empty field) in {', '.join(names)} on "
        f"{where}{more}. Every sample must be a finite number: trueslope does not fill gaps, "
        f"so even one blank field is refused; remove or repair those rows",
        path, line, first_col.number or None)


def _check_range(cols: list[Column], time_col: Column | None, locate: Locator,
                 path: str, bounds: dict[int, tuple[float, float]]) -> None:
    """Refuse a sample beyond the bench bounds; then scale every column to SI."""
    for c in cols:
        is_time = c is time_col
        bound, unit = (MAX_ABS_TIME_S, "s") if is_time else (MAX_ABS_VOLTS, "V")
        lim = bound / c.scale
        v = c.values
        lo, hi = bounds[id(c)]
        if hi > lim or lo < -lim:
            i = int(np.flatnonzero(np.abs(v) > lim)[0])
            line, where = locate.where(i)
            raw = float(v[i])
            with np.errstate(over="ignore"):
                si = raw * c.scale
            if c.scale == 1.0:
                said = f"{raw:.6g} {unit}"
            elif math.isfinite(si):
                said = f"{raw:.6g} in the column's unit (that is {si:.6g} {unit})"
            else:
                said = f"{raw:.6g} in the column's unit (too large to express in {unit})"
            what = "time" if is_time else "sample"
            raise OutOfRangeError(
                f"the {what} {said} in {c.label()} on {where} is beyond anything a bench "
                f"capture holds (plausible: within \u00b1{bound:g} {unit}); check the column's "
                f"unit and the scope's export settings", path, line, c.number or None)
        if c.scale != 1.0:
            v *= c.scale
            c.scale = 1.0


def _check_time(t: np.ndarray, col: Column, locate: Locator, path: str) -> None:
    stalls = t[1:] <= t[:-1]  # a boolean, not a float difference: less memory
    if not stalls.any():
        return
    i = int(np.argmax(stalls)) + 1
    line, where = locate.where(i)
    _, before = locate.where(i - 1)
    what = "repeats" if t[i] == t[i - 1] else "goes backwards"
    raise TimeAxisError(
        f"time {what} on {where}: {t[i]:.9g} s after {t[i - 1]:.9g} s on {before}; "
        f"the time column {col.name or col.number!r} must increase steadily",
        path, line, col.number or None)


def _grid_deviation(t: np.ndarray, dt: float) -> tuple[float, int]:
    """Largest |t[k] - (t[0] + k dt)| and where, in blocks to bound memory."""
    n = t.shape[0]
    worst, at = 0.0, 0
    block = 1 << 16  # a block's temporaries stay in the processor's cache
    step = dt * np.arange(min(n, block), dtype=np.float64)  # k dt within a block
    dev = np.empty_like(step)
    t0 = float(t[0])
    for a in range(0, n, block):
        b = min(n, a + block)
        d = dev[:b - a]
        np.subtract(t[a:b], t0 + dt * a, out=d)
        d -= step[:b - a]
        np.abs(d, out=d)
        k = int(np.argmax(d))
        if d[k] > worst:
            worst, at = float(d[k]), a + k
    return worst, at


def _unique_names(cols: list[Column]) -> list[str]:
    taken: set[str] = set()
    out = []
    for i, c in enumerate(cols, start=1):
        base = c.name.strip() or f"CH{i}"
        name, j = base, 2
        while name in taken:
            name, j = f"{base}_{j}", j + 1
        taken.add(name)
        out.append(name)
    return out


def assemble(columns: list[Column], *, path: str, locate: Locator, layout: str,
             metadata: Mapping[str, str] | None = None,
             warnings: list[TrueslopeWarning] | None = None,
             sample_interval_s: float | None = None,
             intrinsic_interval_s: float | None = None,
             decimal: str = ".",
             cancel: Callable[[], None] | None = None) -> Capture:
    """Apply the common rules and build the capture.

    Parameters
    ----------
    columns : list of Column
        All numeric columns of the file, in file order, of equal length.
    path : str
        The file, for messages.
    locate : Locator
        Row-to-line mapping for messages.
    layout : str
        Description of the layout recognised.
    metadata : mapping, optional
        Preamble key/values.
    warnings : list, optional
        Warnings of the reader so far (this function adds its own).
    sample_interval_s : float, optional
        The caller's interval, seconds; used when the file has no time axis of
        its own, overriding the preamble.
    intrinsic_interval_s : float, optional
        An interval fixed by the layout itself (a WAV sample rate); treated
        like a time column.
    decimal : str, optional
        Decimal separator of the file, for numbers in the preamble.
    cancel : callable, optional
        Raises :class:`~trueslope.core.errors.Cancelled` when the caller wants to stop.

    Raises
    ------
    EmptyCaptureError, TooFewSamplesError, NonFiniteDataError, TimeAxisError,
    NoSampleIntervalError, CaptureFormatError
    """
    meta = dict(metadata or {})
    warns = list(warnings or [])
    check = cancel or (lambda: None)
    if not columns or columns[0].values.shape[0] == 0:
        raise EmptyCaptureError("no data rows: the file holds no numbers to read", path)
    n = columns[0].values.shape[0]
    if len(columns) > MAX_COLUMNS:
        raise CaptureFormatError(
            f"{len(columns)} columns; trueslope reads at most {MAX_COLUMNS} (a time column and "
            f"the channels of one instrument)", path)

    kept = []
    for c in columns:
        if n and math.isnan(c.values[0]) and np.isnan(c.values).all():
            if c.name:
                warns.append(TrueslopeWarning(
                    "empty-column", f"{c.label()} holds no numbers; it was left out"))
            continue
        kept.append(c)
    if not kept:
        raise EmptyCaptureError("every column is empty: there are no numbers to read", path)

    index_cols = [c for c in kept if c.quantity is None and _is_index(c.values)]
    others = [c for c in kept if all(c is not i for i in index_cols)]
    if not others:
        raise EmptyCaptureError(
            f"no channel: {index_cols[0].label()} only counts samples (0, 1, 2, ...); "
            f"expected at least one column of voltage samples", path)
    check()

    time_col: Column | None = None
    for c in others:
        if c.quantity == "time":
            time_col = c
            break
    if time_col is None:
        for c in others:
            if c.quantity is None and c.name and _is_time_name(c.name):
                time_col = c
                break
    if time_col is None and len(others) > 1:
        first = others[0]
        if (first.quantity is None and not _CHANNEL_LIKE.match(first.name.strip().lower())
                and _rises_steadily(first.values)):
            time_col = first

    channels = []
    for c in others:
        if c is time_col:
            continue
        if c.quantity == "time":
            warns.append(TrueslopeWarning(
                "extra-time-column",
                f"{c.label()} is in units of time but is not the time axis; it was left out"))
            continue
        channels.append(c)
    if not channels:
        what = f"{time_col.label()} is the time axis" if time_col else "no column"
        raise EmptyCaptureError(
            f"no voltage channel: {what} and no other column holds samples; expected at "
            f"least one column of voltages besides time", path)

    if n < MIN_SAMPLES:
        raise TooFewSamplesError(
            f"only {n} sample{'s' if n != 1 else ''} found; at least {MIN_SAMPLES} are needed "
            f"to measure a ramp", path)

    checked = ([time_col] if time_col else []) + channels
    bounds = _bounds(checked)
    _check_finite(checked, locate, path, bounds)
    _check_range(checked, time_col, locate, path, bounds)
    check()

    dt: float
    t0 = 0.0
    if time_col is not None:
        t = time_col.values
        _check_time(t, time_col, locate, path)
        dt = float((t[-1] - t[0]) / (n - 1))
        t0 = float(t[0])
        worst, at = _grid_deviation(t, dt)
        if worst > NONUNIFORM_FRACTION * dt:
            _, where = locate.where(at)
            warns.append(TrueslopeWarning(
                "non-uniform-time",
                f"the time column is not evenly spaced: it is off a uniform grid by up to "
                f"{100.0 * worst / dt:.3g} % of the sample interval (worst at {where}); trueslope "
                f"uses the uniform grid dt = (t_last - t_first) / (n - 1) = {format_si(dt, 's')}"))
        source = f"the time column {time_col.name or time_col.number!r}"
    elif intrinsic_interval_s is not None:
        dt = float(intrinsic_interval_s)
        source = "the file's sample rate"
    else:
        meta_dt, meta_key, meta_warns = interval_from_metadata(meta, decimal)
        warns.extend(meta_warns)
        if sample_interval_s is not None:
            dt = float(sample_interval_s)
            if meta_dt is not None and abs(meta_dt - dt) > INTERVAL_AGREEMENT * dt:
                warns.append(TrueslopeWarning(
                    "interval-overridden",
                    f"the preamble says {meta_key!r} = {meta[meta_key]!r} "
                    f"({format_si(meta_dt, 's')}); the sample interval given, "
                    f"{format_si(dt, 's')}, was used instead"))
            source = "the sample interval given"
        elif meta_dt is not None:
            dt = meta_dt
            source = f"the preamble entry {meta_key!r}"
        else:
            raise NoSampleIntervalError(
                "no time column, no sample interval or sample rate in a preamble, and no "
                "sample interval given: the time between samples is unknown. Give the "
                "sample interval, e.g. 1u for 1 microsecond per sample", path)
    if time_col is not None or intrinsic_interval_s is not None:
        if sample_interval_s is not None and abs(sample_interval_s - dt) > INTERVAL_AGREEMENT * dt:
            warns.append(TrueslopeWarning(
                "interval-ignored",
                f"the sample interval given ({format_si(sample_interval_s, 's')}) was not used: "
                f"{source} gives {format_si(dt, 's')}"))
    if not (math.isfinite(dt) and MIN_INTERVAL_S <= dt <= MAX_INTERVAL_S):
        raise OutOfRangeError(
            f"the sample interval from {source} works out as {dt:.6g} s, beyond anything a "
            f"bench instrument samples at (plausible: {MIN_INTERVAL_S:g} s to "
            f"{MAX_INTERVAL_S:g} s)", path)

    names = _unique_names(channels)
    chans = {name: np.ascontiguousarray(c.values, dtype=np.float64)
             for name, c in zip(names, channels)}
    time_name = None
    if time_col is not None:
        time_name = time_col.name or f"column {time_col.number}"
    return Capture(source=path, channels=chans, sample_interval_s=dt, t0_s=t0,
                   metadata=meta, warnings=tuple(warns), time_column=time_name, layout=layout)
