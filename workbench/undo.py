"""Undo and redo of the analyst's edits: annotations, cursors and the gear-train model.

Every edit is a ``QUndoCommand`` on one ``QUndoStack`` held by :class:`UndoHistory`:

- :class:`ListEditCommand` replaces one of the session's lists of plain dicts
  (``"annotations"`` or ``"cursors"``) by a new list; undo puts the old list back.
  Consecutive moves of the same item merge into one step (``merge_key``).
- :class:`ModelEditCommand` holds the old and the new ``GearTrain``; undo gives the
  session the old model (the window re-runs the analysis as for any model edit).

The session is changed only through its setters when it has them
(``set_annotations``, ``set_cursors``, ``set_model``); a session without a setter
for a list gets the attribute and a ``SessionEvent`` of the same kind, so views
that subscribe learn the change either way.  While a command is being undone or
redone, :attr:`UndoHistory.applying` is True, so changes that come back from the
views as a consequence are not recorded a second time.
"""

from __future__ import annotations

from typing import Any, Callable

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QAction, QKeySequence, QUndoCommand, QUndoStack

LIST_KEYS = ("annotations", "cursors")
_MERGE_IDS: dict[str, int] = {}


def get_list(session: Any, key: str) -> list[dict[str, Any]]:
    """A copy of one of the session's lists of plain dicts (empty when it has none)."""
    return [dict(item) for item in (getattr(session, key, None) or [])]


def set_list(session: Any, key: str, items: list[dict[str, Any]]) -> None:
    """Give the session a new list, through its setter when it has one."""
    items = [dict(item) for item in items]
    setter = getattr(session, f"set_{key}", None)
    if callable(setter):
        setter(items)
        return
    setattr(session, key, items)
    emit = getattr(session, "_emit", None)
    if callable(emit):
        emit(key, items)


def _merge_id(key: str) -> int:
    """A stable positive integer per merge key (QUndoCommand ids are ints)."""
    return _MERGE_IDS.setdefault(key, len(_MERGE_IDS) + 1)


class ListEditCommand(QUndoCommand):
    """Replace ``session.<key>`` by ``after``; undo restores ``before``.

    Parameters
    ----------
    history : UndoHistory
    key : str
        ``"annotations"`` or ``"cursors"``.
    before, after : list of dict
        The whole list before and after the edit (copied).
    text : str
        What the Edit menu shows ("Undo move note").
    merge_key : str, optional
        Consecutive commands with the same merge key become one step.
    """

    def __init__(self, history: "UndoHistory", key: str, before: list[dict], after: list[dict], text: str,
                 *, merge_key: str | None = None):
        super().__init__(text)
        if key not in LIST_KEYS:
            raise ValueError(f"Invalid value for 'key': allowed {', '.join(map(repr, LIST_KEYS))}, got {key!r}")
        self.history = history
        self.key = key
        self.before = [dict(item) for item in before]
        self.after = [dict(item) for item in after]
        self.merge_key = merge_key

    def id(self) -> int:  # noqa: A003 - Qt override
        return _merge_id(f"{self.key}:{self.merge_key}") if self.merge_key else -1

    def mergeWith(self, other: QUndoCommand) -> bool:  # noqa: N802 - Qt override
        if not isinstance(other, ListEditCommand) or other.merge_key != self.merge_key or not self.merge_key:
            return False
        self.after = other.after
        return True

    def redo(self) -> None:
        self.history._apply(lambda: set_list(self.history.session, self.key, self.after))

    def undo(self) -> None:
        self.history._apply(lambda: set_list(self.history.session, self.key, self.before))


class ModelEditCommand(QUndoCommand):
    """Replace the session's gear-train model; undo gives the old one back.

    Parameters
    ----------
    history : UndoHistory
    old, new : dsp.model.GearTrain or None
        The model before and after the edit.
    text : str
        What the Edit menu shows.
    """

    def __init__(self, history: "UndoHistory", old: Any, new: Any, text: str = "model edit"):
        super().__init__(text)
        self.history = history
        self.old = old
        self.new = new
        self.skip_first_redo = False

    def redo(self) -> None:
        if self.skip_first_redo:   # the session already holds the new model
            self.skip_first_redo = False
            return
        self.history._apply(lambda: self.history._restore_model(self.new))

    def undo(self) -> None:
        self.history._apply(lambda: self.history._restore_model(self.old))


class UndoHistory(QObject):
    """The undo stack of one session.

    Parameters
    ----------
    session : workbench.session.Session
    on_model_restored : callable, optional
        Called with the model after an undo or redo put one back (the window
        passes a function that shows it in the model form).
    track_model : bool
        Record every model change the session announces (form edits, model
        form edits) as an undoable step.  Opening another recording or another
        model file clears the history.
    """

    changed = Signal(int)               # the stack index

    def __init__(self, session: Any, *, on_model_restored: Callable[[Any], None] | None = None,
                 track_model: bool = True, parent: QObject | None = None):
        super().__init__(parent)
        self.session = session
        self.stack = QUndoStack(self)
        self.on_model_restored = on_model_restored
        self.applying = False
        self._model = getattr(session, "model", None)
        self._model_path = getattr(session, "model_path", None)
        self.stack.indexChanged.connect(self.changed)
        self._unsubscribe = session.subscribe(self._on_event) if track_model else (lambda: None)

    # -- recording edits
    def set_list(self, key: str, items: list[dict[str, Any]], text: str, *, merge_key: str | None = None) -> None:
        """Change a session list as one undoable step (nothing happens when it is unchanged)."""
        if self.applying:
            return
        before = get_list(self.session, key)
        after = [dict(item) for item in items]
        if before == after:
            return
        self.stack.push(ListEditCommand(self, key, before, after, text, merge_key=merge_key))

    def set_model(self, model: Any, text: str = "model edit") -> None:
        """Give the session a new model as one undoable step."""
        if self.applying or model == self.session.model:
            return
        self.stack.push(ModelEditCommand(self, self.session.model, model, text))

    def undo(self) -> None:
        self.stack.undo()

    def redo(self) -> None:
        self.stack.redo()

    def clear(self) -> None:
        self.stack.clear()
        self._model = getattr(self.session, "model", None)

    def can_undo(self) -> bool:
        return self.stack.canUndo()

    def can_redo(self) -> bool:
        return self.stack.canRedo()

    # -- menu actions
    def actions(self, parent: QObject) -> tuple[QAction, QAction]:
        """Undo and Redo actions with the platform's standard shortcuts (Ctrl+Z, Ctrl+Shift+Z / Ctrl+Y)."""
        undo = self.stack.createUndoAction(parent, "&Undo")
        undo.setShortcuts(QKeySequence.keyBindings(QKeySequence.StandardKey.Undo))
        redo = self.stack.createRedoAction(parent, "&Redo")
        redo.setShortcuts(QKeySequence.keyBindings(QKeySequence.StandardKey.Redo))
        return undo, redo

    # -- internals
    def _apply(self, change: Callable[[], None]) -> None:
        self.applying = True
        try:
            change()
        finally:
            self.applying = False

    def _restore_model(self, model: Any) -> None:
        self._model = model
        self.session.set_model(model)
        if self.on_model_restored is not None:
            self.on_model_restored(model)

    def _on_event(self, event) -> None:
        if event.kind == "recording":
            self.clear()
            return
        if event.kind != "model":
            return
        new = event.value
        path = getattr(self.session, "model_path", None)
        if path != self._model_path:   # another model file was opened: a new start, not an edit
            self._model_path = path
            self.clear()
            return
        if self.applying or new == self._model:
            self._model = new
            return
        command = ModelEditCommand(self, self._model, new)
        command.skip_first_redo = True
        self._model = new
        self.stack.push(command)


__all__ = ["LIST_KEYS", "ListEditCommand", "ModelEditCommand", "UndoHistory", "get_list", "set_list"]
