"""One error family for trueslope, and its typed warnings.

Every error a user can cause derives from :class:`TrueslopeError`; the ones
about bad values also derive from :class:`ValueError` so callers may catch
either. Messages are written for a technician: which file, which line, what
was expected.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path


class TrueslopeError(Exception):
    """Base of every error trueslope raises on purpose."""


class CaptureError(TrueslopeError, ValueError):
    """A capture file could not be read as a waveform.

    Parameters
    ----------
    message : str
        What was wrong and what was expected.
    path : str or Path, optional
        The capture file.
    line : int, optional
        1-based line number in the file, where one applies.
    column : int, optional
        1-based column number, where one applies.
    """

    def __init__(self, message: str, path: str | Path | None = None,
                 line: int | None = None, column: int | None = None) -> None:
        self.message = message
        self.path = None if path is None else str(path)
        self.line = line
        self.column = column
        super().__init__(self.__str__())

    def __str__(self) -> str:
        where = []
        if self.path:
            where.append(Path(self.path).name)
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column {self.column}")
        prefix = ", ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class CaptureReadError(CaptureError):
    """The file could not be opened or read (missing, a folder, no permission)."""


class CaptureFormatError(CaptureError):
    """The text or binary layout is not one trueslope understands."""


class EmptyCaptureError(CaptureError):
    """The file holds no data at all, or no numeric rows."""


class RaggedRowsError(CaptureFormatError):
    """A data row has a different number of fields from the others."""


class UnknownUnitError(CaptureFormatError):
    """A column's unit is not one of s, ms, us, ns, V, mV, uV, kV."""


class TimeAxisError(CaptureError):
    """The time column goes backwards or repeats."""


class NonFiniteDataError(CaptureError):
    """A run of NaN or infinite samples in the data."""


class OutOfRangeError(CaptureError):
    """A sample, a time or the sample interval lies beyond anything a bench capture holds."""


class TooFewSamplesError(CaptureError):
    """Too few samples to measure anything."""


class NoSampleIntervalError(CaptureError):
    """No time column, no interval in the preamble and none given."""


class ChannelNotFoundError(CaptureError, KeyError):
    """The requested channel does not exist in the capture."""

    def __str__(self) -> str:  # KeyError would quote the message
        return CaptureError.__str__(self)


class AnalysisError(TrueslopeError, ValueError):
    """The capture was read but cannot be measured as a ramp."""


class NotASawtoothError(AnalysisError):
    """The waveform is not a sawtooth (a triangle, square, sine, DC...)."""


class NoFullCycleError(AnalysisError):
    """Not one full ramp cycle lies inside the record."""


class SettingsError(TrueslopeError, ValueError):
    """A setting is out of its allowed range or cannot be parsed.

    Parameters
    ----------
    message : str
        What was wrong and what was expected, without naming where it was typed.
    field : str, optional
        The setting it is about, by its field name in :class:`~trueslope.core.settings.Settings`
        or :class:`~trueslope.core.circuit.CircuitContext` (``"capacitance"``, ``"probe"``,
        ``"trim"``, ``"window"``...). The command line prefixes its option name, the
        window its form label; core never names either.
    """

    def __init__(self, message: str, field: str | None = None) -> None:
        self.message = message
        self.field = field
        super().__init__(message)


class LimitsError(SettingsError):
    """A limits file cannot be read, or a limit in it is not valid.

    ``field`` is the dotted key it is about (``"limits.slope_v_per_s.min"``), ``path``
    the limits file; the message is one line and starts with the file's name.
    """

    def __init__(self, message: str, field: str | None = None,
                 path: str | Path | None = None) -> None:
        self.path = None if path is None else str(path)
        super().__init__(message, field)


class OutputError(TrueslopeError):
    """An output file could not be written; the message names it."""


class OutputExistsError(OutputError, FileExistsError):
    """The output file exists and overwriting it was not asked for."""


class OutputIsInputError(OutputError, ValueError):
    """The output would land on one of the input files."""


class SessionError(TrueslopeError, ValueError):
    """A session file cannot be read: ``path`` the file, ``key`` where in it (or None)."""

    def __init__(self, message: str, path: str | Path, key: str | None = None) -> None:
        self.message, self.path, self.key = message, str(path), key
        where = Path(path).name + (f": {key}" if key else "")
        super().__init__(f"{where}: {message}")


class Cancelled(TrueslopeError):
    """The caller's cancel flag was raised; the work stopped cleanly."""


#: Every warning code trueslope attaches to a result, with what it means. A
#: warning with a code not listed here is a programming error.
WARNING_CODES: dict[str, str] = {
    # reading the file
    "header-mismatch": "the header names a different number of columns from the data rows",
    "truncated-last-line": "the last line was cut short (a capture still being written?) and "
                           "was dropped",
    "unreadable-interval": "the preamble states a sample interval or rate that cannot be read",
    "empty-column": "a column holds no numbers and was left out",
    "extra-time-column": "a second column in units of time is not the time axis and was "
                         "left out",
    "non-uniform-time": "the time column is not evenly spaced; a uniform grid from its first "
                        "and last times is used",
    "interval-overridden": "the sample interval given replaces the one the preamble states",
    "interval-ignored": "the sample interval given is not used: the file's time axis or "
                        "rate gives it",
    "non-numeric-field": "a field of a structured .npy array is not numeric and was left out",
    "integer-samples": "the samples are integers, taken as volts unscaled",
    "wav-uncalibrated": "WAV samples are in full-scale units, not volts",
    "wav-reader": "the WAV reader reported something unusual about the file",
    "truncated-data": "the file ends before the data its header declares; the whole samples "
                      "present were read",
    # measuring
    "below-resolution": "the nonlinearity is below what the capture can resolve",
    "few-cycles": "fewer than three full cycles: figures rest on little data",
    "single-cycle": "one full cycle: no spread between cycles, no outliers, a floor from the "
                    "sample noise alone",
    "unsteady-start": "the record starts before the ramp is steady; that stretch was left out",
    "unsteady-end": "the record ends after the ramp stops being steady; that stretch was "
                    "left out",
    "glitches": "isolated spike samples were bridged: no reset counted, kept out of the fits",
    "clipped": "the record is clipped by the scope's range; the fit avoids clipped samples "
               "and the figures they touch are bounds",
    "window-clipped": "the fit window asked for runs past the ramp's end; each ramp is fitted "
                      "to its own end",
    "excluded-cycles": "cycles left out of the average by hand",
    "outlying-cycles": "some cycles differ markedly from the rest and are left out of the "
                       "averaged figures",
}


@dataclass(frozen=True)
class TrueslopeWarning:
    """A typed, non-fatal finding attached to a result.

    Attributes
    ----------
    code : str
        Stable machine-readable identifier, e.g. ``"truncated-last-line"``.
    message : str
        Sentence for the user.
    """

    code: str
    message: str

    def __post_init__(self) -> None:
        if self.code not in WARNING_CODES:
            raise KeyError(f"warning code {self.code!r} is not in errors.WARNING_CODES")

    def __str__(self) -> str:
        return self.message
