"""Bad input on the command line and in the window.

design.md, "The command line": bad input exits with status 2 and one line on stderr
that says what is wrong and how to fix it.  conventions.md rule 5: the window shows
problems in place (the banner, the form, the status bar) and does not crash.  The bad
files are written into a temporary folder with soundfile, numpy and the simulator
(3 s recordings, so that each analysis takes a fraction of a second).

The window tests at the end check defects found here and fixed since: a recording whose
model fails to load is not analysed with the previous model; a missing recording is
named; NaN samples do not break the views; unsaved model edits survive opening a
recording without a model file.
"""

from __future__ import annotations

import dataclasses
import json
import shutil

import numpy as np
import pytest
import soundfile as sf
from PySide6.QtCore import QSettings

from dsp.model import Bearing, GearTrain, Mesh, Planetary, Sensor, Shaft, Tach, save_model
from dsp.synth import simulate
from workbench import theme
from workbench.cli import main

FS = 25600
RPM = 1485.0
TIMEOUT_MS = 30_000


def _train(**changes) -> GearTrain:
    """The demo reducer's layout (demo_recordings/README.md)."""
    train = GearTrain(
        name="bad-input window test",
        sensors=(Sensor(name="acc", channel=0, scale=50.0, units="g"),),
        tach=Tach(shaft="input", channel=1, pulses_per_rev=1, nominal_rpm=RPM),
        shafts=(Shaft("input"), Shaft("intermediate"), Shaft("output")),
        meshes=(Mesh(name="stage 1", driver="input", driver_teeth=23, driven="intermediate", driven_teeth=71),),
        planetary=(Planetary(name="stage 2", sun_shaft="intermediate", sun_teeth=22, planet_teeth=29,
                             planets=3, ring_teeth=80, carrier_shaft="output"),),
        bearings=(Bearing("input DE", "input", 9, 12.7, 58.5, 0.0),),
    )
    return dataclasses.replace(train, **changes)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """Every bad recording (and its model beside it) in one folder; name -> path."""
    d = tmp_path_factory.mktemp("bad")
    s = simulate(_train(), rpm=RPM, duration_s=3.0, fs=FS, seed=21)
    frames = np.column_stack((s.acceleration_g / 50.0, s.tach))
    out = {}

    def put(name, data=frames, model=_train(), fs=FS, subtype="PCM_24", model_text=None):
        path = d / name
        if data is not None:
            sf.write(str(path), data, fs, subtype=subtype)
        if model_text is not None:
            path.with_suffix(".toml").write_text(model_text, encoding="utf-8")
        elif model is not None:
            save_model(model, path.with_suffix(".toml"))
        out[path.stem] = path
        return path

    good = put("good.flac")
    raw = good.read_bytes()
    corrupt = d / "corrupt.flac"
    corrupt.write_bytes(raw[:300] + np.random.default_rng(4).bytes(4000) + raw[4300:len(raw) // 2])
    save_model(_train(), corrupt.with_suffix(".toml"))
    out["corrupt"] = corrupt
    (d / "empty.flac").write_bytes(b"")
    save_model(_train(), d / "empty.toml")
    out["empty"] = d / "empty.flac"
    (d / "text.flac").write_text("time_s,accel_g\n0,0.1\n", encoding="utf-8")
    save_model(_train(), d / "text.toml")
    out["text"] = d / "text.flac"
    out["missing"] = d / "missing.flac"
    save_model(_train(), d / "missing.toml")
    good_text = (d / "good.toml").read_text(encoding="utf-8")
    put("syntax.flac", model_text=good_text.replace('name = "input"', 'name = "input', 1))
    put("unknown.flac", model_text=good_text.replace("[tach]", "[tach]\nspeed_rpm = 1485", 1))
    put("nochan.flac", model=_train(sensors=(Sensor(name="acc", channel=3, scale=50.0),)))
    put("notach.flac", data=frames[:, :1], model=_train(tach=Tach(shaft="input")))
    flat = frames.copy()
    flat[:, 1] = 0.0
    put("flattach.flac", data=flat)
    nan = frames.astype(np.float32)
    nan[1000:1011, 0] = np.nan
    put("nan.wav", data=nan, subtype="FLOAT")
    clipped = frames.copy()
    gain = float(2.0 / np.max(np.abs(s.acceleration_g)))
    clipped[:, 0] = np.clip(s.acceleration_g * gain, -1.0, 1.0 - 2.0**-23)
    put("clipped.flac", data=clipped, model=_train(sensors=(Sensor(name="acc", channel=0, scale=1.0 / gain),)))
    short = simulate(_train(), rpm=RPM, duration_s=1.0, fs=FS, seed=22)
    put("short.flac", data=np.column_stack((short.acceleration_g / 50.0, short.tach)))
    slow = simulate(_train(), rpm=RPM, duration_s=3.0, fs=2000.0, seed=23, n_harmonics=1)
    put("lowrate.flac", data=np.column_stack((slow.acceleration_g / 50.0, slow.tach)), fs=2000)
    return out


def _no_nan(token: str):
    raise AssertionError(f"{token} in the JSON output")  # design.md: plain JSON, no NaN


def _one_line_error(capsys, argv) -> str:
    code = main(argv)
    captured = capsys.readouterr()
    assert code == 2, captured  # design.md: bad input exits with status 2
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("gearbench: "), captured.err  # design.md: one line
    assert "Traceback" not in captured.err
    return lines[0].lower()


# (file, words the one line must hold: what is wrong, then how to fix it)
CLI_CASES = {
    "corrupt": ("corrupt.flac", "corrupt", "export it again"),
    "empty": ("empty.flac", "empty", "again"),
    "text": ("text.flac", "not an audio file", "export it again"),
    "missing": ("missing.flac", "check the path"),
    "syntax": ("syntax.toml", "not valid toml", "line", "fix"),
    "unknown": ("tach.speed_rpm", "unknown key", "spelling"),
    "nochan": ("channel", "3", "2 channel"),
    "notach": ("neither channel nor nominal_rpm", "add"),
}


@pytest.mark.parametrize("command", ["info", "analyze"])
@pytest.mark.parametrize("case", list(CLI_CASES))
def test_cli_bad_file_one_line_exit_2(files, capsys, command, case):
    message = _one_line_error(capsys, [command, str(files[case])])
    for word in CLI_CASES[case]:
        assert word.lower() in message, message


@pytest.mark.parametrize("command", ["info", "analyze"])
def test_cli_flat_tach(files, capsys, command):
    # a flat tach with tach.nominal_rpm set: both go on with the speed from the mesh, and say so
    assert main([command, "--json", str(files["flattach"])]) == 0
    doc = json.loads(capsys.readouterr().out, parse_constant=_no_nan)
    assert doc["speed"]["source"] == "estimated"
    assert doc["speed"]["mean_rpm"] == pytest.approx(RPM, rel=1e-3)  # the simulated speed
    assert any("flat" in w for w in doc["warnings"]), doc["warnings"]


# (file, words of the warning that goes with the partial result)
WARN_CASES = {
    "nan": ("11 samples", "nan or infinite", "set to 0"),
    "clipped": ("clipping", "re-record"),
    "short": ("short record", "output", "fewer than 3"),
    "lowrate": ("sample rate too low", "record faster"),
}


@pytest.mark.parametrize("case", list(WARN_CASES))
def test_cli_partial_results_with_a_warning(files, capsys, case):
    assert main(["analyze", "--json", str(files[case])]) == 0
    doc = json.loads(capsys.readouterr().out, parse_constant=_no_nan)
    assert any(all(w in x.lower() for w in WARN_CASES[case]) for x in doc["warnings"]), doc["warnings"]
    assert doc["speed"]["mean_rpm"] == pytest.approx(RPM, rel=2e-3)  # the simulated speed is still found
    assert doc["tsa"] and doc["overall"]["rms"] > 0
    if case == "clipped":
        assert doc["overall"]["clipped"] is True
    assert main(["info", str(files[case])]) == 0   # info reads it too
    capsys.readouterr()


def test_cli_info_warns_when_sensor_and_tach_are_swapped(files, tmp_path, capsys):
    data, fs = sf.read(str(files["good"]))
    swapped = tmp_path / "swapped.flac"
    sf.write(str(swapped), data[:, ::-1], fs, subtype="PCM_24")
    shutil.copy(files["good"].with_suffix(".toml"), swapped.with_suffix(".toml"))
    assert main(["info", "--json", str(swapped)]) == 0
    warnings = json.loads(capsys.readouterr().out)["warnings"]
    # the mesh read as a tach: about 23 x the 1485 rpm nameplate (23-tooth pinion, README)
    assert any("swapped" in w and "nominal_rpm" in w for w in warnings), warnings


def test_cli_empty_or_broken_model_for_frequencies(files, tmp_path, capsys):
    empty = tmp_path / "empty.toml"
    empty.write_text("", encoding="utf-8")
    assert "is empty" in _one_line_error(capsys, ["frequencies", str(empty), "--rpm", "1485"])
    message = _one_line_error(capsys, ["frequencies", str(files["syntax"].with_suffix(".toml")), "--rpm", "1485"])
    assert "not valid toml" in message


@pytest.mark.parametrize("option,value", [("--noise", "-1"), ("--duration", "0"), ("--rate", "500"),
                                          ("--rpm", "nan"), ("--missing-tach", "150")])
def test_cli_simulate_names_the_option_out_of_range(files, tmp_path, capsys, option, value):
    out = tmp_path / "s.flac"
    message = _one_line_error(capsys, ["simulate", str(files["good"].with_suffix(".toml")), "-o", str(out),
                                       option, value])
    assert option in message and "give" in message
    assert not out.exists()


def test_cli_open_without_a_display(files, capsys, monkeypatch):
    for name in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setattr("sys.platform", "linux")
    message = _one_line_error(capsys, ["open", str(files["good"])])
    assert "no display" in message and "--screenshot" in message


# ---------------------------------------------------------------------------------------------
# The window
# ---------------------------------------------------------------------------------------------

@pytest.fixture
def window(qtbot, tmp_path):
    from workbench.main_window import MainWindow

    theme.configure_pyqtgraph()
    w = MainWindow(settings_store=QSettings(str(tmp_path / "settings.ini"), QSettings.Format.IniFormat))
    qtbot.addWidget(w)
    w.resize(1200, 800)
    w.show()
    yield w
    w.runner.shutdown()


def _open_and_settle(qtbot, window, path):
    """Open a recording; wait until the analysis it started (if any) is over."""
    shown, failed = [], []
    window.analysis_shown.connect(shown.append)
    window.analysis_failed.connect(failed.append)
    window.open_recording(path)
    qtbot.waitUntil(lambda: not window.is_busy(), timeout=TIMEOUT_MS)
    return shown, failed


@pytest.mark.parametrize("case", ["empty", "text", "nochan"])
def test_window_bad_recording_gives_a_message_in_place(qtbot, window, files, case):
    shown, failed = _open_and_settle(qtbot, window, files[case])
    words = {"empty": ("empty", "again"), "text": ("not an audio file", "export it again"),
             "nochan": ("channel 3", "channel")}[case]
    text = window.banner.plain_text().lower()
    assert all(w in text for w in words), text  # conventions.md rule 5: the window shows it in place
    assert not shown and window.analysis is None
    assert window.isVisible()


@pytest.mark.parametrize("case", ["syntax", "unknown", "notach"])
def test_window_bad_model_is_named_in_the_banner(qtbot, window, files, case):
    _open_and_settle(qtbot, window, files[case])
    words = {"syntax": ("syntax.toml", "not valid toml"), "unknown": ("speed_rpm", "unknown key"),
             "notach": ("neither channel nor nominal_rpm",)}[case]
    text = window.banner.plain_text().lower()
    assert all(w in text for w in words), text  # conventions.md rule 5
    assert window.analysis is None   # nothing analysed with a model that did not load


@pytest.mark.parametrize("case", ["short", "lowrate", "clipped", "flattach"])
def test_window_partial_result_with_its_warning(qtbot, window, files, case):
    shown, failed = _open_and_settle(qtbot, window, files[case])
    assert shown and not failed
    text = window.banner.plain_text().lower()
    words = WARN_CASES.get(case, ("flat", "remove tach.channel", "check the tach wiring"))
    assert all(w in text for w in words), text  # conventions.md rule 5: the warning is shown in place
    assert window.views["tsa"].has_data() and window.views["spectrum"].has_data()


def test_window_typed_model_survives_a_bad_model_file(qtbot, window, files):
    _open_and_settle(qtbot, window, files["good"])
    typed = window.form.model()
    assert typed is not None
    assert window.open_model(files["unknown"].with_suffix(".toml")) is False
    assert window.form.model() == typed          # the form keeps what was there
    assert "speed_rpm" in window.banner.plain_text()


def test_window_does_not_analyse_with_the_previous_model(qtbot, window, files):
    _open_and_settle(qtbot, window, files["good"])
    _open_and_settle(qtbot, window, files["unknown"])
    assert "speed_rpm" in window.banner.plain_text()
    assert window.analysis is None


def test_window_missing_recording_with_a_model_beside_it_says_so(qtbot, window, files):
    shown, failed = _open_and_settle(qtbot, window, files["missing"])
    assert failed and "does not exist" in window.banner.plain_text()  # conventions.md rule 5


def test_window_missing_recording_says_so(qtbot, window, tmp_path):
    _open_and_settle(qtbot, window, tmp_path / "nowhere.flac")
    text = window.banner.plain_text()
    assert "nowhere.flac" in text and ("does not exist" in text or "not found" in text)


def test_window_nan_samples_do_not_break_the_views(qtbot, window, files):
    with qtbot.captureExceptions() as exceptions:
        shown, failed = _open_and_settle(qtbot, window, files["nan"])
    assert not exceptions, exceptions[0][1]
    assert shown and not failed
    assert all(view.has_data() for view in window.views.values())


def test_window_missing_model_keeps_the_file_untouched(qtbot, window, files, tmp_path):
    # opening a recording must never write to its model file (nothing the user saved is changed)
    copy = tmp_path / "unknown.flac"
    shutil.copy(files["unknown"], copy)
    shutil.copy(files["unknown"].with_suffix(".toml"), copy.with_suffix(".toml"))
    before = copy.with_suffix(".toml").read_bytes()
    _open_and_settle(qtbot, window, copy)
    assert copy.with_suffix(".toml").read_bytes() == before


def test_window_unsaved_model_edits_survive_opening_a_recording_without_model(qtbot, window, files, tmp_path):
    _open_and_settle(qtbot, window, files["good"])
    table = window.form.tables["meshes"]
    with qtbot.waitSignal(window.analysis_shown, timeout=TIMEOUT_MS):
        table.table.item(0, table.column_index("driven_teeth")).setText("70")
    lonely = tmp_path / "lonely.flac"
    shutil.copy(files["good"], lonely)           # the same machine, next measurement, no model file
    window.open_recording(lonely)
    typed = window.form.model()
    assert typed is not None and typed.meshes[0].driven_teeth == 70
