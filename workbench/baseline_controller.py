"""The baseline comparison attached to the window: its analysis, its curves on the views, its dock.

:class:`BaselineController` analyses the baseline recording in the runner's own lane,
compares it with the current analysis (:func:`dsp.baseline.compare`) and shows the
result in a :class:`workbench.baseline_panel.BaselinePanel` dock;
:class:`BaselineOverlays` draws the baseline's curves in grey on the spectrum, TSA and
envelope views.  Both stay importable from :mod:`workbench.baseline_panel`.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from PySide6.QtCore import QObject, Qt, Signal

from workbench.baseline_panel import BASELINE_COLOUR, BaselinePanel


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
        self.dock = QDockWidget("Baseline", window)   # short: the stacked docks' tabs read fully (severity inside)
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
