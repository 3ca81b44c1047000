"""Notes and arrows pinned to data coordinates on any view.

An :class:`Annotation` is plain data kept in the session document: the view it
belongs to, its kind (``"note"``: a text label; ``"arrow"``: an arrow whose tip
points at the position, with the text above it), the position ``x, y`` in the
units of the axes it was placed on (``x_units``, ``y_units``) and the text.

On screen, :class:`AnnotationLayer` draws the annotations of one plot as
pyqtgraph ``TextItem`` and ``ArrowItem`` objects placed in data coordinates, so
they follow pan and zoom.  A note can be dragged (the document learns the new
position when the drag ends), edited with a double click and removed from its
right-click menu; the plot's own right-click menu gains "Add note here" and "Add
arrow here".  :class:`AnnotationController` connects the layers to the session
through the undo history (:mod:`workbench.undo`), so every add, move, edit and
delete can be undone.

Units: a note placed on a Hz axis also shows on a CPM axis (x 60) and on an order
axis (divided by the selected shaft's rate); a note placed in g also shows in
m/s²; on any other axis it is hidden until its own axis is shown again.  Log axes
are handled: positions are stored as real values, never as logarithms.
"""

from __future__ import annotations

import math
import uuid
from dataclasses import asdict, dataclass, replace
from typing import Any, Callable

import pyqtgraph as pg
from PySide6.QtCore import QObject, QPointF, Qt, Signal
from PySide6.QtWidgets import QInputDialog, QMenu, QPushButton

KINDS = ("note", "arrow")
G_N = 9.80665        # m/s2 per g, exact by definition (3rd CGPM 1901)
NOTE_COLOUR = "#1A1A1A"
NOTE_FILL = (255, 250, 205, 230)     # pale yellow, readable over curves
NOTE_BORDER = "#8A7A2A"
ARROW_COLOUR = "#B03A2E"
ARROW_PX = 34                        # arrow length in screen pixels (head + tail)


@dataclass(frozen=True)
class Annotation:
    """One note or arrow.

    Attributes
    ----------
    id : str
        Stable identifier (hex), unique within the session.
    view : str
        Session view name (``"spectrum"``, ``"tsa"``, ...).
    kind : str
        ``"note"`` or ``"arrow"``.
    x, y : float
        Position in ``x_units`` and ``y_units`` (real values, also on log axes).
    text : str
        What the analyst wrote (plain text, never interpreted as markup).
    x_units, y_units : str
        Units of the axes the annotation was placed on: ``"hz"``, ``"cpm"``,
        ``"order"``, ``"s"``, ``"deg"``, ``"ms"``, ``"rpm"``, ``"g"``, ``"m/s2"``,
        ``"mm/s"`` ... (empty: unknown, shown on any axis).
    """

    id: str
    view: str
    kind: str
    x: float
    y: float
    text: str
    x_units: str = ""
    y_units: str = ""

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"Invalid value for 'kind': allowed {', '.join(map(repr, KINDS))}, got {self.kind!r}")
        for name in ("x", "y"):
            value = float(getattr(self, name))
            if not math.isfinite(value):
                raise ValueError(f"annotation {name}={value} must be a finite number")
            object.__setattr__(self, name, value)
        if not isinstance(self.text, str):
            raise TypeError(f"annotation text must be str, got {type(self.text).__name__}")

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> "Annotation":
        names = ("id", "view", "kind", "x", "y", "text", "x_units", "y_units")
        return cls(**{k: data[k] for k in names if k in data})


def new_annotation(view: str, kind: str, x: float, y: float, text: str, *, x_units: str = "",
                   y_units: str = "") -> Annotation:
    """A new annotation with a fresh id."""
    return Annotation(uuid.uuid4().hex[:12], view, kind, x, y, text, x_units, y_units)


# ---------------------------------------------------------------------- pure list edits
def added(items: list[dict[str, Any]], annotation: Annotation) -> list[dict[str, Any]]:
    """``items`` with ``annotation`` appended (a new list; the input is not changed)."""
    if any(item.get("id") == annotation.id for item in items):
        raise ValueError(f"an annotation with id {annotation.id!r} already exists")
    return [dict(item) for item in items] + [annotation.to_dict()]


def changed(items: list[dict[str, Any]], annotation_id: str, **changes: Any) -> list[dict[str, Any]]:
    """``items`` with one annotation's fields replaced (``x``, ``y``, ``text``)."""
    out, found = [], False
    for item in items:
        if item.get("id") == annotation_id:
            item = replace(Annotation.from_dict(item), **changes).to_dict()
            found = True
        out.append(dict(item))
    if not found:
        raise KeyError(f"no annotation with id {annotation_id!r}")
    return out


def removed(items: list[dict[str, Any]], annotation_id: str) -> list[dict[str, Any]]:
    """``items`` without one annotation."""
    out = [dict(item) for item in items if item.get("id") != annotation_id]
    if len(out) == len(items):
        raise KeyError(f"no annotation with id {annotation_id!r}")
    return out


def find(items: list[dict[str, Any]], annotation_id: str) -> Annotation | None:
    for item in items:
        if item.get("id") == annotation_id:
            return Annotation.from_dict(item)
    return None


# ---------------------------------------------------------------------- units
def convert_x(value: float, from_units: str, to_units: str, *, shaft_hz: float | None = None) -> float | None:
    """Convert an x position between Hz, CPM and orders (``None``: not convertible).

    ``shaft_hz`` is the rate of the shaft whose orders the axis shows.
    """
    if from_units == to_units or not from_units or not to_units:
        return float(value)
    per_hz = {"hz": 1.0, "cpm": 60.0}
    if shaft_hz and shaft_hz > 0:
        per_hz["order"] = 1.0 / float(shaft_hz)
    if from_units in per_hz and to_units in per_hz:
        return float(value) / per_hz[from_units] * per_hz[to_units]
    return None


def convert_y(value: float, from_units: str, to_units: str) -> float | None:
    """Convert an amplitude between g and m/s² (``None``: not convertible)."""
    if from_units == to_units or not from_units or not to_units:
        return float(value)
    if (from_units, to_units) == ("g", "m/s2"):
        return float(value) * G_N
    if (from_units, to_units) == ("m/s2", "g"):
        return float(value) / G_N
    return None


@dataclass(frozen=True)
class Axes:
    """Units of a plot's axes as the view shows them now."""

    x_units: str = ""
    y_units: str = ""
    shaft_hz: float | None = None


def view_axes(view: Any) -> Axes:
    """The axis units a workbench view shows now (read from its session and analysis)."""
    session = view.session
    units = view.sensor_units() if hasattr(view, "sensor_units") else ""
    name = getattr(view, "name", "")
    if name == "spectrum":
        options = session.view_options
        shaft_hz = view.shaft_rate_hz(session.selected_shaft) if hasattr(view, "shaft_rate_hz") else None
        return Axes(options.spectrum_x, options.spectrum_units, shaft_hz)
    if name == "tsa":
        return Axes("deg", units)
    if name == "waveform":
        return Axes("s", units)
    if name == "speed":
        return Axes("s", "rpm")
    if name == "envelope":
        return Axes("hz", units)
    if name == "cepstrum":
        return Axes("ms", "")
    return Axes()


# ---------------------------------------------------------------------- drawing
class _Draggable:
    """Mixin: a graphics item that belongs to one annotation and reports drags and clicks to its layer."""

    layer: "AnnotationLayer"
    annotation_id: str

    def mouseDragEvent(self, ev):  # noqa: N802 - pyqtgraph override
        if ev.button() != Qt.MouseButton.LeftButton:
            ev.ignore()
            return
        ev.accept()
        vb = self.layer.plot.getViewBox()
        here = vb.mapSceneToView(ev.scenePos())
        if ev.isStart():
            start = vb.mapSceneToView(ev.buttonDownScenePos())
            anchor = self.layer.position_of(self.annotation_id)
            self._offset = (anchor[0] - start.x(), anchor[1] - start.y()) if anchor else (0.0, 0.0)
        dx, dy = getattr(self, "_offset", (0.0, 0.0))
        self.layer.preview_move(self.annotation_id, here.x() + dx, here.y() + dy)
        if ev.isFinish():
            self.layer.finish_move(self.annotation_id)

    def mouseClickEvent(self, ev):  # noqa: N802 - pyqtgraph override
        if ev.button() == Qt.MouseButton.RightButton:
            ev.accept()
            self.layer.show_item_menu(self.annotation_id, ev.screenPos().toPoint())
        elif ev.double():
            ev.accept()
            self.layer.edit_requested.emit(self.annotation_id)
        else:
            ev.ignore()

    def mouseDoubleClickEvent(self, ev):  # noqa: N802 - Qt override
        ev.accept()
        self.layer.edit_requested.emit(self.annotation_id)


class NoteItem(_Draggable, pg.TextItem):
    """The text of an annotation (draggable, double click edits)."""

    def __init__(self, layer: "AnnotationLayer", annotation: Annotation):
        pg.TextItem.__init__(self, text=annotation.text or " ", color=NOTE_COLOUR,
                             fill=pg.mkBrush(*NOTE_FILL), border=pg.mkPen(NOTE_BORDER),
                             anchor=(0.5, 1.0) if annotation.kind == "arrow" else (0.0, 1.0))
        self.layer = layer
        self.annotation_id = annotation.id
        self.setZValue(50)
        self.setToolTip("Drag to move; double click to edit; right click for more")


class ArrowMark(_Draggable, pg.ArrowItem):
    """The arrow of an ``"arrow"`` annotation: its tip is at the annotation's position."""

    def __init__(self, layer: "AnnotationLayer", annotation: Annotation):
        head = 11
        pg.ArrowItem.__init__(self, angle=-90, headLen=head, tailLen=ARROW_PX - head, tailWidth=2,
                              pen=pg.mkPen(ARROW_COLOUR), brush=pg.mkBrush(ARROW_COLOUR))
        self.layer = layer
        self.annotation_id = annotation.id
        self.setZValue(49)


class AnnotationLayer(QObject):
    """The annotations of one plot of one view.

    The layer only draws: it tells its owner what the analyst did through signals,
    and the owner changes the document, which calls :meth:`set_annotations` back.

    Parameters
    ----------
    plot_item : pyqtgraph.PlotItem
        The plot to draw on.
    view : str
        Session view name; only annotations of this view are drawn.
    """

    add_requested = Signal(str, float, float)      # kind, x, y in the axis units shown
    moved = Signal(str, float, float)              # id, x, y in the annotation's own units
    edit_requested = Signal(str)                   # id
    delete_requested = Signal(str)                 # id

    def __init__(self, plot_item: pg.PlotItem, view: str, parent: QObject | None = None):
        super().__init__(parent)
        self.plot = plot_item
        self.view = view
        self.axes = Axes()
        self.annotations: dict[str, Annotation] = {}
        self.items: dict[str, tuple[NoteItem, ArrowMark | None]] = {}
        self._preview: dict[str, tuple[float, float]] = {}
        self._last_scene_pos: QPointF | None = None
        vb = plot_item.getViewBox()
        menu = vb.menu
        if menu is not None:
            menu.addSeparator()
            self.note_action = menu.addAction("Add note here")
            self.arrow_action = menu.addAction("Add arrow here")
            self.note_action.triggered.connect(lambda: self._add_at_menu("note"))
            self.arrow_action.triggered.connect(lambda: self._add_at_menu("arrow"))
        scene = plot_item.scene()
        if scene is not None:
            scene.sigMouseMoved.connect(self._remember_mouse)

    # -- document -> screen
    def set_axes(self, axes: Axes) -> None:
        """The axes changed (units, shaft): place every annotation again."""
        self.axes = axes
        self._place_all()

    def set_annotations(self, items: list[dict[str, Any]]) -> None:
        """Show these annotations (those of other views are skipped)."""
        wanted = {}
        for item in items:
            annotation = Annotation.from_dict(item)
            if annotation.view == self.view:
                wanted[annotation.id] = annotation
        for annotation_id in list(self.items):
            if annotation_id not in wanted or wanted[annotation_id].kind != self.annotations[annotation_id].kind:
                self._remove_items(annotation_id)
        self.annotations = wanted
        self._preview.clear()
        for annotation in wanted.values():
            if annotation.id not in self.items:
                note = NoteItem(self, annotation)
                arrow = ArrowMark(self, annotation) if annotation.kind == "arrow" else None
                self.plot.addItem(note, ignoreBounds=True)
                if arrow is not None:
                    self.plot.addItem(arrow, ignoreBounds=True)
                self.items[annotation.id] = (note, arrow)
            note, _ = self.items[annotation.id]
            note.setText(annotation.text or " ")
        self._place_all()

    def _remove_items(self, annotation_id: str) -> None:
        note, arrow = self.items.pop(annotation_id)
        for item in (note, arrow):
            if item is not None:
                self.plot.removeItem(item)

    def display_position(self, annotation: Annotation) -> tuple[float, float] | None:
        """Position in the plot's view coordinates (log10 on log axes), or ``None`` when hidden."""
        if annotation.id in self._preview:
            return self._preview[annotation.id]
        x = convert_x(annotation.x, annotation.x_units, self.axes.x_units, shaft_hz=self.axes.shaft_hz)
        y = convert_y(annotation.y, annotation.y_units, self.axes.y_units)
        if x is None or y is None:
            return None
        return self._to_view(x, y)

    def position_of(self, annotation_id: str) -> tuple[float, float] | None:
        annotation = self.annotations.get(annotation_id)
        return None if annotation is None else self.display_position(annotation)

    def _place_all(self) -> None:
        for annotation_id, (note, arrow) in self.items.items():
            pos = self.display_position(self.annotations[annotation_id])
            for item in (note, arrow):
                if item is None:
                    continue
                item.setVisible(pos is not None)
                if pos is not None:
                    item.setPos(*pos)
            if arrow is not None:
                # the text sits above the arrow's tail
                height = max(note.textItem.boundingRect().height(), 1.0)
                note.setAnchor((0.5, 1.0 + (ARROW_PX + 2) / height))

    # -- log axes
    def _log_modes(self) -> tuple[bool, bool]:
        return bool(self.plot.getAxis("bottom").logMode), bool(self.plot.getAxis("left").logMode)

    def _to_view(self, x: float, y: float) -> tuple[float, float] | None:
        log_x, log_y = self._log_modes()
        if (log_x and x <= 0) or (log_y and y <= 0):
            return None
        return (math.log10(x) if log_x else x, math.log10(y) if log_y else y)

    def _from_view(self, vx: float, vy: float) -> tuple[float, float]:
        log_x, log_y = self._log_modes()
        return (10.0 ** vx if log_x else vx, 10.0 ** vy if log_y else vy)

    def to_annotation_units(self, annotation: Annotation, vx: float, vy: float) -> tuple[float, float]:
        """A view-coordinate position expressed in the annotation's own units."""
        x, y = self._from_view(vx, vy)
        back_x = convert_x(x, self.axes.x_units, annotation.x_units, shaft_hz=self.axes.shaft_hz)
        back_y = convert_y(y, self.axes.y_units, annotation.y_units)
        return (x if back_x is None else back_x, y if back_y is None else back_y)

    # -- screen -> document
    def preview_move(self, annotation_id: str, vx: float, vy: float) -> None:
        """Move the items during a drag (the document is told at the end)."""
        self._preview[annotation_id] = (vx, vy)
        note, arrow = self.items[annotation_id]
        for item in (note, arrow):
            if item is not None:
                item.setPos(vx, vy)

    def finish_move(self, annotation_id: str) -> None:
        """End of a drag: emit :attr:`moved` with the position in the annotation's units."""
        vx, vy = self._preview.pop(annotation_id, self.position_of(annotation_id) or (0.0, 0.0))
        x, y = self.to_annotation_units(self.annotations[annotation_id], vx, vy)
        self.moved.emit(annotation_id, x, y)

    def drag(self, annotation_id: str, vx: float, vy: float) -> None:
        """Move an annotation to a view position as a finished drag would (tests, keyboard)."""
        self.preview_move(annotation_id, vx, vy)
        self.finish_move(annotation_id)

    def request_add(self, kind: str, vx: float, vy: float) -> None:
        """Ask for a new annotation at a view position (emits :attr:`add_requested` in axis units)."""
        x, y = self._from_view(vx, vy)
        self.add_requested.emit(kind, x, y)

    def centre(self) -> tuple[float, float]:
        (x0, x1), (y0, y1) = self.plot.getViewBox().viewRange()
        return (0.5 * (x0 + x1), 0.5 * (y0 + y1))

    def _remember_mouse(self, pos: QPointF) -> None:
        self._last_scene_pos = QPointF(pos)

    def _add_at_menu(self, kind: str) -> None:
        vb = self.plot.getViewBox()
        if self._last_scene_pos is not None and vb.sceneBoundingRect().contains(self._last_scene_pos):
            here = vb.mapSceneToView(self._last_scene_pos)
            self.request_add(kind, here.x(), here.y())
        else:
            self.request_add(kind, *self.centre())

    def show_item_menu(self, annotation_id: str, screen_pos) -> None:
        menu = QMenu()
        menu.addAction("Edit text...", lambda: self.edit_requested.emit(annotation_id))
        menu.addAction("Delete", lambda: self.delete_requested.emit(annotation_id))
        menu.exec(screen_pos)


def ask_text(parent, title: str, text: str = "") -> str | None:
    """Ask for a note's text in a small dialog; ``None`` when cancelled."""
    value, ok = QInputDialog.getMultiLineText(parent, title, "Note:", text)
    return value if ok else None


class AnnotationController(QObject):
    """Connects annotation layers to the session through the undo history.

    Parameters
    ----------
    session : workbench.session.Session
        The document; its ``annotations`` list (plain dicts) is what is edited.
    history : workbench.undo.UndoHistory
        Every change goes through it, so it can be undone.
    ask : callable, optional
        ``ask(parent, title, text) -> str | None`` for the text of a note
        (:func:`ask_text` by default; tests pass a function).
    """

    def __init__(self, session: Any, history: Any, *, ask: Callable[..., str | None] = ask_text,
                 parent: QObject | None = None):
        super().__init__(parent)
        self.session = session
        self.history = history
        self.ask = ask
        self.layers: dict[str, tuple[AnnotationLayer, Any]] = {}
        self._unsubscribe = session.subscribe(self._on_event)

    # -- wiring
    def attach(self, view: Any, *, add_button: bool = True) -> AnnotationLayer:
        """Give a workbench view (with ``name``, ``plot`` and ``controls``) its annotation layer."""
        layer = AnnotationLayer(view.plot, view.name, parent=self)
        layer.add_requested.connect(lambda kind, x, y, v=view: self._ask_and_add(v, kind, x, y))
        layer.moved.connect(self.move)
        layer.edit_requested.connect(lambda i, v=view: self._ask_and_edit(v, i))
        layer.delete_requested.connect(self.delete)
        self.layers[view.name] = (layer, view)
        if add_button and hasattr(view, "controls"):
            button = QPushButton("Note")
            button.setToolTip("Add a note at the centre of the plot; drag it where it belongs, "
                              "double click to edit (right click on the plot: note or arrow at a point)")
            button.clicked.connect(lambda _=False, lay=layer: lay.request_add("note", *lay.centre()))
            view.controls.insertWidget(max(view.controls.count() - 1, 0), button)
            view.note_button = button
        self.refresh(view.name)
        return layer

    def refresh(self, name: str | None = None) -> None:
        """Redraw the layers (all, or one view's) from the session."""
        items = self.items()
        for view_name, (layer, view) in self.layers.items():
            if name is None or view_name == name:
                layer.set_axes(view_axes(view))
                layer.set_annotations(items)

    def _on_event(self, event) -> None:
        if event.kind in ("annotations", "view_options", "shaft", "model", "settings"):
            self.refresh()

    # -- the document
    def items(self) -> list[dict[str, Any]]:
        return [dict(item) for item in (getattr(self.session, "annotations", None) or [])]

    def add(self, view: str, kind: str, x: float, y: float, text: str, *, x_units: str = "",
            y_units: str = "") -> str:
        """Add an annotation (undoable); returns its id."""
        annotation = new_annotation(view, kind, x, y, text, x_units=x_units, y_units=y_units)
        self.history.set_list("annotations", added(self.items(), annotation), f"add {kind}")
        return annotation.id

    def move(self, annotation_id: str, x: float, y: float) -> None:
        self.history.set_list("annotations", changed(self.items(), annotation_id, x=x, y=y), "move note",
                              merge_key=f"move:{annotation_id}")

    def edit(self, annotation_id: str, text: str) -> None:
        self.history.set_list("annotations", changed(self.items(), annotation_id, text=text), "edit note")

    def delete(self, annotation_id: str) -> None:
        self.history.set_list("annotations", removed(self.items(), annotation_id), "delete note")

    def _ask_and_add(self, view: Any, kind: str, x: float, y: float) -> None:
        text = self.ask(view, "New arrow" if kind == "arrow" else "New note", "")
        if text is None:
            return
        axes = view_axes(view)
        self.add(view.name, kind, x, y, text, x_units=axes.x_units, y_units=axes.y_units)

    def _ask_and_edit(self, view: Any, annotation_id: str) -> None:
        current = find(self.items(), annotation_id)
        if current is None:
            return
        text = self.ask(view, "Edit note", current.text)
        if text is not None and text != current.text:
            self.edit(annotation_id, text)


__all__ = ["KINDS", "Annotation", "Axes", "AnnotationLayer", "AnnotationController", "new_annotation",
           "added", "changed", "removed", "find", "convert_x", "convert_y", "view_axes", "ask_text"]
