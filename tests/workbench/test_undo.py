"""Undo history: annotation and cursor lists, model edits, merging, standard shortcuts."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
from PySide6.QtGui import QKeySequence
from PySide6.QtWidgets import QWidget

from dsp.model import load_model
from workbench.session import Session
from workbench.undo import ListEditCommand, UndoHistory

DATA = Path(__file__).resolve().parents[1] / "data"


@pytest.fixture
def session():
    model = load_model(DATA / "pair_40_15.toml")
    return Session(model_path=DATA / "pair_40_15.toml", model=model)


def note(i: int, x: float = 1.0) -> dict:
    return {"id": f"n{i}", "view": "spectrum", "kind": "note", "x": x, "y": 0.1, "text": f"note {i}",
            "x_units": "hz", "y_units": "g"}


def test_list_edits_undo_and_redo_in_order(qtbot, session):
    history = UndoHistory(session)
    events = []
    session.subscribe(lambda e: events.append(e.kind), ("annotations", "cursors"))
    history.set_list("annotations", [note(1)], "add note")
    history.set_list("annotations", [note(1), note(2)], "add note")
    history.set_list("cursors", [{"kind": "harmonic", "axis": "hz", "positions": [25.0], "n": 5, "view": "spectrum"}],
                     "add cursor")
    assert history.stack.count() == 3
    history.undo()
    assert session.cursors == [] and len(session.annotations) == 2   # last in, first out (common practice, no source)
    history.undo()
    assert [a["id"] for a in session.annotations] == ["n1"]
    history.redo()
    history.redo()
    assert [a["id"] for a in session.annotations] == ["n1", "n2"] and len(session.cursors) == 1
    assert events == ["annotations", "annotations", "cursors", "cursors", "annotations", "annotations",
                      "cursors"]   # every change, done or undone, is announced once
    history.set_list("annotations", session.annotations, "no change")
    assert history.stack.count() == 3                                          # an unchanged list is not a step


def test_consecutive_moves_of_one_item_are_one_step(qtbot, session):
    history = UndoHistory(session)
    history.set_list("annotations", [note(1, x=1.0)], "add note")
    for x in (2.0, 3.0, 4.0):
        history.set_list("annotations", [note(1, x=x)], "move note", merge_key="move:n1")
    assert history.stack.count() == 2
    history.undo()
    assert session.annotations[0]["x"] == 1.0          # one undo goes back to before the whole drag
    history.redo()
    assert session.annotations[0]["x"] == 4.0


def test_model_edits_are_recorded_and_undone(qtbot, session):
    restored = []
    history = UndoHistory(session, on_model_restored=restored.append)
    old = session.model
    mesh = dataclasses.replace(old.meshes[0], driven_teeth=16)
    edited = dataclasses.replace(old, meshes=(mesh,))
    session.set_model(edited)                          # an edit in the form reaches the session
    assert history.stack.count() == 1
    history.undo()
    assert session.model == old and restored == [old]
    assert session.model.meshes[0].driven_teeth == 15
    history.redo()
    assert session.model == edited and restored == [old, edited]
    history.set_model(dataclasses.replace(old, name="renamed"), "rename")
    assert session.model.name == "renamed" and history.stack.count() == 2
    history.undo()
    assert session.model == edited


def test_opening_another_model_file_is_not_an_undoable_edit(qtbot, session):
    history = UndoHistory(session)
    session.set_model(dataclasses.replace(session.model, name="edited"))
    assert history.can_undo()
    other = load_model(DATA / "idler_40_23_15.toml")
    session.set_model(other, DATA / "idler_40_23_15.toml")
    assert not history.can_undo() and history.stack.count() == 0
    session.set_recording(Path("another.flac"))
    assert history.stack.count() == 0


def test_bad_key_is_refused(qtbot, session):
    history = UndoHistory(session)
    with pytest.raises(ValueError, match="Invalid value for 'key'"):
        ListEditCommand(history, "findings", [], [], "x")


def test_menu_actions_use_the_standard_shortcuts(qtbot, session):
    parent = QWidget()
    qtbot.addWidget(parent)
    history = UndoHistory(session)
    undo, redo = history.actions(parent)
    # the platform's standard bindings (Qt QKeySequence::Undo / Redo; Ctrl+Z on every desktop, common practice)
    assert undo.shortcuts() == QKeySequence.keyBindings(QKeySequence.StandardKey.Undo)
    assert redo.shortcuts() == QKeySequence.keyBindings(QKeySequence.StandardKey.Redo)
    assert QKeySequence("Ctrl+Z") in undo.shortcuts()
    assert not undo.isEnabled()
    history.set_list("annotations", [note(1)], "add note")
    assert undo.isEnabled() and "add note" in undo.text()
    undo.trigger()
    assert session.annotations == [] and redo.isEnabled()
