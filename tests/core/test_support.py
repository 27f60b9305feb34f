"""The shared test helpers themselves: the one ADC model, the case list, the ngspice gate."""

from __future__ import annotations

import numpy as np
import pytest

from tests.support import spice
from tests.support.quantise import full_scale_for, quantise


def test_quantise_is_widrows_mid_tread_adc():
    # formula (Widrow's quantiser model): code k = clip(round((v - lo) / q), 0, 2**bits - 1),
    # value lo + k q with q = (hi - lo) / 2**bits; worked by hand for a 3-bit ADC over 0..8 V
    v = np.array([-1.0, 0.0, 0.49, 0.51, 3.5, 7.4, 9.0])
    assert quantise(v, 3, (0.0, 8.0)).tolist() == [0.0, 0.0, 0.0, 1.0, 4.0, 7.0, 7.0]


def test_quantise_adds_numpys_seeded_noise_before_the_codes():
    v = np.linspace(0.0, 1.0, 1000)
    noise = np.random.default_rng(7).normal(0.0, 2e-3, v.size)  # reference: numpy's generator
    np.testing.assert_array_equal(quantise(v, None, (0.0, 1.0), 2e-3, seed=7), v + noise)
    fs = full_scale_for(v)
    assert fs == pytest.approx((-0.1, 1.1))
    q = (fs[1] - fs[0]) / 2 ** 10
    got = quantise(v, 10, fs, 2e-3, seed=7)
    np.testing.assert_allclose(got, v + noise, atol=0.5 * q + 1e-15)
    codes = (got - fs[0]) / q
    np.testing.assert_allclose(codes, np.round(codes), atol=1e-9)


def test_the_stored_cases_are_found():
    assert len(spice.list_cases()) >= 12
    assert "straight" in spice.list_cases()


def test_an_empty_case_folder_is_an_error_not_an_empty_list(tmp_path, monkeypatch):
    monkeypatch.setattr(spice, "FIXTURES", tmp_path)
    with pytest.raises(FileNotFoundError, match="no reference captures"):
        spice.list_cases()


@pytest.mark.parametrize("ci", ["", "false", "0"])
def test_missing_ngspice_skips_with_the_reason_outside_ci(monkeypatch, ci):
    monkeypatch.setattr(spice.shutil, "which", lambda name: None)
    monkeypatch.setenv("CI", ci)
    with pytest.raises(pytest.skip.Exception, match="ngspice is not on PATH"):
        spice.require_ngspice()


@pytest.mark.parametrize("ci", ["true", "1", "TRUE", "yes"])
def test_missing_ngspice_fails_under_ci(monkeypatch, ci):
    monkeypatch.setattr(spice.shutil, "which", lambda name: None)
    monkeypatch.setenv("CI", ci)
    with pytest.raises(pytest.fail.Exception, match="CI is set"):
        spice.require_ngspice()


def test_present_ngspice_is_returned(monkeypatch):
    monkeypatch.setattr(spice.shutil, "which", lambda name: f"/opt/bin/{name}")
    monkeypatch.setenv("CI", "true")
    assert spice.require_ngspice() == "/opt/bin/ngspice"
