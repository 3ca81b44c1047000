"""Spectrum view: amplitude spectrum with a choice of lines, axis and units.

Lines: "fine" draws the one-FFT spectrum of the whole record (the finest line
spacing, for sidebands); "averaged" draws ``Analysis.extras["averaged_spectrum"]``,
the same spectrum grouped into lines ``settings.spectrum_resolution_hz`` apart (a
smoother noise floor for a full span).  The choice applies to the Hz and CPM axes of
an acceleration; the order axis always shows the order spectrum and mm/s the
velocity spectrum of the fine lines (there is no averaged velocity spectrum).

x axis in Hz, cycles per minute (CPM) or orders of the selected shaft (the order
spectrum from angular resampling when the amplitude is an acceleration, the
frequency spectrum divided by the shaft's mean rate for velocity).  Amplitude in g,
m/s2 or mm/s (the velocity spectrum of the analysis).  The orange region,
shown with "Choose envelope band", sets the envelope band and re-runs the analysis.
Model lines (switchable families, coloured by shaft, the gear mesh frequency (GMF)
harmonics labelled), harmonic and sideband cursors and their readout come from
:mod:`workbench.overlays` and :mod:`workbench.cursors`.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtWidgets import QCheckBox, QComboBox, QDoubleSpinBox, QHBoxLayout, QLabel, QPushButton, QWidget

from workbench import theme
from workbench.cursors import MIN_LINES_PER_SPACING, attach_to_view, show_on_view, sidebands_merge
from workbench.views.base import AnalysisView, convert_acceleration, positive_for_log

X_CHOICES = (("hz", "Hz"), ("cpm", "CPM"), ("order", "orders"))
Y_CHOICES = (("g", "g"), ("m/s2", "m/s²"), ("mm/s", "mm/s"))
LINE_CHOICES = ("fine", "averaged")


class SpectrumView(AnalysisView):
    name = "spectrum"
    title = "Spectrum"
    listens_to = ("shaft", "view_options", "settings")

    def __init__(self, session, parent=None):
        super().__init__(session, parent)
        self.x_combo = QComboBox()
        for key, text in X_CHOICES:
            self.x_combo.addItem(text, key)
        self.y_combo = QComboBox()
        for key, text in Y_CHOICES:
            self.y_combo.addItem(text, key)
        self.lines_combo = QComboBox()
        self.lines_combo.addItem("fine (full record)", "fine")
        self.lines_combo.addItem("averaged", "averaged")
        # the item text gains the line spacing once an analysis is shown: let the box grow to it
        self.lines_combo.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        self.log_box = QCheckBox("log amplitude")
        self.centre_spin = _spin("", " Hz", 0, 1e5, 1000)
        self.centre_spin.setToolTip("Centre of the zoom band")
        self.span_spin = _spin("± ", " Hz", 0.5, 1e5, 250)
        self.span_spin.setToolTip("Half width of the zoom band")
        zoom = QPushButton("Zoom")
        zoom.setToolTip("Show only the band centre ± half width")
        full = QPushButton("Full")
        full.setToolTip("Show the whole spectrum")
        self.band_button = QPushButton("Envelope band")
        self.band_button.setCheckable(True)
        self.band_button.setToolTip("Show the orange region; drag it to the band to demodulate and the analysis re-runs")
        self.auto_band = QPushButton("Kurtogram band")
        self.auto_band.setToolTip("Let the kurtogram choose the envelope band again")
        for text, widget in (("lines", self.lines_combo), ("x axis", self.x_combo), ("amplitude", self.y_combo)):
            self.controls.addWidget(QLabel(text))
            self.controls.addWidget(widget)
        self.controls.addWidget(self.log_box)
        self.controls.addWidget(self.band_button)
        self.controls.addWidget(self.auto_band)
        # the zoom band: one widget, so that it wraps as a whole on a narrow window
        zoom_row = QWidget()
        row = QHBoxLayout(zoom_row)
        row.setContentsMargins(0, 0, 0, 0)
        row.setSpacing(6)
        row.addWidget(QLabel("zoom"))
        for widget in (self.centre_spin, self.span_spin, zoom, full):
            row.addWidget(widget)
        self.controls.addWidget(zoom_row)
        self.finish_controls()
        self.plot = self.add_plot(x_label="frequency (Hz)", y_label="amplitude")
        self.curve = self.plot.plot(pen=pg.mkPen(theme.CURVE, width=1))
        self.curve.setClipToView(True)
        self.curve.setDownsampling(auto=True, method="peak")
        self.band_region = pg.LinearRegionItem(brush=pg.mkBrush(*theme.REGION_BAND))
        self.band_region.setVisible(False)
        self.band_region.setZValue(10)
        self.plot.addItem(self.band_region, ignoreBounds=True)
        self.band_region.sigRegionChangeFinished.connect(self._on_band_finished)
        # model lines, harmonic and sideband cursors, their readout (workbench.cursors); on averaged
        # lines the cursors themselves read peaks by power sum and name no shaft for merged sidebands
        attach_to_view(self)
        self._updating = False
        self._sync_controls()
        self.x_combo.currentIndexChanged.connect(self._on_controls)
        self.y_combo.currentIndexChanged.connect(self._on_controls)
        self.lines_combo.currentIndexChanged.connect(self._on_controls)
        self.log_box.toggled.connect(self._on_controls)
        zoom.clicked.connect(self._on_zoom)
        full.clicked.connect(lambda: self.session.set_view_options(spectrum_zoom_hz=None))
        self.band_button.toggled.connect(self._on_band_toggled)
        self.auto_band.clicked.connect(lambda: self.session.set_envelope_band(None))

    def data_items(self):
        return [self.curve]

    # -- session -> widgets
    def _sync_controls(self) -> None:
        options = self.session.view_options
        self._updating = True
        self.x_combo.setCurrentIndex([k for k, _ in X_CHOICES].index(options.spectrum_x))
        self.y_combo.setCurrentIndex([k for k, _ in Y_CHOICES].index(options.spectrum_units))
        self.log_box.setChecked(options.spectrum_log_y)
        self.lines_combo.setCurrentIndex(LINE_CHOICES.index(options.spectrum_lines))
        self._sync_lines_combo()
        self._updating = False

    def _sync_lines_combo(self) -> None:
        """Name the averaged line spacing; grey the choice out where it does not apply, and say why."""
        res = self._averaged_resolution_hz()
        self.lines_combo.setItemText(1, "averaged" if res is None else f"averaged ({res:g} Hz)")
        reason = self._lines_not_applicable()
        self.lines_combo.setEnabled(reason is None)
        spacing = "settings.spectrum_resolution_hz" if res is None else f"{res:g} Hz"
        tip = (f"fine: one FFT of the whole record, every line (for sidebands); averaged: the same spectrum "
               f"grouped into lines {spacing} apart (a smoother noise floor on a wide span). "
               "The averaged lines apply to acceleration (g, m/s²) on the Hz and CPM axes. A tone on the edge "
               "of two averaged lines reads on both (each down to -3 dB); the peak readout adds their powers.")
        self.lines_combo.setToolTip(tip if reason is None else f"{tip} Not used now: {reason}.")

    def _averaged_resolution_hz(self) -> float | None:
        analysis = self.analysis
        if analysis is None:
            return None
        return float(analysis.settings.spectrum_resolution_hz)

    def _averaged(self):
        """The analysis' averaged spectrum, or None."""
        analysis = self.analysis
        return None if analysis is None else (getattr(analysis, "extras", None) or {}).get("averaged_spectrum")

    def _lines_not_applicable(self) -> str | None:
        """Why the lines choice does not apply to what is shown (None: it applies)."""
        options = self.session.view_options
        if options.spectrum_units == "mm/s":
            return "mm/s shows the velocity spectrum of the fine lines (no averaged velocity spectrum)"
        if options.spectrum_x == "order" and self._order_spectrum_shown():
            return "the order axis shows the order spectrum (from angular resampling)"
        if self.analysis is not None and self._averaged() is None:
            return "this analysis has no averaged spectrum"
        return None

    def _order_spectrum_shown(self) -> bool:
        analysis = self.analysis
        return (analysis is not None and getattr(analysis, "order_spectrum", None) is not None
                and self.session.view_options.spectrum_x == "order" and self._scale_hz() not in (None, 1.0))

    def _on_event(self, event) -> None:
        if event.kind == "view_options":
            self._sync_controls()
        super()._on_event(event)

    # -- widgets -> session
    def _on_controls(self, *_args) -> None:
        if self._updating:
            return
        self.session.set_view_options(spectrum_x=self.x_combo.currentData(),
                                      spectrum_units=self.y_combo.currentData(),
                                      spectrum_log_y=self.log_box.isChecked(),
                                      spectrum_lines=self.lines_combo.currentData())

    def _on_zoom(self) -> None:
        centre, half = self.centre_spin.value(), self.span_spin.value()
        self.session.set_view_options(spectrum_zoom_hz=(max(centre - half, 0.0), centre + half))

    def _on_band_toggled(self, on: bool) -> None:
        self.band_region.setVisible(on)
        if on and self.analysis is not None:
            self._place_band_region()

    def _on_band_finished(self) -> None:
        if self._updating or not self.band_region.isVisible():
            return
        lo, hi = (self._to_hz(v) for v in self.band_region.getRegion())
        if lo is None or hi is None or hi <= lo:
            return
        self.session.set_envelope_band((max(lo, 0.0), hi))

    # -- drawing
    def _scale_hz(self) -> float | None:
        """Display x units per Hz for the current axis (None: orders without a shaft rate)."""
        x = self.session.view_options.spectrum_x
        if x == "hz":
            return 1.0
        if x == "cpm":
            return 60.0
        rate = self.shaft_rate_hz(self.session.selected_shaft)
        return 1.0 / rate if rate else None

    def _to_hz(self, value: float) -> float | None:
        scale = self._scale_hz()
        return None if not scale else float(value) / scale

    def refresh(self) -> None:
        analysis = self.analysis
        if analysis is None or analysis.spectrum is None:
            return
        options = self.session.view_options
        shaft = self.session.selected_shaft
        units = options.spectrum_units
        lines = "fft"   # "band" when the averaged lines are drawn (the cursors read them so)
        scale = self._scale_hz()
        if scale is None:  # no rate for this shaft: fall back to Hz
            scale = 1.0
            x_label = "frequency (Hz)"
        else:
            x_label = {"hz": "frequency (Hz)", "cpm": "frequency (CPM)",
                       "order": f"order of {shaft}"}[options.spectrum_x]
        if units == "mm/s":
            source = analysis.velocity_spectrum
            x = np.asarray(source.freq_hz) * scale
            y = np.asarray(source.amplitude, dtype=float)
        elif self._order_spectrum_shown():
            # order spectrum is in reference-shaft orders; shaft order = f_shaft / f_reference
            f_ref = self.shaft_rate_hz(analysis.frequencies.reference_shaft) or 1.0
            x = np.asarray(analysis.order_spectrum.order) * f_ref * scale
            y = convert_acceleration(np.asarray(analysis.order_spectrum.amplitude, dtype=float),
                                     self.sensor_units(), units)
        else:
            source = analysis.spectrum
            if options.spectrum_lines == "averaged" and self._averaged() is not None:
                source = self._averaged()
                lines = "band"
            x = np.asarray(source.freq_hz) * scale
            y = convert_acceleration(np.asarray(source.amplitude, dtype=float), self.sensor_units(), units)
        self._sync_lines_combo()
        on_averaged = self.averaged_shown()
        self.plot.setLogMode(x=False, y=options.spectrum_log_y)
        self.curve.setData(x, positive_for_log(y) if options.spectrum_log_y else y)
        scaling = getattr(analysis.settings, "spectrum_scaling", "peak")
        unit_text = {"g": "g", "m/s2": "m/s²", "mm/s": "mm/s"}[units]
        self.plot.setLabel("left", f"amplitude ({unit_text} {scaling})")
        self.plot.setLabel("bottom", x_label)
        self._show_model_lines(x, y, scale, unit_text, exact_orders=options.spectrum_x == "order" and units != "mm/s",
                               lines=lines)
        zoom = options.spectrum_zoom_hz
        if zoom is not None:
            self.plot.setXRange(zoom[0] * scale, zoom[1] * scale, padding=0)
        else:
            self.plot.setXRange(float(x[0]), float(x[-1]), padding=0)
        self.plot.enableAutoRange(axis="y")
        if self.band_region.isVisible():
            self._place_band_region()
        band = getattr(analysis.envelope, "band_hz", None)
        parts = [] if band is None else [f"envelope band {band[0]:.0f} to {band[1]:.0f} Hz "
                                         f"({analysis.envelope.band_source})"]
        if on_averaged:
            parts.append(self._averaged_caption())
        elif options.spectrum_lines == "averaged":
            parts.append(f"fine lines: {self._lines_not_applicable()}")
        self.caption.setText("; ".join(parts))

    def merged_shafts(self) -> list[str]:
        """Shafts whose sidebands the averaged lines cannot separate (empty when fine lines are drawn).

        A sideband family ``f_shaft`` apart needs lines at most ``f_shaft / MIN_LINES_PER_SPACING``
        apart to show separate peaks.
        """
        analysis = self.analysis
        options = self.session.view_options
        if analysis is None or options.spectrum_lines != "averaged" or self._lines_not_applicable() is not None:
            return []
        line_hz = _line_spacing_hz(self._averaged())
        return [s.name for s in analysis.frequencies.shafts if sidebands_merge(s.hz, line_hz)]

    def sidebands_merged(self, cursor=None) -> bool:
        """True when averaged lines are drawn and the sideband ``cursor`` (default: the active one)
        is spaced closer than ``MIN_LINES_PER_SPACING`` of those lines, so its sidebands merge
        (:meth:`workbench.cursors.SidebandCursor.sidebands_merged`)."""
        cursor = self.cursor_set.active if cursor is None else cursor
        return getattr(cursor, "kind", None) == "sideband" and cursor.sidebands_merged()

    def averaged_shown(self) -> bool:
        """True when the curve drawn is the averaged spectrum."""
        return (self.analysis is not None and self.session.view_options.spectrum_lines == "averaged"
                and self._lines_not_applicable() is None)

    def _averaged_caption(self) -> str:
        line_hz = _line_spacing_hz(self._averaged())
        text = f"averaged lines {line_hz:g} Hz apart"
        merged = self.merged_shafts()
        if merged:
            text += (f"; sidebands of {', '.join(merged)} (rate below {MIN_LINES_PER_SPACING * line_hz:g} Hz) "
                     "merge on these lines: choose fine lines to read them")
        return text

    def _show_model_lines(self, x, y, scale: float, unit_text: str, *, exact_orders: bool,
                          lines: str = "fft") -> None:
        """Overlays and cursor data for the curve just drawn (nothing recomputed)."""
        from dsp.explain import speed_spread_frac

        analysis = self.analysis
        table, speed = analysis.frequencies, analysis.speed
        axis = self.session.view_options.spectrum_x if self._scale_hz() is not None else "hz"
        same_shaft = speed is not None and getattr(speed, "shaft", None) == table.reference_shaft
        spread = (speed.min_hz, speed.max_hz) if same_shaft and not exact_orders else None
        frac = 0.0 if spread is None else speed_spread_frac(speed.min_hz, speed.mean_hz, speed.max_hz)
        show_on_view(self, table, x, y, axis=axis, scale=scale, spread=spread, speed_spread_frac=frac,
                     units=unit_text, lines=lines)

    def show_family(self, carrier_hz: float, spacing_hz: float, n: int = 3) -> None:
        """Zoom onto a sideband family and put the sideband cursor on it (carrier and spacing in Hz)."""
        half = (n + 1.5) * spacing_hz
        self.session.set_view_options(spectrum_zoom_hz=(max(carrier_hz - half, 0.0), carrier_hz + half))
        self.cursor_set.show_family(carrier_hz, spacing_hz, n=n)

    def _place_band_region(self) -> None:
        band = self.session.settings.envelope_band_hz or getattr(self.analysis.envelope, "band_hz", None)
        scale = self._scale_hz() or 1.0
        if band is not None:
            self._updating = True
            self.band_region.setRegion((band[0] * scale, band[1] * scale))
            self._updating = False


def _line_spacing_hz(spectrum) -> float:
    f = np.asarray(spectrum.freq_hz)
    return float(f[-1] - f[0]) / (f.size - 1) if f.size > 1 else float("nan")


def _spin(prefix: str, suffix: str, lo: float, hi: float, value: float) -> QDoubleSpinBox:
    spin = QDoubleSpinBox()
    spin.setRange(lo, hi)
    spin.setDecimals(1)
    spin.setPrefix(prefix)
    spin.setSuffix(suffix)
    spin.setValue(value)
    spin.setKeyboardTracking(False)
    return spin
