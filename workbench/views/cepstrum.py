"""Cepstrum view: real cepstrum against quefrency in ms, rahmonics of the selected shaft marked.

A sideband family spaced at a shaft rate f_r shows as rahmonics at n / f_r
(Randall 2017, "A history of cepstrum analysis and its application to mechanical
problems", MSSP 97:3-19); the marks sit at those quefrencies for the selected shaft.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg

from workbench import theme
from workbench.views.base import AnalysisView, place_mark

N_RAHMONICS = 5
MIN_QUEFRENCY_MS = 1.0
#: The y scale is taken from this fraction of the first rahmonic's quefrency on: the large values at
#: low quefrency (the spectrum's smooth shape) would otherwise flatten the rahmonics into the noise.
Y_FROM_RAHMONIC = 0.25


class CepstrumView(AnalysisView):
    name = "cepstrum"
    title = "Cepstrum"

    def __init__(self, session, parent=None):
        super().__init__(session, parent)
        self.finish_controls()
        self.plot = self.add_plot(x_label="quefrency (ms)", y_label="real cepstrum")
        self.curve = self.plot.plot(pen=pg.mkPen(theme.CURVE, width=1))
        self.curve.setClipToView(True)
        self.curve.setDownsampling(auto=True, method="peak")
        self.marks = []
        for i in range(N_RAHMONICS):
            line = pg.InfiniteLine(angle=90, movable=False, label="",
                                   labelOpts={"position": 0.96 - 0.045 * (i % 2), "color": theme.FOREGROUND,
                                              "fill": (255, 255, 255, 210)})
            line.setVisible(False)
            self.plot.addItem(line, ignoreBounds=True)
            self.marks.append(line)

    def data_items(self):
        return [self.curve]

    def rahmonics_ms(self) -> np.ndarray:
        """Quefrencies (ms) of the rahmonic marks of the selected shaft."""
        rate = self.shaft_rate_hz(self.session.selected_shaft)
        if not rate:
            return np.empty(0)
        return 1000.0 * np.arange(1, N_RAHMONICS + 1) / rate

    def refresh(self) -> None:
        cep = getattr(self.analysis, "cepstrum", None)
        if cep is None:
            return
        q_ms = 1000.0 * np.asarray(cep.quefrency_s, dtype=float)
        values = np.asarray(cep.values, dtype=float)
        self.curve.setData(q_ms, values)
        shaft = self.session.selected_shaft
        colour = theme.shaft_colour(self.analysis.model, shaft)
        marks = self.rahmonics_ms()
        for i, line in enumerate(self.marks):
            if i < marks.size and marks[i] <= q_ms[-1]:
                place_mark(line, float(marks[i]), f"{i + 1}/f {shaft}" if i == 0 else f"{i + 1}/f",
                           pg.mkPen(colour, width=1, style=pg.QtCore.Qt.PenStyle.DashLine))
            else:
                line.setVisible(False)
        # low quefrencies hold the smooth spectral envelope: leave them out of the y scale
        top_ms = min(q_ms[-1], 1.5 * float(marks[-1])) if marks.size else q_ms[-1]
        start_ms = max(MIN_QUEFRENCY_MS, Y_FROM_RAHMONIC * float(marks[0])) if marks.size else MIN_QUEFRENCY_MS
        visible = values[(q_ms >= start_ms) & (q_ms <= top_ms)]
        self.plot.setXRange(0, top_ms, padding=0)
        if visible.size:
            lo, hi = float(visible.min()), float(visible.max())
            pad = 0.15 * ((hi - lo) or 1.0)   # room for the rahmonic labels
            self.plot.setYRange(lo - pad, hi + pad, padding=0)
        rate = self.shaft_rate_hz(shaft)
        self.caption.setText(f"{shaft}: {rate:.2f} Hz, rahmonic spacing {1000.0 / rate:.1f} ms"
                             f" (y scale from {start_ms:.0f} ms)" if rate else "")
