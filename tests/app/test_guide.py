"""The Help menu's user guide is the README itself, pictures included."""

from __future__ import annotations

from pathlib import Path

from PySide6 import QtGui, QtWidgets

from trueslope.app import guide

README = Path(__file__).resolve().parents[2] / "README.md"


def test_the_guide_is_the_readme_with_its_screenshots(qtbot, window):
    window.act_guide.trigger()
    dlg = window.findChild(QtWidgets.QDialog, "guide")
    assert dlg is not None and dlg.isVisible()
    view = dlg.findChild(QtWidgets.QTextBrowser, "guide_view")
    text = view.toPlainText()
    # the same words as the README: its first heading and the safety cautions
    assert "trueslope" in text and "Bench safety" in text and "ground clip" in text
    assert guide.find_guide() == README
    # every picture the README names resolves to an image beside it
    doc = view.document()
    names = [f.name for f in (README.parent / "packaging" / "screenshots").glob("*.png")
             if f"packaging/screenshots/{f.name}" in README.read_text()]
    assert names
    for name in names:
        img = doc.resource(QtGui.QTextDocument.ResourceType.ImageResource,
                           f"packaging/screenshots/{name}")
        assert isinstance(img, (QtGui.QPixmap, QtGui.QImage)) and img.width() > 0, name
    dlg.close()


def test_without_a_readme_the_guide_says_where_to_find_it(qtbot, window, monkeypatch):
    monkeypatch.setattr(guide, "guide_candidates", lambda: [Path("/nonexistent/README.md")])
    dlg = guide.guide_dialog(window)
    text = dlg.findChild(QtWidgets.QTextBrowser).toPlainText()
    assert "README.md" in text
    dlg.close()
