"""The workbench window: composes the model form, the views and the results panel.

It holds no signal processing: the document (:class:`workbench.session.Session`)
holds the choices, :class:`workbench.jobs.AnalysisRunner` computes off the GUI
thread, and the views draw what comes back.  Edits to the model or the settings
re-run the analysis after a short pause; the last good result stays on screen while
a new one is computed or when the new input is wrong.  The File menu, recent files and
drag and drop are in :mod:`workbench.file_menu`, the message banner in
:mod:`workbench.banner`, sessions and the analyst's work in
:mod:`workbench.document_actions`.
"""

from __future__ import annotations

import html
import logging
from pathlib import Path
from typing import Any

from PySide6.QtCore import QSettings, Qt, QTimer, Signal
from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (QComboBox, QDockWidget, QHBoxLayout, QLabel, QMainWindow,
                               QProgressBar, QPushButton, QSizePolicy, QSplitter, QTabWidget, QVBoxLayout, QWidget)

from workbench import theme
from workbench.banner import Banner, join_sentences
from workbench.file_menu import MODEL_SUFFIXES, N_RECENT, RECORDING_SUFFIXES, FileMenu  # noqa: F401 - importable here
from workbench.jobs import AnalysisRunner
from workbench.results_panel import ResultsPanel
from workbench.session import VIEW_NAMES, Session, default_spectrum_span_hz
from workbench.views import VIEW_CLASSES, view_class

log = logging.getLogger(__name__)

RERUN_DELAY_MS = 250
DEFAULT_SIZE = (1600, 1000)      # px, when the screen allows
FIRST_STEPS = ("No model file beside this recording. Enter in the form, in this order: the sensor channel "
               "(and its scale), the tach channel or a nominal speed, then the shafts and the gears between them.")


def default_size(preferred: tuple[int, int] = DEFAULT_SIZE) -> tuple[int, int]:
    """``preferred`` (width, height in px), or the primary screen's free area when it is smaller."""
    from PySide6.QtGui import QGuiApplication

    screen = QGuiApplication.primaryScreen()
    if screen is None or QGuiApplication.platformName() == "offscreen":
        return preferred            # no real screen: the size asked for (screenshots, tests)
    free = screen.availableGeometry()
    return min(preferred[0], free.width()), min(preferred[1], free.height())


def _without_name(exc: Exception, path: Path) -> str:
    """The message of ``exc`` without a leading ``"NAME: "`` (the caller names the file already)."""
    text = str(exc)
    for prefix in (f"{path}: ", f"{path.name}: ", f"'{path}': ", f"'{path.name}': "):
        if text.startswith(prefix):
            return text[len(prefix):]
    return text


def _model_form_widget():
    """The side form for the model (``workbench.model_form``), or ``None`` if unavailable."""
    try:
        from workbench.model_form import ModelForm
    except ImportError:  # pragma: no cover - the form ships with the package
        log.exception("model form unavailable")
        return None
    return ModelForm()


class MainWindow(FileMenu, QMainWindow):
    """The workbench window.

    Parameters
    ----------
    session : Session, optional
        The document to show (a new empty one by default).
    settings_store : QSettings, optional
        Where recent files are remembered (the user's settings by default).
    runner : AnalysisRunner, optional
        The background runner (tests may pass one with another analysis function).
    """

    analysis_shown = Signal(object)      # the Analysis now on screen
    analysis_failed = Signal(str)        # plain-words message
    idle = Signal()                      # nothing left to compute
    first_painted = Signal()             # emitted once, after the window was first painted

    def __init__(self, session: Session | None = None, *, settings_store: QSettings | None = None,
                 runner: AnalysisRunner | None = None):
        super().__init__()
        self.setWindowTitle("gearbench")
        self.setAcceptDrops(True)
        self.session = session or Session()
        self.store = settings_store or QSettings(QSettings.Format.IniFormat, QSettings.Scope.UserScope,
                                                 "gearbench", "workbench")
        self.runner = runner or AnalysisRunner(self)
        self.runner.setParent(self)
        self.analysis: Any = None
        self.recording: Any = None
        self.last_error: str | None = None
        # the analyst's shaft choice for this recording: until they choose, each new analysis
        # selects its top suspect's shaft (and a bearing suspect's defect lines are labelled)
        self.shaft_chosen = False
        self._auto_selecting = False
        self._default_shaft: str | None = None
        self.focus_chosen = False
        # each recording's spectrum opens on the mesh band once (workbench.session.default_spectrum_span_hz)
        self.span_shown = False
        self._build_central()
        self._build_docks()
        self._build_status()
        self._build_menus()
        self._rerun = QTimer(self, singleShot=True, interval=RERUN_DELAY_MS, timeout=self.run_analysis)
        self.runner.started.connect(lambda _g: self._set_busy(True, "analysing..."))
        self.runner.progress.connect(self._on_progress)
        self.runner.finished.connect(self._on_finished)
        self.runner.failed.connect(self._on_failed)
        self.runner.cancelled.connect(self._on_cancelled)
        self.runner.crashed.connect(lambda _g, msg, trace: self.report_unexpected(msg, trace))
        self.session.subscribe(self._on_session_event)
        from workbench.baseline_controller import BaselineController

        self.baseline = BaselineController(self)   # baseline comparison and severity dock, File menu entries
        self._painted = False
        self.resize(*default_size())
        from workbench.document_actions import DocumentActions

        # sessions, autosave, undo/redo, notes, snapshots, findings and the report
        self.document = DocumentActions(self)

    def showEvent(self, event):  # noqa: N802 - Qt override
        super().showEvent(event)
        self.unelide_dock_tabs()
        # side docks in proportion to the window: the views keep about half of a laptop screen's width
        width = self.width()
        # (the results dock a little wider than the form: its tables' key columns must read without scrolling)
        self.resizeDocks(list(self._docks), [max(250, min(400, width * 22 // 100)), max(300, min(390, width * 26 // 100))],
                         Qt.Orientation.Horizontal)

    def unelide_dock_tabs(self) -> None:
        """Tabs of docks stacked together show their whole titles (scroll buttons when they do not fit)."""
        from PySide6.QtWidgets import QTabBar

        for bar in self.findChildren(QTabBar):
            if bar is not self.tabs.tabBar() and bar.elideMode() != Qt.TextElideMode.ElideNone:
                bar.setElideMode(Qt.TextElideMode.ElideNone)
                bar.setUsesScrollButtons(True)

    def paintEvent(self, event):  # noqa: N802 - Qt override
        super().paintEvent(event)
        if not self._painted:
            self._painted = True
            # let the paint finish before anything heavy starts
            QTimer.singleShot(0, self.first_painted.emit)

    # ------------------------------------------------------------------ building
    def _build_central(self) -> None:
        central = QWidget()
        layout = QVBoxLayout(central)
        layout.setContentsMargins(6, 6, 6, 0)
        self.banner = Banner()
        layout.addWidget(self.banner)
        top = QHBoxLayout()
        top.addWidget(QLabel("Shaft"))
        self.shaft_combo = QComboBox()
        self.shaft_combo.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToMinimumContentsLengthWithIcon)
        self.shaft_combo.setMinimumContentsLength(12)
        self.shaft_combo.setToolTip("The shaft shown by the speed, spectrum-order, TSA and cepstrum views")
        self.shaft_combo.currentTextChanged.connect(self._on_shaft_combo)
        top.addWidget(self.shaft_combo)
        self.file_label = QLabel("")
        self.file_label.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.file_label.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Preferred)  # a long path is cut
        top.addSpacing(16)
        top.addWidget(self.file_label, 1)
        layout.addLayout(top)
        self.tabs = QTabWidget()
        self.views = {}
        for name in VIEW_CLASSES:
            view = view_class(name)(self.session)
            self.views[view.name] = view
            self.tabs.addTab(view, view.title)
        self.tabs.setCurrentWidget(self.views[self.session.current_view])
        self.tabs.currentChanged.connect(lambda i: self.session.set_current_view(self.tabs.widget(i).name))
        layout.addWidget(self.tabs, 1)
        self.setCentralWidget(central)

    def _build_docks(self) -> None:
        from workbench.model_form_freq import FrequencyTablePanel

        self.form = _model_form_widget()
        self.frequency_panel = FrequencyTablePanel()
        splitter = QSplitter(Qt.Orientation.Vertical)
        if self.form is not None:
            splitter.addWidget(self.form)
            self.form.model_changed.connect(self.apply_model)
            self.form.problems_changed.connect(self._on_problems)
            self.form.sensor_selected.connect(self._on_sensor_selected)
            self.form.file_loaded.connect(self._on_form_file_loaded)
        splitter.addWidget(self.frequency_panel)
        splitter.setSizes([620, 300])
        left = QDockWidget("Gear train", self)
        left.setObjectName("model_dock")
        left.setWidget(splitter)
        left.setFeatures(QDockWidget.DockWidgetFeature.DockWidgetMovable | QDockWidget.DockWidgetFeature.DockWidgetFloatable)
        self.addDockWidget(Qt.DockWidgetArea.LeftDockWidgetArea, left)
        self.results = ResultsPanel()
        self.results.component_chosen.connect(self._on_component_chosen)
        self.results.suspect_chosen.connect(self.show_suspect)
        self.results.sideband_chosen.connect(self.show_sideband_family)
        right = QDockWidget("Results", self)
        right.setObjectName("results_dock")
        right.setWidget(self.results)
        right.setFeatures(left.features())
        self.addDockWidget(Qt.DockWidgetArea.RightDockWidgetArea, right)
        self._docks = (left, right)

    def _build_status(self) -> None:
        bar = self.statusBar()
        self.status_label = QLabel("Ready")
        self.progress = QProgressBar()
        self.progress.setRange(0, 100)
        self.progress.setMaximumWidth(220)
        self.progress.setVisible(False)
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop the running analysis; the last result stays on screen")
        self.cancel_button.setEnabled(False)
        self.cancel_button.clicked.connect(self.runner.cancel)
        bar.addWidget(self.status_label, 1)
        bar.addPermanentWidget(self.progress)
        bar.addPermanentWidget(self.cancel_button)

    def _build_menus(self) -> None:
        self._build_file_menu()
        view_menu = self.menuBar().addMenu("&View")
        for index, name in enumerate(VIEW_NAMES):
            action = QAction(self.views[name].title, self)
            action.setShortcut(QKeySequence(f"Ctrl+{index + 1}"))
            action.triggered.connect(lambda _=False, n=name: self.session.set_current_view(n))
            view_menu.addAction(action)

    # ------------------------------------------------------------------ files
    def open_recording(self, path: str | Path, model_path: str | Path | None = None) -> bool:
        """Open a recording with its model (``model_path``, else the same-stem .toml beside it).

        A missing file is named in the banner and the current recording stays open.  When
        the session holds notes, cursors, snapshots or findings, the analyst is offered a
        new session first (they belong to the previous recording).  Without a model file
        beside the recording, the model on screen (typed or loaded) is kept.  Returns
        False when nothing was opened.
        """
        path = Path(path)
        document = getattr(self, "document", None)
        loading = bool(getattr(document, "_loading", False))
        if not loading and not path.is_file():
            message = (f"The recording {path} does not exist; check the path or choose another file"
                       if not path.exists() else f"{path} is not a file; choose a recording file")
            self.last_error = message
            self.banner.set_part("analysis", "error", message + ".")
            self.status_label.setText(message)
            self.analysis_failed.emit(message)
            self.idle.emit()
            return False
        if document is not None and not loading and not document.before_new_recording(path):
            return False
        self.runner.cancel()
        self.analysis, self.recording, self.last_error = None, None, None
        if not loading:
            # another recording: its top suspect's shaft is shown until the analyst chooses one
            self.shaft_chosen = self.focus_chosen = self.span_shown = False
            self.views["envelope"].set_focus_bearing(None)
        for view in self.views.values():
            view.clear()
        for key in ("analysis", "warnings", "model", "first_steps"):
            self.banner.set_part(key, "info", None)
        self.session.set_recording(path)
        self.file_label.setText(html.escape(str(path)))
        self.setWindowTitle(f"{path.name} - gearbench")
        self._remember(path)
        model_path = Path(model_path) if model_path is not None else path.with_suffix(".toml")
        if model_path.exists():
            if not self.open_model(model_path):
                self.session.set_model(None, None)   # never analyse this recording with another model
        elif self.session.model is not None:
            self.banner.set_part("first_steps", "info",
                                 f"No model file beside {path.name}: the model on screen is kept; check that it "
                                 "fits this recording, and save it beside it with File > Save model as.")
        else:
            if self.form is not None:
                self.form.set_model(None)
            self.banner.set_part("first_steps", "info", FIRST_STEPS)
        self._update_frequency_table()
        self.run_analysis()
        return True

    def open_model(self, path: str | Path) -> bool:
        """Load a model file into the form and the document; problems are shown, not raised."""
        from dsp.errors import GearbenchError
        from dsp.model import load_model

        path = Path(path)
        try:
            model = load_model(path)
        except (GearbenchError, OSError) as exc:
            self.banner.set_part("model", "error", f"Could not load the model {path.name}: {_without_name(exc, path)}")
            if self.form is not None:
                self.form.load_file(path)   # marks the fields in the form
            return False
        self.banner.set_part("model", "info", None)
        if self.form is not None:
            self.form.set_model(model, n_channels=getattr(self.recording, "n_channels", None))
            self.form.path = path
        self.session.set_model(model, path)
        self._remember(path)
        return True

    def apply_model(self, model: Any) -> bool:
        """Use an edited model if it has no errors; otherwise show the problems and keep the last result."""
        from dsp.model import validate

        problems = validate(model, n_channels=getattr(self.recording, "n_channels", None))
        errors = [p for p in problems if p.severity == "error"]
        if errors:
            self._on_problems(problems)
            return False
        self.banner.set_part("model", "error", None)
        self.session.set_model(model)
        return True

    def _on_problems(self, problems: list) -> None:
        errors = [p for p in problems if getattr(p, "severity", "error") == "error"]
        if not errors:
            self.banner.set_part("model", "error", None)
            return
        more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
        shown = "the last good result stays on screen" if self.analysis is not None else "nothing can be analysed yet"
        self.banner.set_part("model", "error", f"Model: {errors[0]}{more}; {shown} until it is fixed.")

    def _on_form_file_loaded(self, path: str) -> None:
        self.session.model_path = Path(path)
        self._remember(Path(path))

    # ------------------------------------------------------------------ analysis
    def run_analysis(self) -> None:
        """Hand the document's current state to the worker (a running analysis is cancelled)."""
        self._rerun.stop()
        if self.session.recording_path is None or self.session.model is None:
            return
        recording = self.recording if self.recording is not None else None
        self.runner.submit(recording=recording, model=self.session.model, settings=self.session.settings,
                           recording_path=self.session.recording_path)
        self._set_busy(True, "analysing...")

    def _on_session_event(self, event) -> None:
        if event.kind == "model":
            self._default_shaft = self.session.selected_shaft   # set_model may announce its default next
            if event.value is not None:
                self.banner.set_part("first_steps", "info", None)
            self._fill_shafts()
            self._update_frequency_table()
            self._rerun.start()
        elif event.kind == "settings":
            self._rerun.start()
        elif event.kind == "shaft":
            if not self._auto_selecting and event.value != self._default_shaft:
                self.shaft_chosen = True    # the analyst (or a session file, or --shaft) chose it
            self._default_shaft = None
            if self.shaft_combo.currentText() != (event.value or ""):
                self.shaft_combo.setCurrentText(event.value or "")
        elif event.kind == "view":
            self.tabs.setCurrentWidget(self.views[event.value])

    def _on_shaft_combo(self, text: str) -> None:
        if text and text != self.session.selected_shaft and self.session.model is not None:
            self.session.select_shaft(text)

    def _on_sensor_selected(self, index: int) -> None:
        if index >= 0:
            self.session.update_settings(sensor_index=index)

    def _fill_shafts(self) -> None:
        from PySide6.QtGui import QColor

        model = self.session.model
        self.shaft_combo.blockSignals(True)
        self.shaft_combo.clear()
        for i, name in enumerate(model.shaft_names() if model is not None else ()):
            self.shaft_combo.addItem(name)
            self.shaft_combo.setItemData(i, QColor(theme.shaft_colour(model, name)), Qt.ItemDataRole.ForegroundRole)
        self.shaft_combo.setCurrentText(self.session.selected_shaft or "")
        self.shaft_combo.blockSignals(False)

    def _update_frequency_table(self) -> None:
        """Frequencies of the current model at the last known speed (the analysis refines it)."""
        from dsp.errors import GearbenchError
        from dsp.kinematics import frequency_table

        model = self.session.model
        if model is None or not model.shafts:
            self.frequency_panel.set_table(None)
            return
        reference = model.tach.shaft if model.tach.shaft in model.shaft_names() else model.shaft_names()[0]
        speed = getattr(self.analysis, "speed", None)
        if speed is not None and speed.shaft == reference:
            reference_hz = float(speed.mean_hz)
        elif model.tach.nominal_rpm:
            reference_hz = float(model.tach.nominal_rpm) / 60.0
        else:
            reference_hz = 1.0   # no speed yet: Hz column reads as orders of the reference shaft
        try:
            table = frequency_table(model, reference_hz, reference)
        except (GearbenchError, ValueError) as exc:
            self.frequency_panel.set_table(None)
            self.banner.set_part("model", "error", f"Model: {exc}")
            return
        self.frequency_panel.set_table(table)

    def _on_progress(self, _gen: int, fraction: float, text: str) -> None:
        self.progress.setValue(int(round(100 * fraction)))
        if text:
            self.status_label.setText(text)

    def _lane(self, gen: int) -> str:
        return self.runner.lane_of(gen) if hasattr(self.runner, "lane_of") else "current"

    def _on_finished(self, _gen: int, result: Any) -> None:
        if getattr(result, "lane", "current") != "current":
            return   # the baseline lane: workbench.baseline_panel.BaselineController
        self.recording = result.recording
        self.analysis = result.analysis
        self.last_error = None
        if self.form is not None:
            self.form.set_n_channels(self.recording.n_channels)
        self._follow_top_suspect(self.analysis)
        if not self.span_shown:
            self.span_shown = True
            span = default_spectrum_span_hz(self.analysis)
            if span is not None and self.session.view_options.spectrum_zoom_hz is None:
                self.session.set_view_options(spectrum_zoom_hz=span)
        for view in self.views.values():
            view.show_analysis(self.analysis, self.recording)
        self.results.show_analysis(self.analysis)
        self.frequency_panel.set_table(self.analysis.frequencies)
        self.banner.set_part("analysis", "error", None)
        warnings = list(self.analysis.warnings)
        self.banner.set_part("warnings", "warning", join_sentences(warnings) if warnings else None)
        self._set_busy(False, f"Analysed in {result.elapsed_s:.2f} s")
        self.analysis_shown.emit(self.analysis)
        self.idle.emit()

    def _on_failed(self, _gen: int, message: str) -> None:
        if self._lane(_gen) != "current":
            return
        self.last_error = message
        kept = " The last good result stays on screen." if self.analysis is not None else ""
        self.banner.set_part("analysis", "error", f"{message}.{kept}".replace("..", "."))
        self._set_busy(False, "Analysis stopped: " + message)
        self.analysis_failed.emit(message)
        self.idle.emit()

    def _on_cancelled(self, _gen: int) -> None:
        if self._lane(_gen) != "current":
            return
        self._set_busy(False, "Analysis cancelled" + ("; showing the last result" if self.analysis is not None else ""))
        self.idle.emit()

    def report_unexpected(self, message: str, trace: str = "") -> None:
        """The one place for unexpected errors: log them and say so in the window."""
        log.error("unexpected error: %s\n%s", message, trace)
        self.last_error = message
        self.banner.set_part("analysis", "error", f"Unexpected error ({message}); please report it with the log.")
        self._set_busy(False, "Unexpected error: " + message)
        self.analysis_failed.emit(message)
        self.idle.emit()

    def _set_busy(self, busy: bool, text: str) -> None:
        self.progress.setVisible(busy)
        if busy:
            self.progress.setValue(0)
        self.cancel_button.setEnabled(busy)
        self.status_label.setText(text)

    def is_busy(self) -> bool:
        return self.runner.is_busy() or self._rerun.isActive()

    # ------------------------------------------------------------------ navigation
    def choose_shaft(self, name: str) -> None:
        """Select ``name`` as the analyst's choice: new analyses no longer move to their top suspect."""
        self.shaft_chosen = True
        self.session.select_shaft(name)

    def _follow_top_suspect(self, analysis: Any) -> None:
        """Until the analyst chose a shaft for this recording, show the top suspect's shaft everywhere.

        A bearing top suspect also has its defect lines labelled on the envelope view
        (unless the analyst picked another suspect there).
        """
        suspects = tuple(getattr(analysis, "suspects", ()) or ())
        top = suspects[0] if suspects else None
        if not self.focus_chosen:
            component = str(getattr(top, "component", ""))
            self.views["envelope"].set_focus_bearing(
                component.partition(":")[2] if component.startswith("bearing:") else None,
                getattr(top, "kind", ""))
        if self.shaft_chosen or top is None:
            return
        shaft = getattr(top, "shaft", "") or self.results.shaft_of(getattr(top, "component", ""))
        model = self.session.model
        if shaft and model is not None and shaft in model.shaft_names():
            self._auto_selecting = True
            try:
                self.session.select_shaft(shaft)
            finally:
                self._auto_selecting = False

    def _on_component_chosen(self, component: str, kind: str) -> None:
        """The analyst clicked a suspect: a bearing's defect lines are labelled on the envelope view."""
        self.focus_chosen = True
        name = component.partition(":")[2] if component.startswith("bearing:") else None
        self.views["envelope"].set_focus_bearing(name, kind)

    def show_suspect(self, view: str, shaft: str) -> None:
        """Select the suspect's shaft and show the view that best supports it."""
        if shaft and self.session.model is not None and shaft in self.session.model.shaft_names():
            self.choose_shaft(shaft)
        if view in VIEW_NAMES:
            self.session.set_current_view(view)

    def show_sideband_family(self, carrier_hz: float, spacing_hz: float, _owner: str = "") -> None:
        """Show the spectrum with the sideband cursor on a family chosen in the ownership table."""
        self.session.set_current_view("spectrum")
        self.views["spectrum"].show_family(carrier_hz, spacing_hz)

    def closeEvent(self, event):  # noqa: N802 - Qt override
        document = getattr(self, "document", None)
        if document is not None and not document.confirm_close():
            event.ignore()
            return
        self.runner.shutdown()
        super().closeEvent(event)
