"""Tests of workbench.baseline_panel: comparison table, grown families, severity box."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest

from dsp.analysis import Settings, analyze
from dsp.baseline import compare
from dsp.model import load_model
from dsp.recording import read_recording
from dsp.severity import CAUTION
from dsp.spectrum import rfft_full, spectrum_from_rfft
from dsp.synth import Fault, simulate, write_simulation
from workbench.baseline_panel import BaselinePanel

ROOT = Path(__file__).resolve().parents[2]
PAIR = ROOT / "tests" / "data" / "pair_40_15.toml"


def _tone_analysis(velocity_rms_mm_s: float):
    """A stand-in analysis whose spectrum is one acceleration tone at 100 Hz."""
    fs, n = 4096.0, 16384
    t = np.arange(n) / fs
    # domain reference section 8: 1 g peak at 100 Hz = 11.0364 mm/s RMS
    a_g = velocity_rms_mm_s / 11.0364
    spec = spectrum_from_rfft(rfft_full(a_g * np.sin(2 * np.pi * 100.0 * t), fs), window="hann", units="g")
    return SimpleNamespace(spectrum=spec, settings=SimpleNamespace(velocity_band_hz=(10.0, 1000.0)),
                           overall={}, model=None)


@pytest.fixture(scope="module")
def comparison(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("panel")
    train = load_model(PAIR)
    out = []
    for name, faults in (("healthy", ()), ("tooth", (Fault("tooth", "main pair:output", tooth=3, severity="severe"),))):
        sim = simulate(train, rpm=1500.0, duration_s=3.0, fs=12800.0, seed=5, faults=faults)
        path = tmp / f"{name}.flac"
        model = write_simulation(sim, path, train)
        out.append(analyze(read_recording(path), model, Settings()))
    base, now = out
    return now, compare(now, base)


@pytest.fixture
def panel(qtbot):
    p = BaselinePanel()
    qtbot.addWidget(p)
    p.show()
    return p


def test_severity_box_follows_group_foundation_and_band(panel, qtbot):
    panel.show_analysis(_tone_analysis(3.0))
    assert panel.zone is not None
    assert panel.zone.velocity_rms_mm_s == pytest.approx(3.0, rel=1e-3)
    # from memory: ISO 10816-3:2009 Annex A (domain reference section 9, not confirmed):
    # group 2 rigid B/C 2.8, C/D 4.5 -> C; group 1 rigid A/B 2.3, B/C 4.5 -> B; group 1 flexible A/B 3.5 -> A
    assert panel.zone.zone == "C" and panel.zone_label.text().startswith("Zone C")
    with qtbot.waitSignal(panel.severity_changed) as sig:
        panel.group.setCurrentIndex(0)
    assert sig.args[:2] == ["group 1", "rigid"]
    assert panel.zone.zone == "B"
    panel.foundation.setCurrentIndex(1)
    assert panel.zone.zone == "A" and panel.zone.foundation == "flexible"
    # a band without the 100 Hz tone: only the window's leakage remains (Harris 1978, Hann)
    panel.band_lo.setValue(200.0)
    assert panel.zone.velocity_rms_mm_s < 1e-6 and panel.zone.zone == "A"
    assert panel.options() == ("group 1", "flexible", (200.0, 1000.0))


def test_caution_and_source_are_visible_with_the_zone(panel):
    panel.show_analysis(_tone_analysis(5.0))
    assert panel.zone.zone == "D"  # from memory: group 2 rigid C/D 4.5 (domain reference section 9)
    assert panel.caution_label.isVisible()
    assert panel.caution_label.text() == CAUTION
    assert "qualified analyst" in panel.caution_label.text()
    assert "FROM MEMORY" in panel.source_label.text()


def test_set_options_restores_a_session_choice(panel, qtbot):
    panel.show_analysis(_tone_analysis(3.0))
    with qtbot.assertNotEmitted(panel.severity_changed):
        panel.set_options(group="group 1", foundation="rigid", band_hz=(2.0, 1000.0))
    assert panel.options() == ("group 1", "rigid", (2.0, 1000.0))
    assert panel.zone.zone == "B"  # from memory: group 1 rigid 2.3 / 4.5 (domain reference section 9)


def test_comparison_table_and_grown_families(panel, comparison, qtbot):
    now, cmp = comparison
    panel.show_analysis(now)
    assert not panel.show_overlay.isEnabled()
    panel.show_comparison(cmp)
    assert panel.indicators.rowCount() == len(cmp.indicators)
    # synth: a severe tooth fault on the 15 T output pinion raises FM4 of shaft "output" (Stewart 1977)
    row = next(i for i, r in enumerate(cmp.indicators) if r.name == "fm4" and r.shaft == "output")
    assert panel.indicators.item(row, 6).text() == "grown"
    assert panel.indicators.item(row, 0).font().bold()
    assert panel.grown.rowCount() == max(len(cmp.grown), 1)
    if cmp.grown:
        assert panel.grown.item(0, 0).text() == cmp.grown[0].what
    assert cmp.baseline_sha256[:12] in panel.baseline_label.text()
    assert panel.show_overlay.isEnabled()
    with qtbot.waitSignal(panel.overlay_toggled) as sig:
        panel.show_overlay.setChecked(False)
    assert sig.args == [False]
    panel.show_comparison(None)
    assert panel.indicators.rowCount() == 0 and not panel.show_overlay.isEnabled()
    # the severity box still shows a zone with its caution for the real analysis
    assert panel.zone is not None and panel.caution_label.isVisible()


# --- in the window ------------------------------------------------------------------------

DEMO = ROOT / "demo_recordings"
TIMEOUT_MS = 60_000


@pytest.fixture
def window(qtbot, tmp_path):
    from PySide6.QtCore import QSettings

    from workbench import theme
    from workbench.main_window import MainWindow

    theme.configure_pyqtgraph()
    w = MainWindow(settings_store=QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat))
    qtbot.addWidget(w)
    w.resize(1400, 900)
    w.show()
    yield w
    w.runner.shutdown()


def test_window_loads_a_baseline_and_overlays_it(qtbot, window, tmp_path):
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        window.open_recording(DEMO / "03_broken_tooth.flac")
    controller = window.baseline
    texts = [a.text() for a in window.menuBar().actions()[0].menu().actions()]
    assert "Load &baseline recording..." in texts
    with qtbot.waitSignal(controller.compared, timeout=TIMEOUT_MS,
                          check_params_cb=lambda c: c is not None):
        controller.load_baseline(DEMO / "01_healthy_baseline.flac")
    cmp = controller.comparison
    assert window.session.baseline_path == str(DEMO / "01_healthy_baseline.flac")
    from workbench import session_store

    # the session file remembers the baseline (round trip through the saved document)
    saved = session_store.save_session(window.session, tmp_path / "s.json")
    loaded = session_store.load_session(saved, check_recording=False)
    assert loaded.session.baseline_path == str(DEMO / "01_healthy_baseline.flac")
    # demo README: 03 is a broken tooth on the intermediate wheel; 01 is the healthy baseline
    assert cmp.indicator("fm4", "intermediate").flag == "grown"
    assert controller.panel.indicators.rowCount() == len(cmp.indicators)
    assert window.results.suspects.item(0).text().startswith("1. shaft:intermediate")
    window.session.select_shaft("intermediate")
    window.session.set_view_options(spectrum_x="order", spectrum_units="g")
    for name in ("spectrum", "tsa", "envelope"):
        assert controller.overlays.has_data(name), name
    # the baseline TSA of the intermediate shaft is drawn on the current angle axis
    x, y = controller.overlays.items["tsa"].getData()
    np.testing.assert_allclose(x, cmp.tsa_angle_deg["intermediate"])
    controller.panel.show_overlay.setChecked(False)
    assert not any(controller.overlays.has_data(n) for n in ("spectrum", "tsa", "envelope"))
    # the caution is shown with the zone
    assert controller.panel.zone is not None and controller.panel.caution_label.isVisible()
    with qtbot.waitSignal(controller.compared, timeout=TIMEOUT_MS):
        window.session.set_baseline(None)
    assert controller.comparison is None and controller.panel.indicators.rowCount() == 0


# --- the runner's lanes ---------------------------------------------------------------------


def test_runner_lanes_cancel_only_their_own_requests(qtbot):
    import time

    from workbench.jobs import AnalysisRunner

    def fn(recording, model, settings, progress, cancel):
        t0 = time.perf_counter()
        while time.perf_counter() - t0 < 0.2:
            if cancel():
                from dsp.errors import Cancelled

                raise Cancelled()
            time.sleep(0.005)
        return settings

    r = AnalysisRunner(analyze_fn=fn)
    finished, cancelled = [], []
    r.finished.connect(lambda gen, res: finished.append((res.lane, res.analysis)))
    r.cancelled.connect(cancelled.append)
    try:
        base = r.submit(recording="rec", model="m", settings="baseline", lane="baseline")
        old = r.submit(recording="rec", model="m", settings="old")
        new = r.submit(recording="rec", model="m", settings="new")     # cancels "old" only
        qtbot.waitUntil(lambda: not r.is_busy(), timeout=10_000)
        # conventions.md rule 6: newest request wins, per lane; the baseline lane is left alone
        assert sorted(finished) == [("baseline", "baseline"), ("current", "new")]
        assert r.lane_of(base.generation) == "baseline" and r.lane_of(new.generation) == "current"
        assert old.generation in cancelled or ("current", "old") not in finished
        # a button's clicked(checked) reaching cancel() cancels everything
        r.submit(recording="rec", model="m", settings="again", lane="baseline")
        r.cancel(False)
        qtbot.waitUntil(lambda: not r.is_busy(), timeout=10_000)
        assert ("baseline", "again") not in finished
    finally:
        r.shutdown()
