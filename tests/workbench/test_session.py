"""Tests of the workbench document (no Qt)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from dsp.analysis import Settings
from dsp.model import load_model
from workbench.session import Session, SessionEvent, ViewOptions

DEMO_MODEL = Path(__file__).resolve().parents[2] / "demo_recordings" / "03_broken_tooth.toml"


@pytest.fixture
def model():
    return load_model(DEMO_MODEL)


def test_session_imports_no_qt():
    code = ("import sys, workbench.session\n"
            "print(','.join(m for m in sys.modules if m.split('.')[0] in ('PySide6', 'pyqtgraph', 'shiboken6')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""  # DEVELOPERS.md import rules: the document has no Qt


def test_round_trip_through_json(model, tmp_path):
    session = Session()
    session.set_recording(tmp_path / "rec.flac")
    session.set_model(model, DEMO_MODEL)
    session.select_shaft("intermediate")
    session.set_time_range((1.5, 12.25))
    session.set_envelope_band((2500.0, 3750.0))
    session.update_settings(window="flattop", n_sideband_orders=5)
    session.set_view_options(spectrum_x="order", spectrum_units="mm/s", spectrum_log_y=False,
                             spectrum_zoom_hz=(400.0, 700.0), tsa_signal="difference", show_kurtogram=True)
    session.set_current_view("tsa")
    text = json.dumps(session.to_dict())          # plain JSON types only
    back = Session.from_dict(json.loads(text))
    # a saved document must reopen exactly as it was (common practice, no source)
    assert back.recording_path == session.recording_path
    assert back.model_path == DEMO_MODEL
    assert back.model == model
    assert back.settings == session.settings
    assert back.settings.envelope_band_hz == (2500.0, 3750.0)
    assert back.time_range_s == (1.5, 12.25)
    assert back.selected_shaft == "intermediate"
    assert back.view_options == session.view_options
    assert back.current_view == "tsa"
    assert back.to_dict() == session.to_dict()


def test_empty_session_round_trips():
    back = Session.from_dict(json.loads(json.dumps(Session().to_dict())))
    assert back.model is None and back.recording_path is None and back.selected_shaft is None
    assert back.settings == Settings()  # common practice, no source


def test_unknown_keys_are_refused():
    data = Session().to_dict()
    data["colour"] = "red"
    with pytest.raises(ValueError, match="colour"):
        Session.from_dict(data)
    data = Session().to_dict()
    data["settings"]["fft_size"] = 4096
    with pytest.raises(ValueError, match="fft_size"):
        Session.from_dict(data)


def test_subscribers_hear_each_real_change_once(model):
    session = Session()
    heard: list[SessionEvent] = []
    session.subscribe(heard.append)
    shafts: list[str] = []
    unsubscribe = session.subscribe(lambda e: shafts.append(e.value), kinds=["shaft"])
    session.set_model(model)
    # the tach watches the input shaft: it is the natural first selection (common practice, no source)
    assert session.selected_shaft == "input"
    assert [e.kind for e in heard] == ["model", "shaft"]
    session.select_shaft("output")
    session.select_shaft("output")               # no change, no event
    assert shafts == ["input", "output"]
    unsubscribe()
    session.select_shaft("intermediate")
    assert shafts == ["input", "output"]
    assert heard[-1] == SessionEvent("shaft", "intermediate")


def test_selection_survives_a_model_edit_that_keeps_the_shaft(model):
    import dataclasses

    session = Session(model=model)
    session.select_shaft("output")
    edited = dataclasses.replace(model, meshes=(dataclasses.replace(model.meshes[0], driven_teeth=70),))
    session.set_model(edited)
    assert session.selected_shaft == "output"
    renamed = dataclasses.replace(edited, shafts=edited.shafts[:2])
    session.set_model(renamed)
    assert session.selected_shaft == "input"     # the shaft is gone: back to the tach shaft


def test_bad_values_say_what_is_wrong(model):
    session = Session(model=model)
    with pytest.raises(ValueError, match="unknown shaft 'spindle'; the model has: input, intermediate, output"):
        session.select_shaft("spindle")
    with pytest.raises(ValueError, match="end_s > start_s"):
        session.set_time_range((5.0, 5.0))
    with pytest.raises(ValueError, match="low_hz < high_hz"):
        session.set_envelope_band((4000.0, 3000.0))
    with pytest.raises(ValueError, match="Invalid value for 'spectrum_x'"):
        ViewOptions(spectrum_x="rad/s")
    with pytest.raises(ValueError, match="Invalid value for 'view'"):
        session.set_current_view("polar")


def test_time_range_lives_in_the_settings():
    session = Session()
    kinds = []
    session.subscribe(lambda e: kinds.append(e.kind))
    session.set_time_range((2.0, 8.0))
    assert (session.settings.t_start_s, session.settings.t_end_s) == (2.0, 8.0)
    session.set_time_range(None)
    assert session.time_range_s is None
    assert kinds == ["settings", "settings"]
    session.set_recording("a.flac")              # a new recording resets nothing that is already whole
    assert kinds == ["settings", "settings", "recording"]
