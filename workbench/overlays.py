"""Model frequencies drawn over a spectrum: mesh harmonics, sidebands, shaft rates, planetary, bearings.

:class:`ModelOverlay` draws every characteristic frequency of a
:class:`dsp.kinematics.FrequencyTable` on a pyqtgraph ``PlotItem`` as thin
vertical lines.  The lines come from :func:`dsp.explain.model_lines`, the same
list the peak readout explains peaks with, so what is drawn and what is said
agree.

Families (each can be switched on and off): ``mesh harmonics`` (1x, 2x, 3x ...
GMF of every mesh and planetary mesh), ``sidebands`` (``h GMF +- k f_shaft`` for
each shaft carrying a gear of the mesh, and planet pass for a planetary stage),
``shaft harmonics``, ``planetary`` (carrier, planet spin, planet pass, fault
frequencies) and ``bearings`` (BPFO, BPFI, BSF, FTF and harmonics).  Lines take
the colour of the shaft they belong to (the spacing shaft of a sideband, the
shaft of a bearing, the carrier of a planetary stage); mesh harmonics are drawn
in a neutral grey.  The legend names each shaft beside its colour.

Speed: on an order axis the lines are exact.  On a Hz or CPM axis they sit at
the table's (mean) speed, and when a speed range is given a short horizontal bar
near the top of each line spans the positions from the lowest to the highest
speed of the record.

Labels: the lines of the ``labelled`` families (mesh harmonics on the spectrum, shaft
harmonics and bearings on the envelope spectrum) carry their name near the top of
the plot, in a few staggered rows; lower harmonics are labelled first and a label
that would overlap another in every row is left out (hovering still names it).

Performance: each (family, colour) pair is ONE ``PlotCurveItem`` drawn with
``connect="pairs"``, created once and updated with ``setData``; all are added
with ``ignoreBounds=True`` so they never change the autorange.  Hovering finds
the nearest line with one binary search and shows what it is in one reused
text item; it stays hidden while something is dragged (a cursor drag must not
pay for it).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import QObject, Qt, Signal
from PySide6.QtGui import QAction, QFontMetricsF, QGuiApplication
from PySide6.QtWidgets import QLabel, QMenu, QSizePolicy, QToolButton, QWidget

from dsp.explain import ModelLine, axis_scale, model_lines
from workbench import theme
from workbench.flow_layout import FlowLayout

FAMILIES = ("mesh harmonics", "sidebands", "shaft harmonics", "planetary", "bearings")
#: Families shown when an overlay is created.
DEFAULT_ON = ("mesh harmonics", "sidebands")
NEUTRAL = "#6B6B6B"
_STYLE = {
    "mesh harmonics": Qt.PenStyle.SolidLine,
    "sidebands": Qt.PenStyle.DashLine,
    "shaft harmonics": Qt.PenStyle.DotLine,
    "planetary": Qt.PenStyle.DashDotDotLine,
    "bearings": Qt.PenStyle.DashDotLine,
}
#: Hover reach in screen pixels.
HOVER_PX = 5.0
#: Height of the speed-spread bar, as a fraction of the view height below the top.
SPREAD_Y = 0.97
#: Families whose lines are labelled when an overlay is created.
DEFAULT_LABELLED = ("mesh harmonics",)
#: Most labels drawn at once, and the rows they are staggered in.
N_LABELS = 16
N_LABEL_ROWS = 3
#: Room kept around a label's text (the text item's margin and a gap), screen px.
LABEL_PAD_PX = 16.0


@dataclass
class _Items:
    lines: pg.PlotCurveItem
    spread: pg.PlotCurveItem
    x: np.ndarray
    x_lo: np.ndarray
    x_hi: np.ndarray


class ModelOverlay(QObject):
    """Model frequency families on one ``PlotItem``.

    Parameters
    ----------
    plot_item : pyqtgraph.PlotItem
        The plot to draw on.
    n_harmonics : int
        Harmonics drawn of every frequency.
    n_sidebands : int
        Sidebands drawn on each side of every mesh harmonic.
    visible : iterable of str, optional
        Families shown at first (default :data:`DEFAULT_ON`).

    Signals
    -------
    changed()
        The table, the axis or a family's visibility changed.
    """

    changed = Signal()

    def __init__(self, plot_item: pg.PlotItem, *, n_harmonics: int = 5, n_sidebands: int = 3,
                 visible=DEFAULT_ON, labelled=DEFAULT_LABELLED, parent: QObject | None = None):
        super().__init__(parent)
        self.labelled = tuple(labelled)
        for name in self.labelled:
            self._check_family(name)
        self.labels: list[pg.TextItem] = []     # reused label items (see _place_labels)
        self.label_shaft: str | None = None      # label only this shaft's lines (and lines of no shaft)
        self.label_max_harmonic: int | None = None
        self.label_focus: str | None = None      # a family prefix ("bearing:NAME") labelled first, every harmonic
        self.label_focus_first: str | None = None  # within the focus, the family labelled before the others
        self.plot_item = plot_item
        self.n_harmonics = int(n_harmonics)
        self.n_sidebands = int(n_sidebands)
        self._visible = {name: name in tuple(visible) for name in FAMILIES}
        self._items: dict[tuple[str, str], _Items] = {}
        self._colours: dict[str, str] = {}
        self.table = None
        self.axis = "hz"
        self.scale = 1.0
        self.spread_ratio: tuple[float, float] | None = None
        self._lines: list[ModelLine] = []
        self._hover_x = np.empty(0)
        self._hover_text: list[str] = []
        self.hover_item = pg.TextItem("", color=theme.FOREGROUND, fill=pg.mkBrush(255, 255, 255, 220),
                                      border=pg.mkPen(NEUTRAL), anchor=(0, 0))
        self.hover_item.setZValue(30)
        self.hover_item.setVisible(False)
        plot_item.addItem(self.hover_item, ignoreBounds=True)
        plot_item.getViewBox().sigYRangeChanged.connect(self._on_y_range)
        plot_item.getViewBox().sigXRangeChanged.connect(self._place_labels)
        scene = plot_item.scene()
        if scene is not None:
            scene.sigMouseMoved.connect(self._on_mouse_moved)

    # ------------------------------------------------------------------ public API
    def families(self) -> tuple[str, ...]:
        """Names of the families, in legend order."""
        return FAMILIES

    def family_visible(self, name: str) -> bool:
        self._check_family(name)
        return self._visible[name]

    def set_family_visible(self, name: str, on: bool) -> None:
        """Show or hide one family (no recomputation: the items are only shown or hidden)."""
        self._check_family(name)
        if self._visible[name] == bool(on):
            return
        self._visible[name] = bool(on)
        for (family, _), items in self._items.items():
            if family == name:
                items.lines.setVisible(bool(on) and items.x.size > 0)
                items.spread.setVisible(bool(on) and items.x_lo.size > 0)
        self._rebuild_hover()
        self._place_labels()
        self.changed.emit()

    def shaft_colours(self) -> dict[str, str]:
        """Colour of each shaft of the current table (model order)."""
        return dict(self._colours)

    def legend_entries(self) -> list[tuple[str, str]]:
        """``(shaft name, colour)`` for the legend, in model order."""
        return list(self._colours.items())

    def set_table(self, table, *, axis: str = "hz", spread: tuple[float, float] | None = None,
                  order_shaft: str | None = None, scale: float | None = None) -> None:
        """Draw the frequencies of ``table`` on the given axis.

        Parameters
        ----------
        table : dsp.kinematics.FrequencyTable or None
            ``None`` clears the overlay.
        axis : {"hz", "cpm", "order"}
        spread : (min_hz, max_hz), optional
            Lowest and highest rate of the table's reference shaft over the
            record; draws the spread bars on a Hz or CPM axis (ignored on orders).
        order_shaft : str, optional
            Shaft whose orders an order axis shows (default the reference shaft).
        scale : float, optional
            Display units per Hz, overriding the one ``axis`` implies.
        """
        self.table = table
        self.axis = axis
        if table is None:
            self._lines = []
            self._colours = {}
            for items in self._items.values():
                _clear(items)
            self._rebuild_hover()
            self._place_labels()
            self.changed.emit()
            return
        self.scale = float(scale) if scale is not None else axis_scale(table, axis, order_shaft=order_shaft)
        if spread is not None and axis != "order":
            mean = float(table.reference_hz)
            self.spread_ratio = (float(spread[0]) / mean, float(spread[1]) / mean)
        else:
            self.spread_ratio = None
        self._colours = {s.name: theme.SHAFT_COLOURS[i % len(theme.SHAFT_COLOURS)]
                         for i, s in enumerate(table.shafts)}
        self._lines = list(model_lines(table, n_harmonics=self.n_harmonics, n_sidebands=self.n_sidebands))
        groups: dict[tuple[str, str], list[float]] = {}
        for line in self._lines:
            key = (line.group, "" if line.group == "mesh harmonics" else (line.shaft or ""))
            groups.setdefault(key, []).append(line.hz)
        for key in list(self._items):
            if key not in groups:
                _clear(self._items[key])
        for key, hz in groups.items():
            items = self._items.get(key) or self._make_items(key)
            x = np.asarray(hz, dtype=float) * self.scale
            items.x = x
            if self.spread_ratio is not None:
                items.x_lo, items.x_hi = x * self.spread_ratio[0], x * self.spread_ratio[1]
            else:
                items.x_lo = items.x_hi = np.empty(0)
            colour = self._colours.get(key[1], NEUTRAL)
            items.lines.setPen(pg.mkPen(colour, width=1, style=_STYLE[key[0]]))
            items.spread.setPen(pg.mkPen(colour, width=3))
        self._draw_all()
        self._rebuild_hover()
        self.changed.emit()

    def positions(self, family: str) -> np.ndarray:
        """Sorted x positions (display units) of one family's lines, whether shown or not."""
        self._check_family(family)
        xs = [items.x for (f, _), items in self._items.items() if f == family]
        return np.sort(np.concatenate(xs)) if xs else np.empty(0)

    def visible_positions(self) -> np.ndarray:
        """Sorted x positions of every line currently shown."""
        return self._hover_x.copy()

    def describe_at(self, x: float, reach: float) -> str | None:
        """What the shown lines within ``reach`` of ``x`` are (display units), or None."""
        if self._hover_x.size == 0:
            return None
        lo = int(np.searchsorted(self._hover_x, x - reach, side="left"))
        hi = int(np.searchsorted(self._hover_x, x + reach, side="right"))
        if hi <= lo:
            return None
        near = sorted(range(lo, hi), key=lambda i: abs(self._hover_x[i] - x))[:4]
        unit = {"hz": "Hz", "cpm": "CPM", "order": "orders"}.get(self.axis, "")
        return "\n".join(f"{self._hover_text[i]}: {self._hover_x[i]:.6g} {unit}" for i in near)

    def items(self) -> list[pg.PlotCurveItem]:
        """Every graphics item the overlay owns (for tests)."""
        return [it for items in self._items.values() for it in (items.lines, items.spread)]

    def legend_widget(self, parent: QWidget | None = None) -> "OverlayLegend":
        """A row of family switches and the shaft colour legend, bound to this overlay."""
        return OverlayLegend(self, parent)

    # ------------------------------------------------------------------ drawing
    def _make_items(self, key: tuple[str, str]) -> _Items:
        lines = pg.PlotCurveItem(connect="pairs", antialias=False)
        spread = pg.PlotCurveItem(connect="pairs", antialias=False)
        for item in (lines, spread):
            item.setZValue(5)
            self.plot_item.addItem(item, ignoreBounds=True)
        items = _Items(lines, spread, np.empty(0), np.empty(0), np.empty(0))
        self._items[key] = items
        return items

    def _y_span(self) -> tuple[float, float]:
        (_, _), (y0, y1) = self.plot_item.getViewBox().viewRange()
        return float(y0), float(y1)

    def _draw_all(self) -> None:
        y0, y1 = self._y_span()
        y_bar = y0 + SPREAD_Y * (y1 - y0)
        for (family, _), items in self._items.items():
            n = items.x.size
            if n:
                items.lines.setData(np.repeat(items.x, 2), np.tile([y0, y1], n))
            else:
                items.lines.setData([], [])
            items.lines.setVisible(self._visible[family] and n > 0)
            m = items.x_lo.size
            if m:
                xs = np.empty(2 * m)
                xs[0::2], xs[1::2] = items.x_lo, items.x_hi
                items.spread.setData(xs, np.full(2 * m, y_bar))
            else:
                items.spread.setData([], [])
            items.spread.setVisible(self._visible[family] and m > 0)
        self._place_labels()

    def set_label_filter(self, *, shaft: str | None = None, max_harmonic: int | None = None,
                         focus: str | None = None, focus_first: str | None = None) -> None:
        """Label only the lines of ``shaft`` (and those of no shaft) up to ``max_harmonic`` (None: all).

        ``focus`` (a family prefix such as ``"bearing:intermediate NDE"``) names an element whose
        lines are labelled first, every harmonic drawn, whatever ``shaft`` is; the other lines of
        its family group are then left unlabelled so the focus reads clearly.  ``focus_first``
        (a whole family such as ``"bearing:intermediate NDE bpfo"``) goes before the focus' others.
        """
        wanted = (shaft, max_harmonic, focus, focus_first)
        if wanted != (self.label_shaft, self.label_max_harmonic, self.label_focus, self.label_focus_first):
            self.label_shaft, self.label_max_harmonic, self.label_focus, self.label_focus_first = wanted
            self._place_labels()

    def label_texts(self) -> list[tuple[float, str]]:
        """``(x, text)`` of the labels shown, left to right (display units)."""
        return sorted((float(t.pos().x()), t.textItem.toPlainText()) for t in self.labels if t.isVisible())

    def _place_labels(self, *_args) -> None:
        """Name the lines of the labelled families that are in view, in staggered rows, without overlaps."""
        focus = self.label_focus
        def in_focus(ln) -> bool:   # the focus element's own lines ("bearing:NAME bpfo"), not "bearing:NAME 2 ..."
            rest = ln.family[len(focus) + 1:] if focus is not None and ln.family.startswith(focus + " ") else None
            return focus is not None and (ln.family == focus or (rest is not None and " " not in rest))

        focus_group = next((ln.group for ln in self._lines if in_focus(ln)), None)
        wanted = [line for line in self._lines if line.group in self.labelled and self._visible[line.group]
                  and not line.family.endswith((" hunting tooth", " assembly phase"))
                  and (in_focus(line) or (
                      line.group != focus_group
                      and (self.label_shaft is None or line.shaft in (None, self.label_shaft))
                      and (self.label_max_harmonic is None or line.harmonic <= self.label_max_harmonic)))]
        shown: list[tuple[float, int, str, str]] = []
        if wanted and self.table is not None:
            vb = self.plot_item.getViewBox()
            (x0, x1), (y0, y1) = vb.viewRange()
            px = abs(vb.viewPixelSize()[0]) or 1.0
            free = [-np.inf] * N_LABEL_ROWS      # right end of the last label in each row, px
            metrics = QFontMetricsF(QGuiApplication.font())
            def rank(ln):   # the focus first (its chosen family before its others), then low harmonics
                return (not in_focus(ln), ln.family != self.label_focus_first, ln.harmonic, ln.hz)

            for line in sorted(wanted, key=rank):
                x = line.hz * self.scale
                if not x0 <= x <= x1 or len(shown) >= N_LABELS:
                    continue
                left = (x - x0) / px
                row = next((r for r in range(N_LABEL_ROWS) if free[r] <= left), None)
                if row is None:
                    continue
                text = _short(line.text)
                free[row] = left + metrics.horizontalAdvance(text) + LABEL_PAD_PX
                colour = self._colours.get(line.shaft or "", theme.FOREGROUND)
                shown.append((x, row, text, colour))
            step = (y1 - y0) * 0.055
            top = y0 + 0.995 * (y1 - y0)
        while len(self.labels) < len(shown):
            item = pg.TextItem("", anchor=(0, 0), fill=pg.mkBrush(255, 255, 255, 200))
            item.setZValue(6)
            self.plot_item.addItem(item, ignoreBounds=True)
            self.labels.append(item)
        for i, item in enumerate(self.labels):
            if i < len(shown):
                x, row, text, colour = shown[i]
                item.setText(text, color=colour)
                item.setPos(x, top - row * step)
            item.setVisible(i < len(shown))

    def _on_y_range(self, *_args) -> None:
        if self.table is not None:
            self._draw_all()

    def _rebuild_hover(self) -> None:
        shown = [(line.hz * self.scale, line.text) for line in self._lines if self._visible[line.group]]
        shown.sort(key=lambda p: p[0])
        self._hover_x = np.array([p[0] for p in shown], dtype=float)
        self._hover_text = [p[1] for p in shown]
        if self._hover_x.size == 0:
            self.hover_item.setVisible(False)

    def _on_mouse_moved(self, scene_pos) -> None:
        vb = self.plot_item.getViewBox()
        dragging = bool(getattr(self.plot_item.scene(), "dragButtons", None))
        if dragging or self._hover_x.size == 0 or not vb.sceneBoundingRect().contains(scene_pos):
            self.hover_item.setVisible(False)
            return
        point = vb.mapSceneToView(scene_pos)
        reach = HOVER_PX * abs(vb.viewPixelSize()[0])
        text = self.describe_at(point.x(), reach)
        if text is None:
            self.hover_item.setVisible(False)
            return
        self.hover_item.setText(text)
        self.hover_item.setPos(point.x(), point.y())
        self.hover_item.setVisible(True)

    @staticmethod
    def _check_family(name: str) -> None:
        if name not in FAMILIES:
            raise ValueError(f"Invalid value for 'family': allowed {', '.join(map(repr, FAMILIES))}, got {name!r}")


def _short(text: str) -> str:
    """A label for a line: "1 x GMF stage 1" -> "GMF stage 1", "2 x GMF stage 1" -> "2× GMF stage 1"."""
    count, sep, rest = text.partition(" x ")
    if sep and count.isdigit():
        return rest if count == "1" else f"{count}× {rest}"
    return text


def _clear(items: _Items) -> None:
    items.x = items.x_lo = items.x_hi = np.empty(0)
    items.lines.setData([], [])
    items.spread.setData([], [])
    items.lines.setVisible(False)
    items.spread.setVisible(False)


class OverlayLegend(QWidget):
    """Family switches (a compact menu) and the shaft colour legend of one :class:`ModelOverlay`.

    ``boxes`` maps each family name to its checkable action.
    """

    def __init__(self, overlay: ModelOverlay, parent: QWidget | None = None):
        super().__init__(parent)
        self.overlay = overlay
        layout = FlowLayout(self, h_spacing=6, v_spacing=2)   # shaft names wrap on a narrow window
        policy = QSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)  # Fixed would cap at one line
        policy.setHeightForWidth(True)
        self.setSizePolicy(policy)
        self.menu_button = QToolButton()
        self.menu_button.setText("Model lines")
        self.menu_button.setToolTip("Choose which model frequency families are drawn")
        self.menu_button.setPopupMode(QToolButton.ToolButtonPopupMode.InstantPopup)
        menu = QMenu(self.menu_button)
        self.boxes: dict[str, QAction] = {}
        for name in FAMILIES:
            action = menu.addAction(name)
            action.setCheckable(True)
            action.setChecked(overlay.family_visible(name))
            action.toggled.connect(lambda on, n=name: overlay.set_family_visible(n, on))
            self.boxes[name] = action
        self.menu_button.setMenu(menu)
        layout.addWidget(self.menu_button)
        self._shaft_row = layout
        self.shaft_labels: list[QLabel] = []
        overlay.changed.connect(self.sync)
        self.sync()

    def sync(self) -> None:
        """Match the switches and the shaft names to the overlay."""
        for name, box in self.boxes.items():
            if box.isChecked() != self.overlay.family_visible(name):
                box.blockSignals(True)
                box.setChecked(self.overlay.family_visible(name))
                box.blockSignals(False)
        shown = [n for n in FAMILIES if self.overlay.family_visible(n)]
        # short text so the button reads fully on a narrow window; the long form is its tooltip
        self.menu_button.setText(f"Lines {len(shown)}/{len(FAMILIES)}")
        self.menu_button.setToolTip(f"Model lines: {len(shown)} of {len(FAMILIES)} families drawn"
                                    f" ({', '.join(shown) or 'none'}); click to choose which")
        # room for the menu arrow, which the style draws over the text otherwise
        self.menu_button.setMinimumWidth(self.menu_button.sizeHint().width() + 14)
        entries = self.overlay.legend_entries()
        if [label.property("shaft") for label in self.shaft_labels] == [n for n, _ in entries]:
            return
        for label in self.shaft_labels:
            self._shaft_row.removeWidget(label)
            label.deleteLater()
        self.shaft_labels = []
        for name, colour in entries:
            label = QLabel(f'<span style="color:{colour}">&#9632;</span> {name}')
            label.setProperty("shaft", name)
            label.setToolTip(f"lines in this colour belong to the {name} shaft "
                             "(its rate, the sidebands it spaces, its bearings)")
            self._shaft_row.addWidget(label)
            self.shaft_labels.append(label)
