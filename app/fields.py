"""What the window calls each setting, and a settings error worded with that name.

Core's :class:`~trueslope.core.errors.SettingsError` names the setting by its
field (``"capacitance"``, ``"trim"``...) and never says where it was typed;
the command line prefixes its option, the window the label of its own field
from :data:`FIELD_LABELS`.
"""

from __future__ import annotations

from trueslope.core.errors import SettingsError

#: The window's label of every settings field core may name in an error.
FIELD_LABELS: dict[str, str] = {
    "capacitance": "Capacitance",
    "current": "Current",
    "set_resistor": "Set resistor",
    "reference": "Reference",
    "probe": "Probe",
    "tolerance": "Tolerance",
    "thresholds": "Comparator thresholds",
    "trim": "Trim each end",
    "window": "Fit window",
    "sample_interval": "Sample interval",
    "phase_bins": "Phase bins",
}


def field_label(field: str) -> str:
    """The window's label of a settings field (the field itself, made readable, if unknown)."""
    return FIELD_LABELS.get(field, field.replace("_", " ").capitalize())


def settings_message(exc: SettingsError) -> str:
    """``"<label>: <what was wrong>"``, or the message alone when no field is named."""
    return f"{field_label(exc.field)}: {exc.message}" if exc.field else exc.message
