"""Harmonic and sideband cursors, the peak readout and the cursor readout panel.

The analyst's central gesture: drag a sideband cursor over a family of lines
around a mesh harmonic until its markers sit on the lines, then read which
shaft's rate equals the spacing.  Everything here reads arrays the analysis
already computed (through :mod:`dsp.explain`); a drag moves lines and labels and
updates the readout, and NEVER recomputes an analysis.

- :class:`HarmonicCursor`: a draggable fundamental; its harmonics follow.
- :class:`SidebandCursor`: a draggable centre and a draggable first upper
  sideband (which sets the spacing); markers at ``centre +- k * spacing``.
- :class:`CursorSet`: the cursors of one plot, the active one, keyboard nudges
  (arrow keys: one line; Shift: ten lines; Esc drops the active cursor), the
  peak readout on click, and a ``changed`` signal carrying
  :meth:`CursorSet.to_list` for the session.
- :class:`CursorReadout`: a small panel (summary line and table) for the
  active cursor and the last peak clicked; :class:`CursorTools`: the tool row.

The cursor items live in :mod:`workbench.cursor_items` and the set in
:mod:`workbench.cursor_set`; every name stays importable from here.

Positions are in the plot's display units (Hz, CPM or orders); ``axis`` in
:class:`CursorData` says which.  Stock pyqtgraph items with their two-phase
signals are used: ``sigPositionChanged`` while moving (lines, labels, readout),
``sigPositionChangeFinished`` at the end (the session is told).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from PySide6.QtCore import Qt
from PySide6.QtWidgets import (QAbstractItemView, QHeaderView, QLabel, QTableWidget, QTableWidgetItem,
                               QVBoxLayout, QWidget)

from workbench.cursor_items import (AXES, CURSOR_PEN, KINDS, MARKER_PEN, MIN_LINES_PER_SPACING,  # noqa: F401
                                    UNIT_TEXT, CursorData, HarmonicCursor, Readout, ReadoutRow, SidebandCursor,
                                    _Cursor, _fmt, cursor_from_dict, sidebands_merge)
from workbench.cursor_set import CursorSet, PeakInfo  # noqa: F401

class CursorReadout(QWidget):
    """Summary line and table for the active cursor of a :class:`CursorSet`, and the last peak read."""

    COLUMNS = ("marker", "position", "amplitude at line", "nearest peak", "peak amplitude")

    def __init__(self, cursor_set: CursorSet, parent: QWidget | None = None):
        super().__init__(parent)
        self.cursor_set = cursor_set
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.setSpacing(2)
        self.peak_label = QLabel("click a peak to read it")
        self.peak_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.summary = QLabel("")
        self.summary.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        for label in (self.peak_label, self.summary):
            label.setWordWrap(True)   # long explanations wrap instead of widening the window
        self.table = QTableWidget(0, len(self.COLUMNS))
        self.table.setHorizontalHeaderLabels(list(self.COLUMNS))
        self.table.verticalHeader().setVisible(False)
        self.table.verticalHeader().setDefaultSectionSize(18)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.table.setMaximumHeight(170)
        for w in (self.peak_label, self.summary, self.table):
            layout.addWidget(w)
        cursor_set.updated.connect(self.refresh)
        self.refresh()

    def refresh(self) -> None:
        peak = self.cursor_set.last_peak
        d = self.cursor_set.data
        unit = UNIT_TEXT[d.axis] if d is not None else ""
        if peak is not None:
            order = "" if not math.isfinite(peak.order) else f", order {peak.order:.3f}"
            self.peak_label.setText(f"peak {_fmt(peak.position)} {unit}, amplitude {_fmt(peak.amplitude)} "
                                    f"{d.units if d else ''}{order}: {peak.text}")
        cursor = self.cursor_set.active
        if cursor is None or cursor.data is None:
            self.summary.setText("no cursor: add a harmonic or sideband cursor" if cursor is None else "")
            self.table.setRowCount(0)
            self.table.setVisible(False)
            return
        self.table.setVisible(True)
        readout = cursor.readout()
        self.summary.setText(f"{readout.title}: {readout.summary}")
        if self.table.rowCount() != len(readout.rows):
            self.table.setRowCount(len(readout.rows))
            for r in range(len(readout.rows)):
                for c in range(len(self.COLUMNS)):
                    item = QTableWidgetItem("")
                    if c:
                        item.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
                    self.table.setItem(r, c, item)
        for r, row in enumerate(readout.rows):
            texts = (row.label, _fmt(row.position), _fmt(row.amplitude), _fmt(row.peak_position),
                     _fmt(row.peak_amplitude))
            for c, text in enumerate(texts):
                item = self.table.item(r, c)
                if item.text() != text:
                    item.setText(text)

    def rows_text(self) -> list[list[str]]:
        """The table as text (for tests and copying)."""
        return [[self.table.item(r, c).text() for c in range(self.table.columnCount())]
                for r in range(self.table.rowCount())]


class CursorTools(QWidget):
    """A toolbar row for one plot: add cursors, snap, clear, and the model-line switches and shaft legend.

    It also keeps the session's ``cursors`` list (plain dicts, one ``view`` key each)
    in step with the :class:`CursorSet`: the set's ``changed`` signal writes this
    view's entries (through ``history.set_list`` when an undo history is given, else
    through the session's ``set_cursors``), and a ``"cursors"`` event of the session
    (undo, a session file opened) redraws the cursors saved for this view.  Without an
    explicit ``history`` the window's (``window().document.history``) is used when
    the row sits in a window that has one.

    Parameters
    ----------
    cursor_set : CursorSet
    overlay : workbench.overlays.ModelOverlay, optional
        Its switches and legend are shown at the end of the row.
    session : workbench.session.Session, optional
    history : workbench.undo.UndoHistory, optional
    """

    def __init__(self, cursor_set: CursorSet, overlay=None, session=None, history=None,
                 parent: QWidget | None = None):
        from PySide6.QtWidgets import QPushButton, QSizePolicy

        from workbench.flow_layout import FlowLayout

        super().__init__(parent)
        self.cursor_set = cursor_set
        self.overlay = overlay
        self.session = session
        self.history = history
        # the row never widens the window: on a narrow window it wraps onto a second line
        policy = QSizePolicy(QSizePolicy.Policy.Preferred, QSizePolicy.Policy.Preferred)  # Fixed would cap at one line
        policy.setHeightForWidth(True)
        self.setSizePolicy(policy)
        layout = FlowLayout(self, h_spacing=6, v_spacing=4)
        self.buttons: dict[str, QPushButton] = {}
        for key, text, tip, slot in (
            ("harmonic", "Harmonic cursor", "A fundamental to drag; its harmonics follow "
             "(arrow keys: one line, Shift: ten, Esc: drop)", lambda: cursor_set.add_harmonic()),
            ("sideband", "Sideband cursor", "Drag the carrier line onto a mesh harmonic and the +1 line onto its "
             "first upper sideband; the readout names the shaft whose rate equals the spacing",
             lambda: cursor_set.add_sideband()),
            ("snap_spacing", "Snap spacing", "Set the sideband spacing to the nearest shaft rate",
             self._snap_spacing),
            ("snap_centre", "Carrier to peak", "Move the sideband carrier onto the nearest peak", self._snap_centre),
            ("clear", "Clear", "Remove the cursors of this plot", lambda: cursor_set.clear()),
        ):
            button = QPushButton(text)
            button.setToolTip(tip)
            button.clicked.connect(lambda _=False, s=slot: s())
            layout.addWidget(button)
            self.buttons[key] = button
        if overlay is not None:
            self.legend = overlay.legend_widget()
            layout.addWidget(self.legend)
        cursor_set.updated.connect(self._sync_buttons)
        self._sync_buttons()
        self._writing = False
        self._unsubscribe = None
        if session is not None:
            cursor_set.changed.connect(self._write_session)
            self._unsubscribe = session.subscribe(self._on_session_event)
            self.destroyed.connect(lambda *_: self._unsubscribe and self._unsubscribe())

    def _sideband(self) -> SidebandCursor | None:
        active = self.cursor_set.active
        if isinstance(active, SidebandCursor):
            return active
        return next((c for c in self.cursor_set.cursors if isinstance(c, SidebandCursor)), None)

    def _snap_spacing(self) -> None:
        cursor = self._sideband()
        if cursor is not None and cursor.data is not None and cursor.data.table is not None:
            cursor.snap_spacing_to()

    def _snap_centre(self) -> None:
        cursor = self._sideband()
        if cursor is not None:
            cursor.snap_centre_to_peak()

    def _sync_buttons(self) -> None:
        has_side = self._sideband() is not None
        self.buttons["snap_spacing"].setEnabled(has_side)
        self.buttons["snap_centre"].setEnabled(has_side)
        self.buttons["clear"].setEnabled(bool(self.cursor_set.cursors))

    # -- session
    def saved_for_view(self) -> list[dict[str, Any]]:
        """The session's cursor entries of this plot's view."""
        items = getattr(self.session, "cursors", None) or []
        return [dict(d) for d in items if d.get("view", self.cursor_set.view) == self.cursor_set.view]

    def restore(self) -> None:
        """Draw the cursors the session holds for this view (when they differ from those shown)."""
        if self.session is None:
            return
        saved = self.saved_for_view()
        if saved != self.cursor_set.to_list():
            self._writing = True
            try:
                self.cursor_set.from_list(saved)
            finally:
                self._writing = False

    def _write_session(self, mine: list) -> None:
        if self._writing or self.session is None:
            return
        view = self.cursor_set.view
        others = [dict(d) for d in (getattr(self.session, "cursors", None) or []) if d.get("view", view) != view]
        items = others + [dict(d) for d in mine]
        self._writing = True
        try:
            history = self.history if self.history is not None else self._window_history()
            if history is not None:
                reason = self.cursor_set.last_change or "move"
                # consecutive moves of one cursor are one undo step
                merge = (f"cursors:{view}:{self.cursor_set.last_changed_index}" if reason == "move" else None)
                history.set_list("cursors", items, f"{reason} cursor", merge_key=merge)
            elif callable(getattr(self.session, "set_cursors", None)):
                self.session.set_cursors(items)
            else:
                self.session.cursors = items
        finally:
            self._writing = False

    def _window_history(self):
        """The window's undo history (``window().document.history``) when there is one."""
        return getattr(getattr(self.window(), "document", None), "history", None)

    def _on_session_event(self, event) -> None:
        if event.kind == "cursors" and not self._writing:
            self.restore()


def attach_to_view(view, *, plot=None, families=None, labelled=None) -> CursorTools:
    """Give a workbench view model lines, cursors, a cursor readout and the tool row.

    ``families`` are the model-line families shown at first and ``labelled`` those whose
    lines carry their names.  Sets ``view.overlay`` (:class:`workbench.overlays.ModelOverlay`),
    ``view.cursor_set``, ``view.cursor_readout`` and ``view.cursor_tools``; the
    tool row goes above the plot and the readout below it in ``view._layout``.
    Call :func:`show_on_view` whenever the view redraws its curve.
    """
    from workbench.overlays import DEFAULT_LABELLED, DEFAULT_ON, ModelOverlay

    plot = view.plot if plot is None else plot
    view.overlay = ModelOverlay(plot, visible=DEFAULT_ON if families is None else families,
                                labelled=DEFAULT_LABELLED if labelled is None else labelled, parent=view)
    view.cursor_set = CursorSet(plot, view=view.name, parent=view)
    view.cursor_readout = CursorReadout(view.cursor_set)
    view.cursor_tools = CursorTools(view.cursor_set, view.overlay, view.session)
    layout = view._layout
    index = layout.indexOf(plot.getViewWidget())
    if index < 0:
        layout.addWidget(view.cursor_tools)
        layout.addWidget(view.cursor_readout)
    else:
        layout.insertWidget(index, view.cursor_tools)
        layout.insertWidget(index + 2, view.cursor_readout)
    return view.cursor_tools


def show_on_view(view, table, x, amplitude, *, axis: str, scale: float, spread=None,
                 speed_spread_frac: float = 0.0, units: str = "", lines: str = "fft") -> None:
    """Model lines and cursor data for the curve a view just drew (display units; see :class:`CursorData`).

    Nothing is computed here but the positions of lines: the cursors read ``x`` and
    ``amplitude`` as given.  ``spread`` is ``(min_hz, max_hz)`` of the table's
    reference shaft, drawn on Hz and CPM axes.  ``lines`` is ``"band"`` when the curve is
    band-averaged lines (the cursors then read peaks by power sum and name no shaft for
    merged sidebands, :class:`CursorData`), else ``"fft"``.  The cursors saved in the session
    for this view are drawn the first time (and after an undo or a session load).
    """
    view.overlay.set_table(table, axis=axis, scale=scale, spread=spread if axis != "order" else None)
    view.cursor_set.set_data(CursorData(np.asarray(x), np.asarray(amplitude), axis, float(scale), table,
                                        float(speed_spread_frac), units, lines))
    view.cursor_tools.restore()


__all__ = ["AXES", "KINDS", "UNIT_TEXT", "MIN_LINES_PER_SPACING", "sidebands_merge", "CursorData", "Readout", "ReadoutRow", "HarmonicCursor", "SidebandCursor",
           "cursor_from_dict", "PeakInfo", "CursorSet", "CursorReadout", "CursorTools", "attach_to_view",
           "show_on_view"]
