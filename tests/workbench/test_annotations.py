"""Annotations: pinned to data coordinates, add / move / edit / delete with undo and redo, units, plain text."""

from __future__ import annotations

import math

import pytest
from PySide6.QtCore import QEvent, QPoint, QPointF, Qt
from PySide6.QtGui import QMouseEvent
from PySide6.QtWidgets import QApplication

from workbench import theme
from workbench.annotations import (Annotation, AnnotationController, added, changed, convert_x, convert_y,
                                   removed)
from workbench.session import Session
from workbench.undo import UndoHistory
from workbench.views.spectrum import SpectrumView

G_N = 9.80665   # m/s2 per g, exact by definition (3rd CGPM 1901)


@pytest.fixture
def setup(qtbot):
    theme.configure_pyqtgraph()
    session = Session()
    view = SpectrumView(session)
    qtbot.addWidget(view)
    view.resize(800, 500)
    view.show()
    qtbot.waitExposed(view)
    view.plot.setLogMode(x=False, y=False)
    view.plot.setXRange(0.0, 1000.0, padding=0)
    view.plot.setYRange(0.0, 1.0, padding=0)
    history = UndoHistory(session)
    asked = []
    controller = AnnotationController(session, history, ask=lambda _p, title, text: asked.append(title) or "typed")
    layer = controller.attach(view)
    return session, view, history, controller, layer, asked


def test_add_move_edit_delete_with_undo_and_redo(setup):
    session, view, history, controller, layer, _ = setup
    note_id = controller.add("spectrum", "note", 380.0, 0.5, "GMF of the pair", x_units="hz", y_units="g")
    note, arrow = layer.items[note_id]
    assert arrow is None and note.pos() == QPointF(380.0, 0.5)   # placed at its data coordinates
    arrow_id = controller.add("spectrum", "arrow", 760.0, 0.25, "2x GMF", x_units="hz", y_units="g")
    assert layer.items[arrow_id][1] is not None and layer.items[arrow_id][1].pos() == QPointF(760.0, 0.25)

    layer.drag(note_id, 400.0, 0.75)                  # a finished drag
    assert (session.annotations[0]["x"], session.annotations[0]["y"]) == (400.0, 0.75)
    controller.edit(note_id, "GMF, with sidebands")
    controller.delete(arrow_id)
    assert [a["id"] for a in session.annotations] == [note_id] and arrow_id not in layer.items

    history.undo()                                    # the arrow comes back
    assert arrow_id in layer.items and layer.items[arrow_id][0].isVisible()
    history.undo()
    assert session.annotations[0]["text"] == "GMF of the pair"
    history.undo()
    assert layer.items[note_id][0].pos() == QPointF(380.0, 0.5)
    history.undo()
    history.undo()
    assert session.annotations == [] and layer.items == {}
    for _ in range(5):
        history.redo()
    assert [a["id"] for a in session.annotations] == [note_id]
    assert session.annotations[0]["text"] == "GMF, with sidebands" and session.annotations[0]["x"] == 400.0


def _send_mouse(widget, kind, pos: QPoint, buttons):
    button = Qt.MouseButton.LeftButton if kind != QEvent.Type.MouseMove else Qt.MouseButton.NoButton
    event = QMouseEvent(kind, QPointF(pos), QPointF(widget.mapToGlobal(pos)), button, buttons,
                        Qt.KeyboardModifier.NoModifier)
    QApplication.sendEvent(widget, event)


def test_mouse_drag_moves_a_note_in_data_coordinates(setup, qtbot):
    session, view, history, controller, layer, _ = setup
    note_id = controller.add("spectrum", "note", 300.0, 0.4, "drag me", x_units="hz", y_units="g")
    note = layer.items[note_id][0]
    widget = view.plot.getViewWidget()
    vb = view.plot.getViewBox()
    start_scene = note.mapToScene(note.boundingRect().center())
    start = widget.mapFromScene(start_scene)
    offset = QPoint(120, -60)                                  # pixels right and up
    left = Qt.MouseButton.LeftButton
    _send_mouse(widget.viewport(), QEvent.Type.MouseButtonPress, start, left)
    for k in range(1, 11):
        _send_mouse(widget.viewport(), QEvent.Type.MouseMove, start + offset * (k / 10), left)
    _send_mouse(widget.viewport(), QEvent.Type.MouseButtonRelease, start + offset, Qt.MouseButton.NoButton)
    qtbot.wait(10)
    moved = session.annotations[0]
    # the data shift equals the pixel shift mapped through the view box (pyqtgraph ViewBox.mapSceneToView)
    a = vb.mapSceneToView(widget.mapToScene(start))
    b = vb.mapSceneToView(widget.mapToScene(start + offset))
    assert moved["x"] == pytest.approx(300.0 + (b.x() - a.x()), abs=3.0)
    assert moved["y"] == pytest.approx(0.4 + (b.y() - a.y()), abs=0.01)
    assert moved["x"] > 330.0 and moved["y"] > 0.45           # it really moved right and up
    history.undo()
    assert (session.annotations[0]["x"], session.annotations[0]["y"]) == (300.0, 0.4)


def test_notes_follow_pan_and_zoom(setup):
    session, view, _, controller, layer, _ = setup
    note_id = controller.add("spectrum", "note", 250.0, 0.5, "pinned", x_units="hz", y_units="g")
    note = layer.items[note_id][0]
    vb = view.plot.getViewBox()
    view.grab()                                              # paint, so the text item places itself
    before = note.scenePos()
    view.plot.setXRange(200.0, 300.0, padding=0)             # zoom in around the note
    view.grab()
    after = note.scenePos()
    assert note.pos() == QPointF(250.0, 0.5)                 # still at its data coordinates
    expected = vb.mapViewToScene(QPointF(250.0, 0.5))
    assert (after.x(), after.y()) == pytest.approx((expected.x(), expected.y()), abs=0.5)
    assert abs(after.x() - before.x()) > 100                 # the screen position changed with the zoom


def test_units_and_log_axes(setup):
    session, view, _, controller, layer, _ = setup
    note_id = controller.add("spectrum", "note", 380.0, 0.02, "GMF", x_units="hz", y_units="g")
    note = layer.items[note_id][0]
    session.set_view_options(spectrum_x="cpm")
    assert note.pos().x() == pytest.approx(380.0 * 60.0)     # 1 Hz = 60 cycles per minute (common practice, no source)
    session.set_view_options(spectrum_units="m/s2")
    assert note.pos().y() == pytest.approx(0.02 * G_N)      # 1 g = 9.80665 m/s2 (3rd CGPM 1901)
    session.set_view_options(spectrum_units="mm/s")
    assert not note.isVisible()                              # an acceleration note has no place on a velocity axis
    session.set_view_options(spectrum_units="g", spectrum_x="hz")
    view.plot.setLogMode(x=False, y=True)
    layer.set_axes(layer.axes)
    assert note.isVisible() and note.pos().y() == pytest.approx(math.log10(0.02))   # pyqtgraph log axes plot log10
    layer.drag(note_id, 400.0, math.log10(0.05))             # x linear, y in decades
    assert session.annotations[0]["x"] == pytest.approx(400.0)
    assert session.annotations[0]["y"] == pytest.approx(0.05)   # stored as the real value, not its logarithm
    # orders of a shaft turning at 20 Hz: 380 Hz is order 19 (GMF = Z x f_shaft, domain reference 1.1)
    assert convert_x(380.0, "hz", "order", shaft_hz=20.0) == pytest.approx(19.0)
    assert convert_x(19.0, "order", "cpm", shaft_hz=20.0) == pytest.approx(22800.0)
    assert convert_x(1.0, "deg", "hz") is None and convert_y(1.0, "g", "mm/s") is None


def test_text_is_plain_and_dialogs_are_used_for_add_and_edit(setup):
    session, view, _, controller, layer, asked = setup
    layer.request_add("arrow", 500.0, 0.5)                  # right-click "Add arrow here" at that point
    annotation = Annotation.from_dict(session.annotations[0])
    assert (annotation.kind, annotation.x, annotation.y, annotation.text) == ("arrow", 500.0, 0.5, "typed")
    assert (annotation.x_units, annotation.y_units) == ("hz", "g")
    layer.edit_requested.emit(annotation.id)                 # double click
    assert asked == ["New arrow", "Edit note"]
    controller.edit(annotation.id, "<b>bold?</b> <script>x</script>")
    note = layer.items[annotation.id][0]
    assert note.textItem.toPlainText() == "<b>bold?</b> <script>x</script>"   # shown as typed, never as markup
    view.note_button.click()                                 # the toolbar button adds a note at the centre
    assert session.annotations[-1]["x"] == pytest.approx(500.0) and session.annotations[-1]["y"] == pytest.approx(0.5)
    vb = view.plot.getViewBox()
    layer._remember_mouse(vb.mapViewToScene(QPointF(700.0, 0.3)))   # where the right click happened
    layer.arrow_action.trigger()                             # the plot's menu: "Add arrow here"
    assert layer.arrow_action.text() == "Add arrow here" and layer.arrow_action in vb.menu.actions()
    assert (session.annotations[-1]["kind"], session.annotations[-1]["x"]) == ("arrow", pytest.approx(700.0))
    assert session.annotations[-1]["y"] == pytest.approx(0.3)


def test_list_edits_never_change_their_input():
    items = [Annotation("a", "tsa", "note", 10.0, 1.0, "x", "deg", "g").to_dict()]
    snapshot = [dict(i) for i in items]
    more = added(items, Annotation("b", "tsa", "arrow", 20.0, 2.0, "y", "deg", "g"))
    moved = changed(more, "b", x=30.0)
    fewer = removed(moved, "a")
    assert items == snapshot and len(more) == 2 and moved[1]["x"] == 30.0 and [i["id"] for i in fewer] == ["b"]
    with pytest.raises(ValueError, match="already exists"):
        added(more, Annotation("a", "tsa", "note", 0.0, 0.0, "", "", ""))
    with pytest.raises(KeyError):
        removed(items, "zzz")
    with pytest.raises(ValueError, match="finite"):
        Annotation("c", "tsa", "note", float("nan"), 0.0, "")
