"""Run the analysis off the GUI thread.

The GUI thread builds an immutable :class:`AnalysisRequest` (recording, model,
settings and a generation number) and hands it to :class:`AnalysisRunner`, which
runs one request at a time on one worker thread.  A newer request sets the cancel
flag of the older one (``dsp.analysis.analyze`` checks it between steps); results
of stale generations are dropped.  A request belongs to a ``lane`` (``"current"``
by default; the window also uses ``"baseline"`` for the healthy baseline recording):
a newer request cancels only the older ones of its own lane, and the lanes share the
one worker thread.  Everything comes back by Qt signal, delivered in the GUI thread:

- ``started(generation)``
- ``progress(generation, fraction, text)``
- ``finished(generation, JobResult)``
- ``failed(generation, message)``: a :class:`dsp.errors.GearbenchError`, in plain words
- ``cancelled(generation)``
- ``crashed(generation, message, traceback_text)``: anything unexpected; the window
  routes it to its one error handler, which logs and shows it.

The worker never touches widgets: it only reads its request.
"""

from __future__ import annotations

import logging
import threading
import traceback
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable

from PySide6.QtCore import QObject, QRunnable, QThreadPool, Signal

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class AnalysisRequest:
    """Everything one analysis needs; built in the GUI thread, read by the worker.

    ``recording`` may be ``None`` with ``recording_path`` set: the worker then reads the
    file first (reading a long record is slow, so it belongs off the GUI thread).
    """

    generation: int
    recording: Any                 # dsp.recording.Recording or None
    model: Any                     # dsp.model.GearTrain
    settings: Any                  # dsp.analysis.Settings
    recording_path: Path | None = None
    lane: str = "current"


@dataclass(frozen=True)
class JobResult:
    """What comes back: the recording that was analysed and the analysis."""

    generation: int
    recording: Any
    analysis: Any
    elapsed_s: float
    lane: str = "current"


def default_analyze(recording, model, settings, progress, cancel):
    """``dsp.analysis.analyze``, imported in the worker so the window paints first."""
    from dsp.analysis import analyze

    return analyze(recording, model, settings, progress=progress, cancel=cancel)


def default_read(path: Path):
    from dsp.recording import read_recording

    return read_recording(path)


class _Signals(QObject):
    """What a job reports (generation first); the runner re-emits the same signals for the current job."""

    started = Signal(int)
    progress = Signal(int, float, str)
    finished = Signal(int, object)
    failed = Signal(int, str)
    cancelled = Signal(int)
    crashed = Signal(int, str, str)


class _Job(QRunnable):
    def __init__(self, request: AnalysisRequest, cancel_event: threading.Event, signals: _Signals,
                 analyze_fn: Callable, read_fn: Callable):
        super().__init__()
        self.setAutoDelete(True)
        self.request = request
        self.cancel_event = cancel_event
        self.signals = signals
        self.analyze_fn = analyze_fn
        self.read_fn = read_fn

    def run(self) -> None:  # worker thread
        import time

        from dsp.errors import Cancelled, GearbenchError

        request, gen, signals = self.request, self.request.generation, self.signals
        if self.cancel_event.is_set():
            signals.cancelled.emit(gen)
            return
        signals.started.emit(gen)
        t0 = time.perf_counter()

        def cancel() -> bool:
            return self.cancel_event.is_set()

        def progress(fraction: float, text: str = "") -> None:
            signals.progress.emit(gen, float(fraction), str(text))

        try:
            recording = request.recording
            if recording is None:
                progress(0.0, f"reading {Path(request.recording_path).name}")
                recording = self.read_fn(request.recording_path)
                if cancel():
                    raise Cancelled()
            analysis = self.analyze_fn(recording, request.model, request.settings, progress, cancel)
            if cancel():
                raise Cancelled()
        except Cancelled:
            signals.cancelled.emit(gen)
        except GearbenchError as exc:
            signals.failed.emit(gen, str(exc))
        except FileNotFoundError as exc:
            signals.failed.emit(gen, f"file not found: {exc.filename}; check the path")
        except Exception as exc:  # noqa: BLE001 - one place reports everything unexpected
            signals.crashed.emit(gen, f"{type(exc).__name__}: {exc}", traceback.format_exc())
        else:
            signals.finished.emit(gen, JobResult(gen, recording, analysis, time.perf_counter() - t0, request.lane))


class AnalysisRunner(_Signals):
    """One worker thread; newest request wins.

    Parameters
    ----------
    analyze_fn : callable, optional
        ``analyze_fn(recording, model, settings, progress, cancel) -> Analysis``; the
        default is :func:`dsp.analysis.analyze`.
    read_fn : callable, optional
        ``read_fn(path) -> Recording``; the default is :func:`dsp.recording.read_recording`.
    """

    # started, progress, finished, failed, cancelled, crashed: from _Signals
    busy_changed = Signal(bool)

    def __init__(self, parent: QObject | None = None, *, analyze_fn: Callable | None = None,
                 read_fn: Callable | None = None):
        super().__init__(parent)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(1)
        self._analyze_fn = analyze_fn or default_analyze
        self._read_fn = read_fn or default_read
        self._generation = 0
        self._cancel_events: dict[int, threading.Event] = {}
        self._lanes: dict[int, str] = {}          # generation -> lane
        self._latest: dict[str, int] = {}         # lane -> newest generation
        self._signals = _Signals()
        self._signals.started.connect(self._on_started)
        self._signals.progress.connect(self._on_progress)
        self._signals.finished.connect(self._on_finished)
        self._signals.failed.connect(self._on_failed)
        self._signals.cancelled.connect(self._on_cancelled)
        self._signals.crashed.connect(self._on_crashed)

    # -- GUI thread API
    @property
    def generation(self) -> int:
        """The generation of the newest request."""
        return self._generation

    def is_busy(self) -> bool:
        return bool(self._cancel_events)

    def submit(self, *, recording: Any, model: Any, settings: Any, recording_path: Path | None = None,
               lane: str = "current") -> AnalysisRequest:
        """Queue a new analysis; any older one of the same ``lane`` is cancelled and its result dropped."""
        if recording is None and recording_path is None:
            raise ValueError("give the recording or the path to read it from")
        self.cancel(lane=lane)
        self._generation += 1
        request = AnalysisRequest(self._generation, recording, model, settings,
                                  None if recording_path is None else Path(recording_path), lane)
        event = threading.Event()
        self._cancel_events[request.generation] = event
        self._lanes[request.generation] = lane
        self._latest[lane] = request.generation
        self._pool.start(_Job(request, event, self._signals, self._analyze_fn, self._read_fn))
        self.busy_changed.emit(True)
        return request

    def cancel(self, *_args, lane: str | None = None) -> None:
        """Ask every running or queued request (of ``lane`` only, when given) to stop.

        Extra positional arguments (the ``checked`` flag of a button's ``clicked``) are ignored.
        """
        if not isinstance(lane, str):
            lane = None
        for gen, event in self._cancel_events.items():
            if lane is None or self._lanes.get(gen, "current") == lane:
                event.set()

    def lane_of(self, gen: int) -> str:
        """The lane of generation ``gen`` (``"current"`` when unknown)."""
        return self._lanes.get(gen, "current")

    def wait(self, timeout_ms: int = -1) -> bool:
        """Block until the worker is idle (for shutdown and tests)."""
        return self._pool.waitForDone(timeout_ms)

    def shutdown(self) -> None:
        self.cancel()
        self._pool.clear()
        self._pool.waitForDone(10_000)

    # -- relays (GUI thread); stale generations are dropped
    def _current(self, gen: int) -> bool:
        return gen == self._latest.get(self._lanes.get(gen, "current"), self._generation)

    def _done(self, gen: int) -> None:
        self._cancel_events.pop(gen, None)
        if not self._cancel_events:
            self.busy_changed.emit(False)

    def _on_started(self, gen: int) -> None:
        if self._current(gen):
            self.started.emit(gen)

    def _on_progress(self, gen: int, fraction: float, text: str) -> None:
        if self._current(gen) and not self._cancel_events.get(gen, threading.Event()).is_set():
            self.progress.emit(gen, fraction, text)

    def _on_finished(self, gen: int, result: object) -> None:
        stale = not self._current(gen) or self._cancel_events.get(gen, threading.Event()).is_set()
        self._done(gen)
        if stale:
            log.debug("dropping result of stale analysis %d", gen)
            if self._current(gen):
                self.cancelled.emit(gen)
            return
        self.finished.emit(gen, result)

    def _on_failed(self, gen: int, message: str) -> None:
        self._done(gen)
        if self._current(gen):
            self.failed.emit(gen, message)

    def _on_cancelled(self, gen: int) -> None:
        self._done(gen)
        if self._current(gen):
            self.cancelled.emit(gen)

    def _on_crashed(self, gen: int, message: str, trace: str) -> None:
        self._done(gen)
        log.error("analysis %d failed unexpectedly:\n%s", gen, trace)
        if self._current(gen):
            self.crashed.emit(gen, message, trace)
