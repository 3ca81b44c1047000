"""Spectrum view: fine (full record) or averaged lines, on the bundled demo 03 (pytest-qt, offscreen).

Demo 03 (demo_recordings/README.md): the broken tooth is on the intermediate shaft
(8.0176 Hz), whose rate spaces the sidebands of the stage 1 gear mesh (569.25 Hz).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

import workbench
from dsp.analysis import Settings, analyze
from dsp.model import loads_model
from dsp.recording import read_recording
from workbench import snapshot, theme
from workbench.session import Session
from workbench.session_store import load_session, save_session
from workbench.views.spectrum import SpectrumView

DEMO = Path(workbench.__file__).resolve().parents[1] / "demo_recordings" / "03_broken_tooth.flac"
INTERMEDIATE_HZ = 8.0176        # demo_recordings/README.md, shaft table
STAGE1_GMF_HZ = 569.25          # demo_recordings/README.md, stage table
COARSE_HZ = 10.0                # coarser than the intermediate shaft's sideband spacing


@pytest.fixture(scope="module")
def demo():
    recording = read_recording(DEMO)
    model = loads_model(DEMO.with_suffix(".toml").read_text())
    return recording, model, analyze(recording, model, Settings())


@pytest.fixture(scope="module")
def coarse(demo):
    recording, model, _ = demo
    return analyze(recording, model, Settings(spectrum_resolution_hz=COARSE_HZ))


def shown(qtbot, session, analysis, recording):
    theme.configure_pyqtgraph()
    view = SpectrumView(session)
    qtbot.addWidget(view)
    view.resize(1000, 600)
    view.show()
    view.show_analysis(analysis, recording)
    return view


def drawn(view):
    """The whole curve handed to the plot (getData() gives only the clipped, downsampled part)."""
    return np.asarray(view.curve.xData), np.asarray(view.curve.yData)


def test_averaged_curve_is_the_analysis_averaged_spectrum(qtbot, demo):
    recording, model, analysis = demo
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_log_y=False)
    view = shown(qtbot, session, analysis, recording)
    assert session.view_options.spectrum_lines == "fine"          # the default stays predictable
    x, y = drawn(view)
    np.testing.assert_array_equal(x, analysis.spectrum.freq_hz)
    # one FFT of the whole record: lines 1 / T apart (common practice, no source)
    assert x[1] - x[0] == pytest.approx(1.0 / recording.duration_s, rel=1e-9)

    view.lines_combo.setCurrentIndex(1)                            # the analyst picks "averaged"
    assert session.view_options.spectrum_lines == "averaged"
    averaged = analysis.extras["averaged_spectrum"]
    x, y = drawn(view)
    np.testing.assert_array_equal(x, averaged.freq_hz)
    np.testing.assert_array_equal(y, averaged.amplitude)          # demo sensor in g: drawn as computed
    # the setting is the line spacing of the averaged spectrum (dsp.analysis.Settings)
    np.testing.assert_allclose(np.diff(x), analysis.settings.spectrum_resolution_hz, rtol=1e-9)
    assert view.lines_combo.currentText() == "averaged (0.5 Hz)"
    assert "averaged lines 0.5 Hz apart" in view.caption.text()
    # the cursors read the curve drawn, not the fine one
    np.testing.assert_array_equal(view.cursor_set.data.x, averaged.freq_hz)
    np.testing.assert_array_equal(view.cursor_set.data.amplitude, averaged.amplitude)

    # CPM: the same averaged lines, 60 CPM per Hz (common practice, no source)
    session.set_view_options(spectrum_x="cpm")
    x, y = drawn(view)
    np.testing.assert_allclose(x, 60.0 * np.asarray(averaged.freq_hz), rtol=1e-12)
    np.testing.assert_array_equal(y, averaged.amplitude)
    # a zoom band is applied on the averaged curve as on the fine one
    session.set_view_options(spectrum_x="hz", spectrum_zoom_hz=(500.0, 650.0))
    assert view.plot.getViewBox().viewRange()[0] == pytest.approx([500.0, 650.0])


def test_order_axis_and_velocity_ignore_the_choice_and_say_so(qtbot, demo):
    recording, model, analysis = demo
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_log_y=False, spectrum_lines="averaged")
    view = shown(qtbot, session, analysis, recording)
    assert view.lines_combo.isEnabled()

    session.select_shaft("intermediate")
    session.set_view_options(spectrum_x="order")
    f_shaft = view.shaft_rate_hz(session.selected_shaft)
    f_ref = view.shaft_rate_hz(analysis.frequencies.reference_shaft)
    x, _ = drawn(view)
    # the order spectrum, in orders of the selected shaft: order_ref * f_ref / f_shaft (common practice, no source)
    np.testing.assert_allclose(x, np.asarray(analysis.order_spectrum.order) * f_ref / f_shaft, rtol=1e-12)
    assert not view.lines_combo.isEnabled()
    assert "order spectrum" in view.lines_combo.toolTip()

    session.set_view_options(spectrum_x="hz", spectrum_units="mm/s")
    x, y = drawn(view)
    np.testing.assert_array_equal(x, analysis.velocity_spectrum.freq_hz)
    np.testing.assert_array_equal(y, analysis.velocity_spectrum.amplitude)
    assert not view.lines_combo.isEnabled()
    assert "apply to acceleration" in view.lines_combo.toolTip()
    assert "fine lines" in view.caption.text()
    assert view.merged_shafts() == []


def test_choice_survives_a_session_round_trip(tmp_path, demo):
    _, model, _ = demo
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_lines="averaged")
    path = save_session(session, tmp_path / "s.gearbench.json")
    loaded = load_session(path)
    assert loaded.session.view_options.spectrum_lines == "averaged"
    assert not any("spectrum_lines" in w for w in loaded.warnings)
    # a session saved before the option existed opens on the default
    data = json.loads(Path(path).read_text())
    del data["view_options"]["spectrum_lines"]
    old = tmp_path / "old.gearbench.json"
    old.write_text(json.dumps(data))
    assert load_session(old).session.view_options.spectrum_lines == "fine"
    with pytest.raises(ValueError, match="spectrum_lines"):
        session.set_view_options(spectrum_lines="coarse")


def test_choice_survives_a_snapshot_recipe_round_trip(qtbot, tmp_path, demo):
    recording, model, analysis = demo
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_lines="averaged", spectrum_log_y=False)
    recipe = snapshot.build_recipe(session=session, analysis=analysis, view="spectrum", size_px=(800, 500),
                                   base_dir=tmp_path)
    recipe = json.loads(json.dumps(recipe))                       # as written to and read from the file
    assert recipe["view"]["options"]["spectrum_lines"] == "averaged"
    view, again = snapshot.make_view(recipe, analysis, recording)
    qtbot.addWidget(view)
    assert again.view_options.spectrum_lines == "averaged"
    np.testing.assert_array_equal(drawn(view)[1], analysis.extras["averaged_spectrum"].amplitude)
    # a recipe written before the option existed draws the fine lines
    del recipe["view"]["options"]["spectrum_lines"]
    view, old = snapshot.make_view(recipe, analysis, recording)
    qtbot.addWidget(view)
    assert old.view_options.spectrum_lines == "fine"
    np.testing.assert_array_equal(drawn(view)[1], analysis.spectrum.amplitude)


def test_sideband_cursor_names_the_intermediate_shaft_on_averaged_lines(qtbot, demo):
    recording, model, analysis = demo
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_lines="averaged", spectrum_log_y=False)
    view = shown(qtbot, session, analysis, recording)
    # 0.5 Hz lines: 16 lines between sidebands 8 Hz apart, nothing merges
    assert view.merged_shafts() == []
    cursor = view.cursor_set.add_sideband(STAGE1_GMF_HZ - 1.2, INTERMEDIATE_HZ)
    cursor.snap_centre_to_peak()
    # the carrier peak on 0.5 Hz lines lies within one line of the GMF (demo_recordings/README.md)
    assert abs(cursor.centre - STAGE1_GMF_HZ) <= 0.5
    readout = cursor.readout()
    assert readout.extra["owner"] == "intermediate"                # demo_recordings/README.md: broken tooth there
    assert "intermediate" in view.cursor_readout.summary.text()
    assert "merge" not in view.cursor_readout.summary.text()
    # the first-order sidebands stand well above the averaged floor of the band (common practice, no source)
    averaged = analysis.extras["averaged_spectrum"]
    band = (np.asarray(averaged.freq_hz) > 450.0) & (np.asarray(averaged.freq_hz) < 520.0)
    floor = float(np.median(np.asarray(averaged.amplitude)[band]))
    first = [r for r in readout.rows if r.label in ("-1", "+1")]
    assert len(first) == 2 and all(r.peak_amplitude > 10.0 * floor for r in first)


def test_peak_amplitude_on_averaged_lines_is_the_tone_amplitude(qtbot, demo):
    recording, model, analysis = demo
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_lines="averaged", spectrum_log_y=False)
    view = shown(qtbot, session, analysis, recording)
    # the stage 1 GMF tone from the fine lines by Parseval: sqrt(sum A^2 / ENBW), Hann ENBW = 1.5 lines
    # (Harris 1978, Table I)
    f = np.asarray(analysis.spectrum.freq_hz)
    a = np.asarray(analysis.spectrum.amplitude, dtype=float)
    near = np.abs(f - STAGE1_GMF_HZ) < 1.0
    tone = float(np.sqrt(np.sum(a[near] ** 2) / 1.5))
    cursor = view.cursor_set.add_sideband(STAGE1_GMF_HZ, INTERMEDIATE_HZ)
    carrier = view.cursor_readout.rows_text()[3]
    assert carrier[0] == "carrier"
    # 569.25 Hz is the edge between the 569.0 and 569.5 Hz lines: each holds half the tone's power
    # (Parseval; dsp.spectrum.band_spectrum groups lines +- 0.25 Hz)
    assert float(carrier[2]) == pytest.approx(tone / np.sqrt(2.0), rel=0.02)
    assert float(carrier[4]) == pytest.approx(tone, rel=0.02)
    info = view.cursor_set.read_peak(STAGE1_GMF_HZ)
    assert info is not None
    assert f"amplitude {float(carrier[4]):.5g} " in view.cursor_readout.peak_label.text()
    assert cursor.readout().extra["owner"] == "intermediate"


def test_averaged_lines_coarser_than_the_spacing_say_the_sidebands_merge(qtbot, demo, coarse):
    recording, model, _ = demo
    session = Session(recording_path=DEMO, model=model)
    session.set_view_options(spectrum_lines="averaged", spectrum_log_y=False)
    view = shown(qtbot, session, coarse, recording)
    np.testing.assert_allclose(np.diff(drawn(view)[0]), COARSE_HZ, rtol=1e-9)
    # 10 Hz lines cannot separate sidebands 8.02 or 1.73 Hz apart; 24.75 Hz apart still can
    assert view.merged_shafts() == ["intermediate", "output"]
    assert "merge" in view.caption.text()
    view.show_family(STAGE1_GMF_HZ, INTERMEDIATE_HZ)
    text = view.cursor_readout.summary.text()
    assert view.sidebands_merged()
    assert "merge" in text and "no shaft is named" in text
    assert "= intermediate" not in text and "shaft rate" not in text
    # the fine lines of the same analysis still resolve them
    session.set_view_options(spectrum_lines="fine")
    assert not view.sidebands_merged()
    assert "merge" not in view.cursor_readout.summary.text()
