"""The user guide in the Help menu: the README itself, shown as rich text with its pictures.

One guide for both places: the README at the repository's root (or beside the program in a
desktop bundle, or in the installed package) is read and shown by a :class:`QTextBrowser`
(its Markdown reader), with the folder it came from on the search path so that the
screenshots it names appear. Where no copy is found the dialog says where to read it.
"""

from __future__ import annotations

import sys
from pathlib import Path

from PySide6 import QtCore, QtGui, QtWidgets

from .helptext import text_box

#: Where the guide is looked for, in order: a desktop bundle's data folder, the installed
#: package's folder, the repository's root (an editable install or a checkout).
def guide_candidates() -> list[Path]:
    here = Path(__file__).resolve().parent
    out = []
    bundle = getattr(sys, "_MEIPASS", None)
    if bundle:
        out.append(Path(bundle) / "README.md")
    out += [here.parent / "README.md", here.parent.parent / "README.md"]
    return out


def find_guide() -> Path | None:
    """The first README found (:func:`guide_candidates`), or None."""
    return next((p for p in guide_candidates() if p.is_file()), None)


MISSING_HTML = ("<h3>User guide</h3><p>The guide is the README of trueslope's source folder; "
                "no copy was found beside this program. Read it where trueslope was "
                "obtained, or in the source folder's <code>README.md</code>.</p>")


def guide_dialog(parent: QtWidgets.QWidget | None) -> QtWidgets.QDialog:
    """A non-modal dialog showing the guide, about 80 % of the screen."""
    dlg, view, avail = text_box(parent, "trueslope user guide")
    view.setObjectName("guide_view")
    view.setOpenExternalLinks(True)
    path = find_guide()
    if path is None:
        view.setHtml(MISSING_HTML)
    else:
        view.setSearchPaths([str(path.parent)])
        view.document().setBaseUrl(QtCore.QUrl.fromLocalFile(str(path.parent) + "/"))
        view.setMarkdown(path.read_text(encoding="utf-8"))
    dlg.resize(int(0.8 * avail.width()), int(0.85 * avail.height()))
    fit_pictures(view.document(), int(0.8 * avail.width()) - 80)
    return dlg


def fit_pictures(doc: QtGui.QTextDocument, width_px: int) -> None:
    """Shrink every picture wider than ``width_px`` to it (aspect kept), so a screenshot
    reads whole without scrolling sideways."""
    block = doc.begin()
    while block.isValid():
        it = block.begin()
        while not it.atEnd():
            frag = it.fragment()
            fmt = frag.charFormat()
            if frag.isValid() and fmt.isImageFormat():
                img = fmt.toImageFormat()
                res = doc.resource(QtGui.QTextDocument.ResourceType.ImageResource,
                                   QtCore.QUrl(img.name()))
                w = res.width() if hasattr(res, "width") else 0
                if w > width_px:
                    img.setWidth(width_px)
                    img.setHeight(res.height() * width_px / w)
                    cur = QtGui.QTextCursor(doc)
                    cur.setPosition(frag.position())
                    cur.setPosition(frag.position() + frag.length(),
                                    QtGui.QTextCursor.MoveMode.KeepAnchor)
                    cur.setCharFormat(img)
            it += 1
        block = block.next()
