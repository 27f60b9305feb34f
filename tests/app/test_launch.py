"""``trueslope open FILE --screenshot OUT.png`` and the options of :func:`launch`."""

from __future__ import annotations

from pathlib import Path

from PySide6 import QtGui

from trueslope.app.launch import launch

ROOT = Path(__file__).resolve().parents[2]
FILM = ROOT / "sample_captures" / "film_cap_ramp.csv"


def _distinct_colours(img: QtGui.QImage) -> int:
    return len({img.pixel(x, y) for x in range(0, img.width(), 9) for y in range(0, img.height(), 9)})


def test_screenshot_renders_the_finished_analysis(qapp, tmp_path):
    out = tmp_path / "shot.png"
    assert launch(str(FILM), screenshot=str(out)) == 0
    img = QtGui.QImage(str(out))
    assert (img.width(), img.height()) == (1600, 1000)
    assert _distinct_colours(img) > 50


def test_screenshot_of_a_bad_file_still_saves_and_fails(qapp, tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("not a capture at all\n")
    out = tmp_path / "shot.png"
    assert launch(str(bad), screenshot=str(out)) == 1
    assert out.exists()
    assert "bad.csv" in capsys.readouterr().err


def test_bad_options_exit_with_2(qapp, tmp_path, capsys):
    assert launch(str(FILM), trim=0.9, screenshot=str(tmp_path / "x.png")) == 2
    assert "trim" in capsys.readouterr().err
    assert launch(str(FILM), sample_interval="fast", screenshot=str(tmp_path / "x.png")) == 2
    assert not (tmp_path / "x.png").exists()
