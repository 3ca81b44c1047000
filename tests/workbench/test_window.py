"""Tests of the workbench window on the bundled demo (pytest-qt, offscreen).

The demo ``03_broken_tooth`` is an input shaft (tach) driving a 23/71 pair, then a
planetary stage with a 22-tooth sun on the intermediate shaft.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QSettings

import workbench
from workbench import theme
from workbench.main_window import MainWindow
from workbench.results_panel import SUSPECTS_TITLE

DEMO = Path(workbench.__file__).resolve().parents[1] / "demo_recordings" / "03_broken_tooth.flac"
TIMEOUT_MS = 60_000


@pytest.fixture
def window(qtbot, tmp_path):
    theme.configure_pyqtgraph()
    store = QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat)
    w = MainWindow(settings_store=store)
    qtbot.addWidget(w)
    w.resize(1400, 900)
    w.show()
    yield w
    w.runner.shutdown()


def open_demo(qtbot, window, path=DEMO):
    failed = []
    window.analysis_failed.connect(failed.append)
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS, raising=False) as blocker:
        window.open_recording(path)
        qtbot.waitUntil(lambda: bool(blocker.signal_triggered or failed), timeout=TIMEOUT_MS)
    assert not failed, f"the demo analysis failed: {failed[0]}"
    return window.analysis


def set_cell(window, section, row, key, text):
    """Type into one cell of the model form the way an edit arrives (itemChanged)."""
    table = window.form.tables[section]
    table.table.item(row, table.column_index(key)).setText(text)


def table_row(window, label):
    table = window.frequency_panel.view.table
    return next(r for r in table.rows if r.label == label)


def test_demo_opens_with_every_view_drawn(qtbot, window):
    analysis = open_demo(qtbot, window)
    assert {name: view.has_data() for name, view in window.views.items()} == dict.fromkeys(window.views, True)  # design.md: every view shows the analysis
    # the window opens on the top suspect's shaft: demo 03 is a broken tooth of the intermediate wheel (demo README)
    assert window.session.selected_shaft == "intermediate"  # demo_recordings/README.md, 03: suspect shaft:intermediate
    assert window.shaft_combo.currentText() == "intermediate"  # common practice, no source
    window.shaft_combo.setCurrentText("input")              # the analyst picks the tach shaft
    # GMF = Z x shaft rate (domain reference 1.1): 23 teeth on the input shaft
    input_hz = table_row(window, "input shaft").hz
    assert table_row(window, "stage 1 GMF").hz == pytest.approx(23 * input_hz, rel=1e-9)  # GMF = Z x f_shaft, domain reference 1.1
    # 1 Hz = 60 cycles per minute (common practice, no source)
    spectrum = window.views["spectrum"]
    x_hz, _ = spectrum.curve.getData()
    window.session.set_view_options(spectrum_x="cpm")
    x_cpm, _ = spectrum.curve.getData()
    np.testing.assert_allclose(x_cpm, 60.0 * x_hz)  # 1 Hz = 60 CPM, common practice, no source
    # orders of the selected shaft: the stage 1 GMF of the input shaft sits at order 23 (domain reference 1.1)
    window.session.set_view_options(spectrum_x="order", spectrum_log_y=False)
    gmf_lines = spectrum.overlay.positions("mesh harmonics")
    assert np.min(np.abs(gmf_lines - 23.0)) < 1e-9  # GMF order = Z on the driver shaft, domain reference 1.1
    labels = dict((round(x, 6), text) for x, text in spectrum.overlay.label_texts())
    assert labels[23.0] == "GMF stage 1"   # the model line at order 23 is labelled with its mesh
    x_ord, y = spectrum.curve.getData()
    near = (x_ord > 22.5) & (x_ord < 23.5)
    assert x_ord[near][np.argmax(y[near])] == pytest.approx(23.0, abs=0.05)   # the mesh line is at 23 orders
    # amplitude in m/s2: 1 g = 9.80665 m/s2 exactly (3rd CGPM 1901; domain reference 8)
    window.session.set_view_options(spectrum_x="hz", spectrum_units="g")
    _, y_g = spectrum.curve.getData()
    window.session.set_view_options(spectrum_units="m/s2")
    _, y_ms2 = spectrum.curve.getData()
    np.testing.assert_allclose(y_ms2, 9.80665 * y_g, rtol=1e-12)  # 3rd CGPM 1901: g_n = 9.80665 m/s2
    # zoom band: the x axis shows exactly the band asked for
    window.session.set_view_options(spectrum_zoom_hz=(500.0, 650.0))
    (x0, x1), _ = spectrum.plot.getViewBox().viewRange()
    assert (x0, x1) == pytest.approx((500.0, 650.0))  # common practice, no source
    # the results panel reads as an aid, not a verdict
    assert "not a verdict" in SUSPECTS_TITLE  # README: an aid to judgement, not a verdict
    assert window.results.overall.rowCount() >= 5  # design.md overall keys: rms, peak, crest, kurtosis, velocity
    assert window.results.tsa.rowCount() == len(analysis.tsa) == 3  # one TSA per shaft of the model
    # recent files remember the recording and its model
    recent = window._recent()
    assert str(DEMO.resolve()) in recent and str(DEMO.with_suffix(".toml").resolve()) in recent  # common practice, no source


def test_switching_shaft_changes_the_tsa(qtbot, window):
    analysis = open_demo(qtbot, window)
    tsa = window.views["tsa"]
    window.session.set_current_view("tsa")
    assert window.tabs.currentWidget() is tsa  # common practice, no source
    window.shaft_combo.setCurrentText("input")                           # the analyst picks the tach shaft
    ticks_in = tsa.tooth_ticks()
    revs_in = analysis.tsa_for("input").n_revs
    assert [teeth for _, teeth, _ in ticks_in] == [23]  # gears_on_shaft: the 23-tooth driver of stage 1 (demo model)
    np.testing.assert_allclose(np.diff(ticks_in[0][2]), 360.0 / 23)   # one tick per tooth: 360/Z deg apart
    assert f"{revs_in} revolutions averaged" in tsa.caption.text()  # TSA label with revolutions averaged (task brief)
    window.shaft_combo.setCurrentText("intermediate")                    # the analyst picks a shaft
    assert window.session.selected_shaft == "intermediate"  # common practice, no source
    ticks_int = tsa.tooth_ticks()
    assert sorted(teeth for _, teeth, _ in ticks_int) == [22, 71]        # the wheel of stage 1 and the sun
    revs_int = analysis.tsa_for("intermediate").n_revs
    # the intermediate shaft turns 23/71 as fast, so it makes 23/71 as many revolutions (domain reference 1.1)
    assert revs_int == pytest.approx(revs_in * 23 / 71, abs=2)  # f_intermediate = f_input x 23/71, domain reference 1.1
    assert f"{revs_int} revolutions averaged" in tsa.caption.text()  # common practice, no source
    x, y = tsa.curve.getData()
    assert x[0] == 0.0 and x[-1] < 360.0 and len(x) == analysis.tsa_for("intermediate").samples_per_rev  # TSA angle axis 0-360 deg, one sample per angle step
    np.testing.assert_array_equal(y, analysis.tsa_for("intermediate").average)  # views draw dsp results unchanged (design.md)
    # the other views follow the same selection
    window.session.set_current_view("speed")               # hidden views redraw when shown
    assert window.views["speed"].plot.getAxis("left").labelText.startswith("intermediate")  # common practice, no source
    rahmonic_ms = window.views["cepstrum"].rahmonics_ms()
    assert rahmonic_ms[0] == pytest.approx(1000.0 / table_row(window, "intermediate shaft").hz)  # 1/f_r (Randall 2017)


def test_editing_a_tooth_count_updates_table_and_views(qtbot, window):
    open_demo(qtbot, window)
    input_hz = table_row(window, "input shaft").hz
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        set_cell(window, "meshes", 0, "driven_teeth", "70")
    # ratio of a parallel pair: f_driven = f_driver * Z_driver / Z_driven (domain reference 1.1)
    assert table_row(window, "intermediate shaft").hz == pytest.approx(input_hz * 23 / 70, rel=1e-3)  # f_driven = f_driver x Z_driver / Z_driven, domain reference 1.1
    assert window.session.model.meshes[0].driven_teeth == 70  # common practice, no source
    window.session.select_shaft("intermediate")
    assert sorted(t for _, t, _ in window.views["tsa"].tooth_ticks()) == [22, 70]  # one tick row per gear on the shaft: 70-tooth wheel and 22-tooth sun


def test_bad_value_shows_its_message_and_keeps_the_last_result(qtbot, window):
    analysis = open_demo(qtbot, window)
    generation = window.runner.generation
    with qtbot.waitSignal(window.form.problems_changed, timeout=5000,
                          check_params_cb=lambda ps: any(p.severity == "error" for p in ps)):
        set_cell(window, "meshes", 0, "driven_teeth", "0")
    qtbot.wait(2 * 250)                                   # longer than the re-run pause
    text = window.banner.plain_text()
    assert "meshes[0].driven_teeth" in text and "last good result stays" in text  # conventions.md rule 5: field path in the message
    assert window.banner.isVisible()  # common practice, no source
    assert window.analysis is analysis                    # nothing replaced it
    assert window.runner.generation == generation         # and nothing was re-run
    assert all(view.has_data() for view in window.views.values())  # common practice, no source
    with qtbot.waitSignal(window.form.problems_changed, timeout=5000,
                          check_params_cb=lambda ps: not any(p.severity == "error" for p in ps)):
        set_cell(window, "meshes", 0, "driven_teeth", "71")
    assert "meshes[0].driven_teeth" not in window.banner.plain_text()  # common practice, no source
    qtbot.wait(2 * 250)
    assert window.runner.generation == generation         # the good model is the one analysed: no re-run


def test_cancel_keeps_the_last_result(qtbot, window):
    analysis = open_demo(qtbot, window)
    clicked = []

    def click_cancel(*_args):
        if not clicked:
            clicked.append(True)
            window.cancel_button.click()

    window.runner.progress.connect(click_cancel)
    with qtbot.waitSignal(window.runner.cancelled, timeout=TIMEOUT_MS):
        window.session.set_time_range((2.0, 20.0))       # a new analysis starts after the pause
    assert clicked  # common practice, no source
    assert window.analysis is analysis  # conventions.md rule 6: cancel keeps the last result
    assert "cancelled" in window.status_label.text()  # common practice, no source
    assert not window.cancel_button.isEnabled()  # common practice, no source


def test_time_range_limits_the_analysis(qtbot, window):
    open_demo(qtbot, window)
    revs_whole = window.analysis.tsa_for("input").n_revs
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        window.views["waveform"].region.setRegion((5.0, 15.0))
        window.views["waveform"].region.sigRegionChangeFinished.emit(window.views["waveform"].region)
    assert window.session.time_range_s == pytest.approx((5.0, 15.0))  # common practice, no source
    # 10 s at the demo's 1485 rpm hold 1485/60 x 10 = 247.5 revolutions; whole revolutions between
    # tach pulses inside the range are averaged, so a few are lost at the edges (common practice, no source)
    assert 240 <= window.analysis.tsa_for("input").n_revs <= 248
    assert window.analysis.tsa_for("input").n_revs < revs_whole / 2  # a third of the record holds about a third of the revolutions


def test_corrupt_file_gives_a_message_not_a_crash(qtbot, window, tmp_path):
    open_demo(qtbot, window)
    bad = tmp_path / "broken.flac"
    bad.write_bytes(np.random.default_rng(7).bytes(5000))
    shutil.copy(DEMO.with_suffix(".toml"), bad.with_suffix(".toml"))
    with qtbot.waitSignal(window.analysis_failed, timeout=TIMEOUT_MS) as blocker:
        window.open_recording(bad)
    assert "broken.flac" in blocker.args[0]  # conventions.md rule 5: the message names the file
    assert "broken.flac" in window.banner.plain_text()  # common practice, no source
    assert window.analysis is None                        # the old recording's result is not shown for the new one
    assert not any(view.has_data() for view in window.views.values())  # no stale result shown for another file
    assert window.isVisible()  # common practice, no source


def test_recording_without_model_says_what_to_enter_first(qtbot, window, tmp_path):
    lonely = tmp_path / "lonely.flac"
    shutil.copy(DEMO, lonely)
    window.open_recording(lonely)
    text = window.banner.plain_text()
    assert "sensor channel" in text and "tach channel or a nominal speed" in text and "shafts" in text  # task brief: what to enter first
    assert window.form.model() is None  # common practice, no source
    assert not window.runner.is_busy()  # common practice, no source


def test_clicking_a_suspect_selects_its_shaft_and_view(qtbot, window):
    analysis = open_demo(qtbot, window)
    assert analysis.suspects, "the broken-tooth demo should rank at least one suspect"  # the demo holds a broken tooth (demo_recordings README)
    first = analysis.suspects[0]
    item = window.results.suspects.item(0)
    window.results.suspects.itemClicked.emit(item)
    shaft = window.results.shaft_of(first.component)
    if shaft:
        assert window.session.selected_shaft == shaft  # common practice, no source
    if first.view:
        assert window.tabs.currentWidget() is window.views[first.view]  # common practice, no source


def test_frequency_table_copies_as_tab_separated_text(qtbot, window):
    open_demo(qtbot, window)
    text = window.frequency_panel.view.copy_text(selected_only=False)
    lines = text.strip().split("\n")
    assert lines[0].split("\t")[:3] == ["Label", "Hz", "CPM"]  # common practice, no source
    row = next(line.split("\t") for line in lines if line.startswith("stage 1 GMF\t"))
    assert float(row[2]) == pytest.approx(60 * float(row[1]), rel=1e-6)   # 1 Hz = 60 CPM


def test_command_line_screenshot_and_bad_file(tmp_path):
    png = tmp_path / "w.png"
    env = {"QT_QPA_PLATFORM": "offscreen", "PATH": "/usr/bin:/bin"}
    # no recording given: the bundled demo opens
    run = subprocess.run([sys.executable, "-m", "workbench", "open", "--screenshot", str(png),
                          "--view", "tsa", "--shaft", "intermediate", "--size", "1300x800"],
                         capture_output=True, text=True, env=env, timeout=120)
    assert run.returncode == 0, run.stderr  # design.md: screenshot exits 0
    from PySide6.QtGui import QColor, QImage

    image = QImage(str(png))
    assert (image.width(), image.height()) == (1300, 800)  # common practice, no source
    # the picture is not blank: the TSA curve of the intermediate shaft is drawn in its colour
    colour = QColor(theme.SHAFT_COLOURS[1])   # intermediate is the second shaft of the model
    hits = sum(QColor(image.pixel(x, y)) == colour for x in range(0, 1300, 3) for y in range(0, 800, 3))
    assert hits > 200  # common practice, no source
    bad = tmp_path / "bad.flac"
    bad.write_bytes(b"\x00" * 4096)
    shutil.copy(DEMO.with_suffix(".toml"), bad.with_suffix(".toml"))
    run = subprocess.run([sys.executable, "-m", "workbench", "open", str(bad), "--screenshot", str(png)],
                         capture_output=True, text=True, env=env, timeout=120)
    assert run.returncode == 2  # design.md: bad input exits 2 with one line
    lines = [line for line in run.stderr.splitlines() if line.startswith("gearbench:")]
    assert len(lines) == 1 and "bad.flac" in lines[0]  # design.md: one line on stderr


@pytest.mark.parametrize("n, t0_s, t1_s, n_columns", [
    (1_000_003, 0.0, 1e9, 700),        # whole record, coarse summary level used
    (1_000_003, 12.3, 31.7, 512),      # zoomed: finer level
    (1_000_003, 40.0, 40.004, 300),    # deep zoom: raw samples
])
def test_min_max_decimation_keeps_every_extreme(n, t0_s, t1_s, n_columns):
    from workbench.views.waveform import MinMaxDecimator

    fs = 25_000.0
    y = np.random.default_rng(3).standard_normal(n).astype(np.float32)
    y[777_777] = 9.0                                     # one isolated spike must survive any zoom out
    x, drawn = MinMaxDecimator(y, fs).columns(t0_s, t1_s, n_columns)
    i0 = int(np.clip(np.floor(t0_s * fs), 0, n))
    i1 = int(np.clip(np.ceil(t1_s * fs) + 1, 0, n))
    assert len(x) <= 2 * n_columns + 2                   # at most a min/max pair per pixel column
    if i1 - i0 > 2 * n_columns:
        # columns start on whole summary blocks, so they cover the view with at most one block to spare
        block = 65536
        assert i0 - block < round(x[0] * fs) <= i0  # min/max decimation per pixel column, common practice, no source
        # no extreme of the visible samples is lost (numpy as the reference)
        assert drawn.max() >= y[i0:i1].max() and drawn.min() <= y[i0:i1].min()  # numpy reference: no extreme lost
        if i0 <= 777_777 < i1:
            assert drawn.max() == 9.0  # an isolated spike survives decimation (numpy reference)
        # each pair is the min and max of its column's raw samples (numpy reference)
        edges = np.round(x[0::2] * fs).astype(int)
        for k in (0, len(edges) // 2, len(edges) - 2):
            a, b = edges[k], edges[k + 1]
            assert drawn[2 * k] == y[a:b].min() and drawn[2 * k + 1] == y[a:b].max()  # numpy reference min/max per column
    else:
        np.testing.assert_array_equal(drawn, y[i0:i1])  # numpy reference: raw samples when zoomed in


def test_dragging_the_envelope_band_reruns_with_that_band(qtbot, window):
    open_demo(qtbot, window)
    assert window.analysis.envelope.band_source == "kurtogram"  # design.md envelope band_source
    spectrum = window.views["spectrum"]
    spectrum.band_button.setChecked(True)
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        spectrum.band_region.setRegion((5000.0, 7000.0))
        spectrum.band_region.sigRegionChangeFinished.emit(spectrum.band_region)
    assert window.session.settings.envelope_band_hz == (5000.0, 7000.0)  # common practice, no source
    assert tuple(window.analysis.envelope.band_hz) == (5000.0, 7000.0)  # the analysis used the dragged band
    assert window.analysis.envelope.band_source == "user"  # design.md band_source 'user'
    assert "chosen by you" in window.views["envelope"].caption.text()  # common practice, no source
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        spectrum.auto_band.click()
    assert window.analysis.envelope.band_source == "kurtogram"  # design.md band_source 'kurtogram'


def test_dropping_a_recording_opens_it(qtbot, window):
    from PySide6.QtCore import QMimeData, QPointF, Qt, QUrl
    from PySide6.QtGui import QDropEvent

    mime = QMimeData()
    mime.setUrls([QUrl.fromLocalFile(str(DEMO))])
    event = QDropEvent(QPointF(20, 20), Qt.DropAction.CopyAction, mime, Qt.MouseButton.LeftButton,
                       Qt.KeyboardModifier.NoModifier)
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        window.dropEvent(event)
    assert window.session.recording_path == DEMO  # common practice, no source
    assert window.session.model_path == DEMO.with_suffix(".toml")   # the model beside it came along


def test_unexpected_error_is_shown_not_swallowed(qtbot, tmp_path, caplog):
    from workbench.jobs import AnalysisRunner

    def broken(*_args):
        raise ZeroDivisionError("division by zero")

    store = QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat)
    w = MainWindow(settings_store=store, runner=AnalysisRunner(analyze_fn=broken))
    qtbot.addWidget(w)
    w.show()
    try:
        with qtbot.waitSignal(w.analysis_failed, timeout=TIMEOUT_MS) as blocker:
            w.open_recording(DEMO)
    finally:
        w.runner.shutdown()
    assert "ZeroDivisionError" in blocker.args[0]  # conventions.md rule 5: unexpected errors are shown
    assert "Unexpected error" in w.banner.plain_text() and "ZeroDivisionError" in w.status_label.text()  # conventions.md rule 5, no outside source
    assert "ZeroDivisionError" in caplog.text                       # logged with its traceback


def test_window_fits_a_laptop_screen(qtbot, window):
    # 1280x720 is a common laptop screen (common practice, no source): no control row or dock may force it wider
    open_demo(qtbot, window)
    window.resize(1280, 720)
    qtbot.waitUntil(lambda: window.size().toTuple() == (1280, 720), timeout=5000)
    hint = window.minimumSizeHint()
    assert hint.width() <= 1280 and hint.height() <= 720, hint
    for name in ("spectrum", "envelope"):
        window.session.set_current_view(name)
        view = window.views[name]
        tools = view.cursor_tools
        qtbot.waitUntil(lambda: tools.isVisible() and tools.legend.geometry().bottom() < tools.height(), timeout=5000)
        # the wrapped controls stay inside the view, the plot keeps most of the height
        assert view.cursor_tools.geometry().right() < view.width()
        assert view.plot.getViewWidget().height() > 250   # common practice, no source: the data keeps the room


def test_one_registry_of_views(window):
    # workbench.views.VIEW_CLASSES is the one list: the session's names, the tabs and the snapshots read it
    from workbench import snapshot
    from workbench.session import VIEW_NAMES
    from workbench.views import VIEW_CLASSES, view_class

    assert VIEW_NAMES == tuple(VIEW_CLASSES) == tuple(window.views)
    assert snapshot.VIEW_CLASSES is VIEW_CLASSES
    assert [window.tabs.widget(i).name for i in range(window.tabs.count())] == list(VIEW_CLASSES)
    assert all(view_class(name).name == name for name in VIEW_CLASSES)


def test_spectrum_opens_on_the_mesh_band_and_full_shows_everything(qtbot, window):
    open_demo(qtbot, window)
    spectrum = window.views["spectrum"]
    gmf_hz = max(m.gmf_hz for m in window.analysis.frequencies.meshes)
    (x0, x1), _ = spectrum.plot.getViewBox().viewRange()
    # 3.5 x the highest mesh frequency shows its first three harmonics and their sidebands
    # (common practice, no source)
    assert (x0, x1) == pytest.approx((0.0, 3.5 * gmf_hz))
    assert 3 * gmf_hz < x1
    window.session.set_view_options(spectrum_zoom_hz=None)          # the "Full" button
    (_, x1), _ = spectrum.plot.getViewBox().viewRange()
    assert x1 == pytest.approx(window.analysis.spectrum.freq_hz[-1])
    # an analyst's zoom survives a re-analysis of the same recording
    window.session.set_view_options(spectrum_zoom_hz=(500.0, 650.0))
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        window.run_analysis()
    assert spectrum.plot.getViewBox().viewRange()[0] == pytest.approx([500.0, 650.0])
