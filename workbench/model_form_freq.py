"""Read-only table of the model's characteristic frequencies.

Shows the rows of :func:`dsp.kinematics.frequency_table` (label, Hz, CPM, order,
owner, kind).  Ctrl+C (or the Copy button of :class:`FrequencyTablePanel`) copies
the selected rows, or every row when none is selected, as tab-separated text with
a header line, ready to paste into a spreadsheet.
"""

from __future__ import annotations

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QSortFilterProxyModel, Qt
from PySide6.QtGui import QGuiApplication, QKeySequence
from PySide6.QtWidgets import (
    QAbstractItemView, QHBoxLayout, QHeaderView, QLabel, QPushButton, QTableView, QVBoxLayout, QWidget,
)


HEADERS = ("Label", "Hz", "CPM", "Order", "Owner", "Kind")
_NUMERIC = (1, 2, 3)
_SHOWN = {1: "{:.3f}", 2: "{:.1f}", 3: "{:.4f}"}   # display precision per numeric column
_COPIED = "{:.10g}"                                # copy precision


class _FrequencyModel(QAbstractTableModel):
    """Rows ``(label, hz, cpm, order, owner, kind, owner_kind)`` of a frequency table."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.rows: list[tuple] = []

    def set_rows(self, rows: list[tuple]) -> None:
        self.beginResetModel()
        self.rows = rows
        self.endResetModel()

    def rowCount(self, parent=QModelIndex()):  # noqa: N802 - Qt override
        return 0 if parent.isValid() else len(self.rows)

    def columnCount(self, parent=QModelIndex()):  # noqa: N802 - Qt override
        return 0 if parent.isValid() else len(HEADERS)

    def headerData(self, section, orientation, role=Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if role == Qt.ItemDataRole.DisplayRole and orientation == Qt.Orientation.Horizontal:
            return HEADERS[section]
        return None

    def data(self, index, role=Qt.ItemDataRole.DisplayRole):
        if not index.isValid():
            return None
        row, col = self.rows[index.row()], index.column()
        value = row[col]
        if role == Qt.ItemDataRole.DisplayRole:
            return _SHOWN[col].format(value) if col in _NUMERIC else value
        if role == Qt.ItemDataRole.UserRole:       # raw value, used for sorting
            return value
        if role == Qt.ItemDataRole.TextAlignmentRole and col in _NUMERIC:
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.ToolTipRole and col == 4:
            return f"{row[6]} {row[4]}"
        return None


class FrequencyTableView(QTableView):
    """Read-only view of a :class:`dsp.kinematics.FrequencyTable`; sortable; Ctrl+C copies."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self._model = _FrequencyModel(self)
        self._proxy = QSortFilterProxyModel(self)
        self._proxy.setSourceModel(self._model)
        self._proxy.setSortRole(Qt.ItemDataRole.UserRole)
        self.setModel(self._proxy)
        self.setSortingEnabled(True)
        self.sortByColumn(-1, Qt.SortOrder.AscendingOrder)   # table order until a header is clicked
        self.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.setSelectionMode(QAbstractItemView.SelectionMode.ExtendedSelection)
        self.setAlternatingRowColors(True)
        self.verticalHeader().setVisible(False)
        self.verticalHeader().setDefaultSectionSize(22)
        self.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.horizontalHeader().setStretchLastSection(True)
        self.table = None

    def set_table(self, table) -> None:
        """Show the rows of ``table`` (a ``FrequencyTable``), or nothing when ``None``."""
        self.table = table
        rows = []
        for r in (table.rows if table is not None else ()):
            rows.append((r.label, float(r.hz), float(r.hz) * 60.0, float(r.order), r.owner, r.kind,
                         r.owner_kind))
        self._model.set_rows(rows)

    def row_count(self) -> int:
        return self._model.rowCount()

    def copy_text(self, *, selected_only: bool = True) -> str:
        """Tab-separated text (header line first) of the selected rows, or all rows if none."""
        proxy_rows = sorted({i.row() for i in self.selectionModel().selectedIndexes()}) if selected_only else []
        if not proxy_rows:
            proxy_rows = range(self._proxy.rowCount())
        lines = ["\t".join(HEADERS)]
        for pr in proxy_rows:
            row = self._model.rows[self._proxy.mapToSource(self._proxy.index(pr, 0)).row()]
            cells = [_COPIED.format(v) if j in _NUMERIC else str(v) for j, v in enumerate(row[:6])]
            lines.append("\t".join(cells))
        return "\n".join(lines) + "\n"

    def copy(self) -> str:
        """Put :meth:`copy_text` on the clipboard and return it."""
        text = self.copy_text()
        QGuiApplication.clipboard().setText(text)
        return text

    def keyPressEvent(self, event):  # noqa: N802 - Qt override
        if event.matches(QKeySequence.StandardKey.Copy):
            self.copy()
            event.accept()
            return
        super().keyPressEvent(event)


class FrequencyTablePanel(QWidget):
    """A :class:`FrequencyTableView` with a title and a Copy button."""

    def __init__(self, parent=None):
        super().__init__(parent)
        self.view = FrequencyTableView(self)
        self.copy_button = QPushButton("Copy")
        self.copy_button.setToolTip("Copy the selected rows (or all rows) as tab-separated text.")
        self.copy_button.clicked.connect(self.view.copy)
        self.title = QLabel("<b>Characteristic frequencies</b>")
        top = QHBoxLayout()
        top.addWidget(self.title)
        top.addStretch(1)
        top.addWidget(self.copy_button)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.addLayout(top)
        layout.addWidget(self.view)

    def set_table(self, table) -> None:
        self.view.set_table(table)
