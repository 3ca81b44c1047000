"""``gearbench open``: open a recording in the workbench window.

With no recording, the bundled demo (``demo_recordings/03_broken_tooth.flac``) is
opened.  The window paints first; the analysis then runs in the background.
``--screenshot PATH`` waits until the analysis is done and every view is drawn,
saves the window as PNG and exits (status 2 with one line when something fails).
Setting ``GEARBENCH_TIMING=1`` prints timestamps (``gearbench-timing {json}`` lines on
stderr) for the GUI benchmark.
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path

from workbench.views import VIEW_CLASSES

HELP = "open a recording in the workbench window"
VIEWS = tuple(VIEW_CLASSES)      # workbench.views: the one registry of views (no Qt)
SCREENSHOT_SIZE = "1600x1000"
DEMO_NAME = "03_broken_tooth.flac"
SCREENSHOT_TIMEOUT_S = 120.0


def demo_recording() -> Path:
    import workbench

    return Path(workbench.__file__).resolve().parents[1] / "demo_recordings" / DEMO_NAME


def add_arguments(parser) -> None:
    import argparse

    parser.add_argument("recording", nargs="?", help="recording file (FLAC, WAV, ...); default: the bundled demo")
    parser.add_argument("--model", metavar="M", help="model file (default: the .toml with the same name beside the recording)")
    parser.add_argument("--screenshot", metavar="PATH", help="save the window as PNG when every view is drawn, then exit")
    parser.add_argument("--view", choices=VIEWS, help="view to show first")
    parser.add_argument("--shaft", metavar="NAME",
                        help="shaft to select first (default: the top suspect's shaft, else the shaft the tach watches)")
    parser.add_argument("--size", metavar="WxH", help="window size in pixels (default 1600x1000, or the screen's "
                        "free area when smaller; a --screenshot is always 1600x1000 unless --size is given)")
    parser.add_argument("--timing", action="store_true", help=argparse.SUPPRESS)


def _parse_size(text: str) -> tuple[int, int]:
    from dsp.errors import GearbenchError

    try:
        w, h = (int(v) for v in text.lower().split("x"))
    except ValueError:
        raise GearbenchError(f"--size {text!r} is not WIDTHxHEIGHT; give e.g. --size 1600x1000") from None
    if not (320 <= w <= 10000 and 240 <= h <= 10000):
        raise GearbenchError(f"--size {text!r} is out of range; give between 320x240 and 10000x10000 pixels")
    return w, h


def _choose_platform(*, headless_ok: bool) -> None:
    """Make sure Qt has somewhere to draw before it starts (Qt aborts the process otherwise).

    On Linux without ``DISPLAY`` or ``WAYLAND_DISPLAY`` (a server, an ssh session)
    and no ``QT_QPA_PLATFORM`` chosen: a ``--screenshot`` run draws offscreen; an
    interactive run stops with one line that says what to do.
    """
    from dsp.errors import GearbenchError

    if not sys.platform.startswith("linux") or os.environ.get("QT_QPA_PLATFORM"):
        return
    if os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY"):
        return
    if headless_ok:
        os.environ["QT_QPA_PLATFORM"] = "offscreen"
        return
    raise GearbenchError("no display to open the window on (DISPLAY and WAYLAND_DISPLAY are unset); run gearbench "
                         "in a desktop session, or use --screenshot PATH to draw the views without a display")


#: Qt notices that say nothing to the user (the offscreen plugin's missing window-manager hints).
_QT_NOISE = ("propagateSizeHints",)


def _qt_message(mode, context, message: str) -> None:
    """Qt's messages on stderr as Qt prints them, less the known harmless notices."""
    if any(n in message for n in _QT_NOISE):
        return
    print(message, file=sys.stderr)


class _Timer:
    """Prints ``gearbench-timing {"event": ..., "t": wall-clock s}`` lines when enabled."""

    def __init__(self, enabled: bool):
        self.enabled = enabled

    def mark(self, event: str, **extra) -> None:
        if self.enabled:
            print("gearbench-timing " + json.dumps({"event": event, "t": time.time(), **extra}), file=sys.stderr, flush=True)


def run(args) -> int:
    from dsp.errors import GearbenchError

    timer = _Timer(bool(args.timing or os.environ.get("GEARBENCH_TIMING")))
    timer.mark("run")
    recording = Path(args.recording) if args.recording else demo_recording()
    if not recording.is_file():
        hint = "; reinstall gearbench or pass a recording" if not args.recording else "; check the path"
        raise GearbenchError(f"recording not found: {recording}{hint}")
    model = Path(args.model) if args.model else None
    if model is not None and not model.is_file():
        raise GearbenchError(f"model file not found: {model}; check the path")
    width, height = _parse_size(args.size or SCREENSHOT_SIZE)
    screenshot = Path(args.screenshot) if args.screenshot else None
    if screenshot is not None:
        if screenshot.suffix.lower() != ".png":
            raise GearbenchError(f"--screenshot {screenshot} must end in .png")
        if model is None and not recording.with_suffix(".toml").is_file():
            raise GearbenchError(f"no model for {recording.name}: put {recording.stem}.toml beside it or pass --model")

    _choose_platform(headless_ok=screenshot is not None)
    from PySide6.QtCore import QTimer, qInstallMessageHandler
    from PySide6.QtWidgets import QApplication

    qInstallMessageHandler(_qt_message)

    app = QApplication.instance() or QApplication([sys.argv[0]])
    app.setApplicationName("gearbench")
    from workbench import theme

    theme.configure_pyqtgraph()
    from workbench.main_window import MainWindow

    window = MainWindow()   # 1600x1000, or the screen's free area when it is smaller
    if args.size or screenshot is not None:
        window.resize(width, height)
    if args.view:
        window.session.set_current_view(args.view)
    outcome: dict[str, object] = {"code": 0, "message": None}

    def finish(code: int, message: str | None = None) -> None:
        outcome["code"], outcome["message"] = code, message
        window.runner.cancel()
        app.exit(code)

    def hook(kind, value, tb):  # one handler for anything unexpected in the window
        import traceback

        window.report_unexpected(f"{kind.__name__}: {value}", "".join(traceback.format_exception(kind, value, tb)))
        if screenshot is not None:
            finish(2, f"unexpected error while drawing: {kind.__name__}: {value}")

    previous_hook = sys.excepthook
    sys.excepthook = hook

    def start() -> None:
        timer.mark("first_paint")
        window.open_recording(recording, model)
        if screenshot is not None and not window.is_busy():
            # nothing was started: the model could not be used; the banner says why
            problem = window.banner.plain_text().replace("\n", "; ") or "nothing to analyse"
            finish(2, problem)
            return
        if args.shaft:
            names = window.session.model.shaft_names() if window.session.model is not None else ()
            if args.shaft not in names:
                finish(2, f"--shaft {args.shaft!r} is not a shaft of the model; choose one of: {', '.join(names)}")
                return
            window.choose_shaft(args.shaft)   # the analyst's choice: not moved to the top suspect

    def shown(_analysis) -> None:
        timer.mark("analysis_done")
        app.processEvents()
        for view in window.views.values():   # render every view once, hidden tabs included
            view.grab()
        timer.mark("views_drawn", all_have_data=all(v.has_data() for v in window.views.values()))
        if timer.enabled:
            _time_shaft_switch(window, app, timer)
        if screenshot is not None:
            QTimer.singleShot(100, save_screenshot)

    def save_screenshot() -> None:
        app.processEvents()
        empty = [name for name, view in window.views.items() if not view.has_data()]
        image = window.grab()
        screenshot.parent.mkdir(parents=True, exist_ok=True)
        if not image.save(str(screenshot), "PNG"):
            finish(2, f"could not write {screenshot}; check the folder is writable")
            return
        timer.mark("screenshot_saved", empty_views=empty)
        finish(0)

    def failed(message: str) -> None:
        if screenshot is not None:
            finish(2, message)

    window.first_painted.connect(start)
    window.analysis_shown.connect(shown)
    window.analysis_failed.connect(failed)
    if screenshot is not None:
        QTimer.singleShot(int(SCREENSHOT_TIMEOUT_S * 1000),
                          lambda: finish(2, f"the analysis took longer than {SCREENSHOT_TIMEOUT_S:.0f} s; no screenshot"))
    window.show()
    try:
        code = app.exec()
    finally:
        sys.excepthook = previous_hook
        window.runner.shutdown()
    if outcome["message"]:
        raise GearbenchError(str(outcome["message"]))
    return int(outcome["code"] or code)


def _time_shaft_switch(window, app, timer: _Timer) -> None:
    """Redraw time of the visible view after selecting each other shaft (benchmark only)."""
    session = window.session
    names = list(session.model.shaft_names()) if session.model is not None else []
    first = session.selected_shaft
    times = {}
    for name in [n for n in names if n != first] + ([first] if first else []):
        t0 = time.perf_counter()
        session.select_shaft(name)
        window.centralWidget().repaint()
        app.processEvents()
        times[name] = time.perf_counter() - t0
    timer.mark("shaft_switch", seconds=times, view=session.current_view)
