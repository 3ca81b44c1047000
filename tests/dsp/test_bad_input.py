"""Bad input at the numeric core: which error or warning, and what its message says.

Every bad file is written into ``tmp_path`` here (soundfile + numpy, or the simulator
for a realistic short recording).  A good message says what is wrong and how to fix it;
the assertions check for both halves.  Partial results are checked where the data allow
them (a NaN stretch, clipping, a short record, a low sample rate).
"""

from __future__ import annotations

import dataclasses
import re

import numpy as np
import pytest
import soundfile as sf

from dsp.analysis import analyze
from dsp.errors import GearbenchError, ModelError, RecordingError, TachError
from dsp.model import Bearing, GearTrain, Mesh, Planetary, Sensor, Shaft, Tach, load_model, loads_model, validate
from dsp.recording import read_recording, signal_quality
from dsp.synth import Fault, simulate, write_simulation
from dsp.tach import detect_pulses

FS = 25600.0
RPM = 1485.0


def _train() -> GearTrain:
    """The demo reducer's layout (demo_recordings/README.md): 23/71, then a 22/29/80 planetary."""
    return GearTrain(
        name="bad-input test reducer",
        sensors=(Sensor(name="acc", channel=0, scale=50.0, units="g"),),
        tach=Tach(shaft="input", channel=1, pulses_per_rev=1, nominal_rpm=RPM),
        shafts=(Shaft("input"), Shaft("intermediate"), Shaft("output")),
        meshes=(Mesh(name="stage 1", driver="input", driver_teeth=23, driven="intermediate", driven_teeth=71),),
        planetary=(Planetary(name="stage 2", sun_shaft="intermediate", sun_teeth=22, planet_teeth=29,
                             planets=3, ring_teeth=80, carrier_shaft="output"),),
        bearings=(Bearing("input DE", "input", 9, 12.7, 58.5, 0.0),),
    )


@pytest.fixture(scope="module")
def sim():
    """A 3 s healthy recording (simulated) and its model: about 74 input revolutions."""
    return simulate(_train(), rpm=RPM, duration_s=3.0, fs=FS, seed=11)


def _write(tmp_path, name, frames, fs=FS, subtype="PCM_24"):
    path = tmp_path / name
    sf.write(str(path), frames, int(fs), subtype=subtype)
    return path


def _frames(sim, scale=50.0):
    return np.column_stack((sim.acceleration_g / scale, sim.tach))


def _says(message: str, *words: str) -> bool:
    low = message.lower()
    return all(w.lower() in low for w in words)


# ---------------------------------------------------------------------------------------------
# Files that are not recordings
# ---------------------------------------------------------------------------------------------

def test_missing_file(tmp_path):
    with pytest.raises(RecordingError) as e:
        read_recording(tmp_path / "nowhere.flac")
    assert _says(str(e.value), "nowhere.flac", "does not exist", "check the path")


def test_empty_file(tmp_path):
    path = tmp_path / "empty.flac"
    path.write_bytes(b"")
    with pytest.raises(RecordingError) as e:
        read_recording(path)
    assert _says(str(e.value), "empty", "again")


def test_text_file_renamed_flac(tmp_path):
    path = tmp_path / "notes.flac"
    path.write_text("time_s,accel_g\n0.0,0.1\n0.001,0.2\n", encoding="utf-8")
    with pytest.raises(RecordingError) as e:
        read_recording(path)
    assert _says(str(e.value), "notes.flac", "not an audio file", "export it again")


def test_corrupt_flac(tmp_path, sim):
    good = _write(tmp_path, "good.flac", _frames(sim))
    raw = good.read_bytes()
    noise = np.random.default_rng(5).integers(0, 256, 4000, dtype=np.uint8).tobytes()
    bad = tmp_path / "corrupt.flac"
    bad.write_bytes(raw[:300] + noise + raw[4300:len(raw) // 2])   # garbled frames and a cut tail
    with pytest.raises(RecordingError) as e:
        read_recording(bad)
    assert _says(str(e.value), "corrupt.flac", "corrupt", "export it again")


def test_truncated_flac_says_where_it_breaks_off(tmp_path, sim):
    good = _write(tmp_path, "good.flac", _frames(sim))
    raw = good.read_bytes()
    cut = tmp_path / "cut.flac"
    cut.write_bytes(raw[:int(0.6 * len(raw))])        # a copy interrupted at 60 %
    with pytest.raises(RecordingError) as e:
        read_recording(cut)
    m = re.search(r"breaks off after ([0-9.]+) s of the ([0-9.]+) s", str(e.value))
    assert m, str(e.value)
    # soundfile as reference: the header announces the whole 3 s; some of it decodes
    assert float(m.group(2)) == pytest.approx(sf.info(str(good)).duration, abs=0.01)
    assert 0.5 < float(m.group(1)) < float(m.group(2))
    assert _says(str(e.value), "truncated", "copy it again")


def test_folder_instead_of_file(tmp_path):
    with pytest.raises(RecordingError) as e:
        read_recording(tmp_path)
    assert _says(str(e.value), "folder")


# ---------------------------------------------------------------------------------------------
# Bad models
# ---------------------------------------------------------------------------------------------

def test_model_with_a_syntax_error_names_the_line(tmp_path):
    path = tmp_path / "m.toml"
    path.write_text('name = "unterminated\n[[shafts]]\nname = "input"\n', encoding="utf-8")
    with pytest.raises(ModelError) as e:
        load_model(path)
    # tomllib reports the line of the error (Python docs, tomllib.TOMLDecodeError)
    assert _says(str(e.value), "m.toml", "not valid toml", "line 1", "fix")


def test_model_with_unknown_keys_names_every_one():
    text = """
name = "x"
colour = "blue"
[tach]
shaft = "a"
nominal_rpm = 1000
speed_rpm = 1000
[[shafts]]
name = "a"
"""
    with pytest.raises(ModelError) as e:
        loads_model(text)
    fields = {p.field for p in e.value.problems}
    assert {"colour", "tach.speed_rpm"} <= fields   # design.md: unknown keys are an error that names them
    assert any(_says(p.message, "unknown key", "spelling") for p in e.value.problems)


def test_empty_model_file(tmp_path):
    path = tmp_path / "empty.toml"
    path.write_text("\n  \n", encoding="utf-8")
    with pytest.raises(ModelError) as e:
        load_model(path)
    assert _says(str(e.value), "empty", "write the gear-train model")


def test_sensor_channel_the_recording_lacks():
    train = dataclasses.replace(_train(), sensors=(Sensor(name="acc", channel=3, scale=50.0),))
    errors = [p for p in validate(train, n_channels=2) if p.severity == "error"]
    assert [p.field for p in errors] == ["sensors[0].channel"]
    assert _says(errors[0].message, "3", "only 2 channel", "pick an existing channel")


def test_no_tach_channel_and_no_nominal_speed():
    train = dataclasses.replace(_train(), tach=Tach(shaft="input"))
    errors = [p for p in validate(train) if p.severity == "error"]
    assert [p.field for p in errors] == ["tach"]
    assert _says(errors[0].message, "neither channel nor nominal_rpm", "add")


# ---------------------------------------------------------------------------------------------
# Tach problems
# ---------------------------------------------------------------------------------------------

def test_flat_tach_says_how_to_go_on_without_it():
    with pytest.raises(TachError) as e:
        detect_pulses(np.zeros(10_000, dtype=np.float32), FS)
    assert _says(str(e.value), "flat", "wiring", "remove tach.channel", "nominal_rpm")


def test_tach_with_two_pulses_only():
    x = np.zeros(20_000)
    x[1000:1100] = x[9000:9100] = 1.0
    with pytest.raises(TachError) as e:
        detect_pulses(x, FS)
    assert _says(str(e.value), "2 pulses", "at least 3", "edge")


def test_missing_tach_pulses_are_inserted_where_the_truth_has_them():
    s = simulate(_train(), rpm=RPM, duration_s=3.0, fs=FS, seed=12, missing_tach_pct=10.0)
    n_missing = int(np.count_nonzero(s.tach_missing))
    assert n_missing >= 3
    p = detect_pulses(np.asarray(s.tach), FS)
    # simulation truth: the pulses left out of the channel are known (s.tach_missing)
    assert p.n_repaired == n_missing
    truth = s.tach_times_s[s.tach_missing]
    inserted = np.asarray(p.times_s)[np.asarray(p.repaired)]
    # a constant speed: the inserted times sit on the truth within a few samples
    assert np.max(np.abs(inserted - truth)) < 5 / FS  # common practice, no source
    assert any(_says(w, "inserted", "check the tach") for w in p.warnings)


def test_single_sample_spikes_on_the_tach_are_not_pulses(sim):
    # 40 one-sample spikes to the high level over 74 revolutions: the speed must stay that of
    # the simulation (constant 1485 rpm); the spikes are counted as rejected
    x = np.array(sim.tach, dtype=np.float64)
    rng = np.random.default_rng(31)
    spikes = rng.choice(x.size, 40, replace=False)
    x[spikes] = float(np.max(sim.tach))
    p = detect_pulses(x, FS)
    clean = detect_pulses(np.asarray(sim.tach), FS)
    assert p.n_pulses == clean.n_pulses
    # simulation truth: the same edge times as without the spikes
    np.testing.assert_allclose(p.times_s, clean.times_s, atol=0.5 / FS)
    assert p.n_rejected >= 30          # spikes landing inside a real pulse add no edge


def test_narrow_genuine_pulses_are_kept():
    # a keyphasor notch only 3 samples wide (median below the glitch-width floor): nothing rejected
    n_rev, per_rev = 40, 1000
    x = np.zeros(n_rev * per_rev)
    for k in range(n_rev):
        x[k * per_rev + 100:k * per_rev + 103] = 1.0
    p = detect_pulses(x, FS)
    assert p.n_pulses == n_rev and p.n_rejected == 0   # common practice, no source


def test_flat_tach_with_nominal_speed_falls_back_on_the_estimate(tmp_path, sim):
    frames = _frames(sim)
    frames[:, 1] = 0.0
    path = _write(tmp_path, "flat.flac", frames)
    a = analyze(read_recording(path), _train())
    assert a.speed.source == "estimated"
    assert a.speed.mean_hz * 60 == pytest.approx(RPM, rel=1e-3)  # the simulated speed
    # the warning says what happened (flat tach) and how to fix it
    assert any(_says(w, "flat", "remove tach.channel", "check the tach wiring") for w in a.warnings), a.warnings


def test_flat_tach_without_nominal_speed_in_analyze_gives_an_actionable_error(tmp_path, sim):
    frames = _frames(sim)
    frames[:, 1] = 0.0
    path = _write(tmp_path, "flat.flac", frames)
    train = dataclasses.replace(_train(), tach=dataclasses.replace(_train().tach, nominal_rpm=None))
    with pytest.raises(TachError) as e:
        analyze(read_recording(path), train)
    assert _says(str(e.value), "flat", "remove tach.channel")


# ---------------------------------------------------------------------------------------------
# Bad samples: partial results with a warning
# ---------------------------------------------------------------------------------------------

def test_nan_and_inf_samples_are_counted_and_the_analysis_goes_on(tmp_path, sim):
    frames = _frames(sim).astype(np.float32)
    frames[2000:2040, 0] = np.nan
    frames[30_000, 0] = np.inf
    frames[40_000, 0] = -np.inf
    path = _write(tmp_path, "nan.wav", frames, subtype="FLOAT")
    rec = read_recording(path)
    q = signal_quality(rec.channel(0))
    assert q.n_nonfinite == int(np.count_nonzero(~np.isfinite(frames[:, 0])))  # numpy as reference: 42
    a = analyze(rec, _train())
    assert any(_says(w, "42 samples", "nan or infinite", "set to 0") for w in a.warnings)
    assert np.isfinite(a.overall["rms"]) and np.all(np.isfinite(a.spectrum.amplitude))
    # 3 s: output turns 5.2 times (1.7293 Hz, README frequency table), so every shaft has a TSA
    assert [t.shaft for t in a.tsa] == ["input", "intermediate", "output"]
    assert all(np.all(np.isfinite(t.average)) for t in a.tsa)


def test_mostly_nan_recording_is_refused(tmp_path, sim):
    frames = _frames(sim).astype(np.float32)
    frames[: frames.shape[0] // 2, 0] = np.nan
    path = _write(tmp_path, "halfnan.wav", frames, subtype="FLOAT")
    with pytest.raises(GearbenchError) as e:
        analyze(read_recording(path), _train())
    assert _says(str(e.value), "nan or infinite")


def test_clipped_recording_is_flagged(tmp_path, sim):
    peak = float(np.max(np.abs(sim.acceleration_g)))
    gain = 2.0 / peak                     # the peak reaches twice the rail
    frames = _frames(sim)
    frames[:, 0] = np.clip(sim.acceleration_g * gain, -1.0, 1.0 - 2.0**-23)
    path = _write(tmp_path, "clipped.flac", frames)
    train = dataclasses.replace(_train(), sensors=(Sensor(name="acc", channel=0, scale=1.0 / gain),))
    rec = read_recording(path)
    q = signal_quality(rec.channel(0), full_scale=1.0)
    at_rail = np.count_nonzero(np.abs(sim.acceleration_g * gain) >= 1.0 - 2.0**-23)
    assert q.clipped
    # numpy as reference: the share of samples pushed onto the rails (isolated ones may not count)
    assert q.clipped_fraction == pytest.approx(at_rail / frames.shape[0], rel=0.1)
    a = analyze(rec, train)
    assert a.overall["clipped"] is True
    assert any(_says(w, "clipping", "kurtosis", "re-record") for w in a.warnings)


def test_short_record_skips_the_slow_shaft_and_says_so(tmp_path):
    # 1 s: input 24.75 revs, intermediate 8.0, output 1.73 (< 3; README frequency table)
    s = simulate(_train(), rpm=RPM, duration_s=1.0, fs=FS, seed=13)
    path = _write(tmp_path, "short.flac", _frames(s))
    a = analyze(read_recording(path), _train())
    assert [t.shaft for t in a.tsa] == ["input", "intermediate"]
    assert any(_says(w, "short record", "output", "fewer than 3", "longer record") for w in a.warnings)


def test_sample_rate_too_low_for_the_mesh_harmonics(tmp_path):
    # 2000 Hz: Nyquist 1000 Hz holds the 569.25 Hz GMF but not 2x (1138.5) nor 3x (1707.75)
    s = simulate(_train(), rpm=RPM, duration_s=3.0, fs=2000.0, seed=14, n_harmonics=1)
    path = _write(tmp_path, "slow.flac", _frames(s), fs=2000.0)
    a = analyze(read_recording(path), _train())
    assert any(_says(w, "sample rate too low", "harmonic 1", "record faster") for w in a.warnings)
    assert a.speed.mean_hz * 60 == pytest.approx(RPM, rel=1e-3)   # the speed is still right


def test_sensor_channel_missing_from_the_file_in_analyze(tmp_path, sim):
    path = _write(tmp_path, "two.flac", _frames(sim))
    train = dataclasses.replace(_train(), sensors=(Sensor(name="acc", channel=4, scale=50.0),))
    with pytest.raises(GearbenchError) as e:
        analyze(read_recording(path), train)
    assert re.search(r"channel 4", str(e.value)) and _says(str(e.value), "2 channels")


def test_no_tach_and_nominal_speed_estimates_the_speed(tmp_path, sim):
    path = tmp_path / "route.flac"
    write_simulation(simulate(_train(), rpm=0.98 * RPM, duration_s=3.0, fs=FS, seed=15,
                              faults=(Fault("tooth", "stage 1:input", tooth=7),)),
                     path, _train(), scale=50.0, with_tach=False)
    model = load_model(path.with_suffix(".toml"))
    assert model.tach.channel is None and model.tach.nominal_rpm == RPM
    rec = read_recording(path)
    assert rec.n_channels == 1
    a = analyze(rec, model)
    assert a.speed.source == "estimated"
    # the simulated speed, 2 % below nominal (Bonnardot et al. 2005: speed from the mesh phase)
    assert a.speed.mean_hz * 60 == pytest.approx(0.98 * RPM, rel=1e-3)
    assert any(_says(w, "no tach", "estimated") for w in a.warnings)


def test_inputs_are_not_modified(tmp_path, sim):
    frames = _frames(sim).astype(np.float32)
    frames[100:110, 0] = np.nan
    path = _write(tmp_path, "nan2.wav", frames, subtype="FLOAT")
    rec = read_recording(path)
    before = rec.data.copy()
    analyze(rec, _train())
    np.testing.assert_array_equal(rec.data, before)   # NaN stay NaN in the recording itself


def test_swapped_sensor_and_tach_channels_are_called_out(tmp_path, sim):
    path = _write(tmp_path, "swapped.flac", _frames(sim))
    rec = read_recording(path)
    # the model says the tach is on the accelerometer's channel and the sensor on the tach's
    swapped = dataclasses.replace(
        _train(), sensors=(Sensor(name="acc", channel=1, scale=50.0, units="g"),),
        tach=dataclasses.replace(_train().tach, channel=0))
    result = analyze(rec, swapped)
    text = " ".join(result.warnings)
    # a tach far from the nameplate speed means a wrong channel or pulses/rev (common practice, no source)
    assert _says(text, "nominal_rpm", "swapped", "tach.channel")
