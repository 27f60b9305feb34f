"""The words of :class:`~trueslope.core.absorption.AbsorptionFigures`: what the ramp measured
of dielectric absorption, the standard figure it implies and the assumption behind it.

Every number goes through :mod:`.numbers` (``si`` for times and resistances, ``pct``
for percentages), so the figures read the same here as everywhere else.
"""

from __future__ import annotations

from ..absorption import DIELECTRIC_ABSORPTION, AbsorptionFigures, DielectricPlacement
from .numbers import finite, pct, si

__all__ = ["absorption_lines", "placement_words"]


def _duration(seconds: float) -> str:
    """A duration as a technician reads it: minutes from one minute up, else SI-prefixed."""
    if finite(seconds) and seconds >= 60.0:
        return f"{seconds / 60.0:.3g} min"
    return si(seconds, "s", 4)


def _range(name: str) -> str:
    row = next(r for r in DIELECTRIC_ABSORPTION if r.dielectric == name)
    note = "" if row.basis == "published" else f", {row.basis}"
    return f"{name} ({pct(row.low_pct)} to {pct(row.high_pct)}{note})"


def placement_words(p: DielectricPlacement) -> str:
    """Where the standard figure falls among the typical dielectrics, in one sentence."""
    if p.position == "within":
        return "Typical of " + "; ".join(_range(n) for n in p.within) + "."
    if not finite(p.recovery_pct) or p.recovery_pct <= 0.0:
        return "No absorption seen at this time scale: below every dielectric in the table."
    where = {"below": "below every dielectric in the table",
             "above": "above every dielectric in the table",
             "between": "between the typical ranges of the table"}[p.position]
    return (f"{pct(p.recovery_pct)} is {where}; the nearest is {_range(p.nearest)}, "
            f"a factor {10 ** p.distance_decades:.2g} away.")


def absorption_lines(fig: AbsorptionFigures) -> list[str]:
    """Sentences for a report or the window: what a ramp capture measures of absorption.

    Parameters
    ----------
    fig : AbsorptionFigures

    Returns
    -------
    list of str
        The absorbed fraction per decade and the band it was seen in; the short-time
        recovery figure and its test; the extrapolated standard figure, the assumption
        behind it, and the figure the fitted branches alone give; the placement.
    """
    n = fig.visible_branches
    branches = f"{n} branch{'es' if n != 1 else ''}"
    lines = [
        f"Absorption seen at this ramp's time scale (time constants {si(fig.band_low_s, 's')} "
        f"to {si(fig.band_high_s, 's')}, {fig.band_decades:.2f} decades): "
        f"{pct(fig.absorbed_pct_per_decade)} of the capacitance per decade of time constant "
        f"({branches}, {pct(100.0 * fig.visible_ratio)} in all).",
        f"Short-time recovery: charged steady, shorted for {si(fig.short_short_s, 's')} "
        f"(one reset), opened and read {si(fig.short_read_s, 's')} later "
        f"({fig.short_read_s / fig.ramp_time_s:.3g} ramp times): "
        f"{pct(fig.short_recovery_pct)} of the charge voltage.",
    ]
    short = (f"through {si(fig.standard_short_ohm, 'ohm', 3)}" if fig.standard_short_ohm > 0
             else "(ideal short)")
    lines.append(
        f"Standard recovery test, extrapolated (charge {_duration(fig.standard_charge_s)}, "
        f"short {_duration(fig.standard_short_s)} {short}, open, highest reading within "
        f"{_duration(fig.standard_read_s)}): {pct(fig.standard_recovery_pct)}.")
    lines.append(f"Assumed, for time constants from {si(fig.spread_low_s, 's')} to "
                 f"{si(fig.spread_high_s, 's')}: {fig.assumption}.")
    lines.append(f"The fitted branches alone would give {pct(fig.standard_from_branches_pct)} "
                 "in that test (slower absorption than the ramp sees is not in them).")
    lines.append(placement_words(fig.placement))
    return lines
