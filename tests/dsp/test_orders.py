"""Computed order tracking against phase laws written here and published check values."""

import numpy as np
import pytest

from dsp.errors import AnalysisError
from dsp.orders import AngularSignal, angular_resample, order_spectrum
from dsp.spectrum import window_values
from dsp.tach import fyfe_munck_fit, fyfe_munck_time, nominal_profile
from phase_laws import WanderProfile


class QuadraticProfile:
    """Constant angular acceleration law theta = f0 t + a t^2 / 2 (rev), via dsp.tach's Fyfe & Munck fit."""

    def __init__(self, f0, acc, duration_s):
        # three "pulses" of the law (domain-reference 3.1): t_k = (-f0 + sqrt(f0^2 + 2 a k)) / a
        tk = [(-f0 + np.sqrt(f0 * f0 + 2 * acc * k)) / acc for k in range(3)]
        self.b = fyfe_munck_fit(tk[0], tk[1], tk[2], 1.0)
        self.shaft, self.source = "input", "tach"
        self.t_start_s, self.t_end_s = 0.0, duration_s
        self.min_hz, self.max_hz = f0, f0 + acc * duration_s
        self.mean_hz = self.angle_rev(duration_s) / duration_s
        self.n_revs = int(self.angle_rev(duration_s))

    def angle_rev(self, t_s):
        b0, b1, b2 = self.b
        t = np.asarray(t_s, dtype=float)
        return b0 + b1 * t + b2 * t * t

    def speed_hz(self, t_s):
        return self.b[1] + 2 * self.b[2] * np.asarray(t_s, dtype=float)

    def time_s(self, angle_rev):
        return fyfe_munck_time(angle_rev, self.b)


def test_quadratic_law_check_values():
    prof = QuadraticProfile(10.0, 10.0, 2.0)
    # domain-reference 3.1 (Fyfe & Munck 1997) [computed]: t(theta = pi rad = 0.5 rev) = 0.0488088482 s
    assert prof.time_s(0.5) == pytest.approx(0.0488088482, abs=1e-10)
    # domain-reference 3.1: t(theta = 2.5 pi rad = 1.25 rev) = 0.1180339887 s
    assert prof.time_s(1.25) == pytest.approx(0.1180339887, abs=1e-10)


def test_quadratic_law_resampled_reproduces_a_pure_order():
    """Fyfe & Munck 1997: resampling a run-up at its exact angle law gives a pure order."""
    fs, dur = 4096.0, 3.0
    prof = QuadraticProfile(10.0, 10.0, dur)                 # 10 -> 40 Hz run-up
    t = np.arange(int(dur * fs)) / fs
    x = np.cos(2 * np.pi * 6 * prof.angle_rev(t) + 0.7)
    sig = angular_resample(x, fs, prof, samples_per_rev=64)
    assert isinstance(sig, AngularSignal) and sig.values.size == sig.n_revs * 64
    truth = np.cos(2 * np.pi * 6 * sig.angle_rev + 0.7)
    # Fyfe & Munck 1997: exact resampling times -> the order is reproduced; our interpolation bound 5.6e-4
    assert np.max(np.abs(sig.values - truth)) < 5.6e-4
    # an order above the kept band (order 40 > 0.45 P min/max speed) is removed, not aliased
    x2 = x + np.cos(2 * np.pi * 40 * prof.angle_rev(t))
    sig2 = angular_resample(x2, fs, prof, samples_per_rev=64)
    assert sig2.lowpass_hz is not None
    # common practice, no source: low-pass before resampling so that the highest kept order < P/2
    assert np.max(np.abs(sig2.values - truth)) < 2e-3


def test_order_spectrum_sharp_under_wandering_speed():
    """A tone locked to order 7 under +-10 % speed wander: one sharp order line, a smeared Hz line."""
    rng = np.random.default_rng(2)
    fs, dur = 2048.0, 16.0
    prof = WanderProfile(20.0, 0.10, 0.25, dur)
    t = np.arange(int(dur * fs)) / fs
    A = 1.5
    x = A * np.cos(2 * np.pi * 7 * prof.angle_rev(t)) + 0.01 * rng.standard_normal(t.size)
    spec = order_spectrum(x, fs, prof, max_order=20)
    k = int(np.argmax(spec.amplitude))
    assert spec.order[k] == pytest.approx(7.0, abs=1e-9)
    # Harris 1978: a Hann-windowed tone on a bin centre reads its true peak amplitude; within 1 %
    assert spec.amplitude[k] == pytest.approx(A, rel=0.01)
    # Harris 1978: the Hann main lobe is +-2 bins; beyond it < 1 % of the peak (the line is ~1 bin wide)
    far = np.abs(np.arange(spec.order.size) - k) > 2
    assert np.max(spec.amplitude[far]) < 0.01 * A
    # the plain Hz spectrum of the same signal (Hann, peak scaling) is smeared over 126-154 Hz
    w = window_values("hann", x.size)
    hz_amp = 2 * np.abs(np.fft.rfft(x * w)) / w.sum()
    assert hz_amp.max() < 0.25 * A                           # common practice, no source


def test_order_spectrum_of_chirp():
    """A linear run-up (chirp) 10 -> 30 Hz with a component at order 3: one line at 3."""
    fs, dur = 1024.0, 8.0
    prof = QuadraticProfile(10.0, 2.5, dur)
    t = np.arange(int(dur * fs)) / fs
    x = 0.5 * np.cos(2 * np.pi * 3 * prof.angle_rev(t))
    spec = order_spectrum(x, fs, prof, max_order=10, window="flattop")
    k = int(np.argmax(spec.amplitude))
    # Fyfe & Munck 1997: order tracking turns a run-up into a fixed order line
    assert spec.order[k] == pytest.approx(3.0, abs=0.5 / spec.n_revs)
    # flat-top window (D'Antona & Ferrero 2006 in scipy): amplitude within 1 % wherever the line falls
    assert spec.amplitude[k] == pytest.approx(0.5, rel=0.01)


def test_order_spectrum_resolution_and_scaling():
    fs, dur = 2048.0, 10.0
    prof = nominal_profile(1500.0, dur, "input")             # 25 Hz
    t = np.arange(int(dur * fs)) / fs
    x = np.sin(2 * np.pi * 4 * 25 * t)
    spec = order_spectrum(x, fs, prof, max_order=10, order_resolution=0.25, scaling="rms")
    assert spec.n_revs == 4 and spec.n_averages > 1
    i = int(np.argmin(np.abs(spec.order - 4.0)))
    # domain-reference 7: RMS amplitude of a unit sine is 1/sqrt(2)
    assert spec.amplitude[i] == pytest.approx(1 / np.sqrt(2), rel=0.01)
    # Harris 1978: Hann ENBW 1.5 bins
    assert spec.enbw_orders == pytest.approx(1.5 * 0.25, rel=1e-6)


def test_bad_arguments():
    prof = nominal_profile(600.0, 1.0, "input")
    with pytest.raises(AnalysisError, match="max_order"):
        angular_resample(np.zeros(1000), 1000.0, prof, samples_per_rev=16, max_order=8)
    with pytest.raises(AnalysisError, match="window"):
        order_spectrum(np.zeros(1000), 1000.0, prof, window="nope")


def test_segmented_resampling_has_no_seams(monkeypatch):
    """Resampling in many small segments gives the same accuracy as in one piece."""
    import dsp.orders

    monkeypatch.setattr(dsp.orders, "_CHUNK", 1000)
    fs, dur = 4096.0, 3.0
    prof = QuadraticProfile(10.0, 10.0, dur)
    t = np.arange(int(dur * fs)) / fs
    x = np.cos(2 * np.pi * 6 * prof.angle_rev(t) + 0.7) + np.cos(2 * np.pi * 40 * prof.angle_rev(t))
    for P, kept in ((64, [6]), (512, [6, 40])):
        sig = angular_resample(x, fs, prof, samples_per_rev=P)
        truth = sum(np.cos(2 * np.pi * k * sig.angle_rev + (0.7 if k == 6 else 0.0)) for k in kept)
        # Fyfe & Munck 1997 with our interpolation bound (5.6e-4 per component) and the low-pass edge
        assert np.max(np.abs(sig.values - truth)) < 2e-3


@pytest.mark.parametrize("n_revs, P", [(1499, 64), (499, 8), (13, 2), (1024, 16)])
def test_power_spectrum_of_prime_revolution_counts_matches_numpy(n_revs, P):
    """The order spectrum's power at N x P samples (N prime or not) against numpy's rfft."""
    from dsp.orders import _power_spectrum

    x = np.random.default_rng(n_revs).standard_normal(n_revs * P).astype(np.float32)
    w = window_values("hann", x.size)
    ref = np.abs(np.fft.rfft(x.astype(np.float64) * w)) ** 2
    got = _power_spectrum(x, w, P)
    # numpy as the reference implementation (Cooley & Tukey 1965 index map: equal to rounding)
    assert got.shape == ref.shape
    np.testing.assert_allclose(got, ref, rtol=1e-9, atol=1e-9 * ref.max())
