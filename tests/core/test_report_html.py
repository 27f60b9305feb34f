"""The HTML report and its SVG plots, from real analyses of synthetic captures.

Well-formedness is judged by Python's own parsers (``html.parser`` for the document,
``xml.etree.ElementTree`` for each SVG); checksums against ``hashlib``.
"""

from __future__ import annotations

import dataclasses
import datetime
import hashlib
import html
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from types import SimpleNamespace

import numpy as np
import pytest

from trueslope.core.analysis import analyse
from trueslope.core.circuit import parse_context
from trueslope.core.report import numbers
from trueslope.core.report.html import html_report, installed_version
from trueslope.core.report.summary import figure_value
from trueslope.core.report.svg import (LINE, MUTED, SYSTEMATIC, nice_ticks, overlay_svg,
                                       residual_svg, tick_text, trace_svg)
from trueslope.core.settings import Settings
from tests.support.synth import exponential, sawtooth, straight

SVG_NS = "{http://www.w3.org/2000/svg}"
HOSTILE_KEY = "<script>alert(1)</script>"
HOSTILE_VALUE = '=HYPERLINK("x")'
HOSTILE_NAME = 'ramp<img src=x onerror="alert(2)">.csv'
WHEN = datetime.datetime(2025, 3, 4, 5, 6, 7, tzinfo=datetime.timezone.utc)
VOID = {"meta", "br", "hr", "img", "input", "link", "col", "wbr"}


def _capture(shape, path, seed, falling=False):
    cap = sawtooth(shape, cycles=12, samples_per_ramp=1000.3, bits=10, noise_v=2e-3, seed=seed,
                   falling=falling)
    # the file's bytes only need to exist for the checksum: the samples as text
    np.savetxt(path, cap.channels["CH1"], fmt="%.6f")
    return dataclasses.replace(cap, source=str(path),
                               metadata={HOSTILE_KEY: HOSTILE_VALUE, "Model": "bench scope"})


@pytest.fixture(scope="module")
def analyses(tmp_path_factory):
    d = tmp_path_factory.mktemp("caps")
    shunted = analyse(_capture(exponential(0.1), d / HOSTILE_NAME.replace("/", "_"), 1),
                      Settings(context=parse_context(capacitance="10n", current="4u",
                                                     probe="10M,12p")))
    flat = analyse(_capture(straight(), d / "straight.csv", 2))
    falling = analyse(_capture(exponential(0.1), d / "falling.csv", 3, falling=True))
    assert shunted.diagnosis.signature == "shunt-loading"
    assert flat.diagnosis.signature == "linear"
    return shunted, flat, falling


@pytest.fixture(scope="module")
def checksums(analyses):
    return {a.source: hashlib.sha256(open(a.source, "rb").read()).hexdigest() for a in analyses}


class Tree(HTMLParser):
    """Every tag must close in order; records tags, text and attributes."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.tags, self.text, self.attrs, self.errors = [], [], [], [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += attrs
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += attrs

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:] or 'nothing'}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def _report(analyses, checksums, **kw):
    kw.setdefault("title", "Ramp check <bench 3>")
    return html_report(analyses, files_sha256=checksums, tool_version=installed_version(),
                       generated_at=WHEN, **kw)


def _parse(doc):
    t = Tree()
    t.feed(doc)
    t.close()
    return t


def test_report_is_well_formed_and_self_contained(analyses, checksums):
    doc = _report(analyses, checksums, operator="A. Tech", unit_serial="SN-0042",
                  notes="first line\nsecond <line>")
    t = _parse(doc)
    assert doc.startswith("<!DOCTYPE html>")
    assert not t.errors and not t.stack, (t.errors, t.stack)
    # two plots per capture and the overlay of the comparison
    assert t.tags.count("svg") == 2 * len(analyses) + 1
    assert "script" not in t.tags and "link" not in t.tags and "img" not in t.tags
    names = {k for k, _ in t.attrs}
    assert "src" not in names and not any(k.startswith("on") for k in names)
    hrefs = [v for k, v in t.attrs if k == "href"]
    assert all(h.startswith("#") for h in hrefs)
    assert "@import" not in doc and "url(http" not in doc
    text = "".join(t.text)
    for expected in ("A. Tech", "SN-0042", "second <line>", "Ramp check <bench 3>",
                     installed_version(), "2025-03-04 05:06:07+00:00"):
        assert expected in text


def test_every_svg_parses_as_xml(analyses, checksums):
    doc = _report(analyses, checksums)
    svgs = re.findall(r"<svg\b.*?</svg>", doc, flags=re.S)
    assert len(svgs) == 2 * len(analyses) + 1
    for s in svgs:
        root = ET.fromstring(s)
        assert root.tag == SVG_NS + "svg"
        assert root.find(SVG_NS + "title") is not None
    ids = [m for s in svgs for m in re.findall(r'<clipPath id="([^"]+)"', s)]
    assert len(ids) == len(set(ids))


def test_hostile_strings_are_text(analyses, checksums):
    doc = _report(analyses, checksums)
    t = _parse(doc)
    text = "".join(t.text)
    assert HOSTILE_KEY in text and HOSTILE_VALUE in text
    assert HOSTILE_NAME in text
    assert "<script" not in doc.lower()
    assert html.escape(HOSTILE_KEY) in doc
    assert "onerror" not in {k for k, _ in t.attrs}


def test_figures_as_numbers_formats_them(analyses, checksums):
    doc = _report(analyses, checksums)
    text = "".join(_parse(doc).text)
    for a in analyses:
        for _, keys in numbers.FIGURE_GROUPS:
            for k in keys:
                assert figure_value(a, k) in text, k
        assert numbers.figure_text("nonlinearity_pct", a.figures.nonlinearity_pct) in text
    shunted = analyses[0]
    assert numbers.si(shunted.diagnosis.equivalent_shunt_ohm, "Ω", 3) in text


def test_conditions_list_checksums_and_settings(analyses, checksums):
    text = "".join(_parse(_report(analyses, checksums, limits_text="nonlinearity <= 0.5 %"
                                  )).text)
    for a in analyses:
        assert checksums[a.source] in text
        assert a.source in text
    assert "nonlinearity <= 0.5 %" in text
    assert numbers.si(10e-9, "F") in text and numbers.si(10e6, "Ω") in text
    assert "5.00 % trimmed at each end" in text


@dataclasses.dataclass(frozen=True)
class _Result:
    figure: str
    limit_pct: float
    value_pct: float
    verdict: str

    def to_dict(self):
        return dataclasses.asdict(self)


def test_verdicts_and_comparison_duck_typed(analyses, checksums):
    verdicts = [SimpleNamespace(verdict="fail", results=[_Result("nonlinearity", 0.5,
                                                                 0.7979, "fail")]),
                SimpleNamespace(verdict="pass", results=()), None]

    class Comparison:
        overlay = [("<b>ref</b>", np.linspace(0, 1, 11), np.zeros(11))]

        def to_dict(self):
            return {"reference": "<b>straight</b>",
                    "differences": [{"capture": "x", "nonlinearity_pct": 0.5,
                                     "slope_v_per_s": 1234.5}]}

    doc = _report(analyses, checksums, verdicts=verdicts, comparison=Comparison())
    t = _parse(doc)
    assert not t.errors
    text = "".join(t.text)
    assert 'class="badge fail"' in doc and 'class="badge pass"' in doc
    assert numbers.pct(0.7979) in text and numbers.pct(0.5) in text
    assert numbers.figure_text("slope_v_per_s", 1234.5) in text  # a figure keeps its format
    assert "<b>straight</b>" in text and "<b>ref</b>" in text and "<b>" not in doc
    by_name = _report(analyses[:1], checksums,
                      verdicts={analyses[0].source: SimpleNamespace(verdict="undecided",
                                                                    results=())})
    assert 'class="badge undecided"' in by_name


def test_single_capture_has_no_comparison(analyses, checksums):
    doc = _report(analyses[1], checksums)
    assert 'id="comparison"' not in doc
    assert len(re.findall(r"<svg\b", doc)) == 2


def _path_points(svg, colour):
    root = ET.fromstring(svg)
    for p in root.iter(SVG_NS + "path"):
        if p.get("stroke") == colour:
            return np.array([[float(v) for v in pt[1:].split(",")]
                             for pt in p.get("d").split()])
    raise AssertionError(f"no path in {colour}")


@pytest.mark.parametrize("which, bows_up", [(0, True), (2, False)])
def test_residual_plot_is_in_true_volts(analyses, which, bows_up):
    # trace minus line of a shunt-loaded ramp: above the line mid-ramp when it rises,
    # below when it falls (its mirror image), as AveragedCycle.residual_true_v says
    svg = residual_svg(analyses[which])
    zero_y = _path_points(svg, MUTED)[0, 1]
    sys_pts = _path_points(svg, SYSTEMATIC)
    mid = sys_pts[np.argmin(np.abs(sys_pts[:, 0] - np.median(sys_pts[:, 0])))]
    assert (mid[1] < zero_y) == bows_up  # pixel y grows downwards
    assert "resolution floor ±" in svg


def test_trace_plot_draws_the_line_and_window(analyses):
    svg = trace_svg(analyses[2])
    root = ET.fromstring(svg)
    assert len([p for p in root.iter(SVG_NS + "path") if p.get("stroke") == LINE]) == 2
    assert any(r.get("fill-opacity") for r in root.iter(SVG_NS + "rect"))
    # a falling trace: the line's first point is higher on the picture than its last
    pts = _path_points(svg, LINE)
    assert pts[0, 1] < pts[-1, 1]


def test_overlay_escapes_labels_and_skips_gaps():
    u = np.linspace(0, 1, 50)
    y = np.where((u > 0.4) & (u < 0.6), np.nan, np.sin(6 * u))
    svg = overlay_svg([("a<&>", u, y), ("b", u, -y)])
    root = ET.fromstring(svg)
    assert "a<&>" in "".join(root.itertext())
    d = [p.get("d") for p in root.iter(SVG_NS + "path")][1]
    assert d.count("M") == 2  # the gap splits the curve


def test_ticks_are_round_and_formatted_by_numbers():
    assert nice_ticks(0.0, 1e-3) == pytest.approx([0, 2e-4, 4e-4, 6e-4, 8e-4, 1e-3])
    assert nice_ticks(-0.033, 0.018) == pytest.approx([-0.03, -0.02, -0.01, 0.0, 0.01])
    assert tick_text(4e-4, 2e-4, "s") == numbers.si(4e-4, "s", 1)
    assert tick_text(-0.5, 0.5, "%") == numbers.pct(-0.5, 1)
    assert tick_text(0.0, 0.1, "V") == "0 V"
