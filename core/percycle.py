"""Every cycle's figures as columns, each :class:`~trueslope.core.results.CycleFigures`
record built only when it is asked for.

A capture of 100 000 cycles gives 100 000 records; building them as Python
objects costs more than measuring the capture, and most uses (the terminal
summary, the averaged figures) read none of them. :class:`CycleList` keeps the
columns and behaves as the tuple of records it stands for: ``len``, indexing,
slicing, iteration and comparison build records on demand.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, fields
from typing import Iterator, overload

import numpy as np

from .results import CycleFigures

#: The record's fields in order; ``slope_ci95_v_per_s`` is stored as two columns.
_FIELDS = tuple(f.name for f in fields(CycleFigures))


@dataclass(frozen=True, eq=False)
class CycleList(Sequence):
    """Per-cycle figures in true polarity, one array entry per full cycle.

    The columns are those of :class:`~trueslope.core.results.CycleFigures`
    (``slope_ci95_v_per_s`` as ``slope_ci_low_v_per_s`` and
    ``slope_ci_high_v_per_s``); ``outlier`` and ``excluded`` are boolean. A cycle's
    ``index`` is its position.
    """

    ramp_start_s: np.ndarray
    ramp_time_s: np.ndarray
    retrace_time_s: np.ndarray
    period_s: np.ndarray
    offset_v: np.ndarray
    start_v: np.ndarray
    end_v: np.ndarray
    amplitude_v: np.ndarray
    slope_v_per_s: np.ndarray
    slope_ci_low_v_per_s: np.ndarray
    slope_ci_high_v_per_s: np.ndarray
    peak_deviation_v: np.ndarray
    nonlinearity_pct: np.ndarray
    terminal_nonlinearity_pct: np.ndarray
    residual_rms_v: np.ndarray
    outlier: np.ndarray
    excluded: np.ndarray

    def __len__(self) -> int:
        return int(self.ramp_start_s.size)

    @overload
    def __getitem__(self, i: int) -> CycleFigures: ...

    @overload
    def __getitem__(self, i: slice) -> tuple[CycleFigures, ...]: ...

    def __getitem__(self, i):
        if isinstance(i, slice):
            return tuple(self._records(range(len(self))[i]))
        n = len(self)
        k = int(i)
        if k < -n or k >= n:
            raise IndexError(f"cycle {i} out of range (0 to {n - 1})")
        return next(self._records([k % n]))

    def __iter__(self) -> Iterator[CycleFigures]:
        return self._records(range(len(self)))

    def __eq__(self, other: object) -> bool:
        if isinstance(other, (CycleList, tuple, list)):
            return len(self) == len(other) and all(a == b for a, b in zip(self, other))
        return NotImplemented

    __hash__ = None  # type: ignore[assignment]  # holds arrays, like the tuple it replaces

    def __repr__(self) -> str:
        return f"CycleList({len(self)} cycles)"

    def _records(self, positions) -> Iterator[CycleFigures]:
        """The records at ``positions``, built without the dataclass's ``__init__`` (each
        attribute set through ``__setattr__`` would cost as much as the figures)."""
        pos = np.asarray(positions, dtype=np.int64)
        cols = [pos.tolist()] + [getattr(self, name)[pos].tolist() for name in (
            "ramp_start_s", "ramp_time_s", "retrace_time_s", "period_s", "offset_v",
            "start_v", "end_v", "amplitude_v", "slope_v_per_s")]
        ci = zip(self.slope_ci_low_v_per_s[pos].tolist(),
                 self.slope_ci_high_v_per_s[pos].tolist())
        cols.append(list(ci))
        cols += [getattr(self, name)[pos].tolist() for name in (
            "peak_deviation_v", "nonlinearity_pct", "terminal_nonlinearity_pct",
            "residual_rms_v", "outlier", "excluded")]
        new = object.__new__
        for row in zip(*cols):
            c = new(CycleFigures)
            c.__dict__.update(zip(_FIELDS, row))
            yield c

    def with_excluded(self, excluded: np.ndarray) -> CycleList:
        """The same cycles, those in ``excluded`` (bool per cycle) marked left out by hand."""
        return CycleList(**{**{f.name: getattr(self, f.name) for f in fields(self)},
                            "excluded": np.asarray(excluded, dtype=bool)})


def cycle_column(cycles: Sequence[CycleFigures], name: str) -> np.ndarray:
    """One figure of every cycle as an array, without building records.

    ``name`` is a field of :class:`~trueslope.core.results.CycleFigures` (``index``,
    ``ramp_start_s``, ``outlier`` ...; not ``slope_ci95_v_per_s``, whose ends are the
    columns ``slope_ci_low_v_per_s`` and ``slope_ci_high_v_per_s`` of a
    :class:`CycleList`). A :class:`CycleList` gives its own column (read-only view); any
    other sequence of records is read record by record. ``None`` reads as NaN.
    """
    if isinstance(cycles, CycleList):
        col = (np.arange(len(cycles), dtype=np.int64) if name == "index"
               else getattr(cycles, name))
        view = col.view()
        view.flags.writeable = False
        return view
    if name in ("outlier", "excluded"):
        return np.fromiter((bool(getattr(c, name)) for c in cycles), dtype=bool,
                           count=len(cycles))
    if name == "index":
        return np.fromiter((c.index for c in cycles), dtype=np.int64, count=len(cycles))
    return np.fromiter((np.nan if getattr(c, name) is None else getattr(c, name)
                        for c in cycles), dtype=float, count=len(cycles))
