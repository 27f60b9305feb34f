"""Several captures side by side: differences from a reference, a ranking, group statistics,
limit verdicts, and the averaged residuals overlaid on one normalised axis.

Measuring: :func:`measure_files` analyses files in worker processes (``spawn``, safe
beside a running window) and returns one :class:`MeasuredFile` per path, in order, each
holding its analysis or its error; a bad file never stops the others. Comparing:
:func:`compare` reads those entries and returns a :class:`Comparison` of numbers and
codes (``report`` words them).

The overlay puts every capture's averaged residual over its fit window on the phase
``u = t / T`` (``T`` the mean ramp time, so 0 is the ramp start and 1 its end) in % of
its fitted span, resampled by linear interpolation onto one grid of
:data:`OVERLAY_POINTS` points: captures at different rates and amplitudes whose ramps
bend alike (for a shunt, the same ``T / (R C)``) then lie on one curve
(SOURCES.md [loading]).
"""

from __future__ import annotations

import concurrent.futures as cf
import fnmatch
import hashlib
import math
import multiprocessing
import os
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .analysis import analyse_file
from .capture import CancelFn, ProgressFn, stop_if_cancelled
from .errors import Cancelled, SettingsError, TrueslopeError
from .jsonable import ToDict
from .limits import NUMBER_FIGURES, LimitVerdict, Limits, judge, overall
from .results import Analysis
from .settings import Settings

#: Points of the overlay's common phase grid.
OVERLAY_POINTS = 200
#: Figures compared by default: every number figure of ``results.Figures``.
COMPARED_FIGURES: tuple[str, ...] = NUMBER_FIGURES
#: Group of a capture no pattern matches; group of every capture when no groups are given.
UNGROUPED = "ungrouped"
ALL = "all"
#: Bytes read at a time by :func:`sha256_of`.
HASH_BLOCK_BYTES = 1 << 20


@dataclass(frozen=True)
class MeasuredFile:
    """One capture file measured, or the reason it could not be.

    ``path`` as given; ``sha256`` of the file's bytes (hex; None when unreadable);
    ``analysis`` or, when it failed, ``error_type`` (the error's class name) and
    ``error_message`` (one line, starting with the file's name); ``group`` an explicit
    group, which wins over the patterns given to :func:`compare`. Not a ``ToDict``:
    :class:`Comparison` carries what of it goes to JSON.
    """

    path: str
    sha256: str | None
    analysis: Analysis | None = None
    error_type: str | None = None
    error_message: str | None = None
    group: str | None = None

    @property
    def ok(self) -> bool:
        return self.analysis is not None


@dataclass(frozen=True)
class ComparedEntry(ToDict):
    """One capture in a comparison: ``status`` ``"ok"`` or ``"error"`` (then ``error_type``
    and ``error_message``); its ``group``; ``rank`` by nonlinearity (1 = straightest; errors
    ranked last); the diagnosis ``signature`` and ``strength`` (peak model deviation over
    the floor); ``nonlinearity_pct``, ``nonlinearity_floor_pct``, ``below_floor``; the
    ``limits`` verdict when limits were given (None for an error entry)."""

    path: str
    sha256: str | None
    group: str
    status: str
    rank: int
    is_reference: bool
    error_type: str | None = None
    error_message: str | None = None
    signature: str | None = None
    strength: float | None = None
    nonlinearity_pct: float | None = None
    nonlinearity_floor_pct: float | None = None
    below_floor: bool | None = None
    limits: LimitVerdict | None = None


@dataclass(frozen=True)
class FigureDifference(ToDict):
    """A figure of one capture beside the reference's: ``difference = value -
    reference_value`` (figure's unit) and ``difference_pct = 100 difference /
    |reference_value|`` (None when the reference is 0 or either is missing)."""

    figure: str
    value: float | None
    reference_value: float | None
    difference: float | None
    difference_pct: float | None


@dataclass(frozen=True)
class CaptureFigures(ToDict):
    """The compared figures of one good capture, in ``Comparison.figures`` order."""

    path: str
    group: str
    figures: tuple[FigureDifference, ...]


@dataclass(frozen=True)
class GroupStatistics(ToDict):
    """One figure over the good captures of one group, missing values left out:
    ``count`` of values, ``mean``, sample standard deviation ``std`` (ddof = 1; None below
    two values), ``min``, ``max`` (figure's unit)."""

    group: str
    figure: str
    count: int
    mean: float | None
    std: float | None
    min: float | None
    max: float | None


@dataclass(frozen=True)
class OverlayCurve(ToDict):
    """One capture's averaged residual (measurement frame: the same physics bends the
    same way on rising and falling ramps) and its systematic (smoothed) part, % of its
    fitted span, on ``Overlay.u``; NaN outside its own fit window."""

    path: str
    group: str
    residual_pct: np.ndarray
    smoothed_residual_pct: np.ndarray


@dataclass(frozen=True)
class Overlay(ToDict):
    """``u``: the common grid of normalised ramp time (0 = ramp start, 1 = ramp end)."""

    u: np.ndarray
    curves: tuple[OverlayCurve, ...]


@dataclass(frozen=True)
class Comparison(ToDict):
    """Several captures compared.

    Attributes
    ----------
    reference : str or None
        Path of the reference capture (None when no capture could be measured).
    figures : tuple of str
        The compared figures (keys of ``results.Figures``).
    entries : tuple of ComparedEntry
        Every capture, in the order given.
    table : tuple of CaptureFigures
        Each good capture's figures and differences from the reference, in entry order.
    ranking : tuple of str
        Paths by rank: good captures by nonlinearity (straightest first), then the errors.
    statistics : tuple of GroupStatistics
        Per group (in order of first appearance) and figure.
    overlay : Overlay
    limits_source : str or None
        The limits file judged against, if any.
    verdict : str or None
        Over every capture: ``"fail"`` if any fails, else ``"undecided"`` if any is (a
        capture that could not be measured counts as undecided), else ``"pass"``; None
        without limits.
    """

    reference: str | None
    figures: tuple[str, ...]
    entries: tuple[ComparedEntry, ...]
    table: tuple[CaptureFigures, ...]
    ranking: tuple[str, ...]
    statistics: tuple[GroupStatistics, ...]
    overlay: Overlay
    limits_source: str | None = None
    verdict: str | None = None


# ------------------------------------------------------------------ measuring

def sha256_of(path: str | Path, block_bytes: int = HASH_BLOCK_BYTES) -> str:
    """SHA-256 of a file's bytes, hex, read in blocks of ``block_bytes``.

    Raises
    ------
    OSError
        The file cannot be read.
    """
    h = hashlib.sha256()
    with open(path, "rb") as f:
        while block := f.read(block_bytes):
            h.update(block)
    return h.hexdigest()


def _one_line(name: str, exc: BaseException) -> str:
    if isinstance(exc, TrueslopeError):
        text = " ".join(str(exc).split())
    elif isinstance(exc, OSError):
        text = f"cannot be read ({exc.strerror or type(exc).__name__})"
    else:  # never a Python message: name the failure only
        text = f"could not be measured ({type(exc).__name__})"
    return text if text.startswith(name) else f"{name}: {text}"


def measure_one(path: str, settings: Settings | None = None,
                sample_interval_s: float | None = None) -> MeasuredFile:
    """Hash and analyse one file; any failure becomes an error entry (never raised),
    except :class:`Cancelled`. ``sample_interval_s`` serves a file with no time axis."""
    name = Path(path).name
    digest = None
    try:
        digest = sha256_of(path)
        return MeasuredFile(path=path, sha256=digest,
                            analysis=analyse_file(path, settings, sample_interval_s))
    except Cancelled:
        raise
    except Exception as exc:  # a bad file never stops the others
        return MeasuredFile(path=path, sha256=digest, error_type=type(exc).__name__,
                            error_message=_one_line(name, exc))


def measure_files(paths: Iterable[str | Path],
                  settings_for: Callable[[str], Settings | None] | None = None,
                  jobs: int = 2, progress: ProgressFn | None = None,
                  cancel: CancelFn | None = None,
                  sample_interval_s: float | None = None) -> tuple[MeasuredFile, ...]:
    """Analyse capture files, in worker processes when ``jobs`` > 1.

    Parameters
    ----------
    paths : iterable of str or Path
    settings_for : callable(path str) -> Settings or None, optional
        The settings of each file, called here (not in the workers); default settings
        when omitted or when it returns None.
    jobs : int
        Worker processes (``spawn`` start method); 1, or a single file, runs here in
        turn. When processes cannot be started the files are measured here instead.
    progress : callable(float), optional
        Fraction of the files done, 0 to 1.
    cancel : callable() -> bool, optional
        Polled between files; returning True stops the pool and raises
        :class:`Cancelled`.
    sample_interval_s : float, optional
        The sample interval of files with no time axis (a time axis wins).

    Returns
    -------
    tuple of MeasuredFile
        One per path, in the order given; a file that could not be read or measured
        holds its error type and a one-line message naming it.
    """
    todo = [str(p) for p in paths]
    chosen = [settings_for(p) if settings_for else None for p in todo]
    report = progress or (lambda f: None)
    report(0.0)
    out: list[MeasuredFile | None] = [None] * len(todo)
    workers = max(1, min(int(jobs), len(todo), os.cpu_count() or 1))
    if workers > 1:
        try:
            _in_pool(todo, chosen, out, workers, report, cancel, sample_interval_s)
        except (OSError, NotImplementedError, cf.BrokenExecutor):
            pass  # no processes here (a sandbox, a frozen build): the rest runs in turn
    for i, p in enumerate(todo):
        if out[i] is None:
            stop_if_cancelled(cancel)
            out[i] = measure_one(p, chosen[i], sample_interval_s)
            report(sum(o is not None for o in out) / len(todo))
    return tuple(out)  # type: ignore[arg-type]


def _in_pool(todo: list[str], chosen: list[Settings | None], out: list, workers: int,
             report: ProgressFn, cancel: CancelFn | None, dt: float | None) -> None:
    ctx = multiprocessing.get_context("spawn")
    with cf.ProcessPoolExecutor(max_workers=workers, mp_context=ctx) as pool:
        futures = {pool.submit(measure_one, p, s, dt): i for i, (p, s) in
                   enumerate(zip(todo, chosen))}
        try:
            for fut in cf.as_completed(futures):
                out[futures[fut]] = fut.result()
                report(sum(o is not None for o in out) / len(todo))
                stop_if_cancelled(cancel)
        except BaseException:
            pool.shutdown(wait=True, cancel_futures=True)
            raise


# ------------------------------------------------------------------ comparing

def group_of(path: str, patterns: Mapping[str, str] | None) -> str:
    """The group of a file by the glob ``patterns`` (group name -> pattern) on its base
    name, case ignored, first match wins; :data:`UNGROUPED` when none matches,
    :data:`ALL` when there are no patterns."""
    if not patterns:
        return ALL
    name = Path(path).name.lower()
    for group, pattern in patterns.items():
        if fnmatch.fnmatchcase(name, pattern.lower()):
            return group
    return UNGROUPED


def _value(analysis: Analysis, figure: str) -> float | None:
    v = getattr(analysis.figures, figure)
    if v is None or isinstance(v, bool):
        return None
    v = float(v)
    return v if math.isfinite(v) else None


def _difference(figure: str, v: float | None, ref: float | None) -> FigureDifference:
    if v is None or ref is None:
        return FigureDifference(figure, v, ref, None, None)
    d = v - ref
    return FigureDifference(figure, v, ref, d, 100.0 * d / abs(ref) if ref != 0.0 else None)


def _statistics(group: str, figure: str, values: list[float | None]) -> GroupStatistics:
    x = np.array([v for v in values if v is not None], dtype=float)
    n = int(x.size)
    if n == 0:
        return GroupStatistics(group, figure, 0, None, None, None, None)
    return GroupStatistics(group, figure, n, float(np.mean(x)),
                           float(np.std(x, ddof=1)) if n > 1 else None,
                           float(np.min(x)), float(np.max(x)))


def _overlay(good: list[tuple[MeasuredFile, str]]) -> Overlay:
    pieces = []
    for m, group in good:
        av, span = m.analysis.averaged, abs(m.analysis.figures.fitted_span_v)
        keep = np.asarray(av.in_window, dtype=bool) & np.isfinite(av.smoothed_residual_v) \
            & np.isfinite(av.residual_v)
        if np.count_nonzero(keep) < 2 or not span > 0.0:
            continue
        u = np.asarray(av.time_s, dtype=float)[keep] / av.ramp_time_s
        order = np.argsort(u, kind="stable")
        pieces.append((m.path, group, u[order], 100.0 * av.residual_v[keep][order] / span,
                       100.0 * av.smoothed_residual_v[keep][order] / span))
    if not pieces:
        return Overlay(np.zeros(0), ())
    grid = np.linspace(min(p[2][0] for p in pieces), max(p[2][-1] for p in pieces),
                       OVERLAY_POINTS)
    curves = []
    for path, group, u, r, s in pieces:
        outside = (grid < u[0]) | (grid > u[-1])
        ri, si = np.interp(grid, u, r), np.interp(grid, u, s)
        ri[outside] = np.nan
        si[outside] = np.nan
        curves.append(OverlayCurve(path, group, ri, si))
    return Overlay(grid, tuple(curves))


def _pick_reference(good: list[MeasuredFile], reference: str | Path | None) -> MeasuredFile:
    if reference is None:
        return good[0]
    want = str(reference)
    for m in good:
        if m.path == want or Path(m.path) == Path(want):
            return m
    for m in good:
        if Path(m.path).name == Path(want).name:
            return m
    raise SettingsError(f"{Path(want).name} is not among the captures that could be "
                        f"measured", "reference")


def compare(entries: Sequence[MeasuredFile], reference: str | Path | None = None,
            groups: Mapping[str, str] | None = None, limits: Limits | None = None,
            figures: Sequence[str] | None = None) -> Comparison:
    """Compare measured captures.

    Parameters
    ----------
    entries : sequence of MeasuredFile
        From :func:`measure_files`, or built by the caller.
    reference : str or Path, optional
        The reference capture's path (or base name); default the first good one.
    groups : mapping of group name -> glob pattern, optional
        Groups by base name (:func:`group_of`); an entry's own ``group`` wins.
    limits : Limits, optional
        Judged on every good capture (``limits.judge``).
    figures : sequence of str, optional
        Figures to compare, default :data:`COMPARED_FIGURES`.

    Returns
    -------
    Comparison

    Raises
    ------
    SettingsError
        ``reference`` is not a good capture (``field="reference"``) or a figure named
        is not a number figure (``field="figures"``).
    """
    names = tuple(figures) if figures is not None else COMPARED_FIGURES
    unknown = [f for f in names if f not in NUMBER_FIGURES]
    if unknown:
        raise SettingsError(f"{unknown[0]} is not a number figure of a capture", "figures")
    group_by = [m.group if m.group is not None else group_of(m.path, groups) for m in entries]
    good = [m for m in entries if m.ok]
    ref = _pick_reference(good, reference) if good else None
    ranked = sorted((i for i, m in enumerate(entries) if m.ok),
                    key=lambda i: entries[i].analysis.figures.nonlinearity_pct)
    ranked += [i for i, m in enumerate(entries) if not m.ok]
    rank = {i: r + 1 for r, i in enumerate(ranked)}
    out_entries, table, verdicts = [], [], []
    for i, m in enumerate(entries):
        if not m.ok:
            out_entries.append(ComparedEntry(m.path, m.sha256, group_by[i], "error", rank[i],
                                             False, m.error_type, m.error_message))
            verdicts.append("undecided")
            continue
        a = m.analysis
        verdict = judge(a, limits) if limits is not None else None
        if verdict is not None:
            verdicts.append(verdict.verdict)
        out_entries.append(ComparedEntry(
            m.path, m.sha256, group_by[i], "ok", rank[i], m is ref,
            signature=a.diagnosis.signature, strength=float(a.diagnosis.strength),
            nonlinearity_pct=float(a.figures.nonlinearity_pct),
            nonlinearity_floor_pct=float(a.figures.nonlinearity_floor_pct),
            below_floor=bool(a.figures.below_floor), limits=verdict))
        table.append(CaptureFigures(m.path, group_by[i], tuple(
            _difference(f, _value(a, f), _value(ref.analysis, f)) for f in names)))
    order = list(dict.fromkeys(group_by[i] for i, m in enumerate(entries) if m.ok))
    stats = tuple(_statistics(g, f, [_value(m.analysis, f) for i, m in enumerate(entries)
                                     if m.ok and group_by[i] == g])
                  for g in order for f in names)
    overlay = _overlay([(m, group_by[i]) for i, m in enumerate(entries) if m.ok])
    return Comparison(reference=ref.path if ref else None, figures=names,
                      entries=tuple(out_entries), table=tuple(table),
                      ranking=tuple(entries[i].path for i in ranked), statistics=stats,
                      overlay=overlay,
                      limits_source=limits.source if limits is not None else None,
                      verdict=overall(verdicts) if limits is not None else None)
