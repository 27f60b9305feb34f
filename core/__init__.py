"""trueslope.core: pure computation (never imports Qt).

The pipeline is a short chain, one module each::

    io.load_capture -> segment.segment -> fit / linearity -> diagnose -> report

:func:`analyse` runs it all.
"""
