"""Harmonic and sideband cursor items on one plot, and what they read.

- :class:`CursorData`: the curve a cursor reads (display units, axis, model table).
- :class:`HarmonicCursor`: a draggable fundamental; its harmonics follow.
- :class:`SidebandCursor`: a draggable centre and a draggable first upper
  sideband (which sets the spacing); markers at ``centre +- k * spacing``.
- :func:`cursor_from_dict`: a cursor from its session entry.

Stock pyqtgraph items with their two-phase signals are used: ``sigPositionChanged``
while moving (lines, labels, readout), ``sigPositionChangeFinished`` at the end (the
session is told).  Nothing here recomputes an analysis.  The cursor set, the readout
panel and the tool row are in :mod:`workbench.cursor_set` and :mod:`workbench.cursors`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QObject, Qt, Signal

from dsp.explain import LINES, amplitude_at, match_spacing, nearest_peak, tolerance_hz
from workbench import theme

KINDS = ("harmonic", "sideband")
AXES = ("hz", "cpm", "order")
UNIT_TEXT = {"hz": "Hz", "cpm": "CPM", "order": "orders"}
CURSOR_PEN = "#111111"
MARKER_PEN = "#5A5A5A"
#: Sidebands ``s`` apart stay separate peaks on band-averaged lines ``r`` apart while
#: ``s >= MIN_LINES_PER_SPACING * r`` (a line between two peaks to dip on).  Common practice, no source.
MIN_LINES_PER_SPACING = 2.0


def sidebands_merge(spacing: float, line_spacing: float) -> bool:
    """True when sidebands ``spacing`` apart merge on band-averaged lines ``line_spacing`` apart.

    Both in the same units.  They merge when ``spacing < MIN_LINES_PER_SPACING * line_spacing``
    (common practice, no source: two peaks need a line between them to dip on).
    """
    return float(spacing) < MIN_LINES_PER_SPACING * float(line_spacing) * (1.0 - 1e-9)


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
    lines : {"fft", "band"}
        Kind of lines drawn: ``"fft"`` for one windowed FFT, ``"band"`` for
        band-averaged lines (peaks read by power sum, :func:`dsp.explain.nearest_peak`;
        sideband families closer than :data:`MIN_LINES_PER_SPACING` lines name no shaft).
    """

    x: np.ndarray
    amplitude: np.ndarray
    axis: str = "hz"
    scale: float = 1.0
    table: Any = None
    speed_spread_frac: float = 0.0
    units: str = ""
    lines: str = "fft"

    def __post_init__(self) -> None:
        if self.axis not in AXES:
            raise ValueError(f"Invalid value for 'axis': allowed {', '.join(map(repr, AXES))}, got {self.axis!r}")
        if self.lines not in LINES:
            raise ValueError(f"Invalid value for 'lines': allowed {', '.join(map(repr, LINES))}, got {self.lines!r}")

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
        pf, pa = nearest_peak(d.x, d.amplitude, x, search_hz=max(d.tolerance(x), 3.0 * d.bin_width), lines=d.lines)
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
    display units and percent, and the amplitude at every marker.  On band-averaged
    lines (``CursorData.lines == "band"``) a family spaced less than
    :data:`MIN_LINES_PER_SPACING` lines apart merges, and no shaft is named.
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
    def sidebands_merged(self) -> bool:
        """True when the data are band-averaged lines on which this family's sidebands merge
        (spacing below :data:`MIN_LINES_PER_SPACING` lines, :func:`sidebands_merge`): no shaft is named then."""
        d = self.data
        return d is not None and d.lines == "band" and sidebands_merge(self._spacing, d.bin_width)

    def matches(self):
        """Rates within the tolerance of the spacing, best first (:func:`dsp.explain.match_spacing`)."""
        d = self.data
        if d is None or d.table is None:
            return []
        return match_spacing(self._spacing, d.table, tolerance_hz=d.tolerance(self._spacing), scale=d.scale)

    def best_match(self):
        """The owner of the family, or None (no rate in tolerance, or the sidebands merge on band lines)."""
        if self.sidebands_merged():
            return None
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
        f, _ = nearest_peak(d.x, d.amplitude, self.centre, search_hz=reach, lines=d.lines)
        self.set_centre(f)
        self.finished.emit("snap")

    def readout(self) -> Readout:
        d = self.data
        unit = UNIT_TEXT[d.axis] if d is not None else ""
        labels = [("carrier" if k == 0 else f"{k:+d}") for k in range(-self.n, self.n + 1)]
        rows = tuple(self._read(lab, x) for lab, x in zip(labels, self.marker_positions()))
        m = self.best_match()
        if self.sidebands_merged():
            summary = (f"spacing {_fmt(self._spacing)} {unit} is less than {MIN_LINES_PER_SPACING:g} averaged "
                       f"lines ({_fmt(d.bin_width)} {unit} apart): the sidebands merge on these lines, so no shaft "
                       "is named; choose fine lines to read them")
        elif m is not None:
            summary = (f"spacing {_fmt(self._spacing)} {unit} = {m.label} ({_fmt(m.rate_hz)} {unit}), "
                       f"off by {m.mismatch_hz:+.3g} {unit} ({m.mismatch_pct:+.2f} %)")
        else:
            near = self.nearest_rate()
            summary = f"spacing {_fmt(self._spacing)} {unit} matches no shaft rate"
            if near is not None:
                summary += f" (nearest: {near.label}, {near.mismatch_hz:+.3g} {unit}, {near.mismatch_pct:+.1f} %)"
        return Readout("sideband cursor", summary, rows,
                       {"owner": None if m is None else m.shaft, "match": m, "merged": self.sidebands_merged()})

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
