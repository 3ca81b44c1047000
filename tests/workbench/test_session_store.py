"""Session files: exact round trip, atomic writes, corrupt files, data-only loading, autosave and recovery."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from dsp.model import load_model
from workbench import session_store
from workbench.session import Session, ViewOptions
from workbench.session_store import (Autosaver, SessionFileError, autosave_path, dumps_session, load_session,
                                     recovery_candidate, save_session, session_to_document)

DATA = Path(__file__).resolve().parents[1] / "data"
REPO = Path(__file__).resolve().parents[2]


def _recording(tmp_path: Path, content: bytes = b"not really audio, only hashed") -> Path:
    path = tmp_path / "rec.flac"
    path.write_bytes(content)
    return path


def _session(tmp_path: Path) -> Session:
    model = load_model(DATA / "pair_40_15.toml")
    session = Session(recording_path=_recording(tmp_path), model_path=DATA / "pair_40_15.toml", model=model)
    session.update_settings(t_start_s=1.5, t_end_s=9.25, envelope_band_hz=(2000.0, 4000.0), alarm_threshold=0.4)
    session.set_view_options(spectrum_x="order", spectrum_log_y=False, spectrum_zoom_hz=(100.0, 900.0),
                             tsa_signal="residual")
    session.select_shaft("output")
    session.set_current_view("tsa")
    session.set_annotations([{"id": "a1", "view": "tsa", "kind": "arrow", "x": 123.5, "y": -0.25,
                              "text": "tooth 7? <b>ünïcode</b> & \"quotes\"", "x_units": "deg", "y_units": "g"}])
    session.set_cursors([{"kind": "sideband", "axis": "hz", "positions": [600.0], "spacing": 13.0, "n": 3,
                          "view": "spectrum"}])
    session.set_snapshots([{"id": "snapshot-001-tsa", "recipe": "/x/s.json", "png": "/x/s.png", "svg": "/x/s.svg",
                            "caption": "TSA of the output shaft", "view": "tsa"}])
    session.set_findings("Local damage on the output gear.\n\nRe-measure in two weeks.")
    session.baseline_path = "/data/healthy.flac"
    return session


def test_round_trip_is_exact(tmp_path):
    session = _session(tmp_path)
    path = save_session(session, tmp_path / "s.json")
    loaded = load_session(path)
    assert loaded.warnings == ()                     # a clean file loads without a word (common practice, no source)
    back = loaded.session
    # every field, the extra work included, comes back equal (exact floats: JSON repr round-trips, PEP 3101/repr)
    assert session_to_document(back) == session_to_document(session)
    assert back.model == session.model and back.settings == session.settings
    assert back.view_options == ViewOptions(spectrum_x="order", spectrum_log_y=False,
                                            spectrum_zoom_hz=(100.0, 900.0), tsa_signal="residual")
    assert back.annotations == session.annotations and back.findings == session.findings
    assert back.recording_sha256 == session_store.file_sha256(session.recording_path)
    # saving again gives the same bytes (sorted keys, stable format)
    assert dumps_session(back) == path.read_text(encoding="utf-8")


def test_atomic_write_replaces_and_leaves_no_temporary_file(tmp_path, monkeypatch):
    path = tmp_path / "s.json"
    save_session(_session(tmp_path), path)
    before = path.read_bytes()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rec.flac", "s.json"]

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(session_store.os, "replace", broken_replace)
    session = _session(tmp_path)
    session.set_findings("changed")
    with pytest.raises(SessionFileError, match="cannot write"):
        save_session(session, path)
    # the old file is untouched and the temporary file is gone (write-then-rename, common practice, no source)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["rec.flac", "s.json"]


@pytest.mark.parametrize("content", [b'{"schema": "gearbench.session/1", "model": {', b"\xff\xfe\x00garbage",
                                     b"[1, 2, 3]", b'{"schema": "someone.else/2"}'])
def test_corrupt_file_gives_one_message_and_stays_untouched(tmp_path, content):
    path = tmp_path / "broken.json"
    path.write_bytes(content)
    stamp = path.stat().st_mtime_ns
    with pytest.raises(SessionFileError) as info:
        load_session(path)
    message = str(info.value)
    assert "\n" not in message and "broken.json" in message      # one line naming the file (design.md)
    assert path.read_bytes() == content and path.stat().st_mtime_ns == stamp


def test_session_file_is_data_only(tmp_path):
    doc = session_to_document(_session(tmp_path))
    doc["plugin"] = "__import__('os').system('echo owned')"   # never evaluated
    doc["settings"]["future_option"] = 3
    doc["settings"]["alarm_threshold"] = "high"               # wrong type: the default is kept
    doc["settings"]["envelope_band_hz"] = [1000, "x"]
    doc["view_options"]["spectrum_log_y"] = 1
    doc["annotations"].append({"id": "bad", "view": "tsa", "kind": "note", "x": "1e3; rm -rf", "y": 0.0,
                               "text": "x", "x_units": "", "y_units": ""})
    doc["cursors"] = "not a list"
    path = tmp_path / "odd.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    loaded = load_session(path)
    text = " | ".join(loaded.warnings)
    assert "plugin" in text and "future_option" in text          # unknown keys ignored with a warning
    assert "settings.alarm_threshold" in text and "settings.envelope_band_hz" in text
    assert "view_options.spectrum_log_y" in text
    settings = loaded.session.settings
    assert settings.alarm_threshold == 0.5 and settings.envelope_band_hz is None   # dsp.analysis.Settings defaults
    assert loaded.session.view_options.spectrum_log_y is True
    assert settings.t_start_s == 1.5                                  # the well-typed values are kept
    assert "annotations" in text and "cursors" in text
    assert [a["id"] for a in loaded.session.annotations] == ["a1"]   # the wrongly typed entry is dropped
    assert loaded.session.cursors == []
    doc["model"] = "a string where an object belongs"
    path.write_text(json.dumps(doc), encoding="utf-8")
    with pytest.raises(SessionFileError, match="'model' has the wrong type"):
        load_session(path)


def test_changed_recording_is_flagged(tmp_path):
    session = _session(tmp_path)
    path = save_session(session, tmp_path / "s.json")
    session.recording_path.write_bytes(b"another recording with the same name")
    loaded = load_session(path)
    assert loaded.recording_changed                         # SHA-256 differs (FIPS 180-4: any change alters it)
    assert any("the recording changed" in w for w in loaded.warnings)
    session.recording_path.unlink()
    assert any("missing" in w for w in load_session(path).warnings)


def test_autosaver_writes_only_after_the_interval_while_dirty(tmp_path):
    session = _session(tmp_path)
    now = [100.0]
    target = autosave_path(session_path=tmp_path / "job.json")
    assert target == tmp_path / "job.autosave.json"
    saver = Autosaver(lambda: session, lambda: target, interval_s=30.0, clock=lambda: now[0])
    assert saver.tick() is None                             # nothing changed yet
    saver.mark_dirty()
    now[0] = 129.0
    assert saver.tick() is None and not target.exists()     # less than 30 s after the change
    now[0] = 130.0
    assert saver.tick() == target and target.exists()       # 30 s after the change (design: at least every 30 s)
    assert saver.tick() is None                             # clean again
    saver.saved()
    assert not target.exists()                              # a real save makes the autosave obsolete
    per_recording = autosave_path(recording_path=tmp_path / "rec.flac", app_data_dir=tmp_path / "appdata")
    assert per_recording.parent == tmp_path / "appdata" / "autosave" and per_recording.name.startswith("rec-")


def test_recovery_candidate_only_when_newer_than_the_session(tmp_path):
    session = _session(tmp_path)
    path = save_session(session, tmp_path / "s.json")
    auto = session_store.write_autosave(session, autosave_path(session_path=path))
    os.utime(auto, ns=(path.stat().st_mtime_ns - 10**9,) * 2)
    assert recovery_candidate(session_path=path) is None
    os.utime(auto, ns=(path.stat().st_mtime_ns + 10**9,) * 2)
    assert recovery_candidate(session_path=path) == auto


CRASHING_EDIT = r"""
import os, sys
from workbench.session_store import Autosaver, autosave_path, load_session
path = sys.argv[1]
session = load_session(path).session
session.set_annotations(session.annotations + [{"id": "after-crash", "view": "spectrum", "kind": "note",
    "x": 380.0, "y": 0.02, "text": "GMF of the pair, edited before the crash", "x_units": "hz", "y_units": "g"}])
saver = Autosaver(lambda: session, lambda: autosave_path(session_path=path), interval_s=30.0)
saver.mark_dirty()
assert saver.tick(force=True) is not None   # the timer fired
os._exit(1)                                   # crash: the session is never saved
"""


def test_crash_after_an_edit_is_recovered_from_the_autosave(tmp_path):
    session = _session(tmp_path)
    path = save_session(session, tmp_path / "job.json")
    saved = path.read_bytes()
    env = dict(os.environ, PYTHONPATH=str(REPO))
    result = subprocess.run([sys.executable, "-c", CRASHING_EDIT, str(path)], env=env, capture_output=True,
                            text=True, timeout=60)
    assert result.returncode == 1, result.stderr
    assert path.read_bytes() == saved                       # the session file never saw the edit
    candidate = recovery_candidate(session_path=path)       # a new process starts and looks for work to recover
    assert candidate == tmp_path / "job.autosave.json"
    recovered = load_session(candidate).session
    assert [a["id"] for a in recovered.annotations] == ["a1", "after-crash"]
    assert recovered.annotations[1]["text"] == "GMF of the pair, edited before the crash"


# ---------------------------------------------------------------------- the window's document actions
def _simulated(tmp_path: Path) -> Path:
    from dsp.model import GearTrain, Mesh, Sensor, Shaft, Tach
    from dsp.synth import Fault, simulate, write_simulation

    train = GearTrain(name="window pair", sensors=(Sensor("case", 0, 5.0, "g", "output bearing", "radial"),),
                      tach=Tach(shaft="in", channel=1, nominal_rpm=1200.0), shafts=(Shaft("in"), Shaft("out")),
                      meshes=(Mesh("pair", "in", 19, "out", 47),))
    sim = simulate(train, rpm=1200, duration_s=3.0, fs=8000, seed=5, faults=[Fault("tooth", "out", tooth=2)])
    path = tmp_path / "pair.flac"
    write_simulation(sim, path, train)
    return path


def _window(qtbot, tmp_path, name):
    from PySide6.QtCore import QSettings

    from workbench import theme
    from workbench.main_window import MainWindow

    theme.configure_pyqtgraph()
    window = MainWindow(settings_store=QSettings(str(tmp_path / f"{name}.ini"), QSettings.Format.IniFormat))
    qtbot.addWidget(window)
    window.document.app_data_dir = tmp_path / "appdata"
    window.resize(1300, 850)
    window.show()
    return window


def test_window_saves_reopens_and_recovers_a_session(qtbot, tmp_path, monkeypatch):
    import dataclasses

    recording = _simulated(tmp_path)
    first = _window(qtbot, tmp_path, "first")
    with qtbot.waitSignal(first.analysis_shown, timeout=60_000):
        first.open_recording(recording)
    doc = first.document
    assert [a.text().replace("&", "") for a in first.menuBar().actions()][:2] == ["File", "Edit"]
    note = doc.annotations.add("spectrum", "note", 380.0, 0.05, "pair GMF", x_units="hz", y_units="g")
    edited = dataclasses.replace(first.session.model, name="window pair, edited")
    first.form.model_changed.emit(edited)                 # an edit in the model form
    assert first.session.model.name == "window pair, edited"
    doc.undo_action.trigger()                             # Edit > Undo
    assert first.session.model.name == "window pair" and first.form.model().name == "window pair"
    doc.redo_action.trigger()
    assert first.session.model.name == "window pair, edited"
    spectrum = first.views["spectrum"]
    spectrum.cursor_set.add_harmonic(380.0)               # a cursor (workbench.cursors) ...
    assert len(first.session.cursors) == 1
    doc.undo_action.trigger()                             # ... is undone like any edit
    assert first.session.cursors == [] and spectrum.cursor_set.cursors == []
    doc.redo_action.trigger()
    assert len(first.session.cursors) == 1 and len(spectrum.cursor_set.cursors) == 1
    entry = doc.snapshot("spectrum with the GMF note")
    assert json.loads(Path(entry["recipe"]).read_text())["cursors"] == first.session.cursors
    assert Path(entry["png"]).is_file() and doc.gallery.captions() == ["spectrum with the GMF note"]
    item = doc.gallery.list.item(0)
    item.setText("spectrum, GMF")                        # the analyst edits the caption in the gallery
    assert first.session.snapshots[0]["caption"] == "spectrum, GMF" and doc.gallery.list.item(0) is item
    assert json.loads(Path(entry["recipe"]).read_text())["caption"] == "spectrum, GMF"
    item.setText("spectrum with the GMF note")
    doc.findings.edit.setPlainText("Local damage on the output gear; re-measure in two weeks.")
    path = doc.save_session(tmp_path / "job.json")
    assert load_session(path).session.findings.startswith("Local damage")

    # more work, autosaved, then the program dies without saving
    doc.annotations.add("tsa", "arrow", 15.3, 0.2, "tooth 2", x_units="deg", y_units="g")
    written = doc.autosaver.tick(force=True)
    assert written == tmp_path / "job.autosave.json"
    first.runner.shutdown()

    second = _window(qtbot, tmp_path, "second")
    candidate = second.document.recovery_candidate(path)
    assert candidate == written
    with qtbot.waitSignal(second.analysis_shown, timeout=60_000):
        second.document.open_session(path)
    assert [a["id"] for a in second.session.annotations] == [note]
    assert second.document.offer_recovery(candidate, ask=False)
    assert [a["text"] for a in second.session.annotations] == ["pair GMF", "tooth 2"]
    assert second.session.model.name == "window pair, edited"
    assert second.document.findings.edit.toPlainText().startswith("Local damage")
    assert second.document.gallery.captions() == ["spectrum with the GMF note"]
    assert second.document.autosaver.dirty                # recovered work is unsaved work
    # the recovery dialog: answering No discards the autosave and changes nothing
    from PySide6.QtWidgets import QMessageBox

    declined = session_store.write_autosave(second.session, tmp_path / "declined.autosave.json")
    monkeypatch.setattr(QMessageBox, "question", staticmethod(lambda *a, **k: QMessageBox.StandardButton.No))
    assert not second.document.offer_recovery(declined) and not declined.exists()
    report = second.document.write_report(tmp_path / "job.html")
    assert "Local damage on the output gear" in report.read_text(encoding="utf-8")
    second.runner.shutdown()

    # the recording changes on disk: reopening flags it in the banner
    third = _window(qtbot, tmp_path, "third")
    recording.write_bytes(recording.read_bytes()[:-1] + b"\x00")
    loaded = third.document.open_session(path)
    assert loaded.recording_changed
    assert "recording changed" in third.banner.plain_text()
    third.runner.shutdown()
