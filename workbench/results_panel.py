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

from dsp.indicators import TSA_INDICATORS, TSA_KEYS
from workbench import theme

OVERALL_KEYS = (
    ("rms", "RMS"), ("peak", "peak"), ("crest_factor", "crest factor"), ("kurtosis", "kurtosis"),
    ("velocity_rms_mm_s", "velocity RMS (mm/s)"), ("clipped", "clipped"),
)
# compact headers so the key columns fit a narrow dock; the long form is each header's tooltip,
# and the carrier frequency and the owner's score are in each row's tooltip
SIDEBAND_COLUMNS = (
    ("carrier", "carrier"), ("owner_shaft", "owner"), ("sideband_index", "SI"), ("sideband_level_factor", "SLF"),
)
#: Significant digits of SI and SLF in the table (the tooltip has them to 4 digits).
N_RATIO_DIGITS = 3
SIDEBAND_TIPS = {
    "carrier": "the mesh harmonic carrying the family: stage 1 ×2 = twice the gear mesh frequency of stage 1",
    "owner_shaft": "the shaft whose rotation rate spaces the sidebands (the shaft that modulates the mesh)",
    "sideband_index": "sideband index SI: mean of the two first-order sidebands over the carrier",
    "sideband_level_factor": "sideband level factor SLF: sum of the two first-order sidebands over the RMS",
}
OWNER_COLUMN = [key for key, _ in SIDEBAND_COLUMNS].index("owner_shaft")
# the TSA table: the local-damage and wear indicators first, so they stay in view in a narrow dock
TSA_ORDER = ("fm4", "na4", "er", "fm0", "m6a", "m8a", "kurtosis", "rms")
TSA_COLUMNS = tuple(k for k in TSA_ORDER if k in TSA_KEYS) + tuple(k for k in TSA_KEYS if k not in TSA_ORDER)


def _sideband_value(family: Any, key: str) -> Any:
    if key == "carrier":       # "stage 1 ×2": the mesh and the harmonic in one short cell
        return f"{getattr(family, 'mesh', '')} ×{getattr(family, 'harmonic', '')}"
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


def _short_ratio(value: Any) -> str:
    """SI or SLF in :data:`N_RATIO_DIGITS` significant digits (a narrow column)."""
    if isinstance(value, float) and math.isfinite(value) and value != 0 and 1e-3 <= abs(value) < 1e5:
        return f"{value:.{N_RATIO_DIGITS}g}"
    return fmt(value)


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
    component_chosen = Signal(str, str)   # the chosen suspect's component ("bearing:NAME", ...) and kind
    sideband_chosen = Signal(float, float, str)   # carrier Hz, spacing Hz, owner shaft ("" when none)

    def __init__(self, parent: QWidget | None = None):
        super().__init__(parent)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(4, 4, 4, 4)
        self.overall = _table(["indicator", "value"])
        info = {i.key: i for i in TSA_INDICATORS}
        self.tsa = _table(["shaft"] + [info[k].label if k in info else k for k in TSA_COLUMNS] + ["revs"])
        for c, key in enumerate(TSA_COLUMNS, 1):
            if key in info:
                healthy = f" (healthy: about {info[key].healthy:g})" if info[key].healthy is not None else ""
                self.tsa.horizontalHeaderItem(c).setToolTip(info[key].meaning + healthy)
        self.tsa.horizontalHeaderItem(len(TSA_COLUMNS) + 1).setToolTip("revolutions averaged")
        self.sidebands = _table([text for _, text in SIDEBAND_COLUMNS])
        for table in (self.tsa, self.sidebands):
            # columns as wide as their contents: a stretched last column keeps the width of a wider
            # dock after it narrows, and pushes the key columns out of view
            table.horizontalHeader().setStretchLastSection(False)
        for c, (key, _) in enumerate(SIDEBAND_COLUMNS):
            self.sidebands.horizontalHeaderItem(c).setToolTip(SIDEBAND_TIPS[key])

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
            rows.append([item.shaft] + [fmt(item.indicators.get(k)) for k in TSA_COLUMNS] + [str(item.n_revs)])
            colours.append(theme.shaft_colour(self.model, item.shaft))
        _fill(self.tsa, rows, colours)
        self._families = list(analysis.sidebands)
        rows = [[_short_ratio(_sideband_value(family, key)) if key in ("sideband_index", "sideband_level_factor")
                 else fmt(_sideband_value(family, key)) for key, _ in SIDEBAND_COLUMNS] for family in analysis.sidebands]
        _fill(self.sidebands, rows, [theme.shaft_colour(self.model, getattr(f, "owner_shaft", None))
                                     for f in analysis.sidebands], colour_column=OWNER_COLUMN)
        for r, family in enumerate(analysis.sidebands):
            evidence = getattr(family, "evidence", ()) or ()
            facts = (f"{_sideband_value(family, 'carrier')} GMF at {fmt(getattr(family, 'carrier_hz', None))} Hz, "
                     f"{fmt(getattr(family, 'n_found', None))} sidebands {fmt(getattr(family, 'spacing_hz', None))} Hz "
                     f"apart; owner {family.owner_shaft or 'none'} (score {fmt(_sideband_value(family, 'owner_score'))});"
                     f" SI {fmt(getattr(family, 'sideband_index', None))},"
                     f" SLF {fmt(getattr(family, 'sideband_level_factor', None))}")
            for c in range(self.sidebands.columnCount()):
                self.sidebands.item(r, c).setToolTip("\n".join((facts, *evidence)))
        self.suspects.clear()
        for rank, suspect in enumerate(analysis.suspects, 1):
            evidence = "\n".join(f"  • {line}" for line in getattr(suspect, "evidence", ()) or ())
            text = f"{rank}. {suspect.component}: {suspect.kind} (score {suspect.score:.2f})"
            item = QListWidgetItem(text + ("\n" + evidence if evidence else ""))
            item.setData(Qt.ItemDataRole.UserRole, (getattr(suspect, "view", "") or "", self.shaft_of(suspect.component),
                                                    str(suspect.component), str(suspect.kind)))
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
        view, shaft, component, kind = item.data(Qt.ItemDataRole.UserRole)
        self.component_chosen.emit(component, kind)   # before the view is shown, so it draws with it
        self.suspect_chosen.emit(view, shaft)
