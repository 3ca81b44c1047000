"""Waveform view: the whole sensor record, navigable, with the analysed time range.

Long records are drawn by min/max decimation per pixel column: for every column of
the plot the smallest and largest sample in it are drawn, so peaks are never lost
and a 10-minute, 100 kHz record pans as smoothly as a short one.  A two-level
min/max summary (blocks of 256 and 65 536 samples) is built once per record, so a
redraw touches at most a few thousand values whatever the zoom.  The blue region
chooses the time range the analysis is limited to.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtWidgets import QPushButton

from workbench import theme
from workbench.views.base import AnalysisView

BLOCKS = (256, 65536)


class MinMaxDecimator:
    """Min/max per pixel column of a long signal (display transform only).

    Parameters
    ----------
    y : numpy.ndarray
        Samples (any float dtype; not copied, not modified).
    fs : float
        Sampling rate in Hz; sample ``i`` is drawn at ``i / fs`` seconds.
    """

    def __init__(self, y: np.ndarray, fs: float):
        self.y = y
        self.fs = float(fs)
        self.levels: list[tuple[int, np.ndarray, np.ndarray]] = []
        source_min = source_max = y
        previous = 1
        for block in BLOCKS:
            step = block // previous
            n = source_min.size // step
            if n < 2:
                break
            mins = source_min[: n * step].reshape(n, step).min(axis=1)
            maxs = source_max[: n * step].reshape(n, step).max(axis=1)
            self.levels.append((block, mins, maxs))
            source_min, source_max, previous = mins, maxs, block

    def columns(self, t0_s: float, t1_s: float, n_columns: int) -> tuple[np.ndarray, np.ndarray]:
        """x (s) and y arrays for the visible span: raw samples when zoomed in, else min/max pairs."""
        n = self.y.size
        i0 = int(np.clip(np.floor(t0_s * self.fs), 0, n))
        i1 = int(np.clip(np.ceil(t1_s * self.fs) + 1, 0, n))
        n_columns = max(int(n_columns), 1)
        if i1 - i0 <= 2 * n_columns:
            idx = np.arange(i0, i1)
            return idx / self.fs, np.asarray(self.y[i0:i1], dtype=float)
        per_column = (i1 - i0) / n_columns
        block, mins, maxs = 1, self.y, self.y
        for level_block, level_mins, level_maxs in self.levels:
            if level_block <= per_column / 2:
                block, mins, maxs = level_block, level_mins, level_maxs
        # whole summary blocks covering [i0, i1): a column may reach up to one block outside the view
        j0 = i0 // block
        j1 = max(min(-(-i1 // block), mins.size), j0 + 1)
        edges = np.linspace(j0, j1, n_columns + 1).astype(np.int64)
        edges = np.unique(np.clip(edges, j0, j1 - 1))
        lo = np.minimum.reduceat(mins[j0:j1], edges - j0)
        hi = np.maximum.reduceat(maxs[j0:j1], edges - j0)
        x = np.repeat(edges * block / self.fs, 2)
        y = np.empty(2 * lo.size)
        y[0::2] = lo
        y[1::2] = hi
        return x, y


def sensor_samples(recording, model, sensor_index: int) -> np.ndarray:
    """The scaled sensor signal, from ``dsp.recording.sensor_signal``."""
    from dsp.recording import sensor_signal

    return sensor_signal(recording, model.sensors[sensor_index])


class WaveformView(AnalysisView):
    name = "waveform"
    title = "Waveform"
    listens_to = ("settings",)

    def __init__(self, session, parent=None):
        super().__init__(session, parent)
        self.whole_button = QPushButton("Analyse the whole record")
        self.whole_button.setToolTip("Remove the time range and analyse every sample")
        self.whole_button.clicked.connect(lambda: self.session.set_time_range(None))
        self.controls.addWidget(self.whole_button)
        self.finish_controls()
        self.plot = self.add_plot(x_label="time (s)", y_label="acceleration")
        self.curve = self.plot.plot(pen=pg.mkPen(theme.CURVE, width=1))
        self.curve.setClipToView(True)
        self.region = pg.LinearRegionItem(brush=pg.mkBrush(*theme.REGION), movable=True)
        self.region.setZValue(10)
        self.region.setToolTip("Drag the edges to limit the analysis to this time range")
        self.plot.addItem(self.region, ignoreBounds=True)
        self.region.sigRegionChangeFinished.connect(self._on_region_finished)
        self.plot.getViewBox().sigXRangeChanged.connect(self._redraw)
        self.plot.getViewBox().sigResized.connect(self._redraw)
        self._decimator: MinMaxDecimator | None = None
        self._data_key = None
        self._setting_region = False

    def data_items(self):
        return [self.curve]

    def refresh(self) -> None:
        recording, analysis = self.recording, self.analysis
        model = getattr(analysis, "model", None) or self.session.model
        index = self.session.settings.sensor_index
        key = (id(recording), id(model), index)
        if key != self._data_key and recording is not None and model is not None:
            y = sensor_samples(recording, model, index)
            if not np.all(np.isfinite(y)):
                # drawn as the analysis uses them: NaN and infinite samples set to 0 (a copy; the warning says so)
                y = np.where(np.isfinite(y), y, 0.0).astype(y.dtype)
            self._decimator = MinMaxDecimator(y, recording.sample_rate_hz)
            self._data_key = key
            units = model.sensors[index].units
            self.plot.setLabel("left", f"acceleration ({units})")
            duration_s = recording.n_frames / recording.sample_rate_hz
            self.plot.setLimits(xMin=0.0, xMax=duration_s)
            self.plot.setXRange(0.0, duration_s, padding=0.0)
            self.plot.setYRange(float(np.min(self._decimator.levels[0][1])) if self._decimator.levels else float(y.min()),
                                float(np.max(self._decimator.levels[0][2])) if self._decimator.levels else float(y.max()))
        self._redraw()
        self._show_range()

    def _show_range(self) -> None:
        if self.recording is None:
            return
        duration_s = self.recording.n_frames / self.recording.sample_rate_hz
        settings = self.session.settings
        start = 0.0 if settings.t_start_s is None else settings.t_start_s
        end = duration_s if settings.t_end_s is None else settings.t_end_s
        self._setting_region = True
        self.region.setBounds((0.0, duration_s))
        self.region.setRegion((start, end))
        self._setting_region = False
        whole = settings.t_start_s is None and settings.t_end_s is None
        self.whole_button.setEnabled(not whole)
        self.caption.setText(f"record {duration_s:.2f} s at {self.recording.sample_rate_hz:g} Hz; "
                             + ("analysing all of it" if whole else f"analysing {start:.2f} to {end:.2f} s"))

    def _redraw(self, *_args) -> None:
        if self._decimator is None:
            return
        (x0, x1), _ = self.plot.getViewBox().viewRange()
        width = max(int(self.plot.getViewBox().width()), 200)
        x, y = self._decimator.columns(x0, x1, width)
        self.curve.setData(x, y)

    def _on_region_finished(self) -> None:
        if self._setting_region or self.recording is None:
            return
        start, end = self.region.getRegion()
        duration_s = self.recording.n_frames / self.recording.sample_rate_hz
        start, end = max(0.0, float(start)), min(duration_s, float(end))
        if end - start <= 0:
            return
        if start <= 0.0 and end >= duration_s:
            self.session.set_time_range(None)
        else:
            self.session.set_time_range((start, end))
