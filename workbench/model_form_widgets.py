"""Small widgets of the model side form: folding sections, the tach editor, field marks."""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QComboBox, QFormLayout, QLineEdit, QToolButton, QVBoxLayout, QWidget

from dsp.model import EDGES

from .model_form_fields import NO_TACH, TACH_COLUMNS

MARK_STYLE = {
    "error": "background: #ffcdcd; border: 1px solid #b00000;",
    "warning": "background: #ffeeb9; border: 1px solid #a06000;",
}


class FoldingSection(QWidget):
    """A titled block whose body folds away when its title button is clicked."""

    def __init__(self, title: str, body: QWidget, parent=None):
        super().__init__(parent)
        self.title = title
        self.button = QToolButton(self)
        self.button.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
        self.button.setCheckable(True)
        self.button.setChecked(True)
        self.button.setArrowType(Qt.ArrowType.DownArrow)
        self.button.setStyleSheet("QToolButton { border: none; font-weight: bold; }")
        self.button.setText(title)
        self.body = body
        self.button.toggled.connect(self.set_open)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 2, 0, 2)
        layout.addWidget(self.button)
        layout.addWidget(body)

    def set_open(self, is_open: bool) -> None:
        self.button.setChecked(is_open)
        self.button.setArrowType(Qt.ArrowType.DownArrow if is_open else Qt.ArrowType.RightArrow)
        self.body.setVisible(is_open)

    def set_note(self, note: str) -> None:
        """Text after the title, e.g. ``"(2 to fix)"``; empty to clear."""
        text = f"{self.title}  {note}".rstrip()
        if text != self.button.text():
            self.button.setText(text)


class TachEditor(QWidget):
    """The tach fields: channel (or "no tach"), watched shaft, pulses per rev, edge, nominal rpm.

    ``edited`` is emitted when the analyst changes a field, never when code fills it.
    """

    edited = Signal()

    def __init__(self, parent=None):
        super().__init__(parent)
        self._quiet = False
        form = QFormLayout(self)
        form.setContentsMargins(0, 0, 0, 0)
        self.widgets: dict[str, QWidget] = {}
        for col in TACH_COLUMNS:
            if col.key in ("channel", "shaft", "edge"):
                w = QComboBox()
                w.setEditable(col.key == "channel")
                if col.key == "edge":
                    w.addItems(EDGES)
                w.currentTextChanged.connect(self._changed)
            else:
                w = QLineEdit()
                w.textEdited.connect(self._changed)
                if col.key == "nominal_rpm":
                    w.setPlaceholderText("needed when there is no tach")
            w.setObjectName(f"tach_{col.key}")
            w.setToolTip(col.tip)
            self.widgets[col.key] = w
            form.addRow(col.header, w)
        self.set_channel_count(None)

    def _changed(self, *_args) -> None:
        if not self._quiet:
            self.edited.emit()

    def texts(self) -> dict[str, str]:
        """The typed text of every field, by model key."""
        return {k: widget_text(w) for k, w in self.widgets.items()}

    def set_texts(self, texts: dict[str, str]) -> None:
        self._quiet = True
        try:
            for key, text in texts.items():
                set_widget_text(self.widgets[key], text)
        finally:
            self._quiet = False

    def set_shaft_choices(self, names: list[str]) -> None:
        """List ``names`` in the watched-shaft box, keeping the current choice (even if unknown)."""
        box = self.widgets["shaft"]
        current = box.currentText()
        items = [""] + [n for n in names if n]
        if current not in items:
            items.append(current)
        self._quiet = True
        box.clear()
        box.addItems(items)
        box.setCurrentIndex(items.index(current))
        self._quiet = False

    def set_channel_count(self, n: int | None) -> None:
        """Offer "no tach" and channels 0 to n-1 (0 to 3 when the count is unknown)."""
        box = self.widgets["channel"]
        current = box.currentText()
        self._quiet = True
        box.clear()
        box.addItems([NO_TACH] + [str(i) for i in range(n if n is not None else 4)])
        set_widget_text(box, current or NO_TACH)
        self._quiet = False

    def rename_shaft(self, old: str, new: str) -> None:
        """Follow a shaft rename: the watched shaft ``old`` becomes ``new``."""
        if self.widgets["shaft"].currentText() == old:
            self.set_texts({"shaft": new})


def widget_text(w: QWidget) -> str:
    return w.currentText() if isinstance(w, QComboBox) else w.text()


def set_widget_text(w: QWidget, text: str) -> None:
    """Show ``text`` in a line edit or combo box; a fixed combo gains the item if it lacks it."""
    if isinstance(w, QComboBox):
        i = w.findText(text)
        if i < 0 and not w.isEditable():
            w.addItem(text)
            i = w.count() - 1
        if i >= 0:
            w.setCurrentIndex(i)
        else:
            w.setCurrentText(text)
    else:
        w.setText(text)


class WidgetMarks:
    """Colours widgets that have a problem and puts the messages in their tooltips.

    State lives here in Python (not in Qt properties), and a widget is touched only
    when its mark changes: see the PySide6 6.12 note in :mod:`workbench.model_form_tables`.
    """

    def __init__(self):
        self._base_tips: dict[int, str] = {}
        self._shown: dict[int, tuple[int, str]] = {}

    def mark(self, w: QWidget, found: list[tuple[str, str]]) -> None:
        """Mark ``w`` with ``[(severity, message), ...]``; an empty list restores it."""
        key = id(w)
        if key not in self._base_tips:
            self._base_tips[key] = w.toolTip()
        level = 0 if not found else 2 if any(s == "error" for s, _ in found) else 1
        tip = "\n".join(m for _, m in found) if found else self._base_tips[key]
        if self._shown.get(key, (0, self._base_tips[key])) == (level, tip):
            return
        self._shown[key] = (level, tip)
        style = "" if level == 0 else MARK_STYLE["error" if level == 2 else "warning"]
        w.setStyleSheet(f"{type(w).__name__} {{ {style} }}" if style else "")
        w.setToolTip(tip)

    def level(self, w: QWidget) -> int:
        """0 plain, 1 warning, 2 error."""
        return self._shown.get(id(w), (0, ""))[0]
