"""SI prefixes in user input, display, and units in column names.

Outside reference: the SI prefixes and their factors are those of the SI
Brochure (BIPM, 9th edition, 2019, Table 7: femto 1e-15 ... tera 1e12, micro
written with the Greek letter mu). The resistor-code form "4k7" is the
IEC 60062 letter-and-digit code, where the prefix letter stands for the
decimal point (from memory).
"""

from __future__ import annotations

import math

import pytest

from trueslope.core.errors import SettingsError, UnknownUnitError
from trueslope.core.units import format_si, parse_column_unit, parse_quantity, parse_si

MICRO = "\u00b5"
GREEK_MU = "\u03bc"


# SI Brochure, 9th ed., Table 7: prefix symbol -> factor.
SI_PREFIXES = [("f", 1e-15), ("p", 1e-12), ("n", 1e-9), ("u", 1e-6), (MICRO, 1e-6),
               (GREEK_MU, 1e-6), ("m", 1e-3), ("k", 1e3), ("M", 1e6), ("G", 1e9), ("T", 1e12)]


@pytest.mark.parametrize("prefix,factor", SI_PREFIXES)
def test_every_si_prefix_scales_by_its_factor(prefix, factor):
    assert parse_si(f"3.3{prefix}") == pytest.approx(3.3 * factor, rel=1e-12)
    assert parse_si(f"2 {prefix}F") == pytest.approx(2 * factor, rel=1e-12)


@pytest.mark.parametrize("text,unit,expected", [
    ("47n", None, 4.7e-8),
    ("1.2m", None, 1.2e-3),
    ("3.3k", None, 3.3e3),
    ("10M", None, 1.0e7),          # capital M is mega, never milli
    ("12p", None, 1.2e-11),
    ("4.7uF", None, 4.7e-6),
    ("4.7\u00b5F", None, 4.7e-6),  # MICRO SIGN
    ("4.7\u03bcF", None, 4.7e-6),  # GREEK SMALL LETTER MU
    ("1 M\u03a9", None, 1.0e6),
    ("1 M\u2126", None, 1.0e6),    # OHM SIGN
    ("10%", None, 0.10),
    ("1e-6", None, 1e-6),
    ("-2.5", None, -2.5),
    (".5", None, 0.5),
    ("4k7", None, 4700.0),          # IEC 60062 letter code
    ("2n2", "F", 2.2e-9),
    ("2u", "s", 2e-6),
    ("2 us", "s", 2e-6),
    ("20 msec", "s", 20e-3),
    ("5 sec", "s", 5.0),
    ("10M", "\u03a9", 1e7),
    ("10 Mohm", "\u03a9", 1e7),
    ("1.25", "V", 1.25),
    ("1.25 V", "V", 1.25),
    ("1.2mA", "A", 1.2e-3),
    ("10", "%", 0.10),
    ("10%", "%", 0.10),
    ("1 kHz", "Hz", 1e3),
    (" 47n ", None, 4.7e-8),
])
def test_parse_si(text, unit, expected):
    assert parse_si(text, unit) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text,unit,words", [
    ("", None, ["empty"]),
    ("abc", None, ["'abc'", "47n"]),
    ("4.7xF", None, ["'xF'"]),
    ("4,7n", None, ["decimal separator"]),
    ("1.2.3", None, ["'1.2.3'"]),
    ("nan", None, ["'nan'"]),
    ("inf", None, ["'inf'"]),
    ("2F", "s", ["in s", "'F'"]),
    ("10%", "s", ["percentage"]),
    ("s", "s", ["no number"]),
])
def test_parse_si_refuses_with_a_clear_message(text, unit, words):
    with pytest.raises(SettingsError) as info:
        parse_si(text, unit)
    for w in words:
        assert w in str(info.value)
    assert isinstance(info.value, ValueError)  # the family also subclasses ValueError


def test_parse_si_refuses_non_text():
    with pytest.raises(SettingsError):
        parse_si(4.7)  # type: ignore[arg-type]


@pytest.mark.parametrize("text,value,unit", [
    ("2.5 GSa/s", 2.5e9, "Sa/s"), ("1 us", 1e-6, "s"), ("1e6", 1e6, ""),
    ("500 kHz", 5e5, "Hz"), ("100 S/s", 100.0, "S/s"), ("3m", 3e-3, ""),
])
def test_parse_quantity_splits_prefix_and_unit(text, value, unit):
    v, u = parse_quantity(text)
    assert v == pytest.approx(value, rel=1e-12)
    assert u == unit


@pytest.mark.parametrize("value,unit,text", [
    (4.7e-3, "V", "4.700 mV"),
    (1.25e-5, "s", "12.50 \u00b5s"),
    (1000.0, "Hz", "1.000 kHz"),
    (0.0, "V", "0.000 V"),
    (-4.7e-3, "V", "-4.700 mV"),
    (-0.0, "V", "0.000 V"),
    (0.99996, "V", "1.000 V"),       # rounding carries into the next prefix
    (999.96e-3, "V", "1.000 V"),
    (123456.0, "V", "123.5 kV"),
    (2.2e-12, "F", "2.200 pF"),
    (3.0e9, "Hz", "3.000 GHz"),
    (5.0, "V", "5.000 V"),
    (1e-20, "V", "1.000e-20 V"),     # beyond femto: scientific notation
    (1e20, "V", "1.000e+20 V"),
])
def test_format_si(value, unit, text):
    assert format_si(value, unit) == text


def test_format_si_missing_and_infinite():
    assert format_si(math.nan, "V") == "\u2014"
    assert format_si(math.inf, "V") == "\u221e V"
    assert format_si(-math.inf, "V") == "-\u221e V"
    assert format_si(None, "V") == "\u2014"  # type: ignore[arg-type]


@pytest.mark.parametrize("digits,text", [(1, "100 kV"), (2, "120 kV"), (3, "123 kV"),
                                         (6, "123.456 kV")])
def test_format_si_digits(digits, text):
    assert format_si(123456.0, "V", digits) == text


@pytest.mark.parametrize("value", [4.7e-8, 1.2e-3, 3.3e3, 1e7, 1.2e-11, -2.5e-6, 0.1])
def test_format_then_parse_round_trip(value):
    # The display form is valid input: 4 significant digits survive.
    assert parse_si(format_si(value, "")) == pytest.approx(value, rel=5e-4)
    assert parse_si(format_si(value, "s"), "s") == pytest.approx(value, rel=5e-4)


@pytest.mark.parametrize("header,name,quantity,scale", [
    ("time [s]", "time", "time", 1.0),
    ("t (us)", "t", "time", 1e-6),
    ("t (\u00b5s)", "t", "time", 1e-6),
    ("t (\u03bcs)", "t", "time", 1e-6),
    ("Zeit (ms)", "Zeit", "time", 1e-3),
    ("X [ns]", "X", "time", 1e-9),
    ("Time(S)", "Time", "time", 1.0),
    ("Time (sec)", "Time", "time", 1.0),
    ("CH1 (mV)", "CH1", "voltage", 1e-3),
    ("CH1 [uV]", "CH1", "voltage", 1e-6),
    ("CH2 (\u00b5V)", "CH2", "voltage", 1e-6),
    ("HV {kV}", "HV", "voltage", 1e3),
    ("Voltage/mV", "Voltage", "voltage", 1e-3),
    ("Time/s", "Time", "time", 1.0),
    ("V", "V", "voltage", 1.0),
    ("mV", "mV", "voltage", 1e-3),
    ("  CH1 (V)  ", "CH1", "voltage", 1.0),
    ('"CH1 (volts)"', "CH1", "voltage", 1.0),
    ("CH1", "CH1", None, 1.0),
    ("CH1/CH2", "CH1/CH2", None, 1.0),  # a slash before a non-unit is part of the name
    ("Zeit", "Zeit", None, 1.0),
    ("CH1 ()", "CH1", None, 1.0),
    ("", "", None, 1.0),
])
def test_parse_column_unit(header, name, quantity, scale):
    cu = parse_column_unit(header)
    assert (cu.name, cu.quantity) == (name, quantity)
    assert cu.scale == pytest.approx(scale, rel=1e-15)


@pytest.mark.parametrize("header", ["CH1 (furlong)", "CH1 [A]", "t (min)", "CH1 (MV)",
                                    "t (Ms)", "CH1 (V/div)"])
def test_unknown_unit_in_brackets(header):
    with pytest.raises(UnknownUnitError) as info:
        parse_column_unit(header)
    msg = str(info.value)
    assert "unknown unit" in msg and header.strip() in msg
    for accepted in ("ms", "us", "ns", "mV", "kV"):
        assert accepted in msg


def test_mega_prefix_in_a_column_unit_is_explained():
    with pytest.raises(UnknownUnitError, match="mega"):
        parse_column_unit("CH1 (MV)")
