"""Readability of the window as an analyst reads it: messages, the shaft shown first, labels, widths.

Uses the bundled demo recordings (demo_recordings/README.md says what each one shows).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QTabBar

import workbench
from workbench import theme
from workbench.banner import Banner, join_sentences
from workbench.cli import main
from workbench.main_window import MainWindow

DEMOS = Path(workbench.__file__).resolve().parents[1] / "demo_recordings"
BROKEN = DEMOS / "03_broken_tooth.flac"
BEARING = DEMOS / "05_bearing_outer_race.flac"
NO_TACH = DEMOS / "07_no_tach_route.flac"
TIMEOUT_MS = 60_000


@pytest.fixture
def window(qtbot, tmp_path):
    theme.configure_pyqtgraph()
    w = MainWindow(settings_store=QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat))
    qtbot.addWidget(w)
    w.resize(1400, 900)
    w.show()
    yield w
    w.runner.shutdown()


def analysed(qtbot, window, start):
    """Run ``start()`` and wait for the analysis it causes."""
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        start()
    return window.analysis


# ---------------------------------------------------------------- 1. banner sentences
def test_banner_sentences_are_joined_cleanly(qtbot):
    text = join_sentences(["the tach lost 3 pulses; they were repaired.", "  the speed wanders by 8 %  ",
                           "check the spectrum.", ""])
    assert text.split("\n") == ["The tach lost 3 pulses; they were repaired.", "The speed wanders by 8 %.",
                                "Check the spectrum."]  # common practice, no source: one sentence, one full stop
    assert ".;" not in text and ".." not in text  # common practice, no source
    banner = Banner()
    qtbot.addWidget(banner)
    banner.set_part("warnings", "warning", text)
    banner.set_part("model", "error", "Model: shafts[0].name is empty; name the shaft.")
    assert banner.text().count("<br>") == 3 and ".;" not in banner.text()  # one message per line (common practice, no source)


# ---------------------------------------------------------------- 2. model file named once
def test_a_broken_model_file_is_named_once(qtbot, window, tmp_path):
    bad = tmp_path / "reducer.toml"
    bad.write_text("name = 'RD-2'\nshafts = [\n", encoding="utf-8")
    assert not window.open_model(bad)
    message = window.banner.plain_text()
    assert message.count("reducer.toml") == 1, message  # common practice, no source: say the name once
    assert "TOML" in message  # the reason stays (dsp.model: "the model is not valid TOML")


# ---------------------------------------------------------------- 3. report type
def test_report_to_a_text_file_says_how_to_fix_it(tmp_path, capsys):
    assert main(["report", str(BROKEN), "-o", str(tmp_path / "x.txt")]) == 2  # design.md: bad input exits 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and ".txt" in err and "use an output name ending in .pdf or .html" in err  # design.md: what is wrong and how to fix it


# ---------------------------------------------------------------- 4 and 5. the suspect shown first
def test_the_top_suspect_is_shown_until_the_analyst_chooses(qtbot, window):
    analysis = analysed(qtbot, window, lambda: window.open_recording(BROKEN))
    assert analysis.suspects[0].component == "shaft:intermediate"  # demo_recordings/README.md, 03
    assert window.session.selected_shaft == "intermediate"  # demo README, 03: the TSA of "intermediate" shows tooth 40
    assert window.views["tsa"].current_tsa().shaft == "intermediate"  # common practice, no source
    window.shaft_combo.setCurrentText("input")               # the analyst chooses
    analysed(qtbot, window, lambda: window.session.update_settings(alarm_threshold=0.51))
    assert window.session.selected_shaft == "input"  # never override the analyst's choice (review defect 4)
    # another recording: its own top suspect is shown again, a bearing with its defect lines named
    analysis = analysed(qtbot, window, lambda: window.open_recording(BEARING))
    top = analysis.suspects[0]
    assert top.component == "bearing:intermediate NDE" and "outer race" in top.kind  # demo README, 05
    assert window.session.selected_shaft == "intermediate"  # the bearing sits on the intermediate shaft (demo model)
    envelope = window.views["envelope"]
    window.session.set_current_view("envelope")
    labels = dict(envelope.overlay.label_texts())
    bpfo_hz = next(b.bpfo_hz for b in analysis.frequencies.bearings if b.name == "intermediate NDE")
    assert bpfo_hz == pytest.approx(38.558, rel=2e-3)  # demo_recordings/README.md bearing table: BPFO 38.558 Hz
    named = {text: x for x, text in labels.items()}
    for h in (1, 2, 3):   # the defect line and its harmonics carry their names
        x = named.get(f"{h}× intermediate NDE BPFO" if h > 1 else "intermediate NDE BPFO")
        assert x == pytest.approx(h * bpfo_hz), sorted(named)  # a defect repeats at BPFO: lines at h x BPFO (common practice, no source)
    assert "intermediate NDE" in envelope.caption.text()  # common practice, no source
    # the analyst picks the input shaft: the suspect bearing stays named
    window.shaft_combo.setCurrentText("input")
    assert any("intermediate NDE BPFO" in text for _, text in envelope.overlay.label_texts())  # review defect 5
    # a click on a suspect bearing names that bearing's lines
    window.results.component_chosen.emit("bearing:input DE", "bearing inner race")
    texts = [text for _, text in envelope.overlay.label_texts()]
    assert any("input DE BPFI" in text for text in texts), texts  # review defect 5
    assert not any("intermediate NDE" in text for text in texts)  # common practice, no source


# ---------------------------------------------------------------- 8. speed source in words
def test_speed_view_without_a_tach_says_where_the_speed_came_from(qtbot, window):
    analysis = analysed(qtbot, window, lambda: window.open_recording(NO_TACH))
    assert analysis.speed.source == "estimated" and analysis.tach is None  # demo README, 07: no tach channel
    speed = window.views["speed"]
    window.session.set_current_view("speed")
    caption = speed.caption.text()
    assert "speed estimated from the stage 1 mesh phase (no tach)" in caption  # demo README, 07: follows the stage 1 mesh phase
    assert "speed from estimated" not in caption  # review defect 8
    assert speed.legend_texts() == ["speed"]  # no repaired pulses, no legend entry for them
    text = window.banner.plain_text()
    assert ".;" not in text and ".." not in text and "stage 1" in text  # demo README, 07: the warning names the mesh
    tsa = window.views["tsa"]
    window.session.set_current_view("tsa")
    assert "tooth numbers cannot be read" in tsa.caption.text()  # demo README, 07: the angle origin of the TSA is arbitrary
    assert "origin arbitrary" in tsa.plot.getAxis("bottom").labelText  # demo README, 07


def test_repaired_pulses_have_a_legend_entry_only_when_there_are_some(qtbot, window):
    analysis = analysed(qtbot, window, lambda: window.open_recording(BROKEN))
    speed = window.views["speed"]
    window.session.set_current_view("speed")
    assert analysis.tach is not None and not np.any(analysis.tach.repaired)  # demo 03 has a clean tach
    assert "repaired tach pulse" not in speed.legend_texts() and "speed from the tach" in speed.caption.text()
    repaired = np.zeros(len(analysis.tach.times_s), dtype=bool)
    repaired[[10, 20]] = True
    pulses = dataclasses.replace(analysis.tach, repaired=repaired, n_repaired=2)
    speed.show_analysis(dataclasses.replace(analysis, tach=pulses), window.recording)
    assert "repaired tach pulse" in speed.legend_texts()  # common practice, no source
    assert "2 tach pulses repaired" in speed.caption.text()  # common practice, no source
    speed.show_analysis(analysis, window.recording)
    assert "repaired tach pulse" not in speed.legend_texts()  # common practice, no source


# ---------------------------------------------------------------- 6 and 7. every control reads fully
@pytest.mark.parametrize("size", [(1280, 720), (1600, 1000)])
def test_controls_and_key_columns_read_fully(qtbot, tmp_path, size):
    theme.configure_pyqtgraph()
    window = MainWindow(settings_store=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat))
    qtbot.addWidget(window)
    window.resize(*size)
    window.show()
    try:
        analysed(qtbot, window, lambda: window.open_recording(BROKEN))
        for name in ("spectrum", "tsa"):
            window.session.set_current_view(name)
            qtbot.wait(20)
            view = window.views[name]
            caption = view.caption
            if caption.text():   # the caption's wrapped text fits its height (nothing cut at the bottom)
                assert caption.heightForWidth(caption.width()) <= caption.height() + 1, (name, caption.text())  # common practice, no source
        button = window.views["spectrum"].cursor_tools.legend.menu_button
        needed = button.fontMetrics().horizontalAdvance(button.text())
        assert button.width() >= needed + 12, (button.text(), button.width())  # text plus the menu arrow (common practice, no source)
        assert "families drawn" in button.toolTip()  # the long form is the tooltip
        for bar in window.findChildren(QTabBar):   # stacked docks' tabs show their whole titles
            if bar is window.tabs.tabBar() or not bar.isVisible():
                continue
            for i in range(bar.count()):
                assert bar.tabRect(i).width() >= bar.fontMetrics().horizontalAdvance(bar.tabText(i)), bar.tabText(i)  # common practice, no source
        table = window.results.sidebands
        header = table.horizontalHeader()
        titles = [table.horizontalHeaderItem(c).text() for c in range(table.columnCount())]
        assert {"owner", "SI", "SLF"} <= set(titles)  # SI and SLF: the sideband indicators of dsp.indicators (common practice, no source)
        assert header.length() <= table.viewport().width(), (header.length(), table.viewport().width())  # no sideways scrolling
        assert all(table.horizontalHeaderItem(c).toolTip() for c in range(table.columnCount()))  # long forms as tooltips
        tsa_titles = [window.results.tsa.horizontalHeaderItem(c).text() for c in range(4)]
        assert tsa_titles == ["shaft", "FM4", "NA4", "ER"]  # key indicators first (common practice, no source)
        tsa_header = window.results.tsa.horizontalHeader()
        assert tsa_header.sectionPosition(3) + tsa_header.sectionSize(3) <= window.results.tsa.viewport().width()  # in view
    finally:
        window.runner.shutdown()


# ---------------------------------------------------------------- the cepstrum's rahmonics stand out
def test_cepstrum_rahmonic_is_not_flattened_by_low_quefrencies(qtbot, window):
    analysed(qtbot, window, lambda: window.open_recording(BROKEN))
    cepstrum = window.views["cepstrum"]
    window.session.set_current_view("cepstrum")
    assert window.session.selected_shaft == "intermediate"  # demo README, 03
    first_ms = cepstrum.rahmonics_ms()[0]
    assert first_ms == pytest.approx(124.7, abs=0.1)  # demo README, 03: rahmonic at 124.7 ms (1 / 8.02 Hz)
    q_ms, values = cepstrum.curve.getData()
    near = np.abs(q_ms - first_ms) < 1.0
    _, (y0, y1) = cepstrum.plot.getViewBox().viewRange()
    peak = float(values[near].max())
    assert y0 < peak <= y1 and peak >= 0.3 * y1, (peak, y1)  # the rahmonic reads as a peak, not a dot (common practice, no source)


def test_a_saved_shaft_choice_survives_opening_the_session(qtbot, window, tmp_path):
    analysed(qtbot, window, lambda: window.open_recording(BROKEN))
    window.shaft_combo.setCurrentText("input")               # the analyst's choice, saved with the session
    saved = window.document.save_session(tmp_path / "work.json")
    theme.configure_pyqtgraph()
    other = MainWindow(settings_store=QSettings(str(tmp_path / "other.ini"), QSettings.Format.IniFormat))
    qtbot.addWidget(other)
    other.show()
    try:
        analysed(qtbot, other, lambda: other.document.open_session(saved))
        assert other.session.selected_shaft == "input"  # never override a choice the analyst made (review defect 4)
    finally:
        other.runner.shutdown()
