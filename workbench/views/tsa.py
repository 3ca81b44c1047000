"""TSA view: the time-synchronous average of the selected shaft over one revolution.

The angle axis runs 0-360 deg of the selected shaft.  Each gear on that shaft gets a
row of tooth ticks (one tick per tooth) under the curve, so a local event can be
read as "tooth k of gear G".  The selector shows the average itself, the residual
signal or the difference signal (definitions in ``dsp.tsa``).
"""

from __future__ import annotations

import html

import numpy as np
import pyqtgraph as pg
from PySide6.QtWidgets import QComboBox, QLabel

from workbench import theme
from workbench.views.base import AnalysisView, tick_segments

SIGNALS = (("average", "average (raw TSA)"), ("residual", "residual"), ("difference", "difference"))
MAX_GEARS = 4


class TsaView(AnalysisView):
    name = "tsa"
    title = "TSA"

    def __init__(self, session, parent=None):
        super().__init__(session, parent)
        self.signal_combo = QComboBox()
        for key, text in SIGNALS:
            self.signal_combo.addItem(text, key)
        self.controls.addWidget(QLabel("signal"))
        self.controls.addWidget(self.signal_combo)
        self.finish_controls()
        self.plot = self.add_plot(x_label="angle of shaft (deg)", y_label="acceleration")
        self.plot.setXRange(0, 360, padding=0.01)
        self.plot.getAxis("bottom").setTicks([[(a, f"{a}") for a in range(0, 361, 45)]])
        self.curve = self.plot.plot(pen=pg.mkPen(theme.SHAFT_COLOURS[0], width=1.5))
        self.tick_items = []
        self.tick_labels = []
        for _ in range(MAX_GEARS):
            item = pg.PlotDataItem(connect="pairs")
            self.plot.addItem(item)
            label = pg.TextItem(anchor=(0, 1))
            self.plot.addItem(label, ignoreBounds=True)
            self.tick_items.append(item)
            self.tick_labels.append(label)
        self.signal_combo.currentIndexChanged.connect(
            lambda *_: self.session.set_view_options(tsa_signal=self.signal_combo.currentData()))
        self._sync()

    def data_items(self):
        return [self.curve]

    def _sync(self) -> None:
        keys = [k for k, _ in SIGNALS]
        index = keys.index(self.session.view_options.tsa_signal)
        if self.signal_combo.currentIndex() != index:
            self.signal_combo.blockSignals(True)
            self.signal_combo.setCurrentIndex(index)
            self.signal_combo.blockSignals(False)

    def current_tsa(self):
        if self.analysis is None:
            return None
        return self.analysis.tsa_for(self.session.selected_shaft) if self.session.selected_shaft else None

    def tooth_ticks(self) -> list[tuple[str, int, np.ndarray]]:
        """(gear label, teeth, tick angles in deg) for each gear on the selected shaft."""
        item = self.current_tsa()
        if item is None:
            return []
        return [(label, int(teeth), 360.0 * np.arange(int(teeth)) / int(teeth)) for label, teeth in item.teeth]

    def refresh(self) -> None:
        self._sync()
        item = self.current_tsa()
        shaft = self.session.selected_shaft
        if item is None:
            self.curve.setData([], [])
            for ticks, label in zip(self.tick_items, self.tick_labels):
                ticks.setData([], [])
                label.setText("")
            self.caption.setText(f"no TSA for {shaft}: it needs a speed reference" if shaft else "")
            return
        which = self.session.view_options.tsa_signal
        y = np.asarray(getattr(item, which), dtype=float)
        angle = np.asarray(item.angle_deg, dtype=float)
        colour = theme.shaft_colour(self.analysis.model, shaft)
        self.curve.setPen(pg.mkPen(colour, width=1.5))
        self.curve.setData(angle, y)
        units = self.sensor_units()
        self.plot.setLabel("left", f"{which} ({units})")
        # without a once-per-revolution mark the angle origin is arbitrary: a tooth cannot be located
        no_mark = getattr(getattr(self.analysis, "speed", None), "source", "tach") != "tach"
        self.plot.setLabel("bottom", f"angle of {shaft} (deg" + (", origin arbitrary: no tach)" if no_mark else ")"))
        lo, hi = (float(y.min()), float(y.max())) if y.size else (-1.0, 1.0)
        span = (hi - lo) or 1.0
        ticks = self.tooth_ticks()
        colours = theme.gear_colours(len(ticks), avoid=colour)
        row = 0.09 * span
        for i, (tick_item, label) in enumerate(zip(self.tick_items, self.tick_labels)):
            if i >= len(ticks):
                tick_item.setData([], [])
                label.setText("")
                continue
            name, teeth, positions = ticks[i]
            top = lo - 0.05 * span - i * row
            x, yy = tick_segments(positions, top, top - 0.6 * row)
            tick_item.setData(x, yy, pen=pg.mkPen(colours[i], width=1))
            label.setText(f"{teeth} teeth", color=colours[i])
            label.setPos(362, top + 0.15 * row)
        bottom = lo - 0.05 * span - max(len(ticks), 1) * row
        self.plot.setYRange(bottom, hi + 0.05 * span, padding=0)
        self.plot.setXRange(0, 360 + (55 if ticks else 0), padding=0.01)
        # short enough to read fully at 1280 px; the long form is the caption's tooltip
        gears = " ".join(f"<span style='color:{c}'>&#9646; {html.escape(str(name))}</span>"
                         for (name, teeth, _), c in zip(ticks, colours))
        self.caption.setText(f"{html.escape(str(shaft))}: <b>{item.n_revs} revolutions averaged</b>"
                             + (f"; ticks: {gears}" if gears else "")
                             + ("<br><b>No tach: the angle origin is arbitrary, so tooth numbers cannot be read "
                                "from this plot.</b>" if no_mark else ""))
        self.caption.setToolTip(f"TSA of {shaft}: {item.n_revs} revolutions averaged, {item.samples_per_rev} samples "
                                "per revolution; one tick per tooth of each gear on the shaft: "
                                + ", ".join(f"{name} ({teeth} teeth)" for name, teeth, _ in ticks))
