"""What every analysis view shares: a row of controls above one or more plots.

The controls sit in a :class:`workbench.flow_layout.FlowLayout`: on a narrow window
they wrap onto a second line instead of widening it.

A view is a thin subscriber: it reads the :class:`workbench.session.Session` and the
latest :class:`dsp.analysis.Analysis`, draws with ``setData`` on items it created
once, and writes user choices back to the session.  It never computes signal
processing beyond display transforms (unit conversion, decimation for drawing).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QSizePolicy, QVBoxLayout, QWidget

from workbench import theme
from workbench.flow_layout import FlowLayout
from workbench.session import Session, SessionEvent

G_N = 9.80665  # m/s2 per g, exact by definition (3rd CGPM 1901)


class AnalysisView(QWidget):
    """Base class: ``name`` is the session view name, ``title`` the tab text."""

    name = ""
    title = ""
    # session event kinds that call refresh()
    listens_to: tuple[str, ...] = ("shaft", "view_options")

    def __init__(self, session: Session, parent: QWidget | None = None):
        super().__init__(parent)
        self.session = session
        self.analysis: Any = None
        self.recording: Any = None
        self._stale = False
        self._layout = QVBoxLayout(self)
        self._layout.setContentsMargins(4, 4, 4, 4)
        self._layout.setSpacing(4)
        self.controls = FlowLayout(h_spacing=8, v_spacing=4)
        self._layout.addLayout(self.controls)
        self.caption = QLabel("")
        self.caption.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        # long captions must not widen the window: they wrap onto more lines instead
        self.caption.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)
        self.caption.setWordWrap(True)
        self.caption.setAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        self._unsubscribe = session.subscribe(self._on_event, self.listens_to)
        self.destroyed.connect(lambda *_: self._unsubscribe())

    # -- helpers for subclasses
    def add_plot(self, *, x_label: str = "", y_label: str = "", stretch: int = 1) -> pg.PlotItem:
        widget = pg.PlotWidget()
        widget.setMinimumHeight(120)
        plot = widget.getPlotItem()
        theme.style_plot(plot, x_label=x_label, y_label=y_label)
        self._layout.addWidget(widget, stretch)
        self.last_plot_widget = widget
        return plot

    def finish_controls(self) -> None:
        self.controls.addWidget(self.caption, 1)

    def _on_event(self, event: SessionEvent) -> None:
        if self.analysis is None and self.recording is None:
            return
        if self.isHidden():
            # a tab page that is not shown redraws when it is shown: switching shaft stays quick
            self._stale = True
            return
        self.refresh()

    def showEvent(self, event):  # noqa: N802 - Qt override
        super().showEvent(event)
        if self._stale:
            self._stale = False
            self.refresh()

    # -- API used by the window
    def show_analysis(self, analysis: Any, recording: Any) -> None:
        """Show a new analysis (``None`` clears nothing: the last result stays)."""
        self.analysis = analysis
        self.recording = recording
        self._stale = False
        self.refresh()

    def clear(self) -> None:
        """Forget the shown analysis (another recording was opened)."""
        self.analysis = None
        self.recording = None
        for item in self.data_items():
            item.setData([], [])
        self.caption.setText("")

    def refresh(self) -> None:  # pragma: no cover - every view overrides it
        raise NotImplementedError

    def has_data(self) -> bool:
        """True when every main curve of the view holds points (used by tests and screenshots)."""
        return all(_n_points(item) > 0 for item in self.data_items())

    def data_items(self) -> list[pg.PlotDataItem]:
        return []

    # -- shared display transforms
    def shaft_rate_hz(self, shaft: str | None) -> float | None:
        """Mean rotation rate of ``shaft`` from the analysis' frequency table."""
        table = getattr(self.analysis, "frequencies", None)
        for rate in getattr(table, "shafts", ()) or ():
            if rate.name == shaft:
                return float(rate.hz)
        return None

    def sensor_units(self) -> str:
        model = getattr(self.analysis, "model", None) or self.session.model
        index = self.session.settings.sensor_index
        try:
            return model.sensors[index].units
        except (AttributeError, IndexError):
            return "g"


def convert_acceleration(values: np.ndarray, from_units: str, to_units: str) -> np.ndarray:
    """Convert between ``g`` and ``m/s2`` for display."""
    if from_units == to_units:
        return values
    if from_units == "g" and to_units == "m/s2":
        return values * G_N
    if from_units == "m/s2" and to_units == "g":
        return values / G_N
    raise ValueError(f"cannot convert {from_units!r} to {to_units!r}")


def positive_for_log(values: np.ndarray) -> np.ndarray:
    """Replace zeros and negatives by a floor so a log axis can draw them."""
    values = np.asarray(values, dtype=float)
    positive = values[values > 0]
    floor = float(positive.min()) if positive.size else 1e-12
    return np.where(values > 0, values, floor)


def _n_points(item: pg.PlotDataItem) -> int:
    x, _ = item.getData()
    return 0 if x is None else len(x)


def tick_segments(positions: np.ndarray, y0: float, y1: float) -> tuple[np.ndarray, np.ndarray]:
    """x, y arrays that draw one vertical segment per position with ``connect='pairs'``."""
    positions = np.asarray(positions, dtype=float)
    x = np.repeat(positions, 2)
    y = np.tile([y0, y1], positions.size)
    return x, y


def place_mark(line: pg.InfiniteLine, value: float, text: str, pen) -> None:
    """Show a reused vertical mark at ``value`` with label ``text``.

    The line is made visible before its label text is set: pyqtgraph skips label
    updates of hidden lines.
    """
    line.setPen(pen)
    line.setVisible(True)
    line.label.setFormat(text)
    line.setValue(value)
    line.label.valueChanged()
