"""Envelope spectrum view, with the kurtogram map that chose the band.

The envelope band is shown in the caption and on the kurtogram; it comes from the
kurtogram unless the analyst dragged one on the spectrum view.  Model lines of every
shaft and bearing (shaft-rate harmonics and bearing defect frequencies labelled),
cursors and their readout come from :mod:`workbench.overlays` and
:mod:`workbench.cursors`.  The x range reaches about five times the highest of the
selected shaft's first three rate harmonics and its bearings' defect frequencies.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtWidgets import QCheckBox

from workbench import theme
from workbench.cursors import attach_to_view, show_on_view
from workbench.views.base import AnalysisView

BEARING_KEYS = (("bpfo_hz", "BPFO"), ("bpfi_hz", "BPFI"), ("bsf_hz", "BSF"), ("ftf_hz", "FTF"))
#: The defect frequency that each bearing suspect kind (dsp.suspects.KINDS) shows at.
KIND_LINE = {"bearing outer race": "bpfo", "bearing inner race": "bpfi",
             "bearing rolling element": "bsf", "bearing cage": "ftf"}


class EnvelopeView(AnalysisView):
    name = "envelope"
    title = "Envelope"

    def __init__(self, session, parent=None):
        super().__init__(session, parent)
        self.kurtogram_box = QCheckBox("show kurtogram")
        self.controls.addWidget(self.kurtogram_box)
        self.finish_controls()
        self.plot = self.add_plot(x_label="frequency (Hz)", y_label="envelope amplitude", stretch=3)
        self.curve = self.plot.plot(pen=pg.mkPen(theme.CURVE, width=1))
        self.curve.setClipToView(True)
        self.curve.setDownsampling(auto=True, method="peak")
        # model lines (shaft rates and bearing frequencies shown first), cursors and their readout
        attach_to_view(self, families=("shaft harmonics", "bearings"), labelled=("shaft harmonics", "bearings"))
        self.kurt_plot = self.add_plot(x_label="frequency (Hz)", y_label="level", stretch=2)
        self.kurt_widget = self.last_plot_widget
        self.image = pg.ImageItem(axisOrder="row-major")
        self.image.setColorMap(pg.colormap.get("viridis"))
        self.kurt_plot.addItem(self.image)
        self.best_box = pg.PlotDataItem(pen=pg.mkPen("#FFFFFF", width=2))
        self.kurt_plot.addItem(self.best_box)
        self.kurt_widget.setVisible(False)
        self.kurtogram_box.toggled.connect(lambda on: self.session.set_view_options(show_kurtogram=on))
        self.focus_bearing: str | None = None    # a bearing suspect: its defect lines are labelled
        self.focus_kind: str = ""

    def set_focus_bearing(self, name: str | None, kind: str = "") -> None:
        """Label the defect lines and harmonics of bearing ``name`` (``None``: the selected shaft's lines).

        ``kind`` is the suspect's kind (``"bearing outer race"``, ...): its line is labelled first.
        """
        wanted = (name, kind if name is not None else "")
        if wanted == (self.focus_bearing, self.focus_kind):
            return
        self.focus_bearing, self.focus_kind = wanted
        if self.analysis is not None and not self.isHidden():
            self.refresh()
        elif self.analysis is not None:
            self._stale = True

    def data_items(self):
        return [self.curve]

    def kurtogram_shown(self) -> bool:
        return self.kurt_widget.isVisible()

    def refresh(self) -> None:
        analysis = self.analysis
        env = getattr(analysis, "envelope", None)
        if env is None:
            return
        show = self.session.view_options.show_kurtogram
        if self.kurtogram_box.isChecked() != show:
            self.kurtogram_box.blockSignals(True)
            self.kurtogram_box.setChecked(show)
            self.kurtogram_box.blockSignals(False)
        units = self.sensor_units()
        freq = np.asarray(env.freq_hz, dtype=float)
        amp = np.asarray(env.amplitude, dtype=float)
        self.curve.setData(freq, amp)
        squared = getattr(env, "squared", False)
        self.plot.setLabel("left", f"{'squared envelope' if squared else 'envelope'} ({units}{'²' if squared else ''})")
        shaft = self.session.selected_shaft
        focus, first = self._focus_families()
        # names for the selected shaft's lines, and every harmonic of a suspect bearing's lines
        self.overlay.set_label_filter(shaft=shaft, max_harmonic=3, focus=focus, focus_first=first)
        self._show_model_lines(freq, amp, units + ("²" if squared else ""))
        top = self._top_frequency(shaft)
        focus_top = self._focus_top_hz()
        if focus_top and top:
            top = max(top, focus_top)
        self.plot.setXRange(0, top if top else float(freq[-1]), padding=0)
        visible = amp[freq <= (top or freq[-1])][1:]
        if visible.size:
            self.plot.setYRange(0, float(visible.max()) * 1.3, padding=0)   # room for the line labels on top
        lo, hi = env.band_hz
        self.caption.setText(f"band {lo:.0f} to {hi:.0f} Hz, "
                             + ("chosen by the kurtogram" if env.band_source == "kurtogram" else "chosen by you")
                             + (f"; labelled: bearing {self.focus_bearing} (suspect)" if focus else ""))
        self._draw_kurtogram(show)

    def _show_model_lines(self, freq, amp, units: str) -> None:
        """Overlays and cursor data for the envelope spectrum just drawn (nothing recomputed)."""
        from dsp.explain import speed_spread_frac

        table, speed = self.analysis.frequencies, self.analysis.speed
        spread, frac = None, 0.0
        if speed is not None and getattr(speed, "shaft", None) == table.reference_shaft:
            spread = (speed.min_hz, speed.max_hz)
            frac = speed_spread_frac(speed.min_hz, speed.mean_hz, speed.max_hz)
        show_on_view(self, table, freq, amp, axis="hz", scale=1.0, spread=spread, speed_spread_frac=frac,
                     units=units)

    def _focus_families(self) -> tuple[str | None, str | None]:
        """(family prefix, first family) of the focus bearing, or (None, None) when it is not in the model."""
        table = getattr(self.analysis, "frequencies", None)
        names = [b.name for b in getattr(table, "bearings", ()) or ()]
        if self.focus_bearing is None or self.focus_bearing not in names:
            return None, None
        prefix = f"bearing:{self.focus_bearing}"
        line = KIND_LINE.get(self.focus_kind)
        return prefix, (f"{prefix} {line}" if line else None)

    def _focus_top_hz(self) -> float | None:
        """About 5.5 x the focus bearing's suspect frequency (its first five harmonics in view)."""
        table = getattr(self.analysis, "frequencies", None)
        for bearing in getattr(table, "bearings", ()) or ():
            if bearing.name == self.focus_bearing:
                key = KIND_LINE.get(self.focus_kind, "bpfo") + "_hz"
                value = getattr(bearing, key, None)
                return 5.5 * float(value) if value else None
        return None

    def _top_frequency(self, shaft: str | None) -> float | None:
        """About 5x the highest frequency of interest of ``shaft``, so the fault lines are readable."""
        values = self.marked_frequencies(shaft)
        return 5.0 * max(values) if values else None

    def marked_frequencies(self, shaft: str | None) -> list[float]:
        """The selected shaft's rate x 1, 2, 3 and the defect frequencies of its bearings, Hz."""
        table = getattr(self.analysis, "frequencies", None)
        rate = self.shaft_rate_hz(shaft)
        values = [h * rate for h in (1, 2, 3)] if rate else []
        for bearing in getattr(table, "bearings", ()) or ():
            if bearing.shaft == shaft:
                values += [float(v) for v in (getattr(bearing, key, None) for key, _ in BEARING_KEYS) if v]
        return values

    def _draw_kurtogram(self, show: bool) -> None:
        self.kurt_widget.setVisible(show)
        kurtogram = getattr(self.analysis, "kurtogram", None)
        if not show or kurtogram is None:
            return
        from dsp.envelope import kurtogram_map

        grid, edges_hz, labels = kurtogram_map(kurtogram)
        self.image.setImage(grid, autoLevels=True)
        self.image.setRect(float(edges_hz[0]), 0.0, float(edges_hz[-1] - edges_hz[0]), float(grid.shape[0]))
        self.kurt_plot.getAxis("left").setTicks([[(i + 0.5, text) for i, text in enumerate(labels)]])
        self.kurt_plot.getViewBox().invertY(True)
        levels = [float(v) for v in kurtogram.levels]
        lo, hi = kurtogram.best_band_hz
        i = int(np.argmin(np.abs(np.asarray(levels) - float(kurtogram.best_level))))
        self.best_box.setData([lo, hi, hi, lo, lo], [i, i, i + 1, i + 1, i])
        self.kurt_plot.setTitle(f"kurtogram: largest kurtosis {kurtogram.best_kurtosis:.1f} "
                                f"in {lo:.0f} to {hi:.0f} Hz (level {labels[i]})", color=theme.FOREGROUND, size="9pt")
