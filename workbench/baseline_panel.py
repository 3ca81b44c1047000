"""Baseline panel: the comparison with a healthy baseline, and the severity box.

Top: the indicator table (baseline / now / change as a ratio and in dB / flag) of
:class:`dsp.baseline.BaselineComparison`, the mesh harmonics and sideband families
that grew (largest growth first), and the comparison's notes.  A check box switches
the baseline overlays on the views (``overlay_toggled``).

Bottom: the severity box.  The broadband velocity RMS of the current analysis over a
band the user sets, the machine group and foundation the user chooses, and the
evaluation zone of :func:`dsp.severity.velocity_zone` with its source.  The caution
text (:data:`dsp.severity.CAUTION`) is always visible wherever a zone is shown.

The panel only displays: the velocity for another band is a band sum over the
spectrum the analysis already holds (:func:`dsp.severity.overall_velocity_rms`).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from PySide6.QtCore import QObject, Qt, Signal
from PySide6.QtGui import QFont
from PySide6.QtWidgets import (QCheckBox, QComboBox, QDoubleSpinBox, QFormLayout, QGroupBox, QHBoxLayout, QLabel,
                               QVBoxLayout, QWidget)

from dsp import severity
from workbench import theme
from workbench.results_panel import fill_table as _fill
from workbench.results_panel import fmt
from workbench.results_panel import make_table as _table

#: Colour of every baseline curve (the theme's context-curve grey).
BASELINE_COLOUR = theme.CURVE_SECONDARY

INDICATOR_COLUMNS = ["indicator", "shaft", "baseline", "now", "ratio", "change dB", "flag"]
GROWN_COLUMNS = ["what grew", "order", "baseline", "now", "change dB"]
NO_BASELINE_TEXT = "No baseline loaded. File > Load baseline recording... compares this recording with a " \
                   "healthy recording of the same gearbox."
DB_NOTE = "dB: 20 log10 of the ratio for amplitudes (RMS, velocity, crest factor, FM0, ER); " \
          "10 log10 for kurtosis, FM4, NA4*, M6A, M8A."


def _db(value: float) -> str:
    return "n/a" if value is None or not math.isfinite(value) else f"{value:+.1f}"


class BaselinePanel(QWidget):
    """Comparison table, grown families and the severity box."""

    overlay_toggled = Signal(bool)
    severity_changed = Signal(str, str, float, float)   # group, foundation, band lo Hz, band hi Hz

    def __init__(self, parent: QWidget | None = None):
        super().__init__(parent)
        self.analysis: Any = None
        self.comparison: Any = None
        self.zone: severity.ZoneResult | None = None
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)

        # --- comparison ---------------------------------------------------------
        box = QGroupBox("Change since the baseline")
        inner = QVBoxLayout(box)
        inner.setContentsMargins(4, 4, 4, 4)
        self.baseline_label = QLabel(NO_BASELINE_TEXT)
        self.baseline_label.setWordWrap(True)
        self.baseline_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.show_overlay = QCheckBox("Baseline on the views (grey)")
        self.show_overlay.setChecked(True)
        self.show_overlay.setToolTip("Show the baseline's order spectrum, TSA and envelope spectrum as grey curves "
                                     "on the views; compared in orders of the reference shaft")
        self.show_overlay.setEnabled(False)
        self.show_overlay.toggled.connect(self.overlay_toggled)
        self.indicators = _table(INDICATOR_COLUMNS)
        self.grown = _table(GROWN_COLUMNS)
        self.db_note = QLabel(DB_NOTE)
        self.db_note.setWordWrap(True)
        self.notes = QLabel("")
        self.notes.setWordWrap(True)
        for w in (self.baseline_label, self.show_overlay):
            inner.addWidget(w)
        inner.addWidget(self.indicators, 3)
        inner.addWidget(self.db_note)
        inner.addWidget(self.grown, 2)
        inner.addWidget(self.notes)

        # --- severity ------------------------------------------------------------
        sbox = QGroupBox("Severity guidance (ISO 20816-3)")
        form = QFormLayout(sbox)
        form.setContentsMargins(4, 4, 4, 4)
        # a narrow dock puts a field under its label instead of cutting the caution text at the right
        form.setRowWrapPolicy(QFormLayout.RowWrapPolicy.WrapLongRows)
        self.band_lo = QDoubleSpinBox()
        self.band_hi = QDoubleSpinBox()
        for spin, value in ((self.band_lo, 10.0), (self.band_hi, 1000.0)):
            spin.setRange(0.5, 100000.0)
            spin.setDecimals(1)
            spin.setSuffix(" Hz")
            spin.setValue(value)
            spin.setKeyboardTracking(False)
            spin.valueChanged.connect(self._options_changed)
        band_row = QHBoxLayout()
        band_row.addWidget(self.band_lo)
        band_row.addWidget(QLabel("to"))
        band_row.addWidget(self.band_hi)
        band_widget = QWidget()
        band_widget.setLayout(band_row)
        band_row.setContentsMargins(0, 0, 0, 0)
        self.group = QComboBox()
        for i, g in enumerate(severity.GROUPS):
            self.group.addItem(f"{g} ({'large' if g == 'group 1' else 'medium'})", g)
            self.group.setItemData(i, severity.GROUP_MEANINGS[g], Qt.ItemDataRole.ToolTipRole)
        self.group.setToolTip("; ".join(f"{g}: {severity.GROUP_MEANINGS[g]}" for g in severity.GROUPS))
        self.group.setCurrentIndex(severity.GROUPS.index("group 2"))
        self.foundation = QComboBox()
        for f in severity.FOUNDATIONS:
            self.foundation.addItem(f, f)
        self.group.currentIndexChanged.connect(self._options_changed)
        self.foundation.currentIndexChanged.connect(self._options_changed)
        self.velocity_label = QLabel("-")
        self.velocity_label.setWordWrap(True)
        self.zone_label = QLabel("no recording analysed")
        self.zone_label.setWordWrap(True)
        font = QFont(self.zone_label.font())
        font.setBold(True)
        self.zone_label.setFont(font)
        self.source_label = QLabel(severity.SOURCE)
        self.source_label.setWordWrap(True)
        self.caution_label = QLabel(severity.CAUTION)
        self.caution_label.setWordWrap(True)
        self.caution_label.setStyleSheet(f"background: {theme.BANNER_WARNING}; padding: 4px;")
        form.addRow("velocity band", band_widget)
        form.addRow("machine group", self.group)
        form.addRow("foundation", self.foundation)
        form.addRow("velocity RMS", self.velocity_label)
        form.addRow("zone", self.zone_label)
        form.addRow(self.caution_label)          # right under the zone, so it is seen with it
        form.addRow("source", self.source_label)
        # the severity box first: short, and its caution stays in sight above the long table
        layout.addWidget(sbox, 2)
        layout.addWidget(box, 3)

    # --- public ---------------------------------------------------------------------

    def options(self) -> tuple[str, str, tuple[float, float]]:
        """(group, foundation, band in Hz) chosen in the severity box."""
        return (self.group.currentData(), self.foundation.currentData(),
                (float(self.band_lo.value()), float(self.band_hi.value())))

    def set_options(self, *, group: str | None = None, foundation: str | None = None,
                    band_hz: tuple[float, float] | None = None) -> None:
        """Set the severity choices (from a session) without emitting ``severity_changed`` per field."""
        widgets = (self.group, self.foundation, self.band_lo, self.band_hi)
        for w in widgets:
            w.blockSignals(True)
        try:
            if group is not None and group in severity.GROUPS:
                self.group.setCurrentIndex(severity.GROUPS.index(group))
            if foundation is not None and foundation in severity.FOUNDATIONS:
                self.foundation.setCurrentIndex(severity.FOUNDATIONS.index(foundation))
            if band_hz is not None:
                self.band_lo.setValue(float(band_hz[0]))
                self.band_hi.setValue(float(band_hz[1]))
        finally:
            for w in widgets:
                w.blockSignals(False)
        self._update_zone()

    def show_analysis(self, analysis: Any) -> None:
        """The current analysis: fills the severity box."""
        self.analysis = analysis
        self._update_zone()

    def show_comparison(self, comparison: Any) -> None:
        """A :class:`dsp.baseline.BaselineComparison`, or None to clear."""
        self.comparison = comparison
        if comparison is None:
            self.baseline_label.setText(NO_BASELINE_TEXT)
            self.indicators.setRowCount(0)
            self.grown.setRowCount(0)
            self.notes.setText("")
            self.show_overlay.setEnabled(False)
            return
        c = comparison
        self.baseline_label.setText(
            f"Baseline {c.baseline_path} ({c.baseline_rpm:.0f} rpm; now {c.current_rpm:.0f} rpm), "
            f"SHA-256 {c.baseline_sha256[:12]}...  Flags: amplitudes at {c.thresholds.amplitude_ratio:g}x, "
            f"kurtosis / FM4 / NA4* at baseline + {c.thresholds.moment_delta:g}, M6A / M8A at "
            f"{c.thresholds.high_moment_ratio:g}x.")
        model = getattr(self.analysis, "model", None)
        rows, colours = [], []
        for r in c.indicators:
            rows.append([r.label, r.shaft or "overall", fmt(r.baseline), fmt(r.now), fmt(r.change_ratio),
                         _db(r.change_db), r.flag])
            colours.append(theme.shaft_colour(model, r.shaft) if r.shaft else None)
        _fill(self.indicators, rows, colours, colour_column=1)
        for i, r in enumerate(c.indicators):
            item = self.indicators.item(i, 6)
            item.setToolTip(f"{r.rule}; dB as {r.db_kind}")
            if r.flag == "grown":
                font = QFont(item.font())
                font.setBold(True)
                for col in range(self.indicators.columnCount()):
                    self.indicators.item(i, col).setFont(font)
        rows = [[g.what, f"{g.order:.3f}", fmt(g.baseline), fmt(g.now), _db(g.change_db)] for g in c.grown]
        if not rows:
            rows = [["no mesh harmonic or sideband family grew", "", "", "", ""]]
        _fill(self.grown, rows)
        self.notes.setText("\n".join(f"Note: {n}" for n in c.notes))
        self.show_overlay.setEnabled(True)

    # --- internals ----------------------------------------------------------------------

    def _options_changed(self, *_args) -> None:
        group, foundation, band = self.options()
        self._update_zone()
        self.severity_changed.emit(group, foundation, band[0], band[1])

    def _update_zone(self) -> None:
        from dsp.errors import GearbenchError

        group, foundation, band = self.options()
        self.zone = None
        if self.analysis is None:
            self.velocity_label.setText("-")
            self.zone_label.setText("no recording analysed")
            self.caution_label.setVisible(True)
            return
        try:
            v = severity.overall_velocity_rms(self.analysis, band)
            self.zone = severity.velocity_zone(v, group=group, foundation=foundation, band_hz=band)
        except GearbenchError as exc:
            self.velocity_label.setText("-")
            self.zone_label.setText(str(exc))
            self.caution_label.setVisible(True)
            return
        z = self.zone
        b = z.boundaries_mm_s
        self.velocity_label.setText(f"{z.velocity_rms_mm_s:.2f} mm/s RMS ({band[0]:g} to {band[1]:g} Hz)")
        self.zone_label.setText(f"Zone {z.zone}: {z.meaning}  (A/B {b[0]:g}, B/C {b[1]:g}, C/D {b[2]:g} mm/s; "
                                f"{z.boundary_rule})")
        self.source_label.setText(z.source)
        self.caution_label.setText(z.caution)
        self.caution_label.setVisible(True)


class BaselineOverlays:
    """The baseline's curves on the spectrum, TSA and envelope views, in their own colour.

    One grey :class:`pyqtgraph.PlotDataItem` is added once to the ``plot`` of each
    of those views; it is redrawn with ``setData`` when the comparison, the selected
    shaft or the view options change, and hidden with :meth:`set_visible`.

    * spectrum: the baseline order spectrum (resampled onto the current order axis)
      placed at the current speed, in Hz, CPM or orders of the selected shaft; not
      shown for the velocity (mm/s) amplitude;
    * TSA: the baseline average, residual or difference (as the view shows) of the
      selected shaft, on the current angle axis;
    * envelope: the baseline squared-envelope spectrum in orders, placed at the
      current speed.
    """

    VIEWS = ("spectrum", "tsa", "envelope")

    def __init__(self, views: dict[str, Any], session: Any):
        import pyqtgraph as pg

        self.session = session
        self.views = views
        self.comparison: Any = None
        self.analysis: Any = None
        self.visible = True
        self.items: dict[str, Any] = {}
        for name in self.VIEWS:
            plot = getattr(views.get(name), "plot", None)
            if plot is None:
                continue
            colour = pg.mkColor(BASELINE_COLOUR)
            colour.setAlpha(200)
            item = pg.PlotDataItem(pen=pg.mkPen(colour, width=1))
            item.setZValue(5)       # over the current curve, which shows wherever it rose above the baseline
            if name != "tsa":
                item.setClipToView(True)
                item.setDownsampling(auto=True, method="peak")
            plot.addItem(item)
            self.items[name] = item
        self._unsubscribe = session.subscribe(self._on_event, ("shaft", "view_options"))

    def set_comparison(self, comparison: Any, analysis: Any) -> None:
        """Show ``comparison`` (a :class:`dsp.baseline.BaselineComparison`) over ``analysis``; None clears."""
        self.comparison = comparison
        self.analysis = analysis
        self.refresh()

    def set_visible(self, on: bool) -> None:
        self.visible = bool(on)
        self.refresh()

    def has_data(self, name: str) -> bool:
        x, _ = self.items[name].getData()
        return x is not None and len(x) > 0 and self.items[name].isVisible()

    def _on_event(self, _event) -> None:
        self.refresh()

    def refresh(self) -> None:
        c, a = self.comparison, self.analysis
        show = self.visible and c is not None and a is not None
        for name, item in self.items.items():
            item.setVisible(show)
            if not show:
                item.setData([], [])
                continue
            x, y = getattr(self, f"_{name}_xy")(c, a)
            keep = np.isfinite(x) & np.isfinite(y)
            item.setData(x[keep], y[keep])

    # -- the curves, display transforms only
    def _spectrum_xy(self, c, a):
        from workbench.views.base import convert_acceleration, positive_for_log

        options = self.session.view_options
        empty = (np.zeros(0), np.zeros(0))
        if options.spectrum_units == "mm/s":
            return empty
        f_ref = float(a.frequencies.reference_hz)
        scale = {"hz": 1.0, "cpm": 60.0}.get(options.spectrum_x)
        if scale is None:   # orders of the selected shaft
            rate = next((s.hz for s in a.frequencies.shafts if s.name == self.session.selected_shaft), None)
            scale = 1.0 / rate if rate else 1.0
        x = np.asarray(c.order, dtype=float) * f_ref * scale
        y = convert_acceleration(np.asarray(c.baseline_order_amplitude, dtype=float), c.units or "g",
                                 options.spectrum_units)
        if options.spectrum_log_y:
            finite = np.isfinite(y)
            y = np.where(finite, positive_for_log(np.where(finite, y, 0.0)), np.nan)
        return x, y

    def _tsa_xy(self, c, a):
        shaft = self.session.selected_shaft
        signals = c.baseline_tsa_signals.get(shaft)
        if not signals:
            return np.zeros(0), np.zeros(0)
        which = self.session.view_options.tsa_signal
        return np.asarray(c.tsa_angle_deg[shaft], dtype=float), np.asarray(signals[which], dtype=float)

    def _envelope_xy(self, c, a):
        f_ref = float(a.frequencies.reference_hz)
        return (np.asarray(c.envelope_order, dtype=float) * f_ref,
                np.asarray(c.baseline_envelope_amplitude, dtype=float))


class BaselineController(QObject):
    """Attaches the baseline comparison to the workbench window (one line in the window).

    - File > Load baseline recording... / Clear baseline;
    - the baseline recording is analysed by the window's runner in its own lane
      (``lane="baseline"``), with the session's settings over the whole record and
      the model file beside it (else the window's model);
    - when both analyses are there, :func:`dsp.baseline.compare` (a few tens of ms)
      fills the :class:`BaselinePanel` (a dock tabbed with the results), the grey
      overlays and the re-ranked suspects of the results panel;
    - the session remembers the baseline path (``Session.set_baseline``).
    """

    compared = Signal(object)       # the BaselineComparison shown (None when cleared or refused)

    def __init__(self, window: Any):
        super().__init__(window)
        from PySide6.QtWidgets import QDockWidget

        self.window = window
        self.session = window.session
        self.runner = window.runner
        self.panel = BaselinePanel()
        self.dock = QDockWidget("Baseline and severity", window)
        self.dock.setObjectName("baseline_dock")
        from PySide6.QtWidgets import QScrollArea

        scroll = QScrollArea()        # the dock never forces the window wider than the results dock
        scroll.setWidgetResizable(True)
        scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        scroll.setWidget(self.panel)
        self.dock.setWidget(scroll)
        self.dock.setFeatures(QDockWidget.DockWidgetFeature.DockWidgetMovable
                              | QDockWidget.DockWidgetFeature.DockWidgetFloatable)
        window.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, self.dock)
        results = window.findChild(QDockWidget, "results_dock")
        if results is not None:
            window.tabifyDockWidget(results, self.dock)
            results.raise_()
        self.overlays = BaselineOverlays(window.views, self.session)
        self.panel.overlay_toggled.connect(self.overlays.set_visible)
        self.baseline_analysis: Any = None
        self.comparison: Any = None
        self._key: Any = None
        self._gen: int | None = None
        self._build_menu()
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)
        window.analysis_shown.connect(self._on_analysis)
        self.session.subscribe(self._on_event, ("baseline",))
        # the severity box's choices live in the session (saved with it, restored when it is opened)
        self.panel.severity_changed.connect(self._on_severity_chosen)
        self.session.subscribe(self._on_severity_event, ("severity",))
        self._on_severity_event(None)

    # -- menu
    def _build_menu(self) -> None:
        from PySide6.QtGui import QAction

        bar = self.window.menuBar()
        menus = {a.menu().title().replace("&", ""): a.menu() for a in bar.actions() if a.menu() is not None}
        file_menu = menus.get("File") or bar.addMenu("&File")
        first = next((a for a in file_menu.actions() if a.isSeparator()), None)
        self.load_action = QAction("Load &baseline recording...", self.window)
        self.load_action.setToolTip("Compare with a healthy recording of the same gearbox")
        self.load_action.triggered.connect(self._ask_baseline)
        self.clear_action = QAction("Clear baseline", self.window)
        self.clear_action.triggered.connect(lambda: self.session.set_baseline(None))
        for action in (self.load_action, self.clear_action):
            file_menu.insertAction(first, action) if first is not None else file_menu.addAction(action)

    def _ask_baseline(self) -> None:
        from pathlib import Path

        from PySide6.QtWidgets import QFileDialog

        start = self.session.recording_path.parent if self.session.recording_path else Path.cwd()
        path, _ = QFileDialog.getOpenFileName(self.window, "Load baseline recording", str(start),
                                              "Recordings (*.flac *.wav *.ogg *.aiff *.aif *.w64 *.rf64 *.caf)")
        if path:
            self.load_baseline(path)

    # -- public
    def load_baseline(self, path) -> None:
        """Compare with the recording at ``path`` (analysed in the background)."""
        self.session.set_baseline(path)

    def request(self) -> bool:
        """Submit the baseline analysis when it is missing or out of date; True when submitted."""
        from dataclasses import replace
        from pathlib import Path

        from dsp.errors import GearbenchError

        path = self.session.baseline_path
        if not path:
            return False
        path = Path(path)
        model = self.session.model
        beside = path.with_suffix(".toml")
        if beside.exists():
            from dsp.model import load_model

            try:
                model = load_model(beside)
            except GearbenchError as exc:
                self.window.banner.set_part("baseline", "error", f"Baseline model {beside.name}: {exc}")
                return False
        if model is None:
            return False
        settings = replace(self.session.settings, t_start_s=None, t_end_s=None)
        key = (str(path), model, settings)
        if key == self._key and (self.baseline_analysis is not None or self._gen is not None):
            return False
        self._key = key
        self.baseline_analysis = None
        request = self.runner.submit(recording=None, model=model, settings=settings, recording_path=path,
                                     lane="baseline")
        self._gen = request.generation
        self.window.status_label.setText(f"analysing the baseline {path.name}...")
        return True

    # -- events
    def _on_severity_chosen(self, group: str, foundation: str, lo_hz: float, hi_hz: float) -> None:
        self.session.set_severity(group=group, foundation=foundation, band_hz=(lo_hz, hi_hz))

    def _on_severity_event(self, _event) -> None:
        chosen = getattr(self.session, "severity", None) or {}
        band = chosen.get("band_hz")
        self.panel.set_options(group=chosen.get("group"), foundation=chosen.get("foundation"),
                               band_hz=tuple(band) if isinstance(band, (list, tuple)) and len(band) == 2 else None)

    def _on_event(self, event) -> None:
        # a new baseline path; settings and model changes are picked up when the
        # current analysis comes back, so the current recording is analysed first
        self.window.banner.set_part("baseline", "error", None)
        self._key, self._gen, self.baseline_analysis = None, None, None
        if not event.value:
            self.runner.cancel(lane="baseline")
            self._show(None)
            return
        if self.window.analysis is not None:
            self.request()

    def _on_analysis(self, analysis: Any) -> None:
        self.panel.show_analysis(analysis)
        if self.session.baseline_path and not self.request():
            self._compare()
        elif not self.session.baseline_path:
            self._show(None)

    def _on_finished(self, gen: int, result: Any) -> None:
        if getattr(result, "lane", "current") != "baseline" or gen != self._gen:
            return
        self._gen = None
        self.baseline_analysis = result.analysis
        self.window.banner.set_part("baseline", "error", None)
        self._idle_text(f"baseline analysed in {result.elapsed_s:.2f} s")
        self._compare()

    def _on_failed(self, gen: int, message: str) -> None:
        if gen != self._gen:
            return
        self._gen = None
        self.window.banner.set_part("baseline", "error", f"Baseline recording: {message}")
        self._idle_text("baseline analysis stopped")
        self._show(None)

    def _on_cancelled(self, gen: int) -> None:
        if gen == self._gen:
            self._gen = None
            self._key = None    # analyse it again next time
            self._idle_text("baseline analysis cancelled")

    def _idle_text(self, text: str) -> None:
        if not self.runner.is_busy():
            self.window._set_busy(False, text)

    def _compare(self) -> None:
        from dsp.baseline import compare
        from dsp.errors import GearbenchError

        current = self.window.analysis
        if current is None or self.baseline_analysis is None:
            return
        try:
            comparison = compare(current, self.baseline_analysis)
        except GearbenchError as exc:
            self.window.banner.set_part("baseline", "error", f"Baseline not compared: {exc}")
            self._show(None)
            return
        self._show(comparison)

    def _show(self, comparison: Any) -> None:
        from dataclasses import replace

        self.comparison = comparison
        analysis = self.window.analysis
        self.panel.show_comparison(comparison)
        self.overlays.set_comparison(comparison, analysis)
        if analysis is not None:
            shown = replace(analysis, suspects=comparison.suspects) if comparison is not None else analysis
            self.window.results.show_analysis(shown)
        self.compared.emit(comparison)
