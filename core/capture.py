"""The capture: what every reader returns.

A capture holds uniformly sampled channels in SI volts, the sample interval
in seconds, the metadata found in the file and the warnings of the import.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable, Mapping

import numpy as np

from .errors import Cancelled, ChannelNotFoundError, TrueslopeWarning

#: What any bench capture can hold: samples within this many volts of zero (a high-voltage
#: probe reaches tens of kilovolts), and a sample interval between a femtosecond and a few
#: hours. Outside them a number is not a measurement (a unit mistake, a corrupt file), and
#: the computations that follow would overflow.
MAX_ABS_VOLTS = 1e5
SAMPLE_INTERVAL_RANGE_S = (1e-15, 1e4)

#: Signature of progress callbacks: called with a fraction in [0, 1].
ProgressFn = Callable[[float], None]
#: Signature of cancel flags: return True to stop the work.
CancelFn = Callable[[], bool]


def stop_if_cancelled(cancel: CancelFn | None, what: str = "analysis") -> None:
    """The one cancel convention of core: the caller's flag returns True, core raises
    :class:`~trueslope.core.errors.Cancelled` between blocks of work."""
    if cancel is not None and cancel():
        raise Cancelled(f"{what} cancelled")


@dataclass(frozen=True)
class Capture:
    """A uniformly sampled, multi-channel waveform record.

    Attributes
    ----------
    source : str
        File the capture came from (or a description for in-memory data).
    channels : Mapping[str, numpy.ndarray]
        Channel name to float64 samples in volts, all of one length.
    sample_interval_s : float
        Time between samples, seconds.
    t0_s : float
        Time of the first sample, seconds.
    metadata : Mapping[str, str]
        Preamble key/value pairs, as found.
    warnings : tuple of TrueslopeWarning
        Non-fatal findings of the import (truncated last line, ...).
    time_column : str or None
        Name of the column the time axis came from, if any.
    layout : str
        Short description of the layout recognised, e.g. ``"csv"``.
    """

    source: str
    channels: Mapping[str, np.ndarray]
    sample_interval_s: float
    t0_s: float = 0.0
    metadata: Mapping[str, str] = field(default_factory=dict)
    warnings: tuple[TrueslopeWarning, ...] = ()
    time_column: str | None = None
    layout: str = ""

    @property
    def channel_names(self) -> list[str]:
        return list(self.channels)

    @property
    def samples(self) -> int:
        first = next(iter(self.channels.values()), None)
        return 0 if first is None else int(first.shape[0])

    @property
    def sample_rate_hz(self) -> float:
        return 1.0 / self.sample_interval_s

    @property
    def duration_s(self) -> float:
        return self.samples * self.sample_interval_s

    def time_s(self) -> np.ndarray:
        """Time of every sample, seconds (computed on demand)."""
        return self.t0_s + self.sample_interval_s * np.arange(self.samples, dtype=float)

    def channel(self, key: str | int | None) -> tuple[str, np.ndarray]:
        """Return ``(name, samples)`` of a channel chosen by name or 0-based index.

        Names match case-insensitively, and a 1-based ``"CH2"``-style index is
        not guessed: pass the exact name or an integer index.

        Raises
        ------
        ChannelNotFoundError
            No channel has that name or index.
        """
        names = self.channel_names
        if key is None:
            return names[0], self.channels[names[0]]
        index = isinstance(key, str) and key.strip().isascii() and key.strip().isdigit()
        if isinstance(key, int) or (index and key not in self.channels):
            i = int(key)
            if 0 <= i < len(names):
                return names[i], self.channels[names[i]]
            raise ChannelNotFoundError(
                f"channel index {i} does not exist; the capture has {len(names)} "
                f"channel(s): {', '.join(names)}", self.source)
        if key in self.channels:
            return key, self.channels[key]
        for n in names:
            if n.strip().lower() == str(key).strip().lower():
                return n, self.channels[n]
        raise ChannelNotFoundError(
            f"no channel named {key!r}; the capture has: {', '.join(names)}", self.source)

    def to_dict(self) -> dict[str, Any]:
        """Plain-JSON description (without the samples)."""
        return {
            "source": self.source,
            "channels": self.channel_names,
            "samples": self.samples,
            "sample_interval_s": self.sample_interval_s,
            "t0_s": self.t0_s,
            "metadata": dict(self.metadata),
            "warnings": [str(w) for w in self.warnings],
            "time_column": self.time_column,
            "layout": self.layout,
        }
