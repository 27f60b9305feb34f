"""Session files (write, read, validate, changed captures) and the atomic writer they use.

Checksums against ``hashlib``; the file as JSON read back with the standard ``json``.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import shutil

import pytest

from trueslope.core.circuit import parse_context
from trueslope.core.errors import TrueslopeError
from trueslope.core.outputs import (OutputError, OutputExistsError, OutputIsInputError,
                                    write_text_atomic)
from trueslope.core.session import (SESSION_VERSION, GroupSpec, Session, SessionError,
                                    capture_entry, file_sha256, load_session, save_session)
from trueslope.core.settings import Settings


@pytest.fixture
def bench(tmp_path):
    """A session folder with two captures under it and one capture elsewhere."""
    folder = tmp_path / "bench"
    (folder / "caps").mkdir(parents=True)
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    a, b, c = folder / "caps" / "before_1.csv", folder / "after_1.csv", elsewhere / "ref.csv"
    for i, p in enumerate((a, b, c)):
        p.write_bytes(f"t,CH1\n0,{i}\n1,{i + 1}\n".encode())
    (folder / "limits.txt").write_text("nonlinearity_pct <= 0.5\n")
    settings = Settings(trim_fraction=0.1, channel="CH1", sync_channel=2,
                        excluded_cycles=(3, 7),
                        context=parse_context(capacitance="47n", current="1.2m",
                                              probe="10M,12p", tolerance="5%"))
    session = Session(
        captures=(capture_entry(a, settings, group="before"),
                  capture_entry(b, Settings(window_s=(1e-5, 9e-4), phase_bins=400),
                                group="after", sample_interval_s=1e-6),
                  capture_entry(c)),
        reference=str(c), groups=(GroupSpec("before", ("before_*",)),
                                  GroupSpec("after", ("after_*", "late_*"))),
        limits_path=str(folder / "limits.txt"), title="Board 7 <rev B>", operator="A. Tech",
        unit_serial="SN-0042", notes="warm-up 10 min\nlid off")
    return folder, session, settings


def test_round_trip(bench):
    folder, session, settings = bench
    path = save_session(folder / "s.json", session)
    loaded = load_session(path)
    assert loaded == session
    assert loaded.settings_for(0) == settings
    assert loaded.settings_for(str(folder / "after_1.csv")).window_s == (1e-5, 9e-4)
    assert loaded.captures[1].sample_interval_s == 1e-6
    assert loaded.changed_files() == ()


def test_paths_relative_to_the_session_when_under_it(bench, tmp_path):
    folder, session, _ = bench
    save_session(folder / "s.json", session)
    doc = json.loads((folder / "s.json").read_text())
    assert doc["format"] == "trueslope-session" and doc["version"] == SESSION_VERSION
    paths = [c["path"] for c in doc["captures"]]
    assert paths[:2] == ["caps/before_1.csv", "after_1.csv"]
    assert os.path.isabs(paths[2])
    assert doc["limits_path"] == "limits.txt" and os.path.isabs(doc["reference"])
    assert doc["captures"][0]["sha256"] == hashlib.sha256(
        (folder / "caps" / "before_1.csv").read_bytes()).hexdigest()
    assert doc["captures"][0]["size_bytes"] == (folder / "caps" / "before_1.csv").stat().st_size
    assert doc["captures"][0]["context"]["capacitance_f"] == pytest.approx(47e-9)
    # the folder moves as a whole: the captures under it follow
    moved = tmp_path / "moved"
    shutil.copytree(folder, moved)
    loaded = load_session(moved / "s.json")
    assert loaded.captures[0].path == str(moved / "caps" / "before_1.csv")
    assert loaded.changed_files() == ()


def test_changed_files_are_flagged(bench):
    folder, session, _ = bench
    save_session(folder / "s.json", session)
    a = folder / "caps" / "before_1.csv"
    data = bytearray(a.read_bytes())
    data[-2] ^= 1  # one byte, same size
    a.write_bytes(bytes(data))
    (folder / "after_1.csv").write_bytes(b"longer than before\n" * 3)
    os.remove(session.captures[2].path)
    changes = load_session(folder / "s.json").changed_files()
    assert [(c.path, c.reason) for c in changes] == [
        (str(a), "content"), (str(folder / "after_1.csv"), "size"),
        (session.captures[2].path, "missing")]


def test_file_sha256_matches_hashlib(tmp_path):
    p = tmp_path / "big.bin"
    p.write_bytes(os.urandom(3 * 1024 * 1024 + 17))
    assert file_sha256(p, chunk_bytes=65536) == hashlib.sha256(p.read_bytes()).hexdigest()


def _write(folder, doc):
    p = folder / "edited.json"
    p.write_text(doc if isinstance(doc, str) else json.dumps(doc))
    return p


def _valid(bench):
    folder, session, _ = bench
    save_session(folder / "s.json", session)
    return folder, json.loads((folder / "s.json").read_text())


def test_future_version_refused(bench):
    folder, doc = _valid(bench)
    doc["version"] = SESSION_VERSION + 1
    with pytest.raises(SessionError, match=r"^edited\.json: version: written by a newer "
                                           r"trueslope \(session version 2\).*update") as e:
        load_session(_write(folder, doc))
    assert isinstance(e.value, TrueslopeError) and isinstance(e.value, ValueError)
    assert e.value.key == "version"


def test_bad_json_refused_with_the_file_named(tmp_path):
    p = tmp_path / "broken.json"
    p.write_text('{"format": "trueslope-session",\n "version": 1,,}')
    with pytest.raises(SessionError, match=r"^broken\.json: not valid JSON \(line 2, column"):
        load_session(p)
    with pytest.raises(SessionError, match=r"^absent\.json: no such file"):
        load_session(tmp_path / "absent.json")
    p.write_bytes(b"\xff\xfe{}")
    with pytest.raises(SessionError, match="not UTF-8"):
        load_session(p)


@pytest.mark.parametrize("edit, key, words", [
    (lambda d: d.update(format="something-else"), "format", "not a trueslope session"),
    (lambda d: d.update(extra=1), "extra", "unknown key"),
    (lambda d: d["captures"][0].update(sha256="abc"), "captures[0].sha256", "64"),
    (lambda d: d["captures"][1].pop("size_bytes"), "captures[1].size_bytes", "missing"),
    (lambda d: d["captures"][0].update(trim_fraction=0.9), "captures[0].trim",
     "between 0 and 0.4"),
    (lambda d: d["captures"][0].update(excluded_cycles=[1, -2]),
     "captures[0].excluded_cycles", "whole number"),
    (lambda d: d["captures"][0].update(channel=True), "captures[0].channel", "whole number"),
    (lambda d: d["captures"][0]["context"].update(capacitance_f=-1.0),
     "captures[0].context (capacitance)", "positive"),
    (lambda d: d["captures"][1].update(window_s=[1.0]), "captures[1].window_s", "start, end"),
    (lambda d: d.update(reference="nowhere.csv"), "reference", "names no capture"),
    (lambda d: d["groups"][0].update(patterns="before_*"), "groups[0].patterns", "list"),
    (lambda d: d.update(version="1"), "version", "whole number"),
])
def test_bad_keys_refused_naming_the_key(bench, edit, key, words):
    folder, doc = _valid(bench)
    edit(doc)
    with pytest.raises(SessionError, match=f"^edited\\.json: {re.escape(key)}: .*{words}") as e:
        load_session(_write(folder, doc))
    assert e.value.key == key and "\n" not in str(e.value)


def test_duplicate_keys_and_nan_refused(bench):
    folder, doc = _valid(bench)
    text = json.dumps(doc)
    with pytest.raises(SessionError, match="repeated key"):
        load_session(_write(folder, text.replace('"version": 1', '"version": 1, "version": 1')))
    doc["captures"][0]["trim_fraction"] = float("nan")
    with pytest.raises(SessionError, match="edited.json"):
        load_session(_write(folder, json.dumps(doc)))


def test_save_refuses_overwrite_and_inputs(bench):
    folder, session, _ = bench
    save_session(folder / "s.json", session)
    with pytest.raises(OutputExistsError, match=r"^s\.json already exists: pass --force"):
        save_session(folder / "s.json", session)
    save_session(folder / "s.json", session, force=True)
    capture = session.captures[0].path
    before = open(capture, "rb").read()
    with pytest.raises(OutputIsInputError, match="before_1.csv is one of the input files"):
        save_session(capture, session, force=True)
    assert open(capture, "rb").read() == before


# ------------------------------------------------------------ the atomic writer

def test_write_text_atomic(tmp_path):
    p = tmp_path / "report.html"
    assert write_text_atomic(p, "first") == p and p.read_text() == "first"
    with pytest.raises(OutputExistsError) as e:
        write_text_atomic(p, "second")
    assert isinstance(e.value, TrueslopeError) and isinstance(e.value, FileExistsError)
    assert "report.html" in str(e.value) and "--force" in str(e.value)
    assert p.read_text() == "first"
    write_text_atomic(p, "second ✓", force=True)
    assert p.read_text(encoding="utf-8") == "second ✓"
    assert sorted(x.name for x in tmp_path.iterdir()) == ["report.html"]  # no temporary left


def test_write_never_lands_on_an_input(tmp_path):
    src = tmp_path / "capture.csv"
    src.write_text("data")
    link = tmp_path / "hard.csv"
    os.link(src, link)
    sym = tmp_path / "sym.csv"
    sym.symlink_to(src)
    for target in (src, link, sym, tmp_path / "." / "capture.csv"):
        with pytest.raises(OutputIsInputError):
            write_text_atomic(target, "oops", force=True, inputs=[src])
    assert src.read_text() == "data"


def test_write_refusals_are_one_line(tmp_path):
    with pytest.raises(OutputError, match=r"^cannot write x\.html: its folder does not exist$"):
        write_text_atomic(tmp_path / "missing" / "x.html", "text")
    with pytest.raises(OutputError, match="it is a folder"):
        write_text_atomic(tmp_path, "text", force=True)
