"""The one conversion of trueslope's dataclasses to plain JSON types.

Every result, the settings and the circuit context are frozen dataclasses that
inherit :class:`ToDict`; nothing writes its own ``to_dict``. NaN and infinity
become ``None`` (JSON has neither), numpy scalars and arrays become Python
numbers and lists, tuples become lists, warnings become their sentence.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np


def plain(value: Any) -> Any:
    """``value`` as plain JSON types (recursively)."""
    if isinstance(value, np.ndarray):
        return [plain(v) for v in value.tolist()]
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, (np.floating, float)):
        f = float(value)
        return f if math.isfinite(f) else None
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if isinstance(value, dict):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, ToDict):
        return value.to_dict()
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: plain(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if hasattr(value, "code") and hasattr(value, "message"):  # a TrueslopeWarning
        return str(value)
    return value


class ToDict:
    """Mixin: ``to_dict()`` of a dataclass's fields, plus the properties named in
    ``JSON_EXTRA`` (derived figures a reader of the JSON wants spelled out)."""

    JSON_EXTRA: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        d = {f.name: plain(getattr(self, f.name))
             for f in dataclasses.fields(self)}  # type: ignore[arg-type]
        for name in self.JSON_EXTRA:
            d[name] = plain(getattr(self, name))
        return d
