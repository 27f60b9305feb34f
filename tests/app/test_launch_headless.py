"""Without a display the window command says what to do instead of letting Qt abort."""

import sys

from trueslope.app.launch import launch


def test_no_display_gives_a_clear_message(monkeypatch, capsys):
    monkeypatch.setattr(sys, "platform", "linux")
    for var in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM"):
        monkeypatch.delenv(var, raising=False)
    assert launch("sample_captures/film_cap_ramp.csv") == 2
    err = capsys.readouterr().err
    assert "no display" in err and "trueslope analyze sample_captures/film_cap_ramp.csv" in err
