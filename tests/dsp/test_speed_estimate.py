"""Speed without a tach: phase demodulation of a mesh harmonic on a simulated gear signal."""

import numpy as np
import pytest

from dsp.model import GearTrain, Mesh, Shaft
from dsp.speed_estimate import SpeedEstimate, estimate_speed, mesh_lines
from dsp.tsa import tsa

Z_IN, Z_OUT = 23, 61
TRAIN = GearTrain(name="test", shafts=(Shaft("input"), Shaft("output")),
                  meshes=(Mesh("stage 1", "input", Z_IN, "output", Z_OUT),))


def theta_rev(t, f_mean, dev=0.03, fm=0.4):
    """Input-shaft angle: speed f_mean * (1 + dev sin(2 pi fm t))."""
    w = 2 * np.pi * fm
    return f_mean * t + f_mean * dev * (1 - np.cos(w * t)) / w


def gear_signal(theta, rng, noise=0.3):
    """Mesh harmonics, modulated once per input revolution, plus a local bump at one tooth."""
    mod = 1 + 0.2 * np.cos(2 * np.pi * theta + 0.4)
    x = mod * (np.cos(2 * np.pi * Z_IN * theta) + 0.5 * np.cos(2 * np.pi * 2 * Z_IN * theta + 1.0))
    pattern = pattern_of(theta)
    return x + pattern + noise * rng.standard_normal(theta.size)


def pattern_of(theta):
    frac = np.mod(theta, 1.0)
    return 0.8 * np.exp(-0.5 * ((frac - 0.3) / 0.01) ** 2)


def test_mesh_lines_orders():
    lines = mesh_lines(TRAIN, "input", n_harmonics=2)
    # domain-reference 1.1: GMF = f_1 Z_1, harmonics h GMF
    assert [ln.order for ln in lines] == [23.0, 46.0]
    lines_out = mesh_lines(TRAIN, "output", n_harmonics=1)
    # domain-reference 1.1: the same GMF seen from the driven shaft, Z_2 orders of it
    assert lines_out[0].order == pytest.approx(61.0)


def test_estimates_speed_3pct_off_nominal_with_wander():
    rng = np.random.default_rng(4)
    fs, dur = 8192.0, 8.0
    f_nom = 25.0
    f_true = 1.03 * f_nom                                 # 3 % off the nominal, +-3 % wander
    t = np.arange(int(dur * fs)) / fs
    x = gear_signal(theta_rev(t, f_true), rng)
    est = estimate_speed(x, fs, TRAIN, nominal_rpm=f_nom * 60, reference_shaft="input")
    assert isinstance(est, SpeedEstimate)
    assert est.method == "mesh phase" and est.mesh == "stage 1"
    assert est.profile.source == "estimated" and est.profile.shaft == "input"
    p = est.profile
    true_mean = (theta_rev(p.t_end_s, f_true) - theta_rev(p.t_start_s, f_true)) / (p.t_end_s - p.t_start_s)
    # Bonnardot et al. 2005: the unwrapped mesh phase / mesh order is the shaft angle; mean speed to 0.1 %
    assert abs(p.mean_hz / true_mean - 1) < 1e-3
    tt = np.linspace(p.t_start_s + 0.5, p.t_end_s - 0.5, 200)
    # Bonnardot et al. 2005: the instantaneous speed follows the +-3 % wander; here within 0.3 %
    true_speed = f_true * (1 + 0.03 * np.sin(2 * np.pi * 0.4 * tt))
    assert np.max(np.abs(p.speed_hz(tt) / true_speed - 1)) < 3e-3
    assert est.snr_db > 12

    # a TSA with the estimated profile keeps the one-tooth bump (angle origin is arbitrary)
    res = tsa(x, fs, p, shaft="input")
    truth = pattern_of(np.arange(res.samples_per_rev) / res.samples_per_rev)
    bump = res.average - np.median(res.average)
    # remove the mesh tones to compare the bump only: keep orders below half the mesh order
    spec = np.fft.rfft(bump)
    spec[Z_IN // 2:] = 0
    spec_t = np.fft.rfft(truth)
    spec_t[Z_IN // 2:] = 0
    spec_t[0] = spec[0] = 0
    a, b = np.fft.irfft(spec, res.samples_per_rev), np.fft.irfft(spec_t, res.samples_per_rev)
    xc = np.fft.irfft(np.fft.rfft(a) * np.conj(np.fft.rfft(b)), res.samples_per_rev)
    corr = xc.max() / np.sqrt(np.sum(a * a) * np.sum(b * b))
    # Braun 1975: averaging with the right angle keeps a shaft-periodic pattern; correlation > 0.98
    assert corr > 0.98


def test_noise_only_falls_back_to_nominal():
    rng = np.random.default_rng(9)
    fs = 4096.0
    x = rng.standard_normal(int(4 * fs))
    est = estimate_speed(x, fs, TRAIN, nominal_rpm=1500, reference_shaft="input")
    # common practice, no source: without a line above the noise there is nothing to refine
    assert est.method == "nominal"
    assert est.mean_hz == pytest.approx(25.0)
    assert est.profile.source == "nominal"


def test_demo_recording_against_its_tach():
    """Demo 05 (parallel stage + planetary stage): the estimate agrees with the recorded tach."""
    from pathlib import Path

    from dsp.kinematics import shaft_orders
    from dsp.model import load_model
    from dsp.recording import read_recording, sensor_signal
    from dsp.tach import detect_pulses, speed_profile

    root = Path(__file__).resolve().parents[2] / "demo_recordings"
    rec = read_recording(root / "05_bearing_outer_race.flac")
    model = load_model(root / "05_bearing_outer_race.toml")
    x = sensor_signal(rec, model.sensors[0])
    fs = rec.sample_rate_hz
    tach = speed_profile(detect_pulses(rec.channel(model.tach.channel), fs), model.tach.shaft)
    r_out = shaft_orders(model, model.tach.shaft)["output"]
    true_out_hz = tach.mean_hz * r_out
    est = estimate_speed(x, fs, model, nominal_rpm=0.97 * 60 * true_out_hz, reference_shaft="output")
    assert est.method == "mesh phase"
    assert est.mesh in {m.name for m in model.meshes}   # the parallel stage, not the planetary one
    # the tach is the independent reference: mean speed within 0.1 % (Bonnardot et al. 2005)
    assert est.mean_hz == pytest.approx(true_out_hz, rel=1e-3)
