"""Two small widgets of the document actions: the findings box and the snapshot gallery."""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QSize, Qt, QTimer, Signal
from PySide6.QtGui import QIcon, QPixmap
from PySide6.QtWidgets import QLabel, QListWidget, QListWidgetItem, QPlainTextEdit, QVBoxLayout, QWidget


class FindingsBox(QWidget):
    """The analyst's findings and recommendation (plain text, saved in the session)."""

    def __init__(self, session: Any, parent: QWidget | None = None):
        super().__init__(parent)
        self.session = session
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        hint = QLabel("Findings and recommendation, in your words; they go in the report as written.")
        hint.setWordWrap(True)
        layout.addWidget(hint)
        self.edit = QPlainTextEdit()
        self.edit.setPlaceholderText("What is damaged, on which shaft, how far it has gone, what to do next...")
        layout.addWidget(self.edit, 1)
        self._setting = False
        self._timer = QTimer(self, singleShot=True, interval=400, timeout=self._commit)
        self.edit.textChanged.connect(lambda: None if self._setting else self._timer.start())
        session.subscribe(self._on_event, ("findings",))
        self._show(getattr(session, "findings", "") or "")

    def _commit(self) -> None:
        self.session.set_findings(self.edit.toPlainText())

    def commit_now(self) -> None:
        if self._timer.isActive():
            self._timer.stop()
            self._commit()

    def _show(self, text: str) -> None:
        if text != self.edit.toPlainText():
            self._setting = True
            self.edit.setPlainText(text)
            self._setting = False

    def _on_event(self, event) -> None:
        self._show(event.value or "")


class SnapshotGallery(QWidget):
    """The session's snapshots: thumbnail and caption; double click a caption to edit it.

    Signals
    -------
    caption_edited(str, str)
        Snapshot id and its new caption.
    """

    caption_edited = Signal(str, str)
    THUMB_PX = QSize(220, 124)

    def __init__(self, parent=None):
        super().__init__(parent)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        self.hint = QLabel("No snapshots yet: use View > Snapshot of this view.")
        self.hint.setWordWrap(True)
        layout.addWidget(self.hint)
        self.list = QListWidget()
        self.list.setViewMode(QListWidget.ViewMode.IconMode)
        self.list.setIconSize(self.THUMB_PX)
        self.list.setResizeMode(QListWidget.ResizeMode.Adjust)
        self.list.setMovement(QListWidget.Movement.Static)
        self.list.setWordWrap(True)
        self.list.setSpacing(6)
        layout.addWidget(self.list, 1)
        self._filling = False
        self.list.itemChanged.connect(self._on_item_changed)

    def set_entries(self, entries: list[dict[str, Any]]) -> None:
        ids = [str(e.get("id")) for e in entries]
        shown = [str(self.list.item(i).data(Qt.ItemDataRole.UserRole)) for i in range(self.list.count())]
        self._filling = True
        try:
            if ids == shown:   # same snapshots: only captions may have changed (no rebuild under an edit)
                for i, entry in enumerate(entries):
                    text = entry.get("caption") or "(no caption)"
                    if self.list.item(i).text() != text:
                        self.list.item(i).setText(text)
                return
            self.list.clear()
            for entry in entries:
                pixmap = QPixmap(str(entry.get("png", "")))
                icon = QIcon(pixmap.scaled(self.THUMB_PX, Qt.AspectRatioMode.KeepAspectRatio,
                                           Qt.TransformationMode.SmoothTransformation)) if not pixmap.isNull() else QIcon()
                item = QListWidgetItem(icon, entry.get("caption") or "(no caption)")
                item.setData(Qt.ItemDataRole.UserRole, entry.get("id"))
                item.setToolTip(f"{entry.get('view', '')}: {entry.get('recipe', '')}")
                item.setFlags(item.flags() | Qt.ItemFlag.ItemIsEditable)
                self.list.addItem(item)
            self.hint.setVisible(not entries)
        finally:
            self._filling = False

    def captions(self) -> list[str]:
        return [self.list.item(i).text() for i in range(self.list.count())]

    def _on_item_changed(self, item) -> None:
        if not self._filling:
            self.caption_edited.emit(str(item.data(Qt.ItemDataRole.UserRole)), item.text())


__all__ = ["FindingsBox", "SnapshotGallery"]
