"""Files the window writes and reads for the bench: PDF and HTML reports, sessions.

PDF pages and text are read back with pypdf (an independent PDF reader).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from trueslope.core.analysis import analyse_file
from trueslope.core.errors import OutputExistsError
from trueslope.core.report.html import html_report

pypdf = pytest.importorskip("pypdf")

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_captures"
FILM = SAMPLES / "film_cap_ramp.csv"
X7R = SAMPLES / "x7r_cap_ramp.csv"


def wait_compared(qtbot, bench, timeout_ms=120000):
    qtbot.waitUntil(lambda: not bench.busy and bench.items and all(
        i.measured is not None or i.changed for i in bench.items), timeout=timeout_ms)
    return bench.comparison


def pdf_text(path: Path) -> tuple[int, str]:
    """Pages and text of a PDF, read by pypdf (an independent reader), with every space
    removed and ligatures undone: table cells wrap names wherever they must."""
    reader = pypdf.PdfReader(str(path))
    text = "".join("".join(p.extract_text().split()) for p in reader.pages)
    return len(reader.pages), text.replace("\ufb01", "fi").replace("\ufb02", "fl")


def squeeze(words: str) -> str:
    return "".join(words.split())


def test_write_pdf_pages_text_and_no_overwrite(qapp, tmp_path):
    from trueslope.app.pdf import svg_images, write_pdf
    a = analyse_file(str(FILM))
    html = html_report(a, title="PDF check", operator="R. Bench", tool_version="test",
                       generated_at="2026-01-01")
    body, images = svg_images(html)
    assert "<svg" not in body and len(images) == html.count("<svg") == 2
    assert all(not im.isNull() and im.width() > 1000 for im in images.values())  # print dpi
    out = tmp_path / "one.pdf"
    write_pdf(html, out)
    pages, text = pdf_text(out)
    assert pages >= 2  # the summary, then the capture's own section on a new page
    for words in ("PDF check", "R. Bench", "film_cap_ramp.csv", "Diagnosis", "Self-check"):
        assert squeeze(words) in text
    assert not list(tmp_path.glob(".*tmp"))  # no temporary file left behind
    before = out.read_bytes()
    with pytest.raises(OutputExistsError):
        write_pdf(html, out)
    assert out.read_bytes() == before
    write_pdf(html.replace("PDF check", "PDF again"), out, force=True)
    assert "PDFagain" in pdf_text(out)[1]


def test_compare_command_writes_a_pdf(tmp_path):
    from trueslope.app.cli import main
    out = tmp_path / "cmp.pdf"
    assert main(["compare", str(FILM), str(X7R), "--report", str(out)]) == 0
    pages, text = pdf_text(out)
    assert pages >= 3 and "x7r_cap_ramp.csv" in text and "Comparison" in text


def test_reports_from_the_window(qtbot, window, tmp_path):
    from .conftest import open_and_wait
    open_and_wait(qtbot, window, FILM)
    window.report_fields = type(window.report_fields)(operator="J. Doe", unit_serial="SN-42",
                                                      notes="after rework")
    html = tmp_path / "capture.html"
    with qtbot.waitSignal(window.task_finished, timeout=60000):
        window.write_report(str(html), "capture")
    text = html.read_text()
    assert "J. Doe" in text and "SN-42" in text and "after rework" in text
    assert "<svg" in text and "film_cap_ramp.csv" in text
    window.bench.add_files([str(FILM), str(X7R)])
    wait_compared(qtbot, window.bench)
    pdf = tmp_path / "comparison.pdf"
    with qtbot.waitSignal(window.task_finished, timeout=120000):
        window.write_report(str(pdf), "comparison")
    pages, text = pdf_text(pdf)
    assert pages >= 3 and "SN-42" in text and "x7r_cap_ramp.csv" in text
    # an existing report is not replaced unasked: the banner says so
    with qtbot.waitSignal(window.job_failed, timeout=60000) as failed:
        window.write_report(str(html), "capture")
    assert "already exists" in failed.args[0]


def test_session_round_trip_flags_changed_captures(qtbot, window, tmp_path):
    for p in (FILM, X7R):
        shutil.copy(p, tmp_path / p.name)
    film, x7r = tmp_path / FILM.name, tmp_path / X7R.name
    limits = tmp_path / "limits.toml"
    limits.write_text("[limits.nonlinearity_pct]\nmax = 0.5\n")
    bench = window.bench
    bench.add_files([str(film)], settings=window.settings.with_(window_s=(20e-6, 280e-6),
                                                                excluded_cycles=(1,)))
    bench.add_files([str(x7r)], group="ceramic")
    bench.set_reference(str(x7r))
    bench.set_patterns([("film", "*film*")])
    bench.set_limits(str(limits))
    wait_compared(qtbot, bench)
    session = tmp_path / "bench.json"
    with qtbot.waitSignal(window.task_finished, timeout=60000):
        window.save_session(str(session))
    doc = json.loads(session.read_text())
    assert doc["captures"][0]["window_s"] == [20e-6, 280e-6]
    assert doc["captures"][0]["excluded_cycles"] == [1]
    assert doc["captures"][1]["group"] == "ceramic" and doc["reference"] == X7R.name
    assert doc["groups"] == [{"name": "film", "patterns": ["*film*"]}]
    assert doc["limits_path"] == "limits.toml"

    with open(film, "ab") as fh:  # the film capture changes on disk
        fh.write(b"\n")
    bench.clear()
    window.open_session(str(session))
    qtbot.waitUntil(lambda: len(bench.items) == 2, timeout=60000)
    c = wait_compared(qtbot, bench)
    by_name = {Path(i.path).name: i for i in bench.items}
    assert by_name[FILM.name].changed == "size" and by_name[FILM.name].measured is None
    assert by_name[X7R.name].measured.ok  # the unchanged one is measured
    assert by_name[FILM.name].settings.window_s == (20e-6, 280e-6)
    assert Path(c.reference).name == X7R.name and bench.limits is not None
    state = bench.table.item(0, bench.table.columnCount() - 1).text()
    assert state.startswith("changed on disk")
    assert "Changed on disk" in window.banner.text()
    # saved again, the changed capture keeps its old checksum: still flagged next time
    again = tmp_path / "again.json"
    with qtbot.waitSignal(window.task_finished, timeout=60000):
        window.save_session(str(again))
    assert json.loads(again.read_text())["captures"][0]["sha256"] == doc["captures"][0]["sha256"]
    # only when asked is the file measured as it is now
    bench.measure_as_now([str(film)])
    wait_compared(qtbot, bench)
    assert by_name[FILM.name].changed is None and by_name[FILM.name].measured.ok


def test_menu_items(window):
    texts = [a.text() for a in window.menuBar().actions()[0].menu().actions()]
    for t in ("Load &limits…", "&Follow a folder…", "Write &report…", "&Save session…",
              "Open &session…", "Add this capture to the &comparison"):
        assert t in texts
    assert window.views.tabText(1) == "Bench comparison"
