"""Tests of the background analysis runner (pytest-qt, offscreen).

The analysis function is injected so the runner's rules can be checked exactly:
one worker, newest request wins, stale results dropped, errors reported as signals.
"""

from __future__ import annotations

import threading
import time

import pytest

from dsp.errors import AnalysisError
from workbench.jobs import AnalysisRunner


class SlowAnalysis:
    """Counts calls and works for ``duration_s`` while polling the cancel flag, like analyze does."""

    def __init__(self, duration_s: float = 2.0):
        self.duration_s = duration_s
        self.calls: list[object] = []
        self.threads: set[int] = set()
        self.stopped_early: list[object] = []

    def __call__(self, recording, model, settings, progress, cancel):
        self.calls.append(settings)
        self.threads.add(threading.get_ident())
        t0 = time.perf_counter()
        while time.perf_counter() - t0 < self.duration_s:
            progress((time.perf_counter() - t0) / self.duration_s, "working")
            if cancel():
                from dsp.errors import Cancelled

                self.stopped_early.append(settings)
                raise Cancelled()
            time.sleep(0.01)
        return ("analysis of", settings)


@pytest.fixture
def runner(qtbot):
    made = []

    def make(fn):
        r = AnalysisRunner(analyze_fn=fn, read_fn=lambda path: ("recording", path))
        made.append(r)
        return r

    yield make
    for r in made:
        r.shutdown()


def test_result_comes_back_in_the_gui_thread(runner, qtbot):
    fn = SlowAnalysis(0.05)
    r = runner(fn)
    seen_in = []
    r.finished.connect(lambda gen, result: seen_in.append(threading.get_ident()))
    with qtbot.waitSignal(r.finished, timeout=5000) as blocker:
        request = r.submit(recording=None, model="m", settings="s1", recording_path="x.flac")
    generation, result = blocker.args
    assert generation == request.generation == 1  # conventions.md rule 6 (napari-style worker), no outside source
    assert result.analysis == ("analysis of", "s1")  # conventions.md rule 6 (napari-style worker), no outside source
    assert result.recording == ("recording", request.recording_path)   # read by the worker
    assert seen_in == [threading.get_ident()]                           # delivered to the GUI thread
    assert threading.get_ident() not in fn.threads                      # computed elsewhere
    assert not r.is_busy()  # conventions.md rule 6 (napari-style worker), no outside source


def test_newer_request_cancels_the_older_and_only_the_newest_is_shown(runner, qtbot):
    fn = SlowAnalysis(3.0)
    r = runner(fn)
    finished, cancelled = [], []
    r.finished.connect(lambda gen, res: finished.append((gen, res.analysis)))
    r.cancelled.connect(cancelled.append)
    r.submit(recording="rec", model="m", settings="old")
    qtbot.waitUntil(lambda: fn.calls == ["old"], timeout=3000)
    fn.duration_s = 0.05
    with qtbot.waitSignal(r.finished, timeout=5000):
        r.submit(recording="rec", model="m", settings="new")
    assert fn.stopped_early == ["old"]       # the cancel flag reached the running analysis
    assert finished == [(2, ("analysis of", "new"))]  # conventions.md rule 6 (napari-style worker), no outside source
    assert cancelled == []                   # the old generation is stale: dropped silently
    assert len(fn.threads) == 1              # one worker thread for both requests


def test_stale_result_is_dropped_even_if_it_finishes(runner, qtbot):
    # an analysis that ignores the cancel flag and still finishes must not reach the window
    release = threading.Event()

    def stubborn(recording, model, settings, progress, cancel):
        if settings == "old":
            release.wait(5)
        return settings

    r = runner(stubborn)
    shown = []
    r.finished.connect(lambda gen, res: shown.append(res.analysis))
    r.submit(recording="rec", model="m", settings="old")
    r.submit(recording="rec", model="m", settings="new")
    release.set()
    qtbot.waitUntil(lambda: not r.is_busy(), timeout=5000)
    qtbot.wait(50)
    assert shown == ["new"]  # conventions.md rule 6 (napari-style worker), no outside source


def test_cancel_reports_cancelled_and_no_result(runner, qtbot):
    fn = SlowAnalysis(5.0)
    r = runner(fn)
    finished = []
    r.finished.connect(lambda *a: finished.append(a))
    r.progress.connect(lambda gen, fraction, text: r.cancel())
    with qtbot.waitSignal(r.cancelled, timeout=5000) as blocker:
        r.submit(recording="rec", model="m", settings="s")
    assert blocker.args == [1]  # conventions.md rule 6 (napari-style worker), no outside source
    assert fn.stopped_early == ["s"]  # conventions.md rule 6 (napari-style worker), no outside source
    assert finished == []  # conventions.md rule 6 (napari-style worker), no outside source
    assert not r.is_busy()  # conventions.md rule 6 (napari-style worker), no outside source


def test_domain_error_comes_back_in_plain_words(runner, qtbot):
    def refuses(*_args):
        raise AnalysisError("the time range holds 0.2 s; choose at least 1 s or analyse the whole record")

    r = runner(refuses)
    with qtbot.waitSignal(r.failed, timeout=5000) as blocker:
        r.submit(recording="rec", model="m", settings="s")
    assert blocker.args == [1, "the time range holds 0.2 s; choose at least 1 s or analyse the whole record"]  # conventions.md rule 5: the message reaches the user unchanged


def test_unexpected_error_goes_to_the_crash_signal_with_its_traceback(runner, qtbot, caplog):
    def broken(*_args):
        return [][1]

    r = runner(broken)
    with qtbot.waitSignal(r.crashed, timeout=5000) as blocker:
        r.submit(recording="rec", model="m", settings="s")
    generation, message, trace = blocker.args
    assert message.startswith("IndexError")  # conventions.md rule 5, no outside source
    assert "broken" in trace                 # the traceback names the failing function
    assert "failed unexpectedly" in caplog.text  # conventions.md rule 5: logged


def test_corrupt_file_is_reported_by_the_real_reader(qtbot, tmp_path):
    bad = tmp_path / "bad.flac"
    bad.write_bytes(b"this is not audio" * 64)
    r = AnalysisRunner(analyze_fn=lambda *a: pytest.fail("analysis must not run on an unreadable file"))
    try:
        with qtbot.waitSignal(r.failed, timeout=10000) as blocker:
            r.submit(recording=None, model="m", settings="s", recording_path=bad)
    finally:
        r.shutdown()
    assert "bad.flac" in blocker.args[1]     # the message names the file
