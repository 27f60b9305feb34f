"""trueslope: ramp (sawtooth) linearity from oscilloscope exports.

The computation lives in :mod:`trueslope.core` (no Qt); the window in
:mod:`trueslope.app`.
"""

__version__ = "0.1.0"
