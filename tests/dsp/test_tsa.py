"""TSA per shaft and its derived signals against outside references.

The truth for the averaging tests is an angle law theta(t) written here (speed
wandering around its mean); signals are built as functions of that angle, so the
shaft-periodic part is known exactly.
"""

import numpy as np
import pytest
import scipy.special
import scipy.stats

from dsp.errors import AnalysisError
from dsp.tach import SpeedProfile, nominal_profile
from dsp.tsa import (
    TSA,
    default_samples_per_rev,
    demodulate,
    difference_signal,
    regular_signal,
    residual_signal,
    tsa,
    tsa_comb_response,
    tsa_shafts,
)
from phase_laws import WanderProfile


def periodic(theta, orders, amps, phases):
    """sum_k a_k cos(2 pi k theta + phi_k), theta in revolutions."""
    out = np.zeros_like(theta)
    for k, a, p in zip(orders, amps, phases):
        out += a * np.cos(2 * np.pi * k * theta + p)
    return out


# --------------------------------------------------------------------------- comb response

def test_comb_response_matches_scipy_diric():
    T, N = 0.04, 11
    f = np.linspace(0, 5 / T, 2001)
    ref = np.abs(scipy.special.diric(2 * np.pi * f * T, N))
    # Braun 1975 comb H(f) = sin(pi N f T) / (N sin(pi f T)); reference: scipy.special.diric
    np.testing.assert_allclose(tsa_comb_response(f, T, N), ref, atol=1e-12)


@pytest.mark.parametrize("N", [10, 11, 64])
def test_comb_response_check_values(N):
    T = 0.02
    k = np.arange(0, 6)
    # domain-reference 3.2: |H(k/T)| = 1 at every shaft harmonic
    np.testing.assert_allclose(tsa_comb_response(k / T, T, N), 1.0, atol=1e-12)
    half = tsa_comb_response(0.5 / T, T, N)
    # domain-reference 3.2: halfway between harmonics 1/N for odd N, 0 for even N
    assert half == pytest.approx(1.0 / N if N % 2 else 0.0, abs=1e-12)
    m = np.array([1, 2, 3, N - 1, N + 1])
    # domain-reference 3.2: zeros at f = m / (N T), m not a multiple of N
    np.testing.assert_allclose(tsa_comb_response(m / (N * T), T, N), 0.0, atol=1e-12)


def test_comb_response_first_lobe():
    # domain-reference 3.2 [computed]: |H| at f T = 0.5/N is 0.639245 for N = 10, 0.636646 for N = 100
    assert tsa_comb_response(0.05 / 0.01, 0.01, 10) == pytest.approx(0.639245, abs=1e-6)
    assert tsa_comb_response(0.005 / 0.01, 0.01, 100) == pytest.approx(0.636646, abs=1e-6)
    # domain-reference 3.2: averaging N = 31 revolutions leaves 1/31 of an order 8/3
    assert tsa_comb_response(8 / 3, 1.0, 31) == pytest.approx(1 / 31, abs=1e-9)


# --------------------------------------------------------------------------- averaging

def test_noise_falls_as_one_over_sqrt_n():
    rng = np.random.default_rng(7)
    f0, P, N = 10.0, 4096, 64
    fs = f0 * P
    x = rng.standard_normal(int((N + 2) * P))
    prof = nominal_profile(f0 * 60, x.size / fs, "input")
    res = tsa(x, fs, prof, n_revs=N)
    assert res.n_revs == N and res.samples_per_rev == P
    # domain-reference 3.2: N = 64 averages of unit Gaussian noise -> RMS 1/sqrt(64) = 0.125 +-10 %
    assert np.sqrt(np.mean(res.average.astype(float) ** 2)) == pytest.approx(0.125, rel=0.10)


def test_periodic_signal_reproduced_under_wandering_speed():
    """Harmonics up to 0.4 fs at the highest speed, speed wandering +-4 %: error <= 1e-3."""
    rng = np.random.default_rng(11)
    fs, dur = 8192.0, 4.0
    prof = WanderProfile(10.0, 0.04, 0.37, dur)
    k_max = int(0.4 * fs / prof.max_hz)
    orders = np.arange(1, k_max + 1)
    amps = rng.uniform(0.2, 1.0, orders.size)
    phases = rng.uniform(0, 2 * np.pi, orders.size)
    t = np.arange(int(dur * fs)) / fs
    x = periodic(prof.angle_rev(t), orders, amps, phases)
    x_before = x.copy()
    res = tsa(x, fs, prof, shaft="input")
    truth = periodic(np.arange(res.samples_per_rev) / res.samples_per_rev, orders, amps, phases)
    err = np.max(np.abs(res.average - truth)) / np.max(np.abs(truth))
    # common practice, no source: the project's accuracy target for the TSA is 1e-3 of the amplitude
    assert err < 1e-3
    assert np.array_equal(x, x_before)                  # input untouched
    assert res.samples_per_rev == 1024                  # power of two >= fs / max speed = 787.7
    # every whole revolution but the last (its edge needs a few samples beyond it)
    assert res.n_revs >= int(prof.angle_rev(t[-1])) - 1


def test_fractional_samples_per_revolution_pure_order():
    """fs / f not an integer: revolution boundaries at sub-sample angles keep a pure order exact."""
    fs = 5000.0
    f0 = fs / 487.37
    dur = 2.0
    prof = nominal_profile(f0 * 60, dur, "input")
    t = np.arange(int(dur * fs)) / fs
    x = 0.8 * np.cos(2 * np.pi * 5 * f0 * t + 0.3)
    res = tsa(x, fs, prof)
    theta = np.arange(res.samples_per_rev) / res.samples_per_rev
    # Fyfe & Munck 1997: resampling at exact angles reproduces a pure order; here to 1e-5
    np.testing.assert_allclose(res.average, 0.8 * np.cos(2 * np.pi * 5 * theta + 0.3), atol=1e-5)
    o, a = res.order_amplitude()
    assert a[5] == pytest.approx(0.8, abs=1e-6)         # common practice, no source (peak scaling)


def test_other_shaft_recovered_tach_shaft_rejected():
    """Tach on the input; TSA of a shaft turning at 23/67 of it (real SpeedProfile from knots)."""
    rng = np.random.default_rng(3)
    fs, dur = 4096.0, 30.0
    law = WanderProfile(12.0, 0.03, 0.2, dur)
    tk = law.time_s(np.arange(0, law.angle_rev(dur)))        # one knot per tach revolution
    prof = SpeedProfile.from_knots(tk, np.arange(tk.size, dtype=float), shaft="input", source="tach")
    r = 23 / 67
    t = np.arange(int(tk[-1] * fs)) / fs
    th = law.angle_rev(t) - law.angle_rev(tk[0])
    gear = periodic(th * r, [1, 2, 5, 11], [0.5, 0.3, 0.2, 0.4], [0.1, 1.0, 2.0, 0.5])
    tach_shaft = periodic(th, [3, 7], [1.0, 1.0], [0.0, 0.4])
    x = gear + tach_shaft + 0.1 * rng.standard_normal(t.size)
    res_out, res_in = tsa_shafts(x, fs, prof, {"output": r, "input": 1.0})
    assert res_out.shaft == "output" and res_out.shaft_order == pytest.approx(r)
    theta = np.arange(res_out.samples_per_rev) / res_out.samples_per_rev
    truth = periodic(theta, [1, 2, 5, 11], [0.5, 0.3, 0.2, 0.4], [0.1, 1.0, 2.0, 0.5])
    # Braun 1975: the comb keeps the averaged shaft's orders (gain 1) and rejects the other
    # shaft's (non-integer orders 3*67/23, 7*67/23); here below 5 % of their unit amplitude
    assert np.max(np.abs(res_out.average - truth)) < 0.05
    # the input shaft's own TSA keeps orders 3 and 7 and rejects the output gear
    o, a = res_in.order_amplitude()
    assert a[3] == pytest.approx(1.0, abs=0.02) and a[7] == pytest.approx(1.0, abs=0.02)   # Braun 1975
    assert res_out.n_revs >= int((tk.size - 1) * r) - 1


def test_float32_in_float32_out_and_defaults():
    fs = 2048.0
    prof = nominal_profile(600.0, 3.0, "input")
    x = np.cos(2 * np.pi * 10 * np.arange(int(3 * fs)) / fs).astype(np.float32)
    res = tsa(x, fs, prof)
    assert res.average.dtype == np.float32                   # common practice, no source (scipy habit)
    assert isinstance(res, TSA) and not res.average.flags.writeable
    assert res.samples_per_rev == default_samples_per_rev(fs, 10.0) == 256
    assert res.angle_deg[1] == pytest.approx(360 / 256)


def test_too_short_record_raises():
    fs = 1000.0
    prof = nominal_profile(60.0, 0.5, "input")               # 1 Hz for 0.5 s: half a revolution
    with pytest.raises(AnalysisError, match="revolution"):
        tsa(np.zeros(500), fs, prof)
    with pytest.raises(AnalysisError, match="shaft_order"):
        tsa(np.zeros(500), fs, prof, shaft_order=-1.0)


# --------------------------------------------------------------------------- derived signals

def _check_tsa(noise_sigma, rng):
    P = 1024
    th = 2 * np.pi * np.arange(P) / P
    clean = (np.cos(20 * th) + 0.5 * np.cos(40 * th) + 0.3 * np.cos(th)
             + 0.1 * np.cos(19 * th) + 0.1 * np.cos(21 * th))
    return clean + noise_sigma * rng.standard_normal(P), clean


def test_difference_signal_of_check_tsa_is_noise():
    rng = np.random.default_rng(5)
    x, _ = _check_tsa(0.05, rng)
    d = difference_signal(x, mesh_teeth=20)
    # domain-reference 3.3: the difference signal is pure noise, FM4 = 3 +- 0.5; reference scipy.stats
    assert scipy.stats.kurtosis(d, fisher=False) == pytest.approx(3.0, abs=0.5)
    x0, _ = _check_tsa(0.0, rng)
    # domain-reference 3.3: without noise the difference signal is identically 0
    assert np.max(np.abs(difference_signal(x0, mesh_teeth=20))) < 1e-12


def test_residual_keeps_sidebands_regular_keeps_the_rest():
    rng = np.random.default_rng(5)
    x0, _ = _check_tsa(0.0, rng)
    th = 2 * np.pi * np.arange(x0.size) / x0.size
    # domain-reference 3.3: residual = TSA minus shaft orders and mesh harmonics (keeps h Z +- 1)
    np.testing.assert_allclose(residual_signal(x0, mesh_teeth=20),
                               0.1 * np.cos(19 * th) + 0.1 * np.cos(21 * th), atol=1e-12)
    # domain-reference 3.3: regular = shaft orders + mesh harmonics + first-order sidebands
    np.testing.assert_allclose(regular_signal(x0, mesh_teeth=20), x0, atol=1e-12)
    # the second-order sideband h Z +- 2 is not part of the regular signal with sideband_orders=1
    x2 = x0 + 0.2 * np.cos(22 * th)
    np.testing.assert_allclose(difference_signal(x2, mesh_teeth=20), 0.2 * np.cos(22 * th), atol=1e-12)
    np.testing.assert_allclose(difference_signal(x2, mesh_teeth=20, sideband_orders=2), 0.0, atol=1e-12)


def test_demodulation_check_values():
    P, Z = 1024, 20
    th = 2 * np.pi * np.arange(P) / P
    x = (1 + 0.2 * np.cos(th)) * np.cos(Z * th + 0.5 * np.sin(th))
    dem = demodulate(x, Z)
    assert dem.band_orders == (10, 30)
    # domain-reference 3.4 (McFadden 1986): amplitude 1 + 0.2 cos theta to 1e-9
    assert np.max(np.abs(dem.amplitude - (1 + 0.2 * np.cos(th)))) < 1e-9
    # domain-reference 3.4: phase 0.5 sin theta to 1e-9
    assert np.max(np.abs(dem.phase_rad - 0.5 * np.sin(th))) < 1e-9


def test_demodulation_band_must_fit():
    with pytest.raises(AnalysisError, match="band"):
        demodulate(np.zeros(64), 20, harmonic=2)


def test_time_range_and_late_profile_start():
    """A tach profile that starts at the first pulse (0.3 s) and a time range inside the record."""
    fs, dur, f0 = 2048.0, 6.0, 8.0
    t = np.arange(int(dur * fs)) / fs
    tk = 0.3 + np.arange(0, int((dur - 0.4) * f0)) / f0               # one pulse per revolution
    prof = SpeedProfile.from_knots(tk, np.arange(tk.size, dtype=float), shaft="input", source="tach")
    x = np.cos(2 * np.pi * 3 * f0 * (t - 0.3) + 0.2)                   # order 3, angle 0 at 0.3 s
    res = tsa(x, fs, prof, t_range_s=(1.0, 4.0))
    assert 1.0 <= res.t_start_s and res.t_end_s <= 4.0
    # whole revolutions inside the range, less the smooth edges of a few samples
    assert res.n_revs >= int(3.0 * f0) - 2
    assert res.t_end_s - res.t_start_s == pytest.approx(res.n_revs / f0, rel=1e-9)
    theta = np.arange(res.samples_per_rev) / res.samples_per_rev
    # Fyfe & Munck 1997: angle 0 is the tach pulse, so the order keeps its phase 0.2 rad
    # (a phase error of 1e-5 rad would already show as 1e-5 here); the tolerance holds the
    # TSA kernel's aliasing 2 (k / G)**2 = 1.1e-6 at order 3, G = 4096 cells, since the
    # 256 samples of each revolution fall at the same angles (dsp.tsa module notes)
    np.testing.assert_allclose(res.average, np.cos(2 * np.pi * 3 * theta + 0.2), atol=2e-6)
