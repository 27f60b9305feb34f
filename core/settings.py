"""Analysis settings: one immutable dataclass with documented defaults."""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from .circuit import CircuitContext
from .errors import SettingsError
from .jsonable import ToDict

#: Default fraction of each ramp's duration trimmed at each end of the fit window.
DEFAULT_TRIM_FRACTION = 0.05
#: Largest trim allowed: 0.4 at each end still leaves the middle fifth.
MAX_TRIM_FRACTION = 0.4


@dataclass(frozen=True)
class Settings(ToDict):
    """How a capture is measured.

    Attributes
    ----------
    trim_fraction : float
        Fraction of each ramp's duration left out of the fit at each end,
        0 to 0.4; default 0.05.
    window_s : (float, float) or None
        Explicit fit window in seconds from the ramp start. Overrides
        ``trim_fraction`` when given.
    channel : str, int or None
        Channel to measure, by name or 0-based index; None picks the first
        non-time column that holds a sawtooth.
    sync_channel : str, int or None
        Logic-level channel marking each reset, used for segmentation instead
        of the ramp itself.
    phase_bins : int or None
        Number of points of the averaged cycle; None chooses from the samples
        per ramp (at most 2000).
    context : CircuitContext or None
        What the user knows of the circuit (capacitance, current, probe...);
        enables the self-check.
    excluded_cycles : tuple of int
        Cycles (0-based indices in the cycle list) left out of the average by hand.
    """

    trim_fraction: float = DEFAULT_TRIM_FRACTION
    window_s: tuple[float, float] | None = None
    channel: str | int | None = None
    sync_channel: str | int | None = None
    phase_bins: int | None = None
    context: CircuitContext | None = None
    excluded_cycles: tuple[int, ...] = ()

    def __post_init__(self) -> None:
        t = self.trim_fraction
        if not (0.0 <= t <= MAX_TRIM_FRACTION):
            raise SettingsError(
                f"the trim fraction must be between 0 and {MAX_TRIM_FRACTION}, got {t}", "trim")
        if self.window_s is not None:
            a, b = self.window_s
            if not (0.0 <= a < b):
                raise SettingsError(
                    f"fit window must satisfy 0 <= start < end (seconds from the ramp "
                    f"start), got {a} to {b}", "window")
        if any(i < 0 for i in self.excluded_cycles):
            raise SettingsError("cycle numbers start at 0", "excluded_cycles")
        if self.phase_bins is not None and self.phase_bins < 16:
            raise SettingsError(f"must be at least 16, got {self.phase_bins}", "phase_bins")

    def with_(self, **changes: Any) -> "Settings":
        """Return a copy with some fields changed (validated again)."""
        return replace(self, **changes)
