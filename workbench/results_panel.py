"""Results panel: overall indicators, TSA indicators per shaft, sideband ownership, suspects.

The suspects list is titled as an aid to the analyst's judgement.  Clicking a suspect
emits ``suspect_chosen(view_name, shaft_name)`` so the window can show the view that
best supports it with its shaft selected.
"""

from __future__ import annotations

import math
from typing import Any

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QColor
from PySide6.QtWidgets import (QAbstractItemView, QGroupBox, QHeaderView, QLabel, QListWidget,
                               QListWidgetItem, QTableWidget, QTableWidgetItem, QVBoxLayout, QWidget)

from dsp.indicators import TSA_KEYS
from workbench import theme

OVERALL_KEYS = (
    ("rms", "RMS"), ("peak", "peak"), ("crest_factor", "crest factor"), ("kurtosis", "kurtosis"),
    ("velocity_rms_mm_s", "velocity RMS (mm/s)"), ("clipped", "clipped"),
)
SIDEBAND_COLUMNS = (
    ("mesh", "mesh"), ("harmonic", "GMF×"), ("carrier_hz", "carrier Hz"), ("owner_shaft", "owner shaft"),
    ("owner_score", "owner score"), ("spacing_hz", "spacing Hz"), ("n_found", "sidebands"),
    ("sideband_index", "SI"), ("sideband_level_factor", "SLF"),
)


def _sideband_value(family: Any, key: str) -> Any:
    if key == "owner_score":   # the ownership score of the winning shaft, 0..1
        candidates = getattr(family, "candidates", None) or {}
        return candidates.get(getattr(family, "owner_shaft", None))
    return getattr(family, key, None)
SUSPECTS_TITLE = "Suspects - an aid to your judgement, not a verdict"


def fmt(value: Any) -> str:
    """A number for a table cell: 4 significant digits, n/a for NaN (shared with the baseline panel)."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        if isinstance(value, float) and not math.isfinite(value):
            return "n/a"
        if isinstance(value, int):
            return str(value)
        magnitude = abs(value)
        if magnitude != 0 and (magnitude < 1e-3 or magnitude >= 1e5):
            return f"{value:.3e}"
        return f"{value:.4g}"
    return "" if value is None else str(value)


def make_table(columns: list[str]) -> QTableWidget:
    """A read-only table with one row selected at a time; columns fit their contents and scroll."""
    table = QTableWidget(0, len(columns))
    table.setHorizontalHeaderLabels(columns)
    table.verticalHeader().setVisible(False)
    table.verticalHeader().setDefaultSectionSize(20)
    table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
    table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
    table.horizontalHeader().setStretchLastSection(True)
    return table


def fill_table(table: QTableWidget, rows: list[list[str]], colours: list[str | None] | None = None,
               colour_column: int = 0) -> None:
    """Put ``rows`` of text in ``table``: numbers right-aligned, ``colour_column`` in ``colours``."""
    table.setRowCount(len(rows))
    for r, row in enumerate(rows):
        for c, text in enumerate(row):
            item = QTableWidgetItem(text)
            if c > 0 and (text[:1] in "+-.0123456789" or text == "n/a"):
                item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
            if colours and c == colour_column and colours[r]:
                item.setForeground(QColor(colours[r]))
            table.setItem(r, c, item)


_table, _fill = make_table, fill_table


class ResultsPanel(QWidget):
    suspect_chosen = Signal(str, str)   # view name, shaft name ("" when none)
    sideband_chosen = Signal(float, float, str)   # carrier Hz, spacing Hz, owner shaft ("" when none)

    def __init__(self, parent: QWidget | None = None):
        super().__init__(parent)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        self.overall = _table(["indicator", "value"])
        self.tsa = _table(["shaft", "revs"] + list(TSA_KEYS))
        self.sidebands = _table([text for _, text in SIDEBAND_COLUMNS])
        self.sidebands.setToolTip("Choose a row to put the sideband cursor on that family in the spectrum")
        self.sidebands.cellClicked.connect(self._on_sideband)
        self._families: list[Any] = []
        self.suspects = QListWidget()
        self.suspects.setWordWrap(True)
        self.suspects.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.suspects.itemClicked.connect(self._on_suspect)
        self.suspects.itemActivated.connect(self._on_suspect)
        self.empty_suspects = QLabel("")
        self.empty_suspects.setWordWrap(True)
        # the long title wraps in a label of its own: a group box title would set the dock's minimum width
        title, _, note = SUSPECTS_TITLE.partition(" - ")
        self.suspects_note = QLabel(note.capitalize() + ".")
        self.suspects_note.setWordWrap(True)
        self.suspects_note.setStyleSheet(f"color: {theme.CURVE_SECONDARY};")
        for title, widget, stretch in (
            (title, (self.suspects_note, self.empty_suspects, self.suspects), 3),
            ("Overall (sensor units)", (self.overall,), 2),
            ("TSA indicators per shaft", (self.tsa,), 2),
            ("Sidebands: which shaft owns each family", (self.sidebands,), 2),
        ):
            box = QGroupBox(title)
            inner = QVBoxLayout(box)
            inner.setContentsMargins(4, 4, 4, 4)
            for w in widget:
                inner.addWidget(w)
            layout.addWidget(box, stretch)
        self.model: Any = None

    def show_analysis(self, analysis: Any) -> None:
        self.model = analysis.model
        overall = dict(analysis.overall or {})
        _fill(self.overall, [[text, fmt(overall[key])] for key, text in OVERALL_KEYS if key in overall])
        rows, colours = [], []
        for item in analysis.tsa:
            rows.append([item.shaft, str(item.n_revs)] + [fmt(item.indicators.get(k)) for k in TSA_KEYS])
            colours.append(theme.shaft_colour(self.model, item.shaft))
        _fill(self.tsa, rows, colours)
        self._families = list(analysis.sidebands)
        rows = [[fmt(_sideband_value(family, key)) for key, _ in SIDEBAND_COLUMNS] for family in analysis.sidebands]
        _fill(self.sidebands, rows, [theme.shaft_colour(self.model, getattr(f, "owner_shaft", None))
                                     for f in analysis.sidebands], colour_column=3)
        for r, family in enumerate(analysis.sidebands):
            evidence = getattr(family, "evidence", ()) or ()
            for c in range(self.sidebands.columnCount()):
                self.sidebands.item(r, c).setToolTip("\n".join(evidence))
        self.suspects.clear()
        for rank, suspect in enumerate(analysis.suspects, 1):
            evidence = "\n".join(f"  • {line}" for line in getattr(suspect, "evidence", ()) or ())
            text = f"{rank}. {suspect.component}: {suspect.kind} (score {suspect.score:.2f})"
            item = QListWidgetItem(text + ("\n" + evidence if evidence else ""))
            item.setData(Qt.ItemDataRole.UserRole, (getattr(suspect, "view", "") or "", self.shaft_of(suspect.component)))
            item.setToolTip(f"Show the {getattr(suspect, 'view', '') or 'best'} view for {suspect.component}")
            self.suspects.addItem(item)
        self.empty_suspects.setText(
            "" if analysis.suspects else
            f"Nothing passes the alarm threshold ({analysis.settings.alarm_threshold:g}). "
            "Look at the views before concluding the gearbox is healthy.")
        self.empty_suspects.setVisible(not analysis.suspects)

    def shaft_of(self, component: str) -> str:
        """The shaft a suspect component sits on (``shaft:NAME`` or ``bearing:NAME``)."""
        kind, _, name = str(component).partition(":")
        if kind == "shaft":
            return name
        if kind == "bearing" and self.model is not None:
            for bearing in self.model.bearings:
                if bearing.name == name:
                    return bearing.shaft
        return ""

    def _on_sideband(self, row: int, _column: int = 0) -> None:
        if 0 <= row < len(self._families):
            family = self._families[row]
            self.sideband_chosen.emit(float(family.carrier_hz), float(family.spacing_hz), family.owner_shaft or "")

    def _on_suspect(self, item: QListWidgetItem) -> None:
        view, shaft = item.data(Qt.ItemDataRole.UserRole)
        self.suspect_chosen.emit(view, shaft)
