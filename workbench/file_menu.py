"""The window's File menu: open a recording or a model, save the model, recent files, drag and drop.

:class:`FileMenu` is a mixin of :class:`workbench.main_window.MainWindow`: it builds the
File menu's first entries and the Open recent list (kept in the window's ``store``,
a ``QSettings``) and opens what is dropped on the window.  Opening itself is the
window's :meth:`open_recording` and :meth:`open_model`.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QFileDialog

RECORDING_SUFFIXES = (".flac", ".wav", ".ogg", ".aiff", ".aif", ".w64", ".rf64", ".caf")
MODEL_SUFFIXES = (".toml",)
N_RECENT = 8


class FileMenu:
    """File menu entries, recent files and drag and drop for the main window (a mixin)."""

    def _build_file_menu(self) -> None:
        menu = self.menuBar().addMenu("&File")
        for text, key, slot in (
            ("&Open recording...", QKeySequence.StandardKey.Open, self._ask_recording),
            ("Open &model...", None, self._ask_model),
            ("&Save model", QKeySequence.StandardKey.Save, self._save_model),
            ("Save model &as...", QKeySequence.StandardKey.SaveAs, lambda: self._save_model(ask=True)),
        ):
            action = QAction(text, self)
            if key is not None:
                action.setShortcut(key)
            action.triggered.connect(slot)
            menu.addAction(action)
        self.recent_menu = menu.addMenu("Open &recent")
        self._fill_recent()
        menu.addSeparator()
        quit_action = QAction("&Quit", self)
        quit_action.setShortcut(QKeySequence.StandardKey.Quit)
        quit_action.triggered.connect(self.close)
        menu.addAction(quit_action)

    def _ask_recording(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Open recording", str(self._start_dir()),
                                              "Recordings (" + " ".join(f"*{s}" for s in RECORDING_SUFFIXES) + ")")
        if path:
            self.open_recording(path)

    def _ask_model(self) -> None:
        path, _ = QFileDialog.getOpenFileName(self, "Open model", str(self._start_dir()), "Models (*.toml)")
        if path:
            self.open_model(path)

    def _save_model(self, ask: bool = False) -> None:
        if self.form is None:
            return
        path = None if ask else (self.form.path or self.session.model_path)
        if path is None:
            path, _ = QFileDialog.getSaveFileName(self, "Save model", str(self._start_dir()), "Models (*.toml)")
        if path and self.form.save_file(path):
            self.session.model_path = Path(path)
            self.status_label.setText(f"Model saved to {path}")

    def _start_dir(self) -> Path:
        return self.session.recording_path.parent if self.session.recording_path else Path.cwd()

    def _remember(self, path: Path) -> None:
        recent = [str(path.resolve())] + [p for p in self._recent() if p != str(path.resolve())]
        self.store.setValue("recent_files", recent[:N_RECENT])
        self._fill_recent()

    def _recent(self) -> list[str]:
        value = self.store.value("recent_files", [])
        return [value] if isinstance(value, str) else list(value or [])

    def _fill_recent(self) -> None:
        self.recent_menu.clear()
        for path in self._recent():
            action = self.recent_menu.addAction(path)
            action.triggered.connect(lambda _=False, p=path: self._open_any(Path(p)))
        self.recent_menu.setEnabled(bool(self._recent()))

    def _open_any(self, path: Path) -> None:
        if path.suffix.lower() in MODEL_SUFFIXES:
            self.open_model(path)
        else:
            self.open_recording(path)

    def dragEnterEvent(self, event):  # noqa: N802 - Qt override
        urls = event.mimeData().urls() if event.mimeData().hasUrls() else []
        if urls and Path(urls[0].toLocalFile()).suffix.lower() in RECORDING_SUFFIXES + MODEL_SUFFIXES:
            event.acceptProposedAction()

    def dropEvent(self, event):  # noqa: N802 - Qt override
        for url in event.mimeData().urls():
            self._open_any(Path(url.toLocalFile()))
        event.acceptProposedAction()
