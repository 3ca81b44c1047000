"""Harmonic and sideband cursors, the peak readout and the cursor readout panel.

The analyst's central gesture: drag a sideband cursor over a family of lines
around a mesh harmonic until its markers sit on the lines, then read which
shaft's rate equals the spacing.  Everything here reads arrays the analysis
already computed (through :mod:`dsp.explain`); a drag moves lines and labels and
updates the readout, and NEVER recomputes an analysis.

- :class:`HarmonicCursor`: a draggable fundamental; its harmonics follow.
- :class:`SidebandCursor`: a draggable centre and a draggable first upper
  sideband (which sets the spacing); markers at ``centre +- k * spacing``.
- :class:`CursorSet`: the cursors of one plot, the active one, keyboard nudges
  (arrow keys: one line; Shift: ten lines; Esc drops the active cursor), the
  peak readout on click, and a ``changed`` signal carrying
  :meth:`CursorSet.to_list` for the session.
- :class:`CursorReadout`: a small panel (summary line and table) for the
  active cursor and the last peak clicked.

Positions are in the plot's display units (Hz, CPM or orders); ``axis`` in
:class:`CursorData` says which.  Stock pyqtgraph items with their two-phase
signals are used: ``sigPositionChanged`` while moving (lines, labels, readout),
``sigPositionChangeFinished`` at the end (the session is told).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QEvent, QObject, Qt, Signal
from PySide6.QtWidgets import (QAbstractItemView, QHeaderView, QLabel, QTableWidget, QTableWidgetItem,
                               QVBoxLayout, QWidget)

from dsp.explain import (amplitude_at, best_text, explain_peak, match_spacing, nearest_peak, tolerance_hz)
from workbench import theme

KINDS = ("harmonic", "sideband")
AXES = ("hz", "cpm", "order")
UNIT_TEXT = {"hz": "Hz", "cpm": "CPM", "order": "orders"}
CURSOR_PEN = "#111111"
MARKER_PEN = "#5A5A5A"


@dataclass(frozen=True)
class CursorData:
    """What the cursors read: the shown curve and the model, in display units.

    Parameters
    ----------
    x : ndarray
        Increasing, evenly spaced axis of the shown spectrum (Hz, CPM or orders).
    amplitude : ndarray
        Amplitude per line, as drawn (linear).
    axis : {"hz", "cpm", "order"}
    scale : float
        Display units per Hz (1, 60 or ``1 / f_shaft``).
    table : dsp.kinematics.FrequencyTable, optional
        Model frequencies at the mean speed (for shaft ownership and explanations).
    speed_spread_frac : float
        Relative speed departure from the mean (0 on an order axis).
    units : str
        Amplitude units for the readout.
    """

    x: np.ndarray
    amplitude: np.ndarray
    axis: str = "hz"
    scale: float = 1.0
    table: Any = None
    speed_spread_frac: float = 0.0
    units: str = ""

    def __post_init__(self) -> None:
        if self.axis not in AXES:
            raise ValueError(f"Invalid value for 'axis': allowed {', '.join(map(repr, AXES))}, got {self.axis!r}")

    @property
    def bin_width(self) -> float:
        """Line spacing in display units."""
        x = self.x
        return float(x[-1] - x[0]) / (len(x) - 1) if len(x) > 1 else 1.0

    def tolerance(self, value: float) -> float:
        """Match tolerance at ``value`` (:func:`dsp.explain.tolerance_hz`)."""
        return tolerance_hz(value, resolution_hz=self.bin_width, speed_spread_frac=self.speed_spread_frac)


@dataclass(frozen=True)
class ReadoutRow:
    """One marker of a cursor: what it is, where, the amplitude at its line and the nearest peak."""

    label: str
    position: float
    amplitude: float
    peak_position: float
    peak_amplitude: float


@dataclass(frozen=True)
class Readout:
    title: str
    summary: str
    rows: tuple[ReadoutRow, ...] = ()
    extra: dict[str, Any] = field(default_factory=dict)


def _fmt(v: float) -> str:
    if not math.isfinite(v):
        return "n/a"
    return f"{v:.5g}" if abs(v) < 1e5 else f"{v:.6g}"


def _y_span(plot_item) -> tuple[float, float]:
    (_, _), (y0, y1) = plot_item.getViewBox().viewRange()
    return float(y0), float(y1)


def _segments(xs: np.ndarray, y0: float, y1: float) -> tuple[np.ndarray, np.ndarray]:
    return np.repeat(xs, 2), np.tile(np.array([y0, y1]), xs.size)


class _Cursor(QObject):
    """Shared parts: the plot, the data read, markers, signals and keyboard nudges."""

    moved = Signal()        # while dragging: lines and readout changed
    finished = Signal(str)  # a drag, nudge ("move") or snap ("snap") ended: tell the session
    grabbed = Signal()      # the user took this cursor (make it active)

    kind = ""

    def __init__(self, plot_item, data: CursorData | None, n: int):
        super().__init__()
        if not (isinstance(n, int) and n >= 1):
            raise ValueError(f"n={n!r} must be a whole number of at least 1")
        self.plot_item = plot_item
        self.data = data
        self.n = n
        self.active_line = "main"
        self._guard = False
        self.markers = pg.PlotCurveItem(connect="pairs", antialias=False,
                                        pen=pg.mkPen(MARKER_PEN, width=1, style=Qt.PenStyle.DashLine))
        self.markers.setZValue(20)
        plot_item.addItem(self.markers, ignoreBounds=True)
        plot_item.getViewBox().sigYRangeChanged.connect(self._draw_markers)

    def _make_line(self, x: float, label: str, name: str) -> pg.InfiniteLine:
        line = pg.InfiniteLine(pos=x, angle=90, movable=True, pen=pg.mkPen(CURSOR_PEN, width=2),
                               hoverPen=pg.mkPen(CURSOR_PEN, width=3), label=label,
                               labelOpts={"position": 0.9, "color": theme.FOREGROUND,
                                          "fill": (255, 255, 255, 210)})
        line.setZValue(25)
        self.plot_item.addItem(line, ignoreBounds=True)
        line.sigPositionChanged.connect(self._on_line_moved)
        line.sigPositionChangeFinished.connect(lambda *_: self.finished.emit("move"))
        line.sigDragged.connect(lambda *_, n=name: self._grab(n))
        line.sigClicked.connect(lambda *_, n=name: self._grab(n))
        return line

    def _grab(self, name: str) -> None:
        self.active_line = name
        self.grabbed.emit()

    def lines(self) -> list[pg.InfiniteLine]:
        raise NotImplementedError

    def set_active(self, on: bool) -> None:
        for line in self.lines():
            line.setPen(pg.mkPen(CURSOR_PEN, width=2 if on else 1))

    def set_data(self, data: CursorData | None) -> None:
        """Read another curve (same plot); rescales positions when the axis scale changed."""
        old = self.data
        self.data = data
        if old is not None and data is not None and old.scale != data.scale and old.scale > 0:
            self._rescale(data.scale / old.scale)
        else:
            self._update()

    def remove(self) -> None:
        """Take the cursor's items off the plot."""
        try:
            self.plot_item.getViewBox().sigYRangeChanged.disconnect(self._draw_markers)
        except (RuntimeError, TypeError):
            pass
        for item in self.lines() + [self.markers]:
            self.plot_item.removeItem(item)

    def nudge(self, n_lines: int) -> None:
        """Move the active line by ``n_lines`` spectral lines."""
        step = self.data.bin_width if self.data is not None else 1.0
        self._nudge(n_lines * step)
        self.finished.emit("move")

    def _on_line_moved(self, *_args) -> None:
        if not self._guard:
            self._update()

    def _update(self) -> None:
        self._draw_markers()
        self.moved.emit()

    def _read(self, label: str, x: float) -> ReadoutRow:
        d = self.data
        if d is None or len(d.x) == 0:
            return ReadoutRow(label, x, math.nan, math.nan, math.nan)
        a = amplitude_at(d.x, d.amplitude, x)
        # reach at least three lines: a harmonic multiplies the fundamental's offset
        pf, pa = nearest_peak(d.x, d.amplitude, x, search_hz=max(d.tolerance(x), 3.0 * d.bin_width))
        return ReadoutRow(label, x, a, pf, pa)

    # subclasses
    def _draw_markers(self, *_args) -> None:
        raise NotImplementedError

    def _nudge(self, dx: float) -> None:
        raise NotImplementedError

    def _rescale(self, factor: float) -> None:
        raise NotImplementedError

    def readout(self) -> Readout:
        raise NotImplementedError

    def to_dict(self) -> dict[str, Any]:
        raise NotImplementedError


class HarmonicCursor(_Cursor):
    """A draggable fundamental with ``n`` harmonics that follow it.

    Parameters
    ----------
    plot_item : pyqtgraph.PlotItem
    data : CursorData or None
    position : float
        Fundamental, display units.
    n : int
        Harmonics shown (the fundamental included).
    """

    kind = "harmonic"

    def __init__(self, plot_item, data: CursorData | None, position: float, *, n: int = 5):
        super().__init__(plot_item, data, n)
        self.line = self._make_line(float(position), "1x", "main")
        self._update()

    @property
    def position(self) -> float:
        return float(self.line.value())

    def set_position(self, x: float) -> None:
        self.line.setValue(float(x))

    def lines(self):
        return [self.line]

    def harmonic_positions(self) -> np.ndarray:
        return self.position * np.arange(1, self.n + 1)

    def _draw_markers(self, *_args) -> None:
        y0, y1 = _y_span(self.plot_item)
        self.markers.setData(*_segments(self.harmonic_positions()[1:], y0, y1))

    def _nudge(self, dx: float) -> None:
        self.set_position(self.position + dx)

    def _rescale(self, factor: float) -> None:
        self.set_position(self.position * factor)

    def readout(self) -> Readout:
        unit = UNIT_TEXT[self.data.axis] if self.data is not None else ""
        rows = tuple(self._read(f"{h}x", x) for h, x in enumerate(self.harmonic_positions(), start=1))
        return Readout("harmonic cursor", f"fundamental {_fmt(self.position)} {unit}, {self.n} harmonics", rows)

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "axis": self.data.axis if self.data is not None else "hz",
                "positions": [self.position], "spacing": None, "n": self.n}


class SidebandCursor(_Cursor):
    """A centre and a spacing, both draggable, with markers at ``centre +- k * spacing``, k = 1..n.

    Drag the centre line to move the whole family; drag the ``+1`` line to change
    the spacing.  The readout names the shaft whose rate equals the spacing
    within the tolerance (:func:`dsp.explain.match_spacing`), the mismatch in
    display units and percent, and the amplitude at every marker.
    """

    kind = "sideband"

    def __init__(self, plot_item, data: CursorData | None, centre: float, spacing: float, *, n: int = 3):
        super().__init__(plot_item, data, n)
        if not (math.isfinite(spacing) and spacing > 0):
            raise ValueError(f"spacing={spacing!r} must be a positive number")
        self.active_line = "centre"
        self.centre_line = self._make_line(float(centre), "carrier", "centre")
        self.spacing_line = self._make_line(float(centre) + float(spacing), "+1", "spacing")
        self._spacing = float(spacing)
        self._update()

    @property
    def centre(self) -> float:
        return float(self.centre_line.value())

    @property
    def spacing(self) -> float:
        return self._spacing

    def lines(self):
        return [self.centre_line, self.spacing_line]

    def set_centre(self, x: float) -> None:
        self.centre_line.setValue(float(x))

    def set_spacing(self, spacing: float) -> None:
        self._guard = True
        try:
            self._spacing = max(float(spacing), self._min_spacing())
            self.spacing_line.setValue(self.centre + self._spacing)
        finally:
            self._guard = False
        self._update()

    def marker_positions(self) -> np.ndarray:
        """Positions ``centre + k * spacing`` for k = -n..n (k = 0 is the carrier)."""
        return self.centre + self._spacing * np.arange(-self.n, self.n + 1)

    def _min_spacing(self) -> float:
        return self.data.bin_width if self.data is not None else 1e-9

    def _on_line_moved(self, line=None) -> None:
        if self._guard:
            return
        self._guard = True
        try:
            if line is self.spacing_line:
                self._spacing = max(float(self.spacing_line.value()) - self.centre, self._min_spacing())
                if self.spacing_line.value() != self.centre + self._spacing:
                    self.spacing_line.setValue(self.centre + self._spacing)
            else:
                self.spacing_line.setValue(self.centre + self._spacing)
        finally:
            self._guard = False
        self._update()

    def _draw_markers(self, *_args) -> None:
        y0, y1 = _y_span(self.plot_item)
        k = np.arange(-self.n, self.n + 1)
        xs = self.centre + self._spacing * k[(k != 0) & (k != 1)]
        self.markers.setData(*_segments(xs, y0, y1))
        match = self.best_match()
        colour = MARKER_PEN
        if match is not None and match.kind == "shaft rate" and self.data.table is not None:
            names = [s.name for s in self.data.table.shafts]
            colour = theme.SHAFT_COLOURS[names.index(match.shaft) % len(theme.SHAFT_COLOURS)]
        if colour != getattr(self, "_marker_colour", None):
            self._marker_colour = colour
            self.markers.setPen(pg.mkPen(colour, width=1, style=Qt.PenStyle.DashLine))

    def _nudge(self, dx: float) -> None:
        if self.active_line == "spacing":
            self.set_spacing(self._spacing + dx)
        else:
            self.set_centre(self.centre + dx)

    def _rescale(self, factor: float) -> None:
        self._guard = True
        try:
            self._spacing *= factor
            self.centre_line.setValue(self.centre * factor)
            self.spacing_line.setValue(self.centre + self._spacing)
        finally:
            self._guard = False
        self._update()

    # -- ownership
    def matches(self):
        """Rates within the tolerance of the spacing, best first (:func:`dsp.explain.match_spacing`)."""
        d = self.data
        if d is None or d.table is None:
            return []
        return match_spacing(self._spacing, d.table, tolerance_hz=d.tolerance(self._spacing), scale=d.scale)

    def best_match(self):
        m = self.matches()
        return m[0] if m else None

    def nearest_rate(self):
        """The shaft rate (or planet pass) nearest the spacing, whatever the tolerance."""
        d = self.data
        if d is None or d.table is None:
            return None
        m = match_spacing(self._spacing, d.table, tolerance_hz=math.inf, scale=d.scale)
        return m[0] if m else None

    def snap_spacing_to(self, shaft: str | None = None) -> None:
        """Set the spacing to ``shaft``'s rate (a shaft or planetary stage name), or to the nearest rate."""
        d = self.data
        if d is None or d.table is None:
            raise ValueError("no model frequencies to snap to; open a model and run the analysis")
        if shaft is None:
            rate = self.nearest_rate()
            self.set_spacing(rate.rate_hz)
        else:
            rates = {s.name: float(s.hz) for s in d.table.shafts}
            rates.update({g.name: float(g.planet_pass_hz) for g in d.table.planetary})
            if shaft not in rates:
                raise ValueError(f"unknown shaft {shaft!r}; choose one of {', '.join(rates)}")
            self.set_spacing(rates[shaft] * d.scale)
        self.finished.emit("snap")

    def snap_centre_to_peak(self, search: float | None = None) -> None:
        """Move the centre onto the nearest peak (within the tolerance and at least three lines, or ``search``)."""
        d = self.data
        if d is None:
            return
        reach = max(d.tolerance(self.centre), 3.0 * d.bin_width) if search is None else float(search)
        f, _ = nearest_peak(d.x, d.amplitude, self.centre, search_hz=reach)
        self.set_centre(f)
        self.finished.emit("snap")

    def readout(self) -> Readout:
        d = self.data
        unit = UNIT_TEXT[d.axis] if d is not None else ""
        labels = [("carrier" if k == 0 else f"{k:+d}") for k in range(-self.n, self.n + 1)]
        rows = tuple(self._read(lab, x) for lab, x in zip(labels, self.marker_positions()))
        m = self.best_match()
        if m is not None:
            summary = (f"spacing {_fmt(self._spacing)} {unit} = {m.label} ({_fmt(m.rate_hz)} {unit}), "
                       f"off by {m.mismatch_hz:+.3g} {unit} ({m.mismatch_pct:+.2f} %)")
        else:
            near = self.nearest_rate()
            summary = f"spacing {_fmt(self._spacing)} {unit} matches no shaft rate"
            if near is not None:
                summary += f" (nearest: {near.label}, {near.mismatch_hz:+.3g} {unit}, {near.mismatch_pct:+.1f} %)"
        return Readout("sideband cursor", summary, rows,
                       {"owner": None if m is None else m.shaft, "match": m})

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "axis": self.data.axis if self.data is not None else "hz",
                "positions": [self.centre], "spacing": self._spacing, "n": self.n}


def cursor_from_dict(d: dict[str, Any], plot_item, data: CursorData | None) -> _Cursor:
    """Rebuild a cursor from :meth:`to_dict` output on ``plot_item``.

    Positions are converted when ``data`` shows another axis than the one saved
    (Hz and CPM exactly; orders through ``data.scale``).
    """
    kind = d.get("kind")
    if kind not in KINDS:
        raise ValueError(f"Invalid value for 'kind': allowed {', '.join(map(repr, KINDS))}, got {kind!r}")
    axis = d.get("axis", "hz")
    if axis not in AXES:
        raise ValueError(f"Invalid value for 'axis': allowed {', '.join(map(repr, AXES))}, got {axis!r}")
    positions = [float(v) for v in d.get("positions") or []]
    if len(positions) != 1 or not math.isfinite(positions[0]):
        raise ValueError(f"a {kind} cursor needs one finite position, got {d.get('positions')!r}")
    n = int(d.get("n", 5 if kind == "harmonic" else 3))
    factor = 1.0
    if data is not None and axis != data.axis:
        saved_scale = {"hz": 1.0, "cpm": 60.0}.get(axis)
        if saved_scale is None:   # saved in orders: orders -> Hz needs the shaft rate of the table
            table = data.table
            saved_scale = 1.0 / float(table.reference_hz) if table is not None else data.scale
        factor = data.scale / saved_scale
    x = positions[0] * factor
    if kind == "harmonic":
        return HarmonicCursor(plot_item, data, x, n=n)
    spacing = d.get("spacing")
    if spacing is None or not float(spacing) > 0:
        raise ValueError(f"a sideband cursor needs a positive spacing, got {spacing!r}")
    return SidebandCursor(plot_item, data, x, float(spacing) * factor, n=n)


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
        f, a = nearest_peak(d.x, d.amplitude, x, search_hz=reach)
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


class CursorReadout(QWidget):
    """Summary line and table for the active cursor of a :class:`CursorSet`, and the last peak read."""

    COLUMNS = ("marker", "position", "amplitude at line", "nearest peak", "peak amplitude")

    def __init__(self, cursor_set: CursorSet, parent: QWidget | None = None):
        super().__init__(parent)
        self.cursor_set = cursor_set
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.setSpacing(2)
        self.peak_label = QLabel("click a peak to read it")
        self.peak_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.summary = QLabel("")
        self.summary.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        for label in (self.peak_label, self.summary):
            label.setWordWrap(True)   # long explanations wrap instead of widening the window
        self.table = QTableWidget(0, len(self.COLUMNS))
        self.table.setHorizontalHeaderLabels(list(self.COLUMNS))
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(18)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.table.setMaximumHeight(170)
        for w in (self.peak_label, self.summary, self.table):
            layout.addWidget(w)
        cursor_set.updated.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        peak = self.cursor_set.last_peak
        d = self.cursor_set.data
        unit = UNIT_TEXT[d.axis] if d is not None else ""
        if peak is not None:
            order = "" if not math.isfinite(peak.order) else f", order {peak.order:.3f}"
            self.peak_label.setText(f"peak {_fmt(peak.position)} {unit}, amplitude {_fmt(peak.amplitude)} "
                                    f"{d.units if d else ''}{order}: {peak.text}")
        cursor = self.cursor_set.active
        if cursor is None or cursor.data is None:
            self.summary.setText("no cursor: add a harmonic or sideband cursor" if cursor is None else "")
            self.table.setRowCount(0)
            self.table.setVisible(False)
            return
        self.table.setVisible(True)
        readout = cursor.readout()
        self.summary.setText(f"{readout.title}: {readout.summary}")
        if self.table.rowCount() != len(readout.rows):
            self.table.setRowCount(len(readout.rows))
            for r in range(len(readout.rows)):
                for c in range(len(self.COLUMNS)):
                    item = QTableWidgetItem("")
                    if c:
                        item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
                    self.table.setItem(r, c, item)
        for r, row in enumerate(readout.rows):
            texts = (row.label, _fmt(row.position), _fmt(row.amplitude), _fmt(row.peak_position),
                     _fmt(row.peak_amplitude))
            for c, text in enumerate(texts):
                item = self.table.item(r, c)
                if item.text() != text:
                    item.setText(text)

    def rows_text(self) -> list[list[str]]:
        """The table as text (for tests and copying)."""
        return [[self.table.item(r, c).text() for c in range(self.table.columnCount())]
                for r in range(self.table.rowCount())]


class CursorTools(QWidget):
    """A toolbar row for one plot: add cursors, snap, clear, and the model-line switches and shaft legend.

    It also keeps the session's ``cursors`` list (plain dicts, one ``view`` key each)
    in step with the :class:`CursorSet`: the set's ``changed`` signal writes this
    view's entries (through ``history.set_list`` when an undo history is given, else
    through the session's ``set_cursors``), and a ``"cursors"`` event of the session
    (undo, a session file opened) redraws the cursors saved for this view.  Without an
    explicit ``history`` the window's (``window().document.history``) is used when
    the row sits in a window that has one.

    Parameters
    ----------
    cursor_set : CursorSet
    overlay : workbench.overlays.ModelOverlay, optional
        Its switches and legend are shown at the end of the row.
    session : workbench.session.Session, optional
    history : workbench.undo.UndoHistory, optional
    """

    def __init__(self, cursor_set: CursorSet, overlay=None, session=None, history=None,
                 parent: QWidget | None = None):
        from PySide6.QtWidgets import QPushButton, QSizePolicy

        from workbench.flow_layout import FlowLayout

        super().__init__(parent)
        self.cursor_set = cursor_set
        self.overlay = overlay
        self.session = session
        self.history = history
        # the row never widens the window: on a narrow window it wraps onto a second line
        policy = QSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)  # Fixed would cap at one line
        policy.setHeightForWidth(True)
        self.setSizePolicy(policy)
        layout = FlowLayout(self, h_spacing=6, v_spacing=4)
        self.buttons: dict[str, QPushButton] = {}
        for key, text, tip, slot in (
            ("harmonic", "Harmonic cursor", "A fundamental to drag; its harmonics follow "
             "(arrow keys: one line, Shift: ten, Esc: drop)", lambda: cursor_set.add_harmonic()),
            ("sideband", "Sideband cursor", "Drag the carrier line onto a mesh harmonic and the +1 line onto its "
             "first upper sideband; the readout names the shaft whose rate equals the spacing",
             lambda: cursor_set.add_sideband()),
            ("snap_spacing", "Snap spacing", "Set the sideband spacing to the nearest shaft rate",
             self._snap_spacing),
            ("snap_centre", "Carrier to peak", "Move the sideband carrier onto the nearest peak", self._snap_centre),
            ("clear", "Clear", "Remove the cursors of this plot", lambda: cursor_set.clear()),
        ):
            button = QPushButton(text)
            button.setToolTip(tip)
            button.clicked.connect(lambda _=False, s=slot: s())
            layout.addWidget(button)
            self.buttons[key] = button
        if overlay is not None:
            self.legend = overlay.legend_widget()
            layout.addWidget(self.legend)
        cursor_set.updated.connect(self._sync_buttons)
        self._sync_buttons()
        self._writing = False
        self._unsubscribe = None
        if session is not None:
            cursor_set.changed.connect(self._write_session)
            self._unsubscribe = session.subscribe(self._on_session_event)
            self.destroyed.connect(lambda *_: self._unsubscribe and self._unsubscribe())

    def _sideband(self) -> SidebandCursor | None:
        active = self.cursor_set.active
        if isinstance(active, SidebandCursor):
            return active
        return next((c for c in self.cursor_set.cursors if isinstance(c, SidebandCursor)), None)

    def _snap_spacing(self) -> None:
        cursor = self._sideband()
        if cursor is not None and cursor.data is not None and cursor.data.table is not None:
            cursor.snap_spacing_to()

    def _snap_centre(self) -> None:
        cursor = self._sideband()
        if cursor is not None:
            cursor.snap_centre_to_peak()

    def _sync_buttons(self) -> None:
        has_side = self._sideband() is not None
        self.buttons["snap_spacing"].setEnabled(has_side)
        self.buttons["snap_centre"].setEnabled(has_side)
        self.buttons["clear"].setEnabled(bool(self.cursor_set.cursors))

    # -- session
    def saved_for_view(self) -> list[dict[str, Any]]:
        """The session's cursor entries of this plot's view."""
        items = getattr(self.session, "cursors", None) or []
        return [dict(d) for d in items if d.get("view", self.cursor_set.view) == self.cursor_set.view]

    def restore(self) -> None:
        """Draw the cursors the session holds for this view (when they differ from those shown)."""
        if self.session is None:
            return
        saved = self.saved_for_view()
        if saved != self.cursor_set.to_list():
            self._writing = True
            try:
                self.cursor_set.from_list(saved)
            finally:
                self._writing = False

    def _write_session(self, mine: list) -> None:
        if self._writing or self.session is None:
            return
        view = self.cursor_set.view
        others = [dict(d) for d in (getattr(self.session, "cursors", None) or []) if d.get("view", view) != view]
        items = others + [dict(d) for d in mine]
        self._writing = True
        try:
            history = self.history if self.history is not None else self._window_history()
            if history is not None:
                reason = self.cursor_set.last_change or "move"
                # consecutive moves of one cursor are one undo step
                merge = (f"cursors:{view}:{self.cursor_set.last_changed_index}" if reason == "move" else None)
                history.set_list("cursors", items, f"{reason} cursor", merge_key=merge)
            elif callable(getattr(self.session, "set_cursors", None)):
                self.session.set_cursors(items)
            else:
                self.session.cursors = items
        finally:
            self._writing = False

    def _window_history(self):
        """The window's undo history (``window().document.history``) when there is one."""
        return getattr(getattr(self.window(), "document", None), "history", None)

    def _on_session_event(self, event) -> None:
        if event.kind == "cursors" and not self._writing:
            self.restore()


def attach_to_view(view, *, plot=None, families=None, labelled=None) -> CursorTools:
    """Give a workbench view model lines, cursors, a cursor readout and the tool row.

    ``families`` are the model-line families shown at first and ``labelled`` those whose
    lines carry their names.  Sets ``view.overlay`` (:class:`workbench.overlays.ModelOverlay`),
    ``view.cursor_set``, ``view.cursor_readout`` and ``view.cursor_tools``; the
    tool row goes above the plot and the readout below it in ``view._layout``.
    Call :func:`show_on_view` whenever the view redraws its curve.
    """
    from workbench.overlays import DEFAULT_LABELLED, DEFAULT_ON, ModelOverlay

    plot = view.plot if plot is None else plot
    view.overlay = ModelOverlay(plot, visible=DEFAULT_ON if families is None else families,
                                labelled=DEFAULT_LABELLED if labelled is None else labelled, parent=view)
    view.cursor_set = CursorSet(plot, view=view.name, parent=view)
    view.cursor_readout = CursorReadout(view.cursor_set)
    view.cursor_tools = CursorTools(view.cursor_set, view.overlay, view.session)
    layout = view._layout
    index = layout.indexOf(plot.getViewWidget())
    if index < 0:
        layout.addWidget(view.cursor_tools)
        layout.addWidget(view.cursor_readout)
    else:
        layout.insertWidget(index, view.cursor_tools)
        layout.insertWidget(index + 2, view.cursor_readout)
    return view.cursor_tools


def show_on_view(view, table, x, amplitude, *, axis: str, scale: float, spread=None,
                 speed_spread_frac: float = 0.0, units: str = "") -> None:
    """Model lines and cursor data for the curve a view just drew (display units; see :class:`CursorData`).

    Nothing is computed here but the positions of lines: the cursors read ``x`` and
    ``amplitude`` as given.  ``spread`` is ``(min_hz, max_hz)`` of the table's
    reference shaft, drawn on Hz and CPM axes.  The cursors saved in the session
    for this view are drawn the first time (and after an undo or a session load).
    """
    view.overlay.set_table(table, axis=axis, scale=scale, spread=spread if axis != "order" else None)
    view.cursor_set.set_data(CursorData(np.asarray(x), np.asarray(amplitude), axis, float(scale), table,
                                        float(speed_spread_frac), units))
    view.cursor_tools.restore()
