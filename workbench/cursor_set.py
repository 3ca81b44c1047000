"""The cursors of one plot: the active one, keyboard nudges and the peak readout on click.

:class:`CursorSet` keeps the :mod:`workbench.cursor_items` cursors of one plot and
emits ``changed`` with :meth:`CursorSet.to_list` for the session when a drag, a nudge,
an addition or a removal ends (arrow keys: one line; Shift: ten lines; Esc drops the
active cursor).  A click reads the nearest peak as a :class:`PeakInfo`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import pyqtgraph as pg
from PySide6.QtCore import QEvent, QObject, Qt, Signal

from dsp.explain import best_text, explain_peak, nearest_peak
from workbench.cursor_items import (CURSOR_PEN, CursorData, HarmonicCursor, SidebandCursor, _Cursor,
                                    cursor_from_dict)

@dataclass(frozen=True)
class PeakInfo:
    """The peak read at a click: position (display units), amplitude, reference-shaft order, explanations."""

    position: float
    amplitude: float
    order: float
    explanations: tuple[Any, ...]

    @property
    def text(self) -> str:
        return best_text(list(self.explanations))


class CursorSet(QObject):
    """The cursors of one plot, the active cursor, keyboard nudges and the peak readout.

    Signals
    -------
    changed(list)
        A drag or nudge ended, or a cursor was added or dropped; carries
        :meth:`to_list` for the session.
    updated()
        The active cursor moved or another became active (refresh readouts).
    peak_read(object)
        A click on the plot was read as a :class:`PeakInfo`.
    """

    changed = Signal(list)
    updated = Signal()
    peak_read = Signal(object)

    def __init__(self, plot_item, *, view: str = "spectrum", parent: QObject | None = None):
        super().__init__(parent)
        self.plot_item = plot_item
        self.view = view
        self.data: CursorData | None = None
        self.cursors: list[_Cursor] = []
        self.active: _Cursor | None = None
        self.last_peak: PeakInfo | None = None
        self.last_change = ""
        self.last_changed_index = -1
        self.peak_marker = pg.ScatterPlotItem(size=9, symbol="t", pen=pg.mkPen(CURSOR_PEN), brush=pg.mkBrush("#FFFFFF"))
        self.peak_marker.setZValue(26)
        plot_item.addItem(self.peak_marker, ignoreBounds=True)
        scene = plot_item.scene()
        if scene is not None:
            scene.sigMouseClicked.connect(self._on_click)
        widget = plot_item.getViewWidget()
        if widget is not None:
            widget.installEventFilter(self)
            if widget.focusPolicy() == Qt.FocusPolicy.NoFocus:
                widget.setFocusPolicy(Qt.FocusPolicy.StrongFocus)   # arrow keys reach the cursors

    # -- data
    def set_data(self, data: CursorData | None) -> None:
        """The curve the cursors read (call when the view redraws its curve)."""
        self.data = data
        for c in self.cursors:
            c.set_data(data)
        self.updated.emit()

    # -- cursors
    def _adopt(self, cursor: _Cursor, *, announce: bool = True) -> _Cursor:
        self.cursors.append(cursor)
        cursor.moved.connect(lambda c=cursor: self._on_moved(c))
        cursor.finished.connect(lambda reason, c=cursor: self._emit_changed(reason, c))
        cursor.grabbed.connect(lambda c=cursor: self.set_active(c))
        self.set_active(cursor)
        if announce:
            self._emit_changed("add")
        return cursor

    def _view_centre(self) -> float:
        (x0, x1), _ = self.plot_item.getViewBox().viewRange()
        return 0.5 * (x0 + x1)

    def add_harmonic(self, position: float | None = None, *, n: int = 5) -> HarmonicCursor:
        x = self._view_centre() if position is None else float(position)
        return self._adopt(HarmonicCursor(self.plot_item, self.data, x, n=n))

    def add_sideband(self, centre: float | None = None, spacing: float | None = None, *, n: int = 3) -> SidebandCursor:
        x = self._view_centre() if centre is None else float(centre)
        if spacing is None:
            d = self.data
            if d is not None and d.table is not None:
                spacing = float(d.table.reference_hz) * d.scale
            else:
                (x0, x1), _ = self.plot_item.getViewBox().viewRange()
                spacing = (x1 - x0) / 20.0
        return self._adopt(SidebandCursor(self.plot_item, self.data, x, float(spacing), n=n))

    def show_family(self, carrier_hz: float, spacing_hz: float, *, n: int = 3) -> SidebandCursor:
        """Place (or move) the sideband cursor on a family given in Hz: centre at the carrier, spacing at the rate."""
        scale = self.data.scale if self.data is not None else 1.0
        for c in self.cursors:
            if isinstance(c, SidebandCursor):
                c.set_centre(carrier_hz * scale)
                c.set_spacing(spacing_hz * scale)
                self.set_active(c)
                self._emit_changed("move", c)
                return c
        return self.add_sideband(carrier_hz * scale, spacing_hz * scale, n=n)

    def set_active(self, cursor: _Cursor | None) -> None:
        if cursor is self.active:
            return
        self.active = cursor
        for c in self.cursors:
            c.set_active(c is cursor)
        self.updated.emit()

    def remove(self, cursor: _Cursor) -> None:
        if cursor not in self.cursors:
            return
        cursor.remove()
        self.cursors.remove(cursor)
        if self.active is cursor:
            self.active = None
            self.set_active(self.cursors[-1] if self.cursors else None)
            self.updated.emit()
        self._emit_changed("drop")

    def clear(self, *, announce: bool = True) -> None:
        for c in list(self.cursors):
            c.remove()
        self.cursors = []
        self.active = None
        self.updated.emit()
        if announce:
            self._emit_changed("clear")

    # -- session
    def to_list(self) -> list[dict[str, Any]]:
        return [dict(c.to_dict(), view=self.view) for c in self.cursors]

    def from_list(self, items: list[dict[str, Any]]) -> None:
        """Replace the cursors by those saved for this view (other views' entries are skipped)."""
        self.clear(announce=False)
        for d in items:
            if d.get("view", self.view) != self.view:
                continue
            clean = {k: v for k, v in d.items() if k != "view"}
            self._adopt(cursor_from_dict(clean, self.plot_item, self.data), announce=False)

    def _emit_changed(self, reason: str = "move", cursor: _Cursor | None = None) -> None:
        """Tell the session; ``last_change`` says what happened ("add", "move", "snap", "drop", "clear")."""
        self.last_change = reason
        self.last_changed_index = self.cursors.index(cursor) if cursor in self.cursors else -1
        self.changed.emit(self.to_list())

    def _on_moved(self, cursor: _Cursor) -> None:
        if cursor is self.active:
            self.updated.emit()

    # -- keyboard
    def handle_key(self, key: int, modifiers=Qt.KeyboardModifier.NoModifier) -> bool:
        """Arrow keys move the active cursor by one line (ten with Shift); Esc drops it."""
        if self.active is None:
            return False
        if key in (Qt.Key.Key_Left, Qt.Key.Key_Right):
            step = 10 if modifiers & Qt.KeyboardModifier.ShiftModifier else 1
            self.active.nudge(step if key == Qt.Key.Key_Right else -step)
            return True
        if key == Qt.Key.Key_Escape:
            self.remove(self.active)
            return True
        return False

    def eventFilter(self, obj, event) -> bool:  # noqa: N802 - Qt override
        if event.type() == QEvent.Type.KeyPress:
            if self.handle_key(event.key(), event.modifiers()):
                return True
        return super().eventFilter(obj, event)

    # -- peak readout
    def read_peak(self, x: float, reach: float | None = None) -> PeakInfo | None:
        """Read the peak nearest ``x`` (within ``reach`` display units; default three lines)."""
        d = self.data
        if d is None or len(d.x) == 0:
            return None
        reach = 3.0 * d.bin_width if reach is None else max(float(reach), d.bin_width)
        f, a = nearest_peak(d.x, d.amplitude, x, search_hz=reach, lines=d.lines)
        order = math.nan
        explanations: tuple[Any, ...] = ()
        if d.table is not None:
            order = f / d.scale / float(d.table.reference_hz)
            explanations = tuple(explain_peak(f, d.table, tolerance_hz=d.tolerance(f), scale=d.scale))
        info = PeakInfo(f, a, order, explanations)
        self.last_peak = info
        y = a
        if self.plot_item.getViewBox().state.get("logMode", [False, False])[1]:
            y = math.log10(a) if a > 0 else 0.0
        self.peak_marker.setData([f], [y])
        self.peak_read.emit(info)
        self.updated.emit()
        return info

    def _on_click(self, event) -> None:
        if event.button() != Qt.MouseButton.LeftButton or self.data is None:
            return
        vb = self.plot_item.getViewBox()
        pos = event.scenePos()
        if not vb.sceneBoundingRect().contains(pos):
            return
        if any(line.mouseHovering for c in self.cursors for line in c.lines()):
            return
        x = vb.mapSceneToView(pos).x()
        self.read_peak(x, max(5.0 * abs(vb.viewPixelSize()[0]), 3.0 * self.data.bin_width))
