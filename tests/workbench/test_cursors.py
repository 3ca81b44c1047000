"""Tests of workbench.cursors on a simulated recording whose faulty shaft is known.

The simulator (dsp.synth) puts a broken tooth on the 15T pinion of the output
shaft of the 40/15 pair; that shaft is the truth the sideband cursor must name.
"""

from __future__ import annotations

import math
import time
from pathlib import Path

import numpy as np
import pytest

pg = pytest.importorskip("pyqtgraph")

from PySide6.QtCore import QEvent, QPointF, Qt  # noqa: E402
from PySide6.QtGui import QMouseEvent  # noqa: E402
from PySide6.QtTest import QTest  # noqa: E402
from PySide6.QtWidgets import QApplication  # noqa: E402

from dsp.explain import speed_spread_frac  # noqa: E402
from dsp.kinematics import frequency_table  # noqa: E402
from dsp.model import load_model  # noqa: E402
from workbench.cursors import (CursorData, CursorReadout, CursorSet, HarmonicCursor, SidebandCursor,  # noqa: E402
                               cursor_from_dict)

DATA = Path(__file__).resolve().parents[1] / "data"
FAULT_SHAFT = "output"   # the simulator's truth
RPM = 600.0              # input 10 Hz: GMF 400 Hz, output 26.667 Hz (domain reference 1.1 formulas)


@pytest.fixture(scope="module")
def sim_path(tmp_path_factory):
    from dsp.synth import Fault, simulate, write_simulation

    train = load_model(DATA / "pair_40_15.toml")
    sim = simulate(train, rpm=RPM, duration_s=4.0, fs=8192.0, seed=5,
                   faults=(Fault("tooth", f"main pair:{FAULT_SHAFT}", severity="severe"),))
    path = tmp_path_factory.mktemp("cursors") / "tooth.flac"
    write_simulation(sim, path, train)   # and tooth.toml beside it
    return path


@pytest.fixture(scope="module")
def analysis(sim_path):
    from dsp.analysis import Settings, analyze
    from dsp.recording import read_recording

    return analyze(read_recording(sim_path), load_model(sim_path.with_suffix(".toml")), Settings())


def hz_data(analysis) -> CursorData:
    s = analysis.speed
    return CursorData(np.asarray(analysis.spectrum.freq_hz), np.asarray(analysis.spectrum.amplitude), "hz", 1.0,
                      analysis.frequencies, speed_spread_frac(s.min_hz, s.mean_hz, s.max_hz), "g")


@pytest.fixture
def plot(qtbot):
    widget = pg.PlotWidget()
    qtbot.addWidget(widget)
    widget.resize(900, 400)
    widget.show()
    qtbot.waitExposed(widget)
    yield widget.getPlotItem()
    del widget


def _drag(plot_item, x0: float, x1: float, y: float, steps: int = 6) -> None:
    """Press, move with the left button held and release, in data coordinates, on the plot's viewport."""
    view = plot_item.getViewWidget()
    vb = plot_item.getViewBox()

    def to_widget(x):
        return QPointF(view.mapFromScene(vb.mapViewToScene(pg.Point(x, y))))

    def send(kind, pos, buttons):
        button = Qt.MouseButton.NoButton if kind == QEvent.Type.MouseMove else Qt.MouseButton.LeftButton
        event = QMouseEvent(kind, pos, view.viewport().mapToGlobal(pos), button, buttons,
                            Qt.KeyboardModifier.NoModifier)
        QApplication.sendEvent(view.viewport(), event)

    send(QEvent.Type.MouseButtonPress, to_widget(x0), Qt.MouseButton.LeftButton)
    gap_s = 1.0 / max(float(pg.getConfigOption("mouseRateLimit")), 1e-9) + 0.002
    for x in np.linspace(x0, x1, steps)[1:]:
        time.sleep(gap_s)  # pyqtgraph drops moves closer together than its mouse rate limit
        send(QEvent.Type.MouseMove, to_widget(x), Qt.MouseButton.LeftButton)
    send(QEvent.Type.MouseButtonRelease, to_widget(x1), Qt.MouseButton.NoButton)


def test_the_analysis_agrees_with_the_simulator(analysis):
    owners = {f.owner_shaft for f in analysis.sidebands if f.harmonic == 1}
    assert owners == {FAULT_SHAFT}  # dsp.synth truth: the broken tooth is on the output pinion


def test_mouse_drag_of_the_spacing_line_names_the_fault_shaft(analysis, plot, qtbot, monkeypatch):
    import dsp.analysis
    import dsp.spectrum

    def forbidden(*_a, **_k):
        raise AssertionError("a cursor drag recomputed an analysis")

    monkeypatch.setattr(dsp.analysis, "analyze", forbidden)
    monkeypatch.setattr(dsp.spectrum, "amplitude_spectrum", forbidden)
    d = hz_data(analysis)
    plot.plot(d.x, d.amplitude)
    plot.setXRange(300, 500, padding=0)
    plot.setYRange(0, float(d.amplitude.max()), padding=0)
    cursors = CursorSet(plot)
    cursors.set_data(d)
    readout = CursorReadout(cursors)
    qtbot.addWidget(readout)
    changed = []
    cursors.changed.connect(changed.append)
    cursor = cursors.add_sideband(400.0, 20.0)
    assert "matches no shaft rate" in readout.summary.text()
    n_changed = len(changed)
    _drag(plot, 420.0, 426.7, 0.5 * float(d.amplitude.max()))
    # output shaft 10 x 40/15 = 26.667 Hz (domain reference 1.1 formula); spacing follows the mouse to ~0.1 Hz
    assert cursor.spacing == pytest.approx(26.7, abs=0.35)
    assert cursor.best_match().shaft == FAULT_SHAFT  # dsp.synth truth
    assert f"= {FAULT_SHAFT} shaft rate" in readout.summary.text()
    assert len(changed) == n_changed + 1  # one session update, at the end of the drag
    # the readout amplitudes are the spectrum's own values at the marker lines
    spec_f = np.asarray(analysis.spectrum.freq_hz)
    spec_a = np.asarray(analysis.spectrum.amplitude)
    for row, text in zip(cursor.readout().rows, readout.rows_text()):
        i = int(np.argmin(np.abs(spec_f - row.position)))  # numpy reference: nearest line
        assert row.amplitude == spec_a[i]
        assert text[2] == f"{spec_a[i]:.5g}"


def test_set_position_and_finished_signal_path(analysis, plot):
    d = hz_data(analysis)
    cursors = CursorSet(plot)
    cursors.set_data(d)
    cursor = cursors.add_sideband(400.0, 10.0)
    changed = []
    cursors.changed.connect(changed.append)
    cursor.spacing_line.setValue(400.0 + 26.6)
    cursor.spacing_line.sigPositionChangeFinished.emit(cursor.spacing_line)
    assert cursor.readout().extra["owner"] == FAULT_SHAFT  # dsp.synth truth
    m = cursor.best_match()
    rate = analysis.frequencies.shaft_hz("output")
    assert m.mismatch_hz == pytest.approx(26.6 - rate)  # mismatch = spacing - rate
    assert m.mismatch_pct == pytest.approx(100 * (26.6 - rate) / rate)
    assert changed and changed[-1][0]["spacing"] == pytest.approx(26.6)
    # dragging the centre carries the +1 line along, keeping the spacing
    cursor.centre_line.setValue(800.0)
    assert cursor.spacing_line.value() == pytest.approx(826.6)
    assert cursor.marker_positions()[0] == pytest.approx(800.0 - 3 * 26.6)


def test_snaps(analysis, plot):
    d = hz_data(analysis)
    cursors = CursorSet(plot)
    cursors.set_data(d)
    cursor = cursors.add_sideband(400.6, 25.0)
    cursor.snap_spacing_to("input")
    assert cursor.spacing == pytest.approx(analysis.frequencies.shaft_hz("input"), rel=1e-12)
    cursor.set_spacing(25.0)
    cursor.snap_spacing_to()  # nearest rate: 26.667 Hz output (domain reference 1.1 formula), not 10 Hz input
    assert cursor.best_match().shaft == "output"
    assert cursor.spacing == pytest.approx(analysis.frequencies.shaft_hz("output"), rel=1e-12)
    cursor.snap_centre_to_peak()
    # GMF = 10 Hz x 40 = 400 Hz (domain reference 1.1 formula); the parabola lands well inside one 0.25 Hz line
    assert cursor.centre == pytest.approx(40 * analysis.speed.mean_hz, abs=0.05)
    with pytest.raises(ValueError, match="unknown shaft"):
        cursor.snap_spacing_to("gearbox")


def test_sideband_cursor_on_band_lines_names_no_shaft_when_they_merge(analysis, plot):
    from dsp.spectrum import band_spectrum

    fine = hz_data(analysis)
    table = analysis.frequencies
    output_hz = table.shaft_hz(FAULT_SHAFT)

    def band_data(resolution_hz):
        b = band_spectrum(analysis.spectrum, resolution_hz)
        return CursorData(np.asarray(b.freq_hz), np.asarray(b.amplitude), "hz", 1.0, table,
                          fine.speed_spread_frac, "g", "band")

    with pytest.raises(ValueError, match="Invalid value for 'lines': allowed 'fft', 'band', got 'coarse'"):
        CursorData(fine.x, fine.amplitude, lines="coarse")
    cursors = CursorSet(plot)
    coarse = band_data(20.0)
    assert coarse.bin_width == pytest.approx(20.0)
    cursors.set_data(coarse)
    cursor = cursors.add_sideband(400.0, output_hz)
    # sidebands 26.7 Hz apart on lines 20 Hz apart: fewer than 2 lines per spacing, so they merge
    # (common practice, no source: a line between two peaks to dip on)
    readout = cursor.readout()
    assert cursor.sidebands_merged() and readout.extra["merged"]
    assert readout.extra["owner"] is None and cursor.best_match() is None
    assert "no shaft is named" in readout.summary and "shaft rate" not in readout.summary
    # the same cursor on the fine lines names the faulty shaft
    cursors.set_data(fine)
    readout = cursor.readout()
    assert not cursor.sidebands_merged()
    assert readout.extra["owner"] == FAULT_SHAFT   # dsp.synth truth
    assert f"= {FAULT_SHAFT} shaft rate" in readout.summary
    # band lines fine enough (0.75 Hz: 35 lines per spacing) name it too; the 400 Hz GMF tone lies near the edge
    # of the 399.75 and 400.5 Hz lines and splits between them, and the power sum reads it whole
    band = band_data(0.75)
    cursors.set_data(band)
    readout = cursor.readout()
    i = int(np.argmin(np.abs(band.x - 400.0)))
    assert band.amplitude[i + 1] > 0.3 * band.amplitude[i]   # the split: a large second line
    assert readout.extra["owner"] == FAULT_SHAFT   # dsp.synth truth
    f = np.asarray(analysis.spectrum.freq_hz)
    a = np.asarray(analysis.spectrum.amplitude, dtype=float)
    # the tone from the fine lines by Parseval: sqrt(sum A^2 / ENBW), Hann ENBW 1.5 lines (Harris 1978, Table I)
    tone = float(np.sqrt(np.sum(a[np.abs(f - 400.0) < 1.0] ** 2) / 1.5))
    carrier = next(r for r in readout.rows if r.label == "carrier")
    assert carrier.peak_amplitude == pytest.approx(tone, rel=0.02)   # Parseval's relation (Oppenheim & Schafer)
    assert carrier.peak_position in (band.x[i], band.x[i + 1])        # the centre of a line holding the GMF
    info = cursors.read_peak(400.0)
    assert info.amplitude == pytest.approx(tone, rel=0.02)           # Parseval's relation (Oppenheim & Schafer)


def test_keyboard_nudges_by_one_line_and_ten(analysis, plot, qtbot):
    d = hz_data(analysis)
    cursors = CursorSet(plot)
    cursors.set_data(d)
    cursor = cursors.add_harmonic(100.0)
    step = float(d.x[1] - d.x[0])
    assert step == pytest.approx(analysis.spectrum.resolution_hz)  # one line of the dsp spectrum
    view = plot.getViewWidget()
    QTest.keyClick(view, Qt.Key.Key_Right)
    assert cursor.position == pytest.approx(100.0 + step, abs=1e-9)
    QTest.keyClick(view, Qt.Key.Key_Left, Qt.KeyboardModifier.ShiftModifier)
    assert cursor.position == pytest.approx(100.0 + step - 10 * step, abs=1e-9)
    side = cursors.add_sideband(400.0, 26.0)
    side.active_line = "spacing"
    cursors.handle_key(Qt.Key.Key_Right, Qt.KeyboardModifier.ShiftModifier)
    assert side.spacing == pytest.approx(26.0 + 10 * step, abs=1e-9)
    assert side.centre == 400.0
    QTest.keyClick(view, Qt.Key.Key_Escape)
    assert cursors.cursors == [cursor] and cursors.active is cursor


def test_harmonic_cursor_readout(analysis, plot):
    d = hz_data(analysis)
    cursors = CursorSet(plot)
    cursors.set_data(d)
    cursor = cursors.add_harmonic(399.8, n=3)
    rows = cursor.readout().rows
    assert [r.label for r in rows] == ["1x", "2x", "3x"]
    assert [r.position for r in rows] == pytest.approx([399.8, 799.6, 1199.4])
    gmf = 40 * analysis.speed.mean_hz  # domain reference 1.1 formula
    # the nearest peaks are the mesh harmonics
    assert [r.peak_position for r in rows] == pytest.approx([gmf, 2 * gmf, 3 * gmf], abs=0.05)
    x, _ = cursor.markers.getData()
    assert sorted(set(np.round(x, 6))) == pytest.approx([799.6, 1199.4])


def test_peak_readout_explains_lines(analysis, plot):
    d = hz_data(analysis)
    cursors = CursorSet(plot)
    cursors.set_data(d)
    info = cursors.read_peak(373.5)
    # 400 - 26.667 Hz: lower sideband of the output shaft (domain reference 1.1 formulas)
    assert info.text.startswith("1 x GMF main pair - 1 x output shaft rate")
    assert info.order == pytest.approx(info.position / analysis.frequencies.reference_hz)
    # the 40/15 pair at 3000 rpm: 1950 Hz = 1 x GMF - 1 x input shaft rate (common practice, no source)
    table = frequency_table(load_model(DATA / "pair_40_15.toml"), 50.0)
    f = np.arange(0, 4000.0, 0.5)
    a = np.exp(-0.5 * ((f - 1950.0) / 0.6) ** 2) + 1e-3
    cursors.set_data(CursorData(f, a, "hz", 1.0, table))
    info = cursors.read_peak(1949.0)
    assert info.position == pytest.approx(1950.0, abs=0.01)
    assert info.text.startswith("1 x GMF main pair - 1 x input shaft rate")
    assert info.order == pytest.approx(39.0, abs=1e-3)  # 1950 / 50
    info = cursors.read_peak(1234.0)
    assert info.text == "no model match"


def test_order_axis_cursor(analysis, plot):
    o = analysis.order_spectrum
    table = analysis.frequencies
    d = CursorData(np.asarray(o.order), np.asarray(o.amplitude), "order", 1.0 / table.reference_hz, table, 0.0, "g")
    cursors = CursorSet(plot)
    cursors.set_data(d)
    cursor = cursors.add_sideband(40.0, 2.0)
    cursor.snap_centre_to_peak(0.2)
    assert cursor.centre == pytest.approx(40.0, abs=0.02)  # GMF = 40 input orders (domain reference 1.1)
    cursor.set_spacing(2.66)
    assert cursor.best_match().shaft == FAULT_SHAFT  # 40/15 = 2.667 orders; dsp.synth truth
    assert "orders" in cursor.readout().summary


def test_to_dict_round_trip_and_axis_change(analysis, plot):
    d = hz_data(analysis)
    cursors = CursorSet(plot, view="spectrum")
    cursors.set_data(d)
    cursors.add_harmonic(123.25, n=4)
    cursors.add_sideband(400.0, 26.5, n=2)
    saved = cursors.to_list()
    assert saved == [
        {"kind": "harmonic", "axis": "hz", "positions": [123.25], "spacing": None, "n": 4, "view": "spectrum"},
        {"kind": "sideband", "axis": "hz", "positions": [400.0], "spacing": 26.5, "n": 2, "view": "spectrum"},
    ]
    other = CursorSet(plot, view="spectrum")
    other.set_data(d)
    other.from_list(saved + [dict(saved[0], view="envelope")])
    assert other.to_list() == saved
    # Hz -> CPM: x 60 (definition of CPM)
    cpm = CursorData(d.x * 60.0, d.amplitude, "cpm", 60.0, d.table)
    other.set_data(cpm)
    assert other.cursors[1].centre == pytest.approx(24000.0) and other.cursors[1].spacing == pytest.approx(1590.0)
    restored = cursor_from_dict(saved[1], plot, cpm)
    assert isinstance(restored, SidebandCursor) and restored.spacing == pytest.approx(1590.0)
    assert isinstance(cursor_from_dict(saved[0], plot, None), HarmonicCursor)
    with pytest.raises(ValueError, match="Invalid value for 'kind'"):
        cursor_from_dict({"kind": "band", "positions": [1.0]}, plot, d)
    with pytest.raises(ValueError, match="positive spacing"):
        cursor_from_dict({"kind": "sideband", "positions": [1.0], "spacing": 0}, plot, d)
    assert math.isfinite(other.cursors[0].position)


def test_cursor_tools_keep_the_session_and_undo(analysis, plot, qtbot):
    from workbench.cursors import CursorTools
    from workbench.overlays import ModelOverlay
    from workbench.session import Session
    from workbench.undo import UndoHistory

    session = Session()
    envelope_entry = {"kind": "harmonic", "axis": "hz", "positions": [12.0], "spacing": None, "n": 5,
                      "view": "envelope"}
    session.cursors = [envelope_entry]
    history = UndoHistory(session, track_model=False)
    cursors = CursorSet(plot, view="spectrum")
    cursors.set_data(hz_data(analysis))
    overlay = ModelOverlay(plot)
    overlay.set_table(analysis.frequencies)
    tools = CursorTools(cursors, overlay, session, history)
    qtbot.addWidget(tools)
    assert not tools.buttons["snap_spacing"].isEnabled()
    side = cursors.add_sideband(400.0, 20.0)
    assert session.cursors[0] == envelope_entry  # another view's cursor is kept
    assert session.cursors[1]["spacing"] == 20.0 and session.cursors[1]["view"] == "spectrum"
    for x in (426.0, 426.6):   # two moves of one cursor: one undo step
        side.spacing_line.setValue(x)
        side.spacing_line.sigPositionChangeFinished.emit(side.spacing_line)
    assert session.cursors[1]["spacing"] == pytest.approx(26.6)
    tools.buttons["snap_spacing"].click()
    # output shaft 10 x 40/15 Hz (domain reference 1.1 formula)
    assert session.cursors[1]["spacing"] == pytest.approx(analysis.frequencies.shaft_hz("output"))
    history.undo()   # back before the snap
    assert cursors.cursors[0].spacing == pytest.approx(26.6)
    history.undo()   # back before the two moves
    assert cursors.cursors[0].spacing == pytest.approx(20.0)
    history.undo()   # before the cursor was added
    assert cursors.cursors == [] and session.cursors == [envelope_entry]
    history.redo()
    assert len(cursors.cursors) == 1 and cursors.cursors[0].centre == pytest.approx(400.0)


def test_window_sideband_row_puts_the_cursor_on_the_family(qtbot, tmp_path, sim_path):
    from PySide6.QtCore import QSettings

    from workbench import theme
    from workbench.main_window import MainWindow

    theme.configure_pyqtgraph()
    window = MainWindow(settings_store=QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat))
    qtbot.addWidget(window)
    window.resize(1400, 900)
    window.show()
    try:
        with qtbot.waitSignal(window.analysis_shown, timeout=60_000):
            window.open_recording(sim_path)
        analysis = window.analysis
        row = next(i for i, f in enumerate(analysis.sidebands) if f.harmonic == 1)
        family = analysis.sidebands[row]
        window.results.sidebands.cellClicked.emit(row, 0)
        view = window.views["spectrum"]
        assert window.tabs.currentWidget() is view
        cursor = view.cursor_set.active
        assert isinstance(cursor, SidebandCursor)
        assert cursor.centre == pytest.approx(family.carrier_hz) and cursor.spacing == pytest.approx(family.spacing_hz)
        # the table's owner, the cursor's readout and the simulator's truth agree
        assert family.owner_shaft == FAULT_SHAFT  # dsp.synth truth
        assert cursor.readout().extra["owner"] == FAULT_SHAFT
        assert f"= {FAULT_SHAFT} shaft rate" in view.cursor_readout.summary.text()
        lo, hi = window.session.view_options.spectrum_zoom_hz
        assert lo < family.carrier_hz - 3 * family.spacing_hz and hi > family.carrier_hz + 3 * family.spacing_hz
        saved = [c for c in window.session.cursors if c["view"] == "spectrum"]
        assert saved[-1]["spacing"] == pytest.approx(family.spacing_hz)
        # orders of the selected (tach) shaft: GMF at 40 orders, output spacing 40/15 (domain reference 1.1)
        window.choose_shaft(analysis.speed.shaft)   # the window first shows the top suspect's shaft
        window.session.set_view_options(spectrum_x="order")
        cursor = view.cursor_set.active
        assert cursor.centre == pytest.approx(40.0, rel=1e-3) and cursor.spacing == pytest.approx(40 / 15, rel=1e-3)
        assert cursor.best_match().shaft == FAULT_SHAFT
        assert np.min(np.abs(view.overlay.positions("mesh harmonics") - 40.0)) < 1e-9
    finally:
        window.runner.shutdown()


def test_cursors_survive_a_session_file(analysis, plot, qtbot, tmp_path):
    from workbench.cursors import CursorTools
    from workbench.session import Session
    from workbench.session_store import load_session, save_session

    session = Session()
    cursors = CursorSet(plot, view="spectrum")
    cursors.set_data(hz_data(analysis))
    tools = CursorTools(cursors, None, session)
    qtbot.addWidget(tools)
    cursors.add_sideband(400.0, 26.5, n=2)
    cursors.add_harmonic(123.25)
    path = save_session(session, tmp_path / "s.json")
    loaded = load_session(path, check_recording=False).session
    assert loaded.cursors == session.cursors  # JSON round trip, exact floats (json module)
    again = CursorSet(plot, view="spectrum")
    again.set_data(hz_data(analysis))
    tools2 = CursorTools(again, None, loaded)
    qtbot.addWidget(tools2)
    tools2.restore()
    assert again.to_list() == cursors.to_list()
    assert again.cursors[0].best_match().shaft == FAULT_SHAFT  # 26.5 Hz within tolerance of 26.667 Hz
