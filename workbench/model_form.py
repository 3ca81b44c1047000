"""The side form where the analyst types and edits the gear-train model.

:class:`ModelForm` keeps every field as typed, rebuilds a draft
:class:`~dsp.model.GearTrain` ~150 ms after each edit, checks it with
:func:`dsp.model.validate`, marks each field that has a problem (coloured cell or
widget, message in its tooltip) and lists the messages under the form.  When the
draft has no errors it becomes the current model and :attr:`ModelForm.model_changed`
is emitted.

Renaming a shaft (editing its name in the Shafts table) renames every reference to
it (tach, meshes, planetary stages, bearings).  Removing a shaft leaves the
references as they are; they are then marked as naming an unknown shaft.

:class:`FrequencyTableView` (read-only table of characteristic frequencies) lives
in :mod:`workbench.model_form_freq` and is re-exported here.
"""

from __future__ import annotations

from html import escape
from pathlib import Path

from PySide6.QtCore import Qt, QTimer, Signal
from PySide6.QtGui import QBrush, QColor
from PySide6.QtWidgets import (
    QComboBox, QFileDialog, QHBoxLayout, QLabel, QLineEdit, QListWidget, QListWidgetItem,
    QPushButton, QScrollArea, QVBoxLayout, QWidget,
)

from dsp.errors import GearbenchError, ModelError, Problem
from dsp.model import GearTrain

from .model_form_fields import (
    NO_TACH, SECTION_CLASSES, SECTION_TITLES, build_elements, build_tach, element_texts,
    field_label, group_marks, merge_problems, split_field, tach_texts,
)
from .model_form_freq import FrequencyTablePanel, FrequencyTableView
from .model_form_tables import ElementTable
from .model_form_widgets import FoldingSection, TachEditor, WidgetMarks

__all__ = ["ModelForm", "FrequencyTableView", "FrequencyTablePanel"]

SETTLE_MS = 150
START_HINT = (
    "<b>Start here.</b> 1. Add a sensor and its channel in the recording. "
    "2. Give the tach channel, or choose '" + NO_TACH + "' and type the nominal speed in rpm. "
    "3. List the shafts, input first. "
    "4. Add the gear meshes (driver shaft and teeth, driven shaft and teeth). "
    "Planetary stages and bearings are optional."
)
class ModelForm(QWidget):
    """Side form for the gear-train model.

    Signals
    -------
    model_changed(GearTrain)
        A valid model after an edit settled (or after :meth:`load_file`).
        :meth:`set_model` does not emit it: the caller already has the model.
    problems_changed(list[Problem])
        Every problem (errors and warnings) of the current draft.
    sensor_selected(int)
        The analyst chose which sensor to inspect (index into ``model.sensors``).
    file_loaded(str)
        A model file was loaded (path).
    """

    model_changed = Signal(object)
    problems_changed = Signal(list)
    sensor_selected = Signal(int)
    file_loaded = Signal(str)

    def __init__(self, parent=None):
        super().__init__(parent)
        self._valid: GearTrain | None = None
        self._was_valid = False
        self._n_channels: int | None = None
        self._problems: list[Problem] = []
        self._quiet = False          # True while widgets are filled by code
        self._pristine = True        # empty start: no marks until the first edit
        self.path: Path | None = None
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(SETTLE_MS)
        self._timer.timeout.connect(self.settle_now)
        self._widget_marks = WidgetMarks()
        self._listed: list[Problem] | None = None
        self._build()
        self.set_model(None)

    # ---- building ------------------------------------------------------------------
    def _build(self) -> None:
        self.load_button = QPushButton("Load model…")
        self.save_button = QPushButton("Save model…")
        self.load_button.clicked.connect(self._ask_load)
        self.save_button.clicked.connect(self._ask_save)
        top = QHBoxLayout()
        top.addWidget(self.load_button)
        top.addWidget(self.save_button)
        top.addStretch(1)
        self.status_label = QLabel("")
        self.status_label.setWordWrap(True)
        self.status_label.setVisible(False)
        self.status_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.hint_label = QLabel(START_HINT)
        self.hint_label.setWordWrap(True)
        self.hint_label.setStyleSheet("QLabel { background: #eef4ff; padding: 6px; }")

        self.name_edit = QLineEdit()
        self.name_edit.setPlaceholderText("machine or gearbox name, free text")
        self.name_edit.textEdited.connect(self._edited)

        self.tables: dict[str, ElementTable] = {}
        for section in SECTION_CLASSES:
            table = ElementTable(section, self.shaft_names, self)
            table.edited.connect(self._edited)
            self.tables[section] = table
        self.tables["shafts"].cell_renamed.connect(self._shaft_renamed)
        self.tables["shafts"].edited.connect(self._refresh_shaft_choices)
        self.tables["sensors"].edited.connect(self._refresh_sensor_choice)

        self.sensor_combo = QComboBox()
        self.sensor_combo.setToolTip("The sensor whose signal the views show.")
        self.sensor_combo.currentIndexChanged.connect(self._sensor_chosen)
        sensors_body = QWidget()
        sb = QVBoxLayout(sensors_body)
        sb.setContentsMargins(0, 0, 0, 0)
        sb.addWidget(self.tables["sensors"])
        row = QHBoxLayout()
        row.addWidget(QLabel("Inspect this sensor:"))
        row.addWidget(self.sensor_combo, 1)
        sb.addLayout(row)

        self.tach = TachEditor()
        self.tach.edited.connect(self._edited)
        self.tach_widgets = self.tach.widgets

        bodies = {"name": self.name_edit, "sensors": sensors_body, "tach": self.tach}
        bodies.update({k: t for k, t in self.tables.items() if k != "sensors"})
        self.sections: dict[str, FoldingSection] = {}
        inner = QWidget()
        col_layout = QVBoxLayout(inner)
        col_layout.setContentsMargins(4, 4, 4, 4)
        for key in ("name", "sensors", "tach", "shafts", "meshes", "planetary", "bearings"):
            self.sections[key] = FoldingSection(SECTION_TITLES[key], bodies[key])
            col_layout.addWidget(self.sections[key])
        col_layout.addStretch(1)
        scroll = QScrollArea()
        scroll.setWidgetResizable(True)
        scroll.setWidget(inner)

        self.problem_list = QListWidget()
        self.problem_list.setObjectName("model_problems")
        self.problem_list.setMaximumHeight(140)
        self.problem_list.setWordWrap(True)
        self.problem_list.itemActivated.connect(self._go_to_problem)
        self.problem_list.itemClicked.connect(self._go_to_problem)
        self.problem_title = QLabel("<b>What to fix</b>")

        layout = QVBoxLayout(self)
        layout.setContentsMargins(2, 2, 2, 2)
        layout.addLayout(top)
        layout.addWidget(self.status_label)
        layout.addWidget(self.hint_label)
        layout.addWidget(scroll, 1)
        layout.addWidget(self.problem_title)
        layout.addWidget(self.problem_list)

    # ---- public API ----------------------------------------------------------------
    def set_model(self, train: GearTrain | None, *, n_channels: int | None = None) -> None:
        """Show ``train`` in the form, replacing whatever was typed.

        Parameters
        ----------
        train : GearTrain or None
            The model to edit; ``None`` gives an empty form with a hint on what to
            enter first, and no problems are listed until the first edit.
        n_channels : int, optional
            Number of channels in the recording (see :meth:`set_n_channels`).

        Notes
        -----
        The model is checked at once and :attr:`problems_changed` is emitted;
        :attr:`model_changed` is not.  :meth:`model` then returns ``train`` when it
        has no errors, else ``None``.
        """
        self._timer.stop()
        if n_channels is not None:
            self._n_channels = int(n_channels)
        self._pristine = train is None
        shown = train if train is not None else GearTrain()
        self._quiet = True
        try:
            self.name_edit.setText(shown.name)
            for section, table in self.tables.items():
                table.set_rows([element_texts(section, e) for e in getattr(shown, section)])
            self.tach.set_channel_count(self._n_channels)
            self.tach.set_texts(tach_texts(shown.tach))
            self._refresh_shaft_choices()
            self._refresh_sensor_choice()
        finally:
            self._quiet = False
        self._status("")
        self._valid = None
        self._was_valid = False
        self._evaluate(emit_model=False)
        if train is not None and not _has_errors(self._problems):
            self._valid = train
            self._was_valid = True

    def model(self) -> GearTrain | None:
        """The last valid model (no errors), or ``None`` when there has been none."""
        return self._valid

    def draft(self) -> GearTrain:
        """The model as typed now, even if invalid (text that is not a number stays text)."""
        return self._build_draft()[0]

    def problems(self) -> list[Problem]:
        """Problems of the draft at the last check."""
        return list(self._problems)

    def set_n_channels(self, n: int | None) -> None:
        """Set the number of channels in the recording.

        Parameters
        ----------
        n : int or None
            Channel count; sensor and tach channels from ``n`` up are reported, and
            the tach channel box offers channels 0 to ``n - 1``.  ``None``: unknown.
        """
        self._n_channels = None if n is None else int(n)
        self.tach.set_channel_count(self._n_channels)
        if not self._pristine:
            self.settle_now()

    def selected_sensor(self) -> int:
        """Index of the sensor chosen under "Inspect this sensor" (-1 when none)."""
        return self.sensor_combo.currentIndex()

    def set_selected_sensor(self, index: int) -> None:
        self.sensor_combo.setCurrentIndex(index)

    def load_file(self, path) -> bool:
        """Load a TOML model file (:func:`dsp.model.load_model`) into the form.

        Parameters
        ----------
        path : str or Path
            The model file.

        Returns
        -------
        bool
            True when loaded (then :attr:`file_loaded` and, for a model without
            errors, :attr:`model_changed` are emitted).  On failure the reasons are
            shown in the form, nothing is raised and the form keeps its content.
        """
        from dsp.model import load_model

        path = Path(path)
        try:
            train = load_model(path)
        except ModelError as e:
            lines = "<br>".join(_esc(str(p)) for p in e.problems) or _esc(str(e))
            self._status(f"Could not load {_esc(path.name)}; fix these in the file and load "
                         f"it again:<br>{lines}", error=True)
            return False
        except (GearbenchError, OSError, ValueError) as e:
            self._status(f"Could not load {_esc(path.name)}: {_esc(str(e))}", error=True)
            return False
        self.set_model(train)
        self.path = path
        self._status(f"Loaded {_esc(str(path))}.")
        self.file_loaded.emit(str(path))
        if self._valid is not None:
            self.model_changed.emit(self._valid)
        return True

    def save_file(self, path) -> bool:
        """Save the typed model as TOML (:func:`dsp.model.save_model`, atomic).

        Parameters
        ----------
        path : str or Path
            Destination file.

        Returns
        -------
        bool
            True when saved.  Refused, with a message in the form, while the draft
            has errors (such a file could not be loaded back).
        """
        from dsp.model import save_model

        path = Path(path)
        self.settle_now()
        n_errors = sum(p.severity == "error" for p in self._problems)
        if n_errors:
            self._status(f"Not saved: fix the {n_errors} problem{'s' if n_errors > 1 else ''} "
                         "listed under the form first.", error=True)
            return False
        try:
            save_model(self.draft(), path)
        except (GearbenchError, OSError, ValueError) as e:
            self._status(f"Could not save {_esc(str(path))}: {_esc(str(e))}", error=True)
            return False
        self.path = path
        self._status(f"Saved {_esc(str(path))}.")
        return True

    def settle_now(self) -> None:
        """Check the draft now instead of waiting for the edit to settle."""
        self._timer.stop()
        self._pristine = False
        self._evaluate(emit_model=True)

    # ---- editing -------------------------------------------------------------------
    def shaft_names(self) -> list[str]:
        """Shaft names as typed in the Shafts table (for the shaft combo boxes)."""
        return [r[0] for r in self.tables["shafts"].rows() if r and r[0]]

    def _edited(self, *_args) -> None:
        if self._quiet:
            return
        self._timer.start()

    def _shaft_renamed(self, _row: int, _col: int, old: str, new: str) -> None:
        if not old or old in self.shaft_names():
            return  # a new name, or another shaft still carries the old one
        for key in ("meshes", "planetary", "bearings"):
            self.tables[key].replace_shaft(old, new)
        self._refresh_shaft_choices()
        self.tach.rename_shaft(old, new)

    def _refresh_shaft_choices(self) -> None:
        self.tach.set_shaft_choices(self.shaft_names())

    def _refresh_sensor_choice(self) -> None:
        box = self.sensor_combo
        before = box.currentIndex()
        box.blockSignals(True)
        box.clear()
        for i, row in enumerate(self.tables["sensors"].rows()):
            box.addItem(f"{row[0] or f'sensor {i + 1}'} (channel {row[1]})")
        after = min(max(before, 0), box.count() - 1)
        box.setCurrentIndex(after)
        box.blockSignals(False)
        if after != before and after >= 0 and not self._quiet:
            self.sensor_selected.emit(after)

    def _sensor_chosen(self, index: int) -> None:
        if index >= 0:
            self.sensor_selected.emit(index)

    # ---- checking ------------------------------------------------------------------
    def _build_draft(self) -> tuple[GearTrain, list[Problem]]:
        typing: list[Problem] = []
        parts = {}
        for section, table in self.tables.items():
            parts[section], found = build_elements(section, table.rows())
            typing += found
        tach, found = build_tach(self.tach.texts())
        typing += found
        return GearTrain(name=self.name_edit.text(), tach=tach, **parts), typing

    def _evaluate(self, *, emit_model: bool) -> None:
        draft, typing = self._build_draft()
        problems = merge_problems(typing, self._check(draft)) if not self._pristine else []
        self._problems = problems
        self._show_problems(problems)
        show_hint = not (draft.sensors and draft.shafts and (draft.meshes or draft.planetary))
        if show_hint != self.hint_label.isVisibleTo(self):
            self.hint_label.setVisible(show_hint)
        self.problems_changed.emit(list(problems))
        if self._pristine or _has_errors(problems):
            self._was_valid = False
            return
        changed = draft != self._valid or not self._was_valid
        self._valid, self._was_valid = draft, True
        if emit_model and changed:
            self.model_changed.emit(draft)

    def _check(self, draft: GearTrain) -> list[Problem]:
        from dsp.model import validate

        return list(validate(draft, n_channels=self._n_channels))

    def _show_problems(self, problems: list[Problem]) -> None:
        if problems != self._listed:      # rebuild the list only when it changes
            self._listed = list(problems)
            self.problem_list.clear()
            for p in problems:
                text = f"{'Error' if p.severity == 'error' else 'Warning'}: {field_label(p.field)}: {p.message}"
                item = QListWidgetItem(text)
                item.setData(Qt.ItemDataRole.UserRole, p.field or "")
                item.setForeground(QBrush(QColor(170, 0, 0) if p.severity == "error" else QColor(150, 90, 0)))
                self.problem_list.addItem(item)
            self.problem_title.setVisible(bool(problems))
            self.problem_list.setVisible(bool(problems))
        table_marks, widget_marks, section_counts = group_marks(problems)
        for section, table in self.tables.items():
            table.set_marks(table_marks.get(section, {}))
        for key, w in [("name", self.name_edit)] + [(f"tach.{k}", w) for k, w in self.tach_widgets.items()]:
            found = widget_marks.get(key, [])
            self._widget_marks.mark(w, found)
        for key, sec in self.sections.items():
            n = section_counts.get(key, 0)
            sec.set_note(f"({n} to fix)" if n else "")

    def widget_for(self, field: str) -> QWidget | None:
        """The widget that edits ``field`` (table, tach widget or name box), or None."""
        parts = split_field(field)
        if parts is None:
            return None
        section, _index, key = parts
        if section in self.tables:
            return self.tables[section].table
        if section == "tach":
            return self.tach_widgets.get(key)
        return self.name_edit if section == "name" else None

    def is_marked(self, field: str) -> bool:
        """True when ``field`` is shown as having a problem."""
        parts = split_field(field)
        if parts is None:
            return False
        section, index, key = parts
        if section in self.tables and index is not None and key is not None:
            t = self.tables[section]
            return t.is_marked(index, t.column_index(key))
        w = self.widget_for(field)
        return bool(w is not None and self._widget_marks.level(w))

    def _go_to_problem(self, item: QListWidgetItem) -> None:
        field = item.data(Qt.ItemDataRole.UserRole)
        parts = split_field(field)
        if parts is None:
            return
        section, index, key = parts
        if section in self.sections:
            self.sections[section].set_open(True)
        if section in self.tables and index is not None:
            t = self.tables[section]
            col = t.column_index(key) if key else 0
            t.table.setCurrentCell(index, col)
            t.table.setFocus()
        else:
            w = self.widget_for(field)
            if w is not None:
                w.setFocus()

    # ---- files ---------------------------------------------------------------------
    def _ask_load(self) -> None:
        start = str(self.path.parent) if self.path else ""
        path, _ = QFileDialog.getOpenFileName(self, "Load gear-train model", start,
                                              "Model files (*.toml);;All files (*)")
        if path:
            self.load_file(path)

    def _ask_save(self) -> None:
        start = str(self.path) if self.path else ""
        path, _ = QFileDialog.getSaveFileName(self, "Save gear-train model", start,
                                              "Model files (*.toml);;All files (*)")
        if path:
            p = Path(path)
            self.save_file(p if p.suffix else p.with_suffix(".toml"))

    def _status(self, html: str, *, error: bool = False) -> None:  # html: rich text
        self.status_label.setStyleSheet("QLabel { color: #aa0000; }" if error else "")
        self.status_label.setText(html)
        self.status_label.setVisible(bool(html))


def _has_errors(problems: list[Problem]) -> bool:
    return any(p.severity == "error" for p in problems)


def _esc(text: str) -> str:
    return escape(text, quote=False)
