"""Tach pulses, repair and speed profile against a phase law written here.

The truth is the shaft angle law theta(t) of a speed wandering +-10 % around its
mean; pulse k is where ppr * theta(t) reaches k + phi_cross (the threshold crossing).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from dsp.errors import TachError
from dsp.tach import (
    SpeedProfile,
    _savgol2_centre,
    detect_pulses,
    fyfe_munck_fit,
    fyfe_munck_time,
    nominal_profile,
    speed_profile,
)

WANDER = 0.10      # +-10 % speed wander
F_WANDER_HZ = 0.5  # rate of the wander


def theta_rev(t, f0):
    """Angle law, rev: speed f0 * (1 + WANDER * sin(2 pi F_WANDER_HZ t))."""
    w = 2 * np.pi * F_WANDER_HZ
    return f0 * t + f0 * WANDER * (1 - np.cos(w * t)) / w


def speed_true_hz(t, f0):
    return f0 * (1 + WANDER * np.sin(2 * np.pi * F_WANDER_HZ * t))


def time_at_rev(angle, f0):
    """Invert theta_rev by Newton (the law is strictly increasing)."""
    t = np.asarray(angle, dtype=float) / f0
    for _ in range(30):
        t = t - (theta_rev(t, f0) - angle) / speed_true_hz(t, f0)
    return t


class Train:
    """A synthetic pulse train: signal, true pulse times, injected faults."""

    def __init__(self, *, fs, duration_s, f0, ppr, duty, gain, noise, rng, missing_frac=0.0, n_glitch=0):
        self.fs, self.f0, self.ppr = fs, f0, ppr
        t = np.arange(int(duration_s * fs)) / fs
        phase = ppr * theta_rev(t, f0)             # pulse cycles
        centre = 0.5                               # pulse centred half-way through a cycle
        c = np.cos(np.pi * duty)
        # Finite rise time: a clipped raised cosine, high for |cycle - centre| < duty/2.
        x = np.clip(gain * (np.cos(2 * np.pi * (phase - centre)) - c), 0.0, 1.0)
        cycle = np.floor(phase).astype(int)
        n_cycles = int(cycle[-1])
        # Missing pulses: blank whole cycles, never the first or last two.
        n_missing = int(round(missing_frac * n_cycles))
        candidates = np.arange(2, n_cycles - 2)
        self.missing = np.sort(rng.choice(candidates, n_missing, replace=False)) if n_missing else np.array([], int)
        x[np.isin(cycle, self.missing)] = 0.0
        # Glitches: 3-sample full-height spikes in the low part of cycles away from missing ones.
        bad = set(self.missing) | set(self.missing - 1) | set(self.missing + 1)
        ok = np.array([k for k in range(2, n_cycles - 2) if k not in bad])
        self.glitch_cycles = np.sort(rng.choice(ok, n_glitch, replace=False)) if n_glitch else np.array([], int)
        for k in self.glitch_cycles:
            i = int(np.searchsorted(phase, k + 0.02))   # just after the cycle start, where the signal is low
            x[i:i + 3] = 1.0
        x = x + noise * rng.standard_normal(x.size)
        self.x = x.astype(np.float32)
        self.n_cycles = n_cycles
        self.centre, self.duty, self.gain = centre, duty, gain

    def true_times(self, threshold):
        """True times of every rising crossing of ``threshold`` (all pulses, missing ones included)."""
        c = np.cos(np.pi * self.duty)
        off = np.arccos(c + threshold / self.gain) / (2 * np.pi)
        k = np.arange(0, self.n_cycles + 1)
        angles = (k + self.centre - off) / self.ppr
        t = time_at_rev(angles, self.f0)
        return t[(t > 0) & (t < (self.x.size - 1) / self.fs)]


def _match(found, truth):
    """Distance from each found pulse to the nearest true one, s."""
    i = np.clip(np.searchsorted(truth, found), 1, truth.size - 1)
    return np.minimum(np.abs(found - truth[i - 1]), np.abs(found - truth[i]))


@pytest.mark.parametrize("ppr,f0,duration_s,duty,gain", [(1, 25.0, 4.0, 0.2, 40.0), (60, 10.0, 2.0, 0.5, 4.0)])
def test_clean_train_times_and_speed(ppr, f0, duration_s, duty, gain):
    rng = np.random.default_rng(11)
    fs = 20_000.0
    tr = Train(fs=fs, duration_s=duration_s, f0=f0, ppr=ppr, duty=duty, gain=gain, noise=0.02, rng=rng)
    p = detect_pulses(tr.x, fs, pulses_per_rev=ppr)
    truth = tr.true_times(p.threshold)
    assert p.times_s.size == truth.size
    assert p.n_repaired == 0 and p.n_rejected == 0
    # Threshold-crossing interpolation is sub-sample accurate (common practice, no source;
    # Fyfe & Munck 1997 stress keyphasor timing accuracy): within 0.5 sample with 2 % noise
    # (expected jitter: noise / edge slope, about 0.12 sample rms for 1 ppr).
    assert np.max(np.abs(p.times_s - truth)) < 0.5 / fs
    prof = speed_profile(p, "input")
    # Whole-revolution average speeds against the phase law written in this test
    # (common practice, no source): error < 0.1 %.
    revs = np.arange(1, prof.n_revs)
    t_rev = prof.time_s(revs.astype(float))
    rev_hz = 1 / np.diff(t_rev)
    true_rev_hz = 1 / np.diff(time_at_rev(revs / 1.0 + theta_rev(truth[0], f0), f0))
    assert np.max(np.abs(rev_hz / true_rev_hz - 1)) < 1e-3
    # Instantaneous speed from the interpolant, away from the ends: < 0.1 % (common
    # practice, no source); the encoder's pulses are smoothed over one revolution.
    tq = np.linspace(prof.t_start_s + 0.1, prof.t_end_s - 0.1, 200)
    err = np.abs(prof.speed_hz(tq) / speed_true_hz(tq, f0) - 1)
    print(f"ppr={ppr}: max pulse error {np.max(np.abs(p.times_s - truth)) * fs:.3f} samples, "
          f"max rev speed error {np.max(np.abs(rev_hz / true_rev_hz - 1)):.2e}, max inst. speed error {err.max():.2e}")
    assert err.max() < 1e-3
    assert np.abs(prof.mean_hz / (np.ptp(theta_rev(truth[[0, -1]], f0)) / np.ptp(truth[[0, -1]])) - 1) < 1e-4
    assert p.warnings == ()


@pytest.mark.parametrize("ppr,f0,duration_s,duty,gain", [(1, 25.0, 8.0, 0.2, 40.0), (60, 10.0, 2.0, 0.5, 4.0)])
def test_repair_missing_and_glitches(ppr, f0, duration_s, duty, gain):
    rng = np.random.default_rng(7)
    fs = 20_000.0
    n_glitch = 4 if ppr == 1 else 20
    tr = Train(fs=fs, duration_s=duration_s, f0=f0, ppr=ppr, duty=duty, gain=gain, noise=0.02, rng=rng,
               missing_frac=0.05, n_glitch=n_glitch)
    p = detect_pulses(tr.x, fs, pulses_per_rev=ppr)
    truth = tr.true_times(p.threshold)
    # The counts match what was injected (common practice, no source).
    assert p.n_rejected == n_glitch
    assert p.n_repaired == tr.missing.size
    assert p.n_found == truth.size - tr.missing.size + n_glitch
    assert p.times_s.size == truth.size
    assert p.repaired.sum() == tr.missing.size
    err = np.abs(p.times_s - truth)
    # Pulses found: sub-sample (common practice, no source).  Pulses inserted: evenly
    # spaced in angle on a cubic through the neighbours; with the +-10 % wander they stay
    # within 0.5 sample of the truth (measured 0.14 sample for 1 ppr, 0.10 for the encoder).
    assert err[~p.repaired].max() < 0.5 / fs
    assert err[p.repaired].max() < 0.5 / fs
    prof = speed_profile(p, "input")
    revs = np.arange(1, prof.n_revs).astype(float)
    rev_hz = 1 / np.diff(prof.time_s(revs))
    true_rev_hz = 1 / np.diff(time_at_rev(revs + theta_rev(truth[0], f0), f0))
    print(f"ppr={ppr}: max error found {err[~p.repaired].max() * fs:.3f} / inserted {err[p.repaired].max() * fs:.3f} "
          f"samples, max rev speed error {np.max(np.abs(rev_hz / true_rev_hz - 1)):.2e}")
    # Speed per revolution within 0.1 % of the truth despite 5 % missing pulses and glitches.
    assert np.max(np.abs(rev_hz / true_rev_hz - 1)) < 1e-3


def test_falling_edge_and_explicit_threshold():
    rng = np.random.default_rng(3)
    fs = 10_000.0
    tr = Train(fs=fs, duration_s=1.0, f0=20.0, ppr=1, duty=0.3, gain=10.0, noise=0.01, rng=rng)
    inverted = (1.0 - tr.x).astype(np.float32)
    p = detect_pulses(inverted, fs, edge="falling", threshold=0.5, hysteresis=0.2)
    truth = tr.true_times(0.5)
    assert p.edge == "falling" and p.threshold == 0.5
    # A falling edge of the inverted train is the rising edge of the original (trivially true).
    assert np.max(np.abs(p.times_s - truth)) < 0.5 / fs


def test_hysteresis_ignores_ringing_on_edges():
    # Ringing around the threshold after each edge must not add pulses (Schmitt trigger:
    # common practice, no source).
    fs = 10_000.0
    n = 10_000
    x = np.zeros(n)
    starts = np.arange(200, n - 200, 500)
    for s in starts:
        x[s:s + 100] = 1.0
        x[s + 1:s + 9:2] = 0.45  # bounces down through the 0.5 threshold but not below 0.4
    p = detect_pulses(x, fs)
    assert p.n_found == starts.size
    assert np.allclose(p.times_s, (starts - 0.5) / fs, atol=1e-9)  # linear interpolation of 0 -> 1 at 0.5


def test_fast_speed_change_gives_warning():
    fs = 10_000.0
    t_pulses = np.concatenate((np.arange(0, 1, 0.05), 1 + np.arange(1, 20) * 0.03))  # 20 Hz -> 33 Hz at once
    x = np.zeros(int(2 * fs))
    for tp in t_pulses:
        i = int(tp * fs) + 10
        x[i:i + 50] = 1.0
    p = detect_pulses(x, fs)
    assert any("faster than order tracking" in w for w in p.warnings)


def test_flat_or_missing_tach_raises():
    fs = 1000.0
    with pytest.raises(TachError, match="nominal_rpm"):
        detect_pulses(np.zeros(5000), fs)
    with pytest.raises(TachError, match="nominal_rpm"):
        detect_pulses(np.full(5000, 3.3, dtype=np.float32), fs)
    x = np.zeros(5000)
    x[1000:1050] = 1.0
    x[3000:3050] = 1.0  # two pulses only
    with pytest.raises(TachError, match="2 pulses"):
        detect_pulses(x, fs)


def test_inputs_not_modified():
    rng = np.random.default_rng(5)
    tr = Train(fs=5000.0, duration_s=1.0, f0=10.0, ppr=1, duty=0.2, gain=10.0, noise=0.01, rng=rng)
    before = tr.x.copy()
    p = detect_pulses(tr.x, 5000.0)
    assert np.array_equal(tr.x, before)
    with pytest.raises(ValueError):
        p.times_s[0] = 0.0


def test_fyfe_munck_check_values():
    # Fyfe & Munck 1997 constant-acceleration law; check values computed in the
    # domain reference section 3.1 (phase law f0 = 10 Hz, a = 10 Hz/s).
    f0, a = 10.0, 10.0
    tk = [(-f0 + math.sqrt(f0 ** 2 + 2 * a * k)) / a for k in range(3)]
    assert abs(tk[1] - 0.0954451150) < 1e-10   # domain reference 3.1, computed
    assert abs(tk[2] - 0.1832159566) < 1e-10   # domain reference 3.1, computed
    b = fyfe_munck_fit(tk[0], tk[1], tk[2], 2 * math.pi)
    assert abs(b[0] - 0.0) < 1e-12                      # domain reference 3.1
    assert abs(b[1] - 2 * math.pi * 10) < 1e-9          # 62.831853, domain reference 3.1
    assert abs(b[2] - math.pi * 10) < 1e-9              # 31.415927, domain reference 3.1
    assert abs(fyfe_munck_time(math.pi, b) - 0.0488088482) < 1e-10        # domain reference 3.1
    assert abs(fyfe_munck_time(2.5 * math.pi, b) - 0.1180339887) < 1e-10  # domain reference 3.1
    # The law is exact for constant acceleration: abs tol 1e-12 against the closed form.
    theta = np.linspace(0, 4 * np.pi, 9)
    exact = (-f0 + np.sqrt(f0 ** 2 + 2 * a * theta / (2 * np.pi))) / a
    assert np.max(np.abs(fyfe_munck_time(theta, b) - exact)) < 1e-12


def test_fyfe_munck_constant_speed_limit():
    # b2 = 0 (constant speed) must not divide by zero: t = theta / omega (trivial kinematics).
    b = fyfe_munck_fit(0.0, 0.1, 0.2, 1.0)
    assert abs(b[2]) < 1e-9
    assert abs(fyfe_munck_time(0.55, b) - 0.055) < 1e-12


def test_profile_inverse_and_monotonic():
    rng = np.random.default_rng(2)
    f0 = 25.0
    angles = np.arange(0, 200) + 0.0
    t = time_at_rev(angles, f0) + 0.3
    t += rng.normal(0, 2e-6, t.size)  # timing jitter
    prof = SpeedProfile.from_knots(t, angles, shaft="input", source="tach")
    tq = np.sort(rng.uniform(prof.t_start_s - 0.5, prof.t_end_s + 0.5, 5000))
    a = prof.angle_rev(tq)
    assert np.all(np.diff(a) > 0)
    # time_s is the inverse of angle_rev (exact up to rounding).
    assert np.max(np.abs(prof.time_s(a) - tq)) < 1e-12
    aq = np.linspace(-3, angles[-1] + 3, 4001)
    assert np.max(np.abs(prof.angle_rev(prof.time_s(aq)) - aq)) < 1e-9
    assert prof.angle_rev(prof.t_start_s) == 0.0
    assert prof.n_revs == 199
    assert np.all(prof.speed_hz(tq) > 0)
    assert prof.min_hz < prof.mean_hz < prof.max_hz
    with pytest.raises(ValueError):
        prof.knots.times_s[0] = 1.0


def test_nominal_profile():
    prof = nominal_profile(1500.0, 10.0, "input")
    assert prof.source == "nominal"
    assert prof.mean_hz == pytest.approx(25.0, rel=1e-12)   # 1500 rpm / 60 (definition of rpm)
    assert prof.speed_hz(3.3) == pytest.approx(25.0, rel=1e-12)
    assert prof.time_s(50.0) == pytest.approx(2.0, rel=1e-12)
    assert prof.n_revs == 250
    with pytest.raises(TachError, match="nominal_rpm"):
        nominal_profile(0.0, 10.0, "input")


def test_from_knots_rejects_bad_knots():
    with pytest.raises(TachError):
        SpeedProfile.from_knots([0.0, 1.0, 0.5], [0.0, 1.0, 2.0], shaft="a")
    with pytest.raises(TachError):
        SpeedProfile.from_knots([0.0], [0.0], shaft="a")


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(0.2, 5.0), min_size=2, max_size=40), st.floats(0.1, 100.0))
def test_profile_inverse_property(steps, hz):
    # Any strictly increasing knots: angle_rev is monotonic and time_s inverts it
    # (definition of an inverse; common practice, no source).
    dt = np.asarray(steps) / hz
    t = np.concatenate(([0.0], np.cumsum(dt)))
    a = np.arange(t.size, dtype=float)
    prof = SpeedProfile.from_knots(t, a, shaft="s", source="estimated")
    tq = np.linspace(-0.1 * t[-1], 1.1 * t[-1], 301)
    aq = prof.angle_rev(tq)
    assert np.all(np.diff(aq) > 0)
    assert np.max(np.abs(prof.time_s(aq) - tq)) <= 1e-9 * max(1.0, t[-1])
    assert np.all(prof.speed_hz(tq) >= 0)


@pytest.mark.parametrize("n", [5, 11, 61])
def test_savitzky_golay_weights_match_least_squares(n):
    # Savitzky & Golay 1964: the centre row of the quadratic least-squares projection;
    # numpy's pseudo-inverse as reference.
    j = np.arange(n) - n // 2
    v = np.vander(j, 3)
    ref = (v @ np.linalg.pinv(v))[n // 2]
    assert np.max(np.abs(_savgol2_centre(n) - ref)) < 1e-12


def test_encoder_smoothing_can_be_turned_off():
    rng = np.random.default_rng(12)
    fs = 20_000.0
    tr = Train(fs=fs, duration_s=1.0, f0=10.0, ppr=60, duty=0.5, gain=4.0, noise=0.02, rng=rng)
    p = detect_pulses(tr.x, fs, pulses_per_rev=60)
    raw = speed_profile(p, "input", smooth_pulses=0)
    smooth = speed_profile(p, "input")
    assert np.array_equal(raw.knots.times_s, p.times_s)
    tq = np.linspace(raw.t_start_s + 0.1, raw.t_end_s - 0.1, 200)
    err_raw = np.abs(raw.speed_hz(tq) / speed_true_hz(tq, 10.0) - 1).max()
    err_smooth = np.abs(smooth.speed_hz(tq) / speed_true_hz(tq, 10.0) - 1).max()
    # Averaging over one revolution (61 pulses) cuts the jitter (common practice, no source).
    assert err_smooth < 0.3 * err_raw
