"""The window's document actions: sessions, autosave and recovery, undo, notes, snapshots, findings, report.

:class:`DocumentActions` is attached to the :class:`workbench.main_window.MainWindow`
by one line and adds, without the window having to know the details:

- File: Open session..., Save session, Save session as..., Write report...;
- Edit: Undo and Redo (standard shortcuts) over annotations, cursors and model edits;
- View: Snapshot of this view... (PNG + SVG + recipe, listed in the Snapshots dock);
- a "Note" button and right-click "Add note/arrow here" on every view;
- a Findings box (a dock tabbed with the results) for the analyst's findings and
  recommendation, which go in the report;
- autosave every :data:`workbench.session_store.AUTOSAVE_INTERVAL_S` s while there
  are unsaved changes, and an offer to recover a newer autosave when a session or a
  recording is opened;
- a banner when the recording's SHA-256 differs from the one the session saved;
- a Save / Discard / Cancel question when the window closes with unsaved work, and an
  offer of a new session when another recording is opened over notes, cursors,
  snapshots or findings (they belong to the previous recording).

Everything with a dialog also has a plain method that tests call directly
(:meth:`open_session`, :meth:`save_session`, :meth:`recover`, :meth:`snapshot`,
:meth:`write_report`).
"""

from __future__ import annotations

import logging
from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, QStandardPaths, Qt, QTimer
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import QDockWidget, QFileDialog, QInputDialog, QMessageBox

from dsp.errors import GearbenchError
from workbench import session_store
from workbench.annotations import AnnotationController
from workbench.document_widgets import FindingsBox, SnapshotGallery
from workbench.undo import UndoHistory

log = logging.getLogger(__name__)

AUTOSAVE_CHECK_MS = 5_000          # how often the timer asks the autosaver (it writes at most every 30 s)
DIRTY_KINDS = ("recording", "model", "settings", "shaft", "view_options", "cursors", "annotations",
               "snapshots", "findings", "baseline", "severity")
SESSION_FILTER = "gearbench sessions (*.json)"


class DocumentActions(QObject):
    """Sessions, undo, annotations, snapshots, findings and report for one window.

    Parameters
    ----------
    window : workbench.main_window.MainWindow
    app_data_dir : path, optional
        Where autosaves of never-saved sessions go (Qt's ``AppDataLocation`` by default).
    """

    def __init__(self, window: Any, *, app_data_dir: str | Path | None = None):
        super().__init__(window)
        self.window = window
        self.session = window.session
        self.session_path: Path | None = None
        if app_data_dir is None:
            app_data_dir = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.AppDataLocation) or None
        self.app_data_dir = Path(app_data_dir) if app_data_dir else None
        self.history = UndoHistory(self.session, on_model_restored=self._show_model_in_form, parent=self)
        self.annotations = AnnotationController(self.session, self.history, parent=self)
        for view in window.views.values():
            if getattr(view, "plot", None) is not None:
                self.annotations.attach(view)
            tools = getattr(view, "cursor_tools", None)
            if tools is not None and getattr(tools, "history", None) is None:
                tools.history = self.history     # cursor moves become undoable steps
        self.autosaver = session_store.Autosaver(lambda: self.session, self.autosave_path)
        self._loading = False
        self._build_docks()
        self._build_menus()
        self._timer = QTimer(self, interval=AUTOSAVE_CHECK_MS, timeout=self.autosaver.tick)
        self._timer.start()
        self.session.subscribe(self._on_event)
        window.analysis_shown.connect(self._on_analysis)

    # ------------------------------------------------------------------ building
    def _build_docks(self) -> None:
        w = self.window
        self.findings = FindingsBox(self.session)
        self.findings_dock = QDockWidget("Findings", w)
        self.findings_dock.setObjectName("findings_dock")
        self.findings_dock.setWidget(self.findings)
        self.gallery = SnapshotGallery()
        self.gallery.caption_edited.connect(self.set_caption)
        self.gallery_dock = QDockWidget("Snapshots", w)
        self.gallery_dock.setObjectName("snapshots_dock")
        self.gallery_dock.setWidget(self.gallery)
        results = w.findChild(QDockWidget, "results_dock")
        for dock in (self.findings_dock, self.gallery_dock):
            dock.setFeatures(QDockWidget.DockWidgetFeature.DockWidgetMovable
                             | QDockWidget.DockWidgetFeature.DockWidgetFloatable)
            w.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, dock)
            if results is not None:
                w.tabifyDockWidget(results, dock)
        if results is not None:
            results.raise_()
        self.gallery.set_entries(self.session.snapshots)

    def _build_menus(self) -> None:
        w = self.window
        bar = w.menuBar()
        menus = {a.menu().title().replace("&", ""): a for a in bar.actions() if a.menu() is not None}
        file_menu = menus["File"].menu() if "File" in menus else bar.addMenu("&File")
        first = next((a for a in file_menu.actions() if a.isSeparator()), None)
        self.actions: dict[str, QAction] = {}
        for key, text, shortcut, slot in (
            ("open_session", "Open &session...", None, self._ask_open_session),
            ("save_session", "Save s&ession", QKeySequence("Ctrl+Alt+S"), self._save_or_ask),
            ("save_session_as", "Save session as...", None, self._ask_save_session),
            ("write_report", "&Write report...", None, self._ask_report),
        ):
            action = QAction(text, w)
            if shortcut is not None:
                action.setShortcut(shortcut)
            action.triggered.connect(slot)
            file_menu.insertAction(first, action) if first is not None else file_menu.addAction(action)
            self.actions[key] = action
        if first is not None:
            file_menu.insertSeparator(self.actions["open_session"])
        edit_menu = w.menuBar().addMenu("&Edit")
        if "View" in menus:   # Edit goes between File and View
            bar.insertMenu(menus["View"], edit_menu)
        self.undo_action, self.redo_action = self.history.actions(w)
        edit_menu.addAction(self.undo_action)
        edit_menu.addAction(self.redo_action)
        self.edit_menu = edit_menu
        view_menu = menus["View"].menu() if "View" in menus else bar.addMenu("&View")
        view_menu.addSeparator()
        snap = QAction("Snapshot of this &view...", w)
        snap.setShortcut(QKeySequence("Ctrl+Alt+P"))
        snap.triggered.connect(self._ask_snapshot)
        view_menu.addAction(snap)
        self.actions["snapshot"] = snap

    # ------------------------------------------------------------------ events
    def _on_event(self, event) -> None:
        if self._loading:
            return
        if event.kind in DIRTY_KINDS:
            self.autosaver.mark_dirty()
        if event.kind == "snapshots":
            self.gallery.set_entries(event.value or [])
        if event.kind == "recording":
            self.session.recording_sha256 = None
            self.window.banner.set_part("recording_changed", "warning", None)
            QTimer.singleShot(0, self, self._offer_recovery_for_recording)   # not called once closed

    def _on_analysis(self, analysis: Any) -> None:
        """Place the notes again (axes may have changed); remember or check the recording's SHA-256."""
        self.annotations.refresh()
        sha = (getattr(analysis, "recording", None) or {}).get("sha256")
        if not sha:
            return
        saved = getattr(self.session, "recording_sha256", None)
        if saved is None:
            self.session.recording_sha256 = sha
        elif saved != sha:
            self.window.banner.set_part(
                "recording_changed", "warning",
                f"The recording changed since this session was saved (SHA-256 {sha[:12]}... instead of "
                f"{saved[:12]}...): the results and snapshots may not match; check the file.")

    def _show_model_in_form(self, model: Any) -> None:
        form = getattr(self.window, "form", None)
        if form is not None:
            form.set_model(model, n_channels=getattr(self.window.recording, "n_channels", None))

    # ------------------------------------------------------------------ sessions
    def autosave_path(self) -> Path | None:
        return session_store.autosave_path(session_path=self.session_path,
                                           recording_path=self.session.recording_path,
                                           app_data_dir=self.app_data_dir)

    def save_session(self, path: str | Path) -> Path:
        """Save the session to ``path`` (atomic); the autosave is no longer needed."""
        self.findings.commit_now()
        path = Path(path)
        old_auto = self.autosave_path()
        session_store.save_session(self.session, path)
        self.session_path = path
        self.autosaver.saved()
        if old_auto is not None and old_auto != self.autosave_path():
            session_store.discard_autosave(old_auto)
        self.window.status_label.setText(f"Session saved to {path}")
        return path

    def open_session(self, path: str | Path) -> session_store.LoadedSession:
        """Open a session file: recording, model, settings, view, cursors, notes, snapshots, findings."""
        loaded = session_store.load_session(path)
        self.apply(loaded.session)
        self.session_path = Path(path)
        self.autosaver.dirty = False
        self._flag(loaded)
        return loaded

    def apply(self, doc: Any) -> None:
        """Make the window's session equal to ``doc`` (another Session), through its setters."""
        w, s = self.window, self.session
        self._loading = True
        try:
            if doc.recording_path is not None and Path(doc.recording_path) != s.recording_path:
                w.open_recording(doc.recording_path, doc.model_path)
            if doc.model is not None:
                if getattr(w, "form", None) is not None:
                    w.form.set_model(doc.model, n_channels=getattr(w.recording, "n_channels", None))
                s.set_model(doc.model, doc.model_path)
            s.set_settings(doc.settings)
            if doc.selected_shaft is not None and s.model is not None and doc.selected_shaft in s.model.shaft_names():
                s.select_shaft(doc.selected_shaft)
                w.shaft_chosen = True   # the saved shaft is the analyst's choice: the top suspect does not replace it
            s.set_view_options(**{f: getattr(doc.view_options, f) for f in doc.view_options.__dataclass_fields__})
            s.set_current_view(doc.current_view)
            s.set_cursors(doc.cursors)
            s.set_annotations(doc.annotations)
            s.set_snapshots(doc.snapshots)
            s.set_findings(doc.findings or "")
            s.recording_sha256 = doc.recording_sha256
            chosen = getattr(doc, "severity", None)
            if chosen and callable(getattr(s, "set_severity", None)):
                s.set_severity(group=chosen.get("group"), foundation=chosen.get("foundation"),
                               band_hz=tuple(chosen.get("band_hz") or (10.0, 1000.0)))
            if callable(getattr(s, "set_baseline", None)):
                s.set_baseline(doc.baseline_path)
            else:
                s.baseline_path = doc.baseline_path
        finally:
            self._loading = False
        self.history.clear()
        self.gallery.set_entries(s.snapshots)

    def _flag(self, loaded: session_store.LoadedSession) -> None:
        """Banner lines: a changed or missing recording (warning), keys ignored in the file (info)."""
        w = self.window
        about_recording = [t for t in loaded.warnings if t.startswith("the recording")]
        other = [t for t in loaded.warnings if not t.startswith("the recording")]
        w.banner.set_part("recording_changed", "warning",
                          ("; ".join(about_recording)).capitalize() if about_recording else None)
        w.banner.set_part("session", "info", ("Session: " + "; ".join(other)) if other else None)

    def recover(self, autosave: str | Path) -> session_store.LoadedSession:
        """Load an autosave into the window; the changes count as unsaved."""
        loaded = session_store.load_session(autosave)
        self.apply(loaded.session)
        self.autosaver.mark_dirty()
        self._flag(loaded)
        self.window.status_label.setText(f"Recovered unsaved work from {Path(autosave).name}")
        return loaded

    def recovery_candidate(self, session_path: str | Path | None = None) -> Path | None:
        """The autosave newer than ``session_path`` (or the per-recording one for an unsaved session)."""
        return session_store.recovery_candidate(session_path=session_path,
                                                recording_path=None if session_path else self.session.recording_path,
                                                app_data_dir=self.app_data_dir)

    def offer_recovery(self, candidate: Path, *, ask: bool = True) -> bool:
        """Ask whether to recover ``candidate``; recover it when the answer is yes. Returns True when recovered."""
        if ask:
            answer = QMessageBox.question(
                self.window, "Recover unsaved work?",
                f"An autosave newer than the saved session was found:\n{candidate}\n\nRecover the unsaved changes?",
                QMessageBox.StandardButton.Yes | QMessageBox.StandardButton.No, QMessageBox.StandardButton.Yes)
            if answer != QMessageBox.StandardButton.Yes:
                session_store.discard_autosave(candidate)
                return False
        try:
            self.recover(candidate)
        except GearbenchError as exc:
            self.window.banner.set_part("session", "error", f"The autosave cannot be recovered: {exc}")
            return False
        return True

    def _offer_recovery_for_recording(self) -> None:
        from PySide6.QtGui import QGuiApplication

        if self.session_path is not None or self._loading or QGuiApplication.platformName() == "offscreen":
            return   # no one could answer a dialog on the offscreen platform (tests call offer_recovery)
        candidate = self.recovery_candidate()
        if candidate is not None and self.window.isVisible():
            self.offer_recovery(candidate)

    # ------------------------------------------------------------------ questions
    #: Tests (and scripts) may set this to ``fn(title, text, choices) -> choice`` to answer questions.
    answer = None

    def ask(self, title: str, text: str, choices: tuple[str, ...], *, unattended: str) -> str:
        """Ask the analyst to pick one of ``choices`` (the first is the default); "Cancel" when closed.

        On the offscreen platform no one can answer: ``unattended`` is returned without a dialog.
        """
        from PySide6.QtGui import QGuiApplication

        if self.answer is not None:
            return self.answer(title, text, choices)
        if QGuiApplication.platformName() == "offscreen":
            return unattended
        box = QMessageBox(QMessageBox.Icon.Question, title, text, QMessageBox.StandardButton.NoButton, self.window)
        buttons = {}
        for choice in choices:
            role = (QMessageBox.ButtonRole.RejectRole if choice == "Cancel" else
                    QMessageBox.ButtonRole.DestructiveRole if choice == "Discard" else
                    QMessageBox.ButtonRole.AcceptRole)
            buttons[box.addButton(choice, role)] = choice
        box.setDefaultButton(next(iter(buttons)))
        box.exec()
        return buttons.get(box.clickedButton(), "Cancel")

    def has_work(self) -> bool:
        """True when the session holds the analyst's work: notes, cursors, snapshots or findings."""
        self.findings.commit_now()
        s = self.session
        return bool(s.cursors or s.annotations or s.snapshots or (s.findings or "").strip())

    def model_edited(self) -> bool:
        """True when the session's model differs from its model file (or has none): edits not saved anywhere."""
        from dsp.model import load_model

        model, path = self.session.model, self.session.model_path
        if model is None:
            return False
        try:
            return path is None or load_model(path) != model
        except (GearbenchError, OSError):
            return True

    def unsaved(self) -> bool:
        """True while changes are not in the session file (in memory, or only in the autosave)."""
        return bool(self.autosaver.dirty or self.autosaver.last_path is not None)

    def confirm_close(self) -> bool:
        """Before the window closes: Save / Discard / Cancel when there is unsaved work. True: go on."""
        return self._save_unsaved("Close gearbench", "close", unattended="Keep")

    def _save_unsaved(self, title: str, doing: str, *, unattended: str) -> bool:
        self.findings.commit_now()
        if not (self.unsaved() and (self.has_work() or self.session_path is not None or self.model_edited())):
            return True
        where = self.session_path.name if self.session_path is not None else "this session (never saved)"
        choice = self.ask(title, f"There are unsaved changes in {where}. Save them before you {doing}?",
                          ("Save", "Discard", "Cancel"), unattended=unattended)
        if choice == "Save":
            if self.session_path is None:
                self._ask_save_session()
            else:
                self._guard("Could not save the session", self.save_session, self.session_path)
            return not self.unsaved()
        if choice == "Discard":
            path = self.autosave_path()
            if path is not None:
                session_store.discard_autosave(path)
            self.autosaver.saved()
            return True
        return choice != "Cancel"   # "Keep" (unattended): the autosave keeps the work

    def before_new_recording(self, path: Path) -> bool:
        """Another recording is about to be opened: offer a new session. False: do not open it."""
        current = self.session.recording_path
        if current is None or Path(current) == Path(path) or not self.has_work():
            return True
        choice = self.ask(
            "Open another recording",
            f"The notes, cursors, snapshots and findings on screen belong to {Path(current).name}. "
            f"Start a new session for {Path(path).name} (the current one can be saved first), or keep them?",
            ("New session", "Keep them", "Cancel"), unattended="New session")
        if choice == "Cancel":
            return False
        if choice == "New session":
            if not self._save_unsaved("Open another recording", "start a new session", unattended="Keep"):
                return False
            self.new_session()
        return True

    def new_session(self) -> None:
        """Forget the analyst's work (notes, cursors, snapshots, findings) and the session file."""
        self._loading = True
        try:
            self.session.set_cursors([])
            self.session.set_annotations([])
            self.session.set_snapshots([])
            self.session.set_findings("")
            self.session.recording_sha256 = None
        finally:
            self._loading = False
        self.session_path = None
        self.autosaver.saved()
        self.history.clear()
        self.gallery.set_entries([])
        self.window.banner.set_part("session", "info", None)

    # ------------------------------------------------------------------ snapshots
    def snapshot_folder(self) -> Path:
        if self.session_path is not None:
            return self.session_path.with_name(self.session_path.stem + "_snapshots")
        if self.session.recording_path is not None:
            rec = Path(self.session.recording_path)
            return rec.with_name(rec.stem + "_snapshots")
        return Path.cwd() / "gearbench_snapshots"

    def snapshot(self, caption: str = "", *, folder: str | Path | None = None) -> dict[str, Any]:
        """Save the current view as PNG + SVG + recipe and add it to the session's snapshots."""
        from workbench.snapshot import take_snapshot

        view = self.window.views[self.session.current_view]
        entry = take_snapshot(session=self.session, analysis=self.window.analysis, view=view,
                              folder=folder or self.snapshot_folder(), caption=caption,
                              recording=self.window.recording)
        self.session.set_snapshots(list(self.session.snapshots) + [entry])
        self.window.status_label.setText(f"Snapshot saved: {entry['png']}")
        return entry

    def set_caption(self, snapshot_id: str, caption: str) -> None:
        from workbench.snapshot import set_caption

        entries = [set_caption(e, caption) if e.get("id") == snapshot_id else dict(e) for e in self.session.snapshots]
        self.session.set_snapshots(entries)

    # ------------------------------------------------------------------ report
    def report_input(self):
        """The report's input from what the window shows (the session's snapshots, or the default pictures)."""
        from workbench.report import ReportInput, default_images, session_images, utc_now

        analysis = self.window.analysis
        if analysis is None:
            raise GearbenchError("nothing to report yet: open a recording and wait for the analysis")
        self.findings.commit_now()
        notes: list[str] = []
        if self.session.snapshots:
            images, notes = session_images(self.session.snapshots)
        else:
            images = default_images(analysis, self.window.recording)
        zone = getattr(getattr(getattr(self.window, "baseline", None), "panel", None), "zone", None)
        return ReportInput(analysis=analysis, images=tuple(images), findings=self.session.findings or "",
                           created_utc=utc_now(), session_path=str(self.session_path or ""), notes=tuple(notes),
                           severity=zone)

    def write_report(self, path: str | Path) -> Path:
        from workbench.report import write_report

        written = write_report(self.report_input(), path)
        self.window.status_label.setText(f"Report written to {written}")
        return written

    # ------------------------------------------------------------------ dialogs
    def _start_dir(self) -> str:
        if self.session_path is not None:
            return str(self.session_path.parent)
        rec = self.session.recording_path
        return str(Path(rec).parent) if rec else str(Path.cwd())

    def _guard(self, what: str, fn, *args) -> Any:
        try:
            return fn(*args)
        except GearbenchError as exc:
            self.window.banner.set_part("session", "error", f"{what}: {exc}")
            return None

    def _ask_open_session(self) -> None:
        if not self._save_unsaved("Open session", "open another session", unattended="Keep"):
            return
        path, _ = QFileDialog.getOpenFileName(self.window, "Open session", self._start_dir(), SESSION_FILTER)
        if not path:
            return
        candidate = self.recovery_candidate(path)
        loaded = self._guard("Could not open the session", self.open_session, path)
        if loaded is not None and candidate is not None:
            self.offer_recovery(candidate)

    def _save_or_ask(self) -> None:
        if self.session_path is None:
            self._ask_save_session()
        else:
            self._guard("Could not save the session", self.save_session, self.session_path)

    def _ask_save_session(self) -> None:
        path, _ = QFileDialog.getSaveFileName(self.window, "Save session", self._start_dir(), SESSION_FILTER)
        if path:
            if not path.lower().endswith(".json"):
                path += ".json"
            self._guard("Could not save the session", self.save_session, path)

    def _ask_snapshot(self) -> None:
        caption, ok = QInputDialog.getText(self.window, "Snapshot", "Caption:")
        if ok:
            self._guard("Could not save the snapshot", self.snapshot, caption)

    def _ask_report(self) -> None:
        path, _ = QFileDialog.getSaveFileName(self.window, "Write report", self._start_dir(),
                                              "PDF (*.pdf);;HTML (*.html)")
        if path:
            if Path(path).suffix.lower() not in (".pdf", ".html", ".htm"):
                path += ".pdf"
            self._guard("Could not write the report", self.write_report, path)


__all__ = ["DocumentActions", "FindingsBox", "SnapshotGallery"]
