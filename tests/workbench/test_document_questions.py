"""The window's questions about unsaved work, and what the session remembers.

Closing with unsaved work asks Save / Discard / Cancel; opening another recording over
notes, cursors or findings offers a new session (they belong to the previous
recording); the severity box's choices are saved in the session file.  Questions are
answered through ``DocumentActions.answer`` (no modal dialog on the offscreen platform).
"""

from __future__ import annotations

import json
import shutil

import numpy as np
import pytest
import soundfile as sf
from PySide6.QtCore import QSettings

from dsp.model import GearTrain, Mesh, Sensor, Shaft, Tach, save_model
from dsp.synth import simulate
from workbench import session_store, theme
from workbench.document_actions import DIRTY_KINDS
from workbench.session import EVENT_KINDS

FS = 12800
RPM = 1485.0
TIMEOUT_MS = 30_000


@pytest.fixture(scope="module")
def recordings(tmp_path_factory):
    """Two 2 s recordings of the same small gearbox, each with its model beside it."""
    d = tmp_path_factory.mktemp("questions")
    train = GearTrain(name="questions test", sensors=(Sensor(name="acc", channel=0, scale=50.0, units="g"),),
                      tach=Tach(shaft="input", channel=1, pulses_per_rev=1, nominal_rpm=RPM),
                      shafts=(Shaft("input"), Shaft("output")),
                      meshes=(Mesh(name="stage 1", driver="input", driver_teeth=23, driven="output",
                                   driven_teeth=71),))
    s = simulate(train, rpm=RPM, duration_s=2.0, fs=FS, seed=5)
    first = d / "first.flac"
    sf.write(str(first), np.column_stack((s.acceleration_g / 50.0, s.tach)), FS, subtype="PCM_24")
    save_model(train, first.with_suffix(".toml"))
    second = d / "second.flac"
    shutil.copy(first, second)
    shutil.copy(first.with_suffix(".toml"), second.with_suffix(".toml"))
    return first, second


@pytest.fixture
def window(qtbot, tmp_path):
    from workbench.main_window import MainWindow

    theme.configure_pyqtgraph()
    w = MainWindow(settings_store=QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat))
    w.document.app_data_dir = tmp_path / "appdata"
    qtbot.addWidget(w)
    w.show()
    yield w
    w.document.answer = lambda *_: "Discard"
    w.runner.shutdown()


def _open(qtbot, window, path):
    assert window.open_recording(path)
    qtbot.waitUntil(lambda: not window.is_busy(), timeout=TIMEOUT_MS)


def _note(window):
    window.session.set_annotations([{"id": "n1", "view": "spectrum", "kind": "note", "x": 100.0, "y": 0.01,
                                     "text": "sidebands", "x_units": "hz", "y_units": "g"}])


def test_every_event_of_the_analyst_counts_as_unsaved():
    # the baseline and the severity choices are part of the session file, so they trigger the autosave
    assert {"baseline", "severity", "cursors", "annotations", "findings"} <= set(DIRTY_KINDS)
    assert set(DIRTY_KINDS) <= set(EVENT_KINDS)  # common practice, no source


def test_close_with_unsaved_work_asks_and_cancel_keeps_the_window(qtbot, window, recordings):
    _open(qtbot, window, recordings[0])
    _note(window)
    asked = []
    window.document.answer = lambda title, text, choices: asked.append(choices) or "Cancel"
    assert window.close() is False and window.isVisible()
    assert asked == [("Save", "Discard", "Cancel")]
    # Save with a session file: the file is written and the window closes
    path = window.document.session_path = window.document.app_data_dir.parent / "s.json"
    window.document.autosaver.mark_dirty()
    window.document.answer = lambda *_: "Save"
    assert window.close() is True
    assert json.loads(path.read_text(encoding="utf-8"))["annotations"][0]["text"] == "sidebands"


def test_close_discard_removes_the_autosave(qtbot, window, recordings):
    _open(qtbot, window, recordings[0])
    _note(window)
    auto = window.document.autosaver.tick(force=True)
    assert auto is not None and auto.exists()
    window.document.answer = lambda *_: "Discard"
    assert window.close() is True
    assert not auto.exists()


def test_close_without_work_does_not_ask(qtbot, window, recordings):
    _open(qtbot, window, recordings[0])
    window.document.answer = lambda *_: pytest.fail("asked although nothing of the analyst's is unsaved")
    assert window.close() is True


@pytest.mark.parametrize("choice", ["New session", "Keep them", "Cancel"])
def test_another_recording_offers_a_new_session(qtbot, window, recordings, choice):
    first, second = recordings
    _open(qtbot, window, first)
    _note(window)
    window.session.set_findings("pinion tooth damage")
    answers = iter([choice, "Discard"])    # the new session first asks about the unsaved notes
    window.document.answer = lambda *_: next(answers)
    opened = window.open_recording(second)
    qtbot.waitUntil(lambda: not window.is_busy(), timeout=TIMEOUT_MS)
    assert opened is (choice != "Cancel")
    expected = {"New session": (second, [], ""), "Keep them": (second, 1, "pinion tooth damage"),
                "Cancel": (first, 1, "pinion tooth damage")}[choice]
    assert window.session.recording_path == expected[0]
    notes = window.session.annotations
    assert (notes if expected[1] == [] else len(notes)) == expected[1]
    assert window.session.findings == expected[2]


def test_severity_choices_are_saved_and_restored(qtbot, window, recordings, tmp_path):
    _open(qtbot, window, recordings[0])
    panel = window.baseline.panel
    panel.group.setCurrentIndex(0)
    panel.band_lo.setValue(2.0)
    assert window.document.autosaver.dirty
    path = window.document.save_session(tmp_path / "sev.json")
    saved = json.loads(path.read_text(encoding="utf-8"))["severity"]
    group, foundation, band = panel.options()
    assert saved == {"group": group, "foundation": foundation, "band_hz": [2.0, band[1]]}
    loaded = session_store.load_session(path)
    # a fresh panel takes the choices back from the opened session
    panel.group.setCurrentIndex(1)
    panel.band_lo.setValue(10.0)
    window.document.apply(loaded.session)
    assert panel.options() == (group, foundation, (2.0, band[1]))


def test_close_after_a_model_edit_asks(qtbot, window, recordings):
    # a model edit not saved in its file is unsaved work even without notes
    import dataclasses

    _open(qtbot, window, recordings[0])
    model = window.session.model
    mesh = dataclasses.replace(model.meshes[0], driven_teeth=70)
    window.session.set_model(dataclasses.replace(model, meshes=(mesh,)))
    asked = []
    window.document.answer = lambda title, text, choices: asked.append(text) or "Cancel"
    assert window.close() is False
    assert asked and "unsaved changes" in asked[0]
