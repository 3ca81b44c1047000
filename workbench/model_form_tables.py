"""Editable element tables of the model side form (sensors, shafts, meshes, ...).

Each :class:`ElementTable` is a :class:`QTableWidget` whose cells hold the text the
analyst typed, with Add / Remove / Move up / Move down buttons.  Shaft columns and
fixed-choice columns edit through a combo box (:class:`ChoiceDelegate`).

Every role that is read is set when an item is created, and only the cells whose
mark changed are re-marked, so an edit touches few items.
"""

from __future__ import annotations

from typing import Callable

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QBrush, QColor
from PySide6.QtWidgets import (
    QAbstractItemView, QComboBox, QHBoxLayout, QHeaderView, QPushButton, QStyledItemDelegate,
    QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget,
)

from .model_form_fields import SECTION_COLUMNS, SECTION_NOUNS, Column, format_value

ERROR_BRUSH = QBrush(QColor(255, 205, 205))
WARNING_BRUSH = QBrush(QColor(255, 238, 185))
OLD_TEXT_ROLE = Qt.ItemDataRole.UserRole + 1
MARK_ROLE = Qt.ItemDataRole.UserRole + 2     # 0 plain, 1 warning, 2 error


class ChoiceDelegate(QStyledItemDelegate):
    """Edit a cell with a combo box listing ``choices()``; a value not in the list stays shown."""

    def __init__(self, choices: Callable[[], list[str]], parent=None):
        super().__init__(parent)
        self._choices = choices

    def createEditor(self, parent, option, index):  # noqa: N802 - Qt override
        box = QComboBox(parent)
        box.activated.connect(lambda _i, b=box: (self.commitData.emit(b), self.closeEditor.emit(b)))
        return box

    def setEditorData(self, editor, index):  # noqa: N802 - Qt override
        text = index.data(Qt.ItemDataRole.EditRole) or ""
        items = list(self._choices())
        if text not in items:
            items.insert(0, text)
        editor.blockSignals(True)
        editor.clear()
        editor.addItems(items)
        editor.setCurrentIndex(items.index(text))
        editor.blockSignals(False)

    def setModelData(self, editor, model, index):  # noqa: N802 - Qt override
        model.setData(index, editor.currentText(), Qt.ItemDataRole.EditRole)


class ElementTable(QWidget):
    """One model section as an editable table.

    Signals
    -------
    edited()
        Any cell text changed, or rows were added, removed or moved.
    cell_renamed(row, column, old_text, new_text)
        A cell's text changed (used by the shafts table to rename references).
    """

    edited = Signal()
    cell_renamed = Signal(int, int, str, str)

    def __init__(self, section: str, shaft_names: Callable[[], list[str]], parent=None):
        super().__init__(parent)
        self.section = section
        self.columns: tuple[Column, ...] = SECTION_COLUMNS[section]
        self.table = QTableWidget(0, len(self.columns), self)
        self.table.setObjectName(f"{section}_table")
        self.table.setHorizontalHeaderLabels([c.header for c in self.columns])
        for j, col in enumerate(self.columns):
            self.table.horizontalHeaderItem(j).setToolTip(col.tip)
            if col.kind == "shaft":
                self.table.setItemDelegateForColumn(j, ChoiceDelegate(shaft_names, self.table))
            elif col.kind == "choice":
                self.table.setItemDelegateForColumn(
                    j, ChoiceDelegate(lambda c=col: list(c.choices), self.table))
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.table.horizontalHeader().setStretchLastSection(True)
        self.table.verticalHeader().setDefaultSectionSize(24)
        self.table.itemChanged.connect(self._on_item_changed)

        noun = SECTION_NOUNS[section]
        self.add_button = QPushButton("Add")
        self.add_button.setToolTip(f"Add a {noun} at the end of the table.")
        self.remove_button = QPushButton("Remove")
        self.up_button = QPushButton("Move up")
        self.down_button = QPushButton("Move down")
        self.remove_button.setToolTip("Remove the selected row.")
        self.up_button.setToolTip("Move the selected row up one place.")
        self.down_button.setToolTip("Move the selected row down one place.")
        self.add_button.clicked.connect(self.add_row)
        self.remove_button.clicked.connect(self.remove_current_row)
        self.up_button.clicked.connect(lambda: self.move_current_row(-1))
        self.down_button.clicked.connect(lambda: self.move_current_row(+1))
        buttons = QHBoxLayout()
        for b in (self.add_button, self.remove_button, self.up_button, self.down_button):
            buttons.addWidget(b)
        buttons.addStretch(1)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.table)
        layout.addLayout(buttons)
        self._fit_height()

    # ---- content -------------------------------------------------------------------
    def rows(self) -> list[list[str]]:
        """The typed text of every cell, row by row."""
        t = self.table
        return [[(t.item(i, j).text() if t.item(i, j) else "") for j in range(t.columnCount())]
                for i in range(t.rowCount())]

    def set_rows(self, rows: list[list[str]]) -> None:
        """Replace the content without emitting :attr:`edited`."""
        self.table.blockSignals(True)
        self.table.setRowCount(0)
        for row in rows:
            self._append(row)
        self.table.blockSignals(False)
        self._fit_height()

    def _append(self, texts: list[str]) -> int:
        i = self.table.rowCount()
        self.table.insertRow(i)
        for j, text in enumerate(texts):
            item = QTableWidgetItem(text)
            item.setData(OLD_TEXT_ROLE, text)
            item.setData(MARK_ROLE, 0)
            item.setToolTip(self.columns[j].tip)
            self.table.setItem(i, j, item)
        return i

    def default_row(self) -> list[str]:
        """Text of a new row: a numbered name, the first choice, defaults where known."""
        n = self.table.rowCount() + 1
        taken = {r[0] for r in self.rows()}
        name = f"{SECTION_NOUNS[self.section]} {n}"
        while name in taken:
            n += 1
            name = f"{SECTION_NOUNS[self.section]} {n}"
        out = []
        for col in self.columns:
            if col.key == "name":
                out.append(name)
            elif col.kind == "choice":
                out.append(col.choices[0])
            else:
                out.append(format_value(col.default))
        return out

    def add_row(self, texts: list[str] | None = None) -> int:
        """Append a row (defaults when ``texts`` is None), select it and return its index."""
        self.table.blockSignals(True)
        i = self._append(list(texts) if texts else self.default_row())
        self.table.blockSignals(False)
        self.table.setCurrentCell(i, 0)
        self._fit_height()
        self.edited.emit()
        return i

    def remove_current_row(self) -> None:
        i = self.table.currentRow()
        if i < 0:
            return
        self.table.removeRow(i)
        if self.table.rowCount():
            self.table.setCurrentCell(min(i, self.table.rowCount() - 1), 0)
        self._fit_height()
        self.edited.emit()

    def move_current_row(self, step: int) -> None:
        i, col = self.table.currentRow(), max(self.table.currentColumn(), 0)
        k = i + step
        if i < 0 or not 0 <= k < self.table.rowCount():
            return
        self.table.blockSignals(True)
        for j in range(self.table.columnCount()):
            a, b = self.table.takeItem(i, j), self.table.takeItem(k, j)
            self.table.setItem(i, j, b)
            self.table.setItem(k, j, a)
        self.table.blockSignals(False)
        self.table.setCurrentCell(k, col)
        self.edited.emit()

    def replace_shaft(self, old: str, new: str) -> int:
        """Set every shaft cell reading ``old`` to ``new``; return how many changed."""
        n = 0
        self.table.blockSignals(True)
        for j, col in enumerate(self.columns):
            if col.kind != "shaft":
                continue
            for i in range(self.table.rowCount()):
                item = self.table.item(i, j)
                if item is not None and item.text() == old:
                    item.setText(new)
                    item.setData(OLD_TEXT_ROLE, new)
                    n += 1
        self.table.blockSignals(False)
        return n

    def _on_item_changed(self, item: QTableWidgetItem) -> None:
        old = item.data(OLD_TEXT_ROLE)
        new = item.text()
        if old == new:  # a mark (colour, tooltip) changed, not the text
            return
        item.setData(OLD_TEXT_ROLE, new)
        self.cell_renamed.emit(item.row(), item.column(), old or "", new)
        self.edited.emit()

    # ---- marks ---------------------------------------------------------------------
    def set_marks(self, marks: dict[tuple[int, int | None], list[tuple[str, str]]]) -> None:
        """Colour cells with problems and put the messages in their tooltips.

        ``marks`` maps ``(row, column)`` (``column`` None for the whole row) to
        ``[(severity, message), ...]``.  Other cells get their plain look back.
        """
        t = self.table
        t.blockSignals(True)
        for i in range(t.rowCount()):
            row_marks = marks.get((i, None), [])
            for j in range(t.columnCount()):
                item = t.item(i, j)
                if item is None:
                    continue
                found = row_marks + marks.get((i, j), [])
                level = 0 if not found else 2 if any(sev == "error" for sev, _ in found) else 1
                tip = "\n".join(msg for _, msg in found) if found else self.columns[j].tip
                if level == item.data(MARK_ROLE) and tip == item.toolTip():
                    continue   # unchanged: touch nothing (see the module note on PySide6 6.12)
                item.setBackground((QBrush(), WARNING_BRUSH, ERROR_BRUSH)[level])
                item.setData(MARK_ROLE, level)
                item.setToolTip(tip)
        t.blockSignals(False)

    def is_marked(self, row: int, column: int) -> bool:
        item = self.table.item(row, column)
        return item is not None and bool(item.data(MARK_ROLE))

    def column_index(self, key: str) -> int:
        return next(j for j, c in enumerate(self.columns) if c.key == key)

    def _fit_height(self) -> None:
        t = self.table
        rows = min(max(t.rowCount(), 2), 8)
        h = t.horizontalHeader().sizeHint().height() + rows * t.verticalHeader().defaultSectionSize()
        h += 2 * t.frameWidth() + t.horizontalScrollBar().sizeHint().height()
        t.setFixedHeight(h)
