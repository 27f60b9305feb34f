"""The lazy per-cycle list and the phase sums taken away from a pass.

``CycleList`` must read as the tuple of ``CycleFigures`` records that the
dataclass's own constructor builds from the same columns (reference: Python's
``dataclasses`` and ``tuple``). ``fit.without`` must leave the phase sums that a
direct per-sample binning of the kept cycles gives (reference: plain
``numpy.bincount`` over each kept cycle's ramp samples, written here), so
leaving cycles out needs no second pass over the record.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from tests.support.synth import exponential, sawtooth
from trueslope.core.analysis import analyse
from trueslope.core.fit import cycle_pass, without
from trueslope.core.percycle import cycle_column
from trueslope.core.results import CycleFigures
from trueslope.core.segment import segment


@pytest.fixture(scope="module")
def analysed():
    cap = sawtooth(exponential(0.1), cycles=40, samples_per_ramp=300, retrace_samples=7.3,
                   bits=10, noise_v=2e-3, seed=4)
    return analyse(cap)


def _by_constructor(cycles, i):
    c = cycles
    return CycleFigures(
        index=i, ramp_start_s=float(c.ramp_start_s[i]), ramp_time_s=float(c.ramp_time_s[i]),
        retrace_time_s=float(c.retrace_time_s[i]), period_s=float(c.period_s[i]),
        offset_v=float(c.offset_v[i]), start_v=float(c.start_v[i]), end_v=float(c.end_v[i]),
        amplitude_v=float(c.amplitude_v[i]), slope_v_per_s=float(c.slope_v_per_s[i]),
        slope_ci95_v_per_s=(float(c.slope_ci_low_v_per_s[i]),
                            float(c.slope_ci_high_v_per_s[i])),
        peak_deviation_v=float(c.peak_deviation_v[i]),
        nonlinearity_pct=float(c.nonlinearity_pct[i]),
        terminal_nonlinearity_pct=float(c.terminal_nonlinearity_pct[i]),
        residual_rms_v=float(c.residual_rms_v[i]), outlier=bool(c.outlier[i]),
        excluded=bool(c.excluded[i]))


def test_cycle_list_reads_as_the_tuple_of_records(analysed):
    cycles = analysed.cycles
    reference = tuple(_by_constructor(cycles, i) for i in range(len(cycles)))
    assert len(cycles) == len(reference) == analysed.figures.full_cycles
    assert tuple(cycles) == reference and cycles == reference
    assert cycles[-1] == reference[-1] and cycles[3:7] == reference[3:7]
    assert [c.index for c in cycles] == list(range(len(reference)))
    assert cycles[5].to_dict() == reference[5].to_dict()
    assert dataclasses.replace(cycles[2], excluded=True).excluded
    with pytest.raises(IndexError):
        cycles[len(reference)]
    marked = cycles.with_excluded(np.arange(len(cycles)) == 2)
    assert marked[2].excluded and not marked[1].excluded and not cycles[2].excluded


@pytest.mark.parametrize("name", ["index", "ramp_start_s", "slope_v_per_s", "offset_v",
                                  "nonlinearity_pct", "outlier", "excluded"])
def test_a_column_reads_as_the_records_field(analysed, name):
    """``cycle_column`` gives the field of every record, from the list's own arrays and
    from a plain tuple of records alike (reference: the records built by the constructor)."""
    cycles = analysed.cycles.with_excluded(np.arange(len(analysed.cycles)) % 7 == 3)
    reference = tuple(_by_constructor(cycles, i) for i in range(len(cycles)))
    want = [getattr(c, name) for c in reference]
    for source in (cycles, reference):
        got = cycle_column(source, name)
        assert got.tolist() == want
    assert cycle_column(cycles, name).flags.writeable is False  # the list's arrays stay as they are


def test_sums_taken_away_equal_a_direct_binning_of_the_kept_cycles():
    cap = sawtooth(exponential(0.05), cycles=48, samples_per_ramp=250, retrace_samples=5.6,
                   bits=12, noise_v=1e-3, seed=9)
    x, dt = cap.channels["CH1"], cap.sample_interval_s
    seg = segment(x, dt)
    n, groups, bins = seg.ramp_start_s.size, 8, 200
    gone = np.zeros(n, dtype=bool)
    gone[[0, 5, 17, n - 1]] = True
    cyc, total = cycle_pass(x, dt, 0.0, seg, 0.05, None, bins, groups=groups)
    part = dataclasses.replace(seg, ramp_start_s=seg.ramp_start_s[gone],
                               ramp_end_s=seg.ramp_end_s[gone],
                               retrace_end_s=seg.retrace_end_s[gone])
    _, some = cycle_pass(x, dt, 0.0, part, 0.05, None, bins, groups=groups,
                         member=np.flatnonzero(gone) % groups)
    kept = without(total, some)
    # reference: every ramp sample of each kept cycle binned by its phase, numpy.bincount
    count = np.zeros((groups, bins))
    volts = np.zeros((groups, bins))
    for c in np.flatnonzero(~gone):
        ps, pe = seg.ramp_start_s[c] / dt, seg.ramp_end_s[c] / dt
        k = np.arange(int(np.ceil(ps - 1e-9)), int(np.floor(pe + 1e-9)) + 1)
        u = (k - ps) / (pe - ps)
        inside = u <= 1.0
        b = np.minimum((u[inside] * bins).astype(int), bins - 1)
        count[c % groups] += np.bincount(b, minlength=bins)
        volts[c % groups] += np.bincount(b, x[k[inside]], minlength=bins)
    np.testing.assert_array_equal(kept.group_count, count)
    np.testing.assert_allclose(kept.group_voltage_v, volts, rtol=1e-12, atol=1e-9)
    np.testing.assert_array_equal(kept.count, count.sum(axis=0))
    np.testing.assert_allclose(kept.voltage_v, volts.sum(axis=0), rtol=1e-12, atol=1e-9)
